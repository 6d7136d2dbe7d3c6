/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The scene renderer offscreen: EGL on Mesa's surfaceless platform, no X and no GTK. Renders
 * the invented demo swing and checks the pixels: the tube is drawn where the projected path
 * lies, stretches where the camera lost the hands have their own (grey, dashed) look, the
 * 2-sigma band and a comparison swing add their colours, and nothing is drawn where the scene
 * is empty. Expected colours are the scene's own palette (arcwise-scene.h); geometry is checked
 * by projecting the path with cglm, an independent route from the GL pipeline. */
#include <cglm/cglm.h>
#include <glib/gstdio.h>
#include <stdlib.h>
#include <string.h>

#include "arcwise-offscreen.h"
#include "arcwise-scene.h"
#include "arcwise-swing-model.h"
#include "testutil.h"

enum { W = 960, H = 540 };

static void
rgb_to_hs(const guint8 *p, float *sat, float *val)
{
  float r = p[0] / 255.0f, g = p[1] / 255.0f, b = p[2] / 255.0f;
  float mx = fmaxf(r, fmaxf(g, b)), mn = fminf(r, fminf(g, b));
  *val = mx;
  *sat = mx > 0 ? (mx - mn) / mx : 0;
}

static float
rgb_hue_deg(float r, float g, float b)
{
  float mx = fmaxf(r, fmaxf(g, b)), mn = fminf(r, fminf(g, b)), d = mx - mn;
  if (d <= 0)
    return 0;
  float h;
  if (mx == r) h = fmodf((g - b) / d, 6.0f);
  else if (mx == g) h = (b - r) / d + 2.0f;
  else h = (r - g) / d + 4.0f;
  h *= 60.0f;
  return h < 0 ? h + 360.0f : h;
}

static float
hue_dist(float a, float b)
{
  float d = fabsf(a - b);
  return d > 180.0f ? 360.0f - d : d;
}

/* Pixels of the comparison style: pale (low saturation), bright, blue the strongest channel. */
static int
count_ice(const guint8 *img)
{
  int c = 0;
  for (int i = 0; i < W * H; i++) {
    const guint8 *p = img + 4 * i;
    float s, v;
    rgb_to_hs(p, &s, &v);
    if (v > 0.55f && s > 0.06f && s < 0.35f && p[2] >= p[0] && p[2] >= p[1])
      c++;
  }
  return c;
}

/* Pixels that look like the occluded style: light (value > 0.6) and nearly grey. */
static int
count_grey_light(const guint8 *img)
{
  int c = 0;
  for (int i = 0; i < W * H; i++) {
    float s, v;
    rgb_to_hs(img + 4 * i, &s, &v);
    if (v > 0.6f && s < 0.12f)
      c++;
  }
  return c;
}

static int
count_saturated(const guint8 *img)
{
  int c = 0;
  for (int i = 0; i < W * H; i++) {
    float s, v;
    rgb_to_hs(img + 4 * i, &s, &v);
    if (s > 0.45f && v > 0.35f)
      c++;
  }
  return c;
}

static void
render(ArcwiseOffscreen *off, ArcwiseScene *scene, const ArcwiseCamera *cam,
       const ArcwiseSceneOptions *opt, guint8 *img, const char *name)
{
  arcwise_offscreen_begin(off);
  arcwise_scene_draw(scene, cam, opt, W, H);
  arcwise_offscreen_read_rgba(off, img, W * 4);
  const char *dir = getenv("ARCWISE_TEST_OUTDIR");
  if (dir != NULL) {
    g_autofree char *path = g_strdup_printf("%s/offscreen-%s.png", dir, name);
    g_autoptr(GError) err = NULL;
    if (!arcwise_write_png(path, img, W, H, W * 4, &err))
      fprintf(stderr, "%s\n", err->message);
  }
}

/* Projects a scene point to pixel coordinates (top-left origin) the way a pinhole camera
 * does: eye/target/up from the same camera description, cglm's lookAt and perspective. */
static bool
project(const ArcwiseCamera *cam, const float p[3], int *px, int *py)
{
  vec3 eye = { cam->target_m[0] + cam->distance_m * sinf(cam->yaw_rad) * cosf(cam->pitch_rad),
               cam->target_m[1] - cam->distance_m * cosf(cam->yaw_rad) * cosf(cam->pitch_rad),
               cam->target_m[2] + cam->distance_m * sinf(cam->pitch_rad) };
  mat4 view, proj, vp;
  glm_lookat(eye, (float *)cam->target_m, (vec3){ 0, 0, 1 }, view);
  glm_perspective(cam->fov_y_rad, (float)W / H, 0.05f, 60.0f, proj);
  glm_mat4_mul(proj, view, vp);
  vec4 c = { p[0], p[1], p[2], 1 }, o;
  glm_mat4_mulv(vp, c, o);
  if (o[3] <= 0)
    return false;
  *px = (int)((o[0] / o[3] * 0.5f + 0.5f) * W);
  *py = (int)((1.0f - (o[1] / o[3] * 0.5f + 0.5f)) * H);
  return *px >= 0 && *px < W && *py >= 0 && *py < H;
}

/* Mouse and touchpad camera moves (ui/arcwise-stage.c uses exactly these). Pan: the point
 * that was at the centre of the view (the orbit target) lands where the pointer went, by the
 * pinhole projection above; orbit keeps the target and the distance; zoom scales the distance
 * within its limits. */
static void
check_camera_moves(void)
{
  for (int v = 0; v < 2; v++) {
    ArcwiseCamera start, cam;
    arcwise_camera_preset(&start, v == 0 ? ARCWISE_VIEW_FACE_ON : ARCWISE_VIEW_FREE, 1, NULL);
    const double moves[3][2] = { { 40, -25 }, { -120, 60 }, { 0, 90 } };
    for (int k = 0; k < 3; k++) {
      arcwise_camera_pan(&cam, &start, moves[k][0], moves[k][1], H);
      int px, py;
      AW_CHECK(project(&cam, start.target_m, &px, &py));
      AW_CHECK(abs(px - (W / 2 + (int)moves[k][0])) <= 1 && abs(py - (H / 2 + (int)moves[k][1])) <= 1);
      AW_CHECK_NEAR(cam.distance_m, start.distance_m, 0.0);
    }
    arcwise_camera_orbit(&cam, &start, 100, 0, H);
    AW_CHECK_NEAR(cam.yaw_rad, (double)start.yaw_rad - 3.0 * 100 / H, 1e-6);
    AW_CHECK_NEAR(cam.distance_m, start.distance_m, 0.0);
    for (int i = 0; i < 3; i++)
      AW_CHECK_NEAR(cam.target_m[i], start.target_m[i], 0.0);
    int px, py;   /* the target stays at the centre of the view whatever the orbit */
    AW_CHECK(project(&cam, start.target_m, &px, &py) && abs(px - W / 2) <= 1 && abs(py - H / 2) <= 1);
    arcwise_camera_orbit(&cam, &start, 0, 10.0 * H, H);
    AW_CHECK_NEAR(cam.pitch_rad, 1.55, 1e-6);   /* never over the top */
    arcwise_camera_zoom(&cam, &start, 0.5);
    AW_CHECK_NEAR(cam.distance_m, 0.5 * (double)start.distance_m, 1e-6);
    arcwise_camera_zoom(&cam, &start, 0.01);
    AW_CHECK_NEAR(cam.distance_m, 0.8, 1e-6);
    arcwise_camera_zoom(&cam, &start, 100.0);
    AW_CHECK_NEAR(cam.distance_m, 15.0, 1e-6);
  }
}

int
main(void)
{
  check_camera_moves();
  g_autoptr(GError) err = NULL;
  ArcwiseOffscreen *off = arcwise_offscreen_new(W, H, 4, &err);
  if (off == NULL) {
    fprintf(stderr, "offscreen context: %s\n", err->message);
    return 1;   /* Mesa's EGL is a stated dependency: its absence is a failure, not a skip. */
  }
  fprintf(stderr, "renderer: %s\n", arcwise_offscreen_get_renderer(off));
  ArcwiseScene *scene = arcwise_scene_new(&err);
  if (scene == NULL) {
    fprintf(stderr, "scene: %s\n", err->message);
    arcwise_offscreen_free(off);
    return 1;
  }
  g_autoptr(ArcwiseSwingModel) a = arcwise_swing_model_new_demo(0, 1);
  g_autoptr(ArcwiseSwingModel) b = arcwise_swing_model_new_demo(3, 1);
  ArcwiseScenePath pa, pb;
  arcwise_swing_model_as_path(a, &pa);
  arcwise_swing_model_as_path(b, &pb);

  ArcwiseSceneOptions opt;
  arcwise_scene_options_default(&opt);
  opt.show_compare = false;
  ArcwiseCamera cam;
  arcwise_camera_preset(&cam, ARCWISE_VIEW_FACE_ON, 1, a->centre_m);
  guint8 *empty = g_malloc(W * H * 4), *img = g_malloc(W * H * 4), *tmp = g_malloc(W * H * 4);

  /* 1. Empty scene: no saturated tube pixels (the floor's amber target line is thin). */
  render(off, scene, &cam, &opt, empty, "empty");
  int sat_empty = count_saturated(empty);
  int grey_empty = count_grey_light(empty);

  /* 2. The swing: saturated pixels appear at projected path positions away from gaps. */
  arcwise_scene_set_path(scene, 0, &pa);
  render(off, scene, &cam, &opt, img, "swing");
  int sat_swing = count_saturated(img);
  fprintf(stderr, "saturated pixels: empty %d, swing %d\n", sat_empty, sat_swing);
  AW_CHECK(sat_swing > sat_empty + 2000);
  int hits = 0, tried = 0;
  for (size_t i = 0; i < a->n; i += 5) {
    int x, y;
    if (a->occluded[i] || !project(&cam, a->pos_m[i], &x, &y))
      continue;
    tried++;
    /* The tube is a few pixels wide: look in a 3x3 neighbourhood for a changed pixel. */
    bool changed = false;
    for (int dy = -1; dy <= 1 && !changed; dy++)
      for (int dx = -1; dx <= 1 && !changed; dx++) {
        int xx = CLAMP(x + dx, 0, W - 1), yy = CLAMP(y + dy, 0, H - 1);
        const guint8 *p = img + 4 * (yy * W + xx), *q = empty + 4 * (yy * W + xx);
        changed = abs(p[0] - q[0]) + abs(p[1] - q[1]) + abs(p[2] - q[2]) > 60;
      }
    hits += changed;
  }
  fprintf(stderr, "projected tracked samples drawn: %d of %d\n", hits, tried);
  AW_CHECK(tried > 30);
  AW_CHECK(hits >= tried * 9 / 10);

  /* 3. Occlusion look: the grey dashes exist, and vanish when the same path is marked as
   * fully tracked. */
  int grey_swing = count_grey_light(img);
  guint8 *saved_occl = g_memdup2(a->occluded, a->n);
  memset(a->occluded, 0, a->n);
  arcwise_scene_set_path(scene, 0, &pa);
  render(off, scene, &cam, &opt, tmp, "all-tracked");
  int grey_tracked = count_grey_light(tmp);
  memcpy(a->occluded, saved_occl, a->n);
  g_free(saved_occl);
  arcwise_scene_set_path(scene, 0, &pa);
  fprintf(stderr, "grey-light pixels: empty %d, with gaps %d, all tracked %d\n", grey_empty,
          grey_swing, grey_tracked);
  AW_CHECK(grey_swing > grey_tracked + 200);

  /* 4. Phase colouring: at projected tracked samples the pixel's hue is its phase's hue
   * (lighting changes brightness, not hue). */
  opt.colour = ARCWISE_SCENE_COLOUR_PHASE;
  render(off, scene, &cam, &opt, tmp, "phase");
  opt.colour = ARCWISE_SCENE_COLOUR_SPEED;
  int hue_ok = 0, hue_tried = 0;
  for (size_t i = 0; i < a->n; i += 3) {
    int x, y;
    ArcwiseScenePhase ph = a->phase[i];
    if (a->occluded[i] || (ph != ARCWISE_SCENE_PHASE_BACKSWING &&
                           ph != ARCWISE_SCENE_PHASE_DOWNSWING) ||
        !project(&cam, a->pos_m[i], &x, &y))
      continue;
    float want[3];
    arcwise_scene_phase_rgb(ph, want);
    const guint8 *p = tmp + 4 * (y * W + x);
    float s, v;
    rgb_to_hs(p, &s, &v);
    hue_tried++;
    hue_ok += s > 0.3f && hue_dist(rgb_hue_deg(p[0] / 255.0f, p[1] / 255.0f, p[2] / 255.0f),
                                   rgb_hue_deg(want[0], want[1], want[2])) < 20.0f;
  }
  fprintf(stderr, "phase hue matches at projected samples: %d of %d\n", hue_ok, hue_tried);
  AW_CHECK(hue_tried > 20);
  AW_CHECK(hue_ok >= hue_tried * 8 / 10);

  /* 5. Band: the translucent 2-sigma band adds pixels (tinted by the sensor colours). */
  opt.show_band = true;
  render(off, scene, &cam, &opt, tmp, "band");
  int changed_band = 0;
  for (int i = 0; i < W * H; i++)
    changed_band += abs(tmp[4 * i] - img[4 * i]) + abs(tmp[4 * i + 2] - img[4 * i + 2]) > 20;
  fprintf(stderr, "pixels changed by the band: %d\n", changed_band);
  AW_CHECK(changed_band > 500);
  opt.show_band = false;

  /* 6. Compare: the second swing in its own colour. */
  int cmp_before = count_ice(img);
  arcwise_scene_set_path(scene, 1, &pb);
  opt.show_compare = true;
  render(off, scene, &cam, &opt, tmp, "compare");
  int cmp_after = count_ice(tmp);
  fprintf(stderr, "compare-coloured pixels: before %d, after %d\n", cmp_before, cmp_after);
  AW_CHECK(cmp_after > cmp_before + 300);

  /* 7. Views: down-the-line and from above differ from face-on and still show the path. */
  const ArcwiseView views[] = { ARCWISE_VIEW_DOWN_THE_LINE, ARCWISE_VIEW_ABOVE, ARCWISE_VIEW_FREE };
  const char *names[] = { "dtl", "above", "free" };
  for (size_t v = 0; v < G_N_ELEMENTS(views); v++) {
    ArcwiseCamera c2;
    arcwise_camera_preset(&c2, views[v], 1, a->centre_m);
    render(off, scene, &c2, &opt, tmp, names[v]);
    int s = count_saturated(tmp);
    fprintf(stderr, "view %s: saturated %d\n", names[v], s);
    AW_CHECK(s > 500);
  }

  /* 8. Clearing both slots returns to the empty picture (exactly: same GL, same input). */
  arcwise_scene_set_path(scene, 0, NULL);
  arcwise_scene_set_path(scene, 1, NULL);
  render(off, scene, &cam, &opt, tmp, "cleared");
  AW_CHECK(memcmp(tmp, empty, W * H * 4) == 0);

  /* 9. PNG writer round trip through Debian's python3 zlib is checked by test-png.py; here
   * only that it writes. */
  g_autofree char *png = g_build_filename(g_get_tmp_dir(), "arcwise-offscreen-test.png", NULL);
  AW_CHECK(arcwise_write_png(png, img, W, H, W * 4, NULL));
  g_unlink(png);

  g_free(empty);
  g_free(img);
  g_free(tmp);
  arcwise_scene_free(scene);
  arcwise_offscreen_free(off);
  return AW_TEST_END();
}
