/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise bench capture`: how fast the IMU reader is on a long recording (the goal: a
 * 10-minute 200 Hz file in well under a second). Writes two files in a private temporary
 * folder: one through the writer (full-precision numbers, up to 17 digits, which take the
 * slower correctly rounded path) and one with six decimals as sensors and spreadsheets write
 * them; reads each several times and prints the best and median times and the throughput. */
#include "cli.h"

#include "arcwise/capture.h"
#include "arcwise/quality.h"
#include "arcwise/units.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

static double
now_s(void)
{
  struct timespec ts;
  clock_gettime(CLOCK_MONOTONIC, &ts);
  return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static int
cmp_double(const void *a, const void *b)
{
  double x = *(const double *)a, y = *(const double *)b;
  return (x > y) - (x < y);
}

/* A plausible wrist signal: gravity, a swing-like burst every 20 s, small noise. */
static AwImuStream *
make_stream(double minutes, double rate_hz)
{
  size_t n = (size_t)(minutes * 60.0 * rate_hz);
  AwImuStream *s = aw_imu_stream_new(n);
  if (s == NULL)
    return NULL;
  unsigned long long x = 12345;
  for (size_t i = 0; i < n; i++) {
    double t = (double)i / rate_hz;
    double ph = fmod(t, 20.0) - 10.0;
    double burst = exp(-ph * ph / 0.08);
    s->t_s[i] = t;
    for (int k = 0; k < 3; k++) {
      x = x * 6364136223846793005ull + 1442695040888963407ull;
      double noise = ((double)(x >> 11) / 9007199254740992.0 - 0.5) * 0.1;
      s->accel_m_s2[i][k] = (k == 2 ? AW_GRAVITY_STANDARD_M_S2 : 0.0) + 60.0 * burst *
                            sin(3.0 * t + k) + noise;
      s->gyro_rad_s[i][k] = 20.0 * burst * cos(2.0 * t + k) + 0.1 * noise;
    }
  }
  s->meta.nominal_rate_hz = rate_hz;
  snprintf(s->meta.device, sizeof s->meta.device, "benchmark signal");
  return s;
}

static int
write_six_decimals(const char *path, const AwImuStream *s)
{
  FILE *f = fopen(path, "w");
  if (f == NULL)
    return -1;
  fprintf(f, "t,ax,ay,az,gx,gy,gz\n");
  for (size_t i = 0; i < s->n; i++)
    fprintf(f, "%.6f,%.6f,%.6f,%.6f,%.7f,%.7f,%.7f\n", s->t_s[i], s->accel_m_s2[i][0],
            s->accel_m_s2[i][1], s->accel_m_s2[i][2], s->gyro_rad_s[i][0], s->gyro_rad_s[i][1],
            s->gyro_rad_s[i][2]);
  return fclose(f);
}

static int
time_reads(const char *label, const char *path, int repeat)
{
  struct stat st;
  if (stat(path, &st) != 0)
    return arcwise_cli_fail("bench", "cannot stat %s", path);
  double *times = calloc((size_t)repeat, sizeof *times);
  size_t n = 0;
  for (int r = 0; r < repeat; r++) {
    AwImuStream *s = NULL;
    AwError err;
    double t0 = now_s();
    AwStatus stt = aw_imu_read_file(path, &s, &err);
    times[r] = now_s() - t0;
    if (stt != AW_OK) {
      char buf[1200];
      free(times);
      return arcwise_cli_fail("bench", "%s", aw_error_format(&err, buf, sizeof buf));
    }
    n = s->n;
    aw_imu_stream_free(s);
  }
  qsort(times, (size_t)repeat, sizeof *times, cmp_double);
  double best = times[0], med = times[repeat / 2];
  double mb = (double)st.st_size / 1e6;
  printf("read %-22s %zu samples, %.1f MB: best %.1f ms, median %.1f ms (%.0f MB/s, %.2f "
         "million samples/s)\n", label, n, mb, best * 1e3, med * 1e3, mb / med,
         (double)n / med / 1e6);
  free(times);
  return 0;
}

int
arcwise_bench_capture(int argc, char **argv)
{
  double minutes = 10.0, rate = 200.0;
  int repeat = 5;
  for (int i = 1; i < argc; i++) {
    if (strcmp(argv[i], "--help") == 0 || strcmp(argv[i], "-h") == 0) {
      printf("Usage: arcwise bench capture [--minutes M] [--rate HZ] [--repeat N]\n"
             "\n"
             "Times the IMU reader on generated files (default: 10 minutes at 200 Hz,\n"
             "5 reads each) and the writer once; prints milliseconds and MB/s.\n");
      return 0;
    }
    if (i + 1 < argc && strcmp(argv[i], "--minutes") == 0)
      minutes = atof(argv[++i]);
    else if (i + 1 < argc && strcmp(argv[i], "--rate") == 0)
      rate = atof(argv[++i]);
    else if (i + 1 < argc && strcmp(argv[i], "--repeat") == 0)
      repeat = atoi(argv[++i]);
    else
      return arcwise_cli_usage_error("bench", "unknown option '%s' for capture", argv[i]);
  }
  if (!(minutes > 0 && minutes <= 240) || !(rate >= AW_IMU_RATE_MIN_HZ && rate <= AW_IMU_RATE_MAX_HZ) ||
      repeat < 1 || repeat > 100)
    return arcwise_cli_usage_error("bench", "--minutes in (0, 240], --rate in 20-2000, "
                                            "--repeat in 1-100");
  char dir[] = "/tmp/arcwise-bench-XXXXXX";
  if (mkdtemp(dir) == NULL)
    return arcwise_cli_fail("bench", "cannot make a temporary folder");
  char full[64], six[64];
  snprintf(full, sizeof full, "%s/imu-full.csv", dir);
  snprintf(six, sizeof six, "%s/imu-six.csv", dir);
  AwImuStream *s = make_stream(minutes, rate);
  int rc = 0;
  if (s == NULL) {
    rmdir(dir);
    return arcwise_cli_fail("bench", "out of memory");
  }
  printf("IMU stream: %.4g minutes at %.4g Hz\n", minutes, rate);
  AwError err;
  double t0 = now_s();
  AwStatus st = aw_imu_write_file(full, s, &err);
  double tw = now_s() - t0;
  if (st != AW_OK || write_six_decimals(six, s) != 0) {
    char buf[1200];
    rc = arcwise_cli_fail("bench", "%s", st != AW_OK ? aw_error_format(&err, buf, sizeof buf)
                                                     : "cannot write the six-decimal file");
  } else {
    printf("write (aw_imu_write_file)   %zu samples: %.1f ms\n", s->n, tw * 1e3);
    rc = time_reads("six decimals", six, repeat);
    if (rc == 0)
      rc = time_reads("writer output", full, repeat);
    if (rc == 0) {
      AwImuStream *r = NULL;
      AwQualityReport *q = NULL;
      if (aw_imu_read_file(full, &r, &err) == AW_OK) {
        t0 = now_s();
        if (aw_imu_quality(r, NULL, &q, &err) == AW_OK)
          printf("quality findings            %zu samples: %.1f ms\n", r->n,
                 (now_s() - t0) * 1e3);
      }
      aw_quality_report_free(q);
      aw_imu_stream_free(r);
    }
  }
  aw_imu_stream_free(s);
  unlink(full);
  unlink(six);
  rmdir(dir);
  return rc;
}
