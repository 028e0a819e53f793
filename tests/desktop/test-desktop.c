/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (xvfb-run): the GSettings of the program (schema compiled into the build tree, found
 * through EFFLUX_SCHEMA_DIR, memory backend) and their binding to the Sky view both ways; the
 * recent-files list; app.help on F1 and the help window's pages (the job, the workflow, every
 * measured quantity with its formula and published source, the cautions); the action icons
 * found through the GResource by the icon theme. The sources named in the help are those of
 * /work/shared/REFERENCES.md and CONTRACT.md section 4 (Mangum & Shirley 2015, PASP 127, 266;
 * Langer & Penzias 1993; Kauffmann et al. 2008; Dunham et al. 2014; Downes & Cabrit 2007). */
#include "config.h"

#include <glib/gstdio.h>
#include <gtk/gtk.h>
#include <string.h>

#include "efflux-application.h"
#include "efflux-help.h"
#include "efflux-settings.h"
#include "efflux-sky-view.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"

static char *
get_string (gpointer    object,
            const char *property)
{
  char *value = NULL;

  g_object_get (object, property, &value, NULL);
  return value;
}

static void
test_schema_defaults (void)
{
  g_autoptr(GSettings) settings = efflux_settings_new ();
  g_autofree char *colormap = NULL;
  g_autofree char *stretch = NULL;
  g_autofree char *style = NULL;
  g_auto(GStrv) recent = NULL;

  /* found in the build tree's ui/ (EFFLUX_SCHEMA_DIR), not installed */
  g_assert_nonnull (settings);
  colormap = g_settings_get_string (settings, "colormap");
  stretch = g_settings_get_string (settings, "stretch");
  style = g_settings_get_string (settings, "coordinate-style");
  recent = g_settings_get_strv (settings, "recent-files");
  /* the defaults are the Sky view's own property defaults */
  g_assert_cmpstr (colormap, ==, "cubehelix");
  g_assert_cmpstr (stretch, ==, "linear");
  g_assert_cmpstr (style, ==, "sexagesimal");
  g_assert_cmpuint (g_strv_length (recent), ==, 0);
  /* each nick of the enums is a value the Sky view takes */
  {
    g_autoptr(GSettingsSchema) schema = NULL;
    g_autoptr(GSettingsSchemaKey) colormap_key = NULL;
    g_autoptr(GSettingsSchemaKey) style_key = NULL;
    g_autoptr(GVariant) velocity = g_variant_ref_sink (g_variant_new_string ("velocity"));
    g_autoptr(GVariant) rainbow = g_variant_ref_sink (g_variant_new_string ("rainbow"));
    g_autoptr(GVariant) offsets = g_variant_ref_sink (g_variant_new_string ("offsets"));

    g_object_get (settings, "settings-schema", &schema, NULL);
    colormap_key = g_settings_schema_get_key (schema, "colormap");
    style_key = g_settings_schema_get_key (schema, "coordinate-style");
    g_assert_true (g_settings_schema_key_range_check (colormap_key, velocity));
    g_assert_false (g_settings_schema_key_range_check (colormap_key, rainbow));
    g_assert_true (g_settings_schema_key_range_check (style_key, offsets));
  }
}

static void
test_bind_sky_view (void)
{
  g_autoptr(GSettings) settings = efflux_settings_new ();
  GtkWidget *view = g_object_ref_sink (efflux_sky_view_new ());
  g_autofree char *value = NULL;

  g_assert_nonnull (settings);
  g_settings_set_string (settings, "colormap", "grey");
  efflux_settings_bind_sky_view (settings, view);

  /* settings -> view, at binding time and later */
  value = get_string (view, "colormap");
  g_assert_cmpstr (value, ==, "grey");
  g_clear_pointer (&value, g_free);
  g_settings_set_string (settings, "coordinate-style", "offsets");
  value = get_string (view, "grid");
  g_assert_cmpstr (value, ==, "offsets");
  g_clear_pointer (&value, g_free);

  /* view -> settings */
  g_object_set (view, "stretch", "asinh", NULL);
  value = g_settings_get_string (settings, "stretch");
  g_assert_cmpstr (value, ==, "asinh");
  g_clear_pointer (&value, g_free);
  g_object_set (view, "colormap", "velocity", "grid", "none", NULL);
  value = g_settings_get_string (settings, "colormap");
  g_assert_cmpstr (value, ==, "velocity");
  g_clear_pointer (&value, g_free);
  value = g_settings_get_string (settings, "coordinate-style");
  g_assert_cmpstr (value, ==, "none");

  g_object_unref (view);
  g_settings_reset (settings, "colormap");
  g_settings_reset (settings, "stretch");
  g_settings_reset (settings, "coordinate-style");
}

static void
test_recent_files (void)
{
  g_autoptr(GSettings) settings = efflux_settings_new ();
  g_auto(GStrv) recent = NULL;

  g_assert_nonnull (settings);
  g_settings_reset (settings, "recent-files");
  for (int i = 0; i < 12; i++)
    {
      g_autofree char *path = g_strdup_printf ("/data/source-%02d.efflux", i);
      efflux_settings_add_recent (settings, path);
    }
  recent = g_settings_get_strv (settings, "recent-files");
  /* the newest first, cut to the maximum */
  g_assert_cmpuint (g_strv_length (recent), ==, EFFLUX_SETTINGS_MAX_RECENT);
  g_assert_cmpstr (recent[0], ==, "/data/source-11.efflux");
  g_assert_cmpstr (recent[9], ==, "/data/source-02.efflux");
  g_clear_pointer (&recent, g_strfreev);

  /* opening one again moves it to the front, once */
  efflux_settings_add_recent (settings, "/data/source-05.efflux");
  recent = g_settings_get_strv (settings, "recent-files");
  g_assert_cmpuint (g_strv_length (recent), ==, EFFLUX_SETTINGS_MAX_RECENT);
  g_assert_cmpstr (recent[0], ==, "/data/source-05.efflux");
  g_assert_cmpstr (recent[1], ==, "/data/source-11.efflux");
  for (guint i = 1; recent[i] != NULL; i++)
    g_assert_cmpstr (recent[i], !=, "/data/source-05.efflux");
  g_settings_reset (settings, "recent-files");
}

static void
test_recent_manager (void)
{
  g_autoptr(GSettings) settings = efflux_settings_new ();
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-desktop-XXXXXX", &error);
  g_autofree char *store = NULL;
  g_autofree char *dossier = NULL;
  g_autofree char *note = NULL;
  g_autofree char *uri = NULL;
  g_autofree char *note_uri = NULL;
  g_auto(GStrv) recent = NULL;
  GtkRecentManager *manager;
  gint64 deadline;

  g_assert_no_error (error);
  g_assert_nonnull (settings);
  g_settings_reset (settings, "recent-files");
  /* a recent-files store of our own in a temporary folder, never the user's */
  store = g_build_filename (dir, "recently-used.xbel", NULL);
  dossier = g_build_filename (dir, "outflow.efflux", NULL);
  note = g_build_filename (dir, "notes.txt", NULL);
  g_assert_true (g_file_set_contents (dossier, "[Source]\n", -1, NULL));
  g_assert_true (g_file_set_contents (note, "text\n", -1, NULL));
  manager = g_object_new (GTK_TYPE_RECENT_MANAGER, "filename", store, NULL);
  efflux_settings_follow_recent_manager (settings, manager);

  uri = g_filename_to_uri (dossier, NULL, NULL);
  note_uri = g_filename_to_uri (note, NULL, NULL);
  g_assert_true (gtk_recent_manager_add_item (manager, note_uri));
  g_assert_true (gtk_recent_manager_add_item (manager, uri));
  deadline = g_get_monotonic_time () + 10 * G_USEC_PER_SEC;
  do
    {
      g_clear_pointer (&recent, g_strfreev);
      g_main_context_iteration (NULL, FALSE);
      recent = g_settings_get_strv (settings, "recent-files");
    }
  while (g_strv_length (recent) == 0 && g_get_monotonic_time () < deadline);
  /* the dossier, not the text file */
  g_assert_cmpuint (g_strv_length (recent), ==, 1);
  g_assert_cmpstr (recent[0], ==, dossier);

  g_object_unref (manager);
  g_settings_reset (settings, "recent-files");
  g_assert_cmpint (g_remove (dossier), ==, 0);
  g_assert_cmpint (g_remove (note), ==, 0);
  g_remove (store);
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

static void
test_help_pages (void)
{
  static const struct {
    const char *page;
    const char *needles[8];
  } pages[] = {
    { "job", { "protostar", "blue-shifted", "red-shifted", "dossier", "efflux-cli measure", NULL } },
    { "workflow", { "demo", "Source", "Lobe", "Cut", "Ledger", "Assumptions", "Ctrl+S", NULL } },
    /* the formulas of CONTRACT.md section 4 and their sources in REFERENCES.md 1.1-1.8 */
    { "quantities", { "Rayleigh-Jeans", "Mangum & Shirley 2015, PASP 127, 266",
                      "τ / (1 − e−τ)", "P = Σ m |v − vsys|", "E = ½ Σ m (v − vsys)²",
                      "tdyn = rmax / vmax", "Ṁ = M / tdyn", "cos² i" } },
    { "cautions", { "Excitation temperature", "Abundance", "Opacity", "Inclination",
                    "Missing flux", "can and cannot", NULL } },
  };
  GtkWidget *help = efflux_help_window_new (NULL, NULL);

  gtk_window_present (GTK_WINDOW (help));
  g_assert_cmpstr (efflux_help_window_get_page (EFFLUX_HELP_WINDOW (help)), ==, "job");
  for (gsize i = 0; i < G_N_ELEMENTS (pages); i++)
    {
      g_autofree char *text = efflux_help_window_get_text (EFFLUX_HELP_WINDOW (help), pages[i].page);

      g_assert_nonnull (text);
      for (gsize k = 0; k < G_N_ELEMENTS (pages[i].needles) && pages[i].needles[k] != NULL; k++)
        {
          if (strstr (text, pages[i].needles[k]) == NULL)
            g_test_message ("page %s lacks '%s':\n%s", pages[i].page, pages[i].needles[k], text);
          g_assert_nonnull (strstr (text, pages[i].needles[k]));
        }
      efflux_help_window_show_page (EFFLUX_HELP_WINDOW (help), pages[i].page);
      g_assert_cmpstr (efflux_help_window_get_page (EFFLUX_HELP_WINDOW (help)), ==, pages[i].page);
    }
  g_assert_null (efflux_help_window_get_text (EFFLUX_HELP_WINDOW (help), "no-such-page"));
  efflux_help_window_show_page (EFFLUX_HELP_WINDOW (help), "quantities");
  efflux_ui_test_wait_for_frames (help, 3);
  efflux_ui_test_save_screenshot (help, "screenshot-help-quantities.png");
  gtk_window_destroy (GTK_WINDOW (help));
}

static void
test_application (void)
{
  g_autoptr(EffluxApplication) app = efflux_application_new ();
  g_autoptr(GError) error = NULL;
  g_auto(GStrv) accels = NULL;
  g_autofree char *value = NULL;
  GtkIconTheme *theme;
  EffluxWindow *window;
  GSettings *settings;
  static const char *icons[] = {
    "efflux-about-job-symbolic", "efflux-workflow-symbolic", "efflux-quantities-symbolic",
    "efflux-cautions-symbolic", "efflux-help-symbolic", "org.effluxproject.Efflux-symbolic",
  };

  g_assert_true (g_application_register (G_APPLICATION (app), NULL, &error));
  g_assert_no_error (error);

  /* F1 opens the help */
  accels = gtk_application_get_accels_for_action (GTK_APPLICATION (app), "app.help");
  g_assert_cmpuint (g_strv_length (accels), ==, 1);
  g_assert_cmpstr (accels[0], ==, "F1");

  /* the resource base path's icons/ is in the display's icon theme (GtkApplication) */
  theme = gtk_icon_theme_get_for_display (gdk_display_get_default ());
  for (gsize i = 0; i < G_N_ELEMENTS (icons); i++)
    {
      g_test_message ("icon %s", icons[i]);
      g_assert_true (gtk_icon_theme_has_icon (theme, icons[i]));
    }
  g_assert_true (g_resources_get_info ("/org/effluxproject/Efflux/icons/scalable/actions/efflux-help-symbolic.svg",
                                       G_RESOURCE_LOOKUP_FLAGS_NONE, NULL, NULL, NULL));

  /* a new window's Sky view follows the shared settings */
  settings = efflux_settings_get ();
  g_assert_nonnull (settings);
  window = efflux_window_new (app);
  g_settings_set_string (settings, "colormap", "velocity");
  value = get_string (efflux_window_get_sky_view (window), "colormap");
  g_assert_cmpstr (value, ==, "velocity");
  g_clear_pointer (&value, g_free);
  g_object_set (efflux_window_get_sky_view (window), "stretch", "log", NULL);
  value = g_settings_get_string (settings, "stretch");
  g_assert_cmpstr (value, ==, "log");

  /* app.help opens a help window on its first page; app.help-page on a named one */
  gtk_window_present (GTK_WINDOW (window));
  g_action_group_activate_action (G_ACTION_GROUP (app), "help-page", g_variant_new_string ("cautions"));
  {
    EffluxHelpWindow *help = NULL;

    for (GList *l = gtk_application_get_windows (GTK_APPLICATION (app)); l != NULL; l = l->next)
      if (EFFLUX_IS_HELP_WINDOW (l->data))
        help = l->data;
    g_assert_nonnull (help);
    g_assert_cmpstr (efflux_help_window_get_page (help), ==, "cautions");
    g_assert_true (gtk_window_get_transient_for (GTK_WINDOW (help)) == GTK_WINDOW (window));
    gtk_window_destroy (GTK_WINDOW (help));
  }
  gtk_window_destroy (GTK_WINDOW (window));
  g_settings_reset (settings, "colormap");
  g_settings_reset (settings, "stretch");
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  efflux_setup_gettext ();
  g_test_add_func ("/desktop/settings/defaults", test_schema_defaults);
  g_test_add_func ("/desktop/settings/bind-sky-view", test_bind_sky_view);
  g_test_add_func ("/desktop/settings/recent-files", test_recent_files);
  g_test_add_func ("/desktop/settings/recent-manager", test_recent_manager);
  g_test_add_func ("/desktop/help/pages", test_help_pages);
  g_test_add_func ("/desktop/application", test_application);
  return g_test_run ();
}
