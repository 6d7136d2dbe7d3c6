/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "arcwise-window.h"

G_BEGIN_DECLS

/* Test hook (environment ARCWISE_LIBRARY_TEST_DIR=DIR): a scripted walk through the library
 * browser - acknowledge the caution, open the first player and the first session, filter by
 * the club given in ARCWISE_LIBRARY_TEST_CLUB, by camera gaps, by practice swings, search for
 * ARCWISE_LIBRARY_TEST_SEARCH, clear, step with the keyboard's next-swing action - writing the
 * rows shown after each step (arcwise_library_browser_describe_rows) to DIR/STEP.rows, a
 * picture of the whole window to DIR/STEP.png, and DIR/library-report.txt, then quits.
 * tests/ui/check-library.py compares the rows with the library's SQLite file. */
void arcwise_library_test_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution);

G_END_DECLS
