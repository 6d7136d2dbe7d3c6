/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Reference swings from optical motion capture: one marker of a C3D file made into an
 * ArcwiseReference for the library (store.h), and a stored reference made into a trajectory
 * the analysis and comparison take as a swing (analysis.h accepts any right-handed frame with
 * its up direction). */

#include "analysis-output.h"
#include "store.h"

#include <stdbool.h>
#include <stddef.h>

/* Reads `file`, extracts `marker` (NULL: the first point) in metres. `up` is "+z", "-y", ...;
 * NULL takes the file's POINT:Y_SCREEN (the axis a viewer shows upward, e.g. "+Z") and falls
 * back to "+z", the usual vertical of optical systems. On failure returns NULL with a message. */
ArcwiseReference *arcwise_reference_from_c3d(const char *file, const char *marker,
                                             const char *units_if_missing, bool keep_flagged,
                                             const char *up, char *err, size_t err_size);

/* True when s is one of "+x", "-x", "+y", "-y", "+z", "-z" (also upper case, sign optional). */
bool arcwise_reference_parse_up(const char *s, char out[3]);

/* Analyses a reference as a swing: gaps bridged linearly (leading and trailing invalid frames
 * dropped), up from up_axis, no sensor streams (the analysis says what it cannot compute
 * without them). Fills out->fused (times and positions only), out->traj and out->analysis.
 * On failure prints one line for `cmd` and returns false. */
bool arcwise_reference_analyse(const char *cmd, const ArcwiseReference *r,
                               const AwAnalysisSettings *set, ArcwiseCapture *out);
