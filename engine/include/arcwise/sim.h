/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Synthetic swings with ground truth: a lead-wrist (and club-head) path with forearm
 * orientation, the wrist IMU and the depth camera that would have recorded it, and every truth
 * the fusion, analysis and benchmark need. Deterministic from a seed (own PRNG, xoshiro256**).
 *
 * Player frame (grav): right-handed, z up, x toward the target for either hand, y = z x x. A
 * right-handed player faces -y with the target on the left (ball at -y, backswing toward -x);
 * a left-handed player is the mirror image in the target line (faces +y, ball at +y). The
 * lever model is built for the ball at +y and mirrored (y -> -y) for a right-hander.
 * Swing kinematics follow the
 * two-lever ("double pendulum") picture of Cochran & Stobbs (1968) and Jorgensen (The Physics
 * of Golf, 1994): the lead arm is a lever of length arm_length_m turning about a hub near the
 * lead shoulder in an inclined plane; the club is a second lever hinged at the wrist, held
 * cocked through the early downswing and released late. The arm angle, wrist hinge and forearm
 * roll are C2 quintic profiles through the events, so position, velocity and acceleration are
 * continuous and the IMU readings are derivatives of the very path in the truth (central
 * differences of 4th order with a 20 us step on the analytic pose: error far below sensor
 * noise). Ball contact is a time warp of the swing (the whole arm-club system loses a fraction
 * of its speed for a few milliseconds and recovers); practice swings have none.
 *
 * Clocks: simulation time is the depth camera's clock. The IMU clock runs with
 * t_depth = t_imu * (1 + clock_drift) + clock_offset_s (the convention of fusion.h).
 * Frames: grav (z up, the player frame placed on the floor), cam (optical: x right, y down,
 * z forward), body (the watch's sensor frame), forearm (x along the lead forearm toward the hand,
 * z normal to the swing plane). Gravity in grav is (0, 0, -9.80665) m/s^2, so a device at rest
 * reads +9.80665 m/s^2 along up. */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "arcwise/capture.h"
#include "arcwise/status.h"

typedef enum { AW_SIM_EASY = 0, AW_SIM_NORMAL, AW_SIM_HARD } AwSimLevel;
typedef enum { AW_SIM_FACE_ON = 0, AW_SIM_DOWN_THE_LINE } AwSimView;

/* A player's swing. Times in s, angles in rad, lengths in m. */
typedef struct {
  double backswing_s;            /* takeaway -> top */
  double tempo;                  /* backswing : downswing duration (2.5 .. 4 for full swings) */
  double follow_s;               /* impact -> finish */
  double hand_speed_impact_m_s;  /* requested lead-wrist speed at impact (4 .. 10) */
  double arm_top_rad;            /* lead-arm rotation in the plane from address to the top */
  double arm_finish_rad;         /* lead-arm rotation past impact to the finish (> 0) */
  double hinge_top_rad;          /* wrist hinge (arm-club angle in the plane) at the top */
  double hinge_finish_rad;       /* re-hinge at the finish (> 0, toward the other side) */
  double release_ratio;          /* club angular rate / arm angular rate - 1 at impact */
  double release_start;          /* fraction of the downswing the hinge is held (0.3 .. 0.7) */
  double backswing_plane_rad;    /* inclination of the hand plane to the horizontal */
  double downswing_plane_rad;    /* the (different) downswing plane */
  double path_yaw_rad;           /* downswing plane turned about vertical (+ = in-to-out) */
  double arm_length_m;           /* hub (near the lead shoulder) to wrist */
  double club_length_m;          /* wrist to club head (<= 1.219 m, Equipment Rules 2019) */
  double lateral_shift_m;        /* hub shift toward the target during the downswing */
  double roll_top_rad;           /* forearm roll at the top */
  double roll_finish_rad;        /* forearm roll at the finish (negative: turned over) */
  double roll_rate_impact_rad_s; /* peak forearm roll rate, reached at impact */
  double impact_speed_loss;      /* fraction of speed lost in the ball-contact transient */
  double impact_recovery_s;      /* time constant of the recovery after contact */
  bool left_handed;              /* mirror image in the target line; lead wrist = right */
} AwSwingStyle;

/* A typical mid-handicap right-handed driver swing (fixed values, no randomness). */
void aw_swing_style_default(AwSwingStyle *out);

typedef struct {
  double rate_hz;                 /* nominal output rate on the IMU's own clock */
  double antialias_window_s;      /* box average before sampling (0 = instantaneous) */
  double accel_noise_density;     /* m/s^2/sqrt(Hz), white */
  double gyro_noise_density;      /* rad/s/sqrt(Hz), white */
  double accel_bias_max_m_s2;     /* constant bias drawn uniformly in +-max per axis */
  double gyro_bias_max_rad_s;
  double accel_bias_walk;         /* m/s^2/sqrt(s), random walk of the bias */
  double gyro_bias_walk;          /* rad/s/sqrt(s) */
  double scale_error_max;         /* scale-factor error drawn in +-max per axis (fraction) */
  double accel_range_m_s2;        /* full scale (+-), readings clip there */
  double gyro_range_rad_s;
  int bits;                       /* ADC resolution over the full range (0 = none) */
  double timestamp_jitter_s;      /* s.d. of the timestamp noise (clipped at 0.4 / rate) */
  double clock_offset_max_s;      /* offset drawn uniformly in +-max */
  double clock_drift_max;         /* drift drawn uniformly in +-max (1e-4 = 100 ppm) */
  double mount_random_rad;        /* mounting: nominal rotation times a random one of this
                                     angle; >= pi gives a uniformly random mounting */
} AwSimImuModel;

typedef struct {
  double rate_hz;                 /* frames per second on the depth clock */
  double sigma_xy_per_m;          /* lateral keypoint noise s.d. per metre of depth */
  double sigma_z_coeff_per_m;     /* depth noise s.d. = coeff * z^2 (Khoshelham 2012) */
  double occlusion_top_s;         /* occlusion window length around the top */
  double occlusion_follow_s;      /* occlusion window length in the follow-through */
  double occluded_missing_prob;   /* in a window: frame missing; otherwise snapped to body */
  double dropout_prob;            /* random missing frames elsewhere */
  double outlier_prob;            /* gross outliers (0.2 .. 0.8 m off, any confidence) */
  double distance_m;              /* camera to the player */
  double height_m;                /* camera above the floor */
  double tilt_rad;                /* pitched down by */
  double roll_max_rad;            /* small roll drawn in +-max */
} AwSimDepthModel;

typedef struct {
  uint64_t seed;
  AwSimLevel level;
  AwSimView view;
  int n_swings;                   /* 1: one swing; K > 1: a continuous session of K shots */
  bool session_extras;            /* waggles, practice swings, walking (default n_swings > 1) */
  double truth_rate_hz;           /* rate of the sampled truth path (default 200) */
  bool style_fixed;               /* every shot uses `style` (else drawn per shot) */
  double style_variation;         /* with style_fixed: shot-to-shot spread around `style`, as a
                                     multiple of a typical player's (0 = identical shots;
                                     1 = tempo +-0.15, hand speed +-0.4 m/s, planes +-2 deg) */
  bool left_handed;               /* used when style_fixed is false */
  AwSwingStyle style;
  double turntable_rate_rad_s;    /* test motion: if not 0, the recording is 1 s still at
                                     address, then the player turns about the vertical through
                                     the stance, smoothly reaching this constant rate in 0.5 s
                                     and holding it for turntable_s */
  double turntable_s;
  AwSimImuModel imu;
  AwSimDepthModel depth;
} AwSimConfig;

/* Defaults for a level (impairments scale with it); view face-on, one swing, seed 1. */
void aw_sim_config_default(AwSimConfig *out, AwSimLevel level);
void aw_sim_imu_model_default(AwSimImuModel *out, AwSimLevel level);
void aw_sim_depth_model_default(AwSimDepthModel *out, AwSimLevel level);
const char *aw_sim_level_name(AwSimLevel level);
const char *aw_sim_view_name(AwSimView view);

/* What happens over a span of the recording. */
typedef enum {
  AW_SIM_ACT_STILL = 0,   /* standing at address or at the finish */
  AW_SIM_ACT_SWING,       /* a full swing striking a ball */
  AW_SIM_ACT_PRACTICE,    /* a practice swing (full or half), no ball, no transient */
  AW_SIM_ACT_WAGGLE,
  AW_SIM_ACT_SETTLE,      /* moving between carry and address or finish poses */
  AW_SIM_ACT_WALK,
} AwSimActivity;
const char *aw_sim_activity_name(AwSimActivity a);

typedef enum {
  AW_SIM_PHASE_NONE = 0,  /* not in a swing (walking, waggles, between shots) */
  AW_SIM_PHASE_ADDRESS,
  AW_SIM_PHASE_TAKEAWAY,  /* first part of the backswing, until the lead arm is a third up */
  AW_SIM_PHASE_BACKSWING,
  AW_SIM_PHASE_DOWNSWING,
  AW_SIM_PHASE_FOLLOW_THROUGH,
  AW_SIM_PHASE_FINISH,
} AwSimPhase;
const char *aw_sim_phase_name(AwSimPhase p);

typedef struct {
  int index;                       /* 0-based over full and practice swings */
  bool practice;                   /* no ball struck, no impact transient */
  bool half;                       /* a practice half-swing */
  AwSwingStyle style;              /* as used (after the hand-speed correction) */
  double t_address_s;              /* settled at address (depth clock) */
  double t_takeaway_s;
  double t_top_s;
  double t_impact_s;               /* ball contact / lowest point for practice swings */
  double t_finish_s;
  double t_end_s;                  /* leaves the finish pose */
  double takeaway_end_s;           /* end of the takeaway span */
  double hand_speed_impact_m_s;    /* achieved (wrist keypoint, before contact) */
  double club_speed_impact_m_s;
  double peak_gyro_rad_s;          /* peak true |omega| of the watch in this swing */
  double peak_accel_m_s2;          /* peak true |specific force| */
  /* Unit normals (camera frame, pointing up and toward the ball) of the planes the lead wrist
   * moves in: the backswing plane, and the downswing plane as reached at impact. Both pass
   * through the hub near the lead shoulder (the hub shifts toward the target in the
   * downswing). */
  double backswing_plane_normal_cam[3];
  double downswing_plane_normal_cam[3];
} AwSimSwing;

typedef struct {
  double t0_s, t1_s;
  int swing;                       /* index into swings */
  bool top;                        /* true: around the top; false: follow-through */
} AwSimOcclusion;

typedef struct {
  double t0_s, t1_s;
  AwSimActivity activity;
  int swing;                       /* -1 when not a swing */
} AwSimSpan;

/* Why a depth frame looks as it does. */
typedef enum {
  AW_SIM_FRAME_OK = 0,
  AW_SIM_FRAME_DROPOUT,            /* random missing frame */
  AW_SIM_FRAME_OCCLUDED_MISSING,   /* inside an occlusion window, no detection */
  AW_SIM_FRAME_OCCLUDED_SNAPPED,   /* inside an occlusion window, pulled toward the body */
  AW_SIM_FRAME_OUTLIER,            /* gross outlier */
} AwSimFrameKind;
const char *aw_sim_frame_kind_name(AwSimFrameKind k);

/* Everything the simulator knows, as plain data owned by the AwSim. */
typedef struct {
  double clock_offset_s;           /* t_depth = t_imu * (1 + clock_drift) + clock_offset_s */
  double clock_drift;
  double gravity_m_s2;
  double R_cam_grav[3][3];         /* v_cam = R_cam_grav (v_grav - cam_pos_grav_m) */
  double cam_pos_grav_m[3];
  double q_forearm_body[4];        /* IMU mounting on the forearm */
  double lever_arm_body_m[3];      /* wrist keypoint relative to the IMU, body frame */
  double accel_bias_m_s2[3];       /* initial biases and scale factors drawn */
  double gyro_bias_rad_s[3];
  double accel_scale[3];
  double gyro_scale[3];
  size_t n_swings;
  AwSimSwing *swings;
  size_t n_occlusions;
  AwSimOcclusion *occlusions;
  size_t n_spans;
  AwSimSpan *spans;
  /* Depth frame labels, one per depth frame. */
  uint8_t *frame_kind;             /* AwSimFrameKind */
  /* Truth sampled on the depth clock at truth_rate_hz over the recording. */
  size_t n;
  double *t_s;
  double (*wrist_cam_m)[3];        /* lead-wrist keypoint */
  double (*wrist_vel_cam_m_s)[3];
  double (*club_cam_m)[3];         /* club head */
  double (*q_cam_body)[4];         /* watch orientation in the camera frame */
  uint8_t *phase;                  /* AwSimPhase */
  int *swing;                      /* swing index or -1 */
} AwSimTruth;

/* Exact truth at one instant of the depth clock. */
typedef struct {
  double wrist_cam_m[3];
  double wrist_vel_cam_m_s[3];
  double wrist_acc_cam_m_s2[3];
  double club_cam_m[3];
  double imu_pos_cam_m[3];
  double q_cam_body[4];
  double q_grav_body[4];
  double omega_body_rad_s[3];      /* what an ideal gyro reads */
  double specific_force_body_m_s2[3]; /* what an ideal accelerometer reads */
  AwSimPhase phase;
  int swing;
} AwSimState;

typedef struct AwSim AwSim;

/* Runs the simulation. On failure *out stays NULL. */
AwStatus aw_sim_new(const AwSimConfig *config, AwSim **out, AwError *err);
void aw_sim_free(AwSim *sim);

const AwSimConfig *aw_sim_config(const AwSim *sim);
/* The simulated recordings and truth, owned by sim (valid until aw_sim_free). */
const AwImuStream *aw_sim_imu(const AwSim *sim);
const AwDepthStream *aw_sim_depth(const AwSim *sim);
const AwSimTruth *aw_sim_truth(const AwSim *sim);
/* Start and end of the recording on the depth clock. */
void aw_sim_span(const AwSim *sim, double *t0_s, double *t1_s);
/* Exact truth at any depth-clock time (outside the recording: the first or last pose). */
void aw_sim_eval(const AwSim *sim, double t_depth_s, AwSimState *out);
/* An independent copy of the streams; release with aw_imu_stream_free / aw_depth_stream_free. */
AwImuStream *aw_sim_copy_imu(const AwSim *sim);
AwDepthStream *aw_sim_copy_depth(const AwSim *sim);

/* Writes imu.csv, depth.csv (capture formats) and the truth files (README "Simulated data")
 * into dir (which must exist). Each file is written beside its target and renamed into place. */
AwStatus aw_sim_write(const AwSim *sim, const char *dir, AwError *err);

/* The seedable generator, exposed for tests and the demo generator (xoshiro256**, seeded by
 * splitmix64; Blackman & Vigna 2018). */
typedef struct { uint64_t s[4]; } AwRng;
void aw_rng_seed(AwRng *rng, uint64_t seed);
uint64_t aw_rng_next(AwRng *rng);
double aw_rng_uniform(AwRng *rng);               /* [0, 1) with 53 random bits */
double aw_rng_range(AwRng *rng, double lo, double hi);
double aw_rng_gauss(AwRng *rng);                 /* standard normal (Box-Muller, no caching) */
