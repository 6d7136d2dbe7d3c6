/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise c3d FILE`: what a C3D motion-capture file holds, and one marker's trajectory in
 * metres as CSV (the form a reference swing or an optical check is imported in). */
#include "cli.h"
#include "export-file.h"
#include "json-writer.h"
#include "store.h"

#include "arcwise/c3d.h"
#include "arcwise/capture.h"
#include "arcwise/fusion.h"

#include <math.h>
#include <stdbool.h>
#include <stdio.h>
#include <string.h>

static void
usage(FILE *out)
{
  fprintf(out,
          "Usage: arcwise c3d FILE [--marker LABEL] [--units-if-missing mm|m]\n"
          "                  [--keep-flagged] [--csv OUT] [--force]\n"
          "       arcwise c3d FILE --marker LABEL CHECK [--translation-only] [--json]\n"
          "\n"
          "Describes a C3D file (c3d.org): processor format, points, frames, rate, units, labels\n"
          "and any disagreement between its header and parameters.\n"
          "\n"
          "  --marker LABEL          the marker to extract (default: the first point)\n"
          "  --units-if-missing U    unit of the coordinates when the file has no POINT:UNITS\n"
          "  --keep-flagged          keep coordinates of points flagged invalid (residual -1)\n"
          "  --csv OUT               write the marker as CSV: t_s,x_m,y_m,z_m (empty = invalid)\n"
          "  --force                 replace OUT if it exists\n"
          "\n"
          "Checking a capture against optical motion capture (CHECK is one of):\n"
          "  --against IMU.csv DEPTH.csv   the fused path of a capture\n"
          "  --against-swing ID            the stored fused path of a library swing\n"
          "                                ($ARCWISE_LIBRARY or --library FILE)\n"
          "  --against-depth DEPTH.csv     the depth camera's keypoint alone (frames with\n"
          "                                confidence >= 0.5)\n"
          "The path is aligned with the marker in time (cross-correlation of the speed\n"
          "profiles) and space (least-squares rotation and translation, Kabsch 1976), and the\n"
          "error that remains is reported: RMSE, per lab axis, bias, 95th percentile, maximum.\n"
          "  --translation-only      fit a shift alone (the frames are known to be parallel)\n"
          "  --json                  the report as JSON on standard output\n");
}

static const char *
proc_name(AwC3dProcessor p)
{
  return p == AW_C3D_DEC ? "DEC (85)" : p == AW_C3D_MIPS ? "MIPS/SGI (86)" : "Intel (84)";
}

/* The path to check, as plain arrays (times, positions in metres); owned. */
typedef struct {
  size_t n;
  double *t_s;
  double (*pos_m)[3];
  char what[256];
} CheckPath;

static void
check_path_clear(CheckPath *c)
{
  free(c->t_s);
  free(c->pos_m);
  memset(c, 0, sizeof *c);
}

static bool
check_path_alloc(CheckPath *c, size_t n)
{
  c->n = n;
  c->t_s = malloc((n ? n : 1) * sizeof *c->t_s);
  c->pos_m = malloc((n ? n : 1) * sizeof *c->pos_m);
  return c->t_s != NULL && c->pos_m != NULL;
}

static bool
check_path_from_fused(CheckPath *c, const AwFusedPath *p)
{
  if (!check_path_alloc(c, p->n))
    return false;
  memcpy(c->t_s, p->t_s, p->n * sizeof *c->t_s);
  memcpy(c->pos_m, p->pos_cam_m, p->n * sizeof *c->pos_m);
  return true;
}

/* Minimum detection confidence of a depth frame used in a depth-only check: frames below it
 * are treated as gaps (the same kind of cut-off as the depth-only estimator's confident
 * frames, baseline.h). */
#define DEPTH_CONF_MIN 0.5

static int
load_check_path(const char *kind, const char *a1, const char *a2, const char *library,
                CheckPath *c)
{
  AwError e;
  aw_error_clear(&e);
  char msg[1200];
  if (strcmp(kind, "depth") == 0) {
    AwDepthStream *d = NULL;
    if (aw_depth_read_file(a1, &d, &e) != AW_OK)
      return arcwise_cli_fail("c3d", "%s", aw_error_format(&e, msg, sizeof msg));
    bool ok = check_path_alloc(c, d->n);
    for (size_t i = 0; ok && i < d->n; i++) {
      c->t_s[i] = d->t_s[i];
      bool use = d->conf[i] >= DEPTH_CONF_MIN;
      for (int k = 0; k < 3; k++)
        c->pos_m[i][k] = use ? (double)d->pos_cam_m[i][k] : (double)NAN;
    }
    snprintf(c->what, sizeof c->what, "depth keypoint of %s", a1);
    aw_depth_stream_free(d);
    return ok ? 0 : arcwise_cli_fail("c3d", "out of memory");
  }
  if (strcmp(kind, "capture") == 0) {
    AwImuStream *imu = NULL;
    AwDepthStream *d = NULL;
    AwFusedPath *p = NULL;
    AwFusionSettings fs;
    aw_fusion_settings_default(&fs);
    int rc = 0;
    if (aw_imu_read_file(a1, &imu, &e) != AW_OK || aw_depth_read_file(a2, &d, &e) != AW_OK ||
        aw_fuse(imu, d, &fs, &p, &e) != AW_OK)
      rc = arcwise_cli_fail("c3d", "%s", aw_error_format(&e, msg, sizeof msg));
    else if (!check_path_from_fused(c, p))
      rc = arcwise_cli_fail("c3d", "out of memory");
    snprintf(c->what, sizeof c->what, "fused path of %s + %s", a1, a2);
    aw_fused_path_free(p);
    aw_imu_stream_free(imu);
    aw_depth_stream_free(d);
    return rc;
  }
  /* A library swing. */
  char *end = NULL;
  long long id = strtoll(a1, &end, 10);
  if (end == a1 || *end || id <= 0)
    return arcwise_cli_usage_error("c3d", "--against-swing takes a swing number, not '%s'", a1);
  char *path = library ? g_strdup(library) : arcwise_store_chosen_path();
  GError *ge = NULL;
  ArcwiseStore *st = arcwise_store_open(path, ARCWISE_STORE_OPEN_READONLY, &ge);
  g_free(path);
  if (st == NULL) {
    int rc = arcwise_cli_fail("c3d", "%s", ge->message);
    g_error_free(ge);
    return rc;
  }
  ArcwiseSwingDetail *dt = arcwise_store_load_swing(st, id, &ge);
  int rc = 0;
  if (dt == NULL)
    rc = arcwise_cli_fail("c3d", "%s", ge->message);
  else if (dt->path == NULL)
    rc = arcwise_cli_fail("c3d", "swing %lld has no fused path yet", id);
  else if (!check_path_from_fused(c, dt->path))
    rc = arcwise_cli_fail("c3d", "out of memory");
  snprintf(c->what, sizeof c->what, "fused path of library swing %lld", id);
  g_clear_error(&ge);
  arcwise_swing_detail_free(dt);
  arcwise_store_close(st);
  return rc;
}

static void
print_check(const AwRefCheck *r, const AwMarkerTrajectory *m, const CheckPath *c, bool json)
{
  static const char axis[3] = { 'x', 'y', 'z' };
  if (json) {
    ArcwiseJson j;
    arcwise_json_init(&j, stdout, true);
    arcwise_json_begin_object(&j, NULL);
    arcwise_json_string(&j, "path", c->what);
    arcwise_json_string(&j, "marker", m->label);
    arcwise_json_number(&j, "lag_s", r->lag_s);
    arcwise_json_number(&j, "peak_corr", r->peak_corr);
    arcwise_json_begin_array(&j, "R_ref_path");
    for (int i = 0; i < 3; i++) {
      arcwise_json_begin_array(&j, NULL);
      for (int k = 0; k < 3; k++)
        arcwise_json_number(&j, NULL, r->R_ref_path[i][k]);
      arcwise_json_end_array(&j);
    }
    arcwise_json_end_array(&j);
    arcwise_json_begin_array(&j, "t_ref_m");
    for (int k = 0; k < 3; k++)
      arcwise_json_number(&j, NULL, r->t_ref_m[k]);
    arcwise_json_end_array(&j);
    arcwise_json_number(&j, "rotation_deg", r->rotation_deg);
    arcwise_json_integer(&j, "n_pairs", (long long)r->n_pairs);
    arcwise_json_integer(&j, "n_ref_gaps", (long long)r->n_ref_gaps);
    arcwise_json_number(&j, "rmse_m", r->rmse_m);
    arcwise_json_begin_array(&j, "rmse_axis_m");
    for (int k = 0; k < 3; k++)
      arcwise_json_number(&j, NULL, r->rmse_axis_m[k]);
    arcwise_json_end_array(&j);
    arcwise_json_begin_array(&j, "bias_axis_m");
    for (int k = 0; k < 3; k++)
      arcwise_json_number(&j, NULL, r->bias_axis_m[k]);
    arcwise_json_end_array(&j);
    arcwise_json_number(&j, "p95_err_m", r->p95_err_m);
    arcwise_json_number(&j, "max_err_m", r->max_err_m);
    arcwise_json_end_object(&j);
    arcwise_json_finish(&j);
    return;
  }
  printf("check: %s against marker %s\n", c->what, m->label);
  printf("time: path clock = marker time %+.4f s (speed correlation %.3f at the peak)\n",
         r->lag_s, r->peak_corr);
  printf("space: path rotated by %.2f deg and moved by (%.4f, %.4f, %.4f) m onto the lab frame\n",
         r->rotation_deg, r->t_ref_m[0], r->t_ref_m[1], r->t_ref_m[2]);
  printf("pairs: %zu marker frames compared (%zu invalid frames left as gaps)\n", r->n_pairs,
         r->n_ref_gaps);
  printf("error: RMSE %.1f mm, 95th percentile %.1f mm, maximum %.1f mm\n", 1e3 * r->rmse_m,
         1e3 * r->p95_err_m, 1e3 * r->max_err_m);
  for (int k = 0; k < 3; k++)
    printf("  lab %c: RMSE %.1f mm, bias %+.1f mm\n", axis[k], 1e3 * r->rmse_axis_m[k],
           1e3 * r->bias_axis_m[k]);
  printf("(a consistency check between two measurements, not a certification of either)\n");
}

int
arcwise_cmd_c3d(int argc, char **argv)
{
  const char *file = NULL, *marker = NULL, *csv = NULL;
  const char *check_kind = NULL, *check_a1 = NULL, *check_a2 = NULL, *library = NULL;
  bool translation_only = false, json = false;
  AwMarkerOptions mo;
  aw_marker_options_default(&mo);
  bool force = false;
  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
      usage(stdout);
      return 0;
    } else if (strcmp(a, "--marker") == 0 && i + 1 < argc) {
      marker = argv[++i];
    } else if (strcmp(a, "--units-if-missing") == 0 && i + 1 < argc) {
      mo.units_if_missing = argv[++i];
      if (aw_c3d_units_to_m(mo.units_if_missing) == 0)
        return arcwise_cli_usage_error("c3d", "unknown unit '%s' (mm, cm, m or in)",
                                       mo.units_if_missing);
    } else if (strcmp(a, "--keep-flagged") == 0) {
      mo.keep_flagged_invalid = true;
    } else if (strcmp(a, "--csv") == 0 && i + 1 < argc) {
      csv = argv[++i];
    } else if (strcmp(a, "--force") == 0) {
      force = true;
    } else if (strcmp(a, "--against") == 0 && i + 2 < argc) {
      check_kind = "capture";
      check_a1 = argv[++i];
      check_a2 = argv[++i];
    } else if (strcmp(a, "--against-swing") == 0 && i + 1 < argc) {
      check_kind = "swing";
      check_a1 = argv[++i];
    } else if (strcmp(a, "--against-depth") == 0 && i + 1 < argc) {
      check_kind = "depth";
      check_a1 = argv[++i];
    } else if (strcmp(a, "--library") == 0 && i + 1 < argc) {
      library = argv[++i];
    } else if (strcmp(a, "--translation-only") == 0) {
      translation_only = true;
    } else if (strcmp(a, "--json") == 0) {
      json = true;
    } else if (a[0] == '-') {
      return arcwise_cli_usage_error("c3d", "unknown option '%s'", a);
    } else if (file == NULL) {
      file = a;
    } else {
      return arcwise_cli_usage_error("c3d", "one file at a time");
    }
  }
  if (file == NULL)
    return arcwise_cli_usage_error("c3d", "which file?");

  if (check_kind != NULL && csv != NULL)
    return arcwise_cli_usage_error("c3d", "--csv and a check are separate runs");
  if (json && check_kind == NULL)
    return arcwise_cli_usage_error("c3d", "--json goes with a check (--against...)");

  AwC3dFile *f = NULL;
  AwError e;
  aw_error_clear(&e);
  char msg[1200];
  if (aw_c3d_read_file(file, &f, &e) != AW_OK)
    return arcwise_cli_fail("c3d", "%s", aw_error_format(&e, msg, sizeof msg));
  if (check_kind != NULL) {
    AwMarkerTrajectory *m = NULL;
    CheckPath cp = { 0 };
    int rc = 0;
    if (aw_c3d_marker_trajectory(f, marker, &mo, &m, &e) != AW_OK) {
      rc = arcwise_cli_fail("c3d", "%s: %s", file, e.message);
    } else if ((rc = load_check_path(check_kind, check_a1, check_a2, library, &cp)) == 0) {
      AwRefCheckSettings rs;
      aw_ref_check_settings_default(&rs);
      rs.rotation = !translation_only;
      AwRefCheck r;
      aw_error_clear(&e);
      if (aw_ref_check(cp.t_s, (const double (*)[3])cp.pos_m, cp.n, m, &rs, &r, &e) != AW_OK)
        rc = arcwise_cli_fail("c3d", "%s against %s: %s", cp.what, file, e.message);
      else
        print_check(&r, m, &cp, json);
    }
    check_path_clear(&cp);
    aw_marker_trajectory_free(m);
    aw_c3d_file_free(f);
    return rc;
  }
  printf("file: %s\nprocessor: %s\ndata: %s, POINT:SCALE %g\n", file, proc_name(f->processor),
         f->float_data ? "float32" : "int16", f->point_scale);
  printf("points: %zu\nframes: %zu (first %ld) at %g Hz, %.3f s\n", f->n_points, f->n_frames,
         f->first_frame, f->point_rate_hz, (double)f->n_frames / f->point_rate_hz);
  printf("analog values per frame: %zu\nunits: %s\n", f->analog_words_per_frame,
         f->units[0] ? f->units : "(missing: POINT:UNITS absent)");
  printf("invalid point samples: %zu of %zu\n", f->n_invalid, f->n_points * f->n_frames);
  printf("labels:");
  for (size_t i = 0; i < f->n_points; i++)
    printf(" %s", f->labels[i]);
  printf("\n");
  if (f->notes[0]) {
    printf("notes:\n");
    for (const char *p = f->notes; *p;) {
      const char *nl = strchr(p, '\n');
      int len = nl ? (int)(nl - p) : (int)strlen(p);
      printf("  %.*s\n", len, p);
      p += len + (nl ? 1 : 0);
    }
  }
  int rc = 0;
  if (csv != NULL || marker != NULL) {
    AwMarkerTrajectory *m = NULL;
    aw_error_clear(&e);
    if (aw_c3d_marker_trajectory(f, marker, &mo, &m, &e) != AW_OK) {
      rc = arcwise_cli_fail("c3d", "%s: %s", file, e.message);
    } else {
      printf("marker %s: %zu frames, %zu invalid, read in %s%s%s\n", m->label, m->n, m->n_invalid,
             m->units, m->units_declared ? "" : " (assumed: the file declares none)",
             m->used_flagged_invalid ? "; kept points flagged invalid" : "");
      if (csv != NULL) {
        ArcwiseOutFile o;
        if (!arcwise_out_open(&o, csv, force, msg, sizeof msg)) {
          rc = arcwise_cli_fail("c3d", "%s", msg);
        } else {
          fprintf(o.fp, "# source: %s marker %s\n# units: t=s pos=m\nt_s,x_m,y_m,z_m\n", file,
                  m->label);
          for (size_t i = 0; i < m->n; i++) {
            if (isfinite(m->pos_m[i][0]))
              fprintf(o.fp, "%.6f,%.7f,%.7f,%.7f\n", m->t_s[i], m->pos_m[i][0], m->pos_m[i][1],
                      m->pos_m[i][2]);
            else
              fprintf(o.fp, "%.6f,,,\n", m->t_s[i]);
          }
          if (!arcwise_out_commit(&o, msg, sizeof msg))
            rc = arcwise_cli_fail("c3d", "%s", msg);
        }
      }
    }
    aw_marker_trajectory_free(m);
  }
  aw_c3d_file_free(f);
  return rc;
}
