/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The two capture streams in memory, their readers (strict validation) and writers.
 * The file formats are documented in README.md ("Capture formats"). Readers convert every
 * declared unit to SI on the way in; in memory everything is SI.
 *
 * Streams are plain records owned by the caller and released with their _free function
 * (which accepts NULL). Arrays are parallel, n entries each. */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "arcwise/status.h"

typedef enum {
  AW_WRIST_UNKNOWN = 0,
  AW_WRIST_LEFT,
  AW_WRIST_RIGHT,
} AwWrist;

typedef struct {
  char device[128];            /* free text from the file's metadata, may be empty */
  double nominal_rate_hz;      /* declared by the file, 0 when not declared */
  double accel_range_m_s2;     /* full-scale range (+-), 0 when not declared */
  double gyro_range_rad_s;     /* full-scale range (+-), 0 when not declared */
  AwWrist wrist;
  /* Added by the capture module (after the fields above, which others code against). */
  char units[96];              /* the units the file declared, normalised, e.g.
                                  "t=ms accel=g gyro=deg/s"; the defaults when none declared */
  /* Added by the fusion module: the device's output group delay, s (a sample stamped t shows
   * the motion around t - output_delay_s, e.g. half a box-averaging window); 0 = none
   * declared. */
  double output_delay_s;
} AwImuMeta;

typedef struct {
  size_t n;
  double *t_s;                 /* IMU clock, s, strictly increasing */
  double (*accel_m_s2)[3];     /* specific force in the sensor frame, m/s^2 */
  double (*gyro_rad_s)[3];     /* angular rate in the sensor frame, rad/s */
  AwImuMeta meta;
} AwImuStream;

typedef struct {
  char device[128];
  double nominal_rate_hz;
  /* Added by the capture module. */
  AwWrist wrist;               /* which wrist the keypoint follows, when the file says */
  char units[96];              /* declared units, normalised, e.g. "t=s pos=mm" */
} AwDepthMeta;

typedef struct {
  size_t n;
  double *t_s;                 /* depth camera clock, s, strictly increasing */
  double (*pos_cam_m)[3];      /* lead-wrist keypoint, camera optical frame; NaN when missing */
  double *conf;                /* detection confidence in [0, 1]; 0 when missing */
  AwDepthMeta meta;
} AwDepthStream;

/* Accepted sample rates (median interval), Hz, and the limits beyond which a value cannot be a
 * real measurement of a golf swing by a wrist sensor (README "Validation"). */
#define AW_IMU_RATE_MIN_HZ 20.0
#define AW_IMU_RATE_MAX_HZ 2000.0
#define AW_DEPTH_RATE_MIN_HZ 5.0
#define AW_DEPTH_RATE_MAX_HZ 240.0
#define AW_IMU_ACCEL_MAX_G 100.0        /* |a| above this (in standard gravities) is rejected */
#define AW_IMU_GYRO_MAX_RAD_S 50.0      /* |w| above this is rejected */
#define AW_DEPTH_Z_MAX_M 20.0           /* depth z must be in (0, 20] m */

/* Allocation helpers: a stream of n zeroed samples (NULL on failure). */
AwImuStream *aw_imu_stream_new(size_t n);
AwDepthStream *aw_depth_stream_new(size_t n);
void aw_imu_stream_free(AwImuStream *s);
void aw_depth_stream_free(AwDepthStream *s);

/* Readers. On failure *out is untouched (NULL), err names file, line, column and reason.
 * `name` is what messages call the input (usually its path). */
AwStatus aw_imu_read_file(const char *path, AwImuStream **out, AwError *err);
AwStatus aw_depth_read_file(const char *path, AwDepthStream **out, AwError *err);
AwStatus aw_imu_read_buffer(const char *data, size_t len, const char *name, AwImuStream **out,
                            AwError *err);
AwStatus aw_depth_read_buffer(const char *data, size_t len, const char *name,
                              AwDepthStream **out, AwError *err);

/* Writers, in SI units with a metadata comment block. Written to a temporary file beside `path`
 * and renamed into place, so a crash never leaves a half-written file. */
AwStatus aw_imu_write_file(const char *path, const AwImuStream *s, AwError *err);
AwStatus aw_depth_write_file(const char *path, const AwDepthStream *s, AwError *err);

/* The kind of stream a file holds, told from its header row. */
typedef enum {
  AW_CAPTURE_UNKNOWN = 0,
  AW_CAPTURE_IMU,
  AW_CAPTURE_DEPTH,
} AwCaptureKind;

/* Reads the comment lines and the header row only and says which kind of stream follows.
 * A header naming neither full set of columns is an AW_ERR_PARSE error that names the missing
 * columns (*kind stays untouched). */
AwStatus aw_capture_detect_buffer(const char *data, size_t len, const char *name,
                                  AwCaptureKind *kind, AwError *err);
AwStatus aw_capture_detect_file(const char *path, AwCaptureKind *kind, AwError *err);

/* "imu", "depth" or "unknown" (never NULL). */
const char *aw_capture_kind_to_string(AwCaptureKind kind);

/* Reads a file of either kind, told from its header row, reading the file once. On success
 * *kind says which, and exactly one of *imu / *depth is set (the other is left untouched); on
 * failure nothing is set. */
AwStatus aw_capture_read_file(const char *path, AwCaptureKind *kind, AwImuStream **imu,
                              AwDepthStream **depth, AwError *err);
