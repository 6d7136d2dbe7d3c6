/* SPDX-License-Identifier: GPL-3.0-or-later */
/* RGB to BT.709 limited-range yuv420p (see export-yuv.h). Our own loop instead of libswscale:
 * its accurate BT.709 mode with full chroma interpolation took most of a frame's encode time,
 * and this is one pass over the pixels that the compiler keeps in registers. */
#include "export-yuv.h"

#include <string.h>

const ArcwiseRgbLayout arcwise_layout_rgba = { 0, 1, 2 };

ArcwiseRgbLayout
arcwise_layout_cairo(void)
{
  /* Find where the bytes of 0x00RRGGBB land in memory on this machine. */
  const uint32_t word = 0x00010203u;
  uint8_t b[4];
  memcpy(b, &word, 4);
  ArcwiseRgbLayout l = { 0, 0, 0 };
  for (int i = 0; i < 4; i++) {
    if (b[i] == 1)
      l.r = i;
    else if (b[i] == 2)
      l.g = i;
    else if (b[i] == 3)
      l.b = i;
  }
  return l;
}

/* Coefficients times 2^16, with the range scale folded in: luma 219/255, chroma 224/255.
 * Chroma works on sums of four pixels, so its results are shifted by 18 bits. */
#define FIX(x) ((int32_t)((x) * 65536.0 + ((x) < 0 ? -0.5 : 0.5)))
#define KR 0.2126
#define KB 0.0722
#define KG (1.0 - KR - KB)
#define YS (219.0 / 255.0)
#define CS (224.0 / 255.0)
static const int32_t y_r = FIX(YS * KR), y_g = FIX(YS * KG), y_b = FIX(YS * KB);
/* Cb = (B - Y) / (2 (1 - KB)), Cr = (R - Y) / (2 (1 - KR)). */
static const int32_t cb_r = FIX(CS * -KR / (2 * (1 - KB))), cb_g = FIX(CS * -KG / (2 * (1 - KB))),
                     cb_b = FIX(CS * 0.5);
static const int32_t cr_r = FIX(CS * 0.5), cr_g = FIX(CS * -KG / (2 * (1 - KR))),
                     cr_b = FIX(CS * -KB / (2 * (1 - KR)));

void
arcwise_rgb_to_yuv420(const uint8_t *px, size_t stride, ArcwiseRgbLayout L, int width, int height,
                      uint8_t *y_plane, int y_stride, uint8_t *u_plane, int u_stride,
                      uint8_t *v_plane, int v_stride)
{
  const int32_t y_off = (16 << 16) + (1 << 15), c_off = (128 << 18) + (1 << 17);
  for (int row = 0; row + 1 < height; row += 2) {
    const uint8_t *p0 = px + (size_t)row * stride, *p1 = p0 + stride;
    uint8_t *y0 = y_plane + (size_t)row * (size_t)y_stride, *y1 = y0 + y_stride;
    uint8_t *u = u_plane + (size_t)(row / 2) * (size_t)u_stride;
    uint8_t *v = v_plane + (size_t)(row / 2) * (size_t)v_stride;
    for (int x = 0; x + 1 < width; x += 2) {
      const uint8_t *a = p0 + 4 * x, *b = a + 4, *c = p1 + 4 * x, *d = c + 4;
      int32_t ra = a[L.r], ga = a[L.g], ba = a[L.b];
      int32_t rb = b[L.r], gb = b[L.g], bb = b[L.b];
      int32_t rc = c[L.r], gc = c[L.g], bc = c[L.b];
      int32_t rd = d[L.r], gd = d[L.g], bd = d[L.b];
      y0[x] = (uint8_t)((y_r * ra + y_g * ga + y_b * ba + y_off) >> 16);
      y0[x + 1] = (uint8_t)((y_r * rb + y_g * gb + y_b * bb + y_off) >> 16);
      y1[x] = (uint8_t)((y_r * rc + y_g * gc + y_b * bc + y_off) >> 16);
      y1[x + 1] = (uint8_t)((y_r * rd + y_g * gd + y_b * bd + y_off) >> 16);
      int32_t rs = ra + rb + rc + rd, gs = ga + gb + gc + gd, bs = ba + bb + bc + bd;
      u[x / 2] = (uint8_t)((cb_r * rs + cb_g * gs + cb_b * bs + c_off) >> 18);
      v[x / 2] = (uint8_t)((cr_r * rs + cr_g * gs + cr_b * bs + c_off) >> 18);
    }
  }
}
