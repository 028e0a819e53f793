/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

G_BEGIN_DECLS

/*
 * The program's GSettings (schema org.effluxproject.Efflux, ui/org.effluxproject.Efflux.gschema.xml):
 * "recent-files" (as, most recent first, at most EFFLUX_SETTINGS_MAX_RECENT), "colormap",
 * "stretch" and "coordinate-style" (enums whose nicks are the Sky view's "colormap", "stretch"
 * and "grid" values).
 *
 * The schema is looked up in the installed schemas (and GSETTINGS_SCHEMA_DIR), then in the
 * EFFLUX_SCHEMA_DIR directory when that variable is set, then in the build tree's ui/ directory
 * (so ./build/src/app/efflux keeps its choices before it is installed). When none holds it,
 * efflux_settings_get() returns NULL and the program works without remembering anything.
 */
#define EFFLUX_SETTINGS_MAX_RECENT 10

/* The shared settings object (owned by this module), or NULL when the schema is not found. */
GSettings *efflux_settings_get             (void);
/* Settings of the schema from the first directory that holds it, or NULL (for tests). */
GSettings *efflux_settings_new             (void);
/* Bind the Sky view's colormap, stretch and grid properties to the settings, both ways. */
void       efflux_settings_bind_sky_view   (GSettings  *settings,
                                            GtkWidget  *sky_view);
/* Put path first in recent-files (absolute; an older copy removed; the list cut to the maximum). */
void       efflux_settings_add_recent      (GSettings  *settings,
                                            const char *path);
/* Mirror the .efflux and FITS entries of manager's recent files (those the window adds when it
 * opens or saves a file) into recent-files, the newest first, whenever manager changes. */
void       efflux_settings_follow_recent_manager (GSettings        *settings,
                                                  GtkRecentManager *manager);

/* Locale and gettext for the program: setlocale (LC_ALL, ""), then the "efflux" domain bound to
 * the EFFLUX_LOCALEDIR directory when that variable is set (translations not installed yet: the
 * build tree's po/), else to the installed LOCALEDIR; UTF-8, and the default domain. */
void       efflux_setup_gettext            (void);

/* Before gtk_init: when the user has not set GSK_RENDERER and the machine has no GPU render node
 * (/dev/dri/renderD*), ask GTK for its Cairo renderer. GTK's GL renderer then runs on a software
 * rasterizer, which draws our views several times slower than Cairo does (bench-ui-drag: 10-18
 * ms against 3-4 ms a frame while a vertex is dragged, on a virtual machine without a GPU).
 * Returns the renderer chosen ("cairo"), or NULL when GTK chooses. */
const char *efflux_choose_renderer         (void);

G_END_DECLS
