/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Knots along a jet cut and their dynamical ages (method in efflux-knots.h). */

#include "efflux-knots.h"
#include "efflux-constants.h"
#include "efflux-cube.h"
#include "efflux-kinematics.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

void
efflux_knot_list_free (EffluxKnotList *list)
{
  if (list == NULL)
    return;
  if (list->knots != NULL)
    g_array_unref (list->knots);
  g_free (list);
}

/* brightness-weighted velocity over the channels of column c above half its peak */
static double
column_velocity (const EffluxPv *pv,
                 gsize           c,
                 double          vsys,
                 double          vmin,
                 double         *weight)
{
  double peak = 0.0, sw = 0.0, swv = 0.0;

  for (gsize k = 0; k < pv->nchan; k++)
    {
      float t = pv->data[k * pv->n_offsets + c];
      if (isfinite (t) && fabs (pv->velocity[k] - vsys) >= vmin)
        peak = MAX (peak, t);
    }
  for (gsize k = 0; k < pv->nchan; k++)
    {
      float t = pv->data[k * pv->n_offsets + c];
      if (isfinite (t) && fabs (pv->velocity[k] - vsys) >= vmin && t > 0.5 * peak)
        {
          sw += t;
          swv += t * pv->velocity[k];
        }
    }
  *weight = sw;
  return sw > 0.0 ? swv / sw : NAN;
}

static int
cmp_knot (const void *a,
          const void *b)
{
  const EffluxKnot *p = a, *q = b;

  if (p->side != q->side)
    return p->side > q->side ? -1 : 1;
  return p->age_yr < q->age_yr ? -1 : p->age_yr > q->age_yr ? 1 : 0;
}

typedef struct
{
  gsize  col;
  double value;
} Peak;

static int
cmp_peak (const void *a,
          const void *b)
{
  const Peak *p = a, *q = b;
  return p->value > q->value ? -1 : p->value < q->value ? 1 : 0;
}

EffluxKnotList *
efflux_knots_pv (const EffluxPv           *pv,
                 double                    source_offset_arcsec,
                 double                    vsys_kms,
                 double                    distance_pc,
                 double                    inclination_deg,
                 double                    res_x_arcsec,
                 const EffluxKnotOptions  *options,
                 GError                  **error)
{
  g_autoptr (EffluxKnotList) list = g_new0 (EffluxKnotList, 1);
  g_autofree double *prof = g_new0 (double, pv->n_offsets);
  g_autoptr (GArray) peaks = g_array_new (FALSE, FALSE, sizeof (Peak));
  double vmin = options != NULL && isfinite (options->vmin_kms) ? options->vmin_kms : 0.0;
  double dv = fabs (pv->dv_kms), pmax = 0.0, thr, sin_i, cos_i, res;
  guint nused = 0;

  if (!(inclination_deg > 0.0 && inclination_deg < 90.0))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "[Source] inclination-deg: the ages need an inclination strictly between 0 and 90 deg "
                   "(got %g)", inclination_deg);
      return NULL;
    }
  if (!(distance_pc > 0.0))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "[Source] distance-pc: the ages need a distance");
      return NULL;
    }
  sin_i = sin (inclination_deg * G_PI / 180.0);
  cos_i = cos (inclination_deg * G_PI / 180.0);
  res = res_x_arcsec > 0.0 ? res_x_arcsec : pv->offset_step_arcsec;
  list->knots = g_array_new (FALSE, FALSE, sizeof (EffluxKnot));
  list->source_offset_arcsec = source_offset_arcsec;
  list->vsys_kms = vsys_kms;
  list->distance_pc = distance_pc;
  list->inclination_deg = inclination_deg;
  list->vmin_kms = vmin;

  for (gsize k = 0; k < pv->nchan; k++)
    if (fabs (pv->velocity[k] - vsys_kms) >= vmin)
      {
        nused++;
        for (gsize i = 0; i < pv->n_offsets; i++)
          {
            float t = pv->data[k * pv->n_offsets + i];
            if (isfinite (t))
              prof[i] += t * dv;
          }
      }
  for (gsize i = 0; i < pv->n_offsets; i++)
    pmax = MAX (pmax, prof[i]);
  if (!(pmax > 0.0))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "the cut has no emission beyond %g km/s from vsys", vmin);
      return NULL;
    }
  if (options != NULL && isfinite (options->threshold_k_kms))
    thr = options->threshold_k_kms;
  else
    {
      thr = 0.05 * pmax;
      if (options != NULL && isfinite (options->noise_k))
        thr = MAX (thr, 5.0 * options->noise_k * dv * sqrt ((double) nused));
    }
  list->threshold_k_kms = thr;

  for (gsize i = 1; i + 1 < pv->n_offsets; i++)
    if (prof[i] > thr && prof[i] > prof[i - 1] && prof[i] >= prof[i + 1])
      {
        Peak p = { i, prof[i] };
        g_array_append_val (peaks, p);
      }
  qsort (peaks->data, peaks->len, sizeof (Peak), cmp_peak);
  for (guint a = 0; a < peaks->len; a++)
    {
      Peak *p = &g_array_index (peaks, Peak, a);
      double y0 = prof[p->col - 1], y1 = prof[p->col], y2 = prof[p->col + 1], den, frac, pos, x;
      double w0, w1, v0, v1, v;
      gsize c0;
      gboolean suppressed = FALSE;
      EffluxKnot knot;

      for (guint b = 0; b < a; b++)
        {
          Peak *q = &g_array_index (peaks, Peak, b);
          if (q->value > 0.0 && fabs ((double) q->col - (double) p->col) * pv->offset_step_arcsec < res)
            suppressed = TRUE;
        }
      if (suppressed)
        {
          p->value = -1.0;   /* out, and never suppresses others */
          continue;
        }
      den = y0 - 2.0 * y1 + y2;
      frac = den < 0.0 ? CLAMP (0.5 * (y0 - y2) / den, -0.5, 0.5) : 0.0;
      pos = (double) p->col + frac;
      x = pos * pv->offset_step_arcsec - source_offset_arcsec;
      c0 = frac >= 0.0 ? p->col : p->col - 1;
      v0 = column_velocity (pv, c0, vsys_kms, vmin, &w0);
      v1 = column_velocity (pv, c0 + 1, vsys_kms, vmin, &w1);
      {
        double f = pos - (double) c0;
        if (isfinite (v0) && isfinite (v1))
          v = v0 * (1.0 - f) + v1 * f;
        else
          v = isfinite (v0) ? v0 : v1;
      }
      if (!isfinite (v) || !(fabs (x) > 0.0) || v == vsys_kms)
        continue;
      knot.side = x > 0.0 ? 1 : -1;
      knot.kind = v > vsys_kms ? EFFLUX_LOBE_RED : EFFLUX_LOBE_BLUE;
      knot.offset_arcsec = x;
      knot.velocity_kms = v;
      knot.v_obs_kms = fabs (v - vsys_kms);
      knot.intensity_k_kms = y1;
      /* (|x| d / sin i au) / (|v - vsys| / cos i km/s) */
      knot.age_yr = (fabs (x) * distance_pc / sin_i * EFFLUX_AU / EFFLUX_KM) / (knot.v_obs_kms / cos_i) / EFFLUX_YR;
      knot.interval_yr = NAN;
      g_array_append_val (list->knots, knot);
    }
  qsort (list->knots->data, list->knots->len, sizeof (EffluxKnot), cmp_knot);
  for (guint j = 1; j < list->knots->len; j++)
    {
      EffluxKnot *prev = &g_array_index (list->knots, EffluxKnot, j - 1);
      EffluxKnot *cur = &g_array_index (list->knots, EffluxKnot, j);
      if (prev->side == cur->side)
        cur->interval_yr = cur->age_yr - prev->age_yr;
    }
  return g_steal_pointer (&list);
}

EffluxKnotList *
efflux_knots_dossier (const EffluxDossier      *dossier,
                      const char               *cut_name,
                      const char               *cube_id,
                      const EffluxKnotOptions  *options,
                      GError                  **error)
{
  EffluxDossierCutPv cp;
  EffluxKnotOptions opt = { NAN, NAN, NAN, NAN };
  EffluxKnotList *list;
  double incl;

  if (options != NULL)
    opt = *options;
  incl = isfinite (opt.inclination_deg) ? opt.inclination_deg
         : dossier->inclination_mode == EFFLUX_INCLINATION_FIXED ? dossier->inclination_deg : NAN;
  if (!isfinite (incl))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Source] inclination-mode: the ages need a fixed inclination (or --inclination-deg)",
                   dossier->path);
      return NULL;
    }
  if (!efflux_dossier_cut_pv (dossier, cut_name, cube_id, &cp, error))
    return NULL;
  if (!isfinite (opt.noise_k))
    opt.noise_k = isfinite (cp.dc->rms_k) ? cp.dc->rms_k : efflux_kinematics_pv_sigma (cp.cube);
  list = efflux_knots_pv (cp.pv, cp.source_offset_arcsec, dossier->vsys_kms, dossier->distance_pc,
                          incl, cp.cube->has_beam ? cp.cube->bmaj_arcsec : NAN, &opt, error);
  if (list == NULL)
    g_prefix_error (error, "%s: [Cut %s]: ", dossier->path, cut_name);
  efflux_dossier_cut_pv_clear (&cp);
  return list;
}
