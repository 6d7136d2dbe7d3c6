/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The 3-D studio scene: floor grid, ball, target line, stance, the hand path as a shaded tube,
 * its 2-sigma trust band, the optional club-head path, a moving marker, and a second swing
 * overlaid for comparison.
 *
 * Plain OpenGL 3.3 core through libepoxy and cglm, with no GTK in it, so that the workbench's
 * GtkGLArea, the clip exporter and `arcwise bench render` all draw the same pixels. Every call
 * needs a current GL 3.3 core context (the widget's, or one from arcwise-offscreen.h) and must
 * be made with the same context that created the scene. The scene draws into whatever
 * framebuffer is bound when arcwise_scene_draw() is called.
 *
 * Scene frame (metres): origin at the ball on the floor, +x along the target line toward the
 * target, +z up, +y from the ball toward a right-handed player (a left-handed player stands at
 * -y). The caller converts engine paths (camera frame) into this frame; see
 * arcwise-swing-model.h for the conversion the workbench uses. */

#include <glib.h>
#include <stdbool.h>
#include <stddef.h>

G_BEGIN_DECLS

/* Phases as the scene colours them. Indices are stable; the UI maps analysis phases to them. */
typedef enum {
  ARCWISE_SCENE_PHASE_ADDRESS = 0,
  ARCWISE_SCENE_PHASE_BACKSWING,
  ARCWISE_SCENE_PHASE_DOWNSWING,
  ARCWISE_SCENE_PHASE_FOLLOW_THROUGH,
  ARCWISE_SCENE_PHASE_FINISH,
  ARCWISE_SCENE_N_PHASES
} ArcwiseScenePhase;

typedef enum {
  ARCWISE_SCENE_COLOUR_SPEED = 0,   /* hand speed on a ramp from 0 to speed_max_m_s */
  ARCWISE_SCENE_COLOUR_PHASE,       /* one colour per phase */
} ArcwiseSceneColour;

typedef enum {
  ARCWISE_VIEW_FACE_ON = 0,         /* in front of the player, looking at the chest */
  ARCWISE_VIEW_DOWN_THE_LINE,       /* behind the hands, looking along the target line */
  ARCWISE_VIEW_ABOVE,               /* straight down onto the stance */
  ARCWISE_VIEW_FREE,                /* whatever orbit/pan/zoom left */
} ArcwiseView;

/* One swing, sample by sample, in the scene frame. Arrays are borrowed for the duration of
 * arcwise_scene_set_path() only (the scene copies what it needs to the GPU). */
typedef struct {
  size_t n;
  const float (*pos_m)[3];          /* hand (lead wrist) position */
  const float *t_s;                 /* time, any origin, increasing */
  const float *speed_m_s;           /* hand speed */
  const unsigned char *phase;       /* ArcwiseScenePhase per sample */
  const unsigned char *occluded;    /* 1 where the camera had lost the hands */
  const float *cam_share;           /* 0..1 share of position information from the camera */
  const float *band_m;              /* 2-sigma radius of the position uncertainty */
  const float (*club_m)[3];         /* estimated club-head position, or NULL */
} ArcwiseScenePath;

typedef struct {
  float target_m[3];                /* orbit centre */
  float yaw_rad;                    /* azimuth of the eye around +z, 0 = eye on -y */
  float pitch_rad;                  /* elevation of the eye above the horizontal */
  float distance_m;                 /* eye to target */
  float fov_y_rad;
} ArcwiseCamera;

typedef struct {
  ArcwiseSceneColour colour;
  bool show_band;                   /* 2-sigma band coloured by the sensor that carried it */
  bool show_club;                   /* estimated club-head path when the path has one */
  bool show_compare;                /* the swing in slot 1 */
  bool dim_ahead;                   /* draw the part after the marker darker (playback) */
  float marker_t_s[2];              /* marker time per slot; NaN hides the marker */
  float speed_max_m_s;              /* top of the speed ramp */
  int handed;                       /* +1 right-handed stance, -1 left-handed */
  float clear_rgb[3];               /* background at the horizon */
} ArcwiseSceneOptions;

typedef struct _ArcwiseScene ArcwiseScene;

#define ARCWISE_SCENE_ERROR (arcwise_scene_error_quark())
GQuark arcwise_scene_error_quark(void);

/* Fills sensible defaults (speed colouring, band off, right-handed, markers hidden). */
void arcwise_scene_options_default(ArcwiseSceneOptions *out);

/* Camera presets. `handed` as in the options; `centre_m` is the middle of the swing
 * (typically the mean hand position), used as the orbit target. */
void arcwise_camera_preset(ArcwiseCamera *cam, ArcwiseView view, int handed,
                           const float centre_m[3]);

/* Compiles the shaders and creates the static geometry in the current context. NULL with
 * *error set when the context is not GL 3.3 core or a shader fails (its log is in the
 * message). */
ArcwiseScene *arcwise_scene_new(GError **error);

/* Deletes every GL name; the creating context must be current. NULL does nothing. */
/* Mouse and touchpad moves of the camera, each from the camera as the gesture began. Orbit
 * turns the eye around the target (3 rad per view height; pitch kept between just below the
 * horizon and nearly straight down); pan moves the target in the view plane so that the
 * scene at the target's depth follows the pointer; zoom scales the distance (0.8-15 m). */
void arcwise_camera_orbit(ArcwiseCamera *cam, const ArcwiseCamera *start, double dx_px,
                          double dy_px, double height_px);
void arcwise_camera_pan(ArcwiseCamera *cam, const ArcwiseCamera *start, double dx_px,
                        double dy_px, double height_px);
void arcwise_camera_zoom(ArcwiseCamera *cam, const ArcwiseCamera *start, double factor);

void arcwise_scene_free(ArcwiseScene *scene);

/* Replaces the swing in `slot` (0 = the swing under study, 1 = the comparison swing). A NULL
 * path or one with fewer than 2 samples clears the slot. */
void arcwise_scene_set_path(ArcwiseScene *scene, int slot, const ArcwiseScenePath *path);

/* Draws one frame of `width` x `height` pixels into the bound framebuffer. */
void arcwise_scene_draw(ArcwiseScene *scene, const ArcwiseCamera *cam,
                        const ArcwiseSceneOptions *opt, int width, int height);

/* Colours the scene uses, for legends drawn by the UI (sRGB 0..1). */
void arcwise_scene_phase_rgb(ArcwiseScenePhase phase, float rgb[3]);
void arcwise_scene_speed_rgb(float fraction, float rgb[3]);
void arcwise_scene_compare_rgb(float rgb[3]);
void arcwise_scene_sensor_rgb(float cam_share, float rgb[3]);

G_END_DECLS
