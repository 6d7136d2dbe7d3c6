/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The import pipeline (read and validate -> fuse -> analyse -> store in one transaction), the
 * background re-analysis, and the settings that identify a cached result. No SQL here: the
 * writes go through store.c.
 *
 * Engine parts are used when this build has them (ARCWISE_HAVE_CAPTURE, _FUSION, _ANALYSIS set
 * by app/meson.build). A part that is missing is never faked: without the capture readers an
 * import is refused; without fusion or analysis the swing is stored with its raw streams and
 * shows as "not analysed" until `arcwise library reanalyse` runs in a complete build. */
#include "arcwise-config.h"
#include "store-private.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#if ARCWISE_HAVE_ANALYSIS
#include "arcwise/analysis.h"
#endif

gboolean
arcwise_pipeline_can_fuse(void)
{
  return ARCWISE_HAVE_FUSION;
}

gboolean
arcwise_pipeline_can_analyse(void)
{
  return ARCWISE_HAVE_FUSION && ARCWISE_HAVE_ANALYSIS;
}

/* ---- Settings identity ------------------------------------------------------------------- */

G_GNUC_UNUSED static void
kv(GString *s, const char *key, double v)
{
  char num[G_ASCII_DTOSTR_BUF_SIZE];
  g_string_append_printf(s, "%s=%s\n", key, g_ascii_formatd(num, sizeof num, "%.17g", v));
}

/* The settings named in the text, in the order of earlier versions (the text's hash is the
 * identity of stored results, so the names and order must not change). */
#define FUSION_SCALARS(X)                                                                   \
  X(accel_noise_density_m_s2_rthz) X(gyro_noise_density_rad_s_rthz)                         \
  X(accel_bias_walk_m_s3_rthz) X(gyro_bias_walk_rad_s2_rthz) X(cam_sigma_xy_m)              \
  X(cam_sigma_z_coeff_per_m) X(gate_chi2) X(latitude_rad)
#define ANALYSIS_SCALARS(X)                                                                 \
  X(still_speed_m_s) X(still_min_s) X(full_top_rise_m) X(min_top_rise_m)                    \
  X(min_peak_speed_m_s) X(impact_snr) X(contact_min_loss)

char *
arcwise_store_current_settings(void)
{
  /* Every setting that changes a fused path or an analysis, at full precision: a result is
   * reused only if this text (through its hash) and the engine version match. Per-swing inputs
   * (handedness, club) are not settings; they are stored with the swing. */
  GString *s = g_string_new(NULL);
  g_string_append_printf(s, "engine=%s\n", ARCWISE_VERSION);
  g_string_append_printf(s, "capture=%s\n", ARCWISE_HAVE_CAPTURE ? "yes" : "no");
#if ARCWISE_HAVE_FUSION
  AwFusionSettings f;
  aw_fusion_settings_default(&f);
#define FUSION_KV(field) kv(s, "fusion." #field, f.field);
  FUSION_SCALARS(FUSION_KV)
#undef FUSION_KV
  for (int k = 0; k < 3; k++) {
    char key[64];
    g_snprintf(key, sizeof key, "fusion.lever_arm_body_m.%d", k);
    kv(s, key, f.lever_arm_body_m[k]);
  }
  kv(s, "fusion.max_clock_offset_s", f.max_clock_offset_s);
  g_string_append_printf(s, "fusion.mask=%d\n", (int)f.mask);
  /* Fields added to the struct later are covered by the hash of its bytes (zeroed first, so
   * padding is defined). */
  AwFusionSettings fz;
  memset(&fz, 0, sizeof fz);
  aw_fusion_settings_default(&fz);
  char fsha[65];
  arcwise_codec_sha256_hex(&fz, sizeof fz, fsha);
  g_string_append_printf(s, "fusion.struct_sha256=%s\n", fsha);
#else
  g_string_append(s, "fusion=none\n");
#endif
#if ARCWISE_HAVE_ANALYSIS
  AwAnalysisSettings a;
  aw_analysis_settings_default(&a);
#define ANALYSIS_KV(field) kv(s, "analysis." #field, a.field);
  ANALYSIS_SCALARS(ANALYSIS_KV)
#undef ANALYSIS_KV
  AwAnalysisSettings az;
  memset(&az, 0, sizeof az);
  aw_analysis_settings_default(&az);
  char asha[65];
  arcwise_codec_sha256_hex(&az, sizeof az, asha);
  g_string_append_printf(s, "analysis.struct_sha256=%s\n", asha);
#else
  g_string_append(s, "analysis=none\n");
#endif
  return g_string_free(s, FALSE);
}

G_GNUC_UNUSED static void
set_settings(ArcwisePreparedRecording *r)
{
  g_free(r->settings);
  g_free(r->engine_version);
  r->settings = arcwise_store_current_settings();
  r->engine_version = g_strdup(ARCWISE_VERSION);
  arcwise_codec_sha256_hex(r->settings, strlen(r->settings), r->settings_sha256);
}

/* ---- One pair ------------------------------------------------------------------------------ */

G_GNUC_UNUSED static gboolean
engine_fail(GError **error, const AwError *err, const char *stage)
{
  char buf[1200];
  g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID, "%s%s",
              stage, aw_error_format(err, buf, sizeof buf));
  return FALSE;
}

#if ARCWISE_HAVE_ANALYSIS
static void
add_metric(GPtrArray *metrics, const char *name, const char *unit, double v)
{
  ArcwiseSwingMetric *m = g_new0(ArcwiseSwingMetric, 1);
  m->name = g_strdup(name);
  m->unit = g_strdup(unit);
  m->value = v;
  g_ptr_array_add(metrics, m);
}

static void
add_event(GPtrArray *events, const char *name, double t_s)
{
  ArcwiseSwingEvent *e = g_new0(ArcwiseSwingEvent, 1);
  e->name = g_strdup(name);
  e->t_s = t_s;
  g_ptr_array_add(events, e);
}

/* The engine's swing as stored rows: events by trade name, every metric by its engine key
 * (aw_metric_info), plus the whole AwSwing record as text for the workbench. */
G_GNUC_UNUSED static void
swing_to_rows(const AwSwing *sw, ArcwisePreparedSwing *ps)
{
  static const char *const event_names[AW_EVENT_COUNT_] = {
    "address", "takeaway", "top", "impact", "finish",
  };
  ps->events = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_event_free);
  ps->metrics = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_metric_free);
  for (int k = 0; k < AW_EVENT_COUNT_; k++)
    add_event(ps->events, event_names[k], sw->events[k].t_s);
  for (int k = 0; k < AW_METRIC_COUNT_; k++) {
    const AwMetricInfo *info = aw_metric_info((AwMetricId)k);
    if (info != NULL)
      add_metric(ps->metrics, info->key, info->unit, sw->metrics[k]);
  }
  add_metric(ps->metrics, "practice", "1", sw->practice ? 1.0 : 0.0);
  add_metric(ps->metrics, "half", "1", sw->half ? 1.0 : 0.0);
  add_metric(ps->metrics, "quality_notes", "1", (double)sw->quality.notes);
  ps->swing_text = arcwise_codec_swing_to_text(sw);
}
#endif

ArcwisePreparedRecording *
arcwise_pipeline_prepare(const char *imu_path, GBytes *imu_bytes, const char *depth_path,
                         GBytes *depth_bytes, ArcwiseHandedness handedness,
                         const char *club_kind, double club_length_m,
                         const GArray *fixed_spans, GError **error)
{
#if !ARCWISE_HAVE_CAPTURE
  (void)imu_path; (void)imu_bytes; (void)depth_path; (void)depth_bytes; (void)handedness;
  (void)club_kind; (void)club_length_m; (void)fixed_spans;
  g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
              "this build has no capture readers, so it cannot validate captures to import");
  return NULL;
#else
  g_autoptr(GError) local = NULL;
  ArcwisePreparedRecording *r = arcwise_prepared_recording_new();
  set_settings(r);
  gsize il = 0, dl = 0;
  const char *id = g_bytes_get_data(imu_bytes, &il);
  const char *dd = g_bytes_get_data(depth_bytes, &dl);
  AwImuStream *imu = NULL;
  AwDepthStream *depth = NULL;
  AwError err;
  aw_error_clear(&err);
  gboolean ok = TRUE;
  if (aw_imu_read_buffer(id != NULL ? id : "", il, imu_path, &imu, &err) != AW_OK)
    ok = engine_fail(error, &err, "");
  if (ok && aw_depth_read_buffer(dd != NULL ? dd : "", dl, depth_path, &depth, &err) != AW_OK)
    ok = engine_fail(error, &err, "");
  if (ok)
    ok = arcwise_prepared_recording_set_raw(r, imu_path, imu_bytes, depth_path, depth_bytes,
                                            error);
  double t0 = ok && depth->n > 0 ? depth->t_s[0] : 0, t1 = ok && depth->n > 0 ? depth->t_s[depth->n - 1] : 0;
  (void)t0; (void)t1;   /* used only when fusion or analysis is not built */

#if ARCWISE_HAVE_FUSION
  AwFusedPath *path = NULL;
  if (ok) {
    AwFusionSettings fs;
    aw_fusion_settings_default(&fs);
    if (aw_fuse(imu, depth, &fs, &path, &err) != AW_OK) {
      g_autofree char *stage = g_strdup_printf("%s + %s: cannot fuse: ", r->imu_name,
                                               r->depth_name);
      ok = engine_fail(error, &err, stage);
    }
  }
#if ARCWISE_HAVE_ANALYSIS
  AwAnalysisSettings as;
  aw_analysis_settings_default(&as);
  as.handed = handedness == ARCWISE_HAND_LEFT ? AW_HANDED_LEFT : AW_HANDED_RIGHT;
  AwClubType club;
  if (club_kind != NULL && aw_club_from_name(club_kind, &club))
    as.club = club;
  if (!isnan(club_length_m))
    as.club_length_m = club_length_m;
  /* Sensor trust: the same recording fused with each stream masked (analysis.h). A masked run
   * that fails only leaves that comparison out, as aw_analyze_capture does. */
  AwFusedPath *masked[2] = { NULL, NULL };
  AwTrajectory traj, tr_m[2];
  if (ok) {
    aw_trajectory_from_fused(path, imu->meta.accel_range_m_s2, imu->meta.gyro_range_rad_s, &traj);
    AwFusionSettings fs;
    aw_fusion_settings_default(&fs);
    AwError merr;
    for (int m = 0; m < 2; m++) {
      fs.mask = m == 0 ? AW_FUSION_CAMERA_MASKED : AW_FUSION_IMU_MASKED;
      if (aw_fuse(imu, depth, &fs, &masked[m], &merr) != AW_OK || masked[m]->n != path->n) {
        aw_fused_path_free(masked[m]);
        masked[m] = NULL;
      } else {
        aw_trajectory_from_fused(masked[m], 0, 0, &tr_m[m]);
      }
    }
  }
  if (ok && fixed_spans == NULL) {
    AwAnalysis *an = NULL;
    if (aw_analyze(&traj, &as, &an, &err) != AW_OK) {
      g_autofree char *stage = g_strdup_printf("%s + %s: ", r->imu_name, r->depth_name);
      ok = engine_fail(error, &err, stage);
    }
    AwError terr;
    if (ok)
      (void)aw_analysis_add_trust(an, &traj, masked[0] != NULL ? &tr_m[0] : NULL,
                                  masked[1] != NULL ? &tr_m[1] : NULL, &terr);
    for (size_t k = 0; ok && an != NULL && k < an->n_swings; k++) {
      const AwSwing *sw = &an->swings[k];
      ArcwisePreparedSwing *ps = arcwise_prepared_swing_new();
      ps->index = (guint)k;
      ps->span_start_s = sw->t_start_s;
      ps->span_end_s = sw->t_end_s;
      ps->path_blob = arcwise_codec_encode_path(path, sw->t_start_s, sw->t_end_s, error);
      ok = ps->path_blob != NULL;
      swing_to_rows(sw, ps);
      g_ptr_array_add(r->swings, ps);
    }
    aw_analysis_free(an);
  } else if (ok) {
    /* Re-analysis of given spans: the analysis runs on each span's part of the paths. */
    for (guint k = 0; ok && k < fixed_spans->len / 2; k++) {
      double a = g_array_index(fixed_spans, double, 2 * k);
      double b = g_array_index(fixed_spans, double, 2 * k + 1);
      ArcwisePreparedSwing *ps = arcwise_prepared_swing_new();
      ps->index = k;
      ps->span_start_s = a;
      ps->span_end_s = b;
      ps->path_blob = arcwise_codec_encode_path(path, a, b, error);
      ok = ps->path_blob != NULL;
      size_t i0 = 0, i1 = path->n;
      while (i0 < path->n && path->t_s[i0] < a)
        i0++;
      while (i1 > i0 && path->t_s[i1 - 1] > b)
        i1--;
      AwTrajectory sub[3] = { traj, tr_m[0], tr_m[1] };
      for (int m = 0; m < 3; m++) {
        if (m > 0 && masked[m - 1] == NULL)
          continue;
        AwTrajectory *t = &sub[m];
        t->n = i1 - i0;
        t->t_s += i0;
        t->pos_m += i0;
#define SHIFT(f) if (t->f != NULL) t->f += i0;
        SHIFT(vel_m_s) SHIFT(q_f_body) SHIFT(accel_body_m_s2) SHIFT(gyro_body_rad_s)
        SHIFT(pos_sigma_m) SHIFT(cam_info_share) SHIFT(flags)
#undef SHIFT
      }
      AwAnalysis *an = NULL;
      AwError terr;
      /* A span whose swing the new engine no longer finds keeps a fused path and shows as not
       * analysed: the swing and its annotations stay. */
      if (ok && aw_analyze(&sub[0], &as, &an, &terr) == AW_OK && an->n_swings > 0) {
        (void)aw_analysis_add_trust(an, &sub[0], masked[0] != NULL ? &sub[1] : NULL,
                                    masked[1] != NULL ? &sub[2] : NULL, &terr);
        swing_to_rows(&an->swings[0], ps);
      }
      aw_analysis_free(an);
      g_ptr_array_add(r->swings, ps);
    }
  }
  aw_fused_path_free(masked[0]);
  aw_fused_path_free(masked[1]);
#else
  /* No analysis in this build: the whole recording is one swing, fused, not analysed. */
  if (ok) {
    guint n = fixed_spans != NULL ? fixed_spans->len / 2 : 1;
    for (guint k = 0; ok && k < n; k++) {
      ArcwisePreparedSwing *ps = arcwise_prepared_swing_new();
      ps->index = k;
      ps->span_start_s = fixed_spans != NULL ? g_array_index(fixed_spans, double, 2 * k) : t0;
      ps->span_end_s = fixed_spans != NULL ? g_array_index(fixed_spans, double, 2 * k + 1) : t1;
      ps->path_blob = arcwise_codec_encode_path(path, ps->span_start_s, ps->span_end_s, error);
      ok = ps->path_blob != NULL;
      g_ptr_array_add(r->swings, ps);
    }
  }
  (void)handedness; (void)club_kind; (void)club_length_m;
#endif
  aw_fused_path_free(path);
#else
  /* No fusion in this build: the recording is stored as one swing with its raw streams only. */
  if (ok) {
    guint n = fixed_spans != NULL ? fixed_spans->len / 2 : 1;
    for (guint k = 0; k < n; k++) {
      ArcwisePreparedSwing *ps = arcwise_prepared_swing_new();
      ps->index = k;
      ps->span_start_s = fixed_spans != NULL ? g_array_index(fixed_spans, double, 2 * k) : t0;
      ps->span_end_s = fixed_spans != NULL ? g_array_index(fixed_spans, double, 2 * k + 1) : t1;
      g_ptr_array_add(r->swings, ps);
    }
  }
  (void)handedness; (void)club_kind; (void)club_length_m;
#endif
  aw_imu_stream_free(imu);
  aw_depth_stream_free(depth);
  if (!ok) {
    arcwise_prepared_recording_free(r);
    return NULL;
  }
  return r;
#endif
}

/* ---- Folders of pairs ------------------------------------------------------------------- */

void
arcwise_capture_pair_free(ArcwiseCapturePair *p)
{
  if (p == NULL)
    return;
  g_free(p->imu_path);
  g_free(p->depth_path);
  g_free(p);
}

static int
cmp_pair(gconstpointer a, gconstpointer b)
{
  const ArcwiseCapturePair *pa = *(ArcwiseCapturePair *const *)a;
  const ArcwiseCapturePair *pb = *(ArcwiseCapturePair *const *)b;
  return strcmp(pa->imu_path, pb->imu_path);
}

GPtrArray *
arcwise_capture_pairs_in_folder(const char *folder, GError **error)
{
  g_autoptr(GDir) dir = g_dir_open(folder, 0, error);
  if (dir == NULL)
    return NULL;
  GPtrArray *pairs = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_capture_pair_free);
  const char *name;
  while ((name = g_dir_read_name(dir)) != NULL) {
    g_autofree char *full = g_build_filename(folder, name, NULL);
    if (g_str_has_suffix(name, ".imu.csv")) {
      g_autofree char *stem = g_strndup(name, strlen(name) - strlen(".imu.csv"));
      g_autofree char *depth_name = g_strconcat(stem, ".depth.csv", NULL);
      g_autofree char *depth = g_build_filename(folder, depth_name, NULL);
      if (!g_file_test(depth, G_FILE_TEST_IS_REGULAR)) {
        g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                    "%s: no depth stream beside it (expected %s)", full, depth_name);
        g_ptr_array_unref(pairs);
        return NULL;
      }
      ArcwiseCapturePair *p = g_new0(ArcwiseCapturePair, 1);
      p->imu_path = g_steal_pointer(&full);
      p->depth_path = g_steal_pointer(&depth);
      g_ptr_array_add(pairs, p);
    } else if (g_str_has_suffix(name, ".depth.csv")) {
      g_autofree char *stem = g_strndup(name, strlen(name) - strlen(".depth.csv"));
      g_autofree char *imu_name = g_strconcat(stem, ".imu.csv", NULL);
      g_autofree char *imu = g_build_filename(folder, imu_name, NULL);
      if (!g_file_test(imu, G_FILE_TEST_IS_REGULAR)) {
        g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                    "%s: no IMU stream beside it (expected %s)", full, imu_name);
        g_ptr_array_unref(pairs);
        return NULL;
      }
    } else if (g_file_test(full, G_FILE_TEST_IS_DIR)) {
      g_autofree char *imu = g_build_filename(full, "imu.csv", NULL);
      g_autofree char *depth = g_build_filename(full, "depth.csv", NULL);
      gboolean hi = g_file_test(imu, G_FILE_TEST_IS_REGULAR);
      gboolean hd = g_file_test(depth, G_FILE_TEST_IS_REGULAR);
      if (hi != hd) {
        g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                    "%s: has %s but no %s", full, hi ? "imu.csv" : "depth.csv",
                    hi ? "depth.csv" : "imu.csv");
        g_ptr_array_unref(pairs);
        return NULL;
      }
      if (hi) {
        ArcwiseCapturePair *p = g_new0(ArcwiseCapturePair, 1);
        p->imu_path = g_steal_pointer(&imu);
        p->depth_path = g_steal_pointer(&depth);
        g_ptr_array_add(pairs, p);
      }
    }
  }
  if (pairs->len == 0) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_NOT_FOUND,
                "%s: no capture pairs (NAME.imu.csv with NAME.depth.csv, or NAME/imu.csv with "
                "NAME/depth.csv)", folder);
    g_ptr_array_unref(pairs);
    return NULL;
  }
  g_ptr_array_sort(pairs, cmp_pair);
  return pairs;
}

/* ---- Import --------------------------------------------------------------------------------- */

void
arcwise_import_target_init(ArcwiseImportTarget *t)
{
  memset(t, 0, sizeof *t);
  t->height_m = NAN;
  t->club_length_m = NAN;
}

void
arcwise_import_result_free(ArcwiseImportResult *r)
{
  if (r == NULL)
    return;
  g_array_unref(r->swing_ids);
  g_free(r);
}

/* A job of the worker pool: one pair read, validated, fused and analysed. */
typedef struct {
  guint index;
  const char *imu_path;
  const char *depth_path;
  GBytes *imu;
  GBytes *depth;
  ArcwisePreparedRecording *prepared; /* result */
  GError *error;                      /* or this */
  gboolean duplicate;                 /* already in the library: nothing to do */
  ArcwiseHandedness handedness;
  const char *club_kind;
  double club_length_m;
  GArray *spans;                      /* re-analysis */
  gint64 recording_id;
  GArray *swing_ids;
} Job;

typedef struct {
  GAsyncQueue *done;
  GCancellable *cancellable;
  gint failed;                        /* atomic: a job failed, skip the rest of an import */
} Pool;

static void
job_run(gpointer data, gpointer user_data)
{
  Job *j = data;
  Pool *pool = user_data;
  if (g_atomic_int_get(&pool->failed))
    ; /* an earlier pair failed: the import will be refused anyway */
  else if (!g_cancellable_set_error_if_cancelled(pool->cancellable, &j->error))
    j->prepared = arcwise_pipeline_prepare(j->imu_path, j->imu, j->depth_path, j->depth,
                                           j->handedness, j->club_kind, j->club_length_m,
                                           j->spans, &j->error);
  if (j->error != NULL && j->swing_ids == NULL)
    g_atomic_int_set(&pool->failed, 1);
  g_async_queue_push(pool->done, j);
}

static void
job_free(Job *j)
{
  if (j == NULL)
    return;
  g_clear_pointer(&j->imu, g_bytes_unref);
  g_clear_pointer(&j->depth, g_bytes_unref);
  arcwise_prepared_recording_free(j->prepared);
  g_clear_error(&j->error);
  g_clear_pointer(&j->spans, g_array_unref);
  g_clear_pointer(&j->swing_ids, g_array_unref);
  g_free(j);
}

static guint
n_workers(void)
{
  /* ARCWISE_STORE_THREADS=N limits the workers (the benchmark compares 1 with all); 0 or unset
   * means one per processor. */
  const char *env = g_getenv("ARCWISE_STORE_THREADS");
  guint n = env != NULL && atoi(env) > 0 ? (guint)atoi(env) : g_get_num_processors();
  return MAX(1, MIN(n, 16));
}

static GBytes *
read_file(const char *path, GError **error)
{
  char *data = NULL;
  gsize len = 0;
  g_autoptr(GError) local = NULL;
  if (!g_file_get_contents(path, &data, &len, &local)) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID, "%s", local->message);
    return NULL;
  }
  return g_bytes_new_take(data, len);
}

ArcwiseImportResult *
arcwise_store_import(ArcwiseStore *store, const ArcwiseImportTarget *target, GPtrArray *pairs,
                     GCancellable *cancellable, ArcwiseProgressFunc progress, gpointer user_data,
                     GError **error)
{
  if (target == NULL || (target->player_id == 0 && target->player_name == NULL) ||
      pairs == NULL || pairs->len == 0) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "an import needs a player and at least one capture pair");
    return NULL;
  }
  /* Swings of an existing player are analysed with that player's handedness unless the caller
   * names one; a player given by id must exist. */
  ArcwiseImportTarget resolved = *target;
  target = &resolved;
  gint64 known = resolved.player_id;
  if (known == 0) {
    known = arcwise_store_find_player(store, resolved.player_name, error);
    if (known == 0 && error != NULL && *error != NULL)
      return NULL;
  }
  if (known != 0) {
    ArcwisePlayer *p = arcwise_store_get_player(store, known, error);
    if (p == NULL)
      return NULL;
    if (resolved.handedness == ARCWISE_HAND_UNKNOWN)
      resolved.handedness = p->handedness;
    arcwise_player_free(p);
  }
  guint n = pairs->len;
  /* Step 1: read every file and drop pairs whose bytes are already stored (or repeated within
   * this import). Reading is cheap next to fusion, and done here so the workers never do I/O. */
  g_autoptr(GPtrArray) jobs = g_ptr_array_new_with_free_func((GDestroyNotify)job_free);
  g_autoptr(GHashTable) seen = g_hash_table_new_full(g_str_hash, g_str_equal, g_free, NULL);
  guint duplicates = 0;
  for (guint i = 0; i < n; i++) {
    const ArcwiseCapturePair *p = g_ptr_array_index(pairs, i);
    Job *j = g_new0(Job, 1);
    j->index = i;
    j->imu_path = p->imu_path;
    j->depth_path = p->depth_path;
    j->handedness = target->handedness;
    j->club_kind = target->club_kind;
    j->club_length_m = target->club_length_m;
    g_ptr_array_add(jobs, j);
    if ((j->imu = read_file(p->imu_path, error)) == NULL ||
        (j->depth = read_file(p->depth_path, error)) == NULL)
      return NULL;
    char si[65], sd[65], sc[65];
    arcwise_codec_sha256_hex(g_bytes_get_data(j->imu, NULL), g_bytes_get_size(j->imu), si);
    arcwise_codec_sha256_hex(g_bytes_get_data(j->depth, NULL), g_bytes_get_size(j->depth), sd);
    arcwise_content_sha256(si, sd, sc);
    gint64 existing = 0;
    if (!arcwise_store_find_recording(store, sc, &existing, error))
      return NULL;
    if (existing != 0 || g_hash_table_contains(seen, sc)) {
      j->duplicate = TRUE;
      duplicates++;
    } else {
      g_hash_table_add(seen, g_strdup(sc));
    }
  }

  /* Step 2: validate, fuse and analyse on every core. */
  Pool pool = { g_async_queue_new(), cancellable, 0 };
  GThreadPool *tp = g_thread_pool_new(job_run, &pool, (gint)n_workers(), FALSE, NULL);
  guint queued = 0;
  for (guint i = 0; i < n; i++) {
    Job *j = g_ptr_array_index(jobs, i);
    if (!j->duplicate) {
      g_thread_pool_push(tp, j, NULL);
      queued++;
    }
  }
  guint done = duplicates;
  if (progress != NULL)
    progress(done, n, "reading", user_data);
  for (guint k = 0; k < queued; k++) {
    Job *j = g_async_queue_pop(pool.done);
    done++;
    if (progress != NULL)
      progress(done, n, j->imu_path, user_data);
  }
  g_thread_pool_free(tp, FALSE, TRUE);
  g_async_queue_unref(pool.done);

  /* The earliest failing pair in input order names the error, whatever finished first. */
  for (guint i = 0; i < n; i++) {
    Job *j = g_ptr_array_index(jobs, i);
    if (j->error != NULL) {
      g_propagate_error(error, g_steal_pointer(&j->error));
      return NULL;
    }
  }
  if (g_cancellable_set_error_if_cancelled(cancellable, error))
    return NULL;

  /* Step 3: one transaction for everything. */
  g_autoptr(GPtrArray) prepared = g_ptr_array_new();
  for (guint i = 0; i < n; i++) {
    Job *j = g_ptr_array_index(jobs, i);
    if (j->prepared != NULL)
      g_ptr_array_add(prepared, j->prepared);
  }
  ArcwiseImportResult *res = g_new0(ArcwiseImportResult, 1);
  res->swing_ids = g_array_new(FALSE, FALSE, sizeof(gint64));
  res->recordings_already_present = duplicates;
  const ArcwiseCapturePair *first = g_ptr_array_index(pairs, 0);
  g_autofree char *dir = g_path_get_dirname(first->imu_path);
  g_autofree char *detail = g_strdup_printf("from %s", dir);
  if (prepared->len > 0 &&
      !arcwise_store_commit_import(store, target, prepared, detail, res, error)) {
    arcwise_import_result_free(res);
    return NULL;
  }
  return res;
}

/* ---- Async import ----------------------------------------------------------------------- */

/* The data of a background import or re-analysis (reanalyse_all: which swings). */
typedef struct {
  char *library_path;
  ArcwiseImportTarget target;
  char *player_name, *session_date, *session_place, *club_kind;
  GPtrArray *pairs;
  gboolean reanalyse_all;
  ArcwiseProgressFunc progress;
  gpointer progress_data;
  GDestroyNotify progress_data_free;
  GMainContext *context;
} ImportTaskData;

static void
import_task_data_clear(gpointer data)
{
  ImportTaskData *d = data;
  g_free(d->library_path);
  g_free(d->player_name);
  g_free(d->session_date);
  g_free(d->session_place);
  g_free(d->club_kind);
  if (d->pairs != NULL)
    g_ptr_array_unref(d->pairs);
  if (d->progress_data_free != NULL)
    d->progress_data_free(d->progress_data);
  g_main_context_unref(d->context);
}

/* Shared by the task and every progress message still queued: released by the last one. */
static void
import_task_data_release(gpointer data)
{
  g_rc_box_release_full(data, import_task_data_clear);
}

typedef struct {
  ImportTaskData *d;
  guint done, total;
  char *what;
} ProgressMsg;

static gboolean
progress_in_context(gpointer data)
{
  ProgressMsg *m = data;
  m->d->progress(m->done, m->total, m->what, m->d->progress_data);
  return G_SOURCE_REMOVE;
}

static void
progress_msg_free(gpointer data)
{
  ProgressMsg *m = data;
  g_free(m->what);
  import_task_data_release(m->d);
  g_free(m);
}

static void
progress_forward(guint done, guint total, const char *what, gpointer user_data)
{
  ImportTaskData *d = user_data;
  if (d->progress == NULL)
    return;
  ProgressMsg *m = g_new0(ProgressMsg, 1);
  m->d = g_rc_box_acquire(d);
  m->done = done;
  m->total = total;
  m->what = g_strdup(what);
  /* Always through a source (never g_main_context_invoke, which may call right here when the
   * context is free), so the callback runs in the caller's thread, in order, before the
   * completion callback queued after it. */
  GSource *src = g_idle_source_new();
  g_source_set_priority(src, G_PRIORITY_DEFAULT);
  g_source_set_callback(src, progress_in_context, m, progress_msg_free);
  g_source_attach(src, d->context);
  g_source_unref(src);
}

static void
import_thread(GTask *task, gpointer source, gpointer task_data, GCancellable *cancellable)
{
  ImportTaskData *d = task_data;
  GError *error = NULL;
  g_autoptr(ArcwiseStore) store = arcwise_store_open(d->library_path, ARCWISE_STORE_OPEN_DEFAULT,
                                                     &error);
  if (store == NULL) {
    g_task_return_error(task, error);
    return;
  }
  ArcwiseImportResult *r = arcwise_store_import(store, &d->target, d->pairs, cancellable,
                                                progress_forward, d, &error);
  if (r == NULL)
    g_task_return_error(task, error);
  else
    g_task_return_pointer(task, r, (GDestroyNotify)arcwise_import_result_free);
}

void
arcwise_store_import_async(const char *library_path, const ArcwiseImportTarget *target,
                           GPtrArray *pairs, GCancellable *cancellable,
                           ArcwiseProgressFunc progress, gpointer progress_data,
                           GDestroyNotify progress_data_free, GAsyncReadyCallback callback,
                           gpointer user_data)
{
  ImportTaskData *d = g_rc_box_new0(ImportTaskData);
  d->library_path = g_strdup(library_path);
  d->target = *target;
  d->target.player_name = d->player_name = g_strdup(target->player_name);
  d->target.session_date = d->session_date = g_strdup(target->session_date);
  d->target.session_place = d->session_place = g_strdup(target->session_place);
  d->target.club_kind = d->club_kind = g_strdup(target->club_kind);
  d->pairs = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_capture_pair_free);
  for (guint i = 0; i < pairs->len; i++) {
    const ArcwiseCapturePair *p = g_ptr_array_index(pairs, i);
    ArcwiseCapturePair *c = g_new0(ArcwiseCapturePair, 1);
    c->imu_path = g_strdup(p->imu_path);
    c->depth_path = g_strdup(p->depth_path);
    g_ptr_array_add(d->pairs, c);
  }
  d->progress = progress;
  d->progress_data = progress_data;
  d->progress_data_free = progress_data_free;
  d->context = g_main_context_ref_thread_default();
  GTask *task = g_task_new(NULL, cancellable, callback, user_data);
  static const int import_tag;
  g_task_set_source_tag(task, (gpointer)&import_tag);
  g_task_set_task_data(task, d, import_task_data_release);
  g_task_run_in_thread(task, import_thread);
  g_object_unref(task);
}

ArcwiseImportResult *
arcwise_store_import_finish(GAsyncResult *result, GError **error)
{
  g_return_val_if_fail(g_task_is_valid(result, NULL), NULL);
  return g_task_propagate_pointer(G_TASK(result), error);
}

/* ---- Re-analysis --------------------------------------------------------------------------- */

guint
arcwise_store_count_stale(ArcwiseStore *store, GError **error)
{
  g_autofree char *settings = arcwise_store_current_settings();
  char sha[65];
  arcwise_codec_sha256_hex(settings, strlen(settings), sha);
  g_autoptr(GPtrArray) stale = arcwise_store_list_stale(store, FALSE, ARCWISE_VERSION, sha, error);
  if (stale == NULL)
    return 0;
  guint n = 0;
  for (guint i = 0; i < stale->len; i++)
    n += ((ArcwiseStaleRecording *)g_ptr_array_index(stale, i))->swing_ids->len;
  return n;
}

gint
arcwise_store_reanalyse(ArcwiseStore *store, gboolean all, GCancellable *cancellable,
                        ArcwiseProgressFunc progress, gpointer user_data, GError **error)
{
  g_autofree char *settings = arcwise_store_current_settings();
  char sha[65];
  arcwise_codec_sha256_hex(settings, strlen(settings), sha);
  g_autoptr(GPtrArray) stale = arcwise_store_list_stale(store, all, ARCWISE_VERSION, sha, error);
  if (stale == NULL)
    return -1;
  if (stale->len == 0)
    return 0;
  if (!ARCWISE_HAVE_CAPTURE) {
    g_set_error(error, ARCWISE_STORE_ERROR, ARCWISE_STORE_ERROR_INVALID,
                "this build has no capture readers, so it cannot re-analyse");
    return -1;
  }

  /* The caller's thread owns the connection: it loads raw streams, feeds the workers at most
   * 2 jobs per core ahead (bounded memory on big libraries) and writes each finished recording
   * in its own transaction, so a cancel or a crash keeps what was finished and loses no old
   * result that was not replaced. */
  Pool pool = { g_async_queue_new(), cancellable, 0 };
  guint workers = n_workers();
  GThreadPool *tp = g_thread_pool_new(job_run, &pool, (gint)workers, FALSE, NULL);
  guint next = 0, in_flight = 0, finished = 0, total = stale->len;
  gint updated = 0;
  GError *first_error = NULL;
  while (finished < total) {
    while (first_error == NULL && next < total && in_flight < 2 * workers &&
           !g_cancellable_is_cancelled(cancellable)) {
      ArcwiseStaleRecording *sr = g_ptr_array_index(stale, next++);
      Job *j = g_new0(Job, 1);
      j->recording_id = sr->recording_id;
      j->handedness = sr->handedness;
      j->club_kind = sr->club_kind;
      j->club_length_m = sr->club_length_m;
      j->spans = g_array_ref(sr->spans);
      j->swing_ids = g_array_ref(sr->swing_ids);
      char *imu_name = NULL, *depth_name = NULL;
      if (!arcwise_store_load_recording(store, sr->recording_id, &j->imu, &j->depth, &imu_name,
                                        &depth_name, &first_error)) {
        job_free(j);
        break;
      }
      /* The names only label messages; they are the stored (safe) names. */
      j->imu_path = g_intern_string(imu_name);
      j->depth_path = g_intern_string(depth_name);
      g_free(imu_name);
      g_free(depth_name);
      g_thread_pool_push(tp, j, NULL);
      in_flight++;
    }
    if (in_flight == 0)
      break;
    Job *j = g_async_queue_pop(pool.done);
    in_flight--;
    finished++;
    if (j->prepared != NULL && first_error == NULL) {
      for (guint k = 0; k < j->prepared->swings->len && k < j->swing_ids->len; k++)
        ((ArcwisePreparedSwing *)g_ptr_array_index(j->prepared->swings, k))->swing_id =
          g_array_index(j->swing_ids, gint64, k);
      if (arcwise_store_replace_results(store, j->prepared, &first_error))
        updated += (gint)j->prepared->swings->len;
    } else if (j->error != NULL && first_error == NULL &&
               !g_error_matches(j->error, G_IO_ERROR, G_IO_ERROR_CANCELLED)) {
      first_error = g_steal_pointer(&j->error);
    }
    if (progress != NULL)
      progress(finished, total, j->imu_path, user_data);
    job_free(j);
  }
  g_thread_pool_free(tp, FALSE, TRUE);
  while (g_async_queue_length(pool.done) > 0)
    job_free(g_async_queue_pop(pool.done));
  g_async_queue_unref(pool.done);

  if (updated > 0) {
    g_autofree char *detail = g_strdup_printf("%d swing%s re-analysed with engine %s", updated,
                                              updated == 1 ? "" : "s", ARCWISE_VERSION);
    GError **jerr = first_error == NULL ? &first_error : NULL;
    arcwise_store_add_journal(store, "reanalyse", detail, jerr);
  }
  if (first_error != NULL) {
    g_propagate_error(error, first_error);
    return -1;
  }
  if (g_cancellable_set_error_if_cancelled(cancellable, error))
    return -1;
  return updated;
}

/* ---- Background re-analysis ------------------------------------------------------------ */

static void
reanalyse_thread(GTask *task, gpointer source, gpointer task_data, GCancellable *cancellable)
{
  ImportTaskData *d = task_data;
  GError *error = NULL;
  g_autoptr(ArcwiseStore) store = arcwise_store_open(d->library_path, ARCWISE_STORE_OPEN_DEFAULT,
                                                     &error);
  if (store == NULL) {
    g_task_return_error(task, error);
    return;
  }
  gint n = arcwise_store_reanalyse(store, d->reanalyse_all, cancellable, progress_forward, d,
                                   &error);
  if (n < 0)
    g_task_return_error(task, error);
  else
    g_task_return_int(task, n);
}

void
arcwise_store_reanalyse_async(const char *library_path, gboolean all, GCancellable *cancellable,
                              ArcwiseProgressFunc progress, gpointer progress_data,
                              GDestroyNotify progress_data_free, GAsyncReadyCallback callback,
                              gpointer user_data)
{
  ImportTaskData *d = g_rc_box_new0(ImportTaskData);
  d->library_path = g_strdup(library_path);
  d->reanalyse_all = all;
  d->progress = progress;
  d->progress_data = progress_data;
  d->progress_data_free = progress_data_free;
  d->context = g_main_context_ref_thread_default();
  GTask *task = g_task_new(NULL, cancellable, callback, user_data);
  static const int reanalyse_tag;
  g_task_set_source_tag(task, (gpointer)&reanalyse_tag);
  g_task_set_task_data(task, d, import_task_data_release);
  g_task_run_in_thread(task, reanalyse_thread);
  g_object_unref(task);
}

gint
arcwise_store_reanalyse_finish(GAsyncResult *result, GError **error)
{
  g_return_val_if_fail(g_task_is_valid(result, NULL), -1);
  GError *e = NULL;
  gssize n = g_task_propagate_int(G_TASK(result), &e);
  if (e != NULL) {
    g_propagate_error(error, e);
    return -1;
  }
  return (gint)n;
}
