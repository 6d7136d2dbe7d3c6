/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Stages 3 and 4: error-state Kalman filter propagated by the IMU and corrected by camera
 * positions and zero-velocity updates, then a fixed-interval smoother over the recording.
 *
 * Everything is expressed in the camera frame, so the output needs no further rotation.
 * Nominal state: IMU position p and velocity v (camera frame), attitude q_cam_body, lever arm l
 * (keypoint relative to the IMU, body frame), clock correction c, accelerometer bias ba and gyro
 * bias bg (body frame), gravity g (camera frame). Error state (22, in this order): dp, dv,
 * dtheta (global-frame small rotation: R = exp([dtheta]x) R_nom), dl, dc, dba, dbg, dg.
 * The gravity error lets the filter refine the camera-to-gravity rotation found by the Wahba
 * step (a 1 degree tilt error is 0.17 m/s^2, 2 cm over half a second of occlusion).
 *
 * The smoother is the modified Bryson-Frazier form of the Rauch-Tung-Striebel smoother
 * (G. J. Bierman, "Factorization Methods for Discrete Sequential Estimation", 1977; the same
 * recursions are summarised in the Wikipedia article "Kalman filter", section "Modified
 * Bryson-Frazier smoother"): it runs the adjoint variables lambda, Lambda backwards with F^T and
 * the stored gains, and needs no covariance inverse at all, so between camera frames a backward
 * step costs two structured products.
 *
 * The nominal state is integrated at every IMU sample; the covariance and the smoother's
 * information matrix only at nodes, the samples with a measurement (and at least one per
 * camera interval), through the exact transition of the run of IMU steps between two nodes
 * (Seg, seg_append). The transition F = I + (sparse 3x3 blocks) is never formed: G*M and F^T*M
 * are written out block by block (see apply_G and apply_Ft). Between nodes the smoothed
 * correction and variance are interpolated (see "Nodes" in aw_fusion_eskf_run_ext). A lower
 * rate for the covariance than for the navigation equations is common practice in strapdown
 * navigation (e.g. P. D. Groves, "Principles of GNSS, Inertial, and Multisensor Integrated
 * Navigation Systems", 2nd ed., 2013; cited from memory); here the run's transition is composed
 * exactly rather than approximated. */
#include "fusion-internal.h"

#include "arcwise/math3.h"

/* Instruction-set variants: this file is compiled once for the baseline instruction set and,
 * where the compiler can, once more with AVX2 enabled (engine/fusion/meson.build); the
 * entry points in eskf-dispatch.c pick one at run time. AW_ESKF_VARIANT names the build's
 * suffix of the entry point. Floating-point contraction is off in both (-ffp-contract=off) and
 * GCC vectorises without reassociating, so the two give bit-identical results
 * (tests/fusion/test-eskf-isa.c). */
#ifndef AW_ESKF_VARIANT
#define AW_ESKF_VARIANT generic
#endif
#define AW_ESKF_CAT2(a, b) a##_##b
#define AW_ESKF_CAT(a, b) AW_ESKF_CAT2(a, b)
#define AW_ESKF_FN(f) AW_ESKF_CAT(f, AW_ESKF_VARIANT)

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <stdio.h>

enum { NS = 22, IP = 0, IV = 3, IT = 6, IL = 9, IC = 12, IBA = 13, IBG = 16, IDG = 19, NH = 13 };

typedef struct {
  double p[3], v[3], q[4], ba[3], bg[3], g[3], l[3], c;
} Nom;

typedef struct {
  double dt;
  bool gap;
  double Vth[3][3];  /* F[v][theta] */
  double Vba[3][3];  /* F[v][ba] */
  double Tbg[3][3];  /* F[theta][bg] */
  double qv, qp, qpv, qth, qba, qbg, qc;
  double qvj[3];     /* velocity noise per camera axis from the stamps' jitter (see nominal_step) */
  bool clipped;      /* qv_clip, qth_clip are set */
  double qv_clip[3][3], qth_clip[3][3];  /* a clipped axis's reconstruction error (nominal_step) */
  double ev;         /* this step's share of the accelerometer's scale error (m/s) */
} Trans;

/* One measurement (or covariance inflation) applied at a step. H is non-zero only on the
 * position, velocity and attitude columns: Hb[r][0..8]. */
typedef struct {
  uint32_t step;
  uint8_t kind;              /* 0 = measurement, 1 = inflation of the diagonal, 2 = zero-velocity
                              * measurement (H picks the velocity: Hb[r][IV + r] = 1) */
  double Hb[3][NH];
  double R[3][3];
  double Sinv[3][3];
  double y[3];
  double K[NS][3];
  double add[NH];            /* inflation: added to the p, v, theta diagonal */
} Upd;

typedef struct {
  Upd *v;
  size_t n, cap;
} UpdList;

static Upd *
upd_push(UpdList *l)
{
  if (l->n == l->cap) {
    size_t nc = l->cap ? 2 * l->cap : 256;
    Upd *nv = realloc(l->v, sizeof *nv * nc);
    if (!nv) return NULL;
    l->v = nv;
    l->cap = nc;
  }
  Upd *u = &l->v[l->n++];
  memset(u, 0, sizeof *u);
  return u;
}

static void
skew(double S[3][3], const double a[3])
{
  S[0][0] = 0; S[0][1] = -a[2]; S[0][2] = a[1];
  S[1][0] = a[2]; S[1][1] = 0; S[1][2] = -a[0];
  S[2][0] = -a[1]; S[2][1] = a[0]; S[2][2] = 0;
}

/* The error-state transition over a run of IMU steps between two nodes, the samples where the
 * filter forms its covariance (see "Nodes" in aw_fusion_eskf_run_ext): F = I + G with G
 * non-zero only in these blocks (3 x 3 each; pv, pdg and vdg times the identity):
 *   p rows:     v: pv, theta: Pth, ba: Pba, bg: Pbg, dg: pdg
 *   v rows:     theta: Vth, ba: Vba, bg: Vbg, dg: vdg
 *   theta rows: bg: Tbg
 * One IMU step has this form (Pth = dt/2 Vth, Pba = dt/2 Vba, Pbg = Vbg = 0, pdg = dt^2/2,
 * vdg = dt; an IMU gap only pv = dt) and so has any product of steps (seg_append), so a run is
 * one exact transition. Its process noise is the p, v, theta block D (9 x 9) carried through
 * the run step by step, and the constant states' random walks summed (their coupling into p, v
 * and theta inside a run, a bias walk of 1e-4 m/s^2/sqrt(Hz) over tens of milliseconds, is
 * below 1e-13 m^2/s^2 and left out). */
typedef struct {
  double dt;
  double pv, pdg, vdg;
  double Pth[3][3], Pba[3][3], Pbg[3][3];
  double Vth[3][3], Vba[3][3], Vbg[3][3];
  double Tbg[3][3];
  double D[9][9];
  double qba, qbg, qc, ql;
} Seg;

/* S <- the run S followed by the step T (F = F_T F_S). */
static void
seg_append(Seg *S, const Trans *T)
{
  double dt = T->dt, h = T->gap ? 0 : 0.5 * dt;
  /* Noise: D <- E D E^T + Q_T, E = I + N the step's p, v, theta block, N: p <- v dt,
   * p <- theta h Vth, v <- theta Vth. With Y = Vth D_theta (D's theta rows), A = E D has the
   * rows D_p + dt D_v + h Y, D_v + Y, D_theta, and with Z[r] = Vth A[r][theta] the entries of
   * A E^T are A[r][p] + dt A[r][v] + h Z[r], A[r][v] + Z[r], A[r][theta]. A run starts from
   * D = 0, where this is zero. */
  if (S->dt > 0) {
    double A[9][9], Y[3][9], Z[9][3];
    for (int r = 0; r < 3; r++)
      for (int c = 0; c < 9; c++)
        Y[r][c] = T->Vth[r][0] * S->D[6][c] + T->Vth[r][1] * S->D[7][c] + T->Vth[r][2] * S->D[8][c];
    for (int r = 0; r < 3; r++)
      for (int c = 0; c < 9; c++) {
        A[r][c] = S->D[r][c] + dt * S->D[3 + r][c] + h * Y[r][c];
        A[3 + r][c] = S->D[3 + r][c] + Y[r][c];
        A[6 + r][c] = S->D[6 + r][c];
      }
    for (int r = 0; r < 9; r++)
      for (int c = 0; c < 3; c++)
        Z[r][c] = T->Vth[c][0] * A[r][6] + T->Vth[c][1] * A[r][7] + T->Vth[c][2] * A[r][8];
    for (int r = 0; r < 9; r++)
      for (int c = 0; c < 3; c++) {
        S->D[r][c] = A[r][c] + dt * A[r][3 + c] + h * Z[r][c];
        S->D[r][3 + c] = A[r][3 + c] + Z[r][c];
        S->D[r][6 + c] = A[r][6 + c];
      }
    /* Exactly symmetric: the upper triangle mirrored. */
    for (int r = 0; r < 9; r++)
      for (int c = r + 1; c < 9; c++) S->D[c][r] = S->D[r][c];
  }
  for (int a = 0; a < 3; a++) {
    double qj = T->qvj[a];
    S->D[a][a] += T->qp + qj * dt * dt / 3.0;
    S->D[3 + a][3 + a] += T->qv + qj;
    S->D[a][3 + a] += T->qpv + qj * dt / 2.0;
    S->D[3 + a][a] = S->D[a][3 + a];
    S->D[6 + a][6 + a] += T->qth;
  }
  if (T->clipped)
    for (int r = 0; r < 3; r++)
      for (int c = 0; c < 3; c++) {
        double q = T->qv_clip[r][c];
        S->D[r][c] += q * dt * dt / 3.0;
        S->D[r][3 + c] += q * dt / 2.0;
        S->D[3 + r][c] += q * dt / 2.0;
        S->D[3 + r][3 + c] += q;
        S->D[6 + r][6 + c] += T->qth_clip[r][c];
      }
  S->qba += T->qba;
  S->qbg += T->qbg;
  S->qc += T->qc;
  S->ql += 1e-12;   /* keeps the lever-arm block positive definite */
  /* Transition: G_T + G_S + G_T G_S; the product adds dt G_S's v rows and Pth_T, Vth_T times
   * G_S's theta rows (Tbg_S). */
  double VT[3][3];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++)
      VT[r][c] = T->Vth[r][0] * S->Tbg[0][c] + T->Vth[r][1] * S->Tbg[1][c] + T->Vth[r][2] * S->Tbg[2][c];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      S->Pbg[r][c] += dt * S->Vbg[r][c] + h * VT[r][c];
      S->Pth[r][c] += h * T->Vth[r][c] + dt * S->Vth[r][c];
      S->Pba[r][c] += h * T->Vba[r][c] + dt * S->Vba[r][c];
      S->Vbg[r][c] += VT[r][c];
      S->Vth[r][c] += T->Vth[r][c];
      S->Vba[r][c] += T->Vba[r][c];
      S->Tbg[r][c] += T->Tbg[r][c];
    }
  S->pdg += (T->gap ? 0 : 0.5 * dt * dt) + dt * S->vdg;
  S->vdg += T->gap ? 0 : dt;
  S->pv += dt;
  S->dt += dt;
}

/* rows M[r0..r0+2][*] += B^T X, X three other rows of M (restrict: the rows read are not
 * written here; the caller orders the calls so that X is not yet changed). */
static inline void
rows_addmul_t(double (*restrict M)[NS], int r0, const double B[3][3],
              const double (*restrict X)[NS])
{
  for (int c = 0; c < NS; c++) {
    double x0 = X[0][c], x1 = X[1][c], x2 = X[2][c];
    M[r0 + 0][c] += B[0][0] * x0 + B[1][0] * x1 + B[2][0] * x2;
    M[r0 + 1][c] += B[0][1] * x0 + B[1][1] * x1 + B[2][1] * x2;
    M[r0 + 2][c] += B[0][2] * x0 + B[1][2] * x1 + B[2][2] * x2;
  }
}

static inline void
rows_axpy(double M[][NS], int r0, double s, int s0)
{
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < NS; c++) M[r0 + r][c] += s * M[s0 + r][c];
}

/* M <- F^T M = M + G^T M: G's columns are v, theta, ba, bg and dg, read from the rows p, v,
 * theta; each row block is changed after the last use of its old value (bg reads theta and v,
 * the others read p and v, v changes last; p never changes). */
static void
apply_Ft(const Seg *S, double M[NS][NS])
{
  const double (*Mp)[NS] = (const double (*)[NS])&M[IP];
  const double (*Mv)[NS] = (const double (*)[NS])&M[IV];
  const double (*Mt)[NS] = (const double (*)[NS])&M[IT];
  rows_addmul_t(M, IBG, S->Pbg, Mp);
  rows_addmul_t(M, IBG, S->Vbg, Mv);
  rows_addmul_t(M, IBG, S->Tbg, Mt);
  rows_axpy(M, IDG, S->pdg, IP);
  rows_axpy(M, IDG, S->vdg, IV);
  rows_addmul_t(M, IBA, S->Pba, Mp);
  rows_addmul_t(M, IBA, S->Vba, Mv);
  rows_addmul_t(M, IT, S->Pth, Mp);
  rows_addmul_t(M, IT, S->Vth, Mv);
  rows_axpy(M, IV, S->pv, IP);
}

/* x <- x F for a row x (equally F^T x for a column), for the columns of block blk (0 = v,
 * 1 = theta, 2 = ba, 3 = bg, 4 = dg) and the blocks after it; blk is a constant at each call. */
static inline __attribute__((always_inline)) void
row_times_F(const Seg *S, double *x, int blk)
{
  const double *xp = &x[IP], *xv = &x[IV], *xt = &x[IT];
  double nt[3], nba[3], nbg[3];
  for (int c = 0; c < 3; c++) {
    if (blk <= 1)
      nt[c] = x[IT + c] + S->Pth[0][c] * xp[0] + S->Pth[1][c] * xp[1] + S->Pth[2][c] * xp[2] +
              S->Vth[0][c] * xv[0] + S->Vth[1][c] * xv[1] + S->Vth[2][c] * xv[2];
    if (blk <= 2)
      nba[c] = x[IBA + c] + S->Pba[0][c] * xp[0] + S->Pba[1][c] * xp[1] + S->Pba[2][c] * xp[2] +
               S->Vba[0][c] * xv[0] + S->Vba[1][c] * xv[1] + S->Vba[2][c] * xv[2];
    if (blk <= 3)
      nbg[c] = x[IBG + c] + S->Pbg[0][c] * xp[0] + S->Pbg[1][c] * xp[1] + S->Pbg[2][c] * xp[2] +
               S->Vbg[0][c] * xv[0] + S->Vbg[1][c] * xv[1] + S->Vbg[2][c] * xv[2] +
               S->Tbg[0][c] * xt[0] + S->Tbg[1][c] * xt[1] + S->Tbg[2][c] * xt[2];
  }
  for (int c = 0; c < 3; c++) {
    x[IDG + c] += S->pdg * xp[c] + S->vdg * xv[c];
    if (blk <= 3) x[IBG + c] = nbg[c];
    if (blk <= 2) x[IBA + c] = nba[c];
    if (blk <= 1) x[IT + c] = nt[c];
  }
  if (blk == 0)
    for (int c = 0; c < 3; c++) x[IV + c] += S->pv * xp[c];
}

/* Vector form: x <- F^T x. */
static void
apply_Ft_vec(const Seg *S, double x[NS])
{
  row_times_F(S, x, 0);
}

/* L <- F^T L F for a symmetric L (the smoother's information matrix stepped back). F^T acting
 * on the left changes only the rows of C = {v, theta, ba, bg, dg} and F acting on the right
 * only those columns, so with L1 = F^T L: (L1 F)[C][U] = L1[C][U] for the other states U =
 * {p, lever, clock}, (L1 F)[U][C] is its mirror and the U block is unchanged. Only the 15 rows
 * of C are multiplied by F from the right, and each only for the columns of its own block and
 * the blocks after it (C's blocks in index order): the result is symmetric, so the C block's
 * upper triangle is mirrored to the lower (exactly symmetric), and the C x U block to U x C. */
static void
congruence_Ft(const Seg *S, double L[NS][NS])
{
  apply_Ft(S, L);
  for (int a = 0; a < 3; a++) row_times_F(S, L[IV + a], 0);
  for (int a = 0; a < 3; a++) row_times_F(S, L[IT + a], 1);
  for (int a = 0; a < 3; a++) row_times_F(S, L[IBA + a], 2);
  for (int a = 0; a < 3; a++) row_times_F(S, L[IBG + a], 3);
  for (int a = 0; a < 3; a++) row_times_F(S, L[IDG + a], 4);
  /* Mirror each row r of C into its column: over U = {p, lever, clock} and over the later
   * columns of C. */
  for (int r = IV; r < IT + 3; r++) {
    for (int c = IP; c < IP + 3; c++) L[c][r] = L[r][c];
    for (int c = r + 1; c < NS; c++) L[c][r] = L[r][c];   /* theta, lever, clock, ba, bg, dg */
  }
  for (int r = IBA; r < NS; r++) {
    for (int c = IP; c < IP + 3; c++) L[c][r] = L[r][c];
    for (int c = IL; c < IC + 1; c++) L[c][r] = L[r][c];
    for (int c = r + 1; c < NS; c++) L[c][r] = L[r][c];
  }
}

/* out (9 x ncol, rows p, v, theta) = G M, F = I + G, M's rows the state's (row stride ld). G is
 * non-zero only in the p, v and theta rows. */
static void
apply_G(const Seg *S, const double *M, int ld, int ncol, double *out)
{
  const double *Mv = M + IV * ld, *Mt = M + IT * ld, *Mba = M + IBA * ld, *Mbg = M + IBG * ld,
               *Mg = M + IDG * ld;
  for (int r = 0; r < 3; r++) {
    const double *pt = S->Pth[r], *pa = S->Pba[r], *pg = S->Pbg[r];
    const double *vt = S->Vth[r], *va = S->Vba[r], *vg = S->Vbg[r], *e = S->Tbg[r];
    for (int c = 0; c < ncol; c++) {
      double t0 = Mt[c], t1 = Mt[ld + c], t2 = Mt[2 * ld + c];
      double a0 = Mba[c], a1 = Mba[ld + c], a2 = Mba[2 * ld + c];
      double g0 = Mbg[c], g1 = Mbg[ld + c], g2 = Mbg[2 * ld + c];
      double gd = Mg[r * ld + c];
      out[(IP + r) * ncol + c] = S->pv * Mv[r * ld + c] + pt[0] * t0 + pt[1] * t1 + pt[2] * t2 +
                                 pa[0] * a0 + pa[1] * a1 + pa[2] * a2 + pg[0] * g0 + pg[1] * g1 +
                                 pg[2] * g2 + S->pdg * gd;
      out[(IV + r) * ncol + c] = vt[0] * t0 + vt[1] * t1 + vt[2] * t2 + va[0] * a0 + va[1] * a1 +
                                 va[2] * a2 + vg[0] * g0 + vg[1] * g1 + vg[2] * g2 + S->vdg * gd;
      out[(IT + r) * ncol + c] = e[0] * g0 + e[1] * g1 + e[2] * g2;
    }
  }
}

/* P <- F P F^T + Q with F = I + G: F P F^T = P + A + A^T + G A^T, A = G P. Only the p, v and
 * theta rows and columns change; they are written once and mirrored (P stays exactly
 * symmetric). */
static void
propagate_cov(const Seg *S, double P[NS][NS])
{
  enum { NG = 9 };
  double A[NG][NS], At[NS][NG], B[NG][NG];
  apply_G(S, &P[0][0], NS, NS, &A[0][0]);
  /* G reads only the v, theta, ba, bg and dg rows of its operand: only those of A^T are made. */
  for (int r = 0; r < NG; r++) {
    for (int c = IV; c < IT + 3; c++) At[c][r] = A[r][c];
    for (int c = IBA; c < NS; c++) At[c][r] = A[r][c];
  }
  apply_G(S, &At[0][0], NG, NG, &B[0][0]);
  for (int r = 0; r < NG; r++) {
    for (int c = r; c < NG; c++) {
      double v = P[r][c] + A[r][c] + A[c][r] + B[r][c] + S->D[r][c];
      P[r][c] = v;
      P[c][r] = v;
    }
    for (int c = NG; c < NS; c++) {
      double v = P[r][c] + A[r][c];
      P[r][c] = v;
      P[c][r] = v;
    }
  }
  for (int r = 0; r < 3; r++) {
    P[IBA + r][IBA + r] += S->qba;
    P[IBG + r][IBG + r] += S->qbg;
    P[IL + r][IL + r] += S->ql;
  }
  P[IC][IC] += S->qc;
}

typedef struct {
  const AwImuPrep *imu;
  const double *tau;
  const AwFusionSettings *s;
  double lever[3];
  double gap_dt;
  double sa2, sg2, sba2, sbg2;   /* noise densities squared */
  unsigned freeze;               /* AW_ESKF_FREEZE_* */
  double sj2;                    /* variance of the IMU stamps' jitter (s^2) */
  /* Per sample: the accelerometer scale error's velocity shares summed since the last camera or
   * zero-velocity fix (m/s; filled by the forward pass, replayed by the smoother). */
  double *acc_v;
} Model;

/* Known attitude or clock (AW_ESKF_FREEZE_*): their error states get no process noise. */
static void
freeze_noise(const Model *m, Trans *T)
{
  if (m->freeze & AW_ESKF_FREEZE_ATTITUDE) { T->qth = 0; T->qbg = 0; }
  if (m->freeze & AW_ESKF_FREEZE_CLOCK) T->qc = 0;
}

/* Nominal propagation from sample i to i+1 and the transition of the error state. */
static void
nominal_step(const Model *m, size_t i, const Nom *in, Nom *out, Trans *T)
{
  const AwImuPrep *imu = m->imu;
  double dt = m->tau[i + 1] - m->tau[i];
  *out = *in;
  memset(T, 0, sizeof *T);
  T->dt = dt;
  if (dt > m->gap_dt) {
    /* IMU gap: constant velocity with a random-walk velocity whose density covers wrist
     * accelerations (20 m/s^2 rms), and attitude uncertainty growing at 1 rad/sqrt(s). */
    T->gap = true;
    for (int a = 0; a < 3; a++) out->p[a] = in->p[a] + in->v[a] * dt;
    double qa = 400.0;
    T->qv = qa * dt;
    T->qp = qa * dt * dt * dt / 3.0;
    T->qpv = qa * dt * dt / 2.0;
    T->qth = fmin(dt, 1.0);
    T->qba = m->sba2 * dt;
    T->qbg = m->sbg2 * dt;
    T->qc = 1e-10 * dt;
    freeze_noise(m, T);
    return;
  }
  double w0[3], w1[3], wm[3], f0[3], f1[3];
  for (int a = 0; a < 3; a++) {
    w0[a] = imu->w[i][a] - in->bg[a];
    w1[a] = imu->w[i + 1][a] - in->bg[a];
    wm[a] = 0.5 * (w0[a] + w1[a]) * dt;
    f0[a] = imu->f[i][a] - in->ba[a];
    f1[a] = imu->f[i + 1][a] - in->ba[a];
  }
  double dq[4], R0[3][3], R1[3][3];
  aw_quat_from_rotvec(dq, wm);
  aw_quat_mul(out->q, in->q, dq);
  aw_quat_normalize(out->q);
  aw_quat_to_mat(R0, in->q);
  aw_quat_to_mat(R1, out->q);
  double a0[3], a1[3], am[3];
  aw_mat_mul_v3(a0, (const double (*)[3])R0, f0);
  aw_mat_mul_v3(a1, (const double (*)[3])R1, f1);
  for (int a = 0; a < 3; a++) {
    am[a] = 0.5 * (a0[a] + a1[a]);
    double acc0 = a0[a] + in->g[a], acc1 = a1[a] + in->g[a];
    /* Exact for acceleration varying linearly over the step. */
    out->p[a] = in->p[a] + in->v[a] * dt + dt * dt * (acc0 / 3.0 + acc1 / 6.0);
    out->v[a] = in->v[a] + 0.5 * (acc0 + acc1) * dt;
  }
  double S[3][3];
  skew(S, am);
  double Rm[3][3];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) Rm[r][c] = 0.5 * (R0[r][c] + R1[r][c]);
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      T->Vth[r][c] = -dt * S[r][c];
      T->Vba[r][c] = -dt * Rm[r][c];
      T->Tbg[r][c] = -dt * Rm[r][c];
    }
  /* White noise, plus the accelerometer's scale/axis error, which stays the same for many
   * steps (sigma_s |f| dt per step, one sign through the recording): summed over k steps it
   * grows as k e, not as sqrt(k) e like white noise. Since the last fix of the path (an
   * accepted camera frame or zero-velocity update) the shares E = e_1 + ... + e_k are summed,
   * and step k gets e_k (2 E_k-1 + e_k): the variances then add up to E_k^2, the error fully
   * correlated over the unobserved span, as a consider parameter would give (instead of three
   * more states). Measured, not assumed: summing the gyro's scale error the same way (camera
   * frames observe attitude only weakly, so a sum restarted at each frame does not describe
   * it), or a clipped run's reconstruction error (it widened the gate enough to let snapped
   * detections into occluded, clipped downswings), made held-out coverage and RMSE worse
   * (seeds 9000 and 13000 up, 150 swings each); both stay white per step. */
  double fn = 0.5 * (aw_v3_norm(f0) + aw_v3_norm(f1));
  double wn = 0.5 * (aw_v3_norm(w0) + aw_v3_norm(w1));
  double ev = m->s->accel_scale_sigma * fn * dt, sw = m->s->gyro_scale_sigma * wn;
  double Ev = m->acc_v ? m->acc_v[i] : 0;
  T->ev = ev;
  T->qv = m->sa2 * dt + ev * (2 * Ev + ev);
  T->qth = m->sg2 * dt + sw * sw * dt * dt;
  if (imu->sat_acc[i] || imu->sat_acc[i + 1] || imu->sat_gyr[i] || imu->sat_gyr[i + 1]) {
    /* A clipped run was reconstructed (prep.c declip): its error enters along the clipped body
     * axis only, R e_a (sigma dt)^2 e_a' R', in velocity and in attitude. The same error spread
     * over all three axes (the scalar qv, qth) made hard swings 9 % worse (RMSE, 24 seed sets
     * of 60): it took the true axes' information with it, and the downswing's noisy camera
     * frames then carried the path. */
    for (int a = 0; a < 3; a++) {
      double ea = dt * fmax((double)imu->acc_clip_sigma[i][a],
                            (double)imu->acc_clip_sigma[i + 1][a]);
      double eg = dt * fmax((double)imu->gyr_clip_sigma[i][a],
                            (double)imu->gyr_clip_sigma[i + 1][a]);
      if (!(ea > 0) && !(eg > 0)) continue;
      T->clipped = true;
      for (int r = 0; r < 3; r++)
        for (int c = 0; c < 3; c++) {
          T->qv_clip[r][c] += ea * ea * Rm[r][a] * Rm[c][a];
          T->qth_clip[r][c] += eg * eg * Rm[r][a] * Rm[c][a];
        }
    }
  }
  /* Jittered stamps (sample k measured at its grid time, stamped j_k off it): the velocity
   * integrated with the stamped intervals is off by sum_k 1/2 (a_k + a_k+1) (j_k+1 - j_k)
   * = sum_k j_k (a_k-1 - a_k+1) / 2 plus a term at the current sample only, a random walk whose
   * step has variance sigma_j^2 (a_k+1 - a_k-1)^2 / 4 per axis, about sigma_j^2 (a1 - a0)^2 for
   * acceleration varying smoothly over a step. The term at the current sample (the state
   * belongs to the sample's true time, stamp minus j) enters the camera update and the output
   * (timing_noise). */
  for (int a = 0; a < 3; a++) T->qvj[a] = m->sj2 * (a1[a] - a0[a]) * (a1[a] - a0[a]);
  T->qp = T->qv * dt * dt / 3.0;
  T->qpv = T->qv * dt / 2.0;
  T->qba = m->sba2 * dt;
  T->qbg = m->sbg2 * dt;
  /* The clock offset wanders by at most ~10 us per sqrt(s) beyond the fitted drift. */
  T->qc = 1e-10 * dt;
  freeze_noise(m, T);
}

static bool
inv3(double A[3][3], double Ai[3][3])
{
  double c00 = A[1][1] * A[2][2] - A[1][2] * A[2][1];
  double c01 = A[1][2] * A[2][0] - A[1][0] * A[2][2];
  double c02 = A[1][0] * A[2][1] - A[1][1] * A[2][0];
  double det = A[0][0] * c00 + A[0][1] * c01 + A[0][2] * c02;
  if (!(fabs(det) > 1e-300) || !isfinite(det)) return false;
  double id = 1.0 / det;
  Ai[0][0] = c00 * id; Ai[0][1] = (A[0][2] * A[2][1] - A[0][1] * A[2][2]) * id;
  Ai[0][2] = (A[0][1] * A[1][2] - A[0][2] * A[1][1]) * id;
  Ai[1][0] = c01 * id; Ai[1][1] = (A[0][0] * A[2][2] - A[0][2] * A[2][0]) * id;
  Ai[1][2] = (A[0][2] * A[1][0] - A[0][0] * A[1][2]) * id;
  Ai[2][0] = c02 * id; Ai[2][1] = (A[0][1] * A[2][0] - A[0][0] * A[2][1]) * id;
  Ai[2][2] = (A[0][0] * A[1][1] - A[0][1] * A[1][0]) * id;
  return true;
}

/* HP = H P (3 x NS); S = H P H^T + R, for the camera's H (cam_predict): on the position
 * columns the identity, on the velocity columns e times it, then the attitude, lever-arm and
 * clock columns. The products with H's structural zeros and ones are left out; the remaining
 * terms are summed in the order of the general form, whose values this gives exactly. */
static void
innov_cov(double P[NS][NS], double Hb[3][NH], double R[3][3],
          double HP[3][NS], double S[3][3])
{
  for (int r = 0; r < 3; r++) {
    const double *h = Hb[r];
    for (int c = 0; c < NS; c++)
      HP[r][c] = P[IP + r][c] + h[IV + r] * P[IV + r][c] + h[IT] * P[IT][c] +
                 h[IT + 1] * P[IT + 1][c] + h[IT + 2] * P[IT + 2][c] + h[IL] * P[IL][c] +
                 h[IL + 1] * P[IL + 1][c] + h[IL + 2] * P[IL + 2][c] + h[IC] * P[IC][c];
  }
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      const double *h = Hb[c], *x = HP[r];
      S[r][c] = x[IP + c] + h[IV + c] * x[IV + c] + h[IT] * x[IT] + h[IT + 1] * x[IT + 1] +
                h[IT + 2] * x[IT + 2] + h[IL] * x[IL] + h[IL + 1] * x[IL + 1] +
                h[IL + 2] * x[IL + 2] + h[IC] * x[IC] + R[r][c];
    }
  for (int r = 0; r < 3; r++)
    for (int c = r + 1; c < 3; c++) { double a = 0.5 * (S[r][c] + S[c][r]); S[r][c] = a; S[c][r] = a; }
}

/* The same for a zero-velocity measurement, H = [0 I 0 ...] on the velocity: HP is P's velocity
 * rows and H P H^T its velocity block (the general form's products by H's zeros and ones give
 * exactly these values). */
static void
innov_cov_vel(double P[NS][NS], double R[3][3], double HP[3][NS], double S[3][3])
{
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < NS; c++) HP[r][c] = P[IV + r][c];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) S[r][c] = HP[r][IV + c] + R[r][c];
  for (int r = 0; r < 3; r++)
    for (int c = r + 1; c < 3; c++) { double a = 0.5 * (S[r][c] + S[c][r]); S[r][c] = a; S[c][r] = a; }
}

/* Joseph-equivalent covariance update for any gain K:
 * P <- (I-KH) P (I-KH)^T + K R K^T = P - K HP - (K HP)^T + K S K^T
 *    = P - K HP + W K^T,  W = K S - (HP)^T
 * (the same identity regrouped: two 3-term products per entry instead of three; W vanishes
 * for the optimal gain up to rounding, and is kept so that the form holds for any K). The
 * upper triangle is computed and mirrored: P stays exactly symmetric. */
static void
cov_update(double P[NS][NS], double HP[3][NS], double K[NS][3], double S[3][3])
{
  /* W and K by columns (3 x NS): the row loop below then reads HP and K along c, contiguous. */
  double W[3][NS], Kt[3][NS];
  for (int r = 0; r < NS; r++)
    for (int c = 0; c < 3; c++) {
      W[c][r] = K[r][0] * S[0][c] + K[r][1] * S[1][c] + K[r][2] * S[2][c] - HP[c][r];
      Kt[c][r] = K[r][c];
    }
  for (int r = 0; r < NS; r++) {
    double k0 = Kt[0][r], k1 = Kt[1][r], k2 = Kt[2][r];
    double w0 = W[0][r], w1 = W[1][r], w2 = W[2][r];
    for (int c = r; c < NS; c++)
      P[r][c] = P[r][c] - (k0 * HP[0][c] + k1 * HP[1][c] + k2 * HP[2][c]) +
                (w0 * Kt[0][c] + w1 * Kt[1][c] + w2 * Kt[2][c]);
  }
  for (int r = 0; r < NS; r++)
    for (int c = r + 1; c < NS; c++) P[c][r] = P[r][c];
}

static void
inject(Nom *x, const double d[NS])
{
  for (int a = 0; a < 3; a++) {
    x->p[a] += d[IP + a];
    x->v[a] += d[IV + a];
    x->ba[a] += d[IBA + a];
    x->bg[a] += d[IBG + a];
    x->g[a] += d[IDG + a];
    x->l[a] += d[IL + a];
  }
  x->c += d[IC];
  double dq[4];
  aw_quat_from_rotvec(dq, &d[IT]);
  aw_quat_mul(x->q, dq, x->q);
  aw_quat_normalize(x->q);
}

/* Camera frame status for the per-sample flags. */
enum { FR_NONE = 0, FR_ACCEPTED, FR_REJECTED, FR_MISSING };

typedef struct {
  double z[3], R[3][3];
  double delta;        /* frame time minus sample time */
  size_t frame;
} CamMeas;

/* Camera noise: the settings' model scaled by the level measured in the recording. */
static void
cam_noise(const AwFusionSettings *s, const double scale[2], const double p[3], double conf, double R[3][3])
{
  double z = fmax(p[2], 0.1);
  double sxy = scale[0] * s->cam_sigma_xy_m * z, sz = scale[1] * s->cam_sigma_z_coeff_per_m * z * z;
  double w = 1.0 / fmax(conf, 0.05);   /* confidence scales the variance */
  memset(R, 0, sizeof(double) * 9);
  R[0][0] = sxy * sxy * w;
  R[1][1] = sxy * sxy * w;
  R[2][2] = sz * sz * w;
}

/* Camera measurement model: the keypoint p + R_cam_body l at the frame time, which lies
 * delta - c after the sample (c: correction of the clock offset):
 * h = p + v e + a e^2 / 2 + R l,  e = delta - c. */
static void
cam_predict(const Model *m, const Nom *x, size_t i, double delta, double h[3], double Hb[3][NH])
{
  double R[3][3], Rl[3], f[3], a[3];
  aw_quat_to_mat(R, x->q);
  aw_mat_mul_v3(Rl, (const double (*)[3])R, x->l);
  for (int k = 0; k < 3; k++) f[k] = m->imu->f[i][k] - x->ba[k];
  aw_mat_mul_v3(a, (const double (*)[3])R, f);
  for (int k = 0; k < 3; k++) a[k] += x->g[k];
  double e = delta - x->c;
  for (int k = 0; k < 3; k++) h[k] = x->p[k] + x->v[k] * e + 0.5 * a[k] * e * e + Rl[k];
  double S[3][3];
  skew(S, Rl);
  memset(Hb, 0, sizeof(double) * 3 * NH);
  for (int r = 0; r < 3; r++) {
    Hb[r][IP + r] = 1.0;
    Hb[r][IV + r] = e;
    for (int c = 0; c < 3; c++) {
      Hb[r][IT + c] = -S[r][c];
      Hb[r][IL + c] = R[r][c];
    }
    Hb[r][IC] = -(x->v[r] + a[r] * e);
  }
}

/* The IMU sample a camera frame is compared with belongs to its true time, the stamp minus the
 * stamp's jitter j: the prediction is off by v j, v the predicted velocity at the frame time
 * (minus the clock column of Hb). Adds sigma_j^2 v v^T to the camera noise R. */
static void
timing_noise(const Model *m, double Hb[3][NH], double R[3][3])
{
  if (!(m->sj2 > 0)) return;
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) R[r][c] += m->sj2 * Hb[r][IC] * Hb[c][IC];
}

/* Kalman update; returns NIS, and applies only when apply is set. conf, sigma_c: a camera
 * frame's confidence and cam_outlier_sigma_m, tested against a wrong detection
 * (aw_fusion_frame_wrong; conf 1: the chi-square gate alone). */
static double
kf_update(double P[NS][NS], Nom *x, double Hb[3][NH], double R[3][3],
          const double y[3], double gate, double conf, double sigma_c, bool force, bool vel_only,
          bool *accepted, Upd *rec)
{
  double HP[3][NS], S[3][3], Si[3][3];
  if (vel_only) innov_cov_vel(P, R, HP, S);
  else innov_cov(P, Hb, R, HP, S);
  if (!inv3(S, Si)) { *accepted = false; return INFINITY; }
  double nis = 0;
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) nis += y[r] * Si[r][c] * y[c];
  if (!(nis <= gate) && !force) { *accepted = false; return nis; }
  if (!force && aw_fusion_frame_wrong(conf, sigma_c, y, (const double (*)[3])S, nis)) {
    *accepted = false;
    return nis;
  }
  double K[NS][3], d[NS];
  for (int r = 0; r < NS; r++)
    for (int c = 0; c < 3; c++)
      K[r][c] = HP[0][r] * Si[0][c] + HP[1][r] * Si[1][c] + HP[2][r] * Si[2][c];
  for (int r = 0; r < NS; r++) d[r] = K[r][0] * y[0] + K[r][1] * y[1] + K[r][2] * y[2];
  cov_update(P, HP, K, S);
  inject(x, d);
  if (rec) {
    rec->kind = vel_only ? 2 : 0;
    memcpy(rec->Hb, Hb, sizeof rec->Hb);
    memcpy(rec->R, R, sizeof rec->R);
    memcpy(rec->Sinv, Si, sizeof rec->Sinv);
    memcpy(rec->y, y, sizeof rec->y);
    memcpy(rec->K, K, sizeof rec->K);
  }
  *accepted = true;
  return nis;
}

/* Replays a stored update on P (the smoother's re-computation of checkpointed covariances). */
static void
replay_update(double P[NS][NS], Upd *u)
{
  if (u->kind == 1) {
    for (int k = 0; k < NH; k++) P[k][k] += u->add[k];
    return;
  }
  double HP[3][NS], S[3][3];
  if (u->kind == 2) innov_cov_vel(P, u->R, HP, S);
  else innov_cov(P, u->Hb, u->R, HP, S);
  cov_update(P, HP, u->K, S);
}

/* LK = Lambda K (NS x 3), Lambda symmetric: the smoother's Bryson-Frazier update steps. Summed
 * over k outermost, Lambda's row k (= its column k) times K's row k into all of LK's rows at
 * once: the inner loop runs along a row, vectorised, and each entry is still the sum over k in
 * order (the same value as the row-by-column dot product). */
static inline void
lambda_k(double L[NS][NS], const Upd *u, double LK[NS][3])
{
  double At[3][NS] = { { 0 } };
  for (int k = 0; k < NS; k++) {
    const double *Lk = L[k];
    double k0 = u->K[k][0], k1 = u->K[k][1], k2 = u->K[k][2];
    for (int r = 0; r < NS; r++) {
      At[0][r] += Lk[r] * k0;
      At[1][r] += Lk[r] * k1;
      At[2][r] += Lk[r] * k2;
    }
  }
  for (int r = 0; r < NS; r++)
    for (int j = 0; j < 3; j++) LK[r][j] = At[j][r];
}

/* The innovation-space weight of a Bryson-Frazier step, K^T lambda + Sinv y: lambda takes
 * -H^T of it. */
static inline void
bf_weight(const Upd *u, const double l[NS], double wgt[3])
{
  double Kl[3] = { 0 };
  for (int r = 0; r < NS; r++)
    for (int c = 0; c < 3; c++) Kl[c] += u->K[r][c] * l[r];
  double Siy[3];
  for (int r = 0; r < 3; r++) Siy[r] = u->Sinv[r][0] * u->y[0] + u->Sinv[r][1] * u->y[1] + u->Sinv[r][2] * u->y[2];
  for (int r = 0; r < 3; r++) wgt[r] = Kl[r] + Siy[r];
}

/* bf_update for a zero-velocity measurement: H's only non-zero entries are the ones on the
 * velocity, so H^T x, (Lambda K) H and H^T M H are the velocity columns and block, and only the
 * pairs of entries those touch need symmetrising (the rest stay exactly symmetric). The values
 * are those of the general form. */
static void
bf_update_vel(double L[NS][NS], double l[NS], const Upd *u)
{
  double wgt[3];
  bf_weight(u, l, wgt);
  for (int r = 0; r < 3; r++) l[IV + r] -= wgt[r];
  double LK[NS][3], M[3][3];
  lambda_k(L, u, LK);
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      double acc = 0;
      for (int k = 0; k < NS; k++) acc += u->K[k][r] * LK[k][c];
      M[r][c] = acc + u->Sinv[r][c];
    }
  for (int r = 0; r < NS; r++)
    for (int j = 0; j < 3; j++) {
      L[r][IV + j] -= LK[r][j];
      L[IV + j][r] -= LK[r][j];
    }
  for (int a = 0; a < 3; a++)
    for (int b = 0; b < 3; b++) L[IV + a][IV + b] += M[a][b];
  for (int j = 0; j < 3; j++) {
    int v = IV + j;
    for (int c = 0; c < NS; c++) {
      if (c >= IV && c <= v) continue;   /* the pair (v, c), c < v inside the block, once */
      double a = 0.5 * (L[v][c] + L[c][v]);
      L[v][c] = a;
      L[c][v] = a;
    }
  }
}

/* Backward step of the Bryson-Frazier recursion through one update (reverse order):
 * lambda <- -H^T Sinv y + C^T lambda,  Lambda <- H^T Sinv H + C^T Lambda C,  C = I - K H. */
static void
bf_update(double L[NS][NS], double l[NS], Upd *u)
{
  if (u->kind == 1) return;
  if (u->kind == 2) { bf_update_vel(L, l, u); return; }
  double wgt[3];
  bf_weight(u, l, wgt);
  for (int k = 0; k < NH; k++) {
    double acc = 0;
    for (int r = 0; r < 3; r++) acc += u->Hb[r][k] * wgt[r];
    l[k] -= acc;
  }
  /* LK = Lambda K (NS x 3); KLK = K^T Lambda K */
  double LK[NS][3], KLK[3][3], M[3][3];
  lambda_k(L, u, LK);
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      double acc = 0;
      for (int k = 0; k < NS; k++) acc += u->K[k][r] * LK[k][c];
      KLK[r][c] = acc;
      M[r][c] = acc + u->Sinv[r][c];
    }
  (void)KLK;
  /* (Lambda K) H : NS x NH block; H is the camera's (innov_cov): on its position and velocity
   * columns one non-zero per column (1 and e), whose single products are the general sums. */
  double LKH[NS][NH];
  const double (*H)[NH] = (const double (*)[NH])u->Hb;
  for (int r = 0; r < NS; r++) {
    for (int j = 0; j < 3; j++) {
      LKH[r][IP + j] = LK[r][j];
      LKH[r][IV + j] = LK[r][j] * H[j][IV + j];
    }
    for (int k = IT; k < NH; k++)
      LKH[r][k] = LK[r][0] * H[0][k] + LK[r][1] * H[1][k] + LK[r][2] * H[2][k];
  }
  double HMH[NH][NH], MH[3][NH];
  for (int r = 0; r < 3; r++) {
    for (int j = 0; j < 3; j++) {
      MH[r][IP + j] = M[r][j];
      MH[r][IV + j] = M[r][j] * H[j][IV + j];
    }
    for (int k = IT; k < NH; k++)
      MH[r][k] = M[r][0] * H[0][k] + M[r][1] * H[1][k] + M[r][2] * H[2][k];
  }
  for (int b = 0; b < NH; b++)
    for (int j = 0; j < 3; j++) {
      HMH[IP + j][b] = MH[j][b];
      HMH[IV + j][b] = H[j][IV + j] * MH[j][b];
    }
  for (int a = IT; a < NH; a++)
    for (int b = 0; b < NH; b++)
      HMH[a][b] = H[0][a] * MH[0][b] + H[1][a] * MH[1][b] + H[2][a] * MH[2][b];
  for (int r = 0; r < NS; r++)
    for (int k = 0; k < NH; k++) {
      L[r][k] -= LKH[r][k];
      L[k][r] -= LKH[r][k];
    }
  for (int a = 0; a < NH; a++)
    for (int b = 0; b < NH; b++) L[a][b] += HMH[a][b];
  /* Lambda was exactly symmetric and each pair outside the first NH rows and columns got the
   * same LKH entry on both sides: only the NH x NH block can have drifted apart (symmetrizing the
   * rest would average two equal numbers). */
  for (int r = 0; r < NH; r++)
    for (int c = r + 1; c < NH; c++) { double a = 0.5 * (L[r][c] + L[c][r]); L[r][c] = a; L[c][r] = a; }
}

/* The smoothed state x at sample i into the path: keypoint p + R l and its velocity
 * v + R ((w - bg) x l) in the camera frame, attitude, time on the camera's clock, and the
 * keypoint sigma from its variance ksig2 plus the stamp jitter's share (a sample is reported at
 * its stamp, off its true time by the jitter). R = R(x->q), Rl = R l. */
static void
write_sample(const Model *m, AwFusedPath *path, size_t i, const Nom *x, double R[3][3],
             const double Rl[3], const double ksig2[3])
{
  double wv[3], wl[3], Rwl[3];
  for (int a = 0; a < 3; a++) wv[a] = m->imu->w[i][a] - x->bg[a];
  aw_v3_cross(wl, wv, x->l);
  aw_mat_mul_v3(Rwl, (const double (*)[3])R, wl);
  path->t_s[i] = m->tau[i] + x->c;
  for (int a = 0; a < 3; a++) {
    path->pos_cam_m[i][a] = x->p[a] + Rl[a];
    path->vel_cam_m_s[i][a] = x->v[a] + Rwl[a];
  }
  memcpy(path->q_cam_body[i], x->q, sizeof x->q);
  for (int r = 0; r < 3; r++) {
    double vr = path->vel_cam_m_s[i][r];
    path->pos_sigma_cam_m[i][r] = sqrt(ksig2[r] + m->sj2 * vr * vr);
  }
}

/* The smoothed biases, lever arm, clock correction and camera-to-gravity rotation of the middle
 * sample into the report. */
static void
report_mid(AwFusionReport *rep, const Nom *x, double *c_mid)
{
  memcpy(rep->accel_bias_m_s2, x->ba, sizeof x->ba);
  memcpy(rep->gyro_bias_rad_s, x->bg, sizeof x->bg);
  memcpy(rep->lever_arm_body_m, x->l, sizeof x->l);
  rep->clock_offset_s += x->c;
  *c_mid = x->c;
  double gn = aw_v3_norm(x->g);
  aw_fusion_q_cam_grav(x->g, gn > 0 ? gn : 1, rep->q_cam_grav);
}

/* The error d that inject() turns b into a (a - b, the attitude as the rotation vector of
 * q_a q_b^-1). */
static void
nom_diff(const Nom *a, const Nom *b, double d[NS])
{
  for (int k = 0; k < 3; k++) {
    d[IP + k] = a->p[k] - b->p[k];
    d[IV + k] = a->v[k] - b->v[k];
    d[IBA + k] = a->ba[k] - b->ba[k];
    d[IBG + k] = a->bg[k] - b->bg[k];
    d[IDG + k] = a->g[k] - b->g[k];
    d[IL + k] = a->l[k] - b->l[k];
  }
  d[IC] = a->c - b->c;
  double bc[4], dq[4];
  aw_quat_conj(bc, b->q);
  aw_quat_mul(dq, a->q, bc);
  aw_quat_to_rotvec(&d[IT], dq);
}

/* The normalised residual (chi-square, 3 dof) of each camera frame at sample i against the
 * smoothed state x there: camera noise plus the smoothed keypoint variance ksig2. */
static void
frame_residuals(const Model *m, const AwCamPrep *cam, const size_t *fstart, const size_t *flist,
                size_t i, const Nom *x, const double ksig2[3], float *fres)
{
  for (size_t j = fstart[i]; j < fstart[i + 1]; j++) {
    size_t k = flist[j];
    double h[3], Hb[3][NH], Rc[3][3], r2 = 0, y[3];
    cam_predict(m, x, i, cam->t_s[k] - m->tau[i], h, Hb);
    cam_noise(m->s, cam->noise_scale, cam->pos_m[k], cam->conf ? cam->conf[k] : 1, Rc);
    timing_noise(m, Hb, Rc);
    double Sd[3][3] = { { 0 } };
    for (int a = 0; a < 3; a++) {
      double e = cam->pos_m[k][a] - h[a];
      Sd[a][a] = Rc[a][a] + ksig2[a];
      r2 += e * e / Sd[a][a];
      y[a] = e;
    }
    /* A frame more likely a wrong detection is stored past the gate (aw_fusion_frame_wrong). */
    if (r2 <= m->s->gate_chi2 &&
        aw_fusion_frame_wrong(cam->conf ? cam->conf[k] : 1, m->s->cam_outlier_sigma_m, y,
                              (const double (*)[3])Sd, r2))
      r2 += m->s->gate_chi2;
    fres[k] = (float)r2;
  }
}

/* The transition of the run from node sample i0 to node sample i1, from the stored nominal
 * states (the forward pass's steps repeated). */
static void
run_transition(const Model *m, const Nom *xs, size_t i0, size_t i1, Seg *sg)
{
  memset(sg, 0, sizeof *sg);
  for (size_t j = i0 + 1; j <= i1; j++) {
    Trans T;
    Nom xn;
    nominal_step(m, j - 1, &xs[j - 1], &xn, &T);
    seg_append(sg, &T);
  }
}

/* x <- F x for one IMU step T (its G as seg_append composes it: p <- v dt, theta and ba
 * through h Vth and h Vba, dg dt^2 / 2; v <- Vth, Vba, dg dt; theta <- Tbg; a gap only p <- v
 * dt). */
static void
step_vec(const Trans *T, double x[NS])
{
  double h = T->gap ? 0 : 0.5 * T->dt, vdg = T->gap ? 0 : T->dt, pdg = 0.5 * vdg * T->dt;
  double dv[3], dt[3];
  for (int r = 0; r < 3; r++) {
    double a = 0;
    for (int c = 0; c < 3; c++) a += T->Vth[r][c] * x[IT + c] + T->Vba[r][c] * x[IBA + c];
    dv[r] = a;
    double b = 0;
    for (int c = 0; c < 3; c++) b += T->Tbg[r][c] * x[IBG + c];
    dt[r] = b;
  }
  for (int r = 0; r < 3; r++) {
    x[IP + r] += T->dt * x[IV + r] + h * dv[r] + pdg * x[IDG + r];
    x[IV + r] += dv[r] + vdg * x[IDG + r];
    x[IT + r] += dt[r];
  }
}

/* The clock's drift beyond the grid's, from one pass: the camera frames' information on a
 * drift r that moves the clock correction by r (t - tref) on top of the state c (whose random
 * walk, 10 us per sqrt(s), cannot follow a drift of tens of ppm across a session: the smoothed
 * c of a 2-minute session sloped by 2 ppm where the grid was 59 ppm off). The drift enters the
 * camera model as a constant bias with the measurement column H_r = H_c (t - tref), and the
 * filter run without it gives its maximum-likelihood estimate through the sensitivity of the
 * filtered state to it (the separate-bias, or two-stage, filter: B. Friedland, "Treatment of
 * bias in recursive filtering", IEEE Trans. Automatic Control 14(4):359-367, 1969; cited from
 * memory): V = dx/dr propagates with F (V <- F V) and through each update (V <- V - K s with
 * s = H V + H_r, the innovation's sensitivity); the innovations y are white with covariance S,
 * so the bias's information is sum s^T S^-1 s, and its estimate sum s^T S^-1 y over that.
 * A constant clock bias b (H_b = H_c) is estimated with it and profiled out, so that the
 * prior of c, which holds at the first sample, tells nothing about r (with a lever of 15
 * minutes it did: +-17 ppm from a 30-minute recording holding one swing). Frames at still
 * samples are left out of the sums (the filter's use of them stands): the clock column there
 * is the velocity estimate's noise, and still hands show no clock. Only vectors: the forward
 * pass's stored gains and run transitions replayed node by node (when the transitions are not
 * stored, step by step from the stored nominal states). *info and *grad get r's profiled
 * information and score (info r = grad); the drift's coupling into the filter's
 * linearisation (sub-millisecond clock changes per swing) is left to the next pass's
 * relinearisation. */
static void
drift_info(const Model *m, const Nom *xs, const size_t *nodes, size_t nn, const Seg *segs,
           const size_t *ustart, const UpdList *ul, double tref, double *info, double *grad)
{
  double V[2][NS] = { { 0 } }, M[2][2] = { { 0 } }, g[2] = { 0 };
  for (size_t q = 0; q < nn; q++) {
    size_t ii = nodes[q];
    if (q > 0 && segs) {
      for (int b = 0; b < 2; b++) {
        double GV[9];
        apply_G(&segs[q], V[b], 1, 1, GV);
        for (int k = 0; k < 9; k++) V[b][k] += GV[k];
      }
    } else if (q > 0) {
      /* step by step from the stored nominal states (the run's noise is not needed) */
      for (size_t j = nodes[q - 1] + 1; j <= ii; j++) {
        Trans T;
        Nom xn;
        nominal_step(m, j - 1, &xs[j - 1], &xn, &T);
        step_vec(&T, V[0]);
        step_vec(&T, V[1]);
      }
    }
    double hr = m->tau[ii] - tref;   /* the frame's time, within half an IMU interval */
    for (size_t j = ustart[ii]; j < ustart[ii + 1]; j++) {
      const Upd *u = &ul->v[j];
      if (u->kind == 1) continue;
      double sv[2][3], w[2][3];
      for (int b = 0; b < 2; b++)
        for (int r = 0; r < 3; r++) {
          if (u->kind == 2) { sv[b][r] = V[b][IV + r]; continue; }
          double acc = u->Hb[r][IC] * (b == 0 ? 1.0 : hr);
          for (int k = 0; k < NH; k++) acc += u->Hb[r][k] * V[b][k];
          sv[b][r] = acc;
        }
      for (int b = 0; b < 2; b++) {
        for (int r = 0; r < 3; r++)
          w[b][r] = u->Sinv[r][0] * sv[b][0] + u->Sinv[r][1] * sv[b][1] + u->Sinv[r][2] * sv[b][2];
        for (int r = 0; r < 3 && !m->imu->still[ii]; r++) {
          M[b][0] += w[b][r] * sv[0][r];
          M[b][1] += w[b][r] * sv[1][r];
          g[b] += w[b][r] * u->y[r];
        }
        for (int k = 0; k < NS; k++)
          V[b][k] -= u->K[k][0] * sv[b][0] + u->K[k][1] * sv[b][1] + u->K[k][2] * sv[b][2];
      }
    }
  }
  *info = 0;
  *grad = 0;
  if (!(M[0][0] > 0)) return;
  *info = M[1][1] - M[0][1] * M[1][0] / M[0][0];
  *grad = g[1] - M[1][0] * g[0] / M[0][0];
}

/* After a pass: the drift beyond the grid's (drift_info) about the middle sample's time tref,
 * combined with the zero-mean prior on the whole drift (the oscillators' tolerance,
 * clock_drift_prior, as in the calibration): precision info + 1 / sp^2, mean
 * info (D + r) / (info + 1 / sp^2) for the grid's drift D and the frames' r. The calibration's
 * windows are not added in: they compare the same frames with the same IMU samples (their line
 * is the grid this estimate starts from), at 4-10 ms per 20 s window against sub-millisecond
 * clocks per swing here. The report gets the combined line through tref's smoothed clock (the
 * grid's offset offset_in plus the pass's c there, already in rep). Returns the drift to add to
 * the grid's, 0 when the frames hold no information on it. Out of line: the pass loop's code
 * stays as it was on recordings too short for a drift. */
static __attribute__((noinline)) double
drift_line(const Model *m, const Nom *xs, const size_t *nodes, size_t nn, const Seg *segs,
           const size_t *ustart, const UpdList *ul, double tref, double drift_in,
           double offset_in, AwFusionReport *rep)
{
  double info = 0, grad = 0;
  drift_info(m, xs, nodes, nn, segs, ustart, ul, tref, &info, &grad);
  double prior = m->s->clock_drift_prior;
  double ip = prior > 0 ? 1.0 / (prior * prior) : 0;
  if (!(info > 0) || !isfinite(info) || !isfinite(grad)) return 0;
  double dtot = (info * drift_in + grad) / (info + ip);
  double r = (1 + dtot) / (1 + drift_in) - 1;
  rep->clock_offset_s += r * (offset_in - tref);
  rep->clock_drift = dtot;
  rep->clock_drift_sigma = 1.0 / sqrt(info + ip);
  return r;
}

/* One pass's result, kept while later passes run (see "Several passes" below). */
typedef struct {
  double *t_s, (*pos)[3], (*vel)[3], (*q)[4], (*sig)[3];
  uint32_t *flags;
  unsigned char *fstat;
  AwFusionReport rep;
} PassResult;

static void
pass_result_free(PassResult *r)
{
  free(r->t_s); free(r->pos); free(r->vel); free(r->q); free(r->sig); free(r->flags); free(r->fstat);
  memset(r, 0, sizeof *r);
}

/* Copies the path's per-sample output, the report and the frames' status into r (save; r's
 * arrays allocated on first use) or back from it. */
static bool
pass_result_copy(PassResult *r, AwFusedPath *path, unsigned char *fstat, size_t ncam, bool save)
{
  size_t n = path->n ? path->n : 1;
  if (save && !r->t_s) {
    r->t_s = malloc(sizeof *r->t_s * n);
    r->pos = malloc(sizeof *r->pos * n);
    r->vel = malloc(sizeof *r->vel * n);
    r->q = malloc(sizeof *r->q * n);
    r->sig = malloc(sizeof *r->sig * n);
    r->flags = malloc(sizeof *r->flags * n);
    r->fstat = malloc(ncam ? ncam : 1);
    if (!r->t_s || !r->pos || !r->vel || !r->q || !r->sig || !r->flags || !r->fstat) {
      pass_result_free(r);
      return false;
    }
  }
  struct { void *kept, *live; size_t bytes; } part[] = {
    { r->t_s, path->t_s, sizeof *r->t_s * path->n },
    { r->pos, path->pos_cam_m, sizeof *r->pos * path->n },
    { r->vel, path->vel_cam_m_s, sizeof *r->vel * path->n },
    { r->q, path->q_cam_body, sizeof *r->q * path->n },
    { r->sig, path->pos_sigma_cam_m, sizeof *r->sig * path->n },
    { r->flags, path->flags, sizeof *r->flags * path->n },
    { r->fstat, fstat, ncam },
  };
  for (size_t k = 0; k < sizeof part / sizeof part[0]; k++) {
    if (save) memcpy(part[k].kept, part[k].live, part[k].bytes);
    else memcpy(part[k].live, part[k].kept, part[k].bytes);
  }
  if (save) r->rep = path->report;
  else path->report = r->rep;
  return true;
}

AwStatus
AW_ESKF_FN(aw_fusion_eskf_run_ext)(const AwImuPrep *imu, const double *tau_in,
                                   const AwCamPrep *cam, const AwFusionSettings *s, double g,
                                   const AwCalib *cal, unsigned freeze, AwFusedPath *path,
                                   AwError *err)
{
  size_t n = imu->n;
  /* The IMU grid on the depth clock, moved by the filter's own clock estimate between passes
   * (see the passes below). */
  double *tau = malloc(sizeof *tau * (n ? n : 1));
  if (!tau) return aw_error_set(err, AW_ERR_NO_MEMORY, "fusion", 0, 0, "out of memory");
  memcpy(tau, tau_in, sizeof *tau * n);
  AwFusionReport *rep = &path->report;
  Model m = { imu, tau, s, { s->lever_arm_body_m[0], s->lever_arm_body_m[1], s->lever_arm_body_m[2] },
              3 * imu->dt_nom_s + 0.02,
              s->accel_noise_density_m_s2_rthz * s->accel_noise_density_m_s2_rthz,
              s->gyro_noise_density_rad_s_rthz * s->gyro_noise_density_rad_s_rthz,
              s->accel_bias_walk_m_s3_rthz * s->accel_bias_walk_m_s3_rthz,
              s->gyro_bias_walk_rad_s2_rthz * s->gyro_bias_walk_rad_s2_rthz, freeze,
              imu->t_jitter_s * imu->t_jitter_s, NULL };
  bool use_cam = s->mask != AW_FUSION_CAMERA_MASKED;
  /* A recording's own still periods show its sensor noise; never assume it quieter than the
   * datasheet figure. */
  if (imu->accel_noise_meas > s->accel_noise_density_m_s2_rthz) m.sa2 = imu->accel_noise_meas * imu->accel_noise_meas;
  if (imu->gyro_noise_meas > s->gyro_noise_density_rad_s_rthz) m.sg2 = imu->gyro_noise_meas * imu->gyro_noise_meas;

  /* Camera frames mapped to their nearest IMU sample (frames in IMU gaps are not used). */
  size_t *fstart = calloc(n + 1, sizeof *fstart);
  size_t *flist = malloc(sizeof *flist * (cam->n ? cam->n : 1));
  unsigned char *fstat = calloc(cam->n ? cam->n : 1, 1);
  /* Frame decisions of the second pass, from the first pass's smoothed path: 0 = gate as
   * usual, 1 = leave out, 2 = use without the gate. fres: the frame's normalised residual
   * against the smoothed path (chi-square, 3 dof). */
  unsigned char *fdec = calloc(cam->n ? cam->n : 1, 1);
  float *fres = malloc(sizeof *fres * (cam->n ? cam->n : 1));
  Nom *xs = malloc(sizeof *xs * n);
  double *acc_v = calloc(n ? n : 1, sizeof *acc_v);
  m.acc_v = acc_v;
  /* Nodes: the samples where the filter forms its covariance. Every sample with a camera frame
   * is one, and the first and the last, and no run between two nodes is longer than a camera
   * interval (see seg_append: the run's transition is exact); zero-velocity updates are made at
   * the nodes that are still (see the forward pass). Between nodes the nominal state is
   * integrated at every IMU sample as usual; the smoother's correction and variance there are
   * interpolated between the nodes' (at most a camera interval apart, where a correction that
   * the IMU carries well changes by micrometres). The covariance work, most of the filter's
   * cost, then runs at about the camera rate instead of the IMU rate. */
  size_t max_run = 3;
  if (isfinite(cam->dt_nom_s) && cam->dt_nom_s > 0 && imu->dt_nom_s > 0)
    max_run = (size_t)fmax(1.0, ceil(cam->dt_nom_s / imu->dt_nom_s - 1e-9));
  size_t *nodes = malloc(sizeof *nodes * (n ? n : 1));
  Nom *xpri = malloc(sizeof *xpri * (n ? n : 1));   /* nominal at each node before its updates */
  size_t B = n <= 20000 ? 1 : 16;     /* covariance checkpoint interval in nodes (memory bound) */
  size_t nck = (n + B - 1) / B;
  double (*Pck)[NS][NS] = malloc(sizeof *Pck * nck);
  double (*Pblk)[NS][NS] = malloc(sizeof *Pblk * B);
  /* With every node's covariance stored (B = 1) the forward pass's run transitions are kept
   * too (segs[q]: from node q - 1 to node q): the smoother steps back through the same F
   * without repeating the nominal propagation. */
  Seg *segs = B == 1 ? malloc(sizeof *segs * (n ? n : 1)) : NULL;
  size_t *ustart = calloc(n + 1, sizeof *ustart);
  UpdList ul = { 0 };
  PassResult kept = { 0 };   /* the best pass so far, while later passes run */
  AwStatus st = AW_OK;
  if (!fstart || !flist || !fstat || !fdec || !fres || !xs || !Pck || !Pblk || !ustart || !acc_v ||
      !nodes || !xpri || (B == 1 && !segs)) { st = AW_ERR_NO_MEMORY; goto out; }
  double clock_moved = 0;   /* shift of the grid made before this pass (s) */
  bool grid_moved = false;  /* the grid moved before this pass (shift or drift) */
  double move_next = 0;     /* the shift the next pass makes, if one runs (s) */
  double clock_offset_in = rep->clock_offset_s;
  /* The grid's drift, and the line the next pass moves it by besides the constant (the drift
   * beyond the grid's, about drift_ref), which may make a pass run (drift_force): see the end
   * of a pass. */
  double clock_drift_in = rep->clock_drift, drift_next = 0, drift_ref = 0;
  bool drift_force = false;
  /* The drift is estimated where one the prior allows (3 sigma; without a prior the largest the
   * calibration accepts, 500 ppm) could move the clock by a quarter of an IMU interval at the
   * recording's ends: the threshold at which the constant correction moves the grid. Shorter
   * recordings keep the calibration's drift. */
  double drift_sp = s->clock_drift_prior > 0 ? s->clock_drift_prior : 5e-4;
  bool drift_on = use_cam && !(freeze & AW_ESKF_FREEZE_CLOCK) && n > 1 &&
                  3 * drift_sp * 0.5 * (tau[n - 1] - tau[0]) > 0.25 * imu->dt_nom_s;
  /* Passes after the first that reselect the camera frames from the smoothed path. */
  enum { AW_FUSION_MAX_REPASS = 4 };
  /* Several passes. A forward filter must judge each camera frame on the past alone: right after
   * the IMU saturated or the hands came out of an occlusion it cannot tell a snapped detection
   * from its own drift. The first pass's smoothed path sees both sides, so the second pass
   * keeps exactly the frames that agree with it (chi-square gate on residual against the
   * smoothed path, camera noise plus smoothed variance) and leaves the others out.
   * A pass that leaves out a snapped frame moves the smoothed path towards the true one, which
   * can reveal further frames in the same occlusion that disagree, so the selection is repeated
   * to a fixed point: until the kept set stops changing, at most AW_FUSION_MAX_REPASS times.
   * A pass can also make things worse: in a long still recording whose smoothed path, after a
   * clock error, drifted from the frames, each pass left out more of them (tens of metres in
   * the end); on hard swings a pass sometimes lands in a worse basin and the next climbs out.
   * So the result is the pass whose smoothed path agrees with the most camera frames (chi-square
   * gate on the residual as above; ties: the later pass; a pass that re-anchored only when no
   * other ran), not simply the last one. (A rule that
   * stopped when a pass changed more than twice as many frames as the one before plus a
   * second's worth cut off passes that would have recovered: held-out seeds 9000, 60 swings,
   * RMSE p90 2.24 -> 1.87 cm without it.) */
  const int n_pass = use_cam ? 1 + AW_FUSION_MAX_REPASS : 1;
  double c_mid = 0;
  size_t agree_best = 0, agree_last = 0;   /* frames agreeing with a pass's smoothed path */
  bool have_best = false;
  for (int pass = 0; pass < n_pass; pass++) {
  if (pass > 0) {
    /* Only if the smoothed path disagrees with a forward decision, or the first pass had to
     * re-anchor (which cuts the smoother's view across the disagreement), does another pass
     * differ from the last. */
    size_t changed = 0;
    for (size_t k = 0; k < cam->n; k++) {
      if (fstat[k] == FR_MISSING || fstat[k] == FR_NONE) continue;
      bool keep = (double)fres[k] <= s->gate_chi2;
      if (keep != (fstat[k] == FR_ACCEPTED)) changed++;
    }
    if (changed == 0 && rep->gate_recoveries == 0 && !drift_force) break;
    /* This pass overwrites the last one's result: keep that if it is the best so far. A pass
     * that re-anchored is no candidate: its smoothed path across the re-anchoring is not one
     * estimate (the covariance was opened by hand there), and its forward gate, not the
     * smoothed path, chose its frames. */
    if (rep->gate_recoveries == 0 && (!have_best || agree_last >= agree_best)) {
      if (!pass_result_copy(&kept, path, fstat, cam->n, true)) { st = AW_ERR_NO_MEMORY; goto out; }
      agree_best = agree_last;
      have_best = true;
    }
    /* This pass runs: the grid moves by the last pass's clock correction (see below). */
    clock_moved = move_next;
    if (clock_moved != 0) {
      for (size_t i = 0; i < n; i++) tau[i] += clock_moved;
      clock_offset_in += clock_moved;
    }
    if (drift_next != 0) {
      /* tau + r (tau - ref) = t_imu (1 + D)(1 + r) + O (1 + r) - r ref */
      for (size_t i = 0; i < n; i++) tau[i] += drift_next * (tau[i] - drift_ref);
      clock_offset_in += drift_next * (clock_offset_in - drift_ref);
      clock_drift_in = (1 + clock_drift_in) * (1 + drift_next) - 1;
    }
    grid_moved = clock_moved != 0 || drift_next != 0;
    rep->clock_drift = clock_drift_in;
    rep->clock_offset_s = clock_offset_in;
    rep->cam_frames_used = rep->cam_frames_rejected = rep->cam_frames_missing = 0;
    rep->imu_samples_saturated = rep->zupt_samples = rep->imu_gaps = rep->gate_recoveries = 0;
    ul.n = 0;
    for (size_t k = 0; k < cam->n; k++) {
      if (fstat[k] == FR_MISSING) continue;
      if (fstat[k] == FR_NONE) continue;   /* not on the IMU grid: not used either way */
      fdec[k] = (double)fres[k] <= s->gate_chi2 ? 2 : 1;
      fstat[k] = FR_NONE;
    }
  }
  /* This pass's flags are set from nothing (also on a path a run before used). */
  memset(path->flags, 0, sizeof *path->flags * n);
  /* Camera frames mapped to their nearest IMU sample (again after the grid moved). */
  if (pass == 0 || grid_moved) {
    memset(fstart, 0, sizeof *fstart * (n + 1));
    {
      size_t hint = 0, cnt = 0;
      size_t *fstep = malloc(sizeof *fstep * (cam->n ? cam->n : 1));
      if (!fstep) { st = AW_ERR_NO_MEMORY; goto out; }
      for (size_t k = 0; k < cam->n; k++) {
        fstep[k] = SIZE_MAX;
        if (!cam->valid[k]) { fstat[k] = FR_MISSING; continue; }
        double tk = cam->t_s[k];
        size_t i = aw_fusion_locate(tau, n, tk, &hint);
        if (i + 1 < n && fabs(tau[i + 1] - tk) < fabs(tk - tau[i])) i++;
        if (fabs(tk - tau[i]) > imu->dt_nom_s) continue;
        fstep[k] = i;
        fstart[i + 1]++;
      }
      for (size_t i = 0; i < n; i++) fstart[i + 1] += fstart[i];
      size_t *fill = calloc(n, sizeof *fill);
      if (!fill) { free(fstep); st = AW_ERR_NO_MEMORY; goto out; }
      for (size_t k = 0; k < cam->n; k++)
        if (fstep[k] != SIZE_MAX) { flist[fstart[fstep[k]] + fill[fstep[k]]++] = k; cnt++; }
      free(fill);
      free(fstep);
      (void)cnt;
    }
  }
  for (size_t k = 0; k < cam->n; k++) fres[k] = INFINITY;
  /* Initial state. */
  Nom x;
  memset(&x, 0, sizeof x);
  memcpy(x.q, cal->q_cam_body0, sizeof x.q);
  memcpy(x.bg, cal->gyro_bias_rad_s, sizeof x.bg);
  memcpy(x.g, cal->g_cam_m_s2, sizeof x.g);
  aw_fusion_eskf_lever0(s, cal, x.l);
  double P[NS][NS];
  memset(P, 0, sizeof P);
  {
    /* Position from the valid frame nearest the first sample. */
    size_t kb = SIZE_MAX;
    double best = INFINITY;
    for (size_t k = 0; k < cam->n; k++) {
      if (!cam->valid[k]) continue;
      double d = fabs(cam->t_s[k] - tau[0]);
      if (d < best) { best = d; kb = k; }
      if (cam->t_s[k] > tau[0] && d > best) break;
    }
    double sp = 0.5;
    if (kb != SIZE_MAX) {
      double R[3][3], Rl[3];
      aw_quat_to_mat(R, x.q);
      aw_mat_mul_v3(Rl, (const double (*)[3])R, m.lever);
      for (int a = 0; a < 3; a++) x.p[a] = cam->pos_m[kb][a] - Rl[a];
      double Rc[3][3];
      cam_noise(s, cam->noise_scale, cam->pos_m[kb], cam->conf ? cam->conf[kb] : 1, Rc);
      sp = sqrt(Rc[0][0] + Rc[1][1] + Rc[2][2] + 1e-4) + 2.0 * best;
    }
    double sv = imu->still[0] ? 0.05 : 1.5;
    double sbg = cal->still_found ? 0.1 * s->gyro_bias_init_rad_s : s->gyro_bias_init_rad_s;
    /* Gravity in the camera frame (the camera-to-gravity rotation) comes from the calibration's
     * fit of camera accelerations to rotated IMU specific forces plus a constant, and the
     * specific forces there still carry the accelerometer's offset: the fitted constant holds
     * the offset's mean over the fit, rotated, as well as the fit's own noise. Its prior is
     * therefore the offset's prior plus the fit's standard error, per axis (their correlation
     * with the bias state is left out, which errs on the wide side). A fixed 0.15 m/s^2
     * (0.9 degrees) was too narrow: the smoothed tilt was off by 1.5 degrees rms on normal
     * swings (seeds 9000 up). */
    double sg2 = s->accel_bias_init_m_s2 * s->accel_bias_init_m_s2 +
                 cal->gravity_fit_sigma_m_s2 * cal->gravity_fit_sigma_m_s2;
    for (int a = 0; a < 3; a++) {
      P[IP + a][IP + a] = sp * sp;
      P[IV + a][IV + a] = sv * sv;
      P[IT + a][IT + a] = 0.05 * 0.05;
      P[IBA + a][IBA + a] = s->accel_bias_init_m_s2 * s->accel_bias_init_m_s2;
      P[IBG + a][IBG + a] = sbg * sbg;
      P[IDG + a][IDG + a] = sg2;
      P[IL + a][IL + a] = s->lever_arm_sigma_m * s->lever_arm_sigma_m;
    }
    /* Clock: after the calibration's vector fit refined the offset, its own sigma (from that
     * fit's cost curvature) with one IMU interval added in quadrature: the fit compares the
     * streams sample by sample and cannot vouch for the offset below that. Without the
     * refinement, three times the correlation peak's spread plus 20 ms: asymmetric swing
     * shapes and sensor filter delays bias the peak by more than its width suggests. (The
     * stage-1 prior kept after the refinement was 2-3 times wider than the calibration's
     * sigma on hard swings and let the clock state wander; with this one held-out coverage
     * and RMSE p90 both improved: seeds 9000 up, 150 swings, 92.4 -> 93.5 %, 3.30 -> 3.01 cm.) */
    double cs = cal->clock_sigma_s;
    if (cs > 0)
      P[IC][IC] = cs * cs + imu->dt_nom_s * imu->dt_nom_s;
    else
      P[IC][IC] = 9 * rep->clock_offset_sigma_s * rep->clock_offset_sigma_s + 0.02 * 0.02;
    if (freeze & AW_ESKF_FREEZE_ATTITUDE)
      for (int a = 0; a < 3; a++) P[IT + a][IT + a] = P[IBG + a][IBG + a] = 0;
    if (freeze & AW_ESKF_FREEZE_CLOCK) P[IC][IC] = 0;
    if (freeze & AW_ESKF_FREEZE_LEVER)
      for (int a = 0; a < 3; a++) P[IL + a][IL + a] = 0;
  }

  /* Forward pass. */
  /* Zero-velocity updates: one per zupt_every IMU samples of stillness carries the variance
   * zupt_sigma^2 (one per 20 ms). They are made at the still nodes, and each stands for the
   * still samples since the node before (still_run): its variance is scaled by
   * zupt_every / still_run, so the information per second of stillness is the same as one
   * update per 20 ms, without nodes of their own (a node costs a covariance step forward and
   * an information step back: about a sixth of the bench swing's filter time). Checked on
   * seeds never used before (31000, 35000, 40000, 44000: 240 swings): RMSE per swing within
   * 1 % on easy and normal, 2 % lower on hard. */
  size_t zupt_every = (size_t)fmax(1.0, round(0.02 / imu->dt_nom_s));
  size_t still_run = 0;   /* still samples since the last node, this one included */
  double rej_since = NAN;
  size_t rej_count = 0;
  double nis_sum = 0;
  size_t nis_n = 0;
  size_t nn = 0, last_node = 0;
  Seg run;
  memset(&run, 0, sizeof run);
  for (size_t i = 0; i < n; i++) {
    ustart[i] = ul.n;
    if (i > 0) {
      Trans T;
      Nom xn;
      nominal_step(&m, i - 1, &x, &xn, &T);
      x = xn;
      seg_append(&run, &T);
      acc_v[i] = T.gap ? 0 : acc_v[i - 1] + T.ev;
      if (T.gap) { path->flags[i] |= AW_FUSED_NO_IMU; rep->imu_gaps++; }
    }
    bool frames_here = false;
    if (use_cam)
      for (size_t j = fstart[i]; j < fstart[i + 1]; j++) frames_here = frames_here || fdec[flist[j]] != 1;
    if (imu->still[i]) still_run++;
    bool node = i == 0 || i + 1 == n || frames_here || i - last_node >= max_run;
    bool zupt_here = node && imu->still[i];
    if (node) {
      if (i > 0) {
        propagate_cov(&run, P);
        if (segs) segs[nn] = run;
        memset(&run, 0, sizeof run);
      }
      nodes[nn] = i;
      xpri[nn] = x;
      last_node = i;
    }
    if (imu->sat_acc[i] || imu->sat_gyr[i]) {
      path->flags[i] |= AW_FUSED_IMU_SATURATED;
      rep->imu_samples_saturated++;
    }
    /* Zero-velocity update. */
    if (zupt_here) {
      double Hb[3][NH] = { { 0 } }, R[3][3] = { { 0 } }, y[3];
      for (int a = 0; a < 3; a++) {
        Hb[a][IV + a] = 1;
        R[a][a] = s->zupt_sigma_m_s * s->zupt_sigma_m_s * (double)zupt_every / (double)still_run;
        y[a] = -x.v[a];
      }
      Upd *u = upd_push(&ul);
      if (!u) { st = AW_ERR_NO_MEMORY; goto out; }
      bool acc;
      kf_update(P, &x, Hb, R, y, s->gate_chi2, 1, 0, false, true, &acc, u);
      if (acc) {
        u->step = (uint32_t)i;
        path->flags[i] |= AW_FUSED_STILL;
        rep->zupt_samples++;
        acc_v[i] = 0;
      }
      else ul.n--;
    }
    if (node) still_run = 0;
    if (imu->still[i]) path->flags[i] |= AW_FUSED_STILL;
    /* Camera frames. */
    if (use_cam)
      for (size_t j = fstart[i]; j < fstart[i + 1]; j++) {
        size_t k = flist[j];
        if (fdec[k] == 1) { fstat[k] = FR_REJECTED; rep->cam_frames_rejected++; continue; }
        double delta = cam->t_s[k] - tau[i];
        double h[3], Hb[3][NH], R[3][3], y[3];
        cam_predict(&m, &x, i, delta, h, Hb);
        cam_noise(s, cam->noise_scale, cam->pos_m[k], cam->conf ? cam->conf[k] : 1, R);
        timing_noise(&m, Hb, R);
        for (int a = 0; a < 3; a++) y[a] = cam->pos_m[k][a] - h[a];
        Upd *u = upd_push(&ul);
        if (!u) { st = AW_ERR_NO_MEMORY; goto out; }
        bool acc;
        double nis = kf_update(P, &x, Hb, R, y, s->gate_chi2, cam->conf ? cam->conf[k] : 1,
                               s->cam_outlier_sigma_m, fdec[k] == 2, false, &acc, u);
        if (!acc) {
          ul.n--;
          if (isnan(rej_since)) rej_since = cam->t_s[k];
          rej_count++;
          if (rej_count >= 3 && cam->t_s[k] - rej_since >= s->gate_recover_s && isfinite(nis)) {
            /* Consistent disagreement for longer than an occlusion snap lasts: the filter, not
             * the camera, has drifted. Re-open position and velocity and accept. */
            Upd *ui = upd_push(&ul);
            if (!ui) { st = AW_ERR_NO_MEMORY; goto out; }
            ui->kind = 1;
            ui->step = (uint32_t)i;
            double span = fmax(cam->t_s[k] - rej_since, 0.1);
            for (int a = 0; a < 3; a++) {
              ui->add[IP + a] = 4 * y[a] * y[a] + R[a][a];
              ui->add[IV + a] = 4 * y[a] * y[a] / (span * span);
            }
            for (int kk = 0; kk < NH; kk++) P[kk][kk] += ui->add[kk];
            cam_predict(&m, &x, i, delta, h, Hb);
            for (int a = 0; a < 3; a++) y[a] = cam->pos_m[k][a] - h[a];
            u = upd_push(&ul);
            if (!u) { st = AW_ERR_NO_MEMORY; goto out; }
            kf_update(P, &x, Hb, R, y, s->gate_chi2, 1, 0, true, false, &acc, u);
            u->step = (uint32_t)i;
            acc_v[i] = 0;
            rep->gate_recoveries++;
            fstat[k] = FR_ACCEPTED;
            rep->cam_frames_used++;
            rej_since = NAN;
            rej_count = 0;
          } else {
            fstat[k] = FR_REJECTED;
            rep->cam_frames_rejected++;
          }
        } else {
          u->step = (uint32_t)i;
          acc_v[i] = 0;
          fstat[k] = FR_ACCEPTED;
          rep->cam_frames_used++;
          nis_sum += nis;
          nis_n++;
          rej_since = NAN;
          rej_count = 0;
        }
      }
    xs[i] = x;
    if (node) {
      if (nn % B == 0) memcpy(Pck[nn / B], P, sizeof P);
      nn++;
    }
  }
  ustart[n] = ul.n;
  rep->cam_nis_mean = nis_n ? nis_sum / (double)nis_n : (double)NAN;
  for (size_t k = 0; k < cam->n; k++) if (fstat[k] == FR_MISSING) rep->cam_frames_missing++;

  /* Backward pass (Bryson-Frazier), node by node; the samples between two nodes are written
   * when the earlier node is reached. */
  {
    double (*L)[NS] = calloc(NS, sizeof *L);
    double lam[NS] = { 0 };
    if (!L) { st = AW_ERR_NO_MEMORY; goto out; }
    size_t blk_loaded = SIZE_MAX;
    size_t imid = n / 2;
    /* The later node of the run being stepped back over: its correction relative to its
     * nominal state before its updates (the end of the run's nominal chain) and its variance. */
    double dn[NS] = { 0 }, varn[3] = { 0 };
    size_t inext = SIZE_MAX;
    for (size_t q = nn; q-- > 0;) {
      size_t ii = nodes[q];
      size_t b = q / B;
      if (B > 1 && b != blk_loaded) {
        /* Recompute the posterior covariances of this block's nodes from its checkpoint (with
         * B = 1 every node's is stored and read in place). */
        size_t q0 = b * B, q1 = q0 + B < nn ? q0 + B : nn;
        memcpy(Pblk[0], Pck[b], sizeof Pblk[0]);
        for (size_t qq = q0 + 1; qq < q1; qq++) {
          Seg sg;
          run_transition(&m, xs, nodes[qq - 1], nodes[qq], &sg);
          memcpy(Pblk[qq - q0], Pblk[qq - q0 - 1], sizeof Pblk[0]);
          propagate_cov(&sg, Pblk[qq - q0]);
          size_t i = nodes[qq];
          for (size_t u = ustart[i]; u < ustart[i + 1]; u++) replay_update(Pblk[qq - q0], &ul.v[u]);
        }
        blk_loaded = b;
      }
      double (*Pk)[NS] = B > 1 ? Pblk[q - b * B] : Pck[q];
      /* Smoothed error and covariance at this node. */
      double d[NS];
      /* d = -P lambda as a sum of P's rows (P is exactly symmetric). */
      memset(d, 0, sizeof d);
      for (int k = 0; k < NS; k++) {
        double lk = -lam[k];
        for (int c = 0; c < NS; c++) d[c] += lk * Pk[k][c];
      }
      Nom xsm = xs[ii];
      inject(&xsm, d);
      double R[3][3], Rl[3];
      aw_quat_to_mat(R, xsm.q);
      aw_mat_mul_v3(Rl, (const double (*)[3])R, xsm.l);
      double ksig2[3];
      {
        /* keypoint = p + R l: J = [I, 0, -[Rl]x, R, 0 ...]; smoothed P_s = P - P L P, so
         * J P_s J^T = J P J^T - (J P) L (J P)^T. */
        double S[3][3], JP[3][NS];
        skew(S, Rl);
        for (int r = 0; r < 3; r++)
          for (int c = 0; c < NS; c++) {
            double acc = Pk[IP + r][c];
            for (int k = 0; k < 3; k++) acc += -S[r][k] * Pk[IT + k][c] + R[r][k] * Pk[IL + k][c];
            JP[r][c] = acc;
          }
        /* red_r = JP_r L JP_r^T from L's upper triangle (L is exactly symmetric): each row k
         * contributes JP_r[k] (L[k][k] JP_r[k] / 2 + sum over c > k of L[k][c] JP_r[c]), twice. */
        double reds[3] = { 0, 0, 0 };
        for (int k = 0; k < NS; k++) {
          const double *Lk = L[k];
          double t0 = 0.5 * Lk[k] * JP[0][k], t1 = 0.5 * Lk[k] * JP[1][k], t2 = 0.5 * Lk[k] * JP[2][k];
          for (int c = k + 1; c < NS; c++) {
            t0 += Lk[c] * JP[0][c];
            t1 += Lk[c] * JP[1][c];
            t2 += Lk[c] * JP[2][c];
          }
          reds[0] += JP[0][k] * t0;
          reds[1] += JP[1][k] * t1;
          reds[2] += JP[2][k] * t2;
        }
        for (int r = 0; r < 3; r++) {
          double jpj = JP[r][IP + r];
          for (int k = 0; k < 3; k++) jpj += -S[r][k] * JP[r][IT + k] + R[r][k] * JP[r][IL + k];
          double red = 2.0 * reds[r];
          /* The smoothed variance can never exceed the filtered one; where rounding makes
           * P - P L P lose positive definiteness (seen after a long IMU gap), the filtered
           * variance is the honest bound, never a near-zero sigma. */
          double var = jpj - red;
          if (!(var > 1e-12) || !isfinite(var)) var = jpj;
          ksig2[r] = fmax(var, 1e-12);
        }
      }
      write_sample(&m, path, ii, &xsm, R, Rl, ksig2);
      if (use_cam) frame_residuals(&m, cam, fstart, flist, ii, &xsm, ksig2, fres);
      if (ii == imid) report_mid(rep, &xsm, &c_mid);
      /* The samples up to the next node: their nominal states continue this node's without an
       * update, so the correction moves linearly from this node's to the next one's (relative
       * to the same chain), and so does the variance. */
      if (inext != SIZE_MAX)
        for (size_t j = ii + 1; j < inext; j++) {
          double w = (tau[j] - tau[ii]) / (tau[inext] - tau[ii]), dj[NS], vj[3], Rj[3][3], Rlj[3];
          for (int k = 0; k < NS; k++) dj[k] = (1 - w) * d[k] + w * dn[k];
          for (int a = 0; a < 3; a++) vj[a] = (1 - w) * ksig2[a] + w * varn[a];
          Nom xj = xs[j];
          inject(&xj, dj);
          aw_quat_to_mat(Rj, xj.q);
          aw_mat_mul_v3(Rlj, (const double (*)[3])Rj, xj.l);
          write_sample(&m, path, j, &xj, Rj, Rlj, vj);
          /* Frames left out of this pass fall between nodes: they are judged here. */
          if (use_cam) frame_residuals(&m, cam, fstart, flist, j, &xj, vj, fres);
          if (j == imid) report_mid(rep, &xj, &c_mid);
        }
      nom_diff(&xsm, &xpri[q], dn);
      memcpy(varn, ksig2, sizeof varn);
      inext = ii;
      /* Undo this node's updates (last first), then step back through the run before it. */
      for (size_t u = ustart[ii + 1]; u-- > ustart[ii];) bf_update(L, lam, &ul.v[u]);
      if (q > 0) {
        Seg sg;
        const Seg *sp = segs ? &segs[q] : &sg;
        if (!segs) run_transition(&m, xs, nodes[q - 1], ii, &sg);
        apply_Ft_vec(sp, lam);
        congruence_Ft(sp, L);
      }
    }
    free(L);
  }
  /* The camera model extrapolates the IMU state at a sample by the frame's time offset minus
   * the clock correction c (cam_predict), with constant acceleration: good for a few
   * milliseconds, poor for tens in a downswing, where the linearisation then biases c itself.
   * So when the smoothed c is more than a quarter of an IMU interval, the grid moves by it and
   * the next pass starts from there with c = 0 (Gauss-Newton relinearisation, as in the
   * iterated Kalman smoother: B. M. Bell, "The iterated Kalman smoother as a Gauss-Newton
   * method", SIAM J. Optim. 4(3), 1994; here only the clock is relinearised and its prior
   * recentred, a simplification). The move rides on a pass the frame selection makes anyway:
   * forcing passes for it doubled the filter's cost on the bench swing for no clear gain. The
   * move is made when the next pass starts: when none runs, this pass's path, flags and clock
   * stand on the grid it was computed on (moving the grid anyway left the per-sample camera
   * flags below computed on a grid shifted by c). */
  move_next = 0;
  if (use_cam && pass + 1 < n_pass && fabs(c_mid) > 0.25 * imu->dt_nom_s && fabs(c_mid) < 0.5)
    move_next = c_mid;
  /* The clock's drift beyond the grid's (drift_line). When its line moves the clock by more
   * than a quarter of an IMU interval at the recording's ends, the next pass moves the grid by
   * it, as by the constant correction above (Gauss-Newton again; |r| bounded by the largest
   * drift the calibration accepts). When the grid's drift is also outside the estimate's
   * 2-sigma interval, the next pass runs even if the frame selection did not change (a line
   * its own sigma cannot tell from the grid's is not worth a pass: a 30-minute recording
   * holding one swing has no information on the drift, and its posterior moved 3 ppm). */
  drift_next = 0;
  drift_force = false;
  if (drift_on) {
    double tref = tau[n / 2];
    double r = drift_line(&m, xs, nodes, nn, segs, ustart, &ul, tref, clock_drift_in,
                          clock_offset_in, rep);
    double ends = fmax(tau[n - 1] - tref, tref - tau[0]);
    if (pass + 1 < n_pass && fabs(r) * ends > 0.25 * imu->dt_nom_s && fabs(r) <= 5e-4) {
      drift_next = r;
      drift_ref = tref + move_next;
      drift_force = fabs(r) > 2 * rep->clock_drift_sigma;
    }
  }
  agree_last = 0;
  for (size_t k = 0; k < cam->n; k++)
    if ((fstat[k] == FR_ACCEPTED || fstat[k] == FR_REJECTED) && (double)fres[k] <= s->gate_chi2) agree_last++;
  }   /* passes */
  if (have_best && (agree_last < agree_best || rep->gate_recoveries > 0))
    pass_result_copy(&kept, path, fstat, cam->n, false);

  /* Per-sample camera status from the frame nearest the sample's output time (its time on
   * the camera's clock, the grid plus the smoothed clock correction). */
  {
    size_t hint = 0;
    double half = 0.75 * cam->dt_nom_s;
    for (size_t i = 0; i < n; i++) {
      uint32_t fl = AW_FUSED_CAM_MISSING;
      double ti = path->t_s[i];
      if (cam->n > 0) {
        size_t k = aw_fusion_locate(cam->t_s, cam->n, ti, &hint);
        if (k + 1 < cam->n && fabs(cam->t_s[k + 1] - ti) < fabs(ti - cam->t_s[k])) k++;
        if (fabs(cam->t_s[k] - ti) <= half) {
          if (fstat[k] == FR_ACCEPTED) fl = AW_FUSED_CAM_ACCEPTED;
          else if (fstat[k] == FR_REJECTED) fl = AW_FUSED_CAM_REJECTED;
          else if (fstat[k] == FR_NONE && cam->valid[k] && !use_cam) fl = 0;
        }
      }
      path->flags[i] |= fl;
    }
  }
  for (size_t i = 0; i < n; i++) {
    bool ok = true;
    for (int a = 0; a < 3; a++)
      ok = ok && isfinite(path->pos_cam_m[i][a]) && isfinite(path->vel_cam_m_s[i][a]) &&
           isfinite(path->pos_sigma_cam_m[i][a]);
    if (!ok) {
      st = aw_error_set(err, AW_ERR_NON_FINITE, "fusion", 0, 0,
                        "the filter diverged at sample %zu (t = %.3f s)", i, tau[i]);
      goto out;
    }
  }
out:
  free(fstart); free(flist); free(fstat); free(fdec); free(fres); free(xs); free(Pck); free(Pblk); free(ustart);
  free(segs);
  pass_result_free(&kept);
  free(nodes);
  free(xpri);
  free(acc_v);
  free(tau);
  free(ul.v);
  if (st == AW_ERR_NO_MEMORY) aw_error_set(err, st, "fusion", 0, 0, "out of memory");
  return st;
}
