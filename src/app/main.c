/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib/gi18n.h>
#include <locale.h>

#include "efflux-application.h"

int
main (int    argc,
      char **argv)
{
  g_autoptr(EffluxApplication) app = NULL;

  setlocale (LC_ALL, "");
  /* EFFLUX_LOCALEDIR: translations not yet installed (the build tree's po/, used by the tests) */
  bindtextdomain (GETTEXT_PACKAGE, g_getenv ("EFFLUX_LOCALEDIR") != NULL ? g_getenv ("EFFLUX_LOCALEDIR") : LOCALEDIR);
  bind_textdomain_codeset (GETTEXT_PACKAGE, "UTF-8");
  textdomain (GETTEXT_PACKAGE);

  app = efflux_application_new ();
  return g_application_run (G_APPLICATION (app), argc, argv);
}
