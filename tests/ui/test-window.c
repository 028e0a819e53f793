/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (run under xvfb-run): the window opens the demo dossier, names the source in its
 * title, reads the dossier's first tracer cube off the UI thread, and shows its moment-0 map over
 * the first lobe's velocity range in the Sky view. The view zooms through the window's actions,
 * and its readout under a pointer gives the core's own map value and the WCS position of the
 * pixel (efflux_moment_map and efflux_cube_pixel_to_icrs, computed here independently). */
#include "config.h"

#include <gtk/gtk.h>
#include <math.h>
#include <string.h>
#include <glib/gstdio.h>

#include "efflux-application.h"
#include "efflux-dossier.h"
#include "efflux-maps.h"
#include "efflux-skygrid.h"
#include "efflux-sky-view.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"

/* Run the main loop until the widget has been laid out and drawn a few frames, and is mapped. */
static void
wait_for_frames_mapped (GtkWidget *widget,
                        int        n)
{
  efflux_ui_test_wait_for_frames (widget, n);
  g_assert_true (gtk_widget_get_mapped (widget));
}

static void
test_demo_opens (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(GFile) file = NULL;
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxDossier) dossier = NULL;
  g_autoptr(EffluxCube) cube = NULL;
  g_autofree float *map = NULL;
  EffluxDossierCube *tracer = NULL;
  EffluxDossierLobe *lobe = NULL;
  EffluxWindow *window;
  EffluxSkyView *view;
  EffluxSkyReadout readout;
  const char *status;
  double z0, sx, sy, wx, wy, ra, dec, lo, hi;
  gssize px, py;
  g_autofree char *colormap = NULL;

  g_assert_nonnull (demo);
  file = g_file_new_for_path (demo);

  window = efflux_ui_test_open_window (file, 1366, 740);
  efflux_ui_test_wait_until_loaded (window);

  /* the title names the demo dossier's [Source] name and the program */
  g_assert_cmpstr (gtk_window_get_title (GTK_WINDOW (window)), ==, "Demo source A - Efflux");
  /* the cube was read: the status line describes its grid, not an error */
  status = efflux_window_get_status (window);
  g_test_message ("status: %s", status);
  g_assert_nonnull (strstr (status, "channels"));

  /* the same dossier and cube, read here: the first tracer cube and its first lobe */
  dossier = efflux_dossier_load (demo, &error);
  g_assert_no_error (error);
  for (guint i = 0; i < dossier->cubes->len && tracer == NULL; i++)
    if (((EffluxDossierCube *) g_ptr_array_index (dossier->cubes, i))->role == EFFLUX_CUBE_ROLE_TRACER)
      tracer = g_ptr_array_index (dossier->cubes, i);
  g_assert_nonnull (tracer);
  for (guint i = 0; i < dossier->lobes->len && lobe == NULL; i++)
    if (g_strcmp0 (((EffluxDossierLobe *) g_ptr_array_index (dossier->lobes, i))->cube_id, tracer->id) == 0)
      lobe = g_ptr_array_index (dossier->lobes, i);
  g_assert_nonnull (lobe);
  cube = efflux_cube_load (tracer->abs_path, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  map = g_new (float, cube->nx * cube->ny);
  g_assert_true (efflux_moment_map (cube, EFFLUX_MOMENT_0, lobe->v1_kms, lobe->v2_kms, 0.0, map, &error));
  g_assert_no_error (error);

  /* the dossier is listed once among the window's sources */
  g_assert_cmpuint (efflux_window_get_n_sources (window), ==, 1);

  view = efflux_window_get_sky_view (window);
  g_assert_true (efflux_sky_view_has_map (view));
  g_assert_nonnull (efflux_window_get_cube (window));
  g_assert_cmpuint (efflux_window_get_cube (window)->nx, ==, cube->nx);
  g_assert_cmpuint (efflux_window_get_cube (window)->ny, ==, cube->ny);
  /* display limits at the default 99.5 %: inside the map's range, ordered */
  g_assert_true (efflux_sky_view_get_limits (view, &lo, &hi));
  g_assert_cmpfloat (lo, <, hi);

  wait_for_frames_mapped (GTK_WIDGET (window), 3);

  /* fitted: the whole map fills the view along its tighter direction */
  z0 = efflux_sky_view_get_zoom (view);
  g_assert_cmpfloat_with_epsilon (z0, MIN (gtk_widget_get_width (GTK_WIDGET (view)) / (double) cube->nx,
                                           gtk_widget_get_height (GTK_WIDGET (view)) / (double) cube->ny),
                                  1e-9);

  /* zoom in through the window's action: one step of sqrt(2) about the centre */
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "win.zoom-in", NULL));
  g_assert_cmpfloat_with_epsilon (efflux_sky_view_get_zoom (view), z0 * G_SQRT2, 1e-9);
  wait_for_frames_mapped (GTK_WIDGET (window), 2);

  /* the readout at a pixel a few pixels east and north of the source */
  g_assert_true (efflux_cube_icrs_to_pixel (cube, dossier->ra_deg, dossier->dec_deg, &sx, &sy));
  px = (gssize) floor (sx + 0.5) - 3;
  py = (gssize) floor (sy + 0.5) + 2;
  g_assert_cmpint (px, >=, 0);
  g_assert_cmpint (py, <, (gssize) cube->ny);
  efflux_sky_view_pixel_to_widget (view, (double) px + 0.2, (double) py - 0.3, &wx, &wy);
  g_assert_cmpfloat (wx, >, 0);
  g_assert_cmpfloat (wy, >, 0);
  g_assert_cmpfloat (wx, <, gtk_widget_get_width (GTK_WIDGET (view)));
  g_assert_cmpfloat (wy, <, gtk_widget_get_height (GTK_WIDGET (view)));
  efflux_sky_view_point_at (view, wx, wy);
  efflux_sky_view_get_readout_values (view, &readout);
  g_assert_true (readout.inside);
  g_assert_cmpint (readout.x, ==, px);
  g_assert_cmpint (readout.y, ==, py);
  /* the core's moment-0 value of that pixel, exactly */
  g_assert_false (isnan (map[py * cube->nx + px]));
  g_assert_cmpfloat (readout.value, ==, map[py * cube->nx + px]);
  /* the WCS position of the pixel centre */
  g_assert_true (efflux_cube_pixel_to_icrs (cube, (double) px, (double) py, &ra, &dec));
  g_assert_true (readout.has_position);
  g_assert_cmpfloat (fabs (readout.ra_deg - ra), <, 1e-12);
  g_assert_cmpfloat (fabs (readout.dec_deg - dec), <, 1e-12);
  /* offsets from the source: 3 pixels east is positive east, 2 pixels north positive north */
  g_assert_true (readout.has_offset);
  g_assert_cmpfloat (readout.east_arcsec, >, 0.0);
  g_assert_cmpfloat (readout.north_arcsec, >, 0.0);
  {
    g_autofree char *ra_text = efflux_skygrid_format_ra (ra, 0.001);
    g_autofree char *dec_text = efflux_skygrid_format_dec (dec, 0.01);
    g_autofree char *value_text = g_strdup_printf ("%.5g K km/s", map[py * cube->nx + px]);
    const char *text = efflux_sky_view_get_readout (view);

    g_test_message ("readout: %s", text);
    g_assert_nonnull (strstr (text, ra_text));
    g_assert_nonnull (strstr (text, dec_text));
    g_assert_nonnull (strstr (text, value_text));
  }

  /* display choices through the window's view.* actions */
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "view.colormap", "s", "grey"));
  g_object_get (view, "colormap", &colormap, NULL);
  g_assert_cmpstr (colormap, ==, "grey");
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "view.colormap", "s", "cubehelix"));
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "view.stretch", "s", "asinh"));
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "view.limits", "d", 100.0));
  g_assert_true (efflux_sky_view_get_limits (view, &lo, &hi));
  /* 100 %: the limits are the map's own extremes */
  {
    float mn = INFINITY, mx = -INFINITY;

    for (gsize i = 0; i < cube->nx * cube->ny; i++)
      if (isfinite (map[i]))
        {
          mn = MIN (mn, map[i]);
          mx = MAX (mx, map[i]);
        }
    g_assert_cmpfloat (lo, ==, mn);
    g_assert_cmpfloat (hi, ==, mx);
  }

  wait_for_frames_mapped (GTK_WIDGET (window), 2);
  efflux_ui_test_save_screenshot (GTK_WIDGET (window), "screenshot-window.png");

  /* fit again */
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "win.zoom-fit", NULL));
  g_assert_cmpfloat_with_epsilon (efflux_sky_view_get_zoom (view), z0, 1e-9);

  /* offsets grid and the velocity colour map, drawn without a critical */
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "view.grid", "s", "offsets"));
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "view.colormap", "s", "velocity"));
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "view.stretch", "s", "linear"));
  wait_for_frames_mapped (GTK_WIDGET (window), 2);
  efflux_ui_test_save_screenshot (GTK_WIDGET (window), "screenshot-window-offsets.png");

  /* opening the same dossier again reuses its row */
  efflux_window_open (window, file);
  efflux_ui_test_wait_until_loaded (window);
  g_assert_cmpuint (efflux_window_get_n_sources (window), ==, 1);

  gtk_window_destroy (GTK_WINDOW (window));
}

/* A bare FITS cube: no dossier, so no source; the map is moment 0 over every channel. */
static void
test_cube_opens (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autofree char *dir = NULL;
  g_autofree char *path = NULL;
  g_autoptr(GFile) file = NULL;
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxCube) cube = NULL;
  g_autofree float *map = NULL;
  EffluxWindow *window;
  EffluxSkyView *view;
  EffluxSkyReadout readout;
  double wx, wy;

  g_assert_nonnull (demo);
  dir = g_path_get_dirname (demo);
  path = g_build_filename (dir, "demo-sio54.fits", NULL);
  file = g_file_new_for_path (path);
  cube = efflux_cube_load (path, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  map = g_new (float, cube->nx * cube->ny);
  g_assert_true (efflux_moment_map (cube, EFFLUX_MOMENT_0, cube->velocity[0],
                                    cube->velocity[cube->nchan - 1], 0.0, map, &error));

  window = efflux_ui_test_open_window (file, 0, 0);
  efflux_ui_test_wait_until_loaded (window);
  g_assert_nonnull (strstr (efflux_window_get_status (window), "channels"));
  view = efflux_window_get_sky_view (window);
  g_assert_true (efflux_sky_view_has_map (view));
  wait_for_frames_mapped (GTK_WIDGET (window), 2);

  /* the centre pixel's value is the whole-cube moment 0; no source, so no offsets */
  efflux_sky_view_pixel_to_widget (view, (double) (cube->nx / 2), (double) (cube->ny / 2), &wx, &wy);
  efflux_sky_view_point_at (view, wx, wy);
  efflux_sky_view_get_readout_values (view, &readout);
  g_assert_true (readout.inside);
  g_assert_cmpint (readout.x, ==, (gssize) (cube->nx / 2));
  g_assert_cmpfloat (readout.value, ==, map[(cube->ny / 2) * cube->nx + cube->nx / 2]);
  g_assert_false (readout.has_offset);
  /* the pointer leaves: the readout empties */
  efflux_sky_view_point_at (view, NAN, NAN);
  g_assert_cmpstr (efflux_sky_view_get_readout (view), ==, "");

  gtk_window_destroy (GTK_WINDOW (window));
}

/* A file that is not a cube: one line naming it in the status, no map, no critical. */
static void
test_bad_file (void)
{
  g_autofree char *dir = g_dir_make_tmp ("efflux-ui-XXXXXX", NULL);
  g_autofree char *path = g_build_filename (dir, "broken.fits", NULL);
  g_autoptr(GFile) file = NULL;
  EffluxWindow *window;

  g_assert_true (g_file_set_contents (path, "SIMPLE  = nonsense", -1, NULL));
  file = g_file_new_for_path (path);
  window = efflux_ui_test_open_window (file, 0, 0);
  efflux_ui_test_wait_until_loaded (window);
  g_test_message ("status: %s", efflux_window_get_status (window));
  g_assert_nonnull (strstr (efflux_window_get_status (window), "broken.fits"));
  g_assert_false (efflux_sky_view_has_map (efflux_window_get_sky_view (window)));
  gtk_window_destroy (GTK_WINDOW (window));
  g_assert_cmpint (g_remove (path), ==, 0);
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

/* Files dropped on the window: a dossier among them is opened (the drop target's "drop" signal,
 * emitted as a drag and drop would, with a GdkFileList of a cube and the demo dossier). */
static void
test_drop (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autofree char *dir = NULL;
  g_autoptr(GListModel) controllers = NULL;
  GtkDropTarget *target = NULL;
  GFile *files[2];
  GValue value = G_VALUE_INIT;
  gboolean accepted = FALSE;
  EffluxWindow *window;

  g_assert_nonnull (demo);
  dir = g_path_get_dirname (demo);
  files[0] = g_file_new_build_filename (dir, "demo-sio54.fits", NULL);
  files[1] = g_file_new_for_path (demo);

  window = efflux_window_new (NULL);
  gtk_window_present (GTK_WINDOW (window));
  controllers = gtk_widget_observe_controllers (GTK_WIDGET (window));
  for (guint i = 0; i < g_list_model_get_n_items (controllers) && target == NULL; i++)
    {
      g_autoptr(GObject) c = g_list_model_get_item (controllers, i);

      if (GTK_IS_DROP_TARGET (c))
        target = GTK_DROP_TARGET (c);
    }
  g_assert_nonnull (target);

  g_value_init (&value, GDK_TYPE_FILE_LIST);
  g_value_take_boxed (&value, gdk_file_list_new_from_array (files, 2));
  g_signal_emit_by_name (target, "drop", &value, 10.0, 10.0, &accepted);
  g_value_unset (&value);
  g_assert_true (accepted);
  efflux_ui_test_wait_until_loaded (window);
  g_assert_cmpstr (gtk_window_get_title (GTK_WINDOW (window)), ==, "Demo source A - Efflux");
  g_assert_true (efflux_sky_view_has_map (efflux_window_get_sky_view (window)));
  g_assert_cmpuint (efflux_window_get_n_sources (window), ==, 1);

  g_object_unref (files[0]);
  g_object_unref (files[1]);
  gtk_window_destroy (GTK_WINDOW (window));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/window/demo-opens", test_demo_opens);
  g_test_add_func ("/ui/window/cube-opens", test_cube_opens);
  g_test_add_func ("/ui/window/bad-file", test_bad_file);
  g_test_add_func ("/ui/window/drop", test_drop);
  return g_test_run ();
}
