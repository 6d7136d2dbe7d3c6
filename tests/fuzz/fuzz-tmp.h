/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* A private scratch folder for targets that write files (round trips through the writers):
 * in /dev/shm when it exists, so that a million executions do not wear a disk; removed at
 * exit. */

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

static char aw_fuzz_tmp_dir[256];

static void
aw_fuzz_tmp_cleanup(void)
{
  /* Only files this process made live there, all with known names; best effort. */
  if (aw_fuzz_tmp_dir[0] != '\0')
    rmdir(aw_fuzz_tmp_dir);
}

/* Path of `leaf` inside the scratch folder (static buffer: one at a time). */
static const char *
aw_fuzz_tmp_path(const char *leaf)
{
  static char path[512];
  if (aw_fuzz_tmp_dir[0] == '\0') {
    const char *base = access("/dev/shm", W_OK) == 0 ? "/dev/shm" : "/tmp";
    snprintf(aw_fuzz_tmp_dir, sizeof aw_fuzz_tmp_dir, "%s/arcwise-fuzz-XXXXXX", base);
    if (mkdtemp(aw_fuzz_tmp_dir) == NULL) {
      perror("mkdtemp");
      abort();
    }
    atexit(aw_fuzz_tmp_cleanup);
  }
  snprintf(path, sizeof path, "%s/%s", aw_fuzz_tmp_dir, leaf);
  return path;
}
