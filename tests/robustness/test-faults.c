/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Numerical faults (issue 9): each fault is made from a simulated swing (sim.h, in memory) by
 * altering its streams, and the fusion must give a bounded, flagged result: either a clear error
 * status with a message, or a path that is finite everywhere, whose uncertainty covers its error
 * against the simulator's truth, and whose flags say what happened. Never a NaN, a hang or a
 * crash.
 *
 * One program, one case per run (the meson test names the case), so that a failure says which
 * fault broke. The bounds are physical, not fitted to a run:
 *  - ERR_BOUND_M: a lead-wrist path off by more than half a metre is no longer the swing (the
 *    hands travel about 1.5 m from address to the top, Jorgensen, The Physics of Golf, 1994:
 *    arm length about 0.6 m turning through ~1.5 rad), so a result beyond it is unbounded;
 *  - honesty: at least HONEST_SHARE of the samples have |error| <= 3 |sigma| + CAM_FLOOR_M,
 *    where |sigma| is the norm of the per-axis 1-sigma values. For a Gaussian 3-D error the
 *    3-sigma sphere holds 97 % (chi-square, 3 dof: P(chi2 <= 9) = 0.971, any table of the
 *    chi-square distribution, e.g. Abramowitz & Stegun table 26.8); 0.9 leaves room for the
 *    smoother's correlated errors; CAM_FLOOR_M (2 cm) is the keypoint's own scatter at 2-3 m,
 *    a figure from memory for consumer depth cameras (sigma_xy 3.3 mm/m, Khoshelham 2012).
 * The seeds are arbitrary and fixed so that a failure can be reproduced. */
#include "testutil.h"

#include <string.h>

#include "arcwise/capture.h"
#include "arcwise/fusion.h"
#include "arcwise/sim.h"

#define ERR_BOUND_M 0.5
#define HONEST_SHARE 0.9
#define CAM_FLOOR_M 0.02

static const uint32_t known_flags = AW_FUSED_CAM_ACCEPTED | AW_FUSED_CAM_REJECTED |
                                    AW_FUSED_CAM_MISSING | AW_FUSED_IMU_SATURATED |
                                    AW_FUSED_STILL | AW_FUSED_NO_IMU;

typedef struct {
  AwSim *sim;
  AwImuStream *imu;
  AwDepthStream *depth;
  double t0_s, t1_s;            /* recording span on the depth clock */
} Case;

static void
case_make(Case *c, uint64_t seed, int n_swings, double clock_offset_max_s)
{
  memset(c, 0, sizeof *c);
  AwSimConfig cfg;
  aw_sim_config_default(&cfg, AW_SIM_NORMAL);
  cfg.seed = seed;
  cfg.n_swings = n_swings;
  cfg.session_extras = n_swings > 1;
  if (clock_offset_max_s >= 0)
    cfg.imu.clock_offset_max_s = clock_offset_max_s;
  AwError err;
  if (aw_sim_new(&cfg, &c->sim, &err) != AW_OK) {
    fprintf(stderr, "simulator: %s\n", err.message);
    exit(1);
  }
  c->imu = aw_sim_copy_imu(c->sim);
  c->depth = aw_sim_copy_depth(c->sim);
  AW_CHECK(c->imu != NULL && c->depth != NULL);
  if (c->imu == NULL || c->depth == NULL)
    exit(1);
  aw_sim_span(c->sim, &c->t0_s, &c->t1_s);
}

static void
case_free(Case *c)
{
  aw_imu_stream_free(c->imu);
  aw_depth_stream_free(c->depth);
  aw_sim_free(c->sim);
}

/* Depth-clock time of an IMU timestamp (the convention of fusion.h and sim.h). */
static double
imu_to_depth(const Case *c, double t_imu)
{
  const AwSimTruth *t = aw_sim_truth(c->sim);
  return t_imu * (1 + t->clock_drift) + t->clock_offset_s;
}

/* A stream holding the samples [i0, i1) of s. */
static AwImuStream *
imu_slice_keep(const AwImuStream *s, const bool *keep)
{
  size_t m = 0;
  for (size_t i = 0; i < s->n; i++)
    m += keep[i];
  AwImuStream *o = aw_imu_stream_new(m);
  if (o == NULL)
    exit(1);
  o->meta = s->meta;
  for (size_t i = 0, k = 0; i < s->n; i++) {
    if (!keep[i])
      continue;
    o->t_s[k] = s->t_s[i];
    memcpy(o->accel_m_s2[k], s->accel_m_s2[i], sizeof o->accel_m_s2[k]);
    memcpy(o->gyro_rad_s[k], s->gyro_rad_s[i], sizeof o->gyro_rad_s[k]);
    k++;
  }
  return o;
}

static AwDepthStream *
depth_slice_keep(const AwDepthStream *s, const bool *keep)
{
  size_t m = 0;
  for (size_t i = 0; i < s->n; i++)
    m += keep[i];
  AwDepthStream *o = aw_depth_stream_new(m);
  if (o == NULL)
    exit(1);
  o->meta = s->meta;
  for (size_t i = 0, k = 0; i < s->n; i++) {
    if (!keep[i])
      continue;
    o->t_s[k] = s->t_s[i];
    memcpy(o->pos_cam_m[k], s->pos_cam_m[i], sizeof o->pos_cam_m[k]);
    o->conf[k] = s->conf[i];
    k++;
  }
  return o;
}

typedef struct {
  size_t n_eval;
  double max_err_m;
  double rms_err_m;
  double honest_share;
} ErrStats;

static double
norm3(const double v[3])
{
  return sqrt(v[0] * v[0] + v[1] * v[1] + v[2] * v[2]);
}

/* Everything a result must be whatever the fault: finite, ordered, unit quaternions, positive
 * sigmas, shares in [0, 1], known flags, a sane report. */
static void
check_sane(const AwFusedPath *p)
{
  AW_CHECK(p->n > 0);
  size_t bad_t = 0, bad_v = 0, bad_q = 0, bad_s = 0, bad_f = 0;
  for (size_t i = 0; i < p->n; i++) {
    if (!isfinite(p->t_s[i]) || (i > 0 && !(p->t_s[i] > p->t_s[i - 1])))
      bad_t++;
    for (int k = 0; k < 3; k++) {
      if (!isfinite(p->pos_cam_m[i][k]) || !isfinite(p->vel_cam_m_s[i][k]) ||
          !isfinite(p->accel_body_m_s2[i][k]) || !isfinite(p->gyro_body_rad_s[i][k]))
        bad_v++;
      if (!(p->pos_sigma_cam_m[i][k] > 0) || !isfinite(p->pos_sigma_cam_m[i][k])) {
        if (bad_s++ < 3)
          fprintf(stderr, "sample %zu t %.3f s: sigma[%d] = %g, flags 0x%x\n", i, p->t_s[i], k,
                  p->pos_sigma_cam_m[i][k], (unsigned)p->flags[i]);
      }
    }
    double qn = 0;
    for (int k = 0; k < 4; k++)
      qn += p->q_cam_body[i][k] * p->q_cam_body[i][k];
    if (!(fabs(qn - 1) < 1e-6))
      bad_q++;
    if (!(p->cam_info_share[i] >= 0 && p->cam_info_share[i] <= 1) || (p->flags[i] & ~known_flags))
      bad_f++;
  }
  if (bad_t + bad_v + bad_q + bad_s + bad_f > 0)
    fprintf(stderr, "insane samples: %zu times, %zu values, %zu quaternions, %zu sigmas, "
            "%zu shares/flags of %zu\n", bad_t, bad_v, bad_q, bad_s, bad_f, p->n);
  AW_CHECK(bad_t == 0);
  AW_CHECK(bad_v == 0);
  AW_CHECK(bad_q == 0);
  AW_CHECK(bad_s == 0);
  AW_CHECK(bad_f == 0);
  const AwFusionReport *r = &p->report;
  AW_CHECK(isfinite(r->clock_offset_s) && isfinite(r->clock_drift));
  AW_CHECK(r->clock_confidence >= 0 && r->clock_confidence <= 1);
  AW_CHECK(isfinite(r->gravity_m_s2) && r->gravity_m_s2 > 9.7 && r->gravity_m_s2 < 9.9);
  double qn = 0;
  for (int k = 0; k < 4; k++)
    qn += r->q_cam_grav[k] * r->q_cam_grav[k];
  AW_CHECK(fabs(qn - 1) < 1e-6);
  for (int k = 0; k < 3; k++)
    AW_CHECK(isfinite(r->accel_bias_m_s2[k]) && isfinite(r->gyro_bias_rad_s[k]));
}

/* Error against the truth over samples with t in [ta, tb] (depth clock). */
static ErrStats
error_stats(const Case *c, const AwFusedPath *p, double ta, double tb)
{
  ErrStats e = { 0 };
  double sum2 = 0;
  size_t honest = 0;
  for (size_t i = 0; i < p->n; i++) {
    double t = p->t_s[i];
    if (!(t >= ta && t <= tb && t >= c->t0_s && t <= c->t1_s))
      continue;
    AwSimState st;
    aw_sim_eval(c->sim, t, &st);
    double d[3];
    for (int k = 0; k < 3; k++)
      d[k] = p->pos_cam_m[i][k] - st.wrist_cam_m[k];
    double err = norm3(d), sig = norm3(p->pos_sigma_cam_m[i]);
    if (!isfinite(err))
      err = INFINITY;
    if (err > e.max_err_m)
      e.max_err_m = err;
    sum2 += err * err;
    honest += err <= 3 * sig + CAM_FLOOR_M;
    e.n_eval++;
  }
  if (e.n_eval > 0) {
    e.rms_err_m = sqrt(sum2 / (double)e.n_eval);
    e.honest_share = (double)honest / (double)e.n_eval;
  }
  return e;
}

/* Bounded: every error below ERR_BOUND_M. The share within 3 sigma is printed (and recorded in
 * docs/ROBUSTNESS.md) but checked only with `honest`: how well the uncertainty covers the error
 * is the fusion's own accuracy question (tests/fusion), while these tests ask that a fault never
 * runs away. */
static void
check_bounded_h(const char *what, ErrStats e, bool honest)
{
  fprintf(stderr, "%s: %zu samples, max error %.3f m, rms %.3f m, within 3 sigma %.1f %%\n",
          what, e.n_eval, e.max_err_m, e.rms_err_m, 100 * e.honest_share);
  AW_CHECK(e.n_eval > 0);
  AW_CHECK(e.max_err_m < ERR_BOUND_M);
  if (honest)
    AW_CHECK(e.honest_share >= HONEST_SHARE);
}

static void
check_bounded(const char *what, ErrStats e)
{
  check_bounded_h(what, e, false);
}

static AwFusedPath *
fuse_ok(const Case *c, const AwFusionSettings *s)
{
  AwFusedPath *p = NULL;
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_fuse(c->imu, c->depth, s, &p, &err);
  if (st != AW_OK) {
    char buf[1200];
    fprintf(stderr, "aw_fuse: %s (%s)\n", aw_error_format(&err, buf, sizeof buf),
            aw_status_to_string(st));
    AW_CHECK(st == AW_OK);
    AW_CHECK(p == NULL);
    return NULL;
  }
  AW_CHECK(p != NULL);
  if (p != NULL)
    check_sane(p);
  return p;
}

static size_t
count_flag(const AwFusedPath *p, uint32_t flag, double ta, double tb)
{
  size_t n = 0;
  for (size_t i = 0; i < p->n; i++)
    if (p->t_s[i] >= ta && p->t_s[i] <= tb && (p->flags[i] & flag))
      n++;
  return n;
}

static size_t
count_in(const AwFusedPath *p, double ta, double tb)
{
  size_t n = 0;
  for (size_t i = 0; i < p->n; i++)
    n += p->t_s[i] >= ta && p->t_s[i] <= tb;
  return n;
}

static double
mean_sigma(const AwFusedPath *p, double ta, double tb)
{
  double s = 0;
  size_t n = 0;
  for (size_t i = 0; i < p->n; i++)
    if (p->t_s[i] >= ta && p->t_s[i] <= tb) {
      s += norm3(p->pos_sigma_cam_m[i]);
      n++;
    }
  return n > 0 ? s / (double)n : (double)NAN;
}

/* ---- the faults ------------------------------------------------------------------------ */

static double
gyro_axis_max(const double g[3])
{
  return fmax(fabs(g[0]), fmax(fabs(g[1]), fabs(g[2])));
}

/* Gyro at full scale for 150 ms: the full scale is lowered until the readings reach it for
 * 150 ms in all (at a 100 Hz IMU, 15 samples), as a watch with a too-small range set would
 * record the fast part of the downswing; every axis is clipped at it and the file declares it. */
static void
fault_gyro_saturated(void)
{
  Case c;
  case_make(&c, 901, 1, -1);
  AwImuStream *s = c.imu;
  double dt = (s->t_s[s->n - 1] - s->t_s[0]) / (double)(s->n - 1);
  size_t want = (size_t)lround(0.150 / dt);
  double lo = 0, hi = 0;
  for (size_t i = 0; i < s->n; i++)
    hi = fmax(hi, gyro_axis_max(s->gyro_rad_s[i]));
  for (int it = 0; it < 60; it++) {
    double r = 0.5 * (lo + hi);
    size_t over = 0;
    for (size_t i = 0; i < s->n; i++)
      over += gyro_axis_max(s->gyro_rad_s[i]) >= r;
    if (over > want)
      lo = r;
    else
      hi = r;
  }
  double range = hi;
  size_t n_sat = 0;
  double t_first = INFINITY, t_last = -INFINITY;
  for (size_t i = 0; i < s->n; i++) {
    bool sat = false;
    for (int k = 0; k < 3; k++)
      if (fabs(s->gyro_rad_s[i][k]) >= range) {
        s->gyro_rad_s[i][k] = copysign(range, s->gyro_rad_s[i][k]);
        sat = true;
      }
    if (sat) {
      n_sat++;
      double t = imu_to_depth(&c, s->t_s[i]);
      t_first = fmin(t_first, t);
      t_last = fmax(t_last, t);
    }
  }
  s->meta.gyro_range_rad_s = range;
  fprintf(stderr, "gyro full scale %.2f rad/s: %zu samples (%.0f ms) at it, %.3f..%.3f s\n",
          range, n_sat, 1e3 * (double)n_sat * dt, t_first, t_last);
  AW_CHECK(n_sat * dt >= 0.130 && n_sat * dt <= 0.170);

  AwFusedPath *p = fuse_ok(&c, NULL);
  if (p != NULL) {
    /* flagged: the report and the rows say which samples were at full scale */
    AW_CHECK(p->report.imu_samples_saturated >= n_sat * 9 / 10);
    AW_CHECK(count_flag(p, AW_FUSED_IMU_SATURATED, t_first - dt, t_last + dt) >= n_sat * 9 / 10);
    AW_CHECK(count_flag(p, AW_FUSED_IMU_SATURATED, c.t0_s, t_first - 0.05) == 0);
    check_bounded("whole recording", error_stats(&c, p, c.t0_s, c.t1_s));
    check_bounded("saturated span", error_stats(&c, p, t_first, t_last));
  }
  aw_fused_path_free(p);
  case_free(&c);
}

/* The camera sees nothing for 1.5 s from just before the top through the follow-through: the
 * IMU carries the path alone, the uncertainty grows there and the rows say the camera was
 * missing. */
static void
fault_camera_blind(void)
{
  Case c;
  case_make(&c, 902, 1, -1);
  const AwSimSwing *w = &aw_sim_truth(c.sim)->swings[0];
  double ta = w->t_top_s - 0.3, tb = ta + 1.5;
  size_t blinded = 0;
  for (size_t i = 0; i < c.depth->n; i++)
    if (c.depth->t_s[i] >= ta && c.depth->t_s[i] <= tb) {
      c.depth->pos_cam_m[i][0] = c.depth->pos_cam_m[i][1] = c.depth->pos_cam_m[i][2] = NAN;
      c.depth->conf[i] = 0;
      blinded++;
    }
  AW_CHECK(blinded >= 40);
  AwFusedPath *p = fuse_ok(&c, NULL);
  if (p != NULL) {
    double frame = 1.0 / 30;
    double ia = ta + 2 * frame, ib = tb - 2 * frame;
    AW_CHECK(count_flag(p, AW_FUSED_CAM_ACCEPTED, ia, ib) == 0);
    AW_CHECK(count_flag(p, AW_FUSED_CAM_MISSING, ia, ib) == count_in(p, ia, ib));
    AW_CHECK(p->report.cam_frames_missing >= blinded);
    double s_in = mean_sigma(p, ta + 0.5, tb - 0.5), s_before = mean_sigma(p, ta - 1.0, ta - 0.1);
    fprintf(stderr, "mean |sigma|: %.4f m blind, %.4f m before\n", s_in, s_before);
    AW_CHECK(s_in > s_before);
    check_bounded("whole recording", error_stats(&c, p, c.t0_s, c.t1_s));
    check_bounded("blind span", error_stats(&c, p, ta, tb));
  }
  aw_fused_path_free(p);
  case_free(&c);
}

/* Every other camera frame never arrives (30 -> 15 frames/s): fewer updates, same result. */
static void
fault_half_frames(void)
{
  Case c;
  case_make(&c, 903, 1, -1);
  bool *keep = calloc(c.depth->n, sizeof *keep);
  for (size_t i = 0; i < c.depth->n; i++)
    keep[i] = i % 2 == 0;
  AwDepthStream *half = depth_slice_keep(c.depth, keep);
  free(keep);
  size_t n_before = c.depth->n;
  aw_depth_stream_free(c.depth);
  c.depth = half;
  AW_CHECK(c.depth->n == (n_before + 1) / 2);
  AwFusedPath *p = fuse_ok(&c, NULL);
  if (p != NULL) {
    const AwFusionReport *r = &p->report;
    AW_CHECK(r->cam_frames_used + r->cam_frames_rejected + r->cam_frames_missing <= c.depth->n);
    AW_CHECK(r->cam_frames_used >= c.depth->n / 2);
    check_bounded("whole recording", error_stats(&c, p, c.t0_s, c.t1_s));
  }
  aw_fused_path_free(p);
  case_free(&c);
}

/* The IMU clock runs 0.9 s behind the camera's (inside the default search range of 1 s): the
 * offset is found to within one IMU sample interval and the path is as good as without it. */
static void
fault_clock_offset(void)
{
  Case c;
  case_make(&c, 904, 1, 0.0);
  const AwSimTruth *t = aw_sim_truth(c.sim);
  AW_CHECK(t->clock_offset_s == 0.0);
  for (size_t i = 0; i < c.imu->n; i++)
    c.imu->t_s[i] -= 0.9;
  /* t_depth = (t_imu + 0.9)(1 + drift) + offset */
  double truth = t->clock_offset_s + 0.9 * (1 + t->clock_drift);
  AwFusedPath *p = fuse_ok(&c, NULL);
  if (p != NULL) {
    double dt = (c.imu->t_s[c.imu->n - 1] - c.imu->t_s[0]) / (double)(c.imu->n - 1);
    fprintf(stderr, "clock offset found %.5f s, truth %.5f s, confidence %.2f\n",
            p->report.clock_offset_s, truth, p->report.clock_confidence);
    AW_CHECK_NEAR(p->report.clock_offset_s, truth, dt);
    check_bounded("whole recording", error_stats(&c, p, c.t0_s, c.t1_s));
  }
  aw_fused_path_free(p);
  case_free(&c);
}

/* The watch stops sending for 30 s in the middle of a session (Bluetooth gone, say): the camera
 * alone carries the path there, the rows say the IMU was missing, and both sides are fine. */
static void
fault_imu_hole(void)
{
  Case c;
  case_make(&c, 905, 8, -1);
  const AwSimTruth *t = aw_sim_truth(c.sim);
  double ta = t->swings[1].t_end_s + 0.5, tb = ta + 30.0;
  AW_CHECK(tb < c.t1_s - 5);
  bool *keep = calloc(c.imu->n, sizeof *keep);
  size_t removed = 0;
  for (size_t i = 0; i < c.imu->n; i++) {
    double td = imu_to_depth(&c, c.imu->t_s[i]);
    keep[i] = !(td >= ta && td <= tb);
    removed += !keep[i];
  }
  AwImuStream *holed = imu_slice_keep(c.imu, keep);
  free(keep);
  aw_imu_stream_free(c.imu);
  c.imu = holed;
  fprintf(stderr, "removed %zu IMU samples over %.1f..%.1f s of %.1f s\n", removed, ta, tb,
          c.t1_s);
  AwFusedPath *p = fuse_ok(&c, NULL);
  if (p != NULL) {
    /* rows inside the hole, if the fusion makes any, say there was no IMU */
    AW_CHECK(count_flag(p, AW_FUSED_NO_IMU, ta + 0.1, tb - 0.1) == count_in(p, ta + 0.1, tb - 0.1));
    AW_CHECK(count_flag(p, AW_FUSED_NO_IMU, c.t0_s, ta - 0.5) == 0);
    check_bounded("before the hole", error_stats(&c, p, c.t0_s, ta - 0.1));
    check_bounded("after the hole", error_stats(&c, p, tb + 0.1, c.t1_s));
    if (count_in(p, ta, tb) > 0)
      check_bounded("in the hole", error_stats(&c, p, ta, tb));
  }
  aw_fused_path_free(p);
  case_free(&c);
}

/* A 30-minute recording: one swing, then the capture left running for half an hour with the
 * player standing at the finish (the streams go on with the still readings of their last half
 * second, repeated: the same noise and bias, no motion). The simulator's truth past its end is
 * the last pose, which is what the padded streams show. Every sample must be fused, finite and
 * bounded from the first minute to the last; the cost must stay proportional to the length (not
 * timed here: `arcwise bench` is where speed is measured). */
static void
fault_long_recording(void)
{
  Case c;
  case_make(&c, 906, 1, -1);
  const double pad_s = 1800.0;
  const AwImuStream *i0 = c.imu;
  const AwDepthStream *d0 = c.depth;
  double dti = (i0->t_s[i0->n - 1] - i0->t_s[0]) / (double)(i0->n - 1);
  double dtd = (d0->t_s[d0->n - 1] - d0->t_s[0]) / (double)(d0->n - 1);
  size_t per_i = (size_t)lround(0.5 / dti), per_d = (size_t)lround(0.5 / dtd);
  size_t ni = i0->n + (size_t)(pad_s / dti), nd = d0->n + (size_t)(pad_s / dtd);
  /* the last half second must be still for the padding to be the truth's last pose */
  for (size_t k = i0->n - per_i; k < i0->n; k++)
    AW_CHECK(norm3(i0->gyro_rad_s[k]) < 0.15);
  AwImuStream *im = aw_imu_stream_new(ni);
  AwDepthStream *dp = aw_depth_stream_new(nd);
  if (im == NULL || dp == NULL)
    exit(1);
  im->meta = i0->meta;
  dp->meta = d0->meta;
  for (size_t k = 0; k < ni; k++) {
    bool orig = k < i0->n;
    size_t src = orig ? k : i0->n - per_i + (k - i0->n) % per_i;
    im->t_s[k] = orig ? i0->t_s[k] : i0->t_s[i0->n - 1] + (double)(k - i0->n + 1) * dti;
    memcpy(im->accel_m_s2[k], i0->accel_m_s2[src], sizeof im->accel_m_s2[k]);
    memcpy(im->gyro_rad_s[k], i0->gyro_rad_s[src], sizeof im->gyro_rad_s[k]);
  }
  for (size_t k = 0; k < nd; k++) {
    bool orig = k < d0->n;
    size_t src = orig ? k : d0->n - per_d + (k - d0->n) % per_d;
    dp->t_s[k] = orig ? d0->t_s[k] : d0->t_s[d0->n - 1] + (double)(k - d0->n + 1) * dtd;
    memcpy(dp->pos_cam_m[k], d0->pos_cam_m[src], sizeof dp->pos_cam_m[k]);
    dp->conf[k] = d0->conf[src];
  }
  aw_imu_stream_free(c.imu);
  aw_depth_stream_free(c.depth);
  c.imu = im;
  c.depth = dp;
  double t_end = dp->t_s[nd - 1];
  c.t1_s = t_end;
  fprintf(stderr, "recording %.1f min, %zu IMU samples, %zu frames\n", (t_end - c.t0_s) / 60,
          im->n, dp->n);
  AwFusedPath *p = fuse_ok(&c, NULL);
  if (p != NULL) {
    AW_CHECK(p->n >= im->n * 9 / 10);
    AW_CHECK(p->t_s[p->n - 1] >= t_end - 1.0);
    check_bounded("whole recording", error_stats(&c, p, c.t0_s, t_end));
    check_bounded("first minute", error_stats(&c, p, c.t0_s, c.t0_s + 60));
    check_bounded("last minute", error_stats(&c, p, t_end - 60, t_end));
  }
  aw_fused_path_free(p);
  case_free(&c);
}

/* A recording that starts after the takeaway and ends before the finish: the IMU is never
 * still, so no zero-velocity update and no still-period gyro bias; the result must say so (no
 * STILL rows) and stay bounded. */
static void
fault_never_still(void)
{
  Case c;
  case_make(&c, 907, 1, -1);
  const AwSimSwing *w = &aw_sim_truth(c.sim)->swings[0];
  double ta = w->t_takeaway_s + 0.05, tb = w->t_finish_s - 0.05;
  bool *ki = calloc(c.imu->n, sizeof *ki), *kd = calloc(c.depth->n, sizeof *kd);
  for (size_t i = 0; i < c.imu->n; i++) {
    double td = imu_to_depth(&c, c.imu->t_s[i]);
    ki[i] = td >= ta && td <= tb;
  }
  for (size_t i = 0; i < c.depth->n; i++)
    kd[i] = c.depth->t_s[i] >= ta && c.depth->t_s[i] <= tb;
  AwImuStream *imu = imu_slice_keep(c.imu, ki);
  AwDepthStream *depth = depth_slice_keep(c.depth, kd);
  free(ki);
  free(kd);
  aw_imu_stream_free(c.imu);
  aw_depth_stream_free(c.depth);
  c.imu = imu;
  c.depth = depth;
  size_t quiet = 0;
  for (size_t i = 0; i < imu->n; i++)
    quiet += norm3(imu->gyro_rad_s[i]) < 0.1;
  fprintf(stderr, "%.2f s of swing, %zu IMU samples, %zu below 0.1 rad/s\n", tb - ta, imu->n,
          quiet);
  AwFusedPath *p = NULL;
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_fuse(c.imu, c.depth, NULL, &p, &err);
  if (st != AW_OK) {
    /* refusing a recording too short to calibrate is a bounded result too, if it says why */
    fprintf(stderr, "aw_fuse: %s (%s)\n", err.message, aw_status_to_string(st));
    AW_CHECK(p == NULL);
    AW_CHECK(err.message[0] != '\0');
    AW_CHECK(st == AW_ERR_TOO_FEW || st == AW_ERR_NO_CORRELATION);
  } else {
    check_sane(p);
    AW_CHECK(count_flag(p, AW_FUSED_STILL, -INFINITY, INFINITY) == 0);
    AW_CHECK(p->report.zupt_samples == 0);
    fprintf(stderr, "clock offset %.4f s (true %.4f), sync sigma %.4f, calibration sigma %.4f\n",
            p->report.clock_offset_s, aw_sim_truth(c.sim)->clock_offset_s,
            p->report.clock_offset_sigma_s, p->report.clock_calib_sigma_s);
    check_bounded("whole recording", error_stats(&c, p, ta, tb));
  }
  aw_fused_path_free(p);
  case_free(&c);
}

/* Clock drift of +-100 ppm (the range; quartz oscillators are specified to tens of ppm,
 * common practice) on a session of several shots over more than a minute: the simulator's
 * drift is set to 0 and the IMU clock rescaled by hand, so the drift is known exactly. The
 * fused report must give it within three of its own reported sigmas (an honest uncertainty),
 * that sigma small enough to tell the drift from none (under a third of the drift), and the
 * clock offset at every shot's impact within 2 ms (the clock floor; 100 ppm over the
 * session is several milliseconds end to end, so a drift taken as 0 fails; it did before the
 * calibration estimated the drift). Stage 1's own figures are printed only. */
static void
fault_clock_drift(void)
{
  const double drifts[] = { 100e-6, -100e-6 };
  for (size_t j = 0; j < 2; j++) {
    AwSimConfig cfg;
    aw_sim_config_default(&cfg, AW_SIM_NORMAL);
    cfg.seed = 911 + j;
    cfg.n_swings = 8;
    cfg.session_extras = true;
    cfg.imu.clock_drift_max = 0;
    AwSim *sim = NULL;
    AwError err;
    aw_error_clear(&err);
    AW_CHECK(aw_sim_new(&cfg, &sim, &err) == AW_OK);
    if (!sim) return;
    AwImuStream *imu = aw_sim_copy_imu(sim);
    const AwDepthStream *dep = aw_sim_depth(sim);
    const AwSimTruth *tr = aw_sim_truth(sim);
    double d = drifts[j];
    /* t_depth = t_imu + off = t_new (1 + d) + off with t_new = t_imu / (1 + d) */
    for (size_t i = 0; i < imu->n; i++) imu->t_s[i] /= 1 + d;
    double span = imu->t_s[imu->n - 1] - imu->t_s[0], tm = 0.5 * (imu->t_s[0] + imu->t_s[imu->n - 1]);
    AwFusionSettings s;
    aw_fusion_settings_default(&s);
    AwFusionReport rep;
    memset(&rep, 0, sizeof rep);
    AwStatus st = aw_fusion_sync_clocks(imu, dep, &s, &rep, &err);
    AW_CHECK(st == AW_OK);
    double off_mid = rep.clock_offset_s + rep.clock_drift * tm;
    double true_mid = tr->clock_offset_s + d * tm;
    fprintf(stderr, "%.0f s session, drift %+.0f ppm: found %+.1f ppm, offset at mid-recording "
            "error %+.2f ms (%s)\n", span, d * 1e6, rep.clock_drift * 1e6,
            1e3 * (off_mid - true_mid), st == AW_OK ? "ok" : err.message);
    AwFusedPath *p = NULL;
    AW_CHECK(aw_fuse(imu, dep, &s, &p, &err) == AW_OK);
    AW_CHECK(span > 60);
    if (p != NULL) {
      /* The pipeline's answer (stage 1's 30 s segment offsets and the calibration's windowed
       * vector fit start it; the filter's passes set the drift from the camera frames). What a
       * coach needs: the truth within 3 reported sigmas (99.7 % for a Gaussian), a sigma under a
       * third of the drift (so that +-100 ppm is told from none), and 2 ms, the issue's
       * clock-offset floor, at mid-recording and at every shot's impact. */
      double fm = p->report.clock_offset_s + p->report.clock_drift * tm;
      double sd = p->report.clock_drift_sigma;
      fprintf(stderr, "  fused: drift %+.1f +- %.1f ppm, offset at mid-recording error %+.2f ms\n",
              p->report.clock_drift * 1e6, sd * 1e6, 1e3 * (fm - true_mid));
      AW_CHECK(isfinite(sd) && sd > 0 && sd < fabs(d) / 3);
      AW_CHECK_NEAR(p->report.clock_drift, d, 3 * sd);
      AW_CHECK_NEAR(fm, true_mid, 0.002);
      AW_CHECK(tr->n_swings >= 4);
      double worst = 0;
      for (size_t k = 0; k < tr->n_swings; k++) {
        /* the IMU time of this impact: t_depth = t_imu (1 + d) + offset */
        double ti = (tr->swings[k].t_impact_s - tr->clock_offset_s) / (1 + d);
        double e = p->report.clock_offset_s + p->report.clock_drift * ti -
                   (tr->clock_offset_s + d * ti);
        worst = fmax(worst, fabs(e));
      }
      fprintf(stderr, "  worst clock error at a shot's impact %.2f ms (%zu shots)\n", 1e3 * worst,
              tr->n_swings);
      AW_CHECK(worst <= 0.002);
      aw_fused_path_free(p);
    }
    aw_imu_stream_free(imu);
    aw_sim_free(sim);
  }
}

/* The camera reports noise: random points in the field of view with random confidence. Either
 * the fusion refuses (the streams do not agree) with a message, or it returns an IMU-led path
 * that rejected the frames and says the clock is not to be trusted; never noise as a path. */
static void
fault_camera_noise(void)
{
  Case c;
  case_make(&c, 908, 1, -1);
  AwRng rng;
  aw_rng_seed(&rng, 908);
  for (size_t i = 0; i < c.depth->n; i++) {
    c.depth->pos_cam_m[i][0] = aw_rng_range(&rng, -1.0, 1.0);
    c.depth->pos_cam_m[i][1] = aw_rng_range(&rng, -1.0, 1.0);
    c.depth->pos_cam_m[i][2] = aw_rng_range(&rng, 1.0, 4.0);
    c.depth->conf[i] = aw_rng_range(&rng, 0.3, 1.0);
  }
  AwFusedPath *p = NULL;
  AwError err;
  aw_error_clear(&err);
  AwStatus st = aw_fuse(c.imu, c.depth, NULL, &p, &err);
  if (st != AW_OK) {
    char buf[1200];
    fprintf(stderr, "refused: %s (%s)\n", aw_error_format(&err, buf, sizeof buf),
            aw_status_to_string(st));
    AW_CHECK(p == NULL);
    AW_CHECK(err.message[0] != '\0');
    AW_CHECK(st == AW_ERR_NO_CORRELATION || st == AW_ERR_TOO_FEW);
  } else {
    check_sane(p);
    const AwFusionReport *r = &p->report;
    fprintf(stderr, "accepted: clock confidence %.2f, frames used %zu rejected %zu\n",
            r->clock_confidence, r->cam_frames_used, r->cam_frames_rejected);
    AW_CHECK(r->clock_confidence < 0.5);
    AW_CHECK(r->cam_frames_rejected > r->cam_frames_used);
  }
  aw_fused_path_free(p);
  case_free(&c);
}

static const struct {
  const char *name;
  void (*run)(void);
} cases[] = {
  { "gyro-saturated", fault_gyro_saturated },
  { "camera-blind", fault_camera_blind },
  { "half-frames", fault_half_frames },
  { "clock-offset", fault_clock_offset },
  { "imu-hole", fault_imu_hole },
  { "long-recording", fault_long_recording },
  { "never-still", fault_never_still },
  { "camera-noise", fault_camera_noise },
  { "clock-drift", fault_clock_drift },
};

int
main(int argc, char **argv)
{
  if (argc != 2) {
    fprintf(stderr, "usage: %s CASE\n", argv[0]);
    return 2;
  }
  for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++)
    if (strcmp(argv[1], cases[i].name) == 0) {
      cases[i].run();
      return AW_TEST_END();
    }
  fprintf(stderr, "unknown case '%s'\n", argv[1]);
  return 2;
}
