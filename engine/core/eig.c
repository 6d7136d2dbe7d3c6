/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Cyclic Jacobi eigen-decomposition of small symmetric matrices; see arcwise/eig.h. */
#include "arcwise/eig.h"

#include <math.h>
#include <string.h>

bool
aw_sym_eigen(int n, const double *A_in, double *w, double *V_out)
{
  enum { M = AW_SYM_EIGEN_MAX };
  if (n < 1 || n > M || A_in == NULL || w == NULL || V_out == NULL)
    return false;
  double A[M][M], V[M][M];
  for (int i = 0; i < n; i++)
    for (int j = 0; j < n; j++) {
      /* The upper triangle is taken as the matrix, so a slightly asymmetric input (rounding in
       * the caller's sums) cannot make the rotations diverge. */
      double a = j >= i ? A_in[i * n + j] : A_in[j * n + i];
      if (!isfinite(a))
        return false;
      A[i][j] = a;
      V[i][j] = i == j ? 1.0 : 0.0;
    }
  for (int sweep = 0; sweep < 50; sweep++) {
    double off = 0, diag = 0;
    for (int p = 0; p < n; p++) {
      diag += fabs(A[p][p]);
      for (int q = p + 1; q < n; q++)
        off += fabs(A[p][q]);
    }
    /* Converged when the off-diagonal part is below rounding of the diagonal. */
    if (off <= 1e-300 || off <= 1e-17 * diag)
      break;
    for (int p = 0; p < n - 1; p++)
      for (int q = p + 1; q < n; q++) {
        if (A[p][q] == 0.0)
          continue;
        /* The rotation that zeroes A[p][q] (Golub & Van Loan, Algorithm 8.5.1), the smaller of
         * the two angles for stability. */
        double theta = (A[q][q] - A[p][p]) / (2.0 * A[p][q]);
        double t = (theta >= 0 ? 1.0 : -1.0) / (fabs(theta) + sqrt(theta * theta + 1.0));
        double c = 1.0 / sqrt(t * t + 1.0), s = t * c;
        for (int k = 0; k < n; k++) { /* A = J^T A J */
          double akp = A[k][p], akq = A[k][q];
          A[k][p] = c * akp - s * akq;
          A[k][q] = s * akp + c * akq;
        }
        for (int k = 0; k < n; k++) {
          double apk = A[p][k], aqk = A[q][k];
          A[p][k] = c * apk - s * aqk;
          A[q][k] = s * apk + c * aqk;
        }
        for (int k = 0; k < n; k++) {
          double vkp = V[k][p], vkq = V[k][q];
          V[k][p] = c * vkp - s * vkq;
          V[k][q] = s * vkp + c * vkq;
        }
      }
  }
  double ev[M];
  for (int i = 0; i < n; i++)
    ev[i] = A[i][i];
  /* Ascending, permuting the columns alike (selection sort: n <= 4). */
  for (int i = 0; i < n - 1; i++)
    for (int j = i + 1; j < n; j++)
      if (ev[j] < ev[i]) {
        double tw = ev[i]; ev[i] = ev[j]; ev[j] = tw;
        for (int k = 0; k < n; k++) {
          double tv = V[k][i]; V[k][i] = V[k][j]; V[k][j] = tv;
        }
      }
  for (int i = 0; i < n; i++) {
    w[i] = ev[i];
    for (int j = 0; j < n; j++)
      V_out[i * n + j] = V[i][j];
  }
  return true;
}
