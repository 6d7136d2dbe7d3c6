/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Headless subcommands. Each command lives in its own cmd-NAME.c and is listed once in the
 * table in main.c. Contract: argv[0] is the command name; return 0 on success, 1 on failure
 * (one line on stderr: "arcwise NAME: message"), 2 on a usage error. Every command answers
 * --help (print usage on stdout, return 0). Commands never need a display. */

typedef int (*ArcwiseCommandFunc)(int argc, char **argv);

typedef struct {
  const char *name;
  const char *summary;          /* one line for `arcwise --help` */
  ArcwiseCommandFunc run;
} ArcwiseCommand;

/* Prints "arcwise CMD: message\n" to stderr and returns 1. */
int arcwise_cli_fail(const char *cmd, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__((format(printf, 2, 3)))
#endif
  ;

/* Prints "arcwise CMD: message\nTry 'arcwise CMD --help'.\n" to stderr and returns 2. */
int arcwise_cli_usage_error(const char *cmd, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__((format(printf, 2, 3)))
#endif
  ;

/* Runs the GTK workbench (defined in ui/ when the GUI is built; otherwise a stub that fails). */
int arcwise_gui_run(int argc, char **argv);

/* Command entry points (one per cmd-*.c). */
int arcwise_cmd_inspect(int argc, char **argv);
int arcwise_cmd_analyze(int argc, char **argv);
int arcwise_cmd_compare(int argc, char **argv);
int arcwise_cmd_bench(int argc, char **argv);
int arcwise_cmd_library(int argc, char **argv);
/* Actions of `arcwise library` on reference swings from C3D (app/cmd-library-c3d.c). */
int arcwise_library_import_c3d(const char *path, int argc, char **argv);
int arcwise_library_references(const char *path, int argc, char **argv);
int arcwise_cmd_c3d(int argc, char **argv);
int arcwise_cmd_export(int argc, char **argv);
int arcwise_cmd_simulate(int argc, char **argv);
int arcwise_cmd_fuse(int argc, char **argv);
/* The scenario part of `simulate` (sim-scenario.c). */
int arcwise_simulate_scenario(const char *path, const char *out_dir);

/* Benchmarks (one per bench-*.c), dispatched by cmd-bench.c. */
int arcwise_bench_accuracy(int argc, char **argv);
int arcwise_bench_fuse(int argc, char **argv);
int arcwise_bench_capture(int argc, char **argv);
int arcwise_bench_analysis(int argc, char **argv);
int arcwise_bench_clip(int argc, char **argv);
int arcwise_bench_library(int argc, char **argv);
int arcwise_bench_render(int argc, char **argv);   /* with the GUI build only */
int arcwise_bench_launch(int argc, char **argv);
