/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (xvfb-run), a second language: run with LANGUAGE=es, LC_ALL=C.UTF-8 and
 * EFFLUX_LOCALEDIR pointing at the build tree's po/ (tests/desktop/meson.build). On this machine
 * glibc's gettext honours LANGUAGE over C.UTF-8 but not over the plain "C" or "POSIX" locale, so
 * the locale is C.UTF-8 (the only UTF-8 locale a bare Debian has). The window's labels, the help
 * and `efflux-cli --help` (and a command's --help) must speak Spanish: the strings checked are
 * those of po/es.po, and each is checked to differ from its English original. */
#include "config.h"

#include <glib/gi18n.h>
#include <gtk/gtk.h>
#include <string.h>

#include "efflux-application.h"
#include "efflux-help.h"
#include "efflux-settings.h"
#include "efflux-window.h"

static void
collect_texts (GtkWidget *widget,
               GString   *text)
{
  const char *tooltip = gtk_widget_get_tooltip_text (widget);

  if (GTK_IS_LABEL (widget))
    g_string_append_printf (text, "%s\n", gtk_label_get_text (GTK_LABEL (widget)));
  if (tooltip != NULL)
    g_string_append_printf (text, "%s\n", tooltip);
  for (GtkWidget *child = gtk_widget_get_first_child (widget);
       child != NULL;
       child = gtk_widget_get_next_sibling (child))
    collect_texts (child, text);
}

static void
test_catalogue (void)
{
  const char *dir = g_getenv ("EFFLUX_LOCALEDIR");
  g_autofree char *mo = NULL;

  g_assert_nonnull (dir);
  mo = g_build_filename (dir, "es", "LC_MESSAGES", GETTEXT_PACKAGE ".mo", NULL);
  g_assert_true (g_file_test (mo, G_FILE_TEST_IS_REGULAR));
  g_assert_cmpstr (g_getenv ("LANGUAGE"), ==, "es");
  /* the catalogue is the one in use */
  g_assert_cmpstr (_("Spectrum"), ==, "Espectro");
  g_assert_cmpstr (ngettext ("%u lobe", "%u lobes", 3), ==, "%u lóbulos");
}

static void
test_window (void)
{
  EffluxWindow *window = efflux_window_new (NULL);
  g_autoptr(GString) text = g_string_new (NULL);
  static const struct { const char *english, *spanish; } expected[] = {
    { "Spectrum", "Espectro" },
    { "Cut", "Corte" },
    { "Ledger", "Balance" },
    { "Sources", "Fuentes" },
    { "Pan", "Mover" },
    { "Open a dossier or a FITS cube", "Abra un expediente o un cubo FITS" },
    { "Pan and zoom the map (P)", "Mover y ampliar el mapa (P)" },
  };

  gtk_window_present (GTK_WINDOW (window));
  collect_texts (GTK_WIDGET (window), text);
  g_test_message ("%s", text->str);
  for (gsize i = 0; i < G_N_ELEMENTS (expected); i++)
    {
      g_autofree char *line = g_strdup_printf ("%s\n", expected[i].spanish);
      g_autofree char *english = g_strdup_printf ("\n%s\n", expected[i].english);

      g_assert_cmpstr (expected[i].spanish, !=, expected[i].english);
      g_assert_nonnull (strstr (text->str, line));
      g_assert_null (strstr (text->str, english));
    }
  gtk_window_destroy (GTK_WINDOW (window));
}

static void
test_help (void)
{
  GtkWidget *help = efflux_help_window_new (NULL, "cautions");
  g_autofree char *cautions = NULL;
  g_autofree char *quantities = NULL;

  g_assert_cmpstr (gtk_window_get_title (GTK_WINDOW (help)), ==, "Ayuda de Efflux");
  cautions = efflux_help_window_get_text (EFFLUX_HELP_WINDOW (help), "cautions");
  quantities = efflux_help_window_get_text (EFFLUX_HELP_WINDOW (help), "quantities");
  g_test_message ("%s", cautions);
  g_assert_nonnull (strstr (cautions, "Temperatura de excitación."));
  g_assert_nonnull (strstr (cautions, "Flujo perdido"));
  g_assert_null (strstr (cautions, "Excitation temperature"));
  /* the formulas and their sources stay as written */
  g_assert_nonnull (strstr (quantities, "Mangum & Shirley 2015, PASP 127, 266"));
  g_assert_nonnull (strstr (quantities, "Densidad de columna."));
  gtk_window_destroy (GTK_WINDOW (help));
}

static char *
run_cli (const char * const *args,
         int                *status)
{
  const char *cli = g_getenv ("EFFLUX_CLI");
  g_autoptr(GPtrArray) argv = g_ptr_array_new ();
  g_autoptr(GError) error = NULL;
  char *out = NULL;

  g_assert_nonnull (cli);
  g_ptr_array_add (argv, (gpointer) cli);
  for (gsize i = 0; args[i] != NULL; i++)
    g_ptr_array_add (argv, (gpointer) args[i]);
  g_ptr_array_add (argv, NULL);
  /* the child inherits LANGUAGE, LC_ALL and EFFLUX_LOCALEDIR */
  g_assert_true (g_spawn_sync (NULL, (char **) argv->pdata, NULL, G_SPAWN_DEFAULT, NULL, NULL,
                               &out, NULL, status, &error));
  g_assert_no_error (error);
  return out;
}

static void
test_cli_help (void)
{
  static const char *help[] = { "--help", NULL };
  static const char *info_help[] = { "info", "--help", NULL };
  g_autofree char *out = NULL;
  g_autofree char *info = NULL;
  int status = -1;

  out = run_cli (help, &status);
  g_test_message ("%s", out);
  g_assert_true (g_spawn_check_wait_status (status, NULL));
  g_assert_nonnull (strstr (out, "Uso: efflux-cli ORDEN [OPCIÓN…]"));
  g_assert_nonnull (strstr (out, "Órdenes:"));
  g_assert_nonnull (strstr (out, "describe un cubo FITS"));
  g_assert_null (strstr (out, "Usage:"));
  g_assert_null (strstr (out, "describe a FITS cube"));

  info = run_cli (info_help, &status);
  g_test_message ("%s", info);
  g_assert_true (g_spawn_check_wait_status (status, NULL));
  /* GOption's own words come from GLib's catalogue (not always installed); ours from efflux.mo */
  g_assert_nonnull (strstr (info, "Imprimir un objeto JSON"));
  g_assert_null (strstr (info, "Print one JSON object"));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  efflux_setup_gettext ();
  g_test_add_func ("/i18n/catalogue", test_catalogue);
  g_test_add_func ("/i18n/window", test_window);
  g_test_add_func ("/i18n/help", test_help);
  g_test_add_func ("/i18n/cli-help", test_cli_help);
  return g_test_run ();
}
