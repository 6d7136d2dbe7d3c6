/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Savitzky-Golay, Butterworth (bilinear transform), forward-backward filtering, interpolation.
 * See arcwise/signal.h for the reference each function follows. */
#include "arcwise/signal.h"
#include "arcwise/units.h"

#include <complex.h>
/* glibc defines CMPLX only for GCC >= 4.7 (through __builtin_complex); clang 14 reports itself
 * as GCC 4.2 and gets none. The fallback is exact for the finite values used here. */
#ifndef CMPLX
#define CMPLX(x, y) ((double)(x) + (double)(y) * (double complex)_Complex_I)
#endif
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define SG_MAX_ORDER 32

AwStatus
aw_savgol_coeffs(int window, int polyorder, int deriv, double delta, int pos, double *out)
{
  if (out == NULL || window < 1 || window > AW_SAVGOL_MAX_WINDOW || polyorder < 0 ||
      polyorder >= window || polyorder > SG_MAX_ORDER || deriv < 0 || !(delta > 0) ||
      pos < -1 || pos >= window)
    return AW_ERR_INVALID_ARG;
  if (deriv > polyorder) {
    memset(out, 0, (size_t)window * sizeof *out);
    return AW_OK;
  }
  const int w = window, p = polyorder + 1;
  double centre = pos < 0 ? 0.5 * (w - 1) : (double)pos;
  /* Offsets scaled into [-1, 1] keep the Vandermonde matrix well conditioned; the scale comes
   * back as s^-d below. */
  double s = 0;
  for (int j = 0; j < w; j++)
    s = fmax(s, fabs(j - centre));
  if (s == 0)
    s = 1;

  /* Thin QR of the Vandermonde matrix A[j][k] = u_j^k by modified Gram-Schmidt, run twice
   * ("twice is enough", Giraud et al. 2005) so Q stays orthonormal for high orders. */
  static const size_t cap = (size_t)AW_SAVGOL_MAX_WINDOW * (SG_MAX_ORDER + 1);
  double *q = calloc(cap, sizeof *q);
  if (q == NULL)
    return AW_ERR_NO_MEMORY;
  double r[SG_MAX_ORDER + 1][SG_MAX_ORDER + 1];
  memset(r, 0, sizeof r);
  for (int j = 0; j < w; j++) {
    double u = (j - centre) / s, v = 1;
    for (int k = 0; k < p; k++) {
      q[(size_t)k * w + j] = v;
      v *= u;
    }
  }
  for (int k = 0; k < p; k++) {
    double *qk = q + (size_t)k * w;
    for (int pass = 0; pass < 2; pass++)
      for (int i = 0; i < k; i++) {
        const double *qi = q + (size_t)i * w;
        double dot = 0;
        for (int j = 0; j < w; j++)
          dot += qi[j] * qk[j];
        r[i][k] += dot;
        for (int j = 0; j < w; j++)
          qk[j] -= dot * qi[j];
      }
    double nrm = 0;
    for (int j = 0; j < w; j++)
      nrm += qk[j] * qk[j];
    nrm = sqrt(nrm);
    if (!(nrm > 0)) {
      free(q);
      return AW_ERR_INVALID_ARG;
    }
    r[k][k] = nrm;
    for (int j = 0; j < w; j++)
      qk[j] /= nrm;
  }
  /* Row `deriv` of R^-1 (back substitution on e_d^T R^-1 = x^T, i.e. R^T x = e_d). */
  double x[SG_MAX_ORDER + 1];
  for (int k = 0; k < p; k++) {
    double acc = (k == deriv) ? 1.0 : 0.0;
    for (int i = 0; i < k; i++)
      acc -= r[i][k] * x[i];
    x[k] = acc / r[k][k];
  }
  double fact = 1;
  for (int i = 2; i <= deriv; i++)
    fact *= i;
  double scale = fact / pow(s * delta, deriv);
  for (int j = 0; j < w; j++) {
    double c = 0;
    for (int k = 0; k < p; k++)
      c += x[k] * q[(size_t)k * w + j];
    out[j] = c * scale;
  }
  free(q);
  return AW_OK;
}

AwStatus
aw_savgol_filter(const double *x, size_t n, size_t x_stride, int window, int polyorder,
                 int deriv, double delta, double *y, size_t y_stride)
{
  if (x == NULL || y == NULL || x_stride == 0 || y_stride == 0 || window < 1 ||
      window % 2 == 0)
    return AW_ERR_INVALID_ARG;
  if (n < (size_t)window)
    return AW_ERR_TOO_FEW;
  int half = window / 2;
  double *c = malloc((size_t)window * sizeof *c);
  double *tmp = malloc(n * sizeof *tmp);
  if (c == NULL || tmp == NULL) {
    free(c);
    free(tmp);
    return AW_ERR_NO_MEMORY;
  }
  AwStatus st = aw_savgol_coeffs(window, polyorder, deriv, delta, half, c);
  if (st != AW_OK)
    goto out;
  for (size_t i = (size_t)half; i + (size_t)half < n; i++) {
    double acc = 0;
    const double *xs = x + (i - (size_t)half) * x_stride;
    for (int j = 0; j < window; j++)
      acc += c[j] * xs[(size_t)j * x_stride];
    tmp[i] = acc;
  }
  /* Edges: the polynomial fitted to the first / last window, evaluated at each edge sample. */
  for (int e = 0; e < half; e++) {
    st = aw_savgol_coeffs(window, polyorder, deriv, delta, e, c);
    if (st != AW_OK)
      goto out;
    double acc = 0;
    for (int j = 0; j < window; j++)
      acc += c[j] * x[(size_t)j * x_stride];
    tmp[e] = acc;
    st = aw_savgol_coeffs(window, polyorder, deriv, delta, window - 1 - e, c);
    if (st != AW_OK)
      goto out;
    acc = 0;
    const double *xs = x + (n - (size_t)window) * x_stride;
    for (int j = 0; j < window; j++)
      acc += c[j] * xs[(size_t)j * x_stride];
    tmp[n - 1 - (size_t)e] = acc;
  }
  for (size_t i = 0; i < n; i++)
    y[i * y_stride] = tmp[i];
out:
  free(c);
  free(tmp);
  return st;
}

AwStatus
aw_butter_lowpass(int order, double fc_hz, double fs_hz, int winter_passes, double *b, double *a)
{
  if (b == NULL || a == NULL || order < 1 || order > AW_BUTTER_MAX_ORDER || !(fs_hz > 0) ||
      !(fc_hz > 0) || !(fc_hz < 0.5 * fs_hz) || winter_passes < 0)
    return AW_ERR_INVALID_ARG;
  const int N = order;
  /* Pre-warped analog cut-off, as scipy: warped = 2 fs tan(pi fc / fs). */
  double warped_t = tan(AW_PI * fc_hz / fs_hz);
  if (winter_passes > 0)
    warped_t /= pow(pow(2.0, 1.0 / winter_passes) - 1.0, 1.0 / (2.0 * N));
  double fs2 = 2.0 * fs_hz;
  double warped = fs2 * warped_t;
  /* Analog prototype poles exp(i pi (2k + N + 1) / (2N)) scaled to the cut-off, gain warped^N;
   * bilinear transform z = (2fs + s) / (2fs - s), the N zeros go to z = -1. */
  double complex zp[AW_BUTTER_MAX_ORDER];
  double complex kden = 1;
  for (int k = 0; k < N; k++) {
    double th = AW_PI * (2.0 * k + N + 1) / (2.0 * N);
    double complex p = CMPLX(warped * cos(th), warped * sin(th));
    zp[k] = (fs2 + p) / (fs2 - p);
    kden *= (fs2 - p);
  }
  double gain = creal(pow(warped, N) / kden);
  /* a = poly(zp) (real for conjugate pairs), b = gain * (1 + z^-1)^N. */
  double complex poly[AW_BUTTER_MAX_ORDER + 1] = { 1 };
  for (int k = 0; k < N; k++)
    for (int i = k + 1; i >= 1; i--)
      poly[i] -= zp[k] * poly[i - 1];
  double binom = 1;
  for (int i = 0; i <= N; i++) {
    a[i] = creal(poly[i]);
    b[i] = gain * binom;
    binom = binom * (N - i) / (i + 1);
  }
  return AW_OK;
}

AwStatus
aw_lfilter(const double *b, const double *a, int n_coeffs, const double *x, size_t n,
           size_t x_stride, const double *zi, double *y, size_t y_stride)
{
  if (b == NULL || a == NULL || x == NULL || y == NULL || n_coeffs < 1 ||
      n_coeffs > AW_BUTTER_MAX_ORDER + 1 || a[0] == 0 || x_stride == 0 || y_stride == 0)
    return AW_ERR_INVALID_ARG;
  double bn[AW_BUTTER_MAX_ORDER + 1], an[AW_BUTTER_MAX_ORDER + 1], z[AW_BUTTER_MAX_ORDER + 1];
  for (int i = 0; i < n_coeffs; i++) {
    bn[i] = b[i] / a[0];
    an[i] = a[i] / a[0];
    z[i] = (zi != NULL && i < n_coeffs - 1) ? zi[i] : 0.0;
  }
  z[n_coeffs - 1] = 0;
  for (size_t k = 0; k < n; k++) {
    double xk = x[k * x_stride];
    double yk = bn[0] * xk + z[0];
    for (int i = 0; i < n_coeffs - 1; i++)
      z[i] = bn[i + 1] * xk - an[i + 1] * yk + z[i + 1];
    y[k * y_stride] = yk;
  }
  return AW_OK;
}

/* scipy.signal.lfilter_zi: the steady state of the filter for a unit step input, solving
 * (I - A^T) zi = b[1:] - a[1:] b[0] with A the companion matrix of a. */
static AwStatus
lfilter_zi(const double *b, const double *a, int nc, double *zi)
{
  int m = nc - 1;
  double M[AW_BUTTER_MAX_ORDER][AW_BUTTER_MAX_ORDER + 1];
  for (int i = 0; i < m; i++) {
    for (int j = 0; j < m; j++) {
      double comp_t = 0; /* companion(a).T[i][j] = companion(a)[j][i] */
      if (j == 0)
        comp_t = -a[i + 1] / a[0];
      else if (i == j - 1)
        comp_t = 1;
      M[i][j] = (i == j ? 1.0 : 0.0) - comp_t;
    }
    M[i][m] = b[i + 1] / a[0] - a[i + 1] / a[0] * (b[0] / a[0]);
  }
  for (int c = 0; c < m; c++) {
    int piv = c;
    for (int r = c + 1; r < m; r++)
      if (fabs(M[r][c]) > fabs(M[piv][c]))
        piv = r;
    if (M[piv][c] == 0)
      return AW_ERR_RANGE;
    if (piv != c)
      for (int j = 0; j <= m; j++) {
        double t = M[c][j];
        M[c][j] = M[piv][j];
        M[piv][j] = t;
      }
    for (int r = 0; r < m; r++) {
      if (r == c)
        continue;
      double f = M[r][c] / M[c][c];
      for (int j = c; j <= m; j++)
        M[r][j] -= f * M[c][j];
    }
  }
  for (int i = 0; i < m; i++)
    zi[i] = M[i][m] / M[i][i];
  return AW_OK;
}

AwStatus
aw_filtfilt(const double *b, const double *a, int n_coeffs, const double *x, size_t n,
            size_t x_stride, double *y, size_t y_stride)
{
  if (b == NULL || a == NULL || x == NULL || y == NULL || n_coeffs < 1 ||
      n_coeffs > AW_BUTTER_MAX_ORDER + 1 || a[0] == 0 || x_stride == 0 || y_stride == 0)
    return AW_ERR_INVALID_ARG;
  size_t pad = 3 * (size_t)n_coeffs;
  if (n <= pad)
    return AW_ERR_TOO_FEW;
  for (size_t i = 0; i < n; i++)
    if (!isfinite(x[i * x_stride]))
      return AW_ERR_NON_FINITE;
  size_t ne = n + 2 * pad;
  double *e = malloc(ne * sizeof *e);
  if (e == NULL)
    return AW_ERR_NO_MEMORY;
  double x0 = x[0], xl = x[(n - 1) * x_stride];
  for (size_t i = 0; i < pad; i++)
    e[i] = 2 * x0 - x[(pad - i) * x_stride];
  for (size_t i = 0; i < n; i++)
    e[pad + i] = x[i * x_stride];
  for (size_t i = 0; i < pad; i++)
    e[pad + n + i] = 2 * xl - x[(n - 2 - i) * x_stride];
  double zi[AW_BUTTER_MAX_ORDER] = { 0 }, z[AW_BUTTER_MAX_ORDER] = { 0 };
  AwStatus st = AW_OK;
  if (n_coeffs > 1) {
    st = lfilter_zi(b, a, n_coeffs, zi);
    if (st != AW_OK)
      goto out;
  }
  for (int i = 0; i < n_coeffs - 1; i++)
    z[i] = zi[i] * e[0];
  aw_lfilter(b, a, n_coeffs, e, ne, 1, z, e, 1);
  /* Backward pass on the reversed signal. */
  for (size_t i = 0; i < ne / 2; i++) {
    double t = e[i];
    e[i] = e[ne - 1 - i];
    e[ne - 1 - i] = t;
  }
  for (int i = 0; i < n_coeffs - 1; i++)
    z[i] = zi[i] * e[0];
  aw_lfilter(b, a, n_coeffs, e, ne, 1, z, e, 1);
  for (size_t i = 0; i < n; i++)
    y[i * y_stride] = e[ne - 1 - pad - i];
out:
  free(e);
  return st;
}

AwStatus
aw_lowpass_zero_lag(const double *x, size_t n, size_t x_stride, int order, double fc_hz,
                    double fs_hz, double *y, size_t y_stride)
{
  double b[AW_BUTTER_MAX_ORDER + 1], a[AW_BUTTER_MAX_ORDER + 1];
  AwStatus st = aw_butter_lowpass(order, fc_hz, fs_hz, 2, b, a);
  if (st != AW_OK)
    return st;
  return aw_filtfilt(b, a, order + 1, x, n, x_stride, y, y_stride);
}

AwStatus
aw_interp_linear(const double *t, const double *x, size_t n, size_t x_stride, const double *tq,
                 size_t nq, AwExtrapolation extrap, double *y, size_t y_stride)
{
  if (t == NULL || x == NULL || (nq > 0 && (tq == NULL || y == NULL)) || x_stride == 0 ||
      y_stride == 0)
    return AW_ERR_INVALID_ARG;
  if (n == 0 || (extrap == AW_EXTRAP_LINEAR && n < 2))
    return AW_ERR_TOO_FEW;
  for (size_t i = 0; i < n; i++)
    if (!isfinite(t[i]) || (i > 0 && !(t[i] > t[i - 1])))
      return AW_ERR_RANGE;
  size_t seg = 0; /* remembered segment: sorted queries cost O(n + nq) */
  for (size_t k = 0; k < nq; k++) {
    double tk = tq[k], v;
    if (!(tk == tk)) {
      v = NAN;
    } else if (tk < t[0] || tk > t[n - 1] || n == 1) {
      if (n == 1 && tk == t[0])
        v = x[0];
      else if (extrap == AW_EXTRAP_NAN)
        v = NAN;
      else if (extrap == AW_EXTRAP_HOLD || n == 1)
        v = tk <= t[0] ? x[0] : x[(n - 1) * x_stride];
      else {
        size_t i = tk < t[0] ? 0 : n - 2;
        double x0 = x[i * x_stride], x1 = x[(i + 1) * x_stride];
        v = x0 + (x1 - x0) * (tk - t[i]) / (t[i + 1] - t[i]);
      }
    } else {
      if (seg >= n - 1 || t[seg] > tk)
        seg = 0;
      while (seg + 1 < n - 1 && t[seg + 1] <= tk)
        seg++;
      double t0 = t[seg], t1 = t[seg + 1];
      double x0 = x[seg * x_stride], x1 = x[(seg + 1) * x_stride];
      if (tk == t1)
        v = x1;
      else if (tk == t0)
        v = x0;
      else
        v = x0 + (x1 - x0) * (tk - t0) / (t1 - t0);
    }
    y[k * y_stride] = v;
  }
  return AW_OK;
}

AwStatus
aw_fill_gaps_linear(const double *t, double *x, size_t n, size_t x_stride, double max_gap_s,
                    size_t *n_filled)
{
  if (n_filled != NULL)
    *n_filled = 0;
  if (t == NULL || x == NULL || x_stride == 0)
    return AW_ERR_INVALID_ARG;
  size_t last = (size_t)-1, filled = 0;
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(x[i * x_stride]))
      continue;
    if (last != (size_t)-1 && i > last + 1 &&
        (max_gap_s < 0 || t[i] - t[last] <= max_gap_s)) {
      double x0 = x[last * x_stride], x1 = x[i * x_stride];
      for (size_t j = last + 1; j < i; j++) {
        x[j * x_stride] = x0 + (x1 - x0) * (t[j] - t[last]) / (t[i] - t[last]);
        filled++;
      }
    }
    last = i;
  }
  if (n_filled != NULL)
    *n_filled = filled;
  return last == (size_t)-1 && n > 0 ? AW_ERR_EMPTY : AW_OK;
}

size_t
aw_uniform_grid(double t0, double t1, double rate_hz, double *out)
{
  if (!(rate_hz > 0) || !(t1 >= t0) || !isfinite(t0) || !isfinite(t1))
    return 0;
  size_t n = (size_t)floor((t1 - t0) * rate_hz + 1e-9) + 1;
  if (out != NULL)
    for (size_t k = 0; k < n; k++)
      out[k] = t0 + (double)k / rate_hz;
  return n;
}
