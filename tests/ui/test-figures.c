/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The sheet's numbers: they are the swing analysis's own (the library's stored metrics), not
 * recomputed; units convert by the exact definitions; the trust band and the notes follow the
 * analysis's per-phase sensor dominance. No display needed. */
#include <string.h>

#include "arcwise-figures.h"
#include "arcwise-swing-model.h"
#include "testutil.h"

static gboolean
contains(const char *hay, const char *needle)
{
  return hay != NULL && needle != NULL && strstr(hay, needle) != NULL;
}

static const float zero_shift[3] = { 0, 0, 0 };

int
main(void)
{
  ArcwiseSwingModel *m = arcwise_swing_model_new_demo(0, 1);
  AW_CHECK(m != NULL && m->n > 10);

  /* Without an analysis the path gives the timings and speeds, and nothing is made up for
   * what only the analysis knows. */
  ArcwiseFigure f[ARCWISE_N_FIGURES];
  arcwise_figures_for_model(m, f);
  AW_CHECK(isfinite(f[0].value) && isfinite(f[3].value));
  for (int i = 7; i < ARCWISE_N_FIGURES; i++)
    AW_CHECK(!isfinite(f[i].value));
  g_autofree char *q0 = arcwise_quality_text(m, ARCWISE_UNITS_METRIC);
  AW_CHECK(contains(q0, "Not analysed yet"));
  AW_CHECK(contains(q0, "estimate"));

  /* With one, every figure is the stored metric itself. */
  AwSwing sw;
  memset(&sw, 0, sizeof sw);
  for (int k = 0; k < AW_METRIC_COUNT_; k++)
    sw.metrics[k] = 100.0 + k;   /* distinct values no path measurement would give */
  sw.quality.notes = AW_NOTE_TOP_HIDDEN | AW_NOTE_IMPACT_ESTIMATED;
  sw.phases[AW_PHASE_BACKSWING].dominance = AW_DOMINANCE_CAMERA;
  sw.phases[AW_PHASE_DOWNSWING].dominance = AW_DOMINANCE_IMU;
  sw.phases[AW_PHASE_FOLLOW_THROUGH].dominance = AW_DOMINANCE_SHARED;
  arcwise_swing_model_set_analysis(m, &sw);
  arcwise_figures_for_model(m, f);
  static const AwMetricId ids[ARCWISE_N_FIGURES] = {
    AW_METRIC_BACKSWING_S, AW_METRIC_DOWNSWING_S, AW_METRIC_TEMPO_RATIO,
    AW_METRIC_PEAK_HAND_SPEED_M_S, AW_METRIC_HAND_SPEED_IMPACT_M_S, AW_METRIC_TOP_HEIGHT_M,
    AW_METRIC_PATH_LENGTH_M, AW_METRIC_CLUB_SPEED_IMPACT_M_S, AW_METRIC_PLANE_BACKSWING_DEG,
    AW_METRIC_PLANE_DOWNSWING_DEG, AW_METRIC_PATH_DIRECTION_DEG,
  };
  for (int i = 0; i < ARCWISE_N_FIGURES; i++)
    AW_CHECK_NEAR(f[i].value, 100.0 + ids[i], 0.0);

  /* Units by their exact definitions (international yard and pound, 1959; NIST SP 811,
   * appendix B): 1 in = 0.0254 m, 1 mph = 0.44704 m/s. */
  ArcwiseFigure speed = { "", 44.704, ARCWISE_FIGURE_SPEED };
  ArcwiseFigure len = { "", 0.254, ARCWISE_FIGURE_LENGTH };
  g_autofree char *mph = arcwise_figure_format(&speed, ARCWISE_UNITS_IMPERIAL, FALSE);
  g_autofree char *mps = arcwise_figure_format(&speed, ARCWISE_UNITS_METRIC, FALSE);
  g_autofree char *in = arcwise_figure_format(&len, ARCWISE_UNITS_IMPERIAL, FALSE);
  g_autofree char *cm = arcwise_figure_format(&len, ARCWISE_UNITS_METRIC, FALSE);
  AW_CHECK(g_str_equal(mph, "100.0 mph"));
  AW_CHECK(g_str_equal(mps, "44.7 m/s"));
  AW_CHECK(g_str_equal(in, "10.0 in"));
  AW_CHECK(g_str_equal(cm, "25.4 cm"));

  /* Differences always carry a sign; one that rounds to nothing at the shown precision reads
   * "+0.0", not "-0.0" (the values sit well clear of a rounding tie). */
  const struct { double v; ArcwiseFigureKind k; const char *want; } diffs[] = {
    { -0.04, ARCWISE_FIGURE_SPEED, "+0.0 m/s" }, { -0.17, ARCWISE_FIGURE_TIME, "-0.17 s" },
    { 0.113, ARCWISE_FIGURE_RATIO, "+0.11" }, { -0.113, ARCWISE_FIGURE_RATIO, "-0.11" },
    { -0.002, ARCWISE_FIGURE_RATIO, "+0.00" }, { -0.625, ARCWISE_FIGURE_LENGTH, "-62.5 cm" },
  };
  for (size_t i = 0; i < G_N_ELEMENTS(diffs); i++) {
    ArcwiseFigure d = { "", diffs[i].v, diffs[i].k };
    g_autofree char *txt = arcwise_figure_format(&d, ARCWISE_UNITS_METRIC, TRUE);
    if (!g_str_equal(txt, diffs[i].want))
      g_printerr("difference %g formatted as '%s', want '%s'\n", diffs[i].v, txt, diffs[i].want);
    AW_CHECK(g_str_equal(txt, diffs[i].want));
  }

  /* The band is coloured by who carried each phase, sample by sample. */
  ArcwiseScenePath path;
  arcwise_swing_model_as_path(m, &path);
  AW_CHECK(m->carried != NULL && path.cam_share == m->carried);
  size_t seen[ARCWISE_SCENE_N_PHASES] = { 0 };
  for (size_t i = 0; i < m->n; i++) {
    seen[m->phase[i]]++;
    if (m->phase[i] == ARCWISE_SCENE_PHASE_BACKSWING)
      AW_CHECK_NEAR(path.cam_share[i], 1.0, 0.0);
    else if (m->phase[i] == ARCWISE_SCENE_PHASE_DOWNSWING)
      AW_CHECK_NEAR(path.cam_share[i], 0.0, 0.0);
    else if (m->phase[i] == ARCWISE_SCENE_PHASE_FOLLOW_THROUGH)
      AW_CHECK_NEAR(path.cam_share[i], 0.5, 0.0);
    else   /* unknown dominance: the fusion's own share stays */
      AW_CHECK_NEAR(path.cam_share[i], m->cam_share[i], 0.0);
  }
  AW_CHECK(seen[ARCWISE_SCENE_PHASE_BACKSWING] > 0 && seen[ARCWISE_SCENE_PHASE_DOWNSWING] > 0);

  /* The notes say it in words, including the analysis's own quality notes. */
  g_autofree char *q = arcwise_quality_text(m, ARCWISE_UNITS_METRIC);
  AW_CHECK(contains(q, "mostly from the camera"));
  AW_CHECK(contains(q, "mostly from the wrist sensor"));
  AW_CHECK(contains(q, "both sensors"));
  g_autofree char *n1 = g_markup_escape_text(aw_quality_note_text(AW_NOTE_TOP_HIDDEN), -1);
  g_autofree char *n2 = g_markup_escape_text(aw_quality_note_text(AW_NOTE_IMPACT_ESTIMATED), -1);
  AW_CHECK(contains(q, n1) && contains(q, n2));
  g_autofree char *n3 = g_markup_escape_text(aw_quality_note_text(AW_NOTE_SYNC_WEAK), -1);
  AW_CHECK(!contains(q, n3));

  /* Compare: two swings are kept in step by their events. With every event, each of a's
   * events maps onto b's and time between two events maps linearly (the midpoint of a's
   * backswing onto the midpoint of b's); lined up at one event, time is only shifted. */
  {
    ArcwiseSwingModel *b = arcwise_swing_model_new_demo(1, 1);
    const double ea[4] = { m->events.takeaway_s, m->events.top_s, m->events.impact_s, m->events.finish_s };
    const double eb[4] = { b->events.takeaway_s, b->events.top_s, b->events.impact_s, b->events.finish_s };
    AW_CHECK(fabs(ea[1] - eb[1]) > 0.01);   /* the two demo swings differ in timing */
    for (int k = 0; k < 4; k++)
      AW_CHECK_NEAR(arcwise_swing_sync_time(m, b, ea[k], -1), eb[k], 1e-9);
    AW_CHECK_NEAR(arcwise_swing_sync_time(m, b, 0.5 * (ea[0] + ea[1]), -1), 0.5 * (eb[0] + eb[1]), 1e-9);
    AW_CHECK_NEAR(arcwise_swing_sync_time(m, b, ea[1] + 0.25 * (ea[2] - ea[1]), -1),
                  eb[1] + 0.25 * (eb[2] - eb[1]), 1e-9);
    AW_CHECK_NEAR(arcwise_swing_sync_time(m, b, 0.1, 2), 0.1 - ea[2] + eb[2], 1e-9);

    /* Per-phase deviation: the swing against itself is 0 everywhere; against a copy moved by
     * (3, 4, 0) cm it is 5 cm, typical and most, in every phase (Pythagoras). */
    double rms[ARCWISE_SCENE_N_PHASES], mx[ARCWISE_SCENE_N_PHASES];
    const float shift[3] = { 0.03f, 0.04f, 0.0f };
    ArcwiseSwingModel *same = arcwise_swing_model_copy_shifted(m, zero_shift);
    ArcwiseSwingModel *moved = arcwise_swing_model_copy_shifted(m, shift);
    arcwise_phase_deviation(m, same, -1, rms, mx);
    for (int p = ARCWISE_SCENE_PHASE_BACKSWING; p <= ARCWISE_SCENE_PHASE_FOLLOW_THROUGH; p++)
      AW_CHECK(rms[p] < 1e-6 && mx[p] < 1e-6);
    arcwise_phase_deviation(m, moved, -1, rms, mx);
    for (int p = ARCWISE_SCENE_PHASE_BACKSWING; p <= ARCWISE_SCENE_PHASE_FOLLOW_THROUGH; p++) {
      AW_CHECK_NEAR(rms[p], 0.05, 1e-6);
      AW_CHECK_NEAR(mx[p], 0.05, 1e-6);
    }
    arcwise_swing_model_free(same);
    arcwise_swing_model_free(moved);
    arcwise_swing_model_free(b);
  }

  /* A copy (the comparison swing) keeps all of it; clearing drops it. */
  const float zero[3] = { 0, 0, 0 };
  ArcwiseSwingModel *c = arcwise_swing_model_copy_shifted(m, zero);
  AW_CHECK(c->analysed.present && c->carried != NULL && c->carried != m->carried);
  arcwise_swing_model_set_analysis(m, NULL);
  AW_CHECK(!m->analysed.present && m->carried == NULL);
  arcwise_swing_model_free(c);
  arcwise_swing_model_free(m);
  return AW_TEST_END();
}
