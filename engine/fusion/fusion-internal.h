/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Internal interfaces between the stages of the fusion pipeline (not installed). */

#include <math.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>
#include <string.h>

#include "arcwise/fusion.h"
#include "arcwise/math3.h"

#define AW_CAM_MAX_SHAPES 16

/* Camera frames with their usability and a local-polynomial acceleration estimate. */
typedef struct {
  size_t n;
  const double *t_s;          /* depth clock (borrowed) */
  const double (*pos_m)[3];   /* borrowed */
  const double *conf;         /* borrowed */
  unsigned char *valid;       /* usable detection */
  unsigned char *acc_ok;      /* acceleration estimate available */
  double (*acc_m_s2)[3];      /* local quadratic fit, camera frame */
  size_t n_valid;
  double dt_nom_s;            /* median frame interval */
  double fit_half_s;          /* half-width of the local fit */
  /* The fit is linear in the positions: acc[k] = sum over j of wval * pos[widx], j in
   * wstart[k] .. wstart[k+1]; the sync applies the same weights to the IMU. */
  double noise_scale[2];      /* camera noise relative to the settings' model, from the data:
                                 lateral (x, y) and depth (z) measured apart */
  size_t *wstart;
  uint32_t *widx;
  double *wval;
  /* Operator shapes: frames whose fit taps sit (within a tenth of a frame interval) on the
   * nominal grid tk + j dt_nom share the weights of the same taps on the exact grid, so the
   * other side of a comparison can be tabulated once per shape instead of once per frame and
   * offset. shape[k] = index of frame k's shape, -1 when irregular (or no fit). Shape s has
   * taps shape_start[s] .. shape_start[s + 1] of shape_u (s, relative to the frame) and
   * shape_w (same role as wval); shape_count[s] frames use it. */
  int *shape;
  size_t n_shape;
  size_t shape_start[AW_CAM_MAX_SHAPES + 1];
  size_t shape_count[AW_CAM_MAX_SHAPES];
  double *shape_u, *shape_w;
} AwCamPrep;

/* IMU samples with running integrals for box averages and per-sample quality flags. */
typedef struct {
  size_t n;
  const double *t_s;          /* IMU clock (borrowed) */
  const double (*f)[3];       /* specific force, body (borrowed) */
  const double (*w)[3];       /* angular rate, body (borrowed) */
  double (*cumf)[3];          /* trapezoid integral of f over t (t_s[0] = 0) */
  double dt_nom_s;            /* median interval */
  double t_jitter_s;          /* 1-sigma jitter of the stamps about a regular grid (0 = exact) */
  unsigned char *sat_acc;     /* sample has an accelerometer axis at full scale */
  unsigned char *sat_gyr;
  unsigned char *still;       /* inside a still window */
  double acc_range, gyr_range;
  double accel_noise_meas, gyro_noise_meas;  /* white-noise densities measured when still (0 = none) */
  double (*f_own)[3], (*w_own)[3];  /* copies with clipped runs reconstructed (f, w point here) */
  /* 1-sigma error of a clipped run's reconstruction per sample and body axis (m/s2, rad/s),
   * white over the run's steps (prep.c declip); 0 where the axis read true. */
  float (*acc_clip_sigma)[3], (*gyr_clip_sigma)[3];
} AwImuPrep;

AwStatus aw_fusion_prep_cam(const AwDepthStream *d, const AwFusionSettings *s, AwCamPrep *out);
void aw_fusion_prep_cam_free(AwCamPrep *c);
AwStatus aw_fusion_prep_imu(const AwImuStream *imu, const AwFusionSettings *s, double g,
                            AwImuPrep *out);
void aw_fusion_prep_imu_free(AwImuPrep *m);

/* Knots of a table on the sample times t[0..n) (n >= 2): every kdec-th sample, kdec chosen
 * for knots about h_s apart (at least 1), and the last sample; nk of them. */
void aw_fusion_knots(const double *t, size_t n, double h_s, size_t *kdec, size_t *nk);
/* Sample index of knot j. */
static inline size_t
aw_fusion_knot(size_t j, size_t kdec, size_t nk, size_t n)
{
  return j + 1 < nk ? j * kdec : n - 1;
}

/* Cubic Hermite interpolation at r in [0, 1] of an interval of length h between values y0, y1
 * with time derivatives d0, d1. */
static inline void
aw_fusion_hermite(const double y0[3], const double d0[3], const double y1[3], const double d1[3],
                  double r, double h, double out[3])
{
  double r2 = r * r, r3 = r2 * r;
  double h00 = 2 * r3 - 3 * r2 + 1, h10 = (r3 - 2 * r2 + r) * h, h01 = 3 * r2 - 2 * r3,
         h11 = (r3 - r2) * h;
  for (int a = 0; a < 3; a++) out[a] = h00 * y0[a] + h10 * d0[a] + h01 * y1[a] + h11 * d1[a];
}

/* A camera-fit operator shape applied to the double integral p of a specific force f
 * (running integral v) on the sample times t, at the knots (kdec, nk as from aw_fusion_knots;
 * kdec 1, nk n for every sample): out[j] = sum over taps of w * p(t[i] + u) with i the knot's
 * sample, p cubic between samples (exact for f linear between samples), and dout[j] (unless
 * NULL) its time derivative, the same on v. ok[j] = 0 where a tap falls outside t's span.
 * O(nk * taps) for monotone t. */
void aw_fusion_shape_table(const AwCamPrep *cam, size_t shape, const double *t, size_t n,
                           const double (*f)[3], const double (*v)[3], const double (*p)[3],
                           size_t kdec, size_t nk, double (*out)[3], double (*dout)[3],
                           unsigned char *ok);

/* Mean of a per-sample vector signal with running integral cum over [t0, t1] of the clock t;
 * hint speeds up monotone queries. Returns false outside the samples' span. */
bool aw_fusion_box_mean(const double *t, const void *cum_v, const void *x_v, size_t n,
                        double t0, double t1, size_t *hint, double out[3]);
/* Index of the last sample with t[i] <= x (0 if x < t[0]); hint as above. Inline: the stages
 * call it once per tap and camera frame, tens of thousands of times per fuse, mostly for a
 * short walk from the hint. */
static inline size_t
aw_fusion_locate(const double *t, size_t n, double x, size_t *hint)
{
  if (n == 0 || x < t[0]) return 0;
  if (x >= t[n - 1]) return n - 1;
  size_t i = hint ? *hint : 0;
  if (i >= n) i = n - 1;
  /* Short walks from the hint for monotone queries, bisection otherwise. */
  if (t[i] <= x && (i + 1 >= n || t[i + 1] > x)) goto done;
  if (t[i] <= x && i + 8 < n && t[i + 8] > x) {
    while (t[i + 1] <= x) i++;
    goto done;
  }
  /* and backwards (overlapping windows of successive queries start a little earlier) */
  if (t[i] > x && i >= 8 && t[i - 8] <= x) {
    while (t[i] > x) i--;
    goto done;
  }
  {
    size_t lo = 0, hi = n - 1;
    while (hi - lo > 1) {
      size_t mid = lo + (hi - lo) / 2;
      if (t[mid] <= x) lo = mid; else hi = mid;
    }
    i = lo;
  }
done:
  if (hint) *hint = i;
  return i;
}
/* The interval of t holding x: aw_fusion_locate's index clamped to n - 2 (n >= 2), the same
 * value whatever the hint. For queries that move forwards with their hint (a shape table's tap
 * from knot to knot, a score's frames in time order) it walks on from the hint without the
 * general search's checks, a step or a few; anything else goes to aw_fusion_locate. */
static inline size_t
aw_fusion_interval(const double *t, size_t n, double x, size_t *hint)
{
  size_t i = *hint;
  if (i <= n - 2 && t[i] <= x && x < t[n - 1]) {
    while (t[i + 1] <= x) i++;   /* stops at n - 2 at the latest: x < t[n - 1] */
  } else {
    i = aw_fusion_locate(t, n, x, hint);
    if (i + 1 >= n) i = n - 2;
  }
  *hint = i;
  return i;
}
/* p at u into the interval i of length dt (p cubic between samples, exact for f linear
 * between them; v the running integral of f, p that of v). */
static inline void
aw_fusion_cubic_at(const double (*f)[3], const double (*v)[3], const double (*p)[3], size_t i,
                   double u, double dt, double out[3])
{
  for (int a = 0; a < 3; a++) {
    double f0 = f[i][a], f1 = f[i + 1][a];
    out[a] = p[i][a] + u * v[i][a] + 0.5 * u * u * f0 + u * u * u * (f1 - f0) / (6 * dt);
  }
}
/* p at time x as above (hint as for aw_fusion_interval); x inside t's span. */
static inline void
aw_fusion_pos_at(const double *t, size_t n, const double (*f)[3], const double (*v)[3],
                 const double (*p)[3], double x, size_t *hint, double out[3])
{
  size_t i = aw_fusion_interval(t, n, x, hint);
  aw_fusion_cubic_at(f, v, p, i, x - t[i], t[i + 1] - t[i], out);
}
/* The k-th smallest of v[0..n) (k < n, counted from 0): the value a sort would put at v[k], for
 * medians without sorting (v is reordered). Average O(n). */
double aw_fusion_kth(double *v, size_t n, size_t k);

/* Stage 1: clock offset and drift. Also returns a first estimate of gravity in the camera frame
 * (m/s^2, pointing down). */
AwStatus aw_fusion_sync_run(const AwImuPrep *imu, const AwCamPrep *cam,
                            const AwFusionSettings *s, double g, AwFusionReport *rep,
                            double g_cam_out[3], AwError *err);

/* Stage 2: camera <- initial body rotation and gravity in the camera frame by a Wahba solution
 * on time-aligned accelerations, with the gyro bias from still periods. tau[i] is IMU sample i
 * on the depth clock. */
typedef struct {
  double q_cam_body0[4];
  double g_cam_m_s2[3];
  double gyro_bias_rad_s[3];
  bool still_found;
  double resid_rms_m_s2;      /* rms of the Wahba fit residual */
  double gravity_fit_sigma_m_s2; /* standard error of the fitted gravity per axis (noise only) */
  double clock_shift_s;       /* refinement of the clock offset found here (add to it) */
  double clock_sigma_s;       /* sigma_t: 1-sigma of the clock offset after that refinement,
                                 from the curvature of the vector-fit cost at its minimum with
                                 one independent residual per camera fit window; 0 = the
                                 refinement did not run (then the sync's sigma stands) */
  double clock_drift;         /* refinement of the drift: the shift at depth time t is
                                 clock_shift_s + clock_drift (t - clock_ref_s); 0 on recordings
                                 under a minute (or when the windows disagree) */
  double clock_ref_s;         /* depth time at which clock_shift_s holds */
  double clock_drift_sigma;   /* 1-sigma of clock_drift (posterior, with the prior); NAN when
                                 the drift was not estimated */
  double lever_body_m[3];     /* keypoint relative to the IMU from the joint solution */
  bool have_joint;
} AwCalib;
AwStatus aw_fusion_calibrate(const AwImuPrep *imu, const double *tau, const AwCamPrep *cam,
                             const AwFusionSettings *s, double g, const double g_cam0[3],
                             AwCalib *out, AwError *err);

/* Wahba's problem by Horn's quaternion method: q rotating b into a minimising
 * sum w_i |a_i - R b_i|^2, from B = sum w_i b_i a_i^T (B[r][c] = sum b_r a_c). */
void aw_fusion_wahba(double B[3][3], double q_out[4]);

/* Determinant of a 3 x 3 matrix by the first row's cofactors. */
static inline double
aw_fusion_det3(const double A[3][3])
{
  return A[0][0] * (A[1][1] * A[2][2] - A[1][2] * A[2][1]) -
         A[0][1] * (A[1][0] * A[2][2] - A[1][2] * A[2][0]) +
         A[0][2] * (A[1][0] * A[2][1] - A[1][1] * A[2][0]);
}

/* x = A^-1 b by Cramer's rule, det = aw_fusion_det3(A) (non-zero). */
static inline void
aw_fusion_cramer3(const double A[3][3], const double b[3], double det, double x[3])
{
  for (int col = 0; col < 3; col++) {
    double M[3][3];
    memcpy(M, A, sizeof M);
    for (int r = 0; r < 3; r++) M[r][col] = b[r];
    x[col] = aw_fusion_det3((const double (*)[3])M) / det;
  }
}

/* The camera-to-gravity rotation (q_cam_grav, w first) from gravity g_cam (camera frame) of
 * magnitude g_norm: the gravity frame's z up (against g), its x the camera's x made level. */
static inline void
aw_fusion_q_cam_grav(const double g_cam[3], double g_norm, double q[4])
{
  double up[3], ex[3] = { 1, 0, 0 }, xg[3], yg[3], Rg[3][3];
  aw_v3_scale(up, g_cam, -1.0 / g_norm);
  double dd = aw_v3_dot(ex, up);
  for (int a = 0; a < 3; a++) xg[a] = ex[a] - dd * up[a];
  aw_v3_normalize(xg, xg);
  aw_v3_cross(yg, up, xg);
  for (int a = 0; a < 3; a++) { Rg[a][0] = xg[a]; Rg[a][1] = yg[a]; Rg[a][2] = up[a]; }
  aw_mat_to_quat(q, (const double (*)[3])Rg);
}

/* A camera frame's confidence read as the prior probability p that it shows the keypoint,
 * against a wrong detection (a body part mistaken for the wrist, an occluded wrist pulled
 * toward the chest) scattered about the true keypoint with sigma_c per axis
 * (cam_outlier_sigma_m): with the innovation y of covariance S if the frame is right, S + C
 * (C = sigma_c^2 I) if it is wrong, the frame is more likely wrong where
 *   p N(y; 0, S) < (1 - p) N(y; 0, S + C),
 *   y' S^-1 y - y' (S + C)^-1 y > 2 ln(p / (1 - p)) + ln det(S + C) - ln det S
 * (a two-hypothesis validation test in the manner of probabilistic data association;
 * Bar-Shalom, Daum & Huang, IEEE Control Systems 29(6), 2009). With S of a few centimetres
 * the bound lies beyond the chi-square gate and changes nothing; it bites where the filter's
 * own uncertainty has grown toward sigma_c (a clipped downswing behind an occlusion), where a
 * snapped low-confidence detection would otherwise pass a gate the uncertainty has widened.
 * Where S grows far beyond sigma_c (after a gap in the IMU) both hypotheses look alike and the
 * confidence alone decides (p < 1/2 is refused). nis: y' S^-1 y. Confidence 1 or sigma_c 0:
 * never wrong; confidence 0: always. */
static inline bool
aw_fusion_frame_wrong(double conf, double sigma_c, const double y[3], const double S[3][3],
                      double nis)
{
  if (!(sigma_c > 0) || !(conf < 1)) return false;
  if (!(conf > 0)) return true;
  double T[3][3], z[3];
  memcpy(T, S, sizeof T);
  for (int a = 0; a < 3; a++) T[a][a] += sigma_c * sigma_c;
  double det_s = aw_fusion_det3(S), det_t = aw_fusion_det3((const double (*)[3])T);
  if (!(det_s > 0) || !(det_t > 0)) return false;
  aw_fusion_cramer3((const double (*)[3])T, y, det_t, z);
  double q = y[0] * z[0] + y[1] * z[1] + y[2] * z[2];
  return nis - q > 2 * log(conf / (1 - conf)) + log(det_t) - log(det_s);
}

/* Stage 3+4: error-state Kalman filter and smoother, writing into path (allocated, n = imu->n). */
AwStatus aw_fusion_eskf_run(const AwImuPrep *imu, const double *tau, const AwCamPrep *cam,
                            const AwFusionSettings *s, double g, const AwCalib *cal,
                            AwFusedPath *path, AwError *err);
/* The same with error states held at zero (no prior uncertainty, no process noise): a known
 * attitude (attitude and gyro bias; the IMU's rotation is then taken as exact) or a known clock
 * offset. With both, a fixed attitude and camera frames on IMU sample times the filter is
 * linear-Gaussian, which is what tests/fusion/test-eskf-reference.py checks it on. */
enum { AW_ESKF_FREEZE_ATTITUDE = 1u << 0, AW_ESKF_FREEZE_CLOCK = 1u << 1,
       AW_ESKF_FREEZE_LEVER = 1u << 2 };
/* The lever arm the filter starts from: the settings' when measured, else the calibration's
 * joint estimate (when it ran and the prior is wide), else none. */
void aw_fusion_eskf_lever0(const AwFusionSettings *s, const AwCalib *cal, double l0[3]);
AwStatus aw_fusion_eskf_run_ext(const AwImuPrep *imu, const double *tau, const AwCamPrep *cam,
                                const AwFusionSettings *s, double g, const AwCalib *cal,
                                unsigned freeze, AwFusedPath *path, AwError *err);
/* The two builds of eskf.c behind aw_fusion_eskf_run_ext (eskf-dispatch.c): the baseline
 * instruction set, and AVX2 where the build has it (AW_HAVE_ESKF_AVX2); bit-identical. */
AwStatus aw_fusion_eskf_run_ext_generic(const AwImuPrep *imu, const double *tau,
                                        const AwCamPrep *cam, const AwFusionSettings *s, double g,
                                        const AwCalib *cal, unsigned freeze, AwFusedPath *path,
                                        AwError *err);
AwStatus aw_fusion_eskf_run_ext_avx2(const AwImuPrep *imu, const double *tau,
                                     const AwCamPrep *cam, const AwFusionSettings *s, double g,
                                     const AwCalib *cal, unsigned freeze, AwFusedPath *path,
                                     AwError *err);
/* Whether aw_fusion_eskf_run_ext runs the AVX2 build (built, the processor has it, and it is
 * not turned off with aw_fusion_eskf_force_generic, the hook for tests and profiling). */
bool aw_fusion_eskf_uses_avx2(void);
void aw_fusion_eskf_force_generic(bool on);

/* Camera-only smoother with a white-jerk motion model on the IMU grid tau: smoothed keypoint
 * position, velocity and sigma; per-sample gating status of frames. jerk_psd <= 0: estimated
 * by maximum likelihood from the frames. Outputs may be NULL. */
AwStatus aw_fusion_camonly_run(const AwCamPrep *cam, const double *tau, size_t n,
                               const AwFusionSettings *s, double *jerk_psd_inout,
                               double (*pos)[3], double (*vel)[3], double (*sig)[3],
                               double *nis_mean, size_t *rejected, size_t *recoveries);
