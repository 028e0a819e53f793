/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (xvfb-run): the Sky view's layers on a synthetic map drawn with the grey colour map (so
 * that blue and red lines stand out from it):
 *   - a colleague's lobes (efflux_sky_view_set_overlay): the view is rendered to a texture and the
 *     pixels along an outline's edge are read back: part of them in the overlay's colour and part
 *     not (a dashed line), none after the overlay is removed; the author shown.
 *   - a context image (a TAN image of other pixel size, written with efflux_fits_write_sky_image):
 *     read and reprojected off the UI thread; the readout at every pixel equals the core's
 *     efflux_reproject_image value there; its own display limits; a missing file's message.
 *   - the peak map: the readout equals the largest channel value of the pixel.
 *   - wing contours of a document's lobes on its cube: the view's sets equal efflux_wing_contours
 *     run here (4 levels: 3, 5, 8, 13 sigma; the same vertices), the legend states them, and a
 *     lobe's new velocity range makes them again (a new sigma for the new channel count).
 * Screenshots go to the build directory. */
#include "config.h"

#include <glib/gstdio.h>
#include <gtk/gtk.h>
#include <math.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-document.h"
#include "efflux-dossier.h"
#include "efflux-fitsout.h"
#include "efflux-reproject.h"
#include "efflux-sky-view.h"
#include "efflux-wings.h"
#include "efflux-ui-test-util.h"

#define NX 40
#define NY 30

typedef struct
{
  int     w, h;
  guint8 *data;   /* cairo ARGB32 as gdk_texture_download gives it: B, G, R, A in memory */
} Pixels;

static Pixels
download (GdkTexture *texture)
{
  Pixels p;

  p.w = gdk_texture_get_width (texture);
  p.h = gdk_texture_get_height (texture);
  p.data = g_malloc ((gsize) p.w * p.h * 4);
  gdk_texture_download (texture, p.data, (gsize) p.w * 4);
  return p;
}

static void
pixel_rgb (const Pixels *p,
           int           x,
           int           y,
           int           rgb[3])
{
  const guint8 *q = p->data + ((gsize) y * p->w + x) * 4;

  rgb[0] = q[2];
  rgb[1] = q[1];
  rgb[2] = q[0];
}

/* Along the segment between widget points a and b (leaving out 12 pixels at each end, near the
 * vertices), the fraction of screen pixels within 1 pixel of the line whose colour matches the
 * test (the closest match of the 3 x 3 neighbourhood counts). */
static double
fraction_along (const Pixels *p,
                double        ax,
                double        ay,
                double        bx,
                double        by,
                gboolean    (*match) (const int rgb[3]))
{
  double len = hypot (bx - ax, by - ay);
  int n = 0, hits = 0;

  for (double s = 12.0; s <= len - 12.0; s += 1.0)
    {
      int x = (int) floor (ax + (bx - ax) * s / len);
      int y = (int) floor (ay + (by - ay) * s / len);
      gboolean hit = FALSE;

      for (int dy = -1; dy <= 1 && !hit; dy++)
        for (int dx = -1; dx <= 1 && !hit; dx++)
          {
            int rgb[3];

            if (x + dx < 0 || y + dy < 0 || x + dx >= p->w || y + dy >= p->h)
              continue;
            pixel_rgb (p, x + dx, y + dy, rgb);
            hit = match (rgb);
          }
      n++;
      hits += hit;
    }
  g_assert_cmpint (n, >, 20);
  return hits / (double) n;
}

/* The overlay's colours (efflux-sky-view.c draw_other_lobes): light blue (0.45, 0.75, 1.0) and
 * light red (1.0, 0.45, 0.4); the grey map has r = g = b. */
static gboolean
is_overlay_blue (const int rgb[3])
{
  return rgb[2] > 200 && rgb[2] - rgb[0] > 80;
}

static gboolean
is_overlay_red (const int rgb[3])
{
  return rgb[0] > 200 && rgb[0] - rgb[2] > 80;
}

/* A dossier with one blue and one red lobe, squares on the pixel grid of cube. */
static EffluxDossier *
colleague_dossier (const EffluxCube *cube,
                   const double      squares[2][4])
{
  g_autoptr(GString) text = g_string_new (NULL);
  g_autoptr(GError) error = NULL;
  EffluxDossier *d;
  const char *kinds[] = { "blue", "red" };

  g_string_append (text, "[Source]\nname=Layers\nra-deg=83.8221\ndec-deg=-5.3911\n"
                   "distance-pc=400\nvsys-kms=0\n\n[Assumptions]\ntex-k=30\nco-abundance=1e-4\n\n"
                   "[Cube co]\npath=co.fits\nline=12CO 2-1\nrole=tracer\n\n");
  for (int k = 0; k < 2; k++)
    {
      const double *s = squares[k];
      double xs[4] = { s[0], s[2], s[2], s[0] }, ys[4] = { s[1], s[1], s[3], s[3] };

      g_string_append_printf (text, "[Lobe %s-colleague]\nkind=%s\ncube=co\npolygon=", kinds[k],
                              kinds[k]);
      for (int i = 0; i < 4; i++)
        {
          double ra, dec;
          char buf[2][G_ASCII_DTOSTR_BUF_SIZE];

          g_assert_true (efflux_cube_pixel_to_icrs (cube, xs[i], ys[i], &ra, &dec));
          g_string_append_printf (text, "%s%s,%s", i ? ";" : "",
                                  g_ascii_dtostr (buf[0], sizeof buf[0], ra),
                                  g_ascii_dtostr (buf[1], sizeof buf[1], dec));
        }
      g_string_append_printf (text, "\nvelocity-kms=%s\nauthor=Dossier Author\n\n",
                              k == 0 ? "-10;-2" : "2;10");
    }
  d = efflux_dossier_new_from_data (text->str, -1, "colleague.efflux", "/nonexistent", &error);
  g_assert_no_error (error);
  return d;
}

static void
test_overlay (void)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (NX, NY, 1, 83.8221, -5.3911, 0.5, 0.0, 1.0,
                                                        230.538e9);
  const double squares[2][4] = { { 4, 4, 16, 14 }, { 22, 12, 35, 25 } };
  float map[NX * NY];
  GtkWidget *window = gtk_window_new ();
  GtkWidget *widget = efflux_sky_view_new ();
  EffluxSkyView *view = EFFLUX_SKY_VIEW (widget);
  EffluxDossier *other;
  double ax, ay, bx, by;

  for (int y = 0; y < NY; y++)
    for (int x = 0; x < NX; x++)
      map[y * NX + x] = 10.0f * y + x;
  gtk_window_set_default_size (GTK_WINDOW (window), 800, 600);
  gtk_window_set_child (GTK_WINDOW (window), widget);
  gtk_window_present (GTK_WINDOW (window));
  efflux_sky_view_set_map (view, cube, map, NX, NY, "K");
  g_object_set (view, "colormap", "grey", "grid", "none", NULL);
  efflux_ui_test_wait_for_frames (window, 2);

  /* the overlay keeps its own copy: the dossier is freed right away */
  other = colleague_dossier (cube, squares);
  efflux_sky_view_set_overlay (view, other, "A. Colleague");
  efflux_dossier_free (other);
  g_assert_cmpstr (efflux_sky_view_get_overlay_author (view), ==, "A. Colleague");
  g_assert_cmpuint (efflux_sky_view_get_n_overlay_lobes (view), ==, 2);
  efflux_ui_test_wait_for_frames (window, 2);
  {
    g_autoptr(GdkTexture) texture = efflux_ui_test_render (widget);
    Pixels p = download (texture);
    double f;

    /* the bottom edge of the blue square, (4, 4) -> (16, 4) in map pixels */
    efflux_sky_view_pixel_to_widget (view, squares[0][0], squares[0][1], &ax, &ay);
    efflux_sky_view_pixel_to_widget (view, squares[0][2], squares[0][1], &bx, &by);
    f = fraction_along (&p, ax, ay, bx, by, is_overlay_blue);
    g_test_message ("blue dashed edge: %.2f of its pixels in the overlay's colour", f);
    /* dashes 7 on, 4 off: about 0.64 (the 3 x 3 neighbourhood widens the dashes a little) */
    g_assert_cmpfloat (f, >, 0.4);
    g_assert_cmpfloat (f, <, 0.95);
    g_assert_cmpfloat (fraction_along (&p, ax, ay, bx, by, is_overlay_red), ==, 0.0);
    /* the left edge of the red square, (22, 12) -> (22, 25) */
    efflux_sky_view_pixel_to_widget (view, squares[1][0], squares[1][1], &ax, &ay);
    efflux_sky_view_pixel_to_widget (view, squares[1][0], squares[1][3], &bx, &by);
    f = fraction_along (&p, ax, ay, bx, by, is_overlay_red);
    g_test_message ("red dashed edge: %.2f of its pixels in the overlay's colour", f);
    g_assert_cmpfloat (f, >, 0.4);
    g_assert_cmpfloat (f, <, 0.95);
    /* inside the blue square, away from its edges and its label: the map's grey */
    {
      double cx, cy;
      int rgb[3];

      efflux_sky_view_pixel_to_widget (view, 10, 8, &cx, &cy);
      pixel_rgb (&p, (int) cx, (int) cy, rgb);
      g_assert_cmpint (abs (rgb[0] - rgb[2]), <=, 2);
    }
    g_free (p.data);
  }
  efflux_ui_test_save_screenshot (window, "screenshot-sky-overlay.png");

  /* without an author argument: the dossier's own */
  other = colleague_dossier (cube, squares);
  efflux_sky_view_set_overlay (view, other, NULL);
  efflux_dossier_free (other);
  g_assert_cmpstr (efflux_sky_view_get_overlay_author (view), ==, "Dossier Author");

  /* removed: nothing of its colour left on the edge */
  efflux_sky_view_set_overlay (view, NULL, NULL);
  g_assert_null (efflux_sky_view_get_overlay_author (view));
  g_assert_cmpuint (efflux_sky_view_get_n_overlay_lobes (view), ==, 0);
  efflux_ui_test_wait_for_frames (window, 2);
  {
    g_autoptr(GdkTexture) texture = efflux_ui_test_render (widget);
    Pixels p = download (texture);

    efflux_sky_view_pixel_to_widget (view, squares[0][0], squares[0][1], &ax, &ay);
    efflux_sky_view_pixel_to_widget (view, squares[0][2], squares[0][1], &bx, &by);
    g_assert_cmpfloat (fraction_along (&p, ax, ay, bx, by, is_overlay_blue), ==, 0.0);
    g_free (p.data);
  }
  gtk_window_destroy (GTK_WINDOW (window));
}

static void
wait_until_idle (EffluxSkyView *view)
{
  gint64 deadline = g_get_monotonic_time () + 60 * G_USEC_PER_SEC;

  while (efflux_sky_view_is_busy (view) && g_get_monotonic_time () < deadline)
    g_main_context_iteration (NULL, TRUE);
  g_assert_false (efflux_sky_view_is_busy (view));
}

static void
test_context_and_peak (void)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (NX, NY, 3, 83.8221, -5.3911, 0.5, 0.0, 1.0,
                                                        230.538e9);
  /* the context image: 0.35" pixels, 20 x 26, centred 2" east of the cube's centre */
  g_autoptr(EffluxCube) like = efflux_cube_new_simple (20, 26, 1, 83.8221 + 2.0 / 3600.0 / cos (-5.3911 * G_PI / 180),
                                                        -5.3911, 0.35, 0.0, 1.0, 230.538e9);
  g_autoptr(EffluxCube) image = NULL;
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-sky-layers-XXXXXX", &error);
  g_autofree char *path = g_build_filename (dir, "context.fits", NULL);
  g_autofree float *want = g_new (float, NX * NY);
  float map[NX * NY], ctx[20 * 26];
  GtkWidget *window = gtk_window_new ();
  GtkWidget *widget = efflux_sky_view_new ();
  EffluxSkyView *view = EFFLUX_SKY_VIEW (widget);
  EffluxSkyReadout r;
  gsize compared = 0;
  double lo, hi;

  g_assert_no_error (error);
  for (int i = 0; i < 20 * 26; i++)
    ctx[i] = 100.0f + (i % 20) * 2.0f + (i / 20) * 0.5f;
  g_assert_true (efflux_fits_write_sky_image (like, ctx, "MJy/sr", NULL, path, &error));
  g_assert_no_error (error);
  for (int y = 0; y < NY; y++)
    for (int x = 0; x < NX; x++)
      {
        float *spec = efflux_cube_spectrum (cube, x, y);

        map[y * NX + x] = 10.0f * y + x;
        spec[0] = x;
        spec[1] = 50.0f - y;
        spec[2] = (x + y) % 7;
      }
  gtk_window_set_default_size (GTK_WINDOW (window), 800, 600);
  gtk_window_set_child (GTK_WINDOW (window), widget);
  gtk_window_present (GTK_WINDOW (window));
  efflux_sky_view_set_map (view, cube, map, NX, NY, "K km/s");
  efflux_ui_test_wait_for_frames (window, 2);

  /* the core's reprojection of the same file */
  image = efflux_image_load (path, 0, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_reproject_image (image, cube, want, NULL, NULL, &error));
  g_assert_no_error (error);

  efflux_sky_view_set_context_file (view, path);
  g_assert_true (efflux_sky_view_is_busy (view));
  wait_until_idle (view);
  g_assert_null (efflux_sky_view_get_context_error (view));
  g_assert_true (efflux_sky_view_has_context (view));
  {
    g_autofree char *shows = NULL;

    g_object_get (view, "shows", &shows, NULL);
    g_assert_cmpstr (shows, ==, "context");
  }
  for (int y = 0; y < NY; y++)
    for (int x = 0; x < NX; x++)
      {
        double wx, wy;

        efflux_sky_view_pixel_to_widget (view, x, y, &wx, &wy);
        efflux_sky_view_point_at (view, wx, wy);
        efflux_sky_view_get_readout_values (view, &r);
        g_assert_true (r.inside);
        if (isnan (want[y * NX + x]))
          g_assert_true (isnan (r.value));
        else
          {
            g_assert_cmpfloat (r.value, ==, want[y * NX + x]);
            compared++;
          }
      }
  g_assert_cmpuint (compared, >, 200);   /* 7" x 9" of the 20" x 15" map */
  {
    double wx, wy;

    /* the image's centre, 2" east (to the left) of the map's: the unit is the image's BUNIT */
    efflux_sky_view_pixel_to_widget (view, (NX - 1) / 2.0 - 4.0, (NY - 1) / 2.0, &wx, &wy);
    efflux_sky_view_point_at (view, wx, wy);
    g_test_message ("readout: %s", efflux_sky_view_get_readout (view));
    g_assert_nonnull (strstr (efflux_sky_view_get_readout (view), "MJy/sr"));
  }
  /* the context image's own limits: min to max of its finite values */
  g_object_set (view, "limits", 100.0, NULL);
  g_assert_true (efflux_sky_view_get_limits (view, &lo, &hi));
  {
    double wlo = G_MAXDOUBLE, whi = -G_MAXDOUBLE;

    for (int i = 0; i < NX * NY; i++)
      if (!isnan (want[i]))
        {
          wlo = MIN (wlo, want[i]);
          whi = MAX (whi, want[i]);
        }
    g_assert_cmpfloat (lo, ==, wlo);
    g_assert_cmpfloat (hi, ==, whi);
  }
  efflux_ui_test_wait_for_frames (window, 2);
  efflux_ui_test_save_screenshot (window, "screenshot-sky-context.png");

  /* back to the integrated map: its own limits (the default 99.5 %) and values */
  g_object_set (view, "shows", "integrated", NULL);
  {
    double limits;

    g_object_get (view, "limits", &limits, NULL);
    g_assert_cmpfloat (limits, ==, 99.5);
  }
  efflux_sky_view_point_at (view, 400, 300);
  efflux_sky_view_get_readout_values (view, &r);
  g_assert_cmpfloat (r.value, ==, 10.0 * r.y + r.x);

  /* the peak over the three channels */
  g_object_set (view, "shows", "peak", NULL);
  wait_until_idle (view);
  for (int y = 0; y < NY; y += 3)
    for (int x = 0; x < NX; x += 3)
      {
        double wx, wy;

        efflux_sky_view_pixel_to_widget (view, x, y, &wx, &wy);
        efflux_sky_view_point_at (view, wx, wy);
        efflux_sky_view_get_readout_values (view, &r);
        g_assert_cmpfloat (r.value, ==, MAX (MAX ((double) x, 50.0 - y), (double) ((x + y) % 7)));
      }

  /* a file that cannot be read: the core's message, naming it */
  efflux_sky_view_set_context_file (view, "/nonexistent/context.fits");
  wait_until_idle (view);
  g_assert_false (efflux_sky_view_has_context (view));
  g_assert_nonnull (efflux_sky_view_get_context_error (view));
  g_assert_true (g_str_has_prefix (efflux_sky_view_get_context_error (view), "/nonexistent/context.fits: "));

  gtk_window_destroy (GTK_WINDOW (window));
  g_remove (path);
  g_rmdir (dir);
}

static void
compare_sets (GPtrArray *got,
              GPtrArray *want)
{
  g_assert_nonnull (got);
  g_assert_cmpuint (got->len, ==, want->len);
  for (guint k = 0; k < want->len; k++)
    {
      EffluxWingSet *a = g_ptr_array_index (got, k), *b = g_ptr_array_index (want, k);

      g_assert_cmpint (a->kind, ==, b->kind);
      g_assert_cmpfloat (a->sigma, ==, b->sigma);
      g_assert_cmpuint (a->n_levels, ==, 4);
      g_assert_cmpuint (a->lines->len, ==, b->lines->len);
      for (guint i = 0; i < b->lines->len; i++)
        {
          EffluxPolyline *la = g_ptr_array_index (a->lines, i), *lb = g_ptr_array_index (b->lines, i);

          g_assert_cmpuint (la->n, ==, lb->n);
          g_assert_cmpmem (la->xy, la->n * 2 * sizeof (double), lb->xy, lb->n * 2 * sizeof (double));
        }
    }
}

static void
test_wings (void)
{
  EffluxCube *cube = efflux_cube_new_simple (NX, NY, 20, 83.8221, -5.3911, 0.5, -9.5, 1.0, 230.538e9);
  const double squares[2][4] = { { 4, 4, 16, 14 }, { 22, 12, 35, 25 } };
  const double multiples[] = { 3, 5, 8, 13 };
  EffluxDossier *d;
  g_autoptr(EffluxDocument) document = NULL;
  g_autoptr(GPtrArray) want = NULL;
  g_autoptr(GError) error = NULL;
  GHashTable *cubes = g_hash_table_new_full (g_str_hash, g_str_equal, g_free,
                                             (GDestroyNotify) efflux_cube_free);
  float map[NX * NY] = { 0 };
  GtkWidget *window = gtk_window_new ();
  GtkWidget *widget = efflux_sky_view_new ();
  EffluxSkyView *view = EFFLUX_SKY_VIEW (widget);
  double sigma_before;

  /* a blob in the blue channels (-9.5 ... -2.5 km/s) at (10, 9), one in the red (2.5 ... 9.5)
   * at (28, 18); the channel noise 0.1 K from the dossier (rms-k) */
  for (gsize y = 0; y < NY; y++)
    for (gsize x = 0; x < NX; x++)
      {
        float *spec = efflux_cube_spectrum (cube, x, y);

        for (gsize k = 0; k < 20; k++)
          {
            double v = cube->velocity[k];

            if (v < -2.0)
              spec[k] = 1.5 * exp (-((x - 10.0) * (x - 10.0) + (y - 9.0) * (y - 9.0)) / 18.0);
            else if (v > 2.0)
              spec[k] = 1.5 * exp (-((x - 28.0) * (x - 28.0) + (y - 18.0) * (y - 18.0)) / 18.0);
          }
      }
  d = colleague_dossier (cube, squares);
  g_assert_true (g_key_file_has_group (d->keyfile, "Cube co"));
  g_key_file_set_string (d->keyfile, "Cube co", "rms-k", "0.1");
  {
    gsize length;
    g_autofree char *text = efflux_dossier_to_data (d, &length);

    efflux_dossier_free (d);
    d = efflux_dossier_new_from_data (text, (gssize) length, "wings.efflux", "/nonexistent", &error);
    g_assert_no_error (error);
  }
  want = efflux_wing_contours (d, "co", cube, NULL, multiples, 4, NULL, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (want->len, ==, 2);
  document = efflux_document_new_for_dossier (d);
  g_hash_table_insert (cubes, g_strdup ("co"), cube);
  g_assert_true (efflux_document_set_cubes (document, cubes));

  gtk_window_set_default_size (GTK_WINDOW (window), 800, 600);
  gtk_window_set_child (GTK_WINDOW (window), widget);
  gtk_window_present (GTK_WINDOW (window));
  efflux_sky_view_set_map (view, cube, map, NX, NY, "K km/s");
  efflux_sky_view_set_document (view, document);
  g_object_set (view, "wing-tracer", "co", "grid", "none", NULL);
  wait_until_idle (view);
  compare_sets (efflux_sky_view_get_wing_sets (view), want);
  g_test_message ("legend: %s", efflux_sky_view_get_wing_legend (view));
  g_assert_nonnull (strstr (efflux_sky_view_get_wing_legend (view), "3, 5, 8, 13 σ"));
  g_assert_nonnull (strstr (efflux_sky_view_get_wing_legend (view), "blue-colleague"));
  efflux_ui_test_wait_for_frames (window, 2);
  efflux_ui_test_save_screenshot (window, "screenshot-sky-wings.png");
  /* drawn: the blue contour's colour (0.35, 0.65, 1.0) somewhere on the first level's line */
  {
    g_autoptr(GdkTexture) texture = efflux_ui_test_render (widget);
    Pixels p = download (texture);
    const EffluxPolyline *line = g_ptr_array_index (((EffluxWingSet *) g_ptr_array_index (want, 0))->lines, 0);
    int hits = 0;

    for (gsize j = 0; j < line->n; j++)
      {
        double wx, wy;
        int rgb[3];

        efflux_sky_view_pixel_to_widget (view, line->xy[2 * j], line->xy[2 * j + 1], &wx, &wy);
        pixel_rgb (&p, (int) wx, (int) wy, rgb);
        hits += rgb[2] > 200 && rgb[2] - rgb[0] > 100;
      }
    g_assert_cmpint (hits, >, (int) line->n / 2);
    g_free (p.data);
  }

  /* a new range for the blue lobe: 4 channels instead of 8, so sigma = 0.1 sqrt(4) K km/s */
  sigma_before = ((EffluxWingSet *) g_ptr_array_index (efflux_sky_view_get_wing_sets (view), 0))->sigma;
  g_assert_cmpfloat (fabs (sigma_before - 0.1 * sqrt (8.0)), <, 1e-12);
  g_assert_true (efflux_document_set_lobe_velocity (document, "blue-colleague", -6.0, -2.0, 0, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_sky_view_is_busy (view));
  wait_until_idle (view);
  g_assert_cmpfloat (fabs (((EffluxWingSet *) g_ptr_array_index (efflux_sky_view_get_wing_sets (view), 0))->sigma
                           - 0.1 * sqrt (4.0)), <, 1e-12);
  g_clear_pointer (&want, g_ptr_array_unref);
  want = efflux_wing_contours (efflux_document_get_dossier (document), "co", cube, NULL, multiples, 4,
                               NULL, NULL, &error);
  compare_sets (efflux_sky_view_get_wing_sets (view), want);

  /* the menu of tracers and the actions a window's menus use */
  {
    g_autoptr(GMenu) menu = g_menu_new ();
    GActionGroup *actions = efflux_sky_view_get_layer_actions (view);
    g_autofree char *label = NULL;
    g_autofree char *shows = NULL;

    efflux_sky_view_bind_wing_menu (view, menu);
    g_assert_cmpint (g_menu_model_get_n_items (G_MENU_MODEL (menu)), ==, 2);   /* None, co */
    g_assert_true (g_menu_model_get_item_attribute (G_MENU_MODEL (menu), 1, "label", "s", &label));
    g_assert_cmpstr (label, ==, "co (12CO 2-1)");
    g_assert_true (g_action_group_has_action (actions, "context-image"));
    g_action_group_activate_action (actions, "shows", g_variant_new_string ("peak"));
    g_object_get (view, "shows", &shows, NULL);
    g_assert_cmpstr (shows, ==, "peak");
    wait_until_idle (view);
    efflux_sky_view_bind_wing_menu (view, NULL);
  }

  /* none */
  g_object_set (view, "wing-tracer", "", NULL);
  g_assert_null (efflux_sky_view_get_wing_sets (view));
  g_assert_cmpstr (efflux_sky_view_get_wing_legend (view), ==, "");
  efflux_sky_view_set_document (view, NULL);
  gtk_window_destroy (GTK_WINDOW (window));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/sky-layers/overlay", test_overlay);
  g_test_add_func ("/ui/sky-layers/context-and-peak", test_context_and_peak);
  g_test_add_func ("/ui/sky-layers/wings", test_wings);
  return g_test_run ();
}
