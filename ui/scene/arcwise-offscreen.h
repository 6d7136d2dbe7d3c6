/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* An OpenGL 3.3 core context with no window and no display server, for rendering the scene
 * into memory: EGL on Mesa's surfaceless platform (EGL_PLATFORM_SURFACELESS_MESA), a context
 * made current without any surface (EGL_KHR_surfaceless_context), and a framebuffer object
 * of its own (4x multisampled when asked, resolved on read-back). Works on Mesa llvmpipe with
 * no GPU, e.g. under `LIBGL_ALWAYS_SOFTWARE=1`. No GTK.
 *
 * Typical use (the clip exporter, `arcwise bench render`, tests):
 *
 *   g_autoptr(GError) err = NULL;
 *   ArcwiseOffscreen *off = arcwise_offscreen_new(1920, 1080, 4, &err);
 *   if (off == NULL) { ...report err->message... }
 *   ArcwiseScene *scene = arcwise_scene_new(&err);     // the context is current now
 *   arcwise_scene_set_path(scene, 0, &path);
 *   for (each frame) {
 *     arcwise_offscreen_begin(off);                     // binds the FBO, sets the viewport
 *     arcwise_scene_draw(scene, &cam, &opt, 1920, 1080);
 *     arcwise_offscreen_read_rgba(off, pixels, 1920 * 4); // top row first, RGBA8
 *   }
 *   arcwise_scene_free(scene);                          // before the context goes
 *   arcwise_offscreen_free(off);
 *
 * One ArcwiseOffscreen per thread; it is made current on the calling thread by _new() and
 * _begin(). Not for use inside a GTK program's GL widget (that has its own context). */

#include <glib.h>
#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

G_BEGIN_DECLS

typedef struct _ArcwiseOffscreen ArcwiseOffscreen;

#define ARCWISE_OFFSCREEN_ERROR (arcwise_offscreen_error_quark())
GQuark arcwise_offscreen_error_quark(void);

/* Creates the context and a width x height framebuffer and makes them current. `samples` is
 * 0 or 1 for none, otherwise the multisample count (clamped to what the driver allows).
 * NULL with *error set (which EGL step failed and its error code) when EGL or GL 3.3 core is
 * not available. */
ArcwiseOffscreen *arcwise_offscreen_new(int width, int height, int samples, GError **error);

/* Makes the context current and binds the framebuffer for drawing. */
void arcwise_offscreen_begin(ArcwiseOffscreen *off);

/* Finishes drawing and copies the frame into `rgba` (width * height * 4 bytes, rows `stride`
 * bytes apart, top row first). */
void arcwise_offscreen_read_rgba(ArcwiseOffscreen *off, uint8_t *rgba, size_t stride);

int arcwise_offscreen_get_width(const ArcwiseOffscreen *off);
int arcwise_offscreen_get_height(const ArcwiseOffscreen *off);

/* The GL_RENDERER string (e.g. "llvmpipe (LLVM 15.0.6, 256 bits)"), for benchmark reports. */
const char *arcwise_offscreen_get_renderer(const ArcwiseOffscreen *off);

/* Deletes the framebuffer and the context. Free scenes made in this context first. */
void arcwise_offscreen_free(ArcwiseOffscreen *off);

/* Writes RGBA8 pixels (top row first) as a PNG file (stored, uncompressed deflate blocks),
 * so that snapshots need no image library. Replaces the file atomically. */
gboolean arcwise_write_png(const char *path, const uint8_t *rgba, int width, int height,
                           size_t stride, GError **error);

G_END_DECLS
