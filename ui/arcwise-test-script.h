/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "arcwise-window.h"

G_BEGIN_DECLS

/* Pieces shared by the scripted test hooks (arcwise-smoke.c, arcwise-export-test.c,
 * arcwise-library-test.c, arcwise-import-test.c, arcwise-motion-test.c). */

/* TRUE once the 3-D view has drawn a frame and the swing picked is loaded, or the view failed
 * with an error text. */
gboolean arcwise_test_stage_ready(ArcwiseWindow *win);

/* Presses the first-run caution's default button as a user would, and clears *caution
 * (nothing when it is already NULL). */
void arcwise_test_answer_caution(GtkWindow **caution);

/* Writes report to path (a failure is printed with who as prefix), frees report and quits
 * the window's application. */
void arcwise_test_finish(ArcwiseWindow *win, const char *path, GString *report, const char *who);

/* A PNG of a widget (a whole window, or one widget alone) as drawn now: its GTK snapshot
 * rendered by its window's renderer. Fails with "nothing drawn yet" while the widget waits to
 * be drawn again (right after a change): arcwise_test_picture waits for that. */
gboolean arcwise_widget_save_png(GtkWidget *widget, const char *path, GError **error);

/* The PNG of widget (realized) at path once its window has painted the next frame, trying
 * again after each further frame (up to 30) while the widget has no picture yet; a failure
 * goes to stderr and, where report is not NULL, to it as "png_error=NAME REASON". Then
 * then(data) runs (then may be NULL). */
void arcwise_test_picture(GtkWidget *widget, const char *path, GString *report,
                          GSourceOnceFunc then, gpointer data);

G_END_DECLS
