/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fuzz target: the stored fused-path record (app/store-codec.c, arcwise_codec_decode_path), read
 * back from every library and player file. The input is the record before compression: the
 * target compresses it and puts the size in front as the store does, so mutations land in the
 * record itself rather than in the zlib stream. Properties: a refused record gives NULL and an
 * error in the store's domain with a message; an accepted one gives a path that encodes again
 * and decodes to the same row count, flags and report, every value bit-identical (raw arrays)
 * or within the rounding of its array's step (the quaternion also within its renormalisation).
 * Seeds: records of version 1 and 2 taken from real stored swings. */
#include "fuzz-common.h"

#include <math.h>

#include "store-private.h"

static GBytes *
as_stored(const void *record, gsize size)
{
  GError *error = NULL;
  GBytes *z = arcwise_codec_compress(record, size, &error);
  if (z == NULL)
    aw_fuzz_fail("cannot compress the input: %s", error->message);
  GByteArray *b = g_byte_array_new();
  guint64 le = GUINT64_TO_LE((guint64)size);
  g_byte_array_append(b, (const guint8 *)&le, 8);
  g_byte_array_append(b, g_bytes_get_data(z, NULL), (guint)g_bytes_get_size(z));
  g_bytes_unref(z);
  return g_byte_array_free_to_bytes(b);
}

static void
same_values(const double *a, const double *b, size_t k, int array)
{
  double step = arcwise_codec_path_step(array);
  for (size_t i = 0; i < k; i++) {
    if (memcmp(&a[i], &b[i], sizeof(double)) == 0)
      continue;
    /* a quaternion near unit length (within 1e-6) is also renormalised on decoding */
    double rel = array == 3 ? 1.01e-6 : 1e-12;
    if (!(fabs(a[i] - b[i]) <= 2.5 * step + fabs(a[i]) * rel))
      aw_fuzz_fail("array %d value %zu: %.17g became %.17g", array, i, a[i], b[i]);
  }
}

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  GError *error = NULL;
  GBytes *blob = as_stored(data, size);
  AwFusedPath *p = arcwise_codec_decode_path(blob, &error);
  g_bytes_unref(blob);
  if (p == NULL) {
    aw_fuzz_require(error != NULL && error->domain == ARCWISE_STORE_ERROR);
    aw_fuzz_require(error->message != NULL && error->message[0] != '\0');
    g_clear_error(&error);
    return 0;
  }
  aw_fuzz_require(error == NULL);
  GBytes *again = arcwise_codec_encode_path(p, NAN, NAN, &error);
  if (again == NULL)
    aw_fuzz_fail("an accepted path does not encode: %s", error->message);
  AwFusedPath *q = arcwise_codec_decode_path(again, &error);
  g_bytes_unref(again);
  if (q == NULL)
    aw_fuzz_fail("a re-encoded path does not decode: %s", error->message);
  aw_fuzz_require(q->n == p->n);
  size_t n = p->n;
  same_values(p->t_s, q->t_s, n, 0);
  same_values(&p->pos_cam_m[0][0], &q->pos_cam_m[0][0], 3 * n, 1);
  same_values(&p->vel_cam_m_s[0][0], &q->vel_cam_m_s[0][0], 3 * n, 2);
  same_values(&p->q_cam_body[0][0], &q->q_cam_body[0][0], 4 * n, 3);
  same_values(&p->pos_sigma_cam_m[0][0], &q->pos_sigma_cam_m[0][0], 3 * n, 4);
  same_values(p->cam_info_share, q->cam_info_share, n, 5);
  same_values(&p->accel_body_m_s2[0][0], &q->accel_body_m_s2[0][0], 3 * n, 6);
  same_values(&p->gyro_body_rad_s[0][0], &q->gyro_body_rad_s[0][0], 3 * n, 7);
  aw_fuzz_require(n == 0 || memcmp(p->flags, q->flags, n * sizeof(uint32_t)) == 0);
  aw_fuzz_require(memcmp(&p->report.clock_offset_s, &q->report.clock_offset_s, sizeof(double)) == 0);
  aw_fuzz_require(p->report.cam_frames_used == q->report.cam_frames_used);
  aw_fuzz_require(p->report.still_found == q->report.still_found);
  aw_fused_path_free(p);
  aw_fused_path_free(q);
  return 0;
}
