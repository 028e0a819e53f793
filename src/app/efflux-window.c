/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-window"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>
#include <string.h>

#include "efflux-assumptions.h"
#include "efflux-autosave.h"
#include "efflux-banner.h"
#include "efflux-cut-tools.h"
#include "efflux-cube-store.h"
#include "efflux-cut-view.h"
#include "efflux-ledger.h"
#include "efflux-spectrum-view.h"
#include "efflux-cube.h"
#include "efflux-document.h"
#include "efflux-figure-dialog.h"
#include "efflux-dossier.h"
#include "efflux-maps.h"
#include "efflux-resources.h"
#include "efflux-review-sheet.h"
#include "efflux-sky-view.h"
#include "efflux-sources.h"
#include "efflux-window.h"

struct _EffluxWindow
{
  GtkApplicationWindow parent_instance;

  /* template children */
  GtkLabel        *source_label;
  GtkLabel        *subtitle_label;
  GtkLabel        *detail_label;
  GtkLabel        *readout_label;
  GtkLabel        *loading_label;
  GtkProgressBar  *progress;
  GtkButton       *cancel_button;
  GtkWidget       *loading_box;
  GtkWidget       *empty_box;
  EffluxSkyView   *sky_view;
  EffluxSources   *sources;
  EffluxReviewSheet *review_sheet;
  GtkWidget       *lobe_bar;
  GtkLabel        *lobe_label;
  GtkDropDown     *kind_dropdown;
  GtkDropDown     *cube_dropdown;
  GtkSpinButton   *v1_spin;
  GtkSpinButton   *v2_spin;
  GtkLabel        *edit_error_label;
  GtkLabel        *ledger_label;
  GtkWidget       *cut_box;
  GtkWidget       *spectrum_box;
  GtkWidget       *ledger_box;
  GtkRevealer     *assumptions_revealer;
  EffluxAssumptions *assumptions;
  GMenu           *recent_menu;
  EffluxBanner    *banner;         /* the message area (efflux_window_show_error) */
  EffluxAutosave  *autosave;       /* the document's recovery file (efflux-autosave.h) */

  GCancellable    *cancellable;
  GCancellable    *measure_cancellable;
  EffluxDocument  *document;
  EffluxCutView   *cut_view;
  EffluxCutTools  *cut_tools;
  EffluxSpectrumView *spectrum_view;
  EffluxLedger    *ledger;
  GPtrArray       *shown_lobes;    /* lobe names whose ranges the views show */
  char            *spectrum_lobe;
  char            *shown_cube_id;
  guint            range_merge;
  EffluxCube      *cut_cube;       /* the cube the Cut view's set was made on (kept while shown) */
  guint            spectrum_timeout;
  GCancellable    *spectrum_cancellable;   /* the lobe spectrum being averaged in a worker */
  gboolean         close_confirmed;
  gboolean         measure_started;
  gboolean         show_assumptions;
  gboolean         updating_lobe_bar;
  EffluxCube      *cube;
  char            *source_name;
  gboolean         has_range;
  double           range_v1, range_v2;

  /* progress from the worker, handed over under the lock */
  GMutex           progress_lock;
  double           progress_fraction;
  guint            progress_idle;
};

G_DEFINE_FINAL_TYPE (EffluxWindow, efflux_window, GTK_TYPE_APPLICATION_WINDOW)

enum {
  PROP_0,
  PROP_SHOW_ASSUMPTIONS,
  N_PROPS
};

static GParamSpec *properties[N_PROPS];

static void fill_recent_menu (EffluxWindow *self);

static void
update_title (EffluxWindow *self)
{
  g_autofree char *title = NULL;

  gboolean modified = self->document != NULL && efflux_document_get_modified (self->document);

  if (self->source_name != NULL && *self->source_name != '\0')
    /* Translators: the window title, "SOURCE - Efflux", with a mark when there are unsaved changes */
    title = g_strdup_printf (modified ? _("• %s - Efflux") : _("%s - Efflux"), self->source_name);
  else
    title = g_strdup (_("Efflux"));
  gtk_window_set_title (GTK_WINDOW (self), title);
  gtk_label_set_text (self->source_label,
                      self->source_name && *self->source_name ? self->source_name : _("Efflux"));
}

static void
set_subtitle (EffluxWindow *self,
              const char   *text)
{
  gtk_label_set_text (self->subtitle_label, text ? text : "");
  gtk_widget_set_visible (GTK_WIDGET (self->subtitle_label), text != NULL && *text != '\0');
}

static gboolean
progress_idle_cb (gpointer user_data)
{
  EffluxWindow *self = user_data;
  double fraction;

  g_mutex_lock (&self->progress_lock);
  fraction = self->progress_fraction;
  self->progress_idle = 0;
  g_mutex_unlock (&self->progress_lock);
  gtk_progress_bar_set_fraction (self->progress, fraction);
  return G_SOURCE_REMOVE;
}

/* Called on the worker thread: store the fraction, schedule one idle on the main thread. */
static void
load_progress (double   fraction,
               gpointer user_data)
{
  EffluxWindow *self = user_data;

  g_mutex_lock (&self->progress_lock);
  self->progress_fraction = fraction;
  if (self->progress_idle == 0)
    self->progress_idle = g_idle_add_full (G_PRIORITY_LOW, progress_idle_cb,
                                           g_object_ref (self), g_object_unref);
  g_mutex_unlock (&self->progress_lock);
}

/* ---- the document: title, actions, lobe bar, ledger ---- */

static const EffluxDossier *
window_dossier (EffluxWindow *self)
{
  return self->document ? efflux_document_get_dossier (self->document) : NULL;
}

static void
update_actions (EffluxWindow *self)
{
  gboolean has = self->document != NULL;

  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.save", has);
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.save-as", has);
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.export-figure", has);
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.undo",
                                 has && efflux_document_can_undo (self->document));
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.redo",
                                 has && efflux_document_can_redo (self->document));
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.delete-lobe",
                                 has && efflux_sky_view_get_selected_lobe (self->sky_view) != NULL);
}

/* The ledger as text: one line per lobe and the total, the table's main columns. */
static void
update_ledger (EffluxWindow *self)
{
  static const char *shown[] = { "lobe", "kind", "voxels", "mass_msun", "momentum_msun_kms",
                                 "energy_erg", "tdyn_yr", "mdot_msun_yr", "force_msun_kms_yr",
                                 "lmech_lsun", "mv_gamma" };
  const EffluxMeasureResult *result = self->document ? efflux_document_get_result (self->document) : NULL;
  const char * const *columns = efflux_measure_columns ();
  g_autoptr(GString) text = g_string_new (NULL);
  int index[G_N_ELEMENTS (shown)];

  efflux_ledger_set_result (self->ledger, result);
  if (result == NULL)
    {
      const char *msg = self->document ? efflux_document_get_measure_error (self->document) : NULL;

      gtk_label_set_text (self->ledger_label, msg ? msg : "");
      return;
    }
  for (guint c = 0; c < G_N_ELEMENTS (shown); c++)
    {
      index[c] = -1;
      for (int i = 0; columns[i] != NULL; i++)
        if (g_str_equal (columns[i], shown[c]))
          index[c] = i;
      g_string_append_printf (text, "%-*s", c < 2 ? 8 : 13, shown[c]);
    }
  g_string_append_c (text, '\n');
  for (guint r = 0; r < result->rows->len; r++)
    {
      const EffluxMeasureRow *row = g_ptr_array_index (result->rows, r);

      for (guint c = 0; c < G_N_ELEMENTS (shown); c++)
        {
          g_autofree char *cell = index[c] >= 0 ? efflux_measure_cell (row, (guint) index[c]) : g_strdup ("");

          g_string_append_printf (text, "%-*s", c < 2 ? 8 : 13, cell);
        }
      g_string_append_c (text, '\n');
    }
  if (efflux_document_get_measure_error (self->document) != NULL)
    g_string_append (text, efflux_document_get_measure_error (self->document));
  gtk_label_set_text (self->ledger_label, text->str);
  /* the table shows the numbers; the text stays for a message after a failed measurement */
  gtk_widget_set_visible (gtk_widget_get_ancestor (GTK_WIDGET (self->ledger_label),
                                                   GTK_TYPE_SCROLLED_WINDOW),
                          efflux_document_get_measure_error (self->document) != NULL);
}

static void show_edit_error (EffluxWindow *self, const GError *error);

/* ---- the Cut and Spectrum views and the Ledger, fed from the document ---- */

static void
range_changed (GtkWidget    *view,
               const char   *lobe,
               double        v1,
               double        v2,
               gboolean      is_final,
               EffluxWindow *self)
{
  g_autoptr(GError) error = NULL;

  if (self->document == NULL)
    return;
  /* one drag, one command */
  if (self->range_merge == 0)
    self->range_merge = efflux_document_new_merge_id ();
  efflux_document_set_lobe_velocity (self->document, lobe, v1, v2, self->range_merge, &error);
  show_edit_error (self, error);
  if (is_final)
    self->range_merge = 0;
}

/* force: the dossier's cut may have changed; the Cut tools make it again through every cube
 * when it did. */
static void
sync_cut (EffluxWindow *self,
          gboolean      force)
{
  const EffluxDossier *d = window_dossier (self);

  /* every cube of the dossier through its first cut, off the UI thread (efflux-cut-tools.h) */
  efflux_cut_tools_sync (self->cut_tools, self->document, force);
  gtk_widget_set_visible (self->cut_box, d != NULL && self->cube != NULL && d->cuts->len > 0);
}

static void
sync_views (EffluxWindow *self,
            const char   *group)
{
  const EffluxDossier *d = window_dossier (self);
  double incl = NAN;

  if (d == NULL || self->cube == NULL)
    {
      gtk_widget_set_visible (self->cut_box, FALSE);
      gtk_widget_set_visible (self->spectrum_box, FALSE);
      return;
    }
  if (group == NULL || g_str_has_prefix (group, "Cut "))
    sync_cut (self, group != NULL);
  if (d->inclination_mode == EFFLUX_INCLINATION_FIXED)
    incl = d->inclination_deg;
  else if (d->inclination_mode == EFFLUX_INCLINATION_RANGE)
    incl = 0.5 * (d->inclination_range_deg[0] + d->inclination_range_deg[1]);
  efflux_cut_view_set_vsys (self->cut_view, d->vsys_kms);
  efflux_cut_view_set_geometry (self->cut_view, d->distance_pc, incl);
  efflux_cut_view_set_source (self->cut_view, d->ra_deg, d->dec_deg);
  efflux_spectrum_view_set_vsys (self->spectrum_view, d->vsys_kms);
  /* ranges: drop the lobes that went, set the others */
  for (guint i = 0; i < self->shown_lobes->len; i++)
    {
      const char *name = g_ptr_array_index (self->shown_lobes, i);

      if (efflux_dossier_find_lobe (d, name) == NULL)
        {
          efflux_cut_view_remove_range (self->cut_view, name);
          efflux_spectrum_view_remove_range (self->spectrum_view, name);
          efflux_spectrum_view_hide_lobe (self->spectrum_view, name);
        }
    }
  g_ptr_array_set_size (self->shown_lobes, 0);
  for (guint i = 0; i < d->lobes->len; i++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);

      efflux_cut_view_set_range (self->cut_view, lobe->name, lobe->kind, lobe->v1_kms, lobe->v2_kms);
      efflux_spectrum_view_set_range (self->spectrum_view, lobe->name, lobe->kind, lobe->v1_kms,
                                      lobe->v2_kms);
      g_ptr_array_add (self->shown_lobes, g_strdup (lobe->name));
    }
  gtk_widget_set_visible (self->spectrum_box, TRUE);
}

/* The selected lobe's mean spectrum is averaged in a worker: a large lobe on a large cube reads
 * a hundred MB or more (tens of ms), too long for the UI thread. */
typedef struct
{
  EffluxCube     *cube;     /* a reference of the cube store */
  double         *ra, *dec;
  gsize           n;
  char           *name;
  EffluxLobeKind  kind;
  double         *values;   /* cube->nchan, the result */
} LobeSpectrumJob;

static void
lobe_spectrum_job_free (gpointer data)
{
  LobeSpectrumJob *job = data;

  efflux_cube_store_release (job->cube);
  g_free (job->ra);
  g_free (job->dec);
  g_free (job->name);
  g_free (job->values);
  g_free (job);
}

static void
lobe_spectrum_thread (GTask        *task,
                      gpointer      source,
                      gpointer      data,
                      GCancellable *cancellable)
{
  LobeSpectrumJob *job = data;
  g_autoptr(EffluxLobeMask) mask = NULL;

  mask = efflux_lobe_mask_new (job->cube, job->ra, job->dec, job->n, job->name, NULL);
  if (mask == NULL || g_cancellable_is_cancelled (cancellable))
    {
      g_task_return_boolean (task, FALSE);
      return;
    }
  job->values = g_new (double, job->cube->nchan);
  efflux_spectrum_over_lobe (job->cube, mask, EFFLUX_SPECTRUM_MEAN, job->values);
  g_task_return_boolean (task, TRUE);
}

static void
lobe_spectrum_done (GObject      *source,
                    GAsyncResult *result,
                    gpointer      user_data)
{
  EffluxWindow *self = EFFLUX_WINDOW (source);
  GTask *task = G_TASK (result);
  LobeSpectrumJob *job = g_task_get_task_data (task);

  /* shown only if it is still the lobe and the cube shown, and nothing newer was asked for */
  if (!g_task_propagate_boolean (task, NULL) || g_cancellable_is_cancelled (g_task_get_cancellable (task))
      || self->cube != job->cube || g_strcmp0 (self->spectrum_lobe, job->name) != 0)
    return;
  efflux_spectrum_view_set_lobe_spectrum (self->spectrum_view, job->name, job->kind, job->values,
                                          job->cube->nchan);
}

/* The selected lobe's mean spectrum (its mask on the shown cube). */
static void
sync_lobe_spectrum (EffluxWindow *self)
{
  const EffluxDossier *d = window_dossier (self);
  const char *name = efflux_sky_view_get_selected_lobe (self->sky_view);
  const EffluxDossierLobe *lobe = d && name ? efflux_dossier_find_lobe (d, name) : NULL;
  g_autoptr(GTask) task = NULL;
  LobeSpectrumJob *job;

  if (g_strcmp0 (self->spectrum_lobe, name) != 0 && self->spectrum_lobe != NULL)
    efflux_spectrum_view_hide_lobe (self->spectrum_view, self->spectrum_lobe);
  g_free (self->spectrum_lobe);
  self->spectrum_lobe = g_strdup (name);
  if (self->spectrum_cancellable != NULL)
    g_cancellable_cancel (self->spectrum_cancellable);
  g_clear_object (&self->spectrum_cancellable);
  if (lobe == NULL || self->cube == NULL || lobe->n_vertices < 3)
    return;
  job = g_new0 (LobeSpectrumJob, 1);
  job->cube = efflux_cube_store_ref (self->cube);
  job->ra = g_memdup2 (lobe->ra_deg, lobe->n_vertices * sizeof (double));
  job->dec = g_memdup2 (lobe->dec_deg, lobe->n_vertices * sizeof (double));
  job->n = lobe->n_vertices;
  job->name = g_strdup (lobe->name);
  job->kind = lobe->kind;
  self->spectrum_cancellable = g_cancellable_new ();
  task = g_task_new (self, self->spectrum_cancellable, lobe_spectrum_done, NULL);
  g_task_set_source_tag (task, sync_lobe_spectrum);
  g_task_set_task_data (task, job, lobe_spectrum_job_free);
  g_task_run_in_thread (task, lobe_spectrum_thread);
}

static void
update_lobe_bar (EffluxWindow *self)
{
  const EffluxDossier *d = window_dossier (self);
  const char *name = efflux_sky_view_get_selected_lobe (self->sky_view);
  const EffluxDossierLobe *lobe = d && name ? efflux_dossier_find_lobe (d, name) : NULL;
  GListModel *shown = gtk_drop_down_get_model (self->cube_dropdown);
  guint n_cubes = d != NULL ? d->cubes->len : 0;
  gboolean same = shown != NULL && g_list_model_get_n_items (shown) == n_cubes;
  guint cube_index = GTK_INVALID_LIST_POSITION;

  self->updating_lobe_bar = TRUE;
  gtk_widget_set_sensitive (self->lobe_bar, lobe != NULL);
  for (guint i = 0; i < n_cubes; i++)
    {
      EffluxDossierCube *c = g_ptr_array_index (d->cubes, i);

      if (same)
        {
          g_autoptr(GtkStringObject) item = g_list_model_get_item (shown, i);

          same = g_strcmp0 (gtk_string_object_get_string (item), c->id) == 0;
        }
      if (lobe != NULL && g_strcmp0 (c->id, lobe->cube_id) == 0)
        cube_index = i;
    }
  /* a new list only when the cubes changed: not on every step of a drag */
  if (!same)
    {
      g_autoptr(GtkStringList) cubes = gtk_string_list_new (NULL);

      for (guint i = 0; i < n_cubes; i++)
        gtk_string_list_append (cubes, ((EffluxDossierCube *) g_ptr_array_index (d->cubes, i))->id);
      gtk_drop_down_set_model (self->cube_dropdown, G_LIST_MODEL (cubes));
    }
  if (lobe != NULL)
    {
      g_autofree char *text = g_strdup_printf (_("Lobe %s"), lobe->name);

      gtk_label_set_text (self->lobe_label, text);
      gtk_drop_down_set_selected (self->kind_dropdown, lobe->kind == EFFLUX_LOBE_RED ? 1 : 0);
      gtk_drop_down_set_selected (self->cube_dropdown, cube_index);
      gtk_spin_button_set_value (self->v1_spin, lobe->v1_kms);
      gtk_spin_button_set_value (self->v2_spin, lobe->v2_kms);
    }
  else
    gtk_label_set_text (self->lobe_label, _("No lobe selected"));
  self->updating_lobe_bar = FALSE;
  update_actions (self);
}

static void
show_edit_error (EffluxWindow *self,
                 const GError *error)
{
  /* an edit that went through: the banner's message about a refused one is old news */
  if (error == NULL && efflux_window_get_error (self) != NULL
      && g_strcmp0 (efflux_window_get_error (self), gtk_label_get_text (self->edit_error_label)) == 0)
    efflux_banner_hide (self->banner);
  gtk_label_set_text (self->edit_error_label, error ? error->message : "");
  if (error != NULL)
    efflux_window_show_error (self, error->message);
}

static void
velocity_changed (EffluxWindow *self)
{
  const char *name = efflux_sky_view_get_selected_lobe (self->sky_view);
  g_autoptr(GError) error = NULL;

  if (self->updating_lobe_bar || self->document == NULL || name == NULL)
    return;
  {
    /* the spin buttons settling back after a refused edit: no command that changes nothing */
    const EffluxDossierLobe *lobe = efflux_dossier_find_lobe (window_dossier (self), name);
    double a = gtk_spin_button_get_value (self->v1_spin), b = gtk_spin_button_get_value (self->v2_spin);

    if (lobe != NULL && fabs (MIN (a, b) - lobe->v1_kms) < 1e-9 && fabs (MAX (a, b) - lobe->v2_kms) < 1e-9)
      return;
  }
  efflux_document_set_lobe_velocity (self->document, name,
                                     gtk_spin_button_get_value (self->v1_spin),
                                     gtk_spin_button_get_value (self->v2_spin), 0, &error);
  show_edit_error (self, error);
  if (error != NULL)
    update_lobe_bar (self);
}

static void
kind_changed (EffluxWindow *self)
{
  const char *name = efflux_sky_view_get_selected_lobe (self->sky_view);
  const EffluxDossierLobe *lobe;
  g_autoptr(GError) error = NULL;
  EffluxLobeKind kind;

  if (self->updating_lobe_bar || self->document == NULL || name == NULL)
    return;
  lobe = efflux_dossier_find_lobe (window_dossier (self), name);
  kind = gtk_drop_down_get_selected (self->kind_dropdown) == 1 ? EFFLUX_LOBE_RED : EFFLUX_LOBE_BLUE;
  if (lobe == NULL || lobe->kind == kind)
    return;
  efflux_document_set_lobe_kind (self->document, name, kind, &error);
  show_edit_error (self, error);
}

static void
cube_changed (EffluxWindow *self)
{
  const char *name = efflux_sky_view_get_selected_lobe (self->sky_view);
  GtkStringObject *item;
  const EffluxDossierLobe *lobe;
  g_autoptr(GError) error = NULL;

  if (self->updating_lobe_bar || self->document == NULL || name == NULL)
    return;
  item = gtk_drop_down_get_selected_item (self->cube_dropdown);
  lobe = efflux_dossier_find_lobe (window_dossier (self), name);
  if (item == NULL || lobe == NULL || g_strcmp0 (lobe->cube_id, gtk_string_object_get_string (item)) == 0)
    return;
  efflux_document_set_lobe_cube (self->document, name, gtk_string_object_get_string (item), &error);
  show_edit_error (self, error);
  if (error != NULL)
    update_lobe_bar (self);
}

static gboolean
spectrum_timeout_cb (gpointer user_data)
{
  EffluxWindow *self = user_data;

  self->spectrum_timeout = 0;
  sync_lobe_spectrum (self);
  return G_SOURCE_REMOVE;
}

static void
document_changed (EffluxDocument *document,
                  const char     *group,
                  EffluxWindow   *self)
{
  const EffluxDossier *d = efflux_document_get_dossier (document);

  if (group == NULL || g_str_equal (group, "Source"))
    efflux_sky_view_set_source (self->sky_view, d->ra_deg, d->dec_deg, d->distance_pc);
  if (group == NULL || g_str_has_prefix (group, "Lobe "))
    update_lobe_bar (self);
  if (g_strcmp0 (self->source_name, d->name) != 0)
    {
      g_free (self->source_name);
      self->source_name = g_strdup (d->name);
      update_title (self);
    }
  show_edit_error (self, NULL);
  update_actions (self);
  sync_views (self, group);
  if (group == NULL || (self->spectrum_lobe != NULL && g_str_has_prefix (group, "Lobe ")
                        && g_str_equal (group + 5, self->spectrum_lobe)))
    {
      g_clear_handle_id (&self->spectrum_timeout, g_source_remove);
      self->spectrum_timeout = g_timeout_add (150, spectrum_timeout_cb, self);
    }
}

static void
document_state_changed (EffluxDocument *document,
                        GParamSpec     *pspec,
                        EffluxWindow   *self)
{
  update_title (self);
  update_actions (self);
}

static void
document_measured (EffluxDocument *document,
                   EffluxWindow   *self)
{
  update_ledger (self);
  if (efflux_document_get_measure_error (document) != NULL)
    efflux_window_show_error (self, efflux_document_get_measure_error (document));
}

static void
selected_lobe_changed (EffluxSkyView *view,
                       GParamSpec    *pspec,
                       EffluxWindow  *self)
{
  update_lobe_bar (self);
  sync_lobe_spectrum (self);
}

static void
cubes_loaded (GObject      *object,
              GAsyncResult *res,
              gpointer      user_data)
{
  g_autoptr(EffluxWindow) self = user_data;
  g_autoptr(GError) error = NULL;

  if (!efflux_document_load_cubes_finish (EFFLUX_DOCUMENT (object), res, &error)
      && !g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED)
      && !g_error_matches (error, EFFLUX_ERROR, EFFLUX_ERROR_CANCELLED)
      && EFFLUX_DOCUMENT (object) == self->document)
    {
      gtk_label_set_text (self->ledger_label, error->message);
      efflux_window_show_error (self, error->message);
    }
}

static void
add_recent (const char *path)
{
  g_autoptr(GFile) file = g_file_new_for_path (path);
  g_autofree char *uri = g_file_get_uri (file);

  gtk_recent_manager_add_item (gtk_recent_manager_get_default (), uri);
}

static void
set_document (EffluxWindow   *self,
              EffluxDocument *document)
{
  if (self->autosave != NULL)
    efflux_autosave_close (self->autosave);
  g_clear_object (&self->autosave);
  if (document != NULL)
    self->autosave = efflux_autosave_new (document, self->banner);
  if (self->document != NULL)
    g_signal_handlers_disconnect_by_data (self->document, self);
  if (self->measure_cancellable != NULL)
    g_cancellable_cancel (self->measure_cancellable);
  g_clear_object (&self->measure_cancellable);
  g_set_object (&self->document, document);
  efflux_sky_view_set_document (self->sky_view, document);
  efflux_assumptions_set_document (self->assumptions, document);
  efflux_sources_set_document (self->sources, document);
  efflux_review_sheet_set_document (self->review_sheet, document);
  if (document != NULL)
    {
      g_signal_connect (document, "changed", G_CALLBACK (document_changed), self);
      g_signal_connect (document, "notify::modified", G_CALLBACK (document_state_changed), self);
      g_signal_connect (document, "notify::can-undo", G_CALLBACK (document_state_changed), self);
      g_signal_connect (document, "notify::can-redo", G_CALLBACK (document_state_changed), self);
      g_signal_connect (document, "notify::path", G_CALLBACK (document_state_changed), self);
      g_signal_connect (document, "measured", G_CALLBACK (document_measured), self);
      /* the cubes for the measurement are read once the map is on screen (load_done) */
      self->measure_started = FALSE;
      /* Translators: shown in the ledger while the lobes are measured for the first time */
      gtk_label_set_text (self->ledger_label, _("Measuring…"));
    }
  else
    gtk_label_set_text (self->ledger_label, "");
  update_lobe_bar (self);
  update_title (self);
  update_actions (self);
}

EffluxDocument *
efflux_window_get_document (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return self->document;
}

const char *
efflux_window_get_ledger_text (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return gtk_label_get_text (self->ledger_label);
}

GtkWidget *
efflux_window_get_cut_view (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return GTK_WIDGET (self->cut_view);
}

GtkWidget *
efflux_window_get_spectrum_view (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return GTK_WIDGET (self->spectrum_view);
}

GtkWidget *
efflux_window_get_ledger (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return GTK_WIDGET (self->ledger);
}

EffluxAssumptions *
efflux_window_get_assumptions (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return self->assumptions;
}

/* ---- loading a cube and its first map, off the UI thread ---- */

static void commit_dossier (EffluxWindow *self, const char *path, EffluxDocument *document,
                            const char *shown_id);
static void commit_bare_cube (EffluxWindow *self, const char *path);

typedef struct
{
  char     *path;
  gboolean  has_range;
  double    v1, v2;
  /* what becomes the window's when the cube is there (open_path NULL: only the map changes) */
  char           *open_path;   /* the dossier or bare cube opened */
  EffluxDocument *document;    /* the dossier's document; NULL for a bare cube */
  char           *shown_id;    /* the dossier's cube shown */
} LoadRequest;

typedef struct
{
  EffluxCube *cube;
  float      *map;
  double      v1, v2;
} LoadResult;

static LoadRequest *
load_request_new (const char *path,
                  gboolean    has_range,
                  double      v1,
                  double      v2)
{
  LoadRequest *request = g_new0 (LoadRequest, 1);

  request->path = g_strdup (path);
  request->has_range = has_range;
  request->v1 = v1;
  request->v2 = v2;
  return request;
}

static void
load_request_free (gpointer data)
{
  LoadRequest *request = data;

  g_free (request->path);
  g_free (request->open_path);
  g_clear_object (&request->document);
  g_free (request->shown_id);
  g_free (request);
}

static void
load_result_free (gpointer data)
{
  LoadResult *result = data;

  g_clear_pointer (&result->cube, efflux_cube_store_release);
  g_free (result->map);
  g_free (result);
}

static void
load_worker (GTask        *task,
             gpointer      source_object,
             gpointer      task_data,
             GCancellable *cancellable)
{
  EffluxWindow *self = source_object;
  const LoadRequest *request = task_data;
  g_autoptr(GError) error = NULL;
  LoadResult *result = g_new0 (LoadResult, 1);

  /* through the store: the document's measurement takes the same cube (cubes_loaded) */
  result->cube = efflux_cube_store_load (request->path, NULL, cancellable, load_progress, self, &error);
  if (result->cube == NULL)
    {
      load_result_free (result);
      g_task_return_error (task, g_steal_pointer (&error));
      return;
    }
  if (g_task_return_error_if_cancelled (task))
    {
      load_result_free (result);
      return;
    }

  /* The first map: moment 0 over the lobe's range, or over every channel of the cube. */
  if (request->has_range)
    {
      result->v1 = request->v1;
      result->v2 = request->v2;
    }
  else
    {
      result->v1 = result->cube->velocity[0];
      result->v2 = result->cube->velocity[result->cube->nchan - 1];
    }
  result->map = g_try_new (float, result->cube->nx * result->cube->ny);
  if (result->map == NULL)
    {
      g_task_return_new_error (task, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY,
                               "%s: no memory for a %zu × %zu map", request->path,
                               result->cube->nx, result->cube->ny);
      load_result_free (result);
      return;
    }
  if (!efflux_moment_map (result->cube, EFFLUX_MOMENT_0, result->v1, result->v2, 0.0,
                          result->map, &error))
    {
      load_result_free (result);
      g_task_return_error (task, g_steal_pointer (&error));
      return;
    }
  g_task_return_pointer (task, result, load_result_free);
}

static void
show_loading (EffluxWindow *self,
              gboolean      loading)
{
  gtk_widget_set_visible (self->loading_box, loading);
  gtk_widget_set_visible (self->empty_box, !loading && !efflux_sky_view_has_map (self->sky_view));
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.cancel", loading);
}

static void
load_done (GObject      *object,
           GAsyncResult *res,
           gpointer      user_data)
{
  g_autoptr(EffluxWindow) self = user_data;
  g_autoptr(GError) error = NULL;
  LoadResult *result;
  EffluxCube *old;
  LoadRequest *request = g_task_get_task_data (G_TASK (res));

  result = g_task_propagate_pointer (G_TASK (res), &error);
  if (g_task_get_cancellable (G_TASK (res)) != self->cancellable)
    {
      /* a newer load replaced this one */
      g_clear_pointer (&result, load_result_free);
      return;
    }
  g_clear_object (&self->cancellable);
  show_loading (self, FALSE);
  if (result == NULL)
    {
      if (!g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED)
          && !g_error_matches (error, EFFLUX_ERROR, EFFLUX_ERROR_CANCELLED))
        {
          gtk_label_set_text (self->detail_label, error->message);
          efflux_window_show_error (self, error->message);
        }
      else
        gtk_label_set_text (self->detail_label, _("Loading cancelled."));
      /* the dossier, map and cube shown before stay as they were */
      return;
    }

  if (request->open_path != NULL && request->document != NULL)
    commit_dossier (self, request->open_path, request->document, request->shown_id);
  else if (request->open_path != NULL)
    commit_bare_cube (self, request->open_path);

  /* the view borrows the cube: give it the new one before the old one goes */
  old = self->cube;
  self->cube = g_steal_pointer (&result->cube);
  /* Translators: the unit of a moment-0 map */
  efflux_sky_view_set_map (self->sky_view, self->cube, result->map, self->cube->nx, self->cube->ny,
                           _("K km/s"));
  efflux_spectrum_view_set_cube (self->spectrum_view, self->cube, self->shown_cube_id);
  if (old != self->cut_cube)
    g_clear_pointer (&old, efflux_cube_store_release);
  show_loading (self, FALSE);
  sync_views (self, NULL);
  sync_lobe_spectrum (self);
  if (self->document != NULL && !self->measure_started)
    {
      self->measure_started = TRUE;
      self->measure_cancellable = g_cancellable_new ();
      efflux_document_load_cubes_async (self->document, self->measure_cancellable, cubes_loaded,
                                        g_object_ref (self));
    }

  if (window_dossier (self) != NULL)
    efflux_sky_view_set_source (self->sky_view, window_dossier (self)->ra_deg,
                                window_dossier (self)->dec_deg, window_dossier (self)->distance_pc);
  else
    efflux_sky_view_unset_source (self->sky_view);

  {
    g_autofree char *base = g_path_get_basename (self->cube->path);
    g_autofree char *text =
      g_strdup_printf (_("%s: %zu × %zu pixels, %zu channels from %.3f to %.3f km/s; "
                         "moment 0 over %.2f to %.2f km/s"),
                       base, self->cube->nx, self->cube->ny, self->cube->nchan,
                       self->cube->velocity[0], self->cube->velocity[self->cube->nchan - 1],
                       MIN (result->v1, result->v2), MAX (result->v1, result->v2));
    gtk_label_set_text (self->detail_label, text);
    set_subtitle (self, base);
  }
  if (self->document == NULL)
    {
      g_free (self->source_name);
      self->source_name = self->cube->object && *self->cube->object
                          ? g_strdup (self->cube->object)
                          : g_path_get_basename (self->cube->path);
      update_title (self);
    }
  load_result_free (result);
}

/* Read request->path and its first map off the UI thread (takes request). A newer load cancels
 * this one. */
static void
start_load (EffluxWindow *self,
            LoadRequest  *request)
{
  g_autoptr(GTask) task = NULL;
  g_autofree char *base = g_path_get_basename (request->path);
  g_autofree char *text = NULL;

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  self->cancellable = g_cancellable_new ();

  gtk_progress_bar_set_fraction (self->progress, 0.0);
  /* Translators: shown while a cube file is read */
  text = g_strdup_printf (_("Reading %s…"), base);
  gtk_label_set_text (self->loading_label, text);
  gtk_label_set_text (self->detail_label, text);
  show_loading (self, TRUE);

  task = g_task_new (self, self->cancellable, load_done, g_object_ref (self));
  g_task_set_source_tag (task, start_load);
  g_task_set_task_data (task, request, load_request_free);
  g_task_run_in_thread (task, load_worker);
}

static void
cancel_clicked (EffluxWindow *self)
{
  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
}

/* ---- the Sources list (efflux-sources.c): a sample's dossiers and the files opened here ---- */

static void
show_source_row (EffluxWindow *self,
                 const char   *path,
                 const char   *name,
                 const char   *detail)
{
  efflux_sources_add_opened (self->sources, path, name, detail);
}

/* A row was activated (the question about unsaved changes, if any, was answered). */
static void
source_activated (EffluxSources *sources,
                  const char    *path,
                  EffluxWindow  *self)
{
  g_autoptr(GFile) file = g_file_new_for_path (path);

  efflux_window_open (self, file);
}

guint
efflux_window_get_n_sources (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), 0);
  return efflux_sources_get_n_rows (self->sources);
}

EffluxSources *
efflux_window_get_sources (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return self->sources;
}

EffluxReviewSheet *
efflux_window_get_review_sheet (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return self->review_sheet;
}

/* An opened dossier becomes the window's once its cube is on screen (load_done): a load that is
 * cancelled or fails leaves the dossier and map shown before as they were. */
static void
commit_dossier (EffluxWindow   *self,
                const char     *path,
                EffluxDocument *document,
                const char     *shown_id)
{
  const EffluxDossier *dossier = efflux_document_get_dossier (document);

  g_free (self->source_name);
  self->source_name = g_strdup (dossier->name);
  set_document (self, document);
  /* unsaved edits left by a crash: offer them */
  efflux_autosave_offer_recovery (self->autosave, GTK_WINDOW (self));
  add_recent (path);
  fill_recent_menu (self);
  g_free (self->source_name);
  self->source_name = g_strdup (dossier->name);
  update_title (self);
  {
    /* Translators: the status of a source in the Sources list, e.g. "2 lobes, 3 cubes" */
    g_autofree char *lobes = g_strdup_printf (g_dngettext (GETTEXT_PACKAGE, "%u lobe", "%u lobes",
                                                           dossier->lobes->len),
                                              dossier->lobes->len);
    g_autofree char *cubes = g_strdup_printf (g_dngettext (GETTEXT_PACKAGE, "%u cube", "%u cubes",
                                                           dossier->cubes->len),
                                              dossier->cubes->len);
    g_autofree char *detail = g_strdup_printf ("%s, %s", lobes, cubes);

    show_source_row (self, path, dossier->name, detail);
  }
  efflux_sky_view_set_cube_id (self->sky_view, shown_id);
  g_free (self->shown_cube_id);
  self->shown_cube_id = g_strdup (shown_id);
}

/* A bare cube: no dossier, no source (once the cube is read). */
static void
commit_bare_cube (EffluxWindow *self,
                  const char   *path)
{
  g_autofree char *base = g_path_get_basename (path);

  set_document (self, NULL);
  efflux_sky_view_set_cube_id (self->sky_view, NULL);
  g_clear_pointer (&self->shown_cube_id, g_free);
  show_source_row (self, path, base, _("FITS cube, no dossier"));
}

/* The cube the window shows first: the dossier's first tracer (else its first cube), and the
 * velocity range of the first lobe drawn on it. */
static void
open_dossier (EffluxWindow *self,
              const char   *path)
{
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxDocument) document = NULL;
  const EffluxDossier *dossier;
  EffluxDossierCube *shown = NULL;
  EffluxDossierLobe *lobe = NULL;
  LoadRequest *request;

  document = efflux_document_load (path, &error);
  if (document == NULL)
    {
      gtk_label_set_text (self->detail_label, error->message);
      efflux_window_show_error (self, error->message);
      return;
    }
  dossier = efflux_document_get_dossier (document);
  for (guint i = 0; i < dossier->cubes->len && shown == NULL; i++)
    {
      EffluxDossierCube *c = g_ptr_array_index (dossier->cubes, i);

      if (c->role == EFFLUX_CUBE_ROLE_TRACER)
        shown = c;
    }
  if (shown == NULL && dossier->cubes->len > 0)
    shown = g_ptr_array_index (dossier->cubes, 0);
  if (shown == NULL)
    {
      g_autofree char *msg = g_strdup_printf (_("%s: the dossier names no cube"), path);

      /* nothing to read: the dossier is the window's now, without a map */
      commit_dossier (self, path, document, NULL);
      gtk_label_set_text (self->detail_label, msg);
      efflux_window_show_error (self, msg);
      return;
    }
  for (guint i = 0; i < dossier->lobes->len && lobe == NULL; i++)
    {
      EffluxDossierLobe *l = g_ptr_array_index (dossier->lobes, i);

      if (g_strcmp0 (l->cube_id, shown->id) == 0)
        lobe = l;
    }
  request = load_request_new (shown->abs_path, lobe != NULL, lobe ? lobe->v1_kms : 0,
                              lobe ? lobe->v2_kms : 0);
  request->open_path = g_strdup (path);
  request->document = g_object_ref (document);
  request->shown_id = g_strdup (shown->id);
  start_load (self, request);
}

void
efflux_window_open (EffluxWindow *self,
                    GFile        *file)
{
  g_autofree char *path = NULL;

  g_return_if_fail (EFFLUX_IS_WINDOW (self));
  g_return_if_fail (G_IS_FILE (file));

  path = g_file_get_path (file);
  if (path == NULL)
    {
      g_autofree char *uri = g_file_get_uri (file);
      g_autofree char *msg = g_strdup_printf (_("%s: only local files can be opened"), uri);
      gtk_label_set_text (self->detail_label, msg);
      efflux_window_show_error (self, msg);
      return;
    }

  /* a folder: the sample the Sources list shows */
  if (g_file_test (path, G_FILE_TEST_IS_DIR))
    {
      g_autoptr(GError) error = NULL;

      if (!efflux_sources_set_folder (self->sources, path, &error))
        efflux_window_show_error (self, error->message);
      return;
    }
  if (g_str_has_suffix (path, ".efflux"))
    {
      open_dossier (self, path);
      return;
    }
  /* a bare cube: no dossier, no source, once it is read */
  {
    LoadRequest *request = load_request_new (path, FALSE, 0, 0);

    request->open_path = g_strdup (path);
    start_load (self, request);
  }
}

gboolean
efflux_window_is_loading (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), FALSE);
  return self->cancellable != NULL;
}

const char *
efflux_window_get_status (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return gtk_label_get_text (self->detail_label);
}

EffluxSkyView *
efflux_window_get_sky_view (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return self->sky_view;
}

const EffluxCube *
efflux_window_get_cube (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return self->cube;
}

/* ---- actions ---- */

/* Export Figure: the dialog (efflux-figure-dialog.h) draws the document's current dossier. */
static void
export_figure_action (GtkWidget  *widget,
                      const char *action_name,
                      GVariant   *parameter)
{
  EffluxWindow *self = EFFLUX_WINDOW (widget);

  if (self->document != NULL)
    gtk_window_present (GTK_WINDOW (efflux_figure_dialog_new (GTK_WINDOW (self), self->document,
                                                              self->sky_view)));
}

static void
chooser_response (GtkNativeDialog *dialog,
                  int              response,
                  gpointer         user_data)
{
  g_autoptr(EffluxWindow) self = user_data;

  if (response == GTK_RESPONSE_ACCEPT)
    {
      g_autoptr(GFile) file = gtk_file_chooser_get_file (GTK_FILE_CHOOSER (dialog));

      if (file != NULL)
        efflux_window_open (self, file);
    }
  gtk_native_dialog_destroy (dialog);
  g_object_unref (dialog);
}

static void
open_action (GtkWidget  *widget,
             const char *action_name,
             GVariant   *parameter)
{
  EffluxWindow *self = EFFLUX_WINDOW (widget);
  GtkFileChooserNative *chooser;
  g_autoptr(GtkFileFilter) both = gtk_file_filter_new ();
  g_autoptr(GtkFileFilter) dossiers = gtk_file_filter_new ();
  g_autoptr(GtkFileFilter) cubes = gtk_file_filter_new ();

  chooser = gtk_file_chooser_native_new (_("Open a Dossier or a Cube"), GTK_WINDOW (self),
                                         GTK_FILE_CHOOSER_ACTION_OPEN, _("_Open"), _("_Cancel"));
  gtk_file_filter_set_name (both, _("Dossiers and FITS cubes"));
  gtk_file_filter_add_pattern (both, "*.efflux");
  gtk_file_filter_add_pattern (both, "*.fits");
  gtk_file_filter_add_pattern (both, "*.fit");
  gtk_file_filter_add_pattern (both, "*.fts");
  gtk_file_filter_set_name (dossiers, _("Dossiers (.efflux)"));
  gtk_file_filter_add_pattern (dossiers, "*.efflux");
  gtk_file_filter_set_name (cubes, _("FITS cubes"));
  gtk_file_filter_add_pattern (cubes, "*.fits");
  gtk_file_filter_add_pattern (cubes, "*.fit");
  gtk_file_filter_add_pattern (cubes, "*.fts");
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (chooser), both);
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (chooser), dossiers);
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (chooser), cubes);
  gtk_native_dialog_set_modal (GTK_NATIVE_DIALOG (chooser), TRUE);
  g_signal_connect (chooser, "response", G_CALLBACK (chooser_response), g_object_ref (self));
  gtk_native_dialog_show (GTK_NATIVE_DIALOG (chooser));
}

static void
save_response (GtkNativeDialog *dialog,
               int              response,
               gpointer         user_data)
{
  g_autoptr(EffluxWindow) self = user_data;

  if (response == GTK_RESPONSE_ACCEPT && self->document != NULL)
    {
      g_autoptr(GFile) file = gtk_file_chooser_get_file (GTK_FILE_CHOOSER (dialog));
      g_autofree char *path = file ? g_file_get_path (file) : NULL;
      g_autoptr(GError) error = NULL;

      if (path != NULL)
        {
          /* Save As: the dossier's file paths follow it to the new place */
          if (!efflux_document_save_as (self->document, path, &error))
            efflux_window_show_error (self, error->message);
          else
            add_recent (path);
        }
    }
  gtk_native_dialog_destroy (dialog);
  g_object_unref (dialog);
}

static void
save_as (EffluxWindow *self)
{
  GtkFileChooserNative *chooser;
  g_autoptr(GtkFileFilter) dossiers = gtk_file_filter_new ();
  const char *path = efflux_document_get_path (self->document);

  chooser = gtk_file_chooser_native_new (_("Save the Dossier"), GTK_WINDOW (self),
                                         GTK_FILE_CHOOSER_ACTION_SAVE, _("_Save"), _("_Cancel"));
  gtk_file_filter_set_name (dossiers, _("Dossiers (.efflux)"));
  gtk_file_filter_add_pattern (dossiers, "*.efflux");
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (chooser), dossiers);
  if (path != NULL)
    {
      g_autoptr(GFile) file = g_file_new_for_path (path);

      gtk_file_chooser_set_file (GTK_FILE_CHOOSER (chooser), file, NULL);
    }
  gtk_native_dialog_set_modal (GTK_NATIVE_DIALOG (chooser), TRUE);
  g_signal_connect (chooser, "response", G_CALLBACK (save_response), g_object_ref (self));
  gtk_native_dialog_show (GTK_NATIVE_DIALOG (chooser));
}

static gboolean
save_now (EffluxWindow *self)
{
  g_autoptr(GError) error = NULL;

  if (self->document == NULL)
    return FALSE;
  if (!efflux_document_save (self->document, NULL, &error))
    {
      gtk_label_set_text (self->detail_label, error->message);
      efflux_window_show_error (self, error->message);
      return FALSE;
    }
  add_recent (efflux_document_get_path (self->document));
  {
    g_autofree char *base = g_path_get_basename (efflux_document_get_path (self->document));
    g_autofree char *text = g_strdup_printf (_("Saved %s."), base);

    gtk_label_set_text (self->detail_label, text);
  }
  return TRUE;
}

static void
document_action (GtkWidget  *widget,
                 const char *action_name,
                 GVariant   *parameter)
{
  EffluxWindow *self = EFFLUX_WINDOW (widget);

  if (self->document == NULL)
    return;
  if (g_str_equal (action_name, "win.save"))
    save_now (self);
  else if (g_str_equal (action_name, "win.save-as"))
    save_as (self);
  else if (g_str_equal (action_name, "win.undo"))
    efflux_document_undo (self->document);
  else if (g_str_equal (action_name, "win.redo"))
    efflux_document_redo (self->document);
  else if (g_str_equal (action_name, "win.delete-lobe"))
    {
      g_autofree char *name = g_strdup (efflux_sky_view_get_selected_lobe (self->sky_view));
      g_autoptr(GError) error = NULL;

      if (name != NULL)
        efflux_document_remove_lobe (self->document, name, &error);
      show_edit_error (self, error);
    }
}

static void
open_recent_action (GtkWidget  *widget,
                    const char *action_name,
                    GVariant   *parameter)
{
  g_autoptr(GFile) file = g_file_new_for_path (g_variant_get_string (parameter, NULL));

  efflux_window_open (EFFLUX_WINDOW (widget), file);
}

/* The dossiers opened or saved lately (GtkRecentManager), newest first. */
static void
fill_recent_menu (EffluxWindow *self)
{
  GList *items = gtk_recent_manager_get_items (gtk_recent_manager_get_default ());
  guint n = 0;

  g_menu_remove_all (self->recent_menu);
  for (GList *l = items; l != NULL && n < 8; l = l->next)
    {
      GtkRecentInfo *info = l->data;
      const char *uri = gtk_recent_info_get_uri (info);
      g_autoptr(GFile) file = g_file_new_for_uri (uri);
      g_autofree char *path = g_file_get_path (file);
      g_autofree char *base = NULL;
      g_autoptr(GMenuItem) item = NULL;

      if (path == NULL || !g_str_has_suffix (path, ".efflux") || !gtk_recent_info_exists (info))
        continue;
      base = g_path_get_basename (path);
      item = g_menu_item_new (base, NULL);
      g_menu_item_set_action_and_target_value (item, "win.open-recent", g_variant_new_string (path));
      g_menu_append_item (self->recent_menu, item);
      n++;
    }
  g_list_free_full (items, (GDestroyNotify) gtk_recent_info_unref);
}

static void
close_response (GtkDialog *dialog,
                int        response,
                gpointer   user_data)
{
  g_autoptr(EffluxWindow) self = user_data;

  gtk_window_destroy (GTK_WINDOW (dialog));
  if (response == GTK_RESPONSE_ACCEPT)
    {
      if (efflux_document_get_path (self->document) == NULL || !save_now (self))
        return;
    }
  else if (response != GTK_RESPONSE_REJECT)
    return;
  else if (self->autosave != NULL)
    efflux_autosave_discard (self->autosave);
  self->close_confirmed = TRUE;
  gtk_window_close (GTK_WINDOW (self));
}

/* Unsaved changes: ask before the window goes. */
static gboolean
efflux_window_close_request (GtkWindow *window)
{
  EffluxWindow *self = EFFLUX_WINDOW (window);
  GtkWidget *dialog;

  if (self->close_confirmed || self->document == NULL
      || !efflux_document_get_modified (self->document))
    return GTK_WINDOW_CLASS (efflux_window_parent_class)->close_request (window);
  dialog = gtk_message_dialog_new (window, GTK_DIALOG_MODAL | GTK_DIALOG_DESTROY_WITH_PARENT,
                                   GTK_MESSAGE_QUESTION, GTK_BUTTONS_NONE,
                                   _("Save the changes to “%s”?"),
                                   self->source_name ? self->source_name : "");
  gtk_message_dialog_format_secondary_text (GTK_MESSAGE_DIALOG (dialog), "%s",
                                            _("The lobes and assumptions changed since the dossier was last saved."));
  gtk_dialog_add_buttons (GTK_DIALOG (dialog),
                          _("Close _without Saving"), GTK_RESPONSE_REJECT,
                          _("_Cancel"), GTK_RESPONSE_CANCEL,
                          _("_Save"), GTK_RESPONSE_ACCEPT,
                          NULL);
  gtk_dialog_set_default_response (GTK_DIALOG (dialog), GTK_RESPONSE_ACCEPT);
  g_signal_connect (dialog, "response", G_CALLBACK (close_response), g_object_ref (self));
  gtk_window_present (GTK_WINDOW (dialog));
  return TRUE;
}

static void
zoom_action (GtkWidget  *widget,
             const char *action_name,
             GVariant   *parameter)
{
  EffluxWindow *self = EFFLUX_WINDOW (widget);

  if (g_str_equal (action_name, "win.zoom-in"))
    efflux_sky_view_zoom_in (self->sky_view);
  else if (g_str_equal (action_name, "win.zoom-out"))
    efflux_sky_view_zoom_out (self->sky_view);
  else
    efflux_sky_view_zoom_fit (self->sky_view);
}

static void
cancel_action (GtkWidget  *widget,
               const char *action_name,
               GVariant   *parameter)
{
  cancel_clicked (EFFLUX_WINDOW (widget));
}

static gboolean
drop_cb (GtkDropTarget *target,
         const GValue  *value,
         double         x,
         double         y,
         EffluxWindow  *self)
{
  GSList *files;

  if (!G_VALUE_HOLDS (value, GDK_TYPE_FILE_LIST))
    return FALSE;
  files = gdk_file_list_get_files (g_value_get_boxed (value));
  /* one window shows one dossier or cube: a dossier among the files wins, else the first */
  for (GSList *l = files; l != NULL; l = l->next)
    {
      g_autofree char *name = g_file_get_basename (l->data);

      if (name != NULL && g_str_has_suffix (name, ".efflux"))
        {
          efflux_window_open (self, l->data);
          g_slist_free (files);
          return TRUE;
        }
    }
  if (files != NULL)
    efflux_window_open (self, files->data);
  g_slist_free (files);
  return files != NULL;
}

static void
readout_changed (EffluxSkyView *view,
                 GParamSpec    *pspec,
                 EffluxWindow  *self)
{
  EffluxSkyReadout readout;

  gtk_label_set_text (self->readout_label, efflux_sky_view_get_readout (view));
  efflux_sky_view_get_readout_values (view, &readout);
  if (readout.inside && self->cube != NULL)
    efflux_spectrum_view_show_pixel (self->spectrum_view, readout.x, readout.y, NULL);
  else
    efflux_spectrum_view_hide_pixel (self->spectrum_view);
}

static void
efflux_window_get_property (GObject    *object,
                            guint       prop_id,
                            GValue     *value,
                            GParamSpec *pspec)
{
  EffluxWindow *self = EFFLUX_WINDOW (object);

  switch (prop_id)
    {
    case PROP_SHOW_ASSUMPTIONS:
      g_value_set_boolean (value, self->show_assumptions);
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_window_set_property (GObject      *object,
                            guint         prop_id,
                            const GValue *value,
                            GParamSpec   *pspec)
{
  EffluxWindow *self = EFFLUX_WINDOW (object);

  switch (prop_id)
    {
    case PROP_SHOW_ASSUMPTIONS:
      if (g_value_get_boolean (value) != self->show_assumptions)
        {
          self->show_assumptions = g_value_get_boolean (value);
          if (self->assumptions_revealer != NULL)
            gtk_revealer_set_reveal_child (self->assumptions_revealer, self->show_assumptions);
          g_object_notify_by_pspec (object, pspec);
        }
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_window_dispose (GObject *object)
{
  EffluxWindow *self = EFFLUX_WINDOW (object);

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  if (self->measure_cancellable != NULL)
    g_cancellable_cancel (self->measure_cancellable);
  g_clear_object (&self->measure_cancellable);
  g_clear_handle_id (&self->spectrum_timeout, g_source_remove);
  if (self->spectrum_cancellable != NULL)
    g_cancellable_cancel (self->spectrum_cancellable);
  g_clear_object (&self->spectrum_cancellable);
  if (self->autosave != NULL)
    efflux_autosave_close (self->autosave);
  g_clear_object (&self->autosave);
  if (self->document != NULL)
    {
      g_signal_handlers_disconnect_by_data (self->document, self);
      if (self->sky_view != NULL)
        efflux_sky_view_set_document (self->sky_view, NULL);
      if (self->assumptions != NULL)
        efflux_assumptions_set_document (self->assumptions, NULL);
      g_clear_object (&self->document);
    }
  if (self->sky_view != NULL)
    efflux_sky_view_clear (self->sky_view);
  gtk_widget_dispose_template (GTK_WIDGET (self), EFFLUX_TYPE_WINDOW);
  G_OBJECT_CLASS (efflux_window_parent_class)->dispose (object);
}

static void
efflux_window_finalize (GObject *object)
{
  EffluxWindow *self = EFFLUX_WINDOW (object);

  if (self->cut_cube != self->cube)
    g_clear_pointer (&self->cut_cube, efflux_cube_store_release);
  g_clear_pointer (&self->cube, efflux_cube_store_release);
  g_free (self->source_name);
  g_free (self->spectrum_lobe);
  g_free (self->shown_cube_id);
  g_clear_pointer (&self->shown_lobes, g_ptr_array_unref);
  g_mutex_clear (&self->progress_lock);
  G_OBJECT_CLASS (efflux_window_parent_class)->finalize (object);
}

static void
efflux_window_class_init (EffluxWindowClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_window_dispose;
  object_class->finalize = efflux_window_finalize;
  object_class->get_property = efflux_window_get_property;
  object_class->set_property = efflux_window_set_property;
  GTK_WINDOW_CLASS (klass)->close_request = efflux_window_close_request;

  properties[PROP_SHOW_ASSUMPTIONS] =
    g_param_spec_boolean ("show-assumptions", NULL, NULL, FALSE,
                          G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  g_object_class_install_properties (object_class, N_PROPS, properties);

  /* Referencing the generated resource keeps its object (and the constructor that registers it)
   * when the app is linked from the static library, as the UI tests do. */
  g_assert (efflux_get_resource () != NULL);
  g_type_ensure (EFFLUX_TYPE_SKY_VIEW);
  g_type_ensure (EFFLUX_TYPE_ASSUMPTIONS);
  gtk_widget_class_set_template_from_resource (widget_class, "/org/effluxproject/Efflux/efflux-window.ui");
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, source_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, subtitle_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, detail_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, readout_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, loading_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, progress);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, cancel_button);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, loading_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, empty_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, sky_view);
  g_type_ensure (EFFLUX_TYPE_SOURCES);
  g_type_ensure (EFFLUX_TYPE_REVIEW_SHEET);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, sources);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, review_sheet);
  gtk_widget_class_bind_template_callback (widget_class, cancel_clicked);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, lobe_bar);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, lobe_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, kind_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, cube_dropdown);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, v1_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, v2_spin);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, edit_error_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, ledger_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, cut_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, spectrum_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, ledger_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, assumptions_revealer);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, assumptions);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, recent_menu);
  g_type_ensure (EFFLUX_TYPE_BANNER);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, banner);

  gtk_widget_class_install_action (widget_class, "win.save", NULL, document_action);
  gtk_widget_class_install_action (widget_class, "win.save-as", NULL, document_action);
  gtk_widget_class_install_action (widget_class, "win.undo", NULL, document_action);
  gtk_widget_class_install_action (widget_class, "win.redo", NULL, document_action);
  gtk_widget_class_install_action (widget_class, "win.delete-lobe", NULL, document_action);
  gtk_widget_class_install_action (widget_class, "win.open-recent", "s", open_recent_action);
  gtk_widget_class_install_property_action (widget_class, "win.assumptions", "show-assumptions");

  gtk_widget_class_install_action (widget_class, "win.open", NULL, open_action);
  gtk_widget_class_install_action (widget_class, "win.export-figure", NULL, export_figure_action);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_e, GDK_CONTROL_MASK | GDK_SHIFT_MASK,
                                       "win.export-figure", NULL);
  gtk_widget_class_install_action (widget_class, "win.zoom-in", NULL, zoom_action);
  gtk_widget_class_install_action (widget_class, "win.zoom-out", NULL, zoom_action);
  gtk_widget_class_install_action (widget_class, "win.zoom-fit", NULL, zoom_action);
  gtk_widget_class_install_action (widget_class, "win.cancel", NULL, cancel_action);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_Escape, 0, "win.cancel", NULL);
}

/* The program's style sheet and the dark theme variant (maps read best on a dark surround),
 * once per process for the default display. Done here rather than in the application's startup
 * so that every window, also one made without an application (the UI tests), looks the same. */
static void
ensure_style (void)
{
  static gboolean done;
  g_autoptr(GtkCssProvider) css = NULL;
  GdkDisplay *display = gdk_display_get_default ();

  if (done || display == NULL)
    return;
  done = TRUE;
  g_object_set (gtk_settings_get_for_display (display), "gtk-application-prefer-dark-theme", TRUE,
                NULL);
  css = gtk_css_provider_new ();
  gtk_css_provider_load_from_resource (css, "/org/effluxproject/Efflux/style.css");
  gtk_style_context_add_provider_for_display (display, GTK_STYLE_PROVIDER (css),
                                              GTK_STYLE_PROVIDER_PRIORITY_APPLICATION);
}

static void
efflux_window_init (EffluxWindow *self)
{
  g_autoptr(GSimpleActionGroup) group = g_simple_action_group_new ();
  const char *view_props[] = { "colormap", "stretch", "limits", "grid", "tool", "new-lobe-kind" };
  GtkDropTarget *drop;

  ensure_style ();
  g_mutex_init (&self->progress_lock);
  gtk_widget_init_template (GTK_WIDGET (self));
  update_title (self);

  /* display choices of the sky view as stateful actions for the menu: view.colormap ... */
  for (gsize i = 0; i < G_N_ELEMENTS (view_props); i++)
    {
      g_autoptr(GPropertyAction) action =
        g_property_action_new (view_props[i], self->sky_view, view_props[i]);
      g_action_map_add_action (G_ACTION_MAP (group), G_ACTION (action));
    }
  gtk_widget_insert_action_group (GTK_WIDGET (self), "view", G_ACTION_GROUP (group));
  /* the Sources list's and the Review sheet's actions, for the menu and the keys */
  gtk_widget_insert_action_group (GTK_WIDGET (self), "sources", efflux_sources_get_actions (self->sources));
  gtk_widget_insert_action_group (GTK_WIDGET (self), "review",
                                  efflux_review_sheet_get_actions (self->review_sheet));
  g_signal_connect_object (self->sources, "open-source", G_CALLBACK (source_activated), self, 0);
  efflux_review_sheet_set_sky_view (self->review_sheet, self->sky_view);
  /* the Sky view's layers: map choice, context image, wing contours (efflux-sky-view.h) */
  gtk_widget_insert_action_group (GTK_WIDGET (self), "layers",
                                  efflux_sky_view_get_layer_actions (self->sky_view));
  efflux_sky_view_bind_wing_menu (self->sky_view, G_MENU (gtk_widget_get_template_child (
    GTK_WIDGET (self), EFFLUX_TYPE_WINDOW, "wing_tracer_menu")));

  g_signal_connect_object (self->sky_view, "notify::readout", G_CALLBACK (readout_changed), self, 0);
  g_signal_connect_object (self->sky_view, "notify::selected-lobe",
                           G_CALLBACK (selected_lobe_changed), self, 0);
  g_signal_connect_swapped (self->v1_spin, "value-changed", G_CALLBACK (velocity_changed), self);
  g_signal_connect_swapped (self->v2_spin, "value-changed", G_CALLBACK (velocity_changed), self);
  g_signal_connect_swapped (self->kind_dropdown, "notify::selected", G_CALLBACK (kind_changed), self);
  g_signal_connect_swapped (self->cube_dropdown, "notify::selected", G_CALLBACK (cube_changed), self);
  /* the views of app-views, fed here */
  self->shown_lobes = g_ptr_array_new_with_free_func (g_free);
  {
    GtkWidget *title;

    title = gtk_label_new (_("Cut"));
    gtk_label_set_xalign (GTK_LABEL (title), 0.0);
    gtk_widget_add_css_class (title, "heading");
    gtk_widget_add_css_class (title, "efflux-pane-title");
    gtk_box_append (GTK_BOX (self->cut_box), title);
    self->cut_view = EFFLUX_CUT_VIEW (efflux_cut_view_new ());
    gtk_widget_set_vexpand (GTK_WIDGET (self->cut_view), TRUE);
    gtk_box_append (GTK_BOX (self->cut_box), GTK_WIDGET (self->cut_view));
    g_signal_connect (self->cut_view, "range-changed", G_CALLBACK (range_changed), self);
    self->cut_tools = EFFLUX_CUT_TOOLS (efflux_cut_tools_new (self->cut_view));
    gtk_box_insert_child_after (GTK_BOX (self->cut_box), GTK_WIDGET (self->cut_tools), title);

    title = gtk_label_new (_("Spectrum"));
    gtk_label_set_xalign (GTK_LABEL (title), 0.0);
    gtk_widget_add_css_class (title, "heading");
    gtk_widget_add_css_class (title, "efflux-pane-title");
    gtk_box_append (GTK_BOX (self->spectrum_box), title);
    self->spectrum_view = EFFLUX_SPECTRUM_VIEW (efflux_spectrum_view_new ());
    gtk_widget_set_vexpand (GTK_WIDGET (self->spectrum_view), TRUE);
    gtk_box_append (GTK_BOX (self->spectrum_box), GTK_WIDGET (self->spectrum_view));
    g_signal_connect (self->spectrum_view, "range-changed", G_CALLBACK (range_changed), self);

    self->ledger = EFFLUX_LEDGER (efflux_ledger_new ());
    gtk_widget_set_vexpand (GTK_WIDGET (self->ledger), TRUE);
    gtk_box_append (GTK_BOX (self->ledger_box), GTK_WIDGET (self->ledger));
  }
  fill_recent_menu (self);
  update_actions (self);

  drop = gtk_drop_target_new (GDK_TYPE_FILE_LIST, GDK_ACTION_COPY);
  g_signal_connect (drop, "drop", G_CALLBACK (drop_cb), self);
  gtk_widget_add_controller (GTK_WIDGET (self), GTK_EVENT_CONTROLLER (drop));

  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.cancel", FALSE);
}

EffluxWindow *
efflux_window_new (EffluxApplication *application)
{
  return g_object_new (EFFLUX_TYPE_WINDOW, "application", application, NULL);
}

/* The message area: errors stay until closed or replaced (efflux-banner.h). */
void
efflux_window_show_error (EffluxWindow *self,
                          const char   *message)
{
  g_return_if_fail (EFFLUX_IS_WINDOW (self));
  g_return_if_fail (message != NULL);
  g_debug ("error shown: %s", message);
  efflux_banner_show (self->banner, EFFLUX_BANNER_ERROR, message, NULL);
}

const char *
efflux_window_get_error (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return efflux_banner_get_message (self->banner);
}

GtkWidget *
efflux_window_get_banner (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return GTK_WIDGET (self->banner);
}
