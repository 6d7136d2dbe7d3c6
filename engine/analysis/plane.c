/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Least-squares plane fit and the club-head lever model. */
#include "arcwise/analysis.h"
#include "arcwise/math3.h"
#include "analysis-private.h"

#include <math.h>
#include <string.h>

/* Cyclic Jacobi rotations on a symmetric 3x3 matrix: eigenvalues in w (ascending) and unit
 * eigenvectors in the columns of V. Jacobi is chosen over a closed-form cubic because it stays
 * accurate for nearly repeated eigenvalues (a nearly straight stretch of path). */
void
aw_an_sym3_eigen(const double A_in[3][3], double w[3], double V[3][3])
{
  double A[3][3];
  memcpy(A, A_in, sizeof A);
  for (int i = 0; i < 3; i++)
    for (int j = 0; j < 3; j++)
      V[i][j] = i == j ? 1.0 : 0.0;
  for (int sweep = 0; sweep < 50; sweep++) {
    double off = fabs(A[0][1]) + fabs(A[0][2]) + fabs(A[1][2]);
    double scale = fabs(A[0][0]) + fabs(A[1][1]) + fabs(A[2][2]);
    if (off <= 1e-300 || off <= 1e-17 * scale)
      break;
    for (int p = 0; p < 2; p++)
      for (int q = p + 1; q < 3; q++) {
        if (A[p][q] == 0.0)
          continue;
        double theta = (A[q][q] - A[p][p]) / (2.0 * A[p][q]);
        double t = (theta >= 0 ? 1.0 : -1.0) / (fabs(theta) + sqrt(theta * theta + 1.0));
        double c = 1.0 / sqrt(t * t + 1.0), s = t * c;
        for (int k = 0; k < 3; k++) { /* A = J^T A J */
          double akp = A[k][p], akq = A[k][q];
          A[k][p] = c * akp - s * akq;
          A[k][q] = s * akp + c * akq;
        }
        for (int k = 0; k < 3; k++) {
          double apk = A[p][k], aqk = A[q][k];
          A[p][k] = c * apk - s * aqk;
          A[q][k] = s * apk + c * aqk;
        }
        for (int k = 0; k < 3; k++) {
          double vkp = V[k][p], vkq = V[k][q];
          V[k][p] = c * vkp - s * vkq;
          V[k][q] = s * vkp + c * vkq;
        }
      }
  }
  for (int i = 0; i < 3; i++)
    w[i] = A[i][i];
  /* Sort ascending, permuting columns. */
  for (int i = 0; i < 2; i++)
    for (int j = i + 1; j < 3; j++)
      if (w[j] < w[i]) {
        double tw = w[i]; w[i] = w[j]; w[j] = tw;
        for (int k = 0; k < 3; k++) {
          double tv = V[k][i]; V[k][i] = V[k][j]; V[k][j] = tv;
        }
      }
}

AwStatus
aw_plane_fit(const double (*pts)[3], size_t n, double centroid[3], double normal[3],
             double *rms_m)
{
  if (pts == NULL || n < 3)
    return AW_ERR_TOO_FEW;
  double c[3] = { 0, 0, 0 };
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(pts[i][0]) || !isfinite(pts[i][1]) || !isfinite(pts[i][2]))
      return AW_ERR_NON_FINITE;
    aw_v3_axpy(c, 1.0, pts[i]);
  }
  aw_v3_scale(c, c, 1.0 / (double)n);
  /* Scatter matrix of the centred points: its eigenvector of the smallest eigenvalue is the
   * right singular vector of the smallest singular value of the centred data matrix. */
  double S[3][3] = { { 0 } };
  for (size_t i = 0; i < n; i++) {
    double d[3];
    aw_v3_sub(d, pts[i], c);
    for (int r = 0; r < 3; r++)
      for (int k = 0; k < 3; k++)
        S[r][k] += d[r] * d[k];
  }
  double w[3], V[3][3];
  aw_an_sym3_eigen((const double (*)[3])S, w, V);
  /* Points on (nearly) one line leave the plane undetermined. */
  if (!(w[1] > 1e-12 * (w[2] > 0 ? w[2] : 1.0)) || w[2] <= 0)
    return AW_ERR_TOO_FEW;
  double nrm[3] = { V[0][0], V[1][0], V[2][0] };
  aw_v3_normalize(nrm, nrm);
  if (centroid != NULL)
    aw_v3_copy(centroid, c);
  if (normal != NULL)
    aw_v3_copy(normal, nrm);
  if (rms_m != NULL)
    *rms_m = sqrt(fmax(w[0], 0.0) / (double)n);
  return AW_OK;
}

double
aw_club_speed_lever(double hand_speed_m_s, double omega_perp_rad_s, double club_length_m,
                    double rate_ratio)
{
  /* Under full release the hands and the club head move in the same direction, so the speeds
   * add along one line: the head's speed over the hands' is its extra radius L turning at the
   * club's rate. */
  if (!isfinite(hand_speed_m_s) || !isfinite(omega_perp_rad_s) || !isfinite(club_length_m) ||
      !isfinite(rate_ratio))
    return AN_NAN;
  return fabs(hand_speed_m_s) + rate_ratio * fabs(omega_perp_rad_s) * club_length_m;
}
