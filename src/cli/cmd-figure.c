/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib/gi18n.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "efflux-cli.h"
#include "efflux-dossier.h"
#include "efflux-figure.h"

/* "NxM" (columns x rows), 1..12 each. */
static gboolean
parse_grid (const char *text,
            guint      *nx,
            guint      *ny)
{
  guint64 a, b;
  char *end = NULL;

  if (text == NULL || !g_ascii_isdigit (*text))
    return FALSE;
  a = g_ascii_strtoull (text, &end, 10);
  if (end == NULL || (*end != 'x' && *end != 'X') || !g_ascii_isdigit (end[1]))
    return FALSE;
  b = g_ascii_strtoull (end + 1, &end, 10);
  if (end == NULL || *end != '\0' || a < 1 || b < 1 || a > 12 || b > 12)
    return FALSE;
  *nx = (guint) a;
  *ny = (guint) b;
  return TRUE;
}

int
efflux_cmd_figure (int    argc,
                   char **argv)
{
  g_autofree char *view_text = NULL;
  g_autofree char *output = NULL;
  g_autofree char *cut = NULL;
  g_autofree char *lobe = NULL;
  g_autofree char *grid = NULL;
  g_autofree char *colormap = NULL;
  g_autofree char *stretch = NULL;
  g_autofree char *coords = NULL;
  g_autofree char *channel_range = NULL;
  g_autofree char *limits = NULL;
  g_auto (GStrv) rest = NULL;
  EffluxFigureOptions o;
  double width_mm = 120.0, height_mm = 0.0, dpi = 300.0, limits_percent = NAN;
  GOptionEntry entries[] = {
    { "view", 0, 0, G_OPTION_ARG_STRING, &view_text,
      N_("What to draw: sky, cut, spectrum, mass-velocity or channels"), "VIEW" },
    { "output", 'o', 0, G_OPTION_ARG_FILENAME, &output,
      N_("The file to write; its name gives the format (.png, .pdf, .svg)"), "OUT" },
    { "width-mm", 0, 0, G_OPTION_ARG_DOUBLE, &width_mm, N_("Width in millimetres (default 120)"), "W" },
    { "height-mm", 0, 0, G_OPTION_ARG_DOUBLE, &height_mm,
      N_("Height in millimetres (default: as the layout needs)"), "H" },
    { "dpi", 0, 0, G_OPTION_ARG_DOUBLE, &dpi, N_("Resolution of PNG output (default 300)"), "D" },
    { "cut", 0, 0, G_OPTION_ARG_STRING, &cut, N_("The cut of the cut view (default: the first)"), "NAME" },
    { "lobe", 0, 0, G_OPTION_ARG_STRING, &lobe, N_("Show only this lobe (default: all)"), "NAME" },
    { "grid", 0, 0, G_OPTION_ARG_STRING, &grid, N_("Channel maps: columns x rows (default 3x3)"), "NxM" },
    { "colormap", 0, 0, G_OPTION_ARG_STRING, &colormap,
      N_("cubehelix (default), grey or velocity"), "MAP" },
    { "stretch", 0, 0, G_OPTION_ARG_STRING, &stretch,
      N_("linear (default), sqrt, log or asinh"), "STRETCH" },
    { "coords", 0, 0, G_OPTION_ARG_STRING, &coords,
      N_("Sky axes: sexagesimal (default) or offsets from the source"), "STYLE" },
    { "channel-range", 0, 0, G_OPTION_ARG_STRING, &channel_range,
      N_("Channel maps: spread the panels over every channel from V1 to V2 km/s (default: over the "
         "lobes' velocity ranges)"), "V1:V2" },
    { "limits-percent", 0, 0, G_OPTION_ARG_DOUBLE, &limits_percent,
      N_("Colour limits keep this percentage of the values, 50 to 100 (default 99.5)"), "P" },
    { "limits", 0, 0, G_OPTION_ARG_STRING, &limits,
      N_("Fixed colour limits in the view's units: K km/s for sky, K for cut and channels"), "LO:HI" },
    { G_OPTION_REMAINING, 0, 0, G_OPTION_ARG_FILENAME_ARRAY, &rest, NULL, "DOSSIER" },
    { NULL }
  };
  g_autoptr (GOptionContext) context = g_option_context_new (N_("- draw a publication figure of a dossier"));
  g_autoptr (EffluxDossier) dossier = NULL;
  g_autoptr (EffluxFigure) figure = NULL;
  EffluxFigureFormat format;
  g_autofree char *caption = NULL;
  gboolean ok;
  GError *error = NULL;
  int status = EFFLUX_EXIT_OK;

  g_option_context_set_summary (context,
                                N_("Draw one view of a dossier for a paper: PNG at a resolution, or PDF and SVG "
                                   "as vector graphics. The caption (contour levels, ranges, units) is printed "
                                   "on standard output and drawn under the figure."));
  g_option_context_set_translation_domain (context, GETTEXT_PACKAGE);
  g_option_context_add_main_entries (context, entries, NULL);
  if (!efflux_cli_parse (context, &argc, &argv, &status))
    return status;

  efflux_figure_options_init (&o);
  if (rest == NULL || g_strv_length (rest) != 1)
    return efflux_cli_usage ("figure", "expected exactly one DOSSIER");
  if (view_text == NULL)
    return efflux_cli_usage ("figure", "--view is required");
  if (!efflux_figure_view_from_string (view_text, &o.view))
    return efflux_cli_usage ("figure", "--view '%s': expected sky, cut, spectrum, mass-velocity or channels",
                             view_text);
  if (output == NULL)
    return efflux_cli_usage ("figure", "-o OUT.png|OUT.pdf|OUT.svg is required");
  if (!efflux_figure_format_from_path (output, &format))
    return efflux_cli_usage ("figure", "-o %s: the name must end in .png, .pdf or .svg", output);
  if (!isfinite (width_mm) || width_mm <= 0 || width_mm > 2000)
    return efflux_cli_usage ("figure", "--width-mm %g: expected 0 < W <= 2000", width_mm);
  if (!isfinite (height_mm) || height_mm < 0 || height_mm > 2000)
    return efflux_cli_usage ("figure", "--height-mm %g: expected 0 (automatic) to 2000", height_mm);
  if (!isfinite (dpi) || dpi < 10 || dpi > 2400)
    return efflux_cli_usage ("figure", "--dpi %g: expected 10 to 2400", dpi);
  if (grid != NULL && !parse_grid (grid, &o.grid_nx, &o.grid_ny))
    return efflux_cli_usage ("figure", "--grid '%s': expected NxM, 1 to 12 each", grid);
  if (colormap != NULL && !efflux_colormap_kind_from_string (colormap, &o.colormap))
    return efflux_cli_usage ("figure", "--colormap '%s': expected cubehelix, grey or velocity", colormap);
  if (stretch != NULL && !efflux_stretch_kind_from_string (stretch, &o.stretch))
    return efflux_cli_usage ("figure", "--stretch '%s': expected linear, sqrt, log or asinh", stretch);
  if (coords != NULL)
    {
      if (strcmp (coords, "sexagesimal") == 0)
        o.coords = EFFLUX_SKYGRID_SEXAGESIMAL;
      else if (strcmp (coords, "offsets") == 0)
        o.coords = EFFLUX_SKYGRID_OFFSETS;
      else
        return efflux_cli_usage ("figure", "--coords '%s': expected sexagesimal or offsets", coords);
    }
  if (channel_range != NULL
      && (!efflux_cli_parse_range (channel_range, &o.channel_v1_kms, &o.channel_v2_kms)
          || !(o.channel_v1_kms < o.channel_v2_kms)))
    return efflux_cli_usage ("figure", "--channel-range '%s': expected V1:V2 in km/s with V1 < V2", channel_range);
  if (channel_range != NULL && o.view != EFFLUX_FIGURE_CHANNELS)
    return efflux_cli_usage ("figure", "--channel-range: only for --view channels");
  if (!isnan (limits_percent) && (!isfinite (limits_percent) || limits_percent < 50.0 || limits_percent > 100.0))
    return efflux_cli_usage ("figure", "--limits-percent %g: expected 50 to 100", limits_percent);
  if (limits != NULL && (!efflux_cli_parse_range (limits, &o.limit_lo, &o.limit_hi) || !(o.limit_lo < o.limit_hi)))
    return efflux_cli_usage ("figure", "--limits '%s': expected LO:HI with LO < HI", limits);
  if ((limits != NULL || !isnan (limits_percent))
      && (o.view == EFFLUX_FIGURE_SPECTRUM || o.view == EFFLUX_FIGURE_MASS_VELOCITY))
    return efflux_cli_usage ("figure", "%s: only for the views with a colour scale (sky, cut, channels)",
                             limits != NULL ? "--limits" : "--limits-percent");
  if (!efflux_cli_check_output ("-o", output, &status))
    return status;
  if (!isnan (limits_percent))
    o.limits_percent = limits_percent;
  o.width_mm = width_mm;
  o.height_mm = height_mm;
  o.dpi = dpi;
  o.cut = cut;
  o.lobe = lobe;

  dossier = efflux_dossier_load (rest[0], &error);
  if (dossier == NULL)
    return efflux_cli_fail (error);
  figure = efflux_figure_new (dossier, &error);
  if (figure == NULL)
    return efflux_cli_fail (error);
  ok = efflux_figure_write (figure, &o, output, &error);
  caption = g_strdup (efflux_figure_caption (figure));
  g_clear_pointer (&figure, efflux_figure_free);
  efflux_figure_release_fonts ();
  if (!ok)
    return efflux_cli_fail (error);
  {
    g_autofree char *line = g_strconcat (caption, "\n", NULL);

    return efflux_cli_write_stdout (line, -1);
  }
}
