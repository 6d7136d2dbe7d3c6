/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

G_BEGIN_DECLS

#define ARCWISE_TYPE_APPLICATION (arcwise_application_get_type())
G_DECLARE_FINAL_TYPE(ArcwiseApplication, arcwise_application, ARCWISE, APPLICATION, GtkApplication)

ArcwiseApplication *arcwise_application_new(void);
/* The preferences (org.arcwise.Workbench), or NULL when the schema is not installed anywhere. */
GSettings *arcwise_application_get_settings(ArcwiseApplication *app);

/* The caution every user sees on first run and in About (plain text). */
extern const char arcwise_safety_text[];

G_END_DECLS
