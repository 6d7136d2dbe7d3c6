/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "export-clip.h"

#include "export-file.h"
#include "export-video.h"

#include "arcwise/units.h"

#include <cairo.h>
#include <math.h>
#include <pthread.h>
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

/* Strip along the bottom: the swing's trust over time (camera vs watch) and its phase ticks.
 * It does not change during a clip, so it is drawn once into the static layer. */
static void
trust_strip(cairo_t *cr, const ArcwiseClipSwing *w, double x, double y, double wd, double h)
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
}

/* The playback cursor on the trust strip. */
static void
strip_cursor(cairo_t *cr, const ArcwiseClipSwing *w, double t, double x, double y, double wd,
             double h)
{
  double span = w->t1_s - w->t0_s;
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


/* The overlay layout, in pixels of the frame; sizes scale with the frame height. */
typedef struct {
  double u, W, H;
  double box_y, box_h;           /* bottom-left speed box */
  double sx, sw, sy, sh;         /* trust strip */
} Layout;

static Layout
layout_of(const ArcwiseClipSpec *s)
{
  Layout L;
  L.W = s->width;
  L.H = s->height;
  L.u = L.H / 720.0;
  double u = L.u;
  L.box_h = (s->b ? 92 : 66) * u;
  L.box_y = L.H - L.box_h - 92 * u;
  L.sx = 16 * u;
  L.sw = L.W - 32 * u;
  L.sy = L.H - 44 * u;
  L.sh = 14 * u;
  return L;
}

/* Rectangles of the static layer that hold anything, composited onto every frame. */
#define MAX_RECTS 4
typedef struct {
  cairo_surface_t *surf;         /* ARGB32, transparent elsewhere */
  cairo_rectangle_int_t rect[MAX_RECTS];
  int n_rects;
} StaticLayer;

static void
add_rect(StaticLayer *sl, double x, double y, double w, double h, const Layout *L)
{
  int x0 = (int)floor(x) - 2, y0 = (int)floor(y) - 2;
  int x1 = (int)ceil(x + w) + 2, y1 = (int)ceil(y + h) + 2;
  x0 = x0 < 0 ? 0 : x0;
  y0 = y0 < 0 ? 0 : y0;
  x1 = x1 > (int)L->W ? (int)L->W : x1;
  y1 = y1 > (int)L->H ? (int)L->H : y1;
  if (sl->n_rects < MAX_RECTS && x1 > x0 && y1 > y0)
    sl->rect[sl->n_rects++] = (cairo_rectangle_int_t){ x0, y0, x1 - x0, y1 - y0 };
}

/* Everything of the overlays that stays the same for the whole clip: boxes, who and when, the
 * slow-motion factor, labels, the trust strip with its legend and the estimate caution. */
static void
draw_static(cairo_t *cr, const ArcwiseClipSpec *s, const Layout *L, StaticLayer *sl)
{
  double W = L->W, u = L->u;
  const ArcwiseClipSwing *a = &s->a;
  char buf[256];

  /* Top left: who and when. */
  cairo_set_source_rgba(cr, 0.05, 0.07, 0.10, 0.62);
  rounded_box(cr, 16 * u, 16 * u, 430 * u, (s->b ? 96 : 70) * u, 10 * u);
  cairo_fill(cr);
  add_rect(sl, 16 * u, 16 * u, 430 * u, (s->b ? 96 : 70) * u, L);
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

  /* Top right, under the phase tag: the slow-motion factor. */
  if (s->slowmo > 1.0001) {
    snprintf(buf, sizeof buf, "%.3g\xc3\x97 slower", s->slowmo);
    double sw = text_w(cr, buf, 16 * u, false);
    cairo_set_source_rgba(cr, 1, 1, 1, 0.9);
    text_at(cr, W - sw - 24 * u, 86 * u, buf, 16 * u, false);
    add_rect(sl, W - sw - 24 * u, 86 * u - 18 * u, sw, 24 * u, L);
  }

  /* Bottom left: the box for the hand speed at the marker. */
  cairo_set_source_rgba(cr, 0.05, 0.07, 0.10, 0.62);
  rounded_box(cr, 16 * u, L->box_y, 300 * u, L->box_h, 10 * u);
  cairo_fill(cr);
  add_rect(sl, 16 * u, L->box_y, 300 * u, L->box_h, L);
  cairo_set_source_rgba(cr, 1, 1, 1, 0.8);
  text_at(cr, 30 * u, L->box_y + 24 * u, "hand speed", 14 * u, false);

  /* Bottom: trust strip with legend. */
  double sx = L->sx, sy = L->sy;
  cairo_set_source_rgba(cr, 0.05, 0.07, 0.10, 0.62);
  rounded_box(cr, 8 * u, sy - 34 * u, W - 16 * u, 70 * u, 10 * u);
  cairo_fill(cr);
  add_rect(sl, 8 * u, sy - 34 * u, W - 16 * u, 70 * u, L);
  trust_strip(cr, a, sx, sy, L->sw, L->sh);
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

static bool
static_layer_make(StaticLayer *sl, const ArcwiseClipSpec *s, const Layout *L)
{
  memset(sl, 0, sizeof *sl);
  sl->surf = cairo_image_surface_create(CAIRO_FORMAT_ARGB32, s->width, s->height);
  cairo_t *cr = cairo_create(sl->surf);
  bool ok = cairo_status(cr) == CAIRO_STATUS_SUCCESS;
  if (ok)
    draw_static(cr, s, L, sl);
  cairo_destroy(cr);
  cairo_surface_flush(sl->surf);
  return ok;
}

/* What changes from frame to frame: the phase tag, the speed numbers and the strip cursor. */
static void
draw_dynamic(cairo_t *cr, const ArcwiseClipSpec *s, const Layout *L, const double t[2])
{
  double W = L->W, u = L->u;
  const ArcwiseClipSwing *a = &s->a;
  size_t ia = index_at(a, t[0]);
  char buf[256];

  unsigned ph = a->phase ? a->phase[ia] : 0;
  const char *pn = arcwise_clip_phase_name(ph);
  double pw = text_w(cr, pn, 26 * u, true) + 36 * u;
  cairo_set_source_rgba(cr, phase_rgb[ph % 5][0], phase_rgb[ph % 5][1], phase_rgb[ph % 5][2], 0.92);
  rounded_box(cr, W - pw - 16 * u, 16 * u, pw, 48 * u, 24 * u);
  cairo_fill(cr);
  cairo_set_source_rgb(cr, 1, 1, 1);
  text_at(cr, W - pw + 2 * u, 49 * u, pn, 26 * u, true);

  speed_text(buf, sizeof buf, a->speed_m_s ? (double)a->speed_m_s[ia] : (double)NAN, s->units);
  cairo_set_source_rgb(cr, 1, 1, 1);
  text_at(cr, 30 * u, L->box_y + 54 * u, buf, 28 * u, true);
  if (s->b != NULL && isfinite(t[1])) {
    size_t ib = index_at(s->b, t[1]);
    char v2[64];
    speed_text(v2, sizeof v2, s->b->speed_m_s ? (double)s->b->speed_m_s[ib] : (double)NAN, s->units);
    snprintf(buf, sizeof buf, "compared swing: %s", v2);
    cairo_set_source_rgba(cr, 1, 1, 1, 0.85);
    text_at(cr, 30 * u, L->box_y + 80 * u, buf, 15 * u, false);
  }
  strip_cursor(cr, a, t[0], L->sx, L->sy, L->sw, L->sh);
}

static void
draw_overlays(cairo_t *cr, const ArcwiseClipSpec *s, const Layout *L, const StaticLayer *sl,
              const double t[2])
{
  cairo_set_source_surface(cr, sl->surf, 0, 0);
  for (int i = 0; i < sl->n_rects; i++)
    cairo_rectangle(cr, sl->rect[i].x, sl->rect[i].y, sl->rect[i].width, sl->rect[i].height);
  cairo_fill(cr);
  draw_dynamic(cr, s, L, t);
}

/* ---- The pipeline: the caller's thread renders, a worker overlays and encodes ------------ */

typedef struct {
  cairo_surface_t *surf;         /* RGB24, the frame */
  cairo_t *cr;
  uint8_t *px;
  double t[2];
} Slot;

typedef struct {
  const ArcwiseClipSpec *spec;
  Layout layout;
  StaticLayer layer;
  ArcwiseVideo *video;
  size_t stride;
  Slot slot[ARCWISE_CLIP_QUEUE];
  pthread_mutex_t lock;
  pthread_cond_t changed;
  int free_[ARCWISE_CLIP_QUEUE], n_free;   /* stack of free slots */
  int full[ARCWISE_CLIP_QUEUE], n_full;    /* FIFO of frames to encode, oldest first */
  bool end;                      /* no more frames will come */
  bool failed;                   /* the worker met an error; err holds it */
  size_t encoded;
  double overlay_s;
  char err[512];
} Pipe;

static void *
worker_main(void *arg)
{
  Pipe *p = arg;
  const ArcwiseClipSpec *s = p->spec;
  for (;;) {
    pthread_mutex_lock(&p->lock);
    while (p->n_full == 0 && !p->end)
      pthread_cond_wait(&p->changed, &p->lock);
    if (p->n_full == 0) {
      pthread_mutex_unlock(&p->lock);
      break;
    }
    int k = p->full[0];
    memmove(p->full, p->full + 1, (size_t)(p->n_full - 1) * sizeof p->full[0]);
    p->n_full--;
    bool failed = p->failed;
    pthread_mutex_unlock(&p->lock);

    Slot *sl = &p->slot[k];
    bool ok = true;
    char msg[512] = "";
    if (!failed) {
      double t0 = now_s();
      if (s->overlays) {
        draw_overlays(sl->cr, s, &p->layout, &p->layer, sl->t);
        cairo_surface_flush(sl->surf);
      }
      double t1 = now_s();
      ok = arcwise_video_write(p->video, sl->px, p->stride, msg, sizeof msg);
      p->overlay_s += t1 - t0;
    }
    pthread_mutex_lock(&p->lock);
    if (!failed && !ok) {
      p->failed = true;
      snprintf(p->err, sizeof p->err, "%s", msg);
    }
    if (!failed && ok)
      p->encoded++;
    p->free_[p->n_free++] = k;
    pthread_cond_broadcast(&p->changed);
    pthread_mutex_unlock(&p->lock);
  }
  return NULL;
}

static void
pipe_free_slots(Pipe *p)
{
  for (int i = 0; i < ARCWISE_CLIP_QUEUE; i++) {
    if (p->slot[i].cr)
      cairo_destroy(p->slot[i].cr);
    if (p->slot[i].surf)
      cairo_surface_destroy(p->slot[i].surf);
  }
  if (p->layer.surf)
    cairo_surface_destroy(p->layer.surf);
}

static double
cpu_now_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_PROCESS_CPUTIME_ID, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* RGBA bytes to cairo's native 0xAARRGGBB words, in place. */
static void
rgba_to_cairo(uint8_t *px, size_t stride, int width, int height)
{
  for (int y = 0; y < height; y++) {
    uint8_t *row = px + (size_t)y * stride;
    for (int x = 0; x < width; x++) {
      uint8_t *q = row + 4 * (size_t)x;
      uint32_t w = 0xff000000u | (uint32_t)q[0] << 16 | (uint32_t)q[1] << 8 | q[2];
      memcpy(q, &w, 4);
    }
  }
}

static void
frame_times(const ArcwiseClipSpec *s, size_t f, double t[2])
{
  double slow = s->slowmo >= 1 ? s->slowmo : 1;
  t[0] = s->a.t0_s + (double)f / (s->fps * slow);
  t[1] = s->b ? s->b->align_s + (t[0] - s->a.align_s) : (double)NAN;
  if (s->b && (t[1] < s->b->t0_s || t[1] > s->b->t1_s))
    t[1] = t[1] < s->b->t0_s ? s->b->t0_s : s->b->t1_s;
}

bool
arcwise_clip_export(const ArcwiseClipSpec *s, const char *path, bool force,
                    ArcwiseClipStats *stats, char *err, size_t err_size)
{
  ArcwiseClipStats st = { 0 };
  double wall0 = now_s(), cpu0 = cpu_now_s();
  bool have_pipe = s->pipe != NULL && s->pipe->submit != NULL && s->pipe->fetch != NULL;
  if ((s->render == NULL && !have_pipe) || s->a.n < 2 || s->a.t_s == NULL) {
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

  Pipe *p = calloc(1, sizeof *p);
  bool ok = p != NULL;
  if (!ok)
    snprintf(err, err_size, "out of memory");
  if (ok) {
    p->spec = s;
    p->video = v;
    p->layout = layout_of(s);
    for (int i = 0; ok && i < ARCWISE_CLIP_QUEUE; i++) {
      Slot *sl = &p->slot[i];
      sl->surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, s->width, s->height);
      sl->cr = cairo_create(sl->surf);
      ok = cairo_status(sl->cr) == CAIRO_STATUS_SUCCESS;
      sl->px = cairo_image_surface_get_data(sl->surf);
      p->stride = (size_t)cairo_image_surface_get_stride(sl->surf);
      p->free_[p->n_free++] = i;
    }
    if (ok && s->overlays)
      ok = static_layer_make(&p->layer, s, &p->layout);
    if (!ok)
      snprintf(err, err_size, "cannot create a %dx%d drawing surface", s->width, s->height);
  }
  pthread_t worker;
  bool started = false;
  if (ok) {
    pthread_mutex_init(&p->lock, NULL);
    pthread_cond_init(&p->changed, NULL);
    started = pthread_create(&worker, NULL, worker_main, p) == 0;
    if (!started) {
      ok = false;
      snprintf(err, err_size, "cannot start the encoder thread");
    }
  }

  double last_progress = 0;
  size_t submitted = 0;
  for (size_t f = 0; ok && f < frames; f++) {
    if (s->cancel != NULL && atomic_load(s->cancel)) {
      snprintf(err, err_size, "cancelled");
      ok = false;
      break;
    }
    double t[2];
    double t0 = now_s();
    if (have_pipe) {
      /* Keep one frame in flight: frame f+1 is drawn while frame f is read back. */
      while (ok && submitted < frames && submitted <= f + 1) {
        double ts[2];
        frame_times(s, submitted, ts);
        ok = s->pipe->submit(s->pipe->user, ts, err, err_size);
        submitted++;
      }
      if (!ok)
        break;
    }
    double t1 = now_s();
    pthread_mutex_lock(&p->lock);
    while (p->n_free == 0 && !p->failed)
      pthread_cond_wait(&p->changed, &p->lock);
    int k = p->failed ? -1 : p->free_[--p->n_free];
    size_t encoded = p->encoded;
    pthread_mutex_unlock(&p->lock);
    double t2 = now_s();
    if (k < 0)
      break;
    Slot *sl = &p->slot[k];
    frame_times(s, f, sl->t);
    memcpy(t, sl->t, sizeof t);
    cairo_surface_flush(sl->surf);
    if (have_pipe) {
      ok = s->pipe->fetch(s->pipe->user, sl->px, p->stride, err, err_size);
    } else {
      ok = s->render(s->render_user, t, sl->px, s->width, s->height, p->stride, err, err_size);
      if (ok)
        rgba_to_cairo(sl->px, p->stride, s->width, s->height);
    }
    cairo_surface_mark_dirty(sl->surf);
    double t3 = now_s();
    st.render_s += (t1 - t0) + (have_pipe ? 0 : t3 - t2);
    st.readback_s += have_pipe ? t3 - t2 : 0;
    st.wait_s += t2 - t1;
    pthread_mutex_lock(&p->lock);
    if (ok)
      p->full[p->n_full++] = k;
    else
      p->free_[p->n_free++] = k;
    pthread_cond_broadcast(&p->changed);
    pthread_mutex_unlock(&p->lock);
    double fr = (double)encoded / (double)frames;
    if (s->progress && fr > last_progress) {
      s->progress(s->progress_user, fr);
      last_progress = fr;
    }
  }
  if (started) {
    pthread_mutex_lock(&p->lock);
    p->end = true;
    pthread_cond_broadcast(&p->changed);
    pthread_mutex_unlock(&p->lock);
    pthread_join(worker, NULL);
    pthread_mutex_destroy(&p->lock);
    pthread_cond_destroy(&p->changed);
    if (p->failed) {
      if (ok)
        snprintf(err, err_size, "%s", p->err);
      ok = false;
    }
  }
  if (ok) {
    st.frames = p->encoded;
    st.overlay_s = p->overlay_s;
    double t0 = now_s();
    arcwise_video_times(v, &st.convert_s, &st.encode_s);
    ok = arcwise_video_close(v, err, err_size);
    st.encode_s += now_s() - t0;
  } else {
    if (p != NULL)
      st.frames = p->encoded;
    arcwise_video_abort(v);
  }
  if (p != NULL) {
    pipe_free_slots(p);
    free(p);
  }
  if (ok) {
    ok = arcwise_out_rename(tmp, path, force, err, err_size);
    if (ok && s->progress && last_progress < 1.0)
      s->progress(s->progress_user, 1.0);
  } else {
    unlink(tmp);
  }
  free(tmp);
  st.video_s = (double)st.frames / s->fps;
  st.wall_s = now_s() - wall0;
  st.cpu_s = cpu_now_s() - cpu0;
  if (stats)
    *stats = st;
  return ok;
}
