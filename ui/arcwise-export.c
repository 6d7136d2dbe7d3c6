/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Exports from the workbench: see arcwise-export.h. */
#include "arcwise-export.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <stdatomic.h>
#include <string.h>

#include <glib/gstdio.h>

#include "export-file.h"
#include "export-scene-models.h"

typedef struct _Job Job;

struct _ArcwiseExporter {
  GtkWindow *parent;
  GtkRevealer *bar;
  GtkLabel *label;
  GtkProgressBar *progress;
  GtkButton *cancel_button;
  Job *job;                 /* the export being asked about or running, NULL when idle */
  GtkWindow *question;      /* the replace-the-file dialog while open */
  GtkNativeDialog *chooser; /* the file chooser while open */
  guint poll_id;            /* progress bar refresh while a job runs */
  guint hide_id;
  char *last_message;
  gboolean last_ok;
};

struct _Job {
  ArcwiseExporter *ex;      /* NULL once the exporter is gone (the job then only cleans up) */
  ArcwiseExportKind kind;
  ArcwiseModelExport req;
  ArcwiseSwingModel *a, *b; /* owned copies */
  ArcwiseCamera camera;
  ArcwiseSceneOptions options;
  double t_a, t_b;
  char *player, *date, *view, *title, *library, *scope;
  gint64 swing_id, session_id;
  gboolean json, imperial;
  char *path;
  gboolean force;
  atomic_bool cancel;
  atomic_int permille;
  gboolean ok;
  char err[512];
  /* numbers and report: the child process */
  GSubprocess *proc;
  char *child_tmp;          /* its temporary file, removed after a cancel */
};

static const char *
kind_noun(ArcwiseExportKind k)
{
  switch (k) {
  case ARCWISE_EXPORT_CLIP: return "clip";
  case ARCWISE_EXPORT_STILL: return "still";
  case ARCWISE_EXPORT_NUMBERS: return "numbers";
  case ARCWISE_EXPORT_REPORT: return "session report";
  }
  return "export";
}

static void
job_free(Job *j)
{
  if (j == NULL)
    return;
  arcwise_swing_model_free(j->a);
  arcwise_swing_model_free(j->b);
  g_free(j->player);
  g_free(j->date);
  g_free(j->view);
  g_free(j->title);
  g_free(j->library);
  g_free(j->scope);
  g_free(j->path);
  g_free(j->child_tmp);
  g_clear_object(&j->proc);
  g_free(j);
}

static gboolean
hide_bar(gpointer data)
{
  ArcwiseExporter *ex = data;
  ex->hide_id = 0;
  if (ex->job == NULL)
    gtk_revealer_set_reveal_child(ex->bar, FALSE);
  return G_SOURCE_REMOVE;
}

static void
show_text(ArcwiseExporter *ex, const char *text)
{
  gtk_label_set_text(ex->label, text);
  gtk_revealer_set_reveal_child(ex->bar, TRUE);
}

/* The job is over (done, failed or cancelled): report it and go idle. */
static void
job_finish(Job *j)
{
  ArcwiseExporter *ex = j->ex;
  if (ex != NULL) {
    if (ex->poll_id) {
      g_source_remove(ex->poll_id);
      ex->poll_id = 0;
    }
    g_free(ex->last_message);
    if (j->ok)
      ex->last_message = g_strdup_printf("Saved the %s as %s.", kind_noun(j->kind), j->path);
    else if (atomic_load(&j->cancel))
      ex->last_message = g_strdup_printf("Cancelled the %s; no file was written.",
                                         kind_noun(j->kind));
    else
      ex->last_message = g_strdup_printf("Could not save the %s: %s", kind_noun(j->kind),
                                         j->err[0] ? j->err : "unknown failure");
    ex->last_ok = j->ok;
    show_text(ex, ex->last_message);
    gtk_progress_bar_set_fraction(ex->progress, j->ok ? 1.0 : 0.0);
    gtk_button_set_label(ex->cancel_button, "Close");
    ex->job = NULL;
    if (ex->hide_id == 0)
      ex->hide_id = g_timeout_add_seconds(10, hide_bar, ex);
  }
  job_free(j);
}

/* ---- clips and stills: a worker thread ---------------------------------------------------- */

static void
clip_progress(void *user, double fraction)
{
  Job *j = user;
  atomic_store(&j->permille, (int)lround(fraction * 1000));
}

static void
scene_thread(GTask *task, gpointer src, gpointer data, GCancellable *c)
{
  Job *j = data;
  if (j->kind == ARCWISE_EXPORT_CLIP) {
    ArcwiseClipStats st;
    j->ok = arcwise_export_clip_models(&j->req, j->path, j->force, clip_progress, j, &j->cancel,
                                       &st, j->err, sizeof j->err);
  } else {
    j->ok = arcwise_export_still_models(&j->req, j->t_a, j->t_b, j->path, j->force, j->err,
                                        sizeof j->err);
  }
  g_task_return_boolean(task, j->ok);
}

static void
scene_done(GObject *src, GAsyncResult *res, gpointer data)
{
  Job *j = g_task_get_task_data(G_TASK(res));
  job_finish(j);
  g_application_release(g_application_get_default());
}

static gboolean
poll_progress(gpointer data)
{
  ArcwiseExporter *ex = data;
  Job *j = ex->job;
  if (j == NULL)
    return G_SOURCE_CONTINUE;
  if (j->kind == ARCWISE_EXPORT_CLIP)
    gtk_progress_bar_set_fraction(ex->progress, atomic_load(&j->permille) / 1000.0);
  else
    gtk_progress_bar_pulse(ex->progress);
  return G_SOURCE_CONTINUE;
}

/* ---- numbers and report: the command line's exporter as a child ------------------------- */

static void
child_done(GObject *src, GAsyncResult *res, gpointer data)
{
  Job *j = data;
  g_autofree char *out = NULL, *errtxt = NULL;
  g_autoptr(GError) e = NULL;
  if (!g_subprocess_communicate_utf8_finish(G_SUBPROCESS(src), res, &out, &errtxt, &e)) {
    g_snprintf(j->err, sizeof j->err, "%s", e->message);
  } else if (g_subprocess_get_if_exited(j->proc) && g_subprocess_get_exit_status(j->proc) == 0) {
    j->ok = TRUE;
  } else {
    g_strstrip(errtxt ? errtxt : (errtxt = g_strdup("")));
    g_snprintf(j->err, sizeof j->err, "%s", errtxt[0] ? errtxt : "the exporter stopped");
  }
  if (!j->ok && atomic_load(&j->cancel) && j->child_tmp != NULL)
    g_remove(j->child_tmp); /* killed mid-write: its temporary file stays behind otherwise */
  job_finish(j);
  g_application_release(g_application_get_default());
}

static gboolean
child_start(Job *j, GError **error)
{
  g_autofree char *exe = g_file_read_link("/proc/self/exe", error);
  if (exe == NULL)
    return FALSE;
  GPtrArray *argv = g_ptr_array_new_with_free_func(g_free);
  g_ptr_array_add(argv, g_strdup(exe));
  g_ptr_array_add(argv, g_strdup("export"));
  if (j->kind == ARCWISE_EXPORT_NUMBERS) {
    g_ptr_array_add(argv, g_strdup("numbers"));
    if (g_strcmp0(j->scope, "player") == 0) {
      g_ptr_array_add(argv, g_strdup("--player"));
      g_ptr_array_add(argv, g_strdup(j->player ? j->player : ""));
    } else if (g_strcmp0(j->scope, "session") == 0) {
      g_ptr_array_add(argv, g_strdup("--session"));
      g_ptr_array_add(argv, g_strdup_printf("%" G_GINT64_FORMAT, j->session_id));
    } else {
      g_ptr_array_add(argv, g_strdup("--swing"));
      g_ptr_array_add(argv, g_strdup_printf("%" G_GINT64_FORMAT, j->swing_id));
    }
    g_ptr_array_add(argv, g_strdup("--format"));
    g_ptr_array_add(argv, g_strdup(j->json ? "json" : "csv"));
  } else {
    g_ptr_array_add(argv, g_strdup("report"));
    g_ptr_array_add(argv, g_strdup("--session"));
    g_ptr_array_add(argv, g_strdup_printf("%" G_GINT64_FORMAT, j->session_id));
    g_ptr_array_add(argv, g_strdup("--units"));
    g_ptr_array_add(argv, g_strdup(j->imperial ? "imperial" : "metric"));
  }
  g_ptr_array_add(argv, g_strdup("--library"));
  g_ptr_array_add(argv, g_strdup(j->library));
  g_ptr_array_add(argv, g_strdup("-o"));
  g_ptr_array_add(argv, g_strdup(j->path));
  if (j->force)
    g_ptr_array_add(argv, g_strdup("--force"));
  g_ptr_array_add(argv, NULL);
  j->proc = g_subprocess_newv((const char *const *)argv->pdata,
                              G_SUBPROCESS_FLAGS_STDOUT_SILENCE | G_SUBPROCESS_FLAGS_STDERR_PIPE,
                              error);
  g_ptr_array_unref(argv);
  if (j->proc == NULL)
    return FALSE;
  /* The exporters write beside the target under the name export-file.h gives. */
  const char *pid = g_subprocess_get_identifier(j->proc);
  char *tmp = arcwise_out_tmp_path_pid(j->path, pid ? atol(pid) : 0);
  j->child_tmp = g_strdup(tmp);
  free(tmp);
  g_subprocess_communicate_utf8_async(j->proc, NULL, NULL, child_done, j);
  return TRUE;
}

/* ---- starting ------------------------------------------------------------------------------ */

static void
job_run(ArcwiseExporter *ex, Job *j)
{
  g_application_hold(g_application_get_default());
  atomic_store(&j->cancel, false);
  atomic_store(&j->permille, 0);
  g_autofree char *txt = g_strdup_printf("Saving the %s as %s…", kind_noun(j->kind), j->path);
  show_text(ex, txt);
  gtk_progress_bar_set_fraction(ex->progress, 0);
  gtk_button_set_label(ex->cancel_button, "Cancel");
  if (ex->hide_id) {
    g_source_remove(ex->hide_id);
    ex->hide_id = 0;
  }
  ex->poll_id = g_timeout_add(100, poll_progress, ex);
  if (j->kind == ARCWISE_EXPORT_CLIP || j->kind == ARCWISE_EXPORT_STILL) {
    GTask *task = g_task_new(NULL, NULL, scene_done, NULL);
    g_task_set_task_data(task, j, NULL);
    g_task_run_in_thread(task, scene_thread);
    g_object_unref(task);
    return;
  }
  g_autoptr(GError) e = NULL;
  if (!child_start(j, &e)) {
    g_snprintf(j->err, sizeof j->err, "cannot start the exporter: %s", e->message);
    job_finish(j);
    g_application_release(g_application_get_default());
  }
}

static void
question_done(GtkDialog *d, int response, ArcwiseExporter *ex)
{
  Job *j = ex->job;
  ex->question = NULL;
  gtk_window_destroy(GTK_WINDOW(d));
  if (j == NULL)
    return;
  if (response == GTK_RESPONSE_ACCEPT) {
    j->force = TRUE;
    job_run(ex, j);
  } else {
    ex->job = NULL;
    g_free(ex->last_message);
    ex->last_message = g_strdup_printf("Kept %s as it was; nothing was saved.", j->path);
    ex->last_ok = FALSE;
    show_text(ex, ex->last_message);
    gtk_button_set_label(ex->cancel_button, "Close");
    job_free(j);
  }
}

/* A file is there already: ask before anything replaces it. */
static void
target_chosen(ArcwiseExporter *ex, Job *j)
{
  if (!g_file_test(j->path, G_FILE_TEST_EXISTS)) {
    job_run(ex, j);
    return;
  }
  g_autofree char *name = g_filename_display_basename(j->path);
  G_GNUC_BEGIN_IGNORE_DEPRECATIONS
  GtkWidget *d = gtk_message_dialog_new(ex->parent, GTK_DIALOG_MODAL | GTK_DIALOG_DESTROY_WITH_PARENT,
                                        GTK_MESSAGE_QUESTION, GTK_BUTTONS_NONE,
                                        "“%s” is there already", name);
  gtk_message_dialog_format_secondary_text(GTK_MESSAGE_DIALOG(d),
      "Saving the %s replaces the file that is there now. Keep it to choose another name.",
      kind_noun(j->kind));
  gtk_dialog_add_buttons(GTK_DIALOG(d), "_Keep the File", GTK_RESPONSE_CANCEL,
                         "_Replace It", GTK_RESPONSE_ACCEPT, NULL);
  gtk_dialog_set_default_response(GTK_DIALOG(d), GTK_RESPONSE_CANCEL);
  G_GNUC_END_IGNORE_DEPRECATIONS
  gtk_widget_add_css_class(d, "export-question");
  ex->question = GTK_WINDOW(d);
  g_signal_connect(d, "response", G_CALLBACK(question_done), ex);
  gtk_window_present(GTK_WINDOW(d));
}

static void
chooser_done(GtkNativeDialog *d, int response, ArcwiseExporter *ex)
{
  Job *j = ex->job;
  ex->chooser = NULL;
  g_autoptr(GFile) f = NULL;
  if (response == GTK_RESPONSE_ACCEPT) {
    G_GNUC_BEGIN_IGNORE_DEPRECATIONS
    f = gtk_file_chooser_get_file(GTK_FILE_CHOOSER(d));
    G_GNUC_END_IGNORE_DEPRECATIONS
  }
  gtk_native_dialog_destroy(d);
  g_object_unref(d);
  if (j == NULL)
    return;
  char *path = f ? g_file_get_path(f) : NULL;
  if (path == NULL) {
    ex->job = NULL;
    job_free(j);
    return;
  }
  g_free(j->path);
  j->path = path;
  target_chosen(ex, j);
}

static char *
suggested_name(const Job *j)
{
  const char *ext = j->kind == ARCWISE_EXPORT_CLIP ? "mp4" : j->kind == ARCWISE_EXPORT_STILL ? "png"
                    : j->kind == ARCWISE_EXPORT_REPORT ? "pdf" : j->json ? "json" : "csv";
  const char *what = j->kind == ARCWISE_EXPORT_NUMBERS ? j->scope
                     : j->kind == ARCWISE_EXPORT_REPORT ? "session" : kind_noun(j->kind);
  g_autofree char *raw = g_strdup_printf("%s %s %s", j->player ? j->player : "swing",
                                         j->date ? j->date : "", what ? what : "");
  /* Letters, digits and dashes only: the name travels to phones and mail. */
  GString *s = g_string_new(NULL);
  for (const char *p = raw; *p; p++) {
    if (g_ascii_isalnum(*p))
      g_string_append_c(s, g_ascii_tolower(*p));
    else if (s->len > 0 && s->str[s->len - 1] != '-')
      g_string_append_c(s, '-');
  }
  while (s->len > 0 && s->str[s->len - 1] == '-')
    g_string_truncate(s, s->len - 1);
  g_string_append_printf(s, ".%s", ext);
  return g_string_free(s, FALSE);
}

gboolean
arcwise_exporter_start(ArcwiseExporter *ex, const ArcwiseExportScene *sc,
                       const ArcwiseExportChoice *ch, const char *path)
{
  if (ex->job != NULL) {
    show_text(ex, "Another export is under way; wait for it or cancel it first.");
    return FALSE;
  }
  const char *why = NULL;
  if (sc->a == NULL)
    why = "Choose a swing first.";
  else if ((ch->kind == ARCWISE_EXPORT_NUMBERS || ch->kind == ARCWISE_EXPORT_REPORT) &&
           (sc->library_path == NULL || sc->swing_id <= 0))
    why = "Numbers and reports come from a stored library; the invented demo swings have no "
          "stored analysis.";
  else if ((ch->kind == ARCWISE_EXPORT_CLIP || ch->kind == ARCWISE_EXPORT_STILL) &&
           (ch->width < 16 || ch->height < 16 || ch->width > 8192 || ch->height > 8192))
    why = "The picture size must be 16 to 8192 pixels a side.";
  if (why != NULL) {
    g_free(ex->last_message);
    ex->last_message = g_strdup(why);
    ex->last_ok = FALSE;
    show_text(ex, why);
    gtk_button_set_label(ex->cancel_button, "Close");
    return FALSE;
  }
  Job *j = g_new0(Job, 1);
  j->ex = ex;
  j->kind = ch->kind;
  static const float zero[3] = { 0, 0, 0 };
  j->a = arcwise_swing_model_copy_shifted(sc->a, zero);
  j->b = sc->b ? arcwise_swing_model_copy_shifted(sc->b, zero) : NULL;
  j->camera = sc->camera;
  j->options = sc->options;
  j->t_a = sc->options.marker_t_s[0];
  j->t_b = sc->b ? sc->options.marker_t_s[1] : NAN;
  j->player = g_strdup(sc->player);
  j->date = g_strdup(sc->date);
  j->view = g_strdup(sc->view_name ? sc->view_name : "free");
  j->title = g_strdup(sc->title);
  j->library = g_strdup(sc->library_path);
  j->scope = g_strdup(ch->scope ? ch->scope : "swing");
  j->swing_id = sc->swing_id;
  j->session_id = sc->session_id;
  j->json = ch->json;
  j->imperial = sc->imperial;
  j->req = (ArcwiseModelExport){
    .a = j->a, .b = j->b, .camera = &j->camera, .options = &j->options, .view_name = j->view,
    .width = ch->width, .height = ch->height, .fps = 30,
    .slowmo = ch->slowmo >= 1 ? ch->slowmo : 1, .overlays = true, .player = j->player,
    .date = j->date, .imperial = sc->imperial,
  };
  ex->job = j;
  if (path != NULL && path[0] != '\0') {
    j->path = g_strdup(path);
    target_chosen(ex, j);
    return TRUE;
  }
  g_autofree char *title = g_strdup_printf("Save the %s", kind_noun(j->kind));
  g_autofree char *name = suggested_name(j);
  G_GNUC_BEGIN_IGNORE_DEPRECATIONS
  GtkFileChooserNative *d = gtk_file_chooser_native_new(title, ex->parent,
                                                        GTK_FILE_CHOOSER_ACTION_SAVE, "_Save",
                                                        "_Cancel");
  gtk_file_chooser_set_current_name(GTK_FILE_CHOOSER(d), name);
  G_GNUC_END_IGNORE_DEPRECATIONS
  gtk_native_dialog_set_modal(GTK_NATIVE_DIALOG(d), TRUE);
  ex->chooser = GTK_NATIVE_DIALOG(d);
  g_signal_connect(d, "response", G_CALLBACK(chooser_done), ex);
  gtk_native_dialog_show(GTK_NATIVE_DIALOG(d));
  return TRUE;
}

void
arcwise_exporter_cancel(ArcwiseExporter *ex)
{
  Job *j = ex->job;
  if (j == NULL) {
    gtk_revealer_set_reveal_child(ex->bar, FALSE);
    return;
  }
  if (ex->chooser != NULL || ex->question != NULL)
    return; /* still being asked about: the dialog decides */
  atomic_store(&j->cancel, true);
  if (j->proc != NULL)
    g_subprocess_force_exit(j->proc);
  gtk_label_set_text(ex->label, "Cancelling…");
}

static void
on_cancel_clicked(GtkButton *b, ArcwiseExporter *ex)
{
  arcwise_exporter_cancel(ex);
}

ArcwiseExporter *
arcwise_exporter_new(GtkWindow *parent, GtkRevealer *bar, GtkLabel *label,
                     GtkProgressBar *progress, GtkButton *cancel)
{
  ArcwiseExporter *ex = g_new0(ArcwiseExporter, 1);
  ex->parent = parent;
  ex->bar = bar;
  ex->label = label;
  ex->progress = progress;
  ex->cancel_button = cancel;
  g_signal_connect(cancel, "clicked", G_CALLBACK(on_cancel_clicked), ex);
  return ex;
}

void
arcwise_exporter_free(ArcwiseExporter *ex)
{
  if (ex == NULL)
    return;
  g_signal_handlers_disconnect_by_data(ex->cancel_button, ex);
  if (ex->poll_id)
    g_source_remove(ex->poll_id);
  if (ex->hide_id)
    g_source_remove(ex->hide_id);
  gboolean asking = ex->question != NULL || ex->chooser != NULL;
  if (ex->question != NULL) {
    g_signal_handlers_disconnect_by_data(ex->question, ex);
    gtk_window_destroy(ex->question);
  }
  if (ex->chooser != NULL) {
    g_signal_handlers_disconnect_by_data(ex->chooser, ex);
    gtk_native_dialog_destroy(ex->chooser);
    g_object_unref(ex->chooser);
  }
  Job *j = ex->job;
  if (j != NULL) {
    if (asking) {
      job_free(j); /* never started */
    } else {
      /* Running: stop it; its completion frees the job and removes any partial file. */
      j->ex = NULL;
      atomic_store(&j->cancel, true);
      if (j->proc != NULL)
        g_subprocess_force_exit(j->proc);
    }
  }
  g_free(ex->last_message);
  g_free(ex);
}

gboolean
arcwise_exporter_busy(ArcwiseExporter *ex)
{
  return ex->job != NULL;
}

const char *
arcwise_exporter_last_message(ArcwiseExporter *ex)
{
  return ex->last_message ? ex->last_message : "";
}

gboolean
arcwise_exporter_last_ok(ArcwiseExporter *ex)
{
  return ex->last_ok;
}

double
arcwise_exporter_fraction(ArcwiseExporter *ex)
{
  return gtk_progress_bar_get_fraction(ex->progress);
}

GtkWindow *
arcwise_exporter_question(ArcwiseExporter *ex)
{
  return ex->question;
}
