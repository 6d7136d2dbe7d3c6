/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* A small streaming JSON writer for the commands and exporters: objects and arrays nest, keys
 * and strings are escaped (RFC 8259), numbers print in the shortest form that reads back to the
 * same double, and a non-finite number becomes null (JSON has no NaN). No heap use. */

#include <stdbool.h>
#include <stdio.h>

#define ARCWISE_JSON_MAX_DEPTH 32

typedef struct {
  FILE *out;
  bool pretty;
  int depth;
  bool first[ARCWISE_JSON_MAX_DEPTH];   /* nothing written yet at this level */
  bool failed;                          /* nesting misuse or a write error */
} ArcwiseJson;

void arcwise_json_init(ArcwiseJson *j, FILE *out, bool pretty);
/* key is NULL inside arrays and at the top level; a key names a member inside objects. */
void arcwise_json_begin_object(ArcwiseJson *j, const char *key);
void arcwise_json_end_object(ArcwiseJson *j);
void arcwise_json_begin_array(ArcwiseJson *j, const char *key);
void arcwise_json_end_array(ArcwiseJson *j);
void arcwise_json_string(ArcwiseJson *j, const char *key, const char *value); /* NULL -> null */
void arcwise_json_number(ArcwiseJson *j, const char *key, double value);      /* NaN -> null */
void arcwise_json_integer(ArcwiseJson *j, const char *key, long long value);
void arcwise_json_bool(ArcwiseJson *j, const char *key, bool value);
void arcwise_json_null(ArcwiseJson *j, const char *key);
/* Ends the document with a newline; false if anything went wrong. */
bool arcwise_json_finish(ArcwiseJson *j);
