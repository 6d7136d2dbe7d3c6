/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* 8-bit RGB to Y'CbCr 4:2:0 (planar, "yuv420p") with the ITU-R BT.709 matrix and limited
 * ("studio") range, the form H.264 players expect for HD video:
 *   E'Y = 0.2126 R + 0.7152 G + 0.0722 B,  E'Cb = (B - E'Y) / 1.8556,  E'Cr = (R - E'Y) / 1.5748
 *   Y = 16 + 219 E'Y,  Cb = 128 + 224 E'Cb,  Cr = 128 + 224 E'Cr   (R, G, B in 0..1)
 * Each chroma sample is computed from the mean R, G, B of its 2x2 block (centre siting).
 * Fixed point with 16 fractional bits, so every value is within one level of the exact
 * formula rounded (tests/export/test-export-yuv checks it against numpy). */

#include <stddef.h>
#include <stdint.h>

typedef struct {
  int r, g, b;                   /* byte offsets of the channels within a 4-byte pixel */
} ArcwiseRgbLayout;

/* Byte order R, G, B, A (GL read-back as GL_RGBA). */
extern const ArcwiseRgbLayout arcwise_layout_rgba;
/* cairo's native-endian 32-bit 0x00RRGGBB / 0xAARRGGBB words on this machine. */
ArcwiseRgbLayout arcwise_layout_cairo(void);

/* Converts a width x height image (both even), rows `stride` bytes apart, top row first, into
 * the three planes (rows y_stride, u_stride, v_stride bytes apart). */
void arcwise_rgb_to_yuv420(const uint8_t *px, size_t stride, ArcwiseRgbLayout layout, int width,
                           int height, uint8_t *y_plane, int y_stride, uint8_t *u_plane,
                           int u_stride, uint8_t *v_plane, int v_stride);
