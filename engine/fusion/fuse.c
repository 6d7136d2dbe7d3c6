/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The fusion pipeline: prepare -> clock sync -> camera/gravity calibration -> error-state
 * Kalman filter and smoother (or the camera-only smoother when the IMU is masked). */
#include "fusion-internal.h"

#include "arcwise/math3.h"
#include "arcwise/units.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

static double
mono_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Adds the time since *mark to stage st and moves the mark. */
static void
lap(double times[AW_FUSION_STAGE_COUNT], AwFusionStage st, double *mark)
{
  double t = mono_s();
  times[st] += t - *mark;
  *mark = t;
}

void
aw_fusion_settings_default(AwFusionSettings *s)
{
  memset(s, 0, sizeof *s);
  /* Consumer MEMS class (REFERENCES.md section 8, Bosch BMI160 / ST LSM6DS3 datasheets):
   * 180 ug/sqrt(Hz) and 0.007 deg/s/sqrt(Hz). */
  s->accel_noise_density_m_s2_rthz = 180e-6 * AW_GRAVITY_STANDARD_M_S2;
  s->gyro_noise_density_rad_s_rthz = 0.007 * AW_RAD_PER_DEG;
  /* Bias instability of smartwatch parts ~0.05-0.1 mg and 3-10 deg/h (section 8, from memory)
   * expressed as random walks that move the bias by about that much over a minute. */
  s->accel_bias_walk_m_s3_rthz = 1e-4;
  s->gyro_bias_walk_rad_s2_rthz = 1e-5;
  /* Keypoint detectors are good to about 2 pixels; at a 600 px focal length that is 3.3 mm
   * per metre of depth. Depth noise sigma_z = 1.6e-3 z^2 (REFERENCES.md section 7: a quadratic
   * through the structured-light figure of 4 cm at 5 m, Khoshelham & Oude Elberink 2012). */
  s->cam_sigma_xy_m = 0.0033;
  s->cam_sigma_z_coeff_per_m = 1.6e-3;
  s->gate_chi2 = 16.27;          /* chi-square, 3 dof, p = 0.999 */
  s->latitude_rad = NAN;         /* standard gravity */
  s->max_clock_offset_s = 1.0;
  s->mask = AW_FUSION_BOTH;
  s->accel_bias_init_m_s2 = 40e-3 * AW_GRAVITY_STANDARD_M_S2;   /* zero-g offset +-40 mg */
  s->gyro_bias_init_rad_s = 3.0 * AW_RAD_PER_DEG;                /* zero-rate offset +-3 deg/s */
  s->accel_scale_sigma = 0.01;   /* sensitivity tolerance and cross-axis ~1 % (datasheet class) */
  s->gyro_scale_sigma = 0.01;
  s->still_gyro_rad_s = 0.1;     /* 6 deg/s: a hand holding a club at address */
  s->still_accel_m_s2 = 0.3;
  s->still_window_s = 0.25;
  s->zupt_sigma_m_s = 0.02;
  s->cam_conf_min = 0.05;
  s->gate_recover_s = 0.5;       /* longer than an occlusion snap lasts */
  s->clock_drift_prior = 50e-6;  /* 1 sigma: quartz oscillators are specified to +-20..50 ppm
                                    (common practice); the +-100 ppm the method must handle is
                                    two sigmas */
  s->motion_jerk_psd_m2_s5 = 0;  /* estimated from the frames */
  /* A watch sits a few centimetres from the wrist keypoint a camera reports: unknown to
   * +-3 cm per axis unless measured (then pass it with a smaller sigma). */
  s->lever_arm_sigma_m = 0.03;
  s->imu_output_delay_s = NAN;   /* as the IMU file declares */
  /* A whole filter run per start: single captures only (a session's several shots pin the
   * clock down, and its drift is estimated). */
  s->clock_search_max_s = 30;
  /* Twice the share a normal capture loses (real captures 2.5-5 %, the simulator's normal level
   * about 4 %): more is a path the frames disagree with. */
  s->clock_search_reject_frac = 0.10;
  /* A wrong detection lies on the body, within about half a metre of the wrist. */
  s->cam_outlier_sigma_m = 0.2;
}

static double
output_delay(const AwImuStream *imu, const AwFusionSettings *s)
{
  double d = isfinite(s->imu_output_delay_s) ? s->imu_output_delay_s : imu->meta.output_delay_s;
  return isfinite(d) && d > 0 ? d : 0;
}

AwFusedPath *
aw_fused_path_new(size_t n)
{
  AwFusedPath *p = calloc(1, sizeof *p);
  if (!p) return NULL;
  size_t m = n ? n : 1;
  p->n = n;
  p->t_s = calloc(m, sizeof *p->t_s);
  p->pos_cam_m = calloc(m, sizeof *p->pos_cam_m);
  p->vel_cam_m_s = calloc(m, sizeof *p->vel_cam_m_s);
  p->q_cam_body = calloc(m, sizeof *p->q_cam_body);
  p->pos_sigma_cam_m = calloc(m, sizeof *p->pos_sigma_cam_m);
  p->cam_info_share = calloc(m, sizeof *p->cam_info_share);
  p->accel_body_m_s2 = calloc(m, sizeof *p->accel_body_m_s2);
  p->gyro_body_rad_s = calloc(m, sizeof *p->gyro_body_rad_s);
  p->flags = calloc(m, sizeof *p->flags);
  if (!p->t_s || !p->pos_cam_m || !p->vel_cam_m_s || !p->q_cam_body || !p->pos_sigma_cam_m ||
      !p->cam_info_share || !p->accel_body_m_s2 || !p->gyro_body_rad_s || !p->flags) {
    aw_fused_path_free(p);
    return NULL;
  }
  return p;
}

void
aw_fused_path_free(AwFusedPath *p)
{
  if (!p) return;
  free(p->t_s); free(p->pos_cam_m); free(p->vel_cam_m_s); free(p->q_cam_body);
  free(p->pos_sigma_cam_m); free(p->cam_info_share); free(p->accel_body_m_s2);
  free(p->gyro_body_rad_s); free(p->flags);
  free(p);
}

static double
local_gravity(const AwFusionSettings *s)
{
  return isfinite(s->latitude_rad) ? aw_gravity_wgs84_m_s2(s->latitude_rad) : AW_GRAVITY_STANDARD_M_S2;
}

static AwStatus
check_inputs(const AwImuStream *imu, const AwDepthStream *depth, const AwFusionSettings *s,
             AwError *err)
{
  if (!imu || !depth || !s || !imu->t_s || !depth->t_s)
    return aw_error_set(err, AW_ERR_INVALID_ARG, "fusion", 0, 0, "missing stream or settings");
  if (imu->n < 16)
    return aw_error_set(err, AW_ERR_TOO_FEW, "imu", 0, 0, "only %zu IMU samples", imu->n);
  for (size_t i = 0; i < imu->n; i++) {
    for (int a = 0; a < 3; a++)
      if (!isfinite(imu->accel_m_s2[i][a]) || !isfinite(imu->gyro_rad_s[i][a]))
        return aw_error_set(err, AW_ERR_NON_FINITE, "imu", (long)i + 1, 0, "sample %zu is not finite", i);
    if (!isfinite(imu->t_s[i]) || (i > 0 && !(imu->t_s[i] > imu->t_s[i - 1])))
      return aw_error_set(err, AW_ERR_RANGE, "imu", (long)i + 1, 0,
                          "IMU time does not increase at sample %zu", i);
  }
  for (size_t k = 0; k < depth->n; k++)
    if (!isfinite(depth->t_s[k]) || (k > 0 && !(depth->t_s[k] > depth->t_s[k - 1])))
      return aw_error_set(err, AW_ERR_RANGE, "depth", (long)k + 1, 0,
                          "camera time does not increase at frame %zu", k);
  if (depth->n < 10)
    return aw_error_set(err, AW_ERR_TOO_FEW, "depth", 0, 0,
                        "only %zu camera frames; at least 10 are needed", depth->n);
  return AW_OK;
}

AwStatus
aw_fusion_sync_clocks(const AwImuStream *imu, const AwDepthStream *depth,
                      const AwFusionSettings *s, AwFusionReport *out, AwError *err)
{
  AwStatus st = check_inputs(imu, depth, s, err);
  if (st != AW_OK) return st;
  double g = local_gravity(s);
  AwCamPrep cam;
  AwImuPrep im;
  if ((st = aw_fusion_prep_cam(depth, s, &cam)) != AW_OK) return aw_error_set(err, st, "fusion", 0, 0, "out of memory");
  if ((st = aw_fusion_prep_imu(imu, s, g, &im)) != AW_OK) {
    aw_fusion_prep_cam_free(&cam);
    return aw_error_set(err, st, "fusion", 0, 0, "out of memory");
  }
  double gc[3];
  st = aw_fusion_sync_run(&im, &cam, s, g, out, gc, err);
  if (st == AW_OK) out->clock_offset_s += output_delay(imu, s);
  aw_fusion_prep_cam_free(&cam);
  aw_fusion_prep_imu_free(&im);
  return st;
}

/* The filter's per-sample output and report of b into a (both n samples; the inputs copied into
 * the path, accel_body_m_s2, gyro_body_rad_s and cam_info_share, are not the filter's). */
static void
path_take_filter(AwFusedPath *a, const AwFusedPath *b)
{
  size_t n = a->n;
  memcpy(a->t_s, b->t_s, sizeof *a->t_s * n);
  memcpy(a->pos_cam_m, b->pos_cam_m, sizeof *a->pos_cam_m * n);
  memcpy(a->vel_cam_m_s, b->vel_cam_m_s, sizeof *a->vel_cam_m_s * n);
  memcpy(a->q_cam_body, b->q_cam_body, sizeof *a->q_cam_body * n);
  memcpy(a->pos_sigma_cam_m, b->pos_sigma_cam_m, sizeof *a->pos_sigma_cam_m * n);
  memcpy(a->flags, b->flags, sizeof *a->flags * n);
  a->report = b->report;
}

/* A search over the clock offset, around the one the sync and calibration found, for a short
 * recording whose fused path the camera frames disagree with more than usual. The filter's
 * clock state refines the offset within its basin, but on a hard swing (clipped IMU, long
 * occlusions with snapped detections) the calibration can land 10-20 ms off, where frames of the
 * fast phases disagree with the path, are left out, and the filter's clock no longer sees what
 * would move it. The search starts the filter at other offsets (a pattern search: steps of
 * 128 ms halved down to 4 ms, moving while a step finds a better start) and keeps the run whose
 * smoothed path the most camera frames agree with: the consensus the filter's passes are chosen
 * by ("Several passes" in eskf.c), a robust likelihood of the offset. Each start is a whole
 * filter run, so it is made only where it is cheap and wanted: recordings of at most
 * clock_search_max_s, and more than clock_search_reject_frac of the frames left out (on the
 * simulator's hard level about one frame in eleven is, on its normal level one in 25, and real
 * captures lose 2.5-5 %, DEVELOPERS.md). rep_in: the report as it stood before the filter ran. */
static AwStatus
clock_search(const AwImuPrep *im, const double *tau, const AwCamPrep *cam,
             const AwFusionSettings *s, double g, const AwCalib *cal, unsigned freeze,
             const AwFusionReport *rep_in, AwFusedPath *path, AwError *err)
{
  AwFusionReport *rep = &path->report;
  size_t used = rep->cam_frames_used, rej = rep->cam_frames_rejected, n = path->n;
  double span = n > 1 ? im->t_s[n - 1] - im->t_s[0] : 0;
  if (s->mask == AW_FUSION_CAMERA_MASKED || !(span <= s->clock_search_max_s) || used + rej == 0 ||
      !((double)rej > s->clock_search_reject_frac * (double)(used + rej)))
    return AW_OK;
  AwFusedPath *alt = aw_fused_path_new(n);
  double *tau2 = malloc(sizeof *tau2 * (n ? n : 1));
  if (!alt || !tau2) {
    aw_fused_path_free(alt);
    free(tau2);
    return aw_error_set(err, AW_ERR_NO_MEMORY, "fusion", 0, 0, "out of memory");
  }
  AwStatus st = AW_OK;
  bool held = rep->lever_arm_held;
  size_t runs = 0;
  double best = 0, h = 0.128;
  enum { MAX_RUNS = 20 };
  while (h >= 0.004 && runs < MAX_RUNS) {
    bool moved = false;
    for (int sg = -1; sg <= 1 && !moved && runs < MAX_RUNS; sg += 2) {
      double d = best + sg * h;
      for (size_t i = 0; i < n; i++) tau2[i] = tau[i] + d;
      alt->report = *rep_in;
      alt->report.clock_offset_s += d;
      runs++;
      AwError e2 = { 0 };
      AwStatus st2 = aw_fusion_eskf_run_ext(im, tau2, cam, s, g, cal, freeze, alt, &e2);
      if (st2 == AW_ERR_NO_MEMORY) { *err = e2; st = st2; goto out; }
      /* A start the filter fails on (it checks its path is finite) is no candidate. */
      if (st2 == AW_OK && alt->report.cam_frames_used > rep->cam_frames_used) {
        path_take_filter(path, alt);
        best = d;
        moved = true;
      }
    }
    if (!moved) h *= 0.5;
  }
out:
  rep->lever_arm_held = held;
  rep->clock_search_runs = runs;
  rep->clock_search_shift_s = best;
  aw_fused_path_free(alt);
  free(tau2);
  return st;
}

AwStatus
aw_fuse(const AwImuStream *imu, const AwDepthStream *depth, const AwFusionSettings *settings,
        AwFusedPath **out, AwError *err)
{
  if (out) *out = NULL;
  if (!out) return aw_error_set(err, AW_ERR_INVALID_ARG, "fusion", 0, 0, "no output");
  AwFusionSettings sdef;
  if (!settings) { aw_fusion_settings_default(&sdef); settings = &sdef; }
  const AwFusionSettings *s = settings;
  double times[AW_FUSION_STAGE_COUNT] = { 0 }, mark = mono_s();
  AwStatus st = check_inputs(imu, depth, s, err);
  if (st != AW_OK) return st;
  double g = local_gravity(s);
  AwCamPrep cam;
  AwImuPrep im;
  memset(&cam, 0, sizeof cam);
  memset(&im, 0, sizeof im);
  AwFusedPath *path = NULL;
  double *tau = NULL;
  double (*cs)[3] = NULL;
  if (aw_fusion_prep_cam(depth, s, &cam) != AW_OK || aw_fusion_prep_imu(imu, s, g, &im) != AW_OK) {
    st = aw_error_set(err, AW_ERR_NO_MEMORY, "fusion", 0, 0, "out of memory");
    goto fail;
  }
  path = aw_fused_path_new(imu->n);
  tau = malloc(sizeof *tau * imu->n);
  if (!path || !tau) { st = aw_error_set(err, AW_ERR_NO_MEMORY, "fusion", 0, 0, "out of memory"); goto fail; }
  AwFusionReport *rep = &path->report;
  rep->gravity_m_s2 = g;
  rep->imu_rate_hz = 1.0 / im.dt_nom_s;
  rep->cam_rate_hz = 1.0 / cam.dt_nom_s;
  double gc0[3];
  lap(times, AW_FUSION_STAGE_PREP, &mark);
  st = aw_fusion_sync_run(&im, &cam, s, g, rep, gc0, err);
  if (st != AW_OK) goto fail;
  lap(times, AW_FUSION_STAGE_SYNC, &mark);
  for (size_t i = 0; i < imu->n; i++) {
    tau[i] = imu->t_s[i] * (1.0 + rep->clock_drift) + rep->clock_offset_s;
    path->t_s[i] = tau[i];
    memcpy(path->accel_body_m_s2[i], imu->accel_m_s2[i], sizeof path->accel_body_m_s2[i]);
    memcpy(path->gyro_body_rad_s[i], imu->gyro_rad_s[i], sizeof path->gyro_body_rad_s[i]);
  }
  AwCalib cal;
  lap(times, AW_FUSION_STAGE_OUTPUT, &mark);
  st = aw_fusion_calibrate(&im, tau, &cam, s, g, gc0, &cal, err);
  if (st != AW_OK) goto fail;
  lap(times, AW_FUSION_STAGE_CALIB, &mark);
  /* The calibration's vector match refines the clock: shift the IMU grid by it. */
  /* tau + shift + d (tau - ref) = t_imu (1 + drift)(1 + d) + offset (1 + d) + shift - d ref */
  rep->clock_offset_s = rep->clock_offset_s * (1 + cal.clock_drift) + cal.clock_shift_s -
                        cal.clock_drift * cal.clock_ref_s;
  rep->clock_drift = (1 + rep->clock_drift) * (1 + cal.clock_drift) - 1;
  rep->clock_calib_sigma_s = cal.clock_sigma_s;
  rep->clock_drift_sigma = cal.clock_drift_sigma;
  for (size_t i = 0; i < imu->n; i++) {
    tau[i] += cal.clock_shift_s + cal.clock_drift * (tau[i] - cal.clock_ref_s);
    path->t_s[i] = tau[i];
  }
  rep->still_found = cal.still_found;
  memcpy(rep->q_cam_body0, cal.q_cam_body0, sizeof cal.q_cam_body0);
  memcpy(rep->gyro_bias_rad_s, cal.gyro_bias_rad_s, sizeof cal.gyro_bias_rad_s);

  /* Camera-only smoother: the output when the IMU is masked, otherwise the reference for the
   * camera's share of the position information. */
  cs = malloc(sizeof *cs * imu->n);
  if (!cs) { st = aw_error_set(err, AW_ERR_NO_MEMORY, "fusion", 0, 0, "out of memory"); goto fail; }
  double jerk = s->motion_jerk_psd_m2_s5;
  if (s->mask == AW_FUSION_IMU_MASKED) {
    double nis;
    size_t rej, rec;
    st = aw_fusion_camonly_run(&cam, tau, imu->n, s, &jerk, path->pos_cam_m, path->vel_cam_m_s,
                               path->pos_sigma_cam_m, &nis, &rej, &rec);
    if (st != AW_OK) { aw_error_set(err, st, "fusion", 0, 0, "camera-only smoother failed"); goto fail; }
    lap(times, AW_FUSION_STAGE_CAMONLY, &mark);
    rep->motion_jerk_psd_m2_s5 = jerk;
    rep->cam_nis_mean = nis;
    rep->cam_frames_rejected = rej;
    rep->gate_recoveries = rec;
    rep->cam_frames_used = cam.n_valid - rej;
    rep->cam_frames_missing = cam.n - cam.n_valid;
    /* Orientation is not observable without the IMU: the calibration's initial value, held. */
    size_t hint = 0;
    for (size_t i = 0; i < imu->n; i++) {
      memcpy(path->q_cam_body[i], cal.q_cam_body0, sizeof cal.q_cam_body0);
      path->cam_info_share[i] = 1.0;
      uint32_t fl = AW_FUSED_CAM_MISSING;
      size_t k = aw_fusion_locate(cam.t_s, cam.n, tau[i], &hint);
      if (k + 1 < cam.n && fabs(cam.t_s[k + 1] - tau[i]) < fabs(tau[i] - cam.t_s[k])) k++;
      if (fabs(cam.t_s[k] - tau[i]) <= 0.75 * cam.dt_nom_s && cam.valid[k]) fl = AW_FUSED_CAM_ACCEPTED;
      path->flags[i] = fl;
    }
    /* Gravity as calibrated (the filter that refines it did not run). */
    memcpy(rep->accel_bias_m_s2, (double[3]){ 0, 0, 0 }, sizeof rep->accel_bias_m_s2);
  } else {
    lap(times, AW_FUSION_STAGE_OUTPUT, &mark);
    AwFusionReport rep_in = *rep;
    st = aw_fusion_eskf_run(&im, tau, &cam, s, g, &cal, path, err);
    if (st != AW_OK) goto fail;
    /* The lever arm is a constant of how the watch sits, a few centimetres (its prior, sigma
     * lever_arm_sigma_m per axis). A smoothed estimate outside the prior's chi-square gate is
     * the filter explaining something else with it (seen: 28 cm on a hard swing, the path 6 cm
     * off the camera at rest): fuse again with the starting value held. */
    double l0[3], d2 = 0;
    aw_fusion_eskf_lever0(s, &cal, l0);
    for (int a = 0; a < 3 && s->lever_arm_sigma_m > 0; a++) {
      double d = (rep->lever_arm_body_m[a] - l0[a]) / s->lever_arm_sigma_m;
      d2 += d * d;
    }
    if (d2 > s->gate_chi2) {
      *rep = rep_in;
      st = aw_fusion_eskf_run_ext(&im, tau, &cam, s, g, &cal, AW_ESKF_FREEZE_LEVER, path, err);
      if (st != AW_OK) goto fail;
      rep->lever_arm_held = true;
    }
    st = clock_search(&im, tau, &cam, s, g, &cal, rep->lever_arm_held ? AW_ESKF_FREEZE_LEVER : 0,
                      &rep_in, path, err);
    if (st != AW_OK) goto fail;
    lap(times, AW_FUSION_STAGE_FILTER, &mark);
    if (s->mask == AW_FUSION_CAMERA_MASKED) {
      for (size_t i = 0; i < imu->n; i++) path->cam_info_share[i] = 0;
    } else {
      double (*csig)[3] = cs;
      st = aw_fusion_camonly_run(&cam, tau, imu->n, s, &jerk, NULL, NULL, csig, NULL, NULL, NULL);
      if (st != AW_OK) { aw_error_set(err, st, "fusion", 0, 0, "camera-only smoother failed"); goto fail; }
      lap(times, AW_FUSION_STAGE_CAMONLY, &mark);
      rep->motion_jerk_psd_m2_s5 = jerk;
      /* Share of the fused position information the camera alone would provide. */
      for (size_t i = 0; i < imu->n; i++) {
        double acc = 0;
        for (int a = 0; a < 3; a++) {
          double vf = path->pos_sigma_cam_m[i][a] * path->pos_sigma_cam_m[i][a];
          double vc = csig[i][a] * csig[i][a];
          acc += vc > 0 ? fmin(1.0, vf / vc) : 1.0;
        }
        path->cam_info_share[i] = acc / 3.0;
      }
    }
  }
  if (s->mask == AW_FUSION_IMU_MASKED) aw_fusion_q_cam_grav(cal.g_cam_m_s2, g, rep->q_cam_grav);
  /* Everything above works on the offset the signals imply (the times the motion happened);
   * the clock offset proper is later by the IMU's output delay. */
  rep->clock_offset_s += output_delay(imu, s);
  for (size_t i = 0; i < imu->n; i++)
    for (int a = 0; a < 3; a++)
      if (!isfinite(path->pos_cam_m[i][a]) || !isfinite(path->pos_sigma_cam_m[i][a])) {
        st = aw_error_set(err, AW_ERR_NON_FINITE, "fusion", 0, 0, "non-finite estimate at sample %zu", i);
        goto fail;
      }
  free(cs);
  free(tau);
  aw_fusion_prep_cam_free(&cam);
  aw_fusion_prep_imu_free(&im);
  lap(times, AW_FUSION_STAGE_OUTPUT, &mark);
  memcpy(rep->stage_time_s, times, sizeof times);
  *out = path;
  return AW_OK;
fail:
  free(cs);
  free(tau);
  aw_fused_path_free(path);
  aw_fusion_prep_cam_free(&cam);
  aw_fusion_prep_imu_free(&im);
  return st;
}
