/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Clip export: frames from a renderer (the 3-D scene offscreen, or any function that fills an
 * RGBA buffer), overlays drawn with cairo (player, date, phase, hand speed at the marker,
 * trust strip, slow-motion factor, the estimate caution), encoded to MP4 by export-video.
 * Runs on any thread; progress goes to a callback and a cancel flag stops it cleanly (the
 * partial file is removed and any earlier file is left as it was). */

#include <stdatomic.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#include "display-units.h"

/* Fills `rgba` (width x height, rows `stride` apart, top row first, bytes R G B A) with the
 * scene at swing times t_s[0] (swing A) and t_s[1] (swing B, NaN without one). Returns false
 * with a message in err to stop the export. */
typedef bool (*ArcwiseClipRenderFunc)(void *user, const double t_s[2], uint8_t *rgba, int width,
                                      int height, size_t stride, char *err, size_t err_size);

/* A renderer that works one frame ahead, so that reading a frame back overlaps drawing the next
 * (the scene renderer reads into pixel buffer objects): submit() starts the frame at times
 * t_s[2] (as above); fetch() waits for the oldest submitted frame and copies it into `xrgb` in
 * cairo's native layout (32-bit words 0xAARRGGBB, alpha ignored), top row first. Frames are
 * fetched in the order submitted, at most two being outstanding. */
typedef struct {
  bool (*submit)(void *user, const double t_s[2], char *err, size_t err_size);
  bool (*fetch)(void *user, uint8_t *xrgb, size_t stride, char *err, size_t err_size);
  void *user;
} ArcwiseClipPipe;

/* Called after each frame is encoded with the share done (0..1], always increasing, on the
 * thread that called arcwise_clip_export(). */
typedef void (*ArcwiseClipProgressFunc)(void *user, double fraction);

/* A swing as the overlays need it: per-sample arrays on its own clock (borrowed). Phases use
 * the index order address, backswing, downswing, follow-through, finish. */
typedef struct {
  size_t n;
  const float *t_s;
  const float *speed_m_s;        /* hand speed */
  const unsigned char *phase;    /* 0..4 */
  const float *cam_share;        /* 0..1 share of position information from the camera */
  double t0_s, t1_s;             /* the span to show */
  double align_s;                /* the instant matched between two swings (impact) */
  const char *name;              /* e.g. "Swing 3, 7-iron"; may be NULL */
} ArcwiseClipSwing;

typedef struct {
  int width, height;             /* 1280x720 or 1920x1080 (any even size works) */
  int fps;                       /* of the file, usually 30 */
  double slowmo;                 /* >= 1: seconds of video per second of swing */
  const char *player;            /* overlay text; may be NULL */
  const char *date;              /* overlay text; may be NULL */
  const char *view_name;         /* "face-on", "down-the-line", ... */
  ArcwiseUnits units;
  bool overlays;                 /* false: the bare scene */
  ArcwiseClipSwing a;            /* the swing under study */
  const ArcwiseClipSwing *b;     /* overlaid comparison swing, or NULL */
  ArcwiseClipRenderFunc render; /* either this ... */
  void *render_user;
  const ArcwiseClipPipe *pipe;   /* ... or this (used when render is NULL) */
  ArcwiseClipProgressFunc progress;  /* may be NULL */
  void *progress_user;
  const atomic_bool *cancel;     /* may be NULL; set it from any thread to stop */
  int crf;                       /* 0 = default */
  const char *preset;            /* NULL = default */
} ArcwiseClipSpec;

/* The export runs as two threads: the caller's renders and reads frames back; a worker draws
 * the overlays, converts to yuv420p and feeds the encoder (libx264 has threads of its own).
 * Frames pass between them through a bounded queue of ARCWISE_CLIP_QUEUE buffers. */
#define ARCWISE_CLIP_QUEUE 4

typedef struct {
  size_t frames;
  double video_s;
  /* Wall-clock seconds spent in each stage, summed over the frames. render and readback run
   * on the caller's thread, the others on the worker, so they overlap: wall_s is less than
   * their sum when the pipeline works. */
  double render_s, readback_s, overlay_s, convert_s, encode_s;
  double wait_s;                 /* the caller's thread waiting for a free buffer */
  double wall_s, cpu_s;          /* the whole export: wall clock and process CPU (all threads) */
  const char *encoder;
} ArcwiseClipStats;

/* Number of frames the clip will have. */
size_t arcwise_clip_frame_count(const ArcwiseClipSpec *spec);

/* Writes the clip to `path` through a temporary file. Refuses an existing file unless force.
 * On cancel returns false with "cancelled" in err and leaves no file behind. */
bool arcwise_clip_export(const ArcwiseClipSpec *spec, const char *path, bool force,
                         ArcwiseClipStats *stats, char *err, size_t err_size);

/* Phase names as the overlays print them. */
const char *arcwise_clip_phase_name(unsigned phase);
