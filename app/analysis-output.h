/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Swing analysis as JSON and as a readable table: shared by `arcwise analyze`,
 * `arcwise compare` and the exporters, so every output names things the same way. */

#include "json-writer.h"

#include "arcwise/analysis.h"

#include <stdio.h>

const char *arcwise_event_name(AwEventKind e);      /* "address", "takeaway", ... */
const char *arcwise_phase_name(AwPhaseKind p);      /* "address", "backswing", ... */
const char *arcwise_dominance_name(AwDominance d);  /* "camera", "imu", "shared", "unknown" */

/* The members of one swing (inside an object the caller opened): span, flags, events,
 * event_sigma_s, phases[], metrics{}, quality{}. */
void arcwise_json_swing_members(ArcwiseJson *j, const AwSwing *s);
/* A whole analysis document: sync, handed, club, the first swing's members at top level,
 * swings[] with one object per swing, and consistency{} over the swings. */
void arcwise_json_analysis(ArcwiseJson *j, const AwAnalysis *a);
/* Readable tables (metric units: SI with speeds also in km/h). */
void arcwise_print_analysis(FILE *out, const AwAnalysis *a);
/* Consistency object: per metric key {n, mean, sd, min, max}. */
void arcwise_json_consistency(ArcwiseJson *j, const char *key, const AwConsistency *c);

/* Command-line glue shared by analyze and compare: one capture (a folder holding imu.csv and
 * depth.csv, or the two files), read, fused and analysed. On failure prints one line for
 * command `cmd` on stderr and returns false. */
typedef struct {
  AwImuStream *imu;
  AwDepthStream *depth;
  AwFusedPath *fused;
  AwAnalysis *analysis;
  AwTrajectory traj;       /* view of fused */
} ArcwiseCapture;

bool arcwise_capture_analyse(const char *cmd, const char *imu_path, const char *depth_path,
                             const AwAnalysisSettings *set, bool handed_given,
                             ArcwiseCapture *out);
void arcwise_capture_clear(ArcwiseCapture *c);
/* Parses --club NAME, --club-length M, --handed right|left at argv[*i]; returns 1 if taken
 * (advancing *i), 0 if not an analysis option, -1 on a usage error (message printed). */
int arcwise_parse_analysis_option(const char *cmd, int argc, char **argv, int *i,
                                  AwAnalysisSettings *set, bool *handed_given);
