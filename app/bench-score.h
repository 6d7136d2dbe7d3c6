/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Scoring of an analysed swing against the simulator's truth, shared by `arcwise bench
 * analysis` and `arcwise bench accuracy` so both tables mean the same thing. */

#include <stdbool.h>
#include <stddef.h>

#include "arcwise/analysis.h"
#include "arcwise/sim.h"

typedef struct {
  double top_ms;      /* |top - true top| */
  double impact_ms;   /* |impact - true impact| */
  double tempo_pct;   /* |tempo / true tempo - 1| in % */
  double hand_pct;    /* hand speed at impact, relative |error| in % */
  double club_pct;    /* club-head speed at impact, relative |error| in % */
} ArcwiseSwingErrors;

/* The analysed swing of an whose impact lies nearest the true swing's (NULL when an has
 * none), and its errors. */
const AwSwing *arcwise_bench_swing_errors(const AwSimSwing *truth, const AwAnalysis *an,
                                          ArcwiseSwingErrors *out);

/* Linear-interpolated quantile (numpy's default method); sorts v. NaN for n = 0. */
double arcwise_bench_quantile(double *v, size_t n, double q);
