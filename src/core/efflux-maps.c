/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-maps.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>

/* ------------------------------------------------------------------------------------------ */
/* Threads */

typedef struct
{
  EffluxRangeFunc func;
  gpointer        data;
  gsize           begin, end;
} ChunkJob;

static gpointer
chunk_thread (gpointer data)
{
  ChunkJob *job = data;

  job->func (job->begin, job->end, job->data);
  return NULL;
}

void
efflux_parallel_for (gsize           n,
                     gsize           min_chunk,
                     EffluxRangeFunc func,
                     gpointer        data)
{
  guint n_threads = MIN (g_get_num_processors (), 8u);
  ChunkJob jobs[8];
  GThread *threads[8] = { NULL };

  if (min_chunk == 0)
    min_chunk = 1;
  if (n == 0)
    return;
  if (n / min_chunk < n_threads)
    n_threads = MAX (1u, (guint) (n / min_chunk));
  if (n_threads <= 1)
    {
      func (0, n, data);
      return;
    }
  for (guint i = 0; i < n_threads; i++)
    {
      jobs[i].func = func;
      jobs[i].data = data;
      jobs[i].begin = n * i / n_threads;
      jobs[i].end = n * (i + 1) / n_threads;
    }
  for (guint i = 1; i < n_threads; i++)
    {
      threads[i] = g_thread_try_new ("efflux-maps", chunk_thread, &jobs[i], NULL);
      if (threads[i] == NULL)
        chunk_thread (&jobs[i]);   /* no thread to be had: do it here */
    }
  chunk_thread (&jobs[0]);
  for (guint i = 1; i < n_threads; i++)
    if (threads[i] != NULL)
      g_thread_join (threads[i]);
}

/* ------------------------------------------------------------------------------------------ */
/* Orders */

gboolean
efflux_moment_order_parse (const char        *text,
                           EffluxMomentOrder *order)
{
  static const char *names[] = { "0", "1", "2", "peak" };

  if (text == NULL)
    return FALSE;
  for (guint i = 0; i < G_N_ELEMENTS (names); i++)
    if (g_ascii_strcasecmp (text, names[i]) == 0)
      {
        *order = (EffluxMomentOrder) i;
        return TRUE;
      }
  return FALSE;
}

const char *
efflux_moment_order_name (EffluxMomentOrder order)
{
  switch (order)
    {
    case EFFLUX_MOMENT_0: return "0";
    case EFFLUX_MOMENT_1: return "1";
    case EFFLUX_MOMENT_2: return "2";
    case EFFLUX_MOMENT_PEAK: return "peak";
    default: return "?";
    }
}

const char *
efflux_moment_order_bunit (EffluxMomentOrder order)
{
  switch (order)
    {
    case EFFLUX_MOMENT_0: return "K km/s";
    case EFFLUX_MOMENT_1: return "km/s";
    case EFFLUX_MOMENT_2: return "km/s";
    case EFFLUX_MOMENT_PEAK: return "K";
    default: return "";
    }
}

static const char *
cube_name (const EffluxCube *cube)
{
  return cube->path != NULL && *cube->path != '\0' ? cube->path : "cube";
}

static gboolean
select_channels (const EffluxCube  *cube,
                 double             v1,
                 double             v2,
                 gsize             *k0,
                 gsize             *k1,
                 GError           **error)
{
  if (!isfinite (v1) || !isfinite (v2))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: velocity range %g .. %g km/s is not finite", cube_name (cube), v1, v2);
      return FALSE;
    }
  if (!efflux_cube_channel_range (cube, v1, v2, k0, k1))
    {
      double a = cube->nchan > 0 ? cube->velocity[0] : NAN;
      double b = cube->nchan > 0 ? cube->velocity[cube->nchan - 1] : NAN;

      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: no channel centre lies in %g .. %g km/s (the channels span %g .. %g km/s)",
                   cube_name (cube), MIN (v1, v2), MAX (v1, v2), MIN (a, b), MAX (a, b));
      return FALSE;
    }
  return TRUE;
}

/* Offsets u = v - v_ref of every channel, v_ref the middle channel's velocity. */
static double *
channel_offsets (const EffluxCube *cube,
                 double           *vref)
{
  double *u = g_new (double, MAX (cube->nchan, 1));

  *vref = cube->nchan > 0 ? cube->velocity[cube->nchan / 2] : 0.0;
  for (gsize k = 0; k < cube->nchan; k++)
    u[k] = cube->velocity[k] - *vref;
  return u;
}

static inline float
finish_pixel (EffluxMomentOrder order,
              double            s0,
              double            s1,
              double            s2,
              guint64           n,
              double            peak,
              double            adv,
              double            vref)
{
  double m, var, scale;

  if (n == 0)
    return NAN;
  switch (order)
    {
    case EFFLUX_MOMENT_0:
      return (float) (s0 * adv);
    case EFFLUX_MOMENT_PEAK:
      return (float) peak;
    case EFFLUX_MOMENT_1:
      if (!(s0 > 0.0))
        return NAN;
      return (float) (vref + s1 / s0);
    case EFFLUX_MOMENT_2:
    default:
      if (!(s0 > 0.0))
        return NAN;
      m = s1 / s0;
      var = s2 / s0 - m * m;
      if (var < 0.0)
        {
          /* rounding of a (near) single-velocity pixel, or a truly negative weighted variance */
          scale = fabs (s2 / s0) + m * m;
          if (var >= -1e-10 * scale)
            var = 0.0;
          else
            return NAN;
        }
      return (float) sqrt (var);
    }
}

/* ------------------------------------------------------------------------------------------ */
/* Direct moments */

typedef struct
{
  const EffluxCube  *cube;
  EffluxMomentOrder  order;
  gsize              k0, k1;
  double             clip;
  const double      *u;
  double             vref, adv;
  float             *out;
} DirectJob;

static void
direct_rows (gsize    begin,
             gsize    end,
             gpointer data)
{
  const DirectJob *job = data;
  const EffluxCube *cube = job->cube;
  const gsize nx = cube->nx;
  const gsize k0 = job->k0, k1 = job->k1;
  const gboolean clip = job->clip > 0.0;
  g_autofree float *thr = NULL;

  if (clip)
    {
      thr = g_new (float, cube->nchan);
      for (gsize k = 0; k < cube->nchan; k++)
        thr[k] = (float) (job->clip * cube->rms[k]);
    }

  for (gsize y = begin; y < end; y++)
    for (gsize x = 0; x < nx; x++)
      {
        const float *spec = efflux_cube_spectrum (cube, x, y);
        double s0 = 0.0, s1 = 0.0, s2 = 0.0, peak = -INFINITY;
        guint64 n = 0;

        if (job->order == EFFLUX_MOMENT_0 && !clip)
          {
            for (gsize k = k0; k < k1; k++)
              {
                float t = spec[k];

                if (isfinite (t))
                  {
                    s0 += t;
                    n++;
                  }
              }
          }
        else
          {
            for (gsize k = k0; k < k1; k++)
              {
                float t = spec[k];
                double tu;

                if (!isfinite (t))
                  continue;
                if (clip && !(t >= thr[k]))
                  continue;
                n++;
                s0 += t;
                tu = t * job->u[k];
                s1 += tu;
                s2 += tu * job->u[k];
                if (t > peak)
                  peak = t;
              }
            if (job->order == EFFLUX_MOMENT_2 && n > 0 && s0 > 0.0)
              {
                /* second pass about the mean: no cancellation where sum(T) is small */
                double m = s1 / s0, sc = 0.0;

                for (gsize k = k0; k < k1; k++)
                  {
                    float t = spec[k];
                    double d;

                    if (!isfinite (t) || (clip && !(t >= thr[k])))
                      continue;
                    d = job->u[k] - m;
                    sc += t * d * d;
                  }
                job->out[y * nx + x] = sc >= 0.0 ? (float) sqrt (sc / s0) : NAN;
                continue;
              }
          }
        job->out[y * nx + x] = finish_pixel (job->order, s0, s1, s2, n, peak, job->adv,
                                             job->vref);
      }
}

gboolean
efflux_moment_map (const EffluxCube  *cube,
                   EffluxMomentOrder  order,
                   double             v1,
                   double             v2,
                   double             clip_sigma,
                   float             *out,
                   GError           **error)
{
  DirectJob job = { 0 };
  g_autofree double *u = NULL;

  g_return_val_if_fail (cube != NULL && out != NULL, FALSE);

  if (!select_channels (cube, v1, v2, &job.k0, &job.k1, error))
    return FALSE;
  if (!isfinite (clip_sigma) || clip_sigma < 0.0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: clip %g x rms: the clip must be a finite number >= 0",
                   cube_name (cube), clip_sigma);
      return FALSE;
    }
  if (clip_sigma > 0.0 && cube->rms == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: a clip needs the channel noise, and none was estimated", cube_name (cube));
      return FALSE;
    }
  u = channel_offsets (cube, &job.vref);
  job.cube = cube;
  job.order = order;
  job.clip = clip_sigma;
  job.u = u;
  job.adv = fabs (cube->dv);
  job.out = out;
  efflux_parallel_for (cube->ny, 4, direct_rows, &job);
  return TRUE;
}

/* ------------------------------------------------------------------------------------------ */
/* Cumulative sums */

struct _EffluxMomentCache
{
  const EffluxCube *cube;
  gsize             npix;
  gsize             nbound;   /* boundaries at channels 0, B, 2B, ..., and nchan */
  double           *p0, *p1, *p2;   /* nbound planes of npix each */
  guint32          *pn;
  double           *u;
  double            vref;
  /* EFFLUX_MOMENT_CACHE_FAST only: the cube again, channel-major: planes[k * npix + pixel] */
  float            *planes;
};

/* Large planes in transparent huge pages when the system allows it (madvise before the first
 * touch): fewer page faults while building, fewer TLB misses while reading. Free with g_free. */
static void *
plane_alloc (gsize n,
             gsize size)
{
  const gsize huge = 2u << 20;
  gsize bytes;
  void *p = NULL;

  if (!g_size_checked_mul (&bytes, MAX (n, 1), size))
    return NULL;
  if (bytes < 2 * huge)
    return g_try_malloc (bytes);
  if (posix_memalign (&p, huge, bytes) != 0)
    return NULL;
#ifdef MADV_HUGEPAGE
  (void) madvise (p, bytes / huge * huge, MADV_HUGEPAGE);
#endif
  return p;
}

static inline gsize
bound_channel (const EffluxMomentCache *cache,
               gsize                    b)
{
  return MIN (b * EFFLUX_MOMENT_CACHE_BLOCK, cache->cube->nchan);
}

static void
build_rows (gsize    begin,
            gsize    end,
            gpointer data)
{
  EffluxMomentCache *cache = data;
  const EffluxCube *cube = cache->cube;
  const gsize nchan = cube->nchan, npix = cache->npix;
  const double *u = cache->u;

  for (gsize y = begin; y < end; y++)
    for (gsize x = 0; x < cube->nx; x++)
      {
        gsize pix = y * cube->nx + x;
        const float *spec = cube->data + pix * nchan;
        double s0 = 0.0, s1 = 0.0, s2 = 0.0;
        guint32 n = 0;

        cache->p0[pix] = cache->p1[pix] = cache->p2[pix] = 0.0;
        cache->pn[pix] = 0;
        for (gsize b = 1; b < cache->nbound; b++)
          {
            gsize k_end = bound_channel (cache, b), i = b * npix + pix;
            /* two chains of sums (even and odd channels) halve the add latency */
            double a0 = 0.0, a1 = 0.0, a2 = 0.0, c0 = 0.0, c1 = 0.0, c2 = 0.0;
            guint32 na = 0, nc = 0;
            gsize k = bound_channel (cache, b - 1);

            for (; k + 1 < k_end; k += 2)
              {
                float t = spec[k], w = spec[k + 1];

                if (isfinite (t))
                  {
                    double tu = t * u[k];

                    a0 += t;
                    a1 += tu;
                    a2 += tu * u[k];
                    na++;
                  }
                if (isfinite (w))
                  {
                    double wu = w * u[k + 1];

                    c0 += w;
                    c1 += wu;
                    c2 += wu * u[k + 1];
                    nc++;
                  }
              }
            if (k < k_end && isfinite (spec[k]))
              {
                double tu = spec[k] * u[k];

                a0 += spec[k];
                a1 += tu;
                a2 += tu * u[k];
                na++;
              }
            s0 += a0 + c0;
            s1 += a1 + c1;
            s2 += a2 + c2;
            n += na + nc;
            cache->p0[i] = s0;
            cache->p1[i] = s1;
            cache->p2[i] = s2;
            cache->pn[i] = n;
          }
      }
}

#define FAST_TILE 16

/* The channel-major copy, by tiles of FAST_TILE neighbouring pixels so that each plane is written
 * a whole cache line at a time. */
static void
build_planes (gsize    begin,
              gsize    end,
              gpointer data)
{
  EffluxMomentCache *cache = data;
  const EffluxCube *cube = cache->cube;
  const gsize nchan = cube->nchan, npix = cache->npix;

  for (gsize tile = begin; tile < end; tile++)
    {
      gsize p0 = tile * FAST_TILE, p1 = MIN (p0 + FAST_TILE, npix);

      for (gsize k = 0; k < nchan; k++)
        {
          float *plane = cache->planes + k * npix;

          for (gsize p = p0; p < p1; p++)
            plane[p] = cube->data[p * nchan + k];
        }
    }
}

EffluxMomentCache *
efflux_moment_cache_new (const EffluxCube  *cube,
                         GError           **error)
{
  return efflux_moment_cache_new_full (cube, EFFLUX_MOMENT_CACHE_COMPACT, error);
}

EffluxMomentCache *
efflux_moment_cache_new_full (const EffluxCube        *cube,
                              EffluxMomentCacheFlags   flags,
                              GError                 **error)
{
  g_autoptr (EffluxMomentCache) cache = NULL;
  guint64 need;
  gsize cells;

  g_return_val_if_fail (cube != NULL, NULL);

  if (cube->nchan > G_MAXUINT32)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: NAXIS of the spectral axis = %" G_GSIZE_FORMAT ": too many channels",
                   cube_name (cube), cube->nchan);
      return NULL;
    }
  cache = g_new0 (EffluxMomentCache, 1);
  cache->cube = cube;
  cache->npix = cube->nx * cube->ny;
  cache->nbound = (cube->nchan + EFFLUX_MOMENT_CACHE_BLOCK - 1) / EFFLUX_MOMENT_CACHE_BLOCK + 1;
  cells = cache->nbound * cache->npix;
  need = (guint64) cells * (3 * sizeof (double) + sizeof (guint32));
  cache->p0 = plane_alloc (cells, sizeof (double));
  cache->p1 = plane_alloc (cells, sizeof (double));
  cache->p2 = plane_alloc (cells, sizeof (double));
  cache->pn = plane_alloc (cells, sizeof (guint32));
  if (cache->p0 == NULL || cache->p1 == NULL || cache->p2 == NULL || cache->pn == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY,
                   "%s: the cumulative sums need %.1f MiB, which could not be had",
                   cube_name (cube), need / 1048576.0);
      return NULL;
    }
  if (flags & EFFLUX_MOMENT_CACHE_FAST)
    {
      cache->planes = plane_alloc (cube->nchan * cache->npix, sizeof (float));
      if (cache->planes == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY,
                       "%s: the channel-major copy needs %.1f MiB, which could not be had",
                       cube_name (cube), cube->nchan * cache->npix * 4.0 / 1048576.0);
          return NULL;
        }
    }
  cache->u = channel_offsets (cube, &cache->vref);
  efflux_parallel_for (cube->ny, 4, build_rows, cache);
  if (cache->planes != NULL)
    efflux_parallel_for ((cache->npix + FAST_TILE - 1) / FAST_TILE, 64, build_planes, cache);
  return g_steal_pointer (&cache);
}

void
efflux_moment_cache_free (EffluxMomentCache *cache)
{
  if (cache == NULL)
    return;
  g_free (cache->p0);
  g_free (cache->p1);
  g_free (cache->p2);
  g_free (cache->pn);
  g_free (cache->u);
  g_free (cache->planes);
  g_free (cache);
}

guint64
efflux_moment_cache_bytes (const EffluxMomentCache *cache)
{
  guint64 bytes = (guint64) cache->nbound * cache->npix * (3 * sizeof (double) + sizeof (guint32));

  if (cache->planes != NULL)
    bytes += (guint64) cache->cube->nchan * cache->npix * sizeof (float);
  return bytes;
}

gboolean
efflux_moment_cache_is_fast (const EffluxMomentCache *cache)
{
  return cache->planes != NULL;
}

const EffluxCube *
efflux_moment_cache_cube (const EffluxMomentCache *cache)
{
  return cache->cube;
}

/* How prefix(k) is reached: from boundary b (channel c), adding channels [c, k) when c <= k,
 * subtracting [k, c) when c > k. */
typedef struct
{
  gsize    b;
  gsize    lo, hi;   /* the channels summed directly */
  gboolean add;
} PrefixPlan;

static PrefixPlan
plan_prefix (const EffluxMomentCache *cache,
             gsize                    k)
{
  PrefixPlan plan;
  gsize c;

  plan.b = MIN ((k + EFFLUX_MOMENT_CACHE_BLOCK / 2) / EFFLUX_MOMENT_CACHE_BLOCK,
                cache->nbound - 1);
  c = bound_channel (cache, plan.b);
  plan.add = c <= k;
  plan.lo = MIN (c, k);
  plan.hi = MAX (c, k);
  return plan;
}

typedef struct
{
  const EffluxMomentCache *cache;
  EffluxMomentOrder        order;
  PrefixPlan               a, z;   /* prefix(k0), prefix(k1) */
  double                   adv;
  float                   *out;
} QueryJob;

#define PREFETCH_AHEAD 24

static void
query_rows (gsize    begin,
            gsize    end,
            gpointer data)
{
  const QueryJob *job = data;
  const EffluxMomentCache *cache = job->cache;
  const EffluxCube *cube = cache->cube;
  const gsize nchan = cube->nchan, npix = cache->npix;
  const PrefixPlan a = job->a, z = job->z;
  const double *a0 = cache->p0 + a.b * npix, *z0 = cache->p0 + z.b * npix;
  const double *a1 = cache->p1 + a.b * npix, *z1 = cache->p1 + z.b * npix;
  const double *a2 = cache->p2 + a.b * npix, *z2 = cache->p2 + z.b * npix;
  const guint32 *an = cache->pn + a.b * npix, *zn = cache->pn + z.b * npix;
  const double sa = a.add ? 1.0 : -1.0, sz = z.add ? 1.0 : -1.0;
  const gint64 na_sign = a.add ? 1 : -1, nz_sign = z.add ? 1 : -1;
  const double *u = cache->u;
  const gsize pix_begin = begin * cube->nx, pix_end = end * cube->nx;

  if (cache->planes != NULL)
    {
      /* the remainders from the channel-major copy: whole planes read in order, by tiles of
       * pixels whose sums stay in the first cache level */
      enum { TILE = 1024 };
      double t0[TILE], t1[TILE], t2[TILE];
      gint64 tn[TILE];
      const gboolean moments = job->order != EFFLUX_MOMENT_0;

      for (gsize p0 = pix_begin; p0 < pix_end; p0 += TILE)
        {
          gsize p1 = MIN (p0 + TILE, pix_end);

          for (gsize p = p0; p < p1; p++)
            {
              t0[p - p0] = z0[p] - a0[p];
              tn[p - p0] = (gint64) zn[p] - (gint64) an[p];
              if (moments)
                {
                  t1[p - p0] = z1[p] - a1[p];
                  t2[p - p0] = z2[p] - a2[p];
                }
            }
          for (int end_ = 0; end_ < 2; end_++)
            {
              const PrefixPlan *pl = end_ == 0 ? &a : &z;
              /* prefix(k0) is subtracted, prefix(k1) added; a remainder added to its prefix
               * when the boundary lies below */
              const double sign = (end_ == 0 ? -1.0 : 1.0) * (pl->add ? 1.0 : -1.0);
              const gint64 isign = sign > 0 ? 1 : -1;

              for (gsize k = pl->lo; k < pl->hi; k++)
                {
                  const float *plane = cache->planes + k * npix;
                  const double uk = u[k];

                  for (gsize p = p0; p < p1; p++)
                    {
                      float t = plane[p];

                      if (!isfinite (t))
                        continue;
                      t0[p - p0] += sign * t;
                      tn[p - p0] += isign;
                      if (moments)
                        {
                          t1[p - p0] += sign * t * uk;
                          t2[p - p0] += sign * t * uk * uk;
                        }
                    }
                }
            }
          for (gsize p = p0; p < p1; p++)
            job->out[p] = finish_pixel (job->order, t0[p - p0], moments ? t1[p - p0] : 0.0,
                                        moments ? t2[p - p0] : 0.0,
                                        tn[p - p0] > 0 ? (guint64) tn[p - p0] : 0, NAN, job->adv,
                                        cache->vref);
        }
      return;
    }

  if (job->order == EFFLUX_MOMENT_0)
    {
      /* Each remainder lies within one or two cache lines of the pixel's spectrum; a second
       * line is fetched only when the remainder reaches into it (when the spectra are 64-byte
       * aligned, the usual case, that is known once for all pixels). */
      const gboolean aligned = ((guintptr) cube->data % 64) == 0 && (nchan * sizeof (float)) % 64 == 0;
      const gsize line = 64 / sizeof (float);
      const gboolean a_two = a.lo < a.hi && (!aligned || a.lo / line != (a.hi - 1) / line);
      const gboolean z_two = z.lo < z.hi && (!aligned || z.lo / line != (z.hi - 1) / line);
      const gsize ahead_n = PREFETCH_AHEAD;

      for (gsize pix = pix_begin; pix < pix_end; pix++)
        {
          const float *spec = cube->data + pix * nchan;
          double ra = 0.0, rz = 0.0;
          gint64 ca = 0, cz = 0, n;

          if (pix + ahead_n < pix_end)
            {
              const float *ahead = spec + ahead_n * nchan;

              if (a.lo < a.hi)
                __builtin_prefetch (ahead + a.lo);
              if (a_two)
                __builtin_prefetch (ahead + a.hi - 1);
              if (z.lo < z.hi)
                __builtin_prefetch (ahead + z.lo);
              if (z_two)
                __builtin_prefetch (ahead + z.hi - 1);
            }
          for (gsize k = a.lo; k < a.hi; k++)
            {
              float t = spec[k];
              gboolean f = isfinite (t);

              ra += f ? t : 0.0f;
              ca += f;
            }
          for (gsize k = z.lo; k < z.hi; k++)
            {
              float t = spec[k];
              gboolean f = isfinite (t);

              rz += f ? t : 0.0f;
              cz += f;
            }
          n = ((gint64) zn[pix] + nz_sign * cz) - ((gint64) an[pix] + na_sign * ca);
          if (n <= 0)
            job->out[pix] = NAN;
          else
            job->out[pix] = (float) (((z0[pix] + sz * rz) - (a0[pix] + sa * ra)) * job->adv);
        }
      return;
    }

  for (gsize pix = pix_begin; pix < pix_end; pix++)
    {
      const float *spec = cube->data + pix * nchan;
      double r0a = 0.0, r1a = 0.0, r2a = 0.0, r0z = 0.0, r1z = 0.0, r2z = 0.0;
      gint64 ca = 0, cz = 0, n;

      if (pix + PREFETCH_AHEAD < pix_end)
        {
          const float *ahead = spec + PREFETCH_AHEAD * nchan;

          if (a.lo < a.hi)
            __builtin_prefetch (ahead + a.lo);
          if (z.lo < z.hi)
            __builtin_prefetch (ahead + z.lo);
        }
      for (gsize k = a.lo; k < a.hi; k++)
        if (isfinite (spec[k]))
          {
            double tu = spec[k] * u[k];

            r0a += spec[k];
            r1a += tu;
            r2a += tu * u[k];
            ca++;
          }
      for (gsize k = z.lo; k < z.hi; k++)
        if (isfinite (spec[k]))
          {
            double tu = spec[k] * u[k];

            r0z += spec[k];
            r1z += tu;
            r2z += tu * u[k];
            cz++;
          }
      n = ((gint64) zn[pix] + nz_sign * cz) - ((gint64) an[pix] + na_sign * ca);
      job->out[pix] = finish_pixel (job->order,
                                    (z0[pix] + sz * r0z) - (a0[pix] + sa * r0a),
                                    (z1[pix] + sz * r1z) - (a1[pix] + sa * r1a),
                                    (z2[pix] + sz * r2z) - (a2[pix] + sa * r2a),
                                    n > 0 ? (guint64) n : 0, NAN, job->adv, cache->vref);
    }
}

static gboolean
cache_query (const EffluxMomentCache  *cache,
             EffluxMomentOrder         order,
             double                    v1,
             double                    v2,
             const EffluxLobeMask     *lobe,
             float                    *out,
             GError                  **error)
{
  QueryJob job = { 0 };
  gsize k0, k1;

  if (!select_channels (cache->cube, v1, v2, &k0, &k1, error))
    return FALSE;
  job.cache = cache;
  job.order = order;
  job.a = plan_prefix (cache, k0);
  job.z = plan_prefix (cache, k1);
  job.adv = fabs (cache->cube->dv);
  job.out = out;
  efflux_parallel_for (cache->cube->ny, 8, query_rows, &job);
  if (lobe != NULL)
    {
      /* NaN outside: walk the increasing pixel indices of the lobe */
      gsize next = 0;

      for (gsize i = 0; i < lobe->n_pixels; i++)
        {
          for (; next < lobe->index[i]; next++)
            out[next] = NAN;
          next = (gsize) lobe->index[i] + 1;
        }
      for (; next < cache->npix; next++)
        out[next] = NAN;
    }
  return TRUE;
}

gboolean
efflux_moment_cache_map (const EffluxMomentCache  *cache,
                         EffluxMomentOrder         order,
                         double                    v1,
                         double                    v2,
                         float                    *out,
                         GError                  **error)
{
  g_return_val_if_fail (cache != NULL && out != NULL, FALSE);

  if (order == EFFLUX_MOMENT_PEAK)
    return efflux_moment_map (cache->cube, order, v1, v2, 0.0, out, error);
  return cache_query (cache, order, v1, v2, NULL, out, error);
}

gboolean
efflux_moment_cache_wing_map (const EffluxMomentCache  *cache,
                              double                    v1,
                              double                    v2,
                              const EffluxLobeMask     *lobe,
                              float                    *out,
                              GError                  **error)
{
  g_return_val_if_fail (cache != NULL && out != NULL, FALSE);

  if (lobe != NULL && (lobe->nx != cache->cube->nx || lobe->ny != cache->cube->ny))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: the lobe mask was made for a %" G_GSIZE_FORMAT " x %" G_GSIZE_FORMAT
                   " map, not this cube's", cube_name (cache->cube), lobe->nx, lobe->ny);
      return FALSE;
    }
  return cache_query (cache, EFFLUX_MOMENT_0, v1, v2, lobe, out, error);
}

/* ------------------------------------------------------------------------------------------ */
/* Spectra */

gboolean
efflux_spectrum_at_pixel (const EffluxCube  *cube,
                          gssize             x,
                          gssize             y,
                          double            *out,
                          GError           **error)
{
  const float *spec;

  if (x < 0 || y < 0 || (gsize) x >= cube->nx || (gsize) y >= cube->ny)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: pixel (%" G_GSSIZE_FORMAT ", %" G_GSSIZE_FORMAT ") lies outside the "
                   "%" G_GSIZE_FORMAT " x %" G_GSIZE_FORMAT " map",
                   cube_name (cube), x, y, cube->nx, cube->ny);
      return FALSE;
    }
  spec = efflux_cube_spectrum (cube, (gsize) x, (gsize) y);
  for (gsize k = 0; k < cube->nchan; k++)
    out[k] = spec[k];
  return TRUE;
}

gsize
efflux_spectrum_over_lobe (const EffluxCube     *cube,
                           const EffluxLobeMask *lobe,
                           EffluxSpectrumKind    kind,
                           double               *out)
{
  g_autofree guint32 *count = g_new0 (guint32, MAX (cube->nchan, 1));

  for (gsize k = 0; k < cube->nchan; k++)
    out[k] = 0.0;
  for (gsize i = 0; i < lobe->n_pixels; i++)
    {
      const float *spec = cube->data + (gsize) lobe->index[i] * cube->nchan;

      for (gsize k = 0; k < cube->nchan; k++)
        if (isfinite (spec[k]))
          {
            out[k] += spec[k];
            count[k]++;
          }
    }
  for (gsize k = 0; k < cube->nchan; k++)
    {
      if (count[k] == 0)
        out[k] = NAN;
      else if (kind == EFFLUX_SPECTRUM_MEAN)
        out[k] /= count[k];
    }
  return lobe->n_pixels;
}

gboolean
efflux_spectrum_over_outline (const EffluxCube    *cube,
                              const double        *ra_dec,
                              gsize                n_vertices,
                              EffluxSpectrumKind   kind,
                              double              *out,
                              gsize               *n_inside,
                              GError             **error)
{
  g_autoptr (EffluxLobeMask) lobe = NULL;
  g_autofree double *ra = g_new (double, MAX (n_vertices, 1));
  g_autofree double *dec = g_new (double, MAX (n_vertices, 1));
  g_autofree char *what = g_strdup_printf ("%s: outline", cube_name (cube));
  gsize n;

  for (gsize i = 0; i < n_vertices; i++)
    {
      ra[i] = ra_dec[2 * i];
      dec[i] = ra_dec[2 * i + 1];
    }
  lobe = efflux_lobe_mask_new (cube, ra, dec, n_vertices, what, error);
  if (lobe == NULL)
    return FALSE;
  n = efflux_spectrum_over_lobe (cube, lobe, kind, out);
  if (n_inside != NULL)
    *n_inside = n;
  return TRUE;
}
