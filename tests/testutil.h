/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Minimal test helpers: each check prints its location on failure and the program exits 1 if
 * any check failed. Exit 77 means "skipped" (meson convention). */

#include <math.h>
#include <stdio.h>
#include <stdlib.h>

static int aw_test_failures = 0;

#define AW_CHECK(cond)                                                                    \
  do {                                                                                     \
    if (!(cond)) {                                                                         \
      fprintf(stderr, "%s:%d: check failed: %s\n", __FILE__, __LINE__, #cond);             \
      aw_test_failures++;                                                                  \
    }                                                                                      \
  } while (0)

#define AW_CHECK_NEAR(a, b, tol)                                                          \
  do {                                                                                     \
    double aw_a_ = (a), aw_b_ = (b), aw_t_ = (tol);                                        \
    if (!(fabs(aw_a_ - aw_b_) <= aw_t_)) {                                                 \
      fprintf(stderr, "%s:%d: %s = %.12g, expected %s = %.12g (tolerance %.3g)\n",         \
              __FILE__, __LINE__, #a, aw_a_, #b, aw_b_, aw_t_);                            \
      aw_test_failures++;                                                                  \
    }                                                                                      \
  } while (0)

#define AW_TEST_SKIP(why)                                                                 \
  do {                                                                                     \
    fprintf(stderr, "skipped: %s\n", why);                                                 \
    exit(77);                                                                              \
  } while (0)

#define AW_TEST_END() (aw_test_failures == 0 ? 0 : 1)

/* ../shared beside the project, from the environment set by tests/meson.build. */
static inline const char *aw_test_shared_dir(void)
{
  const char *d = getenv("ARCWISE_SHARED_DIR");
  return d != NULL ? d : "../shared";
}
