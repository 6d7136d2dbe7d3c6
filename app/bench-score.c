/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Shared scoring of analysed swings against the simulator's truth (bench-score.h). */
#include "bench-score.h"

#include <math.h>
#include <stdlib.h>

const AwSwing *
arcwise_bench_swing_errors(const AwSimSwing *ts, const AwAnalysis *an, ArcwiseSwingErrors *e)
{
  const AwSwing *best = NULL;
  for (size_t j = 0; an != NULL && j < an->n_swings; j++)
    if (best == NULL || fabs(an->swings[j].events[AW_EVENT_IMPACT].t_s - ts->t_impact_s) <
                          fabs(best->events[AW_EVENT_IMPACT].t_s - ts->t_impact_s))
      best = &an->swings[j];
  if (best == NULL) {
    e->top_ms = e->impact_ms = e->tempo_pct = e->hand_pct = e->club_pct = NAN;
    return NULL;
  }
  e->top_ms = 1e3 * fabs(best->events[AW_EVENT_TOP].t_s - ts->t_top_s);
  e->impact_ms = 1e3 * fabs(best->events[AW_EVENT_IMPACT].t_s - ts->t_impact_s);
  double tempo_true = (ts->t_top_s - ts->t_takeaway_s) / (ts->t_impact_s - ts->t_top_s);
  e->tempo_pct = 100 * fabs(best->metrics[AW_METRIC_TEMPO_RATIO] / tempo_true - 1);
  e->hand_pct = 100 * fabs(best->metrics[AW_METRIC_HAND_SPEED_IMPACT_M_S] /
                           ts->hand_speed_impact_m_s - 1);
  e->club_pct = 100 * fabs(best->metrics[AW_METRIC_CLUB_SPEED_IMPACT_M_S] /
                           ts->club_speed_impact_m_s - 1);
  return best;
}

static int
cmp_d(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return x < y ? -1 : x > y ? 1 : 0;
}

double
arcwise_bench_quantile(double *v, size_t n, double q)
{
  if (n == 0)
    return NAN;
  qsort(v, n, sizeof *v, cmp_d);
  double pos = q * (double)(n - 1);
  size_t i = (size_t)floor(pos);
  if (i + 1 >= n)
    return v[n - 1];
  return v[i] + (v[i + 1] - v[i]) * (pos - (double)i);
}
