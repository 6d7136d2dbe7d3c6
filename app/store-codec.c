/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Blob encodings of the library: zlib compression, SHA-256, the fused-path record, safe file
 * names. No SQL here (that lives in store.c). */
#include "store-private.h"

#include <math.h>
#include <string.h>

static GBytes *
run_converter(GConverter *conv, const void *data, gsize len, gsize size_hint, GError **error)
{
  GByteArray *out = g_byte_array_sized_new(size_hint > 64 ? (guint)MIN(size_hint, G_MAXUINT) : 64);
  const guint8 *in = data;
  gsize in_left = len;
  guint8 buf[65536];
  for (;;) {
    gsize nread = 0, nwritten = 0;
    GConverterFlags flags = G_CONVERTER_INPUT_AT_END;
    GConverterResult res = g_converter_convert(conv, in, in_left, buf, sizeof buf, flags,
                                               &nread, &nwritten, error);
    if (res == G_CONVERTER_ERROR) {
      g_byte_array_unref(out);
      return NULL;
    }
    in += nread;
    in_left -= nread;
    g_byte_array_append(out, buf, (guint)nwritten);
    if (res == G_CONVERTER_FINISHED)
      break;
    if (nread == 0 && nwritten == 0 && in_left == 0) {
      /* No progress with all input given: a truncated stream. */
      g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                  "compressed data ends early");
      g_byte_array_unref(out);
      return NULL;
    }
  }
  return g_byte_array_free_to_bytes(out);
}

GBytes *
arcwise_codec_compress(const void *data, gsize len, GError **error)
{
  g_autoptr(GZlibCompressor) c = g_zlib_compressor_new(G_ZLIB_COMPRESSOR_FORMAT_ZLIB, 9);
  return run_converter(G_CONVERTER(c), data, len, len / 3 + 64, error);
}

GBytes *
arcwise_codec_decompress(GBytes *z, gsize expected_len, GError **error)
{
  g_autoptr(GZlibDecompressor) d = g_zlib_decompressor_new(G_ZLIB_COMPRESSOR_FORMAT_ZLIB);
  gsize zlen = 0;
  const void *zdata = g_bytes_get_data(z, &zlen);
  g_autoptr(GError) local = NULL;
  GBytes *out = run_converter(G_CONVERTER(d), zdata, zlen, expected_len, &local);
  if (out == NULL) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                "stored data does not decompress: %s", local->message);
    return NULL;
  }
  if (expected_len != (gsize)-1 && g_bytes_get_size(out) != expected_len) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                "stored data decompresses to %" G_GSIZE_FORMAT " bytes, expected %"
                G_GSIZE_FORMAT, g_bytes_get_size(out), expected_len);
    g_bytes_unref(out);
    return NULL;
  }
  return out;
}

void
arcwise_codec_sha256_hex(const void *data, gsize len, char out[65])
{
  g_autoptr(GChecksum) c = g_checksum_new(G_CHECKSUM_SHA256);
  g_checksum_update(c, data, (gssize)len);
  g_strlcpy(out, g_checksum_get_string(c), 65);
}

void
arcwise_content_sha256(const char *imu_sha, const char *depth_sha, char out[65])
{
  /* The pair's identity: both files, in their roles. The separator keeps ("ab","c") distinct
   * from ("a","bc") even though the digests have fixed length. */
  g_autoptr(GChecksum) c = g_checksum_new(G_CHECKSUM_SHA256);
  g_checksum_update(c, (const guchar *)"arcwise-pair\n", -1);
  g_checksum_update(c, (const guchar *)imu_sha, -1);
  g_checksum_update(c, (const guchar *)"\n", -1);
  g_checksum_update(c, (const guchar *)depth_sha, -1);
  g_strlcpy(out, g_checksum_get_string(c), 65);
}

char *
arcwise_codec_safe_name(const char *path)
{
  g_autofree char *base = g_path_get_basename(path != NULL ? path : "");
  GString *s = g_string_new(NULL);
  /* g_path_get_basename gives "/" for a root and "." for an empty path: neither is a name. */
  if (strcmp(base, "/") == 0 || strcmp(base, ".") == 0)
    base[0] = '\0';
  for (const char *p = base; *p != '\0'; p++) {
    unsigned char ch = (unsigned char)*p;
    if (ch < 0x20 || ch == 0x7f || ch == '/' || ch == '\\' || ch == ':')
      g_string_append_c(s, '_');
    else
      g_string_append_c(s, (char)ch);
  }
  if (s->len > 200)
    g_string_truncate(s, 200);
  /* Never a name that means "here" or "up" or hides as a dot file. */
  while (s->len > 0 && s->str[0] == '.')
    g_string_erase(s, 0, 1);
  if (s->len == 0)
    g_string_assign(s, "stream.csv");
  if (!g_utf8_validate(s->str, (gssize)s->len, NULL)) {
    char *valid = g_utf8_make_valid(s->str, (gssize)s->len);
    g_string_assign(s, valid);
    g_free(valid);
  }
  return g_string_free(s, FALSE);
}

#if ARCWISE_HAVE_FUSION
/* ---- Fused path record --------------------------------------------------------------------
 * Layout (all little-endian), compressed with zlib behind its u64 uncompressed size:
 *   "AWFP" u32 version, u64 n, u32 length + the report as "key=value" lines, then the arrays
 *   t[n] pos[3n] vel[3n] q[4n] sigma[3n] share[n] accel[3n] gyro[3n] (doubles), flags[n] (u32).
 * Version 1: every array as raw values, byte-plane shuffled (lossless).
 * Version 2 (written now): each double array starts with a mode byte. Mode 1: rounded to the
 *   array's step (path_steps below) and stored per component as zigzag LEB128 differences
 *   from the previous row; mode 0: raw and shuffled as in version 1, for an array holding a
 *   value that is not finite or too large for its step. Flags are stored XORed with the
 *   previous row, as LEB128. The fused path is a cache that re-analysis recomputes from the
 *   raw streams (which stay bit-exact): rounding it to steps far below what the sensors
 *   resolve cuts the stored size by about four without changing any coaching number. */

#define PATH_MAGIC "AWFP"
#define PATH_VERSION 2u

/* Steps of version 2, in the arrays' SI units. Each is at least ~50 times finer than what the
 * capture resolves: a consumer depth camera's keypoint noise is millimetres, a 16-bit IMU at
 * +-16 g resolves 4.8e-3 m/s^2 and at +-2000 deg/s 1.1e-3 rad/s (datasheet resolutions of
 * the class, from memory); the IMU clock counts microseconds. */
typedef struct {
  double step;
  guint dim;
} PathArray;
enum { PA_T, PA_POS, PA_VEL, PA_Q, PA_SIGMA, PA_SHARE, PA_ACCEL, PA_GYRO, PA_N };
static const PathArray path_steps[PA_N] = {
  [PA_T] = { 1e-6, 1 },      /* s */
  [PA_POS] = { 1e-5, 3 },    /* m: 10 micrometres */
  [PA_VEL] = { 1e-4, 3 },    /* m/s */
  [PA_Q] = { 1e-8, 4 },      /* unit quaternion components: 2e-8 rad */
  [PA_SIGMA] = { 1e-6, 3 },  /* m */
  [PA_SHARE] = { 1e-6, 1 },  /* 0..1 */
  [PA_ACCEL] = { 1e-4, 3 },  /* m/s^2 */
  [PA_GYRO] = { 1e-6, 3 },   /* rad/s */
};

/* The half-step error bound of the arrays of version 2, for the tests. */
double
arcwise_codec_path_step(int array)
{
  return array >= 0 && array < PA_N ? path_steps[array].step : (double)NAN;
}

/* Report fields by name. Doubles are written with 17 significant digits, which round-trips an
 * IEEE 754 double exactly. */
#define REPORT_DOUBLES(X)                                                                   \
  X(clock_offset_s) X(clock_drift) X(clock_confidence) X(q_cam_grav[0]) X(q_cam_grav[1])  \
  X(q_cam_grav[2]) X(q_cam_grav[3]) X(gravity_m_s2) X(accel_bias_m_s2[0])                  \
  X(accel_bias_m_s2[1]) X(accel_bias_m_s2[2]) X(gyro_bias_rad_s[0]) X(gyro_bias_rad_s[1])  \
  X(gyro_bias_rad_s[2]) X(clock_offset_sigma_s) X(clock_peak_corr) X(q_cam_body0[0])      \
  X(q_cam_body0[1]) X(q_cam_body0[2]) X(q_cam_body0[3]) X(imu_rate_hz) X(cam_rate_hz)       \
  X(cam_nis_mean) X(motion_jerk_psd_m2_s5) X(lever_arm_body_m[0]) X(lever_arm_body_m[1])    \
  X(lever_arm_body_m[2])
#define REPORT_COUNTS(X)                                                                    \
  X(cam_frames_used) X(cam_frames_rejected) X(cam_frames_missing) X(imu_samples_saturated) \
  X(zupt_samples) X(imu_gaps) X(gate_recoveries)

static char *
report_to_text(const AwFusionReport *rep)
{
  GString *s = g_string_new(NULL);
  char num[G_ASCII_DTOSTR_BUF_SIZE];
#define W_D(f) g_string_append_printf(s, "%s=%s\n", #f, g_ascii_formatd(num, sizeof num, "%.17g", rep->f));
#define W_C(f) g_string_append_printf(s, "%s=%" G_GUINT64_FORMAT "\n", #f, (guint64)rep->f);
  REPORT_DOUBLES(W_D)
  REPORT_COUNTS(W_C)
  g_string_append_printf(s, "still_found=%d\n", rep->still_found ? 1 : 0);
#undef W_D
#undef W_C
  return g_string_free(s, FALSE);
}

static void
report_from_text(const char *text, AwFusionReport *rep)
{
  g_auto(GStrv) lines = g_strsplit(text, "\n", -1);
  for (char **l = lines; *l != NULL; l++) {
    char *eq = strchr(*l, '=');
    if (eq == NULL)
      continue;
    *eq = '\0';
    const char *key = *l, *val = eq + 1;
#define R_D(f) if (strcmp(key, #f) == 0) { rep->f = g_ascii_strtod(val, NULL); continue; }
#define R_C(f) if (strcmp(key, #f) == 0) { rep->f = (size_t)g_ascii_strtoull(val, NULL, 10); continue; }
    REPORT_DOUBLES(R_D)
    REPORT_COUNTS(R_C)
    if (strcmp(key, "still_found") == 0)
      rep->still_found = strcmp(val, "1") == 0;
#undef R_D
#undef R_C
  }
}

static void
put_u32(GByteArray *a, guint32 v)
{
  guint32 le = GUINT32_TO_LE(v);
  g_byte_array_append(a, (const guint8 *)&le, 4);
}

static void
put_u64(GByteArray *a, guint64 v)
{
  guint64 le = GUINT64_TO_LE(v);
  g_byte_array_append(a, (const guint8 *)&le, 8);
}

static void
G_GNUC_UNUSED put_double(GByteArray *a, double d)
{
  guint64 u;
  memcpy(&u, &d, 8);
  put_u64(a, u);
}

/* Appends k values of `width` bytes (host order, converted to little-endian) as byte planes. */
static void
put_shuffled(GByteArray *a, const void *values, gsize k, guint width)
{
  gsize start = a->len;
  g_byte_array_set_size(a, (guint)(start + k * width));
  guint8 *dst = a->data + start;
  const guint8 *src = values;
  for (gsize i = 0; i < k; i++) {
    guint8 le[8];
    if (width == 8) {
      guint64 u;
      memcpy(&u, src + i * 8, 8);
      u = GUINT64_TO_LE(u);
      memcpy(le, &u, 8);
    } else {
      guint32 u;
      memcpy(&u, src + i * 4, 4);
      u = GUINT32_TO_LE(u);
      memcpy(le, &u, 4);
    }
    for (guint b = 0; b < width; b++)
      dst[b * k + i] = le[b];
  }
}

typedef struct {
  const guint8 *p;
  gsize left;
  gboolean bad;
} Reader;

static const guint8 *
take(Reader *r, gsize n)
{
  if (r->bad || r->left < n) {
    r->bad = TRUE;
    return NULL;
  }
  const guint8 *p = r->p;
  r->p += n;
  r->left -= n;
  return p;
}

static guint64
get_u64(Reader *r)
{
  const guint8 *p = take(r, 8);
  guint64 u = 0;
  if (p != NULL)
    memcpy(&u, p, 8);
  return GUINT64_FROM_LE(u);
}

static guint32
get_u32(Reader *r)
{
  const guint8 *p = take(r, 4);
  guint32 u = 0;
  if (p != NULL)
    memcpy(&u, p, 4);
  return GUINT32_FROM_LE(u);
}

static double
G_GNUC_UNUSED get_double(Reader *r)
{
  guint64 u = get_u64(r);
  double d;
  memcpy(&d, &u, 8);
  return d;
}

static void
get_shuffled(Reader *r, void *values, gsize k, guint width)
{
  const guint8 *src = take(r, k * width);
  if (src == NULL)
    return;
  guint8 *dst = values;
  for (gsize i = 0; i < k; i++) {
    guint8 le[8];
    for (guint b = 0; b < width; b++)
      le[b] = src[b * k + i];
    if (width == 8) {
      guint64 u;
      memcpy(&u, le, 8);
      u = GUINT64_FROM_LE(u);
      memcpy(dst + i * 8, &u, 8);
    } else {
      guint32 u;
      memcpy(&u, le, 4);
      u = GUINT32_FROM_LE(u);
      memcpy(dst + i * 4, &u, 4);
    }
  }
}

static void
put_varint(GByteArray *a, guint64 v)
{
  guint8 buf[10];
  guint k = 0;
  do {
    buf[k] = (guint8)(v & 0x7f);
    v >>= 7;
    if (v != 0)
      buf[k] |= 0x80;
    k++;
  } while (v != 0);
  g_byte_array_append(a, buf, k);
}

static guint64
get_varint(Reader *r)
{
  guint64 v = 0;
  for (guint shift = 0; shift < 64; shift += 7) {
    const guint8 *p = take(r, 1);
    if (p == NULL)
      return 0;
    v |= (guint64)(*p & 0x7f) << shift;
    if (!(*p & 0x80))
      return v;
  }
  r->bad = TRUE; /* more than ten bytes: not ours */
  return 0;
}

/* Largest |value / step| stored as an integer: far inside int64 and exact in a double. */
#define PATH_QMAX 4.0e15

/* One array of n rows of `dim` doubles: version 1 raw; version 2 with a mode byte. */
static void
put_array(GByteArray *a, guint version, const double *v, gsize n, const PathArray *pa)
{
  gsize k = n * pa->dim;
  gboolean quantise = version >= 2;
  for (gsize i = 0; quantise && i < k; i++)
    quantise = isfinite(v[i]) && fabs(v[i] / pa->step) < PATH_QMAX;
  if (version >= 2) {
    guint8 mode = quantise ? 1 : 0;
    g_byte_array_append(a, &mode, 1);
  }
  if (!quantise) {
    put_shuffled(a, v, k, 8);
    return;
  }
  for (guint c = 0; c < pa->dim; c++) {
    gint64 prev = 0;
    for (gsize i = 0; i < n; i++) {
      gint64 q = (gint64)llround(v[i * pa->dim + c] / pa->step);
      /* difference in unsigned arithmetic (no overflow), then zigzag */
      guint64 d = (guint64)q - (guint64)prev;
      put_varint(a, (d << 1) ^ (guint64)-(gint64)(d >> 63));
      prev = q;
    }
  }
}

static void
get_array(Reader *r, guint version, double *v, gsize n, const PathArray *pa)
{
  gsize k = n * pa->dim;
  guint8 mode = 0;
  if (version >= 2) {
    const guint8 *m = take(r, 1);
    if (m == NULL || *m > 1) {
      r->bad = TRUE;
      return;
    }
    mode = *m;
  }
  if (mode == 0) {
    get_shuffled(r, v, k, 8);
    return;
  }
  for (guint c = 0; c < pa->dim && !r->bad; c++) {
    guint64 prev = 0;
    for (gsize i = 0; i < n && !r->bad; i++) {
      guint64 z = get_varint(r);
      guint64 d = (z >> 1) ^ (guint64)-(gint64)(z & 1);
      prev += d;
      v[i * pa->dim + c] = (double)(gint64)prev * pa->step;
    }
  }
}

static void
put_flags(GByteArray *a, guint version, const guint32 *f, gsize n)
{
  if (version < 2) {
    put_shuffled(a, f, n, 4);
    return;
  }
  guint32 prev = 0;
  for (gsize i = 0; i < n; i++) {
    put_varint(a, f[i] ^ prev);
    prev = f[i];
  }
}

static void
get_flags(Reader *r, guint version, guint32 *f, gsize n)
{
  if (version < 2) {
    get_shuffled(r, f, n, 4);
    return;
  }
  guint32 prev = 0;
  for (gsize i = 0; i < n && !r->bad; i++) {
    guint64 x = get_varint(r);
    if (x > G_MAXUINT32)
      r->bad = TRUE;
    prev ^= (guint32)x;
    f[i] = prev;
  }
}

GBytes *
arcwise_codec_encode_path_version(const AwFusedPath *path, double t_from_s, double t_to_s,
                                  guint version, GError **error)
{
  g_return_val_if_fail(version == 1 || version == 2, NULL);
  /* The rows inside the span; NaN bounds mean "open". */
  gsize i0 = 0, i1 = path->n;
  if (!isnan(t_from_s))
    while (i0 < path->n && path->t_s[i0] < t_from_s)
      i0++;
  if (!isnan(t_to_s))
    while (i1 > i0 && path->t_s[i1 - 1] > t_to_s)
      i1--;
  gsize n = i1 - i0;

  GByteArray *a = g_byte_array_sized_new((guint)(64 + n * (version >= 2 ? 64 : 190)));
  g_byte_array_append(a, (const guint8 *)PATH_MAGIC, 4);
  put_u32(a, version);
  put_u64(a, n);
  /* The report as "key=value" text: its fields grow with the engine, and a cached path from an
   * older engine must still load (unknown keys are ignored, missing ones keep their defaults). */
  g_autofree char *report = report_to_text(&path->report);
  put_u32(a, (guint32)strlen(report));
  g_byte_array_append(a, (const guint8 *)report, (guint)strlen(report));

  put_array(a, version, path->t_s + i0, n, &path_steps[PA_T]);
  put_array(a, version, &path->pos_cam_m[i0][0], n, &path_steps[PA_POS]);
  put_array(a, version, &path->vel_cam_m_s[i0][0], n, &path_steps[PA_VEL]);
  put_array(a, version, &path->q_cam_body[i0][0], n, &path_steps[PA_Q]);
  put_array(a, version, &path->pos_sigma_cam_m[i0][0], n, &path_steps[PA_SIGMA]);
  put_array(a, version, path->cam_info_share + i0, n, &path_steps[PA_SHARE]);
  put_array(a, version, &path->accel_body_m_s2[i0][0], n, &path_steps[PA_ACCEL]);
  put_array(a, version, &path->gyro_body_rad_s[i0][0], n, &path_steps[PA_GYRO]);
  put_flags(a, version, path->flags + i0, n);

  /* The uncompressed size goes first so decoding can check it. */
  GBytes *z = arcwise_codec_compress(a->data, a->len, error);
  if (z == NULL) {
    g_byte_array_unref(a);
    return NULL;
  }
  GByteArray *blob = g_byte_array_sized_new((guint)(8 + g_bytes_get_size(z)));
  put_u64(blob, a->len);
  g_byte_array_append(blob, g_bytes_get_data(z, NULL), (guint)g_bytes_get_size(z));
  g_byte_array_unref(a);
  g_bytes_unref(z);
  return g_byte_array_free_to_bytes(blob);
}

GBytes *
arcwise_codec_encode_path(const AwFusedPath *path, double t_from_s, double t_to_s, GError **error)
{
  return arcwise_codec_encode_path_version(path, t_from_s, t_to_s, PATH_VERSION, error);
}

AwFusedPath *
arcwise_codec_decode_path(GBytes *blob, GError **error)
{
  gsize blen = 0;
  const guint8 *b = g_bytes_get_data(blob, &blen);
  if (blen < 8) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                "stored fused path is truncated");
    return NULL;
  }
  guint64 raw_len;
  memcpy(&raw_len, b, 8);
  raw_len = GUINT64_FROM_LE(raw_len);
  g_autoptr(GBytes) z = g_bytes_new_from_bytes(blob, 8, blen - 8);
  g_autoptr(GBytes) raw = arcwise_codec_decompress(z, (gsize)raw_len, error);
  if (raw == NULL)
    return NULL;

  Reader r = { g_bytes_get_data(raw, NULL), g_bytes_get_size(raw), FALSE };
  const guint8 *magic = take(&r, 4);
  guint32 version = get_u32(&r);
  if (magic == NULL || memcmp(magic, PATH_MAGIC, 4) != 0 || version < 1 || version > PATH_VERSION) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                "stored fused path has an unknown format");
    return NULL;
  }
  guint64 n = get_u64(&r);
  guint32 report_len = get_u32(&r);
  const guint8 *report = take(&r, report_len);
  /* Reject a count the data cannot hold before allocating: a row takes 21 doubles and one u32
   * (172 bytes) in version 1, at least one byte per value (22) in version 2. */
  if (r.bad || n > r.left / (version >= 2 ? 22 : 172)) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                "stored fused path is truncated");
    return NULL;
  }
  AwFusedPath *p = aw_fused_path_new((size_t)n);
  if (p == NULL) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_FAILED, "out of memory");
    return NULL;
  }
  g_autofree char *report_text = g_strndup((const char *)report, report_len);
  report_from_text(report_text, &p->report);
  get_array(&r, version, p->t_s, n, &path_steps[PA_T]);
  get_array(&r, version, &p->pos_cam_m[0][0], n, &path_steps[PA_POS]);
  get_array(&r, version, &p->vel_cam_m_s[0][0], n, &path_steps[PA_VEL]);
  get_array(&r, version, &p->q_cam_body[0][0], n, &path_steps[PA_Q]);
  get_array(&r, version, &p->pos_sigma_cam_m[0][0], n, &path_steps[PA_SIGMA]);
  get_array(&r, version, p->cam_info_share, n, &path_steps[PA_SHARE]);
  get_array(&r, version, &p->accel_body_m_s2[0][0], n, &path_steps[PA_ACCEL]);
  get_array(&r, version, &p->gyro_body_rad_s[0][0], n, &path_steps[PA_GYRO]);
  get_flags(&r, version, p->flags, n);
  if (r.bad || r.left != 0) {
    aw_fused_path_free(p);
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_CORRUPT,
                "stored fused path has the wrong size");
    return NULL;
  }
  /* Rounded components leave a unit quaternion off unit length by ~1e-8: make it a rotation
   * again. Only that: a record whose quaternion was not of unit length (found by fuzzing: it
   * was scaled to a different rotation) is left as stored. */
  if (version >= 2)
    for (gsize i = 0; i < n; i++) {
      double *q = p->q_cam_body[i];
      double norm = sqrt(q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]);
      if (fabs(norm - 1.0) < 1e-6)
        for (int k = 0; k < 4; k++)
          q[k] /= norm;
    }
  return p;
}

#else
/* Without the fusion module nothing can make or hold a fused path. */
GBytes *
arcwise_codec_encode_path(const AwFusedPath *path, double t_from_s, double t_to_s, GError **error)
{
  g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
              "this build has no fusion module");
  return NULL;
}

AwFusedPath *
arcwise_codec_decode_path(GBytes *blob, GError **error)
{
  g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
              "this build has no fusion module to hold a fused path");
  return NULL;
}
#endif

/* ---- AwSwing record ----------------------------------------------------------------------- */

static void
w_d(GString *s, const char *key, double v)
{
  char num[G_ASCII_DTOSTR_BUF_SIZE];
  g_string_append_printf(s, "%s=%s\n", key, g_ascii_formatd(num, sizeof num, "%.17g", v));
}

static void
w_i(GString *s, const char *key, long long v)
{
  g_string_append_printf(s, "%s=%lld\n", key, v);
}

char *
arcwise_codec_swing_to_text(const AwSwing *sw)
{
  GString *s = g_string_new(NULL);
  char key[96];
  w_i(s, "i_len", (long long)(sw->i_end - sw->i_start));
  w_d(s, "t_start_s", sw->t_start_s);
  w_d(s, "t_end_s", sw->t_end_s);
  w_i(s, "practice", sw->practice);
  w_i(s, "half", sw->half);
  w_i(s, "handed", sw->handed);
  w_d(s, "club_length_m", sw->club_length_m);
  w_i(s, "club", sw->club);
  for (int k = 0; k < 3; k++) {
    g_snprintf(key, sizeof key, "origin_f_m.%d", k);
    w_d(s, key, sw->origin_f_m[k]);
    for (int c = 0; c < 3; c++) {
      g_snprintf(key, sizeof key, "R_sw_f.%d.%d", k, c);
      w_d(s, key, sw->R_sw_f[k][c]);
    }
  }
  for (int k = 0; k < AW_EVENT_COUNT_; k++) {
    g_snprintf(key, sizeof key, "event.%d.t_s", k);
    w_d(s, key, sw->events[k].t_s);
    g_snprintf(key, sizeof key, "event.%d.sigma_s", k);
    w_d(s, key, sw->events[k].sigma_s);
    g_snprintf(key, sizeof key, "event.%d.estimated", k);
    w_i(s, key, sw->events[k].estimated);
  }
  for (int k = 0; k < AW_PHASE_COUNT_; k++) {
    const AwPhase *p = &sw->phases[k];
#define PD(f) g_snprintf(key, sizeof key, "phase.%d." #f, k); w_d(s, key, p->f);
    g_snprintf(key, sizeof key, "phase.%d.kind", k);
    w_i(s, key, p->kind);
    PD(start_s) PD(end_s) PD(cam_occluded_share) PD(cam_info_share_mean) PD(pos_sigma_mean_m)
    PD(dev_camera_masked_m) PD(dev_imu_masked_m)
#undef PD
    g_snprintf(key, sizeof key, "phase.%d.dominance", k);
    w_i(s, key, p->dominance);
  }
  for (int k = 0; k < AW_METRIC_COUNT_; k++) {
    const AwMetricInfo *info = aw_metric_info((AwMetricId)k);
    g_snprintf(key, sizeof key, "metric.%s", info != NULL ? info->key : "?");
    w_d(s, key, sw->metrics[k]);
  }
  const AwSwingQuality *q = &sw->quality;
  w_d(s, "quality.cam_occluded_share", q->cam_occluded_share);
  w_d(s, "quality.cam_rejected_share", q->cam_rejected_share);
  w_i(s, "quality.imu_saturated_samples", (long long)q->imu_saturated_samples);
  w_d(s, "quality.sync_offset_s", q->sync_offset_s);
  w_d(s, "quality.sync_confidence", q->sync_confidence);
  w_d(s, "quality.pos_sigma_mean_m", q->pos_sigma_mean_m);
  w_i(s, "quality.notes", q->notes);
  return g_string_free(s, FALSE);
}

AwSwing *
arcwise_codec_swing_from_text(const char *text)
{
  AwSwing *sw = g_new0(AwSwing, 1);
  /* Missing numbers read as "not available". */
  sw->t_start_s = sw->t_end_s = sw->club_length_m = NAN;
  for (int k = 0; k < AW_EVENT_COUNT_; k++)
    sw->events[k].t_s = sw->events[k].sigma_s = NAN;
  for (int k = 0; k < AW_METRIC_COUNT_; k++)
    sw->metrics[k] = NAN;
  g_autoptr(GHashTable) kv = g_hash_table_new(g_str_hash, g_str_equal);
  g_auto(GStrv) lines = g_strsplit(text != NULL ? text : "", "\n", -1);
  for (char **l = lines; *l != NULL; l++) {
    char *eq = strchr(*l, '=');
    if (eq != NULL) {
      *eq = '\0';
      g_hash_table_insert(kv, *l, eq + 1);
    }
  }
  char key[96];
#define GET(k) ((const char *)g_hash_table_lookup(kv, k))
#define RD(k, dst) do { const char *v_ = GET(k); if (v_ != NULL) (dst) = g_ascii_strtod(v_, NULL); } while (0)
#define RI(k, dst, T) do { const char *v_ = GET(k); if (v_ != NULL) (dst) = (T)g_ascii_strtoll(v_, NULL, 10); } while (0)
  RI("i_len", sw->i_end, size_t);
  sw->i_start = 0;
  RD("t_start_s", sw->t_start_s);
  RD("t_end_s", sw->t_end_s);
  RI("practice", sw->practice, bool);
  RI("half", sw->half, bool);
  RI("handed", sw->handed, AwHandedness);
  RD("club_length_m", sw->club_length_m);
  RI("club", sw->club, AwClubType);
  for (int k = 0; k < 3; k++) {
    g_snprintf(key, sizeof key, "origin_f_m.%d", k);
    RD(key, sw->origin_f_m[k]);
    for (int c = 0; c < 3; c++) {
      g_snprintf(key, sizeof key, "R_sw_f.%d.%d", k, c);
      RD(key, sw->R_sw_f[k][c]);
    }
  }
  for (int k = 0; k < AW_EVENT_COUNT_; k++) {
    g_snprintf(key, sizeof key, "event.%d.t_s", k);
    RD(key, sw->events[k].t_s);
    g_snprintf(key, sizeof key, "event.%d.sigma_s", k);
    RD(key, sw->events[k].sigma_s);
    g_snprintf(key, sizeof key, "event.%d.estimated", k);
    RI(key, sw->events[k].estimated, bool);
  }
  for (int k = 0; k < AW_PHASE_COUNT_; k++) {
    AwPhase *p = &sw->phases[k];
    p->kind = (AwPhaseKind)k;
    p->start_s = p->end_s = p->cam_occluded_share = p->cam_info_share_mean = NAN;
    p->pos_sigma_mean_m = p->dev_camera_masked_m = p->dev_imu_masked_m = NAN;
#define PD(f) g_snprintf(key, sizeof key, "phase.%d." #f, k); RD(key, p->f);
    PD(start_s) PD(end_s) PD(cam_occluded_share) PD(cam_info_share_mean) PD(pos_sigma_mean_m)
    PD(dev_camera_masked_m) PD(dev_imu_masked_m)
#undef PD
    g_snprintf(key, sizeof key, "phase.%d.dominance", k);
    RI(key, p->dominance, AwDominance);
  }
  for (int k = 0; k < AW_METRIC_COUNT_; k++) {
    const AwMetricInfo *info = aw_metric_info((AwMetricId)k);
    if (info == NULL)
      continue;
    g_snprintf(key, sizeof key, "metric.%s", info->key);
    RD(key, sw->metrics[k]);
  }
  AwSwingQuality *q = &sw->quality;
  q->cam_occluded_share = q->cam_rejected_share = q->sync_offset_s = NAN;
  q->sync_confidence = q->pos_sigma_mean_m = NAN;
  RD("quality.cam_occluded_share", q->cam_occluded_share);
  RD("quality.cam_rejected_share", q->cam_rejected_share);
  RI("quality.imu_saturated_samples", q->imu_saturated_samples, size_t);
  RD("quality.sync_offset_s", q->sync_offset_s);
  RD("quality.sync_confidence", q->sync_confidence);
  RD("quality.pos_sigma_mean_m", q->pos_sigma_mean_m);
  RI("quality.notes", q->notes, unsigned);
#undef GET
#undef RD
#undef RI
  return sw;
}

/* ---- Prepared records ------------------------------------------------------------------ */

ArcwisePreparedSwing *
arcwise_prepared_swing_new(void)
{
  ArcwisePreparedSwing *s = g_new0(ArcwisePreparedSwing, 1);
  s->span_start_s = NAN;
  s->span_end_s = NAN;
  return s;
}

void
arcwise_prepared_swing_free(ArcwisePreparedSwing *s)
{
  if (s == NULL)
    return;
  g_clear_pointer(&s->path_blob, g_bytes_unref);
  g_clear_pointer(&s->events, g_ptr_array_unref);
  g_clear_pointer(&s->metrics, g_ptr_array_unref);
  g_free(s->swing_text);
  g_free(s);
}

ArcwisePreparedRecording *
arcwise_prepared_recording_new(void)
{
  ArcwisePreparedRecording *r = g_new0(ArcwisePreparedRecording, 1);
  r->swings = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_prepared_swing_free);
  return r;
}

void
arcwise_prepared_recording_free(ArcwisePreparedRecording *r)
{
  if (r == NULL)
    return;
  g_free(r->imu_name);
  g_free(r->depth_name);
  g_clear_pointer(&r->imu_z, g_bytes_unref);
  g_clear_pointer(&r->depth_z, g_bytes_unref);
  g_free(r->engine_version);
  g_free(r->settings);
  g_ptr_array_unref(r->swings);
  g_free(r);
}

gboolean
arcwise_prepared_recording_set_raw(ArcwisePreparedRecording *r, const char *imu_path,
                                   GBytes *imu, const char *depth_path, GBytes *depth,
                                   GError **error)
{
  gsize il = 0, dl = 0;
  const void *id = g_bytes_get_data(imu, &il);
  const void *dd = g_bytes_get_data(depth, &dl);
  g_free(r->imu_name);
  g_free(r->depth_name);
  r->imu_name = arcwise_codec_safe_name(imu_path);
  r->depth_name = arcwise_codec_safe_name(depth_path);
  r->imu_size = il;
  r->depth_size = dl;
  arcwise_codec_sha256_hex(id, il, r->imu_sha256);
  arcwise_codec_sha256_hex(dd, dl, r->depth_sha256);
  arcwise_content_sha256(r->imu_sha256, r->depth_sha256, r->content_sha256);
  g_clear_pointer(&r->imu_z, g_bytes_unref);
  g_clear_pointer(&r->depth_z, g_bytes_unref);
  r->imu_z = arcwise_codec_compress(id, il, error);
  if (r->imu_z == NULL)
    return FALSE;
  r->depth_z = arcwise_codec_compress(dd, dl, error);
  return r->depth_z != NULL;
}
