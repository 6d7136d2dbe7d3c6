/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fuzz target: the C3D reader (c3d.org, "The C3D File Format - User Guide"), the marker
 * trajectory built from it, and the writer on what was read. Properties: a rejected file leaves
 * *out NULL and a filled error; an accepted one has NUL-terminated labels, units and parameter
 * names, parameter value counts that match their dimensions, point data that is finite or NaN
 * as a whole point; a marker trajectory on increasing finite times; and the points written back
 * as float data read again to the same values within float32 rounding (2^-24 relative). */
#include "fuzz-common.h"

#include <math.h>

#include "arcwise/c3d.h"

static void
check_file(const AwC3dFile *f)
{
  aw_fuzz_require(memchr(f->units, '\0', sizeof f->units) != NULL);
  aw_fuzz_require(memchr(f->notes, '\0', sizeof f->notes) != NULL);
  aw_fuzz_require(f->n_points == 0 || f->labels != NULL);
  for (size_t i = 0; i < f->n_points; i++)
    aw_fuzz_require(memchr(f->labels[i], '\0', AW_C3D_LABEL_MAX) != NULL);
  for (size_t i = 0; i < f->n_params; i++) {
    const AwC3dParam *p = &f->params[i];
    aw_fuzz_require(memchr(p->group, '\0', sizeof p->group) != NULL);
    aw_fuzz_require(memchr(p->name, '\0', sizeof p->name) != NULL);
    aw_fuzz_require(memchr(p->description, '\0', sizeof p->description) != NULL);
    aw_fuzz_require(p->n_dims >= 0 && p->n_dims <= 7);
    size_t prod = 1;
    for (int d = 0; d < p->n_dims; d++) {
      aw_fuzz_require(p->dims[d] >= 0);
      prod *= (size_t)p->dims[d];
    }
    aw_fuzz_require(p->n_values == prod);
    if (p->type == AW_C3D_CHAR) {
      aw_fuzz_require(p->values == NULL);
      aw_fuzz_require(p->chars != NULL || p->n_values == 0);
      if (p->chars != NULL)
        aw_fuzz_require(p->chars[p->n_values] == '\0');
    } else if (p->n_values > 0) {
      aw_fuzz_require(p->values != NULL);
      /* touch every value: ASan reports a short allocation */
      double sum = 0;
      for (size_t k = 0; k < p->n_values; k++)
        sum += p->values[k] == p->values[k] ? 0 : 1;
      aw_fuzz_require(sum >= 0);
    }
  }
  size_t total = f->n_points * f->n_frames;
  for (size_t k = 0; k < total; k++) {
    /* a point is a whole: all three coordinates NaN, or none (touching each one also lets
     * ASan see a short allocation) */
    const double *p = f->pos[k];
    int nans = isnan(p[0]) + isnan(p[1]) + isnan(p[2]);
    aw_fuzz_require(nans == 0 || nans == 3);
    (void)f->pos_raw[k][0];
    (void)f->residual[k];
    (void)f->camera_mask[k];
  }
  aw_fuzz_require(f->n_invalid <= total);
  /* a const lookup of a name that is always asked for */
  (void)aw_c3d_param(f, "POINT", "LABELS");
  (void)aw_c3d_point_index(f, "HAND");
}

static void
check_marker(const AwC3dFile *f, bool keep)
{
  AwMarkerOptions opt;
  aw_marker_options_default(&opt);
  opt.units_if_missing = "mm";
  opt.keep_flagged_invalid = keep;
  AwMarkerTrajectory *m = NULL;
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_c3d_marker_trajectory(f, NULL, &opt, &m, &err);
  if (st != AW_OK) {
    aw_fuzz_require(m == NULL);
    aw_fuzz_check_error(st, &err);
    return;
  }
  aw_fuzz_require(m != NULL && m->n == f->n_frames);
  aw_fuzz_require(m->rate_hz > 0 && isfinite(m->rate_hz));
  aw_fuzz_require(memchr(m->label, '\0', sizeof m->label) != NULL);
  size_t nan_frames = 0;
  for (size_t i = 0; i < m->n; i++) {
    aw_fuzz_require(isfinite(m->t_s[i]));
    if (i > 0)
      aw_fuzz_require(m->t_s[i] > m->t_s[i - 1]);
    if (isnan(m->pos_m[i][0]))
      nan_frames++;
  }
  aw_fuzz_require(m->n_invalid == nan_frames);
  aw_marker_trajectory_free(m);
}

static void
round_trip(const AwC3dFile *f)
{
  if (f->n_points == 0 || f->n_points > 255 || f->n_frames == 0 || f->n_frames > 100000)
    return;
  if (!(f->point_rate_hz > 0 && isfinite(f->point_rate_hz)))
    return;
  size_t total = f->n_points * f->n_frames;
  double (*pos)[3] = malloc(total * sizeof *pos);
  const char **labels = malloc(f->n_points * sizeof *labels);
  if (pos == NULL || labels == NULL) {
    free(pos);
    free(labels);
    return;
  }
  for (size_t k = 0; k < total; k++) {
    bool ok = true;
    for (int a = 0; a < 3; a++)
      ok = ok && isfinite(f->pos[k][a]) && fabs(f->pos[k][a]) < 1e30;
    for (int a = 0; a < 3; a++)
      pos[k][a] = ok ? f->pos[k][a] : (double)NAN;
  }
  for (size_t i = 0; i < f->n_points; i++)
    labels[i] = f->labels[i];
  AwC3dWriteSpec spec = {
    .n_points = f->n_points,
    .n_frames = f->n_frames,
    .rate_hz = f->point_rate_hz,
    .first_frame = f->first_frame,
    .labels = (const char *const *)labels,
    .units = f->units[0] ? f->units : "mm",
    .pos = pos,
    .float_data = true,
    .processor = f->processor,
  };
  uint8_t *buf = NULL;
  size_t len = 0;
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_c3d_write_buffer(&spec, &buf, &len, &err);
  if (st != AW_OK) {
    /* A frame number the format cannot hold is the only refusal expected here. */
    aw_fuzz_require(st == AW_ERR_RANGE || st == AW_ERR_UNSUPPORTED);
    free(pos);
    free(labels);
    return;
  }
  AwC3dFile *b = NULL;
  st = aw_c3d_read_buffer(buf, len, "round-trip.c3d", &b, &err);
  if (st != AW_OK)
    aw_fuzz_fail("the writer's own file does not read back: %s", err.message);
  aw_fuzz_require(b->n_points == f->n_points && b->n_frames == f->n_frames);
  for (size_t k = 0; k < total; k++) {
    for (int a = 0; a < 3; a++) {
      double x = pos[k][a], y = b->pos[k][a];
      if (isnan(x))
        aw_fuzz_require(isnan(y));
      else if (!(fabs(x - y) <= fabs(x) * 0x1p-23 + 1e-300))
        aw_fuzz_fail("point %zu axis %d: wrote %.17g, read %.17g", k, a, x, y);
    }
  }
  aw_c3d_file_free(b);
  free(buf);
  free(pos);
  free(labels);
}

int
LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
  AwC3dFile *f = NULL;
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_c3d_read_buffer(data, size, "fuzz.c3d", &f, &err);
  if (st != AW_OK) {
    aw_fuzz_require(f == NULL);
    aw_fuzz_check_error(st, &err);
    return 0;
  }
  aw_fuzz_require(f != NULL);
  check_file(f);
  check_marker(f, false);
  check_marker(f, true);
  round_trip(f);
  aw_c3d_file_free(f);
  return 0;
}
