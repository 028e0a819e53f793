/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-measure.h"

G_BEGIN_DECLS

/* The Ledger: the live table of a measurement, one row per lobe and the total (a GtkColumnView
 * over a GListModel of EffluxLedgerRow). Columns: the lobe, M, P, E, t_dyn, Ṁ, F, L and the
 * mass-velocity slope γ, units in the headers. Each number is written to its noise uncertainty
 * (efflux_format_uncertain) with the Monte Carlo 16–84 percentile spread below it.
 * efflux_ledger_set_result updates rows in place (the same row objects, their cells re-read) when
 * the lobes are the same, so a table that follows a drag does not flicker. The action
 * "ledger.copy-csv" (Ctrl+C in the table) puts the table as CSV on the clipboard. */

#define EFFLUX_TYPE_LEDGER_ROW (efflux_ledger_row_get_type ())
G_DECLARE_FINAL_TYPE (EffluxLedgerRow, efflux_ledger_row, EFFLUX, LEDGER_ROW, GObject)

#define EFFLUX_TYPE_LEDGER (efflux_ledger_get_type ())
G_DECLARE_FINAL_TYPE (EffluxLedger, efflux_ledger, EFFLUX, LEDGER, GtkWidget)

typedef enum
{
  EFFLUX_LEDGER_LOBE,
  EFFLUX_LEDGER_MASS,
  EFFLUX_LEDGER_MOMENTUM,
  EFFLUX_LEDGER_ENERGY,
  EFFLUX_LEDGER_TDYN,
  EFFLUX_LEDGER_MDOT,
  EFFLUX_LEDGER_FORCE,
  EFFLUX_LEDGER_LMECH,
  EFFLUX_LEDGER_GAMMA,
  EFFLUX_LEDGER_N_COLUMNS
} EffluxLedgerColumn;

/* The row's numbers (a copy of the measurement's row; "changed" is emitted when they change). */
const EffluxMeasureRow *efflux_ledger_row_get_row (EffluxLedgerRow *row);

GtkWidget   *efflux_ledger_new          (void);
/* Show a measurement (copied; NULL empties the table). */
void         efflux_ledger_set_result   (EffluxLedger              *self,
                                         const EffluxMeasureResult *result);
GListModel  *efflux_ledger_get_model    (EffluxLedger              *self);
GtkColumnView *efflux_ledger_get_column_view (EffluxLedger         *self);

/* A column's header ("M (M☉)", ...) and a cell's text as shown: the value with its noise error,
 * then on a second line the Monte Carlo 16–84 spread when there is one. */
const char  *efflux_ledger_column_title (EffluxLedgerColumn         column);
char        *efflux_ledger_cell_text    (const EffluxMeasureRow    *row,
                                         EffluxLedgerColumn         column);

/* The table as CSV: a header line, then one line per row: lobe, kind, then per quantity value,
 * noise error, MC 16th and 84th percentiles ("%.6g", '.' decimal point, empty when unknown). */
char        *efflux_ledger_to_csv       (EffluxLedger              *self);

G_END_DECLS
