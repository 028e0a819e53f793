/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-reproject"

#include "config.h"

#include <errno.h>
#include <math.h>
#include <string.h>
#include <sys/stat.h>

#include <fitsio.h>
#include <glib/gstdio.h>
#include <wcslib/wcs.h>
#include <wcslib/wcserr.h>
#include <wcslib/wcsfix.h>
#include <wcslib/wcshdr.h>
#include <wcslib/wcsmath.h>

#include "efflux-fitshead.h"
#include "efflux-io.h"
#include "efflux-reproject.h"
#include "efflux-sky.h"

#define MAX_AXES 8

EffluxCube *
efflux_image_load (const char  *path,
                   int          hdu,
                   GError     **error)
{
  g_autoptr(EffluxCube) image = NULL;
  g_autoptr(fitsfile) f = NULL;
  GStatBuf st;
  int status = 0, nhdu = 0, hdutype = 0, naxis = 0, chosen = 0, nwcs = 0;
  LONGLONG naxes[MAX_AXES] = { 0 };
  long fpixel[MAX_AXES], lpixel[MAX_AXES], inc[MAX_AXES];
  struct wcsprm *wcsarr = NULL, *wcs = NULL;
  int ilng, ilat, anynul = 0;
  gsize npix, bytes;
  gboolean ok = FALSE;
  float nulval = NAN;
  g_autofree float *plane = NULL;

  g_return_val_if_fail (path != NULL, NULL);
  wcserr_enable (1);

  if (!efflux_fits_stat (path, &st, error))
    return NULL;
  if (!S_ISREG (st.st_mode) || st.st_size == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: not a FITS file (no SIMPLE card)", path);
      return NULL;
    }
  if (fits_open_diskfile (&f, path, READONLY, &status) != 0)
    {
      f = NULL;
      efflux_fits_set_error (error, path, status, "not a readable FITS file");
      return NULL;
    }

  /* the HDU: the one asked for, or the first image with two axes or more */
  fits_get_num_hdus (f, &nhdu, &status);
  if (status != 0)
    {
      efflux_fits_set_error (error, path, status, "not a readable FITS file");
      return NULL;
    }
  if (hdu > nhdu)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: HDU %d: the file has only %d HDUs",
                   path, hdu, nhdu);
      return NULL;
    }
  for (int h = 1; h <= nhdu && chosen == 0; h++)
    {
      int nax = 0;

      if (hdu > 0 && h != hdu)
        continue;
      if (fits_movabs_hdu (f, h, &hdutype, &status) != 0)
        {
          efflux_fits_set_error (error, path, status, "cannot read the HDU list");
          return NULL;
        }
      if (hdutype != IMAGE_HDU)
        continue;
      fits_get_img_dim (f, &nax, &status);
      if (status == 0 && nax >= 2)
        {
          chosen = h;
          naxis = nax;
        }
    }
  if (chosen == 0)
    {
      if (hdu > 0)
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: HDU %d: NAXIS: not an image with two axes or more", path, hdu);
      else
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: NAXIS: no image HDU with two axes or more", path);
      return NULL;
    }
  if (naxis > MAX_AXES)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: NAXIS = %d: more than %d axes", path,
                   naxis, MAX_AXES);
      return NULL;
    }
  fits_get_img_sizell (f, naxis, naxes, &status);
  if (status != 0)
    {
      efflux_fits_set_error (error, path, status, "cannot read the image header");
      return NULL;
    }
  for (int i = 0; i < naxis; i++)
    if (naxes[i] <= 0)
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: NAXIS%d = %lld: an axis with no pixels",
                     path, i + 1, (long long) naxes[i]);
        return NULL;
      }

  /* the WCS */
  {
    gboolean tile_compressed = fits_is_compressed_image (f, &status);

    if (status != 0)
      {
        efflux_fits_set_error (error, path, status, "cannot read the header");
        return NULL;
      }
    wcs = efflux_fits_read_wcs (f, tile_compressed, path, naxis, FALSE, "the header has no world coordinates",
                                &nwcs, &wcsarr, error);
    if (wcs == NULL)
      return NULL;
  }

  image = efflux_fits_new_cube (path, chosen);
  if (wcs->naxis > MAX_AXES)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: WCSAXES = %d: more than %d axes", path, wcs->naxis, MAX_AXES);
      goto out;
    }
  if (!efflux_fits_fix_wcs (wcs, naxes, naxis, NULL, path, error))
    goto out;
  ilng = wcs->lng;
  ilat = wcs->lat;
  if (ilng < 0 || ilat < 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE1..CTYPE%d: no celestial axes (RA/DEC or GLON/GLAT): the image has no sky WCS",
                   path, wcs->naxis);
      goto out;
    }
  if (ilng >= naxis || ilat >= naxis)
    {
      int i = ilng >= naxis ? ilng : ilat;
      g_autofree char *t = efflux_fits_trimmed (wcs->ctype[i]);

      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE%d = '%s' is not one of the NAXIS = %d data axes", path, i + 1, t, naxis);
      goto out;
    }
  {
    g_autofree char *ctype = efflux_fits_trimmed (wcs->ctype[ilng]);

    if (!efflux_fits_sky_frame (image, wcs, path, ctype, NULL, error))
      goto out;
  }
  if (image->frame != EFFLUX_SKY_ICRS && image->frame != EFFLUX_SKY_GALACTIC)
    efflux_cube_add_note (image, "sky positions converted from %s (equinox %g) to ICRS",
                          efflux_sky_frame_name (image->frame), image->equinox);
  if (!efflux_fits_sky_axes (image, wcs, ilng, ilat, path, error))
    goto out;

  /* sizes, checked before anything is allocated */
  image->nx = (gsize) naxes[ilng];
  image->ny = (gsize) naxes[ilat];
  image->nchan = 1;
  if (!g_size_checked_mul (&npix, image->nx, image->ny)
      || !g_size_checked_mul (&bytes, npix, sizeof (float))
      || (guint64) bytes * 2 > efflux_memory_available ())
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: NAXIS%d x NAXIS%d = %lld x %lld: the image does not fit in the memory available",
                   path, ilng + 1, ilat + 1, (long long) naxes[ilng], (long long) naxes[ilat]);
      goto out;
    }
  for (int i = 0; i < naxis; i++)
    {
      fpixel[i] = 1;
      inc[i] = 1;
      lpixel[i] = (i == ilng || i == ilat) ? (long) naxes[i] : 1;
      if (i != ilng && i != ilat && naxes[i] > 1)
        {
          g_autofree char *t = efflux_fits_trimmed (i < wcs->naxis ? wcs->ctype[i] : "");

          efflux_cube_add_note (image, "NAXIS%d = %lld (CTYPE%d = '%s'): the first plane was read",
                                i + 1, (long long) naxes[i], i + 1, t);
        }
    }
  plane = g_try_malloc (bytes);
  if (plane == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: out of memory for %zu x %zu pixels",
                   path, image->nx, image->ny);
      goto out;
    }
  if (fits_read_subset (f, TFLOAT, fpixel, lpixel, inc, &nulval, plane, &anynul, &status) != 0)
    {
      efflux_fits_set_error (error, path, status, "the image data cannot be read");
      goto out;
    }
  if (ilng < ilat)
    image->data = g_steal_pointer (&plane);
  else
    {
      /* latitude first in the file: transpose to x (longitude) fastest */
      image->data = g_malloc (bytes);
      for (gsize y = 0; y < image->ny; y++)
        for (gsize x = 0; x < image->nx; x++)
          image->data[y * image->nx + x] = plane[x * image->ny + y];
    }

  image->velocity = g_new0 (double, 1);
  image->dv = 0.0;
  image->spectral_ctype = g_strdup ("");
  image->specsys = g_strdup ("");
  {
    char value[FLEN_VALUE] = "";
    int st2 = 0;

    if (fits_read_key (f, TSTRING, "BUNIT", value, NULL, &st2) == 0)
      image->bunit = g_strdup (value);
    else
      image->bunit = g_strdup ("");
    fits_clear_errmsg ();
    st2 = 0;
    if (fits_read_key (f, TSTRING, "OBJECT", value, NULL, &st2) == 0)
      image->object = g_strdup (value);
    fits_clear_errmsg ();
  }
  image->bunit_kind = image->bunit[0] ? EFFLUX_BUNIT_OTHER : EFFLUX_BUNIT_MISSING;
  image->k_per_unit = g_new (double, 1);
  image->k_per_unit[0] = 1.0;
  ok = TRUE;

out:
  wcsvfree (&nwcs, &wcsarr);
  return ok ? g_steal_pointer (&image) : NULL;
}

/* ---- reprojection ---- */

/* Bilinear interpolation at 0-based (u, v) in the first plane of src; NaN outside the pixel-centre
 * extent and where a pixel with a share is NaN (as scipy.ndimage.map_coordinates, order=1). */
static float
bilinear (const EffluxCube *src,
          double            u,
          double            v)
{
  gsize nx = src->nx, ny = src->ny, nc = src->nchan;
  gsize x0, y0, x1, y1;
  double fx, fy, sum = 0.0;
  const float *d = src->data;

  if (!(u >= 0.0 && v >= 0.0 && u <= nx - 1.0 && v <= ny - 1.0))
    return NAN;
  x0 = (gsize) floor (u);
  y0 = (gsize) floor (v);
  fx = u - (double) x0;
  fy = v - (double) y0;
  x1 = MIN (x0 + 1, nx - 1);
  y1 = MIN (y0 + 1, ny - 1);
  {
    const double w[4] = { (1 - fx) * (1 - fy), fx * (1 - fy), (1 - fx) * fy, fx * fy };
    const gsize at[4] = { y0 * nx + x0, y0 * nx + x1, y1 * nx + x0, y1 * nx + x1 };

    for (int i = 0; i < 4; i++)
      {
        if (w[i] == 0.0)
          continue;
        if (isnan (d[at[i] * nc]))
          return NAN;
        sum += w[i] * d[at[i] * nc];
      }
  }
  return (float) sum;
}

gboolean
efflux_reproject_image (const EffluxCube  *src,
                        const EffluxCube  *target,
                        float             *out,
                        gsize             *n_inside,
                        GCancellable      *cancellable,
                        GError           **error)
{
  gsize inside = 0;

  g_return_val_if_fail (src != NULL && target != NULL && out != NULL, FALSE);

  if (src->sky == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE1/CTYPE2: the image has no sky WCS", src->path ? src->path : "image");
      return FALSE;
    }
  if (target->sky == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE1/CTYPE2: the cube has no sky WCS", target->path ? target->path : "cube");
      return FALSE;
    }
  for (gsize y = 0; y < target->ny; y++)
    {
      if (g_cancellable_set_error_if_cancelled (cancellable, error))
        return FALSE;
      for (gsize x = 0; x < target->nx; x++)
        {
          double ra, dec, u, v;
          float *o = out + y * target->nx + x;

          *o = NAN;
          if (!efflux_cube_pixel_to_icrs (target, (double) x, (double) y, &ra, &dec)
              || !efflux_cube_icrs_to_pixel (src, ra, dec, &u, &v))
            continue;
          if (u >= 0.0 && v >= 0.0 && u <= src->nx - 1.0 && v <= src->ny - 1.0)
            inside++;
          *o = bilinear (src, u, v);
        }
    }
  if (n_inside != NULL)
    *n_inside = inside;
  if (inside == 0)
    {
      g_autofree char *c1 = efflux_fits_trimmed (src->sky->ctype[0]);
      g_autofree char *c2 = efflux_fits_trimmed (src->sky->ctype[1]);

      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CRVAL1/CRVAL2 = %.6g, %.6g (%s, %s): the image does not overlap the map of %s",
                   src->path ? src->path : "image", src->sky->crval[0], src->sky->crval[1], c1, c2,
                   target->path && target->path[0] ? target->path : "the cube");
      return FALSE;
    }
  return TRUE;
}
