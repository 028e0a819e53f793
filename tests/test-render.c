/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Rendering helpers of the sky view (no GTK): colour maps, stretches, percentile limits and the
 * coordinate grid. Reference values come from tests/ref/render_ref.py run with EFFLUX_PYTHON
 * (numpy, astropy), which re-implements the published formulas independently. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>
#include <wcslib/wcs.h>

#include "../src/render/efflux-colormap.h"
#include "efflux-cube.h"
#include "../src/render/efflux-skygrid.h"
#include "../src/render/efflux-stretch.h"
#include "efflux-test-util.h"

/* Run tests/ref/render_ref.py with arguments; returns its stdout. A missing EFFLUX_PYTHON fails. */
static char *
run_ref (const char *first,
         ...)
{
  g_autoptr (GPtrArray) args = g_ptr_array_new ();
  va_list ap;

  va_start (ap, first);
  for (const char *a = first; a != NULL; a = va_arg (ap, const char *))
    g_ptr_array_add (args, (char *) a);
  va_end (ap);
  g_ptr_array_add (args, NULL);
  return efflux_test_python ("render_ref.py", (const char * const *) args->pdata);
}

/* Green 2011 cubehelix with the paper's default parameters, byte for byte against the formula
 * evaluated with numpy (rounding may differ by one step). */
static void
test_cubehelix_formula (void)
{
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  g_autofree char *out = NULL;
  g_auto(GStrv) lines = NULL;

  efflux_colormap_fill (EFFLUX_COLORMAP_CUBEHELIX, lut);
  out = run_ref ("cubehelix", "0.5", "-1.5", "1.0", "1.0", NULL);
  lines = g_strsplit (g_strstrip (out), "\n", -1);
  g_assert_cmpuint (g_strv_length (lines), ==, 256);
  for (int i = 0; i < 256; i++)
    {
      int r, g, b;

      g_assert_cmpint (sscanf (lines[i], "%d %d %d", &r, &g, &b), ==, 3);
      g_assert_cmpint (abs (r - lut[4 * i + 0]), <=, 1);
      g_assert_cmpint (abs (g - lut[4 * i + 1]), <=, 1);
      g_assert_cmpint (abs (b - lut[4 * i + 2]), <=, 1);
      g_assert_cmpint (lut[4 * i + 3], ==, 255);
    }

  /* a non-default helix too (s = 1, r = 2, h = 0.6, gamma = 0.8) */
  efflux_colormap_fill_cubehelix (lut, 1.0, 2.0, 0.6, 0.8);
  g_clear_pointer (&out, g_free);
  g_clear_pointer (&lines, g_strfreev);
  out = run_ref ("cubehelix", "1.0", "2.0", "0.6", "0.8", NULL);
  lines = g_strsplit (g_strstrip (out), "\n", -1);
  for (int i = 0; i < 256; i++)
    {
      int r, g, b;

      g_assert_cmpint (sscanf (lines[i], "%d %d %d", &r, &g, &b), ==, 3);
      g_assert_cmpint (abs (r - lut[4 * i + 0]), <=, 1);
      g_assert_cmpint (abs (g - lut[4 * i + 1]), <=, 1);
      g_assert_cmpint (abs (b - lut[4 * i + 2]), <=, 1);
    }
}

/* The properties Green (2011) designs cubehelix for: black at 0, white at 1, and a luminance
 * (0.30 R + 0.59 G + 0.11 B, the weights of the paper) equal to lambda^gamma wherever no component
 * is clipped, hence monotonic. */
static void
test_cubehelix_luminance (void)
{
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  double previous = -1.0;

  efflux_colormap_fill (EFFLUX_COLORMAP_CUBEHELIX, lut);
  g_assert_cmpint (lut[0], ==, 0);
  g_assert_cmpint (lut[1], ==, 0);
  g_assert_cmpint (lut[2], ==, 0);
  g_assert_cmpint (lut[255 * 4 + 0], ==, 255);
  g_assert_cmpint (lut[255 * 4 + 1], ==, 255);
  g_assert_cmpint (lut[255 * 4 + 2], ==, 255);

  for (int i = 0; i < 256; i++)
    {
      double lambda = i / 255.0;
      double rgb[3];
      gboolean unclipped = efflux_cubehelix_eval (lambda, 0.5, -1.5, 1.0, 1.0, rgb);
      double y_exact = 0.30 * rgb[0] + 0.59 * rgb[1] + 0.11 * rgb[2];
      double y_lut = (0.30 * lut[4 * i] + 0.59 * lut[4 * i + 1] + 0.11 * lut[4 * i + 2]) / 255.0;

      if (unclipped)
        g_assert_cmpfloat_with_epsilon (y_exact, lambda, 1e-5);
      /* the quantised table stays monotonic within the rounding of one byte */
      g_assert_cmpfloat (y_lut, >=, previous - 1.0 / 255.0);
      previous = y_lut;
    }

  /* gamma: the luminance of an unclipped colour is lambda^gamma */
  {
    double rgb[3];

    g_assert_true (efflux_cubehelix_eval (0.5, 0.5, -1.5, 0.5, 2.0, rgb));
    g_assert_cmpfloat_with_epsilon (0.30 * rgb[0] + 0.59 * rgb[1] + 0.11 * rgb[2], 0.25, 1e-5);
  }
}

static void
test_grey (void)
{
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];

  efflux_colormap_fill (EFFLUX_COLORMAP_GREY, lut);
  for (int i = 0; i < 256; i++)
    {
      g_assert_cmpint (lut[4 * i], ==, i);
      g_assert_cmpint (lut[4 * i + 1], ==, i);
      g_assert_cmpint (lut[4 * i + 2], ==, i);
      g_assert_cmpint (lut[4 * i + 3], ==, 255);
    }
}

/* Our diverging velocity map, converted back to CIE L*a*b* by numpy (sRGB IEC 61966-2-1, CIE 15:2004
 * with D65): lightness falls linearly from 94 at the centre to 38 at both ends, the two halves
 * mirror each other in lightness, the centre is neutral, the low half is blue and the high half red. */
static void
test_velocity_map (void)
{
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  g_autoptr(GString) text = g_string_new (NULL);
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-render");
  g_autofree char *path = g_build_filename (dir, "velocity.txt", NULL);
  g_autofree char *out = NULL;
  g_auto(GStrv) lines = NULL;
  double L[256], a[256], b[256];

  efflux_colormap_fill (EFFLUX_COLORMAP_VELOCITY, lut);
  for (int i = 0; i < 256; i++)
    g_string_append_printf (text, "%d %d %d\n", lut[4 * i], lut[4 * i + 1], lut[4 * i + 2]);
  g_assert_true (g_file_set_contents (path, text->str, -1, NULL));
  out = run_ref ("lab", path, NULL);
  g_assert_cmpint (g_unlink (path), ==, 0);
  g_assert_cmpint (g_rmdir (dir), ==, 0);

  lines = g_strsplit (g_strstrip (out), "\n", -1);
  g_assert_cmpuint (g_strv_length (lines), ==, 256);
  for (int i = 0; i < 256; i++)
    g_assert_cmpint (sscanf (lines[i], "%lf %lf %lf", &L[i], &a[i], &b[i]), ==, 3);

  for (int i = 0; i < 256; i++)
    {
      double s = fabs (2.0 * i / 255.0 - 1.0);
      double chroma = hypot (a[i], b[i]);

      /* lightness within byte rounding of the design line */
      g_assert_cmpfloat (fabs (L[i] - (94.0 - 56.0 * s)), <, 0.6);
      /* mirror symmetry of lightness */
      g_assert_cmpfloat (fabs (L[i] - L[255 - i]), <, 0.6);
      /* strictly ordered lightness away from the centre on each side */
      if (i > 0 && i < 127)
        g_assert_cmpfloat (L[i], >, L[i - 1]);
      if (i > 128)
        g_assert_cmpfloat (L[i], <, L[i - 1]);
      if (chroma > 8.0)
        {
          double hue = fmod (atan2 (b[i], a[i]) * 180.0 / G_PI + 360.0, 360.0);
          double want = i < 128 ? 268.0 : 32.0;
          double dh = fabs (remainder (hue - want, 360.0));

          g_assert_cmpfloat (dh, <, 4.0);
        }
    }
  /* the centre is a light neutral grey */
  g_assert_cmpfloat (hypot (a[127], b[127]), <, 1.5);
  g_assert_cmpfloat (hypot (a[128], b[128]), <, 1.5);
  /* the ends are strongly coloured */
  g_assert_cmpfloat (hypot (a[0], b[0]), >, 35.0);
  g_assert_cmpfloat (hypot (a[255], b[255]), >, 35.0);
  g_assert_cmpint (lut[2], >, lut[0]);
  g_assert_cmpint (lut[255 * 4], >, lut[255 * 4 + 2]);
}

/* Stretches against astropy.visualization (LinearStretch, SqrtStretch, LogStretch(a=1000),
 * AsinhStretch(a=0.1)) at fixed inputs in [0, 1]. */
static void
test_stretch_astropy (void)
{
  g_autofree char *out = run_ref ("stretch", NULL);
  g_auto(GStrv) lines = g_strsplit (g_strstrip (out), "\n", -1);
  int checked = 0;

  g_assert_cmpuint (g_strv_length (lines), ==, 4);
  for (guint l = 0; lines[l] != NULL; l++)
    {
      g_auto(GStrv) words = g_strsplit (lines[l], " ", -1);
      EffluxStretchKind kind;
      guint n = g_strv_length (words);

      g_assert_true (efflux_stretch_kind_from_string (words[0], &kind));
      g_assert_cmpstr (efflux_stretch_kind_to_string (kind), ==, words[0]);
      g_assert_cmpuint (n % 2, ==, 1);
      for (guint i = 1; i + 1 < n; i += 2)
        {
          double x = g_ascii_strtod (words[i], NULL);
          double y = g_ascii_strtod (words[i + 1], NULL);
          /* the value x between limits 2 and 7 gives the same y as x itself between 0 and 1 */
          double v = 2.0 + 5.0 * x;

          g_assert_cmpfloat_with_epsilon (efflux_stretch_apply (kind, x, 0.0, 1.0), y, 1e-12);
          g_assert_cmpfloat_with_epsilon (efflux_stretch_apply (kind, v, 2.0, 7.0), y, 1e-12);
          checked++;
        }
      /* clamped outside the limits, NaN stays NaN */
      g_assert_cmpfloat (efflux_stretch_apply (kind, -3.0, 0.0, 1.0), ==, 0.0);
      g_assert_cmpfloat (efflux_stretch_apply (kind, 9.0, 0.0, 1.0), ==, 1.0);
      g_assert_true (isnan (efflux_stretch_apply (kind, NAN, 0.0, 1.0)));
    }
  g_assert_cmpint (checked, ==, 44);
}

/* Percentiles of a float image with NaNs against numpy.nanpercentile (default linear method). */
static void
check_percentiles (const float *data,
                   gsize        n,
                   const char  *dir)
{
  const char *pstr[] = { "0", "0.25", "2.5", "25", "50", "90", "95", "99", "99.5", "99.75", "100" };
  double ps[G_N_ELEMENTS (pstr)], mine[G_N_ELEMENTS (pstr)];
  g_autofree char *path = g_build_filename (dir, "image.f32", NULL);
  g_autofree char *out = NULL;
  g_auto(GStrv) words = NULL;

  g_assert_true (g_file_set_contents (path, (const char *) data, (gssize) (n * sizeof (float)), NULL));
  out = run_ref ("percentile", path, pstr[0], pstr[1], pstr[2], pstr[3], pstr[4], pstr[5], pstr[6],
                 pstr[7], pstr[8], pstr[9], pstr[10], NULL);
  g_assert_cmpint (g_unlink (path), ==, 0);
  words = g_strsplit (g_strstrip (out), " ", -1);
  g_assert_cmpuint (g_strv_length (words), ==, G_N_ELEMENTS (pstr));

  for (gsize i = 0; i < G_N_ELEMENTS (pstr); i++)
    ps[i] = g_ascii_strtod (pstr[i], NULL);
  g_assert_true (efflux_percentiles (data, n, ps, G_N_ELEMENTS (ps), mine));
  for (gsize i = 0; i < G_N_ELEMENTS (pstr); i++)
    {
      double want = g_ascii_strtod (words[i], NULL);

      g_assert_cmpfloat (fabs (mine[i] - want), <=, 1e-6 * MAX (fabs (want), 1e-3));
    }
}

static void
test_percentiles_numpy (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-render");
  g_autoptr(GRand) rand = g_rand_new_with_seed (20111);
  gsize n = 300 * 211;
  g_autofree float *data = g_new (float, n);
  double lo, hi;

  /* a skewed image (exponential tail) with 7% NaN and some infinities left out */
  for (gsize i = 0; i < n; i++)
    {
      double u = g_rand_double (rand);

      if (u < 0.07)
        data[i] = NAN;
      else
        data[i] = (float) (-log (g_rand_double_range (rand, 1e-9, 1.0)) * 3.0 - 1.0);
    }
  check_percentiles (data, n, dir);

  /* many ties: integer values */
  for (gsize i = 0; i < n; i++)
    data[i] = (float) g_rand_int_range (rand, 0, 12);
  data[5] = NAN;
  check_percentiles (data, n, dir);

  /* tiny images */
  data[0] = 4.0f;
  check_percentiles (data, 1, dir);
  data[1] = NAN;
  data[2] = -2.0f;
  check_percentiles (data, 3, dir);

  /* display limits: 100% is the full range; every value NaN has no limits */
  g_assert_true (efflux_percentile_limits (data, 3, 100.0, &lo, &hi));
  g_assert_cmpfloat (lo, ==, -2.0);
  g_assert_cmpfloat (hi, ==, 4.0);
  data[0] = data[2] = NAN;
  g_assert_false (efflux_percentile_limits (data, 3, 99.0, &lo, &hi));

  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

static void
test_colormap_apply (void)
{
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  const float values[] = { 1.0f, 3.0f, NAN, 2.0f, 100.0f, -INFINITY };
  guint8 rgba[G_N_ELEMENTS (values) * 4];
  EffluxColormapKind kind;

  g_assert_true (efflux_colormap_kind_from_string ("velocity", &kind));
  g_assert_cmpint (kind, ==, EFFLUX_COLORMAP_VELOCITY);
  g_assert_false (efflux_colormap_kind_from_string ("rainbow", &kind));

  efflux_colormap_fill (EFFLUX_COLORMAP_GREY, lut);
  efflux_colormap_apply (lut, EFFLUX_STRETCH_LINEAR, 1.0, 3.0, values, G_N_ELEMENTS (values), rgba);
  g_assert_cmpint (rgba[0], ==, 0);
  g_assert_cmpint (rgba[3], ==, 255);
  g_assert_cmpint (rgba[4], ==, 255);
  /* NaN and infinities are transparent */
  g_assert_cmpint (rgba[8 + 3], ==, 0);
  g_assert_cmpint (rgba[20 + 3], ==, 0);
  /* the middle of the range: round (127.5) = 128 */
  g_assert_cmpint (rgba[12], ==, 128);
  g_assert_cmpint (rgba[16], ==, 255);

  /* the table index is round (255 x stretch (v)) for every stretch, also at the edges between
   * two entries (the apply function searches precomputed thresholds instead of evaluating) */
  {
    g_autoptr(GRand) rand = g_rand_new_with_seed (99);
    const gsize n = 20000;
    g_autofree float *v = g_new (float, n);
    g_autofree guint8 *out = g_malloc (n * 4);

    for (int i = 0; i < EFFLUX_COLORMAP_SIZE; i++)
      lut[4 * i] = (guint8) i, lut[4 * i + 1] = lut[4 * i + 2] = 0, lut[4 * i + 3] = 255;
    for (int s = 0; s < EFFLUX_N_STRETCHES; s++)
      {
        for (gsize i = 0; i < n; i++)
          v[i] = (i % 2) ? (float) g_rand_double_range (rand, -3.0, 14.0)
                         : (float) (-2.0 + 12.0 * (i / 2 % 255 + 0.5) / 255.0);
        efflux_colormap_apply (lut, (EffluxStretchKind) s, -2.0, 10.0, v, n, out);
        for (gsize i = 0; i < n; i++)
          {
            long want = lround (efflux_stretch_apply ((EffluxStretchKind) s, v[i], -2.0, 10.0) * 255.0);

            g_assert_cmpint (out[4 * i], ==, want);
          }
      }
  }
}

static void
test_skygrid_steps (void)
{
  /* RA spans in degrees: 1' of RA (4 s of time) over 5 lines -> 0.8 s -> 1 s */
  g_assert_cmpfloat (efflux_skygrid_ra_step (1.0 / 60.0, 5), ==, 1.0);
  /* 0.05 deg = 12 s of time / 4 -> 3 s -> 5 s */
  g_assert_cmpfloat (efflux_skygrid_ra_step (0.05, 4), ==, 5.0);
  /* 1 deg = 240 s / 5 = 48 s -> 60 s */
  g_assert_cmpfloat (efflux_skygrid_ra_step (1.0, 5), ==, 60.0);
  /* 10 deg = 2400 s / 5 = 480 s -> 10 min */
  g_assert_cmpfloat (efflux_skygrid_ra_step (10.0, 5), ==, 600.0);
  /* 0.002 deg = 0.48 s / 5 -> 0.096 -> 0.1 s */
  g_assert_cmpfloat_with_epsilon (efflux_skygrid_ra_step (0.002, 5), 0.1, 1e-12);

  /* Dec: 60" / 5 = 12" -> 15"; 1 deg / 5 = 720" -> 15'; 6" / 5 -> 2"; 0.3" / 5 -> 0.1" */
  g_assert_cmpfloat (efflux_skygrid_dec_step (60.0 / 3600.0, 5), ==, 15.0);
  g_assert_cmpfloat (efflux_skygrid_dec_step (1.0, 5), ==, 900.0);
  g_assert_cmpfloat (efflux_skygrid_dec_step (6.0 / 3600.0, 5), ==, 2.0);
  g_assert_cmpfloat_with_epsilon (efflux_skygrid_dec_step (0.3 / 3600.0, 5), 0.1, 1e-12);
  g_assert_cmpfloat (efflux_skygrid_dec_step (20.0, 5), ==, 18000.0);

  /* offsets: 1-2-5 ladder */
  g_assert_cmpfloat (efflux_skygrid_offset_step (40.0, 5), ==, 10.0);
  g_assert_cmpfloat (efflux_skygrid_offset_step (9.0, 5), ==, 2.0);
  g_assert_cmpfloat (efflux_skygrid_offset_step (20.0, 5), ==, 5.0);
  g_assert_cmpfloat_with_epsilon (efflux_skygrid_offset_step (2.0, 5), 0.5, 1e-12);
}

#define ASSERT_LABEL(expr, want) \
  G_STMT_START { g_autofree char *s_ = (expr); g_assert_cmpstr (s_, ==, want); } G_STMT_END

static void
test_skygrid_labels (void)
{
  /* 52.263 deg = 3.4842 h = 3h 29m 03.12s; 31.255 deg = 31 deg 15' 18" */
  ASSERT_LABEL (efflux_skygrid_format_ra (52.263, 0.01), "03h29m03.12s");
  ASSERT_LABEL (efflux_skygrid_format_ra (52.263, 0.5), "03h29m03.1s");
  ASSERT_LABEL (efflux_skygrid_format_ra (52.263, 1.0), "03h29m03s");
  ASSERT_LABEL (efflux_skygrid_format_ra (52.263, 60.0), "03h29m");
  ASSERT_LABEL (efflux_skygrid_format_ra (52.263, 3600.0), "03h");
  /* carries: 59.996 s rounds up to the next minute and hour; 360 deg is 0 h */
  ASSERT_LABEL (efflux_skygrid_format_ra (15.0 * (3.0 - 0.004 / 3600.0), 0.01), "03h00m00.00s");
  ASSERT_LABEL (efflux_skygrid_format_ra (359.99999, 1.0), "00h00m00s");
  ASSERT_LABEL (efflux_skygrid_format_ra (-15.0, 60.0), "23h00m");

  ASSERT_LABEL (efflux_skygrid_format_dec (31.255, 1.0), "+31°15′18″");
  ASSERT_LABEL (efflux_skygrid_format_dec (31.255, 0.1), "+31°15′18.0″");
  ASSERT_LABEL (efflux_skygrid_format_dec (31.255, 60.0), "+31°15′");
  ASSERT_LABEL (efflux_skygrid_format_dec (31.255, 3600.0), "+31°");
  ASSERT_LABEL (efflux_skygrid_format_dec (-0.5, 60.0), "-00°30′");
  ASSERT_LABEL (efflux_skygrid_format_dec (-1e-9, 1.0), "+00°00′00″");
  ASSERT_LABEL (efflux_skygrid_format_dec (-(10.0 + 59.0 / 60.0 + 59.97 / 3600.0), 0.1), "-11°00′00.0″");
  ASSERT_LABEL (efflux_skygrid_format_dec (-5.0 - 7.25 / 3600.0, 0.05), "-05°00′07.25″");

  ASSERT_LABEL (efflux_skygrid_format_offset (5.0, 5.0), "+5″");
  ASSERT_LABEL (efflux_skygrid_format_offset (-2.5, 0.5), "-2.5″");
  ASSERT_LABEL (efflux_skygrid_format_offset (1e-12, 0.5), "0″");
  ASSERT_LABEL (efflux_skygrid_format_offset (-20.0, 10.0), "-20″");
}

/* Standard coordinates of the gnomonic projection against astropy.wcs (RA---TAN/DEC--TAN with
 * 1" pixels centred on the reference) and their inverse. */
static void
test_skygrid_gnomonic (void)
{
  const double cases[][4] = {
    { 52.263, 31.255, 52.264, 31.256 },
    { 52.263, 31.255, 52.250, 31.240 },
    { 10.0, -75.0, 11.0, -74.5 },
    { 359.99, 0.0, 0.02, 0.01 },
  };

  for (gsize i = 0; i < G_N_ELEMENTS (cases); i++)
    {
      char args[4][G_ASCII_DTOSTR_BUF_SIZE];
      g_autofree char *out = NULL;
      double xi, eta, want_xi, want_eta, ra, dec;

      for (int k = 0; k < 4; k++)
        g_ascii_dtostr (args[k], sizeof args[k], cases[i][k]);
      out = run_ref ("gnomonic", args[0], args[1], args[2], args[3], NULL);
      g_assert_cmpint (sscanf (out, "%lf %lf", &want_xi, &want_eta), ==, 2);
      g_assert_true (efflux_skygrid_offsets_from_icrs (cases[i][0], cases[i][1], cases[i][2],
                                                       cases[i][3], &xi, &eta));
      g_assert_cmpfloat (fabs (xi - want_xi), <, 1e-6);
      g_assert_cmpfloat (fabs (eta - want_eta), <, 1e-6);

      efflux_skygrid_icrs_from_offsets (cases[i][0], cases[i][1], xi, eta, &ra, &dec);
      g_assert_cmpfloat (fabs (remainder (ra - cases[i][2], 360.0)), <, 1e-10);
      g_assert_cmpfloat (fabs (dec - cases[i][3]), <, 1e-10);
    }
  /* the opposite hemisphere has no gnomonic position */
  {
    double xi, eta;
    g_assert_false (efflux_skygrid_offsets_from_icrs (0.0, 0.0, 180.0, 0.0, &xi, &eta));
  }
}

/* Every traced point of an RA line has that RA, and of a Dec line that Dec, through the cube's WCS
 * (efflux_cube_pixel_to_icrs); labels match the values; anchors lie on the region's edges. */
static void
test_skygrid_trace (void)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (120, 90, 2, 52.263, 31.255, 0.25,
                                                        0.0, 1.0, 230.538e9);
  g_autoptr(EffluxSkyGrid) grid = NULL;
  int n_lon = 0, n_lat = 0, anchored = 0;

  g_assert_nonnull (cube);
  grid = efflux_skygrid_new (cube, -0.5, -0.5, 119.5, 89.5, EFFLUX_SKYGRID_SEXAGESIMAL,
                             0, 0, 6);
  g_assert_nonnull (grid);
  /* 30" x 22.5" field: RA span 30"/cos(31.255 deg) = 35.1" = 2.34 s of time -> 0.5 s;
   * Dec 22.5" / 6 -> 5" */
  g_assert_cmpfloat (grid->lon_step, ==, 0.5);
  g_assert_cmpfloat (grid->lat_step, ==, 5.0);

  for (guint i = 0; i < grid->lines->len; i++)
    {
      EffluxSkyGridLine *line = g_ptr_array_index (grid->lines, i);
      const double *p = (const double *) line->points->data;
      g_autofree char *label = NULL;

      for (guint k = 0; k < line->points->len / 2; k++)
        {
          double ra, dec;

          if (isnan (p[2 * k]))
            continue;
          g_assert_true (efflux_cube_pixel_to_icrs (cube, p[2 * k], p[2 * k + 1], &ra, &dec));
          if (line->longitude)
            g_assert_cmpfloat (fabs (remainder (ra - line->value, 360.0)), <, 1e-9);
          else
            g_assert_cmpfloat (fabs (dec - line->value), <, 1e-9);
        }
      if (line->longitude)
        {
          /* values are whole multiples of the step */
          double steps = line->value * 240.0 / grid->lon_step;
          g_assert_cmpfloat (fabs (steps - round (steps)), <, 1e-6);
          label = efflux_skygrid_format_ra (line->value, grid->lon_step);
          n_lon++;
        }
      else
        {
          double steps = line->value * 3600.0 / grid->lat_step;
          g_assert_cmpfloat (fabs (steps - round (steps)), <, 1e-6);
          label = efflux_skygrid_format_dec (line->value, grid->lat_step);
          n_lat++;
        }
      g_assert_cmpstr (line->label, ==, label);
      if (line->has_anchor)
        {
          anchored++;
          if (line->longitude)
            g_assert_cmpfloat (line->anchor_y, ==, -0.5);
          else
            g_assert_cmpfloat (line->anchor_x, ==, -0.5);
        }
    }
  /* 2.34 s / 0.5 s and 22.5" / 5": four or five lines each, all crossing their label edge */
  g_assert_cmpint (n_lon, >=, 4);
  g_assert_cmpint (n_lon, <=, 5);
  g_assert_cmpint (n_lat, >=, 4);
  g_assert_cmpint (n_lat, <=, 5);
  g_assert_cmpint (anchored, ==, n_lon + n_lat);

  /* offsets from the map centre: lines of constant xi and eta */
  g_clear_pointer (&grid, efflux_skygrid_free);
  grid = efflux_skygrid_new (cube, -0.5, -0.5, 119.5, 89.5, EFFLUX_SKYGRID_OFFSETS,
                             52.263, 31.255, 6);
  g_assert_nonnull (grid);
  g_assert_cmpfloat (grid->lon_step, ==, 5.0);
  g_assert_cmpfloat (grid->lat_step, ==, 5.0);
  n_lon = 0;
  for (guint i = 0; i < grid->lines->len; i++)
    {
      EffluxSkyGridLine *line = g_ptr_array_index (grid->lines, i);
      const double *p = (const double *) line->points->data;

      for (guint k = 0; k < line->points->len / 2; k++)
        {
          double ra, dec, xi, eta;

          if (isnan (p[2 * k]))
            continue;
          g_assert_true (efflux_cube_pixel_to_icrs (cube, p[2 * k], p[2 * k + 1], &ra, &dec));
          g_assert_true (efflux_skygrid_offsets_from_icrs (52.263, 31.255, ra, dec, &xi, &eta));
          g_assert_cmpfloat (fabs ((line->longitude ? xi : eta) - line->value), <, 1e-6);
        }
      if (line->longitude && line->value == 0.0)
        {
          g_assert_cmpstr (line->label, ==, "0″");
          n_lon++;
        }
    }
  g_assert_cmpint (n_lon, ==, 1);

  /* a field across RA = 0 h: lines on both sides of the wrap, each point at its RA */
  {
    g_autoptr(EffluxCube) wrap = efflux_cube_new_simple (120, 90, 2, 0.002, 10.0, 0.25, 0.0, 1.0,
                                                         230.538e9);
    g_autoptr(EffluxSkyGrid) g = efflux_skygrid_new (wrap, -0.5, -0.5, 119.5, 89.5,
                                                     EFFLUX_SKYGRID_SEXAGESIMAL, 0, 0, 6);
    gboolean below_24h = FALSE, at_0h = FALSE;

    g_assert_nonnull (g);
    g_assert_cmpfloat (g->lon_step, ==, 0.5);
    for (guint i = 0; i < g->lines->len; i++)
      {
        EffluxSkyGridLine *line = g_ptr_array_index (g->lines, i);
        const double *p = (const double *) line->points->data;

        if (!line->longitude)
          continue;
        g_assert_cmpfloat (line->value, >=, 0.0);
        g_assert_cmpfloat (line->value, <, 360.0);
        if (line->value > 359.0)
          {
            below_24h = TRUE;
            g_assert_cmpstr (line->label, ==, "23h59m59.5s");
          }
        if (line->value == 0.0)
          {
            at_0h = TRUE;
            g_assert_cmpstr (line->label, ==, "00h00m00.0s");
          }
        for (guint k = 0; k < line->points->len / 2; k++)
          {
            double ra, dec;

            if (isnan (p[2 * k]))
              continue;
            g_assert_true (efflux_cube_pixel_to_icrs (wrap, p[2 * k], p[2 * k + 1], &ra, &dec));
            g_assert_cmpfloat (fabs (remainder (ra - line->value, 360.0)), <, 1e-9);
          }
      }
    g_assert_true (below_24h);
    g_assert_true (at_0h);
  }

  /* a grid rotated by 35 deg (PC matrix) and a SIN projection: the lines follow the WCS, and
   * still cross the label edges */
  {
    g_autoptr(EffluxCube) rot = efflux_cube_new_simple (120, 90, 2, 52.263, 31.255, 0.25, 0.0, 1.0,
                                                        230.538e9);
    g_autoptr(EffluxSkyGrid) g = NULL;
    double c = cos (35.0 * G_PI / 180.0), s = sin (35.0 * G_PI / 180.0);
    int n_lines = 0, n_anchored = 0;

    rot->sky->pc[0] = c;
    rot->sky->pc[1] = -s;
    rot->sky->pc[2] = s;
    rot->sky->pc[3] = c;
    rot->sky->altlin |= 1;
    strcpy (rot->sky->ctype[0], "RA---SIN");
    strcpy (rot->sky->ctype[1], "DEC--SIN");
    rot->sky->flag = 0;
    g_assert_cmpint (wcsset (rot->sky), ==, 0);

    g = efflux_skygrid_new (rot, -0.5, -0.5, 119.5, 89.5, EFFLUX_SKYGRID_SEXAGESIMAL, 0, 0, 6);
    g_assert_nonnull (g);
    for (guint i = 0; i < g->lines->len; i++)
      {
        EffluxSkyGridLine *line = g_ptr_array_index (g->lines, i);
        const double *p = (const double *) line->points->data;

        n_lines++;
        n_anchored += line->has_anchor;
        for (guint k = 0; k < line->points->len / 2; k++)
          {
            double ra, dec;

            if (isnan (p[2 * k]))
              continue;
            g_assert_true (efflux_cube_pixel_to_icrs (rot, p[2 * k], p[2 * k + 1], &ra, &dec));
            if (line->longitude)
              g_assert_cmpfloat (fabs (remainder (ra - line->value, 360.0)), <, 1e-9);
            else
              g_assert_cmpfloat (fabs (dec - line->value), <, 1e-9);
          }
      }
    g_assert_cmpint (n_lines, >=, 6);
    /* rotated lines may leave through another edge; most still reach their label edge */
    g_assert_cmpint (n_anchored, >=, n_lines / 2);
  }

  /* the north celestial pole inside the field: every hour line meets it, four at 6 h steps */
  {
    g_autoptr(EffluxCube) polar = efflux_cube_new_simple (120, 90, 2, 45.0, 89.999, 0.25, 0.0, 1.0,
                                                          230.538e9);
    g_autoptr(EffluxSkyGrid) g = efflux_skygrid_new (polar, -0.5, -0.5, 119.5, 89.5,
                                                     EFFLUX_SKYGRID_SEXAGESIMAL, 0, 0, 6);
    double pole_x, pole_y;
    int hours = 0;

    g_assert_nonnull (g);
    g_assert_true (efflux_cube_icrs_to_pixel (polar, 0.0, 90.0, &pole_x, &pole_y));
    g_assert_cmpfloat (g->lon_step, ==, 21600.0);
    for (guint i = 0; i < g->lines->len; i++)
      {
        EffluxSkyGridLine *line = g_ptr_array_index (g->lines, i);
        const double *p = (const double *) line->points->data;
        guint last = line->points->len / 2 - 1;

        if (!line->longitude)
          continue;
        hours++;
        /* traced up to Dec = 90: the last point is the pole */
        g_assert_cmpfloat (fabs (p[2 * last] - pole_x), <, 1e-6);
        g_assert_cmpfloat (fabs (p[2 * last + 1] - pole_y), <, 1e-6);
      }
    g_assert_cmpint (hours, ==, 4);
  }
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/render/cubehelix/formula", test_cubehelix_formula);
  g_test_add_func ("/render/cubehelix/luminance", test_cubehelix_luminance);
  g_test_add_func ("/render/colormap/grey", test_grey);
  g_test_add_func ("/render/colormap/velocity", test_velocity_map);
  g_test_add_func ("/render/colormap/apply", test_colormap_apply);
  g_test_add_func ("/render/stretch/astropy", test_stretch_astropy);
  g_test_add_func ("/render/stretch/percentiles", test_percentiles_numpy);
  g_test_add_func ("/render/skygrid/steps", test_skygrid_steps);
  g_test_add_func ("/render/skygrid/labels", test_skygrid_labels);
  g_test_add_func ("/render/skygrid/gnomonic", test_skygrid_gnomonic);
  g_test_add_func ("/render/skygrid/trace", test_skygrid_trace);
  return g_test_run ();
}
