/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Spectral-line cubes: the in-memory cube and the FITS reader (CFITSIO + wcslib).
 *
 * Reading: the HDU is chosen, its sizes checked against the file and the memory available
 * before anything large is allocated; the header goes through wcslib's wcspih and wcsfixi
 * (every fix reported in cube->notes), the sky axes become a 2-D wcsprm (wcssub) in their own
 * frame (ICRS, FK5, FK4, galactic; conversions to ICRS in efflux-sky.c), the spectral axis is
 * evaluated channel by channel with wcsp2s at the reference sky pixel and turned into radio
 * velocity through nu/nu0 (Greisen et al. 2006, A&A 446, 747, table 1), moved from BARYCENT or
 * HELIOCEN to LSRK with the standard solar motion, and the brightness converted to K (Jy/beam with
 * the Rayleigh-Jeans relation, REFERENCES.md 1.1). The data are read in chunks of the slowest
 * file axis and transposed so the spectral axis is contiguous: unscaled float32 files with
 * batched reads on one thread per processor (up to four), everything else (integers, scaling, BLANK,
 * gzip, tile compression) through CFITSIO.
 *
 * Loading design (speed; tests/bench/bench-load.c measures it against `cat FILE > /dev/null`):
 * - the voxel array lies in whole 2 MiB transparent huge pages (aligned, madvise before the first
 *   touch): one page fault per 2 MiB. Faulting 256 MiB in 4 KiB pages took 1.2 s of CPU on the
 *   virtual machine we measure on (about 18 us a fault), in huge pages 0.02 s, as much as a
 *   memset. The read buffers are huge pages too.
 * - unscaled float32 (the common case, spectral axis slowest in the file): units of 64 channels
 *   by a few rows, about 4 MiB, are read by the worker threads (one per processor, up to four;
 *   a unit's 64 reads in one io_uring system call where the kernel offers it, efflux-readbatch.c,
 *   else 64 preads) and go from the buffer to the array in one pass: byte swap and transpose in
 *   vector registers (AVX-512 by 16 x 16 blocks or AVX2 by 8 x 8 where the processor has them,
 *   chosen at run time, else SSE2 by 4 x 4 blocks), 256 contiguous bytes of each spectrum stored
 *   at once with non-temporal stores (swap_transpose_unit). AVX2 took 12 % off the load time,
 *   measured against SSE2 back to back (medians 46 ms against 53 ms) on an earlier machine; on a
 *   later one (AMD, AVX-512) AVX-512 took 2-3 % off AVX2 (43.2 against 44.6 ms and 44.8 against
 *   45.5, medians of 41 interleaved loads) and the io_uring batches 7 % off the preads (42.5
 *   against 45.6 ms, 6.5 ms of CPU time); mapping the file and reading it straight from the page cache
 *   was slower still (86-99 ms with MAP_POPULATE and software prefetch). The slices in the buffer are padded by one cache line (no cache-set conflicts between them) and
 *   the units go block of rows by block of rows (a huge page of the array is filled soon after
 *   it is zeroed); each gave about 10 % of the load time, measured back to back. On the virtual
 *   machine we measure on, mapping the file instead of pread () was 20 % faster when its page
 *   cache was in huge folios and 3x slower when in 4 KiB pages, so we read.
 * - nothing else touches the whole array during a load, except the Jy/beam conversion (only for
 *   such cubes) and the noise estimate, which callers that do not need it skip (no_noise: the
 *   CLI's moment without a clip, pv). The noise is not deferred: cube->rms is a field its users
 *   read directly. What a load costs beyond the copy from the page cache is then mostly the
 *   kernel's zeroing of the fresh pages. */
#include "config.h"

#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

#include <errno.h>
#include <fcntl.h>
#include <sys/mman.h>
#ifdef __SSE2__
#include <emmintrin.h>
#endif
#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#include <immintrin.h>
#endif
#include <unistd.h>
#include <stdio.h>
#include <sys/stat.h>

#include <fitsio.h>
#include <glib/gstdio.h>
#include <wcslib/wcs.h>
#include <wcslib/wcserr.h>
#include <wcslib/wcsfix.h>
#include <wcslib/wcshdr.h>
#include <wcslib/wcsmath.h>

#include "efflux-constants.h"
#include "efflux-cube.h"
#include "efflux-fitshead.h"
#include "efflux-io.h"
#include "efflux-readbatch.h"
#include "efflux-sky.h"

/* ------------------------------------------------------------------------------------------ */
/* In-memory cubes                                                                            */

static float *alloc_voxels (gsize bytes);
static void *alloc_voxels_huge (gsize bytes);

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
  /* in huge pages, as the loader's (a moment-map query reads one line of each spectrum) */
  cube->data = alloc_voxels (bytes);
  if (cube->data != NULL)
    memset (cube->data, 0, bytes);
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

/* wcslib's transformations are re-entrant once wcsset has run, except for their error records: a
 * failed call allocates the wcsprm's error message, and two threads failing on one cube at once
 * (the sky grid on the UI thread, a reprojection or wing-contour worker) race on it and lose one.
 * One lock around the two calls of the whole library. */
static GMutex wcs_call_lock;

gboolean
efflux_cube_pixel_to_icrs (const EffluxCube *cube,
                           double            x,
                           double            y,
                           double           *ra_deg,
                           double           *dec_deg)
{
  double pixcrd[2], imgcrd[2], world[2], phi, theta;
  int stat = 0;
  gboolean ok;

  if (cube->sky == NULL)
    return FALSE;
  pixcrd[0] = x + 1.0;
  pixcrd[1] = y + 1.0;
  g_mutex_lock (&wcs_call_lock);
  ok = wcsp2s (cube->sky, 1, 2, pixcrd, imgcrd, &phi, &theta, world, &stat) == 0 && stat == 0;
  g_mutex_unlock (&wcs_call_lock);
  if (!ok)
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
  gboolean ok;

  if (cube->sky == NULL)
    return FALSE;
  if (!efflux_sky_from_icrs (cube->frame, cube->equinox, ra_deg, dec_deg, &lon, &lat))
    return FALSE;
  world[cube->sky->lng] = lon;
  world[cube->sky->lat] = lat;
  g_mutex_lock (&wcs_call_lock);
  ok = wcss2p (cube->sky, 1, 2, world, &phi, &theta, imgcrd, pixcrd, &stat) == 0 && stat == 0;
  g_mutex_unlock (&wcs_call_lock);
  if (!ok)
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
/* Threads                                                                                     */

/* How many threads a load and the noise estimate use: one per processor this process may run on,
 * at most EFFLUX_CUBE_MAX_THREADS (each holds a read buffer of about 4 MiB, or 16 MiB of noise
 * samples; past a few threads the copy from the page cache is bound by the memory bandwidth).
 * We measure on two cores only, so the cap of four is a judgement, not a measurement. */
static gint forced_threads;   /* 0: one per processor; tests set it with efflux_cube_force_threads */

guint
efflux_cube_worker_threads (void)
{
  guint forced = (guint) g_atomic_int_get (&forced_threads);

  return CLAMP (forced != 0 ? forced : g_get_num_processors (), 1u, (guint) EFFLUX_CUBE_MAX_THREADS);
}

void
efflux_cube_force_threads (guint n)
{
  g_atomic_int_set (&forced_threads, (gint) MIN (n, (guint) EFFLUX_CUBE_MAX_THREADS));
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

#define HIST_BINS 4096
#define HIST_MIN_N 8192

/* Smallest and largest of v[0..n) (finite values), four lanes at a time with SSE2. */
static void
min_max (const float *v,
         gsize        n,
         float       *mn,
         float       *mx)
{
  float lo = v[0], hi = v[0];
  gsize i = 0;

#ifdef __SSE2__
  if (n >= 8)
    {
      __m128 l = _mm_loadu_ps (v), h = l;
      float ls[4], hs[4];

      for (i = 4; i + 4 <= n; i += 4)
        {
          __m128 x = _mm_loadu_ps (v + i);

          l = _mm_min_ps (l, x);
          h = _mm_max_ps (h, x);
        }
      _mm_storeu_ps (ls, l);
      _mm_storeu_ps (hs, h);
      for (int j = 0; j < 4; j++)
        {
          lo = MIN (lo, ls[j]);
          hi = MAX (hi, hs[j]);
        }
    }
#endif
  for (; i < n; i++)
    {
      lo = MIN (lo, v[i]);
      hi = MAX (hi, v[i]);
    }
  *mn = lo;
  *mx = hi;
}

/* bins[i] = the histogram bin of v[i]: (v[i] - mn) * scale truncated, at most HIST_BINS - 1, in
 * float arithmetic. Each step (a subtraction, a product by a positive number, a truncation) is
 * monotonic under rounding, so x <= y gives bin (x) <= bin (y): the bins split the values in
 * order, which is all the rank search needs. */
static void
bin_values (const float *v,
            gsize        n,
            float        mn,
            float        scale,
            guint16     *bins)
{
  gsize i = 0;

#ifdef __SSE2__
  {
    __m128 m = _mm_set1_ps (mn), sc = _mm_set1_ps (scale), top = _mm_set1_ps ((float) (HIST_BINS - 1));

    for (; i + 8 <= n; i += 8)
      {
        __m128 a = _mm_min_ps (_mm_mul_ps (_mm_sub_ps (_mm_loadu_ps (v + i), m), sc), top);
        __m128 b = _mm_min_ps (_mm_mul_ps (_mm_sub_ps (_mm_loadu_ps (v + i + 4), m), sc), top);

        /* 0 .. 4095 fit the signed 16-bit saturation of the pack */
        _mm_storeu_si128 ((__m128i *) (bins + i),
                          _mm_packs_epi32 (_mm_cvttps_epi32 (a), _mm_cvttps_epi32 (b)));
      }
  }
#endif
  for (; i < n; i++)
    bins[i] = (guint16) MIN ((v[i] - mn) * scale, (float) (HIST_BINS - 1));
}

/* The values of ranks k_lo and k_hi = k_lo or k_lo + 1 of v[0..n), exactly. Large arrays: a
 * histogram over [min, max] finds the bins holding the two ranks, the values of those bins are
 * moved to the front and the search goes on among them; small ones (or when the histogram does
 * not split the values, or the range is too wide or too narrow for float bins): the selection
 * above. v is reordered; bins is scratch of n entries. Measured on the noise estimate of a
 * 512 x 512 x 1024 cube (1024 channels, 65536 samples each, two ranks per channel): 1.0 s with
 * the bins computed twice in double arithmetic, 0.31 s with them computed once, in SSE2. */
static void
ranks_in_place (float   *v,
                gsize    n,
                gsize    k_lo,
                gsize    k_hi,
                float   *lo,
                float   *hi,
                guint16 *bins)
{
  float mn, mx;
  double range;
  gsize cum = 0, b_lo = 0, b_hi = 0, base = 0, m = 0;

  if (n >= HIST_MIN_N)
    {
      min_max (v, n, &mn, &mx);
      if (!(mx > mn))
        {
          *lo = *hi = mn;
          return;
        }
      range = (double) mx - (double) mn;
      if (range < 1e37 && range > 1e-30)
        {
          guint32 counts[HIST_BINS] = { 0 };

          bin_values (v, n, mn, (float) (HIST_BINS / range), bins);
          for (gsize i = 0; i < n; i++)
            counts[bins[i]]++;
          for (gsize b = 0; b < HIST_BINS; b++)
            {
              if (cum + counts[b] > k_lo)
                {
                  b_lo = b;
                  base = cum;
                  break;
                }
              cum += counts[b];
            }
          cum = base;
          for (gsize b = b_lo; b < HIST_BINS; b++)
            {
              if (cum + counts[b] > k_hi)
                {
                  b_hi = b;
                  break;
                }
              cum += counts[b];
            }
          /* the values of bins b_lo .. b_hi to the front, in place */
          for (gsize i = 0; i < n; i++)
            if ((gsize) bins[i] - b_lo <= b_hi - b_lo)
              {
                float t = v[m];

                v[m] = v[i];
                v[i] = t;
                m++;
              }
          if (m < n)
            {
              ranks_in_place (v, m, k_lo - base, k_hi - base, lo, hi, bins);
              return;
            }
        }
    }
  *hi = select_kth (v, (gssize) n, (gssize) k_hi);
  if (k_lo == k_hi)
    *lo = *hi;
  else
    {
      /* v[0..k_hi) now holds the smaller values: rank k_hi - 1 is their maximum */
      float l = v[0];

      for (gsize i = 1; i < k_hi; i++)
        if (v[i] > l)
          l = v[i];
      *lo = l;
    }
}

static double
median_in_place (float   *v,
                 gsize    n,
                 guint16 *bins)
{
  float lower, upper;

  ranks_in_place (v, n, (n - 1) / 2, n / 2, &lower, &upper, bins);
  return 0.5 * ((double) lower + (double) upper);
}

#define NOISE_MAX_SAMPLES 65536
#define NOISE_BLOCK 64
#define NOISE_AHEAD 8

typedef struct
{
  EffluxCube *cube;
  gsize       npix, step, nsamp, stride;
  gint        next;   /* atomic: next block of channels */
} NoiseJob;

static gpointer
noise_worker (gpointer data)
{
  NoiseJob *job = data;
  EffluxCube *cube = job->cube;
  gsize nchan = cube->nchan;
  /* one row per channel of the block; the row stride is padded off a power of two so the
   * NOISE_BLOCK rows do not fight over the same cache sets */
  g_autofree float *buf = g_try_new (float, (gsize) NOISE_BLOCK * job->stride);
  g_autofree guint16 *bins = g_try_new (guint16, job->stride);
  gsize counts[NOISE_BLOCK];

  if (buf == NULL || bins == NULL)
    return NULL;
  for (;;)
    {
      gsize k0 = (gsize) g_atomic_int_add (&job->next, 1) * NOISE_BLOCK;
      gsize nb;

      if (k0 >= nchan)
        break;
      nb = MIN (NOISE_BLOCK, nchan - k0);
      memset (counts, 0, sizeof counts);
      for (gsize p = 0; p < job->npix; p += job->step)
        {
          const float *spec = cube->data + p * nchan + k0;

          /* the sampled spectra lie step x nchan floats apart, too far for the processor's own
           * prefetch: ask for this block's lines of the spectrum NOISE_AHEAD samples on (the
           * noise of a 512 x 512 x 1024 cube took 0.31 s without, 0.20 s with) */
          if (p + NOISE_AHEAD * job->step < job->npix)
            for (gsize o = 0; o < nb; o += 16)
              __builtin_prefetch (spec + NOISE_AHEAD * job->step * nchan + o);
          for (gsize b = 0; b < nb; b++)
            if (isfinite (spec[b]))
              buf[b * job->stride + counts[b]++] = spec[b];
        }
      for (gsize b = 0; b < nb; b++)
        {
          float *v = buf + b * job->stride;
          gsize n = counts[b];
          double med;

          if (n == 0)
            {
              cube->rms[k0 + b] = NAN;
              continue;
            }
          med = median_in_place (v, n, bins);
          for (gsize i = 0; i < n; i++)
            v[i] = fabsf (v[i] - (float) med);
          /* 1.4826 = 1 / Phi^-1 (3/4): the MAD of a Gaussian is 0.6745 sigma (Rousseeuw &
           * Croux 1993, JASA 88, 1273) */
          cube->rms[k0 + b] = (float) (1.4826 * median_in_place (v, n, bins));
        }
    }
  return NULL;
}

void
efflux_cube_estimate_noise (EffluxCube *cube)
{
  NoiseJob job = { 0 };
  GThread *helpers[EFFLUX_CUBE_MAX_THREADS] = { NULL };
  guint n_helpers = 0, n_blocks;

  if (cube->rms == NULL)
    cube->rms = g_new0 (float, cube->nchan);
  job.cube = cube;
  job.npix = cube->nx * cube->ny;
  if (job.npix == 0 || cube->nchan == 0)
    return;
  /* The sampled pixels are every step-th pixel: a fixed, deterministic subset of at most
   * NOISE_MAX_SAMPLES. Channels are taken NOISE_BLOCK at a time so each sampled spectrum is read
   * in contiguous pieces; the worker threads share the blocks. */
  job.step = (job.npix + NOISE_MAX_SAMPLES - 1) / NOISE_MAX_SAMPLES;
  job.nsamp = (job.npix + job.step - 1) / job.step;
  job.stride = job.nsamp + 16;
  for (gsize k = 0; k < cube->nchan; k++)
    cube->rms[k] = NAN;
  n_blocks = (guint) MIN ((cube->nchan + NOISE_BLOCK - 1) / NOISE_BLOCK, (gsize) G_MAXUINT);
  while (n_helpers + 1 < MIN (efflux_cube_worker_threads (), n_blocks))
    {
      helpers[n_helpers] = g_thread_try_new ("efflux-noise", noise_worker, &job, NULL);
      if (helpers[n_helpers] == NULL)
        break;
      n_helpers++;
    }
  noise_worker (&job);
  for (guint t = 0; t < n_helpers; t++)
    g_thread_join (helpers[t]);
}

/* ------------------------------------------------------------------------------------------ */
/* Reading FITS cubes                                                                          */

#define MAX_AXES 8

static gboolean
is_spectral_ctype (const char *ctype)
{
  static const char *const types[] = {
    "FREQ", "VRAD", "VOPT", "VELO", "FELO", "WAVE", "ZOPT", "AWAV", "WAVN", "ENER", "BETA", "VELOCITY",
  };

  for (gsize i = 0; i < G_N_ELEMENTS (types); i++)
    if (g_ascii_strncasecmp (ctype, types[i], 4) == 0)
      return TRUE;
  return FALSE;
}

/* Interpret BUNIT. *scale multiplies the values to reach Jy/beam (mJy/beam) or 1. */
static EffluxBrightnessUnit
parse_bunit (const char *bunit,
             double     *scale)
{
  g_autofree char *low = g_ascii_strdown (bunit, -1);
  GString *s = g_string_new (NULL);
  g_autofree char *flat = NULL;
  const char *p;

  *scale = 1.0;
  g_strstrip (low);
  if (low[0] == '\0')
    {
      g_string_free (s, TRUE);
      return EFFLUX_BUNIT_MISSING;
    }
  for (p = low; *p; p++)
    if (*p != ' ' && *p != '.' && *p != '*' && *p != '_')
      g_string_append_c (s, *p);
  flat = g_string_free (s, FALSE);

  /* K, Kelvin, K (Tmb), K (Ta*), K(TB) ... but not km/s */
  if (strcmp (low, "k") == 0 || strcmp (flat, "kelvin") == 0 || g_str_has_prefix (flat, "k(") ||
      g_str_has_prefix (low, "k ") || g_str_has_prefix (low, "k,") || g_str_has_prefix (flat, "kelvin("))
    return EFFLUX_BUNIT_K;

  {
    const char *rest = flat;

    if (g_str_has_prefix (rest, "mjy"))
      {
        *scale = 1e-3;
        rest += 1;
      }
    else if (g_str_has_prefix (rest, "ujy") || g_str_has_prefix (rest, "µjy"))
      {
        *scale = 1e-6;
        rest += g_str_has_prefix (rest, "ujy") ? 1 : strlen ("µ");
      }
    if (g_str_has_prefix (rest, "jy"))
      {
        rest += 2;
        if (strcmp (rest, "/beam") == 0 || strcmp (rest, "/bm") == 0 || strcmp (rest, "beam-1") == 0 ||
            strcmp (rest, "/beam)") == 0 || strcmp (rest, "beam^-1") == 0 || strcmp (rest, "/b") == 0 ||
            strcmp (rest, "bm-1") == 0)
          return EFFLUX_BUNIT_JY_BEAM;
        if (rest[0] == '\0' || strcmp (rest, "/pixel") == 0 || strcmp (rest, "/pix") == 0 ||
            strcmp (rest, "pixel-1") == 0 || strcmp (rest, "pix-1") == 0)
          {
            *scale = 1.0;
            return EFFLUX_BUNIT_JY_PIXEL;
          }
      }
  }
  *scale = 1.0;
  return EFFLUX_BUNIT_OTHER;
}

static int
compare_double (gconstpointer a,
                gconstpointer b)
{
  double x = *(const double *) a, y = *(const double *) b;

  return (x > y) - (x < y);
}

static double
median_double (const double *v,
               gsize         n)
{
  g_autofree double *c = g_memdup2 (v, n * sizeof (double));

  qsort (c, n, sizeof (double), compare_double);
  return n % 2 ? c[n / 2] : 0.5 * (c[n / 2 - 1] + c[n / 2]);
}

/* Per-channel beams from a BEAMS binary table (BMAJ, BMIN, BPA, CHAN, POL). Returns FALSE with
 * error set when the table exists but cannot be used; *found FALSE when there is none. */
static gboolean
read_beam_table (fitsfile    *f,
                 const char  *path,
                 gsize        nchan,
                 int          pol,
                 double      *bmaj,
                 double      *bmin,
                 double      *bpa,
                 gboolean    *found,
                 GError     **error)
{
  int status = 0, hdu_now = 0, ncols = 0;
  long nrows = 0;
  static const char *const names[] = { "BMAJ", "BMIN", "BPA", "CHAN", "POL" };
  int col[5];
  double to_arcsec[3] = { 1.0, 1.0, 1.0 };
  g_autofree gboolean *seen = g_new0 (gboolean, nchan);

  *found = FALSE;
  fits_get_hdu_num (f, &hdu_now);
  if (fits_movnam_hdu (f, BINARY_TBL, (char *) "BEAMS", 0, &status) != 0)
    {
      status = 0;
      fits_clear_errmsg ();
      fits_movabs_hdu (f, hdu_now, NULL, &status);
      return TRUE;
    }
  *found = TRUE;
  fits_get_num_rows (f, &nrows, &status);
  fits_get_num_cols (f, &ncols, &status);
  for (int i = 0; i < 5; i++)
    {
      if (fits_get_colnum (f, CASEINSEN, (char *) names[i], &col[i], &status) != 0)
        {
          fits_clear_errmsg ();
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: BEAMS table has no %s column", path, names[i]);
          return FALSE;
        }
      if (i < 3)
        {
          char key[FLEN_KEYWORD], unit[FLEN_VALUE] = "";
          int st = 0;

          g_snprintf (key, sizeof key, "TUNIT%d", col[i]);
          if (fits_read_key (f, TSTRING, key, unit, NULL, &st) == 0)
            {
              g_autofree char *u = g_ascii_strdown (unit, -1);

              g_strstrip (u);
              if (i == 2)
                to_arcsec[i] = (g_str_has_prefix (u, "rad")) ? 180.0 / G_PI : 1.0;  /* BPA in deg */
              else if (g_str_has_prefix (u, "deg"))
                to_arcsec[i] = 3600.0;
              else if (g_str_has_prefix (u, "arcmin"))
                to_arcsec[i] = 60.0;
              else if (g_str_has_prefix (u, "rad"))
                to_arcsec[i] = 180.0 / G_PI * 3600.0;
              else if (u[0] != '\0' && !g_str_has_prefix (u, "arcsec"))
                {
                  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                               "%s: BEAMS table %s = '%s': unknown unit for %s", path, key, unit, names[i]);
                  return FALSE;
                }
            }
          fits_clear_errmsg ();
        }
    }
  for (long r = 1; r <= nrows && status == 0; r++)
    {
      double v[3];
      long chan = -1, p = -1;
      int anynul = 0;

      for (int i = 0; i < 3; i++)
        fits_read_col (f, TDOUBLE, col[i], r, 1, 1, NULL, &v[i], &anynul, &status);
      fits_read_col (f, TLONG, col[3], r, 1, 1, NULL, &chan, &anynul, &status);
      fits_read_col (f, TLONG, col[4], r, 1, 1, NULL, &p, &anynul, &status);
      if (status != 0)
        break;
      if (p != pol || chan < 0 || (gsize) chan >= nchan)
        continue;
      bmaj[chan] = v[0] * to_arcsec[0];
      bmin[chan] = v[1] * to_arcsec[1];
      bpa[chan] = v[2] * to_arcsec[2];
      seen[chan] = TRUE;
    }
  if (status != 0)
    {
      efflux_fits_set_error (error, path, status, "BEAMS table cannot be read");
      return FALSE;
    }
  for (gsize k = 0; k < nchan; k++)
    if (!seen[k] || !(bmaj[k] > 0.0) || !(bmin[k] > 0.0))
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: BEAMS table gives no usable beam for CHAN = %" G_GSIZE_FORMAT " (POL = %d)",
                     path, k, pol);
        return FALSE;
      }
  fits_movabs_hdu (f, hdu_now, NULL, &status);
  return TRUE;
}

typedef struct
{
  gsize n;       /* length of this axis in the chunk */
  gsize s_out;   /* stride in the output array */
  gsize s_in;    /* stride in the chunk */
} Loop;

/* Copy n words to the voxel array. Aligned runs of whole 16-byte groups use non-temporal stores:
 * the output is written once and not read back soon, so it need not be fetched into the cache
 * first (saves a third of the memory traffic of the transpose). */
static inline void
copy_run (guint32       *dst,
          const guint32 *src,
          gsize          n)
{
#ifdef __SSE2__
  if (((guintptr) dst & 15) == 0 && n % 4 == 0)
    {
      for (gsize i = 0; i < n; i += 4)
        _mm_stream_si128 ((__m128i *) (dst + i), _mm_loadu_si128 ((const __m128i *) (src + i)));
      return;
    }
#endif
  memcpy (dst, src, n * sizeof (guint32));
}

/* Copy a chunk of file data (three axes, file order) into the spectral-contiguous output,
 * byte-swapping big-endian words when swap is TRUE. The loops run from the largest output stride
 * to the smallest; the middle axis is walked in tiles of TILE so that the reads are short
 * contiguous runs and the writes fill whole cache lines of a few spectra at a time. */
#define TILE 64
#define TILE_K 32


static void
transpose_chunk (const guint32 *in,
                 guint32       *out,
                 const Loop     loops[3],
                 gboolean       swap)
{
  Loop l[3];

  memcpy (l, loops, sizeof l);
  for (int a = 0; a < 3; a++)
    for (int b = a + 1; b < 3; b++)
      if (l[b].s_out > l[a].s_out)
        {
          Loop t = l[a];
          l[a] = l[b];
          l[b] = t;
        }
  if (l[2].s_out == 1 && l[2].s_in == 1)
    {
      for (gsize i = 0; i < l[0].n; i++)
        for (gsize j = 0; j < l[1].n; j++)
          {
            guint32 *o = out + i * l[0].s_out + j * l[1].s_out;
            const guint32 *p = in + i * l[0].s_in + j * l[1].s_in;

            if (swap)
              for (gsize k = 0; k < l[2].n; k++)
                o[k] = GUINT32_FROM_BE (p[k]);
            else
              memcpy (o, p, l[2].n * sizeof (guint32));
          }
      return;
    }
  {
    /* tile: up to TILE elements of the middle axis x TILE_K of the innermost, gathered into a
     * small contiguous buffer (no cache-set conflicts from power-of-two strides), then written
     * out as runs of consecutive channels */
    guint32 tile[TILE * TILE_K];

    for (gsize i = 0; i < l[0].n; i++)
      for (gsize j0 = 0; j0 < l[1].n; j0 += TILE)
        for (gsize k0 = 0; k0 < l[2].n; k0 += TILE_K)
          {
            gsize jn = MIN ((gsize) TILE, l[1].n - j0);
            gsize kn = MIN ((gsize) TILE_K, l[2].n - k0);
            const guint32 *ib = in + i * l[0].s_in + j0 * l[1].s_in + k0 * l[2].s_in;
            guint32 *ob = out + i * l[0].s_out + j0 * l[1].s_out + k0 * l[2].s_out;
            gsize s1i = l[1].s_in, s2i = l[2].s_in;

            for (gsize k = 0; k < kn; k++)
              {
                const guint32 *p = ib + k * s2i;

                if (swap)
                  for (gsize j = 0; j < jn; j++)
                    tile[j * TILE_K + k] = GUINT32_FROM_BE (p[j * s1i]);
                else
                  for (gsize j = 0; j < jn; j++)
                    tile[j * TILE_K + k] = p[j * s1i];
              }
            if (l[2].s_out == 1)
              for (gsize j = 0; j < jn; j++)
                copy_run (ob + j * l[1].s_out, tile + j * TILE_K, kn);
            else
              for (gsize j = 0; j < jn; j++)
                for (gsize k = 0; k < kn; k++)
                  ob[j * l[1].s_out + k * l[2].s_out] = tile[j * TILE_K + k];
          }
  }
#ifdef __SSE2__
  _mm_sfence ();
#endif
}

/* Whether vector stores of `words` 32-bit words at out + i0 * s0 + i1 * s1 + a multiple of words
 * are all aligned to their size, as non-temporal stores need. */
static inline gboolean
stores_aligned (const guint32 *out,
                gsize          s0,
                gsize          s1,
                gsize          words)
{
  return ((guintptr) out % (words * sizeof (guint32))) == 0 && s0 % words == 0 && s1 % words == 0;
}

/* The common case of the float32 reader, where the spectral axis is the slowest file axis: a
 * chunk of cn slices (channels), each n1 rows of n0 big-endian words (in[j * in_plane + i1 *
 * in_row + i0]), goes to out[i0 * s0 + i1 * s1 + j]. With SSE2 (every x86-64) it runs by 4 x 4 blocks:
 * four loads of four neighbouring pixels from four channels, the byte swap in registers, a 4 x 4
 * transpose by unpacks, and four 16-byte stores of four channels of one pixel (non-temporal when
 * aligned: the stores of one pixel's 16 channels fill one cache line). Measured on the 256 MiB
 * float32 cube of bench-load: the transpose took 5x the kernel's page-cache copy as a scalar
 * gather through a tile (51 % of the CPU time of a load) and about 1x now (see bench-load). */
static void
swap_transpose_slices (const guint32 *in,
                       gsize          in_plane,
                       gsize          in_row,
                       gsize          n0,
                       gsize          n1,
                       gsize          cn,
                       guint32       *out,
                       gsize          s0,
                       gsize          s1)
{
  gsize i0_vec = 0, j_vec = 0;

#ifdef __SSE2__
  {
    gboolean nt = stores_aligned (out, s0, s1, 4);

    i0_vec = n0 / 4 * 4;
    j_vec = cn / 4 * 4;
    for (gsize i1 = 0; i1 < n1; i1++)
      for (gsize i0 = 0; i0 < i0_vec; i0 += 4)
        {
          const guint32 *p = in + i1 * in_row + i0;
          guint32 *o = out + i0 * s0 + i1 * s1;

          /* 16 channels at a time (4 blocks), kept in registers, so that each pixel's stores
           * follow one another and fill its line at once */
          for (gsize j0 = 0; j0 < j_vec; j0 += 16)
            {
              __m128i c[4][4];
              gsize nb = MIN ((gsize) 4, (j_vec - j0) / 4);

              for (gsize b = 0; b < nb; b++)
                {
                  const guint32 *q = p + (j0 + 4 * b) * in_plane;
                  __m128i r0 = efflux_bswap32x4 (_mm_loadu_si128 ((const __m128i *) q));
                  __m128i r1 = efflux_bswap32x4 (_mm_loadu_si128 ((const __m128i *) (q + in_plane)));
                  __m128i r2 = efflux_bswap32x4 (_mm_loadu_si128 ((const __m128i *) (q + 2 * in_plane)));
                  __m128i r3 = efflux_bswap32x4 (_mm_loadu_si128 ((const __m128i *) (q + 3 * in_plane)));
                  __m128i t0 = _mm_unpacklo_epi32 (r0, r1), t1 = _mm_unpacklo_epi32 (r2, r3);
                  __m128i t2 = _mm_unpackhi_epi32 (r0, r1), t3 = _mm_unpackhi_epi32 (r2, r3);

                  c[b][0] = _mm_unpacklo_epi64 (t0, t1);
                  c[b][1] = _mm_unpackhi_epi64 (t0, t1);
                  c[b][2] = _mm_unpacklo_epi64 (t2, t3);
                  c[b][3] = _mm_unpackhi_epi64 (t2, t3);
                }
              for (gsize i = 0; i < 4; i++)
                for (gsize b = 0; b < nb; b++)
                  {
                    __m128i *d = (__m128i *) (o + i * s0 + j0 + 4 * b);

                    if (nt)
                      _mm_stream_si128 (d, c[b][i]);
                    else
                      _mm_storeu_si128 (d, c[b][i]);
                  }
            }
        }
    _mm_sfence ();
  }
#endif
  /* what the blocks left: the last channels (cn not a multiple of 4) of every pixel, and every
   * channel of the last pixels of each row (n0 not a multiple of 4) */
  for (gsize i1 = 0; i1 < n1; i1++)
    for (gsize i0 = 0; i0 < n0; i0++)
      for (gsize j = i0 < i0_vec ? j_vec : 0; j < cn; j++)
        out[i0 * s0 + i1 * s1 + j] = GUINT32_FROM_BE (in[j * in_plane + i1 * in_row + i0]);
}

/* channels per unit the AVX-512 code can stage (the loader's units of 256 slices) */
#define SWAP_STAGE_CHANNELS 256

#if defined(__x86_64__) && (defined(__GNUC__) || defined(__clang__))
#define EFFLUX_HAVE_AVX2_PATH 1

/* The same with AVX2, for processors that have it (chosen at run time, the build stays baseline
 * x86-64): blocks of 8 neighbouring pixels by 8 channels, the byte swap by one shuffle instead of
 * five SSE2 operations, an 8 x 8 transpose in three rounds of unpacks and lane permutes, and two
 * 32-byte stores per pixel line of 16 channels. It covers the pixels and channels that make
 * whole blocks of 8 x 16 and hands the rest to swap_transpose_slices. Measured alone on one
 * core (256 MiB, the buffer in the cache): 26 ms against 42 ms for the SSE2 code, where storing
 * 256-byte runs non-temporally takes 16-19 ms. */
/* n words from src to dst (4-byte aligned): ordinary masked stores before dst's first and after
 * its last cache-line boundary, non-temporal stores for the whole lines between them (the same
 * as stream_run, with AVX2). */
__attribute__ ((target ("avx2"))) static inline void
stream_run_avx2 (guint32       *dst,
                 const guint32 *src,
                 gsize          n)
{
  const __m256i idx = _mm256_setr_epi32 (0, 1, 2, 3, 4, 5, 6, 7);
  gsize head = MIN (n, (gsize) ((64u - ((guintptr) dst & 63u)) & 63u) / sizeof (guint32));
  gsize body = (n - head) / 16 * 16, k;

  for (k = 0; k < head; k += 8)
    {
      __m256i m = _mm256_cmpgt_epi32 (_mm256_set1_epi32 ((int) (head - k)), idx);

      _mm256_maskstore_epi32 ((int *) (dst + k), m, _mm256_maskload_epi32 ((const int *) (src + k), m));
    }
  for (k = head; k < head + body; k += 16)
    {
      _mm256_stream_si256 ((__m256i *) (dst + k), _mm256_loadu_si256 ((const __m256i *) (src + k)));
      _mm256_stream_si256 ((__m256i *) (dst + k + 8), _mm256_loadu_si256 ((const __m256i *) (src + k + 8)));
    }
  for (; k < n; k += 8)
    {
      __m256i m = _mm256_cmpgt_epi32 (_mm256_set1_epi32 ((int) MIN ((gsize) 8, n - k)), idx);

      _mm256_maskstore_epi32 ((int *) (dst + k), m, _mm256_maskload_epi32 ((const int *) (src + k), m));
    }
}

__attribute__ ((target ("avx2"))) static void
swap_transpose_avx2 (const guint32 *in,
                     gsize          in_plane,
                     gsize          in_row,
                     gsize          n0,
                     gsize          n1,
                     gsize          cn,
                     guint32       *out,
                     gsize          s0,
                     gsize          s1)
{
  const __m256i swap = _mm256_set_epi8 (12, 13, 14, 15, 8, 9, 10, 11, 4, 5, 6, 7, 0, 1, 2, 3,
                                        12, 13, 14, 15, 8, 9, 10, 11, 4, 5, 6, 7, 0, 1, 2, 3);
  gboolean nt = stores_aligned (out, s0, s1, 8);
  /* staged: as in swap_transpose_avx512, through a buffer and stream_run_avx2 */
  gboolean staged = !nt && cn <= SWAP_STAGE_CHANNELS;
  gsize i0_vec = n0 / 8 * 8, j_vec = cn / 16 * 16;
  guint32 stage[8 * SWAP_STAGE_CHANNELS] __attribute__ ((aligned (32)));

  for (gsize i1 = 0; i1 < n1; i1++)
    for (gsize i0 = 0; i0 < i0_vec; i0 += 8)
      {
        const guint32 *p = in + i1 * in_row + i0;
        guint32 *o = out + i0 * s0 + i1 * s1;

        /* staged, the last channels too, as a block whose missing channels are zeros */
        for (gsize j0 = 0; j0 < (staged ? cn : j_vec); j0 += 16)
          {
            __m256i c[2][8];
            const int kn = (int) MIN ((gsize) 16, cn - j0);

            for (int b = 0; b < 2; b++)
              {
                const guint32 *q = p + (j0 + 8 * (gsize) b) * in_plane;
                __m256i r[8], t[8], u[8];

                /* r[k]: channel k of pixels 0-7, byte-swapped */
                for (int k = 0; k < 8; k++)
                  r[k] = 8 * b + k < kn
                    ? _mm256_shuffle_epi8 (_mm256_loadu_si256 ((const __m256i *) (q + (gsize) k * in_plane)), swap)
                    : _mm256_setzero_si256 ();
                /* within each 128-bit lane (pixels 0-3 | 4-7): t[2k], t[2k + 1] interleave
                 * channels 2k and 2k + 1 */
                for (int k = 0; k < 4; k++)
                  {
                    t[2 * k] = _mm256_unpacklo_epi32 (r[2 * k], r[2 * k + 1]);
                    t[2 * k + 1] = _mm256_unpackhi_epi32 (r[2 * k], r[2 * k + 1]);
                  }
                /* u[i] (i < 4): channels 0-3 of pixel i | pixel i + 4; u[4 + i]: channels 4-7 */
                for (int k = 0; k < 2; k++)
                  {
                    u[4 * k] = _mm256_unpacklo_epi64 (t[4 * k], t[4 * k + 2]);
                    u[4 * k + 1] = _mm256_unpackhi_epi64 (t[4 * k], t[4 * k + 2]);
                    u[4 * k + 2] = _mm256_unpacklo_epi64 (t[4 * k + 1], t[4 * k + 3]);
                    u[4 * k + 3] = _mm256_unpackhi_epi64 (t[4 * k + 1], t[4 * k + 3]);
                  }
                /* c[b][i]: the 8 channels of pixel i */
                for (int i = 0; i < 4; i++)
                  {
                    c[b][i] = _mm256_permute2x128_si256 (u[i], u[4 + i], 0x20);
                    c[b][i + 4] = _mm256_permute2x128_si256 (u[i], u[4 + i], 0x31);
                  }
              }
            for (gsize i = 0; i < 8; i++)
              for (int b = 0; b < 2; b++)
                {
                  __m256i *d = (__m256i *) (o + i * s0 + j0 + 8 * (gsize) b);

                  if (staged)
                    {
                      /* the stage holds the pixels' runs one after the other, as the array
                       * does when the unit has every channel; the zeros past the last channel
                       * are not stored (they would fall on the next pixel's run) */
                      int left = kn - 8 * b;

                      if (left >= 8)
                        _mm256_storeu_si256 ((__m256i *) (stage + i * cn + j0 + 8 * (gsize) b), c[b][i]);
                      else if (left > 0)
                        _mm256_maskstore_epi32 ((int *) (stage + i * cn + j0 + 8 * (gsize) b),
                                                _mm256_cmpgt_epi32 (_mm256_set1_epi32 (left),
                                                                    _mm256_setr_epi32 (0, 1, 2, 3, 4, 5, 6, 7)),
                                                c[b][i]);
                    }
                  else if (nt)
                    _mm256_stream_si256 (d, c[b][i]);
                  else
                    _mm256_storeu_si256 (d, c[b][i]);
                }
          }
        /* the unit has every channel (s0 == cn): the 8 runs are contiguous in the array too,
         * and go out as one, with partial cache lines only at its two ends */
        if (staged && s0 == cn)
          stream_run_avx2 (o, stage, 8 * cn);
        else if (staged)
          for (gsize i = 0; i < 8; i++)
            stream_run_avx2 (o + i * s0, stage + i * cn, cn);
      }
  _mm_sfence ();
  /* the last channels (cn not a multiple of 16) of the whole blocks of pixels, then every
   * channel of the last pixels of each row (n0 not a multiple of 8) */
  if (!staged && j_vec < cn && i0_vec > 0)
    swap_transpose_slices (in + j_vec * in_plane, in_plane, in_row, i0_vec, n1, cn - j_vec,
                           out + j_vec, s0, s1);
  if (i0_vec < n0)
    swap_transpose_slices (in + i0_vec, in_plane, in_row, n0 - i0_vec, n1, cn, out + i0_vec * s0,
                           s0, s1);
}

/* The same with AVX-512 (F and BW), for processors that have it: blocks of 16 neighbouring pixels
 * by 16 channels in 512-bit registers, the byte swap by one shuffle, a 16 x 16 transpose in four
 * rounds (32-bit and 64-bit unpacks within 128-bit lanes, then two rounds of lane shuffles), 80
 * operations per 256 words against about 130 for the 8 x 8 blocks of AVX2 (whose 16 registers
 * also spill), and one 64-byte store per pixel line of 16 channels, a whole cache line. It covers
 * the whole blocks of 16 x 16 and hands the rest to swap_transpose_avx2. */
/* n words from src (in the cache) to dst (4-byte aligned): the part before dst's first cache-line
 * boundary and the part after its last one with ordinary stores, the whole lines between them
 * with non-temporal ones, which spare reading them into the cache first. */
__attribute__ ((target ("avx512f,avx512bw"))) static inline void
stream_run (guint32       *dst,
            const guint32 *src,
            gsize          n)
{
  gsize head = MIN (n, (gsize) ((64u - ((guintptr) dst & 63u)) & 63u) / sizeof (guint32));
  gsize body = (n - head) / 16 * 16, k;

  if (head > 0)
    _mm512_mask_storeu_epi32 (dst, (__mmask16) ((1u << head) - 1u), _mm512_loadu_si512 ((const void *) src));
  for (k = head; k < head + body; k += 16)
    _mm512_stream_si512 ((void *) (dst + k), _mm512_loadu_si512 ((const void *) (src + k)));
  for (; k < n; k += 16)
    {
      gsize left = MIN ((gsize) 16, n - k);

      _mm512_mask_storeu_epi32 (dst + k, (__mmask16) ((1u << left) - 1u),
                                _mm512_maskz_loadu_epi32 ((__mmask16) ((1u << left) - 1u), src + k));
    }
}

__attribute__ ((target ("avx512f,avx512bw"))) static void
swap_transpose_avx512 (const guint32 *in,
                       gsize          in_plane,
                       gsize          in_row,
                       gsize          n0,
                       gsize          n1,
                       gsize          cn,
                       guint32       *out,
                       gsize          s0,
                       gsize          s1)
{
  const __m512i swap = _mm512_set4_epi32 (0x0c0d0e0f, 0x08090a0b, 0x04050607, 0x00010203);
  gboolean nt = stores_aligned (out, s0, s1, 16);
  /* staged: the lines of 16 channels do not start on cache lines (a spectrum's length is not a
   * multiple of 64 bytes): the block's pixel runs go through a buffer in the first-level cache
   * and out by stream_run, non-temporal for every whole cache line they cover */
  gboolean staged = !nt && cn <= SWAP_STAGE_CHANNELS;
  gsize i0_vec = n0 / 16 * 16, j_vec = cn / 16 * 16;
  guint32 stage[16 * SWAP_STAGE_CHANNELS] __attribute__ ((aligned (64)));

  for (gsize i1 = 0; i1 < n1; i1++)
    for (gsize i0 = 0; i0 < i0_vec; i0 += 16)
      {
        const guint32 *p = in + i1 * in_row + i0;
        guint32 *o = out + i0 * s0 + i1 * s1;

        /* staged, the last channels (cn not a multiple of 16) go through the stage as well, as
         * a block whose missing channels are zeros and are not written out */
        for (gsize j0 = 0; j0 < (staged ? cn : j_vec); j0 += 16)
          {
            const guint32 *q = p + j0 * in_plane;
            const int kn = (int) MIN ((gsize) 16, cn - j0);
            __m512i r[16], t[16], u[16];

            /* r[k]: channel k of pixels 0-15, byte-swapped */
            for (int k = 0; k < 16; k++)
              r[k] = k < kn ? _mm512_shuffle_epi8 (_mm512_loadu_si512 ((const void *) (q + (gsize) k * in_plane)), swap)
                            : _mm512_setzero_si512 ();
            /* within each 128-bit lane L (pixels 4L .. 4L + 3): t[2k], t[2k + 1] interleave
             * channels 2k and 2k + 1 */
            for (int k = 0; k < 8; k++)
              {
                t[2 * k] = _mm512_unpacklo_epi32 (r[2 * k], r[2 * k + 1]);
                t[2 * k + 1] = _mm512_unpackhi_epi32 (r[2 * k], r[2 * k + 1]);
              }
            /* u[4k + m], lane L: channels 4k .. 4k + 3 of pixel 4L + m */
            for (int k = 0; k < 4; k++)
              {
                u[4 * k] = _mm512_unpacklo_epi64 (t[4 * k], t[4 * k + 2]);
                u[4 * k + 1] = _mm512_unpackhi_epi64 (t[4 * k], t[4 * k + 2]);
                u[4 * k + 2] = _mm512_unpacklo_epi64 (t[4 * k + 1], t[4 * k + 3]);
                u[4 * k + 3] = _mm512_unpackhi_epi64 (t[4 * k + 1], t[4 * k + 3]);
              }
            for (int m = 0; m < 4; m++)
              {
                /* lanes (u[m] L0, L2, u[4 + m] L0, L2) and (L1, L3, ...), the same for 8 and 12 */
                __m512i v0 = _mm512_shuffle_i32x4 (u[m], u[4 + m], 0x88);
                __m512i v1 = _mm512_shuffle_i32x4 (u[m], u[4 + m], 0xdd);
                __m512i w0 = _mm512_shuffle_i32x4 (u[8 + m], u[12 + m], 0x88);
                __m512i w1 = _mm512_shuffle_i32x4 (u[8 + m], u[12 + m], 0xdd);
                /* pixel 4L + m: channels 0-3 from u[m] lane L, 4-7 from u[4 + m], ... */
                __m512i c[4] = { _mm512_shuffle_i32x4 (v0, w0, 0x88), _mm512_shuffle_i32x4 (v1, w1, 0x88),
                                 _mm512_shuffle_i32x4 (v0, w0, 0xdd), _mm512_shuffle_i32x4 (v1, w1, 0xdd) };

                for (int L = 0; L < 4; L++)
                  {
                    void *d = o + (gsize) (4 * L + m) * s0 + j0;

                    if (staged)
                      /* runs one after the other in the stage, as in swap_transpose_avx2 */
                      _mm512_mask_storeu_epi32 (stage + (gsize) (4 * L + m) * cn + j0,
                                                (__mmask16) ((1u << kn) - 1u), c[L]);
                    else if (nt)
                      _mm512_stream_si512 (d, c[L]);
                    else
                      _mm512_storeu_si512 (d, c[L]);
                  }
              }
          }
        if (staged && s0 == cn)
          stream_run (o, stage, 16 * cn);
        else if (staged)
          for (gsize i = 0; i < 16; i++)
            stream_run (o + i * s0, stage + i * cn, cn);
      }
  _mm_sfence ();
  /* the last channels of the whole blocks of pixels (unless staged), then every channel of the
   * last pixels of each row, by the AVX2 code (and its SSE2 edges) */
  if (!staged && j_vec < cn && i0_vec > 0)
    swap_transpose_avx2 (in + j_vec * in_plane, in_plane, in_row, i0_vec, n1, cn - j_vec,
                         out + j_vec, s0, s1);
  if (i0_vec < n0)
    swap_transpose_avx2 (in + i0_vec, in_plane, in_row, n0 - i0_vec, n1, cn, out + i0_vec * s0,
                         s0, s1);
}
#endif

/* 1: the loader may use AVX2 where the processor has it; 0: SSE2 only (tests, benchmarks) */
static gint allow_avx2 = 1;
/* 1: the loader may use AVX-512 where the processor has it (and AVX2 is allowed) */
static gint allow_avx512 = 1;

void
efflux_cube_loader_allow_avx512 (gboolean allow)
{
  g_atomic_int_set (&allow_avx512, allow ? 1 : 0);
}

gboolean
efflux_cube_loader_uses_avx512 (void)
{
#ifdef EFFLUX_HAVE_AVX2_PATH
  return efflux_cube_loader_uses_avx2 () && g_atomic_int_get (&allow_avx512) != 0 &&
         __builtin_cpu_supports ("avx512f") && __builtin_cpu_supports ("avx512bw");
#else
  return FALSE;
#endif
}

void
efflux_cube_loader_allow_avx2 (gboolean allow)
{
  g_atomic_int_set (&allow_avx2, allow ? 1 : 0);
}

gboolean
efflux_cube_loader_uses_avx2 (void)
{
#ifdef EFFLUX_HAVE_AVX2_PATH
  return g_atomic_int_get (&allow_avx2) != 0 && __builtin_cpu_supports ("avx2");
#else
  return FALSE;
#endif
}

/* One unit's swap and transpose: the widest code the loader may use (AVX-512, AVX2, SSE2) whose
 * stores are aligned for non-temporal stores; when none is (spectra not a multiple of 16 bytes
 * long), the widest, which stages its stores (stream_run). For spectra a multiple of 16 bytes but
 * not of 64, the SSE2 code's 16-byte non-temporal stores were as fast as the staged AVX-512 ones
 * (256 x 256 x 420 cube: 23 ms against 24-26 ms) and 20 % faster than AVX-512 storing through
 * the cache. */
static void
swap_transpose_unit (const guint32 *in,
                     gsize          in_plane,
                     gsize          n0,
                     gsize          n1,
                     gsize          cn,
                     guint32       *out,
                     gsize          s0,
                     gsize          s1,
                     gboolean       avx2,
                     gboolean       avx512)
{
#ifdef EFFLUX_HAVE_AVX2_PATH
  if (avx512 && (stores_aligned (out, s0, s1, 16) || !stores_aligned (out, s0, s1, 4)))
    {
      swap_transpose_avx512 (in, in_plane, n0, n0, n1, cn, out, s0, s1);
      return;
    }
  if (avx2 && (stores_aligned (out, s0, s1, 8) || !stores_aligned (out, s0, s1, 4)))
    {
      swap_transpose_avx2 (in, in_plane, n0, n0, n1, cn, out, s0, s1);
      return;
    }
#endif
  swap_transpose_slices (in, in_plane, n0, n0, n1, cn, out, s0, s1);
}

/* The fast path for uncompressed, unscaled BITPIX = -32 data: pread () the big-endian words and
 * swap them while transposing, on one thread per processor (up to four). A unit of work is a
 * block of chunk_n = 64 slices of the slowest file axis by `rows` rows of the middle one: chunk_n
 * preads of rows x n_fast words, about 4 MiB in all (a buffer in huge pages per thread), then
 * swap_transpose_unit. The chunk_n reads of a unit go to the kernel in one system call where it
 * offers io_uring (efflux-readbatch.c): the 4096 preads of 64 KiB of a 256 MiB load cost about
 * 6.5 ms of CPU time more (see the top of this file).
 * History, CPU time of a 256 MiB load on a loaded machine (both threads, medians, see bench-load):
 * 4 slices per unit and 16-byte pieces of lines 0.25 s; 16 slices, whole lines 0.14-0.18 s; with
 * the SIMD swap-transpose, 64 slices and a 2 MiB huge-page buffer 0.14-0.15 s against 0.17-0.18 s
 * for 16 slices and 512 KiB measured back to back. What is left is mostly the kernel: zeroing the
 * fresh huge pages of the voxel array and copying from the page cache. */
typedef struct
{
  int            fd;
  guint64        offset;       /* file offset of the first data byte */
  gsize          plane;        /* words per slice of the slowest axis */
  gsize          n_fast;       /* words per row (the fastest file axis) */
  gsize          n_mid;        /* rows per slice (the middle file axis) */
  gsize          rows;         /* rows per unit of work */
  gsize          row_blocks;   /* units per chunk of slices */
  gsize          slice_blocks; /* units per block of rows */
  gsize          chunk_n;      /* slices per unit of work */
  gsize          n_slow;
  gsize          n_chunks;     /* units of work in all */
  Loop           loops[3];     /* loops[1].n and loops[2].n set per unit */
  gsize          slow_stride_out;
  gsize          mid_stride_out;
  guint32       *out;
  GCancellable  *cancellable;
  gboolean       avx2;         /* swap_transpose_unit may use AVX2 */
  gboolean       avx512;       /* and AVX-512 */
  gint           next;         /* atomic: next unit to take */
  gint           done;         /* atomic: units finished */
  gint           failed;       /* atomic: 1 read error, 2 cancelled, 3 no memory */
  int            err_no;
} RawRead;

static gpointer
raw_read_worker (gpointer data)
{
  RawRead *r = data;
  /* each slice's rows start one cache line after a multiple of 4 KiB: with slices exactly 2^k
   * bytes apart, the 16 loads of one transpose step all fell into one set of the L1 and L2
   * caches and evicted each other */
  gsize slice_words = r->n_fast * r->rows + (r->n_fast * r->rows % 1024 == 0 ? 16 : 0);
  g_autofree guint32 *buf = alloc_voxels_huge (slice_words * r->chunk_n * sizeof (guint32));
  g_autofree EffluxReadPiece *pieces = g_new (EffluxReadPiece, r->chunk_n);
  EffluxReadBatch *batch;

  if (buf == NULL)
    {
      g_atomic_int_set (&r->failed, 3);
      return NULL;
    }
  batch = efflux_read_batch_new ((guint) r->chunk_n);
  for (;;)
    {
      gsize c = (gsize) g_atomic_int_add (&r->next, 1);
      gsize j0, cn, y0, yn, run;
      Loop loops[3];

      if (c >= r->n_chunks || g_atomic_int_get (&r->failed) != 0)
        break;
      if (g_cancellable_is_cancelled (r->cancellable))
        {
          g_atomic_int_set (&r->failed, 2);
          break;
        }
      /* the units of one block of rows one after the other (both threads on it): each huge page
       * of the voxel array is written whole soon after the kernel zeroed it, while it is still
       * in the cache, rather than a quarter at a time far apart */
      j0 = c % r->slice_blocks * r->chunk_n;
      y0 = c / r->slice_blocks * r->rows;
      cn = MIN (r->chunk_n, r->n_slow - j0);
      yn = MIN (r->rows, r->n_mid - y0);
      run = yn * r->n_fast * sizeof (guint32);
      for (gsize j = 0; j < cn; j++)
        {
          pieces[j].buf = buf + j * slice_words;
          pieces[j].len = run;
          pieces[j].offset = r->offset + ((guint64) (j0 + j) * r->plane + (guint64) y0 * r->n_fast) * sizeof (guint32);
        }
      if (!efflux_read_batch_run (batch, r->fd, pieces, (guint) cn, &r->err_no))
        {
          g_atomic_int_set (&r->failed, 1);
          break;
        }
      memcpy (loops, r->loops, sizeof loops);
      loops[1].n = yn;
      loops[2].n = cn;
      loops[2].s_in = slice_words;
      if (loops[2].s_out == 1)
        swap_transpose_unit (buf, loops[2].s_in, loops[0].n, yn, cn,
                             r->out + j0 * r->slow_stride_out + y0 * r->mid_stride_out,
                             loops[0].s_out, loops[1].s_out, r->avx2, r->avx512);
      else
        transpose_chunk (buf, r->out + j0 * r->slow_stride_out + y0 * r->mid_stride_out, loops, TRUE);
      g_atomic_int_inc (&r->done);
    }
  efflux_read_batch_free (batch);
  return NULL;
}

/* The voxel array: large arrays aligned to 2 MiB and marked for transparent huge pages, which
 * spares most of the page faults of the first touch (freed with g_free like any other). */
static float *
alloc_voxels (gsize bytes)
{
  const gsize huge = 2u * 1024u * 1024u;
  void *p = NULL;

  if (bytes < 4 * huge)
    return g_try_malloc (bytes);
  /* whole huge pages: a partial last one would be 4 KiB pages, up to 512 faults more */
  if (bytes > G_MAXSIZE - huge)
    return NULL;
  bytes = (bytes + huge - 1) / huge * huge;
  if (posix_memalign (&p, huge, bytes) != 0)
    return NULL;
#ifdef MADV_HUGEPAGE
  madvise (p, bytes, MADV_HUGEPAGE);
#endif
  return p;
}

/* A buffer of at least 1 MiB in whole transparent huge pages (one fault per 2 MiB instead of 512:
 * on a virtual machine a 4 KiB page fault can cost 20 us). Freed with g_free. */
static void *
alloc_voxels_huge (gsize bytes)
{
  const gsize huge = 2u * 1024u * 1024u;
  void *p = NULL;

  if (bytes < huge / 2)
    return g_try_malloc (bytes);
  bytes = (bytes + huge - 1) / huge * huge;
  if (posix_memalign (&p, huge, bytes) != 0)
    return NULL;
#ifdef MADV_HUGEPAGE
  madvise (p, bytes, MADV_HUGEPAGE);
#endif
  return p;
}

/* A gzipped file's trailer, checked before CFITSIO sees it: CFITSIO allocates the whole
 * uncompressed file in memory at the size the trailer's ISIZE field gives (RFC 1952, section
 * 2.3.1: the last 4 bytes, little-endian, the length modulo 2^32), so a damaged trailer could ask
 * for 4 GiB. Deflate cannot expand by more than 1032:1 (zlib's technical notes, from memory), so
 * a true length, and ISIZE which is at most that, stays below 1032 x the compressed size; a gzip
 * file holds at least its 10-byte header and 8-byte trailer (RFC 1952, 2.3). */
static gboolean
gzip_trailer_plausible (const char *path,
                        guint64     size,
                        GError    **error)
{
  unsigned char t[4];
  guint64 isize;
  FILE *fp;
  gboolean got;

  if (size < 18)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: gzip file of %" G_GUINT64_FORMAT " bytes, shorter than a gzip header and trailer (truncated?)",
                   path, size);
      return FALSE;
    }
  fp = fopen (path, "rb");
  got = fp != NULL && fseeko (fp, -4, SEEK_END) == 0 && fread (t, 1, 4, fp) == 4;
  if (fp != NULL)
    fclose (fp);
  if (!got)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot read the gzip trailer (ISIZE)", path);
      return FALSE;
    }
  isize = (guint64) t[0] | (guint64) t[1] << 8 | (guint64) t[2] << 16 | (guint64) t[3] << 24;
  if (isize > 1032 * size)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: gzip trailer ISIZE claims %" G_GUINT64_FORMAT " bytes from %" G_GUINT64_FORMAT
                   " compressed, more than deflate can give: damaged gzip file", path, isize, size);
      return FALSE;
    }
  return TRUE;
}

/* Whether the primary header (80-character cards) reaches its END card within the file. */
static gboolean
primary_header_complete (const char *path)
{
  FILE *fp = fopen (path, "rb");
  char card[80];
  gboolean found = FALSE;

  if (fp == NULL)
    return TRUE;
  /* at most 10000 cards: a longer primary header is as good as broken */
  for (int i = 0; i < 10000 && fread (card, 1, 80, fp) == 80; i++)
    if (memcmp (card, "END     ", 8) == 0)
      {
        found = TRUE;
        break;
      }
  fclose (fp);
  return found;
}

static char *
format_gib (guint64 bytes)
{
  return g_strdup_printf ("%.1f GiB", (double) bytes / (1024.0 * 1024.0 * 1024.0));
}

/* The three data axes (longitude, latitude, spectral) in file order, fastest first; TRUE when the
 * planes of the slowest are contiguous in the file (every other axis before it has length 1). */
static gboolean
data_axes_in_file_order (const LONGLONG *naxes,
                         int             ilng,
                         int             ilat,
                         int             ispec,
                         int             ax[3])
{
  gboolean contiguous = TRUE;

  ax[0] = ilng;
  ax[1] = ilat;
  ax[2] = ispec;
  for (int a = 0; a < 3; a++)
    for (int b = a + 1; b < 3; b++)
      if (ax[b] < ax[a])
        {
          int t = ax[a];
          ax[a] = ax[b];
          ax[b] = t;
        }
  for (int i = 0; i < ax[2]; i++)
    if (i != ax[0] && i != ax[1] && naxes[i] != 1)
      contiguous = FALSE;
  return contiguous;
}

/* Whether the data are big-endian float32 words as they stand in the file: not gzipped, not tile
 * compressed, BITPIX = -32 and no scaling (BSCALE = 1, BZERO = 0), the planes contiguous. */
static gboolean
data_is_raw_float (fitsfile *f,
                   gboolean  gz,
                   gboolean  tile_compressed,
                   int       bitpix,
                   gboolean  contiguous)
{
  double bscale = 1.0, bzero = 0.0;
  int s1 = 0, s2 = 0;

  if (gz || tile_compressed || bitpix != FLOAT_IMG || !contiguous)
    return FALSE;
  if (fits_read_key (f, TDOUBLE, "BSCALE", &bscale, NULL, &s1) != 0)
    bscale = 1.0;
  if (fits_read_key (f, TDOUBLE, "BZERO", &bzero, NULL, &s2) != 0)
    bzero = 0.0;
  fits_clear_errmsg ();
  return bscale == 1.0 && bzero == 0.0;
}

EffluxCube *
efflux_cube_load (const char                  *path,
                  const EffluxCubeLoadOptions *options,
                  GCancellable                *cancellable,
                  EffluxProgressFunc           progress,
                  gpointer                     progress_data,
                  GError                     **error)
{
  g_autoptr(EffluxCube) cube = NULL;
  g_autoptr(fitsfile) f = NULL;
  GStatBuf st;
  int status = 0, nhdu = 0, hdu = 0, naxis = 0, data_naxis = 0, bitpix = 0, hdutype = 0;
  LONGLONG naxes[MAX_AXES] = { 0 };
  gboolean gz = FALSE, tile_compressed = FALSE;
  int nwcs = 0;
  struct wcsprm *wcsarr = NULL, *wcs = NULL;
  char orig_ctype[MAX_AXES][72];
  int ispec = -1, ilng, ilat;
  int want_hdu = options ? options->hdu : 0;
  gboolean ok = FALSE;
  gsize nx, ny, nchan, nvox, bytes;
  g_autofree double *world_spec = NULL;
  g_autofree double *nu_sky = NULL;
  long stokes_plane[MAX_AXES];
  int pol_index = 0;
  gsize k_first = 0;   /* first file channel kept (options->channel_subset) */

  wcserr_enable (1);

  /* --- the file itself ------------------------------------------------------------------- */
  if (!efflux_fits_stat (path, &st, error))
    return NULL;
  if (!S_ISREG (st.st_mode))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: not a regular file", path);
      return NULL;
    }
  if (st.st_size == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: empty file (0 bytes): not a FITS file (no SIMPLE card)", path);
      return NULL;
    }
  {
    char head[10] = { 0 };
    FILE *fp = fopen (path, "rb");
    size_t got;

    if (fp == NULL)
      {
        int e = errno;
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot open: %s", path, g_strerror (e));
        return NULL;
      }
    got = fread (head, 1, sizeof head, fp);
    fclose (fp);
    if (got >= 2 && (unsigned char) head[0] == 0x1f && (unsigned char) head[1] == 0x8b)
      gz = TRUE;
    else if (got < 9 || memcmp (head, "SIMPLE  =", 9) != 0)
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: not a FITS file (it does not begin with the SIMPLE card)", path);
        return NULL;
      }
  }
  if (gz && !gzip_trailer_plausible (path, (guint64) st.st_size, error))
    return NULL;

  if (fits_open_diskfile (&f, path, READONLY, &status) != 0)
    {
      f = NULL;
      if (!gz && !primary_header_complete (path))
        {
          fits_clear_errmsg ();
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: END card missing: the primary header is incomplete (truncated file?)", path);
          return NULL;
        }
      efflux_fits_set_error (error, path, status, "not a readable FITS file");
      return NULL;
    }

  /* --- choose the HDU -------------------------------------------------------------------- */
  fits_get_num_hdus (f, &nhdu, &status);
  if (status != 0)
    {
      efflux_fits_set_error (error, path, status, "not a readable FITS file");
      return NULL;
    }
  for (int h = 1; h <= nhdu; h++)
    {
      int nax = 0;

      if (want_hdu > 0 && h != want_hdu)
        continue;
      if (fits_movabs_hdu (f, h, &hdutype, &status) != 0)
        {
          efflux_fits_set_error (error, path, status, "cannot read the HDU list");
          return NULL;
        }
      if (hdutype != IMAGE_HDU)
        {
          if (want_hdu > 0)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: HDU %d: XTENSION: a table, not an image", path, h);
              return NULL;
            }
          continue;
        }
      fits_get_img_dim (f, &nax, &status);
      if (status == 0 && nax >= 3)
        {
          hdu = h;
          naxis = nax;
          break;
        }
      if (want_hdu > 0)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: HDU %d: NAXIS = %d: not a cube (three axes or more needed)", path, h, nax);
          return NULL;
        }
    }
  if (want_hdu > nhdu)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: HDU %d: the file has only %d HDUs",
                   path, want_hdu, nhdu);
      return NULL;
    }
  if (hdu == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: NAXIS: no image HDU with three axes or more (the primary HDU and %d extension%s)",
                   path, nhdu - 1, nhdu - 1 == 1 ? "" : "s");
      return NULL;
    }
  if (naxis > MAX_AXES)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: NAXIS = %d: more than %d axes", path,
                   naxis, MAX_AXES);
      return NULL;
    }
  fits_get_img_type (f, &bitpix, &status);
  fits_get_img_sizell (f, naxis, naxes, &status);
  tile_compressed = fits_is_compressed_image (f, &status);
  if (status != 0)
    {
      efflux_fits_set_error (error, path, status, "cannot read the image header");
      return NULL;
    }

  /* --- sizes: check before anything is allocated ----------------------------------------- */
  {
    guint64 total = 1;

    for (int i = 0; i < naxis; i++)
      {
        if (naxes[i] <= 0)
          {
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: NAXIS%d = %lld: an axis with no pixels",
                         path, i + 1, (long long) naxes[i]);
            return NULL;
          }
        if ((guint64) naxes[i] > G_MAXUINT64 / total)
          {
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                         "%s: NAXIS%d = %lld: the data size overflows", path, i + 1, (long long) naxes[i]);
            return NULL;
          }
        total *= (guint64) naxes[i];
      }
    if (!gz && !tile_compressed)
      {
        LONGLONG headstart = 0, datastart = 0, dataend = 0;
        guint64 nbytes = (guint64) (bitpix < 0 ? -bitpix : bitpix) / 8;

        fits_get_hduaddrll (f, &headstart, &datastart, &dataend, &status);
        if (status == 0 && (total > G_MAXUINT64 / nbytes ||
                            (guint64) datastart + total * nbytes > (guint64) st.st_size))
          {
            GString *axes = g_string_new (NULL);
            GString *vals = g_string_new (NULL);
            guint64 have = (guint64) st.st_size > (guint64) datastart ? (guint64) st.st_size - (guint64) datastart : 0;

            for (int i = 0; i < naxis; i++)
              {
                g_string_append_printf (axes, "%sNAXIS%d", i ? " x " : "", i + 1);
                g_string_append_printf (vals, "%s%lld", i ? " x " : "", (long long) naxes[i]);
              }
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                         "%s: %s = %s (BITPIX = %d) claims %" G_GUINT64_FORMAT " bytes of data but the file "
                         "holds only %" G_GUINT64_FORMAT " after the header: truncated or wrong header",
                         path, axes->str, vals->str, bitpix,
                         total <= G_MAXUINT64 / nbytes ? total * nbytes : G_MAXUINT64, have);
            g_string_free (axes, TRUE);
            g_string_free (vals, TRUE);
            return NULL;
          }
      }
  }

  /* --- WCS ------------------------------------------------------------------------------- */
  wcs = efflux_fits_read_wcs (f, tile_compressed, path, naxis, TRUE, "the header has no usable world coordinates",
                              &nwcs, &wcsarr, error);
  if (wcs == NULL)
    return NULL;

  cube = efflux_fits_new_cube (path, hdu);
  if (hdu > 1)
    efflux_cube_add_note (cube, "cube read from HDU %d (the first image extension with three axes or more)", hdu);

  if (wcs->naxis < naxis || wcs->naxis > MAX_AXES)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: WCSAXES = %d does not fit NAXIS = %d", path, wcs->naxis, naxis);
      goto out;
    }
  /* world axes beyond the data axes (WCSAXES > NAXIS, e.g. a STOKES axis given only by its
   * keywords) are degenerate axes of length 1 */
  data_naxis = naxis;
  for (int i = naxis; i < wcs->naxis; i++)
    naxes[i] = 1;
  naxis = wcs->naxis;

  /* the spectral axis and its step, before wcsfix (cdfix would turn an all-zero CD row into 1) */
  for (int i = 0; i < naxis; i++)
    {
      g_autofree char *t = efflux_fits_trimmed (wcs->ctype[i]);
      g_strlcpy (orig_ctype[i], t, sizeof orig_ctype[i]);
      if (ispec < 0 && is_spectral_ctype (t))
        ispec = i;
    }
  if (ispec < 0)
    {
      GString *list = g_string_new (NULL);

      for (int i = 0; i < naxis; i++)
        g_string_append_printf (list, "%s'%s'", i ? ", " : "", orig_ctype[i]);
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE1..CTYPE%d = %s: no spectral axis (FREQ, VRAD, VOPT, VELO, FELO, WAVE, ZOPT)",
                   path, naxis, list->str);
      g_string_free (list, TRUE);
      goto out;
    }
  if ((wcs->altlin & 2) && !(wcs->altlin & 1))
    {
      gboolean zero = TRUE;

      for (int j = 0; j < naxis; j++)
        if (wcs->cd[ispec * naxis + j] != 0.0)
          zero = FALSE;
      if (zero)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: CD%d_%d = 0: the spectral axis has no channel step", path, ispec + 1, ispec + 1);
          goto out;
        }
    }
  else if (wcs->cdelt[ispec] == 0.0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CDELT%d = 0: the spectral axis has no channel step", path, ispec + 1);
      goto out;
    }
  /* the sky axes need a pixel size too (wcsset would only call the matrix singular) */
  if (!(wcs->altlin & 2))
    for (int i = 0; i < naxis; i++)
      {
        const char *t = wcs->ctype[i];
        gboolean sky = g_str_has_prefix (t, "RA") || g_str_has_prefix (t, "DEC") ||
                       (strlen (t) >= 4 && (strncmp (t + 1, "LON", 3) == 0 || strncmp (t + 1, "LAT", 3) == 0));

        if (i != ispec && sky && wcs->cdelt[i] == 0.0)
          {
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                         "%s: CDELT%d = 0: the sky axis %s has no pixel size", path, i + 1, t);
            goto out;
          }
      }

  /* wcslib's header fixes, each reported */
  if (!efflux_fits_fix_wcs (wcs, naxes, naxis, cube, path, error))
    goto out;
  ilng = wcs->lng;
  ilat = wcs->lat;
  if (wcs->spec >= 0)
    ispec = wcs->spec;
  if (ilng < 0 || ilat < 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE1..CTYPE%d: no pair of celestial axes (RA/DEC or GLON/GLAT)", path, naxis);
      goto out;
    }

  if (ilng >= data_naxis || ilat >= data_naxis || ispec >= data_naxis)
    {
      int i = ilng >= data_naxis ? ilng : ilat >= data_naxis ? ilat : ispec;

      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE%d = '%s' is not one of the NAXIS = %d data axes", path, i + 1, orig_ctype[i],
                   data_naxis);
      goto out;
    }

  /* extra axes: degenerate, or STOKES (first plane) */
  for (int i = 0; i < naxis; i++)
    {
      stokes_plane[i] = 1;
      if (i == ilng || i == ilat || i == ispec || naxes[i] == 1)
        continue;
      if (g_ascii_strncasecmp (orig_ctype[i], "STOKES", 6) == 0)
        {
          double pix[MAX_AXES], img[MAX_AXES], w[MAX_AXES], phi, theta;
          int s = 0;

          for (int j = 0; j < naxis; j++)
            pix[j] = wcs->crpix[j];
          pix[i] = 1.0;
          wcsp2s (wcs, 1, naxis, pix, img, &phi, &theta, w, &s);
          pol_index = 0;
          efflux_cube_add_note (cube, "NAXIS%d = %lld STOKES planes: the first plane (STOKES = %g) was read",
                                i + 1, (long long) naxes[i], s == 0 ? w[i] : 1.0);
          continue;
        }
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: NAXIS%d = %lld: an extra axis (CTYPE%d = '%s') longer than 1 that is not STOKES",
                   path, i + 1, (long long) naxes[i], i + 1, orig_ctype[i]);
      goto out;
    }

  nx = (gsize) naxes[ilng];
  ny = (gsize) naxes[ilat];
  nchan = (gsize) naxes[ispec];
  cube->nx = nx;
  cube->ny = ny;
  cube->nchan = nchan;
  if (!g_size_checked_mul (&nvox, nx, ny) || !g_size_checked_mul (&nvox, nvox, nchan) ||
      !g_size_checked_mul (&bytes, nvox, sizeof (float)))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: NAXIS%d x NAXIS%d x NAXIS%d overflows",
                   path, ilng + 1, ilat + 1, ispec + 1);
      goto out;
    }

  /* --- sky ------------------------------------------------------------------------------- */
  {
    gboolean defaulted = FALSE;

    if (!efflux_fits_sky_frame (cube, wcs, path, orig_ctype[ilng], &defaulted, error))
      goto out;
    if (defaulted && cube->frame == EFFLUX_SKY_ICRS)
      efflux_cube_add_note (cube, "no RADESYS and no EQUINOX: ICRS assumed (FITS default)");
    else if (defaulted && cube->frame == EFFLUX_SKY_FK4)
      efflux_cube_add_note (cube, "no RADESYS, EQUINOX = %g: FK4 assumed (FITS default)", wcs->equinox);
    else if (defaulted)
      efflux_cube_add_note (cube, "no RADESYS, EQUINOX = %g: FK5 assumed (FITS default)", wcs->equinox);
    if (cube->frame == EFFLUX_SKY_GALACTIC)
      efflux_cube_add_note (cube, "sky positions converted from galactic to ICRS");
    else if (cube->frame == EFFLUX_SKY_FK4)
      efflux_cube_add_note (cube, "sky positions converted from FK4 (equinox B%g, E-terms removed, epoch of "
                            "observation taken as the equinox) to ICRS", cube->equinox);
    else if (cube->frame != EFFLUX_SKY_ICRS)
      efflux_cube_add_note (cube, "sky positions converted from %s (equinox %g) to ICRS",
                            efflux_sky_frame_name (cube->frame), cube->equinox);
    if (!efflux_fits_sky_axes (cube, wcs, ilng, ilat, path, error))
      goto out;
  }

  /* --- spectral axis --------------------------------------------------------------------- */
  {
    double c = EFFLUX_C_KMS * 1000.0;   /* m/s */
    g_autofree double *pix = g_new (double, (nchan + 1) * naxis);
    g_autofree double *img = g_new (double, (nchan + 1) * naxis);
    g_autofree double *wld = g_new (double, (nchan + 1) * naxis);
    g_autofree double *phi = g_new (double, nchan + 1);
    g_autofree double *theta = g_new (double, nchan + 1);
    g_autofree int *stat = g_new0 (int, nchan + 1);
    g_autofree double *ratio = g_new (double, nchan + 1);
    g_autofree double *vrad_si = g_new (double, nchan + 1);
    char stype[5];
    double nu0 = 0.0;
    g_autofree char *specsys = efflux_fits_trimmed (wcs->specsys);
    double beta = 0.0;

    for (gsize k = 0; k <= nchan; k++)
      {
        for (int i = 0; i < naxis; i++)
          pix[k * naxis + i] = (i == ilng || i == ilat) ? wcs->crpix[i] : 1.0;
        pix[k * naxis + ispec] = (double) k + 1.0;
      }
    if (wcsp2s (wcs, (int) nchan + 1, naxis, pix, img, phi, theta, wld, stat) != 0)
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: CTYPE%d = '%s': channel velocities cannot be computed: %s", path, ispec + 1,
                     orig_ctype[ispec], wcs->err && wcs->err->msg ? wcs->err->msg : "wcslib refused");
        goto out;
      }
    cube->spectral_ctype = g_strdup (orig_ctype[ispec]);
    memcpy (stype, wcs->ctype[ispec], 4);
    stype[4] = '\0';
    if (!undefined (wcs->restfrq) && wcs->restfrq > 0.0)
      nu0 = wcs->restfrq;
    else if (!undefined (wcs->restwav) && wcs->restwav > 0.0)
      nu0 = c / wcs->restwav;

    if (strcmp (stype, "FREQ") == 0 || strcmp (stype, "WAVE") == 0)
      {
        if (nu0 <= 0.0)
          {
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                         "%s: RESTFRQ missing: the %s axis (CTYPE%d = '%s') needs a rest frequency "
                         "(RESTFRQ, RESTFREQ or RESTWAV)", path, stype, ispec + 1, orig_ctype[ispec]);
            goto out;
          }
      }
    for (gsize k = 0; k <= nchan; k++)
      {
        double w = wld[k * naxis + ispec];
        double r;

        if (stat[k] != 0 || !isfinite (w))
          {
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                         "%s: CTYPE%d = '%s': channel %" G_GSIZE_FORMAT " has no valid spectral coordinate",
                         path, ispec + 1, orig_ctype[ispec], k);
            goto out;
          }
        /* Greisen et al. 2006, A&A 446, 747, table 1: every type to nu/nu0 */
        if (strcmp (stype, "FREQ") == 0)
          r = w / nu0;
        else if (strcmp (stype, "WAVE") == 0)
          r = c / w / nu0;
        else if (strcmp (stype, "VRAD") == 0)
          r = 1.0 - w / c;
        else if (strcmp (stype, "VOPT") == 0)
          r = 1.0 / (1.0 + w / c);
        else if (strcmp (stype, "ZOPT") == 0)
          r = 1.0 / (1.0 + w);
        else if (strcmp (stype, "VELO") == 0)
          r = sqrt ((c - w) / (c + w));
        else if (strcmp (stype, "BETA") == 0)
          r = sqrt ((1.0 - w) / (1.0 + w));
        else
          {
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                         "%s: CTYPE%d = '%s': spectral type not read (FREQ, VRAD, VOPT, VELO, FELO, WAVE, ZOPT are)",
                         path, ispec + 1, orig_ctype[ispec]);
            goto out;
          }
        ratio[k] = r;
        vrad_si[k] = strcmp (stype, "VRAD") == 0 ? w : NAN;
      }
    cube->restfreq_hz = nu0;
    if (nu0 > 0.0)
      {
        nu_sky = g_new (double, nchan);
        for (gsize k = 0; k < nchan; k++)
          nu_sky[k] = ratio[k] * nu0;
      }

    /* velocity frame */
    if (specsys[0] == '\0')
      {
        cube->specsys = g_strdup ("LSRK");
        efflux_cube_add_note (cube, "no SPECSYS (or VELREF): velocities taken as LSRK");
      }
    else
      {
        cube->specsys = g_strdup (specsys);
        if (strcmp (specsys, "BARYCENT") == 0 || strcmp (specsys, "HELIOCEN") == 0)
          {
            double ra, dec, dvk;

            if (!efflux_cube_pixel_to_icrs (cube, ((double) nx - 1.0) / 2.0, ((double) ny - 1.0) / 2.0, &ra, &dec))
              {
                g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                             "%s: SPECSYS = '%s': the map centre has no sky position for the LSRK correction",
                             path, specsys);
                goto out;
              }
            dvk = efflux_sky_lsrk_minus_bary_kms (ra, dec);
            beta = dvk / EFFLUX_C_KMS;
            efflux_cube_add_note (cube,
                                  "velocities converted from %s to LSRK: %+.3f km/s (standard solar motion, "
                                  "20 km/s towards RA 18h, Dec +30 deg B1900, towards the map centre)",
                                  specsys, dvk);
          }
        else if (strcmp (specsys, "LSRK") != 0 && strcmp (specsys, "LSR") != 0)
          efflux_cube_add_note (cube,
                                "velocities left in the %s frame: converting them to LSRK needs the observatory "
                                "and the time of observation", specsys);
      }
    cube->velocity = g_new (double, nchan);
    {
      /* relativistic Doppler shift of an observer moving by beta towards the source */
      double shift = beta != 0.0 ? sqrt ((1.0 - beta) / (1.0 + beta)) : 1.0;
      double vnext = 0.0;

      for (gsize k = 0; k <= nchan; k++)
        {
          /* a VRAD axis left in its frame is taken as is (no rounding through nu/nu0) */
          double v = (beta == 0.0 && isfinite (vrad_si[k])) ? vrad_si[k] / 1000.0
                                                            : EFFLUX_C_KMS * (1.0 - ratio[k] * shift);

          if (k < nchan)
            cube->velocity[k] = v;
          else
            vnext = v;
        }
      cube->dv = nchan > 1 ? cube->velocity[1] - cube->velocity[0] : vnext - cube->velocity[0];
    }
    if (cube->dv == 0.0)
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: CDELT%d: the spectral axis has no channel step", path, ispec + 1);
        goto out;
      }
  }

  /* --- brightness and beam --------------------------------------------------------------- */
  {
    char value[FLEN_VALUE] = "";
    int s = 0;
    double scale = 1.0;
    double bmaj = 0.0, bmin = 0.0, bpa = 0.0;
    g_autofree double *cbmaj = g_new0 (double, nchan);
    g_autofree double *cbmin = g_new0 (double, nchan);
    g_autofree double *cbpa = g_new0 (double, nchan);
    gboolean table = FALSE, have_card_beam = FALSE;

    if (fits_read_key (f, TSTRING, "BUNIT", value, NULL, &s) != 0)
      value[0] = '\0';
    fits_clear_errmsg ();
    cube->bunit = efflux_fits_trimmed (value);
    s = 0;
    if (fits_read_key (f, TSTRING, "OBJECT", value, NULL, &s) == 0)
      cube->object = efflux_fits_trimmed (value);
    fits_clear_errmsg ();
    s = 0;
    if (fits_read_key (f, TDOUBLE, "BMAJ", &bmaj, NULL, &s) == 0)
      {
        int s2 = 0;

        if (fits_read_key (f, TDOUBLE, "BMIN", &bmin, NULL, &s2) != 0)
          bmin = bmaj;
        s2 = 0;
        if (fits_read_key (f, TDOUBLE, "BPA", &bpa, NULL, &s2) != 0)
          bpa = 0.0;
        have_card_beam = bmaj > 0.0 && bmin > 0.0;
      }
    fits_clear_errmsg ();
    if (!read_beam_table (f, path, nchan, pol_index, cbmaj, cbmin, cbpa, &table, error))
      goto out;
    if (table)
      {
        cube->has_beam = TRUE;
        cube->bmaj_arcsec = median_double (cbmaj, nchan);
        cube->bmin_arcsec = median_double (cbmin, nchan);
        cube->bpa_deg = median_double (cbpa, nchan);
        efflux_cube_add_note (cube, "per-channel beams from the BEAMS table (median %.3f\" x %.3f\", PA %.1f deg)",
                              cube->bmaj_arcsec, cube->bmin_arcsec, cube->bpa_deg);
      }
    else if (have_card_beam)
      {
        cube->has_beam = TRUE;
        cube->bmaj_arcsec = bmaj * 3600.0;
        cube->bmin_arcsec = bmin * 3600.0;
        cube->bpa_deg = bpa;
        for (gsize k = 0; k < nchan; k++)
          {
            cbmaj[k] = cube->bmaj_arcsec;
            cbmin[k] = cube->bmin_arcsec;
            cbpa[k] = bpa;
          }
      }

    cube->bunit_kind = parse_bunit (cube->bunit, &scale);
    cube->k_per_unit = g_new (double, nchan);
    for (gsize k = 0; k < nchan; k++)
      cube->k_per_unit[k] = 1.0;
    switch (cube->bunit_kind)
      {
      case EFFLUX_BUNIT_K:
        break;
      case EFFLUX_BUNIT_MISSING:
        efflux_cube_add_note (cube, "no BUNIT: brightness taken as K");
        break;
      case EFFLUX_BUNIT_JY_PIXEL:
        efflux_cube_add_note (cube, "BUNIT = '%s': kept as is, not converted to K (needs a beam)", cube->bunit);
        break;
      case EFFLUX_BUNIT_OTHER:
        efflux_cube_add_note (cube, "BUNIT = '%s': unit not understood, values kept as is", cube->bunit);
        break;
      case EFFLUX_BUNIT_JY_BEAM:
      default:
        {
          double kmin = G_MAXDOUBLE, kmax = 0.0;

          if (!cube->has_beam)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: BMAJ missing: BUNIT = '%s' needs the beam (BMAJ, BMIN, BPA or a BEAMS table)",
                           path, cube->bunit);
              goto out;
            }
          if (nu_sky == NULL)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: RESTFRQ missing: BUNIT = '%s' needs the sky frequency of each channel",
                           path, cube->bunit);
              goto out;
            }
          for (gsize k = 0; k < nchan; k++)
            {
              cube->k_per_unit[k] = scale * efflux_jy_beam_to_k (nu_sky[k], cbmaj[k], cbmin[k]);
              kmin = MIN (kmin, cube->k_per_unit[k]);
              kmax = MAX (kmax, cube->k_per_unit[k]);
            }
          efflux_cube_add_note (cube,
                                "brightness converted from %s to K (Rayleigh-Jeans, beam %.3f\" x %.3f\"): "
                                "%.6g to %.6g K per unit", cube->bunit, cube->bmaj_arcsec, cube->bmin_arcsec,
                                kmin, kmax);
        }
        break;
      }
  }

  /* --- channels asked for (the spectral axis slowest in the file) ------------------------ */
  if (options != NULL && options->channel_subset && ispec > ilng && ispec > ilat)
    {
      gsize kb = 0, ke = 0;

      if (efflux_cube_channel_range (cube, options->v1_kms, options->v2_kms, &kb, &ke) && ke - kb < nchan)
        {
          memmove (cube->velocity, cube->velocity + kb, (ke - kb) * sizeof (double));
          memmove (cube->k_per_unit, cube->k_per_unit + kb, (ke - kb) * sizeof (double));
          k_first = kb;
          nchan = ke - kb;
          cube->nchan = nchan;
          bytes = nx * ny * nchan * sizeof (float);
        }
    }

  /* --- where the data lie, and the header alone (options->layout, options->header_only) --- */
  if (options != NULL && (options->layout != NULL || options->header_only))
    {
      EffluxCubeFileLayout layout = { 0 };
      int ax[3];
      gboolean contiguous = data_axes_in_file_order (naxes, ilng, ilat, ispec, ax);

      layout.raw_float = data_is_raw_float (f, gz, tile_compressed, bitpix, contiguous);
      layout.spectral_slowest = ax[2] == ispec;
      layout.lng_fastest = ax[0] == ilng;
      if (layout.raw_float)
        {
          LONGLONG headstart = 0, datastart = 0, dataend = 0;

          fits_get_hduaddrll (f, &headstart, &datastart, &dataend, &status);
          if (status != 0)
            {
              efflux_fits_set_error (error, path, status, "cannot read the image header");
              goto out;
            }
          layout.data_offset = (guint64) datastart;
          if (layout.spectral_slowest)
            {
              layout.channel_stride = (guint64) nx * ny * sizeof (float);
              layout.data_offset += (guint64) k_first * layout.channel_stride;
            }
        }
      if (options->layout != NULL)
        *options->layout = layout;
      if (options->header_only)
        {
          cube->rms = g_new0 (float, nchan);
          if (progress != NULL)
            progress (1.0, progress_data);
          ok = TRUE;
          goto out;
        }
    }

  /* --- memory ---------------------------------------------------------------------------- */
  {
    guint64 avail = efflux_memory_available ();
    guint64 need = (guint64) bytes + 32u * 1024u * 1024u;

    if (avail > 0 && need > avail)
      {
        g_autofree char *n = format_gib (need);
        g_autofree char *a = format_gib (avail);

        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY,
                     "%s: NAXIS%d x NAXIS%d x NAXIS%d = %" G_GSIZE_FORMAT " x %" G_GSIZE_FORMAT " x %"
                     G_GSIZE_FORMAT ": the cube needs %s, %s available",
                     path, ilng + 1, ilat + 1, ispec + 1, nx, ny, nchan, n, a);
        goto out;
      }
    cube->data = alloc_voxels (bytes);
    if (cube->data == NULL)
      {
        g_autofree char *n = format_gib (bytes);

        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY, "%s: the cube needs %s: allocation failed", path, n);
        goto out;
      }
  }

  /* --- data ------------------------------------------------------------------------------ */
  {
    int ax[3] = { ilng, ilat, ispec };
    gsize out_stride[MAX_AXES] = { 0 };
    gsize plane, chunk_n, n_slow;
    int a0, a1, a2;
    gboolean contiguous = TRUE, raw = FALSE;
    float nulval = NAN;
    Loop loops[3];
    double progress_scale = options && options->no_noise ? 1.0 : 0.9;

    out_stride[ilng] = nchan;
    out_stride[ilat] = nx * nchan;
    out_stride[ispec] = 1;
    /* the three axes in file order */
    contiguous = data_axes_in_file_order (naxes, ilng, ilat, ispec, ax);
    a0 = ax[0];
    a1 = ax[1];
    a2 = ax[2];
    plane = (gsize) naxes[a0] * (gsize) naxes[a1];
    n_slow = a2 == ispec ? nchan : (gsize) naxes[a2];
    /* about 4 MiB per chunk, at most 32 slices of the slowest axis */
    chunk_n = MAX ((gsize) 1, (4u * 1024u * 1024u / sizeof (float)) / plane);
    chunk_n = MIN (chunk_n, (gsize) 32);
    chunk_n = MIN (chunk_n, n_slow);
    loops[0] = (Loop) { (gsize) naxes[a0], out_stride[a0], 1 };
    loops[1] = (Loop) { (gsize) naxes[a1], out_stride[a1], (gsize) naxes[a0] };
    loops[2] = (Loop) { 0, out_stride[a2], plane };

    raw = data_is_raw_float (f, gz, tile_compressed, bitpix, contiguous);

    if (raw)
      {
        RawRead r = { 0 };
        LONGLONG headstart = 0, datastart = 0, dataend = 0;
        GThread *helpers[EFFLUX_CUBE_MAX_THREADS] = { NULL };
        guint n_workers, n_helpers = 0;
        gsize reported = 0;

        fits_get_hduaddrll (f, &headstart, &datastart, &dataend, &status);
        r.fd = open (path, O_RDONLY | O_CLOEXEC);
        if (status != 0 || r.fd < 0)
          {
            int e = errno;

            if (r.fd >= 0)
              close (r.fd);
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot read the data: %s", path,
                         status != 0 ? "no data address" : g_strerror (e));
            goto out;
          }
        r.offset = (guint64) datastart + (guint64) k_first * plane * sizeof (guint32);
        r.plane = plane;
        r.n_fast = (gsize) naxes[a0];
        r.n_mid = (gsize) naxes[a1];
        /* 64 slices: each spectrum gets runs of 256 bytes (four whole lines, stored one after
         * the other); fewer for very wide rows, down to 16 (one line); rows to make about 4 MiB
         * a unit (fewer preads than 2 MiB, still in the cache; 2, 4 and 8 MiB measured back to
         * back, 4 the fastest by about 10 %). Where the AVX-512 or AVX2 code stages its stores
         * (spectra not a multiple of 16 bytes long, see swap_transpose_unit), 256 slices: a run
         * then shares its first and last cache lines with other units' runs, which are stored
         * through the cache, and longer runs make those fewer (512 x 512 x 255 cube, AVX-512:
         * 43-44 ms against 48-49 ms with 64 slices, medians of 21; 256 x 256 x 421: 25-28 ms
         * both; AVX2 alone, 255 channels: 54-59 ms against 61-63 ms). Cutting the runs of
         * longer spectra on cache lines between units (reading 16 channels more per unit, so
         * that no line is shared) gained nothing measurable: 256 x 256 x 1001 and
         * 128 x 128 x 3999 cubes 54-59 ms either way */
        r.chunk_n = loops[2].s_out == 1 && loops[0].s_out % 4 != 0 && efflux_cube_loader_uses_avx2 ()
                    ? SWAP_STAGE_CHANNELS : 64;
        while (r.chunk_n > 16 && r.chunk_n * r.n_fast * sizeof (guint32) > 2u * 1024u * 1024u)
          r.chunk_n /= 2;
        r.chunk_n = MIN (r.chunk_n, n_slow);
        r.rows = MAX ((gsize) 1, (4u * 1024u * 1024u / sizeof (guint32)) / (r.chunk_n * r.n_fast));
        r.rows = MIN (r.rows, r.n_mid);
        r.row_blocks = (r.n_mid + r.rows - 1) / r.rows;
        r.n_slow = n_slow;
        r.slice_blocks = (n_slow + r.chunk_n - 1) / r.chunk_n;
        r.n_chunks = (n_slow + r.chunk_n - 1) / r.chunk_n * r.row_blocks;
        memcpy (r.loops, loops, sizeof loops);
        r.slow_stride_out = out_stride[a2];
        r.mid_stride_out = out_stride[a1];
        r.out = (guint32 *) cube->data;
        r.cancellable = cancellable;
        r.avx2 = efflux_cube_loader_uses_avx2 ();
        r.avx512 = efflux_cube_loader_uses_avx512 ();
        if (progress != NULL)
          progress (0.0, progress_data);
        /* n_workers threads read the units: without a progress function the calling thread is
         * one of them; with one, all are helpers and the calling thread reports their progress
         * (by itself when no thread could be started) */
        n_workers = (guint) MIN ((gsize) efflux_cube_worker_threads (), r.n_chunks);
        while (n_helpers + (progress == NULL ? 1u : 0u) < n_workers)
          {
            helpers[n_helpers] = g_thread_try_new ("efflux-load", raw_read_worker, &r, NULL);
            if (helpers[n_helpers] == NULL)
              break;
            n_helpers++;
          }
        if (progress == NULL || n_helpers == 0)
          raw_read_worker (&r);
        else
          for (;;)
            {
              gsize d = (gsize) g_atomic_int_get (&r.done);

              if (d != reported)
                {
                  reported = d;
                  progress ((double) d / (double) r.n_chunks * progress_scale, progress_data);
                }
              /* each worker takes one unit number past the end as it stops */
              if (d >= r.n_chunks || g_atomic_int_get (&r.failed) != 0 ||
                  (gsize) g_atomic_int_get (&r.next) >= r.n_chunks + n_helpers)
                break;
              g_usleep (2000);
            }
        for (guint t = 0; t < n_helpers; t++)
          g_thread_join (helpers[t]);
        close (r.fd);
        if (!efflux_fits_read_outcome (r.failed, r.err_no, path, cancellable, error))
          goto out;
        if (progress != NULL)
          progress (progress_scale, progress_data);
      }
    else
      {
        g_autofree float *buf = g_try_malloc (plane * chunk_n * sizeof (float));

        if (buf == NULL)
          {
            g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY, "%s: no memory for the read buffer", path);
            goto out;
          }
        for (gsize j0 = 0; j0 < n_slow; j0 += chunk_n)
          {
            gsize cn = MIN (chunk_n, n_slow - j0);
            int anynul = 0;

            if (g_cancellable_set_error_if_cancelled (cancellable, error))
              goto out;
            if (contiguous)
              {
                LONGLONG first[MAX_AXES];

                for (int i = 0; i < naxis; i++)
                  first[i] = 1;
                first[a2] = (LONGLONG) (j0 + k_first) + 1;
                fits_read_pixll (f, TFLOAT, first, (LONGLONG) (plane * cn), &nulval, buf, &anynul, &status);
              }
            else
              {
                long fpix[MAX_AXES], lpix[MAX_AXES], inc[MAX_AXES];

                for (int i = 0; i < naxis; i++)
                  {
                    fpix[i] = stokes_plane[i];
                    lpix[i] = stokes_plane[i];
                    inc[i] = 1;
                  }
                fpix[a0] = 1;
                lpix[a0] = (long) naxes[a0];
                fpix[a1] = 1;
                lpix[a1] = (long) naxes[a1];
                fpix[a2] = (long) (j0 + k_first) + 1;
                lpix[a2] = (long) (j0 + k_first + cn);
                fits_read_subset (f, TFLOAT, fpix, lpix, inc, &nulval, buf, &anynul, &status);
              }
            if (status != 0)
              {
                efflux_fits_set_error (error, path, status, "the data cannot be read");
                goto out;
              }
            loops[2].n = cn;
            transpose_chunk ((const guint32 *) buf, (guint32 *) cube->data + j0 * out_stride[a2], loops, FALSE);
            if (progress != NULL)
              progress ((double) (j0 + cn) / (double) n_slow * progress_scale, progress_data);
          }
      }
  }

  if (cube->bunit_kind == EFFLUX_BUNIT_JY_BEAM)
    {
      gsize npix = nx * ny;

      for (gsize p = 0; p < npix; p++)
        {
          float *spec = cube->data + p * nchan;

          for (gsize k = 0; k < nchan; k++)
            spec[k] = (float) (spec[k] * cube->k_per_unit[k]);
        }
    }

  /* a cube without a single finite value can show and measure nothing */
  {
    gsize n = nx * ny * nchan, i = 0;

    while (i < n && !isfinite (cube->data[i]))
      i++;
    if (i == n)
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: no finite value in the data: every voxel is NaN, infinite or BLANK", path);
        goto out;
      }
  }

  if (g_cancellable_set_error_if_cancelled (cancellable, error))
    goto out;
  cube->rms = g_new0 (float, nchan);
  if (!(options && options->no_noise))
    efflux_cube_estimate_noise (cube);
  if (progress != NULL)
    progress (1.0, progress_data);
  ok = TRUE;

out:
  if (wcsarr != NULL)
    wcsvfree (&nwcs, &wcsarr);
  if (!ok)
    return NULL;
  return g_steal_pointer (&cube);
}
