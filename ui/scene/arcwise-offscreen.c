/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Offscreen GL 3.3 core through EGL on Mesa's surfaceless platform (see arcwise-offscreen.h). */
#include "arcwise-offscreen.h"

#include <epoxy/egl.h>
#include <epoxy/gl.h>
#include <gio/gio.h>
#include <string.h>

G_DEFINE_QUARK(arcwise-offscreen-error-quark, arcwise_offscreen_error)

struct _ArcwiseOffscreen {
  EGLDisplay dpy;
  EGLContext ctx;
  int width, height, samples;
  GLuint fbo, color_rb, depth_rb;          /* drawn into (multisampled when samples > 1) */
  GLuint resolve_fbo, resolve_rb;          /* single-sample copy for read-back */
  char *renderer;
};

/* EGL displays are shared per native display (one per process here); count users for
 * debugging and never terminate it under another offscreen context. */
static GMutex display_lock;
static int display_users;

static gboolean
egl_fail(GError **error, const char *step)
{
  g_set_error(error, ARCWISE_OFFSCREEN_ERROR, 1, "EGL: %s failed (error 0x%04x)", step,
              (unsigned)eglGetError());
  return FALSE;
}

static EGLDisplay
open_surfaceless_display(GError **error)
{
  if (!epoxy_has_egl_extension(EGL_NO_DISPLAY, "EGL_MESA_platform_surfaceless")) {
    g_set_error(error, ARCWISE_OFFSCREEN_ERROR, 2,
                "EGL: the surfaceless platform (EGL_MESA_platform_surfaceless) is not available;"
                " install Mesa's EGL (libegl-mesa0)");
    return EGL_NO_DISPLAY;
  }
  EGLDisplay dpy = EGL_NO_DISPLAY;
  /* The EXT entry point: epoxy resolves the EGL 1.5 core one only once a display exists. */
  if (epoxy_has_egl_extension(EGL_NO_DISPLAY, "EGL_EXT_platform_base"))
    dpy = eglGetPlatformDisplayEXT(EGL_PLATFORM_SURFACELESS_MESA, EGL_DEFAULT_DISPLAY, NULL);
  if (dpy == EGL_NO_DISPLAY) {
    egl_fail(error, "eglGetPlatformDisplay(surfaceless)");
    return EGL_NO_DISPLAY;
  }
  EGLint major = 0, minor = 0;
  if (!eglInitialize(dpy, &major, &minor)) {
    egl_fail(error, "eglInitialize");
    return EGL_NO_DISPLAY;
  }
  return dpy;
}

static gboolean
make_framebuffers(ArcwiseOffscreen *off, GError **error)
{
  GLint max_samples = 0;
  glGetIntegerv(GL_MAX_SAMPLES, &max_samples);
  if (off->samples > max_samples)
    off->samples = max_samples;
  if (off->samples < 2)
    off->samples = 0;

  glGenFramebuffers(1, &off->fbo);
  glBindFramebuffer(GL_FRAMEBUFFER, off->fbo);
  glGenRenderbuffers(1, &off->color_rb);
  glBindRenderbuffer(GL_RENDERBUFFER, off->color_rb);
  glRenderbufferStorageMultisample(GL_RENDERBUFFER, off->samples, GL_RGBA8, off->width,
                                   off->height);
  glFramebufferRenderbuffer(GL_FRAMEBUFFER, GL_COLOR_ATTACHMENT0, GL_RENDERBUFFER, off->color_rb);
  glGenRenderbuffers(1, &off->depth_rb);
  glBindRenderbuffer(GL_RENDERBUFFER, off->depth_rb);
  glRenderbufferStorageMultisample(GL_RENDERBUFFER, off->samples, GL_DEPTH_COMPONENT24,
                                   off->width, off->height);
  glFramebufferRenderbuffer(GL_FRAMEBUFFER, GL_DEPTH_ATTACHMENT, GL_RENDERBUFFER, off->depth_rb);
  GLenum st = glCheckFramebufferStatus(GL_FRAMEBUFFER);
  if (st != GL_FRAMEBUFFER_COMPLETE) {
    g_set_error(error, ARCWISE_OFFSCREEN_ERROR, 3, "GL: framebuffer %dx%d (%d samples) is "
                "incomplete (status 0x%04x)", off->width, off->height, off->samples, st);
    return FALSE;
  }
  if (off->samples > 0) {
    glGenFramebuffers(1, &off->resolve_fbo);
    glBindFramebuffer(GL_FRAMEBUFFER, off->resolve_fbo);
    glGenRenderbuffers(1, &off->resolve_rb);
    glBindRenderbuffer(GL_RENDERBUFFER, off->resolve_rb);
    glRenderbufferStorage(GL_RENDERBUFFER, GL_RGBA8, off->width, off->height);
    glFramebufferRenderbuffer(GL_FRAMEBUFFER, GL_COLOR_ATTACHMENT0, GL_RENDERBUFFER,
                              off->resolve_rb);
    st = glCheckFramebufferStatus(GL_FRAMEBUFFER);
    if (st != GL_FRAMEBUFFER_COMPLETE) {
      g_set_error(error, ARCWISE_OFFSCREEN_ERROR, 3, "GL: resolve framebuffer is incomplete "
                  "(status 0x%04x)", st);
      return FALSE;
    }
  }
  glBindFramebuffer(GL_FRAMEBUFFER, off->fbo);
  return TRUE;
}

ArcwiseOffscreen *
arcwise_offscreen_new(int width, int height, int samples, GError **error)
{
  g_return_val_if_fail(width > 0 && height > 0, NULL);
  ArcwiseOffscreen *off = g_new0(ArcwiseOffscreen, 1);
  off->width = width;
  off->height = height;
  off->samples = samples;
  off->ctx = EGL_NO_CONTEXT;

  g_mutex_lock(&display_lock);
  off->dpy = open_surfaceless_display(error);
  if (off->dpy != EGL_NO_DISPLAY)
    display_users++;
  g_mutex_unlock(&display_lock);
  if (off->dpy == EGL_NO_DISPLAY) {
    g_free(off);
    return NULL;
  }

  if (!eglBindAPI(EGL_OPENGL_API)) {
    egl_fail(error, "eglBindAPI(OpenGL)");
    arcwise_offscreen_free(off);
    return NULL;
  }
  EGLConfig config = NULL;
  EGLint n_config = 0;
  static const EGLint config_attribs[] = {
    EGL_SURFACE_TYPE, EGL_PBUFFER_BIT,
    EGL_RENDERABLE_TYPE, EGL_OPENGL_BIT,
    EGL_RED_SIZE, 8, EGL_GREEN_SIZE, 8, EGL_BLUE_SIZE, 8,
    EGL_NONE,
  };
  if (!eglChooseConfig(off->dpy, config_attribs, &config, 1, &n_config) || n_config < 1) {
    /* Some drivers list no pbuffer configs on this platform; a config-less context is
     * enough since we never draw to an EGL surface. */
    if (epoxy_has_egl_extension(off->dpy, "EGL_KHR_no_config_context"))
      config = EGL_NO_CONFIG_KHR;
    else {
      egl_fail(error, "eglChooseConfig(OpenGL, pbuffer)");
      arcwise_offscreen_free(off);
      return NULL;
    }
  }
  static const EGLint ctx_attribs[] = {
    EGL_CONTEXT_MAJOR_VERSION, 3,
    EGL_CONTEXT_MINOR_VERSION, 3,
    EGL_CONTEXT_OPENGL_PROFILE_MASK, EGL_CONTEXT_OPENGL_CORE_PROFILE_BIT,
    EGL_NONE,
  };
  off->ctx = eglCreateContext(off->dpy, config, EGL_NO_CONTEXT, ctx_attribs);
  if (off->ctx == EGL_NO_CONTEXT) {
    egl_fail(error, "eglCreateContext(OpenGL 3.3 core)");
    arcwise_offscreen_free(off);
    return NULL;
  }
  if (!eglMakeCurrent(off->dpy, EGL_NO_SURFACE, EGL_NO_SURFACE, off->ctx)) {
    egl_fail(error, "eglMakeCurrent(surfaceless)");
    arcwise_offscreen_free(off);
    return NULL;
  }
  off->renderer = g_strdup((const char *)glGetString(GL_RENDERER));
  if (!make_framebuffers(off, error)) {
    arcwise_offscreen_free(off);
    return NULL;
  }
  glViewport(0, 0, width, height);
  return off;
}

void
arcwise_offscreen_begin(ArcwiseOffscreen *off)
{
  g_return_if_fail(off != NULL);
  eglMakeCurrent(off->dpy, EGL_NO_SURFACE, EGL_NO_SURFACE, off->ctx);
  glBindFramebuffer(GL_FRAMEBUFFER, off->fbo);
  glViewport(0, 0, off->width, off->height);
}

void
arcwise_offscreen_read_rgba(ArcwiseOffscreen *off, uint8_t *rgba, size_t stride)
{
  g_return_if_fail(off != NULL && rgba != NULL && stride >= (size_t)off->width * 4);
  GLuint src = off->fbo;
  if (off->samples > 0) {
    glBindFramebuffer(GL_READ_FRAMEBUFFER, off->fbo);
    glBindFramebuffer(GL_DRAW_FRAMEBUFFER, off->resolve_fbo);
    glBlitFramebuffer(0, 0, off->width, off->height, 0, 0, off->width, off->height,
                      GL_COLOR_BUFFER_BIT, GL_NEAREST);
    src = off->resolve_fbo;
  }
  glBindFramebuffer(GL_READ_FRAMEBUFFER, src);
  glPixelStorei(GL_PACK_ALIGNMENT, 1);
  glPixelStorei(GL_PACK_ROW_LENGTH, (GLint)(stride / 4));
  /* GL's rows run bottom-up; read straight into place, then swap rows in place. */
  glReadPixels(0, 0, off->width, off->height, GL_RGBA, GL_UNSIGNED_BYTE, rgba);
  glPixelStorei(GL_PACK_ROW_LENGTH, 0);
  size_t row = (size_t)off->width * 4;
  uint8_t *tmp = g_malloc(row);
  for (int y = 0; y < off->height / 2; y++) {
    uint8_t *a = rgba + (size_t)y * stride, *b = rgba + (size_t)(off->height - 1 - y) * stride;
    memcpy(tmp, a, row);
    memcpy(a, b, row);
    memcpy(b, tmp, row);
  }
  g_free(tmp);
  glBindFramebuffer(GL_FRAMEBUFFER, off->fbo);
}

int
arcwise_offscreen_get_width(const ArcwiseOffscreen *off)
{
  return off->width;
}

int
arcwise_offscreen_get_height(const ArcwiseOffscreen *off)
{
  return off->height;
}

const char *
arcwise_offscreen_get_renderer(const ArcwiseOffscreen *off)
{
  return off->renderer ? off->renderer : "unknown";
}

void
arcwise_offscreen_free(ArcwiseOffscreen *off)
{
  if (off == NULL)
    return;
  if (off->ctx != EGL_NO_CONTEXT) {
    eglMakeCurrent(off->dpy, EGL_NO_SURFACE, EGL_NO_SURFACE, off->ctx);
    GLuint fbos[] = { off->fbo, off->resolve_fbo };
    GLuint rbs[] = { off->color_rb, off->depth_rb, off->resolve_rb };
    glDeleteFramebuffers(2, fbos);
    glDeleteRenderbuffers(3, rbs);
    eglMakeCurrent(off->dpy, EGL_NO_SURFACE, EGL_NO_SURFACE, EGL_NO_CONTEXT);
    eglDestroyContext(off->dpy, off->ctx);
  }
  /* The display is left initialised: terminating it unloads Mesa's driver, whose few
   * process-lifetime allocations would then show up as leaks of an unknown module, and a
   * later offscreen context would pay the driver start-up again. */
  g_mutex_lock(&display_lock);
  if (off->dpy != EGL_NO_DISPLAY)
    display_users--;
  g_mutex_unlock(&display_lock);
  eglReleaseThread();
  g_free(off->renderer);
  g_free(off);
}

/* ---- PNG ---------------------------------------------------------------------------------- */

static guint32 crc_table[256];

static void
crc_init(void)
{
  for (guint32 n = 0; n < 256; n++) {
    guint32 c = n;
    for (int k = 0; k < 8; k++)
      c = (c & 1) ? 0xedb88320u ^ (c >> 1) : c >> 1;
    crc_table[n] = c;
  }
}

static guint32
crc_update(guint32 crc, const guint8 *buf, size_t len)
{
  for (size_t i = 0; i < len; i++)
    crc = crc_table[(crc ^ buf[i]) & 0xff] ^ (crc >> 8);
  return crc;
}

static void
put_be32(GByteArray *out, guint32 v)
{
  guint8 b[4] = { (guint8)(v >> 24), (guint8)(v >> 16), (guint8)(v >> 8), (guint8)v };
  g_byte_array_append(out, b, 4);
}

static void
put_chunk(GByteArray *out, const char *type, const guint8 *data, size_t len)
{
  put_be32(out, (guint32)len);
  size_t start = out->len;
  g_byte_array_append(out, (const guint8 *)type, 4);
  if (len > 0)
    g_byte_array_append(out, data, (guint)len);
  guint32 crc = crc_update(0xffffffffu, out->data + start, len + 4) ^ 0xffffffffu;
  put_be32(out, crc);
}

gboolean
arcwise_write_png(const char *path, const uint8_t *rgba, int width, int height, size_t stride,
                  GError **error)
{
  static gsize once = 0;
  if (g_once_init_enter(&once)) {
    crc_init();
    g_once_init_leave(&once, 1);
  }
  /* PNG (ISO/IEC 15948): signature, IHDR, one IDAT of zlib "stored" blocks (RFC 1950/1951),
   * IEND. Each scanline is prefixed with filter type 0. */
  size_t raw_len = (size_t)height * ((size_t)width * 4 + 1);
  guint8 *raw = g_malloc(raw_len);
  for (int y = 0; y < height; y++) {
    guint8 *r = raw + (size_t)y * ((size_t)width * 4 + 1);
    r[0] = 0;
    memcpy(r + 1, rgba + (size_t)y * stride, (size_t)width * 4);
  }
  GByteArray *z = g_byte_array_sized_new((guint)(raw_len + raw_len / 65535 * 5 + 16));
  const guint8 zhdr[2] = { 0x78, 0x01 };
  g_byte_array_append(z, zhdr, 2);
  guint32 s1 = 1, s2 = 0;
  for (size_t off = 0; off < raw_len || raw_len == 0;) {
    size_t len = MIN(raw_len - off, (size_t)65535);
    guint8 h[5] = { (guint8)(off + len >= raw_len), (guint8)len, (guint8)(len >> 8),
                    (guint8)~len, (guint8)(~len >> 8) };
    g_byte_array_append(z, h, 5);
    g_byte_array_append(z, raw + off, (guint)len);
    for (size_t i = 0; i < len; i++) {
      s1 = (s1 + raw[off + i]) % 65521u;
      s2 = (s2 + s1) % 65521u;
    }
    off += len;
    if (raw_len == 0)
      break;
  }
  put_be32(z, (s2 << 16) | s1);
  g_free(raw);

  GByteArray *png = g_byte_array_new();
  static const guint8 sig[8] = { 137, 80, 78, 71, 13, 10, 26, 10 };
  g_byte_array_append(png, sig, 8);
  guint8 ihdr[13] = { (guint8)(width >> 24), (guint8)(width >> 16), (guint8)(width >> 8),
                      (guint8)width, (guint8)(height >> 24), (guint8)(height >> 16),
                      (guint8)(height >> 8), (guint8)height, 8, 6, 0, 0, 0 };
  put_chunk(png, "IHDR", ihdr, 13);
  put_chunk(png, "IDAT", z->data, z->len);
  put_chunk(png, "IEND", NULL, 0);
  g_byte_array_unref(z);
  gboolean ok = g_file_set_contents(path, (const char *)png->data, png->len, error);
  g_byte_array_unref(png);
  return ok;
}
