/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The player editor: name, handedness, lead wrist, height and clubs. */
#include <math.h>

#include "arcwise-library.h"

#define ARCWISE_TYPE_PLAYER_EDITOR (arcwise_player_editor_get_type())
G_DECLARE_FINAL_TYPE(ArcwisePlayerEditor, arcwise_player_editor, ARCWISE, PLAYER_EDITOR, GtkWindow)

struct _ArcwisePlayerEditor {
  GtkWindow parent_instance;

  /* Template widgets */
  GtkEntry *name_entry;
  GtkDropDown *handed_dropdown;
  GtkDropDown *wrist_dropdown;
  GtkSpinButton *height_spin;
  GtkEntry *clubs_entry;
  GtkLabel *error_label;

  /* Borrowed */
  ArcwiseLibrarySource *source;
  GCallback saved;
  gpointer saved_data;

  /* Owned */
  ArcwisePlayerRecord record;
};

G_DEFINE_FINAL_TYPE(ArcwisePlayerEditor, arcwise_player_editor, GTK_TYPE_WINDOW)

static void
on_save(ArcwisePlayerEditor *self)
{
  const char *name = gtk_editable_get_text(GTK_EDITABLE(self->name_entry));
  g_autofree char *trimmed = g_strstrip(g_strdup(name));
  if (*trimmed == '\0') {
    gtk_label_set_text(self->error_label, "A player needs a name.");
    return;
  }
  ArcwisePlayerRecord r = self->record;
  r.name = trimmed;
  guint h = gtk_drop_down_get_selected(self->handed_dropdown);
  r.handed = h == 1 ? 1 : h == 2 ? -1 : 0;
  r.lead_wrist = (int)gtk_drop_down_get_selected(self->wrist_dropdown);
  double cm = gtk_spin_button_get_value(self->height_spin);
  r.height_m = cm > 0 ? cm / 100.0 : (double)NAN;
  r.clubs = (char *)gtk_editable_get_text(GTK_EDITABLE(self->clubs_entry));
  g_autoptr(GError) error = NULL;
  if (!arcwise_library_source_save_player(self->source, &r, &error)) {
    gtk_label_set_text(self->error_label, error->message);
    return;
  }
  GCallback cb = self->saved;
  gpointer data = self->saved_data;
  gtk_window_close(GTK_WINDOW(self));
  if (cb)
    ((void (*)(gpointer))cb)(data);
}

static void
arcwise_player_editor_finalize(GObject *o)
{
  arcwise_player_record_clear(&ARCWISE_PLAYER_EDITOR(o)->record);
  G_OBJECT_CLASS(arcwise_player_editor_parent_class)->finalize(o);
}

static void
arcwise_player_editor_class_init(ArcwisePlayerEditorClass *klass)
{
  GtkWidgetClass *wc = GTK_WIDGET_CLASS(klass);
  G_OBJECT_CLASS(klass)->finalize = arcwise_player_editor_finalize;
  gtk_widget_class_set_template_from_resource(wc, "/org/arcwise/Workbench/arcwise-player-editor.ui");
  gtk_widget_class_bind_template_child(wc, ArcwisePlayerEditor, name_entry);
  gtk_widget_class_bind_template_child(wc, ArcwisePlayerEditor, handed_dropdown);
  gtk_widget_class_bind_template_child(wc, ArcwisePlayerEditor, wrist_dropdown);
  gtk_widget_class_bind_template_child(wc, ArcwisePlayerEditor, height_spin);
  gtk_widget_class_bind_template_child(wc, ArcwisePlayerEditor, clubs_entry);
  gtk_widget_class_bind_template_child(wc, ArcwisePlayerEditor, error_label);
  gtk_widget_class_bind_template_callback(wc, on_save);
  gtk_widget_class_add_binding_action(wc, GDK_KEY_Escape, 0, "window.close", NULL);
}

static void
arcwise_player_editor_init(ArcwisePlayerEditor *self)
{
  gtk_widget_init_template(GTK_WIDGET(self));
}

void
arcwise_player_editor_present(GtkWindow *parent, ArcwiseLibrarySource *src, gint64 player_id,
                              GCallback saved, gpointer data)
{
  ArcwisePlayerEditor *self = g_object_new(ARCWISE_TYPE_PLAYER_EDITOR, "transient-for", parent,
                                           NULL);
  self->source = src;
  self->saved = saved;
  self->saved_data = data;
  g_autoptr(GError) error = NULL;
  if (!arcwise_library_source_get_player(src, player_id, &self->record, &error)) {
    gtk_label_set_text(self->error_label, error->message);
  } else {
    gtk_editable_set_text(GTK_EDITABLE(self->name_entry), self->record.name ? self->record.name : "");
    gtk_drop_down_set_selected(self->handed_dropdown,
                               self->record.handed > 0 ? 1 : self->record.handed < 0 ? 2 : 0);
    gtk_drop_down_set_selected(self->wrist_dropdown, (guint)CLAMP(self->record.lead_wrist, 0, 2));
    gtk_spin_button_set_value(self->height_spin,
                              isfinite(self->record.height_m) ? self->record.height_m * 100 : 0);
    gtk_editable_set_text(GTK_EDITABLE(self->clubs_entry), self->record.clubs ? self->record.clubs : "");
  }
  gtk_window_present(GTK_WINDOW(self));
}
