/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Figures and the report (src/render/efflux-figure.c, efflux-cli figure and report), on the demo
 * source made by `efflux-cli synth sample-data/demo.recipe` in a temporary directory.
 *
 * Checks against sources outside the code under test:
 * - PNG size: pixels = round(mm / 25.4 x dpi) (25.4 mm per inch, the inch's definition), the PNG
 *   read back with cairo_image_surface_create_from_png.
 * - PDF: page count and /MediaBox in points (1 pt = 1/72 inch; ISO 32000-1 section 7.7.3.3) read
 *   by tests/ref/figure_check.py; A4 = 210 x 297 mm (ISO 216).
 * - SVG: <path> and <image> elements counted by Python's xml.etree in figure_check.py.
 * - Sky geometry: sky positions go to cube pixels through astropy.wcs (figure_check.py), then to
 *   the figure through efflux_figure_sky_geometry; the PNG pixel there must have the colour-map
 *   colour of the core's moment-0 value at that map pixel (efflux_moment_map, the stretch limits
 *   of efflux_percentile_limits and efflux_colormap_apply, which tests/test-render.c checks against
 *   numpy and Green 2011).
 * - Exit status 2 for wrong usage and 1 for refused input (CONTRACT.md section 1), no output file
 *   left behind on failure. */
#include "config.h"

#include <cairo.h>
#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "efflux-colormap.h"
#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-figure.h"
#include "efflux-maps.h"
#include "efflux-stretch.h"
#include "efflux-test-util.h"

static char *demo_dir;      /* the synthetic demo: cubes and demo.efflux */
static char *demo_dossier;

/* Run tests/ref/figure_check.py; a missing EFFLUX_PYTHON is a failure. */
static char *
check (const char *what,
       const char *file,
       const char * const *more)
{
  g_autoptr (GPtrArray) args = g_ptr_array_new ();

  g_ptr_array_add (args, (gpointer) what);
  g_ptr_array_add (args, (gpointer) file);
  for (gsize i = 0; more != NULL && more[i] != NULL; i++)
    g_ptr_array_add (args, (gpointer) more[i]);
  g_ptr_array_add (args, NULL);
  return efflux_test_python ("figure_check.py", (const char * const *) args->pdata);
}

/* Every number in a text, in order. */
static GArray *
numbers (const char *text)
{
  g_autoptr (GRegex) re = g_regex_new ("-?[0-9][0-9.]*(?:[eE][-+]?[0-9]+)?", 0, 0, NULL);
  g_autoptr (GMatchInfo) match = NULL;
  GArray *out = g_array_new (FALSE, FALSE, sizeof (double));

  g_regex_match (re, text, 0, &match);
  while (g_match_info_matches (match))
    {
      g_autofree char *word = g_match_info_fetch (match, 0);
      double v = g_ascii_strtod (word, NULL);

      g_array_append_val (out, v);
      g_match_info_next (match, NULL);
    }
  return out;
}

static void
png_size (const char *path,
          int        *w,
          int        *h)
{
  cairo_surface_t *s = cairo_image_surface_create_from_png (path);

  g_assert_cmpint (cairo_surface_status (s), ==, CAIRO_STATUS_SUCCESS);
  *w = cairo_image_surface_get_width (s);
  *h = cairo_image_surface_get_height (s);
  cairo_surface_destroy (s);
}

static void
test_png_size (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-figure");
  g_autofree char *a = g_build_filename (dir, "sky.png", NULL);
  g_autofree char *b = g_build_filename (dir, "mv.png", NULL);
  int w, h;

  {
    const char *argv[] = { efflux_test_cli (), "figure", demo_dossier, "--view", "sky", "-o", a, "--width-mm", "88",
                           "--height-mm", "70", "--dpi", "200", NULL };

    g_assert_cmpint (efflux_test_spawn (NULL, argv, NULL, NULL), ==, 0);
  }
  png_size (a, &w, &h);
  /* 88 mm = 88 / 25.4 in: 692.9 -> 693 pixels at 200 dpi; 70 mm -> 551.2 -> 551 */
  g_assert_cmpint (w, ==, 693);
  g_assert_cmpint (h, ==, 551);

  {
    const char *argv[] = { efflux_test_cli (), "figure", demo_dossier, "--view", "mass-velocity", "-o", b,
                           "--width-mm", "60", "--dpi", "100", NULL };

    g_assert_cmpint (efflux_test_spawn (NULL, argv, NULL, NULL), ==, 0);
  }
  png_size (b, &w, &h);
  /* 60 / 25.4 x 100 = 236.2 -> 236; the height is the layout's, above the plot's 0.7 x width */
  g_assert_cmpint (w, ==, 236);
  g_assert_cmpint (h, >, 0.7 * 236 * 0.6);
  efflux_test_remove_tree (dir);
}

/* Every view as SVG and PDF: vector, the right size in points. */
static void
test_vector (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-figure");
  const char *views[] = { "sky", "cut", "spectrum", "mass-velocity", "channels" };

  for (gsize i = 0; i < G_N_ELEMENTS (views); i++)
    {
      g_autofree char *svg = g_strdup_printf ("%s/%s.svg", dir, views[i]);
      g_autofree char *pdf = g_strdup_printf ("%s/%s.pdf", dir, views[i]);
      g_autofree char *svg_json = NULL;
      g_autofree char *pdf_json = NULL;
      const char *argv_svg[] = { efflux_test_cli (), "figure", demo_dossier, "--view", views[i], "-o", svg,
                                 "--width-mm", "100", NULL };
      const char *argv_pdf[] = { efflux_test_cli (), "figure", demo_dossier, "--view", views[i], "-o", pdf,
                                 "--width-mm", "100", "--height-mm", "80", NULL };
      g_autoptr (GArray) boxes = NULL;
      double images;

      g_assert_cmpint (efflux_test_spawn (NULL, argv_svg, NULL, NULL), ==, 0);
      g_assert_cmpint (efflux_test_spawn (NULL, argv_pdf, NULL, NULL), ==, 0);
      svg_json = check ("svg", svg, NULL);
      /* axes, ticks, outlines and glyphs are paths */
      g_assert_cmpfloat (efflux_test_json_number (svg_json, "paths"), >, 50);
      /* 100 mm = 283.465 pt */
      g_assert_cmpfloat_with_epsilon (efflux_test_json_number (svg_json, "width"), 100 * 72 / 25.4, 1e-3);
      images = efflux_test_json_number (svg_json, "images");
      /* The only raster: the map or PV image itself (one per channel panel); none for plots. */
      if (strcmp (views[i], "spectrum") == 0 || strcmp (views[i], "mass-velocity") == 0)
        g_assert_cmpfloat (images, ==, 0);
      else if (strcmp (views[i], "channels") == 0)
        g_assert_cmpfloat (images, ==, 9);
      else
        g_assert_cmpfloat (images, ==, 1);

      pdf_json = check ("pdf", pdf, NULL);
      g_assert_cmpfloat (efflux_test_json_number (pdf_json, "pages"), ==, 1);
      boxes = numbers (strstr (pdf_json, "mediaboxes"));
      g_assert_cmpuint (boxes->len, ==, 2);
      g_assert_cmpfloat_with_epsilon (g_array_index (boxes, double, 0), 100 * 72 / 25.4, 1e-3);
      g_assert_cmpfloat_with_epsilon (g_array_index (boxes, double, 1), 80 * 72 / 25.4, 1e-3);
    }
  efflux_test_remove_tree (dir);
}

/* The colour of the sky figure at known sky positions is the colour map's colour of the core's
 * moment-0 value there. */
/* How many of the 16 map positions pix (cube pixel x, y pairs) the PNG shows in the colour-map
 * colour of the map's value there between lo and hi; *checked: the positions tested (those
 * within 0.4 pixel of a pixel centre, on a finite value). */
static guint
matching_positions (const char       *png,
                    double            dpi,
                    const EffluxCube *cube,
                    const float      *map,
                    GArray           *pix,
                    const guint8     *lut,
                    double            x0,
                    double            y0,
                    double            scale,
                    double            lo,
                    double            hi,
                    guint            *checked)
{
  cairo_surface_t *surface = cairo_image_surface_create_from_png (png);
  guint matched = 0;

  g_assert_cmpint (cairo_surface_status (surface), ==, CAIRO_STATUS_SUCCESS);
  *checked = 0;
  for (guint i = 0; i < pix->len / 2; i++)
    {
      double fx = g_array_index (pix, double, 2 * i), fy = g_array_index (pix, double, 2 * i + 1);
      gssize px = (gssize) lround (fx), py = (gssize) lround (fy);
      double dx, dy;
      int sx, sy;
      guint32 argb;
      guint8 rgba[4];
      float value;

      /* Positions within 0.1 pixel of a pixel edge are ambiguous: left out. */
      if (fabs (fx - px) > 0.4 || fabs (fy - py) > 0.4 || px < 0 || py < 0
          || px >= (gssize) cube->nx || py >= (gssize) cube->ny)
        continue;
      value = map[py * cube->nx + px];
      if (!isfinite (value))
        continue;
      efflux_colormap_apply (lut, EFFLUX_STRETCH_LINEAR, lo, hi, &value, 1, rgba);
      /* Where the position falls inside the map pixel, in points, then in PNG pixels. */
      dx = x0 + (fx + 0.5) * scale;
      dy = y0 + (cube->ny - fy - 0.5) * scale;
      sx = (int) floor (dx * dpi / 72.0);
      sy = (int) floor (dy * dpi / 72.0);
      argb = *(guint32 *) (cairo_image_surface_get_data (surface)
                           + sy * cairo_image_surface_get_stride (surface) + 4 * sx);
      (*checked)++;
      if (((argb >> 16) & 0xff) == rgba[0] && ((argb >> 8) & 0xff) == rgba[1] && (argb & 0xff) == rgba[2])
        matched++;
      else
        g_test_message ("position %u: pixel (%zd, %zd) drawn #%06x, colour map #%02x%02x%02x "
                        "(a contour or outline may cross it)", i, px, py, argb & 0xffffff,
                        rgba[0], rgba[1], rgba[2]);
    }
  cairo_surface_destroy (surface);
  return matched;
}

static void
test_sky_pixels (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-figure");
  g_autofree char *png = g_build_filename (dir, "sky.png", NULL);
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) dossier = efflux_dossier_load (demo_dossier, &error);
  g_autoptr (EffluxFigure) figure = NULL;
  g_autoptr (EffluxCube) cube = NULL;
  g_autofree float *map = NULL;
  g_autofree char *cube_path = NULL;
  g_autofree char *pix_json = NULL;
  g_autoptr (GPtrArray) coords = g_ptr_array_new_with_free_func (g_free);
  g_autoptr (GArray) pix = NULL;
  EffluxFigureOptions o;
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  double x0, y0, scale, lo, hi, lo2, hi2, dpi = 144.0;
  guint checked = 0, matched = 0;

  g_assert_no_error (error);
  figure = efflux_figure_new (dossier, &error);
  g_assert_no_error (error);
  efflux_figure_options_init (&o);
  o.view = EFFLUX_FIGURE_SKY;
  o.width_mm = 150;
  o.dpi = dpi;
  g_assert_true (efflux_figure_write (figure, &o, png, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_figure_sky_geometry (figure, &x0, &y0, &scale, &lo, &hi));

  /* The core's map and limits, computed here again. */
  cube_path = g_build_filename (demo_dir, "demo-12co21.fits", NULL);
  cube = efflux_cube_load (cube_path, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  map = g_new (float, cube->nx * cube->ny);
  g_assert_true (efflux_moment_map (cube, EFFLUX_MOMENT_0, cube->velocity[0],
                                    cube->velocity[cube->nchan - 1], 0.0, map, &error));
  g_assert_true (efflux_percentile_limits (map, cube->nx * cube->ny, 99.5, &lo2, &hi2));
  g_assert_cmpfloat (lo, ==, lo2);
  g_assert_cmpfloat (hi, ==, hi2);
  efflux_colormap_fill (EFFLUX_COLORMAP_CUBEHELIX, lut);

  /* Sky positions on a ring 20 arcsec around the source and farther out, through astropy. */
  for (int i = 0; i < 16; i++)
    {
      double r = (i < 8 ? 20.0 : 33.0) / 3600.0, a = i * G_PI / 8 + 0.3;
      double dec = dossier->dec_deg + r * sin (a);
      double ra = dossier->ra_deg + r * cos (a) / cos (dossier->dec_deg * G_PI / 180);

      g_ptr_array_add (coords, g_strdup_printf ("%.8f", ra));
      g_ptr_array_add (coords, g_strdup_printf ("%.8f", dec));
    }
  g_ptr_array_add (coords, NULL);
  pix_json = check ("pixels", cube_path, (const char * const *) coords->pdata);
  pix = numbers (pix_json);
  g_assert_cmpuint (pix->len, ==, 32);

  matched = matching_positions (png, dpi, cube, map, pix, lut, x0, y0, scale, lo, hi, &checked);
  /* Contours and outlines cross a few of the positions; the map shows through at nearly all. */
  g_test_message ("%u of %u positions match", matched, checked);
  g_assert_cmpuint (checked, >=, 8);
  g_assert_cmpuint (matched, >=, checked - 3);

  /* Other colour limits: a percentage (the core's percentile limits of the same map) and fixed
   * limits, which the figure must use as given: the positions then show the colour map's colours
   * of their values between the fixed limits. */
  o.limits_percent = 90.0;
  g_assert_true (efflux_figure_write (figure, &o, png, &error));
  g_assert_true (efflux_figure_sky_geometry (figure, &x0, &y0, &scale, &lo, &hi));
  g_assert_true (efflux_percentile_limits (map, cube->nx * cube->ny, 90.0, &lo2, &hi2));
  g_assert_cmpfloat (lo, ==, lo2);
  g_assert_cmpfloat (hi, ==, hi2);
  o.limit_lo = 0.25 * hi2;
  o.limit_hi = 0.75 * hi2;
  g_assert_true (efflux_figure_write (figure, &o, png, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_figure_sky_geometry (figure, &x0, &y0, &scale, &lo, &hi));
  g_assert_cmpfloat (lo, ==, 0.25 * hi2);
  g_assert_cmpfloat (hi, ==, 0.75 * hi2);
  matched = matching_positions (png, dpi, cube, map, pix, lut, x0, y0, scale, lo, hi, &checked);
  g_test_message ("fixed limits: %u of %u positions match", matched, checked);
  g_assert_cmpuint (checked, >=, 8);
  g_assert_cmpuint (matched, >=, checked - 3);

  /* The same from the command line: the PNG is the library's, pixel for pixel. */
  {
    g_autofree char *cli_png = g_build_filename (dir, "sky-cli.png", NULL);
    g_autofree char *limits = g_strdup_printf ("%.17g:%.17g", 0.25 * hi2, 0.75 * hi2);
    g_autofree char *a_data = NULL, *b_data = NULL;
    gsize a_len = 0, b_len = 0;
    const char *argv[] = { efflux_test_cli (), "figure", demo_dossier, "--view", "sky", "--width-mm", "150",
                           "--dpi", "144", "--limits-percent", "90", "--limits", limits, "-o", cli_png, NULL };
    cairo_surface_t *a, *b;

    g_assert_cmpint (efflux_test_spawn (NULL, argv, NULL, NULL), ==, 0);
    a = cairo_image_surface_create_from_png (png);
    b = cairo_image_surface_create_from_png (cli_png);
    g_assert_cmpint (cairo_image_surface_get_width (a), ==, cairo_image_surface_get_width (b));
    g_assert_cmpint (cairo_image_surface_get_height (a), ==, cairo_image_surface_get_height (b));
    a_len = (gsize) cairo_image_surface_get_stride (a) * (gsize) cairo_image_surface_get_height (a);
    b_len = (gsize) cairo_image_surface_get_stride (b) * (gsize) cairo_image_surface_get_height (b);
    g_assert_cmpuint (a_len, ==, b_len);
    a_data = g_memdup2 (cairo_image_surface_get_data (a), a_len);
    b_data = g_memdup2 (cairo_image_surface_get_data (b), b_len);
    g_assert_cmpint (memcmp (a_data, b_data, a_len), ==, 0);
    cairo_surface_destroy (a);
    cairo_surface_destroy (b);
  }
  efflux_test_remove_tree (dir);
}

/* efflux_figure_new_shared: every cube comes from the given function and goes back through the
 * release function, once each; the drawing is the same as with the figure's own reads. */
static guint shared_loads, shared_releases;

static EffluxCube *
counting_load (const char                  *path,
               const EffluxCubeLoadOptions *options,
               GCancellable                *cancellable,
               EffluxProgressFunc           progress,
               gpointer                     progress_data,
               GError                     **error)
{
  EffluxCubeLoadOptions o = *options;

  shared_loads++;
  /* as a store that read the cube for someone else, without the noise */
  o.no_noise = TRUE;
  return efflux_cube_load (path, &o, cancellable, progress, progress_data, error);
}

static void
counting_release (gpointer cube)
{
  shared_releases++;
  efflux_cube_free (cube);
}

static void
test_shared_cubes (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-figure");
  g_autofree char *a = g_build_filename (dir, "own.png", NULL);
  g_autofree char *b = g_build_filename (dir, "shared.png", NULL);
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) dossier = efflux_dossier_load (demo_dossier, &error);
  EffluxFigure *own, *shared;
  EffluxFigureOptions o;
  g_autofree char *da = NULL, *db = NULL;
  gsize la = 0, lb = 0;

  g_assert_no_error (error);
  /* no rms-k in the dossier: the figures need each cube's own noise estimate */
  for (guint i = 0; i < dossier->cubes->len; i++)
    ((EffluxDossierCube *) g_ptr_array_index (dossier->cubes, i))->rms_k = NAN;
  efflux_figure_options_init (&o);
  o.view = EFFLUX_FIGURE_CUT;
  o.dpi = 100;
  own = efflux_figure_new (dossier, &error);
  g_assert_no_error (error);
  shared = efflux_figure_new_shared (dossier, counting_load, counting_release, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  /* the demo's figure reads the lobes' and cut's cube and the isotopologue (opacity) */
  g_assert_cmpuint (shared_loads, ==, 2);
  g_assert_true (efflux_figure_write (own, &o, a, &error));
  g_assert_true (efflux_figure_write (shared, &o, b, &error));
  g_assert_no_error (error);
  /* the cut view's contour levels are multiples of the noise, which the shared figure estimated
   * itself (its cubes came without): the same caption and the same file */
  g_assert_cmpstr (efflux_figure_caption (own), ==, efflux_figure_caption (shared));
  g_assert_true (g_file_get_contents (a, &da, &la, NULL));
  g_assert_true (g_file_get_contents (b, &db, &lb, NULL));
  g_assert_cmpuint (la, ==, lb);
  g_assert_cmpint (memcmp (da, db, la), ==, 0);
  efflux_figure_free (own);
  g_assert_cmpuint (shared_releases, ==, 0);
  efflux_figure_free (shared);
  g_assert_cmpuint (shared_releases, ==, 2);
  efflux_test_remove_tree (dir);
}

static void
test_channels_and_caption (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-figure");
  g_autofree char *png = g_build_filename (dir, "chan.png", NULL);
  const char *argv[] = { efflux_test_cli (), "figure", demo_dossier, "--view", "channels", "--grid", "4x2", "-o", png,
                         "--width-mm", "120", "--dpi", "72", NULL };
  const char *argv_sky[] = { efflux_test_cli (), "figure", demo_dossier, "--view", "sky", "-o", png, NULL };
  g_autofree char *out = NULL;
  g_autofree char *out_sky = NULL;

  g_assert_cmpint (efflux_test_spawn (NULL, argv, &out, NULL), ==, 0);
  g_assert_nonnull (strstr (out, "8 channel maps"));
  /* The demo's lobes span -13.5 to 22.5 km/s; channel centres lie 0.5 km/s apart at ...15, ...65
   * (demo.recipe), so the first and last panels are -13.35 and 22.15 km/s. */
  g_assert_nonnull (strstr (out, "from -13.35 to 22.15 km/s"));
  /* A chosen velocity range (--channel-range): 2 x 2 panels spread over the channels whose centres
   * lie in -5 .. 5 km/s, i.e. -4.85 to 4.65 km/s (the demo's channel centres above). */
  {
    const char *argv_range[] = { efflux_test_cli (), "figure", demo_dossier, "--view", "channels", "--grid", "2x2",
                                 "--channel-range", "-5:5", "-o", png, "--width-mm", "88", "--dpi", "72", NULL };
    g_autofree char *out_range = NULL;

    g_assert_cmpint (efflux_test_spawn (NULL, argv_range, &out_range, NULL), ==, 0);
    g_assert_nonnull (strstr (out_range, "4 channel maps from -4.85 to 4.65 km/s"));
    g_assert_nonnull (strstr (out_range, "the chosen range -5.00 to 5.00 km/s"));
  }
  /* Contour levels are stated in the caption of the sky view. */
  g_assert_cmpint (efflux_test_spawn (NULL, argv_sky, &out_sky, NULL), ==, 0);
  g_assert_nonnull (strstr (out_sky, "Contours of lobe blue (blue): moment 0 over -13.50 to 3.20 km/s at 3, 6"));

  /* The power laws drawn in the mass-velocity view are the table's: mv_gamma of `efflux-cli measure`. */
  {
    const char *argv_mv[] = { efflux_test_cli (), "figure", demo_dossier, "--view", "mass-velocity", "-o", png, NULL };
    const char *argv_csv[] = { efflux_test_cli (), "measure", demo_dossier, "--format", "csv", NULL };
    g_autofree char *out_mv = NULL;
    g_autofree char *csv = NULL;
    g_auto (GStrv) lines = NULL;
    g_auto (GStrv) head = NULL;
    int col_lobe = -1, col_gamma = -1, col_vb = -1;
    guint compared = 0;

    g_assert_cmpint (efflux_test_spawn (NULL, argv_mv, &out_mv, NULL), ==, 0);
    g_assert_cmpint (efflux_test_spawn (NULL, argv_csv, &csv, NULL), ==, 0);
    lines = g_strsplit (csv, "\n", -1);
    head = g_strsplit (lines[0], ",", -1);
    for (int i = 0; head[i] != NULL; i++)
      {
        if (strcmp (head[i], "lobe") == 0)
          col_lobe = i;
        else if (strcmp (head[i], "mv_gamma") == 0)
          col_gamma = i;
        else if (strcmp (head[i], "mv_break_kms") == 0)
          col_vb = i;
      }
    g_assert_cmpint (col_lobe, >=, 0);
    g_assert_cmpint (col_gamma, >=, 0);
    g_assert_cmpint (col_vb, >=, 0);
    for (int l = 1; lines[l] != NULL && *lines[l] != '\0'; l++)
      {
        g_auto (GStrv) cells = g_strsplit (lines[l], ",", -1);
        g_autofree char *key = NULL;
        const char *at;
        double gamma, drawn, vb, drawn_vb;

        if (strcmp (cells[col_lobe], "total") == 0)
          continue;
        key = g_strdup_printf ("Drawn for %s: single \xce\xb3 = ", cells[col_lobe]);
        at = strstr (out_mv, key);
        g_assert_nonnull (at);
        drawn = g_ascii_strtod (at + strlen (key), NULL);
        gamma = g_ascii_strtod (cells[col_gamma], NULL);
        g_assert_cmpfloat_with_epsilon (drawn, gamma, 1e-5 * fabs (gamma));
        at = strstr (at, "v_b = ");
        g_assert_nonnull (at);
        drawn_vb = g_ascii_strtod (at + strlen ("v_b = "), NULL);
        vb = g_ascii_strtod (cells[col_vb], NULL);
        g_assert_cmpfloat_with_epsilon (drawn_vb, vb, 1e-5 * fabs (vb));
        compared++;
      }
    g_assert_cmpuint (compared, ==, 2);
  }
  efflux_test_remove_tree (dir);
}

static void
test_report (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-figure");
  g_autofree char *pdf = g_build_filename (dir, "report.pdf", NULL);
  g_autofree char *json = NULL;
  g_autoptr (GArray) boxes = NULL;
  const char *argv[] = { efflux_test_cli (), "report", demo_dossier, "-o", pdf, NULL };

  g_assert_cmpint (efflux_test_spawn (NULL, argv, NULL, NULL), ==, 0);
  json = check ("pdf", pdf, NULL);
  /* maps, cut, mass-velocity, results, review: one page each */
  g_assert_cmpfloat (efflux_test_json_number (json, "pages"), ==, EFFLUX_REPORT_PAGES);
  g_assert_cmpint (EFFLUX_REPORT_PAGES, ==, 5);
  boxes = numbers (strstr (json, "mediaboxes"));
  g_assert_cmpuint (boxes->len, ==, 10);
  for (guint i = 0; i < 5; i++)
    {
      /* A4 (ISO 216): 210 x 297 mm = 595.276 x 841.890 pt */
      g_assert_cmpfloat_with_epsilon (g_array_index (boxes, double, 2 * i), 595.276, 1e-3);
      g_assert_cmpfloat_with_epsilon (g_array_index (boxes, double, 2 * i + 1), 841.890, 1e-3);
    }

  /* With review groups (efflux-review.h) the report still has its five pages. */
  {
    g_autofree char *text = NULL;
    g_autofree char *reviewed = g_build_filename (demo_dir, "reviewed.efflux", NULL);
    g_autofree char *pdf2 = g_build_filename (dir, "reviewed.pdf", NULL);
    g_autofree char *json2 = NULL;
    g_autofree char *all = NULL;
    const char *argv2[] = { efflux_test_cli (), "report", reviewed, "-o", pdf2, NULL };

    g_assert_true (g_file_get_contents (demo_dossier, &text, NULL, NULL));
    all = g_strconcat (text, "\n[Review]\nreviewer=A. Reviewer\nreviewed=demo.efflux\n\n"
                       "[Review blue]\nstatus=questioned\nnote=the outline takes in ambient gas\n", NULL);
    g_assert_true (g_file_set_contents (reviewed, all, -1, NULL));
    g_assert_cmpint (efflux_test_spawn (NULL, argv2, NULL, NULL), ==, 0);
    json2 = check ("pdf", pdf2, NULL);
    g_assert_cmpfloat (efflux_test_json_number (json2, "pages"), ==, 5);
    g_assert_cmpint (g_remove (reviewed), ==, 0);
  }
  efflux_test_remove_tree (dir);
}

static void
expect_status (const char * const *argv,
               int                 expected,
               const char         *dir,
               const char         *what)
{
  g_autofree char *err = NULL;
  int status = efflux_test_spawn (NULL, argv, NULL, &err);

  g_test_message ("%s: exit %d: %s", what, status, err);
  g_assert_cmpint (status, ==, expected);
  g_assert_true (g_str_has_prefix (err, "efflux-cli: error: "));
  /* one line */
  g_assert_cmpint (strchr (err, '\n') - err, ==, (int) strlen (err) - 1);
  /* no output file, no temporary file */
  g_assert_true (g_file_test (dir, G_FILE_TEST_IS_DIR));
  g_assert_cmpuint (efflux_test_count_entries (dir), ==, 0);
}

static void
test_errors (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-figure");
  g_autofree char *out = g_build_filename (dir, "out.png", NULL);
  g_autofree char *out_pdf = g_build_filename (dir, "out.pdf", NULL);
  g_autofree char *gif = g_build_filename (dir, "out.gif", NULL);
  g_autofree char *missing = g_build_filename (dir, "none.efflux", NULL);
  g_autofree char *badd = g_build_filename (demo_dir, "bad.efflux", NULL);
  g_autofree char *text = NULL;
  const char *c = efflux_test_cli ();

  {
    const char *a[] = { c, "figure", demo_dossier, "--view", "nonsense", "-o", out, NULL };
    expect_status (a, 2, dir, "unknown view");
  }
  {
    const char *a[] = { c, "figure", demo_dossier, "-o", out, NULL };
    expect_status (a, 2, dir, "no view");
  }
  {
    const char *a[] = { c, "figure", demo_dossier, "--view", "sky", "-o", gif, NULL };
    expect_status (a, 2, dir, "unknown format");
  }
  {
    const char *a[] = { c, "figure", demo_dossier, "--view", "sky", "-o", out, "--dpi", "0", NULL };
    expect_status (a, 2, dir, "dpi 0");
  }
  {
    const char *a[] = { c, "figure", demo_dossier, "--view", "sky", "-o", out, "--width-mm", "-5", NULL };
    expect_status (a, 2, dir, "negative width");
  }
  {
    /* 2000 mm at 2400 dpi: 188976 pixels, beyond Cairo's 32767 */
    const char *a[] = { c, "figure", demo_dossier, "--view", "sky", "-o", out, "--width-mm", "2000",
                        "--dpi", "2400", NULL };
    expect_status (a, 2, dir, "PNG too large");
  }
  {
    const char *a[] = { c, "figure", demo_dossier, "--view", "channels", "--grid", "0x3", "-o", out, NULL };
    expect_status (a, 2, dir, "grid 0x3");
  }
  {
    const char *a[] = { c, "figure", demo_dossier, "--view", "sky", "-o", out, "--bogus", NULL };
    expect_status (a, 2, dir, "unknown option");
  }
  {
    const char *a[] = { c, "report", demo_dossier, "-o", out, NULL };
    expect_status (a, 2, dir, "report to a PNG");
  }
  {
    const char *a[] = { c, "figure", missing, "--view", "sky", "-o", out, NULL };
    expect_status (a, 1, dir, "missing dossier");
  }
  {
    const char *a[] = { c, "figure", demo_dossier, "--view", "cut", "--cut", "nosuch", "-o", out, NULL };
    expect_status (a, 1, dir, "unknown cut");
  }
  {
    const char *a[] = { c, "figure", demo_dossier, "--view", "spectrum", "--lobe", "nosuch", "-o", out, NULL };
    expect_status (a, 1, dir, "unknown lobe");
  }

  /* A dossier with a bad value is refused, naming the key. */
  g_assert_true (g_file_get_contents (demo_dossier, &text, NULL, NULL));
  {
    g_autoptr (GString) s = g_string_new (text);

    g_assert_cmpuint (g_string_replace (s, "distance-pc=350", "distance-pc=-3", 1), ==, 1);
    g_assert_true (g_file_set_contents (badd, s->str, -1, NULL));
  }
  {
    const char *a[] = { c, "figure", badd, "--view", "sky", "-o", out, NULL };
    expect_status (a, 1, dir, "bad distance");
  }
  {
    const char *a[] = { c, "report", badd, "-o", out_pdf, NULL };
    expect_status (a, 1, dir, "bad distance, report");
  }
  g_assert_cmpint (g_remove (badd), ==, 0);
  efflux_test_remove_tree (dir);
}

int
main (int    argc,
      char **argv)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *recipe = NULL;
  g_autofree char *src_dossier = NULL;
  g_autofree char *text = NULL;
  const char *root;
  int status;

  g_test_init (&argc, &argv, NULL);

  root = g_getenv ("EFFLUX_SOURCE_ROOT");
  g_assert_nonnull (root);
  demo_dir = efflux_test_tmp_dir ("efflux-figure");
  recipe = g_build_filename (root, "sample-data", "demo.recipe", NULL);
  {
    const char *a[] = { efflux_test_cli (), "synth", recipe, "-o", demo_dir, NULL };
    g_autofree char *out = NULL;
    g_autofree char *err = NULL;

    g_assert_cmpint (efflux_test_spawn (NULL, a, &out, &err), ==, 0);
  }
  src_dossier = g_build_filename (root, "sample-data", "demo.efflux", NULL);
  demo_dossier = g_build_filename (demo_dir, "demo.efflux", NULL);
  g_assert_true (g_file_get_contents (src_dossier, &text, NULL, &error));
  g_assert_true (g_file_set_contents (demo_dossier, text, -1, &error));

  g_test_add_func ("/figure/png-size", test_png_size);
  g_test_add_func ("/figure/vector", test_vector);
  g_test_add_func ("/figure/sky-pixels", test_sky_pixels);
  g_test_add_func ("/figure/channels-caption", test_channels_and_caption);
  g_test_add_func ("/figure/shared-cubes", test_shared_cubes);
  g_test_add_func ("/figure/report", test_report);
  g_test_add_func ("/figure/errors", test_errors);
  status = g_test_run ();

  /* Font caches released, for the leak checker of the sanitize setup. */
  efflux_figure_release_fonts ();
  efflux_test_remove_tree (demo_dir);
  g_free (demo_dir);
  g_free (demo_dossier);
  return status;
}
