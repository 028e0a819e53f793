/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-sky-view"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>
#include <string.h>

#include "efflux-colormap.h"
#include "efflux-lobe.h"
#include "efflux-maps.h"
#include "efflux-reproject.h"
#include "efflux-wings.h"
#include "efflux-skygrid.h"
#include "efflux-sky-view.h"
#include "efflux-stretch.h"
#include "efflux-window.h"

#define ZOOM_STEP     G_SQRT2
#define ZOOM_MAX      64.0
#define GRID_LINES    6

struct _EffluxSkyView
{
  GtkWidget           parent_instance;

  /* the map */
  const EffluxCube   *cube;        /* borrowed: WCS, beam */
  float              *data;
  gsize               width, height;
  char               *unit;
  guint8             *rgba;        /* width x height colour-mapped pixels, rows y = 0 first */
  double              lo, hi;      /* display limits */

  /* display choices */
  EffluxColormapKind  colormap;
  EffluxStretchKind   stretch;
  double              limits;      /* percent kept between the limits */
  int                 grid;        /* -1: none, else EffluxSkyGridStyle */

  /* the source */
  gboolean            has_source;
  double              src_ra, src_dec, distance_pc;

  /* the view: map pixel (cx, cy) at the widget's centre, zoom screen pixels per map pixel */
  double              cx, cy, zoom;
  gboolean            fitted;

  /* drag */
  double              drag_cx, drag_cy;

  /* pointer and readout */
  double              pointer_x, pointer_y;
  EffluxSkyReadout    readout;
  char               *readout_text;

  GskRenderNode      *node;        /* cached scene; dropped on data, size and view changes */

  /* editing */
  EffluxDocument     *document;
  int                 tool;        /* EffluxSkyTool */
  char               *cube_id;
  EffluxLobeKind      new_kind;
  double              cut_width;   /* arcsec, for new cuts */
  char               *selected;
  GArray             *draft_x, *draft_y;   /* the outline being drawn, pixel coordinates */
  int                 drag_what;
  char               *drag_name;
  gsize               drag_index;
  double             *drag_px, *drag_py;   /* the outline when the drag began */
  gsize               drag_n;
  double              drag_mx, drag_my;    /* pixel position where the drag began */
  guint               drag_merge;
  char               *hover_lobe;
  gssize              hover_vertex;
  char               *edit_error;
  GskRenderNode      *overlay_node; /* lobes, cuts, draft; dropped on edits and view changes */
  GHashTable         *overlay_items; /* char *key -> GskRenderNode *: one node per lobe and cut,
                                      * kept across rebuilds of overlay_node while its key (what
                                      * it looks like where) is unchanged */

  /* a colleague's lobes (copies), drawn dashed, never edited */
  GPtrArray          *other_lobes;  /* OtherLobe * */
  char               *other_author;
  GskRenderNode      *other_node;   /* dropped on overlay and view changes */

  /* what the map shows: SHOW_INTEGRATED (data), SHOW_PEAK (peak) or SHOW_CONTEXT (context) */
  int                 shows;
  double              layer_limits[3];
  float              *peak;
  GCancellable       *peak_cancel;
  char               *context_path;
  float              *context;
  char               *context_unit;
  char               *context_error;
  GCancellable       *context_cancel;

  /* wing contours */
  char               *wing_tracer;
  char               *wing_signature;  /* lobes' names, kinds and ranges the sets were made for */
  GPtrArray          *wing_sets;       /* EffluxWingSet * on the shown grid */
  char               *wing_legend;
  GCancellable       *wing_cancel;
  GskRenderNode      *wing_node;
  GMenu              *wing_menu;
  GSimpleActionGroup *layer_actions;

  /* workers that read the borrowed cube: a new cube or clear waits for them */
  GMutex              workers_lock;
  GCond               workers_cond;
  int                 workers;
};

enum {
  SHOW_INTEGRATED,
  SHOW_PEAK,
  SHOW_CONTEXT,
};

static const char *show_names[] = { "integrated", "peak", "context" };

/* the multiples of the wing maps' noise the contours are drawn at */
static const double wing_multiples[] = { 3.0, 5.0, 8.0, 13.0 };

typedef struct
{
  char           *name;
  EffluxLobeKind  kind;
  gsize           n;
  double         *ra, *dec;
} OtherLobe;

static void
other_lobe_free (gpointer data)
{
  OtherLobe *lobe = data;

  g_free (lobe->name);
  g_free (lobe->ra);
  g_free (lobe->dec);
  g_free (lobe);
}

enum {
  DRAG_PAN,
  DRAG_VERTEX,
  DRAG_LOBE,
  DRAG_SOURCE,
  DRAG_CUT_VERTEX,
};

G_DEFINE_FINAL_TYPE (EffluxSkyView, efflux_sky_view, GTK_TYPE_WIDGET)

enum {
  PROP_0,
  PROP_COLORMAP,
  PROP_STRETCH,
  PROP_LIMITS,
  PROP_GRID,
  PROP_ZOOM,
  PROP_READOUT,
  PROP_HAS_MAP,
  PROP_TOOL,
  PROP_SELECTED_LOBE,
  PROP_NEW_LOBE_KIND,
  PROP_CUT_WIDTH,
  PROP_SHOWS,
  PROP_HAS_CONTEXT,
  PROP_CONTEXT_ERROR,
  PROP_WING_TRACER,
  PROP_WING_LEGEND,
  N_PROPS
};

static GParamSpec *properties[N_PROPS];

static const char *grid_names[] = { "sexagesimal", "offsets" };

static void
invalidate (EffluxSkyView *self)
{
  g_clear_pointer (&self->node, gsk_render_node_unref);
  g_clear_pointer (&self->overlay_node, gsk_render_node_unref);
  g_clear_pointer (&self->overlay_items, g_hash_table_unref);
  g_clear_pointer (&self->other_node, gsk_render_node_unref);
  g_clear_pointer (&self->wing_node, gsk_render_node_unref);
  gtk_widget_queue_draw (GTK_WIDGET (self));
}

/* The map in view: the layer chosen when it is ready, else the integrated map. */
static const float *
shown_data (EffluxSkyView *self)
{
  if (self->data == NULL)
    return NULL;
  if (self->shows == SHOW_PEAK && self->peak != NULL)
    return self->peak;
  if (self->shows == SHOW_CONTEXT && self->context != NULL)
    return self->context;
  return self->data;
}

static const char *
shown_unit (EffluxSkyView *self)
{
  const float *d = shown_data (self);

  if (d != NULL && d == self->peak)
    return "K";
  if (d != NULL && d == self->context)
    return self->context_unit;
  return self->unit;
}

/* Colour-map the whole map once per data, colour map, stretch or limits change. */
static void
recolour (EffluxSkyView *self)
{
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  gsize n = self->width * self->height;

  const float *data = shown_data (self);

  g_clear_pointer (&self->rgba, g_free);
  if (data == NULL)
    return;
  if (!efflux_percentile_limits (data, n, self->limits, &self->lo, &self->hi))
    self->lo = self->hi = NAN;
  efflux_colormap_fill (self->colormap, lut);
  self->rgba = g_malloc (n * 4);
  efflux_colormap_apply (lut, self->stretch, self->lo, self->hi, data, n, self->rgba);
  invalidate (self);
}

static void
set_zoom_internal (EffluxSkyView *self,
                   double         zoom)
{
  if (zoom == self->zoom)
    return;
  self->zoom = zoom;
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_ZOOM]);
}

static double
fit_zoom (EffluxSkyView *self)
{
  int w = gtk_widget_get_width (GTK_WIDGET (self));
  int h = gtk_widget_get_height (GTK_WIDGET (self));

  if (self->width == 0 || self->height == 0 || w <= 0 || h <= 0)
    return 1.0;
  return MIN (w / (double) self->width, h / (double) self->height);
}

static double
min_zoom (EffluxSkyView *self)
{
  return MIN (fit_zoom (self) / 8.0, 1.0);
}

void
efflux_sky_view_zoom_fit (EffluxSkyView *self)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));

  self->fitted = TRUE;
  self->cx = (self->width - 1.0) / 2.0;
  self->cy = (self->height - 1.0) / 2.0;
  set_zoom_internal (self, fit_zoom (self));
  invalidate (self);
}

/* Zoom by a factor, keeping the map point under widget coordinates (wx, wy) in place. */
static void
zoom_about (EffluxSkyView *self,
            double         factor,
            double         wx,
            double         wy)
{
  double px, py, zoom;

  if (self->data == NULL)
    return;
  zoom = CLAMP (self->zoom * factor, min_zoom (self), ZOOM_MAX);
  if (zoom == self->zoom)
    return;
  efflux_sky_view_widget_to_pixel (self, wx, wy, &px, &py);
  self->fitted = FALSE;
  set_zoom_internal (self, zoom);
  /* keep (px, py) under (wx, wy) */
  self->cx = px - (wx - gtk_widget_get_width (GTK_WIDGET (self)) / 2.0) / zoom;
  self->cy = py + (wy - gtk_widget_get_height (GTK_WIDGET (self)) / 2.0) / zoom;
  invalidate (self);
  if (!isnan (self->pointer_x))
    efflux_sky_view_point_at (self, self->pointer_x, self->pointer_y);
}

void
efflux_sky_view_zoom_in (EffluxSkyView *self)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  zoom_about (self, ZOOM_STEP, gtk_widget_get_width (GTK_WIDGET (self)) / 2.0,
              gtk_widget_get_height (GTK_WIDGET (self)) / 2.0);
}

void
efflux_sky_view_zoom_out (EffluxSkyView *self)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  zoom_about (self, 1.0 / ZOOM_STEP, gtk_widget_get_width (GTK_WIDGET (self)) / 2.0,
              gtk_widget_get_height (GTK_WIDGET (self)) / 2.0);
}

double
efflux_sky_view_get_zoom (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), 1.0);
  return self->zoom;
}

gboolean
efflux_sky_view_get_limits (EffluxSkyView *self,
                            double        *lo,
                            double        *hi)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), FALSE);
  if (self->data == NULL || isnan (self->lo))
    return FALSE;
  *lo = self->lo;
  *hi = self->hi;
  return TRUE;
}

void
efflux_sky_view_widget_to_pixel (EffluxSkyView *self,
                                 double         wx,
                                 double         wy,
                                 double        *px,
                                 double        *py)
{
  *px = self->cx + (wx - gtk_widget_get_width (GTK_WIDGET (self)) / 2.0) / self->zoom;
  *py = self->cy - (wy - gtk_widget_get_height (GTK_WIDGET (self)) / 2.0) / self->zoom;
}

void
efflux_sky_view_pixel_to_widget (EffluxSkyView *self,
                                 double         px,
                                 double         py,
                                 double        *wx,
                                 double        *wy)
{
  *wx = gtk_widget_get_width (GTK_WIDGET (self)) / 2.0 + (px - self->cx) * self->zoom;
  *wy = gtk_widget_get_height (GTK_WIDGET (self)) / 2.0 - (py - self->cy) * self->zoom;
}

/* ---- readout ---- */

static void
update_readout_text (EffluxSkyView *self)
{
  const EffluxSkyReadout *r = &self->readout;
  g_autoptr(GString) s = g_string_new (NULL);

  if (r->inside)
    {
      if (r->has_position)
        {
          g_autofree char *ra = efflux_skygrid_format_ra (r->ra_deg, 0.001);
          g_autofree char *dec = efflux_skygrid_format_dec (r->dec_deg, 0.01);

          /* Translators: RA and Dec of the pixel under the pointer */
          g_string_append_printf (s, _("RA %s  Dec %s"), ra, dec);
        }
      if (r->has_offset)
        {
          g_autofree char *e = efflux_skygrid_format_offset (r->east_arcsec, 0.01);
          g_autofree char *n = efflux_skygrid_format_offset (r->north_arcsec, 0.01);

          g_string_append (s, "   ");
          /* Translators: offset east and north of the source */
          g_string_append_printf (s, _("%s E, %s N of the source"), e, n);
        }
      g_string_append (s, "   ");
      /* Translators: the pixel under the pointer, numbered from 1 as in FITS */
      g_string_append_printf (s, _("FITS pixel %zd, %zd"), r->x + 1, r->y + 1);
      g_string_append (s, "   ");
      if (isnan (r->value))
        g_string_append (s, _("blank"));
      else
        g_string_append_printf (s, "%.5g %s", r->value, shown_unit (self) ? shown_unit (self) : "");
    }
  if (g_strcmp0 (s->str, self->readout_text) == 0)
    return;
  g_free (self->readout_text);
  self->readout_text = g_string_free (g_steal_pointer (&s), FALSE);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_READOUT]);
}

void
efflux_sky_view_point_at (EffluxSkyView *self,
                          double         wx,
                          double         wy)
{
  EffluxSkyReadout *r = &self->readout;
  double px, py;

  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));

  self->pointer_x = wx;
  self->pointer_y = wy;
  memset (r, 0, sizeof *r);
  r->value = NAN;
  if (self->data != NULL && !isnan (wx) && !isnan (wy))
    {
      efflux_sky_view_widget_to_pixel (self, wx, wy, &px, &py);
      px = floor (px + 0.5);
      py = floor (py + 0.5);
      if (px >= 0 && py >= 0 && px < self->width && py < self->height)
        {
          r->inside = TRUE;
          r->x = (gssize) px;
          r->y = (gssize) py;
          r->value = shown_data (self)[(gsize) r->y * self->width + (gsize) r->x];
          if (self->cube != NULL && self->cube->sky != NULL)
            r->has_position = efflux_cube_pixel_to_icrs (self->cube, px, py, &r->ra_deg, &r->dec_deg);
          if (r->has_position && self->has_source)
            r->has_offset = efflux_skygrid_offsets_from_icrs (self->src_ra, self->src_dec,
                                                              r->ra_deg, r->dec_deg,
                                                              &r->east_arcsec, &r->north_arcsec);
        }
    }
  update_readout_text (self);
}

const char *
efflux_sky_view_get_readout (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  return self->readout_text ? self->readout_text : "";
}

void
efflux_sky_view_get_readout_values (EffluxSkyView    *self,
                                    EffluxSkyReadout *readout)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  *readout = self->readout;
}

/* ---- layers: peak map, context image, wing contours (computed in GTask workers) ---- */

static void start_peak (EffluxSkyView *self);
static void start_context (EffluxSkyView *self);
static void start_wings (EffluxSkyView *self);

/* The cube is borrowed until the next set_map or clear: workers reading it are counted, and
 * those two wait until none is left (they are cancelled first; a peak map of a large cube may
 * take a second to end). */
static void
worker_started (EffluxSkyView *self)
{
  g_mutex_lock (&self->workers_lock);
  self->workers++;
  g_mutex_unlock (&self->workers_lock);
}

static void
worker_ended (EffluxSkyView *self)
{
  g_mutex_lock (&self->workers_lock);
  self->workers--;
  g_cond_broadcast (&self->workers_cond);
  g_mutex_unlock (&self->workers_lock);
}

static void
wait_for_workers (EffluxSkyView *self)
{
  g_mutex_lock (&self->workers_lock);
  while (self->workers > 0)
    g_cond_wait (&self->workers_cond, &self->workers_lock);
  g_mutex_unlock (&self->workers_lock);
}

static void
cancel_and_clear (GCancellable **cancellable)
{
  if (*cancellable != NULL)
    g_cancellable_cancel (*cancellable);
  g_clear_object (cancellable);
}

gboolean
efflux_sky_view_is_busy (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), FALSE);
  return self->peak_cancel != NULL || self->context_cancel != NULL || self->wing_cancel != NULL;
}

const float *
efflux_sky_view_get_shown_data (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  return shown_data (self);
}

/* The layer in view changed (or its data): its own limits, colours, readout. */
static void
layer_changed (EffluxSkyView *self)
{
  double limits = self->layer_limits[self->shows];

  if (limits != self->limits)
    {
      self->limits = limits;
      g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_LIMITS]);
    }
  recolour (self);
  efflux_sky_view_point_at (self, self->pointer_x, self->pointer_y);
}

static void
set_shows (EffluxSkyView *self,
           int            shows)
{
  if (shows == self->shows)
    return;
  self->shows = shows;
  if (shows == SHOW_PEAK && self->peak == NULL)
    start_peak (self);
  layer_changed (self);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_SHOWS]);
}

/* -- the peak map -- */

typedef struct
{
  const EffluxCube *cube;   /* borrowed: the window keeps the shown cube while it is shown */
  gsize             n;
} PeakJob;

static void
peak_thread (GTask        *task,
             gpointer      source,
             gpointer      task_data,
             GCancellable *cancellable)
{
  PeakJob *job = task_data;
  const EffluxCube *cube = job->cube;
  g_autofree float *out = g_try_new (float, job->n);
  GError *error = NULL;

  if (out == NULL)
    error = g_error_new (EFFLUX_ERROR, EFFLUX_ERROR_IO, "out of memory for the peak map");
  else if (!g_cancellable_is_cancelled (cancellable))
    efflux_moment_map (cube, EFFLUX_MOMENT_PEAK, cube->velocity[0],
                       cube->velocity[cube->nchan - 1], 0.0, out, &error);
  worker_ended (EFFLUX_SKY_VIEW (source));
  if (error != NULL)
    g_task_return_error (task, error);
  else if (g_task_return_error_if_cancelled (task))
    return;
  else
    g_task_return_pointer (task, g_steal_pointer (&out), g_free);
}

static void
peak_done (GObject      *source,
           GAsyncResult *result,
           gpointer      user_data)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (source);
  g_autoptr(GError) error = NULL;
  g_autofree float *map = g_task_propagate_pointer (G_TASK (result), &error);

  if (g_task_get_cancellable (G_TASK (result)) != self->peak_cancel)
    return;   /* a newer job replaced this one */
  g_clear_object (&self->peak_cancel);
  if (map == NULL)
    {
      if (!g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED))
        g_warning ("peak map: %s", error->message);
      return;
    }
  g_free (self->peak);
  self->peak = g_steal_pointer (&map);
  if (self->shows == SHOW_PEAK)
    layer_changed (self);
}

static void
start_peak (EffluxSkyView *self)
{
  g_autoptr(GTask) task = NULL;
  PeakJob *job;

  cancel_and_clear (&self->peak_cancel);
  if (self->cube == NULL || self->cube->data == NULL || self->cube->nchan == 0
      || self->cube->nx != self->width || self->cube->ny != self->height)
    return;
  self->peak_cancel = g_cancellable_new ();
  job = g_new0 (PeakJob, 1);
  job->cube = self->cube;
  job->n = self->width * self->height;
  task = g_task_new (self, self->peak_cancel, peak_done, NULL);
  g_task_set_task_data (task, job, g_free);
  g_task_set_return_on_cancel (task, FALSE);
  worker_started (self);
  g_task_run_in_thread (task, peak_thread);
}

/* -- the context image -- */

typedef struct
{
  char             *path;
  const EffluxCube *grid;   /* borrowed, as the peak's cube */
  char             *unit;   /* out */
} ContextJob;

static void
context_job_free (gpointer data)
{
  ContextJob *job = data;

  g_free (job->path);
  g_free (job->unit);
  g_free (job);
}

static void
context_thread (GTask        *task,
                gpointer      source,
                gpointer      task_data,
                GCancellable *cancellable)
{
  ContextJob *job = task_data;
  GError *error = NULL;
  g_autoptr(EffluxCube) image = efflux_image_load (job->path, 0, &error);
  g_autofree float *out = NULL;

  if (image != NULL)
    {
      out = g_try_new (float, job->grid->nx * job->grid->ny);
      if (out == NULL)
        error = g_error_new (EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: out of memory", job->path);
      else if (efflux_reproject_image (image, job->grid, out, NULL, cancellable, &error))
        job->unit = g_strdup (image->bunit);
    }
  worker_ended (EFFLUX_SKY_VIEW (source));
  if (error != NULL)
    g_task_return_error (task, error);
  else
    g_task_return_pointer (task, g_steal_pointer (&out), g_free);
}

static void
set_context_error (EffluxSkyView *self,
                   const char    *message)
{
  if (g_strcmp0 (message, self->context_error) == 0)
    return;
  g_free (self->context_error);
  self->context_error = g_strdup (message);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_CONTEXT_ERROR]);
  if (message != NULL && EFFLUX_IS_WINDOW (gtk_widget_get_root (GTK_WIDGET (self))))
    efflux_window_show_error (EFFLUX_WINDOW (gtk_widget_get_root (GTK_WIDGET (self))), message);
}

static void
context_done (GObject      *source,
              GAsyncResult *result,
              gpointer      user_data)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (source);
  ContextJob *job = g_task_get_task_data (G_TASK (result));
  g_autoptr(GError) error = NULL;
  g_autofree float *map = g_task_propagate_pointer (G_TASK (result), &error);
  gboolean had = self->context != NULL;

  if (g_task_get_cancellable (G_TASK (result)) != self->context_cancel)
    return;
  g_clear_object (&self->context_cancel);
  if (map == NULL)
    {
      if (!g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED))
        set_context_error (self, error->message);
      return;
    }
  set_context_error (self, NULL);
  g_free (self->context);
  self->context = g_steal_pointer (&map);
  g_free (self->context_unit);
  self->context_unit = g_strdup (job->unit);
  if (!had)
    g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_HAS_CONTEXT]);
  if (self->shows == SHOW_CONTEXT)
    layer_changed (self);
  else
    set_shows (self, SHOW_CONTEXT);
}

static void
start_context (EffluxSkyView *self)
{
  g_autoptr(GTask) task = NULL;
  ContextJob *job;

  cancel_and_clear (&self->context_cancel);
  if (self->context_path == NULL)
    return;
  if (self->cube == NULL || self->cube->sky == NULL)
    {
      g_autofree char *message =
        g_strdup_printf (_("%s: no map with a sky grid is shown to put the image under"),
                         self->context_path);

      set_context_error (self, message);
      return;
    }
  self->context_cancel = g_cancellable_new ();
  job = g_new0 (ContextJob, 1);
  job->path = g_strdup (self->context_path);
  job->grid = self->cube;
  task = g_task_new (self, self->context_cancel, context_done, NULL);
  g_task_set_task_data (task, job, context_job_free);
  worker_started (self);
  g_task_run_in_thread (task, context_thread);
}

void
efflux_sky_view_set_context_file (EffluxSkyView *self,
                                  const char    *path)
{
  gboolean had = self->context != NULL;

  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  g_free (self->context_path);
  self->context_path = g_strdup (path);
  g_clear_pointer (&self->context, g_free);
  set_context_error (self, NULL);
  if (had)
    g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_HAS_CONTEXT]);
  if (self->shows == SHOW_CONTEXT)
    layer_changed (self);
  start_context (self);
}

gboolean
efflux_sky_view_has_context (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), FALSE);
  return self->context != NULL;
}

const char *
efflux_sky_view_get_context_error (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  return self->context_error;
}

/* -- wing contours -- */

typedef struct
{
  EffluxDossier    *dossier;   /* a copy: the document replaces its dossier on every edit */
  char             *cube_id;
  const EffluxCube *cube;      /* the tracer, owned by the document (kept alive by the ref) */
  const EffluxCube *grid;
  EffluxDocument   *document;
} WingJob;

static void
wing_job_free (gpointer data)
{
  WingJob *job = data;

  efflux_dossier_free (job->dossier);
  g_free (job->cube_id);
  g_clear_object (&job->document);
  g_free (job);
}

static void
wing_thread (GTask        *task,
             gpointer      source,
             gpointer      task_data,
             GCancellable *cancellable)
{
  WingJob *job = task_data;
  GError *error = NULL;
  GPtrArray *sets = efflux_wing_contours (job->dossier, job->cube_id, job->cube, job->grid,
                                          wing_multiples, G_N_ELEMENTS (wing_multiples), NULL,
                                          cancellable, &error);

  worker_ended (EFFLUX_SKY_VIEW (source));
  if (sets == NULL)
    g_task_return_error (task, error);
  else
    g_task_return_pointer (task, sets, (GDestroyNotify) g_ptr_array_unref);
}

static void
set_wing_legend (EffluxSkyView *self,
                 const char    *legend)
{
  if (g_strcmp0 (legend, self->wing_legend) == 0)
    return;
  g_free (self->wing_legend);
  self->wing_legend = g_strdup (legend);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_WING_LEGEND]);
}

static void
update_wing_legend (EffluxSkyView *self)
{
  g_autoptr(GString) s = g_string_new (NULL);

  if (self->wing_sets != NULL && self->wing_sets->len > 0)
    {
      /* Translators: the legend of the wing contours; %s is the tracer's cube id */
      g_string_append_printf (s, _("Wing contours of %s at"), self->wing_tracer);
      for (gsize i = 0; i < G_N_ELEMENTS (wing_multiples); i++)
        g_string_append_printf (s, "%s %g", i ? "," : "", wing_multiples[i]);
      g_string_append (s, " σ");
      for (guint k = 0; k < self->wing_sets->len; k++)
        {
          const EffluxWingSet *set = g_ptr_array_index (self->wing_sets, k);

          g_string_append_c (s, '\n');
          /* Translators: one set of wing contours: lobes, velocity range, the noise of the map */
          g_string_append_printf (s, _("%s (%s, %.1f to %.1f km/s): σ = %.3g K km/s"),
                                  set->lobes, set->kind == EFFLUX_LOBE_BLUE ? _("blue") : _("red"),
                                  set->v1_kms, set->v2_kms, set->sigma);
        }
    }
  set_wing_legend (self, s->str);
}

static void
wing_done (GObject      *source,
           GAsyncResult *result,
           gpointer      user_data)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (source);
  g_autoptr(GError) error = NULL;
  GPtrArray *sets = g_task_propagate_pointer (G_TASK (result), &error);

  if (g_task_get_cancellable (G_TASK (result)) != self->wing_cancel)
    {
      if (sets != NULL)
        g_ptr_array_unref (sets);
      return;
    }
  g_clear_object (&self->wing_cancel);
  g_clear_pointer (&self->wing_sets, g_ptr_array_unref);
  if (sets == NULL)
    {
      if (!g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED))
        set_wing_legend (self, error->message);
    }
  else
    {
      self->wing_sets = sets;
      update_wing_legend (self);
    }
  g_clear_pointer (&self->wing_node, gsk_render_node_unref);
  gtk_widget_queue_draw (GTK_WIDGET (self));
}

/* What the wing sets depend on: each lobe's name, kind and range. */
static char *
wing_signature (EffluxSkyView *self)
{
  const EffluxDossier *d = self->document ? efflux_document_get_dossier (self->document) : NULL;
  GString *s = g_string_new (self->wing_tracer);

  g_string_append_printf (s, "|%p", (gpointer) self->cube);
  for (guint k = 0; d != NULL && k < d->lobes->len; k++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, k);

      g_string_append_printf (s, "|%s %d %.17g %.17g %d", lobe->name, lobe->kind, lobe->v1_kms,
                              lobe->v2_kms, lobe->n_vertices >= 3);
    }
  return g_string_free (s, FALSE);
}

static void
start_wings (EffluxSkyView *self)
{
  g_autoptr(GTask) task = NULL;
  g_autofree char *data = NULL;
  const EffluxDossier *d;
  const EffluxCube *cube;
  WingJob *job;
  gsize length;
  g_autoptr(GError) error = NULL;
  EffluxDossier *copy;

  cancel_and_clear (&self->wing_cancel);
  g_clear_pointer (&self->wing_signature, g_free);
  if (self->wing_tracer == NULL || self->document == NULL || self->cube == NULL)
    {
      g_clear_pointer (&self->wing_sets, g_ptr_array_unref);
      update_wing_legend (self);
      g_clear_pointer (&self->wing_node, gsk_render_node_unref);
      gtk_widget_queue_draw (GTK_WIDGET (self));
      return;
    }
  d = efflux_document_get_dossier (self->document);
  cube = efflux_document_get_cube (self->document, self->wing_tracer);
  if (cube == NULL || cube->data == NULL)
    {
      g_autofree char *message =
        /* Translators: %s is a cube id of the dossier */
        g_strdup_printf (_("[Cube %s]: the cube is not loaded: no wing contours"), self->wing_tracer);

      g_clear_pointer (&self->wing_sets, g_ptr_array_unref);
      set_wing_legend (self, message);
      g_clear_pointer (&self->wing_node, gsk_render_node_unref);
      gtk_widget_queue_draw (GTK_WIDGET (self));
      return;
    }
  data = efflux_dossier_to_data ((EffluxDossier *) d, &length);
  copy = efflux_dossier_new_from_data (data, (gssize) length, d->path, d->dir, &error);
  if (copy == NULL)
    {
      set_wing_legend (self, error->message);
      return;
    }
  self->wing_signature = wing_signature (self);
  self->wing_cancel = g_cancellable_new ();
  job = g_new0 (WingJob, 1);
  job->dossier = copy;
  job->cube_id = g_strdup (self->wing_tracer);
  job->cube = cube;
  job->grid = self->cube;
  job->document = g_object_ref (self->document);
  task = g_task_new (self, self->wing_cancel, wing_done, NULL);
  g_task_set_task_data (task, job, wing_job_free);
  worker_started (self);
  g_task_run_in_thread (task, wing_thread);
}

/* After a document change: again only when a lobe's kind, range or the set of lobes changed. */
static void
maybe_restart_wings (EffluxSkyView *self)
{
  g_autofree char *signature = NULL;

  if (self->wing_tracer == NULL)
    return;
  signature = wing_signature (self);
  if (g_strcmp0 (signature, self->wing_signature) != 0)
    start_wings (self);
}

static void
set_wing_tracer (EffluxSkyView *self,
                 const char    *id)
{
  if (id != NULL && *id == '\0')
    id = NULL;
  if (g_strcmp0 (id, self->wing_tracer) == 0)
    return;
  g_free (self->wing_tracer);
  self->wing_tracer = g_strdup (id);
  start_wings (self);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_WING_TRACER]);
}

GPtrArray *
efflux_sky_view_get_wing_sets (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  return self->wing_sets;
}

const char *
efflux_sky_view_get_wing_legend (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  return self->wing_legend ? self->wing_legend : "";
}

static void
fill_wing_menu (EffluxSkyView *self)
{
  const EffluxDossier *d = self->document ? efflux_document_get_dossier (self->document) : NULL;

  if (self->wing_menu == NULL)
    return;
  g_menu_remove_all (self->wing_menu);
  {
    g_autoptr(GMenuItem) item = g_menu_item_new (_("None"), NULL);

    g_menu_item_set_action_and_target (item, "layers.wing-tracer", "s", "");
    g_menu_append_item (self->wing_menu, item);
  }
  for (guint k = 0; d != NULL && k < d->cubes->len; k++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (d->cubes, k);
      const char *line = dc->line != NULL ? dc->line->name : dc->line_name;
      g_autofree char *label = line != NULL ? g_strdup_printf ("%s (%s)", dc->id, line)
                                            : g_strdup (dc->id);
      g_autoptr(GMenuItem) item = g_menu_item_new (label, NULL);

      g_menu_item_set_action_and_target (item, "layers.wing-tracer", "s", dc->id);
      g_menu_append_item (self->wing_menu, item);
    }
}

void
efflux_sky_view_bind_wing_menu (EffluxSkyView *self,
                                GMenu         *menu)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  g_set_object (&self->wing_menu, menu);
  fill_wing_menu (self);
}

static void
context_chosen (GtkNativeDialog *dialog,
                int              response,
                EffluxSkyView   *self)
{
  if (response == GTK_RESPONSE_ACCEPT)
    {
      g_autoptr(GFile) file = gtk_file_chooser_get_file (GTK_FILE_CHOOSER (dialog));
      g_autofree char *path = file ? g_file_get_path (file) : NULL;

      if (path != NULL)
        efflux_sky_view_set_context_file (self, path);
    }
  gtk_native_dialog_destroy (dialog);
  g_object_unref (dialog);
  g_object_unref (self);
}

static void
choose_context (GSimpleAction *action,
                GVariant      *parameter,
                gpointer       user_data)
{
  EffluxSkyView *self = user_data;
  GtkRoot *root = gtk_widget_get_root (GTK_WIDGET (self));
  GtkFileChooserNative *dialog =
    gtk_file_chooser_native_new (_("Show a Context Image"),
                                 GTK_IS_WINDOW (root) ? GTK_WINDOW (root) : NULL,
                                 GTK_FILE_CHOOSER_ACTION_OPEN, _("_Show"), _("_Cancel"));
  g_autoptr(GtkFileFilter) fits = gtk_file_filter_new ();
  g_autoptr(GtkFileFilter) all = gtk_file_filter_new ();

  gtk_file_filter_set_name (fits, _("FITS images"));
  gtk_file_filter_add_pattern (fits, "*.fits");
  gtk_file_filter_add_pattern (fits, "*.fit");
  gtk_file_filter_add_pattern (fits, "*.fts");
  gtk_file_filter_add_pattern (fits, "*.FITS");
  gtk_file_filter_add_pattern (fits, "*.fits.gz");
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (dialog), fits);
  gtk_file_filter_set_name (all, _("All files"));
  gtk_file_filter_add_pattern (all, "*");
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (dialog), all);
  gtk_native_dialog_set_modal (GTK_NATIVE_DIALOG (dialog), TRUE);
  g_signal_connect (dialog, "response", G_CALLBACK (context_chosen), g_object_ref (self));
  gtk_native_dialog_show (GTK_NATIVE_DIALOG (dialog));
}

GActionGroup *
efflux_sky_view_get_layer_actions (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  if (self->layer_actions == NULL)
    {
      static const char *props[] = { "shows", "wing-tracer" };
      g_autoptr(GSimpleAction) choose = g_simple_action_new ("context-image", NULL);

      self->layer_actions = g_simple_action_group_new ();
      for (gsize i = 0; i < G_N_ELEMENTS (props); i++)
        {
          g_autoptr(GPropertyAction) action = g_property_action_new (props[i], self, props[i]);

          g_action_map_add_action (G_ACTION_MAP (self->layer_actions), G_ACTION (action));
        }
      g_signal_connect_object (choose, "activate", G_CALLBACK (choose_context), self, 0);
      g_action_map_add_action (G_ACTION_MAP (self->layer_actions), G_ACTION (choose));
    }
  return G_ACTION_GROUP (self->layer_actions);
}

/* A new map: when its cube changed, the layers made on the old grid are made again. */
static void
layers_new_map (EffluxSkyView *self,
                gboolean       cube_changed)
{
  if (!cube_changed)
    return;
  cancel_and_clear (&self->peak_cancel);
  g_clear_pointer (&self->peak, g_free);
  cancel_and_clear (&self->context_cancel);
  cancel_and_clear (&self->wing_cancel);
  wait_for_workers (self);
  if (self->shows == SHOW_PEAK)
    start_peak (self);
  if (self->context_path != NULL)
    {
      g_clear_pointer (&self->context, g_free);
      start_context (self);
    }
  start_wings (self);
}

static void
layers_clear (EffluxSkyView *self)
{
  cancel_and_clear (&self->peak_cancel);
  cancel_and_clear (&self->context_cancel);
  cancel_and_clear (&self->wing_cancel);
  wait_for_workers (self);
  g_clear_pointer (&self->peak, g_free);
  g_clear_pointer (&self->context, g_free);
  g_clear_pointer (&self->wing_sets, g_ptr_array_unref);
  g_clear_pointer (&self->wing_signature, g_free);
}

/* ---- the map ---- */

void
efflux_sky_view_set_map (EffluxSkyView    *self,
                         const EffluxCube *cube,
                         const float      *data,
                         gsize             width,
                         gsize             height,
                         const char       *unit)
{
  gboolean had = self->data != NULL;
  gboolean cube_changed = cube != self->cube || width != self->width || height != self->height;

  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  g_return_if_fail (data != NULL && width > 0 && height > 0);

  if (cube_changed)
    {
      /* the old grid's layers no longer fit */
      g_clear_pointer (&self->peak, g_free);
      g_clear_pointer (&self->context, g_free);
    }
  g_free (self->data);
  self->data = g_memdup2 (data, width * height * sizeof (float));
  self->width = width;
  self->height = height;
  self->cube = cube;
  g_free (self->unit);
  self->unit = g_strdup (unit);
  recolour (self);
  efflux_sky_view_zoom_fit (self);
  efflux_sky_view_point_at (self, self->pointer_x, self->pointer_y);
  layers_new_map (self, cube_changed);
  if (!had)
    g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_HAS_MAP]);
}

void
efflux_sky_view_clear (EffluxSkyView *self)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));

  if (self->data == NULL)
    return;
  layers_clear (self);
  g_clear_pointer (&self->data, g_free);
  g_clear_pointer (&self->rgba, g_free);
  self->cube = NULL;
  self->width = self->height = 0;
  invalidate (self);
  efflux_sky_view_point_at (self, NAN, NAN);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_HAS_MAP]);
}

gboolean
efflux_sky_view_has_map (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), FALSE);
  return self->data != NULL;
}

void
efflux_sky_view_set_source (EffluxSkyView *self,
                            double         ra_deg,
                            double         dec_deg,
                            double         distance_pc)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  self->has_source = isfinite (ra_deg) && isfinite (dec_deg);
  self->src_ra = ra_deg;
  self->src_dec = dec_deg;
  self->distance_pc = distance_pc;
  invalidate (self);
  efflux_sky_view_point_at (self, self->pointer_x, self->pointer_y);
}

void
efflux_sky_view_unset_source (EffluxSkyView *self)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  self->has_source = FALSE;
  self->distance_pc = NAN;
  invalidate (self);
}

/* ---- editing: lobes, cuts and the source marker through the document ---- */

#define HIT_VERTEX_PX 8.0
#define HIT_EDGE_PX   6.0

static const char *tool_names[] = { "pan", "lobe", "edit", "source", "cut" };

static void
invalidate_overlay (EffluxSkyView *self)
{
  g_clear_pointer (&self->overlay_node, gsk_render_node_unref);
  gtk_widget_queue_draw (GTK_WIDGET (self));
}

static void
set_edit_error (EffluxSkyView *self,
                const GError  *error)
{
  g_free (self->edit_error);
  self->edit_error = error ? g_strdup (error->message) : NULL;
}

/* An outline (ICRS) in 0-based pixel coordinates of the shown cube; FALSE when a vertex has no
 * valid projection. *px and *py are new arrays. */
static gboolean
outline_to_pixels (EffluxSkyView *self,
                   const double  *ra,
                   const double  *dec,
                   gsize          n,
                   double       **px,
                   double       **py)
{
  *px = g_new (double, MAX (n, 1));
  *py = g_new (double, MAX (n, 1));
  for (gsize i = 0; i < n; i++)
    if (self->cube == NULL || self->cube->sky == NULL
        || !efflux_cube_icrs_to_pixel (self->cube, ra[i], dec[i], &(*px)[i], &(*py)[i]))
      {
        g_clear_pointer (px, g_free);
        g_clear_pointer (py, g_free);
        return FALSE;
      }
  return TRUE;
}

static gboolean
pixels_to_outline (EffluxSkyView *self,
                   const double  *px,
                   const double  *py,
                   gsize          n,
                   double        *ra,
                   double        *dec)
{
  for (gsize i = 0; i < n; i++)
    if (self->cube == NULL || self->cube->sky == NULL
        || !efflux_cube_pixel_to_icrs (self->cube, px[i], py[i], &ra[i], &dec[i]))
      return FALSE;
  return TRUE;
}

static const EffluxDossier *
current_dossier (EffluxSkyView *self)
{
  return self->document ? efflux_document_get_dossier (self->document) : NULL;
}

static double
segment_distance (double  x,
                  double  y,
                  double  ax,
                  double  ay,
                  double  bx,
                  double  by,
                  double *t_out)
{
  double dx = bx - ax, dy = by - ay;
  double len2 = dx * dx + dy * dy;
  double t = len2 > 0 ? ((x - ax) * dx + (y - ay) * dy) / len2 : 0.0;

  t = CLAMP (t, 0.0, 1.0);
  if (t_out)
    *t_out = t;
  return hypot (x - (ax + t * dx), y - (ay + t * dy));
}

static gboolean
point_in_polygon (double        x,
                  double        y,
                  const double *px,
                  const double *py,
                  gsize         n)
{
  gboolean inside = FALSE;

  for (gsize i = 0, j = n - 1; i < n; j = i++)
    if ((py[i] > y) != (py[j] > y)
        && x < (px[j] - px[i]) * (y - py[i]) / (py[j] - py[i]) + px[i])
      inside = !inside;
  return inside;
}

typedef enum
{
  HIT_NONE,
  HIT_VERTEX,
  HIT_EDGE,
  HIT_INSIDE,
  HIT_CUT_VERTEX,
} HitKind;

typedef struct
{
  HitKind  kind;
  char    *name;       /* lobe or cut */
  gsize    index;      /* vertex, or the edge from index to index + 1 */
  double   px, py;     /* on an edge: the nearest point, pixel coordinates */
} Hit;

/* What lies under widget point (wx, wy): the selected lobe first, then the others, topmost
 * (last drawn) first; vertices before edges before insides. */
static Hit
hit_test (EffluxSkyView *self,
          double         wx,
          double         wy)
{
  const EffluxDossier *d = current_dossier (self);
  Hit best = { HIT_NONE, NULL, 0, 0, 0 };
  double best_dist = G_MAXDOUBLE;

  if (d == NULL)
    return best;
  for (int pass = 0; pass < 3; pass++)
    {
      for (guint k = d->lobes->len; k-- > 0;)
        {
          const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, k);
          g_autofree double *px = NULL, *py = NULL;
          gboolean selected = g_strcmp0 (lobe->name, self->selected) == 0;

          if (lobe->n_vertices < 3 || !outline_to_pixels (self, lobe->ra_deg, lobe->dec_deg,
                                                          lobe->n_vertices, &px, &py))
            continue;
          if (pass == 0 && !selected)
            continue;
          for (gsize i = 0; i < lobe->n_vertices && pass < 2; i++)
            {
              double vx, vy, dist;

              efflux_sky_view_pixel_to_widget (self, px[i], py[i], &vx, &vy);
              dist = hypot (vx - wx, vy - wy);
              if (dist <= HIT_VERTEX_PX && dist < best_dist)
                {
                  g_free (best.name);
                  best = (Hit) { HIT_VERTEX, g_strdup (lobe->name), i, px[i], py[i] };
                  best_dist = dist;
                }
            }
          if (best.kind != HIT_NONE)
            return best;
          for (gsize i = 0; i < lobe->n_vertices && pass < 2; i++)
            {
              gsize j = (i + 1) % lobe->n_vertices;
              double ax, ay, bx, by, t, dist;

              efflux_sky_view_pixel_to_widget (self, px[i], py[i], &ax, &ay);
              efflux_sky_view_pixel_to_widget (self, px[j], py[j], &bx, &by);
              dist = segment_distance (wx, wy, ax, ay, bx, by, &t);
              if (dist <= HIT_EDGE_PX && dist < best_dist)
                {
                  g_free (best.name);
                  best = (Hit) { HIT_EDGE, g_strdup (lobe->name), i,
                                 px[i] + t * (px[j] - px[i]), py[i] + t * (py[j] - py[i]) };
                  best_dist = dist;
                }
            }
          if (best.kind != HIT_NONE)
            return best;
          if (pass != 1)
            {
              double mx, my;

              efflux_sky_view_widget_to_pixel (self, wx, wy, &mx, &my);
              if (point_in_polygon (mx, my, px, py, lobe->n_vertices))
                return (Hit) { HIT_INSIDE, g_strdup (lobe->name), 0, mx, my };
            }
        }
      if (pass == 1)
        for (guint k = 0; k < d->cuts->len; k++)
          {
            const EffluxDossierCut *cut = g_ptr_array_index (d->cuts, k);
            g_autofree double *px = NULL, *py = NULL;

            if (!outline_to_pixels (self, cut->ra_deg, cut->dec_deg, cut->n_vertices, &px, &py))
              continue;
            for (gsize i = 0; i < cut->n_vertices; i++)
              {
                double vx, vy;

                efflux_sky_view_pixel_to_widget (self, px[i], py[i], &vx, &vy);
                if (hypot (vx - wx, vy - wy) <= HIT_VERTEX_PX)
                  return (Hit) { HIT_CUT_VERTEX, g_strdup (cut->name), i, px[i], py[i] };
              }
          }
    }
  return best;
}

void
efflux_sky_view_select_lobe (EffluxSkyView *self,
                             const char    *lobe)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  if (g_strcmp0 (lobe, self->selected) == 0)
    return;
  g_free (self->selected);
  self->selected = g_strdup (lobe);
  invalidate_overlay (self);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_SELECTED_LOBE]);
}

const char *
efflux_sky_view_get_selected_lobe (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  return self->selected;
}

guint
efflux_sky_view_get_n_draft (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), 0);
  return self->draft_x->len;
}

const char *
efflux_sky_view_get_edit_error (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  return self->edit_error;
}

void
efflux_sky_view_set_tool (EffluxSkyView *self,
                          EffluxSkyTool  tool)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  if ((int) tool == self->tool)
    return;
  self->tool = tool;
  g_array_set_size (self->draft_x, 0);
  g_array_set_size (self->draft_y, 0);
  invalidate_overlay (self);
  g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_TOOL]);
}

EffluxSkyTool
efflux_sky_view_get_tool (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), EFFLUX_SKY_TOOL_PAN);
  return self->tool;
}

void
efflux_sky_view_set_cube_id (EffluxSkyView *self,
                             const char    *cube_id)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  g_free (self->cube_id);
  self->cube_id = g_strdup (cube_id);
}

static void
document_changed (EffluxDocument *document,
                  const char     *group,
                  EffluxSkyView  *self)
{
  const EffluxDossier *d = efflux_document_get_dossier (document);

  if (self->selected != NULL && efflux_dossier_find_lobe (d, self->selected) == NULL)
    efflux_sky_view_select_lobe (self, NULL);
  invalidate_overlay (self);
  if (group == NULL || g_str_has_prefix (group, "Cube"))
    fill_wing_menu (self);
  maybe_restart_wings (self);
}

static void
document_measured (EffluxDocument *document,
                   EffluxSkyView  *self)
{
  /* the tracer's cube may have been loaded since */
  maybe_restart_wings (self);
}

void
efflux_sky_view_set_document (EffluxSkyView  *self,
                              EffluxDocument *document)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));
  g_return_if_fail (document == NULL || EFFLUX_IS_DOCUMENT (document));
  if (self->document == document)
    return;
  if (self->document != NULL)
    {
      g_signal_handlers_disconnect_by_func (self->document, document_changed, self);
      g_signal_handlers_disconnect_by_func (self->document, document_measured, self);
    }
  g_set_object (&self->document, document);
  if (document != NULL)
    {
      g_signal_connect (document, "changed", G_CALLBACK (document_changed), self);
      g_signal_connect (document, "measured", G_CALLBACK (document_measured), self);
    }
  fill_wing_menu (self);
  start_wings (self);
  efflux_sky_view_select_lobe (self, NULL);
  g_array_set_size (self->draft_x, 0);
  g_array_set_size (self->draft_y, 0);
  invalidate_overlay (self);
}

static void
add_draft_vertex (EffluxSkyView *self,
                  double         wx,
                  double         wy)
{
  double px, py;

  if (self->cube == NULL || (self->tool != EFFLUX_SKY_TOOL_LOBE && self->tool != EFFLUX_SKY_TOOL_CUT))
    return;
  efflux_sky_view_widget_to_pixel (self, wx, wy, &px, &py);
  /* a second click on the same spot (the second press of a double click) adds nothing */
  if (self->draft_x->len > 0)
    {
      double lx = g_array_index (self->draft_x, double, self->draft_x->len - 1);
      double ly = g_array_index (self->draft_y, double, self->draft_y->len - 1);

      if (hypot (lx - px, ly - py) * self->zoom < 2.0)
        return;
    }
  g_array_append_val (self->draft_x, px);
  g_array_append_val (self->draft_y, py);
  invalidate_overlay (self);
}

/* The default velocity range of a new lobe: the cube's channels on its side of v_sys, leaving
 * out the channel nearest v_sys. */
static void
new_lobe_range (EffluxSkyView *self,
                double        *v1,
                double        *v2)
{
  const EffluxDossier *d = current_dossier (self);
  double vmin = MIN (self->cube->velocity[0], self->cube->velocity[self->cube->nchan - 1]);
  double vmax = MAX (self->cube->velocity[0], self->cube->velocity[self->cube->nchan - 1]);
  double step = fabs (self->cube->dv);

  if (self->new_kind == EFFLUX_LOBE_BLUE)
    {
      *v1 = vmin;
      *v2 = MAX (vmin, d->vsys_kms - step);
    }
  else
    {
      *v1 = MIN (vmax, d->vsys_kms + step);
      *v2 = vmax;
    }
}

static void
finish_draft (EffluxSkyView *self)
{
  g_autoptr(GError) error = NULL;
  gsize n = self->draft_x->len;
  g_autofree double *ra = g_new (double, MAX (n, 1));
  g_autofree double *dec = g_new (double, MAX (n, 1));
  const EffluxDossier *d = current_dossier (self);

  if (d == NULL || self->cube == NULL || self->cube_id == NULL)
    return;
  if (self->tool == EFFLUX_SKY_TOOL_LOBE && n >= 3
      && pixels_to_outline (self, (double *) self->draft_x->data, (double *) self->draft_y->data,
                            n, ra, dec))
    {
      g_autofree char *name = NULL;
      double v1, v2;

      new_lobe_range (self, &v1, &v2);
      name = efflux_document_add_lobe (self->document, self->new_kind, self->cube_id, ra, dec, n,
                                       v1, v2, &error);
      set_edit_error (self, error);
      if (name != NULL)
        efflux_sky_view_select_lobe (self, name);
    }
  else if (self->tool == EFFLUX_SKY_TOOL_CUT && n >= 2
           && pixels_to_outline (self, (double *) self->draft_x->data,
                                 (double *) self->draft_y->data, n, ra, dec))
    {
      const char *name = d->cuts->len > 0
                         ? ((EffluxDossierCut *) g_ptr_array_index (d->cuts, 0))->name : "axis";

      efflux_document_set_cut (self->document, name, self->cube_id, ra, dec, n, self->cut_width,
                               0, &error);
      set_edit_error (self, error);
    }
  else
    return;
  g_array_set_size (self->draft_x, 0);
  g_array_set_size (self->draft_y, 0);
  invalidate_overlay (self);
}

/* Replace a lobe's outline from pixel coordinates (one command per merge id). */
static void
commit_outline (EffluxSkyView *self,
                const char    *lobe,
                const double  *px,
                const double  *py,
                gsize          n,
                guint          merge_id)
{
  g_autoptr(GError) error = NULL;
  g_autofree double *ra = g_new (double, n);
  g_autofree double *dec = g_new (double, n);

  if (efflux_polygon_self_crossing (px, py, n))
    {
      /* the measurement refuses such outlines: the lobe keeps its last good shape */
      g_set_error (&error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   _("%s: [Lobe %s] polygon: the outline would cross itself"),
                   current_dossier (self)->path, lobe);
      set_edit_error (self, error);
      return;
    }
  if (!pixels_to_outline (self, px, py, n, ra, dec))
    return;
  /* an outline the core refuses keeps its last good shape */
  efflux_document_set_lobe_polygon (self->document, lobe, ra, dec, n, merge_id, &error);
  set_edit_error (self, error);
}

static void
delete_vertex (EffluxSkyView *self,
               const char    *lobe_name,
               gsize          index)
{
  const EffluxDossierLobe *lobe = efflux_dossier_find_lobe (current_dossier (self), lobe_name);
  g_autofree double *px = NULL, *py = NULL;

  if (lobe == NULL || lobe->n_vertices <= 3 || index >= lobe->n_vertices
      || !outline_to_pixels (self, lobe->ra_deg, lobe->dec_deg, lobe->n_vertices, &px, &py))
    return;
  memmove (px + index, px + index + 1, (lobe->n_vertices - index - 1) * sizeof (double));
  memmove (py + index, py + index + 1, (lobe->n_vertices - index - 1) * sizeof (double));
  commit_outline (self, lobe_name, px, py, lobe->n_vertices - 1, 0);
}

static void
delete_selection (EffluxSkyView *self)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *name = NULL;

  if (self->document == NULL)
    return;
  if (self->draft_x->len > 0)
    {
      g_array_set_size (self->draft_x, self->draft_x->len - 1);
      g_array_set_size (self->draft_y, self->draft_y->len - 1);
      invalidate_overlay (self);
      return;
    }
  if (self->selected == NULL)
    return;
  if (self->hover_vertex >= 0 && g_strcmp0 (self->hover_lobe, self->selected) == 0)
    {
      delete_vertex (self, self->selected, (gsize) self->hover_vertex);
      return;
    }
  name = g_strdup (self->selected);
  efflux_document_remove_lobe (self->document, name, &error);
  set_edit_error (self, error);
}

/* Starts an edit for a drag that begins at (wx, wy); FALSE: nothing to edit there (pan). */
static gboolean
edit_begin (EffluxSkyView *self,
            double         wx,
            double         wy)
{
  const EffluxDossier *d = current_dossier (self);
  Hit hit;

  self->drag_what = DRAG_PAN;
  if (d == NULL || self->cube == NULL)
    return FALSE;
  self->drag_merge = efflux_document_new_merge_id ();
  if (self->tool == EFFLUX_SKY_TOOL_SOURCE)
    {
      double px, py, ra, dec;
      g_autoptr(GError) error = NULL;

      efflux_sky_view_widget_to_pixel (self, wx, wy, &px, &py);
      if (!efflux_cube_pixel_to_icrs (self->cube, px, py, &ra, &dec))
        return FALSE;
      efflux_document_set_source_position (self->document, ra, dec, self->drag_merge, &error);
      set_edit_error (self, error);
      self->drag_what = DRAG_SOURCE;
      return TRUE;
    }
  if (self->tool != EFFLUX_SKY_TOOL_EDIT)
    return FALSE;
  hit = hit_test (self, wx, wy);
  g_clear_pointer (&self->drag_name, g_free);
  g_clear_pointer (&self->drag_px, g_free);
  g_clear_pointer (&self->drag_py, g_free);
  switch (hit.kind)
    {
    case HIT_NONE:
      efflux_sky_view_select_lobe (self, NULL);
      return FALSE;
    case HIT_CUT_VERTEX:
      {
        const EffluxDossierCut *cut = NULL;

        for (guint k = 0; k < d->cuts->len; k++)
          if (g_str_equal (((EffluxDossierCut *) g_ptr_array_index (d->cuts, k))->name, hit.name))
            cut = g_ptr_array_index (d->cuts, k);
        if (cut == NULL
            || !outline_to_pixels (self, cut->ra_deg, cut->dec_deg, cut->n_vertices,
                                   &self->drag_px, &self->drag_py))
          {
            g_free (hit.name);
            return FALSE;
          }
        self->drag_n = cut->n_vertices;
        self->drag_what = DRAG_CUT_VERTEX;
      }
      break;
    case HIT_VERTEX:
    case HIT_EDGE:
    case HIT_INSIDE:
      {
        const EffluxDossierLobe *lobe = efflux_dossier_find_lobe (d, hit.name);

        efflux_sky_view_select_lobe (self, hit.name);
        if (lobe == NULL
            || !outline_to_pixels (self, lobe->ra_deg, lobe->dec_deg, lobe->n_vertices,
                                   &self->drag_px, &self->drag_py))
          {
            g_free (hit.name);
            return FALSE;
          }
        self->drag_n = lobe->n_vertices;
        if (hit.kind == HIT_EDGE)
          {
            /* insert a vertex on the edge and drag it */
            gsize at = hit.index + 1;

            self->drag_px = g_renew (double, self->drag_px, self->drag_n + 1);
            self->drag_py = g_renew (double, self->drag_py, self->drag_n + 1);
            memmove (self->drag_px + at + 1, self->drag_px + at, (self->drag_n - at) * sizeof (double));
            memmove (self->drag_py + at + 1, self->drag_py + at, (self->drag_n - at) * sizeof (double));
            self->drag_px[at] = hit.px;
            self->drag_py[at] = hit.py;
            self->drag_n++;
            hit.index = at;
            commit_outline (self, hit.name, self->drag_px, self->drag_py, self->drag_n,
                            self->drag_merge);
          }
        self->drag_what = hit.kind == HIT_INSIDE ? DRAG_LOBE : DRAG_VERTEX;
      }
      break;
    }
  self->drag_name = hit.name;
  self->drag_index = hit.index;
  efflux_sky_view_widget_to_pixel (self, wx, wy, &self->drag_mx, &self->drag_my);
  return TRUE;
}

static void
edit_update (EffluxSkyView *self,
             double         wx,
             double         wy)
{
  g_autoptr(GError) error = NULL;
  double px, py, ddx, ddy;

  efflux_sky_view_widget_to_pixel (self, wx, wy, &px, &py);
  ddx = px - self->drag_mx;
  ddy = py - self->drag_my;
  switch (self->drag_what)
    {
    case DRAG_SOURCE:
      {
        double ra, dec;

        if (efflux_cube_pixel_to_icrs (self->cube, px, py, &ra, &dec))
          efflux_document_set_source_position (self->document, ra, dec, self->drag_merge, &error);
      }
      break;
    case DRAG_VERTEX:
    case DRAG_LOBE:
    case DRAG_CUT_VERTEX:
      {
        g_autofree double *nx = g_memdup2 (self->drag_px, self->drag_n * sizeof (double));
        g_autofree double *ny = g_memdup2 (self->drag_py, self->drag_n * sizeof (double));

        if (self->drag_what == DRAG_LOBE)
          for (gsize i = 0; i < self->drag_n; i++)
            {
              nx[i] += ddx;
              ny[i] += ddy;
            }
        else
          {
            nx[self->drag_index] += ddx;
            ny[self->drag_index] += ddy;
          }
        if (self->drag_what == DRAG_CUT_VERTEX)
          {
            const EffluxDossier *d = current_dossier (self);
            g_autofree double *ra = g_new (double, self->drag_n);
            g_autofree double *dec = g_new (double, self->drag_n);

            for (guint k = 0; k < d->cuts->len; k++)
              {
                const EffluxDossierCut *cut = g_ptr_array_index (d->cuts, k);

                if (g_str_equal (cut->name, self->drag_name)
                    && pixels_to_outline (self, nx, ny, self->drag_n, ra, dec))
                  {
                    efflux_document_set_cut (self->document, cut->name, cut->cube_id, ra, dec,
                                             self->drag_n, cut->width_arcsec, self->drag_merge,
                                             &error);
                    break;
                  }
              }
          }
        else
          commit_outline (self, self->drag_name, nx, ny, self->drag_n, self->drag_merge);
      }
      break;
    default:
      break;
    }
  if (error != NULL)
    set_edit_error (self, error);
}

static void
edit_end (EffluxSkyView *self)
{
  self->drag_what = DRAG_PAN;
  g_clear_pointer (&self->drag_name, g_free);
  g_clear_pointer (&self->drag_px, g_free);
  g_clear_pointer (&self->drag_py, g_free);
}

static void
click_released_cb (GtkGestureClick *gesture,
                   int              n_press,
                   double           x,
                   double           y,
                   EffluxSkyView   *self)
{
  guint button = gtk_gesture_single_get_current_button (GTK_GESTURE_SINGLE (gesture));

  if (button == GDK_BUTTON_PRIMARY && n_press == 1)
    add_draft_vertex (self, x, y);
}

static void
click_pressed_cb (GtkGestureClick *gesture,
                  int              n_press,
                  double           x,
                  double           y,
                  EffluxSkyView   *self)
{
  guint button = gtk_gesture_single_get_current_button (GTK_GESTURE_SINGLE (gesture));

  gtk_widget_grab_focus (GTK_WIDGET (self));
  if (button == GDK_BUTTON_PRIMARY && n_press == 2)
    finish_draft (self);
  else if (button == GDK_BUTTON_SECONDARY && self->tool == EFFLUX_SKY_TOOL_EDIT)
    {
      Hit hit = hit_test (self, x, y);

      if (hit.kind == HIT_VERTEX)
        delete_vertex (self, hit.name, hit.index);
      g_free (hit.name);
    }
}

/* Remember the vertex under the pointer (for Delete) and show the draft's rubber band. */
static void
edit_hover (EffluxSkyView *self,
            double         wx,
            double         wy)
{
  Hit hit = { HIT_NONE, NULL, 0, 0, 0 };

  if (self->tool == EFFLUX_SKY_TOOL_EDIT && !isnan (wx))
    hit = hit_test (self, wx, wy);
  g_free (self->hover_lobe);
  self->hover_lobe = hit.kind == HIT_VERTEX ? g_steal_pointer (&hit.name) : NULL;
  self->hover_vertex = hit.kind == HIT_VERTEX ? (gssize) hit.index : -1;
  g_free (hit.name);
  if (self->draft_x->len > 0)
    invalidate_overlay (self);
}

static void
edit_action (GtkWidget  *widget,
             const char *action_name,
             GVariant   *parameter)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (widget);

  if (g_str_equal (action_name, "sky.add-vertex"))
    {
      double x, y;

      g_variant_get (parameter, "(dd)", &x, &y);
      add_draft_vertex (self, x, y);
    }
  else if (g_str_equal (action_name, "sky.finish"))
    finish_draft (self);
  else if (g_str_equal (action_name, "sky.cancel"))
    {
      g_array_set_size (self->draft_x, 0);
      g_array_set_size (self->draft_y, 0);
      invalidate_overlay (self);
    }
  else if (g_str_equal (action_name, "sky.delete"))
    delete_selection (self);
  else if (g_str_equal (action_name, "sky.new-kind"))
    g_object_set (self, "new-lobe-kind", g_variant_get_string (parameter, NULL), NULL);
  else if (g_str_equal (action_name, "sky.tool"))
    {
      const char *name = g_variant_get_string (parameter, NULL);

      for (guint i = 0; i < G_N_ELEMENTS (tool_names); i++)
        if (g_str_equal (name, tool_names[i]))
          efflux_sky_view_set_tool (self, i);
    }
}

static void
path_outline (cairo_t       *cr,
              EffluxSkyView *self,
              const double  *px,
              const double  *py,
              gsize          n,
              gboolean       close)
{
  for (gsize i = 0; i < n; i++)
    {
      double wx, wy;

      efflux_sky_view_pixel_to_widget (self, px[i], py[i], &wx, &wy);
      if (i == 0)
        cairo_move_to (cr, wx, wy);
      else
        cairo_line_to (cr, wx, wy);
    }
  if (close)
    cairo_close_path (cr);
}

static void
draw_handles (cairo_t       *cr,
              EffluxSkyView *self,
              const double  *px,
              const double  *py,
              gsize          n)
{
  for (gsize i = 0; i < n; i++)
    {
      double wx, wy;

      efflux_sky_view_pixel_to_widget (self, px[i], py[i], &wx, &wy);
      cairo_rectangle (cr, wx - 3.5, wy - 3.5, 7, 7);
    }
  cairo_set_source_rgba (cr, 1, 1, 1, 1);
  cairo_fill_preserve (cr);
  cairo_set_source_rgba (cr, 0, 0, 0, 0.8);
  cairo_set_line_width (cr, 1.0);
  cairo_stroke (cr);
}

/* Grow box (x0, y0, x1, y1, widget pixels) to hold the map pixels (px, py), padded by pad. */
static void
grow_bounds (EffluxSkyView *self,
             const double  *px,
             const double  *py,
             gsize          n,
             double         pad,
             double         box[4])
{
  for (gsize i = 0; i < n; i++)
    {
      double wx, wy;

      efflux_sky_view_pixel_to_widget (self, px[i], py[i], &wx, &wy);
      box[0] = MIN (box[0], wx - pad);
      box[1] = MIN (box[1], wy - pad);
      box[2] = MAX (box[2], wx + pad);
      box[3] = MAX (box[3], wy + pad);
    }
}

/* The box (x0, y0, x1, y1) in whole widget pixels within the widget; FALSE when nothing is left. */
static gboolean
clip_box (const double     box[4],
          int              w,
          int              h,
          graphene_rect_t *bounds)
{
  double x0 = floor (MAX (box[0], 0)), y0 = floor (MAX (box[1], 0));
  double x1 = ceil (MIN (box[2], w)), y1 = ceil (MIN (box[3], h));

  if (x1 <= x0 || y1 <= y0)
    return FALSE;
  graphene_rect_init (bounds, x0, y0, x1 - x0, y1 - y0);
  return TRUE;
}

/* Lobes (blue and red, translucent fill), cuts with their width band, the outline being drawn. */
static void
draw_cut_item (EffluxSkyView          *self,
               cairo_t                *cr,
               const EffluxDossierCut *cut,
               const double           *px,
               const double           *py,
               double                  band)
{
  cairo_set_line_join (cr, CAIRO_LINE_JOIN_ROUND);
  cairo_set_line_cap (cr, CAIRO_LINE_CAP_BUTT);
  if (band > 1.0)
    {
      path_outline (cr, self, px, py, cut->n_vertices, FALSE);
      cairo_set_source_rgba (cr, 1.0, 0.85, 0.3, 0.22);
      cairo_set_line_width (cr, band);
      cairo_stroke (cr);
    }
  path_outline (cr, self, px, py, cut->n_vertices, FALSE);
  cairo_set_source_rgba (cr, 1.0, 0.85, 0.3, 0.95);
  cairo_set_line_width (cr, 1.5);
  cairo_stroke (cr);
  if (self->tool == EFFLUX_SKY_TOOL_EDIT || self->tool == EFFLUX_SKY_TOOL_CUT)
    draw_handles (cr, self, px, py, cut->n_vertices);
}

static void
draw_lobe_item (EffluxSkyView           *self,
                cairo_t                 *cr,
                const EffluxDossierLobe *lobe,
                const double            *px,
                const double            *py)
{
  gboolean blue = lobe->kind == EFFLUX_LOBE_BLUE;
  gboolean selected = g_strcmp0 (lobe->name, self->selected) == 0;
  double r = blue ? 0.25 : 1.0, g = blue ? 0.55 : 0.3, b = blue ? 1.0 : 0.25;

  path_outline (cr, self, px, py, lobe->n_vertices, TRUE);
  cairo_set_source_rgba (cr, r, g, b, selected ? 0.30 : 0.18);
  cairo_fill_preserve (cr);
  cairo_set_source_rgba (cr, 0, 0, 0, 0.6);
  cairo_set_line_width (cr, selected ? 4.5 : 3.5);
  cairo_stroke_preserve (cr);
  cairo_set_source_rgba (cr, r, g, b, 1.0);
  cairo_set_line_width (cr, selected ? 2.5 : 1.5);
  cairo_stroke (cr);
  if (selected && self->tool == EFFLUX_SKY_TOOL_EDIT)
    draw_handles (cr, self, px, py, lobe->n_vertices);
}

static void
draw_draft (EffluxSkyView *self,
            cairo_t       *cr)
{
  double *px = (double *) self->draft_x->data, *py = (double *) self->draft_y->data;
  gsize n = self->draft_x->len;
  double dash[] = { 5.0, 3.0 };

  path_outline (cr, self, px, py, n, FALSE);
  if (!isnan (self->pointer_x))
    cairo_line_to (cr, self->pointer_x, self->pointer_y);
  cairo_set_source_rgba (cr, 1, 1, 1, 0.95);
  cairo_set_line_width (cr, 1.5);
  cairo_set_dash (cr, dash, 2, 0);
  cairo_stroke (cr);
  cairo_set_dash (cr, NULL, 0, 0);
  draw_handles (cr, self, px, py, n);
}

/* What an item looks like where: its kind and state and its vertices in widget pixels (to
 * 1/100 pixel). Equal keys draw equal pictures. */
static char *
item_key (const char    *what,
          const char    *name,
          int            state,
          double         extra,
          const double  *wx,
          const double  *wy,
          gsize          n)
{
  GString *key = g_string_new (NULL);

  g_string_printf (key, "%s|%s|%d|%.2f", what, name, state, extra);
  for (gsize i = 0; i < n; i++)
    g_string_append_printf (key, "|%.2f,%.2f", wx[i], wy[i]);
  return g_string_free (key, FALSE);
}

/* One item's node, from the last build when its key is unchanged, else drawn anew in a Cairo
 * node as large as the item: dragging one vertex of one lobe repaints that lobe's box only. */
static GskRenderNode *
item_node (EffluxSkyView *self,
           GHashTable    *kept,
           GHashTable    *items,
           char          *key,           /* taken */
           const double  *px,
           const double  *py,
           gsize          n,
           double         pad,
           int            w,
           int            h,
           const EffluxDossierLobe *lobe,
           const EffluxDossierCut  *cut,
           double                   band)
{
  GskRenderNode *node = kept != NULL ? g_hash_table_lookup (kept, key) : NULL;

  if (node != NULL)
    gsk_render_node_ref (node);
  else
    {
      double box[4] = { G_MAXDOUBLE, G_MAXDOUBLE, -G_MAXDOUBLE, -G_MAXDOUBLE };
      GtkSnapshot *snapshot;
      cairo_t *cr;

      graphene_rect_t bounds;

      grow_bounds (self, px, py, n, pad, box);
      if (!clip_box (box, w, h, &bounds))
        {
          g_free (key);
          return NULL;
        }
      snapshot = gtk_snapshot_new ();
      cr = gtk_snapshot_append_cairo (snapshot, &bounds);
      if (lobe != NULL)
        draw_lobe_item (self, cr, lobe, px, py);
      else
        draw_cut_item (self, cr, cut, px, py, band);
      cairo_destroy (cr);
      node = gtk_snapshot_free_to_node (snapshot);
      if (node == NULL)
        {
          g_free (key);
          return NULL;
        }
    }
  g_hash_table_replace (items, key, gsk_render_node_ref (node));
  return node;
}

/* The overlay: one node per cut and lobe (cuts below lobes), then the draft. */
static GskRenderNode *
build_overlay (EffluxSkyView *self,
               int            w,
               int            h)
{
  const EffluxDossier *d = current_dossier (self);
  GHashTable *items = g_hash_table_new_full (g_str_hash, g_str_equal, g_free,
                                             (GDestroyNotify) gsk_render_node_unref);
  GtkSnapshot *snapshot = gtk_snapshot_new ();

  if (d != NULL && self->cube != NULL && self->cube->sky != NULL)
    {
      gboolean handles = self->tool == EFFLUX_SKY_TOOL_EDIT || self->tool == EFFLUX_SKY_TOOL_CUT;

      for (guint k = 0; k < d->cuts->len; k++)
        {
          const EffluxDossierCut *cut = g_ptr_array_index (d->cuts, k);
          g_autofree double *px = NULL, *py = NULL, *wx = NULL, *wy = NULL;
          GskRenderNode *node;
          double band;

          if (!outline_to_pixels (self, cut->ra_deg, cut->dec_deg, cut->n_vertices, &px, &py))
            continue;
          band = cut->width_arcsec / self->cube->pixel_arcsec[0] * self->zoom;
          wx = g_new (double, cut->n_vertices);
          wy = g_new (double, cut->n_vertices);
          for (gsize i = 0; i < cut->n_vertices; i++)
            efflux_sky_view_pixel_to_widget (self, px[i], py[i], &wx[i], &wy[i]);
          node = item_node (self, self->overlay_items, items,
                            item_key ("cut", cut->name, handles, band, wx, wy, cut->n_vertices),
                            px, py, cut->n_vertices, 8.0 + band / 2, w, h, NULL, cut, band);
          if (node != NULL)
            {
              gtk_snapshot_append_node (snapshot, node);
              gsk_render_node_unref (node);
            }
        }
      for (guint k = 0; k < d->lobes->len; k++)
        {
          const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, k);
          g_autofree double *px = NULL, *py = NULL, *wx = NULL, *wy = NULL;
          gboolean selected = g_strcmp0 (lobe->name, self->selected) == 0;
          GskRenderNode *node;

          if (lobe->n_vertices < 3
              || !outline_to_pixels (self, lobe->ra_deg, lobe->dec_deg, lobe->n_vertices, &px, &py))
            continue;
          wx = g_new (double, lobe->n_vertices);
          wy = g_new (double, lobe->n_vertices);
          for (gsize i = 0; i < lobe->n_vertices; i++)
            efflux_sky_view_pixel_to_widget (self, px[i], py[i], &wx[i], &wy[i]);
          node = item_node (self, self->overlay_items, items,
                            item_key ("lobe", lobe->name,
                                      lobe->kind * 4 + selected * 2
                                      + (self->tool == EFFLUX_SKY_TOOL_EDIT), 0.0,
                                      wx, wy, lobe->n_vertices),
                            px, py, lobe->n_vertices, 8.0, w, h, lobe, NULL, 0.0);
          if (node != NULL)
            {
              gtk_snapshot_append_node (snapshot, node);
              gsk_render_node_unref (node);
            }
        }
    }
  g_clear_pointer (&self->overlay_items, g_hash_table_unref);
  self->overlay_items = items;
  if (self->draft_x->len > 0)
    {
      double box[4] = { G_MAXDOUBLE, G_MAXDOUBLE, -G_MAXDOUBLE, -G_MAXDOUBLE };
      graphene_rect_t bounds;
      cairo_t *cr;

      grow_bounds (self, (double *) self->draft_x->data, (double *) self->draft_y->data,
                   self->draft_x->len, 8.0, box);
      if (!isnan (self->pointer_x))
        {
          box[0] = MIN (box[0], self->pointer_x - 4);
          box[1] = MIN (box[1], self->pointer_y - 4);
          box[2] = MAX (box[2], self->pointer_x + 4);
          box[3] = MAX (box[3], self->pointer_y + 4);
        }
      if (clip_box (box, w, h, &bounds))
        {
          cr = gtk_snapshot_append_cairo (snapshot, &bounds);
          draw_draft (self, cr);
          cairo_destroy (cr);
        }
    }
  return gtk_snapshot_free_to_node (snapshot);
}

/* ---- a colleague's lobes ---- */

void
efflux_sky_view_set_overlay (EffluxSkyView       *self,
                             const EffluxDossier *other,
                             const char          *author)
{
  g_return_if_fail (EFFLUX_IS_SKY_VIEW (self));

  g_ptr_array_set_size (self->other_lobes, 0);
  g_clear_pointer (&self->other_author, g_free);
  if (other != NULL)
    {
      for (guint k = 0; k < other->lobes->len; k++)
        {
          const EffluxDossierLobe *lobe = g_ptr_array_index (other->lobes, k);
          OtherLobe *copy;

          if (lobe->n_vertices < 3)
            continue;
          copy = g_new0 (OtherLobe, 1);
          copy->name = g_strdup (lobe->name);
          copy->kind = lobe->kind;
          copy->n = lobe->n_vertices;
          copy->ra = g_memdup2 (lobe->ra_deg, lobe->n_vertices * sizeof (double));
          copy->dec = g_memdup2 (lobe->dec_deg, lobe->n_vertices * sizeof (double));
          g_ptr_array_add (self->other_lobes, copy);
        }
      self->other_author = g_strdup (author != NULL ? author : efflux_dossier_author (other));
      if (self->other_author != NULL && *self->other_author == '\0')
        g_clear_pointer (&self->other_author, g_free);
    }
  g_clear_pointer (&self->other_node, gsk_render_node_unref);
  gtk_widget_queue_draw (GTK_WIDGET (self));
}

const char *
efflux_sky_view_get_overlay_author (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), NULL);
  return self->other_author;
}

guint
efflux_sky_view_get_n_overlay_lobes (EffluxSkyView *self)
{
  g_return_val_if_fail (EFFLUX_IS_SKY_VIEW (self), 0);
  return self->other_lobes->len;
}

static void draw_label (EffluxSkyView *self,
                        cairo_t       *cr,
                        const char    *text,
                        double         x,
                        double         y,
                        double         xalign,
                        double         yalign);

/* The colleague's outlines: dashed, a dark dashed line under the coloured one so that they read
 * on any colour, no fill (the own lobes stay the filled ones); a label "name (author)" above the
 * outline's highest vertex. */
static void
draw_other_lobes (EffluxSkyView *self,
                  cairo_t       *cr)
{
  static const double dash[] = { 7.0, 4.0 };

  if (self->cube == NULL || self->cube->sky == NULL)
    return;
  cairo_set_line_join (cr, CAIRO_LINE_JOIN_ROUND);
  for (guint k = 0; k < self->other_lobes->len; k++)
    {
      const OtherLobe *lobe = g_ptr_array_index (self->other_lobes, k);
      g_autofree double *px = NULL, *py = NULL;
      g_autofree char *label = NULL;
      gboolean blue = lobe->kind == EFFLUX_LOBE_BLUE;
      double top_x = 0, top_y = G_MAXDOUBLE;

      if (!outline_to_pixels (self, lobe->ra, lobe->dec, lobe->n, &px, &py))
        continue;
      path_outline (cr, self, px, py, lobe->n, TRUE);
      cairo_set_dash (cr, dash, G_N_ELEMENTS (dash), 0);
      cairo_set_source_rgba (cr, 0, 0, 0, 0.7);
      cairo_set_line_width (cr, 4.0);
      cairo_stroke_preserve (cr);
      if (blue)
        cairo_set_source_rgba (cr, 0.45, 0.75, 1.0, 1.0);
      else
        cairo_set_source_rgba (cr, 1.0, 0.45, 0.4, 1.0);
      cairo_set_line_width (cr, 2.0);
      cairo_stroke (cr);
      cairo_set_dash (cr, NULL, 0, 0);
      for (gsize i = 0; i < lobe->n; i++)
        {
          double wx, wy;

          efflux_sky_view_pixel_to_widget (self, px[i], py[i], &wx, &wy);
          if (wy < top_y)
            {
              top_x = wx;
              top_y = wy;
            }
        }
      if (self->other_author != NULL)
        /* Translators: a colleague's lobe on the map: its name and who drew it */
        label = g_strdup_printf (_("%s (%s)"), lobe->name, self->other_author);
      else
        label = g_strdup (lobe->name);
      {
        /* kept inside the view */
        g_autoptr(PangoLayout) layout = gtk_widget_create_pango_layout (GTK_WIDGET (self), label);
        int lw, lh, w = gtk_widget_get_width (GTK_WIDGET (self));

        pango_layout_get_pixel_size (layout, &lw, &lh);
        top_x = MAX (top_x, lw / 2.0 + 4.0);
        top_x = MIN (top_x, w - lw / 2.0 - 4.0);
        top_y = MAX (top_y, lh + 8.0);
      }
      draw_label (self, cr, label, top_x, top_y - 4, 0.5, 1.0);
    }
}

/* Wing contours: blue and red lines, thicker at higher levels, over a dark halo; the legend in
 * the top left corner. */
static void
draw_wings (EffluxSkyView *self,
            cairo_t       *cr)
{
  if (self->wing_sets != NULL)
    {
      cairo_set_line_join (cr, CAIRO_LINE_JOIN_ROUND);
      for (int pass = 0; pass < 2; pass++)
        for (guint k = 0; k < self->wing_sets->len; k++)
          {
            const EffluxWingSet *set = g_ptr_array_index (self->wing_sets, k);

            for (guint i = 0; i < set->lines->len; i++)
              {
                const EffluxPolyline *line = g_ptr_array_index (set->lines, i);
                gboolean pen = FALSE;
                double width = 1.0;

                for (gsize l = 0; l < set->n_levels; l++)
                  if (line->level == set->levels[l])
                    width = 1.0 + 0.4 * l;
                for (gsize j = 0; j < line->n; j++)
                  {
                    double wx, wy;

                    if (isnan (line->xy[2 * j]))
                      {
                        pen = FALSE;
                        continue;
                      }
                    efflux_sky_view_pixel_to_widget (self, line->xy[2 * j], line->xy[2 * j + 1],
                                                     &wx, &wy);
                    if (pen)
                      cairo_line_to (cr, wx, wy);
                    else
                      cairo_move_to (cr, wx, wy);
                    pen = TRUE;
                  }
                if (line->closed && pen)
                  cairo_close_path (cr);
                if (pass == 0)
                  {
                    cairo_set_source_rgba (cr, 0, 0, 0, 0.55);
                    cairo_set_line_width (cr, width + 2.0);
                  }
                else
                  {
                    if (set->kind == EFFLUX_LOBE_BLUE)
                      cairo_set_source_rgba (cr, 0.35, 0.65, 1.0, 1.0);
                    else
                      cairo_set_source_rgba (cr, 1.0, 0.35, 0.3, 1.0);
                    cairo_set_line_width (cr, width);
                  }
                cairo_stroke (cr);
              }
          }
    }
  if (self->wing_legend != NULL && self->wing_legend[0] != '\0')
    draw_label (self, cr, self->wing_legend, 8, 8, 0.0, 0.0);
}

/* ---- drawing ---- */

/* The visible part of the map, resampled nearest-neighbour at the device resolution into a
 * memory texture (GTK 4.8 scales textures with linear filtering only: drawing the texture 1:1
 * keeps every map pixel a sharp block at any zoom). */
static void
append_image (EffluxSkyView *self,
              GtkSnapshot   *snapshot,
              int            w,
              int            h)
{
  int scale = gtk_widget_get_scale_factor (GTK_WIDGET (self));
  double left, top, right, bottom;
  int vx0, vy0, vx1, vy1, tw, th;
  g_autoptr(GBytes) bytes = NULL;
  g_autoptr(GdkTexture) texture = NULL;
  g_autofree gssize *columns = NULL;
  guint8 *pixels;

  efflux_sky_view_pixel_to_widget (self, -0.5, self->height - 0.5, &left, &top);
  efflux_sky_view_pixel_to_widget (self, self->width - 0.5, -0.5, &right, &bottom);
  vx0 = (int) floor (MAX (left, 0.0));
  vy0 = (int) floor (MAX (top, 0.0));
  vx1 = (int) ceil (MIN (right, (double) w));
  vy1 = (int) ceil (MIN (bottom, (double) h));
  if (vx1 <= vx0 || vy1 <= vy0)
    return;
  tw = (vx1 - vx0) * scale;
  th = (vy1 - vy0) * scale;

  pixels = g_malloc ((gsize) tw * th * 4);
  columns = g_new (gssize, tw);
  for (int i = 0; i < tw; i++)
    {
      double px, py;

      efflux_sky_view_widget_to_pixel (self, vx0 + (i + 0.5) / scale, 0, &px, &py);
      px = floor (px + 0.5);
      columns[i] = (px >= 0 && px < self->width) ? (gssize) px : -1;
    }
  for (int j = 0; j < th; j++)
    {
      guint8 *row = pixels + (gsize) j * tw * 4;
      double px, py;
      gssize y;

      efflux_sky_view_widget_to_pixel (self, 0, vy0 + (j + 0.5) / scale, &px, &py);
      py = floor (py + 0.5);
      y = (py >= 0 && py < self->height) ? (gssize) py : -1;
      for (int i = 0; i < tw; i++)
        {
          if (y < 0 || columns[i] < 0)
            {
              memset (row + 4 * i, 0, 4);
              continue;
            }
          memcpy (row + 4 * i, self->rgba + ((gsize) y * self->width + (gsize) columns[i]) * 4, 4);
        }
    }
  bytes = g_bytes_new_take (pixels, (gsize) tw * th * 4);
  /* the tables hold opaque colours or fully transparent blanks: premultiplied as they are */
  texture = gdk_memory_texture_new (tw, th, GDK_MEMORY_R8G8B8A8_PREMULTIPLIED, bytes, (gsize) tw * 4);
  gtk_snapshot_append_texture (snapshot, texture,
                               &GRAPHENE_RECT_INIT (vx0, vy0, vx1 - vx0, vy1 - vy0));
}

static void
draw_label (EffluxSkyView *self,
            cairo_t       *cr,
            const char    *text,
            double         x,
            double         y,
            double         xalign,
            double         yalign)
{
  g_autoptr(PangoLayout) layout = gtk_widget_create_pango_layout (GTK_WIDGET (self), text);
  int lw, lh;
  double bx, by;

  pango_layout_get_pixel_size (layout, &lw, &lh);
  bx = round (x - xalign * (lw + 6));
  by = round (y - yalign * (lh + 2));
  cairo_set_source_rgba (cr, 0.0, 0.0, 0.0, 0.6);
  cairo_rectangle (cr, bx, by, lw + 6, lh + 2);
  cairo_fill (cr);
  cairo_set_source_rgba (cr, 1.0, 1.0, 1.0, 0.95);
  cairo_move_to (cr, bx + 3, by + 1);
  pango_cairo_show_layout (cr, layout);
}

static void
draw_grid (EffluxSkyView *self,
           cairo_t       *cr,
           int            w,
           int            h)
{
  g_autoptr(EffluxSkyGrid) grid = NULL;
  double x0, y0, x1, y1;

  if (self->grid < 0 || self->cube == NULL || self->cube->sky == NULL)
    return;
  /* the visible region of the map, in map pixels */
  efflux_sky_view_widget_to_pixel (self, 0, h, &x0, &y0);
  efflux_sky_view_widget_to_pixel (self, w, 0, &x1, &y1);
  x0 = MAX (x0, -0.5);
  y0 = MAX (y0, -0.5);
  x1 = MIN (x1, self->width - 0.5);
  y1 = MIN (y1, self->height - 0.5);
  if (x1 <= x0 || y1 <= y0)
    return;
  {
    double ref_ra = self->src_ra, ref_dec = self->src_dec;
    /* fewer lines in a small view, so that the labels (about 100 pixels wide) do not crowd */
    int max_lines = CLAMP (MIN (w / 140, h / 70), 2, GRID_LINES);

    /* offsets are from the source, or from the map's centre when no source is known */
    if (!self->has_source
        && !efflux_cube_pixel_to_icrs (self->cube, (self->width - 1.0) / 2.0,
                                       (self->height - 1.0) / 2.0, &ref_ra, &ref_dec))
      return;
    grid = efflux_skygrid_new (self->cube, x0, y0, x1, y1, (EffluxSkyGridStyle) self->grid,
                               ref_ra, ref_dec, max_lines);
  }
  if (grid == NULL)
    return;

  {
    double cx0, cy0, cx1, cy1;

    /* clip the lines to the map */
    efflux_sky_view_pixel_to_widget (self, x0, y1, &cx0, &cy0);
    efflux_sky_view_pixel_to_widget (self, x1, y0, &cx1, &cy1);
    cairo_save (cr);
    cairo_rectangle (cr, cx0, cy0, cx1 - cx0, cy1 - cy0);
    cairo_clip (cr);
    cairo_set_line_width (cr, 1.0);
    cairo_set_source_rgba (cr, 1.0, 1.0, 1.0, 0.35);
    for (guint i = 0; i < grid->lines->len; i++)
      {
        EffluxSkyGridLine *line = g_ptr_array_index (grid->lines, i);
        const double *p = (const double *) line->points->data;
        gboolean pen_down = FALSE;

        for (guint k = 0; k < line->points->len / 2; k++)
          {
            double wx, wy;

            if (isnan (p[2 * k]))
              {
                pen_down = FALSE;
                continue;
              }
            efflux_sky_view_pixel_to_widget (self, p[2 * k], p[2 * k + 1], &wx, &wy);
            if (pen_down)
              cairo_line_to (cr, wx, wy);
            else
              cairo_move_to (cr, wx, wy);
            pen_down = TRUE;
          }
      }
    cairo_stroke (cr);

    /* labels: RA (or east offset) along the bottom edge, Dec (or north offset) along the left */
    for (guint i = 0; i < grid->lines->len; i++)
      {
        EffluxSkyGridLine *line = g_ptr_array_index (grid->lines, i);
        double wx, wy;

        if (!line->has_anchor)
          continue;
        efflux_sky_view_pixel_to_widget (self, line->anchor_x, line->anchor_y, &wx, &wy);
        if (line->longitude)
          draw_label (self, cr, line->label, wx, wy - 2, 0.5, 1.0);
        else
          draw_label (self, cr, line->label, wx + 2, wy, 0.0, 0.5);
      }
    cairo_restore (cr);
  }
}

/* Per-arcsec pixel displacements towards north and east at the map centre, from the WCS (this
 * follows any rotation or flip of the grid). */
static gboolean
north_east_vectors (EffluxSkyView *self,
                    double         north[2],
                    double         east[2])
{
  const double step = 1.0; /* arcsec */
  double ra, dec, x0, y0, x1, y1, x2, y2;
  double cxp = (self->width - 1.0) / 2.0, cyp = (self->height - 1.0) / 2.0;

  if (self->cube == NULL || self->cube->sky == NULL
      || !efflux_cube_pixel_to_icrs (self->cube, cxp, cyp, &ra, &dec)
      || !efflux_cube_icrs_to_pixel (self->cube, ra, dec, &x0, &y0)
      || !efflux_cube_icrs_to_pixel (self->cube, ra, dec + step / 3600.0, &x1, &y1)
      || !efflux_cube_icrs_to_pixel (self->cube, ra + step / 3600.0 / cos (dec * G_PI / 180.0), dec,
                                     &x2, &y2))
    return FALSE;
  north[0] = (x1 - x0) / step;
  north[1] = (y1 - y0) / step;
  east[0] = (x2 - x0) / step;
  east[1] = (y2 - y0) / step;
  return TRUE;
}

/* The beam ellipse (FWHM; position angle east of north) in the lower-left corner. */
static void
draw_beam (EffluxSkyView *self,
           cairo_t       *cr,
           int            w,
           int            h)
{
  double north[2], east[2];
  double a, b, pa, pts[65][2], xmin = G_MAXDOUBLE, xmax = -G_MAXDOUBLE, ymin = G_MAXDOUBLE,
         ymax = -G_MAXDOUBLE, ox, oy;

  if (self->cube == NULL || !self->cube->has_beam || !north_east_vectors (self, north, east))
    return;
  a = self->cube->bmaj_arcsec / 2.0;
  b = self->cube->bmin_arcsec / 2.0;
  pa = self->cube->bpa_deg * G_PI / 180.0;
  for (int i = 0; i <= 64; i++)
    {
      double t = 2.0 * G_PI * i / 64.0;
      double u = a * cos (t), v = b * sin (t);
      /* along the major axis: cos(pa) N + sin(pa) E; the minor axis: -sin(pa) N + cos(pa) E */
      double n = u * cos (pa) - v * sin (pa), e = u * sin (pa) + v * cos (pa);
      double px = n * north[0] + e * east[0], py = n * north[1] + e * east[1];

      pts[i][0] = px * self->zoom;
      pts[i][1] = -py * self->zoom;
      xmin = MIN (xmin, pts[i][0]);
      xmax = MAX (xmax, pts[i][0]);
      ymin = MIN (ymin, pts[i][1]);
      ymax = MAX (ymax, pts[i][1]);
    }
  if (xmax - xmin < 2.0 && ymax - ymin < 2.0)
    return;
  if (xmax - xmin > w / 3.0 || ymax - ymin > h / 3.0)
    return;
  ox = 14.0 - xmin;
  oy = h - 14.0 - ymax;
  cairo_save (cr);
  cairo_set_source_rgba (cr, 0.0, 0.0, 0.0, 0.55);
  cairo_rectangle (cr, ox + xmin - 6, oy + ymin - 6, xmax - xmin + 12, ymax - ymin + 12);
  cairo_fill (cr);
  cairo_move_to (cr, ox + pts[0][0], oy + pts[0][1]);
  for (int i = 1; i <= 64; i++)
    cairo_line_to (cr, ox + pts[i][0], oy + pts[i][1]);
  cairo_close_path (cr);
  cairo_set_source_rgba (cr, 1.0, 1.0, 1.0, 0.35);
  cairo_fill_preserve (cr);
  cairo_set_source_rgba (cr, 1.0, 1.0, 1.0, 0.95);
  cairo_set_line_width (cr, 1.2);
  cairo_stroke (cr);
  cairo_restore (cr);
}

/* A scale bar in the lower-right corner: a round length in au (1, 2, 5 x 10^k) of about 120
 * screen pixels; 1 arcsec at d pc spans d au (the definition of the parsec). */
static void
draw_scale_bar (EffluxSkyView *self,
                cairo_t       *cr,
                int            w,
                int            h)
{
  double north[2], east[2], px_per_arcsec, au_per_px, want, decade, len_au, len_px;
  g_autofree char *text = NULL;

  if (!self->has_source || !(self->distance_pc > 0.0) || !north_east_vectors (self, north, east))
    return;
  px_per_arcsec = hypot (north[0], north[1]) * self->zoom;
  au_per_px = self->distance_pc / px_per_arcsec;
  want = 120.0 * au_per_px;
  decade = pow (10.0, floor (log10 (want)));
  len_au = (want >= 5 * decade) ? 5 * decade : (want >= 2 * decade) ? 2 * decade : decade;
  len_px = len_au / au_per_px;
  if (len_px > w / 2.0 || len_px < 10.0)
    return;

  /* Translators: a length in astronomical units on the scale bar */
  text = g_strdup_printf (_("%g au"), len_au);
  cairo_save (cr);
  cairo_set_source_rgba (cr, 0.0, 0.0, 0.0, 0.55);
  cairo_rectangle (cr, w - 20 - len_px - 6, h - 44, len_px + 12, 34);
  cairo_fill (cr);
  cairo_set_source_rgba (cr, 1.0, 1.0, 1.0, 0.95);
  cairo_set_line_width (cr, 2.0);
  cairo_move_to (cr, w - 20 - len_px, h - 16.0);
  cairo_line_to (cr, w - 20, h - 16.0);
  cairo_move_to (cr, w - 20 - len_px, h - 20.0);
  cairo_line_to (cr, w - 20 - len_px, h - 12.0);
  cairo_move_to (cr, w - 20, h - 20.0);
  cairo_line_to (cr, w - 20, h - 12.0);
  cairo_stroke (cr);
  cairo_restore (cr);
  {
    g_autoptr(PangoLayout) layout = gtk_widget_create_pango_layout (GTK_WIDGET (self), text);
    int lw, lh;

    pango_layout_get_pixel_size (layout, &lw, &lh);
    cairo_set_source_rgba (cr, 1.0, 1.0, 1.0, 0.95);
    cairo_move_to (cr, round (w - 20 - len_px / 2 - lw / 2.0), h - 22 - lh);
    pango_cairo_show_layout (cr, layout);
  }
}

/* The source marker: an open cross with a dark outline so that it reads on any colour. */
static void
draw_source (EffluxSkyView *self,
             cairo_t       *cr)
{
  double px, py, wx, wy;

  if (!self->has_source || self->cube == NULL || self->cube->sky == NULL
      || !efflux_cube_icrs_to_pixel (self->cube, self->src_ra, self->src_dec, &px, &py))
    return;
  efflux_sky_view_pixel_to_widget (self, px, py, &wx, &wy);
  cairo_save (cr);
  for (int pass = 0; pass < 2; pass++)
    {
      cairo_set_line_width (cr, pass == 0 ? 4.0 : 2.0);
      if (pass == 0)
        cairo_set_source_rgba (cr, 0.0, 0.0, 0.0, 0.7);
      else
        cairo_set_source_rgba (cr, 1.0, 0.95, 0.6, 1.0);
      cairo_move_to (cr, wx - 12, wy);
      cairo_line_to (cr, wx - 4, wy);
      cairo_move_to (cr, wx + 4, wy);
      cairo_line_to (cr, wx + 12, wy);
      cairo_move_to (cr, wx, wy - 12);
      cairo_line_to (cr, wx, wy - 4);
      cairo_move_to (cr, wx, wy + 4);
      cairo_line_to (cr, wx, wy + 12);
      cairo_stroke (cr);
    }
  cairo_restore (cr);
}

static GskRenderNode *
build_scene (EffluxSkyView *self,
             int            w,
             int            h)
{
  GtkSnapshot *snapshot = gtk_snapshot_new ();
  cairo_t *cr;

  append_image (self, snapshot, w, h);
  cr = gtk_snapshot_append_cairo (snapshot, &GRAPHENE_RECT_INIT (0, 0, w, h));
  draw_grid (self, cr, w, h);
  draw_source (self, cr);
  {
    /* the beam and the scale bar sit above the grid's labels along the bottom edge */
    int bottom = h - (self->grid >= 0 ? 24 : 0);

    draw_beam (self, cr, w, bottom);
    draw_scale_bar (self, cr, w, bottom);
  }
  cairo_destroy (cr);
  return gtk_snapshot_free_to_node (snapshot);
}

static void
efflux_sky_view_snapshot (GtkWidget   *widget,
                          GtkSnapshot *snapshot)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (widget);
  int w = gtk_widget_get_width (widget);
  int h = gtk_widget_get_height (widget);

  if (w <= 0 || h <= 0 || self->rgba == NULL)
    return;
  if (self->node == NULL)
    self->node = build_scene (self, w, h);
  if (self->node != NULL)
    gtk_snapshot_append_node (snapshot, self->node);
  if (self->other_node == NULL && self->other_lobes->len > 0)
    {
      GtkSnapshot *other = gtk_snapshot_new ();
      cairo_t *cr = gtk_snapshot_append_cairo (other, &GRAPHENE_RECT_INIT (0, 0, w, h));

      draw_other_lobes (self, cr);
      cairo_destroy (cr);
      self->other_node = gtk_snapshot_free_to_node (other);
    }
  if (self->other_node != NULL)
    gtk_snapshot_append_node (snapshot, self->other_node);
  if (self->wing_node == NULL
      && (self->wing_sets != NULL || (self->wing_legend != NULL && self->wing_legend[0])))
    {
      GtkSnapshot *wings = gtk_snapshot_new ();
      cairo_t *cr = gtk_snapshot_append_cairo (wings, &GRAPHENE_RECT_INIT (0, 0, w, h));

      draw_wings (self, cr);
      cairo_destroy (cr);
      self->wing_node = gtk_snapshot_free_to_node (wings);
    }
  if (self->wing_node != NULL)
    gtk_snapshot_append_node (snapshot, self->wing_node);
  if (self->overlay_node == NULL && (self->document != NULL || self->draft_x->len > 0))
    self->overlay_node = build_overlay (self, w, h);
  if (self->overlay_node != NULL)
    gtk_snapshot_append_node (snapshot, self->overlay_node);
}

static void
efflux_sky_view_measure (GtkWidget      *widget,
                         GtkOrientation  orientation,
                         int             for_size,
                         int            *minimum,
                         int            *natural,
                         int            *minimum_baseline,
                         int            *natural_baseline)
{
  *minimum = 120;
  *natural = orientation == GTK_ORIENTATION_HORIZONTAL ? 640 : 480;
}

static void
efflux_sky_view_size_allocate (GtkWidget *widget,
                               int        width,
                               int        height,
                               int        baseline)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (widget);

  if (self->fitted && self->data != NULL)
    efflux_sky_view_zoom_fit (self);
  else
    invalidate (self);
}

/* ---- input ---- */

static void
motion_cb (GtkEventControllerMotion *controller,
           double                    x,
           double                    y,
           EffluxSkyView            *self)
{
  efflux_sky_view_point_at (self, x, y);
  edit_hover (self, x, y);
}

static void
leave_cb (GtkEventControllerMotion *controller,
          EffluxSkyView            *self)
{
  efflux_sky_view_point_at (self, NAN, NAN);
}

static gboolean
scroll_cb (GtkEventControllerScroll *controller,
           double                    dx,
           double                    dy,
           EffluxSkyView            *self)
{
  double wx = self->pointer_x, wy = self->pointer_y;

  if (self->data == NULL)
    return FALSE;
  if (isnan (wx) || isnan (wy))
    {
      wx = gtk_widget_get_width (GTK_WIDGET (self)) / 2.0;
      wy = gtk_widget_get_height (GTK_WIDGET (self)) / 2.0;
    }
  zoom_about (self, pow (ZOOM_STEP, -dy), wx, wy);
  return TRUE;
}

static void
drag_begin_cb (GtkGestureDrag *gesture,
               double          x,
               double          y,
               EffluxSkyView  *self)
{
  if (self->data == NULL)
    {
      gtk_gesture_set_state (GTK_GESTURE (gesture), GTK_EVENT_SEQUENCE_DENIED);
      return;
    }
  self->drag_cx = self->cx;
  self->drag_cy = self->cy;
  gtk_widget_grab_focus (GTK_WIDGET (self));
  if (gtk_gesture_single_get_current_button (GTK_GESTURE_SINGLE (gesture)) == GDK_BUTTON_PRIMARY
      && edit_begin (self, x, y))
    return;
  gtk_widget_set_cursor_from_name (GTK_WIDGET (self), "grabbing");
}

static void
drag_update_cb (GtkGestureDrag *gesture,
                double          ox,
                double          oy,
                EffluxSkyView  *self)
{
  if (self->drag_what != DRAG_PAN)
    {
      double sx, sy;

      gtk_gesture_drag_get_start_point (gesture, &sx, &sy);
      edit_update (self, sx + ox, sy + oy);
      return;
    }
  self->fitted = FALSE;
  self->cx = self->drag_cx - ox / self->zoom;
  self->cy = self->drag_cy + oy / self->zoom;
  invalidate (self);
}

static void
drag_end_cb (GtkGestureDrag *gesture,
             double          ox,
             double          oy,
             EffluxSkyView  *self)
{
  edit_end (self);
  gtk_widget_set_cursor_from_name (GTK_WIDGET (self), "crosshair");
}

static void
zoom_action (GtkWidget  *widget,
             const char *action_name,
             GVariant   *parameter)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (widget);

  if (g_str_equal (action_name, "sky.zoom-in"))
    efflux_sky_view_zoom_in (self);
  else if (g_str_equal (action_name, "sky.zoom-out"))
    efflux_sky_view_zoom_out (self);
  else
    efflux_sky_view_zoom_fit (self);
}

/* ---- properties ---- */

static void
efflux_sky_view_get_property (GObject    *object,
                              guint       prop_id,
                              GValue     *value,
                              GParamSpec *pspec)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (object);

  switch (prop_id)
    {
    case PROP_COLORMAP:
      g_value_set_string (value, efflux_colormap_kind_to_string (self->colormap));
      break;
    case PROP_STRETCH:
      g_value_set_string (value, efflux_stretch_kind_to_string (self->stretch));
      break;
    case PROP_LIMITS:
      g_value_set_double (value, self->limits);
      break;
    case PROP_GRID:
      g_value_set_string (value, self->grid < 0 ? "none" : grid_names[self->grid]);
      break;
    case PROP_ZOOM:
      g_value_set_double (value, self->zoom);
      break;
    case PROP_READOUT:
      g_value_set_string (value, efflux_sky_view_get_readout (self));
      break;
    case PROP_HAS_MAP:
      g_value_set_boolean (value, self->data != NULL);
      break;
    case PROP_TOOL:
      g_value_set_string (value, tool_names[self->tool]);
      break;
    case PROP_SELECTED_LOBE:
      g_value_set_string (value, self->selected);
      break;
    case PROP_NEW_LOBE_KIND:
      g_value_set_string (value, efflux_lobe_kind_name (self->new_kind));
      break;
    case PROP_CUT_WIDTH:
      g_value_set_double (value, self->cut_width);
      break;
    case PROP_SHOWS:
      g_value_set_string (value, show_names[self->shows]);
      break;
    case PROP_HAS_CONTEXT:
      g_value_set_boolean (value, self->context != NULL);
      break;
    case PROP_CONTEXT_ERROR:
      g_value_set_string (value, self->context_error);
      break;
    case PROP_WING_TRACER:
      g_value_set_string (value, self->wing_tracer ? self->wing_tracer : "");
      break;
    case PROP_WING_LEGEND:
      g_value_set_string (value, efflux_sky_view_get_wing_legend (self));
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_sky_view_set_property (GObject      *object,
                              guint         prop_id,
                              const GValue *value,
                              GParamSpec   *pspec)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (object);

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
        g_object_notify_by_pspec (object, pspec);
      }
      break;
    case PROP_LIMITS:
      if (g_value_get_double (value) == self->limits)
        return;
      self->limits = g_value_get_double (value);
      self->layer_limits[self->shows] = self->limits;
      recolour (self);
      g_object_notify_by_pspec (object, pspec);
      break;
    case PROP_GRID:
      {
        const char *name = g_value_get_string (value);
        int grid = -1;

        for (int i = 0; i < (int) G_N_ELEMENTS (grid_names); i++)
          if (g_strcmp0 (name, grid_names[i]) == 0)
            grid = i;
        if (grid < 0 && g_strcmp0 (name, "none") != 0)
          {
            g_warning ("unknown grid style '%s'", name);
            return;
          }
        if (grid == self->grid)
          return;
        self->grid = grid;
        invalidate (self);
        g_object_notify_by_pspec (object, pspec);
      }
      break;
    case PROP_TOOL:
      for (guint i = 0; i < G_N_ELEMENTS (tool_names); i++)
        if (g_strcmp0 (g_value_get_string (value), tool_names[i]) == 0)
          {
            efflux_sky_view_set_tool (self, i);
            return;
          }
      g_warning ("unknown tool '%s'", g_value_get_string (value));
      break;
    case PROP_SELECTED_LOBE:
      efflux_sky_view_select_lobe (self, g_value_get_string (value));
      break;
    case PROP_NEW_LOBE_KIND:
      {
        EffluxLobeKind kind = g_strcmp0 (g_value_get_string (value), "red") == 0
                              ? EFFLUX_LOBE_RED : EFFLUX_LOBE_BLUE;

        if (kind != self->new_kind)
          {
            self->new_kind = kind;
            g_object_notify_by_pspec (object, pspec);
          }
      }
      break;
    case PROP_CUT_WIDTH:
      if (g_value_get_double (value) != self->cut_width)
        {
          self->cut_width = g_value_get_double (value);
          g_object_notify_by_pspec (object, pspec);
        }
      break;
    case PROP_SHOWS:
      for (int i = 0; i < (int) G_N_ELEMENTS (show_names); i++)
        if (g_strcmp0 (g_value_get_string (value), show_names[i]) == 0)
          {
            set_shows (self, i);
            return;
          }
      g_warning ("unknown map '%s'", g_value_get_string (value));
      break;
    case PROP_WING_TRACER:
      set_wing_tracer (self, g_value_get_string (value));
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_sky_view_finalize (GObject *object)
{
  EffluxSkyView *self = EFFLUX_SKY_VIEW (object);

  g_clear_pointer (&self->node, gsk_render_node_unref);
  g_clear_pointer (&self->overlay_node, gsk_render_node_unref);
  g_clear_pointer (&self->overlay_items, g_hash_table_unref);
  g_clear_pointer (&self->other_node, gsk_render_node_unref);
  g_clear_pointer (&self->wing_node, gsk_render_node_unref);
  layers_clear (self);
  g_free (self->context_path);
  g_free (self->context_unit);
  g_free (self->context_error);
  g_free (self->wing_tracer);
  g_free (self->wing_legend);
  g_clear_object (&self->wing_menu);
  g_clear_object (&self->layer_actions);
  g_mutex_clear (&self->workers_lock);
  g_cond_clear (&self->workers_cond);
  g_ptr_array_unref (self->other_lobes);
  g_free (self->other_author);
  if (self->document != NULL)
    {
      g_signal_handlers_disconnect_by_func (self->document, document_changed, self);
      g_signal_handlers_disconnect_by_func (self->document, document_measured, self);
    }
  g_clear_object (&self->document);
  g_array_unref (self->draft_x);
  g_array_unref (self->draft_y);
  g_free (self->cube_id);
  g_free (self->selected);
  g_free (self->drag_name);
  g_free (self->drag_px);
  g_free (self->drag_py);
  g_free (self->hover_lobe);
  g_free (self->edit_error);
  g_free (self->data);
  g_free (self->rgba);
  g_free (self->unit);
  g_free (self->readout_text);
  G_OBJECT_CLASS (efflux_sky_view_parent_class)->finalize (object);
}

static void
efflux_sky_view_class_init (EffluxSkyViewClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->finalize = efflux_sky_view_finalize;
  object_class->get_property = efflux_sky_view_get_property;
  object_class->set_property = efflux_sky_view_set_property;
  widget_class->snapshot = efflux_sky_view_snapshot;
  widget_class->measure = efflux_sky_view_measure;
  widget_class->size_allocate = efflux_sky_view_size_allocate;

  properties[PROP_COLORMAP] =
    g_param_spec_string ("colormap", NULL, NULL, "cubehelix",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_STRETCH] =
    g_param_spec_string ("stretch", NULL, NULL, "linear",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_LIMITS] =
    g_param_spec_double ("limits", NULL, NULL, 50.0, 100.0, 99.5,
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_GRID] =
    g_param_spec_string ("grid", NULL, NULL, "sexagesimal",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_ZOOM] =
    g_param_spec_double ("zoom", NULL, NULL, 0.0, G_MAXDOUBLE, 1.0,
                         G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_READOUT] =
    g_param_spec_string ("readout", NULL, NULL, "",
                         G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_HAS_MAP] =
    g_param_spec_boolean ("has-map", NULL, NULL, FALSE,
                          G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_TOOL] =
    g_param_spec_string ("tool", NULL, NULL, "pan",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_SELECTED_LOBE] =
    g_param_spec_string ("selected-lobe", NULL, NULL, NULL,
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_NEW_LOBE_KIND] =
    g_param_spec_string ("new-lobe-kind", NULL, NULL, "blue",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_CUT_WIDTH] =
    g_param_spec_double ("cut-width", NULL, NULL, 0.0, 3600.0, 0.0,
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_SHOWS] =
    g_param_spec_string ("shows", NULL, NULL, "integrated",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_HAS_CONTEXT] =
    g_param_spec_boolean ("has-context", NULL, NULL, FALSE,
                          G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_CONTEXT_ERROR] =
    g_param_spec_string ("context-error", NULL, NULL, NULL,
                         G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_WING_TRACER] =
    g_param_spec_string ("wing-tracer", NULL, NULL, "",
                         G_PARAM_READWRITE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_WING_LEGEND] =
    g_param_spec_string ("wing-legend", NULL, NULL, "",
                         G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  g_object_class_install_properties (object_class, N_PROPS, properties);

  gtk_widget_class_install_action (widget_class, "sky.add-vertex", "(dd)", edit_action);
  gtk_widget_class_install_action (widget_class, "sky.finish", NULL, edit_action);
  gtk_widget_class_install_action (widget_class, "sky.cancel", NULL, edit_action);
  gtk_widget_class_install_action (widget_class, "sky.delete", NULL, edit_action);
  gtk_widget_class_install_action (widget_class, "sky.tool", "s", edit_action);
  gtk_widget_class_install_action (widget_class, "sky.new-kind", "s", edit_action);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_b, 0, "sky.new-kind", "s", "blue");
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_r, 0, "sky.new-kind", "s", "red");
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_Return, 0, "sky.finish", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_KP_Enter, 0, "sky.finish", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_Escape, 0, "sky.cancel", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_Delete, 0, "sky.delete", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_BackSpace, 0, "sky.delete", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_p, 0, "sky.tool", "s", "pan");
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_l, 0, "sky.tool", "s", "lobe");
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_e, 0, "sky.tool", "s", "edit");
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_s, 0, "sky.tool", "s", "source");
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_c, 0, "sky.tool", "s", "cut");

  gtk_widget_class_install_action (widget_class, "sky.zoom-in", NULL, zoom_action);
  gtk_widget_class_install_action (widget_class, "sky.zoom-out", NULL, zoom_action);
  gtk_widget_class_install_action (widget_class, "sky.zoom-fit", NULL, zoom_action);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_plus, 0, "sky.zoom-in", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_KP_Add, 0, "sky.zoom-in", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_minus, 0, "sky.zoom-out", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_KP_Subtract, 0, "sky.zoom-out", NULL);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_f, 0, "sky.zoom-fit", NULL);

  gtk_widget_class_set_css_name (widget_class, "efflux-sky-view");
}

static void
efflux_sky_view_init (EffluxSkyView *self)
{
  GtkEventController *motion = gtk_event_controller_motion_new ();
  GtkEventController *scroll =
    gtk_event_controller_scroll_new (GTK_EVENT_CONTROLLER_SCROLL_VERTICAL);
  GtkGesture *drag = gtk_gesture_drag_new ();
  GtkGesture *click = gtk_gesture_click_new ();

  self->colormap = EFFLUX_COLORMAP_CUBEHELIX;
  self->stretch = EFFLUX_STRETCH_LINEAR;
  self->limits = 99.5;
  self->grid = EFFLUX_SKYGRID_SEXAGESIMAL;
  self->zoom = 1.0;
  self->fitted = TRUE;
  self->pointer_x = self->pointer_y = NAN;
  self->distance_pc = NAN;
  self->lo = self->hi = NAN;
  self->readout.value = NAN;
  self->draft_x = g_array_new (FALSE, FALSE, sizeof (double));
  self->draft_y = g_array_new (FALSE, FALSE, sizeof (double));
  self->hover_vertex = -1;
  self->new_kind = EFFLUX_LOBE_BLUE;
  self->other_lobes = g_ptr_array_new_with_free_func (other_lobe_free);
  g_mutex_init (&self->workers_lock);
  g_cond_init (&self->workers_cond);
  for (int i = 0; i < 3; i++)
    self->layer_limits[i] = 99.5;

  g_signal_connect (motion, "motion", G_CALLBACK (motion_cb), self);
  g_signal_connect (motion, "leave", G_CALLBACK (leave_cb), self);
  gtk_widget_add_controller (GTK_WIDGET (self), motion);
  g_signal_connect (scroll, "scroll", G_CALLBACK (scroll_cb), self);
  gtk_widget_add_controller (GTK_WIDGET (self), scroll);
  g_signal_connect (drag, "drag-begin", G_CALLBACK (drag_begin_cb), self);
  g_signal_connect (drag, "drag-update", G_CALLBACK (drag_update_cb), self);
  g_signal_connect (drag, "drag-end", G_CALLBACK (drag_end_cb), self);
  gtk_widget_add_controller (GTK_WIDGET (self), GTK_EVENT_CONTROLLER (drag));
  gtk_gesture_single_set_button (GTK_GESTURE_SINGLE (click), 0);
  g_signal_connect (click, "pressed", G_CALLBACK (click_pressed_cb), self);
  g_signal_connect (click, "released", G_CALLBACK (click_released_cb), self);
  gtk_widget_add_controller (GTK_WIDGET (self), GTK_EVENT_CONTROLLER (click));

  gtk_widget_set_focusable (GTK_WIDGET (self), TRUE);
  gtk_widget_set_cursor_from_name (GTK_WIDGET (self), "crosshair");
  gtk_widget_set_hexpand (GTK_WIDGET (self), TRUE);
  gtk_widget_set_vexpand (GTK_WIDGET (self), TRUE);
  gtk_widget_set_overflow (GTK_WIDGET (self), GTK_OVERFLOW_HIDDEN);
}

GtkWidget *
efflux_sky_view_new (void)
{
  return g_object_new (EFFLUX_TYPE_SKY_VIEW, NULL);
}
