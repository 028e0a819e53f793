/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib/gi18n.h>

#include <math.h>
#include <stdio.h>

#include "efflux-cli.h"
#include "efflux-cube.h"
#include "efflux-pv.h"

int
efflux_cmd_pv (int    argc,
               char **argv)
{
  g_autofree char *path_text = NULL;
  g_autofree char *output = NULL;
  g_autofree double *ra_dec = NULL;
  g_auto (GStrv) rest = NULL;
  double width = 0.0;
  gsize n_vertices = 0;
  GOptionEntry entries[] = {
    { "path", 0, 0, G_OPTION_ARG_STRING, &path_text,
      N_("The cut's vertices, ICRS degrees"), "RA1,DEC1;RA2,DEC2[;...]" },
    { "width-arcsec", 0, 0, G_OPTION_ARG_DOUBLE, &width,
      N_("Average across the path over this width (0: the central sample only)"), "W" },
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output, N_("The FITS diagram to write"), "OUT.fits" },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "CUBE" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("- write a position-velocity diagram"));
  g_autoptr (EffluxCube) cube = NULL;
  g_autoptr (EffluxPv) pv = NULL;
  EffluxCubeLoadOptions load = { 0 };
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;

  g_option_context_set_summary (context,
                                N_("Write a position-velocity diagram along a polyline: axis 1 the "
                                   "offset from the first vertex (arcsec), axis 2 the velocity (km/s)."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;

  if (rest == NULL || g_strv_length (rest) != 1)
    return efflux_cli_usage ("pv", "expected exactly one CUBE");
  if (path_text == NULL)
    return efflux_cli_usage ("pv", "--path is required");
  if (output == NULL)
    return efflux_cli_usage ("pv", "-o OUT.fits is required");
  /* a malformed option value is wrong usage (2), like every option GLib cannot parse */
  if (!efflux_pv_path_parse (path_text, &ra_dec, &n_vertices, &error))
    {
      g_autoptr (GError) local = error;

      return efflux_cli_usage ("pv", "--path %s", local->message);
    }
  if (!isfinite (width) || width < 0.0)
    return efflux_cli_usage ("pv", "--width-arcsec %g: expected a width >= 0", width);
  if (!efflux_cli_check_output ("-o", output, &status))
    return status;

  load.no_noise = TRUE;
  cube = efflux_cube_load (rest[0], &load, NULL, NULL, NULL, &error);
  if (cube == NULL)
    return efflux_cli_fail (error);
  pv = efflux_pv_cut (cube, ra_dec, n_vertices, width, &error);
  if (pv == NULL)
    return efflux_cli_fail (error);
  if (!efflux_pv_write_fits (pv, "K", output, &error))
    return efflux_cli_fail (error);
  return EFFLUX_EXIT_OK;
}
