/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench accuracy`: every estimator of the lead-wrist path against the simulator's
 * truth over seeded swings mixing easy, normal and hard levels and both camera views, and the
 * swing analysis run on each estimator's path (events and coaching numbers), in one table.
 *
 * Adding an estimator is one function of type BenchEstimator (below) that maps the two
 * streams (plus, for estimators that need a start, the true state at address) to a path on
 * the depth frame times, and one line in the `estimators` table. */
#include "cli.h"
#include "bench-score.h"

#include "arcwise/analysis.h"
#include "arcwise/baseline.h"
#include "arcwise/fusion.h"
#include "arcwise/math3.h"
#include "arcwise/sim.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct {
  const AwImuStream *imu;
  const AwDepthStream *depth;
  const AwImuInitialState *at_address; /* truth at address: only for start-state estimators */
} BenchInput;

typedef struct {
  double (*pos_cam_m)[3];    /* depth->n rows, preset to NaN */
  double (*sigma_cam_m)[3];  /* depth->n rows of 1-sigma per axis, preset to NaN (none) */
  double clock_offset_s;     /* NaN when the estimator does not estimate the clock */
  AwFusedPath *fused;        /* a fused path for the analysis (owned), or NULL: the analysis
                                then runs on pos_cam_m alone */
} BenchOutput;

typedef AwStatus (*BenchEstimator)(const BenchInput *in, BenchOutput *out);

static AwStatus
est_depth_only(const BenchInput *in, BenchOutput *out)
{
  return aw_depth_baseline(in->depth, NULL, out->pos_cam_m, NULL);
}

static AwStatus
est_imu_only(const BenchInput *in, BenchOutput *out)
{
  return aw_imu_dead_reckon(in->imu, in->at_address, in->depth->t_s, in->depth->n,
                            out->pos_cam_m, NULL);
}

/* The whole fusion (arcwise/fusion.h, default settings), sampled at the frame times. */
static AwStatus
est_fused(const BenchInput *in, BenchOutput *out)
{
  AwFusionSettings fs;
  aw_fusion_settings_default(&fs);
  AwFusedPath *p = NULL;
  AwStatus st = aw_fuse(in->imu, in->depth, &fs, &p, NULL);
  if (st != AW_OK)
    return st;
  size_t i = 0;
  for (size_t j = 0; j < in->depth->n && p->n >= 2; j++) {
    double t = in->depth->t_s[j];
    if (t < p->t_s[0] || t > p->t_s[p->n - 1])
      continue;
    while (i + 2 < p->n && p->t_s[i + 1] <= t)
      i++;
    double u = (t - p->t_s[i]) / (p->t_s[i + 1] - p->t_s[i]);
    for (int a = 0; a < 3; a++) {
      out->pos_cam_m[j][a] = p->pos_cam_m[i][a] + u * (p->pos_cam_m[i + 1][a] - p->pos_cam_m[i][a]);
      out->sigma_cam_m[j][a] =
        p->pos_sigma_cam_m[i][a] + u * (p->pos_sigma_cam_m[i + 1][a] - p->pos_sigma_cam_m[i][a]);
    }
  }
  out->clock_offset_s = p->report.clock_offset_s;
  out->fused = p;
  return AW_OK;
}

static const struct {
  const char *name;
  const char *what;
  BenchEstimator run;
} estimators[] = {
  { "depth-only", "confident frames, gaps filled, Savitzky-Golay 7/2", est_depth_only },
  { "imu-only", "dead reckoning from the true state at address", est_imu_only },
  { "fused", "aw_fuse: clock sync, calibration, Kalman filter and smoother", est_fused },
};
enum { N_EST = sizeof estimators / sizeof estimators[0] };

/* Per swing: position RMSE over the motion and in the occlusion windows, the occluded RMSE
 * over the depth-only baseline's, maximum error, clock-offset error, share of axes whose
 * error lies within 2 sigma; then the analysis's errors (bench-score.h). */
enum { M_RMSE, M_RMSE_OCC, M_RATIO, M_MAX, M_CLOCK, M_COVER, M_TOP, M_IMPACT, M_TEMPO,
       M_HAND, M_CLUB, N_METRIC };

typedef struct {
  double *v[N_METRIC];
  size_t n[N_METRIC];
} Samples;

/* Analysis of one estimator's path: the fused path as it is, or a path-only trajectory of
 * the finite rows (up from the simulator, which the baselines cannot measure; without the
 * watch the analysis times impact from the path and takes the club's rate from the path's
 * turning). */
static AwAnalysis *
analyse_estimate(const AwSim *sim, const BenchOutput *out, const AwAnalysisSettings *set)
{
  AwAnalysis *an = NULL;
  const AwImuStream *imu = aw_sim_imu(sim);
  if (out->fused != NULL) {
    AwTrajectory tr;
    aw_trajectory_from_fused(out->fused, imu->meta.accel_range_m_s2, imu->meta.gyro_range_rad_s,
                             &tr);
    if (aw_analyze(&tr, set, &an, NULL) != AW_OK)
      return NULL;
    return an;
  }
  const AwDepthStream *dp = aw_sim_depth(sim);
  double *t = malloc(dp->n * sizeof *t);
  double (*p)[3] = malloc(dp->n * sizeof *p);
  if (t == NULL || p == NULL) {
    free(t);
    free(p);
    return NULL;
  }
  size_t m = 0;
  for (size_t j = 0; j < dp->n; j++)
    if (isfinite(out->pos_cam_m[j][0]) && isfinite(out->pos_cam_m[j][1]) &&
        isfinite(out->pos_cam_m[j][2]) && (m == 0 || dp->t_s[j] > t[m - 1])) {
      t[m] = dp->t_s[j];
      aw_v3_copy(p[m], out->pos_cam_m[j]);
      m++;
    }
  AwTrajectory tr;
  memset(&tr, 0, sizeof tr);
  tr.n = m;
  tr.t_s = t;
  tr.pos_m = (const double (*)[3])p;
  const AwSimTruth *truth = aw_sim_truth(sim);
  for (int k = 0; k < 3; k++)
    tr.up[k] = truth->R_cam_grav[k][2];
  tr.sync_offset_s = NAN;
  tr.sync_confidence = NAN;
  if (aw_analyze(&tr, set, &an, NULL) != AW_OK)
    an = NULL;
  free(t);
  free(p);
  return an;
}

static void
usage(FILE *f)
{
  fprintf(f,
          "Usage: arcwise bench accuracy [--n N] [--seed S] [--plot-data FILE [--plot-swing K]]\n"
          "\n"
          "Simulates N single-swing recordings (default 60; seeds S, S+1, ...; levels easy,\n"
          "normal, hard in turn; face-on and down-the-line alternating) and prints, for every\n"
          "estimator, the median and 90th percentile over swings of: position RMSE over the\n"
          "motion (takeaway to finish), RMSE in the occlusion windows only, the maximum error\n"
          "over the motion, the occluded RMSE relative to the depth-only baseline, the\n"
          "clock-offset error and the 2-sigma coverage where estimated; and the swing analysis\n"
          "run on each estimator's path: top and impact timing errors, tempo, hand-speed and\n"
          "club-head speed errors.\n"
          "--plot-data writes swing K's (default 0) truth, raw frames and estimates as CSV for\n"
          "tools/plot-swing.py.\n");
}

int
arcwise_bench_accuracy(int argc, char **argv)
{
  long n_swings = 60;
  unsigned long long seed0 = 1000;
  const char *plot = NULL;
  long plot_index = 0;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      usage(stdout);
      return 0;
    } else if (strcmp(argv[i], "--n") == 0 && i + 1 < argc) {
      char *end;
      errno = 0;
      n_swings = strtol(argv[++i], &end, 10);
      if (errno || *end || n_swings < 1 || n_swings > 10000)
        return arcwise_cli_usage_error("bench accuracy", "--n needs a number from 1 to 10000");
    } else if (strcmp(argv[i], "--seed") == 0 && i + 1 < argc) {
      char *end;
      errno = 0;
      seed0 = strtoull(argv[++i], &end, 10);
      if (errno || *end)
        return arcwise_cli_usage_error("bench accuracy", "--seed needs an unsigned integer");
    } else if (strcmp(argv[i], "--plot-data") == 0 && i + 1 < argc) {
      plot = argv[++i];
    } else if (strcmp(argv[i], "--plot-swing") == 0 && i + 1 < argc) {
      char *end;
      errno = 0;
      plot_index = strtol(argv[++i], &end, 10);
      if (errno || *end || plot_index < 0)
        return arcwise_cli_usage_error("bench accuracy", "--plot-swing needs a swing index");
    } else {
      return arcwise_cli_usage_error("bench accuracy", "unknown option '%s'", argv[i]);
    }
  }
  Samples S[N_EST][4]; /* per estimator: levels 0..2 and all (3) */
  memset(S, 0, sizeof S);
  for (int e = 0; e < N_EST; e++)
    for (int l = 0; l < 4; l++)
      for (int m = 0; m < N_METRIC; m++) {
        S[e][l].v[m] = calloc((size_t)n_swings, sizeof(double));
        if (S[e][l].v[m] == NULL)
          return arcwise_cli_fail("bench accuracy", "out of memory");
      }
  size_t failures[N_EST] = { 0 }, no_swing[N_EST] = { 0 };
  double frames_total = 0, frames_occ = 0;
  for (long s = 0; s < n_swings; s++) {
    AwSimConfig c;
    AwSimLevel level = (AwSimLevel)(s % 3);
    aw_sim_config_default(&c, level);
    c.seed = seed0 + (unsigned long long)s;
    c.view = (s / 3) % 2 ? AW_SIM_DOWN_THE_LINE : AW_SIM_FACE_ON;
    c.left_handed = (s % 5) == 4;
    AwSim *sim = NULL;
    AwError err;
    if (aw_sim_new(&c, &sim, &err) != AW_OK)
      return arcwise_cli_fail("bench accuracy", "simulation %ld: %s", s, err.message);
    const AwSimTruth *tr = aw_sim_truth(sim);
    const AwDepthStream *dp = aw_sim_depth(sim);
    const AwSimSwing *sw = &tr->swings[0];
    size_t n = dp->n;
    double (*truth)[3] = malloc(n * sizeof *truth);
    double (*est)[3] = malloc(n * sizeof *est);
    double (*sig)[3] = malloc(n * sizeof *sig);
    bool *occ = calloc(n, sizeof *occ);
    if (!truth || !est || !sig || !occ)
      return arcwise_cli_fail("bench accuracy", "out of memory");
    for (size_t j = 0; j < n; j++) {
      AwSimState st;
      aw_sim_eval(sim, dp->t_s[j], &st);
      aw_v3_copy(truth[j], st.wrist_cam_m);
      for (size_t o = 0; o < tr->n_occlusions; o++)
        if (dp->t_s[j] >= tr->occlusions[o].t0_s && dp->t_s[j] <= tr->occlusions[o].t1_s)
          occ[j] = true;
    }
    /* The true state at address, for estimators that integrate from a known start. */
    AwSimState a;
    aw_sim_eval(sim, sw->t_address_s, &a);
    AwImuInitialState init;
    memset(&init, 0, sizeof init);
    init.t_depth_s = sw->t_address_s;
    aw_v3_copy(init.pos_cam_m, a.wrist_cam_m);
    memcpy(init.q_cam_body, a.q_cam_body, sizeof init.q_cam_body);
    double g_grav[3] = { 0, 0, -tr->gravity_m_s2 };
    aw_mat_mul_v3(init.gravity_cam_m_s2, (const double (*)[3])tr->R_cam_grav, g_grav);
    aw_v3_copy(init.lever_arm_body_m, tr->lever_arm_body_m);
    init.clock_offset_s = tr->clock_offset_s;
    init.clock_drift = tr->clock_drift;
    BenchInput in = { aw_sim_imu(sim), dp, &init };
    FILE *pf = NULL;
    double (*plot_est)[N_EST][3] = NULL;
    if (plot != NULL && s == plot_index)
      plot_est = calloc(n, sizeof *plot_est);
    AwAnalysisSettings aset;
    aw_analysis_settings_default(&aset);
    aset.handed = sw->style.left_handed ? AW_HANDED_LEFT : AW_HANDED_RIGHT;
    aset.club_length_m = sw->style.club_length_m;
    double base_occ = NAN; /* the depth-only baseline's occluded RMSE of this swing */
    for (int e = 0; e < N_EST; e++) {
      BenchOutput out;
      out.pos_cam_m = est;
      out.sigma_cam_m = sig;
      out.clock_offset_s = NAN;
      out.fused = NULL;
      for (size_t j = 0; j < n; j++)
        for (int ax = 0; ax < 3; ax++)
          est[j][ax] = sig[j][ax] = NAN;
      if (estimators[e].run(&in, &out) != AW_OK) {
        failures[e]++;
        continue;
      }
      double se = 0, se_occ = 0, mx = 0;
      size_t cnt = 0, cnt_occ = 0, cov = 0, cov_n = 0;
      for (size_t j = 0; j < n; j++) {
        if (plot_est)
          aw_v3_copy(plot_est[j][e], est[j]);
        double t = dp->t_s[j];
        if (t < sw->t_takeaway_s || t > sw->t_finish_s)
          continue;
        double d = aw_v3_dist(est[j], truth[j]);
        if (!isfinite(d))
          d = 1.0; /* an estimator that gives up is charged 1 m, not ignored */
        se += d * d;
        cnt++;
        mx = fmax(mx, d);
        if (occ[j]) {
          se_occ += d * d;
          cnt_occ++;
        }
        for (int ax = 0; ax < 3; ax++)
          if (isfinite(sig[j][ax])) {
            cov_n++;
            cov += fabs(est[j][ax] - truth[j][ax]) <= 2 * sig[j][ax];
          }
      }
      if (e == 0) {
        frames_total += (double)cnt;
        frames_occ += (double)cnt_occ;
      }
      double vals[N_METRIC];
      for (int m = 0; m < N_METRIC; m++)
        vals[m] = NAN;
      vals[M_RMSE] = cnt ? sqrt(se / (double)cnt) : (double)NAN;
      vals[M_RMSE_OCC] = cnt_occ ? sqrt(se_occ / (double)cnt_occ) : (double)NAN;
      if (e == 0)
        base_occ = vals[M_RMSE_OCC];
      else if (base_occ > 0)
        vals[M_RATIO] = vals[M_RMSE_OCC] / base_occ;
      vals[M_MAX] = cnt ? mx : (double)NAN;
      if (isfinite(out.clock_offset_s))
        vals[M_CLOCK] = fabs(out.clock_offset_s - tr->clock_offset_s);
      if (cov_n)
        vals[M_COVER] = (double)cov / (double)cov_n;
      AwAnalysis *an = analyse_estimate(sim, &out, &aset);
      ArcwiseSwingErrors er;
      if (an != NULL && arcwise_bench_swing_errors(sw, an, &er) != NULL) {
        vals[M_TOP] = 1e-3 * er.top_ms; /* s, like the clock */
        vals[M_IMPACT] = 1e-3 * er.impact_ms;
        vals[M_TEMPO] = er.tempo_pct;
        vals[M_HAND] = er.hand_pct;
        vals[M_CLUB] = er.club_pct;
      } else {
        no_swing[e]++;
      }
      aw_analysis_free(an);
      aw_fused_path_free(out.fused);
      for (int m = 0; m < N_METRIC; m++)
        if (isfinite(vals[m])) {
          Samples *lv = &S[e][level], *all = &S[e][3];
          lv->v[m][lv->n[m]++] = vals[m];
          all->v[m][all->n[m]++] = vals[m];
        }
    }
    if (plot_est != NULL) {
      pf = fopen(plot, "w");
      if (pf == NULL)
        return arcwise_cli_fail("bench accuracy", "%s: %s", plot, strerror(errno));
      fprintf(pf, "# seed %llu level %s view %s; camera frame, m; events takeaway %.4f top %.4f "
                  "impact %.4f finish %.4f\n", (unsigned long long)c.seed, aw_sim_level_name(level),
              aw_sim_view_name(c.view), sw->t_takeaway_s, sw->t_top_s, sw->t_impact_s,
              sw->t_finish_s);
      fprintf(pf, "t,occluded,conf,raw_x,raw_y,raw_z,truth_x,truth_y,truth_z");
      for (int e = 0; e < N_EST; e++)
        fprintf(pf, ",%s_x,%s_y,%s_z", estimators[e].name, estimators[e].name, estimators[e].name);
      fputc('\n', pf);
      for (size_t j = 0; j < n; j++) {
        fprintf(pf, "%.4f,%d,%.3f,%.5f,%.5f,%.5f,%.5f,%.5f,%.5f", dp->t_s[j], occ[j], dp->conf[j],
                dp->pos_cam_m[j][0], dp->pos_cam_m[j][1], dp->pos_cam_m[j][2], truth[j][0],
                truth[j][1], truth[j][2]);
        for (int e = 0; e < N_EST; e++)
          fprintf(pf, ",%.5f,%.5f,%.5f", plot_est[j][e][0], plot_est[j][e][1], plot_est[j][e][2]);
        fputc('\n', pf);
      }
      fclose(pf);
      free(plot_est);
    }
    free(truth);
    free(est);
    free(sig);
    free(occ);
    aw_sim_free(sim);
  }

  printf("Lead-wrist path accuracy over %ld simulated swings (seeds %llu..%llu; easy, normal, "
         "hard in turn;\nface-on and down-the-line; every fifth left-handed; %.0f frames in "
         "motion, %.0f of them occluded).\nPositions: distance to the true keypoint at the depth "
         "frame times over the motion (takeaway to\nfinish), mm; 'occl/base': occluded RMSE over "
         "the depth-only baseline's on the same swing;\n'2 sigma': share of axes whose error lies "
         "within twice the estimator's own sigma. Events and\nnumbers: the swing analysis run on "
         "each estimator's path, against the true events (ms) and\nthe true tempo, hand speed "
         "and club-head speed at impact (relative, %%). Each cell is median /\n90th percentile "
         "over swings ('2 sigma': mean / 10th percentile).\n"
         "Goals (issues 4 and 5): fused RMSE 15 / 30 mm, occluded 20 mm median and 0.15 of the "
         "baseline;\nclock 2 ms; 2 sigma 90-99 %%; top and impact 10 / 20 ms; tempo 3 %%, hand "
         "5 %%, club 8 %% median.\n\n",
         n_swings, seed0, seed0 + (unsigned long long)n_swings - 1, frames_total, frames_occ);
  static const char *heads[N_METRIC] = { "RMSE", "RMSE occl", "occl/base", "max", "clock ms",
                                         "2 sigma %", "top ms", "impact ms", "tempo %",
                                         "hand %", "club %" };
  static const int widths[N_METRIC] = { 11, 11, 11, 13, 11, 11, 11, 11, 11, 11, 11 };
  printf("%-10s %-6s", "estimator", "level");
  for (int m = 0; m < N_METRIC; m++)
    printf(" %*s", widths[m], heads[m]);
  printf("\n");
  static const char *lv_names[4] = { "easy", "normal", "hard", "all" };
  for (int e = 0; e < N_EST; e++) {
    for (int l = 0; l < 4; l++) {
      printf("%-10s %-6s", l == 0 ? estimators[e].name : "", lv_names[l]);
      for (int m = 0; m < N_METRIC; m++) {
        Samples *x = &S[e][l];
        char cell[40];
        if (x->n[m] == 0) {
          snprintf(cell, sizeof cell, "-");
        } else if (m == M_COVER) {
          double mean = 0;
          for (size_t k = 0; k < x->n[m]; k++)
            mean += x->v[m][k];
          mean /= (double)x->n[m];
          snprintf(cell, sizeof cell, "%.1f/%.1f", 100 * mean,
                   100 * arcwise_bench_quantile(x->v[m], x->n[m], 0.1));
        } else {
          double med = arcwise_bench_quantile(x->v[m], x->n[m], 0.5);
          double p90 = arcwise_bench_quantile(x->v[m], x->n[m], 0.9);
          /* positions in mm, times in ms, ratios as they are, relative errors in % */
          double k = m == M_RATIO ? 1.0 : m >= M_TEMPO ? 1.0 : 1000.0;
          snprintf(cell, sizeof cell, m == M_RATIO ? "%.2f/%.2f" : "%.1f/%.1f", med * k, p90 * k);
        }
        printf(" %*s", widths[m], cell);
      }
      printf("\n");
    }
    if (failures[e])
      printf("%-10s %zu swings failed\n", "", failures[e]);
    if (no_swing[e])
      printf("%-10s %zu swings not found by the analysis on this path\n", "", no_swing[e]);
  }
  printf("\n");
  for (int e = 0; e < N_EST; e++)
    printf("%-11s %s\n", estimators[e].name, estimators[e].what);
  for (int e = 0; e < N_EST; e++)
    for (int l = 0; l < 4; l++)
      for (int m = 0; m < N_METRIC; m++)
        free(S[e][l].v[m]);
  return 0;
}
