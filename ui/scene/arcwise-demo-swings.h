/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Invented demo swings from the simulator (engine/sim), for the demo library, tests and
 * `arcwise bench render`: the simulator's true wrist path on the depth clock, shaped like a
 * fused path (camera frame, camera/gravity rotation, 1-sigma and camera share per sample,
 * flags where the simulated camera lost the hands) and placed with the same adapter as real
 * fused paths. Where the camera lost the hands the uncertainty grows the way an IMU-bridged
 * gap does (quadratically with time from the nearest camera fix, REFERENCES.md §8), so the
 * trust band is shaped realistically; the path itself is the simulator's truth. No GTK. */

#include <glib.h>
#include <stdbool.h>
#include <stdint.h>

#include "arcwise-swing-model.h"

G_BEGIN_DECLS

/* One simulated swing (seeded, deterministic). NULL with *error if the simulator fails. */
ArcwiseSwingModel *arcwise_demo_swing_new(uint64_t seed, bool left_handed, GError **error);

G_END_DECLS
