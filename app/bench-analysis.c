/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench analysis`: event, tempo and speed accuracy of the swing analysis over seeded
 * simulated swings, and swing finding over simulated continuous sessions. */
#include "cli.h"
#include "bench-score.h"

#include "arcwise/analysis.h"
#include "arcwise/math3.h"
#include "arcwise/sim.h"
#include "arcwise/units.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* A path as a perfect fusion would give it: one row per IMU sample, on the depth clock, with
 * the true hand path and watch orientation and the simulated (noisy, clipped) IMU readings. */
typedef struct {
  size_t n;
  double *t, (*p)[3], (*v)[3], (*q)[4], (*a)[3], (*g)[3];
} BenchPath;

static void
bench_path_free(BenchPath *b)
{
  free(b->t); free(b->p); free(b->v); free(b->q); free(b->a); free(b->g);
  memset(b, 0, sizeof *b);
}

static int
ideal_path(const AwSim *sim, BenchPath *b, AwTrajectory *tr)
{
  const AwImuStream *imu = aw_sim_imu(sim);
  const AwSimTruth *truth = aw_sim_truth(sim);
  size_t n = imu->n;
  memset(b, 0, sizeof *b);
  b->n = n;
  b->t = malloc(n * sizeof *b->t);
  b->p = malloc(n * sizeof *b->p);
  b->v = malloc(n * sizeof *b->v);
  b->q = malloc(n * sizeof *b->q);
  b->a = malloc(n * sizeof *b->a);
  b->g = malloc(n * sizeof *b->g);
  if (!b->t || !b->p || !b->v || !b->q || !b->a || !b->g)
    return -1;
  for (size_t i = 0; i < n; i++) {
    /* Perfect sync includes the IMU's group delay: each reading averages the interval
     * before its time stamp, so it belongs half that window earlier (what the fusion's
     * correlation-based sync estimates). */
    const AwSimConfig *cfg = aw_sim_config(sim);
    double td = imu->t_s[i] * (1 + truth->clock_drift) + truth->clock_offset_s -
                0.5 * cfg->imu.antialias_window_s;
    AwSimState st;
    aw_sim_eval(sim, td, &st);
    b->t[i] = td;
    aw_v3_copy(b->p[i], st.wrist_cam_m);
    aw_v3_copy(b->v[i], st.wrist_vel_cam_m_s);
    memcpy(b->q[i], st.q_cam_body, sizeof b->q[i]);
    aw_v3_copy(b->a[i], imu->accel_m_s2[i]);
    aw_v3_copy(b->g[i], imu->gyro_rad_s[i]);
  }
  memset(tr, 0, sizeof *tr);
  tr->n = n;
  tr->t_s = b->t;
  tr->pos_m = (const double (*)[3])b->p;
  tr->vel_m_s = (const double (*)[3])b->v;
  tr->q_f_body = (const double (*)[4])b->q;
  tr->accel_body_m_s2 = (const double (*)[3])b->a;
  tr->gyro_body_rad_s = (const double (*)[3])b->g;
  /* Up in the camera frame: the grav frame's z through R_cam_grav. */
  for (int k = 0; k < 3; k++)
    tr->up[k] = truth->R_cam_grav[k][2];
  tr->sync_offset_s = truth->clock_offset_s;
  tr->sync_confidence = 1.0;
  tr->accel_range_m_s2 = imu->meta.accel_range_m_s2;
  tr->gyro_range_rad_s = imu->meta.gyro_range_rad_s;
  return 0;
}

typedef struct {
  size_t n, n_full;
  double *top_ms, *imp_ms, *tempo_pct, *hand_pct, *club_pct, *club_full_pct;
  size_t missed, found;
} Errs;

/* Full release at impact, as the lever model means it (README "Club-head speed"): the shaft
 * continues the lead arm, so the club head moves the same way as the hands. Taken from the
 * simulator's exact motion just before contact: the club head's and the wrist's velocities
 * within 10 degrees of each other. At 10 degrees, adding the speeds along one line overstates
 * the head's speed by at most 1 - cos 10 deg = 1.5 %, well inside the 8 % goal. */
#define FULL_RELEASE_MAX_DEG 10.0

static bool
released_fully(const AwSim *sim, const AwSimSwing *ts, double *angle_deg)
{
  AwSimState a, b, m;
  double t = ts->t_impact_s - 1e-4;
  aw_sim_eval(sim, t - 1e-5, &a);
  aw_sim_eval(sim, t + 1e-5, &b);
  aw_sim_eval(sim, t, &m);
  double vh[3];
  aw_v3_sub(vh, b.club_cam_m, a.club_cam_m);
  double c = aw_v3_dot(vh, m.wrist_vel_cam_m_s) / (aw_v3_norm(vh) * aw_v3_norm(m.wrist_vel_cam_m_s));
  *angle_deg = aw_rad_to_deg(acos(fmax(-1.0, fmin(1.0, c))));
  return *angle_deg <= FULL_RELEASE_MAX_DEG;
}

static void
errs_row(const char *name, Errs *e, const char *goal_top)
{
  printf("%-10s %4zu/%-4zu  top %5.1f/%5.1f ms  impact %5.1f/%5.1f ms  tempo %4.1f %%  "
         "hand %4.1f %%  club %4.1f %%\n",
         name, e->found, e->found + e->missed, arcwise_bench_quantile(e->top_ms, e->n, 0.5),
         arcwise_bench_quantile(e->top_ms, e->n, 0.9), arcwise_bench_quantile(e->imp_ms, e->n, 0.5),
         arcwise_bench_quantile(e->imp_ms, e->n, 0.9), arcwise_bench_quantile(e->tempo_pct, e->n, 0.5),
         arcwise_bench_quantile(e->hand_pct, e->n, 0.5), arcwise_bench_quantile(e->club_pct, e->n, 0.5));
  (void)goal_top;
}

static void
usage(FILE *out)
{
  fprintf(out,
          "Usage: arcwise bench analysis [--n N] [--sessions K] [--seed S]\n"
          "\n"
          "Simulates N single swings (levels easy, normal, hard in turn; face-on and\n"
          "down-the-line in turn; default 60) and K continuous sessions of 10 shots with\n"
          "waggles, practice swings and walking (default 10), analyses each and prints the\n"
          "median / 90th percentile of the absolute event errors, median relative errors of\n"
          "tempo, hand speed and club-head speed, and how many swings were found and how many\n"
          "motions were wrongly taken for swings.\n"
          "Estimator 'ideal': the true hand path with the simulated IMU readings (the analysis\n"
          "alone, as if the fusion were perfect). Estimator 'fused': the whole pipeline from\n"
          "the simulated capture files (aw_analyze_capture: fusion, masked fusions, analysis).\n");
}

int
arcwise_bench_analysis(int argc, char **argv)
{
  int n_swings = 60, n_sessions = 10;
  unsigned long seed0 = 1000;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      usage(stdout);
      return 0;
    } else if (strcmp(argv[i], "--n") == 0 && i + 1 < argc) {
      n_swings = atoi(argv[++i]);
    } else if (strcmp(argv[i], "--sessions") == 0 && i + 1 < argc) {
      n_sessions = atoi(argv[++i]);
    } else if (strcmp(argv[i], "--seed") == 0 && i + 1 < argc) {
      seed0 = strtoul(argv[++i], NULL, 10);
    } else {
      return arcwise_cli_usage_error("bench analysis", "unknown option '%s'", argv[i]);
    }
  }
  if (n_swings < 0 || n_swings > 10000 || n_sessions < 0 || n_sessions > 1000)
    return arcwise_cli_usage_error("bench analysis", "--n 0..10000, --sessions 0..1000");

  Errs e[2] = { { 0 }, { 0 } };
  size_t cap = (size_t)n_swings + 1;
  for (int est = 0; est < 2; est++) {
    e[est].top_ms = calloc(cap, sizeof(double));
    e[est].imp_ms = calloc(cap, sizeof(double));
    e[est].tempo_pct = calloc(cap, sizeof(double));
    e[est].hand_pct = calloc(cap, sizeof(double));
    e[est].club_pct = calloc(cap, sizeof(double));
    e[est].club_full_pct = calloc(cap, sizeof(double));
  }
  size_t n_full_release = 0;
  double release_angle_max = 0;
  size_t occl_phases = 0, occl_imu = 0, clear_still = 0, clear_still_cam = 0;
  int rc = 0;
  for (int k = 0; k < n_swings; k++) {
    AwSimConfig cfg;
    aw_sim_config_default(&cfg, (AwSimLevel)(k % 3));
    cfg.seed = seed0 + (uint64_t)k;
    cfg.view = (k / 3) % 2 ? AW_SIM_DOWN_THE_LINE : AW_SIM_FACE_ON;
    cfg.left_handed = (k % 5) == 4;
    AwSim *sim = NULL;
    AwError err;
    if (aw_sim_new(&cfg, &sim, &err) != AW_OK) {
      fprintf(stderr, "simulation %d failed: %s\n", k, err.message);
      rc = 1;
      continue;
    }
    const AwSimTruth *truth = aw_sim_truth(sim);
    const AwSimSwing *ts = &truth->swings[0];
    AwAnalysisSettings set;
    aw_analysis_settings_default(&set);
    set.handed = ts->style.left_handed ? AW_HANDED_LEFT : AW_HANDED_RIGHT;
    set.club_length_m = ts->style.club_length_m;
    double rel_deg = NAN;
    bool full = released_fully(sim, ts, &rel_deg);
    n_full_release += full;
    if (rel_deg > release_angle_max)
      release_angle_max = rel_deg;
    for (int est = 0; est < 2; est++) {
      BenchPath bp = { 0 };
      AwTrajectory tr;
      AwAnalysis *an = NULL;
      AwFusedPath *fused = NULL;
      AwStatus st;
      if (est == 0)
        st = ideal_path(sim, &bp, &tr) == 0 ? aw_analyze(&tr, &set, &an, &err) : AW_ERR_NO_MEMORY;
      else
        st = aw_analyze_capture(aw_sim_imu(sim), aw_sim_depth(sim), NULL, &set, &an, &fused, &err);
      if (st == AW_OK) {
        ArcwiseSwingErrors se;
        const AwSwing *best = arcwise_bench_swing_errors(ts, an, &se);
        double tempo_true = (ts->t_top_s - ts->t_takeaway_s) / (ts->t_impact_s - ts->t_top_s);
        Errs *E = &e[est];
        E->found++;
        size_t i = E->n++;
        E->top_ms[i] = se.top_ms;
        E->imp_ms[i] = se.impact_ms;
        E->tempo_pct[i] = se.tempo_pct;
        E->hand_pct[i] = se.hand_pct;
        E->club_pct[i] = se.club_pct;
        if (full)
          E->club_full_pct[E->n_full++] = se.club_pct;
        if (est == 1) {
          /* Sensor trust against the simulator's own record of which frames were lost. */
          const AwDepthStream *dep = aw_sim_depth(sim);
          for (int p = 0; p < AW_PHASE_COUNT_; p++) {
            const AwPhase *ph = &best->phases[p];
            size_t nf = 0, lost = 0;
            for (size_t f = 0; f < dep->n; f++)
              if (dep->t_s[f] >= ph->start_s && dep->t_s[f] <= ph->end_s) {
                nf++;
                lost += truth->frame_kind[f] == AW_SIM_FRAME_OCCLUDED_MISSING ||
                        truth->frame_kind[f] == AW_SIM_FRAME_OCCLUDED_SNAPPED;
              }
            if (nf > 0 && lost * 2 > nf) {
              occl_phases++;
              occl_imu += ph->dominance == AW_DOMINANCE_IMU;
            } else if (nf > 0 && lost == 0 && (p == AW_PHASE_ADDRESS || p == AW_PHASE_FINISH)) {
              clear_still++;
              clear_still_cam += ph->dominance == AW_DOMINANCE_CAMERA;
            }
            if (getenv("ARCWISE_BENCH_VERBOSE"))
              fprintf(stderr, "    phase %d lost %zu/%zu dom %d dev cm %.2f im %.2f info %.2f\n", p, lost, nf,
                      ph->dominance, 100 * ph->dev_camera_masked_m, 100 * ph->dev_imu_masked_m,
                      ph->cam_info_share_mean);
          }
        }
        if (getenv("ARCWISE_BENCH_VERBOSE"))
          fprintf(stderr,
                  "%3d %-6s %s top %+6.1f imp %+6.1f ms take %+6.1f tempo %.2f/%.2f hand "
                  "%.2f/%.2f club %.1f/%.1f est %d\n",
                  k, aw_sim_level_name(cfg.level), est ? "fused" : "ideal",
                  1e3 * (best->events[AW_EVENT_TOP].t_s - ts->t_top_s),
                  1e3 * (best->events[AW_EVENT_IMPACT].t_s - ts->t_impact_s),
                  1e3 * (best->events[AW_EVENT_TAKEAWAY].t_s - ts->t_takeaway_s),
                  best->metrics[AW_METRIC_TEMPO_RATIO], tempo_true,
                  best->metrics[AW_METRIC_HAND_SPEED_IMPACT_M_S], ts->hand_speed_impact_m_s,
                  best->metrics[AW_METRIC_CLUB_SPEED_IMPACT_M_S], ts->club_speed_impact_m_s,
                  best->events[AW_EVENT_IMPACT].estimated);
      } else {
        e[est].missed++;
        if (getenv("ARCWISE_BENCH_VERBOSE"))
          fprintf(stderr, "%3d %s missed: %s\n", k, est ? "fused" : "ideal", err.message);
      }
      aw_analysis_free(an);
      aw_fused_path_free(fused);
      bench_path_free(&bp);
    }
    aw_sim_free(sim);
  }
  printf("Swing analysis on %d simulated swings (median/90th percentile of |error|; relative "
         "errors median)\n", n_swings);
  printf("goal               top 10/20 ms  impact 10/20 ms  tempo 3 %%  hand 5 %%  club 8 %%\n");
  errs_row("ideal", &e[0], "");
  errs_row("fused", &e[1], "");
  for (int est = 0; est < 2; est++)
    printf("Club-head speed where the swing releases fully (%s; club head and hands moving within "
           "%.0f deg of each other at impact: %zu of %d swings, largest angle %.1f deg): median "
           "error %.1f %% (goal 8 %%)\n",
           est ? "fused" : "ideal", FULL_RELEASE_MAX_DEG, n_full_release, n_swings,
           release_angle_max, arcwise_bench_quantile(e[est].club_full_pct, e[est].n_full, 0.5));
  printf("Sensor trust (fused): %zu of %zu phases with most camera frames occluded came out "
         "IMU-dominated (%.1f %%, goal 90 %%); %zu of %zu still phases in clear view "
         "camera-dominated (%.1f %%)\n",
         occl_imu, occl_phases, occl_phases ? 100.0 * (double)occl_imu / (double)occl_phases : (double)NAN,
         clear_still_cam, clear_still,
         clear_still ? 100.0 * (double)clear_still_cam / (double)clear_still : (double)NAN);

  /* Continuous sessions. */
  for (int est = 0; est < 2 && n_sessions > 0; est++) {
    size_t truth_total = 0, truth_found = 0, false_found = 0, practice_ok = 0, n_practice = 0;
    size_t full_as_practice = 0, practice_unflagged = 0, struck_ok = 0;
    for (int k = 0; k < n_sessions; k++) {
      AwSimConfig cfg;
      aw_sim_config_default(&cfg, (AwSimLevel)(k % 3));
      cfg.seed = seed0 + 50000 + (uint64_t)k;
      cfg.n_swings = 10;
      cfg.session_extras = true;
      cfg.view = k % 2 ? AW_SIM_DOWN_THE_LINE : AW_SIM_FACE_ON;
      cfg.left_handed = k % 4 == 3;
      AwSim *sim = NULL;
      AwError err;
      if (aw_sim_new(&cfg, &sim, &err) != AW_OK) {
        fprintf(stderr, "session %d failed: %s\n", k, err.message);
        rc = 1;
        continue;
      }
      const AwSimTruth *truth = aw_sim_truth(sim);
      BenchPath bp = { 0 };
      AwTrajectory tr;
      AwAnalysis *an = NULL;
      AwFusedPath *fused = NULL;
      AwAnalysisSettings set;
      aw_analysis_settings_default(&set);
      set.handed = cfg.left_handed ? AW_HANDED_LEFT : AW_HANDED_RIGHT;
      AwStatus st;
      if (est == 0)
        st = ideal_path(sim, &bp, &tr) == 0 ? aw_analyze(&tr, &set, &an, &err) : AW_ERR_NO_MEMORY;
      else
        st = aw_analyze_capture(aw_sim_imu(sim), aw_sim_depth(sim), NULL, &set, &an, &fused, &err);
      if (st == AW_OK) {
        for (size_t s = 0; s < truth->n_swings; s++) {
          const AwSimSwing *ts = &truth->swings[s];
          truth_total++;
          n_practice += ts->practice;
          bool found = false;
          for (size_t j = 0; j < an->n_swings && !found; j++)
            if (fabs(an->swings[j].events[AW_EVENT_IMPACT].t_s - ts->t_impact_s) < 0.15) {
              found = true;
              truth_found++;
              practice_ok += ts->practice && an->swings[j].practice;
              full_as_practice += !ts->practice && an->swings[j].practice;
              practice_unflagged += ts->practice && !an->swings[j].practice;
              struck_ok += !ts->practice && !an->swings[j].practice;
            }
          if (!found && getenv("ARCWISE_BENCH_VERBOSE"))
            fprintf(stderr, "%s session %d (seed %llu, %s): missed %s swing %zu at %.2f s\n",
                    est ? "fused" : "ideal", k, (unsigned long long)cfg.seed,
                    aw_sim_level_name(cfg.level),
                    ts->practice ? (ts->half ? "practice half" : "practice") : "full", s,
                    ts->t_impact_s);
        }
        for (size_t j = 0; j < an->n_swings; j++) {
          bool match = false;
          for (size_t s = 0; s < truth->n_swings; s++)
            match |= fabs(an->swings[j].events[AW_EVENT_IMPACT].t_s - truth->swings[s].t_impact_s) < 0.15;
          if (!match) {
            false_found++;
            if (getenv("ARCWISE_BENCH_VERBOSE"))
              fprintf(stderr, "%s session %d: false swing at %.2f s\n", est ? "fused" : "ideal",
                      k, an->swings[j].events[AW_EVENT_IMPACT].t_s);
          }
        }
      } else {
        truth_total += truth->n_swings;
        fprintf(stderr, "%s session %d: %s\n", est ? "fused" : "ideal", k, err.message);
      }
      aw_analysis_free(an);
      aw_fused_path_free(fused);
      bench_path_free(&bp);
      aw_sim_free(sim);
    }
    /* The figure, spelled out: every swing found, nothing else taken for one, and
     * the practice flag right both ways. Practice flags count over found swings only. */
    size_t n_struck = truth_total - n_practice;
    size_t practice_found = practice_ok + practice_unflagged;
    printf("Continuous recordings (%s): %d recordings of 10 shots with waggles, practice swings "
           "and walks; %zu swings (%zu struck, %zu practice); found %zu, missed %zu, false %zu; "
           "practice flag right %zu (practice %zu/%zu, struck %zu/%zu), wrong %zu (practice "
           "unflagged %zu, struck flagged practice %zu)\n",
           est ? "fused" : "ideal", n_sessions, truth_total, n_struck, n_practice, truth_found,
           truth_total - truth_found, false_found, practice_ok + struck_ok, practice_ok,
           practice_found, struck_ok, truth_found - practice_found,
           practice_unflagged + full_as_practice, practice_unflagged, full_as_practice);
    printf("  acceptance (%s): every swing found %s (%zu/%zu); no waggle, walk or handling taken "
           "for a swing %s (%zu taken); practice flag right %zu/%zu (%.1f %%: practice swings "
           "flagged %zu/%zu, struck shots left unflagged %zu/%zu)\n",
           est ? "fused" : "ideal", truth_found == truth_total ? "yes" : "NO", truth_found,
           truth_total, false_found == 0 ? "yes" : "NO", false_found, practice_ok + struck_ok,
           truth_found, truth_found ? 100.0 * (double)(practice_ok + struck_ok) / (double)truth_found : (double)NAN,
           practice_ok, practice_found, struck_ok, truth_found - practice_found);
  }
  for (int est = 0; est < 2; est++) {
    free(e[est].top_ms); free(e[est].imp_ms); free(e[est].tempo_pct); free(e[est].hand_pct);
    free(e[est].club_pct);
    free(e[est].club_full_pct);
  }
  return rc;
}
