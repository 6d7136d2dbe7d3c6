/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Corrupted inputs never crash the readers (the ASan/UBSan run checks memory), and every
 * outcome keeps the contract: success gives a stream whose times strictly increase and whose
 * values are finite and within the physical limits; failure leaves *out NULL and names a line
 * and column that exist in the input, with a message. Mutations of the good files are seeded and
 * repeatable: byte changes, deletions, insertions of separators, line ends, NUL, '#', '-'. */
#include "arcwise/capture.h"
#include "arcwise/units.h"
#include "capture-private.h"
#include "testutil.h"

#include <stdint.h>
#include <string.h>

static uint64_t rng = 0x243F6A8885A308D3u;

static uint32_t
next_u32(void)
{
  rng ^= rng << 13;
  rng ^= rng >> 7;
  rng ^= rng << 17;
  return (uint32_t)(rng >> 16);
}

/* Does line:column exist in buf? (column may be one past the end of the line) */
static bool
position_exists(const char *buf, size_t len, long line, long col)
{
  if (line == 0)
    return col == 0;
  long l = 1;
  size_t start = 0;
  for (size_t i = 0; i < len && l < line; i++)
    if (buf[i] == '\n') {
      l++;
      start = i + 1;
    }
  if (l != line || col < 1)
    return false;
  size_t end = start;
  while (end < len && buf[end] != '\n')
    end++;
  return (size_t)col <= end - start + 1;
}

static void
check_one(const char *buf, size_t len, bool imu)
{
  AwError err;
  aw_error_clear(&err);
  if (imu) {
    AwImuStream *s = NULL;
    AwStatus st = aw_imu_read_buffer(buf, len, "m.csv", &s, &err);
    if (st == AW_OK) {
      AW_CHECK(s != NULL && s->n >= 2);
      for (size_t i = 0; s != NULL && i < s->n; i++) {
        AW_CHECK(isfinite(s->t_s[i]) && (i == 0 || s->t_s[i] > s->t_s[i - 1]));
        double a = sqrt(s->accel_m_s2[i][0] * s->accel_m_s2[i][0] +
                        s->accel_m_s2[i][1] * s->accel_m_s2[i][1] +
                        s->accel_m_s2[i][2] * s->accel_m_s2[i][2]);
        AW_CHECK(a <= 100 * AW_GRAVITY_STANDARD_M_S2);
      }
      aw_imu_stream_free(s);
    } else {
      AW_CHECK(s == NULL);
      AW_CHECK(err.message[0] != '\0' && strcmp(err.file, "m.csv") == 0);
      if (!position_exists(buf, len, err.line, err.column)) {
        fprintf(stderr, "position %ld:%ld does not exist (%s)\n", err.line, err.column,
                err.message);
        aw_test_failures++;
      }
    }
  } else {
    AwDepthStream *s = NULL;
    AwStatus st = aw_depth_read_buffer(buf, len, "m.csv", &s, &err);
    if (st == AW_OK) {
      AW_CHECK(s != NULL && s->n >= 2);
      for (size_t i = 0; s != NULL && i < s->n; i++) {
        AW_CHECK(i == 0 || s->t_s[i] > s->t_s[i - 1]);
        AW_CHECK(s->conf[i] >= 0 && s->conf[i] <= 1);
        AW_CHECK(isnan(s->pos_cam_m[i][2]) ? s->conf[i] == 0
                                           : s->pos_cam_m[i][2] > 0 && s->pos_cam_m[i][2] <= 20);
      }
      aw_depth_stream_free(s);
    } else {
      AW_CHECK(s == NULL);
      AW_CHECK(err.message[0] != '\0');
      if (!position_exists(buf, len, err.line, err.column)) {
        fprintf(stderr, "position %ld:%ld does not exist (%s)\n", err.line, err.column,
                err.message);
        aw_test_failures++;
      }
    }
  }
  AwCaptureKind kind;
  (void)aw_capture_detect_buffer(buf, len, "m.csv", &kind, &err);
}

int
main(void)
{
  const char *d = getenv("ARCWISE_CAPTURE_DATA");
  const char *names[] = { "imu-basic.csv", "imu-units-crlf.csv", "imu-ns.csv",
                          "depth-basic.csv", "depth-mm-bom-crlf.csv" };
  static const char inserts[] = ",\r\n#-. e0\t";
  for (size_t f = 0; f < sizeof names / sizeof names[0]; f++) {
    char path[1200];
    snprintf(path, sizeof path, "%s/good/%s", d != NULL ? d : "tests/capture/data", names[f]);
    char *orig;
    size_t len;
    AwError err;
    if (aw_capture_slurp(path, &orig, &len, &err) != AW_OK) {
      fprintf(stderr, "cannot read %s\n", path);
      return 1;
    }
    bool imu = strncmp(names[f], "imu", 3) == 0;
    char *buf = malloc(len + 8);
    size_t n_ok = 0, n_rejected = 0;
    for (int iter = 0; iter < 3000; iter++) {
      memcpy(buf, orig, len);
      size_t n = len;
      int edits = 1 + (int)(next_u32() % 3);
      for (int e = 0; e < edits && n > 0; e++) {
        size_t at = next_u32() % n;
        switch (next_u32() % 4) {
        case 0:  /* change a byte to anything */
          buf[at] = (char)(next_u32() & 0xff);
          break;
        case 1:  /* delete a byte */
          memmove(buf + at, buf + at + 1, n - at - 1);
          n--;
          break;
        case 2:  /* insert a structural character */
          memmove(buf + at + 1, buf + at, n - at);
          buf[at] = inserts[next_u32() % (sizeof inserts - 1)];
          n++;
          break;
        default:  /* truncate */
          n = at;
          break;
        }
        if (n + 1 >= len + 8)
          break;
      }
      /* the readers take a length, not a string: no terminator after the data */
      char *exact = malloc(n > 0 ? n : 1);
      memcpy(exact, buf, n);
      check_one(exact, n, imu);
      AwImuStream *probe = NULL;
      if (imu && aw_imu_read_buffer(exact, n, "m.csv", &probe, &err) == AW_OK)
        n_ok++;
      else if (!imu) {
        AwDepthStream *dp = NULL;
        if (aw_depth_read_buffer(exact, n, "m.csv", &dp, &err) == AW_OK)
          n_ok++;
        else
          n_rejected++;
        aw_depth_stream_free(dp);
      } else {
        n_rejected++;
      }
      aw_imu_stream_free(probe);
      free(exact);
    }
    printf("%s: %zu mutants read, %zu rejected\n", names[f], n_ok, n_rejected);
    AW_CHECK(n_rejected > 0);
    free(buf);
    free(orig);
  }
  return AW_TEST_END();
}
