/* SPDX-License-Identifier: GPL-3.0-or-later */
/* efflux-cli info CUBE [--json]: describe a FITS cube as read by efflux_cube_load. */
#include "config.h"

#include <glib/gi18n.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "efflux-cli.h"
#include "efflux-cube.h"
#include "efflux-sky.h"

static const char *
brightness_name (EffluxBrightnessUnit kind)
{
  switch (kind)
    {
    case EFFLUX_BUNIT_K: return "K";
    case EFFLUX_BUNIT_JY_BEAM: return "Jy/beam";
    case EFFLUX_BUNIT_JY_PIXEL: return "Jy/pixel";
    case EFFLUX_BUNIT_MISSING: return "K";
    case EFFLUX_BUNIT_OTHER:
    default: return "other";
    }
}

static int
compare_float (const void *a,
               const void *b)
{
  float x = *(const float *) a, y = *(const float *) b;

  return (x > y) - (x < y);
}

static double
median_rms (const EffluxCube *cube)
{
  g_autofree float *v = g_new (float, cube->nchan);
  gsize n = 0;

  for (gsize k = 0; k < cube->nchan; k++)
    if (isfinite (cube->rms[k]))
      v[n++] = cube->rms[k];
  if (n == 0)
    return NAN;
  qsort (v, n, sizeof (float), compare_float);
  return n % 2 ? v[n / 2] : 0.5 * ((double) v[n / 2 - 1] + (double) v[n / 2]);
}

static char *
info_json (const EffluxCube *cube,
           double            ra,
           double            dec,
           double            rms)
{
  GString *s = g_string_new ("{");

  g_string_append_printf (s, "\"file\": ");
  efflux_json_string (s, cube->path);
  g_string_append_printf (s, ", \"hdu\": %d", cube->hdu);
  g_string_append_printf (s, ", \"nx\": %" G_GSIZE_FORMAT ", \"ny\": %" G_GSIZE_FORMAT
                          ", \"nchan\": %" G_GSIZE_FORMAT, cube->nx, cube->ny, cube->nchan);
  g_string_append (s, ", \"velocity_kms\": [");
  efflux_json_number (s, cube->velocity[0]);
  g_string_append (s, ", ");
  efflux_json_number (s, cube->velocity[cube->nchan - 1]);
  g_string_append (s, ", ");
  efflux_json_number (s, cube->dv);
  g_string_append (s, "], \"restfreq_hz\": ");
  efflux_json_number (s, cube->restfreq_hz > 0.0 ? cube->restfreq_hz : NAN);
  g_string_append (s, ", \"bunit\": ");
  efflux_json_string (s, cube->bunit);
  g_string_append (s, ", \"brightness\": ");
  efflux_json_string (s, brightness_name (cube->bunit_kind));
  g_string_append (s, ", \"beam_arcsec\": ");
  if (cube->has_beam)
    {
      g_string_append (s, "[");
      efflux_json_number (s, cube->bmaj_arcsec);
      g_string_append (s, ", ");
      efflux_json_number (s, cube->bmin_arcsec);
      g_string_append (s, ", ");
      efflux_json_number (s, cube->bpa_deg);
      g_string_append (s, "]");
    }
  else
    g_string_append (s, "null");
  g_string_append (s, ", \"pixel_arcsec\": [");
  efflux_json_number (s, cube->pixel_arcsec[0]);
  g_string_append (s, ", ");
  efflux_json_number (s, cube->pixel_arcsec[1]);
  g_string_append (s, "], \"center_deg\": [");
  efflux_json_number (s, ra);
  g_string_append (s, ", ");
  efflux_json_number (s, dec);
  g_string_append (s, "], \"spectral_type\": ");
  efflux_json_string (s, cube->spectral_ctype);
  g_string_append (s, ", \"frame\": ");
  efflux_json_string (s, efflux_sky_frame_name (cube->frame));
  g_string_append (s, ", \"specsys\": ");
  efflux_json_string (s, cube->specsys);
  g_string_append (s, ", \"object\": ");
  if (cube->object != NULL)
    efflux_json_string (s, cube->object);
  else
    g_string_append (s, "null");
  g_string_append (s, ", \"rms_median_k\": ");
  efflux_json_number (s, rms);
  g_string_append (s, ", \"notes\": [");
  for (guint i = 0; i < cube->notes->len; i++)
    {
      if (i > 0)
        g_string_append (s, ", ");
      efflux_json_string (s, g_ptr_array_index (cube->notes, i));
    }
  g_string_append (s, "]}\n");
  return g_string_free (s, FALSE);
}

static char *
info_text (const EffluxCube *cube,
           double            ra,
           double            dec,
           double            rms)
{
  GString *s = g_string_new (NULL);

#define ROW(label, ...) G_STMT_START { \
    g_string_append_printf (s, "%-16s ", label); \
    g_string_append_printf (s, __VA_ARGS__); \
    g_string_append_c (s, '\n'); } G_STMT_END

  ROW ("file", "%s (HDU %d)", cube->path, cube->hdu);
  if (cube->object != NULL && cube->object[0])
    ROW ("object", "%s", cube->object);
  ROW ("size", "%" G_GSIZE_FORMAT " x %" G_GSIZE_FORMAT " pixels x %" G_GSIZE_FORMAT " channels",
       cube->nx, cube->ny, cube->nchan);
  ROW ("centre (ICRS)", "RA %.7f deg, Dec %+.7f deg", ra, dec);
  ROW ("sky frame", "%s", efflux_sky_frame_name (cube->frame));
  ROW ("pixel", "%.4f\" x %.4f\"", cube->pixel_arcsec[0], cube->pixel_arcsec[1]);
  ROW ("spectral axis", "%s (%s in the file)", cube->spectral_ctype, cube->specsys);
  ROW ("velocity", "%.4f to %.4f km/s, step %+.5f km/s (LSRK, radio)", cube->velocity[0],
       cube->velocity[cube->nchan - 1], cube->dv);
  if (cube->restfreq_hz > 0.0)
    ROW ("rest frequency", "%.9g GHz", cube->restfreq_hz / 1e9);
  else
    ROW ("rest frequency", "none given");
  ROW ("brightness", "%s (BUNIT '%s')", brightness_name (cube->bunit_kind), cube->bunit);
  if (cube->has_beam)
    ROW ("beam", "%.3f\" x %.3f\", PA %.1f deg", cube->bmaj_arcsec, cube->bmin_arcsec, cube->bpa_deg);
  else
    ROW ("beam", "none");
  if (isfinite (rms))
    ROW ("noise", "%.4g K (median of the per-channel rms)", rms);
  for (guint i = 0; i < cube->notes->len; i++)
    ROW (i == 0 ? "notes" : "", "%s", (char *) g_ptr_array_index (cube->notes, i));
#undef ROW
  return g_string_free (s, FALSE);
}

int
efflux_cmd_info (int    argc,
                 char **argv)
{
  gboolean json = FALSE;
  int hdu = 0;
  g_auto(GStrv) files = NULL;
  GOptionEntry entries[] = {
    { "json", 0, 0, G_OPTION_ARG_NONE, &json, N_("Print one JSON object"), NULL },
    { "hdu", 0, 0, G_OPTION_ARG_INT, &hdu, N_("Read this HDU (1-based; default: the first holding a cube)"), "N" },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &files, NULL, "CUBE" },
    { NULL, 0, 0, 0, NULL, NULL, NULL },
  };
  g_autoptr(GOptionContext) context = g_option_context_new (N_("CUBE"));
  EffluxCubeLoadOptions options = { 0 };
  g_autoptr(EffluxCube) cube = NULL;
  GError *error = NULL;
  g_autofree char *text = NULL;
  double ra = NAN, dec = NAN, rms;
  int status = 0;

  g_option_context_set_summary (context,
                                N_("Describe a FITS cube: axes, sizes, sky and velocity axes, units, beam,\n"
                                   "rest frequency and noise estimate, as Efflux reads it."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;
  if (files == NULL || files[0] == NULL)
    return efflux_cli_usage ("info", "no CUBE given");
  if (files[1] != NULL)
    return efflux_cli_usage ("info", "one CUBE only (got '%s' too)", files[1]);
  if (hdu < 0)
    return efflux_cli_usage ("info", "--hdu must be 1 or more");
  options.hdu = hdu;

  cube = efflux_cube_load (files[0], &options, NULL, NULL, NULL, &error);
  if (cube == NULL)
    return efflux_cli_fail (error);
  efflux_cube_pixel_to_icrs (cube, ((double) cube->nx - 1.0) / 2.0, ((double) cube->ny - 1.0) / 2.0, &ra, &dec);
  rms = median_rms (cube);
  text = json ? info_json (cube, ra, dec, rms) : info_text (cube, ra, dec, rms);
  return efflux_cli_write_stdout (text, -1);
}
