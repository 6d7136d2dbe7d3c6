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

/* Exact decimal digits without printf, for 1e-6 <= |v| < 1e17 (the range of sensor values and
 * times): v = m 2^-s exactly, so floor(v 10^k) and its remainder follow from one 128-bit
 * product. Fills the 17 leading digits (q17, with a sticky bit for anything below) and the
 * decimal exponent of the first digit. Returns false outside the range. */
typedef struct {
  uint64_t q17;     /* floor(|v| 10^k), 17 digits */
  bool sticky;      /* the remainder is not zero */
  int exp10;        /* |v| = 0.d1d2... x 10^(exp10 + 1), i.e. d1 is the 10^exp10 digit */
} Digits17;

static const uint64_t pow10_u64[20] = {
  1ull, 10ull, 100ull, 1000ull, 10000ull, 100000ull, 1000000ull, 10000000ull, 100000000ull,
  1000000000ull, 10000000000ull, 100000000000ull, 1000000000000ull, 10000000000000ull,
  100000000000000ull, 1000000000000000ull, 10000000000000000ull, 100000000000000000ull,
  1000000000000000000ull, 10000000000000000000ull,
};

#if defined(__SIZEOF_INT128__)
__extension__ typedef unsigned __int128 aw_u128;

static bool
digits17(double v, Digits17 *d)
{
  double a = fabs(v);
  if (!(a >= 1e-6 && a < 1e17))
    return false;
  int e2;
  double fr = frexp(a, &e2);                     /* a = fr 2^e2, fr in [0.5, 1) */
  uint64_t m = (uint64_t)ldexp(fr, 53);           /* exact: a = m 2^(e2 - 53) */
  int s = 53 - e2;                                /* a = m / 2^s; s in [-3, 73] here */
  int x = (int)floor(log10(a));                   /* estimate of the leading digit's power */
  for (int attempt = 0; attempt < 3; attempt++) {
    int k = 16 - x;                               /* want floor(a 10^k) to have 17 digits */
    if (k < 0 || k > 22)
      return false;
    aw_u128 num = (aw_u128)m;
    for (int i = 0; i < k; i++)
      num *= 10;                                  /* < 2^53 10^22 < 2^127 */
    aw_u128 q, r;
    if (s >= 0) {
      q = num >> s;
      r = num - (q << s);
    } else {
      q = num << -s;
      r = 0;
    }
    if (q < (aw_u128)pow10_u64[16]) {
      x--;
      continue;
    }
    if (q >= (aw_u128)pow10_u64[17]) {
      x++;
      continue;
    }
    d->q17 = (uint64_t)q;
    d->sticky = r != 0;
    d->exp10 = x;
    return true;
  }
  return false;
}

/* |v| rounded to p significant digits (round half to even on the exact value, as printf does),
 * written as %.{p}g would write it. */
static int
format_g(char buf[32], bool neg, const Digits17 *d, int p)
{
  uint64_t div = pow10_u64[17 - p];
  uint64_t q = d->q17 / div, r = d->q17 % div;
  uint64_t half = div / 2;
  int x = d->exp10;
  if (r > half || (r == half && (d->sticky || (q & 1))))  /* p <= 16, so div >= 10 */
    q++;
  if (q == pow10_u64[p]) {
    q /= 10;
    x++;
  }
  char dig[20];
  for (int i = p - 1; i >= 0; i--) {
    dig[i] = (char)('0' + q % 10);
    q /= 10;
  }
  int nd = p;
  while (nd > 1 && dig[nd - 1] == '0')
    nd--;                                         /* %g drops trailing zeros */
  int n = 0;
  if (neg)
    buf[n++] = '-';
  if (x < -4 || x >= p) {
    buf[n++] = dig[0];
    if (nd > 1) {
      buf[n++] = '.';
      for (int i = 1; i < nd; i++)
        buf[n++] = dig[i];
    }
    int ax = x < 0 ? -x : x;
    buf[n++] = 'e';
    buf[n++] = x < 0 ? '-' : '+';
    if (ax >= 100)
      buf[n++] = (char)('0' + ax / 100);
    buf[n++] = (char)('0' + ax / 10 % 10);
    buf[n++] = (char)('0' + ax % 10);
  } else if (x >= 0) {
    for (int i = 0; i <= x; i++)
      buf[n++] = i < nd ? dig[i] : '0';
    if (nd > x + 1) {
      buf[n++] = '.';
      for (int i = x + 1; i < nd; i++)
        buf[n++] = dig[i];
    }
  } else {
    buf[n++] = '0';
    buf[n++] = '.';
    for (int i = 0; i < -x - 1; i++)
      buf[n++] = '0';
    for (int i = 0; i < nd; i++)
      buf[n++] = dig[i];
  }
  buf[n] = '\0';
  return n;
}
#endif

int
aw_capture_format_g(char buf[32], int prec, double v)
{
#if defined(__SIZEOF_INT128__)
  Digits17 d;
  if (prec >= 1 && prec <= 16 && digits17(v, &d))
    return format_g(buf, signbit(v) != 0, &d, prec);
#endif
  return format_with(buf, prec, v);
}

int
aw_capture_format_double(char buf[32], double v)
{
  for (int prec = 15; prec < 17; prec++) {
    int n = aw_capture_format_g(buf, prec, v);
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
