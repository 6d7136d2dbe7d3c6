/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Physical constants and unit conversions. The engine is SI throughout; conversions to g, deg/s,
 * mph, inches and so on happen only at the edges (importers, UI, exports) through these. */

/* Standard gravity, exact by definition: 3rd CGPM (1901), Comptes Rendus p. 70. */
#define AW_GRAVITY_STANDARD_M_S2 9.80665

#define AW_PI 3.14159265358979323846
#define AW_DEG_PER_RAD (180.0 / AW_PI)
#define AW_RAD_PER_DEG (AW_PI / 180.0)
#define AW_M_PER_INCH 0.0254          /* exact, international yard and pound agreement (1959) */
#define AW_M_PER_FOOT 0.3048          /* exact */
#define AW_M_S_PER_MPH 0.44704        /* exact: 1609.344 m / 3600 s */
#define AW_M_S_PER_KMH (1.0 / 3.6)

/* WGS 84 normal gravity on the ellipsoid at geodetic latitude lat_rad (Somigliana closed form),
 * NIMA TR8350.2 3rd ed. (2000), chapter 4. */
double aw_gravity_wgs84_m_s2(double lat_rad);

/* The same with the free-air height correction of TR8350.2 for height_m above the ellipsoid. */
double aw_gravity_wgs84_height_m_s2(double lat_rad, double height_m);

static inline double aw_g_to_m_s2(double g) { return g * AW_GRAVITY_STANDARD_M_S2; }
static inline double aw_m_s2_to_g(double a_m_s2) { return a_m_s2 / AW_GRAVITY_STANDARD_M_S2; }
static inline double aw_deg_to_rad(double deg) { return deg * AW_RAD_PER_DEG; }
static inline double aw_rad_to_deg(double rad) { return rad * AW_DEG_PER_RAD; }
static inline double aw_m_s_to_mph(double v_m_s) { return v_m_s / AW_M_S_PER_MPH; }
static inline double aw_mph_to_m_s(double v_mph) { return v_mph * AW_M_S_PER_MPH; }
static inline double aw_m_to_inch(double m) { return m / AW_M_PER_INCH; }
static inline double aw_inch_to_m(double in) { return in * AW_M_PER_INCH; }
