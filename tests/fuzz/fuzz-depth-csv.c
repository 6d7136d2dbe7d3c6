/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fuzz target: the depth keypoint CSV reader (README "Capture formats"). Properties: a rejected
 * input leaves *out NULL and a filled error; an accepted one has strictly increasing finite
 * times, confidences in [0, 1], a missing detection as NaN x, y, z with confidence 0 and a
 * detection with finite x, y and 0 < z <= 20 m; writing it and reading it back gives the same
 * doubles (NaN where NaN) and metadata. */
#include "fuzz-common.h"
#include "fuzz-tmp.h"

#include <math.h>

#include "arcwise/capture.h"

static void
check_stream(const AwDepthStream *s)
{
  aw_fuzz_require(s->n >= 2);
  aw_fuzz_require(memchr(s->meta.device, '\0', sizeof s->meta.device) != NULL);
  aw_fuzz_require(memchr(s->meta.units, '\0', sizeof s->meta.units) != NULL);
  aw_fuzz_require(isfinite(s->meta.nominal_rate_hz) && s->meta.nominal_rate_hz >= 0);
  for (size_t i = 0; i < s->n; i++) {
    aw_fuzz_require(isfinite(s->t_s[i]));
    if (i > 0)
      aw_fuzz_require(s->t_s[i] > s->t_s[i - 1]);
    aw_fuzz_require(s->conf[i] >= 0.0 && s->conf[i] <= 1.0);
    const double *p = s->pos_cam_m[i];
    if (isnan(p[0]) || isnan(p[1]) || isnan(p[2])) {
      aw_fuzz_require(isnan(p[0]) && isnan(p[1]) && isnan(p[2]));
      aw_fuzz_require(s->conf[i] == 0.0);
    } else {
      aw_fuzz_require(isfinite(p[0]) && isfinite(p[1]));
      aw_fuzz_require(p[2] > 0.0 && p[2] <= AW_DEPTH_Z_MAX_M * (1 + 1e-12));
      aw_fuzz_require(s->conf[i] > 0.0);
    }
  }
}

static int
same(double a, double b)
{
  return (isnan(a) && isnan(b)) || a == b;
}

static void
round_trip(const AwDepthStream *s)
{
  const char *path = aw_fuzz_tmp_path("depth.csv");
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_depth_write_file(path, s, &err);
  if (st != AW_OK)
    aw_fuzz_fail("writer refused an accepted stream: %s", err.message);
  AwDepthStream *b = NULL;
  st = aw_depth_read_file(path, &b, &err);
  unlink(path);
  if (st != AW_OK)
    aw_fuzz_fail("written stream does not read back: %s:%ld:%ld: %s", err.file, err.line,
                 err.column, err.message);
  aw_fuzz_require(b->n == s->n);
  for (size_t i = 0; i < s->n; i++) {
    aw_fuzz_require(b->t_s[i] == s->t_s[i]);
    aw_fuzz_require(b->conf[i] == s->conf[i]);
    for (int k = 0; k < 3; k++)
      aw_fuzz_require(same(b->pos_cam_m[i][k], s->pos_cam_m[i][k]));
  }
  aw_fuzz_require(strcmp(b->meta.device, s->meta.device) == 0);
  aw_fuzz_require(b->meta.wrist == s->meta.wrist);
  aw_fuzz_require(b->meta.nominal_rate_hz == s->meta.nominal_rate_hz);
  aw_depth_stream_free(b);
}

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  AwDepthStream *s = NULL;
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_depth_read_buffer((const char *)data, size, "fuzz.csv", &s, &err);
  if (st != AW_OK) {
    aw_fuzz_require(s == NULL);
    aw_fuzz_check_error(st, &err);
    return 0;
  }
  aw_fuzz_require(s != NULL);
  check_stream(s);
  round_trip(s);
  aw_depth_stream_free(s);
  return 0;
}
