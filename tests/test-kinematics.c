/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Kinematics of the Cut view: the Hubble-law age against REFERENCES.md check value 4.9 and against
 * astropy.units (tests/ref/kinematics_ref.py, run through EFFLUX_PYTHON), slope units, the
 * source's offset along straight and bent cuts, and the PV noise for contour levels. */
#include <glib.h>
#include <math.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-kinematics.h"
#include "efflux-pv.h"
#include "efflux-test-util.h"

static void
test_check_value (void)
{
  /* REFERENCES.md 4.9: dv/dx = 100 km/s/pc at i = 1 rad from the line of sight gives
   * t0 = 6278.33 yr */
  double t0 = efflux_hubble_age_yr (100.0, 180.0 / G_PI);

  g_assert_cmpfloat (fabs (t0 - 6278.33), <, 0.005);
  /* the sign of the slope does not matter */
  g_assert_cmpfloat (efflux_hubble_age_yr (-100.0, 180.0 / G_PI), ==, t0);
  /* the inverse */
  g_assert_cmpfloat (fabs (efflux_hubble_slope_for_age (6278.33, 180.0 / G_PI) - 100.0), <, 1e-4);
  /* t0 scales as 1 / tan i: at 45 degrees tan i = 1, so t0 = 1 pc / 100 km/s
   * = 3.0856775814913673e13 km / 100 km/s / 3.15576e7 s = 9777.922 yr (IAU 2015 B2 pc,
   * Julian year) */
  g_assert_cmpfloat (fabs (efflux_hubble_age_yr (100.0, 45.0) - 9777.9222), <, 1e-3);
}

static void
test_limits (void)
{
  g_assert_true (isnan (efflux_hubble_age_yr (100.0, 0.0)));
  g_assert_true (isnan (efflux_hubble_age_yr (100.0, 90.0)));
  g_assert_true (isnan (efflux_hubble_age_yr (100.0, -10.0)));
  g_assert_true (isnan (efflux_hubble_age_yr (NAN, 45.0)));
  g_assert_true (isnan (efflux_hubble_age_yr (100.0, NAN)));
  g_assert_true (isinf (efflux_hubble_age_yr (0.0, 45.0)));
  g_assert_true (isnan (efflux_hubble_slope_for_age (0.0, 45.0)));
  g_assert_true (isnan (efflux_hubble_slope_for_age (1000.0, 90.0)));
  g_assert_true (isnan (efflux_kinematics_slope_per_pc (1.0, 0.0)));
  g_assert_true (isnan (efflux_kinematics_slope_per_pc (1.0, NAN)));
  g_assert_true (isnan (efflux_kinematics_slope_per_arcsec (1.0, -5.0)));
}

static void
test_units (void)
{
  /* 1 arcsec at 1 pc is 1 au, and 1 pc = 648000 / pi au (IAU 2015 Resolution B2): 1 km/s per
   * arcsec at 1 pc is 648000 / pi = 206264.806 km/s per pc */
  g_assert_cmpfloat (fabs (efflux_kinematics_slope_per_pc (1.0, 1.0) - 648000.0 / G_PI), <, 1e-6);
  g_assert_cmpfloat (fabs (efflux_kinematics_slope_per_pc (2.0, 400.0) - 2.0 * 648000.0 / G_PI / 400.0),
                     <, 1e-9);
  for (double d = 50.0; d < 3000.0; d *= 3.1)
    g_assert_cmpfloat (fabs (efflux_kinematics_slope_per_arcsec (efflux_kinematics_slope_per_pc (0.37, d), d)
                             - 0.37), <, 1e-14);
}

static void
test_astropy (void)
{
  static const double ages[][2] = {
    { 100.0, 57.29577951308232 }, { 25.0, 10.0 }, { 250.0, 80.0 }, { -40.0, 30.0 }, { 3.0, 60.0 },
  };
  static const double slopes[][2] = {
    { 1.0, 140.0 }, { 0.25, 400.0 }, { -3.5, 1400.0 }, { 12.0, 8.5 },
  };
  g_autoptr(GPtrArray) args = g_ptr_array_new_with_free_func (g_free);
  g_autofree char *out = NULL;
  g_auto(GStrv) lines = NULL;
  gsize k = 0;

  g_ptr_array_add (args, g_strdup ("age"));
  for (gsize i = 0; i < G_N_ELEMENTS (ages); i++)
    g_ptr_array_add (args, g_strdup_printf ("%.17g,%.17g", ages[i][0], ages[i][1]));
  g_ptr_array_add (args, g_strdup ("slope"));
  for (gsize i = 0; i < G_N_ELEMENTS (slopes); i++)
    g_ptr_array_add (args, g_strdup_printf ("%.17g,%.17g", slopes[i][0], slopes[i][1]));
  g_ptr_array_add (args, NULL);
  out = efflux_test_python ("kinematics_ref.py", (const char * const *) args->pdata);
  lines = g_strsplit (g_strstrip (out), "\n", -1);
  g_assert_cmpuint (g_strv_length (lines), ==, G_N_ELEMENTS (ages) + G_N_ELEMENTS (slopes));

  for (gsize i = 0; i < G_N_ELEMENTS (ages); i++, k++)
    {
      double ref = fabs (g_ascii_strtod (lines[k], NULL));
      double got = efflux_hubble_age_yr (ages[i][0], ages[i][1]);

      g_assert_cmpfloat (fabs (got - ref), <=, 1e-12 * ref);
    }
  for (gsize i = 0; i < G_N_ELEMENTS (slopes); i++, k++)
    {
      double ref = g_ascii_strtod (lines[k], NULL);
      double got = efflux_kinematics_slope_per_pc (slopes[i][0], slopes[i][1]);

      g_assert_cmpfloat (fabs (got - ref), <=, 1e-12 * fabs (ref));
    }
}

static void
test_offset_on_cut (void)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (40, 30, 3, 83.8221, -5.3911, 0.5, 0.0, 1.0,
                                                        115.271e9);
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxPv) pv = NULL;
  g_autoptr(EffluxPv) bent = NULL;
  double off, dist;

  {
    /* a straight cut along x from (5, 10) to (35, 10): offset = (x - 5) x 0.5" */
    double px[] = { 5.0, 35.0 }, py[] = { 10.0, 10.0 };

    pv = efflux_pv_cut_pixels (cube, px, py, 2, 0.0, &error);
    g_assert_no_error (error);
  }
  g_assert_true (efflux_kinematics_offset_on_cut (pv, 17.25, 13.0, &off, &dist));
  g_assert_cmpfloat (fabs (off - 12.25 * 0.5), <, 1e-12);
  g_assert_cmpfloat (fabs (dist - 3.0 * 0.5), <, 1e-12);
  /* before the first vertex: clamped to the start, the distance to it */
  g_assert_true (efflux_kinematics_offset_on_cut (pv, 2.0, 6.0, &off, &dist));
  g_assert_cmpfloat (off, ==, 0.0);
  g_assert_cmpfloat (fabs (dist - 5.0 * 0.5), <, 1e-12);

  {
    /* bent: (5, 5) -> (5, 15) -> (25, 15); arc length of (15, 16) is 10 + 10 = 20 pixels, 1 pixel
     * off the second leg */
    double px[] = { 5.0, 5.0, 25.0 }, py[] = { 5.0, 15.0, 15.0 };

    bent = efflux_pv_cut_pixels (cube, px, py, 3, 0.0, &error);
    g_assert_no_error (error);
  }
  g_assert_true (efflux_kinematics_offset_on_cut (bent, 15.0, 16.0, &off, &dist));
  g_assert_cmpfloat (fabs (off - 20.0 * 0.5), <, 1e-9);
  g_assert_cmpfloat (fabs (dist - 0.5), <, 1e-9);
  /* on the first leg */
  g_assert_true (efflux_kinematics_offset_on_cut (bent, 4.0, 8.5, &off, &dist));
  g_assert_cmpfloat (fabs (off - 3.5 * 0.5), <, 1e-9);
  g_assert_cmpfloat (fabs (dist - 0.5), <, 1e-9);
}

static void
test_pv_sigma (void)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (4, 4, 5, 83.8221, -5.3911, 0.5, 0.0, 1.0,
                                                        115.271e9);
  const float rms[] = { 0.3f, NAN, 0.1f, 0.2f, 0.0f };

  g_free (cube->rms);
  cube->rms = g_memdup2 (rms, sizeof rms);
  /* finite and > 0: 0.1, 0.2, 0.3 -> median 0.2 */
  g_assert_cmpfloat (fabs (efflux_kinematics_pv_sigma (cube) - 0.2), <, 1e-7);
  cube->rms[1] = 0.5f;
  /* 0.1, 0.2, 0.3, 0.5 -> 0.25 */
  g_assert_cmpfloat (fabs (efflux_kinematics_pv_sigma (cube) - 0.25), <, 1e-7);
  for (int k = 0; k < 5; k++)
    cube->rms[k] = 0.0f;
  g_assert_true (isnan (efflux_kinematics_pv_sigma (cube)));
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/kinematics/check-value", test_check_value);
  g_test_add_func ("/kinematics/limits", test_limits);
  g_test_add_func ("/kinematics/units", test_units);
  g_test_add_func ("/kinematics/astropy", test_astropy);
  g_test_add_func ("/kinematics/offset-on-cut", test_offset_on_cut);
  g_test_add_func ("/kinematics/pv-sigma", test_pv_sigma);
  return g_test_run ();
}
