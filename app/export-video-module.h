/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The MP4 encoder lives in a loadable module (arcwise-video.so, linked to FFmpeg's libav*) so
 * that the program and the workbench start without mapping and relocating FFmpeg and its
 * ~80 codec libraries: only a clip export loads it (export-video-loader.c). The module exports
 * one table of the functions export-video.h declares; the loader checks its ABI number. */

#include "export-video.h"

#define ARCWISE_VIDEO_MODULE_ABI 1
#define ARCWISE_VIDEO_MODULE_SYMBOL "arcwise_video_module"

typedef struct {
  int abi;                   /* ARCWISE_VIDEO_MODULE_ABI of the module's build */
  ArcwiseVideo *(*open)(const char *path, const ArcwiseVideoSettings *s, char *err,
                        size_t err_size);
  bool (*write)(ArcwiseVideo *v, const uint8_t *pixels, size_t stride, char *err,
                size_t err_size);
  void (*times)(const ArcwiseVideo *v, double *convert_s, double *encode_s);
  bool (*close)(ArcwiseVideo *v, char *err, size_t err_size);
  void (*abort)(ArcwiseVideo *v);
  const char *(*encoder_name)(const ArcwiseVideo *v);
} ArcwiseVideoModule;
