/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Output files of the exports: written to a temporary file beside the target and renamed into
 * place on commit, so a crash or kill mid-write leaves any earlier file as it was. An existing
 * target is never replaced unless `force` (the command line's --force; the workbench asks). */

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct {
  char *path;   /* target */
  char *tmp;    /* temporary file beside it */
  FILE *fp;     /* open on tmp for writing */
  bool force;
} ArcwiseOutFile;

/* Fails (false, message in err) when path exists and !force, or the temporary file cannot be
 * created. */
bool arcwise_out_open(ArcwiseOutFile *o, const char *path, bool force, char *err, size_t err_size);

/* Flushes, syncs, closes and renames into place; on failure removes the temporary file. */
bool arcwise_out_commit(ArcwiseOutFile *o, char *err, size_t err_size);

/* Closes and removes the temporary file (safe after a commit or on a zeroed struct). */
void arcwise_out_abort(ArcwiseOutFile *o);

/* True when path exists and may not be replaced; fills err with the standard message. */
bool arcwise_out_refuse(const char *path, bool force, char *err, size_t err_size);

/* A temporary path beside `path` (malloc'd; the caller unlinks and frees it), for encoders that
 * open files themselves (libavformat, cairo). */
char *arcwise_out_tmp_path(const char *path);

/* The temporary path process `pid` uses for `path`: ".NAME.part-PID.EXT" in the same directory
 * (so the rename is atomic; the extension stays last for tools that pick a format from it).
 * malloc'd, NULL when out of memory. Inline so that the workbench, which runs the exporters as
 * child processes and removes a killed child's file, names it without linking the exporters. */
static inline char *
arcwise_out_tmp_path_pid(const char *path, long pid)
{
  const char *slash = strrchr(path, '/');
  size_t dir_len = slash ? (size_t)(slash - path) + 1 : 0;
  const char *base = path + dir_len;
  const char *dot = strrchr(base, '.');
  const char *ext = dot ? dot : "";
  size_t n = strlen(path) + 48;
  char *t = malloc(n);
  if (t == NULL)
    return NULL;
  snprintf(t, n, "%.*s.%.*s.part-%ld%s", (int)dir_len, path, (int)(strlen(base) - strlen(ext)),
           base, pid, ext);
  return t;
}

/* Renames tmp onto path, re-checking `force` first; removes tmp on failure. */
bool arcwise_out_rename(const char *tmp, const char *path, bool force, char *err,
                        size_t err_size);

/* Releases the process-wide caches of cairo and fontconfig, so that leak checkers see only our
 * own allocations. Call once at the end of a command or test that drew text; no cairo or
 * fontconfig call may follow. */
void arcwise_export_shutdown(void);
