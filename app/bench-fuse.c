/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench fuse`: speed of the whole fusion pipeline (sync, calibration, filter, smoother)
 * per IMU sample from a 4 s swing to a 30 min session, and its accuracy over seeded simulated
 * swings mixing the easy, normal and hard levels. */
#include "cli.h"

#include "arcwise/fusion.h"
#include "arcwise/sim.h"

#include "../tests/fusion/simscore.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <time.h>

static const char *const stage_names[AW_FUSION_STAGE_COUNT] = {
  "prep", "sync", "calibration", "filter+smoother", "camera-only", "output",
};

/* Peak resident set size of the process so far, MiB. */
static double
peak_rss_mib(void)
{
  struct rusage ru;
  if (getrusage(RUSAGE_SELF, &ru) != 0) return NAN;
  return (double)ru.ru_maxrss / 1024.0;
}

static double
now_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int
cmp_d(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* A continuous simulated session of at least `dur` seconds (shots every ~15 s with waggles,
 * practice swings and walking between them, normal level), the input the scaling figures are
 * about: a real session, not one swing repeated (whose seams jump in position and attitude
 * while the gyro sees nothing, and make the filter reject most frames). */
static AwStatus
session(double dur, AwImuStream **io, AwDepthStream **dout, AwError *err)
{
  AwSimConfig cfg;
  aw_sim_config_default(&cfg, AW_SIM_NORMAL);
  cfg.seed = 8;
  cfg.session_extras = true;
  cfg.n_swings = (int)ceil(dur / 14.0);
  for (;;) {
    AwSim *sim = NULL;
    AwStatus st = aw_sim_new(&cfg, &sim, err);
    if (st != AW_OK) return st;
    const AwImuStream *imu = aw_sim_imu(sim);
    if (imu->t_s[imu->n - 1] - imu->t_s[0] >= dur || cfg.n_swings > 100000) {
      *io = aw_sim_copy_imu(sim);
      *dout = aw_sim_copy_depth(sim);
      aw_sim_free(sim);
      return *io && *dout ? AW_OK : AW_ERR_NO_MEMORY;
    }
    aw_sim_free(sim);
    cfg.n_swings += cfg.n_swings / 8 + 1;
  }
}

int
arcwise_bench_fuse(int argc, char **argv)
{
  int n_swings = 60, speed_only = 0, acc_only = 0, verbose = 0, reps = 200, no_scaling = 0;
  unsigned long long first_seed = 5000;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--help") == 0) {
      printf("Usage: arcwise bench fuse [--swings N] [--speed-only] [--accuracy-only] [--verbose]\n"
             "                         [--reps N] [--no-scaling] [--first-seed S]\n\n"
             "Speed: the whole pipeline on a simulated 4 s swing at 100 Hz (N repeats, default\n"
             "200: best and median, and the median time of each stage), then on the same swing\n"
             "continuous simulated sessions of 1, 5 and 30 minutes: ns per IMU sample, stage\n"
             "times and peak memory.\n"
             "Accuracy: N seeded swings (default 60) cycling easy, normal, hard: position RMSE\n"
             "over the motion (median, 90th percentile), in occluded windows against the\n"
             "depth-only baseline, clock offset error, and the share of samples whose truth lies\n"
             "inside the reported 2-sigma and 1-sigma bands, per level, by kind of sample\n"
             "(visible, occluded, IMU saturated, no camera frame) and by phase. Seeds S, S+1, ...\n"
             "(default 5000; the tests use 9000 up).\n");
      return 0;
    }
    if (strcmp(argv[i], "--swings") == 0 && i + 1 < argc) n_swings = atoi(argv[++i]);
    else if (strcmp(argv[i], "--speed-only") == 0) speed_only = 1;
    else if (strcmp(argv[i], "--accuracy-only") == 0) acc_only = 1;
    else if (strcmp(argv[i], "--verbose") == 0) verbose = 1;
    else if (strcmp(argv[i], "--reps") == 0 && i + 1 < argc) reps = atoi(argv[++i]);
    else if (strcmp(argv[i], "--no-scaling") == 0) no_scaling = 1;
    else if (strcmp(argv[i], "--first-seed") == 0 && i + 1 < argc) first_seed = strtoull(argv[++i], NULL, 10);
    else return arcwise_cli_usage_error("bench", "unknown option '%s'", argv[i]);
  }
  if (n_swings < 3) n_swings = 3;
  AwError err;
  if (!acc_only) {
    AwSimConfig cfg;
    aw_sim_config_default(&cfg, AW_SIM_NORMAL);
    cfg.seed = 7;
    AwSim *sim = NULL;
    if (aw_sim_new(&cfg, &sim, &err) != AW_OK) return arcwise_cli_fail("bench", "simulator: %s", err.message);
    /* A 4 s window around the swing. */
    const AwImuStream *full = aw_sim_imu(sim);
    const AwDepthStream *fd = aw_sim_depth(sim);
    double t_imp = aw_sim_truth(sim)->swings[0].t_impact_s;
    size_t i0 = 0, i1 = 0, k0 = 0, k1 = 0;
    while (i0 < full->n && full->t_s[i0] < t_imp - 2.6) i0++;
    i1 = i0; while (i1 < full->n && full->t_s[i1] < full->t_s[i0] + 4.0) i1++;
    while (k0 < fd->n && fd->t_s[k0] < full->t_s[i0]) k0++;
    k1 = k0; while (k1 < fd->n && fd->t_s[k1] < full->t_s[i1 - 1]) k1++;
    AwImuStream *imu = aw_imu_stream_new(i1 - i0);
    AwDepthStream *dep = aw_depth_stream_new(k1 - k0);
    for (size_t i = i0; i < i1; i++) {
      imu->t_s[i - i0] = full->t_s[i];
      memcpy(imu->accel_m_s2[i - i0], full->accel_m_s2[i], sizeof imu->accel_m_s2[0]);
      memcpy(imu->gyro_rad_s[i - i0], full->gyro_rad_s[i], sizeof imu->gyro_rad_s[0]);
    }
    for (size_t k = k0; k < k1; k++) {
      dep->t_s[k - k0] = fd->t_s[k];
      memcpy(dep->pos_cam_m[k - k0], fd->pos_cam_m[k], sizeof dep->pos_cam_m[0]);
      dep->conf[k - k0] = fd->conf[k];
    }
    imu->meta = full->meta;
    dep->meta = fd->meta;
    AwFusionSettings s;
    aw_fusion_settings_default(&s);
    if (reps < 1) reps = 1;
    double *tot = calloc((size_t)reps, sizeof *tot);
    double *stg = calloc((size_t)reps * AW_FUSION_STAGE_COUNT, sizeof *stg);
    if (!tot || !stg) { free(tot); free(stg); return arcwise_cli_fail("bench", "out of memory"); }
    int done = 0;
    for (int r = 0; r < reps; r++) {
      AwFusedPath *p = NULL;
      double t0 = now_s();
      AwStatus st = aw_fuse(imu, dep, &s, &p, &err);
      double dt = now_s() - t0;
      if (st != AW_OK) { fprintf(stderr, "fuse failed: %s\n", err.message); break; }
      tot[done] = dt;
      for (int q = 0; q < AW_FUSION_STAGE_COUNT; q++)
        stg[(size_t)q * (size_t)reps + (size_t)done] = p->report.stage_time_s[q];
      done++;
      aw_fused_path_free(p);
    }
    if (done > 0) {
      qsort(tot, (size_t)done, sizeof *tot, cmp_d);
      printf("speed: 4 s swing, %zu IMU samples at %.0f Hz, %zu frames: %.3f ms per fuse best, %.3f ms "
             "median of %d, %.0f ns per IMU sample (best; goal 1 ms per swing)\n", imu->n,
             imu->meta.nominal_rate_hz, dep->n, tot[0] * 1e3, tot[done / 2] * 1e3, done,
             tot[0] * 1e9 / (double)imu->n);
      printf("speed: stages (median):");
      for (int q = 0; q < AW_FUSION_STAGE_COUNT; q++) {
        double *v = stg + (size_t)q * (size_t)reps;
        qsort(v, (size_t)done, sizeof *v, cmp_d);
        printf(" %s %.3f ms%s", stage_names[q], v[done / 2] * 1e3, q + 1 < AW_FUSION_STAGE_COUNT ? "," : "\n");
      }
    }
    free(tot);
    free(stg);
    const double durs[] = { 60, 300, 1800 };
    for (int j = 0; j < 3 && !no_scaling; j++) {
      AwImuStream *ti = NULL;
      AwDepthStream *td = NULL;
      if (session(durs[j], &ti, &td, &err) != AW_OK) {
        printf("speed: %.0f s: simulator failed: %s\n", durs[j], err.message);
        aw_imu_stream_free(ti);
        aw_depth_stream_free(td);
        continue;
      }
      double span = ti->t_s[ti->n - 1] - ti->t_s[0];
      AwFusedPath *p = NULL;
      double t0 = now_s();
      AwStatus st = aw_fuse(ti, td, &s, &p, &err);
      double dt = now_s() - t0;
      if (st != AW_OK) printf("speed: %.0f s: fuse failed: %s\n", durs[j], err.message);
      else {
        printf("speed: %4.0f s session (%.0f s simulated, %zu frames rejected of %zu), %zu IMU samples: "
               "%.1f ms, %.0f ns per IMU sample, peak RSS %.0f MiB;", durs[j], span,
               p->report.cam_frames_rejected, td->n, ti->n, dt * 1e3, dt * 1e9 / (double)ti->n,
               peak_rss_mib());
        for (int q = 0; q < AW_FUSION_STAGE_COUNT; q++)
          printf(" %s %.0f", stage_names[q], p->report.stage_time_s[q] * 1e9 / (double)ti->n);
        printf(" ns/sample\n");
      }
      aw_fused_path_free(p);
      aw_imu_stream_free(ti);
      aw_depth_stream_free(td);
    }
    aw_imu_stream_free(imu);
    aw_depth_stream_free(dep);
    aw_sim_free(sim);
  }
  if (speed_only) return 0;
  int n = n_swings, no = 0, fails = 0;
  double *rm = calloc((size_t)n, sizeof *rm), *ro = calloc((size_t)n, sizeof *ro),
         *rb = calloc((size_t)n, sizeof *rb), *oe = calloc((size_t)n, sizeof *oe);
  if (!rm || !ro || !rb || !oe) {
    free(rm); free(ro); free(rb); free(oe);
    return arcwise_cli_fail("bench", "out of memory");
  }
  /* Coverage is pooled over samples (per axis), per level and over the mix; the aggregate the
   * floor speaks of is the mean of the swings' own shares, as the test computes it. */
  double cov = 0, cov1 = 0, lv_cov[3] = { 0 }, lv_cov1[3] = { 0 };
  int lv_m[3] = { 0 };
  size_t cat_n[4] = { 0 }, cat_in2[4] = { 0 }, ph_n[4] = { 0 }, ph_in2[4] = { 0 };
  int m = 0;
  for (int i = 0; i < n; i++) {
    AwSimLevel lev = (AwSimLevel)(i % 3);
    AwSimConfig cfg;
    aw_sim_config_default(&cfg, lev);
    cfg.seed = first_seed + (uint64_t)i;   /* 5000 up by default: not the test's seeds */
    AwSim *sim = NULL;
    if (aw_sim_new(&cfg, &sim, &err) != AW_OK) { fails++; continue; }
    AwFusionSettings s;
    aw_fusion_settings_default(&s);
    AwFusedPath *p = NULL;
    if (aw_fuse(aw_sim_imu(sim), aw_sim_depth(sim), &s, &p, &err) != AW_OK) {
      printf("swing %d (%s): %s\n", i, aw_sim_level_name(lev), err.message);
      fails++;
      aw_sim_free(sim);
      continue;
    }
    AwSimScore sc;
    aw_simscore(sim, p, &sc);
    rm[m] = sc.rmse_motion_m;
    oe[m] = fabs(sc.offset_err_s);
    cov += sc.coverage2;
    cov1 += sc.coverage1;
    lv_cov[lev] += sc.coverage2;
    lv_cov1[lev] += sc.coverage1;
    lv_m[lev]++;
    for (int c = 0; c < 4; c++) {
      cat_n[c] += sc.cat_n[c]; cat_in2[c] += sc.cat_in2[c];
      ph_n[c] += sc.phase_n[c]; ph_in2[c] += sc.phase_in2[c];
    }
    m++;
    if (sc.n_occl) { ro[no] = sc.rmse_occl_m; rb[no] = sc.base_occl_m; no++; }
    if (verbose)
      printf("  swing %2d seed %llu %-6s RMSE %.2f cm, occluded %.2f cm (baseline %.2f), clock error "
             "%+.2f ms (reported sigma %.2f), 2-sigma %.1f %%, 1-sigma %.1f %% (visible %.0f, "
             "occluded %.0f, saturated %.0f, no camera %.0f %%), frames used %zu, rejected %zu\n",
             i, (unsigned long long)cfg.seed, aw_sim_level_name(lev), 100 * sc.rmse_motion_m,
             100 * sc.rmse_occl_m, 100 * sc.base_occl_m, 1e3 * sc.offset_err_s,
             1e3 * p->report.clock_offset_sigma_s, 100 * sc.coverage2, 100 * sc.coverage1,
             sc.cat_n[0] ? 100.0 * (double)sc.cat_in2[0] / (double)sc.cat_n[0] : (double)NAN,
             sc.cat_n[1] ? 100.0 * (double)sc.cat_in2[1] / (double)sc.cat_n[1] : (double)NAN,
             sc.cat_n[2] ? 100.0 * (double)sc.cat_in2[2] / (double)sc.cat_n[2] : (double)NAN,
             sc.cat_n[3] ? 100.0 * (double)sc.cat_in2[3] / (double)sc.cat_n[3] : (double)NAN,
             p->report.cam_frames_used, p->report.cam_frames_rejected);
    aw_fused_path_free(p);
    aw_sim_free(sim);
  }
  if (m > 0) {
    qsort(rm, (size_t)m, sizeof *rm, cmp_d);
    qsort(oe, (size_t)m, sizeof *oe, cmp_d);
    qsort(ro, (size_t)no, sizeof *ro, cmp_d);
    qsort(rb, (size_t)no, sizeof *rb, cmp_d);
    printf("accuracy: %d swings from seed %llu (%d failed)\n", n, (unsigned long long)first_seed, fails);
    printf("  position RMSE over the motion: median %.2f cm, 90th percentile %.2f cm (floors 1.5, 3)\n",
           100 * rm[m / 2], 100 * rm[(int)floor(0.9 * (m - 1))]);
    if (no)
      printf("  occluded windows: median %.2f cm, depth-only baseline median %.2f cm, ratio %.3f (floors 2 cm, 0.15)\n",
             100 * ro[no / 2], 100 * rb[no / 2], ro[no / 2] / rb[no / 2]);
    printf("  clock offset error: median %.2f ms (floor 2)\n", 1e3 * oe[m / 2]);
    printf("  truth inside +-2 sigma: %.1f %% of samples per axis (target 90..99; Gaussian 95.4); "
           "inside +-1 sigma: %.1f %% (Gaussian 68.3)\n", 100 * cov / m, 100 * cov1 / m);
    printf("  by level, 2-sigma / 1-sigma:");
    for (int l = 0; l < 3; l++)
      if (lv_m[l])
        printf(" %s %.1f / %.1f %%%s", aw_sim_level_name((AwSimLevel)l), 100 * lv_cov[l] / lv_m[l],
               100 * lv_cov1[l] / lv_m[l], l < 2 ? "," : "\n");
    static const char *const cat_names[4] = { "visible", "occluded", "IMU saturated", "no camera frame" };
    static const char *const ph_names[4] = { "takeaway", "backswing", "downswing", "follow-through" };
    printf("  2-sigma by sample (pooled):");
    for (int c = 0; c < 4; c++)
      printf(" %s %.1f %% of %zu%s", cat_names[c], cat_n[c] ? 100.0 * (double)cat_in2[c] / (double)cat_n[c] : (double)NAN,
             cat_n[c], c < 3 ? "," : "\n");
    printf("  2-sigma by phase (pooled):");
    for (int c = 0; c < 4; c++)
      printf(" %s %.1f %%%s", ph_names[c], ph_n[c] ? 100.0 * (double)ph_in2[c] / (double)ph_n[c] : (double)NAN,
             c < 3 ? "," : "\n");
  }
  free(rm); free(ro); free(rb); free(oe);
  return 0;
}
