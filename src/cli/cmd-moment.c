/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib/gi18n.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "efflux-cli.h"
#include "efflux-cube.h"
#include "efflux-fitsout.h"
#include "efflux-maps.h"
#include "efflux-momentstream.h"

static char *
format_number (double value)
{
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  return g_strdup (g_ascii_formatd (buf, sizeof buf, "%.10g", value));
}

int
efflux_cmd_moment (int    argc,
                   char **argv)
{
  g_autofree char *order_text = NULL;
  g_autofree char *range_text = NULL;
  g_autofree char *output = NULL;
  g_auto (GStrv) rest = NULL;
  double clip_sigma = 0.0, v1, v2;
  GOptionEntry entries[] = {
    { "order", 0, 0, G_OPTION_ARG_STRING, &order_text,
      N_("Which map: 0 (K km/s), 1 (km/s), 2 (dispersion, km/s) or peak (K)"), "0|1|2|peak" },
    { "range", 0, 0, G_OPTION_ARG_STRING, &range_text,
      N_("Channels whose centre velocity lies in [V1, V2] km/s, inclusive"), "V1:V2" },
    { "clip-sigma", 0, 0, G_OPTION_ARG_DOUBLE, &clip_sigma,
      N_("Leave out voxels below S x the channel rms (0: keep all)"), "S" },
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output, N_("The FITS map to write"), "OUT.fits" },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "CUBE" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("- write one moment map of a cube"));
  g_autoptr (EffluxCube) cube = NULL;
  g_autofree float *image = NULL;
  EffluxCubeLoadOptions load = { 0 };
  EffluxMomentOrder order;
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;
  gsize k0, k1;

  g_option_context_set_summary (context,
                                N_("Write one moment map of a cube over a velocity range, on the "
                                   "cube's sky grid."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;

  if (rest == NULL || g_strv_length (rest) != 1)
    return efflux_cli_usage ("moment", "expected exactly one CUBE");
  if (order_text == NULL)
    return efflux_cli_usage ("moment", "--order is required");
  if (!efflux_moment_order_parse (order_text, &order))
    return efflux_cli_usage ("moment", "--order '%s': expected 0, 1, 2 or peak", order_text);
  if (range_text == NULL)
    return efflux_cli_usage ("moment", "--range is required");
  if (!efflux_cli_parse_range (range_text, &v1, &v2))
    return efflux_cli_usage ("moment", "--range '%s': expected V1:V2 in km/s", range_text);
  if (output == NULL)
    return efflux_cli_usage ("moment", "-o OUT.fits is required");
  if (!isfinite (clip_sigma) || clip_sigma < 0.0)
    return efflux_cli_usage ("moment", "--clip-sigma %g: expected a number >= 0", clip_sigma);
  if (!efflux_cli_check_output ("-o", output, &status))
    return status;

  /* Without a clip, the map is summed straight from the file when its data allow (unscaled
   * float32, the spectral axis slowest): no cube in memory, the same map bitwise. Anything else
   * goes through the loaded cube below, which also gives the errors of the cases not streamed. */
  if (clip_sigma <= 0.0)
    {
      EffluxMomentStreamResult r = efflux_moment_stream_file (rest[0], 0, order, v1, v2, NULL,
                                                              &cube, &image, &error);

      if (r == EFFLUX_MOMENT_STREAM_FAILED)
        return efflux_cli_fail (error);
    }

  if (cube == NULL)
    {
      load.no_noise = clip_sigma <= 0.0;
      /* read only the channels of the range (and estimate the noise of those alone) */
      load.channel_subset = TRUE;
      load.v1_kms = v1;
      load.v2_kms = v2;
      cube = efflux_cube_load (rest[0], &load, NULL, NULL, NULL, &error);
      if (cube == NULL)
        return efflux_cli_fail (error);
    }

  if (!efflux_cube_channel_range (cube, v1, v2, &k0, &k1))
    {
      double a = cube->velocity[0], b = cube->velocity[cube->nchan - 1];

      g_set_error (&error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: --range %s: no channel centre lies in %g .. %g km/s "
                   "(the channels span %g .. %g km/s)",
                   rest[0], range_text, MIN (v1, v2), MAX (v1, v2), MIN (a, b), MAX (a, b));
      return efflux_cli_fail (error);
    }

  if (image == NULL)
    {
      image = g_try_new (float, cube->nx * cube->ny);
      if (image == NULL)
        {
          g_set_error (&error, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY, "%s: no memory for the map", rest[0]);
          return efflux_cli_fail (error);
        }
      if (!efflux_moment_map (cube, order, v1, v2, clip_sigma, image, &error))
        return efflux_cli_fail (error);
    }

  {
    g_autofree char *lo = format_number (MIN (v1, v2));
    g_autofree char *hi = format_number (MAX (v1, v2));
    g_autofree char *clip = format_number (clip_sigma);
    g_autofree char *order_lit = g_strdup_printf ("'%s'", efflux_moment_order_name (order));
    g_autofree char *nchan = g_strdup_printf ("%" G_GSIZE_FORMAT, k1 - k0);
    const char *cards[] = {
      "MOMENT", order_lit, "moment order: 0, 1, 2 or peak",
      "VRANGE1", lo, "[km/s] lowest channel-centre velocity allowed",
      "VRANGE2", hi, "[km/s] highest channel-centre velocity allowed",
      "MOMNCHAN", nchan, "channels in the range",
      "CLIPSIG", clip, "voxels below CLIPSIG x channel rms left out",
      NULL
    };

    if (!efflux_fits_write_sky_image (cube, image, efflux_moment_order_bunit (order), cards,
                                      output, &error))
      return efflux_cli_fail (error);
  }
  return EFFLUX_EXIT_OK;
}
