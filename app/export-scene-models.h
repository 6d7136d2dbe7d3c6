/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Clips and stills of swings as the workbench already holds them (scene models, with the
 * user's camera and drawing options), for the window's export actions. GUI builds only: the
 * header needs the scene renderer's types. Same file rules as export-scene.h (temporary file
 * and rename, an existing file kept unless force, nothing left behind on cancel). The models
 * are copied before any work, so the caller may free or change its own at once; call from a
 * worker thread, never from a GtkGLArea callback (these functions make their own context). */

#include "export-scene.h"

#include "arcwise-scene.h"
#include "arcwise-swing-model.h"

typedef struct {
  const ArcwiseSwingModel *a;         /* the swing under study */
  const ArcwiseSwingModel *b;         /* laid over it, or NULL */
  const ArcwiseCamera *camera;        /* NULL: the preset of view_name */
  const ArcwiseSceneOptions *options; /* NULL: the exporter's defaults (trust band on) */
  const char *view_name;              /* "face-on", "down-the-line", "above", "free" */
  int width, height, fps;
  double slowmo;
  bool overlays;
  const char *player, *date;
  bool imperial;
  int samples;                        /* 0 = ARCWISE_CLIP_SAMPLES_DEFAULT (clips), 4 (stills) */
} ArcwiseModelExport;

bool arcwise_export_clip_models(const ArcwiseModelExport *req, const char *out, bool force,
                                ArcwiseClipProgressFunc progress, void *progress_user,
                                const atomic_bool *cancel, ArcwiseClipStats *stats, char *err,
                                size_t err_size);

/* One frame with the markers at t_a (a's clock) and t_b (b's clock, NaN hides it) as a PNG. */
bool arcwise_export_still_models(const ArcwiseModelExport *req, double t_a, double t_b,
                                 const char *out, bool force, char *err, size_t err_size);
