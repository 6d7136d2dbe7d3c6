/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise c3d FILE`: what a C3D motion-capture file holds, and one marker's trajectory in
 * metres as CSV (the form a reference swing or an optical check is imported in). */
#include "cli.h"
#include "export-file.h"

#include "arcwise/c3d.h"

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
          "\n"
          "Describes a C3D file (c3d.org): processor format, points, frames, rate, units, labels\n"
          "and any disagreement between its header and parameters.\n"
          "\n"
          "  --marker LABEL          the marker to extract (default: the first point)\n"
          "  --units-if-missing U    unit of the coordinates when the file has no POINT:UNITS\n"
          "  --keep-flagged          keep coordinates of points flagged invalid (residual -1)\n"
          "  --csv OUT               write the marker as CSV: t_s,x_m,y_m,z_m (empty = invalid)\n"
          "  --force                 replace OUT if it exists\n");
}

static const char *
proc_name(AwC3dProcessor p)
{
  return p == AW_C3D_DEC ? "DEC (85)" : p == AW_C3D_MIPS ? "MIPS/SGI (86)" : "Intel (84)";
}

int
arcwise_cmd_c3d(int argc, char **argv)
{
  const char *file = NULL, *marker = NULL, *csv = NULL;
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

  AwC3dFile *f = NULL;
  AwError e;
  aw_error_clear(&e);
  char msg[1200];
  if (aw_c3d_read_file(file, &f, &e) != AW_OK)
    return arcwise_cli_fail("c3d", "%s", aw_error_format(&e, msg, sizeof msg));
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
