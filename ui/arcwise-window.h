/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "arcwise-application.h"

G_BEGIN_DECLS

#define ARCWISE_TYPE_WINDOW (arcwise_window_get_type())
G_DECLARE_FINAL_TYPE(ArcwiseWindow, arcwise_window, ARCWISE, WINDOW, GtkApplicationWindow)

ArcwiseWindow *arcwise_window_new(ArcwiseApplication *app);

G_END_DECLS
