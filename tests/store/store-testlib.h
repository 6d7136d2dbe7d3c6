/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Helpers shared by the store tests: temporary folders, file hashes, and prepared recordings
 * made of pseudo-random bytes (the writer's behaviour does not depend on what the bytes mean,
 * so the crash and concurrency tests need no engine). */

#include "store-private.h"
#include "testutil.h"
#include "testutil-glib.h"

#include <glib/gstdio.h>
#include <string.h>

static inline char *
st_tmpdir(void)
{
  GError *e = NULL;
  char *d = g_dir_make_tmp("arcwise-store-test-XXXXXX", &e);
  if (d == NULL) {
    fprintf(stderr, "cannot make a temporary folder: %s\n", e->message);
    exit(1);
  }
  return d;
}

static inline void
st_rmtree(const char *dir)
{
  GDir *d = g_dir_open(dir, 0, NULL);
  const char *name;
  while (d != NULL && (name = g_dir_read_name(d)) != NULL) {
    char *f = g_build_filename(dir, name, NULL);
    if (g_file_test(f, G_FILE_TEST_IS_DIR))
      st_rmtree(f);
    else
      g_unlink(f);
    g_free(f);
  }
  if (d != NULL)
    g_dir_close(d);
  g_rmdir(dir);
}

/* SHA-256 of a whole file ("" when it does not exist). */
#define st_file_sha aw_test_file_sha

/* Deterministic bytes (xorshift64*), all 256 values occurring. */
static inline GBytes *
st_random_bytes(guint64 seed, gsize len)
{
  guint8 *b = g_malloc(len);
  guint64 x = seed * 0x9E3779B97F4A7C15ull + 1;
  for (gsize i = 0; i < len; i++) {
    x ^= x >> 12;
    x ^= x << 25;
    x ^= x >> 27;
    /* Half the bytes from a small alphabet so that the data compresses like text would. */
    guint8 v = (guint8)((x * 0x2545F4914F6CDD1Dull) >> 56);
    b[i] = (i % 2 == 0) ? (guint8)('0' + v % 10) : v;
  }
  return g_bytes_new_take(b, len);
}

/* A prepared recording of `n_swings` swings, with events and metrics, no fused path. */
static inline ArcwisePreparedRecording *
st_prepared(guint64 seed, gsize raw_len, guint n_swings)
{
  ArcwisePreparedRecording *r = arcwise_prepared_recording_new();
  GBytes *imu = st_random_bytes(seed * 2 + 1, raw_len);
  GBytes *depth = st_random_bytes(seed * 2 + 2, raw_len / 3);
  char name[64];
  g_snprintf(name, sizeof name, "take-%" G_GUINT64_FORMAT ".imu.csv", seed);
  char dname[64];
  g_snprintf(dname, sizeof dname, "take-%" G_GUINT64_FORMAT ".depth.csv", seed);
  GError *e = NULL;
  if (!arcwise_prepared_recording_set_raw(r, name, imu, dname, depth, &e)) {
    fprintf(stderr, "set_raw: %s\n", e->message);
    exit(1);
  }
  g_bytes_unref(imu);
  g_bytes_unref(depth);
  r->engine_version = g_strdup("test");
  r->settings = g_strdup("test=1\n");
  arcwise_codec_sha256_hex(r->settings, strlen(r->settings), r->settings_sha256);
  for (guint k = 0; k < n_swings; k++) {
    ArcwisePreparedSwing *ps = arcwise_prepared_swing_new();
    ps->index = k;
    ps->span_start_s = 10.0 * k;
    ps->span_end_s = 10.0 * k + 4.0;
    ps->events = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_event_free);
    ps->metrics = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_metric_free);
    ArcwiseSwingEvent *ev = g_new0(ArcwiseSwingEvent, 1);
    ev->name = g_strdup("top");
    ev->t_s = ps->span_start_s + 1.0;
    g_ptr_array_add(ps->events, ev);
    ArcwiseSwingMetric *m = g_new0(ArcwiseSwingMetric, 1);
    m->name = g_strdup(ARCWISE_METRIC_TEMPO_RATIO);
    m->unit = g_strdup("1");
    m->value = 2.0 + (double)(seed % 20) * 0.1;
    g_ptr_array_add(ps->metrics, m);
    g_ptr_array_add(r->swings, ps);
  }
  return r;
}
