/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Moment maps, cumulative sums, wing maps and spectra, against numpy (tests/ref/maps_ref.py:
 * numpy.nansum / numpy.nanmean straight from the definitions), on cubes with NaNs and noise, in
 * both channel orders. */
#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-lobe.h"
#include "efflux-maps.h"
#include "efflux-test-util.h"

#define NX 23
#define NY 17
#define NCHAN 48
#define V0 (-6.0)
#define DV 0.25
#define RMS 0.05

/* A seeded cube: per pixel a Gaussian line whose centre, width and height vary over the map,
 * Gaussian noise of RMS K, about 3% NaN voxels, one pixel all NaN. reversed: the same sky and
 * spectra with the channels in decreasing velocity. */
static EffluxCube *
make_cube (gboolean reversed)
{
  EffluxCube *cube = efflux_cube_new_simple (NX, NY, NCHAN, 52.263, 31.255, 0.5,
                                             reversed ? V0 + (NCHAN - 1) * DV : V0,
                                             reversed ? -DV : DV, 230.538e9);
  g_autoptr (GRand) rand = g_rand_new_with_seed (20261201);

  g_assert_nonnull (cube);
  for (gsize y = 0; y < NY; y++)
    for (gsize x = 0; x < NX; x++)
      {
        float *spec = efflux_cube_spectrum (cube, x, y);
        double vc = -1.0 + 0.08 * x - 0.05 * y;
        double sigma = 0.6 + 0.02 * (double) (x + y);
        double amp = 2.0 + sin (0.3 * x) + cos (0.2 * y);

        for (gsize kk = 0; kk < NCHAN; kk++)
          {
            /* kk counts channels in increasing velocity */
            double v = V0 + kk * DV;
            double u1 = g_rand_double (rand), u2 = g_rand_double (rand);
            double noise = RMS * sqrt (-2.0 * log (1.0 - u1)) * cos (2.0 * G_PI * u2);
            double t = amp * exp (-0.5 * (v - vc) * (v - vc) / (sigma * sigma)) + noise;
            gsize k = reversed ? NCHAN - 1 - kk : kk;

            if (g_rand_double (rand) < 0.03 || (x == 5 && y == 5))
              t = NAN;
            spec[k] = (float) t;
          }
      }
  for (gsize k = 0; k < NCHAN; k++)
    cube->rms[k] = (float) (RMS * (1.0 + 0.2 * sin (0.37 * (double) k)));
  return cube;
}

typedef struct
{
  double      v1, v2;
} Range;

static const Range ranges[] = {
  { -6.0, 6.0 },      /* every channel */
  { -2.1, 0.4 },      /* the line, edges between channel centres */
  { 0.5, 0.5 },       /* one channel, exactly on its centre */
  { 1.9, -3.3 },      /* reversed order */
  { -5.9, -4.1 },     /* noise only, mostly */
  { -2.0, -1.0 },     /* both edges on channel centres: inclusive */
};

static const char *orders[] = { "0", "1", "2", "peak" };

static char *
write_inputs (const EffluxCube     *cube,
              const EffluxLobeMask *lobe,
              GString              *job)
{
  g_autoptr (GError) error = NULL;
  char *dir = efflux_test_tmp_dir ("efflux-maps");
  g_autofree char *p = NULL;
  g_autofree guint8 *mask = g_new0 (guint8, NX * NY);

  p = g_build_filename (dir, "cube.f32", NULL);
  g_file_set_contents (p, (const char *) cube->data, (gssize) (NX * NY * NCHAN * sizeof (float)),
                       &error);
  g_assert_no_error (error);
  g_free (p);
  p = g_build_filename (dir, "vel.f64", NULL);
  g_file_set_contents (p, (const char *) cube->velocity, NCHAN * sizeof (double), &error);
  g_assert_no_error (error);
  g_free (p);
  p = g_build_filename (dir, "rms.f32", NULL);
  g_file_set_contents (p, (const char *) cube->rms, NCHAN * sizeof (float), &error);
  g_assert_no_error (error);
  for (gsize i = 0; i < lobe->n_pixels; i++)
    mask[lobe->index[i]] = 1;
  g_free (p);
  p = g_build_filename (dir, "mask.u8", NULL);
  g_file_set_contents (p, (const char *) mask, NX * NY, &error);
  g_assert_no_error (error);
  g_free (p);
  p = g_build_filename (dir, "job.txt", NULL);
  g_file_set_contents (p, job->str, -1, &error);
  g_assert_no_error (error);
  return dir;
}

static double *
read_ref (const char *dir,
          const char *name,
          gsize       n)
{
  gsize len = 0;
  double *data = efflux_test_read_f64 (dir, name, &len);

  g_assert_cmpuint (len, ==, n);
  return data;
}

/* Compare a map with its reference: NaN at the same pixels, and |c - r| <= 1e-5 x max(|r|, 1% of
 * the map's largest |r|). Pixels where use is FALSE are left out. Returns the pixels compared. */
static gsize
compare_map (const char   *what,
             const float  *c,
             const double *r,
             gsize         n,
             const gboolean *use)
{
  double top = 0.0, worst = 0.0;
  gsize compared = 0;

  for (gsize i = 0; i < n; i++)
    if (isfinite (r[i]))
      top = MAX (top, fabs (r[i]));
  for (gsize i = 0; i < n; i++)
    {
      double tol;

      if (use != NULL && !use[i])
        continue;
      if (isnan (r[i]) || isnan (c[i]))
        {
          if (isnan (r[i]) != isnan (c[i]))
            g_error ("%s: pixel %" G_GSIZE_FORMAT ": %g here, %g from numpy", what, i, c[i], r[i]);
          continue;
        }
      tol = 1e-5 * MAX (fabs (r[i]), 0.01 * top);
      worst = MAX (worst, fabs (c[i] - r[i]) / MAX (MAX (fabs (r[i]), 0.01 * top), 1e-300));
      if (!(fabs (c[i] - r[i]) <= tol))
        g_error ("%s: pixel %" G_GSIZE_FORMAT ": %.9g here, %.9g from numpy", what, i, c[i], r[i]);
      compared++;
    }
  g_test_message ("%s: %" G_GSIZE_FORMAT " pixels, worst relative difference %.2e", what,
                  compared, worst);
  return compared;
}

static void
check_against_numpy (gboolean reversed)
{
  g_autoptr (EffluxCube) cube = make_cube (reversed);
  g_autoptr (EffluxMomentCache) cache = NULL;
  g_autoptr (EffluxMomentCache) fast = NULL;
  g_autoptr (EffluxLobeMask) lobe = NULL;
  g_autoptr (GError) error = NULL;
  g_autoptr (GString) job = g_string_new (NULL);
  g_autofree char *dir = NULL;
  g_autofree float *map = g_new (float, NX * NY);
  g_autofree float *cmap = g_new (float, NX * NY);
  g_autofree gboolean *detected = g_new (gboolean, NX * NY);
  g_autofree double *spec = g_new (double, NCHAN);
  const double lobe_x[] = { 2.2, 18.7, 9.1 }, lobe_y[] = { 1.4, 5.9, 14.6 };
  const double clips[] = { 0.0, 3.0 };
  gsize detected_total = 0;

  lobe = efflux_lobe_mask_new_pixels (NX, NY, lobe_x, lobe_y, 3, "test lobe", &error);
  g_assert_no_error (error);
  g_assert_cmpuint (lobe->n_pixels, >, 20);

  g_string_append_printf (job, "%d %d %d %.17g\n", NX, NY, NCHAN, cube->dv);
  for (guint r = 0; r < G_N_ELEMENTS (ranges); r++)
    for (guint o = 0; o < G_N_ELEMENTS (orders); o++)
      for (guint c = 0; c < G_N_ELEMENTS (clips); c++)
        g_string_append_printf (job, "r%u-o%s-c%u map %s %.17g %.17g %.17g\n", r, orders[o], c,
                                orders[o], ranges[r].v1, ranges[r].v2, clips[c]);
  g_string_append (job, "spec-mean spectrum mean\nspec-sum spectrum sum\n");
  dir = write_inputs (cube, lobe, job);
  g_free (efflux_test_python ("maps_ref.py", (const char *[]) { dir, NULL }));

  cache = efflux_moment_cache_new (cube, &error);
  g_assert_no_error (error);
  /* the design keeps the cumulative sums below the cube's own size */
  g_assert_cmpuint (efflux_moment_cache_bytes (cache), <=, (guint64) NX * NY * NCHAN * 4);
  fast = efflux_moment_cache_new_full (cube, EFFLUX_MOMENT_CACHE_FAST, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_moment_cache_is_fast (fast));
  g_assert_false (efflux_moment_cache_is_fast (cache));

  for (guint r = 0; r < G_N_ELEMENTS (ranges); r++)
    {
      g_autofree char *m0name = g_strdup_printf ("r%u-o0-c0", r);
      g_autofree double *m0 = read_ref (dir, m0name, NX * NY);
      gsize k0, k1;

      /* detected: moment 0 at least 5 x its noise (RMS x sqrt(channels) x |dv|) */
      g_assert_true (efflux_cube_channel_range (cube, ranges[r].v1, ranges[r].v2, &k0, &k1));
      for (gsize i = 0; i < NX * NY; i++)
        {
          detected[i] = m0[i] >= 5.0 * RMS * sqrt ((double) (k1 - k0)) * DV;
          detected_total += detected[i];
        }

      for (guint o = 0; o < G_N_ELEMENTS (orders); o++)
        for (guint c = 0; c < G_N_ELEMENTS (clips); c++)
          {
            g_autofree char *name = g_strdup_printf ("r%u-o%s-c%u", r, orders[o], c);
            g_autofree char *what = g_strdup_printf ("%s %s", reversed ? "reversed" : "forward",
                                                     name);
            g_autofree double *ref = read_ref (dir, name, NX * NY);
            EffluxMomentOrder order;

            g_assert_true (efflux_moment_order_parse (orders[o], &order));
            g_assert_true (efflux_moment_map (cube, order, ranges[r].v1, ranges[r].v2, clips[c],
                                              map, &error));
            g_assert_no_error (error);
            g_assert_cmpuint (compare_map (what, map, ref, NX * NY, NULL), >, 0);
            /* the all-NaN pixel is NaN in every map */
            g_assert_true (isnan (map[5 * NX + 5]));

            if (clips[c] > 0.0)
              continue;
            g_assert_true (efflux_moment_cache_map (cache, order, ranges[r].v1, ranges[r].v2,
                                                    cmap, &error));
            g_assert_no_error (error);
            if (order == EFFLUX_MOMENT_0 || order == EFFLUX_MOMENT_PEAK)
              g_assert_cmpuint (compare_map (what, cmap, ref, NX * NY, NULL), >, 0);
            else
              /* one-pass moments from prefix sums: compared where the line is detected */
              compare_map (what, cmap, ref, NX * NY, detected);
            /* and with the channel-major copy */
            g_assert_true (efflux_moment_cache_map (fast, order, ranges[r].v1, ranges[r].v2,
                                                    cmap, &error));
            g_assert_no_error (error);
            if (order == EFFLUX_MOMENT_0 || order == EFFLUX_MOMENT_PEAK)
              g_assert_cmpuint (compare_map (what, cmap, ref, NX * NY, NULL), >, 0);
            else
              compare_map (what, cmap, ref, NX * NY, detected);
          }

      /* the wing map: moment 0 inside the lobe, NaN outside */
      g_assert_true (efflux_moment_cache_wing_map (cache, ranges[r].v1, ranges[r].v2, lobe, map,
                                                   &error));
      g_assert_no_error (error);
      {
        g_autofree guint8 *inside = g_new0 (guint8, NX * NY);
        g_autofree gboolean *use = g_new0 (gboolean, NX * NY);

        for (gsize i = 0; i < lobe->n_pixels; i++)
          inside[lobe->index[i]] = use[lobe->index[i]] = TRUE;
        for (gsize i = 0; i < NX * NY; i++)
          if (!inside[i])
            g_assert_true (isnan (map[i]));
        g_assert_cmpuint (compare_map ("wing", map, m0, NX * NY, use), >, 0);
        g_assert_true (efflux_moment_cache_wing_map (fast, ranges[r].v1, ranges[r].v2, lobe, map,
                                                     &error));
        for (gsize i = 0; i < NX * NY; i++)
          if (!inside[i])
            g_assert_true (isnan (map[i]));
        g_assert_cmpuint (compare_map ("wing fast", map, m0, NX * NY, use), >, 0);
      }
    }
  /* the line ranges have detected pixels, so moments 1 and 2 from the cache were checked */
  g_assert_cmpuint (detected_total, >, NX * NY);

  /* spectra over the lobe against numpy.nanmean / numpy.nansum over the same pixels */
  for (int kind = 0; kind < 2; kind++)
    {
      g_autofree double *ref = read_ref (dir, kind == 0 ? "spec-mean" : "spec-sum", NCHAN);

      g_assert_cmpuint (efflux_spectrum_over_lobe (cube, lobe,
                                                   kind == 0 ? EFFLUX_SPECTRUM_MEAN
                                                             : EFFLUX_SPECTRUM_SUM, spec),
                        ==, lobe->n_pixels);
      for (gsize k = 0; k < NCHAN; k++)
        g_assert_cmpfloat_with_epsilon (spec[k], ref[k], 1e-9 * MAX (1.0, fabs (ref[k])));
    }

  /* the same outline given in ICRS degrees gives the same pixels and spectrum */
  {
    double radec[6];
    g_autofree double *spec2 = g_new (double, NCHAN);
    gsize inside = 0;

    for (int v = 0; v < 3; v++)
      g_assert_true (efflux_cube_pixel_to_icrs (cube, lobe_x[v], lobe_y[v], &radec[2 * v],
                                                &radec[2 * v + 1]));
    g_assert_true (efflux_spectrum_over_outline (cube, radec, 3, EFFLUX_SPECTRUM_SUM, spec2,
                                                 &inside, &error));
    g_assert_no_error (error);
    g_assert_cmpuint (inside, ==, lobe->n_pixels);
    for (gsize k = 0; k < NCHAN; k++)
      g_assert_true ((isnan (spec[k]) && isnan (spec2[k])) ||
                     fabs (spec[k] - spec2[k]) <= 1e-9 * MAX (1.0, fabs (spec[k])));
    g_assert_false (efflux_spectrum_over_outline (cube, radec, 2, EFFLUX_SPECTRUM_SUM, spec2,
                                                  &inside, &error));
    g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
    g_clear_error (&error);
  }

  /* spectrum at a pixel: the stored values */
  g_assert_true (efflux_spectrum_at_pixel (cube, 7, 3, spec, &error));
  for (gsize k = 0; k < NCHAN; k++)
    {
      float t = efflux_cube_spectrum (cube, 7, 3)[k];

      g_assert_true ((isnan (t) && isnan (spec[k])) || spec[k] == t);
    }
  g_assert_false (efflux_spectrum_at_pixel (cube, NX, 0, spec, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);

  efflux_test_remove_tree (dir);
}

static void
test_moments_forward (void)
{
  check_against_numpy (FALSE);
}

static void
test_moments_reversed (void)
{
  check_against_numpy (TRUE);
}

/* The same sky with the channels in either order gives the same maps. */
static void
test_channel_order (void)
{
  g_autoptr (EffluxCube) fwd = make_cube (FALSE);
  g_autoptr (EffluxCube) rev = make_cube (TRUE);
  g_autoptr (EffluxMomentCache) cf = efflux_moment_cache_new (fwd, NULL);
  g_autoptr (EffluxMomentCache) cr = efflux_moment_cache_new (rev, NULL);
  g_autofree float *a = g_new (float, NX * NY);
  g_autofree float *b = g_new (float, NX * NY);

  for (guint r = 0; r < G_N_ELEMENTS (ranges); r++)
    for (int order = EFFLUX_MOMENT_0; order <= EFFLUX_MOMENT_PEAK; order++)
      {
        g_assert_true (efflux_moment_map (fwd, order, ranges[r].v1, ranges[r].v2, 0, a, NULL));
        g_assert_true (efflux_moment_map (rev, order, ranges[r].v1, ranges[r].v2, 0, b, NULL));
        for (gsize i = 0; i < NX * NY; i++)
          g_assert_true ((isnan (a[i]) && isnan (b[i])) ||
                         fabs (a[i] - b[i]) <= 1e-5 * MAX (1.0, fabs (a[i])));
        if (order != EFFLUX_MOMENT_0)
          continue;
        g_assert_true (efflux_moment_cache_map (cf, order, ranges[r].v1, ranges[r].v2, a, NULL));
        g_assert_true (efflux_moment_cache_map (cr, order, ranges[r].v1, ranges[r].v2, b, NULL));
        for (gsize i = 0; i < NX * NY; i++)
          g_assert_true ((isnan (a[i]) && isnan (b[i])) ||
                         fabs (a[i] - b[i]) <= 1e-5 * MAX (1.0, fabs (a[i])));
      }
}

/* A hand-made spectrum: T = 1, 2, 3 K at v = 1, 2, 3 km/s, dv = 1: moment 0 = 6 K km/s,
 * moment 1 = (1 + 4 + 9) / 6 = 14/6 km/s, moment 2 = sqrt((1 (1 - 7/3)^2 + 2 (2 - 7/3)^2
 * + 3 (3 - 7/3)^2) / 6) = sqrt(5/9) km/s, peak 3 K (worked by hand). */
static void
test_hand_values (void)
{
  g_autoptr (EffluxCube) cube = efflux_cube_new_simple (1, 1, 5, 10.0, 20.0, 1.0, 0.0, 1.0, 0);
  g_autoptr (EffluxMomentCache) cache = NULL;
  g_autoptr (GError) error = NULL;
  const double expect[4] = { 6.0, 14.0 / 6.0, sqrt (5.0 / 9.0), 3.0 };
  float out;

  cube->data[0] = 100.0f;   /* v = 0, outside the range */
  cube->data[1] = 1.0f;
  cube->data[2] = 2.0f;
  cube->data[3] = 3.0f;
  cube->data[4] = NAN;      /* v = 4: NaN, left out */
  cache = efflux_moment_cache_new (cube, &error);
  g_assert_no_error (error);
  for (int order = EFFLUX_MOMENT_0; order <= EFFLUX_MOMENT_PEAK; order++)
    {
      g_assert_true (efflux_moment_map (cube, order, 0.6, 4.0, 0.0, &out, &error));
      g_assert_cmpfloat_with_epsilon (out, expect[order], 1e-6);
      g_assert_true (efflux_moment_cache_map (cache, order, 0.6, 4.0, &out, &error));
      g_assert_cmpfloat_with_epsilon (out, expect[order], 1e-6);
    }
  /* a clip at 2 x rms = 2 K leaves out the 1 K voxel: moment 0 = 5 K km/s */
  for (int k = 0; k < 5; k++)
    cube->rms[k] = 1.0f;
  g_assert_true (efflux_moment_map (cube, EFFLUX_MOMENT_0, 0.6, 4.0, 2.0, &out, &error));
  g_assert_cmpfloat_with_epsilon (out, 5.0, 1e-6);

  /* a range with no channel is refused, naming the span */
  g_assert_false (efflux_moment_map (cube, EFFLUX_MOMENT_0, 7.0, 9.0, 0.0, &out, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_nonnull (strstr (error->message, "no channel"));
  g_clear_error (&error);
  g_assert_false (efflux_moment_cache_map (cache, EFFLUX_MOMENT_1, 4.2, 4.8, &out, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_clear_error (&error);
  g_assert_false (efflux_moment_map (cube, EFFLUX_MOMENT_0, 0.0, 4.0, -1.0, &out, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
}

/* Every range start and end over a longer cube, against a direct sum: the nearest-boundary plan
 * (adding or subtracting the remainder) is right for every offset within a block. */
static void
test_every_range (void)
{
  const gsize nchan = 3 * EFFLUX_MOMENT_CACHE_BLOCK + 5;
  g_autoptr (EffluxCube) cube = efflux_cube_new_simple (3, 2, nchan, 10.0, 20.0, 1.0, -3.0,
                                                        0.5, 0);
  g_autoptr (EffluxMomentCache) cache = NULL;
  g_autoptr (EffluxMomentCache) fast = NULL;
  g_autoptr (GRand) rand = g_rand_new_with_seed (7);
  float a[6], b[6];

  /* pixels 0-2 have NaNs (pixel 2 all NaN), pixels 3-5 none: both ways of the fast planes */
  for (gsize i = 0; i < 6 * nchan; i++)
    {
      gsize pix = i / nchan;

      if (pix == 2 || (pix < 2 && g_rand_double (rand) < 0.1))
        cube->data[i] = NAN;
      else
        cube->data[i] = (float) g_rand_double_range (rand, -1, 5);
    }
  cache = efflux_moment_cache_new (cube, NULL);
  fast = efflux_moment_cache_new_full (cube, EFFLUX_MOMENT_CACHE_FAST, NULL);
  for (gsize k0 = 0; k0 < nchan; k0++)
    for (gsize k1 = k0; k1 < nchan; k1++)
      {
        double v1 = cube->velocity[k0], v2 = cube->velocity[k1];

        g_assert_true (efflux_moment_map (cube, EFFLUX_MOMENT_0, v1, v2, 0, a, NULL));
        g_assert_true (efflux_moment_cache_map (cache, EFFLUX_MOMENT_0, v1, v2, b, NULL));
        for (int i = 0; i < 6; i++)
          g_assert_true ((isnan (a[i]) && isnan (b[i])) || fabs (a[i] - b[i]) <= 1e-5);
        g_assert_true (efflux_moment_cache_map (fast, EFFLUX_MOMENT_0, v1, v2, b, NULL));
        for (int i = 0; i < 6; i++)
          g_assert_true ((isnan (a[i]) && isnan (b[i])) || fabs (a[i] - b[i]) <= 1e-5);
        g_assert_true (isnan (b[2]) && !isnan (b[4]));
      }
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/maps/hand-values", test_hand_values);
  g_test_add_func ("/maps/every-range", test_every_range);
  g_test_add_func ("/maps/channel-order", test_channel_order);
  g_test_add_func ("/maps/numpy/forward", test_moments_forward);
  g_test_add_func ("/maps/numpy/reversed", test_moments_reversed);
  return g_test_run ();
}
