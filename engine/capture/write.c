/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Writers for the IMU and depth CSV streams: SI units, a metadata comment block, numbers in the
 * shortest form that reads back to the same double. Files are written to a temporary file in
 * the target's folder, flushed to disk and renamed over the target, so a crash or kill leaves
 * either the old file or the complete new one. */
#include "arcwise/capture.h"
#include "capture-private.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

typedef struct {
  const char *path;
  char *tmp;
  FILE *f;
} Out;

static AwStatus
out_open(Out *o, const char *path, AwError *err)
{
  memset(o, 0, sizeof *o);
  o->path = path;
  /* a hidden name beside the target: same file system, so rename() is atomic */
  const char *slash = strrchr(path, '/');
  size_t dir_len = slash != NULL ? (size_t)(slash - path) + 1 : 0;
  size_t n = strlen(path) + 16;
  o->tmp = malloc(n);
  if (o->tmp == NULL)
    return aw_error_set(err, AW_ERR_NO_MEMORY, path, 0, 0, "out of memory");
  snprintf(o->tmp, n, "%.*s.%s.XXXXXX", (int)dir_len, path, path + dir_len);
  int fd = mkstemp(o->tmp);
  if (fd < 0) {
    int e = errno;
    free(o->tmp);
    o->tmp = NULL;
    return aw_error_set(err, AW_ERR_IO, path, 0, 0, "cannot create a file beside it: %s",
                        strerror(e));
  }
  (void)fchmod(fd, 0644);  /* mkstemp makes 0600; capture files are meant to be shared */
  o->f = fdopen(fd, "w");
  if (o->f == NULL) {
    int e = errno;
    close(fd);
    unlink(o->tmp);
    free(o->tmp);
    o->tmp = NULL;
    return aw_error_set(err, AW_ERR_IO, path, 0, 0, "cannot write: %s", strerror(e));
  }
  setvbuf(o->f, NULL, _IOFBF, 1 << 20);
  return AW_OK;
}

static void
out_abandon(Out *o)
{
  if (o->f != NULL)
    fclose(o->f);
  if (o->tmp != NULL) {
    unlink(o->tmp);
    free(o->tmp);
  }
  o->f = NULL;
  o->tmp = NULL;
}

static AwStatus
out_commit(Out *o, AwError *err)
{
  int e = 0;
  if (fflush(o->f) != 0 || ferror(o->f))
    e = errno ? errno : EIO;
  else if (fsync(fileno(o->f)) != 0)
    e = errno;
  if (fclose(o->f) != 0 && e == 0)
    e = errno;
  o->f = NULL;
  if (e == 0 && rename(o->tmp, o->path) != 0)
    e = errno;
  if (e != 0) {
    out_abandon(o);
    return aw_error_set(err, AW_ERR_IO, o->path, 0, 0, "cannot write: %s", strerror(e));
  }
  free(o->tmp);
  o->tmp = NULL;
  return AW_OK;
}

/* Free text for a comment line: one line, no control characters, no surrounding blanks. */
static void
put_text(FILE *f, const char *s)
{
  const char *b = s, *e = s + strlen(s);
  while (b < e && (*b == ' ' || *b == '\t'))
    b++;
  while (e > b && (e[-1] == ' ' || e[-1] == '\t'))
    e--;
  for (; b < e; b++) {
    unsigned char c = (unsigned char)*b;
    fputc(c < 0x20 || c == 0x7f ? ' ' : c, f);
  }
}

static void
put_num(FILE *f, double v)
{
  char buf[32];
  int n = aw_capture_format_double(buf, v);
  fwrite(buf, 1, (size_t)n, f);
}

static const char *
wrist_name(AwWrist w)
{
  return w == AW_WRIST_LEFT ? "left" : w == AW_WRIST_RIGHT ? "right" : NULL;
}

static AwStatus
check_times(const double *t, size_t n, const char *path, AwError *err)
{
  if (n == 0)
    return aw_error_set(err, AW_ERR_EMPTY, path, 0, 0, "no samples to write");
  for (size_t i = 0; i < n; i++) {
    if (!isfinite(t[i]))
      return aw_error_set(err, AW_ERR_NON_FINITE, path, 0, 0,
                          "sample %zu: time is not a finite number", i);
    if (i > 0 && !(t[i] > t[i - 1]))
      return aw_error_set(err, AW_ERR_INVALID_ARG, path, 0, 0,
                          "sample %zu: time does not increase", i);
  }
  return AW_OK;
}

AwStatus
aw_imu_write_file(const char *path, const AwImuStream *s, AwError *err)
{
  if (path == NULL || s == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, path, 0, 0, "no path or no stream");
  AwStatus st = check_times(s->t_s, s->n, path, err);
  if (st != AW_OK)
    return st;
  for (size_t i = 0; i < s->n; i++)
    for (int k = 0; k < 3; k++)
      if (!isfinite(s->accel_m_s2[i][k]) || !isfinite(s->gyro_rad_s[i][k]))
        return aw_error_set(err, AW_ERR_NON_FINITE, path, 0, 0,
                            "sample %zu: accelerometer or gyro value is not finite", i);
  Out o;
  st = out_open(&o, path, err);
  if (st != AW_OK)
    return st;
  FILE *f = o.f;
  fputs("# Arcwise IMU stream (format: README.md, \"Capture formats\")\n", f);
  fputs("# units: t=s accel=m/s2 gyro=rad/s\n", f);
  if (s->meta.device[0]) {
    fputs("# device: ", f);
    put_text(f, s->meta.device);
    fputc('\n', f);
  }
  if (s->meta.nominal_rate_hz > 0) {
    fputs("# rate_hz: ", f);
    put_num(f, s->meta.nominal_rate_hz);
    fputc('\n', f);
  }
  if (s->meta.accel_range_m_s2 > 0) {
    fputs("# accel_range: ", f);
    put_num(f, s->meta.accel_range_m_s2);
    fputs(" m/s2\n", f);
  }
  if (s->meta.gyro_range_rad_s > 0) {
    fputs("# gyro_range: ", f);
    put_num(f, s->meta.gyro_range_rad_s);
    fputs(" rad/s\n", f);
  }
  if (s->meta.output_delay_s > 0) {
    fputs("# output_delay: ", f);
    put_num(f, s->meta.output_delay_s);
    fputs(" s\n", f);
  }
  if (wrist_name(s->meta.wrist) != NULL)
    fprintf(f, "# wrist: %s\n", wrist_name(s->meta.wrist));
  fputs("t,ax,ay,az,gx,gy,gz\n", f);
  for (size_t i = 0; i < s->n; i++) {
    put_num(f, s->t_s[i]);
    for (int k = 0; k < 3; k++) {
      fputc(',', f);
      put_num(f, s->accel_m_s2[i][k]);
    }
    for (int k = 0; k < 3; k++) {
      fputc(',', f);
      put_num(f, s->gyro_rad_s[i][k]);
    }
    fputc('\n', f);
  }
  return out_commit(&o, err);
}

AwStatus
aw_depth_write_file(const char *path, const AwDepthStream *s, AwError *err)
{
  if (path == NULL || s == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, path, 0, 0, "no path or no stream");
  AwStatus st = check_times(s->t_s, s->n, path, err);
  if (st != AW_OK)
    return st;
  for (size_t i = 0; i < s->n; i++) {
    if (!(s->conf[i] >= 0.0 && s->conf[i] <= 1.0))
      return aw_error_set(err, AW_ERR_RANGE, path, 0, 0, "sample %zu: conf is outside [0, 1]",
                          i);
    for (int k = 0; k < 3; k++)
      if (isinf(s->pos_cam_m[i][k]))
        return aw_error_set(err, AW_ERR_NON_FINITE, path, 0, 0,
                            "sample %zu: position is infinite", i);
  }
  Out o;
  st = out_open(&o, path, err);
  if (st != AW_OK)
    return st;
  FILE *f = o.f;
  fputs("# Arcwise depth keypoint stream (format: README.md, \"Capture formats\")\n", f);
  fputs("# units: t=s pos=m\n", f);
  if (s->meta.device[0]) {
    fputs("# device: ", f);
    put_text(f, s->meta.device);
    fputc('\n', f);
  }
  if (s->meta.nominal_rate_hz > 0) {
    fputs("# rate_hz: ", f);
    put_num(f, s->meta.nominal_rate_hz);
    fputc('\n', f);
  }
  if (wrist_name(s->meta.wrist) != NULL)
    fprintf(f, "# wrist: %s\n", wrist_name(s->meta.wrist));
  fputs("t,x,y,z,conf\n", f);
  for (size_t i = 0; i < s->n; i++) {
    const double *p = s->pos_cam_m[i];
    put_num(f, s->t_s[i]);
    if (isnan(p[0]) || isnan(p[1]) || isnan(p[2]) || s->conf[i] == 0.0) {
      fputs(",,,,0\n", f);  /* a frame without a detection */
      continue;
    }
    for (int k = 0; k < 3; k++) {
      fputc(',', f);
      put_num(f, p[k]);
    }
    fputc(',', f);
    put_num(f, s->conf[i]);
    fputc('\n', f);
  }
  return out_commit(&o, err);
}
