/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Library sources for the window: the invented demo library (simulator) and, through
 * arcwise-library-store.c, the SQLite library store. */
#include "arcwise-library.h"

#include <math.h>

#include "arcwise-demo-swings.h"
#include "arcwise-figures.h"
#include "arcwise-library-private.h"

void
arcwise_player_record_clear(ArcwisePlayerRecord *p)
{
  g_clear_pointer(&p->name, g_free);
  g_clear_pointer(&p->clubs, g_free);
}

void
arcwise_player_record_free(gpointer p)
{
  arcwise_player_record_clear(p);
  g_free(p);
}

/* ---- the invented demo library ------------------------------------------------------------ */

typedef struct {
  const char *name;
  int handed;
  double height_m;
  const char *clubs;
} DemoPlayer;

/* Invented people for the demo scenario (Harbour Lane Golf Studio). */
static const DemoPlayer demo_players[] = {
  { "Mira Okafor", 1, 1.68, "driver, 7-iron, pitching wedge" },
  { "Tobias Lind", -1, 1.84, "driver, 6-iron" },
  { "Ana Reyes", 1, 1.61, "3-wood, 8-iron" },
};

typedef struct {
  int player;
  const char *date;
  const char *place;
  const char *club;
  int n;
} DemoSession;

static const DemoSession demo_sessions[] = {
  { 0, "2026-11-03", "studio 2", "7-iron", 4 },
  { 0, "2026-11-17", "studio 2", "driver", 3 },
  { 1, "2026-11-12", "bay 1", "6-iron", 3 },
  { 2, "2026-11-23", "studio 1", "8-iron", 2 },
};

static void
set_session(ArcwiseSwingItem *it, const DemoSession *s)
{
  it->session = g_strdup_printf("%s, %s", s->date, s->place);
  it->session_date = g_strdup(s->date);
  it->session_place = g_strdup(s->place);
}

static ArcwiseSwingModel *
demo_loader(ArcwiseSwingItem *item, gpointer data, GError **error)
{
  guint64 seed = (guint64)GPOINTER_TO_SIZE(data);
  return arcwise_demo_swing_new(seed, item->handed < 0, error);
}

static void
fill_numbers(ArcwiseSwingItem *it, const ArcwiseSwingModel *m)
{
  ArcwiseFigure f[ARCWISE_N_FIGURES];
  arcwise_figures_for_model(m, f);
  it->backswing_s = f[0].value;
  it->downswing_s = f[1].value;
  it->tempo = f[2].value;
  it->peak_hand_speed_m_s = f[3].value;
  size_t occl = 0;
  for (size_t i = 0; i < m->n; i++)
    occl += m->occluded[i] != 0;
  it->camera_gap_share = m->n ? (double)occl / (double)m->n : (double)NAN;
  if (m->analysed.present) {
    it->impact_hand_speed_m_s = m->analysed.metric[AW_METRIC_HAND_SPEED_IMPACT_M_S];
    it->practice = m->analysed.practice;
    it->quality_notes = (int)m->analysed.notes;
  }
}

static GPtrArray *
demo_list(ArcwiseLibrarySource *src, GError **error)
{
  if (src->demo_items != NULL)
    return g_ptr_array_ref(src->demo_items);
  GPtrArray *items = g_ptr_array_new_with_free_func(g_object_unref);
  guint64 seed = 101;
  gint64 swing_id = 1;
  if (src->demo_size > 0) {
    /* The launch benchmark's stand-in: many rows, models made on first display. */
    for (guint i = 0; i < src->demo_size; i++) {
      const DemoSession *s = &demo_sessions[i % G_N_ELEMENTS(demo_sessions)];
      ArcwiseSwingItem *it = arcwise_swing_item_new();
      it->swing_id = swing_id++;
      it->player_id = s->player + 1;
      it->session_id = (gint64)(i % G_N_ELEMENTS(demo_sessions)) + 1;
      it->player = g_strdup(demo_players[s->player].name);
      set_session(it, s);
      it->club = g_strdup(s->club);
      it->handed = demo_players[s->player].handed;
      it->title = g_strdup_printf("Swing %u · %s", i + 1, s->club);
      arcwise_swing_item_set_loader(it, demo_loader, GSIZE_TO_POINTER((gsize)(seed + i)), NULL);
      arcwise_swing_item_set_worker_loader(it, demo_loader); /* the simulator: no shared state */
      g_ptr_array_add(items, it);
    }
    src->demo_items = items;
    return g_ptr_array_ref(items);
  }
  for (guint k = 0; k < G_N_ELEMENTS(demo_sessions); k++) {
    const DemoSession *s = &demo_sessions[k];
    for (int j = 0; j < s->n; j++, seed++) {
      ArcwiseSwingItem *it = arcwise_swing_item_new();
      it->swing_id = swing_id++;
      it->player_id = s->player + 1;
      it->session_id = k + 1;
      it->player = g_strdup(demo_players[s->player].name);
      set_session(it, s);
      it->club = g_strdup(s->club);
      it->handed = demo_players[s->player].handed;
      it->title = g_strdup_printf("Swing %d · %s", j + 1, s->club);
      it->rating = (int)((seed * 7) % 6);
      it->reference = (k == 0 && j == 2);
      it->tags = g_strdup(k == 0 ? "plane work" : "");
      it->notes = g_strdup("");
      arcwise_swing_item_set_loader(it, demo_loader, GSIZE_TO_POINTER((gsize)seed), NULL);
      g_autoptr(GError) e = NULL;
      const ArcwiseSwingModel *m = arcwise_swing_item_get_model(it, &e);
      if (m == NULL) {
        g_propagate_error(error, g_steal_pointer(&e));
        g_object_unref(it);
        g_ptr_array_unref(items);
        return NULL;
      }
      fill_numbers(it, m);
      g_ptr_array_add(items, it);
    }
  }
  src->demo_items = items;
  return g_ptr_array_ref(items);
}

ArcwiseLibrarySource *
arcwise_library_source_new_demo(void)
{
  ArcwiseLibrarySource *src = g_new0(ArcwiseLibrarySource, 1);
  src->kind = ARCWISE_SOURCE_DEMO;
  return src;
}

ArcwiseLibrarySource *
arcwise_library_source_new_demo_sized(guint n)
{
  ArcwiseLibrarySource *src = arcwise_library_source_new_demo();
  src->demo_size = n;
  return src;
}

void
arcwise_library_source_free(ArcwiseLibrarySource *src)
{
  if (src == NULL)
    return;
  g_clear_pointer(&src->demo_items, g_ptr_array_unref);
  arcwise_library_store_close(src);
  g_free(src->path);
  g_free(src);
}

GPtrArray *
arcwise_library_source_list(ArcwiseLibrarySource *src, GError **error)
{
  if (src->kind == ARCWISE_SOURCE_STORE)
    return arcwise_library_store_list(src, error);
  return demo_list(src, error);
}

GPtrArray *
arcwise_library_source_list_players(ArcwiseLibrarySource *src, GError **error)
{
  if (src->kind == ARCWISE_SOURCE_STORE)
    return arcwise_library_store_list_players(src, error);
  GPtrArray *out = g_ptr_array_new_with_free_func(arcwise_player_record_free);
  for (guint i = 0; i < G_N_ELEMENTS(demo_players); i++) {
    ArcwisePlayerRecord *r = g_new0(ArcwisePlayerRecord, 1);
    r->id = (gint64)i + 1;
    r->name = g_strdup(demo_players[i].name);
    r->handed = demo_players[i].handed;
    r->height_m = demo_players[i].height_m;
    g_ptr_array_add(out, r);
  }
  return out;
}

const char *
arcwise_library_source_describe(ArcwiseLibrarySource *src)
{
  return src->kind == ARCWISE_SOURCE_STORE ? src->path : "the invented demo library";
}

gboolean
arcwise_library_source_save_marks(ArcwiseLibrarySource *src, ArcwiseSwingItem *item,
                                  GError **error)
{
  if (src->kind == ARCWISE_SOURCE_STORE)
    return arcwise_library_store_save_marks(src, item, error);
  return TRUE;   /* the demo keeps marks in memory for the session */
}

gboolean
arcwise_library_source_get_player(ArcwiseLibrarySource *src, gint64 id, ArcwisePlayerRecord *out,
                                  GError **error)
{
  if (src->kind == ARCWISE_SOURCE_STORE)
    return arcwise_library_store_get_player(src, id, out, error);
  if (id < 1 || id > (gint64)G_N_ELEMENTS(demo_players)) {
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_NOT_FOUND, "no player %" G_GINT64_FORMAT, id);
    return FALSE;
  }
  const DemoPlayer *p = &demo_players[id - 1];
  out->id = id;
  out->name = g_strdup(p->name);
  out->handed = p->handed;
  out->lead_wrist = p->handed > 0 ? 1 : 2;
  out->height_m = p->height_m;
  out->clubs = g_strdup(p->clubs);
  return TRUE;
}

gboolean
arcwise_library_source_save_player(ArcwiseLibrarySource *src, const ArcwisePlayerRecord *p,
                                   GError **error)
{
  if (src->kind == ARCWISE_SOURCE_STORE)
    return arcwise_library_store_save_player(src, p, error);
  g_set_error(error, G_IO_ERROR, G_IO_ERROR_READ_ONLY,
              "the demo library cannot be changed; open a library of your own with --library");
  return FALSE;
}

void
arcwise_library_source_import_async(ArcwiseLibrarySource *src, GFile **files, guint n,
                                    gint64 player_id, GCancellable *cancellable,
                                    ArcwiseLibraryProgress progress, gpointer progress_data,
                                    GAsyncReadyCallback callback, gpointer user_data)
{
  if (src->kind == ARCWISE_SOURCE_STORE) {
    arcwise_library_store_import_async(src, files, n, player_id, cancellable, progress,
                                       progress_data, callback, user_data);
    return;
  }
  GTask *task = g_task_new(NULL, cancellable, callback, user_data);
  g_task_return_new_error(task, G_IO_ERROR, G_IO_ERROR_READ_ONLY,
                          "the demo library takes no captures; start Arcwise with "
                          "--library FILE to bring captures into a library of your own");
  g_object_unref(task);
}

char *
arcwise_library_source_import_finish(ArcwiseLibrarySource *src, GAsyncResult *res, GError **error)
{
  return g_task_propagate_pointer(G_TASK(res), error);
}

gboolean
arcwise_library_source_is_readonly(ArcwiseLibrarySource *src)
{
  return src != NULL && src->kind == ARCWISE_SOURCE_STORE && src->readonly;
}

const char *
arcwise_library_source_get_path(ArcwiseLibrarySource *src)
{
  return src != NULL && src->kind == ARCWISE_SOURCE_STORE ? src->path : NULL;
}
