/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The workbench window: library column, studio view with transport, and the swing's sheet. */
#include "arcwise-window.h"

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "arcwise-export.h"
#include "arcwise-figures.h"
#include "arcwise-library-browser.h"
#include "arcwise-smoke.h"
#include "arcwise-stage.h"
#include "arcwise-swing-item.h"
#include "arcwise-timeline.h"

struct _ArcwiseWindow {
  GtkApplicationWindow parent_instance;

  /* Template widgets */
  GtkLabel *subtitle_label;
  GtkToggleButton *library_toggle;
  GtkToggleButton *compare_toggle;
  GtkRevealer *import_revealer;
  GtkLabel *import_label;
  gboolean readonly;                  /* the source refuses writes (newer library) */
  GtkProgressBar *import_progress;
  GtkRevealer *export_revealer;
  GtkLabel *export_label;
  GtkProgressBar *export_progress;
  GtkButton *export_cancel;
  GtkButton *import_cancel;
  GtkPaned *outer_paned;
  GtkPaned *inner_paned;
  ArcwiseLibraryBrowser *library_box;
  ArcwiseStage *stage;
  GtkOverlay *stage_overlay;
  GtkWidget *view_bar;
  GtkWidget *layer_bar;
  GtkWidget *numbers_scroller;
  GtkWidget *overlay_scroller;
  GtkLabel *legend_label;
  GtkLabel *empty_label;
  GtkWidget *transport;
  GtkDropDown *speed_dropdown;
  GtkButton *play_button;
  GtkLabel *time_label;
  ArcwiseTimeline *timeline;
  GtkWidget *sheet_box;
  GtkStack *sheet_stack;
  GtkGrid *metrics_grid;
  GtkDrawingArea *speed_chart;
  GtkLabel *quality_label;
  GtkDropDown *compare_dropdown;
  GtkDropDown *sync_dropdown;
  GtkGrid *compare_grid;
  GtkLabel *compare_note;
  GtkBox *rating_box;
  GtkSwitch *reference_switch;
  GtkEntry *tags_entry;
  GtkTextView *notes_view;
  GtkButton *notes_save;

  /* Owned */
  GListModel *items;              /* every ArcwiseSwingItem of the library (the browser's) */
  GtkStringList *compare_names;
  GPtrArray *compare_items;       /* ArcwiseSwingItem*, parallel to compare_names */
  GtkToggleButton *stars[5];
  ArcwiseSwingItem *current;
  ArcwiseSwingItem *other;
  ArcwiseSwingModel *other_shifted;  /* the comparison swing moved to share the address */
  GSettings *settings;
  GCancellable *import_cancellable;
  GCancellable *load_cancellable;  /* the current swing's model, loading in a worker thread */
  guint64 path_frames;            /* stage frames drawn when the current model went on it */
  ArcwiseLibrarySource *source;
  double t_s;
  gboolean playing;
  guint tick_id;
  gint64 last_frame_us;
  gboolean presentation;
  int paned_before;
  gboolean comparing;
  gboolean updating;
  ArcwiseUnits units;
  ArcwiseExporter *exporter;
};
static void set_action_enabled(ArcwiseWindow *self, const char *name, gboolean on);


G_DEFINE_FINAL_TYPE(ArcwiseWindow, arcwise_window, GTK_TYPE_APPLICATION_WINDOW)

static const double speed_factors[] = { 1.0, 0.5, 0.25, 0.125 };

static void update_all(ArcwiseWindow *self);
static void update_compare(ArcwiseWindow *self);
static void set_time(ArcwiseWindow *self, double t);

static const ArcwiseSwingModel *
current_model(ArcwiseWindow *self)
{
  return self->current ? self->current->model : NULL;
}

static int
sync_mode(ArcwiseWindow *self)
{
  /* Dropdown: every event, impact, top, address -> only_event -1, 2, 1, 0. */
  static const int map[] = { -1, 2, 1, 0 };
  guint i = gtk_drop_down_get_selected(self->sync_dropdown);
  return i < G_N_ELEMENTS(map) ? map[i] : -1;
}

/* ---- time and playback ---------------------------------------------------------------------- */

static double
duration(ArcwiseWindow *self)
{
  const ArcwiseSwingModel *m = current_model(self);
  return m && m->n > 1 ? (double)m->t_s[m->n - 1] : 0.0;
}

static void
update_time_views(ArcwiseWindow *self)
{
  const ArcwiseSwingModel *m = current_model(self);
  double t_other = NAN;
  if (self->comparing && self->other_shifted && m)
    t_other = arcwise_swing_sync_time(m, self->other_shifted, self->t_s, sync_mode(self));
  arcwise_stage_set_times(self->stage, m ? self->t_s : (double)NAN, t_other);
  arcwise_timeline_set_time(self->timeline, self->t_s);
  g_autofree char *txt = NULL;
  if (m != NULL) {
    size_t i = arcwise_swing_model_index_at(m, self->t_s);
    ArcwiseFigure f = { "", m->speed_m_s[i], ARCWISE_FIGURE_SPEED };
    g_autofree char *sp = arcwise_figure_format(&f, self->units, FALSE);
    txt = g_strdup_printf("%.2f s · %s", self->t_s, sp);
  }
  gtk_label_set_text(self->time_label, txt ? txt : "");
  gtk_widget_queue_draw(GTK_WIDGET(self->speed_chart));
}

static void
set_time(ArcwiseWindow *self, double t)
{
  self->t_s = CLAMP(t, 0.0, duration(self));
  update_time_views(self);
}

static gboolean
tick(GtkWidget *widget, GdkFrameClock *clock, gpointer data)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(data);
  gint64 now = gdk_frame_clock_get_frame_time(clock);
  double dt = self->last_frame_us ? (double)(now - self->last_frame_us) * 1e-6 : 0.0;
  self->last_frame_us = now;
  guint si = gtk_drop_down_get_selected(self->speed_dropdown);
  double f = si < G_N_ELEMENTS(speed_factors) ? speed_factors[si] : 1.0;
  double t = self->t_s + dt * f, end = duration(self);
  if (t >= end) {
    GVariant *loop = g_action_group_get_action_state(G_ACTION_GROUP(self), "loop");
    gboolean looping = loop && g_variant_get_boolean(loop);
    g_clear_pointer(&loop, g_variant_unref);
    if (looping)
      t = 0.0;
    else {
      set_time(self, end);
      self->playing = FALSE;
      self->tick_id = 0;
      update_all(self);
      return G_SOURCE_REMOVE;
    }
  }
  set_time(self, t);
  return G_SOURCE_CONTINUE;
}

static void
set_playing(ArcwiseWindow *self, gboolean playing)
{
  if (current_model(self) == NULL)
    playing = FALSE;
  if (playing == self->playing)
    return;
  self->playing = playing;
  if (playing) {
    if (self->t_s >= duration(self) - 1e-6)
      self->t_s = 0;
    self->last_frame_us = 0;
    self->tick_id = gtk_widget_add_tick_callback(GTK_WIDGET(self->stage), tick, self, NULL);
  } else if (self->tick_id) {
    gtk_widget_remove_tick_callback(GTK_WIDGET(self->stage), self->tick_id);
    self->tick_id = 0;
  }
  ArcwiseSceneOptions *o = arcwise_stage_get_options(self->stage);
  o->dim_ahead = playing;
  arcwise_stage_options_changed(self->stage);
  update_all(self);
}

/* ---- the sheet --------------------------------------------------------------------------- */

static void
grid_clear(GtkGrid *grid)
{
  GtkWidget *c;
  while ((c = gtk_widget_get_first_child(GTK_WIDGET(grid))) != NULL)
    gtk_grid_remove(grid, c);
}

static GtkWidget *
cell(const char *text, const char *css, float xalign)
{
  GtkWidget *l = gtk_label_new(text);
  gtk_label_set_xalign(GTK_LABEL(l), xalign);
  if (css)
    gtk_widget_add_css_class(l, css);
  if (css != NULL && g_str_equal(css, "figure-label")) {
    /* Names wrap, so the numbers beside them always fit the sheet, however large the type. */
    gtk_label_set_wrap(GTK_LABEL(l), TRUE);
    gtk_label_set_wrap_mode(GTK_LABEL(l), PANGO_WRAP_WORD);
    gtk_widget_set_hexpand(l, TRUE);
  }
  return l;
}

static void
update_numbers(ArcwiseWindow *self)
{
  grid_clear(self->metrics_grid);
  const ArcwiseSwingModel *m = current_model(self);
  if (m == NULL) {
    gtk_label_set_text(self->quality_label, "");
    return;
  }
  ArcwiseFigure f[ARCWISE_N_FIGURES];
  arcwise_figures_for_model(m, f);
  for (int i = 0, row = 0; i < ARCWISE_N_FIGURES; i++) {
    if (!isfinite(f[i].value) && i >= 7)
      continue;   /* only the analysis knows these; the note below says it has not run */
    g_autofree char *v = arcwise_figure_format(&f[i], self->units, FALSE);
    gtk_grid_attach(self->metrics_grid, cell(f[i].label, "figure-label", 0), 0, row, 1, 1);
    gtk_grid_attach(self->metrics_grid, cell(v, "figure-value", 1), 1, row, 1, 1);
    row++;
  }
  g_autofree char *q = arcwise_quality_text(m, self->units);
  gtk_label_set_markup(self->quality_label, q);
}

static void
update_legend(ArcwiseWindow *self)
{
  const ArcwiseSwingModel *m = current_model(self);
  ArcwiseSceneOptions *o = arcwise_stage_get_options(self->stage);
  GString *s = g_string_new(NULL);
  if (m != NULL && o->show_band) {
    /* Which sensor carried each phase is the analysis's masking test (the fusion re-run
     * without each sensor); without an analysis that knows it, the legend says so rather
     * than guess from the fusion's raw information share. */
    g_string_append(s, "<b>Who carried the path</b>  (band = ±2σ of the fused path)\n");
    for (int p = ARCWISE_SCENE_PHASE_BACKSWING; p <= ARCWISE_SCENE_PHASE_FOLLOW_THROUGH; p++) {
      int dom = m->analysed.present ? m->analysed.dominance[p] : AW_DOMINANCE_UNKNOWN;
      float carried = dom == AW_DOMINANCE_CAMERA ? 1.0f : dom == AW_DOMINANCE_IMU ? 0.0f : 0.5f;
      const char *who = dom == AW_DOMINANCE_CAMERA ? "camera" :
                        dom == AW_DOMINANCE_IMU ? "wrist sensor" :
                        dom == AW_DOMINANCE_SHARED ? "both sensors" : "not measured";
      float rgb[3];
      arcwise_scene_sensor_rgb(carried, rgb);
      ArcwiseFigure f = { "", (double)m->phase_band_max_m[p], ARCWISE_FIGURE_LENGTH };
      g_autofree char *band = arcwise_figure_format(&f, self->units, FALSE);
      g_string_append_printf(s, "<span foreground='#%02x%02x%02x'>■</span> %s: %s, "
                             "widest ±%s\n", (int)(rgb[0] * 255), (int)(rgb[1] * 255),
                             (int)(rgb[2] * 255), arcwise_phase_label(p), who, band);
    }
  } else if (m != NULL && o->colour == ARCWISE_SCENE_COLOUR_PHASE) {
    for (int p = 0; p < ARCWISE_SCENE_N_PHASES; p++) {
      float rgb[3];
      arcwise_scene_phase_rgb(p, rgb);
      g_string_append_printf(s, "<span foreground='#%02x%02x%02x'>■</span> %s   ",
                             (int)(rgb[0] * 255), (int)(rgb[1] * 255), (int)(rgb[2] * 255),
                             arcwise_phase_label(p));
    }
    g_string_append(s, "\n");
  } else if (m != NULL) {
    ArcwiseFigure lo = { "", 0, ARCWISE_FIGURE_SPEED }, hi = { "", o->speed_max_m_s, ARCWISE_FIGURE_SPEED };
    g_autofree char *a = arcwise_figure_format(&lo, self->units, FALSE);
    g_autofree char *b = arcwise_figure_format(&hi, self->units, FALSE);
    g_string_append_printf(s, "Hand speed  %s ", a);
    for (int k = 0; k <= 8; k++) {
      float rgb[3];
      arcwise_scene_speed_rgb(k / 8.0f, rgb);
      g_string_append_printf(s, "<span foreground='#%02x%02x%02x'>█</span>", (int)(rgb[0] * 255),
                             (int)(rgb[1] * 255), (int)(rgb[2] * 255));
    }
    g_string_append_printf(s, " %s\n", b);
  }
  if (m != NULL)
    g_string_append(s, "<span foreground='#d2d4db'>╌╌</span> dashed grey: the camera had lost "
                       "the hands there");
  if (m != NULL)
    /* How to move the camera, where the coach looks: the view's own buttons only name views. */
    g_string_append(s, "\n<span size='smaller' foreground='#9aa3ad'>drag: turn · right-drag or "
                       "Shift-drag: move · scroll or pinch: zoom</span>");
  if (m != NULL && self->comparing && self->other != NULL) {
    float rgb[3];
    arcwise_scene_compare_rgb(rgb);
    g_autofree char *t = g_markup_escape_text(self->other->title ? self->other->title : "", -1);
    g_string_append_printf(s, "\n<span foreground='#%02x%02x%02x'>━━</span> laid over: %s",
                           (int)(rgb[0] * 255), (int)(rgb[1] * 255), (int)(rgb[2] * 255), t);
  }
  gtk_label_set_markup(self->legend_label, s->str);
  gtk_widget_set_visible(GTK_WIDGET(self->legend_label), s->len > 0);
  g_string_free(s, TRUE);
}

static void
update_notes(ArcwiseWindow *self)
{
  ArcwiseSwingItem *it = self->current;
  self->updating = TRUE;
  for (int i = 0; i < 5; i++) {
    gtk_toggle_button_set_active(self->stars[i], it && it->rating > i);
    gtk_widget_set_sensitive(GTK_WIDGET(self->stars[i]), it != NULL);
  }
  gtk_switch_set_active(self->reference_switch, it && it->reference);
  gtk_editable_set_text(GTK_EDITABLE(self->tags_entry), it && it->tags ? it->tags : "");
  gtk_text_buffer_set_text(gtk_text_view_get_buffer(self->notes_view),
                           it && it->notes ? it->notes : "", -1);
  self->updating = FALSE;
}

static void
update_all(ArcwiseWindow *self)
{
  const ArcwiseSwingModel *m = current_model(self);
  gtk_widget_set_visible(GTK_WIDGET(self->empty_label), m == NULL);
  if (self->current) {
    g_autofree char *sub = g_strdup_printf("%s · %s · %s", self->current->player,
                                           self->current->session, self->current->title);
    gtk_label_set_text(self->subtitle_label, sub);
  } else
    gtk_label_set_text(self->subtitle_label, "");
  gtk_button_set_icon_name(self->play_button, self->playing ? "media-playback-pause-symbolic"
                                                            : "media-playback-start-symbolic");
  update_legend(self);
  update_time_views(self);
  gtk_widget_action_set_enabled(GTK_WIDGET(self), "win.play", m != NULL);
  gtk_widget_action_set_enabled(GTK_WIDGET(self), "win.step", m != NULL);
  gtk_widget_action_set_enabled(GTK_WIDGET(self), "win.compare", m != NULL);
  set_action_enabled(self, "edit-player", self->current != NULL && !self->readonly);
}

/* ---- compare ---------------------------------------------------------------------------- */

static void
rebuild_compare_choices(ArcwiseWindow *self)
{
  /* The same player's reference swings first, then the player's other swings, then everyone
   * else's. */
  g_ptr_array_set_size(self->compare_items, 0);
  guint n = g_list_model_get_n_items(G_LIST_MODEL(self->items));
  GPtrArray *names = g_ptr_array_new_with_free_func(g_free);
  for (int pass = 0; pass < 3 && self->current; pass++)
    for (guint i = 0; i < n; i++) {
      g_autoptr(ArcwiseSwingItem) it = g_list_model_get_item(G_LIST_MODEL(self->items), i);
      if (it == self->current)
        continue;
      gboolean same = it->player_id == self->current->player_id;
      if ((pass == 0 && !(same && it->reference)) || (pass == 1 && !(same && !it->reference)) ||
          (pass == 2 && same))
        continue;
      g_ptr_array_add(self->compare_items, it);
      g_ptr_array_add(names, g_strdup_printf("%s%s · %s · %s", it->reference ? "★ " : "",
                                             it->player, it->session, it->title));
    }
  g_ptr_array_add(names, NULL);
  self->updating = TRUE;
  g_clear_object(&self->compare_names);
  self->compare_names = gtk_string_list_new((const char *const *)names->pdata);
  gtk_drop_down_set_model(self->compare_dropdown, G_LIST_MODEL(self->compare_names));
  self->updating = FALSE;
  g_ptr_array_unref(names);
}

static void
update_compare(ArcwiseWindow *self)
{
  grid_clear(self->compare_grid);
  const ArcwiseSwingModel *m = current_model(self);
  arcwise_stage_set_swing(self->stage, 1, NULL);
  g_clear_pointer(&self->other_shifted, arcwise_swing_model_free);
  self->other = NULL;
  ArcwiseSceneOptions *o = arcwise_stage_get_options(self->stage);
  o->show_compare = self->comparing;
  if (!self->comparing || m == NULL) {
    gtk_label_set_text(self->compare_note, self->comparing ? "" :
                       "Switch on Overlay (C) to lay the chosen swing over this one.");
    update_legend(self);
    update_time_views(self);
    return;
  }
  guint sel = gtk_drop_down_get_selected(self->compare_dropdown);
  if (sel == GTK_INVALID_LIST_POSITION || sel >= self->compare_items->len) {
    gtk_label_set_text(self->compare_note, "No other swing in the library to lay over.");
    update_legend(self);
    return;
  }
  ArcwiseSwingItem *it = g_ptr_array_index(self->compare_items, sel);
  g_autoptr(GError) error = NULL;
  const ArcwiseSwingModel *b = arcwise_swing_item_get_model(it, &error);
  if (b == NULL) {
    gtk_label_set_text(self->compare_note, error->message);
    return;
  }
  self->other = it;
  /* Share the hands' address position so the paths start together. */
  float pa[3], pb[3], off[3];
  arcwise_swing_model_position_at(m, m->events.takeaway_s, pa);
  arcwise_swing_model_position_at(b, b->events.takeaway_s, pb);
  for (int k = 0; k < 3; k++)
    off[k] = pa[k] - pb[k];
  self->other_shifted = arcwise_swing_model_copy_shifted(b, off);
  arcwise_stage_set_swing(self->stage, 1, self->other_shifted);

  ArcwiseFigure fa[ARCWISE_N_FIGURES], fb[ARCWISE_N_FIGURES];
  arcwise_figures_for_model(m, fa);
  arcwise_figures_for_model(b, fb);
  int row = 0;
  gtk_grid_attach(self->compare_grid, cell("", NULL, 0), 0, row, 1, 1);
  gtk_grid_attach(self->compare_grid, cell("This", "figure-head", 1), 1, row, 1, 1);
  gtk_grid_attach(self->compare_grid, cell("Laid over", "figure-head", 1), 2, row, 1, 1);
  gtk_grid_attach(self->compare_grid, cell("Difference", "figure-head", 1), 3, row, 1, 1);
  row++;
  for (int i = 0; i < ARCWISE_N_FIGURES; i++) {
    if (!isfinite(fa[i].value) && !isfinite(fb[i].value))
      continue;
    ArcwiseFigure d = fb[i];
    d.value = fb[i].value - fa[i].value;
    g_autofree char *va = arcwise_figure_format(&fa[i], self->units, FALSE);
    g_autofree char *vb = arcwise_figure_format(&fb[i], self->units, FALSE);
    g_autofree char *vd = arcwise_figure_format(&d, self->units, TRUE);
    gtk_grid_attach(self->compare_grid, cell(fa[i].label, "figure-label", 0), 0, row, 1, 1);
    gtk_grid_attach(self->compare_grid, cell(va, "figure-value", 1), 1, row, 1, 1);
    gtk_grid_attach(self->compare_grid, cell(vb, "figure-value", 1), 2, row, 1, 1);
    gtk_grid_attach(self->compare_grid, cell(vd, "figure-diff", 1), 3, row, 1, 1);
    row++;
  }
  double rms[ARCWISE_SCENE_N_PHASES], mx[ARCWISE_SCENE_N_PHASES];
  arcwise_phase_deviation(m, self->other_shifted, sync_mode(self), rms, mx);
  gtk_grid_attach(self->compare_grid, cell("Path apart, by phase", "figure-head", 0), 0, row, 2, 1);
  gtk_grid_attach(self->compare_grid, cell("typical", "figure-head", 1), 2, row, 1, 1);
  gtk_grid_attach(self->compare_grid, cell("most", "figure-head", 1), 3, row, 1, 1);
  row++;
  for (int p = ARCWISE_SCENE_PHASE_BACKSWING; p <= ARCWISE_SCENE_PHASE_FOLLOW_THROUGH; p++, row++) {
    ArcwiseFigure fr = { "", rms[p], ARCWISE_FIGURE_LENGTH }, fm = { "", mx[p], ARCWISE_FIGURE_LENGTH };
    g_autofree char *vr = arcwise_figure_format(&fr, self->units, FALSE);
    g_autofree char *vm = arcwise_figure_format(&fm, self->units, FALSE);
    gtk_grid_attach(self->compare_grid, cell(arcwise_phase_label(p), "figure-label", 0), 0, row, 2, 1);
    gtk_grid_attach(self->compare_grid, cell(vr, "figure-value", 1), 2, row, 1, 1);
    gtk_grid_attach(self->compare_grid, cell(vm, "figure-value", 1), 3, row, 1, 1);
  }
  gtk_label_set_text(self->compare_note,
                     "Both swings start from the same hand position at address and are kept in "
                     "step by their events. \"Typical\" is the root-mean-square distance between "
                     "the two hand paths over the phase.");
  update_legend(self);
  update_time_views(self);
}

/* ---- selection ------------------------------------------------------------------------------ */

/* Everything that shows the current swing's model (NULL: none, or not loaded yet). */
static void
show_model(ArcwiseWindow *self, const ArcwiseSwingModel *m)
{
  arcwise_stage_set_swing(self->stage, 0, m);
  self->path_frames = arcwise_stage_get_frames(self->stage);
  arcwise_timeline_set_model(self->timeline, m);
  self->t_s = 0;
  rebuild_compare_choices(self);
  update_numbers(self);
  update_notes(self);
  update_compare(self);
  update_all(self);
}

static void
model_loaded(GObject *source, GAsyncResult *res, gpointer data)
{
  ArcwiseSwingItem *item = ARCWISE_SWING_ITEM(source);
  g_autoptr(GError) error = NULL;
  const ArcwiseSwingModel *m = arcwise_swing_item_load_model_finish(item, res, &error);
  if (g_error_matches(error, G_IO_ERROR, G_IO_ERROR_CANCELLED))
    return;   /* another swing was picked meanwhile, or the window closed */
  ArcwiseWindow *self = data;   /* alive: its dispose cancels the load */
  g_clear_object(&self->load_cancellable);
  if (item != self->current)
    return;
  if (m == NULL)
    gtk_label_set_text(self->empty_label, error->message);
  show_model(self, m);
}

/* A load still under way is finished here on the main thread (the worker's copy is dropped
 * when it arrives), for callers that need the model now: the scripted tests' accessors. */
static void
finish_pending_load(ArcwiseWindow *self)
{
  if (self->load_cancellable == NULL)
    return;
  g_cancellable_cancel(self->load_cancellable);
  g_clear_object(&self->load_cancellable);
  g_autoptr(GError) error = NULL;
  const ArcwiseSwingModel *m = self->current ? arcwise_swing_item_get_model(self->current, &error)
                                             : NULL;
  if (self->current != NULL && m == NULL)
    gtk_label_set_text(self->empty_label, error->message);
  show_model(self, m);
}

static void
show_item(ArcwiseWindow *self, ArcwiseSwingItem *item)
{
  set_playing(self, FALSE);
  if (self->load_cancellable != NULL) {
    g_cancellable_cancel(self->load_cancellable);
    g_clear_object(&self->load_cancellable);
  }
  g_set_object(&self->current, item);
  if (item == NULL) {
    gtk_label_set_text(self->empty_label, "Pick a swing in the library, or bring in captures "
                                          "by dropping them here.");
    show_model(self, NULL);
    return;
  }
  if (item->model != NULL) {
    show_model(self, item->model);
    return;
  }
  /* The model (the stored fused path, or the demo's simulation) is made in a worker thread:
   * the studio scene, the swing's name and its marks show at once, the path when it comes. */
  gtk_label_set_text(self->empty_label, "Loading the swing…");
  show_model(self, NULL);
  self->load_cancellable = g_cancellable_new();
  arcwise_swing_item_load_model_async(item, self->load_cancellable, model_loaded, self);
}

gboolean
arcwise_window_is_loading(ArcwiseWindow *self)
{
  return self->load_cancellable != NULL;
}

gboolean
arcwise_window_swing_drawn(ArcwiseWindow *self)
{
  return self->load_cancellable == NULL &&
         arcwise_stage_get_frames(self->stage) > self->path_frames;
}

static void
on_swing_selected(ArcwiseLibraryBrowser *browser, ArcwiseSwingItem *it, ArcwiseWindow *self)
{
  if (it != self->current)
    show_item(self, it);
}

void
arcwise_window_select_index(ArcwiseWindow *self, guint index)
{
  arcwise_library_browser_select_nth(self->library_box, index);
  finish_pending_load(self);
}

guint
arcwise_window_drill(ArcwiseWindow *self, guint player, guint session)
{
  return arcwise_library_browser_open(self->library_box, player, session);
}

guint
arcwise_window_get_n_visible(ArcwiseWindow *self)
{
  return arcwise_library_browser_get_n_matching(self->library_box);
}

/* ---- choice rows ---------------------------------------------------------------------------- */

static void
choice_setup(GtkSignalListItemFactory *f, GtkListItem *li, gpointer data)
{
  GtkWidget *l = gtk_label_new(NULL);
  gtk_label_set_xalign(GTK_LABEL(l), 0);
  gtk_label_set_ellipsize(GTK_LABEL(l), PANGO_ELLIPSIZE_END);
  gtk_list_item_set_child(li, l);
}

static void
choice_bind(GtkSignalListItemFactory *f, GtkListItem *li, gpointer data)
{
  GtkStringObject *o = gtk_list_item_get_item(li);
  GtkWidget *l = gtk_list_item_get_child(li);
  gtk_label_set_text(GTK_LABEL(l), gtk_string_object_get_string(o));
  gtk_widget_set_tooltip_text(l, gtk_string_object_get_string(o));
}

ArcwiseLibraryBrowser *
arcwise_window_get_browser(ArcwiseWindow *self)
{
  return self->library_box;
}

static void
on_compare_choice(GObject *o, GParamSpec *p, ArcwiseWindow *self)
{
  if (!self->updating)
    update_compare(self);
}

static void
on_scrubbed(ArcwiseWindow *self, double t)
{
  set_playing(self, FALSE);
  set_time(self, t);
}

static void
on_view_changed(ArcwiseStage *stage, ArcwiseWindow *self)
{
  static const char *const names[] = { "face-on", "down-the-line", "above", "free" };
  ArcwiseView v = arcwise_stage_get_view(stage);
  g_action_group_change_action_state(G_ACTION_GROUP(self), "view",
                                     g_variant_new_string(names[v]));
}

/* The view buttons sit top left and the layer buttons top right; when the studio view is
 * too narrow for both on one line, the layer buttons move below the view buttons instead of
 * covering them. */
static gboolean
place_stage_bar(GtkOverlay *overlay, GtkWidget *child, GdkRectangle *alloc, ArcwiseWindow *self)
{
  if (child != self->layer_bar)
    return FALSE;
  int width = gtk_widget_get_width(GTK_WIDGET(overlay));
  int lw, lh, vw, vh;
  gtk_widget_measure(child, GTK_ORIENTATION_HORIZONTAL, -1, NULL, &lw, NULL, NULL);
  gtk_widget_measure(child, GTK_ORIENTATION_VERTICAL, lw, NULL, &lh, NULL, NULL);
  gtk_widget_measure(self->view_bar, GTK_ORIENTATION_HORIZONTAL, -1, NULL, &vw, NULL, NULL);
  gtk_widget_measure(self->view_bar, GTK_ORIENTATION_VERTICAL, vw, NULL, &vh, NULL, NULL);
  gboolean one_line = vw + lw <= width;
  alloc->width = lw;
  alloc->height = lh;
  alloc->x = MAX(0, width - lw);
  alloc->y = one_line ? 0 : vh;
  return TRUE;
}

/* ---- notes ----------------------------------------------------------------------------- */

static void
on_star(GtkToggleButton *b, ArcwiseWindow *self)
{
  if (self->updating || self->current == NULL)
    return;
  int idx = GPOINTER_TO_INT(g_object_get_data(G_OBJECT(b), "star"));
  int rating = gtk_toggle_button_get_active(b) ? idx + 1 : idx;
  if (rating == self->current->rating)
    rating = idx;   /* clicking the top star again lowers the rating by one */
  self->current->rating = rating;
  arcwise_swing_item_changed(self->current);
  if (self->source)
    arcwise_library_source_save_marks(self->source, self->current, NULL);
  update_notes(self);
}

static void
on_reference(GObject *o, GParamSpec *p, ArcwiseWindow *self)
{
  if (self->updating || self->current == NULL)
    return;
  self->current->reference = gtk_switch_get_active(self->reference_switch);
  arcwise_swing_item_changed(self->current);
  if (self->source)
    arcwise_library_source_save_marks(self->source, self->current, NULL);
}

static void
on_notes_save(ArcwiseWindow *self)
{
  if (self->current == NULL)
    return;
  GtkTextBuffer *buf = gtk_text_view_get_buffer(self->notes_view);
  GtkTextIter a, b;
  gtk_text_buffer_get_bounds(buf, &a, &b);
  g_free(self->current->notes);
  self->current->notes = gtk_text_buffer_get_text(buf, &a, &b, FALSE);
  g_free(self->current->tags);
  self->current->tags = g_strdup(gtk_editable_get_text(GTK_EDITABLE(self->tags_entry)));
  arcwise_swing_item_changed(self->current);
  g_autoptr(GError) error = NULL;
  if (self->source && !arcwise_library_source_save_marks(self->source, self->current, &error))
    g_warning("notes: %s", error->message);
}

/* ---- actions ----------------------------------------------------------------------------- */

static void
act_play(GtkWidget *w, const char *name, GVariant *param)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(w);
  set_playing(self, !self->playing);
}

static void
act_step(GtkWidget *w, const char *name, GVariant *param)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(w);
  const ArcwiseSwingModel *m = current_model(self);
  if (m == NULL)
    return;
  set_playing(self, FALSE);
  int dir = g_variant_get_int32(param);
  size_t i = arcwise_swing_model_index_at(m, self->t_s + 1e-6);
  if (dir > 0 && i + 1 < m->n)
    i++;
  else if (dir < 0 && i > 0 && (double)m->t_s[i] >= self->t_s - 1e-6)
    i--;
  set_time(self, (double)m->t_s[i]);
}

static void
act_seek_end(GtkWidget *w, const char *name, GVariant *param)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(w);
  set_playing(self, FALSE);
  set_time(self, g_variant_get_int32(param) > 0 ? duration(self) : 0.0);
}

static void
act_speed(GtkWidget *w, const char *name, GVariant *param)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(w);
  int d = g_variant_get_int32(param);   /* +1 faster, -1 slower */
  int i = (int)gtk_drop_down_get_selected(self->speed_dropdown) - d;
  gtk_drop_down_set_selected(self->speed_dropdown, (guint)CLAMP(i, 0, 3));
}

static void
act_swing(GtkWidget *w, const char *name, GVariant *param)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(w);
  arcwise_library_browser_step(self->library_box, g_variant_get_int32(param));
}

static void
act_search(GtkWidget *w, const char *name, GVariant *param)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(w);
  gtk_toggle_button_set_active(self->library_toggle, TRUE);
  arcwise_library_browser_focus_search(self->library_box);
}

static void
act_toggle_library(GtkWidget *w, const char *name, GVariant *param)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(w);
  gtk_toggle_button_set_active(self->library_toggle,
                               !gtk_toggle_button_get_active(self->library_toggle));
}

/* Stateful actions live in a GSimpleActionGroup on the window ("win."). */
static void
change_view(GSimpleAction *a, GVariant *v, gpointer data)
{
  ArcwiseWindow *self = data;
  const char *s = g_variant_get_string(v, NULL);
  ArcwiseView view = g_str_equal(s, "down-the-line") ? ARCWISE_VIEW_DOWN_THE_LINE :
                     g_str_equal(s, "above") ? ARCWISE_VIEW_ABOVE :
                     g_str_equal(s, "free") ? ARCWISE_VIEW_FREE : ARCWISE_VIEW_FACE_ON;
  g_simple_action_set_state(a, v);
  if (arcwise_stage_get_view(self->stage) != view || view != ARCWISE_VIEW_FREE)
    arcwise_stage_set_view(self->stage, view);
}

static void
change_colour(GSimpleAction *a, GVariant *v, gpointer data)
{
  ArcwiseWindow *self = data;
  g_simple_action_set_state(a, v);
  ArcwiseSceneOptions *o = arcwise_stage_get_options(self->stage);
  o->colour = g_str_equal(g_variant_get_string(v, NULL), "phase") ? ARCWISE_SCENE_COLOUR_PHASE
                                                                  : ARCWISE_SCENE_COLOUR_SPEED;
  arcwise_stage_options_changed(self->stage);
  update_legend(self);
  if (self->settings)
    g_settings_set_string(self->settings, "colour-by", g_variant_get_string(v, NULL));
}

static void
change_flag(GSimpleAction *a, GVariant *v, gpointer data)
{
  ArcwiseWindow *self = data;
  g_simple_action_set_state(a, v);
  const char *name = g_action_get_name(G_ACTION(a));
  gboolean on = g_variant_get_boolean(v);
  ArcwiseSceneOptions *o = arcwise_stage_get_options(self->stage);
  if (g_str_equal(name, "trust"))
    o->show_band = on;
  else if (g_str_equal(name, "club"))
    o->show_club = on;
  else if (g_str_equal(name, "compare")) {
    self->comparing = on;
    if (on)
      gtk_stack_set_visible_child_name(self->sheet_stack, "overlay");
    update_compare(self);
  } else if (g_str_equal(name, "presentation")) {
    self->presentation = on;
    if (on) {
      gtk_widget_add_css_class(GTK_WIDGET(self), "presentation");
      gtk_toggle_button_set_active(self->library_toggle, FALSE);
      self->paned_before = gtk_paned_get_position(self->inner_paned);
      gtk_window_fullscreen(GTK_WINDOW(self));
      /* The studio view takes what the library had, and more. */
      int w = gtk_widget_get_width(GTK_WIDGET(self));
      gtk_paned_set_position(self->inner_paned, MAX(self->paned_before, w - 480));
    } else {
      gtk_widget_remove_css_class(GTK_WIDGET(self), "presentation");
      gtk_toggle_button_set_active(self->library_toggle, TRUE);
      gtk_window_unfullscreen(GTK_WINDOW(self));
      if (self->paned_before > 0)
        gtk_paned_set_position(self->inner_paned, self->paned_before);
    }
  }
  if (self->settings && (g_str_equal(name, "trust") || g_str_equal(name, "club") ||
                         g_str_equal(name, "loop")))
    g_settings_set_boolean(self->settings, g_str_equal(name, "trust") ? "show-trust" :
                           g_str_equal(name, "club") ? "show-club" : "loop", on);
  arcwise_stage_options_changed(self->stage);
  update_legend(self);
}

static void
toggle_flag(GSimpleAction *a, GVariant *p, gpointer data)
{
  GVariant *s = g_action_get_state(G_ACTION(a));
  g_action_change_state(G_ACTION(a), g_variant_new_boolean(!g_variant_get_boolean(s)));
  g_variant_unref(s);
}

static void
leave_presentation(GSimpleAction *a, GVariant *p, gpointer data)
{
  ArcwiseWindow *self = data;
  if (self->presentation)
    g_action_group_change_action_state(G_ACTION_GROUP(self), "presentation",
                                       g_variant_new_boolean(FALSE));
}

static void
cycle_colour(GSimpleAction *a, GVariant *p, gpointer data)
{
  ArcwiseWindow *self = data;
  ArcwiseSceneOptions *o = arcwise_stage_get_options(self->stage);
  g_action_group_change_action_state(G_ACTION_GROUP(self), "colour",
      g_variant_new_string(o->colour == ARCWISE_SCENE_COLOUR_PHASE ? "speed" : "phase"));
}

static void
act_import(GSimpleAction *a, GVariant *p, gpointer data);
static void
act_edit_player(GSimpleAction *a, GVariant *p, gpointer data);

/* ---- exports ------------------------------------------------------------------------------ */

static char *
state_string(ArcwiseWindow *self, const char *action)
{
  GVariant *v = g_action_group_get_action_state(G_ACTION_GROUP(self), action);
  char *s = g_variant_dup_string(v, NULL);
  g_variant_unref(v);
  return s;
}

/* What the studio view shows now, for the exporter (which copies it). */
static gboolean
export_scene(ArcwiseWindow *self, ArcwiseExportScene *sc, char **view)
{
  memset(sc, 0, sizeof *sc);
  ArcwiseSwingItem *it = self->current;
  sc->a = current_model(self);
  sc->b = self->comparing && self->other_shifted ? self->other_shifted : NULL;
  arcwise_stage_get_camera(self->stage, &sc->camera);
  sc->options = *arcwise_stage_get_options(self->stage);
  *view = state_string(self, "view");
  sc->view_name = *view;
  sc->imperial = self->units == ARCWISE_UNITS_IMPERIAL;
  if (it != NULL) {
    sc->player = it->player;
    sc->date = it->session;
    sc->title = it->title;
    sc->swing_id = it->swing_id;
    sc->session_id = it->session_id;
  }
  sc->library_path = arcwise_library_source_get_path(self->source);
  sc->view_width = gtk_widget_get_width(GTK_WIDGET(self->stage));
  sc->view_height = gtk_widget_get_height(GTK_WIDGET(self->stage));
  return sc->a != NULL;
}

static void
act_export(GSimpleAction *a, GVariant *p, gpointer data)
{
  ArcwiseWindow *self = data;
  const char *name = g_action_get_name(G_ACTION(a));
  ArcwiseExportScene sc;
  g_autofree char *view = NULL;
  export_scene(self, &sc, &view);
  ArcwiseExportChoice ch = { 0 };
  const char *path = NULL;
  if (g_str_equal(name, "export-clip")) {
    g_autofree char *size = state_string(self, "export-clip-size");
    g_autofree char *slow = state_string(self, "export-slowmo");
    ch.kind = ARCWISE_EXPORT_CLIP;
    gboolean hd = g_str_equal(size, "1080p");
    ch.width = hd ? 1920 : 1280;
    ch.height = hd ? 1080 : 720;
    ch.slowmo = g_ascii_strtod(slow, NULL);
    path = g_variant_get_string(p, NULL);
  } else if (g_str_equal(name, "export-still")) {
    g_autofree char *size = state_string(self, "export-still-size");
    ch.kind = ARCWISE_EXPORT_STILL;
    if (sscanf(size, "%dx%d", &ch.width, &ch.height) != 2) {
      /* As on screen, in device pixels. */
      int scale = gtk_widget_get_scale_factor(GTK_WIDGET(self->stage));
      ch.width = sc.view_width * scale;
      ch.height = sc.view_height * scale;
    }
    path = g_variant_get_string(p, NULL);
  } else if (g_str_equal(name, "export-numbers")) {
    const char *fmt, *scope;
    g_variant_get(p, "(&s&s&s)", &fmt, &scope, &path);
    ch.kind = ARCWISE_EXPORT_NUMBERS;
    ch.json = g_str_equal(fmt, "json");
    ch.scope = scope;
  } else {
    ch.kind = ARCWISE_EXPORT_REPORT;
    path = g_variant_get_string(p, NULL);
  }
  arcwise_exporter_start(self->exporter, &sc, &ch, path);
}

static void
change_export_choice(GSimpleAction *a, GVariant *v, gpointer data)
{
  g_simple_action_set_state(a, v);
}

static const GActionEntry win_entries[] = {
  { "view", NULL, "s", "'face-on'", change_view, { 0 } },
  { "colour", NULL, "s", "'speed'", change_colour, { 0 } },
  { "colour-cycle", cycle_colour, NULL, NULL, NULL, { 0 } },
  { "trust", toggle_flag, NULL, "false", change_flag, { 0 } },
  { "club", toggle_flag, NULL, "false", change_flag, { 0 } },
  { "loop", toggle_flag, NULL, "false", change_flag, { 0 } },
  { "compare", toggle_flag, NULL, "false", change_flag, { 0 } },
  { "presentation", toggle_flag, NULL, "false", change_flag, { 0 } },
  { "leave-presentation", leave_presentation, NULL, NULL, NULL, { 0 } },
  { "import", act_import, NULL, NULL, NULL, { 0 } },
  { "edit-player", act_edit_player, NULL, NULL, NULL, { 0 } },
  { "export-clip", act_export, "s", NULL, NULL, { 0 } },
  { "export-still", act_export, "s", NULL, NULL, { 0 } },
  { "export-numbers", act_export, "(sss)", NULL, NULL, { 0 } },
  { "export-report", act_export, "s", NULL, NULL, { 0 } },
  { "export-clip-size", NULL, "s", "'720p'", change_export_choice, { 0 } },
  { "export-slowmo", NULL, "s", "'4'", change_export_choice, { 0 } },
  { "export-still-size", NULL, "s", "'view'", change_export_choice, { 0 } },
};

/* ---- keys -------------------------------------------------------------------------------- */

/* Single keys act on the studio view unless the user is typing (search, tags, notes). */
static gboolean
typing(ArcwiseWindow *self)
{
  GtkWidget *f = gtk_root_get_focus(GTK_ROOT(self));
  for (; f != NULL; f = gtk_widget_get_parent(f))
    if (GTK_IS_EDITABLE(f) || GTK_IS_TEXT_VIEW(f))
      return TRUE;
  return FALSE;
}

static gboolean
key_action(GtkWidget *widget, GVariant *args, gpointer data)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(widget);
  const char *action;
  g_autoptr(GVariant) target = NULL;
  g_variant_get(args, "(&smv)", &action, &target);
  if (typing(self))
    return FALSE;
  return gtk_widget_activate_action_variant(widget, action, target);
}

typedef struct {
  guint key;
  GdkModifierType mods;
  const char *action;
  const char *target;       /* GVariant text or NULL */
} KeyBinding;

/* Every key of the window; the shortcuts window (help-overlay.ui) lists the same. */
static const KeyBinding keys[] = {
  { GDK_KEY_space, 0, "win.play", NULL },
  { GDK_KEY_k, 0, "win.play", NULL },
  { GDK_KEY_Left, 0, "win.step", "-1" },
  { GDK_KEY_Right, 0, "win.step", "1" },
  { GDK_KEY_comma, 0, "win.step", "-1" },
  { GDK_KEY_period, 0, "win.step", "1" },
  { GDK_KEY_Home, 0, "win.seek", "-1" },
  { GDK_KEY_End, 0, "win.seek", "1" },
  { GDK_KEY_bracketleft, 0, "win.speed", "-1" },
  { GDK_KEY_bracketright, 0, "win.speed", "1" },
  { GDK_KEY_l, 0, "win.loop", NULL },
  { GDK_KEY_Page_Up, 0, "win.swing", "-1" },
  { GDK_KEY_Page_Down, 0, "win.swing", "1" },
  { GDK_KEY_Up, GDK_ALT_MASK, "win.swing", "-1" },
  { GDK_KEY_Down, GDK_ALT_MASK, "win.swing", "1" },
  { GDK_KEY_1, 0, "win.view", "'face-on'" },
  { GDK_KEY_2, 0, "win.view", "'down-the-line'" },
  { GDK_KEY_3, 0, "win.view", "'above'" },
  { GDK_KEY_4, 0, "win.view", "'free'" },
  { GDK_KEY_p, 0, "win.colour-cycle", NULL },
  { GDK_KEY_t, 0, "win.trust", NULL },
  { GDK_KEY_c, 0, "win.compare", NULL },
  { GDK_KEY_h, 0, "win.club", NULL },
  { GDK_KEY_F5, 0, "win.presentation", NULL },
  { GDK_KEY_F11, 0, "win.presentation", NULL },
  { GDK_KEY_Escape, 0, "win.leave-presentation", NULL },
  { GDK_KEY_F9, 0, "win.toggle-library", NULL },
};

char **
arcwise_window_list_keys(void)
{
  GPtrArray *out = g_ptr_array_new();
  for (size_t i = 0; i < G_N_ELEMENTS(keys); i++)
    g_ptr_array_add(out, gtk_accelerator_name(keys[i].key, keys[i].mods));
  g_ptr_array_add(out, NULL);
  return (char **)g_ptr_array_free(out, FALSE);
}

static void
install_keys(ArcwiseWindow *self)
{
  GtkEventController *c = gtk_shortcut_controller_new();
  gtk_event_controller_set_propagation_phase(c, GTK_PHASE_CAPTURE);
  for (size_t i = 0; i < G_N_ELEMENTS(keys); i++) {
    GVariant *target = keys[i].target ? g_variant_parse(NULL, keys[i].target, NULL, NULL, NULL) : NULL;
    GVariant *args = g_variant_new("(smv)", keys[i].action, target);
    GtkShortcut *s = gtk_shortcut_new(gtk_keyval_trigger_new(keys[i].key, keys[i].mods),
                                      gtk_callback_action_new(key_action, NULL, NULL));
    gtk_shortcut_set_arguments(s, args);
    gtk_shortcut_controller_add_shortcut(GTK_SHORTCUT_CONTROLLER(c), s);
  }
  gtk_widget_add_controller(GTK_WIDGET(self), c);
}

/* ---- import (drag and drop, file chooser) ------------------------------------------------- */

static void
import_progress(guint done, guint total, const char *what, gpointer data)
{
  ArcwiseWindow *self = data;
  /* After Stop the workers only skip what is left: say so instead of filling the bar. */
  if (self->import_cancellable != NULL && g_cancellable_is_cancelled(self->import_cancellable))
    return;
  g_autofree char *txt = g_strdup_printf("Bringing in captures: %u of %u — %s", done, total,
                                         what ? what : "");
  gtk_label_set_text(self->import_label, txt);
  gtk_progress_bar_set_fraction(self->import_progress, total ? (double)done / total : 0.0);
}

static gboolean
hide_import(gpointer data)
{
  ArcwiseWindow *self = data;
  if (self->import_cancellable == NULL && self->items != NULL)
    gtk_revealer_set_reveal_child(self->import_revealer, FALSE);
  return G_SOURCE_REMOVE;
}

static void
import_done(GObject *src, GAsyncResult *res, gpointer data)
{
  ArcwiseWindow *self = data;
  g_autoptr(GError) error = NULL;
  g_autofree char *summary = arcwise_library_source_import_finish(self->source, res, &error);
  g_clear_object(&self->import_cancellable);
  /* The import is over: the bar's button now only puts the bar away. */
  gtk_widget_set_sensitive(GTK_WIDGET(self->import_cancel), TRUE);
  gtk_button_set_label(self->import_cancel, "Close");
  if (summary == NULL) {
    /* The store writes an import in one transaction at the end: nothing of it was kept. */
    g_autofree char *txt =
      g_error_matches(error, G_IO_ERROR, G_IO_ERROR_CANCELLED)
        ? g_strdup("Stopped: nothing was brought in, the library is as it was.")
        : g_strdup_printf("Nothing was brought in: %s", error->message);
    gtk_label_set_text(self->import_label, txt);
    gtk_progress_bar_set_fraction(self->import_progress, 0.0);
  } else {
    gtk_label_set_text(self->import_label, summary);
    gtk_progress_bar_set_fraction(self->import_progress, 1.0);
    arcwise_window_reload(self);
  }
  g_timeout_add_seconds_full(G_PRIORITY_DEFAULT, 8, hide_import, g_object_ref(self), g_object_unref);
  g_object_unref(self);
}

void
arcwise_window_import_files(ArcwiseWindow *self, GFile **files, guint n)
{
  if (self->source == NULL || self->readonly || self->import_cancellable != NULL)
    return;
  self->import_cancellable = g_cancellable_new();
  gtk_button_set_label(self->import_cancel, "Stop");
  gtk_label_set_text(self->import_label, "Reading the captures…");
  gtk_progress_bar_set_fraction(self->import_progress, 0);
  gtk_revealer_set_reveal_child(self->import_revealer, TRUE);
  /* Into the player of the selected row (player, session or swing), else the swing shown. */
  gint64 into = arcwise_library_browser_get_import_player(self->library_box);
  if (into == 0 && self->current != NULL)
    into = self->current->player_id;
  arcwise_library_source_import_async(self->source, files, n, into,
                                      self->import_cancellable,
                                      import_progress, self, import_done, g_object_ref(self));
}

static void
on_import_cancel(ArcwiseWindow *self)
{
  if (self->import_cancellable) {
    g_cancellable_cancel(self->import_cancellable);
    gtk_label_set_text(self->import_label, "Stopping…");
    gtk_widget_set_sensitive(GTK_WIDGET(self->import_cancel), FALSE);
  } else
    gtk_revealer_set_reveal_child(self->import_revealer, FALSE);
}

gboolean
arcwise_window_is_importing(ArcwiseWindow *self)
{
  return self->import_cancellable != NULL;
}

static gboolean
on_drop(GtkDropTarget *t, const GValue *value, double x, double y, ArcwiseWindow *self)
{
  if (!G_VALUE_HOLDS(value, GDK_TYPE_FILE_LIST))
    return FALSE;
  GSList *list = gdk_file_list_get_files(g_value_get_boxed(value));   /* files borrowed */
  GPtrArray *files = g_ptr_array_new();
  for (GSList *l = list; l; l = l->next)
    g_ptr_array_add(files, l->data);
  g_slist_free(list);
  gboolean taken = files->len > 0 && self->source != NULL && !self->readonly &&
                   self->import_cancellable == NULL;
  if (taken)
    arcwise_window_import_files(self, (GFile **)files->pdata, files->len);
  g_ptr_array_unref(files);
  return taken;
}

static void
chooser_done(GtkNativeDialog *d, int response, ArcwiseWindow *self)
{
  if (response == GTK_RESPONSE_ACCEPT) {
    g_autoptr(GListModel) files = gtk_file_chooser_get_files(GTK_FILE_CHOOSER(d));
    guint n = g_list_model_get_n_items(files);
    GFile **arr = g_new0(GFile *, n + 1);
    for (guint i = 0; i < n; i++)
      arr[i] = g_list_model_get_item(files, i);
    arcwise_window_import_files(self, arr, n);
    for (guint i = 0; i < n; i++)
      g_object_unref(arr[i]);
    g_free(arr);
  }
  gtk_native_dialog_destroy(d);
  g_object_unref(d);
}

static void
act_import(GSimpleAction *a, GVariant *p, gpointer data)
{
  ArcwiseWindow *self = data;
  G_GNUC_BEGIN_IGNORE_DEPRECATIONS
  GtkFileChooserNative *d = gtk_file_chooser_native_new("Bring In Captures", GTK_WINDOW(self),
                                                        GTK_FILE_CHOOSER_ACTION_SELECT_FOLDER,
                                                        "_Bring In", "_Cancel");
  gtk_file_chooser_set_select_multiple(GTK_FILE_CHOOSER(d), TRUE);
  G_GNUC_END_IGNORE_DEPRECATIONS
  g_signal_connect(d, "response", G_CALLBACK(chooser_done), self);
  gtk_native_dialog_show(GTK_NATIVE_DIALOG(d));
}

static void
act_edit_player(GSimpleAction *a, GVariant *p, gpointer data)
{
  ArcwiseWindow *self = data;
  if (self->current && self->source)
    arcwise_player_editor_present(GTK_WINDOW(self), self->source, self->current->player_id,
                                  (GCallback)arcwise_window_reload, self);
}

/* ---- library -------------------------------------------------------------------------------- */

void
arcwise_window_reload(ArcwiseWindow *self)
{
  g_autoptr(GError) error = NULL;
  arcwise_library_browser_set_source(self->library_box, self->source);
  arcwise_library_browser_set_readonly(self->library_box, self->readonly);
  g_clear_object(&self->current);
  if (!arcwise_library_browser_reload(self->library_box, &error))
    g_warning("library: %s", error->message);
  /* The browser selected the swing (the same one when it is still there); without any, an
   * empty stage. */
  ArcwiseSwingItem *it = arcwise_library_browser_get_selected(self->library_box);
  if (it != self->current || it == NULL)
    show_item(self, it);
}

static void
set_action_enabled(ArcwiseWindow *self, const char *name, gboolean on)
{
  GAction *a = g_action_map_lookup_action(G_ACTION_MAP(self), name);
  if (G_IS_SIMPLE_ACTION(a))
    g_simple_action_set_enabled(G_SIMPLE_ACTION(a), on);
}

void
arcwise_window_set_source(ArcwiseWindow *self, ArcwiseLibrarySource *source)
{
  self->source = source;
  self->readonly = source != NULL && arcwise_library_source_is_readonly(source);
  if (self->readonly) {
    /* Say it once, plainly, where import news appears; the coach can dismiss it. */
    gtk_label_set_text(self->import_label,
                       "This library was made by a newer version of Arcwise, so it is open "
                       "read-only: every swing can be viewed, but notes, ratings, imports and "
                       "player changes are not saved.");
    gtk_widget_set_visible(GTK_WIDGET(self->import_progress), FALSE);
    gtk_button_set_label(self->import_cancel, "Close");
    gtk_revealer_set_reveal_child(self->import_revealer, TRUE);
  }
  set_action_enabled(self, "import", !self->readonly);
  gtk_widget_set_sensitive(GTK_WIDGET(self->notes_view), !self->readonly);
  gtk_widget_set_sensitive(GTK_WIDGET(self->tags_entry), !self->readonly);
  gtk_widget_set_sensitive(GTK_WIDGET(self->rating_box), !self->readonly);
  gtk_widget_set_sensitive(GTK_WIDGET(self->reference_switch), !self->readonly);
  arcwise_window_reload(self);
}

/* ---- units ------------------------------------------------------------------------------ */

static void
units_changed(GSettings *settings, const char *key, ArcwiseWindow *self)
{
  g_autofree char *u = g_settings_get_string(settings, "units");
  self->units = g_str_equal(u, "imperial") ? ARCWISE_UNITS_IMPERIAL : ARCWISE_UNITS_METRIC;
  update_numbers(self);
  update_compare(self);
  update_all(self);
  /* Row labels show speeds too. */
  arcwise_library_browser_set_units(self->library_box, self->units);
}

/* ---- class ----------------------------------------------------------------------------------- */

static void
draw_chart(GtkDrawingArea *area, cairo_t *cr, int w, int h, gpointer data)
{
  ArcwiseWindow *self = data;
  double font = self->presentation ? 16 : 12;
  arcwise_draw_speed_chart(cr, w, h, current_model(self),
                           self->comparing ? self->other_shifted : NULL, sync_mode(self),
                           self->t_s, self->units, font);
}

/* Once the window has its size, give the sheet a fixed share and the studio view the rest. */
static gboolean
place_sheet(GtkWidget *paned, GdkFrameClock *clock, gpointer data)
{
  int w = gtk_widget_get_width(paned);
  if (w <= 0)
    return G_SOURCE_CONTINUE;
  gtk_paned_set_position(GTK_PANED(paned), MAX(320, w - 420));
  return G_SOURCE_REMOVE;
}

static void
arcwise_window_dispose(GObject *object)
{
  ArcwiseWindow *self = ARCWISE_WINDOW(object);
  if (self->tick_id) {
    gtk_widget_remove_tick_callback(GTK_WIDGET(self->stage), self->tick_id);
    self->tick_id = 0;
  }
  if (self->import_cancellable)
    g_cancellable_cancel(self->import_cancellable);
  if (self->load_cancellable) {
    g_cancellable_cancel(self->load_cancellable);
    g_clear_object(&self->load_cancellable);
  }
  g_clear_pointer(&self->exporter, arcwise_exporter_free);
  if (self->stage) {
    arcwise_stage_set_swing(self->stage, 0, NULL);
    arcwise_stage_set_swing(self->stage, 1, NULL);
  }
  if (self->timeline)
    arcwise_timeline_set_model(self->timeline, NULL);
  g_clear_object(&self->current);
  g_clear_pointer(&self->other_shifted, arcwise_swing_model_free);
  g_clear_pointer(&self->compare_items, g_ptr_array_unref);
  g_clear_object(&self->compare_names);
  self->items = NULL;   /* the browser's */
  g_clear_object(&self->settings);
  gtk_widget_dispose_template(GTK_WIDGET(self), ARCWISE_TYPE_WINDOW);
  G_OBJECT_CLASS(arcwise_window_parent_class)->dispose(object);
}

static void
arcwise_window_class_init(ArcwiseWindowClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS(klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS(klass);
  object_class->dispose = arcwise_window_dispose;
  g_type_ensure(ARCWISE_TYPE_STAGE);
  g_type_ensure(ARCWISE_TYPE_TIMELINE);
  g_type_ensure(ARCWISE_TYPE_LIBRARY_BROWSER);
  gtk_widget_class_set_template_from_resource(widget_class,
                                              "/org/arcwise/Workbench/arcwise-window.ui");
#define BIND(x) gtk_widget_class_bind_template_child(widget_class, ArcwiseWindow, x)
  BIND(subtitle_label); BIND(library_toggle); BIND(compare_toggle); BIND(import_revealer);
  BIND(export_revealer); BIND(export_label); BIND(export_progress); BIND(export_cancel);
  BIND(import_label); BIND(import_progress); BIND(import_cancel); BIND(outer_paned); BIND(inner_paned);
  BIND(library_box); BIND(stage); BIND(view_bar); BIND(legend_label);
  BIND(stage_overlay); BIND(layer_bar); BIND(numbers_scroller); BIND(overlay_scroller);
  BIND(empty_label); BIND(transport); BIND(play_button); BIND(speed_dropdown); BIND(time_label); BIND(timeline);
  BIND(sheet_box); BIND(sheet_stack); BIND(metrics_grid); BIND(speed_chart);
  BIND(quality_label); BIND(compare_dropdown); BIND(sync_dropdown); BIND(compare_grid);
  BIND(compare_note); BIND(rating_box); BIND(reference_switch); BIND(tags_entry);
  BIND(notes_view); BIND(notes_save);
#undef BIND
  gtk_widget_class_bind_template_callback(widget_class, on_scrubbed);
  gtk_widget_class_bind_template_callback(widget_class, on_notes_save);
  gtk_widget_class_bind_template_callback(widget_class, on_import_cancel);

  gtk_widget_class_install_action(widget_class, "win.play", NULL, act_play);
  gtk_widget_class_install_action(widget_class, "win.step", "i", act_step);
  gtk_widget_class_install_action(widget_class, "win.seek", "i", act_seek_end);
  gtk_widget_class_install_action(widget_class, "win.speed", "i", act_speed);
  gtk_widget_class_install_action(widget_class, "win.swing", "i", act_swing);
  gtk_widget_class_install_action(widget_class, "win.search", NULL, act_search);
  gtk_widget_class_install_action(widget_class, "win.toggle-library", NULL, act_toggle_library);
  gtk_widget_class_add_binding_action(widget_class, GDK_KEY_f, GDK_CONTROL_MASK, "win.search", NULL);
  gtk_widget_class_add_binding_action(widget_class, GDK_KEY_o, GDK_CONTROL_MASK, "win.import", NULL);
}

static void
arcwise_window_init(ArcwiseWindow *self)
{
  gtk_widget_init_template(GTK_WIDGET(self));
  self->units = ARCWISE_UNITS_METRIC;
  g_action_map_add_action_entries(G_ACTION_MAP(self), win_entries, G_N_ELEMENTS(win_entries), self);
  install_keys(self);
  self->exporter = arcwise_exporter_new(GTK_WINDOW(self), self->export_revealer,
                                        self->export_label, self->export_progress,
                                        self->export_cancel);

  self->items = arcwise_library_browser_get_swings(self->library_box);
  g_signal_connect(self->library_box, "swing-selected", G_CALLBACK(on_swing_selected), self);
  g_signal_connect_swapped(self->library_box, "player-saved", G_CALLBACK(arcwise_window_reload),
                           self);
  self->compare_items = g_ptr_array_new();
  g_signal_connect(self->compare_dropdown, "notify::selected", G_CALLBACK(on_compare_choice), self);
  g_signal_connect(self->sync_dropdown, "notify::selected", G_CALLBACK(on_compare_choice), self);
  g_signal_connect(self->stage, "view-changed", G_CALLBACK(on_view_changed), self);
  g_signal_connect(self->stage_overlay, "get-child-position", G_CALLBACK(place_stage_bar), self);
  /* Long swing names and sync choices shorten with an ellipsis instead of widening the sheet. */
  GtkListItemFactory *ellipsized = gtk_signal_list_item_factory_new();
  g_signal_connect(ellipsized, "setup", G_CALLBACK(choice_setup), NULL);
  g_signal_connect(ellipsized, "bind", G_CALLBACK(choice_bind), NULL);
  gtk_drop_down_set_factory(self->compare_dropdown, ellipsized);
  gtk_drop_down_set_factory(self->sync_dropdown, ellipsized);
  g_object_unref(ellipsized);
  g_object_bind_property(self->library_toggle, "active", self->library_box, "visible",
                         G_BINDING_SYNC_CREATE);
  gtk_drawing_area_set_draw_func(self->speed_chart, draw_chart, self, NULL);

  for (int i = 0; i < 5; i++) {
    GtkWidget *b = gtk_toggle_button_new_with_label("★");
    gtk_widget_add_css_class(b, "star");
    gtk_widget_add_css_class(b, "flat");
    g_autofree char *tip = g_strdup_printf("%d of 5", i + 1);
    gtk_widget_set_tooltip_text(b, tip);
    g_object_set_data(G_OBJECT(b), "star", GINT_TO_POINTER(i));
    g_signal_connect(b, "toggled", G_CALLBACK(on_star), self);
    gtk_box_append(self->rating_box, b);
    self->stars[i] = GTK_TOGGLE_BUTTON(b);
  }
  g_signal_connect(self->reference_switch, "notify::active", G_CALLBACK(on_reference), self);

  GtkDropTarget *drop = gtk_drop_target_new(GDK_TYPE_FILE_LIST, GDK_ACTION_COPY);
  g_signal_connect(drop, "drop", G_CALLBACK(on_drop), self);
  gtk_widget_add_controller(GTK_WIDGET(self), GTK_EVENT_CONTROLLER(drop));

  gtk_widget_add_tick_callback(GTK_WIDGET(self->inner_paned), place_sheet, self, NULL);
  show_item(self, NULL);
}

ArcwiseWindow *
arcwise_window_new(ArcwiseApplication *app)
{
  ArcwiseWindow *self = g_object_new(ARCWISE_TYPE_WINDOW, "application", app, NULL);
  self->settings = arcwise_application_get_settings(app);
  if (self->settings != NULL) {
    g_object_ref(self->settings);
    g_signal_connect_object(self->settings, "changed::units", G_CALLBACK(units_changed), self, 0);
    units_changed(self->settings, "units", self);
    g_autofree char *colour = g_settings_get_string(self->settings, "colour-by");
    g_action_group_change_action_state(G_ACTION_GROUP(self), "colour", g_variant_new_string(colour));
    g_action_group_change_action_state(G_ACTION_GROUP(self), "trust",
        g_variant_new_boolean(g_settings_get_boolean(self->settings, "show-trust")));
    g_action_group_change_action_state(G_ACTION_GROUP(self), "club",
        g_variant_new_boolean(g_settings_get_boolean(self->settings, "show-club")));
    g_action_group_change_action_state(G_ACTION_GROUP(self), "loop",
        g_variant_new_boolean(g_settings_get_boolean(self->settings, "loop")));
  }
  return self;
}

/* ---- accessors for the smoke test hook ------------------------------------------------- */

double
arcwise_window_get_duration(ArcwiseWindow *self)
{
  finish_pending_load(self);
  return duration(self);
}

ArcwiseExporter *
arcwise_window_get_exporter(ArcwiseWindow *self)
{
  return self->exporter;
}

gint64
arcwise_window_get_swing_id(ArcwiseWindow *self)
{
  return self->current ? self->current->swing_id : 0;
}

const ArcwiseSwingModel *
arcwise_window_get_model(ArcwiseWindow *self)
{
  finish_pending_load(self);
  return current_model(self);
}

ArcwiseStage *
arcwise_window_get_stage(ArcwiseWindow *self)
{
  return self->stage;
}

double
arcwise_window_get_time(ArcwiseWindow *self)
{
  return self->t_s;
}

gboolean
arcwise_window_is_playing(ArcwiseWindow *self)
{
  return self->playing;
}

guint
arcwise_window_get_compare_rows(ArcwiseWindow *self)
{
  guint n = 0;
  for (GtkWidget *c = gtk_widget_get_first_child(GTK_WIDGET(self->compare_grid)); c;
       c = gtk_widget_get_next_sibling(c))
    n++;
  return n;
}

static guint
clipped_in(GtkWidget *grid, GtkWidget *scroller)
{
  /* What the coach can see of the page: the scroller, itself cut at the window's edge when
   * the sheet asks for more room than the window has. */
  GtkWidget *win = GTK_WIDGET(gtk_widget_get_root(grid));
  graphene_rect_t page;
  if (win == NULL || !gtk_widget_compute_bounds(scroller, win, &page))
    return 0;
  float left = MAX(page.origin.x, 0.0f);
  float right = MIN(page.origin.x + page.size.width, (float)gtk_widget_get_width(win));
  guint n = 0;
  for (GtkWidget *c = gtk_widget_get_first_child(grid); c; c = gtk_widget_get_next_sibling(c)) {
    graphene_rect_t r;
    if (!gtk_widget_compute_bounds(c, win, &r))
      continue;
    if (r.origin.x < left - 0.5f || r.origin.x + r.size.width > right + 0.5f)
      n++;
  }
  return n;
}

guint
arcwise_window_count_clipped(ArcwiseWindow *self)
{
  const char *page = gtk_stack_get_visible_child_name(self->sheet_stack);
  if (g_strcmp0(page, "numbers") == 0)
    return clipped_in(GTK_WIDGET(self->metrics_grid), self->numbers_scroller);
  if (g_strcmp0(page, "overlay") == 0)
    return clipped_in(GTK_WIDGET(self->compare_grid), self->overlay_scroller);
  return 0;
}

gboolean
arcwise_window_bars_overlap(ArcwiseWindow *self)
{
  graphene_rect_t a, b, both;
  if (!gtk_widget_compute_bounds(self->view_bar, GTK_WIDGET(self->stage_overlay), &a) ||
      !gtk_widget_compute_bounds(self->layer_bar, GTK_WIDGET(self->stage_overlay), &b))
    return FALSE;
  return graphene_rect_intersection(&a, &b, &both) && both.size.width > 0.5f &&
         both.size.height > 0.5f;
}

void
arcwise_window_set_speed_index(ArcwiseWindow *self, guint i)
{
  gtk_drop_down_set_selected(self->speed_dropdown, i);
}
