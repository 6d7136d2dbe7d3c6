/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A reader sees consistent data while imports run: a writer thread commits imports of BATCH
 * recordings with SWINGS swings each (one transaction per import) while a reader thread, on its
 * own connection, lists swings and loads them over and over. Every list must show whole imports
 * only (WAL snapshot isolation), every listed swing must load with its result, and the reader
 * is never blocked for long by the writer. */
#include "store-testlib.h"

#define BATCH 4
#define SWINGS 2
#define IMPORTS 25

typedef struct {
  const char *path;
  gint writer_done;
  guint reads;
  guint max_seen;
  guint failures;
} Shared;

static gpointer
writer(gpointer data)
{
  Shared *sh = data;
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(sh->path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  ArcwiseImportTarget t;
  arcwise_import_target_init(&t);
  t.player_name = "Runa Esk";
  t.session_date = "2026-07-01";
  for (guint k = 0; k < IMPORTS && s != NULL; k++) {
    GPtrArray *prep = g_ptr_array_new_with_free_func(
      (GDestroyNotify)arcwise_prepared_recording_free);
    for (guint i = 0; i < BATCH; i++)
      g_ptr_array_add(prep, st_prepared(k * 100 + i, 20000, SWINGS));
    ArcwiseImportResult res = { 0, 0, 0, g_array_new(FALSE, FALSE, sizeof(gint64)) };
    if (!arcwise_store_commit_import(s, &t, prep, "reader test", &res, &e)) {
      fprintf(stderr, "writer: %s\n", e->message);
      g_clear_error(&e);
      g_atomic_int_inc(&sh->failures);
    }
    g_array_unref(res.swing_ids);
    g_ptr_array_unref(prep);
  }
  arcwise_store_close(s);
  g_atomic_int_set(&sh->writer_done, 1);
  return NULL;
}

static gpointer
reader(gpointer data)
{
  Shared *sh = data;
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(sh->path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  gboolean last = FALSE;
  while (s != NULL && !last) {
    last = g_atomic_int_get(&sh->writer_done) != 0; /* one more read after the writer ends */
    GPtrArray *ws = arcwise_store_list_swings(s, NULL, &e);
    if (ws == NULL) {
      fprintf(stderr, "reader: %s\n", e->message);
      g_clear_error(&e);
      sh->failures++;
      continue;
    }
    if (ws->len % (BATCH * SWINGS) != 0) {
      fprintf(stderr, "reader saw %u swings: part of an import\n", ws->len);
      sh->failures++;
    }
    if (ws->len < sh->max_seen) {
      fprintf(stderr, "reader saw swings disappear\n");
      sh->failures++;
    }
    sh->max_seen = ws->len;
    /* Load a few listed swings: their rows exist and are complete. */
    for (guint i = 0; i < ws->len; i += 7) {
      const ArcwiseSwingSummary *w = g_ptr_array_index(ws, i);
      ArcwiseSwingDetail *d = arcwise_store_load_swing(s, w->id, &e);
      if (d == NULL || d->analysis == NULL || d->analysis->metrics->len != 1) {
        fprintf(stderr, "swing %" G_GINT64_FORMAT " incomplete\n", w->id);
        g_clear_error(&e);
        sh->failures++;
      }
      arcwise_swing_detail_free(d);
    }
    g_ptr_array_unref(ws);
    sh->reads++;
  }
  arcwise_store_close(s);
  return NULL;
}

int
main(void)
{
  char *dir = st_tmpdir();
  char *path = g_build_filename(dir, "readers.sqlite", NULL);
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);
  arcwise_store_close(s);
  Shared sh = { path, 0, 0, 0, 0 };
  GThread *r = g_thread_new("reader", reader, &sh);
  GThread *w = g_thread_new("writer", writer, &sh);
  g_thread_join(w);
  g_thread_join(r);
  printf("%u reads while %u imports ran; final %u swings\n", sh.reads, IMPORTS, sh.max_seen);
  AW_CHECK(sh.failures == 0);
  AW_CHECK(sh.max_seen == IMPORTS * BATCH * SWINGS);
  AW_CHECK(sh.reads >= 2);
  st_rmtree(dir);
  g_free(dir);
  g_free(path);
  return AW_TEST_END();
}
