/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Lobe-by-lobe comparison of two dossiers of one source (efflux-compare.h). */
#include "config.h"

#include "efflux-compare.h"

#include <glib/gstdio.h>
#include <math.h>
#include <string.h>

#include "efflux-lobe.h"
#include "efflux-sky.h"

static void
row_free (gpointer data)
{
  EffluxCompareRow *r = data;

  g_free (r->mine);
  g_free (r->theirs);
  g_free (r);
}

void
efflux_comparison_free (EffluxComparison *c)
{
  if (c == NULL)
    return;
  g_clear_pointer (&c->rows, g_ptr_array_unref);
  g_clear_pointer (&c->notes, g_ptr_array_unref);
  g_free (c->mine_author);
  g_free (c->theirs_author);
  g_free (c);
}

const char *
efflux_match_kind_name (EffluxMatchKind kind)
{
  switch (kind)
    {
    case EFFLUX_MATCH_NAME:
      return "name";
    case EFFLUX_MATCH_OVERLAP:
      return "overlap";
    case EFFLUX_MATCH_NONE:
    default:
      return "none";
    }
}

static char *
source_key (const char *name)
{
  g_autofree char *folded = g_utf8_casefold (name != NULL ? name : "", -1);
  GString *s = g_string_new (NULL);

  for (const char *p = folded; *p != '\0'; p = g_utf8_next_char (p))
    {
      gunichar c = g_utf8_get_char (p);

      if (!g_unichar_isspace (c) && c != '-' && c != '_')
        g_string_append_unichar (s, c);
    }
  return g_string_free (s, FALSE);
}

gboolean
efflux_compare_same_source (const EffluxDossier *a,
                            const EffluxDossier *b,
                            double              *separation_arcsec)
{
  g_autofree char *ka = source_key (a->name);
  g_autofree char *kb = source_key (b->name);

  if (separation_arcsec != NULL)
    *separation_arcsec = 3600.0 * efflux_sky_separation_deg (a->ra_deg, a->dec_deg, b->ra_deg, b->dec_deg);
  return g_str_equal (ka, kb);
}

static guint64
count_both (const EffluxLobeMask *a,
            const EffluxLobeMask *b)
{
  gsize i = 0, j = 0;
  guint64 n = 0;

  while (i < a->n_pixels && j < b->n_pixels)
    {
      if (a->index[i] < b->index[j])
        i++;
      else if (a->index[i] > b->index[j])
        j++;
      else
        {
          n++;
          i++;
          j++;
        }
    }
  return n;
}

static const EffluxMeasureRow *
find_row (const EffluxMeasureResult *res,
          const char                *lobe)
{
  if (res == NULL)
    return NULL;
  for (guint i = 0; i < res->rows->len; i++)
    {
      const EffluxMeasureRow *r = g_ptr_array_index (res->rows, i);

      if (!r->is_total && strcmp (r->lobe, lobe) == 0)
        return r;
    }
  return NULL;
}

static double
ratio (double theirs,
       double mine)
{
  if (!isfinite (theirs) || !isfinite (mine) || mine == 0.0)
    return NAN;
  return theirs / mine;
}

/* Overlap of every pair on my lobe's grid: masks[i][j] for my lobe i and their lobe j. */
typedef struct
{
  guint64 n_mine, n_theirs, n_both;
} Overlap;

EffluxComparison *
efflux_compare (const EffluxDossier       *mine,
                GHashTable                *mine_cubes,
                const EffluxMeasureResult *mine_result,
                const EffluxDossier       *theirs,
                const EffluxMeasureResult *theirs_result,
                GError                   **error)
{
  guint nm = mine->lobes->len, nt = theirs->lobes->len;
  g_autofree Overlap *ov = g_new0 (Overlap, (gsize) MAX (nm, 1) * MAX (nt, 1));
  g_autofree int *mate_of_mine = g_new (int, MAX (nm, 1));
  g_autofree int *mate_of_theirs = g_new (int, MAX (nt, 1));
  g_autofree EffluxMatchKind *how = g_new (EffluxMatchKind, MAX (nm, 1));
  g_autofree guint64 *n_mine = g_new0 (guint64, MAX (nm, 1));
  g_autoptr (EffluxComparison) c = g_new0 (EffluxComparison, 1);
  const char *author;

  for (guint i = 0; i < nm; i++)
    {
      mate_of_mine[i] = -1;
      how[i] = EFFLUX_MATCH_NONE;
    }
  for (guint j = 0; j < nt; j++)
    mate_of_theirs[j] = -1;

  /* every pair's overlap on my lobe's grid */
  for (guint i = 0; i < nm; i++)
    {
      const EffluxDossierLobe *a = g_ptr_array_index (mine->lobes, i);
      const EffluxCube *cube = g_hash_table_lookup (mine_cubes, a->cube_id);
      g_autofree char *what_a = g_strdup_printf ("%s: [Lobe %s] polygon", mine->path, a->name);
      g_autoptr (EffluxLobeMask) ma = NULL;

      if (cube == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [Lobe %s] cube: the cube '%s' is not loaded", mine->path, a->name, a->cube_id);
          return NULL;
        }
      ma = efflux_lobe_mask_new (cube, a->ra_deg, a->dec_deg, a->n_vertices, what_a, error);
      if (ma == NULL)
        return NULL;
      n_mine[i] = ma->n_pixels;
      for (guint j = 0; j < nt; j++)
        {
          const EffluxDossierLobe *b = g_ptr_array_index (theirs->lobes, j);
          g_autofree char *what_b = g_strdup_printf ("%s: [Lobe %s] polygon", theirs->path, b->name);
          g_autoptr (EffluxLobeMask) mb = efflux_lobe_mask_new (cube, b->ra_deg, b->dec_deg, b->n_vertices,
                                                                what_b, error);
          Overlap *o = &ov[(gsize) i * nt + j];

          if (mb == NULL)
            return NULL;
          o->n_mine = ma->n_pixels;
          o->n_theirs = mb->n_pixels;
          o->n_both = count_both (ma, mb);
        }
    }

  /* by name */
  for (guint i = 0; i < nm; i++)
    {
      const EffluxDossierLobe *a = g_ptr_array_index (mine->lobes, i);

      for (guint j = 0; j < nt; j++)
        {
          const EffluxDossierLobe *b = g_ptr_array_index (theirs->lobes, j);

          if (mate_of_theirs[j] < 0 && strcmp (a->name, b->name) == 0)
            {
              mate_of_mine[i] = (int) j;
              mate_of_theirs[j] = (int) i;
              how[i] = EFFLUX_MATCH_NAME;
              break;
            }
        }
    }

  /* by the largest overlap, greedily */
  for (;;)
    {
      double best = 0.0;
      int bi = -1, bj = -1;

      for (guint i = 0; i < nm; i++)
        {
          const EffluxDossierLobe *a = g_ptr_array_index (mine->lobes, i);

          if (mate_of_mine[i] >= 0)
            continue;
          for (guint j = 0; j < nt; j++)
            {
              const EffluxDossierLobe *b = g_ptr_array_index (theirs->lobes, j);
              const Overlap *o = &ov[(gsize) i * nt + j];
              guint64 uni = o->n_mine + o->n_theirs - o->n_both;
              double iou;

              if (mate_of_theirs[j] >= 0 || a->kind != b->kind || o->n_both == 0 || uni == 0)
                continue;
              iou = (double) o->n_both / (double) uni;
              if (iou > best)
                {
                  best = iou;
                  bi = (int) i;
                  bj = (int) j;
                }
            }
        }
      if (bi < 0)
        break;
      mate_of_mine[bi] = bj;
      mate_of_theirs[bj] = bi;
      how[bi] = EFFLUX_MATCH_OVERLAP;
    }

  c->rows = g_ptr_array_new_with_free_func (row_free);
  c->notes = g_ptr_array_new_with_free_func (g_free);
  {
    double sep = 0.0;
    gboolean same = efflux_compare_same_source (mine, theirs, &sep);

    if (!same)
      g_ptr_array_add (c->notes, g_strdup_printf ("%s: [Source] name is '%s', mine is '%s' (%s): positions %.2f arcsec apart",
                                                  theirs->path, theirs->name, mine->name, mine->path, sep));
    else if (sep > EFFLUX_SAME_SOURCE_ARCSEC)
      g_ptr_array_add (c->notes, g_strdup_printf ("%s: [Source] ra-deg, dec-deg lie %.1f arcsec from mine (%s), "
                                                  "more than %.0f arcsec: check either position",
                                                  theirs->path, sep, mine->path, EFFLUX_SAME_SOURCE_ARCSEC));
  }
  for (guint i = 0; i < nm; i++)
    {
      const EffluxDossierLobe *a = g_ptr_array_index (mine->lobes, i);
      EffluxCompareRow *r = g_new0 (EffluxCompareRow, 1);

      r->mine = g_strdup (a->name);
      r->kind = a->kind;
      r->match = how[i];
      r->iou = r->dv1_kms = r->dv2_kms = NAN;
      for (int q = 0; q < EFFLUX_RATIO_N; q++)
        r->ratio[q] = NAN;
      if (mate_of_mine[i] >= 0)
        {
          guint j = (guint) mate_of_mine[i];
          const EffluxDossierLobe *b = g_ptr_array_index (theirs->lobes, j);
          const Overlap *o = &ov[(gsize) i * nt + j];
          guint64 uni = o->n_mine + o->n_theirs - o->n_both;
          const EffluxMeasureRow *rm = find_row (mine_result, a->name);
          const EffluxMeasureRow *rt = find_row (theirs_result, b->name);

          r->theirs = g_strdup (b->name);
          r->n_mine = o->n_mine;
          r->n_theirs = o->n_theirs;
          r->n_both = o->n_both;
          r->iou = uni > 0 ? (double) o->n_both / (double) uni : NAN;
          r->dv1_kms = b->v1_kms - a->v1_kms;
          r->dv2_kms = b->v2_kms - a->v2_kms;
          if (rm != NULL && rt != NULL)
            {
              r->ratio[EFFLUX_RATIO_MASS] = ratio (rt->mass_msun, rm->mass_msun);
              r->ratio[EFFLUX_RATIO_MOMENTUM] = ratio (rt->momentum_msun_kms, rm->momentum_msun_kms);
              r->ratio[EFFLUX_RATIO_ENERGY] = ratio (rt->energy_erg, rm->energy_erg);
              r->ratio[EFFLUX_RATIO_TDYN] = ratio (rt->tdyn_yr, rm->tdyn_yr);
            }
        }
      else
        r->n_mine = n_mine[i];
      g_ptr_array_add (c->rows, r);
    }
  for (guint j = 0; j < nt; j++)
    {
      const EffluxDossierLobe *b = g_ptr_array_index (theirs->lobes, j);
      EffluxCompareRow *r;

      if (mate_of_theirs[j] >= 0)
        continue;
      r = g_new0 (EffluxCompareRow, 1);
      r->theirs = g_strdup (b->name);
      r->kind = b->kind;
      r->match = EFFLUX_MATCH_NONE;
      r->iou = r->dv1_kms = r->dv2_kms = NAN;
      for (int q = 0; q < EFFLUX_RATIO_N; q++)
        r->ratio[q] = NAN;
      g_ptr_array_add (c->rows, r);
    }
  author = efflux_dossier_author (mine);
  c->mine_author = g_strdup (author);
  author = efflux_dossier_author (theirs);
  c->theirs_author = g_strdup (author);
  return g_steal_pointer (&c);
}

static gboolean
same_file (const char *a,
           const char *b)
{
  GStatBuf sa, sb;

  if (g_strcmp0 (a, b) == 0)
    return TRUE;
  return g_stat (a, &sa) == 0 && g_stat (b, &sb) == 0 && sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
}

/* Their cubes (id -> EffluxCube *, not owning) for their lobes and isotopologue; cubes loaded
 * here go to `owned`. */
static GHashTable *
their_cubes (const EffluxDossier *mine,
             GHashTable          *mine_cubes,
             const EffluxDossier *theirs,
             GHashTable          *owned,
             GPtrArray           *notes,
             GCancellable        *cancellable,
             GError             **error)
{
  g_autoptr (GHashTable) t = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, NULL);

  for (guint i = 0; i < theirs->cubes->len; i++)
    {
      const EffluxDossierCube *tc = g_ptr_array_index (theirs->cubes, i);
      EffluxCube *cube = NULL;
      gboolean needed = tc->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE &&
                        theirs->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE;

      for (guint j = 0; j < theirs->lobes->len && !needed; j++)
        if (strcmp (((EffluxDossierLobe *) g_ptr_array_index (theirs->lobes, j))->cube_id, tc->id) == 0)
          needed = TRUE;
      if (!needed)
        continue;
      /* the same file as one of mine: share it */
      for (guint j = 0; j < mine->cubes->len && cube == NULL; j++)
        {
          const EffluxDossierCube *mc = g_ptr_array_index (mine->cubes, j);
          EffluxCube *loaded = g_hash_table_lookup (mine_cubes, mc->id);

          if (loaded != NULL && same_file (mc->abs_path, tc->abs_path))
            cube = loaded;
        }
      if (cube == NULL && g_file_test (tc->abs_path, G_FILE_TEST_EXISTS))
        {
          EffluxCubeLoadOptions options = { 0 };

          options.no_noise = isfinite (tc->rms_k);
          cube = efflux_cube_load (tc->abs_path, &options, cancellable, NULL, NULL, error);
          if (cube == NULL)
            return NULL;
          g_hash_table_insert (owned, g_strdup (tc->id), cube);
        }
      if (cube == NULL)
        {
          /* not here: my cube of the same id, else of the same line */
          const EffluxDossierCube *by_id = efflux_dossier_find_cube (mine, tc->id);
          const EffluxDossierCube *use = NULL;

          if (by_id != NULL && g_hash_table_lookup (mine_cubes, by_id->id) != NULL)
            use = by_id;
          for (guint j = 0; j < mine->cubes->len && use == NULL; j++)
            {
              const EffluxDossierCube *mc = g_ptr_array_index (mine->cubes, j);

              if (tc->line != NULL && mc->line == tc->line && g_hash_table_lookup (mine_cubes, mc->id) != NULL)
                use = mc;
            }
          if (use == NULL)
            {
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: [Cube %s] path: %s does not exist here, and %s has no loaded cube of the "
                           "same id or line to measure it on", theirs->path, tc->id, tc->abs_path, mine->path);
              return NULL;
            }
          cube = g_hash_table_lookup (mine_cubes, use->id);
          g_ptr_array_add (notes, g_strdup_printf ("%s: [Cube %s] %s does not exist here: measured on my cube %s (%s)",
                                                   theirs->path, tc->id, tc->path, use->id, use->path));
        }
      g_hash_table_insert (t, g_strdup (tc->id), cube);
    }
  return g_steal_pointer (&t);
}

EffluxComparison *
efflux_compare_dossiers (const EffluxDossier *mine,
                         const EffluxDossier *theirs,
                         GCancellable        *cancellable,
                         GError             **error)
{
  g_autoptr (GHashTable) cubes = NULL;
  g_autoptr (GHashTable) owned = g_hash_table_new_full (g_str_hash, g_str_equal, g_free,
                                                        (GDestroyNotify) efflux_cube_free);
  g_autoptr (GHashTable) tcubes = NULL;
  g_autoptr (GPtrArray) notes = g_ptr_array_new_with_free_func (g_free);
  g_autoptr (EffluxMeasureResult) rm = NULL;
  g_autoptr (EffluxMeasureResult) rt = NULL;
  g_autoptr (EffluxMeasurePrep) prep = NULL;
  g_autoptr (EffluxMeasurePrep) tprep = NULL;
  EffluxComparison *c;

  cubes = efflux_measure_load_cubes (mine, cancellable, error);
  if (cubes == NULL)
    return NULL;
  prep = efflux_measure_prepare (mine, cubes, cancellable, error);
  if (prep == NULL)
    return NULL;
  rm = efflux_measure_finish (prep, mine, error);
  if (rm == NULL)
    return NULL;
  tcubes = their_cubes (mine, cubes, theirs, owned, notes, cancellable, error);
  if (tcubes == NULL)
    return NULL;
  tprep = efflux_measure_prepare (theirs, tcubes, cancellable, error);
  if (tprep == NULL)
    return NULL;
  rt = efflux_measure_finish (tprep, theirs, error);
  if (rt == NULL)
    return NULL;
  c = efflux_compare (mine, cubes, rm, theirs, rt, error);
  if (c != NULL)
    for (guint i = 0; i < notes->len; i++)
      g_ptr_array_add (c->notes, g_strdup (g_ptr_array_index (notes, i)));
  return c;
}
