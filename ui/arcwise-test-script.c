/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-test-script.h"

gboolean
arcwise_test_stage_ready(ArcwiseWindow *win)
{
  ArcwiseStage *stage = arcwise_window_get_stage(win);
  /* The first swing's model loads in a worker thread: ready once it is on the stage too. */
  return (arcwise_stage_get_frames(stage) > 0 && !arcwise_window_is_loading(win)) ||
         arcwise_stage_get_error_text(stage) != NULL;
}

void
arcwise_test_answer_caution(GtkWindow **caution)
{
  if (*caution == NULL)
    return;
  GtkWidget *def = gtk_window_get_default_widget(*caution);
  if (def != NULL)
    g_signal_emit_by_name(def, "clicked");
  *caution = NULL;
}

void
arcwise_test_finish(ArcwiseWindow *win, const char *path, GString *report, const char *who)
{
  g_autoptr(GError) error = NULL;
  if (!g_file_set_contents(path, report->str, -1, &error))
    g_printerr("%s: %s\n", who, error->message);
  g_string_free(report, TRUE);
  g_application_quit(G_APPLICATION(gtk_window_get_application(GTK_WINDOW(win))));
}
