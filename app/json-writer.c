/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "json-writer.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void
arcwise_json_init(ArcwiseJson *j, FILE *out, bool pretty)
{
  memset(j, 0, sizeof *j);
  j->out = out;
  j->pretty = pretty;
  j->first[0] = true;
}

static void
put_string(FILE *out, const char *s)
{
  fputc('"', out);
  for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
    switch (*p) {
    case '"': fputs("\\\"", out); break;
    case '\\': fputs("\\\\", out); break;
    case '\n': fputs("\\n", out); break;
    case '\r': fputs("\\r", out); break;
    case '\t': fputs("\\t", out); break;
    case '\b': fputs("\\b", out); break;
    case '\f': fputs("\\f", out); break;
    default:
      if (*p < 0x20)
        fprintf(out, "\\u%04x", *p);
      else
        fputc(*p, out); /* UTF-8 passes through unchanged */
    }
  }
  fputc('"', out);
}

static void
indent(ArcwiseJson *j)
{
  if (!j->pretty)
    return;
  fputc('\n', j->out);
  for (int i = 0; i < j->depth; i++)
    fputs("  ", j->out);
}

/* Separator, indentation and key before a value. */
static void
prefix(ArcwiseJson *j, const char *key)
{
  if (j->depth > 0) {
    if (!j->first[j->depth])
      fputc(',', j->out);
    indent(j);
  }
  j->first[j->depth] = false;
  if (key != NULL) {
    put_string(j->out, key);
    fputs(j->pretty ? ": " : ":", j->out);
  }
}

static void
open_level(ArcwiseJson *j, const char *key, char c)
{
  prefix(j, key);
  fputc(c, j->out);
  if (j->depth + 1 >= ARCWISE_JSON_MAX_DEPTH) {
    j->failed = true;
    return;
  }
  j->depth++;
  j->first[j->depth] = true;
}

static void
close_level(ArcwiseJson *j, char c)
{
  if (j->depth <= 0) {
    j->failed = true;
    return;
  }
  bool empty = j->first[j->depth];
  j->depth--;
  if (!empty)
    indent(j);
  fputc(c, j->out);
}

void arcwise_json_begin_object(ArcwiseJson *j, const char *key) { open_level(j, key, '{'); }
void arcwise_json_end_object(ArcwiseJson *j) { close_level(j, '}'); }
void arcwise_json_begin_array(ArcwiseJson *j, const char *key) { open_level(j, key, '['); }
void arcwise_json_end_array(ArcwiseJson *j) { close_level(j, ']'); }

void
arcwise_json_string(ArcwiseJson *j, const char *key, const char *value)
{
  prefix(j, key);
  if (value == NULL)
    fputs("null", j->out);
  else
    put_string(j->out, value);
}

void
arcwise_json_number(ArcwiseJson *j, const char *key, double value)
{
  prefix(j, key);
  if (!isfinite(value)) {
    fputs("null", j->out);
    return;
  }
  /* Shortest of %.15g .. %.17g that reads back exactly. */
  char buf[40];
  for (int prec = 15; prec <= 17; prec++) {
    snprintf(buf, sizeof buf, "%.*g", prec, value);
    if (strtod(buf, NULL) == value)
      break;
  }
  fputs(buf, j->out);
}

void
arcwise_json_integer(ArcwiseJson *j, const char *key, long long value)
{
  prefix(j, key);
  fprintf(j->out, "%lld", value);
}

void
arcwise_json_bool(ArcwiseJson *j, const char *key, bool value)
{
  prefix(j, key);
  fputs(value ? "true" : "false", j->out);
}

void
arcwise_json_null(ArcwiseJson *j, const char *key)
{
  prefix(j, key);
  fputs("null", j->out);
}

bool
arcwise_json_finish(ArcwiseJson *j)
{
  if (j->depth != 0)
    j->failed = true;
  fputc('\n', j->out);
  if (fflush(j->out) != 0 || ferror(j->out))
    j->failed = true;
  return !j->failed;
}
