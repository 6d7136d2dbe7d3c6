/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "arcwise-window.h"

G_BEGIN_DECLS

/* Pieces shared by the scripted test hooks (arcwise-smoke.c, arcwise-export-test.c,
 * arcwise-library-test.c). */

/* TRUE once the 3-D view has drawn a frame and the swing picked is loaded, or the view failed
 * with an error text. */
gboolean arcwise_test_stage_ready(ArcwiseWindow *win);

/* Presses the first-run caution's default button as a user would, and clears *caution
 * (nothing when it is already NULL). */
void arcwise_test_answer_caution(GtkWindow **caution);

/* Writes report to path (a failure is printed with who as prefix), frees report and quits
 * the window's application. */
void arcwise_test_finish(ArcwiseWindow *win, const char *path, GString *report, const char *who);

G_END_DECLS
