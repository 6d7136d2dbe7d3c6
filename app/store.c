/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The swing library on SQLite. Every SQL text of the program is in this file, as a constant
 * passed to a prepared statement; values are always bound, never spliced into SQL. */
#include "arcwise-config.h"
#include "store-private.h"

#include <errno.h>
#include <glib/gstdio.h>
#include <math.h>
#include <sqlite3.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/statvfs.h>

/* "ArcW" in PRAGMA application_id marks a file as an Arcwise library. */
#define ARCWISE_APPLICATION_ID 0x41726357

G_DEFINE_QUARK(arcwise-store-error-quark, arcwise_store_error)

struct _ArcwiseStore {
  sqlite3 *db;
  char *path;
  gboolean readonly;
  GHashTable *stmts;   /* SQL text (static) -> sqlite3_stmt*, prepared once per connection */
};

/* ---- Schema ---------------------------------------------------------------------------------
 * Numbered migrations. Each runs in one transaction together with its PRAGMA user_version, so a
 * library is always exactly at one version. Never edit a published migration: add the next. */

static const char *const migrations[ARCWISE_STORE_SCHEMA_VERSION] = {
  /* 1: people, clubs, sessions, the raw recordings, swings, the journal. */
  "PRAGMA application_id = 1098015575;\n" /* 0x41726357 "ArcW" */
  "CREATE TABLE player (\n"
  "  id INTEGER PRIMARY KEY,\n"
  "  name TEXT NOT NULL COLLATE NOCASE UNIQUE CHECK (length(name) BETWEEN 1 AND 200),\n"
  "  handedness INTEGER NOT NULL DEFAULT 0 CHECK (handedness BETWEEN 0 AND 2),\n"
  "  lead_wrist INTEGER NOT NULL DEFAULT 0 CHECK (lead_wrist BETWEEN 0 AND 2),\n"
  "  height_m REAL CHECK (height_m IS NULL OR (height_m > 0.5 AND height_m < 2.8)),\n"
  "  notes TEXT NOT NULL DEFAULT ''\n"
  ");\n"
  "CREATE TABLE club (\n"
  "  id INTEGER PRIMARY KEY,\n"
  "  kind TEXT NOT NULL COLLATE NOCASE CHECK (length(kind) BETWEEN 1 AND 100),\n"
  "  length_m REAL CHECK (length_m IS NULL OR (length_m > 0.2 AND length_m < 1.6))\n"
  ");\n"
  "CREATE TABLE session (\n"
  "  id INTEGER PRIMARY KEY,\n"
  "  player_id INTEGER NOT NULL REFERENCES player(id) ON DELETE CASCADE,\n"
  "  date TEXT NOT NULL CHECK (date GLOB '[0-9][0-9][0-9][0-9]-[0-9][0-9]-[0-9][0-9]*'),\n"
  "  place TEXT NOT NULL DEFAULT '',\n"
  "  notes TEXT NOT NULL DEFAULT ''\n"
  ");\n"
  "CREATE INDEX session_by_player ON session(player_id, date);\n"
  "CREATE TABLE recording (\n"
  "  id INTEGER PRIMARY KEY,\n"
  "  content_sha256 TEXT NOT NULL UNIQUE,\n"
  "  imu_name TEXT NOT NULL,\n"
  "  imu_size INTEGER NOT NULL,\n"
  "  imu_sha256 TEXT NOT NULL,\n"
  "  depth_name TEXT NOT NULL,\n"
  "  depth_size INTEGER NOT NULL,\n"
  "  depth_sha256 TEXT NOT NULL,\n"
  "  imported_utc TEXT NOT NULL\n"
  ");\n"
  /* The bytes live apart from the description so that lists never page through them. */
  "CREATE TABLE recording_data (\n"
  "  recording_id INTEGER PRIMARY KEY REFERENCES recording(id) ON DELETE CASCADE,\n"
  "  encoding TEXT NOT NULL CHECK (encoding = 'zlib'),\n"
  "  imu BLOB NOT NULL,\n"
  "  depth BLOB NOT NULL\n"
  ");\n"
  "CREATE TABLE swing (\n"
  "  id INTEGER PRIMARY KEY,\n"
  "  session_id INTEGER NOT NULL REFERENCES session(id) ON DELETE CASCADE,\n"
  "  recording_id INTEGER NOT NULL REFERENCES recording(id),\n"
  "  club_id INTEGER REFERENCES club(id),\n"
  "  index_in_recording INTEGER NOT NULL CHECK (index_in_recording >= 0),\n"
  "  span_start_s REAL NOT NULL,\n"
  "  span_end_s REAL NOT NULL CHECK (span_end_s >= span_start_s),\n"
  "  notes TEXT NOT NULL DEFAULT '',\n"
  "  rating INTEGER NOT NULL DEFAULT 0 CHECK (rating BETWEEN 0 AND 5),\n"
  "  is_reference INTEGER NOT NULL DEFAULT 0 CHECK (is_reference IN (0, 1)),\n"
  "  UNIQUE (recording_id, index_in_recording)\n"
  ");\n"
  "CREATE INDEX swing_by_session ON swing(session_id);\n"
  "CREATE INDEX swing_by_club ON swing(club_id);\n"
  "CREATE TABLE journal (\n"
  "  id INTEGER PRIMARY KEY,\n"
  "  when_utc TEXT NOT NULL,\n"
  "  kind TEXT NOT NULL,\n"
  "  detail TEXT NOT NULL\n"
  ");\n"
  "PRAGMA user_version = 1;\n",

  /* 2: tags, and the index the date filter uses. */
  "CREATE TABLE swing_tag (\n"
  "  swing_id INTEGER NOT NULL REFERENCES swing(id) ON DELETE CASCADE,\n"
  "  tag TEXT NOT NULL CHECK (length(tag) BETWEEN 1 AND 64),\n"
  "  PRIMARY KEY (swing_id, tag)\n"
  ") WITHOUT ROWID;\n"
  "CREATE INDEX swing_tag_by_tag ON swing_tag(tag, swing_id);\n"
  "CREATE INDEX session_by_date ON session(date);\n"
  "PRAGMA user_version = 2;\n",

  /* 3: cached results (fused path, events, metrics) with the engine version and settings that
   * made them. Older libraries simply have none: their swings show as not analysed. */
  "CREATE TABLE swing_result (\n"
  "  swing_id INTEGER PRIMARY KEY REFERENCES swing(id) ON DELETE CASCADE,\n"
  "  engine_version TEXT NOT NULL,\n"
  "  settings TEXT NOT NULL,\n"
  "  settings_sha256 TEXT NOT NULL,\n"
  "  made_utc TEXT NOT NULL,\n"
  "  analysed INTEGER NOT NULL CHECK (analysed IN (0, 1))\n"
  ");\n"
  "CREATE TABLE swing_result_data (\n"
  "  swing_id INTEGER PRIMARY KEY REFERENCES swing_result(swing_id) ON DELETE CASCADE,\n"
  "  path BLOB,\n"
  "  swing TEXT\n"
  ");\n"
  "CREATE TABLE swing_event (\n"
  "  swing_id INTEGER NOT NULL REFERENCES swing_result(swing_id) ON DELETE CASCADE,\n"
  "  name TEXT NOT NULL,\n"
  "  t_s REAL NOT NULL,\n"
  "  PRIMARY KEY (swing_id, name)\n"
  ") WITHOUT ROWID;\n"
  "CREATE TABLE swing_metric (\n"
  "  swing_id INTEGER NOT NULL REFERENCES swing_result(swing_id) ON DELETE CASCADE,\n"
  "  name TEXT NOT NULL,\n"
  "  unit TEXT NOT NULL,\n"
  "  value REAL NOT NULL,\n"
  "  PRIMARY KEY (swing_id, name)\n"
  ") WITHOUT ROWID;\n"
  "CREATE INDEX swing_metric_by_value ON swing_metric(name, value);\n"
  "PRAGMA user_version = 3;\n",

  /* 4: lists of 10,000 swings in well under 100 ms. The settings text (kilobytes, the same for
   * every swing of one engine) moves to its own table, and the key numbers every list row shows
   * are kept beside the result instead of looked up per row. */
  "CREATE TABLE result_settings (\n"
  "  settings_sha256 TEXT PRIMARY KEY,\n"
  "  settings TEXT NOT NULL\n"
  ") WITHOUT ROWID;\n"
  "INSERT OR IGNORE INTO result_settings (settings_sha256, settings)\n"
  "  SELECT settings_sha256, settings FROM swing_result;\n"
  "ALTER TABLE swing_result DROP COLUMN settings;\n"
  "ALTER TABLE swing_result ADD COLUMN tempo_ratio REAL;\n"
  "ALTER TABLE swing_result ADD COLUMN backswing_s REAL;\n"
  "ALTER TABLE swing_result ADD COLUMN downswing_s REAL;\n"
  "ALTER TABLE swing_result ADD COLUMN peak_hand_speed_m_s REAL;\n"
  "ALTER TABLE swing_result ADD COLUMN club_speed_impact_m_s REAL;\n"
  "UPDATE swing_result SET\n"
  "  tempo_ratio = (SELECT value FROM swing_metric m WHERE m.swing_id = swing_result.swing_id\n"
  "                 AND m.name = 'tempo_ratio'),\n"
  "  backswing_s = (SELECT value FROM swing_metric m WHERE m.swing_id = swing_result.swing_id\n"
  "                 AND m.name = 'backswing_s'),\n"
  "  downswing_s = (SELECT value FROM swing_metric m WHERE m.swing_id = swing_result.swing_id\n"
  "                 AND m.name = 'downswing_s'),\n"
  "  peak_hand_speed_m_s = (SELECT value FROM swing_metric m\n"
  "                 WHERE m.swing_id = swing_result.swing_id AND m.name = 'peak_hand_speed_mps'),\n"
  "  club_speed_impact_m_s = (SELECT value FROM swing_metric m\n"
  "                 WHERE m.swing_id = swing_result.swing_id AND m.name = 'club_speed_impact_mps');\n"
  "PRAGMA user_version = 4;\n",

  /* 5: reference swings imported from optical motion capture (C3D): one marker's trajectory of
   * a player, in metres in the file's lab frame, gaps kept. Apart from recordings, which hold
   * capture streams that re-analysis re-fuses. */
  "CREATE TABLE reference_path (\n"
  "  id INTEGER PRIMARY KEY,\n"
  "  player_id INTEGER NOT NULL REFERENCES player(id) ON DELETE CASCADE,\n"
  "  name TEXT NOT NULL CHECK (length(name) BETWEEN 1 AND 200),\n"
  "  source_name TEXT NOT NULL,\n"
  "  source_sha256 TEXT NOT NULL,\n"
  "  marker TEXT NOT NULL,\n"
  "  units TEXT NOT NULL,\n"
  "  up_axis TEXT NOT NULL CHECK (up_axis IN ('+x', '-x', '+y', '-y', '+z', '-z')),\n"
  "  rate_hz REAL NOT NULL CHECK (rate_hz > 0),\n"
  "  n_frames INTEGER NOT NULL CHECK (n_frames >= 2),\n"
  "  n_invalid INTEGER NOT NULL CHECK (n_invalid >= 0 AND n_invalid <= n_frames),\n"
  "  imported_utc TEXT NOT NULL,\n"
  "  samples BLOB NOT NULL CHECK (length(samples) = 32 * n_frames),\n"
  "  UNIQUE (player_id, source_sha256, marker)\n"
  ");\n"
  "CREATE INDEX reference_by_player ON reference_path(player_id);\n"
  "PRAGMA user_version = 5;\n",
};

/* ---- Errors and statements --------------------------------------------------------------- */

/* Whether a failed write ran out of space. The errno SQLite keeps is not reliable after a
 * short write (it is often 0 by the time the error comes back), so ask the file system too:
 * less than 1 MiB left for this user, or the library or its WAL at the file-size limit
 * (RLIMIT_FSIZE, `ulimit -f`) within one 64 KiB write. */
static gboolean
out_of_space(const char *path, int sys)
{
  if (sys == ENOSPC || sys == EFBIG
#ifdef EDQUOT
      || sys == EDQUOT
#endif
  )
    return TRUE;
  if (g_strcmp0(path, ":memory:") == 0)
    return FALSE;
  g_autofree char *dir = g_path_get_dirname(path);
  struct statvfs vfs;
  if (statvfs(dir, &vfs) == 0 && (guint64)vfs.f_bavail * vfs.f_frsize < 1024 * 1024)
    return TRUE;
  struct rlimit lim;
  if (getrlimit(RLIMIT_FSIZE, &lim) == 0 && lim.rlim_cur != RLIM_INFINITY) {
    g_autofree char *wal = g_strconcat(path, "-wal", NULL);
    const char *files[] = { path, wal };
    for (gsize i = 0; i < G_N_ELEMENTS(files); i++) {
      GStatBuf st;
      if (g_stat(files[i], &st) == 0 && (guint64)st.st_size + 65536 >= (guint64)lim.rlim_cur)
        return TRUE;
    }
  }
  return FALSE;
}

static gboolean
sql_fail(ArcwiseStore *s, GError **error, const char *what)
{
  int code = sqlite3_extended_errcode(s->db);
  int primary = code & 0xff;
  ArcwiseStoreError e = ARCWISE_STORE_ERROR_FAILED;
  if (primary == SQLITE_NOTADB)
    e = ARCWISE_STORE_ERROR_NOT_LIBRARY;
  else if (primary == SQLITE_CORRUPT)
    e = ARCWISE_STORE_ERROR_CORRUPT;
  else if (primary == SQLITE_BUSY || primary == SQLITE_LOCKED)
    e = ARCWISE_STORE_ERROR_BUSY;
  else if (code == SQLITE_CONSTRAINT_UNIQUE || code == SQLITE_CONSTRAINT_PRIMARYKEY)
    e = ARCWISE_STORE_ERROR_EXISTS;
  else if (primary == SQLITE_CONSTRAINT)
    e = ARCWISE_STORE_ERROR_INVALID;
  /* "disk I/O error" alone does not tell a full disk from a failing one: add what the system
   * said (No space left on device, File too large, ...). A full disk gets words of its own:
   * SQLite says SQLITE_FULL for ENOSPC, but a write stopped by a quota (EDQUOT) or the file-size
   * limit (EFBIG, `ulimit -f`) comes back as a plain write error. */
  int sys = sqlite3_system_errno(s->db);
  if (primary == SQLITE_FULL || (primary == SQLITE_IOERR && out_of_space(s->path, sys))) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FULL,
                "%s: %s: the disk is full%s%s%s; nothing was written and the library is as it "
                "was. Free some space (or move the library) and try again.",
                s->path, what, sys != 0 ? " (" : "", sys != 0 ? g_strerror(sys) : "",
                sys != 0 ? ")" : "");
    return FALSE;
  }
  if ((primary == SQLITE_IOERR || primary == SQLITE_CANTOPEN) && sys != 0)
    g_set_error(error, ARCWISE_STORE_ERROR, e, "%s: %s: %s (%s)", s->path, what,
                sqlite3_errmsg(s->db), g_strerror(sys));
  else
    g_set_error(error, ARCWISE_STORE_ERROR, e, "%s: %s: %s", s->path, what, sqlite3_errmsg(s->db));
  return FALSE;
}

/* The cached statement for a constant SQL text, reset and ready to bind. */
static sqlite3_stmt *
stmt(ArcwiseStore *s, const char *sql, GError **error)
{
  sqlite3_stmt *st = g_hash_table_lookup(s->stmts, sql);
  if (st != NULL) {
    sqlite3_reset(st);
    sqlite3_clear_bindings(st);
    return st;
  }
  if (sqlite3_prepare_v3(s->db, sql, -1, SQLITE_PREPARE_PERSISTENT, &st, NULL) != SQLITE_OK) {
    sql_fail(s, error, "preparing a query");
    return NULL;
  }
  g_hash_table_insert(s->stmts, (gpointer)sql, st);
  return st;
}

/* Runs a statement without result rows to completion. */
static gboolean
step_done(ArcwiseStore *s, sqlite3_stmt *st, GError **error, const char *what)
{
  int rc = sqlite3_step(st);
  gboolean ok = rc == SQLITE_DONE || rc == SQLITE_ROW;
  if (!ok)
    sql_fail(s, error, what);
  sqlite3_reset(st);
  return ok;
}

static void
bind_text(sqlite3_stmt *st, int i, const char *v)
{
  if (v == NULL)
    sqlite3_bind_null(st, i);
  else
    sqlite3_bind_text(st, i, v, -1, SQLITE_TRANSIENT);
}

static void
bind_real(sqlite3_stmt *st, int i, double v)
{
  if (isnan(v))
    sqlite3_bind_null(st, i);
  else
    sqlite3_bind_double(st, i, v);
}

static void
bind_bytes(sqlite3_stmt *st, int i, GBytes *b)
{
  if (b == NULL) {
    sqlite3_bind_null(st, i);
    return;
  }
  gsize len = 0;
  const void *d = g_bytes_get_data(b, &len);
  sqlite3_bind_blob64(st, i, d != NULL ? d : "", len, SQLITE_TRANSIENT);
}

static char *
col_text(sqlite3_stmt *st, int i)
{
  const unsigned char *t = sqlite3_column_text(st, i);
  return t != NULL ? g_strdup((const char *)t) : NULL;
}

static char *
col_text0(sqlite3_stmt *st, int i)
{
  char *t = col_text(st, i);
  return t != NULL ? t : g_strdup("");
}

static double
col_real(sqlite3_stmt *st, int i)
{
  return sqlite3_column_type(st, i) == SQLITE_NULL ? (double)NAN : sqlite3_column_double(st, i);
}

static GBytes *
col_bytes(sqlite3_stmt *st, int i)
{
  if (sqlite3_column_type(st, i) == SQLITE_NULL)
    return NULL;
  const void *d = sqlite3_column_blob(st, i);
  int n = sqlite3_column_bytes(st, i);
  return g_bytes_new(d, (gsize)n);
}

/* Every list and every fetch by id goes through these two: a row function makes the record. */
typedef gpointer (*RowFunc)(sqlite3_stmt *st);

/* All rows of a bound statement, or NULL with an error naming `what`. */
static GPtrArray *
collect_rows(ArcwiseStore *s, sqlite3_stmt *st, RowFunc row, GDestroyNotify free_func,
             const char *what, GError **error)
{
  GPtrArray *out = g_ptr_array_new_with_free_func(free_func);
  int rc;
  while ((rc = sqlite3_step(st)) == SQLITE_ROW)
    g_ptr_array_add(out, row(st));
  sqlite3_reset(st);
  if (rc != SQLITE_DONE) {
    g_ptr_array_unref(out);
    sql_fail(s, error, what);
    return NULL;
  }
  return out;
}

/* The one row of a bound statement; NOT_FOUND ("no KIND ID") when there is none. */
static gpointer
fetch_row(ArcwiseStore *s, sqlite3_stmt *st, RowFunc row, const char *kind, gint64 id,
          GError **error)
{
  gpointer r = NULL;
  int rc = sqlite3_step(st);
  if (rc == SQLITE_ROW)
    r = row(st);
  else if (rc == SQLITE_DONE)
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND,
                "no %s %" G_GINT64_FORMAT, kind, id);
  else {
    g_autofree char *what = g_strdup_printf("reading a %s", kind);
    sql_fail(s, error, what);
  }
  sqlite3_reset(st);
  return r;
}

static gboolean
exec_const(ArcwiseStore *s, const char *sql, GError **error, const char *what)
{
  char *msg = NULL;
  if (sqlite3_exec(s->db, sql, NULL, NULL, &msg) != SQLITE_OK) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED, "%s: %s: %s", s->path,
                what, msg != NULL ? msg : sqlite3_errmsg(s->db));
    sqlite3_free(msg);
    return FALSE;
  }
  return TRUE;
}

/* Transactions: BEGIN IMMEDIATE takes the write lock at once, so a write never fails half way
 * for want of the lock. */
static gboolean
begin_write(ArcwiseStore *s, GError **error)
{
  if (s->readonly) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "%s: the library is open read-only", s->path);
    return FALSE;
  }
  sqlite3_stmt *st = stmt(s, "BEGIN IMMEDIATE", error);
  return st != NULL && step_done(s, st, error, "starting a transaction");
}

static gboolean
begin_read(ArcwiseStore *s, GError **error)
{
  sqlite3_stmt *st = stmt(s, "BEGIN DEFERRED", error);
  return st != NULL && step_done(s, st, error, "starting a read");
}

static gboolean
commit(ArcwiseStore *s, GError **error)
{
  sqlite3_stmt *st = stmt(s, "COMMIT", error);
  return st != NULL && step_done(s, st, error, "committing");
}

static void
rollback(ArcwiseStore *s)
{
  if (!sqlite3_get_autocommit(s->db)) {
    sqlite3_stmt *st = stmt(s, "ROLLBACK", NULL);
    if (st != NULL)
      step_done(s, st, NULL, "rolling back");
  }
}

/* Ends a write transaction: commits when ok, else rolls back. Returns ok && committed. */
static gboolean
finish_write(ArcwiseStore *s, gboolean ok, GError **error)
{
  if (ok && commit(s, error))
    return TRUE;
  rollback(s);
  return FALSE;
}

static char *
now_utc(void)
{
  g_autoptr(GDateTime) now = g_date_time_new_now_utc();
  return g_date_time_format(now, "%Y-%m-%dT%H:%M:%SZ");
}

/* ---- Open, migrate, close ---------------------------------------------------------------- */

char *
arcwise_store_default_path(void)
{
  return g_build_filename(g_get_user_data_dir(), "arcwise", "library.sqlite", NULL);
}

char *
arcwise_store_chosen_path(void)
{
  const char *env = g_getenv("ARCWISE_LIBRARY");
  if (env != NULL && env[0] != '\0')
    return g_strdup(env);
  return arcwise_store_default_path();
}

gboolean
arcwise_store_is_readonly(ArcwiseStore *store)
{
  return store->readonly;
}

const char *
arcwise_store_get_path(ArcwiseStore *store)
{
  return store->path;
}

void
arcwise_store_close(ArcwiseStore *store)
{
  if (store == NULL)
    return;
  g_hash_table_unref(store->stmts); /* finalizes the statements */
  if (store->db != NULL)
    sqlite3_close(store->db);
  g_free(store->path);
  g_free(store);
}

static int
pragma_int(ArcwiseStore *s, const char *sql, int *out, GError **error)
{
  sqlite3_stmt *st = stmt(s, sql, error);
  if (st == NULL)
    return FALSE;
  int rc = sqlite3_step(st);
  if (rc != SQLITE_ROW) {
    sql_fail(s, error, "reading the library header");
    sqlite3_reset(st);
    return FALSE;
  }
  *out = sqlite3_column_int(st, 0);
  sqlite3_reset(st);
  return TRUE;
}

int
arcwise_store_get_schema_version(ArcwiseStore *store)
{
  int v = -1;
  pragma_int(store, "PRAGMA user_version", &v, NULL);
  return v;
}

/* Migrates from the current version to `target`, one transaction per step. */
static gboolean
migrate(ArcwiseStore *s, int target, GError **error)
{
  for (;;) {
    if (!begin_write(s, error))
      return FALSE;
    /* Read the version inside the write lock: another program may have migrated meanwhile. */
    int v = 0;
    if (!pragma_int(s, "PRAGMA user_version", &v, error)) {
      rollback(s);
      return FALSE;
    }
    if (v >= target) {
      rollback(s);
      return TRUE;
    }
    if (!exec_const(s, migrations[v], error, "upgrading the library")) {
      rollback(s);
      return FALSE;
    }
    if (!commit(s, error)) {
      rollback(s);
      return FALSE;
    }
  }
}

static void
finalize_stmt(gpointer st)
{
  sqlite3_finalize(st);
}

gboolean
arcwise_store_migrate_to(ArcwiseStore *store, int version, GError **error)
{
  g_return_val_if_fail(version >= 0 && version <= ARCWISE_STORE_SCHEMA_VERSION, FALSE);
  return migrate(store, version, error);
}

static ArcwiseStore *
open_connection(const char *path, ArcwiseStoreOpenFlags flags, int target_version,
                GError **error)
{
  gboolean readonly = (flags & ARCWISE_STORE_OPEN_READONLY) != 0;
  gboolean memory = g_strcmp0(path, ":memory:") == 0;
  if (!readonly && (flags & ARCWISE_STORE_OPEN_FALLBACK_READONLY)) {
    /* Read-write if we may; a library from a newer program only read-only (and said so). */
    GError *e = NULL;
    ArcwiseStore *s = open_connection(path, flags & ~ARCWISE_STORE_OPEN_FALLBACK_READONLY,
                                      target_version, &e);
    if (s != NULL || !g_error_matches(e, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_TOO_NEW)) {
      if (e != NULL)
        g_propagate_error(error, e);
      return s;
    }
    g_error_free(e);
    return open_connection(path, ARCWISE_STORE_OPEN_READONLY, target_version, error);
  }
  if (!memory && !(flags & ARCWISE_STORE_OPEN_CREATE) && !g_file_test(path, G_FILE_TEST_EXISTS)) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND,
                "%s: no such library (create it with 'arcwise library create')", path);
    return NULL;
  }
  ArcwiseStore *s = g_new0(ArcwiseStore, 1);
  s->path = g_strdup(path);
  s->readonly = readonly;
  s->stmts = g_hash_table_new_full(g_direct_hash, g_direct_equal, NULL,
                                   finalize_stmt);
  /* URI file names are on so that a player export can attach its source read-only
   * ("file:...?mode=ro"); a plain path that happens to begin with "file:" stays a path. */
  g_autofree char *open_path = g_str_has_prefix(path, "file:")
                                 ? g_build_filename(".", path, NULL) : g_strdup(path);
  int oflags = SQLITE_OPEN_NOMUTEX | SQLITE_OPEN_EXRESCODE | SQLITE_OPEN_URI;
  if (readonly)
    oflags |= SQLITE_OPEN_READONLY;
  else
    oflags |= SQLITE_OPEN_READWRITE | ((flags & ARCWISE_STORE_OPEN_CREATE) ? SQLITE_OPEN_CREATE : 0);
  if (sqlite3_open_v2(open_path, &s->db, oflags, NULL) != SQLITE_OK) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED, "%s: cannot open: %s",
                path, s->db != NULL ? sqlite3_errmsg(s->db) : "out of memory");
    arcwise_store_close(s);
    return NULL;
  }
  sqlite3_extended_result_codes(s->db, 1);
  /* Wait for another writer rather than fail at once; imports hold the lock briefly. */
  sqlite3_busy_timeout(s->db, 10000);

  int version = 0, app_id = 0, n_objects = 0;
  if (!pragma_int(s, "PRAGMA user_version", &version, error) ||
      !pragma_int(s, "PRAGMA application_id", &app_id, error)) {
    arcwise_store_close(s);
    return NULL;
  }
  sqlite3_stmt *st = stmt(s, "SELECT count(*) FROM sqlite_schema", error);
  if (st == NULL || sqlite3_step(st) != SQLITE_ROW) {
    if (st != NULL)
      sql_fail(s, error, "reading the schema");
    arcwise_store_close(s);
    return NULL;
  }
  n_objects = sqlite3_column_int(st, 0);
  sqlite3_reset(st);

  if ((app_id != 0 && app_id != ARCWISE_APPLICATION_ID) ||
      (app_id == 0 && (version != 0 || n_objects != 0))) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_LIBRARY,
                "%s: this SQLite file is not an Arcwise library", path);
    arcwise_store_close(s);
    return NULL;
  }
  /* Refuse writing before changing anything, not even the journal mode. Reading is allowed:
   * a newer format adds to the schema, and a read-only connection cannot harm the file; a
   * query that meets a changed table fails with SQLite's message. */
  if (version > ARCWISE_STORE_SCHEMA_VERSION && !readonly) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_TOO_NEW,
                "%s: made by a newer Arcwise (library format %d; this program reads formats up "
                "to %d). Open it with a newer Arcwise, or read-only to look at it; nothing was "
                "changed.",
                path, version, ARCWISE_STORE_SCHEMA_VERSION);
    arcwise_store_close(s);
    return NULL;
  }
  if (!exec_const(s, "PRAGMA foreign_keys = ON", error, "enabling foreign keys")) {
    arcwise_store_close(s);
    return NULL;
  }
  if (readonly) {
    if (version < target_version) {
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                  "%s: library format %d needs upgrading to %d; open it for writing once",
                  path, version, target_version);
      arcwise_store_close(s);
      return NULL;
    }
    return s;
  }
  if (!memory) {
    /* WAL: readers see the last commit while an import writes. Set once; it is persistent. */
    sqlite3_stmt *jm = stmt(s, "PRAGMA journal_mode", error);
    gboolean is_wal = FALSE;
    if (jm != NULL && sqlite3_step(jm) == SQLITE_ROW)
      is_wal = g_ascii_strcasecmp((const char *)sqlite3_column_text(jm, 0), "wal") == 0;
    if (jm != NULL)
      sqlite3_reset(jm);
    if (!is_wal && !exec_const(s, "PRAGMA journal_mode = WAL", error, "switching to WAL")) {
      arcwise_store_close(s);
      return NULL;
    }
  }
  if (version < target_version && !migrate(s, target_version, error)) {
    arcwise_store_close(s);
    return NULL;
  }
  return s;
}

ArcwiseStore *
arcwise_store_open(const char *path, ArcwiseStoreOpenFlags flags, GError **error)
{
  return open_connection(path, flags, ARCWISE_STORE_SCHEMA_VERSION, error);
}

ArcwiseStore *
arcwise_store_open_at_version(const char *path, int version, GError **error)
{
  g_return_val_if_fail(version >= 0 && version <= ARCWISE_STORE_SCHEMA_VERSION, NULL);
  return open_connection(path, ARCWISE_STORE_OPEN_CREATE, version, error);
}

gboolean
arcwise_store_exec_script(ArcwiseStore *store, const char *sql, GError **error)
{
  return exec_const(store, sql, error, "running a script");
}

char *
arcwise_store_schema_dump(ArcwiseStore *store, GError **error)
{
  sqlite3_stmt *st = stmt(store,
                          "SELECT type, name, tbl_name, coalesce(sql, '') FROM sqlite_schema "
                          "ORDER BY type, name", error);
  if (st == NULL)
    return NULL;
  GString *out = g_string_new(NULL);
  int rc;
  while ((rc = sqlite3_step(st)) == SQLITE_ROW)
    g_string_append_printf(out, "%s %s %s\n%s\n", sqlite3_column_text(st, 0),
                           sqlite3_column_text(st, 1), sqlite3_column_text(st, 2),
                           sqlite3_column_text(st, 3));
  sqlite3_reset(st);
  int v = arcwise_store_get_schema_version(store), a = 0;
  pragma_int(store, "PRAGMA application_id", &a, NULL);
  g_string_append_printf(out, "user_version %d application_id %d\n", v, a);
  if (rc != SQLITE_DONE) {
    g_string_free(out, TRUE);
    sql_fail(store, error, "reading the schema");
    return NULL;
  }
  return g_string_free(out, FALSE);
}

/* ---- Check and backup --------------------------------------------------------------------- */

static gboolean check_impl(ArcwiseStore *store, gboolean blobs, GError **error);

gboolean
arcwise_store_check(ArcwiseStore *store, GError **error)
{
  return check_impl(store, TRUE, error);
}

gboolean
arcwise_store_check_database(ArcwiseStore *store, GError **error)
{
  return check_impl(store, FALSE, error);
}

static gboolean
check_impl(ArcwiseStore *store, gboolean blobs, GError **error)
{
  GString *problems = g_string_new(NULL);
  guint n_problems = 0;
  sqlite3_stmt *st = stmt(store, "PRAGMA integrity_check", error);
  if (st == NULL)
    return g_string_free(problems, TRUE), FALSE;
  int rc;
  while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
    const char *msg = (const char *)sqlite3_column_text(st, 0);
    if (g_strcmp0(msg, "ok") != 0 && n_problems++ < 5)
      g_string_append_printf(problems, "%s; ", msg);
  }
  sqlite3_reset(st);
  if (rc != SQLITE_DONE) {
    g_string_free(problems, TRUE);
    return sql_fail(store, error, "checking integrity");
  }
  st = stmt(store, "PRAGMA foreign_key_check", error);
  if (st == NULL)
    return g_string_free(problems, TRUE), FALSE;
  while (sqlite3_step(st) == SQLITE_ROW)
    if (n_problems++ < 5)
      g_string_append_printf(problems, "table %s row %lld refers to a missing %s row; ",
                             sqlite3_column_text(st, 0), (long long)sqlite3_column_int64(st, 1),
                             sqlite3_column_text(st, 2));
  sqlite3_reset(st);

  /* Every recording must decode to its recorded size and hash; every swing has its recording
   * data. This reads every blob once: the check is meant to be thorough, not fast. */
  if (n_problems == 0 && blobs) {
    st = stmt(store,
              "SELECT r.id, r.imu_size, r.imu_sha256, r.depth_size, r.depth_sha256, d.imu, "
              "d.depth FROM recording r LEFT JOIN recording_data d ON d.recording_id = r.id",
              error);
    if (st == NULL)
      return g_string_free(problems, TRUE), FALSE;
    while (sqlite3_step(st) == SQLITE_ROW) {
      gint64 id = sqlite3_column_int64(st, 0);
      for (int k = 0; k < 2; k++) {
        g_autoptr(GBytes) z = col_bytes(st, 5 + k);
        if (z == NULL) {
          if (n_problems++ < 5)
            g_string_append_printf(problems, "recording %" G_GINT64_FORMAT " has no data; ", id);
          continue;
        }
        g_autoptr(GError) local = NULL;
        g_autoptr(GBytes) raw =
          arcwise_codec_decompress(z, (gsize)sqlite3_column_int64(st, 1 + 2 * k), &local);
        char sha[65];
        if (raw != NULL)
          arcwise_codec_sha256_hex(g_bytes_get_data(raw, NULL), g_bytes_get_size(raw), sha);
        if (raw == NULL ||
            strcmp(sha, (const char *)sqlite3_column_text(st, 2 + 2 * k)) != 0) {
          if (n_problems++ < 5)
            g_string_append_printf(problems, "recording %" G_GINT64_FORMAT " %s stream %s; ",
                                   id, k == 0 ? "IMU" : "depth",
                                   raw == NULL ? local->message : "does not match its hash");
        }
      }
    }
    sqlite3_reset(st);
  }
  if (n_problems == 0) {
    g_string_free(problems, TRUE);
    return TRUE;
  }
  if (problems->len >= 2)
    g_string_truncate(problems, problems->len - 2);
  g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT, "%s: %u problem%s: %s",
              store->path, n_problems, n_problems == 1 ? "" : "s", problems->str);
  g_string_free(problems, TRUE);
  return FALSE;
}

/* Copies src into a new file at dest with the online backup API (temporary name, fsync'd by
 * SQLite on close, then renamed). */
static gboolean
backup_to(sqlite3 *src, const char *src_name, const char *dest_path, GError **error)
{
  if (g_file_test(dest_path, G_FILE_TEST_EXISTS)) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_EXISTS,
                "%s: already exists; choose a new file name", dest_path);
    return FALSE;
  }
  g_autofree char *tmp = g_strdup_printf("%s.part-%u", dest_path, (unsigned)g_random_int());
  sqlite3 *dst = NULL;
  if (sqlite3_open_v2(tmp, &dst, SQLITE_OPEN_READWRITE | SQLITE_OPEN_CREATE, NULL) != SQLITE_OK) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED, "%s: cannot create: %s",
                dest_path, dst != NULL ? sqlite3_errmsg(dst) : "out of memory");
    sqlite3_close(dst);
    return FALSE;
  }
  sqlite3_backup *b = sqlite3_backup_init(dst, "main", src, src_name);
  int rc = SQLITE_OK;
  if (b != NULL) {
    /* Steps of 256 pages let writers in between; a change by another connection restarts. */
    do {
      rc = sqlite3_backup_step(b, 256);
      if (rc == SQLITE_BUSY || rc == SQLITE_LOCKED)
        sqlite3_sleep(5);
    } while (rc == SQLITE_OK || rc == SQLITE_BUSY || rc == SQLITE_LOCKED);
    sqlite3_backup_finish(b);
  }
  gboolean ok = b != NULL && rc == SQLITE_DONE && sqlite3_errcode(dst) == SQLITE_OK;
  if (!ok)
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED, "%s: backup failed: %s",
                dest_path, sqlite3_errmsg(dst));
  /* A single file is the point of a backup: fold any WAL into it before closing. */
  if (ok && sqlite3_exec(dst, "PRAGMA journal_mode = DELETE", NULL, NULL, NULL) != SQLITE_OK) {
    /* every FALSE return says why (callers print error->message) */
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED, "%s: backup failed: %s",
                dest_path, sqlite3_errmsg(dst));
    ok = FALSE;
  }
  sqlite3_close(dst);
  if (ok && g_rename(tmp, dest_path) != 0) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED, "%s: %s", dest_path,
                g_strerror(errno));
    ok = FALSE;
  }
  if (!ok)
    g_unlink(tmp);
  return ok;
}

gboolean
arcwise_store_backup(ArcwiseStore *store, const char *dest_path, GError **error)
{
  if (!backup_to(store->db, "main", dest_path, error))
    return FALSE;
  if (!store->readonly) {
    g_autofree char *detail = g_strdup_printf("backup to %s", dest_path);
    /* The backup exists even if the journal line cannot be written; report that separately. */
    return arcwise_store_add_journal(store, "backup", detail, error);
  }
  return TRUE;
}

/* ---- Records -------------------------------------------------------------------------------- */

void
arcwise_player_free(ArcwisePlayer *p)
{
  if (p == NULL)
    return;
  g_free(p->name);
  g_free(p->notes);
  g_free(p);
}

void
arcwise_club_free(ArcwiseClub *c)
{
  if (c == NULL)
    return;
  g_free(c->kind);
  g_free(c);
}

void
arcwise_session_free(ArcwiseSession *s)
{
  if (s == NULL)
    return;
  g_free(s->date);
  g_free(s->place);
  g_free(s->notes);
  g_free(s);
}

void
arcwise_swing_summary_free(ArcwiseSwingSummary *s)
{
  if (s == NULL)
    return;
  g_free(s->player_name);
  g_free(s->session_date);
  g_free(s->club_kind);
  g_free(s->notes);
  g_strfreev(s->tags);
  g_free(s);
}

void
arcwise_swing_event_free(ArcwiseSwingEvent *e)
{
  if (e == NULL)
    return;
  g_free(e->name);
  g_free(e);
}

void
arcwise_swing_metric_free(ArcwiseSwingMetric *m)
{
  if (m == NULL)
    return;
  g_free(m->name);
  g_free(m->unit);
  g_free(m);
}

void
arcwise_swing_analysis_free(ArcwiseSwingAnalysis *a)
{
  if (a == NULL)
    return;
  g_free(a->engine_version);
  g_free(a->settings);
  g_free(a->made_utc);
  g_clear_pointer(&a->events, g_ptr_array_unref);
  g_clear_pointer(&a->metrics, g_ptr_array_unref);
  g_free(a);
}

void
arcwise_swing_detail_free(ArcwiseSwingDetail *d)
{
  if (d == NULL)
    return;
  arcwise_swing_summary_free(d->summary);
#if ARCWISE_HAVE_FUSION
  aw_fused_path_free(d->path);
#endif
  arcwise_swing_analysis_free(d->analysis);
  g_free(d->swing);
  g_free(d);
}

void
arcwise_journal_entry_free(ArcwiseJournalEntry *e)
{
  if (e == NULL)
    return;
  g_free(e->when_utc);
  g_free(e->kind);
  g_free(e->detail);
  g_free(e);
}

double
arcwise_swing_analysis_metric(const ArcwiseSwingAnalysis *a, const char *name)
{
  if (a == NULL || a->metrics == NULL)
    return NAN;
  for (guint i = 0; i < a->metrics->len; i++) {
    const ArcwiseSwingMetric *m = g_ptr_array_index(a->metrics, i);
    if (strcmp(m->name, name) == 0)
      return m->value;
  }
  return NAN;
}

double
arcwise_swing_analysis_event(const ArcwiseSwingAnalysis *a, const char *name)
{
  if (a == NULL || a->events == NULL)
    return NAN;
  for (guint i = 0; i < a->events->len; i++) {
    const ArcwiseSwingEvent *e = g_ptr_array_index(a->events, i);
    if (strcmp(e->name, name) == 0)
      return e->t_s;
  }
  return NAN;
}

/* ---- Players, clubs, sessions ------------------------------------------------------------- */

static gboolean
check_text(const char *what, const char *v, gsize max, gboolean allow_empty, GError **error)
{
  if (v == NULL || (!allow_empty && v[0] == '\0') || strlen(v) > max ||
      !g_utf8_validate(v, -1, NULL)) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "%s must be %sUTF-8 text of at most %" G_GSIZE_FORMAT " bytes", what,
                allow_empty ? "" : "non-empty ", max);
    return FALSE;
  }
  return TRUE;
}

static gboolean
check_date(const char *date, GError **error)
{
  /* YYYY-MM-DD, optionally followed by THH:MM[:SS]; validated by GLib's calendar. */
  if (date == NULL || strlen(date) < 10 || date[4] != '-' || date[7] != '-')
    goto bad;
  for (int i = 0; i < 10; i++)
    if (i != 4 && i != 7 && !g_ascii_isdigit(date[i]))
      goto bad;
  int y = atoi(date), m = atoi(date + 5), d = atoi(date + 8);
  if (!g_date_valid_dmy((GDateDay)d, (GDateMonth)m, (GDateYear)y))
    goto bad;
  if (date[10] != '\0') {
    int hh, mm, n = 0;
    if (date[10] != 'T' || sscanf(date + 11, "%2d:%2d%n", &hh, &mm, &n) != 2 || hh > 23 ||
        mm > 59 || (date[11 + n] != '\0' && !(date[11 + n] == ':' && strlen(date + 12 + n) == 2)))
      goto bad;
  }
  return TRUE;
bad:
  g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
              "'%s' is not a date of the form YYYY-MM-DD or YYYY-MM-DDTHH:MM",
              date != NULL ? date : "");
  return FALSE;
}

static gint64
insert_player(ArcwiseStore *s, const char *name, ArcwiseHandedness hand, AwWrist wrist,
              double height_m, const char *notes, GError **error)
{
  if (!check_text("a player's name", name, 200, FALSE, error))
    return 0;
  if (!isnan(height_m) && !(height_m > 0.5 && height_m < 2.8)) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "height %.2f m is outside 0.5 to 2.8 m", height_m);
    return 0;
  }
  sqlite3_stmt *st = stmt(s, "INSERT INTO player (name, handedness, lead_wrist, height_m, notes) "
                             "VALUES (?1, ?2, ?3, ?4, ?5)", error);
  if (st == NULL)
    return 0;
  bind_text(st, 1, name);
  sqlite3_bind_int(st, 2, (int)hand);
  sqlite3_bind_int(st, 3, (int)wrist);
  bind_real(st, 4, height_m);
  bind_text(st, 5, notes != NULL ? notes : "");
  if (!step_done(s, st, error, "adding a player"))
    return 0;
  return sqlite3_last_insert_rowid(s->db);
}

gint64
arcwise_store_add_player(ArcwiseStore *store, const char *name, ArcwiseHandedness handedness,
                         AwWrist lead_wrist, double height_m, const char *notes, GError **error)
{
  if (!begin_write(store, error))
    return 0;
  gint64 id = insert_player(store, name, handedness, lead_wrist, height_m, notes, error);
  if (id == 0 && error != NULL && *error != NULL && (*error)->code == ARCWISE_STORE_ERROR_EXISTS) {
    g_clear_error(error);
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_EXISTS,
                "a player called '%s' already exists", name);
  }
  return finish_write(store, id != 0, error) ? id : 0;
}

gboolean
arcwise_store_update_player(ArcwiseStore *store, const ArcwisePlayer *p, GError **error)
{
  if (!check_text("a player's name", p->name, 200, FALSE, error) ||
      !check_text("notes", p->notes != NULL ? p->notes : "", 100000, TRUE, error))
    return FALSE;
  if (!begin_write(store, error))
    return FALSE;
  sqlite3_stmt *st = stmt(store, "UPDATE player SET name = ?2, handedness = ?3, lead_wrist = ?4, "
                                 "height_m = ?5, notes = ?6 WHERE id = ?1", error);
  gboolean ok = st != NULL;
  if (ok) {
    sqlite3_bind_int64(st, 1, p->id);
    bind_text(st, 2, p->name);
    sqlite3_bind_int(st, 3, (int)p->handedness);
    sqlite3_bind_int(st, 4, (int)p->lead_wrist);
    bind_real(st, 5, p->height_m);
    bind_text(st, 6, p->notes != NULL ? p->notes : "");
    ok = step_done(store, st, error, "updating a player");
  }
  if (ok && sqlite3_changes(store->db) == 0) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND,
                "no player %" G_GINT64_FORMAT, p->id);
    ok = FALSE;
  }
  return finish_write(store, ok, error);
}

#define PLAYER_COLUMNS                                                                     \
  "SELECT p.id, p.name, p.handedness, p.lead_wrist, p.height_m, p.notes, "                 \
  "(SELECT count(*) FROM session se WHERE se.player_id = p.id), "                          \
  "(SELECT count(*) FROM swing sw JOIN session se ON se.id = sw.session_id "               \
  " WHERE se.player_id = p.id) FROM player p "

static gpointer
player_from_row(sqlite3_stmt *st)
{
  ArcwisePlayer *p = g_new0(ArcwisePlayer, 1);
  p->id = sqlite3_column_int64(st, 0);
  p->name = col_text0(st, 1);
  p->handedness = (ArcwiseHandedness)sqlite3_column_int(st, 2);
  p->lead_wrist = (AwWrist)sqlite3_column_int(st, 3);
  p->height_m = col_real(st, 4);
  p->notes = col_text0(st, 5);
  p->n_sessions = (guint)sqlite3_column_int(st, 6);
  p->n_swings = (guint)sqlite3_column_int(st, 7);
  return p;
}

GPtrArray *
arcwise_store_list_players(ArcwiseStore *store, GError **error)
{
  sqlite3_stmt *st = stmt(store, PLAYER_COLUMNS "ORDER BY p.name", error);
  return st == NULL ? NULL : collect_rows(store, st, player_from_row,
                                          (GDestroyNotify)arcwise_player_free,
                                          "listing players", error);
}

ArcwisePlayer *
arcwise_store_get_player(ArcwiseStore *store, gint64 id, GError **error)
{
  sqlite3_stmt *st = stmt(store, PLAYER_COLUMNS "WHERE p.id = ?1", error);
  if (st == NULL)
    return NULL;
  sqlite3_bind_int64(st, 1, id);
  return fetch_row(store, st, player_from_row, "player", id, error);
}

gint64
arcwise_store_find_player(ArcwiseStore *store, const char *name, GError **error)
{
  sqlite3_stmt *st = stmt(store, "SELECT id FROM player WHERE name = ?1", error);
  if (st == NULL)
    return 0;
  bind_text(st, 1, name);
  gint64 id = 0;
  int rc = sqlite3_step(st);
  if (rc == SQLITE_ROW)
    id = sqlite3_column_int64(st, 0);
  else if (rc != SQLITE_DONE)
    sql_fail(store, error, "finding a player");
  sqlite3_reset(st);
  return id;
}

static gint64
find_or_add_club(ArcwiseStore *s, const char *kind, double length_m, GError **error)
{
  if (!check_text("a club type", kind, 100, FALSE, error))
    return 0;
  if (!isnan(length_m) && !(length_m > 0.2 && length_m < 1.6)) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "club length %.3f m is outside 0.2 to 1.6 m", length_m);
    return 0;
  }
  sqlite3_stmt *st = stmt(s, "SELECT id FROM club WHERE kind = ?1 AND length_m IS ?2", error);
  if (st == NULL)
    return 0;
  bind_text(st, 1, kind);
  bind_real(st, 2, length_m);
  gint64 id = 0;
  int rc = sqlite3_step(st);
  if (rc == SQLITE_ROW)
    id = sqlite3_column_int64(st, 0);
  sqlite3_reset(st);
  if (rc != SQLITE_ROW && rc != SQLITE_DONE) {
    sql_fail(s, error, "finding a club");
    return 0;
  }
  if (id != 0)
    return id;
  st = stmt(s, "INSERT INTO club (kind, length_m) VALUES (?1, ?2)", error);
  if (st == NULL)
    return 0;
  bind_text(st, 1, kind);
  bind_real(st, 2, length_m);
  if (!step_done(s, st, error, "adding a club"))
    return 0;
  return sqlite3_last_insert_rowid(s->db);
}

gint64
arcwise_store_ensure_club(ArcwiseStore *store, const char *kind, double length_m, GError **error)
{
  if (!begin_write(store, error))
    return 0;
  gint64 id = find_or_add_club(store, kind, length_m, error);
  return finish_write(store, id != 0, error) ? id : 0;
}

static gpointer
club_from_row(sqlite3_stmt *st)
{
  ArcwiseClub *c = g_new0(ArcwiseClub, 1);
  c->id = sqlite3_column_int64(st, 0);
  c->kind = col_text0(st, 1);
  c->length_m = col_real(st, 2);
  return c;
}

GPtrArray *
arcwise_store_list_clubs(ArcwiseStore *store, GError **error)
{
  sqlite3_stmt *st = stmt(store, "SELECT id, kind, length_m FROM club ORDER BY kind, length_m",
                          error);
  return st == NULL ? NULL : collect_rows(store, st, club_from_row,
                                          (GDestroyNotify)arcwise_club_free, "listing clubs",
                                          error);
}

static gint64
find_or_add_session(ArcwiseStore *s, gint64 player_id, const char *date, const char *place,
                    const char *notes, gboolean always_new, GError **error)
{
  if (!check_date(date, error) || !check_text("a place", place, 200, TRUE, error))
    return 0;
  sqlite3_stmt *st;
  if (!always_new) {
    st = stmt(s, "SELECT id FROM session WHERE player_id = ?1 AND date = ?2 AND place = ?3 "
                 "ORDER BY id LIMIT 1", error);
    if (st == NULL)
      return 0;
    sqlite3_bind_int64(st, 1, player_id);
    bind_text(st, 2, date);
    bind_text(st, 3, place);
    gint64 id = 0;
    int rc = sqlite3_step(st);
    if (rc == SQLITE_ROW)
      id = sqlite3_column_int64(st, 0);
    sqlite3_reset(st);
    if (rc != SQLITE_ROW && rc != SQLITE_DONE) {
      sql_fail(s, error, "finding a session");
      return 0;
    }
    if (id != 0)
      return id;
  }
  st = stmt(s, "INSERT INTO session (player_id, date, place, notes) VALUES (?1, ?2, ?3, ?4)",
            error);
  if (st == NULL)
    return 0;
  sqlite3_bind_int64(st, 1, player_id);
  bind_text(st, 2, date);
  bind_text(st, 3, place);
  bind_text(st, 4, notes != NULL ? notes : "");
  if (!step_done(s, st, error, "adding a session"))
    return 0;
  return sqlite3_last_insert_rowid(s->db);
}

gint64
arcwise_store_add_session(ArcwiseStore *store, gint64 player_id, const char *date,
                          const char *place, const char *notes, GError **error)
{
  if (!begin_write(store, error))
    return 0;
  gint64 id = find_or_add_session(store, player_id, date, place != NULL ? place : "", notes,
                                  TRUE, error);
  return finish_write(store, id != 0, error) ? id : 0;
}

#define SESSION_COLUMNS                                                                    \
  "SELECT se.id, se.player_id, se.date, se.place, se.notes, "                              \
  "(SELECT count(*) FROM swing sw WHERE sw.session_id = se.id) FROM session se "

static gpointer
session_from_row(sqlite3_stmt *st)
{
  ArcwiseSession *s = g_new0(ArcwiseSession, 1);
  s->id = sqlite3_column_int64(st, 0);
  s->player_id = sqlite3_column_int64(st, 1);
  s->date = col_text0(st, 2);
  s->place = col_text0(st, 3);
  s->notes = col_text0(st, 4);
  s->n_swings = (guint)sqlite3_column_int(st, 5);
  return s;
}

GPtrArray *
arcwise_store_list_sessions(ArcwiseStore *store, gint64 player_id, GError **error)
{
  sqlite3_stmt *st = stmt(store, SESSION_COLUMNS "WHERE ?1 = 0 OR se.player_id = ?1 "
                                 "ORDER BY se.date DESC, se.id DESC", error);
  if (st == NULL)
    return NULL;
  sqlite3_bind_int64(st, 1, player_id);
  return collect_rows(store, st, session_from_row, (GDestroyNotify)arcwise_session_free,
                      "listing sessions", error);
}

ArcwiseSession *
arcwise_store_get_session(ArcwiseStore *store, gint64 id, GError **error)
{
  sqlite3_stmt *st = stmt(store, SESSION_COLUMNS "WHERE se.id = ?1", error);
  if (st == NULL)
    return NULL;
  sqlite3_bind_int64(st, 1, id);
  return fetch_row(store, st, session_from_row, "session", id, error);
}

/* ---- Swings --------------------------------------------------------------------------------- */

void
arcwise_swing_filter_init(ArcwiseSwingFilter *f)
{
  memset(f, 0, sizeof *f);
  f->metric_min = NAN;
  f->metric_max = NAN;
}

/* One statement serves every combination of filters: an absent filter binds NULL or 0 and its
 * term is true. The current engine version and settings hash are bound as ?13 and ?14. */
#define SWING_COLUMNS                                                                      \
  "SELECT s.id, s.session_id, se.player_id, s.club_id, s.recording_id, p.name, se.date, "   \
  "c.kind, s.index_in_recording, s.span_start_s, s.span_end_s, s.rating, s.is_reference, "  \
  "s.notes, (SELECT group_concat(t.tag, char(31)) FROM swing_tag t WHERE t.swing_id = s.id), " \
  "r.swing_id IS NOT NULL AND r.analysed, "                                                 \
  "r.engine_version IS ?13 AND r.settings_sha256 IS ?14, "                                  \
  "r.tempo_ratio, r.backswing_s, r.downswing_s, r.peak_hand_speed_m_s, "                   \
  "r.club_speed_impact_m_s, mi.value, mp.value, mq.value "                                  \
  "FROM swing s JOIN session se ON se.id = s.session_id JOIN player p ON p.id = se.player_id " \
  "LEFT JOIN club c ON c.id = s.club_id LEFT JOIN swing_result r ON r.swing_id = s.id "       \
  /* Three more numbers for the browser's rows and filters, each one primary-key lookup. */     \
  "LEFT JOIN swing_metric mi ON mi.swing_id = s.id AND mi.name = 'hand_speed_impact_mps' "     \
  "LEFT JOIN swing_metric mp ON mp.swing_id = s.id AND mp.name = 'practice' "                  \
  "LEFT JOIN swing_metric mq ON mq.swing_id = s.id AND mq.name = 'quality_notes' "

static const char list_swings_sql[] =
  SWING_COLUMNS
  "WHERE (?1 = 0 OR se.player_id = ?1) "
  "AND (?2 IS NULL OR p.name = ?2) "
  "AND (?3 = 0 OR s.session_id = ?3) "
  "AND (?4 IS NULL OR se.date >= ?4) "
  "AND (?5 IS NULL OR substr(se.date, 1, length(?5)) <= ?5) "
  "AND (?6 IS NULL OR c.kind = ?6) "
  /* Uncorrelated IN: each runs once, through its index, not once per row. */
  "AND (?7 IS NULL OR s.id IN (SELECT t.swing_id FROM swing_tag t WHERE t.tag = ?7)) "
  "AND (?8 IS NULL OR s.id IN (SELECT m.swing_id FROM swing_metric m WHERE m.name = ?8 "
  "     AND m.value >= coalesce(?9, -1e308) AND m.value <= coalesce(?10, 1e308))) "
  "AND (?11 = 0 OR s.is_reference = 1) "
  "ORDER BY se.date DESC, s.session_id DESC, s.recording_id, s.index_in_recording "
  "LIMIT ?12";

static const char get_swing_sql[] = SWING_COLUMNS "WHERE s.id = ?1";

static int
cmp_str(gconstpointer a, gconstpointer b)
{
  return strcmp(*(char *const *)a, *(char *const *)b);
}

static gpointer
swing_from_row(sqlite3_stmt *st)
{
  ArcwiseSwingSummary *s = g_new0(ArcwiseSwingSummary, 1);
  s->id = sqlite3_column_int64(st, 0);
  s->session_id = sqlite3_column_int64(st, 1);
  s->player_id = sqlite3_column_int64(st, 2);
  s->club_id = sqlite3_column_int64(st, 3);
  s->recording_id = sqlite3_column_int64(st, 4);
  s->player_name = col_text0(st, 5);
  s->session_date = col_text0(st, 6);
  s->club_kind = col_text(st, 7);
  s->index_in_recording = (guint)sqlite3_column_int(st, 8);
  s->span_start_s = col_real(st, 9);
  s->span_end_s = col_real(st, 10);
  s->rating = sqlite3_column_int(st, 11);
  s->is_reference = sqlite3_column_int(st, 12) != 0;
  s->notes = col_text0(st, 13);
  const char *tags = (const char *)sqlite3_column_text(st, 14);
  s->tags = tags != NULL ? g_strsplit(tags, "\x1f", -1) : g_new0(char *, 1);
  gsize nt = g_strv_length(s->tags);
  if (nt > 1)
    qsort(s->tags, nt, sizeof(char *), cmp_str);
  s->analysed = sqlite3_column_int(st, 15) != 0;
  s->analysis_current = s->analysed && sqlite3_column_int(st, 16) != 0;
  s->tempo_ratio = col_real(st, 17);
  s->backswing_s = col_real(st, 18);
  s->downswing_s = col_real(st, 19);
  s->peak_hand_speed_m_s = col_real(st, 20);
  s->club_speed_impact_m_s = col_real(st, 21);
  s->hand_speed_impact_m_s = col_real(st, 22);
  s->practice = sqlite3_column_type(st, 23) == SQLITE_NULL ? -1 : sqlite3_column_double(st, 23) != 0;
  s->quality_notes = sqlite3_column_type(st, 24) == SQLITE_NULL ? -1 : (int)sqlite3_column_int(st, 24);
  return s;
}

static void
bind_current_engine(sqlite3_stmt *st)
{
  static gsize once = 0;
  static char settings_sha[65];
  if (g_once_init_enter(&once)) {
    g_autofree char *settings = arcwise_store_current_settings();
    arcwise_codec_sha256_hex(settings, strlen(settings), settings_sha);
    g_once_init_leave(&once, 1);
  }
  sqlite3_bind_text(st, 13, ARCWISE_VERSION, -1, SQLITE_STATIC);
  sqlite3_bind_text(st, 14, settings_sha, -1, SQLITE_STATIC);
}

GPtrArray *
arcwise_store_list_swings(ArcwiseStore *store, const ArcwiseSwingFilter *f, GError **error)
{
  ArcwiseSwingFilter none;
  if (f == NULL) {
    arcwise_swing_filter_init(&none);
    f = &none;
  }
  sqlite3_stmt *st = stmt(store, list_swings_sql, error);
  if (st == NULL)
    return NULL;
  sqlite3_bind_int64(st, 1, f->player_id);
  bind_text(st, 2, f->player_name);
  sqlite3_bind_int64(st, 3, f->session_id);
  bind_text(st, 4, f->date_from);
  bind_text(st, 5, f->date_to);
  bind_text(st, 6, f->club_kind);
  bind_text(st, 7, f->tag);
  bind_text(st, 8, f->metric);
  bind_real(st, 9, f->metric_min);
  bind_real(st, 10, f->metric_max);
  sqlite3_bind_int(st, 11, f->reference_only ? 1 : 0);
  sqlite3_bind_int64(st, 12, f->limit > 0 ? (gint64)f->limit : -1);
  bind_current_engine(st);
  return collect_rows(store, st, swing_from_row, (GDestroyNotify)arcwise_swing_summary_free,
                      "listing swings", error);
}

ArcwiseSwingSummary *
arcwise_store_get_swing(ArcwiseStore *store, gint64 swing_id, GError **error)
{
  sqlite3_stmt *st = stmt(store, get_swing_sql, error);
  if (st == NULL)
    return NULL;
  sqlite3_bind_int64(st, 1, swing_id);
  bind_current_engine(st);
  return fetch_row(store, st, swing_from_row, "swing", swing_id, error);
}

ArcwiseSwingDetail *
arcwise_store_load_swing(ArcwiseStore *store, gint64 swing_id, GError **error)
{
  /* One read transaction: summary, path and analysis come from the same commit. */
  if (!begin_read(store, error))
    return NULL;
  ArcwiseSwingDetail *d = g_new0(ArcwiseSwingDetail, 1);
  gboolean ok = (d->summary = arcwise_store_get_swing(store, swing_id, error)) != NULL;
  sqlite3_stmt *st = NULL;
  if (ok)
    ok = (st = stmt(store, "SELECT r.engine_version, rs.settings, r.made_utc, r.analysed, d.path, "
                           "d.swing "
                           "FROM swing_result r LEFT JOIN swing_result_data d "
                           "ON d.swing_id = r.swing_id LEFT JOIN result_settings rs "
                           "ON rs.settings_sha256 = r.settings_sha256 WHERE r.swing_id = ?1", error)) != NULL;
  gboolean analysed = FALSE;
  if (ok) {
    sqlite3_bind_int64(st, 1, swing_id);
    int rc = sqlite3_step(st);
    if (rc == SQLITE_ROW) {
      analysed = sqlite3_column_int(st, 3) != 0;
      g_autoptr(GBytes) blob = col_bytes(st, 4);
      if (blob != NULL)
        ok = (d->path = arcwise_codec_decode_path(blob, error)) != NULL;
      if (ok && analysed && sqlite3_column_type(st, 5) != SQLITE_NULL) {
        d->swing = arcwise_codec_swing_from_text((const char *)sqlite3_column_text(st, 5));
        if (d->path != NULL)
          d->swing->i_end = d->path->n;
      }
      if (ok && analysed) {
        d->analysis = g_new0(ArcwiseSwingAnalysis, 1);
        d->analysis->engine_version = col_text0(st, 0);
        d->analysis->settings = col_text0(st, 1);
        d->analysis->made_utc = col_text0(st, 2);
        d->analysis->events =
          g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_event_free);
        d->analysis->metrics =
          g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_metric_free);
      }
    } else if (rc != SQLITE_DONE) {
      ok = sql_fail(store, error, "reading a swing's result");
    }
    sqlite3_reset(st);
  }
  if (ok && d->analysis != NULL) {
    ok = (st = stmt(store, "SELECT name, t_s FROM swing_event WHERE swing_id = ?1 ORDER BY t_s",
                    error)) != NULL;
    if (ok) {
      sqlite3_bind_int64(st, 1, swing_id);
      while (sqlite3_step(st) == SQLITE_ROW) {
        ArcwiseSwingEvent *e = g_new0(ArcwiseSwingEvent, 1);
        e->name = col_text0(st, 0);
        e->t_s = col_real(st, 1);
        g_ptr_array_add(d->analysis->events, e);
      }
      sqlite3_reset(st);
    }
    if (ok)
      ok = (st = stmt(store, "SELECT name, unit, value FROM swing_metric WHERE swing_id = ?1 "
                             "ORDER BY name", error)) != NULL;
    if (ok) {
      sqlite3_bind_int64(st, 1, swing_id);
      while (sqlite3_step(st) == SQLITE_ROW) {
        ArcwiseSwingMetric *m = g_new0(ArcwiseSwingMetric, 1);
        m->name = col_text0(st, 0);
        m->unit = col_text0(st, 1);
        m->value = col_real(st, 2);
        g_ptr_array_add(d->analysis->metrics, m);
      }
      sqlite3_reset(st);
    }
  }
  rollback(store); /* ends the read */
  if (!ok) {
    arcwise_swing_detail_free(d);
    return NULL;
  }
  return d;
}

gboolean
arcwise_store_load_recording(ArcwiseStore *store, gint64 recording_id, GBytes **imu_bytes,
                             GBytes **depth_bytes, char **imu_name, char **depth_name,
                             GError **error)
{
  sqlite3_stmt *st = stmt(store,
                          "SELECT r.imu_name, r.imu_size, r.imu_sha256, r.depth_name, "
                          "r.depth_size, r.depth_sha256, d.imu, d.depth FROM recording r "
                          "JOIN recording_data d ON d.recording_id = r.id WHERE r.id = ?1",
                          error);
  if (st == NULL)
    return FALSE;
  sqlite3_bind_int64(st, 1, recording_id);
  int rc = sqlite3_step(st);
  if (rc != SQLITE_ROW) {
    if (rc == SQLITE_DONE)
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND,
                  "no recording %" G_GINT64_FORMAT, recording_id);
    else
      sql_fail(store, error, "reading a recording");
    sqlite3_reset(st);
    return FALSE;
  }
  GBytes *out[2] = { NULL, NULL };
  gboolean ok = TRUE;
  for (int k = 0; k < 2 && ok; k++) {
    g_autoptr(GBytes) z = col_bytes(st, 6 + k);
    gsize size = (gsize)sqlite3_column_int64(st, 1 + 3 * k);
    ok = z != NULL && (out[k] = arcwise_codec_decompress(z, size, error)) != NULL;
    if (ok) {
      /* The stored hash proves the bytes are the ones imported. */
      char sha[65];
      arcwise_codec_sha256_hex(g_bytes_get_data(out[k], NULL), size, sha);
      if (strcmp(sha, (const char *)sqlite3_column_text(st, 2 + 3 * k)) != 0) {
        g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                    "recording %" G_GINT64_FORMAT ": stored stream does not match its hash",
                    recording_id);
        ok = FALSE;
      }
    } else if (z == NULL) {
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                  "recording %" G_GINT64_FORMAT " has no data", recording_id);
    }
  }
  if (ok) {
    if (imu_name != NULL)
      *imu_name = col_text0(st, 0);
    if (depth_name != NULL)
      *depth_name = col_text0(st, 3);
  }
  sqlite3_reset(st);
  if (!ok) {
    g_clear_pointer(&out[0], g_bytes_unref);
    g_clear_pointer(&out[1], g_bytes_unref);
    return FALSE;
  }
  if (imu_bytes != NULL)
    *imu_bytes = out[0];
  else
    g_bytes_unref(out[0]);
  if (depth_bytes != NULL)
    *depth_bytes = out[1];
  else
    g_bytes_unref(out[1]);
  return TRUE;
}

static gboolean
update_swing(ArcwiseStore *s, const char *sql, gint64 swing_id, int ival, const char *tval,
             GError **error)
{
  if (!begin_write(s, error))
    return FALSE;
  sqlite3_stmt *st = stmt(s, sql, error);
  gboolean ok = st != NULL;
  if (ok) {
    sqlite3_bind_int64(st, 1, swing_id);
    if (tval != NULL)
      bind_text(st, 2, tval);
    else
      sqlite3_bind_int(st, 2, ival);
    ok = step_done(s, st, error, "updating a swing");
  }
  if (ok && sqlite3_changes(s->db) == 0) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND,
                "no swing %" G_GINT64_FORMAT, swing_id);
    ok = FALSE;
  }
  return finish_write(s, ok, error);
}

gboolean
arcwise_store_set_swing_notes(ArcwiseStore *store, gint64 swing_id, const char *notes,
                              GError **error)
{
  if (!check_text("notes", notes != NULL ? notes : "", 100000, TRUE, error))
    return FALSE;
  return update_swing(store, "UPDATE swing SET notes = ?2 WHERE id = ?1", swing_id, 0,
                      notes != NULL ? notes : "", error);
}

gboolean
arcwise_store_set_swing_rating(ArcwiseStore *store, gint64 swing_id, int rating, GError **error)
{
  if (rating < 0 || rating > 5) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "a rating is 1 to 5 (0 clears it), not %d", rating);
    return FALSE;
  }
  return update_swing(store, "UPDATE swing SET rating = ?2 WHERE id = ?1", swing_id, rating,
                      NULL, error);
}

gboolean
arcwise_store_set_swing_reference(ArcwiseStore *store, gint64 swing_id, gboolean is_reference,
                                  GError **error)
{
  return update_swing(store, "UPDATE swing SET is_reference = ?2 WHERE id = ?1", swing_id,
                      is_reference ? 1 : 0, NULL, error);
}

static gboolean
check_tag(const char *tag, GError **error)
{
  gboolean ok = tag != NULL && tag[0] != '\0' && strlen(tag) <= 64 &&
                g_utf8_validate(tag, -1, NULL);
  for (const char *p = tag; ok && *p != '\0'; p++)
    if ((unsigned char)*p < 0x20 || *p == ',')
      ok = FALSE;
  if (!ok)
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "a tag is 1 to 64 bytes of text without commas or control characters");
  return ok;
}

static gboolean
insert_tags(ArcwiseStore *s, gint64 swing_id, const char *const *tags, GError **error)
{
  for (const char *const *t = tags; t != NULL && *t != NULL; t++) {
    if (!check_tag(*t, error))
      return FALSE;
    sqlite3_stmt *st = stmt(s, "INSERT OR IGNORE INTO swing_tag (swing_id, tag) VALUES (?1, ?2)",
                            error);
    if (st == NULL)
      return FALSE;
    sqlite3_bind_int64(st, 1, swing_id);
    bind_text(st, 2, *t);
    if (!step_done(s, st, error, "tagging a swing"))
      return FALSE;
  }
  return TRUE;
}

gboolean
arcwise_store_set_swing_tags(ArcwiseStore *store, gint64 swing_id, const char *const *tags,
                             GError **error)
{
  for (const char *const *t = tags; t != NULL && *t != NULL; t++)
    if (!check_tag(*t, error))
      return FALSE;
  if (!begin_write(store, error))
    return FALSE;
  sqlite3_stmt *st = stmt(store, "SELECT 1 FROM swing WHERE id = ?1", error);
  gboolean ok = st != NULL;
  if (ok) {
    sqlite3_bind_int64(st, 1, swing_id);
    if (sqlite3_step(st) != SQLITE_ROW) {
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND,
                  "no swing %" G_GINT64_FORMAT, swing_id);
      ok = FALSE;
    }
    sqlite3_reset(st);
  }
  if (ok)
    ok = (st = stmt(store, "DELETE FROM swing_tag WHERE swing_id = ?1", error)) != NULL;
  if (ok) {
    sqlite3_bind_int64(st, 1, swing_id);
    ok = step_done(store, st, error, "clearing tags");
  }
  if (ok)
    ok = insert_tags(store, swing_id, tags, error);
  return finish_write(store, ok, error);
}

/* ---- Journal ---------------------------------------------------------------------------------- */

static gboolean
insert_journal(ArcwiseStore *s, const char *kind, const char *detail, GError **error)
{
  sqlite3_stmt *st = stmt(s, "INSERT INTO journal (when_utc, kind, detail) VALUES (?1, ?2, ?3)",
                          error);
  if (st == NULL)
    return FALSE;
  g_autofree char *now = now_utc();
  bind_text(st, 1, now);
  bind_text(st, 2, kind);
  bind_text(st, 3, detail);
  return step_done(s, st, error, "writing the journal");
}

gboolean
arcwise_store_add_journal(ArcwiseStore *store, const char *kind, const char *detail,
                          GError **error)
{
  if (!begin_write(store, error))
    return FALSE;
  return finish_write(store, insert_journal(store, kind, detail, error), error);
}

static gpointer
journal_from_row(sqlite3_stmt *st)
{
  ArcwiseJournalEntry *e = g_new0(ArcwiseJournalEntry, 1);
  e->id = sqlite3_column_int64(st, 0);
  e->when_utc = col_text0(st, 1);
  e->kind = col_text0(st, 2);
  e->detail = col_text0(st, 3);
  return e;
}

GPtrArray *
arcwise_store_list_journal(ArcwiseStore *store, GError **error)
{
  sqlite3_stmt *st = stmt(store, "SELECT id, when_utc, kind, detail FROM journal ORDER BY id",
                          error);
  return st == NULL ? NULL : collect_rows(store, st, journal_from_row,
                                          (GDestroyNotify)arcwise_journal_entry_free,
                                          "reading the journal", error);
}

/* ---- Import: the writer ------------------------------------------------------------------ */

gboolean
arcwise_store_find_recording(ArcwiseStore *store, const char *content_sha256, gint64 *id_out,
                             GError **error)
{
  *id_out = 0;
  sqlite3_stmt *st = stmt(store, "SELECT id FROM recording WHERE content_sha256 = ?1", error);
  if (st == NULL)
    return FALSE;
  bind_text(st, 1, content_sha256);
  int rc = sqlite3_step(st);
  if (rc == SQLITE_ROW)
    *id_out = sqlite3_column_int64(st, 0);
  sqlite3_reset(st);
  if (rc != SQLITE_ROW && rc != SQLITE_DONE)
    return sql_fail(store, error, "looking for a recording");
  return TRUE;
}

/* Writes the cached result rows of one swing (after any old ones were deleted). */
static gboolean
insert_result(ArcwiseStore *s, gint64 swing_id, const ArcwisePreparedRecording *r,
              const ArcwisePreparedSwing *ps, const char *made_utc, GError **error)
{
  sqlite3_stmt *st = stmt(s, "INSERT OR IGNORE INTO result_settings (settings_sha256, settings) "
                             "VALUES (?1, ?2)", error);
  if (st == NULL)
    return FALSE;
  bind_text(st, 1, r->settings_sha256);
  bind_text(st, 2, r->settings != NULL ? r->settings : "");
  if (!step_done(s, st, error, "storing settings"))
    return FALSE;
  st = stmt(s, "INSERT INTO swing_result (swing_id, engine_version, settings_sha256, made_utc, "
               "analysed, tempo_ratio, backswing_s, downswing_s, peak_hand_speed_m_s, "
               "club_speed_impact_m_s) VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10)", error);
  if (st == NULL)
    return FALSE;
  gboolean analysed = ps->metrics != NULL && ps->events != NULL;
  sqlite3_bind_int64(st, 1, swing_id);
  bind_text(st, 2, r->engine_version != NULL ? r->engine_version : ARCWISE_VERSION);
  bind_text(st, 3, r->settings_sha256);
  bind_text(st, 4, made_utc);
  sqlite3_bind_int(st, 5, analysed ? 1 : 0);
  static const char *const keys[5] = {
    ARCWISE_METRIC_TEMPO_RATIO, ARCWISE_METRIC_BACKSWING_S, ARCWISE_METRIC_DOWNSWING_S,
    ARCWISE_METRIC_PEAK_HAND_SPEED, ARCWISE_METRIC_CLUB_SPEED,
  };
  for (int k = 0; k < 5; k++) {
    double v = NAN;
    for (guint i = 0; ps->metrics != NULL && i < ps->metrics->len; i++) {
      const ArcwiseSwingMetric *m = g_ptr_array_index(ps->metrics, i);
      if (strcmp(m->name, keys[k]) == 0)
        v = m->value;
    }
    bind_real(st, 6 + k, isfinite(v) ? v : (double)NAN);
  }
  if (!step_done(s, st, error, "storing a result"))
    return FALSE;
  st = stmt(s, "INSERT INTO swing_result_data (swing_id, path, swing) VALUES (?1, ?2, ?3)",
            error);
  if (st == NULL)
    return FALSE;
  sqlite3_bind_int64(st, 1, swing_id);
  bind_bytes(st, 2, ps->path_blob);
  bind_text(st, 3, ps->swing_text);
  if (!step_done(s, st, error, "storing a fused path"))
    return FALSE;
  for (guint i = 0; ps->events != NULL && i < ps->events->len; i++) {
    const ArcwiseSwingEvent *e = g_ptr_array_index(ps->events, i);
    if (isnan(e->t_s))
      continue;
    st = stmt(s, "INSERT INTO swing_event (swing_id, name, t_s) VALUES (?1, ?2, ?3)", error);
    if (st == NULL)
      return FALSE;
    sqlite3_bind_int64(st, 1, swing_id);
    bind_text(st, 2, e->name);
    sqlite3_bind_double(st, 3, e->t_s);
    if (!step_done(s, st, error, "storing an event"))
      return FALSE;
  }
  for (guint i = 0; ps->metrics != NULL && i < ps->metrics->len; i++) {
    const ArcwiseSwingMetric *m = g_ptr_array_index(ps->metrics, i);
    if (!isfinite(m->value))
      continue; /* "not measurable" is the absence of a row */
    st = stmt(s, "INSERT INTO swing_metric (swing_id, name, unit, value) VALUES (?1, ?2, ?3, ?4)",
              error);
    if (st == NULL)
      return FALSE;
    sqlite3_bind_int64(st, 1, swing_id);
    bind_text(st, 2, m->name);
    bind_text(st, 3, m->unit != NULL ? m->unit : "");
    sqlite3_bind_double(st, 4, m->value);
    if (!step_done(s, st, error, "storing a metric"))
      return FALSE;
  }
  return TRUE;
}

static gint64
insert_recording(ArcwiseStore *s, const ArcwisePreparedRecording *r, const char *now,
                 GError **error)
{
  sqlite3_stmt *st = stmt(s, "INSERT INTO recording (content_sha256, imu_name, imu_size, "
                             "imu_sha256, depth_name, depth_size, depth_sha256, imported_utc) "
                             "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)", error);
  if (st == NULL)
    return 0;
  bind_text(st, 1, r->content_sha256);
  bind_text(st, 2, r->imu_name);
  sqlite3_bind_int64(st, 3, (gint64)r->imu_size);
  bind_text(st, 4, r->imu_sha256);
  bind_text(st, 5, r->depth_name);
  sqlite3_bind_int64(st, 6, (gint64)r->depth_size);
  bind_text(st, 7, r->depth_sha256);
  bind_text(st, 8, now);
  if (!step_done(s, st, error, "storing a recording"))
    return 0;
  gint64 id = sqlite3_last_insert_rowid(s->db);
  st = stmt(s, "INSERT INTO recording_data (recording_id, encoding, imu, depth) "
               "VALUES (?1, 'zlib', ?2, ?3)", error);
  if (st == NULL)
    return 0;
  sqlite3_bind_int64(st, 1, id);
  bind_bytes(st, 2, r->imu_z);
  bind_bytes(st, 3, r->depth_z);
  if (!step_done(s, st, error, "storing a recording's streams"))
    return 0;
  return id;
}

gboolean
arcwise_store_commit_import(ArcwiseStore *store, const ArcwiseImportTarget *t,
                            GPtrArray *prepared, const char *journal_detail,
                            ArcwiseImportResult *result, GError **error)
{
  if (!begin_write(store, error))
    return FALSE;
  g_autofree char *now = now_utc();
  g_autofree char *today = NULL;
  gboolean ok = TRUE;
  gint64 player_id = 0;
  g_autofree char *player_name = NULL;
  if (t->player_id != 0) {
    /* Looked up again inside the transaction: the player may have been removed meanwhile. */
    ArcwisePlayer *p = arcwise_store_get_player(store, t->player_id, error);
    ok = p != NULL;
    if (ok) {
      player_id = p->id;
      player_name = g_strdup(p->name);
      arcwise_player_free(p);
    }
  } else {
    player_name = g_strdup(t->player_name);
    player_id = arcwise_store_find_player(store, t->player_name, error);
    if (player_id == 0 && error != NULL && *error != NULL)
      ok = FALSE;
    if (ok && player_id == 0)
      ok = (player_id = insert_player(store, t->player_name, t->handedness, t->lead_wrist,
                                      t->height_m, "", error)) != 0;
  }
  const char *date = t->session_date;
  if (date == NULL) {
    g_autoptr(GDateTime) local = g_date_time_new_now_local();
    date = today = g_date_time_format(local, "%Y-%m-%d");
  }
  gint64 session_id = 0, club_id = 0;
  if (ok)
    ok = (session_id = find_or_add_session(store, player_id, date,
                                           t->session_place != NULL ? t->session_place : "", "",
                                           FALSE, error)) != 0;
  if (ok && t->club_kind != NULL)
    ok = (club_id = find_or_add_club(store, t->club_kind, t->club_length_m, error)) != 0;

  guint rec_added = 0, swings_added = 0;
  for (guint i = 0; ok && i < prepared->len; i++) {
    const ArcwisePreparedRecording *r = g_ptr_array_index(prepared, i);
    gint64 existing = 0;
    ok = arcwise_store_find_recording(store, r->content_sha256, &existing, error);
    if (!ok)
      break;
    if (existing != 0) {
      /* Another import stored it since the caller looked: not an error, not a duplicate. */
      result->recordings_already_present++;
      continue;
    }
    gint64 rec_id = insert_recording(store, r, now, error);
    ok = rec_id != 0;
    for (guint k = 0; ok && k < r->swings->len; k++) {
      const ArcwisePreparedSwing *ps = g_ptr_array_index(r->swings, k);
      sqlite3_stmt *st = stmt(store, "INSERT INTO swing (session_id, recording_id, club_id, "
                                     "index_in_recording, span_start_s, span_end_s) "
                                     "VALUES (?1, ?2, ?3, ?4, ?5, ?6)", error);
      ok = st != NULL;
      if (!ok)
        break;
      sqlite3_bind_int64(st, 1, session_id);
      sqlite3_bind_int64(st, 2, rec_id);
      if (club_id != 0)
        sqlite3_bind_int64(st, 3, club_id);
      else
        sqlite3_bind_null(st, 3);
      sqlite3_bind_int(st, 4, (int)ps->index);
      sqlite3_bind_double(st, 5, ps->span_start_s);
      sqlite3_bind_double(st, 6, ps->span_end_s);
      ok = step_done(store, st, error, "storing a swing");
      if (!ok)
        break;
      gint64 swing_id = sqlite3_last_insert_rowid(store->db);
      if (ps->path_blob != NULL || ps->metrics != NULL)
        ok = insert_result(store, swing_id, r, ps, now, error);
      if (ok) {
        g_array_append_val(result->swing_ids, swing_id);
        swings_added++;
      }
    }
    if (ok)
      rec_added++;
  }
  if (ok && rec_added > 0) {
    g_autofree char *detail = g_strdup_printf("%s: %u recording%s, %u swing%s for %s, %s",
                                              journal_detail != NULL ? journal_detail : "import",
                                              rec_added, rec_added == 1 ? "" : "s", swings_added,
                                              swings_added == 1 ? "" : "s", player_name, date);
    ok = insert_journal(store, "import", detail, error);
  }
  if (!finish_write(store, ok, error)) {
    g_array_set_size(result->swing_ids, 0);
    return FALSE;
  }
  result->recordings_added += rec_added;
  result->swings_added += swings_added;
  return TRUE;
}

/* ---- Re-analysis support ------------------------------------------------------------------- */

void
arcwise_stale_recording_free(ArcwiseStaleRecording *r)
{
  if (r == NULL)
    return;
  g_array_unref(r->swing_ids);
  g_array_unref(r->spans);
  g_free(r->club_kind);
  g_free(r);
}

GPtrArray *
arcwise_store_list_stale(ArcwiseStore *store, gboolean all, const char *engine_version,
                         const char *settings_sha256, GError **error)
{
  sqlite3_stmt *st = stmt(store,
                          "SELECT s.recording_id, s.id, s.span_start_s, s.span_end_s, "
                          "p.handedness, c.kind, c.length_m FROM swing s "
                          "JOIN session se ON se.id = s.session_id "
                          "JOIN player p ON p.id = se.player_id "
                          "LEFT JOIN club c ON c.id = s.club_id "
                          "WHERE s.recording_id IN (SELECT s2.recording_id FROM swing s2 "
                          "  LEFT JOIN swing_result r ON r.swing_id = s2.id "
                          "  WHERE ?1 OR r.swing_id IS NULL OR r.engine_version IS NOT ?2 "
                          "  OR r.settings_sha256 IS NOT ?3) "
                          "ORDER BY s.recording_id, s.index_in_recording", error);
  if (st == NULL)
    return NULL;
  sqlite3_bind_int(st, 1, all ? 1 : 0);
  bind_text(st, 2, engine_version);
  bind_text(st, 3, settings_sha256);
  GPtrArray *out = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_stale_recording_free);
  ArcwiseStaleRecording *cur = NULL;
  int rc;
  while ((rc = sqlite3_step(st)) == SQLITE_ROW) {
    gint64 rec = sqlite3_column_int64(st, 0);
    if (cur == NULL || cur->recording_id != rec) {
      cur = g_new0(ArcwiseStaleRecording, 1);
      cur->recording_id = rec;
      cur->swing_ids = g_array_new(FALSE, FALSE, sizeof(gint64));
      cur->spans = g_array_new(FALSE, FALSE, sizeof(double));
      cur->handedness = (ArcwiseHandedness)sqlite3_column_int(st, 4);
      cur->club_kind = col_text(st, 5);
      cur->club_length_m = col_real(st, 6);
      g_ptr_array_add(out, cur);
    }
    gint64 sid = sqlite3_column_int64(st, 1);
    double span[2] = { col_real(st, 2), col_real(st, 3) };
    g_array_append_val(cur->swing_ids, sid);
    g_array_append_vals(cur->spans, span, 2);
  }
  sqlite3_reset(st);
  if (rc != SQLITE_DONE) {
    g_ptr_array_unref(out);
    sql_fail(store, error, "finding stale results");
    return NULL;
  }
  return out;
}

gboolean
arcwise_store_replace_results(ArcwiseStore *store, const ArcwisePreparedRecording *r,
                              GError **error)
{
  if (!begin_write(store, error))
    return FALSE;
  g_autofree char *now = now_utc();
  gboolean ok = TRUE;
  for (guint k = 0; ok && k < r->swings->len; k++) {
    const ArcwisePreparedSwing *ps = g_ptr_array_index(r->swings, k);
    /* Deleting the result row cascades to its data, events and metrics; the new rows go in in
     * the same transaction, so no reader ever sees the swing without a result. */
    sqlite3_stmt *st = stmt(store, "DELETE FROM swing_result WHERE swing_id = ?1", error);
    ok = st != NULL;
    if (ok) {
      sqlite3_bind_int64(st, 1, ps->swing_id);
      ok = step_done(store, st, error, "replacing a result");
    }
    if (ok)
      ok = insert_result(store, ps->swing_id, r, ps, now, error);
  }
  return finish_write(store, ok, error);
}

/* ---- One player's history as a file ------------------------------------------------------ *
 * The file is itself an Arcwise library holding one player (so it is checked, migrated and
 * read by the same code). Copies go through ATTACH with constant SQL and bound ids. */

static gboolean
attach(ArcwiseStore *s, const char *path, GError **error)
{
  sqlite3_stmt *st = stmt(s, "ATTACH DATABASE ?1 AS xfer", error);
  if (st == NULL)
    return FALSE;
  bind_text(st, 1, path);
  return step_done(s, st, error, "opening the transfer file");
}

static void
detach(ArcwiseStore *s)
{
  /* Statements on the attached schema must be gone before DETACH. */
  GHashTableIter it;
  gpointer key, value;
  g_hash_table_iter_init(&it, s->stmts);
  while (g_hash_table_iter_next(&it, &key, &value))
    if (strstr((const char *)key, "xfer.") != NULL)
      g_hash_table_iter_remove(&it);
  sqlite3_exec(s->db, "DETACH DATABASE xfer", NULL, NULL, NULL);
}

/* The export runs on the new file's own connection ("main") with the library attached
 * read-only as "src": it never writes to the library, so it works on one opened read-only (a
 * library from a newer program) too. Columns are named, not "*": a newer library may have
 * more, and the export file has this program's format. Later steps select through the rows
 * already copied, so every row belongs to the player. */
#define PLAYER_COLS "id, name, handedness, lead_wrist, height_m, notes"
#define SESSION_COLS "id, player_id, date, place, notes"
#define CLUB_COLS "id, kind, length_m"
#define RECORDING_COLS                                                                     \
  "id, content_sha256, imu_name, imu_size, imu_sha256, depth_name, depth_size, depth_sha256, " \
  "imported_utc"
#define RECORDING_DATA_COLS "recording_id, encoding, imu, depth"
#define SWING_COLS                                                                         \
  "id, session_id, recording_id, club_id, index_in_recording, span_start_s, span_end_s, "    \
  "notes, rating, is_reference"
#define RESULT_COLS                                                                        \
  "swing_id, engine_version, settings_sha256, made_utc, analysed, tempo_ratio, backswing_s, " \
  "downswing_s, peak_hand_speed_m_s, club_speed_impact_m_s"

static const char *const export_sql[] = {
  "INSERT INTO main.player (" PLAYER_COLS ") SELECT " PLAYER_COLS " FROM src.player "
  "WHERE id = ?1",
  "INSERT INTO main.session (" SESSION_COLS ") SELECT " SESSION_COLS " FROM src.session "
  "WHERE player_id = ?1",
  "INSERT INTO main.club (" CLUB_COLS ") SELECT " CLUB_COLS " FROM src.club WHERE id IN "
  "(SELECT club_id FROM src.swing WHERE session_id IN (SELECT id FROM main.session))",
  "INSERT INTO main.recording (" RECORDING_COLS ") SELECT " RECORDING_COLS " FROM src.recording "
  "WHERE id IN (SELECT recording_id FROM src.swing WHERE session_id IN "
  "(SELECT id FROM main.session))",
  "INSERT INTO main.recording_data (" RECORDING_DATA_COLS ") SELECT " RECORDING_DATA_COLS
  " FROM src.recording_data WHERE recording_id IN (SELECT id FROM main.recording)",
  "INSERT INTO main.swing (" SWING_COLS ") SELECT " SWING_COLS " FROM src.swing "
  "WHERE session_id IN (SELECT id FROM main.session)",
  "INSERT INTO main.swing_tag (swing_id, tag) SELECT swing_id, tag FROM src.swing_tag "
  "WHERE swing_id IN (SELECT id FROM main.swing)",
  "INSERT INTO main.swing_result (" RESULT_COLS ") SELECT " RESULT_COLS " FROM src.swing_result "
  "WHERE swing_id IN (SELECT id FROM main.swing)",
  "INSERT INTO main.result_settings (settings_sha256, settings) SELECT settings_sha256, settings "
  "FROM src.result_settings WHERE settings_sha256 IN (SELECT settings_sha256 FROM "
  "main.swing_result)",
  "INSERT INTO main.swing_result_data (swing_id, path, swing) SELECT swing_id, path, swing "
  "FROM src.swing_result_data WHERE swing_id IN (SELECT swing_id FROM main.swing_result)",
  "INSERT INTO main.swing_event (swing_id, name, t_s) SELECT swing_id, name, t_s "
  "FROM src.swing_event WHERE swing_id IN (SELECT swing_id FROM main.swing_result)",
  "INSERT INTO main.swing_metric (swing_id, name, unit, value) SELECT swing_id, name, unit, value "
  "FROM src.swing_metric WHERE swing_id IN (SELECT swing_id FROM main.swing_result)",
};

/* "file:/abs/path?mode=ro": SQLite's URI for opening the library read-only from an ATTACH. */
static char *
readonly_uri(const char *path)
{
  g_autofree char *abs = g_canonicalize_filename(path, NULL);
  g_autofree char *esc = g_uri_escape_string(abs, "/", FALSE);
  return g_strconcat("file:", esc, "?mode=ro", NULL);
}

gboolean
arcwise_store_export_player(ArcwiseStore *store, gint64 player_id, const char *dest_path,
                            GError **error)
{
  g_autoptr(ArcwisePlayer) player = arcwise_store_get_player(store, player_id, error);
  if (player == NULL)
    return FALSE;
  if (g_file_test(dest_path, G_FILE_TEST_EXISTS)) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_EXISTS,
                "%s: already exists; choose a new file name", dest_path);
    return FALSE;
  }
  /* Build it under a temporary name, as a one-file (rollback journal) library, then rename. */
  g_autofree char *tmp = g_strdup_printf("%s.part-%u", dest_path, (unsigned)g_random_int());
  ArcwiseStore *dst = arcwise_store_open(tmp, ARCWISE_STORE_OPEN_CREATE, error);
  gboolean ok = dst != NULL && exec_const(dst, "PRAGMA journal_mode = DELETE", error,
                                          "preparing the export file");
  g_autofree char *detail = g_strdup_printf("player '%s' (%u session%s, %u swing%s) to %s",
                                            player->name, player->n_sessions,
                                            player->n_sessions == 1 ? "" : "s", player->n_swings,
                                            player->n_swings == 1 ? "" : "s", dest_path);
  sqlite3_stmt *st = NULL;
  if (ok)
    ok = (st = stmt(dst, "ATTACH DATABASE ?1 AS src", error)) != NULL;
  if (ok) {
    g_autofree char *uri = readonly_uri(store->path);
    bind_text(st, 1, uri);
    ok = step_done(dst, st, error, "opening the library to read the player");
  }
  /* One transaction on the new file: every read of the library comes from one snapshot. */
  if (ok)
    ok = begin_write(dst, error);
  for (gsize i = 0; ok && i < G_N_ELEMENTS(export_sql); i++) {
    ok = (st = stmt(dst, export_sql[i], error)) != NULL;
    if (ok) {
      if (sqlite3_bind_parameter_count(st) > 0)
        sqlite3_bind_int64(st, 1, player_id);
      ok = step_done(dst, st, error, "copying the player's history");
    }
  }
  if (ok)
    ok = insert_journal(dst, "export-player", detail, error);
  if (dst != NULL)
    ok = finish_write(dst, ok, error);
  arcwise_store_close(dst); /* finalizes its statements, then detaches with the close */
  if (ok && g_rename(tmp, dest_path) != 0) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED, "%s: %s", dest_path,
                g_strerror(errno));
    ok = FALSE;
  }
  if (!ok) {
    g_unlink(tmp);
    g_autofree char *j = g_strconcat(tmp, "-journal", NULL);
    g_unlink(j);
    return FALSE;
  }
  /* The export is complete; the library's own journal notes it when the library is writable
   * (a read-only one, like a backup from it, leaves no trace). */
  return store->readonly || arcwise_store_add_journal(store, "export-player", detail, error);
}

/* Copies one result (row, data, events, metrics) of xfer swing `src` to main swing `dst`. */
static const char *const import_result_sql[] = {
  "INSERT OR IGNORE INTO main.result_settings (settings_sha256, settings) "
  "SELECT rs.settings_sha256, rs.settings FROM xfer.result_settings rs JOIN xfer.swing_result r "
  "ON r.settings_sha256 = rs.settings_sha256 WHERE r.swing_id = ?1 AND ?2 IS NOT NULL",
  "INSERT INTO main.swing_result (swing_id, engine_version, settings_sha256, made_utc, analysed, "
  "tempo_ratio, backswing_s, downswing_s, peak_hand_speed_m_s, club_speed_impact_m_s) "
  "SELECT ?2, engine_version, settings_sha256, made_utc, analysed, tempo_ratio, backswing_s, "
  "downswing_s, peak_hand_speed_m_s, club_speed_impact_m_s FROM xfer.swing_result "
  "WHERE swing_id = ?1",
  "INSERT INTO main.swing_result_data (swing_id, path, swing) SELECT ?2, path, swing "
  "FROM xfer.swing_result_data WHERE swing_id = ?1",
  "INSERT INTO main.swing_event (swing_id, name, t_s) SELECT ?2, name, t_s "
  "FROM xfer.swing_event WHERE swing_id = ?1",
  "INSERT INTO main.swing_metric (swing_id, name, unit, value) SELECT ?2, name, unit, value "
  "FROM xfer.swing_metric WHERE swing_id = ?1",
  "INSERT OR IGNORE INTO main.swing_tag (swing_id, tag) SELECT ?2, tag "
  "FROM xfer.swing_tag WHERE swing_id = ?1",
};

static gint
merge_from_xfer(ArcwiseStore *s, GError **error)
{
  gint added = 0;
  g_autoptr(GHashTable) player_map = g_hash_table_new_full(g_int64_hash, g_int64_equal, g_free,
                                                           g_free);
  g_autoptr(GHashTable) session_map = g_hash_table_new_full(g_int64_hash, g_int64_equal, g_free,
                                                            g_free);
  g_autoptr(GHashTable) club_map = g_hash_table_new_full(g_int64_hash, g_int64_equal, g_free,
                                                         g_free);
#define MAP_PUT(m, k, v)                                                                   \
  g_hash_table_insert(m, g_memdup2(&(gint64){ k }, sizeof(gint64)),                        \
                      g_memdup2(&(gint64){ v }, sizeof(gint64)))
#define MAP_GET(m, k) (*(gint64 *)g_hash_table_lookup(m, &(gint64){ k }))

  /* Players by name: an existing player keeps their own details. */
  sqlite3_stmt *st = stmt(s, "SELECT id, name, handedness, lead_wrist, height_m, notes "
                             "FROM xfer.player", error);
  if (st == NULL)
    return -1;
  GPtrArray *players = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_player_free);
  while (sqlite3_step(st) == SQLITE_ROW) {
    ArcwisePlayer *p = g_new0(ArcwisePlayer, 1);
    p->id = sqlite3_column_int64(st, 0);
    p->name = col_text0(st, 1);
    p->handedness = (ArcwiseHandedness)sqlite3_column_int(st, 2);
    p->lead_wrist = (AwWrist)sqlite3_column_int(st, 3);
    p->height_m = col_real(st, 4);
    p->notes = col_text0(st, 5);
    g_ptr_array_add(players, p);
  }
  sqlite3_reset(st);
  gboolean ok = TRUE;
  for (guint i = 0; ok && i < players->len; i++) {
    ArcwisePlayer *p = g_ptr_array_index(players, i);
    gint64 id = arcwise_store_find_player(s, p->name, error);
    if (id == 0 && error != NULL && *error != NULL)
      ok = FALSE;
    if (ok && id == 0)
      ok = (id = insert_player(s, p->name, p->handedness, p->lead_wrist, p->height_m, p->notes,
                               error)) != 0;
    if (ok)
      MAP_PUT(player_map, p->id, id);
  }
  g_ptr_array_unref(players);

  /* Sessions by player, date and place. */
  if (ok)
    ok = (st = stmt(s, "SELECT id, player_id, date, place, notes FROM xfer.session", error)) != NULL;
  if (ok) {
    GArray *rows = g_array_new(FALSE, FALSE, sizeof(gint64));
    GPtrArray *texts = g_ptr_array_new_with_free_func(g_free);
    while (sqlite3_step(st) == SQLITE_ROW) {
      gint64 v[2] = { sqlite3_column_int64(st, 0), sqlite3_column_int64(st, 1) };
      g_array_append_vals(rows, v, 2);
      g_ptr_array_add(texts, col_text0(st, 2));
      g_ptr_array_add(texts, col_text0(st, 3));
      g_ptr_array_add(texts, col_text0(st, 4));
    }
    sqlite3_reset(st);
    for (guint i = 0; ok && i < rows->len / 2; i++) {
      gint64 src = g_array_index(rows, gint64, 2 * i);
      gint64 pl = g_array_index(rows, gint64, 2 * i + 1);
      if (!g_hash_table_contains(player_map, &pl)) {
        g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                    "session %" G_GINT64_FORMAT " refers to a missing player", src);
        ok = FALSE;
        break;
      }
      gint64 id = find_or_add_session(s, MAP_GET(player_map, pl), g_ptr_array_index(texts, 3 * i),
                                      g_ptr_array_index(texts, 3 * i + 1),
                                      g_ptr_array_index(texts, 3 * i + 2), FALSE, error);
      ok = id != 0;
      if (ok)
        MAP_PUT(session_map, src, id);
    }
    g_array_unref(rows);
    g_ptr_array_unref(texts);
  }

  /* Clubs by kind and length. */
  if (ok)
    ok = (st = stmt(s, "SELECT id, kind, length_m FROM xfer.club", error)) != NULL;
  if (ok) {
    GArray *ids = g_array_new(FALSE, FALSE, sizeof(gint64));
    GArray *lens = g_array_new(FALSE, FALSE, sizeof(double));
    GPtrArray *kinds = g_ptr_array_new_with_free_func(g_free);
    while (sqlite3_step(st) == SQLITE_ROW) {
      gint64 id = sqlite3_column_int64(st, 0);
      double len = col_real(st, 2);
      g_array_append_val(ids, id);
      g_array_append_val(lens, len);
      g_ptr_array_add(kinds, col_text0(st, 1));
    }
    sqlite3_reset(st);
    for (guint i = 0; ok && i < ids->len; i++) {
      gint64 id = find_or_add_club(s, g_ptr_array_index(kinds, i),
                                   g_array_index(lens, double, i), error);
      ok = id != 0;
      if (ok)
        MAP_PUT(club_map, g_array_index(ids, gint64, i), id);
    }
    g_array_unref(ids);
    g_array_unref(lens);
    g_ptr_array_unref(kinds);
  }

  /* Recordings by content hash: one already here is skipped with its swings (the same swings
   * were imported before); a new one comes with all its swings and their results. */
  GArray *recs = g_array_new(FALSE, FALSE, sizeof(gint64));
  if (ok)
    ok = (st = stmt(s, "SELECT id FROM xfer.recording ORDER BY id", error)) != NULL;
  if (ok) {
    while (sqlite3_step(st) == SQLITE_ROW) {
      gint64 id = sqlite3_column_int64(st, 0);
      g_array_append_val(recs, id);
    }
    sqlite3_reset(st);
  }
  for (guint i = 0; ok && i < recs->len; i++) {
    gint64 src_rec = g_array_index(recs, gint64, i);
    ok = (st = stmt(s, "SELECT content_sha256, imu_name, imu_size, imu_sha256, depth_name, "
                       "depth_size, depth_sha256, imported_utc FROM xfer.recording WHERE id = ?1",
                    error)) != NULL;
    if (!ok)
      break;
    sqlite3_bind_int64(st, 1, src_rec);
    if (sqlite3_step(st) != SQLITE_ROW) {
      sqlite3_reset(st);
      ok = sql_fail(s, error, "reading the transfer file");
      break;
    }
    g_autofree char *content = col_text0(st, 0);
    g_autofree char *imu_name = col_text0(st, 1);
    gint64 imu_size = sqlite3_column_int64(st, 2);
    g_autofree char *imu_sha = col_text0(st, 3);
    g_autofree char *depth_name = col_text0(st, 4);
    gint64 depth_size = sqlite3_column_int64(st, 5);
    g_autofree char *depth_sha = col_text0(st, 6);
    g_autofree char *imported = col_text0(st, 7);
    sqlite3_reset(st);
    /* The file came from elsewhere: its hash must be what its two digests say, and its names
     * are cleaned again so that nothing stored can later name a path outside a chosen folder. */
    char expect[65];
    arcwise_content_sha256(imu_sha, depth_sha, expect);
    if (strcmp(expect, content) != 0) {
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                  "recording %" G_GINT64_FORMAT " in the transfer file has an inconsistent "
                  "content hash", src_rec);
      ok = FALSE;
      break;
    }
    gint64 existing = 0;
    ok = arcwise_store_find_recording(s, content, &existing, error);
    if (!ok || existing != 0)
      continue;
    g_autofree char *safe_imu = arcwise_codec_safe_name(imu_name);
    g_autofree char *safe_depth = arcwise_codec_safe_name(depth_name);
    ok = (st = stmt(s, "INSERT INTO main.recording (content_sha256, imu_name, imu_size, "
                       "imu_sha256, depth_name, depth_size, depth_sha256, imported_utc) "
                       "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8)", error)) != NULL;
    if (!ok)
      break;
    bind_text(st, 1, content);
    bind_text(st, 2, safe_imu);
    sqlite3_bind_int64(st, 3, imu_size);
    bind_text(st, 4, imu_sha);
    bind_text(st, 5, safe_depth);
    sqlite3_bind_int64(st, 6, depth_size);
    bind_text(st, 7, depth_sha);
    bind_text(st, 8, imported);
    if (!(ok = step_done(s, st, error, "storing a recording")))
      break;
    gint64 rec = sqlite3_last_insert_rowid(s->db);
    ok = (st = stmt(s, "INSERT INTO main.recording_data (recording_id, encoding, imu, depth) "
                       "SELECT ?2, encoding, imu, depth FROM xfer.recording_data "
                       "WHERE recording_id = ?1", error)) != NULL;
    if (!ok)
      break;
    sqlite3_bind_int64(st, 1, src_rec);
    sqlite3_bind_int64(st, 2, rec);
    if (!(ok = step_done(s, st, error, "storing a recording's streams")))
      break;
    if (sqlite3_changes(s->db) != 1) {
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                  "recording %" G_GINT64_FORMAT " in the transfer file has no data", src_rec);
      ok = FALSE;
      break;
    }
    /* Its swings. */
    ok = (st = stmt(s, "SELECT id, session_id, club_id FROM xfer.swing WHERE recording_id = ?1 "
                       "ORDER BY index_in_recording", error)) != NULL;
    if (!ok)
      break;
    sqlite3_bind_int64(st, 1, src_rec);
    GArray *sw = g_array_new(FALSE, FALSE, sizeof(gint64));
    while (sqlite3_step(st) == SQLITE_ROW) {
      gint64 v[3] = { sqlite3_column_int64(st, 0), sqlite3_column_int64(st, 1),
                      sqlite3_column_int64(st, 2) };
      g_array_append_vals(sw, v, 3);
    }
    sqlite3_reset(st);
    for (guint k = 0; ok && k < sw->len / 3; k++) {
      gint64 src_sw = g_array_index(sw, gint64, 3 * k);
      gint64 src_se = g_array_index(sw, gint64, 3 * k + 1);
      gint64 src_cl = g_array_index(sw, gint64, 3 * k + 2);
      if (!g_hash_table_contains(session_map, &src_se) ||
          (src_cl != 0 && !g_hash_table_contains(club_map, &src_cl))) {
        g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                    "swing %" G_GINT64_FORMAT " in the transfer file refers to a missing row",
                    src_sw);
        ok = FALSE;
        break;
      }
      ok = (st = stmt(s, "INSERT INTO main.swing (session_id, recording_id, club_id, "
                         "index_in_recording, span_start_s, span_end_s, notes, rating, "
                         "is_reference) SELECT ?2, ?3, ?4, index_in_recording, span_start_s, "
                         "span_end_s, notes, rating, is_reference FROM xfer.swing WHERE id = ?1",
                      error)) != NULL;
      if (!ok)
        break;
      sqlite3_bind_int64(st, 1, src_sw);
      sqlite3_bind_int64(st, 2, MAP_GET(session_map, src_se));
      sqlite3_bind_int64(st, 3, rec);
      if (src_cl != 0)
        sqlite3_bind_int64(st, 4, MAP_GET(club_map, src_cl));
      else
        sqlite3_bind_null(st, 4);
      if (!(ok = step_done(s, st, error, "storing a swing")))
        break;
      gint64 dst_sw = sqlite3_last_insert_rowid(s->db);
      for (gsize q = 0; ok && q < G_N_ELEMENTS(import_result_sql); q++) {
        ok = (st = stmt(s, import_result_sql[q], error)) != NULL;
        if (ok) {
          sqlite3_bind_int64(st, 1, src_sw);
          sqlite3_bind_int64(st, 2, dst_sw);
          ok = step_done(s, st, error, "storing a swing's result");
        }
      }
      if (ok)
        added++;
    }
    g_array_unref(sw);
  }
  g_array_unref(recs);
#undef MAP_PUT
#undef MAP_GET
  return ok ? added : -1;
}

gint
arcwise_store_import_player(ArcwiseStore *store, const char *src_path, GError **error)
{
  /* Work on a private copy: the source is never written (not even migrated), and a file that
   * changes under us cannot confuse the merge. The copy is opened as a library first, so a
   * foreign, damaged or newer file is refused before anything here changes. */
  g_autofree char *tmpdir = g_dir_make_tmp("arcwise-import-XXXXXX", NULL);
  if (tmpdir == NULL) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED,
                "cannot make a temporary folder");
    return -1;
  }
  g_autofree char *copy = g_build_filename(tmpdir, "player.sqlite", NULL);
  gint added = -1;
  {
    sqlite3 *src = NULL;
    gboolean ok = TRUE;
    if (!g_file_test(src_path, G_FILE_TEST_IS_REGULAR)) {
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND, "%s: no such file",
                  src_path);
      ok = FALSE;
    }
    if (ok && sqlite3_open_v2(src_path, &src, SQLITE_OPEN_READONLY, NULL) != SQLITE_OK) {
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_LIBRARY,
                  "%s: cannot open: %s", src_path, src != NULL ? sqlite3_errmsg(src) : "");
      ok = FALSE;
    }
    g_autoptr(GError) local = NULL;
    if (ok && !backup_to(src, "main", copy, &local)) {
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_LIBRARY,
                  "%s: not a readable Arcwise player file (%s)", src_path, local->message);
      ok = FALSE;
    }
    sqlite3_close(src);
    ArcwiseStore *x = ok ? arcwise_store_open(copy, ARCWISE_STORE_OPEN_DEFAULT, error) : NULL;
    if (x != NULL && !arcwise_store_check(x, error)) {
      arcwise_store_close(x);
      x = NULL;
    }
    if (x != NULL) {
      arcwise_store_close(x);
      if (attach(store, copy, error)) {
        if (begin_write(store, error)) {
          added = merge_from_xfer(store, error);
          gboolean good = added >= 0;
          if (good) {
            g_autofree char *detail = g_strdup_printf("%d swing%s from %s", added,
                                                      added == 1 ? "" : "s", src_path);
            good = insert_journal(store, "import-player", detail, error);
          }
          if (!finish_write(store, good, error))
            added = -1;
        }
        detach(store);
      }
    }
  }
  /* Remove the private copy and whatever SQLite left beside it. */
  g_autoptr(GDir) d = g_dir_open(tmpdir, 0, NULL);
  const char *name;
  while (d != NULL && (name = g_dir_read_name(d)) != NULL) {
    g_autofree char *f = g_build_filename(tmpdir, name, NULL);
    g_unlink(f);
  }
  g_rmdir(tmpdir);
  return added;
}

/* ---- Reference swings from optical motion capture ----------------------------------------- */

void
arcwise_reference_free(ArcwiseReference *r)
{
  if (r == NULL)
    return;
  g_free(r->player_name);
  g_free(r->name);
  g_free(r->source_name);
  g_free(r->source_sha256);
  g_free(r->marker);
  g_free(r->units);
  g_free(r->up_axis);
  g_free(r->imported_utc);
  g_free(r->t_s);
  g_free(r->pos_m);
  g_free(r);
}

/* Samples as little-endian IEEE 754 doubles t, x, y, z per frame (NaN coordinates = gap), so
 * a library moves between machines of either byte order. */
static GBytes *
reference_samples_encode(const ArcwiseReference *r)
{
  gsize n = r->n_frames;
  guint64 *w = g_new(guint64, 4 * n);
  for (gsize i = 0; i < n; i++) {
    double v[4] = { r->t_s[i], r->pos_m[i][0], r->pos_m[i][1], r->pos_m[i][2] };
    for (int k = 0; k < 4; k++) {
      guint64 u;
      memcpy(&u, &v[k], 8);
      w[4 * i + (gsize)k] = GUINT64_TO_LE(u);
    }
  }
  return g_bytes_new_take(w, 32 * n);
}

static gboolean
reference_samples_decode(ArcwiseReference *r, GBytes *b, GError **error)
{
  gsize len = 0;
  const guint8 *d = g_bytes_get_data(b, &len);
  if (len != 32 * (gsize)r->n_frames) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                "reference %" G_GINT64_FORMAT ": %" G_GSIZE_FORMAT " bytes of samples for %u "
                "frames", r->id, len, r->n_frames);
    return FALSE;
  }
  r->t_s = g_new(double, r->n_frames);
  r->pos_m = g_malloc_n(r->n_frames, sizeof *r->pos_m);
  for (guint i = 0; i < r->n_frames; i++)
    for (int k = 0; k < 4; k++) {
      guint64 u;
      memcpy(&u, d + 32 * (gsize)i + 8 * (gsize)k, 8);
      u = GUINT64_FROM_LE(u);
      double v;
      memcpy(&v, &u, 8);
      if (k == 0)
        r->t_s[i] = v;
      else
        r->pos_m[i][k - 1] = v;
    }
  return TRUE;
}

gint64
arcwise_store_add_reference(ArcwiseStore *store, const ArcwiseReference *r, GError **error)
{
  if (!check_text("a reference's name", r->name, 200, FALSE, error))
    return 0;
  if (r->n_frames < 2 || r->t_s == NULL || r->pos_m == NULL || !(r->rate_hz > 0) ||
      r->n_invalid > r->n_frames) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "a reference needs at least 2 frames and a positive rate");
    return 0;
  }
  if (!begin_write(store, error))
    return 0;
  sqlite3_stmt *st = stmt(store,
                          "INSERT INTO reference_path (player_id, name, source_name, "
                          "source_sha256, marker, units, up_axis, rate_hz, n_frames, n_invalid, "
                          "imported_utc, samples) "
                          "VALUES (?1, ?2, ?3, ?4, ?5, ?6, ?7, ?8, ?9, ?10, ?11, ?12)", error);
  gint64 id = 0;
  if (st != NULL) {
    g_autofree char *now = now_utc();
    g_autoptr(GBytes) b = reference_samples_encode(r);
    sqlite3_bind_int64(st, 1, r->player_id);
    bind_text(st, 2, r->name);
    bind_text(st, 3, r->source_name);
    bind_text(st, 4, r->source_sha256);
    bind_text(st, 5, r->marker);
    bind_text(st, 6, r->units);
    bind_text(st, 7, r->up_axis);
    bind_real(st, 8, r->rate_hz);
    sqlite3_bind_int64(st, 9, r->n_frames);
    sqlite3_bind_int64(st, 10, r->n_invalid);
    bind_text(st, 11, now);
    bind_bytes(st, 12, b);
    if (step_done(store, st, error, "storing a reference swing"))
      id = sqlite3_last_insert_rowid(store->db);
  }
  if (id == 0 && error != NULL && *error != NULL && (*error)->code == ARCWISE_STORE_ERROR_EXISTS) {
    g_clear_error(error);
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_EXISTS,
                "marker %s of %s is already a reference of this player", r->marker,
                r->source_name);
  }
  if (id != 0) {
    g_autofree char *detail = g_strdup_printf(
      "reference %" G_GINT64_FORMAT " '%s': marker %s of %s, %u frames at %g Hz (%u invalid)",
      id, r->name, r->marker, r->source_name, r->n_frames, r->rate_hz, r->n_invalid);
    if (!insert_journal(store, "import-c3d", detail, error))
      id = 0;
  }
  return finish_write(store, id != 0, error) ? id : 0;
}

#define REFERENCE_COLUMNS                                                                  \
  "SELECT r.id, r.player_id, p.name, r.name, r.source_name, r.source_sha256, r.marker, "   \
  "r.units, r.up_axis, r.rate_hz, r.n_frames, r.n_invalid, r.imported_utc, r.samples "     \
  "FROM reference_path r JOIN player p ON p.id = r.player_id "

static ArcwiseReference *
reference_from_row(sqlite3_stmt *st)
{
  ArcwiseReference *r = g_new0(ArcwiseReference, 1);
  r->id = sqlite3_column_int64(st, 0);
  r->player_id = sqlite3_column_int64(st, 1);
  r->player_name = col_text0(st, 2);
  r->name = col_text0(st, 3);
  r->source_name = col_text0(st, 4);
  r->source_sha256 = col_text0(st, 5);
  r->marker = col_text0(st, 6);
  r->units = col_text0(st, 7);
  r->up_axis = col_text0(st, 8);
  r->rate_hz = col_real(st, 9);
  r->n_frames = (guint)sqlite3_column_int64(st, 10);
  r->n_invalid = (guint)sqlite3_column_int64(st, 11);
  r->imported_utc = col_text0(st, 12);
  return r;
}

GPtrArray *
arcwise_store_list_references(ArcwiseStore *store, gint64 player_id, GError **error)
{
  sqlite3_stmt *st = stmt(store, REFERENCE_COLUMNS "WHERE ?1 = 0 OR r.player_id = ?1 "
                                 "ORDER BY p.name, r.id", error);
  if (st == NULL)
    return NULL;
  sqlite3_bind_int64(st, 1, player_id);
  GPtrArray *out = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_reference_free);
  int rc;
  while ((rc = sqlite3_step(st)) == SQLITE_ROW)
    g_ptr_array_add(out, reference_from_row(st));
  sqlite3_reset(st);
  if (rc != SQLITE_DONE) {
    g_ptr_array_unref(out);
    sql_fail(store, error, "listing reference swings");
    return NULL;
  }
  return out;
}

ArcwiseReference *
arcwise_store_load_reference(ArcwiseStore *store, gint64 id, GError **error)
{
  sqlite3_stmt *st = stmt(store, REFERENCE_COLUMNS "WHERE r.id = ?1", error);
  if (st == NULL)
    return NULL;
  sqlite3_bind_int64(st, 1, id);
  ArcwiseReference *r = NULL;
  int rc = sqlite3_step(st);
  if (rc == SQLITE_ROW) {
    r = reference_from_row(st);
    g_autoptr(GBytes) b = col_bytes(st, 13);
    if (b == NULL || !reference_samples_decode(r, b, error)) {
      if (b == NULL)
        g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                    "reference %" G_GINT64_FORMAT " has no samples", id);
      arcwise_reference_free(r);
      r = NULL;
    }
  } else if (rc == SQLITE_DONE) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND,
                "no reference swing %" G_GINT64_FORMAT, id);
  } else {
    sql_fail(store, error, "loading a reference swing");
  }
  sqlite3_reset(st);
  return r;
}
