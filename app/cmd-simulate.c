/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise simulate`: synthetic recordings with ground truth (engine/sim). */
#include "cli.h"

#include "arcwise/sim.h"
#include "arcwise/units.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

static void
usage(FILE *out)
{
  fprintf(out,
          "Usage: arcwise simulate --seed N --level easy|normal|hard --out DIR [OPTION...]\n"
          "\n"
          "Writes a synthetic recording with ground truth into DIR (created if missing):\n"
          "imu.csv and depth.csv in the capture formats, and the truth files truth.csv,\n"
          "events.csv, phases.csv, activities.csv, occlusions.csv, frames.csv and sim.txt\n"
          "(see README.md, \"Simulated data\"). The same options give byte-identical files.\n"
          "\n"
          "Options:\n"
          "  --seed N            seed of the generator (unsigned integer)\n"
          "  --level L           impairments: easy, normal or hard\n"
          "  --view V            camera: face-on (default) or down-the-line\n"
          "  --swings K          K shots; K > 1 makes one continuous session with waggles,\n"
          "                      practice swings and walking between shots (default 1)\n"
          "  --left-handed       a left-handed player (lead wrist: right)\n"
          "  --imu-rate HZ       IMU rate (default 100)\n"
          "  --depth-rate HZ     camera frame rate (default 30)\n"
          "  --gyro-range DPS    gyro full scale, deg/s (level default: 2000, hard 1000)\n"
          "  --accel-range G     accelerometer full scale, g (level default: 16, hard 8)\n"
          "  --out DIR           output folder\n"
          "\n"
          "       arcwise simulate --scenario FILE --out DIR\n"
          "\n"
          "Simulates every session of an invented coaching scenario (demo-data/README.md) into\n"
          "DIR/SESSION/ and writes DIR/manifest.csv.\n"
          "\n"
          "The motion is invented. Swinging a club indoors can hurt people: keep clear space\n"
          "around the player, the camera and the screen.\n");
}

static bool
parse_u64(const char *s, uint64_t *out)
{
  if (s == NULL || *s == 0 || *s == '-')
    return false;
  char *end;
  errno = 0;
  unsigned long long v = strtoull(s, &end, 10);
  if (errno != 0 || *end != 0)
    return false;
  *out = v;
  return true;
}

static bool
parse_double(const char *s, double *out)
{
  if (s == NULL || *s == 0)
    return false;
  char *end;
  errno = 0;
  double v = strtod(s, &end);
  if (errno != 0 || *end != 0)
    return false;
  *out = v;
  return true;
}

int
arcwise_cmd_simulate(int argc, char **argv)
{
  const char *cmd = "simulate";
  uint64_t seed = 0;
  bool have_seed = false, have_level = false, left = false;
  AwSimLevel level = AW_SIM_NORMAL;
  AwSimView view = AW_SIM_FACE_ON;
  long swings = 1;
  double imu_rate = 0, depth_rate = 0, gyro_range_dps = 0, accel_range_g = 0;
  const char *out = NULL, *scenario = NULL;
  for (int i = 1; i < argc; i++) {
    const char *a = argv[i];
    const char *v = i + 1 < argc ? argv[i + 1] : NULL;
    if (strcmp(a, "--help") == 0 || strcmp(a, "-h") == 0) {
      usage(stdout);
      return 0;
    } else if (strcmp(a, "--seed") == 0) {
      if (!parse_u64(v, &seed))
        return arcwise_cli_usage_error(cmd, "--seed needs an unsigned integer");
      have_seed = true;
      i++;
    } else if (strcmp(a, "--level") == 0) {
      if (v == NULL)
        return arcwise_cli_usage_error(cmd, "--level needs easy, normal or hard");
      if (strcmp(v, "easy") == 0) level = AW_SIM_EASY;
      else if (strcmp(v, "normal") == 0) level = AW_SIM_NORMAL;
      else if (strcmp(v, "hard") == 0) level = AW_SIM_HARD;
      else return arcwise_cli_usage_error(cmd, "unknown level '%s' (easy, normal, hard)", v);
      have_level = true;
      i++;
    } else if (strcmp(a, "--view") == 0) {
      if (v != NULL && strcmp(v, "face-on") == 0) view = AW_SIM_FACE_ON;
      else if (v != NULL && strcmp(v, "down-the-line") == 0) view = AW_SIM_DOWN_THE_LINE;
      else return arcwise_cli_usage_error(cmd, "--view needs face-on or down-the-line");
      i++;
    } else if (strcmp(a, "--swings") == 0) {
      uint64_t k;
      if (!parse_u64(v, &k) || k < 1 || k > 500)
        return arcwise_cli_usage_error(cmd, "--swings needs a number from 1 to 500");
      swings = (long)k;
      i++;
    } else if (strcmp(a, "--imu-rate") == 0) {
      if (!parse_double(v, &imu_rate))
        return arcwise_cli_usage_error(cmd, "--imu-rate needs a number (Hz)");
      i++;
    } else if (strcmp(a, "--depth-rate") == 0) {
      if (!parse_double(v, &depth_rate))
        return arcwise_cli_usage_error(cmd, "--depth-rate needs a number (Hz)");
      i++;
    } else if (strcmp(a, "--gyro-range") == 0) {
      if (!parse_double(v, &gyro_range_dps) || !(gyro_range_dps >= 125 && gyro_range_dps <= 4000))
        return arcwise_cli_usage_error(cmd, "--gyro-range needs deg/s from 125 to 4000");
      i++;
    } else if (strcmp(a, "--accel-range") == 0) {
      if (!parse_double(v, &accel_range_g) || !(accel_range_g >= 2 && accel_range_g <= 32))
        return arcwise_cli_usage_error(cmd, "--accel-range needs g from 2 to 32");
      i++;
    } else if (strcmp(a, "--left-handed") == 0) {
      left = true;
    } else if (strcmp(a, "--scenario") == 0) {
      if (v == NULL)
        return arcwise_cli_usage_error(cmd, "--scenario needs a file");
      scenario = v;
      i++;
    } else if (strcmp(a, "--out") == 0) {
      if (v == NULL)
        return arcwise_cli_usage_error(cmd, "--out needs a folder");
      out = v;
      i++;
    } else {
      return arcwise_cli_usage_error(cmd, "unknown option '%s'", a);
    }
  }
  if (scenario != NULL) {
    if (out == NULL || have_seed || have_level)
      return arcwise_cli_usage_error(cmd, "--scenario takes only --out");
    return arcwise_simulate_scenario(scenario, out);
  }
  if (!have_seed || !have_level || out == NULL)
    return arcwise_cli_usage_error(cmd, "--seed, --level and --out are required");
  AwSimConfig c;
  aw_sim_config_default(&c, level);
  c.seed = seed;
  c.view = view;
  c.n_swings = (int)swings;
  c.session_extras = swings > 1;
  c.left_handed = left;
  if (imu_rate != 0)
    c.imu.rate_hz = imu_rate;
  if (depth_rate != 0)
    c.depth.rate_hz = depth_rate;
  if (gyro_range_dps != 0)
    c.imu.gyro_range_rad_s = aw_deg_to_rad(gyro_range_dps);
  if (accel_range_g != 0)
    c.imu.accel_range_m_s2 = aw_g_to_m_s2(accel_range_g);
  AwError err;
  aw_error_clear(&err);
  AwSim *sim = NULL;
  if (aw_sim_new(&c, &sim, &err) != AW_OK)
    return arcwise_cli_usage_error(cmd, "%s", err.message);
  if (mkdir(out, 0777) != 0 && errno != EEXIST) {
    int e = errno;
    aw_sim_free(sim);
    return arcwise_cli_fail(cmd, "%s: cannot create the folder: %s", out, strerror(e));
  }
  AwStatus st = aw_sim_write(sim, out, &err);
  if (st != AW_OK) {
    char buf[1200];
    aw_sim_free(sim);
    return arcwise_cli_fail(cmd, "%s", aw_error_format(&err, buf, sizeof buf));
  }
  const AwSimTruth *tr = aw_sim_truth(sim);
  double t0, t1;
  aw_sim_span(sim, &t0, &t1);
  size_t shots = 0;
  for (size_t i = 0; i < tr->n_swings; i++)
    shots += !tr->swings[i].practice;
  printf("%s: %.1f s, %zu shots, %zu practice swings, %zu IMU samples, %zu depth frames\n", out,
         t1 - t0, shots, tr->n_swings - shots, aw_sim_imu(sim)->n, aw_sim_depth(sim)->n);
  aw_sim_free(sim);
  return 0;
}
