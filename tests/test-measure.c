/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The outflow measurement against REFERENCES.md check values (sections 4.6, 4.7, 4.8), analytic
 * noise variances and Monte Carlo spreads, and analytic mass-velocity spectra. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "efflux-constants.h"
#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-fitsout.h"
#include "efflux-lobe.h"
#include "efflux-measure.h"
#include "efflux-sampling.h"

#define REST_12CO21 230.538e9
#define RA0 52.0
#define DEC0 31.0
#define AU_PER_PC 206264.80624709636   /* 648000 / pi, IAU 2012 au and 2015 pc definitions */

static void
assert_rel (double got,
            double want,
            double tol,
            const char *what)
{
  double rel = fabs (got - want) / fabs (want);

  if (!(rel <= tol))
    g_error ("%s: got %.8g, expected %.8g (relative difference %.3g > %.3g)", what, got, want, rel, tol);
}

/* "ra,dec;..." of a pixel-coordinate rectangle [x0, x1] x [y0, y1] on the cube's sky. */
static char *
rect_polygon (const EffluxCube *cube,
              double x0, double y0,
              double x1, double y1)
{
  double xs[4] = { x0, x1, x1, x0 }, ys[4] = { y0, y0, y1, y1 };
  GString *s = g_string_new (NULL);

  for (int i = 0; i < 4; i++)
    {
      double ra, dec;

      g_assert_true (efflux_cube_pixel_to_icrs (cube, xs[i], ys[i], &ra, &dec));
      g_string_append_printf (s, "%s%.12f,%.12f", i ? ";" : "", ra, dec);
    }
  return g_string_free (s, FALSE);
}

static void
set_voxel (EffluxCube *cube,
           gsize x, gsize y,
           double v_kms,
           float value)
{
  gsize k_begin, k_end;

  g_assert_true (efflux_cube_channel_range (cube, v_kms, v_kms, &k_begin, &k_end));
  g_assert_cmpuint (k_end - k_begin, ==, 1);
  efflux_cube_spectrum (cube, x, y)[k_begin] += value;
}

static GHashTable *
cube_table (EffluxCube *cube)
{
  GHashTable *t = g_hash_table_new (g_str_hash, g_str_equal);

  g_hash_table_insert (t, (gpointer) "co", cube);
  return t;
}

static EffluxMeasureResult *
measure (EffluxDossier *d,
         EffluxCube    *cube)
{
  g_autoptr (GHashTable) cubes = cube_table (cube);
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxMeasurePrep) prep = efflux_measure_prepare (d, cubes, NULL, &error);
  EffluxMeasureResult *res;

  g_assert_no_error (error);
  g_assert_nonnull (prep);
  res = efflux_measure_finish (prep, d, &error);
  g_assert_no_error (error);
  g_assert_nonnull (res);
  return res;
}

static EffluxMeasureRow *
row (EffluxMeasureResult *res,
     const char          *lobe)
{
  for (guint i = 0; i < res->rows->len; i++)
    {
      EffluxMeasureRow *r = g_ptr_array_index (res->rows, i);
      if (strcmp (r->lobe, lobe) == 0)
        return r;
    }
  g_error ("no row %s", lobe);
  return NULL;
}

/* ---------------------------------------------------------------------------------------------- */
/* REFERENCES.md 4.6: m0 = 2.54022e-7 Msun per (K km/s) per pixel [C], 12CO 2-1, Tex 50 K, CMB,
 * X_CO 1e-4, mu 2.8, 1" pixels at 250 pc. */
static void
test_mass_per_pixel (void)
{
  g_autoptr (EffluxCube) cube = efflux_cube_new_simple (9, 9, 3, RA0, DEC0, 1.0, -1.0, 1.0, REST_12CO21);
  g_autofree char *poly = rect_polygon (cube, 2.5, 2.5, 5.5, 5.5);
  g_autofree char *text = NULL;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  g_autoptr (GError) error = NULL;

  set_voxel (cube, 4, 4, 0.0, 1.0f);
  text = g_strdup_printf ("[Source]\nname=One\nra-deg=%.9f\ndec-deg=%.9f\ndistance-pc=250\nvsys-kms=-5\n"
                          "[Assumptions]\ntex-k=50\nco-abundance=1e-4\nmass-per-h2=2.8\nmc-samples=0\n"
                          "[Cube co]\npath=none.fits\nline=12CO 2-1\nrms-k=0.01\n"
                          "[Lobe b]\nkind=blue\ncube=co\npolygon=%s\nvelocity-kms=-0.5;0.5\n",
                          RA0, DEC0, poly);
  d = efflux_dossier_new_from_data (text, -1, "one.efflux", "/nonexistent", &error);
  g_assert_no_error (error);
  res = measure (d, cube);
  assert_rel (row (res, "b")->mass_msun, 2.54022e-7, 1e-4, "REFERENCES 4.6 m0");
  g_assert_cmpuint (row (res, "b")->voxels, ==, 9);
  /* momentum of one voxel at |v - vsys| = 5 km/s */
  assert_rel (row (res, "b")->momentum_msun_kms, 5 * 2.54022e-7, 1e-4, "REFERENCES 4.6 m0 x 5 km/s");
}

/* ---------------------------------------------------------------------------------------------- */
/* REFERENCES.md 4.7 toy bipolar outflow [C]. */

typedef struct
{
  EffluxCube *cube;
  char       *blue_poly, *red_poly;
  double      src_ra, src_dec;
} Toy;

static void
toy_init (Toy *t)
{
  /* blue: farthest detected pixel (50, 91) at 0.05 pc; red: (50, 17) at 0.04 pc, 1" = 250 au */
  double rb = 0.05 * AU_PER_PC / 250.0, rr = 0.04 * AU_PER_PC / 250.0;
  double ys = (108.0 - (rb * rb - rr * rr) / 74.0) / 2.0;
  double xs = 50.0 + sqrt (rb * rb - (91.0 - ys) * (91.0 - ys));

  t->cube = efflux_cube_new_simple (101, 101, 17, RA0, DEC0, 1.0, -8.0, 1.0, REST_12CO21);
  g_assert_nonnull (t->cube);
  /* blue sums 400, 200, 100 K at -2, -4, -6 km/s */
  set_voxel (t->cube, 50, 91, -2, 100);
  set_voxel (t->cube, 50, 60, -2, 300);
  set_voxel (t->cube, 50, 91, -4, 100);
  set_voxel (t->cube, 50, 70, -4, 100);
  set_voxel (t->cube, 50, 91, -6, 100);
  /* red sums 300, 150, 50 K at +2, +4, +6 km/s */
  set_voxel (t->cube, 50, 17, 2, 50);
  set_voxel (t->cube, 50, 40, 2, 250);
  set_voxel (t->cube, 50, 17, 4, 50);
  set_voxel (t->cube, 50, 35, 4, 100);
  set_voxel (t->cube, 50, 17, 6, 50);
  g_assert_true (efflux_cube_pixel_to_icrs (t->cube, xs, ys, &t->src_ra, &t->src_dec));
  /* 20 x 44 and 20 x 36 pixel centres */
  t->blue_poly = rect_polygon (t->cube, 40.5, 51.5, 60.5, 95.5);
  t->red_poly = rect_polygon (t->cube, 40.5, 10.5, 60.5, 46.5);
}

static void
toy_clear (Toy *t)
{
  efflux_cube_free (t->cube);
  g_free (t->blue_poly);
  g_free (t->red_poly);
}

static EffluxDossier *
toy_dossier_line (const Toy  *t,
                  const char *source_extra,
                  const char *assumptions_extra,
                  const char *line)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *text =
    g_strdup_printf ("# toy outflow of REFERENCES.md 4.7\n"
                     "[Source]\nname=Toy\nra-deg=%.12f\ndec-deg=%.12f\ndistance-pc=250\nvsys-kms=0\n%s\n"
                     "[Assumptions]\ntex-k=50\ntbg-k=2.7255\nco-abundance=1e-4\nisotope-ratio=62\nmass-per-h2=2.8\n%s\n"
                     "[Cube co]\npath=toy.fits\nline=%s\nrole=tracer\nbeam-efficiency=1\nrms-k=0.05\n"
                     "[Lobe blue]\nkind=blue\ncube=co\npolygon=%s\nvelocity-kms=-6.5;-1.5\n"
                     "[Lobe red]\nkind=red\ncube=co\npolygon=%s\nvelocity-kms=1.5;6.5\n",
                     t->src_ra, t->src_dec, source_extra, assumptions_extra, line, t->blue_poly, t->red_poly);
  EffluxDossier *d = efflux_dossier_new_from_data (text, -1, "toy.efflux", "/nonexistent", &error);

  g_assert_no_error (error);
  g_assert_nonnull (d);
  return d;
}

static EffluxDossier *
toy_dossier (const Toy  *t,
             const char *source_extra,
             const char *assumptions_extra)
{
  return toy_dossier_line (t, source_extra, assumptions_extra, "12CO 2-1");
}

static void
test_toy (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  EffluxMeasureRow *b, *r, *tot;
  double tol = 1e-3;   /* REFERENCES.md 4.7 values are given to 6 digits */

  toy_init (&t);
  d = toy_dossier (&t, "inclination-mode=none", "mc-samples=0");
  res = measure (d, t.cube);
  g_assert_cmpuint (res->rows->len, ==, 3);
  b = row (res, "blue");
  r = row (res, "red");
  tot = row (res, "total");
  g_assert_true (tot->is_total);

  /* REFERENCES.md 4.7 [C] */
  assert_rel (b->mass_msun, 1.77816e-4, tol, "4.7 M blue");
  assert_rel (r->mass_msun, 1.27011e-4, tol, "4.7 M red");
  assert_rel (tot->mass_msun, 3.04827e-4, tol, "4.7 M total");
  assert_rel (b->momentum_msun_kms, 5.58849e-4, tol, "4.7 P blue");
  assert_rel (r->momentum_msun_kms, 3.81033e-4, tol, "4.7 P red");
  assert_rel (tot->momentum_msun_kms, 9.39882e-4, tol, "4.7 P total");
  assert_rel (b->energy_erg, 2.12142e40, tol, "4.7 E blue");
  assert_rel (r->energy_erg, 1.36377e40, tol, "4.7 E red");
  assert_rel (tot->energy_erg, 3.48519e40, tol, "4.7 E total");
  assert_rel (b->vmax_kms, 6.0, 1e-12, "4.7 vmax blue");
  assert_rel (r->vmax_kms, 6.0, 1e-12, "4.7 vmax red");
  assert_rel (tot->vmax_kms, 6.0, 1e-12, "4.7 vmax total");
  assert_rel (b->rmax_au, 0.05 * AU_PER_PC, 1e-6, "4.7 R blue");
  assert_rel (r->rmax_au, 0.04 * AU_PER_PC, 1e-6, "4.7 R red");
  assert_rel (tot->rmax_au, 0.05 * AU_PER_PC, 1e-6, "4.7 R total = largest");
  assert_rel (b->tdyn_yr, 8148.27, tol, "4.7 tdyn blue");
  assert_rel (r->tdyn_yr, 6518.61, tol, "4.7 tdyn red");
  assert_rel (tot->tdyn_yr, 8148.27, tol, "4.7 tdyn total = largest lobe tdyn");
  assert_rel (b->mdot_msun_yr, 2.18225e-8, tol, "4.7 Mdot blue");
  assert_rel (r->mdot_msun_yr, 1.94844e-8, tol, "4.7 Mdot red");
  assert_rel (tot->mdot_msun_yr, 4.13069e-8, tol, "4.7 Mdot total");
  assert_rel (b->force_msun_kms_yr, 6.85850e-8, tol, "4.7 F blue");
  assert_rel (r->force_msun_kms_yr, 5.84531e-8, tol, "4.7 F red");
  assert_rel (tot->force_msun_kms_yr, 1.27038e-7, tol, "4.7 F total");
  assert_rel (b->lmech_lsun * EFFLUX_LSUN, 8.25007e28, tol, "4.7 L blue (erg/s)");
  assert_rel (r->lmech_lsun * EFFLUX_LSUN, 6.62952e28, tol, "4.7 L red (erg/s)");
  assert_rel (tot->lmech_lsun, 3.88704e-5, tol, "4.7 L total (Lsun)");
  g_assert_true (isnan (b->inclination_deg));
  /* voxels: every mask voxel of the 5 channels in range enters with clip-sigma 0 */
  g_assert_cmpuint (b->voxels, ==, 20 * 44 * 5);
  g_assert_cmpuint (r->voxels, ==, 20 * 36 * 5);
  g_assert_cmpuint (tot->voxels, ==, 20 * 44 * 5 + 20 * 36 * 5);
  /* P/M and the age rmax / (P/M) (Downes & Cabrit 2007 discuss why it runs long) */
  assert_rel (b->pm_kms, 5.58849e-4 / 1.77816e-4, tol, "P/M blue");
  assert_rel (b->age_pm_yr, 0.05 * EFFLUX_PC / (5.58849e-4 / 1.77816e-4 * 1e5) / EFFLUX_YR, tol, "age P/M blue");

  /* the same masks, a narrower range: finish again without preparing (REFERENCES 4.7 m0) */
  {
    g_autoptr (GHashTable) cubes = cube_table (t.cube);
    g_autoptr (GError) error = NULL;
    g_autoptr (EffluxMeasurePrep) prep = efflux_measure_prepare (d, cubes, NULL, &error);
    g_autoptr (EffluxMeasureResult) res2 = NULL;

    g_assert_no_error (error);
    g_assert_true (efflux_dossier_set_lobe_velocity (d, "blue", -4.5, -1.5, &error));
    res2 = efflux_measure_finish (prep, d, &error);
    g_assert_no_error (error);
    assert_rel (row (res2, "blue")->mass_msun, 600 * 2.54022e-7, tol, "4.7 blue, -4..-2 only");
    assert_rel (row (res2, "blue")->vmax_kms, 4.0, 1e-12, "vmax of the narrower range");
    g_assert_true (efflux_dossier_set_lobe_velocity (d, "blue", -6.5, -1.5, &error));

    /* a new outline that leaves out the far pixel (50, 91): only that lobe is prepared again */
    {
      double xs[4] = { 40.5, 60.5, 60.5, 40.5 }, ys[4] = { 51.5, 51.5, 85.5, 85.5 };
      double ra[4], dec[4];
      g_autoptr (EffluxMeasureResult) res3 = NULL;

      for (int i = 0; i < 4; i++)
        g_assert_true (efflux_cube_pixel_to_icrs (t.cube, xs[i], ys[i], &ra[i], &dec[i]));
      g_assert_true (efflux_dossier_set_lobe_polygon (d, "blue", ra, dec, 4, &error));
      g_assert_true (efflux_measure_prep_refresh_lobe (prep, d, "blue", NULL, &error));
      g_assert_no_error (error);
      g_assert_cmpuint (efflux_measure_prep_mask (prep, "blue")->n_pixels, ==, 20 * 34);
      res3 = efflux_measure_finish (prep, d, &error);
      g_assert_no_error (error);
      assert_rel (row (res3, "blue")->mass_msun, 400 * 2.54022e-7, tol, "4.6 m0 x 400 K without the far pixel");
      assert_rel (row (res3, "red")->mass_msun, 1.27011e-4, tol, "4.7 red unchanged");
      assert_rel (row (res3, "blue")->vmax_kms, 4.0, 1e-12, "vmax without the far pixel");
    }
  }

  /* the mass-velocity spectrum: dM/dv = m0 x sum / 1 km/s at -2 km/s */
  {
    EffluxMassSpectrum *sp = g_ptr_array_index (res->spectra, 0);

    g_assert_cmpstr (sp->lobe, ==, "blue");
    g_assert_cmpuint (sp->n, ==, 5);
    for (guint k = 0; k < sp->n; k++)
      if (sp->v_lsr_kms[k] == -2.0)
        assert_rel (sp->dmdv[k], 400 * 2.54022e-7, tol, "4.7 dM/dv at -2 km/s");
  }
  toy_clear (&t);
}

/* REFERENCES.md 4.7 [C], inclination i = 1 rad from the line of sight. */
static void
test_toy_inclined (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  double tol = 1e-3;

  toy_init (&t);
  d = toy_dossier (&t, "inclination-mode=fixed\ninclination-deg=57.29577951308232", "mc-samples=100");
  res = measure (d, t.cube);
  assert_rel (row (res, "total")->mass_msun, 3.04827e-4, tol, "4.7 i=1 M");
  assert_rel (row (res, "total")->momentum_msun_kms, 1.73955e-3, tol, "4.7 i=1 P");
  assert_rel (row (res, "total")->energy_erg, 1.19386e41, tol, "4.7 i=1 E");
  assert_rel (row (res, "blue")->tdyn_yr, 5231.94, tol, "4.7 i=1 t blue");
  assert_rel (row (res, "red")->tdyn_yr, 4185.55, tol, "4.7 i=1 t red");
  assert_rel (row (res, "total")->force_msun_kms_yr, 3.66184e-7, tol, "4.7 i=1 F");
  assert_rel (row (res, "total")->lmech_lsun * EFFLUX_LSUN, 7.93815e29, tol, "4.7 i=1 L erg/s");
  assert_rel (row (res, "total")->lmech_lsun, 2.0737e-4, tol, "4.7 i=1 L Lsun");
  assert_rel (row (res, "total")->mdot_msun_yr, 6.43317e-8, tol, "4.7 i=1 Mdot");
  assert_rel (row (res, "total")->inclination_deg, 57.29577951308232, 1e-12, "inclination column");
  assert_rel (row (res, "blue")->vmax_kms, 6.0 / cos (1.0), 1e-9, "vmax / cos i");
  /* fixed inclination and no other spread: every percentile is the nominal value */
  assert_rel (row (res, "total")->pct[EFFLUX_MQ_FORCE][0], 3.66184e-7, tol, "p16 F fixed");
  assert_rel (row (res, "total")->pct[EFFLUX_MQ_FORCE][2], 3.66184e-7, tol, "p84 F fixed");
  toy_clear (&t);
}

/* REFERENCES.md 4.8 [C]: opacity=fixed with tau = 6.5222 gives C_tau = 6.5318 (R = 10, X = 62). */
static void
test_toy_opacity_fixed (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;

  toy_init (&t);
  d = toy_dossier (&t, "", "opacity=fixed\ntau=6.5222\nmc-samples=0");
  res = measure (d, t.cube);
  assert_rel (row (res, "blue")->mass_msun, 1.77816e-4 * 6.5318, 1e-3, "4.7 x 4.8 C_tau(6.5222)");
  assert_rel (row (res, "total")->momentum_msun_kms, 9.39882e-4 * 6.5318, 1e-3, "4.7 x 4.8 P");
  g_assert_cmpint (row (res, "blue")->opacity, ==, EFFLUX_OPACITY_FIXED);
  toy_clear (&t);
}

/* A lobe measured directly on 13CO or C18O: the column per K km/s of that line (REFERENCES.md 4.4
 * [C], Tex 50 K with the CMB: 12CO 2-1 7.7063e14, 13CO 2-1 8.3076e14, C18O 2-1 8.3031e14 cm^-2),
 * times 12C/13C = 62 or 16O/18O = 560 (Wilson & Rood 1994, from memory). */
static void
test_toy_isotopologues (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d13 = NULL;
  g_autoptr (EffluxDossier) d18 = NULL;
  g_autoptr (EffluxMeasureResult) r13 = NULL;
  g_autoptr (EffluxMeasureResult) r18 = NULL;

  toy_init (&t);
  d13 = toy_dossier_line (&t, "", "mc-samples=0", "13CO 2-1");
  d18 = toy_dossier_line (&t, "", "mc-samples=0\no18-ratio=560", "C18O 2-1");
  r13 = measure (d13, t.cube);
  r18 = measure (d18, t.cube);
  assert_rel (row (r13, "blue")->mass_msun, 1.77816e-4 * 8.3076e14 / 7.7063e14 * 62, 1e-3, "4.7 on 13CO 2-1 x 62");
  assert_rel (row (r18, "total")->mass_msun, 3.04827e-4 * 8.3031e14 / 7.7063e14 * 560, 1e-3, "4.7 on C18O 2-1 x 560");
  toy_clear (&t);
}

/* Monte Carlo over [12CO/H2] log-uniform in [5e-5, 2e-4]: mass ~ 1/X, so its percentiles are
 * 1e-4 / X(q) with X(q) = 5e-5 (2e-4 / 5e-5)^q taken at q = 0.84, 0.5, 0.16 (analytic). */
static void
test_mc_abundance (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  double q[3] = { 0.84, 0.50, 0.16 };

  toy_init (&t);
  d = toy_dossier (&t, "", "co-abundance-range=5e-5;2e-4\nmc-samples=20000\nmc-seed=11");
  res = measure (d, t.cube);
  for (int j = 0; j < 3; j++)
    assert_rel (row (res, "total")->pct[EFFLUX_MQ_MASS][j], 3.04827e-4 * 1e-4 / (5e-5 * pow (4.0, q[j])), 0.02,
                "MC percentiles of M for a log-uniform abundance");
  toy_clear (&t);
}

/* clip-sigma and the beam efficiency: with clip-sigma 3 and rms 0.05 K only the ten non-zero
 * voxels enter (voxels = 5 per lobe) and the mass is unchanged; a beam efficiency of 0.5 doubles
 * the main-beam brightness, so the mass and its noise error (REFERENCES 4.7 [C]). */
static void
test_clip_and_efficiency (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  g_autoptr (EffluxDossier) d2 = NULL;
  g_autoptr (EffluxMeasureResult) res2 = NULL;
  g_autofree char *text = NULL;
  g_autofree char *text2 = NULL;
  g_autoptr (GError) error = NULL;
  char *at;

  toy_init (&t);
  d = toy_dossier (&t, "", "clip-sigma=3\nmc-samples=0");
  res = measure (d, t.cube);
  g_assert_cmpuint (row (res, "blue")->voxels, ==, 5);
  g_assert_cmpuint (row (res, "red")->voxels, ==, 5);
  assert_rel (row (res, "total")->mass_msun, 3.04827e-4, 1e-3, "4.7 M total, clipped");
  assert_rel (row (res, "blue")->mass_err, 2.54022e-7 * 0.05 * sqrt (5.0), 1e-4, "sigma M of 5 voxels");

  text = efflux_dossier_to_data (d, NULL);
  at = strstr (text, "beam-efficiency=1\n");
  g_assert_nonnull (at);
  text2 = g_strdup_printf ("%.*sbeam-efficiency=0.5\n%s", (int) (at - text), text, at + strlen ("beam-efficiency=1\n"));
  d2 = efflux_dossier_new_from_data (text2, -1, "toy-eff.efflux", "/nonexistent", &error);
  g_assert_no_error (error);
  res2 = measure (d2, t.cube);
  assert_rel (row (res2, "total")->mass_msun, 2 * 3.04827e-4, 1e-3, "4.7 M total / beam efficiency 0.5");
  assert_rel (row (res2, "blue")->mass_err, 2 * 2.54022e-7 * 0.05 * sqrt (5.0), 1e-4, "sigma M / beam efficiency");
  g_assert_cmpuint (row (res2, "blue")->voxels, ==, 5);
  toy_clear (&t);
}

/* Noise: every entering voxel carries rms^2; with clip 0 all 880 x 5 blue voxels enter, so
 * sigma_M = m0 |dv| rms sqrt(N) and sigma_P = m0 |dv| rms sqrt(880 sum u^2) (analytic). */
static void
test_noise (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  double m0 = 2.54022e-7;   /* REFERENCES 4.6 [C] */
  double rms = 0.05;
  double su2 = 36 + 25 + 16 + 9 + 4, su4 = 1296 + 625 + 256 + 81 + 16;
  EffluxMeasureRow *b, *tot, *r;

  toy_init (&t);
  d = toy_dossier (&t, "", "mc-samples=0");
  res = measure (d, t.cube);
  b = row (res, "blue");
  r = row (res, "red");
  tot = row (res, "total");
  assert_rel (b->mass_err, m0 * rms * sqrt (880.0 * 5), 1e-4, "sigma M blue");
  assert_rel (b->momentum_err, m0 * rms * sqrt (880.0 * su2), 1e-4, "sigma P blue");
  assert_rel (b->energy_err, 0.5 * m0 * rms * sqrt (880.0 * su4) * EFFLUX_MSUN * 1e10, 1e-4, "sigma E blue");
  assert_rel (r->mass_err, m0 * rms * sqrt (720.0 * 5), 1e-4, "sigma M red");
  assert_rel (tot->mass_err, m0 * rms * sqrt (880.0 * 5 + 720.0 * 5), 1e-4, "sigma M total (variances add)");
  assert_rel (b->mdot_err, b->mass_err / b->tdyn_yr, 1e-12, "sigma Mdot = sigma M / tdyn");
  toy_clear (&t);
}

/* Monte Carlo over the distance: mass ~ d^2, so with d ~ N(250, 12.5) the median is the nominal
 * and the 16-84 half-spread is 2 sigma_d / d (to first order; numpy.percentile convention). */
static void
test_mc_distance (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  EffluxMeasureRow *tot;
  double spread;

  toy_init (&t);
  d = toy_dossier (&t, "distance-err-pc=12.5", "mc-samples=20000\nmc-seed=7");
  res = measure (d, t.cube);
  tot = row (res, "total");
  g_assert_cmpuint (res->mc_samples, ==, 20000);
  assert_rel (tot->pct[EFFLUX_MQ_MASS][1], tot->mass_msun, 0.01, "MC p50 of M = nominal");
  spread = 0.5 * (tot->pct[EFFLUX_MQ_MASS][2] - tot->pct[EFFLUX_MQ_MASS][0]) / tot->mass_msun;
  assert_rel (spread, 2 * 12.5 / 250.0, 0.03, "MC half-spread of M = 2 sigma_d / d");
  /* momentum also ~ d^2; tdyn ~ d, so its spread is sigma_d / d */
  spread = 0.5 * (tot->pct[EFFLUX_MQ_TDYN][2] - tot->pct[EFFLUX_MQ_TDYN][0]) / tot->tdyn_yr;
  assert_rel (spread, 12.5 / 250.0, 0.03, "MC half-spread of tdyn = sigma_d / d");
  /* the same seed gives the same percentiles */
  {
    g_autoptr (EffluxMeasureResult) again = measure (d, t.cube);
    g_assert_cmpfloat (row (again, "total")->pct[EFFLUX_MQ_MASS][0], ==, tot->pct[EFFLUX_MQ_MASS][0]);
  }
  toy_clear (&t);
}

/* inclination-mode=random: isotropic (cos i uniform) over [5, 85] deg (efflux-sampling.h). The
 * momentum factor 1/cos i is monotonic in u, so its percentiles are 1/(cos 5 - q (cos 5 - cos 85)). */
static void
test_mc_random_inclination (void)
{
  Toy t;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  EffluxMeasureRow *tot;
  double c5 = cos (5 * G_PI / 180), c85 = cos (85 * G_PI / 180);
  double q[3] = { 0.16, 0.50, 0.84 };
  double p_obs = 9.39882e-4;   /* REFERENCES 4.7 [C] */

  toy_init (&t);
  d = toy_dossier (&t, "inclination-mode=random", "mc-samples=20000\nmc-seed=3");
  res = measure (d, t.cube);
  tot = row (res, "total");
  for (int j = 0; j < 3; j++)
    {
      double f = 1.0 / (c5 - q[j] * (c5 - c85));
      assert_rel (tot->pct[EFFLUX_MQ_MOMENTUM][j], p_obs * f, 0.02, "random: P percentile = P_obs / cos i(q)");
      /* mass does not depend on i */
      assert_rel (tot->pct[EFFLUX_MQ_MASS][j], 3.04827e-4, 1e-3, "random: M percentiles");
    }
  /* the table value sits at the median inclination */
  assert_rel (tot->inclination_deg, acos (0.5 * (c5 + c85)) * 180 / G_PI, 1e-9, "median inclination");
  assert_rel (tot->momentum_msun_kms, p_obs / (0.5 * (c5 + c85)), 1e-3, "P at the median inclination");
  toy_clear (&t);
}

/* An exact power law dM/dv = A |v|^-2 in channels 3..10 km/s: mv_gamma = 2 and the hidden mass in
 * [0.5, 2.5] km/s is A (1/0.5 - 1/2.5) = 1.6 A (analytic integral). */
static void
test_mass_velocity (void)
{
  g_autoptr (EffluxCube) cube = efflux_cube_new_simple (9, 9, 12, RA0, DEC0, 1.0, 0.0, 1.0, REST_12CO21);
  g_autofree char *poly = rect_polygon (cube, 2.5, 2.5, 5.5, 5.5);
  g_autofree char *text = NULL;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  g_autoptr (GError) error = NULL;
  double m0 = 2.54022e-7;
  EffluxMeasureRow *r;

  for (int v = 1; v <= 11; v++)
    set_voxel (cube, 4, 4, v, (float) (1000.0 / (v * v)));
  text = g_strdup_printf ("[Source]\nname=PL\nra-deg=%.9f\ndec-deg=%.9f\ndistance-pc=250\nvsys-kms=0\n"
                          "[Assumptions]\ntex-k=50\nco-abundance=1e-4\nmc-samples=0\n"
                          "[Cube co]\npath=none.fits\nline=12CO 2-1\nrms-k=0.001\n"
                          "[Lobe r]\nkind=red\ncube=co\npolygon=%s\nvelocity-kms=2.5;10.5\n",
                          RA0, DEC0, poly);
  d = efflux_dossier_new_from_data (text, -1, "pl.efflux", "/nonexistent", &error);
  g_assert_no_error (error);
  res = measure (d, cube);
  r = row (res, "r");
  assert_rel (r->mv_gamma, 2.0, 1e-5, "power-law slope");
  assert_rel (r->hidden_mass_msun, 1.6 * 1000 * m0, 1e-3, "hidden mass, analytic integral");
  /* never added */
  {
    double m = 0;

    for (int v = 3; v <= 10; v++)
      m += 1000.0 / (v * v) * m0;
    assert_rel (r->mass_msun, m, 1e-3, "mass without the hidden part");
  }
  g_assert_true (isnan (row (res, "total")->mv_gamma));
}

/* Masks: pixel centres inside (rule on the edge as documented in efflux-lobe.h). */
static void
test_mask (void)
{
  double sx[4] = { 1.0, 4.0, 4.0, 1.0 }, sy[4] = { 1.0, 1.0, 3.0, 3.0 };
  double bx[4] = { 0.0, 4.0, 0.0, 4.0 }, by[4] = { 0.0, 0.0, 4.0, 4.0 };
  double tx[3] = { -0.5, 9.5, -0.5 }, ty[3] = { -0.5, -0.5, 9.5 };
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxLobeMask) m = efflux_lobe_mask_new_pixels (10, 10, sx, sy, 4, "square", &error);
  g_autoptr (EffluxLobeMask) tri = NULL;
  EffluxLobeMask *bow;

  g_assert_no_error (error);
  /* centres on the left/lower edges are in, on the right/upper edges out: x 1..3, y 1..2 */
  g_assert_cmpuint (m->n_pixels, ==, 6);
  g_assert_cmpuint (m->index[0], ==, 1 * 10 + 1);
  g_assert_cmpuint (m->index[5], ==, 2 * 10 + 3);
  /* a bow tie crosses itself */
  bow = efflux_lobe_mask_new_pixels (10, 10, bx, by, 4, "demo.efflux: [Lobe x] polygon", &error);
  g_assert_null (bow);
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_cmpstr (error->message, ==, "demo.efflux: [Lobe x] polygon: edges cross");
  g_clear_error (&error);
  /* a right triangle with legs 10 and the hypotenuse x + y = 9: centres with x + y <= 8 are in
   * (45 of them); those on the hypotenuse lie on a right edge and are out */
  tri = efflux_lobe_mask_new_pixels (10, 10, tx, ty, 3, "tri", &error);
  g_assert_no_error (error);
  g_assert_cmpuint (tri->n_pixels, ==, 45);
}

/* ---------------------------------------------------------------------------------------------- */
/* Against scipy and astropy (tests/ref/measure_ref.py through EFFLUX_PYTHON). */

static char *
run_ref (const char * const *args)
{
  const char *python = g_getenv ("EFFLUX_PYTHON");
  const char *src = g_getenv ("EFFLUX_SOURCE_ROOT");
  g_autofree char *script = NULL;
  g_autoptr (GPtrArray) argv = g_ptr_array_new ();
  g_autoptr (GError) error = NULL;
  g_autofree char *err = NULL;
  char *out = NULL;
  int status = 0;

  if (python == NULL || *python == '\0' || src == NULL)
    {
      g_test_fail_printf ("EFFLUX_PYTHON or EFFLUX_SOURCE_ROOT is not set (run through meson test)");
      return NULL;
    }
  script = g_build_filename (src, "tests", "ref", "measure_ref.py", NULL);
  g_ptr_array_add (argv, (gpointer) python);
  g_ptr_array_add (argv, script);
  for (gsize i = 0; args[i] != NULL; i++)
    g_ptr_array_add (argv, (gpointer) args[i]);
  g_ptr_array_add (argv, NULL);
  g_assert_true (g_spawn_sync (NULL, (char **) argv->pdata, NULL, G_SPAWN_DEFAULT, NULL, NULL, &out, &err, &status, &error));
  g_assert_no_error (error);
  if (!g_spawn_check_wait_status (status, &error))
    g_error ("measure_ref.py: %s: %s", error->message, err);
  return out;
}

/* Convex outlines with random (non-integer) vertices: the pixel centres inside must be exactly
 * those that scipy.spatial.Delaunay finds inside the same polygon. */
static void
test_mask_scipy (void)
{
  g_autoptr (GRand) rand = g_rand_new_with_seed (20261202);

  for (int trial = 0; trial < 12; trial++)
    {
      int n = g_rand_int_range (rand, 3, 9);
      double cx = g_rand_double_range (rand, 5, 55), cy = g_rand_double_range (rand, 5, 45);
      double ax = g_rand_double_range (rand, 3, 30), ay = g_rand_double_range (rand, 3, 25);
      double rot = g_rand_double_range (rand, 0, G_PI);
      double px[8], py[8], ang[8];
      g_autoptr (GString) text = g_string_new (NULL);
      g_autoptr (GError) error = NULL;
      g_autoptr (EffluxLobeMask) m = NULL;
      g_autofree char *out = NULL;
      g_auto (GStrv) lines = NULL;
      g_autofree char *nx = g_strdup ("60");
      g_autofree char *ny = g_strdup ("50");
      guint count = 0;

      for (int i = 0; i < n; i++)
        ang[i] = g_rand_double_range (rand, 0, 2 * G_PI);
      for (int i = 1; i < n; i++)   /* sort the angles: a convex polygon on an ellipse */
        for (int j = i; j > 0 && ang[j] < ang[j - 1]; j--)
          {
            double t = ang[j]; ang[j] = ang[j - 1]; ang[j - 1] = t;
          }
      for (int i = 0; i < n; i++)
        {
          double ex = ax * cos (ang[i]), ey = ay * sin (ang[i]);
          char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];

          px[i] = cx + ex * cos (rot) - ey * sin (rot);
          py[i] = cy + ex * sin (rot) + ey * cos (rot);
          g_string_append_printf (text, "%s%s,%s", i ? ";" : "",
                                  g_ascii_formatd (a, sizeof a, "%.17g", px[i]),
                                  g_ascii_formatd (b, sizeof b, "%.17g", py[i]));
        }
      m = efflux_lobe_mask_new_pixels (60, 50, px, py, (gsize) n, "random", &error);
      g_assert_no_error (error);
      {
        const char *args[] = { "mask", nx, ny, text->str, NULL };
        out = run_ref (args);
      }
      if (out == NULL)
        return;
      lines = g_strsplit (out, "\n", -1);
      for (guint i = 0; lines[i] != NULL && lines[i][0] != '\0'; i++, count++)
        {
          g_assert_cmpuint (i, <, m->n_pixels);
          g_assert_cmpuint (m->index[i], ==, (guint) g_ascii_strtoull (lines[i], NULL, 10));
        }
      g_assert_cmpuint (count, ==, m->n_pixels);
    }
}

/* rmax: the distance from the source to the farthest detected pixel, on a TAN grid at Dec 60
 * with 2" pixels, against astropy (WCS.pixel_to_world, SkyCoord.separation). */
static void
test_rmax_astropy (void)
{
  g_autoptr (EffluxCube) cube = efflux_cube_new_simple (101, 101, 3, 150.0, 60.0, 2.0, -1.0, 1.0, REST_12CO21);
  g_autofree char *poly = rect_polygon (cube, -0.5, -0.5, 100.5, 100.5);
  g_autofree char *text = NULL;
  g_autofree char *out = NULL;
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxMeasureResult) res = NULL;
  g_autoptr (GError) error = NULL;
  double xs = 50.3, ys = 49.6, ra, dec, sep, ra_ref, dec_ref;
  const char *args[] = { "separation", "101", "101", "2", "150", "60", "50.3", "49.6", "97", "5", NULL };
  g_auto (GStrv) parts = NULL;

  set_voxel (cube, 97, 5, 0.0, 1.0f);
  set_voxel (cube, 60, 60, 0.0, 5.0f);
  g_assert_true (efflux_cube_pixel_to_icrs (cube, xs, ys, &ra, &dec));
  text = g_strdup_printf ("[Source]\nname=Far\nra-deg=%.12f\ndec-deg=%.12f\ndistance-pc=100\nvsys-kms=-3\n"
                          "[Assumptions]\ntex-k=20\nco-abundance=1e-4\nmc-samples=0\n"
                          "[Cube co]\npath=none.fits\nline=12CO 2-1\nrms-k=0.1\n"
                          "[Lobe r]\nkind=red\ncube=co\npolygon=%s\nvelocity-kms=-0.5;0.5\n",
                          ra, dec, poly);
  d = efflux_dossier_new_from_data (text, -1, "far.efflux", "/nonexistent", &error);
  g_assert_no_error (error);
  res = measure (d, cube);
  out = run_ref (args);
  if (out == NULL)
    return;
  parts = g_strsplit (g_strstrip (out), " ", -1);
  sep = g_ascii_strtod (parts[0], NULL);
  ra_ref = g_ascii_strtod (parts[1], NULL);
  dec_ref = g_ascii_strtod (parts[2], NULL);
  g_assert_cmpfloat (fabs (ra - ra_ref) * 3600 * cos (60 * G_PI / 180), <, 1e-6);
  g_assert_cmpfloat (fabs (dec - dec_ref) * 3600, <, 1e-6);
  /* 1 arcsec at 100 pc is 100 au */
  assert_rel (row (res, "r")->rmax_au / 100.0, sep, 1e-8, "rmax against astropy separation");
  assert_rel (row (res, "r")->vmax_kms, 3.0, 1e-12, "vmax |0 - (-3)|");
}

/* ---------------------------------------------------------------------------------------------- */
/* Outline changes by difference (efflux_measure_prep_refresh_lobe) against a fresh measurement of
 * the same dossier from the file (efflux_measure_dossier): random star-shaped outlines moved
 * vertex by vertex, velocity ranges changed between them, with and without clipping, with the
 * opacity from an isotopologue cube and with NaN voxels. Every result must equal the fresh one to
 * 1e-9 relative in every numeric column (the sums differ by round-off only). */

typedef struct
{
  double ang[7], rad[7];   /* vertex angles (within their sector) and radii, pixels */
  double cx, cy;
} Star;

static void
star_polygon (const EffluxCube *cube,
              const Star       *s,
              double           *ra,
              double           *dec)
{
  for (int i = 0; i < 7; i++)
    g_assert_true (efflux_cube_pixel_to_icrs (cube, s->cx + s->rad[i] * cos (s->ang[i]),
                                              s->cy + s->rad[i] * sin (s->ang[i]), &ra[i], &dec[i]));
}

static void
star_init (Star    *s,
           GRand   *rand,
           double   cx,
           double   cy)
{
  s->cx = cx;
  s->cy = cy;
  for (int i = 0; i < 7; i++)
    {
      s->ang[i] = 2 * G_PI * (i + g_rand_double_range (rand, 0.1, 0.9)) / 7;
      s->rad[i] = g_rand_double_range (rand, 6, 14);
    }
}

/* One vertex moves a little (most steps: by difference), or all of them jump (prepared again). */
static void
star_step (Star  *s,
           GRand *rand)
{
  if (g_rand_int_range (rand, 0, 10) == 0)
    for (int i = 0; i < 7; i++)
      s->rad[i] = g_rand_double_range (rand, 4, 15);
  else
    {
      int i = g_rand_int_range (rand, 0, 7);

      s->rad[i] = CLAMP (s->rad[i] + g_rand_double_range (rand, -2.5, 2.5), 3, 15);
      s->ang[i] = CLAMP (s->ang[i] + g_rand_double_range (rand, -0.1, 0.1),
                         2 * G_PI * (i + 0.05) / 7, 2 * G_PI * (i + 0.95) / 7);
    }
}

/* skip_broken: the broken power-law columns must be NaN in got (EFFLUX_MEASURE_FINISH_NO_BROKEN_FIT) */
static void
assert_same_result (const EffluxMeasureResult *got,
                    const EffluxMeasureResult *want,
                    gboolean                   skip_broken,
                    const char                *what)
{
  const char * const *cols = efflux_measure_columns ();

  g_assert_cmpuint (got->rows->len, ==, want->rows->len);
  for (guint r = 0; r < got->rows->len; r++)
    for (guint c = 0; cols[c] != NULL; c++)
      {
        gboolean is_text = FALSE;
        double a = efflux_measure_value (g_ptr_array_index (got->rows, r), c, &is_text);
        double b = efflux_measure_value (g_ptr_array_index (want->rows, r), c, &is_text);

        if (skip_broken && (strcmp (cols[c], "mv_break_kms") == 0 || strcmp (cols[c], "mv_gamma_low") == 0
                            || strcmp (cols[c], "mv_gamma_high") == 0))
          {
            g_assert_true (isnan (a));
            continue;
          }
        if (is_text || (isnan (a) && isnan (b)) || a == b)
          continue;
        if (!(fabs (a - b) <= 1e-9 * MAX (fabs (a), fabs (b))))
          g_error ("%s: row %u column %s: by difference %.17g, fresh %.17g", what, r, cols[c], a, b);
      }
}

static void
incremental_case (guint64     seed,
                  const char *assumptions,
                  gboolean    isotopologue)
{
  g_autoptr (GRand) rand = g_rand_new_with_seed ((guint32) seed);
  g_autoptr (GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-measure-XXXXXX", &error);
  g_autofree char *co_path = NULL, *iso_path = NULL, *text = NULL;
  g_autoptr (EffluxCube) co = efflux_cube_new_simple (64, 56, 40, RA0, DEC0, 1.0, -10.0, 0.5, REST_12CO21);
  g_autoptr (EffluxCube) iso = efflux_cube_new_simple (64, 56, 30, RA0, DEC0, 1.0, -9.0, 0.6, 220.3986842e9);
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (GHashTable) cubes = NULL;
  g_autoptr (EffluxMeasurePrep) prep = NULL;
  Star blue, red;
  double ra[7], dec[7], src_ra, src_dec;
  g_autofree char *bpoly = NULL, *rpoly = NULL;
  guint before;

  g_assert_no_error (error);
  /* noise, a line of random centre and width in every spectrum, and a few NaN voxels */
  for (gsize p = 0; p < co->nx * co->ny; p++)
    {
      double vc = g_rand_double_range (rand, -6, 6), w = g_rand_double_range (rand, 1, 4);
      double amp = g_rand_double_range (rand, 0, 3);

      for (gsize k = 0; k < co->nchan; k++)
        co->data[p * co->nchan + k] = (float) (amp * exp (-0.5 * pow ((co->velocity[k] - vc) / w, 2))
                                               + g_rand_double_range (rand, -0.3, 0.3));
      for (gsize k = 0; k < iso->nchan; k++)
        iso->data[p * iso->nchan + k] = (float) (0.2 * amp * exp (-0.5 * pow ((iso->velocity[k] - vc) / w, 2))
                                                 + g_rand_double_range (rand, -0.05, 0.05));
      if (g_rand_int_range (rand, 0, 50) == 0)
        co->data[p * co->nchan + g_rand_int_range (rand, 0, (gint32) co->nchan)] = NAN;
    }
  co_path = g_build_filename (dir, "co.fits", NULL);
  iso_path = g_build_filename (dir, "iso.fits", NULL);
  g_assert_true (efflux_fits_write_cube (co, co_path, NULL, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_fits_write_cube (iso, iso_path, NULL, &error));
  g_assert_no_error (error);

  star_init (&blue, rand, 20, 34);
  star_init (&red, rand, 44, 22);
  star_polygon (co, &blue, ra, dec);
  bpoly = g_strdup_printf ("%.12f,%.12f;%.12f,%.12f;%.12f,%.12f;%.12f,%.12f;%.12f,%.12f;%.12f,%.12f;%.12f,%.12f",
                           ra[0], dec[0], ra[1], dec[1], ra[2], dec[2], ra[3], dec[3], ra[4], dec[4], ra[5], dec[5], ra[6], dec[6]);
  star_polygon (co, &red, ra, dec);
  rpoly = g_strdup_printf ("%.12f,%.12f;%.12f,%.12f;%.12f,%.12f;%.12f,%.12f;%.12f,%.12f;%.12f,%.12f;%.12f,%.12f",
                           ra[0], dec[0], ra[1], dec[1], ra[2], dec[2], ra[3], dec[3], ra[4], dec[4], ra[5], dec[5], ra[6], dec[6]);
  g_assert_true (efflux_cube_pixel_to_icrs (co, 32, 28, &src_ra, &src_dec));
  text = g_strdup_printf ("[Source]\nname=Steps\nra-deg=%.12f\ndec-deg=%.12f\ndistance-pc=300\ndistance-err-pc=30\n"
                          "vsys-kms=0.2\ninclination-mode=random\n"
                          "[Assumptions]\ntex-k=30\nco-abundance=1e-4\ntex-range-k=20;50\nmc-samples=300\nmc-seed=5\n%s\n"
                          "[Cube co]\npath=co.fits\nline=12CO 2-1\nrole=tracer\n"
                          "%s"
                          "[Lobe blue]\nkind=blue\ncube=co\npolygon=%s\nvelocity-kms=-9;-1\n"
                          "[Lobe red]\nkind=red\ncube=co\npolygon=%s\nvelocity-kms=1;9\n",
                          src_ra, src_dec, assumptions,
                          isotopologue ? "[Cube iso]\npath=iso.fits\nline=13CO 2-1\nrole=isotopologue\nrms-k=0.03\n" : "",
                          bpoly, rpoly);
  d = efflux_dossier_new_from_data (text, -1, "steps.efflux", dir, &error);
  g_assert_no_error (error);
  cubes = efflux_measure_load_cubes (d, NULL, &error);
  g_assert_no_error (error);
  prep = efflux_measure_prepare (d, cubes, NULL, &error);
  g_assert_no_error (error);
  before = efflux_measure_prep_n_incremental (prep);

  for (int step = 0; step < 40; step++)
    {
      g_autoptr (EffluxMeasureResult) got = NULL;
      g_autoptr (EffluxMeasureResult) quick = NULL;
      g_autoptr (EffluxMeasureResult) want = NULL;
      g_autofree char *what = g_strdup_printf ("seed %" G_GUINT64_FORMAT " step %d", seed, step);
      int choice = g_rand_int_range (rand, 0, 5);

      if (choice == 4)
        g_assert_true (efflux_dossier_set_lobe_velocity (d, "blue", g_rand_double_range (rand, -10, -6),
                                                         g_rand_double_range (rand, -4, -0.5), &error));
      else
        {
          Star *s = choice < 2 ? &blue : &red;
          const char *lobe = choice < 2 ? "blue" : "red";

          star_step (s, rand);
          star_polygon (co, s, ra, dec);
          g_assert_true (efflux_dossier_set_lobe_polygon (d, lobe, ra, dec, 7, &error));
          g_assert_no_error (error);
          g_assert_true (efflux_measure_prep_refresh_lobe (prep, d, lobe, NULL, &error));
        }
      g_assert_no_error (error);
      got = efflux_measure_finish (prep, d, &error);
      g_assert_no_error (error);
      want = efflux_measure_dossier (d, NULL, &error);
      g_assert_no_error (error);
      assert_same_result (got, want, FALSE, what);
      quick = efflux_measure_finish_flags (prep, d, EFFLUX_MEASURE_FINISH_NO_BROKEN_FIT, &error);
      g_assert_no_error (error);
      assert_same_result (quick, want, TRUE, what);
    }
  /* most outline changes went by difference */
  g_assert_cmpuint (efflux_measure_prep_n_incremental (prep) - before, >=, 10);

  g_clear_pointer (&prep, efflux_measure_prep_free);
  g_assert_cmpint (g_remove (co_path), ==, 0);
  g_assert_cmpint (g_remove (iso_path), ==, 0);
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

static void
test_incremental (void)
{
  for (guint64 seed = 1; seed <= 3; seed++)
    {
      incremental_case (seed, "clip-sigma=0\nopacity=none", FALSE);
      incremental_case (seed + 100, "clip-sigma=2\nopacity=none", FALSE);
    }
  incremental_case (7, "clip-sigma=0\nopacity=from-isotopologue", TRUE);
  incremental_case (8, "clip-sigma=1.5\nopacity=from-isotopologue", TRUE);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/measure/mass-per-pixel", test_mass_per_pixel);
  g_test_add_func ("/measure/mask", test_mask);
  g_test_add_func ("/measure/toy", test_toy);
  g_test_add_func ("/measure/incremental", test_incremental);
  g_test_add_func ("/measure/toy-inclined", test_toy_inclined);
  g_test_add_func ("/measure/toy-opacity-fixed", test_toy_opacity_fixed);
  g_test_add_func ("/measure/toy-isotopologues", test_toy_isotopologues);
  g_test_add_func ("/measure/noise", test_noise);
  g_test_add_func ("/measure/clip-and-efficiency", test_clip_and_efficiency);
  g_test_add_func ("/measure/mc-abundance", test_mc_abundance);
  g_test_add_func ("/measure/mc-distance", test_mc_distance);
  g_test_add_func ("/measure/mc-random-inclination", test_mc_random_inclination);
  g_test_add_func ("/measure/mass-velocity", test_mass_velocity);
  g_test_add_func ("/measure/mask-scipy", test_mask_scipy);
  g_test_add_func ("/measure/rmax-astropy", test_rmax_astropy);
  return g_test_run ();
}
