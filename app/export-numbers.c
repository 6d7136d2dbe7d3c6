/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "export-numbers.h"

#include "analysis-output.h" /* arcwise_json_consistency, defined here for the tests' sake */
#include "json-writer.h"

#include "arcwise-config.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

static const char *const event_keys[AW_EVENT_COUNT_] = {
  "address", "takeaway", "top", "impact", "finish",
};
static const char *const phase_keys[AW_PHASE_COUNT_] = {
  "address", "backswing", "downswing", "follow_through", "finish",
};
static const char *const dominance_names[] = { "unknown", "camera", "imu", "shared" };

/* ---- CSV ---- */

static void
csv_str(FILE *fp, const char *s)
{
  if (s == NULL)
    return;
  if (strpbrk(s, ",\"\r\n") == NULL) {
    fputs(s, fp);
    return;
  }
  fputc('"', fp);
  for (const char *p = s; *p; p++) {
    if (*p == '"')
      fputc('"', fp);
    fputc(*p, fp);
  }
  fputc('"', fp);
}

static void
csv_num(FILE *fp, double v)
{
  if (isfinite(v))
    fprintf(fp, "%.17g", v);
}

static void
quality_text(char *buf, size_t n, unsigned notes)
{
  buf[0] = '\0';
  size_t used = 0;
  for (unsigned i = 0; i < AW_NOTE_NOTE_COUNT_; i++) {
    if (!(notes & (1u << i)))
      continue;
    const char *t = aw_quality_note_text(1u << i);
    if (t != NULL && used < n)
      used += (size_t)snprintf(buf + used, n - used, "%s%s", used ? " | " : "", t);
  }
}

bool
arcwise_numbers_write_csv(FILE *fp, const ArcwiseNumbersSwing *rows, size_t n)
{
  fputs("swing_id,player,session_date,session_place,club,swing_in_recording,practice,half,"
        "handedness,club_length_m,t_start_s,t_end_s", fp);
  for (int e = 0; e < AW_EVENT_COUNT_; e++)
    fprintf(fp, ",t_%s_s", event_keys[e]);
  fputs(",impact_estimated", fp);
  for (int m = 0; m < AW_METRIC_COUNT_; m++)
    fprintf(fp, ",%s", aw_metric_info((AwMetricId)m)->key);
  for (int p = 0; p < AW_PHASE_COUNT_; p++)
    fprintf(fp, ",%s_cam_share", phase_keys[p]);
  fputs(",cam_occluded_share,cam_rejected_share,imu_saturated_samples,sync_offset_s,"
        "sync_confidence,pos_sigma_mean_m,quality_notes,rating,reference,tags,notes\n", fp);
  char buf[2048];
  for (size_t i = 0; i < n; i++) {
    const ArcwiseNumbersSwing *r = &rows[i];
    const AwSwing *s = r->swing;
    if (r->swing_id > 0)
      fprintf(fp, "%lld", r->swing_id);
    fputc(',', fp);
    csv_str(fp, r->player);
    fputc(',', fp);
    csv_str(fp, r->session_date);
    fputc(',', fp);
    csv_str(fp, r->session_place);
    fputc(',', fp);
    csv_str(fp, r->club);
    fprintf(fp, ",%u,", r->index_in_recording);
    if (s != NULL) {
      fprintf(fp, "%d,%d,%s,", s->practice ? 1 : 0, s->half ? 1 : 0,
              s->handed == AW_HANDED_LEFT ? "left" : "right");
      csv_num(fp, s->club_length_m);
      fputc(',', fp);
      csv_num(fp, s->t_start_s);
      fputc(',', fp);
      csv_num(fp, s->t_end_s);
      for (int e = 0; e < AW_EVENT_COUNT_; e++) {
        fputc(',', fp);
        csv_num(fp, s->events[e].t_s);
      }
      fprintf(fp, ",%d", s->events[AW_EVENT_IMPACT].estimated ? 1 : 0);
      for (int m = 0; m < AW_METRIC_COUNT_; m++) {
        fputc(',', fp);
        csv_num(fp, s->metrics[m]);
      }
      for (int p = 0; p < AW_PHASE_COUNT_; p++) {
        fputc(',', fp);
        csv_num(fp, s->phases[p].cam_info_share_mean);
      }
      fputc(',', fp);
      csv_num(fp, s->quality.cam_occluded_share);
      fputc(',', fp);
      csv_num(fp, s->quality.cam_rejected_share);
      fprintf(fp, ",%zu,", s->quality.imu_saturated_samples);
      csv_num(fp, s->quality.sync_offset_s);
      fputc(',', fp);
      csv_num(fp, s->quality.sync_confidence);
      fputc(',', fp);
      csv_num(fp, s->quality.pos_sigma_mean_m);
      fputc(',', fp);
      quality_text(buf, sizeof buf, s->quality.notes);
      csv_str(fp, buf);
    } else {
      /* Not analysed: every analysis column empty. */
      for (int k = 0; k < 4 + 2 + AW_EVENT_COUNT_ + 1 + AW_METRIC_COUNT_ + AW_PHASE_COUNT_ + 7 - 1; k++)
        fputc(',', fp);
    }
    fprintf(fp, ",%d,%d,", r->rating, r->is_reference ? 1 : 0);
    csv_str(fp, r->tags);
    fputc(',', fp);
    csv_str(fp, r->notes);
    fputc('\n', fp);
  }
  return !ferror(fp);
}

/* ---- JSON ---- */

/* Through the program's one JSON writer (json-writer.h): escaping, shortest round-trip numbers
 * and NaN as null are done once there. */

static void
js_vec3(ArcwiseJson *j, const char *key, const double v[3])
{
  arcwise_json_begin_array(j, key);
  for (int a = 0; a < 3; a++)
    arcwise_json_number(j, NULL, v[a]);
  arcwise_json_end_array(j);
}

static void
js_vec_array(ArcwiseJson *j, const char *key, const double (*v)[3], size_t i0, size_t i1)
{
  if (v == NULL)
    return;
  arcwise_json_begin_array(j, key);
  for (size_t i = i0; i < i1; i++)
    js_vec3(j, NULL, v[i]);
  arcwise_json_end_array(j);
}

static void
js_path(ArcwiseJson *j, const AwFusedPath *p, size_t i0, size_t i1)
{
  if (i1 > p->n)
    i1 = p->n;
  if (i0 >= i1) {
    arcwise_json_null(j, "path");
    return;
  }
  arcwise_json_begin_object(j, "path");
  arcwise_json_string(j, "frame", "cam");
  arcwise_json_string(j, "clock", "depth camera");
  arcwise_json_begin_array(j, "t_s");
  for (size_t i = i0; i < i1; i++)
    arcwise_json_number(j, NULL, p->t_s[i]);
  arcwise_json_end_array(j);
  js_vec_array(j, "pos_cam_m", (const double (*)[3])p->pos_cam_m, i0, i1);
  js_vec_array(j, "vel_cam_m_s", (const double (*)[3])p->vel_cam_m_s, i0, i1);
  js_vec_array(j, "pos_sigma_cam_m", (const double (*)[3])p->pos_sigma_cam_m, i0, i1);
  if (p->cam_info_share != NULL) {
    arcwise_json_begin_array(j, "cam_info_share");
    for (size_t i = i0; i < i1; i++)
      arcwise_json_number(j, NULL, p->cam_info_share[i]);
    arcwise_json_end_array(j);
  }
  if (p->flags != NULL) {
    arcwise_json_begin_array(j, "flags");
    for (size_t i = i0; i < i1; i++)
      arcwise_json_integer(j, NULL, (long long)p->flags[i]);
    arcwise_json_end_array(j);
  }
  arcwise_json_end_object(j);
}

static void
js_analysis(ArcwiseJson *j, const AwSwing *s)
{
  arcwise_json_begin_object(j, "analysis");
  arcwise_json_bool(j, "practice", s->practice);
  arcwise_json_bool(j, "half", s->half);
  arcwise_json_string(j, "handedness", s->handed == AW_HANDED_LEFT ? "left" : "right");
  arcwise_json_number(j, "club_length_m", s->club_length_m);
  arcwise_json_number(j, "t_start_s", s->t_start_s);
  arcwise_json_number(j, "t_end_s", s->t_end_s);
  arcwise_json_begin_object(j, "swing_frame");
  js_vec3(j, "origin_cam_m", s->origin_f_m);
  arcwise_json_begin_array(j, "R_sw_cam");
  for (int i = 0; i < 3; i++)
    js_vec3(j, NULL, s->R_sw_f[i]);
  arcwise_json_end_array(j);
  arcwise_json_end_object(j);
  arcwise_json_begin_object(j, "events");
  for (int e = 0; e < AW_EVENT_COUNT_; e++) {
    arcwise_json_begin_object(j, event_keys[e]);
    arcwise_json_number(j, "t_s", s->events[e].t_s);
    arcwise_json_number(j, "sigma_s", s->events[e].sigma_s);
    arcwise_json_bool(j, "estimated", s->events[e].estimated);
    arcwise_json_end_object(j);
  }
  arcwise_json_end_object(j);
  arcwise_json_begin_object(j, "phases");
  for (int p = 0; p < AW_PHASE_COUNT_; p++) {
    const AwPhase *ph = &s->phases[p];
    arcwise_json_begin_object(j, phase_keys[p]);
    arcwise_json_number(j, "start_s", ph->start_s);
    arcwise_json_number(j, "end_s", ph->end_s);
    arcwise_json_number(j, "cam_occluded_share", ph->cam_occluded_share);
    arcwise_json_number(j, "cam_info_share_mean", ph->cam_info_share_mean);
    arcwise_json_number(j, "pos_sigma_mean_m", ph->pos_sigma_mean_m);
    arcwise_json_number(j, "dev_camera_masked_m", ph->dev_camera_masked_m);
    arcwise_json_number(j, "dev_imu_masked_m", ph->dev_imu_masked_m);
    unsigned d = (unsigned)ph->dominance < 4 ? (unsigned)ph->dominance : 0;
    arcwise_json_string(j, "dominance", dominance_names[d]);
    arcwise_json_end_object(j);
  }
  arcwise_json_end_object(j);
  arcwise_json_begin_object(j, "metrics");
  for (int m = 0; m < AW_METRIC_COUNT_; m++)
    arcwise_json_number(j, aw_metric_info((AwMetricId)m)->key, s->metrics[m]);
  arcwise_json_end_object(j);
  const AwSwingQuality *q = &s->quality;
  arcwise_json_begin_object(j, "quality");
  arcwise_json_number(j, "cam_occluded_share", q->cam_occluded_share);
  arcwise_json_number(j, "cam_rejected_share", q->cam_rejected_share);
  arcwise_json_integer(j, "imu_saturated_samples", (long long)q->imu_saturated_samples);
  arcwise_json_number(j, "sync_offset_s", q->sync_offset_s);
  arcwise_json_number(j, "sync_confidence", q->sync_confidence);
  arcwise_json_number(j, "pos_sigma_mean_m", q->pos_sigma_mean_m);
  arcwise_json_begin_array(j, "notes");
  for (unsigned i = 0; i < AW_NOTE_NOTE_COUNT_; i++)
    if (q->notes & (1u << i))
      arcwise_json_string(j, NULL, aw_quality_note_text(1u << i));
  arcwise_json_end_array(j);
  arcwise_json_end_object(j);
  arcwise_json_end_object(j);
}

static void
js_swing(ArcwiseJson *j, const ArcwiseNumbersSwing *r, bool include_path)
{
  const AwSwing *s = r->swing;
  arcwise_json_begin_object(j, NULL);
  if (r->swing_id > 0)
    arcwise_json_integer(j, "swing_id", r->swing_id);
  else
    arcwise_json_null(j, "swing_id");
  arcwise_json_string(j, "player", r->player);
  arcwise_json_string(j, "session_date", r->session_date);
  arcwise_json_string(j, "session_place", r->session_place);
  arcwise_json_string(j, "club", r->club);
  arcwise_json_integer(j, "swing_in_recording", r->index_in_recording);
  arcwise_json_integer(j, "rating", r->rating);
  arcwise_json_bool(j, "reference", r->is_reference);
  arcwise_json_string(j, "tags", r->tags);
  arcwise_json_string(j, "notes", r->notes);
  if (s == NULL)
    arcwise_json_null(j, "analysis");
  else
    js_analysis(j, s);
  if (include_path) {
    if (r->path == NULL)
      arcwise_json_null(j, "path");
    else if (s != NULL)
      js_path(j, r->path, s->i_start, s->i_end);
    else
      js_path(j, r->path, 0, r->path->n);
  }
  arcwise_json_end_object(j);
}

/* Declared in analysis-output.h; it lives here, in the export library, so that the exporters
 * and their tests have it without the command-line glue of analysis-output.c. */
void
arcwise_json_consistency(ArcwiseJson *j, const char *key, const AwConsistency *c)
{
  arcwise_json_begin_object(j, key);
  for (int k = 0; k < AW_METRIC_COUNT_; k++) {
    arcwise_json_begin_object(j, aw_metric_info((AwMetricId)k)->key);
    arcwise_json_integer(j, "n", (long long)c->n[k]);
    arcwise_json_number(j, "mean", c->mean[k]);
    arcwise_json_number(j, "sd", c->sd[k]);
    arcwise_json_number(j, "min", c->min[k]);
    arcwise_json_number(j, "max", c->max[k]);
    arcwise_json_end_object(j);
  }
  arcwise_json_end_object(j);
}

bool
arcwise_numbers_write_json(FILE *fp, ArcwiseNumbersScope scope, const char *title,
                           const ArcwiseNumbersSwing *rows, size_t n, bool include_path)
{
  static const char *const scopes[] = { "swing", "session", "player" };
  ArcwiseJson j;
  /* Indented for reading; compact with paths, whose thousands of numbers would otherwise take
   * a line each. */
  arcwise_json_init(&j, fp, !include_path);
  arcwise_json_begin_object(&j, NULL);
  arcwise_json_string(&j, "format", "arcwise-numbers");
  arcwise_json_integer(&j, "version", 1);
  arcwise_json_string(&j, "program", "arcwise " ARCWISE_VERSION);
  arcwise_json_string(&j, "scope", scopes[(unsigned)scope < 3 ? scope : 0]);
  arcwise_json_string(&j, "title", title);
  arcwise_json_string(&j, "units", "SI (s, m, m/s, rad/s; angles in deg as named)");
  arcwise_json_string(&j, "caution", "Estimates from consumer sensors, not a medical or "
                                     "equipment assessment.");
  arcwise_json_begin_object(&j, "metric_units");
  for (int m = 0; m < AW_METRIC_COUNT_; m++) {
    const AwMetricInfo *mi = aw_metric_info((AwMetricId)m);
    arcwise_json_begin_object(&j, mi->key);
    arcwise_json_string(&j, "unit", mi->unit);
    arcwise_json_string(&j, "label", mi->label);
    arcwise_json_end_object(&j);
  }
  arcwise_json_end_object(&j);
  arcwise_json_begin_array(&j, "swings");
  const AwSwing **sw = calloc(n ? n : 1, sizeof *sw);
  size_t n_an = 0;
  for (size_t i = 0; i < n; i++) {
    js_swing(&j, &rows[i], include_path);
    if (rows[i].swing != NULL && sw != NULL)
      sw[n_an++] = rows[i].swing;
  }
  arcwise_json_end_array(&j);
  if (n_an >= 1 && sw != NULL) {
    AwConsistency c;
    aw_session_consistency(sw, n_an, &c);
    arcwise_json_consistency(&j, "consistency", &c);
  } else {
    arcwise_json_null(&j, "consistency");
  }
  free(sw);
  arcwise_json_end_object(&j);
  return arcwise_json_finish(&j) && sw != NULL;
}
