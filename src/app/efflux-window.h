/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-application.h"
#include "efflux-assumptions.h"
#include "efflux-cube.h"
#include "efflux-document.h"
#include "efflux-review-sheet.h"
#include "efflux-sky-view.h"
#include "efflux-sources.h"

G_BEGIN_DECLS

#define EFFLUX_TYPE_WINDOW (efflux_window_get_type ())
G_DECLARE_FINAL_TYPE (EffluxWindow, efflux_window, EFFLUX, WINDOW, GtkApplicationWindow)

EffluxWindow *efflux_window_new  (EffluxApplication *application);
void          efflux_window_open (EffluxWindow      *self,
                                  GFile             *file);
/* TRUE while a cube is being read in the background. */
gboolean      efflux_window_is_loading (EffluxWindow *self);
/* The last message shown about the open dossier or cube. */
const char   *efflux_window_get_status (EffluxWindow *self);
/* The Sky view in the centre of the window. */
EffluxSkyView *efflux_window_get_sky_view (EffluxWindow *self);
/* Rows in the Sources list: the dossiers and cubes opened in this window. */
guint         efflux_window_get_n_sources (EffluxWindow *self);
/* The cube shown, or NULL before one is read. Owned by the window. */
const EffluxCube *efflux_window_get_cube (EffluxWindow *self);
/* The open dossier as a document (NULL for a bare cube or nothing). */
EffluxDocument *efflux_window_get_document (EffluxWindow *self);
/* The Ledger's text: a header line, then one line per lobe and the total. */
const char   *efflux_window_get_ledger_text (EffluxWindow *self);
EffluxAssumptions *efflux_window_get_assumptions (EffluxWindow *self);
/* The views around the Sky view (owned by the window). */
GtkWidget    *efflux_window_get_cut_view      (EffluxWindow *self);
GtkWidget    *efflux_window_get_spectrum_view (EffluxWindow *self);
GtkWidget    *efflux_window_get_ledger        (EffluxWindow *self);
/* The Sources list (a sample's dossiers) and the Review side sheet. */
EffluxSources     *efflux_window_get_sources      (EffluxWindow *self);
EffluxReviewSheet *efflux_window_get_review_sheet (EffluxWindow *self);
/* Show a one-line error in the window's message area (a banner under the header bar). It stays
 * until closed or replaced by another message; the open dossier is not touched. */
void          efflux_window_show_error (EffluxWindow *self,
                                        const char   *message);
/* The message shown in the message area, or NULL when it is closed. */
const char   *efflux_window_get_error  (EffluxWindow *self);
/* The message area (an EffluxBanner). */
GtkWidget    *efflux_window_get_banner (EffluxWindow *self);

G_END_DECLS
