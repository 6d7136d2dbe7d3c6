/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-timeline.h"

#include <math.h>

struct _ArcwiseTimeline {
  GtkWidget parent_instance;

  /* Borrowed */
  const ArcwiseSwingModel *model;

  double t_s;
};

G_DEFINE_FINAL_TYPE(ArcwiseTimeline, arcwise_timeline, GTK_TYPE_WIDGET)

enum { SIGNAL_SCRUBBED, N_SIGNALS };
static guint signals[N_SIGNALS];

#define MARGIN_X 14.0

static double
duration_of(ArcwiseTimeline *self)
{
  const ArcwiseSwingModel *m = self->model;
  return m && m->n > 1 ? (double)m->t_s[m->n - 1] : 1.0;
}

static double
x_of(ArcwiseTimeline *self, double t, double width)
{
  return MARGIN_X + (width - 2 * MARGIN_X) * t / duration_of(self);
}

static void
draw(ArcwiseTimeline *self, cairo_t *cr, double w, double h)
{
  const ArcwiseSwingModel *m = self->model;
  double band_y = h * 0.34, band_h = h * 0.26;
  /* Track. */
  cairo_set_source_rgb(cr, 0.13, 0.15, 0.18);
  cairo_rectangle(cr, MARGIN_X, band_y, w - 2 * MARGIN_X, band_h);
  cairo_fill(cr);
  if (m == NULL || m->n < 2)
    return;

  /* Phase bands. */
  size_t start = 0;
  for (size_t i = 1; i <= m->n; i++) {
    if (i < m->n && m->phase[i] == m->phase[start])
      continue;
    float rgb[3];
    arcwise_scene_phase_rgb(m->phase[start], rgb);
    double x0 = x_of(self, m->t_s[start], w), x1 = x_of(self, m->t_s[i - 1], w);
    cairo_set_source_rgba(cr, rgb[0], rgb[1], rgb[2], 0.85);
    cairo_rectangle(cr, x0, band_y, MAX(1, x1 - x0), band_h);
    cairo_fill(cr);
    start = i;
  }
  /* Where the camera had lost the hands: pale hatching over the lower half of the band. */
  cairo_set_source_rgba(cr, 0.88, 0.89, 0.93, 0.75);
  for (size_t i = 0; i < m->n; i++)
    if (m->occluded[i]) {
      size_t j = i;
      while (j + 1 < m->n && m->occluded[j + 1])
        j++;
      double x0 = x_of(self, m->t_s[i], w), x1 = x_of(self, m->t_s[j], w);
      for (double x = x0; x < x1; x += 6)
        cairo_rectangle(cr, x, band_y + band_h * 0.5, MIN(2.5, x1 - x), band_h * 0.5);
      cairo_fill(cr);
      i = j;
    }

  /* Event marks with labels. The address mark stands where the address phase begins (the
   * swing's first sample); the takeaway, the end of address, has its own mark. */
  double address_t = NAN;
  for (size_t i = 0; i < m->n && !isfinite(address_t); i++)
    if (m->phase[i] == ARCWISE_SCENE_PHASE_ADDRESS)
      address_t = m->t_s[i];
  const struct { double t; const char *label; } ev[] = {
    { address_t, "address" }, { m->events.takeaway_s, "takeaway" }, { m->events.top_s, "top" },
    { m->events.impact_s, "impact" }, { m->events.finish_s, "finish" },
  };
  PangoLayout *layout = pango_cairo_create_layout(cr);
  PangoFontDescription *font = pango_font_description_from_string("Sans 10");
  double font_px = MAX(10.0, h * 0.19);
  pango_font_description_set_absolute_size(font, font_px * PANGO_SCALE);
  pango_layout_set_font_description(layout, font);
  for (size_t k = 0; k < G_N_ELEMENTS(ev); k++) {
    if (!isfinite(ev[k].t))
      continue;
    double x = x_of(self, ev[k].t, w);
    cairo_set_source_rgb(cr, 0.96, 0.95, 0.92);
    cairo_rectangle(cr, x - 1, band_y - 4, 2, band_h + 8);
    cairo_fill(cr);
    pango_layout_set_text(layout, ev[k].label, -1);
    int tw, th;
    pango_layout_get_pixel_size(layout, &tw, &th);
    /* Top and impact are a quarter second apart: labels alternate above and below. */
    double ly = k % 2 == 0 ? band_y - th - 4 : band_y + band_h + 9;
    cairo_move_to(cr, CLAMP(x - tw / 2.0, 0, w - tw), ly);
    pango_cairo_show_layout(cr, layout);
  }
  pango_font_description_free(font);
  g_object_unref(layout);

  /* Playhead. */
  double x = x_of(self, CLAMP(self->t_s, 0, duration_of(self)), w);
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_rectangle(cr, x - 2, band_y - 5, 4, band_h + 10);
  cairo_fill(cr);
}

static void
arcwise_timeline_snapshot(GtkWidget *widget, GtkSnapshot *snapshot)
{
  ArcwiseTimeline *self = ARCWISE_TIMELINE(widget);
  double w = gtk_widget_get_width(widget), h = gtk_widget_get_height(widget);
  cairo_t *cr = gtk_snapshot_append_cairo(snapshot, &GRAPHENE_RECT_INIT(0, 0, (float)w, (float)h));
  draw(self, cr, w, h);
  cairo_destroy(cr);
}

static void
arcwise_timeline_measure(GtkWidget *widget, GtkOrientation o, int for_size, int *min, int *nat,
                         int *min_base, int *nat_base)
{
  if (o == GTK_ORIENTATION_HORIZONTAL) {
    *min = 200;
    *nat = 600;
  } else {
    *min = 60;
    *nat = 76;
  }
}

static void
scrub_to(ArcwiseTimeline *self, double x)
{
  double w = gtk_widget_get_width(GTK_WIDGET(self));
  double t = (x - MARGIN_X) / MAX(1, w - 2 * MARGIN_X) * duration_of(self);
  t = CLAMP(t, 0, duration_of(self));
  self->t_s = t;
  gtk_widget_queue_draw(GTK_WIDGET(self));
  g_signal_emit(self, signals[SIGNAL_SCRUBBED], 0, t);
}

static void
drag_begin(GtkGestureDrag *g, double x, double y, ArcwiseTimeline *self)
{
  scrub_to(self, x);
}

static void
drag_update(GtkGestureDrag *g, double dx, double dy, ArcwiseTimeline *self)
{
  double x0, y0;
  gtk_gesture_drag_get_start_point(g, &x0, &y0);
  scrub_to(self, x0 + dx);
}

static void
arcwise_timeline_class_init(ArcwiseTimelineClass *klass)
{
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS(klass);
  widget_class->snapshot = arcwise_timeline_snapshot;
  widget_class->measure = arcwise_timeline_measure;
  signals[SIGNAL_SCRUBBED] = g_signal_new("scrubbed", G_TYPE_FROM_CLASS(klass),
                                          G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                                          G_TYPE_NONE, 1, G_TYPE_DOUBLE);
  gtk_widget_class_set_css_name(widget_class, "arcwise-timeline");
  gtk_widget_class_set_accessible_role(widget_class, GTK_ACCESSIBLE_ROLE_SLIDER);
}

static void
arcwise_timeline_init(ArcwiseTimeline *self)
{
  gtk_widget_set_hexpand(GTK_WIDGET(self), TRUE);
  GtkGesture *drag = gtk_gesture_drag_new();
  g_signal_connect(drag, "drag-begin", G_CALLBACK(drag_begin), self);
  g_signal_connect(drag, "drag-update", G_CALLBACK(drag_update), self);
  gtk_widget_add_controller(GTK_WIDGET(self), GTK_EVENT_CONTROLLER(drag));
}

GtkWidget *
arcwise_timeline_new(void)
{
  return g_object_new(ARCWISE_TYPE_TIMELINE, NULL);
}

void
arcwise_timeline_set_model(ArcwiseTimeline *self, const ArcwiseSwingModel *model)
{
  self->model = model;
  self->t_s = 0;
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

void
arcwise_timeline_set_time(ArcwiseTimeline *self, double t_s)
{
  self->t_s = t_s;
  gtk_widget_queue_draw(GTK_WIDGET(self));
}

double
arcwise_timeline_get_time(ArcwiseTimeline *self)
{
  return self->t_s;
}
