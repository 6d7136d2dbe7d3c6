/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "arcwise-window.h"

G_BEGIN_DECLS

/* Test hook (environment ARCWISE_SMOKE_DIR=DIR): runs a scripted session in the window —
 * acknowledge the first-run caution, select a swing, play it, change views, show the trust
 * band, lay a second swing over it, enter presentation mode, open the shortcuts window — and
 * writes a PNG of the 3-D view after each step plus DIR/report.txt (key=value lines), then
 * quits. tests/ui/check-smoke.py checks the pixels and the report. */
void arcwise_smoke_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution);

G_END_DECLS
