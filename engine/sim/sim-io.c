/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Writing a simulation to a folder: the two capture streams and the truth files described in
 * README.md ("Simulated data"). Every file goes to a temporary name beside its target and is
 * renamed into place, so an interrupted run never leaves a half-written file. The capture
 * streams go through the capture module's writers. */
#include "sim-internal.h"

#include "arcwise/units.h"

#include <errno.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct {
  FILE *f;
  char path[1024];
  char tmp[1100];
} OutFile;

static AwStatus
out_open(OutFile *o, const char *dir, const char *name, AwError *err)
{
  snprintf(o->path, sizeof o->path, "%s/%s", dir, name);
  snprintf(o->tmp, sizeof o->tmp, "%s.partial", o->path);
  o->f = fopen(o->tmp, "wb");
  if (o->f == NULL)
    return aw_error_set(err, AW_ERR_IO, o->path, 0, 0, "cannot create: %s", strerror(errno));
  return AW_OK;
}

static AwStatus
out_close(OutFile *o, AwError *err)
{
  bool bad = ferror(o->f) != 0;
  if (fclose(o->f) != 0)
    bad = true;
  if (bad) {
    remove(o->tmp);
    return aw_error_set(err, AW_ERR_IO, o->path, 0, 0, "write failed");
  }
  if (rename(o->tmp, o->path) != 0) {
    int e = errno;
    remove(o->tmp);
    return aw_error_set(err, AW_ERR_IO, o->path, 0, 0, "cannot rename into place: %s",
                        strerror(e));
  }
  return AW_OK;
}

static const char safety_note[] =
  "# Synthetic data from the Arcwise simulator (invented motion, not a recording of anyone).\n";

static AwStatus
write_truth(const AwSim *sim, const char *dir, AwError *err)
{
  const AwSimTruth *tr = &sim->truth;
  OutFile o;
  AwStatus st = out_open(&o, dir, "truth.csv", err);
  if (st != AW_OK)
    return st;
  fputs(safety_note, o.f);
  fprintf(o.f, "# truth on the depth clock, camera optical frame (x right, y down, z forward), SI\n");
  fprintf(o.f, "# rate_hz: %.6g\n", sim->cfg.truth_rate_hz);
  fprintf(o.f, "t,wrist_x,wrist_y,wrist_z,wrist_vx,wrist_vy,wrist_vz,club_x,club_y,club_z,"
               "q_cam_body_w,q_cam_body_x,q_cam_body_y,q_cam_body_z,phase,swing\n");
  for (size_t i = 0; i < tr->n; i++)
    fprintf(o.f, "%.6f,%.6f,%.6f,%.6f,%.5f,%.5f,%.5f,%.6f,%.6f,%.6f,%.7f,%.7f,%.7f,%.7f,%s,%d\n",
            tr->t_s[i], tr->wrist_cam_m[i][0], tr->wrist_cam_m[i][1], tr->wrist_cam_m[i][2],
            tr->wrist_vel_cam_m_s[i][0], tr->wrist_vel_cam_m_s[i][1], tr->wrist_vel_cam_m_s[i][2],
            tr->club_cam_m[i][0], tr->club_cam_m[i][1], tr->club_cam_m[i][2],
            tr->q_cam_body[i][0], tr->q_cam_body[i][1], tr->q_cam_body[i][2],
            tr->q_cam_body[i][3], aw_sim_phase_name((AwSimPhase)tr->phase[i]), tr->swing[i]);
  if ((st = out_close(&o, err)) != AW_OK)
    return st;

  if ((st = out_open(&o, dir, "events.csv", err)) != AW_OK)
    return st;
  fputs(safety_note, o.f);
  fprintf(o.f, "# one row per swing; times on the depth clock (s); style as simulated\n");
  fprintf(o.f, "swing,kind,handed,t_address,t_takeaway,t_takeaway_end,t_top,t_impact,t_finish,"
               "t_end,backswing_s,downswing_s,tempo,hand_speed_impact_m_s,club_speed_impact_m_s,"
               "peak_gyro_deg_s,peak_accel_g,backswing_plane_deg,downswing_plane_deg,"
               "path_yaw_deg,arm_top_deg,hinge_top_deg,arm_length_m,club_length_m,"
               "lateral_shift_m,roll_rate_impact_deg_s,impact_speed_loss,"
               "back_plane_nx,back_plane_ny,back_plane_nz,down_plane_nx,down_plane_ny,"
               "down_plane_nz\n");
  for (size_t i = 0; i < tr->n_swings; i++) {
    const AwSimSwing *s = &tr->swings[i];
    const AwSwingStyle *y = &s->style;
    fprintf(o.f,
            "%d,%s,%s,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.4f,%.4f,%.4f,%.1f,%.3f,"
            "%.3f,%.3f,%.3f,%.3f,%.3f,%.4f,%.4f,%.4f,%.1f,%.4f,%.6f,%.6f,%.6f,%.6f,%.6f,"
            "%.6f\n",
            s->index, s->practice ? (s->half ? "practice-half" : "practice") : "shot",
            y->left_handed ? "left" : "right", s->t_address_s, s->t_takeaway_s,
            s->takeaway_end_s, s->t_top_s, s->t_impact_s, s->t_finish_s, s->t_end_s,
            s->t_top_s - s->t_takeaway_s, s->t_impact_s - s->t_top_s,
            (s->t_top_s - s->t_takeaway_s) / (s->t_impact_s - s->t_top_s),
            s->hand_speed_impact_m_s, s->club_speed_impact_m_s,
            s->peak_gyro_rad_s * AW_DEG_PER_RAD, s->peak_accel_m_s2 / AW_GRAVITY_STANDARD_M_S2,
            y->backswing_plane_rad * AW_DEG_PER_RAD, y->downswing_plane_rad * AW_DEG_PER_RAD,
            y->path_yaw_rad * AW_DEG_PER_RAD, y->arm_top_rad * AW_DEG_PER_RAD,
            y->hinge_top_rad * AW_DEG_PER_RAD, y->arm_length_m, y->club_length_m,
            y->lateral_shift_m, y->roll_rate_impact_rad_s * AW_DEG_PER_RAD,
            s->practice ? 0.0 : y->impact_speed_loss, s->backswing_plane_normal_cam[0],
            s->backswing_plane_normal_cam[1], s->backswing_plane_normal_cam[2],
            s->downswing_plane_normal_cam[0], s->downswing_plane_normal_cam[1],
            s->downswing_plane_normal_cam[2]);
  }
  if ((st = out_close(&o, err)) != AW_OK)
    return st;

  if ((st = out_open(&o, dir, "phases.csv", err)) != AW_OK)
    return st;
  fputs(safety_note, o.f);
  fprintf(o.f, "swing,phase,t0,t1\n");
  for (size_t i = 0; i < tr->n_swings; i++) {
    const AwSimSwing *s = &tr->swings[i];
    double b[7] = { s->t_address_s, s->t_takeaway_s, s->takeaway_end_s, s->t_top_s,
                    s->t_impact_s, s->t_finish_s, s->t_end_s };
    for (int p = 0; p < 6; p++)
      fprintf(o.f, "%d,%s,%.6f,%.6f\n", s->index, aw_sim_phase_name((AwSimPhase)(p + 1)), b[p],
              b[p + 1]);
  }
  if ((st = out_close(&o, err)) != AW_OK)
    return st;

  if ((st = out_open(&o, dir, "activities.csv", err)) != AW_OK)
    return st;
  fputs(safety_note, o.f);
  fprintf(o.f, "activity,t0,t1,swing\n");
  for (size_t i = 0; i < tr->n_spans; i++)
    fprintf(o.f, "%s,%.6f,%.6f,%d\n", aw_sim_activity_name(tr->spans[i].activity),
            tr->spans[i].t0_s, tr->spans[i].t1_s, tr->spans[i].swing);
  if ((st = out_close(&o, err)) != AW_OK)
    return st;

  if ((st = out_open(&o, dir, "occlusions.csv", err)) != AW_OK)
    return st;
  fputs(safety_note, o.f);
  fprintf(o.f, "swing,where,t0,t1\n");
  for (size_t i = 0; i < tr->n_occlusions; i++)
    fprintf(o.f, "%d,%s,%.6f,%.6f\n", tr->occlusions[i].swing,
            tr->occlusions[i].top ? "top" : "follow-through", tr->occlusions[i].t0_s,
            tr->occlusions[i].t1_s);
  if ((st = out_close(&o, err)) != AW_OK)
    return st;

  if ((st = out_open(&o, dir, "frames.csv", err)) != AW_OK)
    return st;
  fputs(safety_note, o.f);
  fprintf(o.f, "t,kind\n");
  for (size_t i = 0; i < sim->depth->n; i++)
    fprintf(o.f, "%.6f,%s\n", sim->depth->t_s[i],
            aw_sim_frame_kind_name((AwSimFrameKind)tr->frame_kind[i]));
  if ((st = out_close(&o, err)) != AW_OK)
    return st;

  /* Scalars: "key: value" lines. */
  if ((st = out_open(&o, dir, "sim.txt", err)) != AW_OK)
    return st;
  const AwSimConfig *c = &sim->cfg;
  FILE *f = o.f;
  fputs(safety_note, f);
  fprintf(f, "seed: %llu\n", (unsigned long long)c->seed);
  fprintf(f, "level: %s\n", aw_sim_level_name(c->level));
  fprintf(f, "view: %s\n", aw_sim_view_name(c->view));
  fprintf(f, "swings: %zu\n", tr->n_swings);
  fprintf(f, "shots: %d\n", c->n_swings);
  fprintf(f, "handed: %s\n", sim->left ? "left" : "right");
  fprintf(f, "duration_s: %.6f\n", sim->t_end - sim->t_begin);
  fprintf(f, "clock_offset_s: %.9f\n", tr->clock_offset_s);
  fprintf(f, "clock_drift: %.9e\n", tr->clock_drift);
  fprintf(f, "clock_model: t_depth = t_imu * (1 + clock_drift) + clock_offset_s\n");
  fprintf(f, "gravity_m_s2: %.6f\n", tr->gravity_m_s2);
  fprintf(f, "R_cam_grav: %.9f %.9f %.9f %.9f %.9f %.9f %.9f %.9f %.9f\n",
          tr->R_cam_grav[0][0], tr->R_cam_grav[0][1], tr->R_cam_grav[0][2],
          tr->R_cam_grav[1][0], tr->R_cam_grav[1][1], tr->R_cam_grav[1][2],
          tr->R_cam_grav[2][0], tr->R_cam_grav[2][1], tr->R_cam_grav[2][2]);
  fprintf(f, "cam_pos_grav_m: %.6f %.6f %.6f\n", tr->cam_pos_grav_m[0], tr->cam_pos_grav_m[1],
          tr->cam_pos_grav_m[2]);
  fprintf(f, "q_forearm_body: %.9f %.9f %.9f %.9f\n", tr->q_forearm_body[0],
          tr->q_forearm_body[1], tr->q_forearm_body[2], tr->q_forearm_body[3]);
  fprintf(f, "lever_arm_body_m: %.6f %.6f %.6f\n", tr->lever_arm_body_m[0],
          tr->lever_arm_body_m[1], tr->lever_arm_body_m[2]);
  fprintf(f, "accel_bias_m_s2: %.6f %.6f %.6f\n", tr->accel_bias_m_s2[0], tr->accel_bias_m_s2[1],
          tr->accel_bias_m_s2[2]);
  fprintf(f, "gyro_bias_rad_s: %.7f %.7f %.7f\n", tr->gyro_bias_rad_s[0], tr->gyro_bias_rad_s[1],
          tr->gyro_bias_rad_s[2]);
  fprintf(f, "accel_scale: %.6f %.6f %.6f\n", tr->accel_scale[0], tr->accel_scale[1],
          tr->accel_scale[2]);
  fprintf(f, "gyro_scale: %.6f %.6f %.6f\n", tr->gyro_scale[0], tr->gyro_scale[1],
          tr->gyro_scale[2]);
  const AwSimImuModel *m = &c->imu;
  fprintf(f, "imu_rate_hz: %.6g\n", m->rate_hz);
  fprintf(f, "imu_antialias_window_s: %.6g\n", m->antialias_window_s);
  fprintf(f, "accel_noise_density_m_s2_rthz: %.6g\n", m->accel_noise_density);
  fprintf(f, "gyro_noise_density_rad_s_rthz: %.6g\n", m->gyro_noise_density);
  fprintf(f, "accel_bias_walk_m_s2_rts: %.6g\n", m->accel_bias_walk);
  fprintf(f, "gyro_bias_walk_rad_s_rts: %.6g\n", m->gyro_bias_walk);
  fprintf(f, "accel_range_m_s2: %.6g\n", m->accel_range_m_s2);
  fprintf(f, "gyro_range_rad_s: %.6g\n", m->gyro_range_rad_s);
  fprintf(f, "timestamp_jitter_s: %.6g\n", m->timestamp_jitter_s);
  const AwSimDepthModel *d = &c->depth;
  fprintf(f, "depth_rate_hz: %.6g\n", d->rate_hz);
  fprintf(f, "depth_sigma_xy_per_m: %.6g\n", d->sigma_xy_per_m);
  fprintf(f, "depth_sigma_z_coeff_per_m: %.6g\n", d->sigma_z_coeff_per_m);
  fprintf(f, "depth_dropout_prob: %.6g\n", d->dropout_prob);
  fprintf(f, "depth_outlier_prob: %.6g\n", d->outlier_prob);
  fprintf(f, "truth_rate_hz: %.6g\n", c->truth_rate_hz);
  return out_close(&o, err);
}

AwStatus
aw_sim_write(const AwSim *sim, const char *dir, AwError *err)
{
  if (sim == NULL || dir == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "no simulation or folder");
  char path[1100];
  snprintf(path, sizeof path, "%s/imu.csv", dir);
  AwStatus st = aw_imu_write_file(path, sim->imu, err);
  if (st != AW_OK)
    return st;
  snprintf(path, sizeof path, "%s/depth.csv", dir);
  st = aw_depth_write_file(path, sim->depth, err);
  if (st != AW_OK)
    return st;
  return write_truth(sim, dir, err);
}
