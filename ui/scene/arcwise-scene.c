/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The studio scene renderer: plain GL 3.3 core, no GTK (see arcwise-scene.h). */
#include "arcwise-scene.h"

#include <cglm/cglm.h>
#include <epoxy/gl.h>
#include <gio/gio.h>
#include <math.h>
#include <string.h>

#include "arcwise-shaders.h"

#define TUBE_SIDES 12
#define TUBE_RADIUS_M 0.016f       /* drawn thicker than a wrist path so it reads at 4 m */
#define COMPARE_RADIUS_M 0.010f
#define CLUB_RADIUS_M 0.006f
#define BALL_RADIUS_M 0.02134f     /* 1.680 in minimum diameter, Equipment Rules Part 3 */
#define FLOATS_PER_VERTEX 12

G_DEFINE_QUARK(arcwise-scene-error-quark, arcwise_scene_error)

typedef struct {
  GLuint vao, vbo, ibo;
  GLsizei n_index;
} Mesh;

typedef struct {
  bool present;
  Mesh tube, band, club;
  bool has_club;
  size_t n;
  float *t_s;          /* owned copies for marker placement */
  float (*pos_m)[3];
  float (*club_m)[3];
} Slot;

typedef struct {
  GLuint prog;
  GLint view_proj, eye, light_dir;
  GLint u[16];
} Program;

struct _ArcwiseScene {
  Program backdrop, floor, solid, tube;
  GLuint empty_vao;
  Mesh floor_mesh, sphere;
  Slot slot[2];
};

/* Uniform slots per program (indices into Program.u). */
enum { BD_HORIZON };
enum { FL_FLOOR, FL_GRID, FL_TARGET, FL_FOOT, FL_HANDED };
enum { SO_RGB, SO_CENTRE_RADIUS, SO_GLOW };
enum { TU_STYLE, TU_COLOUR_MODE, TU_SPEED_MAX, TU_PHASE_RGB, TU_STYLE_RGB, TU_CAM_RGB,
       TU_IMU_RGB, TU_TIME_CUT, TU_ALPHA, TU_FLATTEN };

/* ---- palette (our own studio colours) ---------------------------------------------------- */

static const float phase_rgb[ARCWISE_SCENE_N_PHASES][3] = {
  { 0.55f, 0.60f, 0.68f },   /* address: slate */
  { 0.20f, 0.74f, 0.70f },   /* backswing: sea green */
  { 0.98f, 0.62f, 0.22f },   /* downswing: amber */
  { 0.86f, 0.36f, 0.62f },   /* follow-through: magenta-rose */
  { 0.58f, 0.50f, 0.86f },   /* finish: lavender */
};
static const float compare_rgb[3] = { 0.80f, 0.86f, 1.00f };   /* pale ice */
static const float club_rgb[3] = { 0.93f, 0.90f, 0.80f };
static const float cam_rgb[3] = { 0.25f, 0.78f, 0.95f };       /* camera carried: sky */
static const float imu_rgb[3] = { 1.00f, 0.55f, 0.18f };       /* IMU carried: orange */

void
arcwise_scene_phase_rgb(ArcwiseScenePhase phase, float rgb[3])
{
  int p = (int)phase;
  if (p < 0 || p >= ARCWISE_SCENE_N_PHASES)
    p = 0;
  memcpy(rgb, phase_rgb[p], sizeof phase_rgb[p]);
}

void
arcwise_scene_speed_rgb(float f, float rgb[3])
{
  /* Must match speed_ramp() in shaders/tube.frag. */
  static const float c[5][3] = {
    { 0.30f, 0.45f, 0.92f }, { 0.13f, 0.66f, 0.68f }, { 0.66f, 0.86f, 0.33f },
    { 0.98f, 0.70f, 0.24f }, { 0.96f, 0.36f, 0.33f },
  };
  f = f < 0 ? 0 : f > 1 ? 1 : f;
  float x = f * 4.0f;
  int i = x >= 4.0f ? 3 : (int)x;
  float u = x - (float)i;
  for (int k = 0; k < 3; k++)
    rgb[k] = c[i][k] + (c[i + 1][k] - c[i][k]) * u;
}

void
arcwise_scene_compare_rgb(float rgb[3])
{
  memcpy(rgb, compare_rgb, sizeof compare_rgb);
}

void
arcwise_scene_sensor_rgb(float cam_share, float rgb[3])
{
  float s = cam_share < 0 ? 0 : cam_share > 1 ? 1 : cam_share;
  for (int k = 0; k < 3; k++)
    rgb[k] = imu_rgb[k] + (cam_rgb[k] - imu_rgb[k]) * s;
}

/* ---- options and cameras ----------------------------------------------------------------- */

void
arcwise_scene_options_default(ArcwiseSceneOptions *o)
{
  memset(o, 0, sizeof *o);
  o->colour = ARCWISE_SCENE_COLOUR_SPEED;
  o->show_band = false;
  o->show_club = false;
  o->show_compare = true;
  o->dim_ahead = false;
  o->marker_t_s[0] = o->marker_t_s[1] = NAN;
  o->speed_max_m_s = 10.0f;   /* peak hand speed of amateurs is about 7-10 m/s (Nesbit 2005, from memory) */
  o->handed = 1;
  o->clear_rgb[0] = 0.16f;
  o->clear_rgb[1] = 0.19f;
  o->clear_rgb[2] = 0.23f;
}

void
arcwise_camera_preset(ArcwiseCamera *cam, ArcwiseView view, int handed, const float centre_m[3])
{
  float side = handed < 0 ? -1.0f : 1.0f;
  cam->target_m[0] = centre_m ? centre_m[0] : 0.0f;
  cam->target_m[1] = centre_m ? centre_m[1] : 0.45f * side;
  /* Lower than the swing's middle so that the feet and the ball stay in the picture. */
  cam->target_m[2] = centre_m ? 0.75f * centre_m[2] : 1.05f;
  cam->fov_y_rad = glm_rad(35.0f);
  switch (view) {
  case ARCWISE_VIEW_FACE_ON:
    cam->yaw_rad = side > 0 ? 0.0f : GLM_PIf;
    cam->pitch_rad = glm_rad(6.0f);
    cam->distance_m = 3.7f;
    break;
  case ARCWISE_VIEW_DOWN_THE_LINE:
    cam->yaw_rad = -GLM_PI_2f;
    cam->pitch_rad = glm_rad(8.0f);
    cam->distance_m = 3.9f;
    break;
  case ARCWISE_VIEW_ABOVE:
    cam->yaw_rad = side > 0 ? GLM_PIf : 0.0f;
    cam->pitch_rad = glm_rad(88.0f);
    cam->distance_m = 4.4f;
    cam->target_m[2] = 0.6f;
    break;
  case ARCWISE_VIEW_FREE:
  default:
    cam->yaw_rad = side > 0 ? glm_rad(-35.0f) : GLM_PIf + glm_rad(35.0f);
    cam->pitch_rad = glm_rad(18.0f);
    cam->distance_m = 4.2f;
    break;
  }
}

static void
camera_eye(const ArcwiseCamera *cam, vec3 eye)
{
  float cp = cosf(cam->pitch_rad), sp = sinf(cam->pitch_rad);
  eye[0] = cam->target_m[0] + cam->distance_m * sinf(cam->yaw_rad) * cp;
  eye[1] = cam->target_m[1] - cam->distance_m * cosf(cam->yaw_rad) * cp;
  eye[2] = cam->target_m[2] + cam->distance_m * sp;
}

/* ---- GL helpers --------------------------------------------------------------------------- */

static GLuint
compile_stage(GLenum type, const char *name, GError **error)
{
  g_autofree char *path = g_strdup_printf("/org/arcwise/Workbench/shaders/%s", name);
  g_autoptr(GBytes) src = g_resource_lookup_data(arcwise_shaders_get_resource(), path,
                                                 G_RESOURCE_LOOKUP_FLAGS_NONE, error);
  if (src == NULL)
    return 0;
  gsize len = 0;
  const char *text = g_bytes_get_data(src, &len);
  GLint glen = (GLint)len;
  GLuint sh = glCreateShader(type);
  glShaderSource(sh, 1, &text, &glen);
  glCompileShader(sh);
  GLint ok = 0;
  glGetShaderiv(sh, GL_COMPILE_STATUS, &ok);
  if (!ok) {
    char log[2048] = "";
    glGetShaderInfoLog(sh, sizeof log, NULL, log);
    g_set_error(error, ARCWISE_SCENE_ERROR, 1, "shader %s does not compile: %s", name, log);
    glDeleteShader(sh);
    return 0;
  }
  return sh;
}

static gboolean
program_init(Program *p, const char *vs_name, const char *fs_name, const char *const *uniforms,
             GError **error)
{
  memset(p, 0, sizeof *p);
  GLuint vs = compile_stage(GL_VERTEX_SHADER, vs_name, error);
  if (vs == 0)
    return FALSE;
  GLuint fs = compile_stage(GL_FRAGMENT_SHADER, fs_name, error);
  if (fs == 0) {
    glDeleteShader(vs);
    return FALSE;
  }
  p->prog = glCreateProgram();
  glAttachShader(p->prog, vs);
  glAttachShader(p->prog, fs);
  glLinkProgram(p->prog);
  glDetachShader(p->prog, vs);
  glDetachShader(p->prog, fs);
  glDeleteShader(vs);
  glDeleteShader(fs);
  GLint ok = 0;
  glGetProgramiv(p->prog, GL_LINK_STATUS, &ok);
  if (!ok) {
    char log[2048] = "";
    glGetProgramInfoLog(p->prog, sizeof log, NULL, log);
    g_set_error(error, ARCWISE_SCENE_ERROR, 2, "shaders %s + %s do not link: %s", vs_name,
                fs_name, log);
    glDeleteProgram(p->prog);
    p->prog = 0;
    return FALSE;
  }
  p->view_proj = glGetUniformLocation(p->prog, "u_view_proj");
  p->eye = glGetUniformLocation(p->prog, "u_eye");
  p->light_dir = glGetUniformLocation(p->prog, "u_light_dir");
  for (int i = 0; uniforms != NULL && uniforms[i] != NULL && i < 16; i++)
    p->u[i] = glGetUniformLocation(p->prog, uniforms[i]);
  return TRUE;
}

static void
mesh_clear(Mesh *m)
{
  if (m->ibo)
    glDeleteBuffers(1, &m->ibo);
  if (m->vbo)
    glDeleteBuffers(1, &m->vbo);
  if (m->vao)
    glDeleteVertexArrays(1, &m->vao);
  memset(m, 0, sizeof *m);
}

/* Uploads vertices of `floats_per_vertex` floats; attribute layout is given as sizes. */
static void
mesh_upload(Mesh *m, const float *verts, size_t n_verts, int floats_per_vertex,
            const int *attr_sizes, int n_attr, const guint32 *idx, size_t n_idx)
{
  mesh_clear(m);
  glGenVertexArrays(1, &m->vao);
  glBindVertexArray(m->vao);
  glGenBuffers(1, &m->vbo);
  glBindBuffer(GL_ARRAY_BUFFER, m->vbo);
  glBufferData(GL_ARRAY_BUFFER, (GLsizeiptr)(n_verts * (size_t)floats_per_vertex * sizeof(float)),
               verts, GL_STATIC_DRAW);
  GLsizei stride = floats_per_vertex * (GLsizei)sizeof(float);
  size_t off = 0;
  for (int a = 0; a < n_attr; a++) {
    glEnableVertexAttribArray((GLuint)a);
    glVertexAttribPointer((GLuint)a, attr_sizes[a], GL_FLOAT, GL_FALSE, stride,
                          (const void *)(off * sizeof(float)));
    off += (size_t)attr_sizes[a];
  }
  glGenBuffers(1, &m->ibo);
  glBindBuffer(GL_ELEMENT_ARRAY_BUFFER, m->ibo);
  glBufferData(GL_ELEMENT_ARRAY_BUFFER, (GLsizeiptr)(n_idx * sizeof(guint32)), idx,
               GL_STATIC_DRAW);
  m->n_index = (GLsizei)n_idx;
  glBindVertexArray(0);
}

static void
make_sphere(Mesh *m)
{
  enum { STACKS = 14, SLICES = 24 };
  float verts[(STACKS + 1) * (SLICES + 1) * 3];
  guint32 idx[STACKS * SLICES * 6];
  size_t v = 0, k = 0;
  for (int i = 0; i <= STACKS; i++) {
    float th = GLM_PIf * (float)i / STACKS;
    for (int j = 0; j <= SLICES; j++) {
      float ph = 2.0f * GLM_PIf * (float)j / SLICES;
      verts[v++] = sinf(th) * cosf(ph);
      verts[v++] = sinf(th) * sinf(ph);
      verts[v++] = cosf(th);
    }
  }
  for (int i = 0; i < STACKS; i++)
    for (int j = 0; j < SLICES; j++) {
      guint32 a = (guint32)(i * (SLICES + 1) + j), b = a + SLICES + 1;
      idx[k++] = a; idx[k++] = b; idx[k++] = a + 1;
      idx[k++] = a + 1; idx[k++] = b; idx[k++] = b + 1;
    }
  static const int sizes[] = { 3 };
  mesh_upload(m, verts, v / 3, 3, sizes, 1, idx, k);
}

static void
make_floor(Mesh *m)
{
  const float s = 9.0f;
  const float verts[] = { -s, -s, 0, s, -s, 0, s, s, 0, -s, s, 0 };
  const guint32 idx[] = { 0, 1, 2, 0, 2, 3 };
  static const int sizes[] = { 3 };
  mesh_upload(m, verts, 4, 3, sizes, 1, idx, 6);
}

/* ---- tubes -------------------------------------------------------------------------------- */

/* Builds a tube along pos with per-sample radius (radius_m[i], or `radius` when NULL).
 * Frames are parallel-transported so the tube never twists where the path turns sharply. */
static void
build_tube(Mesh *m, const ArcwiseScenePath *p, const float (*pos)[3], const float *radius_m,
           float radius, float min_radius)
{
  size_t n = p->n;
  size_t n_verts = n * (TUBE_SIDES + 1);
  float *verts = g_new(float, n_verts * FLOATS_PER_VERTEX);
  guint32 *idx = g_new(guint32, (n - 1) * TUBE_SIDES * 6);
  vec3 prev_t = { 1, 0, 0 }, normal = { 0, 0, 1 };
  float arc = 0.0f;
  size_t v = 0;
  for (size_t i = 0; i < n; i++) {
    vec3 a, b, t;
    glm_vec3_copy((float *)pos[i > 0 ? i - 1 : i], a);
    glm_vec3_copy((float *)pos[i + 1 < n ? i + 1 : i], b);
    glm_vec3_sub(b, a, t);
    if (glm_vec3_norm(t) < 1e-7f)
      glm_vec3_copy(prev_t, t);
    glm_vec3_normalize(t);
    if (i == 0) {
      vec3 up = { 0, 0, 1 };
      if (fabsf(glm_vec3_dot(up, t)) > 0.9f)
        glm_vec3_copy((vec3){ 0, 1, 0 }, up);
      glm_vec3_cross(t, up, normal);
      glm_vec3_normalize(normal);
    } else {
      float d = glm_vec3_dot(normal, t);
      vec3 proj;
      glm_vec3_scale(t, d, proj);
      glm_vec3_sub(normal, proj, normal);
      if (glm_vec3_norm(normal) < 1e-6f) {
        vec3 up = { 0, 0, 1 };
        if (fabsf(glm_vec3_dot(up, t)) > 0.9f)
          glm_vec3_copy((vec3){ 0, 1, 0 }, up);
        glm_vec3_cross(t, up, normal);
      }
      glm_vec3_normalize(normal);
      vec3 seg;
      glm_vec3_sub((float *)pos[i], (float *)pos[i - 1], seg);
      arc += glm_vec3_norm(seg);
    }
    glm_vec3_copy(t, prev_t);
    vec3 binormal;
    glm_vec3_cross(t, normal, binormal);
    float r = radius_m ? radius_m[i] : radius;
    if (!(r >= min_radius))
      r = min_radius;
    float speed = p->speed_m_s ? p->speed_m_s[i] : 0.0f;
    float phase = p->phase ? (float)p->phase[i] : 0.0f;
    float occl = p->occluded ? (float)(p->occluded[i] != 0) : 0.0f;
    float time = p->t_s ? p->t_s[i] : (float)i;
    float share = p->cam_share ? p->cam_share[i] : 1.0f;
    for (int s = 0; s <= TUBE_SIDES; s++) {
      float ang = 2.0f * GLM_PIf * (float)s / TUBE_SIDES;
      vec3 nrm;
      for (int k = 0; k < 3; k++)
        nrm[k] = cosf(ang) * normal[k] + sinf(ang) * binormal[k];
      float *o = verts + v * FLOATS_PER_VERTEX;
      for (int k = 0; k < 3; k++) {
        o[k] = pos[i][k] + r * nrm[k];
        o[3 + k] = nrm[k];
      }
      o[6] = speed; o[7] = phase; o[8] = occl; o[9] = arc; o[10] = time; o[11] = share;
      v++;
    }
  }
  size_t k = 0;
  for (size_t i = 0; i + 1 < n; i++)
    for (int s = 0; s < TUBE_SIDES; s++) {
      guint32 a = (guint32)(i * (TUBE_SIDES + 1) + (size_t)s), b = a + TUBE_SIDES + 1;
      /* Counter-clockwise seen from outside. */
      idx[k++] = a; idx[k++] = a + 1; idx[k++] = b;
      idx[k++] = a + 1; idx[k++] = b + 1; idx[k++] = b;
    }
  static const int sizes[] = { 3, 3, 4, 2 };
  mesh_upload(m, verts, v, FLOATS_PER_VERTEX, sizes, 4, idx, k);
  g_free(verts);
  g_free(idx);
}

static void
slot_clear(Slot *s)
{
  mesh_clear(&s->tube);
  mesh_clear(&s->band);
  mesh_clear(&s->club);
  g_clear_pointer(&s->t_s, g_free);
  g_clear_pointer(&s->pos_m, g_free);
  g_clear_pointer(&s->club_m, g_free);
  s->present = false;
  s->has_club = false;
  s->n = 0;
}

void
arcwise_scene_set_path(ArcwiseScene *scene, int slot, const ArcwiseScenePath *path)
{
  g_return_if_fail(scene != NULL && (slot == 0 || slot == 1));
  Slot *s = &scene->slot[slot];
  slot_clear(s);
  if (path == NULL || path->n < 2 || path->pos_m == NULL)
    return;
  float r = slot == 0 ? TUBE_RADIUS_M : COMPARE_RADIUS_M;
  build_tube(&s->tube, path, path->pos_m, NULL, r, r);
  if (path->band_m != NULL)
    build_tube(&s->band, path, path->pos_m, path->band_m, 0.0f, r * 1.6f);
  if (path->club_m != NULL) {
    build_tube(&s->club, path, path->club_m, NULL, CLUB_RADIUS_M, CLUB_RADIUS_M);
    s->has_club = true;
    s->club_m = g_memdup2(path->club_m, path->n * sizeof path->club_m[0]);
  }
  s->n = path->n;
  s->pos_m = g_memdup2(path->pos_m, path->n * sizeof path->pos_m[0]);
  s->t_s = g_new(float, path->n);
  for (size_t i = 0; i < path->n; i++)
    s->t_s[i] = path->t_s ? path->t_s[i] : (float)i;
  s->present = true;
}

/* Position at time t by linear interpolation between samples; false outside the path. */
static bool
slot_position_at(const Slot *s, const float (*pos)[3], float t, vec3 out)
{
  if (!s->present || pos == NULL || !isfinite(t) || t < s->t_s[0] || t > s->t_s[s->n - 1])
    return false;
  size_t lo = 0, hi = s->n - 1;
  while (hi - lo > 1) {
    size_t mid = (lo + hi) / 2;
    if (s->t_s[mid] <= t) lo = mid; else hi = mid;
  }
  float span = s->t_s[hi] - s->t_s[lo];
  float u = span > 0 ? (t - s->t_s[lo]) / span : 0.0f;
  for (int k = 0; k < 3; k++)
    out[k] = pos[lo][k] + (pos[hi][k] - pos[lo][k]) * u;
  return true;
}

/* ---- lifetime ----------------------------------------------------------------------------- */

ArcwiseScene *
arcwise_scene_new(GError **error)
{
  if (epoxy_gl_version() < 33 || epoxy_is_desktop_gl() == false) {
    g_set_error(error, ARCWISE_SCENE_ERROR, 3, "the scene needs desktop OpenGL 3.3 (have %d.%d)",
                epoxy_gl_version() / 10, epoxy_gl_version() % 10);
    return NULL;
  }
  ArcwiseScene *scene = g_new0(ArcwiseScene, 1);
  static const char *const bd_u[] = { "u_horizon", NULL };
  static const char *const fl_u[] = { "u_floor_rgb", "u_grid_rgb", "u_target_rgb", "u_foot_rgb",
                                      "u_handed", NULL };
  static const char *const so_u[] = { "u_rgb", "u_centre_radius", "u_glow", NULL };
  static const char *const tu_u[] = { "u_style", "u_colour_mode", "u_speed_max", "u_phase_rgb",
                                      "u_style_rgb", "u_cam_rgb", "u_imu_rgb", "u_time_cut",
                                      "u_alpha", "u_flatten", NULL };
  if (!program_init(&scene->backdrop, "backdrop.vert", "backdrop.frag", bd_u, error) ||
      !program_init(&scene->floor, "floor.vert", "floor.frag", fl_u, error) ||
      !program_init(&scene->solid, "solid.vert", "solid.frag", so_u, error) ||
      !program_init(&scene->tube, "tube.vert", "tube.frag", tu_u, error)) {
    arcwise_scene_free(scene);
    return NULL;
  }
  glGenVertexArrays(1, &scene->empty_vao);
  make_floor(&scene->floor_mesh);
  make_sphere(&scene->sphere);
  return scene;
}

void
arcwise_scene_free(ArcwiseScene *scene)
{
  if (scene == NULL)
    return;
  slot_clear(&scene->slot[0]);
  slot_clear(&scene->slot[1]);
  mesh_clear(&scene->floor_mesh);
  mesh_clear(&scene->sphere);
  if (scene->empty_vao)
    glDeleteVertexArrays(1, &scene->empty_vao);
  Program *progs[] = { &scene->backdrop, &scene->floor, &scene->solid, &scene->tube };
  for (size_t i = 0; i < G_N_ELEMENTS(progs); i++)
    if (progs[i]->prog)
      glDeleteProgram(progs[i]->prog);
  g_free(scene);
}

/* ---- drawing ------------------------------------------------------------------------------ */

static void
draw_sphere(ArcwiseScene *scene, const vec3 centre, float radius, const float rgb[3], float glow)
{
  Program *p = &scene->solid;
  glUniform4f(p->u[SO_CENTRE_RADIUS], centre[0], centre[1], centre[2], radius);
  glUniform3fv(p->u[SO_RGB], 1, rgb);
  glUniform1f(p->u[SO_GLOW], glow);
  glBindVertexArray(scene->sphere.vao);
  glDrawElements(GL_TRIANGLES, scene->sphere.n_index, GL_UNSIGNED_INT, NULL);
}

static void
draw_mesh(const Mesh *m)
{
  if (m->n_index == 0)
    return;
  glBindVertexArray(m->vao);
  glDrawElements(GL_TRIANGLES, m->n_index, GL_UNSIGNED_INT, NULL);
}

void
arcwise_scene_draw(ArcwiseScene *scene, const ArcwiseCamera *cam, const ArcwiseSceneOptions *opt,
                   int width, int height)
{
  g_return_if_fail(scene != NULL && cam != NULL && opt != NULL);
  if (width <= 0 || height <= 0)
    return;
  glViewport(0, 0, width, height);

  vec3 eye, target, up = { 0, 0, 1 };
  camera_eye(cam, eye);
  glm_vec3_copy((float *)cam->target_m, target);
  if (fabsf(cam->pitch_rad) > glm_rad(80.0f)) {
    /* Looking (nearly) straight down: use the horizontal view direction as screen up. */
    up[0] = -sinf(cam->yaw_rad);
    up[1] = cosf(cam->yaw_rad);
    up[2] = 0;
  }
  mat4 view, proj, view_proj;
  glm_lookat(eye, target, up, view);
  glm_perspective(cam->fov_y_rad, (float)width / (float)height, 0.05f, 60.0f, proj);
  glm_mat4_mul(proj, view, view_proj);
  vec3 light = { -0.35f, -0.55f, 0.85f };
  glm_vec3_normalize(light);

  glDisable(GL_BLEND);
  glDisable(GL_CULL_FACE);
  glDepthMask(GL_TRUE);
  glClearColor(opt->clear_rgb[0], opt->clear_rgb[1], opt->clear_rgb[2], 1.0f);
  glClearDepth(1.0);
  glClear(GL_COLOR_BUFFER_BIT | GL_DEPTH_BUFFER_BIT);

  /* Backdrop, behind everything. */
  glDisable(GL_DEPTH_TEST);
  glUseProgram(scene->backdrop.prog);
  glUniform3fv(scene->backdrop.u[BD_HORIZON], 1, opt->clear_rgb);
  glBindVertexArray(scene->empty_vao);
  glDrawArrays(GL_TRIANGLES, 0, 3);

  glEnable(GL_DEPTH_TEST);
  glDepthFunc(GL_LESS);

  /* Floor. */
  Program *fl = &scene->floor;
  glUseProgram(fl->prog);
  glUniformMatrix4fv(fl->view_proj, 1, GL_FALSE, (const float *)view_proj);
  glUniform3fv(fl->eye, 1, eye);
  glUniform3f(fl->u[FL_FLOOR], opt->clear_rgb[0] * 0.78f, opt->clear_rgb[1] * 0.80f,
              opt->clear_rgb[2] * 0.82f);
  glUniform3f(fl->u[FL_GRID], 0.42f, 0.50f, 0.58f);
  glUniform3f(fl->u[FL_TARGET], 0.94f, 0.70f, 0.35f);
  glUniform3f(fl->u[FL_FOOT], 0.55f, 0.70f, 0.82f);
  glUniform1f(fl->u[FL_HANDED], opt->handed < 0 ? -1.0f : 1.0f);
  draw_mesh(&scene->floor_mesh);

  /* Ball and markers. */
  Program *so = &scene->solid;
  glUseProgram(so->prog);
  glUniformMatrix4fv(so->view_proj, 1, GL_FALSE, (const float *)view_proj);
  glUniform3fv(so->eye, 1, eye);
  glUniform3fv(so->light_dir, 1, light);
  static const float ball_rgb[3] = { 0.95f, 0.95f, 0.93f };
  draw_sphere(scene, (vec3){ 0, 0, BALL_RADIUS_M }, BALL_RADIUS_M, ball_rgb, 0.0f);
  for (int i = 0; i < 2; i++) {
    if (i == 1 && !opt->show_compare)
      continue;
    vec3 at;
    const Slot *s = &scene->slot[i];
    if (slot_position_at(s, (const float (*)[3])s->pos_m, opt->marker_t_s[i], at)) {
      static const float marker_rgb[3] = { 1.0f, 1.0f, 1.0f };
      draw_sphere(scene, at, i == 0 ? 0.042f : 0.030f, i == 0 ? marker_rgb : compare_rgb, 0.6f);
    }
    if (opt->show_club && s->has_club &&
        slot_position_at(s, (const float (*)[3])s->club_m, opt->marker_t_s[i], at))
      draw_sphere(scene, at, 0.025f, club_rgb, 0.5f);
  }

  /* Tubes. */
  Program *tu = &scene->tube;
  glUseProgram(tu->prog);
  glUniformMatrix4fv(tu->view_proj, 1, GL_FALSE, (const float *)view_proj);
  glUniform3fv(tu->eye, 1, eye);
  glUniform3fv(tu->light_dir, 1, light);
  glUniform1i(tu->u[TU_COLOUR_MODE], opt->colour == ARCWISE_SCENE_COLOUR_PHASE ? 1 : 0);
  glUniform1f(tu->u[TU_SPEED_MAX], opt->speed_max_m_s > 0 ? opt->speed_max_m_s : 10.0f);
  glUniform3fv(tu->u[TU_PHASE_RGB], ARCWISE_SCENE_N_PHASES, &phase_rgb[0][0]);
  glUniform3fv(tu->u[TU_CAM_RGB], 1, cam_rgb);
  glUniform3fv(tu->u[TU_IMU_RGB], 1, imu_rgb);
  glUniform1f(tu->u[TU_TIME_CUT], 1e30f);
  glEnable(GL_CULL_FACE);
  glCullFace(GL_BACK);

  /* Shadows of the swings on the floor (blended, no depth writes, so they never hide). */
  glEnable(GL_BLEND);
  glBlendFuncSeparate(GL_SRC_ALPHA, GL_ONE_MINUS_SRC_ALPHA, GL_ZERO, GL_ONE);
  glDepthMask(GL_FALSE);
  glUniform1i(tu->u[TU_FLATTEN], 1);
  glUniform1i(tu->u[TU_STYLE], 4);
  for (int i = 0; i < 2; i++) {
    const Slot *s = &scene->slot[i];
    if (!s->present || (i == 1 && !opt->show_compare))
      continue;
    glUniform1f(tu->u[TU_ALPHA], i == 0 ? 0.30f : 0.16f);
    draw_mesh(&s->tube);
  }
  glUniform1i(tu->u[TU_FLATTEN], 0);
  glDepthMask(GL_TRUE);
  glDisable(GL_BLEND);
  glUniform1f(tu->u[TU_ALPHA], 1.0f);

  for (int i = 0; i < 2; i++) {
    const Slot *s = &scene->slot[i];
    if (!s->present || (i == 1 && !opt->show_compare))
      continue;
    float cut = opt->dim_ahead && isfinite(opt->marker_t_s[i]) ? opt->marker_t_s[i] : 1e30f;
    glUniform1f(tu->u[TU_TIME_CUT], cut);
    glUniform1i(tu->u[TU_STYLE], i == 0 ? 0 : 1);
    glUniform3fv(tu->u[TU_STYLE_RGB], 1, compare_rgb);
    draw_mesh(&s->tube);
    if (opt->show_club && s->has_club) {
      glUniform1i(tu->u[TU_STYLE], 3);
      glUniform3fv(tu->u[TU_STYLE_RGB], 1, i == 0 ? club_rgb : compare_rgb);
      draw_mesh(&s->club);
    }
  }

  /* Translucent band last, without writing depth, so the tube shows through it. */
  if (opt->show_band && scene->slot[0].present && scene->slot[0].band.n_index > 0) {
    glEnable(GL_BLEND);
    glBlendFuncSeparate(GL_SRC_ALPHA, GL_ONE_MINUS_SRC_ALPHA, GL_ONE, GL_ONE_MINUS_SRC_ALPHA);
    glDepthMask(GL_FALSE);
    glUniform1i(tu->u[TU_STYLE], 2);
    glUniform1f(tu->u[TU_TIME_CUT], 1e30f);
    glUniform1f(tu->u[TU_ALPHA], 0.34f);
    draw_mesh(&scene->slot[0].band);
    glDepthMask(GL_TRUE);
    glDisable(GL_BLEND);
  }

  /* Leave the state GTK's renderer expects to find. */
  glDisable(GL_CULL_FACE);
  glDisable(GL_DEPTH_TEST);
  glBindVertexArray(0);
  glUseProgram(0);
}
