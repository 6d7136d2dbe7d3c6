/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Helpers shared by the capture readers and writers; not part of the public API. */

#include <stdbool.h>
#include <stddef.h>

#include "arcwise/status.h"

/* Outcome of parsing one field as a number. */
typedef enum {
  AW_NUM_OK = 0,
  AW_NUM_NOT_A_NUMBER,   /* not the grammar [+-]digits[.digits][(e|E)[+-]digits] */
  AW_NUM_NON_FINITE,     /* nan, inf, infinity (any case, any sign) or beyond the double range */
} AwNumResult;

/* Parses exactly the bytes [begin, end) (no surrounding blanks) as a decimal number, correctly
 * rounded and independent of the C locale. */
AwNumResult aw_capture_parse_double(const char *begin, const char *end, double *out);

/* Writes the shortest of %.15g, %.16g, %.17g that reads back to exactly v, always with '.' as
 * the decimal point. v must be finite. Returns the length (buf must hold 32 bytes). */
int aw_capture_format_double(char buf[32], double v);

/* |v| to prec significant digits exactly as printf's %.{prec}g writes it in the C locale
 * (exact integer digit generation in the common range, snprintf elsewhere). */
int aw_capture_format_g(char buf[32], int prec, double v);

/* Reads a whole file into a freshly allocated buffer (NUL-terminated for convenience; *len does
 * not count the NUL). On failure returns AW_ERR_IO / AW_ERR_NO_MEMORY and fills err. */
AwStatus aw_capture_slurp(const char *path, char **data, size_t *len, AwError *err);

/* Median of a[0..n) by quickselect; a is reordered. NaN when n is 0. */
double aw_capture_median_inplace(double *a, size_t n);

/* Median of the intervals t[i+1] - t[i] (n >= 2); NaN when n < 2 or out of memory. */
double aw_capture_median_interval(const double *t, size_t n);
