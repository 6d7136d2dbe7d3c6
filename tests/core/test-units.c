/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Unit constants and gravity models against published values. */
#include "arcwise/units.h"
#include "testutil.h"

int
main(void)
{
  /* Standard gravity, exact by definition: 3rd CGPM (1901). */
  AW_CHECK(AW_GRAVITY_STANDARD_M_S2 == 9.80665);
  AW_CHECK_NEAR(aw_g_to_m_s2(1.0), 9.80665, 0.0);
  AW_CHECK_NEAR(aw_m_s2_to_g(9.80665 * 16), 16.0, 1e-15);
  /* Exact definitions: international inch (1959), mile per hour = 1609.344 m / 3600 s. */
  AW_CHECK_NEAR(aw_inch_to_m(48.0), 1.2192, 1e-15);
  AW_CHECK_NEAR(aw_mph_to_m_s(100.0), 44.704, 1e-12);
  AW_CHECK_NEAR(aw_deg_to_rad(180.0), 3.14159265358979323846, 1e-15);

  /* WGS 84 normal gravity, NIMA TR8350.2 ch. 4 (values in ../shared/REFERENCES.md §3, computed
   * with the Somigliana closed form). */
  AW_CHECK_NEAR(aw_gravity_wgs84_m_s2(0.0), 9.7803253359, 1e-9);
  AW_CHECK_NEAR(aw_gravity_wgs84_m_s2(aw_deg_to_rad(30.0)), 9.7932472692, 1e-9);
  AW_CHECK_NEAR(aw_gravity_wgs84_m_s2(aw_deg_to_rad(45.0)), 9.8061977694, 1e-9);
  AW_CHECK_NEAR(aw_gravity_wgs84_m_s2(aw_deg_to_rad(51.5)), 9.8120335750, 1e-9);
  AW_CHECK_NEAR(aw_gravity_wgs84_m_s2(aw_deg_to_rad(60.0)), 9.8191769531, 1e-9);
  AW_CHECK_NEAR(aw_gravity_wgs84_m_s2(aw_deg_to_rad(90.0)), 9.8321849378, 2e-10);
  /* Height correction TR8350.2 eq. (4-3) as written (REFERENCES.md §3, marked from memory). */
  AW_CHECK_NEAR(aw_gravity_wgs84_height_m_s2(aw_deg_to_rad(45.0), 100.0), 9.8058892, 1e-6);
  AW_CHECK_NEAR(aw_gravity_wgs84_height_m_s2(aw_deg_to_rad(45.0), 1000.0), 9.8031129, 1e-6);
  return AW_TEST_END();
}
