/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"

G_BEGIN_DECLS

/* FITS writers. Every writer goes through efflux_output_begin/commit: a temporary file beside the
 * target, renamed into place only when complete. */

typedef enum
{
  EFFLUX_FITS_SPECTRAL_VRAD,   /* write the spectral axis as VRAD in m/s */
  EFFLUX_FITS_SPECTRAL_FREQ,   /* write it as FREQ in Hz (needs restfreq_hz) */
} EffluxFitsSpectral;

typedef struct
{
  EffluxFitsSpectral spectral;
  gboolean           jy_per_beam;   /* write Jy/beam (needs a beam) instead of K */
  int                bitpix;        /* -32 (default when 0), -64, 16, 32 */
  const char        *object;        /* OBJECT card or NULL */
  const char * const *history;      /* NULL-terminated HISTORY lines, or NULL */
} EffluxFitsCubeOptions;

/* Write a cube in FITS order (RA, Dec, spectral) with its sky WCS, beam, rest frequency. */
gboolean efflux_fits_write_cube (const EffluxCube            *cube,
                                 const char                  *path,
                                 const EffluxFitsCubeOptions *options,
                                 GError                     **error);

/* The same, with the DATE card chosen: an ISO-8601 UTC date-time, or "" for no DATE card (output
 * that is byte-identical from run to run, as synthetic data needs); NULL is the time of writing
 * (or SOURCE_DATE_EPOCH when set), as efflux_fits_write_cube does. */
gboolean efflux_fits_write_cube_with_date (const EffluxCube            *cube,
                                           const char                  *path,
                                           const EffluxFitsCubeOptions *options,
                                           const char                  *date,
                                           GError                     **error);

/* Write a 2-D float image (nx fastest) with the sky WCS of a cube and extra header cards
 * (NULL-terminated "KEY", "value-as-FITS-literal", "comment" triplets, or NULL). */
gboolean efflux_fits_write_sky_image (const EffluxCube   *like,
                                      const float        *image,
                                      const char         *bunit,
                                      const char * const *cards,
                                      const char         *path,
                                      GError            **error);

/* Write a 2-D float image with a linear WCS: axis 1 (ctype1, cunit1, crval1 at pixel 1, cdelt1),
 * axis 2 likewise. Used for PV diagrams. */
gboolean efflux_fits_write_linear_image (const float        *image,
                                         gsize               n1,
                                         gsize               n2,
                                         const char         *ctype1,
                                         const char         *cunit1,
                                         double              crval1,
                                         double              cdelt1,
                                         const char         *ctype2,
                                         const char         *cunit2,
                                         double              crval2,
                                         double              cdelt2,
                                         const char         *bunit,
                                         const char * const *cards,
                                         const char         *path,
                                         GError            **error);

G_END_DECLS
