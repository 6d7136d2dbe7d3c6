/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The swing simulator: timeline of motion segments, two-lever swing kinematics, the IMU and the
 * depth camera models. See arcwise/sim.h for the model and its sources. */
#include "sim-internal.h"

#include "arcwise/math3.h"
#include "arcwise/signal.h"
#include "arcwise/units.h"

#include <math.h>
#include <stdlib.h>
#include <stdio.h>
#include <string.h>

/* C17 does not add const to a pointer to arrays implicitly. */
#define CM(R) ((const double (*)[3])(R))

/* ---------------------------------------------------------------------------------------- */
/* Generator: xoshiro256** seeded through splitmix64 (Blackman & Vigna, "Scrambled linear
 * pseudorandom number generators", 2018; public-domain reference code). */

static uint64_t
splitmix64(uint64_t *x)
{
  uint64_t z = (*x += 0x9e3779b97f4a7c15ULL);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

void
aw_rng_seed(AwRng *rng, uint64_t seed)
{
  uint64_t x = seed;
  for (int i = 0; i < 4; i++)
    rng->s[i] = splitmix64(&x);
}

static inline uint64_t
rotl(uint64_t x, int k)
{
  return (x << k) | (x >> (64 - k));
}

uint64_t
aw_rng_next(AwRng *rng)
{
  uint64_t *s = rng->s;
  uint64_t result = rotl(s[1] * 5, 7) * 9;
  uint64_t t = s[1] << 17;
  s[2] ^= s[0];
  s[3] ^= s[1];
  s[1] ^= s[2];
  s[0] ^= s[3];
  s[2] ^= t;
  s[3] = rotl(s[3], 45);
  return result;
}

double
aw_rng_uniform(AwRng *rng)
{
  return (double)(aw_rng_next(rng) >> 11) * 0x1.0p-53;
}

double
aw_rng_range(AwRng *rng, double lo, double hi)
{
  return lo + (hi - lo) * aw_rng_uniform(rng);
}

double
aw_rng_gauss(AwRng *rng)
{
  double u1 = 1.0 - aw_rng_uniform(rng); /* (0, 1] */
  double u2 = aw_rng_uniform(rng);
  return sqrt(-2.0 * log(u1)) * cos(2.0 * AW_PI * u2);
}

/* ---------------------------------------------------------------------------------------- */
/* Names */

const char *
aw_sim_level_name(AwSimLevel level)
{
  switch (level) {
  case AW_SIM_EASY: return "easy";
  case AW_SIM_NORMAL: return "normal";
  case AW_SIM_HARD: return "hard";
  }
  return "?";
}

const char *
aw_sim_view_name(AwSimView view)
{
  return view == AW_SIM_DOWN_THE_LINE ? "down-the-line" : "face-on";
}

const char *
aw_sim_activity_name(AwSimActivity a)
{
  static const char *names[] = { "still", "swing", "practice", "waggle", "settle", "walk" };
  return (unsigned)a < sizeof names / sizeof names[0] ? names[a] : "?";
}

const char *
aw_sim_phase_name(AwSimPhase p)
{
  static const char *names[] = { "none", "address", "takeaway", "backswing", "downswing",
                                 "follow-through", "finish" };
  return (unsigned)p < sizeof names / sizeof names[0] ? names[p] : "?";
}

const char *
aw_sim_frame_kind_name(AwSimFrameKind k)
{
  static const char *names[] = { "ok", "dropout", "occluded-missing", "occluded-snapped",
                                 "outlier" };
  return (unsigned)k < sizeof names / sizeof names[0] ? names[k] : "?";
}

/* ---------------------------------------------------------------------------------------- */
/* Defaults. Sensor figures: ../shared/REFERENCES.md §8 (BMI160 / LSM6DS3 class parts);
 * depth noise §7 (Khoshelham & Oude Elberink 2012: sigma_z ~ 1.6e-3 z^2 through 4 cm at 5 m). */

void
aw_swing_style_default(AwSwingStyle *s)
{
  memset(s, 0, sizeof *s);
  s->backswing_s = 0.80;          /* 24 frames at 30 fps (Novosel & Garrity 2004) */
  s->tempo = 3.0;
  s->follow_s = 0.70;
  s->hand_speed_impact_m_s = 7.5;
  s->arm_top_rad = aw_deg_to_rad(140);
  s->arm_finish_rad = aw_deg_to_rad(150);
  s->hinge_top_rad = aw_deg_to_rad(90);
  s->hinge_finish_rad = aw_deg_to_rad(80);
  s->release_ratio = 1.2;
  s->release_start = 0.55;
  s->backswing_plane_rad = aw_deg_to_rad(52);
  s->downswing_plane_rad = aw_deg_to_rad(47);
  s->path_yaw_rad = aw_deg_to_rad(2);
  s->arm_length_m = 0.62;
  s->club_length_m = 1.10;
  s->lateral_shift_m = 0.07;
  s->roll_top_rad = aw_deg_to_rad(70);
  s->roll_finish_rad = aw_deg_to_rad(-80);
  s->roll_rate_impact_rad_s = aw_deg_to_rad(1100);
  s->impact_speed_loss = 0.12;
  s->impact_recovery_s = 0.008;
  s->left_handed = false;
}

void
aw_sim_imu_model_default(AwSimImuModel *m, AwSimLevel level)
{
  memset(m, 0, sizeof *m);
  m->rate_hz = 100;
  m->antialias_window_s = 0.01;
  m->bits = 16;
  const double mg = 1e-3 * AW_GRAVITY_STANDARD_M_S2, ug = 1e-6 * AW_GRAVITY_STANDARD_M_S2;
  const double dps = AW_RAD_PER_DEG;
  switch (level) {
  case AW_SIM_EASY:
    m->accel_noise_density = 90 * ug;   /* LSM6DS3 high-performance */
    m->gyro_noise_density = 0.005 * dps;
    m->accel_bias_max_m_s2 = 10 * mg;
    m->gyro_bias_max_rad_s = 0.5 * dps; /* BMI270-class lifetime offset */
    m->scale_error_max = 0.003;
    m->accel_range_m_s2 = 16 * AW_GRAVITY_STANDARD_M_S2;
    m->gyro_range_rad_s = 2000 * dps;
    m->timestamp_jitter_s = 0.0002;
    m->clock_offset_max_s = 0.3;
    m->clock_drift_max = 20e-6;
    m->mount_random_rad = aw_deg_to_rad(5);
    break;
  case AW_SIM_NORMAL:
    m->accel_noise_density = 180 * ug;  /* BMI160 */
    m->gyro_noise_density = 0.007 * dps;
    m->accel_bias_max_m_s2 = 40 * mg;   /* zero-g offset +-40 mg */
    m->gyro_bias_max_rad_s = 3 * dps;   /* BMI160 zero-rate +-3 deg/s */
    m->accel_bias_walk = 0.3 * mg;
    m->gyro_bias_walk = 0.02 * dps;
    m->scale_error_max = 0.01;
    m->accel_range_m_s2 = 16 * AW_GRAVITY_STANDARD_M_S2;
    m->gyro_range_rad_s = 2000 * dps;
    m->timestamp_jitter_s = 0.001;
    m->clock_offset_max_s = 1.0;
    m->clock_drift_max = 100e-6;
    m->mount_random_rad = 4.0;          /* any orientation */
    break;
  case AW_SIM_HARD:
    m->accel_noise_density = 300 * ug;
    m->gyro_noise_density = 0.014 * dps;
    m->accel_bias_max_m_s2 = 80 * mg;
    m->gyro_bias_max_rad_s = 10 * dps;  /* LSM6DS3 zero-rate +-10 dps */
    m->accel_bias_walk = 1.0 * mg;
    m->gyro_bias_walk = 0.05 * dps;
    m->scale_error_max = 0.02;
    m->accel_range_m_s2 = 8 * AW_GRAVITY_STANDARD_M_S2;
    m->gyro_range_rad_s = 1000 * dps;
    m->timestamp_jitter_s = 0.002;
    m->clock_offset_max_s = 1.0;
    m->clock_drift_max = 100e-6;
    m->mount_random_rad = 4.0;
    break;
  }
}

/* Depth impairments per level (easy, normal, hard): lateral noise per metre of depth, depth
 * noise coefficient (sigma_z = k z^2; 1.6e-3 after Khoshelham & Oude Elberink 2012),
 * occlusion windows around the top and in the follow-through, the share of occluded frames
 * missing (the rest snap toward the body), random dropouts, gross outliers, camera roll. */
static const struct {
  double sigma_xy_per_m, sigma_z_coeff_per_m, occlusion_top_s, occlusion_follow_s;
  double occluded_missing_prob, dropout_prob, outlier_prob, roll_max_deg;
} depth_levels[3] = {
  [AW_SIM_EASY] = { 0.0015, 0.8e-3, 0.10, 0.12, 0.8, 0.01, 0.002, 1 },
  [AW_SIM_NORMAL] = { 0.0025, 1.6e-3, 0.20, 0.25, 0.6, 0.03, 0.01, 3 },
  [AW_SIM_HARD] = { 0.004, 3.0e-3, 0.30, 0.40, 0.5, 0.06, 0.03, 5 },
};

void
aw_sim_depth_model_default(AwSimDepthModel *m, AwSimLevel level)
{
  memset(m, 0, sizeof *m);
  m->rate_hz = 30;
  m->distance_m = 3.0;
  m->height_m = 1.3;
  m->tilt_rad = aw_deg_to_rad(8);
  if ((unsigned)level > AW_SIM_HARD)
    return;
  m->sigma_xy_per_m = depth_levels[level].sigma_xy_per_m;
  m->sigma_z_coeff_per_m = depth_levels[level].sigma_z_coeff_per_m;
  m->occlusion_top_s = depth_levels[level].occlusion_top_s;
  m->occlusion_follow_s = depth_levels[level].occlusion_follow_s;
  m->occluded_missing_prob = depth_levels[level].occluded_missing_prob;
  m->dropout_prob = depth_levels[level].dropout_prob;
  m->outlier_prob = depth_levels[level].outlier_prob;
  m->roll_max_rad = aw_deg_to_rad(depth_levels[level].roll_max_deg);
}

void
aw_sim_config_default(AwSimConfig *c, AwSimLevel level)
{
  memset(c, 0, sizeof *c);
  c->seed = 1;
  c->level = level;
  c->view = AW_SIM_FACE_ON;
  c->n_swings = 1;
  c->session_extras = false;
  c->truth_rate_hz = 200;
  c->style_fixed = false;
  aw_swing_style_default(&c->style);
  aw_sim_imu_model_default(&c->imu, level);
  aw_sim_depth_model_default(&c->depth, level);
}

/* ---------------------------------------------------------------------------------------- */
/* Profiles */

/* C2 quintic smooth step on [0, 1]; its peak slope is 1.875 at u = 0.5. */
static inline double
smooth5(double u)
{
  if (u <= 0) return 0;
  if (u >= 1) return 1;
  return u * u * u * (10 + u * (-15 + 6 * u));
}

static double
quintic(const SimKnot *k0, const SimKnot *k1, double t)
{
  double T = k1->t - k0->t, u = (t - k0->t) / T;
  double u2 = u * u, u3 = u2 * u, u4 = u3 * u, u5 = u4 * u;
  double h0 = 1 - 10 * u3 + 15 * u4 - 6 * u5;
  double h1 = u - 6 * u3 + 8 * u4 - 3 * u5;
  double h2 = 0.5 * (u2 - 3 * u3 + 3 * u4 - u5);
  double h3 = 0.5 * (u3 - 2 * u4 + u5);
  double h4 = -4 * u3 + 7 * u4 - 3 * u5;
  double h5 = 10 * u3 - 15 * u4 + 6 * u5;
  return h0 * k0->p + h1 * k0->v * T + h2 * k0->a * T * T + h3 * k1->a * T * T +
         h4 * k1->v * T + h5 * k1->p;
}

static double
profile_eval(const SimProfile *p, double t)
{
  if (t <= p->k[0].t)
    return p->k[0].p;
  for (int i = 0; i + 1 < p->n; i++)
    if (t < p->k[i + 1].t)
      return quintic(&p->k[i], &p->k[i + 1], t);
  return p->k[p->n - 1].p;
}

static void
profile_add(SimProfile *p, double t, double v, double d, double a)
{
  if (p->n < SIM_MAX_KNOTS) {
    SimKnot k = { t, v, d, a };
    p->k[p->n++] = k;
  }
}

/* Contact warp: profile time s = t - loss * H(t - t_imp), where H' = h(x) =
 * (1 - e^{-x/tau_on})^3 e^{-x/tau_off}: a speed dip with a ~1 ms onset and a recovery of
 * tau_off, C2 at contact. loss is pre-divided by the peak of h so it is the peak speed loss. */
static double
warp_H(double x, double tau_on, double tau_off)
{
  if (x <= 0)
    return 0;
  static const double c[4] = { 1, -3, 3, -1 };
  double H = 0;
  for (int k = 0; k < 4; k++) {
    double lam = k / tau_on + 1 / tau_off;
    H += c[k] * (-expm1(-lam * x)) / lam;
  }
  return H;
}

static double
warp_h_peak(double tau_on, double tau_off)
{
  double best = 0;
  for (int i = 1; i <= 2000; i++) {
    double x = i * (tau_on + tau_off) / 500.0;
    double h = pow(-expm1(-x / tau_on), 3) * exp(-x / tau_off);
    best = fmax(best, h);
  }
  return best;
}

static double
swing_time(const SimSwingProf *sp, double t)
{
  if (sp->loss <= 0)
    return t;
  return t - sp->loss * warp_H(t - sp->t_imp, sp->tau_on, sp->tau_off);
}

static SimQ
swing_q(const SimSwingProf *sp, double t)
{
  double s = swing_time(sp, t);
  SimQ q;
  q.theta = profile_eval(&sp->theta, s);
  q.beta = profile_eval(&sp->beta, s);
  double Tb = sp->t_top - sp->t_ta, Td = sp->t_imp - sp->t_top;
  q.roll = sp->roll_top * smooth5((s - sp->t_ta) / Tb) +
           (sp->roll_fin - sp->roll_top) * smooth5((s - (sp->roll_c - sp->roll_w)) / (2 * sp->roll_w));
  double w = smooth5((s - sp->t_top) / (0.6 * Td));
  q.plane = sp->plane_b + (sp->plane_d - sp->plane_b) * w;
  q.yaw = sp->yaw_d * w;
  q.shift = sp->shift * smooth5((s - sp->t_top) / Td);
  return q;
}

/* ---------------------------------------------------------------------------------------- */
/* Geometry: the two-lever model in the player frame, then the stance transform. */

typedef struct {
  double wrist[3], club[3], R_grav_forearm[3][3], body_ref[3];
} SimPose;

/* The two-lever model above is built with the ball at +y of the player frame (x toward the
 * target, z up): a player facing +y has the target on the right, which is a left-hander's
 * stance (lead arm = right arm). A right-hander is its mirror image in the vertical plane
 * through the target line, y -> -y: the ball then lies at -y, the player faces -y and the
 * target is on the player's left. Positions flip; an orientation becomes M R M with
 * M = diag(1, -1, 1), still a proper rotation. */
static void
mirror_to_right_handed(double wrist[3], double club[3], double body[3], double R[3][3])
{
  wrist[1] = -wrist[1];
  club[1] = -club[1];
  body[1] = -body[1];
  R[1][0] = -R[1][0]; R[1][2] = -R[1][2];
  R[0][1] = -R[0][1]; R[2][1] = -R[2][1];
}

static void
pose_from(const AwSim *sim, const SimQ *q, const SimB *b, SimPose *out)
{
  double cy = cos(q->yaw), sy = sin(q->yaw), cp = cos(q->plane), sp = sin(q->plane);
  double et[3] = { cy, sy, 0 };
  double eo[3] = { -sy, cy, 0 };
  double ed[3] = { cp * eo[0], cp * eo[1], -sp };
  double n[3];
  aw_v3_cross(n, et, ed);
  double hub[3] = { sim->hub[0] + q->shift, sim->hub[1], sim->hub[2] };
  double ua[3], uc[3];
  double ct = cos(q->theta), st = sin(q->theta);
  double cc = cos(q->theta + q->beta), sc = sin(q->theta + q->beta);
  for (int i = 0; i < 3; i++) {
    ua[i] = ct * ed[i] - st * et[i];
    uc[i] = cc * ed[i] - sc * et[i];
  }
  double w[3], c[3];
  for (int i = 0; i < 3; i++) {
    w[i] = hub[i] + sim->arm_m * ua[i];
    c[i] = w[i] + sim->club_m * uc[i];
  }
  /* Forearm frame: x along the arm toward the hand, z the plane normal, rolled about x. */
  double f2[3];
  aw_v3_cross(f2, n, ua);
  double cr = cos(q->roll), sr = sin(q->roll);
  double R[3][3];
  for (int i = 0; i < 3; i++) {
    R[i][0] = ua[i];
    R[i][1] = cr * f2[i] + sr * n[i];
    R[i][2] = -sr * f2[i] + cr * n[i];
  }
  double body[3] = { 0.0, 0.05, sim->hub[2] - 0.35 }; /* chest, where snapped keypoints go */
  /* Stance: heading about z, then floor position and bob. */
  double ch = cos(b->heading), sh = sin(b->heading);
  double H[3][3] = { { ch, -sh, 0 }, { sh, ch, 0 }, { 0, 0, 1 } };
  double off[3] = { b->x, b->y, b->z };
  aw_mat_mul_v3(out->wrist, CM(H), w);
  aw_mat_mul_v3(out->club, CM(H), c);
  aw_mat_mul_v3(out->body_ref, CM(H), body);
  for (int i = 0; i < 3; i++) {
    out->wrist[i] += off[i];
    out->club[i] += off[i];
    out->body_ref[i] += off[i];
  }
  for (int i = 0; i < 3; i++)
    for (int j = 0; j < 3; j++)
      out->R_grav_forearm[i][j] = H[i][0] * R[0][j] + H[i][1] * R[1][j] + H[i][2] * R[2][j];
  if (!sim->left)
    mirror_to_right_handed(out->wrist, out->club, out->body_ref, out->R_grav_forearm);
}

static SimQ
q_lerp(const SimQ *a, const SimQ *b, double w)
{
  SimQ q;
  q.theta = a->theta + (b->theta - a->theta) * w;
  q.beta = a->beta + (b->beta - a->beta) * w;
  q.roll = a->roll + (b->roll - a->roll) * w;
  q.plane = a->plane + (b->plane - a->plane) * w;
  q.yaw = a->yaw + (b->yaw - a->yaw) * w;
  q.shift = a->shift + (b->shift - a->shift) * w;
  return q;
}

static const SimSeg *
find_seg(const AwSim *sim, double t)
{
  size_t lo = 0, hi = sim->n_seg;
  while (hi - lo > 1) {
    size_t mid = (lo + hi) / 2;
    if (sim->seg[mid].t0 <= t)
      lo = mid;
    else
      hi = mid;
  }
  return &sim->seg[lo];
}

static void
seg_state(const AwSim *sim, const SimSeg *sg, double t, SimQ *q, SimB *b)
{
  double T = sg->t1 - sg->t0, u = T > 0 ? (t - sg->t0) / T : 1;
  if (u < 0) u = 0;
  if (u > 1) u = 1;
  *b = sg->b0;
  *q = sg->q0;
  switch (sg->kind) {
  case SEG_STATIC:
    *q = sg->q0;
    break;
  case SEG_BLEND:
    *q = q_lerp(&sg->q0, &sg->q1, smooth5(u));
    break;
  case SEG_SWING:
    *q = swing_q(&sim->prof[sg->prof], t);
    break;
  case SEG_WAGGLE: {
    double env = smooth5(u * T / 0.3) * smooth5((1 - u) * T / 0.3);
    double ph = 2 * AW_PI * sg->freq_hz * (u * T);
    *q = sg->q0;
    q->theta += env * sg->amp_theta * sin(ph);
    q->beta += env * sg->amp_beta * sin(ph + 0.4);
    q->roll += env * 0.3 * sg->amp_beta * sin(ph + 0.2);
    break;
  }
  case SEG_SPIN: {
    /* Heading = rate * integral of a smooth ramp of 0.5 s, then constant rate. */
    double Tr = 0.5, x = t - sg->t0, r;
    if (x <= 0)
      r = 0;
    else if (x < Tr) {
      double v = x / Tr;
      r = Tr * v * v * v * v * (2.5 + v * (-3 + v));
    } else
      r = 0.5 * Tr + (x - Tr);
    /* The right-hander's mirror image (pose_from) turns a heading the other way: pre-negate
     * so the configured rate is counter-clockwise seen from above for either hand. */
    b->heading = sg->b0.heading + (sim->left ? 1 : -1) * sg->freq_hz * r;
    break;
  }
  case SEG_WALK: {
    double w = smooth5(u);
    b->x = sg->b0.x + (sg->b1.x - sg->b0.x) * w;
    b->y = sg->b0.y + (sg->b1.y - sg->b0.y) * w;
    b->heading = sg->b0.heading + (sg->b1.heading - sg->b0.heading) * w;
    double env = 16 * u * u * (1 - u) * (1 - u);
    double sp = sin(AW_PI * sg->freq_hz * u);
    b->z = 0.025 * env * sp * sp;
    *q = sg->q0;
    q->theta += 0.12 * env * sin(AW_PI * sg->freq_hz * u);
    break;
  }
  }
}

static void
pose_at(const AwSim *sim, double t, SimPose *out)
{
  const SimSeg *sg = find_seg(sim, t);
  SimQ q;
  SimB b;
  seg_state(sim, sg, t, &q, &b);
  pose_from(sim, &q, &b, out);
}

/* Full kinematics at t by 4th-order central differences (step 20 us) of the analytic pose. */
#define FD_H 2e-5
typedef struct {
  double wrist[3], wrist_v[3], wrist_a[3], club[3];
  double imu[3], imu_a[3];
  double R_gb[3][3];
  double omega_b[3];
  double f_b[3];
} SimKin;

static void
kin_at(const AwSim *sim, double t, SimKin *k)
{
  SimPose P[5];
  double imu[5][3];
  double Rb[5][3][3];
  for (int i = 0; i < 5; i++) {
    pose_at(sim, t + (i - 2) * FD_H, &P[i]);
    for (int r = 0; r < 3; r++)
      for (int c = 0; c < 3; c++)
        Rb[i][r][c] = P[i].R_grav_forearm[r][0] * sim->R_forearm_body[0][c] +
                      P[i].R_grav_forearm[r][1] * sim->R_forearm_body[1][c] +
                      P[i].R_grav_forearm[r][2] * sim->R_forearm_body[2][c];
    double lev[3];
    aw_mat_mul_v3(lev, CM(Rb[i]), sim->lever_body);
    aw_v3_sub(imu[i], P[i].wrist, lev);
  }
  const double h = FD_H;
  for (int j = 0; j < 3; j++) {
    k->wrist[j] = P[2].wrist[j];
    k->club[j] = P[2].club[j];
    k->imu[j] = imu[2][j];
    k->wrist_v[j] = (-P[4].wrist[j] + 8 * P[3].wrist[j] - 8 * P[1].wrist[j] + P[0].wrist[j]) / (12 * h);
    k->wrist_a[j] = (-P[4].wrist[j] + 16 * P[3].wrist[j] - 30 * P[2].wrist[j] + 16 * P[1].wrist[j] -
                     P[0].wrist[j]) / (12 * h * h);
    k->imu_a[j] = (-imu[4][j] + 16 * imu[3][j] - 30 * imu[2][j] + 16 * imu[1][j] - imu[0][j]) /
                  (12 * h * h);
  }
  memcpy(k->R_gb, Rb[2], sizeof k->R_gb);
  double Rd[3][3];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++)
      Rd[r][c] = (-Rb[4][r][c] + 8 * Rb[3][r][c] - 8 * Rb[1][r][c] + Rb[0][r][c]) / (12 * h);
  /* Omega_body = R^T dR/dt (skew); take the antisymmetric part. */
  double W[3][3];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++)
      W[r][c] = Rb[2][0][r] * Rd[0][c] + Rb[2][1][r] * Rd[1][c] + Rb[2][2][r] * Rd[2][c];
  k->omega_b[0] = 0.5 * (W[2][1] - W[1][2]);
  k->omega_b[1] = 0.5 * (W[0][2] - W[2][0]);
  k->omega_b[2] = 0.5 * (W[1][0] - W[0][1]);
  double fg[3] = { k->imu_a[0], k->imu_a[1], k->imu_a[2] + sim->g };
  aw_mat_tmul_v3(k->f_b, CM(Rb[2]), fg);
}

/* ---------------------------------------------------------------------------------------- */
/* Building the timeline */

static int
push_seg(AwSim *sim, const SimSeg *s)
{
  if (sim->n_seg == sim->cap_seg) {
    size_t nc = sim->cap_seg ? 2 * sim->cap_seg : 32;
    SimSeg *p = realloc(sim->seg, nc * sizeof *p);
    if (p == NULL)
      return -1;
    sim->seg = p;
    sim->cap_seg = nc;
  }
  sim->seg[sim->n_seg++] = *s;
  return 0;
}

static int
push_prof(AwSim *sim, const SimSwingProf *p)
{
  if (sim->n_prof == sim->cap_prof) {
    size_t nc = sim->cap_prof ? 2 * sim->cap_prof : 8;
    SimSwingProf *q = realloc(sim->prof, nc * sizeof *q);
    if (q == NULL)
      return -1;
    sim->prof = q;
    sim->cap_prof = nc;
  }
  sim->prof[sim->n_prof++] = *p;
  return 0;
}

#define PUSH(arr, n, cap, item)                                                  \
  do {                                                                           \
    if ((n) == (cap)) {                                                          \
      size_t nc_ = (cap) ? 2 * (cap) : 16;                                       \
      void *p_ = realloc((arr), nc_ * sizeof *(arr));                            \
      if (p_ == NULL)                                                            \
        return -1;                                                               \
      (arr) = p_;                                                                \
      (cap) = nc_;                                                               \
    }                                                                            \
    (arr)[(n)++] = (item);                                                       \
  } while (0)

static SimQ
address_q(const AwSwingStyle *s)
{
  SimQ q = { 0, 0, 0, s->backswing_plane_rad, 0, 0 };
  return q;
}

static SimQ
carry_q(void)
{
  SimQ q = { -0.25, 1.35, 0.4, aw_deg_to_rad(78), 0, 0 };
  return q;
}

/* Draws a style for one shot. `skill` in [0, 1] (1 = tour-like) steers tempo and speed. */
static void
draw_style(AwRng *r, double skill, bool left, AwSwingStyle *s)
{
  aw_swing_style_default(s);
  s->left_handed = left;
  s->tempo = aw_rng_range(r, 2.5, 4.0);
  s->backswing_s = aw_rng_range(r, 0.70, 1.05);
  s->follow_s = aw_rng_range(r, 0.6, 0.85);
  s->hand_speed_impact_m_s = 4.0 + 6.0 * fmin(1.0, fmax(0.0, skill * 0.7 + 0.3 * aw_rng_uniform(r)));
  s->arm_top_rad = aw_deg_to_rad(aw_rng_range(r, 120, 155));
  s->arm_finish_rad = aw_deg_to_rad(aw_rng_range(r, 130, 160));
  s->hinge_top_rad = aw_deg_to_rad(aw_rng_range(r, 75, 100));
  s->hinge_finish_rad = aw_deg_to_rad(aw_rng_range(r, 60, 95));
  s->release_ratio = aw_rng_range(r, 1.0, 1.5);
  s->release_start = aw_rng_range(r, 0.45, 0.65);
  s->backswing_plane_rad = aw_deg_to_rad(aw_rng_range(r, 45, 60));
  s->downswing_plane_rad = s->backswing_plane_rad + aw_deg_to_rad(aw_rng_range(r, -9, 4));
  s->path_yaw_rad = aw_deg_to_rad(aw_rng_range(r, -5, 5));
  s->arm_length_m = aw_rng_range(r, 0.56, 0.68);
  s->club_length_m = aw_rng_range(r, 0.95, 1.16);
  s->lateral_shift_m = aw_rng_range(r, 0.02, 0.12);
  s->roll_top_rad = aw_deg_to_rad(aw_rng_range(r, 55, 90));
  s->roll_finish_rad = aw_deg_to_rad(aw_rng_range(r, -100, -60));
  /* Fast swings turn the forearm over faster: 900..2300 deg/s at 4..10 m/s hands. */
  s->roll_rate_impact_rad_s = aw_deg_to_rad(900 + 230 * (s->hand_speed_impact_m_s - 4.0) +
                                            aw_rng_range(r, -100, 100));
  s->impact_speed_loss = aw_rng_range(r, 0.06, 0.18);
  s->impact_recovery_s = aw_rng_range(r, 0.005, 0.012);
}

/* Builds the profiles of one swing starting at takeaway time t_ta with arm rate at impact
 * omega (rad/s). */
static void
build_profile(const AwSwingStyle *s, double t_ta, double omega, bool contact, SimSwingProf *p)
{
  memset(p, 0, sizeof *p);
  double Tb = s->backswing_s, Td = s->backswing_s / s->tempo, Tf = s->follow_s;
  p->t_ta = t_ta;
  p->t_top = t_ta + Tb;
  p->t_imp = p->t_top + Td;
  p->t_fin = p->t_imp + Tf;
  double th_top = s->arm_top_rad, th_imp = -0.06, th_fin = -s->arm_finish_rad;
  /* Arm: from rest to the top (turning point), accelerating down to impact at -omega with the
   * peak just before contact, then braking into the finish. */
  profile_add(&p->theta, p->t_ta, 0, 0, 0);
  profile_add(&p->theta, p->t_top, th_top, 0, -1.5 * th_top / (Td * Td));
  profile_add(&p->theta, p->t_imp, th_imp, -omega, 0.15 * omega / Td);
  double t_mid = p->t_imp + 0.35 * Tf;
  double th_mid = th_imp + 0.85 * (th_fin - th_imp);
  profile_add(&p->theta, t_mid, th_mid, -0.12 * omega, 0.2 * omega / Tf);
  profile_add(&p->theta, p->t_fin, th_fin, 0, 0);
  /* Wrist hinge: set in the backswing, held into the downswing, released late so the club
   * turns (1 + release_ratio) times as fast as the arm at impact, re-hinged in the finish. */
  double b_top = s->hinge_top_rad, b_imp = -0.04, b_fin = -s->hinge_finish_rad;
  double t_rel = p->t_top + s->release_start * Td;
  double kb = s->release_ratio * omega;
  profile_add(&p->beta, p->t_ta, 0, 0, 0);
  profile_add(&p->beta, p->t_top, b_top, 0, 0);
  profile_add(&p->beta, t_rel, b_top, 0, 0);
  profile_add(&p->beta, p->t_imp, b_imp, -kb, 0);
  profile_add(&p->beta, p->t_imp + 0.3 * Tf, b_imp + 0.8 * (b_fin - b_imp), -0.1 * kb, 0.3 * kb / Tf);
  profile_add(&p->beta, p->t_fin, b_fin, 0, 0);
  /* Forearm roll: opening in the backswing, turning over through impact at its peak rate. */
  p->roll_top = s->roll_top_rad;
  p->roll_fin = s->roll_finish_rad;
  double dr = fabs(s->roll_finish_rad - s->roll_top_rad);
  double w = dr * 1.875 / (2.0 * fmax(s->roll_rate_impact_rad_s, 1.0));
  w = fmin(w, fmin(0.8 * Td, 0.5 * Tf));
  p->roll_c = p->t_imp;
  p->roll_w = w;
  p->plane_b = s->backswing_plane_rad;
  p->plane_d = s->downswing_plane_rad;
  p->yaw_d = s->path_yaw_rad;
  p->shift = s->lateral_shift_m;
  if (contact && s->impact_speed_loss > 0) {
    p->tau_on = 0.001;
    p->tau_off = fmax(s->impact_recovery_s, 0.002);
    p->loss = s->impact_speed_loss / warp_h_peak(p->tau_on, p->tau_off);
  }
}

/* Timeline state while building. */
typedef struct {
  AwSim *sim;
  AwRng *rng;
  double t;
  SimQ q;
  SimB b;
  int n_swing_index;
} Builder;

static int
add_static(Builder *B, double dur, AwSimActivity act, int swing)
{
  SimSeg s = { 0 };
  s.t0 = B->t;
  s.t1 = B->t + dur;
  s.kind = SEG_STATIC;
  s.activity = act;
  s.swing = swing;
  s.q0 = s.q1 = B->q;
  s.b0 = s.b1 = B->b;
  B->t = s.t1;
  return push_seg(B->sim, &s);
}

static int
add_blend(Builder *B, double dur, SimQ to, int swing)
{
  SimSeg s = { 0 };
  s.t0 = B->t;
  s.t1 = B->t + dur;
  s.kind = SEG_BLEND;
  s.activity = AW_SIM_ACT_SETTLE;
  s.swing = swing;
  s.q0 = B->q;
  s.q1 = to;
  s.b0 = s.b1 = B->b;
  B->t = s.t1;
  B->q = to;
  return push_seg(B->sim, &s);
}

static int
add_waggle(Builder *B, double dur, double amp_th, double amp_b, double f)
{
  SimSeg s = { 0 };
  s.t0 = B->t;
  s.t1 = B->t + dur;
  s.kind = SEG_WAGGLE;
  s.activity = AW_SIM_ACT_WAGGLE;
  s.swing = -1;
  s.q0 = s.q1 = B->q;
  s.b0 = s.b1 = B->b;
  s.amp_theta = amp_th;
  s.amp_beta = amp_b;
  s.freq_hz = f;
  B->t = s.t1;
  return push_seg(B->sim, &s);
}

static int
add_walk(Builder *B, double dur, SimB to, int steps)
{
  SimSeg s = { 0 };
  s.t0 = B->t;
  s.t1 = B->t + dur;
  s.kind = SEG_WALK;
  s.activity = AW_SIM_ACT_WALK;
  s.swing = -1;
  s.q0 = s.q1 = B->q;
  s.b0 = B->b;
  s.b1 = to;
  s.freq_hz = steps;
  B->t = s.t1;
  B->b = to;
  return push_seg(B->sim, &s);
}

static double
wrist_speed(AwSim *sim, double t)
{
  SimKin k;
  kin_at(sim, t, &k);
  return aw_v3_norm(k.wrist_v);
}

/* One swing from address: swing segment, finish hold. Records the truth swing entry. */
static int
add_swing(Builder *B, const AwSwingStyle *style_in, bool practice, bool half, double address_t)
{
  AwSim *sim = B->sim;
  AwSwingStyle st = *style_in;
  if (half) {
    st.arm_top_rad *= 0.5;
    st.arm_finish_rad *= 0.5;
    st.hinge_top_rad *= 0.6;
    st.hinge_finish_rad *= 0.5;
    st.backswing_s *= 0.8;
    st.hand_speed_impact_m_s *= 0.45;
    st.roll_top_rad *= 0.5;
    st.roll_finish_rad *= 0.5;
    st.roll_rate_impact_rad_s *= 0.4;
  }
  bool contact = !practice;
  if (!contact)
    st.impact_speed_loss = 0;
  SimSwingProf p;
  double omega = st.hand_speed_impact_m_s / sim->arm_m;
  double t_ta = B->t;
  build_profile(&st, t_ta, omega, contact, &p);
  if (push_prof(sim, &p) != 0)
    return -1;
  size_t pi = sim->n_prof - 1;
  SimSeg s = { 0 };
  s.t0 = t_ta;
  s.t1 = p.t_fin + 0.05;
  s.kind = SEG_SWING;
  s.activity = practice ? AW_SIM_ACT_PRACTICE : AW_SIM_ACT_SWING;
  s.swing = (int)sim->truth.n_swings;
  s.prof = (int)pi;
  s.q0 = B->q;
  s.b0 = s.b1 = B->b;
  if (push_seg(sim, &s) != 0)
    return -1;
  /* The arm-rate knot sets the hand speed only roughly (hub shift, plane turn, lever arm):
   * correct it by a few fixed-point steps on the measured speed just before contact. */
  for (int it = 0; it < 4; it++) {
    double v = wrist_speed(sim, p.t_imp - 1e-4);
    if (!(v > 0))
      break;
    omega *= st.hand_speed_impact_m_s / v;
    build_profile(&st, t_ta, omega, contact, &sim->prof[pi]);
  }
  p = sim->prof[pi];
  B->t = s.t1;
  B->q = swing_q(&p, s.t1);
  /* Truth entry. */
  AwSimSwing sw;
  memset(&sw, 0, sizeof sw);
  sw.index = (int)sim->truth.n_swings;
  sw.practice = practice;
  sw.half = half;
  sw.style = st;
  sw.t_address_s = address_t;
  sw.t_takeaway_s = p.t_ta;
  sw.t_top_s = p.t_top;
  sw.t_impact_s = p.t_imp;
  sw.t_finish_s = p.t_fin + (p.loss > 0 ? p.loss * warp_H(1.0, p.tau_on, p.tau_off) : 0);
  /* Takeaway ends when the arm is a third of the way up (bisection on the monotone rise). */
  double lo = p.t_ta, hi = p.t_top, target = st.arm_top_rad / 3;
  for (int i = 0; i < 60; i++) {
    double mid = 0.5 * (lo + hi);
    if (profile_eval(&p.theta, mid) < target)
      lo = mid;
    else
      hi = mid;
  }
  sw.takeaway_end_s = 0.5 * (lo + hi);
  sw.hand_speed_impact_m_s = wrist_speed(sim, p.t_imp - 1e-4);
  {
    /* Club-head speed just before contact, central difference over 20 us. */
    SimPose a, b2;
    double dv[3];
    pose_at(sim, p.t_imp - 1e-4 - 1e-5, &a);
    pose_at(sim, p.t_imp - 1e-4 + 1e-5, &b2);
    aw_v3_sub(dv, b2.club, a.club);
    sw.club_speed_impact_m_s = aw_v3_norm(dv) / 2e-5;
  }
  SimKin k;
  {
    /* Plane normals: e_t x e_d of the two-lever model in the stance heading, mirrored for a
     * right-hander, then into the camera frame. */
    double phis[2] = { p.plane_b, p.plane_d }, yaws[2] = { 0, p.yaw_d };
    for (int pl = 0; pl < 2; pl++) {
      double cy = cos(yaws[pl]), sy = sin(yaws[pl]), cp = cos(phis[pl]), spn = sin(phis[pl]);
      double et[3] = { cy, sy, 0 }, ed[3] = { -sy * cp, cy * cp, -spn }, nrm[3];
      aw_v3_cross(nrm, et, ed);
      double ch = cos(B->b.heading), sh = sin(B->b.heading);
      double ng[3] = { ch * nrm[0] - sh * nrm[1], sh * nrm[0] + ch * nrm[1], nrm[2] };
      if (!sim->left)
        ng[1] = -ng[1]; /* the right-hander's mirror image, as in pose_from() */
      aw_mat_mul_v3(pl == 0 ? sw.backswing_plane_normal_cam : sw.downswing_plane_normal_cam,
                    CM(sim->R_cam_grav), ng);
    }
  }
  for (double t = p.t_ta; t <= p.t_fin; t += 5e-4) {
    kin_at(sim, t, &k);
    sw.peak_gyro_rad_s = fmax(sw.peak_gyro_rad_s, aw_v3_norm(k.omega_b));
    sw.peak_accel_m_s2 = fmax(sw.peak_accel_m_s2, aw_v3_norm(k.f_b));
  }
  AwSimTruth *tr = &sim->truth;
  PUSH(tr->swings, tr->n_swings, sim->cap_swings, sw);
  return 0;
}

static int
add_span(AwSim *sim, double t0, double t1, AwSimActivity a, int swing)
{
  AwSimSpan sp = { t0, t1, a, swing };
  AwSimTruth *tr = &sim->truth;
  PUSH(tr->spans, tr->n_spans, sim->cap_spans, sp);
  return 0;
}

static int
build_timeline(AwSim *sim, AwRng *rng)
{
  const AwSimConfig *c = &sim->cfg;
  Builder B = { sim, rng, 0, carry_q(), { 0, 0, 0, 0 }, 0 };
  if (c->turntable_rate_rad_s != 0) {
    B.q = address_q(&c->style);
    if (add_static(&B, 1.0, AW_SIM_ACT_STILL, -1)) return -1;
    SimSeg s = { 0 };
    s.t0 = B.t;
    s.t1 = B.t + 0.5 + fmax(c->turntable_s, 0.5);
    s.kind = SEG_SPIN;
    s.activity = AW_SIM_ACT_STILL;
    s.swing = -1;
    s.q0 = s.q1 = B.q;
    s.b0 = s.b1 = B.b;
    s.freq_hz = c->turntable_rate_rad_s;
    if (push_seg(sim, &s)) return -1;
    sim->t_begin = 0;
    sim->t_end = s.t1;
    return 0;
  }
  int K = c->n_swings < 1 ? 1 : c->n_swings;
  bool extras = c->session_extras;
  double skill = aw_rng_uniform(rng);
  for (int shot = 0; shot < K; shot++) {
    AwSwingStyle style;
    if (c->style_fixed) {
      style = c->style;
      double v = c->style_variation;
      if (v > 0) {
        style.tempo += v * aw_rng_range(rng, -0.15, 0.15);
        style.backswing_s += v * aw_rng_range(rng, -0.04, 0.04);
        style.hand_speed_impact_m_s += v * aw_rng_range(rng, -0.4, 0.4);
        style.backswing_plane_rad += v * aw_deg_to_rad(aw_rng_range(rng, -2, 2));
        style.downswing_plane_rad += v * aw_deg_to_rad(aw_rng_range(rng, -2, 2));
        style.path_yaw_rad += v * aw_deg_to_rad(aw_rng_range(rng, -1.5, 1.5));
        style.arm_top_rad += v * aw_deg_to_rad(aw_rng_range(rng, -4, 4));
        /* Stay inside the full-swing tempo band when the requested tempo is inside it. */
        if (c->style.tempo >= 2.5 && c->style.tempo <= 4.0)
          style.tempo = fmin(4.0, fmax(2.5, style.tempo));
      }
    } else
      draw_style(rng, skill, c->left_handed, &style);
    /* Every shot of the session keeps the player's body: only the swing varies. */
    style.left_handed = sim->left;
    style.arm_length_m = sim->arm_m;
    style.club_length_m = sim->club_m;
    SimQ addr = address_q(&style);
    double t_seg0 = sim->n_seg ? B.t : 0;
    if (shot == 0) {
      if (add_static(&B, 0.4, AW_SIM_ACT_STILL, -1)) return -1;
    } else if (extras) {
      /* Walk back to the next ball from where the last walk ended. */
      SimB next = { aw_rng_range(rng, -0.08, 0.08), aw_rng_range(rng, -0.05, 0.05), 0,
                    aw_deg_to_rad(aw_rng_range(rng, -3, 3)) };
      if (add_walk(&B, aw_rng_range(rng, 2.0, 3.0), next, 4)) return -1;
      if (add_static(&B, aw_rng_range(rng, 0.3, 0.8), AW_SIM_ACT_STILL, -1)) return -1;
    }
    if (add_blend(&B, aw_rng_range(rng, 0.7, 1.0), addr, -1)) return -1;
    add_span(sim, t_seg0, B.t, AW_SIM_ACT_SETTLE, -1);
    if (extras) {
      if (aw_rng_uniform(rng) < 0.6) {
        double t0 = B.t;
        if (add_static(&B, aw_rng_range(rng, 0.3, 0.6), AW_SIM_ACT_STILL, -1)) return -1;
        if (add_waggle(&B, aw_rng_range(rng, 1.0, 1.6), aw_deg_to_rad(aw_rng_range(rng, 6, 12)),
                       aw_deg_to_rad(aw_rng_range(rng, 12, 25)), aw_rng_range(rng, 1.4, 2.0)))
          return -1;
        add_span(sim, t0, B.t, AW_SIM_ACT_WAGGLE, -1);
      }
      double pr = aw_rng_uniform(rng);
      if (pr < 0.45) {
        bool half = pr < 0.3;
        double t_addr = B.t;
        if (add_static(&B, aw_rng_range(rng, 0.5, 0.9), AW_SIM_ACT_STILL, -1)) return -1;
        if (add_swing(&B, &style, true, half, t_addr)) return -1;
        int idx = (int)sim->truth.n_swings - 1;
        if (add_static(&B, aw_rng_range(rng, 0.3, 0.7), AW_SIM_ACT_STILL, idx)) return -1;
        sim->truth.swings[idx].t_end_s = B.t;
        add_span(sim, sim->truth.swings[idx].t_takeaway_s, sim->truth.swings[idx].t_finish_s,
                 AW_SIM_ACT_PRACTICE, idx);
        if (add_blend(&B, aw_rng_range(rng, 0.9, 1.3), addr, -1)) return -1;
      }
    }
    double t_addr = B.t;
    if (add_static(&B, aw_rng_range(rng, 1.0, 1.5), AW_SIM_ACT_STILL, -1)) return -1;
    if (add_swing(&B, &style, false, false, t_addr)) return -1;
    int idx = (int)sim->truth.n_swings - 1;
    if (add_static(&B, aw_rng_range(rng, 0.8, 1.2), AW_SIM_ACT_STILL, idx)) return -1;
    sim->truth.swings[idx].t_end_s = B.t;
    add_span(sim, sim->truth.swings[idx].t_takeaway_s, sim->truth.swings[idx].t_finish_s,
             AW_SIM_ACT_SWING, idx);
    double t0 = B.t;
    if (add_blend(&B, aw_rng_range(rng, 0.8, 1.1), carry_q(), -1)) return -1;
    if (extras && shot + 1 < K) {
      SimB away = { aw_rng_range(rng, -0.6, 0.6), aw_rng_range(rng, -1.6, -1.0), 0,
                    aw_deg_to_rad(aw_rng_range(rng, -15, 15)) };
      if (add_walk(&B, aw_rng_range(rng, 2.0, 3.0), away, 4)) return -1;
      if (add_static(&B, aw_rng_range(rng, 1.0, 3.0), AW_SIM_ACT_STILL, -1)) return -1;
      add_span(sim, t0, B.t, AW_SIM_ACT_WALK, -1);
    }
  }
  if (add_static(&B, 0.5, AW_SIM_ACT_STILL, -1)) return -1;
  sim->t_begin = 0;
  sim->t_end = B.t;
  return 0;
}

/* ---------------------------------------------------------------------------------------- */
/* Camera, mounting, streams */

static void
place_camera(AwSim *sim, AwRng *rng)
{
  const AwSimDepthModel *d = &sim->cfg.depth;
  double D = d->distance_m * aw_rng_range(rng, 0.9, 1.1);
  double h = d->height_m + aw_rng_range(rng, -0.1, 0.1);
  double yaw_err = aw_deg_to_rad(aw_rng_range(rng, -3, 3));
  double roll = aw_rng_range(rng, -d->roll_max_rad, d->roll_max_rad);
  double tilt = d->tilt_rad;
  double pos[3], dir_h[3];
  /* In the model's own frame (ball at +y, see mirror_to_right_handed()), then mirrored for a
   * right-hander. Face-on: across the ball from the player, looking at the chest, a little
   * toward the target. Down-the-line: behind the player on the far side from the target
   * (target at +x for either hand), looking along the target line. */
  double ball_side = sim->left ? 1 : -1;
  if (sim->cfg.view == AW_SIM_FACE_ON) {
    aw_v3_set(pos, 0.05, ball_side * (0.3 + D), h);
    aw_v3_set(dir_h, 0, -ball_side, 0);
  } else {
    aw_v3_set(pos, -D, ball_side * 0.45, h);
    aw_v3_set(dir_h, 1, 0, 0);
  }
  double cy = cos(yaw_err), sy = sin(yaw_err);
  double dx = cy * dir_h[0] - sy * dir_h[1], dy = sy * dir_h[0] + cy * dir_h[1];
  double f[3] = { cos(tilt) * dx, cos(tilt) * dy, -sin(tilt) };
  double up[3] = { 0, 0, 1 }, x[3], y[3];
  aw_v3_cross(x, f, up);
  aw_v3_normalize(x, x);
  aw_v3_cross(y, f, x);
  double cr = cos(roll), sr = sin(roll);
  for (int i = 0; i < 3; i++) {
    sim->R_cam_grav[0][i] = cr * x[i] + sr * y[i];
    sim->R_cam_grav[1][i] = -sr * x[i] + cr * y[i];
    sim->R_cam_grav[2][i] = f[i];
  }
  aw_v3_copy(sim->cam_pos, pos);
}

static void
random_rotation(AwRng *rng, double max_angle, double q[4])
{
  if (max_angle >= AW_PI) {
    /* Uniform on SO(3): a normalised 4-D Gaussian. */
    for (int i = 0; i < 4; i++)
      q[i] = aw_rng_gauss(rng);
    aw_quat_normalize(q);
    return;
  }
  double ax[3] = { aw_rng_gauss(rng), aw_rng_gauss(rng), aw_rng_gauss(rng) };
  aw_v3_normalize(ax, ax);
  aw_v3_scale(ax, ax, aw_rng_range(rng, 0, max_angle));
  aw_quat_from_rotvec(q, ax);
}

static void
mount_imu(AwSim *sim, AwRng *rng)
{
  /* Nominal: watch face on the back of the wrist, x along the forearm. */
  double rv[3] = { AW_PI / 2, 0, 0 }, qn[4], qr[4], q[4];
  aw_quat_from_rotvec(qn, rv);
  random_rotation(rng, sim->cfg.imu.mount_random_rad, qr);
  aw_quat_mul(q, qn, qr);
  aw_quat_normalize(q);
  aw_quat_to_mat(sim->R_forearm_body, q);
  memcpy(sim->truth.q_forearm_body, q, sizeof q);
  /* The keypoint is the wrist joint: 4.5 cm toward the hand, 2 cm inside the watch. */
  double lever_f[3] = { 0.045, 0.0, -0.02 };
  aw_mat_tmul_v3(sim->lever_body, CM(sim->R_forearm_body), lever_f);
  aw_v3_copy(sim->truth.lever_arm_body_m, sim->lever_body);
}

static bool
near_contact(const AwSim *sim, double t0, double t1)
{
  for (size_t i = 0; i < sim->truth.n_swings; i++) {
    const AwSimSwing *s = &sim->truth.swings[i];
    if (!s->practice && t1 > s->t_impact_s - 0.002 && t0 < s->t_impact_s + 0.06)
      return true;
  }
  return false;
}

static double
sensor_out(double v, double scale, double bias, double sigma, double range, int bits, AwRng *rng)
{
  double y = v * scale + bias + sigma * aw_rng_gauss(rng);
  if (bits > 1) {
    double lsb = range / (double)(1LL << (bits - 1));
    y = lsb * nearbyint(y / lsb);
  }
  if (y > range) y = range;
  if (y < -range) y = -range;
  return y;
}

static int
make_imu(AwSim *sim, AwRng *rng)
{
  const AwSimImuModel *m = &sim->cfg.imu;
  AwSimTruth *tr = &sim->truth;
  tr->clock_offset_s = aw_rng_range(rng, -m->clock_offset_max_s, m->clock_offset_max_s);
  tr->clock_drift = aw_rng_range(rng, -m->clock_drift_max, m->clock_drift_max);
  for (int i = 0; i < 3; i++) {
    tr->accel_bias_m_s2[i] = aw_rng_range(rng, -m->accel_bias_max_m_s2, m->accel_bias_max_m_s2);
    tr->gyro_bias_rad_s[i] = aw_rng_range(rng, -m->gyro_bias_max_rad_s, m->gyro_bias_max_rad_s);
    tr->accel_scale[i] = 1 + aw_rng_range(rng, -m->scale_error_max, m->scale_error_max);
    tr->gyro_scale[i] = 1 + aw_rng_range(rng, -m->scale_error_max, m->scale_error_max);
  }
  double k1 = 1 + tr->clock_drift, off = tr->clock_offset_s;
  double ts0 = sim->t_begin - aw_rng_range(rng, 0.0, 0.3);
  double ts1 = sim->t_end + aw_rng_range(rng, 0.0, 0.3);
  double ti0 = (ts0 - off) / k1;
  size_t n = (size_t)floor((ts1 - ts0) / k1 * m->rate_hz) + 1;
  AwImuStream *s = aw_imu_stream_new(n);
  if (s == NULL)
    return -1;
  snprintf(s->meta.device, sizeof s->meta.device, "arcwise simulator, %s level",
           aw_sim_level_name(sim->cfg.level));
  s->meta.nominal_rate_hz = m->rate_hz;
  s->meta.accel_range_m_s2 = m->accel_range_m_s2;
  s->meta.gyro_range_rad_s = m->gyro_range_rad_s;
  /* The trailing box average over [t - T, t] below delays the output by T/2 (its group delay),
   * a property of the device that a real IMU declares the same way. */
  s->meta.output_delay_s = 0.5 * m->antialias_window_s;
  s->meta.wrist = sim->left ? AW_WRIST_RIGHT : AW_WRIST_LEFT;
  double ba[3], bg[3];
  memcpy(ba, tr->accel_bias_m_s2, sizeof ba);
  memcpy(bg, tr->gyro_bias_rad_s, sizeof bg);
  double dt = 1.0 / m->rate_hz;
  double sa = m->accel_noise_density * sqrt(0.5 * m->rate_hz);
  double sg = m->gyro_noise_density * sqrt(0.5 * m->rate_hz);
  double jmax = 0.4 * dt;
  for (size_t k = 0; k < n; k++) {
    double ti = ti0 + (double)k * dt;
    double ts = ti * k1 + off;
    double f[3] = { 0, 0, 0 }, w[3] = { 0, 0, 0 };
    double T = m->antialias_window_s;
    int M = T > 0 ? (near_contact(sim, ts - T, ts) ? 96 : 12) : 1;
    for (int j = 0; j < M; j++) {
      SimKin kin;
      double tj = T > 0 ? ts - T + (j + 0.5) * T / M : ts;
      kin_at(sim, tj, &kin);
      aw_v3_axpy(f, 1.0 / M, kin.f_b);
      aw_v3_axpy(w, 1.0 / M, kin.omega_b);
    }
    for (int i = 0; i < 3; i++) {
      s->accel_m_s2[k][i] = sensor_out(f[i], tr->accel_scale[i], ba[i], sa, m->accel_range_m_s2,
                                       m->bits, rng);
      s->gyro_rad_s[k][i] = sensor_out(w[i], tr->gyro_scale[i], bg[i], sg, m->gyro_range_rad_s,
                                       m->bits, rng);
      ba[i] += m->accel_bias_walk * sqrt(dt) * aw_rng_gauss(rng);
      bg[i] += m->gyro_bias_walk * sqrt(dt) * aw_rng_gauss(rng);
    }
    double j = m->timestamp_jitter_s * aw_rng_gauss(rng);
    if (j > jmax) j = jmax;
    if (j < -jmax) j = -jmax;
    s->t_s[k] = ti + j;
  }
  sim->imu = s;
  return 0;
}

static void
to_cam(const AwSim *sim, const double p_grav[3], double out[3])
{
  double d[3];
  aw_v3_sub(d, p_grav, sim->cam_pos);
  aw_mat_mul_v3(out, CM(sim->R_cam_grav), d);
}

static int
make_occlusions(AwSim *sim, AwRng *rng)
{
  const AwSimDepthModel *d = &sim->cfg.depth;
  AwSimTruth *tr = &sim->truth;
  for (size_t i = 0; i < tr->n_swings; i++) {
    const AwSimSwing *s = &tr->swings[i];
    double f = s->half ? 0.5 : 1.0;
    double Lt = d->occlusion_top_s * f * aw_rng_range(rng, 0.8, 1.2);
    double Lf = d->occlusion_follow_s * f * aw_rng_range(rng, 0.8, 1.2);
    if (Lt > 0) {
      AwSimOcclusion o = { s->t_top_s - 0.4 * Lt, s->t_top_s + 0.6 * Lt, (int)i, true };
      PUSH(tr->occlusions, tr->n_occlusions, sim->cap_occ, o);
    }
    if (Lf > 0) {
      double t0 = s->t_impact_s + 0.1 * (s->t_finish_s - s->t_impact_s);
      AwSimOcclusion o = { t0, t0 + Lf, (int)i, false };
      PUSH(tr->occlusions, tr->n_occlusions, sim->cap_occ, o);
    }
  }
  return 0;
}

static bool
in_occlusion(const AwSim *sim, double t)
{
  for (size_t i = 0; i < sim->truth.n_occlusions; i++)
    if (t >= sim->truth.occlusions[i].t0_s && t <= sim->truth.occlusions[i].t1_s)
      return true;
  return false;
}

static int
make_depth(AwSim *sim, AwRng *rng)
{
  const AwSimDepthModel *d = &sim->cfg.depth;
  size_t n = (size_t)floor((sim->t_end - sim->t_begin) * d->rate_hz + 1e-9) + 1;
  AwDepthStream *s = aw_depth_stream_new(n);
  if (s == NULL)
    return -1;
  sim->truth.frame_kind = calloc(n, 1);
  if (sim->truth.frame_kind == NULL) {
    aw_depth_stream_free(s);
    return -1;
  }
  snprintf(s->meta.device, sizeof s->meta.device, "arcwise simulator, %s, %s level",
           aw_sim_view_name(sim->cfg.view), aw_sim_level_name(sim->cfg.level));
  s->meta.nominal_rate_hz = d->rate_hz;
  for (size_t j = 0; j < n; j++) {
    double t = sim->t_begin + (double)j / d->rate_hz;
    s->t_s[j] = t;
    SimPose P;
    pose_at(sim, t, &P);
    double pc[3], bc[3];
    to_cam(sim, P.wrist, pc);
    to_cam(sim, P.body_ref, bc);
    AwSimFrameKind kind = AW_SIM_FRAME_OK;
    double u = aw_rng_uniform(rng);
    if (in_occlusion(sim, t))
      kind = u < d->occluded_missing_prob ? AW_SIM_FRAME_OCCLUDED_MISSING
                                          : AW_SIM_FRAME_OCCLUDED_SNAPPED;
    else if (u < d->dropout_prob)
      kind = AW_SIM_FRAME_DROPOUT;
    else if (u < d->dropout_prob + d->outlier_prob)
      kind = AW_SIM_FRAME_OUTLIER;
    double z = pc[2];
    double sxy = d->sigma_xy_per_m * z, sz = d->sigma_z_coeff_per_m * z * z;
    double noise[3] = { sxy * aw_rng_gauss(rng), sxy * aw_rng_gauss(rng), sz * aw_rng_gauss(rng) };
    double conf = 0;
    switch (kind) {
    case AW_SIM_FRAME_OK:
      conf = aw_rng_range(rng, 0.75, 0.99);
      break;
    case AW_SIM_FRAME_OCCLUDED_SNAPPED: {
      double lam = aw_rng_range(rng, 0.4, 0.9);
      for (int i = 0; i < 3; i++)
        pc[i] += lam * (bc[i] - pc[i]);
      conf = aw_rng_range(rng, 0.3, 0.6);
      break;
    }
    case AW_SIM_FRAME_OUTLIER: {
      double dir[3] = { aw_rng_gauss(rng), aw_rng_gauss(rng), aw_rng_gauss(rng) };
      aw_v3_normalize(dir, dir);
      aw_v3_axpy(pc, aw_rng_range(rng, 0.2, 0.8), dir);
      if (pc[2] < 0.3)
        pc[2] = 0.3;
      conf = aw_rng_range(rng, 0.2, 0.95);
      break;
    }
    default:
      break;
    }
    if (kind == AW_SIM_FRAME_DROPOUT || kind == AW_SIM_FRAME_OCCLUDED_MISSING) {
      s->pos_cam_m[j][0] = s->pos_cam_m[j][1] = s->pos_cam_m[j][2] = NAN;
      s->conf[j] = 0;
    } else {
      for (int i = 0; i < 3; i++)
        s->pos_cam_m[j][i] = pc[i] + noise[i];
      s->conf[j] = conf;
    }
    sim->truth.frame_kind[j] = (uint8_t)kind;
  }
  sim->depth = s;
  return 0;
}

static void
phase_at(const AwSim *sim, double t, AwSimPhase *phase, int *swing)
{
  *phase = AW_SIM_PHASE_NONE;
  *swing = -1;
  for (size_t i = 0; i < sim->truth.n_swings; i++) {
    const AwSimSwing *s = &sim->truth.swings[i];
    if (t < s->t_address_s || t >= s->t_end_s)
      continue;
    *swing = (int)i;
    if (t < s->t_takeaway_s) *phase = AW_SIM_PHASE_ADDRESS;
    else if (t < s->takeaway_end_s) *phase = AW_SIM_PHASE_TAKEAWAY;
    else if (t < s->t_top_s) *phase = AW_SIM_PHASE_BACKSWING;
    else if (t < s->t_impact_s) *phase = AW_SIM_PHASE_DOWNSWING;
    else if (t < s->t_finish_s) *phase = AW_SIM_PHASE_FOLLOW_THROUGH;
    else *phase = AW_SIM_PHASE_FINISH;
    return;
  }
}

void
aw_sim_eval(const AwSim *sim, double t, AwSimState *out)
{
  SimKin k;
  kin_at(sim, t, &k);
  to_cam(sim, k.wrist, out->wrist_cam_m);
  to_cam(sim, k.club, out->club_cam_m);
  to_cam(sim, k.imu, out->imu_pos_cam_m);
  aw_mat_mul_v3(out->wrist_vel_cam_m_s, CM(sim->R_cam_grav), k.wrist_v);
  aw_mat_mul_v3(out->wrist_acc_cam_m_s2, CM(sim->R_cam_grav), k.wrist_a);
  double Rcb[3][3];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++)
      Rcb[r][c] = sim->R_cam_grav[r][0] * k.R_gb[0][c] + sim->R_cam_grav[r][1] * k.R_gb[1][c] +
                  sim->R_cam_grav[r][2] * k.R_gb[2][c];
  aw_mat_to_quat(out->q_cam_body, CM(Rcb));
  aw_mat_to_quat(out->q_grav_body, CM(k.R_gb));
  aw_v3_copy(out->omega_body_rad_s, k.omega_b);
  aw_v3_copy(out->specific_force_body_m_s2, k.f_b);
  phase_at(sim, t, &out->phase, &out->swing);
}

static int
make_truth_samples(AwSim *sim)
{
  AwSimTruth *tr = &sim->truth;
  size_t n = aw_uniform_grid(sim->t_begin, sim->t_end, sim->cfg.truth_rate_hz, NULL);
  tr->n = n;
  tr->t_s = calloc(n, sizeof *tr->t_s);
  tr->wrist_cam_m = calloc(n, sizeof *tr->wrist_cam_m);
  tr->wrist_vel_cam_m_s = calloc(n, sizeof *tr->wrist_vel_cam_m_s);
  tr->club_cam_m = calloc(n, sizeof *tr->club_cam_m);
  tr->q_cam_body = calloc(n, sizeof *tr->q_cam_body);
  tr->phase = calloc(n, 1);
  tr->swing = calloc(n, sizeof *tr->swing);
  if (!tr->t_s || !tr->wrist_cam_m || !tr->wrist_vel_cam_m_s || !tr->club_cam_m ||
      !tr->q_cam_body || !tr->phase || !tr->swing)
    return -1;
  for (size_t i = 0; i < n; i++) {
    double t = sim->t_begin + (double)i / sim->cfg.truth_rate_hz;
    AwSimState st;
    aw_sim_eval(sim, t, &st);
    tr->t_s[i] = t;
    aw_v3_copy(tr->wrist_cam_m[i], st.wrist_cam_m);
    aw_v3_copy(tr->wrist_vel_cam_m_s[i], st.wrist_vel_cam_m_s);
    aw_v3_copy(tr->club_cam_m[i], st.club_cam_m);
    memcpy(tr->q_cam_body[i], st.q_cam_body, sizeof st.q_cam_body);
    tr->phase[i] = (uint8_t)st.phase;
    tr->swing[i] = st.swing;
  }
  return 0;
}

static void
truth_release(AwSimTruth *tr)
{
  free(tr->swings);
  free(tr->occlusions);
  free(tr->spans);
  free(tr->frame_kind);
  free(tr->t_s);
  free(tr->wrist_cam_m);
  free(tr->wrist_vel_cam_m_s);
  free(tr->club_cam_m);
  free(tr->q_cam_body);
  free(tr->phase);
  free(tr->swing);
}

void
aw_sim_free(AwSim *sim)
{
  if (sim == NULL)
    return;
  aw_imu_stream_free(sim->imu);
  aw_depth_stream_free(sim->depth);
  truth_release(&sim->truth);
  free(sim->seg);
  free(sim->prof);
  free(sim);
}

static AwStatus
check_config(const AwSimConfig *c, AwError *err)
{
#define BAD(cond, ...) \
  if (cond) return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, __VA_ARGS__)
  BAD(c->level < AW_SIM_EASY || c->level > AW_SIM_HARD, "unknown level");
  BAD(c->n_swings < 1 || c->n_swings > 500, "swings must be 1 .. 500, not %d", c->n_swings);
  BAD(!(c->imu.rate_hz >= 20 && c->imu.rate_hz <= 2000), "IMU rate must be 20 .. 2000 Hz");
  BAD(!(c->depth.rate_hz >= 5 && c->depth.rate_hz <= 240), "depth rate must be 5 .. 240 Hz");
  BAD(!(c->truth_rate_hz >= 1 && c->truth_rate_hz <= 5000), "truth rate must be 1 .. 5000 Hz");
  BAD(!(c->imu.accel_range_m_s2 > 0 && c->imu.gyro_range_rad_s > 0), "ranges must be positive");
  BAD(c->imu.antialias_window_s < 0 || c->imu.antialias_window_s > 0.1, "bad anti-alias window");
  BAD(!(c->depth.distance_m > 0.5), "camera distance must exceed 0.5 m");
  if (c->style_fixed) {
    const AwSwingStyle *s = &c->style;
    BAD(!(s->backswing_s > 0.1 && s->backswing_s < 5), "backswing duration out of range");
    BAD(!(s->tempo >= 1 && s->tempo <= 8), "tempo must be 1 .. 8");
    BAD(!(s->follow_s > 0.1 && s->follow_s < 5), "follow-through duration out of range");
    BAD(!(s->hand_speed_impact_m_s > 0.5 && s->hand_speed_impact_m_s <= 15), "hand speed out of range");
    BAD(!(s->arm_length_m > 0.3 && s->arm_length_m < 1.0), "arm length out of range");
    BAD(!(s->club_length_m >= 0.457 && s->club_length_m <= 1.219),
        "club length must be 0.457 .. 1.219 m (Equipment Rules 2019, Part 2 1c)");
  }
#undef BAD
  return AW_OK;
}

AwStatus
aw_sim_new(const AwSimConfig *config, AwSim **out, AwError *err)
{
  if (out == NULL || config == NULL)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "no configuration");
  *out = NULL;
  AwStatus st = check_config(config, err);
  if (st != AW_OK)
    return st;
  AwSim *sim = calloc(1, sizeof *sim);
  if (sim == NULL)
    return aw_error_set(err, AW_ERR_NO_MEMORY, "", 0, 0, "out of memory");
  sim->cfg = *config;
  if (!sim->cfg.style_fixed)
    sim->cfg.style.left_handed = config->left_handed;
  sim->g = AW_GRAVITY_STANDARD_M_S2;
  sim->truth.gravity_m_s2 = sim->g;
  /* Independent streams per purpose, so changing one model leaves the others' draws alone. */
  AwRng r_style, r_imu, r_depth, r_geo;
  aw_rng_seed(&r_style, config->seed * 4 + 0);
  aw_rng_seed(&r_imu, config->seed * 4 + 1);
  aw_rng_seed(&r_depth, config->seed * 4 + 2);
  aw_rng_seed(&r_geo, config->seed * 4 + 3);
  /* Player geometry: from the fixed style or drawn once per player. */
  AwSwingStyle g;
  if (config->style_fixed)
    g = config->style;
  else {
    AwRng r = r_geo;
    draw_style(&r, 0.5, config->left_handed, &g);
  }
  sim->left = config->style_fixed ? config->style.left_handed : config->left_handed;
  sim->arm_m = g.arm_length_m;
  sim->club_m = g.club_length_m;
  /* Hub near the lead shoulder, high enough that the club head rests 2 cm above the floor. */
  sim->hub[0] = 0.10;
  sim->hub[1] = 0.0;
  sim->hub[2] = (g.arm_length_m + g.club_length_m) * sin(g.backswing_plane_rad) + 0.02;
  place_camera(sim, &r_geo);
  mount_imu(sim, &r_geo);
  memcpy(sim->truth.R_cam_grav, sim->R_cam_grav, sizeof sim->R_cam_grav);
  aw_v3_copy(sim->truth.cam_pos_grav_m, sim->cam_pos);
  if (build_timeline(sim, &r_style) != 0 || make_occlusions(sim, &r_depth) != 0 ||
      make_imu(sim, &r_imu) != 0 || make_depth(sim, &r_depth) != 0 ||
      make_truth_samples(sim) != 0) {
    aw_sim_free(sim);
    return aw_error_set(err, AW_ERR_NO_MEMORY, "", 0, 0, "out of memory");
  }
  *out = sim;
  return AW_OK;
}

const AwSimConfig *aw_sim_config(const AwSim *sim) { return &sim->cfg; }
const AwImuStream *aw_sim_imu(const AwSim *sim) { return sim->imu; }
const AwDepthStream *aw_sim_depth(const AwSim *sim) { return sim->depth; }
const AwSimTruth *aw_sim_truth(const AwSim *sim) { return &sim->truth; }

void
aw_sim_span(const AwSim *sim, double *t0_s, double *t1_s)
{
  if (t0_s) *t0_s = sim->t_begin;
  if (t1_s) *t1_s = sim->t_end;
}

AwImuStream *
aw_sim_copy_imu(const AwSim *sim)
{
  AwImuStream *s = aw_imu_stream_new(sim->imu->n);
  if (s == NULL)
    return NULL;
  memcpy(s->t_s, sim->imu->t_s, s->n * sizeof *s->t_s);
  memcpy(s->accel_m_s2, sim->imu->accel_m_s2, s->n * sizeof *s->accel_m_s2);
  memcpy(s->gyro_rad_s, sim->imu->gyro_rad_s, s->n * sizeof *s->gyro_rad_s);
  s->meta = sim->imu->meta;
  return s;
}

AwDepthStream *
aw_sim_copy_depth(const AwSim *sim)
{
  AwDepthStream *s = aw_depth_stream_new(sim->depth->n);
  if (s == NULL)
    return NULL;
  memcpy(s->t_s, sim->depth->t_s, s->n * sizeof *s->t_s);
  memcpy(s->pos_cam_m, sim->depth->pos_cam_m, s->n * sizeof *s->pos_cam_m);
  memcpy(s->conf, sim->depth->conf, s->n * sizeof *s->conf);
  s->meta = sim->depth->meta;
  return s;
}
