/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The scripted library browser session (see arcwise-library-test.h). */
#include "arcwise-library-test.h"
#include "arcwise-test-script.h"

#include "arcwise-library-browser.h"

typedef struct {
  ArcwiseWindow *win;
  GtkWindow *caution;
  char *dir;
  GString *report;
  int step;
} LibTest;

static void next_step(LibTest *t);

static void
rows(LibTest *t, const char *name)
{
  ArcwiseLibraryBrowser *b = arcwise_window_get_browser(t->win);
  g_autofree char *txt = arcwise_library_browser_describe_rows(b);
  g_autofree char *path = g_strdup_printf("%s/%s.rows", t->dir, name);
  g_autoptr(GError) error = NULL;
  if (!g_file_set_contents(path, txt, -1, &error))
    g_printerr("library test: %s\n", error->message);
  g_string_append_printf(t->report, "%s_matching=%u\n", name,
                         arcwise_library_browser_get_n_matching(b));
  ArcwiseSwingItem *sel = arcwise_library_browser_get_selected(b);
  g_string_append_printf(t->report, "%s_selected=%" G_GINT64_FORMAT "\n", name,
                         sel ? sel->swing_id : (gint64)0);
}

static void
next_step_cb(gpointer data)
{
  next_step(data);
}

/* The picture after the layout settled and the window painted; then the next step. */
static void
picture_then_next(gpointer data)
{
  LibTest *t = data;
  g_autofree char *path = g_strdup_printf("%s/step%d.png", t->dir, t->step);
  arcwise_test_picture(GTK_WIDGET(t->win), path, t->report, next_step_cb, t);
}

static void
later(LibTest *t)
{
  g_timeout_add_once(300, picture_then_next, t);
}

static void
finish(LibTest *t)
{
  g_autofree char *path = g_strdup_printf("%s/library-report.txt", t->dir);
  arcwise_test_finish(t->win, path, t->report, "library test");
  g_free(t->dir);
  g_free(t);
}

static void
next_step(LibTest *t)
{
  ArcwiseLibraryBrowser *b = arcwise_window_get_browser(t->win);
  const char *club = g_getenv("ARCWISE_LIBRARY_TEST_CLUB");
  const char *search = g_getenv("ARCWISE_LIBRARY_TEST_SEARCH");
  switch (t->step++) {
  case 0:
    arcwise_test_answer_caution(&t->caution);
    rows(t, "start");
    g_string_append_printf(t->report, "closed_swing_rows=%u\n",
                           arcwise_library_browser_open(b, 0, 0));
    rows(t, "closed");
    /* Where a drop would import: the selected player row's player, then a session row's. */
    arcwise_library_browser_select_row(b, 4);
    g_string_append_printf(t->report, "import_into_player_row=%" G_GINT64_FORMAT "\n",
                           arcwise_library_browser_get_import_player(b));
    g_string_append_printf(t->report, "opened_swing_rows=%u\n",
                           arcwise_library_browser_open(b, 1, 1));
    rows(t, "opened");
    arcwise_library_browser_select_row(b, 1);
    g_string_append_printf(t->report, "import_into_session_row=%" G_GINT64_FORMAT "\n",
                           arcwise_library_browser_get_import_player(b));
    later(t);
    break;
  case 1:
    /* Filters keep the open rows open: the first player's first session stays open. */
    g_string_append_printf(t->report, "club_known=%d\n",
                           arcwise_library_browser_set_filter(b, "club", club ? club : ""));
    rows(t, "club");
    later(t);
    break;
  case 2:
    arcwise_library_browser_set_filter(b, "club", "");
    arcwise_library_browser_set_filter(b, "data", "1");
    rows(t, "gaps");
    later(t);
    break;
  case 3:
    arcwise_library_browser_set_filter(b, "data", "0");
    arcwise_library_browser_set_filter(b, "kind", "2");
    rows(t, "practice");
    arcwise_library_browser_set_filter(b, "kind", "0");
    arcwise_library_browser_set_filter(b, "search", search ? search : "");
    rows(t, "search");
    later(t);
    break;
  case 4:
    arcwise_library_browser_set_filter(b, "search", "");
    rows(t, "cleared");
    /* Select the first swing, then step to the next one as the N key does. */
    arcwise_window_select_index(t->win, 0);
    rows(t, "first");
    gtk_widget_activate_action(GTK_WIDGET(t->win), "win.swing", "i", 1);
    rows(t, "next");
    g_string_append_printf(t->report, "stage_duration=%.3f\n", arcwise_window_get_duration(t->win));
    later(t);
    break;
  case 5: {
    /* The player editor from the first player's row. */
    g_autofree char *first_rows = arcwise_library_browser_describe_rows(b);
    gint64 pid = g_ascii_strtoll(first_rows + 2, NULL, 10);   /* "P\tID..." */
    g_string_append_printf(t->report, "edit_player=%" G_GINT64_FORMAT "\n", pid);
    arcwise_library_browser_edit_player(b, pid);
    later(t);
    break;
  }
  case 6: {
    GtkWindow *editor = NULL;
    GListModel *tops = gtk_window_get_toplevels();   /* borrowed */
    for (guint i = 0; i < g_list_model_get_n_items(tops); i++) {
      g_autoptr(GtkWindow) w = g_list_model_get_item(tops, i);
      if (g_str_equal(G_OBJECT_TYPE_NAME(w), "ArcwisePlayerEditor"))
        editor = w;
    }
    g_string_append_printf(t->report, "editor_shown=%d\n", editor != NULL);
    if (editor == NULL) {
      finish(t);
      return;
    }
    /* Fill it in as a coach would: a longer name, a height, and press Save. */
    GtkWidget *name = NULL, *height = NULL, *save = NULL;
    GPtrArray *stack = g_ptr_array_new();
    g_ptr_array_add(stack, editor);
    while (stack->len > 0) {
      GtkWidget *w = g_ptr_array_steal_index(stack, stack->len - 1);
      if (GTK_IS_ENTRY(w) && name == NULL && !GTK_IS_SPIN_BUTTON(w))
        name = w;
      else if (GTK_IS_SPIN_BUTTON(w))
        height = w;
      else if (GTK_IS_BUTTON(w) && g_strcmp0(gtk_button_get_label(GTK_BUTTON(w)), "_Save") == 0)
        save = w;
      for (GtkWidget *c = gtk_widget_get_last_child(w); c; c = gtk_widget_get_prev_sibling(c))
        g_ptr_array_add(stack, c);
    }
    g_ptr_array_unref(stack);
    g_string_append_printf(t->report, "editor_fields=%d\n", name && height && save);
    if (name && height && save) {
      g_autofree char *n = g_strdup_printf("%s (edited)", gtk_editable_get_text(GTK_EDITABLE(name)));
      gtk_editable_set_text(GTK_EDITABLE(name), n);
      gtk_spin_button_set_value(GTK_SPIN_BUTTON(height), 177);
      g_string_append_printf(t->report, "edited_name=%s\n", n);
      g_signal_emit_by_name(save, "clicked");
    }
    later(t);
    break;
  }
  case 7:
    rows(t, "edited");
    later(t);
    break;
  default:
    finish(t);
    break;
  }
}

static gboolean
wait_first_frame(gpointer data)
{
  LibTest *t = data;
  if (!arcwise_test_stage_ready(t->win))
    return G_SOURCE_CONTINUE;
  next_step(t);
  return G_SOURCE_REMOVE;
}

void
arcwise_library_test_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution)
{
  LibTest *t = g_new0(LibTest, 1);
  t->win = win;
  t->caution = caution;
  t->dir = g_strdup(dir);
  t->report = g_string_new(NULL);
  g_timeout_add(50, wait_first_frame, t);
}
