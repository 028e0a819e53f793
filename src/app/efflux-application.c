/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-application"

#include "config.h"

#include <glib/gi18n.h>

#include "efflux-application.h"
#include "efflux-autosave.h"
#include "efflux-window.h"
#include "efflux-help.h"
#include "efflux-settings.h"

struct _EffluxApplication
{
  GtkApplication parent_instance;
};

G_DEFINE_FINAL_TYPE (EffluxApplication, efflux_application, GTK_TYPE_APPLICATION)

char *
efflux_application_find_demo (void)
{
  const char *candidates[] = {
    EFFLUX_BUILD_SAMPLE_DIR "/demo.efflux",
    EFFLUX_DATADIR "/sample-data/demo.efflux",
  };

  for (gsize i = 0; i < G_N_ELEMENTS (candidates); i++)
    if (g_file_test (candidates[i], G_FILE_TEST_IS_REGULAR))
      return g_strdup (candidates[i]);
  return NULL;
}

static EffluxWindow *
get_or_create_window (EffluxApplication *self)
{
  GtkWindow *window = gtk_application_get_active_window (GTK_APPLICATION (self));

  if (window == NULL)
    window = GTK_WINDOW (efflux_window_new (self));
  return EFFLUX_WINDOW (window);
}

static void
efflux_application_activate (GApplication *app)
{
  EffluxApplication *self = EFFLUX_APPLICATION (app);
  EffluxWindow *window = get_or_create_window (self);
  g_autofree char *demo = efflux_application_find_demo ();
  GSettings *settings = efflux_settings_get ();
  g_autofree char *sample = NULL;
  /* unsaved edits of a recent dossier, kept when the program stopped: that dossier, to offer them */
  g_autofree char *kept = efflux_autosave_find_kept ();

  if (kept != NULL)
    {
      g_autoptr(GFile) file = g_file_new_for_path (kept);
      efflux_window_open (window, file);
    }
  else if (demo != NULL)
    {
      g_autoptr(GFile) file = g_file_new_for_path (demo);
      efflux_window_open (window, file);
    }
  /* the sample folder of the last session, when it is still there (efflux-sources.h) */
  if (settings != NULL)
    {
      g_autoptr(GSettingsSchema) schema = NULL;

      g_object_get (settings, "settings-schema", &schema, NULL);
      if (schema != NULL && g_settings_schema_has_key (schema, "sample-folder"))
        sample = g_settings_get_string (settings, "sample-folder");
    }
  if (sample != NULL && *sample != '\0' && g_file_test (sample, G_FILE_TEST_IS_DIR))
    efflux_sources_set_folder (efflux_window_get_sources (window), sample, NULL);
  gtk_window_present (GTK_WINDOW (window));
}

static void
efflux_application_open (GApplication  *app,
                         GFile        **files,
                         int            n_files,
                         const char    *hint)
{
  EffluxApplication *self = EFFLUX_APPLICATION (app);

  /* `efflux FILE...`: the first file in the current window, every other one in its own window
   * (a window shows one dossier or cube) */
  for (int i = 0; i < n_files; i++)
    {
      EffluxWindow *window = i == 0 ? get_or_create_window (self) : efflux_window_new (self);

      efflux_window_open (window, files[i]);
      gtk_window_present (GTK_WINDOW (window));
    }
}

static void
quit_activated (GSimpleAction *action,
                GVariant      *parameter,
                gpointer       user_data)
{
  g_autoptr(GList) windows = g_list_copy (gtk_application_get_windows (GTK_APPLICATION (user_data)));

  /* close each window as its close button does: one with unsaved edits asks first (and a
   * clean close removes its recovery file); the application ends with its last window */
  for (GList *l = windows; l != NULL; l = l->next)
    gtk_window_close (GTK_WINDOW (l->data));
}

static void
help_activated (GSimpleAction *action,
                GVariant      *parameter,
                gpointer       user_data)
{
  GtkWindow *parent = gtk_application_get_active_window (GTK_APPLICATION (user_data));
  const char *page = parameter != NULL ? g_variant_get_string (parameter, NULL) : NULL;
  GtkWidget *help = efflux_help_window_new (parent, page != NULL && *page != '\0' ? page : NULL);

  gtk_window_present (GTK_WINDOW (help));
}

static void
window_added (GtkApplication *app,
              GtkWindow      *window)
{
  GSettings *settings = efflux_settings_get ();

  /* the display choices of every new window's Sky view are remembered */
  if (settings != NULL && EFFLUX_IS_WINDOW (window))
    efflux_settings_bind_sky_view (settings,
                                   GTK_WIDGET (efflux_window_get_sky_view (EFFLUX_WINDOW (window))));
}

static void
efflux_application_startup (GApplication *app)
{
  static const GActionEntry entries[] = {
    { .name = "quit", .activate = quit_activated },
    { .name = "help", .activate = help_activated },
    { .name = "help-page", .activate = help_activated, .parameter_type = "s" },
  };
  static const struct {
    const char *action;
    const char *accels[4];
  } accels[] = {
    { "app.quit", { "<Control>q", NULL } },
    { "win.open", { "<Control>o", NULL } },
    { "win.zoom-in", { "plus", "equal", "KP_Add", NULL } },
    { "win.zoom-out", { "minus", "KP_Subtract", NULL } },
    { "win.zoom-fit", { "f", NULL } },
    { "win.save", { "<Control>s", NULL } },
    { "win.save-as", { "<Shift><Control>s", NULL } },
    { "win.undo", { "<Control>z", NULL } },
    { "win.redo", { "<Shift><Control>z", "<Control>y", NULL } },
    { "win.assumptions", { "F9", NULL } },
    { "review.show", { "F8", NULL } },
    { "app.help", { "F1", NULL } },
  };

  G_APPLICATION_CLASS (efflux_application_parent_class)->startup (app);

  g_action_map_add_action_entries (G_ACTION_MAP (app), entries, G_N_ELEMENTS (entries), app);
  for (gsize i = 0; i < G_N_ELEMENTS (accels); i++)
    gtk_application_set_accels_for_action (GTK_APPLICATION (app), accels[i].action,
                                           accels[i].accels);

  gtk_window_set_default_icon_name (APP_ID);
  g_signal_connect (app, "window-added", G_CALLBACK (window_added), NULL);
  if (efflux_settings_get () != NULL)
    efflux_settings_follow_recent_manager (efflux_settings_get (), gtk_recent_manager_get_default ());
}

static void
efflux_application_class_init (EffluxApplicationClass *klass)
{
  GApplicationClass *app_class = G_APPLICATION_CLASS (klass);

  app_class->activate = efflux_application_activate;
  app_class->open = efflux_application_open;
  app_class->startup = efflux_application_startup;
}

static void
efflux_application_init (EffluxApplication *self)
{
}

EffluxApplication *
efflux_application_new (void)
{
  return g_object_new (EFFLUX_TYPE_APPLICATION,
                       "application-id", APP_ID,
                       "flags", G_APPLICATION_HANDLES_OPEN | G_APPLICATION_NON_UNIQUE,
                       "resource-base-path", "/org/effluxproject/Efflux",
                       NULL);
}
