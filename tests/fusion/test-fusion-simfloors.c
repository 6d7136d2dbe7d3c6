/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The simulator acceptance floors of the fusion (issue 4, "Acceptance"), asserted on seeded
 * swings the benchmark does not use (`arcwise bench fuse` takes seeds 5000 and up, this test
 * 9000 and up). The reference is the simulator's own truth path and true clock offset.
 *
 * Usage: test-fusion-simfloors LEVELS N [SIGMA_SCALE], LEVELS a comma list of easy, normal,
 * hard; N swings cycling through the levels. Floors, from the issue, never fitted to these seeds:
 *   position RMSE over the motion: median <= 1.5 cm, 90th percentile <= 3 cm;
 *   occluded windows: median <= 2 cm and at most 0.15 of the depth-only baseline's median;
 *   clock offset error: median <= 2 ms;
 *   truth inside the reported +-2 sigma band: 90 to 99 % of samples per axis (a Gaussian puts
 *   95.45 % inside +-2 sigma, standard normal table, e.g. Abramowitz & Stegun 26.2).
 * And the held finish pose, in clear view after the swing: RMSE median <= 1 cm over all swings
 * and over the hard ones (our floor, from the camera's noise; see below).
 * And a consistency check in the spirit of Bar-Shalom, Li & Kirubarajan (2001, section 5.4: a
 * consistent estimator's normalised errors follow the distribution its covariance claims):
 * inside +-1 sigma 55 to 85 % (Gaussian 68.27 %, same table; the margin for the heavier tails
 * of real errors is our choice, not a published figure), so a sigma inflated until everything
 * is covered fails as well as one too small.
 * SIGMA_SCALE (default 1) multiplies every reported sigma and checks the coverage bands alone:
 * meson runs it with 0.5 as a test that must fail, so that the coverage check is shown to catch
 * an overconfident sigma on these swings. */
#include "testutil.h"

#include "arcwise/fusion.h"
#include "arcwise/sim.h"
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
  const char *levels = argc > 1 ? argv[1] : "easy,normal,hard";
  int n = argc > 2 ? atoi(argv[2]) : 30;
  double sig_scale = argc > 3 ? atof(argv[3]) : 1.0;
  AwSimLevel lv[3];
  int nl = 0;
  if (strstr(levels, "easy")) lv[nl++] = AW_SIM_EASY;
  if (strstr(levels, "normal")) lv[nl++] = AW_SIM_NORMAL;
  if (strstr(levels, "hard")) lv[nl++] = AW_SIM_HARD;
  if (nl == 0 || n < 3) {
    fprintf(stderr, "usage: %s LEVELS N\n", argv[0]);
    return 2;
  }
  double *rm = calloc((size_t)n, sizeof *rm), *ro = calloc((size_t)n, sizeof *ro),
         *rb = calloc((size_t)n, sizeof *rb), *oe = calloc((size_t)n, sizeof *oe);
  if (!rm || !ro || !rb || !oe) return 1;
  double *rf = calloc((size_t)n, sizeof *rf), *rfh = calloc((size_t)n, sizeof *rfh);
  if (!rf || !rfh) return 1;
  int m = 0, no = 0, fails = 0, nf = 0, nfh = 0;
  double cov = 0, cov1 = 0;
  for (int i = 0; i < n; i++) {
    AwSimLevel L = lv[i % nl];
    AwSimConfig cfg;
    aw_sim_config_default(&cfg, L);
    cfg.seed = 9000 + (uint64_t)i;
    AwSim *sim = NULL;
    AwError err;
    if (aw_sim_new(&cfg, &sim, &err) != AW_OK) {
      fprintf(stderr, "simulator: %s\n", err.message);
      fails++;
      continue;
    }
    AwFusedPath *p = NULL;
    if (aw_fuse(aw_sim_imu(sim), aw_sim_depth(sim), NULL, &p, &err) != AW_OK) {
      fprintf(stderr, "swing %d (%s): %s\n", i, aw_sim_level_name(L), err.message);
      fails++;
      aw_sim_free(sim);
      continue;
    }
    for (size_t k = 0; k < p->n; k++)
      for (int a = 0; a < 3; a++) p->pos_sigma_cam_m[k][a] *= sig_scale;
    AwSimScore sc;
    aw_simscore(sim, p, &sc);
    fprintf(stderr, "swing %2d %-6s RMSE %.2f cm, occluded %.2f cm (baseline %.2f), clock %+.2f ms, "
            "2-sigma %.1f %%, finish %.2f cm\n", i, aw_sim_level_name(L), 100 * sc.rmse_motion_m,
            100 * sc.rmse_occl_m, 100 * sc.base_occl_m, 1e3 * sc.offset_err_s, 100 * sc.coverage2,
            100 * sc.rmse_finish_m);
    if (isfinite(sc.rmse_finish_m)) {
      rf[nf++] = sc.rmse_finish_m;
      if (L == AW_SIM_HARD) rfh[nfh++] = sc.rmse_finish_m;
    }
    rm[m] = sc.rmse_motion_m;
    oe[m] = fabs(sc.offset_err_s);
    cov += sc.coverage2;
    cov1 += sc.coverage1;
    m++;
    if (sc.n_occl) { ro[no] = sc.rmse_occl_m; rb[no] = sc.base_occl_m; no++; }
    aw_fused_path_free(p);
    aw_sim_free(sim);
  }
  AW_CHECK(fails == 0);
  AW_CHECK(m >= 3 && no >= 3);
  /* A hard swing whose filter once moved the lever arm to 28 cm (truth 5 cm), bending the path
   * 6 cm off the camera while the player stood still at address: the address must be within
   * 2 cm (the camera alone: millimetres after averaging, see the finish below) and the reported
   * lever arm within the prior's 99.9 % gate of the truth (chi-square 16.27 at 3 cm per axis: 12 cm). */
  if (strstr(levels, "hard") && sig_scale == 1.0) {
    AwSimConfig cfg;
    aw_sim_config_default(&cfg, AW_SIM_HARD);
    cfg.seed = 28023;
    AwSim *sim = NULL;
    AwFusedPath *p = NULL;
    AwError err;
    AW_CHECK(aw_sim_new(&cfg, &sim, &err) == AW_OK);
    if (sim && aw_fuse(aw_sim_imu(sim), aw_sim_depth(sim), NULL, &p, &err) == AW_OK) {
      double se = 0, dl = 0;
      size_t na = 0;
      for (size_t k = 0; k < p->n; k++) {
        AwSimState st;
        aw_sim_eval(sim, p->t_s[k], &st);
        if (st.phase != AW_SIM_PHASE_ADDRESS) continue;
        for (int a = 0; a < 3; a++) se += (p->pos_cam_m[k][a] - st.wrist_cam_m[a]) * (p->pos_cam_m[k][a] - st.wrist_cam_m[a]);
        na++;
      }
      for (int a = 0; a < 3; a++) {
        double d = p->report.lever_arm_body_m[a] - aw_sim_truth(sim)->lever_arm_body_m[a];
        dl += d * d;
      }
      double ra = na ? sqrt(se / (double)na) : (double)NAN;
      fprintf(stderr, "seed 28023 hard: address RMSE %.2f cm over %zu samples, lever arm %.1f cm off\n",
              100 * ra, na, 100 * sqrt(dl));
      AW_CHECK(na > 50 && ra <= 0.02);
      AW_CHECK(sqrt(dl) <= 0.12);
    } else {
      AW_CHECK(!"seed 28023 did not fuse");
    }
    aw_fused_path_free(p);
    aw_sim_free(sim);
  }
  /* The clock search (fuse.c clock_search): a hard swing (seed 13762) where the filter, started
   * at the calibration's offset, left out frames of the fast phases and ended 16 cm RMS off the
   * simulator's truth, 4 ms off in its clock. (Seeds 13011 and 13959 served until the filter's
   * wrong-detection test and its clipped-axis noise, eskf.c, fused them well without the
   * search.) With the search the filter is restarted at other
   * offsets and the start the most frames agree with kept: the RMSE must be within the 3 cm
   * floor and the clock within 2 ms (the clock floor), and without the search (the
   * same swing, clock_search_max_s = 0) the RMSE over the floor, so that the check bites.
   * A normal swing must not start the search (its cost stays off the common case). */
  if (strstr(levels, "hard") && sig_scale == 1.0) {
    const struct { uint64_t seed; AwSimLevel level; } cs[] = { { 13762, AW_SIM_HARD }, { 13010, AW_SIM_NORMAL } };
    for (size_t c = 0; c < 2; c++) {
      AwSimConfig cfg;
      aw_sim_config_default(&cfg, cs[c].level);
      cfg.seed = cs[c].seed;
      AwSim *sim = NULL;
      AwError err;
      AW_CHECK(aw_sim_new(&cfg, &sim, &err) == AW_OK);
      for (int on = 1; sim && on >= (c == 0 ? 0 : 1); on--) {
        AwFusionSettings fs;
        aw_fusion_settings_default(&fs);
        if (!on) fs.clock_search_max_s = 0;
        AwFusedPath *p = NULL;
        if (aw_fuse(aw_sim_imu(sim), aw_sim_depth(sim), &fs, &p, &err) == AW_OK) {
          AwSimScore sc;
          aw_simscore(sim, p, &sc);
          fprintf(stderr, "seed %llu %s, clock search %s: RMSE %.2f cm, clock %+.2f ms, %zu search runs\n",
                  (unsigned long long)cs[c].seed, aw_sim_level_name(cs[c].level), on ? "on" : "off",
                  100 * sc.rmse_motion_m, 1e3 * sc.offset_err_s, p->report.clock_search_runs);
          if (c == 1) AW_CHECK(p->report.clock_search_runs == 0);
          else if (on) {
            AW_CHECK(p->report.clock_search_runs > 0);
            AW_CHECK(sc.rmse_motion_m <= 0.03);
            AW_CHECK(fabs(sc.offset_err_s) <= 0.002);
          } else {
            AW_CHECK(p->report.clock_search_runs == 0);
            AW_CHECK(sc.rmse_motion_m > 0.03);
          }
        } else {
          AW_CHECK(!"the clock search's swing did not fuse");
        }
        aw_fused_path_free(p);
      }
      aw_sim_free(sim);
    }
  }
  if (m >= 3 && no >= 3) {
    qsort(rm, (size_t)m, sizeof *rm, cmp_d);
    qsort(oe, (size_t)m, sizeof *oe, cmp_d);
    qsort(ro, (size_t)no, sizeof *ro, cmp_d);
    qsort(rb, (size_t)no, sizeof *rb, cmp_d);
    double med = rm[m / 2], p90 = rm[(int)floor(0.9 * (m - 1))];
    double omed = ro[no / 2], bmed = rb[no / 2], cmed = oe[m / 2], c2 = cov / m;
    fprintf(stderr, "%s, %d swings: RMSE median %.2f cm, p90 %.2f cm; occluded median %.2f cm, "
            "ratio %.3f; clock median %.2f ms; 2-sigma %.1f %% (1-sigma %.1f %%, Gaussian 68.3)\n",
            levels, m, 100 * med, 100 * p90, 100 * omed, omed / bmed, 1e3 * cmed, 100 * c2,
            100 * cov1 / m);
    /* The finish pose, held in clear view after the swing: the camera alone places a still
     * wrist within millimetres there (REFERENCES.md section 7's depth noise, 1.4 cm per frame
     * at 3 m, averaged over the second the pose is held), so the fused path must be within 1 cm
     * (median), on the hard swings too, where the accelerometer clipped at impact just before. */
    qsort(rf, (size_t)nf, sizeof *rf, cmp_d);
    qsort(rfh, (size_t)nfh, sizeof *rfh, cmp_d);
    if (nf > 0)
      fprintf(stderr, "held finish: RMSE median %.2f cm over %d swings, hard %.2f cm over %d, worst %.2f cm\n",
              100 * rf[nf / 2], nf, nfh ? 100 * rfh[nfh / 2] : (double)NAN, nfh, 100 * rf[nf - 1]);
    if (sig_scale == 1.0) {
      AW_CHECK(nf >= 3);
      AW_CHECK(nf >= 3 && rf[nf / 2] <= 0.01);
      AW_CHECK(nfh == 0 || rfh[nfh / 2] <= 0.01);
      AW_CHECK(med <= 0.015);
      AW_CHECK(p90 <= 0.03);
      AW_CHECK(omed <= 0.02);
      AW_CHECK(omed <= 0.15 * bmed);
      AW_CHECK(cmed <= 0.002);
    }
    AW_CHECK(c2 >= 0.90 && c2 <= 0.99);
    AW_CHECK(cov1 / m >= 0.55 && cov1 / m <= 0.85);
  }
  free(rm); free(ro); free(rb); free(oe); free(rf); free(rfh);
  return AW_TEST_END();
}
