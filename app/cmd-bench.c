/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench NAME`: benchmarks that print figures. Speed goals are checked here, never in
 * timed tests. Each benchmark lives in bench-NAME.c and is listed once in the table below. */
#include "cli.h"

#include <stdio.h>
#include <string.h>

static const ArcwiseCommand benches[] = {
  { "accuracy", "position, sync and event accuracy over seeded swings", arcwise_bench_accuracy },
  { "fuse", "fusion speed (ns per IMU sample, 4 s to 30 min) and accuracy on seeded swings", arcwise_bench_fuse },
  { "capture", "IMU reader speed on a 10-minute 200 Hz file", arcwise_bench_capture },
  { "analysis", "swing events, tempo, speeds and swing finding on simulated swings", arcwise_bench_analysis },
  { "clip", "export a 10 s 720p clip at 30 frames/s offscreen (goal: 10 s or less)", arcwise_bench_clip },
  { "library", "swing library: open + list and filters on 10,000 swings, bytes per swing, import rate", arcwise_bench_library },
#ifdef ARCWISE_HAVE_SCENE
  { "render", "studio scene frames per second offscreen at 1920x1080, two swings", arcwise_bench_render },
  { "launch", "time from starting the workbench to its first drawn frame", arcwise_bench_launch },
#endif
  { NULL, NULL, NULL },
};

static void
print_usage(FILE *out)
{
  fprintf(out, "Usage: arcwise bench NAME [OPTION...]\n\nBenchmarks (each prints its figures):\n");
  for (const ArcwiseCommand *b = benches; b->name != NULL; b++)
    fprintf(out, "  %-12s %s\n", b->name, b->summary);
  fprintf(out, "\n'arcwise bench NAME --help' describes each benchmark's options.\n");
}

int
arcwise_cmd_bench(int argc, char **argv)
{
  if (argc < 2)
    return arcwise_cli_usage_error("bench", "which benchmark? (see 'arcwise bench --help')");
  if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0) {
    print_usage(stdout);
    return 0;
  }
  for (const ArcwiseCommand *b = benches; b->name != NULL; b++)
    if (strcmp(b->name, argv[1]) == 0)
      return b->run(argc - 1, argv + 1);
  return arcwise_cli_usage_error("bench", "unknown benchmark '%s'", argv[1]);
}
