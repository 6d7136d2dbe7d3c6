/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Stills, snapshots and clips of swings drawn by the workbench's 3-D scene renderer
 * (ui/scene), offscreen on EGL's surfaceless platform (Mesa llvmpipe without a GPU works).
 * In a build without the renderer every function fails with a message saying so. Functions
 * here create their own GL context: call them from any one thread at a time, never from inside
 * a GtkGLArea's render callback. */

#include <stdatomic.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "export-clip.h"

#include "arcwise/analysis.h"
#include "arcwise/fusion.h"

/* Draws swing `s` of `path` (its events and span; the path may be longer) from `view`
 * ("face-on", "down-the-line", "above") with the marker at t_s (depth clock), into rgba. */
bool arcwise_export_snapshot(const AwFusedPath *path, const AwSwing *s, const char *view,
                             double t_s, int width, int height, uint8_t *rgba, size_t stride,
                             char *err, size_t err_size);

/* The same, optionally with a compared swing (path_b/swing_b may be NULL), as a PNG file
 * written through a temporary file; an existing file is kept unless force. */
bool arcwise_export_still(const AwFusedPath *path, const AwSwing *s, const AwFusedPath *path_b,
                          const AwSwing *swing_b, const char *view, double t_s, int width,
                          int height, const char *out, bool force, char *err, size_t err_size);

/* Clip defaults, chosen on llvmpipe (figures in `arcwise bench clip`): there 2x multisampling
 * took 70 ms of CPU a frame against 46 ms without, which alone breaks the 10 s budget for 10 s
 * of 720p on two cores, and after H.264 coding of a moving scene the edges of the two looked
 * alike; so clips are drawn without multisampling (`--samples N` asks for it; stills keep 4).
 * x264's "veryfast" preset at constant rate factor 20 keeps the flat-shaded scene and the
 * overlay text sharp at about 0.3 Mbit/s. */
#define ARCWISE_CLIP_SAMPLES_DEFAULT 1
#define ARCWISE_CLIP_PRESET "veryfast"
#define ARCWISE_CLIP_CRF 20

typedef struct {
  const AwFusedPath *path_a;
  const AwSwing *swing_a;
  const AwFusedPath *path_b;     /* NULL: one swing */
  const AwSwing *swing_b;
  const char *view;
  int width, height, fps;
  double slowmo;
  bool overlays;
  const char *player, *date;
  bool imperial;
  int samples;                   /* multisampling, 0 = ARCWISE_CLIP_SAMPLES_DEFAULT */
} ArcwiseClipRequest;

/* Renders and encodes the clip (see export-clip.h for the file rules). progress and cancel may
 * be NULL; the workbench calls this from a worker thread with its own cancel flag. */
bool arcwise_export_clip_swing(const ArcwiseClipRequest *req, const char *out, bool force,
                               ArcwiseClipProgressFunc progress, void *progress_user,
                               const atomic_bool *cancel, ArcwiseClipStats *stats, char *err,
                               size_t err_size);

/* GL_RENDERER of the offscreen context, for benchmark reports ("" before the first use). */
const char *arcwise_export_renderer_name(void);
