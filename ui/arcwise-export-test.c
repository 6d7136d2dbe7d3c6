/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The scripted export session (see arcwise-export-test.h). */
#include "arcwise-export-test.h"

#include <glib/gstdio.h>

#include "arcwise-export.h"
#include "arcwise-test-script.h"

typedef struct {
  ArcwiseWindow *win;
  GtkWindow *caution;
  char *dir;
  GString *report;
  int step;
  gboolean cancel_sent;
  gint64 step_started_us;
  GStatBuf kept_before;
} ExportTest;

static char *
target(ExportTest *t, const char *name)
{
  return g_build_filename(t->dir, name, NULL);
}

static void
act(ExportTest *t, const char *action, GVariant *v)
{
  gboolean ok = gtk_widget_activate_action_variant(GTK_WIDGET(t->win), action, v);
  g_string_append_printf(t->report, "action=%s %s\n", action, ok ? "ok" : "missing");
}

static void
export_to(ExportTest *t, const char *action, const char *name)
{
  g_autofree char *path = target(t, name);
  act(t, action, g_variant_new_string(path));
  t->step_started_us = g_get_monotonic_time();
}

static void
record(ExportTest *t, const char *key)
{
  ArcwiseExporter *ex = arcwise_window_get_exporter(t->win);
  g_string_append_printf(t->report, "%s_ok=%d\n%s_message=%s\n", key,
                         arcwise_exporter_last_ok(ex), key, arcwise_exporter_last_message(ex));
}

static void
finish(ExportTest *t)
{
  g_autofree char *path = target(t, "export-report.txt");
  arcwise_test_finish(t->win, path, t->report, "export test");
  g_free(t->dir);
  g_free(t);
}

/* With a stored library (ARCWISE_EXPORT_TEST_STORE=1): numbers and the report through the
 * command-line exporter, and a report cancelled at once. */
/* Both scripts start the same way: wait for the stage's first frame (or its error text),
 * answer the first-run caution, select the first swing. FALSE while the stage is not ready. */
static gboolean
ready_first_swing(ExportTest *t)
{
  if (!arcwise_test_stage_ready(t->win))
    return FALSE;
  arcwise_test_answer_caution(&t->caution);
  arcwise_window_select_index(t->win, 0);
  return TRUE;
}

static gboolean
tick_store(gpointer data)
{
  ExportTest *t = data;
  ArcwiseExporter *ex = arcwise_window_get_exporter(t->win);
  if (t->step > 0 && g_get_monotonic_time() - t->step_started_us > 120 * G_USEC_PER_SEC) {
    g_string_append_printf(t->report, "timeout_step=%d\n", t->step);
    finish(t);
    return G_SOURCE_REMOVE;
  }
  if (t->step > 0 && arcwise_exporter_busy(ex))
    return G_SOURCE_CONTINUE;
  g_autofree char *p = NULL;
  switch (t->step) {
  case 0:
    if (!ready_first_swing(t))
      return G_SOURCE_CONTINUE;
    p = target(t, "session.csv");
    act(t, "win.export-numbers", g_variant_new("(sss)", "csv", "session", p));
    t->step_started_us = g_get_monotonic_time();
    break;
  case 1:
    record(t, "csv");
    p = target(t, "swing.json");
    act(t, "win.export-numbers", g_variant_new("(sss)", "json", "swing", p));
    t->step_started_us = g_get_monotonic_time();
    break;
  case 2:
    record(t, "json");
    export_to(t, "win.export-report", "report.pdf");
    break;
  case 3:
    record(t, "report");
    /* Cancelled at once, so that the child is stopped mid-work however fast it is. */
    export_to(t, "win.export-report", "cancelled.pdf");
    arcwise_exporter_cancel(ex);
    break;
  case 4:
    record(t, "cancelled");
    finish(t);
    return G_SOURCE_REMOVE;
  default:
    return G_SOURCE_REMOVE;
  }
  t->step++;
  return G_SOURCE_CONTINUE;
}

static gboolean
tick(gpointer data)
{
  ExportTest *t = data;
  ArcwiseExporter *ex = arcwise_window_get_exporter(t->win);
  /* However slow the machine (sanitizers, software GL): give up after two minutes a step. */
  if (t->step > 0 && g_get_monotonic_time() - t->step_started_us > 120 * G_USEC_PER_SEC) {
    g_string_append_printf(t->report, "timeout_step=%d\n", t->step);
    finish(t);
    return G_SOURCE_REMOVE;
  }
  switch (t->step) {
  case 0:
    if (!ready_first_swing(t))
      return G_SOURCE_CONTINUE;
    act(t, "win.export-still-size", g_variant_new_string("640x360"));
    export_to(t, "win.export-still", "still.png");
    break;
  case 1:
    if (arcwise_exporter_busy(ex))
      return G_SOURCE_CONTINUE;
    record(t, "still");
    act(t, "win.compare", NULL);
    export_to(t, "win.export-still", "compare.png");
    break;
  case 2:
    if (arcwise_exporter_busy(ex))
      return G_SOURCE_CONTINUE;
    record(t, "compare");
    /* The clip keeps the overlaid swing: both drawn, lined up at impact. */
    {
      /* The clip spans the whole swing model; the check derives the frame count from it. */
      double span = arcwise_window_get_duration(t->win);
      g_string_append_printf(t->report, "swing_span_s=%.9f\n", span);
    }
    act(t, "win.export-clip-size", g_variant_new_string("720p"));
    act(t, "win.export-slowmo", g_variant_new_string("1"));
    export_to(t, "win.export-clip", "clip.mp4");
    break;
  case 3:
    if (arcwise_exporter_busy(ex))
      return G_SOURCE_CONTINUE;
    record(t, "clip");
    g_string_append_printf(t->report, "clip_wall_s=%.3f\n",
                           (g_get_monotonic_time() - t->step_started_us) / 1e6);
    act(t, "win.compare", NULL);
    act(t, "win.export-slowmo", g_variant_new_string("8"));
    t->cancel_sent = FALSE;
    export_to(t, "win.export-clip", "cancelled.mp4");
    break;
  case 4:
    /* Cancel once the worker has encoded something, as a coach would part-way. */
    if (!t->cancel_sent) {
      if (arcwise_exporter_busy(ex) && arcwise_exporter_fraction(ex) <= 0.0)
        return G_SOURCE_CONTINUE;
      g_string_append_printf(t->report, "cancel_at_fraction=%.4f\n", arcwise_exporter_fraction(ex));
      arcwise_exporter_cancel(ex);
      t->cancel_sent = TRUE;
      return G_SOURCE_CONTINUE;
    }
    if (arcwise_exporter_busy(ex))
      return G_SOURCE_CONTINUE;
    record(t, "cancelled");
    {
      g_autofree char *kept = target(t, "still.png");
      if (g_stat(kept, &t->kept_before) != 0)
        memset(&t->kept_before, 0, sizeof t->kept_before);
    }
    export_to(t, "win.export-still", "still.png");
    break;
  case 5: {
    GtkWindow *q = arcwise_exporter_question(ex);
    g_string_append_printf(t->report, "question_shown=%d\n", q != NULL);
    if (q != NULL)
      gtk_dialog_response(GTK_DIALOG(q), GTK_RESPONSE_CANCEL);
    break;
  }
  case 6: {
    if (arcwise_exporter_busy(ex))
      return G_SOURCE_CONTINUE;
    record(t, "kept");
    g_autofree char *kept = target(t, "still.png");
    GStatBuf now;
    gboolean same = g_stat(kept, &now) == 0 && now.st_size == t->kept_before.st_size &&
                    now.st_mtime == t->kept_before.st_mtime && now.st_ino == t->kept_before.st_ino;
    g_string_append_printf(t->report, "kept_unchanged=%d\n", same);
    finish(t);
    return G_SOURCE_REMOVE;
  }
  default:
    return G_SOURCE_REMOVE;
  }
  t->step++;
  return G_SOURCE_CONTINUE;
}

void
arcwise_export_test_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution)
{
  ExportTest *t = g_new0(ExportTest, 1);
  t->win = win;
  t->caution = caution;
  t->dir = g_strdup(dir);
  t->report = g_string_new(NULL);
  t->step_started_us = g_get_monotonic_time();
  g_timeout_add(50, g_strcmp0(g_getenv("ARCWISE_EXPORT_TEST_STORE"), "1") == 0 ? tick_store : tick,
                t);
}
