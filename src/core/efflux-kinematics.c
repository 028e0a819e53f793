/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <math.h>
#include <stdlib.h>

#include "efflux-constants.h"
#include "efflux-kinematics.h"

#include <string.h>

/* parsecs per arcsec at 1 pc: 1 au / 1 pc = pi / 648000 (IAU 2015 Resolution B2) */
#define PC_PER_ARCSEC_AT_1PC (G_PI / 648000.0)

double
efflux_kinematics_slope_per_pc (double slope_kms_per_arcsec,
                                double distance_pc)
{
  if (!isfinite (distance_pc) || distance_pc <= 0.0)
    return NAN;
  return slope_kms_per_arcsec / (distance_pc * PC_PER_ARCSEC_AT_1PC);
}

double
efflux_kinematics_slope_per_arcsec (double slope_kms_per_pc,
                                    double distance_pc)
{
  if (!isfinite (distance_pc) || distance_pc <= 0.0)
    return NAN;
  return slope_kms_per_pc * distance_pc * PC_PER_ARCSEC_AT_1PC;
}

static gboolean
inclination_usable (double inclination_deg)
{
  return isfinite (inclination_deg) && inclination_deg > 0.0 && inclination_deg < 90.0;
}

double
efflux_hubble_age_yr (double slope_kms_per_pc,
                      double inclination_deg)
{
  double rate_per_s;

  if (isnan (slope_kms_per_pc) || !inclination_usable (inclination_deg))
    return NAN;
  if (slope_kms_per_pc == 0.0)
    return INFINITY;
  /* km/s per pc -> 1/s: a pc is EFFLUX_PC / 1e5 km */
  rate_per_s = fabs (slope_kms_per_pc) / (EFFLUX_PC / 1e5);
  return 1.0 / (tan (inclination_deg * G_PI / 180.0) * rate_per_s) / EFFLUX_YR;
}

double
efflux_hubble_slope_for_age (double age_yr,
                             double inclination_deg)
{
  if (!isfinite (age_yr) || age_yr <= 0.0 || !inclination_usable (inclination_deg))
    return NAN;
  return (EFFLUX_PC / 1e5) / (tan (inclination_deg * G_PI / 180.0) * age_yr * EFFLUX_YR);
}

gboolean
efflux_kinematics_offset_on_cut (const EffluxPv *pv,
                                 double          px,
                                 double          py,
                                 double         *offset_arcsec,
                                 double         *distance_arcsec)
{
  double best_d2 = INFINITY, best_s = 0.0;

  g_return_val_if_fail (pv != NULL, FALSE);
  if (pv->n_offsets == 0)
    return FALSE;
  if (pv->n_offsets == 1)
    {
      best_d2 = (px - pv->x[0]) * (px - pv->x[0]) + (py - pv->y[0]) * (py - pv->y[0]);
      best_s = 0.0;
    }
  for (gsize i = 0; i + 1 < pv->n_offsets; i++)
    {
      double ax = pv->x[i], ay = pv->y[i];
      double bx = pv->x[i + 1] - ax, by = pv->y[i + 1] - ay;
      double len2 = bx * bx + by * by;
      double t = len2 > 0.0 ? ((px - ax) * bx + (py - ay) * by) / len2 : 0.0;
      double dx, dy, d2;

      t = CLAMP (t, 0.0, 1.0);
      dx = px - (ax + t * bx);
      dy = py - (ay + t * by);
      d2 = dx * dx + dy * dy;
      if (d2 < best_d2)
        {
          best_d2 = d2;
          best_s = i + t;
        }
    }
  if (offset_arcsec != NULL)
    *offset_arcsec = best_s * pv->offset_step_arcsec;
  if (distance_arcsec != NULL)
    *distance_arcsec = sqrt (best_d2) * pv->offset_step_arcsec;
  return TRUE;
}

static int
compare_double (const void *a,
                const void *b)
{
  double x = *(const double *) a, y = *(const double *) b;

  return (x > y) - (x < y);
}

double
efflux_kinematics_pv_sigma (const EffluxCube *cube)
{
  g_autofree double *v = NULL;
  gsize n = 0;

  g_return_val_if_fail (cube != NULL, NAN);
  if (cube->rms == NULL || cube->nchan == 0)
    return NAN;
  v = g_new (double, cube->nchan);
  for (gsize k = 0; k < cube->nchan; k++)
    if (isfinite (cube->rms[k]) && cube->rms[k] > 0.0f)
      v[n++] = cube->rms[k];
  if (n == 0)
    return NAN;
  qsort (v, n, sizeof (double), compare_double);
  return (n % 2 == 1) ? v[n / 2] : 0.5 * (v[n / 2 - 1] + v[n / 2]);
}

const EffluxDossierCut *
efflux_kinematics_find_cut (const EffluxDossier  *dossier,
                            const char           *cut_name,
                            GError              **error)
{
  const EffluxDossierCut *cut = NULL;

  for (guint i = 0; i < dossier->cuts->len; i++)
    {
      const EffluxDossierCut *c = g_ptr_array_index (dossier->cuts, i);
      if (strcmp (c->name, cut_name) == 0)
        cut = c;
    }
  if (cut == NULL)
    g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: [Cut %s]: no such cut in the dossier",
                 dossier->path, cut_name);
  return cut;
}

gboolean
efflux_dossier_cut_pv (const EffluxDossier *dossier,
                       const char          *cut_name,
                       const char          *cube_id,
                       EffluxDossierCutPv  *out,
                       GError             **error)
{
  const EffluxDossierCut *cut = NULL;
  EffluxCubeLoadOptions load = { 0 };
  g_autofree double *ra_dec = NULL;
  double sx, sy, sdist;

  g_return_val_if_fail (dossier != NULL && cut_name != NULL && out != NULL, FALSE);
  memset (out, 0, sizeof *out);
  cut = efflux_kinematics_find_cut (dossier, cut_name, error);
  if (cut == NULL)
    return FALSE;
  out->dc = efflux_dossier_find_cube (dossier, cube_id != NULL ? cube_id : cut->cube_id);
  if (out->dc == NULL)
    {
      if (cube_id != NULL)
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: [Cube %s]: no such cube in the dossier", dossier->path, cube_id);
      else
        g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                     "%s: [Cut %s] cube: no [Cube %s] in the dossier",
                     dossier->path, cut_name, cut->cube_id);
      return FALSE;
    }
  out->cube = efflux_cube_load (out->dc->abs_path, &load, NULL, NULL, NULL, error);
  if (out->cube == NULL)
    return FALSE;
  ra_dec = efflux_dossier_cut_path (cut);
  out->pv = efflux_pv_cut (out->cube, ra_dec, cut->n_vertices, cut->width_arcsec, error);
  if (out->pv == NULL)
    {
      g_prefix_error (error, "%s: [Cut %s]: ", dossier->path, cut_name);
      efflux_dossier_cut_pv_clear (out);
      return FALSE;
    }
  if (!efflux_cube_icrs_to_pixel (out->cube, dossier->ra_deg, dossier->dec_deg, &sx, &sy)
      || !efflux_kinematics_offset_on_cut (out->pv, sx, sy, &out->source_offset_arcsec, &sdist))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Source] ra-deg: the source cannot be placed on [Cut %s]", dossier->path, cut_name);
      efflux_dossier_cut_pv_clear (out);
      return FALSE;
    }
  return TRUE;
}

void
efflux_dossier_cut_pv_clear (EffluxDossierCutPv *cut_pv)
{
  g_clear_pointer (&cut_pv->pv, efflux_pv_free);
  g_clear_pointer (&cut_pv->cube, efflux_cube_free);
  cut_pv->dc = NULL;
}
