/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-fitsout.h"
#include "efflux-constants.h"
#include "efflux-io.h"

#include <fitsio.h>
#include <math.h>
#include <string.h>
#include <wcs.h>
#include <wcshdr.h>
#include <wcsutil.h>

/* FITS writers. Every file is written by CFITSIO into a temporary file beside the target
 * (efflux_output_begin) and renamed into place when complete (efflux_output_commit). The
 * temporary file is opened with the "!" prefix, so CFITSIO creates it over the empty placeholder.
 *
 * Header conventions: Greisen & Calabretta 2002 (A&A 395, 1061) for the celestial WCS, written
 * by wcslib's wcshdo; Greisen et al. 2006 (A&A 446, 747) for the spectral axis: VRAD in m/s or
 * FREQ in Hz, the radio convention v = c (1 - nu / nu0) (REFERENCES 1.1). */

typedef struct
{
  fitsfile   *fptr;
  char       *tmp;
  const char *path;
  int         status;
} Writer;

static void
set_fits_error (GError     **error,
                const char  *path,
                const char  *what,
                int          status)
{
  char text[FLEN_STATUS] = "";

  fits_get_errstatus (status, text);
  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO,
               "%s: %s failed: %s (CFITSIO status %d)", path, what, text, status);
}

static gboolean
writer_open (Writer      *w,
             const char  *path,
             int          bitpix,
             int          naxis,
             long        *naxes,
             GError     **error)
{
  g_autofree char *spec = NULL;

  memset (w, 0, sizeof *w);
  w->path = path;
  w->tmp = efflux_output_begin (path, error);
  if (w->tmp == NULL)
    return FALSE;
  spec = g_strconcat ("!", w->tmp, NULL);
  if (fits_create_file (&w->fptr, spec, &w->status) != 0 ||
      fits_create_img (w->fptr, bitpix, naxis, naxes, &w->status) != 0)
    {
      set_fits_error (error, path, "creating the FITS file", w->status);
      if (w->fptr != NULL)
        {
          int ignore = 0;
          fits_close_file (w->fptr, &ignore);
        }
      efflux_output_abort (w->tmp);
      g_clear_pointer (&w->tmp, g_free);
      return FALSE;
    }
  return TRUE;
}

/* Close and commit, or (failed = TRUE or a CFITSIO error pending) discard. */
static gboolean
writer_finish (Writer      *w,
               gboolean     failed,
               GError     **error)
{
  gboolean ok;

  if (!failed && w->status != 0)
    {
      set_fits_error (error, w->path, "writing", w->status);
      failed = TRUE;
    }
  if (w->fptr != NULL)
    {
      int status = 0;
      fits_close_file (w->fptr, &status);
      w->fptr = NULL;
      if (!failed && status != 0)
        {
          set_fits_error (error, w->path, "closing", status);
          failed = TRUE;
        }
    }
  if (failed)
    {
      efflux_output_abort (w->tmp);
      g_clear_pointer (&w->tmp, g_free);
      return FALSE;
    }
  ok = efflux_output_commit (w->tmp, w->path, error);
  g_clear_pointer (&w->tmp, g_free);
  return ok;
}

static void
put_string (Writer     *w,
            const char *key,
            const char *value,
            const char *comment)
{
  fits_update_key_str (w->fptr, key, value, comment, &w->status);
}

static void
put_double (Writer     *w,
            const char *key,
            double      value,
            const char *comment)
{
  fits_update_key_dbl (w->fptr, key, value, -17, comment, &w->status);
}

/* DATE: the time of writing, or SOURCE_DATE_EPOCH when that is set (the reproducible-builds.org
 * convention), so that generated files can be byte-identical from run to run. */
static void
put_date (Writer *w)
{
  const char *epoch = g_getenv ("SOURCE_DATE_EPOCH");
  g_autoptr (GDateTime) when = NULL;
  g_autofree char *text = NULL;

  if (epoch != NULL && *epoch != '\0')
    {
      char *end = NULL;
      gint64 t = g_ascii_strtoll (epoch, &end, 10);
      if (end != NULL && *end == '\0')
        when = g_date_time_new_from_unix_utc (t);
    }
  if (when == NULL)
    when = g_date_time_new_now_utc ();
  text = g_date_time_format (when, "%Y-%m-%dT%H:%M:%S");
  put_string (w, "DATE", text, "file creation date (UTC)");
}

/* The celestial WCS cards of a 2-D sky WCS, from wcslib. WCSAXES is left out: the file may have
 * more axes than the sky WCS (a cube), and NAXIS then gives the count. */
static gboolean
put_sky_wcs (Writer          *w,
             struct wcsprm   *sky,
             GError         **error)
{
  int nkey = 0;
  char *header = NULL;
  int rc;

  if (sky == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: the cube has no sky coordinates to write", w->path);
      return FALSE;
    }
  rc = wcshdo (WCSHDO_P17, sky, &nkey, &header);
  if (rc != 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: the sky coordinates cannot be written as FITS cards: %s",
                   w->path, wcs_errmsg[rc]);
      wcsdealloc (header);
      return FALSE;
    }
  for (int i = 0; i < nkey && w->status == 0; i++)
    {
      char card[81];

      memcpy (card, header + 80 * i, 80);
      card[80] = '\0';
      /* MJDREF: wcslib writes its default 0 even when the WCS holds no time axis */
      if (strncmp (card, "WCSAXES ", 8) == 0 || strncmp (card, "COMMENT ", 8) == 0 ||
          strncmp (card, "MJDREF  ", 8) == 0 ||
          strncmp (card, "        ", 8) == 0)
        continue;
      g_strchomp (card);
      fits_write_record (w->fptr, card, &w->status);
    }
  wcsdealloc (header);
  return TRUE;
}

/* Extra cards: NULL-terminated triplets "KEY", "value as a FITS literal", "comment". */
static gboolean
put_cards (Writer             *w,
           const char * const *cards,
           GError            **error)
{
  if (cards == NULL)
    return TRUE;
  for (gsize i = 0; cards[i] != NULL; i += 3)
    {
      const char *key = cards[i];
      const char *value = cards[i + 1];
      const char *comment = value != NULL ? cards[i + 2] : NULL;
      g_autofree char *card = NULL;

      if (value == NULL || strlen (key) > 8 || strlen (key) == 0)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: header card '%s' cannot be written (keys have 1 to 8 characters and a value)",
                       w->path, key);
          return FALSE;
        }
      if (comment != NULL && *comment != '\0')
        card = g_strdup_printf ("%-8s= %20s / %s", key, value, comment);
      else
        card = g_strdup_printf ("%-8s= %20s", key, value);
      if (strlen (card) > 80)
        card[80] = '\0';
      fits_write_record (w->fptr, card, &w->status);
      if (cards[i + 2] == NULL)
        break;
    }
  return TRUE;
}

static void
put_beam_and_object (Writer           *w,
                     const EffluxCube *cube,
                     const char       *object)
{
  if (cube->has_beam)
    {
      put_double (w, "BMAJ", cube->bmaj_arcsec / 3600.0, "[deg] beam major axis FWHM");
      put_double (w, "BMIN", cube->bmin_arcsec / 3600.0, "[deg] beam minor axis FWHM");
      put_double (w, "BPA", cube->bpa_deg, "[deg] beam position angle, east of north");
    }
  if (object == NULL)
    object = cube->object;
  if (object != NULL)
    put_string (w, "OBJECT", object, NULL);
}

/* Integer output: BSCALE/BZERO from the finite range, NaN as BLANK. Values are scaled here (CFITSIO
 * is told to store them as given) so that the rounding is ours and deterministic. */
static void
integer_scaling (const float *data,
                 gsize        n,
                 int          bitpix,
                 double      *bscale,
                 double      *bzero,
                 long        *blank)
{
  double lo = G_MAXDOUBLE, hi = -G_MAXDOUBLE;
  double imax = bitpix == 16 ? 32767.0 : 2147483647.0;

  for (gsize i = 0; i < n; i++)
    if (isfinite (data[i]))
      {
        lo = MIN (lo, data[i]);
        hi = MAX (hi, data[i]);
      }
  *blank = bitpix == 16 ? -32768 : G_MININT32;
  if (lo > hi)
    {
      *bscale = 1.0;
      *bzero = 0.0;
      return;
    }
  /* stored integers span [-(imax - 1), imax]; the lowest value is kept for BLANK */
  *bzero = 0.5 * (lo + hi);
  *bscale = hi > lo ? (hi - lo) / (2.0 * (imax - 1.0)) : 1.0;
}

static gboolean
uniform_channels (const EffluxCube *cube,
                  double           *v0,
                  double           *dv)
{
  gsize n = cube->nchan;

  *v0 = cube->velocity[0];
  if (n == 1)
    {
      *dv = cube->dv != 0.0 ? cube->dv : 1.0;
      return TRUE;
    }
  *dv = (cube->velocity[n - 1] - cube->velocity[0]) / (double) (n - 1);
  if (*dv == 0.0 || !isfinite (*dv))
    return FALSE;
  for (gsize k = 0; k < n; k++)
    if (fabs (cube->velocity[k] - (*v0 + (double) k * *dv)) > 1e-6 * fabs (*dv))
      return FALSE;
  return TRUE;
}

gboolean
efflux_fits_write_cube (const EffluxCube            *cube,
                        const char                  *path,
                        const EffluxFitsCubeOptions *options,
                        GError                     **error)
{
  return efflux_fits_write_cube_with_date (cube, path, options, NULL, error);
}

gboolean
efflux_fits_write_cube_with_date (const EffluxCube            *cube,
                                  const char                  *path,
                                  const EffluxFitsCubeOptions *options,
                                  const char                  *date,
                                  GError                     **error)
{
  static const EffluxFitsCubeOptions defaults = { EFFLUX_FITS_SPECTRAL_VRAD, FALSE, -32, NULL, NULL };
  const EffluxFitsCubeOptions *o = options != NULL ? options : &defaults;
  int bitpix = o->bitpix != 0 ? o->bitpix : -32;
  gsize nx = cube->nx, ny = cube->ny, nchan = cube->nchan, nplane = nx * ny;
  long naxes[3] = { (long) nx, (long) ny, (long) nchan };
  g_autofree double *plane = NULL;
  g_autofree double *scale = NULL;   /* per channel: K -> output unit */
  double v0, dv, bscale = 1.0, bzero = 0.0;
  long blank = 0;
  Writer w;

  if (nx == 0 || ny == 0 || nchan == 0 || cube->data == NULL || cube->velocity == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the cube to write is empty", path);
      return FALSE;
    }
  if (bitpix != -32 && bitpix != -64 && bitpix != 16 && bitpix != 32)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_USAGE,
                   "%s: BITPIX = %d: only -32, -64, 16 and 32 are written", path, bitpix);
      return FALSE;
    }
  if (!uniform_channels (cube, &v0, &dv))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CDELT3: the channel velocities are not uniform to 1e-6 of the step, so one "
                   "linear spectral axis cannot describe them", path);
      return FALSE;
    }
  if ((o->spectral == EFFLUX_FITS_SPECTRAL_FREQ || o->jy_per_beam) &&
      !(cube->restfreq_hz > 0.0 && isfinite (cube->restfreq_hz)))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: RESTFRQ: a rest frequency is needed to write %s", path,
                   o->jy_per_beam ? "Jy/beam" : "a frequency axis");
      return FALSE;
    }
  if (o->jy_per_beam && !(cube->has_beam && cube->bmaj_arcsec > 0.0 && cube->bmin_arcsec > 0.0))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: BMAJ: Jy/beam needs a beam, and the cube has none", path);
      return FALSE;
    }

  scale = g_new (double, nchan);
  for (gsize k = 0; k < nchan; k++)
    {
      scale[k] = 1.0;
      if (o->jy_per_beam)
        {
          /* radio convention: nu = nu0 (1 - v / c) */
          double freq = cube->restfreq_hz * (1.0 - cube->velocity[k] / EFFLUX_C_KMS);
          scale[k] = 1.0 / efflux_jy_beam_to_k (freq, cube->bmaj_arcsec, cube->bmin_arcsec);
        }
    }

  if (bitpix > 0)
    {
      /* the scaling must see the output unit */
      g_autofree float *tmpv = g_new (float, nplane * nchan);
      for (gsize i = 0; i < nplane; i++)
        for (gsize k = 0; k < nchan; k++)
          tmpv[i * nchan + k] = (float) (cube->data[i * nchan + k] * scale[k]);
      integer_scaling (tmpv, nplane * nchan, bitpix, &bscale, &bzero, &blank);
    }

  if (!writer_open (&w, path, bitpix, 3, naxes, error))
    return FALSE;

  if (bitpix > 0)
    {
      fits_update_key_dbl (w.fptr, "BSCALE", bscale, -17, "physical = BZERO + BSCALE * stored", &w.status);
      fits_update_key_dbl (w.fptr, "BZERO", bzero, -17, NULL, &w.status);
      fits_update_key_lng (w.fptr, "BLANK", blank, "stored value of a missing pixel", &w.status);
      fits_set_bscale (w.fptr, 1.0, 0.0, &w.status);
      fits_set_imgnull (w.fptr, 0, &w.status);
    }

  if (!put_sky_wcs (&w, cube->sky, error))
    return writer_finish (&w, TRUE, error);

  if (o->spectral == EFFLUX_FITS_SPECTRAL_FREQ)
    {
      double nu0 = cube->restfreq_hz;
      put_string (&w, "CTYPE3", "FREQ", "frequency (LSRK)");
      put_string (&w, "CUNIT3", "Hz", NULL);
      put_double (&w, "CRPIX3", 1.0, NULL);
      put_double (&w, "CRVAL3", nu0 * (1.0 - v0 / EFFLUX_C_KMS), "[Hz] first channel");
      put_double (&w, "CDELT3", -nu0 * dv / EFFLUX_C_KMS, "[Hz] channel step");
    }
  else
    {
      put_string (&w, "CTYPE3", "VRAD", "radio velocity (LSRK)");
      put_string (&w, "CUNIT3", "m/s", NULL);
      put_double (&w, "CRPIX3", 1.0, NULL);
      put_double (&w, "CRVAL3", v0 * 1000.0, "[m/s] first channel");
      put_double (&w, "CDELT3", dv * 1000.0, "[m/s] channel step");
    }
  if (cube->restfreq_hz > 0.0)
    put_double (&w, "RESTFRQ", cube->restfreq_hz, "[Hz] rest frequency of the line");
  put_string (&w, "SPECSYS", "LSRK", "velocities relative to the kinematic LSR");
  put_string (&w, "BUNIT", o->jy_per_beam ? "Jy/beam" : "K",
              o->jy_per_beam ? "Rayleigh-Jeans scale, per beam" : "brightness temperature");
  put_beam_and_object (&w, cube, o->object);
  if (o->history != NULL)
    for (gsize i = 0; o->history[i] != NULL; i++)
      fits_write_history (w.fptr, o->history[i], &w.status);
  if (date == NULL)
    put_date (&w);
  else if (*date != '\0')
    put_string (&w, "DATE", date, "file creation date (UTC)");
  if (w.status != 0)
    return writer_finish (&w, FALSE, error);

  /* one channel at a time, transposed to FITS order (x fastest) */
  plane = g_new (double, nplane);
  for (gsize k = 0; k < nchan && w.status == 0; k++)
    {
      long fpixel[3] = { 1, 1, (long) k + 1 };

      for (gsize i = 0; i < nplane; i++)
        {
          double value = cube->data[i * nchan + k];
          value *= scale[k];
          if (bitpix > 0)
            value = isfinite (value) ? nearbyint ((value - bzero) / bscale) : (double) blank;
          plane[i] = value;
        }
      /* CFITSIO converts to the file's type: for BITPIX -32 a value that came from a float
       * (scale 1) goes back to the same float; integers were rounded above */
      fits_write_pix (w.fptr, TDOUBLE, fpixel, (LONGLONG) nplane, plane, &w.status);
    }
  return writer_finish (&w, FALSE, error);
}

gboolean
efflux_fits_write_sky_image (const EffluxCube   *like,
                             const float        *image,
                             const char         *bunit,
                             const char * const *cards,
                             const char         *path,
                             GError            **error)
{
  long naxes[2] = { (long) like->nx, (long) like->ny };
  long fpixel[2] = { 1, 1 };
  Writer w;

  if (like->nx == 0 || like->ny == 0 || image == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the image to write is empty", path);
      return FALSE;
    }
  if (!writer_open (&w, path, FLOAT_IMG, 2, naxes, error))
    return FALSE;
  if (!put_sky_wcs (&w, like->sky, error))
    return writer_finish (&w, TRUE, error);
  if (bunit != NULL)
    put_string (&w, "BUNIT", bunit, NULL);
  if (like->restfreq_hz > 0.0)
    put_double (&w, "RESTFRQ", like->restfreq_hz, "[Hz] rest frequency of the line");
  put_beam_and_object (&w, like, NULL);
  if (!put_cards (&w, cards, error))
    return writer_finish (&w, TRUE, error);
  put_date (&w);
  fits_write_pix (w.fptr, TFLOAT, fpixel, (LONGLONG) (like->nx * like->ny), (void *) image, &w.status);
  return writer_finish (&w, FALSE, error);
}

gboolean
efflux_fits_write_linear_image (const float        *image,
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
                                GError            **error)
{
  long naxes[2] = { (long) n1, (long) n2 };
  long fpixel[2] = { 1, 1 };
  Writer w;

  if (n1 == 0 || n2 == 0 || image == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the image to write is empty", path);
      return FALSE;
    }
  if (!writer_open (&w, path, FLOAT_IMG, 2, naxes, error))
    return FALSE;
  put_string (&w, "CTYPE1", ctype1, NULL);
  if (cunit1 != NULL)
    put_string (&w, "CUNIT1", cunit1, NULL);
  put_double (&w, "CRPIX1", 1.0, NULL);
  put_double (&w, "CRVAL1", crval1, NULL);
  put_double (&w, "CDELT1", cdelt1, NULL);
  put_string (&w, "CTYPE2", ctype2, NULL);
  if (cunit2 != NULL)
    put_string (&w, "CUNIT2", cunit2, NULL);
  put_double (&w, "CRPIX2", 1.0, NULL);
  put_double (&w, "CRVAL2", crval2, NULL);
  put_double (&w, "CDELT2", cdelt2, NULL);
  if (bunit != NULL)
    put_string (&w, "BUNIT", bunit, NULL);
  if (!put_cards (&w, cards, error))
    return writer_finish (&w, TRUE, error);
  put_date (&w);
  fits_write_pix (w.fptr, TFLOAT, fpixel, (LONGLONG) (n1 * n2), (void *) image, &w.status);
  return writer_finish (&w, FALSE, error);
}
