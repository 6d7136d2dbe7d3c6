/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Two simple single-sensor estimators of the lead-wrist path, the yardsticks the fusion must
 * beat (arcwise bench accuracy) and building blocks for masking one sensor in analysis.
 *
 * Depth only: keep frames with confidence >= min_conf, fill the gaps by linear interpolation
 * (holding the first / last kept frame at the ends), then Savitzky-Golay smoothing (scipy
 * savgol_filter mode 'interp' semantics, arcwise/signal.h).
 *
 * IMU only: strapdown dead reckoning from a known state (position, velocity, orientation and
 * the clock mapping), trapezoidal integration of specific force rotated by the integrated gyro,
 * gravity added back. Drift grows with the square of time (REFERENCES.md §8). */

#include <stddef.h>

#include "arcwise/capture.h"
#include "arcwise/status.h"

typedef struct {
  double min_conf;     /* frames below this confidence are treated as missing */
  double max_gap_s;    /* longest gap filled by interpolation; < 0 fills any gap */
  int sg_window;       /* Savitzky-Golay window in frames (odd), 1 = no smoothing */
  int sg_order;        /* Savitzky-Golay polynomial order */
} AwDepthBaselineSettings;

void aw_depth_baseline_settings_default(AwDepthBaselineSettings *out);

/* pos_cam_m has depth->n rows, on the depth frame times. Rows that cannot be estimated (gaps
 * longer than max_gap_s) are NaN. AW_ERR_TOO_FEW when no frame passes. */
AwStatus aw_depth_baseline(const AwDepthStream *depth, const AwDepthBaselineSettings *settings,
                           double (*pos_cam_m)[3], AwError *err);

typedef struct {
  double t_depth_s;            /* when the state holds, depth clock */
  double pos_cam_m[3];         /* wrist keypoint */
  double vel_cam_m_s[3];       /* IMU velocity */
  double q_cam_body[4];        /* IMU orientation */
  double gravity_cam_m_s2[3];  /* gravity vector in the camera frame (pointing down) */
  double lever_arm_body_m[3];  /* keypoint relative to the IMU, body frame */
  double clock_offset_s;       /* t_depth = t_imu * (1 + clock_drift) + clock_offset_s */
  double clock_drift;
} AwImuInitialState;

/* Keypoint positions at the n depth-clock times t_depth_s (any order). Times before the
 * initial state or outside the IMU stream give NaN. */
AwStatus aw_imu_dead_reckon(const AwImuStream *imu, const AwImuInitialState *init,
                            const double *t_depth_s, size_t n, double (*pos_cam_m)[3],
                            AwError *err);
