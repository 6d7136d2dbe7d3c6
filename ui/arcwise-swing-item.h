/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gio/gio.h>

#include "arcwise-swing-model.h"

G_BEGIN_DECLS

/* One row of the library browser: a swing with its player, session and key numbers, and the
 * way to load its 3-D model. Items come from the library store (or the invented demo). */
#define ARCWISE_TYPE_SWING_ITEM (arcwise_swing_item_get_type())
G_DECLARE_FINAL_TYPE(ArcwiseSwingItem, arcwise_swing_item, ARCWISE, SWING_ITEM, GObject)

typedef ArcwiseSwingModel *(*ArcwiseSwingLoader)(ArcwiseSwingItem *item, gpointer data,
                                                 GError **error);

struct _ArcwiseSwingItem {
  GObject parent_instance;

  gint64 swing_id;
  gint64 player_id;
  gint64 session_id;
  char *player;            /* display name */
  char *session;           /* e.g. "Tue 3 Nov, studio 2" */
  char *title;             /* e.g. "Swing 4 · 7-iron" */
  char *club;
  int handed;              /* +1 right, -1 left */
  /* Key numbers (NaN where unknown), SI. */
  double tempo;
  double backswing_s;
  double downswing_s;
  double peak_hand_speed_m_s;
  double camera_gap_share; /* share of the swing where the camera had lost the hands */
  /* Coach's marks. */
  int rating;              /* 0 (none) .. 5 */
  gboolean reference;
  char *tags;              /* comma-separated */
  char *notes;

  /* Owned */
  ArcwiseSwingModel *model;   /* loaded on demand */
  ArcwiseSwingLoader loader;
  gpointer loader_data;
  GDestroyNotify loader_destroy;
};

ArcwiseSwingItem *arcwise_swing_item_new(void);
/* Loads (once) and returns the model, owned by the item. */
const ArcwiseSwingModel *arcwise_swing_item_get_model(ArcwiseSwingItem *item, GError **error);
void arcwise_swing_item_set_loader(ArcwiseSwingItem *item, ArcwiseSwingLoader loader,
                                   gpointer data, GDestroyNotify destroy);
/* Whether the item matches a search text (player, session, title, club, tags, notes). */
gboolean arcwise_swing_item_matches(ArcwiseSwingItem *item, const char *needle_casefolded);

G_END_DECLS
