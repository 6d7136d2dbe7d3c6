/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Stage 1: clock offset and drift between the IMU and the depth camera.
 *
 * The two sensors share no frame, so we compare frame-independent signals: the magnitude of
 * the keypoint acceleration the camera's local quadratic fit gives, and the magnitude of the
 * IMU's dynamic acceleration (specific force rotated into the gyro-stabilised first-sample frame
 * minus its +-5 s mean) seen through the same fit operator: the camera's fit weights applied to
 * the IMU's double integral at the frames' times. Frames whose taps sit on the nominal frame
 * grid share an operator shape, tabulated once on the IMU samples (prep.c), so a score costs a
 * table look-up per frame; other frames are evaluated alone.
 * Occluded frames (no fit) and IMU look-ups outside the recording drop out of the Pearson
 * sums. A 40 ms grid over the whole range (frames without a table of their own use the
 * commonest shape's), the best three local maxima ranked after a 5 ms parabola step, the
 * winner scanned with every frame's own operator (5 ms, 1 ms, parabola) and polished by two
 * parabola steps. Recordings over a minute are cut into 30 s segments whose
 * offsets give the drift by a weighted straight-line fit.
 */
#include "fusion-internal.h"

#include "arcwise/math3.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* One remembered score (see SyncCtx.memo), and how many are kept. */
enum { SYNC_MEMO = 32 };
typedef struct {
  double off, drift, ta, tb, rho;
  size_t n, stride;
  bool approx, local;
} ScoreMemo;

/* One camera frame's time on the IMU clock and pb there (SyncCtx.taps). */
typedef struct {
  double off, drift;       /* what p was computed for (off NaN = nothing) */
  double p[3];
  bool in;                 /* inside the IMU's span */
} SyncTap;

/* A camera frame that takes part in the scores (SyncCtx.fr), with what every score reads of
 * it: its signal and time, and the table its IMU side is looked up in. */
typedef struct {
  size_t k;
  double x, t;                  /* camera signal (not NaN), time */
  const double (*tab)[3];       /* its own shape's table (NULL: none) */
  const double (*tab_apx)[3];   /* that or, without one, the commonest shape's (c->approx) */
} SyncFrame;

/* Half-width of the per-frame tables (SyncCtx.loc): the winner's scans and polish stay within
 * +-30 ms of where they start. */
#define LOC_HALF_S 0.035
/* At most this many entries per frame table (the scans and polish evaluate a frame's own
 * operator at about 25 offsets; a longer table would cost more than it saves). */
#define LOC_MAX 20

typedef struct {
  const AwImuPrep *imu;
  const AwCamPrep *cam;
  double t_mid;        /* reference IMU time of the drift model */
  double half;         /* half-width of the IMU box average, s */
  double *sc;          /* camera signal per frame (NaN = unusable) */
  double g;
  double (*fb0)[3];    /* specific force in the gyro-stabilised first-sample frame */
  double (*cumb)[3];   /* its running integral */
  double (*pb)[3];     /* its double integral */
  double (*mm)[3];     /* its mean over +-5 s at each IMU sample (NaN where undefined) */
  /* The camera's fit operator applied to pb at each IMU sample, minus mm, one table per shape
   * (NULL: that shape's frames are evaluated one by one); NaN where undefined. Every sample:
   * with tables at 20 ms, read linearly, the polish's +-1 ms curvature (the reported sigma)
   * met half as many of the interpolation's kinks and came out up to 14 times smaller or 3
   * times larger on single swings. */
  double (*tab[AW_CAM_MAX_SHAPES])[3];
  unsigned char *tab_ok;   /* scratch for aw_fusion_shape_table */
  int tab_main;            /* the most common shape (its table exists), -1 = none */
  bool approx;             /* frames without a table of their own use tab_main's */
  size_t stride;           /* score every stride-th frame: 1, or 2 (the coarse grid) */
  /* Frames without a shape table, for the winner's exact refinement: each frame's own
   * operator tabulated on the IMU samples within LOC_HALF_S of where the frame falls
   * at the winner's offset (loc_build), looked up as the shape tables are; without drift
   * only, and exact evaluation outside. */
  bool local;              /* use them */
  double (*loc)[3];
  size_t *loc_at, *loc_i0; /* per frame: first entry in loc, its IMU sample */
  unsigned char *loc_len;  /* per frame: entries (0 = none) */
  /* Scores already computed for the same arguments and settings (the scans and parabola steps
   * around the winner come back to offsets they tried): a ring of the last few. */
  ScoreMemo memo[SYNC_MEMO];
  size_t n_memo;
  /* Per camera frame: the double integral pb at its time mapped to the IMU clock by the
   * offset and drift it holds (tap_at); frames evaluated one by one share their taps (a frame
   * is a tap of the dozen operators around it, all evaluated at one offset in turn). */
  SyncTap *taps;
  /* The frames with a camera signal in time order, every one (fr[0], stride 1) and those of
   * even index (fr[1], stride 2): the scores' loops, without the per-frame checks. */
  SyncFrame *fr[2];
  size_t n_fr[2];
} SyncCtx;

static void
ctx_free(SyncCtx *c)
{
  free(c->sc); free(c->fb0); free(c->cumb); free(c->pb); free(c->mm); free(c->tab_ok);
  free(c->loc); free(c->loc_at); free(c->loc_i0); free(c->loc_len); free(c->taps);
  free(c->fr[0]); free(c->fr[1]);
  for (size_t s = 0; s < AW_CAM_MAX_SHAPES; s++) free(c->tab[s]);
}

static inline double
imu_time(double t_depth, double off_mid, double drift, double t_mid)
{
  /* Without drift the general form is (t - off + 0 t_mid) / 1: the same value (up to the sign
   * of a zero), without the division every tap of every score would wait for. */
  if (drift == 0) return t_depth - off_mid;
  return (t_depth - off_mid + drift * t_mid) / (1.0 + drift);
}

/* Linear interpolation at IMU time ti of a table on the IMU sample times t[0..n); false where
 * undefined. The tables are smooth on the scale of their
 * spacing (the +-5 s mean; the fit spans >= 0.4 s). */
static inline bool
tab_at(const double (*tab)[3], const double *t, size_t n, double ti, size_t *hint, double out[3])
{
  if (ti < t[0] || ti >= t[n - 1]) return false;
  size_t i = aw_fusion_interval(t, n, ti, hint);   /* < n - 1: ti < t[n - 1] */
  double u = (ti - t[i]) / (t[i + 1] - t[i]);
  for (int a = 0; a < 3; a++) out[a] = tab[i][a] + u * (tab[i + 1][a] - tab[i][a]);
  return !isnan(out[0]);
}

/* pb at camera frame j's time on the IMU clock (offset off, drift), from the frame's entry in
 * c->taps when it holds them; NULL outside the IMU's span. */
static const double *
tap_at(const SyncCtx *c, size_t j, double off, double drift, size_t *hint)
{
  SyncTap *tp = &c->taps[j];
  if (tp->off == off && tp->drift == drift) return tp->in ? tp->p : NULL;
  const AwImuPrep *imu = c->imu;
  double tj = imu_time(c->cam->t_s[j], off, drift, c->t_mid);
  tp->off = off;
  tp->drift = drift;
  tp->in = !(tj < imu->t_s[0] || tj > imu->t_s[imu->n - 1]);
  if (tp->in)
    aw_fusion_pos_at(imu->t_s, imu->n, (const double (*)[3])c->fb0, (const double (*)[3])c->cumb,
                     (const double (*)[3])c->pb, tj, hint, tp->p);
  return tp->in ? tp->p : NULL;
}

/* The IMU's dynamic acceleration as the camera's fit for frame k would see it at clock offset
 * off: the frame's own fit operator on the double integral of f_b0, minus the +-5 s mean of
 * f_b0 (in the gyro-stabilised frame gravity is nearly constant and the mean dynamic
 * acceleration over 10 s is ~0). Both sides pass through the same linear filter, so an
 * asymmetric swing is smoothed identically on both and the correlation peak is unbiased. */
static bool
imu_seen(const SyncCtx *c, const SyncFrame *fr, double ti, double off, double drift,
         size_t *hint, size_t *h3, double out[3])
{
  const AwCamPrep *cam = c->cam;
  const double (*T)[3] = c->approx ? fr->tab_apx : fr->tab;
  if (T) return tab_at(T, c->imu->t_s, c->imu->n, ti, hint, out);
  const AwImuPrep *imu = c->imu;
  size_t k = fr->k;
  if (c->local && drift == 0 && c->loc_len[k]) {
    size_t i0 = c->loc_i0[k], len = c->loc_len[k];
    if (ti >= imu->t_s[i0] && ti < imu->t_s[i0 + len - 1]) {
      size_t j = 0;
      while (imu->t_s[i0 + j + 1] <= ti) j++;
      const double (*L)[3] = (const double (*)[3])c->loc + c->loc_at[k];
      double ta = imu->t_s[i0 + j], u = (ti - ta) / (imu->t_s[i0 + j + 1] - ta);
      for (int a = 0; a < 3; a++) out[a] = L[j][a] + u * (L[j + 1][a] - L[j][a]);
      return !isnan(out[0]);
    }
  }
  double mm[3];
  /* (h3: the IMU samples' walk, as the taps') */
  if (!tab_at((const double (*)[3])c->mm, imu->t_s, imu->n, ti, h3, mm)) return false;
  double acc[3] = { 0, 0, 0 };
  for (size_t q = cam->wstart[k]; q < cam->wstart[k + 1]; q++) {
    const double *pj = tap_at(c, cam->widx[q], off, drift, h3);
    if (!pj) return false;
    for (int a = 0; a < 3; a++) acc[a] += cam->wval[q] * pj[a];
  }
  for (int a = 0; a < 3; a++) out[a] = acc[a] - mm[a];
  return true;
}

/* Pearson correlation of the camera signal and the magnitude of what the IMU implies for it
 * over the usable frames with t in [ta, tb] (frames without a fit, occluded or trimmed, and
 * IMU look-ups outside the recording drop out of the sums). */
static double score_frames(const SyncCtx *c, double off, double drift, double ta, double tb,
                           size_t *n_used);

/* Pearson's r from the sums over n pairs; -2 below 8 pairs or without variance. */
static inline double
pearson(double s1, double s2, double s11, double s22, double s12, size_t n)
{
  if (n < 8) return -2;
  double vx = s11 - s1 * s1 / (double)n, vy = s22 - s2 * s2 / (double)n;
  double cxy = s12 - s1 * s2 / (double)n;
  if (!(vx > 0) || !(vy > 0)) return -2;
  return cxy / sqrt(vx * vy);
}

/* Remembers a score for its arguments and the context's settings (oldest out first). */
static void
memo_put(SyncCtx *c, double off, double drift, double ta, double tb, double rho, size_t n)
{
  ScoreMemo *e = &c->memo[c->n_memo++ % SYNC_MEMO];
  e->off = off; e->drift = drift; e->ta = ta; e->tb = tb; e->rho = rho; e->n = n;
  e->approx = c->approx; e->stride = c->stride; e->local = c->local;
}

static double
score(SyncCtx *c, double off, double drift, double ta, double tb, size_t *n_used)
{
  size_t nm = c->n_memo < SYNC_MEMO ? c->n_memo : SYNC_MEMO;
  for (size_t j = 0; j < nm; j++) {
    const ScoreMemo *e = &c->memo[j];
    if (e->off == off && e->drift == drift && e->ta == ta && e->tb == tb &&
        e->approx == c->approx && e->stride == c->stride && e->local == c->local) {
      if (n_used) *n_used = e->n;
      return e->rho;
    }
  }
  size_t n = 0;
  double rho = score_frames(c, off, drift, ta, tb, &n);
  memo_put(c, off, drift, ta, tb, rho, n);
  if (n_used) *n_used = n;
  return rho;
}

static double
score_frames(const SyncCtx *c, double off, double drift, double ta, double tb, size_t *n_used)
{
  double s1 = 0, s2 = 0, s11 = 0, s22 = 0, s12 = 0;
  size_t n = 0, hint = 0, h3 = 0;
  const SyncFrame *fr = c->fr[c->stride == 2];
  for (size_t j = 0; j < c->n_fr[c->stride == 2]; j++) {
    double x = fr[j].x, tk = fr[j].t;
    if (tk < ta || tk > tb) continue;
    double ti = imu_time(tk, off, drift, c->t_mid), fm[3];
    if (!imu_seen(c, &fr[j], ti, off, drift, &hint, &h3, fm)) continue;
    double y = sqrt(fm[0] * fm[0] + fm[1] * fm[1] + fm[2] * fm[2]);
    s1 += x; s2 += y; s11 += x * x; s22 += y * y; s12 += x * y;
    n++;
  }
  if (n_used) *n_used = n;
  return pearson(s1, s2, s11, s22, s12, n);
}

typedef struct {
  double off, rho, curv, rho_second;
  size_t n;
} Peak;

/* The per-frame tables of SyncCtx.loc around offset off: for every usable frame without a
 * shape table, its own operator (minus the +-5 s mean) at the IMU samples whose times cover
 * t_k - off +- LOC_HALF_S, NaN where a tap falls outside the recording. Frames near the ends,
 * or at IMU rates that would need more than LOC_MAX entries, get none (exact evaluation).
 * Fails quietly (no tables) without memory. */
static void
loc_build(SyncCtx *c, double off)
{
  const AwCamPrep *cam = c->cam;
  const AwImuPrep *imu = c->imu;
  size_t nf = 0;
  for (size_t k = 0; k < cam->n; k++) {
    int sh = cam->shape ? cam->shape[k] : -1;
    if (!isnan(c->sc[k]) && !(sh >= 0 && c->tab[sh])) nf++;
  }
  if (!nf || imu->n < 2) return;
  c->loc_at = malloc(sizeof *c->loc_at * cam->n);
  c->loc_i0 = malloc(sizeof *c->loc_i0 * cam->n);
  c->loc_len = calloc(cam->n, 1);
  c->loc = malloc(sizeof *c->loc * nf * LOC_MAX);
  if (!c->loc_at || !c->loc_i0 || !c->loc_len || !c->loc) {
    free(c->loc); free(c->loc_at); free(c->loc_i0); free(c->loc_len);
    c->loc = NULL; c->loc_at = c->loc_i0 = NULL; c->loc_len = NULL;
    return;
  }
  double t0 = imu->t_s[0], t1 = imu->t_s[imu->n - 1];
  size_t used = 0, hint = 0, h3 = 0;
  for (size_t k = 0; k < cam->n; k++) {
    int sh = cam->shape ? cam->shape[k] : -1;
    if (isnan(c->sc[k]) || (sh >= 0 && c->tab[sh])) continue;
    double tc = cam->t_s[k] - off;
    if (tc - LOC_HALF_S < t0 || tc + LOC_HALF_S >= t1) continue;
    size_t i0 = aw_fusion_locate(imu->t_s, imu->n, tc - LOC_HALF_S, &hint);
    size_t i1 = aw_fusion_locate(imu->t_s, imu->n, tc + LOC_HALF_S, &hint) + 1;
    size_t len = i1 - i0 + 1;
    if (i1 >= imu->n || len > LOC_MAX) continue;
    double (*L)[3] = c->loc + used;
    /* each tap's own hint: from entry to entry its time moves on by one IMU interval (the
     * first entry's taps walk on from the tap before, the first tap from the frame before's) */
    size_t th[64], q0 = cam->wstart[k], nq = cam->wstart[k + 1] - q0;
    for (size_t q = 0; q < nq && q < 64; q++) th[q] = h3;
    for (size_t e = 0; e < len; e++) {
      size_t i = i0 + e;
      double acc[3] = { 0, 0, 0 };
      bool ok = !isnan(c->mm[i][0]);
      for (size_t q = q0; ok && q < cam->wstart[k + 1]; q++) {
        double tj = imu->t_s[i] + (cam->t_s[cam->widx[q]] - cam->t_s[k]), pj[3];
        if (tj < t0 || tj > t1) { ok = false; break; }
        if (e == 0 && q - q0 < 64) th[q - q0] = q == q0 ? h3 : th[q - q0 - 1];
        aw_fusion_pos_at(imu->t_s, imu->n, (const double (*)[3])c->fb0,
                         (const double (*)[3])c->cumb, (const double (*)[3])c->pb, tj,
                         q - q0 < 64 ? &th[q - q0] : &h3, pj);
        for (int a = 0; a < 3; a++) acc[a] += cam->wval[q] * pj[a];
      }
      for (int a = 0; a < 3; a++) L[e][a] = ok ? acc[a] - c->mm[i][a] : (double)NAN;
    }
    h3 = th[0];
    c->loc_at[k] = used;
    c->loc_i0[k] = i0;
    c->loc_len[k] = (unsigned char)len;
    used += len;
  }
}

/* Local refinement around center (a grid point of spacing step0): parabola steps over
 * +-step0/4 and then (levels 2) +-step0/20, each first walking uphill (at most 4 steps) until
 * the middle is the highest of the three. */
static Peak
refine(SyncCtx *c, double center, double step0, int levels, double drift, double ta, double tb)
{
  Peak pk = { center, -2, 0, -2, 0 };
  double h = step0 / 4.0;
  for (int level = 0; level < levels; level++) {
    double r0 = score(c, center, drift, ta, tb, NULL);
    double rm = score(c, center - h, drift, ta, tb, NULL);
    double rp = score(c, center + h, drift, ta, tb, NULL);
    for (int walk = 0; walk < 4 && (rm > r0 || rp > r0); walk++) {
      if (rm > rp) { center -= h; rp = r0; r0 = rm; rm = score(c, center - h, drift, ta, tb, NULL); }
      else { center += h; rm = r0; r0 = rp; rp = score(c, center + h, drift, ta, tb, NULL); }
    }
    double den = rm - 2 * r0 + rp;
    if (den < 0) {
      double d = 0.5 * (rm - rp) / den;
      if (fabs(d) <= 1) center += d * h;
      pk.curv = -den / (2 * h * h);
    }
    h = step0 / 20.0;
  }
  pk.off = center;
  pk.rho = score(c, center, drift, ta, tb, &pk.n);
  return pk;
}

/* The same with scans instead of parabola steps (for the winner, where the exact operators'
 * surface can hold ripples a parabola step walks into): 9 points over +-step0, 11 over
 * +-step0/4, and a parabola through the best and its neighbours step0/20 away. */
static Peak
refine_dense(SyncCtx *c, double center, double step0, double drift, double ta, double tb)
{
  Peak pk = { center, -2, 0, -2, 0 };
  double step = step0;
  for (int level = 0; level < 2; level++) {
    int half = level == 0 ? 4 : 5;
    double sp = level == 0 ? step / 4.0 : step / 5.0;
    double bo = center, br = -3;
    for (int j = -half; j <= half; j++) {
      double o = center + sp * j;
      double r = score(c, o, drift, ta, tb, NULL);
      if (r > br) { br = r; bo = o; }
    }
    center = bo;
    step = sp;
  }
  double rm = score(c, center - step, drift, ta, tb, NULL);
  double r0 = score(c, center, drift, ta, tb, &pk.n);
  double rp = score(c, center + step, drift, ta, tb, NULL);
  double den = rm - 2 * r0 + rp;
  double off = center;
  if (den < 0) {
    double d = 0.5 * (rm - rp) / den;
    if (fabs(d) <= 1) off = center + d * step;
    pk.curv = -den / (2 * step * step);
  }
  pk.off = off;
  pk.rho = score(c, off, drift, ta, tb, &pk.n);
  if (pk.rho < r0) { pk.off = center; pk.rho = r0; }
  return pk;
}

/* Scores on the grid lo + i step0 (nstep points) into rc. Frame by frame over all the grid's
 * offsets at once (one frame's checks and table choice, short look-up walks), each offset's
 * sums still taken over the frames in order: the same values as score() point by point, and
 * remembered as it would. */
static void
grid_scores(SyncCtx *c, double lo, double step0, size_t nstep, double drift, double ta,
            double tb, double *rc)
{
  double (*S)[5] = calloc(nstep, sizeof *S);
  size_t *N = calloc(nstep, sizeof *N);
  if (!S || !N) {
    free(S); free(N);
    for (size_t i = 0; i < nstep; i++) rc[i] = score(c, lo + step0 * (double)i, drift, ta, tb, NULL);
    return;
  }
  size_t hint = 0, h3 = 0;
  const SyncFrame *fr = c->fr[c->stride == 2];
  for (size_t j = 0; j < c->n_fr[c->stride == 2]; j++) {
    double x = fr[j].x, tk = fr[j].t;
    if (tk < ta || tk > tb) continue;
    /* the offsets from the largest down: the IMU times rise and the look-ups walk forwards */
    for (size_t i = nstep; i-- > 0;) {
      double off = lo + step0 * (double)i, fm[3];
      double ti = imu_time(tk, off, drift, c->t_mid);
      if (!imu_seen(c, &fr[j], ti, off, drift, &hint, &h3, fm)) continue;
      double y = sqrt(fm[0] * fm[0] + fm[1] * fm[1] + fm[2] * fm[2]);
      S[i][0] += x; S[i][1] += y; S[i][2] += x * x; S[i][3] += y * y; S[i][4] += x * y;
      N[i]++;
    }
  }
  for (size_t i = 0; i < nstep; i++) {
    rc[i] = pearson(S[i][0], S[i][1], S[i][2], S[i][3], S[i][4], N[i]);
    /* remembered as score() would have, in the same order */
    memo_put(c, lo + step0 * (double)i, drift, ta, tb, rc[i], N[i]);
  }
  free(S);
  free(N);
}

/* Coarse-to-fine maximisation of score over offsets [lo, hi]. */
static Peak
search(SyncCtx *c, double lo, double hi, double step0, double drift, double ta, double tb)
{
  Peak pk = { 0, -2, 0, -2, 0 };
  size_t nstep = (size_t)ceil((hi - lo) / step0) + 1;
  double *rc = malloc(sizeof *rc * nstep);
  if (!rc) return pk;
  grid_scores(c, lo, step0, nstep, drift, ta, tb, rc);
  size_t best = 0;
  for (size_t i = 0; i < nstep; i++) if (rc[i] > rc[best]) best = i;
  double second = -2;
  for (size_t i = 0; i < nstep; i++)
    if (fabs(step0 * ((double)i - (double)best)) > 0.15 && rc[i] > second) second = rc[i];
  free(rc);
  pk = refine(c, lo + step0 * (double)best, step0, 2, drift, ta, tb);
  pk.rho_second = second;
  return pk;
}

/* Up to three best local maxima of grid scores rc, at least 0.1 s apart. */
static int
coarse_peaks(const double *rc, size_t nstep, double lo, double step, double out[3], double *rho2)
{
  int k = 0;
  double val[3] = { -3, -3, -3 };
  for (size_t i = 0; i < nstep; i++) {
    bool peak = (i == 0 || rc[i] >= rc[i - 1]) && (i + 1 == nstep || rc[i] >= rc[i + 1]);
    if (!peak || rc[i] < -1) continue;
    double o = lo + step * (double)i;
    /* insert into the sorted top three */
    for (int j = 0; j < 3; j++)
      if (rc[i] > val[j]) {
        for (int q = 2; q > j; q--) { val[q] = val[q - 1]; out[q] = out[q - 1]; }
        val[j] = rc[i];
        out[j] = o;
        break;
      }
  }
  for (int j = 0; j < 3; j++) if (val[j] > -1) k = j + 1;
  /* drop peaks within 0.1 s of a better one */
  int m = 0;
  for (int j = 0; j < k; j++) {
    bool near = false;
    for (int q = 0; q < m; q++) if (fabs(out[j] - out[q]) < 0.1) near = true;
    if (!near) { out[m] = out[j]; val[m] = val[j]; m++; }
  }
  *rho2 = m > 1 ? val[1] : -2;
  return m;
}

static void
set_cam_signal(SyncCtx *c, const double *g_cam)
{
  const AwCamPrep *cam = c->cam;
  for (size_t k = 0; k < cam->n; k++) {
    if (!cam->acc_ok[k]) { c->sc[k] = NAN; continue; }
    double d[3];
    for (int a = 0; a < 3; a++) d[a] = cam->acc_m_s2[k][a] - (g_cam ? g_cam[a] : 0);
    c->sc[k] = sqrt(d[0] * d[0] + d[1] * d[1] + d[2] * d[2]);
  }
}

AwStatus
aw_fusion_sync_run(const AwImuPrep *imu, const AwCamPrep *cam, const AwFusionSettings *s,
                   double g, AwFusionReport *rep, double g_cam_out[3], AwError *err)
{
  if (imu->n < 16)
    return aw_error_set(err, AW_ERR_TOO_FEW, "imu", 0, 0, "only %zu IMU samples", imu->n);
  size_t n_acc = 0;
  double tc0 = INFINITY, tc1 = -INFINITY;
  for (size_t k = 0; k < cam->n; k++) {
    if (!cam->acc_ok[k]) continue;
    n_acc++;
    tc0 = fmin(tc0, cam->t_s[k]);
    tc1 = fmax(tc1, cam->t_s[k]);
  }
  if (cam->n_valid < 10 || n_acc < 10)
    return aw_error_set(err, AW_ERR_TOO_FEW, "depth", 0, 0,
                        "only %zu usable camera frames (%zu with enough neighbours); at least 10 "
                        "are needed to align the clocks", cam->n_valid, n_acc);
  double max_off = s->max_clock_offset_s > 0 ? s->max_clock_offset_s : 1.0;
  double ti0 = imu->t_s[0], ti1 = imu->t_s[imu->n - 1];
  if (tc1 < ti0 - max_off + 0.5 || tc0 > ti1 + max_off - 0.5)
    return aw_error_set(err, AW_ERR_NO_OVERLAP, "depth", 0, 0,
                        "camera frames span %.3f..%.3f s but the IMU spans %.3f..%.3f s: they do "
                        "not overlap within the +-%.2f s clock-offset range", tc0, tc1, ti0, ti1,
                        max_off);
  SyncCtx c;
  memset(&c, 0, sizeof c);
  c.imu = imu;
  c.cam = cam;
  c.stride = 1;
  c.t_mid = 0.5 * (ti0 + ti1);
  c.half = 0.5 * cam->fit_half_s;
  c.g = g;
  c.sc = malloc(sizeof *c.sc * cam->n);
  c.fb0 = malloc(sizeof *c.fb0 * imu->n);
  c.cumb = malloc(sizeof *c.cumb * imu->n);
  c.pb = malloc(sizeof *c.pb * imu->n);
  c.mm = malloc(sizeof *c.mm * imu->n);
  c.tab_ok = malloc(imu->n);
  c.taps = malloc(sizeof *c.taps * cam->n);
  if (!c.sc || !c.fb0 || !c.cumb || !c.pb || !c.mm || !c.tab_ok || !c.taps) { ctx_free(&c); return AW_ERR_NO_MEMORY; }
  for (size_t k = 0; k < cam->n; k++) c.taps[k].off = (double)NAN;
  {
    /* Gyro bias from the still samples (if any), then the attitude chain. */
    double bg[3] = { 0 };
    size_t ns = 0;
    for (size_t i = 0; i < imu->n; i++)
      if (imu->still[i]) { for (int a = 0; a < 3; a++) bg[a] += imu->w[i][a]; ns++; }
    if (ns) for (int a = 0; a < 3; a++) bg[a] /= (double)ns;
    double q[4] = { 1, 0, 0, 0 };
    for (size_t i = 0; i < imu->n; i++) {
      if (i > 0) {
        double dt = imu->t_s[i] - imu->t_s[i - 1], rv[3], dq[4];
        if (dt > 3 * imu->dt_nom_s + 0.02) dt = 0;   /* gap: hold the attitude */
        for (int a = 0; a < 3; a++) rv[a] = (0.5 * (imu->w[i][a] + imu->w[i - 1][a]) - bg[a]) * dt;
        aw_quat_from_rotvec(dq, rv);
        aw_quat_mul(q, q, dq);
        aw_quat_normalize(q);
      }
      aw_quat_rotate(c.fb0[i], q, imu->f[i]);
      if (i == 0) { c.cumb[0][0] = c.cumb[0][1] = c.cumb[0][2] = 0; }
      else
        for (int a = 0; a < 3; a++)
          c.cumb[i][a] = c.cumb[i - 1][a] + 0.5 * (imu->t_s[i] - imu->t_s[i - 1]) * (c.fb0[i][a] + c.fb0[i - 1][a]);
    }
    c.pb[0][0] = c.pb[0][1] = c.pb[0][2] = 0;
    for (size_t i = 1; i < imu->n; i++) {
      double dt = imu->t_s[i] - imu->t_s[i - 1];
      for (int a = 0; a < 3; a++)
        c.pb[i][a] = c.pb[i - 1][a] + dt * c.cumb[i - 1][a] + dt * dt * (2 * c.fb0[i - 1][a] + c.fb0[i][a]) / 6.0;
    }
  }
  {
    /* The +-5 s mean at every sample (two running indices: O(n)); where the window is cut to
     * the same span at both ends as for the sample before (within 5 s of both ends of the
     * recording, so everywhere in one under 10 s), the same mean. */
    size_t lo = 0;
    double pt0 = NAN, pt1 = NAN;
    for (size_t i = 0; i < imu->n; i++) {
      double t = imu->t_s[i], t0 = fmax(imu->t_s[0], t - 5.0), t1 = fmin(imu->t_s[imu->n - 1], t + 5.0);
      if (t0 == pt0 && t1 == pt1) memcpy(c.mm[i], c.mm[i - 1], sizeof c.mm[i]);
      else if (!aw_fusion_box_mean(imu->t_s, c.cumb, c.fb0, imu->n, t0, t1, &lo, c.mm[i]))
        c.mm[i][0] = c.mm[i][1] = c.mm[i][2] = (double)NAN;
      pt0 = t0;
      pt1 = t1;
    }
    /* One table per operator shape that enough frames share to repay it (a table costs one
     * operator per IMU sample; a frame evaluated alone costs one per offset its own operator
     * is tried at: about 32, the winner's scans and polish, since the grid and the candidates'
     * refinement use the commonest shape's table for it). */
    c.tab_main = -1;
    for (size_t sh = 0; sh < cam->n_shape; sh++)
      if (c.tab_main < 0 || cam->shape_count[sh] > cam->shape_count[c.tab_main]) c.tab_main = (int)sh;
    for (size_t sh = 0; sh < cam->n_shape; sh++) {
      if (cam->shape_count[sh] * 32 < imu->n && (int)sh != c.tab_main) continue;
      double (*t)[3] = malloc(sizeof *t * imu->n);
      if (!t) continue;
      aw_fusion_shape_table(cam, sh, imu->t_s, imu->n, (const double (*)[3])c.fb0,
                            (const double (*)[3])c.cumb, (const double (*)[3])c.pb, 1, imu->n, t,
                            NULL, c.tab_ok);
      for (size_t i = 0; i < imu->n; i++)
        for (int a = 0; a < 3; a++) t[i][a] = c.tab_ok[i] ? t[i][a] - c.mm[i][a] : (double)NAN;
      c.tab[sh] = t;
    }
    if (c.tab_main >= 0 && !c.tab[c.tab_main]) c.tab_main = -1;
  }
  set_cam_signal(&c, NULL);
  /* Motion check, wherever the motion is: the s.d. of the camera's acceleration over windows
   * of +-1 s. A window above 0.5 m/s^2 (several times the acceleration noise of a still
   * keypoint) is motion; only frames within 3 s of motion take part in the alignment, so a
   * swing in a long, mostly still capture is found and the still stretches (noise only on the
   * camera side) neither dilute the correlation nor cost time. */
  double sd = 0;
  {
    double *c1 = malloc(sizeof *c1 * (cam->n + 1)), *c2 = malloc(sizeof *c2 * (cam->n + 1));
    size_t *cn = malloc(sizeof *cn * (cam->n + 1));
    unsigned char *mov = calloc(cam->n ? cam->n : 1, 1);
    if (!c1 || !c2 || !cn || !mov) {
      free(c1); free(c2); free(cn); free(mov);
      ctx_free(&c);
      return AW_ERR_NO_MEMORY;
    }
    c1[0] = c2[0] = 0;
    cn[0] = 0;
    for (size_t k = 0; k < cam->n; k++) {
      bool ok = !isnan(c.sc[k]);
      c1[k + 1] = c1[k] + (ok ? c.sc[k] : 0);
      c2[k + 1] = c2[k] + (ok ? c.sc[k] * c.sc[k] : 0);
      cn[k + 1] = cn[k] + ok;
    }
    size_t lo = 0, hi = 0;
    for (size_t k = 0; k < cam->n; k++) {
      while (lo < k && cam->t_s[lo] < cam->t_s[k] - 1.0) lo++;
      if (hi < k) hi = k;
      while (hi + 1 < cam->n && cam->t_s[hi + 1] <= cam->t_s[k] + 1.0) hi++;
      size_t m = cn[hi + 1] - cn[lo];
      if (m < 10) continue;
      double mu = (c1[hi + 1] - c1[lo]) / (double)m;
      double s2 = sqrt(fmax(0, (c2[hi + 1] - c2[lo]) / (double)m - mu * mu));
      if (s2 > sd) sd = s2;
      mov[k] = s2 >= 0.5;
    }
    /* keep frames within 3 s of motion (two sweeps of the distance to the nearest) */
    double last = -INFINITY;
    for (size_t k = 0; k < cam->n; k++) {
      if (mov[k]) last = cam->t_s[k];
      cn[k] = cam->t_s[k] - last <= 3.0;
    }
    last = INFINITY;
    for (size_t k = cam->n; k-- > 0;) {
      if (mov[k]) last = cam->t_s[k];
      if (!cn[k] && !(last - cam->t_s[k] <= 3.0)) c.sc[k] = NAN;
    }
    free(c1); free(c2); free(cn); free(mov);
  }
  if (sd < 0.5) {
    ctx_free(&c);
    return aw_error_set(err, AW_ERR_NO_CORRELATION, "depth", 0, 0,
                        "the camera saw almost no acceleration (s.d. %.2f m/s^2): there is no "
                        "motion to align the clocks on", sd);
  }
  c.fr[0] = malloc(sizeof *c.fr[0] * cam->n);
  c.fr[1] = malloc(sizeof *c.fr[1] * (cam->n / 2 + 1));
  if (!c.fr[0] || !c.fr[1]) { ctx_free(&c); return AW_ERR_NO_MEMORY; }
  for (size_t k = 0; k < cam->n; k++) {
    if (isnan(c.sc[k])) continue;
    int sh = cam->shape ? cam->shape[k] : -1;
    SyncFrame f = { k, c.sc[k], cam->t_s[k], sh >= 0 ? (const double (*)[3])c.tab[sh] : NULL, NULL };
    f.tab_apx = f.tab || c.tab_main < 0 ? f.tab : (const double (*)[3])c.tab[c.tab_main];
    c.fr[0][c.n_fr[0]++] = f;
    if (k % 2 == 0) c.fr[1][c.n_fr[1]++] = f;
  }
  /* Coarse grid over the whole range with every frame near motion, then the best few local
   * maxima refined on the first 60 s of motion (drift over 60 s is below 6 ms); segments
   * refine the drift below. */
  const double step0 = 0.02;
  /* The grid at twice the refinement's scale: the score is a correlation of accelerations
   * smoothed over >= 0.4 s, whose peaks span well over 0.1 s, and the refinement's uphill walk
   * (4 steps of 5 ms) reaches halfway to the next grid point. */
  const double grid_step = 2 * step0;
  size_t nstep = (size_t)ceil(2 * max_off / grid_step) + 1;
  double *rc = malloc(sizeof *rc * nstep);
  if (!rc) { ctx_free(&c); return AW_ERR_NO_MEMORY; }
  /* The grid and the choice between candidates use the most common operator for frames whose
   * own (a tap missing or trimmed) has no table; the winner is polished with every frame's
   * own operator. */
  c.approx = true;
  /* The camera signal is the second derivative of a fit over >= 0.4 s: neighbouring frames
   * carry nearly the same information, and every other one places the coarse grid's peaks
   * (the candidates are refined with every frame) at half the cost. */
  c.stride = n_acc >= 40 ? 2 : 1;
  grid_scores(&c, -max_off, grid_step, nstep, 0, -INFINITY, INFINITY, rc);
  c.stride = 1;
  double cand[3], rho2;
  int nc = coarse_peaks(rc, nstep, -max_off, grid_step, cand, &rho2);
  free(rc);
  double ta_motion = tc0;
  for (size_t k = 0; k < cam->n; k++) if (!isnan(c.sc[k])) { ta_motion = cam->t_s[k]; break; }
  double tb_first = ta_motion + 60.0;
  Peak pk = { 0, -3, 0, -2, 0 };
  double second = -2;
  /* The candidates' refinement only ranks them (and gives the runner-up): one parabola level
   * (+-5 ms) places each peak within a few milliseconds, where the correlation is within a
   * few 1e-4 of its maximum; the winner's exact scan below starts over at 5 ms spacing. */
  for (int j = 0; j < nc; j++) {
    Peak p2 = refine(&c, cand[j], step0, 1, 0, -INFINITY, tb_first);
    if (p2.n < 10) continue;
    if (p2.rho > pk.rho) { second = fmax(second, pk.rho); pk = p2; }
    else second = fmax(second, p2.rho);
  }
  /* The candidates compared with the commonest operator standing in for frames without a
   * table of their own; the winner refined again with every frame's own operator. */
  c.approx = false;
  if (pk.n >= 10 && pk.rho >= -1) {
    loc_build(&c, pk.off);
    c.local = c.loc != NULL;
    Peak p2 = refine_dense(&c, pk.off, step0, 0, -INFINITY, tb_first);
    if (p2.n >= 10) pk = p2;
  }
  if (pk.n < 10 || pk.rho < -1) {
    ctx_free(&c);
    return aw_error_set(err, AW_ERR_NO_OVERLAP, "depth", 0, 0,
                        "fewer than 10 camera frames overlap the IMU at any clock offset within "
                        "+-%.2f s", max_off);
  }
  /* the runner-up: another candidate's refined peak, or the grid's second local maximum */
  pk.rho_second = fmax(second, rho2 < pk.rho ? rho2 : -2);
  c.approx = false;   /* from here every frame with its own operator */
  {
    /* Exact polish: the approximation moves the peak by well under a few milliseconds; two
     * parabola steps on +-1 ms around it. */
    double h = 0.001;
    for (int it = 0; it < 2; it++) {
      size_t n0 = 0;
      double rm = score(&c, pk.off - h, 0, -INFINITY, tb_first, NULL);
      double r0 = score(&c, pk.off, 0, -INFINITY, tb_first, &n0);
      double rp = score(&c, pk.off + h, 0, -INFINITY, tb_first, NULL);
      double den = rm - 2 * r0 + rp;
      if (!(den < 0)) break;
      double d = 0.5 * (rm - rp) / den;
      d = fmax(-2.0, fmin(2.0, d));   /* at most two steps per round */
      pk.off += d * h;
      pk.curv = -den / (2 * h * h);
      pk.n = n0;
    }
  }
  c.local = false;   /* the drift's segments and the final score: every operator exact */
  double off_mid = pk.off, drift = 0;
  double span = tc1 - tc0;
  if (span >= 60.0) {
    /* Drift: offsets of 30 s segments, weighted straight line through them. */
    size_t nseg = (size_t)(span / 30.0);
    double *so = calloc(nseg, sizeof *so), *st = calloc(nseg, sizeof *st),
           *sw = calloc(nseg, sizeof *sw);
    if (!so || !st || !sw) { free(so); free(st); free(sw); ctx_free(&c); return AW_ERR_NO_MEMORY; }
    size_t ns = 0;
    /* +-100 ppm over the recording moves the offset by at most 1e-4 * span / 2 from its mean */
    double rng = 0.02 + 6e-5 * span;
    for (size_t j = 0; j < nseg; j++) {
      double ta = tc0 + span * (double)j / (double)nseg, tb = tc0 + span * (double)(j + 1) / (double)nseg;
      Peak q = search(&c, off_mid - rng, off_mid + rng, 0.01, 0, ta, tb);
      if (q.rho < 0.6 || q.n < 30 || !(q.curv > 0)) continue;
      double var = (1 - q.rho * q.rho) / (2 * q.curv * q.rho * (double)q.n) + 1e-8;
      so[ns] = q.off;
      st[ns] = imu_time(0.5 * (ta + tb), q.off, 0, c.t_mid) - c.t_mid;
      sw[ns] = 1.0 / var;
      ns++;
    }
    for (int pass = 0; pass < 2 && ns >= 2; pass++) {
      double W = 0, Wt = 0, Wo = 0, Wtt = 0, Wto = 0;
      for (size_t j = 0; j < ns; j++) {
        if (sw[j] <= 0) continue;
        W += sw[j]; Wt += sw[j] * st[j]; Wo += sw[j] * so[j];
        Wtt += sw[j] * st[j] * st[j]; Wto += sw[j] * st[j] * so[j];
      }
      double den = W * Wtt - Wt * Wt;
      if (!(W > 0) || !(den > 0)) break;
      double b = (W * Wto - Wt * Wo) / den, a = (Wo - b * Wt) / W;
      if (fabs(b) > 3e-4) break;   /* beyond any quartz clock: keep the constant offset */
      off_mid = a;
      drift = b;
      for (size_t j = 0; j < ns; j++)
        if (fabs(so[j] - (a + b * st[j])) > 0.01) sw[j] = 0;  /* a segment that locked wrongly */
    }
    free(so); free(st); free(sw);
  }
  size_t nu = 0;
  double rho = score(&c, off_mid, drift, -INFINITY, INFINITY, &nu);
  ctx_free(&c);
  if (rho < 0.5)
    return aw_error_set(err, AW_ERR_NO_CORRELATION, "depth", 0, 0,
                        "the camera and IMU motion do not agree at any clock offset within "
                        "+-%.2f s (best correlation %.2f)", max_off, rho);
  rep->clock_drift = drift;
  rep->clock_offset_s = off_mid - drift * c.t_mid;
  rep->clock_peak_corr = rho;
  double sep = pk.rho_second > -1 ? (rho - pk.rho_second) / 0.3 : 1;
  rep->clock_confidence = fmax(0, fmin(1, rho)) * fmax(0, fmin(1, sep));
  double var = pk.curv > 0 ? (1 - rho * rho) / (2 * pk.curv * fmax(rho, 0.1) * (double)nu) : 1e-4;
  rep->clock_offset_sigma_s = sqrt(fmax(var, 0));
  if (g_cam_out) for (int a = 0; a < 3; a++) g_cam_out[a] = (double)NAN;
  return AW_OK;
}
