/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The scripted smoke session (see arcwise-smoke.h). */
#include "arcwise-smoke.h"
#include "arcwise-test-script.h"

#include <math.h>
#include <string.h>

typedef struct {
  ArcwiseWindow *win;
  GtkWindow *caution;
  char *dir;
  GString *report;
  int step;
  double t_before;
  guint64 frames_before;
  gint64 play_started_us;
  char *pending;        /* name of the view snapshot being written */
  gboolean store;       /* the stored-library script (ARCWISE_SMOKE_STORE) */
  guint swing;          /* store script: the swing being looked at */
} Smoke;

static void store_step(Smoke *s);

static void next_step(Smoke *s);
static void snap_window(Smoke *s, const char *name, GSourceOnceFunc then);

/* The script's next step, whichever script runs. */
static void
step_on(gpointer data)
{
  Smoke *s = data;
  if (s->store)
    store_step(s);
  else
    next_step(s);
}

static void
window_then_next(gpointer data)
{
  Smoke *s = data;
  g_autofree char *name = g_steal_pointer(&s->pending);
  if (name == NULL) {
    step_on(s);
    return;
  }
  g_string_append_printf(s->report, "layout=%s %u %d\n", name,
                         arcwise_window_count_clipped(s->win), arcwise_window_bars_overlap(s->win));
  snap_window(s, name, step_on);
}

static void
snapshot_done(gpointer data)
{
  /* Let the frame reach the screen and layouts settle, picture the whole window, then take
   * the next step. */
  g_timeout_add_once(120, window_then_next, data);
}

static void
snap(Smoke *s, const char *name)
{
  g_autofree char *path = g_strdup_printf("%s/%s.png", s->dir, name);
  ArcwiseStage *stage = arcwise_window_get_stage(s->win);
  g_free(s->pending);
  s->pending = g_strdup(name);
  g_string_append_printf(s->report, "snapshot=%s %d %d\n", name,
                         gtk_widget_get_width(GTK_WIDGET(stage)),
                         gtk_widget_get_height(GTK_WIDGET(stage)));
  arcwise_stage_request_snapshot(stage, path, G_CALLBACK(snapshot_done), s);
}

/* The whole window as the coach sees it (every widget, the 3-D view's last frame included),
 * rendered by the window's own renderer once it has painted; DIR/win-NAME.png, then then(s). */
static void
snap_window(Smoke *s, const char *name, GSourceOnceFunc then)
{
  GtkWidget *w = GTK_WIDGET(s->win);
  g_autofree char *path = g_strdup_printf("%s/win-%s.png", s->dir, name);
  g_string_append_printf(s->report, "window=%s %d %d\n", name, gtk_widget_get_width(w),
                         gtk_widget_get_height(w));
  arcwise_test_picture(w, path, s->report, then, s);
}

static void
act(Smoke *s, const char *action, GVariant *target)
{
  gboolean ok = gtk_widget_activate_action_variant(GTK_WIDGET(s->win), action, target);
  g_string_append_printf(s->report, "action=%s %s\n", action, ok ? "ok" : "missing");
}

static void
finish(Smoke *s)
{
  g_autofree char *path = g_strdup_printf("%s/report.txt", s->dir);
  arcwise_test_finish(s->win, path, s->report, "smoke");
  g_free(s->pending);
  g_free(s->dir);
  g_free(s);
}

static gboolean
wait_play(gpointer data)
{
  Smoke *s = data;
  /* Wait for a few drawn frames, however slow the machine (sanitizers, software GL). */
  ArcwiseStage *stage = arcwise_window_get_stage(s->win);
  gint64 waited = g_get_monotonic_time() - s->play_started_us;
  if ((arcwise_stage_get_frames(stage) - s->frames_before < 5 || waited < 500000) &&
      waited < 60 * G_USEC_PER_SEC)
    return G_SOURCE_CONTINUE;
  g_string_append_printf(s->report, "play_time_before=%.4f\nplay_time_after=%.4f\n"
                         "play_frames=%" G_GUINT64_FORMAT "\nplaying=%d\n",
                         s->t_before, arcwise_window_get_time(s->win),
                         arcwise_stage_get_frames(stage) - s->frames_before,
                         arcwise_window_is_playing(s->win));
  act(s, "win.play", NULL);   /* pause */
  g_string_append_printf(s->report, "paused=%d\n", !arcwise_window_is_playing(s->win));
  snap(s, "playing");
  return G_SOURCE_REMOVE;
}

static gboolean
wait_loop(gpointer data)
{
  Smoke *s = data;
  /* Wrapped once time is back well before where playing began. */
  gboolean wrapped = arcwise_window_get_time(s->win) < s->t_before - 0.05;
  if (!wrapped && arcwise_window_is_playing(s->win) &&
      g_get_monotonic_time() - s->play_started_us < 60 * G_USEC_PER_SEC)
    return G_SOURCE_CONTINUE;
  g_string_append_printf(s->report, "looped=%d\nloop_still_playing=%d\n", wrapped,
                         arcwise_window_is_playing(s->win));
  act(s, "win.play", NULL);   /* pause */
  act(s, "win.loop", NULL);   /* loop off again */
  next_step(s);
  return G_SOURCE_REMOVE;
}

static void
snap_presentation(gpointer data)
{
  snap(data, "presentation");
}

static void
next_step(Smoke *s)
{
  ArcwiseStage *stage = arcwise_window_get_stage(s->win);
  switch (s->step++) {
  case 0:
    g_string_append_printf(s->report, "caution_shown=%d\n", s->caution != NULL &&
                           gtk_widget_get_visible(GTK_WIDGET(s->caution)));
    arcwise_test_answer_caution(&s->caution);
    g_string_append_printf(s->report, "swings=%u\n", arcwise_window_get_n_visible(s->win));
    /* The library tree: the first player open (sessions only), then that player's first
     * session open too (its swings), then every row closed; swing rows shown each time. */
    g_string_append_printf(s->report, "tree_player_swing_rows=%u\n", arcwise_window_drill(s->win, 1, 0));
    g_string_append_printf(s->report, "tree_session_swing_rows=%u\n", arcwise_window_drill(s->win, 1, 1));
    g_string_append_printf(s->report, "tree_closed_swing_rows=%u\n", arcwise_window_drill(s->win, 0, 0));
    arcwise_window_select_index(s->win, 0);
    snap(s, "swing");
    break;
  case 1: {
    double t = arcwise_window_get_time(s->win);
    act(s, "win.step", g_variant_new_int32(1));
    act(s, "win.step", g_variant_new_int32(1));
    g_string_append_printf(s->report, "step_dt=%.4f\n", arcwise_window_get_time(s->win) - t);
    act(s, "win.seek", g_variant_new_int32(-1));
    arcwise_window_set_speed_index(s->win, 1);   /* half speed */
    s->t_before = arcwise_window_get_time(s->win);
    s->frames_before = arcwise_stage_get_frames(stage);
    s->play_started_us = g_get_monotonic_time();
    act(s, "win.play", NULL);
    g_timeout_add(50, wait_play, s);
    break;
  }
  case 2: {
    /* Loop: played from just before the end, time comes round to the start again. */
    const ArcwiseSwingModel *m = arcwise_window_get_model(s->win);
    act(s, "win.loop", NULL);
    act(s, "win.seek", g_variant_new_int32(1));
    for (int k = 0; k < 6; k++)
      act(s, "win.step", g_variant_new_int32(-1));
    s->t_before = arcwise_window_get_time(s->win);
    g_string_append_printf(s->report, "loop_from=%.4f\nloop_end=%.4f\n", s->t_before,
                           m ? (double)m->t_s[m->n - 1] : 0.0);
    s->play_started_us = g_get_monotonic_time();
    act(s, "win.play", NULL);
    g_timeout_add(20, wait_loop, s);
    break;
  }
  case 3:
    arcwise_window_set_speed_index(s->win, 0);
    act(s, "win.view", g_variant_new_string("down-the-line"));
    snap(s, "view-dtl");
    break;
  case 4:
    act(s, "win.view", g_variant_new_string("above"));
    snap(s, "view-above");
    break;
  case 5:
    act(s, "win.view", g_variant_new_string("face-on"));
    act(s, "win.seek", g_variant_new_int32(1));
    act(s, "win.trust", NULL);
    snap(s, "trust");
    break;
  case 6:
    act(s, "win.trust", NULL);
    act(s, "win.colour", g_variant_new_string("phase"));
    snap(s, "phase");
    break;
  case 7:
    act(s, "win.colour", g_variant_new_string("speed"));
    act(s, "win.club", NULL);
    snap(s, "club");
    break;
  case 8:
    act(s, "win.club", NULL);
    act(s, "win.compare", NULL);
    g_string_append_printf(s->report, "compare_cells=%u\n", arcwise_window_get_compare_rows(s->win));
    snap(s, "compare");
    break;
  case 9:
    act(s, "win.presentation", NULL);
    g_string_append_printf(s->report, "presentation_class=%d\n",
                           gtk_widget_has_css_class(GTK_WIDGET(s->win), "presentation"));
    /* Let the new layout (library hidden, larger type) settle before the picture. */
    g_timeout_add_once(400, (GSourceOnceFunc)snap_presentation, s);
    break;
  case 10: {
    act(s, "win.show-help-overlay", NULL);
    GtkWindow *help = GTK_WINDOW(gtk_application_window_get_help_overlay(GTK_APPLICATION_WINDOW(s->win)));
    guint n = 0;
    GPtrArray *listed = g_ptr_array_new_with_free_func(g_free);
    if (help != NULL) {
      /* Count the shortcut entries the window lists. */
      GPtrArray *stack = g_ptr_array_new();
      g_ptr_array_add(stack, help);
      while (stack->len > 0) {
        GtkWidget *w = g_ptr_array_steal_index(stack, stack->len - 1);
        if (GTK_IS_SHORTCUTS_SHORTCUT(w)) {
          g_autofree char *accel = NULL;
          g_object_get(w, "accelerator", &accel, NULL);
          if (accel != NULL)
            g_ptr_array_add(listed, g_steal_pointer(&accel));
          n++;
        }
        for (GtkWidget *c = gtk_widget_get_first_child(w); c; c = gtk_widget_get_next_sibling(c))
          g_ptr_array_add(stack, c);
      }
      g_ptr_array_unref(stack);
      gtk_window_close(help);
    }
    g_string_append_printf(s->report, "shortcuts_listed=%u\n", n);
    /* Every key the window binds is in the shortcuts window (each listed accelerator parsed
     * and named again by GTK, so spellings such as <Alt> and <Mod1> compare equal). */
    g_auto(GStrv) bound = arcwise_window_list_keys();
    for (char **k = bound; *k != NULL; k++) {
      gboolean found = FALSE;
      for (guint j = 0; j < listed->len && !found; j++) {
        g_auto(GStrv) alts = g_strsplit(g_ptr_array_index(listed, j), " ", -1);
        for (char **a = alts; *a != NULL && !found; a++) {
          guint key;
          GdkModifierType mods;
          if (gtk_accelerator_parse(*a, &key, &mods)) {
            g_autofree char *name = gtk_accelerator_name(key, mods);
            found = g_str_equal(name, *k);
          }
        }
      }
      if (!found)
        g_string_append_printf(s->report, "key_not_listed=%s\n", *k);
    }
    g_ptr_array_unref(listed);
    /* About carries the studio caution too. */
    act(s, "app.about", NULL);
    gboolean about_caution = FALSE;
    GListModel *tops = gtk_window_get_toplevels();
    for (guint k = 0; k < g_list_model_get_n_items(tops); k++) {
      g_autoptr(GObject) w = g_list_model_get_item(tops, k);
      if (GTK_IS_ABOUT_DIALOG(w)) {
        const char *c = gtk_about_dialog_get_comments(GTK_ABOUT_DIALOG(w));
        about_caution = about_caution || (c != NULL && strstr(c, arcwise_safety_text) != NULL);
        gtk_window_close(GTK_WINDOW(w));
      }
    }
    g_string_append_printf(s->report, "about_caution=%d\n", about_caution);
    act(s, "win.presentation", NULL);
    g_string_append_printf(s->report, "presentation_left=%d\n",
                           !gtk_widget_has_css_class(GTK_WIDGET(s->win), "presentation"));
    g_string_append_printf(s->report, "frames=%" G_GUINT64_FORMAT "\n",
                           arcwise_stage_get_frames(stage));
    const char *err = arcwise_stage_get_error_text(stage);
    g_string_append_printf(s->report, "gl_error=%s\n", err ? err : "none");
    finish(s);
    break;
  }
  default:
    break;
  }
}

/* ---- the stored-library script -------------------------------------------------------------- */

static GtkWidget *
part(Smoke *s, const char *name)
{
  return GTK_WIDGET(gtk_widget_get_template_child(GTK_WIDGET(s->win), ARCWISE_TYPE_WINDOW, name));
}

/* The Numbers table as shown: "number=SWING LABEL\tVALUE" lines. */
static void
dump_numbers(Smoke *s, const char *tag)
{
  GtkGrid *grid = GTK_GRID(part(s, "metrics_grid"));
  for (int row = 0;; row++) {
    GtkWidget *l = gtk_grid_get_child_at(grid, 0, row), *v = gtk_grid_get_child_at(grid, 1, row);
    if (l == NULL || v == NULL)
      break;
    g_string_append_printf(s->report, "number=%s %" G_GINT64_FORMAT " %s\t%s\n", tag,
                           arcwise_window_get_swing_id(s->win),
                           gtk_label_get_text(GTK_LABEL(l)), gtk_label_get_text(GTK_LABEL(v)));
  }
}

/* One widget alone as the window draws it, DIR/NAME.png, then then(s). */
static void
snap_widget(Smoke *s, GtkWidget *w, const char *name, GSourceOnceFunc then)
{
  g_autofree char *path = g_strdup_printf("%s/%s.png", s->dir, name);
  arcwise_test_picture(w, path, s->report, then, s);
}

/* After a swing's timeline picture: the next swing. */
static void
next_swing(gpointer data)
{
  Smoke *s = data;
  s->swing++;
  s->step = 1;
  store_step(s);
}

static void
store_step(Smoke *s)
{
  guint n = arcwise_window_get_n_visible(s->win);
  switch (s->step++) {
  case 0:
    g_string_append_printf(s->report, "caution_shown=%d\nswings=%u\n", s->caution != NULL, n);
    arcwise_test_answer_caution(&s->caution);
    act(s, "app.units", g_variant_new_string("metric"));
    s->swing = 0;
    G_GNUC_FALLTHROUGH;
  case 1:
    /* Each swing in turn, seen down the line. */
    if (s->swing < n) {
      arcwise_window_select_index(s->win, s->swing);
      act(s, "win.view", g_variant_new_string("down-the-line"));
      act(s, "win.seek", g_variant_new_int32(1));   /* playhead clear of the event marks */
      g_autofree char *name = g_strdup_printf("dtl-%u", s->swing);
      s->step = 2;
      snap(s, name);
    } else {
      /* The last swing face-on with its trust band, who carried each phase by the stored
       * analysis in the legend. */
      s->step = 3;
      act(s, "win.view", g_variant_new_string("face-on"));
      act(s, "win.trust", NULL);
      snap(s, "trust-stored");
    }
    break;
  case 3:
    act(s, "win.trust", NULL);
    act(s, "app.units", g_variant_new_string("imperial"));
    g_timeout_add_once(200, (GSourceOnceFunc)store_step, s);
    break;
  case 2: {
    /* The picture of this swing is drawn and the layout has settled. */
    const ArcwiseSwingModel *m = arcwise_window_get_model(s->win);
    GtkWidget *tl = part(s, "timeline");
    g_string_append_printf(s->report, "swing=%u %" G_GINT64_FORMAT " %d %.6f %d %d\n", s->swing,
                           arcwise_window_get_swing_id(s->win), m ? m->handed : 0,
                           arcwise_window_get_duration(s->win), gtk_widget_get_width(tl),
                           gtk_widget_get_height(tl));
    dump_numbers(s, "metric");
    g_autofree char *name = g_strdup_printf("timeline-%u", s->swing);
    snap_widget(s, tl, name, next_swing);
    break;
  }
  case 4: {
    dump_numbers(s, "imperial");
    /* The coach's marks on the first swing, entered through the widgets. */
    arcwise_window_select_index(s->win, 0);
    GtkWidget *star4 = gtk_widget_get_first_child(part(s, "rating_box"));
    for (int k = 0; k < 4 && star4 != NULL; k++)
      star4 = gtk_widget_get_next_sibling(star4);
    if (GTK_IS_TOGGLE_BUTTON(star4))
      gtk_toggle_button_set_active(GTK_TOGGLE_BUTTON(star4), TRUE);
    gtk_switch_set_active(GTK_SWITCH(part(s, "reference_switch")), TRUE);
    gtk_editable_set_text(GTK_EDITABLE(part(s, "tags_entry")), "grip, takeaway");
    gtk_text_buffer_set_text(gtk_text_view_get_buffer(GTK_TEXT_VIEW(part(s, "notes_view"))),
                             "Hands high at the top; keep the tempo.", -1);
    g_signal_emit_by_name(part(s, "notes_save"), "clicked");
    g_string_append_printf(s->report, "marked=%" G_GINT64_FORMAT "\n",
                           arcwise_window_get_swing_id(s->win));
    const char *err = arcwise_stage_get_error_text(arcwise_window_get_stage(s->win));
    g_string_append_printf(s->report, "gl_error=%s\n", err ? err : "none");
    finish(s);
    break;
  }
  default:
    break;
  }
}

static gboolean
wait_first_frame(gpointer data)
{
  Smoke *s = data;
  if (!arcwise_test_stage_ready(s->win))
    return G_SOURCE_CONTINUE;
  if (s->store)
    store_step(s);
  else
    next_step(s);
  return G_SOURCE_REMOVE;
}

void
arcwise_smoke_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution)
{
  Smoke *s = g_new0(Smoke, 1);
  s->win = win;
  s->caution = caution;
  s->dir = g_strdup(dir);
  s->report = g_string_new(NULL);
  s->store = g_getenv("ARCWISE_SMOKE_STORE") != NULL;
  g_timeout_add(50, wait_first_frame, s);
}
