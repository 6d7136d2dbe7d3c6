/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "arcwise-application.h"
#include "arcwise-library.h"
#include "arcwise-library-browser.h"
#include "arcwise-stage.h"

G_BEGIN_DECLS

#define ARCWISE_TYPE_WINDOW (arcwise_window_get_type())
G_DECLARE_FINAL_TYPE(ArcwiseWindow, arcwise_window, ARCWISE, WINDOW, GtkApplicationWindow)

ArcwiseWindow *arcwise_window_new(ArcwiseApplication *app);
/* The library to browse (borrowed; outlives the window). */
void arcwise_window_set_source(ArcwiseWindow *self, ArcwiseLibrarySource *source);
/* Re-reads the library (after an import or an edit), keeping the selected swing. */
void arcwise_window_reload(ArcwiseWindow *self);
/* Brings in capture files or folders in a worker thread, with progress and a Stop button. */
void arcwise_window_import_files(ArcwiseWindow *self, GFile **files, guint n);

/* For the scripted smoke test (arcwise-smoke.c). */
void arcwise_window_select_index(ArcwiseWindow *self, guint index);
/* Opens the library tree's player `player` (1-based; 0 closes every row) and then its session
 * `session` (1-based; 0 none); returns the number of swing rows then shown. */
guint arcwise_window_drill(ArcwiseWindow *self, guint player, guint session);
guint arcwise_window_get_n_visible(ArcwiseWindow *self);
ArcwiseLibraryBrowser *arcwise_window_get_browser(ArcwiseWindow *self);
ArcwiseStage *arcwise_window_get_stage(ArcwiseWindow *self);
/* The exports' state (arcwise-export.h), for the export test hook. */
struct _ArcwiseExporter *arcwise_window_get_exporter(ArcwiseWindow *self);
double arcwise_window_get_time(ArcwiseWindow *self);
/* Length of the selected swing's model (s), 0 without one. */
double arcwise_window_get_duration(ArcwiseWindow *self);
gboolean arcwise_window_is_playing(ArcwiseWindow *self);
/* TRUE from a drop or Bring In until the import's result is shown. */
gboolean arcwise_window_is_importing(ArcwiseWindow *self);
guint arcwise_window_get_compare_rows(ArcwiseWindow *self);
void arcwise_window_set_speed_index(ArcwiseWindow *self, guint i);
/* Layout checks for the smoke test: how many cells of the visible sheet page's table reach
 * past the sheet (0 = every figure readable), and whether the view buttons and the layer
 * buttons over the studio view cover each other. */
guint arcwise_window_count_clipped(ArcwiseWindow *self);
/* The swing on screen: its library id (0 = none or a demo swing without one) and model. */
gint64 arcwise_window_get_swing_id(ArcwiseWindow *self);
/* Every single-key binding of the window, as gtk_accelerator_name() spells it (free with
 * g_strfreev). */
char **arcwise_window_list_keys(void);
/* A pending load of the current swing's model is finished first (on the main thread). */
const ArcwiseSwingModel *arcwise_window_get_model(ArcwiseWindow *self);
/* The current swing's model is still loading in its worker thread. */
gboolean arcwise_window_is_loading(ArcwiseWindow *self);
/* No load is pending and the stage has drawn a frame since the current model (or none) went
 * on it: what the window shows is the swing picked. */
gboolean arcwise_window_swing_drawn(ArcwiseWindow *self);
gboolean arcwise_window_bars_overlap(ArcwiseWindow *self);

G_END_DECLS
