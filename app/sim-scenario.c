/* SPDX-License-Identifier: GPL-3.0-or-later */
/* `arcwise simulate --scenario FILE --out DIR`: a whole invented coaching scenario (players,
 * dated sessions, per-session swing styles) simulated into capture folders plus a manifest.
 * Both formats are line-oriented CSV, documented in demo-data/README.md. */
#include "cli.h"

#include "arcwise/sim.h"
#include "arcwise/units.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#define MAX_FIELDS 16
#define MAX_PLAYERS 32

typedef struct {
  char id[32];
  char name[96];
  bool left;
  double arm_m;
} Player;

static int
split(char *line, char **f, int max)
{
  int n = 0;
  char *p = line;
  while (n < max) {
    f[n++] = p;
    char *c = strchr(p, ',');
    if (c == NULL)
      break;
    *c = 0;
    p = c + 1;
  }
  return n;
}

/* Column (1-based) of field k in the original line, for error messages. */
static long
col_of(char **f, int k, const char *line0)
{
  return (long)(f[k] - line0) + 1;
}

static bool
num(const char *s, double *out)
{
  char *end;
  errno = 0;
  double v = strtod(s, &end);
  if (s[0] == 0 || *end != 0 || errno != 0 || v != v)
    return false;
  *out = v;
  return true;
}

static double
club_length_m(const char *club)
{
  /* Typical lengths: driver 45.5 in (REFERENCES.md §6, secondary source); irons and wedges
   * from memory (5-iron 38 in, 7-iron 37 in, wedge 35.5 in). */
  if (strcmp(club, "driver") == 0) return aw_inch_to_m(45.5);
  if (strcmp(club, "5-iron") == 0) return aw_inch_to_m(38.0);
  if (strcmp(club, "7-iron") == 0) return aw_inch_to_m(37.0);
  if (strcmp(club, "wedge") == 0) return aw_inch_to_m(35.5);
  return -1;
}

/* Applies "key=value key=value" style settings. Returns the offending key or NULL. */
static const char *
apply_style(char *spec, AwSimConfig *c, char *bad, size_t bad_size)
{
  AwSwingStyle *s = &c->style;
  char *save = NULL;
  for (char *tok = strtok_r(spec, " ", &save); tok != NULL; tok = strtok_r(NULL, " ", &save)) {
    char *eq = strchr(tok, '=');
    double v;
    if (eq == NULL || !num(eq + 1, &v)) {
      snprintf(bad, bad_size, "%s", tok);
      return bad;
    }
    *eq = 0;
    if (strcmp(tok, "tempo") == 0) s->tempo = v;
    else if (strcmp(tok, "backswing") == 0) s->backswing_s = v;
    else if (strcmp(tok, "follow") == 0) s->follow_s = v;
    else if (strcmp(tok, "speed") == 0) s->hand_speed_impact_m_s = v;
    else if (strcmp(tok, "bplane") == 0) s->backswing_plane_rad = aw_deg_to_rad(v);
    else if (strcmp(tok, "dplane") == 0) s->downswing_plane_rad = aw_deg_to_rad(v);
    else if (strcmp(tok, "yaw") == 0) s->path_yaw_rad = aw_deg_to_rad(v);
    else if (strcmp(tok, "shift") == 0) s->lateral_shift_m = v;
    else if (strcmp(tok, "top") == 0) s->arm_top_rad = aw_deg_to_rad(v);
    else if (strcmp(tok, "hinge") == 0) s->hinge_top_rad = aw_deg_to_rad(v);
    else if (strcmp(tok, "var") == 0) c->style_variation = v;
    else {
      snprintf(bad, bad_size, "%s", tok);
      return bad;
    }
  }
  return NULL;
}

int
arcwise_simulate_scenario(const char *path, const char *out_dir)
{
  const char *cmd = "simulate";
  FILE *in = fopen(path, "r");
  if (in == NULL)
    return arcwise_cli_fail(cmd, "%s: cannot open: %s", path, strerror(errno));
  if (mkdir(out_dir, 0777) != 0 && errno != EEXIST) {
    fclose(in);
    return arcwise_cli_fail(cmd, "%s: cannot create the folder: %s", out_dir, strerror(errno));
  }
  char man_path[1200], man_tmp[1300];
  snprintf(man_path, sizeof man_path, "%s/manifest.csv", out_dir);
  snprintf(man_tmp, sizeof man_tmp, "%s.partial", man_path);
  FILE *man = fopen(man_tmp, "w");
  if (man == NULL) {
    fclose(in);
    return arcwise_cli_fail(cmd, "%s: cannot create: %s", man_tmp, strerror(errno));
  }
  fprintf(man, "# Arcwise demo library manifest (format: demo-data/README.md). The studio, the people\n"
               "# and their swings are invented; the captures are simulated.\n");
  fprintf(man, "format,arcwise-demo-manifest,1\n");
  Player players[MAX_PLAYERS];
  int n_players = 0;
  char line[2048], line0[2048];
  long lineno = 0;
  int rc = 0;
  size_t n_sessions = 0, n_shots = 0;
#define FAIL(col, ...)                                                                    \
  do {                                                                                    \
    fprintf(stderr, "arcwise %s: %s:%ld:%ld: ", cmd, path, lineno, (long)(col));          \
    fprintf(stderr, __VA_ARGS__);                                                         \
    fputc('\n', stderr);                                                                  \
    rc = 1;                                                                               \
    goto done;                                                                            \
  } while (0)
  while (fgets(line, sizeof line, in) != NULL) {
    lineno++;
    size_t len = strlen(line);
    while (len > 0 && (line[len - 1] == '\n' || line[len - 1] == '\r'))
      line[--len] = 0;
    if (len == 0 || line[0] == '#')
      continue;
    memcpy(line0, line, len + 1);
    char *f[MAX_FIELDS];
    int nf = split(line, f, MAX_FIELDS);
    if (strcmp(f[0], "studio") == 0 || strcmp(f[0], "coach") == 0) {
      fprintf(man, "%s\n", line0);
    } else if (strcmp(f[0], "player") == 0) {
      /* player,ID,NAME,HANDED,LEVEL,HANDICAP,ARM_M */
      if (nf != 7)
        FAIL(1, "a player line has 7 fields, this one %d", nf);
      if (n_players == MAX_PLAYERS)
        FAIL(1, "more than %d players", MAX_PLAYERS);
      Player *p = &players[n_players];
      snprintf(p->id, sizeof p->id, "%s", f[1]);
      snprintf(p->name, sizeof p->name, "%s", f[2]);
      if (strcmp(f[3], "left") != 0 && strcmp(f[3], "right") != 0)
        FAIL(col_of(f, 3, line), "handedness must be left or right, not '%s'", f[3]);
      p->left = strcmp(f[3], "left") == 0;
      double hcp;
      if (!num(f[5], &hcp))
        FAIL(col_of(f, 5, line), "'%s' is not a number (handicap)", f[5]);
      if (!num(f[6], &p->arm_m) || p->arm_m < 0.4 || p->arm_m > 0.9)
        FAIL(col_of(f, 6, line), "arm length must be a number from 0.4 to 0.9 m");
      n_players++;
      fprintf(man, "player,%s,%s,%s,%s,%s\n", f[1], f[2], f[3], f[4], f[5]);
    } else if (strcmp(f[0], "session") == 0) {
      /* session,ID,PLAYER,DATE,CLUB,VIEW,LEVEL,SEED,SHOTS,STYLE */
      if (nf != 10)
        FAIL(1, "a session line has 10 fields, this one %d", nf);
      const Player *p = NULL;
      for (int i = 0; i < n_players; i++)
        if (strcmp(players[i].id, f[2]) == 0)
          p = &players[i];
      if (p == NULL)
        FAIL(col_of(f, 2, line), "unknown player '%s' (declare it above)", f[2]);
      double club = club_length_m(f[4]);
      if (club < 0)
        FAIL(col_of(f, 4, line), "unknown club '%s' (driver, 5-iron, 7-iron, wedge)", f[4]);
      AwSimLevel level;
      if (strcmp(f[6], "easy") == 0) level = AW_SIM_EASY;
      else if (strcmp(f[6], "normal") == 0) level = AW_SIM_NORMAL;
      else if (strcmp(f[6], "hard") == 0) level = AW_SIM_HARD;
      else FAIL(col_of(f, 6, line), "unknown level '%s'", f[6]);
      AwSimConfig c;
      aw_sim_config_default(&c, level);
      if (strcmp(f[5], "face-on") == 0) c.view = AW_SIM_FACE_ON;
      else if (strcmp(f[5], "down-the-line") == 0) c.view = AW_SIM_DOWN_THE_LINE;
      else FAIL(col_of(f, 5, line), "unknown view '%s'", f[5]);
      double seed, shots;
      if (!num(f[7], &seed) || seed < 0 || seed != (double)(uint64_t)seed)
        FAIL(col_of(f, 7, line), "the seed must be a whole number");
      if (!num(f[8], &shots) || shots < 1 || shots > 50 || shots != (int)shots)
        FAIL(col_of(f, 8, line), "shots must be a whole number from 1 to 50");
      c.seed = (uint64_t)seed;
      c.n_swings = (int)shots;
      c.session_extras = true;
      c.truth_rate_hz = 100;
      c.style_fixed = true;
      aw_swing_style_default(&c.style);
      c.style.left_handed = p->left;
      c.style.arm_length_m = p->arm_m;
      c.style.club_length_m = club;
      char bad[128];
      if (apply_style(f[9], &c, bad, sizeof bad) != NULL)
        FAIL(col_of(f, 9, line), "bad style setting '%s'", bad);
      AwSim *sim = NULL;
      AwError err;
      aw_error_clear(&err);
      if (aw_sim_new(&c, &sim, &err) != AW_OK)
        FAIL(col_of(f, 9, line), "%s", err.message);
      char dir[1200];
      snprintf(dir, sizeof dir, "%s/%s", out_dir, f[1]);
      if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        aw_sim_free(sim);
        FAIL(1, "%s: cannot create the folder: %s", dir, strerror(errno));
      }
      if (aw_sim_write(sim, dir, &err) != AW_OK) {
        char buf[1200];
        aw_sim_free(sim);
        FAIL(1, "%s", aw_error_format(&err, buf, sizeof buf));
      }
      double t0, t1;
      aw_sim_span(sim, &t0, &t1);
      fprintf(man, "session,%s,%s,%s,%s,%s,%s,%s,%s,%s/imu.csv,%s/depth.csv,%s/truth.csv,"
                   "%s/events.csv,%.1f\n", f[1], f[2], f[3], f[4], f[5], f[6], f[7], f[1], f[1],
              f[1], f[1], f[1], t1 - t0);
      const AwSimTruth *tr = aw_sim_truth(sim);
      for (size_t i = 0; i < tr->n_swings; i++) {
        const AwSimSwing *s = &tr->swings[i];
        n_shots += !s->practice;
        fprintf(man, "swing,%s,%zu,%s,%.4f,%.4f,%.4f,%.4f,%.4f,%.3f,%.2f,%.1f\n", f[1], i,
                s->practice ? (s->half ? "practice-half" : "practice") : "shot",
                s->t_address_s, s->t_takeaway_s, s->t_top_s, s->t_impact_s, s->t_finish_s,
                (s->t_top_s - s->t_takeaway_s) / (s->t_impact_s - s->t_top_s),
                s->hand_speed_impact_m_s, s->club_speed_impact_m_s);
      }
      aw_sim_free(sim);
      n_sessions++;
    } else {
      FAIL(1, "unknown record '%s' (studio, coach, player, session)", f[0]);
    }
  }
  if (ferror(in))
    FAIL(0, "read error");
done:
  fclose(in);
  if (fclose(man) != 0 && rc == 0) {
    fprintf(stderr, "arcwise %s: %s: write failed\n", cmd, man_tmp);
    rc = 1;
  }
  if (rc != 0) {
    remove(man_tmp);
    return rc;
  }
  if (rename(man_tmp, man_path) != 0) {
    remove(man_tmp);
    return arcwise_cli_fail(cmd, "%s: cannot rename into place: %s", man_path, strerror(errno));
  }
  printf("%s: %d players, %zu sessions, %zu shots\n", man_path, n_players, n_sessions, n_shots);
  return 0;
#undef FAIL
}
