/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

G_BEGIN_DECLS

/* One cell of the Ledger: a line or two of Pango markup drawn by the widget itself, with tabular
 * figures. Unlike a GtkLabel, a new text does not ask for a new layout of the window unless it
 * needs more room than the cell has: the width only grows while a row is shown (the numbers of a
 * drag do not make the columns jitter), so following a drag costs a redraw of the changed cells,
 * not a measure of the whole table on every result. efflux_ledger_cell_reset_width lets the width
 * shrink again (a new row bound to the cell). CSS name "label", so the theme's colours for labels
 * in rows apply. */

#define EFFLUX_TYPE_LEDGER_CELL (efflux_ledger_cell_get_type ())
G_DECLARE_FINAL_TYPE (EffluxLedgerCell, efflux_ledger_cell, EFFLUX, LEDGER_CELL, GtkWidget)

GtkWidget  *efflux_ledger_cell_new           (float             xalign);
/* Show markup (lines aligned as xalign says) and a tooltip (NULL: none). Returns TRUE when the
 * cell asked for a new layout (it needed more room), FALSE when a redraw was enough or nothing
 * changed. */
gboolean    efflux_ledger_cell_set_markup    (EffluxLedgerCell *self,
                                              const char       *markup,
                                              const char       *tooltip);
const char *efflux_ledger_cell_get_text      (EffluxLedgerCell *self);
void        efflux_ledger_cell_reset_width   (EffluxLedgerCell *self);

G_END_DECLS
