/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "export-clip.h"

#include "export-file.h"
#include "export-video.h"

#include "arcwise/units.h"

#include <cairo.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

static const char *const phase_names[] = {
  "Address", "Backswing", "Downswing", "Follow-through", "Finish",
};

/* Our own palette for the phase tag (sRGB 0..1). */
static const double phase_rgb[5][3] = {
  { 0.55, 0.60, 0.66 }, { 0.20, 0.58, 0.86 }, { 0.92, 0.45, 0.16 },
  { 0.48, 0.74, 0.30 }, { 0.62, 0.46, 0.80 },
};

const char *
arcwise_clip_phase_name(unsigned phase)
{
  return phase < 5 ? phase_names[phase] : "";
}

static double
now_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

size_t
arcwise_clip_frame_count(const ArcwiseClipSpec *s)
{
  double span = s->a.t1_s - s->a.t0_s;
  double slow = s->slowmo >= 1 ? s->slowmo : 1;
  if (!(span > 0) || s->fps < 1)
    return 0;
  return (size_t)floor(span * slow * s->fps + 1e-9) + 1;
}

static size_t
index_at(const ArcwiseClipSwing *w, double t)
{
  if (w->n == 0)
    return 0;
  size_t lo = 0, hi = w->n - 1;
  if (t <= (double)w->t_s[0])
    return 0;
  if (t >= (double)w->t_s[hi])
    return hi;
  while (hi - lo > 1) {
    size_t mid = (lo + hi) / 2;
    if ((double)w->t_s[mid] <= t)
      lo = mid;
    else
      hi = mid;
  }
  return lo;
}

/* Camera share to a colour: camera-carried blue, watch-carried amber (our own pair, chosen to
 * stay apart for the common colour-vision deficiencies). */
static void
share_rgb(double share, double rgb[3])
{
  const double cam[3] = { 0.16, 0.52, 0.92 }, imu[3] = { 0.96, 0.66, 0.12 };
  share = share < 0 ? 0 : share > 1 ? 1 : share;
  for (int i = 0; i < 3; i++)
    rgb[i] = imu[i] + share * (cam[i] - imu[i]);
}

static void
rounded_box(cairo_t *cr, double x, double y, double w, double h, double r)
{
  cairo_new_sub_path(cr);
  cairo_arc(cr, x + w - r, y + r, r, -AW_PI / 2, 0);
  cairo_arc(cr, x + w - r, y + h - r, r, 0, AW_PI / 2);
  cairo_arc(cr, x + r, y + h - r, r, AW_PI / 2, AW_PI);
  cairo_arc(cr, x + r, y + r, r, AW_PI, 3 * AW_PI / 2);
  cairo_close_path(cr);
}

static void
text_at(cairo_t *cr, double x, double y, const char *s, double size, bool bold)
{
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                         bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, size);
  cairo_move_to(cr, x, y);
  cairo_show_text(cr, s);
}

static double
text_w(cairo_t *cr, const char *s, double size, bool bold)
{
  cairo_text_extents_t e;
  cairo_select_font_face(cr, "DejaVu Sans", CAIRO_FONT_SLANT_NORMAL,
                         bold ? CAIRO_FONT_WEIGHT_BOLD : CAIRO_FONT_WEIGHT_NORMAL);
  cairo_set_font_size(cr, size);
  cairo_text_extents(cr, s, &e);
  return e.x_advance;
}

static void
speed_text(char *buf, size_t n, double v, ArcwiseUnits u)
{
  if (!isfinite(v))
    snprintf(buf, n, "--");
  else if (u == ARCWISE_UNITS_IMPERIAL)
    snprintf(buf, n, "%.1f mph", v / 0.44704); /* 1 mph = 0.44704 m/s exactly */
  else
    snprintf(buf, n, "%.1f m/s", v);
}

/* Strip along the bottom: the swing's trust over time (camera vs watch), its phase ticks and
 * the playback cursor. */
static void
trust_strip(cairo_t *cr, const ArcwiseClipSwing *w, double t, double x, double y, double wd,
            double h)
{
  double span = w->t1_s - w->t0_s;
  int cols = (int)wd;
  for (int c = 0; c < cols; c++) {
    double tc = w->t0_s + span * (c + 0.5) / cols;
    size_t i = index_at(w, tc);
    double rgb[3];
    share_rgb(w->cam_share ? (double)w->cam_share[i] : 0.5, rgb);
    cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
    cairo_rectangle(cr, x + c, y, 1.0, h);
    cairo_fill(cr);
  }
  if (w->phase) {
    cairo_set_source_rgba(cr, 1, 1, 1, 0.9);
    cairo_set_line_width(cr, 2);
    unsigned prev = w->phase[index_at(w, w->t0_s)];
    for (int c = 1; c < cols; c++) {
      unsigned ph = w->phase[index_at(w, w->t0_s + span * c / cols)];
      if (ph != prev) {
        cairo_move_to(cr, x + c, y - 3);
        cairo_line_to(cr, x + c, y + h + 3);
        cairo_stroke(cr);
        prev = ph;
      }
    }
  }
  double cx = x + wd * (t - w->t0_s) / span;
  cx = cx < x ? x : cx > x + wd ? x + wd : cx;
  cairo_set_source_rgb(cr, 1, 1, 1);
  cairo_move_to(cr, cx, y - 6);
  cairo_line_to(cr, cx - 6, y - 14);
  cairo_line_to(cr, cx + 6, y - 14);
  cairo_close_path(cr);
  cairo_fill(cr);
  cairo_set_line_width(cr, 3);
  cairo_move_to(cr, cx, y - 2);
  cairo_line_to(cr, cx, y + h + 2);
  cairo_stroke(cr);
}

static void
draw_overlays(cairo_t *cr, const ArcwiseClipSpec *s, const double t[2])
{
  double W = s->width, H = s->height, u = H / 720.0; /* sizes scale with the frame height */
  const ArcwiseClipSwing *a = &s->a;
  size_t ia = index_at(a, t[0]);
  char buf[256];

  /* Top left: who and when. */
  cairo_set_source_rgba(cr, 0.05, 0.07, 0.10, 0.62);
  rounded_box(cr, 16 * u, 16 * u, 430 * u, (s->b ? 96 : 70) * u, 10 * u);
  cairo_fill(cr);
  cairo_set_source_rgb(cr, 1, 1, 1);
  text_at(cr, 30 * u, 46 * u, s->player && s->player[0] ? s->player : "Player", 24 * u, true);
  snprintf(buf, sizeof buf, "%s%s%s", s->date ? s->date : "", s->date && s->view_name ? "  ·  " : "",
           s->view_name ? s->view_name : "");
  cairo_set_source_rgba(cr, 1, 1, 1, 0.85);
  text_at(cr, 30 * u, 72 * u, buf, 16 * u, false);
  if (s->b != NULL) {
    snprintf(buf, sizeof buf, "%s  vs  %s", a->name ? a->name : "A",
             s->b->name ? s->b->name : "B");
    text_at(cr, 30 * u, 96 * u, buf, 15 * u, false);
  }

  /* Top right: phase tag in its colour. */
  unsigned ph = a->phase ? a->phase[ia] : 0;
  const char *pn = arcwise_clip_phase_name(ph);
  double pw = text_w(cr, pn, 26 * u, true) + 36 * u;
  cairo_set_source_rgba(cr, phase_rgb[ph % 5][0], phase_rgb[ph % 5][1], phase_rgb[ph % 5][2], 0.92);
  rounded_box(cr, W - pw - 16 * u, 16 * u, pw, 48 * u, 24 * u);
  cairo_fill(cr);
  cairo_set_source_rgb(cr, 1, 1, 1);
  text_at(cr, W - pw + 2 * u, 49 * u, pn, 26 * u, true);
  if (s->slowmo > 1.0001) {
    snprintf(buf, sizeof buf, "%.3g\xc3\x97 slower", s->slowmo);
    double sw = text_w(cr, buf, 16 * u, false);
    cairo_set_source_rgba(cr, 1, 1, 1, 0.9);
    text_at(cr, W - sw - 24 * u, 86 * u, buf, 16 * u, false);
  }

  /* Bottom left: hand speed at the marker. */
  double box_y = H - (s->b ? 92 : 66) * u - 92 * u;
  cairo_set_source_rgba(cr, 0.05, 0.07, 0.10, 0.62);
  rounded_box(cr, 16 * u, box_y, 300 * u, (s->b ? 92 : 66) * u, 10 * u);
  cairo_fill(cr);
  cairo_set_source_rgba(cr, 1, 1, 1, 0.8);
  text_at(cr, 30 * u, box_y + 24 * u, "hand speed", 14 * u, false);
  speed_text(buf, sizeof buf, a->speed_m_s ? (double)a->speed_m_s[ia] : (double)NAN, s->units);
  cairo_set_source_rgb(cr, 1, 1, 1);
  text_at(cr, 30 * u, box_y + 54 * u, buf, 28 * u, true);
  if (s->b != NULL && isfinite(t[1])) {
    size_t ib = index_at(s->b, t[1]);
    char v2[64];
    speed_text(v2, sizeof v2, s->b->speed_m_s ? (double)s->b->speed_m_s[ib] : (double)NAN, s->units);
    snprintf(buf, sizeof buf, "compared swing: %s", v2);
    cairo_set_source_rgba(cr, 1, 1, 1, 0.85);
    text_at(cr, 30 * u, box_y + 80 * u, buf, 15 * u, false);
  }

  /* Bottom: trust strip with legend. */
  double sx = 16 * u, sw = W - 32 * u, sy = H - 44 * u, sh = 14 * u;
  cairo_set_source_rgba(cr, 0.05, 0.07, 0.10, 0.62);
  rounded_box(cr, 8 * u, sy - 34 * u, W - 16 * u, 70 * u, 10 * u);
  cairo_fill(cr);
  trust_strip(cr, a, t[0], sx, sy, sw, sh);
  double rgb[3];
  cairo_set_source_rgba(cr, 1, 1, 1, 0.9);
  text_at(cr, sx, sy - 18 * u, "trust:", 13 * u, true);
  double lx = sx + text_w(cr, "trust: ", 13 * u, true);
  share_rgb(1, rgb);
  cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
  cairo_rectangle(cr, lx, sy - 28 * u, 12 * u, 12 * u);
  cairo_fill(cr);
  cairo_set_source_rgba(cr, 1, 1, 1, 0.9);
  text_at(cr, lx + 16 * u, sy - 18 * u, "camera", 13 * u, false);
  lx += 16 * u + text_w(cr, "camera  ", 13 * u, false);
  share_rgb(0, rgb);
  cairo_set_source_rgb(cr, rgb[0], rgb[1], rgb[2]);
  cairo_rectangle(cr, lx, sy - 28 * u, 12 * u, 12 * u);
  cairo_fill(cr);
  cairo_set_source_rgba(cr, 1, 1, 1, 0.9);
  text_at(cr, lx + 16 * u, sy - 18 * u, "watch (camera lost the hands)", 13 * u, false);
  const char *caution = "estimates from consumer sensors";
  double cw = text_w(cr, caution, 12 * u, false);
  cairo_set_source_rgba(cr, 1, 1, 1, 0.7);
  text_at(cr, W - cw - 16 * u, sy - 18 * u, caution, 12 * u, false);
}

bool
arcwise_clip_export(const ArcwiseClipSpec *s, const char *path, bool force,
                    ArcwiseClipStats *stats, char *err, size_t err_size)
{
  ArcwiseClipStats st = { 0 };
  if (s->render == NULL || s->a.n < 2 || s->a.t_s == NULL) {
    snprintf(err, err_size, "no swing to show or no renderer");
    return false;
  }
  size_t frames = arcwise_clip_frame_count(s);
  if (frames == 0) {
    snprintf(err, err_size, "the swing's span is empty");
    return false;
  }
  if (arcwise_out_refuse(path, force, err, err_size))
    return false;
  char *tmp = arcwise_out_tmp_path(path);
  if (tmp == NULL) {
    snprintf(err, err_size, "out of memory");
    return false;
  }
  ArcwiseVideoSettings vs = { .width = s->width, .height = s->height, .fps = s->fps,
                              .crf = s->crf, .preset = s->preset,
                              .pixels = ARCWISE_PIXELS_CAIRO };
  ArcwiseVideo *v = arcwise_video_open(tmp, &vs, err, err_size);
  if (v == NULL) {
    unlink(tmp);
    free(tmp);
    return false;
  }
  st.encoder = arcwise_video_encoder_name(v);
  cairo_surface_t *surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, s->width, s->height);
  cairo_t *cr = cairo_create(surf);
  bool ok = cairo_status(cr) == CAIRO_STATUS_SUCCESS;
  if (!ok)
    snprintf(err, err_size, "cannot create a %dx%d drawing surface", s->width, s->height);
  uint8_t *px = cairo_image_surface_get_data(surf);
  size_t stride = (size_t)cairo_image_surface_get_stride(surf);
  double slow = s->slowmo >= 1 ? s->slowmo : 1;
  for (size_t f = 0; ok && f < frames; f++) {
    if (s->cancel != NULL && atomic_load(s->cancel)) {
      snprintf(err, err_size, "cancelled");
      ok = false;
      break;
    }
    double t[2];
    t[0] = s->a.t0_s + (double)f / (s->fps * slow);
    t[1] = s->b ? s->b->align_s + (t[0] - s->a.align_s) : (double)NAN;
    if (s->b && (t[1] < s->b->t0_s || t[1] > s->b->t1_s))
      t[1] = t[1] < s->b->t0_s ? s->b->t0_s : s->b->t1_s;
    double t0 = now_s();
    cairo_surface_flush(surf);
    if (!s->render(s->render_user, t, px, s->width, s->height, stride, err, err_size)) {
      ok = false;
      break;
    }
    /* RGBA bytes to cairo's native 0xAARRGGBB words, in place. */
    for (int y = 0; y < s->height; y++) {
      uint8_t *row = px + (size_t)y * stride;
      for (int x = 0; x < s->width; x++) {
        uint8_t *p = row + 4 * (size_t)x;
        uint32_t w = 0xff000000u | (uint32_t)p[0] << 16 | (uint32_t)p[1] << 8 | p[2];
        memcpy(p, &w, 4);
      }
    }
    cairo_surface_mark_dirty(surf);
    double t1 = now_s();
    if (s->overlays)
      draw_overlays(cr, s, t);
    cairo_surface_flush(surf);
    double t2 = now_s();
    ok = arcwise_video_write(v, px, stride, err, err_size);
    double t3 = now_s();
    st.render_s += t1 - t0;
    st.overlay_s += t2 - t1;
    st.encode_s += t3 - t2;
    st.frames++;
    if (s->progress)
      s->progress(s->progress_user, (double)(f + 1) / (double)frames);
  }
  cairo_destroy(cr);
  cairo_surface_destroy(surf);
  if (ok) {
    double t0 = now_s();
    ok = arcwise_video_close(v, err, err_size);
    st.encode_s += now_s() - t0;
  } else {
    arcwise_video_abort(v);
  }
  if (ok)
    ok = arcwise_out_rename(tmp, path, force, err, err_size);
  else
    unlink(tmp);
  free(tmp);
  st.video_s = (double)st.frames / s->fps;
  if (stats)
    *stats = st;
  return ok;
}
