/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Kill an import with SIGKILL at random moments, many times. After every kill the library must
 * pass SQLite's PRAGMA integrity_check (and foreign_key_check, and every stored stream must
 * decode to its SHA-256), and each import must be there completely or not at all: no recording
 * without its data or its swings, no swing without its result, and the number of recordings
 * grows by whole batches only.
 *
 * A child process (fork) opens the library and commits one batch of recordings in one
 * transaction; the parent waits until the child is about to write, sleeps a random time within
 * the measured length of a whole commit (a little longer, so some kills land after the commit)
 * and kills it. ARCWISE_CRASH_ROUNDS overrides the number of rounds (default 60). */
#include "store-testlib.h"

#include <signal.h>
#include <sys/wait.h>
#include <time.h>
#include <unistd.h>

#define BATCH 10          /* recordings per import */
#define SWINGS 2          /* swings per recording */
#define RAW_BYTES 24000   /* per IMU stream: a few seconds of a 100 Hz capture */

static ArcwiseImportTarget target;
/* Built once before the first fork (compression is the slow part); each round gives the
 * recordings new identities so that none is skipped as already present. */
static GPtrArray *batch;

static void
renumber(guint64 round)
{
  for (guint i = 0; i < batch->len; i++) {
    ArcwisePreparedRecording *r = g_ptr_array_index(batch, i);
    char tag[64];
    g_snprintf(tag, sizeof tag, "%" G_GUINT64_FORMAT "/%u", round, i);
    arcwise_content_sha256(r->imu_sha256, tag, r->content_sha256);
  }
}

static void
child_import(const char *path, guint64 round, int ready_fd)
{
  GError *e = NULL;
  GPtrArray *prepared = batch;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  if (s == NULL)
    _exit(3);
  ArcwiseImportResult res = { 0, 0, 0, g_array_new(FALSE, FALSE, sizeof(gint64)) };
  char c = 'r';
  if (write(ready_fd, &c, 1) != 1)
    _exit(4);
  gboolean ok = arcwise_store_commit_import(s, &target, prepared, "crash test", &res, &e);
  arcwise_store_close(s);
  _exit(ok && res.recordings_added == BATCH ? 0 : 5);
}

static double
now_s(void)
{
  return (double)g_get_monotonic_time() * 1e-6;
}

/* Runs one child; kill_after_s < 0: let it finish. Returns the seconds from "ready" to exit. */
static double
run_child(const char *path, guint64 round, double kill_after_s, int *status)
{
  int fds[2];
  if (pipe(fds) != 0) {
    perror("pipe");
    exit(1);
  }
  renumber(round);
  fflush(NULL);
  pid_t pid = fork();
  if (pid < 0) {
    perror("fork");
    exit(1);
  }
  if (pid == 0) {
    close(fds[0]);
    child_import(path, round, fds[1]);
  }
  close(fds[1]);
  char c;
  double t0 = 0;
  if (read(fds[0], &c, 1) == 1) {
    t0 = now_s();
    if (kill_after_s >= 0) {
      struct timespec ts = { (time_t)kill_after_s,
                             (long)((kill_after_s - (double)(time_t)kill_after_s) * 1e9) };
      nanosleep(&ts, NULL);
      kill(pid, SIGKILL);
    }
  }
  close(fds[0]);
  waitpid(pid, status, 0);
  return now_s() - t0;
}

/* The library after a kill: integrity, and whole batches only. Returns the recordings. */
static guint
verify(const char *path, guint before, guint *n_whole, gboolean blobs)
{
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s != NULL);
  if (s == NULL) {
    fprintf(stderr, "reopen: %s\n", e->message);
    exit(1);
  }
  if (!(blobs ? arcwise_store_check(s, &e) : arcwise_store_check_database(s, &e))) {
    fprintf(stderr, "check after kill: %s\n", e->message);
    aw_test_failures++;
    g_clear_error(&e);
  }
  GPtrArray *swings = arcwise_store_list_swings(s, NULL, &e);
  AW_CHECK(swings != NULL);
  GHashTable *per_rec = g_hash_table_new(g_int64_hash, g_int64_equal);
  GArray *keys = g_array_sized_new(FALSE, FALSE, sizeof(gint64), swings->len);
  for (guint i = 0; i < swings->len; i++) {
    const ArcwiseSwingSummary *w = g_ptr_array_index(swings, i);
    /* Every swing has its result (it was written in the same transaction). */
    AW_CHECK(w->analysed && isfinite(w->tempo_ratio));
    g_array_append_val(keys, w->recording_id);
  }
  for (guint i = 0; i < keys->len; i++) {
    gint64 *k = &g_array_index(keys, gint64, i);
    guint n = GPOINTER_TO_UINT(g_hash_table_lookup(per_rec, k));
    g_hash_table_insert(per_rec, k, GUINT_TO_POINTER(n + 1));
  }
  guint recordings = g_hash_table_size(per_rec);
  GHashTableIter it;
  gpointer key, value;
  g_hash_table_iter_init(&it, per_rec);
  while (g_hash_table_iter_next(&it, &key, &value))
    AW_CHECK(GPOINTER_TO_UINT(value) == SWINGS);
  /* Whole batches only, and at most one more than before. */
  AW_CHECK(recordings % BATCH == 0);
  AW_CHECK(recordings == before || recordings == before + BATCH);
  /* The player and session rows of the first import come and go with it. */
  GPtrArray *players = arcwise_store_list_players(s, &e);
  AW_CHECK(players != NULL && players->len == (recordings > 0 ? 1u : 0u));
  g_ptr_array_unref(players);
  if (recordings == before + BATCH)
    (*n_whole)++;
  g_hash_table_unref(per_rec);
  g_array_unref(keys);
  g_ptr_array_unref(swings);
  arcwise_store_close(s);
  return recordings;
}

int
main(void)
{
  const char *env = g_getenv("ARCWISE_CRASH_ROUNDS");
  guint rounds = env != NULL ? (guint)atoi(env) : 60;
  arcwise_import_target_init(&target);
  target.player_name = "Odile Brandt";
  target.session_date = "2026-04-01";
  target.session_place = "Studio A";
  target.club_kind = "driver";

  char *dir = st_tmpdir();
  char *path = g_build_filename(dir, "crash.sqlite", NULL);
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);
  arcwise_store_close(s);
  batch = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_prepared_recording_free);
  for (guint i = 0; i < BATCH; i++)
    g_ptr_array_add(batch, st_prepared(i + 1, RAW_BYTES, SWINGS));

  /* Measure a whole commit once (not killed), and keep it as the first batch. */
  int status = 0;
  double full_s = run_child(path, 0, -1, &status);
  AW_CHECK(WIFEXITED(status) && WEXITSTATUS(status) == 0);
  guint whole = 0;
  guint recordings = verify(path, 0, &whole, TRUE);
  AW_CHECK(recordings == BATCH);

  GRand *rng = g_rand_new_with_seed(20260401);
  guint killed_mid = 0;
  for (guint r = 1; r <= rounds; r++) {
    double delay = g_rand_double_range(rng, 0.0, 1.2 * full_s);
    double took = run_child(path, r, delay, &status);
    gboolean was_killed = WIFSIGNALED(status) && WTERMSIG(status) == SIGKILL;
    AW_CHECK(was_killed || (WIFEXITED(status) && WEXITSTATUS(status) == 0));
    guint w0 = whole;
    /* SQLite's checks after every kill; every stored stream decoded and hashed every tenth
     * round and at the end (that part grows with the library). */
    recordings = verify(path, recordings, &whole, r % 10 == 0 || r == rounds);
    if (was_killed && whole == w0)
      killed_mid++;
    (void)took;
  }
  g_rand_free(rng);
  printf("%u rounds, commit %.1f ms, %u kills left nothing, %u imports complete, %u recordings\n",
         rounds, full_s * 1e3, killed_mid, whole, recordings);
  /* The test only means something if some kills did interrupt a commit. */
  AW_CHECK(rounds < 20 || killed_mid >= rounds / 10);
  g_ptr_array_unref(batch);
  st_rmtree(dir);
  g_free(dir);
  g_free(path);
  return AW_TEST_END();
}
