/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-swing-item.h"

#include <math.h>
#include <string.h>

G_DEFINE_FINAL_TYPE(ArcwiseSwingItem, arcwise_swing_item, G_TYPE_OBJECT)

static void
arcwise_swing_item_finalize(GObject *object)
{
  ArcwiseSwingItem *self = ARCWISE_SWING_ITEM(object);
  g_free(self->player);
  g_free(self->session);
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
}

static void
arcwise_swing_item_init(ArcwiseSwingItem *self)
{
  self->handed = 1;
  self->tempo = self->backswing_s = self->downswing_s = NAN;
  self->peak_hand_speed_m_s = self->camera_gap_share = NAN;
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

static gboolean
has(const char *hay, const char *needle)
{
  if (hay == NULL)
    return FALSE;
  g_autofree char *f = g_utf8_casefold(hay, -1);
  return strstr(f, needle) != NULL;
}

gboolean
arcwise_swing_item_matches(ArcwiseSwingItem *item, const char *needle)
{
  if (needle == NULL || *needle == '\0')
    return TRUE;
  return has(item->player, needle) || has(item->session, needle) || has(item->title, needle) ||
         has(item->club, needle) || has(item->tags, needle) || has(item->notes, needle);
}
