/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Preparation shared by every stage: usable camera frames with a local acceleration estimate,
 * and IMU running integrals, saturation and stillness flags. */
#include "fusion-internal.h"
#include "arcwise/math3.h"

#include <math.h>
#include <stddef.h>
#include <stdlib.h>
#include <string.h>

double
aw_fusion_kth(double *v, size_t n, size_t k)
{
  /* Hoare's partition around the current k-th entry, keeping the side that holds k (N. Wirth,
   * "Algorithms + Data Structures = Programs", 1976, section 2.3.4). Signed indices: j may step
   * below the range. */
  ptrdiff_t l = 0, r = (ptrdiff_t)n - 1, kk = (ptrdiff_t)k;
  while (l < r) {
    double x = v[kk];
    ptrdiff_t i = l, j = r;
    do {
      while (v[i] < x) i++;
      while (x < v[j]) j--;
      if (i <= j) {
        double t = v[i];
        v[i] = v[j];
        v[j] = t;
        i++;
        j--;
      }
    } while (i <= j);
    if (j < kk) l = i;
    if (kk < i) r = j;
  }
  return v[kk];
}

/* Median of the positive successive differences of t (robust nominal interval). */
static double
median_interval(const double *t, size_t n)
{
  if (n < 2) return 0;
  size_t m = n - 1, stride = 1;
  /* A subsample is plenty for the median and keeps 30-minute recordings cheap. */
  if (m > 4096) stride = m / 4096;
  size_t k = 0;
  double *d = malloc(sizeof *d * (m / stride + 1));
  if (!d) return 0;
  for (size_t i = 0; i < m; i += stride) d[k++] = t[i + 1] - t[i];
  double r = aw_fusion_kth(d, k, k / 2);
  free(d);
  return r;
}

/* Timestamp jitter of a nominally regular stream: for stamps t_k = k dt + j_k with white j of
 * standard deviation sigma, the second difference t_{k+1} - 2 t_k + t_{k-1} has variance
 * 6 sigma^2 (and is 0 for exact stamps, whatever the rate). A robust scale (1.4826 times the
 * median absolute value, the normal-consistent MAD) keeps gaps and the odd late sample from
 * counting; triples that span a gap (an interval of nearly two nominal ones or more) are left out. */
static double
timestamp_jitter(const double *t, size_t n, double dt_nom)
{
  if (n < 3 || !(dt_nom > 0)) return 0;
  size_t m = n - 2, stride = m > 8192 ? m / 8192 : 1, k = 0;
  double *d = malloc(sizeof *d * (m / stride + 1));
  if (!d) return 0;
  for (size_t i = 1; i + 1 < n; i += stride) {
    double h0 = t[i] - t[i - 1], h1 = t[i + 1] - t[i];
    if (h0 > 1.9 * dt_nom || h1 > 1.9 * dt_nom) continue;
    d[k++] = fabs(h1 - h0);
  }
  double r = 0;
  if (k >= 20) {
    r = 1.4826 * aw_fusion_kth(d, k, k / 2) / sqrt(6.0);
  }
  free(d);
  return r;
}

/* Weights of the local quadratic's second derivative (2 c2) for taps at u[0..m). */
static bool
quad_acc_weights(const double *u, size_t m, double *w)
{
  double S[5] = { 0 };
  for (size_t j = 0; j < m; j++) {
    double u2 = u[j] * u[j];
    S[0] += 1; S[1] += u[j]; S[2] += u2; S[3] += u2 * u[j]; S[4] += u2 * u2;
  }
  double A[3][3] = { { S[0], S[1], S[2] }, { S[1], S[2], S[3] }, { S[2], S[3], S[4] } };
  double det = aw_fusion_det3((const double (*)[3])A);
  if (!(fabs(det) > 1e-30)) return false;
  double r0 = (A[1][0] * A[2][1] - A[1][1] * A[2][0]) / det;
  double r1 = -(A[0][0] * A[2][1] - A[0][1] * A[2][0]) / det;
  double r2 = (A[0][0] * A[1][1] - A[0][1] * A[1][0]) / det;
  for (size_t j = 0; j < m; j++) w[j] = 2.0 * (r0 + r1 * u[j] + r2 * u[j] * u[j]);
  return true;
}

/* Groups the frames' fit operators into shapes (see fusion-internal.h). */
static AwStatus
find_shapes(AwCamPrep *c)
{
  c->n_shape = 0;
  c->shape_start[0] = 0;
  c->shape = malloc(sizeof *c->shape * (c->n ? c->n : 1));
  if (!c->shape) return AW_ERR_NO_MEMORY;
  uint64_t keys[AW_CAM_MAX_SHAPES];
  int lo_j[AW_CAM_MAX_SHAPES];
  size_t cap = 64;
  c->shape_u = malloc(sizeof *c->shape_u * cap);
  c->shape_w = malloc(sizeof *c->shape_w * cap);
  if (!c->shape_u || !c->shape_w) return AW_ERR_NO_MEMORY;
  double h = c->dt_nom_s;
  for (size_t k = 0; k < c->n; k++) {
    c->shape[k] = -1;
    size_t q0 = c->wstart[k], q1 = c->wstart[k + 1];
    if (!c->acc_ok[k] || q1 <= q0 || q1 - q0 > 64) continue;
    /* taps on the nominal grid: index j of each, a 64-bit mask relative to the first */
    int j0 = 0;
    uint64_t key = 0;
    bool regular = true;
    for (size_t q = q0; q < q1 && regular; q++) {
      double rel = (c->t_s[c->widx[q]] - c->t_s[k]) / h;
      double jr = nearbyint(rel);
      if (fabs(rel - jr) > 0.1) regular = false;
      int j = (int)jr;
      if (q == q0) j0 = j;
      if (j - j0 < 0 || j - j0 >= 64) regular = false;
      else key |= (uint64_t)1 << (j - j0);
    }
    if (!regular) continue;
    size_t s = 0;
    while (s < c->n_shape && !(keys[s] == key && lo_j[s] == j0)) s++;
    if (s == c->n_shape) {
      if (c->n_shape == AW_CAM_MAX_SHAPES) continue;
      size_t m = (size_t)__builtin_popcountll(key), at = c->shape_start[s];
      if (at + m > cap) {
        while (at + m > cap) cap *= 2;
        double *nu = realloc(c->shape_u, sizeof *nu * cap);
        if (!nu) return AW_ERR_NO_MEMORY;
        c->shape_u = nu;
        double *nw = realloc(c->shape_w, sizeof *nw * cap);
        if (!nw) return AW_ERR_NO_MEMORY;
        c->shape_w = nw;
      }
      size_t m2 = 0;
      for (int b = 0; b < 64; b++)
        if (key >> b & 1) c->shape_u[at + m2++] = (double)(j0 + b) * h;
      if (!quad_acc_weights(c->shape_u + at, m, c->shape_w + at)) continue;
      keys[s] = key;
      lo_j[s] = j0;
      c->shape_count[s] = 0;
      c->shape_start[s + 1] = at + m;
      c->n_shape++;
    }
    c->shape[k] = (int)s;
    c->shape_count[s]++;
  }
  return AW_OK;
}

void
aw_fusion_knots(const double *t, size_t n, double h_s, size_t *kdec, size_t *nk)
{
  size_t d = 1;
  if (n >= 2 && t[n - 1] > t[0])
    d = (size_t)fmax(1.0, floor(h_s * (double)(n - 1) / (t[n - 1] - t[0]) + 0.5));
  *kdec = d;
  *nk = n >= 2 ? (n - 2) / d + 2 : n;
}

/* aw_fusion_shape_table with or without the derivative (with_d a constant where it is
 * inlined, so each version has only its own arithmetic). */
static inline __attribute__((always_inline)) void
shape_table_run(const AwCamPrep *cam, size_t shape, const double *t, size_t n,
                const double (*f)[3], const double (*v)[3], const double (*p)[3], size_t kdec,
                size_t nk, double (*out)[3], double (*dout)[3], unsigned char *ok, bool with_d)
{
  size_t q0 = cam->shape_start[shape], q1 = cam->shape_start[shape + 1];
  size_t hints[64] = { 0 };
  for (size_t j = 0; j < nk; j++) {
    size_t i = aw_fusion_knot(j, kdec, nk, n);
    /* sums in locals (kept in registers: the compiler cannot tell that out aliases no input) */
    double acc[3] = { 0, 0, 0 }, dacc[3] = { 0, 0, 0 };
    ok[j] = n >= 2 && t[i] + cam->shape_u[q0] >= t[0] && t[i] + cam->shape_u[q1 - 1] <= t[n - 1];
    if (ok[j])
      for (size_t q = q0; q < q1; q++) {
        /* p as aw_fusion_pos_at, and its derivative */
        double x = t[i] + cam->shape_u[q], wq = cam->shape_w[q], pq[3];
        size_t a0 = aw_fusion_interval(t, n, x, &hints[q - q0]);
        double dt = t[a0 + 1] - t[a0], u = x - t[a0];
        aw_fusion_cubic_at(f, v, p, a0, u, dt, pq);
        for (int a = 0; a < 3; a++) {
          acc[a] += wq * pq[a];
          if (with_d) dacc[a] += wq * (v[a0][a] + u * f[a0][a] + 0.5 * u * u * (f[a0 + 1][a] - f[a0][a]) / dt);
        }
      }
    for (int a = 0; a < 3; a++) out[j][a] = acc[a];
    if (with_d) for (int a = 0; a < 3; a++) dout[j][a] = dacc[a];
  }
}

void
aw_fusion_shape_table(const AwCamPrep *cam, size_t shape, const double *t, size_t n,
                      const double (*f)[3], const double (*v)[3], const double (*p)[3],
                      size_t kdec, size_t nk, double (*out)[3], double (*dout)[3],
                      unsigned char *ok)
{
  if (dout) shape_table_run(cam, shape, t, n, f, v, p, kdec, nk, out, dout, ok, true);
  else shape_table_run(cam, shape, t, n, f, v, p, kdec, nk, out, NULL, ok, false);
}

/* Sums of a frame's local quadratic fit (prep_cam): S = sums of u^0..u^4, Sy = sums of y u^0..2
 * per axis, the frames left and right of the centre, and their count. */
typedef struct {
  double S[5], Sy[3][3];
  int nl, nr, cnt;
} FitSums;

/* Frame j (time u = t_j - tk from the centre) into the sums, and into used (at most 1024). */
static inline void
fit_add(FitSums *fs, const AwDepthStream *d, size_t j, double tk, uint32_t *used, int *nused)
{
  double u = d->t_s[j] - tk, u2 = u * u;
  if (u < -1e-9) fs->nl++;
  if (u > 1e-9) fs->nr++;
  fs->cnt++;
  if (*nused < 1024) used[(*nused)++] = (uint32_t)j;
  fs->S[0] += 1; fs->S[1] += u; fs->S[2] += u2; fs->S[3] += u2 * u; fs->S[4] += u2 * u2;
  for (int a = 0; a < 3; a++) {
    double y = d->pos_cam_m[j][a];
    fs->Sy[a][0] += y; fs->Sy[a][1] += y * u; fs->Sy[a][2] += y * u2;
  }
}

AwStatus
aw_fusion_prep_cam(const AwDepthStream *d, const AwFusionSettings *s, AwCamPrep *c)
{
  memset(c, 0, sizeof *c);
  c->n = d->n;
  c->t_s = d->t_s;
  c->pos_m = (const double (*)[3])d->pos_cam_m;
  c->conf = d->conf;
  c->valid = calloc(d->n ? d->n : 1, 1);
  c->acc_ok = calloc(d->n ? d->n : 1, 1);
  c->acc_m_s2 = calloc(d->n ? d->n : 1, sizeof *c->acc_m_s2);
  if (!c->valid || !c->acc_ok || !c->acc_m_s2) { aw_fusion_prep_cam_free(c); return AW_ERR_NO_MEMORY; }
  for (size_t k = 0; k < d->n; k++) {
    const double *p = d->pos_cam_m[k];
    double cf = d->conf ? d->conf[k] : 1.0;
    bool ok = isfinite(p[0]) && isfinite(p[1]) && isfinite(p[2]) && p[2] > 0 && isfinite(cf) &&
              cf >= s->cam_conf_min && cf > 0;
    c->valid[k] = ok;
    c->n_valid += ok;
  }
  c->dt_nom_s = median_interval(d->t_s, d->n);
  if (!(c->dt_nom_s > 0)) c->dt_nom_s = 1.0 / 30.0;
  /* +-0.2 s: a depth camera's keypoint noise (several mm at 3 m) makes second derivatives over
   * shorter spans useless; a downswing (~0.25 s) still shows as one broad peak, which is all
   * the alignment needs. Slow cameras need at least 3 frames each side. */
  c->fit_half_s = fmax(0.2, 3.0 * c->dt_nom_s);
  /* Local quadratic least squares around each valid frame, acceleration = 2 c2, made robust by
   * a second pass without frames whose residual exceeds 4 sigma of the camera model plus 2 cm
   * (gross outliers, identity swaps). Works with missing frames and timing jitter. */
  size_t lo = 0, wcap = 0, wn = 0;
  c->wstart = calloc(d->n + 1, sizeof *c->wstart);
  if (!c->wstart) { aw_fusion_prep_cam_free(c); return AW_ERR_NO_MEMORY; }
  for (size_t k = 0; k < d->n; k++) {
    c->wstart[k] = wn;
    if (!c->valid[k]) continue;
    double tk = d->t_s[k];
    while (lo < k && d->t_s[lo] < tk - c->fit_half_s) lo++;
    double coef[3][3] = { { 0 } }, Ainv2[3] = { 0 };
    bool have = false;
    uint32_t used[1024];
    int nused = 0;
    for (int pass = 0; pass < 2; pass++) {
      FitSums fs = { { 0 }, { { 0 } }, 0, 0, 0 };
      if (pass == 0) {
        nused = 0;
        for (size_t j = lo; j < d->n && d->t_s[j] <= tk + c->fit_half_s; j++)
          if (c->valid[j]) fit_add(&fs, d, j, tk, used, &nused);
      } else {
        /* pass 0's frames (every valid one in the window, in order) less those far off its
         * fit; when none is, pass 0's fit stands (the same sums of the same frames) */
        unsigned char bad[1024];
        int n0 = nused, nbad = 0;
        for (int q = 0; q < n0; q++) {
          size_t j = used[q];
          double u = d->t_s[j] - tk, u2 = u * u, z = d->pos_cam_m[j][2];
          double sig[3] = { s->cam_sigma_xy_m * z, s->cam_sigma_xy_m * z, s->cam_sigma_z_coeff_per_m * z * z };
          bad[q] = 0;
          for (int a = 0; a < 3; a++) {
            double r = d->pos_cam_m[j][a] - (coef[a][0] + coef[a][1] * u + coef[a][2] * u2);
            if (fabs(r) > 4 * sig[a] + 0.02) bad[q] = 1;
          }
          nbad += bad[q];
        }
        if (nbad == 0) break;
        nused = 0;   /* compacted in place: the write index never passes the read index */
        for (int q = 0; q < n0; q++)
          if (!bad[q]) fit_add(&fs, d, used[q], tk, used, &nused);
      }
      double *S = fs.S, (*Sy)[3] = fs.Sy;
      int nl = fs.nl, nr = fs.nr, cnt = fs.cnt;
      have = false;
      if (cnt < 6 || nl < 2 || nr < 2 || cnt > 1024) break;
      double A[3][3] = { { S[0], S[1], S[2] }, { S[1], S[2], S[3] }, { S[2], S[3], S[4] } };
      double det = aw_fusion_det3((const double (*)[3])A);
      if (!(fabs(det) > 1e-30)) break;
      /* Row 2 of A^-1 by cofactors: c2 = sum_j (Ainv2 . [1 u u^2]) y_j */
      Ainv2[0] = (A[1][0] * A[2][1] - A[1][1] * A[2][0]) / det;
      Ainv2[1] = -(A[0][0] * A[2][1] - A[0][1] * A[2][0]) / det;
      Ainv2[2] = (A[0][0] * A[1][1] - A[0][1] * A[1][0]) / det;
      for (int a = 0; a < 3; a++) aw_fusion_cramer3((const double (*)[3])A, Sy[a], det, coef[a]);
      have = true;
    }
    if (!have) continue;
    for (int a = 0; a < 3; a++) c->acc_m_s2[k][a] = 2.0 * coef[a][2];
    c->acc_ok[k] = 1;
    /* Record the weights over the frames the second pass kept. */
    for (int q = 0; q < nused; q++) {
      size_t j = used[q];
      double u = d->t_s[j] - tk, u2 = u * u;
      if (wn == wcap) {
        size_t nc = wcap ? 2 * wcap : 1024;
        uint32_t *ni = realloc(c->widx, sizeof *ni * nc);
        if (!ni) { aw_fusion_prep_cam_free(c); return AW_ERR_NO_MEMORY; }
        c->widx = ni;
        double *nv = realloc(c->wval, sizeof *nv * nc);
        if (!nv) { aw_fusion_prep_cam_free(c); return AW_ERR_NO_MEMORY; }
        c->wval = nv;
        wcap = nc;
      }
      c->widx[wn] = (uint32_t)j;
      c->wval[wn] = 2.0 * (Ainv2[0] + Ainv2[1] * u + Ainv2[2] * u2);
      wn++;
    }
  }
  c->wstart[d->n] = wn;
  if (find_shapes(c) != AW_OK) { aw_fusion_prep_cam_free(c); return AW_ERR_NO_MEMORY; }
  /* Camera noise level from the data: the residual of each frame against its own local fit,
   * in units of the model's sigma. For a quadratic over ~13 frames the centre residual has
   * variance sigma^2 (1 - h), h ~ 0.2; the median of a chi-square(1) is 0.455. The median
   * keeps the fast parts of a swing (where the quadratic lags) from inflating it. */
  c->noise_scale[0] = c->noise_scale[1] = 1.0;
  {
    /* lateral residuals fill r2 from the front, depth residuals rz */
    double *r2 = malloc(sizeof *r2 * 3 * (d->n ? d->n : 1));
    double *rz = r2 ? r2 + 2 * (d->n ? d->n : 1) : NULL;
    size_t nr = 0, nz = 0;
    if (r2) {
      for (size_t k = 0; k < d->n; k++) {
        if (!c->acc_ok[k]) continue;
        /* local fit value at the frame: the fit's own weights give only c2; recompute c0 by
         * the mean of the kept neighbours corrected by the curvature term */
        double z = d->pos_cam_m[k][2];
        double sig[3] = { s->cam_sigma_xy_m * z, s->cam_sigma_xy_m * z, s->cam_sigma_z_coeff_per_m * z * z };
        /* second difference with the neighbours when both exist and are evenly spaced */
        if (k == 0 || k + 1 >= d->n || !c->valid[k - 1] || !c->valid[k + 1]) continue;
        double h1 = d->t_s[k] - d->t_s[k - 1], h2 = d->t_s[k + 1] - d->t_s[k];
        if (fabs(h1 - h2) > 0.2 * h1) continue;
        for (int a = 0; a < 3; a++) {
          /* x[k-1] - 2 x[k] + x[k+1] minus the fitted curvature: noise variance 6 sigma^2 */
          double dd = d->pos_cam_m[k - 1][a] - 2 * d->pos_cam_m[k][a] + d->pos_cam_m[k + 1][a] -
                      c->acc_m_s2[k][a] * h1 * h2;
          double q = dd * dd / (6.0 * sig[a] * sig[a]);
          if (a < 2) r2[nr++] = q; else rz[nz++] = q;
        }
      }
      if (nr >= 30) {
        double sc2 = aw_fusion_kth(r2, nr, nr / 2) / 0.455;
        c->noise_scale[0] = sqrt(fmin(fmax(sc2, 0.25), 25.0));
      }
      if (nz >= 15) {
        double sc2 = aw_fusion_kth(rz, nz, nz / 2) / 0.455;
        c->noise_scale[1] = sqrt(fmin(fmax(sc2, 0.25), 25.0));
      }
      free(r2);
    }
  }
  return AW_OK;
}

void
aw_fusion_prep_cam_free(AwCamPrep *c)
{
  if (!c) return;
  free(c->valid);
  free(c->acc_ok);
  free(c->acc_m_s2);
  free(c->wstart);
  free(c->widx);
  free(c->wval);
  free(c->shape);
  free(c->shape_u);
  free(c->shape_w);
  memset(c, 0, sizeof *c);
}

/* Full scale of one sensor: the declared range, or, when undeclared, the largest magnitude if
 * it repeats on consecutive samples (a clipped plateau). 0 = no saturation found. */
static double
detect_range(const double (*x)[3], size_t n, double declared)
{
  if (declared > 0) return declared;
  double mx = 0;
  for (size_t i = 0; i < n; i++)
    for (int a = 0; a < 3; a++) mx = fmax(mx, fabs(x[i][a]));
  if (!(mx > 0)) return 0;
  for (size_t i = 0; i + 1 < n; i++)
    for (int a = 0; a < 3; a++)
      if (fabs(x[i][a]) >= mx * (1 - 1e-9) && fabs(x[i + 1][a]) >= mx * (1 - 1e-9)) return mx;
  return 0;
}

/* Derivative at t2 of the parabola through (t0, x0), (t1, x1), (t2, x2). */
static double
edge_slope(double t0, double x0, double t1, double x1, double t2, double x2)
{
  return x0 * (t2 - t1) / ((t0 - t1) * (t0 - t2)) + x1 * (t2 - t0) / ((t1 - t0) * (t1 - t2)) +
         x2 * (2 * t2 - t0 - t1) / ((t2 - t0) * (t2 - t1));
}

/* The least-squares parabola through up to three unclipped samples on each side of the run
 * [i, j) at u = t - t[i] (the fallback where a side has fewer than three). */
static bool
flank_parabola(const double (*x)[3], const double *t, size_t n, size_t i, size_t j, int a,
               double lim, double c[3])
{
  double S[5] = { 0 }, Sy[3] = { 0 };
  int cnt = 0;
  size_t left = i >= 3 ? i - 3 : 0, right = j + 3 < n ? j + 3 : n;
  for (size_t k = left; k < right; k++) {
    if (k == i) k = j;            /* skip the run itself */
    if (k >= right) break;
    if (fabs(x[k][a]) >= lim) continue;
    double u = t[k] - t[i], y = x[k][a];
    S[0] += 1; S[1] += u; S[2] += u * u; S[3] += u * u * u; S[4] += u * u * u * u;
    Sy[0] += y; Sy[1] += y * u; Sy[2] += y * u * u; cnt++;
  }
  if (cnt < 4) return false;
  double A[3][3] = { { S[0], S[1], S[2] }, { S[1], S[2], S[3] }, { S[2], S[3], S[4] } };
  double det = aw_fusion_det3((const double (*)[3])A);
  if (!(fabs(det) > 1e-30)) return false;
  aw_fusion_cramer3((const double (*)[3])A, Sy, det, c);
  return true;
}

/* Clipped runs. A clipped reading says only |x| >= full scale; wrist rates and accelerations
 * are smooth on the scale of a few samples, which makes the peak partly recoverable. Inside
 * a run the reading is replaced by the cubic Hermite curve between the last unclipped sample
 * before it and the first after, with the slopes there taken from the parabola through each
 * side's three nearest samples; never below full scale, at most four times it. Where a side
 * has fewer than three unclipped samples (a run at the recording's edge or two runs close
 * together), a least-squares parabola through the flanks, at most twice full scale.
 *
 * Measured against the same simulated hard swings made with full scales wide enough not to
 * clip (seeds 70000-70297 every third: 153 clipped gyro runs, 192 accelerometer runs, most
 * 5-10 samples long), the Hermite curve leaves the rotation a gyro run adds off by
 * 0.096 rad rms where the least-squares parabola through three samples each side (the
 * reconstruction before) left 0.27 rad, and the velocity an accelerometer run adds off by
 * 1.40 m/s rms against 1.76 (a ball strike's spike, one or two clipped samples, no smooth
 * curve recovers).
 *
 * The reconstruction's error goes to the filter per sample and axis (sigma[k][a], the unit of
 * x), as measured on the same runs: the integral over a run of n samples at full scale R and
 * interval dt (the velocity or angle it adds) is off by about
 *   s_int = R dt (clip_c n^1.5 + clip_b),
 * the rms of the error over R dt n^1.5 being 0.03-0.04 for the gyro and 0.05-0.08 for the
 * accelerometer at n >= 3 (CLIP_GYR_C, CLIP_ACC_C below), plus a ball strike's spike in the
 * accelerometer's short runs, about 0.2 R dt (CLIP_ACC_B). It is spread as white noise over
 * the run's n + 1 steps: sigma = s_int / (dt sqrt(n + 1)). The filter adds it along the
 * clipped axis only (eskf.c nominal_step): the other axes read true. The run's samples are
 * also marked in sat (the saturation flags). */
static const double CLIP_ACC_C = 0.07, CLIP_ACC_B = 0.2, CLIP_GYR_C = 0.035, CLIP_GYR_B = 0.02;

static void
declip(double (*x)[3], const double *t, size_t n, double range, double clip_c, double clip_b,
       float (*sigma)[3], unsigned char *sat)
{
  if (!(range > 0)) return;
  /* 0.5 % below full scale: quantisation keeps clipped values a count or two short. */
  double lim = 0.995 * range;
  for (int a = 0; a < 3; a++) {
    for (size_t i = 0; i < n;) {
      if (fabs(x[i][a]) < lim) { i++; continue; }
      size_t j = i;
      while (j < n && fabs(x[j][a]) >= lim) j++;
      double sgn = x[i][a] > 0 ? 1 : -1;
      bool herm = i >= 3 && j + 2 < n && fabs(x[i - 2][a]) < lim && fabs(x[i - 3][a]) < lim &&
                  fabs(x[j + 1][a]) < lim && fabs(x[j + 2][a]) < lim && t[i - 3] < t[i - 2] &&
                  t[i - 2] < t[i - 1] && t[i - 1] < t[j] && t[j] < t[j + 1] && t[j + 1] < t[j + 2];
      double c[3] = { 0, 0, 0 };
      bool par = !herm && flank_parabola((const double (*)[3])x, t, n, i, j, a, lim, c);
      double ta = herm ? t[i - 1] : 0, h = herm ? t[j] - ta : 1, p0 = 0, p1 = 0, m0 = 0, m1 = 0;
      if (herm) {
        p0 = x[i - 1][a];
        p1 = x[j][a];
        m0 = edge_slope(t[i - 3], x[i - 3][a], t[i - 2], x[i - 2][a], t[i - 1], p0) * h;
        m1 = edge_slope(t[j + 2], x[j + 2][a], t[j + 1], x[j + 1][a], t[j], p1) * h;
      }
      for (size_t k = i; k < j; k++) {
        double v = range * sgn;
        if (herm) {
          double u = (t[k] - ta) / h, u2 = u * u, u3 = u2 * u;
          double q = (2 * u3 - 3 * u2 + 1) * p0 + (u3 - 2 * u2 + u) * m0 + (-2 * u3 + 3 * u2) * p1 +
                     (u3 - u2) * m1;
          if (q * sgn > range) v = sgn * fmin(fabs(q), 4.0 * range);
        }
        else if (par) {
          double u = t[k] - t[i], q = c[0] + c[1] * u + c[2] * u * u;
          if (q * sgn > range) v = sgn * fmin(fabs(q), 2.0 * range);
        }
        x[k][a] = v;
      }
      double len = (double)(j - i);
      float sg = (float)(range * (clip_c * len * sqrt(len) + clip_b) / sqrt(len + 1));
      for (size_t k = i; k < j; k++) {
        sigma[k][a] = sg;
        sat[k] = 1;
      }
      i = j;
    }
  }
}

AwStatus
aw_fusion_prep_imu(const AwImuStream *imu, const AwFusionSettings *s, double g, AwImuPrep *m)
{
  memset(m, 0, sizeof *m);
  size_t n = imu->n;
  m->n = n;
  m->t_s = imu->t_s;
  m->f = (const double (*)[3])imu->accel_m_s2;
  m->w = (const double (*)[3])imu->gyro_rad_s;
  m->cumf = malloc(sizeof *m->cumf * (n ? n : 1));   /* [0] zeroed, the rest summed below */
  m->sat_acc = calloc(n ? n : 1, 1);
  m->sat_gyr = calloc(n ? n : 1, 1);
  m->still = calloc(n ? n : 1, 1);
  unsigned char *quiet = calloc(n ? n : 1, 1);
  if (!m->cumf || !m->sat_acc || !m->sat_gyr || !m->still || !quiet) {
    free(quiet);
    aw_fusion_prep_imu_free(m);
    return AW_ERR_NO_MEMORY;
  }
  m->dt_nom_s = median_interval(imu->t_s, n);
  if (!(m->dt_nom_s > 0)) m->dt_nom_s = 0.01;
  m->t_jitter_s = timestamp_jitter(imu->t_s, n, m->dt_nom_s);
  m->acc_range = detect_range(m->f, n, imu->meta.accel_range_m_s2);
  m->gyr_range = detect_range(m->w, n, imu->meta.gyro_range_rad_s);
  m->f_own = malloc(sizeof *m->f_own * (n ? n : 1));
  m->w_own = malloc(sizeof *m->w_own * (n ? n : 1));
  m->acc_clip_sigma = calloc(n ? n : 1, sizeof *m->acc_clip_sigma);
  m->gyr_clip_sigma = calloc(n ? n : 1, sizeof *m->gyr_clip_sigma);
  if (!m->f_own || !m->w_own || !m->acc_clip_sigma || !m->gyr_clip_sigma) {
    free(quiet);
    aw_fusion_prep_imu_free(m);
    return AW_ERR_NO_MEMORY;
  }
  memcpy(m->f_own, imu->accel_m_s2, sizeof *m->f_own * n);
  memcpy(m->w_own, imu->gyro_rad_s, sizeof *m->w_own * n);
  declip(m->f_own, imu->t_s, n, m->acc_range, CLIP_ACC_C, CLIP_ACC_B, m->acc_clip_sigma,
         m->sat_acc);
  declip(m->w_own, imu->t_s, n, m->gyr_range, CLIP_GYR_C, CLIP_GYR_B, m->gyr_clip_sigma,
         m->sat_gyr);
  m->f = (const double (*)[3])m->f_own;
  m->w = (const double (*)[3])m->w_own;
  /* Running integral of the reconstructed specific force (box means use it). */
  memset(m->cumf[0], 0, sizeof m->cumf[0]);
  for (size_t i = 1; i < n; i++) {
    double dt = imu->t_s[i] - imu->t_s[i - 1];
    for (int a = 0; a < 3; a++)
      m->cumf[i][a] = m->cumf[i - 1][a] + 0.5 * dt * (m->f[i][a] + m->f[i - 1][a]);
  }
  size_t half = (size_t)ceil(0.5 * s->still_window_s / m->dt_nom_s);
  if (half < 1) half = 1;
  /* Window means of the gyro and the accelerometer: stillness is judged on each reading's
   * deviation from its local mean, so sensor offsets (consumer parts: zero-rate +-3..10 deg/s,
   * zero-g +-40 mg per axis, REFERENCES.md section 8; 40 mg on a vertical axis alone moves |f|
   * by 0.39 m/s^2) do not hide a still hand. The means themselves must stay within twice any
   * offset spec: below 20 deg/s, and |f| within 1.5 m/s^2 (~150 mg) of gravity. */
  double (*cw)[6] = malloc(sizeof *cw * (n + 1));
  if (!cw) { free(quiet); aw_fusion_prep_imu_free(m); return AW_ERR_NO_MEMORY; }
  for (int a = 0; a < 6; a++) cw[0][a] = 0;
  for (size_t i = 0; i < n; i++)
    for (int a = 0; a < 3; a++) {
      cw[i + 1][a] = cw[i][a] + m->w[i][a];
      cw[i + 1][3 + a] = cw[i][3 + a] + m->f[i][a];
    }
  /* (in locals: the flags' byte stores could alias m's fields for all the compiler knows) */
  const double (*fs)[3] = m->f, (*ws)[3] = m->w;
  for (size_t i = 0; i < n; i++) {
    size_t lo = i >= half ? i - half : 0, hi = i + half < n ? i + half : n - 1;
    double mw[3], mf[3], dw = 0, mn = 0, df = 0, fn = 0;
    double inv = 1.0 / (double)(hi - lo + 1);
    for (int a = 0; a < 3; a++) {
      mw[a] = (cw[hi + 1][a] - cw[lo][a]) * inv;
      mf[a] = (cw[hi + 1][3 + a] - cw[lo][3 + a]) * inv;
      dw += (ws[i][a] - mw[a]) * (ws[i][a] - mw[a]);
      df += (fs[i][a] - mf[a]) * (fs[i][a] - mf[a]);
      mn += mw[a] * mw[a];
      fn += mf[a] * mf[a];
    }
    quiet[i] = sqrt(dw) < s->still_gyro_rad_s && sqrt(mn) < 0.35 &&
               sqrt(df) < s->still_accel_m_s2 && fabs(sqrt(fn) - g) < 1.5;
  }
  free(cw);
  /* The deviation tests cannot see a hand moving smoothly at constant acceleration (a slow
   * start from rest); its |f| differs from gravity as the accelerometer reads it at rest. That
   * reading is the median |f| over the quiet samples (gravity plus the offsets' projection),
   * and each quiet sample's |f| must lie within still_accel_m_s2 of it. */
  {
    size_t nq = 0;
    double *fq = malloc(sizeof *fq * (n ? n : 1));
    if (!fq) { free(quiet); aw_fusion_prep_imu_free(m); return AW_ERR_NO_MEMORY; }
    for (size_t i = 0; i < n; i++)
      if (quiet[i]) fq[nq++] = aw_v3_norm(m->f[i]);
    double g_rest = nq >= 16 ? aw_fusion_kth(fq, nq, nq / 2) : g;
    free(fq);
    for (size_t i = 0; i < n; i++)
      if (quiet[i] && !(fabs(aw_v3_norm(m->f[i]) - g_rest) < s->still_accel_m_s2)) quiet[i] = 0;
  }
  /* Still = every sample of a window of still_window_s around it is quiet, and the window has no
   * IMU gap. Prefix counts keep this O(n) at any rate. */
  size_t *cnt = malloc(sizeof *cnt * (n + 1));
  if (!cnt) { free(quiet); aw_fusion_prep_imu_free(m); return AW_ERR_NO_MEMORY; }
  cnt[0] = 0;
  for (size_t i = 0; i < n; i++) cnt[i + 1] = cnt[i] + quiet[i];
  for (size_t i = 0; i < n; i++) {
    if (i < half || i + half >= n) continue;
    size_t a = i - half, b = i + half;
    if (cnt[b + 1] - cnt[a] != b - a + 1) continue;
    if (imu->t_s[b] - imu->t_s[a] > 1.5 * s->still_window_s + 3 * m->dt_nom_s) continue;
    m->still[i] = 1;
  }
  free(cnt);
  free(quiet);
  /* White-noise densities from the still samples: sample-to-sample differences remove the
   * (slow) bias and gravity, var(x[i+1]-x[i]) = 2 sigma^2, and sigma^2 = N^2 / (2 dt) for white
   * noise sampled at 1/dt with the Nyquist bandwidth. */
  {
    double sa = 0, sg = 0;
    size_t c = 0;
    for (size_t i = 0; i + 1 < n; i++) {
      if (!m->still[i] || !m->still[i + 1]) continue;
      for (int a = 0; a < 3; a++) {
        double da = m->f[i + 1][a] - m->f[i][a], dg = m->w[i + 1][a] - m->w[i][a];
        sa += da * da;
        sg += dg * dg;
      }
      c++;
    }
    if (c >= 50) {
      double va = sa / (6.0 * (double)c), vg = sg / (6.0 * (double)c);
      m->accel_noise_meas = sqrt(va * 2 * m->dt_nom_s);
      m->gyro_noise_meas = sqrt(vg * 2 * m->dt_nom_s);
    }
  }
  return AW_OK;
}

void
aw_fusion_prep_imu_free(AwImuPrep *m)
{
  if (!m) return;
  free(m->cumf);
  free(m->sat_acc);
  free(m->sat_gyr);
  free(m->still);
  free(m->f_own);
  free(m->w_own);
  free(m->acc_clip_sigma);
  free(m->gyr_clip_sigma);
  memset(m, 0, sizeof *m);
}

static void
cum_at(const double *t, const double (*cum)[3], const double (*x)[3], size_t n, double tq,
       size_t *hint, double out[3])
{
  size_t i = aw_fusion_locate(t, n, tq, hint);
  if (i + 1 >= n) { for (int a = 0; a < 3; a++) out[a] = cum[n - 1][a]; return; }
  double h = t[i + 1] - t[i], u = tq - t[i];
  double r = h > 0 ? u / h : 0;
  for (int a = 0; a < 3; a++) {
    double xq = x[i][a] + r * (x[i + 1][a] - x[i][a]);
    out[a] = cum[i][a] + 0.5 * u * (x[i][a] + xq);
  }
}

bool
aw_fusion_box_mean(const double *t, const void *cum_v, const void *x_v, size_t n,
                   double t0, double t1, size_t *hint, double out[3])
{
  const double (*cum)[3] = (const double (*)[3])cum_v, (*x)[3] = (const double (*)[3])x_v;
  if (n < 2 || t0 < t[0] || t1 > t[n - 1] || !(t1 > t0)) return false;
  double c0[3], c1[3];
  cum_at(t, cum, x, n, t0, hint, c0);
  size_t h2 = hint ? *hint : 0;
  cum_at(t, cum, x, n, t1, &h2, c1);
  for (int a = 0; a < 3; a++) out[a] = (c1[a] - c0[a]) / (t1 - t0);
  return true;
}
