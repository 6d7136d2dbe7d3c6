/* SPDX-License-Identifier: GPL-3.0-or-later */
/* C3D writer -> reader round trips in every processor format and both data forms (c3d.org:
 * int16 coordinates are stored as value / POINT:SCALE, so they come back within scale/2; float
 * coordinates are float32; a negative 4th word marks an invalid point), plus files of our own
 * that are truncated, have 0 points, or whose header and parameters disagree. */
#include "testutil.h"

#include "arcwise/c3d.h"

#include <stdint.h>
#include <string.h>
#include <unistd.h>

#define NP 3
#define NF 50

static double pos[NP * NF][3];
static double res[NP * NF];

static void
fill(void)
{
  for (size_t f = 0; f < NF; f++)
    for (size_t p = 0; p < NP; p++) {
      size_t k = f * NP + p;
      double t = (double)f / 120.0;
      pos[k][0] = 1000.0 * sin(6.0 * t + (double)p) + 3.25;
      pos[k][1] = -750.0 * cos(4.0 * t) + 100.0 * (double)p;
      pos[k][2] = 1200.0 + 0.001 * (double)f;
      res[k] = 0.5 + 0.01 * (double)(k % 7);
    }
  /* Invalid samples: NaN coordinates and a negative residual. */
  pos[4][0] = pos[4][1] = pos[4][2] = NAN;
  res[10] = -1;
}

static const char *const labels[NP] = { "RWRA", "RWRB", "CLUBHEAD" };

static AwC3dWriteSpec
make_spec(bool float_data, AwC3dProcessor proc)
{
  AwC3dWriteSpec s = {
    .n_points = NP, .n_frames = NF, .rate_hz = 120.0, .first_frame = 1, .labels = labels,
    .units = "mm", .pos = pos, .residual = res, .float_data = float_data, .processor = proc,
  };
  return s;
}

static void
roundtrip(bool float_data, AwC3dProcessor proc)
{
  AwC3dWriteSpec s = make_spec(float_data, proc);
  uint8_t *buf = NULL;
  size_t len = 0;
  AW_CHECK(aw_c3d_write_buffer(&s, &buf, &len, NULL) == AW_OK);
  AW_CHECK(len % 512 == 0);
  AwC3dFile *f = NULL;
  AwError e;
  aw_error_clear(&e);
  AW_CHECK(aw_c3d_read_buffer(buf, len, "mem", &f, &e) == AW_OK);
  if (f == NULL) {
    fprintf(stderr, "%s\n", e.message);
    free(buf);
    return;
  }
  AW_CHECK(f->processor == proc);
  AW_CHECK(f->float_data == float_data);
  AW_CHECK(f->n_points == NP && f->n_frames == NF && f->first_frame == 1);
  AW_CHECK_NEAR(f->point_rate_hz, 120.0, 1e-9);
  AW_CHECK(strcmp(f->labels[2], "CLUBHEAD") == 0 && strcmp(f->units, "mm") == 0);
  AW_CHECK(f->notes[0] == '\0');
  double scale = fabs(f->point_scale);
  /* float32 has a 24-bit significand: relative error <= 2^-24 (IEEE 754); a VAX F-float has
   * the same precision. */
  for (size_t k = 0; k < NP * NF; k++) {
    bool invalid = k == 4 || k == 10;
    AW_CHECK(invalid == (f->residual[k] < 0));
    if (invalid) {
      AW_CHECK(isnan(f->pos[k][0]) && isnan(f->pos[k][1]) && isnan(f->pos[k][2]));
      continue;
    }
    for (int a = 0; a < 3; a++) {
      double tol = float_data ? fabs(pos[k][a]) * 0x1p-24 : scale / 2 * (1 + 1e-9);
      AW_CHECK_NEAR(f->pos[k][a], pos[k][a], tol);
    }
    /* The residual is stored in steps of |scale| (c3d.org, "3D Data"). */
    AW_CHECK_NEAR(f->residual[k], res[k], scale / 2 * (1 + 1e-6) + 1e-6);
  }
  AW_CHECK(f->n_invalid == 2);
  size_t data_end = (f->data_start_block - 1) * 512 + NF * NP * 4 * (float_data ? 4 : 2);
  aw_c3d_file_free(f);

  /* Every prefix that cuts into the data is an error, never a read past the end (ASan
   * watches this); cuts in the padding of the last block leave the data whole. */
  for (size_t cut = 0; cut < len; cut += (cut < 1200 ? 1 : 37)) {
    uint8_t *part = malloc(cut ? cut : 1);
    memcpy(part, buf, cut);
    f = NULL;
    AwStatus st = aw_c3d_read_buffer(part, cut, "cut", &f, NULL);
    if (cut < data_end)
      AW_CHECK(st != AW_OK && f == NULL);
    else
      AW_CHECK(st == AW_OK && f != NULL && f->n_frames == NF);
    aw_c3d_file_free(f);
    free(part);
  }
  free(buf);
}

static void
header_param_disagree(void)
{
  AwC3dWriteSpec s = make_spec(false, AW_C3D_INTEL);
  uint8_t *buf = NULL;
  size_t len = 0;
  AW_CHECK(aw_c3d_write_buffer(&s, &buf, &len, NULL) == AW_OK);
  /* Header word 9 (bytes 16-17) points past the end: the parameter's block must be used. */
  unsigned good = buf[16] | buf[17] << 8;
  buf[16] = 0xff;
  buf[17] = 0x7f;
  AwC3dFile *f = NULL;
  AW_CHECK(aw_c3d_read_buffer(buf, len, "mem", &f, NULL) == AW_OK);
  if (f) {
    AW_CHECK(f->data_start_block == good);
    AW_CHECK(strstr(f->notes, "DATA_START") != NULL);
    AW_CHECK_NEAR(f->pos[1][0], pos[1][0], fabs(f->point_scale));
  }
  aw_c3d_file_free(f);
  /* Header frame count larger than the data: the parameter's count fits and wins. */
  buf[16] = (uint8_t)good;
  buf[17] = (uint8_t)(good >> 8);
  buf[8] = 0x10;
  buf[9] = 0x27; /* last frame 10000 */
  f = NULL;
  AW_CHECK(aw_c3d_read_buffer(buf, len, "mem", &f, NULL) == AW_OK);
  if (f)
    AW_CHECK(f->n_frames == NF);
  aw_c3d_file_free(f);
  /* A wrong key byte is not a C3D file. */
  buf[1] = 0x51;
  AwError e;
  aw_error_clear(&e);
  f = NULL;
  AW_CHECK(aw_c3d_read_buffer(buf, len, "mem", &f, &e) == AW_ERR_PARSE && f == NULL);
  AW_CHECK(strstr(e.message, "not a C3D file") != NULL);
  free(buf);
}

/* Corrupted bytes in the header and parameter section: the reader may accept or reject the
 * file but must never read outside the buffer (ASan/UBSan builds check this). The generator is
 * the minimal-standard LCG (Park and Miller 1988), seeded, so failures repeat. */
static void
corrupted(void)
{
  AwC3dWriteSpec s = make_spec(false, AW_C3D_INTEL);
  uint8_t *buf = NULL;
  size_t len = 0;
  AW_CHECK(aw_c3d_write_buffer(&s, &buf, &len, NULL) == AW_OK);
  uint8_t *copy = malloc(len);
  uint64_t x = 12345;
  size_t accepted = 0;
  for (int trial = 0; trial < 3000; trial++) {
    memcpy(copy, buf, len);
    for (int k = 0; k < 3; k++) {
      x = x * 48271 % 2147483647;
      size_t at = (size_t)(x % 1536);
      x = x * 48271 % 2147483647;
      copy[at] = (uint8_t)x;
    }
    AwC3dFile *f = NULL;
    if (aw_c3d_read_buffer(copy, len, "fuzz", &f, NULL) == AW_OK) {
      accepted++;
      AW_CHECK(f != NULL);
    } else {
      AW_CHECK(f == NULL);
    }
    aw_c3d_file_free(f);
  }
  AW_CHECK(accepted > 0); /* most single-byte changes hit padding or descriptions */
  free(copy);
  free(buf);
}

static void
zero_points(void)
{
  AwC3dWriteSpec s = { .n_points = 0, .n_frames = 340, .rate_hz = 85.0, .first_frame = 1,
                       .units = "mm", .processor = AW_C3D_INTEL, .float_data = true };
  uint8_t *buf = NULL;
  size_t len = 0;
  AW_CHECK(aw_c3d_write_buffer(&s, &buf, &len, NULL) == AW_OK);
  AwC3dFile *f = NULL;
  AW_CHECK(aw_c3d_read_buffer(buf, len, "mem", &f, NULL) == AW_OK);
  if (f) {
    AW_CHECK(f->n_points == 0 && f->n_frames == 340);
    AwError e;
    aw_error_clear(&e);
    AwMarkerTrajectory *m = NULL;
    AW_CHECK(aw_c3d_marker_trajectory(f, NULL, NULL, &m, &e) == AW_ERR_EMPTY && m == NULL);
  }
  aw_c3d_file_free(f);
  free(buf);
}

/* A fused path written as C3D: resampled to a uniform rate, rotated into the gravity frame,
 * read back as a marker trajectory in metres. */
static void
fused_path(void)
{
  size_t n = 201;
  AwFusedPath p;
  memset(&p, 0, sizeof p);
  p.n = n;
  p.t_s = calloc(n, sizeof *p.t_s);
  p.pos_cam_m = calloc(n, sizeof *p.pos_cam_m);
  p.pos_sigma_cam_m = calloc(n, sizeof *p.pos_sigma_cam_m);
  for (size_t i = 0; i < n; i++) {
    p.t_s[i] = 10.0 + 0.01 * (double)i; /* 100 Hz on the camera clock */
    p.pos_cam_m[i][0] = 0.3 * sin(3.0 * p.t_s[i]);
    p.pos_cam_m[i][1] = -0.2 + 0.1 * (double)i / (double)n;
    p.pos_cam_m[i][2] = 2.5;
    p.pos_sigma_cam_m[i][0] = p.pos_sigma_cam_m[i][1] = p.pos_sigma_cam_m[i][2] = 0.004;
  }
  /* Camera looking horizontally: grav = (x_cam, z_cam, -y_cam), i.e. a rotation of +90 deg
   * about x taking grav to cam: q_cam_grav = (cos 45, sin 45, 0, 0) maps grav z-up to cam -y. */
  p.report.q_cam_grav[0] = sqrt(0.5);
  p.report.q_cam_grav[1] = sqrt(0.5);
  char path[] = "/tmp/aw-c3d-test-XXXXXX";
  int fd = mkstemp(path);
  AW_CHECK(fd >= 0);
  close(fd);
  AwC3dPathOptions o;
  aw_c3d_path_options_default(&o);
  AwError e;
  aw_error_clear(&e);
  /* The file exists: refused without overwrite. */
  AW_CHECK(aw_c3d_write_fused_path(path, &p, &o, false, &e) == AW_ERR_IO);
  AW_CHECK(strstr(e.message, "exists") != NULL);
  for (int form = 0; form < 2; form++) {
    o.float_data = form == 1;
    AW_CHECK(aw_c3d_write_fused_path(path, &p, &o, true, &e) == AW_OK);
    AwC3dFile *f = NULL;
    AW_CHECK(aw_c3d_read_file(path, &f, &e) == AW_OK);
    AwMarkerTrajectory *m = NULL;
    AW_CHECK(aw_c3d_marker_trajectory(f, "HAND", NULL, &m, &e) == AW_OK);
    if (m) {
      AW_CHECK(m->n == n);
      AW_CHECK_NEAR(m->rate_hz, 100.0, 1e-6);
      double tol = o.float_data ? 1e-6 : fabs(f->point_scale) * 1e-3 / 2 + 1e-9;
      for (size_t i = 0; i < n; i += 10) {
        /* grav = R^T cam for this rotation: (x, z, -y). */
        AW_CHECK_NEAR(m->pos_m[i][0], p.pos_cam_m[i][0], tol);
        AW_CHECK_NEAR(m->pos_m[i][1], p.pos_cam_m[i][2], tol);
        AW_CHECK_NEAR(m->pos_m[i][2], -p.pos_cam_m[i][1], tol);
      }
      /* sigma norm sqrt(3) x 4 mm as the residual, in steps of |scale| mm. */
      AW_CHECK_NEAR(f->residual[0], sqrt(3.0) * 4.0, fabs(f->point_scale) / 2 + 1e-6);
    }
    aw_marker_trajectory_free(m);
    aw_c3d_file_free(f);
  }
  unlink(path);
  free(p.t_s);
  free(p.pos_cam_m);
  free(p.pos_sigma_cam_m);
}

int
main(void)
{
  fill();
  const AwC3dProcessor procs[] = { AW_C3D_INTEL, AW_C3D_DEC, AW_C3D_MIPS };
  for (int i = 0; i < 3; i++) {
    roundtrip(false, procs[i]);
    roundtrip(true, procs[i]);
  }
  header_param_disagree();
  corrupted();
  zero_points();
  fused_path();
  return AW_TEST_END();
}
