/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Shared by the fuzz targets. Each target defines LLVMFuzzerTestOneInput; it is linked either
 * with libFuzzer (clang, tools/fuzz) or with replay-main.c, which feeds it every file of the
 * committed corpus (the regression test of the ordinary suite, any compiler).
 *
 * A target checks properties, not only "does not crash": a reader that accepts an input must
 * hand out a consistent record (finite where finite is promised, increasing times, an error
 * record that is filled on failure). A broken property calls aw_fuzz_fail(), which aborts so
 * that libFuzzer saves the input. */

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "arcwise/status.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

#define aw_fuzz_fail(...)                                                                  \
  do {                                                                                     \
    fprintf(stderr, "%s:%d: fuzz property broken: ", __FILE__, __LINE__);                  \
    fprintf(stderr, __VA_ARGS__);                                                          \
    fputc('\n', stderr);                                                                   \
    abort();                                                                               \
  } while (0)

#define aw_fuzz_require(cond)                                                              \
  do {                                                                                     \
    if (!(cond))                                                                           \
      aw_fuzz_fail("%s", #cond);                                                           \
  } while (0)

/* On failure a reader must have said why: a status that is not OK, recorded in err, with a
 * message, and a sane position. */
static inline void
aw_fuzz_check_error(AwStatus st, const AwError *err)
{
  aw_fuzz_require(st != AW_OK && st < AW_STATUS_COUNT_);
  aw_fuzz_require(err->status == st);
  aw_fuzz_require(err->message[0] != '\0');
  aw_fuzz_require(memchr(err->message, '\0', sizeof err->message) != NULL);
  aw_fuzz_require(err->line >= 0 && err->column >= 0);
  char buf[1200];
  aw_error_format(err, buf, sizeof buf);
  aw_fuzz_require(buf[0] != '\0');
}
