/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The library source backed by the SQLite store (app/store.h): swing rows from the store's
 * summaries, 3-D models from the cached fused path and analysis events, coach's marks and
 * player records written back, imports in the store's own worker thread. */
#include "arcwise-library-private.h"

#include <math.h>
#include <string.h>

#include "store.h"

#define STORE(src) ((ArcwiseStore *)(src)->store)

ArcwiseLibrarySource *
arcwise_library_source_open_library(const char *path)
{
  g_autofree char *p = NULL;
  gboolean create = path != NULL;
  if (path != NULL)
    p = g_strdup(path);
  else if (g_getenv("ARCWISE_LIBRARY") != NULL && *g_getenv("ARCWISE_LIBRARY") != '\0')
    p = g_strdup(g_getenv("ARCWISE_LIBRARY"));
  else
    p = arcwise_store_default_path();
  /* No library yet: the caller shows the demo until the user makes one with --library. */
  if (!create && !g_file_test(p, G_FILE_TEST_EXISTS))
    return NULL;
  g_autoptr(GError) error = NULL;
  /* A library from a newer Arcwise is still shown (read-only) rather than refused: the coach
   * can look at every swing, and nothing in the file can change (app/store.h). */
  ArcwiseStoreOpenFlags flags = ARCWISE_STORE_OPEN_FALLBACK_READONLY;
  if (create)
    flags |= ARCWISE_STORE_OPEN_CREATE;
  ArcwiseStore *store = arcwise_store_open(p, flags, &error);
  if (store == NULL) {
    g_warning("cannot open the library %s: %s", p, error->message);
    return NULL;
  }
  ArcwiseLibrarySource *src = g_new0(ArcwiseLibrarySource, 1);
  src->kind = ARCWISE_SOURCE_STORE;
  src->path = g_steal_pointer(&p);
  src->store = store;
  src->readonly = arcwise_store_is_readonly(store);
  return src;
}

void
arcwise_library_store_close(ArcwiseLibrarySource *src)
{
  if (src->store != NULL) {
    arcwise_store_close(STORE(src));
    src->store = NULL;
  }
}

/* ---- swings ------------------------------------------------------------------------------- */

typedef struct {
  ArcwiseLibrarySource *src;   /* borrowed: the source outlives the window's items */
  char *path;                  /* the library file, for a worker thread's own connection */
  double club_length_m;
} LoaderData;

static void
loader_data_free(gpointer data)
{
  LoaderData *ld = data;
  g_free(ld->path);
  g_free(ld);
}

static ArcwiseSwingModel *
load_model(ArcwiseStore *store, ArcwiseSwingItem *item, const LoaderData *ld, GError **error)
{
  g_autoptr(ArcwiseSwingDetail) d = arcwise_store_load_swing(store, item->swing_id, error);
  if (d == NULL)
    return NULL;
  if (d->path == NULL || d->path->n < 2) {
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_NOT_FOUND,
                "%s has no fused hand path yet (it will appear after re-analysis)", item->title);
    return NULL;
  }
  ArcwiseSwingEvents ev = { NAN, NAN, NAN, NAN };
  if (d->analysis != NULL) {
    ev.takeaway_s = arcwise_swing_analysis_event(d->analysis, "takeaway");
    ev.top_s = arcwise_swing_analysis_event(d->analysis, "top");
    ev.impact_s = arcwise_swing_analysis_event(d->analysis, "impact");
    ev.finish_s = arcwise_swing_analysis_event(d->analysis, "finish");
  }
  ArcwiseSwingPlacement pl;
  arcwise_swing_placement_default(&pl);
  pl.club_length_m = isfinite(ld->club_length_m) ? ld->club_length_m : 0.0;
  ArcwiseSwingModel *m = arcwise_swing_model_new_from_fused(d->path, d->path->t_s[0],
                                                            d->path->t_s[d->path->n - 1], &ev,
                                                            &pl, error);
  /* The numbers, quality notes and sensor trust the sheet shows are the stored analysis's,
   * never recomputed here. */
  if (m != NULL && d->swing != NULL)
    arcwise_swing_model_set_analysis(m, d->swing);
  return m;
}

/* On the main thread, through the window's connection. */
static ArcwiseSwingModel *
store_loader(ArcwiseSwingItem *item, gpointer data, GError **error)
{
  LoaderData *ld = data;
  if (ld->src->store == NULL) {
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_CLOSED, "the library is closed");
    return NULL;
  }
  return load_model(STORE(ld->src), item, ld, error);
}

/* In a worker thread: a read-only connection of its own (SQLite connections here are opened
 * without a mutex and cache their statements, so the main one is never shared); the window's
 * connection has already brought the file to the current schema. */
static ArcwiseSwingModel *
store_worker_loader(ArcwiseSwingItem *item, gpointer data, GError **error)
{
  LoaderData *ld = data;
  g_autoptr(ArcwiseStore) store = arcwise_store_open(ld->path, ARCWISE_STORE_OPEN_READONLY, error);
  return store ? load_model(store, item, ld, error) : NULL;
}

static char *
join_tags(char **tags)
{
  return tags ? g_strjoinv(", ", tags) : g_strdup("");
}

GPtrArray *
arcwise_library_store_list(ArcwiseLibrarySource *src, GError **error)
{
  ArcwiseStore *store = STORE(src);
  g_autoptr(GPtrArray) players = arcwise_store_list_players(store, error);
  if (players == NULL)
    return NULL;
  g_autoptr(GPtrArray) sessions = arcwise_store_list_sessions(store, 0, error);
  if (sessions == NULL)
    return NULL;
  g_autoptr(GPtrArray) clubs = arcwise_store_list_clubs(store, error);
  if (clubs == NULL)
    return NULL;
  ArcwiseSwingFilter filter;
  arcwise_swing_filter_init(&filter);
  g_autoptr(GPtrArray) rows = arcwise_store_list_swings(store, &filter, error);
  if (rows == NULL)
    return NULL;

  GHashTable *handed = g_hash_table_new(g_int64_hash, g_int64_equal);
  for (guint i = 0; i < players->len; i++) {
    ArcwisePlayer *p = g_ptr_array_index(players, i);
    g_hash_table_insert(handed, &p->id,
                        GINT_TO_POINTER(p->handedness == ARCWISE_HAND_LEFT ? -1 : 1));
  }
  GHashTable *places = g_hash_table_new(g_int64_hash, g_int64_equal);
  for (guint i = 0; i < sessions->len; i++) {
    ArcwiseSession *s = g_ptr_array_index(sessions, i);
    g_hash_table_insert(places, &s->id, s->place);
  }
  GHashTable *club_len = g_hash_table_new(g_int64_hash, g_int64_equal);
  for (guint i = 0; i < clubs->len; i++) {
    ArcwiseClub *c = g_ptr_array_index(clubs, i);
    g_hash_table_insert(club_len, &c->id, &c->length_m);
  }

  GPtrArray *items = g_ptr_array_new_with_free_func(g_object_unref);
  for (guint i = 0; i < rows->len; i++) {
    ArcwiseSwingSummary *s = g_ptr_array_index(rows, i);
    ArcwiseSwingItem *it = arcwise_swing_item_new();
    it->swing_id = s->id;
    it->player_id = s->player_id;
    it->session_id = s->session_id;
    it->player = g_strdup(s->player_name);
    const char *place = g_hash_table_lookup(places, &s->session_id);
    it->session = place && *place ? g_strdup_printf("%s, %s", s->session_date, place)
                                  : g_strdup(s->session_date);
    it->session_date = g_strdup(s->session_date);
    it->session_place = g_strdup(place ? place : "");
    it->club = g_strdup(s->club_kind);
    it->title = s->club_kind ? g_strdup_printf("Swing %u · %s", s->index_in_recording + 1, s->club_kind)
                             : g_strdup_printf("Swing %u", s->index_in_recording + 1);
    it->handed = GPOINTER_TO_INT(g_hash_table_lookup(handed, &s->player_id));
    if (it->handed == 0)
      it->handed = 1;
    it->tempo = s->tempo_ratio;
    it->backswing_s = s->backswing_s;
    it->downswing_s = s->downswing_s;
    it->peak_hand_speed_m_s = s->peak_hand_speed_m_s;
    it->impact_hand_speed_m_s = s->hand_speed_impact_m_s;
    it->practice = s->practice;
    it->quality_notes = s->quality_notes;
    it->rating = s->rating;
    it->reference = s->is_reference;
    it->tags = join_tags(s->tags);
    it->notes = g_strdup(s->notes);
    LoaderData *ld = g_new0(LoaderData, 1);
    ld->src = src;
    ld->path = g_strdup(src->path);
    const double *len = g_hash_table_lookup(club_len, &s->club_id);
    ld->club_length_m = len ? *len : (double)NAN;
    arcwise_swing_item_set_loader(it, store_loader, ld, loader_data_free);
    arcwise_swing_item_set_worker_loader(it, store_worker_loader);
    g_ptr_array_add(items, it);
  }
  g_hash_table_unref(handed);
  g_hash_table_unref(places);
  g_hash_table_unref(club_len);
  return items;
}

GPtrArray *
arcwise_library_store_list_players(ArcwiseLibrarySource *src, GError **error)
{
  g_autoptr(GPtrArray) players = arcwise_store_list_players(STORE(src), error);
  if (players == NULL)
    return NULL;
  GPtrArray *out = g_ptr_array_new_with_free_func(arcwise_player_record_free);
  for (guint i = 0; i < players->len; i++) {
    ArcwisePlayer *p = g_ptr_array_index(players, i);
    ArcwisePlayerRecord *r = g_new0(ArcwisePlayerRecord, 1);
    r->id = p->id;
    r->name = g_strdup(p->name);
    r->handed = p->handedness == ARCWISE_HAND_LEFT ? -1 : 1;
    r->height_m = p->height_m;
    g_ptr_array_add(out, r);
  }
  return out;
}

gboolean
arcwise_library_store_save_marks(ArcwiseLibrarySource *src, ArcwiseSwingItem *item, GError **error)
{
  ArcwiseStore *store = STORE(src);
  g_auto(GStrv) parts = g_strsplit(item->tags ? item->tags : "", ",", -1);
  GPtrArray *tags = g_ptr_array_new();
  for (char **p = parts; *p; p++) {
    g_strstrip(*p);
    if (**p != '\0')
      g_ptr_array_add(tags, *p);
  }
  g_ptr_array_add(tags, NULL);
  gboolean ok = arcwise_store_set_swing_rating(store, item->swing_id, item->rating, error) &&
                arcwise_store_set_swing_reference(store, item->swing_id, item->reference, error) &&
                arcwise_store_set_swing_notes(store, item->swing_id, item->notes ? item->notes : "",
                                              error) &&
                arcwise_store_set_swing_tags(store, item->swing_id,
                                             (const char *const *)tags->pdata, error);
  g_ptr_array_unref(tags);
  return ok;
}

/* ---- players ------------------------------------------------------------------------------ */

/* The store keeps no list of clubs per player; the editor keeps the bag as one plain line of
 * the player's notes, "Clubs: …", which the coach also sees and may edit there. */
#define CLUBS_PREFIX "Clubs: "

gboolean
arcwise_library_store_get_player(ArcwiseLibrarySource *src, gint64 id, ArcwisePlayerRecord *out,
                                 GError **error)
{
  g_autoptr(ArcwisePlayer) p = arcwise_store_get_player(STORE(src), id, error);
  if (p == NULL)
    return FALSE;
  out->id = p->id;
  out->name = g_strdup(p->name);
  out->handed = p->handedness == ARCWISE_HAND_RIGHT ? 1 : p->handedness == ARCWISE_HAND_LEFT ? -1 : 0;
  out->lead_wrist = (int)p->lead_wrist;
  out->height_m = p->height_m;
  out->clubs = NULL;
  g_auto(GStrv) lines = g_strsplit(p->notes ? p->notes : "", "\n", -1);
  for (char **l = lines; *l; l++)
    if (g_str_has_prefix(*l, CLUBS_PREFIX))
      out->clubs = g_strdup(*l + strlen(CLUBS_PREFIX));
  return TRUE;
}

gboolean
arcwise_library_store_save_player(ArcwiseLibrarySource *src, const ArcwisePlayerRecord *r,
                                  GError **error)
{
  g_autoptr(ArcwisePlayer) p = arcwise_store_get_player(STORE(src), r->id, error);
  if (p == NULL)
    return FALSE;
  g_free(p->name);
  p->name = g_strdup(r->name);
  p->handedness = r->handed > 0 ? ARCWISE_HAND_RIGHT : r->handed < 0 ? ARCWISE_HAND_LEFT
                                                                    : ARCWISE_HAND_UNKNOWN;
  p->lead_wrist = (AwWrist)r->lead_wrist;
  p->height_m = r->height_m;
  /* Replace the clubs line of the notes, keep every other line. */
  GString *notes = g_string_new(NULL);
  g_auto(GStrv) lines = g_strsplit(p->notes ? p->notes : "", "\n", -1);
  for (char **l = lines; *l; l++)
    if (!g_str_has_prefix(*l, CLUBS_PREFIX) && (**l != '\0' || l[1] != NULL))
      g_string_append_printf(notes, "%s\n", *l);
  if (r->clubs != NULL && *r->clubs != '\0')
    g_string_append_printf(notes, CLUBS_PREFIX "%s\n", r->clubs);
  while (notes->len > 0 && notes->str[notes->len - 1] == '\n')
    g_string_truncate(notes, notes->len - 1);
  g_free(p->notes);
  p->notes = g_string_free(notes, FALSE);
  return arcwise_store_update_player(STORE(src), p, error);
}

/* ---- import ------------------------------------------------------------------------------- */

typedef struct {
  ArcwiseLibraryProgress progress;
  gpointer data;
} ProgressRelay;

static void
relay_progress(guint done, guint total, const char *what, gpointer data)
{
  ProgressRelay *r = data;
  if (r->progress)
    r->progress(done, total, what, r->data);
}

static void
import_finished(GObject *src, GAsyncResult *res, gpointer data)
{
  GTask *outer = data;
  GError *error = NULL;
  g_autoptr(ArcwiseImportResult) r = arcwise_store_import_finish(res, &error);
  if (r == NULL) {
    g_task_return_error(outer, error);
  } else {
    char *s = g_strdup_printf("Brought in %u recording%s with %u swing%s%s.", r->recordings_added,
                              r->recordings_added == 1 ? "" : "s", r->swings_added,
                              r->swings_added == 1 ? "" : "s",
                              r->recordings_already_present ? " (some were already in the library)" : "");
    g_task_return_pointer(outer, s, g_free);
  }
  g_object_unref(outer);
}

/* Capture pairs from dropped files and folders: a folder is searched the store's way; loose
 * files pair "NAME.imu.csv" with "NAME.depth.csv", or imu.csv with depth.csv in one folder. */
static GPtrArray *
pairs_from_files(GFile **files, guint n, GError **error)
{
  GPtrArray *pairs = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_capture_pair_free);
  GHashTable *loose = g_hash_table_new_full(g_str_hash, g_str_equal, g_free, NULL);
  for (guint i = 0; i < n; i++) {
    g_autofree char *path = g_file_get_path(files[i]);
    if (path == NULL)
      continue;
    if (g_file_test(path, G_FILE_TEST_IS_DIR)) {
      GPtrArray *found = arcwise_capture_pairs_in_folder(path, error);
      if (found == NULL)
        goto fail;
      for (guint k = 0; k < found->len; k++)
        g_ptr_array_add(pairs, g_ptr_array_steal_index(found, k--));
      g_ptr_array_unref(found);
    } else
      g_hash_table_add(loose, g_steal_pointer(&path));
  }
  GHashTableIter it;
  gpointer key;
  g_hash_table_iter_init(&it, loose);
  while (g_hash_table_iter_next(&it, &key, NULL)) {
    const char *p = key;
    char *partner = NULL;
    if (g_str_has_suffix(p, ".imu.csv")) {
      g_autofree char *stem = g_strndup(p, strlen(p) - strlen(".imu.csv"));
      partner = g_strconcat(stem, ".depth.csv", NULL);
    } else if (g_str_has_suffix(p, "/imu.csv")) {
      g_autofree char *dir = g_path_get_dirname(p);
      partner = g_build_filename(dir, "depth.csv", NULL);
    } else if (g_str_has_suffix(p, ".depth.csv") || g_str_has_suffix(p, "/depth.csv")) {
      continue;   /* taken with its IMU file */
    } else {
      g_set_error(error, G_IO_ERROR, G_IO_ERROR_INVALID_FILENAME,
                  "%s: not a capture file (expected NAME.imu.csv and NAME.depth.csv, or a folder)", p);
      goto fail;
    }
    if (!g_file_test(partner, G_FILE_TEST_EXISTS)) {
      g_set_error(error, G_IO_ERROR, G_IO_ERROR_NOT_FOUND, "%s: its depth file %s is missing", p,
                  partner);
      g_free(partner);
      goto fail;
    }
    ArcwiseCapturePair *pair = g_new0(ArcwiseCapturePair, 1);
    pair->imu_path = g_strdup(p);
    pair->depth_path = partner;
    g_ptr_array_add(pairs, pair);
  }
  g_hash_table_unref(loose);
  if (pairs->len == 0) {
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_NOT_FOUND, "no capture files among what was dropped");
    g_ptr_array_unref(pairs);
    return NULL;
  }
  return pairs;
fail:
  g_hash_table_unref(loose);
  g_ptr_array_unref(pairs);
  return NULL;
}

void
arcwise_library_store_import_async(ArcwiseLibrarySource *src, GFile **files, guint n,
                                   gint64 player_id, GCancellable *cancellable, ArcwiseLibraryProgress progress,
                                   gpointer progress_data, GAsyncReadyCallback callback,
                                   gpointer user_data)
{
  GTask *outer = g_task_new(NULL, cancellable, callback, user_data);
  GError *error = NULL;
  GPtrArray *pairs = pairs_from_files(files, n, &error);
  if (pairs == NULL) {
    g_task_return_error(outer, error);
    g_object_unref(outer);
    return;
  }
  ArcwiseImportTarget target;
  arcwise_import_target_init(&target);
  /* Into the player on screen by id, or a new player the coach renames in the player editor. */
  target.player_id = player_id;
  target.player_name = player_id != 0 ? NULL : "New player";
  ProgressRelay *relay = g_new0(ProgressRelay, 1);
  relay->progress = progress;
  relay->data = progress_data;
  arcwise_store_import_async(src->path, &target, pairs, cancellable, relay_progress, relay, g_free,
                             import_finished, outer);
  g_ptr_array_unref(pairs);
}
