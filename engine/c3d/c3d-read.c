/* SPDX-License-Identifier: GPL-3.0-or-later */
/* C3D reader (c3d.org, "The C3D File Format - User Guide"; layout summarised in
 * ../shared/REFERENCES.md section 4). Every access goes through bounds-checked helpers on the
 * whole buffer, so a truncated or corrupt file is an error, never an out-of-bounds read. */
#include "c3d-private.h"

#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

typedef struct {
  const uint8_t *b;
  size_t len;
  AwC3dProcessor proc;
} Buf;

static int
rd_i16(const Buf *buf, size_t off)
{
  uint16_t u = buf->proc == AW_C3D_MIPS ? (uint16_t)(buf->b[off] << 8 | buf->b[off + 1])
                                        : (uint16_t)(buf->b[off] | buf->b[off + 1] << 8);
  return (int16_t)u;
}

static unsigned
rd_u16(const Buf *buf, size_t off)
{
  return (uint16_t)rd_i16(buf, off);
}

static double
rd_f32(const Buf *buf, size_t off)
{
  return aw_c3d_decode_float(buf->b + off, buf->proc);
}

double
aw_c3d_decode_float(const uint8_t *p, AwC3dProcessor proc)
{
  uint32_t bits;
  if (proc == AW_C3D_MIPS) {
    bits = (uint32_t)p[0] << 24 | (uint32_t)p[1] << 16 | (uint32_t)p[2] << 8 | p[3];
  } else if (proc == AW_C3D_DEC) {
    /* VAX F-float: two little-endian 16-bit words, the first holding sign, exponent (excess
     * 128) and the high fraction; the mantissa is 0.1f (hidden bit after the point). */
    uint32_t w0 = (uint32_t)(p[0] | p[1] << 8), w1 = (uint32_t)(p[2] | p[3] << 8);
    bits = w0 << 16 | w1;
    unsigned e = (bits >> 23) & 0xffu;
    if (e == 0)
      return (bits >> 31) ? (double)NAN : 0.0; /* sign with exponent 0 is VAX's reserved operand */
    double m = 0.5 + (double)(bits & 0x7fffffu) / 16777216.0;
    double v = ldexp(m, (int)e - 128);
    return (bits >> 31) ? -v : v;
  } else {
    bits = (uint32_t)p[3] << 24 | (uint32_t)p[2] << 16 | (uint32_t)p[1] << 8 | p[0];
  }
  float f;
  memcpy(&f, &bits, sizeof f);
  return (double)f;
}

static void note(AwC3dFile *f, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__((format(printf, 2, 3)))
#endif
  ;

static void
note(AwC3dFile *f, const char *fmt, ...)
{
  size_t used = strlen(f->notes);
  if (used + 2 >= sizeof f->notes)
    return;
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(f->notes + used, sizeof f->notes - used - 1, fmt, ap);
  va_end(ap);
  used = strlen(f->notes);
  f->notes[used] = '\n';
  f->notes[used + 1] = '\0';
}

static void
trim_copy(char *dst, size_t dst_size, const char *src, size_t n)
{
  while (n > 0 && (src[n - 1] == ' ' || src[n - 1] == '\0'))
    n--;
  size_t i = 0;
  while (i < n && (src[i] == ' '))
    i++;
  size_t len = n - i;
  if (len >= dst_size)
    len = dst_size - 1;
  memcpy(dst, src + i, len);
  dst[len] = '\0';
}

void
aw_c3d_file_free(AwC3dFile *f)
{
  if (f == NULL)
    return;
  for (size_t i = 0; i < f->n_params; i++) {
    free(f->params[i].values);
    free(f->params[i].chars);
  }
  free(f->params);
  free(f->labels);
  free(f->pos);
  free(f->pos_raw);
  free(f->residual);
  free(f->camera_mask);
  free(f);
}

const AwC3dParam *
aw_c3d_param(const AwC3dFile *f, const char *group, const char *name)
{
  if (f == NULL)
    return NULL;
  for (size_t i = 0; i < f->n_params; i++)
    if (strcasecmp(f->params[i].group, group) == 0 && strcasecmp(f->params[i].name, name) == 0)
      return &f->params[i];
  return NULL;
}

/* First numeric value of a parameter, or NAN. */
static double
param_num(const AwC3dFile *f, const char *group, const char *name)
{
  const AwC3dParam *p = aw_c3d_param(f, group, name);
  if (p == NULL || p->values == NULL || p->n_values == 0)
    return NAN;
  return p->values[0];
}

/* int16 parameters that count things are unsigned in practice (frame counts above 32767). */
static double
param_count(const AwC3dFile *f, const char *group, const char *name)
{
  const AwC3dParam *p = aw_c3d_param(f, group, name);
  if (p == NULL || p->values == NULL || p->n_values == 0)
    return NAN;
  double v = p->values[0];
  if (p->type == AW_C3D_INT16 && v < 0)
    v += 65536.0;
  return v;
}

static AwStatus
parse_params(const Buf *buf, size_t start, size_t end, AwC3dFile *f, const char *name,
             AwError *err)
{
  /* Groups can follow their parameters, so names are resolved after the walk. */
  size_t cap = 64, n = 0;
  AwC3dParam *params = calloc(cap, sizeof *params);
  int *pgroup = calloc(cap, sizeof *pgroup);
  char (*gnames)[AW_C3D_NAME_MAX] = calloc(128, sizeof *gnames);
  AwStatus st = AW_OK;
  if (params == NULL || pgroup == NULL || gnames == NULL) {
    st = aw_error_set(err, AW_ERR_NO_MEMORY, name, 0, 0, "out of memory reading parameters");
    goto out;
  }
  size_t pos = start + 4;
  while (pos + 2 <= end) {
    int nchar = (int8_t)buf->b[pos];
    int id = (int8_t)buf->b[pos + 1];
    if (nchar == 0 || id == 0)
      break;
    size_t nlen = (size_t)abs(nchar);
    size_t off_field = pos + 2 + nlen;
    if (off_field + 2 > end) {
      st = aw_error_set(err, AW_ERR_INCOMPLETE, name, 0, 0,
                        "parameter record at byte %zu runs past the parameter section "
                        "(ends at byte %zu)", pos, end);
      goto out;
    }
    char rec_name[AW_C3D_NAME_MAX];
    trim_copy(rec_name, sizeof rec_name, (const char *)buf->b + pos + 2, nlen);
    for (char *c = rec_name; *c; c++)
      *c = (char)toupper((unsigned char)*c);
    int next_rel = rd_i16(buf, off_field);
    size_t q = off_field + 2;
    if (id < 0) {
      if (-id < 128)
        snprintf(gnames[-id], AW_C3D_NAME_MAX, "%s", rec_name);
    } else {
      if (q + 2 > end) {
        st = aw_error_set(err, AW_ERR_INCOMPLETE, name, 0, 0,
                          "parameter %s at byte %zu is cut off", rec_name, pos);
        goto out;
      }
      int type = (int8_t)buf->b[q];
      int ndims = buf->b[q + 1];
      q += 2;
      if (type != -1 && type != 1 && type != 2 && type != 4) {
        st = aw_error_set(err, AW_ERR_PARSE, name, 0, 0,
                          "parameter %s at byte %zu has data type %d (expected -1, 1, 2 or 4)",
                          rec_name, pos, type);
        goto out;
      }
      if (ndims > 7 || q + (size_t)ndims > end) {
        st = aw_error_set(err, AW_ERR_PARSE, name, 0, 0,
                          "parameter %s at byte %zu has %d dimensions (at most 7)", rec_name,
                          pos, ndims);
        goto out;
      }
      if (n == cap) {
        cap *= 2;
        AwC3dParam *np = realloc(params, cap * sizeof *np);
        int *ng = np ? realloc(pgroup, cap * sizeof *ng) : NULL;
        if (np != NULL)
          params = np;
        if (ng == NULL) {
          st = aw_error_set(err, AW_ERR_NO_MEMORY, name, 0, 0, "out of memory");
          goto out;
        }
        pgroup = ng;
        memset(params + n, 0, (cap - n) * sizeof *params);
      }
      AwC3dParam *p = &params[n];
      memset(p, 0, sizeof *p);
      snprintf(p->name, sizeof p->name, "%s", rec_name);
      p->type = (AwC3dType)type;
      p->n_dims = ndims;
      size_t count = 1;
      for (int d = 0; d < ndims; d++) {
        p->dims[d] = buf->b[q + (size_t)d];
        count *= (size_t)p->dims[d];
      }
      q += (size_t)ndims;
      size_t elem = (size_t)abs(type);
      if (count > (end - q) / elem) {
        st = aw_error_set(err, AW_ERR_INCOMPLETE, name, 0, 0,
                          "parameter %s at byte %zu declares %zu values, more than the "
                          "parameter section holds", rec_name, pos, count);
        goto out;
      }
      p->n_values = count;
      if (type == -1) {
        p->chars = malloc(count + 1);
        if (p->chars == NULL) {
          st = aw_error_set(err, AW_ERR_NO_MEMORY, name, 0, 0, "out of memory");
          goto out;
        }
        memcpy(p->chars, buf->b + q, count);
        p->chars[count] = '\0';
      } else {
        p->values = malloc((count > 0 ? count : 1) * sizeof *p->values);
        if (p->values == NULL) {
          st = aw_error_set(err, AW_ERR_NO_MEMORY, name, 0, 0, "out of memory");
          goto out;
        }
        for (size_t i = 0; i < count; i++) {
          size_t o = q + i * elem;
          p->values[i] = type == 1 ? (double)buf->b[o]
                       : type == 2 ? (double)rd_i16(buf, o)
                                   : rd_f32(buf, o);
        }
      }
      q += count * elem;
      if (q < end) {
        size_t dl = buf->b[q];
        if (q + 1 + dl <= end)
          trim_copy(p->description, sizeof p->description, (const char *)buf->b + q + 1, dl);
      }
      pgroup[n] = id;
      n++;
    }
    if (next_rel <= 0)
      break; /* an offset of 0 marks the last record */
    size_t next = off_field + (size_t)next_rel;
    if (next <= pos)
      break;
    pos = next;
  }
  for (size_t i = 0; i < n; i++) {
    if (pgroup[i] < 128 && gnames[pgroup[i]][0] != '\0')
      snprintf(params[i].group, sizeof params[i].group, "%s", gnames[pgroup[i]]);
    else
      snprintf(params[i].group, sizeof params[i].group, "GROUP%d", pgroup[i]);
  }
  f->params = params;
  f->n_params = n;
  params = NULL;
out:
  if (params != NULL) {
    for (size_t i = 0; i < cap; i++) { /* unused entries are zeroed */
      free(params[i].values);
      free(params[i].chars);
    }
    free(params);
  }
  free(pgroup);
  free(gnames);
  return st;
}

/* Labels from POINT:LABELS, LABELS2, ... (files with more than 255 points continue there). */
static AwStatus
read_labels(AwC3dFile *f, const char *name, AwError *err)
{
  f->labels = calloc(f->n_points > 0 ? f->n_points : 1, sizeof *f->labels);
  if (f->labels == NULL)
    return aw_error_set(err, AW_ERR_NO_MEMORY, name, 0, 0, "out of memory");
  size_t k = 0;
  for (int part = 1; part < 100 && k < f->n_points; part++) {
    char pname[16];
    if (part == 1)
      snprintf(pname, sizeof pname, "LABELS");
    else
      snprintf(pname, sizeof pname, "LABELS%d", part);
    const AwC3dParam *p = aw_c3d_param(f, "POINT", pname);
    if (p == NULL || p->chars == NULL)
      break;
    size_t w = p->n_dims >= 1 ? (size_t)p->dims[0] : p->n_values;
    size_t cnt = p->n_dims >= 2 ? (size_t)p->dims[1] : 1;
    for (size_t i = 0; i < cnt && k < f->n_points && w > 0; i++, k++)
      trim_copy(f->labels[k], AW_C3D_LABEL_MAX, p->chars + i * w, w);
  }
  if (k < f->n_points)
    note(f, "POINT:LABELS names %zu of %zu points; the others are called P<number>", k,
         f->n_points);
  for (; k < f->n_points; k++)
    snprintf(f->labels[k], AW_C3D_LABEL_MAX, "P%zu", k + 1);
  return AW_OK;
}

static bool
fits(size_t len, size_t start_block, size_t frames, size_t frame_bytes)
{
  if (start_block < 1)
    return false;
  size_t off = (start_block - 1) * 512;
  if (off > len)
    return false;
  if (frame_bytes != 0 && frames > (len - off) / frame_bytes)
    return false;
  return true;
}

AwStatus
aw_c3d_read_buffer(const uint8_t *data, size_t len, const char *name, AwC3dFile **out,
                   AwError *err)
{
  if (out == NULL || (data == NULL && len > 0))
    return aw_error_set(err, AW_ERR_INVALID_ARG, name, 0, 0, "no output or no data");
  *out = NULL;
  if (name == NULL)
    name = "C3D data";
  if (len < 512)
    return aw_error_set(err, len == 0 ? AW_ERR_EMPTY : AW_ERR_INCOMPLETE, name, 0, 0,
                        "%zu bytes: a C3D file has at least a 512-byte header", len);
  if (data[1] != 0x50)
    return aw_error_set(err, AW_ERR_PARSE, name, 0, 0,
                        "byte 2 is 0x%02x, not the C3D key 0x50: not a C3D file", data[1]);
  size_t pblock = data[0];
  if (pblock < 2)
    return aw_error_set(err, AW_ERR_PARSE, name, 0, 0,
                        "header points to parameter block %zu (must follow the header)", pblock);
  size_t poff = (pblock - 1) * 512;
  if (poff + 4 > len)
    return aw_error_set(err, AW_ERR_INCOMPLETE, name, 0, 0,
                        "file ends at byte %zu before the parameter section at byte %zu", len,
                        poff);
  int ptype = data[poff + 3];
  if (ptype < 84 || ptype > 86)
    return aw_error_set(err, AW_ERR_UNSUPPORTED, name, 0, 0,
                        "processor type byte %d at byte %zu (expected 84 Intel, 85 DEC or "
                        "86 MIPS)", ptype, poff + 4);

  AwC3dFile *f = calloc(1, sizeof *f);
  if (f == NULL)
    return aw_error_set(err, AW_ERR_NO_MEMORY, name, 0, 0, "out of memory");
  AwStatus st = AW_OK;
  Buf buf = { data, len, (AwC3dProcessor)ptype };
  f->processor = buf.proc;
  f->param_start_block = pblock;
  f->n_param_blocks = data[poff + 2];
  size_t pend = poff + f->n_param_blocks * 512;
  if (f->n_param_blocks == 0 || pend > len) {
    note(f, "parameter section declares %zu blocks; read up to byte %zu", f->n_param_blocks,
         len);
    if (pend > len || f->n_param_blocks == 0)
      pend = len;
  }
  st = parse_params(&buf, poff, pend, f, name, err);
  if (st != AW_OK)
    goto fail;

  /* The header, decoded now that the byte order is known (1-based word w at byte 2(w-1)). */
  size_t h_points = rd_u16(&buf, 2);
  size_t h_analog = rd_u16(&buf, 4);
  size_t h_first = rd_u16(&buf, 6);
  size_t h_last = rd_u16(&buf, 8);
  double h_scale = rd_f32(&buf, 12);
  size_t h_start = rd_u16(&buf, 16);
  double h_rate = rd_f32(&buf, 20);

  /* Parameters are authoritative where c3d.org says so; the header is a copy. */
  double p_used = param_count(f, "POINT", "USED");
  f->n_points = h_points;
  if (isfinite(p_used) && p_used >= 0) {
    if ((size_t)p_used != h_points)
      note(f, "header says %zu points, POINT:USED says %.0f; using POINT:USED", h_points,
           p_used);
    f->n_points = (size_t)p_used;
  }
  double p_scale = param_num(f, "POINT", "SCALE");
  f->point_scale = h_scale;
  if (isfinite(p_scale) && p_scale != 0) {
    if (!(fabs(p_scale - h_scale) <= 1e-6 * fabs(p_scale)))
      note(f, "header scale %g, POINT:SCALE %g; using POINT:SCALE", h_scale, p_scale);
    f->point_scale = p_scale;
  }
  if (!isfinite(f->point_scale) || f->point_scale == 0) {
    st = aw_error_set(err, AW_ERR_PARSE, name, 0, 0, "POINT:SCALE is %g (must be non-zero)",
                      f->point_scale);
    goto fail;
  }
  f->float_data = f->point_scale < 0;
  double p_rate = param_num(f, "POINT", "RATE");
  f->point_rate_hz = h_rate;
  if (isfinite(p_rate) && p_rate > 0) {
    if (!(fabs(p_rate - h_rate) <= 1e-6 * p_rate))
      note(f, "header rate %g Hz, POINT:RATE %g Hz; using POINT:RATE", h_rate, p_rate);
    f->point_rate_hz = p_rate;
  }
  if (!(isfinite(f->point_rate_hz) && f->point_rate_hz > 0)) {
    st = aw_error_set(err, AW_ERR_PARSE, name, 0, 0, "the frame rate is %g Hz",
                      f->point_rate_hz);
    goto fail;
  }
  f->first_frame = (long)h_first;

  /* Candidates where header and parameters may disagree; the first combination that is
   * consistent with the file's length wins. */
  size_t frames_c[3], n_fc = 0;
  double p_frames = param_count(f, "POINT", "FRAMES");
  if (isfinite(p_frames) && p_frames >= 0)
    frames_c[n_fc++] = (size_t)p_frames;
  if (h_last >= h_first)
    frames_c[n_fc++] = h_last - h_first + 1;
  const AwC3dParam *ts = aw_c3d_param(f, "TRIAL", "ACTUAL_START_FIELD");
  const AwC3dParam *te = aw_c3d_param(f, "TRIAL", "ACTUAL_END_FIELD");
  if (ts && te && ts->values && te->values && ts->n_values >= 2 && te->n_values >= 2) {
    /* Two unsigned 16-bit words, low word first, for trials longer than 65535 frames. */
    double s = fmod(ts->values[0] + 65536, 65536) + 65536 * fmod(ts->values[1] + 65536, 65536);
    double e = fmod(te->values[0] + 65536, 65536) + 65536 * fmod(te->values[1] + 65536, 65536);
    if (e >= s && s >= 1) {
      frames_c[n_fc++] = (size_t)(e - s + 1);
      if (h_last == 65535)
        f->first_frame = (long)s;
    }
  }
  if (n_fc == 0) {
    st = aw_error_set(err, AW_ERR_PARSE, name, 0, 0,
                      "no frame count: header frames %zu..%zu and no POINT:FRAMES", h_first,
                      h_last);
    goto fail;
  }
  size_t start_c[2], n_sc = 0;
  double p_start = param_count(f, "POINT", "DATA_START");
  start_c[n_sc++] = h_start;
  if (isfinite(p_start) && (size_t)p_start != h_start)
    start_c[n_sc++] = (size_t)p_start;
  size_t analog_c[2], n_ac = 0;
  analog_c[n_ac++] = h_analog;
  double a_used = param_count(f, "ANALOG", "USED"), a_rate = param_num(f, "ANALOG", "RATE");
  if (isfinite(a_used) && isfinite(a_rate) && a_rate > 0) {
    double per = a_rate / f->point_rate_hz;
    size_t w = (size_t)llround(a_used * per);
    if (w != h_analog && fabs(per - round(per)) < 1e-6)
      analog_c[n_ac++] = w;
  }
  size_t word = f->float_data ? 4 : 2;
  size_t min_start = pblock + (f->n_param_blocks > 0 ? f->n_param_blocks : 1);
  bool found = false;
  /* First pass: data after the declared parameter blocks. Second pass: some writers declare
   * more parameter blocks than they use and start the data inside them. */
  for (int pass = 0; pass < 2 && !found; pass++)
  for (size_t a = 0; a < n_ac && !found; a++)
    for (size_t s = 0; s < n_sc && !found; s++)
      for (size_t fc = 0; fc < n_fc && !found; fc++) {
        if (start_c[s] < (pass == 0 ? min_start : pblock + 1))
          continue;
        if (f->n_points > SIZE_MAX / 64 || analog_c[a] > SIZE_MAX / 64)
          continue;
        size_t fb = (4 * f->n_points + analog_c[a]) * word;
        if (fits(len, start_c[s], frames_c[fc], fb)) {
          found = true;
          f->analog_words_per_frame = analog_c[a];
          f->data_start_block = start_c[s];
          f->n_frames = frames_c[fc];
        }
      }
  if (!found) {
    size_t fb = (4 * f->n_points + h_analog) * word;
    size_t s = h_start >= min_start ? h_start : (size_t)(isfinite(p_start) ? p_start : 0);
    st = aw_error_set(err, AW_ERR_INCOMPLETE, name, 0, 0,
                      "truncated: %zu frames of %zu bytes from block %zu need %zu bytes, the "
                      "file has %zu", frames_c[0], fb, s,
                      (s > 0 ? (s - 1) * 512 : 0) + frames_c[0] * fb, len);
    goto fail;
  }
  if (f->data_start_block < min_start)
    note(f, "point data starts at block %zu, inside the %zu parameter blocks the section "
         "declares", f->data_start_block, f->n_param_blocks);
  if (n_sc > 1 && f->data_start_block != start_c[0])
    note(f, "header data start block %zu does not fit the file; using POINT:DATA_START %zu",
         start_c[0], f->data_start_block);
  else if (n_sc > 1)
    note(f, "POINT:DATA_START %zu disagrees with the header's block %zu; using the header",
         start_c[1], start_c[0]);
  if (n_fc > 1 && f->n_frames != frames_c[0])
    note(f, "frame counts disagree (%zu vs %zu); using %zu, which fits the file", frames_c[0],
         frames_c[1], f->n_frames);
  if (f->analog_words_per_frame != h_analog)
    note(f, "header says %zu analog values per frame, ANALOG:USED and RATE give %zu; using %zu",
         h_analog, analog_c[n_ac - 1], f->analog_words_per_frame);

  st = read_labels(f, name, err);
  if (st != AW_OK)
    goto fail;
  const AwC3dParam *up = aw_c3d_param(f, "POINT", "UNITS");
  if (up != NULL && up->chars != NULL)
    trim_copy(f->units, sizeof f->units, up->chars, up->n_values);

  size_t total = f->n_points * f->n_frames;
  f->pos = malloc((total ? total : 1) * sizeof *f->pos);
  f->pos_raw = malloc((total ? total : 1) * sizeof *f->pos_raw);
  f->residual = malloc((total ? total : 1) * sizeof *f->residual);
  f->camera_mask = malloc(total ? total : 1);
  if (!f->pos || !f->pos_raw || !f->residual || !f->camera_mask) {
    st = aw_error_set(err, AW_ERR_NO_MEMORY, name, 0, 0, "out of memory for %zu point samples",
                      total);
    goto fail;
  }
  size_t fb = (4 * f->n_points + f->analog_words_per_frame) * word;
  size_t base = (f->data_start_block - 1) * 512;
  double res_scale = fabs(f->point_scale);
  for (size_t fr = 0; fr < f->n_frames; fr++) {
    for (size_t p = 0; p < f->n_points; p++) {
      size_t o = base + fr * fb + p * 4 * word, k = fr * f->n_points + p;
      double c[3], w;
      if (f->float_data) {
        for (int i = 0; i < 3; i++)
          c[i] = rd_f32(&buf, o + 4 * (size_t)i);
        w = rd_f32(&buf, o + 12);
      } else {
        for (int i = 0; i < 3; i++)
          c[i] = rd_i16(&buf, o + 2 * (size_t)i) * f->point_scale;
        w = rd_i16(&buf, o + 6);
      }
      memcpy(f->pos_raw[k], c, sizeof c);
      bool ok = isfinite(w) && w >= 0 && isfinite(c[0]) && isfinite(c[1]) && isfinite(c[2]);
      if (ok) {
        unsigned iw = w < 65536 ? (unsigned)w : 0xffffu;
        f->residual[k] = (float)((iw & 0xffu) * res_scale);
        f->camera_mask[k] = (uint8_t)((iw >> 8) & 0x7fu);
        memcpy(f->pos[k], c, sizeof c);
      } else {
        f->residual[k] = -1.0f;
        f->camera_mask[k] = 0;
        f->pos[k][0] = f->pos[k][1] = f->pos[k][2] = NAN;
        f->n_invalid++;
      }
    }
  }
  if (total > 0 && f->n_invalid == total)
    note(f, "every point sample is flagged invalid (negative residual word)");
  *out = f;
  return AW_OK;
fail:
  aw_c3d_file_free(f);
  return st;
}

AwStatus
aw_c3d_read_file(const char *path, AwC3dFile **out, AwError *err)
{
  if (out == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, path, 0, 0, "no output");
  *out = NULL;
  FILE *fp = fopen(path, "rb");
  if (fp == NULL)
    return aw_error_set(err, AW_ERR_IO, path, 0, 0, "cannot open: %s", strerror(errno));
  uint8_t *data = NULL;
  size_t len = 0, cap = 0;
  for (;;) {
    if (len == cap) {
      cap = cap ? cap * 2 : 65536;
      uint8_t *nd = realloc(data, cap);
      if (nd == NULL) {
        free(data);
        fclose(fp);
        return aw_error_set(err, AW_ERR_NO_MEMORY, path, 0, 0, "out of memory");
      }
      data = nd;
    }
    size_t got = fread(data + len, 1, cap - len, fp);
    len += got;
    if (got == 0)
      break;
  }
  bool bad = ferror(fp) != 0;
  fclose(fp);
  if (bad) {
    free(data);
    return aw_error_set(err, AW_ERR_IO, path, 0, 0, "read error");
  }
  AwStatus st = aw_c3d_read_buffer(data, len, path, out, err);
  free(data);
  return st;
}

long
aw_c3d_point_index(const AwC3dFile *f, const char *label)
{
  if (f == NULL || label == NULL)
    return -1;
  char want[AW_C3D_LABEL_MAX];
  trim_copy(want, sizeof want, label, strlen(label));
  for (size_t i = 0; i < f->n_points; i++)
    if (strcasecmp(f->labels[i], want) == 0)
      return (long)i;
  return -1;
}

double
aw_c3d_units_to_m(const char *units)
{
  if (units == NULL)
    return 0;
  if (strcasecmp(units, "mm") == 0)
    return 1e-3;
  if (strcasecmp(units, "cm") == 0)
    return 1e-2;
  if (strcasecmp(units, "m") == 0)
    return 1.0;
  if (strcasecmp(units, "in") == 0 || strcasecmp(units, "inch") == 0)
    return 0.0254; /* exact, international yard and pound agreement (1959) */
  return 0;
}

void
aw_marker_options_default(AwMarkerOptions *out)
{
  out->units_if_missing = NULL;
  out->keep_flagged_invalid = false;
}

void
aw_marker_trajectory_free(AwMarkerTrajectory *m)
{
  if (m == NULL)
    return;
  free(m->t_s);
  free(m->pos_m);
  free(m);
}

AwStatus
aw_c3d_marker_trajectory(const AwC3dFile *f, const char *label, const AwMarkerOptions *opt,
                         AwMarkerTrajectory **out, AwError *err)
{
  if (f == NULL || out == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, NULL, 0, 0, "no file or no output");
  *out = NULL;
  AwMarkerOptions defaults;
  aw_marker_options_default(&defaults);
  if (opt == NULL)
    opt = &defaults;
  if (f->n_points == 0)
    return aw_error_set(err, AW_ERR_EMPTY, NULL, 0, 0, "the C3D file has no 3-D points");
  long idx = label ? aw_c3d_point_index(f, label) : 0;
  if (idx < 0) {
    char list[384] = "";
    for (size_t i = 0; i < f->n_points && strlen(list) + AW_C3D_LABEL_MAX + 8 < sizeof list; i++) {
      strcat(list, i ? ", " : "");
      strcat(list, f->labels[i]);
    }
    return aw_error_set(err, AW_ERR_RANGE, NULL, 0, 0, "no marker '%s'; the file has: %s%s",
                        label, list, strlen(list) + AW_C3D_LABEL_MAX + 8 >= sizeof list ? ", ..." : "");
  }
  const char *units = f->units;
  bool declared = units[0] != '\0';
  if (!declared) {
    if (opt->units_if_missing == NULL)
      return aw_error_set(err, AW_ERR_UNITS, NULL, 0, 0,
                          "the file has no POINT:UNITS; say which unit its coordinates are in "
                          "(mm or m)");
    units = opt->units_if_missing;
  }
  double k = aw_c3d_units_to_m(units);
  if (k == 0)
    return aw_error_set(err, AW_ERR_UNITS, NULL, 0, 0, "unknown point unit '%s'", units);
  if (f->n_frames == 0)
    return aw_error_set(err, AW_ERR_EMPTY, NULL, 0, 0, "the C3D file has no frames");

  AwMarkerTrajectory *m = calloc(1, sizeof *m);
  if (m == NULL)
    return aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
  m->t_s = malloc(f->n_frames * sizeof *m->t_s);
  m->pos_m = malloc(f->n_frames * sizeof *m->pos_m);
  if (m->t_s == NULL || m->pos_m == NULL) {
    aw_marker_trajectory_free(m);
    return aw_error_set(err, AW_ERR_NO_MEMORY, NULL, 0, 0, "out of memory");
  }
  m->n = f->n_frames;
  m->rate_hz = f->point_rate_hz;
  snprintf(m->label, sizeof m->label, "%s", f->labels[idx]);
  snprintf(m->units, sizeof m->units, "%s", units);
  m->units_declared = declared;
  long first = f->first_frame >= 1 ? f->first_frame : 1;
  size_t n_flagged_finite = 0;
  for (size_t i = 0; i < f->n_frames; i++) {
    size_t s = i * f->n_points + (size_t)idx;
    m->t_s[i] = (double)(first - 1 + (long)i) / f->point_rate_hz;
    const double *c = f->pos[s];
    bool valid = f->residual[s] >= 0;
    if (!valid) {
      const double *r = f->pos_raw[s];
      bool usable = isfinite(r[0]) && isfinite(r[1]) && isfinite(r[2]) &&
                    !(r[0] == 0 && r[1] == 0 && r[2] == 0);
      if (usable)
        n_flagged_finite++;
      if (usable && opt->keep_flagged_invalid) {
        c = r;
        valid = true;
        m->used_flagged_invalid = true;
      }
    }
    if (valid) {
      for (int a = 0; a < 3; a++)
        m->pos_m[i][a] = c[a] * k;
    } else {
      m->pos_m[i][0] = m->pos_m[i][1] = m->pos_m[i][2] = NAN;
      m->n_invalid++;
    }
  }
  if (m->n_invalid == m->n) {
    size_t n = m->n;
    aw_marker_trajectory_free(m);
    if (n_flagged_finite > 0)
      return aw_error_set(err, AW_ERR_EMPTY, NULL, 0, 0,
                          "every frame of marker '%s' is flagged invalid (residual -1), yet %zu "
                          "of %zu hold coordinates; keep flagged points to read them",
                          f->labels[idx], n_flagged_finite, n);
    return aw_error_set(err, AW_ERR_EMPTY, NULL, 0, 0,
                        "marker '%s' has no valid frame", f->labels[idx]);
  }
  *out = m;
  return AW_OK;
}
