/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <math.h>
#include <string.h>

#include "efflux-plot.h"

#define MINUS "\342\210\222"  /* U+2212 */

/* Replace every ASCII '-' (only minus signs occur in the numbers made here) with U+2212. */
static char *
with_minus_signs (const char *text)
{
  GString *s = g_string_new (NULL);

  for (const char *p = text; *p; p++)
    if (*p == '-')
      g_string_append (s, MINUS);
    else
      g_string_append_c (s, *p);
  return g_string_free (s, FALSE);
}

/* "-0", "-0.00": a zero is written without a sign */
static void
drop_negative_zero (char *text)
{
  if (text[0] != '-')
    return;
  for (const char *p = text + 1; *p; p++)
    if (*p != '0' && *p != '.')
      return;
  memmove (text, text + 1, strlen (text));
}

EffluxTicks *
efflux_ticks_new (double lo,
                  double hi,
                  guint  max_ticks)
{
  static const double mantissas[] = { 1.0, 2.0, 5.0 };
  EffluxTicks *ticks;
  double range, step = NAN;
  int e0;

  if (!isfinite (lo) || !isfinite (hi) || max_ticks < 2)
    return NULL;
  if (lo > hi)
    {
      double t = lo;

      lo = hi;
      hi = t;
    }
  ticks = g_new0 (EffluxTicks, 1);
  range = hi - lo;
  if (range <= 0.0 || range < 1e-12 * MAX (fabs (lo), fabs (hi)))
    {
      ticks->n = 1;
      ticks->values = g_new (double, 1);
      ticks->values[0] = lo;
      ticks->step = 0.0;
      ticks->decimals = lo == 0.0 ? 0 : MAX (0, 3 - (int) floor (log10 (fabs (lo))));
      return ticks;
    }
  e0 = (int) floor (log10 (range / max_ticks)) - 1;
  for (int e = e0; isnan (step); e++)
    for (guint m = 0; m < G_N_ELEMENTS (mantissas) && isnan (step); m++)
      {
        double s = mantissas[m] * pow (10.0, e);

        if (floor (hi / s) - ceil (lo / s) + 1.0 <= max_ticks)
          {
            step = s;
            ticks->decimals = MAX (0, -e);
          }
      }
  ticks->step = step;
  {
    double first = ceil (lo / step - 1e-9), last = floor (hi / step + 1e-9);

    ticks->n = (gsize) MAX (0.0, last - first + 1.0);
    ticks->values = g_new (double, MAX (ticks->n, 1));
    for (gsize i = 0; i < ticks->n; i++)
      ticks->values[i] = (first + i) * step;
  }
  return ticks;
}

void
efflux_ticks_free (EffluxTicks *ticks)
{
  if (ticks == NULL)
    return;
  g_free (ticks->values);
  g_free (ticks);
}

char *
efflux_ticks_label (const EffluxTicks *ticks,
                    double             value)
{
  g_autofree char *text = g_strdup_printf ("%.*f", ticks->decimals, value);

  drop_negative_zero (text);
  return with_minus_signs (text);
}

double
efflux_axis_to_screen (const EffluxAxis *axis,
                       double            value)
{
  if (axis->d1 == axis->d0)
    return axis->s0;
  return axis->s0 + (value - axis->d0) * (axis->s1 - axis->s0) / (axis->d1 - axis->d0);
}

double
efflux_axis_to_data (const EffluxAxis *axis,
                     double            screen)
{
  if (axis->s1 == axis->s0)
    return axis->d0;
  return axis->d0 + (screen - axis->s0) * (axis->d1 - axis->d0) / (axis->s1 - axis->s0);
}

/* The decimal exponent of the last digit to show for an uncertainty e (> 0, finite). */
static int
error_place (double e)
{
  int ex = (int) floor (log10 (e));
  double lead = e / pow (10.0, ex);

  /* guard against log10 rounding at exact powers of ten */
  if (lead >= 10.0)
    {
      ex++;
      lead /= 10.0;
    }
  else if (lead < 1.0)
    {
      ex--;
      lead *= 10.0;
    }
  return lead < 3.0 ? ex - 1 : ex;
}

static int
exponent_of (double v)
{
  return v == 0.0 ? 0 : (int) floor (log10 (fabs (v)));
}

/* Numbers in `values` written to the decimal place `place`, with a shared power of ten when the
 * largest magnitude is >= 1e5 or < 1e-3; joined by sep, in parentheses when scaled. */
static char *
format_at_place (const double *values,
                 gsize         n,
                 int           place,
                 const char   *sep)
{
  GString *s = g_string_new (NULL);
  int top = place;
  int p = 0, decimals;

  for (gsize i = 0; i < n; i++)
    if (values[i] != 0.0)
      top = MAX (top, exponent_of (values[i]));
  if (top >= 5 || top <= -4)
    p = top;
  decimals = MAX (0, p - place);
  if (p != 0)
    g_string_append_c (s, '(');
  for (gsize i = 0; i < n; i++)
    {
      double scaled = values[i] / pow (10.0, p);
      g_autofree char *num = NULL;

      /* round to the place first (0.96 at place -1 gives 1.0, 6278 at place 1 gives 6280) */
      scaled = round (scaled / pow (10.0, place - p)) * pow (10.0, place - p);
      num = g_strdup_printf ("%.*f", decimals, scaled);
      drop_negative_zero (num);
      if (i > 0)
        g_string_append (s, sep);
      g_string_append (s, num);
    }
  if (p != 0)
    g_string_append_printf (s, ")e%d", p);
  {
    g_autofree char *plain = g_string_free (s, FALSE);

    return with_minus_signs (plain);
  }
}

char *
efflux_format_uncertain (double value,
                         double error)
{
  if (!isfinite (value))
    return g_strdup ("");
  if (!isfinite (error) || error <= 0.0)
    {
      double v[] = { value };

      return format_at_place (v, 1, exponent_of (value) - 2, "");
    }
  {
    int place = error_place (error);
    double v[] = { value, error };

    return format_at_place (v, 2, place, " \302\261 ");
  }
}

char *
efflux_format_spread (double lo,
                      double hi)
{
  double half = fabs (hi - lo) / 2.0;
  double v[] = { lo, hi };

  if (!isfinite (lo) || !isfinite (hi))
    return g_strdup ("");
  return format_at_place (v, 2, half > 0.0 ? error_place (half)
                                           : exponent_of (MAX (fabs (lo), fabs (hi))) - 2,
                          " \342\200\223 ");
}

/* ---- velocity ranges ---- */

static void
range_free (gpointer data)
{
  EffluxPlotRange *r = data;

  g_free (r->name);
  g_free (r);
}

GPtrArray *
efflux_plot_ranges_new (void)
{
  return g_ptr_array_new_with_free_func (range_free);
}

EffluxPlotRange *
efflux_plot_ranges_find (GPtrArray  *ranges,
                         const char *name)
{
  for (guint i = 0; i < ranges->len; i++)
    {
      EffluxPlotRange *r = g_ptr_array_index (ranges, i);

      if (g_strcmp0 (r->name, name) == 0)
        return r;
    }
  return NULL;
}

gboolean
efflux_plot_same_value (double a,
                        double b)
{
  return a == b || (isnan (a) && isnan (b));
}

gboolean
efflux_plot_ranges_set (GPtrArray  *ranges,
                        const char *name,
                        int         kind,
                        double      v1,
                        double      v2)
{
  EffluxPlotRange *r = efflux_plot_ranges_find (ranges, name);

  if (r != NULL && r->kind == kind && efflux_plot_same_value (r->v1, MIN (v1, v2))
      && efflux_plot_same_value (r->v2, MAX (v1, v2)))
    return FALSE;
  if (r == NULL)
    {
      r = g_new0 (EffluxPlotRange, 1);
      r->name = g_strdup (name);
      g_ptr_array_add (ranges, r);
    }
  r->kind = kind;
  r->v1 = MIN (v1, v2);
  r->v2 = MAX (v1, v2);
  return TRUE;
}

gboolean
efflux_plot_ranges_remove (GPtrArray  *ranges,
                           const char *name)
{
  EffluxPlotRange *r = efflux_plot_ranges_find (ranges, name);

  return r != NULL && g_ptr_array_remove (ranges, r);
}

int
efflux_plot_ranges_hit (GPtrArray *ranges,
                        double     v,
                        double     tol,
                        int       *edge)
{
  int best = -1;
  double best_d = tol;

  for (guint i = 0; i < ranges->len; i++)
    {
      EffluxPlotRange *r = g_ptr_array_index (ranges, i);

      for (int e = 0; e < 2; e++)
        {
          double d = fabs ((e == 0 ? r->v1 : r->v2) - v);

          if (d <= best_d)
            {
              best_d = d;
              best = (int) i;
              *edge = e;
            }
        }
    }
  return best;
}

void
efflux_plot_range_move_edge (EffluxPlotRange *range,
                             int             *edge,
                             double           v)
{
  if (*edge == 0)
    range->v1 = v;
  else
    range->v2 = v;
  if (range->v1 > range->v2)
    {
      double t = range->v1;

      range->v1 = range->v2;
      range->v2 = t;
      *edge = 1 - *edge;
    }
}

/* ---- drawing ---- */

static void
show_text (cairo_t     *cr,
           PangoLayout *layout,
           const char  *text,
           double       x,
           double       y,
           double       xalign,
           double       yalign)
{
  int w, h;

  pango_layout_set_text (layout, text, -1);
  pango_layout_get_pixel_size (layout, &w, &h);
  cairo_move_to (cr, round (x - xalign * w), round (y - yalign * h));
  pango_cairo_show_layout (cr, layout);
}

void
efflux_plot_draw_frame (cairo_t          *cr,
                        PangoLayout      *layout,
                        const EffluxAxis *x,
                        const EffluxAxis *y,
                        const char       *x_title,
                        const char       *y_title,
                        const double      fg[4])
{
  double left = MIN (x->s0, x->s1), right = MAX (x->s0, x->s1);
  double top = MIN (y->s0, y->s1), bottom = MAX (y->s0, y->s1);
  g_autoptr(EffluxTicks) xt = efflux_ticks_new (x->d0, x->d1, MAX (2, (guint) ((right - left) / 70)));
  g_autoptr(EffluxTicks) yt = efflux_ticks_new (y->d0, y->d1, MAX (2, (guint) ((bottom - top) / 40)));

  cairo_save (cr);
  cairo_set_line_width (cr, 1.0);
  /* faint grid lines at the ticks */
  cairo_set_source_rgba (cr, fg[0], fg[1], fg[2], 0.12 * fg[3]);
  for (gsize i = 0; xt != NULL && i < xt->n; i++)
    {
      double sx = floor (efflux_axis_to_screen (x, xt->values[i])) + 0.5;

      cairo_move_to (cr, sx, top);
      cairo_line_to (cr, sx, bottom);
    }
  for (gsize i = 0; yt != NULL && i < yt->n; i++)
    {
      double sy = floor (efflux_axis_to_screen (y, yt->values[i])) + 0.5;

      cairo_move_to (cr, left, sy);
      cairo_line_to (cr, right, sy);
    }
  cairo_stroke (cr);

  /* box, ticks and labels */
  cairo_set_source_rgba (cr, fg[0], fg[1], fg[2], 0.8 * fg[3]);
  cairo_rectangle (cr, floor (left) + 0.5, floor (top) + 0.5, floor (right) - floor (left),
                   floor (bottom) - floor (top));
  cairo_stroke (cr);
  for (gsize i = 0; xt != NULL && i < xt->n; i++)
    {
      double sx = floor (efflux_axis_to_screen (x, xt->values[i])) + 0.5;
      g_autofree char *label = efflux_ticks_label (xt, xt->values[i]);

      cairo_move_to (cr, sx, bottom);
      cairo_line_to (cr, sx, bottom - 5);
      cairo_stroke (cr);
      show_text (cr, layout, label, sx, bottom + 3, 0.5, 0.0);
    }
  for (gsize i = 0; yt != NULL && i < yt->n; i++)
    {
      double sy = floor (efflux_axis_to_screen (y, yt->values[i])) + 0.5;
      g_autofree char *label = efflux_ticks_label (yt, yt->values[i]);

      cairo_move_to (cr, left, sy);
      cairo_line_to (cr, left + 5, sy);
      cairo_stroke (cr);
      show_text (cr, layout, label, left - 4, sy, 1.0, 0.5);
    }
  if (x_title != NULL)
    show_text (cr, layout, x_title, (left + right) / 2.0, bottom + 20, 0.5, 0.0);
  if (y_title != NULL)
    {
      int w, h;

      pango_layout_set_text (layout, y_title, -1);
      pango_layout_get_pixel_size (layout, &w, &h);
      cairo_save (cr);
      cairo_translate (cr, 2, (top + bottom) / 2.0 + w / 2.0);
      cairo_rotate (cr, -G_PI / 2.0);
      cairo_move_to (cr, 0, 0);
      pango_cairo_show_layout (cr, layout);
      cairo_restore (cr);
    }
  cairo_restore (cr);
}

void
efflux_plot_draw_ranges (cairo_t          *cr,
                         GPtrArray        *ranges,
                         const EffluxAxis *along,
                         const EffluxAxis *across,
                         gboolean          horizontal)
{
  double a0 = MIN (across->s0, across->s1), a1 = MAX (across->s0, across->s1);

  cairo_save (cr);
  cairo_set_line_width (cr, 2.0);
  for (guint i = 0; i < ranges->len; i++)
    {
      EffluxPlotRange *r = g_ptr_array_index (ranges, i);
      double s1 = efflux_axis_to_screen (along, r->v1), s2 = efflux_axis_to_screen (along, r->v2);
      double lo = MIN (s1, s2), hi = MAX (s1, s2);
      double red = r->kind == 1 ? 0.9 : 0.15, green = r->kind == 1 ? 0.2 : 0.4;
      double blue = r->kind == 1 ? 0.15 : 0.95;

      cairo_set_source_rgba (cr, red, green, blue, 0.18);
      if (horizontal)
        cairo_rectangle (cr, a0, lo, a1 - a0, hi - lo);
      else
        cairo_rectangle (cr, lo, a0, hi - lo, a1 - a0);
      cairo_fill (cr);
      cairo_set_source_rgba (cr, red, green, blue, 0.9);
      for (int e = 0; e < 2; e++)
        {
          double s = e == 0 ? lo : hi;

          if (horizontal)
            {
              cairo_move_to (cr, a0, s);
              cairo_line_to (cr, a1, s);
            }
          else
            {
              cairo_move_to (cr, s, a0);
              cairo_line_to (cr, s, a1);
            }
        }
      cairo_stroke (cr);
    }
  cairo_restore (cr);
}
