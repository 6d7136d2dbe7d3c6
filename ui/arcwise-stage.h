/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "arcwise-offscreen.h"
#include "arcwise-scene.h"
#include "arcwise-swing-model.h"

G_BEGIN_DECLS

/* The 3-D view: a GtkGLArea that owns the scene's GL names and drives arcwise-scene with the
 * camera it orbits, pans and zooms from mouse and touchpad. */
#define ARCWISE_TYPE_STAGE (arcwise_stage_get_type())
G_DECLARE_FINAL_TYPE(ArcwiseStage, arcwise_stage, ARCWISE, STAGE, GtkGLArea)

GtkWidget *arcwise_stage_new(void);

/* The models are borrowed: the caller keeps them alive until replaced or the stage is gone. */
void arcwise_stage_set_swing(ArcwiseStage *self, int slot, const ArcwiseSwingModel *model);
/* Marker times on each swing's own clock (NaN hides). */
void arcwise_stage_set_times(ArcwiseStage *self, double t0_s, double t1_s);
void arcwise_stage_set_view(ArcwiseStage *self, ArcwiseView view);
ArcwiseView arcwise_stage_get_view(ArcwiseStage *self);
ArcwiseSceneOptions *arcwise_stage_get_options(ArcwiseStage *self);
/* The camera as the user left it (orbit, pan and zoom included), for exports. */
void arcwise_stage_get_camera(ArcwiseStage *self, ArcwiseCamera *out);
/* Call after changing the options returned above. */
void arcwise_stage_options_changed(ArcwiseStage *self);

/* Test hook: the next frame drawn is also written to `png_path`; `done` runs after. */
void arcwise_stage_request_snapshot(ArcwiseStage *self, const char *png_path,
                                    GCallback done, gpointer user_data);
/* Frames drawn so far (for tests and the launch benchmark). */
guint64 arcwise_stage_get_frames(ArcwiseStage *self);
/* Message of the last GL failure, or NULL. */
const char *arcwise_stage_get_error_text(ArcwiseStage *self);

G_END_DECLS
