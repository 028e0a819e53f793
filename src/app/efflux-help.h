/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

G_BEGIN_DECLS

/*
 * EffluxHelpWindow: the help inside the program (app.help, F1). Four pages in a stack with a
 * sidebar: "job" (what the program is for), "workflow" (step by step on the demo dossier),
 * "quantities" (every measured number with its formula and published source) and "cautions"
 * (the assumptions the numbers rest on, and what they can and cannot say).
 */
#define EFFLUX_TYPE_HELP_WINDOW (efflux_help_window_get_type ())
G_DECLARE_FINAL_TYPE (EffluxHelpWindow, efflux_help_window, EFFLUX, HELP_WINDOW, GtkWindow)

/* A help window transient for parent (may be NULL), showing page (NULL: the first). */
GtkWidget  *efflux_help_window_new       (GtkWindow        *parent,
                                          const char       *page);
void        efflux_help_window_show_page (EffluxHelpWindow *self,
                                          const char       *page);
/* The name of the page shown. */
const char *efflux_help_window_get_page  (EffluxHelpWindow *self);
/* The text of the page's paragraphs, joined by newlines, markup stripped (for tests). */
char       *efflux_help_window_get_text  (EffluxHelpWindow *self,
                                          const char       *page);

G_END_DECLS
