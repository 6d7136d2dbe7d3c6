/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The session report: an A4 PDF drawn with cairo. Page 1: player, date, the safety caution, a
 * table of per-swing metrics with the session's consistency (mean, standard deviation); page
 * 2: hand speed over time with the phases, the sensor trust per phase, metric trends across
 * sessions; page 3 (when given): snapshots of the 3-D view. Everything here is already in
 * display units; the adapter that fills it (cmd-export.c) converts from SI. */

#include <stdbool.h>
#include <stddef.h>
#include <stdint.h>

#define ARCWISE_REPORT_PHASES 5        /* address, backswing, downswing, follow-through, finish */
#define ARCWISE_REPORT_MAX_COLUMNS 12

typedef struct {
  const char *label;                   /* column head, e.g. "Tempo" */
  const char *unit;                    /* display unit, e.g. "m/s", "" for ratios */
  int decimals;
} ArcwiseReportColumn;

typedef struct {
  const char *label;                   /* "3", "3 (7-iron)" */
  double values[ARCWISE_REPORT_MAX_COLUMNS];   /* NaN = not available */
  /* Hand speed curve, time relative to the swing's impact (s), speed in the speed unit. */
  size_t n;
  const double *t_s;
  const double *speed;
  double phase_start_s[ARCWISE_REPORT_PHASES];  /* same clock as t_s; NaN unknown */
  double phase_end_s[ARCWISE_REPORT_PHASES];
  double phase_cam_share[ARCWISE_REPORT_PHASES]; /* 0..1, NaN unknown */
  const char *note;                    /* data-quality remark, may be NULL */
} ArcwiseReportSwing;

typedef struct {
  const char *label;                   /* session date, "2026-10-02" */
  double mean[ARCWISE_REPORT_MAX_COLUMNS];
  double sd[ARCWISE_REPORT_MAX_COLUMNS];
} ArcwiseReportSession;

typedef struct {
  const uint8_t *rgba;                 /* top row first, bytes R G B A */
  int width, height;
  size_t stride;
  const char *caption;
} ArcwiseReportImage;

typedef struct {
  const char *player;
  const char *date;
  const char *place;                   /* studio or venue, may be NULL */
  const char *club;                    /* may be NULL */
  const char *speed_unit;              /* unit of the speed curves, "m/s" or "mph" */
  size_t n_columns;
  ArcwiseReportColumn columns[ARCWISE_REPORT_MAX_COLUMNS];
  size_t n_swings;
  const ArcwiseReportSwing *swings;
  /* The session's consistency per column (computed by the analysis). */
  double mean[ARCWISE_REPORT_MAX_COLUMNS];
  double sd[ARCWISE_REPORT_MAX_COLUMNS];
  /* This session and earlier ones, oldest first, for the trend charts (may be empty). */
  size_t n_history;
  const ArcwiseReportSession *history;
  size_t n_trend;                      /* up to 3 columns to chart across sessions */
  size_t trend_columns[3];
  size_t n_images;                     /* up to 4 */
  const ArcwiseReportImage *images;
} ArcwiseReport;

/* Writes the PDF through a temporary file; refuses an existing file unless force. */
bool arcwise_report_write_pdf(const ArcwiseReport *r, const char *path, bool force, char *err,
                              size_t err_size);

/* The caution printed in reports (and clips' long form). */
extern const char arcwise_report_caution[];
