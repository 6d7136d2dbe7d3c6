/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-config.h"
#include "cli.h"

#include <stdarg.h>
#include <stdio.h>
#include <string.h>

#if defined(__SANITIZE_ADDRESS__)
#include <dlfcn.h>

/* Sanitizer builds only (the test suite's second pass): shared objects are never unloaded.
 * GTK and libglvnd close Mesa's driver (swrast_dri.so on llvmpipe) at exit; memory the driver
 * keeps for the life of the process is then referenced only from unmapped pages, and
 * LeakSanitizer reports it as a leak from "<unknown module>", a frame no suppression can name.
 * With every library left mapped, such memory stays reachable and the frames of any real leak
 * keep their module names. The executable's definition comes first in symbol lookup, so it
 * stands for every library's dlclose (our own video module is never closed anyway). */
int
dlclose(void *handle)
{
  (void)handle;
  return 0;
}
#endif

static const ArcwiseCommand commands[] = {
  { "inspect", "describe capture files: kind, samples, rate, gaps, saturation", arcwise_cmd_inspect },
  { "library", "the swing library: create, import, list, show, reanalyse, backup, check, ...",
    arcwise_cmd_library },
  { "analyze", "find the swings in a capture: events, phases, metrics, sensor trust", arcwise_cmd_analyze },
  { "compare", "lay two swings over each other: path deviation, timing, metric differences", arcwise_cmd_compare },
  { "bench", "run a benchmark and print its figures", arcwise_cmd_bench },
  { "export", "share swings: numbers (CSV, JSON), report (PDF), C3D, clip (MP4), still (PNG)", arcwise_cmd_export },
  { "c3d", "describe a C3D motion-capture file, extract a marker trajectory", arcwise_cmd_c3d },
  { "simulate", "write a synthetic recording with ground truth", arcwise_cmd_simulate },
  { "fuse", "fuse an IMU and a depth stream into one hand path with its uncertainty", arcwise_cmd_fuse },
};

static const size_t n_commands = sizeof commands / sizeof commands[0];

int
arcwise_cli_fail(const char *cmd, const char *fmt, ...)
{
  va_list ap;
  fprintf(stderr, "arcwise %s: ", cmd);
  va_start(ap, fmt);
  vfprintf(stderr, fmt, ap);
  va_end(ap);
  fputc('\n', stderr);
  return 1;
}

int
arcwise_cli_usage_error(const char *cmd, const char *fmt, ...)
{
  va_list ap;
  fprintf(stderr, "arcwise %s: ", cmd);
  va_start(ap, fmt);
  vfprintf(stderr, fmt, ap);
  va_end(ap);
  fprintf(stderr, "\nTry 'arcwise %s --help'.\n", cmd);
  return 2;
}

static void
print_help(FILE *out)
{
  fprintf(out,
          "Usage: arcwise [COMMAND [OPTION...]]\n"
          "\n"
          "Arcwise fuses a depth camera and a wrist IMU into the 3-D hand path of a golf swing,\n"
          "splits it into phases and measures it. With no command it opens the workbench.\n"
          "\n"
          "Commands (each runs without a display; 'arcwise COMMAND --help' for details):\n");
  for (size_t i = 0; i < n_commands; i++)
    fprintf(out, "  %-14s %s\n", commands[i].name, commands[i].summary);
  fprintf(out,
          "\n"
          "Options:\n"
          "  -h, --help     show this help and exit\n"
          "  --version      show the version and exit\n"
          "\n"
          "Caution: swinging a club indoors can hurt people. Keep clear space around the player,\n"
          "the camera and the screen; warm up and stop when tired. The numbers are estimates, not\n"
          "a medical or equipment assessment; follow local rules and qualified instruction.\n");
}

int
main(int argc, char **argv)
{
  if (argc < 2 || (argv[1][0] == '-' && strcmp(argv[1], "--help") != 0 &&
                   strcmp(argv[1], "-h") != 0 && strcmp(argv[1], "--version") != 0))
    return arcwise_gui_run(argc, argv);

  const char *name = argv[1];
  if (strcmp(name, "--help") == 0 || strcmp(name, "-h") == 0 || strcmp(name, "help") == 0) {
    print_help(stdout);
    return 0;
  }
  if (strcmp(name, "--version") == 0) {
    printf("arcwise %s\n", ARCWISE_VERSION);
    return 0;
  }
  for (size_t i = 0; i < n_commands; i++)
    if (strcmp(commands[i].name, name) == 0)
      return commands[i].run(argc - 1, argv + 1);

  fprintf(stderr, "arcwise: unknown command '%s'\nTry 'arcwise --help'.\n", name);
  return 2;
}
