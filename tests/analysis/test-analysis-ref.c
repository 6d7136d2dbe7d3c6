/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The analysis's numerical building blocks against Debian's numpy and scipy (run through
 * /usr/bin/python3): the least-squares plane against numpy.linalg.svd on the same points, and
 * the Savitzky-Golay derivative against scipy.signal.savgol_filter (Savitzky & Golay 1964,
 * scipy's mode='interp'). Skips (77) when python3-numpy/scipy are missing. */
#include "testutil.h"

#include "arcwise/analysis.h"
#include "analysis-private.h"

#include <stdio.h>
#include <string.h>
#include <unistd.h>

static unsigned long rng = 12345;
static double
urand(void)
{
  rng = rng * 6364136223846793005UL + 1442695040888963407UL;
  return (double)((rng >> 11) & ((1UL << 53) - 1)) / (double)(1UL << 53);
}

static const char *
python(void)
{
  const char *p = getenv("ARCWISE_PYTHON");
  return p != NULL ? p : "/usr/bin/python3";
}

/* Runs a python script on a data file; returns its stdout (static buffer) or NULL. */
static char out_buf[1 << 16];
static const char *
run_py(const char *script, const char *data_path)
{
  char cmd[1024];
  snprintf(cmd, sizeof cmd, "%s -c '%s' %s 2>&1", python(), script, data_path);
  FILE *f = popen(cmd, "r");
  if (f == NULL)
    return NULL;
  size_t n = fread(out_buf, 1, sizeof out_buf - 1, f);
  out_buf[n] = 0;
  int rc = pclose(f);
  if (rc != 0) {
    if (strstr(out_buf, "No module named") != NULL)
      AW_TEST_SKIP("numpy/scipy not installed for /usr/bin/python3");
    fprintf(stderr, "python failed: %s\n", out_buf);
    return NULL;
  }
  return out_buf;
}

static void
test_plane(const char *dir)
{
  /* A tilted, noisy plane of 200 points: an inclined swing plane with a few cm of scatter. */
  enum { N = 200 };
  static double pts[N][3];
  double n_true[3] = { 0.2, -0.5, 0.84 };
  char path[512];
  snprintf(path, sizeof path, "%s/plane.txt", dir);
  FILE *f = fopen(path, "w");
  AW_CHECK(f != NULL);
  if (f == NULL)
    return;
  for (int i = 0; i < N; i++) {
    double u = urand() * 2 - 1, v = urand() * 2 - 1, e = 0.03 * (urand() - 0.5);
    double a[3] = { 1, 0, -n_true[0] / n_true[2] }, b[3] = { 0, 1, -n_true[1] / n_true[2] };
    for (int k = 0; k < 3; k++)
      pts[i][k] = 0.3 + u * a[k] + v * b[k] + e * n_true[k];
    fprintf(f, "%.17g %.17g %.17g\n", pts[i][0], pts[i][1], pts[i][2]);
  }
  fclose(f);
  double c[3], nrm[3], rms;
  AW_CHECK(aw_plane_fit((const double (*)[3])pts, N, c, nrm, &rms) == AW_OK);
  const char *py =
    "import sys, numpy as np\n"
    "P = np.loadtxt(sys.argv[1]); C = P.mean(axis=0)\n"
    "U, S, Vt = np.linalg.svd(P - C)\n"
    "n = Vt[-1]; n = n if n[2] > 0 else -n\n"
    "r = S[-1] / np.sqrt(len(P))\n"
    "print(\"%.17g %.17g %.17g %.17g %.17g %.17g %.17g\" % (n[0], n[1], n[2], C[0], C[1], C[2], r))\n";
  const char *o = run_py(py, path);
  AW_CHECK(o != NULL);
  if (o == NULL)
    return;
  double r[7];
  AW_CHECK(sscanf(o, "%lf %lf %lf %lf %lf %lf %lf", &r[0], &r[1], &r[2], &r[3], &r[4], &r[5],
                  &r[6]) == 7);
  if (nrm[2] < 0)
    for (int k = 0; k < 3; k++)
      nrm[k] = -nrm[k];
  for (int k = 0; k < 3; k++) {
    AW_CHECK_NEAR(nrm[k], r[k], 1e-9);
    AW_CHECK_NEAR(c[k], r[3 + k], 1e-12);
  }
  AW_CHECK_NEAR(rms, r[6], 1e-9);
  /* Degenerate input: points on one line have no plane. */
  double line[4][3] = { { 0, 0, 0 }, { 1, 1, 1 }, { 2, 2, 2 }, { 3, 3, 3 } };
  AW_CHECK(aw_plane_fit((const double (*)[3])line, 4, c, nrm, &rms) == AW_ERR_TOO_FEW);
  unlink(path);
}

static void
test_savgol(const char *dir)
{
  /* A noisy hand-like signal at 100 Hz; derivative (window 9 and 5, orders 3 and 2) compared
   * with scipy.signal.savgol_filter(x, w, order, deriv=1, delta=dt), mode="interp". */
  enum { N = 300 };
  static double t[N], x[N], d[N];
  double dt = 0.01;
  char path[512];
  snprintf(path, sizeof path, "%s/sg.txt", dir);
  FILE *f = fopen(path, "w");
  AW_CHECK(f != NULL);
  if (f == NULL)
    return;
  for (int i = 0; i < N; i++) {
    t[i] = 3.0 + i * dt;
    x[i] = 0.7 * sin(2.1 * t[i]) + 0.1 * t[i] * t[i] + 0.003 * (urand() - 0.5);
    fprintf(f, "%.17g\n", x[i]);
  }
  fclose(f);
  static const int cases[][2] = { { 4, 3 }, { 2, 2 }, { 6, 4 } };
  for (size_t c = 0; c < sizeof cases / sizeof cases[0]; c++) {
    int half = cases[c][0], order = cases[c][1];
    AW_CHECK(aw_an_local_poly(t, x, 1, N, half, order, 1, d, 1));
    char py[1024];
    snprintf(py, sizeof py,
             "import sys, numpy as np\n"
             "from scipy.signal import savgol_filter\n"
             "x = np.loadtxt(sys.argv[1])\n"
             "d = savgol_filter(x, %d, %d, deriv=1, delta=%.17g, mode=\"interp\")\n"
             "print(\" \".join(\"%%.17g\" %% v for v in d))\n",
             2 * half + 1, order, dt);
    const char *o = run_py(py, path);
    AW_CHECK(o != NULL);
    if (o == NULL)
      return;
    const char *q = o;
    double maxerr = 0;
    for (int i = 0; i < N; i++) {
      char *end;
      double ref = strtod(q, &end);
      AW_CHECK(end != q);
      q = end;
      maxerr = fmax(maxerr, fabs(ref - d[i]));
    }
    fprintf(stderr, "savgol window %d order %d: max |diff| %.3g\n", 2 * half + 1, order, maxerr);
    AW_CHECK(maxerr < 1e-8);
  }
  unlink(path);
}

int
main(void)
{
  if (access(python(), X_OK) != 0)
    AW_TEST_SKIP("no /usr/bin/python3");
  char dir[] = "/tmp/aw-analysis-ref-XXXXXX";
  if (mkdtemp(dir) == NULL)
    AW_TEST_SKIP("no temporary directory");
  test_plane(dir);
  test_savgol(dir);
  rmdir(dir);
  return AW_TEST_END();
}
