/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "arcwise-library.h"

typedef enum { ARCWISE_SOURCE_DEMO = 0, ARCWISE_SOURCE_STORE } ArcwiseSourceKind;

struct _ArcwiseLibrarySource {
  ArcwiseSourceKind kind;
  /* Demo */
  GPtrArray *demo_items;
  guint demo_size;
  /* Store */
  char *path;
  gpointer store;          /* ArcwiseStore *, main-thread connection */
  gboolean readonly;       /* made by a newer Arcwise: opened read-only, every write refused */
};

/* arcwise-library-store.c */
GPtrArray *arcwise_library_store_list(ArcwiseLibrarySource *src, GError **error);
gboolean arcwise_library_store_save_marks(ArcwiseLibrarySource *src, ArcwiseSwingItem *item,
                                          GError **error);
gboolean arcwise_library_store_get_player(ArcwiseLibrarySource *src, gint64 id,
                                          ArcwisePlayerRecord *out, GError **error);
gboolean arcwise_library_store_save_player(ArcwiseLibrarySource *src,
                                           const ArcwisePlayerRecord *p, GError **error);
void arcwise_library_store_import_async(ArcwiseLibrarySource *src, GFile **files, guint n,
                                        gint64 player_id, GCancellable *cancellable,
                                        ArcwiseLibraryProgress progress, gpointer progress_data,
                                        GAsyncReadyCallback callback, gpointer user_data);
void arcwise_library_store_close(ArcwiseLibrarySource *src);
GPtrArray *arcwise_library_store_list_players(ArcwiseLibrarySource *src, GError **error);
void arcwise_player_record_free(gpointer p);
