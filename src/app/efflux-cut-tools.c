/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-cut-tools"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>
#include <string.h>

#include "efflux-cut-tools.h"
#include "efflux-cube-store.h"
#include "efflux-kinematics.h"
#include "efflux-plot.h"

/* A cube read for the Cut view, shared by the shown set and the jobs that use it. */
typedef struct
{
  char       *path;
  EffluxCube *cube;
} CubeRef;

static void
cube_ref_clear (gpointer data)
{
  CubeRef *r = data;

  g_free (r->path);
  g_clear_pointer (&r->cube, efflux_cube_store_release);
}

static void
cube_ref_unref (gpointer data)
{
  if (data != NULL)
    g_atomic_rc_box_release_full (data, cube_ref_clear);
}

struct _EffluxCutTools
{
  GtkBox          parent_instance;

  EffluxCutView  *view;
  EffluxDocument *document;
  GtkDropDown    *image_dropdown;
  GtkStringList  *image_model;
  GtkLabel       *fit_label;

  char           *made_key;     /* what the shown set was made from */
  char           *pending_key;  /* what the running job makes */
  GStrv           ids;          /* the set's cube ids */
  GPtrArray      *refs;         /* CubeRef *, the set's cubes */
  char           *cut_name;
  char           *image_id;     /* the chosen image */
  GCancellable   *cut_cancellable;
  GCancellable   *fit_cancellable;
  EffluxShellFit *fit;
  char           *fit_text;
  gboolean        updating;
};

G_DEFINE_FINAL_TYPE (EffluxCutTools, efflux_cut_tools, GTK_TYPE_BOX)

enum {
  PROP_0,
  PROP_BUSY,
  N_PROPS
};

static GParamSpec *properties[N_PROPS];

gboolean
efflux_cut_tools_get_busy (EffluxCutTools *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_TOOLS (self), FALSE);
  return self->cut_cancellable != NULL || self->fit_cancellable != NULL;
}

const char * const *
efflux_cut_tools_get_ids (EffluxCutTools *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_TOOLS (self), NULL);
  return (const char * const *) self->ids;
}

const EffluxShellFit *
efflux_cut_tools_get_fit (EffluxCutTools *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_TOOLS (self), NULL);
  return self->fit;
}

const char *
efflux_cut_tools_get_fit_text (EffluxCutTools *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_TOOLS (self), NULL);
  return self->fit_text;
}

static void
notify_busy (EffluxCutTools *self)
{
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_BUSY]);
}

static void
update_actions (EffluxCutTools *self)
{
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "cut.fit-shells",
                                 self->refs != NULL && self->document != NULL
                                 && self->fit_cancellable == NULL);
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "cut.use-inclination",
                                 self->fit != NULL && self->document != NULL
                                 && isfinite (self->fit->inclination_deg));
}

static void
set_fit_text (EffluxCutTools *self,
              const char     *text)
{
  g_free (self->fit_text);
  self->fit_text = g_strdup (text);
  gtk_label_set_text (self->fit_label, text != NULL ? text : "");
  gtk_widget_set_tooltip_text (GTK_WIDGET (self->fit_label), text);
}

static void
clear_fit (EffluxCutTools *self)
{
  if (self->fit_cancellable != NULL)
    g_cancellable_cancel (self->fit_cancellable);
  g_clear_object (&self->fit_cancellable);
  g_clear_pointer (&self->fit, efflux_shellfit_free);
  set_fit_text (self, NULL);
  efflux_cut_view_set_shell_fit (self->view, NULL);
  update_actions (self);
}

/* ---- the tracers' cut ---- */

typedef struct
{
  gsize     n;
  GStrv     ids;
  GStrv     paths;
  CubeRef **refs;        /* n; NULL: to be read by the worker */
  double   *ra_dec;
  gsize     n_vertices;
  double    width;
  double   *rms_k;       /* n; the dossier's rms-k, NaN when absent */
  char     *key;
  /* results */
  EffluxPvSet *set;
  double      *sigma;
} CutJob;

static void
cut_job_free (gpointer data)
{
  CutJob *j = data;

  for (gsize i = 0; j->refs != NULL && i < j->n; i++)
    cube_ref_unref (j->refs[i]);
  g_free (j->refs);
  g_strfreev (j->ids);
  g_strfreev (j->paths);
  g_free (j->ra_dec);
  g_free (j->rms_k);
  g_free (j->key);
  g_clear_pointer (&j->set, efflux_pv_set_free);
  g_free (j->sigma);
  g_free (j);
}

static void
cut_worker (GTask        *task,
            gpointer      source,
            gpointer      task_data,
            GCancellable *cancellable)
{
  CutJob *j = task_data;
  g_autofree const EffluxCube **cubes = g_new (const EffluxCube *, j->n);
  GError *error = NULL;

  for (gsize i = 0; i < j->n; i++)
    {
      if (j->refs[i] == NULL)
        {
          /* the window's and the document's cube when they hold it: each file is read once */
          EffluxCubeLoadOptions load = { 0 };
          EffluxCube *cube;

          load.no_noise = isfinite (j->rms_k[i]);
          cube = efflux_cube_store_load (j->paths[i], &load, cancellable, NULL, NULL, &error);

          if (cube == NULL)
            {
              g_task_return_error (task, error);
              return;
            }
          j->refs[i] = g_atomic_rc_box_new0 (CubeRef);
          j->refs[i]->path = g_strdup (j->paths[i]);
          j->refs[i]->cube = cube;
        }
      cubes[i] = j->refs[i]->cube;
    }
  j->set = efflux_pv_set_new (cubes, j->n, j->ra_dec, j->n_vertices, j->width, &error);
  if (j->set == NULL)
    {
      g_task_return_error (task, error);
      return;
    }
  j->sigma = g_new (double, j->n);
  for (gsize i = 0; i < j->n; i++)
    /* the dossier's rms-k when it gives one (as the measurement does), else the cube's estimate */
    j->sigma[i] = isfinite (j->rms_k[i]) ? j->rms_k[i] : efflux_kinematics_pv_sigma (cubes[i]);
  g_task_return_boolean (task, TRUE);
}

static guint
image_index (EffluxCutTools *self)
{
  for (guint i = 0; self->ids != NULL && self->ids[i] != NULL; i++)
    if (g_strcmp0 (self->ids[i], self->image_id) == 0)
      return i;
  return 0;
}

static void
fill_dropdown (EffluxCutTools *self)
{
  guint n = g_list_model_get_n_items (G_LIST_MODEL (self->image_model));

  self->updating = TRUE;
  gtk_string_list_splice (self->image_model, 0, n, (const char * const *) self->ids);
  if (self->ids != NULL)
    gtk_drop_down_set_selected (self->image_dropdown, image_index (self));
  gtk_widget_set_sensitive (GTK_WIDGET (self->image_dropdown), self->ids != NULL);
  self->updating = FALSE;
}

static void
cut_done (GObject      *source,
          GAsyncResult *result,
          gpointer      user_data)
{
  EffluxCutTools *self = EFFLUX_CUT_TOOLS (source);
  GTask *task = G_TASK (result);
  CutJob *j = g_task_get_task_data (task);
  g_autoptr(GError) error = NULL;
  g_autoptr(GPtrArray) names = NULL;

  if (g_task_get_cancellable (task) != self->cut_cancellable)
    return;   /* a newer cut replaced this one */
  g_clear_object (&self->cut_cancellable);
  notify_busy (self);
  if (!g_task_propagate_boolean (task, &error))
    {
      if (!g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED)
          && !g_error_matches (error, EFFLUX_ERROR, EFFLUX_ERROR_CANCELLED))
        set_fit_text (self, error->message);
      update_actions (self);
      return;
    }
  /* the view borrows the grid cube: keep the new cubes before the old ones go */
  {
    GPtrArray *refs = g_ptr_array_new_with_free_func (cube_ref_unref);

    for (gsize i = 0; i < j->n; i++)
      g_ptr_array_add (refs, g_steal_pointer (&j->refs[i]));
    g_strfreev (self->ids);
    self->ids = g_steal_pointer (&j->ids);
    g_free (self->made_key);
    self->made_key = g_steal_pointer (&j->key);
    names = g_ptr_array_new ();
    for (gsize i = 0; i < j->n; i++)
      g_ptr_array_add (names, self->ids[i]);
    g_ptr_array_add (names, NULL);
    efflux_cut_view_set_pv_set_noise (self->view, g_steal_pointer (&j->set),
                                      (const char * const *) names->pdata, image_index (self),
                                      ((CubeRef *) g_ptr_array_index (refs, 0))->cube, j->sigma);
    g_clear_pointer (&self->refs, g_ptr_array_unref);
    self->refs = refs;
  }
  fill_dropdown (self);
  update_actions (self);
}

static char *
make_key (const EffluxDossier    *d,
          const EffluxDossierCut *cut,
          GStrv                   paths)
{
  GString *s = g_string_new (cut->name);

  g_string_append_printf (s, "|%.9g|", cut->width_arcsec);
  for (gsize v = 0; v < cut->n_vertices; v++)
    g_string_append_printf (s, "%.12g,%.12g;", cut->ra_deg[v], cut->dec_deg[v]);
  for (guint i = 0; paths[i] != NULL; i++)
    g_string_append_printf (s, "|%s", paths[i]);
  return g_string_free (s, FALSE);
}

static CubeRef *
find_ref (EffluxCutTools *self,
          const char     *path)
{
  for (guint i = 0; self->refs != NULL && i < self->refs->len; i++)
    {
      CubeRef *r = g_ptr_array_index (self->refs, i);

      if (strcmp (r->path, path) == 0)
        return g_atomic_rc_box_acquire (r);
    }
  return NULL;
}

static void
clear_set (EffluxCutTools *self)
{
  if (self->cut_cancellable != NULL)
    g_cancellable_cancel (self->cut_cancellable);
  g_clear_object (&self->cut_cancellable);
  clear_fit (self);
  efflux_cut_view_set_pv_set (self->view, NULL, NULL, 0, NULL);
  g_clear_pointer (&self->refs, g_ptr_array_unref);
  g_clear_pointer (&self->ids, g_strfreev);
  g_clear_pointer (&self->made_key, g_free);
  fill_dropdown (self);
  update_actions (self);
  notify_busy (self);
}

void
efflux_cut_tools_sync (EffluxCutTools *self,
                       EffluxDocument *document,
                       gboolean        force)
{
  const EffluxDossier *d;
  const EffluxDossierCut *cut;
  g_autoptr(GStrvBuilder) ids = g_strv_builder_new ();
  g_autoptr(GStrvBuilder) paths = g_strv_builder_new ();
  g_autoptr(GArray) rms = g_array_new (FALSE, FALSE, sizeof (double));
  g_autoptr(GTask) task = NULL;
  g_autofree char *key = NULL;
  CutJob *j;

  g_return_if_fail (EFFLUX_IS_CUT_TOOLS (self));
  if (document != self->document)
    {
      g_set_object (&self->document, document);
      g_clear_pointer (&self->made_key, g_free);
    }
  d = document != NULL ? efflux_document_get_dossier (document) : NULL;
  if (d == NULL || d->cuts->len == 0)
    {
      clear_set (self);
      return;
    }
  cut = g_ptr_array_index (d->cuts, 0);
  {
    const EffluxDossierCube *first = efflux_dossier_find_cube (d, cut->cube_id);

    /* the cut's own cube defines the grid; the others follow in the dossier's order */
    if (first != NULL)
      {
        g_strv_builder_add (ids, first->id);
        g_strv_builder_add (paths, first->abs_path);
        g_array_append_val (rms, first->rms_k);
      }
    for (guint i = 0; i < d->cubes->len; i++)
      {
        const EffluxDossierCube *dc = g_ptr_array_index (d->cubes, i);

        if (dc == first)
          continue;
        g_strv_builder_add (ids, dc->id);
        g_strv_builder_add (paths, dc->abs_path);
        g_array_append_val (rms, dc->rms_k);
      }
  }
  j = g_new0 (CutJob, 1);
  j->ids = g_strv_builder_end (ids);
  j->paths = g_strv_builder_end (paths);
  j->n = g_strv_length (j->paths);
  j->rms_k = (double *) g_array_free (g_steal_pointer (&rms), FALSE);
  key = make_key (d, cut, j->paths);
  /* made already, or being made */
  if (j->n == 0 || (self->refs != NULL && self->cut_cancellable == NULL && g_strcmp0 (key, self->made_key) == 0)
      || (self->cut_cancellable != NULL && g_strcmp0 (key, self->pending_key) == 0))
    {
      cut_job_free (j);
      return;
    }
  g_free (self->cut_name);
  self->cut_name = g_strdup (cut->name);
  g_free (self->pending_key);
  self->pending_key = g_strdup (key);
  j->key = g_steal_pointer (&key);
  j->refs = g_new0 (CubeRef *, j->n);
  for (gsize i = 0; i < j->n; i++)
    j->refs[i] = find_ref (self, j->paths[i]);
  j->ra_dec = efflux_dossier_cut_path (cut);
  j->n_vertices = cut->n_vertices;
  j->width = cut->width_arcsec;

  clear_fit (self);
  if (self->cut_cancellable != NULL)
    g_cancellable_cancel (self->cut_cancellable);
  g_clear_object (&self->cut_cancellable);
  self->cut_cancellable = g_cancellable_new ();
  task = g_task_new (self, self->cut_cancellable, cut_done, NULL);
  g_task_set_source_tag (task, efflux_cut_tools_sync);
  g_task_set_task_data (task, j, cut_job_free);
  g_task_run_in_thread (task, cut_worker);
  notify_busy (self);
}

static void
image_selected (EffluxCutTools *self)
{
  guint i = gtk_drop_down_get_selected (self->image_dropdown);

  if (self->updating || self->ids == NULL || i >= g_strv_length (self->ids))
    return;
  g_free (self->image_id);
  self->image_id = g_strdup (self->ids[i]);
  efflux_cut_view_set_image (self->view, i);
}

static void
image_action (GtkWidget  *widget,
              const char *action_name,
              GVariant   *parameter)
{
  EffluxCutTools *self = EFFLUX_CUT_TOOLS (widget);
  const char *id = g_variant_get_string (parameter, NULL);

  g_free (self->image_id);
  self->image_id = g_strdup (id);
  if (self->ids != NULL && g_strv_contains ((const char * const *) self->ids, id))
    {
      gtk_drop_down_set_selected (self->image_dropdown, image_index (self));
      efflux_cut_view_set_image (self->view, image_index (self));
    }
}

/* ---- shells ---- */

typedef struct
{
  EffluxDossier *dossier;
  char          *cut_name;
  CubeRef       *ref;
} FitJob;

static void
fit_job_free (gpointer data)
{
  FitJob *j = data;

  g_clear_pointer (&j->dossier, efflux_dossier_free);
  g_free (j->cut_name);
  cube_ref_unref (j->ref);
  g_free (j);
}

static void
fit_worker (GTask        *task,
            gpointer      source,
            gpointer      task_data,
            GCancellable *cancellable)
{
  FitJob *j = task_data;
  GError *error = NULL;
  EffluxShellFit *fit = efflux_shellfit_dossier_cube (j->dossier, j->cut_name, j->ref->cube, NULL, &error);

  if (fit == NULL)
    g_task_return_error (task, error);
  else
    g_task_return_pointer (task, fit, (GDestroyNotify) efflux_shellfit_free);
}

static char *
describe_fit (const EffluxShellFit *fit)
{
  GString *s = g_string_new (NULL);
  g_autofree char *i = efflux_format_uncertain (fit->inclination_deg, fit->inclination_err_deg);
  g_autofree char *t = efflux_format_uncertain (fit->age_yr, fit->age_err_yr);
  g_autofree char *c = efflux_format_uncertain (fit->c_per_arcsec, fit->c_err_per_arcsec);
  guint n_spurs = 0;

  if (isfinite (fit->inclination_deg))
    /* Translators: the wind-driven shell fit: inclination, age and C of z = C R^2 */
    g_string_append_printf (s, _("Shells: i = %s°, t₀ = %s yr, C = %s per ″"), i, t, c);
  else
    g_string_append (s, _("Shells: no lobe could be fitted"));
  for (guint l = 0; l < fit->n_lobes; l++)
    {
      const EffluxShellLobeFit *lf = &fit->lobes[l];

      if (!lf->ok)
        g_string_append_printf (s, lf->kind == EFFLUX_LOBE_RED ? _("; red lobe not fitted: %s")
                                                               : _("; blue lobe not fitted: %s"),
                                lf->message != NULL ? lf->message : "");
      n_spurs += lf->spurs != NULL ? lf->spurs->len : 0;
    }
  if (n_spurs > 0)
    g_string_append_printf (s, g_dngettext (GETTEXT_PACKAGE, "; %u bow-shock spur (left out of the fit)",
                                            "; %u bow-shock spurs (left out of the fit)", n_spurs),
                            n_spurs);
  return g_string_free (s, FALSE);
}

static void
fit_done (GObject      *source,
          GAsyncResult *result,
          gpointer      user_data)
{
  EffluxCutTools *self = EFFLUX_CUT_TOOLS (source);
  GTask *task = G_TASK (result);
  g_autoptr(GError) error = NULL;
  EffluxShellFit *fit = g_task_propagate_pointer (task, &error);

  if (g_task_get_cancellable (task) != self->fit_cancellable)
    {
      g_clear_pointer (&fit, efflux_shellfit_free);
      return;
    }
  g_clear_object (&self->fit_cancellable);
  g_clear_pointer (&self->fit, efflux_shellfit_free);
  self->fit = fit;
  efflux_cut_view_set_shell_fit (self->view, fit);
  if (fit == NULL)
    set_fit_text (self, error->message);
  else
    {
      g_autofree char *text = describe_fit (fit);

      set_fit_text (self, text);
    }
  update_actions (self);
  notify_busy (self);
}

static void
fit_action (GtkWidget  *widget,
            const char *action_name,
            GVariant   *parameter)
{
  EffluxCutTools *self = EFFLUX_CUT_TOOLS (widget);
  const EffluxDossier *d;
  g_autoptr(GTask) task = NULL;
  g_autofree char *data = NULL;
  gsize length = 0;
  FitJob *j;

  if (self->document == NULL || self->refs == NULL || self->cut_name == NULL)
    return;
  d = efflux_document_get_dossier (self->document);
  clear_fit (self);
  j = g_new0 (FitJob, 1);
  /* the worker's own copy: the document replaces its dossier at every edit */
  data = efflux_dossier_to_data ((EffluxDossier *) d, &length);
  j->dossier = efflux_dossier_new_from_data (data, (gssize) length, d->path, d->dir, NULL);
  j->cut_name = g_strdup (self->cut_name);
  j->ref = g_atomic_rc_box_acquire (g_ptr_array_index (self->refs, 0));
  if (j->dossier == NULL)
    {
      fit_job_free (j);
      return;
    }
  self->fit_cancellable = g_cancellable_new ();
  task = g_task_new (self, self->fit_cancellable, fit_done, NULL);
  g_task_set_source_tag (task, fit_action);
  g_task_set_task_data (task, j, fit_job_free);
  g_task_run_in_thread (task, fit_worker);
  /* Translators: while the shell fit runs */
  set_fit_text (self, _("Fitting wind-driven shells…"));
  update_actions (self);
  notify_busy (self);
}

static void
use_inclination_action (GtkWidget  *widget,
                        const char *action_name,
                        GVariant   *parameter)
{
  EffluxCutTools *self = EFFLUX_CUT_TOOLS (widget);
  g_autoptr(GError) error = NULL;
  double i, e;
  char vi[G_ASCII_DTOSTR_BUF_SIZE], v1[G_ASCII_DTOSTR_BUF_SIZE], v2[G_ASCII_DTOSTR_BUF_SIZE];
  g_autofree char *range = NULL;
  const char *groups[] = { "Source", "Source", "Source" };
  const char *keys[] = { "inclination-mode", "inclination-deg", "inclination-range-deg" };
  const char *values[3];

  if (self->fit == NULL || self->document == NULL || !isfinite (self->fit->inclination_deg))
    return;
  i = self->fit->inclination_deg;
  e = isfinite (self->fit->inclination_err_deg) ? self->fit->inclination_err_deg : 0.0;
  g_ascii_formatd (vi, sizeof vi, "%.2f", i);
  g_ascii_formatd (v1, sizeof v1, "%.2f", MAX (i - e, 0.01));
  g_ascii_formatd (v2, sizeof v2, "%.2f", MIN (i + e, 89.99));
  range = g_strdup_printf ("%s;%s", v1, v2);
  values[0] = "range";
  values[1] = vi;
  values[2] = range;
  if (!efflux_document_set_keys (self->document, 3, groups, keys, values, 0, &error))
    set_fit_text (self, error->message);
}

/* ---- the object ---- */

static void
efflux_cut_tools_get_property (GObject    *object,
                               guint       prop_id,
                               GValue     *value,
                               GParamSpec *pspec)
{
  EffluxCutTools *self = EFFLUX_CUT_TOOLS (object);

  switch (prop_id)
    {
    case PROP_BUSY:
      g_value_set_boolean (value, efflux_cut_tools_get_busy (self));
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_cut_tools_dispose (GObject *object)
{
  EffluxCutTools *self = EFFLUX_CUT_TOOLS (object);

  if (self->cut_cancellable != NULL)
    g_cancellable_cancel (self->cut_cancellable);
  g_clear_object (&self->cut_cancellable);
  if (self->fit_cancellable != NULL)
    g_cancellable_cancel (self->fit_cancellable);
  g_clear_object (&self->fit_cancellable);
  g_clear_object (&self->document);
  g_clear_object (&self->view);
  G_OBJECT_CLASS (efflux_cut_tools_parent_class)->dispose (object);
}

static void
efflux_cut_tools_finalize (GObject *object)
{
  EffluxCutTools *self = EFFLUX_CUT_TOOLS (object);

  g_clear_pointer (&self->fit, efflux_shellfit_free);
  g_clear_pointer (&self->refs, g_ptr_array_unref);
  g_strfreev (self->ids);
  g_free (self->made_key);
  g_free (self->pending_key);
  g_free (self->cut_name);
  g_free (self->image_id);
  g_free (self->fit_text);
  G_OBJECT_CLASS (efflux_cut_tools_parent_class)->finalize (object);
}

static void
efflux_cut_tools_class_init (EffluxCutToolsClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_cut_tools_dispose;
  object_class->finalize = efflux_cut_tools_finalize;
  object_class->get_property = efflux_cut_tools_get_property;

  properties[PROP_BUSY] =
    g_param_spec_boolean ("busy", NULL, NULL, FALSE,
                          G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  g_object_class_install_properties (object_class, N_PROPS, properties);

  gtk_widget_class_install_action (widget_class, "cut.fit-shells", NULL, fit_action);
  gtk_widget_class_install_action (widget_class, "cut.use-inclination", NULL, use_inclination_action);
  gtk_widget_class_install_action (widget_class, "cut.image", "s", image_action);
}

static void
efflux_cut_tools_init (EffluxCutTools *self)
{
  GtkWidget *row, *label, *button;

  gtk_orientable_set_orientation (GTK_ORIENTABLE (self), GTK_ORIENTATION_VERTICAL);
  gtk_box_set_spacing (GTK_BOX (self), 4);

  row = gtk_box_new (GTK_ORIENTATION_HORIZONTAL, 6);
  /* Translators: chooses the tracer drawn as the PV image; the others are contours */
  label = gtk_label_new_with_mnemonic (_("_Image:"));
  gtk_box_append (GTK_BOX (row), label);
  self->image_model = gtk_string_list_new (NULL);
  self->image_dropdown = GTK_DROP_DOWN (gtk_drop_down_new (G_LIST_MODEL (self->image_model), NULL));
  gtk_label_set_mnemonic_widget (GTK_LABEL (label), GTK_WIDGET (self->image_dropdown));
  gtk_widget_set_tooltip_text (GTK_WIDGET (self->image_dropdown),
                               _("The tracer drawn as the image; the others are drawn as contours"));
  gtk_widget_set_sensitive (GTK_WIDGET (self->image_dropdown), FALSE);
  g_signal_connect_swapped (self->image_dropdown, "notify::selected", G_CALLBACK (image_selected), self);
  gtk_box_append (GTK_BOX (row), GTK_WIDGET (self->image_dropdown));

  button = gtk_button_new_with_mnemonic (_("_Fit wind-driven shells"));
  gtk_actionable_set_action_name (GTK_ACTIONABLE (button), "cut.fit-shells");
  gtk_widget_set_tooltip_text (button, _("Fit a wind-driven shell (z = C R², Hubble flow) to each lobe "
                                         "of the cut's PV emission: inclination, age and C"));
  gtk_box_append (GTK_BOX (row), button);
  button = gtk_button_new_with_mnemonic (_("_Use this inclination"));
  gtk_actionable_set_action_name (GTK_ACTIONABLE (button), "cut.use-inclination");
  gtk_widget_set_tooltip_text (button, _("Put the fitted inclination and its range (i ± error) into "
                                         "the source's assumptions"));
  gtk_box_append (GTK_BOX (row), button);
  gtk_box_append (GTK_BOX (self), row);

  self->fit_label = GTK_LABEL (gtk_label_new (NULL));
  gtk_label_set_xalign (self->fit_label, 0.0);
  gtk_label_set_ellipsize (self->fit_label, PANGO_ELLIPSIZE_END);
  gtk_label_set_selectable (self->fit_label, TRUE);
  gtk_box_append (GTK_BOX (self), GTK_WIDGET (self->fit_label));
  update_actions (self);
}

GtkWidget *
efflux_cut_tools_new (EffluxCutView *view)
{
  EffluxCutTools *self = g_object_new (EFFLUX_TYPE_CUT_TOOLS, NULL);

  self->view = g_object_ref (view);
  return GTK_WIDGET (self);
}
