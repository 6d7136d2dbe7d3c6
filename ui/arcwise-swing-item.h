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
  char *session;           /* e.g. "2026-11-03, studio 2" */
  char *session_date;      /* ISO 8601 date (the store's), for the browser's session rows */
  char *session_place;     /* "" when not given */
  char *title;             /* e.g. "Swing 4 · 7-iron" */
  char *club;
  int handed;              /* +1 right, -1 left */
  /* Key numbers (NaN where unknown), SI. */
  double tempo;
  double backswing_s;
  double downswing_s;
  double peak_hand_speed_m_s;
  double camera_gap_share; /* share of the swing where the camera had lost the hands */
  double impact_hand_speed_m_s;
  int practice;            /* 1 practice swing (no ball contact), 0 struck, -1 unknown */
  int quality_notes;       /* AW_NOTE_* bits of the analysis (analysis.h), -1 unknown */
  /* Coach's marks. */
  int rating;              /* 0 (none) .. 5 */
  gboolean reference;
  char *tags;              /* comma-separated */
  char *notes;

  /* Owned */
  char *search_key;           /* casefolded text the search looks in, made on first search */
  gboolean match;             /* passes the browser's current filters */
  ArcwiseSwingModel *model;   /* loaded on demand */
  ArcwiseSwingLoader loader;
  gpointer loader_data;
  GDestroyNotify loader_destroy;
  /* The same load, safe to run in a worker thread (it touches no main-thread connection and
   * no item field but the immutable ones); NULL where there is none. Shares loader_data. */
  ArcwiseSwingLoader worker_loader;
};

ArcwiseSwingItem *arcwise_swing_item_new(void);
/* Loads (once) and returns the model, owned by the item. */
const ArcwiseSwingModel *arcwise_swing_item_get_model(ArcwiseSwingItem *item, GError **error);
void arcwise_swing_item_set_loader(ArcwiseSwingItem *item, ArcwiseSwingLoader loader,
                                   gpointer data, GDestroyNotify destroy);
/* Also a loader that may run in a worker thread with the same data (set after the loader). */
void arcwise_swing_item_set_worker_loader(ArcwiseSwingItem *item, ArcwiseSwingLoader loader);
/* Loads the model in a GTask thread when the item has a worker loader (else on the main
 * thread, from an idle callback); the item is kept alive meanwhile. The finish call stores
 * the model in the item unless one was loaded there meanwhile (the thread's copy is then
 * dropped), and returns the item's model, or NULL with the error. */
void arcwise_swing_item_load_model_async(ArcwiseSwingItem *item, GCancellable *cancellable,
                                         GAsyncReadyCallback callback, gpointer user_data);
const ArcwiseSwingModel *arcwise_swing_item_load_model_finish(ArcwiseSwingItem *item,
                                                              GAsyncResult *result,
                                                              GError **error);
/* Whether the item matches a search text (player, session, title, club, tags, notes). */
gboolean arcwise_swing_item_matches(ArcwiseSwingItem *item, const char *needle_casefolded);
/* Call after changing the coach's marks (rating, reference, tags, notes): rows showing the
 * item redraw ("changed" signal) and the search sees the new words. */
void arcwise_swing_item_changed(ArcwiseSwingItem *item);
/* The camera lost the hands for a stretch of the swing: the analysis's notes say so (the top
 * or the follow-through hidden), or, for a swing with no stored notes, a tenth or more of its
 * samples had no camera detection (our own threshold). */
gboolean arcwise_swing_item_has_camera_gaps(ArcwiseSwingItem *item);
/* The analysis left a data-quality note of any kind. */
gboolean arcwise_swing_item_has_quality_notes(ArcwiseSwingItem *item);
gboolean arcwise_swing_item_is_tagged(ArcwiseSwingItem *item);

G_END_DECLS
