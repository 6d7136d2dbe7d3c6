/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* One swing as the scene draws it: the fused hand path cut to the swing, moved into the scene
 * frame (arcwise-scene.h), with per-sample speed, phase, occlusion, camera share and 2-sigma
 * band. Built from an AwFusedPath plus the swing's events, or as an invented demo swing.
 * No GTK; the exporter uses it too. */

#include <glib.h>

#include "arcwise-scene.h"
#include "arcwise/analysis.h"
#include "arcwise/fusion.h"

G_BEGIN_DECLS

/* Events in seconds on the model's own clock (t_s[] below); NaN where unknown. */
typedef struct {
  double takeaway_s;  /* start of the takeaway (the hands leave the address position) */
  double top_s;       /* end of the backswing */
  double impact_s;
  double finish_s;    /* hands come to rest after the follow-through */
} ArcwiseSwingEvents;

/* What the swing's analysis says (analysis.h AwSwing): the library's stored result, or for a
 * demo swing the engine's analysis of its simulated path. `present` is false when the swing
 * has not been analysed; the workbench then measures the few figures it can on the path. */
typedef struct {
  bool present;
  double metric[AW_METRIC_COUNT_];                 /* by AwMetricId, SI (angles in degrees) */
  unsigned notes;                                  /* AW_NOTE_* bits */
  bool practice, half;
  int dominance[ARCWISE_SCENE_N_PHASES];           /* AwDominance: who carried each phase */
  double dev_camera_masked_m[ARCWISE_SCENE_N_PHASES];  /* IMU-only fusion vs full, RMS */
  double dev_imu_masked_m[ARCWISE_SCENE_N_PHASES];     /* camera-only fusion vs full, RMS */
} ArcwiseSwingAnalysed;

typedef struct {
  size_t n;
  float *t_s;                  /* 0 at the first sample */
  float (*pos_m)[3];           /* scene frame */
  float *speed_m_s;
  unsigned char *phase;        /* ArcwiseScenePhase */
  unsigned char *occluded;
  float *cam_share;
  float *band_m;               /* 2-sigma radius, root-sum-square of the axis sigmas */
  float (*club_m)[3];          /* NULL when no club-head estimate */
  ArcwiseSwingEvents events;
  int handed;                  /* +1 right-handed, -1 left-handed */
  float centre_m[3];           /* middle of the path's bounding box, for camera presets */
  float peak_speed_m_s;
  /* The placement used: pos_scene = R_scene_cam (pos_cam - origin_cam_m). Identity and zero
   * for the demo swing. Lets callers map other camera-frame data (e.g. a club path). */
  double R_scene_cam[3][3];
  double origin_cam_m[3];
  /* Share of the camera's information per phase (0..1), for the trust legend. */
  float phase_cam_share[ARCWISE_SCENE_N_PHASES];
  float phase_occluded[ARCWISE_SCENE_N_PHASES];     /* fraction of samples occluded */
  float phase_band_max_m[ARCWISE_SCENE_N_PHASES];   /* widest 2-sigma band in the phase */
  /* Per sample, the sensor that carried the sample's phase by the analysis's masking test
   * (1 camera, 0 wrist sensor, 0.5 both), which the trust band is coloured by; NULL until
   * arcwise_swing_model_set_analysis() knew the dominance (the band then shows cam_share). */
  float *carried;
  ArcwiseSwingAnalysed analysed;
} ArcwiseSwingModel;

/* How the swing sits in the studio when the analysis does not say: hands at impact are
 * `ball_offset_m` from the ball toward the player and `hands_height_m` above the floor.
 * Defaults 0.45 m and 0.78 m: a ~0.9 m grip-to-head distance at a ~60 degree lie, a mid-iron
 * rule of thumb (common practice, from memory). */
typedef struct {
  double ball_offset_m;
  double hands_height_m;
  double club_length_m;        /* grip to club head for the club-head estimate; 0 = none */
} ArcwiseSwingPlacement;

void arcwise_swing_placement_default(ArcwiseSwingPlacement *out);

/* Builds the model from the samples of `path` with t in [t0_s, t1_s] (depth camera clock).
 * `events` are on the same clock (NaN where unknown); the impact time is needed to orient the
 * target line (the hands' horizontal velocity at impact points at the target) and the player's
 * side (the path's centre lies on the player's side of the hands at impact); when it is NaN,
 * the fastest sample stands in. `placement` may be NULL for the defaults. NULL with *error
 * when fewer than 2 samples lie in the window. */
ArcwiseSwingModel *arcwise_swing_model_new_from_fused(const AwFusedPath *path, double t0_s,
                                                      double t1_s,
                                                      const ArcwiseSwingEvents *events,
                                                      const ArcwiseSwingPlacement *placement,
                                                      GError **error);

/* An invented demo swing (hands on a tilted arc, 24/8-frame tempo at 30 frames/s, camera lost
 * around the top and in the follow-through), for tests and the demo until real captures are
 * loaded. `variant` shifts plane, tempo and length a little so two demo swings differ. */
ArcwiseSwingModel *arcwise_swing_model_new_demo(int variant, int handed);

/* Replaces the club-head path by camera-frame positions sampled on the same times as the
 * model (n entries), mapped with the model's placement. */
void arcwise_swing_model_set_club_cam(ArcwiseSwingModel *m, const double (*club_cam_m)[3]);

/* Takes the metrics, quality notes and per-phase sensor dominance of `sw` (the analysis of this
 * same swing). NULL clears them. */
void arcwise_swing_model_set_analysis(ArcwiseSwingModel *m, const AwSwing *sw);

/* Recomputes phase[], the per-phase summaries and centre_m after events changed. */
void arcwise_swing_model_update_phases(ArcwiseSwingModel *m);

/* A view of the model for arcwise_scene_set_path() (borrows the model's arrays). */
void arcwise_swing_model_as_path(const ArcwiseSwingModel *m, ArcwiseScenePath *out);

/* Index of the last sample at or before t (clamped). */
size_t arcwise_swing_model_index_at(const ArcwiseSwingModel *m, double t_s);

/* A deep copy with every position (and club position) moved by offset_m. */
ArcwiseSwingModel *arcwise_swing_model_copy_shifted(const ArcwiseSwingModel *m,
                                                    const float offset_m[3]);

/* Hand position at time t (linear interpolation, clamped to the ends). */
void arcwise_swing_model_position_at(const ArcwiseSwingModel *m, double t_s, float out_m[3]);

/* Maps a time of swing a to the matching time of swing b by a piecewise-linear warp through
 * their events (takeaway, top, impact, finish), so phases play in step. With `only_event`
 * >= 0 (0 takeaway, 1 top, 2 impact) the swings are lined up at that one event instead and
 * play at the same pace. Events that are NaN in either swing are skipped. */
double arcwise_swing_sync_time(const ArcwiseSwingModel *a, const ArcwiseSwingModel *b,
                               double t_a_s, int only_event);

void arcwise_swing_model_free(ArcwiseSwingModel *m);

G_DEFINE_AUTOPTR_CLEANUP_FUNC(ArcwiseSwingModel, arcwise_swing_model_free)

G_END_DECLS
