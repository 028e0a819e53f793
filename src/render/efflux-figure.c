/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-figure"

/* Publication figures and the per-source report with Cairo and Pango (efflux-figure.h).
 * Layout is in points; text is 7 pt DejaVu Sans (journals ask for 6 to 8 pt at the printed size:
 * common practice). Every number drawn comes from src/core. */

#include "config.h"

#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include <cairo-pdf.h>
#include <fontconfig/fontconfig.h>
#include <cairo-svg.h>
#include <pango/pangocairo.h>

#include "efflux-contour.h"
#include "efflux-cube.h"
#include "efflux-figure.h"
#include "efflux-io.h"
#include "efflux-lobe.h"
#include "efflux-maps.h"
#include "efflux-mvfit.h"
#include "efflux-pv.h"
#include "efflux-review.h"

#define FONT_FAMILY "DejaVu Sans"
#define FONT_PT     7.0
#define SMALL_PT    6.0
#define LINE_PT     0.6
#define TICK_PT     3.0
#define MM_PT       (72.0 / 25.4)
#define A4_W_PT     (210.0 * MM_PT)
#define A4_H_PT     (297.0 * MM_PT)
#define MAX_CONTOURS 8

struct _EffluxFigure
{
  const EffluxDossier *dossier;
  GHashTable          *cubes;      /* id -> EffluxCube * (owned) */
  EffluxMeasureResult *measure;    /* lazily */
  GString             *caption;

  gboolean             sky_valid;
  double               sky_x0, sky_y0, sky_scale, sky_lo, sky_hi;
};

static const double blue_rgb[3] = { 0.10, 0.32, 0.85 };
static const double red_rgb[3] = { 0.85, 0.12, 0.10 };

static const char *view_names[EFFLUX_N_FIGURE_VIEWS] = {
  "sky", "cut", "spectrum", "mass-velocity", "channels",
};

void
efflux_figure_options_init (EffluxFigureOptions *o)
{
  memset (o, 0, sizeof *o);
  o->view = EFFLUX_FIGURE_SKY;
  o->width_mm = 120.0;
  o->height_mm = 0.0;
  o->dpi = 300.0;
  o->grid_nx = 3;
  o->grid_ny = 3;
  o->colormap = EFFLUX_COLORMAP_CUBEHELIX;
  o->stretch = EFFLUX_STRETCH_LINEAR;
  o->coords = EFFLUX_SKYGRID_SEXAGESIMAL;
  o->limits_percent = 99.5;
}

/* The colour limits of a view: the central limits_percent of the finite values, or the fixed
 * limits when the options give them; FALSE when data has no finite value. */
static gboolean
colour_limits (const EffluxFigureOptions *o,
               const float               *data,
               gsize                      n,
               double                    *lo,
               double                    *hi)
{
  if (!efflux_percentile_limits (data, n, o->limits_percent, lo, hi))
    return FALSE;
  if (isfinite (o->limit_lo) && isfinite (o->limit_hi) && o->limit_lo < o->limit_hi)
    {
      *lo = o->limit_lo;
      *hi = o->limit_hi;
    }
  return TRUE;
}

const char *
efflux_figure_view_to_string (EffluxFigureView view)
{
  g_return_val_if_fail (view < EFFLUX_N_FIGURE_VIEWS, NULL);
  return view_names[view];
}

gboolean
efflux_figure_view_from_string (const char       *name,
                                EffluxFigureView *view)
{
  for (int i = 0; i < EFFLUX_N_FIGURE_VIEWS; i++)
    if (name != NULL && strcmp (name, view_names[i]) == 0)
      {
        *view = i;
        return TRUE;
      }
  return FALSE;
}

gboolean
efflux_figure_format_from_path (const char         *path,
                                EffluxFigureFormat *format)
{
  const char *dot = path != NULL ? strrchr (path, '.') : NULL;

  if (dot == NULL || strchr (dot, '/') != NULL)
    return FALSE;
  if (g_ascii_strcasecmp (dot, ".png") == 0)
    *format = EFFLUX_FIGURE_FORMAT_PNG;
  else if (g_ascii_strcasecmp (dot, ".pdf") == 0)
    *format = EFFLUX_FIGURE_FORMAT_PDF;
  else if (g_ascii_strcasecmp (dot, ".svg") == 0)
    *format = EFFLUX_FIGURE_FORMAT_SVG;
  else
    return FALSE;
  return TRUE;
}

/* ---- loading ---------------------------------------------------------------------------- */

static gboolean
cube_needed (const EffluxDossier     *d,
             const EffluxDossierCube *dc)
{
  if (dc->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE && d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE)
    return TRUE;
  for (guint j = 0; j < d->lobes->len; j++)
    if (strcmp (((EffluxDossierLobe *) g_ptr_array_index (d->lobes, j))->cube_id, dc->id) == 0)
      return TRUE;
  for (guint j = 0; j < d->cuts->len; j++)
    if (strcmp (((EffluxDossierCut *) g_ptr_array_index (d->cuts, j))->cube_id, dc->id) == 0)
      return TRUE;
  return FALSE;
}

/* Progress of one cube's reading as a share of all the cubes read. */
typedef struct
{
  EffluxProgressFunc progress;
  gpointer           data;
  guint              done, total;
} LoadProgress;

static void
load_progress (double   fraction,
               gpointer user_data)
{
  LoadProgress *lp = user_data;

  lp->progress ((lp->done + CLAMP (fraction, 0.0, 1.0)) / MAX (lp->total, 1), lp->data);
}

/* Whether the figure reads the cube dc, after n_read others. */
static gboolean
cube_read (const EffluxDossier     *dossier,
           const EffluxDossierCube *dc,
           guint                    n_read)
{
  /* With no lobe and no cut, the first tracer is the sky map's cube. */
  return cube_needed (dossier, dc)
         || (n_read == 0 && dossier->lobes->len == 0 && dossier->cuts->len == 0
             && dc->role == EFFLUX_CUBE_ROLE_TRACER);
}

EffluxFigure *
efflux_figure_new (const EffluxDossier  *dossier,
                   GError              **error)
{
  return efflux_figure_new_full (dossier, NULL, NULL, NULL, error);
}

EffluxFigure *
efflux_figure_new_full (const EffluxDossier  *dossier,
                        GCancellable         *cancellable,
                        EffluxProgressFunc    progress,
                        gpointer              progress_data,
                        GError              **error)
{
  return efflux_figure_new_shared (dossier, efflux_cube_load, (GDestroyNotify) efflux_cube_free, cancellable,
                                   progress, progress_data, error);
}

EffluxFigure *
efflux_figure_new_shared (const EffluxDossier  *dossier,
                          EffluxFigureCubeLoad  load,
                          GDestroyNotify        release,
                          GCancellable         *cancellable,
                          EffluxProgressFunc    progress,
                          gpointer              progress_data,
                          GError              **error)
{
  g_autoptr (GHashTable) cubes = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, release);
  LoadProgress lp = { progress, progress_data, 0, 0 };
  EffluxFigure *figure;

  g_return_val_if_fail (dossier != NULL && load != NULL && release != NULL, NULL);
  for (guint i = 0, n = 0; i < dossier->cubes->len; i++)
    if (cube_read (dossier, g_ptr_array_index (dossier->cubes, i), n))
      n = ++lp.total;
  for (guint i = 0; i < dossier->cubes->len; i++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (dossier->cubes, i);
      EffluxCubeLoadOptions options = { 0 };
      EffluxCube *cube;

      if (!cube_read (dossier, dc, g_hash_table_size (cubes)))
        continue;
      options.no_noise = isfinite (dc->rms_k);
      cube = load (dc->abs_path, &options, cancellable, progress != NULL ? load_progress : NULL, &lp, error);
      if (cube == NULL)
        return NULL;
      g_hash_table_insert (cubes, g_strdup (dc->id), cube);
      /* a shared cube may have been read without the noise this dossier needs (its rms all 0,
       * as efflux_cube_load leaves it with no_noise) */
      if (!isfinite (dc->rms_k))
        {
          gboolean any = FALSE;

          for (gsize k = 0; cube->rms != NULL && k < cube->nchan && !any; k++)
            any = cube->rms[k] > 0.0f;
          if (!any)
            efflux_cube_estimate_noise (cube);
        }
      lp.done++;
      if (progress != NULL)
        progress ((double) lp.done / lp.total, progress_data);
    }
  if (g_hash_table_size (cubes) == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: no [Cube] with role=tracer, lobe or cut to draw", dossier->path);
      return NULL;
    }
  figure = g_new0 (EffluxFigure, 1);
  figure->dossier = dossier;
  figure->cubes = g_steal_pointer (&cubes);
  figure->caption = g_string_new ("");
  return figure;
}

void
efflux_figure_free (EffluxFigure *figure)
{
  if (figure == NULL)
    return;
  g_clear_pointer (&figure->measure, efflux_measure_result_free);
  g_hash_table_unref (figure->cubes);
  g_string_free (figure->caption, TRUE);
  g_free (figure);
}

const char *
efflux_figure_caption (const EffluxFigure *figure)
{
  return figure->caption->str;
}

gboolean
efflux_figure_sky_geometry (const EffluxFigure *figure,
                            double             *x0,
                            double             *y0,
                            double             *scale,
                            double             *lo,
                            double             *hi)
{
  if (!figure->sky_valid)
    return FALSE;
  *x0 = figure->sky_x0;
  *y0 = figure->sky_y0;
  *scale = figure->sky_scale;
  *lo = figure->sky_lo;
  *hi = figure->sky_hi;
  return TRUE;
}

static const EffluxCube *
figure_cube (const EffluxFigure *figure,
             const char         *id)
{
  return id != NULL ? g_hash_table_lookup (figure->cubes, id) : NULL;
}

/* The cube of the sky, spectrum and channel views: the chosen lobe's, else the first lobe's, else
 * the first loaded tracer. */
static const EffluxCube *
main_cube (const EffluxFigure  *figure,
           const char          *lobe_name,
           const char         **id_out,
           GError             **error)
{
  const EffluxDossier *d = figure->dossier;

  if (lobe_name != NULL)
    {
      const EffluxDossierLobe *lobe = efflux_dossier_find_lobe (d, lobe_name);

      if (lobe == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: --lobe %s: the dossier has no [Lobe %s]", d->path, lobe_name, lobe_name);
          return NULL;
        }
      *id_out = lobe->cube_id;
      return figure_cube (figure, lobe->cube_id);
    }
  if (d->lobes->len > 0)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, 0);

      *id_out = lobe->cube_id;
      return figure_cube (figure, lobe->cube_id);
    }
  for (guint i = 0; i < d->cubes->len; i++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (d->cubes, i);
      const EffluxCube *cube = figure_cube (figure, dc->id);

      if (cube != NULL)
        {
          *id_out = dc->id;
          return cube;
        }
    }
  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: no cube to draw", d->path);
  return NULL;
}

/* The per-channel noise of a cube in its own scale: the dossier's rms-k, else the median of the
 * estimated channel rms. */
static double
cube_rms (const EffluxFigure *figure,
          const char         *id,
          const EffluxCube   *cube)
{
  const EffluxDossierCube *dc = efflux_dossier_find_cube (figure->dossier, id);
  g_autofree float *copy = NULL;
  double median = NAN, p = 50.0;

  if (dc != NULL && isfinite (dc->rms_k) && dc->rms_k > 0.0)
    return dc->rms_k;
  if (cube->rms == NULL)
    return NAN;
  if (!efflux_percentiles (cube->rms, cube->nchan, &p, 1, &median))
    return NAN;
  return median;
}

static gboolean
lobe_selected (const EffluxFigureOptions *o,
               const EffluxDossierLobe   *lobe)
{
  return o->lobe == NULL || strcmp (o->lobe, lobe->name) == 0;
}

static const double *
lobe_rgb (const EffluxDossierLobe *lobe)
{
  return lobe->kind == EFFLUX_LOBE_BLUE ? blue_rgb : red_rgb;
}

static EffluxMeasureResult *
figure_measure (EffluxFigure  *figure,
                GError       **error)
{
  g_autoptr (EffluxMeasurePrep) prep = NULL;

  if (figure->measure != NULL)
    return figure->measure;
  prep = efflux_measure_prepare (figure->dossier, figure->cubes, NULL, error);
  if (prep == NULL)
    return NULL;
  figure->measure = efflux_measure_finish (prep, figure->dossier, error);
  return figure->measure;
}

/* ---- text ------------------------------------------------------------------------------- */

static PangoLayout *
make_layout (cairo_t    *cr,
             double      size_pt,
             const char *markup)
{
  PangoLayout *layout = pango_cairo_create_layout (cr);
  PangoFontDescription *desc = pango_font_description_from_string (FONT_FAMILY);
  cairo_font_options_t *fo = cairo_font_options_create ();

  /* Unhinted metrics: the same layout on every surface. */
  cairo_font_options_set_hint_metrics (fo, CAIRO_HINT_METRICS_OFF);
  cairo_font_options_set_hint_style (fo, CAIRO_HINT_STYLE_NONE);
  pango_cairo_context_set_font_options (pango_layout_get_context (layout), fo);
  cairo_font_options_destroy (fo);
  /* 72 dpi: one point is one unit of the page (points throughout); a plain (not absolute) size
   * keeps Pango's scaling of <sup> and <sub> right. */
  pango_cairo_context_set_resolution (pango_layout_get_context (layout), 72.0);
  pango_font_description_set_size (desc, (int) lround (size_pt * PANGO_SCALE));
  pango_layout_set_font_description (layout, desc);
  pango_font_description_free (desc);
  /* <sup> and <sub> as explicit spans: Pango 1.50's own scaling of them comes out larger than
   * the text around them on these layouts. */
  {
    int small = (int) lround (0.7 * size_pt * PANGO_SCALE);
    g_autofree char *sup = g_strdup_printf ("<span size=\"%d\" rise=\"%d\">", small,
                                            (int) lround (0.38 * size_pt * PANGO_SCALE));
    g_autofree char *sub = g_strdup_printf ("<span size=\"%d\" rise=\"%d\">", small,
                                            (int) lround (-0.18 * size_pt * PANGO_SCALE));
    GString *m = g_string_new (markup);

    g_string_replace (m, "<sup>", sup, 0);
    g_string_replace (m, "<sub>", sub, 0);
    g_string_replace (m, "</sup>", "</span>", 0);
    g_string_replace (m, "</sub>", "</span>", 0);
    pango_layout_set_markup (layout, m->str, -1);
    g_string_free (m, TRUE);
  }
  return layout;
}

static void
text_size (cairo_t    *cr,
           double      size_pt,
           const char *markup,
           double     *w,
           double     *h)
{
  g_autoptr (PangoLayout) layout = make_layout (cr, size_pt, markup);
  PangoRectangle logical;

  pango_layout_get_extents (layout, NULL, &logical);
  *w = (double) logical.width / PANGO_SCALE;
  *h = (double) logical.height / PANGO_SCALE;
}

/* Markup at (x, y); (ax, ay) in [0, 1] is the point of the text's box placed there; angle in
 * radians (counter-clockwise on the page). */
static void
text_at (cairo_t    *cr,
         double      x,
         double      y,
         double      ax,
         double      ay,
         double      size_pt,
         double      angle,
         const char *markup)
{
  g_autoptr (PangoLayout) layout = make_layout (cr, size_pt, markup);
  PangoRectangle logical;

  pango_layout_get_extents (layout, NULL, &logical);
  cairo_save (cr);
  cairo_translate (cr, x, y);
  cairo_rotate (cr, -angle);
  cairo_move_to (cr, -ax * logical.width / PANGO_SCALE - (double) logical.x / PANGO_SCALE,
                 -ay * logical.height / PANGO_SCALE - (double) logical.y / PANGO_SCALE);
  pango_cairo_update_layout (cr, layout);
  pango_cairo_show_layout (cr, layout);
  cairo_restore (cr);
}

/* A wrapped paragraph width wide; returns its height. Draws only when draw is TRUE. */
static double
paragraph (cairo_t    *cr,
           double      x,
           double      y,
           double      width,
           double      size_pt,
           const char *markup,
           gboolean    draw)
{
  g_autoptr (PangoLayout) layout = make_layout (cr, size_pt, markup);
  PangoRectangle logical;

  pango_layout_set_width (layout, (int) (width * PANGO_SCALE));
  pango_layout_set_wrap (layout, PANGO_WRAP_WORD_CHAR);
  pango_layout_get_extents (layout, NULL, &logical);
  if (draw)
    {
      cairo_move_to (cr, x, y);
      pango_cairo_update_layout (cr, layout);
      pango_cairo_show_layout (cr, layout);
    }
  return (double) logical.height / PANGO_SCALE;
}

/* "−" (U+2212) for negative numbers, as typeset figures have it. */
static char *
format_num (double      value,
            const char *fmt)
{
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  if (fabs (value) < 1e-12)
    value = 0.0;
  g_ascii_formatd (buf, sizeof buf, fmt, value);
  if (buf[0] == '-')
    return g_strconcat ("\xe2\x88\x92", buf + 1, NULL);
  return g_strdup (buf);
}

static char *
escape (const char *text)
{
  return g_markup_escape_text (text != NULL ? text : "", -1);
}

/* ---- axes ------------------------------------------------------------------------------- */

static double
nice_step (double span,
           int    max_ticks)
{
  double raw = span / MAX (max_ticks, 1), mag, f;

  if (!(raw > 0.0) || !isfinite (raw))
    return 1.0;
  mag = pow (10.0, floor (log10 (raw)));
  f = raw / mag;
  if (f <= 1.0)
    return mag;
  if (f <= 2.0)
    return 2.0 * mag;
  if (f <= 5.0)
    return 5.0 * mag;
  return 10.0 * mag;
}

static const char *
step_format (double step)
{
  if (step >= 1.0 - 1e-9)
    return "%.0f";
  if (step >= 0.1 - 1e-12)
    return "%.1f";
  if (step >= 0.01 - 1e-13)
    return "%.2f";
  return "%.3g";
}

typedef struct
{
  double x, y, w, h;     /* the plot box on the page */
  double u0, u1, v0, v1; /* data limits along x and y */
  gboolean logx, logy;
} Plot;

static double
plot_x (const Plot *p,
        double      u)
{
  if (p->logx)
    return p->x + (log10 (u) - log10 (p->u0)) / (log10 (p->u1) - log10 (p->u0)) * p->w;
  return p->x + (u - p->u0) / (p->u1 - p->u0) * p->w;
}

static double
plot_y (const Plot *p,
        double      v)
{
  if (p->logy)
    return p->y + p->h - (log10 (v) - log10 (p->v0)) / (log10 (p->v1) - log10 (p->v0)) * p->h;
  return p->y + p->h - (v - p->v0) / (p->v1 - p->v0) * p->h;
}

static void
set_ink (cairo_t *cr)
{
  cairo_set_source_rgb (cr, 0, 0, 0);
  cairo_set_line_width (cr, LINE_PT);
  cairo_set_dash (cr, NULL, 0, 0);
}

/* Ticks and labels of one axis (bottom: x; left: y), inward ticks on both sides, and the title. */
static void
draw_linear_axis (cairo_t    *cr,
                  const Plot *p,
                  gboolean    x_axis,
                  const char *title,
                  gboolean    labels)
{
  double lo = x_axis ? p->u0 : p->v0, hi = x_axis ? p->u1 : p->v1;
  double a = MIN (lo, hi), b = MAX (lo, hi);
  double step = nice_step (b - a, x_axis ? 5 : 5);
  const char *fmt = step_format (step);
  double max_w = 0.0;

  set_ink (cr);
  for (double t = ceil (a / step - 1e-9) * step; t <= b + 1e-9 * step; t += step)
    {
      double pos = x_axis ? plot_x (p, t) : plot_y (p, t);
      g_autofree char *label = format_num (t, fmt);
      double w, h;

      if (x_axis)
        {
          cairo_move_to (cr, pos, p->y + p->h);
          cairo_rel_line_to (cr, 0, -TICK_PT);
          cairo_move_to (cr, pos, p->y);
          cairo_rel_line_to (cr, 0, TICK_PT);
          cairo_stroke (cr);
          if (labels)
            text_at (cr, pos, p->y + p->h + 2.0, 0.5, 0.0, FONT_PT, 0, label);
        }
      else
        {
          cairo_move_to (cr, p->x, pos);
          cairo_rel_line_to (cr, TICK_PT, 0);
          cairo_move_to (cr, p->x + p->w, pos);
          cairo_rel_line_to (cr, -TICK_PT, 0);
          cairo_stroke (cr);
          if (labels)
            text_at (cr, p->x - 2.0, pos, 1.0, 0.5, FONT_PT, 0, label);
        }
      text_size (cr, FONT_PT, label, &w, &h);
      max_w = MAX (max_w, w);
    }
  if (title != NULL && labels)
    {
      if (x_axis)
        text_at (cr, p->x + p->w / 2, p->y + p->h + 2.0 + FONT_PT * 1.3, 0.5, 0.0, FONT_PT, 0, title);
      else
        text_at (cr, p->x - 4.0 - max_w, p->y + p->h / 2, 0.5, 1.0, FONT_PT, G_PI / 2, title);
    }
}

static void
draw_log_axis (cairo_t    *cr,
               const Plot *p,
               gboolean    x_axis,
               const char *title)
{
  double lo = x_axis ? p->u0 : p->v0, hi = x_axis ? p->u1 : p->v1;
  int e0 = (int) floor (log10 (lo)), e1 = (int) ceil (log10 (hi));
  double max_w = 0.0;

  set_ink (cr);
  for (int e = e0; e <= e1; e++)
    for (int m = 1; m <= 9; m++)
      {
        double t = m * pow (10.0, e), pos, len = m == 1 ? TICK_PT : TICK_PT * 0.55;

        if (t < lo * (1 - 1e-9) || t > hi * (1 + 1e-9))
          continue;
        pos = x_axis ? plot_x (p, t) : plot_y (p, t);
        if (x_axis)
          {
            cairo_move_to (cr, pos, p->y + p->h);
            cairo_rel_line_to (cr, 0, -len);
            cairo_move_to (cr, pos, p->y);
            cairo_rel_line_to (cr, 0, len);
          }
        else
          {
            cairo_move_to (cr, p->x, pos);
            cairo_rel_line_to (cr, len, 0);
            cairo_move_to (cr, p->x + p->w, pos);
            cairo_rel_line_to (cr, -len, 0);
          }
        cairo_stroke (cr);
        /* Over less than about a decade and a half, 2 and 5 are labelled too. */
        if (m == 1 || ((m == 2 || m == 5) && log10 (hi / lo) < 1.5))
          {
            g_autofree char *label = NULL;
            double w, h;

            if (m != 1)
              label = format_num (t, e >= 0 ? "%.0f" : "%.3g");
            else if (e == 0)
              label = g_strdup ("1");
            else if (e == 1)
              label = g_strdup ("10");
            else
              label = g_strdup_printf ("10<sup>%s%d</sup>", e < 0 ? "\xe2\x88\x92" : "", ABS (e));
            if (x_axis)
              text_at (cr, pos, p->y + p->h + 2.0, 0.5, 0.0, FONT_PT, 0, label);
            else
              text_at (cr, p->x - 2.0, pos, 1.0, 0.5, FONT_PT, 0, label);
            text_size (cr, FONT_PT, label, &w, &h);
            max_w = MAX (max_w, w);
          }
      }
  if (x_axis)
    text_at (cr, p->x + p->w / 2, p->y + p->h + 2.0 + FONT_PT * 1.5, 0.5, 0.0, FONT_PT, 0, title);
  else
    text_at (cr, p->x - 4.0 - max_w, p->y + p->h / 2, 0.5, 1.0, FONT_PT, G_PI / 2, title);
}

static void
frame (cairo_t    *cr,
       const Plot *p)
{
  set_ink (cr);
  cairo_rectangle (cr, p->x, p->y, p->w, p->h);
  cairo_stroke (cr);
}

/* ---- images ----------------------------------------------------------------------------- */

/* An ARGB32 surface of a float image through the colour map: surface row r holds image row
 * flip ? ny - 1 - r : r. NaN is transparent. */
static cairo_surface_t *
image_surface (const float               *values,
               gsize                      nx,
               gsize                      ny,
               gboolean                   flip,
               const EffluxFigureOptions *o,
               double                     lo,
               double                     hi)
{
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  g_autofree guint8 *rgba = g_new (guint8, nx * 4);
  cairo_surface_t *surface = cairo_image_surface_create (CAIRO_FORMAT_ARGB32, (int) nx, (int) ny);
  int stride = cairo_image_surface_get_stride (surface);
  unsigned char *pixels;

  efflux_colormap_fill (o->colormap, lut);
  cairo_surface_flush (surface);
  pixels = cairo_image_surface_get_data (surface);
  for (gsize r = 0; r < ny; r++)
    {
      gsize row = flip ? ny - 1 - r : r;
      guint32 *out = (guint32 *) (pixels + r * stride);

      efflux_colormap_apply (lut, o->stretch, lo, hi, values + row * nx, nx, rgba);
      for (gsize i = 0; i < nx; i++)
        {
          const guint8 *c = rgba + 4 * i;

          /* Premultiplied; alpha is 0 or 255 here. */
          out[i] = c[3] == 0 ? 0 : (0xffu << 24) | ((guint32) c[0] << 16) | ((guint32) c[1] << 8) | c[2];
        }
    }
  cairo_surface_mark_dirty (surface);
  return surface;
}

/* The image surface drawn over the box (x, y, w, h), one image pixel to one cell, no smoothing. */
static void
paint_image (cairo_t         *cr,
             cairo_surface_t *surface,
             double           x,
             double           y,
             double           w,
             double           h)
{
  double sx = w / cairo_image_surface_get_width (surface);
  double sy = h / cairo_image_surface_get_height (surface);

  cairo_save (cr);
  cairo_rectangle (cr, x, y, w, h);
  cairo_clip (cr);
  cairo_translate (cr, x, y);
  cairo_scale (cr, sx, sy);
  cairo_set_source_surface (cr, surface, 0, 0);
  cairo_pattern_set_filter (cairo_get_source (cr), CAIRO_FILTER_NEAREST);
  cairo_paint (cr);
  cairo_restore (cr);
}

/* A vertical colour bar (vector: one filled band per colour-map entry) with ticks in data units. */
static void
colour_bar (cairo_t                   *cr,
            double                     x,
            double                     y,
            double                     w,
            double                     h,
            const EffluxFigureOptions *o,
            double                     lo,
            double                     hi,
            const char                *unit)
{
  guint8 lut[EFFLUX_COLORMAP_SIZE * 4];
  double step, band = h / EFFLUX_COLORMAP_SIZE;
  const char *fmt;

  efflux_colormap_fill (o->colormap, lut);
  for (int i = 0; i < EFFLUX_COLORMAP_SIZE; i++)
    {
      cairo_set_source_rgb (cr, lut[4 * i] / 255.0, lut[4 * i + 1] / 255.0, lut[4 * i + 2] / 255.0);
      /* A hair of overlap so that no seam shows between bands. */
      cairo_rectangle (cr, x, y + h - (i + 1) * band, w, band + (i > 0 ? 0.05 : 0.0));
      cairo_fill (cr);
    }
  set_ink (cr);
  cairo_rectangle (cr, x, y, w, h);
  cairo_stroke (cr);
  if (!(hi > lo))
    return;
  step = nice_step (hi - lo, 5);
  fmt = step_format (step);
  for (double t = ceil (lo / step - 1e-9) * step; t <= hi + 1e-9 * step; t += step)
    {
      double f = efflux_stretch_apply (o->stretch, t, lo, hi);
      double ty = y + h - f * h;
      g_autofree char *label = format_num (t, fmt);

      cairo_move_to (cr, x + w, ty);
      cairo_rel_line_to (cr, -w * 0.3, 0);
      cairo_stroke (cr);
      text_at (cr, x + w + 2.0, ty, 0.0, 0.5, FONT_PT, 0, label);
    }
  text_at (cr, x + w + 2.0 + 4.5 * FONT_PT, y + h / 2, 0.5, 0.0, FONT_PT, -G_PI / 2, unit);
}

/* Contour levels 3, 6, 12, ... x sigma below the image's maximum (at most MAX_CONTOURS). */
static guint
sigma_levels (const float *values,
              gsize        n,
              double       sigma,
              double      *levels,
              double      *multiples)
{
  double peak = -INFINITY;
  guint count = 0;

  for (gsize i = 0; i < n; i++)
    if (isfinite (values[i]) && values[i] > peak)
      peak = values[i];
  if (!(sigma > 0.0) || !isfinite (sigma))
    return 0;
  for (double m = 3.0; count < MAX_CONTOURS && m * sigma <= peak; m *= 2.0)
    {
      multiples[count] = m;
      levels[count++] = m * sigma;
    }
  return count;
}

static char *
levels_text (const double *multiples,
             guint         n)
{
  GString *s = g_string_new ("");

  for (guint i = 0; i < n; i++)
    g_string_append_printf (s, "%s%g", i > 0 ? ", " : "", multiples[i]);
  return g_string_free (s, FALSE);
}

/* Contour polylines of an image whose grid point (i, j) lies at (ox + (i + 0.5) sx, oy + (ny -
 * j - 0.5) sy) when flip, else (ox + (i + 0.5) sx, oy + (j + 0.5) sy). */
static void
draw_contours (cairo_t      *cr,
               const float  *values,
               gsize         nx,
               gsize         ny,
               const double *levels,
               guint         n_levels,
               double        ox,
               double        oy,
               double        sx,
               double        sy,
               gboolean      flip)
{
  g_autoptr (GPtrArray) lines = NULL;

  if (n_levels == 0)
    return;
  lines = efflux_contour_trace_levels (values, nx, ny, levels, n_levels);
  /* One flat array of polylines, each carrying its level. */
  for (guint i = 0; i < lines->len; i++)
    {
      const EffluxPolyline *pl = g_ptr_array_index (lines, i);

      for (gsize k = 0; k < pl->n; k++)
        {
          double px = ox + (pl->xy[2 * k] + 0.5) * sx;
          double py = flip ? oy + (ny - pl->xy[2 * k + 1] - 0.5) * sy
                           : oy + (pl->xy[2 * k + 1] + 0.5) * sy;

          if (k == 0)
            cairo_move_to (cr, px, py);
          else
            cairo_line_to (cr, px, py);
        }
      if (pl->closed)
        cairo_close_path (cr);
      cairo_stroke (cr);
    }
}

/* ---- sky -------------------------------------------------------------------------------- */

typedef struct
{
  const EffluxCube *cube;
  double x0, y0, s;     /* map box origin and points per pixel */
} SkyBox;

static gboolean
sky_point (const SkyBox *b,
           double        ra,
           double        dec,
           double       *x,
           double       *y)
{
  double px, py;

  if (!efflux_cube_icrs_to_pixel (b->cube, ra, dec, &px, &py))
    return FALSE;
  *x = b->x0 + (px + 0.5) * b->s;
  *y = b->y0 + (b->cube->ny - py - 0.5) * b->s;
  return TRUE;
}

static void
sky_polygon (cairo_t      *cr,
             const SkyBox *b,
             const double *ra,
             const double *dec,
             gsize         n,
             gboolean      closed)
{
  gboolean started = FALSE;

  for (gsize i = 0; i < n; i++)
    {
      double x, y;

      if (!sky_point (b, ra[i], dec[i], &x, &y))
        continue;
      if (!started)
        cairo_move_to (cr, x, y);
      else
        cairo_line_to (cr, x, y);
      started = TRUE;
    }
  if (started && closed)
    cairo_close_path (cr);
}

/* Sexagesimal or offset ticks from the sky grid's edge crossings. */
static void
sky_axes (cairo_t                   *cr,
          const SkyBox              *b,
          const EffluxFigureOptions *o,
          const EffluxDossier       *d,
          gboolean                   labels)
{
  const EffluxCube *cube = b->cube;
  /* About one labelled line per 45 pt of axis (labels are up to ~40 pt wide at 6 pt). */
  int max_lines = CLAMP ((int) (cube->nx * b->s / 45.0), 2, 6);
  g_autoptr (EffluxSkyGrid) grid = efflux_skygrid_new (cube, -0.5, -0.5, cube->nx - 0.5,
                                                       cube->ny - 0.5, o->coords, d->ra_deg,
                                                       d->dec_deg, max_lines);
  double w = cube->nx * b->s, h = cube->ny * b->s, max_w = 0.0;

  set_ink (cr);
  cairo_rectangle (cr, b->x0, b->y0, w, h);
  cairo_stroke (cr);
  if (grid == NULL)
    return;
  for (guint i = 0; i < grid->lines->len; i++)
    {
      const EffluxSkyGridLine *line = g_ptr_array_index (grid->lines, i);
      double x, y;

      if (!line->has_anchor)
        continue;
      x = b->x0 + (line->anchor_x + 0.5) * b->s;
      y = b->y0 + (cube->ny - line->anchor_y - 0.5) * b->s;
      if (line->longitude)
        {
          cairo_move_to (cr, x, b->y0 + h);
          cairo_rel_line_to (cr, 0, -TICK_PT);
          cairo_move_to (cr, x, b->y0);
          cairo_rel_line_to (cr, 0, TICK_PT);
          cairo_stroke (cr);
          if (labels)
            {
              g_autofree char *esc = escape (line->label);

              text_at (cr, x, b->y0 + h + 2.0, 0.5, 0.0, SMALL_PT, 0, esc);
            }
        }
      else
        {
          cairo_move_to (cr, b->x0, y);
          cairo_rel_line_to (cr, TICK_PT, 0);
          cairo_move_to (cr, b->x0 + w, y);
          cairo_rel_line_to (cr, -TICK_PT, 0);
          cairo_stroke (cr);
          if (labels)
            {
              g_autofree char *esc = escape (line->label);
              double tw, th;

              text_at (cr, b->x0 - 2.0, y, 1.0, 0.5, SMALL_PT, 0, esc);
              text_size (cr, SMALL_PT, esc, &tw, &th);
              max_w = MAX (max_w, tw);
            }
        }
    }
  if (labels)
    {
      gboolean sexa = o->coords == EFFLUX_SKYGRID_SEXAGESIMAL;

      text_at (cr, b->x0 + w / 2, b->y0 + h + 2.0 + SMALL_PT * 1.4, 0.5, 0.0, FONT_PT, 0,
               sexa ? "Right ascension (ICRS)" : "East offset (″)");
      text_at (cr, b->x0 - 4.0 - MAX (max_w, 8 * SMALL_PT * 0.6), b->y0 + h / 2, 0.5, 1.0, FONT_PT,
               G_PI / 2, sexa ? "Declination (ICRS)" : "North offset (″)");
    }
}

/* Beam ellipse in the lower left corner and a scale bar in au in the lower right. */
static void
sky_beam_and_scale (cairo_t       *cr,
                    const SkyBox  *b,
                    double         distance_pc,
                    gboolean       scale_bar)
{
  const EffluxCube *cube = b->cube;
  double w = cube->nx * b->s, h = cube->ny * b->s;
  double pix = sqrt (cube->pixel_arcsec[0] * cube->pixel_arcsec[1]);

  if (cube->has_beam && cube->bmaj_arcsec > 0)
    {
      double a = cube->bmaj_arcsec / pix * b->s / 2, bb = cube->bmin_arcsec / pix * b->s / 2;
      double r = MAX (a, bb) + 3.0;

      cairo_save (cr);
      cairo_translate (cr, b->x0 + r + 1.0, b->y0 + h - r - 1.0);
      /* East is to the left, north up; PA runs from north through east. */
      cairo_rotate (cr, -cube->bpa_deg * G_PI / 180.0);
      cairo_scale (cr, bb, a);
      cairo_arc (cr, 0, 0, 1, 0, 2 * G_PI);
      cairo_restore (cr);
      cairo_set_source_rgb (cr, 0.85, 0.85, 0.85);
      cairo_fill_preserve (cr);
      set_ink (cr);
      cairo_stroke (cr);
    }
  if (scale_bar && distance_pc > 0 && pix > 0)
    {
      /* 1 arcsec at 1 pc is 1 au (the definition of the parsec). */
      double au_per_pt = pix * distance_pc / b->s;
      double target = 0.25 * w * au_per_pt, len_au = nice_step (target, 1), len;
      g_autofree char *label = NULL;

      if (len_au > 0.35 * w * au_per_pt)
        len_au /= 2;
      len = len_au / au_per_pt;
      label = g_strdup_printf ("%.0f au", len_au);
      cairo_set_source_rgb (cr, 1, 1, 1);
      cairo_set_line_width (cr, 2.6);
      cairo_move_to (cr, b->x0 + w - 4.0 - len, b->y0 + h - 5.0);
      cairo_rel_line_to (cr, len, 0);
      cairo_stroke (cr);
      set_ink (cr);
      cairo_set_line_width (cr, 1.2);
      cairo_move_to (cr, b->x0 + w - 4.0 - len, b->y0 + h - 5.0);
      cairo_rel_line_to (cr, len, 0);
      cairo_stroke (cr);
      text_at (cr, b->x0 + w - 4.0 - len / 2, b->y0 + h - 7.0, 0.5, 1.0, SMALL_PT, 0, label);
    }
}

static void
sky_source (cairo_t            *cr,
            const SkyBox       *b,
            const EffluxDossier *d)
{
  double x, y, r = 3.5;

  if (!sky_point (b, d->ra_deg, d->dec_deg, &x, &y))
    return;
  for (int pass = 0; pass < 2; pass++)
    {
      cairo_set_line_width (cr, pass == 0 ? 2.2 : 0.9);
      if (pass == 0)
        cairo_set_source_rgb (cr, 1, 1, 1);
      else
        cairo_set_source_rgb (cr, 0, 0, 0);
      cairo_move_to (cr, x - r, y);
      cairo_line_to (cr, x + r, y);
      cairo_move_to (cr, x, y - r);
      cairo_line_to (cr, x, y + r);
      cairo_stroke (cr);
    }
}

static void
sky_lobes_and_cuts (cairo_t                   *cr,
                    const SkyBox              *b,
                    const EffluxFigureOptions *o,
                    const EffluxDossier       *d,
                    const char                *cube_id,
                    gboolean                   names)
{
  static const double dash[] = { 3.0, 2.0 };

  cairo_save (cr);
  cairo_rectangle (cr, b->x0, b->y0, b->cube->nx * b->s, b->cube->ny * b->s);
  cairo_clip (cr);
  for (guint i = 0; i < d->lobes->len; i++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);
      const double *rgb = lobe_rgb (lobe);

      if (!lobe_selected (o, lobe) || strcmp (lobe->cube_id, cube_id) != 0)
        continue;
      sky_polygon (cr, b, lobe->ra_deg, lobe->dec_deg, lobe->n_vertices, TRUE);
      cairo_set_source_rgb (cr, rgb[0], rgb[1], rgb[2]);
      cairo_set_line_width (cr, 1.0);
      cairo_set_dash (cr, dash, 2, 0);
      cairo_stroke (cr);
      cairo_set_dash (cr, NULL, 0, 0);
      if (names)
        {
          double x, y;

          if (sky_point (b, lobe->ra_deg[0], lobe->dec_deg[0], &x, &y))
            {
              g_autofree char *esc = escape (lobe->name);
              g_autofree char *markup = g_strdup_printf ("<span foreground=\"#%02x%02x%02x\">%s</span>",
                                                         (int) (rgb[0] * 255), (int) (rgb[1] * 255),
                                                         (int) (rgb[2] * 255), esc);

              text_at (cr, x + 2.0, y, 0.0, 1.0, SMALL_PT, 0, markup);
            }
        }
    }
  for (guint i = 0; i < d->cuts->len && names; i++)
    {
      const EffluxDossierCut *cut = g_ptr_array_index (d->cuts, i);
      double x, y;

      if (o->cut != NULL && strcmp (o->cut, cut->name) != 0)
        continue;
      sky_polygon (cr, b, cut->ra_deg, cut->dec_deg, cut->n_vertices, FALSE);
      cairo_set_source_rgb (cr, 1, 1, 1);
      cairo_set_line_width (cr, 1.8);
      cairo_stroke_preserve (cr);
      set_ink (cr);
      cairo_set_line_width (cr, 0.7);
      cairo_stroke (cr);
      if (sky_point (b, cut->ra_deg[cut->n_vertices - 1], cut->dec_deg[cut->n_vertices - 1], &x, &y))
        {
          g_autofree char *esc = escape (cut->name);

          text_at (cr, x + 2.0, y + 1.0, 0.0, 0.0, SMALL_PT, 0, esc);
        }
    }
  cairo_restore (cr);
}

static double
draw_sky (EffluxFigure              *figure,
          const EffluxFigureOptions *o,
          cairo_t                   *cr,
          double                     width,
          double                     height,
          GError                   **error)
{
  const EffluxDossier *d = figure->dossier;
  const char *cube_id = NULL;
  const EffluxCube *cube = main_cube (figure, o->lobe, &cube_id, error);
  g_autofree float *map = NULL;
  cairo_surface_t *surface;
  double lo, hi, rms, left = 62.0, right = 48.0, top = 6.0, bottom = 30.0, s, cap_h;
  double mw, mh;
  SkyBox box;
  GString *caption = figure->caption;

  if (cube == NULL)
    return -1;
  map = g_new (float, cube->nx * cube->ny);
  if (!efflux_moment_map (cube, EFFLUX_MOMENT_0, cube->velocity[0], cube->velocity[cube->nchan - 1],
                          0.0, map, error))
    return -1;
  if (!colour_limits (o, map, cube->nx * cube->ny, &lo, &hi))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the moment 0 map has no finite value",
                   cube->path);
      return -1;
    }
  rms = cube_rms (figure, cube_id, cube);

  g_string_truncate (caption, 0);
  g_string_append_printf (caption, "%s, %s: moment 0 over all channels (%.2f to %.2f km/s) in colour, K km/s.",
                          d->name != NULL ? d->name : "", cube_id,
                          MIN (cube->velocity[0], cube->velocity[cube->nchan - 1]),
                          MAX (cube->velocity[0], cube->velocity[cube->nchan - 1]));

  /* Layout: the map takes the width left by the axes and the colour bar; the caption goes under. */
  mw = width - left - right;
  s = mw / cube->nx;
  mh = s * cube->ny;

  /* Wing contours per lobe (text first: the caption's height is part of the layout). */
  {
    g_autoptr (GPtrArray) wings = g_ptr_array_new_with_free_func (g_free);
    g_autoptr (GArray) wing_levels = g_array_new (FALSE, FALSE, sizeof (double));
    g_autoptr (GArray) wing_counts = g_array_new (FALSE, FALSE, sizeof (guint));
    g_autoptr (GPtrArray) wing_lobes = g_ptr_array_new ();
    g_autofree char *cap_markup = NULL;

    for (guint i = 0; i < d->lobes->len; i++)
      {
        const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);
        float *wing;
        gsize k0, k1;
        double levels[MAX_CONTOURS], multiples[MAX_CONTOURS], sigma;
        guint n;
        g_autofree char *mtext = NULL;

        if (!lobe_selected (o, lobe) || strcmp (lobe->cube_id, cube_id) != 0)
          continue;
        if (!efflux_cube_channel_range (cube, lobe->v1_kms, lobe->v2_kms, &k0, &k1))
          continue;
        wing = g_new (float, cube->nx * cube->ny);
        if (!efflux_moment_map (cube, EFFLUX_MOMENT_0, lobe->v1_kms, lobe->v2_kms, 0.0, wing, error))
          {
            g_free (wing);
            return -1;
          }
        /* Noise of a moment 0 over n channels of independent noise: rms |dv| sqrt(n). */
        sigma = rms * fabs (cube->dv) * sqrt ((double) (k1 - k0));
        n = sigma_levels (wing, cube->nx * cube->ny, sigma, levels, multiples);
        g_ptr_array_add (wings, wing);
        g_ptr_array_add (wing_lobes, (gpointer) lobe);
        g_array_append_vals (wing_levels, levels, MAX_CONTOURS);
        g_array_append_val (wing_counts, n);
        mtext = levels_text (multiples, n);
        if (n > 0)
          g_string_append_printf (caption, " Contours of lobe %s (%s): moment 0 over %.2f to %.2f km/s at "
                                  "%s \xc3\x97 %.3g K km/s (\xcf\x83 = rms \xc3\x97 |\xce\x94v| \xc3\x97 "
                                  "\xe2\x88\x9a%u channels, rms %.3g K).",
                                  lobe->name, efflux_lobe_kind_name (lobe->kind),
                                  lobe->v1_kms, lobe->v2_kms, mtext, sigma, (guint) (k1 - k0), rms);
        else
          g_string_append_printf (caption, " Lobe %s (%s, %.2f to %.2f km/s): no emission above 3\xcf\x83 "
                                  "(\xcf\x83 = %.3g K km/s), no contours.", lobe->name,
                                  efflux_lobe_kind_name (lobe->kind), lobe->v1_kms, lobe->v2_kms, sigma);
      }
    g_string_append (caption, " Dashed outlines: lobes; white and black line: cut; cross: source position; "
                              "ellipse: beam (FWHM).");
    if (d->distance_pc > 0)
      g_string_append_printf (caption, " Scale bar at %.0f pc.", d->distance_pc);

    cap_markup = escape (caption->str);
    cap_h = paragraph (cr, 0, 0, width, SMALL_PT, cap_markup, FALSE);
    if (height > 0)
      {
        double avail = height - top - bottom - cap_h - 4.0;
        if (avail < mh && avail > 10.0)
          {
            s = avail / cube->ny;
            mw = s * cube->nx;
            mh = avail;
          }
      }
    box.cube = cube;
    box.s = s;
    box.x0 = left;
    box.y0 = top;
    figure->sky_valid = TRUE;
    figure->sky_x0 = box.x0;
    figure->sky_y0 = box.y0;
    figure->sky_scale = s;
    figure->sky_lo = lo;
    figure->sky_hi = hi;

    surface = image_surface (map, cube->nx, cube->ny, TRUE, o, lo, hi);
    paint_image (cr, surface, box.x0, box.y0, mw, mh);
    cairo_surface_destroy (surface);

    cairo_save (cr);
    cairo_rectangle (cr, box.x0, box.y0, mw, mh);
    cairo_clip (cr);
    for (guint i = 0; i < wings->len; i++)
      {
        const EffluxDossierLobe *lobe = g_ptr_array_index (wing_lobes, i);
        const double *rgb = lobe_rgb (lobe);

        cairo_set_source_rgb (cr, rgb[0], rgb[1], rgb[2]);
        cairo_set_line_width (cr, 0.7);
        draw_contours (cr, g_ptr_array_index (wings, i), cube->nx, cube->ny,
                       &g_array_index (wing_levels, double, i * MAX_CONTOURS),
                       g_array_index (wing_counts, guint, i), box.x0, box.y0, s, s, TRUE);
      }
    cairo_restore (cr);

    sky_lobes_and_cuts (cr, &box, o, d, cube_id, TRUE);
    sky_source (cr, &box, d);
    sky_beam_and_scale (cr, &box, d->distance_pc, TRUE);
    sky_axes (cr, &box, o, d, TRUE);
    colour_bar (cr, box.x0 + mw + 6.0, box.y0, 7.0, mh, o, lo, hi, "K km s<sup>\xe2\x88\x92" "1</sup>");
    paragraph (cr, 0, top + mh + bottom, width, SMALL_PT, cap_markup, TRUE);
  }
  return height > 0 ? height : top + mh + bottom + cap_h + 2.0;
}

/* ---- cut -------------------------------------------------------------------------------- */

static double
draw_cut (EffluxFigure              *figure,
          const EffluxFigureOptions *o,
          cairo_t                   *cr,
          double                     width,
          double                     height,
          GError                   **error)
{
  const EffluxDossier *d = figure->dossier;
  const EffluxDossierCut *cut = NULL;
  const EffluxCube *cube;
  g_autofree double *ra_dec = NULL;
  g_autoptr (EffluxPv) pv = NULL;
  double lo, hi, rms, sigma, levels[MAX_CONTOURS], multiples[MAX_CONTOURS];
  double left = 40.0, right = 60.0, top = 6.0, bottom = 26.0, cap_h, vmin, vmax;
  g_autofree char *cap_markup = NULL;
  g_autofree char *mtext = NULL;
  cairo_surface_t *surface;
  guint n_levels;
  gboolean flip;
  Plot p;

  for (guint i = 0; i < d->cuts->len && cut == NULL; i++)
    {
      const EffluxDossierCut *c = g_ptr_array_index (d->cuts, i);

      if (o->cut == NULL || strcmp (o->cut, c->name) == 0)
        cut = c;
    }
  if (cut == NULL)
    {
      if (o->cut != NULL)
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: --cut %s: the dossier has no [Cut %s]",
                     d->path, o->cut, o->cut);
      else
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the dossier has no [Cut] to draw",
                     d->path);
      return -1;
    }
  cube = figure_cube (figure, cut->cube_id);
  if (cube == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Cut %s] cube: no [Cube %s]", d->path,
                   cut->name, cut->cube_id);
      return -1;
    }
  ra_dec = efflux_dossier_cut_path (cut);
  pv = efflux_pv_cut (cube, ra_dec, cut->n_vertices, cut->width_arcsec, error);
  if (pv == NULL)
    return -1;
  if (!colour_limits (o, pv->data, pv->n_offsets * pv->nchan, &lo, &hi))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Cut %s]: the cut has no finite value",
                   d->path, cut->name);
      return -1;
    }
  rms = cube_rms (figure, cut->cube_id, cube);
  /* Averaging 2k + 1 samples across the cut lowers independent noise by sqrt(2k + 1); samples one
   * pixel apart are not independent within a beam, so the cube rms is kept (conservative). */
  sigma = rms;
  n_levels = sigma_levels (pv->data, pv->n_offsets * pv->nchan, sigma, levels, multiples);
  mtext = levels_text (multiples, n_levels);

  vmin = MIN (pv->velocity[0], pv->velocity[pv->nchan - 1]) - fabs (pv->dv_kms) / 2;
  vmax = MAX (pv->velocity[0], pv->velocity[pv->nchan - 1]) + fabs (pv->dv_kms) / 2;
  g_string_truncate (figure->caption, 0);
  g_string_append_printf (figure->caption,
                          "%s, cut %s through %s (width %.2f\xe2\x80\xb3, %u samples across): "
                          "brightness in colour, K.",
                          d->name != NULL ? d->name : "", cut->name, cut->cube_id, cut->width_arcsec,
                          2 * pv->half_width + 1);
  if (n_levels > 0)
    g_string_append_printf (figure->caption, " Contours at %s \xc3\x97 %.3g K (the channel rms).", mtext, sigma);
  g_string_append_printf (figure->caption, " Dashed line: v_sys = %.2f km/s; bars at the right: the lobes' "
                          "velocity ranges. Offsets from the cut's first vertex.", d->vsys_kms);
  cap_markup = escape (figure->caption->str);
  cap_h = paragraph (cr, 0, 0, width, SMALL_PT, cap_markup, FALSE);

  p.x = left;
  p.y = top;
  p.w = width - left - right;
  p.h = height > 0 ? height - top - bottom - cap_h - 2.0 : p.w * 0.7;
  p.u0 = -0.5 * pv->offset_step_arcsec;
  p.u1 = (pv->n_offsets - 0.5) * pv->offset_step_arcsec;
  p.v0 = vmin;
  p.v1 = vmax;
  p.logx = p.logy = FALSE;

  /* Velocity up: with dv > 0 the last channel is the top row. */
  flip = pv->dv_kms > 0;
  surface = image_surface (pv->data, pv->n_offsets, pv->nchan, flip, o, lo, hi);
  paint_image (cr, surface, p.x, p.y, p.w, p.h);
  cairo_surface_destroy (surface);
  cairo_save (cr);
  cairo_rectangle (cr, p.x, p.y, p.w, p.h);
  cairo_clip (cr);
  cairo_set_source_rgb (cr, 1, 1, 1);
  cairo_set_line_width (cr, 0.6);
  draw_contours (cr, pv->data, pv->n_offsets, pv->nchan, levels, n_levels, p.x, p.y,
                 p.w / pv->n_offsets, p.h / pv->nchan, flip);
  {
    static const double dash[] = { 3.0, 2.0 };

    cairo_set_source_rgb (cr, 1, 1, 1);
    cairo_set_dash (cr, dash, 2, 0);
    cairo_set_line_width (cr, 0.8);
    cairo_move_to (cr, p.x, plot_y (&p, d->vsys_kms));
    cairo_rel_line_to (cr, p.w, 0);
    cairo_stroke (cr);
    cairo_set_dash (cr, NULL, 0, 0);
  }
  cairo_restore (cr);

  /* The lobes' velocity ranges as bars right of the plot. */
  {
    int slot = 0;

    for (guint i = 0; i < d->lobes->len; i++)
      {
        const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);
        const double *rgb = lobe_rgb (lobe);
        double y1 = plot_y (&p, CLAMP (lobe->v2_kms, vmin, vmax));
        double y2 = plot_y (&p, CLAMP (lobe->v1_kms, vmin, vmax));
        double x = p.x + p.w + 3.0 + 4.0 * slot;

        if (!lobe_selected (o, lobe))
          continue;
        slot++;
        cairo_set_source_rgb (cr, rgb[0], rgb[1], rgb[2]);
        cairo_rectangle (cr, x, y1, 2.5, y2 - y1);
        cairo_fill (cr);
      }
    right = 3.0 + 4.0 * slot + 4.0;
  }
  frame (cr, &p);
  draw_linear_axis (cr, &p, TRUE, "Offset along the cut (\xe2\x80\xb3)", TRUE);
  draw_linear_axis (cr, &p, FALSE, "v<sub>LSR</sub> (km s<sup>\xe2\x88\x92" "1</sup>)", TRUE);
  colour_bar (cr, p.x + p.w + right, p.y, 7.0, p.h, o, lo, hi, "K");
  paragraph (cr, 0, p.y + p.h + bottom, width, SMALL_PT, cap_markup, TRUE);
  return height > 0 ? height : p.y + p.h + bottom + cap_h + 2.0;
}

/* ---- spectrum --------------------------------------------------------------------------- */

static double
draw_spectrum (EffluxFigure              *figure,
               const EffluxFigureOptions *o,
               cairo_t                   *cr,
               double                     width,
               double                     height,
               GError                   **error)
{
  const EffluxDossier *d = figure->dossier;
  g_autoptr (GPtrArray) spectra = g_ptr_array_new_with_free_func (g_free);
  g_autoptr (GPtrArray) lobes = g_ptr_array_new ();
  g_autoptr (GPtrArray) cubes = g_ptr_array_new ();
  double vmin = INFINITY, vmax = -INFINITY, tmin = 0.0, tmax = -INFINITY, cap_h;
  double left = 40.0, right = 8.0, top = 6.0, bottom = 26.0;
  g_autofree char *cap_markup = NULL;
  Plot p;

  g_string_truncate (figure->caption, 0);
  g_string_append_printf (figure->caption, "%s: mean spectrum over each lobe's outline (pixel centres "
                          "inside), brightness as in the cube.", d->name != NULL ? d->name : "");
  for (guint i = 0; i < d->lobes->len; i++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);
      const EffluxCube *cube = figure_cube (figure, lobe->cube_id);
      g_autofree char *what = NULL;
      g_autoptr (EffluxLobeMask) mask = NULL;
      double *spec;
      gsize n_in;

      if (!lobe_selected (o, lobe) || cube == NULL)
        continue;
      what = g_strdup_printf ("%s: [Lobe %s] polygon", d->path, lobe->name);
      mask = efflux_lobe_mask_new (cube, lobe->ra_deg, lobe->dec_deg, lobe->n_vertices, what, error);
      if (mask == NULL)
        return -1;
      spec = g_new (double, cube->nchan);
      n_in = efflux_spectrum_over_lobe (cube, mask, EFFLUX_SPECTRUM_MEAN, spec);
      g_ptr_array_add (spectra, spec);
      g_ptr_array_add (lobes, (gpointer) lobe);
      g_ptr_array_add (cubes, (gpointer) cube);
      g_string_append_printf (figure->caption, " %s (%s): %" G_GSIZE_FORMAT " pixels, range %.2f to %.2f km/s "
                              "shaded.", lobe->name, efflux_lobe_kind_name (lobe->kind), n_in,
                              lobe->v1_kms, lobe->v2_kms);
      for (gsize k = 0; k < cube->nchan; k++)
        {
          vmin = MIN (vmin, cube->velocity[k] - fabs (cube->dv) / 2);
          vmax = MAX (vmax, cube->velocity[k] + fabs (cube->dv) / 2);
          if (isfinite (spec[k]))
            {
              tmin = MIN (tmin, spec[k]);
              tmax = MAX (tmax, spec[k]);
            }
        }
    }
  if (spectra->len == 0 || !isfinite (tmax))
    {
      if (o->lobe != NULL && efflux_dossier_find_lobe (d, o->lobe) == NULL)
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: --lobe %s: the dossier has no [Lobe %s]",
                     d->path, o->lobe, o->lobe);
      else
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: no lobe with a spectrum to draw", d->path);
      return -1;
    }
  g_string_append_printf (figure->caption, " Dashed line: v_sys = %.2f km/s.", d->vsys_kms);
  cap_markup = escape (figure->caption->str);
  cap_h = paragraph (cr, 0, 0, width, SMALL_PT, cap_markup, FALSE);

  p.x = left;
  p.y = top;
  p.w = width - left - right;
  p.h = height > 0 ? height - top - bottom - cap_h - 2.0 : p.w * 0.6;
  p.u0 = vmin;
  p.u1 = vmax;
  p.v0 = tmin - 0.05 * (tmax - tmin);
  p.v1 = tmax + 0.08 * (tmax - tmin);
  if (!(p.v1 > p.v0))
    p.v1 = p.v0 + 1.0;
  p.logx = p.logy = FALSE;

  cairo_save (cr);
  cairo_rectangle (cr, p.x, p.y, p.w, p.h);
  cairo_clip (cr);
  for (guint i = 0; i < lobes->len; i++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (lobes, i);
      const double *rgb = lobe_rgb (lobe);

      cairo_set_source_rgba (cr, rgb[0], rgb[1], rgb[2], 0.12);
      cairo_rectangle (cr, plot_x (&p, lobe->v1_kms), p.y, plot_x (&p, lobe->v2_kms) - plot_x (&p, lobe->v1_kms), p.h);
      cairo_fill (cr);
    }
  set_ink (cr);
  cairo_set_source_rgb (cr, 0.6, 0.6, 0.6);
  cairo_move_to (cr, p.x, plot_y (&p, 0.0));
  cairo_rel_line_to (cr, p.w, 0);
  cairo_stroke (cr);
  for (guint i = 0; i < spectra->len; i++)
    {
      const double *spec = g_ptr_array_index (spectra, i);
      const EffluxCube *cube = g_ptr_array_index (cubes, i);
      const double *rgb = lobe_rgb (g_ptr_array_index (lobes, i));
      gboolean pen = FALSE;
      double hw = fabs (cube->dv) / 2;

      cairo_set_source_rgb (cr, rgb[0], rgb[1], rgb[2]);
      cairo_set_line_width (cr, 0.8);
      /* Steps: each channel is flat over its width. */
      for (gsize k = 0; k < cube->nchan; k++)
        {
          double v = cube->velocity[k], sign = cube->dv >= 0 ? 1.0 : -1.0;

          if (!isfinite (spec[k]))
            {
              pen = FALSE;
              continue;
            }
          if (!pen)
            cairo_move_to (cr, plot_x (&p, v - sign * hw), plot_y (&p, spec[k]));
          else
            cairo_line_to (cr, plot_x (&p, v - sign * hw), plot_y (&p, spec[k]));
          cairo_line_to (cr, plot_x (&p, v + sign * hw), plot_y (&p, spec[k]));
          pen = TRUE;
        }
      cairo_stroke (cr);
    }
  {
    static const double dash[] = { 3.0, 2.0 };

    set_ink (cr);
    cairo_set_dash (cr, dash, 2, 0);
    cairo_move_to (cr, plot_x (&p, d->vsys_kms), p.y);
    cairo_rel_line_to (cr, 0, p.h);
    cairo_stroke (cr);
    cairo_set_dash (cr, NULL, 0, 0);
  }
  cairo_restore (cr);
  /* Legend */
  for (guint i = 0; i < lobes->len; i++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (lobes, i);
      const double *rgb = lobe_rgb (lobe);
      g_autofree char *esc = escape (lobe->name);
      double y = p.y + 6.0 + i * FONT_PT * 1.3;

      cairo_set_source_rgb (cr, rgb[0], rgb[1], rgb[2]);
      cairo_set_line_width (cr, 1.2);
      cairo_move_to (cr, p.x + p.w - 60.0, y);
      cairo_rel_line_to (cr, 10.0, 0);
      cairo_stroke (cr);
      cairo_set_source_rgb (cr, 0, 0, 0);
      text_at (cr, p.x + p.w - 47.0, y, 0.0, 0.5, FONT_PT, 0, esc);
    }
  frame (cr, &p);
  draw_linear_axis (cr, &p, TRUE, "v<sub>LSR</sub> (km s<sup>\xe2\x88\x92" "1</sup>)", TRUE);
  draw_linear_axis (cr, &p, FALSE, "mean T (K)", TRUE);
  paragraph (cr, 0, p.y + p.h + bottom, width, SMALL_PT, cap_markup, TRUE);
  return height > 0 ? height : p.y + p.h + bottom + cap_h + 2.0;
}

/* ---- mass-velocity ---------------------------------------------------------------------- */

/* The channels the measurement fits, exactly as efflux-measure.c selects them: dM/dv at least 3
 * times its noise (the others NaN, which the fits skip); when some channel has no positive noise,
 * every channel with unit weights (errors NULL). Returns the errors to use (NULL or ms->dmdv_err). */
static const double *
mv_fit_channels (const EffluxMassSpectrum *ms,
                 double                   *sig)
{
  gboolean have_err = TRUE;

  for (guint k = 0; k < ms->n; k++)
    if (!(ms->dmdv_err[k] > 0))
      have_err = FALSE;
  for (guint k = 0; k < ms->n; k++)
    sig[k] = (!have_err || ms->dmdv[k] >= 3.0 * ms->dmdv_err[k]) ? ms->dmdv[k] : NAN;
  return have_err ? ms->dmdv_err : NULL;
}

static double
draw_mass_velocity (EffluxFigure              *figure,
                    const EffluxFigureOptions *o,
                    cairo_t                   *cr,
                    double                     width,
                    double                     height,
                    GError                   **error)
{
  const EffluxDossier *d = figure->dossier;
  EffluxMeasureResult *result = figure_measure (figure, error);
  double vlo = INFINITY, vhi = 0, mlo = INFINITY, mhi = 0, cap_h;
  double left = 44.0, right = 8.0, top = 6.0, bottom = 28.0;
  g_autofree char *cap_markup = NULL;
  guint shown = 0;
  Plot p;

  if (result == NULL)
    return -1;
  for (guint i = 0; i < result->spectra->len; i++)
    {
      const EffluxMassSpectrum *ms = g_ptr_array_index (result->spectra, i);

      if (o->lobe != NULL && strcmp (o->lobe, ms->lobe) != 0)
        continue;
      for (guint k = 0; k < ms->n; k++)
        if (isfinite (ms->dmdv[k]) && ms->dmdv[k] > 0 && ms->v_offset_kms[k] > 0)
          {
            vlo = MIN (vlo, ms->v_offset_kms[k]);
            vhi = MAX (vhi, ms->v_offset_kms[k]);
            mlo = MIN (mlo, MAX (ms->dmdv[k] - ms->dmdv_err[k], ms->dmdv[k] * 0.3));
            mhi = MAX (mhi, ms->dmdv[k] + ms->dmdv_err[k]);
          }
      shown++;
    }
  if (shown == 0 || !isfinite (vlo) || !(mhi > 0))
    {
      if (o->lobe != NULL && efflux_dossier_find_lobe (d, o->lobe) == NULL)
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: --lobe %s: the dossier has no [Lobe %s]",
                     d->path, o->lobe, o->lobe);
      else
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: no lobe has a positive mass spectrum to draw", d->path);
      return -1;
    }
  g_string_truncate (figure->caption, 0);
  g_string_append_printf (figure->caption,
                          "%s: mass spectrum dM/dv per channel against |v \xe2\x88\x92 v_sys| "
                          "(v_sys = %.2f km/s, no inclination correction), with its noise (1\xcf\x83). "
                          "Solid: single power law; dashed: broken power law, both fitted to the channels "
                          "with dM/dv \xe2\x89\xa5 3\xcf\x83 (open symbols are left out).",
                          d->name != NULL ? d->name : "", d->vsys_kms);
  cap_markup = escape (figure->caption->str);
  cap_h = paragraph (cr, 0, 0, width, SMALL_PT, cap_markup, FALSE);

  p.x = left;
  p.y = top;
  p.w = width - left - right;
  p.h = height > 0 ? height - top - bottom - cap_h - 2.0 : p.w * 0.7;
  p.u0 = pow (10.0, floor (log10 (vlo) * 10) / 10 - 0.05);
  p.u1 = pow (10.0, ceil (log10 (vhi) * 10) / 10 + 0.05);
  p.v0 = pow (10.0, floor (log10 (mlo)) );
  p.v1 = pow (10.0, ceil (log10 (mhi)));
  if (p.v1 <= p.v0 * 10)
    p.v1 = p.v0 * 100;
  p.logx = p.logy = TRUE;

  cairo_save (cr);
  cairo_rectangle (cr, p.x, p.y, p.w, p.h);
  cairo_clip (cr);
  shown = 0;
  for (guint i = 0; i < result->spectra->len; i++)
    {
      const EffluxMassSpectrum *ms = g_ptr_array_index (result->spectra, i);
      const EffluxDossierLobe *lobe = efflux_dossier_find_lobe (d, ms->lobe);
      const EffluxMeasureRow *row = NULL;
      const double *rgb = lobe != NULL ? lobe_rgb (lobe) : blue_rgb;
      g_autofree double *sig = g_new (double, ms->n + 1);
      const double *fe;
      EffluxPowerLawFit single;
      EffluxBrokenPowerLawFit broken;
      double a = INFINITY, b = 0.0;
      GString *legend;
      g_autofree char *legend_text = NULL;
      double ly;

      if (o->lobe != NULL && strcmp (o->lobe, ms->lobe) != 0)
        continue;
      for (guint r = 0; r < result->rows->len; r++)
        {
          const EffluxMeasureRow *rr = g_ptr_array_index (result->rows, r);

          if (!rr->is_total && strcmp (rr->lobe, ms->lobe) == 0)
            row = rr;
        }
      /* Points with error bars: filled when fitted. */
      for (guint k = 0; k < ms->n; k++)
        {
          double x, y, e = ms->dmdv_err[k];
          gboolean fitted;

          if (!(isfinite (ms->dmdv[k]) && ms->dmdv[k] > 0 && ms->v_offset_kms[k] > 0))
            continue;
          fitted = ms->dmdv[k] >= 3.0 * e;
          x = plot_x (&p, ms->v_offset_kms[k]);
          y = plot_y (&p, ms->dmdv[k]);
          cairo_set_source_rgb (cr, rgb[0], rgb[1], rgb[2]);
          cairo_set_line_width (cr, 0.5);
          if (e > 0 && isfinite (e))
            {
              double ylo = ms->dmdv[k] - e > p.v0 ? plot_y (&p, ms->dmdv[k] - e) : p.y + p.h;

              cairo_move_to (cr, x, ylo);
              cairo_line_to (cr, x, plot_y (&p, ms->dmdv[k] + e));
              cairo_stroke (cr);
            }
          cairo_arc (cr, x, y, 1.3, 0, 2 * G_PI);
          if (fitted)
            cairo_fill (cr);
          else
            {
              cairo_set_source_rgb (cr, 1, 1, 1);
              cairo_fill_preserve (cr);
              cairo_set_source_rgb (cr, rgb[0], rgb[1], rgb[2]);
              cairo_stroke (cr);
            }
        }
      /* The same fits as the table's (efflux-measure.c), drawn over the channels fitted. */
      fe = mv_fit_channels (ms, sig);
      for (guint k = 0; k < ms->n; k++)
        if (isfinite (sig[k]) && sig[k] > 0 && ms->v_offset_kms[k] > 0)
          {
            a = MIN (a, ms->v_offset_kms[k]);
            b = MAX (b, ms->v_offset_kms[k]);
          }
      if (b > a && efflux_mvfit_single (ms->v_offset_kms, sig, fe, ms->n, &single))
        {
          cairo_set_source_rgb (cr, rgb[0], rgb[1], rgb[2]);
          cairo_set_line_width (cr, 0.9);
          for (int s = 0; s <= 60; s++)
            {
              double v = a * pow (b / a, s / 60.0);
              double y = plot_y (&p, efflux_mvfit_single_eval (&single, v));

              if (s == 0)
                cairo_move_to (cr, plot_x (&p, v), y);
              else
                cairo_line_to (cr, plot_x (&p, v), y);
            }
          cairo_stroke (cr);
          if (efflux_mvfit_broken (ms->v_offset_kms, sig, fe, ms->n, &broken))
            {
              static const double dash[] = { 2.5, 1.5 };

              cairo_set_dash (cr, dash, 2, 0);
              for (int s = 0; s <= 80; s++)
                {
                  double v = a * pow (b / a, s / 80.0);
                  double y = plot_y (&p, efflux_mvfit_broken_eval (&broken, v));

                  if (s == 0)
                    cairo_move_to (cr, plot_x (&p, v), y);
                  else
                    cairo_line_to (cr, plot_x (&p, v), y);
                }
              cairo_stroke (cr);
              cairo_set_dash (cr, NULL, 0, 0);
              g_string_append_printf (figure->caption, " Drawn for %s: single \xce\xb3 = %.6g; broken "
                                      "\xce\xb3\xe2\x82\x81 = %.6g, \xce\xb3\xe2\x82\x82 = %.6g, v_b = %.6g km/s.",
                                      ms->lobe, single.gamma, broken.gamma1, broken.gamma2, broken.vb_kms);
            }
          else
            g_string_append_printf (figure->caption, " Drawn for %s: single \xce\xb3 = %.6g.", ms->lobe,
                                    single.gamma);
        }
      /* Legend from the table's values (efflux-measure.h mv_* fields). */
      legend = g_string_new (NULL);
      {
        g_autofree char *esc = escape (ms->lobe);

        g_string_append_printf (legend, "<span foreground=\"#%02x%02x%02x\">%s</span>", (int) (rgb[0] * 255),
                                (int) (rgb[1] * 255), (int) (rgb[2] * 255), esc);
      }
      if (row != NULL && isfinite (row->mv_gamma))
        g_string_append_printf (legend, ": \xce\xb3 = %.2f \xc2\xb1 %.2g", row->mv_gamma, row->mv_gamma_err);
      if (row != NULL && isfinite (row->mv_break_kms))
        g_string_append_printf (legend, "; \xce\xb3<sub>1</sub> = %.2f, \xce\xb3<sub>2</sub> = %.2f, "
                                "v<sub>b</sub> = %.1f km s<sup>\xe2\x88\x92" "1</sup>",
                                row->mv_gamma_low, row->mv_gamma_high, row->mv_break_kms);
      legend_text = g_string_free (legend, FALSE);
      /* Lower left: the spectra fall from upper left to lower right. */
      ly = p.y + p.h - 5.0 - shown * FONT_PT * 1.5;
      cairo_set_source_rgb (cr, 0, 0, 0);
      text_at (cr, p.x + 5.0, ly, 0.0, 1.0, FONT_PT, 0, legend_text);
      shown++;
    }
  cairo_restore (cr);
  frame (cr, &p);
  draw_log_axis (cr, &p, TRUE, "|v \xe2\x88\x92 v<sub>sys</sub>| (km s<sup>\xe2\x88\x92" "1</sup>)");
  draw_log_axis (cr, &p, FALSE, "dM/dv (M<sub>\xe2\x98\x89</sub> / km s<sup>\xe2\x88\x92" "1</sup>)");
  paragraph (cr, 0, p.y + p.h + bottom + 4.0, width, SMALL_PT, cap_markup, TRUE);
  return height > 0 ? height : p.y + p.h + bottom + 4.0 + cap_h + 2.0;
}

/* ---- channel maps ----------------------------------------------------------------------- */

static double
draw_channels (EffluxFigure              *figure,
               const EffluxFigureOptions *o,
               cairo_t                   *cr,
               double                     width,
               double                     height,
               GError                   **error)
{
  const EffluxDossier *d = figure->dossier;
  const char *cube_id = NULL;
  const EffluxCube *cube = main_cube (figure, o->lobe, &cube_id, error);
  guint n_panels, cols = MAX (o->grid_nx, 1), rows = MAX (o->grid_ny, 1);
  double vlo = INFINITY, vhi = -INFINITY, lo, hi, left = 62.0, right = 48.0, top = 4.0, bottom = 30.0;
  double gap = 2.0, pw, ph, cap_h;
  gsize k0, k1, n_in, npix;
  g_autofree gsize *chans = NULL;
  g_autofree float *planes = NULL;
  g_autofree char *cap_markup = NULL;
  gboolean given_range = isfinite (o->channel_v1_kms) && isfinite (o->channel_v2_kms)
                         && o->channel_v1_kms < o->channel_v2_kms;

  if (cube == NULL)
    return -1;
  if (given_range)
    {
      vlo = o->channel_v1_kms;
      vhi = o->channel_v2_kms;
    }
  for (guint i = 0; i < d->lobes->len && !given_range; i++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);

      if (!lobe_selected (o, lobe) || strcmp (lobe->cube_id, cube_id) != 0)
        continue;
      vlo = MIN (vlo, lobe->v1_kms);
      vhi = MAX (vhi, lobe->v2_kms);
    }
  if (!isfinite (vlo))
    {
      vlo = MIN (cube->velocity[0], cube->velocity[cube->nchan - 1]);
      vhi = MAX (cube->velocity[0], cube->velocity[cube->nchan - 1]);
    }
  if (!efflux_cube_channel_range (cube, vlo, vhi, &k0, &k1))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: no channel of %s lies in %.2f to %.2f km/s",
                   d->path, cube->path, vlo, vhi);
      return -1;
    }
  /* The candidate channels, in increasing velocity: those inside a shown lobe's range (all of
   * [vlo, vhi] without lobes), so the ambient channels between the lobes are left out. */
  {
    g_autoptr (GArray) cand = g_array_new (FALSE, FALSE, sizeof (gsize));
    gboolean any_lobe = FALSE;

    for (guint i = 0; i < d->lobes->len && !given_range; i++)
      {
        const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);

        any_lobe |= lobe_selected (o, lobe) && strcmp (lobe->cube_id, cube_id) == 0;
      }
    for (gsize j = 0; j < k1 - k0; j++)
      {
        gsize k = cube->dv >= 0 ? k0 + j : k1 - 1 - j;
        gboolean inside = !any_lobe;

        for (guint i = 0; i < d->lobes->len && !inside; i++)
          {
            const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);

            inside = lobe_selected (o, lobe) && strcmp (lobe->cube_id, cube_id) == 0
                     && cube->velocity[k] >= lobe->v1_kms && cube->velocity[k] <= lobe->v2_kms;
          }
        if (inside)
          g_array_append_val (cand, k);
      }
    n_in = cand->len;
    n_panels = MIN ((gsize) cols * rows, n_in);
    npix = cube->nx * cube->ny;
    chans = g_new (gsize, MAX (n_panels, 1));
    planes = g_new (float, npix * MAX (n_panels, 1));
    for (guint i = 0; i < n_panels; i++)
      {
        /* Evenly spread over the candidates. */
        gsize off = n_panels > 1 ? (gsize) llround ((double) i * (n_in - 1) / (n_panels - 1)) : n_in / 2;

        chans[i] = g_array_index (cand, gsize, off);
      }
  }
  if (n_panels == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: no channel of %s lies in the lobes' ranges",
                   d->path, cube->path);
      return -1;
    }
  for (guint i = 0; i < n_panels; i++)
    {
      gsize k = chans[i];

      for (gsize pix = 0; pix < npix; pix++)
        planes[i * npix + pix] = cube->data[pix * cube->nchan + k];
    }
  if (!colour_limits (o, planes, npix * n_panels, &lo, &hi))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the channels have no finite value", cube->path);
      return -1;
    }
  g_string_truncate (figure->caption, 0);
  if (given_range)
    g_string_append_printf (figure->caption,
                            "%s, %s: %u channel maps from %.2f to %.2f km/s (channel width %.3g km/s) within "
                            "the chosen range %.2f to %.2f km/s, brightness in K on one colour scale; the channel-centre velocity in each panel. "
                            "Dashed outlines: lobes; cross: source; ellipse: beam.",
                            d->name != NULL ? d->name : "", cube_id, n_panels, cube->velocity[chans[0]],
                            cube->velocity[chans[n_panels - 1]], fabs (cube->dv), vlo, vhi);
  else
    g_string_append_printf (figure->caption,
                            "%s, %s: %u channel maps from %.2f to %.2f km/s (channel width %.3g km/s) within "
                            "the lobes' velocity ranges, brightness in K on one colour scale; the channel-centre velocity in each panel. "
                            "Dashed outlines: lobes; cross: source; ellipse: beam.",
                            d->name != NULL ? d->name : "", cube_id, n_panels, cube->velocity[chans[0]],
                            cube->velocity[chans[n_panels - 1]], fabs (cube->dv));
  cap_markup = escape (figure->caption->str);
  cap_h = paragraph (cr, 0, 0, width, SMALL_PT, cap_markup, FALSE);

  pw = (width - left - right - gap * (cols - 1)) / cols;
  ph = pw * cube->ny / cube->nx;
  if (height > 0)
    {
      double avail = (height - top - bottom - cap_h - 2.0 - gap * (rows - 1)) / rows;

      if (avail < ph && avail > 5.0)
        {
          ph = avail;
          pw = ph * cube->nx / cube->ny;
        }
    }
  for (guint i = 0; i < n_panels; i++)
    {
      guint c = i % cols, r = i / cols;
      SkyBox box = { cube, left + c * (pw + gap), top + r * (ph + gap), pw / cube->nx };
      cairo_surface_t *surface = image_surface (planes + i * npix, cube->nx, cube->ny, TRUE, o, lo, hi);
      g_autofree char *vtext = format_num (cube->velocity[chans[i]], "%.2f");
      g_autofree char *label = g_strdup_printf ("%s km s<sup>\xe2\x88\x92" "1</sup>", vtext);
      double tw, th;
      gboolean corner = c == 0 && r == (n_panels - 1) / cols;

      paint_image (cr, surface, box.x0, box.y0, pw, ph);
      cairo_surface_destroy (surface);
      sky_lobes_and_cuts (cr, &box, o, d, cube_id, FALSE);
      sky_source (cr, &box, d);
      if (corner)
        sky_beam_and_scale (cr, &box, d->distance_pc, FALSE);
      sky_axes (cr, &box, o, d, corner);
      text_size (cr, SMALL_PT, label, &tw, &th);
      cairo_set_source_rgba (cr, 1, 1, 1, 0.85);
      cairo_rectangle (cr, box.x0 + 1.5, box.y0 + 1.5, tw + 2.0, th + 1.0);
      cairo_fill (cr);
      cairo_set_source_rgb (cr, 0, 0, 0);
      text_at (cr, box.x0 + 2.5, box.y0 + 2.0, 0.0, 0.0, SMALL_PT, 0, label);
    }
  {
    guint used_rows = (n_panels + cols - 1) / cols;
    double grid_h = used_rows * ph + (used_rows - 1) * gap;

    colour_bar (cr, left + cols * pw + (cols - 1) * gap + 6.0, top, 7.0, grid_h, o, lo, hi, "K");
    paragraph (cr, 0, top + grid_h + bottom, width, SMALL_PT, cap_markup, TRUE);
    return height > 0 ? height : top + grid_h + bottom + cap_h + 2.0;
  }
}

/* ---- entry points ----------------------------------------------------------------------- */

double
efflux_figure_draw (EffluxFigure              *figure,
                    const EffluxFigureOptions *options,
                    cairo_t                   *cr,
                    double                     width_pt,
                    double                     height_pt,
                    GError                   **error)
{
  double h = -1;

  g_return_val_if_fail (figure != NULL && options != NULL && cr != NULL, -1);
  cairo_save (cr);
  switch (options->view)
    {
    case EFFLUX_FIGURE_SKY:
      h = draw_sky (figure, options, cr, width_pt, height_pt, error);
      break;
    case EFFLUX_FIGURE_CUT:
      h = draw_cut (figure, options, cr, width_pt, height_pt, error);
      break;
    case EFFLUX_FIGURE_SPECTRUM:
      h = draw_spectrum (figure, options, cr, width_pt, height_pt, error);
      break;
    case EFFLUX_FIGURE_MASS_VELOCITY:
      h = draw_mass_velocity (figure, options, cr, width_pt, height_pt, error);
      break;
    case EFFLUX_FIGURE_CHANNELS:
      h = draw_channels (figure, options, cr, width_pt, height_pt, error);
      break;
    default:
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE, "unknown view %d", (int) options->view);
      break;
    }
  cairo_restore (cr);
  return h;
}

static cairo_status_t
write_to_file (void                *closure,
               const unsigned char *data,
               unsigned int         length)
{
  FILE *fp = closure;

  return fwrite (data, 1, length, fp) == length ? CAIRO_STATUS_SUCCESS : CAIRO_STATUS_WRITE_ERROR;
}

/* The height a view takes at a width: drawn once on a recording surface. */
static double
measure_height (EffluxFigure              *figure,
                const EffluxFigureOptions *options,
                double                     width_pt,
                GError                   **error)
{
  cairo_surface_t *rec = cairo_recording_surface_create (CAIRO_CONTENT_COLOR_ALPHA, NULL);
  cairo_t *cr = cairo_create (rec);
  double h = efflux_figure_draw (figure, options, cr, width_pt, 0, error);

  cairo_destroy (cr);
  cairo_surface_destroy (rec);
  return h;
}

gboolean
efflux_figure_write (EffluxFigure              *figure,
                     const EffluxFigureOptions *o,
                     const char                *path,
                     GError                   **error)
{
  return efflux_figure_write_full (figure, o, path, NULL, error);
}

gboolean
efflux_figure_write_full (EffluxFigure              *figure,
                          const EffluxFigureOptions *o,
                          const char                *path,
                          GCancellable              *cancellable,
                          GError                   **error)
{
  EffluxFigureFormat format;
  double w_pt = o->width_mm * MM_PT, h_pt;
  g_autofree char *tmp = NULL;
  cairo_surface_t *surface = NULL;
  cairo_status_t status;
  cairo_t *cr;
  FILE *fp = NULL;

  if (!efflux_figure_format_from_path (path, &format))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE, "%s: expected a .png, .pdf or .svg file name", path);
      return FALSE;
    }
  if (!(o->width_mm > 0) || o->width_mm > 2000 || !(o->height_mm >= 0) || o->height_mm > 2000
      || (format == EFFLUX_FIGURE_FORMAT_PNG && (!(o->dpi >= 10) || o->dpi > 2400)))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE,
                   "figure size %g x %g mm at %g dpi: expected 0 < width <= 2000 mm, height 0 (automatic) "
                   "to 2000 mm, 10 <= dpi <= 2400", o->width_mm, o->height_mm, o->dpi);
      return FALSE;
    }
  h_pt = o->height_mm > 0 ? o->height_mm * MM_PT : measure_height (figure, o, w_pt, error);
  if (h_pt < 0)
    return FALSE;
  /* Cairo's image surfaces hold at most 32767 pixels a side. */
  if (format == EFFLUX_FIGURE_FORMAT_PNG
      && (lround (o->width_mm / 25.4 * o->dpi) > 32767 || lround (h_pt / 72.0 * o->dpi) > 32767))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE,
                   "%s: %g mm at %g dpi is more than 32767 pixels a side: lower --dpi or the size",
                   path, MAX (o->width_mm, h_pt / MM_PT), o->dpi);
      return FALSE;
    }

  if (g_cancellable_set_error_if_cancelled (cancellable, error))
    return FALSE;
  tmp = efflux_output_begin (path, error);
  if (tmp == NULL)
    return FALSE;
  if (format == EFFLUX_FIGURE_FORMAT_PNG)
    {
      int pw = (int) lround (o->width_mm / 25.4 * o->dpi);
      int ph = (int) lround (h_pt / 72.0 * o->dpi);

      surface = cairo_image_surface_create (CAIRO_FORMAT_ARGB32, MAX (pw, 1), MAX (ph, 1));
    }
  else
    {
      fp = fopen (tmp, "wb");
      if (fp == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot write: %s", path, g_strerror (errno));
          efflux_output_abort (tmp);
          return FALSE;
        }
      if (format == EFFLUX_FIGURE_FORMAT_PDF)
        surface = cairo_pdf_surface_create_for_stream (write_to_file, fp, w_pt, h_pt);
      else
        {
          surface = cairo_svg_surface_create_for_stream (write_to_file, fp, w_pt, h_pt);
          cairo_svg_surface_restrict_to_version (surface, CAIRO_SVG_VERSION_1_1);
        }
    }
  cr = cairo_create (surface);
  if (format == EFFLUX_FIGURE_FORMAT_PNG)
    {
      cairo_scale (cr, o->dpi / 72.0, o->dpi / 72.0);
      cairo_set_source_rgb (cr, 1, 1, 1);
      cairo_paint (cr);
    }
  if (efflux_figure_draw (figure, o, cr, w_pt, o->height_mm > 0 ? h_pt : 0, error) < 0)
    {
      cairo_destroy (cr);
      cairo_surface_destroy (surface);
      if (fp != NULL)
        fclose (fp);
      efflux_output_abort (tmp);
      return FALSE;
    }
  cairo_show_page (cr);
  cairo_destroy (cr);
  status = cairo_surface_status (surface);
  if (status == CAIRO_STATUS_SUCCESS && format == EFFLUX_FIGURE_FORMAT_PNG)
    status = cairo_surface_write_to_png (surface, tmp);
  cairo_surface_finish (surface);
  if (status == CAIRO_STATUS_SUCCESS)
    status = cairo_surface_status (surface);
  cairo_surface_destroy (surface);
  if (fp != NULL && fclose (fp) != 0 && status == CAIRO_STATUS_SUCCESS)
    status = CAIRO_STATUS_WRITE_ERROR;
  if (status != CAIRO_STATUS_SUCCESS)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot write the figure: %s", path,
                   cairo_status_to_string (status));
      efflux_output_abort (tmp);
      return FALSE;
    }
  /* cancelled while drawing: nothing is written */
  if (g_cancellable_set_error_if_cancelled (cancellable, error))
    {
      efflux_output_abort (tmp);
      return FALSE;
    }
  return efflux_output_commit (tmp, path, error);
}

/* ---- report ----------------------------------------------------------------------------- */

#define REPORT_MARGIN 50.0

static void
report_header (cairo_t             *cr,
               const EffluxDossier *d,
               int                  page,
               const char          *section)
{
  g_autofree char *name = escape (d->name);
  g_autofree char *sec = escape (section);
  g_autofree char *head = g_strdup_printf ("<b>%s</b> \xe2\x80\x94 Efflux %s report", name, PACKAGE_VERSION);
  g_autofree char *foot = g_strdup_printf ("page %d of %d", page, EFFLUX_REPORT_PAGES);
  g_autofree char *title = g_strdup_printf ("<b>%d. %s</b>", page, sec);

  cairo_set_source_rgb (cr, 0, 0, 0);
  text_at (cr, REPORT_MARGIN, REPORT_MARGIN - 20.0, 0.0, 1.0, 9.0, 0, head);
  set_ink (cr);
  cairo_move_to (cr, REPORT_MARGIN, REPORT_MARGIN - 16.0);
  cairo_line_to (cr, A4_W_PT - REPORT_MARGIN, REPORT_MARGIN - 16.0);
  cairo_stroke (cr);
  text_at (cr, A4_W_PT / 2, A4_H_PT - REPORT_MARGIN / 2, 0.5, 0.5, FONT_PT, 0, foot);
  text_at (cr, REPORT_MARGIN, REPORT_MARGIN, 0.0, 0.0, 12.0, 0, title);
}

/* A view on a report page, or a line saying why it is not there. */
static void
report_view (EffluxFigure        *figure,
             cairo_t             *cr,
             EffluxFigureView     view,
             double               y)
{
  EffluxFigureOptions o;
  g_autoptr (GError) error = NULL;
  double w = A4_W_PT - 2 * REPORT_MARGIN, h;

  efflux_figure_options_init (&o);
  o.view = view;
  h = measure_height (figure, &o, w, &error);
  if (h > 0 && h > A4_H_PT - y - REPORT_MARGIN)
    h = A4_H_PT - y - REPORT_MARGIN;
  if (h > 0)
    {
      g_clear_error (&error);
      cairo_save (cr);
      cairo_translate (cr, REPORT_MARGIN, y);
      h = efflux_figure_draw (figure, &o, cr, w, h, &error);
      cairo_restore (cr);
    }
  if (h < 0)
    {
      g_autofree char *esc = escape (error != NULL ? error->message : "");
      g_autofree char *markup = g_strdup_printf ("<i>Not drawn: %s</i>", esc);

      cairo_set_source_rgb (cr, 0, 0, 0);
      paragraph (cr, REPORT_MARGIN, y, w, 9.0, markup, TRUE);
    }
}

static char *
cell (const EffluxMeasureRow *row,
      const char             *column)
{
  const char * const *columns = efflux_measure_columns ();

  for (guint i = 0; columns[i] != NULL; i++)
    if (strcmp (columns[i], column) == 0)
      return efflux_measure_cell (row, i);
  return g_strdup ("");
}

static double
report_results (EffluxFigure *figure,
                cairo_t      *cr,
                double        y)
{
  const EffluxDossier *d = figure->dossier;
  static const char *cols[] = { "lobe", "kind", "mass_msun", "momentum_msun_kms", "energy_erg", "vmax_kms",
                                "rmax_au", "tdyn_yr", "mdot_msun_yr", "force_msun_kms_yr", "lmech_lsun" };
  static const char *heads[] = { "lobe", "kind", "M (M<sub>\xe2\x98\x89</sub>)", "P (M<sub>\xe2\x98\x89</sub> km/s)",
                                 "E (erg)", "v<sub>max</sub> (km/s)", "r<sub>max</sub> (au)", "t<sub>dyn</sub> (yr)",
                                 "\xe1\xb9\x80 (M<sub>\xe2\x98\x89</sub>/yr)", "F (M<sub>\xe2\x98\x89</sub> km/s/yr)",
                                 "L<sub>mech</sub> (L<sub>\xe2\x98\x89</sub>)" };
  g_autoptr (GError) error = NULL;
  EffluxMeasureResult *result = figure_measure (figure, &error);
  double w = A4_W_PT - 2 * REPORT_MARGIN;
  GString *a = g_string_new (NULL);
  g_autofree char *amark = NULL;

  if (result == NULL)
    {
      g_autofree char *esc = escape (error->message);
      g_autofree char *markup = g_strdup_printf ("<i>Not measured: %s</i>", esc);

      y += paragraph (cr, REPORT_MARGIN, y, w, 9.0, markup, TRUE) + 10.0;
    }
  else
    {
      /* Column starts: lobe and kind narrower, the force column wider. */
      static const double weight[] = { 1.0, 0.7, 1.0, 1.2, 1.0, 1.0, 1.0, 0.9, 1.0, 1.35, 0.85 };
      double colx[G_N_ELEMENTS (cols)], total = 0.0, acc = 0.0;

      for (guint c = 0; c < G_N_ELEMENTS (cols); c++)
        total += weight[c];
      for (guint c = 0; c < G_N_ELEMENTS (cols); c++)
        {
          colx[c] = REPORT_MARGIN + acc / total * w;
          acc += weight[c];
        }
      for (guint c = 0; c < G_N_ELEMENTS (cols); c++)
        text_at (cr, colx[c], y, 0.0, 0.0, FONT_PT, 0, heads[c]);
      y += 12.0;
      set_ink (cr);
      cairo_move_to (cr, REPORT_MARGIN, y);
      cairo_rel_line_to (cr, w, 0);
      cairo_stroke (cr);
      y += 3.0;
      for (guint r = 0; r < result->rows->len; r++)
        {
          const EffluxMeasureRow *row = g_ptr_array_index (result->rows, r);

          for (guint c = 0; c < G_N_ELEMENTS (cols); c++)
            {
              g_autofree char *value = cell (row, cols[c]);
              g_autofree char *esc = NULL;
              double number;

              if (c >= 2 && *value != '\0')
                {
                  number = g_ascii_strtod (value, NULL);
                  g_free (value);
                  value = g_strdup_printf ("%.3g", number);
                }
              esc = escape (value);
              text_at (cr, colx[c], y, 0.0, 0.0, FONT_PT, 0, esc);
            }
          y += 10.0;
        }
      set_ink (cr);
      cairo_move_to (cr, REPORT_MARGIN, y);
      cairo_rel_line_to (cr, w, 0);
      cairo_stroke (cr);
      y += 6.0;
      for (guint r = 0; r < result->rows->len; r++)
        {
          const EffluxMeasureRow *row = g_ptr_array_index (result->rows, r);

          if (row->is_total)
            continue;
          g_string_append_printf (a, "%s: noise 1\xcf\x83 of M %.2g M\xe2\x98\x89", row->lobe, row->mass_err);
          if (isfinite (row->pct[EFFLUX_MQ_MASS][0]))
            g_string_append_printf (a, "; Monte Carlo M 16\xe2\x80\x93" "84%%: %.3g\xe2\x80\x93%.3g M\xe2\x98\x89",
                                    row->pct[EFFLUX_MQ_MASS][0], row->pct[EFFLUX_MQ_MASS][2]);
          if (isfinite (row->hidden_mass_msun))
            g_string_append_printf (a, "; hidden low-velocity mass (reported, not added) %.3g M\xe2\x98\x89",
                                    row->hidden_mass_msun);
          g_string_append (a, ".\n");
        }
      for (guint i = 0; i < result->notes->len; i++)
        g_string_append_printf (a, "Note: %s\n", (const char *) g_ptr_array_index (result->notes, i));
      if (a->len > 0)
        {
          g_autofree char *esc = escape (a->str);

          y += paragraph (cr, REPORT_MARGIN, y, w, SMALL_PT, esc, TRUE) + 10.0;
        }
      g_string_truncate (a, 0);
    }

  /* The assumptions the numbers rest on. */
  text_at (cr, REPORT_MARGIN, y, 0.0, 0.0, 10.0, 0, "<b>Assumptions</b>");
  y += 16.0;
  g_string_append_printf (a, "Distance %.0f pc", d->distance_pc);
  if (d->distance_err_pc > 0)
    g_string_append_printf (a, " \xc2\xb1 %.0f pc", d->distance_err_pc);
  g_string_append_printf (a, "; v_sys %.2f km/s; inclination %s", d->vsys_kms,
                          efflux_inclination_mode_name (d->inclination_mode));
  if (d->inclination_mode == EFFLUX_INCLINATION_FIXED)
    g_string_append_printf (a, " %.1f\xc2\xb0", d->inclination_deg);
  else if (d->inclination_mode == EFFLUX_INCLINATION_RANGE)
    g_string_append_printf (a, " %.1f\xe2\x80\x93%.1f\xc2\xb0", d->inclination_range_deg[0],
                            d->inclination_range_deg[1]);
  g_string_append_printf (a, ".\nLTE with T_ex %.1f K", d->tex_k);
  if (isfinite (d->tex_range_k[0]))
    g_string_append_printf (a, " (Monte Carlo %.1f\xe2\x80\x93%.1f K)", d->tex_range_k[0], d->tex_range_k[1]);
  g_string_append_printf (a, ", T_bg %.4g K; [CO/H\xe2\x82\x82] %.3g", d->tbg_k, d->co_abundance);
  if (isfinite (d->co_abundance_range[0]))
    g_string_append_printf (a, " (Monte Carlo %.3g\xe2\x80\x93%.3g)", d->co_abundance_range[0],
                            d->co_abundance_range[1]);
  g_string_append_printf (a, "; \xc2\xb9\xc2\xb2" "C/\xc2\xb9\xc2\xb3" "C %.0f; mean mass per H\xe2\x82\x82 %.2f m_H; "
                          "opacity %s", d->isotope_ratio, d->mass_per_h2, efflux_opacity_method_name (d->opacity));
  if (d->opacity == EFFLUX_OPACITY_FIXED)
    g_string_append_printf (a, " (\xcf\x84 = %.3g)", d->tau);
  g_string_append_printf (a, "; clip %.3g \xcf\x83; Monte Carlo samples %u, seed %" G_GUINT64_FORMAT ".\n",
                          d->clip_sigma, d->mc_samples, d->mc_seed);
  for (guint i = 0; i < d->cubes->len; i++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (d->cubes, i);

      g_string_append_printf (a, "Cube %s: %s, %s, %s, beam efficiency %.3g, rms %s.\n", dc->id, dc->path,
                              dc->line_name != NULL ? dc->line_name : "line guessed",
                              dc->role == EFFLUX_CUBE_ROLE_TRACER ? "tracer"
                              : dc->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE ? "isotopologue" : "context",
                              dc->beam_efficiency, isfinite (dc->rms_k) ? "given" : "estimated");
    }
  g_string_append (a, "These numbers rest on uncertain assumptions (excitation temperature, abundance, opacity, "
                      "inclination, flux missed by the observation); the Monte Carlo spread covers only the "
                      "ranges given above.");
  amark = escape (a->str);
  g_string_free (a, TRUE);
  y += paragraph (cr, REPORT_MARGIN, y, w, 8.0, amark, TRUE);
  return y;
}

static void
report_review (EffluxFigure *figure,
               cairo_t      *cr,
               double        y)
{
  const EffluxDossier *d = figure->dossier;
  double w = A4_W_PT - 2 * REPORT_MARGIN;
  g_autoptr (GError) error = NULL;
  EffluxReview *review = efflux_review_read (d, &error);
  GString *s = g_string_new (NULL);
  g_autofree char *text = NULL;

  text_at (cr, REPORT_MARGIN, y, 0.0, 0.0, 10.0, 0, "<b>Lobes, authors and notes</b>");
  y += 16.0;
  for (guint i = 0; i < d->lobes->len; i++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (d->lobes, i);
      g_autofree char *name = escape (lobe->name);
      g_autofree char *author = escape (lobe->author != NULL && *lobe->author ? lobe->author : "not given");
      g_autofree char *note = escape (lobe->note != NULL && *lobe->note ? lobe->note : "no note");

      g_string_append_printf (s, "<b>%s</b> (%s, %.2f to %.2f km/s), drawn by %s: %s\n", name,
                              efflux_lobe_kind_name (lobe->kind), lobe->v1_kms, lobe->v2_kms, author, note);
    }
  if (d->lobes->len == 0)
    g_string_append (s, "The dossier has no lobe.\n");
  y += paragraph (cr, REPORT_MARGIN, y, w, 8.0, s->str, TRUE) + 12.0;
  g_string_truncate (s, 0);

  text_at (cr, REPORT_MARGIN, y, 0.0, 0.0, 10.0, 0, "<b>Review notes</b>");
  y += 16.0;
  if (review == NULL)
    {
      g_autofree char *esc = escape (error->message);

      g_string_append_printf (s, "<i>The review groups could not be read: %s</i>\n", esc);
    }
  else if (review->notes->len == 0)
    g_string_append (s, "No review notes in this dossier.\n");
  else
    {
      g_autofree char *reviewer = escape (review->reviewer != NULL ? review->reviewer : "not named");
      g_autofree char *reviewed = escape (review->reviewed != NULL ? review->reviewed : "not named");

      g_string_append_printf (s, "Reviewer %s, of the dossier %s.\n", reviewer, reviewed);
      for (guint i = 0; i < review->notes->len; i++)
        {
          const EffluxReviewNote *n = g_ptr_array_index (review->notes, i);
          static const char *status[] = { "agreed", "questioned", "changed" };
          g_autofree char *lobe = escape (n->lobe);
          g_autofree char *note = escape (n->note);
          g_autofree char *date = escape (n->date != NULL ? n->date : "undated");

          g_string_append_printf (s, "<b>%s</b>: %s (%s): %s\n", lobe,
                                  (guint) n->status < G_N_ELEMENTS (status) ? status[n->status] : "?", date, note);
        }
    }
  if (review != NULL)
    efflux_review_free (review);
  for (guint i = 0; i < d->notes->len; i++)
    {
      g_autofree char *esc = escape (g_ptr_array_index (d->notes, i));

      g_string_append_printf (s, "Reading the dossier: %s\n", esc);
    }
  text = g_string_free (s, FALSE);
  y += paragraph (cr, REPORT_MARGIN, y, w, 8.0, text, TRUE) + 40.0;

  /* The sign-off. */
  y = MAX (y, A4_H_PT - REPORT_MARGIN - 120.0);
  text_at (cr, REPORT_MARGIN, y, 0.0, 0.0, 9.0, 0,
           "I have checked the lobes, the assumptions and the results above.");
  y += 50.0;
  set_ink (cr);
  cairo_move_to (cr, REPORT_MARGIN, y);
  cairo_rel_line_to (cr, 230.0, 0);
  cairo_move_to (cr, REPORT_MARGIN + 300.0, y);
  cairo_rel_line_to (cr, w - 300.0, 0);
  cairo_stroke (cr);
  text_at (cr, REPORT_MARGIN, y + 3.0, 0.0, 0.0, FONT_PT, 0, "Reviewer (name and signature)");
  text_at (cr, REPORT_MARGIN + 300.0, y + 3.0, 0.0, 0.0, FONT_PT, 0, "Date");
}

gboolean
efflux_figure_draw_report_page (EffluxFigure *figure,
                                cairo_t      *cr,
                                int           page)
{
  const EffluxDossier *d = figure->dossier;

  g_return_val_if_fail (page >= 1 && page <= EFFLUX_REPORT_PAGES, FALSE);
  cairo_save (cr);
  switch (page)
    {
    case 1:
      report_header (cr, d, 1, "Maps and lobes");
      report_view (figure, cr, EFFLUX_FIGURE_SKY, REPORT_MARGIN + 24.0);
      break;
    case 2:
      report_header (cr, d, 2, "Position-velocity cut");
      report_view (figure, cr, EFFLUX_FIGURE_CUT, REPORT_MARGIN + 24.0);
      break;
    case 3:
      report_header (cr, d, 3, "Mass-velocity spectrum");
      report_view (figure, cr, EFFLUX_FIGURE_MASS_VELOCITY, REPORT_MARGIN + 24.0);
      break;
    case 4:
      report_header (cr, d, 4, "Results and assumptions");
      report_results (figure, cr, REPORT_MARGIN + 24.0);
      break;
    default:
      report_header (cr, d, 5, "Review and sign-off");
      report_review (figure, cr, REPORT_MARGIN + 24.0);
      break;
    }
  cairo_restore (cr);
  return TRUE;
}

gboolean
efflux_figure_write_report (EffluxFigure  *figure,
                            const char    *path,
                            GError       **error)
{
  const EffluxDossier *d = figure->dossier;
  g_autofree char *tmp = NULL;
  cairo_surface_t *surface;
  cairo_status_t status;
  cairo_t *cr;
  FILE *fp;

  /* Measure first: a dossier that cannot be measured is refused before anything is written. */
  if (d->lobes->len > 0 && figure_measure (figure, error) == NULL)
    return FALSE;
  tmp = efflux_output_begin (path, error);
  if (tmp == NULL)
    return FALSE;
  fp = fopen (tmp, "wb");
  if (fp == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot write: %s", path, g_strerror (errno));
      efflux_output_abort (tmp);
      return FALSE;
    }
  surface = cairo_pdf_surface_create_for_stream (write_to_file, fp, A4_W_PT, A4_H_PT);
  {
    g_autofree char *title = g_strdup_printf ("%s: outflow report", d->name != NULL ? d->name : "");

    cairo_pdf_surface_set_metadata (surface, CAIRO_PDF_METADATA_TITLE, title);
    cairo_pdf_surface_set_metadata (surface, CAIRO_PDF_METADATA_CREATOR, "Efflux " PACKAGE_VERSION);
  }
  cr = cairo_create (surface);
  for (int page = 1; page <= EFFLUX_REPORT_PAGES; page++)
    {
      efflux_figure_draw_report_page (figure, cr, page);
      cairo_show_page (cr);
    }
  cairo_destroy (cr);
  cairo_surface_finish (surface);
  status = cairo_surface_status (surface);
  cairo_surface_destroy (surface);
  if (fclose (fp) != 0 && status == CAIRO_STATUS_SUCCESS)
    status = CAIRO_STATUS_WRITE_ERROR;
  if (status != CAIRO_STATUS_SUCCESS)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot write the report: %s", path,
                   cairo_status_to_string (status));
      efflux_output_abort (tmp);
      return FALSE;
    }
  return efflux_output_commit (tmp, path, error);
}

void
efflux_figure_release_fonts (void)
{
  if (g_getenv ("EFFLUX_LEAK_CHECK") == NULL)
    return;
  pango_cairo_font_map_set_default (NULL);
  cairo_debug_reset_static_data ();
  /* No FcFini (): pango initialises fontconfig on a thread of its own, and FcFini asserts (aborts
   * the process) when a cache is still referenced, which happens now and then. What fontconfig
   * keeps stays reachable from its globals, so leak checkers do not report it. */
}
