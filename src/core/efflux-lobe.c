/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include "efflux-lobe.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void
efflux_lobe_mask_free (EffluxLobeMask *mask)
{
  if (mask == NULL)
    return;
  g_free (mask->index);
  g_free (mask->px);
  g_free (mask->py);
  g_free (mask);
}

/* Sign of the cross product (b - a) x (c - a). */
static int
orient (double ax, double ay,
        double bx, double by,
        double cx, double cy)
{
  double v = (bx - ax) * (cy - ay) - (by - ay) * (cx - ax);

  return (v > 0) - (v < 0);
}

/* c lies on segment a-b, given the three are collinear. */
static gboolean
on_segment (double ax, double ay,
            double bx, double by,
            double cx, double cy)
{
  return MIN (ax, bx) <= cx && cx <= MAX (ax, bx) && MIN (ay, by) <= cy && cy <= MAX (ay, by);
}

static gboolean
segments_meet (double ax, double ay, double bx, double by,
               double cx, double cy, double dx, double dy)
{
  int o1 = orient (ax, ay, bx, by, cx, cy);
  int o2 = orient (ax, ay, bx, by, dx, dy);
  int o3 = orient (cx, cy, dx, dy, ax, ay);
  int o4 = orient (cx, cy, dx, dy, bx, by);

  if (o1 != o2 && o3 != o4)
    return TRUE;
  if (o1 == 0 && on_segment (ax, ay, bx, by, cx, cy))
    return TRUE;
  if (o2 == 0 && on_segment (ax, ay, bx, by, dx, dy))
    return TRUE;
  if (o3 == 0 && on_segment (cx, cy, dx, dy, ax, ay))
    return TRUE;
  if (o4 == 0 && on_segment (cx, cy, dx, dy, bx, by))
    return TRUE;
  return FALSE;
}

gboolean
efflux_polygon_self_crossing (const double *px,
                              const double *py,
                              gsize         n)
{
  for (gsize i = 0; i < n; i++)
    {
      gsize i1 = (i + 1) % n;

      for (gsize j = i + 1; j < n; j++)
        {
          gsize j1 = (j + 1) % n;

          if (j == i1 || j1 == i)
            {
              /* neighbours share one vertex; they must not fold back over each other */
              gsize shared = (j == i1) ? i1 : i;
              gsize a = (j == i1) ? i : j;
              gsize b = (j == i1) ? j1 : i1;

              if (orient (px[a], py[a], px[shared], py[shared], px[b], py[b]) == 0)
                {
                  /* collinear: a fold when b lies back towards a */
                  double ux = px[a] - px[shared], uy = py[a] - py[shared];
                  double vx = px[b] - px[shared], vy = py[b] - py[shared];

                  if (ux * vx + uy * vy > 0)
                    return TRUE;
                }
              continue;
            }
          if (segments_meet (px[i], py[i], px[i1], py[i1], px[j], py[j], px[j1], py[j1]))
            return TRUE;
        }
    }
  return FALSE;
}

static int
compare_double (const void *a,
                const void *b)
{
  double x = *(const double *) a, y = *(const double *) b;

  return (x > y) - (x < y);
}

EffluxLobeMask *
efflux_lobe_mask_new_pixels (gsize         nx,
                             gsize         ny,
                             const double *px_in,
                             const double *py_in,
                             gsize         n_in,
                             const char   *what,
                             GError      **error)
{
  g_autoptr (EffluxLobeMask) m = g_new0 (EffluxLobeMask, 1);
  g_autoptr (GArray) idx = g_array_new (FALSE, FALSE, sizeof (guint32));
  g_autofree double *xc = NULL;
  double ymin = INFINITY, ymax = -INFINITY;
  gsize n = 0;
  gssize y0, y1;

  if ((guint64) nx * ny > G_MAXUINT32)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: the map has more than 2^32 pixels", what);
      return NULL;
    }
  m->nx = nx;
  m->ny = ny;
  m->px = g_new (double, n_in + 1);
  m->py = g_new (double, n_in + 1);
  /* drop repeated vertices (and a closing vertex equal to the first) */
  for (gsize i = 0; i < n_in; i++)
    {
      if (!isfinite (px_in[i]) || !isfinite (py_in[i]))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: vertex %" G_GSIZE_FORMAT " is not finite", what, i + 1);
          return NULL;
        }
      if (n > 0 && px_in[i] == m->px[n - 1] && py_in[i] == m->py[n - 1])
        continue;
      m->px[n] = px_in[i];
      m->py[n] = py_in[i];
      n++;
    }
  if (n > 1 && m->px[n - 1] == m->px[0] && m->py[n - 1] == m->py[0])
    n--;
  m->n_vertices = n;
  if (n < 3)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: needs at least 3 distinct vertices, got %" G_GSIZE_FORMAT, what, n);
      return NULL;
    }
  if (efflux_polygon_self_crossing (m->px, m->py, n))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: edges cross", what);
      return NULL;
    }
  for (gsize i = 0; i < n; i++)
    {
      ymin = MIN (ymin, m->py[i]);
      ymax = MAX (ymax, m->py[i]);
    }
  xc = g_new (double, n);
  y0 = (gssize) MAX (0.0, ceil (ymin));
  y1 = (gssize) MIN ((double) ny - 1, floor (ymax));
  for (gssize y = y0; y <= y1; y++)
    {
      gsize nc = 0;

      for (gsize i = 0; i < n; i++)
        {
          gsize j = (i + 1) % n;
          double ya = m->py[i], yb = m->py[j];
          double lo = MIN (ya, yb), hi = MAX (ya, yb);

          if (ya == yb || !(lo <= (double) y && (double) y < hi))
            continue;
          xc[nc++] = m->px[i] + ((double) y - ya) * (m->px[j] - m->px[i]) / (yb - ya);
        }
      qsort (xc, nc, sizeof (double), compare_double);
      for (gsize c = 0; c + 1 < nc; c += 2)
        {
          double a = MAX (0.0, ceil (xc[c]));
          double b = MIN ((double) nx, ceil (xc[c + 1]));

          for (double x = a; x < b; x += 1)
            {
              guint32 v = (guint32) ((gsize) y * nx + (gsize) x);
              g_array_append_val (idx, v);
            }
        }
    }
  m->n_pixels = idx->len;
  m->index = (guint32 *) g_array_free (g_steal_pointer (&idx), FALSE);
  return g_steal_pointer (&m);
}

EffluxLobeMask *
efflux_lobe_mask_new (const EffluxCube *cube,
                      const double     *ra_deg,
                      const double     *dec_deg,
                      gsize             n_vertices,
                      const char       *what,
                      GError          **error)
{
  g_autofree double *px = g_new (double, n_vertices + 1);
  g_autofree double *py = g_new (double, n_vertices + 1);

  for (gsize i = 0; i < n_vertices; i++)
    if (!efflux_cube_icrs_to_pixel (cube, ra_deg[i], dec_deg[i], &px[i], &py[i]))
      {
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: vertex %" G_GSIZE_FORMAT " (%.6f, %.6f) has no position on the map of %s",
                     what, i + 1, ra_deg[i], dec_deg[i], cube->path ? cube->path : "the cube");
        return NULL;
      }
  return efflux_lobe_mask_new_pixels (cube->nx, cube->ny, px, py, n_vertices, what, error);
}
