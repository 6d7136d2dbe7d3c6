/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "reference-swing.h"

#include "cli.h"

#include "arcwise/c3d.h"

#include <ctype.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

bool
arcwise_reference_parse_up(const char *s, char out[3])
{
  if (s == NULL)
    return false;
  char sign = '+';
  if (*s == '+' || *s == '-')
    sign = *s++;
  char ax = (char)tolower((unsigned char)*s);
  if ((ax != 'x' && ax != 'y' && ax != 'z') || s[1] != '\0')
    return false;
  out[0] = sign;
  out[1] = ax;
  out[2] = '\0';
  return true;
}

ArcwiseReference *
arcwise_reference_from_c3d(const char *file, const char *marker, const char *units_if_missing,
                           bool keep_flagged, const char *up, char *err, size_t err_size)
{
  gchar *bytes = NULL;
  gsize len = 0;
  GError *ge = NULL;
  if (!g_file_get_contents(file, &bytes, &len, &ge)) {
    snprintf(err, err_size, "%s", ge->message);
    g_error_free(ge);
    return NULL;
  }
  AwC3dFile *f = NULL;
  AwError e;
  aw_error_clear(&e);
  g_autofree char *base = g_path_get_basename(file);
  if (aw_c3d_read_buffer((const uint8_t *)bytes, len, file, &f, &e) != AW_OK) {
    aw_error_format(&e, err, err_size);
    g_free(bytes);
    return NULL;
  }
  char *sha = g_compute_checksum_for_data(G_CHECKSUM_SHA256, (const guchar *)bytes, len);
  g_free(bytes);
  AwMarkerOptions mo;
  aw_marker_options_default(&mo);
  mo.units_if_missing = units_if_missing;
  mo.keep_flagged_invalid = keep_flagged;
  AwMarkerTrajectory *m = NULL;
  ArcwiseReference *r = NULL;
  char upax[3] = "+z";
  if (aw_c3d_marker_trajectory(f, marker, &mo, &m, &e) != AW_OK) {
    snprintf(err, err_size, "%s: %s", file, e.message);
  } else if (up != NULL && !arcwise_reference_parse_up(up, upax)) {
    snprintf(err, err_size, "up axis '%s': one of +x, -x, +y, -y, +z, -z", up);
  } else if (m->n < 2 || m->n - m->n_invalid < 2) {
    snprintf(err, err_size, "%s: marker %s has fewer than 2 valid frames", file, m->label);
  } else {
    if (up == NULL) {
      const AwC3dParam *ys = aw_c3d_param(f, "POINT", "Y_SCREEN");
      if (ys != NULL && ys->chars != NULL && !arcwise_reference_parse_up(g_strstrip(ys->chars), upax))
        memcpy(upax, "+z", 3);
    }
    r = g_new0(ArcwiseReference, 1);
    r->source_name = g_strdup(base);
    r->source_sha256 = sha;
    sha = NULL;
    r->marker = g_strdup(m->label);
    r->units = g_strdup(m->units);
    r->up_axis = g_strdup(upax);
    r->rate_hz = m->rate_hz;
    r->n_frames = (guint)m->n;
    r->n_invalid = (guint)m->n_invalid;
    r->name = g_strdup_printf("%s of %s", m->label, base);
    r->t_s = g_memdup2(m->t_s, m->n * sizeof *m->t_s);
    r->pos_m = g_memdup2(m->pos_m, m->n * sizeof *m->pos_m);
  }
  g_free(sha);
  aw_marker_trajectory_free(m);
  aw_c3d_file_free(f);
  return r;
}

bool
arcwise_reference_analyse(const char *cmd, const ArcwiseReference *r,
                          const AwAnalysisSettings *set, ArcwiseCapture *out)
{
  memset(out, 0, sizeof *out);
  size_t first = 0, last = r->n_frames;
  while (first < last && !isfinite(r->pos_m[first][0]))
    first++;
  while (last > first && !isfinite(r->pos_m[last - 1][0]))
    last--;
  size_t n = last - first;
  if (n < 2) {
    arcwise_cli_fail(cmd, "reference %" G_GINT64_FORMAT " has no valid frames", r->id);
    return false;
  }
  AwFusedPath *p = aw_fused_path_new(n);
  if (p == NULL) {
    arcwise_cli_fail(cmd, "out of memory");
    return false;
  }
  /* Bridge gaps linearly between the valid frames on either side. */
  size_t prev = 0;
  for (size_t i = 0; i < n; i++) {
    size_t k = first + i;
    p->t_s[i] = r->t_s[k];
    if (isfinite(r->pos_m[k][0])) {
      memcpy(p->pos_cam_m[i], r->pos_m[k], sizeof p->pos_cam_m[i]);
      prev = i;
      continue;
    }
    size_t next = k + 1;
    while (!isfinite(r->pos_m[next][0]))
      next++; /* stops at last - 1 at the latest, which is valid */
    double w = (r->t_s[k] - r->t_s[first + prev]) / (r->t_s[next] - r->t_s[first + prev]);
    for (int a = 0; a < 3; a++)
      p->pos_cam_m[i][a] = p->pos_cam_m[prev][a] + w * (r->pos_m[next][a] - p->pos_cam_m[prev][a]);
  }
  out->fused = p;
  AwTrajectory *t = &out->traj;
  memset(t, 0, sizeof *t);
  t->n = n;
  t->t_s = p->t_s;
  t->pos_m = (const double (*)[3])p->pos_cam_m;
  int ax = r->up_axis[1] - 'x';
  t->up[ax] = r->up_axis[0] == '-' ? -1.0 : 1.0;
  t->sync_offset_s = NAN;
  t->sync_confidence = NAN;
  AwError e;
  aw_error_clear(&e);
  if (aw_analyze(t, set, &out->analysis, &e) != AW_OK || out->analysis->n_swings == 0) {
    arcwise_cli_fail(cmd, "reference %" G_GINT64_FORMAT " (%s): %s", r->id, r->name,
                     e.message[0] ? e.message : "no swing found in the marker's path");
    arcwise_capture_clear(out);
    return false;
  }
  return true;
}
