/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Sensor trust by masking: how far the result moves when one stream is taken away. */
#include "arcwise/analysis.h"
#include "arcwise/math3.h"
#include "analysis-private.h"

#include <math.h>
#include <string.h>

/* RMS 3-D departure of `other` from `full` over [t0, t1], after removing a straight-line trend
 * in time from the difference. A camera-masked (IMU-only) fusion carries an offset and a
 * velocity error from everything before the phase; the trend removes that inheritance, so what
 * remains is how differently the two describe the phase's own motion. */
static double
departure(const AwTrajectory *full, const AwTrajectory *other, double t0, double t1)
{
  size_t n = full->n;
  size_t i0 = aw_an_index_at(full->t_s, n, t0), i1 = aw_an_index_at(full->t_s, n, t1);
  if (i1 <= i0 + 1)
    return AN_NAN;
  double st = 0, stt = 0, sd[3] = { 0 }, std[3] = { 0 }, sdd = 0;
  size_t c = 0;
  double tm = 0.5 * (full->t_s[i0] + full->t_s[i1]);
  for (size_t i = i0; i <= i1; i++) {
    double po[3], d[3];
    aw_an_interp3(other->t_s, other->pos_m, other->n, full->t_s[i], po);
    aw_v3_sub(d, po, full->pos_m[i]);
    double u = full->t_s[i] - tm;
    st += u;
    stt += u * u;
    for (int a = 0; a < 3; a++) {
      sd[a] += d[a];
      std[a] += u * d[a];
    }
    sdd += aw_v3_dot(d, d);
    c++;
  }
  /* Residual sum of squares of a least-squares line, per axis, in closed form. */
  double cn = (double)c, det = cn * stt - st * st;
  double rss = sdd;
  for (int a = 0; a < 3; a++) {
    if (det > 0) {
      double b = (cn * std[a] - st * sd[a]) / det, a0 = (sd[a] - b * st) / cn;
      rss -= a0 * sd[a] + b * std[a];
    } else {
      rss -= sd[a] * sd[a] / cn;
    }
  }
  return sqrt(fmax(rss, 0.0) / cn);
}

/* RMS distance of the hands from their mean position over a phase: a still phase stays
 * within a few cm (sensor noise and sway), a moving one spreads over tens of cm. Unlike a path
 * length, this does not grow with noise and sample rate. */
static double
phase_spread(const AwTrajectory *tr, double t0, double t1)
{
  size_t i0 = aw_an_index_at(tr->t_s, tr->n, t0), i1 = aw_an_index_at(tr->t_s, tr->n, t1);
  if (i1 <= i0)
    return 0.0;
  double m[3] = { 0, 0, 0 };
  for (size_t i = i0; i <= i1; i++)
    aw_v3_axpy(m, 1.0, tr->pos_m[i]);
  aw_v3_scale(m, m, 1.0 / (double)(i1 - i0 + 1));
  double ss = 0;
  for (size_t i = i0; i <= i1; i++) {
    double d = aw_v3_dist(tr->pos_m[i], m);
    ss += d * d;
  }
  return sqrt(ss / (double)(i1 - i0 + 1));
}

AwStatus
aw_analysis_add_trust(AwAnalysis *a, const AwTrajectory *full, const AwTrajectory *camera_masked,
                      const AwTrajectory *imu_masked, AwError *err)
{
  if (a == NULL || full == NULL || full->n < 2)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "", 0, 0, "no analysis or no full path");

  for (size_t k = 0; k < a->n_swings; k++) {
    AwSwing *s = &a->swings[k];
    for (int p = 0; p < AW_PHASE_COUNT_; p++) {
      AwPhase *ph = &s->phases[p];
      ph->dev_camera_masked_m = camera_masked != NULL && camera_masked->n > 1
                                  ? departure(full, camera_masked, ph->start_s, ph->end_s) : AN_NAN;
      ph->dev_imu_masked_m = imu_masked != NULL && imu_masked->n > 1
                               ? departure(full, imu_masked, ph->start_s, ph->end_s) : AN_NAN;
      /* A departure counts when it exceeds what the full result is unsure of anyway: twice its
       * mean sigma, and at least 5 mm (the order of a depth camera's noise at 2 m, REFERENCES.md
       * §7). */
      double floor_m = isfinite(ph->pos_sigma_mean_m) ? fmax(0.005, 2.0 * ph->pos_sigma_mean_m)
                                                      : 0.005;
      bool cam_gone_matters = ph->dev_camera_masked_m > floor_m;  /* IMU alone differs */
      bool imu_gone_matters = ph->dev_imu_masked_m > floor_m;     /* camera alone differs */
      AwDominance d = AW_DOMINANCE_UNKNOWN;
      /* A still phase (address, a held finish) has no motion for the IMU to describe: its
       * only content is where the hands are, and only the camera measures position (the IMU
       * contributes "not moving", which lets the filter average frames). Masking cannot show
       * that: trend removal takes out exactly the position. So a still phase is carried by the
       * camera when the camera saw the hands in most of its frames, else by the IMU holding
       * the last fix. */
      /* Still: the hands stay within 3 cm RMS of one place (a fist's width). */
      bool still = phase_spread(full, ph->start_s, ph->end_s) < 0.03;
      if (still && !(ph->cam_occluded_share > 0.5)) {
        d = AW_DOMINANCE_CAMERA;
      } else if (still) {
        d = AW_DOMINANCE_IMU;
      } else if (isnan(ph->dev_camera_masked_m) && isnan(ph->dev_imu_masked_m)) {
        d = AW_DOMINANCE_UNKNOWN;
      } else if (imu_gone_matters && !cam_gone_matters) {
        d = AW_DOMINANCE_IMU;
      } else if (cam_gone_matters && !imu_gone_matters) {
        d = AW_DOMINANCE_CAMERA;
      } else if (imu_gone_matters && cam_gone_matters) {
        double r = ph->dev_imu_masked_m / ph->dev_camera_masked_m;
        d = r >= 2.0 ? AW_DOMINANCE_IMU : r <= 0.5 ? AW_DOMINANCE_CAMERA : AW_DOMINANCE_SHARED;
        if (d == AW_DOMINANCE_SHARED && isfinite(ph->cam_occluded_share)) {
          /* Departures within a factor 2 of each other: a camera that lost most of the
           * phase's frames cannot be what carries it; one that saw nearly all of them is. */
          if (ph->cam_occluded_share > 0.5)
            d = AW_DOMINANCE_IMU;
          else if (ph->cam_occluded_share < 0.1)
            d = AW_DOMINANCE_CAMERA;
        }
      } else {
        /* Neither removal moves the result: fall back on the filter's own account of where
         * the position information came from. */
        if (isfinite(ph->cam_info_share_mean))
          d = ph->cam_info_share_mean >= 0.5 ? AW_DOMINANCE_CAMERA : AW_DOMINANCE_IMU;
        else
          d = AW_DOMINANCE_SHARED;
      }
      ph->dominance = d;
    }
  }
  return AW_OK;
}
