/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fuzz target: the IMU CSV reader (README "Capture formats"). Properties: a rejected input
 * leaves *out NULL and a filled error; an accepted one has strictly increasing finite times,
 * finite readings within the physical limits the reader promises, a rate in range; writing it
 * and reading it back gives the very same doubles and metadata (the writer's shortest
 * round-trip form). */
#include "fuzz-common.h"
#include "fuzz-tmp.h"

#include <math.h>

#include "arcwise/capture.h"
#include "arcwise/units.h"

static void
check_stream(const AwImuStream *s)
{
  aw_fuzz_require(s->n >= 2);
  aw_fuzz_require(memchr(s->meta.device, '\0', sizeof s->meta.device) != NULL);
  aw_fuzz_require(memchr(s->meta.units, '\0', sizeof s->meta.units) != NULL);
  aw_fuzz_require(s->meta.wrist >= AW_WRIST_UNKNOWN && s->meta.wrist <= AW_WRIST_RIGHT);
  aw_fuzz_require(isfinite(s->meta.nominal_rate_hz) && s->meta.nominal_rate_hz >= 0);
  aw_fuzz_require(isfinite(s->meta.accel_range_m_s2) && s->meta.accel_range_m_s2 >= 0);
  aw_fuzz_require(isfinite(s->meta.gyro_range_rad_s) && s->meta.gyro_range_rad_s >= 0);
  const double a_max = AW_IMU_ACCEL_MAX_G * AW_GRAVITY_STANDARD_M_S2 * (1 + 1e-12);
  for (size_t i = 0; i < s->n; i++) {
    aw_fuzz_require(isfinite(s->t_s[i]));
    if (i > 0)
      aw_fuzz_require(s->t_s[i] > s->t_s[i - 1]);
    double an = 0, wn = 0;
    for (int k = 0; k < 3; k++) {
      aw_fuzz_require(isfinite(s->accel_m_s2[i][k]) && isfinite(s->gyro_rad_s[i][k]));
      an += s->accel_m_s2[i][k] * s->accel_m_s2[i][k];
      wn += s->gyro_rad_s[i][k] * s->gyro_rad_s[i][k];
    }
    aw_fuzz_require(sqrt(an) <= a_max);
    aw_fuzz_require(sqrt(wn) <= AW_IMU_GYRO_MAX_RAD_S * (1 + 1e-12));
  }
}

static void
round_trip(const AwImuStream *s)
{
  const char *path = aw_fuzz_tmp_path("imu.csv");
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_imu_write_file(path, s, &err);
  if (st != AW_OK)
    aw_fuzz_fail("writer refused an accepted stream: %s", err.message);
  AwImuStream *b = NULL;
  st = aw_imu_read_file(path, &b, &err);
  unlink(path);
  if (st != AW_OK)
    aw_fuzz_fail("written stream does not read back: %s:%ld:%ld: %s", err.file, err.line,
                 err.column, err.message);
  aw_fuzz_require(b->n == s->n);
  for (size_t i = 0; i < s->n; i++) {
    aw_fuzz_require(b->t_s[i] == s->t_s[i]);
    for (int k = 0; k < 3; k++) {
      aw_fuzz_require(b->accel_m_s2[i][k] == s->accel_m_s2[i][k]);
      aw_fuzz_require(b->gyro_rad_s[i][k] == s->gyro_rad_s[i][k]);
    }
  }
  aw_fuzz_require(strcmp(b->meta.device, s->meta.device) == 0);
  aw_fuzz_require(b->meta.wrist == s->meta.wrist);
  aw_fuzz_require(b->meta.nominal_rate_hz == s->meta.nominal_rate_hz);
  aw_fuzz_require(fabs(b->meta.accel_range_m_s2 - s->meta.accel_range_m_s2) <=
                  1e-12 * s->meta.accel_range_m_s2);
  aw_fuzz_require(fabs(b->meta.gyro_range_rad_s - s->meta.gyro_range_rad_s) <=
                  1e-12 * s->meta.gyro_range_rad_s);
  aw_imu_stream_free(b);
}

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  AwImuStream *s = NULL;
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_imu_read_buffer((const char *)data, size, "fuzz.csv", &s, &err);
  if (st != AW_OK) {
    aw_fuzz_require(s == NULL);
    aw_fuzz_check_error(st, &err);
    return 0;
  }
  aw_fuzz_require(s != NULL);
  check_stream(s);
  round_trip(s);
  aw_imu_stream_free(s);
  return 0;
}
