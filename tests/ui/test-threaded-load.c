/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A swing's 3-D model loaded in a worker thread (arcwise_swing_item_load_model_async, what the
 * window does when a swing is picked) is the model the main thread's loader makes: every sample
 * bit for bit, for the stand-in demo rows (the simulator) and, given a library file, for stored
 * swings (the worker's own read-only connection); a load cancelled before it finishes leaves no
 * model behind; a swing missing from the file gives an error, no model. Both sides run the same
 * published-method code, so this checks the threading, not the numbers (those have their own
 * tests against outside references). Usage: test-threaded-load [LIBRARY.sqlite] */
#include <glib/gstdio.h>
#include <string.h>

#include "arcwise-library.h"
#include "arcwise-swing-item.h"
#include "testutil.h"
#include "testutil-glib.h"

typedef struct {
  GMainLoop *loop;
  const ArcwiseSwingModel *model;
  GError *error;
  gboolean done;
} Wait;

static void
loaded(GObject *src, GAsyncResult *res, gpointer data)
{
  Wait *w = data;
  w->model = arcwise_swing_item_load_model_finish(ARCWISE_SWING_ITEM(src), res, &w->error);
  w->done = TRUE;
  g_main_loop_quit(w->loop);
}

static const ArcwiseSwingModel *
load_async(ArcwiseSwingItem *it, GCancellable *cancel, GError **error)
{
  Wait w = { g_main_loop_new(NULL, FALSE), NULL, NULL, FALSE };
  arcwise_swing_item_load_model_async(it, cancel, loaded, &w);
  if (cancel != NULL)
    g_cancellable_cancel(cancel);
  if (!w.done)
    g_main_loop_run(w.loop);
  g_main_loop_unref(w.loop);
  if (w.error != NULL)
    g_propagate_error(error, w.error);
  return w.model;
}

static gboolean
same_model(const ArcwiseSwingModel *a, const ArcwiseSwingModel *b)
{
  if (a->n != b->n || a->n < 2 || a->handed != b->handed)
    return FALSE;
  return memcmp(a->t_s, b->t_s, a->n * sizeof a->t_s[0]) == 0 &&
         memcmp(a->pos_m, b->pos_m, a->n * sizeof a->pos_m[0]) == 0 &&
         memcmp(a->speed_m_s, b->speed_m_s, a->n * sizeof a->speed_m_s[0]) == 0 &&
         memcmp(a->band_m, b->band_m, a->n * sizeof a->band_m[0]) == 0 &&
         memcmp(&a->events, &b->events, sizeof a->events) == 0;
}

/* Rows 0..n-1 of two listings of the same source kind: async in one, sync in the other. */
static void
check_rows(GPtrArray *threaded, GPtrArray *direct, guint n, const char *what)
{
  for (guint i = 0; i < n && i < threaded->len; i++) {
    ArcwiseSwingItem *a = g_ptr_array_index(threaded, i), *b = g_ptr_array_index(direct, i);
    AW_CHECK(a != b && a->model == NULL && a->worker_loader != NULL);
    GError *e = NULL;
    const ArcwiseSwingModel *ma = load_async(a, NULL, &e);
    AW_CHECK(ma != NULL && e == NULL && a->model == ma);
    if (e != NULL)
      g_printerr("%s row %u: %s\n", what, i, e->message);
    g_clear_error(&e);
    const ArcwiseSwingModel *mb = arcwise_swing_item_get_model(b, &e);
    AW_CHECK(mb != NULL);
    g_clear_error(&e);
    AW_CHECK(ma != NULL && mb != NULL && same_model(ma, mb));
    /* Loaded already: the finish hands back the same model, nothing loaded again. */
    AW_CHECK(load_async(a, NULL, NULL) == ma);
  }
  /* Cancelled before the thread's result was taken: an error, no model kept. */
  ArcwiseSwingItem *c = g_ptr_array_index(threaded, threaded->len - 1);
  AW_CHECK(c->model == NULL);
  g_autoptr(GCancellable) cancel = g_cancellable_new();
  GError *e = NULL;
  AW_CHECK(load_async(c, cancel, &e) == NULL);
  AW_CHECK(g_error_matches(e, G_IO_ERROR, G_IO_ERROR_CANCELLED));
  AW_CHECK(c->model == NULL);
  g_clear_error(&e);
  printf("%s: %u rows threaded = direct, a cancelled load kept nothing\n", what, n);
}

int
main(int argc, char **argv)
{
  /* The launch benchmark's stand-in rows (models simulated on demand). */
  ArcwiseLibrarySource *d1 = arcwise_library_source_new_demo_sized(8);
  ArcwiseLibrarySource *d2 = arcwise_library_source_new_demo_sized(8);
  GError *e = NULL;
  GPtrArray *a = arcwise_library_source_list(d1, &e), *b = arcwise_library_source_list(d2, &e);
  AW_CHECK(a != NULL && b != NULL && a->len == 8 && b->len == 8);
  if (a != NULL && b != NULL)
    check_rows(a, b, 3, "stand-in");
  g_clear_pointer(&a, g_ptr_array_unref);
  g_clear_pointer(&b, g_ptr_array_unref);
  arcwise_library_source_free(d1);
  arcwise_library_source_free(d2);

  if (argc > 1) {
    /* A copy, so the build's demo library is never touched. */
    g_autofree char *dir = g_dir_make_tmp("arcwise-thread-XXXXXX", NULL);
    AW_CHECK(dir != NULL);
    g_autofree char *path = g_build_filename(dir, "library.sqlite", NULL);
    g_autofree char *bytes = NULL;
    gsize len = 0;
    AW_CHECK(g_file_get_contents(argv[1], &bytes, &len, NULL));
    AW_CHECK(g_file_set_contents(path, bytes, (gssize)len, NULL));
    ArcwiseLibrarySource *s1 = arcwise_library_source_open_library(path);
    ArcwiseLibrarySource *s2 = arcwise_library_source_open_library(path);
    AW_CHECK(s1 != NULL && s2 != NULL);
    a = s1 ? arcwise_library_source_list(s1, &e) : NULL;
    b = s2 ? arcwise_library_source_list(s2, &e) : NULL;
    AW_CHECK(a != NULL && b != NULL && a->len >= 4 && a->len == b->len);
    if (a != NULL && b != NULL && a->len >= 4) {
      check_rows(a, b, 3, "library");
      /* A swing no longer in the file: the worker says so, no model. */
      ArcwiseSwingItem *gone = g_ptr_array_index(a, a->len - 2);
      gone->swing_id = G_GINT64_CONSTANT(987654321);
      AW_CHECK(load_async(gone, NULL, &e) == NULL && e != NULL && gone->model == NULL);
      if (e != NULL)
        printf("missing swing refused: %s\n", e->message);
      g_clear_error(&e);
    }
    g_clear_pointer(&a, g_ptr_array_unref);
    g_clear_pointer(&b, g_ptr_array_unref);
    if (s1 != NULL)
      arcwise_library_source_free(s1);
    if (s2 != NULL)
      arcwise_library_source_free(s2);
    const char *names[] = { "library.sqlite", "library.sqlite-wal", "library.sqlite-shm" };
    for (size_t i = 0; i < G_N_ELEMENTS(names); i++) {
      g_autofree char *f = g_build_filename(dir, names[i], NULL);
      g_unlink(f);
    }
    g_rmdir(dir);
  }
  return aw_test_failures == 0 ? 0 : 1;
}
