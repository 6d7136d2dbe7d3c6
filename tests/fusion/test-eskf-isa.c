/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The filter and smoother's two builds (engine/fusion/eskf-dispatch.c: the baseline instruction
 * set, and AVX2) must give bit-identical results: the whole fusion of simulated swings
 * at every level, once with each, compared byte for byte (path arrays) and field by field
 * (report). Both builds keep floating-point contraction off and GCC vectorises without
 * reassociating (GCC manual, "Optimize Options": -ffp-contract, -fassociative-math), so any
 * difference is a bug in the build or the dispatch. Skips (77) on a processor without AVX2,
 * where only one build can run. */
#include "testutil.h"

#include "arcwise/fusion.h"
#include "arcwise/sim.h"
#include "fusion-internal.h"

#include <stdio.h>
#include <string.h>

static bool
same(const void *a, const void *b, size_t bytes)
{
  return memcmp(a, b, bytes) == 0;
}

static void
compare(const AwFusedPath *a, const AwFusedPath *b, const char *what)
{
  size_t n = a->n;
  AW_CHECK(a->n == b->n);
  if (a->n != b->n) return;
  bool ok = same(a->t_s, b->t_s, sizeof *a->t_s * n) &&
            same(a->pos_cam_m, b->pos_cam_m, sizeof *a->pos_cam_m * n) &&
            same(a->vel_cam_m_s, b->vel_cam_m_s, sizeof *a->vel_cam_m_s * n) &&
            same(a->q_cam_body, b->q_cam_body, sizeof *a->q_cam_body * n) &&
            same(a->pos_sigma_cam_m, b->pos_sigma_cam_m, sizeof *a->pos_sigma_cam_m * n) &&
            same(a->cam_info_share, b->cam_info_share, sizeof *a->cam_info_share * n) &&
            same(a->flags, b->flags, sizeof *a->flags * n);
  const AwFusionReport *ra = &a->report, *rb = &b->report;
  ok = ok && ra->clock_offset_s == rb->clock_offset_s && ra->clock_drift == rb->clock_drift &&
       same(ra->q_cam_grav, rb->q_cam_grav, sizeof ra->q_cam_grav) &&
       same(ra->accel_bias_m_s2, rb->accel_bias_m_s2, sizeof ra->accel_bias_m_s2) &&
       same(ra->gyro_bias_rad_s, rb->gyro_bias_rad_s, sizeof ra->gyro_bias_rad_s) &&
       same(ra->lever_arm_body_m, rb->lever_arm_body_m, sizeof ra->lever_arm_body_m) &&
       ra->cam_frames_used == rb->cam_frames_used &&
       ra->cam_frames_rejected == rb->cam_frames_rejected &&
       ra->zupt_samples == rb->zupt_samples && ra->gate_recoveries == rb->gate_recoveries &&
       ra->lever_arm_held == rb->lever_arm_held &&
       (ra->cam_nis_mean == rb->cam_nis_mean || (isnan(ra->cam_nis_mean) && isnan(rb->cam_nis_mean)));
  if (!ok) {
    double worst = 0;
    size_t wi = 0;
    for (size_t i = 0; i < n; i++)
      for (int k = 0; k < 3; k++) {
        double d = fabs(a->pos_cam_m[i][k] - b->pos_cam_m[i][k]);
        if (d > worst) { worst = d; wi = i; }
      }
    fprintf(stderr, "%s: the two builds differ (position by up to %.3g m at sample %zu)\n", what,
            worst, wi);
  }
  AW_CHECK(ok);
}

int
main(void)
{
  aw_fusion_eskf_force_generic(false);
  if (!aw_fusion_eskf_uses_avx2()) {
    AW_TEST_SKIP("this processor lacks AVX2: only the baseline build can run");
  }
  const AwSimLevel levels[] = { AW_SIM_EASY, AW_SIM_NORMAL, AW_SIM_HARD };
  int compared = 0;
  for (int k = 0; k < 9; k++) {
    AwSimConfig cfg;
    aw_sim_config_default(&cfg, levels[k % 3]);
    cfg.seed = 41000 + (uint64_t)k;
    AwSim *sim = NULL;
    AwError err = { 0 };
    AW_CHECK(aw_sim_new(&cfg, &sim, &err) == AW_OK);
    if (!sim) continue;
    AwFusedPath *p[2] = { NULL, NULL };
    for (int v = 0; v < 2; v++) {
      aw_fusion_eskf_force_generic(v == 1);
      AW_CHECK(aw_fusion_eskf_uses_avx2() == (v == 0));
      AW_CHECK(aw_fuse(aw_sim_imu(sim), aw_sim_depth(sim), NULL, &p[v], &err) == AW_OK);
    }
    aw_fusion_eskf_force_generic(false);
    char what[64];
    snprintf(what, sizeof what, "seed %d (%s)", 41000 + k, aw_sim_level_name(levels[k % 3]));
    if (p[0] && p[1]) {
      compare(p[0], p[1], what);
      compared++;
    }
    aw_fused_path_free(p[0]);
    aw_fused_path_free(p[1]);
    aw_sim_free(sim);
  }
  fprintf(stderr, "%d swings fused with both builds\n", compared);
  AW_CHECK(compared == 9);
  return AW_TEST_END();
}
