/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Swing finding through the whole pipeline (aw_analyze_capture: fusion, masked fusions,
 * analysis) on simulated continuous recordings with waggles, practice half- and full swings
 * and walking between shots: every swing found once and nothing else taken for one (the
 * acceptance of issue 5, on a smaller set than `arcwise bench analysis`, whose seeds these are
 * not). The floor is asserted on all three levels (the hard one clips the IMU and hides the
 * hands for long stretches), right- and left-handed, both views. */
#include "testutil.h"

#include "arcwise/analysis.h"
#include "arcwise/math3.h"
#include "arcwise/sim.h"

#include <math.h>
#include <stdio.h>

static void
check(uint64_t seed, AwSimLevel level, AwSimView view, bool left, int shots)
{
  AwSimConfig cfg;
  aw_sim_config_default(&cfg, level);
  cfg.seed = seed;
  cfg.n_swings = shots;
  cfg.session_extras = true;
  cfg.view = view;
  cfg.left_handed = left;
  AwSim *sim = NULL;
  AwError err;
  AW_CHECK(aw_sim_new(&cfg, &sim, &err) == AW_OK);
  if (sim == NULL)
    return;
  const AwSimTruth *truth = aw_sim_truth(sim);
  AwAnalysisSettings set;
  aw_analysis_settings_default(&set);
  set.handed = left ? AW_HANDED_LEFT : AW_HANDED_RIGHT;
  AwAnalysis *an = NULL;
  AwFusedPath *fused = NULL;
  AwStatus st = aw_analyze_capture(aw_sim_imu(sim), aw_sim_depth(sim), NULL, &set, &an, &fused,
                                   &err);
  AW_CHECK(st == AW_OK);
  if (st != AW_OK)
    fprintf(stderr, "seed %llu: %s\n", (unsigned long long)seed, err.message);
  size_t found = 0, wrong = 0, lost = 0, flag_wrong = 0;
  for (size_t s = 0; an != NULL && s < truth->n_swings; s++) {
    int hits = 0;
    for (size_t j = 0; j < an->n_swings; j++)
      if (fabs(an->swings[j].events[AW_EVENT_IMPACT].t_s - truth->swings[s].t_impact_s) < 0.15) {
        hits++;
        if (an->swings[j].practice != truth->swings[s].practice) {
          flag_wrong++;
          fprintf(stderr, "seed %llu: %s swing %zu at %.2f s flagged %s\n",
                  (unsigned long long)seed, truth->swings[s].practice ? "practice" : "struck", s,
                  truth->swings[s].t_impact_s, an->swings[j].practice ? "practice" : "struck");
        }
      }
    if (hits == 0) {
      /* A swing missed where the fused path strays from the true hand path by more than
       * 0.25 m (the analysis asks the hands to come back within 0.35 m of address) is a
       * failure of the fusion, which its own tests own: reported, not counted as a miss. */
      double worst = 0;
      const AwSimSwing *ts = &truth->swings[s];
      for (size_t i = 0; i < fused->n; i++) {
        if (fused->t_s[i] < ts->t_takeaway_s - 0.5 || fused->t_s[i] > ts->t_finish_s + 0.5)
          continue;
        AwSimState st_true;
        aw_sim_eval(sim, fused->t_s[i], &st_true);
        worst = fmax(worst, aw_v3_dist(fused->pos_cam_m[i], st_true.wrist_cam_m));
      }
      if (worst > 0.25) {
        fprintf(stderr, "seed %llu: swing %zu at %.2f s missed where the fused path is %.2f m "
                "from the true hand path (a fusion failure, not counted)\n",
                (unsigned long long)seed, s, ts->t_impact_s, worst);
        lost++;
        continue;
      }
    }
    if (hits != 1)
      fprintf(stderr, "seed %llu: %s swing %zu at %.2f s found %d times\n",
              (unsigned long long)seed, truth->swings[s].practice ? "practice" : "struck", s,
              truth->swings[s].t_impact_s, hits);
    found += hits == 1;
  }
  for (size_t j = 0; an != NULL && j < an->n_swings; j++) {
    bool match = false;
    for (size_t s = 0; s < truth->n_swings; s++)
      match |= fabs(an->swings[j].events[AW_EVENT_IMPACT].t_s - truth->swings[s].t_impact_s) < 0.15;
    if (!match) {
      wrong++;
      fprintf(stderr, "seed %llu: a swing at %.2f s that the player never made\n",
              (unsigned long long)seed, an->swings[j].events[AW_EVENT_IMPACT].t_s);
    }
  }
  fprintf(stderr, "seed %llu (%s, %s, %s-handed): %zu of %zu swings found, %zu false, %zu "
          "lost by the fusion\n", (unsigned long long)seed, aw_sim_level_name(level),
          aw_sim_view_name(view), left ? "left" : "right", found, truth->n_swings, wrong, lost);
  AW_CHECK(found + lost == truth->n_swings);
  /* A fusion failure may excuse one miss per recording, no more. */
  AW_CHECK(lost <= 1);
  AW_CHECK(wrong == 0);
  /* The practice flag both ways (README "Finding swings"): `bench analysis` measures some 4-10 %
   * of struck shots called practice on held-out seeds (a contact lost in a rough downswing or
   * on a large change of the force's level)
   * and every practice swing flagged, so one wrong flag per recording is allowed, no more. */
  fprintf(stderr, "seed %llu: practice flag wrong on %zu swings\n", (unsigned long long)seed,
          flag_wrong);
  AW_CHECK(flag_wrong <= 1);
  aw_analysis_free(an);
  aw_fused_path_free(fused);
  aw_sim_free(sim);
}

int
main(void)
{
  check(7301, AW_SIM_EASY, AW_SIM_FACE_ON, false, 6);
  check(7302, AW_SIM_NORMAL, AW_SIM_DOWN_THE_LINE, false, 6);
  check(7303, AW_SIM_NORMAL, AW_SIM_FACE_ON, true, 6);
  check(7304, AW_SIM_HARD, AW_SIM_DOWN_THE_LINE, false, 6);
  check(7305, AW_SIM_HARD, AW_SIM_FACE_ON, true, 6);
  return AW_TEST_END();
}
