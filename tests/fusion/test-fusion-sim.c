/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Fusion against the simulator's truth on a test-sized set of seeded swings (the full 60+
 * belong to `arcwise bench fuse`): the acceptance floors of issue 4 must hold. */
#include "testutil.h"
#include "simscore.h"

#include <stdio.h>
#include <string.h>

static int
cmp_d(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

int
main(int argc, char **argv)
{
  int n = argc > 1 ? atoi(argv[1]) : 9;
  int verbose = getenv("AW_VERBOSE") != NULL;
  double *rm = calloc((size_t)n, sizeof *rm), *ro = calloc((size_t)n, sizeof *ro),
         *rb = calloc((size_t)n, sizeof *rb), *oe = calloc((size_t)n, sizeof *oe),
         *cv = calloc((size_t)n, sizeof *cv);
  int no = 0;
  for (int i = 0; i < n; i++) {
    AwSimConfig cfg;
    AwSimLevel lv = (AwSimLevel)(i % 3);
    aw_sim_config_default(&cfg, lv);
    cfg.seed = 1000 + (uint64_t)i;
    AwSim *sim = NULL;
    AwError err;
    AW_CHECK(aw_sim_new(&cfg, &sim, &err) == AW_OK);
    if (!sim) continue;
    AwFusionSettings s;
    aw_fusion_settings_default(&s);
    AwFusedPath *p = NULL;
    AwStatus st = aw_fuse(aw_sim_imu(sim), aw_sim_depth(sim), &s, &p, &err);
    if (st != AW_OK) {
      char buf[700];
      fprintf(stderr, "seed %d: %s\n", i, aw_error_format(&err, buf, sizeof buf));
      AW_CHECK(st == AW_OK);
      aw_sim_free(sim);
      continue;
    }
    AwSimScore sc;
    aw_simscore(sim, p, &sc);
    rm[i] = sc.rmse_motion_m;
    oe[i] = fabs(sc.offset_err_s);
    cv[i] = sc.coverage2;
    if (sc.n_occl > 0) { ro[no] = sc.rmse_occl_m; rb[no] = sc.base_occl_m; no++; }
    if (verbose)
      fprintf(stderr, "%2d %-6s rmse %.4f occl %.4f base %.4f off_err %+.5f cov %.3f nis %.2f "
              "used %zu rej %zu rec %zu zupt %zu jerk %.3g\n", i, aw_sim_level_name(lv),
              sc.rmse_motion_m, sc.rmse_occl_m, sc.base_occl_m, sc.offset_err_s, sc.coverage2,
              p->report.cam_nis_mean, p->report.cam_frames_used, p->report.cam_frames_rejected,
              p->report.gate_recoveries, p->report.zupt_samples, p->report.motion_jerk_psd_m2_s5);
    aw_fused_path_free(p);
    aw_sim_free(sim);
  }
  qsort(rm, (size_t)n, sizeof *rm, cmp_d);
  qsort(oe, (size_t)n, sizeof *oe, cmp_d);
  double med_rm = rm[n / 2], p90 = rm[(int)floor(0.9 * (n - 1))], med_oe = oe[n / 2];
  double covm = 0;
  for (int i = 0; i < n; i++) covm += cv[i] / n;
  double ratio_sum = 0;
  for (int i = 0; i < no; i++) ratio_sum += ro[i] / rb[i];
  qsort(ro, (size_t)no, sizeof *ro, cmp_d);
  qsort(rb, (size_t)no, sizeof *rb, cmp_d);
  double med_ro = no ? ro[no / 2] : 0, med_rb = no ? rb[no / 2] : 1;
  fprintf(stderr, "swings %d: motion RMSE median %.4f m, p90 %.4f m; occluded median %.4f m "
          "(baseline %.4f m, ratio %.3f); clock offset error median %.5f s; 2-sigma coverage %.3f\n",
          n, med_rm, p90, med_ro, med_rb, med_ro / med_rb, med_oe, covm);
  /* Floors of issue 4 (acceptance of the fusion). */
  AW_CHECK(med_rm <= 0.015);
  AW_CHECK(p90 <= 0.03);
  AW_CHECK(no == 0 || med_ro <= 0.02);
  AW_CHECK(no == 0 || med_ro <= 0.15 * med_rb);
  AW_CHECK(med_oe <= 0.002);
  AW_CHECK(covm >= 0.90 && covm <= 0.99);
  free(rm); free(ro); free(rb); free(oe); free(cv);
  return AW_TEST_END();
}
