/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-settings"

#include "config.h"

#include <glib/gi18n.h>
#include <locale.h>

#include "efflux-settings.h"

static GSettingsSchema *
lookup_in (const char *dir)
{
  g_autoptr(GSettingsSchemaSource) source = NULL;
  g_autoptr(GError) error = NULL;
  g_autofree char *compiled = g_build_filename (dir, "gschemas.compiled", NULL);

  if (!g_file_test (compiled, G_FILE_TEST_IS_REGULAR))
    return NULL;
  source = g_settings_schema_source_new_from_directory (dir, g_settings_schema_source_get_default (),
                                                        FALSE, &error);
  if (source == NULL)
    {
      g_message ("%s: %s", compiled, error->message);
      return NULL;
    }
  return g_settings_schema_source_lookup (source, APP_ID, FALSE);
}

GSettings *
efflux_settings_new (void)
{
  g_autoptr(GSettingsSchema) schema = NULL;
  GSettingsSchemaSource *installed = g_settings_schema_source_get_default ();
  const char *env_dir = g_getenv ("EFFLUX_SCHEMA_DIR");

  if (installed != NULL)
    schema = g_settings_schema_source_lookup (installed, APP_ID, TRUE);
  if (schema == NULL && env_dir != NULL && *env_dir != '\0')
    schema = lookup_in (env_dir);
  if (schema == NULL)
    {
      /* the build tree: EFFLUX_BUILD_SAMPLE_DIR is BUILD/sample-data, the schema is compiled in BUILD/ui */
      g_autofree char *build_root = g_path_get_dirname (EFFLUX_BUILD_SAMPLE_DIR);
      g_autofree char *ui_dir = g_build_filename (build_root, "ui", NULL);

      schema = lookup_in (ui_dir);
    }
  if (schema == NULL)
    return NULL;
  return g_settings_new_full (schema, NULL, NULL);
}

static GSettings *shared_settings;
static gboolean shared_tried;

GSettings *
efflux_settings_get (void)
{
  if (!shared_tried)
    {
      shared_tried = TRUE;
      shared_settings = efflux_settings_new ();
      if (shared_settings == NULL)
        g_message ("settings schema %s not found: display choices and recent files are not kept", APP_ID);
    }
  return shared_settings;
}

void
efflux_settings_bind_sky_view (GSettings *settings,
                               GtkWidget *sky_view)
{
  g_return_if_fail (G_IS_SETTINGS (settings));
  g_return_if_fail (GTK_IS_WIDGET (sky_view));

  g_settings_bind (settings, "colormap", sky_view, "colormap", G_SETTINGS_BIND_DEFAULT);
  g_settings_bind (settings, "stretch", sky_view, "stretch", G_SETTINGS_BIND_DEFAULT);
  g_settings_bind (settings, "coordinate-style", sky_view, "grid", G_SETTINGS_BIND_DEFAULT);
}

void
efflux_settings_add_recent (GSettings  *settings,
                            const char *path)
{
  g_auto(GStrv) old = NULL;
  g_autoptr(GStrvBuilder) builder = NULL;
  g_auto(GStrv) list = NULL;
  guint n = 1;

  g_return_if_fail (G_IS_SETTINGS (settings));
  g_return_if_fail (path != NULL && g_path_is_absolute (path));

  old = g_settings_get_strv (settings, "recent-files");
  builder = g_strv_builder_new ();
  g_strv_builder_add (builder, path);
  for (guint i = 0; old[i] != NULL && n < EFFLUX_SETTINGS_MAX_RECENT; i++)
    if (g_strcmp0 (old[i], path) != 0)
      {
        g_strv_builder_add (builder, old[i]);
        n++;
      }
  list = g_strv_builder_end (builder);
  if (!g_strv_equal ((const char * const *) old, (const char * const *) list))
    g_settings_set_strv (settings, "recent-files", (const char * const *) list);
}

static gboolean
is_ours (const char *path)
{
  static const char *suffixes[] = { ".efflux", ".fits", ".fit", ".fts", ".FITS", ".fits.gz" };

  for (gsize i = 0; i < G_N_ELEMENTS (suffixes); i++)
    if (g_str_has_suffix (path, suffixes[i]))
      return TRUE;
  return FALSE;
}

static int
by_modified_newest_first (gconstpointer a,
                          gconstpointer b)
{
  GDateTime *ma = gtk_recent_info_get_modified (*(GtkRecentInfo * const *) a);
  GDateTime *mb = gtk_recent_info_get_modified (*(GtkRecentInfo * const *) b);

  return g_date_time_compare (mb, ma);
}

static void
recent_changed (GtkRecentManager *manager,
                GSettings        *settings)
{
  GList *items = gtk_recent_manager_get_items (manager);
  GPtrArray *ours = g_ptr_array_new ();

  /* dossiers and FITS files, whichever program used them last: the same files Efflux opens */
  for (GList *l = items; l != NULL; l = l->next)
    {
      GtkRecentInfo *info = l->data;
      g_autofree char *path = g_filename_from_uri (gtk_recent_info_get_uri (info), NULL, NULL);

      if (path != NULL && is_ours (path))
        g_ptr_array_add (ours, info);
    }
  g_ptr_array_sort (ours, by_modified_newest_first);
  /* oldest first, so the newest ends at the front of recent-files */
  for (guint i = MIN (ours->len, EFFLUX_SETTINGS_MAX_RECENT); i > 0; i--)
    {
      g_autofree char *path =
        g_filename_from_uri (gtk_recent_info_get_uri (g_ptr_array_index (ours, i - 1)), NULL, NULL);

      efflux_settings_add_recent (settings, path);
    }
  g_ptr_array_unref (ours);
  g_list_free_full (items, (GDestroyNotify) gtk_recent_info_unref);
}

void
efflux_settings_follow_recent_manager (GSettings        *settings,
                                       GtkRecentManager *manager)
{
  g_return_if_fail (G_IS_SETTINGS (settings));
  g_return_if_fail (GTK_IS_RECENT_MANAGER (manager));

  g_signal_connect_object (manager, "changed", G_CALLBACK (recent_changed), settings, 0);
}

void
efflux_setup_gettext (void)
{
  const char *dir = g_getenv ("EFFLUX_LOCALEDIR");

  setlocale (LC_ALL, "");
  bindtextdomain (GETTEXT_PACKAGE, dir != NULL && *dir != '\0' ? dir : LOCALEDIR);
  bind_textdomain_codeset (GETTEXT_PACKAGE, "UTF-8");
  textdomain (GETTEXT_PACKAGE);
}

const char *
efflux_choose_renderer (void)
{
  g_autoptr(GDir) dir = NULL;
  const char *name;

  if (g_getenv ("GSK_RENDERER") != NULL)
    return NULL;
  dir = g_dir_open ("/dev/dri", 0, NULL);
  while (dir != NULL && (name = g_dir_read_name (dir)) != NULL)
    if (g_str_has_prefix (name, "renderD"))
      return NULL;
  g_setenv ("GSK_RENDERER", "cairo", FALSE);
  return "cairo";
}
