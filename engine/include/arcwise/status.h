/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Status codes returned by every fallible engine function, and the error detail that names the
 * place in a file where bad input was found. The engine never prints, aborts or exits: callers
 * read these and decide what to show. */

#include <stddef.h>

typedef enum {
  AW_OK = 0,
  AW_ERR_NO_MEMORY,
  AW_ERR_IO,            /* could not open, read or write a file */
  AW_ERR_PARSE,         /* malformed text: see AwError for file, line, column */
  AW_ERR_NON_FINITE,    /* NaN or Inf where a number was needed */
  AW_ERR_RANGE,         /* a value outside its physical or declared range */
  AW_ERR_UNITS,         /* unknown or inconsistent unit */
  AW_ERR_EMPTY,         /* no data */
  AW_ERR_NO_OVERLAP,    /* two streams do not overlap in time */
  AW_ERR_NO_CORRELATION,/* streams overlap but their signals do not agree */
  AW_ERR_TOO_FEW,       /* not enough samples or frames for the method */
  AW_ERR_NO_SWING,      /* no swing found in a recording */
  AW_ERR_INCOMPLETE,    /* a recording ends mid-swing, a file is truncated */
  AW_ERR_INVALID_ARG,   /* a programming error by the caller */
  AW_ERR_UNSUPPORTED,   /* a valid but unsupported variant of a format */
  AW_STATUS_COUNT_
} AwStatus;

/* Short English phrase for a status, never NULL. */
const char *aw_status_to_string(AwStatus status);

/* Where and why input was rejected. line and column are 1-based; 0 means "not applicable"
 * (for example a whole-file problem such as an empty file). */
typedef struct {
  AwStatus status;
  char file[512];
  long line;
  long column;
  char message[512];
} AwError;

/* Clears an error record (safe on NULL). */
void aw_error_clear(AwError *error);

/* Fills an error record printf-style (safe on NULL). Returns status so callers can write
 * `return aw_error_set(err, AW_ERR_PARSE, path, line, col, "...")`. */
AwStatus aw_error_set(AwError *error, AwStatus status, const char *file, long line, long column,
                      const char *fmt, ...)
#if defined(__GNUC__)
  __attribute__((format(printf, 6, 7)))
#endif
  ;

/* Formats "file:line:column: message" (omitting zero parts) into buf; returns buf. */
const char *aw_error_format(const AwError *error, char *buf, size_t buf_size);
