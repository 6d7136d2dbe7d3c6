/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-swing-item.h"

#include <math.h>
#include <string.h>

#include "arcwise/analysis.h"

G_DEFINE_FINAL_TYPE(ArcwiseSwingItem, arcwise_swing_item, G_TYPE_OBJECT)

static guint changed_signal;

static void
arcwise_swing_item_finalize(GObject *object)
{
  ArcwiseSwingItem *self = ARCWISE_SWING_ITEM(object);
  g_free(self->player);
  g_free(self->session);
  g_free(self->session_date);
  g_free(self->session_place);
  g_free(self->search_key);
  g_free(self->title);
  g_free(self->club);
  g_free(self->tags);
  g_free(self->notes);
  arcwise_swing_model_free(self->model);
  if (self->loader_destroy != NULL)
    self->loader_destroy(self->loader_data);
  G_OBJECT_CLASS(arcwise_swing_item_parent_class)->finalize(object);
}

static void
arcwise_swing_item_class_init(ArcwiseSwingItemClass *klass)
{
  G_OBJECT_CLASS(klass)->finalize = arcwise_swing_item_finalize;
  changed_signal = g_signal_new("changed", G_TYPE_FROM_CLASS(klass), G_SIGNAL_RUN_LAST, 0, NULL,
                                NULL, NULL, G_TYPE_NONE, 0);
}

static void
arcwise_swing_item_init(ArcwiseSwingItem *self)
{
  self->handed = 1;
  self->tempo = self->backswing_s = self->downswing_s = NAN;
  self->peak_hand_speed_m_s = self->camera_gap_share = self->impact_hand_speed_m_s = NAN;
  self->practice = -1;
  self->quality_notes = -1;
  self->match = TRUE;
}

ArcwiseSwingItem *
arcwise_swing_item_new(void)
{
  return g_object_new(ARCWISE_TYPE_SWING_ITEM, NULL);
}

void
arcwise_swing_item_set_loader(ArcwiseSwingItem *item, ArcwiseSwingLoader loader, gpointer data,
                              GDestroyNotify destroy)
{
  if (item->loader_destroy != NULL)
    item->loader_destroy(item->loader_data);
  item->loader = loader;
  item->loader_data = data;
  item->loader_destroy = destroy;
  item->worker_loader = NULL;
}

void
arcwise_swing_item_set_worker_loader(ArcwiseSwingItem *item, ArcwiseSwingLoader loader)
{
  item->worker_loader = loader;
}

static const char load_tag = 0; /* the tasks' source tag (a data address, not a function) */

static void
load_thread(GTask *task, gpointer source, gpointer data, GCancellable *cancellable)
{
  ArcwiseSwingItem *item = source;
  GError *error = NULL;
  ArcwiseSwingModel *m = item->worker_loader(item, item->loader_data, &error);
  if (m == NULL)
    g_task_return_error(task, error);
  else
    g_task_return_pointer(task, m, (GDestroyNotify)arcwise_swing_model_free);
}

void
arcwise_swing_item_load_model_async(ArcwiseSwingItem *item, GCancellable *cancellable,
                                    GAsyncReadyCallback callback, gpointer user_data)
{
  g_autoptr(GTask) task = g_task_new(item, cancellable, callback, user_data);
  g_task_set_source_tag(task, (gpointer)&load_tag);
  if (item->model == NULL && item->worker_loader != NULL) {
    g_task_run_in_thread(task, load_thread);
    return;
  }
  /* Already loaded, or no thread-safe loader: the finish call loads on the main thread. */
  g_task_return_pointer(task, NULL, NULL);
}

const ArcwiseSwingModel *
arcwise_swing_item_load_model_finish(ArcwiseSwingItem *item, GAsyncResult *result,
                                     GError **error)
{
  g_return_val_if_fail(g_task_is_valid(result, item), NULL);
  GError *e = NULL;
  ArcwiseSwingModel *m = g_task_propagate_pointer(G_TASK(result), &e);
  if (e != NULL) {
    /* A load done on the main thread meanwhile wins over the thread's failure. */
    if (item->model != NULL) {
      g_error_free(e);
      return item->model;
    }
    g_propagate_error(error, e);
    return NULL;
  }
  if (m != NULL && item->model == NULL)
    item->model = m;
  else
    arcwise_swing_model_free(m);
  return arcwise_swing_item_get_model(item, error);
}

const ArcwiseSwingModel *
arcwise_swing_item_get_model(ArcwiseSwingItem *item, GError **error)
{
  if (item->model == NULL && item->loader != NULL)
    item->model = item->loader(item, item->loader_data, error);
  else if (item->model == NULL)
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_NOT_FOUND, "no hand path stored for %s",
                item->title ? item->title : "this swing");
  return item->model;
}

static void
add_key(GString *k, const char *s)
{
  if (s == NULL || *s == '\0')
    return;
  g_autofree char *f = g_utf8_casefold(s, -1);
  g_string_append(k, f);
  g_string_append_c(k, '\x1f');   /* a word never runs across two fields */
}

gboolean
arcwise_swing_item_matches(ArcwiseSwingItem *item, const char *needle)
{
  if (needle == NULL || *needle == '\0')
    return TRUE;
  if (item->search_key == NULL) {
    GString *k = g_string_new(NULL);
    add_key(k, item->player);
    add_key(k, item->session);
    add_key(k, item->title);
    add_key(k, item->club);
    add_key(k, item->tags);
    add_key(k, item->notes);
    item->search_key = g_string_free(k, FALSE);
  }
  return strstr(item->search_key, needle) != NULL;
}

void
arcwise_swing_item_changed(ArcwiseSwingItem *item)
{
  g_clear_pointer(&item->search_key, g_free);
  g_signal_emit(item, changed_signal, 0);
}

gboolean
arcwise_swing_item_has_camera_gaps(ArcwiseSwingItem *item)
{
  if (item->quality_notes >= 0)
    return (item->quality_notes & (AW_NOTE_TOP_HIDDEN | AW_NOTE_FOLLOW_HIDDEN)) != 0;
  return isfinite(item->camera_gap_share) && item->camera_gap_share >= 0.10;
}

gboolean
arcwise_swing_item_has_quality_notes(ArcwiseSwingItem *item)
{
  return item->quality_notes > 0;
}

gboolean
arcwise_swing_item_is_tagged(ArcwiseSwingItem *item)
{
  if (item->tags == NULL)
    return FALSE;
  for (const char *p = item->tags; *p; p++)
    if (*p != ',' && !g_ascii_isspace(*p))
      return TRUE;
  return FALSE;
}
