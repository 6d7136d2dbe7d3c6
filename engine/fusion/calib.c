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

#include "arcwise/eig.h"
#include "arcwise/math3.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Eigenvector of the largest eigenvalue of a symmetric 4x4 matrix (arcwise/eig.h). */
static void
eig4_max(double A[4][4], double v_out[4])
{
  double w[4], V[4][4];
  if (!aw_sym_eigen(4, &A[0][0], w, &V[0][0])) {
    /* Non-finite input: a non-finite answer, which the caller's checks reject. */
    v_out[0] = v_out[1] = v_out[2] = v_out[3] = (double)NAN;
    return;
  }
  for (int k = 0; k < 4; k++)
    v_out[k] = V[k][3];
}

static double
det3(double a, double b, double c, double d, double e, double f, double g, double h, double i)
{
  return a * (e * i - f * h) - b * (d * i - f * g) + c * (d * h - e * g);
}

/* Largest eigenvalue of Horn's key matrix N (symmetric, traceless) and its eigenvector by the
 * characteristic polynomial: D. L. Theobald, "Rapid calculation of RMSDs using a
 * quaternion-based characteristic polynomial", Acta Cryst. A61:478-480 (2005): P(x) = x^4 +
 * c2 x^2 + c1 x + c0 with c2 = -2 |S|_F^2, c1 = -8 det S, c0 = det N; Newton from above the
 * largest root (sum of singular values <= sqrt(3) |S|_F) descends monotonically to it, as P is
 * convex there. The eigenvector is the largest column of adj(N - x I). False when the
 * eigenvalue is (nearly) repeated: the caller falls back to the general solver. */
static bool
horn_fast(const double N[4][4], const double B[3][3], double *lambda, double q[4])
{
  double f2 = 0;
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) f2 += B[r][c] * B[r][c];
  if (!(f2 > 0) || !isfinite(f2)) return false;
  double c2 = -2 * f2;
  double c1 = -8 * det3(B[0][0], B[0][1], B[0][2], B[1][0], B[1][1], B[1][2], B[2][0], B[2][1], B[2][2]);
  /* det N by 2x2 minors of the first two rows and the last two */
  double s0 = N[0][0] * N[1][1] - N[0][1] * N[1][0], s1 = N[0][0] * N[1][2] - N[0][2] * N[1][0];
  double s2 = N[0][0] * N[1][3] - N[0][3] * N[1][0], s3 = N[0][1] * N[1][2] - N[0][2] * N[1][1];
  double s4 = N[0][1] * N[1][3] - N[0][3] * N[1][1], s5 = N[0][2] * N[1][3] - N[0][3] * N[1][2];
  double k5 = N[2][2] * N[3][3] - N[2][3] * N[3][2], k4 = N[2][1] * N[3][3] - N[2][3] * N[3][1];
  double k3 = N[2][1] * N[3][2] - N[2][2] * N[3][1], k2 = N[2][0] * N[3][3] - N[2][3] * N[3][0];
  double k1 = N[2][0] * N[3][2] - N[2][2] * N[3][0], k0 = N[2][0] * N[3][1] - N[2][1] * N[3][0];
  double c0 = s0 * k5 - s1 * k4 + s2 * k3 + s3 * k2 - s4 * k1 + s5 * k0;
  double x = sqrt(3 * f2) * (1 + 1e-12);
  for (int it = 0; it < 60; it++) {
    double x2 = x * x, P = (x2 + c2) * x2 + c1 * x + c0, dP = 4 * x2 * x + 2 * c2 * x + c1;
    if (!(dP > 0)) break;
    double dx = P / dP;
    x -= dx;
    if (fabs(dx) <= 1e-14 * fabs(x) + 1e-300) break;
  }
  double M[4][4];
  memcpy(M, N, sizeof M);
  for (int k = 0; k < 4; k++) M[k][k] -= x;
  /* adjugate columns: cofactors of M (symmetric, so rows = columns); other[i]: the indices
   * but i, in order */
  static const int other[4][3] = { { 1, 2, 3 }, { 0, 2, 3 }, { 0, 1, 3 }, { 0, 1, 2 } };
  double best = 0, v[4] = { 0 };
  for (int col = 0; col < 4; col++) {
    double cv[4];
    for (int row = 0; row < 4; row++) {
      const int *r = other[row], *c = other[col];
      double d = det3(M[r[0]][c[0]], M[r[0]][c[1]], M[r[0]][c[2]], M[r[1]][c[0]], M[r[1]][c[1]],
                      M[r[1]][c[2]], M[r[2]][c[0]], M[r[2]][c[1]], M[r[2]][c[2]]);
      cv[row] = ((row + col) & 1) ? -d : d;
    }
    double nn = cv[0] * cv[0] + cv[1] * cv[1] + cv[2] * cv[2] + cv[3] * cv[3];
    if (nn > best) { best = nn; memcpy(v, cv, sizeof v); }
  }
  /* |adj| ~ product of the gaps to the other eigenvalues: tiny when the largest is repeated */
  double scale = f2 * sqrt(f2);   /* ~ |S|^3 */
  if (!(best > 1e-16 * scale * scale) || !isfinite(best)) return false;
  double nv = sqrt(best);
  for (int k = 0; k < 4; k++) q[k] = v[k] / nv;
  *lambda = x;
  return true;
}

/* B. K. P. Horn, "Closed-form solution of absolute orientation using unit quaternions",
 * J. Opt. Soc. Am. A 4(4):629-642 (1987): the symmetric 4x4 matrix N built from S = sum b a^T,
 * whose eigenvector of the largest eigenvalue is the best rotation's quaternion. */
static void
horn_matrix(const double B[3][3], double N[4][4])
{
  double Sxx = B[0][0], Sxy = B[0][1], Sxz = B[0][2];
  double Syx = B[1][0], Syy = B[1][1], Syz = B[1][2];
  double Szx = B[2][0], Szy = B[2][1], Szz = B[2][2];
  const double M[4][4] = {
    { Sxx + Syy + Szz, Syz - Szy, Szx - Sxz, Sxy - Syx },
    { Syz - Szy, Sxx - Syy - Szz, Sxy + Syx, Szx + Sxz },
    { Szx - Sxz, Sxy + Syx, -Sxx + Syy - Szz, Syz + Szy },
    { Sxy - Syx, Szx + Sxz, Syz + Szy, -Sxx - Syy + Szz },
  };
  memcpy(N, M, sizeof M);
}

void
aw_fusion_wahba(double B[3][3], double q[4])
{
  double N[4][4];
  horn_matrix((const double (*)[3])B, N);
  double lam;
  if (!horn_fast((const double (*)[4])N, (const double (*)[3])B, &lam, q)) eig4_max(N, q);
  if (q[0] < 0) for (int k = 0; k < 4; k++) q[k] = -q[k];
  aw_quat_normalize(q);
}

/* The joint fit's operators (F, M and whether they are defined, per entry of the frames) at
 * the last W_MEMO shifts it was evaluated at: the re-trimming fits and the final solution come
 * back to the shift the steps ended on, and the clock's sigma counts the frames at one. */
/* The moments of the joint fit's frame set (w_resid_n): means of a, F, M and the centred sums;
 * N0 = S(M^T M), the lever's normal matrix. */
typedef struct {
  double ac[3], Fb[3], Mb[3][3], Saa, SFF, SFa[3][3], T[3][3][3], P[3], Q[3][3], MM[3][3], N0[3][3];
} WMoments;

enum { W_MEMO = 4 };
typedef struct {
  double shift[W_MEMO];
  size_t n_put;           /* slots filled so far (the oldest is replaced next) */
  double (*F)[3];         /* W_MEMO x m */
  double (*M)[3][3];
  unsigned char *def;
  /* per slot, the moments of the last two frame sets fitted there (w_moments_at) */
  WMoments *mom;          /* W_MEMO x 2 */
  unsigned char *mset;    /* W_MEMO x 2 x m: those sets */
  int n_mom[W_MEMO];
} WMemo;

/* Spacing of the shape tables' knots (w_tables). */
#define W_KNOT_S 0.02

/* One camera frame's time minus a shift on the IMU side (w_tap). */
typedef struct {
  double at, at_R;        /* shift p and R hold (NaN = none) */
  double p[3];            /* double integral of f_b0 */
  double R[3][3];         /* R_b0_body, interpolated */
  bool in;                /* inside tau's span */
} WTap;

/* Camera-fit operator applied to the double integral of f_b0 (exact for f linear between
 * samples), so both sides of a_cam = R f_b0 + g pass through the same linear filter. */
typedef struct {
  const double *tau;
  const double (*fb0)[3], (*vb0)[3], (*pb0)[3];
  const double (*qb0)[4];   /* attitude of the body relative to its first sample */
  const double (*Rb0)[3][3];  /* the same as rotation matrices */
  size_t n;
  const AwCamPrep *cam;
  const size_t *frames;   /* camera frames used */
  size_t m;
  double lever_sigma;     /* prior 1-sigma of the lever arm */
  /* Per operator shape (prep.c): the fit operator on the double integral (ftab) and on the
   * rotation (mtab) at the knots (w_knot: every kdec-th sample of tau and the last), NaN where
   * a tap falls outside; NULL = evaluate the shape's frames one by one. */
  size_t kdec, nk;
  double (*ftab[AW_CAM_MAX_SHAPES])[3];
  double (*dftab[AW_CAM_MAX_SHAPES])[3];   /* the operator on the running integral: d ftab / dt */
  /* The rotation's entries are filled when first read (w_mtab): only the joint fit reads them,
   * at the few shifts around its minimum, so most knots never need one. mdone: filled. */
  double (*mtab[AW_CAM_MAX_SHAPES])[3][3];
  unsigned char *mdone[AW_CAM_MAX_SHAPES];
  /* Fixed inlier set (per entry of frames; NULL = trim inside each fit): with it the cost is
   * continuous in the shift. keep_out (if set) receives the set a trimming fit ends with. */
  const unsigned char *keep;
  unsigned char *keep_out;
  WMemo *memo;            /* for w_ops; valid for these frames only (NULL elsewhere) */
  WTap *taps;             /* per camera frame, for w_tap */
} WCtx;

/* Sample of tau at table knot j. */
static inline size_t
w_knot(const WCtx *w, size_t j)
{
  return aw_fusion_knot(j, w->kdec, w->nk, w->n);
}

/* Tables of the shapes enough frames share to repay them (a table costs one operator per
 * knot; a frame alone costs one per shift tried, ~80). The knots are about W_KNOT_S apart:
 * the operator is a second derivative fitted over >= 0.4 s, so its output holds little
 * above a few hertz, and the cubic Hermite interpolation on values and derivatives between
 * knots (w_imu_acc) is good to (2 pi f h)^4 / 384: 5e-5 of it at 3 Hz, 4e-4 at 5 Hz. (At
 * 40 ms, 1e-3 and 7e-3, one hard swing of the development seeds 5000 came out 1.3 ms further
 * off in its clock; at 20 ms none moves beyond the printed digits against per-sample tables.) */
static void
w_tables(WCtx *w)
{
  const AwCamPrep *cam = w->cam;
  aw_fusion_knots(w->tau, w->n, W_KNOT_S, &w->kdec, &w->nk);
  size_t *use = calloc(AW_CAM_MAX_SHAPES, sizeof *use);
  unsigned char *ok = malloc(w->n ? w->n : 1);
  if (!use || !ok) { free(use); free(ok); return; }
  for (size_t j = 0; j < w->m; j++) {
    int sh = cam->shape ? cam->shape[w->frames[j]] : -1;
    if (sh >= 0) use[sh]++;
  }
  for (size_t sh = 0; sh < cam->n_shape; sh++) {
    if (use[sh] * 80 < w->n || w->n < 2) continue;
    double (*ft)[3] = malloc(sizeof *ft * w->nk);
    double (*dft)[3] = malloc(sizeof *dft * w->nk);
    double (*mt)[3][3] = malloc(sizeof *mt * w->nk);
    unsigned char *md = calloc(w->nk, 1);
    if (!ft || !dft || !mt || !md) { free(ft); free(dft); free(mt); free(md); continue; }
    aw_fusion_shape_table(cam, sh, w->tau, w->n, w->fb0, w->vb0, w->pb0, w->kdec, w->nk, ft, dft, ok);
    for (size_t j = 0; j < w->nk; j++)
      if (!ok[j]) {
        memset(dft[j], 0, sizeof dft[j]);
        ft[j][0] = ft[j][1] = ft[j][2] = (double)NAN;
      }
    w->ftab[sh] = ft;
    w->dftab[sh] = dft;
    w->mtab[sh] = mt;
    w->mdone[sh] = md;
  }
  free(use);
  free(ok);
}

/* R_b0_body at r in [0, 1] of tau's interval i: the rotation matrices of the samples
 * interpolated linearly (the lever term's rotation: the lever is centimetres, so second-order
 * errors in a 10 ms step's rotation are far below the camera's acceleration noise). */
static inline void
w_rot_at(const WCtx *w, size_t i, double r, double out[3][3])
{
  for (int a = 0; a < 3; a++)
    for (int c = 0; c < 3; c++) out[a][c] = (1 - r) * w->Rb0[i][a][c] + r * w->Rb0[i + 1][a][c];
}

/* Knot j of shape sh's rotation table (j inside the span where ftab is defined): the fit
 * operator on R_b0_body(t) (w_rot_at). Between knots the table is interpolated linearly: the
 * operator's output (a second derivative of the rotation over >= 0.4 s, up to ~1000 s^-2 in a
 * downswing) moves by a few hertz, so the error is (pi f h)^2 / 8, about 0.4 % at 20 ms:
 * ~0.05 m/s^2 times the lever in units of 3 cm, below the camera's acceleration noise. */
static const double (*w_mtab(const WCtx *w, size_t sh, size_t j))[3]
{
  double (*mt)[3] = w->mtab[sh][j];
  if (w->mdone[sh][j]) return (const double (*)[3])mt;
  size_t i = w_knot(w, j);
  const AwCamPrep *cam = w->cam;
  double ma[3][3] = { { 0 } };   /* sums in locals */
  size_t q0 = cam->shape_start[sh];
  /* the first tap's sample from the mean interval (aw_fusion_interval walks the rest of the way;
   * the later taps walk on from the one before) */
  double di = cam->shape_u[q0] * (double)(w->n - 1) / (w->tau[w->n - 1] - w->tau[0]);
  size_t hint = di <= -(double)i ? 0 : (size_t)((double)i + di);
  for (size_t q = q0; q < cam->shape_start[sh + 1]; q++) {
    double t = w->tau[i] + cam->shape_u[q];
    size_t a0 = aw_fusion_interval(w->tau, w->n, t, &hint);
    double dt = w->tau[a0 + 1] - w->tau[a0], u = t - w->tau[a0];
    double wq = cam->shape_w[q], Rq[3][3];
    w_rot_at(w, a0, u / dt, Rq);
    for (int a = 0; a < 3; a++)
      for (int c = 0; c < 3; c++) ma[a][c] += wq * Rq[a][c];
  }
  memcpy(mt, ma, sizeof ma);
  w->mdone[sh][j] = 1;
  return (const double (*)[3])mt;
}

static void
w_tables_free(WCtx *w)
{
  for (size_t sh = 0; sh < AW_CAM_MAX_SHAPES; sh++) {
    free(w->ftab[sh]); free(w->dftab[sh]); free(w->mtab[sh]); free(w->mdone[sh]);
  }
}

/* The IMU side at camera frame j's time minus a shift, for the operators evaluated tap by tap:
 * the double integral of f_b0 there and (with_R) the rotation, computed into the frame's entry
 * in w->taps (w_tap reads it while it holds this shift: a frame is a tap of the dozen
 * operators around it, all evaluated at the same shift one after the other). NULL when the
 * time falls outside tau. */
static const WTap *
w_tap_fill(const WCtx *w, size_t j, double shift, size_t *hint, bool with_R)
{
  WTap *tp = &w->taps[j];
  double t = w->cam->t_s[j] - shift;
  tp->at = shift;
  tp->at_R = NAN;
  tp->in = !(t < w->tau[0] || t > w->tau[w->n - 1]);
  if (!tp->in) return NULL;
  size_t i = aw_fusion_interval(w->tau, w->n, t, hint);
  double dt = w->tau[i + 1] - w->tau[i], u = t - w->tau[i];
  aw_fusion_cubic_at(w->fb0, w->vb0, w->pb0, i, u, dt, tp->p);
  /* the lever term's rotation */
  if (with_R) {
    w_rot_at(w, i, u / dt, tp->R);
    tp->at_R = shift;
  }
  return tp;
}

/* w_tap_fill's entry when it holds the shift (most calls: inline) */
static inline const WTap *
w_tap(const WCtx *w, size_t j, double shift, size_t *hint, bool with_R)
{
  const WTap *tp = &w->taps[j];
  if (tp->at == shift && (!with_R || tp->at_R == shift)) return tp->in ? tp : NULL;
  return w_tap_fill(w, j, shift, hint, with_R);
}

/* Whether frame k's operator has a shape table. */
static bool
w_tabled(const WCtx *w, size_t k)
{
  int sh = w->cam->shape ? w->cam->shape[k] : -1;
  return sh >= 0 && w->ftab[sh];
}

static bool
w_imu_acc(const WCtx *w, size_t k, double shift, size_t *hint, double out[3], double M[3][3])
{
  const AwCamPrep *cam = w->cam;
  int sh = cam->shape ? cam->shape[k] : -1;
  if (sh >= 0 && w->ftab[sh]) {
    /* tabulated: interpolation in the frame's time between the knots around it */
    double t = cam->t_s[k] - shift;
    if (t < w->tau[0] || t >= w->tau[w->n - 1]) return false;
    size_t s = aw_fusion_interval(w->tau, w->n, t, hint);   /* < n - 1: t < tau[n - 1] */
    size_t i = s / w->kdec;
    if (i + 2 > w->nk) i = w->nk - 2;
    double t0 = w->tau[w_knot(w, i)], h = w->tau[w_knot(w, i + 1)] - t0, r = (t - t0) / h;
    const double (*f0)[3] = (const double (*)[3])w->ftab[sh];
    const double (*d0)[3] = (const double (*)[3])w->dftab[sh];
    if (isnan(f0[i][0]) || isnan(f0[i + 1][0])) return false;
    /* cubic Hermite on the values and their time derivatives: smooth in the shift, so the
     * cost's minimum and curvature are not those of a piecewise-linear interpolant */
    aw_fusion_hermite(f0[i], d0[i], f0[i + 1], d0[i + 1], r, h, out);
    if (!M) return true;
    const double (*ma)[3] = w_mtab(w, (size_t)sh, i), (*mb)[3] = w_mtab(w, (size_t)sh, i + 1);
    for (int a = 0; a < 3; a++)
      for (int c = 0; c < 3; c++) M[a][c] = ma[a][c] + r * (mb[a][c] - ma[a][c]);
    return true;
  }
  /* sums in locals (the same additions in the same order), stored at the end */
  double oa[3] = { 0, 0, 0 }, ma[3][3] = { { 0 } };
  for (size_t q = cam->wstart[k]; q < cam->wstart[k + 1]; q++) {
    const WTap *tp = w_tap(w, cam->widx[q], shift, hint, M != NULL);
    if (!tp) return false;
    for (int a = 0; a < 3; a++) oa[a] += cam->wval[q] * tp->p[a];
    if (!M) continue;
    double wq = cam->wval[q];
    for (int a = 0; a < 3; a++)
      for (int c = 0; c < 3; c++) ma[a][c] += wq * tp->R[a][c];
  }
  memcpy(out, oa, sizeof oa);
  if (M) memcpy(M, ma, sizeof ma);
  return true;
}

/* F, M (the lever term) and their definedness for every entry of the frames at a shift, from
 * the memo or computed into its oldest slot. */
static size_t
w_ops(const WCtx *w, double shift, const double (**F)[3], const double (**M)[3][3],
      const unsigned char **def)
{
  WMemo *mo = w->memo;
  size_t nm = mo->n_put < W_MEMO ? mo->n_put : W_MEMO, slot = 0;
  while (slot < nm && mo->shift[slot] != shift) slot++;
  if (slot == nm) {
    slot = mo->n_put++ % W_MEMO;
    mo->shift[slot] = shift;
    mo->n_mom[slot] = 0;
    size_t hint = 0;
    for (size_t j = 0; j < w->m; j++)
      mo->def[slot * w->m + j] = w_imu_acc(w, w->frames[j], shift, &hint, mo->F[slot * w->m + j],
                                           mo->M[slot * w->m + j]);
  }
  *F = (const double (*)[3])mo->F + slot * w->m;
  *M = (const double (*)[3][3])mo->M + slot * w->m;
  *def = mo->def + slot * w->m;
  return slot;
}

/* Wahba's problem at a clock shift, with the lever arm l (body frame) solved alternately:
 * a_cam_k = R (F_k + M_k l) + g. Returns the residual rms.
 * Each round needs only sums over the frames in use, and those are moments of the set formed
 * once (and again after the trimming): with a~ = a - mean(a), F~ = F - mean(F) and
 * M~ = M - mean(M), the centred Wahba matrix is B = S(F~ a~) + sum_c l_c T[.][c][.] with
 * T[r][c][s] = S(M~[r][c] a~[s]); the residual sum is S|a~|^2 + S|F~ + M~ l|^2 - 2 tr(R B) (R
 * orthonormal); the normal equations' right side is sum_rs R[s][r] T[r][c][s] - S(M~^T F~) +
 * n mean(M)^T mean(M) l. Centred sums keep the cancellation small. */
static void
w_moments(const WCtx *w, const double (*F)[3], const double (*M)[3][3], const unsigned char *ok,
          size_t cnt, WMoments *out)
{
  /* sums in a local (kept in registers: the compiler cannot tell that out aliases no input) */
  WMoments m, *mo = &m;
  double n = (double)cnt;
  memset(mo->ac, 0, sizeof mo->ac); memset(mo->Fb, 0, sizeof mo->Fb); memset(mo->Mb, 0, sizeof mo->Mb);
  for (size_t j = 0; j < w->m; j++) {
    if (!ok[j]) continue;
    const double *a = w->cam->acc_m_s2[w->frames[j]];
    for (int r = 0; r < 3; r++) {
      mo->ac[r] += a[r];
      mo->Fb[r] += F[j][r];
      for (int c = 0; c < 3; c++) mo->Mb[r][c] += M[j][r][c];
    }
  }
  for (int r = 0; r < 3; r++) {
    mo->ac[r] /= n;
    mo->Fb[r] /= n;
    for (int c = 0; c < 3; c++) mo->Mb[r][c] /= n;
  }
  mo->Saa = 0; mo->SFF = 0;
  memset(mo->SFa, 0, sizeof mo->SFa); memset(mo->T, 0, sizeof mo->T); memset(mo->P, 0, sizeof mo->P);
  memset(mo->Q, 0, sizeof mo->Q);
  for (size_t j = 0; j < w->m; j++) {
    if (!ok[j]) continue;
    const double *a = w->cam->acc_m_s2[w->frames[j]];
    double at[3], ft[3], mt[3][3];
    for (int r = 0; r < 3; r++) {
      at[r] = a[r] - mo->ac[r];
      ft[r] = F[j][r] - mo->Fb[r];
      for (int c = 0; c < 3; c++) mt[r][c] = M[j][r][c] - mo->Mb[r][c];
    }
    for (int r = 0; r < 3; r++) {
      mo->Saa += at[r] * at[r];
      mo->SFF += ft[r] * ft[r];
      for (int s = 0; s < 3; s++) mo->SFa[r][s] += ft[r] * at[s];
      for (int c = 0; c < 3; c++) {
        mo->P[c] += mt[r][c] * ft[r];
        for (int s = 0; s < 3; s++) mo->T[r][c][s] += mt[r][c] * at[s];
        for (int k = c; k < 3; k++) mo->Q[c][k] += mt[r][c] * mt[r][k];
      }
    }
  }
  for (int c = 0; c < 3; c++)
    for (int k = c; k < 3; k++) {
      double s = 0;
      for (int r = 0; r < 3; r++) s += mo->Mb[r][c] * mo->Mb[r][k];
      mo->MM[c][k] = mo->MM[k][c] = n * s;
      mo->Q[k][c] = mo->Q[c][k];
      mo->N0[c][k] = mo->N0[k][c] = mo->Q[c][k] + mo->MM[c][k];
    }
  *out = m;
}

/* The moments of the set ok at the memo's slot (its shift): kept for the last two sets there
 * (the re-trimming fits come back to the shift the steps ended on with the set they trimmed
 * to), computed otherwise. */
static const WMoments *
w_moments_at(const WCtx *w, size_t slot, const double (*F)[3], const double (*M)[3][3],
             const unsigned char *ok, size_t cnt)
{
  WMemo *mo = w->memo;
  for (int e = 0; e < mo->n_mom[slot] && e < 2; e++)
    if (memcmp(mo->mset + (slot * 2 + (size_t)e) * w->m, ok, w->m) == 0) return &mo->mom[slot * 2 + (size_t)e];
  size_t e = mo->n_mom[slot]++ % 2, at = slot * 2 + e;
  memcpy(mo->mset + at * w->m, ok, w->m);
  w_moments(w, F, M, ok, cnt, &mo->mom[at]);
  return &mo->mom[at];
}

static double
w_resid_n(const WCtx *w, double shift, int iters, double q_out[4], double g_out[3], double l_out[3])
{
  const double (*F)[3], (*M)[3][3];
  const unsigned char *def;
  unsigned char *ok = malloc(w->m ? w->m : 1);
  if (!ok) return INFINITY;
  size_t slot = w_ops(w, shift, &F, &M, &def);
  size_t cnt = 0;
  for (size_t j = 0; j < w->m; j++) {
    ok[j] = def[j] && (!w->keep || w->keep[j]);
    cnt += ok[j];
  }
  if (cnt < 10) { free(ok); return INFINITY; }
  double l[3] = { 0, 0, 0 }, q[4] = { 1, 0, 0, 0 }, R[3][3], g[3] = { 0, 0, 0 }, rms = INFINITY;
  const WMoments *mo = NULL;   /* the set's moments (see above) */
  for (int it = 0; it < iters; it++) {
    if (!mo) mo = w_moments_at(w, slot, F, M, ok, cnt);
    double fc[3], B[3][3];
    aw_mat_mul_v3(fc, (const double (*)[3])mo->Mb, l);
    for (int r = 0; r < 3; r++) fc[r] += mo->Fb[r];
    for (int r = 0; r < 3; r++)
      for (int s = 0; s < 3; s++)
        B[r][s] = mo->SFa[r][s] + mo->T[r][0][s] * l[0] + mo->T[r][1][s] * l[1] + mo->T[r][2][s] * l[2];
    aw_fusion_wahba(B, q);
    aw_quat_to_mat(R, q);
    double Rf[3];
    aw_mat_mul_v3(Rf, (const double (*)[3])R, fc);
    aw_v3_sub(g, mo->ac, Rf);
    /* residual, and the normal equations for l: R^T (a - g) - F = M l */
    double N[3][3], bv[3], Ql[3], MMl[3], trRB = 0;
    memcpy(N, mo->N0, sizeof N);
    aw_mat_mul_v3(Ql, (const double (*)[3])mo->Q, l);
    aw_mat_mul_v3(MMl, (const double (*)[3])mo->MM, l);
    for (int c = 0; c < 3; c++) {
      double s = 0;
      for (int r = 0; r < 3; r++)
        for (int u = 0; u < 3; u++) s += R[u][r] * mo->T[r][c][u];
      bv[c] = s - mo->P[c] + MMl[c];
    }
    for (int r = 0; r < 3; r++)
      for (int u = 0; u < 3; u++) trRB += R[u][r] * B[r][u];
    double ss = mo->Saa + mo->SFF + 2 * aw_v3_dot(l, mo->P) + aw_v3_dot(l, Ql) - 2 * trRB;
    rms = sqrt(fmax(0.0, ss) / (double)cnt);
    if (it == 1 && cnt > 20 && !w->keep) {
      /* Trim frames far off the fit (snapped or mis-detected keypoints agree with their
       * neighbours, so the local fit keeps them; the rotation does not explain them). */
      double *e2 = malloc(sizeof *e2 * cnt), *ev = malloc(sizeof *ev * w->m);
      if (e2 && ev) {
        size_t c2 = 0;
        for (size_t j = 0; j < w->m; j++) {
          ev[j] = INFINITY;
          if (!ok[j]) continue;
          const double *a = w->cam->acc_m_s2[w->frames[j]];
          double d[3], fl[3], Rfl[3], e[3];
          aw_v3_sub(d, a, g);
          aw_mat_mul_v3(fl, (const double (*)[3])M[j], l);
          for (int c = 0; c < 3; c++) fl[c] += F[j][c];
          aw_mat_mul_v3(Rfl, (const double (*)[3])R, fl);
          for (int c = 0; c < 3; c++) e[c] = d[c] - Rfl[c];
          ev[j] = aw_v3_norm(e);
          e2[c2++] = ev[j];
        }
        double lim = 3.0 * aw_fusion_kth(e2, c2, c2 / 2) + 0.5;
        size_t kept = 0;
        for (size_t j = 0; j < w->m; j++) if (ok[j] && ev[j] <= lim) kept++;
        if (kept >= 10) {
          for (size_t j = 0; j < w->m; j++) if (ok[j] && ev[j] > lim) ok[j] = 0;
          cnt = kept;
          mo = NULL;
        }
      }
      free(e2);
      free(ev);
    }
    /* Prior toward zero: a lever arm is centimetres and motion without rotation cannot see it.
     * Weight = residual variance per frame / prior variance (a Gaussian prior in the same LS). */
    double rv = fmax(rms * rms, 0.25);
    for (int c = 0; c < 3; c++) N[c][c] += rv / (w->lever_sigma * w->lever_sigma);
    double det = aw_fusion_det3((const double (*)[3])N);
    if (!(fabs(det) > 0)) break;
    aw_fusion_cramer3((const double (*)[3])N, bv, det, l);
    double ln = aw_v3_norm(l);
    if (ln > 0.3) aw_v3_scale(l, l, 0.3 / ln);   /* beyond any watch-to-wrist distance */
  }
  if (w->keep_out) memcpy(w->keep_out, ok, w->m);
  if (q_out) memcpy(q_out, q, sizeof q);
  if (g_out) aw_v3_copy(g_out, g);
  if (l_out) aw_v3_copy(l_out, l);
  free(ok);
  return rms;
}

/* sigma_t from the cost's curvature (least squares: var = 2 s2 / J'' with J the sum of squared
 * residuals and s2 the residual variance per component), the curvature taken over +-h = 5 ms.
 * Residuals of frames inside one fit window share camera positions and IMU errors, so the
 * information counts one independent residual per window: the variance is inflated by the
 * frames per window. rm, r0, rp: residual rms at shift - h, shift, shift + h. */
static double
clock_sigma(const WCtx *w, const AwCamPrep *cam, double shift, double rm, double r0, double rp,
            double h)
{
  const double (*F)[3], (*M)[3][3];
  const unsigned char *def;
  w_ops(w, shift, &F, &M, &def);   /* the fit at this shift has just run: from the memo */
  size_t cnt = 0;
  for (size_t j = 0; j < w->m; j++) cnt += def[j] && (!w->keep || w->keep[j]);
  if (cnt < 10) return 0;
  /* J(s) = cnt rms(s)^2 */
  double d2 = (double)cnt * (rm * rm - 2 * r0 * r0 + rp * rp) / (h * h);
  double s2 = r0 * r0 / 3.0;   /* per component */
  double per_window = fmax(1.0, 2.0 * cam->fit_half_s / cam->dt_nom_s);
  if (!(d2 > 0) || !isfinite(d2)) return 0;
  return sqrt(2.0 * s2 / d2 * per_window);
}

/* Offset of the vertex of the parabola through (-1, ym), (0, y0), (1, yp), in [-1, 1]; 0 when
 * it opens downwards or the values are not finite. */
static double
parabola_min(double ym, double y0, double yp)
{
  double den = ym - 2 * y0 + yp;
  if (!(den > 0) || !isfinite(den)) return 0;
  return fmax(-1.0, fmin(1.0, 0.5 * (ym - yp) / den));
}

/* Sum of |a - R F - g|^2 minimised over R and g in closed form for the frames with use[j]:
 * S_FF + S_aa - 2 lambda_max(N(B)) with centred sums (Horn 1987: the maximum of tr(R B) is the
 * key matrix's largest eigenvalue). Also the rotation and both centroids. */
static double
rot_fit(const double (*F)[3], const double (*A)[3], const unsigned char *use, size_t m,
        size_t *cnt_out, double q[4], double fc[3], double ac[3])
{
  size_t cnt = 0;
  double sf[3] = { 0 }, sa[3] = { 0 }, sff = 0, saa = 0, B[3][3] = { { 0 } };
  for (size_t j = 0; j < m; j++) {
    if (!use[j]) continue;
    const double *f = F[j], *a = A[j];
    for (int r = 0; r < 3; r++) {
      sf[r] += f[r]; sa[r] += a[r]; sff += f[r] * f[r]; saa += a[r] * a[r];
      for (int c = 0; c < 3; c++) B[r][c] += f[r] * a[c];
    }
    cnt++;
  }
  *cnt_out = cnt;
  if (cnt < 10) return INFINITY;
  double n = (double)cnt;
  for (int r = 0; r < 3; r++) {
    sff -= sf[r] * sf[r] / n;
    saa -= sa[r] * sa[r] / n;
    fc[r] = sf[r] / n;
    ac[r] = sa[r] / n;
    for (int c = 0; c < 3; c++) B[r][c] -= sf[r] * sa[c] / n;
  }
  double N[4][4];
  horn_matrix((const double (*)[3])B, N);
  double lam;
  if (!horn_fast((const double (*)[4])N, (const double (*)[3])B, &lam, q)) {
    aw_fusion_wahba(B, q);
    lam = 0;
    for (int r = 0; r < 4; r++)
      for (int c = 0; c < 4; c++) lam += q[r] * N[r][c] * q[c];
  }
  return fmax(0.0, sff + saa - 2 * lam);
}

/* Rotation-only cost at a clock shift (mean squared residual), closed form, with one trimmed
 * round as in the joint fit (frames beyond 3 medians + 0.5 m/s^2 dropped: snapped or
 * mis-detected keypoints would otherwise pull the basin). INFINITY below 10 frames. Scratch:
 * F, A (3 m each), e and use (m each). */
static double
w_cost_rot(const WCtx *w, double shift, double (*F)[3], double (*A)[3], double *e,
           unsigned char *use)
{
  size_t m = 0, hint = 0;
  for (size_t j = 0; j < w->m; j++) {
    size_t k = w->frames[j];
    if (!w_imu_acc(w, k, shift, &hint, F[m], NULL)) continue;
    aw_v3_copy(A[m], w->cam->acc_m_s2[k]);
    use[m] = 1;
    m++;
  }
  size_t cnt;
  double q[4], fc[3], ac[3];
  double J = rot_fit((const double (*)[3])F, (const double (*)[3])A, use, m, &cnt, q, fc, ac);
  if (!isfinite(J)) return INFINITY;
  if (cnt > 20) {
    double R[3][3];
    aw_quat_to_mat(R, q);
    for (size_t j = 0; j < m; j++) {
      double d[3], Rf[3];
      for (int r = 0; r < 3; r++) d[r] = F[j][r] - fc[r];
      aw_mat_mul_v3(Rf, (const double (*)[3])R, d);
      double s2 = 0;
      for (int r = 0; r < 3; r++) { double x = A[j][r] - ac[r] - Rf[r]; s2 += x * x; }
      e[j] = sqrt(s2);
    }
    double *tmp = e + m;   /* second half of the scratch */
    memcpy(tmp, e, sizeof *e * m);
    double lim = 3.0 * aw_fusion_kth(tmp, m, m / 2) + 0.5;
    size_t kept = 0;
    for (size_t j = 0; j < m; j++) kept += e[j] <= lim;
    if (kept >= 10 && kept < m) {
      for (size_t j = 0; j < m; j++) use[j] = e[j] <= lim;
      J = rot_fit((const double (*)[3])F, (const double (*)[3])A, use, m, &cnt, q, fc, ac);
    }
  }
  return J / (double)cnt;
}

/* Clock drift over a long recording. The rotation-only clock search (w_cost_rot) is repeated
 * on consecutive windows of at most 20 s of frames near motion, each window with its own
 * rotation and gravity (closed form), so the gyro chain's slow turning between windows does
 * not matter; a straight line through the windows' shifts by weighted least squares gives the
 * drift. Each window is searched around the shift the windows before it predict (a 4 ms grid
 * over +-(12 ms + 400 ppm of the distance to the last window found), a parabola through the
 * grid's best, one more at +-1.5 ms); its weight is the inverse of its shift's variance from the
 * cost's curvature, as in clock_sigma. Windows more than 4 sigma + 2 ms off the line are
 * dropped and the line refitted (twice). Needs three windows spanning at least 40 s; false
 * otherwise (the constant shift stands). all: candidate frames in time order. */
static bool
calib_drift(const WCtx *w0, const size_t *all, size_t n_all, double best, double *a_out,
            double *b_out, double *tref_out, double *b_sigma_out)
{
  const AwCamPrep *cam = w0->cam;
  if (n_all < 60 || cam->t_s[all[n_all - 1]] - cam->t_s[all[0]] < 45.0) return false;
  size_t cap = n_all;
  double (*F)[3] = malloc(sizeof *F * cap), (*A)[3] = malloc(sizeof *A * cap);
  double *e = malloc(sizeof *e * 2 * cap);
  unsigned char *use = malloc(cap);
  size_t nwin_max = (size_t)((cam->t_s[all[n_all - 1]] - cam->t_s[all[0]]) / 20.0) + 2;
  double *ws = malloc(sizeof *ws * nwin_max), *wt = malloc(sizeof *wt * nwin_max);
  double *wv = malloc(sizeof *wv * nwin_max);
  bool ok = false;
  if (!F || !A || !e || !use || !ws || !wt || !wv) goto done;
  double per_window = fmax(1.0, 2.0 * cam->fit_half_s / cam->dt_nom_s);
  size_t nw = 0;
  double t_last = NAN;
  for (size_t j0 = 0; j0 < n_all && nw < nwin_max;) {
    size_t j1 = j0;
    while (j1 < n_all && cam->t_s[all[j1]] < cam->t_s[all[j0]] + 20.0) j1++;
    WCtx w = *w0;
    w.frames = all + j0;
    w.m = j1 - j0;
    w.keep = NULL;
    w.keep_out = NULL;
    w.memo = NULL;
    double tc = 0;
    for (size_t j = j0; j < j1; j++) tc += cam->t_s[all[j]];
    tc /= (double)(j1 - j0);
    j0 = j1;
    if (w.m < 60) continue;
    /* prediction from the windows found so far: their weighted mean until they span 40 s,
     * then their line */
    double pred = best, W = 0, Wt = 0, Wo = 0, tlo = INFINITY, thi = -INFINITY;
    for (size_t q = 0; q < nw; q++) {
      W += wv[q]; Wt += wv[q] * wt[q]; Wo += wv[q] * ws[q];
      tlo = fmin(tlo, wt[q]); thi = fmax(thi, wt[q]);
    }
    double dist = 0;
    if (nw > 0) {
      double tm = Wt / W, Wtt = 0, Wto = 0;
      pred = Wo / W;
      dist = fabs(tc - tm);
      if (thi - tlo >= 40.0) {
        for (size_t q = 0; q < nw; q++) {
          Wtt += wv[q] * (wt[q] - tm) * (wt[q] - tm);
          Wto += wv[q] * (wt[q] - tm) * ws[q];
        }
        if (Wtt > 0) { pred += Wto / Wtt * (tc - tm); dist = fabs(tc - t_last); }
      }
    }
    double r = fmin(0.25, 0.015 + 2.5e-4 * dist);
    const double h = 0.003;
    enum { FIT = 4 };
    int half = (int)ceil(r / h) + FIT;
    double cost[2 * 90 + 2 * FIT + 1];
    if (half > 90 + FIT) half = 90 + FIT;
    int jb = -half;
    for (int j = -half; j <= half; j++) {
      cost[j + half] = w_cost_rot(&w, pred + h * j, F, A, e, use);
      if (j > -half && cost[j + half] < cost[jb + half]) jb = j;
    }
    if (!isfinite(cost[jb + half]) || jb - FIT < -half || jb + FIT > half) continue;
    /* least-squares parabola through the 2 FIT + 1 grid points around the best: the trimmed
     * cost jumps a little between shifts, which a three-point parabola would follow */
    double S[5] = { 0 }, T[3] = { 0 };
    bool fin = true;
    for (int j = -FIT; j <= FIT; j++) {
      double x = j, y = cost[jb + j + half];
      if (!isfinite(y)) { fin = false; break; }
      double xp = 1;
      for (int p = 0; p < 5; p++) { S[p] += xp; if (p < 3) T[p] += xp * y; xp *= x; }
    }
    if (!fin) continue;
    /* symmetric points: S1 = S3 = 0, so c1 = T1 / S2 and (c0, c2) from the even equations */
    double c1 = T[1] / S[2];
    double det = S[0] * S[4] - S[2] * S[2];
    double c2 = (S[0] * T[2] - S[2] * T[0]) / det, c0 = (T[0] - c2 * S[2]) / S[0];
    if (!(c2 > 0)) continue;
    double xv = -c1 / (2 * c2);
    if (fabs(xv) > FIT) continue;
    double sh = pred + h * (jb + xv);
    double cmin = c0 - c1 * c1 / (4 * c2);
    double d2 = 2 * c2 / (h * h);
    /* variance from the curvature: the mean cost's second derivative times the frames (one
     * independent residual per fit window), residual variance per component cmin / 3 */
    double var = 2.0 * (fmax(cmin, 1e-6) / 3.0) / ((double)w.m * d2) * per_window + 1e-8;
    ws[nw] = sh;
    wt[nw] = tc;
    wv[nw] = 1.0 / var;
    nw++;
    t_last = tc;
  }
  if (nw < 3) goto done;
  /* Outliers (a window locked on a wrong basin) by Siegel's repeated-median line (A. F. Siegel,
   * "Robust regression using repeated medians", Biometrika 69(1):242-244, 1982; breakdown
   * point 50 %): windows more than max(3 ms, 3 x 1.4826 x the median absolute residual) off it
   * are dropped, then the weighted least-squares line through the rest. */
  double *sl = e, *sl2 = e + nw;   /* scratch: 2 nw <= 2 cap */
  for (size_t i = 0; i < nw; i++) {
    size_t k = 0;
    for (size_t j = 0; j < nw; j++)
      if (j != i && wt[j] != wt[i]) sl[k++] = (ws[j] - ws[i]) / (wt[j] - wt[i]);
    sl2[i] = k ? aw_fusion_kth(sl, k, k / 2) : 0;
  }
  double b_rm = aw_fusion_kth(sl2, nw, nw / 2);
  for (size_t i = 0; i < nw; i++) sl[i] = ws[i] - b_rm * wt[i];
  double a_rm = aw_fusion_kth(sl, nw, nw / 2);
  for (size_t i = 0; i < nw; i++) sl[i] = fabs(ws[i] - a_rm - b_rm * wt[i]);
  double lim = fmax(0.003, 3.0 * 1.4826 * aw_fusion_kth(sl, nw, nw / 2));
  for (size_t i = 0; i < nw; i++)
    if (fabs(ws[i] - a_rm - b_rm * wt[i]) > lim) wv[i] = 0;
  double a = 0, b = 0, tref = 0;
  bool fit = false;
  {
    double W = 0, Wt = 0;
    size_t used = 0;
    for (size_t q = 0; q < nw; q++) if (wv[q] > 0) { W += wv[q]; Wt += wv[q] * wt[q]; used++; }
    if (used >= 3 && W > 0) {
      tref = Wt / W;
      double Wo = 0, Wtt = 0, Wto = 0, tlo = INFINITY, thi = -INFINITY;
      for (size_t q = 0; q < nw; q++) {
        if (!(wv[q] > 0)) continue;
        double dt = wt[q] - tref;
        Wo += wv[q] * ws[q]; Wtt += wv[q] * dt * dt; Wto += wv[q] * dt * ws[q];
        tlo = fmin(tlo, wt[q]); thi = fmax(thi, wt[q]);
      }
      if (Wtt > 0 && thi - tlo >= 40.0) {
        b = Wto / Wtt;
        a = Wo / W;
        fit = true;
        /* Standard error of the slope, 1 / sqrt(sum w dt^2), scaled by the reduced chi-square
         * of the windows about the line when they scatter more than their curvature weights
         * say (the Birge ratio; P. R. Bevington & D. K. Robinson, "Data Reduction and Error
         * Analysis for the Physical Sciences", 3rd ed., McGraw-Hill 2003, section 6.5). */
        double chi2 = 0;
        for (size_t q = 0; q < nw; q++) {
          if (!(wv[q] > 0)) continue;
          double rr = ws[q] - a - b * (wt[q] - tref);
          chi2 += wv[q] * rr * rr;
        }
        double birge = used > 2 ? fmax(1.0, chi2 / (double)(used - 2)) : 1.0;
        *b_sigma_out = sqrt(birge / Wtt);
      }
    }
  }
  if (fit && fabs(b) <= 5e-4) {
    *a_out = a;
    *b_out = b;
    *tref_out = tref;
    ok = true;
  }
done:
  free(F); free(A); free(e); free(use); free(ws); free(wt); free(wv);
  return ok;
}

static double
w_resid(const WCtx *w, double shift, double q_out[4], double g_out[3], double l_out[3])
{
  return w_resid_n(w, shift, 5, q_out, g_out, l_out);
}

AwStatus
aw_fusion_calibrate(const AwImuPrep *imu, const double *tau, const AwCamPrep *cam,
                    const AwFusionSettings *s, double g, const double g_cam0[3], AwCalib *out,
                    AwError *err)
{
  memset(out, 0, sizeof *out);
  out->clock_drift_sigma = NAN;
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
  double (*qb0)[4] = malloc(sizeof *qb0 * n);
  if (!fb0 || !cum || !qb0) { free(fb0); free(cum); free(qb0); return AW_ERR_NO_MEMORY; }
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
    memcpy(qb0[i], q, sizeof q);
    if (i == 0) memset(cum[0], 0, sizeof cum[0]);
    else
      for (int a = 0; a < 3; a++)
        cum[i][a] = cum[i - 1][a] + 0.5 * (tau[i] - tau[i - 1]) * (fb0[i][a] + fb0[i - 1][a]);
  }
  /* The calibration window starts where the camera first sees motion: still frames pin only
   * the tilt, and the heading about gravity needs accelerations in several directions. */
  double t_motion = -INFINITY;
  for (size_t k = 0, run = 0; k < cam->n; k++) {
    if (!cam->acc_ok[k]) { run = 0; continue; }
    run = aw_v3_norm(cam->acc_m_s2[k]) > 3.0 ? run + 1 : 0;
    if (run >= 3) { t_motion = cam->t_s[k] - 2.0; break; }
  }
  /* Clock refinement: the shift of the IMU clock that best explains the camera's acceleration
   * vectors by one rotation (a far sharper criterion than the magnitudes of stage 1). */
  out->clock_shift_s = 0;
  {
    double (*pb0)[3] = malloc(sizeof *pb0 * n);
    size_t *frames = malloc(sizeof *frames * (cam->n ? cam->n : 1));
    if (pb0 && frames) {
      pb0[0][0] = pb0[0][1] = pb0[0][2] = 0;
      for (size_t i = 1; i < n; i++) {
        double dt = tau[i] - tau[i - 1];
        for (int a = 0; a < 3; a++)
          pb0[i][a] = pb0[i - 1][a] + dt * cum[i - 1][a] + dt * dt * (2 * fb0[i - 1][a] + fb0[i][a]) / 6.0;
      }
      size_t m0 = 0;
      double t_first0 = NAN;
      /* Only frames within 2 s of camera motion: a still frame fits any shift equally, and a
       * long still stretch inside the window (a capture left running after the swing) would
       * outnumber the swing's frames in the trimmed fit and let a wrong shift win (seen: a
       * swing fused right alone went 0.34 s off with 30 s of stillness after it). */
      double *t_prev = malloc(sizeof *t_prev * (cam->n ? cam->n : 1));
      double *t_next = malloc(sizeof *t_next * (cam->n ? cam->n : 1));
      if (t_prev && t_next) {
        double last = -INFINITY;
        for (size_t k = 0; k < cam->n; k++) {
          if (cam->acc_ok[k] && aw_v3_norm(cam->acc_m_s2[k]) > 3.0) last = cam->t_s[k];
          t_prev[k] = last;
        }
        last = INFINITY;
        for (size_t k = cam->n; k-- > 0;) {
          if (cam->acc_ok[k] && aw_v3_norm(cam->acc_m_s2[k]) > 3.0) last = cam->t_s[k];
          t_next[k] = last;
        }
      }
      /* frames: the first 20 s for the clock search; all_f: every candidate, for the drift */
      size_t *all_f = malloc(sizeof *all_f * (cam->n ? cam->n : 1)), n_all = 0;
      for (size_t k = 0; k < cam->n; k++) {
        if (!cam->acc_ok[k]) continue;
        double tk = cam->t_s[k];
        if (n_ok < 2 || tk - 0.25 < tau[0] || tk + 0.25 > tau[n_ok - 1] || tk < t_motion) continue;
        if (t_prev && t_next && tk - t_prev[k] > 2.0 && t_next[k] - tk > 2.0) continue;
        if (isnan(t_first0)) t_first0 = tk;
        if (all_f) all_f[n_all++] = k;
        if (tk <= t_first0 + 20.0) frames[m0++] = k;
        else if (!all_f) break;
      }
      free(t_prev);
      free(t_next);
      double (*Rb0)[3][3] = malloc(sizeof *Rb0 * n);
      if (Rb0) for (size_t i = 0; i < n; i++) aw_quat_to_mat(Rb0[i], qb0[i]);
      WCtx w = { tau, (const double (*)[3])fb0, (const double (*)[3])cum, (const double (*)[3])pb0,
                 (const double (*)[4])qb0, (const double (*)[3][3])Rb0, n_ok, cam, frames, m0,
                 fmax(s->lever_arm_sigma_m, 1e-3), 1, n_ok, { NULL }, { NULL }, { NULL }, { NULL }, NULL, NULL, NULL, NULL };
      WMemo memo = { .n_put = 0 };
      memo.F = malloc(sizeof *memo.F * W_MEMO * (m0 ? m0 : 1));
      memo.M = malloc(sizeof *memo.M * W_MEMO * (m0 ? m0 : 1));
      memo.def = malloc(W_MEMO * (m0 ? m0 : 1));
      memo.mom = malloc(sizeof *memo.mom * W_MEMO * 2);
      memo.mset = malloc(W_MEMO * 2 * (m0 ? m0 : 1));
      w.memo = &memo;
      w.taps = malloc(sizeof *w.taps * (cam->n ? cam->n : 1));
      if (w.taps) for (size_t k = 0; k < cam->n; k++) w.taps[k].at = w.taps[k].at_R = NAN;
      if (m0 >= 10 && Rb0) w_tables(&w);
      if (m0 >= 10 && Rb0 && memo.F && memo.M && memo.def && memo.mom && memo.mset && w.taps) {
        /* +-250 ms on a 10 ms grid (the magnitude-based stage-1 peak can be 200 ms off on
         * hard swings; the basin of the vector fit is several times wider than 10 ms) with the
         * closed-form rotation-only cost on every other frame, a parabola through the grid's
         * best and its neighbours, then parabola steps (+-5 ms, +-1 ms) on the full joint fit
         * (rotation, gravity, lever arm, trimmed), whose tabulated operators are smooth in the
         * shift. */
        const double step = 0.010;
        WCtx wc = w;
        wc.memo = NULL;   /* other frames */
        size_t *sub = malloc(sizeof *sub * (m0 / 2 + 1));
        if (sub && m0 >= 40) {
          wc.m = 0;
          for (size_t j = 0; j < m0; j += 2) sub[wc.m++] = frames[j];
          wc.frames = sub;
        }
        /* The 10 ms grid coarse to fine: every third point (30 ms) first, then the points
         * within 20 ms of the two lowest local minima of those: the lowest 10 ms point of
         * either basin and both its neighbours are evaluated (a basin spans several 30 ms
         * steps). 27 evaluations instead of 51. These take the frames whose operator has a
         * table (the frames beside occlusions and trimmed outliers have none, are evaluated
         * tap by tap at about three times the cost, and are the least sure) when they are at
         * least half of them and 20: they bracket the basins and find each one's lowest point.
         * The two basins' lowest points are compared, and the parabola through the winner and
         * its neighbours is taken, on all the grid's frames (2 to 5 evaluations). */
        double gk[51];
        unsigned char kdone[51] = { 0 };
        int jb = -1;
        double (*sF)[3] = malloc(sizeof *sF * wc.m), (*sA)[3] = malloc(sizeof *sA * wc.m);
        double *se = malloc(sizeof *se * 2 * wc.m);
        unsigned char *su = malloc(wc.m);
        size_t *tabbed = malloc(sizeof *tabbed * (wc.m ? wc.m : 1));
        bool scratch = sF && sA && se && su && tabbed;
        WCtx wk = wc;   /* the grid's frames */
        if (scratch) {
          wk.m = 0;
          for (size_t j = 0; j < wc.m; j++)
            if (w_tabled(&w, wc.frames[j])) tabbed[wk.m++] = wc.frames[j];
          if (wk.m >= 20 && 2 * wk.m >= wc.m) wk.frames = tabbed;
          else wk = wc;
        }
        for (int j = 0; j < 51; j++) gk[j] = INFINITY;
#define W_GRID(j)                                                                          \
  do {                                                                                     \
    if ((j) >= 0 && (j) < 51 && !kdone[j] && scratch) {                                    \
      gk[j] = w_cost_rot(&wk, ((j) - 25) * step, sF, sA, se, su);                          \
      kdone[j] = 1;                                                                        \
    }                                                                                      \
  } while (0)
        for (int j = 1; j < 51; j += 3) W_GRID(j);
        int mins[2] = { -1, -1 };
        for (int j = 1; j < 51 && scratch; j += 3) {
          if (!isfinite(gk[j])) continue;
          if ((j >= 4 && gk[j - 3] < gk[j]) || (j + 3 < 51 && gk[j + 3] < gk[j])) continue;
          if (mins[0] < 0 || gk[j] < gk[mins[0]]) { mins[1] = mins[0]; mins[0] = j; }
          else if (mins[1] < 0 || gk[j] < gk[mins[1]]) mins[1] = j;
        }
        /* each basin's lowest 10 ms point */
        int jm[2] = { -1, -1 };
        for (int mq = 0; mq < 2; mq++)
          for (int j = mins[mq] - 2; mins[mq] >= 0 && j <= mins[mq] + 2; j++) {
            W_GRID(j);
            if (j >= 0 && j < 51 && isfinite(gk[j]) && (jm[mq] < 0 || gk[j] < gk[jm[mq]])) jm[mq] = j;
          }
        jb = jm[0];
        if (jm[1] >= 0 && (jb < 0 || gk[jm[1]] < gk[jb])) jb = jm[1];
        /* gc[j]: on all the grid's frames (gk's value when they are the same) */
        double gc[51];
        unsigned char cdone[51] = { 0 };
        for (int j = 0; j < 51; j++) gc[j] = INFINITY;
        bool same = wk.frames == wc.frames;
#define W_ALL(j)                                                                           \
  do {                                                                                     \
    if ((j) >= 0 && (j) < 51 && !cdone[j] && scratch) {                                    \
      if (same) W_GRID(j);                                                                 \
      gc[j] = same ? gk[j] : w_cost_rot(&wc, ((j) - 25) * step, sF, sA, se, su);           \
      cdone[j] = 1;                                                                        \
    }                                                                                      \
  } while (0)
        if (jm[0] >= 0 && jm[1] >= 0) {
          /* which basin: on all the grid's frames */
          W_ALL(jm[0]);
          W_ALL(jm[1]);
          if (isfinite(gc[jm[0]]) || isfinite(gc[jm[1]])) jb = !(gc[jm[1]] < gc[jm[0]]) ? jm[0] : jm[1];
        }
        /* the parabola through the minimum and its neighbours, on all the grid's frames */
        if (jb >= 0) { W_ALL(jb - 1); W_ALL(jb); W_ALL(jb + 1); }
#undef W_ALL
#undef W_GRID
        free(sub); free(sF); free(sA); free(se); free(su); free(tabbed);
        double best = jb >= 0 ? (jb - 25) * step : 0;
        if (jb > 0 && jb < 50) best += step * parabola_min(gc[jb - 1], gc[jb], gc[jb + 1]);
        /* The inlier set of the joint fit at the coarse minimum, then held fixed: trimming
         * inside every evaluation makes the cost jump by tens of percent between shifts a
         * millisecond apart. Re-trimmed once at the refined shift (and refined again when the
         * set changed). */
        unsigned char *keep = malloc(m0), *keep2 = malloc(m0);
        double h = 0.005, rm = INFINITY, r0 = INFINITY, rp = INFINITY;
        for (int round = 0; round < 2 && jb >= 0 && keep && keep2; round++) {
          WCtx wt = w;
          wt.keep_out = keep2;
          if (!isfinite(w_resid(&wt, best, NULL, NULL, NULL))) break;
          if (round == 1 && memcmp(keep, keep2, m0) == 0) break;
          memcpy(keep, keep2, m0);
          w.keep = keep;
          h = 0.005;
          for (int lev = 0; lev < 2; lev++) {
            r0 = w_resid(&w, best, NULL, NULL, NULL);
            rm = w_resid(&w, best - h, NULL, NULL, NULL);
            rp = w_resid(&w, best + h, NULL, NULL, NULL);
            /* walk downhill (at most 4 steps) until the middle is the lowest */
            for (int walk = 0; walk < 4 && isfinite(r0) && (rm < r0 || rp < r0); walk++) {
              if (rm < rp) { best -= h; rp = r0; r0 = rm; rm = w_resid(&w, best - h, NULL, NULL, NULL); }
              else { best += h; rm = r0; r0 = rp; rp = w_resid(&w, best + h, NULL, NULL, NULL); }
            }
            if (lev == 0) out->clock_sigma_s = clock_sigma(&w, cam, best, rm, r0, rp, h);
            best += h * parabola_min(rm * rm, r0 * r0, rp * rp);
            h = 0.001;
          }
          w.keep = NULL;
        }
        w.keep = keep;
        if (jb >= 0 && isfinite(r0)) {
          out->clock_shift_s = best;
          double da, db, dref, dsig = NAN;
          if (all_f && calib_drift(&w, all_f, n_all, best, &da, &db, &dref, &dsig)) {
            /* The windows' line is combined with a zero-mean Gaussian prior on the drift (the
             * oscillators' tolerance, clock_drift_prior): the posterior mean and sigma. A
             * line the windows barely determine stays near no drift instead of moving the
             * clock by tens of milliseconds at the ends of a long recording (a hard session
             * with 72 ppm of drift came out +244 +- 77 ppm from the windows alone). The
             * intercept holds at the weighted mean time, independent of the slope. */
            double sp2 = s->clock_drift_prior * s->clock_drift_prior, sb2 = dsig * dsig;
            if (sp2 > 0 && isfinite(sb2)) {
              db *= sp2 / (sp2 + sb2);
              dsig = sqrt(sp2 * sb2 / (sp2 + sb2));
            }
            out->clock_shift_s = da;
            out->clock_drift = db;
            out->clock_ref_s = dref;
            out->clock_drift_sigma = dsig;
          }
          /* The rotation, gravity and lever arm of the joint solution at that shift. */
          double qq[4], gg[3], ll[3];
          if (isfinite(w_resid(&w, best, qq, gg, ll))) {
            memcpy(out->q_cam_body0, qq, sizeof qq);
            aw_v3_copy(out->g_cam_m_s2, gg);
            aw_v3_copy(out->lever_body_m, ll);
            out->have_joint = true;
          }
        } else out->clock_sigma_s = 0;
        w.keep = NULL;
        free(keep);
        free(keep2);
      }
      w_tables_free(&w);
      free(memo.F); free(memo.M); free(memo.def); free(memo.mom); free(memo.mset); free(w.taps);
      free(Rb0);
      free(all_f);
    }
    free(pb0);
    free(frames);
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
    if (n_ok < 2 || tk + h > tau[n_ok - 1] || tk < t_motion) continue;
    if (!isnan(t_first) && tk > t_first + 20.0) break;
    double fm[3], sh_k = out->clock_shift_s + out->clock_drift * (tk - out->clock_ref_s);
    if (!aw_fusion_box_mean(tau, cum, fb0, n_ok,
                            tk - sh_k - h, tk - sh_k + h, &hint, fm))
      continue;
    if (isnan(t_first)) t_first = tk;
    aw_v3_copy(A[m], cam->acc_m_s2[k]);
    aw_v3_copy(F[m], fm);
    use[m] = 1;
    m++;
  }
  free(fb0);
  free(cum);
  free(qb0);
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
        double med = aw_fusion_kth(tmp, m, m / 2);
        free(tmp);
        for (size_t i = 0; i < m; i++) use[i] = res[i] <= 3.0 * med + 0.5;
      }
    }
  }
  double ss = 0;
  size_t mu = 0;
  for (size_t i = 0; i < m; i++) if (use[i]) { ss += res[i] * res[i]; mu++; }
  out->resid_rms_m_s2 = sqrt(ss / (double)(mu ? mu : 1));
  /* Gravity is the fit's constant term: its standard error per axis is the residual's per
   * component over the square root of the independent residuals, one per camera fit window
   * (frames inside a window share positions; as for the clock's sigma above). */
  {
    double per_window = fmax(1.0, 2.0 * cam->fit_half_s / cam->dt_nom_s);
    out->gravity_fit_sigma_m_s2 =
      mu ? out->resid_rms_m_s2 / sqrt(3.0) * sqrt(per_window / (double)mu) : out->resid_rms_m_s2;
  }
  if (out->have_joint) {
    double ng = aw_v3_norm(out->g_cam_m_s2);
    if (ng > 0.5 * g) aw_v3_scale(out->g_cam_m_s2, out->g_cam_m_s2, g / ng);
    else aw_v3_copy(out->g_cam_m_s2, gc);
  } else {
    memcpy(out->q_cam_body0, qc, sizeof qc);
    aw_v3_copy(out->g_cam_m_s2, gc);
  }
  free(A); free(F); free(res); free(use);
  return AW_OK;
}
