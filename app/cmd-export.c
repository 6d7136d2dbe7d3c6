/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise export WHAT ...`: numbers (CSV, JSON), the session report (PDF), C3D of a fused
 * path, clips (MP4) and stills (PNG) of swings in the library. Every output goes through a
 * temporary file and is never replaced without --force. */
#include "arcwise-config.h"
#include "cli.h"
#include "export-clip.h"
#include "export-file.h"
#include "export-numbers.h"
#include "export-report.h"
#include "export-scene.h"
#include "store.h"

#include "arcwise/c3d.h"
#include "arcwise/units.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <stddef.h>
#include <string.h>

#define CMD "export"

static void
usage(FILE *out)
{
  fprintf(out,
    "Usage: arcwise export WHAT [OPTION...] -o OUT [--force] [--library FILE]\n"
    "\n"
    "Shares swings from the library (default $ARCWISE_LIBRARY, else the user data folder).\n"
    "An existing OUT is never replaced without --force.\n"
    "\n"
    "  numbers (--swing ID | --session ID | --player NAME) [--format csv|json] [--no-path]\n"
    "          one CSV row per swing, or JSON with the full analysis and the fused path\n"
    "  report  --session ID [--units metric|imperial]\n"
    "          the session report as PDF: metrics, consistency, charts, 3-D snapshots\n"
    "  c3d     --swing ID [--int16] [--frame grav|cam] [--units mm|m]\n"
    "          the fused hand path as a C3D motion-capture file (marker HAND)\n"
    "  clip    --swing ID [--compare ID] [--view face-on|down-the-line|above]\n"
    "          [--size 720p|1080p] [--fps N] [--slowmo K] [--no-overlays] [--units U]\n"
    "          an MP4 (H.264) of the swing, rendered offscreen by the 3-D scene renderer\n"
    "  still   --swing ID [--view V] [--width W] [--height H] [--at impact|top|address|SECONDS]\n"
    "          a PNG of the 3-D view at any resolution\n"
    "\n"
    "Numbers are estimates from consumer sensors, not a medical or equipment assessment.\n");
}

typedef struct {
  const char *what, *out, *library, *format, *player, *view, *frame, *units, *size, *at;
  gint64 swing, session, compare;
  bool force, no_path, int16, no_overlays;
  int fps, width, height;
  double slowmo;
} Opts;

static bool
parse_id(const char *s, gint64 *out)
{
  char *end;
  long long v = strtoll(s, &end, 10);
  if (*s == '\0' || *end != '\0' || v <= 0)
    return false;
  *out = v;
  return true;
}

static bool
parse_int(const char *s, int lo, int hi, int *out)
{
  char *end;
  long v = strtol(s, &end, 10);
  if (*s == '\0' || *end != '\0' || v < lo || v > hi)
    return false;
  *out = (int)v;
  return true;
}

/* Options that take one word of a fixed list, each listed once: option, choices, where. */
typedef struct {
  const char *option;
  const char *const *choices;  /* NULL-terminated */
  size_t offset;               /* of the const char * field in Opts */
} Choice;

static const char *const choice_formats[] = { "csv", "json", NULL };
static const char *const choice_frames[] = { "grav", "cam", NULL };
static const char *const choice_views[] = { "face-on", "down-the-line", "above", NULL };
static const char *const choice_sizes[] = { "720p", "1080p", NULL };
static const Choice choices[] = {
  { "--format", choice_formats, offsetof(Opts, format) },
  { "--frame", choice_frames, offsetof(Opts, frame) },
  { "--view", choice_views, offsetof(Opts, view) },
  { "--size", choice_sizes, offsetof(Opts, size) },
};

/* 1: taken; 0: not a choice option; 2: bad value (usage error printed). */
static int
parse_choice(const char *a, const char *v, Opts *o)
{
  for (size_t c = 0; c < sizeof choices / sizeof choices[0]; c++) {
    if (strcmp(a, choices[c].option) != 0)
      continue;
    for (const char *const *w = choices[c].choices; *w; w++)
      if (v != NULL && strcmp(v, *w) == 0) {
        memcpy((char *)o + choices[c].offset, w, sizeof *w);
        return 1;
      }
    char list[128] = "";
    for (const char *const *w = choices[c].choices; *w; w++)
      snprintf(list + strlen(list), sizeof list - strlen(list), "%s%s", w == choices[c].choices
               ? "" : w[1] ? ", " : " or ", *w);
    if (v == NULL)
      return arcwise_cli_usage_error(CMD, "%s needs a value", a);
    return arcwise_cli_usage_error(CMD, "%s is %s, not '%s'", a, list, v);
  }
  return 0;
}

static int
parse(int argc, char **argv, Opts *o)
{
  memset(o, 0, sizeof *o);
  o->slowmo = 1.0;
  o->fps = 30;
  for (int i = 2; i < argc; i++) {
    const char *a = argv[i];
    const char *v = i + 1 < argc ? argv[i + 1] : NULL;
#define NEED()                                                                             \
  do {                                                                                     \
    if (v == NULL)                                                                         \
      return arcwise_cli_usage_error(CMD, "%s needs a value", a);                          \
    i++;                                                                                   \
  } while (0)
    int ch = parse_choice(a, v, o);
    if (ch == 2)
      return 2;
    if (ch == 1) {
      i++;
    } else if (strcmp(a, "-o") == 0 || strcmp(a, "--output") == 0) {
      NEED();
      o->out = v;
    } else if (strcmp(a, "--force") == 0) {
      o->force = true;
    } else if (strcmp(a, "--library") == 0) {
      NEED();
      o->library = v;
    } else if (strcmp(a, "--swing") == 0 || strcmp(a, "--session") == 0 ||
               strcmp(a, "--compare") == 0) {
      NEED();
      gint64 *dst = a[2] == 's' && a[3] == 'w' ? &o->swing : a[2] == 's' ? &o->session : &o->compare;
      if (!parse_id(v, dst))
        return arcwise_cli_usage_error(CMD, "%s needs a positive id, not '%s'", a, v);
    } else if (strcmp(a, "--player") == 0) {
      NEED();
      o->player = v;
    } else if (strcmp(a, "--no-path") == 0) {
      o->no_path = true;
    } else if (strcmp(a, "--int16") == 0) {
      o->int16 = true;
    } else if (strcmp(a, "--no-overlays") == 0) {
      o->no_overlays = true;
    } else if (strcmp(a, "--units") == 0) {
      NEED();
      o->units = v;
    } else if (strcmp(a, "--fps") == 0) {
      NEED();
      if (!parse_int(v, 1, 120, &o->fps))
        return arcwise_cli_usage_error(CMD, "--fps is 1 to 120, not '%s'", v);
    } else if (strcmp(a, "--width") == 0 || strcmp(a, "--height") == 0) {
      NEED();
      if (!parse_int(v, 16, 8192, a[2] == 'w' ? &o->width : &o->height))
        return arcwise_cli_usage_error(CMD, "%s is 16 to 8192 pixels, not '%s'", a, v);
    } else if (strcmp(a, "--slowmo") == 0) {
      NEED();
      char *end;
      o->slowmo = strtod(v, &end);
      if (*end != '\0' || !(o->slowmo >= 1 && o->slowmo <= 32))
        return arcwise_cli_usage_error(CMD, "--slowmo is a factor from 1 to 32, not '%s'", v);
    } else if (strcmp(a, "--at") == 0) {
      NEED();
      o->at = v;
    } else {
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", a);
    }
#undef NEED
  }
  if (o->out == NULL)
    return arcwise_cli_usage_error(CMD, "say where to write: -o OUT");
  return -1;
}

static ArcwiseStore *
open_store(const Opts *o, int *rc)
{
  g_autofree char *path = NULL;
  if (o->library != NULL)
    path = g_strdup(o->library);
  else if (g_getenv("ARCWISE_LIBRARY") && g_getenv("ARCWISE_LIBRARY")[0])
    path = g_strdup(g_getenv("ARCWISE_LIBRARY"));
  else
    path = arcwise_store_default_path();
  g_autoptr(GError) error = NULL;
  ArcwiseStore *s = arcwise_store_open(path, ARCWISE_STORE_OPEN_READONLY, &error);
  if (s == NULL)
    *rc = arcwise_cli_fail(CMD, "%s", error->message);
  return s;
}

/* Oldest session first, then recording, then position in the recording. */
static gint
detail_order(gconstpointer pa, gconstpointer pb)
{
  const ArcwiseSwingSummary *a = (*(ArcwiseSwingDetail *const *)pa)->summary;
  const ArcwiseSwingSummary *b = (*(ArcwiseSwingDetail *const *)pb)->summary;
  int c = g_strcmp0(a->session_date, b->session_date);
  if (c != 0)
    return c;
  if (a->recording_id != b->recording_id)
    return a->recording_id < b->recording_id ? -1 : 1;
  return a->index_in_recording < b->index_in_recording ? -1 : a->index_in_recording > b->index_in_recording;
}

/* Swings of the selection, oldest first, loaded with path and analysis. */
static GPtrArray *
load_selection(ArcwiseStore *s, const Opts *o, ArcwiseNumbersScope *scope, char **title, int *rc)
{
  g_autoptr(GError) error = NULL;
  GPtrArray *out = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_detail_free);
  g_autoptr(GPtrArray) ids = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_summary_free);
  if (o->swing > 0) {
    *scope = ARCWISE_SCOPE_SWING;
    *title = g_strdup_printf("Swing %" G_GINT64_FORMAT, o->swing);
    ArcwiseSwingDetail *d = arcwise_store_load_swing(s, o->swing, &error);
    if (d == NULL) {
      *rc = arcwise_cli_fail(CMD, "%s", error->message);
      g_ptr_array_unref(out);
      return NULL;
    }
    g_ptr_array_add(out, d);
    return out;
  }
  ArcwiseSwingFilter f;
  arcwise_swing_filter_init(&f);
  if (o->session > 0) {
    *scope = ARCWISE_SCOPE_SESSION;
    ArcwiseSession *ses = arcwise_store_get_session(s, o->session, &error);
    if (ses == NULL) {
      *rc = arcwise_cli_fail(CMD, "%s", error->message);
      g_ptr_array_unref(out);
      return NULL;
    }
    *title = g_strdup_printf("Session %s %s", ses->date, ses->place);
    arcwise_session_free(ses);
    f.session_id = o->session;
  } else if (o->player != NULL) {
    *scope = ARCWISE_SCOPE_PLAYER;
    *title = g_strdup_printf("History of %s", o->player);
    f.player_name = o->player;
    gint64 pid = arcwise_store_find_player(s, o->player, &error);
    if (pid == 0) {
      *rc = arcwise_cli_fail(CMD, "no player '%s' in the library%s%s", o->player,
                             error ? ": " : "", error ? error->message : "");
      g_ptr_array_unref(out);
      return NULL;
    }
  } else {
    *rc = arcwise_cli_usage_error(CMD, "which swings? --swing ID, --session ID or --player NAME");
    g_ptr_array_unref(out);
    return NULL;
  }
  GPtrArray *list = arcwise_store_list_swings(s, &f, &error);
  if (list == NULL) {
    *rc = arcwise_cli_fail(CMD, "%s", error->message);
    g_ptr_array_unref(out);
    return NULL;
  }
  /* The library lists newest first; exports read oldest first. */
  for (guint i = list->len; i-- > 0;) {
    const ArcwiseSwingSummary *sum = g_ptr_array_index(list, i);
    ArcwiseSwingDetail *d = arcwise_store_load_swing(s, sum->id, &error);
    if (d == NULL) {
      *rc = arcwise_cli_fail(CMD, "swing %" G_GINT64_FORMAT ": %s", sum->id, error->message);
      g_ptr_array_unref(list);
      g_ptr_array_unref(out);
      return NULL;
    }
    g_ptr_array_add(out, d);
  }
  g_ptr_array_unref(list);
  g_ptr_array_sort(out, detail_order);
  if (out->len == 0) {
    *rc = arcwise_cli_fail(CMD, "no swings selected");
    g_ptr_array_unref(out);
    return NULL;
  }
  return out;
}

static ArcwiseNumbersSwing
numbers_row(const ArcwiseSwingDetail *d, char **tags_out)
{
  const ArcwiseSwingSummary *s = d->summary;
  *tags_out = g_strjoinv(" ", s->tags);
  return (ArcwiseNumbersSwing){
    .swing_id = s->id, .player = s->player_name, .session_date = s->session_date,
    .club = s->club_kind, .index_in_recording = s->index_in_recording, .rating = s->rating,
    .is_reference = s->is_reference, .tags = *tags_out, .notes = s->notes, .swing = d->swing,
    .path = d->path,
  };
}

static int
export_numbers(ArcwiseStore *store, const Opts *o)
{
  int rc = 0;
  ArcwiseNumbersScope scope;
  g_autofree char *title = NULL;
  g_autoptr(GPtrArray) sel = load_selection(store, o, &scope, &title, &rc);
  if (sel == NULL)
    return rc;
  bool json = o->format ? strcmp(o->format, "json") == 0 : g_str_has_suffix(o->out, ".json");
  ArcwiseNumbersSwing *rows = g_new0(ArcwiseNumbersSwing, sel->len);
  char **tags = g_new0(char *, sel->len + 1);
  for (guint i = 0; i < sel->len; i++)
    rows[i] = numbers_row(g_ptr_array_index(sel, i), &tags[i]);
  char msg[1024];
  ArcwiseOutFile f;
  if (!arcwise_out_open(&f, o->out, o->force, msg, sizeof msg)) {
    rc = arcwise_cli_fail(CMD, "%s", msg);
  } else {
    bool ok = json ? arcwise_numbers_write_json(f.fp, scope, title, rows, sel->len, !o->no_path)
                   : arcwise_numbers_write_csv(f.fp, rows, sel->len);
    if (!ok) {
      arcwise_out_abort(&f);
      rc = arcwise_cli_fail(CMD, "%s: write failed", o->out);
    } else if (!arcwise_out_commit(&f, msg, sizeof msg)) {
      rc = arcwise_cli_fail(CMD, "%s", msg);
    } else {
      printf("%s: %u swing%s as %s\n", o->out, sel->len, sel->len == 1 ? "" : "s",
             json ? "JSON" : "CSV");
    }
  }
  g_strfreev(tags);
  g_free(rows);
  return rc;
}

static int
export_c3d(ArcwiseStore *store, const Opts *o)
{
  if (o->swing <= 0)
    return arcwise_cli_usage_error(CMD, "c3d needs --swing ID");
  g_autoptr(GError) error = NULL;
  g_autoptr(ArcwiseSwingDetail) d = arcwise_store_load_swing(store, o->swing, &error);
  if (d == NULL)
    return arcwise_cli_fail(CMD, "%s", error->message);
  if (d->path == NULL)
    return arcwise_cli_fail(CMD, "swing %" G_GINT64_FORMAT " has no fused path yet", o->swing);
  AwC3dPathOptions co;
  aw_c3d_path_options_default(&co);
  co.float_data = !o->int16;
  co.frame = o->frame && strcmp(o->frame, "cam") == 0 ? AW_C3D_FRAME_CAM : AW_C3D_FRAME_GRAV;
  if (o->units != NULL) {
    if (strcmp(o->units, "mm") != 0 && strcmp(o->units, "m") != 0)
      return arcwise_cli_usage_error(CMD, "c3d --units is mm or m, not '%s'", o->units);
    co.units = o->units;
  }
  AwError e;
  aw_error_clear(&e);
  char msg[1200];
  if (aw_c3d_write_fused_path(o->out, d->path, &co, o->force, &e) != AW_OK) {
    if (e.status == AW_ERR_IO && strstr(e.message, "exists"))
      return arcwise_cli_fail(CMD, "%s already exists; not replacing it (use --force to replace)",
                              o->out);
    return arcwise_cli_fail(CMD, "%s", aw_error_format(&e, msg, sizeof msg));
  }
  printf("%s: swing %" G_GINT64_FORMAT " as C3D (%s, %s, %s frame)\n", o->out, o->swing,
         co.float_data ? "float" : "int16", co.units, co.frame == AW_C3D_FRAME_CAM ? "camera" : "gravity");
  return 0;
}

/* ---- Report ---- */

typedef struct {
  AwMetricId id;
  const char *label;
  int kind;     /* 0 plain, 1 speed, 2 length */
  int decimals;
} ReportCol;

static const ReportCol report_cols[] = {
  { AW_METRIC_TEMPO_RATIO, "Tempo", 0, 2 },
  { AW_METRIC_BACKSWING_S, "Backswing", 0, 2 },
  { AW_METRIC_DOWNSWING_S, "Downswing", 0, 3 },
  { AW_METRIC_HAND_SPEED_IMPACT_M_S, "Hands at impact", 1, 1 },
  { AW_METRIC_PEAK_HAND_SPEED_M_S, "Peak hands", 1, 1 },
  { AW_METRIC_CLUB_SPEED_IMPACT_M_S, "Club head (est.)", 1, 1 },
  { AW_METRIC_TOP_HEIGHT_M, "Top height", 2, 2 },
  { AW_METRIC_PLANE_BACKSWING_DEG, "Plane back", 0, 0 },
  { AW_METRIC_PLANE_DOWNSWING_DEG, "Plane down", 0, 0 },
  { AW_METRIC_PATH_DIRECTION_DEG, "Path", 0, 1 },
};
#define N_REPORT_COLS (sizeof report_cols / sizeof report_cols[0])

static double
display(const ReportCol *c, double v, bool imperial)
{
  if (c->kind == 1 && imperial)
    return aw_m_s_to_mph(v);
  if (c->kind == 2 && imperial)
    return aw_m_to_inch(v);
  return v;
}

static const char *
display_unit(const ReportCol *c, bool imperial)
{
  if (c->kind == 1)
    return imperial ? "mph" : "m/s";
  if (c->kind == 2)
    return imperial ? "in" : "m";
  const char *u = aw_metric_info(c->id)->unit;
  return strcmp(u, "1") == 0 ? "" : u;
}

static int
export_report(ArcwiseStore *store, const Opts *o)
{
  if (o->session <= 0)
    return arcwise_cli_usage_error(CMD, "report needs --session ID");
  bool imperial = o->units && strcmp(o->units, "imperial") == 0;
  if (o->units && !imperial && strcmp(o->units, "metric") != 0)
    return arcwise_cli_usage_error(CMD, "report --units is metric or imperial, not '%s'", o->units);
  int rc = 0;
  ArcwiseNumbersScope scope;
  g_autofree char *title = NULL;
  g_autoptr(GPtrArray) sel = load_selection(store, o, &scope, &title, &rc);
  if (sel == NULL)
    return rc;
  g_autoptr(GError) error = NULL;
  g_autoptr(ArcwiseSession) ses = arcwise_store_get_session(store, o->session, &error);
  g_autoptr(ArcwisePlayer) player = ses ? arcwise_store_get_player(store, ses->player_id, &error) : NULL;
  if (ses == NULL || player == NULL)
    return arcwise_cli_fail(CMD, "%s", error ? error->message : "session not found");

  ArcwiseReport r = { 0 };
  r.player = player->name;
  r.date = ses->date;
  r.place = ses->place[0] ? ses->place : NULL;
  r.speed_unit = imperial ? "mph" : "m/s";
  r.n_columns = N_REPORT_COLS;
  for (size_t c = 0; c < N_REPORT_COLS; c++)
    r.columns[c] = (ArcwiseReportColumn){ report_cols[c].label,
                                          display_unit(&report_cols[c], imperial),
                                          report_cols[c].decimals };
  ArcwiseReportSwing *rs = g_new0(ArcwiseReportSwing, sel->len);
  const AwSwing **sw = g_new0(const AwSwing *, sel->len);
  size_t n_sw = 0;
  GPtrArray *owned = g_ptr_array_new_with_free_func(g_free);
  for (guint i = 0; i < sel->len; i++) {
    const ArcwiseSwingDetail *d = g_ptr_array_index(sel, i);
    ArcwiseReportSwing *x = &rs[i];
    char *label = g_strdup_printf("%" G_GINT64_FORMAT "%s%s%s", d->summary->id,
                                  d->summary->club_kind ? " (" : "",
                                  d->summary->club_kind ? d->summary->club_kind : "",
                                  d->summary->club_kind ? ")" : "");
    g_ptr_array_add(owned, label);
    x->label = label;
    for (size_t c = 0; c < N_REPORT_COLS; c++)
      x->values[c] = d->swing ? display(&report_cols[c], d->swing->metrics[report_cols[c].id], imperial)
                              : (double)NAN;
    for (int k = 0; k < ARCWISE_REPORT_PHASES; k++)
      x->phase_start_s[k] = x->phase_end_s[k] = x->phase_cam_share[k] = NAN;
    if (d->swing != NULL) {
      sw[n_sw++] = d->swing;
      double t_imp = d->swing->events[AW_EVENT_IMPACT].t_s;
      for (int k = 0; k < ARCWISE_REPORT_PHASES; k++) {
        x->phase_start_s[k] = d->swing->phases[k].start_s - t_imp;
        x->phase_end_s[k] = d->swing->phases[k].end_s - t_imp;
        x->phase_cam_share[k] = d->swing->phases[k].cam_info_share_mean;
      }
      if (d->path != NULL && d->path->vel_cam_m_s != NULL) {
        double *t = g_new(double, d->path->n), *v = g_new(double, d->path->n);
        for (size_t j = 0; j < d->path->n; j++) {
          const double *vel = d->path->vel_cam_m_s[j];
          t[j] = d->path->t_s[j] - t_imp;
          v[j] = sqrt(vel[0] * vel[0] + vel[1] * vel[1] + vel[2] * vel[2]);
          v[j] = imperial ? aw_m_s_to_mph(v[j]) : v[j];
        }
        g_ptr_array_add(owned, t);
        g_ptr_array_add(owned, v);
        x->n = d->path->n;
        x->t_s = t;
        x->speed = v;
      }
    }
  }
  r.n_swings = sel->len;
  r.swings = rs;
  AwConsistency cons;
  aw_session_consistency(sw, n_sw, &cons);
  for (size_t c = 0; c < N_REPORT_COLS; c++) {
    r.mean[c] = display(&report_cols[c], cons.mean[report_cols[c].id], imperial);
    r.sd[c] = display(&report_cols[c], cons.sd[report_cols[c].id], imperial);
  }
  /* Trends: the player's sessions up to this one, from the library's key numbers. */
  g_autoptr(GPtrArray) sessions = arcwise_store_list_sessions(store, player->id, &error);
  ArcwiseReportSession *hist = g_new0(ArcwiseReportSession, sessions ? sessions->len : 1);
  size_t n_hist = 0;
  static const size_t trend_cols[3] = { 0, 3, 5 }; /* tempo, hands at impact, club head */
  for (guint i = sessions ? sessions->len : 0; i-- > 0;) {
    const ArcwiseSession *h = g_ptr_array_index(sessions, i);
    if (strcmp(h->date, ses->date) > 0)
      continue;
    ArcwiseSwingFilter f;
    arcwise_swing_filter_init(&f);
    f.session_id = h->id;
    g_autoptr(GPtrArray) l = arcwise_store_list_swings(store, &f, NULL);
    ArcwiseReportSession *hs = &hist[n_hist];
    hs->label = h->date;
    for (size_t c = 0; c < ARCWISE_REPORT_MAX_COLUMNS; c++)
      hs->mean[c] = hs->sd[c] = NAN;
    for (int k = 0; k < 3; k++) {
      size_t c = trend_cols[k];
      double sum = 0, sum2 = 0;
      size_t m = 0;
      for (guint j = 0; l && j < l->len; j++) {
        const ArcwiseSwingSummary *s = g_ptr_array_index(l, j);
        double v = c == 0 ? s->tempo_ratio : c == 5 ? s->club_speed_impact_m_s : (double)NAN;
        if (c == 3) {
          /* Hands at impact is not a key number of the list: from the stored metrics. */
          g_autoptr(ArcwiseSwingDetail) dd = arcwise_store_load_swing(store, s->id, NULL);
          v = dd && dd->swing ? dd->swing->metrics[AW_METRIC_HAND_SPEED_IMPACT_M_S] : (double)NAN;
        }
        v = display(&report_cols[c], v, imperial);
        if (isfinite(v)) {
          sum += v;
          sum2 += v * v;
          m++;
        }
      }
      if (m > 0)
        hs->mean[c] = sum / (double)m;
      if (m > 1)
        hs->sd[c] = sqrt(fmax(0, (sum2 - sum * sum / (double)m) / (double)(m - 1)));
    }
    n_hist++;
  }
  r.n_history = n_hist;
  r.history = hist;
  r.n_trend = 3;
  memcpy(r.trend_columns, trend_cols, sizeof trend_cols);

  /* Snapshots of the 3-D view of the first analysed swing, face-on and down-the-line. */
  ArcwiseReportImage img[2];
  uint8_t *pix[2] = { NULL, NULL };
  char msg[1024] = "";
  bool snap_failed = false;
  for (guint i = 0; i < sel->len && r.n_images == 0 && !snap_failed; i++) {
    const ArcwiseSwingDetail *d = g_ptr_array_index(sel, i);
    if (d->path == NULL || d->swing == NULL)
      continue;
    static const char *const views[2] = { "face-on", "down-the-line" };
    for (int k = 0; k < 2; k++) {
      int w = 960, h = 540;
      pix[k] = g_malloc((size_t)w * h * 4);
      if (!arcwise_export_snapshot(d->path, d->swing, views[k], d->swing->events[AW_EVENT_IMPACT].t_s,
                                   w, h, pix[k], (size_t)w * 4, msg, sizeof msg)) {
        fprintf(stderr, "arcwise export: no 3-D snapshot in the report: %s\n", msg);
        snap_failed = true;
        r.n_images = 0;
        break;
      }
      img[k] = (ArcwiseReportImage){ pix[k], w, h, (size_t)w * 4, NULL };
      img[k].caption = k == 0 ? "First swing of the session from the front (face-on), at impact"
                              : "The same swing from behind the hands (down-the-line), at impact";
      r.n_images++;
    }
  }
  r.images = img;
  if (!arcwise_report_write_pdf(&r, o->out, o->force, msg, sizeof msg))
    rc = arcwise_cli_fail(CMD, "%s", msg);
  else
    printf("%s: report of %u swings, %zu sessions in the trends\n", o->out, sel->len, n_hist);
  g_free(pix[0]);
  g_free(pix[1]);
  g_free(hist);
  g_free(sw);
  g_free(rs);
  g_ptr_array_unref(owned);
  return rc;
}

/* ---- Clip and still ---- */

static int
export_clip_or_still(ArcwiseStore *store, const Opts *o, bool still)
{
  if (o->swing <= 0)
    return arcwise_cli_usage_error(CMD, "%s needs --swing ID", still ? "still" : "clip");
  g_autoptr(GError) error = NULL;
  g_autoptr(ArcwiseSwingDetail) a = arcwise_store_load_swing(store, o->swing, &error);
  if (a == NULL)
    return arcwise_cli_fail(CMD, "%s", error->message);
  if (a->path == NULL || a->swing == NULL)
    return arcwise_cli_fail(CMD, "swing %" G_GINT64_FORMAT " is not analysed yet", o->swing);
  g_autoptr(ArcwiseSwingDetail) b = NULL;
  if (o->compare > 0) {
    b = arcwise_store_load_swing(store, o->compare, &error);
    if (b == NULL)
      return arcwise_cli_fail(CMD, "%s", error->message);
    if (b->path == NULL || b->swing == NULL)
      return arcwise_cli_fail(CMD, "swing %" G_GINT64_FORMAT " is not analysed yet", o->compare);
  }
  char msg[1024];
  const char *view = o->view ? o->view : "face-on";
  if (still) {
    int w = o->width ? o->width : 1920, h = o->height ? o->height : 1080;
    double t = a->swing->events[AW_EVENT_IMPACT].t_s;
    if (o->at != NULL) {
      char *end;
      double v = strtod(o->at, &end);
      if (strcmp(o->at, "top") == 0)
        t = a->swing->events[AW_EVENT_TOP].t_s;
      else if (strcmp(o->at, "address") == 0)
        t = a->swing->events[AW_EVENT_ADDRESS].t_s;
      else if (strcmp(o->at, "impact") == 0)
        ;
      else if (*end == '\0' && isfinite(v))
        t = a->swing->t_start_s + v;
      else
        return arcwise_cli_usage_error(CMD, "--at is impact, top, address or seconds from the "
                                            "swing's start, not '%s'", o->at);
    }
    if (!arcwise_export_still(a->path, a->swing, b ? b->path : NULL, b ? b->swing : NULL, view,
                              t, w, h, o->out, o->force, msg, sizeof msg))
      return arcwise_cli_fail(CMD, "%s", msg);
    printf("%s: %dx%d PNG, %s\n", o->out, w, h, view);
    return 0;
  }
  ArcwiseClipRequest req = {
    .path_a = a->path, .swing_a = a->swing, .path_b = b ? b->path : NULL,
    .swing_b = b ? b->swing : NULL, .view = view,
    .width = o->size && strcmp(o->size, "1080p") == 0 ? 1920 : 1280,
    .height = o->size && strcmp(o->size, "1080p") == 0 ? 1080 : 720,
    .fps = o->fps, .slowmo = o->slowmo, .overlays = !o->no_overlays,
    .player = a->summary->player_name, .date = a->summary->session_date,
    .imperial = o->units && strcmp(o->units, "imperial") == 0,
  };
  ArcwiseClipStats st;
  if (!arcwise_export_clip_swing(&req, o->out, o->force, NULL, NULL, NULL, &st, msg, sizeof msg))
    return arcwise_cli_fail(CMD, "%s", msg);
  printf("%s: %zu frames, %.2f s of H.264 video (%s)\n", o->out, st.frames, st.video_s, st.encoder);
  return 0;
}

int
arcwise_cmd_export(int argc, char **argv)
{
  if (argc < 2)
    return arcwise_cli_usage_error(CMD, "export what? numbers, report, c3d, clip or still");
  if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0) {
    usage(stdout);
    return 0;
  }
  const char *what = argv[1];
  bool known = false;
  static const char *const whats[] = { "numbers", "report", "c3d", "clip", "still" };
  for (size_t i = 0; i < 5; i++)
    known = known || strcmp(what, whats[i]) == 0;
  if (!known)
    return arcwise_cli_usage_error(CMD, "unknown export '%s' (numbers, report, c3d, clip, still)", what);
  for (int i = 2; i < argc; i++)
    if (strcmp(argv[i], "--help") == 0) {
      usage(stdout);
      return 0;
    }
  Opts o;
  int rc = parse(argc, argv, &o);
  if (rc >= 0)
    return rc;
  char msg[1024];
  /* Refused before any work: the file exists and --force was not given. */
  if (arcwise_out_refuse(o.out, o.force, msg, sizeof msg))
    return arcwise_cli_fail(CMD, "%s", msg);
  rc = 0;
  ArcwiseStore *store = open_store(&o, &rc);
  if (store == NULL)
    return rc;
  if (strcmp(what, "numbers") == 0)
    rc = export_numbers(store, &o);
  else if (strcmp(what, "c3d") == 0)
    rc = export_c3d(store, &o);
  else if (strcmp(what, "report") == 0)
    rc = export_report(store, &o);
  else
    rc = export_clip_or_still(store, &o, strcmp(what, "still") == 0);
  arcwise_store_close(store);
  arcwise_export_shutdown();
  return rc;
}
