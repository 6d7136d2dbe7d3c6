/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Local polynomial least squares on the actual time stamps. On an evenly spaced time base this
 * is exactly the Savitzky-Golay filter (Savitzky & Golay 1964) with scipy's mode='interp' edge
 * handling; on a jittered base it stays unbiased, which a fixed-coefficient filter is not.
 * (The fixed-coefficient filters of signal.h serve evenly sampled streams.) */
#include "analysis-private.h"

#include <math.h>
#include <string.h>

/* Solves the small system M x = b (dim <= 5) by Gaussian elimination with partial pivoting. */
static bool
solve_small(double M[5][5], double b[5], int dim)
{
  for (int c = 0; c < dim; c++) {
    int piv = c;
    for (int r = c + 1; r < dim; r++)
      if (fabs(M[r][c]) > fabs(M[piv][c]))
        piv = r;
    if (fabs(M[piv][c]) < 1e-300)
      return false;
    if (piv != c) {
      for (int k = 0; k < dim; k++) {
        double t = M[c][k]; M[c][k] = M[piv][k]; M[piv][k] = t;
      }
      double t = b[c]; b[c] = b[piv]; b[piv] = t;
    }
    for (int r = c + 1; r < dim; r++) {
      double f = M[r][c] / M[c][c];
      for (int k = c; k < dim; k++)
        M[r][k] -= f * M[c][k];
      b[r] -= f * b[c];
    }
  }
  for (int r = dim - 1; r >= 0; r--) {
    double s = b[r];
    for (int k = r + 1; k < dim; k++)
      s -= M[r][k] * b[k];
    b[r] = s / M[r][r];
  }
  return true;
}

bool
aw_an_local_poly(const double *t_s, const double *x, size_t stride, size_t n, int half, int order,
                 int deriv, double *out, size_t out_stride)
{
  if (n == 0 || half < 1 || order < deriv || order > 4 || deriv < 0 || deriv > 2)
    return false;
  size_t w = (size_t)(2 * half + 1);
  if (w > n)
    w = n;
  int dim = order + 1;
  if ((size_t)dim > w)
    return false;
  for (size_t i = 0; i < n; i++) {
    /* Window centred on i, shifted inwards at the ends (mode='interp'). */
    size_t lo = i >= (size_t)half ? i - (size_t)half : 0;
    if (lo + w > n)
      lo = n - w;
    double t0 = t_s[i];
    double span = t_s[lo + w - 1] - t_s[lo];
    double sc = span > 0 ? 2.0 / span : 1.0;
    double M[5][5] = { { 0 } }, b[5] = { 0 };
    for (size_t k = lo; k < lo + w; k++) {
      double u = (t_s[k] - t0) * sc, pw[9];
      pw[0] = 1.0;
      for (int e = 1; e < 2 * dim - 1; e++)
        pw[e] = pw[e - 1] * u;
      for (int r = 0; r < dim; r++) {
        for (int c = 0; c < dim; c++)
          M[r][c] += pw[r + c];
        b[r] += pw[r] * x[k * stride];
      }
    }
    if (!solve_small(M, b, dim))
      return false;
    double fact = deriv == 0 ? 1.0 : deriv == 1 ? sc : 2.0 * sc * sc;
    out[i * out_stride] = b[deriv] * fact;
  }
  return true;
}

bool
aw_an_derivative3(const double *t_s, const double (*p)[3], size_t n, int half, int order,
                  double (*out)[3])
{
  for (int a = 0; a < 3; a++)
    if (!aw_an_local_poly(t_s, &p[0][a], 3, n, half, order, 1, &out[0][a], 3))
      return false;
  return true;
}
