/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Moment maps streamed from the file (see efflux-momentstream.h).
 *
 * Design: the pixels are cut into blocks of whole rows (a tile) small enough that the block's
 * accumulators and one channel's piece of it stay in the L2 cache (TILE_BYTES); each of the
 * worker threads (one per processor, up to four: efflux_cube_worker_threads) takes a tile and runs through every channel of the range: one pread () of the tile's
 * rows of the channel's plane (contiguous in the file), then byte swap, conversion to K and the
 * per-pixel sums. A pixel's channels are thus summed in the cube's channel order, in double, by
 * the very operations of efflux_moment_map's direct sums (efflux-maps.c), so the maps are
 * bitwise equal. Nothing of the size of the cube is allocated: the map, and per thread a tile's
 * accumulators and one piece. */
#include "config.h"

#include "efflux-momentstream.h"
#include "efflux-fitshead.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>
#ifdef __SSE2__
#include <emmintrin.h>
#endif

/* A tile's accumulators and one channel's piece of it, per thread, and at least MIN_TILES tiles
 * (the threads taking tiles as they come stay busy to the end). Measured on the 256 x 256 x 420
 * cube of bench-maps (moment 0 of 301 channels, whole process): 64 KiB to 1 MiB tiles and 2 to
 * 16 tiles all within the machine's noise, 0.056-0.061 s at best, of which about 0.05 s is the
 * process's start, CFITSIO's set-up and the output; a tiny cube takes as long. */
#define TILE_BYTES (256u * 1024u)
#define MIN_TILES 8

typedef struct
{
  const EffluxCube  *cube;
  EffluxMomentOrder  order;
  gsize              k0, k1;
  const double      *u;          /* velocity - vref, per channel */
  double             vref, adv;
  const double      *kpu;        /* per-channel factor to K, NULL when none is applied */
  int                fd;
  guint64            offset;     /* file offset of channel 0's plane */
  guint64            stride;     /* bytes from one plane to the next */
  gsize              rows;       /* rows per tile */
  gsize              n_tiles;
  float             *out;
  GCancellable      *cancellable;
  gint               next;       /* atomic: next tile */
  gint               failed;     /* atomic: 1 read error, 2 cancelled, 3 no memory */
  gint               any_finite; /* atomic: some voxel of the range is finite */
  int                err_no;
} StreamJob;

static inline float
voxel_to_float (guint32 be)
{
  guint32 w = GUINT32_FROM_BE (be);
  float t;

  memcpy (&t, &w, sizeof t);
  return t;
}

/* Read one channel's piece of a tile (np words from the plane of channel k, rows from y0). */
static gboolean
read_piece (StreamJob *job,
            gsize      k,
            gsize      y0,
            gsize      np,
            guint32   *buf)
{
  guint64 at = job->offset + (guint64) k * job->stride + (guint64) y0 * job->cube->nx * sizeof (guint32);

  if (efflux_fits_pread_all (job->fd, buf, np * sizeof (guint32), at, &job->err_no))
    return TRUE;
  g_atomic_int_set (&job->failed, 1);
  return FALSE;
}

/* The per-channel sums. Each is efflux_moment_map's direct sum for one channel over np pixels:
 * a NaN or infinite voxel adds +0 (neutral: the sums start at +0 and a sum of doubles is never
 * -0 then) and is not counted. The conversion to K is the loader's: (float) (T * k_per_unit).
 * With SSE2 (every x86-64) four pixels at a time: the same IEEE operations in the same order per
 * pixel (float -> double, double adds and multiplies, double -> float rounding to nearest), so
 * the same bits as the scalar loop that does the rest. */

#ifdef __SSE2__
/* four voxels in K (k: NULL when none is applied); *finite: all ones where finite. Non-finite
 * voxels come out as +0. */
static inline __m128
load4 (const guint32 *in,
       const __m128d *k,
       __m128i       *finite)
{
  const __m128i exp_mask = _mm_set1_epi32 (0x7f800000);
  __m128i w = efflux_bswap32x4 (_mm_loadu_si128 ((const __m128i *) in));
  __m128i bad;

  if (k != NULL)
    {
      __m128 t = _mm_castsi128_ps (w);
      __m128d lo = _mm_mul_pd (_mm_cvtps_pd (t), *k);
      __m128d hi = _mm_mul_pd (_mm_cvtps_pd (_mm_movehl_ps (t, t)), *k);

      w = _mm_castps_si128 (_mm_movelh_ps (_mm_cvtpd_ps (lo), _mm_cvtpd_ps (hi)));
    }
  bad = _mm_cmpeq_epi32 (_mm_and_si128 (w, exp_mask), exp_mask);
  *finite = _mm_xor_si128 (bad, _mm_set1_epi32 (-1));
  return _mm_castsi128_ps (_mm_andnot_si128 (bad, w));
}
#endif

static inline float
scalar_voxel (guint32       be,
              const double *kpu,
              gsize         k,
              gboolean     *fin)
{
  float t = voxel_to_float (be);

  if (kpu != NULL)
    t = (float) (t * kpu[k]);
  *fin = isfinite (t);
  return *fin ? t : 0.0f;
}

static void
sum_order0 (const guint32 *in,
            gsize          np,
            const double  *kpu,
            gsize          k,
            double        *s0,
            guint32       *n)
{
  gsize i = 0;

#ifdef __SSE2__
  {
    __m128d kk = _mm_set1_pd (kpu != NULL ? kpu[k] : 1.0);
    const __m128d *kp = kpu != NULL ? &kk : NULL;

    for (; i + 4 <= np; i += 4)
      {
        __m128i fin;
        __m128 t = load4 (in + i, kp, &fin);

        _mm_storeu_pd (s0 + i, _mm_add_pd (_mm_loadu_pd (s0 + i), _mm_cvtps_pd (t)));
        _mm_storeu_pd (s0 + i + 2, _mm_add_pd (_mm_loadu_pd (s0 + i + 2),
                                               _mm_cvtps_pd (_mm_movehl_ps (t, t))));
        _mm_storeu_si128 ((__m128i *) (n + i), _mm_sub_epi32 (_mm_loadu_si128 ((const __m128i *) (n + i)), fin));
      }
  }
#endif
  for (; i < np; i++)
    {
      gboolean fin;
      float t = scalar_voxel (in[i], kpu, k, &fin);

      s0[i] += t;
      n[i] += fin;
    }
}

static void
sum_order1 (const guint32 *in,
            gsize          np,
            const double  *kpu,
            gsize          k,
            double         uk,
            double        *s0,
            double        *s1,
            guint32       *n)
{
  gsize i = 0;

#ifdef __SSE2__
  {
    __m128d kk = _mm_set1_pd (kpu != NULL ? kpu[k] : 1.0), u = _mm_set1_pd (uk);
    const __m128d *kp = kpu != NULL ? &kk : NULL;

    for (; i + 4 <= np; i += 4)
      {
        __m128i fin;
        __m128 t = load4 (in + i, kp, &fin);
        __m128d lo = _mm_cvtps_pd (t), hi = _mm_cvtps_pd (_mm_movehl_ps (t, t));

        _mm_storeu_pd (s0 + i, _mm_add_pd (_mm_loadu_pd (s0 + i), lo));
        _mm_storeu_pd (s0 + i + 2, _mm_add_pd (_mm_loadu_pd (s0 + i + 2), hi));
        _mm_storeu_pd (s1 + i, _mm_add_pd (_mm_loadu_pd (s1 + i), _mm_mul_pd (lo, u)));
        _mm_storeu_pd (s1 + i + 2, _mm_add_pd (_mm_loadu_pd (s1 + i + 2), _mm_mul_pd (hi, u)));
        _mm_storeu_si128 ((__m128i *) (n + i), _mm_sub_epi32 (_mm_loadu_si128 ((const __m128i *) (n + i)), fin));
      }
  }
#endif
  for (; i < np; i++)
    {
      gboolean fin;
      float t = scalar_voxel (in[i], kpu, k, &fin);

      s0[i] += t;
      s1[i] += t * uk;
      n[i] += fin;
    }
}

static void
sum_peak (const guint32 *in,
          gsize          np,
          const double  *kpu,
          gsize          k,
          float         *peak,
          guint32       *n)
{
  gsize i = 0;

#ifdef __SSE2__
  {
    __m128d kk = _mm_set1_pd (kpu != NULL ? kpu[k] : 1.0);
    const __m128d *kp = kpu != NULL ? &kk : NULL;

    for (; i + 4 <= np; i += 4)
      {
        __m128i fin;
        __m128 t = load4 (in + i, kp, &fin);
        __m128 p = _mm_loadu_ps (peak + i);
        __m128 take = _mm_and_ps (_mm_castsi128_ps (fin), _mm_cmpgt_ps (t, p));

        _mm_storeu_ps (peak + i, _mm_or_ps (_mm_and_ps (take, t), _mm_andnot_ps (take, p)));
        _mm_storeu_si128 ((__m128i *) (n + i), _mm_sub_epi32 (_mm_loadu_si128 ((const __m128i *) (n + i)), fin));
      }
  }
#endif
  for (; i < np; i++)
    {
      gboolean fin;
      float t = scalar_voxel (in[i], kpu, k, &fin);

      n[i] += fin;
      if (fin && t > peak[i])
        peak[i] = t;
    }
}

/* moment 2's second pass: the sum of T (u - m)^2 about the pixel's own mean m */
static void
sum_about_mean (const guint32 *in,
                gsize          np,
                const double  *kpu,
                gsize          k,
                double         uk,
                const double  *m,
                double        *sc)
{
  gsize i = 0;

#ifdef __SSE2__
  {
    __m128d kk = _mm_set1_pd (kpu != NULL ? kpu[k] : 1.0), u = _mm_set1_pd (uk);
    const __m128d *kp = kpu != NULL ? &kk : NULL;

    for (; i + 4 <= np; i += 4)
      {
        __m128i fin;
        __m128 t = load4 (in + i, kp, &fin);
        __m128d lo = _mm_cvtps_pd (t), hi = _mm_cvtps_pd (_mm_movehl_ps (t, t));
        __m128d dlo = _mm_sub_pd (u, _mm_loadu_pd (m + i));
        __m128d dhi = _mm_sub_pd (u, _mm_loadu_pd (m + i + 2));

        _mm_storeu_pd (sc + i, _mm_add_pd (_mm_loadu_pd (sc + i), _mm_mul_pd (_mm_mul_pd (lo, dlo), dlo)));
        _mm_storeu_pd (sc + i + 2, _mm_add_pd (_mm_loadu_pd (sc + i + 2),
                                               _mm_mul_pd (_mm_mul_pd (hi, dhi), dhi)));
      }
  }
#endif
  for (; i < np; i++)
    {
      gboolean fin;
      float t = scalar_voxel (in[i], kpu, k, &fin);
      double d = uk - m[i];

      sc[i] += t * d * d;
    }
}

static void stream_tiles (StreamJob *job,
                          guint32   *buf,
                          double    *s0,
                          double    *s1,
                          float     *peak,
                          double    *sc,
                          guint32   *n);

/* A thread's scratch: one piece, the accumulators of a tile. In one mapping populated at once
 * (MAP_POPULATE): touching fresh pages one by one costs a page fault each, about 40 us on the
 * virtual machine we measure on, more than the whole stream of a 100 MB cube's tile. */
static gpointer
stream_worker (gpointer data)
{
  StreamJob *job = data;
  const gsize tile = job->rows * job->cube->nx;
  const gboolean need_s1 = job->order == EFFLUX_MOMENT_1 || job->order == EFFLUX_MOMENT_2;
  const gboolean need_peak = job->order == EFFLUX_MOMENT_PEAK;
  const gboolean need_sc = job->order == EFFLUX_MOMENT_2;
  /* doubles first (8-byte aligned), then the 4-byte arrays */
  gsize n_doubles = 1 + need_s1 + need_sc, n_words = 2 + need_peak;
  gsize bytes = tile * (n_doubles * sizeof (double) + n_words * sizeof (guint32));
  char *block;
  double *s0, *s1 = NULL, *sc = NULL;
  guint32 *buf, *n;
  float *peak = NULL;
  gsize at = 0;

  block = mmap (NULL, bytes, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS | MAP_POPULATE, -1, 0);
  if (block == MAP_FAILED)
    {
      g_atomic_int_set (&job->failed, 3);
      return NULL;
    }
  s0 = (double *) (block + at);
  at += tile * sizeof (double);
  if (need_s1)
    {
      s1 = (double *) (block + at);
      at += tile * sizeof (double);
    }
  if (need_sc)
    {
      sc = (double *) (block + at);
      at += tile * sizeof (double);
    }
  buf = (guint32 *) (block + at);
  at += tile * sizeof (guint32);
  n = (guint32 *) (block + at);
  at += tile * sizeof (guint32);
  if (need_peak)
    peak = (float *) (block + at);
  stream_tiles (job, buf, s0, s1, peak, sc, n);
  munmap (block, bytes);
  return NULL;
}

static void
stream_tiles (StreamJob *job,
              guint32   *buf,
              double    *s0,
              double    *s1,
              float     *peak,
              double    *sc,
              guint32   *n)
{
  const gsize nx = job->cube->nx, ny = job->cube->ny;
  gboolean any = FALSE;

  for (;;)
    {
      gsize c = (gsize) g_atomic_int_add (&job->next, 1);
      gsize y0, np;
      float *out;

      if (c >= job->n_tiles || g_atomic_int_get (&job->failed) != 0)
        break;
      if (g_cancellable_is_cancelled (job->cancellable))
        {
          g_atomic_int_set (&job->failed, 2);
          break;
        }
      y0 = c * job->rows;
      np = MIN (job->rows, ny - y0) * nx;
      out = job->out + y0 * nx;
      memset (s0, 0, np * sizeof (double));
      memset (n, 0, np * sizeof (guint32));
      if (s1 != NULL)
        memset (s1, 0, np * sizeof (double));
      if (peak != NULL)
        for (gsize i = 0; i < np; i++)
          peak[i] = -INFINITY;

      for (gsize k = job->k0; k < job->k1; k++)
        {
          if (!read_piece (job, k, y0, np, buf))
            return;
          switch (job->order)
            {
            case EFFLUX_MOMENT_0:
              sum_order0 (buf, np, job->kpu, k, s0, n);
              break;
            case EFFLUX_MOMENT_PEAK:
              sum_peak (buf, np, job->kpu, k, peak, n);
              break;
            case EFFLUX_MOMENT_1:
            case EFFLUX_MOMENT_2:
            default:
              sum_order1 (buf, np, job->kpu, k, job->u[k], s0, s1, n);
              break;
            }
        }

      if (job->order == EFFLUX_MOMENT_2)
        {
          /* s1 becomes the mean (m = s1 / s0 as efflux_moment_map), s0 stays the weight */
          memset (sc, 0, np * sizeof (double));
          for (gsize i = 0; i < np; i++)
            s1[i] = s1[i] / s0[i];
          for (gsize k = job->k0; k < job->k1; k++)
            {
              if (!read_piece (job, k, y0, np, buf))
                return;
              sum_about_mean (buf, np, job->kpu, k, job->u[k], s1, sc);
            }
          for (gsize i = 0; i < np; i++)
            {
              if (n[i] > 0)
                any = TRUE;
              if (n[i] == 0 || !(s0[i] > 0.0))
                out[i] = NAN;
              else
                out[i] = sc[i] >= 0.0 ? (float) sqrt (sc[i] / s0[i]) : NAN;
            }
        }
      else
        for (gsize i = 0; i < np; i++)
          {
            if (n[i] == 0)
              {
                out[i] = NAN;
                continue;
              }
            any = TRUE;
            switch (job->order)
              {
              case EFFLUX_MOMENT_0:
                out[i] = (float) (s0[i] * job->adv);
                break;
              case EFFLUX_MOMENT_PEAK:
                out[i] = (float) peak[i];
                break;
              case EFFLUX_MOMENT_1:
              case EFFLUX_MOMENT_2:
              default:
                out[i] = s0[i] > 0.0 ? (float) (job->vref + s1[i] / s0[i]) : NAN;
                break;
              }
          }
    }
  if (any)
    g_atomic_int_set (&job->any_finite, 1);
}

gboolean
efflux_moment_stream_applies (const EffluxCube           *header,
                              const EffluxCubeFileLayout *layout)
{
  return header != NULL && layout != NULL && layout->raw_float && layout->spectral_slowest &&
         layout->lng_fastest && header->nx > 0 && header->ny > 0 && header->nchan > 0 &&
         layout->channel_stride == (guint64) header->nx * header->ny * sizeof (float);
}

gboolean
efflux_moment_stream_map (const EffluxCube           *header,
                          const EffluxCubeFileLayout *layout,
                          EffluxMomentOrder           order,
                          double                      v1,
                          double                      v2,
                          GCancellable               *cancellable,
                          float                      *out,
                          GError                    **error)
{
  const char *path = header->path != NULL && *header->path != '\0' ? header->path : "cube";
  StreamJob job = { 0 };
  g_autofree double *u = NULL;
  gsize acc_bytes, tile_px;
  GThread *helpers[EFFLUX_CUBE_MAX_THREADS] = { NULL };
  guint n_helpers = 0;

  g_return_val_if_fail (out != NULL, FALSE);
  g_return_val_if_fail (efflux_moment_stream_applies (header, layout), FALSE);

  if (!isfinite (v1) || !isfinite (v2))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: velocity range %g .. %g km/s is not finite", path, v1, v2);
      return FALSE;
    }
  if (!efflux_cube_channel_range (header, v1, v2, &job.k0, &job.k1))
    {
      double a = header->velocity[0], b = header->velocity[header->nchan - 1];

      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: no channel centre lies in %g .. %g km/s (the channels span %g .. %g km/s)",
                   path, MIN (v1, v2), MAX (v1, v2), MIN (a, b), MAX (a, b));
      return FALSE;
    }

  /* the offsets of efflux_moment_map: u = v - v_ref, v_ref the middle channel's velocity */
  job.vref = header->velocity[header->nchan / 2];
  u = g_new (double, header->nchan);
  for (gsize k = 0; k < header->nchan; k++)
    u[k] = header->velocity[k] - job.vref;
  job.u = u;
  job.adv = fabs (header->dv);
  /* the loader multiplies by k_per_unit only for Jy/beam cubes */
  job.kpu = header->bunit_kind == EFFLUX_BUNIT_JY_BEAM ? header->k_per_unit : NULL;
  job.cube = header;
  job.order = order;
  job.offset = layout->data_offset;
  job.stride = layout->channel_stride;
  job.out = out;
  job.cancellable = cancellable;

  /* a tile: whole rows, its accumulators and one piece within TILE_BYTES; MIN_TILES tiles or
   * more when the map has the rows for them */
  switch (order)
    {
    case EFFLUX_MOMENT_0:    acc_bytes = sizeof (double) + sizeof (guint32); break;
    case EFFLUX_MOMENT_PEAK: acc_bytes = sizeof (float) + sizeof (guint32); break;
    case EFFLUX_MOMENT_1:    acc_bytes = 2 * sizeof (double) + sizeof (guint32); break;
    case EFFLUX_MOMENT_2:
    default:                 acc_bytes = 3 * sizeof (double) + sizeof (guint32); break;
    }
  tile_px = TILE_BYTES / (acc_bytes + sizeof (guint32));
  job.rows = MAX ((gsize) 1, tile_px / header->nx);
  job.rows = MIN (job.rows, MAX ((gsize) 1, (header->ny + MIN_TILES - 1) / MIN_TILES));
  job.n_tiles = (header->ny + job.rows - 1) / job.rows;

  job.fd = open (header->path, O_RDONLY | O_CLOEXEC);
  if (job.fd < 0)
    {
      int e = errno;

      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot read the data: %s", path,
                   g_strerror (e));
      return FALSE;
    }
  /* the worker threads of a load (efflux_cube_worker_threads), the calling thread one of them */
  while (n_helpers + 1 < MIN ((gsize) efflux_cube_worker_threads (), job.n_tiles))
    {
      helpers[n_helpers] = g_thread_try_new ("efflux-moment", stream_worker, &job, NULL);
      if (helpers[n_helpers] == NULL)
        break;
      n_helpers++;
    }
  stream_worker (&job);
  for (guint t = 0; t < n_helpers; t++)
    g_thread_join (helpers[t]);
  close (job.fd);

  if (!efflux_fits_read_outcome (job.failed, job.err_no, path, cancellable, error))
    return FALSE;
  if (!job.any_finite)
    {
      /* the loader's refusal of such a cube (efflux_cube_load reads only these channels too) */
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: no finite value in the data: every voxel is NaN, infinite or BLANK", path);
      return FALSE;
    }
  return TRUE;
}

EffluxMomentStreamResult
efflux_moment_stream_file (const char         *path,
                           int                 hdu,
                           EffluxMomentOrder   order,
                           double              v1,
                           double              v2,
                           GCancellable       *cancellable,
                           EffluxCube        **header,
                           float             **map,
                           GError            **error)
{
  EffluxCubeLoadOptions load = { 0 };
  EffluxCubeFileLayout layout = { 0 };
  g_autoptr (EffluxCube) cube = NULL;
  g_autofree float *image = NULL;
  gsize k0, k1;

  g_return_val_if_fail (header != NULL && map != NULL, EFFLUX_MOMENT_STREAM_FAILED);

  load.hdu = hdu;
  load.no_noise = TRUE;
  load.channel_subset = TRUE;
  load.v1_kms = v1;
  load.v2_kms = v2;
  load.header_only = TRUE;
  load.layout = &layout;
  cube = efflux_cube_load (path, &load, cancellable, NULL, NULL, error);
  if (cube == NULL)
    return EFFLUX_MOMENT_STREAM_FAILED;
  if (!isfinite (v1) || !isfinite (v2) || !efflux_moment_stream_applies (cube, &layout) ||
      !efflux_cube_channel_range (cube, v1, v2, &k0, &k1))
    return EFFLUX_MOMENT_STREAM_UNSUPPORTED;

  image = g_try_new (float, cube->nx * cube->ny);
  if (image == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY, "%s: no memory for the map", path);
      return EFFLUX_MOMENT_STREAM_FAILED;
    }
  if (!efflux_moment_stream_map (cube, &layout, order, v1, v2, cancellable, image, error))
    return EFFLUX_MOMENT_STREAM_FAILED;
  *header = g_steal_pointer (&cube);
  *map = g_steal_pointer (&image);
  return EFFLUX_MOMENT_STREAM_DONE;
}
