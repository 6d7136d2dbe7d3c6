/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise fuse`: one fused hand path from an IMU and a depth keypoint stream (engine/fusion). */
#include "cli.h"

#include "arcwise/capture.h"
#include "arcwise/fusion.h"
#include "arcwise/units.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

static void
usage(FILE *out)
{
  fprintf(out,
          "Usage: arcwise fuse --imu IMU.csv --depth DEPTH.csv [OPTION...]\n"
          "\n"
          "Aligns the clocks, finds the camera's tilt against gravity, and fuses the IMU with the\n"
          "camera's wrist keypoint into one path with its uncertainty: one row per IMU sample,\n"
          "time on the camera's clock, positions in the camera's frame (columns in README.md,\n"
          "\"Fused path\").\n"
          "\n"
          "Options:\n"
          "  --imu FILE          IMU stream (capture format)\n"
          "  --depth FILE        depth keypoint stream (capture format)\n"
          "  --lever-arm X,Y,Z   keypoint relative to the watch, in the watch's frame, metres\n"
          "  --latitude DEG      local gravity from WGS 84 (default: standard gravity)\n"
          "  --mask imu|camera   leave one sensor out (for checking how much each one carries)\n"
          "  -o, --output FILE   write the path here (default: standard output)\n"
          "  --report FILE       write the estimated clock offset, drift, camera-to-gravity\n"
          "                      rotation and counts here (default: standard error)\n"
          "  --force             replace the output or report file if it exists\n"
          "\n"
          "The path is an estimate from consumer sensors, not a medical or equipment assessment.\n");
}

static bool
parse_vec3(const char *s, double v[3])
{
  char *end;
  for (int i = 0; i < 3; i++) {
    errno = 0;
    v[i] = strtod(s, &end);
    if (errno != 0 || end == s || !isfinite(v[i])) return false;
    if (i < 2) {
      if (*end != ',') return false;
      s = end + 1;
    }
  }
  return *end == 0;
}

static void
write_report(FILE *f, const AwFusedPath *p)
{
  const AwFusionReport *r = &p->report;
  fprintf(f, "clock_offset_s: %.6f\n", r->clock_offset_s);
  fprintf(f, "clock_offset_sigma_s: %.6f\n", r->clock_offset_sigma_s);
  fprintf(f, "clock_calib_sigma_s: %.6f\n", r->clock_calib_sigma_s);
  fprintf(f, "clock_drift_ppm: %.3f\n", r->clock_drift * 1e6);
  if (isfinite(r->clock_drift_sigma))
    fprintf(f, "clock_drift_sigma_ppm: %.3f\n", r->clock_drift_sigma * 1e6);
  else
    fprintf(f, "clock_drift_sigma_ppm: none (too short a stretch of motion to estimate a drift)\n");
  fprintf(f, "clock_confidence: %.3f\n", r->clock_confidence);
  fprintf(f, "q_cam_grav_wxyz: %.6f %.6f %.6f %.6f\n", r->q_cam_grav[0], r->q_cam_grav[1],
          r->q_cam_grav[2], r->q_cam_grav[3]);
  fprintf(f, "gravity_m_s2: %.6f\n", r->gravity_m_s2);
  fprintf(f, "accel_bias_m_s2: %.5f %.5f %.5f\n", r->accel_bias_m_s2[0], r->accel_bias_m_s2[1], r->accel_bias_m_s2[2]);
  fprintf(f, "gyro_bias_rad_s: %.5f %.5f %.5f\n", r->gyro_bias_rad_s[0], r->gyro_bias_rad_s[1], r->gyro_bias_rad_s[2]);
  fprintf(f, "lever_arm_body_m: %.4f %.4f %.4f\n", r->lever_arm_body_m[0], r->lever_arm_body_m[1], r->lever_arm_body_m[2]);
  fprintf(f, "lever_arm: %s\n", r->lever_arm_held ? "held (the estimate left its prior)" : "estimated");
  if (r->clock_search_runs > 0)
    fprintf(f, "clock_search: %zu filter runs, kept the start %+.1f ms from the calibration's offset\n",
            r->clock_search_runs, 1e3 * r->clock_search_shift_s);
  else
    fprintf(f, "clock_search: not run\n");
  fprintf(f, "still_found: %s\n", r->still_found ? "yes" : "no");
  fprintf(f, "camera_frames_used: %zu\ncamera_frames_rejected: %zu\ncamera_frames_missing: %zu\n",
          r->cam_frames_used, r->cam_frames_rejected, r->cam_frames_missing);
  fprintf(f, "imu_samples_saturated: %zu\nzero_velocity_samples: %zu\nimu_gaps: %zu\n",
          r->imu_samples_saturated, r->zupt_samples, r->imu_gaps);
  fprintf(f, "camera_nis_mean: %.3f\n", r->cam_nis_mean);
}

static int
write_path(const char *path, const AwFusedPath *p)
{
  FILE *f = stdout;
  char tmp[4096];
  if (path) {
    if (snprintf(tmp, sizeof tmp, "%s.tmp-%ld", path, (long)getpid()) >= (int)sizeof tmp)
      return arcwise_cli_fail("fuse", "%s: path too long", path);
    f = fopen(tmp, "w");
    if (!f) return arcwise_cli_fail("fuse", "%s: %s", tmp, strerror(errno));
  }
  fprintf(f, "t,x,y,z,vx,vy,vz,qw,qx,qy,qz,sx,sy,sz,cam_info_share,flags\n");
  for (size_t i = 0; i < p->n; i++)
    fprintf(f, "%.6f,%.6f,%.6f,%.6f,%.5f,%.5f,%.5f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.4f,%u\n",
            p->t_s[i], p->pos_cam_m[i][0], p->pos_cam_m[i][1], p->pos_cam_m[i][2],
            p->vel_cam_m_s[i][0], p->vel_cam_m_s[i][1], p->vel_cam_m_s[i][2], p->q_cam_body[i][0],
            p->q_cam_body[i][1], p->q_cam_body[i][2], p->q_cam_body[i][3],
            p->pos_sigma_cam_m[i][0], p->pos_sigma_cam_m[i][1], p->pos_sigma_cam_m[i][2],
            p->cam_info_share[i], (unsigned)p->flags[i]);
  if (path) {
    bool ok = fflush(f) == 0 && fsync(fileno(f)) == 0;
    ok = fclose(f) == 0 && ok;
    if (!ok || rename(tmp, path) != 0) {
      int e = errno;
      remove(tmp);
      return arcwise_cli_fail("fuse", "%s: %s", path, strerror(e));
    }
  } else if (fflush(stdout) != 0)
    return arcwise_cli_fail("fuse", "standard output: %s", strerror(errno));
  return 0;
}

int
arcwise_cmd_fuse(int argc, char **argv)
{
  const char *imu_path = NULL, *depth_path = NULL, *out_path = NULL, *report_path = NULL;
  bool force = false;
  AwFusionSettings s;
  aw_fusion_settings_default(&s);
  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    const char *v = i + 1 < argc ? argv[i + 1] : NULL;
    if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) { usage(stdout); return 0; }
    if (strcmp(a, "--force") == 0) { force = true; continue; }
    if (!v) return arcwise_cli_usage_error("fuse", "option '%s' needs a value or is unknown", a);
    if (strcmp(a, "--imu") == 0) imu_path = v;
    else if (strcmp(a, "--depth") == 0) depth_path = v;
    else if (strcmp(a, "-o") == 0 || strcmp(a, "--output") == 0) out_path = v;
    else if (strcmp(a, "--report") == 0) report_path = v;
    else if (strcmp(a, "--lever-arm") == 0) {
      if (!parse_vec3(v, s.lever_arm_body_m) || fabs(s.lever_arm_body_m[0]) > 1 ||
          fabs(s.lever_arm_body_m[1]) > 1 || fabs(s.lever_arm_body_m[2]) > 1)
        return arcwise_cli_usage_error("fuse", "--lever-arm wants X,Y,Z in metres (each within +-1 m), got '%s'", v);
      s.lever_arm_sigma_m = 0.005;   /* measured by hand: good to about half a centimetre */
    } else if (strcmp(a, "--latitude") == 0) {
      char *end;
      double d = strtod(v, &end);
      if (*end != 0 || !(d >= -90 && d <= 90))
        return arcwise_cli_usage_error("fuse", "--latitude wants degrees in -90..90, got '%s'", v);
      s.latitude_rad = aw_deg_to_rad(d);
    } else if (strcmp(a, "--mask") == 0) {
      if (strcmp(v, "imu") == 0) s.mask = AW_FUSION_IMU_MASKED;
      else if (strcmp(v, "camera") == 0) s.mask = AW_FUSION_CAMERA_MASKED;
      else return arcwise_cli_usage_error("fuse", "--mask wants 'imu' or 'camera', got '%s'", v);
    } else
      return arcwise_cli_usage_error("fuse", "unknown option '%s'", a);
    i++;
  }
  if (!imu_path || !depth_path) return arcwise_cli_usage_error("fuse", "--imu and --depth are required");
  /* Never replace a file silently (a fused path or report written earlier may be the only copy
   * of work the user wants); checked before the fusion runs so that nothing is wasted. */
  const char *outs[2] = { out_path, report_path };
  for (int k = 0; k < 2 && !force; k++) {
    struct stat sb;
    if (outs[k] != NULL && stat(outs[k], &sb) == 0 && S_ISREG(sb.st_mode))
      return arcwise_cli_fail("fuse", "%s: already exists (use --force to replace it)", outs[k]);
  }
  AwImuStream *imu = NULL;
  AwDepthStream *dep = NULL;
  AwError err;
  char buf[1200];
  aw_error_clear(&err);
  if (aw_imu_read_file(imu_path, &imu, &err) != AW_OK)
    return arcwise_cli_fail("fuse", "%s", aw_error_format(&err, buf, sizeof buf));
  if (aw_depth_read_file(depth_path, &dep, &err) != AW_OK) {
    aw_imu_stream_free(imu);
    return arcwise_cli_fail("fuse", "%s", aw_error_format(&err, buf, sizeof buf));
  }
  AwFusedPath *p = NULL;
  AwStatus st = aw_fuse(imu, dep, &s, &p, &err);
  aw_imu_stream_free(imu);
  aw_depth_stream_free(dep);
  if (st != AW_OK) {
    /* The engine names the stream ("imu"/"depth"); say which file that was. */
    const char *file = strcmp(err.file, "imu") == 0 ? imu_path : strcmp(err.file, "depth") == 0 ? depth_path : err.file;
    return arcwise_cli_fail("fuse", "%s: %s", file, err.message);
  }
  int rc = write_path(out_path, p);
  if (rc == 0) {
    if (report_path) {
      FILE *f = fopen(report_path, "w");
      if (!f) rc = arcwise_cli_fail("fuse", "%s: %s", report_path, strerror(errno));
      else {
        write_report(f, p);
        if (fclose(f) != 0) rc = arcwise_cli_fail("fuse", "%s: %s", report_path, strerror(errno));
      }
    } else
      write_report(stderr, p);
  }
  aw_fused_path_free(p);
  return rc;
}
