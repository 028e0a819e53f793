/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <cairo.h>
#include <glib.h>

#include "efflux-colormap.h"
#include "efflux-dossier.h"
#include "efflux-measure.h"
#include "efflux-skygrid.h"
#include "efflux-stretch.h"

G_BEGIN_DECLS

/* Publication figures of a dossier, drawn with Cairo (no GTK), and the per-source report.
 *
 * Everything shown is computed by src/core: moment maps (efflux-maps.h), the PV cut
 * (efflux-pv.h), contours (efflux-contour.h), the measurement and its mass-velocity spectra
 * (efflux-measure.h, efflux-mvfit.h). This module only lays out and draws.
 *
 * Drawing is in points (1/72 inch) throughout: PDF and SVG surfaces are vector (only the map
 * and PV images are embedded rasters, one image each, drawn pixel for pixel with no smoothing);
 * PNG surfaces are scaled by dpi / 72.
 *
 * Views:
 *   sky            moment 0 of the lobes' cube over all its channels (colour, with a colour bar in
 *                  K km/s), each lobe's wing map (moment 0 over the lobe's velocity range) in
 *                  contours of the lobe's colour at 3, 6, 12, ... x its noise, the lobe outlines,
 *                  the cut, the source marker, the beam and a scale bar in au; sexagesimal (or
 *                  offset) axes. The contour levels are stated in the caption under the figure.
 *   cut            the PV diagram along a cut (--cut, else the first): image, contours at 3, 6,
 *                  12, ... x the cube rms, a dashed v_sys line, the lobes' velocity ranges as bars.
 *   spectrum       the mean spectrum over each lobe's outline, its range shaded, v_sys dashed.
 *   mass-velocity  dM/dv per lobe against |v - v_sys| (log-log) with its noise, the fitted single
 *                  and broken power laws (fitted again by efflux-mvfit on the same channels as the
 *                  measurement: dM/dv >= 3 x its noise); the legend gives the table's mv_* values.
 *   channels       an n x m grid of channel maps spread evenly over the lobes' velocity ranges
 *                  (or over the cube), common colour limits, the velocity in each panel. */
typedef enum
{
  EFFLUX_FIGURE_SKY,
  EFFLUX_FIGURE_CUT,
  EFFLUX_FIGURE_SPECTRUM,
  EFFLUX_FIGURE_MASS_VELOCITY,
  EFFLUX_FIGURE_CHANNELS,
  EFFLUX_N_FIGURE_VIEWS,
} EffluxFigureView;

typedef enum
{
  EFFLUX_FIGURE_FORMAT_PNG,
  EFFLUX_FIGURE_FORMAT_PDF,
  EFFLUX_FIGURE_FORMAT_SVG,
} EffluxFigureFormat;

typedef struct
{
  EffluxFigureView    view;
  double              width_mm;     /* > 0 */
  double              height_mm;    /* 0: as the view's layout needs */
  double              dpi;          /* PNG only */
  const char         *cut;          /* NULL: the first cut */
  const char         *lobe;         /* NULL: every lobe */
  guint               grid_nx;      /* channels: columns */
  guint               grid_ny;      /* channels: rows */
  EffluxColormapKind  colormap;
  EffluxStretchKind   stretch;
  EffluxSkyGridStyle  coords;
  double              limits_percent;  /* colour limits keep this percent of the values (99.5) */
  /* Added for the program's figure dialog: channels spread over every channel from
   * channel_v1_kms to channel_v2_kms (lobes or not) when channel_v1_kms < channel_v2_kms;
   * 0 and 0 (the default): over the lobes' velocity ranges. */
  double              channel_v1_kms;
  double              channel_v2_kms;
  /* Fixed colour limits, in the view's units (K km/s for the sky view's moment 0, K for the cut
   * and the channel maps), when limit_lo < limit_hi (both finite); 0 and 0 (the default): from
   * limits_percent. Values outside them take the end colours, as with the percentile limits. */
  double              limit_lo;
  double              limit_hi;
} EffluxFigureOptions;

/* Defaults: sky, 120 mm wide, height from the layout, 300 dpi, 3 x 3 channels, cubehelix, linear,
 * sexagesimal, 99.5 %, colour limits from that percentage. */
void        efflux_figure_options_init (EffluxFigureOptions *options);

/* "sky", "cut", "spectrum", "mass-velocity", "channels". */
const char *efflux_figure_view_to_string   (EffluxFigureView  view);
gboolean    efflux_figure_view_from_string (const char       *name,
                                            EffluxFigureView *view);
/* From the file name's extension (.png, .pdf, .svg, any case); FALSE otherwise. */
gboolean    efflux_figure_format_from_path (const char         *path,
                                            EffluxFigureFormat *format);

typedef struct _EffluxFigure EffluxFigure;

/* The dossier is borrowed and must outlive the figure. Loads the cubes the views need (the lobes'
 * cubes, the isotopologue for opacity, the cuts' cubes). Errors name the file. */
EffluxFigure *efflux_figure_new  (const EffluxDossier  *dossier,
                                  GError              **error);
void          efflux_figure_free (EffluxFigure *figure);
/* As efflux_figure_new, for a worker thread: reading the cubes stops with EFFLUX_ERROR_CANCELLED
 * when cancellable is cancelled, and progress (may be NULL; called on the caller's thread) gets
 * the fraction of the cubes read so far. */
EffluxFigure *efflux_figure_new_full (const EffluxDossier  *dossier,
                                      GCancellable         *cancellable,
                                      EffluxProgressFunc    progress,
                                      gpointer              progress_data,
                                      GError              **error);

/* How efflux_figure_new_shared reads a cube and gives it back: efflux_cube_load's signature (a
 * program's store of shared cubes, say) and a release function for the cubes it returns. */
typedef EffluxCube *(*EffluxFigureCubeLoad) (const char                  *path,
                                             const EffluxCubeLoadOptions *options,
                                             GCancellable                *cancellable,
                                             EffluxProgressFunc           progress,
                                             gpointer                     progress_data,
                                             GError                     **error);
/* As efflux_figure_new_full, with the cubes from load, given back with release when the figure
 * is freed: the program draws from the cubes it already holds instead of reading the files again.
 * A cube read without its noise estimate gets one when the dossier gives no rms for it (as
 * efflux-measure does with shared cubes). */
EffluxFigure *efflux_figure_new_shared (const EffluxDossier  *dossier,
                                        EffluxFigureCubeLoad  load,
                                        GDestroyNotify        release,
                                        GCancellable         *cancellable,
                                        EffluxProgressFunc    progress,
                                        gpointer              progress_data,
                                        GError              **error);

/* Draw one view at the current origin of cr, width_pt wide; height_pt 0 lets the layout choose.
 * Returns the height used (points), or a negative number with an error (an unknown cut or lobe,
 * a view that has nothing to show). */
double        efflux_figure_draw (EffluxFigure              *figure,
                                  const EffluxFigureOptions *options,
                                  cairo_t                   *cr,
                                  double                     width_pt,
                                  double                     height_pt,
                                  GError                   **error);

/* Write one view to a file, format from its name, through a temporary file renamed into place. */
gboolean      efflux_figure_write (EffluxFigure              *figure,
                                   const EffluxFigureOptions *options,
                                   const char                *path,
                                   GError                   **error);
/* The same; when cancellable is cancelled before the file is renamed into place, nothing is
 * written and the error is G_IO_ERROR_CANCELLED. */
gboolean      efflux_figure_write_full (EffluxFigure              *figure,
                                        const EffluxFigureOptions *options,
                                        const char                *path,
                                        GCancellable              *cancellable,
                                        GError                   **error);

/* The caption of the last view drawn (contour levels, ranges, units); "" before any. */
const char   *efflux_figure_caption (const EffluxFigure *figure);

/* Geometry of the last sky view drawn: map pixel (x, y) (0-based, its centre) lies at
 * (x0 + (x + 0.5) scale, y0 + (ny - y - 0.5) scale) in points from the view's origin.
 * FALSE before a sky view was drawn. lo and hi are the colour limits used. */
gboolean      efflux_figure_sky_geometry (const EffluxFigure *figure,
                                          double             *x0,
                                          double             *y0,
                                          double             *scale,
                                          double             *lo,
                                          double             *hi);

/* The per-source report: an A4 PDF, one page per section: maps, cut, mass-velocity spectrum,
 * results with assumptions, review (lobe authors and notes, review notes, a signature line). */
#define EFFLUX_REPORT_PAGES 5
gboolean      efflux_figure_write_report (EffluxFigure  *figure,
                                          const char    *path,
                                          GError       **error);

/* Release the font caches of Pango, Cairo and fontconfig (process-wide, kept for speed), so that a
 * leak checker sees only real leaks. Call once at the end of a program, after every figure. Does
 * nothing unless EFFLUX_LEAK_CHECK is set (the test setups 'sanitize' and 'valgrind' set it):
 * tearing down the libraries' global state at exit serves only the checker, and a program that
 * is about to exit should not risk it. */
void          efflux_figure_release_fonts (void);

/* One page of the report (1 .. EFFLUX_REPORT_PAGES) on any surface of A4 size in points (the
 * program can show or print it). */
gboolean      efflux_figure_draw_report_page (EffluxFigure *figure,
                                              cairo_t      *cr,
                                              int           page);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxFigure, efflux_figure_free)

G_END_DECLS
