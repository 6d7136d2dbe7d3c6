/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Finding swings in a recording and timing their events. */
#include "arcwise/analysis.h"
#include "arcwise/math3.h"
#include "analysis-private.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void
aw_trajectory_from_fused(const AwFusedPath *path, double accel_range_m_s2,
                         double gyro_range_rad_s, AwTrajectory *out)
{
  memset(out, 0, sizeof *out);
  if (path == NULL)
    return;
  out->n = path->n;
  out->t_s = path->t_s;
  out->pos_m = (const double (*)[3])path->pos_cam_m;
  out->vel_m_s = (const double (*)[3])path->vel_cam_m_s;
  out->q_f_body = (const double (*)[4])path->q_cam_body;
  out->accel_body_m_s2 = (const double (*)[3])path->accel_body_m_s2;
  out->gyro_body_rad_s = (const double (*)[3])path->gyro_body_rad_s;
  out->pos_sigma_m = (const double (*)[3])path->pos_sigma_cam_m;
  out->cam_info_share = path->cam_info_share;
  out->flags = path->flags;
  /* Up is the grav frame's +z seen in the camera frame. */
  const double z_grav[3] = { 0, 0, 1 };
  aw_quat_rotate(out->up, path->report.q_cam_grav, z_grav);
  aw_v3_normalize(out->up, out->up);
  out->sync_offset_s = path->report.clock_offset_s;
  out->sync_confidence = path->report.clock_confidence;
  out->accel_range_m_s2 = accel_range_m_s2;
  out->gyro_range_rad_s = gyro_range_rad_s;
}

size_t
aw_an_index_at(const double *t_s, size_t n, double t)
{
  if (n == 0 || t <= t_s[0])
    return 0;
  if (t >= t_s[n - 1])
    return n - 1;
  size_t lo = 0, hi = n - 1; /* t_s[lo] <= t < t_s[hi] */
  while (hi - lo > 1) {
    size_t mid = lo + (hi - lo) / 2;
    if (t_s[mid] <= t)
      lo = mid;
    else
      hi = mid;
  }
  return lo;
}

void
aw_an_interp3(const double *t_s, const double (*x)[3], size_t n, double t, double out[3])
{
  size_t i = aw_an_index_at(t_s, n, t);
  if (i + 1 >= n || t <= t_s[0]) {
    aw_v3_copy(out, x[i]);
    return;
  }
  double u = (t - t_s[i]) / (t_s[i + 1] - t_s[i]);
  for (int a = 0; a < 3; a++)
    out[a] = x[i][a] + u * (x[i + 1][a] - x[i][a]);
}

static int
cmp_double(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return x < y ? -1 : x > y ? 1 : 0;
}

static double
median_of(double *v, size_t n)
{
  if (n == 0)
    return AN_NAN;
  qsort(v, n, sizeof *v, cmp_double);
  return n % 2 ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

static void
work_free(AwAnWork *w)
{
  free(w->vel);
  free(w->speed);
  w->vel = NULL;
  w->speed = NULL;
}

static AwStatus
work_init(AwAnWork *w, const AwTrajectory *tr, const AwAnalysisSettings *set, AwError *err)
{
  memset(w, 0, sizeof *w);
  w->traj = tr;
  w->set = set;
  w->n = tr->n;
  size_t n = tr->n;
  if (tr->t_s == NULL || tr->pos_m == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "trajectory without times or positions");
  if (n < 8)
    return aw_error_set(err, AW_ERR_TOO_FEW, "", 0, 0,
                        "the recording holds only %zu samples; a swing needs far more", n);
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(tr->t_s[i]) || !isfinite(tr->pos_m[i][0]) || !isfinite(tr->pos_m[i][1]) ||
        !isfinite(tr->pos_m[i][2]))
      return aw_error_set(err, AW_ERR_NON_FINITE, "", 0, 0,
                          "sample %zu of the hand path is not a finite number", i);
    if (i > 0 && !(tr->t_s[i] > tr->t_s[i - 1]))
      return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0,
                          "time does not increase at sample %zu (t = %.6f s)", i, tr->t_s[i]);
  }
  double un = aw_v3_norm(tr->up);
  if (!(un > 0.5 && un < 2.0))
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "no direction of gravity given");
  aw_v3_scale(w->up, tr->up, 1.0 / un);

  double *dts = malloc((n - 1) * sizeof *dts);
  w->vel = malloc(n * sizeof *w->vel);
  w->speed = malloc(n * sizeof *w->speed);
  if (dts == NULL || w->vel == NULL || w->speed == NULL) {
    free(dts);
    work_free(w);
    return aw_error_set(err, AW_ERR_NO_MEMORY, "", 0, 0, "out of memory");
  }
  for (size_t i = 0; i + 1 < n; i++)
    dts[i] = tr->t_s[i + 1] - tr->t_s[i];
  w->dt_s = median_of(dts, n - 1);
  free(dts);

  if (tr->vel_m_s != NULL) {
    memcpy(w->vel, tr->vel_m_s, n * sizeof *w->vel);
  } else {
    /* Savitzky-Golay derivative (cubic) over about 40 ms, at least 5 samples: short enough to
     * keep the downswing's peak (tens of ms wide), long enough to tame depth noise. */
    int half = (int)lround(0.02 / w->dt_s);
    if (half < 2)
      half = 2;
    if (!aw_an_derivative3(tr->t_s, tr->pos_m, n, half, 3, w->vel)) {
      work_free(w);
      return aw_error_set(err, AW_ERR_TOO_FEW, "", 0, 0, "too few samples to differentiate");
    }
  }
  for (size_t i = 0; i < n; i++)
    w->speed[i] = aw_v3_norm(w->vel[i]);
  return AW_OK;
}

/* Time where a sampled signal crosses level between samples i and i+1 (linear). */
static double
cross_time(const double *t_s, const double *x, size_t i, double level)
{
  double a = x[i], b = x[i + 1];
  double u = b != a ? (level - a) / (b - a) : 0.5;
  if (u < 0) u = 0;
  if (u > 1) u = 1;
  return t_s[i] + u * (t_s[i + 1] - t_s[i]);
}

static double
height_above(const AwAnWork *w, size_t i, const double p0[3])
{
  double d[3];
  aw_v3_sub(d, w->traj->pos_m[i], p0);
  return aw_v3_dot(d, w->up);
}

typedef enum {
  CAND_OK = 0,
  CAND_NOT_SWING,     /* a motion that is not a swing */
  CAND_CUT_START,     /* the recording begins inside it */
  CAND_CUT_END,       /* the recording ends inside it */
} CandResult;

typedef struct {
  double best_peak_speed;
  double best_peak_t;
  double cut_end_t;
  size_t n_looked;
} FindStats;

/* The specific force at sample i in the trajectory frame (with the watch's orientation), or
 * its magnitude in component 0 when there is none. */
static void
force_at(const AwAnWork *w, size_t i, double f[3])
{
  const double (*a)[3] = w->traj->accel_body_m_s2;
  const double (*q)[4] = w->traj->q_f_body;
  if (q != NULL) {
    aw_quat_rotate(f, q[i], a[i]);
  } else {
    f[0] = aw_v3_norm(a[i]);
    f[1] = f[2] = 0;
  }
}

/* Change of the force's level across sample k: straight lines (least squares) through the
 * four samples k-5..k-2 and through k+2..k+5, each evaluated at k; the distance between the two
 * values. Samples k-1..k+1, which a transient at k (or straddling k and a neighbour) occupies,
 * are left out. NaN when the recording is too short on either side. */
static double
force_level_change(const AwAnWork *w, size_t k)
{
  const double *t = w->traj->t_s;
  if (k < 5 || k + 5 >= w->n)
    return AN_NAN;
  double lv[2][3];
  for (int side = 0; side < 2; side++) {
    size_t i0 = side ? k + 2 : k - 5;
    double st = 0, stt = 0, sf[3] = { 0, 0, 0 }, stf[3] = { 0, 0, 0 };
    for (size_t i = i0; i < i0 + 4; i++) {
      double f[3], u = t[i] - t[k];
      force_at(w, i, f);
      st += u;
      stt += u * u;
      for (int c = 0; c < 3; c++) {
        sf[c] += f[c];
        stf[c] += u * f[c];
      }
    }
    double den = 4 * stt - st * st;
    for (int c = 0; c < 3; c++) {
      double slope = den > 0 ? (4 * stf[c] - st * sf[c]) / den : 0;
      lv[side][c] = (sf[c] - slope * st) / 4; /* the line's value at u = 0 */
    }
  }
  return aw_v3_dist(lv[0], lv[1]);
}

/* The impact transient: the sample where the specific force departs most sharply from its
 * neighbours (second difference), if it stands well above the local roughness. */
static bool
find_contact(const AwAnWork *w, size_t i_lo, size_t i_hi, size_t r_lo, size_t r_hi,
             double *t_out, double *sigma_out)
{
  const double (*a)[3] = w->traj->accel_body_m_s2;
  if (a == NULL || i_hi <= i_lo + 2 || r_hi <= r_lo + 4)
    return false;
  size_t nr = r_hi - r_lo;
  double *rough = malloc(nr * sizeof *rough), *tmp = malloc(nr * sizeof *tmp);
  if (rough == NULL || tmp == NULL) {
    free(rough);
    free(tmp);
    return false;
  }
  for (size_t k = 0; k < nr; k++) {
    size_t i = r_lo + k;
    if (i == 0 || i + 1 >= w->n) {
      rough[k] = 0;
      continue;
    }
    /* The forearm turns up to 40 rad/s through impact, which swings the specific force
     * around the watch's own axes from sample to sample; seen in the trajectory frame (with
     * the watch's orientation) the force changes smoothly except at contact. Without an
     * orientation its magnitude, which turning leaves alone, is used. */
    const double (*q)[4] = w->traj->q_f_body;
    if (q != NULL) {
      double f0[3], f1[3], f2[3], d[3];
      aw_quat_rotate(f0, q[i - 1], a[i - 1]);
      aw_quat_rotate(f1, q[i], a[i]);
      aw_quat_rotate(f2, q[i + 1], a[i + 1]);
      for (int c = 0; c < 3; c++)
        d[c] = f1[c] - 0.5 * (f0[c] + f2[c]);
      rough[k] = aw_v3_norm(d);
    } else {
      rough[k] = fabs(aw_v3_norm(a[i]) - 0.5 * (aw_v3_norm(a[i - 1]) + aw_v3_norm(a[i + 1])));
    }
  }
  memcpy(tmp, rough, nr * sizeof *tmp);
  double med = median_of(tmp, nr);
  for (size_t k = 0; k < nr; k++)
    tmp[k] = fabs(rough[k] - med);
  double mad = 1.4826 * median_of(tmp, nr);
  free(tmp);
  size_t kbest = 0;
  double best = -1;
  for (size_t i = i_lo; i < i_hi; i++) {
    if (i < r_lo || i >= r_hi)
      continue;
    if (rough[i - r_lo] > best) {
      best = rough[i - r_lo];
      kbest = i;
    }
  }
  /* 2 m/s^2 is far above the accelerometer's white noise at any consumer rate (REFERENCES.md
   * §8: about 0.0125 m/s^2 rms at 100 Hz), so a dead-smooth analytic signal never fakes contact. */
  double thr = med + w->set->impact_snr * fmax(mad, 0.1);
  bool ok = best > thr && best > 2.0;
  /* A ball slows the hands by a share of their speed, not by a fixed amount: a fast practice
   * swing's smooth turn through the bottom of the arc (the forearm rolling at up to 40 rad/s
   * swings the watch's own centripetal force around) leaves a second difference of some
   * 5-15 m/s^2, which stands above a quiet background but is a velocity change of well under
   * 1 % of the hands' speed per sample, where a ball costs several per cent (settings). */
  if (ok && !(best * w->dt_s >= w->set->contact_min_loss * w->speed[kbest]))
    ok = false;
  /* An impulse, not a change of the motion: the force's level after the transient is the
   * level before it (settings: contact_level_ratio). */
  if (ok) {
    double level = force_level_change(w, kbest);
    if (isfinite(level) && !(best > w->set->contact_level_ratio * level))
      ok = false;
  }
  if (ok) {
    /* A contact of a few ms falls inside one anti-aliased sample or straddles two: centroid of
     * the excess roughness over the peak and its neighbours. */
    double sw = 0, st = 0;
    for (size_t i = kbest > 0 ? kbest - 1 : 0; i <= kbest + 1 && i < r_hi; i++) {
      if (i < r_lo)
        continue;
      double e = rough[i - r_lo] - thr;
      if (e > 0) {
        sw += e;
        st += e * w->traj->t_s[i];
      }
    }
    *t_out = sw > 0 ? st / sw : w->traj->t_s[kbest];
    *sigma_out = 0.5 * w->dt_s;
  }
  free(rough);
  return ok;
}

/* The watch at rest at sample i, from its own readings: turning slower than a hand held
 * still can (still_speed_m_s at the end of a lead arm of about 0.6 m: 0.25 rad/s; a consumer
 * gyro's bias of a few deg/s is far below that, REFERENCES.md §8), and the specific force
 * within the change a still hand allows of its value one still_min_s later (a hand that stays
 * below still_speed_m_s for still_min_s averages under still_speed_m_s / still_min_s of
 * acceleration; twice that, 1.2 m/s^2 by default, leaves room for noise). */
static bool
imu_still_at(const AwAnWork *w, size_t i)
{
  const AwAnalysisSettings *set = w->set;
  const double (*g)[3] = w->traj->gyro_body_rad_s, (*a)[3] = w->traj->accel_body_m_s2;
  if (g == NULL || a == NULL || i >= w->n)
    return false;
  double rate_max = set->still_speed_m_s / 0.6;
  double df_max = 2.0 * set->still_speed_m_s / fmax(set->still_min_s, 0.05);
  size_t j = aw_an_index_at(w->traj->t_s, w->n, w->traj->t_s[i] + set->still_min_s);
  double d[3];
  aw_v3_sub(d, a[j], a[i]);
  return aw_v3_norm(g[i]) < rate_max && aw_v3_norm(d) < df_max;
}

/* The watch at rest over still_min_s from sample i on (every sample of that stretch). */
static bool
imu_still_from(const AwAnWork *w, size_t i)
{
  const double *t = w->traj->t_s;
  if (w->traj->gyro_body_rad_s == NULL || w->traj->accel_body_m_s2 == NULL)
    return false;
  if (t[w->n - 1] - t[i] < 2.0 * w->set->still_min_s)
    return false;
  for (size_t k = i; k < w->n && t[k] - t[i] <= w->set->still_min_s; k++)
    if (!imu_still_at(w, k))
      return false;
  return true;
}

/* Tries to build a swing around the downswing speed peak at ipk. */
static CandResult
try_swing(const AwAnWork *w, size_t ipk, AwSwing *s, size_t *next_i)
{
  const AwAnalysisSettings *set = w->set;
  const double *t = w->traj->t_s;
  const double *sp = w->speed;
  size_t n = w->n;
  double vpk = sp[ipk];
  *next_i = ipk + 1;

  /* Top: walking back from the peak, the speed valley before the backswing's own hump. */
  size_t i = ipk, itop = ipk;
  double vmin = vpk;
  double climb = fmax(0.3, 0.15 * vpk);
  bool hump = false;
  /* A downswing lasts well under 0.8 s; the valley must lie within that of the peak. */
  while (i > 0 && t[ipk] - t[i] < 0.8) {
    i--;
    if (sp[i] < vmin) {
      vmin = sp[i];
      itop = i;
    } else if (sp[i] > vmin + climb && vmin < 0.5 * vpk) {
      /* Only a deep valley is the top: the ball-contact dip (a few ms, some 5-20 % of the
       * speed) must not pass for one. */
      hump = true;
      break;
    }
  }
  if (!hump) {
    if (i == 0)
      return CAND_CUT_START;
    return CAND_NOT_SWING;
  }
  /* Takeaway: further back over the backswing to where the hands were still at address. */
  size_t j = itop;
  /* The hands may pass the top slower than the still threshold (or pause there): first back
   * out of the valley, at most 0.5 s, then over the backswing's hump. */
  while (j > 0 && sp[j] < set->still_speed_m_s && t[itop] - t[j] < 0.5)
    j--;
  while (j > 0 && sp[j] >= set->still_speed_m_s) {
    j--;
    if (t[itop] - t[j] > 3.0)
      return CAND_NOT_SWING; /* no set-up within 3 s: not a swing from address */
  }
  if (j == 0 && sp[0] >= set->still_speed_m_s)
    return CAND_CUT_START;
  size_t i_still_end = j; /* last still sample before the backswing */
  /* The still set-up: back while still. */
  size_t a0 = i_still_end;
  while (a0 > 0 && sp[a0 - 1] < set->still_speed_m_s && t[i_still_end] - t[a0 - 1] <= 3.0)
    a0--;
  /* Address position: the mean over the last 0.3 s of the set-up. */
  double p0[3] = { 0, 0, 0 };
  size_t np = 0;
  for (size_t k = i_still_end + 1; k-- > a0;) {
    if (t[i_still_end] - t[k] > 0.3)
      break;
    aw_v3_axpy(p0, 1.0, w->traj->pos_m[k]);
    np++;
  }
  aw_v3_scale(p0, p0, 1.0 / (double)np);
  /* Noise floor of the speed at address, then the onset: the hands leave the floor. */
  double floor_v = 0;
  {
    double m = 0, m2 = 0;
    size_t c = 0;
    for (size_t k = a0; k <= i_still_end; k++) {
      m += sp[k];
      m2 += sp[k] * sp[k];
      c++;
    }
    m /= (double)c;
    double sd = sqrt(fmax(m2 / (double)c - m * m, 0));
    floor_v = fmin(fmax(m + 3 * sd, 0.01), set->still_speed_m_s);
  }
  size_t k_on = i_still_end;
  while (k_on < itop && sp[k_on + 1] <= floor_v)
    k_on++;
  while (k_on > a0 && sp[k_on] > floor_v)
    k_on--;
  /* The takeaway. The hands leave rest smoothly: a rate grows as a power of the time since
   * the onset, x = c (t - t0)^k, so the crossings of L, 4L and 16L give k and t0 by
   * extrapolation, which a single threshold crossing would place late. The watch's angular
   * rate is the better witness: the lead forearm turns with the arm from the first instant,
   * while the wrist keypoint barely moves (and may even pause) while the club starts back. */
  double t_take = cross_time(t, sp, k_on, floor_v);
  const double (*gy)[3] = w->traj->gyro_body_rad_s;
  bool took = false;
  if (gy != NULL && i_still_end > a0) {
    size_t len = itop - a0 + 1;
    double *dev = malloc(len * sizeof *dev);
    if (dev != NULL) {
      /* Rate at address: the median per axis over the set-up (the set-up's last stretch may
       * already hold the slow start of the takeaway, which the median ignores), then the
       * deviation's median and spread (MAD). */
      size_t c = i_still_end - a0 + 1;
      double gm[3];
      for (int ax = 0; ax < 3; ax++) {
        for (size_t k = a0; k <= i_still_end; k++)
          dev[k - a0] = gy[k][ax];
        gm[ax] = median_of(dev, c);
      }
      for (size_t k = a0; k <= itop; k++) {
        double d[3];
        aw_v3_sub(d, gy[k], gm);
        dev[k - a0] = aw_v3_norm(d);
      }
      double *tmp = malloc(c * sizeof *tmp);
      double m = 0, sd = 0;
      if (tmp != NULL) {
        memcpy(tmp, dev, c * sizeof *tmp);
        m = median_of(tmp, c);
        for (size_t k = 0; k < c; k++)
          tmp[k] = fabs(dev[k] - m);
        sd = 1.4826 * median_of(tmp, c);
        free(tmp);
      }
      /* At least 0.1 rad/s (6 deg/s): far above a consumer gyro's noise (REFERENCES.md §8)
       * and far below the arm's rate a tenth of a second into the backswing. */
      double G = fmax(0.1, m + 5 * sd);
      /* From where the hands are surely moving, back to the first rise above G. */
      size_t k = i_still_end + 1 - a0;
      while (k > 0 && dev[k] > G)
        k--;
      while (k + 1 < len && dev[k + 1] <= G)
        k++;
      double tl[3];
      size_t kk = k;
      bool ok = true;
      for (int lev = 0; lev < 3 && ok; lev++) {
        double level = G * pow(4.0, lev);
        while (kk + 1 < len && dev[kk + 1] < level)
          kk++;
        if (kk + 1 >= len)
          ok = false;
        else
          tl[lev] = cross_time(t + a0, dev, kk, level);
      }
      if (ok && tl[1] > tl[0] && tl[2] > tl[1]) {
        double ratio = (tl[2] - tl[1]) / (tl[1] - tl[0]); /* = 4^(1/k) */
        if (ratio > 4.0) ratio = 4.0;     /* k >= 1 */
        if (ratio < 1.5874) ratio = 1.5874; /* k <= 3 */
        double t0 = tl[0] - (tl[1] - tl[0]) / (ratio - 1.0);
        if (t0 >= t[a0] && t0 < t[itop]) {
          t_take = t0;
          took = true;
        }
      }
      free(dev);
    }
  }
  if (!took) {
    double L = fmax(floor_v, 0.02), tl[3];
    size_t k = k_on;
    bool ok = true;
    for (int lev = 0; lev < 3 && ok; lev++) {
      double level = L * pow(4.0, lev);
      while (k < itop && sp[k + 1] < level)
        k++;
      if (k >= itop)
        ok = false;
      else
        tl[lev] = cross_time(t, sp, k, level);
    }
    if (ok && tl[1] > tl[0] && tl[2] > tl[1]) {
      double ratio = (tl[2] - tl[1]) / (tl[1] - tl[0]);
      if (ratio > 4.0) ratio = 4.0;
      if (ratio < 1.5874) ratio = 1.5874;
      double t0 = tl[0] - (tl[1] - tl[0]) / (ratio - 1.0);
      if (t0 < t_take && t0 > t[k_on] - 0.3)
        t_take = t0;
    }
  }
  /* Top height and reach. The hands' straight-line distance from address (reach) needs no
   * direction of gravity: a waggle moves the hands a few cm while the club head swings, a
   * fiddle with the watch stays near the body and far below swing speed, and any swing takes
   * the hands at least min_top_rise_m away (a lead arm of about 0.6 m turned by 20 degrees
   * already moves them 0.2 m). The top must also lie above address, by at least half that
   * distance: a gravity direction off by up to 14 degrees (asin(0.1 / 0.4) for a half swing's
   * 0.4 m reach) then still passes, where judging the height alone would drop a half swing
   * on the first few degrees of tilt. Walking carries the hands level. */
  double rise = -INFINITY, reach = 0;
  for (size_t k = k_on; k <= ipk; k++) {
    double h = height_above(w, k, p0);
    if (h > rise)
      rise = h;
    double r = aw_v3_dist(w->traj->pos_m[k], p0);
    if (r > reach)
      reach = r;
  }
  if (reach < set->min_top_rise_m || rise < 0.5 * set->min_top_rise_m ||
      vpk < set->min_peak_speed_m_s)
    return CAND_NOT_SWING;

  /* Top time: the hands reverse. The extreme of the position along the backswing's direction
   * of travel (taken from just before the valley), refined by a parabola through the three
   * samples around it: positions, not derivatives, so no smoothing shifts it. */
  double dir[3] = { 0, 0, 0 };
  for (size_t k = itop; k > k_on && t[itop] - t[k] < 0.12; k--)
    if (t[itop] - t[k] > 0.03)
      aw_v3_axpy(dir, 1.0, w->vel[k]);
  aw_v3_normalize(dir, dir);
  double t_top = t[itop];
  double sig_top = w->dt_s;
  {
    size_t lo = aw_an_index_at(t, n, t[itop] - 0.15), hi = aw_an_index_at(t, n, t[itop] + 0.15);
    if (lo < k_on)
      lo = k_on;
    if (hi > ipk)
      hi = ipk;
    size_t kx = itop;
    double best = -INFINITY;
    for (size_t k = lo; k <= hi; k++) {
      double e = aw_v3_dot(w->traj->pos_m[k], dir);
      if (e > best) {
        best = e;
        kx = k;
      }
    }
    t_top = t[kx];
    if (kx > 0 && kx + 1 < n) {
      double e0 = aw_v3_dot(w->traj->pos_m[kx - 1], dir), e2 = aw_v3_dot(w->traj->pos_m[kx + 1], dir);
      double den = e0 - 2 * best + e2;
      if (den < 0) {
        double u = 0.5 * (e0 - e2) / den;
        if (u > -1 && u < 1)
          t_top += u * (u > 0 ? t[kx + 1] - t[kx] : t[kx] - t[kx - 1]);
      }
      /* Timing noise: position noise against the curvature of the reversal, plus the
       * sampling step (the parabola's own model error is below a sample). */
      double h = 0.5 * (t[kx + 1] - t[kx - 1]);
      double curv = -den / (h * h);
      double sig_p = w->traj->pos_sigma_m != NULL ? aw_v3_norm(w->traj->pos_sigma_m[kx]) : 0.002;
      sig_top = sqrt(2.0 * sig_p / fmax(curv, 1e-6) + w->dt_s * w->dt_s / 12.0);
      if (sig_top > 0.1)
        sig_top = 0.1;
    }
  }

  /* Impact from the path: the hands pass closest to where they were at address. */
  size_t iimp = itop;
  double dbest = INFINITY;
  if (t[n - 1] - t[itop] < 0.8 && sp[n - 1] > set->still_speed_m_s)
    return CAND_CUT_END; /* the recording stops in the downswing */
  for (size_t k = itop; k < n && t[k] - t[itop] <= 0.8; k++) {
    double d = aw_v3_dist(w->traj->pos_m[k], p0);
    if (d < dbest) {
      dbest = d;
      iimp = k;
    }
    if (t[k] - t[ipk] > 0.25 && sp[k] < 0.5 * vpk)
      break;
  }
  if (dbest > 0.35)
    return CAND_NOT_SWING; /* the hands never came back to the ball */
  double t_imp_path = t[iimp];
  if (iimp > 0 && iimp + 1 < n) {
    double d0 = aw_v3_dist(w->traj->pos_m[iimp - 1], p0), d2 = aw_v3_dist(w->traj->pos_m[iimp + 1], p0);
    double den = d0 - 2 * dbest + d2;
    if (den > 0) {
      double u = 0.5 * (d0 - d2) / den;
      if (u > -1 && u < 1)
        t_imp_path += u * (u > 0 ? t[iimp + 1] - t[iimp] : t[iimp] - t[iimp - 1]);
    }
  }
  if (iimp + 1 >= n)
    return CAND_CUT_END;

  /* Finish: after the follow-through the hands come to rest, on the path or in the watch's
   * own readings (a fused path that has lost the camera can drift on at a few tenths of m/s
   * through a held finish, while the watch says plainly that it is still). */
  size_t ifin = iimp;
  bool rest = false, rest_imu = false;
  for (size_t k = iimp; k < n; k++) {
    if (t[k] - t_imp_path > 0.15 && sp[k] < set->still_speed_m_s) {
      ifin = k;
      rest = true;
      break;
    }
    if (t[k] - t_imp_path > 0.15 && imu_still_from(w, k)) {
      ifin = k;
      rest = rest_imu = true;
      break;
    }
    if (t[k] - t_imp_path > 4.0)
      break;
  }
  if (!rest) {
    size_t kend = aw_an_index_at(t, n, t_imp_path + 4.0);
    if (kend >= n - 1)
      return CAND_CUT_END;
    /* No held finish (the player walked off): the slowest moment of the follow-through. */
    double vm = INFINITY;
    for (size_t k = aw_an_index_at(t, n, t_imp_path + 0.3); k <= kend; k++)
      if (sp[k] < vm) {
        vm = sp[k];
        ifin = k;
      }
  }
  double t_fin = ifin > 0 ? cross_time(t, sp, ifin - 1, set->still_speed_m_s) : t[ifin];
  if (!rest || rest_imu)
    t_fin = t[ifin];
  /* End of the held finish: until the hands move again, at most 2 s. */
  size_t iend = ifin;
  while (iend + 1 < n && t[iend + 1] - t_fin <= 2.0 &&
         (rest_imu ? imu_still_at(w, iend + 1) : sp[iend + 1] < set->still_speed_m_s))
    iend++;

  /* Contact: search the accelerometer near the path estimate, through the downswing. */
  double t_imp = t_imp_path, sig_imp = fmax(0.015, w->dt_s);
  bool contact = false;
  {
    /* Not before 0.1 s after the top: no downswing is shorter (the sanity bound below). */
    size_t lo = aw_an_index_at(t, n, fmax(t_imp_path - 0.06, t_top + 0.1));
    size_t hi = aw_an_index_at(t, n, t_imp_path + 0.06) + 1;
    if (lo < itop + 1)
      lo = itop + 1;
    double tc = t_imp_path, sc = sig_imp;
    if (find_contact(w, lo, hi, itop, ifin > itop + 5 ? ifin : itop + 5 < n ? itop + 5 : n,
                     &tc, &sc)) {
      t_imp = tc;
      sig_imp = sc;
      contact = true;
    }
  }
  double t_down = t_imp - t_top, t_back = t_top - t_take;
  if (contact && !(t_down > 0.1) && t_imp_path - t_top > 0.1) {
    /* A "contact" right after the top is the turn itself, not a ball. */
    contact = false;
    t_imp = t_imp_path;
    sig_imp = fmax(0.015, w->dt_s);
    t_down = t_imp - t_top;
  }
  /* Physical sanity: a downswing from a top takes 0.1-1 s, a backswing 0.15-3 s. */
  if (!(t_down > 0.1 && t_down < 1.0 && t_back > 0.15 && t_back < 3.0))
    return CAND_NOT_SWING;

  memset(s, 0, sizeof *s);
  s->i_start = a0;
  s->i_end = iend + 1;
  s->t_start_s = t[a0];
  s->t_end_s = t[iend];
  aw_v3_copy(s->origin_f_m, p0);
  s->events[AW_EVENT_ADDRESS] = (AwEvent){ t[a0], fmax(w->dt_s, 0.5 * set->still_min_s), false };
  s->events[AW_EVENT_TAKEAWAY] = (AwEvent){ t_take, sqrt(w->dt_s * w->dt_s / 12.0 + 1e-4), false };
  s->events[AW_EVENT_TOP] = (AwEvent){ t_top, sig_top, false };
  s->events[AW_EVENT_IMPACT] = (AwEvent){ t_imp, sig_imp, !contact };
  s->events[AW_EVENT_FINISH] = (AwEvent){ t_fin, rest ? fmax(w->dt_s, 0.02) : 0.1, false };
  s->practice = !contact && w->traj->accel_body_m_s2 != NULL;
  s->half = rise < set->full_top_rise_m;
  s->handed = set->handed;
  *next_i = iend + 1;
  return CAND_OK;
}

AwStatus
aw_analyze(const AwTrajectory *traj, const AwAnalysisSettings *settings_in, AwAnalysis **out,
           AwError *err)
{
  if (out == NULL || traj == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "no trajectory or no result");
  *out = NULL;
  AwAnalysisSettings set;
  if (settings_in != NULL)
    set = *settings_in;
  else
    aw_analysis_settings_default(&set);
  if (set.club_length_m != 0.0 &&
      !(set.club_length_m >= AW_CLUB_LENGTH_MIN_M && set.club_length_m <= AW_CLUB_LENGTH_MAX_M))
    return aw_error_set(err, AW_ERR_RANGE, "", 0, 0,
                        "club length %.3f m is outside the Rules of Golf limits (0.457-1.219 m)",
                        set.club_length_m);
  if (aw_club_info(set.club) == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "unknown club type");
  AwAnWork w;
  AwStatus st = work_init(&w, traj, &set, err);
  if (st != AW_OK)
    return st;

  AwAnalysis *a = calloc(1, sizeof *a);
  size_t cap = 0;
  if (a == NULL) {
    work_free(&w);
    return aw_error_set(err, AW_ERR_NO_MEMORY, "", 0, 0, "out of memory");
  }
  FindStats fs = { 0, AN_NAN, AN_NAN, 0 };
  size_t n = w.n;
  const double *sp = w.speed;
  size_t i = 1;
  while (i + 1 < n) {
    /* Next local speed maximum above the swing threshold. */
    if (!(sp[i] >= set.min_peak_speed_m_s && sp[i] >= sp[i - 1] && sp[i] > sp[i + 1])) {
      if (sp[i] > 1.0 && sp[i] >= sp[i - 1] && sp[i] > sp[i + 1] &&
          !(sp[i] <= fs.best_peak_speed))
        fs.best_peak_speed = sp[i], fs.best_peak_t = traj->t_s[i];
      i++;
      continue;
    }
    /* The downswing's peak: the highest speed within 0.15 s. */
    size_t ipk = i;
    for (size_t k = i; k < n && traj->t_s[k] - traj->t_s[i] < 0.15; k++)
      if (sp[k] > sp[ipk])
        ipk = k;
    if (!(sp[ipk] <= fs.best_peak_speed))
      fs.best_peak_speed = sp[ipk], fs.best_peak_t = traj->t_s[ipk];
    fs.n_looked++;
    AwSwing s;
    size_t next = ipk + 1;
    CandResult r = try_swing(&w, ipk, &s, &next);
    if (r == CAND_OK) {
      if (a->n_swings == cap) {
        size_t nc = cap ? 2 * cap : 8;
        AwSwing *ns = realloc(a->swings, nc * sizeof *ns);
        if (ns == NULL) {
          aw_analysis_free(a);
          work_free(&w);
          return aw_error_set(err, AW_ERR_NO_MEMORY, "", 0, 0, "out of memory");
        }
        a->swings = ns;
        cap = nc;
      }
      s.club = set.club;
      s.club_length_m = set.club_length_m > 0 ? set.club_length_m
                                              : aw_club_info(set.club)->default_length_m;
      aw_an_swing_metrics(&w, &s);
      a->swings[a->n_swings++] = s;
      i = next;
    } else {
      if (r == CAND_CUT_END && isnan(fs.cut_end_t))
        fs.cut_end_t = traj->t_s[ipk];
      a->n_ignored++;
      /* Skip the rest of this speed hump, down to its valley, and no further: a fast
       * backswing's own hump fails here (no top before it), and the downswing hump that
       * follows within a few tenths of a second must still be looked at. */
      i = ipk + 1;
      while (i + 1 < n && sp[i + 1] <= sp[i])
        i++;
    }
  }
  work_free(&w);
  if (a->n_swings == 0) {
    AwStatus code = AW_ERR_NO_SWING;
    if (!isnan(fs.cut_end_t))
      code = aw_error_set(err, AW_ERR_INCOMPLETE, "", 0, 0,
                          "the recording ends mid-swing: a downswing at %.2f s has no finish "
                          "before the recording stops at %.2f s",
                          fs.cut_end_t, traj->t_s[n - 1]);
    else if (fs.n_looked == 0)
      code = aw_error_set(err, AW_ERR_NO_SWING, "", 0, 0,
                          "no swing in the recording: the hands never moved faster than %.1f m/s "
                          "(fastest %.1f m/s), so only waggles, walking or handling were seen",
                          set.min_peak_speed_m_s, isnan(fs.best_peak_speed) ? 0.0 : fs.best_peak_speed);
    else
      code = aw_error_set(err, AW_ERR_NO_SWING, "", 0, 0,
                          "no swing in the recording: %zu fast movements (fastest %.1f m/s at "
                          "%.2f s) did not start from a still address, rise into a backswing "
                          "and return to the ball",
                          fs.n_looked, fs.best_peak_speed, fs.best_peak_t);
    aw_analysis_free(a);
    return code;
  }
  *out = a;
  return AW_OK;
}

void
aw_analysis_free(AwAnalysis *a)
{
  if (a == NULL)
    return;
  free(a->swings);
  free(a);
}
