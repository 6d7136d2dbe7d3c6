/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The workbench's library source on a library made by a newer Arcwise (issue 9: "one from a
 * newer program gives a clear message and opens read-only where possible"): it opens, lists,
 * says it is read-only, refuses a write with a message, and leaves the file byte-identical. */
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "arcwise-library.h"
#include <sqlite3.h>

#include "store.h"
#include "testutil.h"
#include "testutil-glib.h"

int
main(void)
{
  g_autofree char *dir = g_dir_make_tmp("arcwise-ro-XXXXXX", NULL);
  AW_CHECK(dir != NULL);
  g_autofree char *path = g_build_filename(dir, "future.sqlite", NULL);
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);
  gint64 pid = arcwise_store_add_player(s, "Invented Player", ARCWISE_HAND_RIGHT, AW_WRIST_LEFT,
                                        1.80, "", &e);
  AW_CHECK(pid > 0);
  arcwise_store_close(s);
  /* What a future Arcwise would leave behind: a higher format number. */
  sqlite3 *db = NULL;
  AW_CHECK(sqlite3_open(path, &db) == SQLITE_OK);
  AW_CHECK(sqlite3_exec(db, "PRAGMA user_version = 99;", NULL, NULL, NULL) == SQLITE_OK);
  sqlite3_close(db);
  g_autofree char *before = aw_test_file_sha(path);

  /* Both ways the workbench opens a library: --library FILE, and $ARCWISE_LIBRARY. */
  ArcwiseLibrarySource *src = arcwise_library_source_open_library(path);
  AW_CHECK(src != NULL && arcwise_library_source_is_readonly(src));
  arcwise_library_source_free(src);
  g_setenv("ARCWISE_LIBRARY", path, TRUE);
  src = arcwise_library_source_open_library(NULL);
  AW_CHECK(src != NULL);
  AW_CHECK(arcwise_library_source_is_readonly(src));
  GPtrArray *items = arcwise_library_source_list(src, &e);
  AW_CHECK(items != NULL && e == NULL);
  g_ptr_array_unref(items);

  /* The player reads back, but a change to it is refused, and says why. */
  ArcwisePlayerRecord p = { 0 };
  AW_CHECK(arcwise_library_source_get_player(src, pid, &p, &e));
  AW_CHECK(p.name != NULL && strcmp(p.name, "Invented Player") == 0);
  g_free(p.name);
  p.name = g_strdup("Renamed Player");
  AW_CHECK(!arcwise_library_source_save_player(src, &p, &e));
  AW_CHECK(e != NULL && strstr(e->message, "read-only") != NULL);
  if (e != NULL)
    g_printerr("refused as expected: %s\n", e->message);
  g_clear_error(&e);
  arcwise_library_source_free(src);

  g_autofree char *after = aw_test_file_sha(path);
  AW_CHECK(strcmp(before, after) == 0);

  /* A current library is not read-only. */
  g_autofree char *cur = g_build_filename(dir, "current.sqlite", NULL);
  s = arcwise_store_open(cur, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);
  gint64 cid = arcwise_store_add_player(s, "Invented Player", ARCWISE_HAND_RIGHT, AW_WRIST_LEFT,
                                        1.80, "", &e);
  arcwise_store_close(s);
  src = arcwise_library_source_open_library(cur);
  AW_CHECK(src != NULL && !arcwise_library_source_is_readonly(src));
  p.id = cid;
  AW_CHECK(arcwise_library_source_save_player(src, &p, &e));
  g_clear_error(&e);
  arcwise_player_record_clear(&p);
  arcwise_library_source_free(src);

  const char *names[] = { "future.sqlite", "future.sqlite-wal", "future.sqlite-shm",
                          "current.sqlite", "current.sqlite-wal", "current.sqlite-shm" };
  for (size_t i = 0; i < G_N_ELEMENTS(names); i++) {
    g_autofree char *f = g_build_filename(dir, names[i], NULL);
    g_unlink(f);
  }
  g_rmdir(dir);
  return aw_test_failures == 0 ? 0 : 1;
}
