/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* The units figures are shown in: a display choice only (GSettings "units" in the workbench,
 * --units on the command line). The engine computes in SI; the UI and the exporters convert
 * when they format. One definition for both (ui/ includes app/). */
typedef enum {
  ARCWISE_UNITS_METRIC = 0,      /* m/s, cm */
  ARCWISE_UNITS_IMPERIAL,        /* mph, in */
} ArcwiseUnits;
