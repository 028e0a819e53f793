/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include <wcslib/wcs.h>

#include "efflux-constants.h"
#include "efflux-cube.h"
#include "efflux-sky.h"

/* ------------------------------------------------------------------------------------------ */
/* In-memory cubes                                                                            */

EffluxCube *
efflux_cube_new_simple (gsize   nx,
                        gsize   ny,
                        gsize   nchan,
                        double  ra0_deg,
                        double  dec0_deg,
                        double  pixel_arcsec,
                        double  v0_kms,
                        double  dv_kms,
                        double  restfreq_hz)
{
  g_autoptr(EffluxCube) cube = NULL;
  gsize n, bytes;
  struct wcsprm *sky;

  if (nx == 0 || ny == 0 || nchan == 0)
    return NULL;
  if (!g_size_checked_mul (&n, nx, ny) || !g_size_checked_mul (&n, n, nchan) ||
      !g_size_checked_mul (&bytes, n, sizeof (float)))
    return NULL;

  cube = g_new0 (EffluxCube, 1);
  cube->notes = g_ptr_array_new_with_free_func (g_free);
  cube->path = g_strdup ("");
  cube->hdu = 1;
  cube->nx = nx;
  cube->ny = ny;
  cube->nchan = nchan;
  cube->data = g_try_malloc0 (bytes);
  if (cube->data == NULL)
    return NULL;

  cube->velocity = g_new (double, nchan);
  for (gsize k = 0; k < nchan; k++)
    cube->velocity[k] = v0_kms + (double) k * dv_kms;
  cube->dv = dv_kms;
  cube->restfreq_hz = restfreq_hz;
  cube->spectral_ctype = g_strdup ("VRAD");
  cube->specsys = g_strdup ("LSRK");
  cube->bunit = g_strdup ("K");
  cube->bunit_kind = EFFLUX_BUNIT_K;
  cube->k_per_unit = g_new (double, nchan);
  for (gsize k = 0; k < nchan; k++)
    cube->k_per_unit[k] = 1.0;
  cube->rms = g_new0 (float, nchan);

  sky = g_new0 (struct wcsprm, 1);
  sky->flag = -1;
  if (wcsini (1, 2, sky) != 0)
    {
      g_free (sky);
      return NULL;
    }
  cube->sky = sky;
  strcpy (sky->ctype[0], "RA---TAN");
  strcpy (sky->ctype[1], "DEC--TAN");
  strcpy (sky->cunit[0], "deg");
  strcpy (sky->cunit[1], "deg");
  sky->crpix[0] = ((double) nx + 1.0) / 2.0;
  sky->crpix[1] = ((double) ny + 1.0) / 2.0;
  sky->crval[0] = ra0_deg;
  sky->crval[1] = dec0_deg;
  sky->cdelt[0] = -pixel_arcsec / 3600.0;
  sky->cdelt[1] = pixel_arcsec / 3600.0;
  strcpy (sky->radesys, "ICRS");
  if (wcsset (sky) != 0)
    return NULL;
  cube->frame = EFFLUX_SKY_ICRS;
  cube->equinox = 2000.0;
  cube->pixel_arcsec[0] = pixel_arcsec;
  cube->pixel_arcsec[1] = pixel_arcsec;

  return g_steal_pointer (&cube);
}

void
efflux_cube_free (EffluxCube *cube)
{
  if (cube == NULL)
    return;
  g_free (cube->path);
  g_free (cube->data);
  g_free (cube->velocity);
  g_free (cube->spectral_ctype);
  g_free (cube->specsys);
  g_free (cube->bunit);
  g_free (cube->k_per_unit);
  if (cube->sky != NULL)
    {
      wcsfree (cube->sky);
      g_free (cube->sky);
    }
  g_free (cube->rms);
  g_free (cube->object);
  if (cube->notes != NULL)
    g_ptr_array_unref (cube->notes);
  g_free (cube);
}

void
efflux_cube_add_note (EffluxCube *cube,
                      const char *format,
                      ...)
{
  va_list args;
  char *line;

  va_start (args, format);
  line = g_strdup_vprintf (format, args);
  va_end (args);
  if (cube->notes == NULL)
    cube->notes = g_ptr_array_new_with_free_func (g_free);
  g_ptr_array_add (cube->notes, line);
}

gboolean
efflux_cube_pixel_to_icrs (const EffluxCube *cube,
                           double            x,
                           double            y,
                           double           *ra_deg,
                           double           *dec_deg)
{
  double pixcrd[2], imgcrd[2], world[2], phi, theta;
  int stat = 0;

  if (cube->sky == NULL)
    return FALSE;
  pixcrd[0] = x + 1.0;
  pixcrd[1] = y + 1.0;
  if (wcsp2s (cube->sky, 1, 2, pixcrd, imgcrd, &phi, &theta, world, &stat) != 0 || stat != 0)
    return FALSE;
  if (!isfinite (world[0]) || !isfinite (world[1]))
    return FALSE;
  return efflux_sky_to_icrs (cube->frame, cube->equinox, world[cube->sky->lng],
                             world[cube->sky->lat], ra_deg, dec_deg);
}

gboolean
efflux_cube_icrs_to_pixel (const EffluxCube *cube,
                           double            ra_deg,
                           double            dec_deg,
                           double           *x,
                           double           *y)
{
  double pixcrd[2], imgcrd[2], world[2], phi, theta, lon, lat;
  int stat = 0;

  if (cube->sky == NULL)
    return FALSE;
  if (!efflux_sky_from_icrs (cube->frame, cube->equinox, ra_deg, dec_deg, &lon, &lat))
    return FALSE;
  world[cube->sky->lng] = lon;
  world[cube->sky->lat] = lat;
  if (wcss2p (cube->sky, 1, 2, world, &phi, &theta, imgcrd, pixcrd, &stat) != 0 || stat != 0)
    return FALSE;
  if (!isfinite (pixcrd[0]) || !isfinite (pixcrd[1]))
    return FALSE;
  *x = pixcrd[0] - 1.0;
  *y = pixcrd[1] - 1.0;
  return TRUE;
}

gboolean
efflux_cube_channel_range (const EffluxCube *cube,
                           double            v1,
                           double            v2,
                           gsize            *k_begin,
                           gsize            *k_end)
{
  double lo = MIN (v1, v2), hi = MAX (v1, v2);
  /* Inclusive edges: a channel centre equal to an edge up to rounding (1e-9 of the channel
   * step, or 1e-12 km/s) counts as inside. */
  double eps = MAX (1e-9 * fabs (cube->dv), 1e-12);
  gsize first = G_MAXSIZE, last = 0;

  for (gsize k = 0; k < cube->nchan; k++)
    {
      double v = cube->velocity[k];

      if (v >= lo - eps && v <= hi + eps)
        {
          if (first == G_MAXSIZE)
            first = k;
          last = k;
        }
    }
  if (first == G_MAXSIZE)
    return FALSE;
  *k_begin = first;
  *k_end = last + 1;
  return TRUE;
}

double
efflux_jy_beam_to_k (double freq_hz,
                     double bmaj_arcsec,
                     double bmin_arcsec)
{
  /* REFERENCES 1.1: T = c^2 S 1e-23 / (2 k nu^2 Omega_b), Omega_b = pi bmaj bmin / (4 ln 2) */
  double omega = G_PI * (bmaj_arcsec * EFFLUX_ARCSEC) * (bmin_arcsec * EFFLUX_ARCSEC) /
                 (4.0 * G_LN2);

  return EFFLUX_C * EFFLUX_C * 1.0e-23 / (2.0 * EFFLUX_K * freq_hz * freq_hz * omega);
}

/* ------------------------------------------------------------------------------------------ */
/* Noise                                                                                       */

/* k-th smallest of v[0..n) (Wirth's selection, in place, expected O(n)); afterwards
 * v[0..k) <= v[k] <= v[k+1..n). */
static float
select_kth (float  *v,
            gssize  n,
            gssize  k)
{
  gssize l = 0, m = n - 1;

  while (l < m)
    {
      float x = v[k];
      gssize i = l, j = m;

      do
        {
          while (v[i] < x)
            i++;
          while (x < v[j])
            j--;
          if (i <= j)
            {
              float t = v[i];
              v[i] = v[j];
              v[j] = t;
              i++;
              j--;
            }
        }
      while (i <= j);
      if (j < k)
        l = i;
      if (k < i)
        m = j;
    }
  return v[k];
}

static double
median_in_place (float *v,
                 gsize  n)
{
  gsize half = n / 2;
  float upper = select_kth (v, (gssize) n, (gssize) half);
  float lower;

  if (n % 2 == 1)
    return upper;
  /* v[0..half) now holds the smaller values: the lower middle is their maximum */
  lower = v[0];
  for (gsize i = 1; i < half; i++)
    if (v[i] > lower)
      lower = v[i];
  return 0.5 * ((double) lower + (double) upper);
}

#define NOISE_MAX_SAMPLES 65536
#define NOISE_BLOCK 64

void
efflux_cube_estimate_noise (EffluxCube *cube)
{
  gsize npix = cube->nx * cube->ny;
  gsize step = (npix + NOISE_MAX_SAMPLES - 1) / NOISE_MAX_SAMPLES;
  gsize nsamp = (npix + step - 1) / step;
  g_autofree float *buf = NULL;
  gsize counts[NOISE_BLOCK];

  if (cube->rms == NULL)
    cube->rms = g_new0 (float, cube->nchan);
  if (npix == 0 || cube->nchan == 0)
    return;
  if (step == 0)
    step = 1;

  /* The sampled pixels are every step-th pixel: a fixed, deterministic subset. Channels are
   * taken NOISE_BLOCK at a time so each sampled spectrum is read in contiguous pieces. */
  buf = g_new (float, (gsize) NOISE_BLOCK * nsamp);
  for (gsize k0 = 0; k0 < cube->nchan; k0 += NOISE_BLOCK)
    {
      gsize nb = MIN (NOISE_BLOCK, cube->nchan - k0);

      memset (counts, 0, sizeof counts);
      for (gsize p = 0; p < npix; p += step)
        {
          const float *spec = cube->data + p * cube->nchan + k0;

          for (gsize b = 0; b < nb; b++)
            if (isfinite (spec[b]))
              buf[b * nsamp + counts[b]++] = spec[b];
        }
      for (gsize b = 0; b < nb; b++)
        {
          float *v = buf + b * nsamp;
          gsize n = counts[b];
          double med;

          if (n == 0)
            {
              cube->rms[k0 + b] = NAN;
              continue;
            }
          med = median_in_place (v, n);
          for (gsize i = 0; i < n; i++)
            v[i] = fabsf (v[i] - (float) med);
          cube->rms[k0 + b] = (float) (1.4826 * median_in_place (v, n));
        }
    }
}
