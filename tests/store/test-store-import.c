/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The import pipeline end to end on simulated capture pairs (arcwise simulate's engine):
 * - the raw streams read back bit-exact (compared with the files' bytes);
 * - re-importing the same files is detected by content hash and changes nothing;
 * - malformed captures (bad number, time going backwards, empty file, missing file, unpaired
 *   folder, a folder with one good and one bad pair) are refused with file:line:column and
 *   leave the library file byte-for-byte unchanged (SHA-256 of the file before and after);
 * - an import into a player given by id lands with that player after a rename, makes no new
 *   player and is analysed with the player's handedness; an unknown id is refused;
 * - the async form reports progress in the caller's main context and honours a cancel;
 * - one player's history moves to another library and back without duplicates, and a transfer
 *   file carrying a hostile stream name cannot put it into the library. */
#include "store-testlib.h"

#include "arcwise/sim.h"

#include <unistd.h>

static char *
simulate(const char *dir, const char *name, guint64 seed, int swings)
{
  AwSimConfig cfg;
  aw_sim_config_default(&cfg, AW_SIM_EASY);
  cfg.seed = seed;
  cfg.n_swings = swings;
  AwSim *sim = NULL;
  AwError err;
  if (aw_sim_new(&cfg, &sim, &err) != AW_OK) {
    char buf[1200];
    fprintf(stderr, "simulate: %s\n", aw_error_format(&err, buf, sizeof buf));
    exit(1);
  }
  char *out = g_build_filename(dir, name, NULL);
  g_mkdir_with_parents(out, 0755);
  if (aw_sim_write(sim, out, &err) != AW_OK) {
    fprintf(stderr, "simulate: cannot write\n");
    exit(1);
  }
  aw_sim_free(sim);
  return out;
}

static GPtrArray *
pair_of(const char *folder)
{
  GPtrArray *pairs = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_capture_pair_free);
  ArcwiseCapturePair *p = g_new0(ArcwiseCapturePair, 1);
  p->imu_path = g_build_filename(folder, "imu.csv", NULL);
  p->depth_path = g_build_filename(folder, "depth.csv", NULL);
  g_ptr_array_add(pairs, p);
  return pairs;
}

static guint
count_swings(const char *lib)
{
  ArcwiseStore *s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_DEFAULT, NULL);
  GPtrArray *w = s != NULL ? arcwise_store_list_swings(s, NULL, NULL) : NULL;
  guint n = w != NULL ? w->len : 9999;
  if (w != NULL)
    g_ptr_array_unref(w);
  arcwise_store_close(s);
  return n;
}

static ArcwiseImportTarget target;

/* Import that must fail; the library file must not change by a byte. Returns the message. */
static char *
import_must_fail(const char *lib, GPtrArray *pairs)
{
  char *before = st_file_sha(lib);
  guint n_before = count_swings(lib);
  char *after_count_sha = st_file_sha(lib);
  AW_CHECK(strcmp(before, after_count_sha) == 0); /* reading alone changes nothing */
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_DEFAULT, &e);
  ArcwiseImportResult *r = arcwise_store_import(s, &target, pairs, NULL, NULL, NULL, &e);
  AW_CHECK(r == NULL && e != NULL);
  arcwise_import_result_free(r);
  arcwise_store_close(s);
  char *after = st_file_sha(lib);
  AW_CHECK(strcmp(before, after) == 0);
  AW_CHECK(count_swings(lib) == n_before);
  g_free(before);
  g_free(after);
  g_free(after_count_sha);
  char *msg = g_strdup(e != NULL ? e->message : "");
  g_clear_error(&e);
  return msg;
}

/* A copy of folder/file with line `line` (1-based) replaced. */
static char *
damaged_copy(const char *dir, const char *src_folder, const char *name, int line,
             const char *replacement, const char *other)
{
  char *out = g_build_filename(dir, name, NULL);
  g_mkdir_with_parents(out, 0755);
  for (int k = 0; k < 2; k++) {
    const char *f = k == 0 ? "imu.csv" : "depth.csv";
    char *src = g_build_filename(src_folder, f, NULL);
    char *dst = g_build_filename(out, f, NULL);
    char *data = NULL;
    g_file_get_contents(src, &data, NULL, NULL);
    if (strcmp(f, other) == 0 && line > 0) {
      char **lines = g_strsplit(data, "\n", -1);
      g_free(lines[line - 1]);
      lines[line - 1] = g_strdup(replacement);
      g_free(data);
      data = g_strjoinv("\n", lines);
      g_strfreev(lines);
    } else if (strcmp(f, other) == 0 && line == 0) {
      g_free(data);
      data = g_strdup(replacement);
    }
    g_file_set_contents(dst, data, -1, NULL);
    g_free(data);
    g_free(src);
    g_free(dst);
  }
  return out;
}

/* First data line of a capture file (after comments and the header), 1-based. */
static int
first_data_line(const char *path)
{
  char *data = NULL;
  g_file_get_contents(path, &data, NULL, NULL);
  char **lines = g_strsplit(data, "\n", -1);
  int header = 0;
  for (int i = 0; lines[i] != NULL; i++)
    if (lines[i][0] != '#') {
      header = i + 1;
      break;
    }
  g_strfreev(lines);
  g_free(data);
  return header + 1;
}

typedef struct {
  GMainLoop *loop;
  GThread *main_thread;
  guint progress_calls;
  gboolean progress_off_thread;
  ArcwiseImportResult *result;
  GError *error;
} AsyncState;

static void
on_progress(guint done, guint total, const char *what, gpointer data)
{
  AsyncState *st = data;
  st->progress_calls++;
  if (g_thread_self() != st->main_thread)
    st->progress_off_thread = TRUE;
}

/* Background re-analysis: the count, and what a reader in this thread saw meanwhile. */
typedef struct {
  GMainLoop *loop;
  GThread *main_thread;
  guint progress_calls, last_done, last_total;
  gboolean progress_off_thread, progress_backwards;
  gint updated;
  GError *error;
  ArcwiseStore *reader;
  guint reads, reads_missing_result;
} ReanalyseState;

static void
on_re_progress(guint done, guint total, const char *what, gpointer data)
{
  ReanalyseState *st = data;
  st->progress_calls++;
  if (g_thread_self() != st->main_thread)
    st->progress_off_thread = TRUE;
  if (done < st->last_done || done > total)
    st->progress_backwards = TRUE;
  st->last_done = done;
  st->last_total = total;
}

/* While the re-analysis runs, every swing must still show a result (old or new). */
static gboolean
on_re_read(gpointer data)
{
  ReanalyseState *st = data;
  GPtrArray *ws = arcwise_store_list_swings(st->reader, NULL, NULL);
  st->reads++;
  for (guint i = 0; ws != NULL && i < ws->len; i++)
    if (!((ArcwiseSwingSummary *)g_ptr_array_index(ws, i))->analysed)
      st->reads_missing_result++;
  if (ws == NULL)
    st->reads_missing_result++;
  else
    g_ptr_array_unref(ws);
  return G_SOURCE_CONTINUE;
}

static void
on_re_done(GObject *src, GAsyncResult *res, gpointer data)
{
  ReanalyseState *st = data;
  st->updated = arcwise_store_reanalyse_finish(res, &st->error);
  g_main_loop_quit(st->loop);
}

static void
on_done(GObject *src, GAsyncResult *res, gpointer data)
{
  AsyncState *st = data;
  st->result = arcwise_store_import_finish(res, &st->error);
  g_main_loop_quit(st->loop);
}

int
main(void)
{
  arcwise_import_target_init(&target);
  target.player_name = "Hale Moreau";
  target.handedness = ARCWISE_HAND_RIGHT;
  target.session_date = "2026-06-10";
  target.session_place = "Bay 1";
  target.club_kind = "7-iron";

  char *dir = st_tmpdir();
  char *a = simulate(dir, "a", 11, 1);
  char *b = simulate(dir, "b", 12, 1);
  char *c = simulate(dir, "c", 13, 1);
  char *lib = g_build_filename(dir, "lib.sqlite", NULL);
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);

  /* A good import. */
  GPtrArray *pa = pair_of(a);
  ArcwiseImportResult *r = arcwise_store_import(s, &target, pa, NULL, NULL, NULL, &e);
  if (r == NULL)
    fprintf(stderr, "import: %s\n", e->message);
  AW_CHECK(r != NULL && r->recordings_added == 1 && r->swings_added >= 1);
  guint first_swings = r != NULL ? r->swings_added : 0;
  printf("fusion %s, analysis %s: %u swing(s) from one simulated swing\n",
         arcwise_pipeline_can_fuse() ? "yes" : "no",
         arcwise_pipeline_can_analyse() ? "yes" : "no", first_swings);
  /* One simulated swing gives one swing when analysis runs, and one whole-recording swing
   * when it cannot. */
  AW_CHECK(first_swings == 1);
  if (r != NULL && r->swing_ids->len > 0) {
    ArcwiseSwingDetail *d = arcwise_store_load_swing(s, g_array_index(r->swing_ids, gint64, 0), &e);
    AW_CHECK(d != NULL);
    if (d != NULL) {
      AW_CHECK(strcmp(d->summary->player_name, "Hale Moreau") == 0);
      AW_CHECK(strcmp(d->summary->club_kind, "7-iron") == 0);
      AW_CHECK((d->path != NULL) == arcwise_pipeline_can_fuse());
      AW_CHECK((d->analysis != NULL) == arcwise_pipeline_can_analyse());
      AW_CHECK((d->swing != NULL) == arcwise_pipeline_can_analyse());
      AW_CHECK(d->summary->analysis_current == arcwise_pipeline_can_analyse());
      /* Raw streams bit-exact against the files. */
      GBytes *bi = NULL, *bd = NULL;
      AW_CHECK(arcwise_store_load_recording(s, d->summary->recording_id, &bi, &bd, NULL, NULL,
                                            &e));
      char *fi = NULL, *fd = NULL;
      gsize li = 0, ld = 0;
      g_file_get_contents(((ArcwiseCapturePair *)g_ptr_array_index(pa, 0))->imu_path, &fi, &li,
                          NULL);
      g_file_get_contents(((ArcwiseCapturePair *)g_ptr_array_index(pa, 0))->depth_path, &fd,
                          &ld, NULL);
      AW_CHECK(bi != NULL && g_bytes_get_size(bi) == li && memcmp(g_bytes_get_data(bi, NULL), fi, li) == 0);
      AW_CHECK(bd != NULL && g_bytes_get_size(bd) == ld && memcmp(g_bytes_get_data(bd, NULL), fd, ld) == 0);
      g_free(fi);
      g_free(fd);
      g_clear_pointer(&bi, g_bytes_unref);
      g_clear_pointer(&bd, g_bytes_unref);
    }
    arcwise_swing_detail_free(d);
  }
  arcwise_import_result_free(r);
  arcwise_store_close(s);

  /* Re-import: detected, nothing written. */
  char *before = st_file_sha(lib);
  s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_DEFAULT, &e);
  r = arcwise_store_import(s, &target, pa, NULL, NULL, NULL, &e);
  AW_CHECK(r != NULL && r->recordings_added == 0 && r->recordings_already_present == 1 &&
           r->swings_added == 0);
  arcwise_import_result_free(r);
  arcwise_store_close(s);
  char *after = st_file_sha(lib);
  AW_CHECK(strcmp(before, after) == 0);
  g_free(before);
  g_free(after);

  char *msg = NULL;
  /* Into an existing player by id: a left-handed player renamed after the drop was aimed (the
   * name the caller saw is gone) gets the swings, no player is made under the old name, and
   * they are analysed left-handed (the player's own handedness; the target leaves it unknown).
   * A player id that is not in the library is refused and changes nothing. */
  s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_DEFAULT, &e);
  gint64 lefty = arcwise_store_add_player(s, "Odile Brandt", ARCWISE_HAND_LEFT, AW_WRIST_RIGHT,
                                          1.71, "", &e);
  AW_CHECK(lefty != 0);
  ArcwisePlayer *pl = arcwise_store_get_player(s, lefty, &e);
  AW_CHECK(pl != NULL);
  g_free(pl->name);
  pl->name = g_strdup("Odile Brandt-Lowe");
  AW_CHECK(arcwise_store_update_player(s, pl, &e));
  arcwise_player_free(pl);
  GPtrArray *players_before = arcwise_store_list_players(s, &e);
  guint n_players = players_before != NULL ? players_before->len : 0;
  g_clear_pointer(&players_before, g_ptr_array_unref);
  ArcwiseImportTarget by_id;
  arcwise_import_target_init(&by_id);
  by_id.player_id = lefty;
  by_id.session_date = "2026-06-11";
  char *d_folder = simulate(dir, "d", 14, 1);
  GPtrArray *pd = pair_of(d_folder);
  r = arcwise_store_import(s, &by_id, pd, NULL, NULL, NULL, &e);
  if (r == NULL)
    fprintf(stderr, "import by id: %s\n", e->message);
  AW_CHECK(r != NULL && r->swings_added == 1);
  GPtrArray *players_after = arcwise_store_list_players(s, &e);
  AW_CHECK(players_after != NULL && players_after->len == n_players);
  g_clear_pointer(&players_after, g_ptr_array_unref);
  if (r != NULL && r->swing_ids->len > 0) {
    ArcwiseSwingDetail *d = arcwise_store_load_swing(s, g_array_index(r->swing_ids, gint64, 0), &e);
    AW_CHECK(d != NULL && d->summary->player_id == lefty &&
             strcmp(d->summary->player_name, "Odile Brandt-Lowe") == 0);
    if (d != NULL && arcwise_pipeline_can_analyse())
      AW_CHECK(d->swing != NULL && d->swing->handed == AW_HANDED_LEFT);
    arcwise_swing_detail_free(d);
  }
  arcwise_import_result_free(r);
  arcwise_store_close(s);
  g_ptr_array_unref(pd);
  ArcwiseImportTarget keep = target;
  arcwise_import_target_init(&target);
  target.player_id = lefty + 1000;
  char *e_folder = simulate(dir, "e", 15, 1);
  pd = pair_of(e_folder);
  msg = import_must_fail(lib, pd);
  AW_CHECK(strstr(msg, "player") != NULL);
  printf("missing player id: %s\n", msg);
  g_free(msg);
  g_ptr_array_unref(pd);
  target = keep;
  g_free(d_folder);
  g_free(e_folder);

  /* Malformed captures. */
  char *imu_a = g_build_filename(a, "imu.csv", NULL);
  char *depth_a = g_build_filename(a, "depth.csv", NULL);
  int li = first_data_line(imu_a), ld = first_data_line(depth_a);
  char *bad1 = damaged_copy(dir, b, "bad-number", li + 3, "0.5,abc,0,9.8,0,0,0", "imu.csv");
  GPtrArray *pp = pair_of(bad1);
  msg = import_must_fail(lib, pp);
  g_autofree char *want1 = g_strdup_printf("imu.csv:%d:", li + 3);
  AW_CHECK(strstr(msg, want1) != NULL);
  printf("bad number: %s\n", msg);
  g_free(msg);
  g_ptr_array_unref(pp);

  char *bad2 = damaged_copy(dir, b, "time-back", ld + 5, "0.0001,0.1,0.2,2.0,0.9", "depth.csv");
  pp = pair_of(bad2);
  msg = import_must_fail(lib, pp);
  g_autofree char *want2 = g_strdup_printf("depth.csv:%d:", ld + 5);
  AW_CHECK(strstr(msg, want2) != NULL);
  printf("time backwards: %s\n", msg);
  g_free(msg);
  g_ptr_array_unref(pp);

  char *bad3 = damaged_copy(dir, b, "empty", 0, "", "imu.csv");
  pp = pair_of(bad3);
  msg = import_must_fail(lib, pp);
  AW_CHECK(strstr(msg, "imu.csv") != NULL);
  printf("empty file: %s\n", msg);
  g_free(msg);
  g_ptr_array_unref(pp);

  pp = pair_of(dir); /* dir/imu.csv does not exist */
  msg = import_must_fail(lib, pp);
  AW_CHECK(strstr(msg, "imu.csv") != NULL);
  g_free(msg);
  g_ptr_array_unref(pp);

  /* A folder with one good new pair and one bad pair: all or nothing. */
  char *mixed = g_build_filename(dir, "mixed", NULL);
  g_mkdir_with_parents(mixed, 0755);
  char *l1 = g_build_filename(mixed, "good", NULL);
  char *l2 = g_build_filename(mixed, "zbad", NULL);
  AW_CHECK(symlink(c, l1) == 0 && symlink(bad1, l2) == 0);
  pp = arcwise_capture_pairs_in_folder(mixed, &e);
  AW_CHECK(pp != NULL && pp->len == 2);
  if (pp != NULL) {
    msg = import_must_fail(lib, pp);
    AW_CHECK(strstr(msg, "zbad") != NULL);
    g_free(msg);
    g_ptr_array_unref(pp);
  }
  /* An unpaired file in a folder is refused before anything is read. */
  char *lone = g_build_filename(dir, "lone", NULL);
  g_mkdir_with_parents(lone, 0755);
  char *lone_f = g_build_filename(lone, "x.imu.csv", NULL);
  g_file_set_contents(lone_f, "t,ax,ay,az,gx,gy,gz\n", -1, NULL);
  pp = arcwise_capture_pairs_in_folder(lone, &e);
  AW_CHECK(pp == NULL && e != NULL && strstr(e->message, "x.depth.csv") != NULL);
  g_clear_error(&e);

  /* Async with progress in this thread's context; then a cancelled one stores nothing. */
  AsyncState st = { g_main_loop_new(NULL, FALSE), g_thread_self(), 0, FALSE, NULL, NULL };
  pp = pair_of(b);
  arcwise_store_import_async(lib, &target, pp, NULL, on_progress, &st, NULL, on_done, &st);
  g_main_loop_run(st.loop);
  AW_CHECK(st.result != NULL && st.result->recordings_added == 1);
  AW_CHECK(st.progress_calls >= 1 && !st.progress_off_thread);
  arcwise_import_result_free(st.result);
  g_ptr_array_unref(pp);
  st.result = NULL;
  GCancellable *cancel = g_cancellable_new();
  g_cancellable_cancel(cancel);
  before = st_file_sha(lib);
  pp = pair_of(c);
  arcwise_store_import_async(lib, &target, pp, cancel, NULL, NULL, NULL, on_done, &st);
  g_main_loop_run(st.loop);
  AW_CHECK(st.result == NULL && g_error_matches(st.error, G_IO_ERROR, G_IO_ERROR_CANCELLED));
  g_clear_error(&st.error);
  after = st_file_sha(lib);
  AW_CHECK(strcmp(before, after) == 0);
  g_free(before);
  g_free(after);
  g_ptr_array_unref(pp);
  g_object_unref(cancel);
  g_main_loop_unref(st.loop);

  /* Re-analysis in the background after an engine change (simulated: every stored result
   * marked as made by another version): progress in this thread, in order, up to the total; a
   * reader here sees every swing with a result throughout; afterwards all are current. */
  if (arcwise_pipeline_can_analyse()) {
    s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_DEFAULT, &e);
    AW_CHECK(s != NULL && arcwise_store_exec_script(s, "UPDATE swing_result SET engine_version "
                                                        "= 'older-engine'", &e));
    guint stale = arcwise_store_count_stale(s, &e);
    guint n_swings = count_swings(lib);
    AW_CHECK(stale == n_swings && stale >= 2);
    ReanalyseState rs = { g_main_loop_new(NULL, FALSE), g_thread_self(), 0, 0, 0, FALSE, FALSE,
                          -1, NULL, s, 0, 0 };
    guint reader_src = g_timeout_add(5, on_re_read, &rs);
    arcwise_store_reanalyse_async(lib, FALSE, NULL, on_re_progress, &rs, NULL, on_re_done, &rs);
    g_main_loop_run(rs.loop);
    g_source_remove(reader_src);
    on_re_read(&rs); /* and once after the end */
    if (rs.error != NULL)
      fprintf(stderr, "background re-analysis: %s\n", rs.error->message);
    printf("background re-analysis: %d swings, %u progress calls, %u reads meanwhile\n",
           rs.updated, rs.progress_calls, rs.reads);
    AW_CHECK(rs.error == NULL && rs.updated == (gint)n_swings);
    AW_CHECK(rs.progress_calls >= 1 && !rs.progress_off_thread && !rs.progress_backwards);
    AW_CHECK(rs.last_done == rs.last_total && rs.last_total >= 2);
    AW_CHECK(rs.reads >= 1 && rs.reads_missing_result == 0);
    AW_CHECK(arcwise_store_count_stale(s, &e) == 0);
    g_clear_error(&e);
    g_clear_error(&rs.error);
    arcwise_store_close(s);
    g_main_loop_unref(rs.loop);
  }

  /* One player's history to a file and into another library; twice gives no duplicates. */
  s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_DEFAULT, &e);
  gint64 pid = arcwise_store_find_player(s, "Hale Moreau", &e);
  AW_CHECK(pid != 0);
  char *xfer = g_build_filename(dir, "hale.arcwise-player", NULL);
  AW_CHECK(arcwise_store_export_player(s, pid, xfer, &e));
  if (e != NULL)
    fprintf(stderr, "export: %s\n", e->message);
  g_clear_error(&e);
  AW_CHECK(!arcwise_store_export_player(s, pid, xfer, &e)); /* never overwrites */
  g_clear_error(&e);
  /* Hale's swings only: the library also holds another player's (the import by id above). */
  ArcwisePlayer *hale = arcwise_store_get_player(s, pid, &e);
  AW_CHECK(hale != NULL);
  guint n_lib = hale != NULL ? hale->n_swings : 0;
  arcwise_player_free(hale);
  arcwise_store_close(s);
  char *lib2 = g_build_filename(dir, "lib2.sqlite", NULL);
  ArcwiseStore *s2 = arcwise_store_open(lib2, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(arcwise_store_import_player(s2, xfer, &e) == (gint)n_lib);
  g_clear_error(&e);
  AW_CHECK(arcwise_store_import_player(s2, xfer, &e) == 0);
  g_clear_error(&e);
  AW_CHECK(arcwise_store_check(s2, &e));
  g_clear_error(&e);
  arcwise_store_close(s2);
  AW_CHECK(count_swings(lib2) == n_lib);

  /* A transfer file whose stream names try to leave a folder, and one whose hash lies. */
  ArcwiseStore *x = arcwise_store_open(xfer, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(arcwise_store_exec_script(x, "UPDATE recording SET imu_name = '../../escape.csv', "
                                        "depth_name = '/etc/owned.csv'", &e));
  arcwise_store_close(x);
  char *lib3 = g_build_filename(dir, "lib3.sqlite", NULL);
  ArcwiseStore *s3 = arcwise_store_open(lib3, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(arcwise_store_import_player(s3, xfer, &e) == (gint)n_lib);
  g_clear_error(&e);
  GPtrArray *ws = arcwise_store_list_swings(s3, NULL, &e);
  for (guint i = 0; ws != NULL && i < ws->len; i++) {
    char *ni = NULL, *nd = NULL;
    const ArcwiseSwingSummary *w = g_ptr_array_index(ws, i);
    AW_CHECK(arcwise_store_load_recording(s3, w->recording_id, NULL, NULL, &ni, &nd, &e));
    AW_CHECK(ni != NULL && strcmp(ni, "escape.csv") == 0 && strcmp(nd, "owned.csv") == 0);
    g_free(ni);
    g_free(nd);
  }
  if (ws != NULL)
    g_ptr_array_unref(ws);
  arcwise_store_close(s3);
  x = arcwise_store_open(xfer, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(arcwise_store_exec_script(x, "UPDATE recording SET content_sha256 = 'feed' || id", &e));
  arcwise_store_close(x);
  char *lib4 = g_build_filename(dir, "lib4.sqlite", NULL);
  ArcwiseStore *s4 = arcwise_store_open(lib4, ARCWISE_STORE_OPEN_CREATE, &e);
  arcwise_store_close(s4);
  before = st_file_sha(lib4);
  s4 = arcwise_store_open(lib4, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(arcwise_store_import_player(s4, xfer, &e) == -1 && e != NULL);
  g_clear_error(&e);
  arcwise_store_close(s4);
  after = st_file_sha(lib4);
  AW_CHECK(strcmp(before, after) == 0);
  g_free(before);
  g_free(after);

  g_ptr_array_unref(pa);
  st_rmtree(dir);
  g_free(dir);
  g_free(a);
  g_free(b);
  g_free(c);
  g_free(lib);
  g_free(lib2);
  g_free(lib3);
  g_free(lib4);
  g_free(xfer);
  g_free(imu_a);
  g_free(depth_a);
  g_free(bad1);
  g_free(bad2);
  g_free(bad3);
  g_free(mixed);
  g_free(l1);
  g_free(l2);
  g_free(lone);
  g_free(lone_f);
  return AW_TEST_END();
}
