/* SPDX-License-Identifier: GPL-3.0-or-later */
/* export-video.h for the program: loads the FFmpeg encoder module (export-video-module.h) on
 * the first clip, once per process, and forwards to it. A program run from its build tree
 * loads the module built beside it; an installed one loads the installed module. */
#include "export-video-module.h"

#include <gmodule.h>
#include <stdio.h>
#include <string.h>

static const ArcwiseVideoModule *video_module;
static char *video_module_error;

/* Build trees first for programs that live in one, so that a stale installed module is never
 * mixed with fresh code; everything else the installed module. */
static char *
module_path(void)
{
  g_autofree char *self = g_file_read_link("/proc/self/exe", NULL);
  const char *root = ARCWISE_BUILD_ROOT "/";
  if (self != NULL && strncmp(self, root, strlen(root)) == 0)
    return g_build_filename(ARCWISE_VIDEO_MODULE_BUILD_DIR, ARCWISE_VIDEO_MODULE_NAME, NULL);
  return g_build_filename(ARCWISE_VIDEO_MODULE_DIR, ARCWISE_VIDEO_MODULE_NAME, NULL);
}

static gpointer
load_module(gpointer unused)
{
  g_autofree char *path = module_path();
  /* Local binding: FFmpeg's symbols stay out of the program's namespace. */
  GModule *m = g_module_open(path, G_MODULE_BIND_LOCAL);
  if (m == NULL) {
    video_module_error = g_strdup_printf("cannot load the video encoder %s: %s", path,
                                         g_module_error());
    return NULL;
  }
  gpointer sym = NULL;
  if (!g_module_symbol(m, ARCWISE_VIDEO_MODULE_SYMBOL, &sym) || sym == NULL ||
      ((const ArcwiseVideoModule *)sym)->abi != ARCWISE_VIDEO_MODULE_ABI) {
    video_module_error = g_strdup_printf("%s is not this version's video encoder module "
                                         "(reinstall Arcwise)", path);
    g_module_close(m);
    return NULL;
  }
  /* Kept for the life of the process: encoder threads and FFmpeg's statics outlive a clip. */
  g_module_make_resident(m);
  video_module = sym;
  return NULL;
}

static const ArcwiseVideoModule *
get_module(char *err, size_t err_size)
{
  static GOnce once = G_ONCE_INIT;
  g_once(&once, load_module, NULL);
  if (video_module == NULL && err != NULL)
    snprintf(err, err_size, "%s", video_module_error);
  return video_module;
}

ArcwiseVideo *
arcwise_video_open(const char *path, const ArcwiseVideoSettings *s, char *err, size_t err_size)
{
  const ArcwiseVideoModule *m = get_module(err, err_size);
  return m ? m->open(path, s, err, err_size) : NULL;
}

/* Every other call has an ArcwiseVideo, so the module is loaded. */
bool
arcwise_video_write(ArcwiseVideo *v, const uint8_t *pixels, size_t stride, char *err,
                    size_t err_size)
{
  return video_module->write(v, pixels, stride, err, err_size);
}

void
arcwise_video_times(const ArcwiseVideo *v, double *convert_s, double *encode_s)
{
  video_module->times(v, convert_s, encode_s);
}

bool
arcwise_video_close(ArcwiseVideo *v, char *err, size_t err_size)
{
  return video_module->close(v, err, err_size);
}

void
arcwise_video_abort(ArcwiseVideo *v)
{
  if (v != NULL)
    video_module->abort(v);
}

const char *
arcwise_video_encoder_name(const ArcwiseVideo *v)
{
  return v != NULL ? video_module->encoder_name(v) : "none";
}
