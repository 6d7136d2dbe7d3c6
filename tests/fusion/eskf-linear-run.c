/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Runs the engine's error-state filter and smoother (aw_fusion_eskf_run_ext with the attitude and
 * the clock known) on a case read from a text file and prints the smoothed keypoint path, for
 * tests/fusion/test-eskf-reference.py, which compares it with a textbook Kalman filter and
 * Rauch-Tung-Striebel smoother written in numpy.
 *
 * Input (whitespace separated):
 *   n_imu n_cam dt_imu_s dt_cam_s
 *   q_cam_body (w x y z)  g_cam_m_s2 (3)
 *   accel_noise_density accel_bias_walk accel_bias_init cam_sigma_xy cam_sigma_z_coeff
 *   zupt_sigma lever_arm_sigma
 *   n_imu lines: t_s fx fy fz still
 *   n_cam lines: t_s x y z
 * Output: n_imu lines "px py pz vx vy vz sx sy sz" (%.17g), then "ba x y z" at sample n/2. */
#include "fusion-internal.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int
main(int argc, char **argv)
{
  if (argc != 2) { fprintf(stderr, "usage: %s CASE\n", argv[0]); return 2; }
  FILE *fp = fopen(argv[1], "r");
  if (!fp) { perror(argv[1]); return 2; }
  size_t n, nc;
  double dti, dtc, an, abw, abi, sxy, szc, zs, ls;
  AwCalib cal;
  memset(&cal, 0, sizeof cal);
  if (fscanf(fp, "%zu %zu %lf %lf", &n, &nc, &dti, &dtc) != 4 ||
      fscanf(fp, "%lf %lf %lf %lf %lf %lf %lf", &cal.q_cam_body0[0], &cal.q_cam_body0[1],
             &cal.q_cam_body0[2], &cal.q_cam_body0[3], &cal.g_cam_m_s2[0], &cal.g_cam_m_s2[1],
             &cal.g_cam_m_s2[2]) != 7 ||
      fscanf(fp, "%lf %lf %lf %lf %lf %lf %lf", &an, &abw, &abi, &sxy, &szc, &zs, &ls) != 7 ||
      n < 2 || nc < 1 || n > 1000000 || nc > 1000000) {
    fprintf(stderr, "%s: bad header\n", argv[1]);
    return 2;
  }
  double *t = malloc(sizeof *t * n), *tc = malloc(sizeof *tc * nc);
  double (*f)[3] = malloc(sizeof *f * n), (*w)[3] = calloc(n, sizeof *w), (*pc)[3] = malloc(sizeof *pc * nc);
  unsigned char *still = calloc(n, 1), *zero = calloc(n, 1), *valid = malloc(nc);
  if (!t || !tc || !f || !w || !pc || !still || !zero || !valid) return 2;
  for (size_t i = 0; i < n; i++) {
    int st;
    if (fscanf(fp, "%lf %lf %lf %lf %d", &t[i], &f[i][0], &f[i][1], &f[i][2], &st) != 5) {
      fprintf(stderr, "%s: bad IMU line %zu\n", argv[1], i + 1);
      return 2;
    }
    still[i] = st != 0;
  }
  for (size_t k = 0; k < nc; k++) {
    if (fscanf(fp, "%lf %lf %lf %lf", &tc[k], &pc[k][0], &pc[k][1], &pc[k][2]) != 4) {
      fprintf(stderr, "%s: bad camera line %zu\n", argv[1], k + 1);
      return 2;
    }
    valid[k] = 1;
  }
  fclose(fp);

  AwFusionSettings s;
  aw_fusion_settings_default(&s);
  s.accel_noise_density_m_s2_rthz = an;
  s.accel_bias_walk_m_s3_rthz = abw;
  s.accel_bias_init_m_s2 = abi;
  s.cam_sigma_xy_m = sxy;
  s.cam_sigma_z_coeff_per_m = szc;
  s.zupt_sigma_m_s = zs;
  s.lever_arm_sigma_m = ls;
  s.accel_scale_sigma = 0;       /* noise that depends on the state would make it non-linear */
  s.gyro_scale_sigma = 0;
  s.gyro_noise_density_rad_s_rthz = 0;
  s.gyro_bias_walk_rad_s2_rthz = 0;
  s.gyro_bias_init_rad_s = 0;
  s.gate_chi2 = 1e300;           /* every frame accepted: one pass */
  memset(s.lever_arm_body_m, 0, sizeof s.lever_arm_body_m);

  AwImuPrep imu;
  memset(&imu, 0, sizeof imu);
  imu.n = n;
  imu.t_s = t;
  imu.f = (const double (*)[3])f;
  imu.w = (const double (*)[3])w;
  imu.dt_nom_s = dti;
  imu.sat_acc = zero;
  imu.sat_gyr = zero;
  imu.still = still;
  AwCamPrep cam;
  memset(&cam, 0, sizeof cam);
  cam.n = nc;
  cam.t_s = tc;
  cam.pos_m = (const double (*)[3])pc;
  cam.valid = valid;
  cam.n_valid = nc;
  cam.dt_nom_s = dtc;
  cam.noise_scale[0] = cam.noise_scale[1] = 1;

  AwFusedPath *path = aw_fused_path_new(n);
  if (!path) return 2;
  AwError err;
  AwStatus st = aw_fusion_eskf_run_ext(&imu, t, &cam, &s, 9.80665, &cal,
                                       AW_ESKF_FREEZE_ATTITUDE | AW_ESKF_FREEZE_CLOCK, path, &err);
  if (st != AW_OK) { fprintf(stderr, "filter: %s\n", err.message); return 1; }
  for (size_t i = 0; i < n; i++)
    printf("%.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g %.17g\n", path->pos_cam_m[i][0],
           path->pos_cam_m[i][1], path->pos_cam_m[i][2], path->vel_cam_m_s[i][0],
           path->vel_cam_m_s[i][1], path->vel_cam_m_s[i][2], path->pos_sigma_cam_m[i][0],
           path->pos_sigma_cam_m[i][1], path->pos_sigma_cam_m[i][2]);
  const double *ba = path->report.accel_bias_m_s2;
  printf("ba %.17g %.17g %.17g\n", ba[0], ba[1], ba[2]);
  aw_fused_path_free(path);
  free(t); free(tc); free(f); free(w); free(pc); free(still); free(zero); free(valid);
  return 0;
}
