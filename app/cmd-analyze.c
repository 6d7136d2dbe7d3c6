/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise analyze`: the swings of one capture, their events, phases, metrics and trust. */
#include "cli.h"
#include "analysis-output.h"

#include <stdio.h>
#include <string.h>

static void
usage(FILE *out)
{
  fprintf(out,
          "Usage: arcwise analyze --imu IMU.csv --depth DEPTH.csv [OPTION...]\n"
          "\n"
          "Fuses the two capture streams, finds every swing in the recording and prints its\n"
          "events (address, takeaway, top, impact, finish, on the depth camera's clock),\n"
          "phases with the sensor that carried each, coaching metrics and data quality.\n"
          "\n"
          "Options:\n"
          "  --club NAME          driver, 3w, 5w, hybrid, 3i..9i, pw, gw, sw, lw (default 7i)\n"
          "  --club-length M      measured club length in metres (0.457 to 1.219)\n"
          "  --handed right|left  the player's handedness (default: from the IMU file's wrist\n"
          "                       metadata, else right)\n"
          "  --json               one JSON document on stdout\n"
          "\n"
          "Caution: swinging a club indoors can hurt people. Keep clear space around the\n"
          "player, the camera and the screen. The numbers are estimates from consumer sensors,\n"
          "not a medical or equipment assessment.\n");
}

int
arcwise_cmd_analyze(int argc, char **argv)
{
  const char *imu = NULL, *depth = NULL;
  bool json = false, handed_given = false;
  AwAnalysisSettings set;
  aw_analysis_settings_default(&set);
  for (int i = 1; i < argc; i++) {
    int r = arcwise_parse_analysis_option("analyze", argc, argv, &i, &set, &handed_given);
    if (r < 0)
      return 2;
    if (r > 0)
      continue;
    if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      usage(stdout);
      return 0;
    } else if (strcmp(argv[i], "--json") == 0) {
      json = true;
    } else if (strcmp(argv[i], "--imu") == 0 && i + 1 < argc) {
      imu = argv[++i];
    } else if (strcmp(argv[i], "--depth") == 0 && i + 1 < argc) {
      depth = argv[++i];
    } else {
      return arcwise_cli_usage_error("analyze", "unexpected argument '%s'", argv[i]);
    }
  }
  if (imu == NULL || depth == NULL)
    return arcwise_cli_usage_error("analyze", "both --imu IMU.csv and --depth DEPTH.csv are needed");
  ArcwiseCapture cap;
  if (!arcwise_capture_analyse("analyze", imu, depth, &set, handed_given, &cap))
    return 1;
  int rc = 0;
  if (json) {
    ArcwiseJson j;
    arcwise_json_init(&j, stdout, true);
    arcwise_json_analysis(&j, cap.analysis);
    if (!arcwise_json_finish(&j))
      rc = arcwise_cli_fail("analyze", "could not write the JSON output");
  } else {
    arcwise_print_analysis(stdout, cap.analysis);
    if (fflush(stdout) != 0)
      rc = arcwise_cli_fail("analyze", "could not write the output");
  }
  arcwise_capture_clear(&cap);
  return rc;
}
