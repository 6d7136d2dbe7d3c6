/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Strict readers for the IMU and depth CSV streams (format: README.md "Capture formats").
 *
 * The whole file is read into memory first and parsed in one pass into arrays sized from the
 * number of lines, so a rejected file leaves nothing behind: the caller's *out is written only
 * once every row has passed. Messages name file, line and byte column (1-based) and the column's
 * header name, the way compilers report positions. */
#include "arcwise/capture.h"
#include "arcwise/units.h"
#include "capture-private.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* ---- streams ---------------------------------------------------------------------------- */

AwImuStream *
aw_imu_stream_new(size_t n)
{
  AwImuStream *s = calloc(1, sizeof *s);
  if (s == NULL)
    return NULL;
  size_t m = n > 0 ? n : 1;  /* never malloc(0): callers may index [0] of an empty stream */
  s->t_s = calloc(m, sizeof *s->t_s);
  s->accel_m_s2 = calloc(m, sizeof *s->accel_m_s2);
  s->gyro_rad_s = calloc(m, sizeof *s->gyro_rad_s);
  if (s->t_s == NULL || s->accel_m_s2 == NULL || s->gyro_rad_s == NULL) {
    aw_imu_stream_free(s);
    return NULL;
  }
  s->n = n;
  snprintf(s->meta.units, sizeof s->meta.units, "t=s accel=m/s2 gyro=rad/s");
  return s;
}

void
aw_imu_stream_free(AwImuStream *s)
{
  if (s == NULL)
    return;
  free(s->t_s);
  free(s->accel_m_s2);
  free(s->gyro_rad_s);
  free(s);
}

AwDepthStream *
aw_depth_stream_new(size_t n)
{
  AwDepthStream *s = calloc(1, sizeof *s);
  if (s == NULL)
    return NULL;
  size_t m = n > 0 ? n : 1;
  s->t_s = calloc(m, sizeof *s->t_s);
  s->pos_cam_m = calloc(m, sizeof *s->pos_cam_m);
  s->conf = calloc(m, sizeof *s->conf);
  if (s->t_s == NULL || s->pos_cam_m == NULL || s->conf == NULL) {
    aw_depth_stream_free(s);
    return NULL;
  }
  s->n = n;
  snprintf(s->meta.units, sizeof s->meta.units, "t=s pos=m");
  return s;
}

void
aw_depth_stream_free(AwDepthStream *s)
{
  if (s == NULL)
    return;
  free(s->t_s);
  free(s->pos_cam_m);
  free(s->conf);
  free(s);
}

const char *
aw_capture_kind_to_string(AwCaptureKind kind)
{
  switch (kind) {
  case AW_CAPTURE_IMU: return "imu";
  case AW_CAPTURE_DEPTH: return "depth";
  default: return "unknown";
  }
}

/* ---- lines and fields ------------------------------------------------------------------- */

typedef struct {
  const char *b, *e;   /* the line without its '\n' and without one trailing '\r' */
  long no;             /* 1-based line number */
} Line;

typedef struct {
  const char *p, *end;
  long no;
} Lines;

static bool
next_line(Lines *it, Line *ln)
{
  if (it->p >= it->end)
    return false;
  const char *b = it->p;
  const char *nl = memchr(b, '\n', (size_t)(it->end - b));
  const char *e = nl != NULL ? nl : it->end;
  it->p = nl != NULL ? nl + 1 : it->end;
  if (e > b && e[-1] == '\r')
    e--;
  ln->b = b;
  ln->e = e;
  ln->no = ++it->no;
  return true;
}

static inline bool is_blank(char c) { return c == ' ' || c == '\t'; }

static void
trim(const char **b, const char **e)
{
  while (*b < *e && is_blank(**b))
    (*b)++;
  while (*e > *b && is_blank((*e)[-1]))
    (*e)--;
}

static bool
line_is_blank(const Line *ln)
{
  for (const char *c = ln->b; c < ln->e; c++)
    if (!is_blank(*c))
      return false;
  return true;
}

static const char *
first_nonblank(const Line *ln)
{
  const char *c = ln->b;
  while (c < ln->e && is_blank(*c))
    c++;
  return c;
}

static long col_of(const Line *ln, const char *p) { return (long)(p - ln->b) + 1; }

/* A field's text for a message: at most 40 bytes, control bytes shown as '?'. */
static const char *
shown(char buf[64], const char *b, const char *e)
{
  size_t n = (size_t)(e - b), k = 0;
  bool cut = n > 40;
  if (cut)
    n = 40;
  for (size_t i = 0; i < n; i++) {
    unsigned char c = (unsigned char)b[i];
    buf[k++] = (c < 0x20 || c == 0x7f) ? '?' : (char)c;
  }
  if (cut) {
    memcpy(buf + k, "...", 3);
    k += 3;
  }
  buf[k] = '\0';
  return buf;
}

static bool
span_eq(const char *b, const char *e, const char *word)
{
  size_t n = strlen(word);
  return (size_t)(e - b) == n && memcmp(b, word, n) == 0;
}

/* ASCII case-insensitive span_eq, for metadata keys and words (never for units: ms vs Ms). */
static bool
span_ieq(const char *b, const char *e, const char *word)
{
  size_t n = strlen(word);
  if ((size_t)(e - b) != n)
    return false;
  for (size_t i = 0; i < n; i++) {
    char c = b[i];
    if (c >= 'A' && c <= 'Z')
      c = (char)(c - 'A' + 'a');
    if (c != word[i])
      return false;
  }
  return true;
}

/* ---- the two formats -------------------------------------------------------------------- */

#define MAX_ROLES 7

typedef struct {
  AwCaptureKind kind;
  const char *label;                 /* "IMU" or "depth", for messages */
  int n_roles;
  const char *roles[MAX_ROLES];      /* required header names; role 0 is always t */
  const char *all;                   /* the list for messages */
  bool may_be_empty[MAX_ROLES];
} Format;

static const Format imu_format = {
  AW_CAPTURE_IMU, "IMU", 7, { "t", "ax", "ay", "az", "gx", "gy", "gz" },
  "t,ax,ay,az,gx,gy,gz", { false },
};

static const Format depth_format = {
  AW_CAPTURE_DEPTH, "depth", 5, { "t", "x", "y", "z", "conf" },
  "t,x,y,z,conf", { false, true, true, true, true },
};

/* ---- units ------------------------------------------------------------------------------ */

typedef struct {
  const char *spelling;
  const char *canonical;
  double factor;        /* multiply (factor > 0) ... */
  double divisor;       /* ... then divide: exact divisors keep ms, us, ns, mm correctly rounded */
} Unit;

static const Unit time_units[] = {
  { "s", "s", 1.0, 1.0 },    { "ms", "ms", 1.0, 1e3 },  { "us", "us", 1.0, 1e6 },
  { "\xc2\xb5s", "us", 1.0, 1e6 }, /* U+00B5 micro sign */
  { "ns", "ns", 1.0, 1e9 },  { NULL, NULL, 0, 0 },
};
static const Unit accel_units[] = {
  { "m/s2", "m/s2", 1.0, 1.0 }, { "m/s^2", "m/s2", 1.0, 1.0 },
  { "m/s\xc2\xb2", "m/s2", 1.0, 1.0 }, /* m/s with U+00B2 superscript two */
  /* standard gravity, exact by definition: 3rd CGPM (1901) */
  { "g", "g", AW_GRAVITY_STANDARD_M_S2, 1.0 }, { NULL, NULL, 0, 0 },
};
static const Unit gyro_units[] = {
  { "rad/s", "rad/s", 1.0, 1.0 }, { "deg/s", "deg/s", AW_RAD_PER_DEG, 1.0 },
  { NULL, NULL, 0, 0 },
};
static const Unit pos_units[] = {
  { "m", "m", 1.0, 1.0 }, { "mm", "mm", 1.0, 1e3 }, { NULL, NULL, 0, 0 },
};

static const Unit *
find_unit(const Unit *table, const char *b, const char *e)
{
  for (const Unit *u = table; u->spelling != NULL; u++)
    if (span_eq(b, e, u->spelling))
      return u;
  return NULL;
}

static const char *
unit_list(const Unit *table, char *buf, size_t size)
{
  size_t k = 0;
  buf[0] = '\0';
  for (const Unit *u = table; u->spelling != NULL && k + 1 < size; u++) {
    if ((unsigned char)u->spelling[0] >= 0x80 || strchr(u->spelling, '\xc2') != NULL)
      continue;  /* list the ASCII spellings only */
    int w = snprintf(buf + k, size - k, "%s%s", k ? ", " : "", u->spelling);
    if (w < 0)
      break;
    k += (size_t)w;
  }
  return buf;
}

static inline double
apply_unit(const Unit *u, double v)
{
  if (u->factor != 1.0)
    v *= u->factor;
  if (u->divisor != 1.0)
    v /= u->divisor;
  return v;
}

/* ---- the reader ------------------------------------------------------------------------- */

enum { META_UNITS, META_DEVICE, META_RATE, META_ACCEL_RANGE, META_GYRO_RANGE, META_WRIST,
       META_OUTPUT_DELAY, META_COUNT_ };
static const char *const meta_keys[META_COUNT_] = {
  "units", "device", "rate_hz", "accel_range", "gyro_range", "wrist", "output_delay",
};

typedef struct {
  const Format *fmt;
  const char *name;
  AwError *err;
  const Unit *u_time, *u_accel, *u_gyro, *u_pos;
  long meta_line[META_COUNT_];    /* where each key was given, 0 when not */
  char device[128];
  double rate_hz, accel_range_m_s2, gyro_range_rad_s, output_delay_s;
  AwWrist wrist;
  /* header */
  long header_line;
  int n_cols;
  int *col_role;                   /* role per column, -1 for an extra column */
} Reader;

static AwStatus
fail(Reader *r, AwStatus st, long line, long col, const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__((format(printf, 5, 6)))
#endif
  ;

static AwStatus
fail(Reader *r, AwStatus st, long line, long col, const char *fmt, ...)
{
  char msg[512];
  va_list ap;
  va_start(ap, fmt);
  vsnprintf(msg, sizeof msg, fmt, ap);
  va_end(ap);
  return aw_error_set(r->err, st, r->name, line, col, "%s", msg);
}

static AwStatus
parse_range_value(Reader *r, const Line *ln, const char *key, const char *vb, const char *ve,
                  const Unit *table, double *out)
{
  const char *sp = vb;
  while (sp < ve && !is_blank(*sp))
    sp++;
  const char *ub = sp;
  while (ub < ve && is_blank(*ub))
    ub++;
  char shown_buf[64], list[96];
  double v;
  if (ub >= ve || aw_capture_parse_double(vb, sp, &v) != AW_NUM_OK)
    return fail(r, AW_ERR_PARSE, ln->no, col_of(ln, vb),
                "%s: expected a number and a unit (%s), found '%s'", key,
                unit_list(table, list, sizeof list), shown(shown_buf, vb, ve));
  const Unit *u = find_unit(table, ub, ve);
  if (u == NULL)
    return fail(r, AW_ERR_UNITS, ln->no, col_of(ln, ub), "%s: unknown unit '%s' (known: %s)", key,
                shown(shown_buf, ub, ve), unit_list(table, list, sizeof list));
  if (!(v > 0) || !isfinite(v))
    return fail(r, AW_ERR_RANGE, ln->no, col_of(ln, vb), "%s: the full scale must be above 0",
                key);
  *out = apply_unit(u, v);
  return AW_OK;
}

static AwStatus
parse_units(Reader *r, const Line *ln, const char *vb, const char *ve)
{
  bool imu = r->fmt->kind == AW_CAPTURE_IMU;
  bool seen[4] = { false };
  const char *p = vb;
  char sb[64], sb2[64], list[96];
  while (p < ve) {
    while (p < ve && is_blank(*p))
      p++;
    if (p >= ve)
      break;
    const char *tb = p;
    while (p < ve && !is_blank(*p))
      p++;
    const char *te = p;
    const char *eq = memchr(tb, '=', (size_t)(te - tb));
    if (eq == NULL || eq == tb)
      return fail(r, AW_ERR_PARSE, ln->no, col_of(ln, tb),
                  "units: '%s' is not of the form quantity=unit", shown(sb, tb, te));
    const char *qb = tb, *qe = eq, *ub = eq + 1, *ue = te;
    int q;
    const Unit *table;
    const Unit **slot;
    if (span_eq(qb, qe, "t")) {
      q = 0; table = time_units; slot = &r->u_time;
    } else if (imu && span_eq(qb, qe, "accel")) {
      q = 1; table = accel_units; slot = &r->u_accel;
    } else if (imu && span_eq(qb, qe, "gyro")) {
      q = 2; table = gyro_units; slot = &r->u_gyro;
    } else if (!imu && span_eq(qb, qe, "pos")) {
      q = 3; table = pos_units; slot = &r->u_pos;
    } else {
      return fail(r, AW_ERR_UNITS, ln->no, col_of(ln, qb),
                  "units: unknown quantity '%s' for %s %s stream (known: %s)", shown(sb, qb, qe),
                  imu ? "an" : "a", r->fmt->label, imu ? "t, accel, gyro" : "t, pos");
    }
    if (seen[q])
      return fail(r, AW_ERR_PARSE, ln->no, col_of(ln, qb), "units: '%s' is given twice",
                  shown(sb, qb, qe));
    seen[q] = true;
    const Unit *u = find_unit(table, ub, ue);
    if (u == NULL)
      return fail(r, AW_ERR_UNITS, ln->no, col_of(ln, ub),
                  "units: unknown unit '%s' for %s (known: %s)", shown(sb, ub, ue),
                  shown(sb2, qb, qe), unit_list(table, list, sizeof list));
    *slot = u;
  }
  return AW_OK;
}

/* A comment line before the header: "# key: value" is metadata, anything else free text. */
static AwStatus
parse_comment(Reader *r, const Line *ln, const char *hash)
{
  const char *kb = hash + 1;
  while (kb < ln->e && is_blank(*kb))
    kb++;
  const char *ke = kb;
  while (ke < ln->e && ((*ke >= 'a' && *ke <= 'z') || (*ke >= 'A' && *ke <= 'Z') ||
                        (*ke >= '0' && *ke <= '9') || *ke == '_'))
    ke++;
  const char *colon = ke;
  while (colon < ln->e && is_blank(*colon))
    colon++;
  if (ke == kb || colon >= ln->e || *colon != ':')
    return AW_OK;  /* free text */
  int key = -1;
  /* keys in any case: a "# Units:" line silently ignored would misread the whole file */
  for (int i = 0; i < META_COUNT_; i++)
    if (span_ieq(kb, ke, meta_keys[i]))
      key = i;
  if (key < 0)
    return AW_OK;  /* unknown keys are ignored so that newer files still read */
  bool imu = r->fmt->kind == AW_CAPTURE_IMU;
  if (!imu && (key == META_ACCEL_RANGE || key == META_GYRO_RANGE || key == META_OUTPUT_DELAY))
    return AW_OK;  /* not a depth camera property: ignored like an unknown key */
  if (r->meta_line[key] != 0)
    return fail(r, AW_ERR_PARSE, ln->no, col_of(ln, kb),
                "metadata key '%s' is given twice (first on line %ld)", meta_keys[key],
                r->meta_line[key]);
  r->meta_line[key] = ln->no;
  const char *vb = colon + 1, *ve = ln->e;
  trim(&vb, &ve);
  char sb[64];
  switch (key) {
  case META_UNITS:
    return parse_units(r, ln, vb, ve);
  case META_DEVICE: {
    size_t n = (size_t)(ve - vb);
    if (n >= sizeof r->device) {
      n = sizeof r->device - 1;
      while (n > 0 && ((unsigned char)vb[n] & 0xC0) == 0x80)
        n--;  /* do not cut a UTF-8 sequence */
    }
    /* The text is kept in the form the writer puts it back (control characters, NUL among
     * them, as spaces; no blanks at either end after the cut), so that a stream written and
     * read again carries the very same device name. */
    size_t o = 0;
    for (size_t i = 0; i < n; i++) {
      unsigned char c = (unsigned char)vb[i];
      if (c < 0x20 || c == 0x7f)
        c = ' ';
      if (c != ' ' || o > 0)
        r->device[o++] = (char)c;
    }
    while (o > 0 && r->device[o - 1] == ' ')
      o--;
    r->device[o] = '\0';
    return AW_OK;
  }
  case META_RATE: {
    double v;
    const char *ne = ve;  /* an optional unit: "100 Hz" */
    if (ne - vb > 2 && span_ieq(ne - 2, ne, "hz")) {
      ne -= 2;
      while (ne > vb && is_blank(ne[-1]))
        ne--;
    }
    if (vb >= ne || aw_capture_parse_double(vb, ne, &v) != AW_NUM_OK || !(v > 0))
      return fail(r, AW_ERR_PARSE, ln->no, col_of(ln, vb),
                  "rate_hz: '%s' is not a positive number of hertz", shown(sb, vb, ve));
    r->rate_hz = v;
    return AW_OK;
  }
  case META_ACCEL_RANGE:
    return parse_range_value(r, ln, "accel_range", vb, ve, accel_units, &r->accel_range_m_s2);
  case META_GYRO_RANGE:
    return parse_range_value(r, ln, "gyro_range", vb, ve, gyro_units, &r->gyro_range_rad_s);
  case META_OUTPUT_DELAY: {
    /* "5 ms": a number, a blank and a time unit; 0 up to 1 s (beyond that it is not a sensor
     * filter but a clock offset, which the fusion estimates). */
    const char *sp = vb;
    while (sp < ve && !is_blank(*sp))
      sp++;
    const char *ub = sp;
    while (ub < ve && is_blank(*ub))
      ub++;
    char list[96];
    double v;
    if (ub >= ve || aw_capture_parse_double(vb, sp, &v) != AW_NUM_OK)
      return fail(r, AW_ERR_PARSE, ln->no, col_of(ln, vb),
                  "output_delay: expected a number and a unit (%s), found '%s'",
                  unit_list(time_units, list, sizeof list), shown(sb, vb, ve));
    const Unit *u = find_unit(time_units, ub, ve);
    if (u == NULL)
      return fail(r, AW_ERR_UNITS, ln->no, col_of(ln, ub),
                  "output_delay: unknown unit '%s' (known: %s)", shown(sb, ub, ve),
                  unit_list(time_units, list, sizeof list));
    double d = apply_unit(u, v);
    if (!isfinite(d) || d < 0 || d > 1.0)
      return fail(r, AW_ERR_RANGE, ln->no, col_of(ln, vb),
                  "output_delay: %g s is outside 0..1 s", d);
    r->output_delay_s = d;
    return AW_OK;
  }
  case META_WRIST:
    if (span_ieq(vb, ve, "left"))
      r->wrist = AW_WRIST_LEFT;
    else if (span_ieq(vb, ve, "right"))
      r->wrist = AW_WRIST_RIGHT;
    else
      return fail(r, AW_ERR_PARSE, ln->no, col_of(ln, vb),
                  "wrist: '%s' is neither 'left' nor 'right'", shown(sb, vb, ve));
    return AW_OK;
  default:
    return AW_OK;
  }
}

/* Comment lines and the header row. On success the lines iterator stands after the header. */
static AwStatus
read_preamble(Reader *r, Lines *it, bool metadata)
{
  Line ln;
  bool any_line = false;
  for (;;) {
    if (!next_line(it, &ln)) {
      if (!any_line)
        return fail(r, AW_ERR_EMPTY, 0, 0, "empty file");
      return fail(r, AW_ERR_EMPTY, 0, 0, "no header row (the file holds only comments)");
    }
    if (line_is_blank(&ln))
      continue;
    any_line = true;
    const char *c = first_nonblank(&ln);
    if (*c == '#') {
      if (metadata) {
        AwStatus st = parse_comment(r, &ln, c);
        if (st != AW_OK)
          return st;
      }
      continue;
    }
    break;
  }
  r->header_line = ln.no;
  int n = 1;
  for (const char *c = ln.b; c < ln.e; c++)
    n += *c == ',';
  r->col_role = malloc((size_t)n * sizeof *r->col_role);
  if (r->col_role == NULL)
    return fail(r, AW_ERR_NO_MEMORY, 0, 0, "out of memory");
  r->n_cols = n;
  int role_col[MAX_ROLES];
  for (int i = 0; i < MAX_ROLES; i++)
    role_col[i] = -1;
  const char *fs = ln.b;
  for (int f = 0; f < n; f++) {
    const char *fe = memchr(fs, ',', (size_t)(ln.e - fs));
    if (fe == NULL)
      fe = ln.e;
    const char *b = fs, *e = fe;
    trim(&b, &e);
    r->col_role[f] = -1;
    for (int k = 0; k < r->fmt->n_roles; k++) {
      if (!span_eq(b, e, r->fmt->roles[k]))
        continue;
      if (role_col[k] >= 0)
        return fail(r, AW_ERR_PARSE, ln.no, col_of(&ln, b),
                    "column '%s' appears twice in the header", r->fmt->roles[k]);
      role_col[k] = f;
      r->col_role[f] = k;
    }
    fs = fe + 1;
  }
  for (int k = 0; k < r->fmt->n_roles; k++)
    if (role_col[k] < 0)
      return fail(r, AW_ERR_PARSE, ln.no, 1,
                  "missing required column '%s' (%s %s stream needs %s)", r->fmt->roles[k],
                  r->fmt->kind == AW_CAPTURE_IMU ? "an" : "a", r->fmt->label, r->fmt->all);
  return AW_OK;
}

static size_t
count_lines(const char *data, size_t len)
{
  size_t n = 1;
  const char *p = data, *end = data + len;
  while ((p = memchr(p, '\n', (size_t)(end - p))) != NULL) {
    n++;
    p++;
  }
  return n;
}

typedef struct {
  double v[MAX_ROLES];
  bool empty[MAX_ROLES];
  const char *at[MAX_ROLES];     /* where each field starts (for columns) */
  const char *te[MAX_ROLES];     /* and ends */
} Row;

/* Parses the data rows into the stream arrays (t_s, a, b, c: role targets). */
static AwStatus
read_rows(Reader *r, Lines *it, size_t cap, size_t *n_out, double *t_s, double (*v3a)[3],
          double (*v3b)[3], double *conf)
{
  const Format *fmt = r->fmt;
  bool imu = fmt->kind == AW_CAPTURE_IMU;
  const Unit *ut = r->u_time;
  const Unit *ua = imu ? r->u_accel : r->u_pos;
  const Unit *ug = r->u_gyro;
  const double a_max = AW_IMU_ACCEL_MAX_G * AW_GRAVITY_STANDARD_M_S2;
  size_t n = 0;
  double prev_t = 0;
  const char *prev_tb = NULL, *prev_te = NULL;
  Line ln;
  char sb[64], sb2[64];
  while (next_line(it, &ln)) {
    if (line_is_blank(&ln))
      continue;
    if (*first_nonblank(&ln) == '#')
      return fail(r, AW_ERR_PARSE, ln.no, col_of(&ln, first_nonblank(&ln)),
                  "comment lines are only allowed before the header");
    Row row;
    AwStatus d_st = AW_OK;     /* the first field error, reported after the field count */
    long d_col = 0;
    char d_msg[200];
    int f = 0;
    const char *fs = ln.b, *extra_at = NULL;
    for (;;) {
      const char *fe = memchr(fs, ',', (size_t)(ln.e - fs));
      if (fe == NULL)
        fe = ln.e;
      if (f < r->n_cols) {
        int role = r->col_role[f];
        if (role >= 0 && d_st == AW_OK) {
          const char *b = fs, *e = fe;
          trim(&b, &e);
          row.at[role] = b;
          row.te[role] = e;
          row.empty[role] = b == e;
          if (b == e) {
            row.v[role] = NAN;
            if (!fmt->may_be_empty[role]) {
              d_st = AW_ERR_PARSE;
              d_col = col_of(&ln, b);
              snprintf(d_msg, sizeof d_msg, "%s: empty field", fmt->roles[role]);
            }
          } else {
            AwNumResult nr = aw_capture_parse_double(b, e, &row.v[role]);
            if (nr != AW_NUM_OK) {
              d_st = nr == AW_NUM_NON_FINITE ? AW_ERR_NON_FINITE : AW_ERR_PARSE;
              d_col = col_of(&ln, b);
              snprintf(d_msg, sizeof d_msg, "%s: '%s' is not %s", fmt->roles[role],
                       shown(sb, b, e), nr == AW_NUM_NON_FINITE ? "a finite number" : "a number");
            }
          }
        }
      } else if (f == r->n_cols) {
        extra_at = fs;
      }
      f++;
      if (fe == ln.e)
        break;
      fs = fe + 1;
    }
    if (f != r->n_cols)
      return fail(r, AW_ERR_PARSE, ln.no, f < r->n_cols ? col_of(&ln, ln.e) : col_of(&ln, extra_at),
                  "expected %d fields as in the header, found %d", r->n_cols, f);
    if (d_st != AW_OK)
      return fail(r, d_st, ln.no, d_col, "%s", d_msg);
    if (n >= cap)
      return fail(r, AW_ERR_NO_MEMORY, ln.no, 0, "internal error: more rows than lines");

    /* time: strictly increasing, compared as written (before any unit scaling can round) */
    double t = row.v[0];
    if (n > 0 && !(t > prev_t))
      return fail(r, AW_ERR_PARSE, ln.no, col_of(&ln, row.at[0]),
                  t == prev_t ? "t: time repeats: %s again after %s"
                              : "t: time goes backwards: %s after %s",
                  shown(sb, row.at[0], row.te[0]), shown(sb2, prev_tb, prev_te));
    prev_t = t;
    prev_tb = row.at[0];
    prev_te = row.te[0];
    t_s[n] = apply_unit(ut, t);

    if (imu) {
      double a[3], w[3];
      for (int k = 0; k < 3; k++) {
        a[k] = apply_unit(ua, row.v[1 + k]);
        w[k] = apply_unit(ug, row.v[4 + k]);
      }
      double an = sqrt(a[0] * a[0] + a[1] * a[1] + a[2] * a[2]);
      double wn = sqrt(w[0] * w[0] + w[1] * w[1] + w[2] * w[2]);
      if (!(an <= a_max) || !(wn <= AW_IMU_GYRO_MAX_RAD_S)) {
        bool acc = !(an <= a_max);
        const double *v = acc ? a : w;
        int big = 0;
        for (int k = 1; k < 3; k++)
          if (fabs(v[k]) > fabs(v[big]))
            big = k;
        int role = (acc ? 1 : 4) + big;
        if (acc)
          return fail(r, AW_ERR_RANGE, ln.no, col_of(&ln, row.at[role]),
                      "%s: |a| = %.4g m/s^2 (%.4g g) is beyond %g g: not a possible reading",
                      fmt->roles[role], an, an / AW_GRAVITY_STANDARD_M_S2, AW_IMU_ACCEL_MAX_G);
        return fail(r, AW_ERR_RANGE, ln.no, col_of(&ln, row.at[role]),
                    "%s: |w| = %.4g rad/s is beyond %g rad/s: not a possible reading",
                    fmt->roles[role], wn, AW_IMU_GYRO_MAX_RAD_S);
      }
      for (int k = 0; k < 3; k++) {
        v3a[n][k] = a[k];
        v3b[n][k] = w[k];
      }
    } else {
      int n_empty = row.empty[1] + row.empty[2] + row.empty[3];
      if (n_empty == 1 || n_empty == 2) {
        int role = row.empty[1] ? 1 : row.empty[2] ? 2 : 3;
        return fail(r, AW_ERR_PARSE, ln.no, col_of(&ln, row.at[role]),
                    "%s: empty while other coordinates are given (a frame without a detection "
                    "leaves x, y and z all empty)", fmt->roles[role]);
      }
      if (n_empty == 0 && row.empty[4])
        return fail(r, AW_ERR_PARSE, ln.no, col_of(&ln, row.at[4]),
                    "conf: empty field (a frame with a position needs its confidence)");
      double c = row.empty[4] ? 0.0 : row.v[4];
      if (!(c >= 0.0 && c <= 1.0))
        return fail(r, AW_ERR_RANGE, ln.no, col_of(&ln, row.at[4]),
                    "conf: %s is outside [0, 1]", shown(sb, row.at[4], row.te[4]));
      if (n_empty == 3 || c == 0.0) {
        /* no detection: whatever the camera wrote for the position is not a measurement */
        v3a[n][0] = v3a[n][1] = v3a[n][2] = NAN;
        conf[n] = 0.0;
      } else {
        double p[3];
        for (int k = 0; k < 3; k++)
          p[k] = apply_unit(ua, row.v[1 + k]);
        if (!(p[2] > 0.0))
          return fail(r, AW_ERR_RANGE, ln.no, col_of(&ln, row.at[3]),
                      "z: %.6g m is not in front of the camera (z must be above 0)", p[2]);
        if (p[2] > AW_DEPTH_Z_MAX_M)
          return fail(r, AW_ERR_RANGE, ln.no, col_of(&ln, row.at[3]),
                      "z: %.6g m is beyond %g m: not a possible wrist distance", p[2],
                      AW_DEPTH_Z_MAX_M);
        for (int k = 0; k < 3; k++)
          v3a[n][k] = p[k];
        conf[n] = c;
      }
    }
    n++;
  }
  if (n == 0)
    return fail(r, AW_ERR_EMPTY, 0, 0, "no samples after the header on line %ld",
                r->header_line);
  if (n == 1)
    return fail(r, AW_ERR_TOO_FEW, 0, 0,
                "only one sample: a stream needs at least two to have a rate");
  double med = aw_capture_median_interval(t_s, n);
  if (isnan(med))
    return fail(r, AW_ERR_NO_MEMORY, 0, 0, "out of memory");
  double rate = 1.0 / med;
  double lo = imu ? AW_IMU_RATE_MIN_HZ : AW_DEPTH_RATE_MIN_HZ;
  double hi = imu ? AW_IMU_RATE_MAX_HZ : AW_DEPTH_RATE_MAX_HZ;
  if (!(rate >= lo && rate <= hi))
    return fail(r, AW_ERR_RANGE, 0, 0,
                "sample rate %.6g Hz (median interval %.6g s) is outside the %s range %g-%g Hz",
                rate, med, fmt->label, lo, hi);
  *n_out = n;
  return AW_OK;
}

static void
reader_init(Reader *r, const Format *fmt, const char *name, AwError *err)
{
  memset(r, 0, sizeof *r);
  r->fmt = fmt;
  r->name = name != NULL ? name : "";
  r->err = err;
  r->u_time = &time_units[0];
  r->u_accel = &accel_units[0];
  r->u_gyro = &gyro_units[0];
  r->u_pos = &pos_units[0];
}

static Lines
lines_of(const char *data, size_t len)
{
  Lines it = { data, data + len, 0 };
  /* a UTF-8 byte order mark, as some spreadsheet programs write */
  if (len >= 3 && memcmp(data, "\xef\xbb\xbf", 3) == 0)
    it.p += 3;
  return it;
}

AwStatus
aw_imu_read_buffer(const char *data, size_t len, const char *name, AwImuStream **out,
                   AwError *err)
{
  if (data == NULL || out == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, name, 0, 0, "no data or no output");
  Reader r;
  reader_init(&r, &imu_format, name, err);
  Lines it = lines_of(data, len);
  AwStatus st = read_preamble(&r, &it, true);
  AwImuStream *s = NULL;
  if (st == AW_OK) {
    size_t cap = count_lines(it.p, (size_t)(it.end - it.p));
    s = aw_imu_stream_new(cap);
    if (s == NULL)
      st = fail(&r, AW_ERR_NO_MEMORY, 0, 0, "out of memory for %zu samples", cap);
    else
      st = read_rows(&r, &it, cap, &s->n, s->t_s, s->accel_m_s2, s->gyro_rad_s, NULL);
  }
  free(r.col_role);
  if (st != AW_OK) {
    aw_imu_stream_free(s);
    return st;
  }
  snprintf(s->meta.device, sizeof s->meta.device, "%s", r.device);
  s->meta.nominal_rate_hz = r.rate_hz;
  s->meta.accel_range_m_s2 = r.accel_range_m_s2;
  s->meta.gyro_range_rad_s = r.gyro_range_rad_s;
  s->meta.output_delay_s = r.output_delay_s;
  s->meta.wrist = r.wrist;
  snprintf(s->meta.units, sizeof s->meta.units, "t=%s accel=%s gyro=%s", r.u_time->canonical,
           r.u_accel->canonical, r.u_gyro->canonical);
  aw_error_clear(err);
  *out = s;
  return AW_OK;
}

AwStatus
aw_depth_read_buffer(const char *data, size_t len, const char *name, AwDepthStream **out,
                     AwError *err)
{
  if (data == NULL || out == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, name, 0, 0, "no data or no output");
  Reader r;
  reader_init(&r, &depth_format, name, err);
  Lines it = lines_of(data, len);
  AwStatus st = read_preamble(&r, &it, true);
  AwDepthStream *s = NULL;
  if (st == AW_OK) {
    size_t cap = count_lines(it.p, (size_t)(it.end - it.p));
    s = aw_depth_stream_new(cap);
    if (s == NULL)
      st = fail(&r, AW_ERR_NO_MEMORY, 0, 0, "out of memory for %zu samples", cap);
    else
      st = read_rows(&r, &it, cap, &s->n, s->t_s, s->pos_cam_m, NULL, s->conf);
  }
  free(r.col_role);
  if (st != AW_OK) {
    aw_depth_stream_free(s);
    return st;
  }
  snprintf(s->meta.device, sizeof s->meta.device, "%s", r.device);
  s->meta.nominal_rate_hz = r.rate_hz;
  s->meta.wrist = r.wrist;
  snprintf(s->meta.units, sizeof s->meta.units, "t=%s pos=%s", r.u_time->canonical,
           r.u_pos->canonical);
  aw_error_clear(err);
  *out = s;
  return AW_OK;
}

AwStatus
aw_imu_read_file(const char *path, AwImuStream **out, AwError *err)
{
  char *data;
  size_t len;
  AwStatus st = aw_capture_slurp(path, &data, &len, err);
  if (st != AW_OK)
    return st;
  st = aw_imu_read_buffer(data, len, path, out, err);
  free(data);
  return st;
}

AwStatus
aw_depth_read_file(const char *path, AwDepthStream **out, AwError *err)
{
  char *data;
  size_t len;
  AwStatus st = aw_capture_slurp(path, &data, &len, err);
  if (st != AW_OK)
    return st;
  st = aw_depth_read_buffer(data, len, path, out, err);
  free(data);
  return st;
}

/* ---- kind detection --------------------------------------------------------------------- */

static int
header_matches(const Line *ln, const Format *fmt, const char **first_missing)
{
  int found = 0;
  *first_missing = NULL;
  for (int k = 0; k < fmt->n_roles; k++) {
    bool have = false;
    const char *fs = ln->b;
    for (;;) {
      const char *fe = memchr(fs, ',', (size_t)(ln->e - fs));
      if (fe == NULL)
        fe = ln->e;
      const char *b = fs, *e = fe;
      trim(&b, &e);
      if (span_eq(b, e, fmt->roles[k]))
        have = true;
      if (fe == ln->e)
        break;
      fs = fe + 1;
    }
    if (have)
      found++;
    else if (*first_missing == NULL)
      *first_missing = fmt->roles[k];
  }
  return found;
}

AwStatus
aw_capture_detect_buffer(const char *data, size_t len, const char *name, AwCaptureKind *kind,
                         AwError *err)
{
  if (data == NULL || kind == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, name, 0, 0, "no data or no output");
  Reader r;
  reader_init(&r, &imu_format, name, err);
  Lines it = lines_of(data, len);
  Line ln;
  bool any_line = false;
  for (;;) {
    if (!next_line(&it, &ln))
      return fail(&r, AW_ERR_EMPTY, 0, 0,
                  any_line ? "no header row (the file holds only comments)" : "empty file");
    if (line_is_blank(&ln))
      continue;
    any_line = true;
    if (*first_nonblank(&ln) != '#')
      break;
  }
  const char *miss_imu, *miss_depth;
  int n_imu = header_matches(&ln, &imu_format, &miss_imu);
  int n_depth = header_matches(&ln, &depth_format, &miss_depth);
  if (miss_imu == NULL && miss_depth == NULL)
    return fail(&r, AW_ERR_PARSE, ln.no, 1,
                "the header names the columns of both an IMU and a depth stream");
  if (miss_imu == NULL) {
    *kind = AW_CAPTURE_IMU;
  } else if (miss_depth == NULL) {
    *kind = AW_CAPTURE_DEPTH;
  } else if (n_imu <= 1 && n_depth <= 1) {
    return fail(&r, AW_ERR_PARSE, ln.no, 1,
                "not a capture stream: the header names neither an IMU stream (%s) nor a depth "
                "stream (%s)", imu_format.all, depth_format.all);
  } else {
    /* name the kind whose columns the header holds the larger share of */
    const Format *f = n_imu * depth_format.n_roles >= n_depth * imu_format.n_roles
                        ? &imu_format : &depth_format;
    return fail(&r, AW_ERR_PARSE, ln.no, 1,
                "missing required column '%s' (%s %s stream needs %s)",
                f == &imu_format ? miss_imu : miss_depth,
                f == &imu_format ? "an" : "a", f->label, f->all);
  }
  aw_error_clear(err);
  return AW_OK;
}

AwStatus
aw_capture_detect_file(const char *path, AwCaptureKind *kind, AwError *err)
{
  char *data;
  size_t len;
  AwStatus st = aw_capture_slurp(path, &data, &len, err);
  if (st != AW_OK)
    return st;
  st = aw_capture_detect_buffer(data, len, path, kind, err);
  free(data);
  return st;
}

AwStatus
aw_capture_read_file(const char *path, AwCaptureKind *kind, AwImuStream **imu,
                     AwDepthStream **depth, AwError *err)
{
  if (kind == NULL || imu == NULL || depth == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, path, 0, 0, "no output");
  char *data;
  size_t len;
  AwStatus st = aw_capture_slurp(path, &data, &len, err);
  if (st != AW_OK)
    return st;
  AwCaptureKind k;
  st = aw_capture_detect_buffer(data, len, path, &k, err);
  if (st == AW_OK && k == AW_CAPTURE_IMU)
    st = aw_imu_read_buffer(data, len, path, imu, err);
  else if (st == AW_OK)
    st = aw_depth_read_buffer(data, len, path, depth, err);
  free(data);
  if (st == AW_OK)
    *kind = k;
  return st;
}
