/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "arcwise-window.h"

G_BEGIN_DECLS

/* Test hook (environment ARCWISE_IMPORT_TEST_DIR=DIR): a drop of capture files onto the window
 * as GTK delivers one - the window's own GtkDropTarget emits "drop" with a GValue holding a
 * GdkFileList of the paths in ARCWISE_IMPORT_TEST_FILES (separated by ':') - into the player
 * row at position ARCWISE_IMPORT_TEST_PLAYER (1-based, every row closed). With
 * ARCWISE_IMPORT_TEST_MODE=cancel the Stop button is pressed at the first progress report
 * between 0 and 1; otherwise the import runs to its end, and the player and its newest session
 * are opened. Writes DIR/import-report.txt (what the progress bar and the label showed, how
 * often the main loop ran while the import worked, the rows after), DIR/after.rows
 * (arcwise_library_browser_describe_rows) and pictures DIR/during.png and DIR/after.png, then
 * quits. tests/ui/check-import.py compares them with the library file read by Python. */
void arcwise_import_test_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution);

G_END_DECLS
