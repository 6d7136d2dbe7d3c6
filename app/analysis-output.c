/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "analysis-output.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

const char *
arcwise_event_name(AwEventKind e)
{
  static const char *const names[AW_EVENT_COUNT_] = { "address", "takeaway", "top", "impact",
                                                       "finish" };
  return (int)e >= 0 && e < AW_EVENT_COUNT_ ? names[e] : "?";
}

const char *
arcwise_phase_name(AwPhaseKind p)
{
  static const char *const names[AW_PHASE_COUNT_] = { "address", "backswing", "downswing",
                                                       "follow-through", "finish" };
  return (int)p >= 0 && p < AW_PHASE_COUNT_ ? names[p] : "?";
}

const char *
arcwise_dominance_name(AwDominance d)
{
  switch (d) {
  case AW_DOMINANCE_CAMERA: return "camera";
  case AW_DOMINANCE_IMU: return "imu";
  case AW_DOMINANCE_SHARED: return "shared";
  default: return "unknown";
  }
}

void
arcwise_json_swing_members(ArcwiseJson *j, const AwSwing *s)
{
  arcwise_json_begin_object(j, "span");
  arcwise_json_number(j, "start_s", s->t_start_s);
  arcwise_json_number(j, "end_s", s->t_end_s);
  arcwise_json_integer(j, "first_sample", (long long)s->i_start);
  arcwise_json_integer(j, "end_sample", (long long)s->i_end);
  arcwise_json_end_object(j);
  arcwise_json_bool(j, "practice", s->practice);
  arcwise_json_bool(j, "half", s->half);
  arcwise_json_string(j, "handed", s->handed == AW_HANDED_LEFT ? "left" : "right");
  const AwClubInfo *ci = aw_club_info(s->club);
  arcwise_json_begin_object(j, "club");
  arcwise_json_string(j, "type", ci != NULL ? ci->name : NULL);
  arcwise_json_number(j, "length_m", s->club_length_m);
  arcwise_json_end_object(j);
  arcwise_json_begin_object(j, "events");
  for (int e = 0; e < AW_EVENT_COUNT_; e++)
    arcwise_json_number(j, arcwise_event_name((AwEventKind)e), s->events[e].t_s);
  arcwise_json_end_object(j);
  arcwise_json_begin_object(j, "event_sigma_s");
  for (int e = 0; e < AW_EVENT_COUNT_; e++)
    arcwise_json_number(j, arcwise_event_name((AwEventKind)e), s->events[e].sigma_s);
  arcwise_json_end_object(j);
  arcwise_json_bool(j, "impact_estimated", s->events[AW_EVENT_IMPACT].estimated);
  arcwise_json_begin_array(j, "phases");
  for (int p = 0; p < AW_PHASE_COUNT_; p++) {
    const AwPhase *ph = &s->phases[p];
    arcwise_json_begin_object(j, NULL);
    arcwise_json_string(j, "name", arcwise_phase_name(ph->kind));
    arcwise_json_number(j, "start", ph->start_s);
    arcwise_json_number(j, "end", ph->end_s);
    arcwise_json_string(j, "dominance", arcwise_dominance_name(ph->dominance));
    arcwise_json_number(j, "camera_lost_share", ph->cam_occluded_share);
    arcwise_json_number(j, "camera_info_share", ph->cam_info_share_mean);
    arcwise_json_number(j, "position_sigma_m", ph->pos_sigma_mean_m);
    arcwise_json_number(j, "departure_camera_masked_m", ph->dev_camera_masked_m);
    arcwise_json_number(j, "departure_imu_masked_m", ph->dev_imu_masked_m);
    arcwise_json_end_object(j);
  }
  arcwise_json_end_array(j);
  arcwise_json_begin_object(j, "metrics");
  for (int k = 0; k < AW_METRIC_COUNT_; k++)
    arcwise_json_number(j, aw_metric_info((AwMetricId)k)->key, s->metrics[k]);
  arcwise_json_end_object(j);
  const AwSwingQuality *q = &s->quality;
  arcwise_json_begin_object(j, "quality");
  arcwise_json_number(j, "camera_occluded_share", q->cam_occluded_share);
  arcwise_json_number(j, "camera_rejected_share", q->cam_rejected_share);
  arcwise_json_integer(j, "imu_saturated_samples", (long long)q->imu_saturated_samples);
  arcwise_json_number(j, "sync_confidence", q->sync_confidence);
  arcwise_json_number(j, "position_sigma_mean_m", q->pos_sigma_mean_m);
  arcwise_json_begin_array(j, "notes");
  for (unsigned b = 0; b < AW_NOTE_NOTE_COUNT_; b++)
    if (q->notes & (1u << b))
      arcwise_json_string(j, NULL, aw_quality_note_text(1u << b));
  arcwise_json_end_array(j);
  arcwise_json_end_object(j);
}


void
arcwise_json_analysis(ArcwiseJson *j, const AwAnalysis *a)
{
  arcwise_json_begin_object(j, NULL);
  const AwSwing *s0 = &a->swings[0];
  arcwise_json_begin_object(j, "sync");
  arcwise_json_number(j, "offset_s", s0->quality.sync_offset_s);
  arcwise_json_number(j, "confidence", s0->quality.sync_confidence);
  arcwise_json_string(j, "meaning", "t_depth = t_imu + offset_s");
  arcwise_json_end_object(j);
  arcwise_json_integer(j, "n_swings", (long long)a->n_swings);
  arcwise_json_integer(j, "motions_not_taken_for_swings", (long long)a->n_ignored);
  arcwise_json_swing_members(j, s0);
  arcwise_json_begin_array(j, "swings");
  for (size_t i = 0; i < a->n_swings; i++) {
    arcwise_json_begin_object(j, NULL);
    arcwise_json_integer(j, "index", (long long)i);
    arcwise_json_swing_members(j, &a->swings[i]);
    arcwise_json_end_object(j);
  }
  arcwise_json_end_array(j);
  if (a->n_swings > 1) {
    const AwSwing **ptrs = malloc(a->n_swings * sizeof *ptrs);
    if (ptrs != NULL) {
      for (size_t i = 0; i < a->n_swings; i++)
        ptrs[i] = &a->swings[i];
      AwConsistency c;
      aw_session_consistency(ptrs, a->n_swings, &c);
      arcwise_json_consistency(j, "consistency", &c);
      free(ptrs);
    }
  }
  arcwise_json_end_object(j);
}

static void
print_value(FILE *out, const AwMetricInfo *mi, double v)
{
  if (!isfinite(v)) {
    fprintf(out, "%12s", "n/a");
    return;
  }
  if (strcmp(mi->unit, "m/s") == 0)
    fprintf(out, "%8.2f m/s (%5.1f km/h)", v, v * 3.6);
  else if (strcmp(mi->unit, "rad/s") == 0)
    fprintf(out, "%8.2f rad/s (%4.0f deg/s)", v, v * 57.29577951308232);
  else if (strcmp(mi->unit, "m") == 0)
    fprintf(out, "%8.3f m", v);
  else if (strcmp(mi->unit, "s") == 0)
    fprintf(out, "%8.3f s", v);
  else if (strcmp(mi->unit, "deg") == 0)
    fprintf(out, "%8.1f deg", v);
  else
    fprintf(out, "%8.2f", v);
}

void
arcwise_print_analysis(FILE *out, const AwAnalysis *a)
{
  for (size_t i = 0; i < a->n_swings; i++) {
    const AwSwing *s = &a->swings[i];
    const AwClubInfo *ci = aw_club_info(s->club);
    fprintf(out, "Swing %zu of %zu  (%.2f s to %.2f s%s%s; %s-handed; %s, %.3f m)\n", i + 1,
            a->n_swings, s->t_start_s, s->t_end_s, s->practice ? ", practice swing" : "",
            s->half ? ", half swing" : "", s->handed == AW_HANDED_LEFT ? "left" : "right",
            ci != NULL ? ci->label : "?", s->club_length_m);
    fprintf(out, "  Events (depth clock)\n");
    for (int e = 0; e < AW_EVENT_COUNT_; e++)
      fprintf(out, "    %-15s %9.3f s  +- %.3f s%s\n", arcwise_event_name((AwEventKind)e),
              s->events[e].t_s, s->events[e].sigma_s,
              s->events[e].estimated ? "  (estimated from the hand path)" : "");
    fprintf(out, "  Phases            start       end  carried by  camera lost\n");
    for (int p = 0; p < AW_PHASE_COUNT_; p++) {
      const AwPhase *ph = &s->phases[p];
      fprintf(out, "    %-15s %7.3f s %7.3f s  %-10s", arcwise_phase_name(ph->kind), ph->start_s,
              ph->end_s, arcwise_dominance_name(ph->dominance));
      if (isfinite(ph->cam_occluded_share))
        fprintf(out, "  %3.0f %%\n", 100 * ph->cam_occluded_share);
      else
        fprintf(out, "  n/a\n");
    }
    fprintf(out, "  Metrics\n");
    for (int k = 0; k < AW_METRIC_COUNT_; k++) {
      const AwMetricInfo *mi = aw_metric_info((AwMetricId)k);
      fprintf(out, "    %-46s ", mi->label);
      print_value(out, mi, s->metrics[k]);
      if (k == AW_METRIC_TEMPO_RATIO)
        fprintf(out, "   (tour reference 3:1, Novosel & Garrity 2004)");
      fputc('\n', out);
    }
    const AwSwingQuality *q = &s->quality;
    fprintf(out, "  Data quality\n");
    if (isfinite(q->cam_occluded_share))
      fprintf(out, "    camera frames without the hands %3.0f %%, set aside %3.0f %%\n",
              100 * q->cam_occluded_share, 100 * q->cam_rejected_share);
    fprintf(out, "    watch samples at full scale     %zu\n", q->imu_saturated_samples);
    if (isfinite(q->sync_confidence))
      fprintf(out, "    clock match confidence          %.2f (offset %.4f s)\n",
              q->sync_confidence, q->sync_offset_s);
    if (isfinite(q->pos_sigma_mean_m))
      fprintf(out, "    mean position uncertainty       %.1f mm\n", 1e3 * q->pos_sigma_mean_m);
    for (unsigned b = 0; b < AW_NOTE_NOTE_COUNT_; b++)
      if (q->notes & (1u << b))
        fprintf(out, "    - %s\n", aw_quality_note_text(1u << b));
    fputc('\n', out);
  }
  fprintf(out, "These numbers are estimates from consumer sensors, not a medical or equipment\n"
               "assessment. Keep clear space around the player, camera and screen.\n");
}

#include "cli.h"

#include <errno.h>

int
arcwise_parse_analysis_option(const char *cmd, int argc, char **argv, int *i,
                              AwAnalysisSettings *set, bool *handed_given)
{
  const char *a = argv[*i];
  if (strcmp(a, "--club") == 0 || strcmp(a, "--club-length") == 0 ||
      strcmp(a, "--handed") == 0) {
    if (*i + 1 >= argc) {
      arcwise_cli_usage_error(cmd, "%s needs a value", a);
      return -1;
    }
    const char *v = argv[++*i];
    if (strcmp(a, "--club") == 0) {
      if (!aw_club_from_name(v, &set->club)) {
        arcwise_cli_usage_error(cmd, "unknown club '%s' (driver, 3w, 5w, hybrid, 3i..9i, pw, "
                                     "gw, sw, lw)", v);
        return -1;
      }
    } else if (strcmp(a, "--club-length") == 0) {
      char *end;
      errno = 0;
      double m = strtod(v, &end);
      if (end == v || *end != 0 || errno != 0 || !isfinite(m)) {
        arcwise_cli_usage_error(cmd, "--club-length '%s' is not a number of metres", v);
        return -1;
      }
      if (m < AW_CLUB_LENGTH_MIN_M || m > AW_CLUB_LENGTH_MAX_M) {
        arcwise_cli_usage_error(cmd, "--club-length %.3f m is outside the Rules of Golf limits "
                                     "(0.457 to 1.219 m, 18 to 48 in)", m);
        return -1;
      }
      set->club_length_m = m;
    } else {
      if (strcmp(v, "right") == 0)
        set->handed = AW_HANDED_RIGHT;
      else if (strcmp(v, "left") == 0)
        set->handed = AW_HANDED_LEFT;
      else {
        arcwise_cli_usage_error(cmd, "--handed must be right or left, not '%s'", v);
        return -1;
      }
      *handed_given = true;
    }
    return 1;
  }
  return 0;
}

void
arcwise_capture_clear(ArcwiseCapture *c)
{
  aw_analysis_free(c->analysis);
  aw_fused_path_free(c->fused);
  aw_imu_stream_free(c->imu);
  aw_depth_stream_free(c->depth);
  memset(c, 0, sizeof *c);
}

bool
arcwise_capture_analyse(const char *cmd, const char *imu_path, const char *depth_path,
                        const AwAnalysisSettings *set_in, bool handed_given, ArcwiseCapture *out)
{
  memset(out, 0, sizeof *out);
  AwError err;
  char buf[1200];
  aw_error_clear(&err);
  if (aw_imu_read_file(imu_path, &out->imu, &err) != AW_OK) {
    arcwise_cli_fail(cmd, "%s", aw_error_format(&err, buf, sizeof buf));
    return false;
  }
  if (aw_depth_read_file(depth_path, &out->depth, &err) != AW_OK) {
    arcwise_cli_fail(cmd, "%s", aw_error_format(&err, buf, sizeof buf));
    arcwise_capture_clear(out);
    return false;
  }
  AwAnalysisSettings set = *set_in;
  /* The watch sits on the lead wrist: a left lead wrist means a right-handed player. */
  if (!handed_given && out->imu->meta.wrist != AW_WRIST_UNKNOWN)
    set.handed = out->imu->meta.wrist == AW_WRIST_LEFT ? AW_HANDED_RIGHT : AW_HANDED_LEFT;
  AwStatus st = aw_analyze_capture(out->imu, out->depth, NULL, &set, &out->analysis, &out->fused,
                                   &err);
  if (st != AW_OK) {
    if (err.file[0] == 0)
      snprintf(err.file, sizeof err.file, "%s", depth_path);
    arcwise_cli_fail(cmd, "%s", aw_error_format(&err, buf, sizeof buf));
    arcwise_capture_clear(out);
    return false;
  }
  aw_trajectory_from_fused(out->fused, out->imu->meta.accel_range_m_s2,
                           out->imu->meta.gyro_range_rad_s, &out->traj);
  return true;
}
