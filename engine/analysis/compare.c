/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Comparing two swings and the consistency of a session. */
#include "arcwise/analysis.h"
#include "arcwise/math3.h"
#include "analysis-private.h"

#include <math.h>
#include <string.h>

void
aw_swing_position_sw(const AwTrajectory *traj, const AwSwing *s, double t_s, double out_sw_m[3])
{
  double p[3], d[3];
  aw_an_interp3(traj->t_s, traj->pos_m, traj->n, t_s, p);
  aw_v3_sub(d, p, s->origin_f_m);
  aw_mat_mul_v3(out_sw_m, s->R_sw_f, d);
}

/* Piecewise-linear warp: time in swing b matching time t in swing a, by the events. */
static double
warp_a_to_b(const AwSwing *a, const AwSwing *b, double t)
{
  static const AwEventKind ev[] = { AW_EVENT_ADDRESS, AW_EVENT_TAKEAWAY, AW_EVENT_TOP,
                                    AW_EVENT_IMPACT, AW_EVENT_FINISH };
  const size_t ne = sizeof ev / sizeof ev[0];
  double ta_end = a->t_end_s, tb_end = b->t_end_s;
  for (size_t k = 0; k + 1 <= ne; k++) {
    double a0 = a->events[ev[k]].t_s, b0 = b->events[ev[k]].t_s;
    double a1 = k + 1 < ne ? a->events[ev[k + 1]].t_s : ta_end;
    double b1 = k + 1 < ne ? b->events[ev[k + 1]].t_s : tb_end;
    if (t <= a1 || k + 1 == ne) {
      if (a1 <= a0)
        return b0;
      return b0 + (t - a0) * (b1 - b0) / (a1 - a0);
    }
  }
  return tb_end;
}

AwStatus
aw_swing_compare(const AwTrajectory *traj_a, const AwSwing *a, const AwTrajectory *traj_b,
                 const AwSwing *b, AwSwingComparison *out, AwError *err)
{
  if (traj_a == NULL || a == NULL || traj_b == NULL || b == NULL || out == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "missing swing to compare");
  memset(out, 0, sizeof *out);
  /* Per phase: sample A's phase at its own rate, find the matching moment in B by the warp,
   * and measure the distance in the swing frames (both start at their address, both face
   * their own target line). */
  double all_ss = 0;
  size_t all_c = 0;
  for (int p = 0; p < AW_PHASE_COUNT_; p++) {
    const AwPhase *pa = &a->phases[p];
    size_t i0 = aw_an_index_at(traj_a->t_s, traj_a->n, pa->start_s);
    size_t i1 = aw_an_index_at(traj_a->t_s, traj_a->n, pa->end_s);
    double ss = 0, mx = 0;
    size_t c = 0;
    for (size_t i = i0; i <= i1; i++) {
      double t = traj_a->t_s[i];
      if (t < pa->start_s || t > pa->end_s)
        continue;
      double pa_sw[3], pb_sw[3];
      aw_swing_position_sw(traj_a, a, t, pa_sw);
      aw_swing_position_sw(traj_b, b, warp_a_to_b(a, b, t), pb_sw);
      double d = aw_v3_dist(pa_sw, pb_sw);
      ss += d * d;
      mx = fmax(mx, d);
      c++;
      if (p >= AW_PHASE_BACKSWING && p <= AW_PHASE_FOLLOW_THROUGH) {
        all_ss += d * d;
        all_c++;
      }
    }
    out->phase_rms_m[p] = c > 0 ? sqrt(ss / (double)c) : AN_NAN;
    out->phase_max_m[p] = c > 0 ? mx : AN_NAN;
    out->phase_duration_diff_s[p] = (b->phases[p].end_s - b->phases[p].start_s) -
                                    (pa->end_s - pa->start_s);
  }
  out->overall_rms_m = all_c > 0 ? sqrt(all_ss / (double)all_c) : AN_NAN;
  double ta = a->events[AW_EVENT_TAKEAWAY].t_s, tb = b->events[AW_EVENT_TAKEAWAY].t_s;
  for (int e = 0; e < AW_EVENT_COUNT_; e++)
    out->event_dt_s[e] = (b->events[e].t_s - tb) - (a->events[e].t_s - ta);
  for (int k = 0; k < AW_METRIC_COUNT_; k++)
    out->metric_diff[k] = b->metrics[k] - a->metrics[k];
  return AW_OK;
}

void
aw_session_consistency(const AwSwing *const *swings, size_t n, AwConsistency *out)
{
  for (int k = 0; k < AW_METRIC_COUNT_; k++) {
    double s1 = 0, mn = INFINITY, mx = -INFINITY;
    size_t c = 0;
    for (size_t i = 0; i < n; i++) {
      double v = swings[i]->metrics[k];
      if (!isfinite(v))
        continue;
      s1 += v;
      mn = fmin(mn, v);
      mx = fmax(mx, v);
      c++;
    }
    out->n[k] = c;
    out->mean[k] = c > 0 ? s1 / (double)c : AN_NAN;
    double ss = 0;
    for (size_t i = 0; i < n; i++) {
      double v = swings[i]->metrics[k];
      if (isfinite(v))
        ss += (v - out->mean[k]) * (v - out->mean[k]);
    }
    /* Two-pass variance: stable when the spread is small against the mean. */
    out->sd[k] = c > 1 ? sqrt(ss / (double)(c - 1)) : AN_NAN;
    out->min[k] = c > 0 ? mn : AN_NAN;
    out->max[k] = c > 0 ? mx : AN_NAN;
  }
}
