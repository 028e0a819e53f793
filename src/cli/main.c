/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib.h>
#include <glib/gi18n.h>
#include <gmodule.h>
#include <locale.h>
#include <signal.h>
#include <stdio.h>
#include <string.h>

#include "efflux-cli.h"

typedef struct
{
  const char *name;
  int       (*run) (int argc, char **argv);
  const char *summary;
} Command;

static int run_figure (int argc, char **argv);
static int run_report (int argc, char **argv);

static const Command commands[] = {
  { "info", efflux_cmd_info, N_("describe a FITS cube: axes, velocity, units, beam, noise") },
  { "moment", efflux_cmd_moment, N_("write a moment map (0, 1, 2 or peak) over a velocity range") },
  { "pv", efflux_cmd_pv, N_("write a position-velocity diagram along a polyline") },
  { "synth", efflux_cmd_synth, N_("write synthetic outflow cubes, their truth and a dossier from a recipe") },
  { "measure", efflux_cmd_measure, N_("measure every lobe of dossiers: mass, momentum, energy, rates, errors") },
  { "merge", efflux_cmd_merge, N_("join the csv parts of a sharded measurement (measure --shard K/N)") },
  { "compare", efflux_cmd_compare, N_("compare two dossiers of one source lobe by lobe: overlap, velocities, ratios") },
  { "export", efflux_cmd_export, N_("export the lobes as FITS masks (2-D, 3-D) or IVOA STC-S polygons") },
  { "figure", run_figure, N_("draw a publication figure of a dossier (PNG, PDF or SVG)") },
  { "report", run_report, N_("write the per-source report with a reviewer's sign-off page (PDF)") },
  { "shellfit", efflux_cmd_shellfit, N_("fit a wind-driven shell to a cut's PV emission: inclination, age") },
  { "knots", efflux_cmd_knots, N_("find the knots along a jet cut: offsets, velocities, ages, intervals") },
  { "budget", efflux_cmd_budget, N_("outflow energy and momentum against the cloud's turbulence and binding") },
};

/* The drawing commands' module: beside this program (the build tree), else where it is
 * installed. */
static int
run_module_command (const char *command,
                    const char *symbol,
                    int         argc,
                    char      **argv)
{
  g_autofree char *self = g_file_read_link ("/proc/self/exe", NULL);
  g_autofree char *here = self != NULL ? g_path_get_dirname (self) : NULL;
  g_autofree char *beside = here != NULL ? g_module_build_path (here, "efflux-cli-render") : NULL;
  g_autofree char *installed = g_module_build_path (EFFLUX_CLI_MODULEDIR, "efflux-cli-render");
  const char *path = beside != NULL && g_file_test (beside, G_FILE_TEST_IS_REGULAR) ? beside : installed;
  GModule *module = g_module_open (path, G_MODULE_BIND_LOCAL);
  int (*run) (int, char **) = NULL;

  if (module == NULL || !g_module_symbol (module, symbol, (gpointer *) &run) || run == NULL)
    {
      fprintf (stderr, "efflux-cli: error: %s: %s\n", command,
               module == NULL ? g_module_error () : "the module has no such command");
      return 1;
    }
  /* the module stays loaded until the process ends (its fonts and caches with it) */
  g_module_make_resident (module);
  return run (argc, argv);
}

static int
run_figure (int    argc,
            char **argv)
{
  return run_module_command ("figure", "efflux_cmd_figure", argc, argv);
}

static int
run_report (int    argc,
            char **argv)
{
  return run_module_command ("report", "efflux_cmd_report", argc, argv);
}

static void
print_help (FILE *out)
{
  fprintf (out, "%s\n\n%s\n\n%s\n",
           _("Usage: efflux-cli COMMAND [OPTION…]"),
           _("Measure protostellar outflows in spectral-line cubes, headless."),
           _("Commands:"));
  for (gsize i = 0; i < G_N_ELEMENTS (commands); i++)
    fprintf (out, "  %-10s %s\n", commands[i].name, _(commands[i].summary));
  fprintf (out, "\n%s\n",
           _("Every command accepts --help. Exit status: 0 success, 1 input refused, 2 wrong usage."));
}

int
main (int    argc,
      char **argv)
{
  setlocale (LC_ALL, "");
  /* EFFLUX_LOCALEDIR: translations not installed yet (the build tree's po/, used by the tests) */
  bindtextdomain (GETTEXT_PACKAGE, g_getenv ("EFFLUX_LOCALEDIR") != NULL && *g_getenv ("EFFLUX_LOCALEDIR") != '\0'
                                   ? g_getenv ("EFFLUX_LOCALEDIR") : LOCALEDIR);
  bind_textdomain_codeset (GETTEXT_PACKAGE, "UTF-8");
  textdomain (GETTEXT_PACKAGE);
  /* A closed pipe must give an error, never a death by signal. */
  signal (SIGPIPE, SIG_IGN);
  g_set_prgname ("efflux-cli");

  if (argc < 2)
    {
      print_help (stderr);
      return 2;
    }
  if (strcmp (argv[1], "--help") == 0 || strcmp (argv[1], "-h") == 0 || strcmp (argv[1], "help") == 0)
    {
      print_help (stdout);
      return 0;
    }
  if (strcmp (argv[1], "--version") == 0)
    {
      printf ("efflux-cli %s\n", PACKAGE_VERSION);
      return 0;
    }
  for (gsize i = 0; i < G_N_ELEMENTS (commands); i++)
    if (strcmp (argv[1], commands[i].name) == 0)
      return commands[i].run (argc - 1, argv + 1);

  fprintf (stderr, "efflux-cli: error: unknown command '%s' (see 'efflux-cli --help')\n", argv[1]);
  return 2;
}
