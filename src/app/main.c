/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "config.h"

#include <glib/gi18n.h>
#include <locale.h>

#include "efflux-application.h"
#include "efflux-settings.h"

int
main (int    argc,
      char **argv)
{
  g_autoptr(EffluxApplication) app = NULL;

  /* locale, and translations from EFFLUX_LOCALEDIR when set (efflux-settings.h) */
  efflux_setup_gettext ();
  efflux_choose_renderer ();

  app = efflux_application_new ();
  return g_application_run (G_APPLICATION (app), argc, argv);
}
