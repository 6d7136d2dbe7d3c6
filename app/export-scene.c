/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "export-scene.h"

#include "export-file.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#if ARCWISE_HAVE_SCENE

#include <cairo.h>
#include <epoxy/gl.h>

#include "arcwise-offscreen.h"
#include "arcwise-scene.h"
#include "arcwise-swing-model.h"
#include "export-scene-models.h"

static char renderer_name[128];

const char *
arcwise_export_renderer_name(void)
{
  return renderer_name;
}

static bool
view_of(const char *name, ArcwiseView *out)
{
  if (name == NULL || strcmp(name, "face-on") == 0)
    *out = ARCWISE_VIEW_FACE_ON;
  else if (strcmp(name, "down-the-line") == 0)
    *out = ARCWISE_VIEW_DOWN_THE_LINE;
  else if (strcmp(name, "above") == 0)
    *out = ARCWISE_VIEW_ABOVE;
  else
    return false;
  return true;
}

static ArcwiseSwingModel *
model_of(const AwFusedPath *path, const AwSwing *s, char *err, size_t n)
{
  ArcwiseSwingEvents ev = {
    .takeaway_s = s->events[AW_EVENT_TAKEAWAY].t_s, .top_s = s->events[AW_EVENT_TOP].t_s,
    .impact_s = s->events[AW_EVENT_IMPACT].t_s, .finish_s = s->events[AW_EVENT_FINISH].t_s,
  };
  ArcwiseSwingPlacement pl;
  arcwise_swing_placement_default(&pl);
  if (isfinite(s->club_length_m) && s->club_length_m > 0)
    pl.club_length_m = s->club_length_m;
  GError *e = NULL;
  ArcwiseSwingModel *m = arcwise_swing_model_new_from_fused(path, s->t_start_s, s->t_end_s, &ev,
                                                            &pl, &e);
  if (m == NULL) {
    snprintf(err, n, "cannot place the swing in the scene: %s", e ? e->message : "?");
    g_clear_error(&e);
  }
  return m;
}

/* One offscreen context, scene and up to two models for a job. */
typedef struct {
  ArcwiseOffscreen *off;
  ArcwiseScene *scene;
  ArcwiseSwingModel *a, *b;
  ArcwiseCamera cam;
  ArcwiseSceneOptions opt;
  double base_a, base_b;      /* depth-clock time of each model's t = 0 */
  int width, height;
  /* Clip read-back, two frames deep: pixel buffer objects written by glReadPixels after each
   * frame is drawn and mapped one frame later, so the copy of frame k overlaps the drawing of
   * frame k+1. A single-sample framebuffer of our own resolves a multisampled frame first. */
  GLuint pbo[2], resolve_fbo, resolve_rb;
  unsigned n_submitted, n_fetched;
} Job;

static void
job_free(Job *j)
{
  if (j->off != NULL) {
    arcwise_offscreen_begin(j->off);
    if (j->pbo[0])
      glDeleteBuffers(2, j->pbo);
    if (j->resolve_fbo)
      glDeleteFramebuffers(1, &j->resolve_fbo);
    if (j->resolve_rb)
      glDeleteRenderbuffers(1, &j->resolve_rb);
  }
  arcwise_scene_free(j->scene);
  arcwise_offscreen_free(j->off);
  arcwise_swing_model_free(j->a);
  arcwise_swing_model_free(j->b);
  memset(j, 0, sizeof *j);
}

static double
model_base(const AwFusedPath *p, const AwSwing *s)
{
  for (size_t i = 0; i < p->n; i++)
    if (p->t_s[i] >= s->t_start_s)
      return p->t_s[i];
  return s->t_start_s;
}

/* Opens the context and the scene for the models already in j (freed on failure). */
static bool
job_start(Job *j, const ArcwiseCamera *cam, ArcwiseView view, const ArcwiseSceneOptions *opt,
          int w, int h, int samples, char *err, size_t n)
{
  GError *e = NULL;
  j->off = arcwise_offscreen_new(w, h, samples, &e);
  if (j->off == NULL) {
    snprintf(err, n, "no offscreen OpenGL 3.3 context: %s", e ? e->message : "?");
    g_clear_error(&e);
    job_free(j);
    return false;
  }
  snprintf(renderer_name, sizeof renderer_name, "%s", arcwise_offscreen_get_renderer(j->off));
  j->scene = arcwise_scene_new(&e);
  if (j->scene == NULL) {
    snprintf(err, n, "the 3-D scene failed to start: %s", e ? e->message : "?");
    g_clear_error(&e);
    job_free(j);
    return false;
  }
  ArcwiseScenePath sp;
  arcwise_swing_model_as_path(j->a, &sp);
  arcwise_scene_set_path(j->scene, 0, &sp);
  if (j->b) {
    arcwise_swing_model_as_path(j->b, &sp);
    arcwise_scene_set_path(j->scene, 1, &sp);
  }
  if (opt != NULL) {
    j->opt = *opt;
  } else {
    arcwise_scene_options_default(&j->opt);
    j->opt.show_band = true;
    j->opt.show_club = j->a->club_m != NULL;
    j->opt.dim_ahead = true;
    if (j->a->peak_speed_m_s > 0)
      j->opt.speed_max_m_s = j->a->peak_speed_m_s;
  }
  j->opt.handed = j->a->handed;
  j->opt.show_compare = j->b != NULL;
  if (cam != NULL)
    j->cam = *cam;
  else
    arcwise_camera_preset(&j->cam, view, j->a->handed, j->a->centre_m);
  j->width = w;
  j->height = h;
  return true;
}

static bool
job_init(Job *j, const AwFusedPath *pa, const AwSwing *sa, const AwFusedPath *pb,
         const AwSwing *sb, const char *view_name, int w, int h, int samples, char *err,
         size_t n)
{
  memset(j, 0, sizeof *j);
  ArcwiseView view;
  if (!view_of(view_name, &view)) {
    snprintf(err, n, "unknown view '%s'", view_name);
    return false;
  }
  j->a = model_of(pa, sa, err, n);
  if (j->a == NULL)
    return false;
  j->base_a = model_base(pa, sa);
  if (pb != NULL && sb != NULL) {
    j->b = model_of(pb, sb, err, n);
    if (j->b == NULL) {
      job_free(j);
      return false;
    }
    j->base_b = model_base(pb, sb);
  }
  return job_start(j, NULL, view, NULL, w, h, samples, err, n);
}

/* t in each model's own clock. */
static void
job_draw(Job *j, const double t[2], uint8_t *rgba, size_t stride)
{
  j->opt.marker_t_s[0] = (float)t[0];
  j->opt.marker_t_s[1] = j->b && isfinite(t[1]) ? (float)t[1] : NAN;
  arcwise_offscreen_begin(j->off);
  arcwise_scene_draw(j->scene, &j->cam, &j->opt, j->width, j->height);
  arcwise_offscreen_read_rgba(j->off, rgba, stride);
}

/* Draws one frame of j, frees j and writes the PNG through a temporary file. */
static bool
still_write(Job *jp, const double t[2], int width, int height, const char *out, bool force,
            char *err, size_t err_size)
{
  Job j = *jp;
  size_t stride = (size_t)width * 4;
  uint8_t *px = malloc(stride * (size_t)height);
  if (px == NULL) {
    job_free(&j);
    snprintf(err, err_size, "out of memory for a %dx%d image", width, height);
    return false;
  }
  job_draw(&j, t, px, stride);
  job_free(&j);
  /* cairo's PNG writer (zlib-compressed) from an RGB24 surface. */
  cairo_surface_t *surf = cairo_image_surface_create(CAIRO_FORMAT_RGB24, width, height);
  uint8_t *d = cairo_image_surface_get_data(surf);
  size_t ds = (size_t)cairo_image_surface_get_stride(surf);
  cairo_surface_flush(surf);
  for (int y = 0; y < height; y++)
    for (int x = 0; x < width; x++) {
      const uint8_t *p = px + (size_t)y * stride + 4 * (size_t)x;
      uint32_t w = 0xff000000u | (uint32_t)p[0] << 16 | (uint32_t)p[1] << 8 | p[2];
      memcpy(d + (size_t)y * ds + 4 * (size_t)x, &w, 4);
    }
  cairo_surface_mark_dirty(surf);
  free(px);
  char *tmp = arcwise_out_tmp_path(out);
  bool ok = tmp != NULL && cairo_surface_write_to_png(surf, tmp) == CAIRO_STATUS_SUCCESS;
  cairo_surface_destroy(surf);
  if (!ok) {
    snprintf(err, err_size, "%s: cannot write the PNG", out);
    if (tmp)
      remove(tmp);
  } else {
    ok = arcwise_out_rename(tmp, out, force, err, err_size);
  }
  free(tmp);
  return ok;
}

bool
arcwise_export_snapshot(const AwFusedPath *path, const AwSwing *s, const char *view, double t_s,
                        int width, int height, uint8_t *rgba, size_t stride, char *err,
                        size_t err_size)
{
  Job j;
  if (!job_init(&j, path, s, NULL, NULL, view, width, height, 4, err, err_size))
    return false;
  double t[2] = { t_s - j.base_a, NAN };
  job_draw(&j, t, rgba, stride);
  job_free(&j);
  return true;
}

bool
arcwise_export_still(const AwFusedPath *path, const AwSwing *s, const AwFusedPath *path_b,
                     const AwSwing *swing_b, const char *view, double t_s, int width,
                     int height, const char *out, bool force, char *err, size_t err_size)
{
  if (arcwise_out_refuse(out, force, err, err_size))
    return false;
  if (width < 16 || height < 16 || width > 8192 || height > 8192) {
    snprintf(err, err_size, "still size %dx%d: 16 to 8192 pixels a side", width, height);
    return false;
  }
  Job j;
  if (!job_init(&j, path, s, path_b, swing_b, view, width, height, 4, err, err_size))
    return false;
  double t[2] = { t_s - j.base_a, NAN };
  if (j.b) {
    /* The compared swing at the same time from impact. */
    t[1] = (t_s - s->events[AW_EVENT_IMPACT].t_s) + swing_b->events[AW_EVENT_IMPACT].t_s - j.base_b;
  }
  return still_write(&j, t, width, height, out, force, err, err_size);
}

/* Sets up the pixel buffers and, for a multisampled frame, the resolve framebuffer. */
static bool
job_pipe_init(Job *j, char *err, size_t n)
{
  arcwise_offscreen_begin(j->off);
  GLint samples = 0, fbo = 0;
  glGetIntegerv(GL_SAMPLES, &samples);
  glGetIntegerv(GL_DRAW_FRAMEBUFFER_BINDING, &fbo);
  size_t size = (size_t)j->width * (size_t)j->height * 4;
  glGenBuffers(2, j->pbo);
  for (int i = 0; i < 2; i++) {
    glBindBuffer(GL_PIXEL_PACK_BUFFER, j->pbo[i]);
    glBufferData(GL_PIXEL_PACK_BUFFER, (GLsizeiptr)size, NULL, GL_STREAM_READ);
  }
  glBindBuffer(GL_PIXEL_PACK_BUFFER, 0);
  if (samples > 1) {
    glGenFramebuffers(1, &j->resolve_fbo);
    glBindFramebuffer(GL_FRAMEBUFFER, j->resolve_fbo);
    glGenRenderbuffers(1, &j->resolve_rb);
    glBindRenderbuffer(GL_RENDERBUFFER, j->resolve_rb);
    glRenderbufferStorage(GL_RENDERBUFFER, GL_RGBA8, j->width, j->height);
    glFramebufferRenderbuffer(GL_FRAMEBUFFER, GL_COLOR_ATTACHMENT0, GL_RENDERBUFFER,
                              j->resolve_rb);
    GLenum stat = glCheckFramebufferStatus(GL_FRAMEBUFFER);
    glBindFramebuffer(GL_FRAMEBUFFER, (GLuint)fbo);
    if (stat != GL_FRAMEBUFFER_COMPLETE) {
      snprintf(err, n, "GL: the clip's resolve framebuffer is incomplete (status 0x%04x)", stat);
      return false;
    }
  }
  GLenum e = glGetError();
  if (e != GL_NO_ERROR) {
    snprintf(err, n, "GL: cannot set up the clip read-back (error 0x%04x)", e);
    return false;
  }
  return true;
}

static bool
clip_submit(void *user, const double t[2], char *err, size_t err_size)
{
  Job *j = user;
  j->opt.marker_t_s[0] = (float)t[0];
  j->opt.marker_t_s[1] = j->b && isfinite(t[1]) ? (float)t[1] : NAN;
  arcwise_offscreen_begin(j->off);
  arcwise_scene_draw(j->scene, &j->cam, &j->opt, j->width, j->height);
  GLint fbo = 0;
  glGetIntegerv(GL_DRAW_FRAMEBUFFER_BINDING, &fbo);
  GLuint src = (GLuint)fbo;
  if (j->resolve_fbo) {
    glBindFramebuffer(GL_READ_FRAMEBUFFER, (GLuint)fbo);
    glBindFramebuffer(GL_DRAW_FRAMEBUFFER, j->resolve_fbo);
    glBlitFramebuffer(0, 0, j->width, j->height, 0, 0, j->width, j->height, GL_COLOR_BUFFER_BIT,
                      GL_NEAREST);
    src = j->resolve_fbo;
  }
  glBindFramebuffer(GL_READ_FRAMEBUFFER, src);
  glBindBuffer(GL_PIXEL_PACK_BUFFER, j->pbo[j->n_submitted % 2]);
  glPixelStorei(GL_PACK_ALIGNMENT, 4);
  glPixelStorei(GL_PACK_ROW_LENGTH, 0);
  /* BGRA as 8_8_8_8_REV is the 32-bit word 0xAARRGGBB on any byte order: cairo's layout, so
   * the worker draws overlays on the frame without a conversion pass. */
  glReadPixels(0, 0, j->width, j->height, GL_BGRA, GL_UNSIGNED_INT_8_8_8_8_REV, NULL);
  glBindBuffer(GL_PIXEL_PACK_BUFFER, 0);
  glBindFramebuffer(GL_FRAMEBUFFER, (GLuint)fbo);
  glFlush(); /* start the work now; the map in clip_fetch waits for it */
  j->n_submitted++;
  GLenum e = glGetError();
  if (e != GL_NO_ERROR) {
    snprintf(err, err_size, "GL: drawing frame %u failed (error 0x%04x)", j->n_submitted, e);
    return false;
  }
  return true;
}

static bool
clip_fetch(void *user, uint8_t *xrgb, size_t stride, char *err, size_t err_size)
{
  Job *j = user;
  if (j->n_fetched >= j->n_submitted) {
    snprintf(err, err_size, "no frame was drawn to read back");
    return false;
  }
  arcwise_offscreen_begin(j->off);
  size_t row = (size_t)j->width * 4;
  glBindBuffer(GL_PIXEL_PACK_BUFFER, j->pbo[j->n_fetched % 2]);
  const uint8_t *src = glMapBufferRange(GL_PIXEL_PACK_BUFFER, 0,
                                        (GLsizeiptr)(row * (size_t)j->height), GL_MAP_READ_BIT);
  if (src == NULL) {
    glBindBuffer(GL_PIXEL_PACK_BUFFER, 0);
    snprintf(err, err_size, "GL: cannot map the read-back buffer (error 0x%04x)", glGetError());
    return false;
  }
  /* GL's rows run bottom-up. */
  for (int y = 0; y < j->height; y++)
    memcpy(xrgb + (size_t)y * stride, src + (size_t)(j->height - 1 - y) * row, row);
  glUnmapBuffer(GL_PIXEL_PACK_BUFFER);
  glBindBuffer(GL_PIXEL_PACK_BUFFER, 0);
  j->n_fetched++;
  return true;
}

/* Encodes the clip of j (freed here); req gives everything but the swings. */
static bool
clip_run(Job *jp, const ArcwiseClipRequest *req, const char *out, bool force,
         ArcwiseClipProgressFunc progress, void *progress_user, const atomic_bool *cancel,
         ArcwiseClipStats *stats, char *err, size_t err_size)
{
  Job j = *jp;
  ArcwiseClipSwing a = {
    .n = j.a->n, .t_s = j.a->t_s, .speed_m_s = j.a->speed_m_s, .phase = j.a->phase,
    .cam_share = j.a->cam_share, .t0_s = 0, .t1_s = j.a->t_s[j.a->n - 1],
    .align_s = isfinite(j.a->events.impact_s) ? j.a->events.impact_s : 0, .name = "this swing",
  };
  ArcwiseClipPipe pipe = { .submit = clip_submit, .fetch = clip_fetch, .user = &j };
  ArcwiseClipSwing b = { 0 };
  if (j.b) {
    b = (ArcwiseClipSwing){
      .n = j.b->n, .t_s = j.b->t_s, .speed_m_s = j.b->speed_m_s, .phase = j.b->phase,
      .cam_share = j.b->cam_share, .t0_s = 0, .t1_s = j.b->t_s[j.b->n - 1],
      .align_s = isfinite(j.b->events.impact_s) ? j.b->events.impact_s : 0,
      .name = "compared swing",
    };
  }
  ArcwiseClipSpec spec = {
    .width = req->width, .height = req->height, .fps = req->fps > 0 ? req->fps : 30,
    .slowmo = req->slowmo >= 1 ? req->slowmo : 1, .player = req->player, .date = req->date,
    .view_name = req->view, .units = req->imperial ? ARCWISE_UNITS_IMPERIAL : ARCWISE_UNITS_METRIC,
    .overlays = req->overlays, .a = a, .b = j.b ? &b : NULL, .pipe = &pipe,
    .progress = progress, .progress_user = progress_user, .cancel = cancel,
    .preset = ARCWISE_CLIP_PRESET, .crf = ARCWISE_CLIP_CRF,
  };
  bool ok = job_pipe_init(&j, err, err_size) &&
            arcwise_clip_export(&spec, out, force, stats, err, err_size);
  job_free(&j);
  return ok;
}

bool
arcwise_export_clip_swing(const ArcwiseClipRequest *req, const char *out, bool force,
                          ArcwiseClipProgressFunc progress, void *progress_user,
                          const atomic_bool *cancel, ArcwiseClipStats *stats, char *err,
                          size_t err_size)
{
  if (arcwise_out_refuse(out, force, err, err_size))
    return false;
  Job j;
  if (!job_init(&j, req->path_a, req->swing_a, req->path_b, req->swing_b, req->view,
                req->width, req->height, req->samples > 0 ? req->samples : ARCWISE_CLIP_SAMPLES_DEFAULT, err, err_size))
    return false;
  return clip_run(&j, req, out, force, progress, progress_user, cancel, stats, err, err_size);
}

/* ---- the workbench's models ------------------------------------------------------------ */

static bool
job_init_models(Job *j, const ArcwiseModelExport *r, int samples, char *err, size_t n)
{
  memset(j, 0, sizeof *j);
  if (r->a == NULL || r->a->n < 2) {
    snprintf(err, n, "no swing to export");
    return false;
  }
  ArcwiseView view = ARCWISE_VIEW_FACE_ON;
  if (r->camera == NULL && !view_of(r->view_name, &view)) {
    snprintf(err, n, "unknown view '%s'", r->view_name ? r->view_name : "");
    return false;
  }
  static const float zero[3] = { 0, 0, 0 };
  j->a = arcwise_swing_model_copy_shifted(r->a, zero);
  if (r->b != NULL && r->b->n >= 2)
    j->b = arcwise_swing_model_copy_shifted(r->b, zero);
  return job_start(j, r->camera, view, r->options, r->width, r->height, samples, err, n);
}

bool
arcwise_export_clip_models(const ArcwiseModelExport *r, const char *out, bool force,
                           ArcwiseClipProgressFunc progress, void *progress_user,
                           const atomic_bool *cancel, ArcwiseClipStats *stats, char *err,
                           size_t err_size)
{
  if (arcwise_out_refuse(out, force, err, err_size))
    return false;
  Job j;
  if (!job_init_models(&j, r, r->samples > 0 ? r->samples : ARCWISE_CLIP_SAMPLES_DEFAULT, err,
                       err_size))
    return false;
  /* The clip runs the whole swing with the marker moving: the playback dimming is its look. */
  j.opt.dim_ahead = true;
  ArcwiseClipRequest req = {
    .view = r->view_name ? r->view_name : "free", .width = r->width, .height = r->height,
    .fps = r->fps, .slowmo = r->slowmo, .overlays = r->overlays, .player = r->player,
    .date = r->date, .imperial = r->imperial,
  };
  return clip_run(&j, &req, out, force, progress, progress_user, cancel, stats, err, err_size);
}

bool
arcwise_export_still_models(const ArcwiseModelExport *r, double t_a, double t_b,
                            const char *out, bool force, char *err, size_t err_size)
{
  if (arcwise_out_refuse(out, force, err, err_size))
    return false;
  if (r->width < 16 || r->height < 16 || r->width > 8192 || r->height > 8192) {
    snprintf(err, err_size, "still size %dx%d: 16 to 8192 pixels a side", r->width, r->height);
    return false;
  }
  Job j;
  if (!job_init_models(&j, r, r->samples > 0 ? r->samples : 4, err, err_size))
    return false;
  double t[2] = { t_a, t_b };
  return still_write(&j, t, r->width, r->height, out, force, err, err_size);
}

#else /* no scene renderer in this build */

static const char no_scene[] =
  "this build has no 3-D scene renderer (it needs the GUI build: GTK 4, libepoxy, cglm, EGL)";

const char *
arcwise_export_renderer_name(void)
{
  return "";
}

bool
arcwise_export_snapshot(const AwFusedPath *path, const AwSwing *s, const char *view, double t_s,
                        int width, int height, uint8_t *rgba, size_t stride, char *err,
                        size_t err_size)
{
  snprintf(err, err_size, "%s", no_scene);
  return false;
}

bool
arcwise_export_still(const AwFusedPath *path, const AwSwing *s, const AwFusedPath *path_b,
                     const AwSwing *swing_b, const char *view, double t_s, int width,
                     int height, const char *out, bool force, char *err, size_t err_size)
{
  snprintf(err, err_size, "%s", no_scene);
  return false;
}

bool
arcwise_export_clip_swing(const ArcwiseClipRequest *req, const char *out, bool force,
                          ArcwiseClipProgressFunc progress, void *progress_user,
                          const atomic_bool *cancel, ArcwiseClipStats *stats, char *err,
                          size_t err_size)
{
  snprintf(err, err_size, "%s", no_scene);
  return false;
}

#endif
