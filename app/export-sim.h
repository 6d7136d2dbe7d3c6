/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* A fused path made from a simulated recording's truth, for benchmarks and tests of the
 * exports (which check formats and encoders, not accuracy): positions and velocities are the
 * simulator's, the uncertainty and the camera share follow its occlusion windows (camera-carried
 * outside, IMU-carried inside), the IMU readings are the simulated ones. */

#include "arcwise/fusion.h"
#include "arcwise/sim.h"

/* NULL when out of memory. Free with arcwise_sim_path_free (not aw_fused_path_free: the
 * arrays are allocated here). */
AwFusedPath *arcwise_sim_path_new(const AwSim *sim);
void arcwise_sim_path_free(AwFusedPath *p);
