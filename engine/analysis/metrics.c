/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Coaching metrics, phases and data quality of one swing whose events are known. */
#include "arcwise/analysis.h"
#include "arcwise/math3.h"
#include "analysis-private.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "arcwise/units.h"
#define RAD2DEG AW_DEG_PER_RAD

static AwStatus
plane_of_span(const AwAnWork *w, double t0, double t1, double normal[3])
{
  const double *t = w->traj->t_s;
  size_t i0 = aw_an_index_at(t, w->n, t0), i1 = aw_an_index_at(t, w->n, t1) + 1;
  if (i1 > w->n)
    i1 = w->n;
  if (i1 < i0 + 3)
    return AW_ERR_TOO_FEW;
  return aw_plane_fit(w->traj->pos_m + i0, i1 - i0, NULL, normal, NULL);
}

static double
inclination_deg(const double normal[3], const double up[3])
{
  /* Angle between the plane and the horizontal = angle between its normal and the vertical. */
  double c = fabs(aw_v3_dot(normal, up));
  if (c > 1)
    c = 1;
  return acos(c) * RAD2DEG;
}

static void
phase_stats(const AwAnWork *w, AwPhase *ph)
{
  const AwTrajectory *tr = w->traj;
  size_t i0 = aw_an_index_at(tr->t_s, w->n, ph->start_s);
  size_t i1 = aw_an_index_at(tr->t_s, w->n, ph->end_s);
  if (tr->t_s[i0] < ph->start_s && i0 + 1 < w->n)
    i0++;
  size_t cam = 0, lost = 0, c = 0;
  double info = 0, sig = 0;
  for (size_t i = i0; i <= i1; i++, c++) {
    if (tr->flags != NULL) {
      uint32_t f = tr->flags[i];
      if (f & (AW_FUSED_CAM_ACCEPTED | AW_FUSED_CAM_REJECTED | AW_FUSED_CAM_MISSING)) {
        cam++;
        if (f & (AW_FUSED_CAM_REJECTED | AW_FUSED_CAM_MISSING))
          lost++;
      }
    }
    if (tr->cam_info_share != NULL)
      info += tr->cam_info_share[i];
    if (tr->pos_sigma_m != NULL)
      sig += aw_v3_norm(tr->pos_sigma_m[i]);
  }
  ph->cam_occluded_share = cam > 0 ? (double)lost / (double)cam : AN_NAN;
  ph->cam_info_share_mean = tr->cam_info_share != NULL && c > 0 ? info / (double)c : AN_NAN;
  ph->pos_sigma_mean_m = tr->pos_sigma_m != NULL && c > 0 ? sig / (double)c : AN_NAN;
  ph->dev_camera_masked_m = AN_NAN;
  ph->dev_imu_masked_m = AN_NAN;
  ph->dominance = AW_DOMINANCE_UNKNOWN;
}

void
aw_an_swing_metrics(const AwAnWork *w, AwSwing *s)
{
  const AwTrajectory *tr = w->traj;
  const double *t = tr->t_s;
  size_t n = w->n;
  double *m = s->metrics;
  for (int k = 0; k < AW_METRIC_COUNT_; k++)
    m[k] = AN_NAN;
  double t_take = s->events[AW_EVENT_TAKEAWAY].t_s, t_top = s->events[AW_EVENT_TOP].t_s;
  double t_imp = s->events[AW_EVENT_IMPACT].t_s, t_fin = s->events[AW_EVENT_FINISH].t_s;

  /* Phases. */
  double bounds[AW_PHASE_COUNT_ + 1] = { s->events[AW_EVENT_ADDRESS].t_s, t_take, t_top, t_imp,
                                         t_fin, s->t_end_s };
  for (int k = 0; k < AW_PHASE_COUNT_; k++) {
    s->phases[k].kind = (AwPhaseKind)k;
    s->phases[k].start_s = bounds[k];
    s->phases[k].end_s = bounds[k + 1] > bounds[k] ? bounds[k + 1] : bounds[k];
    phase_stats(w, &s->phases[k]);
  }

  /* Planes. */
  double n_back[3], n_down[3];
  bool have_back = plane_of_span(w, t_take, t_top, n_back) == AW_OK;
  bool have_down = plane_of_span(w, t_top, t_imp, n_down) == AW_OK;
  if (have_back)
    m[AW_METRIC_PLANE_BACKSWING_DEG] = inclination_deg(n_back, w->up);
  if (have_down)
    m[AW_METRIC_PLANE_DOWNSWING_DEG] = inclination_deg(n_down, w->up);
  m[AW_METRIC_PLANE_DIFF_DEG] = m[AW_METRIC_PLANE_DOWNSWING_DEG] - m[AW_METRIC_PLANE_BACKSWING_DEG];

  /* Hand velocity at impact: the hands lose speed for a few ms at contact, so the impact
   * figures use the last sample at least half a sample before it. */
  double v_imp[3];
  size_t i_pre = aw_an_index_at(t, n, t_imp - 0.5 * w->dt_s);
  aw_v3_copy(v_imp, w->vel[i_pre]);
  double speed_imp = aw_v3_norm(v_imp);

  /* Swing frame: up; the target line from the backswing plane's horizontal line (the plane a
   * swing starts on contains the target line), or from the settings; signed so the hands move
   * toward the target through impact. */
  const double *up = w->up;
  double x[3] = { AN_NAN, AN_NAN, AN_NAN };
  if (isfinite(w->set->target_dir[0]) && isfinite(w->set->target_dir[1]) &&
      isfinite(w->set->target_dir[2])) {
    aw_v3_copy(x, w->set->target_dir);
  } else if (have_back) {
    aw_v3_cross(x, n_back, up);
    if (aw_v3_norm(x) < 0.2) /* a flat plane leaves its horizontal line undefined */
      aw_v3_copy(x, v_imp);
  } else {
    aw_v3_copy(x, v_imp);
  }
  aw_v3_axpy(x, -aw_v3_dot(x, up), up);
  aw_v3_normalize(x, x);
  if (aw_v3_dot(x, v_imp) < 0)
    aw_v3_scale(x, x, -1.0);
  double y[3];
  if (s->handed == AW_HANDED_LEFT)
    aw_v3_cross(y, up, x);
  else
    aw_v3_cross(y, x, up);
  for (int a = 0; a < 3; a++) {
    s->R_sw_f[0][a] = x[a];
    s->R_sw_f[1][a] = y[a];
    s->R_sw_f[2][a] = up[a];
  }

  /* Timing. */
  m[AW_METRIC_BACKSWING_S] = t_top - t_take;
  m[AW_METRIC_DOWNSWING_S] = t_imp - t_top;
  m[AW_METRIC_TEMPO_RATIO] = m[AW_METRIC_BACKSWING_S] / m[AW_METRIC_DOWNSWING_S];

  /* Speeds. */
  m[AW_METRIC_HAND_SPEED_IMPACT_M_S] = speed_imp;
  size_t itop = aw_an_index_at(t, n, t_top), ifin = aw_an_index_at(t, n, t_fin);
  size_t ipk = itop;
  for (size_t i = itop; i <= ifin; i++)
    if (w->speed[i] > w->speed[ipk])
      ipk = i;
  m[AW_METRIC_PEAK_HAND_SPEED_M_S] = w->speed[ipk];
  m[AW_METRIC_PEAK_HAND_SPEED_T_S] = t[ipk] - t_imp;

  /* Club head: the lever on the angular rate about the downswing plane's normal. */
  double omega_perp = AN_NAN;
  /* A gyro axis at full scale just before contact reads the rate short: the rate about the
   * plane's normal is then only a lower bound, and the path's own turning rate is used. */
  bool gyro_clipped = false;
  if (tr->gyro_body_rad_s != NULL && tr->gyro_range_rad_s > 0)
    for (int a = 0; a < 3; a++)
      gyro_clipped |= fabs(tr->gyro_body_rad_s[i_pre][a]) >= 0.995 * tr->gyro_range_rad_s;
  if (tr->gyro_body_rad_s != NULL && tr->q_f_body != NULL && have_down && !gyro_clipped) {
    size_t i0 = i_pre, i1 = i_pre;
    double acc = 0;
    size_t c = 0;
    for (size_t i = i0; i <= i1; i++, c++) {
      double wf[3];
      aw_quat_rotate(wf, tr->q_f_body[i], tr->gyro_body_rad_s[i]);
      acc += fabs(aw_v3_dot(wf, n_down));
    }
    omega_perp = acc / (double)c;
  } else {
    /* Without the watch: the rate at which the hand path turns, |v x a| / |v|^2. */
    size_t i = aw_an_index_at(t, n, t_imp);
    if (i > 0 && i + 1 < n) {
      double acc[3], cr[3];
      for (int a = 0; a < 3; a++)
        acc[a] = (w->vel[i + 1][a] - w->vel[i - 1][a]) / (t[i + 1] - t[i - 1]);
      aw_v3_cross(cr, w->vel[i], acc);
      double vv = aw_v3_dot(w->vel[i], w->vel[i]);
      if (vv > 0)
        omega_perp = aw_v3_norm(cr) / vv;
    }
    s->quality.notes |= AW_NOTE_CLUB_FROM_PATH;
  }
  m[AW_METRIC_CLUB_SPEED_IMPACT_M_S] = aw_club_speed_lever(speed_imp, omega_perp, s->club_length_m,
                                                         w->set->club_arm_rate_ratio);

  /* Positions in the swing frame. */
  double p_top[3], p_imp[3];
  aw_swing_position_sw(tr, s, t_top, p_top);
  aw_swing_position_sw(tr, s, t_imp, p_imp);
  m[AW_METRIC_TOP_HEIGHT_M] = p_top[2];
  m[AW_METRIC_TOP_BEHIND_M] = -p_top[0];
  m[AW_METRIC_TOP_OUT_M] = p_top[1];
  m[AW_METRIC_IMPACT_AHEAD_M] = p_imp[0];
  m[AW_METRIC_IMPACT_OUT_M] = p_imp[1];
  m[AW_METRIC_IMPACT_UP_M] = p_imp[2];

  /* Path direction through impact: + when the hands move out, away from the player. The
   * chord from 15 ms before to 15 ms after impact: on an arc it is parallel to the tangent at
   * impact, and the few-ms contact transient barely moves positions. */
  double pa[3], pb[3], chord[3];
  aw_an_interp3(t, tr->pos_m, n, t_imp - 0.015, pa);
  aw_an_interp3(t, tr->pos_m, n, t_imp + 0.015, pb);
  aw_v3_sub(chord, pb, pa);
  double vx = aw_v3_dot(chord, x), vy = aw_v3_dot(chord, y);
  m[AW_METRIC_PATH_DIRECTION_DEG] = atan2(vy, vx) * RAD2DEG;

  /* Path length, takeaway .. finish. */
  double len = 0;
  size_t itake = aw_an_index_at(t, n, t_take);
  for (size_t i = itake; i < ifin && i + 1 < n; i++)
    len += aw_v3_dist(tr->pos_m[i + 1], tr->pos_m[i]);
  m[AW_METRIC_PATH_LENGTH_M] = len;

  /* Peak forearm rate. */
  if (tr->gyro_body_rad_s != NULL) {
    double pk = 0;
    for (size_t i = itake; i <= ifin; i++)
      pk = fmax(pk, aw_v3_norm(tr->gyro_body_rad_s[i]));
    m[AW_METRIC_PEAK_FOREARM_RATE_RAD_S] = pk;
  }

  /* Data quality over the swing's span. */
  AwSwingQuality *q = &s->quality;
  size_t cam = 0, miss = 0, rej = 0, sat = 0, noimu = 0, c = 0, sat_near_imp = 0;
  double sig = 0;
  for (size_t i = s->i_start; i < s->i_end; i++, c++) {
    uint32_t f = tr->flags != NULL ? tr->flags[i] : 0;
    if (f & (AW_FUSED_CAM_ACCEPTED | AW_FUSED_CAM_REJECTED | AW_FUSED_CAM_MISSING))
      cam++;
    if (f & AW_FUSED_CAM_MISSING)
      miss++;
    if (f & AW_FUSED_CAM_REJECTED)
      rej++;
    if (f & AW_FUSED_NO_IMU)
      noimu++;
    bool is_sat = (f & AW_FUSED_IMU_SATURATED) != 0;
    if (tr->flags == NULL) {
      /* No fusion flags: look for full-scale readings directly. */
      for (int a = 0; a < 3; a++) {
        if (tr->accel_range_m_s2 > 0 && tr->accel_body_m_s2 != NULL &&
            fabs(tr->accel_body_m_s2[i][a]) >= 0.995 * tr->accel_range_m_s2)
          is_sat = true;
        if (tr->gyro_range_rad_s > 0 && tr->gyro_body_rad_s != NULL &&
            fabs(tr->gyro_body_rad_s[i][a]) >= 0.995 * tr->gyro_range_rad_s)
          is_sat = true;
      }
    }
    if (is_sat) {
      sat++;
      if (fabs(t[i] - t_imp) < 0.1)
        sat_near_imp++;
    }
    if (tr->pos_sigma_m != NULL)
      sig += aw_v3_norm(tr->pos_sigma_m[i]);
  }
  q->cam_occluded_share = cam > 0 ? (double)miss / (double)cam : AN_NAN;
  q->cam_rejected_share = cam > 0 ? (double)rej / (double)cam : AN_NAN;
  q->imu_saturated_samples = sat;
  q->sync_offset_s = tr->sync_offset_s;
  q->sync_confidence = tr->sync_confidence;
  q->pos_sigma_mean_m = tr->pos_sigma_m != NULL && c > 0 ? sig / (double)c : AN_NAN;

  /* Notes in plain words. "Lost" means more than half the frames of the stretch. */
  {
    AwPhase around_top = { .start_s = t_top - 0.15, .end_s = t_top + 0.15 };
    phase_stats(w, &around_top);
    if (around_top.cam_occluded_share > 0.5)
      q->notes |= AW_NOTE_TOP_HIDDEN;
  }
  if (s->phases[AW_PHASE_FOLLOW_THROUGH].cam_occluded_share > 0.5)
    q->notes |= AW_NOTE_FOLLOW_HIDDEN;
  if (q->cam_rejected_share > 0.2)
    q->notes |= AW_NOTE_MANY_REJECTED;
  if (sat_near_imp > 0)
    q->notes |= AW_NOTE_IMU_SATURATED;
  if (q->sync_confidence < 0.5)
    q->notes |= AW_NOTE_SYNC_WEAK;
  if (q->pos_sigma_mean_m > 0.02)
    q->notes |= AW_NOTE_LARGE_SIGMA;
  if (s->events[AW_EVENT_IMPACT].estimated)
    q->notes |= AW_NOTE_IMPACT_ESTIMATED;
  if (tr->accel_body_m_s2 == NULL || (c > 0 && noimu * 2 > c))
    q->notes |= AW_NOTE_NO_IMU;
}
