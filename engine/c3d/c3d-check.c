/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A capture's path against an optical marker trajectory (c3d.h): time alignment by the
 * cross-correlation of speed profiles, which needs no common frame, then a least-squares rigid
 * fit (Kabsch 1976 in Horn's 1987 quaternion form) and the errors that remain. */
#include "arcwise/c3d.h"
#include "arcwise/eig.h"
#include "arcwise/math3.h"
#include "arcwise/units.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void
aw_ref_check_settings_default(AwRefCheckSettings *out)
{
  out->grid_hz = 100.0;   /* above both the camera's 30 Hz and typical optical 100-250 Hz
                             swing content (hand speed has little power above 10 Hz) */
  out->smooth_s = 0.15;  /* median window: wider than a wrong camera frame's speed spike at
                            30 Hz (~0.07 s), shorter than a downswing (~0.25 s) */
  out->min_overlap = 0.5;
  out->max_gap_s = 0.1;
  out->rotation = true;
}

AwStatus
aw_rigid_fit(const double (*a)[3], const double (*b)[3], size_t n, double R[3][3], double t[3],
             AwError *err)
{
  if (n < 3)
    return aw_error_set(err, AW_ERR_TOO_FEW, NULL, 0, 0,
                        "a rigid fit needs at least 3 point pairs, got %zu", n);
  double ca[3] = { 0, 0, 0 }, cb[3] = { 0, 0, 0 };
  for (size_t i = 0; i < n; i++)
    for (int k = 0; k < 3; k++) {
      ca[k] += a[i][k];
      cb[k] += b[i][k];
    }
  for (int k = 0; k < 3; k++) {
    ca[k] /= (double)n;
    cb[k] /= (double)n;
  }
  /* S[x][y] = sum a'_x b'_y over the centred points (Horn 1987, section 4). */
  double S[3][3] = { { 0 } }, spread = 0;
  for (size_t i = 0; i < n; i++) {
    double da[3], db[3];
    aw_v3_sub(da, a[i], ca);
    aw_v3_sub(db, b[i], cb);
    spread += aw_v3_dot(da, da) + aw_v3_dot(db, db);
    for (int x = 0; x < 3; x++)
      for (int y = 0; y < 3; y++)
        S[x][y] += da[x] * db[y];
  }
  double N[4][4] = {
    { S[0][0] + S[1][1] + S[2][2], S[1][2] - S[2][1], S[2][0] - S[0][2], S[0][1] - S[1][0] },
    { S[1][2] - S[2][1], S[0][0] - S[1][1] - S[2][2], S[0][1] + S[1][0], S[2][0] + S[0][2] },
    { S[2][0] - S[0][2], S[0][1] + S[1][0], -S[0][0] + S[1][1] - S[2][2], S[1][2] + S[2][1] },
    { S[0][1] - S[1][0], S[2][0] + S[0][2], S[1][2] + S[2][1], -S[0][0] - S[1][1] + S[2][2] },
  };
  /* The quaternion is the eigenvector of N's largest eigenvalue (Horn 1987, section 4). */
  double w[4], V[16], q[4];
  if (!aw_sym_eigen(4, &N[0][0], w, V))
    return aw_error_set(err, AW_ERR_NON_FINITE, NULL, 0, 0,
                        "the rigid fit met a non-finite point coordinate");
  for (int k = 0; k < 4; k++)
    q[k] = V[4 * k + 3];
  double l1 = w[3], l2 = w[2];
  /* Points on a line: the two largest eigenvalues coincide (any rotation about the line fits
   * equally well). Relative to the spread of the points. */
  if (!(spread > 0) || l1 - l2 <= 1e-9 * spread)
    return aw_error_set(err, AW_ERR_TOO_FEW, NULL, 0, 0,
                        "the %zu points lie on a line or a point: the rotation is undetermined", n);
  aw_quat_normalize(q);
  aw_quat_to_mat(R, q);
  double rca[3];
  for (int i = 0; i < 3; i++)
    rca[i] = R[i][0] * ca[0] + R[i][1] * ca[1] + R[i][2] * ca[2];
  aw_v3_sub(t, cb, rca);
  return AW_OK;
}

static void
mat_mul_v3(double out[3], double R[3][3], const double v[3])
{
  for (int i = 0; i < 3; i++)
    out[i] = R[i][0] * v[0] + R[i][1] * v[1] + R[i][2] * v[2];
}

/* Linear interpolation of the path at time x; false in a gap or outside. */
static bool
path_at(const double *t_s, const double (*p)[3], size_t n, double x, double max_gap,
        double out[3])
{
  if (n == 0 || !(x >= t_s[0] && x <= t_s[n - 1]))
    return false;
  size_t lo = 0, hi = n - 1;
  while (hi - lo > 1) {
    size_t mid = lo + (hi - lo) / 2;
    if (t_s[mid] <= x)
      lo = mid;
    else
      hi = mid;
  }
  double span = t_s[hi] - t_s[lo];
  double w = span > 0 ? (x - t_s[lo]) / span : 0;
  if ((x - t_s[lo]) > max_gap && (t_s[hi] - x) > max_gap)
    return false;
  for (int k = 0; k < 3; k++) {
    out[k] = p[lo][k] + w * (p[hi][k] - p[lo][k]);
    if (!isfinite(out[k]))
      return false;
  }
  return true;
}

/* Speed on a uniform grid from t0 with step dt (m NaN-gapped samples), smoothed. */
static double *
speed_profile(const double *t_s, const double (*p)[3], size_t n, double t0, double dt, size_t m,
              double max_gap, double smooth_s)
{
  double (*g)[3] = malloc(m * sizeof *g);
  double *v = malloc(m * sizeof *v), *s = malloc(m * sizeof *s);
  if (g == NULL || v == NULL || s == NULL) {
    free(g);
    free(v);
    free(s);
    return NULL;
  }
  for (size_t i = 0; i < m; i++)
    if (!path_at(t_s, p, n, t0 + (double)i * dt, max_gap, g[i]))
      g[i][0] = g[i][1] = g[i][2] = NAN;
  for (size_t i = 0; i < m; i++) {
    v[i] = NAN;
    if (i > 0 && i + 1 < m)
      v[i] = aw_v3_dist(g[i + 1], g[i - 1]) / (2 * dt);
  }
  /* Running median, not mean: a single wrong camera frame makes a spike of speed that a mean
   * would spread into the correlation, while a median drops it. NaN when any sample in the
   * window is NaN. */
  size_t half = (size_t)(smooth_s / dt / 2 + 0.5);
  double win[256];
  if (half > 127)
    half = 127;
  for (size_t i = 0; i < m; i++) {
    size_t k0 = i >= half ? i - half : 0, k1 = i + half < m ? i + half : m - 1, cnt = 0;
    bool gap = false;
    for (size_t k = k0; k <= k1; k++) {
      gap = gap || !isfinite(v[k]);
      win[cnt++] = v[k];
    }
    if (gap) {
      s[i] = NAN;
      continue;
    }
    for (size_t a = 1; a < cnt; a++) /* insertion sort: the window is small */
      for (size_t b = a; b > 0 && win[b - 1] > win[b]; b--) {
        double x = win[b];
        win[b] = win[b - 1];
        win[b - 1] = x;
      }
    s[i] = cnt % 2 ? win[cnt / 2] : 0.5 * (win[cnt / 2 - 1] + win[cnt / 2]);
  }
  free(g);
  free(v);
  return s;
}

/* Pairs at lag tau, optional rigid fit, errors. Returns the RMSE (INFINITY when unusable). */
static double
fit_at(const double *t_s, const double (*pos)[3], size_t n, const AwMarkerTrajectory *ref,
       const AwRefCheckSettings *set, double tau, double (*pa)[3], double (*pb)[3],
       AwRefCheck *out, double *errs)
{
  size_t np = 0;
  for (size_t j = 0; j < ref->n; j++) {
    if (!isfinite(ref->pos_m[j][0]) || !isfinite(ref->pos_m[j][1]) ||
        !isfinite(ref->pos_m[j][2]))
      continue;
    if (!path_at(t_s, pos, n, ref->t_s[j] + tau, set->max_gap_s, pa[np]))
      continue;
    aw_v3_copy(pb[np], ref->pos_m[j]);
    np++;
  }
  if (np < 10)
    return INFINITY;
  double R[3][3] = { { 1, 0, 0 }, { 0, 1, 0 }, { 0, 0, 1 } }, t[3] = { 0, 0, 0 };
  if (set->rotation) {
    if (aw_rigid_fit((const double (*)[3])pa, (const double (*)[3])pb, np, R, t, NULL) != AW_OK)
      return INFINITY;
  } else {
    for (size_t i = 0; i < np; i++)
      for (int k = 0; k < 3; k++)
        t[k] += (pb[i][k] - pa[i][k]) / (double)np;
  }
  double se = 0, se_ax[3] = { 0, 0, 0 }, bias[3] = { 0, 0, 0 }, mx = 0;
  for (size_t i = 0; i < np; i++) {
    double q[3], e[3];
    mat_mul_v3(q, R, pa[i]);
    aw_v3_add(q, q, t);
    aw_v3_sub(e, q, pb[i]);
    double d2 = aw_v3_dot(e, e);
    se += d2;
    for (int k = 0; k < 3; k++) {
      se_ax[k] += e[k] * e[k];
      bias[k] += e[k];
    }
    if (errs)
      errs[i] = sqrt(d2);
    if (sqrt(d2) > mx)
      mx = sqrt(d2);
  }
  if (out != NULL) {
    out->n_pairs = np;
    memcpy(out->R_ref_path, R, sizeof R);
    memcpy(out->t_ref_m, t, sizeof t);
    double tr = R[0][0] + R[1][1] + R[2][2];
    double c = (tr - 1) / 2;
    out->rotation_deg = acos(c > 1 ? 1 : c < -1 ? -1 : c) * 180.0 / AW_PI;
    for (int k = 0; k < 3; k++) {
      out->rmse_axis_m[k] = sqrt(se_ax[k] / (double)np);
      out->bias_axis_m[k] = bias[k] / (double)np;
    }
    out->max_err_m = mx;
    out->rmse_m = sqrt(se / (double)np);
  }
  return sqrt(se / (double)np);
}

static int
cmp_double(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return x < y ? -1 : x > y;
}

AwStatus
aw_ref_check(const double *t_s, const double (*pos_m)[3], size_t n, const AwMarkerTrajectory *ref,
             const AwRefCheckSettings *settings, AwRefCheck *out, AwError *err)
{
  AwRefCheckSettings set;
  if (settings)
    set = *settings;
  else
    aw_ref_check_settings_default(&set);
  memset(out, 0, sizeof *out);
  if (!(set.grid_hz > 0) || !(set.max_gap_s > 0) || !(set.min_overlap > 0 && set.min_overlap <= 1))
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "reference check settings");
  size_t ref_valid = 0;
  for (size_t j = 0; j < ref->n; j++)
    if (isfinite(ref->pos_m[j][0]))
      ref_valid++;
  out->n_ref_gaps = ref->n - ref_valid;
  if (n < 10 || ref_valid < 10)
    return aw_error_set(err, AW_ERR_TOO_FEW, NULL, 0, 0,
                        "too few samples to compare: path %zu, reference %zu valid of %zu", n,
                        ref_valid, ref->n);
  for (size_t i = 1; i < n; i++)
    if (!(t_s[i] > t_s[i - 1]))
      return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0,
                          "path times must increase (sample %zu)", i);

  /* Speed profiles on grids of one step, each from its own start. */
  double dt = 1.0 / set.grid_hz;
  double c0 = t_s[0], r0 = ref->t_s[0];
  size_t mc = (size_t)floor((t_s[n - 1] - c0) / dt) + 1;
  size_t mr = (size_t)floor((ref->t_s[ref->n - 1] - r0) / dt) + 1;
  double *sc = speed_profile(t_s, pos_m, n, c0, dt, mc, set.max_gap_s, set.smooth_s);
  double *sr = speed_profile(ref->t_s, (const double (*)[3])ref->pos_m, ref->n, r0, dt, mr,
                             set.max_gap_s, set.smooth_s);
  double (*pa)[3] = malloc(ref->n * sizeof *pa), (*pb)[3] = malloc(ref->n * sizeof *pb);
  double *errs = malloc(ref->n * sizeof *errs);
  AwStatus st = AW_OK;
  if (sc == NULL || sr == NULL || pa == NULL || pb == NULL || errs == NULL) {
    st = aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
    goto out;
  }
  size_t vc = 0, vr = 0;
  for (size_t i = 0; i < mc; i++)
    vc += isfinite(sc[i]);
  for (size_t i = 0; i < mr; i++)
    vr += isfinite(sr[i]);
  size_t need = (size_t)ceil(set.min_overlap * (double)(vc < vr ? vc : vr));
  need = need < 10 ? 10 : need;

  /* Path grid index k pairs with reference grid index j = k - L at lag c0 - r0 + L dt. */
  long lmin = -(long)mr + 1, lmax = (long)mc - 1;
  size_t nl = (size_t)(lmax - lmin + 1);
  double *corr = malloc(nl * sizeof *corr);
  if (corr == NULL) {
    st = aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
    goto out;
  }
  long best = lmin - 1;
  double best_c = -INFINITY;
  for (long L = lmin; L <= lmax; L++) {
    double sx = 0, sy = 0, sxx = 0, syy = 0, sxy = 0;
    size_t cnt = 0;
    long j0 = L < 0 ? -L : 0, j1 = (long)mr - 1;
    if (j1 + L > (long)mc - 1)
      j1 = (long)mc - 1 - L;
    for (long j = j0; j <= j1; j++) {
      double x = sc[j + L], y = sr[j];
      if (!isfinite(x) || !isfinite(y))
        continue;
      sx += x;
      sy += y;
      sxx += x * x;
      syy += y * y;
      sxy += x * y;
      cnt++;
    }
    double c = NAN;
    if (cnt >= need) {
      double k = (double)cnt;
      double vx = sxx - sx * sx / k, vy = syy - sy * sy / k;
      if (vx > 0 && vy > 0)
        c = (sxy - sx * sy / k) / sqrt(vx * vy);
    }
    corr[L - lmin] = c;
    if (isfinite(c) && c > best_c) {
      best_c = c;
      best = L;
    }
  }
  if (best < lmin) {
    free(corr);
    st = aw_error_set(err, AW_ERR_NO_OVERLAP, NULL, 0, 0,
                      "the path (%.2f s) and the reference (%.2f s) cannot overlap by %.0f%% of "
                      "the shorter", t_s[n - 1] - t_s[0], ref->t_s[ref->n - 1] - ref->t_s[0],
                      100 * set.min_overlap);
    goto out;
  }
  if (!(best_c > 0)) {
    free(corr);
    st = aw_error_set(err, AW_ERR_NO_CORRELATION, NULL, 0, 0,
                      "the speed profiles do not correlate at any lag (best %.2f)", best_c);
    goto out;
  }
  /* Sub-step peak by a parabola through the neighbours. */
  double frac = 0;
  if (best > lmin && best < lmax && isfinite(corr[best - 1 - lmin]) &&
      isfinite(corr[best + 1 - lmin])) {
    double ym = corr[best - 1 - lmin], y0 = corr[best - lmin], yp = corr[best + 1 - lmin];
    double den = ym - 2 * y0 + yp;
    if (den < 0)
      frac = 0.5 * (ym - yp) / den;
  }
  free(corr);
  double tau = c0 - r0 + ((double)best + frac) * dt;
  out->peak_corr = best_c;

  /* Refine the lag to the least-squares minimum of the aligned error (golden section over
   * +-2 grid steps: the correlation peak of smoothed speeds is only good to a step or so). */
  double lo = tau - 2 * dt, hi = tau + 2 * dt;
  const double gr = 0.5 * (sqrt(5.0) - 1);
  double x1 = hi - gr * (hi - lo), x2 = lo + gr * (hi - lo);
  double f1 = fit_at(t_s, pos_m, n, ref, &set, x1, pa, pb, NULL, NULL);
  double f2 = fit_at(t_s, pos_m, n, ref, &set, x2, pa, pb, NULL, NULL);
  for (int it = 0; it < 40 && hi - lo > 1e-5; it++) {
    if (f1 <= f2) {
      hi = x2;
      x2 = x1;
      f2 = f1;
      x1 = hi - gr * (hi - lo);
      f1 = fit_at(t_s, pos_m, n, ref, &set, x1, pa, pb, NULL, NULL);
    } else {
      lo = x1;
      x1 = x2;
      f1 = f2;
      x2 = lo + gr * (hi - lo);
      f2 = fit_at(t_s, pos_m, n, ref, &set, x2, pa, pb, NULL, NULL);
    }
  }
  double tau_ls = 0.5 * (lo + hi);
  double f_ls = fit_at(t_s, pos_m, n, ref, &set, tau_ls, pa, pb, NULL, NULL);
  double f_c = fit_at(t_s, pos_m, n, ref, &set, tau, pa, pb, NULL, NULL);
  if (!(f_ls <= f_c))
    tau_ls = tau;
  if (!isfinite(fit_at(t_s, pos_m, n, ref, &set, tau_ls, pa, pb, out, errs))) {
    st = aw_error_set(err, AW_ERR_TOO_FEW, NULL, 0, 0,
                      "too few reference samples fall on the path after time alignment");
    goto out;
  }
  out->lag_s = tau_ls;
  qsort(errs, out->n_pairs, sizeof *errs, cmp_double);
  out->p95_err_m = errs[(size_t)floor(0.95 * (double)(out->n_pairs - 1))];
out:
  free(sc);
  free(sr);
  free(pa);
  free(pb);
  free(errs);
  return st;
}
