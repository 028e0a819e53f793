/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-wings"

#include "config.h"

#include <math.h>
#include <string.h>

#include "efflux-maps.h"
#include "efflux-wings.h"

void
efflux_wing_set_free (EffluxWingSet *set)
{
  if (set == NULL)
    return;
  g_free (set->lobes);
  g_free (set->multiples);
  g_free (set->levels);
  if (set->lines != NULL)
    g_ptr_array_unref (set->lines);
  g_free (set);
}

double
efflux_wing_noise (const EffluxCube        *cube,
                   const EffluxDossierCube *dc,
                   double                   v1_kms,
                   double                   v2_kms,
                   gsize                   *n_channels)
{
  gsize k0, k1;
  double sum2 = 0.0;

  if (n_channels != NULL)
    *n_channels = 0;
  g_return_val_if_fail (cube != NULL, NAN);
  if (!efflux_cube_channel_range (cube, v1_kms, v2_kms, &k0, &k1))
    return NAN;
  if (n_channels != NULL)
    *n_channels = k1 - k0;
  for (gsize k = k0; k < k1; k++)
    {
      double rms = (dc != NULL && isfinite (dc->rms_k)) ? dc->rms_k
                   : cube->rms != NULL ? cube->rms[k] : NAN;

      if (!(rms > 0.0) || !isfinite (rms))
        return NAN;
      sum2 += rms * rms;
    }
  return fabs (cube->dv) * sqrt (sum2);
}

/* Vertices from cube's pixel grid to grid's, through ICRS; NaN where there is no projection. */
static void
to_grid (GPtrArray        *lines,
         const EffluxCube *cube,
         const EffluxCube *grid)
{
  for (guint i = 0; i < lines->len; i++)
    {
      EffluxPolyline *line = g_ptr_array_index (lines, i);

      for (gsize j = 0; j < line->n; j++)
        {
          double ra, dec, x, y;

          if (efflux_cube_pixel_to_icrs (cube, line->xy[2 * j], line->xy[2 * j + 1], &ra, &dec)
              && efflux_cube_icrs_to_pixel (grid, ra, dec, &x, &y))
            {
              line->xy[2 * j] = x;
              line->xy[2 * j + 1] = y;
            }
          else
            line->xy[2 * j] = line->xy[2 * j + 1] = NAN;
        }
    }
}

static gint
compare_sets (gconstpointer a,
              gconstpointer b)
{
  const EffluxWingSet *sa = *(EffluxWingSet * const *) a;
  const EffluxWingSet *sb = *(EffluxWingSet * const *) b;

  if (sa->kind != sb->kind)
    return sa->kind == EFFLUX_LOBE_BLUE ? -1 : 1;
  return sa->v1_kms < sb->v1_kms ? -1 : sa->v1_kms > sb->v1_kms ? 1 : 0;
}

GPtrArray *
efflux_wing_contours (const EffluxDossier  *dossier,
                      const char           *cube_id,
                      const EffluxCube     *cube,
                      const EffluxCube     *grid,
                      const double         *multiples,
                      gsize                 n_multiples,
                      char                **skipped,
                      GCancellable         *cancellable,
                      GError              **error)
{
  g_autoptr(GPtrArray) sets = g_ptr_array_new_with_free_func ((GDestroyNotify) efflux_wing_set_free);
  g_autoptr(GString) notes = g_string_new (NULL);
  const EffluxDossierCube *dc = cube_id != NULL ? efflux_dossier_find_cube (dossier, cube_id) : NULL;
  g_autofree float *map = NULL;
  gsize npix;

  g_return_val_if_fail (dossier != NULL && cube != NULL, NULL);
  g_return_val_if_fail (multiples != NULL || n_multiples == 0, NULL);

  if (skipped != NULL)
    *skipped = NULL;
  if (grid == cube)
    grid = NULL;
  if (grid != NULL && (grid->sky == NULL || cube->sky == NULL))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE1/CTYPE2: no sky WCS to place the contours on the map",
                   cube->sky == NULL ? cube->path : grid->path);
      return NULL;
    }
  if (!g_size_checked_mul (&npix, cube->nx, cube->ny))
    return NULL;
  map = g_new (float, npix);

  for (guint k = 0; k < dossier->lobes->len; k++)
    {
      const EffluxDossierLobe *lobe = g_ptr_array_index (dossier->lobes, k);
      EffluxWingSet *set = NULL;
      double sigma;
      gsize nch;

      if (lobe->n_vertices < 3)
        continue;
      /* a lobe with the same kind and range as one done already joins its set */
      for (guint s = 0; s < sets->len && set == NULL; s++)
        {
          EffluxWingSet *other = g_ptr_array_index (sets, s);

          if (other->kind == lobe->kind && other->v1_kms == lobe->v1_kms
              && other->v2_kms == lobe->v2_kms)
            set = other;
        }
      if (set != NULL)
        {
          char *joined = g_strconcat (set->lobes, ", ", lobe->name, NULL);

          g_free (set->lobes);
          set->lobes = joined;
          continue;
        }
      if (g_cancellable_set_error_if_cancelled (cancellable, error))
        return NULL;
      sigma = efflux_wing_noise (cube, dc, lobe->v1_kms, lobe->v2_kms, &nch);
      if (nch == 0)
        {
          g_string_append_printf (notes, "%s[Lobe %s] velocity-kms: no channel of %s between %g and %g km/s",
                                  notes->len ? "\n" : "", lobe->name, cube->path,
                                  lobe->v1_kms, lobe->v2_kms);
          continue;
        }
      if (isnan (sigma))
        {
          g_string_append_printf (notes, "%s[Lobe %s]: the channel noise of %s is not known",
                                  notes->len ? "\n" : "", lobe->name, cube->path);
          continue;
        }
      if (!efflux_moment_map (cube, EFFLUX_MOMENT_0, lobe->v1_kms, lobe->v2_kms, 0.0, map, error))
        return NULL;
      set = g_new0 (EffluxWingSet, 1);
      set->kind = lobe->kind;
      set->lobes = g_strdup (lobe->name);
      set->v1_kms = lobe->v1_kms;
      set->v2_kms = lobe->v2_kms;
      set->n_channels = nch;
      set->sigma = sigma;
      set->n_levels = n_multiples;
      set->multiples = g_memdup2 (multiples, MAX (n_multiples, 1) * sizeof (double));
      set->levels = efflux_contour_levels_sigma (sigma, multiples, n_multiples, error);
      if (set->levels == NULL)
        {
          efflux_wing_set_free (set);
          return NULL;
        }
      set->lines = efflux_contour_trace_levels (map, cube->nx, cube->ny, set->levels, n_multiples);
      if (grid != NULL)
        to_grid (set->lines, cube, grid);
      g_ptr_array_add (sets, set);
    }
  g_ptr_array_sort (sets, compare_sets);
  if (skipped != NULL && notes->len > 0)
    *skipped = g_strdup (notes->str);
  return g_steal_pointer (&sets);
}
