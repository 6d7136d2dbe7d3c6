/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once
/* An analytic test swing: the lead hand on a circle in an inclined plane (a one-lever model of
 * the swing, after the double-pendulum treatments of Cochran & Stobbs 1968 with the wrist
 * locked). Event times are exact by construction, so the analysis can be checked against them.
 * Frame "world" (right-handed): x toward the target, z up, so a right-handed player, whose
 * target is on the left, stands on the +y side of the ball line; the test may rotate it into
 * any camera-like frame. */

#include <math.h>
#include <stdlib.h>
#include <string.h>

typedef struct {
  double t_address_s;   /* set-up still from 0 to here (takeaway) */
  double backswing_s, downswing_s, follow_s, finish_hold_s;
  double radius_m;      /* shoulder to hand */
  double top_angle_rad; /* arc from address to the top */
  double incline_rad;   /* plane inclination to the horizontal */
  double rate_hz;
  int mirror;           /* 1: left-handed (x mirrored) */
} TestSwingSpec;

static inline void
test_swing_spec_default(TestSwingSpec *s)
{
  s->t_address_s = 1.0;
  s->backswing_s = 0.8;
  s->downswing_s = 0.8 / 3.0;
  s->follow_s = 0.3;
  s->finish_hold_s = 1.0;
  s->radius_m = 0.75;
  s->top_angle_rad = 2.6;
  s->incline_rad = 60.0 * 3.14159265358979323846 / 180.0;
  s->rate_hz = 100.0;
  s->mirror = 0;
}

/* In-plane angle phi(t): 0 at address/impact, negative in the backswing. */
static inline double
test_swing_phi(const TestSwingSpec *s, double t, double *omega)
{
  double t1 = s->t_address_s, t2 = t1 + s->backswing_s, t3 = t2 + s->downswing_s;
  double t4 = t3 + s->follow_s, th = s->top_angle_rad;
  double w_imp = 2.0 * th / s->downswing_s;
  double phi_f = w_imp * s->follow_s / 2.0;
  if (t <= t1) { *omega = 0; return 0; }
  if (t <= t2) { /* minimum-jerk backswing */
    double u = (t - t1) / s->backswing_s;
    *omega = -th * (30 * u * u - 60 * u * u * u + 30 * u * u * u * u) / s->backswing_s;
    return -th * (10 * u * u * u - 15 * u * u * u * u + 6 * u * u * u * u * u);
  }
  if (t <= t3) { /* accelerating downswing, fastest at impact */
    double u = (t - t2) / s->downswing_s;
    *omega = th * 2 * u / s->downswing_s;
    return -th * (1 - u * u);
  }
  if (t <= t4) { /* decelerating follow-through */
    double u = (t - t3) / s->follow_s;
    *omega = phi_f * (2 - 2 * u) / s->follow_s;
    return phi_f * (2 * u - u * u);
  }
  *omega = 0;
  return phi_f;
}

/* Position and velocity in the world frame. */
static inline void
test_swing_eval(const TestSwingSpec *s, double t, double p[3], double v[3])
{
  double w;
  double phi = test_swing_phi(s, t, &w);
  /* Circle centre above and inside the address hand; in-plane axes e1 (toward target) and
   * e2 (up the plane, toward the player at +y). */
  double ci = cos(s->incline_rad), si = sin(s->incline_rad);
  double e1[3] = { 1, 0, 0 }, e2[3] = { 0, ci, si };
  double r = s->radius_m;
  for (int a = 0; a < 3; a++) {
    p[a] = r * sin(phi) * e1[a] + r * (1 - cos(phi)) * e2[a];
    v[a] = (r * cos(phi) * e1[a] + r * sin(phi) * e2[a]) * w;
  }
  p[2] += 0.8; /* hands about 0.8 m above the floor at address */
  if (s->mirror) {
    p[0] = -p[0];
    v[0] = -v[0];
  }
}

static inline double test_swing_t_takeaway(const TestSwingSpec *s) { return s->t_address_s; }
static inline double test_swing_t_top(const TestSwingSpec *s) { return s->t_address_s + s->backswing_s; }
static inline double test_swing_t_impact(const TestSwingSpec *s)
{ return s->t_address_s + s->backswing_s + s->downswing_s; }
static inline double test_swing_t_end(const TestSwingSpec *s)
{ return test_swing_t_impact(s) + s->follow_s + s->finish_hold_s; }
