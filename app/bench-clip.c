/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench clip`: a 10 s 720p clip at 30 frames/s of a simulated swing, rendered
 * offscreen by the scene renderer and encoded to H.264; goal: done in 10 s or less on the
 * project's 2-core machine without a GPU. Prints the time per stage. */
#include "cli.h"
#include "export-file.h"
#include "export-scene.h"
#include "export-sim.h"

#include "arcwise/analysis.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

static double
now_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

int
arcwise_bench_clip(int argc, char **argv)
{
  int width = 1280, height = 720, fps = 30, samples = 0;
  double seconds = 10;
  const char *keep = NULL;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--help") == 0) {
      printf("Usage: arcwise bench clip [--1080p] [--seconds S] [--samples N] [--keep OUT.mp4]\n"
             "\nExports a clip of a simulated swing (720p, 30 frames/s, 10 s by default) and\n"
             "prints the time spent rendering, drawing overlays and encoding. Goal: 10 s of\n"
             "720p video in at most 10 s.\n");
      return 0;
    } else if (strcmp(argv[i], "--1080p") == 0) {
      width = 1920;
      height = 1080;
    } else if (strcmp(argv[i], "--seconds") == 0 && i + 1 < argc) {
      seconds = atof(argv[++i]);
      if (!(seconds > 0 && seconds <= 120))
        return arcwise_cli_usage_error("bench clip", "--seconds 0 to 120");
    } else if (strcmp(argv[i], "--samples") == 0 && i + 1 < argc) {
      samples = atoi(argv[++i]);
    } else if (strcmp(argv[i], "--keep") == 0 && i + 1 < argc) {
      keep = argv[++i];
    } else {
      return arcwise_cli_usage_error("bench clip", "unknown option '%s'", argv[i]);
    }
  }
  AwSimConfig cfg;
  aw_sim_config_default(&cfg, AW_SIM_NORMAL);
  cfg.seed = 2026;
  AwSim *sim = NULL;
  AwError e;
  aw_error_clear(&e);
  if (aw_sim_new(&cfg, &sim, &e) != AW_OK)
    return arcwise_cli_fail("bench clip", "simulation: %s", e.message);
  AwFusedPath *path = arcwise_sim_path_new(sim);
  AwTrajectory tr;
  aw_trajectory_from_fused(path, 0, 0, &tr);
  AwAnalysisSettings set;
  aw_analysis_settings_default(&set);
  AwAnalysis *an = NULL;
  int rc = 0;
  if (aw_analyze(&tr, &set, &an, &e) != AW_OK || an->n_swings == 0) {
    rc = arcwise_cli_fail("bench clip", "analysis: %s", e.message);
    goto out;
  }
  const AwSwing *s = &an->swings[0];
  double span = s->t_end_s - s->t_start_s;
  /* Slow motion chosen so that the clip lasts `seconds`. */
  double slowmo = fmax(1.0, (seconds - 0.5 / fps) / span);
  char tmpl[] = "/tmp/arcwise-bench-clip-XXXXXX";
  char *dir = mkdtemp(tmpl);
  char out[512];
  snprintf(out, sizeof out, "%s/clip.mp4", dir ? dir : "/tmp");
  ArcwiseClipRequest req = {
    .path_a = path, .swing_a = s, .view = "face-on", .width = width, .height = height,
    .fps = fps, .slowmo = slowmo, .overlays = true, .player = "Bench Player",
    .date = "2026-01-01", .samples = samples,
  };
  ArcwiseClipStats st;
  char msg[1024];
  double t0 = now_s();
  struct timespec c0;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &c0);
  bool ok = arcwise_export_clip_swing(&req, out, true, NULL, NULL, NULL, &st, msg, sizeof msg);
  double wall = now_s() - t0;
  struct timespec c1;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &c1);
  double cpu = (double)(c1.tv_sec - c0.tv_sec) + 1e-9 * (double)(c1.tv_nsec - c0.tv_nsec);
  if (!ok) {
    rc = arcwise_cli_fail("bench clip", "%s", msg);
  } else {
    struct stat sb;
    stat(out, &sb);
    printf("clip export: %zu frames %dx%d at %d frames/s = %.2f s of video (swing %.2f s, %.2fx slower)\n",
           st.frames, width, height, fps, st.video_s, span, slowmo);
    int used = samples > 0 ? samples : ARCWISE_CLIP_SAMPLES_DEFAULT;
    printf("renderer: %s, multisampling %s (%d); encoder: %s, preset %s, crf %d\n",
           arcwise_export_renderer_name(), used > 1 ? "on" : "off", used, st.encoder,
           ARCWISE_CLIP_PRESET, ARCWISE_CLIP_CRF);
    printf("wall time: %.2f s (goal <= %.0f s for 10 s of 720p): %s\n", wall, seconds,
           wall <= seconds ? "met" : "NOT met");
    printf("process CPU time: %.2f s (all threads; %.1f ms a frame)\n", cpu,
           1e3 * cpu / (double)st.frames);
    double nf = (double)st.frames;
    printf("per frame (wall, ms): caller's thread: render %.1f, read-back %.1f, waiting for a "
           "free buffer %.1f;\n  worker: overlays %.1f, RGB to yuv420p %.1f, x264 %.1f\n",
           1e3 * st.render_s / nf, 1e3 * st.readback_s / nf, 1e3 * st.wait_s / nf,
           1e3 * st.overlay_s / nf, 1e3 * st.convert_s / nf, 1e3 * st.encode_s / nf);
    double load[3] = { 0, 0, 0 };
    FILE *la = fopen("/proc/loadavg", "r");
    if (la != NULL) {
      if (fscanf(la, "%lf %lf %lf", &load[0], &load[1], &load[2]) != 3)
        load[0] = load[1] = load[2] = 0;
      fclose(la);
    }
    printf("machine load average: %.2f %.2f %.2f on %ld cores (figures under load are "
           "pessimistic)\n", load[0], load[1], load[2], sysconf(_SC_NPROCESSORS_ONLN));
    printf("file size: %.2f MB (%.0f kbit/s)\n", (double)sb.st_size / 1e6,
           8.0 * (double)sb.st_size / st.video_s / 1e3);
    if (keep != NULL) {
      if (!arcwise_out_rename(out, keep, true, msg, sizeof msg))
        rc = arcwise_cli_fail("bench clip", "%s", msg);
    }
  }
  unlink(out);
  if (dir)
    rmdir(dir);
out:
  aw_analysis_free(an);
  arcwise_sim_path_free(path);
  aw_sim_free(sim);
  arcwise_export_shutdown();
  return rc;
}
