/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Stage 2: rotation between the camera and the IMU at its first sample, and gravity in the
 * camera frame.
 *
 * With the clocks aligned, the camera's keypoint acceleration and the IMU's specific force obey
 * a_cam(t) = R_cam_body0 * R_body0_body(t) * f(t) + g_cam, where R_body0_body(t) comes from the
 * gyro (bias from the longest still period). Both sides are averaged over the same short window
 * around each frame, then R_cam_body0 is Wahba's problem (Horn's closed form) and g_cam the mean
 * residual, alternated a few times with |g_cam| held at the local gravity. Frames whose residual
 * is far beyond the median (occlusion snaps, mis-detections) are dropped for the last round. */
#include "fusion-internal.h"

#include "arcwise/math3.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Largest eigenvector of a symmetric 4x4 matrix by cyclic Jacobi rotations. */
static void
eig4_max(double A[4][4], double v_out[4])
{
  double V[4][4] = { { 1, 0, 0, 0 }, { 0, 1, 0, 0 }, { 0, 0, 1, 0 }, { 0, 0, 0, 1 } };
  for (int sweep = 0; sweep < 50; sweep++) {
    double off = 0;
    for (int p = 0; p < 4; p++)
      for (int q = p + 1; q < 4; q++) off += A[p][q] * A[p][q];
    if (off < 1e-30) break;
    for (int p = 0; p < 4; p++)
      for (int q = p + 1; q < 4; q++) {
        if (fabs(A[p][q]) < 1e-300) continue;
        double th = 0.5 * (A[q][q] - A[p][p]) / A[p][q];
        double t = (th >= 0 ? 1.0 : -1.0) / (fabs(th) + sqrt(th * th + 1));
        double c = 1 / sqrt(t * t + 1), s = t * c;
        for (int k = 0; k < 4; k++) {
          double akp = A[k][p], akq = A[k][q];
          A[k][p] = c * akp - s * akq;
          A[k][q] = s * akp + c * akq;
        }
        for (int k = 0; k < 4; k++) {
          double apk = A[p][k], aqk = A[q][k];
          A[p][k] = c * apk - s * aqk;
          A[q][k] = s * apk + c * aqk;
        }
        for (int k = 0; k < 4; k++) {
          double vkp = V[k][p], vkq = V[k][q];
          V[k][p] = c * vkp - s * vkq;
          V[k][q] = s * vkp + c * vkq;
        }
      }
  }
  int best = 0;
  for (int i = 1; i < 4; i++) if (A[i][i] > A[best][best]) best = i;
  for (int k = 0; k < 4; k++) v_out[k] = V[k][best];
}

void
aw_fusion_wahba(double B[3][3], double q[4])
{
  /* B. K. P. Horn, "Closed-form solution of absolute orientation using unit quaternions",
   * J. Opt. Soc. Am. A 4(4):629-642 (1987), eq. for N with S = sum b a^T. */
  double Sxx = B[0][0], Sxy = B[0][1], Sxz = B[0][2];
  double Syx = B[1][0], Syy = B[1][1], Syz = B[1][2];
  double Szx = B[2][0], Szy = B[2][1], Szz = B[2][2];
  double N[4][4] = {
    { Sxx + Syy + Szz, Syz - Szy, Szx - Sxz, Sxy - Syx },
    { Syz - Szy, Sxx - Syy - Szz, Sxy + Syx, Szx + Sxz },
    { Szx - Sxz, Sxy + Syx, -Sxx + Syy - Szz, Syz + Szy },
    { Sxy - Syx, Szx + Sxz, Syz + Szy, -Sxx - Syy + Szz },
  };
  eig4_max(N, q);
  if (q[0] < 0) for (int k = 0; k < 4; k++) q[k] = -q[k];
  aw_quat_normalize(q);
}

AwStatus
aw_fusion_calibrate(const AwImuPrep *imu, const double *tau, const AwCamPrep *cam,
                    const AwFusionSettings *s, double g, const double g_cam0[3], AwCalib *out,
                    AwError *err)
{
  memset(out, 0, sizeof *out);
  size_t n = imu->n;
  /* Gyro bias: mean rate over the longest still run. */
  size_t best_a = 0, best_len = 0;
  for (size_t i = 0; i < n;) {
    if (!imu->still[i]) { i++; continue; }
    size_t j = i;
    while (j < n && imu->still[j]) j++;
    if (j - i > best_len) { best_len = j - i; best_a = i; }
    i = j;
  }
  if (best_len > 0) {
    double m[3] = { 0 };
    for (size_t i = best_a; i < best_a + best_len; i++)
      for (int a = 0; a < 3; a++) m[a] += imu->w[i][a];
    for (int a = 0; a < 3; a++) out->gyro_bias_rad_s[a] = m[a] / (double)best_len;
    out->still_found = true;
  }
  /* Attitude relative to the first sample, and the specific force in that frame. */
  double (*fb0)[3] = malloc(sizeof *fb0 * n);
  double (*cum)[3] = malloc(sizeof *cum * n);
  if (!fb0 || !cum) { free(fb0); free(cum); return AW_ERR_NO_MEMORY; }
  double q[4] = { 1, 0, 0, 0 };
  size_t n_ok = n;   /* samples before the first IMU gap: the gyro chain is unbroken there */
  for (size_t i = 0; i < n; i++) {
    if (i > 0) {
      double dt = tau[i] - tau[i - 1];
      if (dt > 3 * imu->dt_nom_s + 0.02 && n_ok == n) n_ok = i;
      double rv[3], dq[4];
      for (int a = 0; a < 3; a++)
        rv[a] = 0.5 * (imu->w[i][a] + imu->w[i - 1][a]) * dt - out->gyro_bias_rad_s[a] * dt;
      aw_quat_from_rotvec(dq, rv);
      aw_quat_mul(q, q, dq);
      aw_quat_normalize(q);
    }
    aw_quat_rotate(fb0[i], q, imu->f[i]);
    if (i == 0) memset(cum[0], 0, sizeof cum[0]);
    else
      for (int a = 0; a < 3; a++)
        cum[i][a] = cum[i - 1][a] + 0.5 * (tau[i] - tau[i - 1]) * (fb0[i][a] + fb0[i - 1][a]);
  }
  /* Pairs over the first 20 s of overlapping frames: long enough to see varied accelerations,
   * short enough that an uncorrected gyro bias rotates the chain little. */
  size_t m = 0, cap = cam->n;
  double (*A)[3] = malloc(sizeof *A * (cap ? cap : 1));
  double (*F)[3] = malloc(sizeof *F * (cap ? cap : 1));
  double *res = malloc(sizeof *res * (cap ? cap : 1));
  unsigned char *use = malloc(cap ? cap : 1);
  if (!A || !F || !res || !use) {
    free(fb0); free(cum); free(A); free(F); free(res); free(use);
    return AW_ERR_NO_MEMORY;
  }
  double h = 0.5 * cam->fit_half_s, t_first = NAN;
  size_t hint = 0;
  for (size_t k = 0; k < cam->n; k++) {
    if (!cam->acc_ok[k]) continue;
    double tk = cam->t_s[k];
    if (n_ok < 2 || tk + h > tau[n_ok - 1]) continue;
    if (!isnan(t_first) && tk > t_first + 20.0) break;
    double fm[3];
    if (!aw_fusion_box_mean(tau, cum, fb0, n_ok,
                            tk - h, tk + h, &hint, fm))
      continue;
    if (isnan(t_first)) t_first = tk;
    aw_v3_copy(A[m], cam->acc_m_s2[k]);
    aw_v3_copy(F[m], fm);
    use[m] = 1;
    m++;
  }
  free(fb0);
  free(cum);
  if (m < 10) {
    free(A); free(F); free(res); free(use);
    return aw_error_set(err, AW_ERR_TOO_FEW, "depth", 0, 0,
                        "only %zu camera frames overlap the IMU for the camera-to-gravity "
                        "calibration", m);
  }
  double gc[3];
  if (g_cam0 && isfinite(g_cam0[0])) aw_v3_copy(gc, g_cam0);
  else {
    /* No gravity from the sync stage: start from the centroid form of the problem. */
    double ac[3] = { 0 }, fc[3] = { 0 }, B[3][3] = { { 0 } };
    for (size_t i = 0; i < m; i++) { aw_v3_axpy(ac, 1.0 / (double)m, A[i]); aw_v3_axpy(fc, 1.0 / (double)m, F[i]); }
    for (size_t i = 0; i < m; i++)
      for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++) B[r][c] += (F[i][r] - fc[r]) * (A[i][c] - ac[c]);
    double q0[4], Rf[3];
    aw_fusion_wahba(B, q0);
    aw_quat_rotate(Rf, q0, fc);
    aw_v3_sub(gc, ac, Rf);
    double ng = aw_v3_norm(gc);
    if (ng > 0) aw_v3_scale(gc, gc, g / ng); else aw_v3_set(gc, 0, g, 0);
  }
  double qc[4] = { 1, 0, 0, 0 };
  for (int it = 0; it < 6; it++) {
    double B[3][3] = { { 0 } };
    for (size_t i = 0; i < m; i++) {
      if (!use[i]) continue;
      for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++) B[r][c] += F[i][r] * (A[i][c] - gc[c]);
    }
    aw_fusion_wahba(B, qc);
    double mg[3] = { 0 };
    size_t mu = 0;
    for (size_t i = 0; i < m; i++) {
      double Rf[3], r[3];
      aw_quat_rotate(Rf, qc, F[i]);
      aw_v3_sub(r, A[i], Rf);
      if (use[i]) { aw_v3_add(mg, mg, r); mu++; }
      double e[3];
      aw_v3_sub(e, r, gc);
      res[i] = aw_v3_norm(e);
    }
    aw_v3_scale(mg, mg, 1.0 / (double)(mu ? mu : 1));
    double ng = aw_v3_norm(mg);
    if (ng > 0.3 * g) aw_v3_scale(gc, mg, g / ng);
    if (it == 3) {
      /* Robust round: drop frames far beyond the typical residual. */
      double *tmp = malloc(sizeof *tmp * m);
      if (tmp) {
        memcpy(tmp, res, sizeof *tmp * m);
        /* median by partial selection sort is fine for a few hundred values; use nth via qsort */
        for (size_t a = 0; a <= m / 2; a++)
          for (size_t b = a + 1; b < m; b++)
            if (tmp[b] < tmp[a]) { double t = tmp[a]; tmp[a] = tmp[b]; tmp[b] = t; }
        double med = tmp[m / 2];
        free(tmp);
        for (size_t i = 0; i < m; i++) use[i] = res[i] <= 3.0 * med + 0.5;
      }
    }
  }
  double ss = 0;
  size_t mu = 0;
  for (size_t i = 0; i < m; i++) if (use[i]) { ss += res[i] * res[i]; mu++; }
  out->resid_rms_m_s2 = sqrt(ss / (double)(mu ? mu : 1));
  memcpy(out->q_cam_body0, qc, sizeof qc);
  aw_v3_copy(out->g_cam_m_s2, gc);
  free(A); free(F); free(res); free(use);
  (void)s;
  return AW_OK;
}
