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
} AwFusionSettings;

void aw_fusion_settings_default(AwFusionSettings *out);

typedef struct {
  double clock_offset_s;        /* t_depth = t_imu * (1 + clock_drift) + clock_offset_s */
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

/* Runs the whole pipeline. On failure *out stays NULL and err says why. */
AwStatus aw_fuse(const AwImuStream *imu, const AwDepthStream *depth,
                 const AwFusionSettings *settings, AwFusedPath **out, AwError *err);
