/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Small 3-D math for the engine, written down once for the whole project.
 *
 * Conventions (every engine module follows these):
 * - Vectors are double[3].
 * - Quaternions are double[4] in the order (w, x, y, z), Hamilton product, unit norm.
 *   A quaternion named q_a_b rotates a vector from frame b into frame a:
 *   v_a = q_a_b (x) v_b (x) conj(q_a_b). Likewise R_a_b is the 3x3 matrix with v_a = R_a_b v_b.
 * - Matrices are double[3][3], row-major: R[row][col].
 * - Frames named in identifiers: cam (depth camera optical frame: x right, y down, z forward),
 *   grav (gravity-aligned frame: z up), sensor or body (the IMU's own frame).
 */

#include <math.h>

static inline void aw_v3_set(double out[3], double x, double y, double z)
{ out[0] = x; out[1] = y; out[2] = z; }
static inline void aw_v3_copy(double out[3], const double a[3])
{ out[0] = a[0]; out[1] = a[1]; out[2] = a[2]; }
static inline void aw_v3_add(double out[3], const double a[3], const double b[3])
{ out[0] = a[0] + b[0]; out[1] = a[1] + b[1]; out[2] = a[2] + b[2]; }
static inline void aw_v3_sub(double out[3], const double a[3], const double b[3])
{ out[0] = a[0] - b[0]; out[1] = a[1] - b[1]; out[2] = a[2] - b[2]; }
static inline void aw_v3_scale(double out[3], const double a[3], double s)
{ out[0] = a[0] * s; out[1] = a[1] * s; out[2] = a[2] * s; }
static inline void aw_v3_axpy(double out[3], double s, const double a[3])
{ out[0] += s * a[0]; out[1] += s * a[1]; out[2] += s * a[2]; }
static inline double aw_v3_dot(const double a[3], const double b[3])
{ return a[0] * b[0] + a[1] * b[1] + a[2] * b[2]; }
static inline double aw_v3_norm(const double a[3]) { return sqrt(aw_v3_dot(a, a)); }
static inline void aw_v3_cross(double out[3], const double a[3], const double b[3])
{
  double x = a[1] * b[2] - a[2] * b[1];
  double y = a[2] * b[0] - a[0] * b[2];
  double z = a[0] * b[1] - a[1] * b[0];
  out[0] = x; out[1] = y; out[2] = z;
}
static inline double aw_v3_dist(const double a[3], const double b[3])
{
  double d[3];
  aw_v3_sub(d, a, b);
  return aw_v3_norm(d);
}
static inline void aw_v3_normalize(double out[3], const double a[3])
{
  double n = aw_v3_norm(a);
  if (n > 0) aw_v3_scale(out, a, 1.0 / n); else aw_v3_set(out, 0, 0, 0);
}

static inline void aw_quat_identity(double q[4]) { q[0] = 1; q[1] = q[2] = q[3] = 0; }
static inline void aw_quat_conj(double out[4], const double q[4])
{ out[0] = q[0]; out[1] = -q[1]; out[2] = -q[2]; out[3] = -q[3]; }
/* out = a (x) b (Hamilton). out may alias a or b. */
static inline void aw_quat_mul(double out[4], const double a[4], const double b[4])
{
  double w = a[0] * b[0] - a[1] * b[1] - a[2] * b[2] - a[3] * b[3];
  double x = a[0] * b[1] + a[1] * b[0] + a[2] * b[3] - a[3] * b[2];
  double y = a[0] * b[2] - a[1] * b[3] + a[2] * b[0] + a[3] * b[1];
  double z = a[0] * b[3] + a[1] * b[2] - a[2] * b[1] + a[3] * b[0];
  out[0] = w; out[1] = x; out[2] = y; out[3] = z;
}
static inline void aw_quat_normalize(double q[4])
{
  double n = sqrt(q[0] * q[0] + q[1] * q[1] + q[2] * q[2] + q[3] * q[3]);
  if (n > 0) { q[0] /= n; q[1] /= n; q[2] /= n; q[3] /= n; } else aw_quat_identity(q);
}
/* Rotation vector (axis * angle, rad) to unit quaternion. */
static inline void aw_quat_from_rotvec(double q[4], const double rv[3])
{
  double th = aw_v3_norm(rv);
  if (th < 1e-12) {
    q[0] = 1.0; q[1] = 0.5 * rv[0]; q[2] = 0.5 * rv[1]; q[3] = 0.5 * rv[2];
    aw_quat_normalize(q);
    return;
  }
  double s = sin(0.5 * th) / th;
  q[0] = cos(0.5 * th); q[1] = rv[0] * s; q[2] = rv[1] * s; q[3] = rv[2] * s;
}
/* Unit quaternion to rotation vector (angle in [0, pi]). */
static inline void aw_quat_to_rotvec(double rv[3], const double q_in[4])
{
  double q[4] = { q_in[0], q_in[1], q_in[2], q_in[3] };
  if (q[0] < 0) { q[0] = -q[0]; q[1] = -q[1]; q[2] = -q[2]; q[3] = -q[3]; }
  double s = sqrt(q[1] * q[1] + q[2] * q[2] + q[3] * q[3]);
  if (s < 1e-12) { rv[0] = 2 * q[1]; rv[1] = 2 * q[2]; rv[2] = 2 * q[3]; return; }
  double th = 2.0 * atan2(s, q[0]);
  rv[0] = q[1] / s * th; rv[1] = q[2] / s * th; rv[2] = q[3] / s * th;
}
static inline void aw_quat_to_mat(double R[3][3], const double q[4])
{
  double w = q[0], x = q[1], y = q[2], z = q[3];
  R[0][0] = 1 - 2 * (y * y + z * z); R[0][1] = 2 * (x * y - w * z); R[0][2] = 2 * (x * z + w * y);
  R[1][0] = 2 * (x * y + w * z); R[1][1] = 1 - 2 * (x * x + z * z); R[1][2] = 2 * (y * z - w * x);
  R[2][0] = 2 * (x * z - w * y); R[2][1] = 2 * (y * z + w * x); R[2][2] = 1 - 2 * (x * x + y * y);
}
/* Rotation matrix (proper, orthonormal) to unit quaternion, w >= 0 (Shepperd's method). */
static inline void aw_mat_to_quat(double q[4], const double R[3][3])
{
  double tr = R[0][0] + R[1][1] + R[2][2];
  if (tr > 0) {
    double s = sqrt(tr + 1.0) * 2;
    q[0] = 0.25 * s; q[1] = (R[2][1] - R[1][2]) / s;
    q[2] = (R[0][2] - R[2][0]) / s; q[3] = (R[1][0] - R[0][1]) / s;
  } else if (R[0][0] > R[1][1] && R[0][0] > R[2][2]) {
    double s = sqrt(1.0 + R[0][0] - R[1][1] - R[2][2]) * 2;
    q[0] = (R[2][1] - R[1][2]) / s; q[1] = 0.25 * s;
    q[2] = (R[0][1] + R[1][0]) / s; q[3] = (R[0][2] + R[2][0]) / s;
  } else if (R[1][1] > R[2][2]) {
    double s = sqrt(1.0 + R[1][1] - R[0][0] - R[2][2]) * 2;
    q[0] = (R[0][2] - R[2][0]) / s; q[1] = (R[0][1] + R[1][0]) / s;
    q[2] = 0.25 * s; q[3] = (R[1][2] + R[2][1]) / s;
  } else {
    double s = sqrt(1.0 + R[2][2] - R[0][0] - R[1][1]) * 2;
    q[0] = (R[1][0] - R[0][1]) / s; q[1] = (R[0][2] + R[2][0]) / s;
    q[2] = (R[1][2] + R[2][1]) / s; q[3] = 0.25 * s;
  }
  if (q[0] < 0) { q[0] = -q[0]; q[1] = -q[1]; q[2] = -q[2]; q[3] = -q[3]; }
  aw_quat_normalize(q);
}
/* v_a = R_a_b v_b */
static inline void aw_mat_mul_v3(double out[3], const double R[3][3], const double v[3])
{
  double x = R[0][0] * v[0] + R[0][1] * v[1] + R[0][2] * v[2];
  double y = R[1][0] * v[0] + R[1][1] * v[1] + R[1][2] * v[2];
  double z = R[2][0] * v[0] + R[2][1] * v[1] + R[2][2] * v[2];
  out[0] = x; out[1] = y; out[2] = z;
}
/* v_b = R_a_b^T v_a */
static inline void aw_mat_tmul_v3(double out[3], const double R[3][3], const double v[3])
{
  double x = R[0][0] * v[0] + R[1][0] * v[1] + R[2][0] * v[2];
  double y = R[0][1] * v[0] + R[1][1] * v[1] + R[2][1] * v[2];
  double z = R[0][2] * v[0] + R[1][2] * v[1] + R[2][2] * v[2];
  out[0] = x; out[1] = y; out[2] = z;
}
/* v_a = q_a_b v_b */
static inline void aw_quat_rotate(double out[3], const double q[4], const double v[3])
{
  double R[3][3];
  aw_quat_to_mat(R, q);
  aw_mat_mul_v3(out, (const double (*)[3])R, v); /* C17 needs the cast to add const */
}
