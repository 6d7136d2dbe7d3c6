/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fuzz target: the player file (one player's history as a small Arcwise library, app/store.h
 * arcwise_store_export_player / arcwise_store_import_player). The input is written to a file and
 * merged into a library that lives for the whole run. Properties: a refused file gives -1 and a
 * GError in the store's domain with a message; an accepted one gives a swing count >= 0; either
 * way the library still passes arcwise_store_check (integrity, foreign keys, every blob) and a
 * refused file changed nothing (same players and journal). */
#include "fuzz-common.h"
#include "fuzz-tmp.h"

#include "store.h"

static ArcwiseStore *lib;

static guint
count_rows(GPtrArray *a)
{
  guint n = a != NULL ? a->len : 0;
  if (a != NULL)
    g_ptr_array_unref(a);
  return n;
}

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  GError *error = NULL;
  if (lib == NULL) {
    lib = arcwise_store_open(":memory:", ARCWISE_STORE_OPEN_CREATE, &error);
    if (lib == NULL)
      aw_fuzz_fail("cannot open a library in memory: %s", error->message);
  }
  const char *path = aw_fuzz_tmp_path("player.sqlite");
  if (!g_file_set_contents(path, (const char *)data, (gssize)size, &error))
    aw_fuzz_fail("cannot write the input: %s", error->message);
  guint players = count_rows(arcwise_store_list_players(lib, NULL));
  guint journal = count_rows(arcwise_store_list_journal(lib, NULL));
  gint added = arcwise_store_import_player(lib, path, &error);
  unlink(path);
  if (added < 0) {
    aw_fuzz_require(error != NULL);
    aw_fuzz_require(error->domain == ARCWISE_STORE_ERROR);
    aw_fuzz_require(error->message != NULL && error->message[0] != '\0');
    g_clear_error(&error);
    aw_fuzz_require(count_rows(arcwise_store_list_players(lib, NULL)) == players);
    aw_fuzz_require(count_rows(arcwise_store_list_journal(lib, NULL)) == journal);
  } else {
    aw_fuzz_require(error == NULL);
  }
  if (!arcwise_store_check(lib, &error))
    aw_fuzz_fail("the library fails its check after an import: %s", error->message);
  return 0;
}
