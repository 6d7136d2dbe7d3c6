/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The workbench's exports: clips and stills of what the studio view shows (drawn offscreen in a
 * worker thread by the same scene renderer), numbers and the session report (by the program's
 * own `arcwise export` command, run as a child process so that a cancelled export can be
 * stopped at once). One export at a time, shown in a bar with progress and a Cancel button;
 * an existing file is replaced only after the coach says so. */

#include <gtk/gtk.h>

#include "arcwise-scene.h"
#include "arcwise-swing-model.h"

G_BEGIN_DECLS

typedef struct _ArcwiseExporter ArcwiseExporter;

/* What the window shows when an export starts; copied, so the window may change at once. */
typedef struct {
  const ArcwiseSwingModel *a;         /* NULL: nothing selected */
  const ArcwiseSwingModel *b;         /* laid over a (already placed), or NULL */
  ArcwiseCamera camera;
  ArcwiseSceneOptions options;        /* marker_t_s holds the current times of a and b */
  const char *view_name;
  gboolean imperial;
  const char *player, *date, *title;  /* overlay and file-name texts, may be NULL */
  gint64 swing_id, session_id;        /* 0 outside a stored library */
  const char *library_path;           /* NULL for the invented demo library */
  int view_width, view_height;        /* the studio view's size in pixels */
} ArcwiseExportScene;

typedef enum {
  ARCWISE_EXPORT_CLIP,
  ARCWISE_EXPORT_STILL,
  ARCWISE_EXPORT_NUMBERS,
  ARCWISE_EXPORT_REPORT,
} ArcwiseExportKind;

typedef struct {
  ArcwiseExportKind kind;
  int width, height;                  /* clip or still size */
  double slowmo;                      /* clip */
  gboolean json;                      /* numbers: JSON instead of CSV */
  const char *scope;                  /* numbers: "swing", "session" or "player" */
} ArcwiseExportChoice;

/* The bar widgets come from the window's template (borrowed). */
ArcwiseExporter *arcwise_exporter_new(GtkWindow *parent, GtkRevealer *bar, GtkLabel *label,
                                      GtkProgressBar *progress, GtkButton *cancel);
/* Cancels a running export (its partial file is removed) and frees everything. */
void arcwise_exporter_free(ArcwiseExporter *ex);

/* Starts an export. `path` NULL or "": ask with a file chooser first. An existing file is
 * replaced only after a yes in a question dialog. Returns FALSE (with the reason in the bar)
 * when another export runs or there is nothing to export. */
gboolean arcwise_exporter_start(ArcwiseExporter *ex, const ArcwiseExportScene *scene,
                                const ArcwiseExportChoice *choice, const char *path);
void arcwise_exporter_cancel(ArcwiseExporter *ex);

/* For tests: whether an export (or its question) is under way, the last result's text, and
 * the question dialog while it is open (NULL otherwise). */
gboolean arcwise_exporter_busy(ArcwiseExporter *ex);
const char *arcwise_exporter_last_message(ArcwiseExporter *ex);
gboolean arcwise_exporter_last_ok(ArcwiseExporter *ex);
double arcwise_exporter_fraction(ArcwiseExporter *ex);
GtkWindow *arcwise_exporter_question(ArcwiseExporter *ex);

G_END_DECLS
