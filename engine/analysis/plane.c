/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Least-squares plane fit and the club-head lever model. */
#include "arcwise/analysis.h"
#include "arcwise/eig.h"
#include "arcwise/math3.h"
#include "analysis-private.h"

#include <math.h>
#include <string.h>

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
  if (!aw_sym_eigen(3, &S[0][0], w, &V[0][0]))
    return AW_ERR_NON_FINITE;
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
