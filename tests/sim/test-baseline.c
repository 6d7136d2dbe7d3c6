/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The single-sensor baselines:
 *  - dead reckoning with a constant accelerometer bias b = 40 mg (0.3923 m/s^2) drifts
 *    0.5 b t^2 = 0.4413 m in 1.5 s (REFERENCES.md §8, suggested check 18; analytic);
 *  - dead reckoning of an ideal simulated IMU follows the true swing (an end-to-end check that
 *    the simulator's IMU is the derivative of its path, through an independent integrator);
 *  - the depth baseline keeps confident frames, fills gaps linearly and smooths. */
#include "arcwise/baseline.h"
#include "arcwise/math3.h"
#include "arcwise/sim.h"
#include "arcwise/units.h"
#include "testutil.h"

#include <stdlib.h>
#include <string.h>

static void
test_bias_drift(void)
{
  const double g = AW_GRAVITY_STANDARD_M_S2, b = 0.04 * g, rate = 100;
  size_t n = 200;
  AwImuStream *imu = aw_imu_stream_new(n);
  AW_CHECK(imu != NULL);
  if (imu == NULL)
    return;
  for (size_t k = 0; k < n; k++) {
    imu->t_s[k] = (double)k / rate;
    /* At rest, body = camera axes, up = -y in the camera frame: f = +g up, plus bias on x. */
    imu->accel_m_s2[k][0] = b;
    imu->accel_m_s2[k][1] = -g;
    imu->accel_m_s2[k][2] = 0;
  }
  AwImuInitialState s;
  memset(&s, 0, sizeof s);
  aw_quat_identity(s.q_cam_body);
  s.gravity_cam_m_s2[1] = g; /* y down */
  s.pos_cam_m[2] = 3.0;
  double tq[2] = { 0.0, 1.5 }, p[2][3];
  AW_CHECK(aw_imu_dead_reckon(imu, &s, tq, 2, p, NULL) == AW_OK);
  AW_CHECK_NEAR(p[1][0], 0.5 * b * 1.5 * 1.5, 1e-9);
  AW_CHECK_NEAR(0.5 * b * 1.5 * 1.5, 0.4413, 1e-4);
  AW_CHECK_NEAR(p[1][1], 0.0, 1e-12);
  AW_CHECK_NEAR(p[1][2], 3.0, 1e-12);
  aw_imu_stream_free(imu);
}

static void
test_ideal_swing(void)
{
  AwSimConfig c;
  aw_sim_config_default(&c, AW_SIM_EASY);
  c.seed = 4;
  AwSimImuModel *m = &c.imu;
  m->accel_noise_density = m->gyro_noise_density = 0;
  m->accel_bias_max_m_s2 = m->gyro_bias_max_rad_s = 0;
  m->accel_bias_walk = m->gyro_bias_walk = 0;
  m->scale_error_max = 0;
  m->bits = 0;
  m->timestamp_jitter_s = 0;
  m->accel_range_m_s2 = 1000;
  m->gyro_range_rad_s = 100;
  /* Fine steps so the integrator, not the sensor, sets the residual; the box average over each
   * sample interval makes the contact transient's velocity change integrate exactly. */
  m->rate_hz = 1000;
  m->antialias_window_s = 0.001;
  AwSim *sim = NULL;
  AW_CHECK(aw_sim_new(&c, &sim, NULL) == AW_OK);
  if (sim == NULL)
    return;
  const AwSimTruth *tr = aw_sim_truth(sim);
  const AwSimSwing *sw = &tr->swings[0];
  AwSimState a;
  aw_sim_eval(sim, sw->t_address_s, &a);
  AwImuInitialState s;
  memset(&s, 0, sizeof s);
  s.t_depth_s = sw->t_address_s;
  aw_v3_copy(s.pos_cam_m, a.wrist_cam_m);
  memcpy(s.q_cam_body, a.q_cam_body, sizeof s.q_cam_body);
  double gg[3] = { 0, 0, -tr->gravity_m_s2 };
  aw_mat_mul_v3(s.gravity_cam_m_s2, (const double (*)[3])tr->R_cam_grav, gg);
  aw_v3_copy(s.lever_arm_body_m, tr->lever_arm_body_m);
  s.clock_offset_s = tr->clock_offset_s;
  s.clock_drift = tr->clock_drift;
  const AwDepthStream *dp = aw_sim_depth(sim);
  double (*p)[3] = malloc(dp->n * sizeof *p);
  AW_CHECK(aw_imu_dead_reckon(aw_sim_imu(sim), &s, dp->t_s, dp->n, p, NULL) == AW_OK);
  double worst = 0;
  for (size_t j = 0; j < dp->n; j++) {
    if (dp->t_s[j] < sw->t_address_s || dp->t_s[j] > sw->t_finish_s)
      continue;
    AwSimState st;
    aw_sim_eval(sim, dp->t_s[j], &st);
    worst = fmax(worst, aw_v3_dist(p[j], st.wrist_cam_m));
  }
  printf("ideal IMU dead reckoning over the swing: worst error %.2f mm\n", worst * 1000);
  AW_CHECK(worst < 0.01); /* the box average lags half a sample: a few mm at 1 kHz */
  free(p);
  aw_sim_free(sim);
}

static void
test_depth_baseline(void)
{
  size_t n = 30;
  AwDepthStream *d = aw_depth_stream_new(n);
  if (d == NULL) {
    aw_test_failures++;
    return;
  }
  for (size_t j = 0; j < n; j++) {
    d->t_s[j] = (double)j / 30;
    d->pos_cam_m[j][0] = 0.1 * (double)j; /* linear: reproduced by a quadratic SG filter */
    d->pos_cam_m[j][1] = -0.5;
    d->pos_cam_m[j][2] = 3.0;
    d->conf[j] = 0.9;
  }
  for (size_t j = 10; j < 14; j++) {
    d->pos_cam_m[j][0] = d->pos_cam_m[j][1] = d->pos_cam_m[j][2] = NAN;
    d->conf[j] = 0;
  }
  d->pos_cam_m[20][0] = 5.0; /* a low-confidence outlier is dropped */
  d->conf[20] = 0.3;
  double (*p)[3] = malloc(n * sizeof *p);
  AW_CHECK(aw_depth_baseline(d, NULL, p, NULL) == AW_OK);
  for (size_t j = 0; j < n; j++) {
    AW_CHECK_NEAR(p[j][0], 0.1 * (double)j, 1e-9);
    AW_CHECK_NEAR(p[j][1], -0.5, 1e-12);
    AW_CHECK_NEAR(p[j][2], 3.0, 1e-12);
  }
  for (size_t j = 0; j < n; j++)
    d->conf[j] = 0.1;
  AW_CHECK(aw_depth_baseline(d, NULL, p, NULL) == AW_ERR_TOO_FEW);
  free(p);
  aw_depth_stream_free(d);
}

int
main(void)
{
  test_bias_drift();
  test_ideal_swing();
  test_depth_baseline();
  return AW_TEST_END();
}
