/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Where the window's swings come from: the library store (app/store.h) or, when no library
 * exists yet, the invented demo library made by the simulator. The window only sees
 * ArcwiseSwingItem rows and these calls. */

#include <gtk/gtk.h>

#include "arcwise-swing-item.h"

G_BEGIN_DECLS

typedef struct _ArcwiseLibrarySource ArcwiseLibrarySource;

typedef void (*ArcwiseLibraryProgress)(guint done, guint total, const char *what, gpointer data);

/* The invented demo library: three players, four sessions, a dozen simulated swings. */
ArcwiseLibrarySource *arcwise_library_source_new_demo(void);
/* A stand-in library of n invented swings whose models are made on first display (for the
 * launch benchmark). */
ArcwiseLibrarySource *arcwise_library_source_new_demo_sized(guint n);
void arcwise_library_source_free(ArcwiseLibrarySource *src);

/* Every swing, as new references in a GPtrArray (free with g_ptr_array_unref). */
GPtrArray *arcwise_library_source_list(ArcwiseLibrarySource *src, GError **error);
/* A short description for the window ("demo library", the file name). */
const char *arcwise_library_source_describe(ArcwiseLibrarySource *src);
/* Stores rating, reference flag, tags and notes of the item. */
gboolean arcwise_library_source_save_marks(ArcwiseLibrarySource *src, ArcwiseSwingItem *item,
                                           GError **error);

/* Imports capture files or folders in a worker thread (GTask) into the player with id
 * player_id (0: a new player the coach renames in the player editor). progress runs in the
 * main context. The finish returns a one-line summary, or NULL with *error (the library is
 * then unchanged). */
void arcwise_library_source_import_async(ArcwiseLibrarySource *src, GFile **files, guint n,
                                         gint64 player_id, GCancellable *cancellable,
                                         ArcwiseLibraryProgress progress, gpointer progress_data,
                                         GAsyncReadyCallback callback, gpointer user_data);
char *arcwise_library_source_import_finish(ArcwiseLibrarySource *src, GAsyncResult *res,
                                           GError **error);

/* Player records for the player editor. */
typedef struct {
  gint64 id;
  char *name;
  int handed;          /* +1 right-handed, -1 left-handed, 0 unknown */
  int lead_wrist;      /* 1 left, 2 right, 0 unknown (AwWrist) */
  double height_m;     /* NaN unknown */
  char *clubs;         /* comma-separated clubs in the bag, e.g. "driver, 7-iron, wedge" */
} ArcwisePlayerRecord;

void arcwise_player_record_clear(ArcwisePlayerRecord *p);
/* Every player of the library, with swings or not (a player just added has none yet), as
 * ArcwisePlayerRecord * (id, name and handedness filled); the array frees its records. */
GPtrArray *arcwise_library_source_list_players(ArcwiseLibrarySource *src, GError **error);
gboolean arcwise_library_source_get_player(ArcwiseLibrarySource *src, gint64 id,
                                           ArcwisePlayerRecord *out, GError **error);
gboolean arcwise_library_source_save_player(ArcwiseLibrarySource *src,
                                            const ArcwisePlayerRecord *p, GError **error);

/* The player editor dialog (name, handedness, lead wrist, height, clubs). `saved` runs with
 * `data` after a successful save. */
void arcwise_player_editor_present(GtkWindow *parent, ArcwiseLibrarySource *src, gint64 player_id,
                                   GCallback saved, gpointer data);

G_END_DECLS

G_BEGIN_DECLS
/* The library at `path` (NULL: the default library), or NULL when there is none yet (the
 * caller then falls back to the demo). A library that exists but cannot be opened is reported
 * with g_warning and also gives NULL. */
ArcwiseLibrarySource *arcwise_library_source_open_library(const char *path);
/* TRUE when the source refuses every write (a library made by a newer Arcwise). */
gboolean arcwise_library_source_is_readonly(ArcwiseLibrarySource *src);
/* The library file of a stored library, NULL for the invented demo. */
const char *arcwise_library_source_get_path(ArcwiseLibrarySource *src);
G_END_DECLS
