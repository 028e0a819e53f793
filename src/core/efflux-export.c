/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Lobes as FITS masks (2-D, 3-D) and as IVOA STC-S polygons; the layout is in efflux-export.h. */
#include "config.h"

#include "efflux-export.h"

#include <fitsio.h>
#include <math.h>
#include <string.h>
#include <wcs.h>
#include <wcshdr.h>
#include <wcsutil.h>

#include "efflux-io.h"
#include "efflux-lobe.h"

gboolean
efflux_export_kind_from_string (const char       *text,
                                EffluxExportKind *kind)
{
  if (g_strcmp0 (text, "2d") == 0)
    *kind = EFFLUX_EXPORT_MASKS_2D;
  else if (g_strcmp0 (text, "3d") == 0)
    *kind = EFFLUX_EXPORT_MASKS_3D;
  else if (g_strcmp0 (text, "stcs") == 0)
    *kind = EFFLUX_EXPORT_STCS;
  else
    return FALSE;
  return TRUE;
}

static void
set_fits_error (GError    **error,
                const char *path,
                const char *what,
                int         status)
{
  char text[FLEN_STATUS] = "";

  fits_get_errstatus (status, text);
  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: %s: %s", path, what, text);
}

/* The sky WCS cards of the cube (WCSAXES left out: NAXIS gives the count). */
static void
put_sky_wcs (fitsfile      *f,
             struct wcsprm *sky,
             int           *status)
{
  int nkey = 0;
  char *header = NULL;

  if (wcshdo (WCSHDO_P17, sky, &nkey, &header) != 0)
    {
      *status = BAD_WCS_VAL;
      wcsdealloc (header);
      return;
    }
  for (int i = 0; i < nkey && *status == 0; i++)
    {
      char card[81];

      memcpy (card, header + 80 * i, 80);
      card[80] = '\0';
      if (strncmp (card, "WCSAXES ", 8) == 0 || strncmp (card, "COMMENT ", 8) == 0 ||
          strncmp (card, "MJDREF  ", 8) == 0 || strncmp (card, "        ", 8) == 0)
        continue;
      g_strchomp (card);
      fits_write_record (f, card, status);
    }
  wcsdealloc (header);
}

static gboolean
write_lobe_hdu (fitsfile                *f,
                const EffluxDossier     *dossier,
                const EffluxDossierLobe *lobe,
                const EffluxCube        *cube,
                gboolean                 three_d,
                const char              *path,
                GError                 **error)
{
  g_autofree char *what = g_strdup_printf ("%s: [Lobe %s] polygon", dossier->path, lobe->name);
  g_autoptr (EffluxLobeMask) mask = NULL;
  g_autofree guint8 *plane = NULL;
  g_autofree guint8 *zero = NULL;
  long naxes[3] = { (long) cube->nx, (long) cube->ny, (long) cube->nchan };
  gsize n = cube->nx * cube->ny;
  gsize k_begin = 0, k_end = 0;
  int status = 0;

  if (cube->sky == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: [Lobe %s] cube: %s has no sky coordinates", dossier->path, lobe->name, cube->path);
      return FALSE;
    }
  mask = efflux_lobe_mask_new (cube, lobe->ra_deg, lobe->dec_deg, lobe->n_vertices, what, error);
  if (mask == NULL)
    return FALSE;
  plane = g_malloc0 (n);
  for (gsize i = 0; i < mask->n_pixels; i++)
    plane[mask->index[i]] = 1;

  fits_create_img (f, BYTE_IMG, three_d ? 3 : 2, naxes, &status);
  fits_write_key_str (f, "EXTNAME", lobe->name, "the lobe's name in the dossier", &status);
  fits_write_key_str (f, "LOBEKIND", efflux_lobe_kind_name (lobe->kind), "blue or red", &status);
  fits_write_key_str (f, "LOBECUBE", lobe->cube_id, "the cube the lobe is drawn on", &status);
  fits_write_key_dbl (f, "LOBEV1", lobe->v1_kms, -15, "[km/s] velocity range, low end", &status);
  fits_write_key_dbl (f, "LOBEV2", lobe->v2_kms, -15, "[km/s] velocity range, high end", &status);
  put_sky_wcs (f, cube->sky, &status);
  if (three_d)
    {
      fits_write_key_str (f, "CTYPE3", "VRAD", "radio velocity (LSRK)", &status);
      fits_write_key_str (f, "CUNIT3", "m/s", NULL, &status);
      fits_write_key_dbl (f, "CRPIX3", 1.0, -17, NULL, &status);
      fits_write_key_dbl (f, "CRVAL3", cube->velocity[0] * 1000.0, -17, "[m/s] first channel", &status);
      fits_write_key_dbl (f, "CDELT3", cube->dv * 1000.0, -17, "[m/s] channel step", &status);
      fits_update_key_str (f, "SPECSYS", "LSRK", "velocities relative to the kinematic LSR", &status);
      if (cube->restfreq_hz > 0.0)
        fits_update_key_dbl (f, "RESTFRQ", cube->restfreq_hz, -17, "[Hz] rest frequency of the line", &status);
    }
  fits_write_comment (f, "1 = inside the lobe, 0 = outside (written by Efflux)", &status);

  if (!three_d)
    {
      LONGLONG first = 1;

      fits_write_img_byt (f, 1, first, (LONGLONG) n, plane, &status);
    }
  else
    {
      gboolean any = efflux_cube_channel_range (cube, lobe->v1_kms, lobe->v2_kms, &k_begin, &k_end);

      zero = g_malloc0 (n);
      for (gsize k = 0; k < cube->nchan && status == 0; k++)
        {
          long fpixel[3] = { 1, 1, (long) k + 1 };
          gboolean inside = any && k >= k_begin && k < k_end;

          fits_write_pix (f, TBYTE, fpixel, (LONGLONG) n, inside ? plane : zero, &status);
        }
    }
  if (status != 0)
    {
      g_autofree char *context = g_strdup_printf ("writing the mask of lobe %s", lobe->name);

      set_fits_error (error, path, context, status);
      return FALSE;
    }
  return TRUE;
}

gboolean
efflux_export_masks (const EffluxDossier *dossier,
                     GHashTable          *cubes,
                     gboolean             three_d,
                     const char          *path,
                     GError             **error)
{
  g_autofree char *tmp = NULL;
  g_autofree char *spec = NULL;
  fitsfile *f = NULL;
  int status = 0;
  gboolean ok = TRUE;

  if (dossier->lobes->len == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: the dossier has no [Lobe ...] group to export", dossier->path);
      return FALSE;
    }
  for (guint i = 0; i < dossier->lobes->len; i++)
    {
      const EffluxDossierLobe *l = g_ptr_array_index (dossier->lobes, i);

      if (g_hash_table_lookup (cubes, l->cube_id) == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                       "%s: [Lobe %s] cube: the cube '%s' is not loaded", dossier->path, l->name, l->cube_id);
          return FALSE;
        }
    }

  tmp = efflux_output_begin (path, error);
  if (tmp == NULL)
    return FALSE;
  spec = g_strconcat ("!", tmp, NULL);
  if (fits_create_file (&f, spec, &status) != 0)
    {
      set_fits_error (error, path, "creating the FITS file", status);
      efflux_output_abort (tmp);
      return FALSE;
    }
  fits_create_img (f, BYTE_IMG, 0, NULL, &status);
  fits_write_key_str (f, "ORIGIN", "Efflux", "lobe masks", &status);
  if (dossier->name != NULL)
    fits_write_key_str (f, "OBJECT", dossier->name, "the source", &status);
  fits_write_key_lng (f, "NLOBES", (LONGLONG) dossier->lobes->len, "one image extension per lobe", &status);
  fits_write_comment (f, three_d ? "3-D masks: pixel inside the outline and channel inside the velocity range"
                                 : "2-D masks: pixel centre inside the outline", &status);
  if (status != 0)
    {
      set_fits_error (error, path, "writing the primary header", status);
      ok = FALSE;
    }
  for (guint i = 0; ok && i < dossier->lobes->len; i++)
    {
      const EffluxDossierLobe *l = g_ptr_array_index (dossier->lobes, i);

      ok = write_lobe_hdu (f, dossier, l, g_hash_table_lookup (cubes, l->cube_id), three_d, path, error);
    }
  status = 0;
  fits_close_file (f, &status);
  if (ok && status != 0)
    {
      set_fits_error (error, path, "closing", status);
      ok = FALSE;
    }
  if (!ok)
    {
      efflux_output_abort (tmp);
      return FALSE;
    }
  return efflux_output_commit (tmp, path, error);
}

char *
efflux_stcs_polygon (const double *ra_deg,
                     const double *dec_deg,
                     gsize         n_vertices)
{
  GString *s = g_string_new ("Polygon ICRS TOPOCENTER");
  double area2 = 0.0, cosd;

  if (n_vertices == 0)
    return g_string_free (s, FALSE);
  /* Signed area on the sky seen from inside (east to the left): x = -dRA cos(dec0), y = dDec. */
  cosd = cos (dec_deg[0] * G_PI / 180.0);
  for (gsize i = 0; i < n_vertices; i++)
    {
      gsize j = (i + 1) % n_vertices;
      double xi = -remainder (ra_deg[i] - ra_deg[0], 360.0) * cosd, yi = dec_deg[i] - dec_deg[0];
      double xj = -remainder (ra_deg[j] - ra_deg[0], 360.0) * cosd, yj = dec_deg[j] - dec_deg[0];

      area2 += xi * yj - xj * yi;
    }
  for (gsize m = 0; m < n_vertices; m++)
    {
      gsize i = area2 >= 0.0 ? m : n_vertices - 1 - m;
      char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];

      g_string_append_printf (s, " %s %s",
                              g_ascii_formatd (a, sizeof a, "%.10f", ra_deg[i]),
                              g_ascii_formatd (b, sizeof b, "%.10f", dec_deg[i]));
    }
  return g_string_free (s, FALSE);
}

char *
efflux_export_stcs_text (const EffluxDossier *dossier)
{
  GString *s = g_string_new (NULL);

  for (guint i = 0; i < dossier->lobes->len; i++)
    {
      const EffluxDossierLobe *l = g_ptr_array_index (dossier->lobes, i);
      g_autofree char *line = efflux_stcs_polygon (l->ra_deg, l->dec_deg, l->n_vertices);
      char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];

      g_string_append_printf (s, "# %s kind=%s cube=%s velocity-kms=%s;%s\n%s\n", l->name,
                              efflux_lobe_kind_name (l->kind), l->cube_id,
                              g_ascii_formatd (a, sizeof a, "%.10g", l->v1_kms),
                              g_ascii_formatd (b, sizeof b, "%.10g", l->v2_kms), line);
    }
  return g_string_free (s, FALSE);
}

gboolean
efflux_export_stcs (const EffluxDossier *dossier,
                    const char          *path,
                    GError             **error)
{
  g_autofree char *text = NULL;

  if (dossier->lobes->len == 0)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: the dossier has no [Lobe ...] group to export", dossier->path);
      return FALSE;
    }
  text = efflux_export_stcs_text (dossier);
  return efflux_write_file_atomic (path, text, -1, error);
}
