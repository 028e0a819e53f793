/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include "efflux-measure.h"
#include "efflux-constants.h"
#include "efflux-lte.h"
#include "efflux-mvfit.h"
#include "efflux-opacity.h"
#include "efflux-sampling.h"
#include "efflux-io.h"

#include <fitsio.h>
#include <glib/gstdio.h>
#include <stdlib.h>

#include <float.h>
#include <math.h>
#include <string.h>

/* ---------------------------------------------------------------------------------------------- */
/* preparation                                                                                      */

typedef struct
{
  char              *name;
  char              *cube_id;
  EffluxCube        *cube;       /* borrowed */
  const EffluxLine  *line;
  double             eff;        /* beam efficiency */
  EffluxLobeMask    *mask;
  gsize              nchan;
  double            *sum;        /* per channel: sum of T over entering voxels, K */
  double            *var;        /* per channel: sum of rms^2 over entering voxels, K^2 */
  guint64           *nvox;       /* per channel: entering voxels */
  double            *rdet;       /* per channel: largest source distance (arcsec) of a pixel with a
                                  * detected voxel; -1 when none */
  /* opacity from the isotopologue: mean brightness over the mask and its noise, at the tracer's
   * channels (NaN where unknown); NULL when not used */
  double            *s12, *sig12, *s13, *sig13;
  double             iso_ratio_kind;  /* 0: 13CO (isotope-ratio), 1: C18O (o18-ratio) */
  /* the raw sums of a lobe prepared from a cube in memory, kept for outline changes
   * (update_lobe); NULL for a streamed lobe */
  struct LobeWork   *work;
} PrepLobe;

struct _EffluxMeasurePrep
{
  guint       n_incremental;   /* outline changes applied by difference (update_lobe) */
  GPtrArray  *lobes;   /* PrepLobe * */
  GPtrArray  *notes;
  GHashTable *cubes;   /* the caller's id -> EffluxCube * (a reference) */
  GHashTable *lines;   /* cube id -> const EffluxLine * (as written or guessed) */
};

static void lobe_work_free (struct LobeWork *w);

static void
prep_lobe_free (gpointer p)
{
  PrepLobe *pl = p;

  lobe_work_free (pl->work);
  g_free (pl->name);
  g_free (pl->cube_id);
  efflux_lobe_mask_free (pl->mask);
  g_free (pl->sum);
  g_free (pl->var);
  g_free (pl->nvox);
  g_free (pl->rdet);
  g_free (pl->s12);
  g_free (pl->sig12);
  g_free (pl->s13);
  g_free (pl->sig13);
  g_free (pl);
}

void
efflux_measure_prep_free (EffluxMeasurePrep *prep)
{
  if (prep == NULL)
    return;
  g_clear_pointer (&prep->lobes, g_ptr_array_unref);
  g_clear_pointer (&prep->notes, g_ptr_array_unref);
  g_clear_pointer (&prep->cubes, g_hash_table_unref);
  g_clear_pointer (&prep->lines, g_hash_table_unref);
  g_free (prep);
}

const EffluxLobeMask *
efflux_measure_prep_mask (const EffluxMeasurePrep *prep,
                          const char              *lobe)
{
  for (guint i = 0; i < prep->lobes->len; i++)
    {
      PrepLobe *pl = g_ptr_array_index (prep->lobes, i);
      if (strcmp (pl->name, lobe) == 0)
        return pl->mask;
    }
  return NULL;
}

/* Angular separation in arcsec (Vincenty's formula, stable at all separations). */
static double
separation_arcsec (double ra1, double dec1,
                   double ra2, double dec2)
{
  double d2r = G_PI / 180.0;
  double dra = (ra2 - ra1) * d2r;
  double s1 = sin (dec1 * d2r), c1 = cos (dec1 * d2r);
  double s2 = sin (dec2 * d2r), c2 = cos (dec2 * d2r);
  double num1 = c2 * sin (dra);
  double num2 = c1 * s2 - s1 * c2 * cos (dra);
  double den = s1 * s2 + c1 * c2 * cos (dra);

  return atan2 (hypot (num1, num2), den) / d2r * 3600.0;
}

/* The line of a dossier cube: as written, or guessed from the rest frequency. */
static const EffluxLine *
cube_line (const EffluxDossier      *d,
           const EffluxDossierCube  *dc,
           const EffluxCube         *cube,
           GPtrArray                *notes,
           GError                  **error)
{
  const EffluxLine *line;

  if (dc->line != NULL)
    return dc->line;
  line = cube->restfreq_hz > 0 ? efflux_line_guess (cube->restfreq_hz, 1e-4) : NULL;
  if (line == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Cube %s] line: missing, and the cube's rest frequency (%.6f GHz) is no "
                   "catalogue line; add line=", d->path, dc->id, cube->restfreq_hz / 1e9);
      return NULL;
    }
  g_ptr_array_add (notes, g_strdup_printf ("%s: [Cube %s] line: guessed '%s' from the rest frequency %.6f GHz",
                                           d->path, dc->id, line->name, cube->restfreq_hz / 1e9));
  return line;
}

/* Per-channel rms in the cube's scale (nchan values). */
static double *
cube_rms (const EffluxDossierCube *dc,
          EffluxCube              *cube)
{
  double *rms = g_new (double, cube->nchan);
  gboolean any = FALSE;

  if (isfinite (dc->rms_k))
    {
      for (gsize k = 0; k < cube->nchan; k++)
        rms[k] = dc->rms_k;
      return rms;
    }
  for (gsize k = 0; cube->rms != NULL && k < cube->nchan; k++)
    if (cube->rms[k] > 0)
      any = TRUE;
  if (!any)
    efflux_cube_estimate_noise (cube);
  for (gsize k = 0; k < cube->nchan; k++)
    rms[k] = (cube->rms != NULL && isfinite (cube->rms[k])) ? cube->rms[k] : 0.0;
  return rms;
}

/* Linear interpolation of y(x) at xi; x in either monotonic order; NaN outside. */
static double
interpolate (const double *x,
             const double *y,
             gsize         n,
             double        xi)
{
  gboolean up = n < 2 || x[n - 1] >= x[0];

  if (n == 1)
    return xi == x[0] ? y[0] : NAN;
  for (gsize j = 0; j + 1 < n; j++)
    {
      double a = up ? x[j] : x[j + 1], b = up ? x[j + 1] : x[j];
      double ya = up ? y[j] : y[j + 1], yb = up ? y[j + 1] : y[j];

      if (xi >= a && xi <= b)
        return b == a ? ya : ya + (yb - ya) * (xi - a) / (b - a);
    }
  return NAN;
}

/* The inner loops of the one pass over a lobe's voxels, one spectrum at a time, written without
 * branches so that the compiler can vectorise them. A voxel is finite when |t| <= FLT_MAX (NaN
 * fails every comparison). GCC if-converts and vectorises them only at -O3 and without
 * trapping math (comparisons with NaN may not trap here: the results are only selected). */
#if defined(__GNUC__) && !defined(__clang__)
#define EFFLUX_VECTORISE __attribute__ ((optimize ("O3", "no-trapping-math")))
#else
#define EFFLUX_VECTORISE
#endif

EFFLUX_VECTORISE static void
accumulate (const float *restrict s,
            gsize                 nchan,
            double                r,
            const float *restrict thr_det,
            double *restrict      sum,
            double *restrict      cnt,
            double *restrict      ndet,
            double *restrict      rdet)
{
  for (gsize k = 0; k < nchan; k++)
    {
      float t = s[k];
      int fin = fabsf (t) <= FLT_MAX;
      int det = (t > 0) & (t >= thr_det[k]);

      double rd = rdet[k];
      double far = r > rd ? r : rd;

      sum[k] += (double) (fin ? t : 0.0f);
      cnt[k] += (double) fin;
      ndet[k] += (double) det;
      rdet[k] = det ? far : rd;
    }
}

EFFLUX_VECTORISE static void
accumulate_clipped (const float *restrict s,
                    gsize                 nchan,
                    double                r,
                    const float *restrict thr_clip,
                    const float *restrict thr_det,
                    double *restrict      sum_all,
                    double *restrict      n_all,
                    double *restrict      sum,
                    double *restrict      cnt,
                    double *restrict      ndet,
                    double *restrict      rdet)
{
  for (gsize k = 0; k < nchan; k++)
    {
      float t = s[k];
      int fin = fabsf (t) <= FLT_MAX;
      int in = fin & (t >= thr_clip[k]);
      int det = in & (t > 0) & (t >= thr_det[k]);

      double rd = rdet[k];
      double far = r > rd ? r : rd;

      sum_all[k] += (double) (fin ? t : 0.0f);
      n_all[k] += (double) fin;
      sum[k] += (double) (in ? t : 0.0f);
      cnt[k] += (double) in;
      ndet[k] += (double) det;
      rdet[k] = det ? far : rd;
    }
}

/* A mask pixel and its distance from the source, in the order of decreasing distance. */
typedef struct
{
  double  dist;
  guint32 pix;
} OrderEntry;

/* What one lobe's pass over its cube needs, between the setup and the sums (prepare_lobe_begin,
 * a pass over the voxels in memory or streamed from the file, prepare_lobe_end). For a cube in
 * memory it stays with the lobe afterwards (PrepLobe.work, without dc and ic, which belong to the
 * dossier of the moment): an outline change then adds and subtracts the spectra of the pixels
 * that entered or left the mask (update_lobe) and prepare_lobe_end derives the sums again. */
typedef struct LobeWork
{
  PrepLobe                *pl;
  const EffluxDossierCube *dc;
  EffluxCube              *cube;
  gboolean                 clip;
  double                   clip_sigma, det_sigma;
  double                  *rms;       /* per channel, cube scale; NaN until estimated (streaming) */
  double                  *dist;      /* per mask pixel: distance from the source, arcsec */
  float                   *thr_clip, *thr_det;
  double                  *sum_all, *n_all, *cnt;
  /* opacity from the isotopologue */
  const EffluxDossierCube *ic;
  EffluxCube              *icube;
  EffluxLobeMask          *imask;
  double                  *irms;
  double                  *isum;      /* per isotopologue channel: sum of finite values under imask */
  guint64                 *in;        /* ... and their count */
  double                   ieff;      /* the isotopologue's beam efficiency */
  /* kept for update_lobe */
  double                  *raw, *raw_c;   /* per channel: sum of T (cube scale) over entering
                                           * voxels and its compensation (Neumaier) */
  double                  *all_c;     /* compensation of sum_all (clip only) */
  double                  *isum_c;    /* compensation of isum */
  double                  *ndet;      /* per channel: detected voxels */
  double                   src_ra, src_dec, clip_value, rms_k, eff;  /* what the sums depend on */
  OrderEntry              *order;     /* the mask's pixels by decreasing distance (NULL until needed) */
  guint8                  *inmask;    /* per map pixel: 1 inside the mask (with order) */
} LobeWork;

static void
lobe_work_free (LobeWork *w)
{
  if (w == NULL)
    return;
  g_free (w->rms);
  g_free (w->dist);
  g_free (w->thr_clip);
  g_free (w->thr_det);
  g_free (w->sum_all);
  g_free (w->n_all);
  g_free (w->cnt);
  efflux_lobe_mask_free (w->imask);
  g_free (w->irms);
  g_free (w->isum);
  g_free (w->in);
  g_free (w->raw);
  g_free (w->raw_c);
  g_free (w->all_c);
  g_free (w->isum_c);
  g_free (w->ndet);
  g_free (w->order);
  g_free (w->inmask);
  g_free (w);
}

G_DEFINE_AUTOPTR_CLEANUP_FUNC (LobeWork, lobe_work_free)

/* Per-channel rms in the cube's scale without touching the voxels: the dossier's rms-k, else the
 * cube's own estimate; NaN where neither is known yet (a streamed cube estimates it plane by plane). */
static double *
cube_rms_known (const EffluxDossierCube *dc,
                const EffluxCube        *cube)
{
  double *rms = g_new (double, cube->nchan);

  for (gsize k = 0; k < cube->nchan; k++)
    rms[k] = isfinite (dc->rms_k) ? dc->rms_k : NAN;
  return rms;
}

static void
lobe_work_set_rms (LobeWork *w,
                   gsize     k,
                   double    rms)
{
  w->rms[k] = rms;
  w->thr_clip[k] = (float) (w->clip_sigma * rms);
  w->thr_det[k] = (float) (w->det_sigma * rms);
}

/* Line, mask, distances and thresholds; for opacity from the isotopologue, its mask too. */
static LobeWork *
prepare_lobe_begin (const EffluxDossier      *d,
                    const EffluxDossierLobe  *dl,
                    GHashTable               *cubes,
                    GHashTable               *lines,
                    GPtrArray                *notes,
                    PrepLobe                 *pl,
                    GError                  **error)
{
  const EffluxDossierCube *dc = efflux_dossier_find_cube (d, dl->cube_id);
  g_autofree char *what = g_strdup_printf ("%s: [Lobe %s] polygon", d->path, dl->name);
  g_autoptr (LobeWork) w = g_new0 (LobeWork, 1);
  EffluxCube *cube;
  gsize nchan;

  w->pl = pl;
  w->dc = dc;
  cube = g_hash_table_lookup (cubes, dl->cube_id);
  if (cube == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Lobe %s] cube: cube '%s' is not loaded",
                   d->path, dl->name, dl->cube_id);
      return NULL;
    }
  w->cube = cube;
  pl->name = g_strdup (dl->name);
  pl->cube_id = g_strdup (dl->cube_id);
  pl->cube = cube;
  pl->eff = dc->beam_efficiency;
  pl->line = g_hash_table_lookup (lines, dc->id);
  if (pl->line == NULL)
    {
      pl->line = cube_line (d, dc, cube, notes, error);
      if (pl->line == NULL)
        return NULL;
      g_hash_table_insert (lines, g_strdup (dc->id), (gpointer) pl->line);
    }
  pl->mask = efflux_lobe_mask_new (cube, dl->ra_deg, dl->dec_deg, dl->n_vertices, what, error);
  if (pl->mask == NULL)
    return NULL;
  if (pl->mask->n_pixels == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: holds no pixel centre of the map of [Cube %s]", what, dc->id);
      return NULL;
    }

  nchan = pl->nchan = cube->nchan;
  w->clip = d->clip_sigma > 0;
  w->clip_sigma = d->clip_sigma;
  w->det_sigma = d->clip_sigma > 0 ? d->clip_sigma : 3.0;
  pl->sum = g_new0 (double, nchan);
  pl->var = g_new0 (double, nchan);
  pl->nvox = g_new0 (guint64, nchan);
  pl->rdet = g_new (double, nchan);
  w->sum_all = g_new0 (double, nchan);
  w->n_all = g_new0 (double, nchan);
  w->cnt = g_new0 (double, nchan);
  w->ndet = g_new0 (double, nchan);
  w->src_ra = d->ra_deg;
  w->src_dec = d->dec_deg;
  w->clip_value = d->clip_sigma;
  w->rms_k = dc->rms_k;
  w->eff = dc->beam_efficiency;
  w->thr_clip = g_new (float, nchan);
  w->thr_det = g_new (float, nchan);
  w->rms = cube->data != NULL ? cube_rms (dc, cube) : cube_rms_known (dc, cube);
  for (gsize k = 0; k < nchan; k++)
    {
      pl->rdet[k] = -1;
      lobe_work_set_rms (w, k, w->rms[k]);
    }

  w->dist = g_new (double, pl->mask->n_pixels);
  for (gsize p = 0; p < pl->mask->n_pixels; p++)
    {
      gsize x = pl->mask->index[p] % cube->nx, y = pl->mask->index[p] / cube->nx;
      double ra, dec;

      if (!efflux_cube_pixel_to_icrs (cube, (double) x, (double) y, &ra, &dec))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: pixel (%" G_GSIZE_FORMAT ", %" G_GSIZE_FORMAT ") of [Cube %s] has no sky position",
                       what, x, y, dc->id);
          return NULL;
        }
      w->dist[p] = separation_arcsec (d->ra_deg, d->dec_deg, ra, dec);
    }

  /* Opacity from the isotopologue: only for lobes on 12CO. */
  if (d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE && pl->line->species == EFFLUX_SPECIES_12CO)
    {
      const EffluxDossierCube *ic = efflux_dossier_isotopologue_cube (d);
      EffluxCube *icube = g_hash_table_lookup (cubes, ic->id);
      const EffluxLine *iline;
      g_autofree char *iwhat = g_strdup_printf ("%s: [Lobe %s] polygon (on [Cube %s])", d->path, dl->name, ic->id);

      if (icube == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Cube %s]: the isotopologue cube is not loaded",
                       d->path, ic->id);
          return NULL;
        }
      iline = g_hash_table_lookup (lines, ic->id);
      if (iline == NULL)
        {
          iline = cube_line (d, ic, icube, notes, error);
          if (iline == NULL)
            return NULL;
          g_hash_table_insert (lines, g_strdup (ic->id), (gpointer) iline);
        }
      if (iline->species != EFFLUX_SPECIES_13CO && iline->species != EFFLUX_SPECIES_C18O)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [Cube %s] line: the isotopologue must be 13CO or C18O for opacity=from-isotopologue, got '%s'",
                       d->path, ic->id, iline->name);
          return NULL;
        }
      pl->iso_ratio_kind = iline->species == EFFLUX_SPECIES_C18O ? 1 : 0;
      w->imask = efflux_lobe_mask_new (icube, dl->ra_deg, dl->dec_deg, dl->n_vertices, iwhat, error);
      if (w->imask == NULL)
        return NULL;
      if (w->imask->n_pixels == 0)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: holds no pixel centre of the map", iwhat);
          return NULL;
        }
      w->ic = ic;
      w->ieff = ic->beam_efficiency;
      w->icube = icube;
      w->irms = icube->data != NULL ? cube_rms (ic, icube) : cube_rms_known (ic, icube);
      w->isum = g_new0 (double, icube->nchan);
      w->in = g_new0 (guint64, icube->nchan);
    }
  return g_steal_pointer (&w);
}

/* The one pass over the voxels under the mask, for a cube in memory. */
static gboolean
prepare_lobe_pass (LobeWork      *w,
                   GCancellable  *cancellable,
                   GError       **error)
{
  PrepLobe *pl = w->pl;
  gsize nchan = pl->nchan;

  for (gsize p = 0; p < pl->mask->n_pixels; p++)
    {
      const float *s = w->cube->data + (gsize) pl->mask->index[p] * nchan;

      if ((p & 1023) == 0 && g_cancellable_set_error_if_cancelled (cancellable, error))
        return FALSE;
      if (w->clip)
        accumulate_clipped (s, nchan, w->dist[p], w->thr_clip, w->thr_det, w->sum_all, w->n_all, pl->sum,
                            w->cnt, w->ndet, pl->rdet);
      else
        accumulate (s, nchan, w->dist[p], w->thr_det, pl->sum, w->cnt, w->ndet, pl->rdet);
    }
  if (w->imask != NULL)
    {
      gsize inchan = w->icube->nchan;

      for (gsize p = 0; p < w->imask->n_pixels; p++)
        {
          const float *s = w->icube->data + (gsize) w->imask->index[p] * inchan;

          for (gsize k = 0; k < inchan; k++)
            if (isfinite (s[k]))
              {
                w->isum[k] += s[k];
                w->in[k]++;
              }
        }
    }
  return TRUE;
}

/* From the pass's sums to the lobe's per-channel sums and the opacity inputs. The first call
 * takes the raw sums of the pass (pl->sum, in the cube's scale) into w->raw; every call derives
 * pl->sum, var, nvox and the opacity inputs from the raw sums again (after update_lobe too). */
static void
prepare_lobe_end (LobeWork *w)
{
  PrepLobe *pl = w->pl;
  gsize nchan = pl->nchan;
  double eff = pl->eff;

  if (w->raw == NULL)
    {
      w->raw = pl->sum;
      pl->sum = g_new (double, nchan);
      w->raw_c = g_new0 (double, nchan);
      w->all_c = g_new0 (double, nchan);
      if (w->isum != NULL)
        w->isum_c = g_new0 (double, w->icube->nchan);
    }
  for (gsize k = 0; k < nchan; k++)
    {
      pl->nvox[k] = (guint64) w->cnt[k];
      if (!w->clip)
        {
          w->sum_all[k] = w->raw[k] + w->raw_c[k];
          w->n_all[k] = w->cnt[k];
        }
    }
  for (gsize k = 0; k < nchan; k++)
    {
      double rms = isfinite (w->rms[k]) ? w->rms[k] : 0.0;

      pl->sum[k] = (w->raw[k] + w->raw_c[k]) / eff;
      pl->var[k] = (double) pl->nvox[k] * (rms / eff) * (rms / eff);
    }
  if (w->imask != NULL)
    {
      gsize inchan = w->icube->nchan;
      double ieff = w->ieff;
      g_autofree double *imean = g_new (double, inchan);
      g_autofree double *isig = g_new (double, inchan);

      /* mean brightness over the mask per channel (T / eff) and the noise of that mean */
      for (gsize k = 0; k < inchan; k++)
        {
          double irms = isfinite (w->irms[k]) ? w->irms[k] : 0.0;

          imean[k] = w->in[k] ? (w->isum[k] + w->isum_c[k]) / (double) w->in[k] / ieff : NAN;
          isig[k] = w->in[k] ? irms / ieff / sqrt ((double) w->in[k]) : NAN;
        }
      if (pl->s12 == NULL)
        {
          pl->s12 = g_new (double, nchan);
          pl->sig12 = g_new (double, nchan);
          pl->s13 = g_new (double, nchan);
          pl->sig13 = g_new (double, nchan);
        }
      for (gsize k = 0; k < nchan; k++)
        {
          double rms = isfinite (w->rms[k]) ? w->rms[k] : 0.0;
          double sa = w->sum_all[k] + (w->clip ? w->all_c[k] : 0.0);

          pl->s12[k] = w->n_all[k] > 0 ? sa / w->n_all[k] / eff : NAN;
          pl->sig12[k] = w->n_all[k] > 0 ? rms / eff / sqrt (w->n_all[k]) : NAN;
          pl->s13[k] = interpolate (w->icube->velocity, imean, inchan, w->cube->velocity[k]);
          pl->sig13[k] = interpolate (w->icube->velocity, isig, inchan, w->cube->velocity[k]);
        }
    }
}

static void build_order (LobeWork *w);

static gboolean
prepare_lobe (const EffluxDossier      *d,
              const EffluxDossierLobe  *dl,
              GHashTable               *cubes,
              GHashTable               *lines,
              GPtrArray                *notes,
              PrepLobe                 *pl,
              GCancellable             *cancellable,
              GError                  **error)
{
  g_autoptr (LobeWork) w = prepare_lobe_begin (d, dl, cubes, lines, notes, pl, error);

  if (w == NULL)
    return FALSE;
  if (w->cube->data == NULL || (w->icube != NULL && w->icube->data == NULL))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Lobe %s] cube: the cube is not in memory",
                   d->path, dl->name);
      return FALSE;
    }
  if (!prepare_lobe_pass (w, cancellable, error))
    return FALSE;
  prepare_lobe_end (w);
  /* kept for outline changes (the order now, so that the first change of a drag is not slower);
   * the dossier's cube records are not */
  build_order (w);
  w->dc = NULL;
  w->ic = NULL;
  pl->work = g_steal_pointer (&w);
  return TRUE;
}

EffluxMeasurePrep *
efflux_measure_prepare (const EffluxDossier  *d,
                        GHashTable           *cubes,
                        GCancellable         *cancellable,
                        GError              **error)
{
  g_autoptr (EffluxMeasurePrep) prep = g_new0 (EffluxMeasurePrep, 1);

  prep->lobes = g_ptr_array_new_with_free_func (prep_lobe_free);
  prep->notes = g_ptr_array_new_with_free_func (g_free);
  prep->cubes = g_hash_table_ref (cubes);
  prep->lines = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, NULL);
  if (d->lobes->len == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Lobe ...]: the dossier has no lobe to measure",
                   d->path);
      return NULL;
    }
  for (guint i = 0; i < d->lobes->len; i++)
    {
      PrepLobe *pl = g_new0 (PrepLobe, 1);

      g_ptr_array_add (prep->lobes, pl);
      if (!prepare_lobe (d, g_ptr_array_index (d->lobes, i), prep->cubes, prep->lines, prep->notes, pl,
                         cancellable, error))
        return NULL;
    }
  return g_steal_pointer (&prep);
}

static PrepLobe *
find_prepared (const EffluxMeasurePrep *prep,
               const char              *name,
               guint                   *index)
{
  for (guint i = 0; i < prep->lobes->len; i++)
    {
      PrepLobe *pl = g_ptr_array_index (prep->lobes, i);

      if (strcmp (pl->name, name) == 0)
        {
          if (index)
            *index = i;
          return pl;
        }
    }
  return NULL;
}

/* ---------------------------------------------------------------------------------------------- */
/* outline changes by difference                                                                    */

/* Neumaier's compensated sum (Neumaier 1974, ZAMM 54, 39): *s + *c is the sum. */
static inline void
ksum (double *s,
      double *c,
      double  x)
{
  double t = *s + x;

  if (fabs (*s) >= fabs (x))
    *c += (*s - t) + x;
  else
    *c += (x - t) + *s;
  *s = t;
}

static int
order_compare (const void *a,
               const void *b)
{
  const OrderEntry *x = a, *y = b;

  if (x->dist != y->dist)
    return x->dist > y->dist ? -1 : 1;
  return x->pix < y->pix ? -1 : x->pix > y->pix;
}

/* Whether voxel value t of channel k enters the sums and whether it is detected: exactly the
 * tests of accumulate and accumulate_clipped. */
static inline void
voxel_state (const LobeWork *w,
             gsize           k,
             float           t,
             gboolean       *fin,
             gboolean       *in,
             gboolean       *det)
{
  *fin = fabsf (t) <= FLT_MAX;
  if (w->clip)
    {
      *in = *fin && t >= w->thr_clip[k];
      *det = *in && t > 0 && t >= w->thr_det[k];
    }
  else
    {
      *in = *fin;
      *det = t > 0 && t >= w->thr_det[k];
    }
}

/* Add (sign +1) or subtract (-1) one pixel's spectrum. A channel whose farthest detected pixel
 * may have left is marked in dirty. */
static void
apply_pixel (LobeWork *w,
             guint32   pix,
             double    dist,
             double    sign,
             guint8   *dirty)
{
  PrepLobe *pl = w->pl;
  gsize nchan = pl->nchan;
  const float *s = w->cube->data + (gsize) pix * nchan;

  for (gsize k = 0; k < nchan; k++)
    {
      float t = s[k];
      gboolean fin, in, det;

      voxel_state (w, k, t, &fin, &in, &det);
      if (in)
        {
          ksum (&w->raw[k], &w->raw_c[k], sign * (double) t);
          w->cnt[k] += sign;
        }
      if (w->clip && fin)
        {
          ksum (&w->sum_all[k], &w->all_c[k], sign * (double) t);
          w->n_all[k] += sign;
        }
      if (det)
        {
          w->ndet[k] += sign;
          if (sign > 0)
            {
              if (dist > pl->rdet[k])
                pl->rdet[k] = dist;
            }
          else if (dist >= pl->rdet[k])
            dirty[k] = 1;
        }
    }
}

static void
apply_ipixel (LobeWork *w,
              guint32   pix,
              double    sign)
{
  gsize inchan = w->icube->nchan;
  const float *s = w->icube->data + (gsize) pix * inchan;

  for (gsize k = 0; k < inchan; k++)
    if (isfinite (s[k]))
      {
        ksum (&w->isum[k], &w->isum_c[k], sign * (double) s[k]);
        if (sign > 0)
          w->in[k]++;
        else
          w->in[k]--;
      }
}

/* The pixels of new_mask not in old (added) and of old not in new_mask (removed); both index
 * lists are increasing. kept_dist (optional): for each pixel of new_mask, its distance taken
 * from old_dist when it was in old. */
static void
mask_difference (const EffluxLobeMask *old,
                 const double         *old_dist,
                 const EffluxLobeMask *new_mask,
                 double               *kept_dist,
                 GArray               *added,      /* guint32: positions in new_mask */
                 GArray               *removed)    /* guint32: positions in old */
{
  gsize i = 0, j = 0;

  while (i < old->n_pixels || j < new_mask->n_pixels)
    {
      if (j == new_mask->n_pixels || (i < old->n_pixels && old->index[i] < new_mask->index[j]))
        {
          guint32 pos = (guint32) i++;

          g_array_append_val (removed, pos);
        }
      else if (i == old->n_pixels || new_mask->index[j] < old->index[i])
        {
          guint32 pos = (guint32) j++;

          g_array_append_val (added, pos);
        }
      else
        {
          if (kept_dist != NULL)
            kept_dist[j] = old_dist[i];
          i++;
          j++;
        }
    }
}

/* The mask's pixels by decreasing distance and the map of what is inside. */
static void
build_order (LobeWork *w)
{
  const EffluxLobeMask *m = w->pl->mask;

  w->order = g_new (OrderEntry, m->n_pixels);
  w->inmask = g_new0 (guint8, m->nx * m->ny);
  for (gsize p = 0; p < m->n_pixels; p++)
    {
      w->order[p].dist = w->dist[p];
      w->order[p].pix = m->index[p];
      w->inmask[m->index[p]] = 1;
    }
  qsort (w->order, m->n_pixels, sizeof (OrderEntry), order_compare);
}

/* Change a prepared lobe's outline by difference: subtract the spectra of the pixels that left
 * the mask, add those of the pixels that entered, and find the farthest detected pixel again in
 * the channels where it may have left (scanning the pixels by decreasing distance). Returns 1
 * when done, 0 on error (nothing changed), -1 when the lobe must be prepared again (another
 * cube, source, clip, efficiency or rms, opacity inputs, a streamed lobe, or a change larger
 * than the new mask, where a fresh pass costs less). */
static int
update_lobe (EffluxMeasurePrep        *prep,
             PrepLobe                 *pl,
             const EffluxDossier      *d,
             const EffluxDossierLobe  *dl,
             GError                  **error)
{
  LobeWork *w = pl->work;
  const EffluxDossierCube *dc = efflux_dossier_find_cube (d, dl->cube_id);
  const EffluxDossierCube *ic = NULL;
  gboolean want_iso;
  g_autofree char *what = NULL;
  g_autoptr (EffluxLobeMask) mask = NULL;
  g_autoptr (EffluxLobeMask) imask = NULL;
  g_autoptr (GArray) added = NULL;
  g_autoptr (GArray) removed = NULL;
  g_autofree double *dist = NULL;
  g_autofree guint8 *dirty = NULL;
  g_autofree OrderEntry *fresh = NULL;
  g_autofree guint32 *pending = NULL;
  gsize nchan = pl->nchan, n_pending = 0;

  if (w == NULL || dc == NULL || strcmp (pl->cube_id, dl->cube_id) != 0
      || g_hash_table_lookup (prep->cubes, dl->cube_id) != w->cube || w->cube->data == NULL
      || w->src_ra != d->ra_deg || w->src_dec != d->dec_deg || w->clip_value != d->clip_sigma
      || w->eff != dc->beam_efficiency
      || !(w->rms_k == dc->rms_k || (isnan (w->rms_k) && isnan (dc->rms_k))))
    return -1;
  want_iso = d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE && pl->line->species == EFFLUX_SPECIES_12CO;
  if (want_iso != (w->imask != NULL))
    return -1;
  if (want_iso)
    {
      ic = efflux_dossier_isotopologue_cube (d);
      if (ic == NULL || g_hash_table_lookup (prep->cubes, ic->id) != w->icube || w->icube->data == NULL
          || ic->beam_efficiency != w->ieff)
        return -1;
    }

  what = g_strdup_printf ("%s: [Lobe %s] polygon", d->path, dl->name);
  mask = efflux_lobe_mask_new (w->cube, dl->ra_deg, dl->dec_deg, dl->n_vertices, what, error);
  if (mask == NULL)
    return 0;
  if (mask->n_pixels == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: holds no pixel centre of the map of [Cube %s]", what, dc->id);
      return 0;
    }
  if (want_iso)
    {
      g_autofree char *iwhat = g_strdup_printf ("%s: [Lobe %s] polygon (on [Cube %s])", d->path, dl->name, ic->id);

      imask = efflux_lobe_mask_new (w->icube, dl->ra_deg, dl->dec_deg, dl->n_vertices, iwhat, error);
      if (imask == NULL)
        return 0;
      if (imask->n_pixels == 0)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: holds no pixel centre of the map", iwhat);
          return 0;
        }
    }

  added = g_array_new (FALSE, FALSE, sizeof (guint32));
  removed = g_array_new (FALSE, FALSE, sizeof (guint32));
  dist = g_new (double, mask->n_pixels);
  mask_difference (pl->mask, w->dist, mask, dist, added, removed);
  if (added->len + removed->len >= mask->n_pixels)
    return -1;
  for (guint a = 0; a < added->len; a++)
    {
      guint32 pos = g_array_index (added, guint32, a);
      gsize x = mask->index[pos] % w->cube->nx, y = mask->index[pos] / w->cube->nx;
      double ra, dec;

      if (!efflux_cube_pixel_to_icrs (w->cube, (double) x, (double) y, &ra, &dec))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: pixel (%" G_GSIZE_FORMAT ", %" G_GSIZE_FORMAT ") of [Cube %s] has no sky position",
                       what, x, y, dc->id);
          return 0;
        }
      dist[pos] = separation_arcsec (d->ra_deg, d->dec_deg, ra, dec);
    }

  /* from here on nothing fails */
  if (w->order == NULL)
    build_order (w);
  dirty = g_new0 (guint8, nchan);
  for (guint r = 0; r < removed->len; r++)
    {
      guint32 pos = g_array_index (removed, guint32, r);

      apply_pixel (w, pl->mask->index[pos], w->dist[pos], -1.0, dirty);
      w->inmask[pl->mask->index[pos]] = 0;
    }
  fresh = g_new (OrderEntry, added->len + 1);
  for (guint a = 0; a < added->len; a++)
    {
      guint32 pos = g_array_index (added, guint32, a);

      apply_pixel (w, mask->index[pos], dist[pos], +1.0, dirty);
      w->inmask[mask->index[pos]] = 1;
      fresh[a].dist = dist[pos];
      fresh[a].pix = mask->index[pos];
    }

  /* the order: the old one without the pixels that left, merged with the new ones */
  qsort (fresh, added->len, sizeof (OrderEntry), order_compare);
  {
    OrderEntry *order = g_new (OrderEntry, mask->n_pixels);
    gsize i = 0, j = 0, n = 0;

    while (i < pl->mask->n_pixels || j < added->len)
      {
        if (i < pl->mask->n_pixels && !w->inmask[w->order[i].pix])
          i++;
        else if (i < pl->mask->n_pixels && (j == added->len || order_compare (&w->order[i], &fresh[j]) < 0))
          order[n++] = w->order[i++];
        else
          order[n++] = fresh[j++];
      }
    g_assert (n == mask->n_pixels);
    g_free (w->order);
    w->order = order;
  }

  /* the farthest detected pixel again where it may have left */
  pending = g_new (guint32, nchan);
  for (gsize k = 0; k < nchan; k++)
    if (dirty[k])
      {
        if (w->ndet[k] > 0)
          pending[n_pending++] = (guint32) k;
        else
          pl->rdet[k] = -1;
      }
  for (gsize p = 0; p < mask->n_pixels && n_pending > 0; p++)
    {
      const float *s = w->cube->data + (gsize) w->order[p].pix * nchan;

      for (gsize j = 0; j < n_pending;)
        {
          gsize k = pending[j];
          gboolean fin, in, det;

          voxel_state (w, k, s[k], &fin, &in, &det);
          if (det)
            {
              pl->rdet[k] = w->order[p].dist;
              pending[j] = pending[--n_pending];
            }
          else
            j++;
        }
    }
  g_assert (n_pending == 0);

  if (imask != NULL)
    {
      g_autoptr (GArray) iadded = g_array_new (FALSE, FALSE, sizeof (guint32));
      g_autoptr (GArray) iremoved = g_array_new (FALSE, FALSE, sizeof (guint32));

      mask_difference (w->imask, NULL, imask, NULL, iadded, iremoved);
      for (guint r = 0; r < iremoved->len; r++)
        apply_ipixel (w, w->imask->index[g_array_index (iremoved, guint32, r)], -1.0);
      for (guint a = 0; a < iadded->len; a++)
        apply_ipixel (w, imask->index[g_array_index (iadded, guint32, a)], +1.0);
      efflux_lobe_mask_free (w->imask);
      w->imask = g_steal_pointer (&imask);
    }

  efflux_lobe_mask_free (pl->mask);
  pl->mask = g_steal_pointer (&mask);
  g_free (w->dist);
  w->dist = g_steal_pointer (&dist);
  prepare_lobe_end (w);
  prep->n_incremental++;
  return 1;
}

guint
efflux_measure_prep_n_incremental (const EffluxMeasurePrep *prep)
{
  return prep->n_incremental;
}

gboolean
efflux_measure_prep_refresh_lobe (EffluxMeasurePrep    *prep,
                                  const EffluxDossier  *d,
                                  const char           *lobe,
                                  GCancellable         *cancellable,
                                  GError              **error)
{
  const EffluxDossierLobe *dl = efflux_dossier_find_lobe (d, lobe);
  PrepLobe *pl;
  guint index;

  if (dl == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Lobe %s]: no such lobe", d->path, lobe);
      return FALSE;
    }
  pl = find_prepared (prep, lobe, NULL);
  if (pl != NULL)
    {
      int done = update_lobe (prep, pl, d, dl, error);

      if (done >= 0)
        return done == 1;
    }
  pl = g_new0 (PrepLobe, 1);
  if (!prepare_lobe (d, dl, prep->cubes, prep->lines, prep->notes, pl, cancellable, error))
    {
      prep_lobe_free (pl);
      return FALSE;
    }
  if (find_prepared (prep, lobe, &index) != NULL)
    {
      prep_lobe_free (g_ptr_array_index (prep->lobes, index));
      g_ptr_array_index (prep->lobes, index) = pl;
    }
  else
    g_ptr_array_add (prep->lobes, pl);
  return TRUE;
}

/* ---------------------------------------------------------------------------------------------- */
/* finishing                                                                                        */

typedef struct
{
  double d_pc;
  double tex_k;
  double co_abundance;
  double isotope_ratio;
  gboolean has_inclination;
  double incl_rad;
} Draw;

/* Msun per (K km/s) per pixel for a lobe's line under a draw. */
static double
mass_per_kkms_pixel (const EffluxDossier *d,
                     const PrepLobe      *pl,
                     const Draw          *w)
{
  double ncol = efflux_lte_column_per_kkms (pl->line, w->tex_k, d->tbg_k);
  double xab;
  double area_cm2 = (w->d_pc * EFFLUX_PC * pl->cube->pixel_arcsec[0] * EFFLUX_ARCSEC) *
                    (w->d_pc * EFFLUX_PC * pl->cube->pixel_arcsec[1] * EFFLUX_ARCSEC);

  switch (pl->line->species)
    {
    case EFFLUX_SPECIES_13CO: xab = w->co_abundance / w->isotope_ratio; break;
    case EFFLUX_SPECIES_C18O: xab = w->co_abundance / d->o18_ratio; break;
    case EFFLUX_SPECIES_SIO: xab = d->sio_abundance; break;
    case EFFLUX_SPECIES_12CO:
    default: xab = w->co_abundance; break;
    }
  return ncol / xab * d->mass_per_h2 * EFFLUX_M_H * area_cm2 / EFFLUX_MSUN;
}

/* Per-lobe state in finish. */
typedef struct
{
  PrepLobe        *pl;
  const EffluxDossierLobe *dl;
  gsize            kb, ke;          /* channel range */
  double           dvabs;
  double           vmax_obs;        /* km/s, NaN when nothing detected */
  double           rmax_arcsec;     /* NaN when nothing detected */
  guint64          voxels;
  double          *ctau;            /* ke - kb */
  EffluxRatioFit  *ratio_fit;       /* from-isotopologue, or NULL */
  double           unit[3];         /* sum T |dv| ctau, x |u|, x u^2 / 2 over the range (per m0) */
} FinLobe;

static void
ctau_for_ratio (const FinLobe *fl,
                double         x,
                double        *ctau)
{
  for (gsize j = 0; j < fl->ke - fl->kb; j++)
    {
      double r = fl->ratio_fit->ratio_fit[j];
      double tau;

      if (!isfinite (r) || r >= x)
        {
          ctau[j] = 1.0;
          continue;
        }
      tau = efflux_tau_from_ratio (r, x);
      ctau[j] = tau > 0 ? efflux_opacity_correction (tau) : 1.0;
    }
}

/* The nine numbers of a lobe under a draw; values[EFFLUX_MQ_*]. */
static void
lobe_numbers (const EffluxDossier *d,
              const FinLobe       *fl,
              const Draw          *w,
              const double        *ctau,
              double               values[EFFLUX_MQ_N],
              double              *vmax_kms,
              double              *rmax_au)
{
  const PrepLobe *pl = fl->pl;
  double m0 = mass_per_kkms_pixel (d, pl, w);
  double m = 0, p = 0, e = 0;
  EffluxInclinationFactors f = { 1, 1, 1, 1, 1, 1, 1, 1 };
  double vmax, rmax, tdyn_s;

  if (ctau == fl->ctau)
    {
      /* the lobe's own opacity curve: the channel sums are cached, O(1) per sample */
      m = m0 * fl->unit[0];
      p = m0 * fl->unit[1];
      e = m0 * fl->unit[2];
    }
  else
    for (gsize k = fl->kb; k < fl->ke; k++)
      {
        double u = pl->cube->velocity[k] - d->vsys_kms;
        double mk = m0 * pl->sum[k] * fl->dvabs * ctau[k - fl->kb];

        m += mk;
        p += mk * fabs (u);
        e += 0.5 * mk * u * u;
      }
  if (w->has_inclination)
    efflux_inclination_factors (w->incl_rad, &f);
  vmax = fl->vmax_obs * f.vmax;
  rmax = fl->rmax_arcsec * w->d_pc * f.rmax;          /* 1 arcsec at d pc = d au */
  tdyn_s = rmax * EFFLUX_AU / (vmax * EFFLUX_KM);
  values[EFFLUX_MQ_MASS] = m;
  values[EFFLUX_MQ_MOMENTUM] = p * f.momentum;
  values[EFFLUX_MQ_ENERGY] = e * f.energy * EFFLUX_MSUN * EFFLUX_KM * EFFLUX_KM;
  values[EFFLUX_MQ_TDYN] = tdyn_s / EFFLUX_YR;
  values[EFFLUX_MQ_MDOT] = m / values[EFFLUX_MQ_TDYN];
  values[EFFLUX_MQ_FORCE] = values[EFFLUX_MQ_MOMENTUM] / values[EFFLUX_MQ_TDYN];
  values[EFFLUX_MQ_LMECH] = values[EFFLUX_MQ_ENERGY] / tdyn_s / EFFLUX_LSUN;
  if (vmax_kms)
    *vmax_kms = vmax;
  if (rmax_au)
    *rmax_au = rmax;
}

static void
row_free (gpointer p)
{
  EffluxMeasureRow *r = p;

  g_free (r->source);
  g_free (r->lobe);
  g_free (r);
}

static void
spectrum_free (gpointer p)
{
  EffluxMassSpectrum *s = p;

  g_free (s->source);
  g_free (s->lobe);
  g_free (s->v_lsr_kms);
  g_free (s->v_offset_kms);
  g_free (s->dmdv);
  g_free (s->dmdv_err);
  g_free (s->ctau);
  g_free (s);
}

void
efflux_measure_result_free (EffluxMeasureResult *r)
{
  if (r == NULL)
    return;
  g_clear_pointer (&r->rows, g_ptr_array_unref);
  g_clear_pointer (&r->spectra, g_ptr_array_unref);
  g_clear_pointer (&r->notes, g_ptr_array_unref);
  g_free (r);
}

static double
nominal_inclination_deg (const EffluxDossier *d)
{
  double lo, hi;

  switch (d->inclination_mode)
    {
    case EFFLUX_INCLINATION_FIXED:
      return d->inclination_deg;
    case EFFLUX_INCLINATION_RANGE:
      return 0.5 * (d->inclination_range_deg[0] + d->inclination_range_deg[1]);
    case EFFLUX_INCLINATION_RANDOM:
      lo = EFFLUX_INCLINATION_RANDOM_MIN_DEG * G_PI / 180.0;
      hi = EFFLUX_INCLINATION_RANDOM_MAX_DEG * G_PI / 180.0;
      return acos (0.5 * (cos (lo) + cos (hi))) * 180.0 / G_PI;
    case EFFLUX_INCLINATION_NONE:
    default:
      return NAN;
    }
}

static void
fill_row (EffluxMeasureRow *row,
          const double      v[EFFLUX_MQ_N])
{
  row->mass_msun = v[EFFLUX_MQ_MASS];
  row->momentum_msun_kms = v[EFFLUX_MQ_MOMENTUM];
  row->energy_erg = v[EFFLUX_MQ_ENERGY];
  row->tdyn_yr = v[EFFLUX_MQ_TDYN];
  row->mdot_msun_yr = v[EFFLUX_MQ_MDOT];
  row->force_msun_kms_yr = v[EFFLUX_MQ_FORCE];
  row->lmech_lsun = v[EFFLUX_MQ_LMECH];
}

static EffluxMeasureRow *
row_new (const EffluxDossier *d,
         const char          *lobe)
{
  EffluxMeasureRow *row = g_new0 (EffluxMeasureRow, 1);

  row->source = g_strdup (d->name);
  row->lobe = g_strdup (lobe);
  row->opacity = d->opacity;
  row->mv_gamma = row->mv_gamma_err = NAN;
  row->mv_break_kms = row->mv_gamma_low = row->mv_gamma_high = NAN;
  row->hidden_mass_msun = row->hidden_mass_err = NAN;
  for (int q = 0; q < EFFLUX_MQ_N; q++)
    row->pct[q][0] = row->pct[q][1] = row->pct[q][2] = NAN;
  return row;
}

/* Mass spectrum, noise errors and the mass-velocity fits of one lobe. */
static EffluxMassSpectrum *
lobe_spectrum (const EffluxDossier *d,
               const FinLobe       *fl,
               const Draw          *w,
               gboolean             broken_fit,
               EffluxMeasureRow    *row)
{
  const PrepLobe *pl = fl->pl;
  EffluxMassSpectrum *s = g_new0 (EffluxMassSpectrum, 1);
  double m0 = mass_per_kkms_pixel (d, pl, w);
  double vm = 0, vp = 0, ve = 0, inner = INFINITY;
  EffluxInclinationFactors f = { 1, 1, 1, 1, 1, 1, 1, 1 };
  EffluxPowerLawFit single;
  EffluxBrokenPowerLawFit broken;
  EffluxHiddenMass hidden;
  guint n = (guint) (fl->ke - fl->kb);

  s->source = g_strdup (d->name);
  s->lobe = g_strdup (pl->name);
  s->n = n;
  s->v_lsr_kms = g_new (double, n);
  s->v_offset_kms = g_new (double, n);
  s->dmdv = g_new (double, n);
  s->dmdv_err = g_new (double, n);
  s->ctau = g_memdup2 (fl->ctau, n * sizeof (double));
  for (gsize k = fl->kb; k < fl->ke; k++)
    {
      gsize j = k - fl->kb;
      double u = pl->cube->velocity[k] - d->vsys_kms;
      double wk = m0 * fl->dvabs * fl->ctau[j];   /* Msun per (K summed over pixels) */
      double vk = wk * wk * pl->var[k];

      s->v_lsr_kms[j] = pl->cube->velocity[k];
      s->v_offset_kms[j] = fabs (u);
      s->dmdv[j] = wk * pl->sum[k] / fl->dvabs;
      s->dmdv_err[j] = sqrt (vk) / fl->dvabs;
      vm += vk;
      vp += vk * u * u;
      ve += vk * 0.25 * u * u * u * u;
      inner = MIN (inner, fabs (u));
    }
  if (w->has_inclination)
    efflux_inclination_factors (w->incl_rad, &f);
  row->mass_err = sqrt (vm);
  row->momentum_err = sqrt (vp) * f.momentum;
  row->energy_err = sqrt (ve) * f.energy * EFFLUX_MSUN * EFFLUX_KM * EFFLUX_KM;
  row->mdot_err = row->mass_err / row->tdyn_yr;
  row->force_err = row->momentum_err / row->tdyn_yr;
  row->lmech_err = row->energy_err / (row->tdyn_yr * EFFLUX_YR) / EFFLUX_LSUN;

  {
    /* Fits over the significant channels only: dM/dv at least 3 times its noise (all positive
     * channels when the noise is zero, then with unit weights in log space). */
    g_autofree double *sig = g_new (double, n);
    gboolean have_err = TRUE;

    for (guint j = 0; j < n; j++)
      if (!(s->dmdv_err[j] > 0))
        have_err = FALSE;
    for (guint j = 0; j < n; j++)
      sig[j] = (!have_err || s->dmdv[j] >= 3.0 * s->dmdv_err[j]) ? s->dmdv[j] : NAN;
    if (efflux_mvfit_single (s->v_offset_kms, sig, have_err ? s->dmdv_err : NULL, n, &single))
      {
        row->mv_gamma = single.gamma;
        row->mv_gamma_err = single.gamma_err;
        if (inner - 0.5 * fl->dvabs > 0.5 * fl->dvabs &&
            efflux_mvfit_hidden_mass (&single, 0.5 * fl->dvabs, inner - 0.5 * fl->dvabs, &hidden))
          {
            row->hidden_mass_msun = hidden.mass_msun;
            row->hidden_mass_err = hidden.mass_err_msun;
          }
      }
    if (broken_fit && efflux_mvfit_broken (s->v_offset_kms, sig, have_err ? s->dmdv_err : NULL, n, &broken))
      {
        row->mv_break_kms = broken.vb_kms;
        row->mv_gamma_low = broken.gamma1;
        row->mv_gamma_high = broken.gamma2;
      }
  }
  return s;
}

static Draw
nominal_draw (const EffluxDossier *d)
{
  Draw w;

  w.d_pc = d->distance_pc;
  w.tex_k = d->tex_k;
  w.co_abundance = d->co_abundance;
  w.isotope_ratio = d->isotope_ratio;
  w.has_inclination = d->inclination_mode != EFFLUX_INCLINATION_NONE;
  w.incl_rad = w.has_inclination ? nominal_inclination_deg (d) * G_PI / 180.0 : 0;
  return w;
}

static Draw
random_draw (const EffluxDossier *d,
             EffluxRng           *rng)
{
  Draw w = nominal_draw (d);

  if (d->distance_err_pc > 0)
    {
      int tries = 0;

      do
        w.d_pc = efflux_rng_normal (rng, d->distance_pc, d->distance_err_pc);
      while (w.d_pc <= 0 && ++tries < 1000);
      if (w.d_pc <= 0)
        w.d_pc = d->distance_pc;
    }
  if (isfinite (d->tex_range_k[0]) && d->tex_range_k[1] > d->tex_range_k[0])
    w.tex_k = efflux_rng_uniform (rng, d->tex_range_k[0], d->tex_range_k[1]);
  if (isfinite (d->co_abundance_range[0]) && d->co_abundance_range[1] > d->co_abundance_range[0])
    w.co_abundance = efflux_rng_log_uniform (rng, d->co_abundance_range[0], d->co_abundance_range[1]);
  if (isfinite (d->isotope_ratio_range[0]) && d->isotope_ratio_range[1] > d->isotope_ratio_range[0])
    w.isotope_ratio = efflux_rng_uniform (rng, d->isotope_ratio_range[0], d->isotope_ratio_range[1]);
  if (d->inclination_mode == EFFLUX_INCLINATION_RANGE)
    w.incl_rad = efflux_rng_inclination_range (rng, d->inclination_range_deg[0] * G_PI / 180.0,
                                               d->inclination_range_deg[1] * G_PI / 180.0);
  else if (d->inclination_mode == EFFLUX_INCLINATION_RANDOM)
    w.incl_rad = efflux_rng_inclination_isotropic (rng, EFFLUX_INCLINATION_RANDOM_MIN_DEG * G_PI / 180.0,
                                                   EFFLUX_INCLINATION_RANDOM_MAX_DEG * G_PI / 180.0);
  return w;
}

static void
fin_lobe_clear (FinLobe *fl)
{
  g_free (fl->ctau);
  g_clear_pointer (&fl->ratio_fit, efflux_ratio_fit_free);
}

EffluxMeasureResult *
efflux_measure_finish (EffluxMeasurePrep    *prep,
                       const EffluxDossier  *d,
                       GError              **error)
{
  return efflux_measure_finish_flags (prep, d, EFFLUX_MEASURE_FINISH_ALL, error);
}

EffluxMeasureResult *
efflux_measure_finish_flags (EffluxMeasurePrep        *prep,
                             const EffluxDossier      *d,
                             EffluxMeasureFinishFlags  flags,
                             GError                  **error)
{
  g_autoptr (EffluxMeasureResult) res = g_new0 (EffluxMeasureResult, 1);
  guint nl = d->lobes->len;
  g_autofree FinLobe *fl = g_new0 (FinLobe, nl);
  EffluxMeasureRow *total;
  Draw w0 = nominal_draw (d);
  double tot_var[6] = { 0 };
  gboolean ok = FALSE;

  res->rows = g_ptr_array_new_with_free_func (row_free);
  res->spectra = g_ptr_array_new_with_free_func (spectrum_free);
  res->notes = g_ptr_array_new_with_free_func (g_free);
  for (guint i = 0; i < prep->notes->len; i++)
    g_ptr_array_add (res->notes, g_strdup (g_ptr_array_index (prep->notes, i)));

  /* channel ranges, detection and opacity per lobe */
  for (guint i = 0; i < nl; i++)
    {
      const EffluxDossierLobe *dl = g_ptr_array_index (d->lobes, i);
      PrepLobe *pl = find_prepared (prep, dl->name, NULL);
      FinLobe *f = &fl[i];
      gsize n;

      f->pl = pl;
      f->dl = dl;
      if (pl == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [Lobe %s]: not prepared (efflux_measure_prep_refresh_lobe)", d->path, dl->name);
          goto out;
        }
      if (!efflux_cube_channel_range (pl->cube, dl->v1_kms, dl->v2_kms, &f->kb, &f->ke))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [Lobe %s] velocity-kms: no channel of [Cube %s] has its centre in %g;%g",
                       d->path, pl->name, pl->cube_id, dl->v1_kms, dl->v2_kms);
          goto out;
        }
      n = f->ke - f->kb;
      f->dvabs = fabs (pl->cube->dv);
      f->vmax_obs = NAN;
      f->rmax_arcsec = NAN;
      for (gsize k = f->kb; k < f->ke; k++)
        {
          f->voxels += pl->nvox[k];
          if (pl->rdet[k] >= 0)
            {
              double u = fabs (pl->cube->velocity[k] - d->vsys_kms);

              f->vmax_obs = isnan (f->vmax_obs) ? u : MAX (f->vmax_obs, u);
              f->rmax_arcsec = isnan (f->rmax_arcsec) ? pl->rdet[k] : MAX (f->rmax_arcsec, pl->rdet[k]);
            }
        }
      if (isnan (f->vmax_obs))
        g_ptr_array_add (res->notes, g_strdup_printf ("%s: [Lobe %s]: no detected voxel: vmax, rmax and the rates are empty",
                                                      d->path, pl->name));
      f->ctau = g_new (double, n);
      for (gsize j = 0; j < n; j++)
        f->ctau[j] = 1.0;
      if (d->opacity == EFFLUX_OPACITY_FIXED)
        {
          double c = efflux_opacity_correction (d->tau);

          for (gsize j = 0; j < n; j++)
            f->ctau[j] = c;
        }
      else if (d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE)
        {
          if (pl->s12 == NULL)
            g_ptr_array_add (res->notes, g_strdup_printf ("%s: [Lobe %s]: measured on %s, not 12CO: no opacity correction from the isotopologue",
                                                          d->path, pl->name, pl->line->name));
          else
            {
              EffluxRatioParams params;
              double x = pl->iso_ratio_kind == 1 ? d->o18_ratio : d->isotope_ratio;

              params.isotope_ratio = x;
              params.vsys_kms = d->vsys_kms;
              params.threshold_sigma = 3.0;
              params.max_order = 2;
              f->ratio_fit = efflux_ratio_fit_new (pl->cube->velocity + f->kb, pl->s12 + f->kb, pl->s13 + f->kb,
                                                   pl->sig12 + f->kb, pl->sig13 + f->kb, (guint) n, &params, error);
              if (f->ratio_fit == NULL)
                {
                  g_prefix_error (error, "%s: [Lobe %s]: ", d->path, pl->name);
                  goto out;
                }
              for (gsize j = 0; j < n; j++)
                f->ctau[j] = f->ratio_fit->ctau[j];
              if (f->ratio_fit->message != NULL)
                g_ptr_array_add (res->notes, g_strdup_printf ("%s: [Lobe %s] opacity: %s", d->path, pl->name,
                                                              f->ratio_fit->message));
            }
        }
    }

  for (guint i = 0; i < nl; i++)
    for (gsize k = fl[i].kb; k < fl[i].ke; k++)
      {
        double u = fl[i].pl->cube->velocity[k] - d->vsys_kms;
        double mk = fl[i].pl->sum[k] * fl[i].dvabs * fl[i].ctau[k - fl[i].kb];

        fl[i].unit[0] += mk;
        fl[i].unit[1] += mk * fabs (u);
        fl[i].unit[2] += 0.5 * mk * u * u;
      }

  /* nominal rows */
  total = row_new (d, "total");
  total->is_total = TRUE;
  total->vmax_kms = total->rmax_au = total->tdyn_yr = NAN;
  for (guint i = 0; i < nl; i++)
    {
      EffluxMeasureRow *row = row_new (d, fl[i].pl->name);
      double v[EFFLUX_MQ_N];

      row->kind = fl[i].dl->kind;
      row->voxels = fl[i].voxels;
      lobe_numbers (d, &fl[i], &w0, fl[i].ctau, v, &row->vmax_kms, &row->rmax_au);
      fill_row (row, v);
      row->inclination_deg = w0.has_inclination ? w0.incl_rad * 180.0 / G_PI : NAN;
      row->pm_kms = row->momentum_msun_kms / row->mass_msun;
      row->age_pm_yr = row->rmax_au * EFFLUX_AU / (row->pm_kms * EFFLUX_KM) / EFFLUX_YR;
      g_ptr_array_add (res->spectra, lobe_spectrum (d, &fl[i], &w0, !(flags & EFFLUX_MEASURE_FINISH_NO_BROKEN_FIT),
                                                    row));
      g_ptr_array_add (res->rows, row);

      total->voxels += row->voxels;
      total->mass_msun += row->mass_msun;
      total->momentum_msun_kms += row->momentum_msun_kms;
      total->energy_erg += row->energy_erg;
      /* a lobe without a detected voxel has no tdyn and adds no rate (a note says so) */
      if (isfinite (row->tdyn_yr))
        {
          total->mdot_msun_yr += row->mdot_msun_yr;
          total->force_msun_kms_yr += row->force_msun_kms_yr;
          total->lmech_lsun += row->lmech_lsun;
          tot_var[3] += row->mdot_err * row->mdot_err;
          tot_var[4] += row->force_err * row->force_err;
          tot_var[5] += row->lmech_err * row->lmech_err;
        }
      if (isfinite (row->vmax_kms))
        total->vmax_kms = isnan (total->vmax_kms) ? row->vmax_kms : MAX (total->vmax_kms, row->vmax_kms);
      if (isfinite (row->rmax_au))
        total->rmax_au = isnan (total->rmax_au) ? row->rmax_au : MAX (total->rmax_au, row->rmax_au);
      if (isfinite (row->tdyn_yr))
        total->tdyn_yr = isnan (total->tdyn_yr) ? row->tdyn_yr : MAX (total->tdyn_yr, row->tdyn_yr);
      tot_var[0] += row->mass_err * row->mass_err;
      tot_var[1] += row->momentum_err * row->momentum_err;
      tot_var[2] += row->energy_err * row->energy_err;
    }
  total->inclination_deg = w0.has_inclination ? w0.incl_rad * 180.0 / G_PI : NAN;
  total->mass_err = sqrt (tot_var[0]);
  total->momentum_err = sqrt (tot_var[1]);
  total->energy_err = sqrt (tot_var[2]);
  total->mdot_err = sqrt (tot_var[3]);
  total->force_err = sqrt (tot_var[4]);
  total->lmech_err = sqrt (tot_var[5]);
  total->pm_kms = total->momentum_msun_kms / total->mass_msun;
  total->age_pm_yr = total->rmax_au * EFFLUX_AU / (total->pm_kms * EFFLUX_KM) / EFFLUX_YR;
  g_ptr_array_add (res->rows, total);

  /* Monte Carlo over the assumptions: O(channels) per lobe and sample */
  if (d->mc_samples > 0)
    {
      guint ns = d->mc_samples;
      guint nrows = nl + 1;
      g_autofree double *samples = g_try_malloc_n ((gsize) nrows * EFFLUX_MQ_N * ns, sizeof (double));
      g_autoptr (EffluxRng) rng = efflux_rng_new (d->mc_seed);
      gsize maxn = 0;
      g_autofree double *ctau = NULL;

      if (samples == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY,
                       "%s: [Assumptions] mc-samples: %u samples of %u rows do not fit in memory",
                       d->path, ns, nrows);
          goto out;
        }
      for (guint i = 0; i < nl; i++)
        maxn = MAX (maxn, fl[i].ke - fl[i].kb);
      ctau = g_new (double, maxn);
#define SAMPLE(row, q, s) samples[(((gsize) (row) * EFFLUX_MQ_N) + (q)) * ns + (s)]
      for (guint s = 0; s < ns; s++)
        {
          Draw w = random_draw (d, rng);
          double tot[EFFLUX_MQ_N] = { 0 };

          tot[EFFLUX_MQ_TDYN] = NAN;
          for (guint i = 0; i < nl; i++)
            {
              double v[EFFLUX_MQ_N];
              const double *ct = fl[i].ctau;

              if (fl[i].ratio_fit != NULL && fl[i].pl->iso_ratio_kind == 0 && w.isotope_ratio != d->isotope_ratio)
                {
                  ctau_for_ratio (&fl[i], w.isotope_ratio, ctau);
                  ct = ctau;
                }
              lobe_numbers (d, &fl[i], &w, ct, v, NULL, NULL);
              for (int q = 0; q < EFFLUX_MQ_N; q++)
                {
                  SAMPLE (i, q, s) = v[q];
                  if (q == EFFLUX_MQ_TDYN)
                    {
                      if (isfinite (v[q]))
                        tot[q] = isnan (tot[q]) ? v[q] : MAX (tot[q], v[q]);
                    }
                  else if (isfinite (v[q]))
                    tot[q] += v[q];
                }
            }
          for (int q = 0; q < EFFLUX_MQ_N; q++)
            SAMPLE (nl, q, s) = tot[q];
        }
      for (guint r = 0; r < nrows; r++)
        {
          EffluxMeasureRow *row = g_ptr_array_index (res->rows, r);

          for (int q = 0; q < EFFLUX_MQ_N; q++)
            {
              EffluxSpread sp;

              if (efflux_spread (&SAMPLE (r, q, 0), ns, &sp) > 0)
                {
                  row->pct[q][0] = sp.p16;
                  row->pct[q][1] = sp.p50;
                  row->pct[q][2] = sp.p84;
                }
            }
        }
#undef SAMPLE
      res->mc_samples = ns;
    }
  ok = TRUE;

out:
  for (guint i = 0; i < nl; i++)
    fin_lobe_clear (&fl[i]);
  if (!ok)
    return NULL;
  return g_steal_pointer (&res);
}

/* ---------------------------------------------------------------------------------------------- */

/* ---------------------------------------------------------------------------------------------- */
/* streaming: cubes larger than memory                                                              */

/* A cube whose voxels do not fit in memory is measured in one pass over its channel planes, read
 * from the file row block by row block; only the rows holding a mask are read, unless the noise
 * has to be estimated (no rms-k), which needs whole channel planes. Memory: the header, the
 * masks, per-channel sums and one row block (STREAM_BLOCK_BYTES), whatever the size of the cube.
 *
 * The header is read by efflux_cube_load itself (one reader, one interpretation of the cards): it
 * loads a copy of the HDU's header whose two sky axes are cut to one pixel (a few kilobytes of
 * data), and the map size is then set back. The sums are those of the pass in memory, channel by
 * channel over the same pixels in the same order, so the numbers are the same to the last bit. */

#define STREAM_MAX_AXES 8
#define STREAM_BLOCK_BYTES (64u * 1024u * 1024u)
#define STREAM_PLANE_BYTES (512u * 1024u * 1024u)
#define STREAM_NOISE_MAX_SAMPLES 65536     /* as efflux_cube_estimate_noise */

typedef struct
{
  EffluxCube  *loaded;     /* what efflux_cube_load made of the cut header (one sky pixel) */
  EffluxCube   hdr;        /* a shallow copy with the file's map size and no data: never freed */
  char        *path;
  int          hdu;        /* 1-based */
  int          naxis;
  long long    naxes[STREAM_MAX_AXES];
  int          ilng, ilat, ispec;   /* 0-based file axes */
} StreamCube;

static void
stream_cube_free (StreamCube *sc)
{
  if (sc == NULL)
    return;
  if (sc->loaded != NULL)
    {
      /* the copy borrowed everything but the map size and the data */
      efflux_cube_free (sc->loaded);
    }
  g_free (sc->path);
  g_free (sc);
}

G_DEFINE_AUTOPTR_CLEANUP_FUNC (StreamCube, stream_cube_free)

/* The memory the measurement may use: MemAvailable, or less when EFFLUX_MEASURE_MEMORY_MIB says
 * so (for shared nodes and for the tests); 0 when unknown. */
static guint64
measure_memory_budget (void)
{
  guint64 avail = efflux_memory_available ();
  const char *env = g_getenv ("EFFLUX_MEASURE_MEMORY_MIB");

  if (env != NULL && *env != '\0')
    {
      guint64 cap = g_ascii_strtoull (env, NULL, 10) * 1024u * 1024u;

      if (cap > 0 && (avail == 0 || cap < avail))
        avail = cap;
    }
  return avail;
}

static gboolean
ctype_is (const char *ctype,
          const char *what)
{
  /* RA--- / DEC-- / xLON / xLAT (GLON, ELON, SLON, HPLN ...) */
  if (g_str_equal (what, "lng"))
    return g_str_has_prefix (ctype, "RA") || (strlen (ctype) >= 4 && strncmp (ctype + 1, "LON", 3) == 0) ||
           g_str_has_prefix (ctype, "HPLN");
  return g_str_has_prefix (ctype, "DEC") || (strlen (ctype) >= 4 && strncmp (ctype + 1, "LAT", 3) == 0) ||
         g_str_has_prefix (ctype, "HPLT");
}

/* Look at the file without reading its data: is it a plain FITS image cube too large for memory?
 * FALSE (and no error) when it fits, or when it is anything else: efflux_cube_load then says what
 * is wrong with it. */
static gboolean
stream_probe (const char  *path,
              guint64      budget,
              StreamCube  *sc,
              GError     **error)
{
  fitsfile *f = NULL;
  int status = 0, nhdu = 0, hdutype = 0, bitpix = 0;
  gboolean wanted = FALSE;
  guint64 voxels = 1;

  if (budget == 0 || fits_open_diskfile (&f, path, READONLY, &status) != 0)
    {
      fits_clear_errmsg ();
      return FALSE;
    }
  fits_get_num_hdus (f, &nhdu, &status);
  for (int h = 1; h <= nhdu && status == 0; h++)
    {
      int nax = 0;

      if (fits_movabs_hdu (f, h, &hdutype, &status) != 0 || hdutype != IMAGE_HDU)
        continue;
      fits_get_img_dim (f, &nax, &status);
      if (status == 0 && nax >= 3 && nax <= STREAM_MAX_AXES)
        {
          LONGLONG naxes[STREAM_MAX_AXES] = { 0 };
          int compressed;

          sc->hdu = h;
          sc->naxis = nax;
          fits_get_img_type (f, &bitpix, &status);
          fits_get_img_sizell (f, nax, naxes, &status);
          compressed = fits_is_compressed_image (f, &status);
          if (status != 0 || compressed)
            break;
          sc->ilng = sc->ilat = sc->ispec = -1;
          for (int i = 0; i < nax; i++)
            {
              char key[FLEN_KEYWORD], ctype[FLEN_VALUE] = "";
              int s = 0;

              sc->naxes[i] = naxes[i];
              if (naxes[i] <= 0 || (guint64) naxes[i] > G_MAXUINT64 / voxels / 8)
                goto out;
              voxels *= (guint64) naxes[i];
              g_snprintf (key, sizeof key, "CTYPE%d", i + 1);
              fits_read_key (f, TSTRING, key, ctype, NULL, &s);
              if (sc->ilng < 0 && ctype_is (ctype, "lng"))
                sc->ilng = i;
              else if (sc->ilat < 0 && ctype_is (ctype, "lat"))
                sc->ilat = i;
            }
          /* the spectral axis: the first other axis with more than one pixel, else the first other */
          for (int i = 0; i < nax && sc->ispec < 0; i++)
            if (i != sc->ilng && i != sc->ilat && naxes[i] > 1)
              sc->ispec = i;
          for (int i = 0; i < nax && sc->ispec < 0; i++)
            if (i != sc->ilng && i != sc->ilat)
              sc->ispec = i;
          wanted = sc->ilng >= 0 && sc->ilat >= 0 && sc->ispec >= 0 &&
                   voxels * sizeof (float) + 32u * 1024u * 1024u > budget &&
                   (guint64) naxes[sc->ilng] * (guint64) naxes[sc->ilat] <= G_MAXUINT32;
          for (int i = 0; i < nax && wanted; i++)
            if (i != sc->ilng && i != sc->ilat && i != sc->ispec && naxes[i] != 1)
              wanted = FALSE;   /* e.g. several Stokes planes: refused by the reader anyway */
          break;
        }
    }
out:
  {
    int s = 0;
    fits_close_file (f, &s);
    fits_clear_errmsg ();
  }
  (void) error;
  return wanted;
}

/* Replace the temporary file's name by the cube's in a message from the reader. */
static void
stream_rename_error (GError     *err,
                     const char *tmp,
                     const char *path)
{
  g_auto (GStrv) parts = NULL;

  if (err == NULL || strstr (err->message, tmp) == NULL)
    return;
  parts = g_strsplit (err->message, tmp, -1);
  g_free (err->message);
  err->message = g_strjoinv (path, parts);
}

/* The cube's header through efflux_cube_load, on a copy of the HDU's header cut to one sky pixel. */
static StreamCube *
stream_cube_open (const char    *path,
                  guint64        budget,
                  GCancellable  *cancellable,
                  GError       **error)
{
  g_autoptr (StreamCube) sc = g_new0 (StreamCube, 1);
  g_autofree char *dir = NULL;
  g_autofree char *tmp = NULL;
  g_autofree char *tmp_bang = NULL;
  fitsfile *in = NULL, *out = NULL;
  int status = 0, nkeys = 0, hdutype = 0, bitpix = 0;
  LONGLONG cut[STREAM_MAX_AXES];
  EffluxCubeLoadOptions options = { 0 };
  GError *local = NULL;

  if (!stream_probe (path, budget, sc, error))
    return NULL;
  sc->path = g_strdup (path);
  dir = g_dir_make_tmp ("efflux-stream-XXXXXX", NULL);
  if (dir == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: no temporary folder to read the header in", path);
      return NULL;
    }
  tmp = g_build_filename (dir, "header.fits", NULL);
  tmp_bang = g_strconcat ("!", tmp, NULL);
  for (int i = 0; i < sc->naxis; i++)
    cut[i] = (i == sc->ilng || i == sc->ilat) ? 1 : sc->naxes[i];

  if (fits_open_diskfile (&in, path, READONLY, &status) == 0 &&
      fits_movabs_hdu (in, sc->hdu, &hdutype, &status) == 0 &&
      fits_get_img_type (in, &bitpix, &status) == 0 &&
      fits_create_file (&out, tmp_bang, &status) == 0 &&
      fits_create_imgll (out, bitpix, sc->naxis, cut, &status) == 0)
    {
      static const char *const skip[] = {
        "SIMPLE", "XTENSION", "BITPIX", "NAXIS", "EXTEND", "PCOUNT", "GCOUNT", "END", "CHECKSUM", "DATASUM",
      };

      fits_get_hdrspace (in, &nkeys, NULL, &status);
      for (int i = 1; i <= nkeys && status == 0; i++)
        {
          char card[FLEN_CARD], name[FLEN_KEYWORD] = "";
          int len = 0;
          gboolean keep = TRUE;

          fits_read_record (in, i, card, &status);
          fits_get_keyname (card, name, &len, &status);
          if (status != 0)
            break;
          for (guint j = 0; j < G_N_ELEMENTS (skip); j++)
            if (g_str_has_prefix (name, skip[j]) &&
                (strcmp (skip[j], "NAXIS") == 0 ? TRUE : strcmp (name, skip[j]) == 0))
              keep = FALSE;
          if (keep)
            fits_write_record (out, card, &status);
        }
    }
  if (out != NULL)
    {
      int s = 0;
      fits_close_file (out, &s);   /* fills the small data unit with zeros */
      if (status == 0)
        status = s;
    }
  if (in != NULL)
    {
      int s = 0;
      fits_close_file (in, &s);
    }
  if (status != 0)
    {
      char text[FLEN_STATUS] = "";

      fits_get_errstatus (status, text);
      fits_clear_errmsg ();
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot read the header to stream the cube: %s",
                   path, text);
      g_unlink (tmp);
      g_rmdir (dir);
      return NULL;
    }

  options.no_noise = TRUE;
  sc->loaded = efflux_cube_load (tmp, &options, cancellable, NULL, NULL, &local);
  g_unlink (tmp);
  g_rmdir (dir);
  if (sc->loaded == NULL)
    {
      stream_rename_error (local, tmp, path);
      g_propagate_error (error, local);
      return NULL;
    }
  sc->hdr = *sc->loaded;
  sc->hdr.path = sc->path;
  sc->hdr.hdu = sc->hdu;
  sc->hdr.nx = (gsize) sc->naxes[sc->ilng];
  sc->hdr.ny = (gsize) sc->naxes[sc->ilat];
  sc->hdr.data = NULL;
  sc->hdr.rms = NULL;
  if (sc->hdr.nchan != (gsize) sc->naxes[sc->ispec])
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: CTYPE%d: the spectral axis could not be told apart from the others for streaming",
                   path, sc->ispec + 1);
      return NULL;
    }
  return g_steal_pointer (&sc);
}

static int
compare_float (const void *a,
               const void *b)
{
  float x = *(const float *) a, y = *(const float *) b;

  return (x > y) - (x < y);
}

static double
median_sorted_copy (float *v,
                    gsize  n)
{
  qsort (v, n, sizeof (float), compare_float);
  return 0.5 * ((double) v[(n - 1) / 2] + (double) v[n / 2]);
}

/* The robust rms of one channel plane (y * nx + x order), as efflux_cube_estimate_noise does it:
 * 1.4826 x the MAD of the finite values of every step-th pixel (Rousseeuw & Croux 1993). */
static float
plane_noise (const float *plane,
             gsize        npix,
             float       *buf)
{
  gsize step = (npix + STREAM_NOISE_MAX_SAMPLES - 1) / STREAM_NOISE_MAX_SAMPLES;
  gsize n = 0;
  double med;

  for (gsize p = 0; p < npix; p += step)
    if (isfinite (plane[p]))
      buf[n++] = plane[p];
  if (n == 0)
    return NAN;
  med = median_sorted_copy (buf, n);
  for (gsize i = 0; i < n; i++)
    buf[i] = fabsf (buf[i] - (float) med);
  return (float) (1.4826 * median_sorted_copy (buf, n));
}

/* The one pass over a streamed cube: every LobeWork whose tracer (cube) or isotopologue (icube)
 * it is gets its sums, channel by channel. */
static gboolean
stream_cube_pass (StreamCube    *sc,
                  GPtrArray     *works,
                  const EffluxDossierCube *dc,
                  GCancellable  *cancellable,
                  GError       **error)
{
  EffluxCube *cube = &sc->hdr;
  gsize nx = cube->nx, ny = cube->ny, nchan = cube->nchan;
  gboolean need_noise = !isfinite (dc->rms_k);
  gsize y0 = ny, y1 = 0, rows, block_rows;
  g_autofree float *plane = NULL;
  g_autofree float *noise_buf = NULL;
  fitsfile *f = NULL;
  int status = 0, hdutype = 0;
  gboolean ok = FALSE;

  /* the rows that hold a mask pixel */
  for (guint i = 0; i < works->len; i++)
    {
      LobeWork *w = g_ptr_array_index (works, i);
      const EffluxLobeMask *m = w->cube == cube ? w->pl->mask : w->imask;

      if (m == NULL || (w->cube != cube && w->icube != cube) || m->n_pixels == 0)
        continue;
      y0 = MIN (y0, (gsize) m->index[0] / nx);
      y1 = MAX (y1, (gsize) m->index[m->n_pixels - 1] / nx);
    }
  if (y0 > y1)
    return TRUE;
  if (need_noise)
    {
      y0 = 0;
      y1 = ny - 1;
      if ((guint64) nx * ny * sizeof (float) > STREAM_PLANE_BYTES)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY,
                       "%s: [Cube %s] rms-k missing: a channel plane of %" G_GSIZE_FORMAT " x %" G_GSIZE_FORMAT
                       " pixels is too large to estimate the noise of a cube that does not fit in memory; give rms-k",
                       sc->path, dc->id, nx, ny);
          return FALSE;
        }
    }
  rows = y1 - y0 + 1;
  block_rows = need_noise ? rows : MAX ((gsize) 1, MIN (rows, STREAM_BLOCK_BYTES / sizeof (float) / nx));
  plane = g_try_new (float, block_rows * nx);
  if (need_noise)
    noise_buf = g_try_new (float, MIN ((gsize) STREAM_NOISE_MAX_SAMPLES + 1, nx * ny));
  if (plane == NULL || (need_noise && noise_buf == NULL))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY, "%s: no memory for a block of %" G_GSIZE_FORMAT " rows",
                   sc->path, block_rows);
      return FALSE;
    }

  if (fits_open_diskfile (&f, sc->path, READONLY, &status) != 0 ||
      fits_movabs_hdu (f, sc->hdu, &hdutype, &status) != 0)
    {
      char text[FLEN_STATUS] = "";

      fits_get_errstatus (status, text);
      fits_clear_errmsg ();
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot read the cube: %s", sc->path, text);
      goto done;
    }

  for (gsize k = 0; k < nchan; k++)
    {
      double k_per_unit = cube->k_per_unit[k];
      gboolean convert = cube->bunit_kind == EFFLUX_BUNIT_JY_BEAM;

      if (g_cancellable_set_error_if_cancelled (cancellable, error))
        goto done;
      for (gsize b0 = y0; b0 <= y1; b0 += block_rows)
        {
          gsize b1 = MIN (y1, b0 + block_rows - 1), nb = b1 - b0 + 1;
          long fpix[STREAM_MAX_AXES], lpix[STREAM_MAX_AXES], inc[STREAM_MAX_AXES];
          float nulval = NAN;
          int anynul = 0;
          g_autofree float *tr = NULL;

          for (int i = 0; i < sc->naxis; i++)
            {
              fpix[i] = lpix[i] = 1;
              inc[i] = 1;
            }
          lpix[sc->ilng] = (long) nx;
          fpix[sc->ilat] = (long) b0 + 1;
          lpix[sc->ilat] = (long) b1 + 1;
          fpix[sc->ispec] = lpix[sc->ispec] = (long) k + 1;
          if (sc->ilat < sc->ilng)
            tr = g_new (float, nb * nx);
          if (fits_read_subset (f, TFLOAT, fpix, lpix, inc, &nulval, tr ? tr : plane, &anynul, &status) != 0)
            {
              char text[FLEN_STATUS] = "";

              fits_get_errstatus (status, text);
              fits_clear_errmsg ();
              g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                           "%s: channel %" G_GSIZE_FORMAT ": the data cannot be read: %s (truncated file?)",
                           sc->path, k + 1, text);
              goto done;
            }
          if (tr != NULL)   /* latitude first in the file: rows are columns */
            for (gsize x = 0; x < nx; x++)
              for (gsize y = 0; y < nb; y++)
                plane[y * nx + x] = tr[x * nb + y];
          if (convert)
            for (gsize i = 0; i < nb * nx; i++)
              plane[i] = (float) (plane[i] * k_per_unit);

          if (b0 == y0 && need_noise)
            {
              float rms = plane_noise (plane, nx * ny, noise_buf);
              double r = isfinite (rms) ? (double) rms : 0.0;

              for (guint i = 0; i < works->len; i++)
                {
                  LobeWork *w = g_ptr_array_index (works, i);

                  if (w->cube == cube)
                    lobe_work_set_rms (w, k, r);
                  if (w->icube == cube)
                    w->irms[k] = r;
                }
            }

          /* the sums of this channel, pixel by pixel in mask order, as the pass in memory */
          for (guint i = 0; i < works->len; i++)
            {
              LobeWork *w = g_ptr_array_index (works, i);

              if (w->cube == cube)
                {
                  PrepLobe *pl = w->pl;
                  const EffluxLobeMask *m = pl->mask;
                  guint32 lo = (guint32) (b0 * nx), hi = (guint32) ((b1 + 1) * nx);

                  for (gsize p = 0; p < m->n_pixels; p++)
                    {
                      float t;
                      int fin, in, det;

                      if (m->index[p] < lo || m->index[p] >= hi)
                        continue;
                      t = plane[m->index[p] - lo];
                      fin = fabsf (t) <= FLT_MAX;
                      in = w->clip ? fin & (t >= w->thr_clip[k]) : fin;
                      det = in & (t > 0) & (t >= w->thr_det[k]);
                      if (w->clip)
                        {
                          w->sum_all[k] += (double) (fin ? t : 0.0f);
                          w->n_all[k] += (double) fin;
                        }
                      pl->sum[k] += (double) (in ? t : 0.0f);
                      w->cnt[k] += (double) in;
                      if (det && w->dist[p] > pl->rdet[k])
                        pl->rdet[k] = w->dist[p];
                    }
                }
              if (w->icube == cube)
                {
                  const EffluxLobeMask *m = w->imask;
                  guint32 lo = (guint32) (b0 * nx), hi = (guint32) ((b1 + 1) * nx);

                  for (gsize p = 0; p < m->n_pixels; p++)
                    {
                      float t;

                      if (m->index[p] < lo || m->index[p] >= hi)
                        continue;
                      t = plane[m->index[p] - lo];
                      if (isfinite (t))
                        {
                          w->isum[k] += t;
                          w->in[k]++;
                        }
                    }
                }
            }
        }
    }
  ok = TRUE;
done:
  if (f != NULL)
    {
      int s = 0;
      fits_close_file (f, &s);
    }
  return ok;
}

/* efflux_measure_dossier when a cube does not fit: cubes that fit are loaded, the others streamed. */
static EffluxMeasureResult *
measure_streaming (const EffluxDossier *d,
                   GHashTable          *streams,
                   GCancellable        *cancellable,
                   GError             **error)
{
  g_autoptr (GHashTable) cubes = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, NULL);
  g_autoptr (GHashTable) owned = g_hash_table_new_full (g_str_hash, g_str_equal, g_free,
                                                        (GDestroyNotify) efflux_cube_free);
  g_autoptr (GPtrArray) works = g_ptr_array_new_with_free_func ((GDestroyNotify) lobe_work_free);
  g_autoptr (EffluxMeasurePrep) prep = g_new0 (EffluxMeasurePrep, 1);
  GHashTableIter it;
  gpointer key, value;

  for (guint i = 0; i < d->cubes->len; i++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (d->cubes, i);
      StreamCube *sc = g_hash_table_lookup (streams, dc->id);
      gboolean needed = dc->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE && d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE;
      EffluxCubeLoadOptions options = { 0 };
      EffluxCube *cube;

      for (guint j = 0; j < d->lobes->len && !needed; j++)
        if (strcmp (((EffluxDossierLobe *) g_ptr_array_index (d->lobes, j))->cube_id, dc->id) == 0)
          needed = TRUE;
      if (!needed)
        continue;
      if (sc != NULL)
        {
          g_hash_table_insert (cubes, g_strdup (dc->id), &sc->hdr);
          continue;
        }
      options.no_noise = isfinite (dc->rms_k);
      cube = efflux_cube_load (dc->abs_path, &options, cancellable, NULL, NULL, error);
      if (cube == NULL)
        {
          g_prefix_error (error, "%s: [Cube %s] path: ", d->path, dc->id);
          return NULL;
        }
      g_hash_table_insert (owned, g_strdup (dc->id), cube);
      g_hash_table_insert (cubes, g_strdup (dc->id), cube);
    }

  prep->lobes = g_ptr_array_new_with_free_func (prep_lobe_free);
  prep->notes = g_ptr_array_new_with_free_func (g_free);
  prep->cubes = g_hash_table_ref (cubes);
  prep->lines = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, NULL);
  if (d->lobes->len == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Lobe ...]: the dossier has no lobe to measure",
                   d->path);
      return NULL;
    }
  for (guint i = 0; i < d->lobes->len; i++)
    {
      PrepLobe *pl = g_new0 (PrepLobe, 1);
      LobeWork *w;

      g_ptr_array_add (prep->lobes, pl);
      w = prepare_lobe_begin (d, g_ptr_array_index (d->lobes, i), prep->cubes, prep->lines, prep->notes, pl, error);
      if (w == NULL)
        return NULL;
      g_ptr_array_add (works, w);
    }
  /* cubes in memory: the usual pass, for the parts they hold */
  for (guint i = 0; i < works->len; i++)
    {
      LobeWork *w = g_ptr_array_index (works, i);
      LobeWork part = *w;

      if (w->cube->data != NULL && (w->icube == NULL || w->icube->data != NULL))
        {
          if (!prepare_lobe_pass (w, cancellable, error))
            return NULL;
          continue;
        }
      /* one of the two is streamed: run the in-memory half alone */
      if (w->cube->data != NULL)
        {
          part.imask = NULL;
          if (!prepare_lobe_pass (&part, cancellable, error))
            return NULL;
        }
      else if (w->icube != NULL && w->icube->data != NULL)
        {
          gsize inchan = w->icube->nchan;

          for (gsize p = 0; p < w->imask->n_pixels; p++)
            {
              const float *s = w->icube->data + (gsize) w->imask->index[p] * inchan;

              for (gsize k = 0; k < inchan; k++)
                if (isfinite (s[k]))
                  {
                    w->isum[k] += s[k];
                    w->in[k]++;
                  }
            }
        }
    }
  /* streamed cubes: one pass each over the file */
  g_hash_table_iter_init (&it, streams);
  while (g_hash_table_iter_next (&it, &key, &value))
    {
      StreamCube *sc = value;

      if (g_hash_table_lookup (cubes, key) == NULL)
        continue;
      if (!stream_cube_pass (sc, works, efflux_dossier_find_cube (d, key), cancellable, error))
        return NULL;
    }
  for (guint i = 0; i < works->len; i++)
    prepare_lobe_end (g_ptr_array_index (works, i));
  g_hash_table_iter_init (&it, streams);
  while (g_hash_table_iter_next (&it, &key, &value))
    {
      StreamCube *sc = value;

      if (g_hash_table_lookup (cubes, key) != NULL)
        g_ptr_array_add (prep->notes,
                         g_strdup_printf ("%s: [Cube %s] measured in one streaming pass over the file "
                                          "(%" G_GSIZE_FORMAT " x %" G_GSIZE_FORMAT " x %" G_GSIZE_FORMAT
                                          " voxels do not fit in memory)", d->path, (const char *) key,
                                          sc->hdr.nx, sc->hdr.ny, sc->hdr.nchan));
    }
  return efflux_measure_finish (prep, d, error);
}

GHashTable *
efflux_measure_load_cubes (const EffluxDossier *d,
                           GCancellable        *cancellable,
                           GError             **error)
{
  g_autoptr (GHashTable) cubes = g_hash_table_new_full (g_str_hash, g_str_equal, g_free,
                                                        (GDestroyNotify) efflux_cube_free);
  EffluxCubeLoadOptions options = { 0 };

  for (guint i = 0; i < d->cubes->len; i++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (d->cubes, i);
      gboolean needed = FALSE;
      EffluxCube *cube;

      if (dc->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE && d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE)
        needed = TRUE;
      for (guint j = 0; j < d->lobes->len && !needed; j++)
        if (strcmp (((EffluxDossierLobe *) g_ptr_array_index (d->lobes, j))->cube_id, dc->id) == 0)
          needed = TRUE;
      if (!needed)
        continue;
      options.no_noise = isfinite (dc->rms_k);
      cube = efflux_cube_load (dc->abs_path, &options, cancellable, NULL, NULL, error);
      if (cube == NULL)
        {
          /* name the dossier key that points at the file too */
          g_prefix_error (error, "%s: [Cube %s] path: ", d->path, dc->id);
          return NULL;
        }
      g_hash_table_insert (cubes, g_strdup (dc->id), cube);
    }
  return g_steal_pointer (&cubes);
}

EffluxMeasureResult *
efflux_measure_dossier (const EffluxDossier *d,
                        GCancellable        *cancellable,
                        GError             **error)
{
  g_autoptr (GHashTable) cubes = NULL;
  g_autoptr (GHashTable) streams = g_hash_table_new_full (g_str_hash, g_str_equal, g_free,
                                                          (GDestroyNotify) stream_cube_free);
  g_autoptr (EffluxMeasurePrep) prep = NULL;
  guint64 budget = measure_memory_budget ();

  /* cubes larger than the memory are streamed (see above) */
  for (guint i = 0; i < d->cubes->len; i++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (d->cubes, i);
      gboolean needed = dc->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE && d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE;
      GError *local = NULL;
      StreamCube *sc;

      for (guint j = 0; j < d->lobes->len && !needed; j++)
        if (strcmp (((EffluxDossierLobe *) g_ptr_array_index (d->lobes, j))->cube_id, dc->id) == 0)
          needed = TRUE;
      if (!needed)
        continue;
      sc = stream_cube_open (dc->abs_path, budget, cancellable, &local);

      if (local != NULL)
        {
          g_propagate_prefixed_error (error, local, "%s: [Cube %s] path: ", d->path, dc->id);
          return NULL;
        }
      if (sc != NULL)
        g_hash_table_insert (streams, g_strdup (dc->id), sc);
    }
  if (g_hash_table_size (streams) > 0)
    return measure_streaming (d, streams, cancellable, error);

  cubes = efflux_measure_load_cubes (d, cancellable, error);
  if (cubes == NULL)
    return NULL;
  prep = efflux_measure_prepare (d, cubes, cancellable, error);
  if (prep == NULL)
    return NULL;
  return efflux_measure_finish (prep, d, error);
}

/* ---------------------------------------------------------------------------------------------- */
/* columns                                                                                          */

static const char * const columns[] = {
  /* CONTRACT.md section 3, in this order */
  "source", "lobe", "kind", "voxels", "mass_msun", "momentum_msun_kms", "energy_erg", "vmax_kms",
  "rmax_au", "tdyn_yr", "mdot_msun_yr", "force_msun_kms_yr", "lmech_lsun", "inclination_deg",
  /* ours */
  "mass_msun_err", "momentum_msun_kms_err", "energy_erg_err", "mdot_msun_yr_err",
  "force_msun_kms_yr_err", "lmech_lsun_err",
  "pm_kms", "age_pm_yr",
  "mass_msun_p16", "mass_msun_p50", "mass_msun_p84",
  "momentum_msun_kms_p16", "momentum_msun_kms_p50", "momentum_msun_kms_p84",
  "energy_erg_p16", "energy_erg_p50", "energy_erg_p84",
  "tdyn_yr_p16", "tdyn_yr_p50", "tdyn_yr_p84",
  "mdot_msun_yr_p16", "mdot_msun_yr_p50", "mdot_msun_yr_p84",
  "force_msun_kms_yr_p16", "force_msun_kms_yr_p50", "force_msun_kms_yr_p84",
  "lmech_lsun_p16", "lmech_lsun_p50", "lmech_lsun_p84",
  "mv_gamma", "mv_gamma_err", "mv_break_kms", "mv_gamma_low", "mv_gamma_high",
  "hidden_mass_msun", "hidden_mass_msun_err", "opacity",
  NULL
};

#define FIRST_PCT_COLUMN 22

const char * const *
efflux_measure_columns (void)
{
  return columns;
}

double
efflux_measure_value (const EffluxMeasureRow *r,
                      guint                   index,
                      gboolean               *is_text)
{
  if (is_text)
    *is_text = (index <= 2 || index == G_N_ELEMENTS (columns) - 2);
  if (index >= FIRST_PCT_COLUMN && index < FIRST_PCT_COLUMN + 3 * EFFLUX_MQ_N)
    return r->pct[(index - FIRST_PCT_COLUMN) / 3][(index - FIRST_PCT_COLUMN) % 3];
  switch (index)
    {
    case 3: return (double) r->voxels;
    case 4: return r->mass_msun;
    case 5: return r->momentum_msun_kms;
    case 6: return r->energy_erg;
    case 7: return r->vmax_kms;
    case 8: return r->rmax_au;
    case 9: return r->tdyn_yr;
    case 10: return r->mdot_msun_yr;
    case 11: return r->force_msun_kms_yr;
    case 12: return r->lmech_lsun;
    case 13: return r->inclination_deg;
    case 14: return r->mass_err;
    case 15: return r->momentum_err;
    case 16: return r->energy_err;
    case 17: return r->mdot_err;
    case 18: return r->force_err;
    case 19: return r->lmech_err;
    case 20: return r->pm_kms;
    case 21: return r->age_pm_yr;
    case FIRST_PCT_COLUMN + 3 * EFFLUX_MQ_N + 0: return r->mv_gamma;
    case FIRST_PCT_COLUMN + 3 * EFFLUX_MQ_N + 1: return r->mv_gamma_err;
    case FIRST_PCT_COLUMN + 3 * EFFLUX_MQ_N + 2: return r->mv_break_kms;
    case FIRST_PCT_COLUMN + 3 * EFFLUX_MQ_N + 3: return r->mv_gamma_low;
    case FIRST_PCT_COLUMN + 3 * EFFLUX_MQ_N + 4: return r->mv_gamma_high;
    case FIRST_PCT_COLUMN + 3 * EFFLUX_MQ_N + 5: return r->hidden_mass_msun;
    case FIRST_PCT_COLUMN + 3 * EFFLUX_MQ_N + 6: return r->hidden_mass_err;
    default: return NAN;
    }
}

char *
efflux_measure_cell (const EffluxMeasureRow *r,
                     guint                   index)
{
  gboolean is_text;
  double v;
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  if (index >= G_N_ELEMENTS (columns) - 1)
    return g_strdup ("");
  v = efflux_measure_value (r, index, &is_text);
  if (is_text)
    {
      switch (index)
        {
        case 0: return g_strdup (r->source);
        case 1: return g_strdup (r->lobe);
        case 2: return g_strdup (r->is_total ? "" : efflux_lobe_kind_name (r->kind));
        default: return g_strdup (efflux_opacity_method_name (r->opacity));
        }
    }
  if (!isfinite (v))
    return g_strdup ("");
  if (index == 3)
    return g_strdup_printf ("%" G_GUINT64_FORMAT, r->voxels);
  return g_strdup (g_ascii_formatd (buf, sizeof buf, "%.7g", v));
}
