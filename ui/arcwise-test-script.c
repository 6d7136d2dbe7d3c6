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

gboolean
arcwise_widget_save_png(GtkWidget *widget, const char *path, GError **error)
{
  int w = gtk_widget_get_width(widget), h = gtk_widget_get_height(widget);
  GdkPaintable *p = gtk_widget_paintable_new(widget);
  GtkSnapshot *snap = gtk_snapshot_new();
  gdk_paintable_snapshot(p, GDK_SNAPSHOT(snap), w, h);
  GskRenderNode *node = gtk_snapshot_free_to_node(snap);
  g_object_unref(p);
  GtkNative *native = gtk_widget_get_native(widget);
  GskRenderer *r = native ? gtk_native_get_renderer(native) : NULL;
  if (node == NULL || r == NULL) {
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_FAILED, "nothing drawn yet");
    g_clear_pointer(&node, gsk_render_node_unref);
    return FALSE;
  }
  GdkTexture *t = gsk_renderer_render_texture(r, node, &GRAPHENE_RECT_INIT(0, 0, w, h));
  gsk_render_node_unref(node);
  gboolean ok = gdk_texture_save_to_png(t, path);
  g_object_unref(t);
  if (!ok)
    g_set_error(error, G_IO_ERROR, G_IO_ERROR_FAILED, "cannot write %s", path);
  return ok;
}

/* ---- pictures once painted ------------------------------------------------------------------ */

typedef struct {
  GtkWidget *widget;
  char *path;
  GString *report;
  GSourceOnceFunc then;
  gpointer data;
  GdkFrameClock *clock;
  gulong id;
  int frames;
} Picture;

enum { PICTURE_MAX_FRAMES = 30 };

static void
picture_painted(GdkFrameClock *clock, gpointer data)
{
  Picture *p = data;
  g_autoptr(GError) error = NULL;
  /* After the window's paint every widget it drew has its picture, unless it is waiting for
   * another frame already (a change came in after this frame's layout): then the next one. */
  gboolean ok = arcwise_widget_save_png(p->widget, p->path, &error);
  if (!ok && ++p->frames < PICTURE_MAX_FRAMES) {
    gtk_widget_queue_draw(p->widget);
    return;
  }
  g_signal_handler_disconnect(clock, p->id);
  g_object_unref(p->clock);
  if (!ok) {
    g_autofree char *name = g_path_get_basename(p->path);
    g_printerr("picture %s: %s after %d frames\n", name, error->message, p->frames);
    if (p->report != NULL)
      g_string_append_printf(p->report, "png_error=%s %s\n", name, error->message);
  }
  GSourceOnceFunc then = p->then;
  gpointer then_data = p->data;
  g_object_unref(p->widget);
  g_free(p->path);
  g_free(p);
  if (then != NULL)
    then(then_data);
}

void
arcwise_test_picture(GtkWidget *widget, const char *path, GString *report, GSourceOnceFunc then,
                     gpointer data)
{
  Picture *p = g_new0(Picture, 1);
  p->widget = g_object_ref(widget);
  p->path = g_strdup(path);
  p->report = report;
  p->then = then;
  p->data = data;
  p->clock = g_object_ref(gtk_widget_get_frame_clock(widget));
  p->id = g_signal_connect(p->clock, "after-paint", G_CALLBACK(picture_painted), p);
  gtk_widget_queue_draw(widget);
}
