/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Club types, metric names and quality-note wording: the fixed tables of the analysis. */
#include "arcwise/analysis.h"
#include "analysis-private.h"

#include <math.h>
#include <string.h>
#include <strings.h>

/* Default lengths are typical modern men's standard lengths [from memory, REFERENCES.md §6
 * gives driver about 45.5 in, 5-iron about 38 in, wedge about 35.5 in]; all are well inside
 * the Rules of Golf limit of 48 in. A coach enters the measured length per swing when known. */
#include "arcwise/units.h"
#define IN_M AW_M_PER_INCH
static const AwClubInfo clubs[AW_CLUB_COUNT_] = {
  { AW_CLUB_DRIVER, "driver", "Driver", 45.5 * IN_M },
  { AW_CLUB_3W, "3w", "3-wood", 43.0 * IN_M },
  { AW_CLUB_5W, "5w", "5-wood", 42.0 * IN_M },
  { AW_CLUB_HYBRID, "hybrid", "Hybrid", 40.0 * IN_M },
  { AW_CLUB_3I, "3i", "3-iron", 39.0 * IN_M },
  { AW_CLUB_4I, "4i", "4-iron", 38.5 * IN_M },
  { AW_CLUB_5I, "5i", "5-iron", 38.0 * IN_M },
  { AW_CLUB_6I, "6i", "6-iron", 37.5 * IN_M },
  { AW_CLUB_7I, "7i", "7-iron", 37.0 * IN_M },
  { AW_CLUB_8I, "8i", "8-iron", 36.5 * IN_M },
  { AW_CLUB_9I, "9i", "9-iron", 36.0 * IN_M },
  { AW_CLUB_PW, "pw", "Pitching wedge", 35.75 * IN_M },
  { AW_CLUB_GW, "gw", "Gap wedge", 35.5 * IN_M },
  { AW_CLUB_SW, "sw", "Sand wedge", 35.25 * IN_M },
  { AW_CLUB_LW, "lw", "Lob wedge", 35.0 * IN_M },
};

const AwClubInfo *
aw_club_info(AwClubType type)
{
  if ((int)type < 0 || type >= AW_CLUB_COUNT_)
    return NULL;
  return &clubs[type];
}

bool
aw_club_from_name(const char *name, AwClubType *out)
{
  if (name == NULL)
    return false;
  for (int i = 0; i < AW_CLUB_COUNT_; i++) {
    if (strcasecmp(name, clubs[i].name) == 0 || strcasecmp(name, clubs[i].label) == 0) {
      if (out != NULL)
        *out = clubs[i].type;
      return true;
    }
  }
  /* Spelled-out aliases people type. */
  static const struct { const char *alias; AwClubType type; } aliases[] = {
    { "1w", AW_CLUB_DRIVER }, { "d", AW_CLUB_DRIVER }, { "hy", AW_CLUB_HYBRID },
    { "3-iron", AW_CLUB_3I }, { "wedge", AW_CLUB_PW }, { "p", AW_CLUB_PW },
    { "aw", AW_CLUB_GW }, { "s", AW_CLUB_SW },
  };
  for (size_t i = 0; i < sizeof aliases / sizeof aliases[0]; i++)
    if (strcasecmp(name, aliases[i].alias) == 0) {
      if (out != NULL)
        *out = aliases[i].type;
      return true;
    }
  return false;
}

static const AwMetricInfo metrics[AW_METRIC_COUNT_] = {
  { AW_METRIC_BACKSWING_S, "backswing_s", "s", "Backswing duration" },
  { AW_METRIC_DOWNSWING_S, "downswing_s", "s", "Downswing duration" },
  { AW_METRIC_TEMPO_RATIO, "tempo_ratio", "1", "Tempo (backswing : downswing)" },
  { AW_METRIC_HAND_SPEED_IMPACT_M_S, "hand_speed_impact_mps", "m/s", "Hand speed at impact" },
  { AW_METRIC_PEAK_HAND_SPEED_M_S, "peak_hand_speed_mps", "m/s", "Peak hand speed" },
  { AW_METRIC_PEAK_HAND_SPEED_T_S, "peak_hand_speed_time_from_impact_s", "s",
    "Time of peak hand speed (from impact)" },
  { AW_METRIC_CLUB_SPEED_IMPACT_M_S, "club_speed_impact_mps", "m/s",
    "Club-head speed at impact (estimate)" },
  { AW_METRIC_TOP_HEIGHT_M, "top_height_m", "m", "Hand height at the top (above address)" },
  { AW_METRIC_TOP_BEHIND_M, "top_behind_m", "m", "Top: hands behind address (away from target)" },
  { AW_METRIC_TOP_OUT_M, "top_out_m", "m", "Top: hands out from address (away from player)" },
  { AW_METRIC_PATH_LENGTH_M, "hand_path_length_m", "m", "Hand path length" },
  { AW_METRIC_PLANE_BACKSWING_DEG, "plane_backswing_deg", "deg", "Backswing plane inclination" },
  { AW_METRIC_PLANE_DOWNSWING_DEG, "plane_downswing_deg", "deg", "Downswing plane inclination" },
  { AW_METRIC_PLANE_DIFF_DEG, "plane_difference_deg", "deg",
    "Plane difference (downswing minus backswing)" },
  { AW_METRIC_PATH_DIRECTION_DEG, "path_direction_deg", "deg",
    "Hand path through impact (+ in-to-out, - out-to-in)" },
  { AW_METRIC_IMPACT_AHEAD_M, "impact_ahead_m", "m", "Hands at impact: toward target from address" },
  { AW_METRIC_IMPACT_OUT_M, "impact_out_m", "m", "Hands at impact: away from player from address" },
  { AW_METRIC_IMPACT_UP_M, "impact_up_m", "m", "Hands at impact: above address" },
  { AW_METRIC_PEAK_FOREARM_RATE_RAD_S, "peak_forearm_rate_radps", "rad/s",
    "Peak lead-forearm angular rate" },
};

const AwMetricInfo *
aw_metric_info(AwMetricId id)
{
  if ((int)id < 0 || id >= AW_METRIC_COUNT_)
    return NULL;
  return &metrics[id];
}

static const char *const note_texts[AW_NOTE_NOTE_COUNT_] = {
  "The camera lost sight of the hands around the top; the watch carried the path there.",
  "The camera lost sight of the hands in the follow-through; the watch carried the path there.",
  "Many camera frames disagreed with the watch and were set aside (reflections, another person, "
  "or the body hiding the wrist).",
  "The watch reached the limit of its range near impact; speeds there are less certain.",
  "The watch and camera clocks could not be matched with confidence; event times may be off.",
  "The hand position is uncertain by more than 2 cm on average; move the camera closer or "
  "keep the lead wrist in view.",
  "No ball contact was felt by the watch; impact is estimated from the hand path.",
  "Club-head speed is estimated from the curve of the hand path, without the watch's rotation "
  "(none recorded, or at the limit of its range).",
  "There is no watch data in this swing.",
};

const char *
aw_quality_note_text(unsigned note_bit)
{
  for (unsigned i = 0; i < AW_NOTE_NOTE_COUNT_; i++)
    if (note_bit == (1u << i))
      return note_texts[i];
  return NULL;
}

void
aw_analysis_settings_default(AwAnalysisSettings *out)
{
  if (out == NULL)
    return;
  memset(out, 0, sizeof *out);
  out->handed = AW_HANDED_RIGHT;
  out->club = AW_CLUB_7I;
  out->club_length_m = 0.0;
  out->target_dir[0] = out->target_dir[1] = out->target_dir[2] = AN_NAN;
  /* A hand held "still" by a person drifts by a few cm/s; 0.15 m/s is well below any
   * deliberate motion and well above sensor noise on a fused path. */
  out->still_speed_m_s = 0.15;
  /* A set-up or a held finish lasts a few tenths of a second at least (common practice). */
  out->still_min_s = 0.25;
  /* A full swing brings the lead hand to about shoulder height: some 0.6 m or more above the
   * hands at address for an adult; a half swing (hands to chest height) stays lower. */
  out->full_top_rise_m = 0.55;
  /* Hands less than 0.2 m from address at the top are a waggle or a fiddle, not a swing. */
  out->min_top_rise_m = 0.20;
  /* Walking moves the hands at 1-2 m/s; a practice half swing still reaches 2.5 m/s or more. */
  out->min_peak_speed_m_s = 2.5;
  /* Ball contact: a transient well above the local accelerometer roughness. */
  out->impact_snr = 6.0;
  /* 2 %: the club head loses a fifth or more of its speed to the ball (momentum exchange with
   * a 46 g ball against a head of about 200 g, restitution near 0.8; figures from memory), of
   * which the hands feel a part for a few ms, while the smooth turn of a swing without a ball
   * stays near 1 % per sample at 100 Hz. The low end of that gap is taken: a real contact
   * missed costs more (impact timed from the path, a struck shot called practice) than a
   * practice swing left unflagged. */
  out->contact_min_loss = 0.02;
  /* A ball's impulse lasts about half a millisecond (figure from memory): the force on the
   * wrist departs from its course and returns to it well within one sample, so the level of
   * the force before and after the transient is the same. A change of level of size S (the
   * hands' own acceleration changing, as at the low point of a swing without a ball), averaged
   * by the anti-aliasing over the sample it falls in, leaves a second difference of S/4 (the
   * step half-way through a sample) to S/2 (on a sample boundary): a transient no larger than a
   * quarter of the level change across it needs no impulse to explain it. This bound follows
   * from the sampling alone, not from any set of swings. */
  out->contact_level_ratio = 0.25;
  out->club_arm_rate_ratio = 2.1;
}
