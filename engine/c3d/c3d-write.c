/* SPDX-License-Identifier: GPL-3.0-or-later */
/* C3D writer (c3d.org, "The C3D File Format - User Guide"): header block, one parameter
 * section with the POINT, ANALOG, TRIAL and MANUFACTURER groups, then the point data. Any of
 * the three processor formats can be written so that the reader's byte-order and DEC-float
 * paths are exercised by round trips. */
#include "c3d-private.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

typedef struct {
  uint8_t *b;
  size_t len, cap;
  AwC3dProcessor proc;
  bool oom;
} Out;

static void
reserve(Out *o, size_t n)
{
  if (o->oom || o->len + n <= o->cap)
    return;
  size_t cap = o->cap ? o->cap : 4096;
  while (cap < o->len + n)
    cap *= 2;
  uint8_t *nb = realloc(o->b, cap);
  if (nb == NULL) {
    o->oom = true;
    return;
  }
  memset(nb + o->cap, 0, cap - o->cap);
  o->b = nb;
  o->cap = cap;
}

static void
put_u8(Out *o, unsigned v)
{
  reserve(o, 1);
  if (!o->oom)
    o->b[o->len++] = (uint8_t)v;
}

static void
put_bytes(Out *o, const void *p, size_t n)
{
  reserve(o, n);
  if (!o->oom) {
    memcpy(o->b + o->len, p, n);
    o->len += n;
  }
}

static void
enc_i16(uint8_t *p, int v, AwC3dProcessor proc)
{
  uint16_t u = (uint16_t)v;
  if (proc == AW_C3D_MIPS) {
    p[0] = (uint8_t)(u >> 8);
    p[1] = (uint8_t)u;
  } else {
    p[0] = (uint8_t)u;
    p[1] = (uint8_t)(u >> 8);
  }
}

static void
enc_f32(uint8_t *p, double v, AwC3dProcessor proc)
{
  uint32_t bits;
  if (proc == AW_C3D_DEC) {
    /* VAX F-float: value = 0.1f x 2^(e-128); written as two little-endian words, high first. */
    bits = 0;
    if (v != 0 && isfinite(v)) {
      int e;
      double m = frexp(fabs(v), &e); /* |v| = m 2^e, m in [0.5, 1) */
      long frac = lround((m - 0.5) * 16777216.0);
      if (frac >= (1L << 23)) {
        frac = 0;
        e++;
      }
      int ef = e + 128;
      if (ef > 255) {
        ef = 255;
        frac = (1L << 23) - 1;
      }
      if (ef >= 1)
        bits = (v < 0 ? 1u << 31 : 0) | (uint32_t)ef << 23 | (uint32_t)frac;
    }
    uint16_t w0 = (uint16_t)(bits >> 16), w1 = (uint16_t)bits;
    p[0] = (uint8_t)w0;
    p[1] = (uint8_t)(w0 >> 8);
    p[2] = (uint8_t)w1;
    p[3] = (uint8_t)(w1 >> 8);
    return;
  }
  float f = (float)v;
  memcpy(&bits, &f, sizeof bits);
  if (proc == AW_C3D_MIPS) {
    p[0] = (uint8_t)(bits >> 24);
    p[1] = (uint8_t)(bits >> 16);
    p[2] = (uint8_t)(bits >> 8);
    p[3] = (uint8_t)bits;
  } else {
    p[0] = (uint8_t)bits;
    p[1] = (uint8_t)(bits >> 8);
    p[2] = (uint8_t)(bits >> 16);
    p[3] = (uint8_t)(bits >> 24);
  }
}

static void
put_i16(Out *o, int v)
{
  uint8_t p[2];
  enc_i16(p, v, o->proc);
  put_bytes(o, p, 2);
}

static void
put_f32(Out *o, double v)
{
  uint8_t p[4];
  enc_f32(p, v, o->proc);
  put_bytes(o, p, 4);
}

static void
group(Out *o, int id, const char *name, const char *desc)
{
  size_t nl = strlen(name), dl = strlen(desc);
  put_u8(o, (unsigned)nl);
  put_u8(o, (uint8_t)(int8_t)-id);
  put_bytes(o, name, nl);
  put_i16(o, (int)(2 + 1 + dl));
  put_u8(o, (unsigned)dl);
  put_bytes(o, desc, dl);
}

/* Writes a parameter header; the caller appends exactly `data_bytes` of data, then calls
 * param_end(). */
static void
param_begin(Out *o, int gid, const char *name, int type, int ndims, const int *dims,
            size_t data_bytes, const char *desc)
{
  size_t nl = strlen(name), dl = strlen(desc);
  put_u8(o, (unsigned)nl);
  put_u8(o, (unsigned)gid);
  put_bytes(o, name, nl);
  put_i16(o, (int)(2 + 2 + (size_t)ndims + data_bytes + 1 + dl));
  put_u8(o, (uint8_t)(int8_t)type);
  put_u8(o, (unsigned)ndims);
  for (int i = 0; i < ndims; i++)
    put_u8(o, (unsigned)dims[i]);
}

static void
param_end(Out *o, const char *desc)
{
  size_t dl = strlen(desc);
  put_u8(o, (unsigned)dl);
  put_bytes(o, desc, dl);
}

static void
param_i16(Out *o, int gid, const char *name, int v, const char *desc)
{
  param_begin(o, gid, name, 2, 0, NULL, 2, desc);
  put_i16(o, v);
  param_end(o, desc);
}

static void
param_i16x2(Out *o, int gid, const char *name, unsigned long v, const char *desc)
{
  int d = 2;
  param_begin(o, gid, name, 2, 1, &d, 4, desc);
  put_i16(o, (int)(uint16_t)(v & 0xffffu));
  put_i16(o, (int)(uint16_t)(v >> 16));
  param_end(o, desc);
}

static void
param_f32(Out *o, int gid, const char *name, double v, const char *desc)
{
  param_begin(o, gid, name, 4, 0, NULL, 4, desc);
  put_f32(o, v);
  param_end(o, desc);
}

static void
param_str(Out *o, int gid, const char *name, const char *s, const char *desc)
{
  int d = (int)strlen(s);
  if (d > 255)
    d = 255;
  param_begin(o, gid, name, -1, 1, &d, (size_t)d, desc);
  put_bytes(o, s, (size_t)d);
  param_end(o, desc);
}

/* A char[width][count] parameter of blank-padded strings. */
static void
param_strs(Out *o, int gid, const char *name, const char *const *s, size_t count, size_t width,
           const char *desc)
{
  int dims[2] = { (int)width, (int)count };
  param_begin(o, gid, name, -1, 2, dims, width * count, desc);
  for (size_t i = 0; i < count; i++) {
    char tmp[256];
    memset(tmp, ' ', sizeof tmp);
    size_t l = s && s[i] ? strlen(s[i]) : 0;
    if (l > width)
      l = width;
    if (l > 0)
      memcpy(tmp, s[i], l);
    put_bytes(o, tmp, width);
  }
  param_end(o, desc);
}

AwStatus
aw_c3d_write_buffer(const AwC3dWriteSpec *spec, uint8_t **out_data, size_t *out_len,
                    AwError *err)
{
  if (spec == NULL || out_data == NULL || out_len == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no spec or no output");
  *out_data = NULL;
  *out_len = 0;
  if (spec->n_points > 255)
    return aw_error_set(err, AW_ERR_UNSUPPORTED, NULL, 0, 0,
                        "%zu points: the writer handles at most 255", spec->n_points);
  if (!(spec->rate_hz > 0 && isfinite(spec->rate_hz)))
    return aw_error_set(err, AW_ERR_RANGE, NULL, 0, 0, "frame rate %g Hz", spec->rate_hz);
  if (spec->n_points > 0 && spec->n_frames > 0 && spec->pos == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no point data");
  if (spec->n_points > 0 && spec->labels == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no point labels");
  long first = spec->first_frame >= 1 ? spec->first_frame : 1;
  if (spec->n_frames > 0xffffffffUL - (unsigned long)first)
    return aw_error_set(err, AW_ERR_RANGE, NULL, 0, 0, "%zu frames is too many", spec->n_frames);
  AwC3dProcessor proc = spec->processor;
  if (proc != AW_C3D_DEC && proc != AW_C3D_MIPS)
    proc = AW_C3D_INTEL;

  size_t total = spec->n_points * spec->n_frames;
  double max_abs = 0, max_res = 0;
  for (size_t k = 0; k < total; k++) {
    for (int a = 0; a < 3; a++)
      if (isfinite(spec->pos[k][a]) && fabs(spec->pos[k][a]) > max_abs)
        max_abs = fabs(spec->pos[k][a]);
    if (spec->residual && spec->residual[k] > max_res)
      max_res = spec->residual[k];
  }
  /* c3d.org: "POINT:SCALE should be max|coordinate|/32000". For float data only the residual
   * uses the scale's magnitude, so it is chosen to cover the largest residual in 255 steps. */
  float scale;
  if (spec->float_data)
    scale = -(float)fmax(fmax(max_abs / 32000.0, max_res / 255.0), 1e-6);
  else
    scale = (float)(max_abs > 0 ? max_abs / 32000.0 : 1e-3);
  double rs = fabs((double)scale);

  Out o = { .proc = proc };
  reserve(&o, 512);
  o.len = 512; /* header, filled in below */

  /* Parameter section. */
  size_t pstart = o.len;
  put_u8(&o, 1);
  put_u8(&o, 0x50);
  put_u8(&o, 0); /* block count, patched */
  put_u8(&o, (unsigned)proc); /* 83 + processor type */
  size_t label_w = 4, desc_w = 1;
  for (size_t i = 0; i < spec->n_points; i++) {
    size_t l = strlen(spec->labels[i]);
    if (l > label_w)
      label_w = l;
    if (spec->descriptions && spec->descriptions[i] && strlen(spec->descriptions[i]) > desc_w)
      desc_w = strlen(spec->descriptions[i]);
  }
  if (label_w > AW_C3D_LABEL_MAX - 1)
    label_w = AW_C3D_LABEL_MAX - 1;
  if (desc_w > 127)
    desc_w = 127;
  unsigned long n_frames = spec->n_frames;
  unsigned long last = (unsigned long)first + n_frames - 1;
  group(&o, 1, "POINT", "3-D point data");
  param_i16(&o, 1, "USED", (int)spec->n_points, "number of points per frame");
  param_f32(&o, 1, "SCALE", scale, "int16 units to POINT:UNITS; negative: float data");
  param_f32(&o, 1, "RATE", spec->rate_hz, "frames per second");
  size_t data_start_at = 0;
  param_i16(&o, 1, "DATA_START", 0, "first block of point data");
  data_start_at = o.len - 1 - strlen("first block of point data") - 2;
  if (n_frames <= 32767)
    param_i16(&o, 1, "FRAMES", (int)n_frames, "number of frames");
  else
    param_f32(&o, 1, "FRAMES", (double)n_frames, "number of frames");
  param_strs(&o, 1, "LABELS", spec->labels, spec->n_points, label_w, "point labels");
  if (spec->n_points > 0)
    param_strs(&o, 1, "DESCRIPTIONS", spec->descriptions, spec->n_points, desc_w,
               "point descriptions");
  param_str(&o, 1, "UNITS", spec->units && spec->units[0] ? spec->units : "mm",
            "unit of the coordinates");
  group(&o, 2, "ANALOG", "analog data (none)");
  param_i16(&o, 2, "USED", 0, "number of analog channels");
  param_f32(&o, 2, "RATE", spec->rate_hz, "analog samples per second");
  param_f32(&o, 2, "GEN_SCALE", 1.0, "general analog scale");
  group(&o, 3, "TRIAL", "trial range");
  param_i16x2(&o, 3, "ACTUAL_START_FIELD", (unsigned long)first, "first frame (low, high word)");
  param_i16x2(&o, 3, "ACTUAL_END_FIELD", last, "last frame (low, high word)");
  group(&o, 4, "MANUFACTURER", "the program that wrote the file");
  param_str(&o, 4, "COMPANY", "Arcwise", "");
  param_str(&o, 4, "SOFTWARE", spec->software ? spec->software : "arcwise", "");
  /* The last record's offset of 0 ends the section (c3d.org "Parameter header"). A record of
   * zero length after it also stops readers that ignore the offset. */
  put_u8(&o, 0);
  put_u8(&o, 0);
  size_t plen = o.len - pstart;
  size_t nblocks = (plen + 511) / 512;
  if (nblocks > 255) {
    free(o.b);
    return aw_error_set(err, AW_ERR_UNSUPPORTED, NULL, 0, 0, "parameter section too large");
  }
  reserve(&o, nblocks * 512 - plen);
  o.len = pstart + nblocks * 512;
  size_t data_block = 2 + nblocks;

  /* Point data, 512-byte aligned. */
  size_t wsz = spec->float_data ? 4 : 2;
  reserve(&o, total * 4 * wsz + 512);
  for (size_t k = 0; k < total && !o.oom; k++) {
    const double *c = spec->pos[k];
    double r = spec->residual ? spec->residual[k] : 0;
    bool valid = isfinite(c[0]) && isfinite(c[1]) && isfinite(c[2]) && r >= 0 && isfinite(r);
    int word = -1;
    if (valid) {
      long q = lround(r / rs);
      word = (int)(q < 0 ? 0 : q > 255 ? 255 : q);
    }
    if (spec->float_data) {
      for (int a = 0; a < 3; a++)
        put_f32(&o, valid ? c[a] : 0.0);
      put_f32(&o, (double)word);
    } else {
      for (int a = 0; a < 3; a++) {
        long q = valid ? lround(c[a] / (double)scale) : 0;
        put_i16(&o, (int)(q < -32768 ? -32768 : q > 32767 ? 32767 : q));
      }
      put_i16(&o, word);
    }
  }
  size_t pad = (512 - o.len % 512) % 512;
  reserve(&o, pad);
  if (o.oom) {
    free(o.b);
    return aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
  }
  o.len += pad;

  o.b[pstart + 2] = (uint8_t)nblocks;
  enc_i16(o.b + data_start_at, (int)data_block, proc);
  uint8_t *h = o.b;
  h[0] = 2;
  h[1] = 0x50;
  enc_i16(h + 2, (int)spec->n_points, proc);
  enc_i16(h + 4, 0, proc);
  enc_i16(h + 6, (int)(first > 65535 ? 65535 : first), proc);
  enc_i16(h + 8, (int)(last > 65535 ? 65535 : last), proc);
  enc_i16(h + 10, 0, proc);
  enc_f32(h + 12, scale, proc);
  enc_i16(h + 16, (int)data_block, proc);
  enc_i16(h + 18, 0, proc);
  enc_f32(h + 20, spec->rate_hz, proc);
  *out_data = o.b;
  *out_len = o.len;
  return AW_OK;
}

AwStatus
aw_c3d_write_file(const char *path, const AwC3dWriteSpec *spec, bool overwrite, AwError *err)
{
  if (path == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no path");
  if (!overwrite && access(path, F_OK) == 0)
    return aw_error_set(err, AW_ERR_IO, path, 0, 0, "already exists; not replacing it");
  uint8_t *data;
  size_t len;
  AwStatus st = aw_c3d_write_buffer(spec, &data, &len, err);
  if (st != AW_OK)
    return st;
  size_t tl = strlen(path) + 16;
  char *tmp = malloc(tl);
  if (tmp == NULL) {
    free(data);
    return aw_error_set(err, AW_ERR_NO_MEMORY, path, 0, 0, "out of memory");
  }
  snprintf(tmp, tl, "%s.tmp-XXXXXX", path);
  int fd = mkstemp(tmp);
  if (fd < 0) {
    st = aw_error_set(err, AW_ERR_IO, path, 0, 0, "cannot create a temporary file: %s",
                      strerror(errno));
    goto out;
  }
  size_t done = 0;
  while (done < len) {
    ssize_t w = write(fd, data + done, len - done);
    if (w < 0 && errno == EINTR)
      continue;
    if (w <= 0) {
      st = aw_error_set(err, AW_ERR_IO, path, 0, 0, "write failed: %s", strerror(errno));
      close(fd);
      unlink(tmp);
      goto out;
    }
    done += (size_t)w;
  }
  if (fsync(fd) != 0 || close(fd) != 0) {
    st = aw_error_set(err, AW_ERR_IO, path, 0, 0, "write failed: %s", strerror(errno));
    unlink(tmp);
    goto out;
  }
  if (!overwrite && access(path, F_OK) == 0) {
    unlink(tmp);
    st = aw_error_set(err, AW_ERR_IO, path, 0, 0, "already exists; not replacing it");
    goto out;
  }
  if (rename(tmp, path) != 0) {
    st = aw_error_set(err, AW_ERR_IO, path, 0, 0, "cannot rename into place: %s",
                      strerror(errno));
    unlink(tmp);
  }
out:
  free(tmp);
  free(data);
  return st;
}

void
aw_c3d_path_options_default(AwC3dPathOptions *out)
{
  out->rate_hz = 0;
  out->float_data = true;
  out->frame = AW_C3D_FRAME_GRAV;
  out->units = "mm";
  out->label = "HAND";
}

static int
cmp_double(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return x < y ? -1 : x > y;
}

void
aw_c3d_path_spec_release(AwC3dWriteSpec *spec)
{
  if (spec == NULL)
    return;
  free(spec->pos);
  free((void *)spec->residual);
  free((void *)spec->labels);
  spec->pos = NULL;
  spec->residual = NULL;
  spec->labels = NULL;
}

AwStatus
aw_c3d_path_spec(const AwFusedPath *path, const AwC3dPathOptions *opt, AwC3dWriteSpec *spec,
                 AwError *err)
{
  if (path == NULL || spec == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no path or no spec");
  memset(spec, 0, sizeof *spec);
  AwC3dPathOptions d;
  aw_c3d_path_options_default(&d);
  if (opt == NULL)
    opt = &d;
  if (path->n < 2)
    return aw_error_set(err, AW_ERR_TOO_FEW, NULL, 0, 0, "a path of %zu samples", path->n);
  double k = aw_c3d_units_to_m(opt->units ? opt->units : "mm");
  if (k == 0)
    return aw_error_set(err, AW_ERR_UNITS, NULL, 0, 0, "unknown unit '%s'", opt->units);
  for (size_t i = 1; i < path->n; i++)
    if (!(path->t_s[i] > path->t_s[i - 1]))
      return aw_error_set(err, AW_ERR_RANGE, NULL, 0, 0,
                          "path time does not increase at sample %zu", i);
  double rate = opt->rate_hz;
  if (!(rate > 0)) {
    double *dt = malloc((path->n - 1) * sizeof *dt);
    if (dt == NULL)
      return aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
    for (size_t i = 1; i < path->n; i++)
      dt[i - 1] = path->t_s[i] - path->t_s[i - 1];
    qsort(dt, path->n - 1, sizeof *dt, cmp_double);
    rate = 1.0 / dt[(path->n - 1) / 2];
    free(dt);
  }
  double t0 = path->t_s[0], t1 = path->t_s[path->n - 1];
  size_t n = (size_t)floor((t1 - t0) * rate + 1e-9) + 1;
  double (*pos)[3] = malloc(n * sizeof *pos);
  double *res = malloc(n * sizeof *res);
  const char **labels = malloc(sizeof *labels);
  if (pos == NULL || res == NULL || labels == NULL) {
    free(pos);
    free(res);
    free(labels);
    return aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
  }
  /* v_grav = conj(q_cam_grav) v_cam q_cam_grav, written out as R^T v (q = w, x, y, z; see
   * math3.h, not included here because its inline helpers trip -Wpedantic in C17). */
  const double *q = path->report.q_cam_grav;
  double qn = sqrt(q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]);
  double w = 1, x = 0, y = 0, z = 0;
  if (qn > 0 && isfinite(qn)) {
    w = q[0] / qn; x = q[1] / qn; y = q[2] / qn; z = q[3] / qn;
  }
  const double R[3][3] = {
    { 1 - 2 * (y * y + z * z), 2 * (x * y - w * z), 2 * (x * z + w * y) },
    { 2 * (x * y + w * z), 1 - 2 * (x * x + z * z), 2 * (y * z - w * x) },
    { 2 * (x * z - w * y), 2 * (y * z + w * x), 1 - 2 * (x * x + y * y) },
  }; /* R_cam_grav */
  size_t j = 0;
  for (size_t i = 0; i < n; i++) {
    double t = t0 + (double)i / rate;
    while (j + 2 < path->n && path->t_s[j + 1] <= t)
      j++;
    double u = (t - path->t_s[j]) / (path->t_s[j + 1] - path->t_s[j]);
    u = u < 0 ? 0 : u > 1 ? 1 : u;
    double p_cam[3], sig2 = 0;
    for (int a = 0; a < 3; a++) {
      p_cam[a] = path->pos_cam_m[j][a] + u * (path->pos_cam_m[j + 1][a] - path->pos_cam_m[j][a]);
      if (path->pos_sigma_cam_m) {
        double s = path->pos_sigma_cam_m[j][a] +
                   u * (path->pos_sigma_cam_m[j + 1][a] - path->pos_sigma_cam_m[j][a]);
        sig2 += s * s;
      }
    }
    double p[3];
    if (opt->frame == AW_C3D_FRAME_CAM)
      memcpy(p, p_cam, sizeof p);
    else
      for (int a = 0; a < 3; a++)
        p[a] = R[0][a] * p_cam[0] + R[1][a] * p_cam[1] + R[2][a] * p_cam[2];
    for (int a = 0; a < 3; a++)
      pos[i][a] = p[a] / k;
    res[i] = isfinite(sig2) ? sqrt(sig2) / k : -1;
  }
  static const char *const descs[] = { "fused lead-hand path (depth camera + wrist IMU)" };
  spec->n_points = 1;
  spec->n_frames = n;
  spec->rate_hz = rate;
  spec->first_frame = 1;
  spec->units = opt->units ? opt->units : "mm";
  spec->pos = pos;
  spec->residual = res;
  spec->descriptions = descs;
  spec->float_data = opt->float_data;
  spec->processor = AW_C3D_INTEL;
  spec->software = "arcwise";
  labels[0] = opt->label && opt->label[0] ? opt->label : "HAND"; /* the caller's string */
  spec->labels = labels;
  return AW_OK;
}

AwStatus
aw_c3d_write_fused_path(const char *path, const AwFusedPath *fused, const AwC3dPathOptions *opt,
                        bool overwrite, AwError *err)
{
  AwC3dPathOptions d;
  aw_c3d_path_options_default(&d);
  if (opt == NULL)
    opt = &d;
  AwC3dWriteSpec spec;
  AwStatus st = aw_c3d_path_spec(fused, opt, &spec, err);
  if (st != AW_OK)
    return st;
  st = aw_c3d_write_file(path, &spec, overwrite, err);
  aw_c3d_path_spec_release(&spec);
  return st;
}
