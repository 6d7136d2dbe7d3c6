/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise library ACTION`: the swing library from the command line. All storage goes through
 * store.h; this file parses options and prints. */
#include "arcwise-config.h"
#include "cli.h"
#include "store.h"

#include <glib/gstdio.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define CMD "library"

static void
print_usage(FILE *out)
{
  fprintf(out,
    "Usage: arcwise library ACTION [--library FILE] [OPTION...]\n"
    "\n"
    "The swing library: players, sessions and swings in one file. Without --library the file\n"
    "is $ARCWISE_LIBRARY, else %s.\n"
    "\n"
    "Actions:\n"
    "  create                      make an empty library (the file must not exist)\n"
    "  add-player NAME [--hand right|left] [--lead-wrist left|right] [--height M] [--notes T]\n"
    "  import --player NAME [--hand H] [--lead-wrist W] [--height M] [--date YYYY-MM-DD]\n"
    "         [--place P] [--club KIND] [--club-length M] [--quiet] (IMU.csv DEPTH.csv | FOLDER)...\n"
    "                              validate, fuse, analyse and store in one transaction; pairs\n"
    "                              already stored (same bytes) are skipped. A FOLDER holds\n"
    "                              NAME.imu.csv + NAME.depth.csv or NAME/imu.csv + NAME/depth.csv\n"
    "  list [--json] [--players | --sessions | --journal] [--player NAME] [--from DATE]\n"
    "       [--to DATE] [--club KIND] [--tag TAG] [--metric NAME [--min X] [--max Y]]\n"
    "       [--reference] [--limit N]\n"
    "                              swings (or players, sessions, the journal) with key numbers\n"
    "  show [--json] [--save-streams DIR] SWING\n"
    "                              one swing: annotations, events, metrics, fused path summary;\n"
    "                              --save-streams writes its raw streams into DIR\n"
    "  annotate SWING [--notes TEXT] [--rating 0-5] [--tags a,b,c] [--reference yes|no]\n"
    "  reanalyse [--all] [--quiet] re-fuse and re-analyse swings made by another engine version\n"
    "                              or settings (all of them with --all), on every core\n"
    "  backup DEST                 copy the library (online backup; DEST must not exist)\n"
    "  check                       integrity check of the database and of every stored stream\n"
    "  export-player NAME FILE     one player's whole history as a single file\n"
    "  import-player FILE          merge such a file (nothing already here is duplicated)\n"
    "  import-c3d FILE --player NAME [--marker LABEL] [--name TEXT] [--up +z|-y|...]\n"
    "         [--units-if-missing mm|m] [--keep-flagged]\n"
    "                              one marker of an optical motion-capture file (C3D) as a\n"
    "                              reference swing of the player: metres, its frame rate,\n"
    "                              invalid frames kept as gaps ('arcwise compare --reference')\n"
    "  references [--player NAME]  the stored reference swings\n"
    "\n"
    "Exit status: 0 success, 1 failure, 2 usage error.\n"
    "Caution: swinging a club indoors can hurt people; keep clear space around the player,\n"
    "camera and screen. The numbers are estimates, not a medical or equipment assessment.\n",
    "$XDG_DATA_HOME/arcwise/library.sqlite");
}

/* ---- Small helpers ---------------------------------------------------------------------- */

typedef struct {
  int argc;
  char **argv;
  int i;
} Args;

static const char *
take_value(Args *a, const char *opt, int *rc)
{
  if (a->i + 1 >= a->argc) {
    *rc = arcwise_cli_usage_error(CMD, "%s needs a value", opt);
    return NULL;
  }
  return a->argv[++a->i];
}

static gboolean
parse_double(const char *s, double *out)
{
  char *end = NULL;
  double v = g_ascii_strtod(s, &end);
  if (end == s || *end != '\0' || !isfinite(v))
    return FALSE;
  *out = v;
  return TRUE;
}

static char *
library_path(const char *given)
{
  if (given != NULL)
    return g_strdup(given);
  return arcwise_store_chosen_path();
}

typedef enum { OPEN_WRITE, OPEN_CREATE, OPEN_READ } OpenMode;

/* OPEN_READ: the actions that only look (list, show, check, backup, export-player) still work
 * on a library from a newer program, read-only, with a note; the others are refused there and
 * the message says what does work. */
static ArcwiseStore *
open_library(const char *path, OpenMode mode, int *rc)
{
  g_autoptr(GError) error = NULL;
  if (mode == OPEN_CREATE) {
    g_autofree char *dir = g_path_get_dirname(path);
    g_mkdir_with_parents(dir, 0700);
  }
  ArcwiseStore *s = arcwise_store_open(path, mode == OPEN_CREATE ? ARCWISE_STORE_OPEN_CREATE
                                             : mode == OPEN_READ ? ARCWISE_STORE_OPEN_FALLBACK_READONLY
                                                                 : ARCWISE_STORE_OPEN_DEFAULT,
                                       &error);
  if (s == NULL) {
    if (g_error_matches(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_TOO_NEW))
      *rc = arcwise_cli_fail(CMD, "%s Here it can only be read: list, show, check, backup and "
                             "export-player work on it.", error->message);
    else
      *rc = arcwise_cli_fail(CMD, "%s", error->message);
    return NULL;
  }
  int version = arcwise_store_get_schema_version(s);
  if (version > ARCWISE_STORE_SCHEMA_VERSION)
    fprintf(stderr, "arcwise " CMD ": note: %s was made by a newer Arcwise (library format %d; "
            "this program knows formats up to %d): opened read-only, and what the newer "
            "program added is not shown.\n", path, version, ARCWISE_STORE_SCHEMA_VERSION);
  return s;
}

static int
fail_error(GError *error)
{
  return arcwise_cli_fail(CMD, "%s", error != NULL ? error->message : "failed");
}

static void
json_string(GString *out, const char *s)
{
  if (s == NULL) {
    g_string_append(out, "null");
    return;
  }
  g_string_append_c(out, '"');
  for (const unsigned char *p = (const unsigned char *)s; *p != '\0'; p++) {
    switch (*p) {
    case '"': g_string_append(out, "\\\""); break;
    case '\\': g_string_append(out, "\\\\"); break;
    case '\n': g_string_append(out, "\\n"); break;
    case '\r': g_string_append(out, "\\r"); break;
    case '\t': g_string_append(out, "\\t"); break;
    default:
      if (*p < 0x20)
        g_string_append_printf(out, "\\u%04x", *p);
      else
        g_string_append_c(out, (char)*p);
    }
  }
  g_string_append_c(out, '"');
}

static void
json_number(GString *out, double v)
{
  if (!isfinite(v)) {
    g_string_append(out, "null");
    return;
  }
  char buf[G_ASCII_DTOSTR_BUF_SIZE];
  g_string_append(out, g_ascii_formatd(buf, sizeof buf, "%.10g", v));
}

static const char *
hand_name(ArcwiseHandedness h)
{
  return h == ARCWISE_HAND_RIGHT ? "right" : h == ARCWISE_HAND_LEFT ? "left" : "unknown";
}

static const char *
wrist_name(AwWrist w)
{
  return w == AW_WRIST_LEFT ? "left" : w == AW_WRIST_RIGHT ? "right" : "unknown";
}

static gboolean
parse_hand(const char *s, ArcwiseHandedness *out)
{
  if (g_ascii_strcasecmp(s, "right") == 0)
    *out = ARCWISE_HAND_RIGHT;
  else if (g_ascii_strcasecmp(s, "left") == 0)
    *out = ARCWISE_HAND_LEFT;
  else
    return FALSE;
  return TRUE;
}

static gboolean
parse_wrist(const char *s, AwWrist *out)
{
  if (g_ascii_strcasecmp(s, "left") == 0)
    *out = AW_WRIST_LEFT;
  else if (g_ascii_strcasecmp(s, "right") == 0)
    *out = AW_WRIST_RIGHT;
  else
    return FALSE;
  return TRUE;
}

/* v with `decimals` decimals and an optional unit, or "-" when not a number. */
static void
fmt_num(char *buf, gsize size, double v, int decimals, const char *unit)
{
  if (isfinite(v))
    g_snprintf(buf, size, "%.*f%s", decimals, v, unit);
  else
    g_strlcpy(buf, "-", size);
}

/* ---- Actions -------------------------------------------------------------------------------- */

static int
do_create(const char *path)
{
  if (g_file_test(path, G_FILE_TEST_EXISTS))
    return arcwise_cli_fail(CMD, "%s: already exists", path);
  int rc = 0;
  g_autoptr(ArcwiseStore) s = open_library(path, OPEN_CREATE, &rc);
  if (s == NULL)
    return rc;
  printf("created %s\n", path);
  return 0;
}

static int
do_add_player(const char *path, Args *a)
{
  const char *name = NULL, *notes = "";
  ArcwiseHandedness hand = ARCWISE_HAND_UNKNOWN;
  AwWrist wrist = AW_WRIST_UNKNOWN;
  double height = NAN;
  int rc = 0;
  for (a->i++; a->i < a->argc; a->i++) {
    const char *arg = a->argv[a->i], *v;
    if (strcmp(arg, "--hand") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (!parse_hand(v, &hand))
        return arcwise_cli_usage_error(CMD, "--hand is right or left, not '%s'", v);
    } else if (strcmp(arg, "--lead-wrist") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (!parse_wrist(v, &wrist))
        return arcwise_cli_usage_error(CMD, "--lead-wrist is left or right, not '%s'", v);
    } else if (strcmp(arg, "--height") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (!parse_double(v, &height))
        return arcwise_cli_usage_error(CMD, "--height needs metres, not '%s'", v);
    } else if (strcmp(arg, "--notes") == 0) {
      if ((notes = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (arg[0] == '-') {
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", arg);
    } else if (name == NULL) {
      name = arg;
    } else {
      return arcwise_cli_usage_error(CMD, "one player name only");
    }
  }
  if (name == NULL)
    return arcwise_cli_usage_error(CMD, "add-player needs a NAME");
  /* The lead wrist follows from handedness unless given: a right-handed golfer leads with the
   * left wrist (common practice of the trade). */
  if (wrist == AW_WRIST_UNKNOWN && hand != ARCWISE_HAND_UNKNOWN)
    wrist = hand == ARCWISE_HAND_RIGHT ? AW_WRIST_LEFT : AW_WRIST_RIGHT;
  g_autoptr(ArcwiseStore) s = open_library(path, OPEN_WRITE, &rc);
  if (s == NULL)
    return rc;
  g_autoptr(GError) error = NULL;
  gint64 id = arcwise_store_add_player(s, name, hand, wrist, height, notes, &error);
  if (id == 0)
    return fail_error(error);
  printf("player %" G_GINT64_FORMAT " %s\n", id, name);
  return 0;
}

static void
print_progress(guint done, guint total, const char *what, gpointer user_data)
{
  fprintf(stderr, "\r[%u/%u] %s\033[K", done, total, what != NULL ? what : "");
  if (done == total)
    fputc('\n', stderr);
  fflush(stderr);
}

static int
do_import(const char *path, Args *a)
{
  ArcwiseImportTarget t;
  arcwise_import_target_init(&t);
  gboolean quiet = FALSE;
  int rc = 0;
  g_autoptr(GPtrArray) pairs =
    g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_capture_pair_free);
  g_autoptr(GPtrArray) files = g_ptr_array_new();
  for (a->i++; a->i < a->argc; a->i++) {
    const char *arg = a->argv[a->i], *v;
    if (strcmp(arg, "--player") == 0) {
      if ((t.player_name = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--hand") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (!parse_hand(v, &t.handedness))
        return arcwise_cli_usage_error(CMD, "--hand is right or left, not '%s'", v);
    } else if (strcmp(arg, "--lead-wrist") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (!parse_wrist(v, &t.lead_wrist))
        return arcwise_cli_usage_error(CMD, "--lead-wrist is left or right, not '%s'", v);
    } else if (strcmp(arg, "--height") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (!parse_double(v, &t.height_m))
        return arcwise_cli_usage_error(CMD, "--height needs metres, not '%s'", v);
    } else if (strcmp(arg, "--date") == 0) {
      if ((t.session_date = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--place") == 0) {
      if ((t.session_place = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--club") == 0) {
      if ((t.club_kind = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--club-length") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (!parse_double(v, &t.club_length_m))
        return arcwise_cli_usage_error(CMD, "--club-length needs metres, not '%s'", v);
    } else if (strcmp(arg, "--quiet") == 0) {
      quiet = TRUE;
    } else if (arg[0] == '-' && arg[1] != '\0') {
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", arg);
    } else {
      g_ptr_array_add(files, (gpointer)arg);
    }
  }
  if (t.player_name == NULL)
    return arcwise_cli_usage_error(CMD, "import needs --player NAME");
  if (files->len == 0)
    return arcwise_cli_usage_error(CMD, "import needs IMU.csv DEPTH.csv pairs or a FOLDER");
  for (guint i = 0; i < files->len; i++) {
    const char *f = g_ptr_array_index(files, i);
    if (g_file_test(f, G_FILE_TEST_IS_DIR)) {
      g_autoptr(GError) error = NULL;
      GPtrArray *found = arcwise_capture_pairs_in_folder(f, &error);
      if (found == NULL)
        return fail_error(error);
      for (guint k = 0; k < found->len; k++)
        g_ptr_array_add(pairs, g_ptr_array_steal_index(found, k--));
      g_ptr_array_unref(found);
    } else {
      if (i + 1 >= files->len || g_file_test(g_ptr_array_index(files, i + 1), G_FILE_TEST_IS_DIR))
        return arcwise_cli_usage_error(CMD, "%s: an IMU file needs its depth file after it", f);
      ArcwiseCapturePair *p = g_new0(ArcwiseCapturePair, 1);
      p->imu_path = g_strdup(f);
      p->depth_path = g_strdup(g_ptr_array_index(files, ++i));
      g_ptr_array_add(pairs, p);
    }
  }
  g_autoptr(ArcwiseStore) s = open_library(path, OPEN_WRITE, &rc);
  if (s == NULL)
    return rc;
  g_autoptr(GError) error = NULL;
  g_autoptr(ArcwiseImportResult) r = arcwise_store_import(s, &t, pairs, NULL,
                                                          quiet ? NULL : print_progress, NULL,
                                                          &error);
  if (r == NULL)
    return fail_error(error);
  printf("imported %u recording%s, %u swing%s", r->recordings_added,
         r->recordings_added == 1 ? "" : "s", r->swings_added, r->swings_added == 1 ? "" : "s");
  if (r->recordings_already_present > 0)
    printf("; %u already in the library (same content), skipped", r->recordings_already_present);
  printf("\n");
  return 0;
}

static void
swing_json(GString *o, const ArcwiseSwingSummary *w)
{
  g_string_append_printf(o, "{\"id\": %" G_GINT64_FORMAT ", \"player\": ", w->id);
  json_string(o, w->player_name);
  g_string_append_printf(o, ", \"player_id\": %" G_GINT64_FORMAT ", \"session_id\": %"
                         G_GINT64_FORMAT ", \"date\": ", w->player_id, w->session_id);
  json_string(o, w->session_date);
  g_string_append(o, ", \"club\": ");
  json_string(o, w->club_kind);
  g_string_append_printf(o, ", \"recording_id\": %" G_GINT64_FORMAT ", \"index\": %u, "
                         "\"span_start_s\": ", w->recording_id, w->index_in_recording);
  json_number(o, w->span_start_s);
  g_string_append(o, ", \"span_end_s\": ");
  json_number(o, w->span_end_s);
  g_string_append_printf(o, ", \"rating\": %d, \"reference\": %s, \"notes\": ", w->rating,
                         w->is_reference ? "true" : "false");
  json_string(o, w->notes);
  g_string_append(o, ", \"tags\": [");
  for (char **t = w->tags; *t != NULL; t++) {
    if (t != w->tags)
      g_string_append(o, ", ");
    json_string(o, *t);
  }
  g_string_append_printf(o, "], \"analysed\": %s, \"analysis_current\": %s, ",
                         w->analysed ? "true" : "false", w->analysis_current ? "true" : "false");
  g_string_append(o, "\"tempo_ratio\": ");
  json_number(o, w->tempo_ratio);
  g_string_append(o, ", \"backswing_s\": ");
  json_number(o, w->backswing_s);
  g_string_append(o, ", \"downswing_s\": ");
  json_number(o, w->downswing_s);
  g_string_append(o, ", \"peak_hand_speed_m_s\": ");
  json_number(o, w->peak_hand_speed_m_s);
  g_string_append(o, ", \"club_speed_impact_m_s\": ");
  json_number(o, w->club_speed_impact_m_s);
  g_string_append(o, "}");
}

static int
do_list(const char *path, Args *a)
{
  ArcwiseSwingFilter f;
  arcwise_swing_filter_init(&f);
  gboolean json = FALSE;
  enum { SWINGS, PLAYERS, SESSIONS, JOURNAL } what = SWINGS;
  int rc = 0;
  for (a->i++; a->i < a->argc; a->i++) {
    const char *arg = a->argv[a->i], *v;
    if (strcmp(arg, "--json") == 0) {
      json = TRUE;
    } else if (strcmp(arg, "--players") == 0) {
      what = PLAYERS;
    } else if (strcmp(arg, "--sessions") == 0) {
      what = SESSIONS;
    } else if (strcmp(arg, "--journal") == 0) {
      what = JOURNAL;
    } else if (strcmp(arg, "--player") == 0) {
      if ((f.player_name = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--from") == 0) {
      if ((f.date_from = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--to") == 0) {
      if ((f.date_to = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--club") == 0) {
      if ((f.club_kind = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--tag") == 0) {
      if ((f.tag = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--metric") == 0) {
      if ((f.metric = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--min") == 0 || strcmp(arg, "--max") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (!parse_double(v, arg[3] == 'i' ? &f.metric_min : &f.metric_max))
        return arcwise_cli_usage_error(CMD, "%s needs a number, not '%s'", arg, v);
    } else if (strcmp(arg, "--reference") == 0) {
      f.reference_only = TRUE;
    } else if (strcmp(arg, "--limit") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      guint64 n;
      if (!g_ascii_string_to_unsigned(v, 10, 1, G_MAXUINT, &n, NULL))
        return arcwise_cli_usage_error(CMD, "--limit needs a positive count, not '%s'", v);
      f.limit = (guint)n;
    } else {
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", arg);
    }
  }
  if ((!isnan(f.metric_min) || !isnan(f.metric_max)) && f.metric == NULL)
    return arcwise_cli_usage_error(CMD, "--min and --max need --metric NAME");
  g_autoptr(ArcwiseStore) s = open_library(path, OPEN_READ, &rc);
  if (s == NULL)
    return rc;
  g_autoptr(GError) error = NULL;
  g_autoptr(GString) o = g_string_new(NULL);
  if (what == PLAYERS) {
    g_autoptr(GPtrArray) ps = arcwise_store_list_players(s, &error);
    if (ps == NULL)
      return fail_error(error);
    if (json)
      g_string_append(o, "[");
    for (guint i = 0; i < ps->len; i++) {
      const ArcwisePlayer *p = g_ptr_array_index(ps, i);
      if (json) {
        g_string_append_printf(o, "%s\n  {\"id\": %" G_GINT64_FORMAT ", \"name\": ",
                               i ? "," : "", p->id);
        json_string(o, p->name);
        g_string_append_printf(o, ", \"handedness\": \"%s\", \"lead_wrist\": \"%s\", "
                               "\"height_m\": ", hand_name(p->handedness),
                               wrist_name(p->lead_wrist));
        json_number(o, p->height_m);
        g_string_append(o, ", \"notes\": ");
        json_string(o, p->notes);
        g_string_append_printf(o, ", \"sessions\": %u, \"swings\": %u}", p->n_sessions,
                               p->n_swings);
      } else {
        char h[32];
        fmt_num(h, sizeof h, p->height_m, 2, " m");
        g_string_append_printf(o, "%4" G_GINT64_FORMAT "  %-24s %-7s lead %-7s %-8s %3u "
                               "sessions %5u swings\n", p->id, p->name, hand_name(p->handedness),
                               wrist_name(p->lead_wrist), h, p->n_sessions, p->n_swings);
      }
    }
    if (json)
      g_string_append(o, "\n]\n");
  } else if (what == SESSIONS) {
    gint64 pid = 0;
    if (f.player_name != NULL && (pid = arcwise_store_find_player(s, f.player_name, &error)) == 0)
      return error != NULL ? fail_error(error)
                           : arcwise_cli_fail(CMD, "no player called '%s'", f.player_name);
    g_autoptr(GPtrArray) ss = arcwise_store_list_sessions(s, pid, &error);
    if (ss == NULL)
      return fail_error(error);
    if (json)
      g_string_append(o, "[");
    for (guint i = 0; i < ss->len; i++) {
      const ArcwiseSession *se = g_ptr_array_index(ss, i);
      if (json) {
        g_string_append_printf(o, "%s\n  {\"id\": %" G_GINT64_FORMAT ", \"player_id\": %"
                               G_GINT64_FORMAT ", \"date\": ", i ? "," : "", se->id,
                               se->player_id);
        json_string(o, se->date);
        g_string_append(o, ", \"place\": ");
        json_string(o, se->place);
        g_string_append(o, ", \"notes\": ");
        json_string(o, se->notes);
        g_string_append_printf(o, ", \"swings\": %u}", se->n_swings);
      } else {
        g_string_append_printf(o, "%4" G_GINT64_FORMAT "  player %-4" G_GINT64_FORMAT
                               " %-16s %-24s %4u swings\n", se->id, se->player_id, se->date,
                               se->place, se->n_swings);
      }
    }
    if (json)
      g_string_append(o, "\n]\n");
  } else if (what == JOURNAL) {
    g_autoptr(GPtrArray) js = arcwise_store_list_journal(s, &error);
    if (js == NULL)
      return fail_error(error);
    if (json)
      g_string_append(o, "[");
    for (guint i = 0; i < js->len; i++) {
      const ArcwiseJournalEntry *e = g_ptr_array_index(js, i);
      if (json) {
        g_string_append_printf(o, "%s\n  {\"id\": %" G_GINT64_FORMAT ", \"when\": ",
                               i ? "," : "", e->id);
        json_string(o, e->when_utc);
        g_string_append(o, ", \"kind\": ");
        json_string(o, e->kind);
        g_string_append(o, ", \"detail\": ");
        json_string(o, e->detail);
        g_string_append(o, "}");
      } else {
        g_string_append_printf(o, "%s  %-14s %s\n", e->when_utc, e->kind, e->detail);
      }
    }
    if (json)
      g_string_append(o, "\n]\n");
  } else {
    g_autoptr(GPtrArray) ws = arcwise_store_list_swings(s, &f, &error);
    if (ws == NULL)
      return fail_error(error);
    if (json) {
      g_string_append(o, "[");
      for (guint i = 0; i < ws->len; i++) {
        g_string_append(o, i ? ",\n  " : "\n  ");
        swing_json(o, g_ptr_array_index(ws, i));
      }
      g_string_append(o, "\n]\n");
    } else {
      g_string_append(o, "swing  player               date        club       tempo  back s  "
                         "down s  hand m/s  rating  tags\n");
      for (guint i = 0; i < ws->len; i++) {
        const ArcwiseSwingSummary *w = g_ptr_array_index(ws, i);
        char t[16], b[16], d[16], v[16];
        fmt_num(t, sizeof t, w->tempo_ratio, 2, "");
        fmt_num(b, sizeof b, w->backswing_s, 3, "");
        fmt_num(d, sizeof d, w->downswing_s, 3, "");
        fmt_num(v, sizeof v, w->peak_hand_speed_m_s, 2, "");
        g_autofree char *tags = g_strjoinv(",", w->tags);
        g_string_append_printf(o, "%5" G_GINT64_FORMAT "  %-20.20s %-11.11s %-10.10s %5s  %6s  "
                               "%6s  %8s  %6d  %s%s%s\n", w->id, w->player_name, w->session_date,
                               w->club_kind != NULL ? w->club_kind : "-", t, b, d, v, w->rating,
                               tags, w->is_reference ? " [reference]" : "",
                               !w->analysed ? " (not analysed)"
                               : !w->analysis_current ? " (older engine)" : "");
      }
      g_string_append_printf(o, "%u swing%s\n", ws->len, ws->len == 1 ? "" : "s");
    }
  }
  fputs(o->str, stdout);
  return 0;
}

static gboolean
parse_id(const char *s, gint64 *out)
{
  guint64 v;
  if (!g_ascii_string_to_unsigned(s, 10, 1, G_MAXINT64, &v, NULL))
    return FALSE;
  *out = (gint64)v;
  return TRUE;
}

/* Writes bytes to DIR/name without following a name outside DIR: the name is the stored safe
 * name (one component), and an existing file is never replaced. */
static gboolean
save_stream(const char *dir, const char *name, GBytes *bytes, GError **error)
{
  if (strchr(name, '/') != NULL || strcmp(name, "..") == 0 || strcmp(name, ".") == 0 ||
      name[0] == '\0') {
    g_set_error(error, G_FILE_ERROR, G_FILE_ERROR_INVAL, "refusing the stored name '%s'", name);
    return FALSE;
  }
  g_autofree char *path = g_build_filename(dir, name, NULL);
  if (g_file_test(path, G_FILE_TEST_EXISTS)) {
    g_set_error(error, G_FILE_ERROR, G_FILE_ERROR_EXIST, "%s: already exists", path);
    return FALSE;
  }
  return g_file_set_contents(path, g_bytes_get_data(bytes, NULL), (gssize)g_bytes_get_size(bytes),
                             error);
}

static int
do_show(const char *path, Args *a)
{
  gboolean json = FALSE;
  const char *save_dir = NULL;
  gint64 id = 0;
  int rc = 0;
  for (a->i++; a->i < a->argc; a->i++) {
    const char *arg = a->argv[a->i];
    if (strcmp(arg, "--json") == 0) {
      json = TRUE;
    } else if (strcmp(arg, "--save-streams") == 0) {
      if ((save_dir = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (arg[0] == '-') {
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", arg);
    } else if (id != 0 || !parse_id(arg, &id)) {
      return arcwise_cli_usage_error(CMD, "show needs one SWING number, not '%s'", arg);
    }
  }
  if (id == 0)
    return arcwise_cli_usage_error(CMD, "show needs a SWING number");
  g_autoptr(ArcwiseStore) s = open_library(path, OPEN_READ, &rc);
  if (s == NULL)
    return rc;
  g_autoptr(GError) error = NULL;
  g_autoptr(ArcwiseSwingDetail) d = arcwise_store_load_swing(s, id, &error);
  if (d == NULL)
    return fail_error(error);
  if (save_dir != NULL) {
    g_autoptr(GBytes) imu = NULL;
    g_autoptr(GBytes) depth = NULL;
    g_autofree char *imu_name = NULL, *depth_name = NULL;
    if (!arcwise_store_load_recording(s, d->summary->recording_id, &imu, &depth, &imu_name,
                                      &depth_name, &error))
      return fail_error(error);
    if (g_mkdir_with_parents(save_dir, 0755) != 0)
      return arcwise_cli_fail(CMD, "%s: cannot create the folder", save_dir);
    if (strcmp(imu_name, depth_name) == 0) {
      /* Both came in under one name (NAME/imu.csv style folders were flattened): keep them apart. */
      g_free(imu_name);
      g_free(depth_name);
      imu_name = g_strdup("imu.csv");
      depth_name = g_strdup("depth.csv");
    }
    if (!save_stream(save_dir, imu_name, imu, &error) ||
        !save_stream(save_dir, depth_name, depth, &error))
      return fail_error(error);
  }
  const ArcwiseSwingSummary *w = d->summary;
  g_autoptr(GString) o = g_string_new(NULL);
  if (json) {
    swing_json(o, w);
    g_string_truncate(o, o->len - 1);
    g_string_append(o, ", \"events\": {");
    for (guint i = 0; d->analysis != NULL && i < d->analysis->events->len; i++) {
      const ArcwiseSwingEvent *e = g_ptr_array_index(d->analysis->events, i);
      g_string_append(o, i ? ", " : "");
      json_string(o, e->name);
      g_string_append(o, ": ");
      json_number(o, e->t_s);
    }
    g_string_append(o, "}, \"metrics\": {");
    for (guint i = 0; d->analysis != NULL && i < d->analysis->metrics->len; i++) {
      const ArcwiseSwingMetric *m = g_ptr_array_index(d->analysis->metrics, i);
      g_string_append(o, i ? ", " : "");
      json_string(o, m->name);
      g_string_append(o, ": ");
      json_number(o, m->value);
    }
    g_string_append(o, "}, \"engine_version\": ");
    json_string(o, d->analysis != NULL ? d->analysis->engine_version : NULL);
    g_string_append_printf(o, ", \"path_samples\": %" G_GSIZE_FORMAT "}\n",
                           d->path != NULL ? (gsize)d->path->n : (gsize)0);
  } else {
    g_autofree char *tags = g_strjoinv(", ", w->tags);
    g_string_append_printf(o, "swing %" G_GINT64_FORMAT " of %s, session %s (%" G_GINT64_FORMAT
                           "), club %s\n", w->id, w->player_name, w->session_date, w->session_id,
                           w->club_kind != NULL ? w->club_kind : "-");
    g_string_append_printf(o, "recording %" G_GINT64_FORMAT ", swing %u in it, %.3f s to %.3f s\n",
                           w->recording_id, w->index_in_recording + 1, w->span_start_s,
                           w->span_end_s);
    g_string_append_printf(o, "rating %d%s, tags: %s\nnotes: %s\n", w->rating,
                           w->is_reference ? ", reference swing" : "", tags[0] ? tags : "-",
                           w->notes[0] ? w->notes : "-");
    if (d->path != NULL)
      g_string_append_printf(o, "fused path: %" G_GSIZE_FORMAT " samples\n", (gsize)d->path->n);
    else
      g_string_append(o, "fused path: none stored\n");
    if (d->analysis == NULL) {
      g_string_append(o, "not analysed\n");
    } else {
      g_string_append_printf(o, "analysis by engine %s at %s%s\n", d->analysis->engine_version,
                             d->analysis->made_utc,
                             w->analysis_current ? "" : " (older engine or settings)");
      for (guint i = 0; i < d->analysis->events->len; i++) {
        const ArcwiseSwingEvent *e = g_ptr_array_index(d->analysis->events, i);
        g_string_append_printf(o, "  event  %-24s %10.3f s\n", e->name, e->t_s);
      }
      for (guint i = 0; i < d->analysis->metrics->len; i++) {
        const ArcwiseSwingMetric *m = g_ptr_array_index(d->analysis->metrics, i);
        g_string_append_printf(o, "  metric %-24s %10.4g %s\n", m->name, m->value, m->unit);
      }
    }
  }
  fputs(o->str, stdout);
  return 0;
}

static int
do_annotate(const char *path, Args *a)
{
  gint64 id = 0;
  const char *notes = NULL, *tags = NULL, *ref = NULL;
  int rating = -1, rc = 0;
  for (a->i++; a->i < a->argc; a->i++) {
    const char *arg = a->argv[a->i], *v;
    if (strcmp(arg, "--notes") == 0) {
      if ((notes = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--tags") == 0) {
      if ((tags = take_value(a, arg, &rc)) == NULL)
        return rc;
    } else if (strcmp(arg, "--reference") == 0) {
      if ((ref = take_value(a, arg, &rc)) == NULL)
        return rc;
      if (strcmp(ref, "yes") != 0 && strcmp(ref, "no") != 0)
        return arcwise_cli_usage_error(CMD, "--reference is yes or no");
    } else if (strcmp(arg, "--rating") == 0) {
      if ((v = take_value(a, arg, &rc)) == NULL)
        return rc;
      guint64 r;
      if (!g_ascii_string_to_unsigned(v, 10, 0, 5, &r, NULL))
        return arcwise_cli_usage_error(CMD, "--rating is 0 to 5, not '%s'", v);
      rating = (int)r;
    } else if (arg[0] == '-') {
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", arg);
    } else if (id != 0 || !parse_id(arg, &id)) {
      return arcwise_cli_usage_error(CMD, "annotate needs one SWING number, not '%s'", arg);
    }
  }
  if (id == 0)
    return arcwise_cli_usage_error(CMD, "annotate needs a SWING number");
  g_autoptr(ArcwiseStore) s = open_library(path, OPEN_WRITE, &rc);
  if (s == NULL)
    return rc;
  g_autoptr(GError) error = NULL;
  if (notes != NULL && !arcwise_store_set_swing_notes(s, id, notes, &error))
    return fail_error(error);
  if (rating >= 0 && !arcwise_store_set_swing_rating(s, id, rating, &error))
    return fail_error(error);
  if (ref != NULL && !arcwise_store_set_swing_reference(s, id, strcmp(ref, "yes") == 0, &error))
    return fail_error(error);
  if (tags != NULL) {
    g_auto(GStrv) list = g_strsplit(tags, ",", -1);
    g_autoptr(GPtrArray) clean = g_ptr_array_new();
    for (char **t = list; *t != NULL; t++) {
      g_strstrip(*t);
      if ((*t)[0] != '\0')
        g_ptr_array_add(clean, *t);
    }
    g_ptr_array_add(clean, NULL);
    if (!arcwise_store_set_swing_tags(s, id, (const char *const *)clean->pdata, &error))
      return fail_error(error);
  }
  return 0;
}

static int
do_reanalyse(const char *path, Args *a)
{
  gboolean all = FALSE, quiet = FALSE;
  for (a->i++; a->i < a->argc; a->i++) {
    if (strcmp(a->argv[a->i], "--all") == 0)
      all = TRUE;
    else if (strcmp(a->argv[a->i], "--quiet") == 0)
      quiet = TRUE;
    else
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", a->argv[a->i]);
  }
  int rc = 0;
  g_autoptr(ArcwiseStore) s = open_library(path, OPEN_WRITE, &rc);
  if (s == NULL)
    return rc;
  g_autoptr(GError) error = NULL;
  gint n = arcwise_store_reanalyse(s, all, NULL, quiet ? NULL : print_progress, NULL, &error);
  if (n < 0)
    return fail_error(error);
  printf("re-analysed %d swing%s\n", n, n == 1 ? "" : "s");
  return 0;
}

static int
do_simple(const char *action, const char *path, Args *a)
{
  g_autoptr(GPtrArray) pos = g_ptr_array_new();
  for (a->i++; a->i < a->argc; a->i++) {
    if (a->argv[a->i][0] == '-' && a->argv[a->i][1] != '\0')
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", a->argv[a->i]);
    g_ptr_array_add(pos, a->argv[a->i]);
  }
  guint want = strcmp(action, "check") == 0 ? 0 : strcmp(action, "export-player") == 0 ? 2 : 1;
  if (pos->len != want)
    return arcwise_cli_usage_error(CMD, "%s takes %u argument%s", action, want,
                                   want == 1 ? "" : "s");
  int rc = 0;
  g_autoptr(ArcwiseStore) s = open_library(path, strcmp(action, "import-player") == 0 ? OPEN_WRITE : OPEN_READ, &rc);
  if (s == NULL)
    return rc;
  g_autoptr(GError) error = NULL;
  if (strcmp(action, "check") == 0) {
    /* A newer library may hold blobs of a newer encoding: check what this program knows. */
    int version = arcwise_store_get_schema_version(s);
    gboolean newer = version > ARCWISE_STORE_SCHEMA_VERSION;
    if (!(newer ? arcwise_store_check_database(s, &error) : arcwise_store_check(s, &error)))
      return fail_error(error);
    printf("%s: ok (format %d%s)\n", path, version,
           newer ? "; database checked, its stored paths were not decoded" : "");
  } else if (strcmp(action, "backup") == 0) {
    if (!arcwise_store_backup(s, g_ptr_array_index(pos, 0), &error))
      return fail_error(error);
    printf("backed up to %s\n", (const char *)g_ptr_array_index(pos, 0));
  } else if (strcmp(action, "export-player") == 0) {
    const char *name = g_ptr_array_index(pos, 0);
    gint64 pid = arcwise_store_find_player(s, name, &error);
    if (pid == 0)
      return error != NULL ? fail_error(error) : arcwise_cli_fail(CMD, "no player called '%s'", name);
    if (!arcwise_store_export_player(s, pid, g_ptr_array_index(pos, 1), &error))
      return fail_error(error);
    printf("exported %s to %s\n", name, (const char *)g_ptr_array_index(pos, 1));
  } else {
    gint n = arcwise_store_import_player(s, g_ptr_array_index(pos, 0), &error);
    if (n < 0)
      return fail_error(error);
    printf("merged %d swing%s\n", n, n == 1 ? "" : "s");
  }
  return 0;
}

int
arcwise_cmd_library(int argc, char **argv)
{
  if (argc < 2)
    return arcwise_cli_usage_error(CMD, "which action? (see 'arcwise library --help')");
  if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0) {
    print_usage(stdout);
    return 0;
  }
  /* --library FILE may come anywhere; take it out first. */
  g_autoptr(GPtrArray) rest = g_ptr_array_new();
  const char *given = NULL;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--library") == 0) {
      if (i + 1 >= argc)
        return arcwise_cli_usage_error(CMD, "--library needs a FILE");
      given = argv[++i];
    } else if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      print_usage(stdout);
      return 0;
    } else {
      g_ptr_array_add(rest, argv[i]);
    }
  }
  if (rest->len == 0)
    return arcwise_cli_usage_error(CMD, "which action? (see 'arcwise library --help')");
  g_autofree char *path = library_path(given);
  Args a = { (int)rest->len, (char **)rest->pdata, 0 };
  const char *action = a.argv[0];
  if (strcmp(action, "create") == 0) {
    if (a.argc != 1)
      return arcwise_cli_usage_error(CMD, "create takes no arguments (use --library FILE)");
    return do_create(path);
  }
  if (strcmp(action, "add-player") == 0)
    return do_add_player(path, &a);
  if (strcmp(action, "import") == 0)
    return do_import(path, &a);
  if (strcmp(action, "list") == 0)
    return do_list(path, &a);
  if (strcmp(action, "show") == 0)
    return do_show(path, &a);
  if (strcmp(action, "annotate") == 0)
    return do_annotate(path, &a);
  if (strcmp(action, "reanalyse") == 0)
    return do_reanalyse(path, &a);
  if (strcmp(action, "import-c3d") == 0)
    return arcwise_library_import_c3d(path, a.argc, a.argv);
  if (strcmp(action, "references") == 0)
    return arcwise_library_references(path, a.argc, a.argv);
  if (strcmp(action, "backup") == 0 || strcmp(action, "check") == 0 ||
      strcmp(action, "export-player") == 0 || strcmp(action, "import-player") == 0)
    return do_simple(action, path, &a);
  return arcwise_cli_usage_error(CMD, "unknown action '%s'", action);
}
