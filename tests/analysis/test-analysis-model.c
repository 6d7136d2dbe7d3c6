/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Events, metrics, mirroring, frames, swing finding and bad input on analytic swings whose
 * truth is known by construction (swing-model.h). */
#include "testutil.h"
#include "swing-model.h"

#include "arcwise/analysis.h"
#include "arcwise/math3.h"

#include <stdio.h>
#include <string.h>

typedef struct {
  size_t n, cap;
  double *t;
  double (*p)[3];
  double (*acc)[3];
  double (*gyro)[3];
  double (*q)[4];
} Path;

static void
path_push(Path *P, double t, const double p[3])
{
  if (P->n == P->cap) {
    P->cap = P->cap ? 2 * P->cap : 1024;
    P->t = realloc(P->t, P->cap * sizeof *P->t);
    P->p = realloc(P->p, P->cap * sizeof *P->p);
  }
  P->t[P->n] = t;
  memcpy(P->p[P->n], p, sizeof P->p[0]);
  P->n++;
}

static void
path_free(Path *P)
{
  free(P->t); free(P->p); free(P->acc); free(P->gyro); free(P->q);
  memset(P, 0, sizeof *P);
}

/* Samples one swing; R maps world to the output frame, offset shifts it; t0 shifts time. */
static void
sample_swing(Path *P, const TestSwingSpec *s, const double R[3][3], const double off[3],
             double t0, double t_from, double t_to)
{
  double dt = 1.0 / s->rate_hz;
  long k0 = lround(ceil((t_from) / dt - 1e-9));
  for (long k = k0; k * dt < t_to - 1e-12; k++) {
    double t = k * dt, pw[3], vw[3], pf[3];
    test_swing_eval(s, t, pw, vw);
    aw_mat_mul_v3(pf, R, pw);
    aw_v3_add(pf, pf, off);
    path_push(P, t + t0, pf);
  }
}

static void
traj_of(const Path *P, const double up[3], AwTrajectory *tr)
{
  memset(tr, 0, sizeof *tr);
  tr->n = P->n;
  tr->t_s = P->t;
  tr->pos_m = (const double (*)[3])P->p;
  tr->accel_body_m_s2 = (const double (*)[3])P->acc;
  tr->gyro_body_rad_s = (const double (*)[3])P->gyro;
  tr->q_f_body = (const double (*)[4])P->q;
  aw_v3_copy(tr->up, up);
  tr->sync_offset_s = NAN;
  tr->sync_confidence = NAN;
}

static const double I3[3][3] = { { 1, 0, 0 }, { 0, 1, 0 }, { 0, 0, 1 } };
static const double Z3[3] = { 0, 0, 0 };
static const double UP[3] = { 0, 0, 1 };

/* 24/8 frames at 30 fps: the most common tour tempo of Novosel & Garrity (2004), quoted by
 * Grober & Cholewicki; Tb = 0.800 s, Td = 0.267 s, ratio 3.0. Tolerance: one camera frame
 * (REFERENCES.md "Suggested test checks" #17). */
static void
test_tempo_24_8(void)
{
  TestSwingSpec s;
  test_swing_spec_default(&s);
  s.rate_hz = 30.0;
  s.backswing_s = 24.0 / 30.0;
  s.downswing_s = 8.0 / 30.0;
  Path P = { 0 };
  sample_swing(&P, &s, I3, Z3, 0.0, 0.0, test_swing_t_end(&s));
  AwTrajectory tr;
  traj_of(&P, UP, &tr);
  AwAnalysis *a = NULL;
  AwError err;
  AwStatus st = aw_analyze(&tr, NULL, &a, &err);
  AW_CHECK(st == AW_OK);
  if (st != AW_OK) {
    fprintf(stderr, "analyze: %s\n", err.message);
    path_free(&P);
    return;
  }
  AW_CHECK(a->n_swings == 1);
  const AwSwing *w = &a->swings[0];
  double frame = 1.0 / 30.0;
  AW_CHECK_NEAR(w->metrics[AW_METRIC_BACKSWING_S], 0.800, frame);
  AW_CHECK_NEAR(w->metrics[AW_METRIC_DOWNSWING_S], 0.267, frame);
  /* One frame on either duration moves the ratio to 24/9 = 2.67 or 24/7 = 3.43. */
  AW_CHECK_NEAR(w->metrics[AW_METRIC_TEMPO_RATIO], 3.0, 0.43);
  AW_CHECK_NEAR(w->events[AW_EVENT_TOP].t_s, test_swing_t_top(&s), frame);
  AW_CHECK_NEAR(w->events[AW_EVENT_IMPACT].t_s, test_swing_t_impact(&s), frame);
  AW_CHECK(w->events[AW_EVENT_IMPACT].estimated); /* no accelerometer: estimated, flagged */
  AW_CHECK(!w->half);
  aw_analysis_free(a);
  path_free(&P);
}

/* At 100 Hz with an accelerometer and gyro: contact found, speeds and planes analytic. */
static void
fill_imu(Path *P, const TestSwingSpec *s, double t0, double spike_t)
{
  P->acc = calloc(P->n, sizeof *P->acc);
  P->gyro = calloc(P->n, sizeof *P->gyro);
  P->q = calloc(P->n, sizeof *P->q);
  double ci = cos(s->incline_rad), si = sin(s->incline_rad);
  /* The plane normal e1 x e2 of the model. */
  double nrm[3] = { 0, -si, ci };
  for (size_t i = 0; i < P->n; i++) {
    double w;
    test_swing_phi(s, P->t[i] - t0, &w);
    /* A smooth specific force (gravity plus a slowly varying part) and the contact spike. */
    P->acc[i][2] = 9.81 + 0.5 * sin(P->t[i]);
    /* Contact: 120 m/s^2 for 4 ms, box-averaged over each sample interval as an
     * anti-aliased IMU reports it. */
    double dt = 1.0 / s->rate_hz, lo = P->t[i] - 0.5 * dt, hi = P->t[i] + 0.5 * dt;
    double ov = fmin(hi, spike_t + 0.002) - fmax(lo, spike_t - 0.002);
    if (ov > 0)
      P->acc[i][0] -= 120.0 * ov / dt;
    for (int a = 0; a < 3; a++)
      P->gyro[i][a] = w * nrm[a] * (s->mirror && a == 0 ? -1 : 1);
    aw_quat_identity(P->q[i]);
  }
}

static AwAnalysis *
analyze_ok(const Path *P, const double up[3], const AwAnalysisSettings *set)
{
  AwTrajectory tr;
  traj_of(P, up, &tr);
  AwAnalysis *a = NULL;
  AwError err;
  if (aw_analyze(&tr, set, &a, &err) != AW_OK) {
    fprintf(stderr, "analyze failed: %s\n", err.message);
    return NULL;
  }
  return a;
}

static void
test_metrics_100hz(void)
{
  TestSwingSpec s;
  test_swing_spec_default(&s);
  Path P = { 0 };
  sample_swing(&P, &s, I3, Z3, 0.0, 0.0, test_swing_t_end(&s));
  fill_imu(&P, &s, 0.0, test_swing_t_impact(&s));
  AwAnalysisSettings set;
  aw_analysis_settings_default(&set);
  set.club_length_m = 1.0;
  AwAnalysis *a = analyze_ok(&P, UP, &set);
  AW_CHECK(a != NULL && a->n_swings == 1);
  if (a == NULL || a->n_swings != 1) {
    path_free(&P);
    aw_analysis_free(a);
    return;
  }
  const AwSwing *w = &a->swings[0];
  const double *m = w->metrics;
  AW_CHECK(!w->events[AW_EVENT_IMPACT].estimated);
  AW_CHECK(!w->practice);
  AW_CHECK_NEAR(w->events[AW_EVENT_IMPACT].t_s, test_swing_t_impact(&s), 0.006);
  AW_CHECK_NEAR(w->events[AW_EVENT_TOP].t_s, test_swing_t_top(&s), 0.01);
  AW_CHECK_NEAR(w->events[AW_EVENT_TAKEAWAY].t_s, test_swing_t_takeaway(&s), 0.03);
  /* Top and impact each within half an IMU sample (5 ms) move the ratio by up to 0.15. */
  AW_CHECK_NEAR(m[AW_METRIC_TEMPO_RATIO], 3.0, 0.15);
  /* Analytic speed at impact: r * omega_imp, omega_imp = 2 theta / Td. The metric averages the
   * sample before contact, up to one sample earlier, where the speed is still rising. */
  double w_imp = 2 * s.top_angle_rad / s.downswing_s;
  double v_imp = s.radius_m * w_imp;
  AW_CHECK_NEAR(m[AW_METRIC_HAND_SPEED_IMPACT_M_S] / v_imp, 1.0, 0.05);
  /* The model's speed peaks in a kink at impact, which the derivative's window rounds. */
  AW_CHECK_NEAR(m[AW_METRIC_PEAK_HAND_SPEED_M_S] / v_imp, 1.0, 0.02);
  /* Lever: v_hand + ratio * omega * L with the gyro about the plane normal. */
  AW_CHECK_NEAR(m[AW_METRIC_CLUB_SPEED_IMPACT_M_S] / (v_imp + set.club_arm_rate_ratio * w_imp * 1.0),
                1.0, 0.05);
  AW_CHECK_NEAR(m[AW_METRIC_PLANE_BACKSWING_DEG], 60.0, 0.01);
  AW_CHECK_NEAR(m[AW_METRIC_PLANE_DOWNSWING_DEG], 60.0, 0.01);
  /* The path turns at omega_imp; 5 ms of impact timing turn the chord by about 2 degrees. */
  AW_CHECK_NEAR(m[AW_METRIC_PATH_DIRECTION_DEG], 0.0, 3.0);
  /* Top height: r (1 - cos theta) sin(incline). */
  double h_top = s.radius_m * (1 - cos(s.top_angle_rad)) * sin(s.incline_rad);
  AW_CHECK_NEAR(m[AW_METRIC_TOP_HEIGHT_M], h_top, 1e-3);
  AW_CHECK_NEAR(m[AW_METRIC_TOP_BEHIND_M], s.radius_m * sin(s.top_angle_rad), 1e-3);
  /* The top lies toward the player: negative "out". */
  AW_CHECK_NEAR(m[AW_METRIC_TOP_OUT_M], -s.radius_m * (1 - cos(s.top_angle_rad)) * cos(s.incline_rad), 1e-3);
  /* Impact is timed to within the IMU's sample (10 ms); the hands travel v_imp per second. */
  AW_CHECK_NEAR(m[AW_METRIC_IMPACT_AHEAD_M], 0.0, v_imp * 0.006);
  /* Path length: r times the whole arc (theta back, theta down, phi_f through). */
  double phi_f = w_imp * s.follow_s / 2;
  AW_CHECK_NEAR(m[AW_METRIC_PATH_LENGTH_M], s.radius_m * (2 * s.top_angle_rad + phi_f), 0.01);
  AW_CHECK_NEAR(m[AW_METRIC_PEAK_FOREARM_RATE_RAD_S], w_imp, 0.3);
  AW_CHECK(w->quality.notes & AW_NOTE_IMPACT_ESTIMATED ? 0 : 1);

  /* The same swing seen from a tilted camera (x right, y down, z forward, pitched 12 degrees,
   * rolled 3, looking at the player face-on): identical metrics, since up comes from the data. */
  double ang = 12.0 * (3.14159265358979323846 / 180.0), roll = 3.0 * (3.14159265358979323846 / 180.0);
  double q1[4], q2[4], q[4], rv1[3] = { ang, 0, 0 }, rv2[3] = { 0, 0, roll }, R[3][3];
  aw_quat_from_rotvec(q1, rv1);
  aw_quat_from_rotvec(q2, rv2);
  /* world (x target, y toward the player, z up) -> face-on camera beyond the ball looking at
   * the player (x right = target, y down, z forward = +y) */
  double C[3][3] = { { 1, 0, 0 }, { 0, 0, -1 }, { 0, 1, 0 } }, Rt[3][3];
  aw_quat_mul(q, q2, q1);
  aw_quat_to_mat(R, q);
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) {
      Rt[r][c] = 0;
      for (int k = 0; k < 3; k++)
        Rt[r][c] += R[r][k] * C[k][c];
    }
  Path Q = { 0 };
  double off[3] = { 0.1, 0.4, 2.5 }, up_c[3];
  sample_swing(&Q, &s, (const double (*)[3])Rt, off, 0.0, 0.0, test_swing_t_end(&s));
  fill_imu(&Q, &s, 0.0, test_swing_t_impact(&s));
  for (size_t i = 0; i < Q.n; i++) /* orientation: body = world axes */
    aw_mat_to_quat(Q.q[i], (const double (*)[3])Rt);
  aw_mat_mul_v3(up_c, (const double (*)[3])Rt, UP);
  AwAnalysis *b = analyze_ok(&Q, up_c, &set);
  AW_CHECK(b != NULL && b->n_swings == 1);
  if (b != NULL && b->n_swings == 1)
    for (int k = 0; k < AW_METRIC_COUNT_; k++) {
      double x = a->swings[0].metrics[k], y = b->swings[0].metrics[k];
      if (isfinite(x) || isfinite(y))
        AW_CHECK_NEAR(y, x, 1e-6 * (1 + fabs(x)));
    }
  aw_analysis_free(b);
  path_free(&Q);

  /* Left-handed: the mirror image with handed = left gives equal metrics. */
  TestSwingSpec sl = s;
  sl.mirror = 1;
  Path L = { 0 };
  sample_swing(&L, &sl, I3, Z3, 0.0, 0.0, test_swing_t_end(&sl));
  fill_imu(&L, &sl, 0.0, test_swing_t_impact(&sl));
  AwAnalysisSettings setl = set;
  setl.handed = AW_HANDED_LEFT;
  AwAnalysis *l = analyze_ok(&L, UP, &setl);
  AW_CHECK(l != NULL && l->n_swings == 1);
  if (l != NULL && l->n_swings == 1) {
    for (int k = 0; k < AW_METRIC_COUNT_; k++) {
      double x = a->swings[0].metrics[k], y = l->swings[0].metrics[k];
      if (isfinite(x) || isfinite(y))
        AW_CHECK_NEAR(y, x, 1e-6 * (1 + fabs(x)));
    }
    /* Mirrored, not identical: the target axis points the other way in the world. */
    AW_CHECK_NEAR(l->swings[0].R_sw_f[0][0], -a->swings[0].R_sw_f[0][0], 1e-9);
  }
  aw_analysis_free(l);
  path_free(&L);

  /* A practice swing: no contact spike, so impact is estimated and flagged. */
  Path Pr = { 0 };
  sample_swing(&Pr, &s, I3, Z3, 0.0, 0.0, test_swing_t_end(&s));
  fill_imu(&Pr, &s, 0.0, -100.0);
  AwAnalysis *pr = analyze_ok(&Pr, UP, &set);
  AW_CHECK(pr != NULL && pr->n_swings == 1);
  if (pr != NULL && pr->n_swings == 1) {
    AW_CHECK(pr->swings[0].practice);
    AW_CHECK(pr->swings[0].events[AW_EVENT_IMPACT].estimated);
    AW_CHECK(pr->swings[0].quality.notes & AW_NOTE_IMPACT_ESTIMATED);
    AW_CHECK_NEAR(pr->swings[0].events[AW_EVENT_IMPACT].t_s, test_swing_t_impact(&s), 0.02);
  }
  aw_analysis_free(pr);
  path_free(&Pr);

  /* A gyro at full scale just before contact reads the rate short: the club-head speed then
   * comes from the path's turning rate (on this circular arc exactly omega_imp), with the note
   * that says so, instead of from the clipped reading (which would give v_imp + 2.1 * 12 * 1 m). */
  {
    Path Pc = { 0 };
    sample_swing(&Pc, &s, I3, Z3, 0.0, 0.0, test_swing_t_end(&s));
    fill_imu(&Pc, &s, 0.0, test_swing_t_impact(&s));
    const double range = 12.0; /* rad/s, below the arm's 19.5 rad/s at impact */
    for (size_t i = 0; i < Pc.n; i++)
      for (int ax = 0; ax < 3; ax++)
        Pc.gyro[i][ax] = fmax(-range, fmin(range, Pc.gyro[i][ax]));
    AwTrajectory trc;
    traj_of(&Pc, UP, &trc);
    trc.gyro_range_rad_s = range;
    AwAnalysis *ac = NULL;
    AwError errc;
    AwAnalysisSettings setc = set;
    setc.club_length_m = 1.0;
    AW_CHECK(aw_analyze(&trc, &setc, &ac, &errc) == AW_OK);
    if (ac != NULL && ac->n_swings == 1) {
      double w_imp_c = 2 * s.top_angle_rad / s.downswing_s, v_imp_c = s.radius_m * w_imp_c;
      AW_CHECK_NEAR(ac->swings[0].metrics[AW_METRIC_CLUB_SPEED_IMPACT_M_S] /
                      (v_imp_c + setc.club_arm_rate_ratio * w_imp_c * 1.0), 1.0, 0.05);
      AW_CHECK(ac->swings[0].quality.notes & AW_NOTE_CLUB_FROM_PATH);
    }
    aw_analysis_free(ac);
    path_free(&Pc);
  }

  /* The motion's own change of the force's level is not a ball (settings:
   * contact_level_ratio): the specific force falls by 300 m/s^2 (about the centripetal force of
   * this 14.6 m/s arc of 0.75 m) in a straight line over 30 ms from impact on and stays there,
   * with no spike. Its corners leave second differences of 300 / 3 / 2 = 50 m/s^2, far above
   * the smooth background and a velocity change of 0.5 m/s in a sample, more than
   * contact_min_loss (2 %) of the hands' speed, so only the level rule tells it from contact.
   * With the contact spike added on top, the swing is struck again. */
  for (int with_spike = 0; with_spike < 2; with_spike++) {
    Path Ps = { 0 };
    sample_swing(&Ps, &s, I3, Z3, 0.0, 0.0, test_swing_t_end(&s));
    fill_imu(&Ps, &s, 0.0, with_spike ? test_swing_t_impact(&s) : -100.0);
    for (size_t i = 0; i < Ps.n; i++) {
      double u = (Ps.t[i] - test_swing_t_impact(&s)) / 0.03;
      Ps.acc[i][0] -= 300.0 * fmin(1.0, fmax(0.0, u));
    }
    AwAnalysis *ps = analyze_ok(&Ps, UP, &set);
    AW_CHECK(ps != NULL && ps->n_swings == 1);
    if (ps != NULL && ps->n_swings == 1) {
      AW_CHECK(ps->swings[0].practice == !with_spike);
      AW_CHECK(ps->swings[0].events[AW_EVENT_IMPACT].estimated == !with_spike);
    }
    aw_analysis_free(ps);
    path_free(&Ps);
  }

  /* Comparison: a copy moved and turned in the room compares as identical; the consistency of
   * two equal swings has zero spread. */
  AwTrajectory ta, tb;
  Path Q2 = { 0 };
  sample_swing(&Q2, &s, (const double (*)[3])Rt, off, 5.0, 0.0, test_swing_t_end(&s));
  fill_imu(&Q2, &s, 5.0, test_swing_t_impact(&s) + 5.0);
  for (size_t i = 0; i < Q2.n; i++)
    aw_mat_to_quat(Q2.q[i], (const double (*)[3])Rt);
  AwAnalysis *b2 = analyze_ok(&Q2, up_c, &set);
  traj_of(&P, UP, &ta);
  traj_of(&Q2, up_c, &tb);
  AW_CHECK(b2 != NULL && b2->n_swings == 1);
  if (b2 != NULL && b2->n_swings == 1) {
    AwSwingComparison cmp;
    AwError err;
    AW_CHECK(aw_swing_compare(&ta, &a->swings[0], &tb, &b2->swings[0], &cmp, &err) == AW_OK);
    AW_CHECK_NEAR(cmp.overall_rms_m, 0.0, 1e-3);
    for (int p = AW_PHASE_BACKSWING; p <= AW_PHASE_FOLLOW_THROUGH; p++)
      AW_CHECK_NEAR(cmp.phase_rms_m[p], 0.0, 1e-3);
    AW_CHECK_NEAR(cmp.event_dt_s[AW_EVENT_IMPACT], 0.0, 1e-3);
    const AwSwing *pair[2] = { &a->swings[0], &b2->swings[0] };
    AwConsistency cons;
    aw_session_consistency(pair, 2, &cons);
    AW_CHECK(cons.n[AW_METRIC_TEMPO_RATIO] == 2);
    AW_CHECK_NEAR(cons.sd[AW_METRIC_TEMPO_RATIO], 0.0, 1e-6);
    AW_CHECK_NEAR(cons.mean[AW_METRIC_PLANE_BACKSWING_DEG], 60.0, 0.01);
  }
  /* A slower backswing: the warp aligns by events, so the path deviation stays small while
   * the timing difference shows. */
  TestSwingSpec s2 = s;
  s2.backswing_s = 1.0;
  Path P3 = { 0 };
  sample_swing(&P3, &s2, I3, Z3, 0.0, 0.0, test_swing_t_end(&s2));
  fill_imu(&P3, &s2, 0.0, test_swing_t_impact(&s2));
  AwAnalysis *c3 = analyze_ok(&P3, UP, &set);
  AW_CHECK(c3 != NULL && c3->n_swings == 1);
  if (c3 != NULL && c3->n_swings == 1) {
    AwTrajectory t3;
    traj_of(&P3, UP, &t3);
    AwSwingComparison cmp;
    AW_CHECK(aw_swing_compare(&ta, &a->swings[0], &t3, &c3->swings[0], &cmp, NULL) == AW_OK);
    AW_CHECK_NEAR(cmp.event_dt_s[AW_EVENT_TOP], 0.2, 0.02);
    AW_CHECK_NEAR(cmp.phase_duration_diff_s[AW_PHASE_BACKSWING], 0.2, 0.02);
    AW_CHECK(cmp.phase_rms_m[AW_PHASE_BACKSWING] < 0.05);
    AW_CHECK_NEAR(cmp.metric_diff[AW_METRIC_TEMPO_RATIO], 3.75 - 3.0, 0.15);
  }
  /* Session consistency of the 3:1 swing and the slower one (design tempos 3.0 and 3.75):
   * the sample standard deviation of two values is |a - b| / sqrt(2) = 0.530 (the n - 1
   * definition, numpy.std(ddof=1)); mean 3.375. Hand-computed; the tolerance of 0.2 covers
   * the events' own timing: the analytic backswing starts with zero velocity, acceleration
   * and jerk, so its takeaway is found up to 30 ms late (checked above), some 4 % of tempo. */
  if (c3 != NULL && c3->n_swings == 1) {
    const AwSwing *pair[2] = { &a->swings[0], &c3->swings[0] };
    AwConsistency cons;
    aw_session_consistency(pair, 2, &cons);
    AW_CHECK(cons.n[AW_METRIC_TEMPO_RATIO] == 2);
    AW_CHECK_NEAR(cons.mean[AW_METRIC_TEMPO_RATIO], 3.375, 0.2);
    AW_CHECK_NEAR(cons.sd[AW_METRIC_TEMPO_RATIO], 0.75 / sqrt(2.0), 0.1);
    AW_CHECK_NEAR(cons.min[AW_METRIC_TEMPO_RATIO], 3.0, 0.2);
    AW_CHECK_NEAR(cons.max[AW_METRIC_TEMPO_RATIO], 3.75, 0.2);
    /* Equal backswing planes: no spread, to rounding. */
    AW_CHECK_NEAR(cons.sd[AW_METRIC_PLANE_BACKSWING_DEG], 0.0, 0.05);
  }
  /* A longer arm (radius 0.80 m against 0.75 m) on the same timing, placed and turned
   * elsewhere in the room: after the alignment at address and along the target line, B's hand
   * is A's scaled by r_b / r_a about the address position, so at arc angle phi the two lie
   * dr * |(sin phi, 1 - cos phi)| = dr * 2 |sin(phi / 2)| apart. The backswing's RMS of that
   * over A's own samples is the hand-computed reference. */
  {
    TestSwingSpec s4 = s;
    s4.radius_m = 0.80;
    Path P4 = { 0 };
    sample_swing(&P4, &s4, (const double (*)[3])Rt, off, 5.0, 0.0, test_swing_t_end(&s4));
    fill_imu(&P4, &s4, 5.0, test_swing_t_impact(&s4) + 5.0);
    for (size_t i = 0; i < P4.n; i++)
      aw_mat_to_quat(P4.q[i], (const double (*)[3])Rt);
    AwAnalysis *c4 = analyze_ok(&P4, up_c, &set);
    AW_CHECK(c4 != NULL && c4->n_swings == 1);
    if (c4 != NULL && c4->n_swings == 1) {
      AwTrajectory t4;
      traj_of(&P4, up_c, &t4);
      AwSwingComparison cmp;
      AW_CHECK(aw_swing_compare(&ta, &a->swings[0], &t4, &c4->swings[0], &cmp, NULL) == AW_OK);
      double ss = 0;
      size_t c = 0;
      const AwPhase *ph = &a->swings[0].phases[AW_PHASE_BACKSWING];
      for (size_t i = 0; i < P.n; i++) {
        if (P.t[i] < ph->start_s || P.t[i] > ph->end_s)
          continue;
        double rate, phi = test_swing_phi(&s, P.t[i], &rate);
        double d = (s4.radius_m - s.radius_m) * 2.0 * fabs(sin(0.5 * phi));
        ss += d * d;
        c++;
      }
      AW_CHECK(c > 10);
      double ref = sqrt(ss / (double)c);
      fprintf(stderr, "compare: backswing deviation %.2f cm, hand-computed %.2f cm\n",
              100 * cmp.phase_rms_m[AW_PHASE_BACKSWING], 100 * ref);
      AW_CHECK(ref > 0.03);
      AW_CHECK_NEAR(cmp.phase_rms_m[AW_PHASE_BACKSWING], ref, 0.003);
      AW_CHECK_NEAR(cmp.metric_diff[AW_METRIC_TOP_HEIGHT_M],
                    (s4.radius_m - s.radius_m) * (1 - cos(s.top_angle_rad)) * sin(s.incline_rad),
                    0.003);
      AW_CHECK_NEAR(cmp.event_dt_s[AW_EVENT_TOP], 0.0, 0.005);
    }
    aw_analysis_free(c4);
    path_free(&P4);
  }
  aw_analysis_free(c3);
  path_free(&P3);
  aw_analysis_free(b2);
  path_free(&Q2);
  aw_analysis_free(a);
  path_free(&P);
}

/* Appends a stretch of still hands at p. */
static void
push_still(Path *P, double *t, double dur, double rate, const double p[3])
{
  for (double e = 0; e < dur - 1e-9; e += 1.0 / rate) {
    path_push(P, *t, p);
    *t += 1.0 / rate;
  }
}

/* A waggle: small to-and-fro of the hands at address (3 cm, 2 Hz). */
static void
push_waggle(Path *P, double *t, double rate, const double p[3])
{
  for (double e = 0; e < 1.5; e += 1.0 / rate) {
    double q[3] = { p[0] - 0.03 * sin(2 * 3.14159265 * 2 * e), p[1], p[2] + 0.01 * sin(2 * 3.14159265 * 2 * e) };
    path_push(P, *t, q);
    *t += 1.0 / rate;
  }
}

/* Walking 2 m at 1.3 m/s with the hands bobbing and swinging (+-0.25 m, 1 Hz). */
static void
push_walk(Path *P, double *t, double rate, double p[3], double dir)
{
  double dur = 2.0 / 1.3;
  double p0[3] = { p[0], p[1], p[2] };
  for (double e = 0; e < dur; e += 1.0 / rate) {
    double q[3] = { p0[0] + 0.25 * sin(2 * 3.14159265 * e) * 0.5, p0[1] + dir * 1.3 * e,
                    p0[2] + 0.03 * sin(4 * 3.14159265 * e) };
    path_push(P, *t, q);
    *t += 1.0 / rate;
  }
  p[0] = P->p[P->n - 1][0];
  p[1] = P->p[P->n - 1][1];
  p[2] = P->p[P->n - 1][2];
}

static void
test_continuous_and_bad_input(void)
{
  TestSwingSpec s;
  test_swing_spec_default(&s);
  Path P = { 0 };
  double t = 0, here[3] = { 0, 0, 0.8 };
  const int K = 4;
  double t_imp[4];
  for (int k = 0; k < K; k++) {
    push_still(&P, &t, 1.0, s.rate_hz, here);
    push_waggle(&P, &t, s.rate_hz, here);
    /* The swing itself (its own set-up still is part of the spec). */
    double off[3];
    double p0[3], v0[3];
    test_swing_eval(&s, 0, p0, v0);
    aw_v3_sub(off, here, p0);
    double t0 = t;
    sample_swing(&P, &s, I3, off, t0, 0.0, test_swing_t_end(&s));
    t = P.t[P.n - 1] + 1.0 / s.rate_hz;
    t_imp[k] = t0 + test_swing_t_impact(&s);
    double pe[3];
    aw_v3_copy(pe, P.p[P.n - 1]);
    /* Hands back down, then a walk away and back. */
    push_still(&P, &t, 0.5, s.rate_hz, pe);
    push_walk(&P, &t, s.rate_hz, here, +1);
    push_still(&P, &t, 1.0, s.rate_hz, here);
    push_walk(&P, &t, s.rate_hz, here, -1);
  }
  push_still(&P, &t, 1.0, s.rate_hz, here);
  AwAnalysis *a = analyze_ok(&P, UP, NULL);
  AW_CHECK(a != NULL && a->n_swings == (size_t)K);
  if (a != NULL && a->n_swings == (size_t)K)
    for (int k = 0; k < K; k++) {
      AW_CHECK_NEAR(a->swings[k].events[AW_EVENT_IMPACT].t_s, t_imp[k], 0.02);
      AW_CHECK(a->swings[k].t_start_s < t_imp[k] && a->swings[k].t_end_s > t_imp[k]);
      AW_CHECK(P.t[a->swings[k].i_start] == a->swings[k].t_start_s);
    }
  aw_analysis_free(a);

  /* No swing: only still hands, waggles and walks. */
  Path N = { 0 };
  t = 0;
  here[0] = 0; here[1] = 0; here[2] = 0.8;
  push_still(&N, &t, 1.0, s.rate_hz, here);
  push_waggle(&N, &t, s.rate_hz, here);
  push_walk(&N, &t, s.rate_hz, here, 1);
  push_still(&N, &t, 1.0, s.rate_hz, here);
  AwTrajectory tr;
  traj_of(&N, UP, &tr);
  AwError err;
  AwAnalysis *none = NULL;
  AW_CHECK(aw_analyze(&tr, NULL, &none, &err) == AW_ERR_NO_SWING);
  AW_CHECK(none == NULL);
  AW_CHECK(strstr(err.message, "no swing") != NULL);
  fprintf(stderr, "(expected) %s\n", err.message);

  /* A recording that stops in the downswing. */
  Path C = { 0 };
  sample_swing(&C, &s, I3, Z3, 0.0, 0.0, test_swing_t_impact(&s) + 0.02);
  traj_of(&C, UP, &tr);
  AwAnalysis *cut = NULL;
  AwStatus st = aw_analyze(&tr, NULL, &cut, &err);
  AW_CHECK(st == AW_ERR_INCOMPLETE);
  AW_CHECK(cut == NULL);
  AW_CHECK(strstr(err.message, "mid-swing") != NULL);
  fprintf(stderr, "(expected) %s\n", err.message);

  /* Club length outside the Rules of Golf (48 in = 1.2192 m). */
  AwAnalysisSettings set;
  aw_analysis_settings_default(&set);
  set.club_length_m = 1.25;
  traj_of(&P, UP, &tr);
  AW_CHECK(aw_analyze(&tr, &set, &cut, &err) == AW_ERR_RANGE);
  path_free(&C);
  path_free(&N);
  path_free(&P);
}

static void
test_tables(void)
{
  AwClubType c;
  AW_CHECK(aw_club_from_name("driver", &c) && c == AW_CLUB_DRIVER);
  AW_CHECK(aw_club_from_name("7I", &c) && c == AW_CLUB_7I);
  AW_CHECK(aw_club_from_name("pw", &c) && c == AW_CLUB_PW);
  AW_CHECK(!aw_club_from_name("putter", &c));
  /* Rules of Golf, Equipment Rules Part 2 1c: 18 in to 48 in. */
  for (int k = 0; k < AW_CLUB_COUNT_; k++) {
    const AwClubInfo *ci = aw_club_info((AwClubType)k);
    AW_CHECK(ci != NULL && ci->default_length_m >= AW_CLUB_LENGTH_MIN_M &&
             ci->default_length_m <= AW_CLUB_LENGTH_MAX_M);
  }
  AW_CHECK_NEAR(AW_CLUB_LENGTH_MAX_M, 48 * 0.0254, 1e-12);
  for (int k = 0; k < AW_METRIC_COUNT_; k++)
    AW_CHECK(aw_metric_info((AwMetricId)k) != NULL && (int)aw_metric_info((AwMetricId)k)->id == k);
  for (unsigned b = 0; b < AW_NOTE_NOTE_COUNT_; b++)
    AW_CHECK(aw_quality_note_text(1u << b) != NULL);
  AW_CHECK(aw_quality_note_text(1u << 30) == NULL);
  /* Lever model, worked by hand: 8 m/s + 2 * 15 rad/s * 1.0 m = 38 m/s. */
  AW_CHECK_NEAR(aw_club_speed_lever(8.0, 15.0, 1.0, 2.0), 38.0, 1e-12);
}

/* Sensor trust by masking on constructed paths: the IMU-only path is the full one plus a
 * straight-line drift (what an IMU-only run inherits, removed by the trend) and a bump in the
 * backswing; the camera-only path carries a 5 cm bump through the downswing. */
static void
test_trust(void)
{
  TestSwingSpec s;
  test_swing_spec_default(&s);
  Path P = { 0 };
  sample_swing(&P, &s, I3, Z3, 0.0, 0.0, test_swing_t_end(&s));
  AwAnalysis *a = analyze_ok(&P, UP, NULL);
  AW_CHECK(a != NULL && a->n_swings == 1);
  if (a == NULL || a->n_swings != 1) {
    path_free(&P);
    aw_analysis_free(a);
    return;
  }
  const AwSwing *w = &a->swings[0];
  Path C = { 0 }, M = { 0 };
  double tb0 = w->phases[AW_PHASE_BACKSWING].start_s, tb1 = w->phases[AW_PHASE_BACKSWING].end_s;
  double td0 = w->phases[AW_PHASE_DOWNSWING].start_s, td1 = w->phases[AW_PHASE_DOWNSWING].end_s;
  for (size_t i = 0; i < P.n; i++) {
    double t = P.t[i], pc[3], pm[3];
    aw_v3_copy(pc, P.p[i]);
    aw_v3_copy(pm, P.p[i]);
    pc[0] += 0.3 + 0.2 * t; /* inherited offset and velocity error */
    if (t > tb0 && t < tb1)
      pc[1] += 0.04 * pow(sin(3.14159265 * (t - tb0) / (tb1 - tb0)), 2);
    if (t > td0 && t < td1)
      pm[2] += 0.05 * pow(sin(3.14159265 * (t - td0) / (td1 - td0)), 2);
    path_push(&C, t, pc);
    path_push(&M, t, pm);
  }
  AwTrajectory tf, tc, tm;
  traj_of(&P, UP, &tf);
  traj_of(&C, UP, &tc);
  traj_of(&M, UP, &tm);
  AwError err;
  AW_CHECK(aw_analysis_add_trust(a, &tf, &tc, &tm, &err) == AW_OK);
  const AwPhase *ph = a->swings[0].phases;
  /* Camera-only departs in the downswing: the IMU carries it. */
  AW_CHECK(ph[AW_PHASE_DOWNSWING].dominance == AW_DOMINANCE_IMU);
  AW_CHECK(ph[AW_PHASE_DOWNSWING].dev_imu_masked_m > 0.01);
  /* The drift is a straight line in time and goes; what is left is the backswing bump's last
   * sample at the phase boundary (below 0.1 mm). */
  AW_CHECK(ph[AW_PHASE_DOWNSWING].dev_camera_masked_m < 1e-4);
  /* IMU-only departs in the backswing: the camera carries it. */
  AW_CHECK(ph[AW_PHASE_BACKSWING].dominance == AW_DOMINANCE_CAMERA);
  /* The still address, camera not reported lost: camera. */
  AW_CHECK(ph[AW_PHASE_ADDRESS].dominance == AW_DOMINANCE_CAMERA);
  aw_analysis_free(a);
  path_free(&C);
  path_free(&M);
  path_free(&P);
}

int
main(void)
{
  test_tables();
  test_tempo_24_8();
  test_metrics_100hz();
  test_continuous_and_bad_input();
  test_trust();
  return AW_TEST_END();
}
