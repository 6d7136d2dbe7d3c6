/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Numbers for spreadsheets and scripts: CSV with one row per swing (every column and its unit
 * in README.md, "Exported numbers") and JSON with the full analysis of each swing and, when
 * given, its fused hand path. For one swing, a session or a player's history: the caller
 * collects the swings (from the library or from a capture) and says which it is. SI units
 * throughout, as the engine computes them. */

#include <stdbool.h>
#include <stddef.h>
#include <stdio.h>

#include "arcwise/analysis.h"
#include "arcwise/fusion.h"

typedef struct {
  long long swing_id;          /* library id, 0 when not from the library */
  const char *player;          /* may be NULL */
  const char *session_date;    /* ISO 8601, may be NULL */
  const char *session_place;
  const char *club;            /* the coach's club name, may be NULL */
  unsigned index_in_recording; /* 0-based */
  int rating;                  /* 0 unrated, 1..5 */
  bool is_reference;
  const char *tags;            /* space-separated, may be NULL */
  const char *notes;           /* may be NULL */
  const AwSwing *swing;        /* NULL when not analysed */
  const AwFusedPath *path;     /* NULL: no path in the JSON. Indices of `swing` index it. */
} ArcwiseNumbersSwing;

typedef enum {
  ARCWISE_SCOPE_SWING = 0,
  ARCWISE_SCOPE_SESSION,
  ARCWISE_SCOPE_PLAYER,
} ArcwiseNumbersScope;

/* The CSV: a header row, then one row per swing. RFC 4180 quoting, LF line ends, "." decimal
 * point, numbers with 17 significant digits (round-trip exact), empty field = not available. */
bool arcwise_numbers_write_csv(FILE *fp, const ArcwiseNumbersSwing *rows, size_t n);

/* The JSON document (RFC 8259): {"format": "arcwise-numbers", "version": 1, "scope": ...,
 * "units": "SI", "swings": [...], "consistency": {...}}; NaN is written as null. With
 * include_path the fused path of each swing (over its span) goes in as parallel arrays. */
bool arcwise_numbers_write_json(FILE *fp, ArcwiseNumbersScope scope, const char *title,
                                const ArcwiseNumbersSwing *rows, size_t n, bool include_path);
