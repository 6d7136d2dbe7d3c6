/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once
/* Internal helpers of the analysis area (not part of the public API). */

#include <stdbool.h>
#include <stddef.h>
#include <math.h>

/* NAN is a float constant; the engine computes in double. */
#define AN_NAN ((double)NAN)

/* Local polynomial fit of degree `order` over 2*half+1 samples around each sample, evaluated
 * there (deriv 0, 1 or 2, in units per second^deriv). x and out are strided arrays. */
bool aw_an_local_poly(const double *t_s, const double *x, size_t stride, size_t n, int half,
                      int order, int deriv, double *out, size_t out_stride);
bool aw_an_derivative3(const double *t_s, const double (*p)[3], size_t n, int half, int order,
                       double (*out)[3]);

#include "arcwise/analysis.h"

/* Per-recording working data shared by swing finding, metrics and trust. */
typedef struct {
  const AwTrajectory *traj;
  const AwAnalysisSettings *set;
  size_t n;
  double dt_s;                 /* median sample interval */
  double (*vel)[3];            /* velocity used (copied or derived) */
  double *speed;
  double up[3];
} AwAnWork;

/* Linear interpolation of a 3-vector array at time t (clamped to the ends). */
void aw_an_interp3(const double *t_s, const double (*x)[3], size_t n, double t, double out[3]);
/* Index of the last sample with t_s[i] <= t (0 if t is before the start). */
size_t aw_an_index_at(const double *t_s, size_t n, double t);

/* Metrics, phases and quality of one swing whose events are set. */
void aw_an_swing_metrics(const AwAnWork *w, AwSwing *s);
