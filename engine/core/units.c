/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "arcwise/units.h"

#include <math.h>

/* WGS 84 defining and derived constants, NIMA TR8350.2 3rd ed., amendment 1 (2000), ch. 3-4. */
static const double wgs84_gamma_e = 9.7803253359;      /* normal gravity at the equator, m/s^2 */
static const double wgs84_k = 0.00193185265241;        /* Somigliana constant */
static const double wgs84_e2 = 0.00669437999013;       /* first eccentricity squared */
static const double wgs84_a = 6378137.0;               /* semi-major axis, m */
static const double wgs84_f = 1.0 / 298.257223563;     /* flattening */
static const double wgs84_m = 0.00344978650684;        /* w^2 a^2 b / GM */

double
aw_gravity_wgs84_m_s2(double lat_rad)
{
  double s2 = sin(lat_rad) * sin(lat_rad);
  return wgs84_gamma_e * (1.0 + wgs84_k * s2) / sqrt(1.0 - wgs84_e2 * s2);
}

double
aw_gravity_wgs84_height_m_s2(double lat_rad, double height_m)
{
  double s2 = sin(lat_rad) * sin(lat_rad);
  double g0 = aw_gravity_wgs84_m_s2(lat_rad);
  double h = height_m;
  return g0 * (1.0 - 2.0 / wgs84_a * (1.0 + wgs84_f + wgs84_m - 2.0 * wgs84_f * s2) * h
               + 3.0 * h * h / (wgs84_a * wgs84_a));
}
