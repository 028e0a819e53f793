/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-contour.h"

#include <math.h>
#include <string.h>

void
efflux_polyline_free (EffluxPolyline *line)
{
  if (line == NULL)
    return;
  g_free (line->xy);
  g_free (line);
}

/* Edges of the grid: horizontal edge H(i, j) joins (i, j)-(i+1, j), id j * (nx - 1) + i;
 * vertical edge V(i, j) joins (i, j)-(i, j+1), id n_h + j * nx + i. */
typedef struct
{
  const float *image;
  gsize        nx, ny;
  gsize        n_h, n_edges;
  double       level;
} Grid;

static inline gsize
edge_h (const Grid *g,
        gsize       i,
        gsize       j)
{
  return j * (g->nx - 1) + i;
}

static inline gsize
edge_v (const Grid *g,
        gsize       i,
        gsize       j)
{
  return g->n_h + j * g->nx + i;
}

/* The crossing point on an edge. */
static void
edge_point (const Grid *g,
            gsize       e,
            double     *x,
            double     *y)
{
  gsize i, j, a, b;
  double t, va, vb;

  if (e < g->n_h)
    {
      j = e / (g->nx - 1);
      i = e % (g->nx - 1);
      a = j * g->nx + i;
      b = a + 1;
    }
  else
    {
      j = (e - g->n_h) / g->nx;
      i = (e - g->n_h) % g->nx;
      a = j * g->nx + i;
      b = a + g->nx;
    }
  va = g->image[a];
  vb = g->image[b];
  t = vb != va ? (g->level - va) / (vb - va) : 0.5;
  t = CLAMP (t, 0.0, 1.0);
  if (e < g->n_h)
    {
      *x = i + t;
      *y = j;
    }
  else
    {
      *x = i;
      *y = j + t;
    }
}

typedef struct
{
  gsize e[2];
} Segment;

/* Segments per case, as pairs of cell edges 0 bottom (a-b), 1 right (b-c), 2 top (d-c),
 * 3 left (a-d), with a = (i, j), b = (i+1, j), c = (i+1, j+1), d = (i, j+1); -1 ends.
 * Saddles 5 and 10 are resolved in the code. */
static const int cases[16][4] = {
  { -1, -1, -1, -1 },  /* 0 */
  { 3, 0, -1, -1 },    /* 1: a */
  { 0, 1, -1, -1 },    /* 2: b */
  { 3, 1, -1, -1 },    /* 3: a b */
  { 1, 2, -1, -1 },    /* 4: c */
  { -1, -1, -1, -1 },  /* 5: a c saddle */
  { 0, 2, -1, -1 },    /* 6: b c */
  { 3, 2, -1, -1 },    /* 7: a b c */
  { 2, 3, -1, -1 },    /* 8: d */
  { 0, 2, -1, -1 },    /* 9: a d */
  { -1, -1, -1, -1 },  /* 10: b d saddle */
  { 1, 2, -1, -1 },    /* 11: a b d */
  { 1, 3, -1, -1 },    /* 12: c d */
  { 0, 1, -1, -1 },    /* 13: a c d */
  { 3, 0, -1, -1 },    /* 14: b c d */
  { -1, -1, -1, -1 },  /* 15 */
};

/* adj: 2 x n_edges entries, all -1 on entry and on return (only the entries used are reset). */
static void
trace_level (const Grid *g,
             gssize     *adj,
             GPtrArray  *out)
{
  g_autoptr (GArray) segs = g_array_new (FALSE, FALSE, sizeof (Segment));
  g_autofree guint8 *used = NULL;
  const gsize nx = g->nx, ny = g->ny;
  const double L = g->level;

  for (gsize j = 0; j + 1 < ny; j++)
    for (gsize i = 0; i + 1 < nx; i++)
      {
        double va = g->image[j * nx + i], vb = g->image[j * nx + i + 1];
        double vd = g->image[(j + 1) * nx + i], vc = g->image[(j + 1) * nx + i + 1];
        gsize ce[4];
        int idx, pairs[4];

        if (isnan (va) || isnan (vb) || isnan (vc) || isnan (vd))
          continue;
        idx = (va >= L ? 1 : 0) | (vb >= L ? 2 : 0) | (vc >= L ? 4 : 0) | (vd >= L ? 8 : 0);
        if (idx == 0 || idx == 15)
          continue;
        memcpy (pairs, cases[idx], sizeof pairs);
        if (idx == 5 || idx == 10)
          {
            gboolean centre_high = (va + vb + vc + vd) / 4.0 >= L;
            /* a and c high (5): joined through the centre -> cut off b and d */
            gboolean cut_bd = (idx == 5) == centre_high;

            if (cut_bd)
              {
                pairs[0] = 0; pairs[1] = 1;   /* around b */
                pairs[2] = 2; pairs[3] = 3;   /* around d */
              }
            else
              {
                pairs[0] = 3; pairs[1] = 0;   /* around a */
                pairs[2] = 1; pairs[3] = 2;   /* around c */
              }
          }
        ce[0] = edge_h (g, i, j);
        ce[1] = edge_v (g, i + 1, j);
        ce[2] = edge_h (g, i, j + 1);
        ce[3] = edge_v (g, i, j);
        for (int p = 0; p < 4 && pairs[p] >= 0; p += 2)
          {
            Segment s = { { ce[pairs[p]], ce[pairs[p + 1]] } };

            g_array_append_val (segs, s);
          }
      }
  if (segs->len == 0)
    return;

  /* each edge is shared by at most two cells, so it ends at most two segments */
  for (guint s = 0; s < segs->len; s++)
    {
      Segment *sg = &g_array_index (segs, Segment, s);

      for (int end = 0; end < 2; end++)
        {
          gsize e = sg->e[end];

          if (adj[2 * e] < 0)
            adj[2 * e] = s;
          else
            adj[2 * e + 1] = s;
        }
    }
  used = g_new0 (guint8, segs->len);

  /* open lines first (from an edge with one segment), then the closed loops */
  for (int pass = 0; pass < 2; pass++)
    for (guint s0 = 0; s0 < segs->len; s0++)
      {
        Segment *first = &g_array_index (segs, Segment, s0);
        g_autoptr (GArray) pts = NULL;
        EffluxPolyline *line;
        gsize start_edge, e;
        gssize s;
        double x, y;
        gboolean closed = FALSE;

        if (used[s0])
          continue;
        if (pass == 0)
          {
            if (adj[2 * first->e[0] + 1] < 0)
              start_edge = first->e[0];
            else if (adj[2 * first->e[1] + 1] < 0)
              start_edge = first->e[1];
            else
              continue;
          }
        else
          start_edge = first->e[0];

        pts = g_array_new (FALSE, FALSE, sizeof (double));
        edge_point (g, start_edge, &x, &y);
        g_array_append_val (pts, x);
        g_array_append_val (pts, y);
        e = start_edge;
        s = s0;
        for (;;)
          {
            Segment *sg = &g_array_index (segs, Segment, s);
            gssize next;

            used[s] = 1;
            e = sg->e[0] == e ? sg->e[1] : sg->e[0];
            if (e == start_edge)
              {
                closed = TRUE;
                break;
              }
            edge_point (g, e, &x, &y);
            g_array_append_val (pts, x);
            g_array_append_val (pts, y);
            next = adj[2 * e] == s ? adj[2 * e + 1] : adj[2 * e];
            if (next < 0 || used[next])
              break;
            s = next;
          }
        line = g_new0 (EffluxPolyline, 1);
        line->level = L;
        line->closed = closed;
        line->n = pts->len / 2;
        line->xy = (double *) g_array_free (g_steal_pointer (&pts), FALSE);
        g_ptr_array_add (out, line);
      }

  /* leave adj clean for the next level */
  for (guint s0 = 0; s0 < segs->len; s0++)
    {
      Segment *sg = &g_array_index (segs, Segment, s0);

      adj[2 * sg->e[0]] = adj[2 * sg->e[0] + 1] = -1;
      adj[2 * sg->e[1]] = adj[2 * sg->e[1] + 1] = -1;
    }
}

GPtrArray *
efflux_contour_trace_levels (const float  *image,
                             gsize         nx,
                             gsize         ny,
                             const double *levels,
                             gsize         n_levels)
{
  GPtrArray *out = g_ptr_array_new_with_free_func ((GDestroyNotify) efflux_polyline_free);
  g_autofree gssize *adj = NULL;
  Grid g;

  if (image == NULL || nx < 2 || ny < 2)
    return out;
  g.image = image;
  g.nx = nx;
  g.ny = ny;
  g.n_h = (nx - 1) * ny;
  g.n_edges = g.n_h + nx * (ny - 1);
  adj = g_new (gssize, 2 * g.n_edges);
  for (gsize e = 0; e < 2 * g.n_edges; e++)
    adj[e] = -1;
  for (gsize l = 0; l < n_levels; l++)
    {
      if (!isfinite (levels[l]))
        continue;
      g.level = levels[l];
      trace_level (&g, adj, out);
    }
  return out;
}

GPtrArray *
efflux_contour_trace (const float *image,
                      gsize        nx,
                      gsize        ny,
                      double       level)
{
  return efflux_contour_trace_levels (image, nx, ny, &level, 1);
}

double *
efflux_contour_levels_sigma (double         sigma,
                             const double  *multiples,
                             gsize          n,
                             GError       **error)
{
  g_autofree double *levels = NULL;

  if (!isfinite (sigma) || !(sigma > 0.0))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "contour levels: sigma %g: expected a finite number > 0", sigma);
      return NULL;
    }
  levels = g_new (double, MAX (n, 1));
  for (gsize i = 0; i < n; i++)
    {
      if (!isfinite (multiples[i]))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "contour levels: multiple %" G_GSIZE_FORMAT " is not a finite number",
                       i + 1);
          return NULL;
        }
      levels[i] = multiples[i] * sigma;
    }
  return g_steal_pointer (&levels);
}

double *
efflux_contour_levels_log (double    lo,
                           double    hi,
                           gsize     n,
                           GError  **error)
{
  double *levels;

  if (n == 0 || !isfinite (lo) || !isfinite (hi) || !(lo > 0.0) || hi < lo ||
      (hi == lo && n > 1))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "contour levels: %" G_GSIZE_FORMAT " log-spaced levels from %g to %g: expected "
                   "0 < low < high and at least one level", n, lo, hi);
      return NULL;
    }
  levels = g_new (double, n);
  levels[0] = lo;
  for (gsize i = 1; i < n; i++)
    levels[i] = exp (log (lo) + (log (hi) - log (lo)) * (double) i / (double) (n - 1));
  if (n > 1)
    levels[n - 1] = hi;
  return levels;
}
