/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Data-quality findings: interval statistics, gaps, jitter, saturation, missing depth frames. */
#include "arcwise/quality.h"
#include "arcwise/units.h"
#include "capture-private.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void
aw_quality_settings_default(AwQualitySettings *out)
{
  if (out == NULL)
    return;
  /* Common practice, not a standard: one dropped sample doubles an interval, so anything past
   * halfway (1.5x) is a gap; a quarter period of timing error is more than sensor clocks
   * normally show. */
  out->gap_factor = 1.5;
  out->jitter_fraction = 0.25;
  out->jitter_merge_intervals = 10;
  /* Within 0.5 % of full scale: a 16-bit converter tops out at 32767/32768 of its range, and
   * factory scale trims move the clip level by a fraction of a percent. */
  out->saturation_fraction = 0.995;
  out->flat_rel_tol = 1e-6;
  out->flat_min_run = 3;
  /* Smallest full scales offered by consumer MEMS parts: +-2 g, +-125 deg/s (datasheet class
   * figures, from memory; see REFERENCES.md section 8). */
  out->accel_min_full_scale_m_s2 = 2.0 * AW_GRAVITY_STANDARD_M_S2;
  out->gyro_min_full_scale_rad_s = 125.0 * AW_RAD_PER_DEG;
}

const char *
aw_finding_kind_to_string(AwFindingKind kind)
{
  switch (kind) {
  case AW_FINDING_GAP: return "gap";
  case AW_FINDING_JITTER: return "jitter";
  case AW_FINDING_SATURATION: return "saturation";
  case AW_FINDING_MISSING_FRAMES: return "missing-frames";
  default: return "unknown";
  }
}

/* ---- medians ---------------------------------------------------------------------------- */

static double
select_kth(double *a, size_t n, size_t k)
{
  size_t lo = 0, hi = n - 1;
  while (lo < hi) {
    double pivot = a[lo + (hi - lo) / 2];
    size_t i = lo, j = hi;
    while (i <= j) {
      while (a[i] < pivot)
        i++;
      while (a[j] > pivot)
        j--;
      if (i <= j) {
        double tmp = a[i];
        a[i] = a[j];
        a[j] = tmp;
        i++;
        if (j == 0)
          break;
        j--;
      }
    }
    if (k <= j)
      hi = j;
    else if (k >= i)
      lo = i;
    else
      return a[k];
  }
  return a[k];
}

double
aw_capture_median_inplace(double *a, size_t n)
{
  if (n == 0)
    return NAN;
  double med = select_kth(a, n, n / 2);
  if (n % 2 == 0) {
    /* after selecting n/2, a[0..n/2) holds the lower half: its largest is the other middle */
    double lower = a[0];
    for (size_t i = 1; i < n / 2; i++)
      if (a[i] > lower)
        lower = a[i];
    med = 0.5 * (med + lower);
  }
  return med;
}

double
aw_capture_median_interval(const double *t, size_t n)
{
  if (n < 2)
    return NAN;
  double *d = malloc((n - 1) * sizeof *d);
  if (d == NULL)
    return NAN;
  for (size_t i = 0; i + 1 < n; i++)
    d[i] = t[i + 1] - t[i];
  double med = aw_capture_median_inplace(d, n - 1);
  free(d);
  return med;
}

/* ---- report building -------------------------------------------------------------------- */

typedef struct {
  AwQualityReport *r;
  size_t cap;
  bool oom;
} Builder;

static void
add(Builder *b, const AwFinding *f)
{
  if (b->oom)
    return;
  if (b->r->n_findings == b->cap) {
    size_t nc = b->cap ? b->cap * 2 : 16;
    AwFinding *nf = realloc(b->r->findings, nc * sizeof *nf);
    if (nf == NULL) {
      b->oom = true;
      return;
    }
    b->r->findings = nf;
    b->cap = nc;
  }
  b->r->findings[b->r->n_findings++] = *f;
}

static int
cmp_finding(const void *pa, const void *pb)
{
  const AwFinding *a = pa, *b = pb;
  if (a->kind != b->kind)
    return a->kind < b->kind ? -1 : 1;
  if (a->first != b->first)
    return a->first < b->first ? -1 : 1;
  return (a->axes > b->axes) - (a->axes < b->axes);
}

/* Findings grouped by kind, each kind in time order (saturation runs of the two sensors are
 * found one sensor after the other). */
static void
sort_findings(AwQualityReport *r)
{
  if (r->n_findings > 1)
    qsort(r->findings, r->n_findings, sizeof *r->findings, cmp_finding);
}

void
aw_quality_report_free(AwQualityReport *r)
{
  if (r == NULL)
    return;
  free(r->findings);
  free(r);
}

/* Interval statistics, gaps and jitter: common to both streams. */
static bool
timing(Builder *b, const double *t, size_t n, const AwQualitySettings *set)
{
  AwQualityReport *r = b->r;
  r->n_samples = n;
  if (n == 0)
    return true;
  r->t_first_s = t[0];
  r->t_last_s = t[n - 1];
  r->duration_s = t[n - 1] - t[0];
  if (n < 2)
    return true;
  size_t m = n - 1;
  double *d = malloc(m * sizeof *d);
  if (d == NULL)
    return false;
  r->dt_min_s = INFINITY;
  r->dt_max_s = -INFINITY;
  for (size_t i = 0; i < m; i++) {
    d[i] = t[i + 1] - t[i];
    if (d[i] < r->dt_min_s)
      r->dt_min_s = d[i];
    if (d[i] > r->dt_max_s)
      r->dt_max_s = d[i];
  }
  double med = aw_capture_median_inplace(d, m);
  r->dt_median_s = med;
  r->rate_hz = med > 0 ? 1.0 / med : 0.0;
  for (size_t i = 0; i < m; i++)
    d[i] = fabs(d[i] - med);  /* order no longer matters: absolute deviations for the MAD */
  r->dt_spread_s = 1.4826 * aw_capture_median_inplace(d, m);
  free(d);

  double gap_dt = set->gap_factor * med;
  double jit = set->jitter_fraction * med;
  double sum = 0;
  size_t n_reg = 0;
  /* jitter run being collected */
  bool in_run = false;
  AwFinding run = { 0 };
  size_t run_last = 0;  /* index of the last irregular interval in the run */
  for (size_t i = 0; i < m; i++) {
    double dt = t[i + 1] - t[i];
    if (dt > gap_dt) {
      AwFinding f = { .kind = AW_FINDING_GAP, .t_start_s = t[i], .t_end_s = t[i + 1],
                      .first = i, .value = dt };
      double missing = floor(dt / med + 0.5) - 1.0;
      f.count = missing > 0 ? (size_t)missing : 0;
      add(b, &f);
      r->n_gaps++;
      r->gap_total_s += dt - med;
      continue;
    }
    sum += dt;
    n_reg++;
    double dev = fabs(dt - med);
    if (dev <= jit)
      continue;
    r->n_jitter_intervals++;
    if (in_run && i - run_last <= set->jitter_merge_intervals) {
      run.count++;
      run.t_end_s = t[i + 1];
      if (dev > run.value)
        run.value = dev;
      run_last = i;
      continue;
    }
    if (in_run)
      add(b, &run);
    run = (AwFinding){ .kind = AW_FINDING_JITTER, .t_start_s = t[i], .t_end_s = t[i + 1],
                       .first = i, .count = 1, .value = dev };
    run_last = i;
    in_run = true;
  }
  if (in_run)
    add(b, &run);
  if (n_reg > 1) {
    /* second pass about the mean: sum of squares minus n mean^2 cancels badly at 1e-16 */
    double mean = sum / (double)n_reg, ss = 0;
    for (size_t i = 0; i < m; i++) {
      double dt = t[i + 1] - t[i];
      if (dt <= gap_dt)
        ss += (dt - mean) * (dt - mean);
    }
    r->dt_sd_s = sqrt(ss / (double)(n_reg - 1));
  }
  return true;
}

static const AwQualitySettings *
settings_or_default(const AwQualitySettings *set, AwQualitySettings *store)
{
  if (set != NULL)
    return set;
  aw_quality_settings_default(store);
  return store;
}

/* Saturation level per axis and sign: declared full scale x fraction, or inferred from a
 * flat-topped run at the axis's extreme. */
static void
saturation_flags(const AwImuStream *s, const AwQualitySettings *set, uint8_t *flags,
                 double *accel_fs, double *gyro_fs, bool *accel_inf, bool *gyro_inf)
{
  memset(flags, 0, s->n);
  for (int sensor = 0; sensor < 2; sensor++) {
    double (*v)[3] = sensor == 0 ? s->accel_m_s2 : s->gyro_rad_s;
    double declared = sensor == 0 ? s->meta.accel_range_m_s2 : s->meta.gyro_range_rad_s;
    double floor_fs = sensor == 0 ? set->accel_min_full_scale_m_s2
                                  : set->gyro_min_full_scale_rad_s;
    double fs_used = 0;
    bool inferred = false;
    for (int k = 0; k < 3; k++) {
      uint8_t bit = (uint8_t)(1u << (sensor * 3 + k));
      if (declared > 0) {
        double lim = set->saturation_fraction * declared;
        for (size_t i = 0; i < s->n; i++)
          if (fabs(v[i][k]) >= lim)
            flags[i] |= bit;
        fs_used = declared;
        continue;
      }
      /* undeclared: look at both extremes of the axis */
      double hi = -INFINITY, lo = INFINITY;
      for (size_t i = 0; i < s->n; i++) {
        if (v[i][k] > hi)
          hi = v[i][k];
        if (v[i][k] < lo)
          lo = v[i][k];
      }
      for (int side = 0; side < 2; side++) {
        double x = side == 0 ? hi : lo;
        if (!(fabs(x) >= set->saturation_fraction * floor_fs))
          continue;
        double tol = set->flat_rel_tol * fabs(x);
        size_t run = 0, best = 0;
        for (size_t i = 0; i < s->n; i++) {
          run = fabs(v[i][k] - x) <= tol ? run + 1 : 0;
          if (run > best)
            best = run;
        }
        if (best < set->flat_min_run)
          continue;
        for (size_t i = 0; i < s->n; i++)
          if (fabs(v[i][k] - x) <= tol)
            flags[i] |= bit;
        if (fabs(x) > fs_used)
          fs_used = fabs(x);
        inferred = true;
      }
    }
    if (sensor == 0) {
      *accel_fs = fs_used;
      *accel_inf = inferred;
    } else {
      *gyro_fs = fs_used;
      *gyro_inf = inferred;
    }
  }
}

AwStatus
aw_imu_saturation_flags(const AwImuStream *s, const AwQualitySettings *settings, uint8_t *flags,
                        double *accel_fs_m_s2, double *gyro_fs_rad_s, AwError *err)
{
  if (s == NULL || flags == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no stream or no flags");
  AwQualitySettings store;
  const AwQualitySettings *set = settings_or_default(settings, &store);
  double afs, gfs;
  bool ai, gi;
  saturation_flags(s, set, flags, &afs, &gfs, &ai, &gi);
  if (accel_fs_m_s2 != NULL)
    *accel_fs_m_s2 = afs;
  if (gyro_fs_rad_s != NULL)
    *gyro_fs_rad_s = gfs;
  return AW_OK;
}

AwStatus
aw_imu_quality(const AwImuStream *s, const AwQualitySettings *settings, AwQualityReport **out,
               AwError *err)
{
  if (s == NULL || out == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no stream or no output");
  AwQualitySettings store;
  const AwQualitySettings *set = settings_or_default(settings, &store);
  AwQualityReport *r = calloc(1, sizeof *r);
  uint8_t *flags = malloc(s->n > 0 ? s->n : 1);
  Builder b = { r, 0, r == NULL || flags == NULL };
  if (!b.oom) {
    r->kind = AW_CAPTURE_IMU;
    if (!timing(&b, s->t_s, s->n, set))
      b.oom = true;
  }
  if (!b.oom) {
    saturation_flags(s, set, flags, &r->accel_full_scale_m_s2, &r->gyro_full_scale_rad_s,
                     &r->accel_full_scale_inferred, &r->gyro_full_scale_inferred);
    for (size_t i = 0; i < s->n; i++) {
      r->n_saturated += flags[i] != 0;
      r->n_saturated_accel += (flags[i] & AW_SAT_ACCEL) != 0;
      r->n_saturated_gyro += (flags[i] & AW_SAT_GYRO) != 0;
    }
    /* runs of consecutive saturated samples, one sensor at a time */
    for (int sensor = 0; sensor < 2; sensor++) {
      unsigned mask = sensor == 0 ? AW_SAT_ACCEL : AW_SAT_GYRO;
      double (*v)[3] = sensor == 0 ? s->accel_m_s2 : s->gyro_rad_s;
      for (size_t i = 0; i < s->n;) {
        if ((flags[i] & mask) == 0) {
          i++;
          continue;
        }
        AwFinding f = { .kind = AW_FINDING_SATURATION, .t_start_s = s->t_s[i], .first = i };
        size_t j = i;
        for (; j < s->n && (flags[j] & mask) != 0; j++) {
          f.axes |= flags[j] & mask;
          for (int k = 0; k < 3; k++)
            if ((flags[j] & (1u << (sensor * 3 + k))) && fabs(v[j][k]) > f.value)
              f.value = fabs(v[j][k]);
        }
        f.count = j - i;
        f.t_end_s = s->t_s[j - 1];
        add(&b, &f);
        i = j;
      }
    }
  }
  free(flags);
  if (!b.oom)
    sort_findings(r);
  if (b.oom) {
    aw_quality_report_free(r);
    return aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
  }
  *out = r;
  return AW_OK;
}

AwStatus
aw_depth_quality(const AwDepthStream *s, const AwQualitySettings *settings,
                 AwQualityReport **out, AwError *err)
{
  if (s == NULL || out == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no stream or no output");
  AwQualitySettings store;
  const AwQualitySettings *set = settings_or_default(settings, &store);
  AwQualityReport *r = calloc(1, sizeof *r);
  Builder b = { r, 0, r == NULL };
  if (!b.oom) {
    r->kind = AW_CAPTURE_DEPTH;
    if (!timing(&b, s->t_s, s->n, set))
      b.oom = true;
  }
  for (size_t i = 0; !b.oom && i < s->n;) {
    bool missing = s->conf[i] == 0.0 || isnan(s->pos_cam_m[i][0]);
    if (!missing) {
      i++;
      continue;
    }
    size_t j = i;
    while (j < s->n && (s->conf[j] == 0.0 || isnan(s->pos_cam_m[j][0])))
      j++;
    AwFinding f = { .kind = AW_FINDING_MISSING_FRAMES, .t_start_s = s->t_s[i],
                    .t_end_s = s->t_s[j - 1], .first = i, .count = j - i };
    f.value = f.t_end_s - f.t_start_s + (r->dt_median_s > 0 ? r->dt_median_s : 0.0);
    add(&b, &f);
    r->n_missing_frames += j - i;
    i = j;
  }
  if (b.oom) {
    aw_quality_report_free(r);
    return aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
  }
  *out = r;
  return AW_OK;
}
