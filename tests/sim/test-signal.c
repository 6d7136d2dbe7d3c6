/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Signal module against published tables (../shared/REFERENCES.md §1 Savitzky-Golay, §2
 * Butterworth and Winter's correction) and against Debian's scipy 1.10 (savgol_filter,
 * butter, filtfilt) run through /usr/bin/python3 on the same input. */
#include "arcwise/signal.h"
#include "arcwise/units.h"
#include "testutil.h"

#include <complex.h>
#include <stdlib.h>
#include <string.h>

static void
check_sg(int window, int order, int deriv, const double *ints, double norm, const char *what)
{
  double c[AW_SAVGOL_MAX_WINDOW];
  AW_CHECK(aw_savgol_coeffs(window, order, deriv, 1.0, -1, c) == AW_OK);
  for (int j = 0; j < window; j++)
    if (fabs(c[j] * norm - ints[j]) > 1e-9 * fabs(norm)) {
      fprintf(stderr, "%s: coefficient %d = %.12g, expected %g\n", what, j, c[j] * norm, ints[j]);
      aw_test_failures++;
    }
}

/* Magnitude of b/a at frequency f. */
static double
gain(const double *b, const double *a, int nc, double f, double fs)
{
  double w = 2 * AW_PI * f / fs;
  double complex z = CMPLX(cos(w), -sin(w)), num = 0, den = 0, zk = 1;
  for (int i = 0; i < nc; i++) {
    num += b[i] * zk;
    den += a[i] * zk;
    zk *= z;
  }
  return cabs(num / den);
}

static double
test_input(int i)
{
  /* Same expression in the Python reference below. */
  return sin(0.07 * i) + 0.3 * cos(0.31 * i) + 1e-4 * i * i + ((i * 37) % 11 - 5) * 0.01;
}

int
main(void)
{
  /* Savitzky & Golay 1964 / Steinier et al. 1972 exact integers (REFERENCES.md §1). */
  static const double sg5[] = { -3, 12, 17, 12, -3 };
  static const double sg7[] = { -2, 3, 6, 7, 6, 3, -2 };
  static const double sg9[] = { -21, 14, 39, 54, 59, 54, 39, 14, -21 };
  static const double sg11[] = { -36, 9, 44, 69, 84, 89, 84, 69, 44, 9, -36 };
  static const double sg13[] = { -11, 0, 9, 16, 21, 24, 25, 24, 21, 16, 9, 0, -11 };
  static const double sg7q[] = { 5, -30, 75, 131, 75, -30, 5 };
  static const double sg13q[] = { 110, -198, -135, 110, 390, 600, 677, 600, 390, 110, -135,
                                  -198, 110 };
  static const double d5[] = { -2, -1, 0, 1, 2 };
  static const double d7[] = { -3, -2, -1, 0, 1, 2, 3 };
  static const double d13[] = { -6, -5, -4, -3, -2, -1, 0, 1, 2, 3, 4, 5, 6 };
  static const double d5c[] = { 1, -8, 0, 8, -1 };
  static const double d7c[] = { 22, -67, -58, 0, 58, 67, -22 };
  static const double d13c[] = { 1133, -660, -1578, -1796, -1489, -832, 0, 832, 1489, 1796,
                                 1578, 660, -1133 };
  static const double dd13[] = { 22, 11, 2, -5, -10, -13, -14, -13, -10, -5, 2, 11, 22 };
  check_sg(5, 2, 0, sg5, 35, "SG 5,2");
  check_sg(5, 3, 0, sg5, 35, "SG 5,3");
  check_sg(7, 2, 0, sg7, 21, "SG 7,2");
  check_sg(7, 3, 0, sg7, 21, "SG 7,3");
  check_sg(9, 2, 0, sg9, 231, "SG 9,2");
  check_sg(11, 3, 0, sg11, 429, "SG 11,3");
  check_sg(13, 2, 0, sg13, 143, "SG 13,2");
  check_sg(13, 3, 0, sg13, 143, "SG 13,3");
  check_sg(7, 4, 0, sg7q, 231, "SG 7,4");
  check_sg(7, 5, 0, sg7q, 231, "SG 7,5");
  check_sg(13, 4, 0, sg13q, 2431, "SG 13,4");
  check_sg(13, 5, 0, sg13q, 2431, "SG 13,5");
  check_sg(5, 2, 1, d5, 10, "SG 5,2 d1");
  check_sg(5, 1, 1, d5, 10, "SG 5,1 d1");
  check_sg(7, 2, 1, d7, 28, "SG 7,2 d1");
  check_sg(13, 2, 1, d13, 182, "SG 13,2 d1");
  check_sg(5, 3, 1, d5c, 12, "SG 5,3 d1");
  check_sg(5, 4, 1, d5c, 12, "SG 5,4 d1");
  check_sg(7, 3, 1, d7c, 252, "SG 7,3 d1");
  check_sg(13, 4, 1, d13c, 24024, "SG 13,4 d1");
  /* Second derivative: the tabulated integers already include the 2! factor (as scipy). */
  {
    double c[13];
    AW_CHECK(aw_savgol_coeffs(13, 2, 2, 1.0, -1, c) == AW_OK);
    for (int j = 0; j < 13; j++)
      AW_CHECK_NEAR(c[j] * 1001, dd13[j], 1e-9);
  }
  /* 25-point quadratic, centre and C5 (= 342, the corrected value, REFERENCES.md §1). */
  {
    double c[25];
    AW_CHECK(aw_savgol_coeffs(25, 2, 0, 1.0, -1, c) == AW_OK);
    AW_CHECK_NEAR(c[12] * 5175, 467, 1e-8);
    AW_CHECK_NEAR(c[12 + 5] * 5175, 342, 1e-8);
    AW_CHECK_NEAR(c[0] * 5175, -253, 1e-8);
  }
  /* Identities: sum = 1, sum of squares = centre (13-pt quadratic 25/143). */
  {
    double c[13], s = 0, s2 = 0;
    aw_savgol_coeffs(13, 2, 0, 1.0, -1, c);
    for (int j = 0; j < 13; j++) {
      s += c[j];
      s2 += c[j] * c[j];
    }
    AW_CHECK_NEAR(s, 1.0, 1e-12);
    AW_CHECK_NEAR(s2, 25.0 / 143.0, 1e-12);
    AW_CHECK_NEAR(c[6], 0.1748251748, 1e-10);
  }
  /* REFERENCES.md suggested check 2: x[n] = 0.5 (n-20)^2 + 3n sampled at delta 0.01 s:
   * 13-pt first derivative at n = 20 is 3 / 0.01 = 300. */
  {
    double x[41], y[41];
    for (int i = 0; i < 41; i++)
      x[i] = 0.5 * (i - 20) * (i - 20) + 3 * i;
    AW_CHECK(aw_savgol_filter(x, 41, 1, 13, 2, 1, 0.01, y, 1) == AW_OK);
    AW_CHECK_NEAR(y[20], 300.0, 1e-9);
    /* A cubic is reproduced by a cubic filter everywhere with mode interp (check 4). */
    for (int i = 0; i < 41; i++)
      x[i] = 0.002 * i * i * i - 0.1 * i * i + i - 4;
    AW_CHECK(aw_savgol_filter(x, 41, 1, 13, 3, 0, 1.0, y, 1) == AW_OK);
    for (int i = 0; i < 41; i++)
      AW_CHECK_NEAR(y[i], x[i], 1e-9);
  }
  /* Butterworth designs, scipy.signal.butter values in REFERENCES.md §2. */
  {
    double b[11], a[11];
    AW_CHECK(aw_butter_lowpass(2, 10, 100, 0, b, a) == AW_OK);
    AW_CHECK_NEAR(b[0], 0.067455273889, 1e-11);
    AW_CHECK_NEAR(b[1], 0.134910547778, 1e-11);
    AW_CHECK_NEAR(b[2], 0.067455273889, 1e-11);
    AW_CHECK_NEAR(a[0], 1.0, 1e-15);
    AW_CHECK_NEAR(a[1], -1.142980502540, 1e-11);
    AW_CHECK_NEAR(a[2], 0.412801598096, 1e-11);
    AW_CHECK_NEAR(gain(b, a, 3, 10, 100), 1 / sqrt(2.0), 1e-12);
    AW_CHECK_NEAR(gain(b, a, 3, 0, 100), 1.0, 1e-12);
    /* Step response, first six samples. */
    static const double step[] = { 0.06745527, 0.27946588, 0.56139951, 0.79612582, 0.94803078,
                                   1.02475978 };
    double one[6] = { 1, 1, 1, 1, 1, 1 }, y[6];
    AW_CHECK(aw_lfilter(b, a, 3, one, 6, 1, NULL, y, 1) == AW_OK);
    for (int i = 0; i < 6; i++)
      AW_CHECK_NEAR(y[i], step[i], 1e-8);
    AW_CHECK(aw_butter_lowpass(2, 6, 30, 0, b, a) == AW_OK);
    AW_CHECK_NEAR(b[0], 0.206572083826, 1e-11);
    AW_CHECK_NEAR(b[1], 0.413144167652, 1e-11);
    AW_CHECK_NEAR(a[1], -0.369527377351, 1e-11);
    AW_CHECK_NEAR(a[2], 0.195815712656, 1e-11);
    AW_CHECK(aw_butter_lowpass(2, 6, 100, 0, b, a) == AW_OK);
    AW_CHECK_NEAR(b[0], 0.027859766117, 1e-11);
    AW_CHECK_NEAR(a[1], -1.475480443593, 1e-11);
    AW_CHECK_NEAR(a[2], 0.586919508061, 1e-11);
    AW_CHECK(aw_butter_lowpass(2, 15, 100, 0, b, a) == AW_OK);
    AW_CHECK_NEAR(b[0], 0.131106439917, 1e-11);
    AW_CHECK_NEAR(a[1], -0.747789178259, 1e-11);
    AW_CHECK_NEAR(a[2], 0.272214937925, 1e-11);
    AW_CHECK(aw_butter_lowpass(4, 10, 100, 0, b, a) == AW_OK);
    static const double b4[] = { 0.004824343358, 0.019297373431, 0.028946060146,
                                 0.019297373431, 0.004824343358 };
    static const double a4[] = { 1, -2.369513007182, 2.313988414416, -1.054665405879,
                                 0.187379492368 };
    for (int i = 0; i < 5; i++) {
      AW_CHECK_NEAR(b[i], b4[i], 1e-11);
      AW_CHECK_NEAR(a[i], a4[i], 1e-11);
    }
    /* Winter 2009 p. 69: the corrected dual-pass coefficients (a0, b1, b2 in his notation,
     * b1 = -a[1], b2 = -a[2] here), and the two-pass amplitude |H(fc)|^2 = 1/sqrt(2). */
    AW_CHECK(aw_butter_lowpass(2, 10, 100, 2, b, a) == AW_OK);
    AW_CHECK_NEAR(b[0], 0.0944467439, 1e-9);
    AW_CHECK_NEAR(-a[1], 0.9626413088, 1e-9);
    AW_CHECK_NEAR(-a[2], -0.3404282844, 1e-9);
    double g = gain(b, a, 3, 10, 100);
    AW_CHECK_NEAR(g * g, 1 / sqrt(2.0), 1e-4);
    AW_CHECK(aw_butter_lowpass(2, 6, 30, 2, b, a) == AW_OK);
    AW_CHECK_NEAR(b[0], 0.2644937733, 1e-9);
    AW_CHECK_NEAR(-a[1], 0.1159765271, 1e-9);
    AW_CHECK_NEAR(-a[2], -0.1739516202, 1e-9);
    AW_CHECK(aw_butter_lowpass(2, 6, 100, 2, b, a) == AW_OK);
    AW_CHECK_NEAR(b[0], 0.0405946814, 1e-9);
    AW_CHECK_NEAR(-a[1], 1.3547488152, 1e-9);
    AW_CHECK_NEAR(-a[2], -0.5171275410, 1e-9);
    /* Uncorrected two-pass amplitude |H(fc)|^2 is 0.5, -6 dB (check 8). */
    AW_CHECK(aw_butter_lowpass(2, 10, 100, 0, b, a) == AW_OK);
    g = gain(b, a, 3, 10, 100);
    AW_CHECK_NEAR(g * g, 0.5, 1e-12);
    AW_CHECK(aw_butter_lowpass(2, 60, 100, 0, b, a) == AW_ERR_INVALID_ARG);
  }
  /* Interpolation and gap filling (numpy.interp semantics inside the samples). */
  {
    double t[] = { 0, 1, 3 }, x[] = { 0, 10, 30 }, tq[] = { -1, 0, 0.5, 2, 3, 4 }, y[6];
    AW_CHECK(aw_interp_linear(t, x, 3, 1, tq, 6, AW_EXTRAP_NAN, y, 1) == AW_OK);
    AW_CHECK(isnan(y[0]) && y[1] == 0 && y[2] == 5 && y[3] == 20 && y[4] == 30 && isnan(y[5]));
    AW_CHECK(aw_interp_linear(t, x, 3, 1, tq, 6, AW_EXTRAP_HOLD, y, 1) == AW_OK);
    AW_CHECK(y[0] == 0 && y[5] == 30);
    AW_CHECK(aw_interp_linear(t, x, 3, 1, tq, 6, AW_EXTRAP_LINEAR, y, 1) == AW_OK);
    AW_CHECK_NEAR(y[0], -10, 1e-12);
    AW_CHECK_NEAR(y[5], 40, 1e-12);
    double tb[] = { 0, 1, 1 };
    AW_CHECK(aw_interp_linear(tb, x, 3, 1, tq, 6, AW_EXTRAP_NAN, y, 1) == AW_ERR_RANGE);
    double tg[] = { 0, 1, 2, 3, 4, 5 }, xg[] = { NAN, 1, NAN, NAN, 4, NAN };
    size_t nf = 0;
    AW_CHECK(aw_fill_gaps_linear(tg, xg, 6, 1, -1, &nf) == AW_OK);
    AW_CHECK(nf == 2 && xg[2] == 2 && xg[3] == 3 && isnan(xg[0]) && isnan(xg[5]));
    double xh[] = { 0, NAN, NAN, NAN, 4, 5 };
    AW_CHECK(aw_fill_gaps_linear(tg, xh, 6, 1, 2.0, &nf) == AW_OK);
    AW_CHECK(nf == 0 && isnan(xh[2]));
    AW_CHECK(aw_uniform_grid(0, 1, 30, NULL) == 31);
  }

  /* Against scipy on the same input: savgol_filter (interp, several windows/derivs),
   * butter + filtfilt with default padding, strided access. */
  const char *py = getenv("ARCWISE_PYTHON");
  if (py == NULL)
    py = "/usr/bin/python3";
  enum { N = 200 };
  double x[N];
  for (int i = 0; i < N; i++)
    x[i] = test_input(i);
  char cmd[4096];
  snprintf(cmd, sizeof cmd,
           "%s -c \"\n"
           "import sys\n"
           "try:\n"
           "  import numpy as np; from scipy import signal\n"
           "except ImportError:\n"
           "  print('SKIP'); sys.exit(0)\n"
           "i=np.arange(%d); x=np.sin(0.07*i)+0.3*np.cos(0.31*i)+1e-4*i*i+(((i*37)%%11)-5)*0.01\n"
           "out=[]\n"
           "out+=list(signal.savgol_filter(x,13,3,mode='interp'))\n"
           "out+=list(signal.savgol_filter(x,9,2,deriv=1,delta=1/30,mode='interp'))\n"
           "out+=list(signal.savgol_filter(x,21,4,deriv=2,delta=0.01,mode='interp'))\n"
           "b,a=signal.butter(2,6,fs=30); out+=list(signal.filtfilt(b,a,x))\n"
           "b,a=signal.butter(4,8,fs=100); out+=list(signal.filtfilt(b,a,x))\n"
           "print(' '.join(repr(float(v)) for v in out))\n"
           "\"",
           py, N);
  FILE *p = popen(cmd, "r");
  if (p == NULL)
    AW_TEST_SKIP("cannot run python");
  static char buf[1 << 17];
  size_t len = fread(buf, 1, sizeof buf - 1, p);
  buf[len] = 0;
  int rc = pclose(p);
  if (rc != 0 || strncmp(buf, "SKIP", 4) == 0) {
    if (aw_test_failures)
      return 1;
    AW_TEST_SKIP("numpy/scipy not available to /usr/bin/python3");
  }
  double ref[5 * N];
  char *s = buf;
  for (int k = 0; k < 5 * N; k++) {
    char *end;
    ref[k] = strtod(s, &end);
    AW_CHECK(end != s);
    s = end;
  }
  /* Strided: interleave x into a 3-vector array to exercise strides. */
  double v[N][3], y[N][3];
  for (int i = 0; i < N; i++)
    v[i][0] = v[i][2] = 0, v[i][1] = x[i];
  double out[5][N];
  AW_CHECK(aw_savgol_filter(&v[0][1], N, 3, 13, 3, 0, 1.0, &y[0][2], 3) == AW_OK);
  for (int i = 0; i < N; i++)
    out[0][i] = y[i][2];
  AW_CHECK(aw_savgol_filter(x, N, 1, 9, 2, 1, 1 / 30.0, out[1], 1) == AW_OK);
  AW_CHECK(aw_savgol_filter(x, N, 1, 21, 4, 2, 0.01, out[2], 1) == AW_OK);
  double b[11], a[11];
  aw_butter_lowpass(2, 6, 30, 0, b, a);
  AW_CHECK(aw_filtfilt(b, a, 3, x, N, 1, out[3], 1) == AW_OK);
  aw_butter_lowpass(4, 8, 100, 0, b, a);
  AW_CHECK(aw_filtfilt(b, a, 5, x, N, 1, out[4], 1) == AW_OK);
  static const double tol[5] = { 1e-9, 1e-7, 1e-6, 1e-9, 1e-9 };
  for (int k = 0; k < 5; k++) {
    double worst = 0;
    for (int i = 0; i < N; i++)
      worst = fmax(worst, fabs(out[k][i] - ref[k * N + i]));
    if (!(worst <= tol[k])) {
      fprintf(stderr, "scipy comparison %d: max difference %g > %g\n", k, worst, tol[k]);
      aw_test_failures++;
    }
  }
  /* In place filtfilt equals out-of-place. */
  double xin[N];
  memcpy(xin, x, sizeof xin);
  AW_CHECK(aw_filtfilt(b, a, 5, xin, N, 1, xin, 1) == AW_OK);
  for (int i = 0; i < N; i++)
    AW_CHECK_NEAR(xin[i], out[4][i], 1e-15);
  return AW_TEST_END();
}
