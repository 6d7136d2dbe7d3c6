/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Reads the C3D sample files in ../shared/data/c3d (from pyomeca/ezc3d-testFiles and the
 * c3d.org sample set 16) and checks the values their README.md and REFERENCES.md section 4
 * give, which were read with an independent reader written to the c3d.org specification. */
#include "testutil.h"

#include "arcwise/c3d.h"

#include <string.h>
#include <unistd.h>

static char path_buf[1024];

static const char *
sample(const char *name)
{
  snprintf(path_buf, sizeof path_buf, "%s/data/c3d/%s", aw_test_shared_dir(), name);
  return path_buf;
}

static AwC3dFile *
load(const char *name)
{
  AwC3dFile *f = NULL;
  AwError e;
  aw_error_clear(&e);
  AwStatus st = aw_c3d_read_file(sample(name), &f, &e);
  if (st != AW_OK) {
    char b[1200];
    fprintf(stderr, "%s\n", aw_error_format(&e, b, sizeof b));
  }
  AW_CHECK(st == AW_OK && f != NULL);
  return f;
}

static double
rel(double a, double b)
{
  return fabs(a - b) / fabs(b);
}

int
main(void)
{
  if (access(sample("FP_Type3.c3d"), R_OK) != 0)
    AW_TEST_SKIP("../shared/data/c3d is absent");

  /* FP_Type3: Intel float, 34 points, 250 Hz, 2 frames (header 1166-1167), 16 analog channels
   * at 4 samples per frame; frame 1 point 1 LPSIS = (397.64655, 177.69586, 1175.88293) mm. */
  AwC3dFile *f = load("FP_Type3.c3d");
  if (f) {
    AW_CHECK(f->processor == AW_C3D_INTEL);
    AW_CHECK(f->float_data);
    AW_CHECK(f->point_scale < 0);
    AW_CHECK(f->n_points == 34);
    AW_CHECK(f->n_frames == 2);
    AW_CHECK(f->first_frame == 1166);
    AW_CHECK_NEAR(f->point_rate_hz, 250.0, 1e-9);
    AW_CHECK(f->analog_words_per_frame == 64);
    AW_CHECK(f->data_start_block == 15);
    AW_CHECK(f->n_param_blocks == 13);
    AW_CHECK(strcmp(f->labels[0], "LPSIS") == 0);
    AW_CHECK(strcmp(f->units, "mm") == 0);
    AW_CHECK_NEAR(f->pos[0][0], 397.64655, 1e-3);
    AW_CHECK_NEAR(f->pos[0][1], 177.69586, 1e-3);
    AW_CHECK_NEAR(f->pos[0][2], 1175.88293, 1e-3);
    /* 4th word 7.0: residual 7 x |scale|, no camera bits. */
    AW_CHECK_NEAR(f->residual[0], 7.0 * fabs(f->point_scale), 1e-6);
    const char *groups[] = { "ANALOG", "FORCE_PLATFORM", "MANUFACTURER", "POINT", "SEG" };
    for (size_t i = 0; i < 5; i++) {
      bool seen = false;
      for (size_t k = 0; k < f->n_params; k++)
        seen = seen || strcmp(f->params[k].group, groups[i]) == 0;
      AW_CHECK(seen);
    }
    AwMarkerTrajectory *m = NULL;
    AW_CHECK(aw_c3d_marker_trajectory(f, "lpsis", NULL, &m, NULL) == AW_OK);
    if (m) {
      AW_CHECK(m->n == 2 && m->units_declared);
      AW_CHECK_NEAR(m->pos_m[0][2], 1.17588293, 1e-6);
      AW_CHECK_NEAR(m->t_s[0], 1165.0 / 250.0, 1e-12);
      AW_CHECK_NEAR(m->t_s[1] - m->t_s[0], 1.0 / 250.0, 1e-12);
    }
    aw_marker_trajectory_free(m);
    AwError e;
    aw_error_clear(&e);
    m = NULL;
    AW_CHECK(aw_c3d_marker_trajectory(f, "NOPE", NULL, &m, &e) == AW_ERR_RANGE && m == NULL);
    AW_CHECK(strstr(e.message, "LPSIS") != NULL);
  }
  aw_c3d_file_free(f);

  /* read_NOTworking2: DEC processor, int16 data, scale 0.1449003, 23 points, 25 Hz, 670 frames
   * (header 0-669); header DATA_START 5, POINT:DATA_START 0; LFHD frame 1 =
   * (-52.164, 68.393, 1763.002) mm. */
  f = load("read_NOTworking2.c3d");
  if (f) {
    AW_CHECK(f->processor == AW_C3D_DEC);
    AW_CHECK(!f->float_data);
    AW_CHECK(rel(f->point_scale, 0.1449003) < 1e-6);
    AW_CHECK(f->n_points == 23);
    AW_CHECK(f->n_frames == 670);
    AW_CHECK_NEAR(f->point_rate_hz, 25.0, 1e-6);
    AW_CHECK(f->data_start_block == 5);
    AW_CHECK(strstr(f->notes, "DATA_START") != NULL);
    AW_CHECK(strcmp(f->labels[0], "LFHD") == 0);
    /* Values given to 3 decimals; the int16 quantum is 0.145 mm. */
    AW_CHECK_NEAR(f->pos[0][0], -52.164, 1e-3);
    AW_CHECK_NEAR(f->pos[0][1], 68.393, 1e-3);
    AW_CHECK_NEAR(f->pos[0][2], 1763.002, 1e-3);
    /* The data exactly fills the file (REFERENCES.md section 4). */
    size_t frame_bytes = (4 * 23) * 2;
    AW_CHECK((f->data_start_block - 1) * 512 + 670 * frame_bytes == 125328);
  }
  aw_c3d_file_free(f);

  /* FP_Type1: Intel float, 22 points at 100 Hz, frames 1-634, units m; sacrum frame 1 =
   * (-0.0215741, 0.9836841, -0.0482828) m; 24 analog channels at 200 Hz = 48 words. */
  f = load("FP_Type1.c3d");
  if (f) {
    AW_CHECK(f->processor == AW_C3D_INTEL && f->float_data);
    AW_CHECK(f->n_points == 22 && f->n_frames == 634 && f->first_frame == 1);
    AW_CHECK_NEAR(f->point_rate_hz, 100.0, 1e-9);
    AW_CHECK(f->analog_words_per_frame == 48);
    AW_CHECK(f->data_start_block == 6);
    AW_CHECK(strcmp(f->units, "m") == 0);
    AwMarkerTrajectory *m = NULL;
    AW_CHECK(aw_c3d_marker_trajectory(f, "sacrum", NULL, &m, NULL) == AW_OK);
    if (m) {
      AW_CHECK(strcmp(m->units, "m") == 0);
      AW_CHECK_NEAR(m->pos_m[0][0], -0.0215741, 1e-6);
      AW_CHECK_NEAR(m->pos_m[0][1], 0.9836841, 1e-6);
      AW_CHECK_NEAR(m->pos_m[0][2], -0.0482828, 1e-6);
      AW_CHECK(m->n == 634);
    }
    aw_marker_trajectory_free(m);
  }
  aw_c3d_file_free(f);

  /* simi golf (c3d.org sample 16): Intel float, 21 points at 200 Hz, 137 frames, no analog;
   * every residual -1 and no POINT:UNITS. The reader must report both and still offer the
   * coordinates. */
  f = load("simi_golf_invalid_residuals.c3d");
  if (f) {
    AW_CHECK(f->processor == AW_C3D_INTEL && f->float_data);
    AW_CHECK(f->n_points == 21 && f->n_frames == 137);
    AW_CHECK_NEAR(f->point_rate_hz, 200.0, 1e-9);
    AW_CHECK(f->analog_words_per_frame == 0);
    AW_CHECK(f->units[0] == '\0');
    AW_CHECK(f->n_invalid == 21 * 137);
    AW_CHECK(strstr(f->notes, "invalid") != NULL);
    AwError e;
    aw_error_clear(&e);
    AwMarkerTrajectory *m = NULL;
    AW_CHECK(aw_c3d_marker_trajectory(f, NULL, NULL, &m, &e) == AW_ERR_UNITS && m == NULL);
    AwMarkerOptions o;
    aw_marker_options_default(&o);
    o.units_if_missing = "m";
    aw_error_clear(&e);
    AW_CHECK(aw_c3d_marker_trajectory(f, NULL, &o, &m, &e) == AW_ERR_EMPTY && m == NULL);
    AW_CHECK(strstr(e.message, "flagged invalid") != NULL);
    o.keep_flagged_invalid = true;
    AW_CHECK(aw_c3d_marker_trajectory(f, NULL, &o, &m, &e) == AW_OK && m != NULL);
    if (m) {
      AW_CHECK(m->used_flagged_invalid && !m->units_declared);
      /* "the values look like metres": a marker on a golfer stays within a few metres. */
      size_t finite = 0;
      for (size_t i = 0; i < m->n; i++)
        if (isfinite(m->pos_m[i][0])) {
          finite++;
          AW_CHECK(fabs(m->pos_m[i][0]) < 5 && fabs(m->pos_m[i][1]) < 5 &&
                   fabs(m->pos_m[i][2]) < 5);
        }
      AW_CHECK(finite > 0);
    }
    aw_marker_trajectory_free(m);
  }
  aw_c3d_file_free(f);
  return AW_TEST_END();
}
