/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Fusion of the wrist IMU and the depth camera into one 3-D hand path with honest uncertainty.
 * Pipeline: clock sync -> camera/gravity calibration -> error-state Kalman filter -> RTS smoother.
 * Output is on the depth camera's clock and in the camera's optical frame. */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "arcwise/capture.h"
#include "arcwise/status.h"

/* Per-sample source flags of a fused path (bit set). */
enum {
  AW_FUSED_CAM_ACCEPTED = 1u << 0,  /* a camera frame near this sample was used */
  AW_FUSED_CAM_REJECTED = 1u << 1,  /* a camera frame near this sample failed the gate */
  AW_FUSED_CAM_MISSING  = 1u << 2,  /* no camera detection near this sample */
  AW_FUSED_IMU_SATURATED = 1u << 3, /* accelerometer or gyro at full scale */
  AW_FUSED_STILL        = 1u << 4,  /* zero-velocity update applied */
  AW_FUSED_NO_IMU       = 1u << 5,  /* IMU gap: motion model only */
};

/* Which streams the fusion may use (sensor-trust analysis masks one of them). */
typedef enum {
  AW_FUSION_BOTH = 0,
  AW_FUSION_IMU_MASKED,     /* camera only, through the same smoother with a motion model */
  AW_FUSION_CAMERA_MASKED,  /* IMU only after the initial alignment */
} AwFusionMask;

/* Settings: every field has a physical meaning and a unit. Defaults come from
 * aw_fusion_settings_default() (datasheet-class figures, see README "Fusion parameters"). */
typedef struct {
  double accel_noise_density_m_s2_rthz;   /* accelerometer white noise */
  double gyro_noise_density_rad_s_rthz;   /* gyro white noise */
  double accel_bias_walk_m_s3_rthz;       /* accelerometer bias random walk */
  double gyro_bias_walk_rad_s2_rthz;      /* gyro bias random walk */
  double cam_sigma_xy_m;                  /* camera lateral noise at 1 m depth */
  double cam_sigma_z_coeff_per_m;         /* depth noise sigma_z = coeff * z^2 (m^-1) */
  double gate_chi2;                       /* chi-square gate for 3-dof camera updates */
  double latitude_rad;                    /* for WGS 84 gravity; NaN = standard gravity */
  double lever_arm_body_m[3];             /* keypoint position relative to the IMU, body frame */
  double max_clock_offset_s;              /* search range for the clock offset */
  AwFusionMask mask;
  /* Added after the first contract (all physical, see README "Fusion parameters"). */
  double accel_bias_init_m_s2;            /* 1-sigma accelerometer offset before fusion */
  double gyro_bias_init_rad_s;            /* 1-sigma gyro offset when no still period is found */
  double accel_scale_sigma;               /* 1-sigma accelerometer scale/axis error (fraction) */
  double gyro_scale_sigma;                /* 1-sigma gyro scale/axis error (fraction) */
  double still_gyro_rad_s;                /* |omega - window mean| below this over still_window_s: still */
  double still_accel_m_s2;                /* |f - window mean|, and |f| against its median at
                                             rest, below this over still_window_s: still */
  double still_window_s;                  /* length of a still window */
  double zupt_sigma_m_s;                  /* residual wrist speed when "still" */
  double cam_conf_min;                    /* detections below this confidence count as missing */
  double gate_recover_s;                  /* after this long of consecutive rejections, re-anchor */
  double clock_drift_prior;               /* 1-sigma of the zero-mean prior on the clock drift
                                             (dimensionless); 0 = the windows' line alone */
  double motion_jerk_psd_m2_s5;           /* camera-only motion model; 0 = estimate from data */
  double lever_arm_sigma_m;               /* 1-sigma of lever_arm_body_m per axis (refined) */
  /* The IMU's output group delay (its filter or averaging window: a sample stamped t shows the
   * motion around t - delay); NaN = as the IMU file declares (meta.output_delay_s, 0 when not
   * declared). The clock sync cannot tell it from a clock offset, so it is taken off the
   * offset the signals imply: the report gives the clock offset proper. */
  double imu_output_delay_s;
  /* The clock search (README "Fusion"): on recordings of at most clock_search_max_s whose fused
   * path more than clock_search_reject_frac of the camera frames disagree with, the filter is
   * started again at other clock offsets and the start the most frames agree with is kept.
   * clock_search_max_s = 0 turns it off. */
  double clock_search_max_s;
  double clock_search_reject_frac;
  /* How far a wrong detection of the keypoint lands from the true one (a body part mistaken
   * for the wrist, an occluded wrist pulled toward the chest), 1-sigma per axis: the
   * alternative against which a frame's confidence is read as the prior probability that it
   * shows the keypoint (README "Fusion"). 0 = confidence only scales the noise. */
  double cam_outlier_sigma_m;
} AwFusionSettings;

void aw_fusion_settings_default(AwFusionSettings *out);

/* Stages of aw_fuse, in order, for AwFusionReport.stage_time_s. */
typedef enum {
  AW_FUSION_STAGE_PREP,         /* input checks, camera fits, IMU flags and integrals */
  AW_FUSION_STAGE_SYNC,         /* clock offset and drift */
  AW_FUSION_STAGE_CALIB,        /* clock refinement, camera-to-gravity rotation, lever arm */
  AW_FUSION_STAGE_FILTER,       /* error-state filter and smoother */
  AW_FUSION_STAGE_CAMONLY,      /* camera-only smoother (information share, or the output) */
  AW_FUSION_STAGE_OUTPUT,       /* copies, finiteness check */
  AW_FUSION_STAGE_COUNT
} AwFusionStage;

typedef struct {
  double clock_offset_s;        /* t_depth = t_imu * (1 + clock_drift) + clock_offset_s; the
                                   motion a sample shows happened output delay earlier. The
                                   line holds the filter's smoothed clock at the middle sample
                                   (and, on recordings long enough for drift to matter, the
                                   filter's drift: clock_drift_sigma) */
  double clock_drift;           /* dimensionless (ppm * 1e-6) */
  double clock_confidence;      /* 0..1 */
  double q_cam_grav[4];         /* rotation from the gravity-aligned frame to the camera frame */
  double gravity_m_s2;
  double accel_bias_m_s2[3];    /* final smoothed estimate */
  double gyro_bias_rad_s[3];
  size_t cam_frames_used;
  size_t cam_frames_rejected;
  size_t cam_frames_missing;
  size_t imu_samples_saturated;
  size_t zupt_samples;
  /* Added after the first contract. */
  double clock_offset_sigma_s;  /* 1-sigma of the offset estimate (from the correlation peak) */
  double clock_peak_corr;       /* Pearson correlation of the aligned signals at the peak */
  double q_cam_body0[4];        /* orientation of the IMU at its first sample, camera frame */
  bool still_found;             /* a still period was found (gyro bias from it) */
  double imu_rate_hz;           /* median rates seen */
  double cam_rate_hz;
  double cam_nis_mean;          /* mean normalised innovation of accepted frames (3 = consistent) */
  double motion_jerk_psd_m2_s5; /* the camera-only model's jerk density used */
  size_t imu_gaps;              /* IMU gaps bridged by the motion model */
  size_t gate_recoveries;       /* re-anchorings after long rejections */
  double lever_arm_body_m[3];   /* keypoint relative to the IMU as refined by the filter */
  bool lever_arm_held;          /* the filter's lever arm left its prior: fused again with the
                                   starting value held (see README, "Fusion") */
  /* Wall time of each stage of this run (monotonic clock), for benchmarks and profiling. */
  double stage_time_s[AW_FUSION_STAGE_COUNT];
  /* 1-sigma of the clock offset after the calibration's vector fit refined it (sigma_t, from
   * the curvature of that fit's cost; 0 when the refinement did not run). The filter may
   * inflate the camera noise by it: sigma_t^2 v v^T for the hand velocity v. */
  double clock_calib_sigma_s;
  /* 1-sigma of clock_drift. Where a drift the prior allows (3 clock_drift_prior) could move the
   * clock by a quarter of an IMU interval at the recording's ends (over 33 s at 50 ppm and
   * 100 Hz) and the camera is used, clock_drift is the filter's: its information from the
   * camera frames in motion (the filter's sensitivity to a drift beyond its grid's) combined
   * with the prior; the calibration's windows only start it. Otherwise the calibration's line
   * through its windows' shifts combined with the prior; NAN when neither estimated a drift
   * (then clock_drift is the sync's). */
  double clock_drift_sigma;
  /* The clock search's filter runs (0 when it did not run) and the start it kept, relative to
   * the calibration's offset (s; 0 when none was better). */
  size_t clock_search_runs;
  double clock_search_shift_s;
} AwFusionReport;

typedef struct {
  size_t n;                     /* one row per IMU sample over the whole recording */
  double *t_s;                  /* depth camera clock */
  double (*pos_cam_m)[3];
  double (*vel_cam_m_s)[3];
  double (*q_cam_body)[4];      /* orientation of the IMU body in the camera frame (w first) */
  double (*pos_sigma_cam_m)[3]; /* 1-sigma position uncertainty per camera axis */
  double *cam_info_share;       /* 0..1: share of position information from camera updates */
  double (*accel_body_m_s2)[3]; /* the IMU's specific force resampled onto t_s (for analysis) */
  double (*gyro_body_rad_s)[3]; /* the IMU's angular rate on t_s */
  uint32_t *flags;              /* AW_FUSED_* bits */
  AwFusionReport report;
} AwFusedPath;

AwFusedPath *aw_fused_path_new(size_t n);
void aw_fused_path_free(AwFusedPath *p);

/* Clock synchronisation alone (stage 1 of aw_fuse), exposed so it can be checked separately:
 * fills offset, drift, confidence, sigma and peak correlation of *out (other fields untouched).
 * AW_ERR_NO_OVERLAP when the streams cannot overlap within +-max_clock_offset_s,
 * AW_ERR_TOO_FEW when there are too few usable camera frames, AW_ERR_NO_CORRELATION when no
 * offset makes the signals agree. */
AwStatus aw_fusion_sync_clocks(const AwImuStream *imu, const AwDepthStream *depth,
                               const AwFusionSettings *settings, AwFusionReport *out,
                               AwError *err);

/* Runs the whole pipeline. On failure *out stays NULL and err says why. */
AwStatus aw_fuse(const AwImuStream *imu, const AwDepthStream *depth,
                 const AwFusionSettings *settings, AwFusedPath **out, AwError *err);
