/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise inspect FILE... [--json]`: what the capture readers made of each file, and the
 * data-quality findings (gaps, jitter, saturation, missing depth frames) with their times. */
#include "cli.h"

#include "arcwise/capture.h"
#include "arcwise/quality.h"
#include "arcwise/units.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define TEXT_LIST_MAX 10  /* findings listed per kind in the text output; JSON lists all */

static void
print_usage(FILE *out)
{
  fprintf(out,
          "Usage: arcwise inspect [--json] FILE...\n"
          "\n"
          "Reads each capture file (IMU or depth keypoint stream, told from its header row) with\n"
          "the same strict checks as an import and prints what was read: kind of stream,\n"
          "samples, rate (median and spread of the intervals), duration, units, metadata, and\n"
          "the data-quality findings with their times: gaps, timing jitter, saturated IMU\n"
          "samples, depth frames without a detection. Nothing is changed or stored.\n"
          "\n"
          "Options:\n"
          "  --json      one JSON document on stdout, for other programs\n"
          "  -h, --help  show this help and exit\n"
          "\n"
          "Exit status: 0 when every file was read, 1 when any was rejected (one line per file on\n"
          "stderr: file:line:column: reason), 2 on a usage error.\n");
}

/* ---- JSON output ------------------------------------------------------------------------ */

static size_t
utf8_seq_len(const unsigned char *s)
{
  if (s[0] < 0x80)
    return 1;
  size_t n = (s[0] & 0xE0) == 0xC0 ? 2 : (s[0] & 0xF0) == 0xE0 ? 3 : (s[0] & 0xF8) == 0xF0 ? 4 : 0;
  if (n == 0 || (n == 2 && s[0] < 0xC2))
    return 0;
  for (size_t i = 1; i < n; i++)
    if ((s[i] & 0xC0) != 0x80)
      return 0;
  return n;
}

/* A JSON string; bytes that are not UTF-8 become '?' so the document always parses. */
static void
json_str(const char *s)
{
  putchar('"');
  for (const unsigned char *p = (const unsigned char *)s; *p;) {
    if (*p == '"' || *p == '\\') {
      printf("\\%c", *p++);
    } else if (*p < 0x20 || *p == 0x7f) {
      printf("\\u%04x", *p++);
    } else {
      size_t n = utf8_seq_len(p);
      if (n == 0) {
        putchar('?');
        p++;
      } else {
        fwrite(p, 1, n, stdout);
        p += n;
      }
    }
  }
  putchar('"');
}

static void
json_num(double v)
{
  if (isfinite(v))
    printf("%.10g", v);
  else
    printf("null");
}

static void
json_num_or_null(double v)
{
  if (v > 0)
    json_num(v);
  else
    printf("null");
}

static const char *
wrist_name(AwWrist w)
{
  return w == AW_WRIST_LEFT ? "left" : w == AW_WRIST_RIGHT ? "right" : NULL;
}

static void
json_axes(unsigned axes)
{
  static const char *const names[6] = { "ax", "ay", "az", "gx", "gy", "gz" };
  printf("[");
  bool first = true;
  for (int k = 0; k < 6; k++)
    if (axes & (1u << k)) {
      printf("%s\"%s\"", first ? "" : ",", names[k]);
      first = false;
    }
  printf("]");
}

static void
json_findings(const AwQualityReport *q, AwFindingKind kind)
{
  printf("[");
  bool first = true;
  for (size_t i = 0; i < q->n_findings; i++) {
    const AwFinding *f = &q->findings[i];
    if (f->kind != kind)
      continue;
    printf("%s{\"t_start_s\":", first ? "" : ",");
    first = false;
    json_num(f->t_start_s);
    printf(",\"t_end_s\":");
    json_num(f->t_end_s);
    printf(",\"first_sample\":%zu", f->first);
    switch (kind) {
    case AW_FINDING_GAP:
      printf(",\"duration_s\":");
      json_num(f->value);
      printf(",\"missing_samples\":%zu", f->count);
      break;
    case AW_FINDING_JITTER:
      printf(",\"intervals\":%zu,\"worst_deviation_s\":", f->count);
      json_num(f->value);
      break;
    case AW_FINDING_SATURATION:
      printf(",\"samples\":%zu,\"sensor\":\"%s\",\"axes\":", f->count,
             (f->axes & AW_SAT_ACCEL) ? "accel" : "gyro");
      json_axes(f->axes);
      printf(",\"peak\":");
      json_num(f->value);
      printf(",\"peak_unit\":\"%s\"", (f->axes & AW_SAT_ACCEL) ? "m/s2" : "rad/s");
      break;
    case AW_FINDING_MISSING_FRAMES:
      printf(",\"frames\":%zu,\"span_s\":", f->count);
      json_num(f->value);
      break;
    default:
      break;
    }
    printf("}");
  }
  printf("]");
}

static void
json_report(const char *path, AwCaptureKind kind, const char *units, const char *device,
            double nominal_hz, double accel_range, double gyro_range, AwWrist wrist,
            const AwQualityReport *q)
{
  printf("{\"path\":");
  json_str(path);
  printf(",\"kind\":\"%s\",\"columns\":\"%s\",\"samples\":%zu", aw_capture_kind_to_string(kind),
         kind == AW_CAPTURE_IMU ? "t,ax,ay,az,gx,gy,gz" : "t,x,y,z,conf", q->n_samples);
  printf(",\"t_first_s\":");
  json_num(q->t_first_s);
  printf(",\"t_last_s\":");
  json_num(q->t_last_s);
  printf(",\"duration_s\":");
  json_num(q->duration_s);
  printf(",\"rate_hz\":");
  json_num(q->rate_hz);
  printf(",\"interval_s\":{\"median\":");
  json_num(q->dt_median_s);
  printf(",\"min\":");
  json_num(q->dt_min_s);
  printf(",\"max\":");
  json_num(q->dt_max_s);
  printf(",\"spread_robust\":");
  json_num(q->dt_spread_s);
  printf(",\"sd_without_gaps\":");
  json_num(q->dt_sd_s);
  printf("},\"units\":");
  json_str(units);
  printf(",\"metadata\":{\"device\":");
  json_str(device);
  printf(",\"rate_hz\":");
  json_num_or_null(nominal_hz);
  if (kind == AW_CAPTURE_IMU) {
    printf(",\"accel_range_m_s2\":");
    json_num_or_null(accel_range);
    printf(",\"gyro_range_rad_s\":");
    json_num_or_null(gyro_range);
  }
  printf(",\"wrist\":");
  if (wrist_name(wrist) != NULL)
    printf("\"%s\"", wrist_name(wrist));
  else
    printf("null");
  printf("},\"gaps\":{\"count\":%zu,\"lost_s\":", q->n_gaps);
  json_num(q->gap_total_s);
  printf(",\"list\":");
  json_findings(q, AW_FINDING_GAP);
  printf("},\"jitter\":{\"irregular_intervals\":%zu,\"list\":", q->n_jitter_intervals);
  json_findings(q, AW_FINDING_JITTER);
  printf("}");
  if (kind == AW_CAPTURE_IMU) {
    printf(",\"saturation\":{\"samples\":%zu,\"accel_samples\":%zu,\"gyro_samples\":%zu",
           q->n_saturated, q->n_saturated_accel, q->n_saturated_gyro);
    printf(",\"accel_full_scale_m_s2\":");
    json_num_or_null(q->accel_full_scale_m_s2);
    printf(",\"accel_full_scale_source\":\"%s\"",
           q->accel_full_scale_m_s2 <= 0 ? "none"
           : q->accel_full_scale_inferred ? "inferred" : "declared");
    printf(",\"gyro_full_scale_rad_s\":");
    json_num_or_null(q->gyro_full_scale_rad_s);
    printf(",\"gyro_full_scale_source\":\"%s\"",
           q->gyro_full_scale_rad_s <= 0 ? "none"
           : q->gyro_full_scale_inferred ? "inferred" : "declared");
    printf(",\"list\":");
    json_findings(q, AW_FINDING_SATURATION);
    printf("}");
  } else {
    printf(",\"missing_frames\":{\"count\":%zu,\"list\":", q->n_missing_frames);
    json_findings(q, AW_FINDING_MISSING_FRAMES);
    printf("}");
  }
  printf("}");
}

static void
json_error(const char *path, const AwError *err)
{
  char buf[1200];
  printf("{\"path\":");
  json_str(path);
  printf(",\"error\":{\"status\":");
  json_str(aw_status_to_string(err->status));
  printf(",\"line\":%ld,\"column\":%ld,\"reason\":", err->line, err->column);
  json_str(err->message);
  printf(",\"message\":");
  json_str(aw_error_format(err, buf, sizeof buf));
  printf("}}");
}

/* ---- text output ------------------------------------------------------------------------ */

static void
text_findings(const AwQualityReport *q, AwFindingKind kind, const char *label)
{
  size_t total = 0;
  for (size_t i = 0; i < q->n_findings; i++)
    total += q->findings[i].kind == kind;
  printf("  %-12s", label);
  if (total == 0) {
    printf("none\n");
    return;
  }
  switch (kind) {
  case AW_FINDING_GAP:
    printf("%zu gap%s, %.3f s lost\n", q->n_gaps, q->n_gaps == 1 ? "" : "s", q->gap_total_s);
    break;
  case AW_FINDING_JITTER:
    printf("%zu irregular intervals (off the median by more than a quarter) in %zu stretch%s\n",
           q->n_jitter_intervals, total, total == 1 ? "" : "es");
    break;
  case AW_FINDING_SATURATION:
    printf("%zu samples (accelerometer %zu, gyro %zu) in %zu run%s\n", q->n_saturated,
           q->n_saturated_accel, q->n_saturated_gyro, total, total == 1 ? "" : "s");
    break;
  case AW_FINDING_MISSING_FRAMES:
    printf("%zu frames without a detection in %zu run%s\n", q->n_missing_frames, total,
           total == 1 ? "" : "s");
    break;
  default:
    break;
  }
  size_t shown = 0;
  for (size_t i = 0; i < q->n_findings && shown < TEXT_LIST_MAX; i++) {
    const AwFinding *f = &q->findings[i];
    if (f->kind != kind)
      continue;
    shown++;
    printf("  %-12s", "");
    switch (kind) {
    case AW_FINDING_GAP:
      printf("%.4f s to %.4f s: %.1f ms, about %zu sample%s missing\n", f->t_start_s,
             f->t_end_s, f->value * 1e3, f->count, f->count == 1 ? "" : "s");
      break;
    case AW_FINDING_JITTER:
      printf("%.4f s to %.4f s: %zu interval%s, worst %.2f ms off\n", f->t_start_s,
             f->t_end_s, f->count, f->count == 1 ? "" : "s", f->value * 1e3);
      break;
    case AW_FINDING_SATURATION: {
      bool acc = (f->axes & AW_SAT_ACCEL) != 0;
      printf("%.4f s to %.4f s: %zu samples, %s", f->t_start_s, f->t_end_s, f->count,
             acc ? "accel" : "gyro");
      for (int k = 0; k < 3; k++)
        if (f->axes & (1u << ((acc ? 0 : 3) + k)))
          printf(" %c", "xyz"[k]);
      if (acc)
        printf(", peak %.2f m/s^2 (%.2f g)\n", f->value, aw_m_s2_to_g(f->value));
      else
        printf(", peak %.3f rad/s (%.0f deg/s)\n", f->value, aw_rad_to_deg(f->value));
      break;
    }
    case AW_FINDING_MISSING_FRAMES:
      printf("%.4f s to %.4f s: %zu frame%s\n", f->t_start_s, f->t_end_s, f->count,
             f->count == 1 ? "" : "s");
      break;
    default:
      break;
    }
  }
  if (total > shown)
    printf("  %-12s... and %zu more (--json lists all)\n", "", total - shown);
}

static void
text_full_scale(const char *label, double fs, bool inferred, bool accel)
{
  if (fs <= 0) {
    printf("%s not declared, no clipping seen", label);
    return;
  }
  if (accel)
    printf("%s +-%.4g g", label, aw_m_s2_to_g(fs));
  else
    printf("%s +-%.4g deg/s", label, aw_rad_to_deg(fs));
  printf(inferred ? " (inferred from clipping)" : " (declared)");
}

static void
text_report(const char *path, AwCaptureKind kind, const char *units, const char *device,
            double nominal_hz, AwWrist wrist, const AwQualityReport *q)
{
  printf("%s\n", path);
  printf("  %-12s%s (%s)\n", "stream", kind == AW_CAPTURE_IMU ? "IMU" : "depth keypoints",
         kind == AW_CAPTURE_IMU ? "t,ax,ay,az,gx,gy,gz" : "t,x,y,z,conf");
  printf("  %-12s%zu\n", "samples", q->n_samples);
  printf("  %-12s%.4f s, from %.4f s to %.4f s\n", "duration", q->duration_s, q->t_first_s,
         q->t_last_s);
  printf("  %-12s%.6g Hz (median interval %.3f ms; spread %.3f ms robust s.d., %.3f ms s.d."
         " without gaps; intervals %.3f to %.3f ms)\n", "rate", q->rate_hz,
         q->dt_median_s * 1e3, q->dt_spread_s * 1e3, q->dt_sd_s * 1e3, q->dt_min_s * 1e3,
         q->dt_max_s * 1e3);
  printf("  %-12s%s in the file (held in SI inside Arcwise)\n", "units", units);
  if (device[0])
    printf("  %-12s%s\n", "device", device);
  if (nominal_hz > 0)
    printf("  %-12s%.6g Hz declared\n", "nominal", nominal_hz);
  if (wrist_name(wrist) != NULL)
    printf("  %-12s%s\n", "wrist", wrist_name(wrist));
  if (kind == AW_CAPTURE_IMU) {
    printf("  %-12s", "full scale");
    text_full_scale("accel", q->accel_full_scale_m_s2, q->accel_full_scale_inferred, true);
    text_full_scale("; gyro", q->gyro_full_scale_rad_s, q->gyro_full_scale_inferred, false);
    printf("\n");
  }
  text_findings(q, AW_FINDING_GAP, "gaps");
  text_findings(q, AW_FINDING_JITTER, "jitter");
  if (kind == AW_CAPTURE_IMU)
    text_findings(q, AW_FINDING_SATURATION, "saturated");
  else
    text_findings(q, AW_FINDING_MISSING_FRAMES, "missing");
}

/* ---- the command ------------------------------------------------------------------------ */

static AwStatus
inspect_one(const char *path, bool json, AwError *err)
{
  AwCaptureKind kind;
  AwImuStream *imu = NULL;
  AwDepthStream *depth = NULL;
  AwStatus st = aw_capture_read_file(path, &kind, &imu, &depth, err);
  if (st != AW_OK)
    return st;
  AwQualityReport *q = NULL;
  if (kind == AW_CAPTURE_IMU) {
    st = aw_imu_quality(imu, NULL, &q, err);
    if (st == AW_OK && json)
      json_report(path, kind, imu->meta.units, imu->meta.device, imu->meta.nominal_rate_hz,
                  imu->meta.accel_range_m_s2, imu->meta.gyro_range_rad_s, imu->meta.wrist, q);
    else if (st == AW_OK)
      text_report(path, kind, imu->meta.units, imu->meta.device, imu->meta.nominal_rate_hz,
                  imu->meta.wrist, q);
  } else {
    st = aw_depth_quality(depth, NULL, &q, err);
    if (st == AW_OK && json)
      json_report(path, kind, depth->meta.units, depth->meta.device,
                  depth->meta.nominal_rate_hz, 0, 0, depth->meta.wrist, q);
    else if (st == AW_OK)
      text_report(path, kind, depth->meta.units, depth->meta.device,
                  depth->meta.nominal_rate_hz, depth->meta.wrist, q);
  }
  aw_imu_stream_free(imu);
  aw_depth_stream_free(depth);
  aw_quality_report_free(q);
  return st;
}

int
arcwise_cmd_inspect(int argc, char **argv)
{
  bool json = false, options_done = false;
  const char **files = calloc((size_t)argc, sizeof *files);
  int n_files = 0;
  if (files == NULL)
    return arcwise_cli_fail("inspect", "out of memory");
  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    if (!options_done && (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0)) {
      free(files);
      print_usage(stdout);
      return 0;
    }
    if (!options_done && strcmp(a, "--json") == 0) {
      json = true;
    } else if (!options_done && strcmp(a, "--") == 0) {
      options_done = true;
    } else if (!options_done && a[0] == '-' && a[1] != '\0') {
      free(files);
      return arcwise_cli_usage_error("inspect", "unknown option '%s'", a);
    } else {
      files[n_files++] = a;
    }
  }
  if (n_files == 0) {
    free(files);
    return arcwise_cli_usage_error("inspect", "which file? (give one or more capture files)");
  }

  int rc = 0;
  if (json)
    printf("{\"files\":[");
  for (int i = 0; i < n_files; i++) {
    if (i > 0)
      printf(json ? "," : "\n");
    AwError err;
    aw_error_clear(&err);
    if (inspect_one(files[i], json, &err) != AW_OK) {
      char buf[1200];
      aw_error_format(&err, buf, sizeof buf);
      arcwise_cli_fail("inspect", "%s", buf);
      if (json)
        json_error(files[i], &err);
      else
        printf("%s\n  rejected: %s\n", files[i], buf);
      rc = 1;
    }
  }
  if (json)
    printf("]}\n");
  free(files);
  return rc;
}
