/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The 3-D view widget. Every GL call of the workbench window happens in realize, unrealize and
 * render here; the scene itself is plain GL in scene/. */
#include "arcwise-stage.h"

#include <epoxy/gl.h>
#include <math.h>
#include <string.h>

struct _ArcwiseStage {
  GtkGLArea parent_instance;

  /* Borrowed */
  const ArcwiseSwingModel *model[2];

  /* Owned */
  ArcwiseScene *scene;
  ArcwiseCamera cam;
  ArcwiseSceneOptions opt;
  ArcwiseView view;
  gboolean dirty[2];
  char *error_text;
  char *snapshot_path;
  GCallback snapshot_done;
  gpointer snapshot_data;
  guint64 frames;
  /* Gesture state */
  ArcwiseCamera drag_start;
  double zoom_start_distance;
  gboolean pan;
};

G_DEFINE_FINAL_TYPE(ArcwiseStage, arcwise_stage, GTK_TYPE_GL_AREA)

enum { SIGNAL_VIEW_CHANGED, N_SIGNALS };
static guint signals[N_SIGNALS];

static const float default_centre[3] = { 0.0f, 0.5f, 1.3f };

static const float *
centre_of(ArcwiseStage *self)
{
  return self->model[0] ? self->model[0]->centre_m : default_centre;
}

static void
arcwise_stage_realize(GtkWidget *widget)
{
  ArcwiseStage *self = ARCWISE_STAGE(widget);
  GTK_WIDGET_CLASS(arcwise_stage_parent_class)->realize(widget);
  gtk_gl_area_make_current(GTK_GL_AREA(self));
  if (gtk_gl_area_get_error(GTK_GL_AREA(self)) != NULL)
    return;
  g_autoptr(GError) error = NULL;
  self->scene = arcwise_scene_new(&error);
  if (self->scene == NULL) {
    g_free(self->error_text);
    self->error_text = g_strdup(error->message);
    g_warning("3-D view: %s", error->message);
    gtk_gl_area_set_error(GTK_GL_AREA(self), error);
    return;
  }
  self->dirty[0] = self->dirty[1] = TRUE;
}

static void
arcwise_stage_unrealize(GtkWidget *widget)
{
  ArcwiseStage *self = ARCWISE_STAGE(widget);
  gtk_gl_area_make_current(GTK_GL_AREA(self));
  if (gtk_gl_area_get_error(GTK_GL_AREA(self)) == NULL)
    g_clear_pointer(&self->scene, arcwise_scene_free);
  GTK_WIDGET_CLASS(arcwise_stage_parent_class)->unrealize(widget);
}

static void
write_snapshot(ArcwiseStage *self, int w, int h)
{
  guint8 *rgba = g_malloc((gsize)w * (gsize)h * 4);
  glPixelStorei(GL_PACK_ALIGNMENT, 1);
  glReadPixels(0, 0, w, h, GL_RGBA, GL_UNSIGNED_BYTE, rgba);
  /* Bottom-up to top-down. */
  gsize row = (gsize)w * 4;
  guint8 *tmp = g_malloc(row);
  for (int y = 0; y < h / 2; y++) {
    memcpy(tmp, rgba + (gsize)y * row, row);
    memcpy(rgba + (gsize)y * row, rgba + (gsize)(h - 1 - y) * row, row);
    memcpy(rgba + (gsize)(h - 1 - y) * row, tmp, row);
  }
  g_free(tmp);
  g_autoptr(GError) error = NULL;
  if (!arcwise_write_png(self->snapshot_path, rgba, w, h, row, &error))
    g_warning("snapshot: %s", error->message);
  g_free(rgba);
  g_clear_pointer(&self->snapshot_path, g_free);
  GCallback done = self->snapshot_done;
  self->snapshot_done = NULL;
  if (done != NULL)
    ((void (*)(gpointer))done)(self->snapshot_data);
}

static gboolean
arcwise_stage_render(GtkGLArea *area, GdkGLContext *context)
{
  ArcwiseStage *self = ARCWISE_STAGE(area);
  if (self->scene == NULL)
    return FALSE;
  for (int i = 0; i < 2; i++)
    if (self->dirty[i]) {
      ArcwiseScenePath p;
      if (self->model[i] != NULL) {
        arcwise_swing_model_as_path(self->model[i], &p);
        arcwise_scene_set_path(self->scene, i, &p);
      } else
        arcwise_scene_set_path(self->scene, i, NULL);
      self->dirty[i] = FALSE;
    }
  int scale = gtk_widget_get_scale_factor(GTK_WIDGET(self));
  int w = gtk_widget_get_width(GTK_WIDGET(self)) * scale;
  int h = gtk_widget_get_height(GTK_WIDGET(self)) * scale;
  if (self->model[0] != NULL)
    self->opt.handed = self->model[0]->handed;
  /* Presets frame a swing for a landscape view; a narrow view backs the camera off so the
   * swing's width still fits. */
  ArcwiseCamera cam = self->cam;
  double aspect = h > 0 ? (double)w / h : 1.0;
  if (self->view != ARCWISE_VIEW_FREE && aspect < 1.25)
    cam.distance_m = (float)((double)cam.distance_m * 1.25 / aspect);
  arcwise_scene_draw(self->scene, &cam, &self->opt, w, h);
  self->frames++;
  if (self->snapshot_path != NULL)
    write_snapshot(self, w, h);
  return TRUE;
}

/* ---- gestures ------------------------------------------------------------------------------ */

static void
go_free(ArcwiseStage *self)
{
  if (self->view != ARCWISE_VIEW_FREE) {
    self->view = ARCWISE_VIEW_FREE;
    g_signal_emit(self, signals[SIGNAL_VIEW_CHANGED], 0);
  }
}

static void
drag_begin(GtkGestureDrag *gesture, double x, double y, ArcwiseStage *self)
{
  self->drag_start = self->cam;
  GdkModifierType mods =
    gtk_event_controller_get_current_event_state(GTK_EVENT_CONTROLLER(gesture));
  guint button = gtk_gesture_single_get_current_button(GTK_GESTURE_SINGLE(gesture));
  self->pan = button == GDK_BUTTON_MIDDLE || button == GDK_BUTTON_SECONDARY ||
              (mods & GDK_SHIFT_MASK) != 0;
}

static void
drag_update(GtkGestureDrag *gesture, double dx, double dy, ArcwiseStage *self)
{
  double h = gtk_widget_get_height(GTK_WIDGET(self));
  if (self->pan)
    arcwise_camera_pan(&self->cam, &self->drag_start, dx, dy, h);
  else
    arcwise_camera_orbit(&self->cam, &self->drag_start, dx, dy, h);
  go_free(self);
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

static void
zoom_by(ArcwiseStage *self, double factor)
{
  ArcwiseCamera now = self->cam;
  arcwise_camera_zoom(&self->cam, &now, factor);
  go_free(self);
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

static gboolean
scroll(GtkEventControllerScroll *c, double dx, double dy, ArcwiseStage *self)
{
  /* Wheel clicks arrive as +-1, touchpad scrolling as small continuous steps. */
  GdkScrollUnit unit = gtk_event_controller_scroll_get_unit(c);
  double step = unit == GDK_SCROLL_UNIT_WHEEL ? dy * 0.12 : dy * 0.01;
  zoom_by(self, exp(step));
  return TRUE;
}

static void
pinch_begin(GtkGesture *g, GdkEventSequence *seq, ArcwiseStage *self)
{
  self->zoom_start_distance = self->cam.distance_m;
}

static void
pinch_changed(GtkGestureZoom *g, double scale, ArcwiseStage *self)
{
  if (scale <= 0)
    return;
  ArcwiseCamera start = self->cam;
  start.distance_m = (float)self->zoom_start_distance;
  arcwise_camera_zoom(&self->cam, &start, 1.0 / scale);
  go_free(self);
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

/* ---- class ------------------------------------------------------------------------------- */

static void
arcwise_stage_finalize(GObject *object)
{
  ArcwiseStage *self = ARCWISE_STAGE(object);
  g_free(self->error_text);
  g_free(self->snapshot_path);
  G_OBJECT_CLASS(arcwise_stage_parent_class)->finalize(object);
}

static void
arcwise_stage_class_init(ArcwiseStageClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS(klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS(klass);
  GtkGLAreaClass *area_class = GTK_GL_AREA_CLASS(klass);
  object_class->finalize = arcwise_stage_finalize;
  widget_class->realize = arcwise_stage_realize;
  widget_class->unrealize = arcwise_stage_unrealize;
  area_class->render = arcwise_stage_render;
  signals[SIGNAL_VIEW_CHANGED] = g_signal_new("view-changed", G_TYPE_FROM_CLASS(klass),
                                              G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                                              G_TYPE_NONE, 0);
  gtk_widget_class_set_css_name(widget_class, "arcwise-stage");
}

static void
arcwise_stage_init(ArcwiseStage *self)
{
  gtk_gl_area_set_required_version(GTK_GL_AREA(self), 3, 3);
  gtk_gl_area_set_has_depth_buffer(GTK_GL_AREA(self), TRUE);
  gtk_gl_area_set_auto_render(GTK_GL_AREA(self), TRUE);
  gtk_widget_set_hexpand(GTK_WIDGET(self), TRUE);
  gtk_widget_set_vexpand(GTK_WIDGET(self), TRUE);
  gtk_widget_set_focusable(GTK_WIDGET(self), TRUE);
  arcwise_scene_options_default(&self->opt);
  self->view = ARCWISE_VIEW_FACE_ON;
  arcwise_camera_preset(&self->cam, self->view, 1, default_centre);

  GtkGesture *drag = gtk_gesture_drag_new();
  gtk_gesture_single_set_button(GTK_GESTURE_SINGLE(drag), 0);
  g_signal_connect(drag, "drag-begin", G_CALLBACK(drag_begin), self);
  g_signal_connect(drag, "drag-update", G_CALLBACK(drag_update), self);
  gtk_widget_add_controller(GTK_WIDGET(self), GTK_EVENT_CONTROLLER(drag));

  GtkEventController *sc = gtk_event_controller_scroll_new(GTK_EVENT_CONTROLLER_SCROLL_VERTICAL);
  g_signal_connect(sc, "scroll", G_CALLBACK(scroll), self);
  gtk_widget_add_controller(GTK_WIDGET(self), sc);

  GtkGesture *zoom = gtk_gesture_zoom_new();
  g_signal_connect(zoom, "begin", G_CALLBACK(pinch_begin), self);
  g_signal_connect(zoom, "scale-changed", G_CALLBACK(pinch_changed), self);
  gtk_widget_add_controller(GTK_WIDGET(self), GTK_EVENT_CONTROLLER(zoom));
}

GtkWidget *
arcwise_stage_new(void)
{
  return g_object_new(ARCWISE_TYPE_STAGE, NULL);
}

void
arcwise_stage_set_swing(ArcwiseStage *self, int slot, const ArcwiseSwingModel *model)
{
  g_return_if_fail(ARCWISE_IS_STAGE(self) && (slot == 0 || slot == 1));
  self->model[slot] = model;
  self->dirty[slot] = TRUE;
  if (slot == 0 && self->view != ARCWISE_VIEW_FREE)
    arcwise_camera_preset(&self->cam, self->view, model ? model->handed : 1, centre_of(self));
  if (model != NULL && slot == 0 && model->peak_speed_m_s > 0)
    self->opt.speed_max_m_s = MAX(8.0f, model->peak_speed_m_s);
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

void
arcwise_stage_set_times(ArcwiseStage *self, double t0_s, double t1_s)
{
  self->opt.marker_t_s[0] = (float)t0_s;
  self->opt.marker_t_s[1] = (float)t1_s;
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

void
arcwise_stage_set_view(ArcwiseStage *self, ArcwiseView view)
{
  if (view != ARCWISE_VIEW_FREE)
    arcwise_camera_preset(&self->cam, view, self->model[0] ? self->model[0]->handed : 1,
                          centre_of(self));
  gboolean changed = self->view != view;
  self->view = view;
  if (changed)
    g_signal_emit(self, signals[SIGNAL_VIEW_CHANGED], 0);
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

ArcwiseView
arcwise_stage_get_view(ArcwiseStage *self)
{
  return self->view;
}

void
arcwise_stage_get_camera(ArcwiseStage *self, ArcwiseCamera *out)
{
  *out = self->cam;
}

ArcwiseSceneOptions *
arcwise_stage_get_options(ArcwiseStage *self)
{
  return &self->opt;
}

void
arcwise_stage_options_changed(ArcwiseStage *self)
{
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

void
arcwise_stage_request_snapshot(ArcwiseStage *self, const char *png_path, GCallback done,
                               gpointer user_data)
{
  g_free(self->snapshot_path);
  self->snapshot_path = g_strdup(png_path);
  self->snapshot_done = done;
  self->snapshot_data = user_data;
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

guint64
arcwise_stage_get_frames(ArcwiseStage *self)
{
  return self->frames;
}

const char *
arcwise_stage_get_error_text(ArcwiseStage *self)
{
  return self->error_text;
}
