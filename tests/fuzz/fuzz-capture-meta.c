/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fuzz target: the metadata comment lines (README "Comment lines (metadata)"). Every line of
 * the input becomes a comment ('#' put in front when missing) above a fixed, valid body, so the
 * mutations all land in the `# key: value` parser rather than in the rows. The same comment
 * block is given to the IMU reader, the depth reader and the kind detector; the raw input also
 * goes to the detector. Properties: a failure names a line inside the comment block (the body
 * is valid), an accepted file has the body's samples, and metadata in its documented ranges. */
#include "fuzz-common.h"

#include <math.h>

#include "arcwise/capture.h"

static const char imu_body[] = "t,ax,ay,az,gx,gy,gz\n"
                               "0,0,0,9.8,0,0,0\n"
                               "0.01,0.1,0,9.8,0.1,0,0\n"
                               "0.02,0.2,0,9.8,0.2,0,0\n";
static const char depth_body[] = "t,x,y,z,conf\n"
                                 "0,0.1,0.2,2.5,0.9\n"
                                 "0.0333,0.1,0.2,2.5,0.9\n"
                                 "0.0667,,,,0\n";

/* Comment block: each input line prefixed with '#' unless it has one. Returns its line count. */
static char *
make_file(const uint8_t *data, size_t size, const char *body, size_t *len_out, long *lines_out)
{
  size_t body_len = strlen(body);
  char *buf = malloc(2 * size + body_len + 2);
  if (buf == NULL)
    return NULL;
  size_t o = 0;
  long lines = 0;
  size_t i = 0;
  while (i < size) {
    size_t j = i;
    while (j < size && data[j] != '\n')
      j++;
    /* a CR or a NUL could end a line or a string early: keep them, the reader must cope */
    if (data[i] != '#')
      buf[o++] = '#';
    memcpy(buf + o, data + i, j - i);
    o += j - i;
    buf[o++] = '\n';
    lines++;
    i = j + 1;
  }
  memcpy(buf + o, body, body_len);
  o += body_len;
  *len_out = o;
  *lines_out = lines;
  return buf;
}

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  AwError err;
  AwCaptureKind kind = AW_CAPTURE_UNKNOWN;
  aw_error_clear(&err);
  AwStatus st = aw_capture_detect_buffer((const char *)data, size, "raw.csv", &kind, &err);
  if (st != AW_OK)
    aw_fuzz_check_error(st, &err);
  else
    aw_fuzz_require(kind == AW_CAPTURE_IMU || kind == AW_CAPTURE_DEPTH);

  size_t len;
  long lines;
  char *f = make_file(data, size, imu_body, &len, &lines);
  if (f == NULL)
    return 0;
  AwImuStream *imu = NULL;
  aw_error_clear(&err);
  st = aw_imu_read_buffer(f, len, "meta-imu.csv", &imu, &err);
  if (st != AW_OK) {
    aw_fuzz_require(imu == NULL);
    aw_fuzz_check_error(st, &err);
    /* A '\r' alone may split a comment into two lines, so the bound is on bytes, not lines;
     * a NUL byte is rejected wherever it is. The rows below are valid, except that a unit
     * declared in the comments changes what they mean (a rate or a range can fall out). */
    aw_fuzz_require(err.line <= (long)len);
  } else {
    aw_fuzz_require(imu != NULL && imu->n == 3);
    aw_fuzz_require(imu->meta.wrist >= AW_WRIST_UNKNOWN && imu->meta.wrist <= AW_WRIST_RIGHT);
    aw_fuzz_require(memchr(imu->meta.device, '\0', sizeof imu->meta.device) != NULL);
    aw_fuzz_require(isfinite(imu->meta.nominal_rate_hz) && imu->meta.nominal_rate_hz >= 0);
    aw_fuzz_require(isfinite(imu->meta.accel_range_m_s2) && imu->meta.accel_range_m_s2 >= 0);
    aw_fuzz_require(isfinite(imu->meta.gyro_range_rad_s) && imu->meta.gyro_range_rad_s >= 0);
  }
  aw_imu_stream_free(imu);
  free(f);

  f = make_file(data, size, depth_body, &len, &lines);
  if (f == NULL)
    return 0;
  AwDepthStream *depth = NULL;
  aw_error_clear(&err);
  st = aw_depth_read_buffer(f, len, "meta-depth.csv", &depth, &err);
  if (st != AW_OK) {
    aw_fuzz_require(depth == NULL);
    aw_fuzz_check_error(st, &err);
  } else {
    aw_fuzz_require(depth != NULL && depth->n == 3);
    aw_fuzz_require(memchr(depth->meta.device, '\0', sizeof depth->meta.device) != NULL);
    aw_fuzz_require(isfinite(depth->meta.nominal_rate_hz) && depth->meta.nominal_rate_hz >= 0);
  }
  aw_depth_stream_free(depth);
  free(f);
  return 0;
}
