/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The swing library: one SQLite file holding players, clubs, sessions, the raw capture streams
 * exactly as imported, the fused path and analysis cached with the engine version and settings
 * that made them, coach annotations, and a journal of imports and exports.
 *
 * All SQL of the program lives in store.c, as prepared statements. Every write is one
 * transaction; a failure or a kill at any moment leaves the file as it was.
 *
 * Threads: an ArcwiseStore is one SQLite connection and belongs to the thread that uses it.
 * Open one store per thread (the library is in WAL mode, so readers never wait for a writer and
 * always see the last committed state). Nothing here touches GTK.
 *
 * Ownership: every record returned is owned by the caller and freed with its _free function
 * (NULL-safe, g_autoptr-ready); arrays are GPtrArray with the free function set.
 *
 * Errors: GError in ARCWISE_STORE_ERROR (below) or G_IO_ERROR_CANCELLED for a cancelled job. */

#include <glib.h>
#include <gio/gio.h>

#include "arcwise/capture.h"
#include "arcwise/fusion.h"
#include "arcwise/analysis.h"

G_BEGIN_DECLS

#define ARCWISE_STORE_ERROR (arcwise_store_error_quark())
GQuark arcwise_store_error_quark(void);

typedef enum {
  ARCWISE_STORE_ERROR_FAILED,      /* SQLite reported an error (message says which) */
  ARCWISE_STORE_ERROR_NOT_LIBRARY, /* the file is not an Arcwise library */
  ARCWISE_STORE_ERROR_TOO_NEW,     /* made by a newer Arcwise: refused, nothing changed */
  ARCWISE_STORE_ERROR_CORRUPT,     /* integrity check failed, or a blob does not decode */
  ARCWISE_STORE_ERROR_NOT_FOUND,   /* no such player, session, swing or file */
  ARCWISE_STORE_ERROR_INVALID,     /* bad argument or bad input file (message names it) */
  ARCWISE_STORE_ERROR_EXISTS,      /* the target file exists, or a unique name is taken */
  ARCWISE_STORE_ERROR_BUSY,        /* another program holds the write lock for too long */
  ARCWISE_STORE_ERROR_FULL,        /* the disk (or the file-size limit) is full: refused, the
                                      library is as it was before the write */
} ArcwiseStoreError;

/* The schema version this program writes (PRAGMA user_version). */
#define ARCWISE_STORE_SCHEMA_VERSION 5

typedef struct _ArcwiseStore ArcwiseStore;

typedef enum {
  ARCWISE_STORE_OPEN_DEFAULT = 0,       /* existing library, read-write, migrated if older */
  ARCWISE_STORE_OPEN_CREATE = 1 << 0,   /* create an empty library when the file is missing */
  ARCWISE_STORE_OPEN_READONLY = 1 << 1, /* never writes; an older library is read as is only
                                           if no migration is needed, else refused; a newer
                                           one is read (TOO_NEW is for writing only) */
  ARCWISE_STORE_OPEN_FALLBACK_READONLY = 1 << 2, /* read-write, but a library made by a newer
                                           program opens read-only instead of being refused;
                                           arcwise_store_is_readonly() tells which it got */
} ArcwiseStoreOpenFlags;

/* g_get_user_data_dir()/arcwise/library.sqlite (the folder is not created). Free with g_free. */
char *arcwise_store_default_path(void);
/* The library the program should open: $ARCWISE_LIBRARY when set (tools/quickstart run sets it
 * to the bundled demo library, build/demo-data/demo-library.sqlite), else the default path. */
char *arcwise_store_chosen_path(void);

/* Opens (and, with CREATE, creates) a library. ":memory:" is accepted (tests). An older library
 * is migrated, one transaction per migration step; a newer one is refused (TOO_NEW). */
ArcwiseStore *arcwise_store_open(const char *path, ArcwiseStoreOpenFlags flags, GError **error);
void arcwise_store_close(ArcwiseStore *store);
/* TRUE when every write will be refused: opened READONLY, or FALLBACK_READONLY met a library
 * made by a newer program (arcwise_store_get_schema_version() > ARCWISE_STORE_SCHEMA_VERSION). */
gboolean arcwise_store_is_readonly(ArcwiseStore *store);
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseStore, arcwise_store_close)

const char *arcwise_store_get_path(ArcwiseStore *store);

/* Runs PRAGMA integrity_check and foreign_key_check and decodes every stored blob header.
 * TRUE when all is well; otherwise FALSE with CORRUPT and the first problems in the message. */
gboolean arcwise_store_check(ArcwiseStore *store, GError **error);
/* integrity_check and foreign_key_check only: what can be checked of a library from a newer
 * program, whose blobs may have encodings this one does not know. */
gboolean arcwise_store_check_database(ArcwiseStore *store, GError **error);
/* The library's format (PRAGMA user_version); -1 if it cannot be read. */
int arcwise_store_get_schema_version(ArcwiseStore *store);

/* Copies the whole library to dest_path (must not exist) with the SQLite online backup API;
 * the copy is written beside dest_path and renamed into place when complete. */
gboolean arcwise_store_backup(ArcwiseStore *store, const char *dest_path, GError **error);

/* ---- Records ---------------------------------------------------------------------------- */

typedef enum {
  ARCWISE_HAND_UNKNOWN = 0,
  ARCWISE_HAND_RIGHT,   /* right-handed golfer: lead wrist usually left */
  ARCWISE_HAND_LEFT,
} ArcwiseHandedness;

typedef struct {
  gint64 id;
  char *name;
  ArcwiseHandedness handedness;
  AwWrist lead_wrist;
  double height_m;          /* NaN when unknown */
  char *notes;              /* never NULL */
  guint n_sessions;         /* filled by list/get */
  guint n_swings;
} ArcwisePlayer;

typedef struct {
  gint64 id;
  char *kind;               /* "driver", "7-iron", ... free text chosen by the coach */
  double length_m;          /* NaN when unknown */
} ArcwiseClub;

typedef struct {
  gint64 id;
  gint64 player_id;
  char *date;               /* ISO 8601, "YYYY-MM-DD" or "YYYY-MM-DDTHH:MM" (local studio time) */
  char *place;              /* never NULL */
  char *notes;              /* never NULL */
  guint n_swings;           /* filled by list/get */
} ArcwiseSession;

/* Metrics are stored under the engine's keys (aw_metric_info(id)->key, analysis.h), in the unit
 * aw_metric_info gives; also "practice", "half" (0/1) and "quality_notes" (AW_NOTE_* bits).
 * The key numbers every list row carries: */
#define ARCWISE_METRIC_TEMPO_RATIO "tempo_ratio"           /* backswing / downswing, 1 */
#define ARCWISE_METRIC_BACKSWING_S "backswing_s"
#define ARCWISE_METRIC_DOWNSWING_S "downswing_s"
#define ARCWISE_METRIC_PEAK_HAND_SPEED "peak_hand_speed_mps"
#define ARCWISE_METRIC_CLUB_SPEED "club_speed_impact_mps"

/* One row of a swing list: what a table shows without touching the stored streams. */
typedef struct {
  gint64 id;
  gint64 session_id;
  gint64 player_id;
  gint64 club_id;           /* 0 when no club was given */
  gint64 recording_id;      /* the stored raw streams this swing was cut from */
  char *player_name;
  char *session_date;
  char *club_kind;          /* NULL when no club */
  guint index_in_recording; /* 0-based */
  double span_start_s;      /* span in the source recording, depth camera clock, s */
  double span_end_s;
  int rating;               /* 0 = unrated, 1..5 */
  gboolean is_reference;
  char *notes;              /* never NULL */
  char **tags;              /* NULL-terminated, sorted, never NULL */
  gboolean analysed;        /* a cached result exists */
  gboolean analysis_current;/* ... made by this engine version and the current settings */
  double tempo_ratio;       /* key numbers, NaN when not analysed or not measurable */
  double backswing_s;
  double downswing_s;
  double peak_hand_speed_m_s;
  double club_speed_impact_m_s;  /* estimate (lever model, analysis.h) */
  double hand_speed_impact_m_s;  /* NaN when not analysed */
  int practice;             /* 1 practice swing (no ball contact), 0 struck, -1 not analysed */
  int quality_notes;        /* AW_NOTE_* bits of the analysis (analysis.h), -1 not analysed */
} ArcwiseSwingSummary;

/* A timed event of the analysis (address, top, impact, finish, ...), depth camera clock. */
typedef struct {
  char *name;
  double t_s;
} ArcwiseSwingEvent;

/* A named number of the analysis, SI unit given in `unit` ("s", "m/s", "rad", "1"). */
typedef struct {
  char *name;
  char *unit;
  double value;
} ArcwiseSwingMetric;

/* The cached analysis of one swing as stored: engine-independent names and numbers. */
typedef struct {
  char *engine_version;     /* ARCWISE_VERSION of the program that made it */
  char *settings;           /* canonical "key=value" lines of the settings used */
  char *made_utc;           /* ISO 8601 UTC */
  GPtrArray *events;        /* ArcwiseSwingEvent* */
  GPtrArray *metrics;       /* ArcwiseSwingMetric* */
} ArcwiseSwingAnalysis;

/* One swing, loaded for display. `path` is the fused hand path over the swing's span only
 * (NULL when the swing has not been fused yet), `analysis` NULL when not analysed. `swing` is
 * the engine's own record (analysis.h AwSwing, events with sigmas, phases with sensor trust,
 * swing frame, quality) as cached, with i_start = 0 and i_end = path->n so that it indexes
 * `path` directly; NULL when not analysed. Build the AwTrajectory for comparison with
 * aw_trajectory_from_fused(path, ...). */
typedef struct {
  ArcwiseSwingSummary *summary;
  AwFusedPath *path;
  ArcwiseSwingAnalysis *analysis;
  AwSwing *swing;             /* owned, g_free'd by arcwise_swing_detail_free */
} ArcwiseSwingDetail;

void arcwise_player_free(ArcwisePlayer *p);
void arcwise_club_free(ArcwiseClub *c);
void arcwise_session_free(ArcwiseSession *s);
void arcwise_swing_summary_free(ArcwiseSwingSummary *s);
void arcwise_swing_event_free(ArcwiseSwingEvent *e);
void arcwise_swing_metric_free(ArcwiseSwingMetric *m);
void arcwise_swing_analysis_free(ArcwiseSwingAnalysis *a);
void arcwise_swing_detail_free(ArcwiseSwingDetail *d);
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwisePlayer, arcwise_player_free)
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseClub, arcwise_club_free)
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseSession, arcwise_session_free)
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseSwingSummary, arcwise_swing_summary_free)
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseSwingAnalysis, arcwise_swing_analysis_free)
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseSwingDetail, arcwise_swing_detail_free)

/* Returns a value a metric of the analysis, NaN when absent. */
double arcwise_swing_analysis_metric(const ArcwiseSwingAnalysis *a, const char *name);
/* The time of an event, NaN when absent. */
double arcwise_swing_analysis_event(const ArcwiseSwingAnalysis *a, const char *name);

/* ---- Players, clubs, sessions ----------------------------------------------------------- */

/* Adds a player; name must be unique (EXISTS otherwise). Returns the new id, 0 on error. */
gint64 arcwise_store_add_player(ArcwiseStore *store, const char *name,
                                ArcwiseHandedness handedness, AwWrist lead_wrist,
                                double height_m, const char *notes, GError **error);
gboolean arcwise_store_update_player(ArcwiseStore *store, const ArcwisePlayer *player,
                                     GError **error);
/* Every player, by name, with session and swing counts. */
GPtrArray *arcwise_store_list_players(ArcwiseStore *store, GError **error);
ArcwisePlayer *arcwise_store_get_player(ArcwiseStore *store, gint64 id, GError **error);
/* 0 without error when there is no such player. */
gint64 arcwise_store_find_player(ArcwiseStore *store, const char *name, GError **error);

/* Finds the club of that kind and length (NaN = unknown) or adds it. */
gint64 arcwise_store_ensure_club(ArcwiseStore *store, const char *kind, double length_m,
                                 GError **error);
GPtrArray *arcwise_store_list_clubs(ArcwiseStore *store, GError **error);

gint64 arcwise_store_add_session(ArcwiseStore *store, gint64 player_id, const char *date,
                                 const char *place, const char *notes, GError **error);
/* Sessions of one player (player_id 0: all), newest first. */
GPtrArray *arcwise_store_list_sessions(ArcwiseStore *store, gint64 player_id, GError **error);
ArcwiseSession *arcwise_store_get_session(ArcwiseStore *store, gint64 id, GError **error);

/* ---- Swings ----------------------------------------------------------------------------- */

/* List filters; zero/NULL/NaN fields do not filter. Initialise with arcwise_swing_filter_init. */
typedef struct {
  gint64 player_id;
  const char *player_name;  /* exact, case-insensitive */
  gint64 session_id;
  const char *date_from;    /* inclusive, compared as ISO 8601 text ("2026-03-01") */
  const char *date_to;      /* inclusive: "2026-03-31" includes every time on that day */
  const char *club_kind;    /* exact, case-insensitive */
  const char *tag;          /* exact */
  const char *metric;       /* a metric name (ARCWISE_METRIC_* or any stored name) ... */
  double metric_min;        /* ... with value in [min, max]; NaN = open end */
  double metric_max;
  gboolean reference_only;
  guint limit;              /* 0 = all */
} ArcwiseSwingFilter;

void arcwise_swing_filter_init(ArcwiseSwingFilter *f);

/* Swings matching the filter, newest session first, then by recording and index. Never reads
 * the stored streams. */
GPtrArray *arcwise_store_list_swings(ArcwiseStore *store, const ArcwiseSwingFilter *filter,
                                     GError **error);
ArcwiseSwingSummary *arcwise_store_get_swing(ArcwiseStore *store, gint64 swing_id,
                                             GError **error);
/* The summary, the cached fused path (decompressed) and the analysis. */
ArcwiseSwingDetail *arcwise_store_load_swing(ArcwiseStore *store, gint64 swing_id,
                                             GError **error);
/* The raw streams of a recording, byte for byte as imported, with their original file names. */
gboolean arcwise_store_load_recording(ArcwiseStore *store, gint64 recording_id,
                                      GBytes **imu_bytes, GBytes **depth_bytes,
                                      char **imu_name, char **depth_name, GError **error);

/* Annotations, each one transaction. rating 0 clears it. Tags: replaces the whole set. */
gboolean arcwise_store_set_swing_notes(ArcwiseStore *store, gint64 swing_id, const char *notes,
                                       GError **error);
gboolean arcwise_store_set_swing_rating(ArcwiseStore *store, gint64 swing_id, int rating,
                                        GError **error);
gboolean arcwise_store_set_swing_reference(ArcwiseStore *store, gint64 swing_id,
                                           gboolean is_reference, GError **error);
gboolean arcwise_store_set_swing_tags(ArcwiseStore *store, gint64 swing_id,
                                      const char *const *tags, GError **error);

/* ---- Journal ------------------------------------------------------------------------------ */

typedef struct {
  gint64 id;
  char *when_utc;
  char *kind;               /* "import", "export-player", "import-player", "backup", "reanalyse" */
  char *detail;             /* human-readable: what, from where, how many */
} ArcwiseJournalEntry;
void arcwise_journal_entry_free(ArcwiseJournalEntry *e);
GPtrArray *arcwise_store_list_journal(ArcwiseStore *store, GError **error);

/* ---- Import ----------------------------------------------------------------------------- */

/* What to import. Inputs: capture pairs (IMU CSV + depth CSV). Each pair is one recording; it
 * is fused and analysed and split into its swings (one or many). */
typedef struct {
  gint64 player_id;         /* an existing player by id (a rename while an import runs must not make a new player); 0: by
                               player_name below */
  const char *player_name;  /* with player_id 0: existing player of that name, or created with
                               the fields below */
  ArcwiseHandedness handedness; /* UNKNOWN: the existing player's own */
  AwWrist lead_wrist;       /* UNKNOWN: taken from the IMU file's "wrist" metadata */
  double height_m;
  const char *session_date; /* session of this player on that date and place (found or made);
                               NULL: today */
  const char *session_place;
  const char *club_kind;    /* NULL: no club */
  double club_length_m;
} ArcwiseImportTarget;

void arcwise_import_target_init(ArcwiseImportTarget *t);

typedef struct {
  char *imu_path;
  char *depth_path;
} ArcwiseCapturePair;

/* Pairs in a folder: every "NAME.imu.csv" with its "NAME.depth.csv", or "NAME/imu.csv" with
 * "NAME/depth.csv" one level down; sorted by name. An unpaired file is an error. */
GPtrArray *arcwise_capture_pairs_in_folder(const char *folder, GError **error);
void arcwise_capture_pair_free(ArcwiseCapturePair *p);

typedef struct {
  guint recordings_added;
  guint recordings_already_present; /* same content hash as a stored recording: skipped */
  guint swings_added;
  GArray *swing_ids;                /* gint64, the new swings */
} ArcwiseImportResult;
void arcwise_import_result_free(ArcwiseImportResult *r);
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseImportResult, arcwise_import_result_free)

/* Progress: done of total steps (one step per recording read, fused, analysed), and what. Called
 * in the thread running the import (the async form calls it in the caller's main context). */
typedef void (*ArcwiseProgressFunc)(guint done, guint total, const char *what, gpointer user_data);

/* Imports the pairs as ONE transaction: every file is read and validated, fused and analysed
 * (on all cores) before anything is written; any failure leaves the library unchanged.
 * Recordings already stored (same bytes) are skipped. Blocking: call it from a worker thread
 * with its own store, or use the async form. */
ArcwiseImportResult *arcwise_store_import(ArcwiseStore *store, const ArcwiseImportTarget *target,
                                          GPtrArray *pairs, GCancellable *cancellable,
                                          ArcwiseProgressFunc progress, gpointer user_data,
                                          GError **error);

/* The same in a GTask thread with its own connection to library_path; `target` and `pairs` are
 * copied. progress runs in the main context current at the call. */
void arcwise_store_import_async(const char *library_path, const ArcwiseImportTarget *target,
                                GPtrArray *pairs, GCancellable *cancellable,
                                ArcwiseProgressFunc progress, gpointer progress_data,
                                GDestroyNotify progress_data_free,
                                GAsyncReadyCallback callback, gpointer user_data);
ArcwiseImportResult *arcwise_store_import_finish(GAsyncResult *result, GError **error);

/* ---- Re-analysis ------------------------------------------------------------------------ */

/* Canonical text of the settings this program analyses with ("key=value" lines) and its
 * SHA-256; a cached result is current when engine version and settings hash both match. */
char *arcwise_store_current_settings(void);

/* Counts swings whose cached result is missing or stale. */
guint arcwise_store_count_stale(ArcwiseStore *store, GError **error);

/* Re-fuses and re-analyses every recording with a stale swing (all of them with `all`), on all
 * cores. Each recording's new results replace the old in one transaction, so the previous result
 * stays until the new one is stored; a cancel keeps what finished. Returns the number of swings
 * updated, -1 on error. */
gint arcwise_store_reanalyse(ArcwiseStore *store, gboolean all, GCancellable *cancellable,
                             ArcwiseProgressFunc progress, gpointer user_data, GError **error);
/* The same in the background (a GTask thread with its own connection to library_path; the
 * workers as above): the workbench stays responsive and reads the library meanwhile, seeing
 * each swing's previous result until its new one is committed. progress runs in the main
 * context current at the call; the finish gives the count or -1. */
void arcwise_store_reanalyse_async(const char *library_path, gboolean all,
                                   GCancellable *cancellable, ArcwiseProgressFunc progress,
                                   gpointer progress_data, GDestroyNotify progress_data_free,
                                   GAsyncReadyCallback callback, gpointer user_data);
gint arcwise_store_reanalyse_finish(GAsyncResult *result, GError **error);

/* ---- One player's history as a file ------------------------------------------------------ */

/* Writes the player's sessions, swings, raw streams, cached results and annotations to dest_path
 * (must not exist): a small Arcwise library holding that player alone. */
gboolean arcwise_store_export_player(ArcwiseStore *store, gint64 player_id,
                                     const char *dest_path, GError **error);
/* Merges such a file into this library in one transaction: the player is matched by name (or
 * added), sessions by date and place, recordings by content hash (never duplicated). Returns
 * the number of swings added, -1 on error. */
gint arcwise_store_import_player(ArcwiseStore *store, const char *src_path, GError **error);

/* ---- Reference swings from optical motion capture (C3D) -------------------------------- */

/* One marker of a C3D file (engine/c3d) kept as a reference swing of a player: in metres
 * (converted from POINT:UNITS), in the file's own lab frame, at its frame rate, invalid frames
 * kept as gaps (NaN). `up_axis` names the lab axis against gravity ("+z" for most optical
 * systems). It is a path without sensor streams: it is compared with, never re-fused. */
typedef struct {
  gint64 id;
  gint64 player_id;
  char *player_name;        /* filled by list/load */
  char *name;               /* shown to the coach, e.g. "Optical, 2026-03-02, 7-iron" */
  char *source_name;        /* the C3D file's base name */
  char *source_sha256;      /* of the file's bytes: the same marker is not imported twice */
  char *marker;             /* the point label */
  char *units;              /* the unit the file was read in ("mm", ...) */
  char *up_axis;            /* "+x", "-x", "+y", "-y", "+z" or "-z" */
  double rate_hz;
  guint n_frames;
  guint n_invalid;
  char *imported_utc;
  /* Samples: NULL in lists; filled by arcwise_store_load_reference. t_s from the file's first
   * frame ((first_frame - 1 + i) / rate). */
  double *t_s;
  double (*pos_m)[3];
} ArcwiseReference;

void arcwise_reference_free(ArcwiseReference *r);
G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseReference, arcwise_reference_free)

/* Stores r (player_id, name, source, marker, units, up_axis, rate, n_frames, n_invalid, t_s,
 * pos_m are read) in one transaction with a journal entry. Returns the new id, 0 on error
 * (EXISTS when that marker of that file is already a reference of the player). */
gint64 arcwise_store_add_reference(ArcwiseStore *store, const ArcwiseReference *r,
                                   GError **error);
/* References of one player (0: all), by player name then import order; without samples. */
GPtrArray *arcwise_store_list_references(ArcwiseStore *store, gint64 player_id, GError **error);
ArcwiseReference *arcwise_store_load_reference(ArcwiseStore *store, gint64 id, GError **error);

G_END_DECLS
