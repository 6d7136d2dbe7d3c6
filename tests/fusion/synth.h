/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Analytic test motion for the fusion tests: the wrist moves on a circular arc in a tilted plane
 * with a minimum-jerk angle profile (quintic segments: hold, back, fast through, decelerate,
 * hold), the IMU turning with the arc. Position, velocity, acceleration and angular rate are
 * closed-form, so the IMU's specific force f = R_body_grav (a - g) and the camera's view are
 * exact before the stated noise is added. This is an analytic case, not a simulator. */

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "arcwise/capture.h"
#include "arcwise/math3.h"
#include "arcwise/units.h"

typedef struct {
  double duration_s, imu_rate_hz, cam_rate_hz;
  double clock_offset_s, clock_drift;   /* t_depth = t_imu (1 + drift) + offset */
  double accel_noise, gyro_noise;       /* densities, per sqrt(Hz) */
  double accel_bias[3], gyro_bias[3];
  double cam_sigma_xy_1m, cam_sigma_z_coeff;
  double occl_t0, occl_t1;              /* camera frames missing in [t0, t1) (true time) */
  double snap_t0, snap_t1, snap_m;      /* frames displaced by snap_m along x in [t0, t1) */
  double accel_range;                   /* clip |f| components; 0 = none */
  double lever[3];                      /* keypoint relative to the IMU, body frame */
  double cam_tilt_rad;                  /* camera pitched down by this */
  int periodic;                         /* 1: repeated swings with holds (long recordings) */
  uint64_t seed;
} AwSynthSpec;

typedef struct {
  double p[3], v[3], a[3];   /* IMU, grav frame */
  double R[3][3];            /* R_grav_body */
  double w_body[3];
} AwSynthState;

static inline void
aw_synth_default(AwSynthSpec *s)
{
  memset(s, 0, sizeof *s);
  s->duration_s = 4.0;
  s->imu_rate_hz = 100;
  s->cam_rate_hz = 30;
  s->accel_noise = 180e-6 * 9.80665;
  s->gyro_noise = 0.007 * AW_PI / 180;
  s->cam_sigma_xy_1m = 0.002;
  s->cam_sigma_z_coeff = 1.2e-3;
  s->occl_t0 = s->occl_t1 = -1;
  s->snap_t0 = s->snap_t1 = -1;
  s->cam_tilt_rad = 0.2;
  s->seed = 1;
}

static inline double
aw_synth_rand(uint64_t *st)
{
  *st ^= *st << 13; *st ^= *st >> 7; *st ^= *st << 17;
  return ((double)(*st >> 11) + 0.5) / 9007199254740992.0;
}
static inline double
aw_synth_gauss(uint64_t *st)
{
  double u = aw_synth_rand(st), v = aw_synth_rand(st);
  return sqrt(-2 * log(u)) * cos(2 * AW_PI * v);
}

/* Minimum-jerk segment from a to b over [t0, t1]: value and two derivatives. */
static inline void
aw_synth_quintic(double t, double t0, double t1, double a, double b, double out[3])
{
  double T = t1 - t0, s = (t - t0) / T;
  if (s < 0) s = 0;
  if (s > 1) s = 1;
  double d = b - a;
  out[0] = a + d * (10 * s * s * s - 15 * s * s * s * s + 6 * s * s * s * s * s);
  out[1] = d * (30 * s * s - 60 * s * s * s + 30 * s * s * s * s) / T;
  out[2] = d * (60 * s - 180 * s * s + 120 * s * s * s) / (T * T);
}

static inline void
aw_synth_angle(const AwSynthSpec *sp, double t, double phi[3])
{
  if (sp->periodic) {
    /* 6 s cycle: hold 1.5, back 0.9, through 0.35, decelerate 0.5, hold 1.25, return 1.5 */
    double c = fmod(t, 6.0);
    if (c < 1.5) { phi[0] = 0; phi[1] = phi[2] = 0; }
    else if (c < 2.4) aw_synth_quintic(c, 1.5, 2.4, 0, -2.4, phi);
    else if (c < 2.75) aw_synth_quintic(c, 2.4, 2.75, -2.4, 0.8, phi);
    else if (c < 3.25) aw_synth_quintic(c, 2.75, 3.25, 0.8, 1.6, phi);
    else if (c < 4.5) { phi[0] = 1.6; phi[1] = phi[2] = 0; }
    else aw_synth_quintic(c, 4.5, 6.0, 1.6, 0, phi);
    return;
  }
  double T = sp->duration_s, t0 = 0.25 * T, t1 = t0 + 0.22 * T, t2 = t1 + 0.08 * T, t3 = t2 + 0.12 * T;
  if (t < t0) { phi[0] = 0; phi[1] = phi[2] = 0; }
  else if (t < t1) aw_synth_quintic(t, t0, t1, 0, -2.4, phi);
  else if (t < t2) aw_synth_quintic(t, t1, t2, -2.4, 0.8, phi);
  else if (t < t3) aw_synth_quintic(t, t2, t3, 0.8, 1.6, phi);
  else { phi[0] = 1.6; phi[1] = phi[2] = 0; }
}

static inline void
aw_synth_rot(double R[3][3], const double axis[3], double ang)
{
  double q[4], rv[3] = { axis[0] * ang, axis[1] * ang, axis[2] * ang };
  aw_quat_from_rotvec(q, rv);
  aw_quat_to_mat(R, q);
}

static inline void
aw_synth_mm(double C[3][3], double A[3][3], double B[3][3])
{
  double T[3][3];
  for (int r = 0; r < 3; r++)
    for (int c = 0; c < 3; c++) T[r][c] = A[r][0] * B[0][c] + A[r][1] * B[1][c] + A[r][2] * B[2][c];
  memcpy(C, T, sizeof T);
}

/* Camera pose: grav -> cam. Camera 2.6 m in front of the hands, pitched down by tilt. */
static inline void
aw_synth_cam(const AwSynthSpec *sp, double R_cam_grav[3][3], double t_cam[3])
{
  /* Level camera looking along grav +y: cam x = grav x, cam y (down) = -grav z, cam z = grav y */
  double L[3][3] = { { 1, 0, 0 }, { 0, 0, -1 }, { 0, 1, 0 } }, P[3][3];
  double ax[3] = { 1, 0, 0 };
  aw_synth_rot(P, ax, -sp->cam_tilt_rad);
  aw_synth_mm(R_cam_grav, P, L);
  double c_g[3] = { 0.1, -2.6, -0.3 };   /* camera position in grav (hands centre at origin) */
  double rc[3];
  aw_mat_mul_v3(rc, (const double (*)[3])R_cam_grav, c_g);
  for (int a = 0; a < 3; a++) t_cam[a] = -rc[a];
}

static inline void
aw_synth_state(const AwSynthSpec *sp, double t, AwSynthState *st)
{
  /* Swing plane tilted 55 degrees from horizontal, containing grav x. */
  double ang = 55 * AW_PI / 180, r = 0.65;
  double u[3] = { 0, 0, -1 };                       /* arm hanging: address direction */
  double n[3] = { 0, -sin(ang), cos(ang) };        /* plane normal */
  double w3[3];
  aw_v3_cross(w3, n, u);
  /* tilt u into the plane: u' = component of u orthogonal to n */
  double un[3], d = aw_v3_dot(u, n);
  for (int a = 0; a < 3; a++) un[a] = u[a] - d * n[a];
  aw_v3_normalize(un, un);
  aw_v3_cross(w3, n, un);
  double c[3] = { 0, 0, 0.9 };                     /* shoulder centre above the hands */
  double phi[3];
  aw_synth_angle(sp, t, phi);
  double cp = cos(phi[0]), sph = sin(phi[0]);
  for (int a = 0; a < 3; a++) {
    double e1 = cp * un[a] + sph * w3[a], e2 = -sph * un[a] + cp * w3[a];
    st->p[a] = c[a] + r * e1;
    st->v[a] = r * phi[1] * e2;
    st->a[a] = r * phi[2] * e2 - r * phi[1] * phi[1] * e1;
  }
  double Rz[3][3], R0[3][3];
  aw_synth_rot(Rz, n, phi[0]);
  double ax0[3] = { 0.3, -0.5, 0.8 };
  aw_v3_normalize(ax0, ax0);
  aw_synth_rot(R0, ax0, 1.1);    /* arbitrary body mounting */
  aw_synth_mm(st->R, Rz, R0);
  double wg[3] = { phi[1] * n[0], phi[1] * n[1], phi[1] * n[2] };
  aw_mat_tmul_v3(st->w_body, (const double (*)[3])st->R, wg);
}

/* Truth of the keypoint in the camera frame at true time t. */
static inline void
aw_synth_truth_cam(const AwSynthSpec *sp, double t, double p_cam[3], double v_cam[3])
{
  AwSynthState st;
  aw_synth_state(sp, t, &st);
  double Rc[3][3], tc[3], Rl[3], wl[3], wg[3];
  aw_synth_cam(sp, Rc, tc);
  aw_mat_mul_v3(Rl, (const double (*)[3])st.R, sp->lever);
  double pg[3];
  for (int a = 0; a < 3; a++) pg[a] = st.p[a] + Rl[a];
  aw_mat_mul_v3(p_cam, (const double (*)[3])Rc, pg);
  for (int a = 0; a < 3; a++) p_cam[a] += tc[a];
  if (v_cam) {
    aw_v3_cross(wl, st.w_body, sp->lever);
    aw_mat_mul_v3(wg, (const double (*)[3])st.R, wl);
    double vg[3];
    for (int a = 0; a < 3; a++) vg[a] = st.v[a] + wg[a];
    aw_mat_mul_v3(v_cam, (const double (*)[3])Rc, vg);
  }
}

static inline void
aw_synth_make(const AwSynthSpec *sp, AwImuStream **imu_out, AwDepthStream **dep_out)
{
  uint64_t rs = sp->seed * 2654435761u + 12345;
  size_t ni = (size_t)(sp->duration_s * sp->imu_rate_hz), nc = (size_t)(sp->duration_s * sp->cam_rate_hz);
  AwImuStream *imu = aw_imu_stream_new(ni);
  AwDepthStream *dep = aw_depth_stream_new(nc);
  double g = 9.80665;
  for (size_t i = 0; i < ni; i++) {
    double ti = (double)i / sp->imu_rate_hz;                /* IMU clock */
    double tt = ti * (1 + sp->clock_drift) + sp->clock_offset_s;  /* true = depth clock */
    imu->t_s[i] = ti;
    AwSynthState st;
    aw_synth_state(sp, tt, &st);
    double ag[3] = { st.a[0], st.a[1], st.a[2] + g }, fb[3];
    aw_mat_tmul_v3(fb, (const double (*)[3])st.R, ag);
    double sa = sp->accel_noise * sqrt(sp->imu_rate_hz), sg = sp->gyro_noise * sqrt(sp->imu_rate_hz);
    for (int a = 0; a < 3; a++) {
      double f = fb[a] + sp->accel_bias[a] + sa * aw_synth_gauss(&rs);
      if (sp->accel_range > 0) f = fmax(-sp->accel_range, fmin(sp->accel_range, f));
      imu->accel_m_s2[i][a] = f;
      imu->gyro_rad_s[i][a] = st.w_body[a] + sp->gyro_bias[a] + sg * aw_synth_gauss(&rs);
    }
  }
  imu->meta.nominal_rate_hz = sp->imu_rate_hz;
  imu->meta.accel_range_m_s2 = sp->accel_range;
  for (size_t k = 0; k < nc; k++) {
    double t = (double)k / sp->cam_rate_hz;
    dep->t_s[k] = t;
    double p[3];
    aw_synth_truth_cam(sp, t, p, NULL);
    double z = p[2];
    double sxy = sp->cam_sigma_xy_1m * z, sz = sp->cam_sigma_z_coeff * z * z;
    p[0] += sxy * aw_synth_gauss(&rs);
    p[1] += sxy * aw_synth_gauss(&rs);
    p[2] += sz * aw_synth_gauss(&rs);
    if (t >= sp->snap_t0 && t < sp->snap_t1) p[0] += sp->snap_m;
    dep->conf[k] = 0.9;
    if (t >= sp->occl_t0 && t < sp->occl_t1) {
      p[0] = p[1] = p[2] = NAN;
      dep->conf[k] = 0;
    }
    memcpy(dep->pos_cam_m[k], p, sizeof p);
  }
  dep->meta.nominal_rate_hz = sp->cam_rate_hz;
  *imu_out = imu;
  *dep_out = dep;
}
