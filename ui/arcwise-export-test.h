/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "arcwise-window.h"

G_BEGIN_DECLS

/* Test hook (environment ARCWISE_EXPORT_TEST_DIR=DIR): acknowledges the first-run caution,
 * selects the first swing and drives the export actions with targets in DIR — a 640x360 still
 * (still.png), the same with a second swing laid over (compare.png), a 720p clip in real time
 * with the second swing still laid over (clip.mp4), a slow clip cancelled part-way
 * (cancelled.mp4, which must not exist afterwards),
 * and a second still onto still.png answered "keep" — then writes DIR/export-report.txt
 * (key=value lines) and quits. With ARCWISE_EXPORT_TEST_STORE=1 (a stored library open) it
 * saves instead the session's numbers (session.csv), the swing's (swing.json), the session
 * report (report.pdf) and a report cancelled at once (cancelled.pdf, must not exist).
 * tests/ui/check-export.py judges the files and the report. */
void arcwise_export_test_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution);

G_END_DECLS
