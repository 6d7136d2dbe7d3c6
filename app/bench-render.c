/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench render`: frames per second of the studio scene drawn offscreen (EGL
 * surfaceless, the exporter's path) at 1920x1080 with two swings overlaid, trust band and
 * markers on; and `arcwise bench launch`: time from starting the workbench to its first drawn
 * 3-D frame. Figures only: goals are read by people, never asserted in tests. */
#include "cli.h"
#include "bench-score.h"

#include <epoxy/gl.h>
#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "arcwise-demo-swings.h"
#include "arcwise-offscreen.h"
#include "arcwise-scene.h"

/* CPU seconds of every thread of the process (llvmpipe's rasteriser threads included), so that
 * figures taken on a busy machine still say what a frame costs. */
static double
process_cpu_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int
arcwise_bench_render(int argc, char **argv)
{
  int width = 1920, height = 1080, frames = 120, samples = 0;
  const char *png = NULL;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      printf("Usage: arcwise bench render [--size WxH] [--frames N] [--msaa N] [--png FILE]\n\n"
             "Draws the studio scene offscreen (EGL surfaceless, no display needed) with two\n"
             "simulated swings overlaid, the 2-sigma band and moving markers, and prints frames\n"
             "per second: drawing alone (glFinish per frame) and drawing plus read-back of the\n"
             "RGBA frame (what the clip exporter does). Goal: at least 60 frames/s at 1920x1080\n"
             "on Mesa llvmpipe. --png writes the last frame, to look at what was measured.\n");
      return 0;
    } else if (strcmp(argv[i], "--size") == 0 && i + 1 < argc) {
      if (sscanf(argv[++i], "%dx%d", &width, &height) != 2 || width < 16 || height < 16 ||
          width > 8192 || height > 8192)
        return arcwise_cli_usage_error("bench render", "--size wants WxH, e.g. 1920x1080");
    } else if (strcmp(argv[i], "--frames") == 0 && i + 1 < argc) {
      frames = atoi(argv[++i]);
      if (frames < 1 || frames > 100000)
        return arcwise_cli_usage_error("bench render", "--frames wants 1..100000");
    } else if (strcmp(argv[i], "--msaa") == 0 && i + 1 < argc) {
      samples = atoi(argv[++i]);
      if (samples < 0 || samples > 16)
        return arcwise_cli_usage_error("bench render", "--msaa wants 0..16");
    } else if (strcmp(argv[i], "--png") == 0 && i + 1 < argc) {
      png = argv[++i];
    } else
      return arcwise_cli_usage_error("bench render", "unknown option '%s'", argv[i]);
  }
  g_autoptr(GError) error = NULL;
  ArcwiseOffscreen *off = arcwise_offscreen_new(width, height, samples, &error);
  if (off == NULL)
    return arcwise_cli_fail("bench render", "%s", error->message);
  ArcwiseScene *scene = arcwise_scene_new(&error);
  ArcwiseSwingModel *a = arcwise_demo_swing_new(7, false, &error);
  ArcwiseSwingModel *b = a ? arcwise_demo_swing_new(8, false, &error) : NULL;
  if (scene == NULL || a == NULL || b == NULL) {
    int rc = arcwise_cli_fail("bench render", "%s", error->message);
    arcwise_swing_model_free(a);
    arcwise_scene_free(scene);
    arcwise_offscreen_free(off);
    return rc;
  }
  ArcwiseScenePath pa, pb;
  arcwise_swing_model_as_path(a, &pa);
  arcwise_swing_model_as_path(b, &pb);
  arcwise_scene_set_path(scene, 0, &pa);
  arcwise_scene_set_path(scene, 1, &pb);
  ArcwiseSceneOptions opt;
  arcwise_scene_options_default(&opt);
  opt.show_band = true;
  opt.show_compare = true;
  opt.show_club = true;
  opt.dim_ahead = true;
  ArcwiseCamera cam;
  arcwise_camera_preset(&cam, ARCWISE_VIEW_FREE, a->handed, a->centre_m);
  double dur = (double)a->t_s[a->n - 1];
  uint8_t *rgba = g_malloc((size_t)width * (size_t)height * 4);

  /* Warm-up: the first frames compile shaders in llvmpipe. */
  for (int i = 0; i < 3; i++) {
    arcwise_offscreen_begin(off);
    arcwise_scene_draw(scene, &cam, &opt, width, height);
    glFinish();
  }
  double t_draw = 0, t_read = 0, cpu_draw = 0, cpu_read = 0;
  for (int pass = 0; pass < 2; pass++) {
    gint64 t0 = g_get_monotonic_time();
    double c0 = process_cpu_s();
    for (int i = 0; i < frames; i++) {
      double t = dur * i / frames;
      opt.marker_t_s[0] = opt.marker_t_s[1] = (float)t;
      cam.yaw_rad += 0.01f;   /* a slow orbit, as a coach dragging the view */
      arcwise_offscreen_begin(off);
      arcwise_scene_draw(scene, &cam, &opt, width, height);
      if (pass == 0)
        glFinish();
      else
        arcwise_offscreen_read_rgba(off, rgba, (size_t)width * 4);
    }
    double s = (double)(g_get_monotonic_time() - t0) * 1e-6, c = process_cpu_s() - c0;
    if (pass == 0) { t_draw = s; cpu_draw = c; } else { t_read = s; cpu_read = c; }
  }
  if (png != NULL && !arcwise_write_png(png, rgba, width, height, (size_t)width * 4, &error)) {
    g_printerr("bench render: %s\n", error->message);
    g_clear_error(&error);
  }
  printf("renderer              %s\n", arcwise_offscreen_get_renderer(off));
  printf("size                  %dx%d, %d samples, 2 swings + band + club paths\n", width, height,
         samples);
  printf("frames                %d\n", frames);
  printf("draw-fps              %.1f\n", frames / t_draw);
  printf("draw-ms-per-frame     %.2f\n", 1000.0 * t_draw / frames);
  printf("draw-cpu-ms-per-frame %.2f (all threads; %u cores)\n", 1000.0 * cpu_draw / frames,
         g_get_num_processors());
  printf("draw+readback-fps     %.1f\n", frames / t_read);
  printf("draw+readback-cpu-ms  %.2f per frame\n", 1000.0 * cpu_read / frames);
  printf("goal                  draw-fps >= 60 on llvmpipe: %s\n",
         frames / t_draw >= 60 ? "met" : "NOT met");
  g_free(rgba);
  arcwise_swing_model_free(a);
  arcwise_swing_model_free(b);
  arcwise_scene_free(scene);
  arcwise_offscreen_free(off);
  return 0;
}

static void
print_load(const char *what)
{
  g_autofree char *load = NULL;
  if (g_file_get_contents("/proc/loadavg", &load, NULL, NULL))
    printf("%-21s %.*s\n", what, (int)strcspn(load, "\n"), load);
}

int
arcwise_bench_launch(int argc, char **argv)
{
  int swings = 1000, runs = 10;
  const char *library = NULL;
  gboolean first_run = FALSE;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      printf("Usage: arcwise bench launch [--swings N | --library FILE] [--runs N] [--first-run]\n\n"
             "Starts the workbench N times (default 10; needs a display, use tests/with-xvfb.sh\n"
             "on a headless machine) and prints the time from the spawn to the end of the first\n"
             "window frame in which the 3-D view has drawn, after a round trip to the display\n"
             "server (the first paint: the studio scene, the swing's path may still be loading in\n"
             "its worker thread), and to the first frame with the selected swing drawn;\n"
             "with a stand-in library of N swings (default 1000, rows made in memory)\n"
             "or a library file (make one with `arcwise bench library --swings 1000 --keep DIR`).\n"
             "Also the process's CPU seconds (every thread) to that frame, which a busy machine\n"
             "changes less than the wall clock. Goal: under 1 s.\n\n"
             "Preferences live in a fresh temporary folder for every run. By default they say\n"
             "the safety caution was acknowledged (a coach's everyday start); --first-run\n"
             "leaves them empty, so the caution window opens too, as on a first start.\n");
      return 0;
    } else if (strcmp(argv[i], "--first-run") == 0) {
      first_run = TRUE;
    } else if (strcmp(argv[i], "--swings") == 0 && i + 1 < argc) {
      swings = atoi(argv[++i]);
      if (swings < 1 || swings > 1000000)
        return arcwise_cli_usage_error("bench launch", "--swings wants 1..1000000");
    } else if (strcmp(argv[i], "--library") == 0 && i + 1 < argc) {
      library = argv[++i];
    } else if (strcmp(argv[i], "--runs") == 0 && i + 1 < argc) {
      runs = atoi(argv[++i]);
      if (runs < 1 || runs > 50)
        return arcwise_cli_usage_error("bench launch", "--runs wants 1..50");
    } else
      return arcwise_cli_usage_error("bench launch", "unknown option '%s'", argv[i]);
  }
  if (g_getenv("DISPLAY") == NULL && g_getenv("WAYLAND_DISPLAY") == NULL)
    return arcwise_cli_fail("bench launch", "no display; run it under tests/with-xvfb.sh");
  if (library != NULL && !g_file_test(library, G_FILE_TEST_IS_REGULAR))
    return arcwise_cli_fail("bench launch", "%s: no such library file", library);
  g_autofree char *self = g_file_read_link("/proc/self/exe", NULL);
  if (self == NULL)
    return arcwise_cli_fail("bench launch", "cannot find the program's own path");
  g_autofree char *n = g_strdup_printf("--demo-size=%d", swings);
  g_autofree char *lib = library ? g_strdup_printf("--library=%s", library) : NULL;
  char *args[] = { self, library ? lib : n, NULL };
  /* GLib's keyfile settings backend in a temporary XDG_CONFIG_HOME: the user's own
   * preferences are neither read nor changed. */
  g_autofree char *config = g_dir_make_tmp("arcwise-launch-XXXXXX", NULL);
  if (config == NULL)
    return arcwise_cli_fail("bench launch", "cannot make a temporary folder");
  g_autofree char *settings_dir = g_build_filename(config, "glib-2.0", "settings", NULL);
  g_autofree char *keyfile = g_build_filename(settings_dir, "keyfile", NULL);
  char **env = g_get_environ();
  env = g_environ_setenv(env, "GSETTINGS_BACKEND", "keyfile", TRUE);
  env = g_environ_setenv(env, "XDG_CONFIG_HOME", config, TRUE);
  double wall[50], cpu[50], swing_wall[50], swing_cpu[50];
  print_load("load-before");
  for (int r = 0; r < runs; r++) {
    g_autofree char *out = NULL;
    g_autoptr(GError) error = NULL;
    int status = 0;
    /* The child counts from this moment (CLOCK_MONOTONIC is shared by every process). */
    g_autofree char *now = g_strdup_printf("%" G_GINT64_FORMAT, g_get_monotonic_time());
    env = g_environ_setenv(env, "ARCWISE_BENCH_LAUNCH", now, TRUE);
    g_mkdir_with_parents(settings_dir, 0700);
    g_unlink(keyfile);
    if (!first_run &&
        !g_file_set_contents(keyfile, "[org/arcwise/Workbench]\nsafety-acknowledged=true\n", -1,
                             &error)) {
      g_strfreev(env);
      return arcwise_cli_fail("bench launch", "%s", error->message);
    }
    if (!g_spawn_sync(NULL, args, env, G_SPAWN_STDERR_TO_DEV_NULL, NULL, NULL, &out, NULL,
                      &status, &error)) {
      g_strfreev(env);
      return arcwise_cli_fail("bench launch", "%s", error->message);
    }
    const char *p = out ? strstr(out, "launch-to-drawn-window-s ") : NULL;
    const char *q = out ? strstr(out, "launch-to-swing-drawn-s ") : NULL;
    const char *c = out ? strstr(out, "launch-phase first-3d-frame-shown") : NULL;
    const char *d = out ? strstr(out, "launch-phase first-swing-drawn") : NULL;
    c = c ? strstr(c, "(cpu ") : NULL;
    d = d ? strstr(d, "(cpu ") : NULL;
    if (p == NULL || q == NULL || c == NULL || d == NULL) {
      g_strfreev(env);
      return arcwise_cli_fail("bench launch", "the workbench did not report a drawn frame");
    }
    wall[r] = g_ascii_strtod(p + strlen("launch-to-drawn-window-s "), NULL);
    cpu[r] = g_ascii_strtod(c + strlen("(cpu "), NULL);
    swing_wall[r] = g_ascii_strtod(q + strlen("launch-to-swing-drawn-s "), NULL);
    swing_cpu[r] = g_ascii_strtod(d + strlen("(cpu "), NULL);
    printf("run %-2d                %.3f s  (cpu %.3f s); swing drawn %.3f s  (cpu %.3f s)\n",
           r + 1, wall[r], cpu[r], swing_wall[r], swing_cpu[r]);
    if (r == runs - 1)
      for (const char *l = out; (l = strstr(l, "launch-phase ")) != NULL; l++) {
        const char *e = strchr(l, '\n');
        const char *b = l + strlen("launch-phase ");
        printf("  %.*s\n", (int)(e ? e - b : (ptrdiff_t)strlen(b)), b);
      }
  }
  g_strfreev(env);
  g_unlink(keyfile);
  g_rmdir(settings_dir);
  g_autofree char *glib_dir = g_path_get_dirname(settings_dir);
  g_rmdir(glib_dir);
  g_rmdir(config);
  print_load("load-after");
  double best = INFINITY, best_cpu = INFINITY, best_swing = INFINITY, best_swing_cpu = INFINITY;
  for (int r = 0; r < runs; r++) {
    best = fmin(best, wall[r]);
    best_cpu = fmin(best_cpu, cpu[r]);
    best_swing = fmin(best_swing, swing_wall[r]);
    best_swing_cpu = fmin(best_swing_cpu, swing_cpu[r]);
  }
  printf("library               %s\n", library ? library : "stand-in (in memory)");
  if (library == NULL)
    printf("swings                %d\n", swings);
  printf("start                 %s\n", first_run ? "first run (safety caution shown)"
                                                  : "everyday (caution acknowledged before)");
  printf("runs                  %d\n", runs);
  printf("launch-to-drawn-best  %.3f s\n", best);
  printf("launch-to-drawn-median %.3f s\n", arcwise_bench_quantile(wall, (size_t)runs, 0.5));
  printf("launch-cpu-best       %.3f s\n", best_cpu);
  printf("launch-cpu-median     %.3f s\n", arcwise_bench_quantile(cpu, (size_t)runs, 0.5));
  printf("swing-drawn-best      %.3f s\n", best_swing);
  printf("swing-drawn-median    %.3f s\n", arcwise_bench_quantile(swing_wall, (size_t)runs, 0.5));
  printf("swing-drawn-cpu-best  %.3f s\n", best_swing_cpu);
  printf("swing-drawn-cpu-median %.3f s\n", arcwise_bench_quantile(swing_cpu, (size_t)runs, 0.5));
  printf("goal                  under 1 s (best, first paint): %s\n", best < 1.0 ? "met" : "NOT met");
  return 0;
}
