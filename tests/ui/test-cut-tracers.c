/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (xvfb-run): the window's Cut section (efflux-cut-tools.h).
 * - Tracers over tracers: the demo dossier (12CO, 13CO and SiO cubes) opens with its cut made
 *   through every cube on the cut cube's grid; the tracers that are not the image are contour sets
 *   with the levels the core computes (efflux_pv_set_new, efflux_kinematics_pv_sigma,
 *   efflux_contour_levels_sigma at 3, 6, 12, 24, 48 sigma, efflux_contour_trace_levels), also after
 *   the image is switched to SiO (action cut.image).
 * - Shells: on a synthetic wind-driven shell dossier (efflux-synth shape=shell at i = 50 deg, Lee
 *   et al. 2000 as REFERENCES.md 1.10 item 2 states it) the action cut.fit-shells draws the curves
 *   of the core's fit (efflux_shellfit_dossier, the numbers of `efflux-cli shellfit`); the
 *   inclination is within 5 deg of the truth; cut.use-inclination writes it into [Source] through
 *   the document, and undo restores the dossier's value.
 * Screenshots go to the build directory; G_DEBUG=fatal-criticals makes any critical fail. */
#include "config.h"

#include <glib/gstdio.h>
#include <gtk/gtk.h>
#include <math.h>
#include <string.h>

#include "efflux-application.h"
#include "efflux-contour.h"
#include "efflux-cube.h"
#include "efflux-cut-tools.h"
#include "efflux-cut-view.h"
#include "efflux-document.h"
#include "efflux-dossier.h"
#include "efflux-kinematics.h"
#include "efflux-pv.h"
#include "efflux-shellfit.h"
#include "efflux-synth.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"

static EffluxCutTools *
find_tools (EffluxWindow *window)
{
  GtkWidget *view = efflux_window_get_cut_view (window);
  GtkWidget *box = gtk_widget_get_parent (view);

  for (GtkWidget *c = gtk_widget_get_first_child (box); c != NULL; c = gtk_widget_get_next_sibling (c))
    if (EFFLUX_IS_CUT_TOOLS (c))
      return EFFLUX_CUT_TOOLS (c);
  g_assert_not_reached ();
  return NULL;
}

/* Until the tools' jobs are done and (when want_set) the view shows a set. */
static void
wait_for_tools (EffluxCutTools *tools,
                EffluxCutView  *view,
                gboolean        want_set)
{
  gint64 deadline = g_get_monotonic_time () + 120 * G_USEC_PER_SEC;

  while ((efflux_cut_tools_get_busy (tools) || (want_set && efflux_cut_view_get_pv_set (view) == NULL))
         && g_get_monotonic_time () < deadline)
    g_main_context_iteration (NULL, TRUE);
  g_assert_false (efflux_cut_tools_get_busy (tools));
}

/* A window on path, loaded, and its Cut view with the set the tools made. */
static EffluxWindow *
open_cut_window (const char      *path,
                 EffluxCutView  **view,
                 EffluxCutTools **tools)
{
  g_autoptr(GFile) file = g_file_new_for_path (path);
  EffluxWindow *window = efflux_ui_test_open_window (file, 1366, 740);

  efflux_ui_test_wait_until_loaded (window);
  *view = EFFLUX_CUT_VIEW (efflux_window_get_cut_view (window));
  *tools = find_tools (window);
  wait_for_tools (*tools, *view, TRUE);
  return window;
}

/* The dossier's rms-k of each cube of the set (NaN when it gives none). */
static double set_rms_k[8];

/* The contours of the core for every cut of the set but `image`, checked against the view's: the
 * noise is the dossier's rms-k when it gives one, else the cube's own estimate. */
static void
check_contours (EffluxCutView      *view,
                const EffluxPvSet  *ref,
                EffluxCube        **cubes,
                guint               image)
{
  static const double multiples[] = { 3.0, 6.0, 12.0, 24.0, 48.0 };
  const EffluxPvSet *shown = efflux_cut_view_get_pv_set (view);

  g_assert_nonnull (shown);
  g_assert_cmpuint (shown->n_cubes, ==, ref->n_cubes);
  g_assert_cmpuint (efflux_cut_view_get_image (view), ==, image);
  for (guint i = 0; i < ref->n_cubes; i++)
    {
      const EffluxPv *pv = ref->cuts[i];
      double sigma = isfinite (set_rms_k[i]) ? set_rms_k[i] : efflux_kinematics_pv_sigma (cubes[i]);
      g_autofree double *levels = efflux_contour_levels_sigma (sigma, multiples, 5, NULL);
      g_autoptr(GPtrArray) lines = NULL;
      GPtrArray *shown_lines = efflux_cut_view_get_contours (view, i);
      const double *shown_levels;
      gsize n_levels = 0;

      /* the same PV: grid and data */
      g_assert_cmpuint (shown->cuts[i]->n_offsets, ==, pv->n_offsets);
      g_assert_cmpuint (shown->cuts[i]->nchan, ==, pv->nchan);
      g_assert_true (memcmp (shown->cuts[i]->data, pv->data, pv->n_offsets * pv->nchan * sizeof (float)) == 0);
      shown_levels = efflux_cut_view_get_contour_levels (view, i, &n_levels);
      if (i == image)
        {
          g_assert_null (shown_lines);
          g_assert_null (shown_levels);
          continue;
        }
      g_assert_nonnull (levels);
      g_assert_nonnull (shown_lines);
      g_assert_nonnull (shown_levels);
      g_assert_cmpuint (n_levels, ==, 5);
      for (guint l = 0; l < 5; l++)
        g_assert_cmpfloat (shown_levels[l], ==, levels[l]);
      lines = efflux_contour_trace_levels (pv->data, pv->n_offsets, pv->nchan, levels, 5);
      g_test_message ("cut %u: sigma %.4g K, levels %.4g..%.4g K, %u polylines", i, sigma, levels[0], levels[4],
                      lines->len);
      g_assert_cmpuint (shown_lines->len, ==, lines->len);
      g_assert_cmpuint (lines->len, >, 0);
      for (guint l = 0; l < lines->len; l++)
        {
          const EffluxPolyline *a = g_ptr_array_index (lines, l), *b = g_ptr_array_index (shown_lines, l);

          g_assert_cmpfloat (a->level, ==, b->level);
          g_assert_cmpuint (a->n, ==, b->n);
          g_assert_true (memcmp (a->xy, b->xy, 2 * a->n * sizeof (double)) == 0);
        }
    }
}

static void
test_tracers (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxDossier) dossier = NULL;
  g_autoptr(EffluxPvSet) ref = NULL;
  g_autofree double *ra_dec = NULL;
  EffluxCube *cubes[8] = { NULL };
  const char *ids[8] = { NULL };
  const char * const *shown_ids;
  const EffluxDossierCut *cut;
  EffluxWindow *window;
  EffluxCutView *view;
  EffluxCutTools *tools;
  guint n = 0, sio = G_MAXUINT;

  g_assert_nonnull (demo);
  window = open_cut_window (demo, &view, &tools);

  /* the core's set: the cut's cube first, then the dossier's other cubes in order */
  dossier = efflux_dossier_load (demo, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (dossier->cubes->len, ==, 3);
  cut = g_ptr_array_index (dossier->cuts, 0);
  ids[n++] = cut->cube_id;
  for (guint i = 0; i < dossier->cubes->len; i++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (dossier->cubes, i);
      if (strcmp (dc->id, cut->cube_id) != 0)
        ids[n++] = dc->id;
    }
  for (guint i = 0; i < n; i++)
    {
      const EffluxDossierCube *dc = efflux_dossier_find_cube (dossier, ids[i]);
      cubes[i] = efflux_cube_load (dc->abs_path, NULL, NULL, NULL, NULL, &error);
      g_assert_no_error (error);
      set_rms_k[i] = dc->rms_k;
      if (dc->line != NULL && g_str_has_prefix (dc->line->name, "SiO"))
        sio = i;
    }
  g_assert_cmpuint (sio, <, n);
  ra_dec = efflux_dossier_cut_path (cut);
  ref = efflux_pv_set_new ((const EffluxCube * const *) cubes, n, ra_dec, cut->n_vertices, cut->width_arcsec,
                           &error);
  g_assert_no_error (error);
  shown_ids = efflux_cut_tools_get_ids (tools);
  g_assert_nonnull (shown_ids);
  for (guint i = 0; i < n; i++)
    g_assert_cmpstr (shown_ids[i], ==, ids[i]);

  /* the cut's cube (12CO) is the image; 13CO and SiO are contours */
  check_contours (view, ref, cubes, 0);
  efflux_ui_test_wait_for_frames (GTK_WIDGET (view), 2);
  efflux_ui_test_save_screenshot (GTK_WIDGET (view), "cut-tracers-co.png");

  /* SiO as the image: the CO tracers are the contours now */
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (tools), "cut.image", "s", ids[sio]));
  check_contours (view, ref, cubes, sio);
  efflux_ui_test_wait_for_frames (GTK_WIDGET (view), 2);
  efflux_ui_test_save_screenshot (GTK_WIDGET (view), "cut-tracers-sio.png");

  for (guint i = 0; i < n; i++)
    efflux_cube_free (cubes[i]);
  gtk_window_destroy (GTK_WINDOW (window));
}

#define RECIPE \
  "[Recipe]\nname=shell\nseed=7\n\n" \
  "[Source]\nname=Shell test\nra-deg=83.8\ndec-deg=-5.4\ndistance-pc=300\nvsys-kms=5\n" \
  "inclination-deg=50\nposition-angle-deg=30\n\n" \
  "[Grid]\nnx=81\nny=81\npixel-arcsec=0.5\nnchan=110\nvstart-kms=-22.25\ndv-kms=0.5\nbeam-arcsec=1.5\n\n" \
  "[Physics]\ntex-k=30\nco-abundance=1e-4\n\n" \
  "[Lobe blue]\nkind=blue\nshape=shell\nmass-msun=2e-5\nlength-au=3000\nvmin-kms=1\nvmax-kms=20\n" \
  "shell-c-per-arcsec=1.2\n\n" \
  "[Lobe red]\nkind=red\nshape=shell\nmass-msun=2e-5\nlength-au=3000\nvmin-kms=1\nvmax-kms=20\n" \
  "shell-c-per-arcsec=1.2\n\n" \
  "[Cube co]\nline=12CO 2-1\nrms-k=0.05\n"

static void
test_shells (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-cut-shells-XXXXXX", &error);
  g_autofree char *dpath = NULL;
  g_autoptr(EffluxSynthRecipe) rc = NULL;
  g_autoptr(EffluxDossier) dossier = NULL;
  g_autoptr(EffluxShellFit) ref = NULL;
  const EffluxShellFit *fit;
  const EffluxDossier *d;
  EffluxWindow *window;
  EffluxCutView *view;
  EffluxCutTools *tools;
  EffluxDocument *document;
  double before_i;
  EffluxInclinationMode before_mode;

  g_assert_no_error (error);
  rc = efflux_synth_recipe_load_data (RECIPE, "shell.recipe", &error);
  g_assert_no_error (error);
  g_assert_true (efflux_synth_run (rc, dir, &error));
  g_assert_no_error (error);
  dpath = g_build_filename (dir, "shell.efflux", NULL);
  dossier = efflux_dossier_load (dpath, &error);
  g_assert_no_error (error);
  ref = efflux_shellfit_dossier (dossier, "axis", NULL, &error);
  g_assert_no_error (error);

  window = open_cut_window (dpath, &view, &tools);
  document = efflux_window_get_document (window);
  g_assert_nonnull (document);
  d = efflux_document_get_dossier (document);
  before_i = d->inclination_deg;
  before_mode = d->inclination_mode;

  /* the fit, in its thread */
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (tools), "cut.fit-shells", NULL));
  g_assert_true (efflux_cut_tools_get_busy (tools));
  wait_for_tools (tools, view, TRUE);
  fit = efflux_cut_tools_get_fit (tools);
  g_assert_nonnull (fit);
  g_test_message ("%s", efflux_cut_tools_get_fit_text (tools));
  /* the core's numbers (the same cube, cut and defaults: the same computation) */
  g_assert_cmpuint (fit->n_lobes, ==, ref->n_lobes);
  g_assert_cmpfloat (fit->inclination_deg, ==, ref->inclination_deg);
  g_assert_cmpfloat (fit->inclination_err_deg, ==, ref->inclination_err_deg);
  g_assert_cmpfloat (fit->age_yr, ==, ref->age_yr);
  /* the truth: i = 50 deg (the requirement: within 5 deg) */
  g_assert_cmpfloat (fabs (fit->inclination_deg - 50.0), <, 5.0);
  g_assert_nonnull (strstr (efflux_cut_tools_get_fit_text (tools), "i = "));
  /* both lobes' curves are drawn, on the core's curve */
  for (guint l = 0; l < 2; l++)
    {
      double off[200], vel[200];
      const double *so, *sv;
      gsize n = 0;

      g_assert_true (ref->lobes[l].ok);
      g_assert_true (efflux_cut_view_get_shell_curve (view, l, &n, &so, &sv));
      g_assert_cmpuint (n, ==, 200);
      g_assert_cmpuint (efflux_shellfit_curve (ref, l, 200, off, vel), ==, 200);
      for (gsize i = 0; i < n; i += 33)
        {
          g_assert_cmpfloat (so[i], ==, off[i]);
          g_assert_cmpfloat (sv[i], ==, vel[i]);
        }
    }
  efflux_ui_test_wait_for_frames (GTK_WIDGET (view), 2);
  efflux_ui_test_save_screenshot (GTK_WIDGET (view), "cut-shells.png");

  /* one click: [Source] takes the fitted inclination and its range */
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (tools), "cut.use-inclination", NULL));
  d = efflux_document_get_dossier (document);
  g_assert_cmpint (d->inclination_mode, ==, EFFLUX_INCLINATION_RANGE);
  {
    g_autofree char *text = efflux_dossier_to_data ((EffluxDossier *) d, NULL);
    g_autofree char *line = g_strdup_printf ("inclination-deg=%.2f\n", ref->inclination_deg);
    g_assert_nonnull (strstr (text, line));
  }
  g_assert_cmpfloat (fabs (d->inclination_range_deg[0] - (ref->inclination_deg - ref->inclination_err_deg)), <=,
                     0.005 + 1e-9);
  g_assert_cmpfloat (fabs (d->inclination_range_deg[1] - (ref->inclination_deg + ref->inclination_err_deg)), <=,
                     0.005 + 1e-9);
  g_assert_true (efflux_document_get_modified (document));
  /* undo restores the dossier's own value */
  g_assert_true (efflux_document_undo (document));
  d = efflux_document_get_dossier (document);
  g_assert_cmpint (d->inclination_mode, ==, before_mode);
  g_assert_true ((isnan (before_i) && isnan (d->inclination_deg)) || d->inclination_deg == before_i);
  g_assert_false (efflux_document_get_modified (document));

  gtk_window_destroy (GTK_WINDOW (window));
  efflux_ui_test_remove_flat_dir (dir);
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/cut/tracers", test_tracers);
  g_test_add_func ("/ui/cut/shells", test_shells);
  return g_test_run ();
}
