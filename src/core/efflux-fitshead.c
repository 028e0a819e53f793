/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The FITS header pieces shared by the cube reader and the context-image reader (see
 * efflux-fitshead.h). */
#include "config.h"

#include <errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include <wcslib/wcs.h>
#include <wcslib/wcserr.h>
#include <wcslib/wcsfix.h>
#include <wcslib/wcshdr.h>
#include <wcslib/wcsmath.h>

#include "efflux-fitshead.h"
#include "efflux-sky.h"

void
efflux_fits_set_error (GError     **error,
                       const char  *path,
                       int          status,
                       const char  *what)
{
  char text[FLEN_STATUS] = "";
  char detail[FLEN_ERRMSG] = "";
  char line[FLEN_ERRMSG];

  fits_get_errstatus (status, text);
  /* the first message on CFITSIO's stack is usually the most specific one */
  if (fits_read_errmsg (line) != 0)
    g_strlcpy (detail, line, sizeof detail);
  fits_clear_errmsg ();
  /* CFITSIO quotes a card's own bytes: keep the message on one line */
  for (char *c = detail; *c != '\0'; c++)
    if ((unsigned char) *c < 0x20 || (unsigned char) *c == 0x7f)
      *c = ' ';
  g_strstrip (detail);
  if (detail[0])
    g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: %s: %s (%s)", path, what, text, detail);
  else
    g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: %s: %s", path, what, text);
}

gboolean
efflux_fits_stat (const char  *path,
                  GStatBuf    *st,
                  GError     **error)
{
  if (g_stat (path, st) != 0)
    {
      int e = errno;

      g_set_error (error, EFFLUX_ERROR, e == ENOENT ? EFFLUX_ERROR_INPUT : EFFLUX_ERROR_IO,
                   "%s: cannot open: %s", path, g_strerror (e));
      return FALSE;
    }
  return TRUE;
}

EffluxCube *
efflux_fits_new_cube (const char *path,
                      int         hdu)
{
  EffluxCube *cube = g_new0 (EffluxCube, 1);

  cube->notes = g_ptr_array_new_with_free_func (g_free);
  cube->path = g_strdup (path);
  cube->hdu = hdu;
  return cube;
}

gboolean
efflux_fits_pread_all (int      fd,
                       void    *buf,
                       gsize    len,
                       guint64  offset,
                       int     *err_no)
{
  gsize got = 0;

  while (got < len)
    {
      ssize_t n = pread (fd, (char *) buf + got, len - got, (off_t) (offset + got));

      if (n < 0 && errno == EINTR)
        continue;
      if (n <= 0)
        {
          *err_no = n < 0 ? errno : EIO;
          return FALSE;
        }
      got += (gsize) n;
    }
  return TRUE;
}

gboolean
efflux_fits_read_outcome (int            failed,
                          int            err_no,
                          const char    *path,
                          GCancellable  *cancellable,
                          GError       **error)
{
  if (failed == 2 || g_cancellable_is_cancelled (cancellable))
    {
      if (!g_cancellable_set_error_if_cancelled (cancellable, error))
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_CANCELLED, "%s: cancelled", path);
      return FALSE;
    }
  if (failed == 1)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: the data cannot be read: %s", path,
                   g_strerror (err_no));
      return FALSE;
    }
  if (failed == 3)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY, "%s: no memory for the read buffer", path);
      return FALSE;
    }
  return TRUE;
}

void
efflux_fits_close (fitsfile *f)
{
  int status = 0;

  if (f != NULL)
    fits_close_file (f, &status);
}

char *
efflux_fits_trimmed (const char *s)
{
  char *t = g_strdup (s ? s : "");

  return g_strstrip (t);
}

/* The WCS cards whose value must be a finite number (wcspih skips a card it cannot parse, so
 * CDELT3 = 'fast' or CRVAL3 = NAN would silently become the default). */
static gboolean
wcs_number_card (const char *key)
{
  static const char *const words[] = { "CRVAL", "CDELT", "CRPIX", "CROTA", "CD", "PC" };
  static const char *const exact[] = { "RESTFRQ", "RESTFREQ", "RESTWAV", "EQUINOX", "EPOCH" };

  for (guint w = 0; w < G_N_ELEMENTS (exact); w++)
    if (strcmp (key, exact[w]) == 0)
      return TRUE;
  for (guint w = 0; w < G_N_ELEMENTS (words); w++)
    if (g_str_has_prefix (key, words[w]) && g_ascii_isdigit (key[strlen (words[w])]))
      {
        const char *r = key + strlen (words[w]);

        while (g_ascii_isdigit (*r) || *r == '_')
          r++;
        /* an alternate description's letter may follow */
        return *r == '\0' || (g_ascii_isupper (r[0]) && r[1] == '\0');
      }
  return FALSE;
}

gboolean
efflux_fits_check_header_cards (char        *header,
                                int          nkeys,
                                const char  *path,
                                gboolean     check_numbers,
                                GError     **error)
{
  for (int c = 0; c < nkeys; c++)
    {
      char *card = header + (gsize) c * 80;
      int i = 10;

      if (strnlen (card, 80) < 80)
        break;
      for (int j = 0; j < 80; j++)
        if ((unsigned char) card[j] < 0x20 || (unsigned char) card[j] > 0x7e)
          card[j] = ' ';
      if (card[8] != '=' || card[9] != ' ')
        continue;
      while (i < 80 && card[i] == ' ')
        i++;
      if (check_numbers)
        {
          g_autofree char *key = g_strstrip (g_strndup (card, 8));

          if (wcs_number_card (key))
            {
              g_autofree char *value = g_strndup (card + i, (gsize) (80 - i));
              char *slash = strchr (value, '/'), *end = NULL;
              double v;

              if (slash != NULL)
                *slash = '\0';
              g_strstrip (value);
              g_strdelimit (value, "Dd", 'E');
              v = g_ascii_strtod (value, &end);
              if (value[0] == '\0' || end == value || *end != '\0' || !isfinite (v))
                {
                  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: %s = %s: not a finite number",
                               path, key, value[0] ? value : "(no value)");
                  return FALSE;
                }
            }
        }
      if (i < 80 && card[i] == '\'')
        {
          gboolean closed = FALSE;

          for (i = i + 1; i < 80; i++)
            if (card[i] == '\'')
              {
                if (i + 1 < 80 && card[i + 1] == '\'')
                  i++;
                else
                  {
                    closed = TRUE;
                    break;
                  }
              }
          if (!closed)
            {
              g_autofree char *key = g_strndup (card, 8);

              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: %s: the string value has no closing quote", path, g_strstrip (key));
              return FALSE;
            }
        }
    }
  return TRUE;
}

struct wcsprm *
efflux_fits_read_wcs (fitsfile        *f,
                      gboolean         tile_compressed,
                      const char      *path,
                      int              naxis,
                      gboolean         check_numbers,
                      const char      *no_wcs,
                      int             *nwcs,
                      struct wcsprm  **wcsarr,
                      GError         **error)
{
  char *header = NULL;
  int status = 0, nkeys = 0, nreject = 0, st2 = 0;
  struct wcsprm *wcs;

  *nwcs = 0;
  *wcsarr = NULL;
  if (tile_compressed)
    fits_convert_hdr2str (f, 1, NULL, 0, &header, &nkeys, &status);
  else
    fits_hdr2str (f, 1, NULL, 0, &header, &nkeys, &status);
  if (status != 0)
    {
      efflux_fits_set_error (error, path, status, "cannot read the header");
      return NULL;
    }
  if (!efflux_fits_check_header_cards (header, nkeys, path, check_numbers, error))
    {
      fits_free_memory (header, &st2);
      return NULL;
    }
  if (wcspih (header, nkeys, WCSHDR_all, 0, &nreject, nwcs, wcsarr) != 0 || *nwcs == 0)
    {
      fits_free_memory (header, &st2);
      if (*wcsarr != NULL)
        wcsvfree (nwcs, wcsarr);
      *nwcs = 0;
      *wcsarr = NULL;
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: CTYPE1..CTYPE%d: %s", path, naxis, no_wcs);
      return NULL;
    }
  fits_free_memory (header, &st2);
  wcs = &(*wcsarr)[0];
  for (int i = 0; i < *nwcs; i++)
    if ((*wcsarr)[i].alt[0] == ' ' || (*wcsarr)[i].alt[0] == '\0')
      {
        wcs = &(*wcsarr)[i];
        break;
      }
  return wcs;
}

gboolean
efflux_fits_fix_wcs (struct wcsprm   *wcs,
                     const LONGLONG  *naxes,
                     int              naxis,
                     EffluxCube      *report_to,
                     const char      *path,
                     GError         **error)
{
  static const char *const fixname[NWCSFIX] = {
    "cdfix", "datfix", "obsfix", "unitfix", "spcfix", "celfix", "cylfix",
  };
  int fixstat[NWCSFIX];
  struct wcserr info[NWCSFIX];
  g_autofree int *inaxes = g_new (int, MAX (wcs->naxis, 1));

  memset (info, 0, sizeof info);
  for (int i = 0; i < wcs->naxis; i++)
    inaxes[i] = i >= naxis ? 1 : naxes[i] > G_MAXINT ? G_MAXINT : (int) naxes[i];
  wcsfixi (0, inaxes, wcs, fixstat, info);
  for (int i = 0; i < NWCSFIX; i++)
    {
      if (info[i].msg != NULL)
        {
          if (report_to != NULL && fixstat[i] == FIXERR_SUCCESS && info[i].msg[0])
            efflux_cube_add_note (report_to, "header fixed by wcslib %s: %s", fixname[i], info[i].msg);
          else if (report_to != NULL && fixstat[i] > 0 && info[i].msg[0])
            efflux_cube_add_note (report_to, "wcslib %s could not fix the header: %s", fixname[i], info[i].msg);
          free (info[i].msg);
        }
      else if (report_to != NULL && fixstat[i] == FIXERR_SUCCESS)
        efflux_cube_add_note (report_to, "header fixed by wcslib %s", fixname[i]);
    }
  if (wcsset (wcs) != 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: CTYPE/CRVAL/CDELT: the WCS cannot be used: %s",
                   path, wcs->err && wcs->err->msg ? wcs->err->msg : "wcslib refused it");
      return FALSE;
    }
  return TRUE;
}

gboolean
efflux_fits_sky_frame (EffluxCube           *cube,
                       const struct wcsprm  *wcs,
                       const char           *path,
                       const char           *lng_ctype,
                       gboolean             *defaulted,
                       GError              **error)
{
  g_autofree char *lngtyp = efflux_fits_trimmed (wcs->lngtyp);
  g_autofree char *radesys = efflux_fits_trimmed (wcs->radesys);
  gboolean have_eq = !undefined (wcs->equinox) && wcs->equinox != 0.0;

  if (defaulted != NULL)
    *defaulted = FALSE;
  if (strcmp (lngtyp, "GLON") == 0)
    {
      cube->frame = EFFLUX_SKY_GALACTIC;
      cube->equinox = 2000.0;
      return TRUE;
    }
  if (strcmp (lngtyp, "RA") != 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE%d = '%s': only equatorial (RA/DEC) and galactic (GLON/GLAT) sky axes are read",
                   path, wcs->lng + 1, lng_ctype);
      return FALSE;
    }
  if (radesys[0] == '\0')
    {
      cube->frame = !have_eq ? EFFLUX_SKY_ICRS
                    : wcs->equinox < 1984.0 ? EFFLUX_SKY_FK4 : EFFLUX_SKY_FK5;
      if (defaulted != NULL)
        *defaulted = TRUE;
    }
  else if (strcmp (radesys, "ICRS") == 0)
    cube->frame = EFFLUX_SKY_ICRS;
  else if (strcmp (radesys, "FK5") == 0)
    cube->frame = EFFLUX_SKY_FK5;
  else if (strcmp (radesys, "FK4") == 0)
    cube->frame = EFFLUX_SKY_FK4;
  else
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: RADESYS = '%s': only ICRS, FK5 and FK4 equatorial frames are read", path, radesys);
      return FALSE;
    }
  if (cube->frame == EFFLUX_SKY_FK5)
    cube->equinox = have_eq ? wcs->equinox : 2000.0;
  else if (cube->frame == EFFLUX_SKY_FK4)
    cube->equinox = have_eq ? wcs->equinox : 1950.0;
  else
    cube->equinox = 2000.0;
  if (!efflux_sky_frame_supported (cube->frame, cube->equinox))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: EQUINOX = %g: %s positions are read at equinox %s only", path, cube->equinox,
                   efflux_sky_frame_name (cube->frame), cube->frame == EFFLUX_SKY_FK5 ? "2000" : "1800 to 2100");
      return FALSE;
    }
  return TRUE;
}

gboolean
efflux_fits_sky_axes (EffluxCube     *cube,
                      struct wcsprm  *wcs,
                      int             ilng,
                      int             ilat,
                      const char     *path,
                      GError        **error)
{
  int axes[2] = { ilng + 1, ilat + 1 };
  int nsub = 2;

  cube->sky = g_new0 (struct wcsprm, 1);
  cube->sky->flag = -1;
  if (wcssub (1, wcs, &nsub, axes, cube->sky) != 0 || nsub != 2 || wcsset (cube->sky) != 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE%d/CTYPE%d: the sky axes cannot be separated from the others: %s", path,
                   ilng + 1, ilat + 1,
                   cube->sky->err && cube->sky->err->msg ? cube->sky->err->msg : "wcslib refused them");
      return FALSE;
    }
  for (int j = 0; j < 2; j++)
    {
      double a = cube->sky->cdelt[0] * cube->sky->pc[0 * 2 + j];
      double b = cube->sky->cdelt[1] * cube->sky->pc[1 * 2 + j];

      cube->pixel_arcsec[j] = 3600.0 * sqrt (a * a + b * b);
    }
  return TRUE;
}
