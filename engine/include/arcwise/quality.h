/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Data-quality findings for the capture streams: gaps, timing jitter, saturated IMU samples and
 * depth frames without a detection, each with its times. These are not errors (the readers have
 * already rejected what cannot be a recording); fusion, the store and the UI show them so the
 * user knows which stretches of a capture to trust less. */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "arcwise/capture.h"
#include "arcwise/status.h"

typedef enum {
  AW_FINDING_GAP = 0,        /* an interval longer than gap_factor x the median interval */
  AW_FINDING_JITTER,         /* a stretch of intervals off the median by more than
                                jitter_fraction (gaps excluded) */
  AW_FINDING_SATURATION,     /* consecutive IMU samples at full scale on one sensor */
  AW_FINDING_MISSING_FRAMES, /* consecutive depth frames without a detection */
  AW_FINDING_KIND_COUNT_
} AwFindingKind;

/* Axis bits of a saturation finding and of aw_imu_saturation_flags(). */
enum {
  AW_SAT_AX = 1u << 0, AW_SAT_AY = 1u << 1, AW_SAT_AZ = 1u << 2,
  AW_SAT_GX = 1u << 3, AW_SAT_GY = 1u << 4, AW_SAT_GZ = 1u << 5,
  AW_SAT_ACCEL = AW_SAT_AX | AW_SAT_AY | AW_SAT_AZ,
  AW_SAT_GYRO = AW_SAT_GX | AW_SAT_GY | AW_SAT_GZ,
};

typedef struct {
  AwFindingKind kind;
  double t_start_s;   /* gap: the last sample before it; otherwise the first sample involved */
  double t_end_s;     /* gap: the first sample after it; otherwise the last sample involved */
  size_t first;       /* index of the sample at t_start_s */
  size_t count;       /* gap: samples missing (estimated from the median interval);
                         jitter: irregular intervals; saturation: samples; missing: frames */
  unsigned axes;      /* saturation: AW_SAT_* bits of the axes at full scale */
  double value;       /* gap: its length, s; jitter: the largest |interval - median|, s;
                         saturation: the largest |value| reached, m/s^2 (accel) or rad/s (gyro);
                         missing frames: their span t_end - t_start + one median interval, s */
} AwFinding;

/* Thresholds, each with its meaning. Defaults from aw_quality_settings_default(). */
typedef struct {
  double gap_factor;                 /* an interval above this x median is a gap (1.5: halfway
                                        between one sample period and one dropped sample) */
  double jitter_fraction;            /* |interval - median| above this x median is irregular */
  size_t jitter_merge_intervals;     /* irregular intervals closer than this merge into one */
  double saturation_fraction;        /* |value| >= this x declared full scale is saturated */
  double flat_rel_tol;               /* undeclared full scale: values within this (relative) of
                                        an axis extreme count as "at" the extreme */
  size_t flat_min_run;               /* ... and a run this long at the extreme means clipping */
  double accel_min_full_scale_m_s2;  /* no accelerometer clips below this (smallest common
                                        full scale, 2 g) */
  double gyro_min_full_scale_rad_s;  /* no gyro clips below this (125 deg/s) */
} AwQualitySettings;

void aw_quality_settings_default(AwQualitySettings *out);

typedef struct {
  AwCaptureKind kind;
  size_t n_samples;
  double t_first_s, t_last_s, duration_s;
  double dt_median_s, rate_hz;       /* rate = 1 / median interval */
  double dt_min_s, dt_max_s;
  double dt_spread_s;                /* robust spread of the intervals: 1.4826 x median absolute
                                        deviation (equals the s.d. for normal jitter) */
  double dt_sd_s;                    /* standard deviation of the intervals that are not gaps */
  size_t n_gaps;
  double gap_total_s;                /* time lost in gaps beyond one median interval each */
  size_t n_jitter_intervals;
  /* IMU */
  size_t n_saturated;                /* samples with any axis at full scale */
  size_t n_saturated_accel, n_saturated_gyro;
  double accel_full_scale_m_s2;      /* declared, else inferred from clipping, else 0 */
  double gyro_full_scale_rad_s;
  bool accel_full_scale_inferred, gyro_full_scale_inferred;
  /* depth */
  size_t n_missing_frames;
  /* every finding in time order within each kind: gaps, jitter, saturation, missing frames */
  size_t n_findings;
  AwFinding *findings;
} AwQualityReport;

/* settings may be NULL (defaults). On failure *out is untouched. */
AwStatus aw_imu_quality(const AwImuStream *s, const AwQualitySettings *settings,
                        AwQualityReport **out, AwError *err);
AwStatus aw_depth_quality(const AwDepthStream *s, const AwQualitySettings *settings,
                          AwQualityReport **out, AwError *err);
void aw_quality_report_free(AwQualityReport *r);

/* Per-sample saturation, for fusion: flags[i] gets the AW_SAT_* bits of sample i (flags holds
 * s->n entries). The full scales used (declared or inferred, 0 when neither) go to
 * *accel_fs_m_s2 and *gyro_fs_rad_s when those are not NULL. */
AwStatus aw_imu_saturation_flags(const AwImuStream *s, const AwQualitySettings *settings,
                                 uint8_t *flags, double *accel_fs_m_s2, double *gyro_fs_rad_s,
                                 AwError *err);

/* "gap", "jitter", "saturation", "missing-frames" (never NULL). */
const char *aw_finding_kind_to_string(AwFindingKind kind);
