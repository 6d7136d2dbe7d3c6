/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The numbers of the sheet: key figures of a swing in the user's units, data-quality notes in
 * plain words, the per-phase deviation of two swings, and the hand-speed chart (cairo). */

#include <cairo.h>
#include <glib.h>

#include "arcwise-swing-model.h"
#include "display-units.h"

G_BEGIN_DECLS

typedef enum {
  ARCWISE_FIGURE_TIME = 0,      /* s */
  ARCWISE_FIGURE_SPEED,         /* m/s */
  ARCWISE_FIGURE_LENGTH,        /* m */
  ARCWISE_FIGURE_RATIO,         /* 1 */
  ARCWISE_FIGURE_ANGLE,         /* degrees */
} ArcwiseFigureKind;

typedef struct {
  const char *label;
  double value;                 /* SI; NaN = not available */
  ArcwiseFigureKind kind;
} ArcwiseFigure;

enum { ARCWISE_N_FIGURES = 11 };

/* Backswing, downswing, tempo, peak hand speed, hand speed at impact, hands rise to the top,
 * hand path length (takeaway to finish), club-head speed at impact (estimate), backswing and
 * downswing plane, hand path through impact. From the swing's analysis (m->analysed, the
 * library's stored metrics) when there is one; otherwise the first seven are measured on the
 * drawn path and the rest are NaN. */
void arcwise_figures_for_model(const ArcwiseSwingModel *m, ArcwiseFigure out[ARCWISE_N_FIGURES]);

/* "8.4 m/s" / "18.8 mph", "12.3 cm" / "4.8 in", "0.80 s", "3.0 : 1"; "—" for NaN. With
 * `signed_diff` a sign is always shown. */
char *arcwise_figure_format(const ArcwiseFigure *f, ArcwiseUnits units, gboolean signed_diff);

/* Plain-words notes on where the path can be trusted (Pango markup): camera gaps per phase,
 * which sensor carried each phase (when the analysis measured it), the analysis's quality
 * notes, and the caution that the numbers are estimates. */
char *arcwise_quality_text(const ArcwiseSwingModel *m, ArcwiseUnits units);

/* Per-phase RMS and maximum distance between swing a and swing b sampled at a's times mapped
 * by arcwise_swing_sync_time(a, b, t, only_event). NaN for a phase a does not have. */
void arcwise_phase_deviation(const ArcwiseSwingModel *a, const ArcwiseSwingModel *b,
                             int only_event, double rms_m[ARCWISE_SCENE_N_PHASES],
                             double max_m[ARCWISE_SCENE_N_PHASES]);

const char *arcwise_phase_label(ArcwiseScenePhase p);

/* Hand speed over time with phase bands, event marks and the playhead; b (may be NULL) is
 * drawn on a's time axis through the sync map. */
void arcwise_draw_speed_chart(cairo_t *cr, double width, double height,
                              const ArcwiseSwingModel *a, const ArcwiseSwingModel *b,
                              int only_event, double t_s, ArcwiseUnits units, double font_px);

G_END_DECLS
