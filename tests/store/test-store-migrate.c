/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Every migration from every earlier version, on :memory: and on files: the data written at the
 * old version survives, the schema ends equal to a fresh library's, and integrity_check and
 * foreign_key_check pass (SQLite's own checks are the reference). A failing migration step
 * leaves the library at its old version; a library from a newer program is refused without a
 * byte changed; files that are not Arcwise libraries are refused. */
#include "store-testlib.h"

/* Rows valid at each version (constant SQL, tests only). Each fixture adds to the previous. */
static const char *const fixtures[ARCWISE_STORE_SCHEMA_VERSION + 1] = {
  /* v0: nothing */
  "",
  /* v1 */
  "INSERT INTO player (id, name, handedness, lead_wrist, height_m, notes) "
  "  VALUES (7, 'Ines Varga', 1, 1, 1.68, 'keeps a diary');"
  "INSERT INTO club (id, kind, length_m) VALUES (3, '6-iron', 0.953);"
  "INSERT INTO session (id, player_id, date, place, notes) "
  "  VALUES (11, 7, '2026-02-14', 'Bay 2', 'windy outside');"
  "INSERT INTO recording (id, content_sha256, imu_name, imu_size, imu_sha256, depth_name, "
  "  depth_size, depth_sha256, imported_utc) VALUES (5, 'c0ffee', 'a.imu.csv', 3, 'aa', "
  "  'a.depth.csv', 2, 'bb', '2026-02-14T10:00:00Z');"
  "INSERT INTO recording_data (recording_id, encoding, imu, depth) VALUES (5, 'zlib', x'01', x'02');"
  "INSERT INTO swing (id, session_id, recording_id, club_id, index_in_recording, span_start_s, "
  "  span_end_s, notes, rating, is_reference) VALUES (21, 11, 5, 3, 0, 1.5, 4.25, 'early', 3, 1);"
  "INSERT INTO journal (when_utc, kind, detail) VALUES ('2026-02-14T10:00:00Z', 'import', 'x');",
  /* v2 */
  "INSERT INTO swing_tag (swing_id, tag) VALUES (21, 'grip');",
  /* v3 */
  "INSERT INTO swing_result (swing_id, engine_version, settings, settings_sha256, made_utc, "
  "  analysed) VALUES (21, '0.0.1', 'k=1', 'ab', '2026-02-14T10:00:01Z', 1);"
  "INSERT INTO swing_metric (swing_id, name, unit, value) VALUES (21, 'tempo_ratio', '1', 3.0);",
  /* v4: a result written by the program at v4 (key numbers beside it) */
  "INSERT INTO swing_event (swing_id, name, t_s) VALUES (21, 'top', 2.5);",
  /* v5: a reference swing from optical motion capture (two frames of 32 bytes) */
  "INSERT INTO reference_path (id, player_id, name, source_name, source_sha256, marker, units, "
  "  up_axis, rate_hz, n_frames, n_invalid, imported_utc, samples) VALUES (4, 7, 'optical', "
  "  'a.c3d', 'dd', 'RWRA', 'mm', '+z', 200, 2, 0, '2026-02-14T10:00:02Z', zeroblob(64));",
};

/* The v3 and v4 rows as the current program writes them (for a library created at version 4
 * or later, where the v3 fixture's column layout no longer exists). */
static const char current_results[] =
  "INSERT INTO result_settings (settings_sha256, settings) VALUES ('ab', 'k=1');"
  "INSERT INTO swing_result (swing_id, engine_version, settings_sha256, made_utc, analysed, "
  "  tempo_ratio) VALUES (21, '0.0.1', 'ab', '2026-02-14T10:00:01Z', 1, 3.0);"
  "INSERT INTO swing_metric (swing_id, name, unit, value) VALUES (21, 'tempo_ratio', '1', 3.0);"
  "INSERT INTO swing_event (swing_id, name, t_s) VALUES (21, 'top', 2.5);";

static char *fresh_schema = NULL;

static void
check_data(ArcwiseStore *s, int from_version)
{
  GError *e = NULL;
  ArcwisePlayer *p = arcwise_store_get_player(s, 7, &e);
  AW_CHECK(p != NULL);
  if (p != NULL) {
    AW_CHECK(strcmp(p->name, "Ines Varga") == 0);
    AW_CHECK(p->handedness == ARCWISE_HAND_RIGHT && p->lead_wrist == AW_WRIST_LEFT);
    AW_CHECK(p->height_m == 1.68 && strcmp(p->notes, "keeps a diary") == 0);
    AW_CHECK(p->n_sessions == 1 && p->n_swings == 1);
  }
  arcwise_player_free(p);
  g_clear_error(&e);
  ArcwiseSwingSummary *w = arcwise_store_get_swing(s, 21, &e);
  AW_CHECK(w != NULL);
  if (w != NULL) {
    AW_CHECK(strcmp(w->notes, "early") == 0 && w->rating == 3 && w->is_reference);
    AW_CHECK(w->span_start_s == 1.5 && w->span_end_s == 4.25);
    AW_CHECK(strcmp(w->club_kind, "6-iron") == 0 && strcmp(w->session_date, "2026-02-14") == 0);
    AW_CHECK((from_version >= 2) == (g_strv_length(w->tags) == 1));
    AW_CHECK(w->analysed == (from_version >= 3));
    if (from_version >= 3)
      AW_CHECK(w->tempo_ratio == 3.0);
    else
      AW_CHECK(isnan(w->tempo_ratio));
  }
  arcwise_swing_summary_free(w);
  g_clear_error(&e);
  GPtrArray *refs = arcwise_store_list_references(s, 7, &e);
  AW_CHECK(refs != NULL && refs->len == (from_version >= 5 ? 1u : 0u));
  if (refs != NULL && refs->len == 1) {
    const ArcwiseReference *r = g_ptr_array_index(refs, 0);
    AW_CHECK(strcmp(r->marker, "RWRA") == 0 && r->n_frames == 2 && r->rate_hz == 200);
  }
  if (refs != NULL)
    g_ptr_array_unref(refs);
  g_clear_error(&e);
  char *dump = arcwise_store_schema_dump(s, &e);
  AW_CHECK(dump != NULL && strcmp(dump, fresh_schema) == 0);
  if (dump != NULL && strcmp(dump, fresh_schema) != 0)
    fprintf(stderr, "migrated from %d:\n%s\nfresh:\n%s\n", from_version, dump, fresh_schema);
  g_free(dump);
  AW_CHECK(arcwise_store_get_schema_version(s) == ARCWISE_STORE_SCHEMA_VERSION);
  /* integrity_check + foreign_key_check; the fixture's blobs are not real zlib streams, so the
   * blob part of the check must report exactly that recording. */
  gboolean ok = arcwise_store_check(s, &e);
  AW_CHECK(!ok && e != NULL && strstr(e->message, "recording 5") != NULL &&
           strstr(e->message, "integrity") == NULL && strstr(e->message, "missing") == NULL);
  g_clear_error(&e);
}

static void
fill_to(ArcwiseStore *s, int version)
{
  GError *e = NULL;
  /* From version 4 on the v3 rows have the layout of current_results (which holds v4's too). */
  gboolean current = arcwise_store_get_schema_version(s) >= 4;
  for (int v = 1; v <= version; v++) {
    if (current && (v == 3 || v == 4)) {
      if (v == 3 && !arcwise_store_exec_script(s, current_results, &e)) {
        fprintf(stderr, "current fixture: %s\n", e->message);
        g_clear_error(&e);
        aw_test_failures++;
      }
      continue;
    }
    if (!arcwise_store_exec_script(s, fixtures[v], &e)) {
      fprintf(stderr, "fixture %d: %s\n", v, e->message);
      g_clear_error(&e);
      aw_test_failures++;
    }
  }
}

/* Step by step, adding each version's rows as soon as the library is at that version, as a
 * library used across several program updates would have them. */
static void
test_memory(int from)
{
  GError *e = NULL;
  ArcwiseStore *s = arcwise_store_open_at_version(":memory:", from, &e);
  AW_CHECK(s != NULL && arcwise_store_get_schema_version(s) == from);
  fill_to(s, from);
  for (int v = from + 1; v <= ARCWISE_STORE_SCHEMA_VERSION; v++) {
    AW_CHECK(arcwise_store_migrate_to(s, v, &e));
    g_clear_error(&e);
    AW_CHECK(arcwise_store_get_schema_version(s) == v);
    AW_CHECK(arcwise_store_exec_script(s, fixtures[v], &e));
    g_clear_error(&e);
  }
  check_data(s, ARCWISE_STORE_SCHEMA_VERSION);
  arcwise_store_close(s);
}

static void
test_file(const char *dir, int from)
{
  GError *e = NULL;
  char name[64];
  g_snprintf(name, sizeof name, "from-%d.sqlite", from);
  char *path = g_build_filename(dir, name, NULL);
  ArcwiseStore *s = arcwise_store_open_at_version(path, from, &e);
  AW_CHECK(s != NULL);
  fill_to(s, from);
  arcwise_store_close(s);
  /* The ordinary open upgrades it. */
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s != NULL);
  g_clear_error(&e);
  if (s != NULL) {
    if (from == 0)
      fill_to(s, ARCWISE_STORE_SCHEMA_VERSION);
    check_data(s, from == 0 ? ARCWISE_STORE_SCHEMA_VERSION : from);
    arcwise_store_close(s);
  }
  g_free(path);
}

/* A migration step that fails part-way leaves the library at the old version with nothing of
 * the step applied. */
static void
test_failed_step(const char *dir)
{
  GError *e = NULL;
  char *path = g_build_filename(dir, "failing.sqlite", NULL);
  ArcwiseStore *s = arcwise_store_open_at_version(path, 1, &e);
  fill_to(s, 1);
  /* An object that migration 2 will create near its end, made beforehand, so its first
   * statements succeed and a later one fails. */
  AW_CHECK(arcwise_store_exec_script(s, "CREATE TABLE session_by_date (x);", &e));
  arcwise_store_close(s);
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s == NULL && e != NULL);
  g_clear_error(&e);
  s = arcwise_store_open_at_version(path, 1, &e);
  AW_CHECK(s != NULL);
  if (s != NULL) {
    AW_CHECK(arcwise_store_get_schema_version(s) == 1);
    char *dump = arcwise_store_schema_dump(s, NULL);
    AW_CHECK(dump != NULL && strstr(dump, "swing_tag") == NULL);
    g_free(dump);
    arcwise_store_close(s);
  }
  g_free(path);
}

static void
test_refusals(const char *dir)
{
  GError *e = NULL;
  char *path = g_build_filename(dir, "newer.sqlite", NULL);
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(s != NULL);
  /* What a future Arcwise would leave: a higher format number. */
  AW_CHECK(arcwise_store_exec_script(s, "PRAGMA user_version = 99;", &e));
  arcwise_store_close(s);
  char *before = st_file_sha(path);
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s == NULL);
  AW_CHECK(g_error_matches(e, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_TOO_NEW));
  AW_CHECK(e != NULL && strstr(e->message, "newer Arcwise") != NULL &&
           strstr(e->message, "format 99") != NULL);
  g_clear_error(&e);
  char *after = st_file_sha(path);
  AW_CHECK(strcmp(before, after) == 0);
  g_free(before);
  g_free(after);
  g_free(path);

  /* A plain SQLite database of another program. */
  path = g_build_filename(dir, "other.sqlite", NULL);
  s = arcwise_store_open_at_version(path, 0, &e);
  AW_CHECK(arcwise_store_exec_script(s, "CREATE TABLE notes (t TEXT);", &e));
  arcwise_store_close(s);
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s == NULL && g_error_matches(e, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_LIBRARY));
  g_clear_error(&e);
  g_free(path);

  /* Not SQLite at all. */
  path = g_build_filename(dir, "text.sqlite", NULL);
  g_file_set_contents(path, "t,ax,ay,az\n0,1,2,3\n", -1, NULL);
  before = st_file_sha(path);
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s == NULL && g_error_matches(e, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_LIBRARY));
  g_clear_error(&e);
  after = st_file_sha(path);
  AW_CHECK(strcmp(before, after) == 0);
  g_free(before);
  g_free(after);
  g_free(path);

  /* Missing without CREATE. */
  path = g_build_filename(dir, "missing.sqlite", NULL);
  s = arcwise_store_open(path, ARCWISE_STORE_OPEN_DEFAULT, &e);
  AW_CHECK(s == NULL && g_error_matches(e, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND));
  AW_CHECK(!g_file_test(path, G_FILE_TEST_EXISTS));
  g_clear_error(&e);
  g_free(path);
}

int
main(void)
{
  GError *e = NULL;
  ArcwiseStore *fresh = arcwise_store_open(":memory:", ARCWISE_STORE_OPEN_CREATE, &e);
  AW_CHECK(fresh != NULL);
  fresh_schema = arcwise_store_schema_dump(fresh, &e);
  arcwise_store_close(fresh);
  AW_CHECK(fresh_schema != NULL && strstr(fresh_schema, "user_version 5") != NULL);

  char *dir = st_tmpdir();
  for (int from = 0; from < ARCWISE_STORE_SCHEMA_VERSION; from++) {
    test_memory(from);
    test_file(dir, from);
  }
  test_failed_step(dir);
  test_refusals(dir);
  st_rmtree(dir);
  g_free(dir);
  g_free(fresh_schema);
  return AW_TEST_END();
}
