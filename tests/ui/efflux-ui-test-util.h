/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Helpers shared by the UI tests (tests/ui/test-*.c and tests/desktop/test-desktop.c, linked into
 * each of them by tests/meson.build and tests/desktop/meson.build): running the main loop for a
 * time or while a condition holds, waiting for a window's load, drawing frames, rendering a widget
 * and saving it as a screenshot into G_TEST_BUILDDIR, and finding widgets in a widget tree. Each
 * waiting helper asserts what it waited for (a timeout fails the test). */
#pragma once

#include <gtk/gtk.h>

#include "efflux-window.h"

G_BEGIN_DECLS

typedef gboolean (*EffluxUiTestCondition) (gpointer data);

/* --- the main loop ----------------------------------------------------------------------------- */

/* One iteration without blocking; sleeps 2 ms when nothing was pending. */
void        efflux_ui_test_iterate                    (void);
/* Iterate (without blocking) for `seconds`, whatever comes (e.g. a file monitor's events). */
void        efflux_ui_test_spin                       (double                 seconds);
/* Iterate (blocking) until a timeout of `ms` milliseconds has fired. */
void        efflux_ui_test_iterate_ms                 (guint                  ms);
/* Blocking iterations until done (data) or `seconds` have passed; asserts done (data). */
void        efflux_ui_test_iterate_until              (EffluxUiTestCondition  done,
                                                       gpointer               data,
                                                       double                 seconds);
/* The same with efflux_ui_test_iterate's non-blocking iterations. */
void        efflux_ui_test_poll_until                 (EffluxUiTestCondition  done,
                                                       gpointer               data,
                                                       double                 seconds);
/* Blocking iterations while cond (data) holds, at most `seconds`; asserts !cond (data). */
void        efflux_ui_test_iterate_while              (EffluxUiTestCondition  cond,
                                                       gpointer               data,
                                                       double                 seconds);

/* --- windows ---------------------------------------------------------------------------------- */

/* A new window (no application) of default size width x height (none when width is 0), presented,
 * opening file (efflux_window_open: the load goes on; wait with one of the helpers below). */
EffluxWindow *efflux_ui_test_open_window              (GFile                 *file,
                                                       int                    width,
                                                       int                    height);

/* --- the window's load (at most 60 s; asserts the window is no longer loading) ------------------ */

/* Blocking main-loop iterations. */
void        efflux_ui_test_wait_until_loaded          (EffluxWindow          *window);
/* Steps of efflux_ui_test_iterate_ms (20). */
void        efflux_ui_test_wait_until_loaded_in_steps (EffluxWindow          *window);
/* efflux_ui_test_iterate's non-blocking iterations. */
void        efflux_ui_test_poll_until_loaded          (EffluxWindow          *window);

/* --- frames, rendering and screenshots --------------------------------------------------------- */

/* A tick callback counting frames into the int at user_data. */
gboolean    efflux_ui_test_count_frame                (GtkWidget             *widget,
                                                       GdkFrameClock         *clock,
                                                       gpointer               user_data);
/* Iterate until the widget has drawn n frames (and, when until_sized, has a width), at most 20 s;
 * returns the frames drawn. */
int         efflux_ui_test_run_frames                 (GtkWidget             *widget,
                                                       int                    n,
                                                       gboolean               until_sized);
/* efflux_ui_test_run_frames (widget, n, TRUE), asserting n frames were drawn. */
void        efflux_ui_test_wait_for_frames            (GtkWidget             *widget,
                                                       int                    n);
/* The widget drawn into a texture by its native's renderer (at its current size). */
GdkTexture *efflux_ui_test_render                     (GtkWidget             *widget);
/* The widget rendered and saved as G_TEST_BUILDDIR/name (PNG, asserted), named in a test message. */
void        efflux_ui_test_save_screenshot            (GtkWidget             *widget,
                                                       const char            *name);
/* First n frames (efflux_ui_test_run_frames without waiting for a width, asserted), then the
 * screenshot. */
void        efflux_ui_test_save_screenshot_after_frames (GtkWidget           *widget,
                                                         const char          *name,
                                                         int                  n);

/* --- widget trees ------------------------------------------------------------------------------ */

/* The first widget of `type` in the tree under root (root included), depth first; NULL if none. */
GtkWidget  *efflux_ui_test_find_widget                (GtkWidget             *root,
                                                       GType                  type);
/* The same for a widget of `type` whose tooltip text is `tooltip`. */
GtkWidget  *efflux_ui_test_find_widget_with_tooltip   (GtkWidget             *root,
                                                       GType                  type,
                                                       const char            *tooltip);
/* Every widget of `type` under root (root included), depth first, appended to found. */
void        efflux_ui_test_collect_widgets            (GtkWidget             *root,
                                                       GType                  type,
                                                       GPtrArray             *found);
/* The first visible toplevel window of `type` (gtk_window_list_toplevels); NULL if none. */
GtkWindow  *efflux_ui_test_find_visible_toplevel      (GType                  type);

/* --- folders ----------------------------------------------------------------------------------- */

/* Remove a folder holding only files, each removal asserted. */
void        efflux_ui_test_remove_flat_dir            (const char            *dir);

G_END_DECLS
