/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "export-numbers.h"

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

static void
js_str(FILE *fp, const char *s)
{
  if (s == NULL) {
    fputs("null", fp);
    return;
  }
  fputc('"', fp);
  for (const unsigned char *p = (const unsigned char *)s; *p; p++) {
    if (*p == '"' || *p == '\\')
      fprintf(fp, "\\%c", *p);
    else if (*p == '\n')
      fputs("\\n", fp);
    else if (*p == '\t')
      fputs("\\t", fp);
    else if (*p < 0x20)
      fprintf(fp, "\\u%04x", *p);
    else
      fputc(*p, fp);
  }
  fputc('"', fp);
}

static void
js_num(FILE *fp, double v)
{
  if (isfinite(v))
    fprintf(fp, "%.17g", v);
  else
    fputs("null", fp);
}

static void
js_vec_array(FILE *fp, const char *key, const double (*v)[3], size_t i0, size_t i1, bool *first)
{
  if (v == NULL)
    return;
  fprintf(fp, "%s\n        ", *first ? "" : ",");
  *first = false;
  js_str(fp, key);
  fputs(": [", fp);
  for (size_t i = i0; i < i1; i++) {
    fprintf(fp, "%s[", i > i0 ? ", " : "");
    for (int a = 0; a < 3; a++) {
      if (a)
        fputs(", ", fp);
      js_num(fp, v[i][a]);
    }
    fputc(']', fp);
  }
  fputc(']', fp);
}

static void
js_path(FILE *fp, const AwFusedPath *p, size_t i0, size_t i1)
{
  if (i1 > p->n)
    i1 = p->n;
  if (i0 >= i1) {
    fputs("null", fp);
    return;
  }
  fputs("{\n        \"frame\": \"cam\",\n        \"clock\": \"depth camera\",\n        \"t_s\": [", fp);
  for (size_t i = i0; i < i1; i++) {
    if (i > i0)
      fputs(", ", fp);
    js_num(fp, p->t_s[i]);
  }
  fputc(']', fp);
  bool first = false;
  js_vec_array(fp, "pos_cam_m", (const double (*)[3])p->pos_cam_m, i0, i1, &first);
  js_vec_array(fp, "vel_cam_m_s", (const double (*)[3])p->vel_cam_m_s, i0, i1, &first);
  js_vec_array(fp, "pos_sigma_cam_m", (const double (*)[3])p->pos_sigma_cam_m, i0, i1, &first);
  if (p->cam_info_share != NULL) {
    fputs(",\n        \"cam_info_share\": [", fp);
    for (size_t i = i0; i < i1; i++) {
      if (i > i0)
        fputs(", ", fp);
      js_num(fp, p->cam_info_share[i]);
    }
    fputc(']', fp);
  }
  if (p->flags != NULL) {
    fputs(",\n        \"flags\": [", fp);
    for (size_t i = i0; i < i1; i++)
      fprintf(fp, "%s%u", i > i0 ? ", " : "", (unsigned)p->flags[i]);
    fputc(']', fp);
  }
  fputs("\n      }", fp);
}

static void
js_swing(FILE *fp, const ArcwiseNumbersSwing *r, bool include_path)
{
  const AwSwing *s = r->swing;
  fputs("    {\n      \"swing_id\": ", fp);
  if (r->swing_id > 0)
    fprintf(fp, "%lld", r->swing_id);
  else
    fputs("null", fp);
  fputs(",\n      \"player\": ", fp);
  js_str(fp, r->player);
  fputs(",\n      \"session_date\": ", fp);
  js_str(fp, r->session_date);
  fputs(",\n      \"session_place\": ", fp);
  js_str(fp, r->session_place);
  fputs(",\n      \"club\": ", fp);
  js_str(fp, r->club);
  fprintf(fp, ",\n      \"swing_in_recording\": %u,\n      \"rating\": %d,\n      \"reference\": %s",
          r->index_in_recording, r->rating, r->is_reference ? "true" : "false");
  fputs(",\n      \"tags\": ", fp);
  js_str(fp, r->tags);
  fputs(",\n      \"notes\": ", fp);
  js_str(fp, r->notes);
  fputs(",\n      \"analysis\": ", fp);
  if (s == NULL) {
    fputs("null", fp);
  } else {
    fprintf(fp, "{\n        \"practice\": %s, \"half\": %s, \"handedness\": \"%s\",\n",
            s->practice ? "true" : "false", s->half ? "true" : "false",
            s->handed == AW_HANDED_LEFT ? "left" : "right");
    fputs("        \"club_length_m\": ", fp);
    js_num(fp, s->club_length_m);
    fputs(", \"t_start_s\": ", fp);
    js_num(fp, s->t_start_s);
    fputs(", \"t_end_s\": ", fp);
    js_num(fp, s->t_end_s);
    fputs(",\n        \"swing_frame\": {\"origin_cam_m\": [", fp);
    for (int a = 0; a < 3; a++) {
      if (a)
        fputs(", ", fp);
      js_num(fp, s->origin_f_m[a]);
    }
    fputs("], \"R_sw_cam\": [", fp);
    for (int i = 0; i < 3; i++) {
      fprintf(fp, "%s[", i ? ", " : "");
      for (int j = 0; j < 3; j++) {
        if (j)
          fputs(", ", fp);
        js_num(fp, s->R_sw_f[i][j]);
      }
      fputc(']', fp);
    }
    fputs("]},\n        \"events\": {", fp);
    for (int e = 0; e < AW_EVENT_COUNT_; e++) {
      fprintf(fp, "%s\n          \"%s\": {\"t_s\": ", e ? "," : "", event_keys[e]);
      js_num(fp, s->events[e].t_s);
      fputs(", \"sigma_s\": ", fp);
      js_num(fp, s->events[e].sigma_s);
      fprintf(fp, ", \"estimated\": %s}", s->events[e].estimated ? "true" : "false");
    }
    fputs("\n        },\n        \"phases\": {", fp);
    for (int p = 0; p < AW_PHASE_COUNT_; p++) {
      const AwPhase *ph = &s->phases[p];
      fprintf(fp, "%s\n          \"%s\": {\"start_s\": ", p ? "," : "", phase_keys[p]);
      js_num(fp, ph->start_s);
      fputs(", \"end_s\": ", fp);
      js_num(fp, ph->end_s);
      fputs(", \"cam_occluded_share\": ", fp);
      js_num(fp, ph->cam_occluded_share);
      fputs(", \"cam_info_share_mean\": ", fp);
      js_num(fp, ph->cam_info_share_mean);
      fputs(", \"pos_sigma_mean_m\": ", fp);
      js_num(fp, ph->pos_sigma_mean_m);
      fputs(", \"dev_camera_masked_m\": ", fp);
      js_num(fp, ph->dev_camera_masked_m);
      fputs(", \"dev_imu_masked_m\": ", fp);
      js_num(fp, ph->dev_imu_masked_m);
      unsigned d = (unsigned)ph->dominance < 4 ? (unsigned)ph->dominance : 0;
      fprintf(fp, ", \"dominance\": \"%s\"}", dominance_names[d]);
    }
    fputs("\n        },\n        \"metrics\": {", fp);
    for (int m = 0; m < AW_METRIC_COUNT_; m++) {
      fprintf(fp, "%s\n          \"%s\": ", m ? "," : "", aw_metric_info((AwMetricId)m)->key);
      js_num(fp, s->metrics[m]);
    }
    const AwSwingQuality *q = &s->quality;
    fputs("\n        },\n        \"quality\": {\"cam_occluded_share\": ", fp);
    js_num(fp, q->cam_occluded_share);
    fputs(", \"cam_rejected_share\": ", fp);
    js_num(fp, q->cam_rejected_share);
    fprintf(fp, ", \"imu_saturated_samples\": %zu, \"sync_offset_s\": ", q->imu_saturated_samples);
    js_num(fp, q->sync_offset_s);
    fputs(", \"sync_confidence\": ", fp);
    js_num(fp, q->sync_confidence);
    fputs(", \"pos_sigma_mean_m\": ", fp);
    js_num(fp, q->pos_sigma_mean_m);
    fputs(", \"notes\": [", fp);
    bool first = true;
    for (unsigned i = 0; i < AW_NOTE_NOTE_COUNT_; i++)
      if (q->notes & (1u << i)) {
        fputs(first ? "" : ", ", fp);
        js_str(fp, aw_quality_note_text(1u << i));
        first = false;
      }
    fputs("]}\n      }", fp);
  }
  if (include_path) {
    fputs(",\n      \"path\": ", fp);
    if (r->path == NULL)
      fputs("null", fp);
    else if (s != NULL)
      js_path(fp, r->path, s->i_start, s->i_end);
    else
      js_path(fp, r->path, 0, r->path->n);
  }
  fputs("\n    }", fp);
}

bool
arcwise_numbers_write_json(FILE *fp, ArcwiseNumbersScope scope, const char *title,
                           const ArcwiseNumbersSwing *rows, size_t n, bool include_path)
{
  static const char *const scopes[] = { "swing", "session", "player" };
  fputs("{\n  \"format\": \"arcwise-numbers\",\n  \"version\": 1,\n  \"program\": ", fp);
  js_str(fp, "arcwise " ARCWISE_VERSION);
  fprintf(fp, ",\n  \"scope\": \"%s\",\n  \"title\": ", scopes[(unsigned)scope < 3 ? scope : 0]);
  js_str(fp, title);
  fputs(",\n  \"units\": \"SI (s, m, m/s, rad/s; angles in deg as named)\",\n", fp);
  fputs("  \"caution\": \"Estimates from consumer sensors, not a medical or equipment "
        "assessment.\",\n  \"metric_units\": {", fp);
  for (int m = 0; m < AW_METRIC_COUNT_; m++) {
    const AwMetricInfo *mi = aw_metric_info((AwMetricId)m);
    fprintf(fp, "%s\n    \"%s\": {\"unit\": ", m ? "," : "", mi->key);
    js_str(fp, mi->unit);
    fputs(", \"label\": ", fp);
    js_str(fp, mi->label);
    fputc('}', fp);
  }
  fputs("\n  },\n  \"swings\": [\n", fp);
  const AwSwing **sw = calloc(n ? n : 1, sizeof *sw);
  size_t n_an = 0;
  for (size_t i = 0; i < n; i++) {
    js_swing(fp, &rows[i], include_path);
    fputs(i + 1 < n ? ",\n" : "\n", fp);
    if (rows[i].swing != NULL && sw != NULL)
      sw[n_an++] = rows[i].swing;
  }
  fputs("  ],\n  \"consistency\": ", fp);
  if (n_an >= 1 && sw != NULL) {
    AwConsistency c;
    aw_session_consistency(sw, n_an, &c);
    fputs("{", fp);
    for (int m = 0; m < AW_METRIC_COUNT_; m++) {
      fprintf(fp, "%s\n    \"%s\": {\"n\": %zu, \"mean\": ", m ? "," : "",
              aw_metric_info((AwMetricId)m)->key, c.n[m]);
      js_num(fp, c.mean[m]);
      fputs(", \"sd\": ", fp);
      js_num(fp, c.sd[m]);
      fputs(", \"min\": ", fp);
      js_num(fp, c.min[m]);
      fputs(", \"max\": ", fp);
      js_num(fp, c.max[m]);
      fputc('}', fp);
    }
    fputs("\n  }\n}\n", fp);
  } else {
    fputs("null\n}\n", fp);
  }
  free(sw);
  return !ferror(fp);
}
