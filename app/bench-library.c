/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench library`: the swing library at scale. Builds a library of N swings (default
 * 10,000) from one real simulated session taken through the whole pipeline (read, fuse with
 * trust by masking, analyse), copied with new identities, players, dates, clubs, tags and
 * metric values, so every row and blob has its realistic size; then times open + list, each
 * filter, and reports bytes per swing. Import throughput is measured separately with real
 * fusion and analysis of distinct simulated sessions, with one worker and with every core.
 * Goals (issue 6): open + list <= 100 ms, filter <= 20 ms. */
#include "arcwise-config.h"
#include "cli.h"
#include "bench-score.h"
#include "store-private.h"

#include "arcwise/sim.h"

#include <glib/gstdio.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#define CMD "bench library"

static double
now_ms(void)
{
  return (double)g_get_monotonic_time() * 1e-3;
}

/* CPU time of this thread: on a shared machine the wall clock also counts other programs. */
static double
cpu_ms(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_THREAD_CPUTIME_ID, &ts);
  return (double)ts.tv_sec * 1e3 + (double)ts.tv_nsec * 1e-6;
}

static gboolean
simulate_session(const char *dir, guint64 seed, int swings, GBytes **imu, GBytes **depth,
                 char **imu_path, char **depth_path)
{
  AwSimConfig cfg;
  aw_sim_config_default(&cfg, AW_SIM_NORMAL);
  cfg.seed = seed;
  cfg.n_swings = swings;
  AwSim *sim = NULL;
  AwError err;
  if (aw_sim_new(&cfg, &sim, &err) != AW_OK)
    return FALSE;
  char name[32];
  g_snprintf(name, sizeof name, "session-%" G_GUINT64_FORMAT, seed);
  g_autofree char *out = g_build_filename(dir, name, NULL);
  g_mkdir_with_parents(out, 0755);
  AwStatus st = aw_sim_write(sim, out, &err);
  aw_sim_free(sim);
  if (st != AW_OK)
    return FALSE;
  *imu_path = g_build_filename(out, "imu.csv", NULL);
  *depth_path = g_build_filename(out, "depth.csv", NULL);
  char *d = NULL;
  gsize len = 0;
  if (!g_file_get_contents(*imu_path, &d, &len, NULL))
    return FALSE;
  *imu = g_bytes_new_take(d, len);
  if (!g_file_get_contents(*depth_path, &d, &len, NULL))
    return FALSE;
  *depth = g_bytes_new_take(d, len);
  return TRUE;
}

/* A copy of a prepared recording with its own identity and varied metric values. */
static ArcwisePreparedRecording *
clone_prepared(const ArcwisePreparedRecording *src, guint serial, GRand *rng)
{
  ArcwisePreparedRecording *r = arcwise_prepared_recording_new();
  r->imu_name = g_strdup(src->imu_name);
  r->depth_name = g_strdup(src->depth_name);
  r->imu_size = src->imu_size;
  r->depth_size = src->depth_size;
  r->imu_z = g_bytes_ref(src->imu_z);
  r->depth_z = g_bytes_ref(src->depth_z);
  memcpy(r->imu_sha256, src->imu_sha256, 65);
  memcpy(r->depth_sha256, src->depth_sha256, 65);
  char tag[32];
  g_snprintf(tag, sizeof tag, "bench-%u", serial);
  arcwise_content_sha256(src->imu_sha256, tag, r->content_sha256);
  r->engine_version = g_strdup(src->engine_version);
  r->settings = g_strdup(src->settings);
  memcpy(r->settings_sha256, src->settings_sha256, 65);
  for (guint k = 0; k < src->swings->len; k++) {
    const ArcwisePreparedSwing *s = g_ptr_array_index(src->swings, k);
    ArcwisePreparedSwing *c = arcwise_prepared_swing_new();
    c->index = s->index;
    c->span_start_s = s->span_start_s;
    c->span_end_s = s->span_end_s;
    c->path_blob = s->path_blob != NULL ? g_bytes_ref(s->path_blob) : NULL;
    c->swing_text = g_strdup(s->swing_text);
    if (s->events != NULL) {
      c->events = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_event_free);
      for (guint i = 0; i < s->events->len; i++) {
        const ArcwiseSwingEvent *e = g_ptr_array_index(s->events, i);
        ArcwiseSwingEvent *ce = g_new0(ArcwiseSwingEvent, 1);
        ce->name = g_strdup(e->name);
        ce->t_s = e->t_s;
        g_ptr_array_add(c->events, ce);
      }
    }
    if (s->metrics != NULL) {
      c->metrics = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_swing_metric_free);
      for (guint i = 0; i < s->metrics->len; i++) {
        const ArcwiseSwingMetric *m = g_ptr_array_index(s->metrics, i);
        ArcwiseSwingMetric *cm = g_new0(ArcwiseSwingMetric, 1);
        cm->name = g_strdup(m->name);
        cm->unit = g_strdup(m->unit);
        /* Spread the numbers as a coach's library would (+-15 %) so range filters select. */
        cm->value = m->value * g_rand_double_range(rng, 0.85, 1.15);
        g_ptr_array_add(c->metrics, cm);
      }
    }
    g_ptr_array_add(r->swings, c);
  }
  return r;
}

static void
print_usage(FILE *out)
{
  fprintf(out,
          "Usage: arcwise bench library [--swings N] [--import-sessions K] [--keep DIR]\n"
          "\n"
          "Builds an N-swing library (default 10000) from a real simulated session, then times\n"
          "open + list, every filter and reports bytes per swing; imports K simulated sessions\n"
          "(default 4) with real fusion and analysis, with one worker and with every core.\n"
          "--keep DIR leaves the libraries in DIR.\n");
}

int
arcwise_bench_library(int argc, char **argv)
{
  guint n_swings = 10000, n_import = 4;
  const char *keep = NULL;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      print_usage(stdout);
      return 0;
    } else if (strcmp(argv[i], "--swings") == 0 && i + 1 < argc) {
      n_swings = (guint)atoi(argv[++i]);
    } else if (strcmp(argv[i], "--import-sessions") == 0 && i + 1 < argc) {
      n_import = (guint)atoi(argv[++i]);
    } else if (strcmp(argv[i], "--keep") == 0 && i + 1 < argc) {
      keep = argv[++i];
    } else {
      return arcwise_cli_usage_error(CMD, "unknown option '%s'", argv[i]);
    }
  }
  if (n_swings < 10 || n_import < 1)
    return arcwise_cli_usage_error(CMD, "--swings needs at least 10, --import-sessions 1");
  if (!arcwise_pipeline_can_analyse())
    return arcwise_cli_fail(CMD, "this build lacks fusion or analysis");
  g_autofree char *dir = keep != NULL ? g_strdup(keep) : g_dir_make_tmp("arcwise-bench-XXXXXX", NULL);
  g_mkdir_with_parents(dir, 0755);
  g_autoptr(GError) e = NULL;

  /* 1. One real session through the whole pipeline. */
  GBytes *imu = NULL, *depth = NULL;
  char *imu_path = NULL, *depth_path = NULL;
  if (!simulate_session(dir, 501, 8, &imu, &depth, &imu_path, &depth_path))
    return arcwise_cli_fail(CMD, "cannot simulate");
  double t0 = now_ms();
  ArcwisePreparedRecording *model = arcwise_pipeline_prepare(imu_path, imu, depth_path, depth,
                                                             ARCWISE_HAND_RIGHT, "7-iron", NAN,
                                                             NULL, &e);
  double t_prep = now_ms() - t0;
  if (model == NULL)
    return arcwise_cli_fail(CMD, "pipeline: %s", e->message);
  guint per_rec = model->swings->len;
  if (per_rec == 0)
    return arcwise_cli_fail(CMD, "the model session has no swing");
  gsize path_bytes = 0;
  for (guint k = 0; k < per_rec; k++) {
    const ArcwisePreparedSwing *s = g_ptr_array_index(model->swings, k);
    path_bytes += s->path_blob != NULL ? g_bytes_get_size(s->path_blob) : 0;
  }
  printf("model session: %u swings, IMU %zu B -> %zu B, depth %zu B -> %zu B "
         "(zlib 9), fused paths %zu B/swing; pipeline %.0f ms (1 core)\n",
         per_rec, model->imu_size, g_bytes_get_size(model->imu_z), model->depth_size,
         g_bytes_get_size(model->depth_z), path_bytes / per_rec, t_prep);

  /* 2. The big library: sessions of 5 recordings (about 40 swings, a coaching hour), each
   * session one transaction. */
  g_autofree char *lib = g_build_filename(dir, "bench-library.sqlite", NULL);
  g_unlink(lib);
  ArcwiseStore *s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_CREATE, &e);
  if (s == NULL)
    return arcwise_cli_fail(CMD, "%s", e->message);
  static const char *const players[] = {
    "Ada Kestrel", "Bram Oduya", "Cleo Marsh", "Dario Venn", "Esme Tarrow", "Finn Halse",
    "Gita Roon", "Hugo Pell", "Iris Quade", "Jonah Wilde", "Kaia Brook", "Lars Efe",
  };
  static const char *const clubs[] = { "driver", "5-iron", "7-iron", "wedge" };
  static const char *const tags[] = { "grip", "posture", "tempo", "path", "plane", "speed" };
  GRand *rng = g_rand_new_with_seed(42);
  guint n_rec = (n_swings + per_rec - 1) / per_rec, serial = 0;
  /* The first session's player, club and date: the combined filter asks for it. */
  const char *first_player = NULL, *first_club = NULL;
  char first_date[16] = "";
  t0 = now_ms();
  for (guint done = 0; done < n_rec;) {
    ArcwiseImportTarget t;
    arcwise_import_target_init(&t);
    t.player_name = players[g_rand_int_range(rng, 0, G_N_ELEMENTS(players))];
    t.handedness = ARCWISE_HAND_RIGHT;
    char date[16];
    g_snprintf(date, sizeof date, "%04d-%02d-%02d", 2024 + g_rand_int_range(rng, 0, 3),
               g_rand_int_range(rng, 1, 13), g_rand_int_range(rng, 1, 29));
    t.session_date = date;
    t.session_place = "Bay 1";
    t.club_kind = clubs[g_rand_int_range(rng, 0, G_N_ELEMENTS(clubs))];
    g_autoptr(GPtrArray) batch = g_ptr_array_new_with_free_func(
      (GDestroyNotify)arcwise_prepared_recording_free);
    if (first_player == NULL) {
      first_player = t.player_name;
      first_club = t.club_kind;
      g_strlcpy(first_date, date, sizeof first_date);
    }
    for (guint k = 0; k < 5 && done < n_rec; k++, done++)
      g_ptr_array_add(batch, clone_prepared(model, serial++, rng));
    ArcwiseImportResult res = { 0, 0, 0, g_array_new(FALSE, FALSE, sizeof(gint64)) };
    if (!arcwise_store_commit_import(s, &t, batch, "bench", &res, &e)) {
      g_array_unref(res.swing_ids);
      return arcwise_cli_fail(CMD, "%s", e->message);
    }
    /* A tag on about one swing in six. */
    for (guint k = 0; k < res.swing_ids->len; k++)
      if (g_rand_int_range(rng, 0, 6) == 0) {
        const char *tg[] = { tags[g_rand_int_range(rng, 0, G_N_ELEMENTS(tags))], NULL };
        arcwise_store_set_swing_tags(s, g_array_index(res.swing_ids, gint64, k), tg, NULL);
      }
    g_array_unref(res.swing_ids);
  }
  double t_build = now_ms() - t0;
  arcwise_store_close(s);
  GStatBuf stb;
  g_stat(lib, &stb);
  guint total = n_rec * per_rec;
  printf("library: %u swings in %u recordings, built in %.1f s; %.1f MB, %.0f bytes per swing "
         "(raw streams %.0f, fused path %.0f, rows and indexes the rest)\n",
         total, n_rec, t_build / 1e3, (double)stb.st_size / 1e6, (double)stb.st_size / total,
         (double)(g_bytes_get_size(model->imu_z) + g_bytes_get_size(model->depth_z)) / per_rec,
         (double)path_bytes / per_rec);

  /* 3. Open + list, median of 7 (the file is in the page cache after the first). */
  double v[7], c[7];
  guint listed = 0;
  for (int k = 0; k < 7; k++) {
    t0 = now_ms();
    double c0 = cpu_ms();
    s = arcwise_store_open(lib, ARCWISE_STORE_OPEN_DEFAULT, &e);
    GPtrArray *all = s != NULL ? arcwise_store_list_swings(s, NULL, &e) : NULL;
    v[k] = now_ms() - t0;
    c[k] = cpu_ms() - c0;
    listed = all != NULL ? all->len : 0;
    if (all != NULL)
      g_ptr_array_unref(all);
    if (k < 6)
      arcwise_store_close(s);
  }
  double first_open = v[0];
  double load[1] = { NAN };
  g_autofree char *loadavg = NULL;
  if (g_file_get_contents("/proc/loadavg", &loadavg, NULL, NULL))
    load[0] = g_ascii_strtod(loadavg, NULL);
  printf("machine load average %.1f on %u cores: wall times include other programs, CPU times "
         "do not\n", load[0], g_get_num_processors());
  printf("open + list all %u swings: median %.1f ms wall, %.1f ms CPU (first %.1f ms wall)   "
         "[goal <= 100 ms]\n", listed, arcwise_bench_quantile(v, 7, 0.5),
         arcwise_bench_quantile(c, 7, 0.5), first_open);

  /* 4. Filters on the open library. */
  struct { const char *what; ArcwiseSwingFilter f; } fl[6];
  for (int k = 0; k < 6; k++)
    arcwise_swing_filter_init(&fl[k].f);
  fl[0].what = "player";
  fl[0].f.player_name = "Cleo Marsh";
  fl[1].what = "date range (one month)";
  fl[1].f.date_from = "2025-03-01";
  fl[1].f.date_to = "2025-03-31";
  fl[2].what = "club";
  fl[2].f.club_kind = "wedge";
  fl[3].what = "tag";
  fl[3].f.tag = "plane";
  fl[4].what = "metric range (tempo 2.9-3.1)";
  fl[4].f.metric = ARCWISE_METRIC_TEMPO_RATIO;
  fl[4].f.metric_min = 2.9;
  fl[4].f.metric_max = 3.1;
  fl[5].what = "player + club + date";
  fl[5].f.player_name = first_player;
  fl[5].f.club_kind = first_club;
  fl[5].f.date_from = first_date;
  fl[5].f.date_to = first_date;
  double worst = 0, worst_cpu = 0;
  for (int k = 0; k < 6; k++) {
    guint n = 0;
    for (int r = 0; r < 7; r++) {
      t0 = now_ms();
      double c0 = cpu_ms();
      GPtrArray *got = arcwise_store_list_swings(s, &fl[k].f, &e);
      v[r] = now_ms() - t0;
      c[r] = cpu_ms() - c0;
      n = got != NULL ? got->len : 0;
      if (got != NULL)
        g_ptr_array_unref(got);
    }
    double m = arcwise_bench_quantile(v, 7, 0.5), mc = arcwise_bench_quantile(c, 7, 0.5);
    worst = MAX(worst, m);
    worst_cpu = MAX(worst_cpu, mc);
    printf("filter %-30s %6u swings  median %.2f ms wall, %.2f ms CPU\n", fl[k].what, n, m, mc);
  }
  printf("worst filter: %.2f ms wall, %.2f ms CPU   [goal <= 20 ms]\n", worst, worst_cpu);
  t0 = now_ms();
  ArcwiseSwingDetail *d = arcwise_store_load_swing(s, 1, &e);
  printf("load one swing (fused path %zu samples + analysis): %.2f ms\n",
         d != NULL && d->path != NULL ? d->path->n : (size_t)0, now_ms() - t0);
  arcwise_swing_detail_free(d);
  arcwise_store_close(s);
  arcwise_prepared_recording_free(model);
  g_bytes_unref(imu);
  g_bytes_unref(depth);
  g_free(imu_path);
  g_free(depth_path);

  /* 5. Import throughput with real fusion (3 runs each: trust by masking) and analysis. */
  g_autoptr(GPtrArray) pairs = g_ptr_array_new_with_free_func((GDestroyNotify)arcwise_capture_pair_free);
  for (guint k = 0; k < n_import; k++) {
    GBytes *bi = NULL, *bd = NULL;
    ArcwiseCapturePair *p = g_new0(ArcwiseCapturePair, 1);
    if (!simulate_session(dir, 600 + k, 4, &bi, &bd, &p->imu_path, &p->depth_path))
      return arcwise_cli_fail(CMD, "cannot simulate");
    g_bytes_unref(bi);
    g_bytes_unref(bd);
    g_ptr_array_add(pairs, p);
  }
  for (int workers = 1; workers <= 2; workers++) {
    const char *label = workers == 1 ? "1" : "all";
    g_setenv("ARCWISE_STORE_THREADS", workers == 1 ? "1" : "0", TRUE);
    g_autofree char *ilib = g_strdup_printf("%s/import-%d.sqlite", dir, workers);
    g_unlink(ilib);
    s = arcwise_store_open(ilib, ARCWISE_STORE_OPEN_CREATE, &e);
    ArcwiseImportTarget t;
    arcwise_import_target_init(&t);
    t.player_name = "Bench Player";
    t.session_date = "2026-01-01";
    t0 = now_ms();
    ArcwiseImportResult *r = arcwise_store_import(s, &t, pairs, NULL, NULL, NULL, &e);
    double ms = now_ms() - t0;
    if (r == NULL)
      return arcwise_cli_fail(CMD, "import: %s", e->message);
    printf("import %u sessions, %u swings, %s worker%s (%u cores): %.2f s, %.2f swings/s\n",
           r->recordings_added, r->swings_added, label, workers == 1 ? "" : "s",
           g_get_num_processors(), ms / 1e3, r->swings_added / (ms / 1e3));
    arcwise_import_result_free(r);
    arcwise_store_close(s);
  }
  g_unsetenv("ARCWISE_STORE_THREADS");
  g_rand_free(rng);
  if (keep == NULL) {
    g_autoptr(GDir) gd = g_dir_open(dir, 0, NULL);
    const char *name;
    while (gd != NULL && (name = g_dir_read_name(gd)) != NULL) {
      g_autofree char *f = g_build_filename(dir, name, NULL);
      if (g_file_test(f, G_FILE_TEST_IS_DIR)) {
        g_autoptr(GDir) sd = g_dir_open(f, 0, NULL);
        const char *sn;
        while (sd != NULL && (sn = g_dir_read_name(sd)) != NULL) {
          g_autofree char *sf = g_build_filename(f, sn, NULL);
          g_unlink(sf);
        }
        g_rmdir(f);
      } else {
        g_unlink(f);
      }
    }
    g_rmdir(dir);
  }
  return 0;
}
