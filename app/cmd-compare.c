/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise compare A B`: two swings laid over each other. */
#include "cli.h"
#include "reference-swing.h"
#include "analysis-output.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

static void
usage(FILE *out)
{
  fprintf(out,
          "Usage: arcwise compare A B [OPTION...]\n"
          "\n"
          "Compares two swings. A and B are each a folder holding imu.csv and depth.csv, or a\n"
          "pair of files IMU.csv DEPTH.csv. Both are fused and analysed; the swings are aligned\n"
          "in space (each at its own address position and target line) and in time (a\n"
          "piecewise-linear warp between address, takeaway, top, impact and finish), then the\n"
          "path deviation per phase, the timing differences and the metric differences (B\n"
          "minus A) are printed.\n"
          "\n"
          "Options:\n"
          "  --swing-a N, --swing-b N  which swing of a recording holding several (default 1)\n"
          "  --reference ID            B is reference swing ID of the library (optical motion\n"
          "                            capture imported with 'arcwise library import-c3d');\n"
          "                            --library FILE, else $ARCWISE_LIBRARY\n"
          "  --club NAME, --club-length M, --handed right|left   as for 'arcwise analyze'\n"
          "  --json                    one JSON document on stdout\n");
}

static bool
is_dir(const char *p)
{
  struct stat st;
  return stat(p, &st) == 0 && S_ISDIR(st.st_mode);
}

static void
json_side(ArcwiseJson *j, const char *key, const char *src, size_t index, const AwSwing *s)
{
  arcwise_json_begin_object(j, key);
  arcwise_json_string(j, "source", src);
  arcwise_json_integer(j, "swing", (long long)index + 1);
  arcwise_json_swing_members(j, s);
  arcwise_json_end_object(j);
}

int
arcwise_cmd_compare(int argc, char **argv)
{
  const char *pos[4];
  int npos = 0;
  bool json = false, handed_given = false;
  long pick[2] = { 1, 1 };
  long long ref_id = 0;
  const char *library = NULL;
  AwAnalysisSettings set;
  aw_analysis_settings_default(&set);
  for (int i = 1; i < argc; i++) {
    int r = arcwise_parse_analysis_option("compare", argc, argv, &i, &set, &handed_given);
    if (r < 0)
      return 2;
    if (r > 0)
      continue;
    if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      usage(stdout);
      return 0;
    } else if (strcmp(argv[i], "--json") == 0) {
      json = true;
    } else if ((strcmp(argv[i], "--swing-a") == 0 || strcmp(argv[i], "--swing-b") == 0) &&
               i + 1 < argc) {
      char *end;
      long v = strtol(argv[i + 1], &end, 10);
      if (*end != 0 || v < 1)
        return arcwise_cli_usage_error("compare", "%s needs a swing number from 1", argv[i]);
      pick[argv[i][8] == 'a' ? 0 : 1] = v;
      i++;
    } else if (strcmp(argv[i], "--reference") == 0 && i + 1 < argc) {
      char *end;
      ref_id = strtoll(argv[++i], &end, 10);
      if (*end != 0 || ref_id < 1)
        return arcwise_cli_usage_error("compare", "--reference needs a reference number");
    } else if (strcmp(argv[i], "--library") == 0 && i + 1 < argc) {
      library = argv[++i];
    } else if (argv[i][0] == '-' && argv[i][1] != 0) {
      return arcwise_cli_usage_error("compare", "unknown option '%s'", argv[i]);
    } else if (npos < 4) {
      pos[npos++] = argv[i];
    } else {
      return arcwise_cli_usage_error("compare", "too many captures given");
    }
  }
  /* Two sides, each a folder or two files. */
  char paths[2][2][4096];
  int k = 0;
  int sides = ref_id > 0 ? 1 : 2;
  for (int side = 0; side < sides; side++) {
    if (k >= npos)
      return arcwise_cli_usage_error("compare", "give two swings: folders or IMU.csv DEPTH.csv pairs");
    if (is_dir(pos[k])) {
      snprintf(paths[side][0], sizeof paths[side][0], "%s/imu.csv", pos[k]);
      snprintf(paths[side][1], sizeof paths[side][1], "%s/depth.csv", pos[k]);
      k++;
    } else {
      if (k + 1 >= npos)
        return arcwise_cli_usage_error("compare", "'%s' is not a folder, so it needs its depth "
                                                  "file after it", pos[k]);
      snprintf(paths[side][0], sizeof paths[side][0], "%s", pos[k]);
      snprintf(paths[side][1], sizeof paths[side][1], "%s", pos[k + 1]);
      k += 2;
    }
  }
  if (k != npos)
    return arcwise_cli_usage_error("compare", "too many captures given");

  ArcwiseCapture cap[2];
  if (!arcwise_capture_analyse("compare", paths[0][0], paths[0][1], &set, handed_given, &cap[0]))
    return 1;
  bool ok_b;
  if (ref_id > 0) {
    /* B from the library: the reference's handedness is the player's swing as captured; give
     * the analysis the one found for A so both swing frames are built the same way. */
    char *lp = library ? g_strdup(library) : arcwise_store_chosen_path();
    GError *ge = NULL;
    ArcwiseStore *st = arcwise_store_open(lp, ARCWISE_STORE_OPEN_READONLY, &ge);
    g_free(lp);
    ArcwiseReference *ref = st ? arcwise_store_load_reference(st, ref_id, &ge) : NULL;
    if (ref == NULL) {
      arcwise_cli_fail("compare", "%s", ge ? ge->message : "cannot load the reference");
      ok_b = false;
    } else {
      AwAnalysisSettings set_b = set;
      if (!handed_given && cap[0].analysis->n_swings > 0)
        set_b.handed = cap[0].analysis->swings[0].handed;
      ok_b = arcwise_reference_analyse("compare", ref, &set_b, &cap[1]);
      snprintf(paths[1][1], sizeof paths[1][1], "reference %lld (%s)", ref_id, ref->name);
    }
    g_clear_error(&ge);
    arcwise_reference_free(ref);
    if (st)
      arcwise_store_close(st);
  } else {
    ok_b = arcwise_capture_analyse("compare", paths[1][0], paths[1][1], &set, handed_given,
                                   &cap[1]);
  }
  if (!ok_b) {
    arcwise_capture_clear(&cap[0]);
    return 1;
  }
  int rc = 0;
  for (int side = 0; side < 2 && rc == 0; side++)
    if ((size_t)pick[side] > cap[side].analysis->n_swings)
      rc = arcwise_cli_fail("compare", "%s holds %zu swing(s), not %ld", paths[side][1],
                            cap[side].analysis->n_swings, pick[side]);
  if (rc != 0) {
    arcwise_capture_clear(&cap[0]);
    arcwise_capture_clear(&cap[1]);
    return rc;
  }
  const AwSwing *a = &cap[0].analysis->swings[pick[0] - 1];
  const AwSwing *b = &cap[1].analysis->swings[pick[1] - 1];
  AwSwingComparison cmp;
  AwError err;
  if (aw_swing_compare(&cap[0].traj, a, &cap[1].traj, b, &cmp, &err) != AW_OK) {
    rc = arcwise_cli_fail("compare", "%s", err.message);
  } else if (json) {
    ArcwiseJson j;
    arcwise_json_init(&j, stdout, true);
    arcwise_json_begin_object(&j, NULL);
    json_side(&j, "a", paths[0][1], (size_t)pick[0] - 1, a);
    json_side(&j, "b", paths[1][1], (size_t)pick[1] - 1, b);
    arcwise_json_begin_object(&j, "alignment");
    arcwise_json_string(&j, "space", "each swing in its own swing frame: origin at the hands at "
                                     "address, x toward its target line, z up");
    arcwise_json_string(&j, "time", "piecewise-linear warp between address, takeaway, top, "
                                    "impact and finish");
    arcwise_json_end_object(&j);
    arcwise_json_number(&j, "path_deviation_rms_cm", 100 * cmp.overall_rms_m);
    arcwise_json_begin_array(&j, "phases");
    for (int p = 0; p < AW_PHASE_COUNT_; p++) {
      arcwise_json_begin_object(&j, NULL);
      arcwise_json_string(&j, "name", arcwise_phase_name((AwPhaseKind)p));
      arcwise_json_number(&j, "deviation_rms_cm", 100 * cmp.phase_rms_m[p]);
      arcwise_json_number(&j, "deviation_max_cm", 100 * cmp.phase_max_m[p]);
      arcwise_json_number(&j, "duration_diff_s", cmp.phase_duration_diff_s[p]);
      arcwise_json_end_object(&j);
    }
    arcwise_json_end_array(&j);
    arcwise_json_begin_object(&j, "event_diff_from_takeaway_s");
    for (int e = 0; e < AW_EVENT_COUNT_; e++)
      arcwise_json_number(&j, arcwise_event_name((AwEventKind)e), cmp.event_dt_s[e]);
    arcwise_json_end_object(&j);
    arcwise_json_begin_object(&j, "metric_diff");
    for (int m = 0; m < AW_METRIC_COUNT_; m++)
      arcwise_json_number(&j, aw_metric_info((AwMetricId)m)->key, cmp.metric_diff[m]);
    arcwise_json_end_object(&j);
    arcwise_json_end_object(&j);
    if (!arcwise_json_finish(&j))
      rc = arcwise_cli_fail("compare", "could not write the JSON output");
  } else {
    printf("A: %s, swing %ld\nB: %s, swing %ld\n\n", paths[0][1], pick[0], paths[1][1], pick[1]);
    printf("Path deviation (aligned at address and target line, warped by events): %.1f cm\n",
           100 * cmp.overall_rms_m);
    printf("  phase             rms cm   max cm   duration B-A\n");
    for (int p = 0; p < AW_PHASE_COUNT_; p++)
      printf("  %-15s %8.1f %8.1f   %+8.3f s\n", arcwise_phase_name((AwPhaseKind)p),
             100 * cmp.phase_rms_m[p], 100 * cmp.phase_max_m[p], cmp.phase_duration_diff_s[p]);
    printf("\n  metric                                                  A            B        B-A\n");
    for (int m = 0; m < AW_METRIC_COUNT_; m++) {
      const AwMetricInfo *mi = aw_metric_info((AwMetricId)m);
      printf("  %-46s %12.4g %12.4g %+10.4g %s\n", mi->label, a->metrics[m], b->metrics[m],
             cmp.metric_diff[m], mi->unit);
    }
    printf("\nThe numbers are estimates from consumer sensors, not a medical or equipment "
           "assessment.\n");
  }
  arcwise_capture_clear(&cap[0]);
  arcwise_capture_clear(&cap[1]);
  return rc;
}
