/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-config.h"
#include "arcwise-application.h"

#include <stdio.h>
#include <time.h>

#include "arcwise-library.h"
#include "arcwise-export-test.h"
#include "arcwise-import-test.h"
#include "arcwise-motion-test.h"
#include "arcwise-smoke.h"
#include "arcwise-library-test.h"
#include "arcwise-window.h"
#include "cli.h"

struct _ArcwiseApplication {
  GtkApplication parent_instance;

  /* Owned */
  GSettings *settings;
  ArcwiseLibrarySource *source;
  char *library_path;
  gboolean demo;
  gint demo_size;
  gint64 launch_us;
  GString *launch_marks;      /* `bench launch`: where the time to the first frame went */
  gboolean first_paint_seen;  /* `bench launch`: the first paint with the stage is marked */
  double first_paint_s;
};

G_DEFINE_FINAL_TYPE(ArcwiseApplication, arcwise_application, GTK_TYPE_APPLICATION)

const char arcwise_safety_text[] =
  "Swinging a club indoors can hurt people and break things.\n\n"
  "• Keep a clear space around the player well beyond the club's reach, and keep the camera, "
  "the screen, the computer and onlookers outside it. Check the ceiling height before a full "
  "swing.\n"
  "• Warm up before hitting, and stop when tired or in pain.\n"
  "• Every number Arcwise shows is an estimate from consumer sensors. It is not a medical, "
  "physiotherapy or equipment-fitting assessment.\n"
  "• Follow the rules of your studio or venue and the advice of a qualified instructor.";

GSettings *
arcwise_application_get_settings(ArcwiseApplication *app)
{
  return app->settings;
}

/* The schema from the normal search path, else the one compiled in the build tree, so that
 * build/app/arcwise works without installing. */
static GSettings *
open_settings(void)
{
  GSettingsSchemaSource *def = g_settings_schema_source_get_default();
  g_autoptr(GSettingsSchema) schema = def ? g_settings_schema_source_lookup(def, ARCWISE_APP_ID, TRUE) : NULL;
  if (schema == NULL) {
    g_autoptr(GSettingsSchemaSource) local =
      g_settings_schema_source_new_from_directory(ARCWISE_BUILD_SCHEMA_DIR, def, FALSE, NULL);
    if (local != NULL)
      schema = g_settings_schema_source_lookup(local, ARCWISE_APP_ID, FALSE);
  }
  if (schema == NULL) {
    g_warning("preferences schema %s not found; settings will not be kept", ARCWISE_APP_ID);
    return NULL;
  }
  return g_settings_new_full(schema, NULL, NULL);
}

/* ---- safety and about ----------------------------------------------------------------------- */

static void
safety_ok(GtkButton *b, GtkWindow *dialog)
{
  ArcwiseApplication *app = g_object_get_data(G_OBJECT(dialog), "app");
  if (app->settings)
    g_settings_set_boolean(app->settings, "safety-acknowledged", TRUE);
  gtk_window_destroy(dialog);
}

static GtkWindow *
safety_dialog(ArcwiseApplication *app, GtkWindow *parent)
{
  GtkWindow *d = GTK_WINDOW(gtk_window_new());
  gtk_window_set_title(d, "Before the first swing");
  gtk_window_set_modal(d, TRUE);
  gtk_window_set_transient_for(d, parent);
  gtk_window_set_default_size(d, 620, -1);
  gtk_widget_set_name(GTK_WIDGET(d), "safety-dialog");
  gtk_widget_add_css_class(GTK_WIDGET(d), "arcwise");
  g_object_set_data(G_OBJECT(d), "app", app);
  GtkWidget *box = gtk_box_new(GTK_ORIENTATION_VERTICAL, 16);
  gtk_widget_set_margin_top(box, 24);
  gtk_widget_set_margin_bottom(box, 24);
  gtk_widget_set_margin_start(box, 28);
  gtk_widget_set_margin_end(box, 28);
  GtkWidget *title = gtk_label_new("Studio safety");
  gtk_widget_add_css_class(title, "title-1");
  gtk_widget_add_css_class(title, "arcwise-caution");
  GtkWidget *text = gtk_label_new(arcwise_safety_text);
  gtk_label_set_wrap(GTK_LABEL(text), TRUE);
  gtk_label_set_xalign(GTK_LABEL(text), 0);
  gtk_label_set_max_width_chars(GTK_LABEL(text), 60);
  GtkWidget *ok = gtk_button_new_with_mnemonic("_I have read this");
  gtk_widget_set_halign(ok, GTK_ALIGN_END);
  gtk_widget_add_css_class(ok, "suggested-action");
  g_signal_connect(ok, "clicked", G_CALLBACK(safety_ok), d);
  gtk_box_append(GTK_BOX(box), title);
  gtk_box_append(GTK_BOX(box), text);
  gtk_box_append(GTK_BOX(box), ok);
  gtk_window_set_child(d, box);
  gtk_window_set_default_widget(d, ok);
  gtk_window_present(d);
  return d;
}

static void
act_safety(GSimpleAction *a, GVariant *p, gpointer data)
{
  ArcwiseApplication *app = data;
  safety_dialog(app, gtk_application_get_active_window(GTK_APPLICATION(app)));
}

static void
act_about(GSimpleAction *a, GVariant *p, gpointer data)
{
  ArcwiseApplication *app = data;
  g_autofree char *comments = g_strdup_printf(
    "Fuses a depth camera and a wrist sensor into the 3-D hand path of a golf swing, splits "
    "it into phases and measures it.\n\n%s", arcwise_safety_text);
  gtk_show_about_dialog(gtk_application_get_active_window(GTK_APPLICATION(app)),
                        "program-name", "Arcwise",
                        "logo-icon-name", ARCWISE_APP_ID,
                        "version", ARCWISE_VERSION,
                        "comments", comments,
                        "license-type", GTK_LICENSE_GPL_3_0,
                        "website", "https://arcwise.org",
                        NULL);
}

static void
act_quit(GSimpleAction *a, GVariant *p, gpointer data)
{
  g_application_quit(G_APPLICATION(data));
}

static const GActionEntry app_entries[] = {
  { "about", act_about, NULL, NULL, NULL, { 0 } },
  { "safety", act_safety, NULL, NULL, NULL, { 0 } },
  { "quit", act_quit, NULL, NULL, NULL, { 0 } },
};

/* ---- lifetime ------------------------------------------------------------------------------ */

/* The launch benchmark's clock starts when `bench launch` spawns the program (it passes its
 * CLOCK_MONOTONIC time in ARCWISE_BENCH_LAUNCH, the same clock in every process), so exec,
 * dynamic linking and GTK's own start-up are counted; by hand it starts at the application's
 * construction. */
static void
launch_mark(ArcwiseApplication *app, const char *what)
{
  if (app->launch_marks != NULL)
  {
    struct timespec cpu;
    clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &cpu);
    g_string_append_printf(app->launch_marks, "launch-phase %-20s %.3f s  (cpu %.3f s)\n", what,
                           (double)(g_get_monotonic_time() - app->launch_us) * 1e-6,
                           (double)cpu.tv_sec + 1e-9 * (double)cpu.tv_nsec);
  }
}

/* `bench launch` reads two marks. The first paint: the end of the first paint of the window's
 * frame clock in which the 3-D stage has drawn (the studio scene; the swing's path may still be
 * loading in its worker thread); after-paint comes once GSK has rendered the frame and handed
 * it to the window system (the buffer swap), and the round trip then waits until the X server
 * (or compositor) has taken it. The swing drawn: the same, for the first frame in which the
 * stage shows the selected swing's model (or its load's failure). The two are the same frame
 * when the model came before the first paint. */
static void
report_first_frame(GdkFrameClock *clock, ArcwiseApplication *app)
{
  GtkWindow *w = gtk_application_get_active_window(GTK_APPLICATION(app));
  if (w == NULL || arcwise_stage_get_frames(arcwise_window_get_stage(ARCWISE_WINDOW(w))) == 0)
    return;
  if (!app->first_paint_seen) {
    app->first_paint_seen = TRUE;
    gdk_display_sync(gtk_widget_get_display(GTK_WIDGET(w)));
    launch_mark(app, "first-3d-frame-shown");
    app->first_paint_s = (double)(g_get_monotonic_time() - app->launch_us) * 1e-6;
  }
  if (!arcwise_window_swing_drawn(ARCWISE_WINDOW(w)))
    return;
  g_signal_handlers_disconnect_matched(clock, G_SIGNAL_MATCH_DATA, 0, 0, NULL, NULL, app);
  gdk_display_sync(gtk_widget_get_display(GTK_WIDGET(w)));
  launch_mark(app, "first-swing-drawn");
  printf("%s", app->launch_marks ? app->launch_marks->str : "");
  printf("launch-to-drawn-window-s %.3f\n", app->first_paint_s);
  printf("launch-to-swing-drawn-s %.3f\n",
         (double)(g_get_monotonic_time() - app->launch_us) * 1e-6);
  fflush(stdout);
  g_application_quit(G_APPLICATION(app));
}

static void
watch_first_frame(GtkWidget *window, ArcwiseApplication *app)
{
  GdkFrameClock *clock = gtk_widget_get_frame_clock(window);
  g_signal_connect(clock, "after-paint", G_CALLBACK(report_first_frame), app);
}

static void
arcwise_application_activate(GApplication *gapp)
{
  ArcwiseApplication *app = ARCWISE_APPLICATION(gapp);
  GtkWindow *window = gtk_application_get_active_window(GTK_APPLICATION(app));
  if (window != NULL) {
    gtk_window_present(window);
    return;
  }
  launch_mark(app, "activate");
  ArcwiseWindow *win = arcwise_window_new(app);
  launch_mark(app, "window-built");
  gtk_window_present(GTK_WINDOW(win));
  launch_mark(app, "window-presented");
  arcwise_window_set_source(win, app->source);
  launch_mark(app, "library-listed");
  GtkWindow *caution = NULL;
  if (app->settings == NULL || !g_settings_get_boolean(app->settings, "safety-acknowledged"))
    caution = safety_dialog(app, GTK_WINDOW(win));
  const char *smoke = g_getenv("ARCWISE_SMOKE_DIR");
  if (smoke != NULL && *smoke != '\0')
    arcwise_smoke_start(win, smoke, caution);
  const char *library_test = g_getenv("ARCWISE_LIBRARY_TEST_DIR");
  if (library_test != NULL && *library_test != '\0')
    arcwise_library_test_start(win, library_test, caution);
  const char *import_test = g_getenv("ARCWISE_IMPORT_TEST_DIR");
  if (import_test != NULL && *import_test != '\0')
    arcwise_import_test_start(win, import_test, caution);
  const char *export_test = g_getenv("ARCWISE_EXPORT_TEST_DIR");
  if (export_test != NULL && *export_test != '\0')
    arcwise_export_test_start(win, export_test, caution);
  const char *motion_test = g_getenv("ARCWISE_MOTION_TEST_DIR");
  if (motion_test != NULL && *motion_test != '\0')
    arcwise_motion_test_start(win, motion_test, caution);
  if (g_getenv("ARCWISE_BENCH_LAUNCH") != NULL) {
    if (gtk_widget_get_realized(GTK_WIDGET(win)))
      watch_first_frame(GTK_WIDGET(win), app);
    else
      g_signal_connect(win, "realize", G_CALLBACK(watch_first_frame), app);
  }
}

static int
arcwise_application_handle_local_options(GApplication *gapp, GVariantDict *options)
{
  ArcwiseApplication *app = ARCWISE_APPLICATION(gapp);
  g_autofree char *lib = NULL;
  if (g_variant_dict_lookup(options, "library", "^ay", &lib))
    app->library_path = g_steal_pointer(&lib);
  app->demo = g_variant_dict_contains(options, "demo");
  g_variant_dict_lookup(options, "demo-size", "i", &app->demo_size);
  return -1;
}

/* The studio's dark style from the first theme parse. GTK 4.8 makes one GtkSettings per
 * display when the display opens (inside gtk_init) and parses the theme there, from each
 * property's default, then the settings.ini files; asking for dark afterwards parses the whole
 * theme a second time (about 80 M instructions, callgrind). So before gtk_init the default of
 * gtk-application-prefer-dark-theme becomes TRUE (a public field of GParamSpecBoolean). A
 * user's GTK_THEME still wins (GTK reads it first) and a settings.ini still sets the value. */
static void
start_dark(void)
{
  GObjectClass *klass = g_type_class_ref(GTK_TYPE_SETTINGS);
  GParamSpec *p = g_object_class_find_property(klass, "gtk-application-prefer-dark-theme");
  if (p != NULL && G_IS_PARAM_SPEC_BOOLEAN(p))
    G_PARAM_SPEC_BOOLEAN(p)->default_value = TRUE;
  g_type_class_unref(klass);
}

static void
arcwise_application_startup(GApplication *gapp)
{
  ArcwiseApplication *app = ARCWISE_APPLICATION(gapp);
  launch_mark(app, "startup");
  start_dark();
  G_APPLICATION_CLASS(arcwise_application_parent_class)->startup(gapp);
  launch_mark(app, "gtk-initialised");

  g_autoptr(GtkCssProvider) css = gtk_css_provider_new();
  gtk_css_provider_load_from_resource(css, "/org/arcwise/Workbench/style.css");
  gtk_style_context_add_provider_for_display(gdk_display_get_default(), GTK_STYLE_PROVIDER(css),
                                             GTK_STYLE_PROVIDER_PRIORITY_APPLICATION);
  /* Set only if still light (a settings.ini said so): GTK parses the theme again on every
   * change notice, even to the same value. */
  GtkSettings *gs = gtk_settings_get_default();
  gboolean dark = FALSE;
  g_object_get(gs, "gtk-application-prefer-dark-theme", &dark, NULL);
  if (!dark)
    g_object_set(gs, "gtk-application-prefer-dark-theme", TRUE, NULL);

  app->settings = open_settings();
  g_action_map_add_action_entries(G_ACTION_MAP(app), app_entries, G_N_ELEMENTS(app_entries), app);
  if (app->settings != NULL) {
    g_autoptr(GAction) units = g_settings_create_action(app->settings, "units");
    g_action_map_add_action(G_ACTION_MAP(app), units);
  }
  static const char *const quit[] = { "<Control>q", NULL };
  static const char *const help[] = { "<Control>question", NULL };
  static const char *const import[] = { "<Control>o", NULL };
  gtk_application_set_accels_for_action(GTK_APPLICATION(app), "app.quit", quit);
  gtk_application_set_accels_for_action(GTK_APPLICATION(app), "win.show-help-overlay", help);
  gtk_application_set_accels_for_action(GTK_APPLICATION(app), "win.import", import);

  if (app->demo_size > 0)
    app->source = arcwise_library_source_new_demo_sized((guint)app->demo_size);
  else if (!app->demo)
    app->source = arcwise_library_source_open_library(app->library_path);
  if (app->source == NULL)
    app->source = arcwise_library_source_new_demo();
  launch_mark(app, "library-opened");
}

static void
arcwise_application_shutdown(GApplication *gapp)
{
  ArcwiseApplication *app = ARCWISE_APPLICATION(gapp);
  G_APPLICATION_CLASS(arcwise_application_parent_class)->shutdown(gapp);
  g_clear_pointer(&app->source, arcwise_library_source_free);
}

static void
arcwise_application_finalize(GObject *o)
{
  ArcwiseApplication *app = ARCWISE_APPLICATION(o);
  g_clear_object(&app->settings);
  g_free(app->library_path);
  if (app->launch_marks != NULL)
    g_string_free(app->launch_marks, TRUE);
  G_OBJECT_CLASS(arcwise_application_parent_class)->finalize(o);
}

static void
arcwise_application_class_init(ArcwiseApplicationClass *klass)
{
  GApplicationClass *app_class = G_APPLICATION_CLASS(klass);
  G_OBJECT_CLASS(klass)->finalize = arcwise_application_finalize;
  app_class->activate = arcwise_application_activate;
  app_class->startup = arcwise_application_startup;
  app_class->shutdown = arcwise_application_shutdown;
  app_class->handle_local_options = arcwise_application_handle_local_options;
}

static void
arcwise_application_init(ArcwiseApplication *self)
{
  self->launch_us = g_get_monotonic_time();
  const char *bench = g_getenv("ARCWISE_BENCH_LAUNCH");
  if (bench != NULL) {
    gint64 spawned = g_ascii_strtoll(bench, NULL, 10);
    if (spawned > 0 && spawned <= self->launch_us && self->launch_us - spawned < 60 * G_USEC_PER_SEC)
      self->launch_us = spawned;
    self->launch_marks = g_string_new(NULL);
    launch_mark(self, "application-created");
  }
  static const GOptionEntry entries[] = {
    { "library", 'l', 0, G_OPTION_ARG_FILENAME, NULL,
      "Open this library file (default: the library in your data folder)", "FILE" },
    { "demo", 0, 0, G_OPTION_ARG_NONE, NULL, "Open the invented demo library", NULL },
    { "demo-size", 0, G_OPTION_FLAG_HIDDEN, G_OPTION_ARG_INT, NULL,
      "A stand-in library of N swings (launch benchmark)", "N" },
    { NULL, 0, 0, 0, NULL, NULL, NULL },
  };
  g_application_add_main_option_entries(G_APPLICATION(self), entries);
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
