/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once
/* Private to engine/sim: the timeline of motion segments behind an AwSim. */

#include "arcwise/sim.h"

/* Pose parameters of the two-lever model (player frame). */
typedef struct {
  double theta;   /* lead-arm angle in the plane from address (+ = backswing side), rad */
  double beta;    /* wrist hinge, club angle relative to the arm, rad */
  double roll;    /* forearm roll about its own axis, rad */
  double plane;   /* inclination of the plane to the horizontal, rad */
  double yaw;     /* plane turned about vertical, rad */
  double shift;   /* hub shift toward the target, m */
} SimQ;

/* Where the player stands: floor position and heading of the player frame, plus a vertical
 * offset (gait bob). */
typedef struct {
  double x, y, z, heading;
} SimB;

typedef struct {
  double t, p, v, a;
} SimKnot;

#define SIM_MAX_KNOTS 8
typedef struct {
  int n;
  SimKnot k[SIM_MAX_KNOTS];
} SimProfile;

typedef struct {
  double t_ta, t_top, t_imp, t_fin;     /* profile times (unwarped) */
  SimProfile theta, beta;
  double roll_top, roll_fin, roll_c, roll_w; /* release roll centred at roll_c, half width w */
  double plane_b, plane_d, yaw_d, shift;
  double loss, tau_on, tau_off;          /* contact time warp (loss 0: none) */
} SimSwingProf;

typedef enum {
  SEG_STATIC = 0,
  SEG_BLEND,
  SEG_WALK,
  SEG_SWING,
  SEG_WAGGLE,
  SEG_SPIN,
} SimSegKind;

typedef struct {
  double t0, t1;
  SimSegKind kind;
  AwSimActivity activity;
  int swing;             /* index into truth swings, -1 if none */
  SimQ q0, q1;
  SimB b0, b1;
  int prof;              /* SEG_SWING: index into profiles */
  double amp_theta, amp_beta, freq_hz; /* waggle; walk: steps in freq_hz */
} SimSeg;

struct AwSim {
  AwSimConfig cfg;
  /* geometry of the player */
  double arm_m, club_m, hub[3];
  bool left;
  double R_forearm_body[3][3];
  double lever_body[3];
  double g;
  double R_cam_grav[3][3], cam_pos[3];
  size_t n_seg, cap_seg;
  SimSeg *seg;
  size_t n_prof, cap_prof;
  SimSwingProf *prof;
  double t_begin, t_end;
  AwImuStream *imu;
  AwDepthStream *depth;
  AwSimTruth truth;
  size_t cap_swings, cap_occ, cap_spans;
};
