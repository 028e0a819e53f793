/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (xvfb-run): the Sky view on its own, with a synthetic map whose every value is known
 * (value = 1000 y + x on a cube from efflux_cube_new_simple): widget <-> pixel transforms, the
 * readout's pixel, value, position (efflux_cube_pixel_to_icrs) and offset from the source
 * (efflux_skygrid_offsets_from_icrs), blank pixels, zoom steps and limits, and drawing with a beam,
 * a scale bar and a grid without a critical. */
#include "config.h"

#include <gtk/gtk.h>
#include <math.h>
#include <string.h>

#include "efflux-cube.h"
#include "efflux-skygrid.h"
#include "efflux-sky-view.h"
#include "efflux-ui-test-util.h"

#define NX 40
#define NY 30

static void
notify_count (GObject    *object,
              GParamSpec *pspec,
              gpointer    user_data)
{
  (*(int *) user_data)++;
}

static void
test_sky_view (void)
{
  g_autoptr(EffluxCube) cube = efflux_cube_new_simple (NX, NY, 1, 83.8221, -5.3911, 0.5, 0.0, 1.0,
                                                        230.538e9);
  float map[NX * NY];
  GtkWidget *window = gtk_window_new ();
  GtkWidget *widget = efflux_sky_view_new ();
  EffluxSkyView *view = EFFLUX_SKY_VIEW (widget);
  EffluxSkyReadout r;
  int has_map_notes = 0;
  double z0, wx, wy, px, py, lo, hi, sra, sdec;

  g_assert_nonnull (cube);
  cube->has_beam = TRUE;
  cube->bmaj_arcsec = 3.0;
  cube->bmin_arcsec = 1.5;
  cube->bpa_deg = 30.0;
  for (int y = 0; y < NY; y++)
    for (int x = 0; x < NX; x++)
      map[y * NX + x] = 1000.0f * y + x;
  map[7 * NX + 5] = NAN;

  gtk_window_set_default_size (GTK_WINDOW (window), 800, 600);
  gtk_window_set_child (GTK_WINDOW (window), widget);
  gtk_window_present (GTK_WINDOW (window));
  g_signal_connect (view, "notify::has-map", G_CALLBACK (notify_count), &has_map_notes);

  g_assert_false (efflux_sky_view_has_map (view));
  efflux_sky_view_set_map (view, cube, map, NX, NY, "K");
  g_assert_true (efflux_sky_view_has_map (view));
  g_assert_cmpint (has_map_notes, ==, 1);
  /* the source 4" east and 3" north of the map centre, at 400 pc */
  efflux_skygrid_icrs_from_offsets (83.8221, -5.3911, 4.0, 3.0, &sra, &sdec);
  efflux_sky_view_set_source (view, sra, sdec, 400.0);
  efflux_ui_test_wait_for_frames (window, 3);

  /* fitted: 800 / 40 = 20, 600 / 30 = 20 */
  z0 = efflux_sky_view_get_zoom (view);
  g_assert_cmpfloat_with_epsilon (z0, MIN (gtk_widget_get_width (widget) / (double) NX,
                                           gtk_widget_get_height (widget) / (double) NY), 1e-12);

  /* transforms: round trip, y up (a larger pixel y is higher on screen) */
  efflux_sky_view_pixel_to_widget (view, 3.0, 4.0, &wx, &wy);
  efflux_sky_view_widget_to_pixel (view, wx, wy, &px, &py);
  g_assert_cmpfloat_with_epsilon (px, 3.0, 1e-9);
  g_assert_cmpfloat_with_epsilon (py, 4.0, 1e-9);
  {
    double wx2, wy2;

    efflux_sky_view_pixel_to_widget (view, 3.0, 5.0, &wx2, &wy2);
    g_assert_cmpfloat (wy2, <, wy);
    g_assert_cmpfloat_with_epsilon (wy - wy2, z0, 1e-9);
  }

  /* the readout at every pixel centre and near pixel edges gives that pixel's value */
  for (int y = 0; y < NY; y += 3)
    for (int x = 0; x < NX; x += 3)
      {
        double ra, dec, e, n;

        efflux_sky_view_pixel_to_widget (view, x + 0.45, y - 0.45, &wx, &wy);
        efflux_sky_view_point_at (view, wx, wy);
        efflux_sky_view_get_readout_values (view, &r);
        g_assert_true (r.inside);
        g_assert_cmpint (r.x, ==, x);
        g_assert_cmpint (r.y, ==, y);
        g_assert_cmpfloat (r.value, ==, 1000.0 * y + x);
        if (x == 6 && y == 9)
          g_assert_nonnull (strstr (efflux_sky_view_get_readout (view), "FITS pixel 7, 10"));
        g_assert_true (efflux_cube_pixel_to_icrs (cube, x, y, &ra, &dec));
        g_assert_cmpfloat (r.ra_deg, ==, ra);
        g_assert_cmpfloat (r.dec_deg, ==, dec);
        g_assert_true (r.has_offset);
        g_assert_true (efflux_skygrid_offsets_from_icrs (sra, sdec, ra, dec, &e, &n));
        g_assert_cmpfloat (r.east_arcsec, ==, e);
        g_assert_cmpfloat (r.north_arcsec, ==, n);
      }
  /* the offset of the map centre pixel from the source: about 4" west and 3" south */
  efflux_sky_view_pixel_to_widget (view, (NX + 1) / 2.0 - 1.0, (NY + 1) / 2.0 - 1.0, &wx, &wy);
  efflux_sky_view_point_at (view, wx, wy);
  efflux_sky_view_get_readout_values (view, &r);
  g_assert_cmpfloat (fabs (r.east_arcsec + 4.0), <, 0.3);
  g_assert_cmpfloat (fabs (r.north_arcsec + 3.0), <, 0.3);

  /* a blank pixel */
  efflux_sky_view_pixel_to_widget (view, 5.0, 7.0, &wx, &wy);
  efflux_sky_view_point_at (view, wx, wy);
  efflux_sky_view_get_readout_values (view, &r);
  g_assert_true (r.inside);
  g_assert_true (isnan (r.value));
  g_assert_nonnull (strstr (efflux_sky_view_get_readout (view), "blank"));

  /* outside the map: nothing */
  efflux_sky_view_pixel_to_widget (view, -3.0, 7.0, &wx, &wy);
  efflux_sky_view_point_at (view, wx, wy);
  efflux_sky_view_get_readout_values (view, &r);
  g_assert_false (r.inside);

  /* display limits at 100 %: the extremes of the finite values */
  g_object_set (view, "limits", 100.0, NULL);
  g_assert_true (efflux_sky_view_get_limits (view, &lo, &hi));
  g_assert_cmpfloat (lo, ==, 0.0);
  g_assert_cmpfloat (hi, ==, 1000.0 * (NY - 1) + NX - 1);

  /* zoom in keeps the centre pixel under the centre; zoom has an upper limit of 64 */
  efflux_sky_view_widget_to_pixel (view, gtk_widget_get_width (widget) / 2.0,
                                   gtk_widget_get_height (widget) / 2.0, &px, &py);
  efflux_sky_view_zoom_in (view);
  g_assert_cmpfloat_with_epsilon (efflux_sky_view_get_zoom (view), z0 * G_SQRT2, 1e-9);
  {
    double px2, py2;

    efflux_sky_view_widget_to_pixel (view, gtk_widget_get_width (widget) / 2.0,
                                     gtk_widget_get_height (widget) / 2.0, &px2, &py2);
    g_assert_cmpfloat_with_epsilon (px2, px, 1e-9);
    g_assert_cmpfloat_with_epsilon (py2, py, 1e-9);
  }
  for (int i = 0; i < 20; i++)
    efflux_sky_view_zoom_in (view);
  g_assert_cmpfloat (efflux_sky_view_get_zoom (view), ==, 64.0);
  efflux_sky_view_zoom_out (view);
  g_assert_cmpfloat_with_epsilon (efflux_sky_view_get_zoom (view), 64.0 / G_SQRT2, 1e-9);
  /* the sky.* actions of the view itself */
  g_assert_true (gtk_widget_activate_action (widget, "sky.zoom-fit", NULL));
  g_assert_cmpfloat_with_epsilon (efflux_sky_view_get_zoom (view), z0, 1e-12);
  efflux_sky_view_zoom_in (view);
  efflux_sky_view_zoom_in (view);

  /* every colour map, stretch and grid draws */
  g_object_set (view, "colormap", "velocity", "stretch", "log", "grid", "offsets", NULL);
  efflux_ui_test_wait_for_frames (window, 2);
  g_object_set (view, "colormap", "grey", "stretch", "sqrt", "grid", "none", NULL);
  efflux_ui_test_wait_for_frames (window, 2);
  g_object_set (view, "colormap", "cubehelix", "stretch", "asinh", "grid", "sexagesimal", NULL);
  efflux_ui_test_wait_for_frames (window, 2);
  efflux_ui_test_save_screenshot (window, "screenshot-sky-view.png");

  efflux_sky_view_clear (view);
  g_assert_false (efflux_sky_view_has_map (view));
  g_assert_cmpint (has_map_notes, ==, 2);
  g_assert_cmpstr (efflux_sky_view_get_readout (view), ==, "");
  efflux_ui_test_wait_for_frames (window, 1);
  gtk_window_destroy (GTK_WINDOW (window));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/sky-view/synthetic", test_sky_view);
  return g_test_run ();
}
