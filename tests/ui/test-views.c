/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (xvfb-run): the Cut view, the Spectrum view and the Ledger on their own.
 * - plot helpers: nice ticks and numbers rounded to their uncertainty (common practice);
 * - Spectrum view: the spectra it shows are the core's (efflux_spectrum_at_pixel,
 *   efflux_spectrum_over_lobe); dragging a range edge (events synthesized on its drag gesture)
 *   emits range-changed with the velocity under the pointer;
 * - Cut view: the PV set and contours it shows are the core's (efflux_pv_set_new,
 *   efflux_contour_trace_levels at multiples of efflux_kinematics_pv_sigma), also for a cut made in
 *   its GTask thread; the source's offset; a range edge drag; the Hubble slope drag gives the age
 *   of efflux-kinematics, and REFERENCES.md 4.9's check value (100 km/s/pc at i = 1 rad:
 *   6278.33 yr) when dragged to that slope;
 * - Ledger: the demo dossier measured by the core (efflux_measure_dossier): the rows, the cells'
 *   text on screen, updates in place (same row objects, no items-changed), the CSV copy.
 * Screenshots of each view go to the build directory; G_DEBUG=fatal-criticals makes any critical
 * fail the test. */
#include "config.h"

#include <gtk/gtk.h>
#include <math.h>
#include <string.h>

#include "efflux-application.h"
#include "efflux-contour.h"
#include "efflux-cube.h"
#include "efflux-cut-view.h"
#include "efflux-dossier.h"
#include "efflux-kinematics.h"
#include "efflux-ledger.h"
#include "efflux-ledger-cell.h"
#include "efflux-lobe.h"
#include "efflux-maps.h"
#include "efflux-measure.h"
#include "efflux-plot.h"
#include "efflux-pv.h"
#include "efflux-spectrum-view.h"
#include "efflux-ui-test-util.h"

#define NX 20
#define NY 16
#define NCH 40
#define PIX 0.5

/* ---- helpers ---- */

static GtkWidget *
show_in_window (GtkWidget *child,
                int        width,
                int        height)
{
  GtkWidget *window = gtk_window_new ();

  gtk_window_set_default_size (GTK_WINDOW (window), width, height);
  gtk_window_set_child (GTK_WINDOW (window), child);
  gtk_window_present (GTK_WINDOW (window));
  efflux_ui_test_wait_for_frames (window, 2);
  return window;
}

static GtkGesture *
drag_gesture (GtkWidget *widget)
{
  g_autoptr(GListModel) controllers = gtk_widget_observe_controllers (widget);

  for (guint i = 0; i < g_list_model_get_n_items (controllers); i++)
    {
      g_autoptr(GObject) c = g_list_model_get_item (controllers, i);

      if (GTK_IS_GESTURE_DRAG (c))
        return GTK_GESTURE (c);
    }
  g_assert_not_reached ();
  return NULL;
}

/* A drag from (x0, y0) to (x1, y1) through the gesture's own signals, as GTK emits them. */
static void
synth_drag (GtkWidget *widget,
            double     x0,
            double     y0,
            double     x1,
            double     y1)
{
  GtkGesture *gesture = drag_gesture (widget);

  g_signal_emit_by_name (gesture, "drag-begin", x0, y0);
  g_signal_emit_by_name (gesture, "drag-update", (x1 - x0) / 2.0, (y1 - y0) / 2.0);
  g_signal_emit_by_name (gesture, "drag-update", x1 - x0, y1 - y0);
  g_signal_emit_by_name (gesture, "drag-end", x1 - x0, y1 - y0);
}

typedef struct
{
  int      count;
  int      finals;
  char    *lobe;
  double   v1, v2;
  gboolean is_final;
} RangeLog;

static void
range_changed_cb (GtkWidget  *widget,
                  const char *lobe,
                  double      v1,
                  double      v2,
                  gboolean    is_final,
                  RangeLog   *log)
{
  log->count++;
  log->finals += is_final ? 1 : 0;
  g_free (log->lobe);
  log->lobe = g_strdup (lobe);
  log->v1 = v1;
  log->v2 = v2;
  log->is_final = is_final;
}

/* A cube with a Gaussian line whose centre shifts with x (a velocity gradient), rms set. */
static EffluxCube *
make_cube (gsize  nx,
           gsize  ny,
           gsize  nch,
           double amplitude,
           double rms)
{
  EffluxCube *cube = efflux_cube_new_simple (nx, ny, nch, 83.8221, -5.3911, PIX, -20.0, 1.0,
                                             230.538e9);

  g_assert_nonnull (cube);
  for (gsize y = 0; y < ny; y++)
    for (gsize x = 0; x < nx; x++)
      for (gsize k = 0; k < nch; k++)
        {
          double v = cube->velocity[k];
          double centre = (x - (nx - 1) / 2.0) * 0.8;
          double r2 = (y - (ny - 1) / 2.0) * (y - (ny - 1) / 2.0);

          cube->data[(y * nx + x) * nch + k] =
            (float) (amplitude * exp (-0.5 * (v - centre) * (v - centre) / 4.0 - r2 / 20.0));
        }
  for (gsize k = 0; k < nch; k++)
    cube->rms[k] = (float) rms;
  return cube;
}

/* ---- plot helpers ---- */

static void
test_plot (void)
{
  g_autoptr(EffluxTicks) t = efflux_ticks_new (0.0, 10.0, 6);
  g_autoptr(EffluxTicks) u = efflux_ticks_new (-0.37, 0.81, 8);
  g_autofree char *a = NULL, *b = NULL, *c = NULL, *d = NULL, *e = NULL, *f = NULL;

  /* 1-2-5 steps: 0..10 in at most 6 ticks is step 2 (0, 2, ..., 10) */
  g_assert_cmpfloat (t->step, ==, 2.0);
  g_assert_cmpuint (t->n, ==, 6);
  g_assert_cmpfloat (t->values[5], ==, 10.0);
  /* -0.37..0.81 in at most 8: step 0.2 gives -0.2 .. 0.8 (6 ticks); 0.1 would give 12 */
  g_assert_cmpfloat (fabs (u->step - 0.2), <, 1e-15);
  g_assert_cmpuint (u->n, ==, 6);
  g_assert_cmpint (u->decimals, ==, 1);
  a = efflux_ticks_label (u, u->values[0]);
  g_assert_cmpstr (a, ==, "\342\210\222" "0.2");
  b = efflux_ticks_label (u, -1e-17);
  g_assert_cmpstr (b, ==, "0.0");

  /* rounding to the uncertainty (common practice: two digits of error when it starts with 1 or
   * 2, else one; the value to the same place) */
  c = efflux_format_uncertain (3.2149, 0.0412);
  g_assert_cmpstr (c, ==, "3.21 \302\261 0.04");
  d = efflux_format_uncertain (1.2346e44, 2.34e42);
  g_assert_cmpstr (d, ==, "(1.235 \302\261 0.023)e44");
  e = efflux_format_uncertain (-0.5, 0.12);
  g_assert_cmpstr (e, ==, "\342\210\222" "0.50 \302\261 0.12");
  f = efflux_format_spread (2.94, 3.61);
  g_assert_cmpstr (f, ==, "2.9 \342\200\223 3.6");
  {
    g_autofree char *g = efflux_format_uncertain (6278.33, NAN);
    g_autofree char *h = efflux_format_uncertain (NAN, 1.0);

    g_assert_cmpstr (g, ==, "6280");
    g_assert_cmpstr (h, ==, "");
  }
}

/* ---- Spectrum view ---- */

static void
test_spectrum_view (void)
{
  g_autoptr(EffluxCube) cube = make_cube (NX, NY, NCH, 5.0, 0.1);
  GtkWidget *widget = efflux_spectrum_view_new ();
  EffluxSpectrumView *view = EFFLUX_SPECTRUM_VIEW (widget);
  GtkWidget *window;
  g_autoptr(EffluxLobeMask) mask = NULL;
  g_autoptr(GError) error = NULL;
  double expected[NCH], wx, wy, v_target, v_under, v1, v2;
  const double *shown;
  gsize n;
  RangeLog log = { 0 };

  window = show_in_window (widget, 800, 320);
  efflux_spectrum_view_set_cube (view, cube, "12CO 2-1");
  efflux_spectrum_view_set_vsys (view, 0.0);

  /* the pixel's spectrum is the core's */
  g_assert_true (efflux_spectrum_view_show_pixel (view, 4, 6, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_spectrum_at_pixel (cube, 4, 6, expected, NULL));
  shown = efflux_spectrum_view_get_spectrum (view, NULL, &n);
  g_assert_cmpuint (n, ==, NCH);
  for (gsize k = 0; k < NCH; k++)
    g_assert_cmpfloat (shown[k], ==, expected[k]);
  /* outside the map: refused, nothing shown */
  g_assert_false (efflux_spectrum_view_show_pixel (view, NX, 0, &error));
  g_assert_nonnull (error);
  g_clear_error (&error);
  g_assert_null (efflux_spectrum_view_get_spectrum (view, NULL, NULL));
  g_assert_true (efflux_spectrum_view_show_pixel (view, 4, 6, NULL));

  /* a lobe's mean spectrum is the core's */
  {
    double px[] = { 1.0, 8.0, 8.0, 1.0 }, py[] = { 2.0, 2.0, 12.0, 12.0 };

    mask = efflux_lobe_mask_new_pixels (NX, NY, px, py, 4, "test lobe", &error);
    g_assert_no_error (error);
  }
  efflux_spectrum_view_show_lobe (view, "blue-1", EFFLUX_LOBE_BLUE, mask);
  g_assert_cmpuint (efflux_spectrum_over_lobe (cube, mask, EFFLUX_SPECTRUM_MEAN, expected), >, 0);
  shown = efflux_spectrum_view_get_spectrum (view, "blue-1", &n);
  g_assert_cmpuint (n, ==, NCH);
  for (gsize k = 0; k < NCH; k++)
    g_assert_cmpfloat (shown[k], ==, expected[k]);

  /* drag the upper edge of blue-1's range (-12 .. -4) to the pointer at about -2.5 km/s */
  efflux_spectrum_view_set_range (view, "blue-1", EFFLUX_LOBE_BLUE, -4.0, -12.0);
  efflux_spectrum_view_set_range (view, "red-1", EFFLUX_LOBE_RED, 4.0, 12.0);
  g_signal_connect (view, "range-changed", G_CALLBACK (range_changed_cb), &log);
  efflux_ui_test_wait_for_frames (window, 1);
  efflux_spectrum_view_data_to_widget (view, -4.0, 1.0, &wx, &wy);
  {
    double tx, ty;

    efflux_spectrum_view_data_to_widget (view, -2.5, 1.0, &tx, &ty);
    /* the pointer ends on a whole pixel, like an event would */
    tx = round (tx);
    efflux_spectrum_view_widget_to_data (view, tx, wy, &v_target, NULL);
    synth_drag (widget, wx, wy, tx, wy);
    efflux_spectrum_view_widget_to_data (view, tx, wy, &v_under, NULL);
  }
  g_assert_cmpint (log.count, ==, 3);
  g_assert_cmpint (log.finals, ==, 1);
  g_assert_true (log.is_final);
  g_assert_cmpstr (log.lobe, ==, "blue-1");
  g_assert_cmpfloat (log.v1, ==, -12.0);
  g_assert_cmpfloat (fabs (log.v2 - v_under), <, 1e-12);
  g_assert_cmpfloat (fabs (log.v2 - (-2.5)), <, 0.1);
  g_assert_true (efflux_spectrum_view_get_range (view, "blue-1", &v1, &v2));
  g_assert_cmpfloat (v2, ==, log.v2);

  /* a drag that starts away from every edge is not taken */
  {
    double fx, fy;

    efflux_spectrum_view_data_to_widget (view, 0.0, 1.0, &fx, &fy);
    synth_drag (widget, fx, fy, fx + 40, fy);
    g_assert_cmpint (log.count, ==, 3);
  }
  /* dragging red-1's lower edge past its upper one swaps them: v1 <= v2 */
  efflux_spectrum_view_data_to_widget (view, 4.0, 1.0, &wx, &wy);
  {
    double tx;

    efflux_spectrum_view_data_to_widget (view, 15.0, 1.0, &tx, NULL);
    tx = round (tx);
    efflux_spectrum_view_widget_to_data (view, tx, wy, &v_under, NULL);
    synth_drag (widget, wx, wy, tx, wy);
  }
  g_assert_cmpstr (log.lobe, ==, "red-1");
  g_assert_cmpfloat (log.v1, ==, 12.0);
  g_assert_cmpfloat (fabs (log.v2 - v_under), <, 1e-12);

  efflux_ui_test_wait_for_frames (window, 2);
  efflux_ui_test_save_screenshot (window, "screenshot-spectrum-view.png");
  g_free (log.lobe);
  gtk_window_destroy (GTK_WINDOW (window));
}

/* ---- Cut view ---- */

typedef struct
{
  int      count;
  double   slope, age;
  gboolean is_final;
} SlopeLog;

static void
slope_changed_cb (GtkWidget *widget,
                  double     slope,
                  double     age,
                  gboolean   is_final,
                  SlopeLog  *log)
{
  log->count++;
  log->slope = slope;
  log->age = age;
  log->is_final = is_final;
}

static void
path_through (const EffluxCube *cube,
              double            x0,
              double            y0,
              double            x1,
              double            y1,
              double            ra_dec[4])
{
  g_assert_true (efflux_cube_pixel_to_icrs (cube, x0, y0, &ra_dec[0], &ra_dec[1]));
  g_assert_true (efflux_cube_pixel_to_icrs (cube, x1, y1, &ra_dec[2], &ra_dec[3]));
}

static void
test_cut_view (void)
{
  g_autoptr(EffluxCube) co = make_cube (NX, NY, NCH, 5.0, 0.1);
  g_autoptr(EffluxCube) sio = make_cube (NX, NY, NCH, 1.5, 0.05);
  const EffluxCube *cubes[] = { co, sio };
  const char *names[] = { "12CO 2-1", "SiO 5-4", NULL };
  GtkWidget *widget = efflux_cut_view_new ();
  EffluxCutView *view = EFFLUX_CUT_VIEW (widget);
  GtkWidget *window;
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxPvSet) ref = NULL;
  const EffluxPvSet *shown;
  double ra_dec[4], sra, sdec, wx, wy, tx, ty, off, v;
  double multiples[] = { 3.0, 6.0, 12.0, 24.0 };
  RangeLog log = { 0 };
  SlopeLog slog = { 0 };

  window = show_in_window (widget, 720, 520);
  path_through (co, 1.5, 7.5, 17.5, 7.5, ra_dec);
  g_assert_true (efflux_cut_view_set_path (view, cubes, names, 2, 0, ra_dec, 2, 1.0, &error));
  g_assert_no_error (error);
  g_assert_false (efflux_cut_view_get_busy (view));

  /* the PV set shown is the core's */
  ref = efflux_pv_set_new (cubes, 2, ra_dec, 2, 1.0, &error);
  g_assert_no_error (error);
  shown = efflux_cut_view_get_pv_set (view);
  g_assert_nonnull (shown);
  g_assert_cmpuint (shown->n_cubes, ==, 2);
  for (guint c = 0; c < 2; c++)
    {
      g_assert_cmpuint (shown->cuts[c]->n_offsets, ==, ref->cuts[c]->n_offsets);
      g_assert_cmpuint (shown->cuts[c]->nchan, ==, NCH);
      g_assert_cmpmem (shown->cuts[c]->data,
                       shown->cuts[c]->n_offsets * NCH * sizeof (float),
                       ref->cuts[c]->data, ref->cuts[c]->n_offsets * NCH * sizeof (float));
    }

  /* SiO's contours are the core's, at multiples of its noise (0.05 K) */
  efflux_cut_view_set_contour_multiples (view, multiples, G_N_ELEMENTS (multiples));
  g_assert_null (efflux_cut_view_get_contours (view, 0));
  {
    GPtrArray *lines = efflux_cut_view_get_contours (view, 1);
    g_autofree double *levels = NULL;
    g_autoptr(GPtrArray) expected = NULL;

    g_assert_cmpfloat (fabs (efflux_kinematics_pv_sigma (sio) - 0.05), <, 1e-7);
    levels = efflux_contour_levels_sigma (efflux_kinematics_pv_sigma (sio), multiples,
                                          G_N_ELEMENTS (multiples), &error);
    g_assert_no_error (error);
    expected = efflux_contour_trace_levels (ref->cuts[1]->data, ref->cuts[1]->n_offsets, NCH,
                                            levels, G_N_ELEMENTS (multiples));
    g_assert_nonnull (lines);
    g_assert_cmpuint (lines->len, >, 0);
    g_assert_cmpuint (lines->len, ==, expected->len);
    for (guint i = 0; i < lines->len; i++)
      {
        EffluxPolyline *a = g_ptr_array_index (lines, i), *b = g_ptr_array_index (expected, i);

        g_assert_cmpfloat (a->level, ==, b->level);
        g_assert_cmpuint (a->n, ==, b->n);
        g_assert_cmpmem (a->xy, a->n * 2 * sizeof (double), b->xy, b->n * 2 * sizeof (double));
      }
  }

  /* the source at pixel (9.5, 7.5): 8 pixels of 0.5" from the first vertex */
  g_assert_true (efflux_cube_pixel_to_icrs (co, 9.5, 7.5, &sra, &sdec));
  efflux_cut_view_set_source (view, sra, sdec);
  g_assert_cmpfloat (fabs (efflux_cut_view_get_source_offset (view) - 4.0), <, 1e-6);
  efflux_cut_view_set_vsys (view, 0.0);
  /* i = 1 rad from the line of sight, 400 pc */
  efflux_cut_view_set_geometry (view, 400.0, 180.0 / G_PI);

  /* a lobe range edge drag: red-1 (3 .. 9), upper edge to about 12 km/s */
  efflux_cut_view_set_range (view, "red-1", EFFLUX_LOBE_RED, 3.0, 9.0);
  efflux_cut_view_set_range (view, "blue-1", EFFLUX_LOBE_BLUE, -9.0, -3.0);
  g_signal_connect (view, "range-changed", G_CALLBACK (range_changed_cb), &log);
  g_signal_connect (view, "slope-changed", G_CALLBACK (slope_changed_cb), &slog);
  efflux_ui_test_wait_for_frames (window, 1);
  efflux_cut_view_data_to_widget (view, 1.0, 9.0, &wx, &wy);
  efflux_cut_view_data_to_widget (view, 1.0, 12.0, &tx, &ty);
  ty = round (ty);
  synth_drag (widget, wx, wy, wx, ty);
  efflux_cut_view_widget_to_data (view, wx, ty, NULL, &v);
  g_assert_cmpint (log.count, ==, 3);
  g_assert_true (log.is_final);
  g_assert_cmpstr (log.lobe, ==, "red-1");
  g_assert_cmpfloat (log.v1, ==, 3.0);
  g_assert_cmpfloat (fabs (log.v2 - v), <, 1e-12);
  g_assert_cmpfloat (fabs (log.v2 - 12.0), <, 0.2);

  /* the Hubble line starts flat (slope 0) on v_sys: grab it 3" from the source, drag it to the
   * slope of 100 km/s/pc at 400 pc */
  g_assert_true (isinf (efflux_cut_view_get_age_yr (view)));
  efflux_cut_view_data_to_widget (view, 7.0, 0.0, &wx, &wy);
  {
    double target = efflux_kinematics_slope_per_arcsec (100.0, 400.0);

    efflux_cut_view_data_to_widget (view, 8.0, 4.0 * target, &tx, &ty);
  }
  synth_drag (widget, wx, wy, tx, ty);
  efflux_cut_view_widget_to_data (view, tx, ty, &off, &v);
  g_assert_cmpint (slog.count, ==, 3);
  g_assert_true (slog.is_final);
  /* the slope through the source and the pointer, and the age efflux-kinematics gives for it */
  g_assert_cmpfloat (fabs (slog.slope - v / (off - 4.0)), <, 1e-12);
  g_assert_cmpfloat (slog.age, ==, efflux_hubble_age_yr (efflux_kinematics_slope_per_pc (slog.slope, 400.0),
                                                         180.0 / G_PI));
  g_assert_cmpfloat (efflux_cut_view_get_age_yr (view), ==, slog.age);
  /* REFERENCES.md 4.9: 100 km/s/pc at i = 1 rad gives 6278.33 yr */
  g_assert_cmpfloat (fabs (slog.age - 6278.33), <, 0.01);
  g_assert_nonnull (strstr (efflux_cut_view_get_age_label (view), "6280 yr"));
  /* a press away from the line, the ranges and the source is not taken */
  efflux_cut_view_data_to_widget (view, 8.0, -15.0, &wx, &wy);
  synth_drag (widget, wx, wy, wx + 30, wy + 30);
  g_assert_cmpint (slog.count, ==, 3);
  g_assert_cmpint (log.count, ==, 3);

  g_object_set (view, "colormap", "grey", "stretch", "sqrt", NULL);
  efflux_cut_view_set_image (view, 1);
  g_assert_nonnull (efflux_cut_view_get_contours (view, 0));
  g_assert_null (efflux_cut_view_get_contours (view, 1));
  efflux_cut_view_set_image (view, 0);
  g_object_set (view, "colormap", "cubehelix", "stretch", "linear", NULL);
  efflux_ui_test_wait_for_frames (window, 2);
  efflux_ui_test_save_screenshot (window, "screenshot-cut-view.png");
  g_free (log.lobe);
  gtk_window_destroy (GTK_WINDOW (window));
}

static void
busy_notify_cb (GObject    *object,
                GParamSpec *pspec,
                int        *count)
{
  (*count)++;
}

/* A cut large enough to be made in the view's GTask thread: the same numbers as the core's. */
static void
test_cut_view_thread (void)
{
  g_autoptr(EffluxCube) big = make_cube (200, 30, 1000, 2.0, 0.1);
  const EffluxCube *cubes[] = { big };
  GtkWidget *widget = efflux_cut_view_new ();
  EffluxCutView *view = EFFLUX_CUT_VIEW (widget);
  GtkWidget *window = show_in_window (widget, 600, 400);
  g_autoptr(EffluxPvSet) ref = NULL;
  g_autoptr(GError) error = NULL;
  const EffluxPvSet *shown;
  double ra_dec[4];
  int busy_notes = 0;
  gint64 deadline;

  g_signal_connect (view, "notify::busy", G_CALLBACK (busy_notify_cb), &busy_notes);
  path_through (big, 5.0, 14.5, 195.0, 14.5, ra_dec);
  /* 191 samples x 25 across (12" wide at 0.5") x 1000 channels: in a thread */
  g_assert_true (efflux_cut_view_set_path (view, cubes, NULL, 1, 0, ra_dec, 2, 12.0, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_cut_view_get_busy (view));
  g_assert_null (efflux_cut_view_get_pv_set (view));
  deadline = g_get_monotonic_time () + 60 * G_USEC_PER_SEC;
  while (efflux_cut_view_get_busy (view) && g_get_monotonic_time () < deadline)
    g_main_context_iteration (NULL, TRUE);
  g_assert_false (efflux_cut_view_get_busy (view));
  g_assert_cmpint (busy_notes, ==, 2);
  shown = efflux_cut_view_get_pv_set (view);
  g_assert_nonnull (shown);
  ref = efflux_pv_set_new (cubes, 1, ra_dec, 2, 12.0, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (shown->cuts[0]->n_offsets, ==, ref->cuts[0]->n_offsets);
  g_assert_cmpint (shown->cuts[0]->half_width, ==, 12);
  g_assert_cmpmem (shown->cuts[0]->data, shown->cuts[0]->n_offsets * 1000 * sizeof (float),
                   ref->cuts[0]->data, ref->cuts[0]->n_offsets * 1000 * sizeof (float));
  efflux_ui_test_wait_for_frames (window, 1);
  gtk_window_destroy (GTK_WINDOW (window));
}

/* ---- Ledger ---- */

static void
collect_label_texts (GtkWidget *widget,
                     GPtrArray *texts)
{
  if (GTK_IS_LABEL (widget))
    g_ptr_array_add (texts, g_strdup (gtk_label_get_text (GTK_LABEL (widget))));
  else if (EFFLUX_IS_LEDGER_CELL (widget))
    g_ptr_array_add (texts, g_strdup (efflux_ledger_cell_get_text (EFFLUX_LEDGER_CELL (widget))));
  for (GtkWidget *c = gtk_widget_get_first_child (widget); c != NULL; c = gtk_widget_get_next_sibling (c))
    collect_label_texts (c, texts);
}

static gboolean
shows_text (GtkWidget  *widget,
            const char *text)
{
  g_autoptr(GPtrArray) texts = g_ptr_array_new_with_free_func (g_free);

  collect_label_texts (widget, texts);
  for (guint i = 0; i < texts->len; i++)
    if (g_strcmp0 (g_ptr_array_index (texts, i), text) == 0)
      return TRUE;
  return FALSE;
}

static void
items_changed_cb (GListModel *model,
                  guint       position,
                  guint       removed,
                  guint       added,
                  int        *count)
{
  (*count)++;
}

static void
test_ledger (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(EffluxDossier) dossier = NULL;
  g_autoptr(EffluxMeasureResult) result = NULL;
  g_autoptr(EffluxMeasureResult) result2 = NULL;
  g_autoptr(GError) error = NULL;
  GtkWidget *widget = efflux_ledger_new ();
  EffluxLedger *ledger = EFFLUX_LEDGER (widget);
  GListModel *model = efflux_ledger_get_model (ledger);
  GtkWidget *window;
  g_autoptr(GPtrArray) items = g_ptr_array_new_with_free_func (g_object_unref);
  int changes = 0;

  g_assert_nonnull (demo);
  dossier = efflux_dossier_load (demo, &error);
  g_assert_no_error (error);
  result = efflux_measure_dossier (dossier, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (result->rows->len, >=, 3);

  window = show_in_window (widget, 1200, 360);
  efflux_ledger_set_result (ledger, result);
  g_assert_cmpuint (g_list_model_get_n_items (model), ==, result->rows->len);
  efflux_ui_test_wait_for_frames (window, 2);
  for (guint i = 0; i < result->rows->len; i++)
    {
      const EffluxMeasureRow *core = g_ptr_array_index (result->rows, i);
      EffluxLedgerRow *item = g_list_model_get_item (model, i);
      const EffluxMeasureRow *row = efflux_ledger_row_get_row (item);
      g_autofree char *mass = efflux_format_uncertain (core->mass_msun, core->mass_err);
      g_autofree char *spread = efflux_format_spread (core->pct[EFFLUX_MQ_MASS][0],
                                                      core->pct[EFFLUX_MQ_MASS][2]);
      g_autofree char *cell = efflux_ledger_cell_text (core, EFFLUX_LEDGER_MASS);
      g_autofree char *expected = NULL;

      g_ptr_array_add (items, item);
      g_assert_cmpstr (row->lobe, ==, core->lobe);
      g_assert_cmpfloat (row->mass_msun, ==, core->mass_msun);
      g_assert_cmpfloat (row->energy_erg, ==, core->energy_erg);
      g_assert_true (isfinite (core->mass_msun) && core->mass_msun > 0.0);
      /* the cell: the value to its noise error, the MC 16-84 spread below (the demo has samples) */
      g_assert_cmpuint (result->mc_samples, >, 0);
      expected = g_strdup_printf ("%s\n%s", mass, spread);
      g_assert_cmpstr (cell, ==, expected);
      /* and on screen */
      g_assert_true (shows_text (widget, expected));
    }

  /* new numbers for the same lobes: the same row objects, updated in place */
  g_signal_connect (model, "items-changed", G_CALLBACK (items_changed_cb), &changes);
  {
    EffluxDossierLobe *lobe = g_ptr_array_index (dossier->lobes, 0);

    /* narrow the first lobe's range by a quarter at its inner edge */
    if (lobe->kind == EFFLUX_LOBE_BLUE)
      lobe->v2_kms -= (lobe->v2_kms - lobe->v1_kms) / 4.0;
    else
      lobe->v1_kms += (lobe->v2_kms - lobe->v1_kms) / 4.0;
  }
  result2 = efflux_measure_dossier (dossier, NULL, &error);
  g_assert_no_error (error);
  g_assert_cmpfloat (((EffluxMeasureRow *) g_ptr_array_index (result2->rows, 0))->mass_msun, !=,
                     ((EffluxMeasureRow *) g_ptr_array_index (result->rows, 0))->mass_msun);
  efflux_ledger_set_result (ledger, result2);
  g_assert_cmpint (changes, ==, 0);
  efflux_ui_test_wait_for_frames (window, 2);
  for (guint i = 0; i < result2->rows->len; i++)
    {
      const EffluxMeasureRow *core = g_ptr_array_index (result2->rows, i);
      g_autoptr(EffluxLedgerRow) item = g_list_model_get_item (model, i);
      g_autofree char *cell = efflux_ledger_cell_text (core, EFFLUX_LEDGER_MOMENTUM);

      g_assert_true (item == g_ptr_array_index (items, i));
      g_assert_cmpfloat (efflux_ledger_row_get_row (item)->mass_msun, ==, core->mass_msun);
      g_assert_true (shows_text (widget, cell));
    }

  /* the CSV copy: a header and one line per row, the core's numbers in %.6g */
  {
    g_autofree char *csv = efflux_ledger_to_csv (ledger);
    g_auto(GStrv) lines = g_strsplit (g_strstrip (csv), "\n", -1);
    g_auto(GStrv) header = g_strsplit (lines[0], ",", -1);
    const EffluxMeasureRow *total = g_ptr_array_index (result2->rows, result2->rows->len - 1);
    g_auto(GStrv) last = NULL;
    char buf[G_ASCII_DTOSTR_BUF_SIZE];

    g_assert_cmpuint (g_strv_length (lines), ==, result2->rows->len + 1);
    g_assert_cmpstr (header[2], ==, "mass_msun");
    last = g_strsplit (lines[result2->rows->len], ",", -1);
    g_assert_cmpuint (g_strv_length (last), ==, g_strv_length (header));
    g_assert_cmpstr (last[0], ==, "total");
    g_assert_cmpstr (last[2], ==, g_ascii_formatd (buf, sizeof buf, "%.6g", total->mass_msun));
    g_assert_cmpstr (last[3], ==, g_ascii_formatd (buf, sizeof buf, "%.6g", total->mass_err));
    /* through the action, onto the clipboard */
    g_assert_true (gtk_widget_activate_action (widget, "ledger.copy-csv", NULL));
  }

  /* other lobes: the rows are replaced */
  efflux_ledger_set_result (ledger, NULL);
  g_assert_cmpuint (g_list_model_get_n_items (model), ==, 0);
  efflux_ledger_set_result (ledger, result);
  g_assert_cmpuint (g_list_model_get_n_items (model), ==, result->rows->len);
  efflux_ui_test_wait_for_frames (window, 2);
  efflux_ui_test_save_screenshot (window, "screenshot-ledger.png");
  gtk_window_destroy (GTK_WINDOW (window));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/views/plot", test_plot);
  g_test_add_func ("/ui/views/spectrum", test_spectrum_view);
  g_test_add_func ("/ui/views/cut", test_cut_view);
  g_test_add_func ("/ui/views/cut-thread", test_cut_view_thread);
  g_test_add_func ("/ui/views/ledger", test_ledger);
  return g_test_run ();
}
