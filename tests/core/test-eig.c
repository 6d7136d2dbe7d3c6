/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The small symmetric eigen-solver (arcwise/eig.h) against numpy.linalg.eigh (Debian's numpy,
 * run through /usr/bin/python3; LAPACK's syevd) on random, nearly degenerate and diagonal
 * matrices of sizes 1 to 4, plus the defining identities A V = V W and V^T V = I. Skips (77)
 * when numpy is missing. */
#include "testutil.h"

#include "arcwise/eig.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

static unsigned long rng = 424242;
static double
urand(void)
{
  rng = rng * 6364136223846793005UL + 1442695040888963407UL;
  return (double)((rng >> 11) & ((1UL << 53) - 1)) / (double)(1UL << 53) * 2.0 - 1.0;
}

static const char *
python(void)
{
  const char *p = getenv("ARCWISE_PYTHON");
  return p != NULL ? p : "/usr/bin/python3";
}

enum { CASES = 24 };

/* Case k: size 1..4; every fourth nearly degenerate (two eigenvalues 1e-9 apart), every
 * sixth already diagonal. */
static int
make_case(int k, double A[16])
{
  int n = 1 + k % 4;
  double Q[4][4], d[4];
  /* A random orthogonal Q by Gram-Schmidt on random columns, then A = Q diag(d) Q^T. */
  for (int j = 0; j < n; j++) {
    for (int i = 0; i < n; i++)
      Q[i][j] = urand();
    for (int p = 0; p < j; p++) {
      double dot = 0;
      for (int i = 0; i < n; i++)
        dot += Q[i][j] * Q[i][p];
      for (int i = 0; i < n; i++)
        Q[i][j] -= dot * Q[i][p];
    }
    double nn = 0;
    for (int i = 0; i < n; i++)
      nn += Q[i][j] * Q[i][j];
    for (int i = 0; i < n; i++)
      Q[i][j] /= sqrt(nn);
    d[j] = 10.0 * urand();
  }
  if (k % 4 == 3 && n >= 2)
    d[1] = d[0] + 1e-9;
  for (int i = 0; i < n; i++)
    for (int j = 0; j < n; j++) {
      double s = 0;
      for (int p = 0; p < n; p++)
        s += k % 6 == 5 ? (i == j && p == i ? d[p] : 0) : Q[i][p] * d[p] * Q[j][p];
      A[i * n + j] = s;
    }
  /* Exactly symmetric, as a scatter matrix is. */
  for (int i = 0; i < n; i++)
    for (int j = 0; j < i; j++)
      A[i * n + j] = A[j * n + i];
  return n;
}

int
main(void)
{
  if (access(python(), X_OK) != 0)
    AW_TEST_SKIP("no /usr/bin/python3");
  char path[] = "/tmp/aw-eig-XXXXXX";
  int fd = mkstemp(path);
  if (fd < 0)
    AW_TEST_SKIP("no temporary file");
  FILE *f = fdopen(fd, "w");
  double mats[CASES][16];
  int sizes[CASES];
  for (int k = 0; k < CASES; k++) {
    sizes[k] = make_case(k, mats[k]);
    fprintf(f, "%d", sizes[k]);
    for (int i = 0; i < sizes[k] * sizes[k]; i++)
      fprintf(f, " %.17g", mats[k][i]);
    fputc('\n', f);
  }
  fclose(f);
  /* numpy's eigenvalues (ascending, as eigh returns them), one line per case. */
  char cmd[1024];
  snprintf(cmd, sizeof cmd,
           "%s -c 'import sys, numpy as np\n"
           "for line in open(sys.argv[1]):\n"
           "    v = line.split(); n = int(v[0])\n"
           "    w = np.linalg.eigh(np.array([float(x) for x in v[1:]]).reshape(n, n))[0]\n"
           "    print(\" \".join(\"%%.17g\" %% x for x in w))' %s 2>&1",
           python(), path);
  FILE *p = popen(cmd, "r");
  AW_CHECK(p != NULL);
  if (p == NULL)
    return AW_TEST_END();
  char line[4096];
  int k = 0;
  while (k < CASES && fgets(line, sizeof line, p) != NULL) {
    if (strstr(line, "No module named") != NULL) {
      pclose(p);
      unlink(path);
      AW_TEST_SKIP("numpy not installed for /usr/bin/python3");
    }
    int n = sizes[k];
    double ref[4] = { 0 }, w[4], V[16];
    char *s = line;
    for (int i = 0; i < n; i++)
      ref[i] = strtod(s, &s);
    AW_CHECK(aw_sym_eigen(n, mats[k], w, V));
    double scale = 0;
    for (int i = 0; i < n; i++)
      scale = fmax(scale, fabs(ref[i]));
    for (int i = 0; i < n; i++)
      AW_CHECK_NEAR(w[i], ref[i], 1e-12 * fmax(scale, 1.0));
    /* A V = V W and V^T V = I (eigenvectors of a degenerate pair are any basis of their
     * plane, so these identities, not numpy's vectors, are the check). */
    for (int i = 0; i < n; i++)
      for (int j = 0; j < n; j++) {
        double av = 0, vtv = 0;
        for (int q = 0; q < n; q++) {
          av += mats[k][i * n + q] * V[q * n + j];
          vtv += V[q * n + i] * V[q * n + j];
        }
        AW_CHECK_NEAR(av, V[i * n + j] * w[j], 1e-12 * fmax(scale, 1.0));
        AW_CHECK_NEAR(vtv, i == j ? 1.0 : 0.0, 1e-12);
      }
    k++;
  }
  int rc = pclose(p);
  AW_CHECK(rc == 0);
  AW_CHECK(k == CASES);
  unlink(path);
  /* Bad input changes nothing and says so. */
  double bad[4] = { 1, NAN, NAN, 2 }, w[2] = { 7, 7 }, V[4] = { 7, 7, 7, 7 };
  AW_CHECK(!aw_sym_eigen(2, bad, w, V));
  AW_CHECK(w[0] == 7 && V[0] == 7);
  AW_CHECK(!aw_sym_eigen(5, bad, w, V));
  AW_CHECK(!aw_sym_eigen(0, bad, w, V));
  return AW_TEST_END();
}
