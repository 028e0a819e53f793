/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-pv.h"
#include "efflux-fitsout.h"
#include "efflux-maps.h"

#include <math.h>
#include <string.h>

static const char *
cube_name (const EffluxCube *cube)
{
  return cube->path != NULL && *cube->path != '\0' ? cube->path : "cube";
}

/* ------------------------------------------------------------------------------------------ */
/* Path text */

static gboolean
parse_number (const char *text,
              double     *value)
{
  g_autofree char *copy = g_strstrip (g_strdup (text));
  char *end = NULL;

  if (*copy == '\0')
    return FALSE;
  *value = g_ascii_strtod (copy, &end);
  return end != NULL && *end == '\0' && isfinite (*value);
}

gboolean
efflux_pv_path_parse (const char  *text,
                      double     **ra_dec,
                      gsize       *n_vertices,
                      GError     **error)
{
  g_auto (GStrv) parts = NULL;
  g_autofree double *values = NULL;
  gsize n;

  if (text == NULL || *text == '\0')
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "\"\": expected RA1,DEC1;RA2,DEC2[;...] in degrees");
      return FALSE;
    }
  parts = g_strsplit (text, ";", -1);
  n = g_strv_length (parts);
  values = g_new (double, 2 * MAX (n, 1));
  for (gsize i = 0; i < n; i++)
    {
      g_auto (GStrv) pair = g_strsplit (parts[i], ",", -1);

      if (g_strv_length (pair) != 2 ||
          !parse_number (pair[0], &values[2 * i]) ||
          !parse_number (pair[1], &values[2 * i + 1]))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "\"%s\": vertex %" G_GSIZE_FORMAT " \"%s\": expected RA,DEC in degrees",
                       text, i + 1, parts[i]);
          return FALSE;
        }
      if (fabs (values[2 * i + 1]) > 90.0)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "\"%s\": vertex %" G_GSIZE_FORMAT ": declination %g lies outside "
                       "-90 .. 90 degrees", text, i + 1, values[2 * i + 1]);
          return FALSE;
        }
    }
  if (n < 2)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "\"%s\": a cut needs at least two vertices", text);
      return FALSE;
    }
  *ra_dec = g_steal_pointer (&values);
  *n_vertices = n;
  return TRUE;
}

/* ------------------------------------------------------------------------------------------ */
/* Geometry */

typedef struct
{
  gsize   n_off;
  int     k;
  double *x, *y;     /* n_off centres */
  double *ax, *ay;   /* n_off x (2k + 1) samples across: [i * (2k + 1) + (j + k)] */
} Samples;

static void
samples_clear (Samples *s)
{
  g_clear_pointer (&s->x, g_free);
  g_clear_pointer (&s->y, g_free);
  g_clear_pointer (&s->ax, g_free);
  g_clear_pointer (&s->ay, g_free);
}

static int
half_width_for (const EffluxCube *cube,
                double            width_arcsec,
                double           *pixel_arcsec)
{
  double pix = sqrt (cube->pixel_arcsec[0] * cube->pixel_arcsec[1]);
  double k;

  *pixel_arcsec = pix;
  if (width_arcsec <= 0.0 || !(pix > 0.0))
    return 0;
  k = floor (width_arcsec / (2.0 * pix) + 1e-9);
  /* beyond the map's size every further sample is outside anyway */
  return (int) MIN (k, (double) (cube->nx + cube->ny + 1));
}

static gboolean
make_samples (const EffluxCube *cube,
              const double     *px,
              const double     *py,
              gsize             n_vertices,
              int               k,
              Samples          *s,
              GError          **error)
{
  g_autofree gsize *seg = g_new (gsize, MAX (n_vertices, 1));
  g_autofree double *cum = g_new (double, MAX (n_vertices, 1));
  gsize nseg = 0, cur = 0;
  double total = 0.0, limit;
  int na = 2 * k + 1;

  /* the non-degenerate segments, with the arc length at their start */
  for (gsize i = 0; i + 1 < n_vertices; i++)
    {
      double len = hypot (px[i + 1] - px[i], py[i + 1] - py[i]);

      if (!isfinite (len))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: path vertex %" G_GSIZE_FORMAT " has no position on the map",
                       cube_name (cube), i + 2);
          return FALSE;
        }
      if (len > 0.0)
        {
          seg[nseg] = i;
          cum[nseg] = total;
          nseg++;
          total += len;
        }
    }
  if (nseg == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: the path has zero length (all its vertices fall on one point)",
                   cube_name (cube));
      return FALSE;
    }
  limit = 100.0 * (double) (cube->nx + cube->ny) + 1000.0;
  if (total > limit)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: the path is %.0f pixels long, far beyond the %" G_GSIZE_FORMAT " x %"
                   G_GSIZE_FORMAT " map", cube_name (cube), total, cube->nx, cube->ny);
      return FALSE;
    }

  s->k = k;
  s->n_off = (gsize) floor (total + 1e-9) + 1;
  s->x = g_new (double, s->n_off);
  s->y = g_new (double, s->n_off);
  s->ax = g_new (double, s->n_off * na);
  s->ay = g_new (double, s->n_off * na);
  for (gsize i = 0; i < s->n_off; i++)
    {
      double arc = (double) i, t, len, dx, dy;
      gsize v;

      /* the segment holding arc; on a vertex, the later one */
      while (cur + 1 < nseg && arc >= cum[cur + 1])
        cur++;
      v = seg[cur];
      len = hypot (px[v + 1] - px[v], py[v + 1] - py[v]);
      dx = (px[v + 1] - px[v]) / len;
      dy = (py[v + 1] - py[v]) / len;
      t = MIN (arc - cum[cur], len);
      s->x[i] = px[v] + t * dx;
      s->y[i] = py[v] + t * dy;
      for (int j = -k; j <= k; j++)
        {
          /* the perpendicular (-dy, dx) */
          s->ax[i * na + (j + k)] = s->x[i] - j * dy;
          s->ay[i * na + (j + k)] = s->y[i] + j * dx;
        }
    }
  return TRUE;
}

/* ------------------------------------------------------------------------------------------ */
/* Sampling */

typedef struct
{
  const EffluxCube *src;
  const double     *sx, *sy;     /* n_off x n_across positions in src's pixels */
  gsize             n_off;
  int               n_across;
  const gssize     *vj;          /* per output channel: src channel index (-1: NaN), or NULL */
  const float      *vf;          /* and the fraction towards vj + 1 */
  gsize             nchan_out;
  float            *out;         /* FITS order: [c * n_off + i] */
} SampleJob;

typedef float v4f __attribute__ ((vector_size (16)));

static inline void
axpy (float       *restrict acc,
      const float *restrict x,
      float                 w,
      gsize                 n)
{
  v4f wv = { w, w, w, w };
  gsize c = 0;

  for (; c + 8 <= n; c += 8)
    {
      v4f a0, a1, x0, x1;

      memcpy (&a0, acc + c, 16);
      memcpy (&a1, acc + c + 4, 16);
      memcpy (&x0, x + c, 16);
      memcpy (&x1, x + c + 4, 16);
      a0 += wv * x0;
      a1 += wv * x1;
      memcpy (acc + c, &a0, 16);
      memcpy (acc + c + 4, &a1, 16);
    }
  for (; c < n; c++)
    acc[c] += w * x[c];
}

static void
sample_range (gsize    begin,
              gsize    end,
              gpointer data)
{
  const SampleJob *job = data;
  const EffluxCube *src = job->src;
  const gsize nchan = src->nchan, nx = src->nx, ny = src->ny;
  const double xmax = (double) nx - 1.0, ymax = (double) ny - 1.0;
  g_autofree float *acc = g_new (float, MAX (nchan, 1));
  g_autofree gsize *pix = g_new (gsize, 4 * job->n_across);
  g_autofree double *wt = g_new (double, 4 * job->n_across);

  for (gsize i = begin; i < end; i++)
    {
      float *out = job->out + i;   /* channel c at out[c * n_off] */
      const gsize stride = job->n_off;
      gsize m = 0;
      int n_in = 0;

      for (int a = 0; a < job->n_across; a++)
        {
          double x = job->sx[i * job->n_across + a], y = job->sy[i * job->n_across + a];
          double x0, y0, fx, fy, w[4];
          gsize p[4];

          if (!(x >= 0.0 && x <= xmax && y >= 0.0 && y <= ymax))
            continue;
          n_in++;
          x0 = floor (x);
          y0 = floor (y);
          fx = x - x0;
          fy = y - y0;
          if (x0 >= xmax)
            {
              x0 = xmax;
              fx = 0.0;
            }
          if (y0 >= ymax)
            {
              y0 = ymax;
              fy = 0.0;
            }
          p[0] = (gsize) y0 * nx + (gsize) x0;
          p[1] = p[0] + 1;
          p[2] = p[0] + nx;
          p[3] = p[2] + 1;
          w[0] = (1.0 - fx) * (1.0 - fy);
          w[1] = fx * (1.0 - fy);
          w[2] = (1.0 - fx) * fy;
          w[3] = fx * fy;
          for (int q = 0; q < 4; q++)
            {
              gsize r;

              if (w[q] <= 0.0)
                continue;
              for (r = 0; r < m; r++)
                if (pix[r] == p[q])
                  break;
              if (r == m)
                {
                  pix[m] = p[q];
                  wt[m] = 0.0;
                  m++;
                }
              wt[r] += w[q];
            }
        }
      if (n_in == 0)
        {
          for (gsize c = 0; c < job->nchan_out; c++)
            out[c * stride] = NAN;
          continue;
        }
      memset (acc, 0, nchan * sizeof (float));
      for (gsize r = 0; r < m; r++)
        axpy (acc, src->data + pix[r] * nchan, (float) (wt[r] / n_in), nchan);
      if (job->vj == NULL)
        for (gsize c = 0; c < nchan; c++)
          out[c * stride] = acc[c];
      else
        for (gsize c = 0; c < job->nchan_out; c++)
          {
            gssize j = job->vj[c];
            float f = job->vf[c];

            if (j < 0)
              out[c * stride] = NAN;
            else if (f <= 0.0f)
              out[c * stride] = acc[j];
            else if (f >= 1.0f)
              out[c * stride] = acc[j + 1];
            else
              out[c * stride] = (1.0f - f) * acc[j] + f * acc[j + 1];
          }
    }
}

/* Channel of src at velocity v as index j and fraction f towards j + 1; FALSE outside. */
static gboolean
velocity_index (const EffluxCube *src,
                double            v,
                gssize           *j,
                float            *f)
{
  const double *vs = src->velocity;
  gsize n = src->nchan, lo = 0, hi;
  double sign, eps, a;

  if (n == 0 || !isfinite (v))
    return FALSE;
  eps = 1e-9 * MAX (fabs (src->dv), 1e-6);
  if (n == 1)
    {
      if (fabs (v - vs[0]) > eps)
        return FALSE;
      *j = 0;
      *f = 0.0f;
      return TRUE;
    }
  sign = vs[n - 1] >= vs[0] ? 1.0 : -1.0;
  a = sign * v;
  if (a < sign * vs[0] - eps || a > sign * vs[n - 1] + eps)
    return FALSE;
  /* largest lo <= n - 2 with sign * vs[lo] <= a */
  hi = n - 1;
  while (hi - lo > 1)
    {
      gsize mid = (lo + hi) / 2;

      if (sign * vs[mid] <= a)
        lo = mid;
      else
        hi = mid;
    }
  *j = (gssize) lo;
  *f = (float) CLAMP ((v - vs[lo]) / (vs[lo + 1] - vs[lo]), 0.0, 1.0);
  return TRUE;
}

static EffluxPv *
pv_new_like (const EffluxCube *grid,
             const Samples    *s,
             double            width_arcsec,
             double            pixel_arcsec)
{
  EffluxPv *pv = g_new0 (EffluxPv, 1);

  pv->n_offsets = s->n_off;
  pv->nchan = grid->nchan;
  pv->data = g_new (float, MAX (s->n_off * grid->nchan, 1));
  pv->offset_step_arcsec = pixel_arcsec;
  pv->width_arcsec = width_arcsec;
  pv->half_width = s->k;
  pv->velocity = g_memdup2 (grid->velocity, grid->nchan * sizeof (double));
  pv->v0_kms = grid->nchan > 0 ? grid->velocity[0] : 0.0;
  pv->dv_kms = grid->dv;
  pv->x = g_memdup2 (s->x, s->n_off * sizeof (double));
  pv->y = g_memdup2 (s->y, s->n_off * sizeof (double));
  pv->ra = g_new (double, s->n_off);
  pv->dec = g_new (double, s->n_off);
  for (gsize i = 0; i < s->n_off; i++)
    if (!efflux_cube_pixel_to_icrs (grid, s->x[i], s->y[i], &pv->ra[i], &pv->dec[i]))
      pv->ra[i] = pv->dec[i] = NAN;
  return pv;
}

/* Fill pv->data from src at the sample positions sx, sy (src pixels); with velocity
 * interpolation onto pv->velocity when interpolate. */
static void
fill_cut (EffluxPv         *pv,
          const EffluxCube *src,
          const double     *sx,
          const double     *sy,
          int               n_across,
          gboolean          interpolate)
{
  SampleJob job = { 0 };
  g_autofree gssize *vj = NULL;
  g_autofree float *vf = NULL;

  if (interpolate)
    {
      vj = g_new (gssize, MAX (pv->nchan, 1));
      vf = g_new (float, MAX (pv->nchan, 1));
      for (gsize c = 0; c < pv->nchan; c++)
        if (!velocity_index (src, pv->velocity[c], &vj[c], &vf[c]))
          vj[c] = -1;
    }
  job.src = src;
  job.sx = sx;
  job.sy = sy;
  job.n_off = pv->n_offsets;
  job.n_across = n_across;
  job.vj = vj;
  job.vf = vf;
  job.nchan_out = pv->nchan;
  job.out = pv->data;
  /* each thread writes its own columns of the diagram, straight in FITS order */
  efflux_parallel_for (pv->n_offsets, 16, sample_range, &job);
}

static gboolean
check_width (const EffluxCube  *cube,
             double             width_arcsec,
             GError           **error)
{
  if (!isfinite (width_arcsec) || width_arcsec < 0.0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: cut width %g arcsec: expected a finite width >= 0",
                   cube_name (cube), width_arcsec);
      return FALSE;
    }
  if (cube->nchan == 0 || cube->nx == 0 || cube->ny == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the cube is empty",
                   cube_name (cube));
      return FALSE;
    }
  return TRUE;
}

EffluxPv *
efflux_pv_cut_pixels (const EffluxCube  *cube,
                      const double      *px,
                      const double      *py,
                      gsize              n_vertices,
                      double             width_arcsec,
                      GError           **error)
{
  Samples s = { 0 };
  EffluxPv *pv;
  double pixel_arcsec;
  int k;

  g_return_val_if_fail (cube != NULL, NULL);

  if (!check_width (cube, width_arcsec, error))
    return NULL;
  if (n_vertices < 2)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: a cut needs at least two vertices", cube_name (cube));
      return NULL;
    }
  k = half_width_for (cube, width_arcsec, &pixel_arcsec);
  if (!make_samples (cube, px, py, n_vertices, k, &s, error))
    {
      samples_clear (&s);
      return NULL;
    }
  pv = pv_new_like (cube, &s, width_arcsec, pixel_arcsec);
  pv->n_vertices = n_vertices;
  pv->vertex_ra = g_new (double, n_vertices);
  pv->vertex_dec = g_new (double, n_vertices);
  for (gsize i = 0; i < n_vertices; i++)
    pv->vertex_ra[i] = pv->vertex_dec[i] = NAN;
  pv->source = g_strdup (cube->path);
  fill_cut (pv, cube, s.ax, s.ay, 2 * k + 1, FALSE);
  samples_clear (&s);
  return pv;
}

static gboolean
vertices_to_pixels (const EffluxCube  *cube,
                    const double      *ra_dec,
                    gsize              n_vertices,
                    double            *px,
                    double            *py,
                    GError           **error)
{
  for (gsize i = 0; i < n_vertices; i++)
    {
      double ra = ra_dec[2 * i], dec = ra_dec[2 * i + 1];

      if (!isfinite (ra) || !isfinite (dec) ||
          !efflux_cube_icrs_to_pixel (cube, ra, dec, &px[i], &py[i]) ||
          !isfinite (px[i]) || !isfinite (py[i]))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: path vertex %" G_GSIZE_FORMAT " (%g, %g) has no position on the map",
                       cube_name (cube), i + 1, ra, dec);
          return FALSE;
        }
    }
  return TRUE;
}

static void
set_vertices (EffluxPv     *pv,
              const double *ra_dec,
              gsize         n_vertices)
{
  pv->n_vertices = n_vertices;
  g_free (pv->vertex_ra);
  g_free (pv->vertex_dec);
  pv->vertex_ra = g_new (double, n_vertices);
  pv->vertex_dec = g_new (double, n_vertices);
  for (gsize i = 0; i < n_vertices; i++)
    {
      pv->vertex_ra[i] = ra_dec[2 * i];
      pv->vertex_dec[i] = ra_dec[2 * i + 1];
    }
}

EffluxPv *
efflux_pv_cut (const EffluxCube  *cube,
               const double      *ra_dec,
               gsize              n_vertices,
               double             width_arcsec,
               GError           **error)
{
  g_autofree double *px = NULL;
  g_autofree double *py = NULL;
  EffluxPv *pv;

  g_return_val_if_fail (cube != NULL, NULL);

  if (n_vertices < 2)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: a cut needs at least two vertices", cube_name (cube));
      return NULL;
    }
  px = g_new (double, n_vertices);
  py = g_new (double, n_vertices);
  if (!vertices_to_pixels (cube, ra_dec, n_vertices, px, py, error))
    return NULL;
  pv = efflux_pv_cut_pixels (cube, px, py, n_vertices, width_arcsec, error);
  if (pv != NULL)
    set_vertices (pv, ra_dec, n_vertices);
  return pv;
}

void
efflux_pv_free (EffluxPv *pv)
{
  if (pv == NULL)
    return;
  g_free (pv->data);
  g_free (pv->velocity);
  g_free (pv->x);
  g_free (pv->y);
  g_free (pv->ra);
  g_free (pv->dec);
  g_free (pv->vertex_ra);
  g_free (pv->vertex_dec);
  g_free (pv->source);
  g_free (pv);
}

/* ------------------------------------------------------------------------------------------ */
/* FITS */

gboolean
efflux_pv_write_fits (const EffluxPv  *pv,
                      const char      *bunit,
                      const char      *path,
                      GError         **error)
{
  g_autoptr (GPtrArray) cards = g_ptr_array_new_with_free_func (g_free);
  char buf[G_ASCII_DTOSTR_BUF_SIZE];
  double dv = pv->dv_kms;

  g_ptr_array_add (cards, g_strdup ("PVWIDTH"));
  g_ptr_array_add (cards, g_strdup (g_ascii_formatd (buf, sizeof buf, "%.10g", pv->width_arcsec)));
  g_ptr_array_add (cards, g_strdup ("[arcsec] cut width"));
  g_ptr_array_add (cards, g_strdup ("PVHALFW"));
  g_ptr_array_add (cards, g_strdup_printf ("%d", pv->half_width));
  g_ptr_array_add (cards, g_strdup ("samples across the path at -k..k pixels"));
  g_ptr_array_add (cards, g_strdup ("PVNVERT"));
  g_ptr_array_add (cards, g_strdup_printf ("%" G_GSIZE_FORMAT, pv->n_vertices));
  g_ptr_array_add (cards, g_strdup ("path vertices"));
  for (gsize i = 0; i < MIN (pv->n_vertices, 99) && pv->vertex_ra != NULL; i++)
    {
      if (!isfinite (pv->vertex_ra[i]) || !isfinite (pv->vertex_dec[i]))
        continue;
      g_ptr_array_add (cards, g_strdup_printf ("PVRA%" G_GSIZE_FORMAT, i + 1));
      g_ptr_array_add (cards, g_strdup (g_ascii_formatd (buf, sizeof buf, "%.10f",
                                                         pv->vertex_ra[i])));
      g_ptr_array_add (cards, g_strdup ("[deg] path vertex, ICRS"));
      g_ptr_array_add (cards, g_strdup_printf ("PVDEC%" G_GSIZE_FORMAT, i + 1));
      g_ptr_array_add (cards, g_strdup (g_ascii_formatd (buf, sizeof buf, "%.10f",
                                                         pv->vertex_dec[i])));
      g_ptr_array_add (cards, g_strdup ("[deg] path vertex, ICRS"));
    }
  g_ptr_array_add (cards, NULL);

  if (pv->nchan > 1)
    dv = (pv->velocity[pv->nchan - 1] - pv->velocity[0]) / (double) (pv->nchan - 1);
  return efflux_fits_write_linear_image (pv->data, pv->n_offsets, pv->nchan,
                                         "OFFSET", "arcsec", 0.0, pv->offset_step_arcsec,
                                         "VRAD", "km/s", pv->v0_kms, dv,
                                         bunit != NULL ? bunit : "K",
                                         (const char * const *) cards->pdata, path, error);
}

/* ------------------------------------------------------------------------------------------ */
/* Several cubes on one grid */

EffluxPvSet *
efflux_pv_set_new (const EffluxCube * const *cubes,
                   gsize                     n_cubes,
                   const double             *ra_dec,
                   gsize                     n_vertices,
                   double                    width_arcsec,
                   GError                  **error)
{
  g_autoptr (EffluxPvSet) set = NULL;
  g_autofree double *px = NULL;
  g_autofree double *py = NULL;
  const EffluxCube *grid;
  Samples s = { 0 };
  double pixel_arcsec;
  int k, na;

  if (n_cubes == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "a cut needs at least one cube");
      return NULL;
    }
  grid = cubes[0];
  if (!check_width (grid, width_arcsec, error))
    return NULL;
  if (n_vertices < 2)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: a cut needs at least two vertices", cube_name (grid));
      return NULL;
    }
  for (gsize c = 1; c < n_cubes; c++)
    if (cubes[c]->nchan == 0 || cubes[c]->nx == 0 || cubes[c]->ny == 0)
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the cube is empty",
                     cube_name (cubes[c]));
        return NULL;
      }
  px = g_new (double, n_vertices);
  py = g_new (double, n_vertices);
  if (!vertices_to_pixels (grid, ra_dec, n_vertices, px, py, error))
    return NULL;
  k = half_width_for (grid, width_arcsec, &pixel_arcsec);
  na = 2 * k + 1;
  if (!make_samples (grid, px, py, n_vertices, k, &s, error))
    {
      samples_clear (&s);
      return NULL;
    }

  set = g_new0 (EffluxPvSet, 1);
  set->n_cubes = n_cubes;
  set->cuts = g_new0 (EffluxPv *, n_cubes);
  for (gsize c = 0; c < n_cubes; c++)
    {
      EffluxPv *pv = pv_new_like (grid, &s, width_arcsec, pixel_arcsec);

      set_vertices (pv, ra_dec, n_vertices);
      pv->source = g_strdup (cubes[c]->path);
      set->cuts[c] = pv;
      if (c == 0)
        fill_cut (pv, grid, s.ax, s.ay, na, FALSE);
      else
        {
          gsize m = s.n_off * na;
          g_autofree double *bx = g_new (double, m);
          g_autofree double *by = g_new (double, m);

          for (gsize i = 0; i < m; i++)
            {
              double ra, dec;

              if (!efflux_cube_pixel_to_icrs (grid, s.ax[i], s.ay[i], &ra, &dec) ||
                  !efflux_cube_icrs_to_pixel (cubes[c], ra, dec, &bx[i], &by[i]))
                bx[i] = by[i] = NAN;
            }
          fill_cut (pv, cubes[c], bx, by, na, TRUE);
        }
    }
  samples_clear (&s);
  return g_steal_pointer (&set);
}

void
efflux_pv_set_free (EffluxPvSet *set)
{
  if (set == NULL)
    return;
  for (gsize c = 0; c < set->n_cubes && set->cuts != NULL; c++)
    efflux_pv_free (set->cuts[c]);
  g_free (set->cuts);
  g_free (set);
}
