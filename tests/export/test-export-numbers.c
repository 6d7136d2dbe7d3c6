/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Writes the CSV and JSON numbers of a simulated session of three shots (the analysis run on
 * the simulator's true path) into OUTDIR, plus expected.txt with the values the Python side
 * must find after parsing the files back. Usage: test-export-numbers OUTDIR */
#include "testutil.h"

#include "export-numbers.h"
#include "export-sim.h"

#include <string.h>

int
main(int argc, char **argv)
{
  if (argc < 2)
    return 2;
  AwSimConfig cfg;
  aw_sim_config_default(&cfg, AW_SIM_EASY);
  cfg.seed = 7;
  cfg.n_swings = 3;
  cfg.session_extras = false;
  AwSim *sim = NULL;
  AwError e;
  aw_error_clear(&e);
  AW_CHECK(aw_sim_new(&cfg, &sim, &e) == AW_OK);
  if (sim == NULL)
    return 1;
  AwFusedPath *path = arcwise_sim_path_new(sim);
  AwTrajectory tr;
  aw_trajectory_from_fused(path, 0, 0, &tr);
  AwAnalysisSettings set;
  aw_analysis_settings_default(&set);
  AwAnalysis *an = NULL;
  AW_CHECK(aw_analyze(&tr, &set, &an, &e) == AW_OK);
  if (an == NULL) {
    fprintf(stderr, "%s\n", e.message);
    return 1;
  }
  AW_CHECK(an->n_swings >= 1);
  ArcwiseNumbersSwing rows[8];
  size_t n = 0;
  for (size_t i = 0; i < an->n_swings && n < 7; i++, n++)
    rows[n] = (ArcwiseNumbersSwing){ .swing_id = (long long)(i + 1), .player = "Ines \"Ivy\" Moreau",
                                     .session_date = "2026-11-14", .session_place = "Bay 2, north",
                                     .club = "7-iron", .index_in_recording = (unsigned)i,
                                     .rating = 3, .tags = "tempo, drill", .notes = "line one\nline two",
                                     .swing = &an->swings[i], .path = path };
  /* A swing not analysed yet: every analysis field empty / null. */
  rows[n++] = (ArcwiseNumbersSwing){ .swing_id = 99, .player = "Ines \"Ivy\" Moreau" };
  char p[1024];
  snprintf(p, sizeof p, "%s/numbers.csv", argv[1]);
  FILE *fp = fopen(p, "w");
  AW_CHECK(fp && arcwise_numbers_write_csv(fp, rows, n));
  fclose(fp);
  snprintf(p, sizeof p, "%s/numbers.json", argv[1]);
  fp = fopen(p, "w");
  AW_CHECK(fp && arcwise_numbers_write_json(fp, ARCWISE_SCOPE_SESSION, "Session 2026-11-14",
                                            rows, n, true));
  fclose(fp);
  snprintf(p, sizeof p, "%s/expected.txt", argv[1]);
  fp = fopen(p, "w");
  fprintf(fp, "swings %zu\n", n);
  for (size_t i = 0; i + 1 < n; i++) {
    const AwSwing *s = &an->swings[i];
    fprintf(fp, "swing %zu path_n %zu tempo_ratio %.17g impact %.17g t0 %.17g\n", i,
            s->i_end - s->i_start, s->metrics[AW_METRIC_TEMPO_RATIO],
            s->events[AW_EVENT_IMPACT].t_s, path->t_s[s->i_start]);
  }
  fclose(fp);
  aw_analysis_free(an);
  arcwise_sim_path_free(path);
  aw_sim_free(sim);
  return AW_TEST_END();
}
