/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (run under xvfb-run): the Export Figure dialog.
 *
 * - A PNG exported from the dialog has the same pixels as `efflux-cli figure` with the same
 *   choices on the same dossier (the sky view with the Sky view's colour map and stretch, and a
 *   channel-map grid), and the same caption.
 * - Unsaved edits are drawn: after an edit of a lobe's velocity range in the document, the
 *   dialog's PNG equals the CLI's PNG of the edited dossier (written here with absolute cube
 *   paths) and differs from the CLI's PNG of the file on disk.
 * - PDF output starts with "%PDF-", its page is the chosen width in points (1 pt = 1/72 inch,
 *   ISO 32000-1 section 8.3.2.3 default user space; 1 inch = 25.4 mm, international inch of 1959)
 *   and its content streams, inflated with GLib's zlib decompressor, hold vector path operators
 *   (m, l, S: ISO 32000-1 section 8.5.2 and 8.5.3). SVG output parsed by GMarkup holds <path>
 *   elements and an <svg> root of the chosen width in pt.
 * - The channel grid over a chosen velocity range: the caption gives the number of panels and the
 *   first and last channel velocities, computed here from the cube's own channels.
 * - Sizes in inches, the format from the file name's extension, an error naming the file when it
 *   cannot be written (nothing left behind), Cancel (nothing written, no temporary file left), and
 *   the window's win.export-figure action (bound to Ctrl+Shift+E) opening the dialog modal and
 *   transient for the window; closing the dialog mid-export writes nothing.
 * - efflux_figure_new_full: progress never decreasing and ending at 1, and cancellation. */
#include "config.h"

#include <cairo.h>
#include <gtk/gtk.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>
#include <sys/wait.h>

#include "efflux-application.h"
#include "efflux-cube.h"
#include "efflux-document.h"
#include "efflux-dossier.h"
#include "efflux-cube-store.h"
#include "efflux-figure-dialog.h"
#include "efflux-sky-view.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"

#define MM_PT (72.0 / 25.4)

static EffluxWindow *
open_demo (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(GFile) file = NULL;
  EffluxWindow *window;

  g_assert_nonnull (demo);
  file = g_file_new_for_path (demo);
  window = efflux_ui_test_open_window (file, 0, 0);
  efflux_ui_test_wait_until_loaded (window);
  g_assert_nonnull (efflux_window_get_document (window));
  return window;
}

static EffluxFigureDialog *
new_dialog (EffluxWindow *window)
{
  GtkWidget *dialog = efflux_figure_dialog_new (GTK_WINDOW (window), efflux_window_get_document (window),
                                                efflux_window_get_sky_view (window));

  gtk_window_present (GTK_WINDOW (dialog));
  return EFFLUX_FIGURE_DIALOG (dialog);
}

typedef struct
{
  int   n;
  char *path;
  char *error;
} Finished;

static void
finished_cb (EffluxFigureDialog *dialog,
             const char         *path,
             const char         *error,
             Finished           *f)
{
  f->n++;
  g_free (f->path);
  g_free (f->error);
  f->path = g_strdup (path);
  f->error = g_strdup (error);
}

/* Export and wait for the end; returns TRUE when the file was written. */
static gboolean
export_and_wait (EffluxFigureDialog *dialog)
{
  Finished f = { 0 };
  gint64 deadline = g_get_monotonic_time () + 90 * G_USEC_PER_SEC;
  gulong id = g_signal_connect (dialog, "finished", G_CALLBACK (finished_cb), &f);
  gboolean ok;

  efflux_figure_dialog_export (dialog);
  g_assert_true (efflux_figure_dialog_is_busy (dialog));
  while (f.n == 0 && g_get_monotonic_time () < deadline)
    g_main_context_iteration (NULL, TRUE);
  g_signal_handler_disconnect (dialog, id);
  g_assert_cmpint (f.n, ==, 1);
  g_assert_false (efflux_figure_dialog_is_busy (dialog));
  g_assert_cmpstr (f.path, ==, efflux_figure_dialog_get_path (dialog));
  g_test_message ("%s", efflux_figure_dialog_get_status (dialog));
  ok = f.error == NULL;
  if (!ok)
    g_assert_cmpstr (f.error, ==, efflux_figure_dialog_get_status (dialog));
  g_free (f.path);
  g_free (f.error);
  return ok;
}

/* efflux-cli figure ARGS...; returns its standard output (the caption). */
static char *
run_cli (const char *first,
         ...)
{
  g_autoptr(GPtrArray) argv = g_ptr_array_new ();
  g_autoptr(GError) error = NULL;
  char *out = NULL;
  g_autofree char *err = NULL;
  const char *cli = g_getenv ("EFFLUX_CLI");
  int status = 0;
  va_list ap;

  g_assert_nonnull (cli);
  g_ptr_array_add (argv, (char *) cli);
  g_ptr_array_add (argv, (char *) "figure");
  va_start (ap, first);
  for (const char *a = first; a != NULL; a = va_arg (ap, const char *))
    g_ptr_array_add (argv, (char *) a);
  va_end (ap);
  g_ptr_array_add (argv, NULL);
  g_assert_true (g_spawn_sync (NULL, (char **) argv->pdata, NULL, G_SPAWN_DEFAULT, NULL, NULL,
                               &out, &err, &status, &error));
  g_assert_no_error (error);
  if (!WIFEXITED (status) || WEXITSTATUS (status) != 0)
    g_error ("efflux-cli figure failed: %s", err);
  g_strchomp (out);
  return out;
}

/* Pixels differing between two PNG files of the same size (asserted). */
static gsize
png_differences (const char *a,
                 const char *b)
{
  cairo_surface_t *sa = cairo_image_surface_create_from_png (a);
  cairo_surface_t *sb = cairo_image_surface_create_from_png (b);
  int w, h, stride;
  gsize n = 0;

  g_assert_cmpint (cairo_surface_status (sa), ==, CAIRO_STATUS_SUCCESS);
  g_assert_cmpint (cairo_surface_status (sb), ==, CAIRO_STATUS_SUCCESS);
  w = cairo_image_surface_get_width (sa);
  h = cairo_image_surface_get_height (sa);
  g_assert_cmpint (w, ==, cairo_image_surface_get_width (sb));
  g_assert_cmpint (h, ==, cairo_image_surface_get_height (sb));
  g_assert_cmpint (cairo_image_surface_get_format (sa), ==, cairo_image_surface_get_format (sb));
  stride = cairo_image_surface_get_stride (sa);
  g_assert_cmpint (stride, ==, cairo_image_surface_get_stride (sb));
  for (int y = 0; y < h; y++)
    {
      const guint32 *ra = (const guint32 *) (cairo_image_surface_get_data (sa) + (gsize) y * stride);
      const guint32 *rb = (const guint32 *) (cairo_image_surface_get_data (sb) + (gsize) y * stride);

      for (int x = 0; x < w; x++)
        n += ra[x] != rb[x];
    }
  cairo_surface_destroy (sa);
  cairo_surface_destroy (sb);
  return n;
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

static guint
count_entries (const char *dir)
{
  g_autoptr(GDir) d = g_dir_open (dir, 0, NULL);
  guint n = 0;

  g_assert_nonnull (d);
  while (g_dir_read_name (d) != NULL)
    n++;
  return n;
}

static void
close_all (EffluxWindow       *window,
           EffluxFigureDialog *dialog)
{
  gtk_window_destroy (GTK_WINDOW (dialog));
  gtk_window_destroy (GTK_WINDOW (window));
  while (g_main_context_iteration (NULL, FALSE))
    ;
}

/* Until the document has measured and no file has been read for 300 ms (the cut tools and the
 * measurement read their cubes in workers after the window opened). */
static void
wait_until_settled (EffluxWindow *window)
{
  EffluxDocument *doc = efflux_window_get_document (window);
  gint64 deadline = g_get_monotonic_time () + 30 * G_USEC_PER_SEC;
  guint reads = efflux_cube_store_reads ();
  gint64 quiet_since = g_get_monotonic_time ();

  while (g_get_monotonic_time () < deadline)
    {
      efflux_ui_test_iterate_ms (20);
      if (efflux_cube_store_reads () != reads)
        {
          reads = efflux_cube_store_reads ();
          quiet_since = g_get_monotonic_time ();
        }
      if (!efflux_document_is_measuring (doc) && efflux_document_get_result (doc) != NULL
          && g_get_monotonic_time () - quiet_since > 300 * G_TIME_SPAN_MILLISECOND)
        return;
    }
  g_assert_not_reached ();
}

/* The dialog's PNG against the CLI's: the sky view with the Sky view's display choices, then the
 * channel grid. */
static void
test_png_matches_cli (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autofree char *dir = g_dir_make_tmp ("efflux-figure-XXXXXX", NULL);
  g_autofree char *app_png = g_build_filename (dir, "app-sky.png", NULL);
  g_autofree char *cli_png = g_build_filename (dir, "cli-sky.png", NULL);
  g_autofree char *app_ch = g_build_filename (dir, "app-channels.png", NULL);
  g_autofree char *cli_ch = g_build_filename (dir, "cli-channels.png", NULL);
  g_autofree char *caption = NULL;
  g_autofree char *caption_ch = NULL;
  EffluxWindow *window = open_demo ();
  EffluxFigureDialog *dialog;
  EffluxFigureOptions o;
  int w, h;
  guint n_store, reads;

  g_assert_nonnull (dir);
  /* the window shows grey and sqrt: the dialog starts with them */
  g_object_set (efflux_window_get_sky_view (window), "colormap", "grey", "stretch", "sqrt",
                "limits", 99.0, "grid", "offsets", NULL);
  dialog = new_dialog (window);
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_cmpint (o.view, ==, EFFLUX_FIGURE_SKY);
  g_assert_cmpint (o.colormap, ==, EFFLUX_COLORMAP_GREY);
  g_assert_cmpint (o.stretch, ==, EFFLUX_STRETCH_SQRT);
  g_assert_cmpint (o.coords, ==, EFFLUX_SKYGRID_OFFSETS);
  g_assert_cmpfloat (o.limits_percent, ==, 99.0);
  /* one journal column by default (88 mm, common practice), height from the layout, 300 dpi */
  g_assert_cmpfloat (o.width_mm, ==, 88.0);
  g_assert_cmpfloat (o.height_mm, ==, 0.0);
  g_assert_cmpfloat (o.dpi, ==, 300.0);
  /* the default name: beside the dossier, after it and the view */
  g_assert_true (g_str_has_suffix (efflux_figure_dialog_get_path (dialog), "/demo-sky.png"));

  efflux_figure_dialog_set_dpi (dialog, 150);
  efflux_figure_dialog_set_path (dialog, app_png);
  /* drawn from the cubes the window and the document hold (the cube store): the 12CO cube the
   * window shows is not read again, nor the isotopologue when the document holds it; the figure's
   * references go back with it */
  wait_until_settled (window);
  n_store = efflux_cube_store_count ();
  reads = efflux_cube_store_reads ();
  g_assert_cmpuint (n_store, >=, 1);
  g_assert_true (export_and_wait (dialog));
  g_test_message ("cubes in the store %u, files read for the figure %u", n_store, efflux_cube_store_reads () - reads);
  g_assert_cmpuint (efflux_cube_store_reads () - reads, <=, n_store >= 2 ? 0 : 1);
  g_assert_cmpuint (efflux_cube_store_count (), ==, n_store);
  caption = run_cli (demo, "--view", "sky", "--width-mm", "88", "--dpi", "150", "--colormap", "grey",
                     "--stretch", "sqrt", "--coords", "offsets", "--limits-percent", "99", "-o", cli_png, NULL);
  /* 88 mm at 150 dpi: 88 / 25.4 x 150 = 519.7 -> 520 pixels wide */
  png_size (app_png, &w, &h);
  g_assert_cmpint (w, ==, 520);
  g_assert_cmpint (h, >, 100);
  g_assert_cmpuint (png_differences (app_png, cli_png), ==, 0);
  g_assert_cmpstr (efflux_figure_dialog_get_caption (dialog), ==, caption);

  /* the channel-map grid from the app: 3 columns x 2 rows, the lobes' ranges */
  efflux_figure_dialog_set_view (dialog, EFFLUX_FIGURE_CHANNELS);
  efflux_figure_dialog_set_grid (dialog, 3, 2);
  efflux_figure_dialog_set_path (dialog, app_ch);
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_cmpuint (o.grid_nx, ==, 3);
  g_assert_cmpuint (o.grid_ny, ==, 2);
  g_assert_true (export_and_wait (dialog));
  caption_ch = run_cli (demo, "--view", "channels", "--grid", "3x2", "--width-mm", "88", "--dpi", "150",
                        "--colormap", "grey", "--stretch", "sqrt", "--coords", "offsets", "--limits-percent", "99",
                        "-o", cli_ch, NULL);
  g_assert_cmpuint (png_differences (app_ch, cli_ch), ==, 0);
  g_assert_cmpstr (efflux_figure_dialog_get_caption (dialog), ==, caption_ch);
  g_assert_nonnull (strstr (caption_ch, "6 channel maps"));

  /* fixed colour limits from the app and from the CLI (--limits): the same PNG */
  {
    g_autofree char *app_fx = g_build_filename (dir, "app-fixed.png", NULL);
    g_autofree char *cli_fx = g_build_filename (dir, "cli-fixed.png", NULL);
    g_autofree char *caption_fx = NULL;

    efflux_figure_dialog_set_fixed_limits (dialog, 0.5, 6.0);
    efflux_figure_dialog_set_path (dialog, app_fx);
    efflux_figure_dialog_get_options (dialog, &o);
    g_assert_cmpfloat (o.limit_lo, ==, 0.5);
    g_assert_cmpfloat (o.limit_hi, ==, 6.0);
    g_assert_true (export_and_wait (dialog));
    caption_fx = run_cli (demo, "--view", "channels", "--grid", "3x2", "--width-mm", "88", "--dpi", "150",
                          "--colormap", "grey", "--stretch", "sqrt", "--coords", "offsets", "--limits-percent", "99",
                          "--limits", "0.5:6", "-o", cli_fx, NULL);
    g_assert_cmpuint (png_differences (app_fx, cli_fx), ==, 0);
    /* and the limits change the drawing: not the PNG of the percentile limits */
    g_assert_cmpuint (png_differences (app_fx, cli_ch), >, 1000);
    efflux_figure_dialog_set_fixed_limits (dialog, 0.0, 0.0);
    efflux_figure_dialog_get_options (dialog, &o);
    g_assert_cmpfloat (o.limit_lo, ==, 0.0);
    g_assert_cmpfloat (o.limit_hi, ==, 0.0);
  }

  close_all (window, dialog);
  efflux_ui_test_remove_flat_dir (dir);
}

/* The edited dossier with absolute cube paths, so that it can be read from another directory. */
static char *
write_edited (const EffluxDossier *d,
              const char          *dir)
{
  gsize length = 0;
  g_autofree char *data = efflux_dossier_to_data ((EffluxDossier *) d, &length);
  g_autoptr(GKeyFile) kf = g_key_file_new ();
  g_autoptr(GError) error = NULL;
  char *path = g_build_filename (dir, "edited.efflux", NULL);

  g_assert_true (g_key_file_load_from_data (kf, data, length, G_KEY_FILE_KEEP_COMMENTS, &error));
  g_assert_no_error (error);
  for (guint i = 0; i < d->cubes->len; i++)
    {
      const EffluxDossierCube *c = g_ptr_array_index (d->cubes, i);
      g_autofree char *group = g_strdup_printf ("Cube %s", c->id);

      g_assert_true (g_path_is_absolute (c->abs_path));
      g_key_file_set_string (kf, group, "path", c->abs_path);
    }
  g_assert_true (g_key_file_save_to_file (kf, path, &error));
  g_assert_no_error (error);
  return path;
}

static void
test_unsaved_edit (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autofree char *dir = g_dir_make_tmp ("efflux-figure-XXXXXX", NULL);
  g_autofree char *app_png = g_build_filename (dir, "app.png", NULL);
  g_autofree char *cli_png = g_build_filename (dir, "cli-edited.png", NULL);
  g_autofree char *disk_png = g_build_filename (dir, "cli-disk.png", NULL);
  g_autofree char *edited = NULL;
  g_autofree char *caption_edited = NULL;
  g_autofree char *caption_disk = NULL;
  g_autoptr(GError) error = NULL;
  EffluxWindow *window = open_demo ();
  EffluxDocument *doc = efflux_window_get_document (window);
  EffluxFigureDialog *dialog;

  /* narrow the blue lobe's range: not saved */
  g_assert_true (efflux_document_set_lobe_velocity (doc, "blue", -9.0, 1.0, 0, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_document_get_modified (doc));

  dialog = new_dialog (window);
  efflux_figure_dialog_set_view (dialog, EFFLUX_FIGURE_CHANNELS);
  efflux_figure_dialog_set_grid (dialog, 2, 2);
  efflux_figure_dialog_set_dpi (dialog, 100);
  efflux_figure_dialog_set_path (dialog, app_png);
  g_assert_true (export_and_wait (dialog));

  edited = write_edited (efflux_document_get_dossier (doc), dir);
  caption_edited = run_cli (edited, "--view", "channels", "--grid", "2x2", "--width-mm", "88", "--dpi", "100",
                            "-o", cli_png, NULL);
  caption_disk = run_cli (demo, "--view", "channels", "--grid", "2x2", "--width-mm", "88", "--dpi", "100",
                          "-o", disk_png, NULL);
  g_assert_cmpuint (png_differences (app_png, cli_png), ==, 0);
  g_assert_cmpuint (png_differences (app_png, disk_png), >, 0);
  /* the captions name the dossier's source and cube, not its file: equal for the edited one */
  g_assert_cmpstr (efflux_figure_dialog_get_caption (dialog), ==, caption_edited);
  g_assert_cmpstr (efflux_figure_dialog_get_caption (dialog), !=, caption_disk);
  /* the file on disk is untouched */
  {
    g_autoptr(EffluxDossier) disk = efflux_dossier_load (demo, &error);

    g_assert_no_error (error);
    g_assert_cmpfloat (efflux_dossier_find_lobe (disk, "blue")->v1_kms, ==, -13.5);
  }

  close_all (window, dialog);
  efflux_ui_test_remove_flat_dir (dir);
}

/* Path operators in the inflated content streams of a PDF written by Cairo (binary data: memmem,
 * not string functions that stop at a zero byte). */
static void
pdf_operators (const char *data,
               gsize       length,
               guint      *n_lineto,
               guint      *n_stroke)
{
  g_autoptr(GRegex) lineto = g_regex_new ("-?[0-9.]+ -?[0-9.]+ l\\b", 0, 0, NULL);
  g_autoptr(GRegex) stroke = g_regex_new ("(^|\\s)S(\\s|$)", G_REGEX_MULTILINE, 0, NULL);
  const char *p = data, *end = data + length;

  *n_lineto = *n_stroke = 0;
  while (p < end)
    {
      const char *s = memmem (p, end - p, "stream\n", strlen ("stream\n"));
      const char *e;
      g_autoptr(GConverter) z = NULL;
      g_autoptr(GByteArray) out = g_byte_array_new ();
      g_autoptr(GMatchInfo) mi = NULL;
      gsize read = 0, written = 0, in_off;
      guint8 buf[65536];

      if (s == NULL)
        break;
      s += strlen ("stream\n");
      e = memmem (s, end - s, "endstream", strlen ("endstream"));
      if (e == NULL)
        break;
      z = G_CONVERTER (g_zlib_decompressor_new (G_ZLIB_COMPRESSOR_FORMAT_ZLIB));
      in_off = 0;
      for (;;)
        {
          g_autoptr(GError) error = NULL;
          GConverterResult r = g_converter_convert (z, s + in_off, (gsize) (e - s) - in_off, buf, sizeof buf,
                                                    G_CONVERTER_INPUT_AT_END, &read, &written, &error);

          if (r == G_CONVERTER_ERROR)
            break;    /* not a Flate stream (an image's raw data): skipped */
          g_byte_array_append (out, buf, written);
          in_off += read;
          if (r == G_CONVERTER_FINISHED)
            break;
        }
      g_byte_array_append (out, (const guint8 *) "", 1);
      g_regex_match (lineto, (const char *) out->data, 0, &mi);
      while (g_match_info_matches (mi))
        {
          (*n_lineto)++;
          g_match_info_next (mi, NULL);
        }
      g_clear_pointer (&mi, g_match_info_free);
      g_regex_match (stroke, (const char *) out->data, 0, &mi);
      while (g_match_info_matches (mi))
        {
          (*n_stroke)++;
          g_match_info_next (mi, NULL);
        }
      p = e + strlen ("endstream");
    }
}

typedef struct
{
  guint  paths;
  double width_pt;
  gboolean root;
} SvgCount;

static void
svg_start (GMarkupParseContext  *context,
           const char           *element,
           const char          **names,
           const char          **values,
           gpointer              user_data,
           GError              **error)
{
  SvgCount *c = user_data;

  if (strcmp (element, "path") == 0)
    c->paths++;
  if (strcmp (element, "svg") == 0 && !c->root)
    {
      c->root = TRUE;
      for (guint i = 0; names[i] != NULL; i++)
        if (strcmp (names[i], "width") == 0)
          {
            g_assert_true (g_str_has_suffix (values[i], "pt"));
            c->width_pt = g_ascii_strtod (values[i], NULL);
          }
    }
}

static void
test_vector_formats (void)
{
  g_autofree char *dir = g_dir_make_tmp ("efflux-figure-XXXXXX", NULL);
  g_autofree char *base = g_build_filename (dir, "figure.png", NULL);
  g_autofree char *pdf_path = g_build_filename (dir, "figure.pdf", NULL);
  g_autofree char *svg_path = g_build_filename (dir, "other.svg", NULL);
  g_autofree char *data = NULL;
  g_autoptr(GError) error = NULL;
  EffluxWindow *window = open_demo ();
  EffluxFigureDialog *dialog = new_dialog (window);
  gsize length = 0;
  guint n_lineto, n_stroke;
  double width_pt = EFFLUX_FIGURE_TWO_COLUMNS_MM * MM_PT;

  efflux_figure_dialog_set_size (dialog, EFFLUX_FIGURE_TWO_COLUMNS_MM, 0);
  efflux_figure_dialog_set_path (dialog, base);
  g_assert_cmpint (efflux_figure_dialog_get_format (dialog), ==, EFFLUX_FIGURE_FORMAT_PNG);
  /* choosing PDF changes the name's extension */
  efflux_figure_dialog_set_format (dialog, EFFLUX_FIGURE_FORMAT_PDF);
  g_assert_cmpstr (efflux_figure_dialog_get_path (dialog), ==, pdf_path);
  g_assert_true (export_and_wait (dialog));
  g_assert_true (g_file_get_contents (pdf_path, &data, &length, &error));
  g_assert_no_error (error);
  g_assert_true (g_str_has_prefix (data, "%PDF-"));
  {
    /* the page: 180 mm = 510.24 pt wide (ISO 32000-1 8.3.2.3: 1/72 inch per unit) */
    const char *box = memmem (data, length, "/MediaBox [", strlen ("/MediaBox ["));
    double x0, y0, x1;
    char *endp;

    g_assert_nonnull (box);
    box += strlen ("/MediaBox [");
    x0 = g_ascii_strtod (box, &endp);
    y0 = g_ascii_strtod (endp, &endp);
    x1 = g_ascii_strtod (endp, &endp);
    g_assert_cmpfloat (x0, ==, 0.0);
    g_assert_cmpfloat (y0, ==, 0.0);
    g_assert_cmpfloat_with_epsilon (x1, width_pt, 1e-3);
  }
  pdf_operators (data, length, &n_lineto, &n_stroke);
  g_test_message ("PDF: %u line-to operators, %u strokes", n_lineto, n_stroke);
  /* contours, outlines, axes and ticks are paths, not pixels */
  g_assert_cmpuint (n_lineto, >=, 200);
  g_assert_cmpuint (n_stroke, >=, 10);
  g_clear_pointer (&data, g_free);

  /* SVG by the chosen name's extension, the cut view */
  efflux_figure_dialog_set_view (dialog, EFFLUX_FIGURE_CUT);
  g_assert_true (efflux_figure_dialog_set_cut (dialog, "axis"));
  g_assert_false (efflux_figure_dialog_set_cut (dialog, "no-such-cut"));
  efflux_figure_dialog_set_path (dialog, svg_path);
  g_assert_cmpint (efflux_figure_dialog_get_format (dialog), ==, EFFLUX_FIGURE_FORMAT_SVG);
  g_assert_true (export_and_wait (dialog));
  g_assert_true (g_file_get_contents (svg_path, &data, &length, &error));
  g_assert_no_error (error);
  {
    GMarkupParser parser = { svg_start, NULL, NULL, NULL, NULL };
    SvgCount count = { 0 };
    g_autoptr(GMarkupParseContext) ctx = g_markup_parse_context_new (&parser, 0, &count, NULL);

    g_assert_true (g_markup_parse_context_parse (ctx, data, (gssize) length, &error));
    g_assert_no_error (error);
    g_assert_true (g_markup_parse_context_end_parse (ctx, &error));
    g_assert_no_error (error);
    g_test_message ("SVG: %u <path> elements, %g pt wide", count.paths, count.width_pt);
    g_assert_true (count.root);
    g_assert_cmpfloat_with_epsilon (count.width_pt, width_pt, 1e-3);
    g_assert_cmpuint (count.paths, >=, 20);
  }
  g_assert_nonnull (strstr (efflux_figure_dialog_get_caption (dialog), "axis"));

  close_all (window, dialog);
  efflux_ui_test_remove_flat_dir (dir);
}

/* Channel maps over a chosen velocity range: the panels spread over every channel in it. */
static void
test_channel_range (void)
{
  g_autofree char *dir = g_dir_make_tmp ("efflux-figure-XXXXXX", NULL);
  g_autofree char *path = g_build_filename (dir, "channels.png", NULL);
  g_autofree char *expect = NULL;
  EffluxWindow *window = open_demo ();
  EffluxFigureDialog *dialog = new_dialog (window);
  const EffluxDossier *d = efflux_document_get_dossier (efflux_window_get_document (window));
  g_autoptr(EffluxCube) cube = NULL;
  g_autoptr(GError) error = NULL;
  EffluxFigureOptions o;
  gsize k0, k1;
  double va, vb;

  /* the demo's lobes are on the cube "co" */
  cube = efflux_cube_load (efflux_dossier_find_cube (d, "co")->abs_path, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  efflux_figure_dialog_set_view (dialog, EFFLUX_FIGURE_CHANNELS);
  efflux_figure_dialog_set_grid (dialog, 2, 2);
  efflux_figure_dialog_set_channel_range (dialog, -8.0, 0.0);
  efflux_figure_dialog_set_dpi (dialog, 100);
  efflux_figure_dialog_set_path (dialog, path);
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_cmpfloat (o.channel_v1_kms, ==, -8.0);
  g_assert_cmpfloat (o.channel_v2_kms, ==, 0.0);
  g_assert_true (export_and_wait (dialog));

  /* the cube's channels in [-8, 0] km/s, found here from its own velocity axis */
  g_assert_true (efflux_cube_channel_range (cube, -8.0, 0.0, &k0, &k1));
  g_assert_cmpuint (k1 - k0, >=, 4);
  va = MIN (cube->velocity[k0], cube->velocity[k1 - 1]);
  vb = MAX (cube->velocity[k0], cube->velocity[k1 - 1]);
  g_assert_cmpfloat (va, >=, -8.0);
  g_assert_cmpfloat (vb, <=, 0.0);
  expect = g_strdup_printf ("4 channel maps from %.2f to %.2f km/s", va, vb);
  g_test_message ("%s", efflux_figure_dialog_get_caption (dialog));
  g_assert_nonnull (strstr (efflux_figure_dialog_get_caption (dialog), expect));
  g_assert_nonnull (strstr (efflux_figure_dialog_get_caption (dialog), "range -8.00 to 0.00 km/s"));

  /* unticked again: the lobes' ranges */
  efflux_figure_dialog_set_channel_range (dialog, 0, 0);
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_false (o.channel_v1_kms < o.channel_v2_kms);

  close_all (window, dialog);
  efflux_ui_test_remove_flat_dir (dir);
}

static void
test_sizes_and_names (void)
{
  EffluxWindow *window = open_demo ();
  EffluxFigureDialog *dialog = new_dialog (window);
  EffluxFigureOptions o;

  /* inches: 1 in = 25.4 mm exactly (international inch, 1959) */
  efflux_figure_dialog_set_unit (dialog, EFFLUX_FIGURE_UNIT_INCH);
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_cmpfloat_with_epsilon (o.width_mm, 88.0, 1e-9);   /* unchanged by the unit */
  efflux_figure_dialog_set_size (dialog, 3.5, 2.0);
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_cmpfloat_with_epsilon (o.width_mm, 88.9, 1e-9);
  g_assert_cmpfloat_with_epsilon (o.height_mm, 50.8, 1e-9);
  efflux_figure_dialog_set_unit (dialog, EFFLUX_FIGURE_UNIT_MM);
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_cmpfloat_with_epsilon (o.width_mm, 88.9, 1e-9);

  /* the format follows the name's extension, any case; another extension gets the format's */
  efflux_figure_dialog_set_path (dialog, "/tmp/x/fig.SVG");
  g_assert_cmpint (efflux_figure_dialog_get_format (dialog), ==, EFFLUX_FIGURE_FORMAT_SVG);
  efflux_figure_dialog_set_path (dialog, "/tmp/x/fig.eps");
  g_assert_cmpstr (efflux_figure_dialog_get_path (dialog), ==, "/tmp/x/fig.eps.svg");
  efflux_figure_dialog_set_format (dialog, EFFLUX_FIGURE_FORMAT_PNG);
  g_assert_cmpstr (efflux_figure_dialog_get_path (dialog), ==, "/tmp/x/fig.eps.png");

  /* lobes of the dossier only */
  g_assert_true (efflux_figure_dialog_set_lobe (dialog, "red"));
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_cmpstr (o.lobe, ==, "red");
  g_assert_false (efflux_figure_dialog_set_lobe (dialog, "green"));
  g_assert_true (efflux_figure_dialog_set_lobe (dialog, NULL));
  efflux_figure_dialog_get_options (dialog, &o);
  g_assert_null (o.lobe);

  close_all (window, dialog);
}

static void
test_errors_and_cancel (void)
{
  g_autofree char *dir = g_dir_make_tmp ("efflux-figure-XXXXXX", NULL);
  g_autofree char *bad = g_build_filename (dir, "missing-dir", "fig.png", NULL);
  g_autofree char *good = g_build_filename (dir, "cancelled.pdf", NULL);
  EffluxWindow *window = open_demo ();
  EffluxFigureDialog *dialog = new_dialog (window);
  Finished f = { 0 };
  gint64 deadline;
  gulong id;

  /* a file that cannot be written: the error names it, nothing is left */
  efflux_figure_dialog_set_path (dialog, bad);
  g_assert_false (export_and_wait (dialog));
  g_assert_true (g_str_has_prefix (efflux_figure_dialog_get_status (dialog), bad));
  g_assert_null (efflux_figure_dialog_get_caption (dialog));
  g_assert_cmpuint (count_entries (dir), ==, 0);

  /* Cancel right after Export, while the cubes are read or the figure is drawn (the cubes may come
   * from the store at once): nothing written, no temporary file */
  efflux_figure_dialog_set_path (dialog, good);
  id = g_signal_connect (dialog, "finished", G_CALLBACK (finished_cb), &f);
  efflux_figure_dialog_export (dialog);
  efflux_figure_dialog_cancel (dialog);
  deadline = g_get_monotonic_time () + 60 * G_USEC_PER_SEC;
  while (f.n == 0 && g_get_monotonic_time () < deadline)
    g_main_context_iteration (NULL, TRUE);
  g_signal_handler_disconnect (dialog, id);
  g_assert_cmpint (f.n, ==, 1);
  g_assert_nonnull (f.error);
  g_assert_nonnull (strstr (f.error, "cancelled"));
  g_assert_false (g_file_test (good, G_FILE_TEST_EXISTS));
  g_assert_cmpuint (count_entries (dir), ==, 0);
  g_free (f.path);
  g_free (f.error);

  /* and it works again afterwards */
  g_assert_true (export_and_wait (dialog));
  g_assert_true (g_file_test (good, G_FILE_TEST_IS_REGULAR));
  g_assert_cmpuint (count_entries (dir), ==, 1);
  g_assert_cmpint (g_remove (good), ==, 0);

  /* closing the dialog while it draws cancels: the task lets go of the dialog when it ends (its
   * reference is the only one left besides ours), nothing is written and no temporary file is left */
  g_object_ref (dialog);
  efflux_figure_dialog_export (dialog);
  g_assert_true (efflux_figure_dialog_is_busy (dialog));
  gtk_window_destroy (GTK_WINDOW (dialog));
  deadline = g_get_monotonic_time () + 60 * G_USEC_PER_SEC;
  while (G_OBJECT (dialog)->ref_count > 1 && g_get_monotonic_time () < deadline)
    g_main_context_iteration (NULL, TRUE);
  g_assert_cmpuint (G_OBJECT (dialog)->ref_count, ==, 1);
  g_assert_false (g_file_test (good, G_FILE_TEST_EXISTS));
  g_assert_cmpuint (count_entries (dir), ==, 0);
  g_object_unref (dialog);

  gtk_window_destroy (GTK_WINDOW (window));
  while (g_main_context_iteration (NULL, FALSE))
    ;
  efflux_ui_test_remove_flat_dir (dir);
}

/* A picture of the dialog in the build directory, for the eye (and the help): a few frames, the
 * dialog mapped. */
static void
save_mapped_screenshot (GtkWidget  *widget,
                        const char *name)
{
  efflux_ui_test_run_frames (widget, 3, TRUE);
  g_assert_true (gtk_widget_get_mapped (widget));
  efflux_ui_test_save_screenshot (widget, name);
}

/* win.export-figure (the dossier menu's Export Figure…, Ctrl+Shift+E) opens the dialog. */
static void
test_window_action (void)
{
  EffluxWindow *window = open_demo ();
  GListModel *toplevels = gtk_window_get_toplevels ();
  GtkWindow *found = NULL;

  /* the window's shortcuts hold Ctrl+Shift+E for the action */
  {
    g_autoptr(GListModel) controllers = gtk_widget_observe_controllers (GTK_WIDGET (window));
    gboolean bound = FALSE;

    for (guint i = 0; i < g_list_model_get_n_items (controllers) && !bound; i++)
      {
        g_autoptr(GObject) c = g_list_model_get_item (controllers, i);

        if (!GTK_IS_SHORTCUT_CONTROLLER (c))
          continue;
        for (guint j = 0; j < g_list_model_get_n_items (G_LIST_MODEL (c)) && !bound; j++)
          {
            g_autoptr(GtkShortcut) sc = g_list_model_get_item (G_LIST_MODEL (c), j);
            GtkShortcutAction *action = gtk_shortcut_get_action (sc);
            g_autofree char *trigger = gtk_shortcut_trigger_to_string (gtk_shortcut_get_trigger (sc));

            bound = GTK_IS_NAMED_ACTION (action)
                    && g_strcmp0 (gtk_named_action_get_action_name (GTK_NAMED_ACTION (action)),
                                  "win.export-figure") == 0
                    && g_strcmp0 (trigger, "<Shift><Control>e") == 0;
          }
      }
    g_assert_true (bound);
  }
  g_assert_true (gtk_widget_activate_action (GTK_WIDGET (window), "win.export-figure", NULL));
  for (guint i = 0; i < g_list_model_get_n_items (toplevels) && found == NULL; i++)
    {
      g_autoptr(GtkWindow) w = g_list_model_get_item (toplevels, i);

      if (EFFLUX_IS_FIGURE_DIALOG (w))
        found = w;
    }
  g_assert_nonnull (found);
  g_assert_true (gtk_window_get_modal (found));
  g_assert_true (gtk_window_get_transient_for (found) == GTK_WINDOW (window));
  save_mapped_screenshot (GTK_WIDGET (found), "figure-dialog.png");
  close_all (window, EFFLUX_FIGURE_DIALOG (found));
}

static void
record_progress (double   fraction,
                 gpointer user_data)
{
  g_array_append_val ((GArray *) user_data, fraction);
}

/* The renderer's entry for the dialog: progress over the cubes read, ending at 1; a cancelled
 * cancellable stops it with EFFLUX_ERROR_CANCELLED or G_IO_ERROR_CANCELLED. */
static void
test_figure_new_full (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxDossier) d = efflux_dossier_load (demo, &error);
  g_autoptr(GArray) seen = g_array_new (FALSE, FALSE, sizeof (double));
  g_autoptr(EffluxFigure) figure = NULL;
  g_autoptr(GCancellable) cancellable = g_cancellable_new ();

  g_assert_no_error (error);
  figure = efflux_figure_new_full (d, NULL, record_progress, seen, &error);
  g_assert_no_error (error);
  g_assert_nonnull (figure);
  g_assert_cmpuint (seen->len, >=, 2);
  for (guint i = 1; i < seen->len; i++)
    g_assert_cmpfloat (g_array_index (seen, double, i), >=, g_array_index (seen, double, i - 1));
  g_assert_cmpfloat (g_array_index (seen, double, 0), >=, 0.0);
  g_assert_cmpfloat (g_array_index (seen, double, seen->len - 1), ==, 1.0);
  g_clear_pointer (&figure, efflux_figure_free);

  g_cancellable_cancel (cancellable);
  figure = efflux_figure_new_full (d, cancellable, NULL, NULL, &error);
  g_assert_null (figure);
  g_assert_true (g_error_matches (error, EFFLUX_ERROR, EFFLUX_ERROR_CANCELLED)
                 || g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/figure-dialog/png-matches-cli", test_png_matches_cli);
  g_test_add_func ("/ui/figure-dialog/unsaved-edit", test_unsaved_edit);
  g_test_add_func ("/ui/figure-dialog/vector-formats", test_vector_formats);
  g_test_add_func ("/ui/figure-dialog/channel-range", test_channel_range);
  g_test_add_func ("/ui/figure-dialog/sizes-and-names", test_sizes_and_names);
  g_test_add_func ("/ui/figure-dialog/errors-and-cancel", test_errors_and_cancel);
  g_test_add_func ("/ui/figure-dialog/window-action", test_window_action);
  g_test_add_func ("/ui/figure-dialog/figure-new-full", test_figure_new_full);
  return g_test_run ();
}
