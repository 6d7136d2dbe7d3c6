/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Camera-only estimate: a white-jerk motion model (position, velocity, acceleration per camera
 * axis; Y. Bar-Shalom, X. R. Li, T. Kirubarajan, "Estimation with Applications to Tracking and
 * Navigation", Wiley 2001, section 6.2.3) through a Kalman filter with the same depth-dependent
 * camera noise and chi-square gate as the fusion, and a Rauch-Tung-Striebel smoother. It is the
 * output when the IMU is masked and the reference for the camera's share of the information.
 *
 * The filter runs at the camera's frames (storage proportional to the frames) and the smoothed
 * state is then interpolated onto the IMU grid by the smoother's own recursion between two
 * frames, which is exact for this model. The jerk density is estimated from the frames by the
 * method of moments on third differences: for white jerk of density q sampled every h seconds,
 * Var(third difference) = (11/20) q h^5 (the integral of the squared quadratic B-spline), plus
 * 20 sigma^2 of camera noise. When the path itself is the output (IMU masked), frames the
 * smoothed path contradicts (normalised smoothed residual over the gate) are left out and the
 * frames smoothed again, at most twice: one jerk density for a whole recording makes the forward
 * gate as wide as the swing, and a keypoint snap in a still stretch passes it. */
#include "fusion-internal.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

typedef struct { double x[3], P[3][3]; } Ax;

/* The covariance step of predict: F P F^T + sign(dt) q Q(|dt|), its first nrow rows. F's zeros
 * and ones are left out of the products (a product with 1 is exact and one with 0 adds
 * nothing), so every sum is the full 3 x 3 product's, term for term in the same order, at a
 * third of the operations. */
static inline __attribute__((always_inline)) void
predict_P_rows(const double P[3][3], double dt, double q, int nrow, double out[3][3])
{
  double h = 0.5 * dt * dt;   /* F = { { 1, dt, h }, { 0, 1, dt }, { 0, 0, 1 } } */
  double d2 = dt * dt, d3 = d2 * dt, d4 = d3 * dt, d5 = d4 * dt;
  double Q[3][3] = { { d5 / 20, d4 / 8, d3 / 6 }, { d4 / 8, d3 / 3, d2 / 2 }, { d3 / 6, d2 / 2, dt } };
  double FP[3][3];
  for (int c = 0; c < 3; c++) {
    FP[0][c] = P[0][c] + dt * P[1][c] + h * P[2][c];
    FP[1][c] = P[1][c] + dt * P[2][c];
    FP[2][c] = P[2][c];
  }
  double sdt = dt >= 0 ? 1.0 : -1.0;   /* backward extrapolation still adds noise */
  for (int r = 0; r < nrow; r++) {
    out[r][0] = FP[r][0] + dt * FP[r][1] + h * FP[r][2] + sdt * q * Q[r][0];
    out[r][1] = FP[r][1] + dt * FP[r][2] + sdt * q * Q[r][1];
    out[r][2] = FP[r][2] + sdt * q * Q[r][2];
  }
}

static void
predict_P(const double P[3][3], double dt, double q, double out[3][3])
{
  predict_P_rows(P, dt, q, 3, out);
}

/* The state step of predict: F x. */
static void
predict_x(const double x[3], double dt, double out[3])
{
  double h = 0.5 * dt * dt;
  out[0] = x[0] + dt * x[1] + h * x[2];
  out[1] = x[1] + dt * x[2];
  out[2] = x[2];
}

static void
predict(const Ax *in, double dt, double q, Ax *out)
{
  predict_x(in->x, dt, out->x);
  predict_P((const double (*)[3])in->P, dt, q, out->P);
}

static bool
inv3s(double A[3][3], double Ai[3][3])
{
  double c00 = A[1][1] * A[2][2] - A[1][2] * A[2][1];
  double c01 = A[1][2] * A[2][0] - A[1][0] * A[2][2];
  double c02 = A[1][0] * A[2][1] - A[1][1] * A[2][0];
  double det = A[0][0] * c00 + A[0][1] * c01 + A[0][2] * c02;
  if (!(fabs(det) > 1e-300)) return false;
  double id = 1.0 / det;
  Ai[0][0] = c00 * id; Ai[0][1] = (A[0][2] * A[2][1] - A[0][1] * A[2][2]) * id;
  Ai[0][2] = (A[0][1] * A[1][2] - A[0][2] * A[1][1]) * id;
  Ai[1][0] = c01 * id; Ai[1][1] = (A[0][0] * A[2][2] - A[0][2] * A[2][0]) * id;
  Ai[1][2] = (A[0][2] * A[1][0] - A[0][0] * A[1][2]) * id;
  Ai[2][0] = c02 * id; Ai[2][1] = (A[0][1] * A[2][0] - A[0][0] * A[2][1]) * id;
  Ai[2][2] = (A[0][0] * A[1][1] - A[0][1] * A[1][0]) * id;
  return true;
}

/* RTS step: smoothed s at t given filtered f at t, prediction p of the next knot from f with
 * Pi = p->P^-1, and the next knot's smoothed sn; dt from t to the next knot. Without with_x
 * only the covariance (s->x is then f's). */
static void
rts(const Ax *f, const Ax *p, const double Pi[3][3], const Ax *sn, double dt, bool with_x, Ax *s)
{
  double F[3][3] = { { 1, dt, 0.5 * dt * dt }, { 0, 1, dt }, { 0, 0, 1 } };
  double PFt[3][3], G[3][3];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      PFt[r][c] = 0;
      for (int k = 0; k < 3; k++) PFt[r][c] += f->P[r][k] * F[c][k];
    }
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      G[r][c] = 0;
      for (int k = 0; k < 3; k++) G[r][c] += PFt[r][k] * Pi[k][c];
    }
  double dx[3], dP[3][3], GdP[3][3];
  for (int r = 0; r < 3; r++) {
    dx[r] = sn->x[r] - p->x[r];
    for (int c = 0; c < 3; c++) dP[r][c] = sn->P[r][c] - p->P[r][c];
  }
  for (int r = 0; r < 3; r++) {
    s->x[r] = f->x[r];
    if (with_x)
      for (int k = 0; k < 3; k++) s->x[r] += G[r][k] * dx[k];
    for (int c = 0; c < 3; c++) {
      GdP[r][c] = 0;
      for (int k = 0; k < 3; k++) GdP[r][c] += G[r][k] * dP[k][c];
    }
  }
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      double a = f->P[r][c];
      for (int k = 0; k < 3; k++) a += GdP[r][k] * G[c][k];
      s->P[r][c] = a;
    }
  for (int r = 0; r < 3; r++)
    for (int c = r + 1; c < 3; c++) { double m = 0.5 * (s->P[r][c] + s->P[c][r]); s->P[r][c] = m; s->P[c][r] = m; }
}

/* Only s->P[0][0] of rts (the position variance) from the three covariances and Pi = Pp^-1,
 * with the same arithmetic in the same order (F's zeros and ones left out as in predict_P). */
static double
rts_p00(const double Pf[3][3], const double Pp[3][3], const double Pi[3][3],
        const double Ps[3][3], double dt)
{
  double h = 0.5 * dt * dt;
  double G0[3], GdP0[3];
  /* row 0 of Pf F^T */
  double PFt0[3] = { Pf[0][0] + dt * Pf[0][1] + h * Pf[0][2], Pf[0][1] + dt * Pf[0][2], Pf[0][2] };
  for (int c = 0; c < 3; c++) {
    G0[c] = 0;
    for (int k = 0; k < 3; k++) G0[c] += PFt0[k] * Pi[k][c];
  }
  for (int c = 0; c < 3; c++) {
    GdP0[c] = 0;
    for (int k = 0; k < 3; k++) GdP0[c] += G0[k] * (Ps[k][c] - Pp[k][c]);
  }
  double a = Pf[0][0];
  for (int k = 0; k < 3; k++) a += GdP0[k] * G0[k];
  return a;
}

static void
noise_var(const AwFusionSettings *s, const double scale[2], const double p[3], double conf, double var[3])
{
  double z = fmax(p[2], 0.1);
  double sxy = scale[0] * s->cam_sigma_xy_m * z, sz = scale[1] * s->cam_sigma_z_coeff_per_m * z * z;
  double w = 1.0 / fmax(conf, 0.05);
  var[0] = var[1] = sxy * sxy * w;
  var[2] = sz * sz * w;
}

static double
estimate_jerk_psd(const AwCamPrep *cam, const AwFusionSettings *s)
{
  size_t cap = cam->n, m = 0;
  double *e = malloc(sizeof *e * (cap ? cap : 1));
  if (!e) return 1e4;
  double h = cam->dt_nom_s, raw = 0;
  for (size_t k = 0; k + 3 < cam->n; k++) {
    if (!cam->valid[k] || !cam->valid[k + 1] || !cam->valid[k + 2] || !cam->valid[k + 3]) continue;
    bool even = true;
    for (int j = 0; j < 3; j++) {
      double d = cam->t_s[k + j + 1] - cam->t_s[k + j];
      if (fabs(d - h) > 0.2 * h) even = false;
    }
    if (!even) continue;
    double sum = 0, var[3];
    noise_var(s, cam->noise_scale, cam->pos_m[k + 1], cam->conf ? cam->conf[k + 1] : 1, var);
    for (int a = 0; a < 3; a++) {
      double d3 = cam->pos_m[k + 3][a] - 3 * cam->pos_m[k + 2][a] + 3 * cam->pos_m[k + 1][a] - cam->pos_m[k][a];
      sum += d3 * d3 - 20 * var[a];
      raw += d3 * d3;
    }
    e[m++] = sum / 3.0;
  }
  double q = 1e4;
  if (m >= 5) {
    /* Mean after dropping values beyond 50 times the median (identity swaps, snaps). */
    double *t = malloc(sizeof *t * m);
    if (t) {
      memcpy(t, e, sizeof *t * m);
      double med = fabs(aw_fusion_kth(t, m, m / 2)) + 1e-12, acc = 0;
      size_t c = 0;
      for (size_t i = 0; i < m; i++) if (e[i] < 50 * med) { acc += e[i]; c++; }
      free(t);
      if (c > 0) q = acc / (double)c / (0.55 * pow(h, 5));
      /* When the camera is quieter than its noise model, the difference says little: keep at
       * least a quarter of what the raw third differences imply. */
      q = fmax(q, 0.25 * raw / (3.0 * (double)m) / (0.55 * pow(h, 5)));
    }
  }
  free(e);
  /* Floor and ceiling: a still wrist still trembles; nothing human exceeds ~1e8 m^2/s^5. */
  return fmin(fmax(q, 10.0), 1e8);
}

/* One forward filter and RTS smoother over the frames. `drop` (NULL, or one per frame) names
 * frames left out whatever the gate says; kk[j] is the frame behind knot j. The lateral axes
 * x and y share the noise model, so their covariances are bitwise equal until a gate recovery
 * inflates them apart: until then y's are copied from x's. */
typedef struct {
  Ax (*F)[3], (*Pp)[3], (*Sm)[3];
  double *tk;
  size_t *kk;
  /* Per knot from the second: the inverse of Pp's covariance per axis (pi_ok: it exists), and
   * whether Pp is the plain prediction from the knot before (a gate recovery inflates it). */
  double (*Pi)[3][3][3];
  unsigned char (*pi_ok)[3], *plain;
  size_t m, rej, rec;
  double nis_sum;
  bool with_x;   /* the smoothed states are wanted (else only the covariances) */
} Pass;

static void
pass_free(Pass *ps)
{
  free(ps->F); free(ps->Pp); free(ps->Sm); free(ps->tk); free(ps->kk);
  free(ps->Pi); free(ps->pi_ok); free(ps->plain);
}

/* The prediction of knot j + 1 (and its covariance's inverse) from ft, the state at a time
 * d2 before it and after knot j as predicted from that knot: the knot's stored prediction when
 * a gate recovery did not inflate it (the white-jerk model's predictions compose exactly: over
 * d1 and then d2 is over d1 + d2), else computed into own (its x only with_x). False when the
 * covariance has no inverse. */
static bool
next_pred(const Pass *ps, size_t j, int a, const Ax *ft, double d2, double q, bool with_x,
          Ax *own, double Pi_own[3][3], const Ax **pn, const double (**Pi)[3])
{
  if (ps->plain[j + 1] && ps->pi_ok[j + 1][a]) {
    *pn = &ps->Pp[j + 1][a];
    *Pi = (const double (*)[3])ps->Pi[j + 1][a];
    return true;
  }
  if (with_x) predict(ft, d2, q, own);
  else predict_P((const double (*)[3])ft->P, d2, q, own->P);
  *pn = own;
  *Pi = (const double (*)[3])Pi_own;
  return inv3s(own->P, Pi_own);
}

static void
pass_run(const AwCamPrep *cam, const AwFusionSettings *s, double q, const unsigned char *drop,
         Pass *ps)
{
  Ax (*F)[3] = ps->F, (*Pp)[3] = ps->Pp, (*Sm)[3] = ps->Sm;
  double *tk = ps->tk;
  memset(ps->plain, 1, cam->n_valid);   /* until a gate recovery says otherwise */
  size_t m = 0, rej = 0, rec = 0;
  double nis_sum = 0, rej_since = NAN;
  size_t rej_run = 0;
  Ax cur[3];
  double tcur = 0;
  for (size_t k = 0; k < cam->n; k++) {
    if (!cam->valid[k]) continue;
    if (drop && drop[k]) { rej++; continue; }
    double var[3];
    noise_var(s, cam->noise_scale, cam->pos_m[k], cam->conf ? cam->conf[k] : 1, var);
    if (m == 0) {
      for (int a = 0; a < 3; a++) {
        memset(&cur[a], 0, sizeof cur[a]);
        cur[a].x[0] = cam->pos_m[k][a];
        cur[a].P[0][0] = var[a];
        cur[a].P[1][1] = 4.0;      /* +-2 m/s: the wrist may already be moving */
        cur[a].P[2][2] = 2500.0;   /* +-50 m/s^2 */
        F[0][a] = cur[a];
        Pp[0][a] = cur[a];
      }
      tk[0] = cam->t_s[k];
      ps->kk[0] = k;
      tcur = tk[0];
      m = 1;
      continue;
    }
    double dt = cam->t_s[k] - tcur;
    Ax pr[3];
    double nis = 0;
    for (int a = 0; a < 3; a++) {
      if (a == 1 && rec == 0) {
        predict_x(cur[1].x, dt, pr[1].x);
        memcpy(pr[1].P, pr[0].P, sizeof pr[1].P);
      } else predict(&cur[a], dt, q, &pr[a]);
      double y = cam->pos_m[k][a] - pr[a].x[0], S = pr[a].P[0][0] + var[a];
      nis += y * y / S;
    }
    bool accept = nis <= s->gate_chi2;
    if (!accept) {
      if (isnan(rej_since)) rej_since = cam->t_s[k];
      rej_run++;
      if (rej_run >= 3 && cam->t_s[k] - rej_since >= s->gate_recover_s) {
        ps->plain[m] = 0;
        for (int a = 0; a < 3; a++) {
          double y = cam->pos_m[k][a] - pr[a].x[0];
          pr[a].P[0][0] += 4 * y * y + var[a];
        }
        accept = true;
        rec++;
      }
    }
    if (!accept) { rej++; continue; }
    rej_since = NAN;
    rej_run = 0;
    nis_sum += nis;
    double K0[3] = { 0, 0, 0 };   /* x's gain (axis 0 comes first) */
    for (int a = 0; a < 3; a++) {
      Ax u = pr[a];
      double S = pr[a].P[0][0] + var[a], y = cam->pos_m[k][a] - pr[a].x[0];
      bool copy = a == 1 && rec == 0;   /* y's gain and covariance are x's */
      double K[3];
      if (copy) memcpy(K, K0, sizeof K);
      else { K[0] = pr[a].P[0][0] / S; K[1] = pr[a].P[1][0] / S; K[2] = pr[a].P[2][0] / S; }
      if (a == 0) memcpy(K0, K, sizeof K0);
      for (int r = 0; r < 3; r++) u.x[r] += K[r] * y;
      /* Joseph-equivalent: P - K S K^T */
      if (copy) memcpy(u.P, F[m][0].P, sizeof u.P);
      else
        for (int r = 0; r < 3; r++)
          for (int c = 0; c < 3; c++) u.P[r][c] = pr[a].P[r][c] - K[r] * S * K[c];
      cur[a] = u;
      F[m][a] = u;
      Pp[m][a] = pr[a];
    }
    tk[m] = cam->t_s[k];
    ps->kk[m] = k;
    tcur = tk[m];
    m++;
  }
  if (m > 0) {
    for (int a = 0; a < 3; a++) Sm[m - 1][a] = F[m - 1][a];
    for (size_t j = m - 1; j-- > 0;)
      for (int a = 0; a < 3; a++) {
        if (a == 1 && rec == 0) {
          /* y's inverse and smoothed covariance are x's (only the state is y's own) */
          ps->pi_ok[j + 1][1] = ps->pi_ok[j + 1][0];
          memcpy(ps->Pi[j + 1][1], ps->Pi[j + 1][0], sizeof ps->Pi[j + 1][1]);
          if (ps->with_x && ps->pi_ok[j + 1][1]) {
            rts(&F[j][1], &Pp[j + 1][1], (const double (*)[3])ps->Pi[j + 1][1], &Sm[j + 1][1],
                tk[j + 1] - tk[j], true, &Sm[j][1]);
            continue;
          }
          memcpy(Sm[j][1].x, F[j][1].x, sizeof Sm[j][1].x);
          memcpy(Sm[j][1].P, Sm[j][0].P, sizeof Sm[j][1].P);
          continue;
        }
        ps->pi_ok[j + 1][a] = inv3s(Pp[j + 1][a].P, ps->Pi[j + 1][a]);
        if (ps->pi_ok[j + 1][a])
          rts(&F[j][a], &Pp[j + 1][a], (const double (*)[3])ps->Pi[j + 1][a], &Sm[j + 1][a],
              tk[j + 1] - tk[j], ps->with_x, &Sm[j][a]);
        else Sm[j][a] = F[j][a];
      }
  }
  ps->m = m;
  ps->rej = rej;
  ps->rec = rec;
  ps->nis_sum = nis_sum;
}

/* Frames the smoothed path contradicts: for a frame the smoother used, z - x_s has variance
 * R - P_s (Bar-Shalom et al. 2001, the smoothed residual), so a frame whose normalised smoothed
 * residual exceeds the gate was an outlier the forward gate could not see (a snap in a still
 * phase passes a gate as wide as the swing's motion model). Returns how many were added. */
static size_t
mark_contradicted(const AwCamPrep *cam, const AwFusionSettings *s, const Pass *ps,
                  unsigned char *drop)
{
  size_t added = 0;
  for (size_t j = 0; j < ps->m; j++) {
    size_t k = ps->kk[j];
    double var[3], r = 0;
    noise_var(s, cam->noise_scale, cam->pos_m[k], cam->conf ? cam->conf[k] : 1, var);
    for (int a = 0; a < 3; a++) {
      double y = cam->pos_m[k][a] - ps->Sm[j][a].x[0];
      double v = fmax(var[a] - ps->Sm[j][a].P[0][0], 0.05 * var[a]);
      r += y * y / v;
    }
    if (r > s->gate_chi2) { drop[k] = 1; added++; }
  }
  return added;
}

AwStatus
aw_fusion_camonly_run(const AwCamPrep *cam, const double *tau, size_t n,
                      const AwFusionSettings *s, double *jerk_psd_inout, double (*pos)[3],
                      double (*vel)[3], double (*sig)[3], double *nis_mean, size_t *rejected,
                      size_t *recoveries)
{
  double q = jerk_psd_inout && *jerk_psd_inout > 0 ? *jerk_psd_inout : estimate_jerk_psd(cam, s);
  if (jerk_psd_inout) *jerk_psd_inout = q;
  size_t nv = cam->n_valid;
  if (nv == 0) return AW_ERR_TOO_FEW;
  /* Per accepted frame and axis: filtered, predicted-from-previous, smoothed. */
  Pass ps = { 0 };
  ps.with_x = pos || vel;
  ps.F = malloc(sizeof *ps.F * nv);
  ps.Pp = malloc(sizeof *ps.Pp * nv);
  ps.Sm = malloc(sizeof *ps.Sm * nv);
  ps.tk = malloc(sizeof *ps.tk * nv);
  ps.kk = malloc(sizeof *ps.kk * nv);
  ps.Pi = malloc(sizeof *ps.Pi * nv);
  ps.pi_ok = malloc(sizeof *ps.pi_ok * nv);
  ps.plain = malloc(nv);
  unsigned char *drop = NULL;
  if (!ps.F || !ps.Pp || !ps.Sm || !ps.tk || !ps.kk || !ps.Pi || !ps.pi_ok || !ps.plain) goto nomem;
  pass_run(cam, s, q, NULL, &ps);
  /* The path itself is wanted (the IMU is masked): leave out what the smoothed path
   * contradicts and smooth again, at most twice (each pass only ever drops frames). Only the
   * sigmas wanted: one pass, since a dropped frame barely moves them. */
  if (pos && ps.m > 0) {
    drop = calloc(cam->n, 1);
    if (!drop) goto nomem;
    for (int it = 0; it < 2 && mark_contradicted(cam, s, &ps, drop) > 0; it++)
      pass_run(cam, s, q, drop, &ps);
  }
  free(drop);
  size_t m = ps.m, rej = ps.rej, rec = ps.rec;
  double nis_sum = ps.nis_sum;
  Ax (*F)[3] = ps.F, (*Sm)[3] = ps.Sm;
  double *tk = ps.tk;
  if (m == 0) { pass_free(&ps); return AW_ERR_TOO_FEW; }
  /* Onto the IMU grid. */
  size_t hint = 0;
  for (size_t i = 0; i < n; i++) {
    double t = tau[i];
    Ax out[3];
    if (t <= tk[0] || m == 1) {
      for (int a = 0; a < 3; a++) predict(&Sm[0][a], t - tk[0], q, &out[a]);
    } else if (t >= tk[m - 1]) {
      for (int a = 0; a < 3; a++) predict(&Sm[m - 1][a], t - tk[m - 1], q, &out[a]);
    } else if (!pos && !vel) {
      /* Only the position sigma is wanted: the smoothed position variance alone, and the
       * second axis copied from the first while their covariances are bitwise the same (the
       * x and y noise are equal; a gate recovery inflates them apart). */
      size_t j = aw_fusion_locate(tk, m, t, &hint);
      for (int a = 0; a < 3; a++) {
        if (a == 1 && (ps.rec == 0 || (memcmp(F[j][1].P, F[j][0].P, sizeof F[j][0].P) == 0 &&
                                       memcmp(Sm[j + 1][1].P, Sm[j + 1][0].P, sizeof Sm[j][0].P) == 0))) {
          out[1].P[0][0] = out[0].P[0][0];
          continue;
        }
        Ax ft, own;
        double Pi_own[3][3];
        const Ax *pn;
        const double (*Pi)[3];
        /* rts_p00 reads the first row of ft's covariance; the rest only when the next knot's
         * prediction is formed again from it (next_pred) */
        if (ps.plain[j + 1] && ps.pi_ok[j + 1][a])
          predict_P_rows((const double (*)[3])F[j][a].P, t - tk[j], q, 1, ft.P);
        else predict_P((const double (*)[3])F[j][a].P, t - tk[j], q, ft.P);
        if (!next_pred(&ps, j, a, &ft, tk[j + 1] - t, q, false, &own, Pi_own, &pn, &Pi)) {
          out[a].P[0][0] = ft.P[0][0];
          continue;
        }
        out[a].P[0][0] = rts_p00((const double (*)[3])ft.P, (const double (*)[3])pn->P, Pi,
                                 (const double (*)[3])Sm[j + 1][a].P, tk[j + 1] - t);
      }
    } else {
      size_t j = aw_fusion_locate(tk, m, t, &hint);
      for (int a = 0; a < 3; a++) {
        Ax ft, own;
        double Pi_own[3][3];
        const Ax *pn;
        const double (*Pi)[3];
        predict(&F[j][a], t - tk[j], q, &ft);
        if (next_pred(&ps, j, a, &ft, tk[j + 1] - t, q, true, &own, Pi_own, &pn, &Pi))
          rts(&ft, pn, Pi, &Sm[j + 1][a], tk[j + 1] - t, true, &out[a]);
        else out[a] = ft;
      }
    }
    for (int a = 0; a < 3; a++) {
      if (pos) pos[i][a] = out[a].x[0];
      if (vel) vel[i][a] = out[a].x[1];
      if (sig) sig[i][a] = sqrt(fmax(out[a].P[0][0], 0));
    }
  }
  if (nis_mean) *nis_mean = m > 1 ? nis_sum / (double)(m - 1) : (double)NAN;
  if (rejected) *rejected = rej;
  if (recoveries) *recoveries = rec;
  pass_free(&ps);
  return AW_OK;
nomem:
  pass_free(&ps);
  return AW_ERR_NO_MEMORY;
}
