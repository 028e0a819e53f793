/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-figure-dialog"

/* The Export Figure dialog (efflux-figure-dialog.h). The widgets only choose; drawing and writing
 * are efflux_figure_new_shared (with the program's cube store) and efflux_figure_write in a GTask
 * thread, on a copy of the document's dossier. */

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>
#include <string.h>

#include "efflux-cube-store.h"
#include "efflux-figure-dialog.h"
#include "efflux-resources.h"

#define MM_PER_INCH 25.4

static const char *colormap_names[] = { "cubehelix", "grey", "velocity" };
static const char *stretch_names[] = { "linear", "sqrt", "log", "asinh" };
static const char *format_extensions[] = { ".png", ".pdf", ".svg" };

struct _EffluxFigureDialog
{
  GtkWindow parent_instance;

  /* template children */
  GtkWidget      *grid;
  GtkDropDown    *view_dropdown;
  GtkDropDown    *lobe_dropdown;
  GtkDropDown    *cut_dropdown;
  GtkSpinButton  *columns_spin;
  GtkSpinButton  *rows_spin;
  GtkCheckButton *range_check;
  GtkSpinButton  *v1_spin;
  GtkSpinButton  *v2_spin;
  GtkDropDown    *colormap_dropdown;
  GtkDropDown    *stretch_dropdown;
  GtkDropDown    *coords_dropdown;
  GtkSpinButton  *limits_spin;
  GtkCheckButton *fixed_check;
  GtkSpinButton  *limit_lo_spin;
  GtkSpinButton  *limit_hi_spin;
  GtkDropDown    *preset_dropdown;
  GtkDropDown    *unit_dropdown;
  GtkSpinButton  *width_spin;
  GtkSpinButton  *height_spin;
  GtkDropDown    *format_dropdown;
  GtkSpinButton  *dpi_spin;
  GtkLabel       *file_label;
  GtkWidget      *choose_button;
  GtkWidget      *export_button;
  GtkWidget      *progress_box;
  GtkProgressBar *progress;
  GtkLabel       *status_label;

  EffluxDocument *document;
  GPtrArray      *lobe_names;     /* char *, index 0 NULL (every lobe) */
  GPtrArray      *cut_names;      /* char * */
  char           *stem;           /* default file names: directory and the dossier's name */
  char           *path;
  gboolean        path_chosen;
  double          width_mm, height_mm;
  EffluxFigureUnit unit;
  gboolean        updating;
  gboolean        disposed;

  GCancellable   *cancellable;
  gboolean        busy;
  char           *status;
  char           *caption;
  GtkFileChooserNative *chooser;

  /* progress from the worker, handed over under the lock */
  GMutex          progress_lock;
  double          progress_fraction;
  guint           progress_idle;
};

G_DEFINE_FINAL_TYPE (EffluxFigureDialog, efflux_figure_dialog, GTK_TYPE_WINDOW)

enum {
  SIGNAL_FINISHED,
  N_SIGNALS
};

static guint signals[N_SIGNALS];

/* ---- choices ------------------------------------------------------------------------------ */

static double
unit_mm (EffluxFigureUnit unit)
{
  return unit == EFFLUX_FIGURE_UNIT_INCH ? MM_PER_INCH : 1.0;
}

static void
update_sensitivity (EffluxFigureDialog *self)
{
  EffluxFigureView view = gtk_drop_down_get_selected (self->view_dropdown);
  gboolean channels = view == EFFLUX_FIGURE_CHANNELS;
  gboolean has_image = view == EFFLUX_FIGURE_SKY || view == EFFLUX_FIGURE_CUT || channels;
  gboolean sky = view == EFFLUX_FIGURE_SKY || channels;

  gtk_widget_set_sensitive (self->grid, !self->busy);
  gtk_widget_set_sensitive (self->export_button, !self->busy && self->path != NULL);
  gtk_widget_set_sensitive (GTK_WIDGET (self->cut_dropdown),
                            view == EFFLUX_FIGURE_CUT && self->cut_names->len > 0);
  gtk_widget_set_sensitive (GTK_WIDGET (self->columns_spin), channels);
  gtk_widget_set_sensitive (GTK_WIDGET (self->rows_spin), channels);
  gtk_widget_set_sensitive (GTK_WIDGET (self->range_check), channels);
  gtk_widget_set_sensitive (GTK_WIDGET (self->v1_spin),
                            channels && gtk_check_button_get_active (self->range_check));
  gtk_widget_set_sensitive (GTK_WIDGET (self->v2_spin),
                            channels && gtk_check_button_get_active (self->range_check));
  gtk_widget_set_sensitive (GTK_WIDGET (self->colormap_dropdown), has_image);
  gtk_widget_set_sensitive (GTK_WIDGET (self->stretch_dropdown), has_image);
  gtk_widget_set_sensitive (GTK_WIDGET (self->fixed_check), has_image);
  gtk_widget_set_sensitive (GTK_WIDGET (self->limits_spin),
                            has_image && !gtk_check_button_get_active (self->fixed_check));
  gtk_widget_set_sensitive (GTK_WIDGET (self->limit_lo_spin),
                            has_image && gtk_check_button_get_active (self->fixed_check));
  gtk_widget_set_sensitive (GTK_WIDGET (self->limit_hi_spin),
                            has_image && gtk_check_button_get_active (self->fixed_check));
  gtk_widget_set_sensitive (GTK_WIDGET (self->coords_dropdown), sky);
  gtk_widget_set_sensitive (GTK_WIDGET (self->dpi_spin),
                            gtk_drop_down_get_selected (self->format_dropdown) == EFFLUX_FIGURE_FORMAT_PNG);
}

static void
show_path (EffluxFigureDialog *self)
{
  g_autofree char *display = self->path != NULL ? g_filename_display_name (self->path) : NULL;

  gtk_label_set_text (self->file_label, display != NULL ? display : "");
  gtk_widget_set_tooltip_text (GTK_WIDGET (self->file_label), display);
  update_sensitivity (self);
}

/* path with its extension replaced by (or, without a figure extension, given) the format's. */
static char *
path_with_format (const char         *path,
                  EffluxFigureFormat  format)
{
  EffluxFigureFormat old;

  if (efflux_figure_format_from_path (path, &old))
    {
      g_autofree char *stem = g_strndup (path, strlen (path) - strlen (format_extensions[old]));

      return g_strconcat (stem, format_extensions[format], NULL);
    }
  return g_strconcat (path, format_extensions[format], NULL);
}

static void
default_path (EffluxFigureDialog *self)
{
  EffluxFigureView view = gtk_drop_down_get_selected (self->view_dropdown);
  EffluxFigureFormat format = gtk_drop_down_get_selected (self->format_dropdown);

  if (self->path_chosen)
    return;
  g_free (self->path);
  self->path = g_strdup_printf ("%s-%s%s", self->stem, efflux_figure_view_to_string (view),
                                format_extensions[format]);
  show_path (self);
}

static void
view_changed (EffluxFigureDialog *self)
{
  default_path (self);
  update_sensitivity (self);
}

static void
format_changed (EffluxFigureDialog *self)
{
  EffluxFigureFormat format = gtk_drop_down_get_selected (self->format_dropdown);

  if (self->updating)
    return;
  if (self->path_chosen && self->path != NULL)
    {
      char *path = path_with_format (self->path, format);

      g_free (self->path);
      self->path = path;
      show_path (self);
    }
  else
    default_path (self);
  update_sensitivity (self);
}

static void
set_spins_mm (EffluxFigureDialog *self)
{
  double f = unit_mm (self->unit);

  self->updating = TRUE;
  gtk_spin_button_set_value (self->width_spin, self->width_mm / f);
  gtk_spin_button_set_value (self->height_spin, self->height_mm / f);
  self->updating = FALSE;
}

static void
update_preset (EffluxFigureDialog *self)
{
  guint preset = 2;

  if (fabs (self->width_mm - EFFLUX_FIGURE_ONE_COLUMN_MM) < 1e-9)
    preset = 0;
  else if (fabs (self->width_mm - EFFLUX_FIGURE_TWO_COLUMNS_MM) < 1e-9)
    preset = 1;
  self->updating = TRUE;
  gtk_drop_down_set_selected (self->preset_dropdown, preset);
  self->updating = FALSE;
}

static void
preset_changed (EffluxFigureDialog *self)
{
  guint preset = gtk_drop_down_get_selected (self->preset_dropdown);

  if (self->updating || preset > 1)
    return;
  self->width_mm = preset == 0 ? EFFLUX_FIGURE_ONE_COLUMN_MM : EFFLUX_FIGURE_TWO_COLUMNS_MM;
  set_spins_mm (self);
}

static void
unit_changed (EffluxFigureDialog *self)
{
  self->unit = gtk_drop_down_get_selected (self->unit_dropdown) == 1 ? EFFLUX_FIGURE_UNIT_INCH
                                                                       : EFFLUX_FIGURE_UNIT_MM;
  set_spins_mm (self);
}

static void
size_changed (EffluxFigureDialog *self)
{
  double f = unit_mm (self->unit);

  if (self->updating)
    return;
  self->width_mm = gtk_spin_button_get_value (self->width_spin) * f;
  self->height_mm = gtk_spin_button_get_value (self->height_spin) * f;
  update_preset (self);
}

/* The height spin shows "auto" for 0 (as tall as the layout needs) and reads it back. */
static gboolean
height_output (GtkSpinButton *spin,
               gpointer       user_data)
{
  double value = gtk_spin_button_get_value (spin);

  if (value > 0)
    return FALSE;
  gtk_editable_set_text (GTK_EDITABLE (spin), _("auto"));
  return TRUE;
}

static int
height_input (GtkSpinButton *spin,
              double        *value,
              gpointer       user_data)
{
  const char *text = gtk_editable_get_text (GTK_EDITABLE (spin));

  if (g_strcmp0 (text, _("auto")) != 0 && g_strcmp0 (text, "auto") != 0)
    return FALSE;
  *value = 0.0;
  return TRUE;
}

/* ---- the file chooser --------------------------------------------------------------------- */

static void
chooser_response (GtkNativeDialog    *dialog,
                  int                 response,
                  EffluxFigureDialog *self)
{
  if (response == GTK_RESPONSE_ACCEPT && !self->disposed)
    {
      g_autoptr(GFile) file = gtk_file_chooser_get_file (GTK_FILE_CHOOSER (dialog));
      g_autofree char *path = file != NULL ? g_file_get_path (file) : NULL;

      if (path != NULL)
        efflux_figure_dialog_set_path (self, path);
    }
  g_clear_object (&self->chooser);
}

static void
choose_clicked (EffluxFigureDialog *self)
{
  g_autoptr(GFile) folder = NULL;
  g_autofree char *dir = NULL;
  g_autofree char *name = NULL;

  if (self->chooser != NULL)
    return;
  self->chooser = gtk_file_chooser_native_new (_("Export Figure"), GTK_WINDOW (self),
                                               GTK_FILE_CHOOSER_ACTION_SAVE, _("_Export"), _("_Cancel"));
  gtk_native_dialog_set_modal (GTK_NATIVE_DIALOG (self->chooser), TRUE);
  if (self->path != NULL)
    {
      dir = g_path_get_dirname (self->path);
      name = g_path_get_basename (self->path);
      folder = g_file_new_for_path (dir);
      gtk_file_chooser_set_current_folder (GTK_FILE_CHOOSER (self->chooser), folder, NULL);
      gtk_file_chooser_set_current_name (GTK_FILE_CHOOSER (self->chooser), name);
    }
  {
    const char *patterns[] = { "*.png", "*.pdf", "*.svg" };
    const char *names[] = { N_("PNG image"), N_("PDF (vector)"), N_("SVG (vector)") };

    for (gsize i = 0; i < G_N_ELEMENTS (patterns); i++)
      {
        g_autoptr(GtkFileFilter) filter = gtk_file_filter_new ();

        gtk_file_filter_set_name (filter, _(names[i]));
        gtk_file_filter_add_pattern (filter, patterns[i]);
        gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (self->chooser), filter);
      }
  }
  g_signal_connect (self->chooser, "response", G_CALLBACK (chooser_response), self);
  gtk_native_dialog_show (GTK_NATIVE_DIALOG (self->chooser));
}

/* ---- drawing in a thread ------------------------------------------------------------------ */

typedef struct
{
  EffluxDossier       *dossier;   /* a copy of the document's, owned */
  EffluxFigureOptions  options;   /* its strings are cut and lobe below */
  char                *cut;
  char                *lobe;
  char                *path;
  char                *caption;   /* out */
} ExportJob;

static void
export_job_free (gpointer data)
{
  ExportJob *job = data;

  g_clear_pointer (&job->dossier, efflux_dossier_free);
  g_free (job->cut);
  g_free (job->lobe);
  g_free (job->path);
  g_free (job->caption);
  g_free (job);
}

static gboolean
progress_idle_cb (gpointer user_data)
{
  EffluxFigureDialog *self = user_data;
  double fraction;

  g_mutex_lock (&self->progress_lock);
  fraction = self->progress_fraction;
  self->progress_idle = 0;
  g_mutex_unlock (&self->progress_lock);
  if (!self->disposed && self->busy)
    gtk_progress_bar_set_fraction (self->progress, fraction);
  return G_SOURCE_REMOVE;
}

/* On the worker: store the fraction, schedule one idle on the main thread. */
static void
set_progress (EffluxFigureDialog *self,
              double              fraction)
{
  g_mutex_lock (&self->progress_lock);
  self->progress_fraction = fraction;
  if (self->progress_idle == 0)
    self->progress_idle = g_idle_add_full (G_PRIORITY_DEFAULT, progress_idle_cb, g_object_ref (self),
                                           g_object_unref);
  g_mutex_unlock (&self->progress_lock);
}

/* Reading the cubes is most of the work; drawing and writing the rest. */
static void
load_progress (double   fraction,
               gpointer user_data)
{
  set_progress (user_data, 0.8 * fraction);
}

static void
export_worker (GTask        *task,
               gpointer      source_object,
               gpointer      task_data,
               GCancellable *cancellable)
{
  EffluxFigureDialog *self = source_object;
  ExportJob *job = task_data;
  g_autoptr(EffluxFigure) figure = NULL;
  GError *error = NULL;

  if (g_cancellable_set_error_if_cancelled (cancellable, &error))
    {
      g_task_return_error (task, error);
      return;
    }
  /* the cubes the window and the document hold are drawn from, not read again (and not held twice) */
  figure = efflux_figure_new_shared (job->dossier, efflux_cube_store_load, (GDestroyNotify) efflux_cube_store_release,
                                     cancellable, load_progress, self, &error);
  if (figure == NULL)
    {
      g_task_return_error (task, error);
      return;
    }
  set_progress (self, 0.85);
  if (g_cancellable_set_error_if_cancelled (cancellable, &error)
      || !efflux_figure_write_full (figure, &job->options, job->path, cancellable, &error))
    {
      g_task_return_error (task, error);
      return;
    }
  job->caption = g_strdup (efflux_figure_caption (figure));
  set_progress (self, 1.0);
  g_task_return_boolean (task, TRUE);
}

static void
set_status (EffluxFigureDialog *self,
            char               *status,
            gboolean            failed)
{
  g_free (self->status);
  self->status = status;
  gtk_label_set_text (self->status_label, status);
  gtk_widget_set_visible (GTK_WIDGET (self->status_label), status != NULL);
  if (failed)
    gtk_widget_add_css_class (GTK_WIDGET (self->status_label), "error");
  else
    gtk_widget_remove_css_class (GTK_WIDGET (self->status_label), "error");
}

static void
set_busy (EffluxFigureDialog *self,
          gboolean            busy)
{
  self->busy = busy;
  gtk_widget_set_visible (self->progress_box, busy);
  update_sensitivity (self);
}

static void
export_done (GObject      *object,
             GAsyncResult *result,
             gpointer      user_data)
{
  EffluxFigureDialog *self = EFFLUX_FIGURE_DIALOG (object);
  ExportJob *job = g_task_get_task_data (G_TASK (result));
  g_autoptr(GError) error = NULL;
  g_autofree char *display = g_filename_display_name (job->path);
  gboolean ok = g_task_propagate_boolean (G_TASK (result), &error);

  if (self->disposed)
    return;
  g_clear_object (&self->cancellable);
  set_busy (self, FALSE);
  g_free (self->caption);
  self->caption = ok ? g_strdup (job->caption) : NULL;
  if (ok)
    set_status (self, g_strdup_printf (_("Written: %s"), display), FALSE);
  else if (g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED)
           || g_error_matches (error, EFFLUX_ERROR, EFFLUX_ERROR_CANCELLED))
    set_status (self, g_strdup_printf (_("%s: cancelled, nothing written"), display), TRUE);
  else if (g_str_has_prefix (error->message, job->path))
    set_status (self, g_strdup (error->message), TRUE);
  else
    /* the message names an input (a cube, the dossier): say which output it stopped */
    set_status (self, g_strdup_printf (_("%s: not written: %s"), display, error->message), TRUE);
  g_signal_emit (self, signals[SIGNAL_FINISHED], 0, job->path, ok ? NULL : self->status);
}

/* A copy of the document's dossier as it is now (unsaved edits included), with the lines the
 * document guessed from the cubes. */
static EffluxDossier *
snapshot_dossier (const EffluxDossier  *dossier,
                  GError              **error)
{
  gsize length = 0;
  g_autofree char *data = efflux_dossier_to_data ((EffluxDossier *) dossier, &length);
  EffluxDossier *copy = efflux_dossier_new_from_data (data, (gssize) length, dossier->path,
                                                      dossier->dir, error);

  if (copy != NULL)
    for (guint i = 0; i < copy->cubes->len; i++)
      {
        EffluxDossierCube *nc = g_ptr_array_index (copy->cubes, i);
        EffluxDossierCube *oc = efflux_dossier_find_cube (dossier, nc->id);

        if (nc->line == NULL && oc != NULL && oc->line != NULL)
          efflux_dossier_cube_set_line (nc, oc->line);
      }
  return copy;
}

void
efflux_figure_dialog_export (EffluxFigureDialog *self)
{
  g_autoptr(GTask) task = NULL;
  g_autoptr(GError) error = NULL;
  const EffluxDossier *dossier;
  ExportJob *job;

  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  if (self->busy || self->path == NULL)
    return;
  dossier = self->document != NULL ? efflux_document_get_dossier (self->document) : NULL;
  if (dossier == NULL)
    {
      set_status (self, g_strdup (_("No dossier is open")), TRUE);
      return;
    }
  job = g_new0 (ExportJob, 1);
  job->dossier = snapshot_dossier (dossier, &error);
  if (job->dossier == NULL)
    {
      set_status (self, g_strdup (error->message), TRUE);
      export_job_free (job);
      return;
    }
  efflux_figure_dialog_get_options (self, &job->options);
  job->cut = g_strdup (job->options.cut);
  job->lobe = g_strdup (job->options.lobe);
  job->options.cut = job->cut;
  job->options.lobe = job->lobe;
  job->path = g_strdup (self->path);

  set_status (self, NULL, FALSE);
  self->cancellable = g_cancellable_new ();
  gtk_progress_bar_set_fraction (self->progress, 0.0);
  set_busy (self, TRUE);
  task = g_task_new (self, self->cancellable, export_done, NULL);
  g_task_set_source_tag (task, efflux_figure_dialog_export);
  g_task_set_task_data (task, job, export_job_free);
  /* report what happened: a file written just before Cancel is a file written */
  g_task_set_check_cancellable (task, FALSE);
  g_task_run_in_thread (task, export_worker);
}

void
efflux_figure_dialog_cancel (EffluxFigureDialog *self)
{
  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
}

static void
export_clicked (EffluxFigureDialog *self)
{
  efflux_figure_dialog_export (self);
}

static void
cancel_clicked (EffluxFigureDialog *self)
{
  efflux_figure_dialog_cancel (self);
}

static void
close_clicked (EffluxFigureDialog *self)
{
  gtk_window_close (GTK_WINDOW (self));
}

/* ---- public ------------------------------------------------------------------------------- */

void
efflux_figure_dialog_get_options (EffluxFigureDialog  *self,
                                  EffluxFigureOptions *o)
{
  guint lobe = gtk_drop_down_get_selected (self->lobe_dropdown);
  guint cut = gtk_drop_down_get_selected (self->cut_dropdown);
  guint cmap = gtk_drop_down_get_selected (self->colormap_dropdown);
  guint stretch = gtk_drop_down_get_selected (self->stretch_dropdown);

  efflux_figure_options_init (o);
  o->view = gtk_drop_down_get_selected (self->view_dropdown);
  o->width_mm = self->width_mm;
  o->height_mm = self->height_mm;
  o->dpi = gtk_spin_button_get_value (self->dpi_spin);
  o->cut = cut < self->cut_names->len ? g_ptr_array_index (self->cut_names, cut) : NULL;
  o->lobe = lobe < self->lobe_names->len ? g_ptr_array_index (self->lobe_names, lobe) : NULL;
  o->grid_nx = (guint) gtk_spin_button_get_value_as_int (self->columns_spin);
  o->grid_ny = (guint) gtk_spin_button_get_value_as_int (self->rows_spin);
  if (cmap < G_N_ELEMENTS (colormap_names))
    efflux_colormap_kind_from_string (colormap_names[cmap], &o->colormap);
  if (stretch < G_N_ELEMENTS (stretch_names))
    efflux_stretch_kind_from_string (stretch_names[stretch], &o->stretch);
  o->coords = gtk_drop_down_get_selected (self->coords_dropdown) == 1 ? EFFLUX_SKYGRID_OFFSETS
                                                                       : EFFLUX_SKYGRID_SEXAGESIMAL;
  o->limits_percent = gtk_spin_button_get_value (self->limits_spin);
  /* fixed limits in the wrong order are left to the percentage (the figure ignores them) */
  if (gtk_check_button_get_active (self->fixed_check))
    {
      o->limit_lo = gtk_spin_button_get_value (self->limit_lo_spin);
      o->limit_hi = gtk_spin_button_get_value (self->limit_hi_spin);
    }
  if (gtk_check_button_get_active (self->range_check))
    {
      o->channel_v1_kms = gtk_spin_button_get_value (self->v1_spin);
      o->channel_v2_kms = gtk_spin_button_get_value (self->v2_spin);
    }
}

void
efflux_figure_dialog_set_view (EffluxFigureDialog *self,
                               EffluxFigureView    view)
{
  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self) && view < EFFLUX_N_FIGURE_VIEWS);
  gtk_drop_down_set_selected (self->view_dropdown, view);
}

static gboolean
select_name (GtkDropDown *dropdown,
             GPtrArray   *names,
             const char  *name)
{
  for (guint i = 0; i < names->len; i++)
    if (g_strcmp0 (g_ptr_array_index (names, i), name) == 0)
      {
        gtk_drop_down_set_selected (dropdown, i);
        return TRUE;
      }
  return FALSE;
}

gboolean
efflux_figure_dialog_set_lobe (EffluxFigureDialog *self,
                               const char         *lobe)
{
  g_return_val_if_fail (EFFLUX_IS_FIGURE_DIALOG (self), FALSE);
  return select_name (self->lobe_dropdown, self->lobe_names, lobe);
}

gboolean
efflux_figure_dialog_set_cut (EffluxFigureDialog *self,
                              const char         *cut)
{
  g_return_val_if_fail (EFFLUX_IS_FIGURE_DIALOG (self), FALSE);
  return cut != NULL && select_name (self->cut_dropdown, self->cut_names, cut);
}

void
efflux_figure_dialog_set_grid (EffluxFigureDialog *self,
                               guint               columns,
                               guint               rows)
{
  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  gtk_spin_button_set_value (self->columns_spin, columns);
  gtk_spin_button_set_value (self->rows_spin, rows);
}

void
efflux_figure_dialog_set_channel_range (EffluxFigureDialog *self,
                                        double              v1_kms,
                                        double              v2_kms)
{
  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  if (v1_kms < v2_kms)
    {
      gtk_spin_button_set_value (self->v1_spin, v1_kms);
      gtk_spin_button_set_value (self->v2_spin, v2_kms);
    }
  gtk_check_button_set_active (self->range_check, v1_kms < v2_kms);
}

void
efflux_figure_dialog_set_fixed_limits (EffluxFigureDialog *self,
                                       double              lo,
                                       double              hi)
{
  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  if (lo < hi)
    {
      gtk_spin_button_set_value (self->limit_lo_spin, lo);
      gtk_spin_button_set_value (self->limit_hi_spin, hi);
    }
  gtk_check_button_set_active (self->fixed_check, lo < hi);
}

void
efflux_figure_dialog_set_unit (EffluxFigureDialog *self,
                               EffluxFigureUnit    unit)
{
  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  gtk_drop_down_set_selected (self->unit_dropdown, unit == EFFLUX_FIGURE_UNIT_INCH ? 1 : 0);
}

void
efflux_figure_dialog_set_size (EffluxFigureDialog *self,
                               double              width,
                               double              height)
{
  double f;

  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  f = unit_mm (self->unit);
  self->width_mm = width * f;
  self->height_mm = height * f;
  set_spins_mm (self);
  update_preset (self);
}

void
efflux_figure_dialog_set_dpi (EffluxFigureDialog *self,
                              double              dpi)
{
  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  gtk_spin_button_set_value (self->dpi_spin, dpi);
}

void
efflux_figure_dialog_set_format (EffluxFigureDialog *self,
                                 EffluxFigureFormat  format)
{
  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self));
  gtk_drop_down_set_selected (self->format_dropdown, format);
}

EffluxFigureFormat
efflux_figure_dialog_get_format (EffluxFigureDialog *self)
{
  g_return_val_if_fail (EFFLUX_IS_FIGURE_DIALOG (self), EFFLUX_FIGURE_FORMAT_PNG);
  return gtk_drop_down_get_selected (self->format_dropdown);
}

void
efflux_figure_dialog_set_path (EffluxFigureDialog *self,
                               const char         *path)
{
  EffluxFigureFormat format;

  g_return_if_fail (EFFLUX_IS_FIGURE_DIALOG (self) && path != NULL);
  g_free (self->path);
  if (efflux_figure_format_from_path (path, &format))
    {
      self->path = g_strdup (path);
      self->updating = TRUE;
      gtk_drop_down_set_selected (self->format_dropdown, format);
      self->updating = FALSE;
    }
  else
    self->path = path_with_format (path, gtk_drop_down_get_selected (self->format_dropdown));
  self->path_chosen = TRUE;
  show_path (self);
}

const char *
efflux_figure_dialog_get_path (EffluxFigureDialog *self)
{
  g_return_val_if_fail (EFFLUX_IS_FIGURE_DIALOG (self), NULL);
  return self->path;
}

gboolean
efflux_figure_dialog_is_busy (EffluxFigureDialog *self)
{
  g_return_val_if_fail (EFFLUX_IS_FIGURE_DIALOG (self), FALSE);
  return self->busy;
}

const char *
efflux_figure_dialog_get_status (EffluxFigureDialog *self)
{
  g_return_val_if_fail (EFFLUX_IS_FIGURE_DIALOG (self), NULL);
  return self->status;
}

const char *
efflux_figure_dialog_get_caption (EffluxFigureDialog *self)
{
  g_return_val_if_fail (EFFLUX_IS_FIGURE_DIALOG (self), NULL);
  return self->caption;
}

/* The dossier's lobes and cuts in the dropdowns, the channel range from the lobes, the file name
 * from the dossier's. */
static void
fill_from_dossier (EffluxFigureDialog  *self,
                   const EffluxDossier *d)
{
  g_autoptr(GtkStringList) lobes = gtk_string_list_new (NULL);
  g_autoptr(GtkStringList) cuts = gtk_string_list_new (NULL);
  double vlo = INFINITY, vhi = -INFINITY;
  g_autofree char *dir = NULL;
  g_autofree char *base = NULL;

  gtk_string_list_append (lobes, _("Every lobe"));
  g_ptr_array_add (self->lobe_names, NULL);
  for (guint i = 0; d != NULL && i < d->lobes->len; i++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);

      gtk_string_list_append (lobes, lobe->name);
      g_ptr_array_add (self->lobe_names, g_strdup (lobe->name));
      vlo = MIN (vlo, lobe->v1_kms);
      vhi = MAX (vhi, lobe->v2_kms);
    }
  for (guint i = 0; d != NULL && i < d->cuts->len; i++)
    {
      const EffluxDossierCut *cut = g_ptr_array_index (d->cuts, i);

      gtk_string_list_append (cuts, cut->name);
      g_ptr_array_add (self->cut_names, g_strdup (cut->name));
    }
  if (self->cut_names->len == 0)
    gtk_string_list_append (cuts, _("The dossier has no cut"));
  gtk_drop_down_set_model (self->lobe_dropdown, G_LIST_MODEL (lobes));
  gtk_drop_down_set_model (self->cut_dropdown, G_LIST_MODEL (cuts));
  if (vlo < vhi)
    {
      gtk_spin_button_set_value (self->v1_spin, vlo);
      gtk_spin_button_set_value (self->v2_spin, vhi);
    }

  if (d != NULL && d->path != NULL)
    {
      dir = g_path_get_dirname (d->path);
      base = g_path_get_basename (d->path);
      if (strrchr (base, '.') != NULL && strrchr (base, '.') != base)
        *strrchr (base, '.') = '\0';
    }
  else
    {
      dir = g_strdup (g_get_home_dir ());
      base = g_strdup ("figure");
    }
  if (!g_path_is_absolute (dir))
    {
      g_autofree char *cwd = g_get_current_dir ();
      char *abs = g_build_filename (cwd, dir, NULL);

      g_free (dir);
      dir = abs;
    }
  self->stem = g_build_filename (dir, base, NULL);
}

/* The Sky view's display choices as the dialog's starting ones. */
static void
take_display (EffluxFigureDialog *self,
              EffluxSkyView      *sky_view)
{
  g_autofree char *colormap = NULL;
  g_autofree char *stretch = NULL;
  g_autofree char *grid = NULL;
  double limits = 99.5;

  g_object_get (sky_view, "colormap", &colormap, "stretch", &stretch, "limits", &limits,
                "grid", &grid, NULL);
  for (guint i = 0; i < G_N_ELEMENTS (colormap_names); i++)
    if (g_strcmp0 (colormap, colormap_names[i]) == 0)
      gtk_drop_down_set_selected (self->colormap_dropdown, i);
  for (guint i = 0; i < G_N_ELEMENTS (stretch_names); i++)
    if (g_strcmp0 (stretch, stretch_names[i]) == 0)
      gtk_drop_down_set_selected (self->stretch_dropdown, i);
  /* "none" (no grid on screen): a paper's figure keeps its axes, in RA and Dec */
  gtk_drop_down_set_selected (self->coords_dropdown, g_strcmp0 (grid, "offsets") == 0 ? 1 : 0);
  if (isfinite (limits))
    gtk_spin_button_set_value (self->limits_spin, limits);
}

GtkWidget *
efflux_figure_dialog_new (GtkWindow      *parent,
                          EffluxDocument *document,
                          EffluxSkyView  *sky_view)
{
  EffluxFigureDialog *self;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (document), NULL);
  self = g_object_new (EFFLUX_TYPE_FIGURE_DIALOG, "transient-for", parent, "modal", TRUE, NULL);
  self->document = g_object_ref (document);
  fill_from_dossier (self, efflux_document_get_dossier (document));
  if (sky_view != NULL)
    take_display (self, sky_view);
  default_path (self);
  update_sensitivity (self);
  return GTK_WIDGET (self);
}

/* ---- GObject ------------------------------------------------------------------------------ */

static void
efflux_figure_dialog_dispose (GObject *object)
{
  EffluxFigureDialog *self = EFFLUX_FIGURE_DIALOG (object);

  self->disposed = TRUE;
  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  if (self->chooser != NULL)
    {
      gtk_native_dialog_destroy (GTK_NATIVE_DIALOG (self->chooser));
      g_clear_object (&self->chooser);
    }
  g_clear_object (&self->document);
  gtk_widget_dispose_template (GTK_WIDGET (self), EFFLUX_TYPE_FIGURE_DIALOG);
  G_OBJECT_CLASS (efflux_figure_dialog_parent_class)->dispose (object);
}

/* Closed (gtk_window_destroy unrealizes; the running task may still hold a reference): stop
 * drawing, nothing is written. */
static void
efflux_figure_dialog_unrealize (GtkWidget *widget)
{
  EffluxFigureDialog *self = EFFLUX_FIGURE_DIALOG (widget);

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  GTK_WIDGET_CLASS (efflux_figure_dialog_parent_class)->unrealize (widget);
}

static void
efflux_figure_dialog_finalize (GObject *object)
{
  EffluxFigureDialog *self = EFFLUX_FIGURE_DIALOG (object);

  g_ptr_array_unref (self->lobe_names);
  g_ptr_array_unref (self->cut_names);
  g_free (self->stem);
  g_free (self->path);
  g_free (self->status);
  g_free (self->caption);
  g_mutex_clear (&self->progress_lock);
  G_OBJECT_CLASS (efflux_figure_dialog_parent_class)->finalize (object);
}

static void
efflux_figure_dialog_class_init (EffluxFigureDialogClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_figure_dialog_dispose;
  object_class->finalize = efflux_figure_dialog_finalize;
  widget_class->unrealize = efflux_figure_dialog_unrealize;

  signals[SIGNAL_FINISHED] =
    g_signal_new ("finished", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                  G_TYPE_NONE, 2, G_TYPE_STRING, G_TYPE_STRING);

  g_assert (efflux_get_resource () != NULL);
  gtk_widget_class_set_template_from_resource (widget_class,
                                               "/org/effluxproject/Efflux/efflux-figure-dialog.ui");
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, grid);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, view_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, lobe_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, cut_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, columns_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, rows_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, range_check);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, v1_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, v2_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, colormap_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, stretch_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, coords_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, limits_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, fixed_check);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, limit_lo_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, limit_hi_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, preset_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, unit_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, width_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, height_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, format_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, dpi_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, file_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, choose_button);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, export_button);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, progress_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, progress);
  gtk_widget_class_bind_template_child (widget_class, EffluxFigureDialog, status_label);
  gtk_widget_class_bind_template_callback (widget_class, export_clicked);
  gtk_widget_class_bind_template_callback (widget_class, cancel_clicked);
  gtk_widget_class_bind_template_callback (widget_class, close_clicked);
  gtk_widget_class_bind_template_callback (widget_class, choose_clicked);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_Escape, 0, "window.close", NULL);
}

static void
efflux_figure_dialog_init (EffluxFigureDialog *self)
{
  g_mutex_init (&self->progress_lock);
  self->lobe_names = g_ptr_array_new_with_free_func (g_free);
  self->cut_names = g_ptr_array_new_with_free_func (g_free);
  self->width_mm = EFFLUX_FIGURE_ONE_COLUMN_MM;
  self->height_mm = 0.0;
  self->unit = EFFLUX_FIGURE_UNIT_MM;
  gtk_widget_init_template (GTK_WIDGET (self));
  gtk_window_set_default_widget (GTK_WINDOW (self), self->export_button);

  g_signal_connect_swapped (self->view_dropdown, "notify::selected", G_CALLBACK (view_changed), self);
  g_signal_connect_swapped (self->format_dropdown, "notify::selected", G_CALLBACK (format_changed), self);
  g_signal_connect_swapped (self->preset_dropdown, "notify::selected", G_CALLBACK (preset_changed), self);
  g_signal_connect_swapped (self->unit_dropdown, "notify::selected", G_CALLBACK (unit_changed), self);
  g_signal_connect_swapped (self->width_spin, "value-changed", G_CALLBACK (size_changed), self);
  g_signal_connect_swapped (self->height_spin, "value-changed", G_CALLBACK (size_changed), self);
  g_signal_connect (self->height_spin, "output", G_CALLBACK (height_output), NULL);
  g_signal_connect (self->height_spin, "input", G_CALLBACK (height_input), NULL);
  g_signal_connect_swapped (self->range_check, "toggled", G_CALLBACK (update_sensitivity), self);
  g_signal_connect_swapped (self->fixed_check, "toggled", G_CALLBACK (update_sensitivity), self);
  set_spins_mm (self);
}
