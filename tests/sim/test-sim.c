/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The simulator against physics and its own declared models:
 *  - at rest an ideal accelerometer reads |f| = g (standard gravity, CGPM 1901), the gyro 0;
 *  - a constant-rate turn about vertical reads that rate;
 *  - the IMU's specific force and angular rate are the derivatives of the true path and
 *    orientation (independent finite differences of the truth, 1 ms steps);
 *  - depth noise matches sigma_xy = k_xy z, sigma_z = k_z z^2 (Khoshelham & Oude Elberink 2012
 *    form, REFERENCES.md §7) by a chi-square test over many frames;
 *  - occluded frames fall inside the declared windows;
 *  - saturation clips at the configured full scale;
 *  - requested tempo and phase durations: 24 and 8 frames at 30 fps, Tb 0.800 s, Td 0.267 s
 *    (the 3:1 tempo of Novosel & Garrity 2004, REFERENCES.md §6);
 *  - the club obeys the Equipment Rules length limits (REFERENCES.md §6);
 *  - identical seeds give identical files, different seeds different ones. */
#include "arcwise/math3.h"
#include "arcwise/sim.h"
#include "arcwise/units.h"
#include "testutil.h"

#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static void
ideal_imu(AwSimConfig *c)
{
  AwSimImuModel *m = &c->imu;
  m->accel_noise_density = m->gyro_noise_density = 0;
  m->accel_bias_max_m_s2 = m->gyro_bias_max_rad_s = 0;
  m->accel_bias_walk = m->gyro_bias_walk = 0;
  m->scale_error_max = 0;
  m->bits = 0;
  m->timestamp_jitter_s = 0;
  m->antialias_window_s = 0;
  m->accel_range_m_s2 = 1000;
  m->gyro_range_rad_s = 100;
}

static double
true_time(const AwSimTruth *tr, double t_imu)
{
  return t_imu * (1 + tr->clock_drift) + tr->clock_offset_s;
}

static char *
slurp(const char *path, size_t *len)
{
  FILE *f = fopen(path, "rb");
  if (f == NULL)
    return NULL;
  fseek(f, 0, SEEK_END);
  long n = ftell(f);
  fseek(f, 0, SEEK_SET);
  char *buf = malloc((size_t)n + 1);
  if (buf && fread(buf, 1, (size_t)n, f) != (size_t)n) {
    free(buf);
    buf = NULL;
  }
  fclose(f);
  *len = (size_t)n;
  return buf;
}

static bool
same_file(const char *a, const char *b)
{
  size_t na = 0, nb = 0;
  char *x = slurp(a, &na), *y = slurp(b, &nb);
  bool same = x && y && na == nb && memcmp(x, y, na) == 0;
  free(x);
  free(y);
  return same;
}

static void
test_rest_and_derivatives(bool left, AwSimView view, int shots)
{
  AwSimConfig c;
  aw_sim_config_default(&c, AW_SIM_NORMAL);
  c.seed = 11 + (uint64_t)shots;
  c.left_handed = left;
  c.view = view;
  c.n_swings = shots;
  c.session_extras = shots > 1;
  ideal_imu(&c);
  AwSim *sim = NULL;
  AW_CHECK(aw_sim_new(&c, &sim, NULL) == AW_OK);
  if (sim == NULL)
    return;
  const AwSimTruth *tr = aw_sim_truth(sim);
  const AwImuStream *imu = aw_sim_imu(sim);
  AW_CHECK(shots > 1 || tr->n_swings == 1);
  const AwSimSwing *sw = &tr->swings[0];
  /* At rest (address, before takeaway): |f| = g and omega = 0, from the IMU samples. */
  size_t n_rest = 0;
  for (size_t k = 0; k < imu->n; k++) {
    double t = true_time(tr, imu->t_s[k]);
    if (t < sw->t_address_s + 0.05 || t > sw->t_takeaway_s - 0.01)
      continue;
    n_rest++;
    AW_CHECK_NEAR(aw_v3_norm(imu->accel_m_s2[k]), AW_GRAVITY_STANDARD_M_S2, 1e-5);
    AW_CHECK_NEAR(aw_v3_norm(imu->gyro_rad_s[k]), 0.0, 1e-6);
  }
  AW_CHECK(n_rest > 50);
  /* The lead wrist carries the watch, and the backswing goes away from the target (grav x
   * points at the target for either hand). */
  AW_CHECK(imu->meta.wrist == (left ? AW_WRIST_RIGHT : AW_WRIST_LEFT));
  {
    AwSimState s_addr, s_top;
    aw_sim_eval(sim, sw->t_takeaway_s, &s_addr);
    aw_sim_eval(sim, sw->t_top_s, &s_top);
    double pa[3], pt[3];
    aw_mat_tmul_v3(pa, (const double (*)[3])tr->R_cam_grav, s_addr.wrist_cam_m);
    aw_mat_tmul_v3(pt, (const double (*)[3])tr->R_cam_grav, s_top.wrist_cam_m);
    AW_CHECK(pt[0] - pa[0] < -0.2);
    AW_CHECK(pt[2] - pa[2] > 0.5); /* hands rise to the top */
    /* The backswing stays in its declared plane; at impact the hands move within the
     * declared downswing plane. */
    double worst = 0;
    for (double t = sw->t_takeaway_s; t <= sw->t_top_s; t += 0.01) {
      AwSimState st;
      aw_sim_eval(sim, t, &st);
      double d[3];
      aw_v3_sub(d, st.wrist_cam_m, s_addr.wrist_cam_m);
      worst = fmax(worst, fabs(aw_v3_dot(d, sw->backswing_plane_normal_cam)));
    }
    AW_CHECK(worst < 1e-9);
    AwSimState s_imp;
    aw_sim_eval(sim, sw->t_impact_s - 1e-4, &s_imp);
    AW_CHECK(fabs(aw_v3_dot(s_imp.wrist_vel_cam_m_s, sw->downswing_plane_normal_cam)) <
             1e-3 * aw_v3_norm(s_imp.wrist_vel_cam_m_s));
    AW_CHECK_NEAR(aw_v3_norm(sw->backswing_plane_normal_cam), 1.0, 1e-12);
    /* Inclination to the horizontal as requested: the normal's angle from vertical. */
    double up_cam[3], up[3] = { 0, 0, 1 };
    aw_mat_mul_v3(up_cam, (const double (*)[3])tr->R_cam_grav, up);
    AW_CHECK_NEAR(acos(fabs(aw_v3_dot(up_cam, sw->backswing_plane_normal_cam))),
                  sw->style.backswing_plane_rad, 1e-9);
    AW_CHECK_NEAR(acos(fabs(aw_v3_dot(up_cam, sw->downswing_plane_normal_cam))),
                  sw->style.downswing_plane_rad, 1e-9);
  }
  /* Specific force and rate against independent differences of the truth (camera frame):
   * f_body = R_cam_body^T (a_cam - g_cam), omega from q(t)^-1 q(t + d). */
  double g_grav[3] = { 0, 0, -tr->gravity_m_s2 }, g_cam[3];
  aw_mat_mul_v3(g_cam, (const double (*)[3])tr->R_cam_grav, g_grav);
  const double d = 1e-3;
  size_t n_cmp = 0;
  double worst_f = 0, worst_w = 0;
  for (size_t k = 0; k < imu->n; k += 3) {
    double t = true_time(tr, imu->t_s[k]);
    bool near = false;
    for (size_t i = 0; i < tr->n_swings; i++)
      near |= fabs(t - tr->swings[i].t_impact_s) < 0.03;
    if (near)
      continue; /* the contact transient has ms time scales: 1 ms differences cannot follow */
    AwSimState s0, sm, sp;
    aw_sim_eval(sim, t - d, &sm);
    aw_sim_eval(sim, t, &s0);
    aw_sim_eval(sim, t + d, &sp);
    double a[3], f_cam[3], f_body[3];
    for (int i = 0; i < 3; i++) {
      a[i] = (sp.imu_pos_cam_m[i] - 2 * s0.imu_pos_cam_m[i] + sm.imu_pos_cam_m[i]) / (d * d);
      f_cam[i] = a[i] - g_cam[i];
    }
    double qc[4];
    aw_quat_conj(qc, s0.q_cam_body);
    aw_quat_rotate(f_body, qc, f_cam);
    double df[3];
    aw_v3_sub(df, f_body, imu->accel_m_s2[k]);
    double ef = aw_v3_norm(df) / (0.05 + 0.002 * aw_v3_norm(f_body));
    double qa[4], qr[4], rv[3];
    aw_quat_conj(qa, sm.q_cam_body);
    aw_quat_mul(qr, qa, sp.q_cam_body);
    aw_quat_to_rotvec(rv, qr);
    aw_v3_scale(rv, rv, 1 / (2 * d));
    double dw[3];
    aw_v3_sub(dw, rv, imu->gyro_rad_s[k]);
    double ew = aw_v3_norm(dw) / (0.01 + 0.002 * aw_v3_norm(rv));
    worst_f = fmax(worst_f, ef);
    worst_w = fmax(worst_w, ew);
    n_cmp++;
  }
  printf("IMU vs truth differences over %zu samples: worst scaled errors f %.3g, omega %.3g\n",
         n_cmp, worst_f, worst_w);
  if (!(worst_f <= 1.0 && worst_w <= 1.0)) {
    fprintf(stderr, "IMU vs truth derivatives: worst scaled errors f %.3g, omega %.3g\n", worst_f,
            worst_w);
    aw_test_failures++;
  }
  AW_CHECK(n_cmp > 100);
  /* The exact state agrees with the IMU at the sample instants too. */
  AwSimState st;
  size_t k = imu->n / 2;
  aw_sim_eval(sim, true_time(tr, imu->t_s[k]), &st);
  for (int i = 0; i < 3; i++) {
    AW_CHECK_NEAR(st.specific_force_body_m_s2[i], imu->accel_m_s2[k][i], 1e-9);
    AW_CHECK_NEAR(st.omega_body_rad_s[i], imu->gyro_rad_s[k][i], 1e-9);
  }
  aw_sim_free(sim);
}

/* Handedness against the trade's own description of a stance, checked in the camera frame so
 * the simulator's internal frame cannot hide a mirror image. Common practice (golf
 * instruction, stated here from general knowledge): a right-handed golfer's lead arm is the
 * left arm; they face the ball with the target on their left; at the top the hands are behind
 * them, on the side away from the target. A face-on camera stands across the ball from the
 * player, so a right-hander's target is on the right of its image; a down-the-line camera
 * stands behind the player looking along the target line, a right-hander on the left of the
 * ball in its image. A left-hander is the mirror image of all of it. */
static void
test_handedness_geometry(bool left, AwSimView view)
{
  AwSimConfig c;
  aw_sim_config_default(&c, AW_SIM_EASY);
  c.seed = 21;
  c.left_handed = left;
  c.view = view;
  AwSim *sim = NULL;
  AW_CHECK(aw_sim_new(&c, &sim, NULL) == AW_OK);
  if (sim == NULL)
    return;
  const AwSimTruth *tr = aw_sim_truth(sim);
  const AwSimSwing *sw = &tr->swings[0];
  AW_CHECK(aw_sim_imu(sim)->meta.wrist == (left ? AW_WRIST_RIGHT : AW_WRIST_LEFT));
  double up[3], z[3] = { 0, 0, 1 };
  aw_mat_mul_v3(up, (const double (*)[3])tr->R_cam_grav, z);
  AwSimState a, top, imp;
  aw_sim_eval(sim, sw->t_takeaway_s - 0.05, &a);
  aw_sim_eval(sim, sw->t_top_s, &top);
  aw_sim_eval(sim, sw->t_impact_s - 1e-3, &imp);
  /* Horizontal directions: facing = hands toward the club head resting at the ball; target =
   * the hands' travel through impact. */
  double facing[3], target[3], left_side[3], d_top[3];
  aw_v3_sub(facing, a.club_cam_m, a.wrist_cam_m);
  aw_v3_axpy(facing, -aw_v3_dot(facing, up), up);
  aw_v3_normalize(facing, facing);
  aw_v3_copy(target, imp.wrist_vel_cam_m_s);
  aw_v3_axpy(target, -aw_v3_dot(target, up), up);
  aw_v3_normalize(target, target);
  aw_v3_cross(left_side, up, facing); /* a person facing f with head up has left = up x f */
  double hand = left ? -1.0 : 1.0;    /* +1: right-handed */
  AW_CHECK(hand * aw_v3_dot(target, left_side) > 0.9);
  AW_CHECK(fabs(aw_v3_dot(target, facing)) < 0.3);
  aw_v3_sub(d_top, top.wrist_cam_m, a.wrist_cam_m);
  AW_CHECK(aw_v3_dot(d_top, target) < -0.2); /* behind, away from the target */
  AW_CHECK(aw_v3_dot(d_top, up) > 0.5);      /* and up */
  const double fwd[3] = { 0, 0, 1 }, right[3] = { 1, 0, 0 };
  if (view == AW_SIM_FACE_ON) {
    AW_CHECK(aw_v3_dot(fwd, facing) < -0.9);           /* looking at the player's front */
    AW_CHECK(hand * aw_v3_dot(right, target) > 0.9);   /* target on the image's right */
  } else {
    AW_CHECK(aw_v3_dot(fwd, target) > 0.9);            /* looking toward the target */
    AW_CHECK(hand * (a.club_cam_m[0] - a.wrist_cam_m[0]) > 0.1); /* player left of the ball */
  }
  aw_sim_free(sim);
}

static void
test_turntable(void)
{
  AwSimConfig c;
  aw_sim_config_default(&c, AW_SIM_NORMAL);
  c.seed = 5;
  ideal_imu(&c);
  const double rate = aw_deg_to_rad(300);
  c.turntable_rate_rad_s = rate;
  c.turntable_s = 3.0;
  AwSim *sim = NULL;
  AW_CHECK(aw_sim_new(&c, &sim, NULL) == AW_OK);
  if (sim == NULL)
    return;
  const AwSimTruth *tr = aw_sim_truth(sim);
  const AwImuStream *imu = aw_sim_imu(sim);
  size_t n = 0;
  for (size_t k = 0; k < imu->n; k++) {
    double t = true_time(tr, imu->t_s[k]);
    if (t < 1.6 || t > 4.4)
      continue;
    n++;
    AW_CHECK_NEAR(aw_v3_norm(imu->gyro_rad_s[k]), rate, 1e-7);
    /* ... about the vertical, expressed in the body frame. */
    AwSimState st;
    aw_sim_eval(sim, t, &st);
    double up_body[3], qc[4], z[3] = { 0, 0, rate };
    aw_quat_conj(qc, st.q_grav_body);
    aw_quat_rotate(up_body, qc, z);
    for (int i = 0; i < 3; i++)
      AW_CHECK_NEAR(imu->gyro_rad_s[k][i], up_body[i], 1e-7);
  }
  AW_CHECK(n > 200);
  aw_sim_free(sim);
}

static void
test_depth_noise_and_occlusion(void)
{
  AwSimConfig c;
  aw_sim_config_default(&c, AW_SIM_NORMAL);
  c.seed = 21;
  c.n_swings = 4;
  c.session_extras = true;
  AwSim *sim = NULL;
  AW_CHECK(aw_sim_new(&c, &sim, NULL) == AW_OK);
  if (sim == NULL)
    return;
  const AwSimTruth *tr = aw_sim_truth(sim);
  const AwDepthStream *dp = aw_sim_depth(sim);
  double chi2 = 0;
  size_t dof = 0, n_occ = 0;
  for (size_t j = 0; j < dp->n; j++) {
    double t = dp->t_s[j];
    bool inside = false;
    for (size_t i = 0; i < tr->n_occlusions; i++)
      if (t >= tr->occlusions[i].t0_s && t <= tr->occlusions[i].t1_s)
        inside = true;
    AwSimFrameKind kind = (AwSimFrameKind)tr->frame_kind[j];
    bool occluded = kind == AW_SIM_FRAME_OCCLUDED_MISSING || kind == AW_SIM_FRAME_OCCLUDED_SNAPPED;
    AW_CHECK(occluded == inside);
    n_occ += occluded;
    if (kind == AW_SIM_FRAME_DROPOUT || kind == AW_SIM_FRAME_OCCLUDED_MISSING)
      AW_CHECK(dp->conf[j] == 0 && isnan(dp->pos_cam_m[j][0]));
    if (kind == AW_SIM_FRAME_OCCLUDED_SNAPPED)
      AW_CHECK(dp->conf[j] >= 0.3 && dp->conf[j] <= 0.6);
    if (kind != AW_SIM_FRAME_OK)
      continue;
    AwSimState st;
    aw_sim_eval(sim, t, &st);
    double z = st.wrist_cam_m[2];
    double sig[3] = { c.depth.sigma_xy_per_m * z, c.depth.sigma_xy_per_m * z,
                      c.depth.sigma_z_coeff_per_m * z * z };
    for (int i = 0; i < 3; i++) {
      double r = (dp->pos_cam_m[j][i] - st.wrist_cam_m[i]) / sig[i];
      chi2 += r * r;
      dof++;
    }
  }
  /* chi-square with dof degrees of freedom: mean dof, s.d. sqrt(2 dof); accept 4 s.d. */
  printf("depth noise: chi2 %.1f for %zu degrees of freedom; %zu occluded frames\n", chi2, dof,
         n_occ);
  AW_CHECK(dof > 3000);
  AW_CHECK(fabs(chi2 - (double)dof) < 4 * sqrt(2.0 * (double)dof));
  AW_CHECK(n_occ > 10);
  /* Structured-light example of REFERENCES.md §7: sigma_z(2 m) = 6.4 mm for the default
   * normal-level coefficient. */
  AW_CHECK_NEAR(c.depth.sigma_z_coeff_per_m * 4.0, 0.0064, 0.0032);
  /* The session holds the requested shots, practice swings and walks. */
  size_t shots = 0, walks = 0;
  for (size_t i = 0; i < tr->n_swings; i++)
    shots += !tr->swings[i].practice;
  for (size_t i = 0; i < tr->n_spans; i++)
    walks += tr->spans[i].activity == AW_SIM_ACT_WALK;
  AW_CHECK(shots == 4);
  AW_CHECK(walks == 3);
  for (size_t i = 0; i < tr->n_swings; i++) {
    AW_CHECK(tr->swings[i].style.club_length_m >= 0.457 && tr->swings[i].style.club_length_m <= 1.219);
    if (!tr->swings[i].practice && !tr->swings[i].half)
      AW_CHECK(tr->swings[i].club_speed_impact_m_s > 15 && tr->swings[i].club_speed_impact_m_s < 65);
  }
  aw_sim_free(sim);
}

static void
test_saturation(void)
{
  AwSimConfig c;
  aw_sim_config_default(&c, AW_SIM_HARD);
  c.seed = 3;
  c.style_fixed = true;
  c.style.hand_speed_impact_m_s = 10;
  c.style.roll_rate_impact_rad_s = aw_deg_to_rad(2300);
  AwSim *sim = NULL;
  AW_CHECK(aw_sim_new(&c, &sim, NULL) == AW_OK);
  if (sim == NULL)
    return;
  const AwImuStream *imu = aw_sim_imu(sim);
  const AwSimTruth *tr = aw_sim_truth(sim);
  AW_CHECK(tr->swings[0].peak_gyro_rad_s > aw_deg_to_rad(2000));
  size_t clipped_g = 0, clipped_a = 0;
  for (size_t k = 0; k < imu->n; k++)
    for (int i = 0; i < 3; i++) {
      AW_CHECK(fabs(imu->gyro_rad_s[k][i]) <= c.imu.gyro_range_rad_s);
      AW_CHECK(fabs(imu->accel_m_s2[k][i]) <= c.imu.accel_range_m_s2);
      clipped_g += fabs(imu->gyro_rad_s[k][i]) == c.imu.gyro_range_rad_s;
      clipped_a += fabs(imu->accel_m_s2[k][i]) == c.imu.accel_range_m_s2;
    }
  printf("saturation: %zu gyro and %zu accel components at full scale (peak true %.0f deg/s)\n",
         clipped_g, clipped_a, aw_rad_to_deg(tr->swings[0].peak_gyro_rad_s));
  AW_CHECK(clipped_g > 0);
  AW_CHECK(clipped_a > 0);
  AW_CHECK_NEAR(c.imu.gyro_range_rad_s, aw_deg_to_rad(1000), 1e-12);
  AW_CHECK_NEAR(c.imu.accel_range_m_s2, 8 * AW_GRAVITY_STANDARD_M_S2, 1e-12);
  aw_sim_free(sim);
}

static void
test_tempo(void)
{
  AwSimConfig c;
  aw_sim_config_default(&c, AW_SIM_EASY);
  c.seed = 8;
  c.style_fixed = true;
  c.style.backswing_s = 24.0 / 30.0;
  c.style.tempo = 3.0;
  AwSim *sim = NULL;
  AW_CHECK(aw_sim_new(&c, &sim, NULL) == AW_OK);
  if (sim == NULL)
    return;
  const AwSimSwing *s = &aw_sim_truth(sim)->swings[0];
  double Tb = s->t_top_s - s->t_takeaway_s, Td = s->t_impact_s - s->t_top_s;
  AW_CHECK_NEAR(Tb, 0.800, 1e-9);
  AW_CHECK_NEAR(Td, 0.8 / 3, 1e-9);
  AW_CHECK(lround(Tb * 30) == 24 && lround(Td * 30) == 8);
  AW_CHECK_NEAR(Tb / Td, 3.0, 1e-9);
  /* The events are where the motion says: still before takeaway, moving after; the hands
   * turn at the top; requested hand speed at impact. */
  AwSimState a, b, top;
  aw_sim_eval(sim, s->t_takeaway_s - 0.01, &a);
  aw_sim_eval(sim, s->t_takeaway_s + 0.1, &b);
  aw_sim_eval(sim, s->t_top_s, &top);
  AW_CHECK(aw_v3_norm(a.wrist_vel_cam_m_s) < 1e-9);
  AW_CHECK(aw_v3_norm(b.wrist_vel_cam_m_s) > 0.05);
  AW_CHECK(aw_v3_norm(top.wrist_vel_cam_m_s) < 1e-6);
  AW_CHECK(a.phase == AW_SIM_PHASE_ADDRESS && b.phase == AW_SIM_PHASE_TAKEAWAY);
  AW_CHECK_NEAR(s->hand_speed_impact_m_s, c.style.hand_speed_impact_m_s, 0.01);
  aw_sim_free(sim);
}

static void
test_same_bytes(void)
{
  char base[] = "/tmp/arcwise-sim-test-XXXXXX";
  if (mkdtemp(base) == NULL) {
    fprintf(stderr, "cannot create a temporary folder\n");
    aw_test_failures++;
    return;
  }
  char d1[128], d2[128], d3[128];
  snprintf(d1, sizeof d1, "%s/a", base);
  snprintf(d2, sizeof d2, "%s/b", base);
  snprintf(d3, sizeof d3, "%s/c", base);
  mkdir(d1, 0700);
  mkdir(d2, 0700);
  mkdir(d3, 0700);
  for (int run = 0; run < 3; run++) {
    AwSimConfig c;
    aw_sim_config_default(&c, AW_SIM_HARD);
    c.seed = run == 2 ? 78 : 77;
    c.n_swings = 2;
    c.session_extras = true;
    c.view = AW_SIM_DOWN_THE_LINE;
    AwSim *sim = NULL;
    AW_CHECK(aw_sim_new(&c, &sim, NULL) == AW_OK);
    AwError err;
    const char *dir = run == 0 ? d1 : run == 1 ? d2 : d3;
    AW_CHECK(sim && aw_sim_write(sim, dir, &err) == AW_OK);
    /* The capture readers accept what was written, sample for sample. */
    char path[256];
    AwImuStream *imu = NULL;
    AwDepthStream *dep = NULL;
    snprintf(path, sizeof path, "%s/imu.csv", dir);
    AW_CHECK(aw_imu_read_file(path, &imu, &err) == AW_OK);
    snprintf(path, sizeof path, "%s/depth.csv", dir);
    AW_CHECK(aw_depth_read_file(path, &dep, &err) == AW_OK);
    if (sim && imu && dep) {
      AW_CHECK(imu->n == aw_sim_imu(sim)->n && dep->n == aw_sim_depth(sim)->n);
      AW_CHECK(imu->meta.wrist == aw_sim_imu(sim)->meta.wrist);
      AW_CHECK_NEAR(imu->gyro_rad_s[imu->n / 2][1], aw_sim_imu(sim)->gyro_rad_s[imu->n / 2][1], 1e-12);
    }
    aw_imu_stream_free(imu);
    aw_depth_stream_free(dep);
    aw_sim_free(sim);
  }
  static const char *files[] = { "imu.csv", "depth.csv", "truth.csv", "events.csv", "phases.csv",
                                 "activities.csv", "occlusions.csv", "frames.csv", "sim.txt" };
  char p1[256], p2[256], p3[256];
  for (size_t i = 0; i < sizeof files / sizeof files[0]; i++) {
    snprintf(p1, sizeof p1, "%s/%s", d1, files[i]);
    snprintf(p2, sizeof p2, "%s/%s", d2, files[i]);
    snprintf(p3, sizeof p3, "%s/%s", d3, files[i]);
    if (!same_file(p1, p2)) {
      fprintf(stderr, "%s differs between runs with the same seed\n", files[i]);
      aw_test_failures++;
    }
    if (i < 3)
      AW_CHECK(!same_file(p1, p3));
    remove(p1);
    remove(p2);
    remove(p3);
  }
  rmdir(d1);
  rmdir(d2);
  rmdir(d3);
  rmdir(base);
}

int
main(void)
{
  test_rest_and_derivatives(false, AW_SIM_FACE_ON, 1);
  /* Mirror image, other view, and a session with waggles, practice swings and walking. */
  test_rest_and_derivatives(true, AW_SIM_DOWN_THE_LINE, 3);
  test_turntable();
  test_handedness_geometry(false, AW_SIM_FACE_ON);
  test_handedness_geometry(true, AW_SIM_FACE_ON);
  test_handedness_geometry(false, AW_SIM_DOWN_THE_LINE);
  test_handedness_geometry(true, AW_SIM_DOWN_THE_LINE);
  test_depth_noise_and_occlusion();
  test_saturation();
  test_tempo();
  test_same_bytes();
  return AW_TEST_END();
}
