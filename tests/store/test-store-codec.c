/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Stored bytes come back bit-exact: zlib round trips of awkward sizes, the raw streams through a
 * library (memory and file, closed and reopened), the fused-path and AwSwing records; SHA-256
 * against the FIPS 180-2 test vectors; stored file names can never name a place outside a
 * folder. */
#include "store-testlib.h"

static void
test_sha256(void)
{
  /* FIPS 180-2 (2002), appendix B.1 ("abc") and the empty message (NIST CSRC examples). */
  char hex[65];
  arcwise_codec_sha256_hex("abc", 3, hex);
  AW_CHECK(strcmp(hex, "ba7816bf8f01cfea414140de5dae2223b00361a396177a9cb410ff61f20015ad") == 0);
  arcwise_codec_sha256_hex("", 0, hex);
  AW_CHECK(strcmp(hex, "e3b0c44298fc1c149afbf4c8996fb92427ae41e4649b934ca495991b7852b855") == 0);
  /* B.2: the 448-bit message. */
  const char *m = "abcdbcdecdefdefgefghfghighijhijkijkljklmklmnlmnomnopnopq";
  arcwise_codec_sha256_hex(m, strlen(m), hex);
  AW_CHECK(strcmp(hex, "248d6a61d20638b8e5c026930c3e6039a33ce45964ff2167f6ecedd419db06c1") == 0);
}

static void
test_zlib(void)
{
  const gsize sizes[] = { 0, 1, 2, 65535, 65536, 65537, 1000003 };
  for (gsize i = 0; i < G_N_ELEMENTS(sizes); i++) {
    GBytes *raw = st_random_bytes(i + 100, sizes[i]);
    GError *e = NULL;
    GBytes *z = arcwise_codec_compress(g_bytes_get_data(raw, NULL), sizes[i], &e);
    AW_CHECK(z != NULL);
    /* RFC 1950 section 2.2: CMF 0x78 (deflate, 32 K window); FLG 0xDA marks level 9 and makes
     * CMF*256+FLG a multiple of 31. */
    const guint8 *zb = g_bytes_get_data(z, NULL);
    AW_CHECK(g_bytes_get_size(z) >= 6 && zb[0] == 0x78 && zb[1] == 0xDA);
    GBytes *back = arcwise_codec_decompress(z, sizes[i], &e);
    AW_CHECK(back != NULL && g_bytes_equal(back, raw));
    if (back != NULL)
      g_bytes_unref(back);
    /* A truncated or damaged stream is an error, never silent data. */
    if (g_bytes_get_size(z) > 8) {
      GBytes *cut = g_bytes_new_from_bytes(z, 0, g_bytes_get_size(z) - 3);
      GBytes *bad = arcwise_codec_decompress(cut, sizes[i], &e);
      AW_CHECK(bad == NULL && g_error_matches(e, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT));
      g_clear_error(&e);
      g_bytes_unref(cut);
      guint8 *flip = g_memdup2(zb, g_bytes_get_size(z));
      flip[g_bytes_get_size(z) / 2] ^= 0x5a;
      GBytes *fz = g_bytes_new_take(flip, g_bytes_get_size(z));
      bad = arcwise_codec_decompress(fz, sizes[i], &e);
      /* zlib's Adler-32 (RFC 1950) or the length check catches the change. */
      AW_CHECK(bad == NULL);
      if (bad != NULL)
        g_bytes_unref(bad);
      g_clear_error(&e);
      g_bytes_unref(fz);
    }
    g_bytes_unref(z);
    g_bytes_unref(raw);
  }
}

static void
test_safe_names(void)
{
  struct { const char *in, *out; } cases[] = {
    { "/home/coach/caps/take1.imu.csv", "take1.imu.csv" },
    { "../../etc/passwd", "passwd" },
    { "..", "stream.csv" },
    { ".", "stream.csv" },
    { "", "stream.csv" },
    { "/", "stream.csv" },
    { ".hidden", "hidden" },
    { "a\\..\\b.csv", "a_.._b.csv" },
    { "C:evil.csv", "C_evil.csv" },
    { "line\nbreak.csv", "line_break.csv" },
  };
  for (gsize i = 0; i < G_N_ELEMENTS(cases); i++) {
    char *got = arcwise_codec_safe_name(cases[i].in);
    if (strcmp(got, cases[i].out) != 0) {
      fprintf(stderr, "safe_name('%s') = '%s', expected '%s'\n", cases[i].in, got, cases[i].out);
      aw_test_failures++;
    }
    AW_CHECK(strchr(got, '/') == NULL && strcmp(got, "..") != 0);
    g_free(got);
  }
}

/* Raw streams in, raw streams out, through real libraries. */
static void
test_raw_through_library(const char *path)
{
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);
  ArcwiseImportTarget t;
  arcwise_import_target_init(&t);
  t.player_name = "Lio Santer";
  t.session_date = "2026-05-05";
  GPtrArray *prep = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_prepared_recording_free);
  /* Every byte value, CR LF and NUL included, and an empty depth stream. */
  ArcwisePreparedRecording *r = arcwise_prepared_recording_new();
  guint8 all[512];
  for (int i = 0; i < 512; i++)
    all[i] = (guint8)(i * 7 + 3);
  GBytes *imu = g_bytes_new(all, sizeof all);
  GBytes *depth = g_bytes_new("", 0);
  AW_CHECK(arcwise_prepared_recording_set_raw(r, "x/all.imu.csv", imu, "x/none.depth.csv", depth,
                                              &e));
  r->engine_version = g_strdup("t");
  r->settings = g_strdup("");
  ArcwisePreparedSwing *ps = arcwise_prepared_swing_new();
  ps->span_start_s = 0;
  ps->span_end_s = 1;
  g_ptr_array_add(r->swings, ps);
  g_ptr_array_add(prep, r);
  g_ptr_array_add(prep, st_prepared(77, 300000, 1));
  GBytes *big_imu = st_random_bytes(77 * 2 + 1, 300000);
  ArcwiseImportResult res = { 0, 0, 0, g_array_new(FALSE, FALSE, sizeof(gint64)) };
  AW_CHECK(arcwise_store_commit_import(s, &t, prep, "codec test", &res, &e));
  AW_CHECK(res.recordings_added == 2 && res.swings_added == 2);
  if (strcmp(path, ":memory:") != 0) {
    arcwise_store_close(s);
    s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
    AW_CHECK(s != NULL);
  }
  for (guint i = 0; i < res.swing_ids->len; i++) {
    ArcwiseSwingSummary *w = arcwise_store_get_swing(s, g_array_index(res.swing_ids, gint64, i),
                                                     &e);
    AW_CHECK(w != NULL);
    GBytes *bi = NULL, *bd = NULL;
    char *ni = NULL, *nd = NULL;
    AW_CHECK(arcwise_store_load_recording(s, w->recording_id, &bi, &bd, &ni, &nd, &e));
    if (i == 0) {
      AW_CHECK(bi != NULL && g_bytes_equal(bi, imu) && bd != NULL && g_bytes_get_size(bd) == 0);
      AW_CHECK(ni != NULL && strcmp(ni, "all.imu.csv") == 0 && strcmp(nd, "none.depth.csv") == 0);
    } else {
      AW_CHECK(bi != NULL && g_bytes_equal(bi, big_imu));
    }
    g_clear_pointer(&bi, g_bytes_unref);
    g_clear_pointer(&bd, g_bytes_unref);
    g_free(ni);
    g_free(nd);
    arcwise_swing_summary_free(w);
  }
  AW_CHECK(arcwise_store_check(s, &e));
  if (e != NULL)
    fprintf(stderr, "%s\n", e->message);
  g_clear_error(&e);
  g_array_unref(res.swing_ids);
  g_ptr_array_unref(prep);
  g_bytes_unref(imu);
  g_bytes_unref(depth);
  g_bytes_unref(big_imu);
  arcwise_store_close(s);
}

G_GNUC_UNUSED static gboolean
same_bits(const void *a, const void *b, gsize n)
{
  return memcmp(a, b, n) == 0;
}

static void
test_path_record(void)
{
#if ARCWISE_HAVE_FUSION
  const size_t n = 1237;
  AwFusedPath *p = aw_fused_path_new(n);
  AW_CHECK(p != NULL);
  GRand *rng = g_rand_new_with_seed(5);
  for (size_t i = 0; i < n; i++) {
    p->t_s[i] = 100.0 + (double)i * 0.01;
    for (int k = 0; k < 3; k++) {
      p->pos_cam_m[i][k] = g_rand_double_range(rng, -2, 2);
      p->vel_cam_m_s[i][k] = g_rand_double_range(rng, -20, 20);
      p->pos_sigma_cam_m[i][k] = g_rand_double_range(rng, 0, 0.1);
      p->accel_body_m_s2[i][k] = g_rand_double_range(rng, -150, 150);
      p->gyro_body_rad_s[i][k] = g_rand_double_range(rng, -30, 30);
    }
    for (int k = 0; k < 4; k++)
      p->q_cam_body[i][k] = g_rand_double_range(rng, -1, 1);
    p->cam_info_share[i] = g_rand_double(rng);
    p->flags[i] = g_rand_int(rng);
  }
  /* Values that text or float encodings would lose. */
  p->pos_cam_m[3][0] = NAN;
  p->pos_cam_m[4][1] = -0.0;
  p->pos_cam_m[5][2] = 4.9e-324;
  p->vel_cam_m_s[6][0] = INFINITY;
  p->report.clock_offset_s = 0.1234567890123456789;
  p->report.q_cam_grav[2] = -1e-300;
  p->report.cam_frames_used = 123456789;
  GError *e = NULL;
  /* Version 1 (older libraries): every array bit-exact. */
  GBytes *blob = arcwise_codec_encode_path_version(p, NAN, NAN, 1, &e);
  AW_CHECK(blob != NULL);
  AwFusedPath *q = blob != NULL ? arcwise_codec_decode_path(blob, &e) : NULL;
  if (q == NULL)
    fprintf(stderr, "decode: %s\n", e != NULL ? e->message : "?");
  AW_CHECK(q != NULL && q->n == n);
  if (q != NULL && q->n == n) {
    AW_CHECK(same_bits(p->t_s, q->t_s, n * sizeof(double)));
    AW_CHECK(same_bits(p->pos_cam_m, q->pos_cam_m, n * 3 * sizeof(double)));
    AW_CHECK(same_bits(p->vel_cam_m_s, q->vel_cam_m_s, n * 3 * sizeof(double)));
    AW_CHECK(same_bits(p->q_cam_body, q->q_cam_body, n * 4 * sizeof(double)));
    AW_CHECK(same_bits(p->pos_sigma_cam_m, q->pos_sigma_cam_m, n * 3 * sizeof(double)));
    AW_CHECK(same_bits(p->cam_info_share, q->cam_info_share, n * sizeof(double)));
    AW_CHECK(same_bits(p->accel_body_m_s2, q->accel_body_m_s2, n * 3 * sizeof(double)));
    AW_CHECK(same_bits(p->gyro_body_rad_s, q->gyro_body_rad_s, n * 3 * sizeof(double)));
    AW_CHECK(same_bits(p->flags, q->flags, n * sizeof(uint32_t)));
    AW_CHECK(q->report.clock_offset_s == p->report.clock_offset_s);
    AW_CHECK(q->report.q_cam_grav[2] == p->report.q_cam_grav[2]);
    AW_CHECK(q->report.cam_frames_used == p->report.cam_frames_used);
  }
  aw_fused_path_free(q);
  gsize v1_size = blob != NULL ? g_bytes_get_size(blob) : 0;
  g_bytes_unref(blob);

  /* Version 2 (written now): arrays with a NaN, an infinity (pos, vel here) stay bit-exact;
   * the others come back within half their step, flags exact, quaternions of unit length. */
  for (size_t i = 0; i < n; i++) {
    double norm = 0;
    for (int k = 0; k < 4; k++)
      norm += p->q_cam_body[i][k] * p->q_cam_body[i][k];
    for (int k = 0; k < 4; k++)
      p->q_cam_body[i][k] /= sqrt(norm);
  }
  blob = arcwise_codec_encode_path(p, NAN, NAN, &e);
  AW_CHECK(blob != NULL);
  q = blob != NULL ? arcwise_codec_decode_path(blob, &e) : NULL;
  AW_CHECK(q != NULL && q->n == n);
  if (q != NULL && q->n == n) {
    AW_CHECK(same_bits(p->pos_cam_m, q->pos_cam_m, n * 3 * sizeof(double)));
    AW_CHECK(same_bits(p->vel_cam_m_s, q->vel_cam_m_s, n * 3 * sizeof(double)));
    AW_CHECK(same_bits(p->flags, q->flags, n * sizeof(uint32_t)));
    const struct { const double *a, *b; size_t k; int array; const char *name; } arr[] = {
      { p->t_s, q->t_s, n, 0, "t" },
      { &p->q_cam_body[0][0], &q->q_cam_body[0][0], 4 * n, 3, "q" },
      { &p->pos_sigma_cam_m[0][0], &q->pos_sigma_cam_m[0][0], 3 * n, 4, "sigma" },
      { p->cam_info_share, q->cam_info_share, n, 5, "share" },
      { &p->accel_body_m_s2[0][0], &q->accel_body_m_s2[0][0], 3 * n, 6, "accel" },
      { &p->gyro_body_rad_s[0][0], &q->gyro_body_rad_s[0][0], 3 * n, 7, "gyro" },
    };
    for (size_t j = 0; j < G_N_ELEMENTS(arr); j++) {
      /* half a step, plus the rounding of (integer * step) in double and, for q, of the
       * renormalisation (a few 1e-16 relative) */
      double bound = 0.5 * arcwise_codec_path_step(arr[j].array) * (1 + 1e-6) + 1e-13, worst = 0;
      if (arr[j].array == 3)
        bound = 2.5 * arcwise_codec_path_step(3);
      for (size_t i = 0; i < arr[j].k; i++)
        worst = fmax(worst, fabs(arr[j].a[i] - arr[j].b[i]));
      printf("path record v2: %-6s worst error %.3g (bound %.3g)\n", arr[j].name, worst, bound);
      AW_CHECK(worst <= bound);
    }
    for (size_t i = 0; i < n; i++) {
      double norm = 0;
      for (int k = 0; k < 4; k++)
        norm += q->q_cam_body[i][k] * q->q_cam_body[i][k];
      AW_CHECK(fabs(norm - 1) < 1e-12);
    }
    AW_CHECK(q->report.clock_offset_s == p->report.clock_offset_s);
  }
  aw_fused_path_free(q);
  /* Smooth motion (what the fusion gives) takes far less room than random values would. */
  for (size_t i = 0; i < n; i++) {
    double t = (double)i * 0.01;
    for (int k = 0; k < 3; k++) {
      p->pos_cam_m[i][k] = 0.5 * sin(3.0 * t + k);
      p->vel_cam_m_s[i][k] = 1.5 * cos(3.0 * t + k);
    }
  }
  GBytes *v2 = arcwise_codec_encode_path(p, NAN, NAN, &e);
  GBytes *v1 = arcwise_codec_encode_path_version(p, NAN, NAN, 1, &e);
  AW_CHECK(v1 != NULL && v2 != NULL);
  if (v1 != NULL && v2 != NULL) {
    printf("path record: %zu rows of random values, version 1 %zu B; smooth pos/vel: "
           "version 1 %zu B, version 2 %zu B\n", n, v1_size, g_bytes_get_size(v1),
           g_bytes_get_size(v2));
    AW_CHECK(g_bytes_get_size(v2) < g_bytes_get_size(v1));
  }
  g_bytes_unref(v1);
  g_bytes_unref(v2);
  g_bytes_unref(blob);
  /* A span keeps exactly the rows inside it. */
  blob = arcwise_codec_encode_path(p, 105.0, 106.0, &e);
  q = blob != NULL ? arcwise_codec_decode_path(blob, &e) : NULL;
  AW_CHECK(q != NULL && q->n == 101 && q->t_s[0] == p->t_s[500]);
  aw_fused_path_free(q);
  /* Damage is detected. */
  if (blob != NULL) {
    GBytes *cut = g_bytes_new_from_bytes(blob, 0, g_bytes_get_size(blob) / 2);
    q = arcwise_codec_decode_path(cut, &e);
    AW_CHECK(q == NULL && e != NULL);
    g_clear_error(&e);
    g_bytes_unref(cut);
    g_bytes_unref(blob);
  }
  g_rand_free(rng);
  aw_fused_path_free(p);
#else
  printf("note: this build has no fusion module; the fused-path record is not built\n");
#endif
}

static void
test_swing_record(void)
{
  AwSwing sw;
  memset(&sw, 0, sizeof sw);
  GRand *rng = g_rand_new_with_seed(9);
  sw.i_start = 400;
  sw.i_end = 731;
  sw.t_start_s = 12.345678901234567;
  sw.t_end_s = 15.5;
  sw.practice = true;
  sw.handed = AW_HANDED_LEFT;
  sw.club = AW_CLUB_5I;
  sw.club_length_m = 0.965;
  for (int k = 0; k < 3; k++) {
    sw.origin_f_m[k] = g_rand_double(rng);
    for (int c = 0; c < 3; c++)
      sw.R_sw_f[k][c] = g_rand_double_range(rng, -1, 1);
  }
  for (int k = 0; k < AW_EVENT_COUNT_; k++) {
    sw.events[k].t_s = g_rand_double_range(rng, 12, 16);
    sw.events[k].sigma_s = g_rand_double(rng) * 0.01;
    sw.events[k].estimated = k == AW_EVENT_IMPACT;
  }
  for (int k = 0; k < AW_PHASE_COUNT_; k++) {
    sw.phases[k].kind = (AwPhaseKind)k;
    sw.phases[k].start_s = g_rand_double(rng);
    sw.phases[k].end_s = g_rand_double(rng);
    sw.phases[k].cam_occluded_share = g_rand_double(rng);
    sw.phases[k].cam_info_share_mean = NAN;
    sw.phases[k].pos_sigma_mean_m = g_rand_double(rng);
    sw.phases[k].dev_camera_masked_m = g_rand_double(rng);
    sw.phases[k].dev_imu_masked_m = g_rand_double(rng);
    sw.phases[k].dominance = AW_DOMINANCE_SHARED;
  }
  for (int k = 0; k < AW_METRIC_COUNT_; k++)
    sw.metrics[k] = k == 3 ? (double)NAN : g_rand_double_range(rng, -100, 100);
  sw.quality.cam_occluded_share = 0.25;
  sw.quality.cam_rejected_share = 0.01;
  sw.quality.imu_saturated_samples = 17;
  sw.quality.sync_offset_s = -0.0421;
  sw.quality.sync_confidence = 0.93;
  sw.quality.pos_sigma_mean_m = 0.004;
  sw.quality.notes = AW_NOTE_TOP_HIDDEN | AW_NOTE_IMU_SATURATED;
  char *text = arcwise_codec_swing_to_text(&sw);
  AwSwing *back = arcwise_codec_swing_from_text(text);
  /* Indices are rebased to the span; everything else is bit-identical (NaN stays NaN). */
  AW_CHECK(back->i_start == 0 && back->i_end == 331);
  back->i_start = sw.i_start;
  back->i_end = sw.i_end;
  AW_CHECK(isnan(back->metrics[3]) && isnan(back->phases[0].cam_info_share_mean));
  back->metrics[3] = sw.metrics[3];
  for (int k = 0; k < AW_PHASE_COUNT_; k++)
    back->phases[k].cam_info_share_mean = sw.phases[k].cam_info_share_mean;
  AW_CHECK(memcmp(&sw.t_start_s, &back->t_start_s, sizeof sw.t_start_s) == 0);
  AW_CHECK(memcmp(sw.events, back->events, sizeof sw.events) == 0);
  AW_CHECK(memcmp(sw.R_sw_f, back->R_sw_f, sizeof sw.R_sw_f) == 0);
  AW_CHECK(memcmp(sw.phases, back->phases, sizeof sw.phases) == 0);
  AW_CHECK(memcmp(sw.metrics, back->metrics, sizeof sw.metrics) == 0 || isnan(sw.metrics[3]));
  for (int k = 0; k < AW_METRIC_COUNT_; k++)
    AW_CHECK(k == 3 || back->metrics[k] == sw.metrics[k]);
  AW_CHECK(back->practice && !back->half && back->handed == AW_HANDED_LEFT &&
           back->club == AW_CLUB_5I && back->club_length_m == 0.965);
  AW_CHECK(memcmp(&sw.quality, &back->quality, sizeof sw.quality) == 0);
  g_free(back);
  /* An unknown key (a newer engine) is ignored; a missing one reads as not available. */
  back = arcwise_codec_swing_from_text("t_start_s=1.5\nfuture_field=3\n");
  AW_CHECK(back->t_start_s == 1.5 && isnan(back->metrics[0]) && isnan(back->events[2].t_s));
  g_free(back);
  g_free(text);
  g_rand_free(rng);
}

int
main(void)
{
  test_sha256();
  test_zlib();
  test_safe_names();
  test_raw_through_library(":memory:");
  char *dir = st_tmpdir();
  char *path = g_build_filename(dir, "raw.sqlite", NULL);
  test_raw_through_library(path);
  test_path_record();
  test_swing_record();
  st_rmtree(dir);
  g_free(dir);
  g_free(path);
  return AW_TEST_END();
}
