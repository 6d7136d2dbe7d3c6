/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Number text for the capture formats: a fast, correctly rounded decimal parser and a
 * shortest-round-trip formatter, both independent of the process locale (the workbench runs
 * under the user's locale, where strtod and printf may expect a decimal comma). */
#include "capture-private.h"

#include <errno.h>
#include <fcntl.h>
#include <locale.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

/* Powers of ten that are exact doubles (10^22 < 2^53 * 2^22 ... all exactly representable). */
static const double exact_pow10[23] = {
  1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
  1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
};

static bool
ieq(const char *b, const char *e, const char *word)
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

/* strtod on a private copy, with the locale's decimal point swapped in: strtod is correctly
 * rounded in glibc but reads the decimal point of LC_NUMERIC. */
static AwNumResult
slow_path(const char *b, const char *e, double *out)
{
  size_t n = (size_t)(e - b);
  char small[128];
  char *buf = n < sizeof small ? small : malloc(n + 8);
  if (buf == NULL)
    return AW_NUM_NOT_A_NUMBER;
  memcpy(buf, b, n);
  buf[n] = '\0';
  const char *dp = localeconv()->decimal_point;
  if (dp != NULL && dp[0] != '\0' && dp[0] != '.' && dp[1] == '\0') {
    char *dot = memchr(buf, '.', n);
    if (dot != NULL)
      *dot = dp[0];
  }
  errno = 0;
  char *stop = NULL;
  double v = strtod(buf, &stop);
  AwNumResult r = AW_NUM_OK;
  if (stop != buf + n)
    r = AW_NUM_NOT_A_NUMBER;
  else if (!isfinite(v) || (errno == ERANGE && fabs(v) > 1.0))
    r = AW_NUM_NON_FINITE;
  if (buf != small)
    free(buf);
  if (r == AW_NUM_OK)
    *out = v;
  return r;
}

AwNumResult
aw_capture_parse_double(const char *begin, const char *end, double *out)
{
  const char *p = begin;
  bool neg = false;
  if (p < end && (*p == '+' || *p == '-')) {
    neg = *p == '-';
    p++;
  }
  if (p < end && !((*p >= '0' && *p <= '9') || *p == '.')) {
    if (ieq(p, end, "nan") || ieq(p, end, "inf") || ieq(p, end, "infinity"))
      return AW_NUM_NON_FINITE;
    return AW_NUM_NOT_A_NUMBER;
  }
  uint64_t mant = 0;
  int ndig = 0;        /* significant digits kept in mant */
  long exp10 = 0;
  bool any = false, truncated = false;
  for (; p < end && *p >= '0' && *p <= '9'; p++) {
    unsigned d = (unsigned)(*p - '0');
    any = true;
    if (mant == 0 && d == 0)
      continue;
    if (ndig < 19) {
      mant = mant * 10 + d;
      ndig++;
    } else {
      exp10++;
      truncated |= d != 0;
    }
  }
  if (p < end && *p == '.') {
    p++;
    for (; p < end && *p >= '0' && *p <= '9'; p++) {
      unsigned d = (unsigned)(*p - '0');
      any = true;
      if (mant == 0 && d == 0) {
        exp10--;
        continue;
      }
      if (ndig < 19) {
        mant = mant * 10 + d;
        ndig++;
        exp10--;
      } else {
        truncated |= d != 0;
      }
    }
  }
  if (!any)
    return AW_NUM_NOT_A_NUMBER;
  if (p < end && (*p == 'e' || *p == 'E')) {
    p++;
    bool eneg = false;
    if (p < end && (*p == '+' || *p == '-')) {
      eneg = *p == '-';
      p++;
    }
    if (p >= end || *p < '0' || *p > '9')
      return AW_NUM_NOT_A_NUMBER;
    long ex = 0;
    for (; p < end && *p >= '0' && *p <= '9'; p++)
      if (ex < 100000)
        ex = ex * 10 + (*p - '0');
    exp10 += eneg ? -ex : ex;
  }
  if (p != end)
    return AW_NUM_NOT_A_NUMBER;
  if (mant == 0) {
    *out = neg ? -0.0 : 0.0;
    return AW_NUM_OK;
  }
  /* Clinger's fast path: an exact integer below 2^53 and an exact power of ten give a correctly
   * rounded result with one IEEE multiplication or division. */
  if (!truncated && mant <= (UINT64_C(1) << 53) && exp10 >= -22 && exp10 <= 22) {
    double v = (double)mant;
    v = exp10 < 0 ? v / exact_pow10[-exp10] : v * exact_pow10[exp10];
    *out = neg ? -v : v;
    return AW_NUM_OK;
  }
  return slow_path(begin, end, out);
}

static int
format_with(char buf[32], int prec, double v)
{
  int n = snprintf(buf, 32, "%.*g", prec, v);
  const char *dp = localeconv()->decimal_point;
  if (dp != NULL && dp[0] != '\0' && dp[0] != '.' && dp[1] == '\0') {
    char *c = memchr(buf, dp[0], (size_t)n);
    if (c != NULL)
      *c = '.';
  }
  return n;
}

int
aw_capture_format_double(char buf[32], double v)
{
  for (int prec = 15; prec < 17; prec++) {
    int n = format_with(buf, prec, v);
    double back;
    if (aw_capture_parse_double(buf, buf + n, &back) == AW_NUM_OK && back == v)
      return n;
  }
  return format_with(buf, 17, v);
}

AwStatus
aw_capture_slurp(const char *path, char **data, size_t *len, AwError *err)
{
  int fd = open(path, O_RDONLY | O_CLOEXEC);
  if (fd < 0)
    return aw_error_set(err, AW_ERR_IO, path, 0, 0, "cannot open: %s", strerror(errno));
  struct stat st;
  size_t cap = 1 << 16;
  if (fstat(fd, &st) == 0 && S_ISREG(st.st_mode) && st.st_size > 0)
    cap = (size_t)st.st_size + 1;
  else if (fstat(fd, &st) == 0 && S_ISDIR(st.st_mode)) {
    close(fd);
    return aw_error_set(err, AW_ERR_IO, path, 0, 0, "cannot read: it is a directory");
  }
  char *buf = malloc(cap);
  if (buf == NULL) {
    close(fd);
    return aw_error_set(err, AW_ERR_NO_MEMORY, path, 0, 0, "out of memory reading the file");
  }
  size_t n = 0;
  for (;;) {
    if (n + 1 >= cap) {
      char *nb = realloc(buf, cap * 2);
      if (nb == NULL) {
        free(buf);
        close(fd);
        return aw_error_set(err, AW_ERR_NO_MEMORY, path, 0, 0, "out of memory reading the file");
      }
      buf = nb;
      cap *= 2;
    }
    ssize_t r = read(fd, buf + n, cap - 1 - n);
    if (r < 0) {
      if (errno == EINTR)
        continue;
      int e = errno;
      free(buf);
      close(fd);
      return aw_error_set(err, AW_ERR_IO, path, 0, 0, "cannot read: %s", strerror(e));
    }
    if (r == 0)
      break;
    n += (size_t)r;
  }
  close(fd);
  buf[n] = '\0';
  *data = buf;
  *len = n;
  return AW_OK;
}
