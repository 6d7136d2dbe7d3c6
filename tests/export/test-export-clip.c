/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Clip export with frames drawn here (flat colours that change with the swing time, so the
 * decoded file shows both the pixels and the frame order), written as MP4 and then checked by
 * test-export-clip.py with FFmpeg's own ffprobe/ffmpeg. This program also checks the
 * never-overwrite rule and cancelling. Usage: test-export-clip OUTDIR */
#include "testutil.h"

#include "export-clip.h"
#include "export-file.h"

#include <stdatomic.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#define N 200

static float t_s[N], speed[N], share[N];
static unsigned char phase[N];

/* Background colour as a function of the swing time: the decoder check recomputes it. */
static bool
render(void *user, const double t[2], uint8_t *rgba, int w, int h, size_t stride, char *err,
       size_t n)
{
  int k = (int)lround(t[0] * 100.0); /* swing sample index at 100 Hz */
  uint8_t r = (uint8_t)(40 + (k * 5) % 200), g = 128, b = (uint8_t)(220 - (k * 3) % 200);
  for (int y = 0; y < h; y++) {
    uint8_t *row = rgba + (size_t)y * stride;
    for (int x = 0; x < w; x++) {
      uint8_t *p = row + 4 * (size_t)x;
      bool box = x >= w / 4 && x < w / 2 && y >= h / 4 && y < h / 2;
      p[0] = box ? 250 : r;
      p[1] = box ? 250 : g;
      p[2] = box ? 20 : b;
      p[3] = 255;
    }
  }
  int *calls = user;
  (*calls)++;
  return true;
}

static atomic_bool cancel_flag;
static void
progress(void *user, double f)
{
  double *last = user;
  AW_CHECK(f > *last && f <= 1.0);
  *last = f;
  if (f > 0.3)
    atomic_store(&cancel_flag, true);
}

int
main(int argc, char **argv)
{
  if (argc < 2)
    return 2;
  for (int i = 0; i < N; i++) {
    t_s[i] = (float)i / 100.0f;
    speed[i] = 10.0f * sinf((float)i / N * 3.14159f);
    share[i] = i > 60 && i < 90 ? 0.1f : 0.9f;
    phase[i] = (unsigned char)(i < 20 ? 0 : i < 80 ? 1 : i < 105 ? 2 : i < 170 ? 3 : 4);
  }
  int calls = 0;
  ArcwiseClipSpec s = {
    .width = 320, .height = 240, .fps = 30, .slowmo = 2.0, .overlays = false,
    .a = { .n = N, .t_s = t_s, .speed_m_s = speed, .phase = phase, .cam_share = share,
           .t0_s = 0.0, .t1_s = 1.0, .align_s = 1.05 },
    .render = render, .render_user = &calls,
  };
  /* 1 s of swing at 2x slower, 30 frames/s: 60 intervals, 61 frames. */
  AW_CHECK(arcwise_clip_frame_count(&s) == 61);
  char bare[1024], over[1024], msg[512];
  snprintf(bare, sizeof bare, "%s/bare.mp4", argv[1]);
  snprintf(over, sizeof over, "%s/overlay.mp4", argv[1]);
  unlink(bare);
  unlink(over);
  ArcwiseClipStats st;
  AW_CHECK(arcwise_clip_export(&s, bare, false, &st, msg, sizeof msg));
  AW_CHECK(st.frames == 61 && calls == 61);
  AW_CHECK(strcmp(st.encoder, "libx264") == 0);

  /* Never replaced without force; the file stays byte for byte. */
  struct stat before, after;
  AW_CHECK(stat(bare, &before) == 0);
  AW_CHECK(!arcwise_clip_export(&s, bare, false, NULL, msg, sizeof msg));
  AW_CHECK(strstr(msg, "already exists") != NULL);
  AW_CHECK(stat(bare, &after) == 0 && after.st_size == before.st_size &&
           after.st_mtime == before.st_mtime);

  /* Cancel mid-way: no file, no temporary left, earlier file untouched. */
  double last = 0;
  s.progress = progress;
  s.progress_user = &last;
  s.cancel = &cancel_flag;
  AW_CHECK(!arcwise_clip_export(&s, bare, true, NULL, msg, sizeof msg));
  AW_CHECK(strcmp(msg, "cancelled") == 0);
  AW_CHECK(stat(bare, &after) == 0 && after.st_size == before.st_size);
  atomic_store(&cancel_flag, false);

  /* 720p with overlays and a compared swing. */
  s.progress = NULL;
  s.cancel = NULL;
  s.width = 1280;
  s.height = 720;
  s.overlays = true;
  s.player = "Robin Vale";
  s.date = "2026-11-14";
  s.view_name = "face-on";
  ArcwiseClipSwing b = s.a;
  b.name = "Swing 2";
  s.a.name = "Swing 1";
  s.b = &b;
  AW_CHECK(arcwise_clip_export(&s, over, false, &st, msg, sizeof msg));
  if (msg[0])
    fprintf(stderr, "%s\n", msg);
  AW_CHECK(st.frames == 61);
  /* Odd sizes are refused with a reason. */
  s.width = 1279;
  char odd[1100];
  snprintf(odd, sizeof odd, "%s/odd.mp4", argv[1]);
  AW_CHECK(!arcwise_clip_export(&s, odd, false, NULL, msg, sizeof msg));
  AW_CHECK(strstr(msg, "even") != NULL && access(odd, F_OK) != 0);
  arcwise_export_shutdown();
  return AW_TEST_END();
}
