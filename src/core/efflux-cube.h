/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gio/gio.h>

#include "efflux-error.h"

G_BEGIN_DECLS

struct wcsprm;

/* Brightness unit of the file, before conversion to K. */
typedef enum
{
  EFFLUX_BUNIT_K,          /* K, K (Tmb), K (Ta*), ... */
  EFFLUX_BUNIT_JY_BEAM,    /* Jy/beam in any spelling: converted with the Rayleigh-Jeans relation */
  EFFLUX_BUNIT_JY_PIXEL,   /* Jy/pixel, or Jy with no beam: kept as is, with a warning */
  EFFLUX_BUNIT_MISSING,    /* no BUNIT: assumed K, with a warning */
  EFFLUX_BUNIT_OTHER,      /* something else: kept as is, with a warning */
} EffluxBrightnessUnit;

/* Celestial frame of the file's sky axes. Positions are always given out in ICRS. */
typedef enum
{
  EFFLUX_SKY_ICRS,
  EFFLUX_SKY_FK5,
  EFFLUX_SKY_FK4,
  EFFLUX_SKY_GALACTIC,
} EffluxSkyFrame;

/* One spectral-line cube in memory.
 *
 * data holds nx * ny * nchan float32 values with the spectral axis contiguous:
 *   data[((gsize) y * nx + x) * nchan + k]
 * x runs along the longitude axis (RA or l), y along the latitude axis, both 0-based pixel
 * indices of the file's sky axes. Values are brightness in K (Jy/beam converted with the beam;
 * the beam efficiency is applied later, by the dossier). Missing values (BLANK, NaN) are NaN.
 *
 * velocity[k] is the centre of channel k: LSRK, radio convention, km/s, in the file's channel
 * order (it may decrease). */
typedef struct
{
  char                 *path;
  int                   hdu;             /* 1-based HDU number the cube was read from */

  gsize                 nx, ny, nchan;
  float                *data;

  double               *velocity;        /* nchan values, km/s */
  double                dv;              /* signed channel step, km/s */
  double                restfreq_hz;     /* 0 when the file gives none and none is needed */
  char                 *spectral_ctype;  /* CTYPE of the spectral axis as found in the file */
  char                 *specsys;         /* frame the file's velocities were in ("LSRK", ...) */

  char                 *bunit;           /* BUNIT as found, "" when absent */
  EffluxBrightnessUnit  bunit_kind;
  double               *k_per_unit;      /* nchan factors applied to reach K (1 when K) */

  gboolean              has_beam;
  double                bmaj_arcsec, bmin_arcsec, bpa_deg;   /* representative (median) beam */

  struct wcsprm        *sky;             /* 2-D celestial WCS; pixel coordinates 1-based as in FITS */
  EffluxSkyFrame        frame;
  double                equinox;         /* for FK4/FK5 */
  double                pixel_arcsec[2]; /* |CDELT| of the longitude and latitude axes */

  float                *rms;             /* nchan per-channel noise in K (robust; see efflux_cube_estimate_noise) */

  char                 *object;          /* OBJECT card, or NULL */
  GPtrArray            *notes;           /* char *: header fixes and warnings, one line each */
} EffluxCube;

/* Where and how a cube's data lie in its file (efflux_cube_load's options->layout): what a reader
 * that streams the data straight from the file needs (efflux-momentstream.c). */
typedef struct
{
  /* uncompressed, not gzipped, BITPIX = -32 with no BSCALE/BZERO scaling, the sky planes
   * contiguous (the loader's pread fast path): big-endian IEEE floats at data_offset */
  gboolean raw_float;
  gboolean spectral_slowest;  /* the spectral axis is the slowest of the three data axes */
  gboolean lng_fastest;       /* the longitude axis is the fastest: a plane is ny rows of nx values */
  guint64  data_offset;       /* file offset of the cube's first channel (after a channel subset) */
  guint64  channel_stride;    /* bytes from one channel's plane to the next (raw_float and
                               * spectral_slowest only; 0 otherwise) */
} EffluxCubeFileLayout;

typedef struct
{
  int  hdu;          /* 0: the primary HDU or the first image extension holding a cube */
  gboolean no_noise; /* skip the noise estimate */
  /* Optional: keep only the channels whose centre velocity lies in [v1_kms, v2_kms] (inclusive,
   * either order, as efflux_cube_channel_range), and read only those from the file; the noise
   * estimate then covers only them. FALSE (zero): all channels. Honoured when the spectral axis
   * is the slowest of the three data axes (the usual order); otherwise, and when no channel lies
   * in the range, all channels are kept. Callers find their channels with
   * efflux_cube_channel_range on the loaded cube either way. */
  gboolean channel_subset;
  double   v1_kms, v2_kms;
  /* Optional (FALSE: the data are read). TRUE: the header alone, with every check and conversion
   * of a full load (velocity[], k_per_unit[], sky WCS, beam, units, notes; the channel subset
   * above applies), data NULL and rms zeroed; the memory check, the read and the data checks (no
   * finite value) are skipped. For callers that read the data themselves. */
  gboolean header_only;
  /* Optional (NULL): filled with where the data lie in the file, with or without header_only. */
  EffluxCubeFileLayout *layout;
} EffluxCubeLoadOptions;

/* Read a FITS cube. Errors are EFFLUX_ERROR_* with one line naming the file and the header card. */
EffluxCube *efflux_cube_load       (const char                  *path,
                                    const EffluxCubeLoadOptions *options,
                                    GCancellable                *cancellable,
                                    EffluxProgressFunc           progress,
                                    gpointer                     progress_data,
                                    GError                     **error);

/* The byte-swap transpose of the float32 loader runs with AVX2 where the processor has it and
 * with SSE2 otherwise (the same bytes either way). allow_avx2 (FALSE) keeps it to SSE2, for the
 * tests and benchmarks that compare the two; uses_avx2 tells which one loads use now. */
void     efflux_cube_loader_allow_avx2 (gboolean allow);
gboolean efflux_cube_loader_uses_avx2  (void);
/* The same for AVX-512 (F and BW), used where the processor has it and AVX2 is allowed. */
void     efflux_cube_loader_allow_avx512 (gboolean allow);
gboolean efflux_cube_loader_uses_avx512  (void);

/* Threads of a load and of the noise estimate: one per processor available, at most
 * EFFLUX_CUBE_MAX_THREADS. force_threads (n) makes it n whatever the processors, for the tests
 * of the threaded code on small machines; 0 goes back to one per processor. */
#define EFFLUX_CUBE_MAX_THREADS 4
guint    efflux_cube_worker_threads    (void);
void     efflux_cube_force_threads     (guint n);

/* A cube in memory with a simple TAN sky grid centred on (ra0, dec0) at pixel ((nx+1)/2, (ny+1)/2)
 * (FITS 1-based), RA increasing to the left, and channels v0, v0 + dv, ...; data zeroed.
 * For tests, benchmarks and synthetic data. Returns NULL when the allocation fails. */
EffluxCube *efflux_cube_new_simple (gsize   nx,
                                    gsize   ny,
                                    gsize   nchan,
                                    double  ra0_deg,
                                    double  dec0_deg,
                                    double  pixel_arcsec,
                                    double  v0_kms,
                                    double  dv_kms,
                                    double  restfreq_hz);

void        efflux_cube_free       (EffluxCube *cube);

void        efflux_cube_add_note   (EffluxCube *cube,
                                    const char *format,
                                    ...) G_GNUC_PRINTF (2, 3);

/* 0-based pixel (x, y) <-> ICRS degrees. FALSE when the position has no valid projection. */
gboolean    efflux_cube_pixel_to_icrs (const EffluxCube *cube,
                                       double            x,
                                       double            y,
                                       double           *ra_deg,
                                       double           *dec_deg);
gboolean    efflux_cube_icrs_to_pixel (const EffluxCube *cube,
                                       double            ra_deg,
                                       double            dec_deg,
                                       double           *x,
                                       double           *y);

/* Channels whose centre velocity lies in [v1, v2] (inclusive, either order of v1 and v2, either
 * channel order). Sets the first and one-past-last channel index; FALSE when no channel does. */
gboolean    efflux_cube_channel_range (const EffluxCube *cube,
                                       double            v1,
                                       double            v2,
                                       gsize            *k_begin,
                                       gsize            *k_end);

static inline float *
efflux_cube_spectrum (const EffluxCube *cube,
                      gsize             x,
                      gsize             y)
{
  return cube->data + ((gsize) y * cube->nx + x) * cube->nchan;
}

/* Robust per-channel rms (K) from line-free data: 1.4826 x the median absolute deviation of the
 * finite values of each channel. Fills cube->rms. */
void        efflux_cube_estimate_noise (EffluxCube *cube);

/* Jy/beam -> K factor at a frequency for a Gaussian beam (REFERENCES 1.1, Rayleigh-Jeans). */
double      efflux_jy_beam_to_k (double freq_hz,
                                 double bmaj_arcsec,
                                 double bmin_arcsec);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxCube, efflux_cube_free)

G_END_DECLS
