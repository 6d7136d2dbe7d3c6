/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench accuracy`: every estimator of the lead-wrist path against the simulator's
 * truth over seeded swings mixing easy, normal and hard levels and both camera views.
 *
 * Adding an estimator is one function of type BenchEstimator (below) that maps the two
 * streams (plus, for estimators that need a start, the true state at address) to a path on
 * the depth frame times, and one line in the `estimators` table. */
#include "cli.h"

#include "arcwise/baseline.h"
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
  double (*pos_cam_m)[3];  /* depth->n rows, preset to NaN */
  double clock_offset_s;   /* NaN when the estimator does not estimate the clock */
  double events_s[5];      /* address, takeaway, top, impact, finish; NaN when not estimated */
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

static const struct {
  const char *name;
  const char *what;
  BenchEstimator run;
} estimators[] = {
  { "depth-only", "confident frames, gaps filled, Savitzky-Golay 7/2", est_depth_only },
  { "imu-only", "dead reckoning from the true state at address", est_imu_only },
  /* The fusion adds its row here (aw_fuse, arcwise/fusion.h). */
};
enum { N_EST = sizeof estimators / sizeof estimators[0] };

enum { M_RMSE, M_RMSE_OCC, M_MAX, M_CLOCK, M_EVENT, N_METRIC };

typedef struct {
  double *v[N_METRIC];
  size_t n[N_METRIC];
} Samples;

static int
cmp_double(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return x < y ? -1 : x > y;
}

/* Linear-interpolated quantile of sorted data (numpy's default method). */
static double
quantile(double *v, size_t n, double q)
{
  if (n == 0)
    return NAN;
  qsort(v, n, sizeof *v, cmp_double);
  double pos = q * (double)(n - 1);
  size_t i = (size_t)floor(pos);
  if (i + 1 >= n)
    return v[n - 1];
  return v[i] + (v[i + 1] - v[i]) * (pos - (double)i);
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
          "over the motion, and clock-offset and event-timing errors where estimated.\n"
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
  size_t failures[N_EST] = { 0 };
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
    bool *occ = calloc(n, sizeof *occ);
    if (!truth || !est || !occ)
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
    for (int e = 0; e < N_EST; e++) {
      BenchOutput out;
      out.pos_cam_m = est;
      out.clock_offset_s = NAN;
      for (size_t j = 0; j < n; j++)
        est[j][0] = est[j][1] = est[j][2] = NAN;
      for (int k = 0; k < 5; k++)
        out.events_s[k] = NAN;
      if (estimators[e].run(&in, &out) != AW_OK) {
        failures[e]++;
        continue;
      }
      double se = 0, se_occ = 0, mx = 0;
      size_t cnt = 0, cnt_occ = 0;
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
      }
      if (e == 0) {
        frames_total += (double)cnt;
        frames_occ += (double)cnt_occ;
      }
      double vals[N_METRIC] = { cnt ? sqrt(se / cnt) : (double)NAN, cnt_occ ? sqrt(se_occ / cnt_occ) : (double)NAN,
                                cnt ? mx : (double)NAN,
                                isfinite(out.clock_offset_s)
                                  ? fabs(out.clock_offset_s - tr->clock_offset_s) : (double)NAN,
                                NAN };
      double ev_true[5] = { sw->t_address_s, sw->t_takeaway_s, sw->t_top_s, sw->t_impact_s,
                            sw->t_finish_s };
      double ev_err = 0;
      int n_ev = 0;
      for (int k = 0; k < 5; k++)
        if (isfinite(out.events_s[k])) {
          ev_err = fmax(ev_err, fabs(out.events_s[k] - ev_true[k]));
          n_ev++;
        }
      if (n_ev)
        vals[M_EVENT] = ev_err;
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
    free(occ);
    aw_sim_free(sim);
  }

  printf("Lead-wrist path accuracy over %ld simulated swings (seeds %llu..%llu; easy, normal, "
         "hard in turn;\nface-on and down-the-line; %.0f frames in motion, %.0f of them "
         "occluded). Errors are\ndistances to the true keypoint at the depth frame times, in mm "
         "(clock and events in ms);\neach cell is median / 90th percentile over swings.\n\n",
         n_swings, seed0, seed0 + (unsigned long long)n_swings - 1, frames_total, frames_occ);
  printf("%-11s %-7s %15s %15s %15s %13s %13s\n", "estimator", "level", "RMSE motion",
         "RMSE occluded", "max error", "clock", "events");
  static const char *lv_names[4] = { "easy", "normal", "hard", "all" };
  for (int e = 0; e < N_EST; e++) {
    for (int l = 0; l < 4; l++) {
      char cell[N_METRIC][32];
      for (int m = 0; m < N_METRIC; m++) {
        Samples *x = &S[e][l];
        if (x->n[m] == 0) {
          snprintf(cell[m], sizeof cell[m], "-");
          continue;
        }
        double med = quantile(x->v[m], x->n[m], 0.5), p90 = quantile(x->v[m], x->n[m], 0.9);
        snprintf(cell[m], sizeof cell[m], "%.1f / %.1f", med * 1000, p90 * 1000);
      }
      printf("%-11s %-7s %15s %15s %15s %13s %13s\n", l == 0 ? estimators[e].name : "",
             lv_names[l], cell[M_RMSE], cell[M_RMSE_OCC], cell[M_MAX], cell[M_CLOCK],
             cell[M_EVENT]);
    }
    if (failures[e])
      printf("%-11s %zu swings failed\n", "", failures[e]);
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
