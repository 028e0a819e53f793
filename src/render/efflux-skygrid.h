/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-cube.h"

G_BEGIN_DECLS

/* A coordinate grid for a sky image: lines of constant right ascension and declination (ICRS,
 * sexagesimal labels), or of constant offset east and north of a reference position (arcsec,
 * standard coordinates of the gnomonic projection centred there). Lines are traced through the
 * cube's WCS (efflux_cube_icrs_to_pixel) as polylines in 0-based pixel coordinates, so any
 * projection draws correctly. No GTK here: the sky view draws the result. */

typedef enum
{
  EFFLUX_SKYGRID_SEXAGESIMAL, /* RA in h m s, Dec in deg ' " */
  EFFLUX_SKYGRID_OFFSETS,     /* arcsec east and north of the reference position */
} EffluxSkyGridStyle;

typedef struct
{
  gboolean  longitude;   /* TRUE: constant RA (or east offset); FALSE: constant Dec (north offset) */
  double    value;       /* RA or Dec in degrees (RA in [0, 360)); offsets in arcsec */
  char     *label;       /* UTF-8 */
  GArray   *points;      /* double pairs (x, y), 0-based pixels; a NaN pair separates pieces */
  gboolean  has_anchor;  /* the line crosses its label edge inside the region */
  double    anchor_x;    /* the crossing: RA lines on the edge y = y0, Dec lines on x = x0 */
  double    anchor_y;
} EffluxSkyGridLine;

typedef struct
{
  EffluxSkyGridStyle  style;
  double              lon_step;  /* seconds of time (RA), or arcsec (offsets) */
  double              lat_step;  /* arcsec (Dec and offsets) */
  GPtrArray          *lines;     /* EffluxSkyGridLine *, longitude lines first */
} EffluxSkyGrid;

/* Nice spacings: the smallest step from the usual sexagesimal ladder (1, 2, 5, 10, 15, 20, 30
 * units of each of s, m, h for RA and ", ', deg for Dec; decimal 1-2-5 below one second) that
 * gives at most `max_lines` lines over the span. */
double          efflux_skygrid_ra_step     (double span_deg,
                                            int    max_lines);   /* seconds of time */
double          efflux_skygrid_dec_step    (double span_deg,
                                            int    max_lines);   /* arcsec */
double          efflux_skygrid_offset_step (double span_arcsec,
                                            int    max_lines);   /* arcsec, 1-2-5 ladder */

/* Labels at the precision that a step asks for (step in the units above):
 *   RA  step >= 1 h: "03h"; >= 1 m: "03h29m"; >= 1 s: "03h29m03s"; finer: "03h29m03.12s"
 *   Dec step >= 1 deg: "+31°"; >= 1': "+31°15′"; >= 1": "+31°15′18″"; finer: "+31°15′18.5″"
 *   offset: "+5″", "-2.5″", "0″" (signs in ASCII, as in catalogues)
 * Values are rounded to the step's last digit with carries (59.996 s -> the next minute). */
char           *efflux_skygrid_format_ra     (double ra_deg,
                                              double step_seconds);
char           *efflux_skygrid_format_dec    (double dec_deg,
                                              double step_arcsec);
char           *efflux_skygrid_format_offset (double offset_arcsec,
                                              double step_arcsec);

/* Standard coordinates (xi east, eta north; arcsec) of (ra, dec) on the gnomonic projection
 * centred on (ra0, dec0), and back (Snyder 1987, USGS Prof. Paper 1395, gnomonic projection;
 * formulas from memory). FALSE when the point lies 90 deg or more from the centre. */
gboolean        efflux_skygrid_offsets_from_icrs (double  ra0_deg,
                                                  double  dec0_deg,
                                                  double  ra_deg,
                                                  double  dec_deg,
                                                  double *xi_arcsec,
                                                  double *eta_arcsec);
void            efflux_skygrid_icrs_from_offsets (double  ra0_deg,
                                                  double  dec0_deg,
                                                  double  xi_arcsec,
                                                  double  eta_arcsec,
                                                  double *ra_deg,
                                                  double *dec_deg);

/* The grid over the pixel region [x0, x1] x [y0, y1] (0-based pixel coordinates, x0 < x1,
 * y0 < y1) with about max_lines lines per direction at most. ref_ra/ref_dec: the reference of
 * the offsets style (ignored for sexagesimal). NULL when the region has no valid sky position. */
EffluxSkyGrid  *efflux_skygrid_new  (const EffluxCube   *cube,
                                     double              x0,
                                     double              y0,
                                     double              x1,
                                     double              y1,
                                     EffluxSkyGridStyle  style,
                                     double              ref_ra_deg,
                                     double              ref_dec_deg,
                                     int                 max_lines);
void            efflux_skygrid_free (EffluxSkyGrid *grid);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxSkyGrid, efflux_skygrid_free)

G_END_DECLS
