/* SPDX-License-Identifier: GPL-3.0-or-later */
/* PV cuts against scipy.ndimage.map_coordinates(order=1, mode='constant', cval=nan) with the
 * CONTRACT.md sampling rule written independently in tests/ref/pv_ref.py; straight and bent paths,
 * with and without width, partly outside the map; the FITS axes read back with CFITSIO; cuts
 * through two cubes of the same sky on different grids; the `efflux-cli pv` and `moment`
 * commands end to end. */
#include <fitsio.h>
#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-fitsout.h"
#include "efflux-maps.h"
#include "efflux-pv.h"
#include "efflux-test-util.h"

#define NX 40
#define NY 30
#define NCHAN 9
#define PIX 0.5

static EffluxCube *
make_cube (void)
{
  EffluxCube *cube = efflux_cube_new_simple (NX, NY, NCHAN, 83.8221, -5.3911, PIX, -2.0, 0.5,
                                             115.271e9);
  g_autoptr (GRand) rand = g_rand_new_with_seed (4242);

  g_assert_nonnull (cube);
  for (gsize i = 0; i < NX * NY * NCHAN; i++)
    cube->data[i] = (float) g_rand_double_range (rand, 0.5, 3.0);
  return cube;
}

typedef struct
{
  const char *name;
  double      width;
  gsize       n;
  double      x[4], y[4];
} Path;

static const Path paths[] = {
  { "straight", 0.0, 2, { 3.2, 33.9 }, { 4.7, 21.3 } },
  { "straight-wide", 2.0, 2, { 3.2, 33.9 }, { 4.7, 21.3 } },       /* k = 2 */
  { "bent", 1.4, 4, { 5.5, 20.3, 36.0, 30.1 }, { 25.1, 12.2, 24.4, 3.3 } },   /* k = 1 */
  { "outside", 2.3, 2, { -6.3, 45.7 }, { 10.2, 18.9 } },         /* k = 2, ends off the map */
  { "row", 3.0, 2, { 0.0, 39.0 }, { 7.0, 7.0 } },                /* k = 3, on the grid */
  { "steep", 0.9, 3, { 20.0, 21.0, 21.0 }, { 1.0, 28.5, 28.5 } }, /* repeated last vertex */
};

static void
test_against_scipy (void)
{
  g_autoptr (EffluxCube) cube = make_cube ();
  g_autoptr (GError) error = NULL;
  g_autoptr (GString) job = g_string_new (NULL);
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-pv");
  g_autofree char *p = g_build_filename (dir, "cube.f32", NULL);

  g_file_set_contents (p, (const char *) cube->data, NX * NY * NCHAN * sizeof (float), &error);
  g_assert_no_error (error);
  g_string_append_printf (job, "%d %d %d %.17g\n", NX, NY, NCHAN, PIX);
  for (guint i = 0; i < G_N_ELEMENTS (paths); i++)
    {
      g_string_append_printf (job, "%s %.17g ", paths[i].name, paths[i].width);
      for (gsize v = 0; v < paths[i].n; v++)
        g_string_append_printf (job, "%s%.17g,%.17g", v ? ";" : "", paths[i].x[v], paths[i].y[v]);
      g_string_append_c (job, '\n');
    }
  g_free (p);
  p = g_build_filename (dir, "job.txt", NULL);
  g_file_set_contents (p, job->str, -1, &error);
  g_assert_no_error (error);
  g_free (efflux_test_python ("pv_ref.py", (const char *[]) { dir, NULL }));

  for (guint i = 0; i < G_N_ELEMENTS (paths); i++)
    {
      g_autoptr (EffluxPv) pv = efflux_pv_cut_pixels (cube, paths[i].x, paths[i].y, paths[i].n,
                                                      paths[i].width, &error);
      g_autofree char *posname = g_strdup_printf ("%s-pos", paths[i].name);
      g_autofree double *ref = NULL;
      g_autofree double *pos = NULL;
      gsize nref, npos, nan_count = 0;
      double worst = 0.0;

      g_assert_no_error (error);
      ref = efflux_test_read_f64 (dir, paths[i].name, &nref);
      pos = efflux_test_read_f64 (dir, posname, &npos);
      g_assert_cmpuint (npos, ==, 2 * pv->n_offsets);
      g_assert_cmpuint (nref, ==, NCHAN * pv->n_offsets);
      g_assert_cmpuint (pv->nchan, ==, NCHAN);
      g_assert_cmpfloat (pv->offset_step_arcsec, ==, PIX);
      for (gsize s = 0; s < pv->n_offsets; s++)
        {
          g_assert_cmpfloat_with_epsilon (pv->x[s], pos[2 * s], 1e-9);
          g_assert_cmpfloat_with_epsilon (pv->y[s], pos[2 * s + 1], 1e-9);
        }
      for (gsize c = 0; c < nref; c++)
        {
          double r = ref[c], v = pv->data[c];

          if (isnan (r) || isnan (v))
            {
              g_assert_true (isnan (r) && isnan (v));
              nan_count++;
              continue;
            }
          worst = MAX (worst, fabs (v - r) / fabs (r));
          g_assert_cmpfloat (fabs (v - r), <=, 1e-5 * fabs (r));
        }
      g_test_message ("%s: %" G_GSIZE_FORMAT " offsets, k = %d, %" G_GSIZE_FORMAT " NaN, worst "
                      "relative difference %.2e", paths[i].name, pv->n_offsets, pv->half_width,
                      nan_count, worst);
      if (strcmp (paths[i].name, "outside") == 0)
        g_assert_cmpuint (nan_count, >, 0);
      else
        g_assert_cmpuint (nan_count, ==, 0);
    }
  /* the half widths the CONTRACT rule gives: floor(width / (2 x 0.5")) */
  {
    g_autoptr (EffluxPv) a = efflux_pv_cut_pixels (cube, paths[1].x, paths[1].y, 2, 2.0, NULL);
    g_autoptr (EffluxPv) b = efflux_pv_cut_pixels (cube, paths[2].x, paths[2].y, 4, 1.4, NULL);
    g_autoptr (EffluxPv) c = efflux_pv_cut_pixels (cube, paths[1].x, paths[1].y, 2, 0.99, NULL);

    g_assert_cmpint (a->half_width, ==, 2);
    g_assert_cmpint (b->half_width, ==, 1);
    g_assert_cmpint (c->half_width, ==, 0);
    /* straight path: floor(L) + 1 samples, L = |(30.7, 16.6)| = 34.90 pixels */
    g_assert_cmpuint (a->n_offsets, ==, 35);
    /* the bent path's arc length continues through the vertices: the first segment is
     * L1 = |(14.8, -12.9)| = 19.633 pixels, so sample 20 lies 20 - L1 beyond vertex 2 */
    g_assert_cmpfloat_with_epsilon (hypot (b->x[20] - 20.3, b->y[20] - 12.2),
                                    20.0 - hypot (14.8, -12.9), 1e-9);
  }
  efflux_test_remove_tree (dir);
}

static void
read_key_string (fitsfile   *f,
                 const char *key,
                 char       *value)
{
  int status = 0;

  fits_read_key (f, TSTRING, key, value, NULL, &status);
  g_assert_cmpint (status, ==, 0);
}

static double
read_key_double (fitsfile   *f,
                 const char *key)
{
  int status = 0;
  double value = NAN;

  fits_read_key (f, TDOUBLE, key, &value, NULL, &status);
  g_assert_cmpint (status, ==, 0);
  return value;
}

/* A cut along ICRS vertices equals the cut along the same vertices in pixels, and its FITS file
 * carries the CONTRACT axes. */
static void
test_fits_axes (void)
{
  g_autoptr (EffluxCube) cube = make_cube ();
  g_autoptr (EffluxPv) pv = NULL;
  g_autoptr (EffluxPv) pvp = NULL;
  g_autoptr (GError) error = NULL;
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-pv");
  g_autofree char *out = g_build_filename (dir, "cut.fits", NULL);
  g_autofree float *back = NULL;
  const Path *path = &paths[2];
  double radec[8];
  fitsfile *f = NULL;
  int status = 0, naxis = 0, anynul = 0;
  long naxes[2] = { 0, 0 };
  char text[FLEN_VALUE];

  for (gsize v = 0; v < path->n; v++)
    g_assert_true (efflux_cube_pixel_to_icrs (cube, path->x[v], path->y[v], &radec[2 * v],
                                              &radec[2 * v + 1]));
  pv = efflux_pv_cut (cube, radec, path->n, path->width, &error);
  g_assert_no_error (error);
  pvp = efflux_pv_cut_pixels (cube, path->x, path->y, path->n, path->width, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (pv->n_offsets, ==, pvp->n_offsets);
  for (gsize i = 0; i < pv->n_offsets * pv->nchan; i++)
    g_assert_cmpfloat (fabs (pv->data[i] - pvp->data[i]), <=, 1e-5 * fabs (pvp->data[i]));
  for (gsize s = 0; s < pv->n_offsets; s++)
    {
      double x, y;

      /* ra/dec of each sample go back to its pixel */
      g_assert_true (efflux_cube_icrs_to_pixel (cube, pv->ra[s], pv->dec[s], &x, &y));
      g_assert_cmpfloat_with_epsilon (x, pv->x[s], 1e-6);
      g_assert_cmpfloat_with_epsilon (y, pv->y[s], 1e-6);
    }

  g_assert_true (efflux_pv_write_fits (pv, "K", out, &error));
  g_assert_no_error (error);
  fits_open_file (&f, out, READONLY, &status);
  g_assert_cmpint (status, ==, 0);
  fits_get_img_dim (f, &naxis, &status);
  fits_get_img_size (f, 2, naxes, &status);
  g_assert_cmpint (status, ==, 0);
  g_assert_cmpint (naxis, ==, 2);
  g_assert_cmpint (naxes[0], ==, (long) pv->n_offsets);
  g_assert_cmpint (naxes[1], ==, NCHAN);
  read_key_string (f, "CTYPE1", text);
  g_assert_cmpstr (text, ==, "OFFSET");
  read_key_string (f, "CUNIT1", text);
  g_assert_cmpstr (text, ==, "arcsec");
  read_key_string (f, "CTYPE2", text);
  g_assert_cmpstr (text, ==, "VRAD");
  read_key_string (f, "CUNIT2", text);
  g_assert_cmpstr (text, ==, "km/s");
  read_key_string (f, "BUNIT", text);
  g_assert_cmpstr (text, ==, "K");
  /* offset 0 at the first vertex (pixel 1), one cube pixel (0.5") per sample */
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "CRPIX1"), 1.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "CRVAL1"), 0.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "CDELT1"), PIX, 1e-12);
  /* channel 0 at -2 km/s, 0.5 km/s steps */
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "CRPIX2"), 1.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "CRVAL2"), -2.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "CDELT2"), 0.5, 1e-12);
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "PVWIDTH"), 1.4, 1e-12);
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "PVHALFW"), 1.0, 1e-12);
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "PVRA1"), radec[0], 1e-9);
  g_assert_cmpfloat_with_epsilon (read_key_double (f, "PVDEC4"), radec[7], 1e-9);
  back = g_new (float, pv->n_offsets * NCHAN);
  fits_read_img (f, TFLOAT, 1, (LONGLONG) (pv->n_offsets * NCHAN), NULL, back, &anynul, &status);
  g_assert_cmpint (status, ==, 0);
  /* axis 1 fastest: the value at offset i, channel c is data[c * n + i] */
  g_assert_cmpmem (back, pv->n_offsets * NCHAN * sizeof (float), pv->data,
                   pv->n_offsets * NCHAN * sizeof (float));
  fits_close_file (f, &status);
  efflux_test_remove_tree (dir);
}

/* f is linear in the tangent-plane offsets (arcsec) and in velocity, so bilinear sampling and
 * linear velocity interpolation reproduce it exactly on any grid: two cubes of the same sky on
 * different grids must give the same cut. */
static double
linear_sky (double xi,
            double eta,
            double v)
{
  return 5.0 + 0.11 * xi - 0.07 * eta + 0.3 * v;
}

static EffluxCube *
make_linear_cube (gsize  nx,
                  gsize  ny,
                  gsize  nchan,
                  double pix,
                  double v0,
                  double dv)
{
  EffluxCube *cube = efflux_cube_new_simple (nx, ny, nchan, 83.8221, -5.3911, pix, v0, dv, 0);
  double xc = ((double) nx - 1.0) / 2.0, yc = ((double) ny - 1.0) / 2.0;

  for (gsize y = 0; y < ny; y++)
    for (gsize x = 0; x < nx; x++)
      for (gsize k = 0; k < nchan; k++)
        /* RA increases to the left: xi = -(x - xc) x pix */
        efflux_cube_spectrum (cube, x, y)[k] =
          (float) linear_sky (-(x - xc) * pix, (y - yc) * pix, cube->velocity[k]);
  return cube;
}

static void
test_multi_cube (void)
{
  /* A: 41 x 37 at 0.5", -5 .. 5 km/s by 0.25; B: 30 x 26 at 0.8", 3.5 .. -4.1 km/s by -0.4
   * (decreasing), so B covers A's sky but only part of its velocities */
  g_autoptr (EffluxCube) a = make_linear_cube (41, 37, 41, 0.5, -5.0, 0.25);
  g_autoptr (EffluxCube) b = make_linear_cube (30, 26, 20, 0.8, 3.5, -0.4);
  g_autoptr (EffluxPvSet) set = NULL;
  g_autoptr (GError) error = NULL;
  const EffluxCube *cubes[2] = { a, b };
  double radec[6];
  const double px[3] = { 3.3, 20.0, 36.2 }, py[3] = { 5.1, 30.4, 12.8 };
  gsize both = 0;

  for (int v = 0; v < 3; v++)
    g_assert_true (efflux_cube_pixel_to_icrs (a, px[v], py[v], &radec[2 * v], &radec[2 * v + 1]));
  set = efflux_pv_set_new (cubes, 2, radec, 3, 1.0, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (set->n_cubes, ==, 2);
  g_assert_cmpuint (set->cuts[0]->n_offsets, ==, set->cuts[1]->n_offsets);
  g_assert_cmpuint (set->cuts[1]->nchan, ==, a->nchan);
  for (gsize c = 0; c < a->nchan; c++)
    for (gsize i = 0; i < set->cuts[0]->n_offsets; i++)
      {
        double va = set->cuts[0]->data[c * set->cuts[0]->n_offsets + i];
        double vb = set->cuts[1]->data[c * set->cuts[0]->n_offsets + i];
        double v = a->velocity[c];

        g_assert_cmpfloat (set->cuts[1]->velocity[c], ==, v);
        g_assert_false (isnan (va));
        if (v < -4.1 - 1e-9 || v > 3.5 + 1e-9)
          {
            /* outside B's channels */
            g_assert_true (isnan (vb));
            continue;
          }
        g_assert_cmpfloat (fabs (va - vb), <=, 1e-4);
        /* and both equal the function at the sample's own position (its mean across is the
         * centre's value, f being linear) */
        both++;
      }
  g_assert_cmpuint (both, >, 100);
  /* the single-cube cut is the set's first cut */
  {
    g_autoptr (EffluxPv) alone = efflux_pv_cut (a, radec, 3, 1.0, &error);

    g_assert_no_error (error);
    g_assert_cmpmem (alone->data, alone->n_offsets * alone->nchan * sizeof (float),
                     set->cuts[0]->data, alone->n_offsets * alone->nchan * sizeof (float));
  }
}

static void
test_refusals (void)
{
  g_autoptr (EffluxCube) cube = make_cube ();
  g_autoptr (GError) error = NULL;
  g_autofree double *rd = NULL;
  gsize n = 0;
  const double x[2] = { 3.0, 3.0 }, y[2] = { 4.0, 4.0 };
  const char *bad[] = { "", "83.8,-5.39", "83.8,-5.39;abc", "83.8,-5.39;83.9", "1,2;3,95",
                        "1,2;3,4;", "1,2;nan,4" };

  g_assert_true (efflux_pv_path_parse (" 83.82 , -5.39 ;83.83,-5.38", &rd, &n, &error));
  g_assert_no_error (error);
  g_assert_cmpuint (n, ==, 2);
  g_assert_cmpfloat (rd[0], ==, 83.82);
  g_assert_cmpfloat (rd[3], ==, -5.38);
  for (guint i = 0; i < G_N_ELEMENTS (bad); i++)
    {
      g_autofree double *r = NULL;

      g_assert_false (efflux_pv_path_parse (bad[i], &r, &n, &error));
      g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
      g_assert_null (strchr (error->message, '\n'));
      g_clear_error (&error);
    }
  g_assert_null (efflux_pv_cut_pixels (cube, x, y, 2, 0.0, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_nonnull (strstr (error->message, "zero length"));
  g_clear_error (&error);
  g_assert_null (efflux_pv_cut_pixels (cube, paths[0].x, paths[0].y, 2, -1.0, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
}

/* ------------------------------------------------------------------------------------------ */
/* The commands */

static int
run_cli (char      **argv_tail,
         char      **err_out)
{
  int status = efflux_test_run_cli ((const char * const *) argv_tail, NULL, err_out);

  g_assert_cmpint (status, >=, 0);
  return status;
}

static void
test_commands (void)
{
  g_autoptr (EffluxCube) cube = make_cube ();
  g_autoptr (GError) error = NULL;
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-pv");
  g_autofree char *cube_path = g_build_filename (dir, "cube.fits", NULL);
  g_autofree char *mom_path = g_build_filename (dir, "mom0.fits", NULL);
  g_autofree char *pv_path = g_build_filename (dir, "pv.fits", NULL);
  g_autofree float *expect = g_new (float, NX * NY);
  g_autofree float *back = g_new (float, NX * NY);
  g_autofree char *path_text = NULL;
  g_autoptr (EffluxPv) pv = NULL;
  char ra1[G_ASCII_DTOSTR_BUF_SIZE], de1[G_ASCII_DTOSTR_BUF_SIZE];
  char ra2[G_ASCII_DTOSTR_BUF_SIZE], de2[G_ASCII_DTOSTR_BUF_SIZE];
  double radec[4];
  fitsfile *f = NULL;
  int status = 0, anynul = 0;
  char text[FLEN_VALUE];

  g_assert_true (efflux_fits_write_cube (cube, cube_path, NULL, &error));
  g_assert_no_error (error);

  /* moment 0 over -1 .. 1.2 km/s: channels -1, -0.5, 0, 0.5, 1 */
  {
    char *argv[] = { "moment", cube_path, "--order", "0", "--range", "-1:1.2", "-o", mom_path,
                     NULL };
    g_autofree char *err = NULL;

    g_assert_cmpint (run_cli (argv, &err), ==, 0);
  }
  g_assert_true (efflux_moment_map (cube, EFFLUX_MOMENT_0, -1.0, 1.2, 0.0, expect, &error));
  fits_open_file (&f, mom_path, READONLY, &status);
  fits_read_img (f, TFLOAT, 1, NX * NY, NULL, back, &anynul, &status);
  read_key_string (f, "BUNIT", text);
  g_assert_cmpstr (text, ==, "K km/s");
  read_key_string (f, "CTYPE1", text);
  g_assert_cmpstr (text, ==, "RA---TAN");
  fits_close_file (f, &status);
  g_assert_cmpint (status, ==, 0);
  for (gsize i = 0; i < NX * NY; i++)
    g_assert_cmpfloat (fabs (back[i] - expect[i]), <=, 1e-5 * fabs (expect[i]));

  /* with a clip: the same as efflux_moment_map on the loaded cube (whose noise the loader
   * estimated) */
  {
    char *argv[] = { "moment", cube_path, "--order", "1", "--range", "-2:2", "--clip-sigma", "2",
                     "-o", mom_path, NULL };
    g_autofree char *err = NULL;
    g_autoptr (EffluxCube) loaded = efflux_cube_load (cube_path, NULL, NULL, NULL, NULL, &error);

    g_assert_no_error (error);
    g_assert_cmpint (run_cli (argv, &err), ==, 0);
    g_assert_true (efflux_moment_map (loaded, EFFLUX_MOMENT_1, -2.0, 2.0, 2.0, expect, &error));
    g_assert_no_error (error);
    status = 0;
    fits_open_file (&f, mom_path, READONLY, &status);
    fits_read_img (f, TFLOAT, 1, NX * NY, NULL, back, &anynul, &status);
    read_key_string (f, "BUNIT", text);
    g_assert_cmpstr (text, ==, "km/s");
    g_assert_cmpfloat_with_epsilon (read_key_double (f, "CLIPSIG"), 2.0, 1e-12);
    fits_close_file (f, &status);
    g_assert_cmpint (status, ==, 0);
    for (gsize i = 0; i < NX * NY; i++)
      g_assert_true ((isnan (back[i]) && isnan (expect[i])) ||
                     fabs (back[i] - expect[i]) <= 1e-5 * MAX (1.0, fabs (expect[i])));
  }

  /* refusals: a range with no channel (1, naming --range), bad usage (2) */
  {
    char *argv[] = { "moment", cube_path, "--order", "1", "--range", "40:50", "-o", mom_path,
                     NULL };
    g_autofree char *err = NULL;

    g_assert_cmpint (run_cli (argv, &err), ==, 1);
    g_assert_nonnull (strstr (err, "--range"));
    g_assert_true (g_str_has_prefix (err, "efflux-cli: error: "));
  }
  {
    char *argv[] = { "moment", cube_path, "--order", "3", "--range", "1:2", "-o", mom_path, NULL };
    g_autofree char *err = NULL;

    g_assert_cmpint (run_cli (argv, &err), ==, 2);
  }
  {
    char *argv[] = { "moment", cube_path, "--range", "1:2", NULL };
    g_autofree char *err = NULL;

    g_assert_cmpint (run_cli (argv, &err), ==, 2);
  }
  {
    g_autofree char *missing = g_build_filename (dir, "missing.fits", NULL);
    char *argv[] = { "moment", missing, "--order", "0", "--range", "1:2", "-o", mom_path, NULL };
    g_autofree char *err = NULL;

    g_assert_cmpint (run_cli (argv, &err), ==, 1);
  }

  /* pv along two ICRS vertices with a width */
  g_assert_true (efflux_cube_pixel_to_icrs (cube, 3.2, 4.7, &radec[0], &radec[1]));
  g_assert_true (efflux_cube_pixel_to_icrs (cube, 33.9, 21.3, &radec[2], &radec[3]));
  path_text = g_strdup_printf ("%s,%s;%s,%s",
                               g_ascii_formatd (ra1, sizeof ra1, "%.12f", radec[0]),
                               g_ascii_formatd (de1, sizeof de1, "%.12f", radec[1]),
                               g_ascii_formatd (ra2, sizeof ra2, "%.12f", radec[2]),
                               g_ascii_formatd (de2, sizeof de2, "%.12f", radec[3]));
  {
    char *argv[] = { "pv", cube_path, "--path", path_text, "--width-arcsec", "2", "-o", pv_path,
                     NULL };
    g_autofree char *err = NULL;

    g_assert_cmpint (run_cli (argv, &err), ==, 0);
  }
  pv = efflux_pv_cut (cube, radec, 2, 2.0, &error);
  g_assert_no_error (error);
  {
    g_autofree float *pvback = g_new (float, pv->n_offsets * NCHAN);
    long naxes[2];

    status = 0;
    fits_open_file (&f, pv_path, READONLY, &status);
    fits_get_img_size (f, 2, naxes, &status);
    g_assert_cmpint (naxes[0], ==, (long) pv->n_offsets);
    g_assert_cmpint (naxes[1], ==, NCHAN);
    fits_read_img (f, TFLOAT, 1, (LONGLONG) (pv->n_offsets * NCHAN), NULL, pvback, &anynul,
                   &status);
    read_key_string (f, "CTYPE1", text);
    g_assert_cmpstr (text, ==, "OFFSET");
    fits_close_file (f, &status);
    g_assert_cmpint (status, ==, 0);
    for (gsize i = 0; i < pv->n_offsets * NCHAN; i++)
      g_assert_cmpfloat (fabs (pvback[i] - pv->data[i]), <=, 1e-5 * fabs (pv->data[i]));
  }
  {
    char *argv[] = { "pv", cube_path, "--path", "83.8,-5.39", "-o", pv_path, NULL };
    g_autofree char *err = NULL;

    /* a malformed option value is wrong usage (issue 7) */
    g_assert_cmpint (run_cli (argv, &err), ==, 2);
    g_assert_nonnull (strstr (err, "--path"));
  }
  {
    char *argv[] = { "pv", cube_path, "-o", pv_path, NULL };
    g_autofree char *err = NULL;

    g_assert_cmpint (run_cli (argv, &err), ==, 2);
  }
  efflux_test_remove_tree (dir);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/pv/scipy", test_against_scipy);
  g_test_add_func ("/pv/fits-axes", test_fits_axes);
  g_test_add_func ("/pv/multi-cube", test_multi_cube);
  g_test_add_func ("/pv/refusals", test_refusals);
  g_test_add_func ("/pv/commands", test_commands);
  return g_test_run ();
}
