/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The library source backed by the SQLite store (app/store.h). Placeholder until the store
 * module lands on main: every call reports that no store is built in. */
#include "arcwise-library-private.h"

static gboolean
no_store(GError **error)
{
  g_set_error(error, G_IO_ERROR, G_IO_ERROR_NOT_SUPPORTED, "this build has no library store");
  return FALSE;
}

GPtrArray *
arcwise_library_store_list(ArcwiseLibrarySource *src, GError **error)
{
  no_store(error);
  return NULL;
}

gboolean
arcwise_library_store_save_marks(ArcwiseLibrarySource *src, ArcwiseSwingItem *item, GError **error)
{
  return no_store(error);
}

gboolean
arcwise_library_store_get_player(ArcwiseLibrarySource *src, gint64 id, ArcwisePlayerRecord *out,
                                 GError **error)
{
  return no_store(error);
}

gboolean
arcwise_library_store_save_player(ArcwiseLibrarySource *src, const ArcwisePlayerRecord *p,
                                  GError **error)
{
  return no_store(error);
}

void
arcwise_library_store_import_async(ArcwiseLibrarySource *src, GFile **files, guint n,
                                   GCancellable *cancellable, ArcwiseLibraryProgress progress,
                                   gpointer progress_data, GAsyncReadyCallback callback,
                                   gpointer user_data)
{
  GTask *task = g_task_new(NULL, cancellable, callback, user_data);
  g_task_return_new_error(task, G_IO_ERROR, G_IO_ERROR_NOT_SUPPORTED,
                          "this build has no library store");
  g_object_unref(task);
}

void
arcwise_library_store_close(ArcwiseLibrarySource *src)
{
}

ArcwiseLibrarySource *
arcwise_library_source_open_library(const char *path)
{
  if (path != NULL)
    g_warning("this build has no library store; showing the demo library instead of %s", path);
  return NULL;
}
