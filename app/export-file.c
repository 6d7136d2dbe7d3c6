/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "export-file.h"

#include <errno.h>
#include <fcntl.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

bool
arcwise_out_refuse(const char *path, bool force, char *err, size_t err_size)
{
  if (!force && access(path, F_OK) == 0) {
    snprintf(err, err_size, "%s already exists; not replacing it (use --force to replace)", path);
    return true;
  }
  return false;
}

char *
arcwise_out_tmp_path(const char *path)
{
  return arcwise_out_tmp_path_pid(path, (long)getpid());
}

bool
arcwise_out_open(ArcwiseOutFile *o, const char *path, bool force, char *err, size_t err_size)
{
  memset(o, 0, sizeof *o);
  if (arcwise_out_refuse(path, force, err, err_size))
    return false;
  o->path = strdup(path);
  size_t n = strlen(path) + 16;
  o->tmp = malloc(n);
  if (o->path == NULL || o->tmp == NULL) {
    snprintf(err, err_size, "out of memory");
    arcwise_out_abort(o);
    return false;
  }
  snprintf(o->tmp, n, "%s.tmp-XXXXXX", path);
  int fd = mkstemp(o->tmp);
  if (fd < 0) {
    snprintf(err, err_size, "%s: cannot create a temporary file beside it: %s", path,
             strerror(errno));
    free(o->tmp);
    o->tmp = NULL;
    arcwise_out_abort(o);
    return false;
  }
  o->fp = fdopen(fd, "w");
  if (o->fp == NULL) {
    close(fd);
    snprintf(err, err_size, "%s: %s", path, strerror(errno));
    arcwise_out_abort(o);
    return false;
  }
  o->force = force;
  return true;
}

bool
arcwise_out_rename(const char *tmp, const char *path, bool force, char *err, size_t err_size)
{
  /* Checked again: the target may have appeared while we were writing. */
  if (arcwise_out_refuse(path, force, err, err_size)) {
    unlink(tmp);
    return false;
  }
  if (rename(tmp, path) != 0) {
    snprintf(err, err_size, "%s: cannot move the finished file into place: %s", path,
             strerror(errno));
    unlink(tmp);
    return false;
  }
  return true;
}

bool
arcwise_out_commit(ArcwiseOutFile *o, char *err, size_t err_size)
{
  bool ok = o->fp != NULL;
  if (ok && (fflush(o->fp) != 0 || ferror(o->fp) || fsync(fileno(o->fp)) != 0)) {
    snprintf(err, err_size, "%s: write failed: %s", o->path, strerror(errno));
    ok = false;
  }
  if (o->fp != NULL && fclose(o->fp) != 0 && ok) {
    snprintf(err, err_size, "%s: write failed: %s", o->path, strerror(errno));
    ok = false;
  }
  o->fp = NULL;
  if (ok)
    ok = arcwise_out_rename(o->tmp, o->path, o->force, err, err_size);
  else
    unlink(o->tmp);
  free(o->tmp);
  o->tmp = NULL;
  free(o->path);
  o->path = NULL;
  return ok;
}

void
arcwise_out_abort(ArcwiseOutFile *o)
{
  if (o->fp != NULL)
    fclose(o->fp);
  o->fp = NULL;
  if (o->tmp != NULL)
    unlink(o->tmp);
  free(o->tmp);
  free(o->path);
  o->tmp = o->path = NULL;
}
