/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Our constants and unit conversions (src/core/efflux-constants.h, REFERENCES.md 1.1 and 2.1)
 * against astropy 5.2 (astropy.constants and astropy.units, run by tests/ref/units_check.py
 * with EFFLUX_PYTHON, Debian's python3). A missing EFFLUX_PYTHON fails the test. Tolerance 1e-4
 * relative unless a comment explains why the two codes differ. */

#include <glib.h>

#include "efflux-constants.h"
#include "efflux-test-util.h"

#include <math.h>
#include <string.h>

/* name -> astropy value, from one run of the reference script */
static GHashTable *
astropy_values (const char * const *names)
{
  g_autofree char *out = efflux_test_python ("units_check.py", names);

  return efflux_test_parse_named (out);
}

static void
check (GHashTable *astropy,
       const char *name,
       double      ours,
       double      rel)
{
  const double *ref = g_hash_table_lookup (astropy, name);

  g_assert_nonnull (ref);
  g_test_message ("%-28s ours %.10g astropy %.10g (rel %.2e)", name, ours, *ref,
                  ours / *ref - 1.0);
  g_assert_cmpfloat (fabs (ours / *ref - 1.0), <=, rel);
}

static void
test_constants (void)
{
  const char *names[] = { "h", "k", "c", "G", "msun", "lsun", "au", "pc", "yr", "arcsec", "m_h",
                          "m_p_plus_m_e", NULL };
  g_autoptr(GHashTable) astropy = astropy_values (names);

  if (astropy == NULL)
    return;
  /* SI 2019 exact values: identical */
  check (astropy, "h", EFFLUX_H, 1e-15);
  check (astropy, "k", EFFLUX_K, 1e-15);
  check (astropy, "c", EFFLUX_C, 1e-15);
  check (astropy, "c", EFFLUX_C_KMS * EFFLUX_KM, 1e-15);
  /* CODATA 2018 G, IAU 2015 M_sun (astropy's M_sun is GM_sun/G to all digits: 1.988409870698e33;
   * we keep the 6 digits of REFERENCES.md 2.1, so 7e-8), IAU 2015 L_sun, IAU 2012 au, pc, the
   * Julian year, the arcsecond */
  check (astropy, "G", EFFLUX_G, 1e-12);
  check (astropy, "msun", EFFLUX_MSUN, 1e-6);
  check (astropy, "lsun", EFFLUX_LSUN, 1e-15);
  check (astropy, "au", EFFLUX_AU, 1e-15);
  check (astropy, "pc", EFFLUX_PC, 1e-15);
  check (astropy, "yr", EFFLUX_YR, 1e-15);
  check (astropy, "arcsec", EFFLUX_ARCSEC, 1e-15);
  /* Hydrogen-atom mass: astropy has none. Ours is 1.00784 u (the IUPAC atomic weight of hydrogen,
   * lower bound) to 1e-7. m_p + m_e (the 1H atom without its 13.6 eV binding, and without the
   * deuterium in natural hydrogen) is 1.5e-5 lighter: checked to 1e-4 (REFERENCES.md 6.10: codes
   * that use m_p differ by 0.06%, which is why published tables are compared to 1e-3). */
  check (astropy, "m_h", EFFLUX_M_H, 1e-6);
  check (astropy, "m_p_plus_m_e", EFFLUX_M_H, 1e-4);
}

static void
test_derived_units (void)
{
  const char *names[] = { "erg_per_msun_km2_s2", "dyn_per_msun_km_s_yr", "lsun_per_erg_s", NULL };
  g_autoptr(GHashTable) astropy = astropy_values (names);
  double erg = EFFLUX_MSUN * EFFLUX_KM * EFFLUX_KM;
  double dyn = EFFLUX_MSUN * EFFLUX_KM / EFFLUX_YR;

  /* REFERENCES.md 2.1 [C]: 1 Msun km^2/s^2 = 1.98841e43 erg, 1 Msun km/s/yr = 6.30089e30 dyn */
  g_assert_cmpfloat (fabs (erg / 1.98841e43 - 1.0), <, 1e-5);
  g_assert_cmpfloat (fabs (dyn / 6.30089e30 - 1.0), <, 1e-5);
  /* REFERENCES.md 4.9 [C]: 64 Msun km^2/s^2 = 1.27258e45 erg (Nakamura 2011's total), and
   * 7e44 erg = 35.20 Msun km^2/s^2 (Plunkett 2013's) */
  g_assert_cmpfloat (fabs (64.0 * erg / 1.27258e45 - 1.0), <, 1e-5);
  g_assert_cmpfloat_with_epsilon (7e44 / erg, 35.20, 0.005);
  /* REFERENCES.md 4.7 [C]: L = 1.48796e29 erg/s = 3.88704e-5 Lsun */
  g_assert_cmpfloat (fabs (1.48796e29 / EFFLUX_LSUN / 3.88704e-5 - 1.0), <, 1e-5);

  if (astropy == NULL)
    return;
  /* astropy's M_sun has more digits than ours (7e-8, see above) */
  check (astropy, "erg_per_msun_km2_s2", erg, 1e-6);
  check (astropy, "dyn_per_msun_km_s_yr", dyn, 1e-6);
  check (astropy, "lsun_per_erg_s", 1.0 / EFFLUX_LSUN, 1e-15);
}

/* Rayleigh-Jeans K per Jy/beam (REFERENCES.md 1.1): T = c^2 S 1e-23 / (2 k nu^2 Omega_b),
 * Omega_b = pi bmaj bmin / (4 ln 2). */
static double
k_per_jy_beam (double freq_hz,
               double bmaj_arcsec,
               double bmin_arcsec)
{
  double omega = G_PI * bmaj_arcsec * EFFLUX_ARCSEC * bmin_arcsec * EFFLUX_ARCSEC
                 / (4.0 * G_LN2);

  return EFFLUX_C * EFFLUX_C * 1e-23 / (2.0 * EFFLUX_K * freq_hz * freq_hz * omega);
}

static void
test_jy_per_beam_to_k (void)
{
  static const struct { double ghz, bmaj, bmin; const char *printed; } beams[] = {
    /* REFERENCES.md 4.1 [C] */
    { 230.538, 1.0, 1.0, "22.9948" },
    { 345.796, 0.5, 0.5, "40.8822" },
    { 115.271, 2.0, 2.0, "22.9940" },
    { 100.0, 10.0, 10.0, "1.2221" },
    /* elliptical, no printed value */
    { 220.3986842, 0.8, 0.6, NULL },
  };
  g_autoptr(GPtrArray) names = g_ptr_array_new_with_free_func (g_free);
  g_autoptr(GHashTable) astropy = NULL;
  guint i;

  for (i = 0; i < G_N_ELEMENTS (beams); i++)
    {
      char f[G_ASCII_DTOSTR_BUF_SIZE], a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];

      g_ptr_array_add (names, g_strdup_printf ("jyb2k:%s:%s:%s",
                                               g_ascii_dtostr (f, sizeof f, beams[i].ghz),
                                               g_ascii_dtostr (a, sizeof a, beams[i].bmaj),
                                               g_ascii_dtostr (b, sizeof b, beams[i].bmin)));
      if (beams[i].printed != NULL)
        {
          double ref = g_ascii_strtod (beams[i].printed, NULL);

          g_assert_cmpfloat (fabs (k_per_jy_beam (beams[i].ghz * 1e9, beams[i].bmaj,
                                                  beams[i].bmin) / ref - 1.0), <, 1e-4);
        }
    }
  g_ptr_array_add (names, NULL);

  /* REFERENCES.md 1.1 [C]: the practical constant 1.22212e6 K GHz^2 arcsec^2 per Jy/beam, and
   * [S: Shirley 2015, PASP 127, 299 abstract] 1 K <-> 0.818 Jy/beam at 100 GHz and 10". */
  g_assert_cmpfloat (fabs (k_per_jy_beam (1e9, 1.0, 1.0) / 1.22212e6 - 1.0), <, 1e-5);
  g_assert_cmpfloat_with_epsilon (1.0 / k_per_jy_beam (100e9, 10.0, 10.0), 0.818, 0.0005);

  astropy = astropy_values ((const char * const *) names->pdata);
  if (astropy == NULL)
    return;
  /* astropy's u.brightness_temperature is the same Rayleigh-Jeans relation with the exact
   * constants: they agree to rounding. */
  for (i = 0; i < G_N_ELEMENTS (beams); i++)
    check (astropy, g_ptr_array_index (names, i),
           k_per_jy_beam (beams[i].ghz * 1e9, beams[i].bmaj, beams[i].bmin), 1e-10);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);

  g_test_add_func ("/units-astropy/constants", test_constants);
  g_test_add_func ("/units-astropy/derived-units", test_derived_units);
  g_test_add_func ("/units-astropy/jy-per-beam-to-k", test_jy_per_beam_to_k);

  return g_test_run ();
}
