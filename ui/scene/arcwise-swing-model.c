/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fused path -> scene-frame swing model, and an invented demo swing (see the header). */
#include "arcwise-swing-model.h"

#include <gio/gio.h>

#include <math.h>
#include <string.h>

#include "arcwise/math3.h"

void
arcwise_swing_placement_default(ArcwiseSwingPlacement *out)
{
  out->ball_offset_m = 0.45;
  out->hands_height_m = 0.78;
  out->club_length_m = 0.0;
}

static ArcwiseSwingModel *
model_alloc(size_t n, bool with_club)
{
  ArcwiseSwingModel *m = g_new0(ArcwiseSwingModel, 1);
  m->n = n;
  m->t_s = g_new0(float, n);
  m->pos_m = g_malloc0_n(n, sizeof(float[3]));
  m->speed_m_s = g_new0(float, n);
  m->phase = g_new0(unsigned char, n);
  m->occluded = g_new0(unsigned char, n);
  m->cam_share = g_new0(float, n);
  m->band_m = g_new0(float, n);
  if (with_club)
    m->club_m = g_malloc0_n(n, sizeof(float[3]));
  m->handed = 1;
  for (int k = 0; k < 3; k++)
    m->R_scene_cam[k][k] = 1.0;
  m->events.takeaway_s = m->events.top_s = m->events.impact_s = m->events.finish_s = NAN;
  return m;
}

void
arcwise_swing_model_free(ArcwiseSwingModel *m)
{
  if (m == NULL)
    return;
  g_free(m->t_s);
  g_free(m->pos_m);
  g_free(m->speed_m_s);
  g_free(m->phase);
  g_free(m->occluded);
  g_free(m->cam_share);
  g_free(m->band_m);
  g_free(m->club_m);
  g_free(m->carried);
  g_free(m);
}

void
arcwise_swing_model_set_analysis(ArcwiseSwingModel *m, const AwSwing *sw)
{
  g_clear_pointer(&m->carried, g_free);
  memset(&m->analysed, 0, sizeof m->analysed);
  if (sw == NULL)
    return;
  ArcwiseSwingAnalysed *a = &m->analysed;
  a->present = true;
  memcpy(a->metric, sw->metrics, sizeof a->metric);
  a->notes = sw->quality.notes;
  a->practice = sw->practice;
  a->half = sw->half;
  bool known = false;
  for (int p = 0; p < ARCWISE_SCENE_N_PHASES && p < AW_PHASE_COUNT_; p++) {
    a->dominance[p] = (int)sw->phases[p].dominance;
    a->dev_camera_masked_m[p] = sw->phases[p].dev_camera_masked_m;
    a->dev_imu_masked_m[p] = sw->phases[p].dev_imu_masked_m;
    known = known || sw->phases[p].dominance != AW_DOMINANCE_UNKNOWN;
  }
  if (!known)
    return;
  m->carried = g_new(float, m->n);
  for (size_t i = 0; i < m->n; i++) {
    int p = m->phase[i] < ARCWISE_SCENE_N_PHASES ? m->phase[i] : 0;
    switch (a->dominance[p]) {
    case AW_DOMINANCE_CAMERA: m->carried[i] = 1.0f; break;
    case AW_DOMINANCE_IMU: m->carried[i] = 0.0f; break;
    case AW_DOMINANCE_SHARED: m->carried[i] = 0.5f; break;
    default: m->carried[i] = m->cam_share[i]; break;
    }
  }
}

size_t
arcwise_swing_model_index_at(const ArcwiseSwingModel *m, double t)
{
  if (m->n == 0 || !(t > (double)m->t_s[0]))
    return 0;
  size_t lo = 0, hi = m->n - 1;
  if (t >= (double)m->t_s[hi])
    return hi;
  while (hi - lo > 1) {
    size_t mid = (lo + hi) / 2;
    if ((double)m->t_s[mid] <= t) lo = mid; else hi = mid;
  }
  return lo;
}

void
arcwise_swing_model_update_phases(ArcwiseSwingModel *m)
{
  const ArcwiseSwingEvents *e = &m->events;
  double share_sum[ARCWISE_SCENE_N_PHASES] = { 0 };
  double occl_sum[ARCWISE_SCENE_N_PHASES] = { 0 };
  size_t count[ARCWISE_SCENE_N_PHASES] = { 0 };
  float lo[3] = { INFINITY, INFINITY, INFINITY }, hi[3] = { -INFINITY, -INFINITY, -INFINITY };
  memset(m->phase_band_max_m, 0, sizeof m->phase_band_max_m);
  m->peak_speed_m_s = 0;
  for (size_t i = 0; i < m->n; i++) {
    double t = (double)m->t_s[i];
    ArcwiseScenePhase ph = ARCWISE_SCENE_PHASE_ADDRESS;
    /* A missing event leaves the previous phase running, never invents a boundary. */
    if (isfinite(e->takeaway_s) && t >= e->takeaway_s)
      ph = ARCWISE_SCENE_PHASE_BACKSWING;
    if (isfinite(e->top_s) && t >= e->top_s)
      ph = ARCWISE_SCENE_PHASE_DOWNSWING;
    if (isfinite(e->impact_s) && t >= e->impact_s)
      ph = ARCWISE_SCENE_PHASE_FOLLOW_THROUGH;
    if (isfinite(e->finish_s) && t >= e->finish_s)
      ph = ARCWISE_SCENE_PHASE_FINISH;
    m->phase[i] = (unsigned char)ph;
    share_sum[ph] += (double)m->cam_share[i];
    occl_sum[ph] += m->occluded[i] ? 1.0 : 0.0;
    count[ph]++;
    if (m->band_m[i] > m->phase_band_max_m[ph])
      m->phase_band_max_m[ph] = m->band_m[i];
    if (m->speed_m_s[i] > m->peak_speed_m_s)
      m->peak_speed_m_s = m->speed_m_s[i];
    for (int k = 0; k < 3; k++) {
      lo[k] = fminf(lo[k], m->pos_m[i][k]);
      hi[k] = fmaxf(hi[k], m->pos_m[i][k]);
    }
  }
  for (int p = 0; p < ARCWISE_SCENE_N_PHASES; p++) {
    m->phase_cam_share[p] = count[p] ? (float)(share_sum[p] / (double)count[p]) : (float)NAN;
    m->phase_occluded[p] = count[p] ? (float)(occl_sum[p] / (double)count[p]) : (float)NAN;
  }
  for (int k = 0; k < 3; k++)
    m->centre_m[k] = m->n ? 0.5f * (lo[k] + hi[k]) : 0.0f;
}

void
arcwise_swing_model_as_path(const ArcwiseSwingModel *m, ArcwiseScenePath *out)
{
  out->n = m->n;
  out->pos_m = (const float (*)[3])m->pos_m;
  out->t_s = m->t_s;
  out->speed_m_s = m->speed_m_s;
  out->phase = m->phase;
  out->occluded = m->occluded;
  out->cam_share = m->carried ? m->carried : m->cam_share;
  out->band_m = m->band_m;
  out->club_m = (const float (*)[3])m->club_m;
}

/* ---- from a fused path ------------------------------------------------------------------- */

ArcwiseSwingModel *
arcwise_swing_model_new_from_fused(const AwFusedPath *path, double t0_s, double t1_s,
                                   const ArcwiseSwingEvents *events,
                                   const ArcwiseSwingPlacement *placement, GError **error)
{
  ArcwiseSwingPlacement pl;
  if (placement != NULL)
    pl = *placement;
  else
    arcwise_swing_placement_default(&pl);

  size_t first = path->n, last = 0;
  for (size_t i = 0; i < path->n; i++)
    if (path->t_s[i] >= t0_s && path->t_s[i] <= t1_s) {
      if (first == path->n)
        first = i;
      last = i;
    }
  if (first == path->n || last <= first) {
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_INVALID_DATA,
                "the swing window %.3f-%.3f s holds fewer than 2 samples of the fused path",
                t0_s, t1_s);
    return NULL;
  }
  size_t n = last - first + 1;

  /* Camera frame -> gravity-aligned frame (z up). */
  double R_cam_grav[3][3];
  aw_quat_to_mat(R_cam_grav, path->report.q_cam_grav);
  double (*g)[3] = g_malloc_n(n, sizeof(double[3]));
  double (*gv)[3] = g_malloc_n(n, sizeof(double[3]));
  for (size_t i = 0; i < n; i++) {
    aw_mat_tmul_v3(g[i], (const double (*)[3])R_cam_grav, path->pos_cam_m[first + i]);
    aw_mat_tmul_v3(gv[i], (const double (*)[3])R_cam_grav, path->vel_cam_m_s[first + i]);
  }

  /* Impact sample: the event, or the fastest sample. */
  size_t imp = 0;
  double best = -1;
  for (size_t i = 0; i < n; i++) {
    double s = aw_v3_norm(gv[i]);
    if (s > best) { best = s; imp = i; }
  }
  if (events != NULL && isfinite(events->impact_s))
    for (size_t i = 0; i < n; i++)
      if (path->t_s[first + i] <= events->impact_s)
        imp = i;

  /* Target direction: horizontal hand velocity at impact (averaged over +-2 samples). */
  double x_dir[3] = { 0, 0, 0 };
  for (size_t i = imp >= 2 ? imp - 2 : 0; i <= imp + 2 && i < n; i++)
    aw_v3_add(x_dir, x_dir, gv[i]);
  x_dir[2] = 0;
  if (aw_v3_norm(x_dir) < 1e-6)
    aw_v3_set(x_dir, 1, 0, 0);
  aw_v3_normalize(x_dir, x_dir);
  const double z_dir[3] = { 0, 0, 1 };
  double y_dir[3];
  aw_v3_cross(y_dir, z_dir, x_dir);

  double mean[3] = { 0, 0, 0 };
  for (size_t i = 0; i < n; i++)
    aw_v3_add(mean, mean, g[i]);
  aw_v3_scale(mean, mean, 1.0 / (double)n);
  double to_mean[3];
  aw_v3_sub(to_mean, mean, g[imp]);
  int handed = aw_v3_dot(to_mean, y_dir) >= 0 ? 1 : -1;

  /* Ball: below and in front of the hands at impact. */
  double ball[3];
  aw_v3_copy(ball, g[imp]);
  aw_v3_axpy(ball, -pl.ball_offset_m * handed, y_dir);
  ball[2] -= pl.hands_height_m;

  ArcwiseSwingModel *m = model_alloc(n, pl.club_length_m > 0);
  m->handed = handed;
  /* R_scene_cam = rows x, y, z (in grav) times R_grav_cam. */
  for (int r = 0; r < 3; r++) {
    const double *axis = r == 0 ? x_dir : r == 1 ? y_dir : z_dir;
    for (int c = 0; c < 3; c++)
      m->R_scene_cam[r][c] = axis[0] * R_cam_grav[c][0] + axis[1] * R_cam_grav[c][1] +
                             axis[2] * R_cam_grav[c][2];
  }
  /* ball (grav) back to the camera frame: origin_cam = R_cam_grav ball. */
  aw_mat_mul_v3(m->origin_cam_m, (const double (*)[3])R_cam_grav, ball);
  double t_base = path->t_s[first];
  for (size_t i = 0; i < n; i++) {
    size_t j = first + i;
    double d[3];
    aw_v3_sub(d, g[i], ball);
    m->pos_m[i][0] = (float)aw_v3_dot(d, x_dir);
    m->pos_m[i][1] = (float)aw_v3_dot(d, y_dir);
    m->pos_m[i][2] = (float)d[2];
    m->t_s[i] = (float)(path->t_s[j] - t_base);
    m->speed_m_s[i] = (float)aw_v3_norm(gv[i]);
    uint32_t f = path->flags[j];
    m->occluded[i] = (f & (AW_FUSED_CAM_MISSING | AW_FUSED_CAM_REJECTED)) &&
                     !(f & AW_FUSED_CAM_ACCEPTED);
    m->cam_share[i] = path->cam_info_share ? (float)path->cam_info_share[j] : 1.0f;
    const double *s = path->pos_sigma_cam_m[j];
    m->band_m[i] = (float)(2.0 * sqrt(s[0] * s[0] + s[1] * s[1] + s[2] * s[2]));
    if (m->club_m != NULL) {
      /* Club head along the IMU's body x axis (the forearm direction for a watch worn as
       * documented in README "Capture formats"), a crude estimate shown only on request. */
      double ax_body[3] = { 1, 0, 0 }, ax_cam[3], ax_g[3];
      double R_cam_body[3][3];
      aw_quat_to_mat(R_cam_body, path->q_cam_body[j]);
      aw_mat_mul_v3(ax_cam, (const double (*)[3])R_cam_body, ax_body);
      aw_mat_tmul_v3(ax_g, (const double (*)[3])R_cam_grav, ax_cam);
      double c[3];
      aw_v3_copy(c, d);
      aw_v3_axpy(c, pl.club_length_m, ax_g);
      m->club_m[i][0] = (float)aw_v3_dot(c, x_dir);
      m->club_m[i][1] = (float)aw_v3_dot(c, y_dir);
      m->club_m[i][2] = (float)c[2];
    }
  }
  if (events != NULL) {
    m->events.takeaway_s = events->takeaway_s - t_base;
    m->events.top_s = events->top_s - t_base;
    m->events.impact_s = events->impact_s - t_base;
    m->events.finish_s = events->finish_s - t_base;
  }
  g_free(g);
  g_free(gv);
  arcwise_swing_model_update_phases(m);
  return m;
}

void
arcwise_swing_model_set_club_cam(ArcwiseSwingModel *m, const double (*club_cam_m)[3])
{
  if (m->club_m == NULL)
    m->club_m = g_malloc0_n(m->n, sizeof(float[3]));
  for (size_t i = 0; i < m->n; i++) {
    double d[3], o[3];
    aw_v3_sub(d, club_cam_m[i], m->origin_cam_m);
    aw_mat_mul_v3(o, (const double (*)[3])m->R_scene_cam, d);
    for (int k = 0; k < 3; k++)
      m->club_m[i][k] = (float)o[k];
  }
}

/* ---- invented demo swing ------------------------------------------------------------------ */

static double
smooth01(double u)
{
  u = u < 0 ? 0 : u > 1 ? 1 : u;
  return u * u * (3 - 2 * u);
}

ArcwiseSwingModel *
arcwise_swing_model_new_demo(int variant, int handed)
{
  const double rate_hz = 100.0;
  const double v = (double)(variant % 7) - 3.0;     /* -3..3 */
  const double t_hold = 0.40;
  const double t_back = 0.80 + 0.03 * v;            /* 24 frames at 30/s, +- a frame */
  const double t_down = 0.267 + 0.01 * v;
  const double t_follow = 0.55;
  const double t_rest = 0.40;
  const double total = t_hold + t_back + t_down + t_follow + t_rest;
  size_t n = (size_t)(total * rate_hz) + 1;
  ArcwiseSwingModel *m = model_alloc(n, true);
  m->handed = handed < 0 ? -1 : 1;
  double side = m->handed;

  /* Shoulder centre and the plane of the hands (spanned by the target line and the arm at
   * address), tilted a little per variant. */
  const double C[3] = { 0.0, 0.58 * side, 1.38 };
  double hands0[3] = { 0.06, 0.36 * side, 0.80 - 0.01 * v };
  double e2[3], e1[3] = { 1, 0, 0 };
  aw_v3_sub(e2, hands0, C);
  const double R0 = aw_v3_norm(e2);
  aw_v3_normalize(e2, e2);
  /* Make e1 orthogonal to e2 (it nearly is) and tilt by the variant. */
  double tilt = 0.03 * v;
  double e3[3];
  aw_v3_cross(e3, e1, e2);
  for (int k = 0; k < 3; k++)
    e1[k] = cos(tilt) * e1[k] + sin(tilt) * e3[k];
  double d = aw_v3_dot(e1, e2);
  aw_v3_axpy(e1, -d, e2);
  aw_v3_normalize(e1, e1);

  const double th_top = -2.75 - 0.05 * v;   /* about 158 degrees back */
  const double th_fin = 3.35;
  double prev[3] = { 0, 0, 0 };
  for (size_t i = 0; i < n; i++) {
    double t = (double)i / rate_hz, th;
    if (t < t_hold)
      th = 0.0;
    else if (t < t_hold + t_back)
      th = th_top * smooth01((t - t_hold) / t_back);
    else if (t < t_hold + t_back + t_down) {
      double u = (t - t_hold - t_back) / t_down;
      th = th_top * (1.0 - pow(u, 1.7));
    } else if (t < t_hold + t_back + t_down + t_follow) {
      double u = (t - t_hold - t_back - t_down) / t_follow;
      th = th_fin * (1.0 - pow(1.0 - u, 2.2));
    } else
      th = th_fin;
    /* Arms fold toward the top and the finish. */
    double r = R0 * (1.0 - 0.22 * pow(fabs(sin(0.5 * th)), 3.0));
    double p[3];
    aw_v3_copy(p, C);
    aw_v3_axpy(p, r * cos(th), e2);
    aw_v3_axpy(p, r * sin(th), e1);
    if (t >= t_hold + t_back && t < t_hold + t_back + t_down) {
      /* The hands drop inside the backswing on the way down, back on line at impact. */
      double u = (t - t_hold - t_back) / t_down;
      double drop = sin(G_PI * u);
      p[1] += 0.10 * side * drop;
      p[2] -= 0.06 * drop;
    }
    for (int k = 0; k < 3; k++)
      m->pos_m[i][k] = (float)p[k];
    m->t_s[i] = (float)t;
    if (i > 0) {
      double dd[3];
      aw_v3_sub(dd, p, prev);
      m->speed_m_s[i] = (float)(aw_v3_norm(dd) * rate_hz);
    }
    aw_v3_copy(prev, p);
    /* Club: hinged at the wrist, 90 degrees at the top, in line with the arm at impact. */
    double hinge = th < 0 ? 1.5 * smooth01(-th / -th_top) : 1.3 * smooth01(th / th_fin);
    double radial[3], tang[3];
    aw_v3_sub(radial, p, C);
    aw_v3_normalize(radial, radial);
    aw_v3_scale(tang, e1, cos(th));
    aw_v3_axpy(tang, -sin(th), e2);
    double sgn = th < 0 ? -1.0 : 1.0;
    double cd[3];
    aw_v3_scale(cd, radial, cos(hinge));
    aw_v3_axpy(cd, -sgn * sin(hinge), tang);
    for (int k = 0; k < 3; k++)
      m->club_m[i][k] = (float)(p[k] + 0.95 * cd[k]);
    /* The body hides the hands near the top and late in the follow-through. */
    bool lost = th < -2.35 || (th > 2.2 && th < 3.2);
    m->occluded[i] = lost;
    m->cam_share[i] = lost ? 0.1f : 0.85f;
    m->band_m[i] = 0.012f;
  }
  m->speed_m_s[0] = m->speed_m_s[n > 1 ? 1 : 0];
  /* Band: grows quadratically across each gap (bias-driven drift, cf. REFERENCES.md §8). */
  for (size_t i = 0; i < n; i++) {
    if (!m->occluded[i])
      continue;
    size_t a = i, b = i;
    while (a > 0 && m->occluded[a - 1]) a--;
    while (b + 1 < n && m->occluded[b + 1]) b++;
    double gap = (double)(b - a + 1) / rate_hz;
    double u = (double)(i - a + 1) / rate_hz, w = (double)(b - i + 1) / rate_hz;
    double tt = fmin(u, w);
    m->band_m[i] = (float)(0.012 + 0.5 * 0.6 * tt * tt + 0.02 * gap);
  }
  m->events.takeaway_s = t_hold;
  m->events.top_s = t_hold + t_back;
  m->events.impact_s = t_hold + t_back + t_down;
  m->events.finish_s = t_hold + t_back + t_down + t_follow;
  arcwise_swing_model_update_phases(m);
  return m;
}

ArcwiseSwingModel *
arcwise_swing_model_copy_shifted(const ArcwiseSwingModel *m, const float offset_m[3])
{
  ArcwiseSwingModel *c = g_memdup2(m, sizeof *m);
  c->t_s = g_memdup2(m->t_s, m->n * sizeof m->t_s[0]);
  c->pos_m = g_memdup2(m->pos_m, m->n * sizeof m->pos_m[0]);
  c->speed_m_s = g_memdup2(m->speed_m_s, m->n * sizeof m->speed_m_s[0]);
  c->phase = g_memdup2(m->phase, m->n);
  c->occluded = g_memdup2(m->occluded, m->n);
  c->cam_share = g_memdup2(m->cam_share, m->n * sizeof m->cam_share[0]);
  c->band_m = g_memdup2(m->band_m, m->n * sizeof m->band_m[0]);
  c->club_m = m->club_m ? g_memdup2(m->club_m, m->n * sizeof m->club_m[0]) : NULL;
  c->carried = m->carried ? g_memdup2(m->carried, m->n * sizeof m->carried[0]) : NULL;
  for (size_t i = 0; i < c->n; i++)
    for (int k = 0; k < 3; k++) {
      c->pos_m[i][k] += offset_m[k];
      if (c->club_m)
        c->club_m[i][k] += offset_m[k];
    }
  for (int k = 0; k < 3; k++)
    c->centre_m[k] += offset_m[k];
  return c;
}

void
arcwise_swing_model_position_at(const ArcwiseSwingModel *m, double t, float out[3])
{
  size_t i = arcwise_swing_model_index_at(m, t);
  size_t j = i + 1 < m->n ? i + 1 : i;
  double span = (double)(m->t_s[j] - m->t_s[i]);
  double u = span > 0 ? (t - (double)m->t_s[i]) / span : 0.0;
  u = u < 0 ? 0 : u > 1 ? 1 : u;
  for (int k = 0; k < 3; k++)
    out[k] = (float)((double)m->pos_m[i][k] + ((double)m->pos_m[j][k] - (double)m->pos_m[i][k]) * u);
}

double
arcwise_swing_sync_time(const ArcwiseSwingModel *a, const ArcwiseSwingModel *b, double t,
                        int only_event)
{
  const double ea[4] = { a->events.takeaway_s, a->events.top_s, a->events.impact_s,
                         a->events.finish_s };
  const double eb[4] = { b->events.takeaway_s, b->events.top_s, b->events.impact_s,
                         b->events.finish_s };
  if (only_event >= 0 && only_event < 4) {
    if (isfinite(ea[only_event]) && isfinite(eb[only_event]))
      return t - ea[only_event] + eb[only_event];
    return t;
  }
  /* Knots: the events both swings have, in order. */
  double ka[6], kb[6];
  int nk = 0;
  for (int k = 0; k < 4; k++)
    if (isfinite(ea[k]) && isfinite(eb[k]) && (nk == 0 || (ea[k] > ka[nk - 1] && eb[k] > kb[nk - 1]))) {
      ka[nk] = ea[k];
      kb[nk] = eb[k];
      nk++;
    }
  if (nk == 0)
    return t;
  if (nk == 1 || t <= ka[0])
    return t - ka[0] + kb[0];
  for (int k = 0; k + 1 < nk; k++)
    if (t <= ka[k + 1])
      return kb[k] + (t - ka[k]) * (kb[k + 1] - kb[k]) / (ka[k + 1] - ka[k]);
  return t - ka[nk - 1] + kb[nk - 1];
}
