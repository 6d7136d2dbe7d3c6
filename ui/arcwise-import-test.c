/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The scripted drop-and-import session (see arcwise-import-test.h). */
#include "arcwise-import-test.h"
#include "arcwise-test-script.h"

#include "arcwise-library-browser.h"

#include <stdlib.h>

typedef struct {
  ArcwiseWindow *win;
  GtkWindow *caution;
  char *dir;
  GString *report;
  gboolean cancel;       /* press Stop midway */
  guint player;          /* 1-based position of the target player row */
  GString *fractions;    /* every fraction the progress bar was given, in order */
  gboolean stop_pressed;
  gboolean during_shot;
  guint polls_during;    /* main-loop turns seen while the import worked */
  gulong notify_id;
} ImportTest;

static GtkWidget *
part(ImportTest *t, const char *name)
{
  return GTK_WIDGET(gtk_widget_get_template_child(GTK_WIDGET(t->win), ARCWISE_TYPE_WINDOW, name));
}

/* A picture of the window once it has painted (arcwise_test_picture); then then(t). */
static void
picture_when_painted(ImportTest *t, const char *name, GSourceOnceFunc then)
{
  g_autofree char *path = g_strdup_printf("%s/%s.png", t->dir, name);
  arcwise_test_picture(GTK_WIDGET(t->win), path, t->report, then, t);
}

static void
on_fraction(GtkProgressBar *bar, GParamSpec *pspec, ImportTest *t)
{
  (void)pspec;
  double f = gtk_progress_bar_get_fraction(bar);
  g_string_append_printf(t->fractions, "%s%.4f", t->fractions->len ? " " : "", f);
  if (!arcwise_window_is_importing(t->win) || f <= 0.0 || f >= 1.0)
    return;
  if (!t->during_shot) {
    t->during_shot = TRUE;
    g_string_append_printf(t->report, "during_label=%s\nduring_revealed=%d\n",
                           gtk_label_get_text(GTK_LABEL(part(t, "import_label"))),
                           gtk_revealer_get_child_revealed(GTK_REVEALER(part(t, "import_revealer"))) ||
                           gtk_revealer_get_reveal_child(GTK_REVEALER(part(t, "import_revealer"))));
    picture_when_painted(t, "during", NULL);
  }
  if (t->cancel && !t->stop_pressed) {
    /* Midway: some captures done, some not. A click's signal, at once (gtk_widget_activate
     * would flash the button and click a quarter second later). */
    t->stop_pressed = TRUE;
    g_string_append_printf(t->report, "stop_at=%.4f\n", f);
    g_signal_emit_by_name(part(t, "import_cancel"), "clicked");
    g_string_append_printf(t->report, "stop_label=%s\n",
                           gtk_label_get_text(GTK_LABEL(part(t, "import_label"))));
  }
}

static void
finish(gpointer data)
{
  ImportTest *t = data;
  g_signal_handler_disconnect(part(t, "import_progress"), t->notify_id);
  g_string_append_printf(t->report, "fractions=%s\n", t->fractions->str);
  g_string_free(t->fractions, TRUE);
  const char *err = arcwise_stage_get_error_text(arcwise_window_get_stage(t->win));
  g_string_append_printf(t->report, "gl_error=%s\n", err ? err : "none");
  g_autofree char *path = g_strdup_printf("%s/import-report.txt", t->dir);
  arcwise_test_finish(t->win, path, t->report, "import test");
  g_free(t->dir);
  g_free(t);
}

static void
after_settled(gpointer data)
{
  ImportTest *t = data;
  ArcwiseLibraryBrowser *b = arcwise_window_get_browser(t->win);
  /* The target player and its first (newest) session open: the swings just brought in. */
  g_string_append_printf(t->report, "after_swing_rows=%u\n",
                         arcwise_library_browser_open(b, t->player, 1));
  g_autofree char *rows = arcwise_library_browser_describe_rows(b);
  g_autofree char *path = g_strdup_printf("%s/after.rows", t->dir);
  g_autoptr(GError) error = NULL;
  if (!g_file_set_contents(path, rows, -1, &error))
    g_string_append_printf(t->report, "rows_error=%s\n", error->message);
  picture_when_painted(t, "after", finish);
}

static gboolean
watch_import(gpointer data)
{
  ImportTest *t = data;
  if (arcwise_window_is_importing(t->win)) {
    t->polls_during++;
    return G_SOURCE_CONTINUE;
  }
  g_string_append_printf(t->report, "polls_during=%u\nfinal_label=%s\nfinal_fraction=%.4f\n"
                         "stop_pressed=%d\n", t->polls_during,
                         gtk_label_get_text(GTK_LABEL(part(t, "import_label"))),
                         gtk_progress_bar_get_fraction(GTK_PROGRESS_BAR(part(t, "import_progress"))),
                         t->stop_pressed);
  g_timeout_add_once(300, after_settled, t);
  return G_SOURCE_REMOVE;
}

static GtkDropTarget *
window_drop_target(ArcwiseWindow *win)
{
  g_autoptr(GListModel) cs = gtk_widget_observe_controllers(GTK_WIDGET(win));
  for (guint i = 0; i < g_list_model_get_n_items(cs); i++) {
    g_autoptr(GObject) c = g_list_model_get_item(cs, i);
    if (GTK_IS_DROP_TARGET(c))
      return GTK_DROP_TARGET(c);   /* the widget keeps it */
  }
  return NULL;
}

static void deliver_drop(gpointer data);

static void
drop_files(ImportTest *t)
{
  ArcwiseLibraryBrowser *b = arcwise_window_get_browser(t->win);
  arcwise_library_browser_open(b, 0, 0);
  arcwise_library_browser_select_row(b, t->player - 1);
  g_string_append_printf(t->report, "target_player=%" G_GINT64_FORMAT "\n",
                         arcwise_library_browser_get_import_player(b));

  GtkDropTarget *drop = window_drop_target(t->win);
  GdkContentFormats *formats = drop ? gtk_drop_target_get_formats(drop) : NULL;
  g_string_append_printf(t->report, "drop_target=%d\naccepts_file_list=%d\n", drop != NULL,
                         formats != NULL && gdk_content_formats_contain_gtype(formats, GDK_TYPE_FILE_LIST));
  if (drop == NULL) {
    finish(t);
    return;
  }
  /* Files held over the window, as GTK marks it while a drag hovers: a picture of the cue. */
  gtk_widget_set_state_flags(GTK_WIDGET(t->win), GTK_STATE_FLAG_DROP_ACTIVE, FALSE);
  picture_when_painted(t, "hover", deliver_drop);
}

static void
deliver_drop(gpointer data)
{
  ImportTest *t = data;
  gtk_widget_unset_state_flags(GTK_WIDGET(t->win), GTK_STATE_FLAG_DROP_ACTIVE);
  GtkDropTarget *drop = window_drop_target(t->win);
  const char *spec = g_getenv("ARCWISE_IMPORT_TEST_FILES");
  g_auto(GStrv) paths = g_strsplit(spec ? spec : "", ":", -1);
  GSList *files = NULL;
  for (char **p = paths; *p != NULL; p++)
    if (**p != '\0')
      files = g_slist_append(files, g_file_new_for_path(*p));
  GdkFileList *list = gdk_file_list_new_from_list(files);
  g_slist_free_full(files, g_object_unref);
  GValue value = G_VALUE_INIT;
  g_value_init(&value, GDK_TYPE_FILE_LIST);
  g_value_take_boxed(&value, list);
  t->notify_id = g_signal_connect(part(t, "import_progress"), "notify::fraction",
                                  G_CALLBACK(on_fraction), t);
  gboolean handled = FALSE;
  int w = gtk_widget_get_width(GTK_WIDGET(t->win)), h = gtk_widget_get_height(GTK_WIDGET(t->win));
  g_signal_emit_by_name(drop, "drop", &value, w / 2.0, h / 2.0, &handled);
  g_value_unset(&value);
  g_string_append_printf(t->report, "drop_handled=%d\nimporting_after_drop=%d\n", handled,
                         arcwise_window_is_importing(t->win));
  g_timeout_add(10, watch_import, t);
}

static gboolean
wait_ready(gpointer data)
{
  ImportTest *t = data;
  if (!arcwise_test_stage_ready(t->win))
    return G_SOURCE_CONTINUE;
  arcwise_test_answer_caution(&t->caution);
  drop_files(t);
  return G_SOURCE_REMOVE;
}

void
arcwise_import_test_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution)
{
  ImportTest *t = g_new0(ImportTest, 1);
  t->win = win;
  t->caution = caution;
  t->dir = g_strdup(dir);
  t->report = g_string_new(NULL);
  t->fractions = g_string_new(NULL);
  t->cancel = g_strcmp0(g_getenv("ARCWISE_IMPORT_TEST_MODE"), "cancel") == 0;
  const char *player = g_getenv("ARCWISE_IMPORT_TEST_PLAYER");
  t->player = player != NULL ? (guint)MAX(1, atoi(player)) : 1;
  g_timeout_add(50, wait_ready, t);
}
