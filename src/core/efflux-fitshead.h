/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Internal to libefflux-core: the FITS header pieces shared by the cube reader (efflux-cube.c)
 * and the context-image reader (efflux-reproject.c): CFITSIO error messages, the card checks
 * made before wcslib parses a header, the world-coordinate description, the sky frame rules
 * and the 2-D sky WCS. Every message names the file and the header card. */
#pragma once

#include <fitsio.h>
#include <gio/gio.h>
#include <glib.h>
#include <glib/gstdio.h>

#include "efflux-cube.h"

G_BEGIN_DECLS

/* "PATH: WHAT: CFITSIO's text for STATUS (its first stacked message)", on one line; clears
 * CFITSIO's message stack. */
void efflux_fits_set_error (GError     **error,
                            const char  *path,
                            int          status,
                            const char  *what);

/* g_stat of PATH into *ST; FALSE with "PATH: cannot open: REASON" (EFFLUX_ERROR_INPUT for a
 * missing file, EFFLUX_ERROR_IO otherwise). */
gboolean efflux_fits_stat (const char  *path,
                           GStatBuf    *st,
                           GError     **error);

/* A new, empty EffluxCube for PATH's HDU (notes array made, nothing else set). */
EffluxCube *efflux_fits_new_cube (const char *path,
                                  int         hdu);

/* pread () of exactly LEN bytes at OFFSET, again after EINTR and short reads; FALSE with *err_no
 * (EIO for an early end of file) when that fails. */
gboolean efflux_fits_pread_all (int      fd,
                                void    *buf,
                                gsize    len,
                                guint64  offset,
                                int     *err_no);

#ifdef __SSE2__
#include <emmintrin.h>

/* Four big-endian 32-bit words (FITS data) to this machine's order, in SSE2 registers. */
static inline __m128i
efflux_bswap32x4 (__m128i v)
{
  v = _mm_shufflelo_epi16 (v, _MM_SHUFFLE (2, 3, 0, 1));
  v = _mm_shufflehi_epi16 (v, _MM_SHUFFLE (2, 3, 0, 1));
  return _mm_or_si128 (_mm_slli_epi16 (v, 8), _mm_srli_epi16 (v, 8));
}
#endif

/* How a threaded read of the data ended (the loader's and the moment stream's workers): 0 fine,
 * 1 a read error (err_no), 2 cancelled, 3 no memory for the read buffer. FALSE with the one-line
 * error naming PATH for 1-3 or when CANCELLABLE is cancelled. */
gboolean efflux_fits_read_outcome (int            failed,
                                   int            err_no,
                                   const char    *path,
                                   GCancellable  *cancellable,
                                   GError       **error);

/* Closes a CFITSIO file, ignoring NULL (the g_autoptr cleanup below). */
void efflux_fits_close (fitsfile *f);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (fitsfile, efflux_fits_close)

/* A newly allocated copy of S (NULL reads as "") without leading or trailing blanks. */
char *efflux_fits_trimmed (const char *s);

/* Makes the header text (NKEYS cards of 80 characters) safe for wcspih, whose parser trusts its
 * input: control and non-ASCII bytes become spaces and a string value without its closing quote
 * is refused (wcslib 7.12 overruns a buffer on it). With CHECK_NUMBERS, the WCS cards whose value
 * must be a number (CRVALn, CDELTn, CRPIXn, CROTAn, CDi_j, PCi_j, RESTFRQ, EQUINOX ...) are
 * refused unless they hold a finite one (wcspih would silently skip such a card). */
gboolean efflux_fits_check_header_cards (char        *header,
                                         int          nkeys,
                                         const char  *path,
                                         gboolean     check_numbers,
                                         GError     **error);

/* Reads the current HDU's header (through fits_convert_hdr2str when TILE_COMPRESSED), checks its
 * cards as efflux_fits_check_header_cards and parses it with wcspih. On success *WCSARR holds
 * *NWCS descriptions (free with wcsvfree) and the primary one (no alternate letter, else the
 * first) is returned. NO_WCS is the end of the message given when wcspih finds none
 * ("PATH: CTYPE1..CTYPEn: NO_WCS", n = NAXIS). */
struct wcsprm *efflux_fits_read_wcs (fitsfile        *f,
                                     gboolean         tile_compressed,
                                     const char      *path,
                                     int              naxis,
                                     gboolean         check_numbers,
                                     const char      *no_wcs,
                                     int             *nwcs,
                                     struct wcsprm  **wcsarr,
                                     GError         **error);

/* wcslib's header fixes (wcsfixi; the axis lengths NAXES of the NAXIS data axes, 1 beyond them)
 * then wcsset. Each fix is reported as a note of REPORT_TO unless it is NULL. FALSE with
 * "PATH: CTYPE/CRVAL/CDELT: the WCS cannot be used: WCSLIB'S REASON" when wcsset refuses. */
gboolean efflux_fits_fix_wcs (struct wcsprm   *wcs,
                              const LONGLONG  *naxes,
                              int              naxis,
                              EffluxCube      *report_to,
                              const char      *path,
                              GError         **error);

/* The celestial frame and equinox of WCS (after wcsset) into cube->frame and cube->equinox, with
 * the FITS defaults for a missing RADESYS or EQUINOX (ICRS without either, FK4 before 1984, FK5
 * from 1984; FK4 at 1950, FK5 at 2000). LNG_CTYPE is the longitude axis's CTYPE as the refusal of
 * a sky system other than equatorial or galactic names it. *DEFAULTED (may be NULL) tells whether
 * the frame came from the defaults (no RADESYS). Adds no note. */
gboolean efflux_fits_sky_frame (EffluxCube           *cube,
                                const struct wcsprm  *wcs,
                                const char           *path,
                                const char           *lng_ctype,
                                gboolean             *defaulted,
                                GError              **error);

/* The sky axes ILNG, ILAT (0-based) of WCS as the 2-D cube->sky (wcssub + wcsset) and the pixel
 * sizes cube->pixel_arcsec from its CDELT and PC. */
gboolean efflux_fits_sky_axes (EffluxCube     *cube,
                               struct wcsprm  *wcs,
                               int             ilng,
                               int             ilat,
                               const char     *path,
                               GError        **error);

G_END_DECLS
