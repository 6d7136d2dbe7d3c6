/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-demo-swings.h"

#include <gio/gio.h>
#include <math.h>
#include <string.h>

#include "arcwise/math3.h"
#include "arcwise/sim.h"

/* Camera-fix sigma away from gaps and the accelerometer bias that grows the gap sigma: the
 * 40 mg uncorrected bias of REFERENCES.md §8, a deliberately pessimistic demo figure. */
#define FIX_SIGMA_M 0.004
#define RESIDUAL_BIAS_M_S2 0.39

ArcwiseSwingModel *
arcwise_demo_swing_new(uint64_t seed, bool left_handed, GError **error)
{
  AwSimConfig cfg;
  aw_sim_config_default(&cfg, AW_SIM_NORMAL);
  cfg.seed = seed;
  cfg.n_swings = 1;
  cfg.left_handed = left_handed;
  cfg.truth_rate_hz = 100.0;
  AwSim *sim = NULL;
  AwError err = { 0 };
  if (aw_sim_new(&cfg, &sim, &err) != AW_OK) {
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_FAILED, "simulator: %s", err.message);
    return NULL;
  }
  const AwSimTruth *tr = aw_sim_truth(sim);
  if (tr->n_swings < 1 || tr->n < 2) {
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_FAILED, "simulator: no swing in the recording");
    aw_sim_free(sim);
    return NULL;
  }
  const AwSimSwing *sw = &tr->swings[0];
  size_t n = tr->n;

  /* A fused-path-shaped view of the truth. */
  AwFusedPath p;
  memset(&p, 0, sizeof p);
  p.n = n;
  p.t_s = tr->t_s;
  p.pos_cam_m = tr->wrist_cam_m;
  p.vel_cam_m_s = tr->wrist_vel_cam_m_s;
  p.q_cam_body = tr->q_cam_body;
  double (*sigma)[3] = g_malloc_n(n, sizeof(double[3]));
  double *share = g_new(double, n);
  uint32_t *flags = g_new(uint32_t, n);
  p.pos_sigma_cam_m = sigma;
  p.cam_info_share = share;
  p.flags = flags;
  aw_mat_to_quat(p.report.q_cam_grav, (const double (*)[3])tr->R_cam_grav);
  for (size_t i = 0; i < n; i++) {
    double t = tr->t_s[i], gap_from = NAN, gap_to = NAN;
    for (size_t k = 0; k < tr->n_occlusions; k++)
      if (t >= tr->occlusions[k].t0_s && t <= tr->occlusions[k].t1_s) {
        gap_from = t - tr->occlusions[k].t0_s;
        gap_to = tr->occlusions[k].t1_s - t;
      }
    if (isfinite(gap_from)) {
      /* The smoother pins both ends of a gap; the widest point is the middle. */
      double tt = fmin(gap_from, gap_to);
      double s = FIX_SIGMA_M + 0.5 * RESIDUAL_BIAS_M_S2 * tt * tt;
      sigma[i][0] = sigma[i][1] = sigma[i][2] = s;
      share[i] = 0.05;
      flags[i] = AW_FUSED_CAM_MISSING;
    } else {
      sigma[i][0] = sigma[i][1] = FIX_SIGMA_M * 0.6;
      sigma[i][2] = FIX_SIGMA_M;
      share[i] = 0.85;
      flags[i] = AW_FUSED_CAM_ACCEPTED;
    }
  }
  ArcwiseSwingEvents ev = {
    .takeaway_s = sw->t_takeaway_s, .top_s = sw->t_top_s, .impact_s = sw->t_impact_s,
    .finish_s = sw->t_finish_s,
  };
  double t0 = sw->t_address_s - 0.25, t1 = sw->t_end_s;
  ArcwiseSwingModel *m = arcwise_swing_model_new_from_fused(&p, t0, t1, &ev, NULL, error);
  if (m != NULL) {
    /* The club head from the simulator's truth, on the same samples. */
    size_t first = 0;
    while (first < n && tr->t_s[first] < t0)
      first++;
    arcwise_swing_model_set_club_cam(m, (const double (*)[3])(tr->club_cam_m + first));
    /* The sheet's numbers come from the engine's analysis of this path, as for a stored
     * swing. The demo has no masked fusions, so which sensor carried each phase stays
     * unknown. */
    AwTrajectory traj;
    aw_trajectory_from_fused(&p, 0.0, 0.0, &traj);
    AwAnalysisSettings as;
    aw_analysis_settings_default(&as);
    as.handed = left_handed ? AW_HANDED_LEFT : AW_HANDED_RIGHT;
    AwAnalysis *an = NULL;
    AwError aerr = { 0 };
    if (aw_analyze(&traj, &as, &an, &aerr) == AW_OK && an->n_swings > 0)
      arcwise_swing_model_set_analysis(m, &an->swings[0]);
    aw_analysis_free(an);
  }
  g_free(sigma);
  g_free(share);
  g_free(flags);
  aw_sim_free(sim);
  return m;
}
