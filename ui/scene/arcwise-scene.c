/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The studio scene renderer: plain GL 3.3 core, no GTK (see arcwise-scene.h). */
#include "arcwise-scene.h"

#include <cglm/cglm.h>
#include <epoxy/gl.h>
#include <gio/gio.h>
#include <math.h>
#include <string.h>

#include "arcwise-shaders.h"

/* Faces around each tube: enough that the silhouette reads round at studio-screen sizes, few
 * enough that llvmpipe's triangle setup stays cheap (it dominates the frame). */
#define TUBE_SIDES 10
#define COMPARE_SIDES 8
#define CLUB_SIDES 6
#define BAND_SIDES 8
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
  Mesh tube, band, club, shadow;
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
  Program backdrop, floor, mark, solid, tube;
  GLuint empty_vao;
  Mesh floor_mesh, sphere, marks;
  /* Index ranges of `marks`: what every scene shows, then the stance of a right-handed and of
   * a left-handed player. */
  GLsizei marks_common, marks_feet_right, marks_feet_left;
  Slot slot[2];
};

/* Uniform slots per program (indices into Program.u). */
enum { BD_HORIZON };
enum { FL_FLOOR };
enum { MK_VIEWPORT, MK_PX_PER_M };
enum { SO_RGB, SO_CENTRE_RADIUS, SO_GLOW };
enum { TU_STYLE, TU_COLOUR_MODE, TU_SPEED_MAX, TU_PHASE_RGB, TU_STYLE_RGB, TU_CAM_RGB,
       TU_IMU_RGB, TU_TIME_CUT, TU_ALPHA };

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
static const float grid_rgb[3] = { 0.42f, 0.50f, 0.58f };
static const float target_rgb[3] = { 0.94f, 0.70f, 0.35f };
static const float foot_rgb[3] = { 0.55f, 0.70f, 0.82f };

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
  /* Well below the swing's middle so that the feet and the ball stay in the picture on a
   * wide studio screen too (with the 35 degree field the view then spans from below the ball
   * to about 1.9 m at the hands, above a typical top of the swing). */
  cam->target_m[2] = centre_m ? 0.6f * centre_m[2] : 0.85f;
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

void
arcwise_camera_orbit(ArcwiseCamera *cam, const ArcwiseCamera *start, double dx_px, double dy_px,
                     double height_px)
{
  double h = height_px > 1 ? height_px : 1;
  *cam = *start;
  cam->yaw_rad = start->yaw_rad - (float)(dx_px / h * 3.0);
  float p = start->pitch_rad + (float)(dy_px / h * 3.0);
  cam->pitch_rad = p < -0.15f ? -0.15f : p > 1.55f ? 1.55f : p;
}

void
arcwise_camera_pan(ArcwiseCamera *cam, const ArcwiseCamera *start, double dx_px, double dy_px,
                   double height_px)
{
  double h = height_px > 1 ? height_px : 1;
  /* Metres per pixel at the target's depth, then along the camera's right and up axes. */
  double m_per_px = 2.0 * (double)start->distance_m * tan((double)start->fov_y_rad / 2) / h;
  float yaw = start->yaw_rad, pitch = start->pitch_rad;
  float right[3] = { cosf(yaw), sinf(yaw), 0 };
  float up[3] = { -sinf(pitch) * sinf(yaw), sinf(pitch) * cosf(yaw), cosf(pitch) };
  *cam = *start;
  for (int k = 0; k < 3; k++)
    cam->target_m[k] = start->target_m[k] - (float)(dx_px * m_per_px) * right[k] +
                       (float)(dy_px * m_per_px) * up[k];
}

void
arcwise_camera_zoom(ArcwiseCamera *cam, const ArcwiseCamera *start, double factor)
{
  float d = start->distance_m * (float)(factor > 0 ? factor : 1.0);
  *cam = *start;
  cam->distance_m = d < 0.8f ? 0.8f : d > 15.0f ? 15.0f : d;
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

/* ---- floor markings ----------------------------------------------------------------------- */

#define MARK_FLOATS 14   /* position 3, other end 3, rgba 4, side / half-width m / px / fade 4 */

typedef struct {
  GArray *v;   /* float */
  GArray *i;   /* guint32 */
} MarkBuilder;

static float
smooth01(float e0, float e1, float x)
{
  float t = (x - e0) / (e1 - e0);
  t = t < 0 ? 0 : t > 1 ? 1 : t;
  return t * t * (3.0f - 2.0f * t);
}

static void
mark_vertex(MarkBuilder *mb, const float p[3], const float other[3], const float rgb[3],
            float alpha, float side, float half_m, float min_px, float fade)
{
  float v[MARK_FLOATS] = { p[0], p[1], p[2], other[0], other[1], other[2], rgb[0], rgb[1],
                           rgb[2], alpha, side, half_m, min_px, fade };
  g_array_append_vals(mb->v, v, MARK_FLOATS);
}

/* One straight stroke from a to b on the floor; alpha may change along it. */
static void
mark_segment(MarkBuilder *mb, const float a[3], const float b[3], const float rgb[3],
             float alpha_a, float alpha_b, float half_m, float min_px, float fade)
{
  guint32 base = mb->v->len / MARK_FLOATS;
  /* |side| 1 at the start, 2 at the end: the shader takes the direction start to end for
   * both, so the quad does not twist. */
  mark_vertex(mb, a, b, rgb, alpha_a, -1.0f, half_m, min_px, fade);
  mark_vertex(mb, a, b, rgb, alpha_a, 1.0f, half_m, min_px, fade);
  mark_vertex(mb, b, a, rgb, alpha_b, -2.0f, half_m, min_px, fade);
  mark_vertex(mb, b, a, rgb, alpha_b, 2.0f, half_m, min_px, fade);
  const guint32 q[6] = { base, base + 1, base + 3, base, base + 3, base + 2 };
  g_array_append_vals(mb->i, q, 6);
}

static void
mark_triangle(MarkBuilder *mb, const float p[3][3], const float rgb[3], const float alpha[3])
{
  guint32 base = mb->v->len / MARK_FLOATS;
  for (int k = 0; k < 3; k++)
    mark_vertex(mb, p[k], p[k], rgb, alpha[k], 0.0f, 0.0f, 0.0f, 0.0f);
  const guint32 t[3] = { base, base + 1, base + 2 };
  g_array_append_vals(mb->i, t, 3);
}

/* Outline of a rounded rectangle centred at c, `steps` points per corner, counter-clockwise. */
static int
rounded_rect(float c_x, float c_y, float half_x, float half_y, float r, int steps,
             float out[][3])
{
  static const float corner[4][2] = { { 1, 1 }, { -1, 1 }, { -1, -1 }, { 1, -1 } };
  int n = 0;
  for (int q = 0; q < 4; q++) {
    float cx = c_x + corner[q][0] * (half_x - r), cy = c_y + corner[q][1] * (half_y - r);
    for (int k = 0; k < steps; k++) {
      float ang = (float)q * GLM_PI_2f + GLM_PI_2f * (float)k / (float)(steps - 1);
      out[n][0] = cx + r * cosf(ang);
      out[n][1] = cy + r * sinf(ang);
      out[n][2] = 0.0f;
      n++;
    }
  }
  return n;
}

/* Two foot marks parallel to the target line, shoulder width apart, about 0.65 m from the
 * ball toward the player (the lie of a mid iron, common practice): a dim fill and a brighter
 * rim just inside the edge. */
static void
marks_feet(MarkBuilder *mb, float side)
{
  enum { STEPS = 8 };
  float fill_rgb[3] = { foot_rgb[0] * 0.55f, foot_rgb[1] * 0.55f, foot_rgb[2] * 0.55f };
  for (int f = 0; f < 2; f++) {
    float cx = f == 0 ? 0.22f : -0.22f, cy = 0.65f * side;
    float o[4 * STEPS][3];
    int n = rounded_rect(cx, cy, 0.044f, 0.129f, 0.034f, STEPS, o);
    const float centre[3] = { cx, cy, 0.0f };
    for (int k = 0; k < n; k++) {
      const float tri[3][3] = { { centre[0], centre[1], 0 }, { o[k][0], o[k][1], 0 },
                                { o[(k + 1) % n][0], o[(k + 1) % n][1], 0 } };
      const float al[3] = { 0.6f, 0.6f, 0.6f };
      mark_triangle(mb, tri, fill_rgb, al);
    }
    for (int k = 0; k < n; k++)
      mark_segment(mb, o[k], o[(k + 1) % n], foot_rgb, 0.9f, 0.9f, 0.004f, 0.6f, 0.0f);
  }
}

static void
make_marks(ArcwiseScene *scene)
{
  MarkBuilder mb = { g_array_new(FALSE, FALSE, sizeof(float)),
                     g_array_new(FALSE, FALSE, sizeof(guint32)) };
  /* Grid: 0.5 m squares over the whole floor, 0.1 m subdivisions near the ball that fade out
   * between 1 m and 2.5 m. Strokes are cut into short pieces so the per-vertex fade with
   * distance from the eye stays smooth. */
  const float half = 9.0f;
  for (int axis = 0; axis < 2; axis++) {
    for (int l = -18; l <= 18; l++) {
      float c = 0.5f * (float)l;
      for (float u = -half; u < half - 1e-3f; u += 1.0f) {
        float a[3] = { 0 }, b[3] = { 0 };
        a[axis] = b[axis] = c;
        a[1 - axis] = u;
        b[1 - axis] = u + 1.0f;
        mark_segment(&mb, a, b, grid_rgb, 0.55f, 0.55f, 0.0f, 0.6f, 1.0f);
      }
    }
    for (int l = -25; l <= 25; l++) {
      if (l % 5 == 0)
        continue;   /* on a major line */
      float c = 0.1f * (float)l;
      for (float u = -2.5f; u < 2.5f - 1e-3f; u += 0.25f) {
        float a[3] = { 0 }, b[3] = { 0 };
        a[axis] = b[axis] = c;
        a[1 - axis] = u;
        b[1 - axis] = u + 0.25f;
        float fa = 0.22f * (1.0f - smooth01(1.0f, 2.5f, hypotf(c, u)));
        float fb = 0.22f * (1.0f - smooth01(1.0f, 2.5f, hypotf(c, u + 0.25f)));
        if (fa > 0.0f || fb > 0.0f)
          mark_segment(&mb, a, b, grid_rgb, fa, fb, 0.0f, 0.4f, 1.0f);
      }
    }
  }
  /* Target line: from 1 m behind the ball to 6 m ahead, brighter ahead of the ball. */
  mark_segment(&mb, (float[3]){ -1, 0, 0 }, (float[3]){ 0, 0, 0 }, target_rgb, 0.45f, 0.45f,
               0.006f, 0.75f, 0.0f);
  mark_segment(&mb, (float[3]){ 0, 0, 0 }, (float[3]){ 5, 0, 0 }, target_rgb, 0.95f, 0.95f,
               0.006f, 0.75f, 0.0f);
  for (int k = 0; k < 4; k++) {
    float x0 = 5.0f + 0.25f * (float)k, x1 = x0 + 0.25f;
    mark_segment(&mb, (float[3]){ x0, 0, 0 }, (float[3]){ x1, 0, 0 }, target_rgb,
                 0.95f * (1.0f - smooth01(5, 6, x0)), 0.95f * (1.0f - smooth01(5, 6, x1)),
                 0.006f, 0.75f, 0.0f);
  }
  /* Aim chevron 1.5 m ahead of the ball, pointing at the target. */
  for (int sgn = -1; sgn <= 1; sgn += 2)
    mark_segment(&mb, (float[3]){ 1.5f, 0, 0 }, (float[3]){ 1.38f, 0.096f * (float)sgn, 0 },
                 target_rgb, 1.0f, 1.0f, 0.008f, 0.75f, 0.0f);
  /* A ring around the ball so a real-size ball is easy to find on a big screen. */
  enum { RING = 72 };
  static const float ring_rgb[3] = { 0.92f, 0.92f, 0.92f };
  for (int k = 0; k < RING; k++) {
    float a0 = 2.0f * GLM_PIf * (float)k / RING, a1 = 2.0f * GLM_PIf * (float)(k + 1) / RING;
    mark_segment(&mb, (float[3]){ 0.075f * cosf(a0), 0.075f * sinf(a0), 0 },
                 (float[3]){ 0.075f * cosf(a1), 0.075f * sinf(a1), 0 }, ring_rgb, 0.8f, 0.8f,
                 0.004f, 0.75f, 0.0f);
  }
  /* Soft contact shadow under the ball: a Gaussian of 3 cm, darkening the floor by 55 %. */
  enum { RINGS = 10, SLICES = 32 };
  static const float black[3] = { 0, 0, 0 };
  for (int r = 0; r < RINGS; r++)
    for (int k = 0; k < SLICES; k++) {
      float r0 = 0.1f * (float)r / RINGS, r1 = 0.1f * (float)(r + 1) / RINGS;
      float a0 = 2.0f * GLM_PIf * (float)k / SLICES, a1 = 2.0f * GLM_PIf * (float)(k + 1) / SLICES;
      float s0 = 0.55f * expf(-r0 * r0 / (2.0f * 0.03f * 0.03f));
      float s1 = 0.55f * expf(-r1 * r1 / (2.0f * 0.03f * 0.03f));
      const float p00[3] = { r0 * cosf(a0), r0 * sinf(a0), 0 }, p01[3] = { r0 * cosf(a1), r0 * sinf(a1), 0 };
      const float p10[3] = { r1 * cosf(a0), r1 * sinf(a0), 0 }, p11[3] = { r1 * cosf(a1), r1 * sinf(a1), 0 };
      const float t1[3][3] = { { p00[0], p00[1], 0 }, { p10[0], p10[1], 0 }, { p11[0], p11[1], 0 } };
      const float t2[3][3] = { { p00[0], p00[1], 0 }, { p11[0], p11[1], 0 }, { p01[0], p01[1], 0 } };
      mark_triangle(&mb, t1, black, (const float[3]){ s0, s1, s1 });
      mark_triangle(&mb, t2, black, (const float[3]){ s0, s1, s0 });
    }
  scene->marks_common = (GLsizei)mb.i->len;
  marks_feet(&mb, 1.0f);
  scene->marks_feet_right = (GLsizei)mb.i->len - scene->marks_common;
  marks_feet(&mb, -1.0f);
  scene->marks_feet_left = (GLsizei)mb.i->len - scene->marks_common - scene->marks_feet_right;
  static const int sizes[] = { 3, 3, 4, 4 };
  mesh_upload(&scene->marks, (const float *)(void *)mb.v->data, mb.v->len / MARK_FLOATS,
              MARK_FLOATS, sizes, 4, (const guint32 *)(void *)mb.i->data, mb.i->len);
  g_array_unref(mb.v);
  g_array_unref(mb.i);
}

/* ---- tubes -------------------------------------------------------------------------------- */

/* Which samples become rings of the tube. llvmpipe pays for every triangle it sets up, and at
 * 100 samples/s the slow parts of a swing (address, the top, the finish) put many samples
 * within a few millimetres, where extra rings add triangles and no shape. A sample is kept
 * when the path has moved MIN_STEP_M since the last kept one or turned by more than
 * MAX_TURN_RAD, and always where its occlusion or phase changes (so dashes and colours start
 * where they should), and at both ends. Faster parts keep every sample. */
#define MIN_STEP_M 0.012f            /* below the tube's own diameter: invisible detail */
#define MAX_TURN_RAD 0.14f           /* 8 degrees */

static size_t
decimate(const ArcwiseScenePath *p, const float (*pos)[3], guint32 *keep)
{
  size_t n = p->n, m = 0;
  keep[m++] = 0;
  vec3 last_dir = { 0, 0, 0 };
  for (size_t i = 1; i + 1 < n; i++) {
    size_t j = keep[m - 1];
    vec3 d;
    glm_vec3_sub((float *)pos[i], (float *)pos[j], d);
    float len = glm_vec3_norm(d);
    bool flags = (p->occluded && (p->occluded[i] != 0) != (p->occluded[i + 1] != 0)) ||
                 (p->occluded && (p->occluded[i] != 0) != (p->occluded[i - 1] != 0)) ||
                 (p->phase && (p->phase[i] != p->phase[i + 1] || p->phase[i] != p->phase[i - 1]));
    bool turned = false;
    if (len > 1e-6f && glm_vec3_norm(last_dir) > 0.5f) {
      float c = glm_vec3_dot(d, last_dir) / len;
      turned = c < cosf(MAX_TURN_RAD);
    }
    if (flags || len >= MIN_STEP_M || turned) {
      keep[m++] = (guint32)i;
      if (len > 1e-6f)
        glm_vec3_scale(d, 1.0f / len, last_dir);
    }
  }
  keep[m++] = (guint32)(n - 1);
  return m;
}

/* Builds a tube of `sides` faces through the kept samples of pos with per-sample radius
 * (radius_m[i], or `radius` when NULL). Frames are parallel-transported so the tube never
 * twists where the path turns sharply. */
static void
build_tube(Mesh *m, const ArcwiseScenePath *p, const float (*pos)[3], const float *radius_m,
           float radius, float min_radius, int sides)
{
  guint32 *keep = g_new(guint32, p->n);
  size_t n = decimate(p, pos, keep);
  size_t n_verts = n * (size_t)(sides + 1);
  float *verts = g_new(float, n_verts * FLOATS_PER_VERTEX);
  guint32 *idx = g_new(guint32, (n - 1) * (size_t)sides * 6);
  vec3 prev_t = { 1, 0, 0 }, normal = { 0, 0, 1 };
  float arc = 0.0f;
  size_t v = 0;
  for (size_t j = 0; j < n; j++) {
    size_t i = keep[j];
    vec3 a, b, t;
    glm_vec3_copy((float *)pos[keep[j > 0 ? j - 1 : j]], a);
    glm_vec3_copy((float *)pos[keep[j + 1 < n ? j + 1 : j]], b);
    glm_vec3_sub(b, a, t);
    if (glm_vec3_norm(t) < 1e-7f)
      glm_vec3_copy(prev_t, t);
    glm_vec3_normalize(t);
    if (j == 0) {
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
      glm_vec3_sub((float *)pos[i], (float *)pos[keep[j - 1]], seg);
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
    for (int s = 0; s <= sides; s++) {
      float ang = 2.0f * GLM_PIf * (float)s / (float)sides;
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
    for (int s = 0; s < sides; s++) {
      guint32 a = (guint32)(i * (size_t)(sides + 1) + (size_t)s), b = a + (guint32)sides + 1;
      /* Counter-clockwise seen from outside. */
      idx[k++] = a; idx[k++] = a + 1; idx[k++] = b;
      idx[k++] = a + 1; idx[k++] = b + 1; idx[k++] = b;
    }
  static const int sizes[] = { 3, 3, 4, 2 };
  mesh_upload(m, verts, v, FLOATS_PER_VERTEX, sizes, 4, idx, k);
  g_free(verts);
  g_free(idx);
  g_free(keep);
}

/* The path's shadow: a flat strip on the floor under the tube, as wide as the tube. Two
 * triangles per segment instead of the tube's dozen. */
static void
build_shadow(Mesh *m, const ArcwiseScenePath *p, float half_width_m)
{
  guint32 *keep = g_new(guint32, p->n);
  size_t n = decimate(p, p->pos_m, keep);
  float *verts = g_new0(float, n * 2 * FLOATS_PER_VERTEX);
  guint32 *idx = g_new(guint32, (n - 1) * 6);
  float side_prev[2] = { 0, 1 };
  for (size_t j = 0; j < n; j++) {
    const float *a = p->pos_m[keep[j > 0 ? j - 1 : j]], *b = p->pos_m[keep[j + 1 < n ? j + 1 : j]];
    float dx = b[0] - a[0], dy = b[1] - a[1], len = hypotf(dx, dy);
    /* Where the hands move straight up or down the strip keeps its last direction. */
    float sx = len > 1e-5f ? -dy / len : side_prev[0], sy = len > 1e-5f ? dx / len : side_prev[1];
    side_prev[0] = sx;
    side_prev[1] = sy;
    const float *c = p->pos_m[keep[j]];
    for (int e = 0; e < 2; e++) {
      float *o = verts + (j * 2 + (size_t)e) * FLOATS_PER_VERTEX;
      float sg = e == 0 ? -1.0f : 1.0f;
      o[0] = c[0] + sg * half_width_m * sx;
      o[1] = c[1] + sg * half_width_m * sy;
      o[2] = 0.002f;
      o[5] = 1.0f;
      o[10] = p->t_s ? p->t_s[keep[j]] : (float)keep[j];
    }
  }
  for (size_t j = 0; j + 1 < n; j++) {
    guint32 a = (guint32)(2 * j);
    const guint32 q[6] = { a, a + 2, a + 1, a + 1, a + 2, a + 3 };
    memcpy(idx + 6 * j, q, sizeof q);
  }
  static const int sizes[] = { 3, 3, 4, 2 };
  mesh_upload(m, verts, 2 * n, FLOATS_PER_VERTEX, sizes, 4, idx, 6 * (n - 1));
  g_free(verts);
  g_free(idx);
  g_free(keep);
}

static void
slot_clear(Slot *s)
{
  mesh_clear(&s->tube);
  mesh_clear(&s->band);
  mesh_clear(&s->club);
  mesh_clear(&s->shadow);
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
  build_tube(&s->tube, path, path->pos_m, NULL, r, r, slot == 0 ? TUBE_SIDES : COMPARE_SIDES);
  build_shadow(&s->shadow, path, r);
  if (path->band_m != NULL)
    build_tube(&s->band, path, path->pos_m, path->band_m, 0.0f, r * 1.6f, BAND_SIDES);
  if (path->club_m != NULL) {
    build_tube(&s->club, path, path->club_m, NULL, CLUB_RADIUS_M, CLUB_RADIUS_M, CLUB_SIDES);
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
  static const char *const fl_u[] = { "u_floor_rgb", NULL };
  static const char *const mk_u[] = { "u_viewport", "u_px_per_m", NULL };
  static const char *const so_u[] = { "u_rgb", "u_centre_radius", "u_glow", NULL };
  static const char *const tu_u[] = { "u_style", "u_colour_mode", "u_speed_max", "u_phase_rgb",
                                      "u_style_rgb", "u_cam_rgb", "u_imu_rgb", "u_time_cut",
                                      "u_alpha", NULL };
  if (!program_init(&scene->backdrop, "backdrop.vert", "backdrop.frag", bd_u, error) ||
      !program_init(&scene->floor, "floor.vert", "floor.frag", fl_u, error) ||
      !program_init(&scene->mark, "mark.vert", "mark.frag", mk_u, error) ||
      !program_init(&scene->solid, "solid.vert", "solid.frag", so_u, error) ||
      !program_init(&scene->tube, "tube.vert", "tube.frag", tu_u, error)) {
    arcwise_scene_free(scene);
    return NULL;
  }
  glGenVertexArrays(1, &scene->empty_vao);
  make_floor(&scene->floor_mesh);
  make_sphere(&scene->sphere);
  make_marks(scene);
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
  mesh_clear(&scene->marks);
  if (scene->empty_vao)
    glDeleteVertexArrays(1, &scene->empty_vao);
  Program *progs[] = { &scene->backdrop, &scene->floor, &scene->mark, &scene->solid,
                       &scene->tube };
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

  glEnable(GL_DEPTH_TEST);
  glDepthFunc(GL_LESS);

  /* Floor first: a flat fill that writes depth, so the backdrop after it shades only the
   * pixels above the horizon. */
  Program *fl = &scene->floor;
  glUseProgram(fl->prog);
  glUniformMatrix4fv(fl->view_proj, 1, GL_FALSE, (const float *)view_proj);
  glUniform3f(fl->u[FL_FLOOR], opt->clear_rgb[0] * 0.78f, opt->clear_rgb[1] * 0.80f,
              opt->clear_rgb[2] * 0.82f);
  draw_mesh(&scene->floor_mesh);

  /* Backdrop at the far plane, only where nothing is nearer. */
  glDepthFunc(GL_LEQUAL);
  glDepthMask(GL_FALSE);
  glUseProgram(scene->backdrop.prog);
  glUniform3fv(scene->backdrop.u[BD_HORIZON], 1, opt->clear_rgb);
  glBindVertexArray(scene->empty_vao);
  glDrawArrays(GL_TRIANGLES, 0, 3);

  /* Markings on the floor: blended over it with no depth test (nothing else is drawn yet, and
   * everything later is above the floor and tested against its depth). */
  glDisable(GL_DEPTH_TEST);
  glEnable(GL_BLEND);
  glBlendFuncSeparate(GL_SRC_ALPHA, GL_ONE_MINUS_SRC_ALPHA, GL_ZERO, GL_ONE);
  Program *mk = &scene->mark;
  glUseProgram(mk->prog);
  glUniformMatrix4fv(mk->view_proj, 1, GL_FALSE, (const float *)view_proj);
  glUniform3fv(mk->eye, 1, eye);
  glUniform2f(mk->u[MK_VIEWPORT], (float)width, (float)height);
  glUniform1f(mk->u[MK_PX_PER_M], proj[1][1] * 0.5f * (float)height);
  glBindVertexArray(scene->marks.vao);
  glDrawElements(GL_TRIANGLES, scene->marks_common, GL_UNSIGNED_INT, NULL);
  if (opt->handed < 0)
    glDrawElements(GL_TRIANGLES, scene->marks_feet_left, GL_UNSIGNED_INT,
                   (const void *)((size_t)(scene->marks_common + scene->marks_feet_right) *
                                  sizeof(guint32)));
  else
    glDrawElements(GL_TRIANGLES, scene->marks_feet_right, GL_UNSIGNED_INT,
                   (const void *)((size_t)scene->marks_common * sizeof(guint32)));
  glDisable(GL_BLEND);
  glDepthMask(GL_TRUE);
  glDepthFunc(GL_LESS);
  glEnable(GL_DEPTH_TEST);

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
  glDisable(GL_CULL_FACE);
  glUniform1i(tu->u[TU_STYLE], 4);
  for (int i = 0; i < 2; i++) {
    const Slot *s = &scene->slot[i];
    if (!s->present || (i == 1 && !opt->show_compare))
      continue;
    glUniform1f(tu->u[TU_ALPHA], i == 0 ? 0.30f : 0.16f);
    draw_mesh(&s->shadow);
  }
  glEnable(GL_CULL_FACE);
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
