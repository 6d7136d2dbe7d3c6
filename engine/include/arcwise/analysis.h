/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Swing analysis: finding swings in a recording, their events and phases, coaching metrics,
 * sensor trust (by masking each stream in the fusion), comparison of two swings and the
 * consistency of a session.
 *
 * Input is any hand trajectory on a time base (AwTrajectory): normally a view of a fused path
 * (aw_trajectory_from_fused), but also a simulator truth path or an analytic test path.
 * Everything is SI and on the trajectory's clock (for a fused path: the depth camera's clock).
 *
 * The swing frame ("sw"). Metrics that need directions are expressed in a frame built from the
 * data of each swing, never from assumptions about where the camera stands:
 *   z_sw  up: against gravity (AwTrajectory.up; from the fusion's camera-to-gravity rotation);
 *   x_sw  toward the target: the horizontal line of the least-squares plane of the whole swing
 *         (address to finish), signed so the hands move toward the target through impact;
 *   y_sw  away from the player, horizontal (toward and beyond the ball line). For a right-handed
 *         player y_sw = x_sw x z_sw, for a left-handed one y_sw = z_sw x x_sw, so the frame of a
 *         left-handed player is the mirror image of a right-handed one and mirrored swings give
 *         equal metrics.
 *   Origin: the lead hand at address.
 * AwAnalysisSettings.target_dir may give the target line instead (for example from a known
 * studio layout); it is projected onto the horizontal.
 *
 * Ownership: AwAnalysis owns its swings; free it with aw_analysis_free (NULL-safe). An
 * AwTrajectory only borrows its arrays. */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "arcwise/capture.h"
#include "arcwise/fusion.h"
#include "arcwise/status.h"

/* ---------------------------------------------------------------------------------------------
 * Input */

/* A hand trajectory on a time base. Only n, t_s, pos_m and up are required; every other array
 * may be NULL, and the analysis then says what it could not do (for example no impact
 * transient without accel_body_m_s2; the club-head speed lever then uses the path's curvature
 * instead of the watch's angular rate). All arrays have n entries and are borrowed. */
typedef struct {
  size_t n;
  const double *t_s;                  /* strictly increasing, s */
  const double (*pos_m)[3];           /* lead hand, in any right-handed frame "f", m */
  const double (*vel_m_s)[3];         /* optional; NULL = Savitzky-Golay derivative of pos_m */
  const double (*q_f_body)[4];        /* optional orientation of the watch (w first) */
  const double (*accel_body_m_s2)[3]; /* optional specific force in the watch frame */
  const double (*gyro_body_rad_s)[3]; /* optional angular rate in the watch frame */
  const double (*pos_sigma_m)[3];     /* optional 1-sigma per axis of frame f */
  const double *cam_info_share;       /* optional 0..1, share of information from the camera */
  const uint32_t *flags;              /* optional AW_FUSED_* bits */
  double up[3];                       /* unit vector against gravity, in frame f */
  /* Whole-recording facts copied from the fusion report (NaN / 0 when unknown). */
  double sync_offset_s;               /* t_depth = t_imu + offset */
  double sync_confidence;             /* 0..1 */
  double accel_range_m_s2;            /* full scale, 0 = unknown */
  double gyro_range_rad_s;            /* full scale, 0 = unknown */
} AwTrajectory;

/* Fills *out as a view of a fused path (borrowing its arrays): up = q_cam_grav applied to the
 * grav frame's z axis, sync fields from the report. ranges are the IMU full scales from the
 * IMU file's metadata (0 when unknown). */
void aw_trajectory_from_fused(const AwFusedPath *path, double accel_range_m_s2,
                              double gyro_range_rad_s, AwTrajectory *out);

/* ---------------------------------------------------------------------------------------------
 * Settings */

typedef enum {
  AW_HANDED_RIGHT = 0,
  AW_HANDED_LEFT,
} AwHandedness;

/* Club types with default lengths (AwClubInfo). */
typedef enum {
  AW_CLUB_DRIVER = 0,
  AW_CLUB_3W,
  AW_CLUB_5W,
  AW_CLUB_HYBRID,
  AW_CLUB_3I,
  AW_CLUB_4I,
  AW_CLUB_5I,
  AW_CLUB_6I,
  AW_CLUB_7I,
  AW_CLUB_8I,
  AW_CLUB_9I,
  AW_CLUB_PW,
  AW_CLUB_GW,
  AW_CLUB_SW,
  AW_CLUB_LW,
  AW_CLUB_COUNT_
} AwClubType;

typedef struct {
  AwClubType type;
  const char *name;           /* command-line and JSON name: "driver", "3w", "7i", "pw", ... */
  const char *label;          /* for people: "Driver", "7-iron" */
  double default_length_m;    /* typical length; all within the Rules of Golf 48 in limit */
} AwClubInfo;

/* Rules of Golf, Equipment Rules Part 2 §1c: club length 18 in to 48 in (putters excepted). */
#define AW_CLUB_LENGTH_MIN_M 0.4572
#define AW_CLUB_LENGTH_MAX_M 1.2192

const AwClubInfo *aw_club_info(AwClubType type);        /* NULL for an invalid type */
/* Case-insensitive lookup by name ("driver", "3w", "7i", "7-iron", "pw", ...); false if unknown. */
bool aw_club_from_name(const char *name, AwClubType *out);

typedef struct {
  AwHandedness handed;
  AwClubType club;
  double club_length_m;          /* 0 = the club type's default; else within the Rules limits */
  double target_dir[3];          /* in frame f; NaN = estimate from the swing (see above) */
  /* Physical thresholds of swing finding and events. */
  double still_speed_m_s;        /* hands counted still below this speed */
  double still_min_s;            /* a still set-up / finish lasts at least this long */
  double full_top_rise_m;        /* top at least this far above address: a full swing */
  double min_top_rise_m;         /* a swing's hands reach at least this far from address (and
                                    rise above it by at least half that), else not a swing */
  double min_peak_speed_m_s;     /* a swing's downswing reaches at least this hand speed */
  double impact_snr;             /* accelerometer transient / local noise needed for contact */
  double contact_min_loss;       /* a contact transient is a velocity change of at least this
                                    fraction of the hands' speed within one sample */
  double contact_level_ratio;    /* a transient no larger than this fraction of the change of
                                    the force's level across it is that level change (the
                                    motion's own), not a ball's impulse */
  /* Club-head lever: the club's angular rate at impact over the lead arm's (the watch's), the
   * wrist's release on top of the arm's turn. Default 2.1 from segment peak rates (club about
   * 2000-2500 deg/s, lead arm 800-1300 deg/s, REFERENCES.md §6, values from memory). */
  double club_arm_rate_ratio;
} AwAnalysisSettings;

void aw_analysis_settings_default(AwAnalysisSettings *out);

/* ---------------------------------------------------------------------------------------------
 * Result of one swing */

typedef enum {
  AW_EVENT_ADDRESS = 0,  /* start of the still set-up before the takeaway */
  AW_EVENT_TAKEAWAY,     /* the hands start away from the ball */
  AW_EVENT_TOP,          /* the hands reverse direction at the end of the backswing */
  AW_EVENT_IMPACT,       /* ball contact (accelerometer transient) or its path estimate */
  AW_EVENT_FINISH,       /* the hands come to rest after the follow-through */
  AW_EVENT_COUNT_
} AwEventKind;

typedef struct {
  double t_s;            /* trajectory clock (depth clock for a fused path) */
  double sigma_s;        /* 1-sigma uncertainty */
  bool estimated;        /* impact only: no contact transient found, time from the hand path */
} AwEvent;

typedef enum {
  AW_PHASE_ADDRESS = 0,   /* address .. takeaway */
  AW_PHASE_BACKSWING,     /* takeaway .. top */
  AW_PHASE_DOWNSWING,     /* top .. impact */
  AW_PHASE_FOLLOW_THROUGH,/* impact .. finish */
  AW_PHASE_FINISH,        /* finish .. end of the held finish (swing span end) */
  AW_PHASE_COUNT_
} AwPhaseKind;

typedef enum {
  AW_DOMINANCE_UNKNOWN = 0,  /* masked fusions not run */
  AW_DOMINANCE_CAMERA,       /* the result follows the camera; the IMU adds little */
  AW_DOMINANCE_IMU,          /* the result follows the IMU; the camera adds little */
  AW_DOMINANCE_SHARED,       /* both contribute comparably */
} AwDominance;

typedef struct {
  AwPhaseKind kind;
  double start_s, end_s;
  double cam_occluded_share;     /* share of camera frames missing or rejected, 0..1 (NaN: no flags) */
  double cam_info_share_mean;    /* mean per-sample camera information share (NaN: unknown) */
  double pos_sigma_mean_m;       /* mean 3-D position sigma (NaN: unknown) */
  /* Sensor trust by masking (NaN until aw_analysis_add_trust). RMS 3-D distance between the
   * masked fusion and the full fusion over the phase: */
  double dev_camera_masked_m;    /* IMU-only result vs full */
  double dev_imu_masked_m;       /* camera-only result vs full */
  AwDominance dominance;
} AwPhase;

/* Metric identifiers: every scalar metric of a swing, for tables, exports, filters and session
 * consistency. aw_metric_info gives each one's JSON key, SI unit and a plain description. */
typedef enum {
  AW_METRIC_BACKSWING_S = 0,
  AW_METRIC_DOWNSWING_S,
  AW_METRIC_TEMPO_RATIO,
  AW_METRIC_HAND_SPEED_IMPACT_M_S,
  AW_METRIC_PEAK_HAND_SPEED_M_S,
  AW_METRIC_PEAK_HAND_SPEED_T_S,       /* time of the peak, relative to impact (negative before) */
  AW_METRIC_CLUB_SPEED_IMPACT_M_S,
  AW_METRIC_TOP_HEIGHT_M,              /* hand height at the top above the hands at address */
  AW_METRIC_TOP_BEHIND_M,              /* top: distance away from the target (along -x_sw) */
  AW_METRIC_TOP_OUT_M,                 /* top: distance away from the player (along +y_sw) */
  AW_METRIC_PATH_LENGTH_M,             /* hand path length, takeaway .. finish */
  AW_METRIC_PLANE_BACKSWING_DEG,       /* inclination of the backswing plane to the horizontal */
  AW_METRIC_PLANE_DOWNSWING_DEG,
  AW_METRIC_PLANE_DIFF_DEG,            /* downswing minus backswing (negative: flatter down) */
  AW_METRIC_PATH_DIRECTION_DEG,        /* hand path through impact vs target line; + in-to-out */
  AW_METRIC_IMPACT_AHEAD_M,            /* hands at impact relative to address: toward target */
  AW_METRIC_IMPACT_OUT_M,              /* ... away from the player */
  AW_METRIC_IMPACT_UP_M,               /* ... up */
  AW_METRIC_PEAK_FOREARM_RATE_RAD_S,   /* peak |angular rate| of the watch (lead forearm) */
  AW_METRIC_COUNT_
} AwMetricId;

typedef struct {
  AwMetricId id;
  const char *key;          /* JSON / CSV key, unit suffixed: "hand_speed_impact_mps" */
  const char *unit;         /* SI unit: "s", "m/s", "m", "deg", "rad/s", "1" */
  const char *label;        /* for people: "Hand speed at impact" */
} AwMetricInfo;

const AwMetricInfo *aw_metric_info(AwMetricId id);      /* NULL for an invalid id */

/* Data-quality notes (bits of AwSwingQuality.notes); aw_quality_note_text gives plain words. */
enum {
  AW_NOTE_TOP_HIDDEN       = 1u << 0,  /* camera lost the hands around the top */
  AW_NOTE_FOLLOW_HIDDEN    = 1u << 1,  /* camera lost the hands in the follow-through */
  AW_NOTE_MANY_REJECTED    = 1u << 2,  /* many camera frames failed the consistency check */
  AW_NOTE_IMU_SATURATED    = 1u << 3,  /* watch hit its full-scale range near impact */
  AW_NOTE_SYNC_WEAK        = 1u << 4,  /* the two clocks could not be matched with confidence */
  AW_NOTE_LARGE_SIGMA      = 1u << 5,  /* mean position uncertainty above 2 cm */
  AW_NOTE_IMPACT_ESTIMATED = 1u << 6,  /* no ball contact felt: impact estimated from the path */
  AW_NOTE_CLUB_FROM_PATH   = 1u << 7,  /* club speed from path curvature: no watch rate, or clipped */
  AW_NOTE_NO_IMU           = 1u << 8,  /* no watch data in this swing */
  AW_NOTE_NOTE_COUNT_      = 9
};
/* Plain-words sentence for one note bit (a coach reads it); NULL for an unknown bit. */
const char *aw_quality_note_text(unsigned note_bit);

typedef struct {
  double cam_occluded_share;     /* camera frames with no detection, share 0..1 (NaN unknown) */
  double cam_rejected_share;     /* camera frames rejected by the fusion's gate */
  size_t imu_saturated_samples;  /* samples at full scale within the swing */
  double sync_offset_s;          /* t_depth = t_imu + offset (NaN unknown) */
  double sync_confidence;        /* 0..1 (NaN unknown) */
  double pos_sigma_mean_m;       /* mean 3-D position sigma over the swing (NaN unknown) */
  unsigned notes;                /* AW_NOTE_* bits */
} AwSwingQuality;

typedef struct {
  /* Span in the source recording (sample indices into the trajectory, inclusive..exclusive). */
  size_t i_start, i_end;
  double t_start_s, t_end_s;
  bool practice;                 /* no ball contact found: a practice swing */
  bool half;                     /* the top stayed below full_top_rise_m: a half swing */
  AwHandedness handed;
  double club_length_m;          /* length used for the club-head estimate */
  AwClubType club;
  /* The swing frame: origin (hands at address) and axes, in the trajectory frame f. */
  double origin_f_m[3];
  double R_sw_f[3][3];           /* v_sw = R_sw_f (v_f - origin); rows are x_sw, y_sw, z_sw */
  AwEvent events[AW_EVENT_COUNT_];
  AwPhase phases[AW_PHASE_COUNT_];
  double metrics[AW_METRIC_COUNT_];  /* indexed by AwMetricId, SI; NaN = not available */
  AwSwingQuality quality;
} AwSwing;

/* Whole-recording result. */
typedef struct {
  size_t n_swings;
  AwSwing *swings;               /* in time order */
  size_t n_ignored;              /* motions looked at and not taken for swings (waggles, walks) */
} AwAnalysis;

/* Finds and analyses every swing in the trajectory. Errors: AW_ERR_NO_SWING (err says what was
 * seen instead), AW_ERR_INCOMPLETE (the recording ends mid-swing, and no complete swing before
 * it), AW_ERR_TOO_FEW, AW_ERR_INVALID_ARG. A last swing cut off by the end of the recording is
 * dropped when earlier swings are complete; n_ignored counts it. */
AwStatus aw_analyze(const AwTrajectory *traj, const AwAnalysisSettings *settings,
                    AwAnalysis **out, AwError *err);

void aw_analysis_free(AwAnalysis *a);

/* Sensor trust by masking: fills each phase's dev_*_masked_m and dominance, given the same
 * recording fused with the camera masked and with the IMU masked (all three on the same time
 * base as the trajectory the analysis ran on; either masked path may be NULL). */
AwStatus aw_analysis_add_trust(AwAnalysis *a, const AwTrajectory *full,
                               const AwTrajectory *camera_masked, const AwTrajectory *imu_masked,
                               AwError *err);

/* The whole pipeline from capture streams: aw_fuse three times (both, camera masked, IMU
 * masked), aw_analyze on the full fusion, aw_analysis_add_trust. *fused_out (may be NULL)
 * receives the full fused path, owned by the caller. */
AwStatus aw_analyze_capture(const AwImuStream *imu, const AwDepthStream *depth,
                            const AwFusionSettings *fusion, const AwAnalysisSettings *settings,
                            AwAnalysis **out, AwFusedPath **fused_out, AwError *err);

/* ---------------------------------------------------------------------------------------------
 * Building blocks, public so that tests and other areas can use them */

/* Least-squares plane through points (total least squares: the normal is the direction of the
 * smallest singular value of the centred points). normal is unit length; rms_m is the RMS
 * distance of the points from the plane. Needs n >= 3 points not all on one line. */
AwStatus aw_plane_fit(const double (*pts)[3], size_t n, double centroid[3], double normal[3],
                      double *rms_m);

/* Lever model of the club-head speed at impact (see README "Club-head speed"): under full
 * release the shaft continues the lead arm, the head moves parallel to the hands, and the club
 * turns rate_ratio times as fast as the arm, so
 *   v_head = v_hand + rate_ratio * omega_perp * L,
 * where omega_perp is the watch's (lead forearm's) angular rate about the downswing plane's
 * normal and L the club length. */
double aw_club_speed_lever(double hand_speed_m_s, double omega_perp_rad_s, double club_length_m,
                           double rate_ratio);

/* ---------------------------------------------------------------------------------------------
 * Comparison and consistency */

typedef struct {
  /* Per phase (AwPhaseKind) RMS and maximum 3-D distance between the time-aligned paths, after
   * spatial alignment (both in their swing frames: same address origin, same target line). */
  double phase_rms_m[AW_PHASE_COUNT_];
  double phase_max_m[AW_PHASE_COUNT_];
  double event_dt_s[AW_EVENT_COUNT_];         /* B minus A, each relative to its own takeaway */
  double phase_duration_diff_s[AW_PHASE_COUNT_]; /* B minus A */
  double metric_diff[AW_METRIC_COUNT_];       /* B minus A (NaN if either is NaN) */
  double overall_rms_m;                       /* takeaway .. finish */
} AwSwingComparison;

/* Aligns swing b onto swing a: spatially by their swing frames, temporally by a piecewise-linear
 * warp between matching events (takeaway, top, impact, finish), and compares them. */
AwStatus aw_swing_compare(const AwTrajectory *traj_a, const AwSwing *a,
                          const AwTrajectory *traj_b, const AwSwing *b, AwSwingComparison *out,
                          AwError *err);

/* Hand position of a swing at time t in its swing frame (linear interpolation). */
void aw_swing_position_sw(const AwTrajectory *traj, const AwSwing *s, double t_s,
                          double out_sw_m[3]);

typedef struct {
  size_t n[AW_METRIC_COUNT_];     /* swings with a value */
  double mean[AW_METRIC_COUNT_];
  double sd[AW_METRIC_COUNT_];    /* sample standard deviation (n - 1); NaN for n < 2 */
  double min[AW_METRIC_COUNT_];
  double max[AW_METRIC_COUNT_];
} AwConsistency;

/* Spread of every metric across a session's swings. */
void aw_session_consistency(const AwSwing *const *swings, size_t n, AwConsistency *out);
