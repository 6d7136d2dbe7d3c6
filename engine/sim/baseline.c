/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Single-sensor estimators: depth-only smoothing and IMU-only dead reckoning (baseline.h). */
#include "arcwise/baseline.h"

#include "arcwise/math3.h"
#include "arcwise/signal.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void
aw_depth_baseline_settings_default(AwDepthBaselineSettings *s)
{
  s->min_conf = 0.5;
  s->max_gap_s = -1;
  /* 7 frames at 30 fps = 0.23 s, quadratic: keeps a 0.27 s downswing's shape (common practice
   * for keypoint smoothing; the window is a choice, not a published constant). */
  s->sg_window = 7;
  s->sg_order = 2;
}

AwStatus
aw_depth_baseline(const AwDepthStream *d, const AwDepthBaselineSettings *set,
                  double (*out)[3], AwError *err)
{
  AwDepthBaselineSettings def;
  if (set == NULL) {
    aw_depth_baseline_settings_default(&def);
    set = &def;
  }
  if (d == NULL || out == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "no depth stream");
  size_t n = d->n, kept = 0;
  for (size_t i = 0; i < n; i++) {
    bool ok = d->conf[i] >= set->min_conf && isfinite(d->pos_cam_m[i][0]) &&
              isfinite(d->pos_cam_m[i][1]) && isfinite(d->pos_cam_m[i][2]);
    for (int k = 0; k < 3; k++)
      out[i][k] = ok ? d->pos_cam_m[i][k] : (double)NAN;
    kept += ok;
  }
  if (kept == 0)
    return aw_error_set(err, AW_ERR_TOO_FEW, "", 0, 0, "no depth frame is confident enough");
  for (int k = 0; k < 3; k++) {
    AwStatus st = aw_fill_gaps_linear(d->t_s, &out[0][k], n, 3, set->max_gap_s, NULL);
    if (st != AW_OK)
      return aw_error_set(err, st, "", 0, 0, "gap filling failed");
  }
  /* Hold the ends. */
  size_t first = 0, last = n - 1;
  while (first < n && !isfinite(out[first][0]))
    first++;
  while (last > first && !isfinite(out[last][0]))
    last--;
  for (size_t i = 0; i < first; i++)
    memcpy(out[i], out[first], sizeof out[i]);
  for (size_t i = last + 1; i < n; i++)
    memcpy(out[i], out[last], sizeof out[i]);
  if (set->sg_window <= 1 || n < (size_t)set->sg_window)
    return AW_OK;
  /* Smooth each run of finite rows (interior gaps longer than max_gap_s stay NaN). */
  size_t i = 0;
  while (i < n) {
    if (!isfinite(out[i][0])) {
      i++;
      continue;
    }
    size_t j = i;
    while (j < n && isfinite(out[j][0]))
      j++;
    if (j - i >= (size_t)set->sg_window)
      for (int k = 0; k < 3; k++) {
        AwStatus st = aw_savgol_filter(&out[i][k], j - i, 3, set->sg_window, set->sg_order, 0,
                                       1.0, &out[i][k], 3);
        if (st != AW_OK)
          return aw_error_set(err, st, "", 0, 0, "smoothing failed");
      }
    i = j;
  }
  return AW_OK;
}

static void
quat_step(double q[4], const double w[3], double dt)
{
  double rv[3] = { w[0] * dt, w[1] * dt, w[2] * dt }, dq[4];
  aw_quat_from_rotvec(dq, rv);
  aw_quat_mul(q, q, dq);
  aw_quat_normalize(q);
}

static void
keypoint(double out[3], const double p_imu[3], const double q[4], const double lever[3])
{
  double l[3];
  aw_quat_rotate(l, q, lever);
  aw_v3_add(out, p_imu, l);
}

AwStatus
aw_imu_dead_reckon(const AwImuStream *imu, const AwImuInitialState *init, const double *tq,
                   size_t nq, double (*out)[3], AwError *err)
{
  if (imu == NULL || init == NULL || (nq > 0 && (tq == NULL || out == NULL)))
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "missing argument");
  if (imu->n < 2)
    return aw_error_set(err, AW_ERR_TOO_FEW, "", 0, 0, "too few IMU samples");
  const double k1 = 1 + init->clock_drift, off = init->clock_offset_s;
  size_t k0 = 0;
  while (k0 < imu->n && imu->t_s[k0] * k1 + off < init->t_depth_s)
    k0++;
  size_t m = imu->n - k0 + 1;
  double *t = malloc(m * sizeof *t);
  double (*p)[3] = malloc(m * sizeof *p);
  double *tmp = malloc((nq ? nq : 1) * sizeof *tmp);
  if (t == NULL || p == NULL || tmp == NULL) {
    free(t);
    free(p);
    free(tmp);
    return aw_error_set(err, AW_ERR_NO_MEMORY, "", 0, 0, "out of memory");
  }
  double q[4], v[3], pi[3], l[3];
  memcpy(q, init->q_cam_body, sizeof q);
  aw_quat_normalize(q);
  aw_v3_copy(v, init->vel_cam_m_s);
  aw_quat_rotate(l, q, init->lever_arm_body_m);
  aw_v3_sub(pi, init->pos_cam_m, l);
  t[0] = init->t_depth_s;
  aw_v3_copy(p[0], init->pos_cam_m);
  size_t cnt = 1;
  double tc = init->t_depth_s;
  double a_prev[3];
  bool have_prev = false;
  for (size_t k = k0; k < imu->n; k++) {
    double tk = imu->t_s[k] * k1 + off;
    double dt = tk - tc;
    if (!(dt > 0)) {
      if (cnt > 1 || dt < 0)
        continue;
    }
    double a[3], fc[3];
    if (!have_prev) {
      /* First step: hold the first sample's reading back to the initial time. */
      aw_quat_rotate(fc, q, imu->accel_m_s2[k]);
      aw_v3_add(a_prev, fc, init->gravity_cam_m_s2);
      have_prev = true;
      quat_step(q, imu->gyro_rad_s[k], dt);
    } else {
      double w[3];
      for (int i = 0; i < 3; i++)
        w[i] = 0.5 * (imu->gyro_rad_s[k][i] + imu->gyro_rad_s[k - 1][i]);
      quat_step(q, w, dt);
    }
    aw_quat_rotate(fc, q, imu->accel_m_s2[k]);
    aw_v3_add(a, fc, init->gravity_cam_m_s2);
    for (int i = 0; i < 3; i++) {
      pi[i] += v[i] * dt + (a_prev[i] / 3 + a[i] / 6) * dt * dt;
      v[i] += 0.5 * (a_prev[i] + a[i]) * dt;
    }
    aw_v3_copy(a_prev, a);
    tc = tk;
    if (dt > 0) {
      t[cnt] = tk;
      keypoint(p[cnt], pi, q, init->lever_arm_body_m);
      cnt++;
    }
  }
  AwStatus st = AW_OK;
  for (int i = 0; i < 3 && st == AW_OK; i++) {
    st = aw_interp_linear(t, &p[0][i], cnt, 3, tq, nq, AW_EXTRAP_NAN, tmp, 1);
    for (size_t j = 0; j < nq && st == AW_OK; j++)
      out[j][i] = tmp[j];
  }
  free(t);
  free(p);
  free(tmp);
  if (st != AW_OK)
    return aw_error_set(err, st, "", 0, 0, "interpolation failed");
  return AW_OK;
}
