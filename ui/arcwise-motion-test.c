/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The scripted playback and camera-gesture session (see arcwise-motion-test.h). */
#include "arcwise-motion-test.h"
#include "arcwise-test-script.h"

#include <math.h>
#include <string.h>
#ifdef GDK_WINDOWING_X11
#include <gdk/x11/gdkx.h>
#endif

/* A speed's run ends after this many frames, or sooner at half the swing on a slow machine,
 * so that it never reaches the end. */
enum { SAMPLES_PER_SPEED = 14, SAMPLES_MAX = 600 };

typedef struct {
  ArcwiseWindow *win;
  GtkWindow *caution;
  char *dir;
  GString *report;
  int step;
  /* playback recording */
  GString *line;
  const char *rec_name;
  guint n_samples;
  guint after_wrap;     /* samples recorded since the marker came back to the start */
  double last_t;
  gulong paint_id;
  /* gestures */
  int gesture;
  ArcwiseCamera before, last;
  guint stable;
  guint polls;
  gboolean tool_done;
  int keys_stage;
} Motion;

static void next_step(Motion *m);
static void next_gesture(Motion *m);
static void after_stage_picture(Motion *m);
static gboolean loop_on(Motion *m);

static void
act(Motion *m, const char *action, GVariant *target)
{
  if (!gtk_widget_activate_action_variant(GTK_WIDGET(m->win), action, target))
    g_string_append_printf(m->report, "missing_action=%s\n", action);
}

static void
finish(Motion *m)
{
  const char *err = arcwise_stage_get_error_text(arcwise_window_get_stage(m->win));
  g_string_append_printf(m->report, "gl_error=%s\n", err ? err : "none");
  g_autofree char *path = g_strdup_printf("%s/motion-report.txt", m->dir);
  arcwise_test_finish(m->win, path, m->report, "motion test");
  g_free(m->dir);
  g_free(m);
}

/* A picture of the window once it has painted (arcwise_test_picture); then then(m). */
static void
picture(Motion *m, const char *name, GSourceOnceFunc then)
{
  g_autofree char *path = g_strdup_printf("%s/%s.png", m->dir, name);
  arcwise_test_picture(GTK_WIDGET(m->win), path, m->report, then, m);
}

static void
next_step_idle(gpointer data)
{
  next_step(data);
}

/* ---- playback: every frame's clock time and marker time -------------------------------- */

static void
after_paint(GdkFrameClock *clock, gpointer data)
{
  Motion *m = data;
  gboolean playing = arcwise_window_is_playing(m->win);
  double t = arcwise_window_get_time(m->win);
  if (t < m->last_t - 1e-9)
    m->after_wrap = 1;
  else if (m->after_wrap > 0)
    m->after_wrap++;
  m->last_t = t;
  /* Frame time in microseconds (the clock every animation of the frame reads), marker time. */
  g_string_append_printf(m->line, " %" G_GINT64_FORMAT ":%.9f:%d",
                         gdk_frame_clock_get_frame_time(clock), t, playing);
  m->n_samples++;
  gboolean wrap_run = g_str_equal(m->rec_name, "loop");
  gboolean end_run = g_str_equal(m->rec_name, "end");
  gboolean done = !playing || m->n_samples >= SAMPLES_MAX ||
                  (!wrap_run && !end_run && (m->n_samples >= SAMPLES_PER_SPEED ||
                                             t >= 0.5 * arcwise_window_get_duration(m->win))) ||
                  (wrap_run && m->after_wrap >= 8);
  if (!done)
    return;
  g_signal_handler_disconnect(clock, m->paint_id);
  m->paint_id = 0;
  if (arcwise_window_is_playing(m->win))
    act(m, "win.play", NULL);   /* pause */
  g_string_append_printf(m->report, "%s%s\n%s_paused=%d\n%s_final=%.9f\n", m->rec_name,
                         m->line->str, m->rec_name, !arcwise_window_is_playing(m->win),
                         m->rec_name, arcwise_window_get_time(m->win));
  g_string_free(m->line, TRUE);
  m->line = NULL;
  g_idle_add_once(next_step_idle, m);
}

static void
record_play(Motion *m, const char *name)
{
  GdkFrameClock *clock = gtk_widget_get_frame_clock(GTK_WIDGET(m->win));
  m->line = g_string_new("=");
  m->rec_name = name;
  m->n_samples = 0;
  m->after_wrap = 0;
  m->last_t = arcwise_window_get_time(m->win);
  g_string_append_printf(m->report, "%s_start=%.9f\n", name, m->last_t);
  m->paint_id = g_signal_connect(clock, "after-paint", G_CALLBACK(after_paint), m);
  act(m, "win.play", NULL);
}

static gboolean
loop_on(Motion *m)
{
  GVariant *v = g_action_group_get_action_state(G_ACTION_GROUP(m->win), "loop");
  gboolean on = v != NULL && g_variant_get_boolean(v);
  g_clear_pointer(&v, g_variant_unref);
  return on;
}

/* Plays at speed index `speed` from four steps before the end, recording as `name`. */
static void
play_near_end(Motion *m, int speed, const char *name)
{
  arcwise_window_set_speed_index(m->win, speed);
  act(m, "win.seek", g_variant_new_int32(1));
  for (int k = 0; k < 4; k++)
    act(m, "win.step", g_variant_new_int32(-1));
  record_play(m, name);
}

static const char *speed_names[] = { "speed0", "speed1", "speed2", "speed3" };

static void
next_step(Motion *m)
{
  const ArcwiseSwingModel *model = arcwise_window_get_model(m->win);
  int s = m->step++;
  if (s < 4) {
    /* Each speed from the start of the swing. */
    act(m, "win.seek", g_variant_new_int32(-1));
    arcwise_window_set_speed_index(m->win, (guint)s);
    record_play(m, speed_names[s]);
    return;
  }
  switch (s) {
  case 4: {
    /* Frame steps: the model's sample times, then the steps' times. */
    arcwise_window_set_speed_index(m->win, 0);
    act(m, "win.seek", g_variant_new_int32(-1));
    g_string_append_printf(m->report, "duration=%.9f\nmodel_t=", arcwise_window_get_duration(m->win));
    for (size_t i = 0; model != NULL && i < MIN(model->n, (size_t)8); i++)
      g_string_append_printf(m->report, "%s%.9f", i ? " " : "", (double)model->t_s[i]);
    g_string_append(m->report, "\nstep_t=");
    g_string_append_printf(m->report, "%.9f", arcwise_window_get_time(m->win));
    static const int dirs[] = { 1, 1, 1, 1, 1, -1, -1 };
    for (guint k = 0; k < G_N_ELEMENTS(dirs); k++) {
      act(m, "win.step", g_variant_new_int32(dirs[k]));
      g_string_append_printf(m->report, " %.9f", arcwise_window_get_time(m->win));
    }
    g_string_append(m->report, "\n");
    /* Loop on, half speed, from four steps before the end: the marker comes round. */
    act(m, "win.loop", NULL);
    g_string_append_printf(m->report, "loop_state=%d\n", loop_on(m));
    play_near_end(m, 1, "loop");
    break;
  }
  case 5:
    /* Loop off, normal speed, from four steps before the end: it stops at the end. */
    act(m, "win.loop", NULL);
    g_string_append_printf(m->report, "loop_state_after=%d\n", loop_on(m));
    play_near_end(m, 0, "end");
    break;
  case 6:
    act(m, "win.seek", g_variant_new_int32(-1));
    next_gesture(m);
    break;
  default:
    break;
  }
}

/* ---- gestures ------------------------------------------------------------------------------ */

static void
put_camera(Motion *m, const char *name, const char *when, const ArcwiseCamera *c)
{
  g_string_append_printf(m->report, "cam_%s_%s=%.9g %.9g %.9g %.9g %.9g %.9g %.9g\n", name, when,
                         (double)c->target_m[0], (double)c->target_m[1], (double)c->target_m[2],
                         (double)c->yaw_rad, (double)c->pitch_rad, (double)c->distance_m,
                         (double)c->fov_y_rad);
}

typedef struct {
  const char *name;
  int button;           /* 0: wheel */
  gboolean shift;
  int dx, dy;           /* drag in pixels, or wheel clicks down in dy */
} Gesture;

static const Gesture gestures[] = {
  { "orbit", 1, FALSE, 120, 60 },
  { "pan_right_button", 3, FALSE, 100, -50 },
  { "pan_shift", 1, TRUE, -80, 40 },
  { "wheel_out", 0, FALSE, 0, 3 },
  { "wheel_in", 0, FALSE, 0, -2 },
};

static const char *gesture_name(Motion *m)
{
  return m->gesture < (int)G_N_ELEMENTS(gestures) ? gestures[m->gesture].name : "pinch";
}

static gboolean
poll_camera(gpointer data)
{
  Motion *m = data;
  ArcwiseStage *stage = arcwise_window_get_stage(m->win);
  ArcwiseCamera now;
  arcwise_stage_get_camera(stage, &now);
  gboolean same = memcmp(&now, &m->last, sizeof now) == 0;
  gboolean moved = memcmp(&now, &m->before, sizeof now) != 0;
  m->last = now;
  m->stable = same ? m->stable + 1 : 0;
  m->polls++;
  if (!(m->tool_done && moved && m->stable >= 4) && m->polls < 200)
    return G_SOURCE_CONTINUE;
  put_camera(m, gesture_name(m), "after", &now);
  g_string_append_printf(m->report, "view_%s=%d\n", gesture_name(m), arcwise_stage_get_view(stage));
  m->gesture++;
  next_gesture(m);
  return G_SOURCE_REMOVE;
}

static void
tool_finished(GObject *source, GAsyncResult *res, gpointer data)
{
  Motion *m = data;
  g_autoptr(GError) error = NULL;
  if (!g_subprocess_wait_check_finish(G_SUBPROCESS(source), res, &error))
    g_string_append_printf(m->report, "xdotool_error_%s=%s\n", gesture_name(m), error->message);
  g_object_unref(source);
  m->tool_done = TRUE;
}

static void
start_watch(Motion *m)
{
  ArcwiseStage *stage = arcwise_window_get_stage(m->win);
  arcwise_stage_get_camera(stage, &m->before);
  m->last = m->before;
  m->stable = 0;
  m->polls = 0;
  put_camera(m, gesture_name(m), "before", &m->before);
}

static gulong
window_xid(Motion *m)
{
  GtkNative *native = gtk_widget_get_native(GTK_WIDGET(m->win));
  GdkSurface *surface = native ? gtk_native_get_surface(native) : NULL;
  gulong xid = 0;
#ifdef GDK_WINDOWING_X11
  if (surface != NULL && GDK_IS_X11_SURFACE(surface))
    xid = (gulong)gdk_x11_surface_get_xid(surface);
#endif
  return xid;
}

static gboolean
spawn_tool(Motion *m, GPtrArray *argv, const char *name)
{
  g_ptr_array_add(argv, NULL);
  g_autoptr(GError) error = NULL;
  GSubprocess *p = g_subprocess_newv((const char *const *)argv->pdata, G_SUBPROCESS_FLAGS_NONE,
                                     &error);
  g_ptr_array_unref(argv);
  if (p == NULL) {
    g_string_append_printf(m->report, "xdotool_error_%s=%s\n", name, error->message);
    return FALSE;
  }
  m->tool_done = FALSE;
  g_subprocess_wait_check_async(p, NULL, tool_finished, m);
  return TRUE;
}

/* Real pointer input through the X server, into the stage's middle. */
static gboolean
pointer_gesture(Motion *m, const Gesture *g)
{
  const char *tool = g_getenv("ARCWISE_MOTION_TEST_XDOTOOL");
  ArcwiseStage *stage = arcwise_window_get_stage(m->win);
  GtkNative *native = gtk_widget_get_native(GTK_WIDGET(stage));
  gulong xid = window_xid(m);
  if (tool == NULL || *tool == '\0' || native == NULL || xid == 0)
    return FALSE;
  double sx = 0, sy = 0;
  gtk_native_get_surface_transform(native, &sx, &sy);
  graphene_point_t mid = GRAPHENE_POINT_INIT(gtk_widget_get_width(GTK_WIDGET(stage)) / 2.0f,
                                             gtk_widget_get_height(GTK_WIDGET(stage)) / 2.0f);
  graphene_point_t at;
  if (!gtk_widget_compute_point(GTK_WIDGET(stage), GTK_WIDGET(native), &mid, &at))
    return FALSE;
  int scale = gtk_widget_get_scale_factor(GTK_WIDGET(stage));
  int x = (int)lround(((double)at.x + sx) * scale), y = (int)lround(((double)at.y + sy) * scale);
  g_autofree char *win = g_strdup_printf("%lu", xid);
  GPtrArray *argv = g_ptr_array_new_with_free_func(g_free);
#define ARG(...) g_ptr_array_add(argv, g_strdup_printf(__VA_ARGS__))
  ARG("%s", tool);
  ARG("mousemove"); ARG("--window"); ARG("%s", win); ARG("%d", x); ARG("%d", y);
  ARG("sleep"); ARG("0.2");
  if (g->button == 0) {
    ARG("click"); ARG("--repeat"); ARG("%d", abs(g->dy)); ARG("--delay"); ARG("80");
    ARG("%d", g->dy > 0 ? 5 : 4);   /* X11 buttons 4 and 5: wheel up and down */
  } else {
    if (g->shift) {
      ARG("keydown"); ARG("shift");
    }
    ARG("mousedown"); ARG("%d", g->button);
    ARG("sleep"); ARG("0.1");
    ARG("mousemove"); ARG("--window"); ARG("%s", win);
    ARG("%d", x + g->dx / 3); ARG("%d", y + g->dy / 3);
    ARG("sleep"); ARG("0.1");
    ARG("mousemove"); ARG("--window"); ARG("%s", win);
    ARG("%d", x + g->dx * scale); ARG("%d", y + g->dy * scale);
    ARG("sleep"); ARG("0.2");
    ARG("mouseup"); ARG("%d", g->button);
    if (g->shift) {
      ARG("keyup"); ARG("shift");
    }
  }
  ARG("sleep"); ARG("0.1");
#undef ARG
  return spawn_tool(m, argv, g->name);
}

/* Real key presses through the X server (XTest) into the focused window: the window's own
 * single-key shortcuts. Stage 0: three steps on, two speeds slower, loop on; stage 1: play. */
static const char *key_runs[][8] = {
  { "Right", "Right", "Right", "bracketleft", "bracketleft", "l", NULL },
  { "space", NULL },
};

static void keys_next(Motion *m);

static GtkWidget *
find_action_widget(GtkWidget *w, const char *action)
{
  if (GTK_IS_ACTIONABLE(w) && g_strcmp0(gtk_actionable_get_action_name(GTK_ACTIONABLE(w)), action) == 0)
    return w;
  for (GtkWidget *c = gtk_widget_get_first_child(w); c != NULL; c = gtk_widget_get_next_sibling(c)) {
    GtkWidget *found = find_action_widget(c, action);
    if (found != NULL)
      return found;
  }
  return NULL;
}

/* Where the loop button is in the window's pictures. */
static void
put_loop_button(Motion *m, const char *when)
{
  GtkWidget *b = find_action_widget(GTK_WIDGET(m->win), "win.loop");
  graphene_rect_t r;
  if (b != NULL && gtk_widget_compute_bounds(b, GTK_WIDGET(m->win), &r))
    g_string_append_printf(m->report, "loop_button_%s=%.0f %.0f %.0f %.0f %d %d\n", when,
                           (double)r.origin.x, (double)r.origin.y, (double)r.size.width,
                           (double)r.size.height, gtk_widget_get_width(GTK_WIDGET(m->win)),
                           gtk_widget_get_height(GTK_WIDGET(m->win)));
}

/* The next run of keys, after the picture (if any) of the last. */
static void
keys_pictured(gpointer data)
{
  Motion *m = data;
  if (m->keys_stage == 1)
    put_loop_button(m, "on");
  m->keys_stage++;
  keys_next(m);
}

static gboolean
keys_settled(gpointer data)
{
  Motion *m = data;
  gboolean want_play = m->keys_stage == 1;
  if (!(m->tool_done && (!want_play || arcwise_window_is_playing(m->win))) && ++m->polls < 200)
    return G_SOURCE_CONTINUE;
  GtkDropDown *speed = GTK_DROP_DOWN(gtk_widget_get_template_child(GTK_WIDGET(m->win),
                                                                   ARCWISE_TYPE_WINDOW, "speed_dropdown"));
  g_string_append_printf(m->report, "keys%d_time=%.9f\nkeys%d_speed=%u\nkeys%d_loop=%d\n"
                         "keys%d_playing=%d\n", m->keys_stage, arcwise_window_get_time(m->win),
                         m->keys_stage, gtk_drop_down_get_selected(speed), m->keys_stage,
                         loop_on(m), m->keys_stage, arcwise_window_is_playing(m->win));
  if (want_play)
    picture(m, "keys-window", keys_pictured);   /* playing at 1/4 with loop on */
  else
    keys_pictured(m);
  return G_SOURCE_REMOVE;
}

static void
keys_next(Motion *m)
{
  const char *tool = g_getenv("ARCWISE_MOTION_TEST_XDOTOOL");
  gulong xid = window_xid(m);
  if (m->keys_stage >= (int)G_N_ELEMENTS(key_runs) || tool == NULL || *tool == '\0' || xid == 0) {
    if (arcwise_window_is_playing(m->win))
      act(m, "win.play", NULL);
    if (loop_on(m))
      act(m, "win.loop", NULL);
    finish(m);
    return;
  }
  GPtrArray *argv = g_ptr_array_new_with_free_func(g_free);
  g_ptr_array_add(argv, g_strdup(tool));
  g_ptr_array_add(argv, g_strdup("windowfocus"));
  g_ptr_array_add(argv, g_strdup_printf("%lu", xid));
  g_ptr_array_add(argv, g_strdup("sleep"));
  g_ptr_array_add(argv, g_strdup("0.2"));
  g_ptr_array_add(argv, g_strdup("key"));
  g_ptr_array_add(argv, g_strdup("--delay"));
  g_ptr_array_add(argv, g_strdup("120"));
  for (const char *const *k = key_runs[m->keys_stage]; *k != NULL; k++)
    g_ptr_array_add(argv, g_strdup(*k));
  g_ptr_array_add(argv, g_strdup("sleep"));
  g_ptr_array_add(argv, g_strdup("0.3"));
  m->polls = 0;
  if (!spawn_tool(m, argv, "keys")) {
    m->keys_stage = (int)G_N_ELEMENTS(key_runs);
    keys_next(m);
    return;
  }
  g_timeout_add(50, keys_settled, m);
}

static GtkEventController *
stage_controller(ArcwiseStage *stage, GType type)
{
  g_autoptr(GListModel) cs = gtk_widget_observe_controllers(GTK_WIDGET(stage));
  for (guint i = 0; i < g_list_model_get_n_items(cs); i++) {
    g_autoptr(GObject) c = g_list_model_get_item(cs, i);
    if (G_TYPE_CHECK_INSTANCE_TYPE(c, type))
      return GTK_EVENT_CONTROLLER(c);   /* the widget keeps it */
  }
  return NULL;
}

static void
gestures_pictured(gpointer data)
{
  Motion *m = data;
  put_loop_button(m, "off");
  after_stage_picture(m);
}

static void
stage_after_done(gpointer data)
{
  Motion *m = data;
  picture(m, "gestures-window", gestures_pictured);   /* loop off */
}

static void
stage_after(gpointer data)
{
  g_timeout_add_once(150, stage_after_done, data);
}

static void
next_gesture(Motion *m)
{
  ArcwiseStage *stage = arcwise_window_get_stage(m->win);
  if (m->gesture == 0) {
    GtkWidget *legend = GTK_WIDGET(gtk_widget_get_template_child(GTK_WIDGET(m->win),
                                                                 ARCWISE_TYPE_WINDOW, "legend_label"));
    g_string_append_printf(m->report, "legend_visible=%d\nlegend=", legend && gtk_widget_get_mapped(legend));
    const char *text = legend ? gtk_label_get_text(GTK_LABEL(legend)) : "";
    for (const char *c = text; *c; c++)
      g_string_append_c(m->report, *c == '\n' ? '|' : *c);
    g_string_append_c(m->report, '\n');
    g_string_append_printf(m->report, "stage_size=%d %d\n", gtk_widget_get_width(GTK_WIDGET(stage)),
                           gtk_widget_get_height(GTK_WIDGET(stage)));
    g_autofree char *path = g_strdup_printf("%s/stage-before.png", m->dir);
    arcwise_stage_request_snapshot(stage, path, NULL, NULL);
  }
  if (m->gesture < (int)G_N_ELEMENTS(gestures)) {
    const Gesture *g = &gestures[m->gesture];
    start_watch(m);
    g_string_append_printf(m->report, "gesture_%s=%d %d %d %d\n", g->name, g->button, g->shift,
                           g->dx, g->dy);
    if (!pointer_gesture(m, g)) {
      g_string_append_printf(m->report, "no_pointer_%s=1\n", g->name);
      m->gesture++;
      next_gesture(m);
      return;
    }
    g_timeout_add(50, poll_camera, m);
    return;
  }
  if (m->gesture == (int)G_N_ELEMENTS(gestures)) {
    /* A touchpad pinch spreading the fingers to twice their distance, through the stage's own
     * GtkGestureZoom handlers. */
    GtkEventController *zoom = stage_controller(stage, GTK_TYPE_GESTURE_ZOOM);
    g_string_append_printf(m->report, "zoom_controller=%d\n", zoom != NULL);
    start_watch(m);
    if (zoom != NULL) {
      g_signal_emit_by_name(zoom, "begin", NULL);
      g_signal_emit_by_name(zoom, "scale-changed", 1.5);
      g_signal_emit_by_name(zoom, "scale-changed", 2.0);
      g_signal_emit_by_name(zoom, "end", NULL);
    }
    ArcwiseCamera now;
    arcwise_stage_get_camera(stage, &now);
    put_camera(m, "pinch", "after", &now);
    g_string_append_printf(m->report, "view_pinch=%d\n", arcwise_stage_get_view(stage));
    GVariant *v = g_action_group_get_action_state(G_ACTION_GROUP(m->win), "view");
    g_string_append_printf(m->report, "view_action=%s\n", v ? g_variant_get_string(v, NULL) : "");
    g_clear_pointer(&v, g_variant_unref);
    m->gesture++;
    g_autofree char *path = g_strdup_printf("%s/stage-after.png", m->dir);
    arcwise_stage_request_snapshot(stage, path, G_CALLBACK(stage_after), m);
  }
}

static void
after_stage_picture(Motion *m)
{
  /* The keys from the start of the swing at normal speed. */
  act(m, "win.seek", g_variant_new_int32(-1));
  arcwise_window_set_speed_index(m->win, 0);
  m->keys_stage = 0;
  keys_next(m);
}

/* ---- start ------------------------------------------------------------------------------- */

static gboolean
wait_ready(gpointer data)
{
  Motion *m = data;
  if (!arcwise_test_stage_ready(m->win))
    return G_SOURCE_CONTINUE;
  arcwise_test_answer_caution(&m->caution);
  arcwise_window_select_index(m->win, 0);
  g_timeout_add_once(300, next_step_idle, m);
  return G_SOURCE_REMOVE;
}

void
arcwise_motion_test_start(ArcwiseWindow *win, const char *dir, GtkWindow *caution)
{
  Motion *m = g_new0(Motion, 1);
  m->win = win;
  m->caution = caution;
  m->dir = g_strdup(dir);
  m->report = g_string_new(NULL);
  g_timeout_add(50, wait_ready, m);
}
