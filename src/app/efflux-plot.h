/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <cairo.h>
#include <glib.h>
#include <pango/pangocairo.h>

G_BEGIN_DECLS

/* Axis layout for the plots of the Cut and Spectrum views, and number formatting for the Ledger.
 * No GTK here.
 *
 * Ticks: "nice" steps 1, 2 or 5 x 10^n, the smallest that gives at most max_ticks ticks over the
 * range (common practice in plotting; the 1-2-5 series of IEC 60063's E3 preferred numbers, from
 * memory). Ticks are the multiples of the step inside [lo, hi]. */

typedef struct
{
  double  step;
  int     decimals;  /* digits after the decimal point that show the step exactly (0 for >= 1) */
  gsize   n;
  double *values;
} EffluxTicks;

/* Ticks over [lo, hi] (either order; lo == hi gives one tick). NULL unless both are finite and
 * max_ticks >= 2. */
EffluxTicks *efflux_ticks_new   (double lo,
                                 double hi,
                                 guint  max_ticks);
void         efflux_ticks_free  (EffluxTicks *ticks);
/* A tick label with the ticks' decimals; "-0" is written "0" and the minus sign is U+2212. */
char        *efflux_ticks_label (const EffluxTicks *ticks,
                                 double             value);

/* A linear map between data and screen coordinates: screen = s0 + (value - d0) x scale. */
typedef struct
{
  double d0, d1;    /* data range */
  double s0, s1;    /* screen range (s1 < s0 for an axis that grows upward) */
} EffluxAxis;

double       efflux_axis_to_screen (const EffluxAxis *axis,
                                    double            value);
double       efflux_axis_to_data   (const EffluxAxis *axis,
                                    double            screen);

/* A value with its uncertainty, rounded to the uncertainty: the error to two significant digits
 * when its leading digit is 1 or 2, else one (common practice, e.g. the Particle Data Group's
 * rounding rule, from memory), and the value to the same decimal place. Large and small numbers
 * share a power of ten: "(3.21 ± 0.04)e44". Without a usable error (NaN, 0, infinite) the value is
 * given to 3 significant digits. NaN values give "". Minus signs are U+2212. */
char        *efflux_format_uncertain (double value,
                                      double error);
/* A range lo – hi (e.g. a Monte Carlo spread) rounded like a value whose error is half its width;
 * "" when either end is NaN. */
char        *efflux_format_spread    (double lo,
                                      double hi);


/* Velocity ranges of lobes as shown (shaded, with draggable edges) by the Cut and Spectrum views. */
typedef struct
{
  char   *name;
  int     kind;     /* EffluxLobeKind: 0 blue, 1 red */
  double  v1, v2;   /* v1 <= v2, km/s */
} EffluxPlotRange;

/* A GPtrArray of EffluxPlotRange * (owning). */
GPtrArray       *efflux_plot_ranges_new    (void);
/* Add or replace the range called name (v1, v2 in either order). FALSE when it was there
 * already with the same kind and velocities (nothing to redraw). */
gboolean         efflux_plot_ranges_set    (GPtrArray  *ranges,
                                            const char *name,
                                            int         kind,
                                            double      v1,
                                            double      v2);
/* a == b, or both NaN: a setter given the value it has can skip the redraw */
gboolean         efflux_plot_same_value    (double      a,
                                            double      b);
gboolean         efflux_plot_ranges_remove (GPtrArray  *ranges,
                                            const char *name);
EffluxPlotRange *efflux_plot_ranges_find   (GPtrArray  *ranges,
                                            const char *name);
/* The range edge nearest to v within tol (data units): its index, *edge 0 for v1, 1 for v2;
 * -1 when none is that close. */
int              efflux_plot_ranges_hit    (GPtrArray  *ranges,
                                            double      v,
                                            double      tol,
                                            int        *edge);
/* Move one edge of a range to v; when it passes the other edge the two swap (*edge follows the
 * moving one), so v1 <= v2 always holds. */
void             efflux_plot_range_move_edge (EffluxPlotRange *range,
                                              int             *edge,
                                              double           v);

/* The frame of a plot: box, grid lines and ticks at nice steps, tick labels, axis titles.
 * x maps data to screen x (s0 = left, s1 = right), y to screen y (s0 = bottom, s1 = top).
 * fg is the text colour (RGBA in [0, 1]). layout is a scratch layout of the widget's context. */
void             efflux_plot_draw_frame    (cairo_t          *cr,
                                            PangoLayout      *layout,
                                            const EffluxAxis *x,
                                            const EffluxAxis *y,
                                            const char       *x_title,
                                            const char       *y_title,
                                            const double      fg[4]);
/* Shade the ranges across the plot: vertical bands (horizontal = FALSE, along x) or horizontal
 * bands (along y), blue or red by kind, edges drawn as lines. */
void             efflux_plot_draw_ranges   (cairo_t          *cr,
                                            GPtrArray        *ranges,
                                            const EffluxAxis *along,
                                            const EffluxAxis *across,
                                            gboolean          horizontal);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxTicks, efflux_ticks_free)

G_END_DECLS
