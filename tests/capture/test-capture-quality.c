/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Data-quality findings on synthetic streams whose answers are known by construction: gaps,
 * jitter, saturation (declared and inferred full scale), missing depth frames; and the median
 * and spread against a plain sort-based implementation. */
#include "arcwise/quality.h"
#include "arcwise/units.h"
#include "capture-private.h"
#include "testutil.h"

#include <stdint.h>
#include <string.h>

static const AwFinding *
nth_finding(const AwQualityReport *q, AwFindingKind kind, size_t nth)
{
  for (size_t i = 0; i < q->n_findings; i++)
    if (q->findings[i].kind == kind && nth-- == 0)
      return &q->findings[i];
  return NULL;
}

static size_t
count_findings(const AwQualityReport *q, AwFindingKind kind)
{
  size_t n = 0;
  for (size_t i = 0; i < q->n_findings; i++)
    n += q->findings[i].kind == kind;
  return n;
}

static AwImuStream *
rest_stream(size_t n, double rate_hz)
{
  AwImuStream *s = aw_imu_stream_new(n);
  for (size_t i = 0; i < n; i++) {
    s->t_s[i] = (double)i / rate_hz;
    s->accel_m_s2[i][2] = AW_GRAVITY_STANDARD_M_S2;
    s->gyro_rad_s[i][0] = 0.001 * (double)(i % 3);  /* quantised noise, tiny and flat */
  }
  return s;
}

static void
test_gap_and_jitter(void)
{
  /* 100 Hz with samples 300, 301, 302 dropped: one gap of 40 ms, three samples missing */
  AwImuStream *s = rest_stream(1000, 100.0);
  memmove(&s->t_s[300], &s->t_s[303], (1000 - 303) * sizeof s->t_s[0]);
  s->n = 997;
  /* and one late sample: intervals of 13 ms then 7 ms around t = 5 s */
  s->t_s[497] += 0.003;
  AwQualityReport *q = NULL;
  AwError err;
  AW_CHECK(aw_imu_quality(s, NULL, &q, &err) == AW_OK);
  if (q != NULL) {
    AW_CHECK(q->n_samples == 997);
    AW_CHECK_NEAR(q->rate_hz, 100.0, 1e-9);
    AW_CHECK_NEAR(q->dt_median_s, 0.01, 1e-12);
    AW_CHECK_NEAR(q->dt_max_s, 0.04, 1e-12);
    AW_CHECK_NEAR(q->dt_min_s, 0.007, 1e-12);
    AW_CHECK(q->n_gaps == 1 && count_findings(q, AW_FINDING_GAP) == 1);
    const AwFinding *g = nth_finding(q, AW_FINDING_GAP, 0);
    if (g != NULL) {
      AW_CHECK_NEAR(g->t_start_s, 2.99, 1e-12);
      AW_CHECK_NEAR(g->t_end_s, 3.03, 1e-12);
      AW_CHECK_NEAR(g->value, 0.04, 1e-12);
      AW_CHECK(g->count == 3 && g->first == 299);
    }
    AW_CHECK_NEAR(q->gap_total_s, 0.03, 1e-12);
    AW_CHECK(q->n_jitter_intervals == 2 && count_findings(q, AW_FINDING_JITTER) == 1);
    const AwFinding *j = nth_finding(q, AW_FINDING_JITTER, 0);
    if (j != NULL) {
      AW_CHECK(j->first == 496 && j->count == 2);
      AW_CHECK_NEAR(j->t_start_s, 4.99, 1e-12);
      AW_CHECK_NEAR(j->t_end_s, 5.01, 1e-12);
      AW_CHECK_NEAR(j->value, 0.003, 1e-12);
    }
    AW_CHECK(q->n_saturated == 0);  /* rest data: nothing near any full scale */
  }
  aw_quality_report_free(q);
  aw_imu_stream_free(s);
}

/* A smooth swing-like peak, and clipped stretches at a known level. */
static AwImuStream *
clipped_stream(double fs_accel, double fs_gyro, bool clip)
{
  const double rate = 200.0;
  AwImuStream *s = rest_stream(2000, rate);
  for (size_t i = 0; i < s->n; i++) {
    double t = s->t_s[i];
    /* a 12 g smooth bump on ay around t = 2 s (below a 16 g full scale: never clipped) */
    s->accel_m_s2[i][1] = 12 * AW_GRAVITY_STANDARD_M_S2 * exp(-pow((t - 2.0) / 0.05, 2));
    /* a 2500 deg/s gyro z peak around t = 6 s (REFERENCES.md check 16: clipped at 2000) */
    double w = aw_deg_to_rad(2500) * exp(-pow((t - 6.0) / 0.08, 2));
    s->gyro_rad_s[i][2] = clip && w > fs_gyro ? fs_gyro : w;
  }
  if (clip) {
    for (size_t i = 100; i < 110; i++)
      s->accel_m_s2[i][0] = fs_accel;
    for (size_t i = 1500; i < 1505; i++)
      s->accel_m_s2[i][0] = -fs_accel;
  }
  return s;
}

static void
test_saturation(void)
{
  const double fs_a = 16 * AW_GRAVITY_STANDARD_M_S2 * 32767.0 / 32768.0; /* a 16-bit part */
  const double fs_g = aw_deg_to_rad(2000) * 32767.0 / 32768.0;
  /* expected gyro clipping: where 2500 exp(-((t-6)/0.08)^2) deg/s exceeds fs_g */
  size_t want_gyro = 0;
  for (size_t i = 0; i < 2000; i++) {
    double t = (double)i / 200.0;
    want_gyro += aw_deg_to_rad(2500) * exp(-pow((t - 6.0) / 0.08, 2)) > fs_g;
  }
  AW_CHECK(want_gyro >= 3);

  for (int declared = 0; declared < 2; declared++) {
    AwImuStream *s = clipped_stream(fs_a, fs_g, true);
    if (declared) {
      s->meta.accel_range_m_s2 = 16 * AW_GRAVITY_STANDARD_M_S2;
      s->meta.gyro_range_rad_s = aw_deg_to_rad(2000);
    }
    AwQualityReport *q = NULL;
    AwError err;
    AW_CHECK(aw_imu_quality(s, NULL, &q, &err) == AW_OK);
    if (q == NULL) {
      aw_imu_stream_free(s);
      continue;
    }
    AW_CHECK(q->n_saturated_accel == 15);
    AW_CHECK(q->n_saturated_gyro == want_gyro);
    AW_CHECK(q->n_saturated == 15 + want_gyro);
    AW_CHECK(count_findings(q, AW_FINDING_SATURATION) == 3);
    /* in time order: accel at 0.5 s, gyro around 6 s, accel at 7.5 s */
    const AwFinding *a0 = nth_finding(q, AW_FINDING_SATURATION, 0);
    const AwFinding *g0 = nth_finding(q, AW_FINDING_SATURATION, 1);
    const AwFinding *a1 = nth_finding(q, AW_FINDING_SATURATION, 2);
    if (a0 != NULL && a1 != NULL && g0 != NULL) {
      AW_CHECK(a0->first == 100 && a0->count == 10 && a0->axes == AW_SAT_AX);
      AW_CHECK_NEAR(a0->t_start_s, 0.5, 1e-12);
      AW_CHECK_NEAR(a0->t_end_s, 0.545, 1e-12);
      AW_CHECK(a0->value == fs_a);
      AW_CHECK(a1->first == 1500 && a1->count == 5 && a1->axes == AW_SAT_AX);
      AW_CHECK(g0->axes == AW_SAT_GZ && g0->count == want_gyro && g0->value == fs_g);
      AW_CHECK(g0->t_start_s < 6.0 && g0->t_end_s > 6.0);
    }
    if (declared) {
      AW_CHECK(!q->accel_full_scale_inferred && !q->gyro_full_scale_inferred);
      AW_CHECK(q->accel_full_scale_m_s2 == 16 * AW_GRAVITY_STANDARD_M_S2);
    } else {
      AW_CHECK(q->accel_full_scale_inferred && q->gyro_full_scale_inferred);
      AW_CHECK(q->accel_full_scale_m_s2 == fs_a && q->gyro_full_scale_rad_s == fs_g);
    }
    uint8_t *flags = malloc(s->n);
    double afs = 0, gfs = 0;
    AW_CHECK(aw_imu_saturation_flags(s, NULL, flags, &afs, &gfs, &err) == AW_OK);
    AW_CHECK(flags[100] == AW_SAT_AX && flags[99] == 0 && flags[1504] == AW_SAT_AX);
    AW_CHECK(flags[1200] == AW_SAT_GZ);  /* t = 6 s, the gyro peak */
    free(flags);
    aw_quality_report_free(q);
    aw_imu_stream_free(s);
  }

  /* No clipping anywhere: the 12 g bump and the unclipped 2500 deg/s peak are not flat-topped,
   * so nothing may be inferred. */
  AwImuStream *s = clipped_stream(fs_a, fs_g, false);
  AwQualityReport *q = NULL;
  AwError err;
  AW_CHECK(aw_imu_quality(s, NULL, &q, &err) == AW_OK);
  if (q != NULL) {
    AW_CHECK(q->n_saturated == 0 && count_findings(q, AW_FINDING_SATURATION) == 0);
    AW_CHECK(q->accel_full_scale_m_s2 == 0 && q->gyro_full_scale_rad_s == 0);
  }
  aw_quality_report_free(q);
  aw_imu_stream_free(s);
}

static void
test_missing_frames(void)
{
  AwDepthStream *d = aw_depth_stream_new(300);
  for (size_t i = 0; i < d->n; i++) {
    d->t_s[i] = 1.0 + (double)i / 30.0;
    bool lost = (i >= 40 && i < 52) || i == 200 || i == 299;
    d->pos_cam_m[i][0] = lost ? (double)NAN : 0.1;
    d->pos_cam_m[i][1] = lost ? (double)NAN : 0.2;
    d->pos_cam_m[i][2] = lost ? (double)NAN : 2.0;
    d->conf[i] = lost ? 0.0 : 0.8;
  }
  AwQualityReport *q = NULL;
  AwError err;
  AW_CHECK(aw_depth_quality(d, NULL, &q, &err) == AW_OK);
  if (q != NULL) {
    AW_CHECK(q->n_missing_frames == 14);
    AW_CHECK(count_findings(q, AW_FINDING_MISSING_FRAMES) == 3);
    const AwFinding *f = nth_finding(q, AW_FINDING_MISSING_FRAMES, 0);
    if (f != NULL) {
      AW_CHECK(f->first == 40 && f->count == 12);
      AW_CHECK_NEAR(f->t_start_s, 1.0 + 40.0 / 30.0, 1e-12);
      AW_CHECK_NEAR(f->t_end_s, 1.0 + 51.0 / 30.0, 1e-12);
      AW_CHECK_NEAR(f->value, 12.0 / 30.0, 1e-12);  /* 12 frame periods without a detection */
    }
    f = nth_finding(q, AW_FINDING_MISSING_FRAMES, 2);
    AW_CHECK(f != NULL && f->first == 299 && f->count == 1);
    AW_CHECK_NEAR(q->rate_hz, 30.0, 1e-6);
    AW_CHECK(q->n_gaps == 0 && q->n_jitter_intervals == 0);
  }
  aw_quality_report_free(q);
  aw_depth_stream_free(d);
}

static int
cmp_double(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* The quickselect median against the textbook definition on a sorted copy. */
static void
test_median(void)
{
  uint64_t x = 7;
  for (size_t n = 1; n < 200; n++) {
    double *a = malloc(n * sizeof *a), *b = malloc(n * sizeof *b);
    for (size_t i = 0; i < n; i++) {
      x = x * 6364136223846793005u + 1442695040888963407u;
      a[i] = b[i] = (double)((x >> 40) % 50);  /* many ties on purpose */
    }
    qsort(b, n, sizeof *b, cmp_double);
    double want = n % 2 ? b[n / 2] : 0.5 * (b[n / 2 - 1] + b[n / 2]);
    AW_CHECK(aw_capture_median_inplace(a, n) == want);
    free(a);
    free(b);
  }
}

int
main(void)
{
  test_gap_and_jitter();
  test_saturation();
  test_missing_frames();
  test_median();
  return AW_TEST_END();
}
