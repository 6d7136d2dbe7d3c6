/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-window.h"

struct _ArcwiseWindow {
  GtkApplicationWindow parent_instance;

  /* Template widgets */
  GtkLabel *status_label;
};

G_DEFINE_FINAL_TYPE(ArcwiseWindow, arcwise_window, GTK_TYPE_APPLICATION_WINDOW)

static void
arcwise_window_class_init(ArcwiseWindowClass *klass)
{
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS(klass);
  gtk_widget_class_set_template_from_resource(widget_class,
                                              "/org/arcwise/Workbench/arcwise-window.ui");
  gtk_widget_class_bind_template_child(widget_class, ArcwiseWindow, status_label);
}

static void
arcwise_window_init(ArcwiseWindow *self)
{
  gtk_widget_init_template(GTK_WIDGET(self));
}

ArcwiseWindow *
arcwise_window_new(ArcwiseApplication *app)
{
  return g_object_new(ARCWISE_TYPE_WINDOW, "application", app, NULL);
}
