/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A damaged library or one from a newer program (issue 9): a clear message naming the file,
 * nothing changed on disk, and read-only access where that is possible. And a full disk
 * (simulated with the file-size limit): a clear error, no corruption, nothing half-written. */
#include "testutil.h"
#include "testutil-glib.h"

#include <signal.h>
#include <string.h>
#include <sys/resource.h>
#include <unistd.h>

#include <glib/gstdio.h>
#include <sqlite3.h>

#include "store.h"

static char *work;

/* A library with one player and one session's worth of swings, made through the store API. */
static char *
make_library(const char *leaf, guint n_players)
{
  char *path = g_build_filename(work, leaf, NULL);
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);
  if (s == NULL) {
    fprintf(stderr, "%s\n", e->message);
    exit(1);
  }
  for (guint i = 0; i < n_players; i++) {
    char name[64], notes[2048];
    g_snprintf(name, sizeof name, "Player %03u", i);
    memset(notes, 'n', sizeof notes - 1);
    notes[sizeof notes - 1] = '\0';
    AW_CHECK(arcwise_store_add_player(s, name, ARCWISE_HAND_RIGHT, AW_WRIST_LEFT, 1.75, notes,
                                      &e) > 0);
  }
  arcwise_store_close(s);
  return path;
}

static void
expect_message(const GError *e, const char *path, const char *why)
{
  AW_CHECK(e != NULL);
  if (e == NULL)
    return;
  fprintf(stderr, "%s: \"%s\"\n", why, e->message);
  AW_CHECK(e->domain == ARCWISE_STORE_ERROR);
  AW_CHECK(strstr(e->message, path) != NULL);
}

static void
newer_library(void)
{
  char *path = make_library("newer.sqlite", 3);
  sqlite3 *db = NULL;
  AW_CHECK(sqlite3_open(path, &db) == SQLITE_OK);
  /* what a later Arcwise might do: a new table and a higher format number */
  AW_CHECK(sqlite3_exec(db, "CREATE TABLE later_feature (x); PRAGMA user_version = 99;", NULL,
                        NULL, NULL) == SQLITE_OK);
  sqlite3_close(db);
  char *before = aw_test_file_sha(path);
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s == NULL);
  expect_message(e, path, "newer, read-write");
  AW_CHECK(e != NULL && e->code == ARCWISE_STORE_ERROR_TOO_NEW);
  AW_CHECK(e != NULL && strstr(e->message, "newer") != NULL);
  g_clear_error(&e);
  char *after = aw_test_file_sha(path);
  AW_CHECK(strcmp(before, after) == 0);
  g_free(after);
  /* read-only: the program can still show what it knows of the library */
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_READONLY, &e);
  if (s == NULL)
    expect_message(e, path, "newer, read-only");
  AW_CHECK(s != NULL);
  if (s != NULL) {
    GPtrArray *players = arcwise_store_list_players(s, &e);
    AW_CHECK(players != NULL && players->len == 3);
    if (players != NULL)
      g_ptr_array_unref(players);
    /* and it refuses to write */
    AW_CHECK(arcwise_store_add_player(s, "New", ARCWISE_HAND_RIGHT, AW_WRIST_LEFT, NAN, "", &e) == 0);
    AW_CHECK(e != NULL);
    g_clear_error(&e);
    arcwise_store_close(s);
  }
  /* what the command line's looking actions use: read-write where possible, else read-only */
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_FALLBACK_READONLY, &e);
  AW_CHECK(s != NULL);
  if (s != NULL) {
    AW_CHECK(arcwise_store_is_readonly(s));
    AW_CHECK(arcwise_store_get_schema_version(s) == 99);
    AW_CHECK(arcwise_store_check_database(s, &e));
    g_clear_error(&e);
    /* a backup and a player export still work, and each is a sound library */
    char *bk = g_build_filename(work, "newer-backup.sqlite", NULL);
    char *ex = g_build_filename(work, "newer-player.arcwise", NULL);
    AW_CHECK(arcwise_store_backup(s, bk, &e));
    if (e != NULL)
      fprintf(stderr, "backup of a newer library: %s\n", e->message);
    g_clear_error(&e);
    gint64 pid = arcwise_store_find_player(s, "Player 001", &e);
    AW_CHECK(pid > 0);
    AW_CHECK(arcwise_store_export_player(s, pid, ex, &e));
    if (e != NULL)
      fprintf(stderr, "export from a newer library: %s\n", e->message);
    g_clear_error(&e);
    arcwise_store_close(s);
    ArcwiseStore *x = arcwise_store_open(ex, ARCWISE_STORE_OPEN_READONLY, &e);
    AW_CHECK(x != NULL);
    if (x != NULL) {
      AW_CHECK(arcwise_store_get_schema_version(x) == ARCWISE_STORE_SCHEMA_VERSION);
      AW_CHECK(arcwise_store_check(x, &e));
      GPtrArray *players = arcwise_store_list_players(x, &e);
      AW_CHECK(players != NULL && players->len == 1);
      if (players != NULL && players->len == 1)
        AW_CHECK(strcmp(((ArcwisePlayer *)g_ptr_array_index(players, 0))->name, "Player 001") == 0);
      if (players != NULL)
        g_ptr_array_unref(players);
      arcwise_store_close(x);
    }
    g_clear_error(&e);
    x = arcwise_store_open(bk, ARCWISE_STORE_OPEN_READONLY, &e);
    AW_CHECK(x != NULL && arcwise_store_get_schema_version(x) == 99);
    arcwise_store_close(x);
    g_clear_error(&e);
    g_free(bk);
    g_free(ex);
  }
  /* a library of this program's format opens read-write with the same flag */
  char *cur = make_library("current.sqlite", 1);
  s = arcwise_store_open(cur, ARCWISE_STORE_OPEN_FALLBACK_READONLY, &e);
  AW_CHECK(s != NULL && !arcwise_store_is_readonly(s));
  arcwise_store_close(s);
  g_clear_error(&e);
  g_free(cur);
  g_clear_error(&e);
  after = aw_test_file_sha(path);
  AW_CHECK(strcmp(before, after) == 0);
  g_free(after);
  g_free(before);
  g_free(path);
}

static void
truncated_library(void)
{
  char *path = make_library("truncated.sqlite", 200);
  gchar *data = NULL;
  gsize len = 0;
  AW_CHECK(g_file_get_contents(path, &data, &len, NULL));
  AW_CHECK(len > 8 * 4096);
  /* cut it where a copy interrupted by a full USB stick would end */
  AW_CHECK(g_file_set_contents(path, data, (gssize)(len / 2), NULL));
  g_free(data);
  char *before = aw_test_file_sha(path);
  for (int ro = 0; ro < 2; ro++) {
    GError *e = NULL;
    ArcwiseStore *s = arcwise_store_open(path, ro ? ARCWISE_STORE_OPEN_READONLY
                                                  : ARCWISE_STORE_OPEN_DEFAULT, &e);
    if (s == NULL) {
      expect_message(e, path, ro ? "truncated, read-only open" : "truncated, open");
      g_clear_error(&e);
    } else {
      /* it may open (the first pages are whole); the check must then say what is wrong */
      AW_CHECK(!arcwise_store_check(s, &e));
      expect_message(e, path, ro ? "truncated, read-only check" : "truncated, check");
      AW_CHECK(e != NULL && e->code == ARCWISE_STORE_ERROR_CORRUPT);
      g_clear_error(&e);
      arcwise_store_close(s);
    }
    char *after = aw_test_file_sha(path);
    AW_CHECK(strcmp(before, after) == 0);
    g_free(after);
  }
  g_free(before);
  g_free(path);
}

/* A full disk during writes, simulated with the file-size limit (setrlimit RLIMIT_FSIZE, what
 * `ulimit -f` sets): past it write() stops short and then fails, as on a full file system, and
 * SQLite reports the write as failed. Each write is one transaction, so a refused write must
 * leave the library exactly as it was committed and still sound, with a message that says so. */
static void
full_disk(void)
{
  char *path = make_library("full.sqlite", 5);
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s != NULL);
  if (s == NULL)
    return;
  struct rlimit old, lim;
  AW_CHECK(getrlimit(RLIMIT_FSIZE, &old) == 0);
  signal(SIGXFSZ, SIG_IGN);  /* get EFBIG instead of being killed, as a full disk gives ENOSPC */
  lim = old;
  lim.rlim_cur = 256 * 1024;  /* bytes per file: a few players more fit, then the disk is "full" */
  AW_CHECK(setrlimit(RLIMIT_FSIZE, &lim) == 0);
  guint added = 0, refused = 0;
  for (guint i = 0; i < 2000 && refused < 3; i++) {
    char name[64], notes[8192];
    g_snprintf(name, sizeof name, "Late %04u", i);
    memset(notes, 'x', sizeof notes - 1);
    notes[sizeof notes - 1] = '\0';
    gint64 id = arcwise_store_add_player(s, name, ARCWISE_HAND_LEFT, AW_WRIST_RIGHT, NAN, notes, &e);
    if (id > 0) {
      added++;
    } else {
      refused++;
      AW_CHECK(e != NULL);
      if (e != NULL) {
        if (refused == 1)
          fprintf(stderr, "full: \"%s\"\n", e->message);
        AW_CHECK(strstr(e->message, path) != NULL);
        /* said in plain words, not as a generic I/O error */
        AW_CHECK(e->code == ARCWISE_STORE_ERROR_FULL);
        AW_CHECK(strstr(e->message, "the disk is full") != NULL);
      }
      g_clear_error(&e);
    }
  }
  AW_CHECK(refused >= 1);
  arcwise_store_close(s);
  AW_CHECK(setrlimit(RLIMIT_FSIZE, &old) == 0);
  signal(SIGXFSZ, SIG_DFL);
  /* space again: every committed player is there, the refused ones are not, all is sound */
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s != NULL);
  if (s != NULL) {
    AW_CHECK(arcwise_store_check(s, &e));
    if (e != NULL)
      fprintf(stderr, "after the full disk: %s\n", e->message);
    g_clear_error(&e);
    GPtrArray *players = arcwise_store_list_players(s, &e);
    AW_CHECK(players != NULL && players->len == 5 + added);
    if (players != NULL)
      g_ptr_array_unref(players);
    arcwise_store_close(s);
  }
  fprintf(stderr, "full disk: %u players fitted, then %u refused; library sound\n", added, refused);
  g_free(path);
}

int
main(void)
{
  work = g_dir_make_tmp("arcwise-damage-XXXXXX", NULL);
  AW_CHECK(work != NULL);
  newer_library();
  truncated_library();
  full_disk();
  char *rm[] = { "/bin/rm", "-rf", work, NULL };
  g_spawn_sync(NULL, rm, NULL, G_SPAWN_DEFAULT, NULL, NULL, NULL, NULL, NULL, NULL);
  g_free(work);
  return AW_TEST_END();
}
