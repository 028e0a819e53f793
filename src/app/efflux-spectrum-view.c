/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-spectrum-view"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>

#include "efflux-maps.h"
#include "efflux-plot.h"
#include "efflux-spectrum-view.h"

#define MARGIN_LEFT   60
#define MARGIN_RIGHT  12
#define MARGIN_TOP    10
#define MARGIN_BOTTOM 40
#define GRAB_PIXELS   6.0

typedef struct
{
  char   *name;     /* NULL for the pixel's */
  int     kind;     /* -1 pixel, 0 blue, 1 red */
  double *values;   /* nchan */
  gssize  x, y;     /* the pixel's */
} Trace;

struct _EffluxSpectrumView
{
  GtkWidget         parent_instance;

  const EffluxCube *cube;      /* borrowed */
  char             *tracer;
  GPtrArray        *traces;    /* Trace * */
  GPtrArray        *ranges;    /* EffluxPlotRange * */
  double            vsys;

  /* drag of a range edge */
  int               drag_range;
  int               drag_edge;
  double            drag_x0, drag_y0;

  GskRenderNode    *node;
};

G_DEFINE_FINAL_TYPE (EffluxSpectrumView, efflux_spectrum_view, GTK_TYPE_WIDGET)

enum {
  RANGE_CHANGED,
  N_SIGNALS
};

static guint signals[N_SIGNALS];

static void
trace_free (gpointer data)
{
  Trace *t = data;

  g_free (t->name);
  g_free (t->values);
  g_free (t);
}

static void
invalidate (EffluxSpectrumView *self)
{
  g_clear_pointer (&self->node, gsk_render_node_unref);
  gtk_widget_queue_draw (GTK_WIDGET (self));
}

static Trace *
find_trace (EffluxSpectrumView *self,
            const char         *name)
{
  for (guint i = 0; i < self->traces->len; i++)
    {
      Trace *t = g_ptr_array_index (self->traces, i);

      if (g_strcmp0 (t->name, name) == 0)
        return t;
    }
  return NULL;
}

/* ---- axes ---- */

static void
velocity_limits (EffluxSpectrumView *self,
                 double             *lo,
                 double             *hi)
{
  const EffluxCube *c = self->cube;

  if (c == NULL || c->nchan == 0)
    {
      *lo = -10.0;
      *hi = 10.0;
      return;
    }
  *lo = MIN (c->velocity[0], c->velocity[c->nchan - 1]) - fabs (c->dv) / 2.0;
  *hi = MAX (c->velocity[0], c->velocity[c->nchan - 1]) + fabs (c->dv) / 2.0;
  if (*hi <= *lo)
    {
      *lo -= 1.0;
      *hi += 1.0;
    }
}

static void
brightness_limits (EffluxSpectrumView *self,
                   double             *lo,
                   double             *hi)
{
  double a = INFINITY, b = -INFINITY;

  for (guint i = 0; i < self->traces->len && self->cube != NULL; i++)
    {
      Trace *t = g_ptr_array_index (self->traces, i);

      for (gsize k = 0; k < self->cube->nchan; k++)
        if (isfinite (t->values[k]))
          {
            a = MIN (a, t->values[k]);
            b = MAX (b, t->values[k]);
          }
    }
  if (!isfinite (a))
    {
      a = 0.0;
      b = 1.0;
    }
  a = MIN (a, 0.0);
  if (b <= a)
    b = a + 1.0;
  *lo = a - 0.05 * (b - a);
  *hi = b + 0.08 * (b - a);
}

static void
get_axes (EffluxSpectrumView *self,
          EffluxAxis         *xa,
          EffluxAxis         *ya)
{
  int w = gtk_widget_get_width (GTK_WIDGET (self));
  int h = gtk_widget_get_height (GTK_WIDGET (self));

  velocity_limits (self, &xa->d0, &xa->d1);
  xa->s0 = MARGIN_LEFT;
  xa->s1 = MAX (w - MARGIN_RIGHT, MARGIN_LEFT + 1);
  brightness_limits (self, &ya->d0, &ya->d1);
  ya->s0 = MAX (h - MARGIN_BOTTOM, MARGIN_TOP + 1);
  ya->s1 = MARGIN_TOP;
}

void
efflux_spectrum_view_widget_to_data (EffluxSpectrumView *self,
                                     double              wx,
                                     double              wy,
                                     double             *v,
                                     double             *t)
{
  EffluxAxis xa, ya;

  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  get_axes (self, &xa, &ya);
  if (v != NULL)
    *v = efflux_axis_to_data (&xa, wx);
  if (t != NULL)
    *t = efflux_axis_to_data (&ya, wy);
}

void
efflux_spectrum_view_data_to_widget (EffluxSpectrumView *self,
                                     double              v,
                                     double              t,
                                     double             *wx,
                                     double             *wy)
{
  EffluxAxis xa, ya;

  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  get_axes (self, &xa, &ya);
  if (wx != NULL)
    *wx = efflux_axis_to_screen (&xa, v);
  if (wy != NULL)
    *wy = efflux_axis_to_screen (&ya, t);
}

/* ---- data ---- */

void
efflux_spectrum_view_set_cube (EffluxSpectrumView *self,
                               const EffluxCube   *cube,
                               const char         *tracer)
{
  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));

  self->cube = cube;
  g_free (self->tracer);
  self->tracer = g_strdup (tracer);
  g_ptr_array_set_size (self->traces, 0);
  invalidate (self);
}

gboolean
efflux_spectrum_view_show_pixel (EffluxSpectrumView *self,
                                 gssize              x,
                                 gssize              y,
                                 GError            **error)
{
  g_autofree double *values = NULL;
  Trace *t;

  g_return_val_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self), FALSE);
  g_return_val_if_fail (self->cube != NULL, FALSE);

  values = g_new (double, self->cube->nchan);
  if (!efflux_spectrum_at_pixel (self->cube, x, y, values, error))
    {
      efflux_spectrum_view_hide_pixel (self);
      return FALSE;
    }
  t = find_trace (self, NULL);
  if (t == NULL)
    {
      t = g_new0 (Trace, 1);
      t->kind = -1;
      g_ptr_array_insert (self->traces, 0, t);
    }
  g_free (t->values);
  t->values = g_steal_pointer (&values);
  t->x = x;
  t->y = y;
  invalidate (self);
  return TRUE;
}

void
efflux_spectrum_view_hide_pixel (EffluxSpectrumView *self)
{
  Trace *t;

  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  t = find_trace (self, NULL);
  if (t != NULL)
    {
      g_ptr_array_remove (self->traces, t);
      invalidate (self);
    }
}

void
efflux_spectrum_view_show_lobe (EffluxSpectrumView   *self,
                                const char           *lobe,
                                EffluxLobeKind        kind,
                                const EffluxLobeMask *mask)
{
  g_autofree double *values = NULL;

  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  g_return_if_fail (lobe != NULL && mask != NULL);
  g_return_if_fail (self->cube != NULL);
  g_return_if_fail (mask->nx == self->cube->nx && mask->ny == self->cube->ny);

  values = g_new (double, self->cube->nchan);
  efflux_spectrum_over_lobe (self->cube, mask, EFFLUX_SPECTRUM_MEAN, values);
  efflux_spectrum_view_set_lobe_spectrum (self, lobe, kind, values, self->cube->nchan);
}

void
efflux_spectrum_view_set_lobe_spectrum (EffluxSpectrumView *self,
                                        const char         *lobe,
                                        EffluxLobeKind      kind,
                                        const double       *values,
                                        gsize               n)
{
  Trace *t;

  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  g_return_if_fail (lobe != NULL && values != NULL);
  g_return_if_fail (self->cube != NULL && n == self->cube->nchan);

  t = find_trace (self, lobe);
  if (t == NULL)
    {
      t = g_new0 (Trace, 1);
      t->name = g_strdup (lobe);
      g_ptr_array_add (self->traces, t);
    }
  t->kind = kind == EFFLUX_LOBE_RED ? 1 : 0;
  g_free (t->values);
  t->values = g_memdup2 (values, n * sizeof (double));
  invalidate (self);
}

void
efflux_spectrum_view_hide_lobe (EffluxSpectrumView *self,
                                const char         *lobe)
{
  Trace *t;

  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  g_return_if_fail (lobe != NULL);
  t = find_trace (self, lobe);
  if (t != NULL)
    {
      g_ptr_array_remove (self->traces, t);
      invalidate (self);
    }
}

const double *
efflux_spectrum_view_get_spectrum (EffluxSpectrumView *self,
                                   const char         *lobe,
                                   gsize              *n)
{
  Trace *t;

  g_return_val_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self), NULL);
  t = find_trace (self, lobe);
  if (n != NULL)
    *n = (t != NULL && self->cube != NULL) ? self->cube->nchan : 0;
  return t != NULL ? t->values : NULL;
}

void
efflux_spectrum_view_set_range (EffluxSpectrumView *self,
                                const char         *lobe,
                                EffluxLobeKind      kind,
                                double              v1,
                                double              v2)
{
  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  g_return_if_fail (lobe != NULL);
  if (efflux_plot_ranges_set (self->ranges, lobe, kind == EFFLUX_LOBE_RED ? 1 : 0, v1, v2))
    invalidate (self);
}

void
efflux_spectrum_view_remove_range (EffluxSpectrumView *self,
                                   const char         *lobe)
{
  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  self->drag_range = -1;
  if (efflux_plot_ranges_remove (self->ranges, lobe))
    invalidate (self);
}

gboolean
efflux_spectrum_view_get_range (EffluxSpectrumView *self,
                                const char         *lobe,
                                double             *v1,
                                double             *v2)
{
  EffluxPlotRange *r;

  g_return_val_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self), FALSE);
  r = efflux_plot_ranges_find (self->ranges, lobe);
  if (r == NULL)
    return FALSE;
  *v1 = r->v1;
  *v2 = r->v2;
  return TRUE;
}

void
efflux_spectrum_view_set_vsys (EffluxSpectrumView *self,
                               double              vsys_kms)
{
  g_return_if_fail (EFFLUX_IS_SPECTRUM_VIEW (self));
  if (efflux_plot_same_value (self->vsys, vsys_kms))
    return;
  self->vsys = vsys_kms;
  invalidate (self);
}

/* ---- drawing ---- */

static void
foreground (GtkWidget *widget,
            double     fg[4])
{
  GdkRGBA c;

  gtk_style_context_get_color (gtk_widget_get_style_context (widget), &c);
  fg[0] = c.red;
  fg[1] = c.green;
  fg[2] = c.blue;
  fg[3] = c.alpha;
}

static void
trace_colour (const Trace  *t,
              const double  fg[4],
              cairo_t      *cr)
{
  if (t->kind == 0)
    cairo_set_source_rgba (cr, 0.2, 0.45, 1.0, 1.0);
  else if (t->kind == 1)
    cairo_set_source_rgba (cr, 0.95, 0.25, 0.2, 1.0);
  else
    cairo_set_source_rgba (cr, fg[0], fg[1], fg[2], 0.9 * fg[3]);
}

static void
draw_trace (EffluxSpectrumView *self,
            cairo_t            *cr,
            const Trace        *t,
            const EffluxAxis   *xa,
            const EffluxAxis   *ya)
{
  const EffluxCube *c = self->cube;
  double half = c->dv / 2.0;
  gboolean pen = FALSE;

  /* channel steps: each channel a flat top over its width, joined by verticals */
  for (gsize k = 0; k < c->nchan; k++)
    {
      double y, x0, x1;

      if (!isfinite (t->values[k]))
        {
          pen = FALSE;
          continue;
        }
      y = efflux_axis_to_screen (ya, t->values[k]);
      x0 = efflux_axis_to_screen (xa, c->velocity[k] - half);
      x1 = efflux_axis_to_screen (xa, c->velocity[k] + half);
      if (pen)
        cairo_line_to (cr, x0, y);
      else
        cairo_move_to (cr, x0, y);
      cairo_line_to (cr, x1, y);
      pen = TRUE;
    }
  cairo_stroke (cr);
}

static GskRenderNode *
build_scene (EffluxSpectrumView *self,
             int                 w,
             int                 h)
{
  GtkSnapshot *snapshot = gtk_snapshot_new ();
  g_autoptr(PangoLayout) layout = gtk_widget_create_pango_layout (GTK_WIDGET (self), NULL);
  EffluxAxis xa, ya;
  double fg[4];
  cairo_t *cr;

  foreground (GTK_WIDGET (self), fg);
  get_axes (self, &xa, &ya);
  cr = gtk_snapshot_append_cairo (snapshot, &GRAPHENE_RECT_INIT (0, 0, w, h));
  cairo_save (cr);
  cairo_rectangle (cr, xa.s0, ya.s1, xa.s1 - xa.s0, ya.s0 - ya.s1);
  cairo_clip (cr);
  efflux_plot_draw_ranges (cr, self->ranges, &xa, &ya, FALSE);
  if (isfinite (self->vsys))
    {
      double x = floor (efflux_axis_to_screen (&xa, self->vsys)) + 0.5;
      double dash[] = { 5.0, 4.0 };

      cairo_set_source_rgba (cr, fg[0], fg[1], fg[2], 0.7 * fg[3]);
      cairo_set_line_width (cr, 1.0);
      cairo_set_dash (cr, dash, 2, 0);
      cairo_move_to (cr, x, ya.s1);
      cairo_line_to (cr, x, ya.s0);
      cairo_stroke (cr);
      cairo_set_dash (cr, NULL, 0, 0);
    }
  {
    /* the zero line */
    double y0 = floor (efflux_axis_to_screen (&ya, 0.0)) + 0.5;

    cairo_set_source_rgba (cr, fg[0], fg[1], fg[2], 0.3 * fg[3]);
    cairo_set_line_width (cr, 1.0);
    cairo_move_to (cr, xa.s0, y0);
    cairo_line_to (cr, xa.s1, y0);
    cairo_stroke (cr);
  }
  cairo_set_line_width (cr, 1.5);
  cairo_set_line_join (cr, CAIRO_LINE_JOIN_ROUND);
  for (guint i = 0; i < self->traces->len && self->cube != NULL; i++)
    {
      Trace *t = g_ptr_array_index (self->traces, i);

      trace_colour (t, fg, cr);
      draw_trace (self, cr, t, &xa, &ya);
    }
  cairo_restore (cr);

  /* Translators: axis titles of the spectrum plot */
  efflux_plot_draw_frame (cr, layout, &xa, &ya, _("velocity (km/s)"), _("T (K)"), fg);

  /* legend, top right */
  {
    double y = MARGIN_TOP + 4;

    for (guint i = 0; i < self->traces->len; i++)
      {
        Trace *t = g_ptr_array_index (self->traces, i);
        g_autofree char *text = NULL;
        int lw, lh;

        if (t->name == NULL)
          /* Translators: legend of the spectrum at a pixel: tracer, FITS (1-based) pixel */
          text = g_strdup_printf (_("%s at pixel %zd, %zd"), self->tracer ? self->tracer : "",
                                  t->x + 1, t->y + 1);
        else
          /* Translators: legend of a lobe's mean spectrum */
          text = g_strdup_printf (_("%s mean over %s"), self->tracer ? self->tracer : "", t->name);
        pango_layout_set_text (layout, text, -1);
        pango_layout_get_pixel_size (layout, &lw, &lh);
        trace_colour (t, fg, cr);
        cairo_move_to (cr, xa.s1 - lw - 6, y);
        pango_cairo_show_layout (cr, layout);
        y += lh + 2;
      }
  }
  cairo_destroy (cr);
  return gtk_snapshot_free_to_node (snapshot);
}

static void
efflux_spectrum_view_snapshot (GtkWidget   *widget,
                               GtkSnapshot *snapshot)
{
  EffluxSpectrumView *self = EFFLUX_SPECTRUM_VIEW (widget);
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
efflux_spectrum_view_measure (GtkWidget      *widget,
                              GtkOrientation  orientation,
                              int             for_size,
                              int            *minimum,
                              int            *natural,
                              int            *minimum_baseline,
                              int            *natural_baseline)
{
  *minimum = orientation == GTK_ORIENTATION_HORIZONTAL ? 200 : 120;
  *natural = orientation == GTK_ORIENTATION_HORIZONTAL ? 480 : 220;
}

static void
efflux_spectrum_view_size_allocate (GtkWidget *widget,
                                    int        width,
                                    int        height,
                                    int        baseline)
{
  invalidate (EFFLUX_SPECTRUM_VIEW (widget));
}

/* ---- input ---- */

static double
grab_tolerance (EffluxSpectrumView *self)
{
  EffluxAxis xa, ya;

  get_axes (self, &xa, &ya);
  return GRAB_PIXELS * fabs ((xa.d1 - xa.d0) / (xa.s1 - xa.s0));
}

static void
emit_range (EffluxSpectrumView *self,
            gboolean            is_final)
{
  EffluxPlotRange *r = g_ptr_array_index (self->ranges, self->drag_range);
  g_autofree char *name = g_strdup (r->name);

  g_signal_emit (self, signals[RANGE_CHANGED], 0, name, r->v1, r->v2, is_final);
}

static void
drag_begin_cb (GtkGestureDrag     *gesture,
               double              x,
               double              y,
               EffluxSpectrumView *self)
{
  double v;

  efflux_spectrum_view_widget_to_data (self, x, y, &v, NULL);
  self->drag_range = efflux_plot_ranges_hit (self->ranges, v, grab_tolerance (self),
                                             &self->drag_edge);
  if (self->drag_range < 0)
    {
      gtk_gesture_set_state (GTK_GESTURE (gesture), GTK_EVENT_SEQUENCE_DENIED);
      return;
    }
  gtk_gesture_set_state (GTK_GESTURE (gesture), GTK_EVENT_SEQUENCE_CLAIMED);
  self->drag_x0 = x;
  self->drag_y0 = y;
}

static void
drag_move (EffluxSpectrumView *self,
           double              ox,
           double              oy,
           gboolean            is_final)
{
  EffluxPlotRange *r;
  double v;

  if (self->drag_range < 0 || (guint) self->drag_range >= self->ranges->len)
    return;
  r = g_ptr_array_index (self->ranges, self->drag_range);
  efflux_spectrum_view_widget_to_data (self, self->drag_x0 + ox, self->drag_y0 + oy, &v, NULL);
  efflux_plot_range_move_edge (r, &self->drag_edge, v);
  invalidate (self);
  emit_range (self, is_final);
  if (is_final)
    self->drag_range = -1;
}

static void
drag_update_cb (GtkGestureDrag     *gesture,
                double              ox,
                double              oy,
                EffluxSpectrumView *self)
{
  drag_move (self, ox, oy, FALSE);
}

static void
drag_end_cb (GtkGestureDrag     *gesture,
             double              ox,
             double              oy,
             EffluxSpectrumView *self)
{
  drag_move (self, ox, oy, TRUE);
}

static void
motion_cb (GtkEventControllerMotion *controller,
           double                    x,
           double                    y,
           EffluxSpectrumView       *self)
{
  double v;
  int edge;

  efflux_spectrum_view_widget_to_data (self, x, y, &v, NULL);
  gtk_widget_set_cursor_from_name (GTK_WIDGET (self),
                                   efflux_plot_ranges_hit (self->ranges, v, grab_tolerance (self),
                                                           &edge) >= 0 ? "col-resize" : NULL);
}

static void
efflux_spectrum_view_finalize (GObject *object)
{
  EffluxSpectrumView *self = EFFLUX_SPECTRUM_VIEW (object);

  g_clear_pointer (&self->node, gsk_render_node_unref);
  g_ptr_array_unref (self->traces);
  g_ptr_array_unref (self->ranges);
  g_free (self->tracer);
  G_OBJECT_CLASS (efflux_spectrum_view_parent_class)->finalize (object);
}

static void
efflux_spectrum_view_class_init (EffluxSpectrumViewClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->finalize = efflux_spectrum_view_finalize;
  widget_class->snapshot = efflux_spectrum_view_snapshot;
  widget_class->measure = efflux_spectrum_view_measure;
  widget_class->size_allocate = efflux_spectrum_view_size_allocate;

  /**
   * EffluxSpectrumView::range-changed:
   * @lobe: the lobe's name
   * @v1: the lower end, km/s
   * @v2: the upper end, km/s
   * @is_final: TRUE when the drag ended
   */
  signals[RANGE_CHANGED] =
    g_signal_new ("range-changed", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL,
                  NULL, G_TYPE_NONE, 4, G_TYPE_STRING, G_TYPE_DOUBLE, G_TYPE_DOUBLE, G_TYPE_BOOLEAN);

  gtk_widget_class_set_css_name (widget_class, "efflux-spectrum-view");
}

static void
efflux_spectrum_view_init (EffluxSpectrumView *self)
{
  GtkGesture *drag = gtk_gesture_drag_new ();
  GtkEventController *motion = gtk_event_controller_motion_new ();

  self->traces = g_ptr_array_new_with_free_func (trace_free);
  self->ranges = efflux_plot_ranges_new ();
  self->vsys = NAN;
  self->drag_range = -1;

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
efflux_spectrum_view_new (void)
{
  return g_object_new (EFFLUX_TYPE_SPECTRUM_VIEW, NULL);
}
