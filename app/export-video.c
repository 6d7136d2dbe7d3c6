/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The MP4 encoder of the clip exporter, after FFmpeg's doc/examples/encode_video.c and
 * mux.c: one video stream, frames converted by libswscale, packets interleaved by
 * libavformat. */
#include "export-video.h"

#include <libavcodec/avcodec.h>
#include <libavformat/avformat.h>
#include <libavutil/imgutils.h>
#include <libavutil/opt.h>
#include <libswscale/swscale.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

struct ArcwiseVideo {
  AVFormatContext *fmt;
  AVCodecContext *enc;
  AVStream *st;
  AVFrame *frame;
  AVPacket *pkt;
  struct SwsContext *sws;
  int64_t next_pts;
  int width, height;
  bool header_written;
};

static void
av_msg(char *err, size_t n, const char *what, int rc)
{
  char buf[AV_ERROR_MAX_STRING_SIZE] = "";
  av_strerror(rc, buf, sizeof buf);
  snprintf(err, n, "%s: %s", what, buf);
}

void
arcwise_video_abort(ArcwiseVideo *v)
{
  if (v == NULL)
    return;
  sws_freeContext(v->sws);
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

const char *
arcwise_video_encoder_name(const ArcwiseVideo *v)
{
  return v && v->enc && v->enc->codec ? v->enc->codec->name : "none";
}

ArcwiseVideo *
arcwise_video_open(const char *path, const ArcwiseVideoSettings *s, char *err, size_t err_size)
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
  v->enc->thread_count = 0; /* as many as there are cores */
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
  enum AVPixelFormat in = s->pixels == ARCWISE_PIXELS_CAIRO ? AV_PIX_FMT_NE(ARGB, BGRA)
                                                            : AV_PIX_FMT_RGBA;
  v->sws = sws_getContext(s->width, s->height, in, s->width, s->height, AV_PIX_FMT_YUV420P,
                          SWS_BILINEAR | SWS_ACCURATE_RND | SWS_FULL_CHR_H_INT, NULL, NULL, NULL);
  if (v->sws == NULL) {
    snprintf(err, err_size, "cannot set up the colour conversion");
    goto fail;
  }
  /* RGB to BT.709 limited-range YUV, matching the tags above. */
  const int *coef = sws_getCoefficients(SWS_CS_ITU709);
  sws_setColorspaceDetails(v->sws, coef, 1, coef, 0, 0, 1 << 16, 1 << 16);
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
  arcwise_video_abort(v);
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

bool
arcwise_video_write(ArcwiseVideo *v, const uint8_t *pixels, size_t stride, char *err,
                    size_t err_size)
{
  int rc = av_frame_make_writable(v->frame);
  if (rc < 0) {
    av_msg(err, err_size, "frame buffer", rc);
    return false;
  }
  const uint8_t *src[1] = { pixels };
  int src_stride[1] = { (int)stride };
  sws_scale(v->sws, src, src_stride, 0, v->height, v->frame->data, v->frame->linesize);
  v->frame->pts = v->next_pts++;
  rc = avcodec_send_frame(v->enc, v->frame);
  if (rc < 0) {
    av_msg(err, err_size, "encoding failed", rc);
    return false;
  }
  return drain(v, err, err_size);
}

bool
arcwise_video_close(ArcwiseVideo *v, char *err, size_t err_size)
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
  arcwise_video_abort(v);
  return ok;
}
