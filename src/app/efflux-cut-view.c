/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-cut-view"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>
#include <string.h>

#include "efflux-colormap.h"
#include "efflux-contour.h"
#include "efflux-cut-view.h"
#include "efflux-kinematics.h"
#include "efflux-plot.h"
#include "efflux-stretch.h"

#define MARGIN_LEFT   60
#define MARGIN_RIGHT  12
#define MARGIN_TOP    26
#define MARGIN_BOTTOM 40
#define GRAB_PIXELS   6.0
/* cuts of more voxel samples than this are made in a thread */
#define THREAD_SAMPLES 4000000.0

typedef enum
{
  DRAG_NONE,
  DRAG_RANGE,
  DRAG_SLOPE,
} DragKind;

struct _EffluxCutView
{
  GtkWidget           parent_instance;

  EffluxPvSet        *set;
  GStrv               names;
  guint               image;
  const EffluxCube   *grid;          /* borrowed */
  const EffluxCube  **cubes;         /* the set's cubes (borrowed) when it was made here, or NULL */
  GPtrArray          *contours;      /* per cut: GPtrArray of EffluxPolyline *, NULL for the image */
  GPtrArray          *levels;        /* per cut: GArray of double (the levels traced), or NULL */
  GArray             *sigma;         /* per cut: the noise given with the set (double), or NULL */
  GArray             *multiples;     /* double */

  /* fitted shells */
  gsize               shell_n[2];
  double             *shell_x[2], *shell_v[2];
  EffluxLobeKind      shell_kind[2];
  GArray             *shell_spurs;   /* EffluxShellSpur, offsets from the source */
  double              shell_src;     /* the fit's source offset */
  char               *shell_note;    /* failed lobes, for the legend */

  /* the image */
  EffluxColormapKind  colormap;
  EffluxStretchKind   stretch;
  double              limits;
  guint8             *rgba;          /* n_offsets x nchan, as the PV's data */

  /* overlays */
  GPtrArray          *ranges;
  double              vsys;
  gboolean            has_source_radec;
  double              src_ra, src_dec;
  double              src_offset;
  double              distance_pc, inclination_deg;
  double              slope;         /* km/s per arcsec */
  char               *age_label;

  /* drag */
  DragKind            drag;
  int                 drag_range, drag_edge;
  double              drag_x0, drag_y0;

  /* threaded cuts */
  GCancellable       *cancellable;
  gboolean            busy;

  GskRenderNode      *node;
};

G_DEFINE_FINAL_TYPE (EffluxCutView, efflux_cut_view, GTK_TYPE_WIDGET)

enum {
  PROP_0,
  PROP_COLORMAP,
  PROP_STRETCH,
  PROP_SLOPE,
  PROP_AGE_YR,
  PROP_BUSY,
  N_PROPS
};

enum {
  RANGE_CHANGED,
  SLOPE_CHANGED,
  N_SIGNALS
};

static GParamSpec *properties[N_PROPS];
static guint signals[N_SIGNALS];

static const double default_multiples[] = { 3.0, 6.0, 12.0, 24.0, 48.0 };

static const double contour_colours[][3] = {
  { 1.0, 1.0, 1.0 },
  { 1.0, 0.85, 0.2 },
  { 0.35, 1.0, 0.45 },
  { 1.0, 0.45, 1.0 },
};

static void clear_shells (EffluxCutView *self);

static void
invalidate (EffluxCutView *self)
{
  g_clear_pointer (&self->node, gsk_render_node_unref);
  gtk_widget_queue_draw (GTK_WIDGET (self));
}

static const EffluxPv *
image_pv (EffluxCutView *self)
{
  if (self->set == NULL || self->image >= self->set->n_cubes)
    return NULL;
  return self->set->cuts[self->image];
}

/* ---- the age ---- */

static void
update_age (EffluxCutView *self)
{
  double per_pc = efflux_kinematics_slope_per_pc (self->slope, self->distance_pc);
  double age = efflux_hubble_age_yr (per_pc, self->inclination_deg);
  g_autoptr(GString) s = g_string_new (NULL);

  /* Translators: the Hubble-law line's slope in km/s per arcsec */
  g_string_append_printf (s, _("Hubble law: %.3g km/s/″"), self->slope);
  if (isfinite (per_pc))
    g_string_append_printf (s, " (%.3g km/s/pc)", per_pc);
  if (isfinite (age))
    {
      g_autofree char *t = efflux_format_uncertain (age, NAN);

      /* Translators: the age a Hubble-law slope implies, at the inclination (degrees) */
      g_string_append_printf (s, _(", t₀ = %s yr at i = %.0f°"), t, self->inclination_deg);
    }
  else if (isinf (age))
    g_string_append (s, _(", t₀ unbounded (flat line)"));
  else
    g_string_append (s, _(", t₀ needs a distance and an inclination between 0° and 90°"));
  g_free (self->age_label);
  self->age_label = g_string_free (g_steal_pointer (&s), FALSE);
}

double
efflux_cut_view_get_age_yr (EffluxCutView *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), NAN);
  return efflux_hubble_age_yr (efflux_kinematics_slope_per_pc (self->slope, self->distance_pc),
                               self->inclination_deg);
}

const char *
efflux_cut_view_get_age_label (EffluxCutView *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), NULL);
  return self->age_label;
}

/* ---- axes ---- */

static void
get_axes (EffluxCutView *self,
          EffluxAxis    *xa,
          EffluxAxis    *ya)
{
  const EffluxPv *pv = image_pv (self);
  int w = gtk_widget_get_width (GTK_WIDGET (self));
  int h = gtk_widget_get_height (GTK_WIDGET (self));

  if (pv != NULL && pv->n_offsets > 0 && pv->nchan > 0)
    {
      double step = pv->offset_step_arcsec;
      double va = pv->velocity[0], vb = pv->velocity[pv->nchan - 1];

      xa->d0 = -step / 2.0;
      xa->d1 = (pv->n_offsets - 0.5) * step;
      ya->d0 = MIN (va, vb) - fabs (pv->dv_kms) / 2.0;
      ya->d1 = MAX (va, vb) + fabs (pv->dv_kms) / 2.0;
    }
  else
    {
      xa->d0 = 0.0;
      xa->d1 = 10.0;
      ya->d0 = -10.0;
      ya->d1 = 10.0;
    }
  xa->s0 = MARGIN_LEFT;
  xa->s1 = MAX (w - MARGIN_RIGHT, MARGIN_LEFT + 1);
  ya->s0 = MAX (h - MARGIN_BOTTOM, MARGIN_TOP + 1);
  ya->s1 = MARGIN_TOP;
}

void
efflux_cut_view_widget_to_data (EffluxCutView *self,
                                double         wx,
                                double         wy,
                                double        *offset,
                                double        *v)
{
  EffluxAxis xa, ya;

  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  get_axes (self, &xa, &ya);
  if (offset != NULL)
    *offset = efflux_axis_to_data (&xa, wx);
  if (v != NULL)
    *v = efflux_axis_to_data (&ya, wy);
}

void
efflux_cut_view_data_to_widget (EffluxCutView *self,
                                double         offset,
                                double         v,
                                double        *wx,
                                double        *wy)
{
  EffluxAxis xa, ya;

  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  get_axes (self, &xa, &ya);
  if (wx != NULL)
    *wx = efflux_axis_to_screen (&xa, offset);
  if (wy != NULL)
    *wy = efflux_axis_to_screen (&ya, v);
}

/* ---- data ---- */

static void
recolour (EffluxCutView *self)
{
  const EffluxPv *pv = image_pv (self);
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  double lo, hi;
  gsize n;

  g_clear_pointer (&self->rgba, g_free);
  if (pv == NULL)
    return;
  n = pv->n_offsets * pv->nchan;
  if (!efflux_percentile_limits (pv->data, n, self->limits, &lo, &hi))
    lo = hi = NAN;
  efflux_colormap_fill (self->colormap, lut);
  self->rgba = g_malloc (MAX (n, 1) * 4);
  efflux_colormap_apply (lut, self->stretch, lo, hi, pv->data, n, self->rgba);
}

static void
free_lines (gpointer data)
{
  if (data != NULL)
    g_ptr_array_unref (data);
}

static void
free_levels (GArray *levels)
{
  if (levels != NULL)
    g_array_unref (levels);
}

static void
trace_contours (EffluxCutView *self)
{
  g_clear_pointer (&self->contours, g_ptr_array_unref);
  g_clear_pointer (&self->levels, g_ptr_array_unref);
  if (self->set == NULL)
    return;
  self->contours = g_ptr_array_new_with_free_func (free_lines);
  self->levels = g_ptr_array_new_with_free_func ((GDestroyNotify) free_levels);
  for (guint i = 0; i < self->set->n_cubes; i++)
    {
      const EffluxPv *pv = self->set->cuts[i];
      const EffluxCube *cube = NULL;
      g_autofree double *levels = NULL;
      double sigma = NAN;

      g_ptr_array_add (self->contours, NULL);
      g_ptr_array_add (self->levels, NULL);
      if (i == self->image)
        continue;
      /* the noise of the cube this cut came from: given with the set, known when the set was
       * made here, and for cut 0 (the grid cube) */
      if (self->sigma != NULL && i < self->sigma->len)
        sigma = g_array_index (self->sigma, double, i);
      else
        {
          cube = self->cubes != NULL ? self->cubes[i] : (i == 0 ? self->grid : NULL);
          if (cube != NULL)
            sigma = efflux_kinematics_pv_sigma (cube);
        }
      if (!isfinite (sigma))
        {
          /* no cube noise known: the spread of the PV itself (its 16-84 percentile half-width) */
          double pct[] = { 16.0, 84.0 }, out[2];

          if (efflux_percentiles (pv->data, pv->n_offsets * pv->nchan, pct, 2, out))
            sigma = (out[1] - out[0]) / 2.0;
        }
      if (!isfinite (sigma) || sigma <= 0.0)
        continue;
      levels = efflux_contour_levels_sigma (sigma, (const double *) self->multiples->data,
                                            self->multiples->len, NULL);
      if (levels == NULL)
        continue;
      g_ptr_array_index (self->contours, i) =
        efflux_contour_trace_levels (pv->data, pv->n_offsets, pv->nchan, levels,
                                     self->multiples->len);
      {
        GArray *lv = g_array_new (FALSE, FALSE, sizeof (double));

        g_array_append_vals (lv, levels, self->multiples->len);
        g_ptr_array_index (self->levels, i) = lv;
      }
    }
}

static void
place_source (EffluxCutView *self)
{
  const EffluxPv *pv = self->set != NULL ? self->set->cuts[0] : NULL;
  double px, py, off;

  if (!self->has_source_radec)
    return;
  self->src_offset = NAN;
  if (pv != NULL && self->grid != NULL && self->grid->sky != NULL
      && efflux_cube_icrs_to_pixel (self->grid, self->src_ra, self->src_dec, &px, &py)
      && efflux_kinematics_offset_on_cut (pv, px, py, &off, NULL))
    self->src_offset = off;
}

static void
install_set (EffluxCutView      *self,
             EffluxPvSet        *set,
             const char * const *names,
             guint               image,
             const EffluxCube   *grid)
{
  g_clear_pointer (&self->set, efflux_pv_set_free);
  g_clear_pointer (&self->names, g_strfreev);
  self->set = set;
  self->names = names != NULL ? g_strdupv ((char **) names) : NULL;
  self->image = image;
  self->grid = grid;
  clear_shells (self);
  recolour (self);
  trace_contours (self);
  place_source (self);
  invalidate (self);
}

void
efflux_cut_view_set_pv_set (EffluxCutView      *self,
                            EffluxPvSet        *set,
                            const char * const *names,
                            guint               image,
                            const EffluxCube   *grid)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  g_return_if_fail (set == NULL || image < set->n_cubes);

  g_clear_pointer (&self->cubes, g_free);
  g_clear_pointer (&self->sigma, g_array_unref);
  install_set (self, set, names, image, grid);
}

void
efflux_cut_view_set_pv_set_noise (EffluxCutView      *self,
                                  EffluxPvSet        *set,
                                  const char * const *names,
                                  guint               image,
                                  const EffluxCube   *grid,
                                  const double       *sigma)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  g_return_if_fail (set == NULL || image < set->n_cubes);

  g_clear_pointer (&self->cubes, g_free);
  g_clear_pointer (&self->sigma, g_array_unref);
  if (set != NULL && sigma != NULL)
    {
      self->sigma = g_array_new (FALSE, FALSE, sizeof (double));
      g_array_append_vals (self->sigma, sigma, set->n_cubes);
    }
  install_set (self, set, names, image, grid);
}

guint
efflux_cut_view_get_image (EffluxCutView *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), 0);
  return self->image;
}

const double *
efflux_cut_view_get_contour_levels (EffluxCutView *self,
                                    guint          index,
                                    gsize         *n)
{
  GArray *lv;

  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), NULL);
  if (self->levels == NULL || index >= self->levels->len
      || (lv = g_ptr_array_index (self->levels, index)) == NULL)
    return NULL;
  if (n != NULL)
    *n = lv->len;
  return (const double *) lv->data;
}

static void
clear_shells (EffluxCutView *self)
{
  for (int l = 0; l < 2; l++)
    {
      g_clear_pointer (&self->shell_x[l], g_free);
      g_clear_pointer (&self->shell_v[l], g_free);
      self->shell_n[l] = 0;
    }
  g_clear_pointer (&self->shell_spurs, g_array_unref);
  g_clear_pointer (&self->shell_note, g_free);
}

#define SHELL_POINTS 200

void
efflux_cut_view_set_shell_fit (EffluxCutView        *self,
                               const EffluxShellFit *fit)
{
  g_autoptr(GString) note = NULL;

  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  clear_shells (self);
  if (fit == NULL)
    {
      invalidate (self);
      return;
    }
  note = g_string_new (NULL);
  self->shell_src = fit->source_offset_arcsec;
  self->shell_spurs = g_array_new (FALSE, FALSE, sizeof (EffluxShellSpur));
  for (guint l = 0; l < fit->n_lobes && l < 2; l++)
    {
      const EffluxShellLobeFit *lf = &fit->lobes[l];

      self->shell_kind[l] = lf->kind;
      if (lf->spurs != NULL)
        g_array_append_vals (self->shell_spurs, lf->spurs->data, lf->spurs->len);
      if (!lf->ok)
        {
          if (note->len > 0)
            g_string_append (note, "; ");
          /* Translators: a lobe whose shell fit failed, with the reason */
          g_string_append_printf (note, lf->kind == EFFLUX_LOBE_RED ? _("red lobe not fitted: %s")
                                                                    : _("blue lobe not fitted: %s"),
                                  lf->message != NULL ? lf->message : "");
          continue;
        }
      self->shell_x[l] = g_new (double, SHELL_POINTS);
      self->shell_v[l] = g_new (double, SHELL_POINTS);
      self->shell_n[l] = efflux_shellfit_curve (fit, l, SHELL_POINTS, self->shell_x[l],
                                                self->shell_v[l]);
    }
  self->shell_note = note->len > 0 ? g_string_free (g_steal_pointer (&note), FALSE) : NULL;
  invalidate (self);
}

gboolean
efflux_cut_view_get_shell_curve (EffluxCutView  *self,
                                 guint           lobe,
                                 gsize          *n,
                                 const double  **offset_arcsec,
                                 const double  **velocity_kms)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), FALSE);
  if (lobe >= 2 || self->shell_n[lobe] == 0)
    return FALSE;
  *n = self->shell_n[lobe];
  *offset_arcsec = self->shell_x[lobe];
  *velocity_kms = self->shell_v[lobe];
  return TRUE;
}

const EffluxPvSet *
efflux_cut_view_get_pv_set (EffluxCutView *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), NULL);
  return self->set;
}

typedef struct
{
  const EffluxCube **cubes;
  gsize              n_cubes;
  GStrv              names;
  guint              image;
  double            *ra_dec;
  gsize              n_vertices;
  double             width;
} CutTask;

static void
cut_task_free (gpointer data)
{
  CutTask *t = data;

  g_free (t->cubes);
  g_strfreev (t->names);
  g_free (t->ra_dec);
  g_free (t);
}

static void
cut_worker (GTask        *task,
            gpointer      source,
            gpointer      task_data,
            GCancellable *cancellable)
{
  CutTask *t = task_data;
  GError *error = NULL;
  EffluxPvSet *set = efflux_pv_set_new (t->cubes, t->n_cubes, t->ra_dec, t->n_vertices, t->width,
                                        &error);

  if (set == NULL)
    g_task_return_error (task, error);
  else
    g_task_return_pointer (task, set, (GDestroyNotify) efflux_pv_set_free);
}

static void
set_busy (EffluxCutView *self,
          gboolean       busy)
{
  if (self->busy == busy)
    return;
  self->busy = busy;
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_BUSY]);
}

static void
adopt_task_result (EffluxCutView *self,
                   CutTask       *t,
                   EffluxPvSet   *set)
{
  g_free (self->cubes);
  g_clear_pointer (&self->sigma, g_array_unref);
  self->cubes = g_memdup2 (t->cubes, t->n_cubes * sizeof (EffluxCube *));
  install_set (self, set, (const char * const *) t->names, t->image, t->cubes[0]);
}

static void
cut_done (GObject      *source,
          GAsyncResult *result,
          gpointer      user_data)
{
  EffluxCutView *self = EFFLUX_CUT_VIEW (source);
  GTask *task = G_TASK (result);
  g_autoptr(GError) error = NULL;
  EffluxPvSet *set = g_task_propagate_pointer (task, &error);

  if (g_task_get_cancellable (task) != self->cancellable)
    {
      /* a newer cut replaced this one */
      g_clear_pointer (&set, efflux_pv_set_free);
      return;
    }
  set_busy (self, FALSE);
  if (set == NULL)
    {
      if (!g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED))
        g_message ("cut: %s", error->message);
      return;
    }
  adopt_task_result (self, g_task_get_task_data (task), set);
}

gboolean
efflux_cut_view_set_path (EffluxCutView             *self,
                          const EffluxCube * const  *cubes,
                          const char * const        *names,
                          gsize                      n_cubes,
                          guint                      image,
                          const double              *ra_dec,
                          gsize                      n_vertices,
                          double                     width_arcsec,
                          GError                   **error)
{
  g_autoptr(GTask) task = NULL;
  CutTask *t;
  double length = 0.0, samples;

  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), FALSE);
  g_return_val_if_fail (cubes != NULL && n_cubes > 0 && image < n_cubes, FALSE);
  g_return_val_if_fail (ra_dec != NULL && n_vertices >= 2, FALSE);

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  set_busy (self, FALSE);

  t = g_new0 (CutTask, 1);
  t->cubes = g_memdup2 (cubes, n_cubes * sizeof (EffluxCube *));
  t->n_cubes = n_cubes;
  t->image = image;
  t->ra_dec = g_memdup2 (ra_dec, 2 * n_vertices * sizeof (double));
  t->n_vertices = n_vertices;
  t->width = width_arcsec;
  if (names != NULL)
    t->names = g_strdupv ((char **) names);

  /* the work: samples along x across x channels x cubes */
  for (gsize i = 0; i + 1 < n_vertices; i++)
    {
      double x0, y0, x1, y1;

      if (efflux_cube_icrs_to_pixel (cubes[0], ra_dec[2 * i], ra_dec[2 * i + 1], &x0, &y0)
          && efflux_cube_icrs_to_pixel (cubes[0], ra_dec[2 * i + 2], ra_dec[2 * i + 3], &x1, &y1))
        length += hypot (x1 - x0, y1 - y0);
    }
  {
    double pix = sqrt (cubes[0]->pixel_arcsec[0] * cubes[0]->pixel_arcsec[1]);
    double across = pix > 0.0 ? 2.0 * floor (width_arcsec / (2.0 * pix) + 1e-9) + 1.0 : 1.0;

    samples = (length + 1.0) * across * cubes[0]->nchan * n_cubes;
  }

  if (samples < THREAD_SAMPLES)
    {
      EffluxPvSet *set = efflux_pv_set_new (cubes, n_cubes, ra_dec, n_vertices, width_arcsec,
                                            error);

      if (set == NULL)
        {
          cut_task_free (t);
          return FALSE;
        }
      adopt_task_result (self, t, set);
      cut_task_free (t);
      return TRUE;
    }

  self->cancellable = g_cancellable_new ();
  task = g_task_new (self, self->cancellable, cut_done, NULL);
  g_task_set_source_tag (task, efflux_cut_view_set_path);
  g_task_set_task_data (task, t, cut_task_free);
  set_busy (self, TRUE);
  g_task_run_in_thread (task, cut_worker);
  return TRUE;
}

gboolean
efflux_cut_view_get_busy (EffluxCutView *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), FALSE);
  return self->busy;
}

void
efflux_cut_view_set_image (EffluxCutView *self,
                           guint          image)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  if (self->set == NULL || image >= self->set->n_cubes || image == self->image)
    return;
  self->image = image;
  recolour (self);
  trace_contours (self);
  invalidate (self);
}

void
efflux_cut_view_set_contour_multiples (EffluxCutView *self,
                                       const double  *multiples,
                                       gsize          n)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  g_array_set_size (self->multiples, 0);
  g_array_append_vals (self->multiples, multiples, n);
  trace_contours (self);
  invalidate (self);
}

GPtrArray *
efflux_cut_view_get_contours (EffluxCutView *self,
                              guint          index)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), NULL);
  if (self->contours == NULL || index >= self->contours->len)
    return NULL;
  return g_ptr_array_index (self->contours, index);
}

void
efflux_cut_view_set_source (EffluxCutView *self,
                            double         ra_deg,
                            double         dec_deg)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  /* the window sets the source on every edit of the dossier: only a new one redraws */
  if (self->has_source_radec == (isfinite (ra_deg) && isfinite (dec_deg))
      && efflux_plot_same_value (self->src_ra, ra_deg) && efflux_plot_same_value (self->src_dec, dec_deg))
    return;
  self->has_source_radec = isfinite (ra_deg) && isfinite (dec_deg);
  self->src_ra = ra_deg;
  self->src_dec = dec_deg;
  self->src_offset = NAN;
  place_source (self);
  invalidate (self);
}

void
efflux_cut_view_set_source_offset (EffluxCutView *self,
                                   double         offset_arcsec)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  self->has_source_radec = FALSE;
  self->src_offset = offset_arcsec;
  invalidate (self);
}

double
efflux_cut_view_get_source_offset (EffluxCutView *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), NAN);
  return self->src_offset;
}

void
efflux_cut_view_set_vsys (EffluxCutView *self,
                          double         vsys_kms)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  if (efflux_plot_same_value (self->vsys, vsys_kms))
    return;
  self->vsys = vsys_kms;
  invalidate (self);
}

void
efflux_cut_view_set_geometry (EffluxCutView *self,
                              double         distance_pc,
                              double         inclination_deg)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  if (efflux_plot_same_value (self->distance_pc, distance_pc)
      && efflux_plot_same_value (self->inclination_deg, inclination_deg))
    return;
  self->distance_pc = distance_pc;
  self->inclination_deg = inclination_deg;
  update_age (self);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_AGE_YR]);
  invalidate (self);
}

void
efflux_cut_view_set_slope (EffluxCutView *self,
                           double         slope_kms_per_arcsec)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  if (!isfinite (slope_kms_per_arcsec) || slope_kms_per_arcsec == self->slope)
    return;
  self->slope = slope_kms_per_arcsec;
  update_age (self);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_SLOPE]);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_AGE_YR]);
  invalidate (self);
}

double
efflux_cut_view_get_slope (EffluxCutView *self)
{
  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), NAN);
  return self->slope;
}

void
efflux_cut_view_set_range (EffluxCutView  *self,
                           const char     *lobe,
                           EffluxLobeKind  kind,
                           double          v1,
                           double          v2)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  g_return_if_fail (lobe != NULL);
  if (efflux_plot_ranges_set (self->ranges, lobe, kind == EFFLUX_LOBE_RED ? 1 : 0, v1, v2))
    invalidate (self);
}

void
efflux_cut_view_remove_range (EffluxCutView *self,
                              const char    *lobe)
{
  g_return_if_fail (EFFLUX_IS_CUT_VIEW (self));
  if (self->drag == DRAG_RANGE)
    self->drag = DRAG_NONE;
  if (efflux_plot_ranges_remove (self->ranges, lobe))
    invalidate (self);
}

gboolean
efflux_cut_view_get_range (EffluxCutView *self,
                           const char    *lobe,
                           double        *v1,
                           double        *v2)
{
  EffluxPlotRange *r;

  g_return_val_if_fail (EFFLUX_IS_CUT_VIEW (self), FALSE);
  r = efflux_plot_ranges_find (self->ranges, lobe);
  if (r == NULL)
    return FALSE;
  *v1 = r->v1;
  *v2 = r->v2;
  return TRUE;
}

/* ---- drawing ---- */

static void
append_image (EffluxCutView    *self,
              GtkSnapshot      *snapshot,
              const EffluxAxis *xa,
              const EffluxAxis *ya)
{
  const EffluxPv *pv = image_pv (self);
  int scale = gtk_widget_get_scale_factor (GTK_WIDGET (self));
  int x0 = (int) xa->s0, y0 = (int) ya->s1;
  int pw = (int) (xa->s1 - xa->s0), ph = (int) (ya->s0 - ya->s1);
  int tw = pw * scale, th = ph * scale;
  g_autofree gssize *columns = NULL;
  g_autoptr(GBytes) bytes = NULL;
  g_autoptr(GdkTexture) texture = NULL;
  guint8 *pixels;

  if (pv == NULL || self->rgba == NULL || tw <= 0 || th <= 0)
    return;
  /* nearest sample at the device resolution (4.8 scales textures linearly only) */
  columns = g_new (gssize, tw);
  for (int i = 0; i < tw; i++)
    {
      double off = efflux_axis_to_data (xa, x0 + (i + 0.5) / scale);
      double s = floor (off / pv->offset_step_arcsec + 0.5);

      columns[i] = (s >= 0 && s < pv->n_offsets) ? (gssize) s : -1;
    }
  pixels = g_malloc ((gsize) tw * th * 4);
  for (int j = 0; j < th; j++)
    {
      guint8 *row = pixels + (gsize) j * tw * 4;
      double v = efflux_axis_to_data (ya, y0 + (j + 0.5) / scale);
      double kf = floor ((v - pv->v0_kms) / pv->dv_kms + 0.5);
      gssize k = (kf >= 0 && kf < pv->nchan) ? (gssize) kf : -1;

      for (int i = 0; i < tw; i++)
        {
          if (k < 0 || columns[i] < 0)
            memset (row + 4 * i, 0, 4);
          else
            memcpy (row + 4 * i, self->rgba + ((gsize) k * pv->n_offsets + columns[i]) * 4, 4);
        }
    }
  bytes = g_bytes_new_take (pixels, (gsize) tw * th * 4);
  texture = gdk_memory_texture_new (tw, th, GDK_MEMORY_R8G8B8A8_PREMULTIPLIED, bytes,
                                    (gsize) tw * 4);
  gtk_snapshot_append_texture (snapshot, texture, &GRAPHENE_RECT_INIT (x0, y0, pw, ph));
}

static void
draw_contours (EffluxCutView    *self,
               cairo_t          *cr,
               const EffluxAxis *xa,
               const EffluxAxis *ya)
{
  guint colour = 0;

  if (self->contours == NULL)
    return;
  cairo_save (cr);
  cairo_set_line_width (cr, 1.2);
  for (guint i = 0; i < self->contours->len; i++)
    {
      GPtrArray *lines = g_ptr_array_index (self->contours, i);
      const EffluxPv *pv = self->set->cuts[i];
      const double *c;

      if (lines == NULL)
        continue;
      c = contour_colours[colour++ % G_N_ELEMENTS (contour_colours)];
      cairo_set_source_rgba (cr, c[0], c[1], c[2], 0.9);
      for (guint l = 0; l < lines->len; l++)
        {
          EffluxPolyline *line = g_ptr_array_index (lines, l);

          for (gsize k = 0; k < line->n; k++)
            {
              double sx = efflux_axis_to_screen (xa, line->xy[2 * k] * pv->offset_step_arcsec);
              double sy = efflux_axis_to_screen (ya, pv->v0_kms + line->xy[2 * k + 1] * pv->dv_kms);

              if (k == 0)
                cairo_move_to (cr, sx, sy);
              else
                cairo_line_to (cr, sx, sy);
            }
          if (line->closed)
            cairo_close_path (cr);
          cairo_stroke (cr);
        }
    }
  cairo_restore (cr);
}

static void
draw_shells (EffluxCutView    *self,
             cairo_t          *cr,
             const EffluxAxis *xa,
             const EffluxAxis *ya)
{
  cairo_save (cr);
  for (int l = 0; l < 2; l++)
    {
      if (self->shell_n[l] == 0)
        continue;
      for (int pass = 0; pass < 2; pass++)
        {
          /* a dark casing under the lobe's colour, readable on any colour map */
          if (pass == 0)
            {
              cairo_set_source_rgba (cr, 0.0, 0.0, 0.0, 0.7);
              cairo_set_line_width (cr, 4.0);
            }
          else
            {
              if (self->shell_kind[l] == EFFLUX_LOBE_RED)
                cairo_set_source_rgba (cr, 1.0, 0.35, 0.3, 1.0);
              else
                cairo_set_source_rgba (cr, 0.35, 0.65, 1.0, 1.0);
              cairo_set_line_width (cr, 2.0);
            }
          for (gsize i = 0; i < self->shell_n[l]; i++)
            {
              double sx = efflux_axis_to_screen (xa, self->shell_x[l][i]);
              double sy = efflux_axis_to_screen (ya, self->shell_v[l][i]);

              if (i == 0)
                cairo_move_to (cr, sx, sy);
              else
                cairo_line_to (cr, sx, sy);
            }
          cairo_stroke (cr);
        }
    }
  if (self->shell_spurs != NULL)
    for (guint q = 0; q < self->shell_spurs->len; q++)
      {
        const EffluxShellSpur *sp = &g_array_index (self->shell_spurs, EffluxShellSpur, q);
        double half = self->set != NULL ? 0.5 * self->set->cuts[0]->offset_step_arcsec : 0.0;
        double x0 = efflux_axis_to_screen (xa, self->shell_src + sp->x_min_arcsec - half);
        double x1 = efflux_axis_to_screen (xa, self->shell_src + sp->x_max_arcsec + half);
        double y0 = efflux_axis_to_screen (ya, sp->v_min_kms);
        double y1 = efflux_axis_to_screen (ya, sp->v_max_kms);
        double dash[] = { 4.0, 3.0 };

        cairo_rectangle (cr, MIN (x0, x1), MIN (y0, y1), fabs (x1 - x0), fabs (y1 - y0));
        cairo_set_source_rgba (cr, 1.0, 0.6, 0.0, 0.25);
        cairo_fill_preserve (cr);
        cairo_set_source_rgba (cr, 1.0, 0.6, 0.0, 1.0);
        cairo_set_line_width (cr, 1.5);
        cairo_set_dash (cr, dash, 2, 0);
        cairo_stroke (cr);
        cairo_set_dash (cr, NULL, 0, 0);
      }
  cairo_restore (cr);
}

/* The legend at the plot's top right: the contour tracers in their colours, the shell curves and
 * spurs when shown. */
static void
draw_legend (EffluxCutView    *self,
             cairo_t          *cr,
             PangoLayout      *layout,
             const EffluxAxis *xa,
             const EffluxAxis *ya)
{
  g_autoptr(GPtrArray) texts = g_ptr_array_new_with_free_func (g_free);
  g_autoptr(GArray) colours = g_array_new (FALSE, FALSE, sizeof (double) * 3);
  guint colour = 0;
  double y, wmax = 0.0, lh = 0.0;

  if (self->contours != NULL)
    for (guint i = 0; i < self->contours->len; i++)
      {
        if (g_ptr_array_index (self->contours, i) == NULL)
          continue;
        g_array_append_vals (colours, contour_colours[colour++ % G_N_ELEMENTS (contour_colours)], 1);
        /* Translators: legend entry of a tracer drawn as contours */
        g_ptr_array_add (texts, g_strdup_printf (_("%s (contours)"),
                                                 self->names != NULL && i < g_strv_length (self->names)
                                                 ? self->names[i] : "?"));
      }
  if (self->shell_n[0] > 0 || self->shell_n[1] > 0)
    {
      static const double c[3] = { 0.35, 0.65, 1.0 };
      g_array_append_vals (colours, c, 1);
      g_ptr_array_add (texts, g_strdup (_("wind-driven shell fit")));
    }
  if (self->shell_spurs != NULL && self->shell_spurs->len > 0)
    {
      static const double c[3] = { 1.0, 0.6, 0.0 };
      g_array_append_vals (colours, c, 1);
      g_ptr_array_add (texts, g_strdup (_("bow-shock spur (off the shell)")));
    }
  if (self->shell_note != NULL)
    {
      static const double c[3] = { 1.0, 0.6, 0.0 };
      g_array_append_vals (colours, c, 1);
      g_ptr_array_add (texts, g_strdup (self->shell_note));
    }
  if (texts->len == 0)
    return;
  for (guint i = 0; i < texts->len; i++)
    {
      int tw, th;

      pango_layout_set_text (layout, g_ptr_array_index (texts, i), -1);
      pango_layout_get_pixel_size (layout, &tw, &th);
      wmax = MAX (wmax, tw);
      lh = MAX (lh, th);
    }
  {
    double bw = wmax + 34.0, bh = texts->len * lh + 8.0;
    double bx = xa->s1 - bw - 6.0, by = ya->s1 + 6.0;

    cairo_save (cr);
    cairo_rectangle (cr, bx, by, bw, bh);
    cairo_set_source_rgba (cr, 0.0, 0.0, 0.0, 0.55);
    cairo_fill (cr);
    y = by + 4.0;
    for (guint i = 0; i < texts->len; i++, y += lh)
      {
        const double *c = &g_array_index (colours, double, 3 * i);

        cairo_set_source_rgba (cr, c[0], c[1], c[2], 1.0);
        cairo_set_line_width (cr, 2.0);
        cairo_move_to (cr, bx + 6.0, y + lh / 2.0);
        cairo_line_to (cr, bx + 26.0, y + lh / 2.0);
        cairo_stroke (cr);
        cairo_set_source_rgba (cr, 1.0, 1.0, 1.0, 1.0);
        pango_layout_set_text (layout, g_ptr_array_index (texts, i), -1);
        cairo_move_to (cr, bx + 30.0, y);
        pango_cairo_show_layout (cr, layout);
      }
    cairo_restore (cr);
  }
}

/* The Hubble line's ends in data coordinates across the plot, and where its handle sits. */
static gboolean
hubble_line (EffluxCutView    *self,
             const EffluxAxis *xa,
             double           *handle_x,
             double           *handle_v)
{
  double far;

  if (!isfinite (self->src_offset) || !isfinite (self->vsys))
    return FALSE;
  /* the handle on the longer side of the source, 3/4 of the way to the end */
  far = (xa->d1 - self->src_offset) >= (self->src_offset - xa->d0) ? xa->d1 : xa->d0;
  *handle_x = self->src_offset + 0.75 * (far - self->src_offset);
  *handle_v = self->vsys + self->slope * (*handle_x - self->src_offset);
  return TRUE;
}

static void
draw_overlays (EffluxCutView    *self,
               cairo_t          *cr,
               const EffluxAxis *xa,
               const EffluxAxis *ya,
               const double      fg[4])
{
  double hx, hv;

  efflux_plot_draw_ranges (cr, self->ranges, ya, xa, TRUE);
  if (isfinite (self->vsys))
    {
      double y = floor (efflux_axis_to_screen (ya, self->vsys)) + 0.5;
      double dash[] = { 5.0, 4.0 };

      cairo_set_source_rgba (cr, 1.0, 1.0, 1.0, 0.8);
      cairo_set_line_width (cr, 1.0);
      cairo_set_dash (cr, dash, 2, 0);
      cairo_move_to (cr, xa->s0, y);
      cairo_line_to (cr, xa->s1, y);
      cairo_stroke (cr);
      cairo_set_dash (cr, NULL, 0, 0);
    }
  if (isfinite (self->src_offset))
    {
      double x = floor (efflux_axis_to_screen (xa, self->src_offset)) + 0.5;
      double dash[] = { 2.0, 3.0 };

      cairo_set_source_rgba (cr, 1.0, 0.95, 0.6, 0.8);
      cairo_set_line_width (cr, 1.0);
      cairo_set_dash (cr, dash, 2, 0);
      cairo_move_to (cr, x, ya->s0);
      cairo_line_to (cr, x, ya->s1);
      cairo_stroke (cr);
      cairo_set_dash (cr, NULL, 0, 0);
    }
  if (hubble_line (self, xa, &hx, &hv))
    {
      double x0 = xa->d0, x1 = xa->d1;
      double sx, sy;

      cairo_set_source_rgba (cr, 1.0, 0.95, 0.6, 1.0);
      cairo_set_line_width (cr, 2.0);
      cairo_move_to (cr, efflux_axis_to_screen (xa, x0),
                     efflux_axis_to_screen (ya, self->vsys + self->slope * (x0 - self->src_offset)));
      cairo_line_to (cr, efflux_axis_to_screen (xa, x1),
                     efflux_axis_to_screen (ya, self->vsys + self->slope * (x1 - self->src_offset)));
      cairo_stroke (cr);
      sx = efflux_axis_to_screen (xa, hx);
      sy = efflux_axis_to_screen (ya, hv);
      cairo_arc (cr, sx, sy, 5.0, 0, 2 * G_PI);
      cairo_fill_preserve (cr);
      cairo_set_source_rgba (cr, 0.0, 0.0, 0.0, 0.8);
      cairo_set_line_width (cr, 1.0);
      cairo_stroke (cr);
    }
}

static GskRenderNode *
build_scene (EffluxCutView *self,
             int            w,
             int            h)
{
  GtkSnapshot *snapshot = gtk_snapshot_new ();
  g_autoptr(PangoLayout) layout = gtk_widget_create_pango_layout (GTK_WIDGET (self), NULL);
  EffluxAxis xa, ya;
  double fg[4];
  cairo_t *cr;

  {
    GdkRGBA c;

    gtk_style_context_get_color (gtk_widget_get_style_context (GTK_WIDGET (self)), &c);
    fg[0] = c.red;
    fg[1] = c.green;
    fg[2] = c.blue;
    fg[3] = c.alpha;
  }
  get_axes (self, &xa, &ya);
  append_image (self, snapshot, &xa, &ya);
  cr = gtk_snapshot_append_cairo (snapshot, &GRAPHENE_RECT_INIT (0, 0, w, h));
  cairo_save (cr);
  cairo_rectangle (cr, xa.s0, ya.s1, xa.s1 - xa.s0, ya.s0 - ya.s1);
  cairo_clip (cr);
  draw_contours (self, cr, &xa, &ya);
  draw_shells (self, cr, &xa, &ya);
  draw_overlays (self, cr, &xa, &ya, fg);
  draw_legend (self, cr, layout, &xa, &ya);
  cairo_restore (cr);
  /* Translators: axis titles of the PV diagram */
  efflux_plot_draw_frame (cr, layout, &xa, &ya, _("offset along the cut (″)"), _("velocity (km/s)"),
                          fg);

  /* the title line: tracers and the Hubble-law age */
  {
    g_autoptr(GString) s = g_string_new (NULL);

    if (self->set != NULL && self->names != NULL)
      for (guint i = 0; i < self->set->n_cubes && self->names[i] != NULL; i++)
        {
          if (s->len > 0)
            g_string_append (s, ", ");
          g_string_append (s, self->names[i]);
          if (i == self->image)
            /* Translators: marks the tracer drawn as the image */
            g_string_append (s, _(" (image)"));
        }
    if (isfinite (self->src_offset) && isfinite (self->vsys))
      {
        if (s->len > 0)
          g_string_append (s, "   ");
        g_string_append (s, self->age_label);
      }
    if (self->busy)
      g_string_append (s, _("   computing the cut…"));
    pango_layout_set_text (layout, s->str, -1);
    cairo_set_source_rgba (cr, fg[0], fg[1], fg[2], fg[3]);
    cairo_move_to (cr, MARGIN_LEFT, 4);
    pango_cairo_show_layout (cr, layout);
  }
  cairo_destroy (cr);
  return gtk_snapshot_free_to_node (snapshot);
}

static void
efflux_cut_view_snapshot (GtkWidget   *widget,
                          GtkSnapshot *snapshot)
{
  EffluxCutView *self = EFFLUX_CUT_VIEW (widget);
  int w = gtk_widget_get_width (widget);
  int h = gtk_widget_get_height (widget);

  if (w <= 0 || h <= 0)
    return;
  if (self->node == NULL)
    self->node = build_scene (self, w, h);
  if (self->node != NULL)
    gtk_snapshot_append_node (snapshot, self->node);
}

static void
efflux_cut_view_measure (GtkWidget      *widget,
                         GtkOrientation  orientation,
                         int             for_size,
                         int            *minimum,
                         int            *natural,
                         int            *minimum_baseline,
                         int            *natural_baseline)
{
  *minimum = orientation == GTK_ORIENTATION_HORIZONTAL ? 200 : 160;
  *natural = orientation == GTK_ORIENTATION_HORIZONTAL ? 420 : 420;
}

static void
efflux_cut_view_size_allocate (GtkWidget *widget,
                               int        width,
                               int        height,
                               int        baseline)
{
  invalidate (EFFLUX_CUT_VIEW (widget));
}

/* ---- input ---- */

static gboolean
near_hubble_line (EffluxCutView *self,
                  double         wx,
                  double         wy)
{
  EffluxAxis xa, ya;
  double hx, hv, x0, y0, x1, y1, dx, dy, len;

  get_axes (self, &xa, &ya);
  if (!hubble_line (self, &xa, &hx, &hv))
    return FALSE;
  x0 = efflux_axis_to_screen (&xa, self->src_offset);
  y0 = efflux_axis_to_screen (&ya, self->vsys);
  x1 = efflux_axis_to_screen (&xa, hx);
  y1 = efflux_axis_to_screen (&ya, hv);
  /* not at the source itself, where the slope is undefined */
  if (fabs (wx - x0) < 2.0 * GRAB_PIXELS)
    return FALSE;
  dx = x1 - x0;
  dy = y1 - y0;
  len = hypot (dx, dy);
  if (len <= 0.0)
    return FALSE;
  return fabs ((wx - x0) * dy - (wy - y0) * dx) / len <= GRAB_PIXELS;
}

static int
hit_range (EffluxCutView *self,
           double         wy,
           int           *edge)
{
  EffluxAxis xa, ya;
  double v = efflux_axis_to_data ((get_axes (self, &xa, &ya), &ya), wy);

  return efflux_plot_ranges_hit (self->ranges, v,
                                 GRAB_PIXELS * fabs ((ya.d1 - ya.d0) / (ya.s1 - ya.s0)), edge);
}

static void
drag_begin_cb (GtkGestureDrag *gesture,
               double          x,
               double          y,
               EffluxCutView  *self)
{
  self->drag = DRAG_NONE;
  self->drag_range = hit_range (self, y, &self->drag_edge);
  if (self->drag_range >= 0)
    self->drag = DRAG_RANGE;
  else if (near_hubble_line (self, x, y))
    self->drag = DRAG_SLOPE;
  if (self->drag == DRAG_NONE)
    {
      gtk_gesture_set_state (GTK_GESTURE (gesture), GTK_EVENT_SEQUENCE_DENIED);
      return;
    }
  gtk_gesture_set_state (GTK_GESTURE (gesture), GTK_EVENT_SEQUENCE_CLAIMED);
  self->drag_x0 = x;
  self->drag_y0 = y;
}

static void
drag_move (EffluxCutView *self,
           double         ox,
           double         oy,
           gboolean       is_final)
{
  double off, v;

  efflux_cut_view_widget_to_data (self, self->drag_x0 + ox, self->drag_y0 + oy, &off, &v);
  if (self->drag == DRAG_RANGE && (guint) self->drag_range < self->ranges->len)
    {
      EffluxPlotRange *r = g_ptr_array_index (self->ranges, self->drag_range);
      g_autofree char *name = g_strdup (r->name);

      efflux_plot_range_move_edge (r, &self->drag_edge, v);
      invalidate (self);
      g_signal_emit (self, signals[RANGE_CHANGED], 0, name, r->v1, r->v2, is_final);
    }
  else if (self->drag == DRAG_SLOPE)
    {
      EffluxAxis xa, ya;

      get_axes (self, &xa, &ya);
      /* keep a pixel's distance from the source, where the slope is undefined */
      if (fabs (efflux_axis_to_screen (&xa, off) - efflux_axis_to_screen (&xa, self->src_offset)) >= 1.0)
        efflux_cut_view_set_slope (self, (v - self->vsys) / (off - self->src_offset));
      g_signal_emit (self, signals[SLOPE_CHANGED], 0, self->slope, efflux_cut_view_get_age_yr (self),
                     is_final);
    }
  if (is_final)
    self->drag = DRAG_NONE;
}

static void
drag_update_cb (GtkGestureDrag *gesture,
                double          ox,
                double          oy,
                EffluxCutView  *self)
{
  drag_move (self, ox, oy, FALSE);
}

static void
drag_end_cb (GtkGestureDrag *gesture,
             double          ox,
             double          oy,
             EffluxCutView  *self)
{
  if (self->drag != DRAG_NONE)
    drag_move (self, ox, oy, TRUE);
}

static void
motion_cb (GtkEventControllerMotion *controller,
           double                    x,
           double                    y,
           EffluxCutView            *self)
{
  int edge;
  const char *cursor = NULL;

  if (hit_range (self, y, &edge) >= 0)
    cursor = "row-resize";
  else if (near_hubble_line (self, x, y))
    cursor = "grab";
  gtk_widget_set_cursor_from_name (GTK_WIDGET (self), cursor);
}

/* ---- properties ---- */

static void
efflux_cut_view_get_property (GObject    *object,
                              guint       prop_id,
                              GValue     *value,
                              GParamSpec *pspec)
{
  EffluxCutView *self = EFFLUX_CUT_VIEW (object);

  switch (prop_id)
    {
    case PROP_COLORMAP:
      g_value_set_string (value, efflux_colormap_kind_to_string (self->colormap));
      break;
    case PROP_STRETCH:
      g_value_set_string (value, efflux_stretch_kind_to_string (self->stretch));
      break;
    case PROP_SLOPE:
      g_value_set_double (value, self->slope);
      break;
    case PROP_AGE_YR:
      g_value_set_double (value, efflux_cut_view_get_age_yr (self));
      break;
    case PROP_BUSY:
      g_value_set_boolean (value, self->busy);
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_cut_view_set_property (GObject      *object,
                              guint         prop_id,
                              const GValue *value,
                              GParamSpec   *pspec)
{
  EffluxCutView *self = EFFLUX_CUT_VIEW (object);

  switch (prop_id)
    {
    case PROP_COLORMAP:
      {
        EffluxColormapKind kind;

        if (!efflux_colormap_kind_from_string (g_value_get_string (value), &kind))
          {
            g_warning ("unknown colour map '%s'", g_value_get_string (value));
            return;
          }
        if (kind == self->colormap)
          return;
        self->colormap = kind;
        recolour (self);
        invalidate (self);
        g_object_notify_by_pspec (object, pspec);
      }
      break;
    case PROP_STRETCH:
      {
        EffluxStretchKind kind;

        if (!efflux_stretch_kind_from_string (g_value_get_string (value), &kind))
          {
            g_warning ("unknown stretch '%s'", g_value_get_string (value));
            return;
          }
        if (kind == self->stretch)
          return;
        self->stretch = kind;
        recolour (self);
        invalidate (self);
        g_object_notify_by_pspec (object, pspec);
      }
      break;
    case PROP_SLOPE:
      efflux_cut_view_set_slope (self, g_value_get_double (value));
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_cut_view_dispose (GObject *object)
{
  EffluxCutView *self = EFFLUX_CUT_VIEW (object);

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  G_OBJECT_CLASS (efflux_cut_view_parent_class)->dispose (object);
}

static void
efflux_cut_view_finalize (GObject *object)
{
  EffluxCutView *self = EFFLUX_CUT_VIEW (object);

  g_clear_pointer (&self->node, gsk_render_node_unref);
  g_clear_pointer (&self->contours, g_ptr_array_unref);
  g_clear_pointer (&self->levels, g_ptr_array_unref);
  g_clear_pointer (&self->sigma, g_array_unref);
  clear_shells (self);
  g_clear_pointer (&self->set, efflux_pv_set_free);
  g_strfreev (self->names);
  g_array_unref (self->multiples);
  g_ptr_array_unref (self->ranges);
  g_free (self->rgba);
  g_free (self->cubes);
  g_free (self->age_label);
  G_OBJECT_CLASS (efflux_cut_view_parent_class)->finalize (object);
}

static void
efflux_cut_view_class_init (EffluxCutViewClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_cut_view_dispose;
  object_class->finalize = efflux_cut_view_finalize;
  object_class->get_property = efflux_cut_view_get_property;
  object_class->set_property = efflux_cut_view_set_property;
  widget_class->snapshot = efflux_cut_view_snapshot;
  widget_class->measure = efflux_cut_view_measure;
  widget_class->size_allocate = efflux_cut_view_size_allocate;

  properties[PROP_COLORMAP] =
    g_param_spec_string ("colormap", NULL, NULL, "cubehelix",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_STRETCH] =
    g_param_spec_string ("stretch", NULL, NULL, "linear",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_SLOPE] =
    g_param_spec_double ("slope", NULL, NULL, -G_MAXDOUBLE, G_MAXDOUBLE, 0.0,
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_AGE_YR] =
    g_param_spec_double ("age-yr", NULL, NULL, -G_MAXDOUBLE, G_MAXDOUBLE, 0.0,
                         G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_BUSY] =
    g_param_spec_boolean ("busy", NULL, NULL, FALSE,
                          G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  g_object_class_install_properties (object_class, N_PROPS, properties);

  signals[RANGE_CHANGED] =
    g_signal_new ("range-changed", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL,
                  NULL, G_TYPE_NONE, 4, G_TYPE_STRING, G_TYPE_DOUBLE, G_TYPE_DOUBLE, G_TYPE_BOOLEAN);
  signals[SLOPE_CHANGED] =
    g_signal_new ("slope-changed", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL,
                  NULL, G_TYPE_NONE, 3, G_TYPE_DOUBLE, G_TYPE_DOUBLE, G_TYPE_BOOLEAN);

  gtk_widget_class_set_css_name (widget_class, "efflux-cut-view");
}

static void
efflux_cut_view_init (EffluxCutView *self)
{
  GtkGesture *drag = gtk_gesture_drag_new ();
  GtkEventController *motion = gtk_event_controller_motion_new ();

  self->colormap = EFFLUX_COLORMAP_CUBEHELIX;
  self->stretch = EFFLUX_STRETCH_LINEAR;
  self->limits = 99.5;
  self->multiples = g_array_new (FALSE, FALSE, sizeof (double));
  g_array_append_vals (self->multiples, default_multiples, G_N_ELEMENTS (default_multiples));
  self->ranges = efflux_plot_ranges_new ();
  self->vsys = NAN;
  self->src_offset = NAN;
  self->distance_pc = NAN;
  self->inclination_deg = NAN;
  self->slope = 0.0;
  self->drag_range = -1;
  update_age (self);

  g_signal_connect (drag, "drag-begin", G_CALLBACK (drag_begin_cb), self);
  g_signal_connect (drag, "drag-update", G_CALLBACK (drag_update_cb), self);
  g_signal_connect (drag, "drag-end", G_CALLBACK (drag_end_cb), self);
  gtk_widget_add_controller (GTK_WIDGET (self), GTK_EVENT_CONTROLLER (drag));
  g_signal_connect (motion, "motion", G_CALLBACK (motion_cb), self);
  gtk_widget_add_controller (GTK_WIDGET (self), motion);
  gtk_widget_set_hexpand (GTK_WIDGET (self), TRUE);
  gtk_widget_set_vexpand (GTK_WIDGET (self), TRUE);
  gtk_widget_set_overflow (GTK_WIDGET (self), GTK_OVERFLOW_HIDDEN);
}

GtkWidget *
efflux_cut_view_new (void)
{
  return g_object_new (EFFLUX_TYPE_CUT_VIEW, NULL);
}
