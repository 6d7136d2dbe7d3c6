/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise-figures.h"

#include <math.h>
#include <pango/pangocairo.h>
#include <string.h>

#include "arcwise/units.h"

static const char *const phase_labels[ARCWISE_SCENE_N_PHASES] = {
  "Address", "Backswing", "Downswing", "Follow-through", "Finish",
};

const char *
arcwise_phase_label(ArcwiseScenePhase p)
{
  return (int)p >= 0 && p < ARCWISE_SCENE_N_PHASES ? phase_labels[p] : "?";
}

void
arcwise_figures_for_model(const ArcwiseSwingModel *m, ArcwiseFigure out[ARCWISE_N_FIGURES])
{
  const ArcwiseSwingEvents *e = &m->events;
  double back = e->top_s - e->takeaway_s, down = e->impact_s - e->top_s;
  double peak = 0, at_impact = NAN, rise = NAN, length = 0;
  for (size_t i = 0; i < m->n; i++)
    peak = fmax(peak, (double)m->speed_m_s[i]);
  if (isfinite(e->impact_s))
    at_impact = m->speed_m_s[arcwise_swing_model_index_at(m, e->impact_s)];
  if (isfinite(e->top_s) && isfinite(e->takeaway_s)) {
    float top[3], adr[3];
    arcwise_swing_model_position_at(m, e->top_s, top);
    arcwise_swing_model_position_at(m, e->takeaway_s, adr);
    rise = (double)(top[2] - adr[2]);
  }
  double t0 = isfinite(e->takeaway_s) ? e->takeaway_s : 0;
  double t1 = isfinite(e->finish_s) ? e->finish_s : (double)m->t_s[m->n - 1];
  for (size_t i = 1; i < m->n; i++)
    if ((double)m->t_s[i] > t0 && (double)m->t_s[i] <= t1) {
      double d2 = 0;
      for (int k = 0; k < 3; k++) {
        double d = (double)(m->pos_m[i][k] - m->pos_m[i - 1][k]);
        d2 += d * d;
      }
      length += sqrt(d2);
    }
  const ArcwiseSwingAnalysed *an = &m->analysed;
  /* The analysis's own numbers win: they are what the library stored, exported and compared. */
#define STORED(id, measured) (an->present ? an->metric[id] : (double)(measured))
  ArcwiseFigure f[ARCWISE_N_FIGURES] = {
    { "Backswing", STORED(AW_METRIC_BACKSWING_S, back), ARCWISE_FIGURE_TIME },
    { "Downswing", STORED(AW_METRIC_DOWNSWING_S, down), ARCWISE_FIGURE_TIME },
    { "Tempo (back : down)", STORED(AW_METRIC_TEMPO_RATIO, back / down), ARCWISE_FIGURE_RATIO },
    { "Peak hand speed", STORED(AW_METRIC_PEAK_HAND_SPEED_M_S, peak), ARCWISE_FIGURE_SPEED },
    { "Hand speed at impact", STORED(AW_METRIC_HAND_SPEED_IMPACT_M_S, at_impact),
      ARCWISE_FIGURE_SPEED },
    { "Hands rise to the top", STORED(AW_METRIC_TOP_HEIGHT_M, rise), ARCWISE_FIGURE_LENGTH },
    { "Hand path length", STORED(AW_METRIC_PATH_LENGTH_M, length), ARCWISE_FIGURE_LENGTH },
    { "Club-head speed (estimate)", STORED(AW_METRIC_CLUB_SPEED_IMPACT_M_S, NAN),
      ARCWISE_FIGURE_SPEED },
    { "Backswing plane", STORED(AW_METRIC_PLANE_BACKSWING_DEG, NAN), ARCWISE_FIGURE_ANGLE },
    { "Downswing plane", STORED(AW_METRIC_PLANE_DOWNSWING_DEG, NAN), ARCWISE_FIGURE_ANGLE },
    { "Hand path at impact (+ in-to-out)", STORED(AW_METRIC_PATH_DIRECTION_DEG, NAN),
      ARCWISE_FIGURE_ANGLE },
  };
#undef STORED
  memcpy(out, f, sizeof f);
}

char *
arcwise_figure_format(const ArcwiseFigure *f, ArcwiseUnits units, gboolean diff)
{
  if (!isfinite(f->value))
    return g_strdup("—");
  const char *sign = diff && f->value >= 0 ? "+" : "";
  if (diff && f->value < 0) {
    /* A difference that rounds to nothing is shown as "+0.0", never as "-0.0". */
    ArcwiseFigure mag = *f;
    mag.value = -f->value;
    g_autofree char *m = arcwise_figure_format(&mag, units, TRUE);   /* "+0.17 s" */
    if (g_ascii_strtod(m + 1, NULL) == 0.0)
      return g_steal_pointer(&m);
    m[0] = '-';
    return g_steal_pointer(&m);
  }
  switch (f->kind) {
  case ARCWISE_FIGURE_TIME:
    return g_strdup_printf("%s%.2f s", sign, f->value);
  case ARCWISE_FIGURE_SPEED:
    if (units == ARCWISE_UNITS_IMPERIAL)
      return g_strdup_printf("%s%.1f mph", sign, f->value / AW_M_S_PER_MPH);
    return g_strdup_printf("%s%.1f m/s", sign, f->value);
  case ARCWISE_FIGURE_LENGTH:
    if (units == ARCWISE_UNITS_IMPERIAL)
      return g_strdup_printf("%s%.1f in", sign, f->value / AW_M_PER_INCH);
    return g_strdup_printf("%s%.1f cm", sign, f->value * 100.0);
  case ARCWISE_FIGURE_ANGLE:
    return g_strdup_printf("%s%.1f°", sign, f->value);
  case ARCWISE_FIGURE_RATIO:
  default:
    return diff ? g_strdup_printf("%s%.2f", sign, f->value) : g_strdup_printf("%.1f : 1", f->value);
  }
}

static char *
length_text(double m, ArcwiseUnits units)
{
  ArcwiseFigure f = { "", m, ARCWISE_FIGURE_LENGTH };
  return arcwise_figure_format(&f, units, FALSE);
}

char *
arcwise_quality_text(const ArcwiseSwingModel *m, ArcwiseUnits units)
{
  GString *s = g_string_new(NULL);
  gboolean any = FALSE;
  for (int p = ARCWISE_SCENE_PHASE_BACKSWING; p <= ARCWISE_SCENE_PHASE_FOLLOW_THROUGH; p++) {
    double occ = m->phase_occluded[p];
    if (!isfinite(occ) || occ < 0.05)
      continue;
    /* Duration of the occluded samples in this phase. */
    double dur = 0;
    for (size_t i = 1; i < m->n; i++)
      if (m->phase[i] == p && m->occluded[i])
        dur += (double)(m->t_s[i] - m->t_s[i - 1]);
    g_autofree char *band = length_text((double)m->phase_band_max_m[p], units);
    g_string_append_printf(s, "• <b>%s</b>: the camera lost the hands for %.2f s (%.0f %% of the "
                           "phase). Over those gaps the wrist sensor alone carried the path; at its "
                           "weakest point the hands were within ±%s of the drawn path (2σ).\n",
                           phase_labels[p], dur, 100.0 * occ, band);
    any = TRUE;
  }
  double share_sum = 0;
  int share_n = 0;
  for (int p = 0; p < ARCWISE_SCENE_N_PHASES; p++)
    if (isfinite(m->phase_cam_share[p])) {
      share_sum += (double)m->phase_cam_share[p];
      share_n++;
    }
  if (!any)
    g_string_append(s, "• The camera saw the hands through the whole swing.\n");
  const ArcwiseSwingAnalysed *an = &m->analysed;
  /* Who carried each phase, by the analysis's masking test (the fusion re-run without the
   * camera, and without the wrist sensor). */
  for (int p = ARCWISE_SCENE_PHASE_BACKSWING; an->present && p <= ARCWISE_SCENE_PHASE_FOLLOW_THROUGH; p++) {
    const char *who = an->dominance[p] == AW_DOMINANCE_CAMERA ? "mostly from the camera" :
                      an->dominance[p] == AW_DOMINANCE_IMU ? "mostly from the wrist sensor" :
                      an->dominance[p] == AW_DOMINANCE_SHARED ? "from both sensors together" : NULL;
    if (who != NULL)
      g_string_append_printf(s, "• <b>%s</b>: the path comes %s.\n", phase_labels[p], who);
  }
  for (unsigned bit = 0; an->present && bit < AW_NOTE_NOTE_COUNT_; bit++) {
    const char *text = (an->notes & (1u << bit)) ? aw_quality_note_text(1u << bit) : NULL;
    if (text != NULL) {
      g_autofree char *esc = g_markup_escape_text(text, -1);
      g_string_append_printf(s, "• %s\n", esc);
    }
  }
  if (an->present && an->practice)
    g_string_append(s, "• No ball contact was found: treated as a practice swing.\n");
  if (!an->present)
    g_string_append(s, "• Not analysed yet: the times and speeds above are measured on the drawn "
                       "path only.\n");
  else if (share_n > 0)
    g_string_append_printf(s, "• Over the swing, about %.0f %% of the position information came "
                           "from the camera and the rest from the wrist sensor.\n",
                           100.0 * share_sum / share_n);
  g_string_append(s, "<i>Every number here is an estimate from consumer sensors, not a medical "
                     "or equipment-fitting assessment.</i>");
  return g_string_free(s, FALSE);
}

void
arcwise_phase_deviation(const ArcwiseSwingModel *a, const ArcwiseSwingModel *b, int only_event,
                        double rms[ARCWISE_SCENE_N_PHASES], double mx[ARCWISE_SCENE_N_PHASES])
{
  double sum[ARCWISE_SCENE_N_PHASES] = { 0 };
  size_t cnt[ARCWISE_SCENE_N_PHASES] = { 0 };
  for (int p = 0; p < ARCWISE_SCENE_N_PHASES; p++)
    mx[p] = 0;
  for (size_t i = 0; i < a->n; i++) {
    int p = a->phase[i];
    double tb = arcwise_swing_sync_time(a, b, (double)a->t_s[i], only_event);
    float pb[3];
    arcwise_swing_model_position_at(b, tb, pb);
    double d2 = 0;
    for (int k = 0; k < 3; k++) {
      double d = (double)(a->pos_m[i][k] - pb[k]);
      d2 += d * d;
    }
    sum[p] += d2;
    cnt[p]++;
    mx[p] = fmax(mx[p], sqrt(d2));
  }
  for (int p = 0; p < ARCWISE_SCENE_N_PHASES; p++) {
    rms[p] = cnt[p] ? sqrt(sum[p] / (double)cnt[p]) : (double)NAN;
    if (!cnt[p])
      mx[p] = NAN;
  }
}

/* ---- chart ---------------------------------------------------------------------------------- */

void
arcwise_draw_speed_chart(cairo_t *cr, double w, double h, const ArcwiseSwingModel *a,
                         const ArcwiseSwingModel *b, int only_event, double t_s,
                         ArcwiseUnits units, double font_px)
{
  cairo_set_source_rgb(cr, 0.11, 0.13, 0.16);
  cairo_paint(cr);
  if (a == NULL || a->n < 2)
    return;
  const double ml = font_px * 3.2, mr = 8, mt = 8, mb = font_px * 1.8;
  double pw = w - ml - mr, ph = h - mt - mb;
  double t_end = (double)a->t_s[a->n - 1];
  double scale = units == ARCWISE_UNITS_IMPERIAL ? 1.0 / AW_M_S_PER_MPH : 1.0;
  double vmax = 0;
  for (size_t i = 0; i < a->n; i++)
    vmax = fmax(vmax, (double)a->speed_m_s[i]);
  if (b != NULL)
    for (size_t i = 0; i < b->n; i++)
      vmax = fmax(vmax, (double)b->speed_m_s[i]);
  vmax = fmax(1.0, vmax) * scale;
  double step = units == ARCWISE_UNITS_IMPERIAL ? 5.0 : 2.0;
  double top = ceil(vmax / step) * step;
#define X(t) (ml + pw * (t) / t_end)
#define Y(v) (mt + ph * (1.0 - (v) / top))

  /* Phase bands. */
  size_t start = 0;
  for (size_t i = 1; i <= a->n; i++) {
    if (i < a->n && a->phase[i] == a->phase[start])
      continue;
    float rgb[3];
    arcwise_scene_phase_rgb(a->phase[start], rgb);
    cairo_set_source_rgba(cr, rgb[0], rgb[1], rgb[2], 0.16);
    cairo_rectangle(cr, X((double)a->t_s[start]), mt,
                    X((double)a->t_s[i - 1]) - X((double)a->t_s[start]) + 1, ph);
    cairo_fill(cr);
    start = i;
  }

  /* Grid and labels. */
  PangoLayout *layout = pango_cairo_create_layout(cr);
  PangoFontDescription *font = pango_font_description_from_string("Sans");
  pango_font_description_set_absolute_size(font, font_px * PANGO_SCALE);
  pango_layout_set_font_description(layout, font);
  cairo_set_line_width(cr, 1);
  for (double v = 0; v <= top + 1e-9; v += step) {
    cairo_set_source_rgba(cr, 1, 1, 1, 0.10);
    cairo_move_to(cr, ml, Y(v) + 0.5);
    cairo_line_to(cr, ml + pw, Y(v) + 0.5);
    cairo_stroke(cr);
    g_autofree char *txt = g_strdup_printf("%.0f", v);
    pango_layout_set_text(layout, txt, -1);
    int tw, th;
    pango_layout_get_pixel_size(layout, &tw, &th);
    cairo_set_source_rgba(cr, 1, 1, 1, 0.7);
    cairo_move_to(cr, ml - tw - 6, Y(v) - th / 2.0);
    pango_cairo_show_layout(cr, layout);
  }
  pango_layout_set_text(layout, units == ARCWISE_UNITS_IMPERIAL ? "mph" : "m/s", -1);
  cairo_move_to(cr, 2, mt);
  pango_cairo_show_layout(cr, layout);
  g_autofree char *tlabel = g_strdup_printf("time, s (0 – %.2f)", t_end);
  pango_layout_set_text(layout, tlabel, -1);
  cairo_move_to(cr, ml, mt + ph + 4);
  pango_cairo_show_layout(cr, layout);

  /* Event marks. */
  const double ev[4] = { a->events.takeaway_s, a->events.top_s, a->events.impact_s,
                         a->events.finish_s };
  cairo_set_source_rgba(cr, 1, 1, 1, 0.45);
  for (int k = 0; k < 4; k++)
    if (isfinite(ev[k])) {
      cairo_move_to(cr, X(ev[k]) + 0.5, mt);
      cairo_line_to(cr, X(ev[k]) + 0.5, mt + ph);
      cairo_stroke(cr);
    }

  /* Comparison swing, on a's time axis. */
  if (b != NULL) {
    float rgb[3];
    arcwise_scene_compare_rgb(rgb);
    cairo_set_source_rgba(cr, rgb[0], rgb[1], rgb[2], 0.9);
    cairo_set_line_width(cr, 2);
    double dash[] = { 6, 4 };
    cairo_set_dash(cr, dash, 2, 0);
    for (size_t i = 0; i < a->n; i++) {
      double tb = arcwise_swing_sync_time(a, b, (double)a->t_s[i], only_event);
      size_t j = arcwise_swing_model_index_at(b, tb);
      double v = (double)b->speed_m_s[j] * scale;
      if (i == 0) cairo_move_to(cr, X((double)a->t_s[i]), Y(v));
      else cairo_line_to(cr, X((double)a->t_s[i]), Y(v));
    }
    cairo_stroke(cr);
    cairo_set_dash(cr, NULL, 0, 0);
  }

  /* This swing, coloured by the speed ramp of the 3-D view. */
  cairo_set_line_width(cr, 3);
  cairo_set_line_cap(cr, CAIRO_LINE_CAP_ROUND);
  double vtop = fmax(8.0, vmax / scale);
  for (size_t i = 1; i < a->n; i++) {
    float rgb[3];
    arcwise_scene_speed_rgb(a->speed_m_s[i] / (float)vtop, rgb);
    if (a->occluded[i])
      rgb[0] = rgb[1] = rgb[2] = 0.82f;
    cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
    cairo_move_to(cr, X((double)a->t_s[i - 1]), Y((double)a->speed_m_s[i - 1] * scale));
    cairo_line_to(cr, X((double)a->t_s[i]), Y((double)a->speed_m_s[i] * scale));
    cairo_stroke(cr);
  }

  /* Playhead. */
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_set_line_width(cr, 2);
  double tx = X(CLAMP(t_s, 0, t_end));
  cairo_move_to(cr, tx, mt);
  cairo_line_to(cr, tx, mt + ph);
  cairo_stroke(cr);
#undef X
#undef Y
  pango_font_description_free(font);
  g_object_unref(layout);
}
