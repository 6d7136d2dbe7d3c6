/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The MP4 encoder of the clip exporter, after FFmpeg's doc/examples/encode_video.c and
 * mux.c: one video stream, frames converted by export-yuv.c, packets interleaved by
 * libavformat. Built as the loadable module arcwise-video.so (export-video-module.h); the
 * functions are static and reached through the table at the end. */
#include "export-video-module.h"

#include "export-yuv.h"

#include <libavcodec/avcodec.h>
#include <libavformat/avformat.h>
#include <libavutil/imgutils.h>
#include <libavutil/opt.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <unistd.h>

struct ArcwiseVideo {
  AVFormatContext *fmt;
  AVCodecContext *enc;
  AVStream *st;
  AVFrame *frame;
  AVPacket *pkt;
  ArcwiseRgbLayout layout;
  int64_t next_pts;
  double convert_s, encode_s;  /* wall-clock seconds in the colour conversion and in x264 */
  int width, height;
  bool header_written;
};

static double
now_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static void
av_msg(char *err, size_t n, const char *what, int rc)
{
  char buf[AV_ERROR_MAX_STRING_SIZE] = "";
  av_strerror(rc, buf, sizeof buf);
  snprintf(err, n, "%s: %s", what, buf);
}

static void
video_abort(ArcwiseVideo *v)
{
  if (v == NULL)
    return;
  av_frame_free(&v->frame);
  av_packet_free(&v->pkt);
  avcodec_free_context(&v->enc);
  if (v->fmt != NULL) {
    if (v->fmt->pb != NULL)
      avio_closep(&v->fmt->pb);
    avformat_free_context(v->fmt);
  }
  free(v);
}

static const char *
video_encoder_name(const ArcwiseVideo *v)
{
  return v && v->enc && v->enc->codec ? v->enc->codec->name : "none";
}

static ArcwiseVideo *
video_open(const char *path, const ArcwiseVideoSettings *s, char *err, size_t err_size)
{
  if (s->width < 16 || s->height < 16 || s->width > 4096 || s->height > 4096 ||
      s->width % 2 || s->height % 2) {
    snprintf(err, err_size, "frame size %dx%d: width and height must be even, 16 to 4096",
             s->width, s->height);
    return NULL;
  }
  if (s->fps < 1 || s->fps > 240) {
    snprintf(err, err_size, "%d frames per second: 1 to 240", s->fps);
    return NULL;
  }
  av_log_set_level(AV_LOG_ERROR);
  const AVCodec *codec = avcodec_find_encoder_by_name("libx264");
  if (codec == NULL)
    codec = avcodec_find_encoder(AV_CODEC_ID_H264);
  if (codec == NULL) {
    snprintf(err, err_size, "this FFmpeg has no H.264 encoder (Debian's libavcodec59 has libx264)");
    return NULL;
  }
  ArcwiseVideo *v = calloc(1, sizeof *v);
  if (v == NULL) {
    snprintf(err, err_size, "out of memory");
    return NULL;
  }
  v->width = s->width;
  v->height = s->height;
  int rc = avformat_alloc_output_context2(&v->fmt, NULL, "mp4", path);
  if (rc < 0 || v->fmt == NULL) {
    av_msg(err, err_size, "cannot set up an MP4 file", rc);
    goto fail;
  }
  v->st = avformat_new_stream(v->fmt, NULL);
  v->enc = avcodec_alloc_context3(codec);
  v->frame = av_frame_alloc();
  v->pkt = av_packet_alloc();
  if (v->st == NULL || v->enc == NULL || v->frame == NULL || v->pkt == NULL) {
    snprintf(err, err_size, "out of memory");
    goto fail;
  }
  v->enc->width = s->width;
  v->enc->height = s->height;
  v->enc->time_base = (AVRational){ 1, s->fps };
  v->enc->framerate = (AVRational){ s->fps, 1 };
  v->enc->pix_fmt = AV_PIX_FMT_YUV420P;
  v->enc->gop_size = 2 * s->fps; /* a key frame every 2 s: seeking in players stays quick */
  v->enc->colorspace = AVCOL_SPC_BT709;
  v->enc->color_primaries = AVCOL_PRI_BT709;
  v->enc->color_trc = AVCOL_TRC_BT709;
  v->enc->color_range = AVCOL_RANGE_MPEG;
  /* x264's frame threads, one per core (its own default is 1.5 per core, which only adds
   * latency and memory on a 2-core machine shared with the renderer). */
  long cores = sysconf(_SC_NPROCESSORS_ONLN);
  v->enc->thread_count = cores >= 1 && cores <= 64 ? (int)cores : 0;
  if (v->fmt->oformat->flags & AVFMT_GLOBALHEADER)
    v->enc->flags |= AV_CODEC_FLAG_GLOBAL_HEADER;
  if (strcmp(codec->name, "libx264") == 0) {
    char crf[16];
    snprintf(crf, sizeof crf, "%d", s->crf > 0 ? s->crf : 20);
    av_opt_set(v->enc->priv_data, "preset", s->preset ? s->preset : "veryfast", 0);
    av_opt_set(v->enc->priv_data, "crf", crf, 0);
    av_opt_set(v->enc->priv_data, "profile", "high", 0);
  }
  rc = avcodec_open2(v->enc, codec, NULL);
  if (rc < 0) {
    av_msg(err, err_size, "cannot open the H.264 encoder", rc);
    goto fail;
  }
  rc = avcodec_parameters_from_context(v->st->codecpar, v->enc);
  if (rc < 0) {
    av_msg(err, err_size, "encoder parameters", rc);
    goto fail;
  }
  v->st->time_base = v->enc->time_base;
  v->st->avg_frame_rate = v->enc->framerate;
  v->frame->format = AV_PIX_FMT_YUV420P;
  v->frame->width = s->width;
  v->frame->height = s->height;
  rc = av_frame_get_buffer(v->frame, 0);
  if (rc < 0) {
    av_msg(err, err_size, "frame buffer", rc);
    goto fail;
  }
  /* RGB to BT.709 limited-range YUV (export-yuv.h), matching the tags above. */
  v->layout = s->pixels == ARCWISE_PIXELS_CAIRO ? arcwise_layout_cairo() : arcwise_layout_rgba;
  rc = avio_open(&v->fmt->pb, path, AVIO_FLAG_WRITE);
  if (rc < 0) {
    av_msg(err, err_size, path, rc);
    goto fail;
  }
  AVDictionary *opts = NULL;
  av_dict_set(&opts, "movflags", "+faststart", 0); /* index first: playable while loading */
  rc = avformat_write_header(v->fmt, &opts);
  av_dict_free(&opts);
  if (rc < 0) {
    av_msg(err, err_size, "cannot write the MP4 header", rc);
    goto fail;
  }
  v->header_written = true;
  return v;
fail:
  video_abort(v);
  return NULL;
}

static bool
drain(ArcwiseVideo *v, char *err, size_t err_size)
{
  for (;;) {
    int rc = avcodec_receive_packet(v->enc, v->pkt);
    if (rc == AVERROR(EAGAIN) || rc == AVERROR_EOF)
      return true;
    if (rc < 0) {
      av_msg(err, err_size, "encoding failed", rc);
      return false;
    }
    av_packet_rescale_ts(v->pkt, v->enc->time_base, v->st->time_base);
    v->pkt->stream_index = v->st->index;
    rc = av_interleaved_write_frame(v->fmt, v->pkt);
    if (rc < 0) {
      av_msg(err, err_size, "writing the MP4 file failed", rc);
      return false;
    }
  }
}

static bool
video_write(ArcwiseVideo *v, const uint8_t *pixels, size_t stride, char *err, size_t err_size)
{
  int rc = av_frame_make_writable(v->frame);
  if (rc < 0) {
    av_msg(err, err_size, "frame buffer", rc);
    return false;
  }
  double t0 = now_s();
  arcwise_rgb_to_yuv420(pixels, stride, v->layout, v->width, v->height, v->frame->data[0],
                        v->frame->linesize[0], v->frame->data[1], v->frame->linesize[1],
                        v->frame->data[2], v->frame->linesize[2]);
  double t1 = now_s();
  v->frame->pts = v->next_pts++;
  rc = avcodec_send_frame(v->enc, v->frame);
  bool ok = rc >= 0;
  if (!ok)
    av_msg(err, err_size, "encoding failed", rc);
  else
    ok = drain(v, err, err_size);
  v->convert_s += t1 - t0;
  v->encode_s += now_s() - t1;
  return ok;
}

static void
video_times(const ArcwiseVideo *v, double *convert_s, double *encode_s)
{
  *convert_s = v->convert_s;
  *encode_s = v->encode_s;
}

static bool
video_close(ArcwiseVideo *v, char *err, size_t err_size)
{
  bool ok = avcodec_send_frame(v->enc, NULL) >= 0 && drain(v, err, err_size);
  if (ok) {
    int rc = av_write_trailer(v->fmt);
    if (rc < 0) {
      av_msg(err, err_size, "cannot finish the MP4 file", rc);
      ok = false;
    }
  }
  if (ok && v->fmt->pb != NULL && avio_closep(&v->fmt->pb) < 0) {
    snprintf(err, err_size, "cannot close the MP4 file");
    ok = false;
  }
  video_abort(v);
  return ok;
}

__attribute__((visibility("default"))) const ArcwiseVideoModule arcwise_video_module = {
  .abi = ARCWISE_VIDEO_MODULE_ABI,
  .open = video_open,
  .write = video_write,
  .times = video_times,
  .close = video_close,
  .abort = video_abort,
  .encoder_name = video_encoder_name,
};
