/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "export-report.h"

#include "export-file.h"

#include "arcwise-config.h"

#include <cairo-pdf.h>
#include <fontconfig/fontconfig.h>
#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#define AW_PI_2_ 1.57079632679489661923 /* pi / 2 */

const char arcwise_report_caution[] =
  "Swinging a club indoors can hurt people. Keep a clear space around the player well beyond "
  "the club's reach, with the camera, the screen and onlookers outside it; warm up, and stop "
  "when tired or in pain. Every number here is an estimate from consumer sensors, not a medical, "
  "physiotherapy or equipment-fitting assessment. Follow the rules of your venue and the advice "
  "of a qualified instructor.";

/* A4 in PostScript points (ISO 216: 210 x 297 mm; 1 pt = 1/72 in). */
#define PAGE_W 595.276
#define PAGE_H 841.890
#define MARGIN 42.0

static const char *const phase_names[ARCWISE_REPORT_PHASES] = {
  "Address", "Backswing", "Downswing", "Follow-through", "Finish",
};
static const double phase_rgb[ARCWISE_REPORT_PHASES][3] = {
  { 0.55, 0.60, 0.66 }, { 0.20, 0.58, 0.86 }, { 0.92, 0.45, 0.16 },
  { 0.48, 0.74, 0.30 }, { 0.62, 0.46, 0.80 },
};
static const double ink[3] = { 0.12, 0.14, 0.18 };
static const double accent[3] = { 0.10, 0.36, 0.52 };

static void
font(cairo_t *cr, double size, bool bold)
{
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                         bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, size);
}

static double
width_of(cairo_t *cr, const char *s)
{
  cairo_text_extents_t e;
  cairo_text_extents(cr, s, &e);
  return e.x_advance;
}

static void
text(cairo_t *cr, double x, double y, const char *s)
{
  cairo_move_to(cr, x, y);
  cairo_show_text(cr, s);
}

static void
text_right(cairo_t *cr, double x, double y, const char *s)
{
  text(cr, x - width_of(cr, s), y, s);
}

static void
text_centre(cairo_t *cr, double x, double y, const char *s)
{
  text(cr, x - width_of(cr, s) / 2, y, s);
}

/* Word-wrapped paragraph; returns the y after it. */
static double
paragraph(cairo_t *cr, double x, double y, double w, double leading, const char *s)
{
  char line[640] = "", word[128];
  const char *p = s;
  while (*p) {
    size_t n = strcspn(p, " ");
    if (n >= sizeof word)
      n = sizeof word - 1;
    memcpy(word, p, n);
    word[n] = '\0';
    p += n;
    while (*p == ' ')
      p++;
    char trial[800];
    snprintf(trial, sizeof trial, "%s%s%s", line, line[0] ? " " : "", word);
    if (line[0] && width_of(cr, trial) > w) {
      text(cr, x, y, line);
      y += leading;
      snprintf(line, sizeof line, "%s", word);
    } else {
      memcpy(line, trial, strlen(trial) + 1 > sizeof line ? sizeof line - 1 : strlen(trial) + 1);
      line[sizeof line - 1] = '\0';
    }
  }
  if (line[0]) {
    text(cr, x, y, line);
    y += leading;
  }
  return y;
}

static void
fmt_value(char *buf, size_t n, double v, int decimals)
{
  if (!isfinite(v))
    snprintf(buf, n, "–");
  else
    snprintf(buf, n, "%.*f", decimals, v);
}

static void
footer(cairo_t *cr, const ArcwiseReport *r, int page)
{
  char buf[256];
  font(cr, 7.5, false);
  cairo_set_source_rgb(cr, 0.45, 0.47, 0.5);
  snprintf(buf, sizeof buf, "%s · %s · Arcwise %s", r->player ? r->player : "",
           r->date ? r->date : "", ARCWISE_VERSION);
  text(cr, MARGIN, PAGE_H - 22, buf);
  snprintf(buf, sizeof buf, "page %d", page);
  text_right(cr, PAGE_W - MARGIN, PAGE_H - 22, buf);
}

static void
heading(cairo_t *cr, double y, const char *s)
{
  font(cr, 12.5, true);
  cairo_set_source_rgb(cr, accent[0], accent[1], accent[2]);
  text(cr, MARGIN, y, s);
  cairo_set_line_width(cr, 0.8);
  cairo_move_to(cr, MARGIN, y + 5);
  cairo_line_to(cr, PAGE_W - MARGIN, y + 5);
  cairo_stroke(cr);
}

/* Page 1: header, caution, metrics table, consistency. */
static void
page_table(cairo_t *cr, const ArcwiseReport *r)
{
  char buf[256];
  cairo_set_source_rgb(cr, accent[0], accent[1], accent[2]);
  cairo_rectangle(cr, 0, 0, PAGE_W, 86);
  cairo_fill(cr);
  cairo_set_source_rgb(cr, 1, 1, 1);
  font(cr, 22, true);
  text(cr, MARGIN, 42, "Session report");
  font(cr, 12, false);
  snprintf(buf, sizeof buf, "%s  ·  %s%s%s%s%s", r->player ? r->player : "Player",
           r->date ? r->date : "", r->place ? "  ·  " : "", r->place ? r->place : "",
           r->club ? "  ·  " : "", r->club ? r->club : "");
  text(cr, MARGIN, 66, buf);

  double y = 112;
  /* Caution box. */
  font(cr, 8.5, false);
  double box_top = y - 12;
  cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
  double end = paragraph(cr, MARGIN + 30, y, PAGE_W - 2 * MARGIN - 40, 11.5,
                         arcwise_report_caution);
  cairo_set_source_rgb(cr, 0.86, 0.55, 0.1);
  cairo_set_line_width(cr, 1.2);
  cairo_rectangle(cr, MARGIN, box_top, PAGE_W - 2 * MARGIN, end - box_top);
  cairo_stroke(cr);
  font(cr, 16, true);
  text(cr, MARGIN + 9, box_top + 20, "!");
  y = end + 26;

  snprintf(buf, sizeof buf, "Swings (%zu)", r->n_swings);
  heading(cr, y, buf);
  y += 24;
  size_t nc = r->n_columns;
  double label_w = 60, col_w = (PAGE_W - 2 * MARGIN - label_w) / (nc > 0 ? (double)nc : 1);
  /* Column heads on two lines: label, unit. */
  font(cr, 7.5, true);
  cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
  text(cr, MARGIN, y + 9, "Swing");
  for (size_t c = 0; c < nc; c++) {
    double xr = MARGIN + label_w + col_w * (double)(c + 1) - 4;
    /* Split a long label on its last space. */
    const char *lab = r->columns[c].label;
    /* One line if it fits, else two at the first space; shrink what is still too wide. */
    const char *sp = strchr(lab, ' ');
    char l1[128], l2[128] = "";
    font(cr, 7.5, true);
    if (width_of(cr, lab) > col_w - 6 && sp != NULL) {
      snprintf(l1, sizeof l1, "%.*s", (int)(sp - lab), lab);
      snprintf(l2, sizeof l2, "%s", sp + 1);
    } else {
      snprintf(l1, sizeof l1, "%s", lab);
    }
    double wmax = fmax(width_of(cr, l1), width_of(cr, l2));
    double fs = wmax > col_w - 6 ? 7.5 * (col_w - 6) / wmax : 7.5;
    font(cr, fs, true);
    if (l2[0]) {
      text_right(cr, xr, y, l1);
      text_right(cr, xr, y + 9, l2);
    } else {
      text_right(cr, xr, y + 9, l1);
    }
    font(cr, 7, false);
    snprintf(buf, sizeof buf, "%s", r->columns[c].unit && r->columns[c].unit[0]
                                       ? r->columns[c].unit : "ratio");
    text_right(cr, xr, y + 19, buf);
  }
  y += 26;
  cairo_set_line_width(cr, 0.6);
  cairo_move_to(cr, MARGIN, y);
  cairo_line_to(cr, PAGE_W - MARGIN, y);
  cairo_stroke(cr);
  y += 13;
  double row_h = 14;
  size_t max_rows = (size_t)((PAGE_H - 140 - y) / row_h);
  for (size_t s = 0; s < r->n_swings && s < max_rows; s++) {
    if (s % 2 == 1) {
      cairo_set_source_rgb(cr, 0.94, 0.95, 0.97);
      cairo_rectangle(cr, MARGIN, y - 10, PAGE_W - 2 * MARGIN, row_h);
      cairo_fill(cr);
    }
    cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
    font(cr, 8, false);
    text(cr, MARGIN + 2, y, r->swings[s].label ? r->swings[s].label : "");
    for (size_t c = 0; c < nc; c++) {
      fmt_value(buf, sizeof buf, r->swings[s].values[c], r->columns[c].decimals);
      text_right(cr, MARGIN + label_w + col_w * (double)(c + 1) - 4, y, buf);
    }
    y += row_h;
  }
  if (r->n_swings > max_rows) {
    font(cr, 8, false);
    snprintf(buf, sizeof buf, "... %zu more swings in the CSV export", r->n_swings - max_rows);
    text(cr, MARGIN + 2, y, buf);
    y += row_h;
  }
  cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
  cairo_move_to(cr, MARGIN, y - 9);
  cairo_line_to(cr, PAGE_W - MARGIN, y - 9);
  cairo_stroke(cr);
  y += 4;
  const char *agg[2] = { "mean", "SD" };
  for (int k = 0; k < 2; k++) {
    font(cr, 8, true);
    text(cr, MARGIN + 2, y, agg[k]);
    for (size_t c = 0; c < nc; c++) {
      double v = k == 0 ? r->mean[c] : r->sd[c];
      fmt_value(buf, sizeof buf, v, r->columns[c].decimals);
      text_right(cr, MARGIN + label_w + col_w * (double)(c + 1) - 4, y, buf);
    }
    y += row_h;
  }
  y += 14;
  heading(cr, y, "Consistency");
  y += 22;
  font(cr, 8.5, false);
  cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
  char line[1024] = "";
  size_t used = 0;
  for (size_t c = 0; c < nc && used < sizeof line - 100; c++) {
    if (!(isfinite(r->mean[c]) && isfinite(r->sd[c])))
      continue;
    double cv = fabs(r->mean[c]) > 1e-9 ? 100.0 * r->sd[c] / fabs(r->mean[c]) : (double)NAN;
    if (!isfinite(cv))
      continue;
    used += (size_t)snprintf(line + used, sizeof line - used, "%s%s varies by %.0f %%", used ? "; " : "",
                             r->columns[c].label, cv);
  }
  if (used == 0)
    snprintf(line, sizeof line, "Consistency needs at least two swings with values.");
  else
    strncat(line, " (standard deviation as a share of the mean, over this session's swings).",
            sizeof line - strlen(line) - 1);
  paragraph(cr, MARGIN, y, PAGE_W - 2 * MARGIN, 12, line);
  footer(cr, r, 1);
}

typedef struct {
  double x, y, w, h;        /* plot area */
  double x0, x1, y0, y1;    /* data range */
} Plot;

static double px(const Plot *p, double v) { return p->x + p->w * (v - p->x0) / (p->x1 - p->x0); }
static double py(const Plot *p, double v) { return p->y + p->h - p->h * (v - p->y0) / (p->y1 - p->y0); }

static double
nice_step(double range)
{
  double raw = range / 5, mag = pow(10, floor(log10(raw))), f = raw / mag;
  return (f < 1.5 ? 1 : f < 3.5 ? 2 : f < 7.5 ? 5 : 10) * mag;
}

static void
axes(cairo_t *cr, const Plot *p, const char *xlabel, const char *ylabel)
{
  char buf[64];
  cairo_set_line_width(cr, 0.5);
  font(cr, 7, false);
  double sy = nice_step(p->y1 - p->y0);
  for (double v = ceil(p->y0 / sy) * sy; v <= p->y1 + 1e-9; v += sy) {
    cairo_set_source_rgb(cr, 0.85, 0.86, 0.88);
    cairo_move_to(cr, p->x, py(p, v));
    cairo_line_to(cr, p->x + p->w, py(p, v));
    cairo_stroke(cr);
    cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
    snprintf(buf, sizeof buf, "%g", fabs(v) < 1e-12 ? 0.0 : v);
    text_right(cr, p->x - 4, py(p, v) + 2.5, buf);
  }
  if (xlabel != NULL) {
    double sx = nice_step(p->x1 - p->x0);
    for (double v = ceil(p->x0 / sx) * sx; v <= p->x1 + 1e-9; v += sx) {
      snprintf(buf, sizeof buf, "%g", fabs(v) < 1e-12 ? 0.0 : v);
      text_centre(cr, px(p, v), p->y + p->h + 10, buf);
    }
    text_centre(cr, p->x + p->w / 2, p->y + p->h + 21, xlabel);
  }
  cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
  cairo_rectangle(cr, p->x, p->y, p->w, p->h);
  cairo_stroke(cr);
  cairo_save(cr);
  cairo_move_to(cr, p->x - 30, p->y + p->h / 2 + width_of(cr, ylabel) / 2);
  cairo_rotate(cr, -AW_PI_2_);
  cairo_show_text(cr, ylabel);
  cairo_restore(cr);
}

/* Page 2: speed over time with phases, trust per phase, trends. */
static void
page_charts(cairo_t *cr, const ArcwiseReport *r)
{
  char buf[256];
  double y = 56;
  heading(cr, y, "Hand speed over time");
  y += 16;
  Plot p = { MARGIN + 36, y, PAGE_W - 2 * MARGIN - 40, 190, (double)INFINITY, -(double)INFINITY, 0, 1 };
  for (size_t s = 0; s < r->n_swings; s++)
    for (size_t i = 0; i < r->swings[s].n; i++) {
      double t = r->swings[s].t_s[i], v = r->swings[s].speed[i];
      if (!isfinite(t) || !isfinite(v))
        continue;
      p.x0 = fmin(p.x0, t);
      p.x1 = fmax(p.x1, t);
      p.y1 = fmax(p.y1, v * 1.1);
    }
  if (!(p.x1 > p.x0)) {
    p.x0 = -1;
    p.x1 = 1;
  }
  /* Phase bands of the first swing, which the others are aligned to (impact at 0). */
  if (r->n_swings > 0) {
    const ArcwiseReportSwing *s0 = &r->swings[0];
    for (int k = 0; k < ARCWISE_REPORT_PHASES; k++) {
      double a = fmax(s0->phase_start_s[k], p.x0), b = fmin(s0->phase_end_s[k], p.x1);
      if (!(isfinite(a) && isfinite(b) && b > a))
        continue;
      cairo_set_source_rgba(cr, phase_rgb[k][0], phase_rgb[k][1], phase_rgb[k][2], 0.16);
      cairo_rectangle(cr, px(&p, a), p.y, px(&p, b) - px(&p, a), p.h);
      cairo_fill(cr);
      cairo_set_source_rgb(cr, phase_rgb[k][0] * 0.7, phase_rgb[k][1] * 0.7, phase_rgb[k][2] * 0.7);
      font(cr, 6.5, true);
      if (px(&p, b) - px(&p, a) > width_of(cr, phase_names[k]) + 4)
        text_centre(cr, (px(&p, a) + px(&p, b)) / 2, p.y + 9, phase_names[k]);
    }
  }
  snprintf(buf, sizeof buf, "hand speed (%s)", r->speed_unit ? r->speed_unit : "m/s");
  axes(cr, &p, "time from impact (s)", buf);
  cairo_save(cr);
  cairo_rectangle(cr, p.x, p.y, p.w, p.h);
  cairo_clip(cr);
  for (size_t s = 0; s < r->n_swings; s++) {
    double shade = r->n_swings > 1 ? (double)s / (double)(r->n_swings - 1) : 0;
    cairo_set_source_rgba(cr, 0.1 + 0.5 * shade, 0.25 + 0.3 * shade, 0.55 - 0.2 * shade, 0.85);
    cairo_set_line_width(cr, s == 0 ? 1.6 : 0.9);
    bool pen = false;
    for (size_t i = 0; i < r->swings[s].n; i++) {
      double t = r->swings[s].t_s[i], v = r->swings[s].speed[i];
      if (!isfinite(t) || !isfinite(v)) {
        pen = false;
        continue;
      }
      if (pen)
        cairo_line_to(cr, px(&p, t), py(&p, v));
      else
        cairo_move_to(cr, px(&p, t), py(&p, v));
      pen = true;
    }
    cairo_stroke(cr);
  }
  cairo_restore(cr);
  y = p.y + p.h + 46;

  heading(cr, y, "Trust per phase");
  y += 14;
  font(cr, 7.5, false);
  cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
  y = paragraph(cr, MARGIN, y + 6, PAGE_W - 2 * MARGIN, 10,
                "Share of the hand position that came from the camera, the rest from the "
                "wrist IMU, mean over the session's swings. Where the camera lost the hands the "
                "path rests on the IMU alone and is less certain.");
  Plot q = { MARGIN + 36, y + 4, PAGE_W - 2 * MARGIN - 40, 120, 0, ARCWISE_REPORT_PHASES, 0, 100 };
  axes(cr, &q, NULL, "camera share (%)");
  for (int k = 0; k < ARCWISE_REPORT_PHASES; k++) {
    double sum = 0;
    size_t n = 0;
    for (size_t s = 0; s < r->n_swings; s++)
      if (isfinite(r->swings[s].phase_cam_share[k])) {
        sum += r->swings[s].phase_cam_share[k];
        n++;
      }
    double bx = px(&q, k + 0.2), bw = px(&q, k + 0.8) - bx;
    font(cr, 7.5, false);
    cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
    text_centre(cr, bx + bw / 2, q.y + q.h + 11, phase_names[k]);
    if (n == 0) {
      text_centre(cr, bx + bw / 2, q.y + q.h - 6, "n/a");
      continue;
    }
    double v = 100 * sum / (double)n;
    cairo_set_source_rgb(cr, 0.16, 0.52, 0.92);
    cairo_rectangle(cr, bx, py(&q, v), bw, q.y + q.h - py(&q, v));
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 0.96, 0.66, 0.12);
    cairo_rectangle(cr, bx, q.y, bw, py(&q, v) - q.y);
    cairo_fill(cr);
    cairo_set_source_rgb(cr, 1, 1, 1);
    snprintf(buf, sizeof buf, "%.0f %%", v);
    font(cr, 7.5, true);
    if (q.y + q.h - py(&q, v) > 12)
      text_centre(cr, bx + bw / 2, q.y + q.h - 4, buf);
  }
  y = q.y + q.h + 40;

  heading(cr, y, "Trends across sessions");
  y += 14;
  if (r->n_history < 2 || r->n_trend == 0) {
    font(cr, 8.5, false);
    cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
    text(cr, MARGIN, y + 10, r->n_history < 2 ? "This is the player's first session: no trend yet."
                                              : "No metric chosen for trends.");
  } else {
    size_t nt = r->n_trend > 3 ? 3 : r->n_trend;
    double gap = 46, w = (PAGE_W - 2 * MARGIN - 36 - gap * (double)(nt - 1)) / (double)nt;
    for (size_t k = 0; k < nt; k++) {
      size_t c = r->trend_columns[k];
      Plot t = { MARGIN + 36 + (double)k * (w + gap), y + 14, w, 130, -0.5,
                 (double)r->n_history - 0.5, (double)INFINITY, -(double)INFINITY };
      for (size_t h = 0; h < r->n_history; h++) {
        double m = r->history[h].mean[c], sd = isfinite(r->history[h].sd[c]) ? r->history[h].sd[c] : 0;
        if (!isfinite(m))
          continue;
        t.y0 = fmin(t.y0, m - sd);
        t.y1 = fmax(t.y1, m + sd);
      }
      if (!(t.y1 > t.y0)) {
        double m = isfinite(t.y0) ? t.y0 : 0;
        t.y0 = m - 1;
        t.y1 = m + 1;
      }
      double pad = 0.12 * (t.y1 - t.y0);
      t.y0 -= pad;
      t.y1 += pad;
      font(cr, 8, true);
      cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
      snprintf(buf, sizeof buf, "%s%s%s%s", r->columns[c].label,
               r->columns[c].unit && r->columns[c].unit[0] ? " (" : "",
               r->columns[c].unit ? r->columns[c].unit : "",
               r->columns[c].unit && r->columns[c].unit[0] ? ")" : "");
      text(cr, t.x, t.y - 5, buf);
      axes(cr, &t, NULL, "");
      font(cr, 6.5, false);
      for (size_t h = 0; h < r->n_history; h++)
        if (r->n_history <= 6 || h == 0 || h + 1 == r->n_history)
          text_centre(cr, px(&t, (double)h), t.y + t.h + 10, r->history[h].label);
      cairo_set_source_rgb(cr, accent[0], accent[1], accent[2]);
      cairo_set_line_width(cr, 1.4);
      bool pen = false;
      for (size_t h = 0; h < r->n_history; h++) {
        double m = r->history[h].mean[c];
        if (!isfinite(m)) {
          pen = false;
          continue;
        }
        if (pen)
          cairo_line_to(cr, px(&t, (double)h), py(&t, m));
        else
          cairo_move_to(cr, px(&t, (double)h), py(&t, m));
        pen = true;
      }
      cairo_stroke(cr);
      for (size_t h = 0; h < r->n_history; h++) {
        double m = r->history[h].mean[c], sd = r->history[h].sd[c];
        if (!isfinite(m))
          continue;
        if (isfinite(sd)) {
          cairo_set_line_width(cr, 0.8);
          cairo_move_to(cr, px(&t, (double)h), py(&t, m - sd));
          cairo_line_to(cr, px(&t, (double)h), py(&t, m + sd));
          cairo_stroke(cr);
        }
        cairo_arc(cr, px(&t, (double)h), py(&t, m), 2.4, 0, 2 * AW_PI_2_ * 2);
        cairo_fill(cr);
      }
    }
    font(cr, 7, false);
    cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
    text(cr, MARGIN, y + 14 + 130 + 26, "Session mean with ± one standard deviation of its swings.");
  }
  footer(cr, r, 2);
}

static void
page_images(cairo_t *cr, const ArcwiseReport *r)
{
  heading(cr, 56, "The 3-D view");
  size_t n = r->n_images > 4 ? 4 : r->n_images;
  double cell_w = (PAGE_W - 2 * MARGIN - 16) / 2, cell_h = 300;
  for (size_t i = 0; i < n; i++) {
    const ArcwiseReportImage *im = &r->images[i];
    double x = MARGIN + (double)(i % 2) * (cell_w + 16), y = 76 + (double)(i / 2) * (cell_h + 40);
    if (n <= 2) {
      /* One image per row, full width. */
      cell_w = PAGE_W - 2 * MARGIN;
      x = MARGIN;
      y = 76 + (double)i * (cell_h + 40);
    }
    cairo_surface_t *s = cairo_image_surface_create(CAIRO_FORMAT_RGB24, im->width, im->height);
    uint8_t *d = cairo_image_surface_get_data(s);
    size_t ds = (size_t)cairo_image_surface_get_stride(s);
    cairo_surface_flush(s);
    for (int yy = 0; yy < im->height; yy++)
      for (int xx = 0; xx < im->width; xx++) {
        const uint8_t *p = im->rgba + (size_t)yy * im->stride + 4 * (size_t)xx;
        uint32_t w = 0xff000000u | (uint32_t)p[0] << 16 | (uint32_t)p[1] << 8 | p[2];
        memcpy(d + (size_t)yy * ds + 4 * (size_t)xx, &w, 4);
      }
    cairo_surface_mark_dirty(s);
    double sc = fmin(cell_w / im->width, cell_h / im->height);
    cairo_save(cr);
    cairo_translate(cr, x, y);
    cairo_scale(cr, sc, sc);
    cairo_set_source_surface(cr, s, 0, 0);
    cairo_paint(cr);
    cairo_restore(cr);
    cairo_surface_destroy(s);
    font(cr, 8.5, false);
    cairo_set_source_rgb(cr, ink[0], ink[1], ink[2]);
    text(cr, x, y + im->height * sc + 13, im->caption ? im->caption : "");
  }
  footer(cr, r, 3);
}

bool
arcwise_report_write_pdf(const ArcwiseReport *r, const char *path, bool force, char *err,
                         size_t err_size)
{
  if (r->n_columns > ARCWISE_REPORT_MAX_COLUMNS) {
    snprintf(err, err_size, "at most %d columns", ARCWISE_REPORT_MAX_COLUMNS);
    return false;
  }
  for (size_t k = 0; k < r->n_trend && k < 3; k++)
    if (r->trend_columns[k] >= r->n_columns) {
      snprintf(err, err_size, "trend column %zu does not exist", r->trend_columns[k]);
      return false;
    }
  if (arcwise_out_refuse(path, force, err, err_size))
    return false;
  char *tmp = arcwise_out_tmp_path(path);
  if (tmp == NULL) {
    snprintf(err, err_size, "out of memory");
    return false;
  }
  cairo_surface_t *pdf = cairo_pdf_surface_create(tmp, PAGE_W, PAGE_H);
  bool ok = cairo_surface_status(pdf) == CAIRO_STATUS_SUCCESS;
  if (ok) {
    char title[256];
    snprintf(title, sizeof title, "Session report: %s, %s", r->player ? r->player : "",
             r->date ? r->date : "");
    cairo_pdf_surface_set_metadata(pdf, CAIRO_PDF_METADATA_TITLE, title);
    cairo_pdf_surface_set_metadata(pdf, CAIRO_PDF_METADATA_CREATOR, "Arcwise " ARCWISE_VERSION);
    cairo_pdf_surface_set_metadata(pdf, CAIRO_PDF_METADATA_SUBJECT, "golf swing session");
    cairo_t *cr = cairo_create(pdf);
    page_table(cr, r);
    cairo_show_page(cr);
    page_charts(cr, r);
    cairo_show_page(cr);
    if (r->n_images > 0) {
      page_images(cr, r);
      cairo_show_page(cr);
    }
    ok = cairo_status(cr) == CAIRO_STATUS_SUCCESS;
    cairo_destroy(cr);
  }
  cairo_surface_finish(pdf);
  ok = ok && cairo_surface_status(pdf) == CAIRO_STATUS_SUCCESS;
  if (!ok)
    snprintf(err, err_size, "%s: cannot write the PDF: %s", path,
             cairo_status_to_string(cairo_surface_status(pdf)));
  cairo_surface_destroy(pdf);
  if (ok)
    ok = arcwise_out_rename(tmp, path, force, err, err_size);
  else
    unlink(tmp);
  free(tmp);
  return ok;
}

void
arcwise_export_shutdown(void)
{
  cairo_debug_reset_static_data();
  FcFini();
}
