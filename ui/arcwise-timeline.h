/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "arcwise-swing-model.h"

G_BEGIN_DECLS

/* The scrubber under the 3-D view: the swing's phases as coloured bands, its events as
 * labelled marks (address, top, impact, finish), and the playhead. Click or drag to move the
 * playhead; emits "scrubbed" with the new time in seconds. */
#define ARCWISE_TYPE_TIMELINE (arcwise_timeline_get_type())
G_DECLARE_FINAL_TYPE(ArcwiseTimeline, arcwise_timeline, ARCWISE, TIMELINE, GtkWidget)

GtkWidget *arcwise_timeline_new(void);
/* Borrowed model (NULL clears). */
void arcwise_timeline_set_model(ArcwiseTimeline *self, const ArcwiseSwingModel *model);
void arcwise_timeline_set_time(ArcwiseTimeline *self, double t_s);
double arcwise_timeline_get_time(ArcwiseTimeline *self);

G_END_DECLS
