/* SPDX-License-Identifier: GPL-3.0-or-later */
/* RGB to yuv420p (app/export-yuv.c). This program checks the anchor values that follow
 * directly from ITU-R BT.709-6 (Part 2, items 3.2-3.5 and 4.6: black 16, nominal peak 235,
 * colour difference 128 +- 112) and writes a test image with its conversion for
 * test-export-yuv.py, which recomputes every sample with numpy. Usage: test-export-yuv OUTDIR */
#include "testutil.h"

#include "export-yuv.h"

#include <stdint.h>
#include <string.h>

#define W 258
#define H 130

static uint8_t img[H][W][4];
static uint8_t yp[H][W], up[H / 2][W / 2], vp[H / 2][W / 2];

/* One flat colour through the converter: the Y, Cb, Cr of a 2x2 block. */
static void
flat(uint8_t r, uint8_t g, uint8_t b, int out[3])
{
  uint8_t px[2][2][4], y[2][2], u[1], v[1];
  for (int i = 0; i < 2; i++)
    for (int j = 0; j < 2; j++) {
      px[i][j][0] = r;
      px[i][j][1] = g;
      px[i][j][2] = b;
      px[i][j][3] = 255;
    }
  arcwise_rgb_to_yuv420(&px[0][0][0], 8, arcwise_layout_rgba, 2, 2, &y[0][0], 2, u, 1, v, 1);
  AW_CHECK(y[0][0] == y[1][1] && y[0][1] == y[1][0] && y[0][0] == y[0][1]);
  out[0] = y[0][0];
  out[1] = u[0];
  out[2] = v[0];
}

static uint32_t
rnd(uint32_t *s)
{
  *s = *s * 1664525u + 1013904223u; /* Numerical Recipes' LCG: any fixed sequence will do */
  return *s >> 24;
}

int
main(int argc, char **argv)
{
  if (argc < 2)
    return 2;
  int c[3];
  /* Black and white: Y 16 and 235, Cb = Cr = 128 (BT.709-6 item 4.6). */
  flat(0, 0, 0, c);
  AW_CHECK(c[0] == 16 && c[1] == 128 && c[2] == 128);
  flat(255, 255, 255, c);
  AW_CHECK(c[0] == 235 && c[1] == 128 && c[2] == 128);
  /* Primaries, from E'Y = 0.2126 R + 0.7152 G + 0.0722 B, E'Cb = (B - E'Y) / 1.8556,
   * E'Cr = (R - E'Y) / 1.5748 (items 3.2 and 3.3), quantised as in item 4.6:
   * red  Y = 16 + 219 * 0.2126 = 62.56, Cb = 128 - 224 * 0.2126 / 1.8556 = 102.34, Cr = 240;
   * green Y = 172.63, Cb = 41.66, Cr = 26.27; blue Y = 31.81, Cb = 240, Cr = 117.73. */
  flat(255, 0, 0, c);
  AW_CHECK(c[0] == 63 && c[1] == 102 && c[2] == 240);
  flat(0, 255, 0, c);
  AW_CHECK(c[0] == 173 && c[1] == 42 && c[2] == 26);
  flat(0, 0, 255, c);
  AW_CHECK(c[0] == 32 && c[1] == 240 && c[2] == 118);

  /* A test image: random pixels, ramps and flat patches; converted in both byte layouts. */
  uint32_t seed = 12345;
  for (int y = 0; y < H; y++)
    for (int x = 0; x < W; x++) {
      uint8_t *p = img[y][x];
      if (y < H / 2) {
        p[0] = (uint8_t)rnd(&seed);
        p[1] = (uint8_t)rnd(&seed);
        p[2] = (uint8_t)rnd(&seed);
      } else {
        p[0] = (uint8_t)(x % 256);
        p[1] = (uint8_t)((y * 2) % 256);
        p[2] = (uint8_t)(255 - x % 256);
      }
      p[3] = 255;
    }
  arcwise_rgb_to_yuv420(&img[0][0][0], W * 4, arcwise_layout_rgba, W, H, &yp[0][0], W,
                        &up[0][0], W / 2, &vp[0][0], W / 2);
  /* The same image as cairo words must give the same planes. */
  static uint8_t words[H][W][4], y2[H][W], u2[H / 2][W / 2], v2[H / 2][W / 2];
  for (int y = 0; y < H; y++)
    for (int x = 0; x < W; x++) {
      const uint8_t *p = img[y][x];
      uint32_t w = 0xff000000u | (uint32_t)p[0] << 16 | (uint32_t)p[1] << 8 | p[2];
      memcpy(words[y][x], &w, 4);
    }
  arcwise_rgb_to_yuv420(&words[0][0][0], W * 4, arcwise_layout_cairo(), W, H, &y2[0][0], W,
                        &u2[0][0], W / 2, &v2[0][0], W / 2);
  AW_CHECK(memcmp(yp, y2, sizeof yp) == 0 && memcmp(up, u2, sizeof up) == 0 &&
           memcmp(vp, v2, sizeof vp) == 0);

  char path[1024];
  snprintf(path, sizeof path, "%s/yuv.bin", argv[1]);
  FILE *f = fopen(path, "wb");
  AW_CHECK(f != NULL);
  if (f != NULL) {
    AW_CHECK(fwrite(img, sizeof img, 1, f) == 1 && fwrite(yp, sizeof yp, 1, f) == 1 &&
             fwrite(up, sizeof up, 1, f) == 1 && fwrite(vp, sizeof vp, 1, f) == 1);
    AW_CHECK(fclose(f) == 0);
  }
  printf("%d %d\n", W, H);
  return AW_TEST_END();
}
