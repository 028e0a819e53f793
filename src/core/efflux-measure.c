/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include "efflux-measure.h"
#include "efflux-constants.h"
#include "efflux-lte.h"
#include "efflux-mvfit.h"
#include "efflux-opacity.h"
#include "efflux-sampling.h"

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
} PrepLobe;

struct _EffluxMeasurePrep
{
  GPtrArray  *lobes;   /* PrepLobe * */
  GPtrArray  *notes;
  GHashTable *cubes;   /* the caller's id -> EffluxCube * (a reference) */
  GHashTable *lines;   /* cube id -> const EffluxLine * (as written or guessed) */
};

static void
prep_lobe_free (gpointer p)
{
  PrepLobe *pl = p;

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

/* Mean brightness over a mask per channel (T / eff) and the noise of that mean. */
static void
mask_means (const EffluxCube     *cube,
            const EffluxLobeMask *mask,
            const double         *rms,
            double                eff,
            double               *mean,
            double               *sigma)
{
  gsize nchan = cube->nchan;
  g_autofree double *sum = g_new0 (double, nchan);
  g_autofree guint64 *n = g_new0 (guint64, nchan);

  for (gsize p = 0; p < mask->n_pixels; p++)
    {
      const float *s = cube->data + (gsize) mask->index[p] * nchan;

      for (gsize k = 0; k < nchan; k++)
        if (isfinite (s[k]))
          {
            sum[k] += s[k];
            n[k]++;
          }
    }
  for (gsize k = 0; k < nchan; k++)
    {
      mean[k] = n[k] ? sum[k] / (double) n[k] / eff : NAN;
      sigma[k] = n[k] ? rms[k] / eff / sqrt ((double) n[k]) : NAN;
    }
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
      rdet[k] = det ? far : rd;
    }
}

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
  const EffluxDossierCube *dc = efflux_dossier_find_cube (d, dl->cube_id);
  g_autofree char *what = g_strdup_printf ("%s: [Lobe %s] polygon", d->path, dl->name);
  g_autofree double *rms = NULL;
  g_autofree double *dist = NULL;
  g_autofree float *thr_clip = NULL;
  g_autofree float *thr_det = NULL;
  g_autofree double *sum_all = NULL;
  g_autofree double *n_all = NULL;
  g_autofree double *cnt = NULL;
  double det_sigma = d->clip_sigma > 0 ? d->clip_sigma : 3.0;
  gboolean clip = d->clip_sigma > 0;
  EffluxCube *cube;
  gsize nchan;

  cube = g_hash_table_lookup (cubes, dl->cube_id);
  if (cube == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Lobe %s] cube: cube '%s' is not loaded",
                   d->path, dl->name, dl->cube_id);
      return FALSE;
    }
  pl->name = g_strdup (dl->name);
  pl->cube_id = g_strdup (dl->cube_id);
  pl->cube = cube;
  pl->eff = dc->beam_efficiency;
  pl->line = g_hash_table_lookup (lines, dc->id);
  if (pl->line == NULL)
    {
      pl->line = cube_line (d, dc, cube, notes, error);
      if (pl->line == NULL)
        return FALSE;
      g_hash_table_insert (lines, g_strdup (dc->id), (gpointer) pl->line);
    }
  pl->mask = efflux_lobe_mask_new (cube, dl->ra_deg, dl->dec_deg, dl->n_vertices, what, error);
  if (pl->mask == NULL)
    return FALSE;
  if (pl->mask->n_pixels == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: holds no pixel centre of the map of [Cube %s]", what, dc->id);
      return FALSE;
    }

  nchan = pl->nchan = cube->nchan;
  rms = cube_rms (dc, cube);
  pl->sum = g_new0 (double, nchan);
  pl->var = g_new0 (double, nchan);
  pl->nvox = g_new0 (guint64, nchan);
  pl->rdet = g_new (double, nchan);
  sum_all = g_new0 (double, nchan);
  n_all = g_new0 (double, nchan);
  thr_clip = g_new (float, nchan);
  thr_det = g_new (float, nchan);
  for (gsize k = 0; k < nchan; k++)
    {
      pl->rdet[k] = -1;
      thr_clip[k] = (float) (d->clip_sigma * rms[k]);
      thr_det[k] = (float) (det_sigma * rms[k]);
    }

  dist = g_new (double, pl->mask->n_pixels);
  for (gsize p = 0; p < pl->mask->n_pixels; p++)
    {
      gsize x = pl->mask->index[p] % cube->nx, y = pl->mask->index[p] / cube->nx;
      double ra, dec;

      if (!efflux_cube_pixel_to_icrs (cube, (double) x, (double) y, &ra, &dec))
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: pixel (%" G_GSIZE_FORMAT ", %" G_GSIZE_FORMAT ") of [Cube %s] has no sky position",
                       what, x, y, dc->id);
          return FALSE;
        }
      dist[p] = separation_arcsec (d->ra_deg, d->dec_deg, ra, dec);
    }

  /* The one pass over the voxels under the mask. */
  cnt = g_new0 (double, nchan);
  for (gsize p = 0; p < pl->mask->n_pixels; p++)
    {
      const float *s = cube->data + (gsize) pl->mask->index[p] * nchan;

      if ((p & 1023) == 0 && g_cancellable_set_error_if_cancelled (cancellable, error))
        return FALSE;
      if (clip)
        accumulate_clipped (s, nchan, dist[p], thr_clip, thr_det, sum_all, n_all, pl->sum, cnt, pl->rdet);
      else
        accumulate (s, nchan, dist[p], thr_det, pl->sum, cnt, pl->rdet);
    }
  for (gsize k = 0; k < nchan; k++)
    {
      pl->nvox[k] = (guint64) cnt[k];
      if (!clip)
        {
          sum_all[k] = pl->sum[k];
          n_all[k] = cnt[k];
        }
    }
  for (gsize k = 0; k < nchan; k++)
    {
      pl->sum[k] /= pl->eff;
      pl->var[k] = (double) pl->nvox[k] * (rms[k] / pl->eff) * (rms[k] / pl->eff);
    }

  /* Opacity from the isotopologue: only for lobes on 12CO. */
  if (d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE && pl->line->species == EFFLUX_SPECIES_12CO)
    {
      const EffluxDossierCube *ic = efflux_dossier_isotopologue_cube (d);
      EffluxCube *icube = g_hash_table_lookup (cubes, ic->id);
      const EffluxLine *iline;
      g_autofree char *iwhat = g_strdup_printf ("%s: [Lobe %s] polygon (on [Cube %s])", d->path, dl->name, ic->id);
      g_autoptr (EffluxLobeMask) imask = NULL;
      g_autofree double *irms = NULL;
      g_autofree double *imean = NULL;
      g_autofree double *isig = NULL;

      if (icube == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Cube %s]: the isotopologue cube is not loaded",
                       d->path, ic->id);
          return FALSE;
        }
      iline = g_hash_table_lookup (lines, ic->id);
      if (iline == NULL)
        {
          iline = cube_line (d, ic, icube, notes, error);
          if (iline == NULL)
            return FALSE;
          g_hash_table_insert (lines, g_strdup (ic->id), (gpointer) iline);
        }
      if (iline->species != EFFLUX_SPECIES_13CO && iline->species != EFFLUX_SPECIES_C18O)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [Cube %s] line: the isotopologue must be 13CO or C18O for opacity=from-isotopologue, got '%s'",
                       d->path, ic->id, iline->name);
          return FALSE;
        }
      pl->iso_ratio_kind = iline->species == EFFLUX_SPECIES_C18O ? 1 : 0;
      imask = efflux_lobe_mask_new (icube, dl->ra_deg, dl->dec_deg, dl->n_vertices, iwhat, error);
      if (imask == NULL)
        return FALSE;
      if (imask->n_pixels == 0)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: holds no pixel centre of the map", iwhat);
          return FALSE;
        }
      irms = cube_rms (ic, icube);
      imean = g_new (double, icube->nchan);
      isig = g_new (double, icube->nchan);
      mask_means (icube, imask, irms, ic->beam_efficiency, imean, isig);
      pl->s12 = g_new (double, nchan);
      pl->sig12 = g_new (double, nchan);
      pl->s13 = g_new (double, nchan);
      pl->sig13 = g_new (double, nchan);
      for (gsize k = 0; k < nchan; k++)
        {
          pl->s12[k] = n_all[k] > 0 ? sum_all[k] / n_all[k] / pl->eff : NAN;
          pl->sig12[k] = n_all[k] > 0 ? rms[k] / pl->eff / sqrt (n_all[k]) : NAN;
          pl->s13[k] = interpolate (icube->velocity, imean, icube->nchan, cube->velocity[k]);
          pl->sig13[k] = interpolate (icube->velocity, isig, icube->nchan, cube->velocity[k]);
        }
    }
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
    if (efflux_mvfit_broken (s->v_offset_kms, sig, have_err ? s->dmdv_err : NULL, n, &broken))
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
      g_ptr_array_add (res->spectra, lobe_spectrum (d, &fl[i], &w0, row));
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
        return NULL;
      g_hash_table_insert (cubes, g_strdup (dc->id), cube);
    }
  return g_steal_pointer (&cubes);
}

EffluxMeasureResult *
efflux_measure_dossier (const EffluxDossier *d,
                        GCancellable        *cancellable,
                        GError             **error)
{
  g_autoptr (GHashTable) cubes = efflux_measure_load_cubes (d, cancellable, error);
  g_autoptr (EffluxMeasurePrep) prep = NULL;

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
