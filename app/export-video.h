/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* H.264 in MP4 through FFmpeg's libavcodec (libx264), libavformat, with our own RGB to yuv420p conversion (export-yuv.h): yuv420p,
 * High profile, BT.709 tags and the index at the front ("faststart"), which is what phones and
 * browsers play. Frames go in as 8-bit RGBA or in cairo's native ARGB32 layout. */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

typedef struct ArcwiseVideo ArcwiseVideo;

typedef enum {
  ARCWISE_PIXELS_RGBA = 0,   /* bytes R, G, B, A (GL read-back) */
  ARCWISE_PIXELS_CAIRO,      /* CAIRO_FORMAT_ARGB32/RGB24: native-endian 32-bit 0xAARRGGBB */
} ArcwisePixels;

typedef struct {
  int width, height;         /* even numbers (4:2:0 chroma), at most 4096 */
  int fps;                   /* frames per second of the file */
  int crf;                   /* x264 constant rate factor: 18 visually lossless .. 28 small; 0 = 20 */
  const char *preset;        /* x264 speed preset; NULL = "veryfast" */
  ArcwisePixels pixels;
} ArcwiseVideoSettings;

/* Opens `path` (written directly: callers give a temporary path and rename it). NULL with a
 * message in err when no H.264 encoder is available or the file cannot be created. */
ArcwiseVideo *arcwise_video_open(const char *path, const ArcwiseVideoSettings *s, char *err,
                                 size_t err_size);

/* Encodes one frame of width x height pixels, rows `stride` bytes apart, top row first. */
bool arcwise_video_write(ArcwiseVideo *v, const uint8_t *pixels, size_t stride, char *err,
                         size_t err_size);

/* Wall-clock seconds spent so far converting to yuv420p and inside the encoder (the flush at
 * close is not counted). */
void arcwise_video_times(const ArcwiseVideo *v, double *convert_s, double *encode_s);

/* Flushes the encoder, writes the trailer, closes the file and frees v (also on failure). */
bool arcwise_video_close(ArcwiseVideo *v, char *err, size_t err_size);

/* Frees v without finishing the file (the caller removes it). NULL does nothing. */
void arcwise_video_abort(ArcwiseVideo *v);

/* The encoder's name ("libx264"), for reports. */
const char *arcwise_video_encoder_name(const ArcwiseVideo *v);
