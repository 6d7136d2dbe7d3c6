/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-config.h"
#include "arcwise-application.h"
#include "arcwise-window.h"
#include "cli.h"

struct _ArcwiseApplication {
  GtkApplication parent_instance;
};

G_DEFINE_FINAL_TYPE(ArcwiseApplication, arcwise_application, GTK_TYPE_APPLICATION)

static void
arcwise_application_activate(GApplication *app)
{
  GtkWindow *window = gtk_application_get_active_window(GTK_APPLICATION(app));
  if (window == NULL)
    window = GTK_WINDOW(arcwise_window_new(ARCWISE_APPLICATION(app)));
  gtk_window_present(window);
}

static void
arcwise_application_startup(GApplication *app)
{
  G_APPLICATION_CLASS(arcwise_application_parent_class)->startup(app);

  g_autoptr(GtkCssProvider) css = gtk_css_provider_new();
  gtk_css_provider_load_from_resource(css, "/org/arcwise/Workbench/style.css");
  gtk_style_context_add_provider_for_display(gdk_display_get_default(), GTK_STYLE_PROVIDER(css),
                                             GTK_STYLE_PROVIDER_PRIORITY_APPLICATION);
  g_object_set(gtk_settings_get_default(), "gtk-application-prefer-dark-theme", TRUE, NULL);
}

static void
arcwise_application_class_init(ArcwiseApplicationClass *klass)
{
  GApplicationClass *app_class = G_APPLICATION_CLASS(klass);
  app_class->activate = arcwise_application_activate;
  app_class->startup = arcwise_application_startup;
}

static void
arcwise_application_init(ArcwiseApplication *self)
{
}

ArcwiseApplication *
arcwise_application_new(void)
{
  return g_object_new(ARCWISE_TYPE_APPLICATION,
                      "application-id", ARCWISE_APP_ID,
                      "flags", G_APPLICATION_NON_UNIQUE,
                      NULL);
}

int
arcwise_gui_run(int argc, char **argv)
{
  g_autoptr(ArcwiseApplication) app = arcwise_application_new();
  return g_application_run(G_APPLICATION(app), argc, argv);
}
