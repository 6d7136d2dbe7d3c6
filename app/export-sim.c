/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "export-sim.h"

#include "arcwise/math3.h"

#include <stdlib.h>
#include <string.h>

void
arcwise_sim_path_free(AwFusedPath *p)
{
  if (p == NULL)
    return;
  free(p->t_s);
  free(p->pos_cam_m);
  free(p->vel_cam_m_s);
  free(p->q_cam_body);
  free(p->pos_sigma_cam_m);
  free(p->cam_info_share);
  free(p->accel_body_m_s2);
  free(p->gyro_body_rad_s);
  free(p->flags);
  free(p);
}

AwFusedPath *
arcwise_sim_path_new(const AwSim *sim)
{
  const AwImuStream *imu = aw_sim_imu(sim);
  const AwSimTruth *truth = aw_sim_truth(sim);
  const AwSimConfig *cfg = aw_sim_config(sim);
  size_t n = imu->n;
  AwFusedPath *p = calloc(1, sizeof *p);
  if (p == NULL)
    return NULL;
  p->n = n;
  p->t_s = malloc(n * sizeof *p->t_s);
  p->pos_cam_m = malloc(n * sizeof *p->pos_cam_m);
  p->vel_cam_m_s = malloc(n * sizeof *p->vel_cam_m_s);
  p->q_cam_body = malloc(n * sizeof *p->q_cam_body);
  p->pos_sigma_cam_m = malloc(n * sizeof *p->pos_sigma_cam_m);
  p->cam_info_share = malloc(n * sizeof *p->cam_info_share);
  p->accel_body_m_s2 = malloc(n * sizeof *p->accel_body_m_s2);
  p->gyro_body_rad_s = malloc(n * sizeof *p->gyro_body_rad_s);
  p->flags = malloc(n * sizeof *p->flags);
  if (!p->t_s || !p->pos_cam_m || !p->vel_cam_m_s || !p->q_cam_body || !p->pos_sigma_cam_m ||
      !p->cam_info_share || !p->accel_body_m_s2 || !p->gyro_body_rad_s || !p->flags) {
    arcwise_sim_path_free(p);
    return NULL;
  }
  for (size_t i = 0; i < n; i++) {
    /* The IMU's time stamp on the depth clock, less half its averaging window (the reading
     * belongs to the middle of the interval it averages). */
    double td = imu->t_s[i] * (1 + truth->clock_drift) + truth->clock_offset_s -
                0.5 * cfg->imu.antialias_window_s;
    AwSimState st;
    aw_sim_eval(sim, td, &st);
    p->t_s[i] = td;
    aw_v3_copy(p->pos_cam_m[i], st.wrist_cam_m);
    aw_v3_copy(p->vel_cam_m_s[i], st.wrist_vel_cam_m_s);
    memcpy(p->q_cam_body[i], st.q_cam_body, sizeof p->q_cam_body[i]);
    aw_v3_copy(p->accel_body_m_s2[i], imu->accel_m_s2[i]);
    aw_v3_copy(p->gyro_body_rad_s[i], imu->gyro_rad_s[i]);
    bool hidden = false;
    for (size_t k = 0; k < truth->n_occlusions; k++)
      hidden = hidden || (td >= truth->occlusions[k].t0_s && td <= truth->occlusions[k].t1_s);
    /* 5 mm where the camera sees the hands, 25 mm where only the IMU carries them: the order
     * of magnitude of a depth keypoint and of a second of IMU drift (REFERENCES.md 7, 8). */
    double sig = hidden ? 0.025 : 0.005;
    aw_v3_set(p->pos_sigma_cam_m[i], sig, sig, sig);
    p->cam_info_share[i] = hidden ? 0.05 : 0.9;
    p->flags[i] = hidden ? AW_FUSED_CAM_MISSING : AW_FUSED_CAM_ACCEPTED;
  }
  aw_mat_to_quat(p->report.q_cam_grav, (const double (*)[3])truth->R_cam_grav);
  p->report.clock_offset_s = truth->clock_offset_s;
  p->report.clock_drift = truth->clock_drift;
  p->report.clock_confidence = 1.0;
  p->report.gravity_m_s2 = truth->gravity_m_s2;
  return p;
}
