/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-ledger"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>

#include "efflux-ledger.h"
#include "efflux-ledger-cell.h"
#include "efflux-plot.h"

/* ---- row objects ---- */

struct _EffluxLedgerRow
{
  GObject          parent_instance;
  EffluxMeasureRow row;   /* strings owned */
};

G_DEFINE_FINAL_TYPE (EffluxLedgerRow, efflux_ledger_row, G_TYPE_OBJECT)

enum {
  ROW_CHANGED,
  N_ROW_SIGNALS
};

static guint row_signals[N_ROW_SIGNALS];

static void
row_assign (EffluxLedgerRow        *self,
            const EffluxMeasureRow *row)
{
  g_free (self->row.source);
  g_free (self->row.lobe);
  self->row = *row;
  self->row.source = g_strdup (row->source);
  self->row.lobe = g_strdup (row->lobe);
}

static void
efflux_ledger_row_finalize (GObject *object)
{
  EffluxLedgerRow *self = EFFLUX_LEDGER_ROW (object);

  g_free (self->row.source);
  g_free (self->row.lobe);
  G_OBJECT_CLASS (efflux_ledger_row_parent_class)->finalize (object);
}

static void
efflux_ledger_row_class_init (EffluxLedgerRowClass *klass)
{
  G_OBJECT_CLASS (klass)->finalize = efflux_ledger_row_finalize;
  row_signals[ROW_CHANGED] =
    g_signal_new ("changed", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                  G_TYPE_NONE, 0);
}

static void
efflux_ledger_row_init (EffluxLedgerRow *self)
{
}

const EffluxMeasureRow *
efflux_ledger_row_get_row (EffluxLedgerRow *row)
{
  g_return_val_if_fail (EFFLUX_IS_LEDGER_ROW (row), NULL);
  return &row->row;
}

/* ---- cells ---- */

typedef struct
{
  const char            *title;
  EffluxMeasureQuantity  quantity;   /* EFFLUX_MQ_N: none */
  const char            *csv;
} ColumnInfo;

static const ColumnInfo columns[EFFLUX_LEDGER_N_COLUMNS] = {
  [EFFLUX_LEDGER_LOBE] = { N_("Lobe"), EFFLUX_MQ_N, "lobe" },
  [EFFLUX_LEDGER_MASS] = { N_("M (M☉)"), EFFLUX_MQ_MASS, "mass_msun" },
  [EFFLUX_LEDGER_MOMENTUM] = { N_("P (M☉ km/s)"), EFFLUX_MQ_MOMENTUM, "momentum_msun_kms" },
  [EFFLUX_LEDGER_ENERGY] = { N_("E (erg)"), EFFLUX_MQ_ENERGY, "energy_erg" },
  [EFFLUX_LEDGER_TDYN] = { N_("t_dyn (yr)"), EFFLUX_MQ_TDYN, "tdyn_yr" },
  [EFFLUX_LEDGER_MDOT] = { N_("Ṁ (M☉/yr)"), EFFLUX_MQ_MDOT, "mdot_msun_yr" },
  [EFFLUX_LEDGER_FORCE] = { N_("F (M☉ km/s/yr)"), EFFLUX_MQ_FORCE, "force_msun_kms_yr" },
  [EFFLUX_LEDGER_LMECH] = { N_("L (L☉)"), EFFLUX_MQ_LMECH, "lmech_lsun" },
  [EFFLUX_LEDGER_GAMMA] = { N_("γ (dM/dv ∝ v^−γ)"), EFFLUX_MQ_N, "mv_gamma" },
};

const char *
efflux_ledger_column_title (EffluxLedgerColumn column)
{
  g_return_val_if_fail (column < EFFLUX_LEDGER_N_COLUMNS, NULL);
  return _(columns[column].title);
}

/* The value and its noise error of a column. */
static void
column_value (const EffluxMeasureRow *row,
              EffluxLedgerColumn      column,
              double                 *value,
              double                 *error)
{
  *error = NAN;
  switch (column)
    {
    case EFFLUX_LEDGER_MASS:
      *value = row->mass_msun;
      *error = row->mass_err;
      break;
    case EFFLUX_LEDGER_MOMENTUM:
      *value = row->momentum_msun_kms;
      *error = row->momentum_err;
      break;
    case EFFLUX_LEDGER_ENERGY:
      *value = row->energy_erg;
      *error = row->energy_err;
      break;
    case EFFLUX_LEDGER_TDYN:
      /* taken as exact by the noise errors (efflux-measure.h) */
      *value = row->tdyn_yr;
      break;
    case EFFLUX_LEDGER_MDOT:
      *value = row->mdot_msun_yr;
      *error = row->mdot_err;
      break;
    case EFFLUX_LEDGER_FORCE:
      *value = row->force_msun_kms_yr;
      *error = row->force_err;
      break;
    case EFFLUX_LEDGER_LMECH:
      *value = row->lmech_lsun;
      *error = row->lmech_err;
      break;
    case EFFLUX_LEDGER_GAMMA:
      *value = row->is_total ? NAN : row->mv_gamma;
      *error = row->is_total ? NAN : row->mv_gamma_err;
      break;
    case EFFLUX_LEDGER_LOBE:
    case EFFLUX_LEDGER_N_COLUMNS:
    default:
      *value = NAN;
      break;
    }
}

char *
efflux_ledger_cell_text (const EffluxMeasureRow *row,
                         EffluxLedgerColumn      column)
{
  const ColumnInfo *info;
  g_autofree char *main_text = NULL;
  double value, error;

  g_return_val_if_fail (row != NULL && column < EFFLUX_LEDGER_N_COLUMNS, NULL);
  info = &columns[column];
  if (column == EFFLUX_LEDGER_LOBE)
    {
      if (row->is_total)
        return g_strdup (_("total"));
      /* Translators: a lobe's name and its kind */
      return g_strdup_printf (_("%s (%s)"), row->lobe,
                              row->kind == EFFLUX_LOBE_RED ? _("red") : _("blue"));
    }
  column_value (row, column, &value, &error);
  main_text = efflux_format_uncertain (value, error);
  if (info->quantity != EFFLUX_MQ_N && isfinite (row->pct[info->quantity][0])
      && isfinite (row->pct[info->quantity][2]))
    {
      g_autofree char *spread = efflux_format_spread (row->pct[info->quantity][0],
                                                      row->pct[info->quantity][2]);

      return g_strdup_printf ("%s\n%s", main_text, spread);
    }
  return g_steal_pointer (&main_text);
}

/* ---- the widget ---- */

struct _EffluxLedger
{
  GtkWidget      parent_instance;
  GtkWidget     *scrolled;
  GtkColumnView *view;
  GListStore    *store;
};

G_DEFINE_FINAL_TYPE (EffluxLedger, efflux_ledger, GTK_TYPE_WIDGET)

/* A cell shows its row's number for its column: the markup and the Monte Carlo spread in the
 * tooltip. A result with new numbers redraws the cells; only a number wider than its column asks
 * for a new layout (EffluxLedgerCell). */
static void
update_cell (EffluxLedgerRow  *row,
             EffluxLedgerCell *cell)
{
  EffluxLedgerColumn column = GPOINTER_TO_UINT (g_object_get_data (G_OBJECT (cell),
                                                                   "efflux-column"));
  g_autofree char *text = efflux_ledger_cell_text (&row->row, column);
  g_auto(GStrv) lines = g_strsplit (text, "\n", 2);
  g_autofree char *markup = NULL;
  g_autofree char *tip = NULL;

  if (lines[0] != NULL && lines[1] != NULL)
    {
      g_autofree char *a = g_markup_escape_text (lines[0], -1);
      g_autofree char *b = g_markup_escape_text (lines[1], -1);

      markup = g_strdup_printf ("%s\n<small>%s</small>", a, b);
      /* Translators: tooltip of a ledger cell: the Monte Carlo spread */
      tip = g_strdup_printf (_("noise error: %s\nMonte Carlo 16th–84th percentiles: %s"),
                             lines[0], lines[1]);
    }
  else
    markup = g_markup_escape_text (text, -1);
  if (column == EFFLUX_LEDGER_LOBE && row->row.is_total)
    {
      g_autofree char *plain = g_steal_pointer (&markup);

      markup = g_strdup_printf ("<b>%s</b>", plain);
    }
  efflux_ledger_cell_set_markup (cell, markup, tip);
}

static void
setup_cb (GtkSignalListItemFactory *factory,
          GtkListItem              *item,
          gpointer                  user_data)
{
  EffluxLedgerColumn column = GPOINTER_TO_UINT (user_data);
  GtkWidget *cell = efflux_ledger_cell_new (column == EFFLUX_LEDGER_LOBE ? 0.0f : 1.0f);

  gtk_widget_add_css_class (cell, "numeric");
  g_object_set_data (G_OBJECT (cell), "efflux-column", user_data);
  gtk_list_item_set_child (item, cell);
}

static void
bind_cb (GtkSignalListItemFactory *factory,
         GtkListItem              *item,
         gpointer                  user_data)
{
  EffluxLedgerRow *row = gtk_list_item_get_item (item);
  GtkWidget *cell = gtk_list_item_get_child (item);
  gulong id;

  /* a new row: the cell may shrink to it */
  efflux_ledger_cell_reset_width (EFFLUX_LEDGER_CELL (cell));
  update_cell (row, EFFLUX_LEDGER_CELL (cell));
  id = g_signal_connect_object (row, "changed", G_CALLBACK (update_cell), cell, 0);
  g_object_set_data (G_OBJECT (cell), "efflux-handler", GSIZE_TO_POINTER ((gsize) id));
}

static void
unbind_cb (GtkSignalListItemFactory *factory,
           GtkListItem              *item,
           gpointer                  user_data)
{
  EffluxLedgerRow *row = gtk_list_item_get_item (item);
  GtkWidget *cell = gtk_list_item_get_child (item);
  gulong id = (gulong) GPOINTER_TO_SIZE (g_object_get_data (G_OBJECT (cell), "efflux-handler"));

  if (id != 0 && row != NULL)
    g_signal_handler_disconnect (row, id);
  g_object_set_data (G_OBJECT (cell), "efflux-handler", NULL);
}

void
efflux_ledger_set_result (EffluxLedger              *self,
                          const EffluxMeasureResult *result)
{
  guint n_old, n_new;
  gboolean same = TRUE;

  g_return_if_fail (EFFLUX_IS_LEDGER (self));

  n_old = g_list_model_get_n_items (G_LIST_MODEL (self->store));
  n_new = result != NULL ? result->rows->len : 0;
  if (n_old != n_new)
    same = FALSE;
  for (guint i = 0; same && i < n_new; i++)
    {
      g_autoptr(EffluxLedgerRow) old = g_list_model_get_item (G_LIST_MODEL (self->store), i);
      const EffluxMeasureRow *r = g_ptr_array_index (result->rows, i);

      same = g_strcmp0 (old->row.lobe, r->lobe) == 0 && old->row.is_total == r->is_total;
    }
  if (same)
    {
      /* in place: the same objects, their cells re-read */
      for (guint i = 0; i < n_new; i++)
        {
          g_autoptr(EffluxLedgerRow) row = g_list_model_get_item (G_LIST_MODEL (self->store), i);

          row_assign (row, g_ptr_array_index (result->rows, i));
          g_signal_emit (row, row_signals[ROW_CHANGED], 0);
        }
      return;
    }
  {
    g_autoptr(GPtrArray) rows = g_ptr_array_new_with_free_func (g_object_unref);

    for (guint i = 0; i < n_new; i++)
      {
        EffluxLedgerRow *row = g_object_new (EFFLUX_TYPE_LEDGER_ROW, NULL);

        row_assign (row, g_ptr_array_index (result->rows, i));
        g_ptr_array_add (rows, row);
      }
    g_list_store_splice (self->store, 0, n_old, rows->pdata, rows->len);
  }
}

GListModel *
efflux_ledger_get_model (EffluxLedger *self)
{
  g_return_val_if_fail (EFFLUX_IS_LEDGER (self), NULL);
  return G_LIST_MODEL (self->store);
}

GtkColumnView *
efflux_ledger_get_column_view (EffluxLedger *self)
{
  g_return_val_if_fail (EFFLUX_IS_LEDGER (self), NULL);
  return self->view;
}

static void
csv_number (GString *s,
            double   value)
{
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  g_string_append_c (s, ',');
  if (isfinite (value))
    g_string_append (s, g_ascii_formatd (buf, sizeof buf, "%.6g", value));
}

char *
efflux_ledger_to_csv (EffluxLedger *self)
{
  GString *s = g_string_new ("lobe,kind");
  guint n;

  g_return_val_if_fail (EFFLUX_IS_LEDGER (self), NULL);
  for (guint c = EFFLUX_LEDGER_MASS; c < EFFLUX_LEDGER_N_COLUMNS; c++)
    {
      if (columns[c].quantity != EFFLUX_MQ_N)
        g_string_append_printf (s, ",%s,%s_err,%s_p16,%s_p84", columns[c].csv, columns[c].csv,
                                columns[c].csv, columns[c].csv);
      else
        g_string_append_printf (s, ",%s,%s_err", columns[c].csv, columns[c].csv);
    }
  g_string_append_c (s, '\n');
  n = g_list_model_get_n_items (G_LIST_MODEL (self->store));
  for (guint i = 0; i < n; i++)
    {
      g_autoptr(EffluxLedgerRow) row = g_list_model_get_item (G_LIST_MODEL (self->store), i);
      const EffluxMeasureRow *r = &row->row;

      /* lobe names are dossier group names: no commas or quotes (CONTRACT.md) */
      g_string_append (s, r->is_total ? "total" : r->lobe);
      g_string_append_printf (s, ",%s", r->is_total ? "" : (r->kind == EFFLUX_LOBE_RED ? "red" : "blue"));
      for (guint c = EFFLUX_LEDGER_MASS; c < EFFLUX_LEDGER_N_COLUMNS; c++)
        {
          double value, error;

          column_value (r, c, &value, &error);
          csv_number (s, value);
          csv_number (s, error);
          if (columns[c].quantity != EFFLUX_MQ_N)
            {
              csv_number (s, r->pct[columns[c].quantity][0]);
              csv_number (s, r->pct[columns[c].quantity][2]);
            }
        }
      g_string_append_c (s, '\n');
    }
  return g_string_free (s, FALSE);
}

static void
copy_csv_action (GtkWidget  *widget,
                 const char *action_name,
                 GVariant   *parameter)
{
  g_autofree char *csv = efflux_ledger_to_csv (EFFLUX_LEDGER (widget));

  gdk_clipboard_set_text (gtk_widget_get_clipboard (widget), csv);
}

static void
efflux_ledger_dispose (GObject *object)
{
  EffluxLedger *self = EFFLUX_LEDGER (object);

  g_clear_pointer (&self->scrolled, gtk_widget_unparent);
  self->view = NULL;
  g_clear_object (&self->store);
  G_OBJECT_CLASS (efflux_ledger_parent_class)->dispose (object);
}

static void
efflux_ledger_class_init (EffluxLedgerClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_ledger_dispose;
  gtk_widget_class_set_layout_manager_type (widget_class, GTK_TYPE_BIN_LAYOUT);
  gtk_widget_class_set_css_name (widget_class, "efflux-ledger");
  gtk_widget_class_install_action (widget_class, "ledger.copy-csv", NULL, copy_csv_action);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_c, GDK_CONTROL_MASK,
                                       "ledger.copy-csv", NULL);
}

static void
efflux_ledger_init (EffluxLedger *self)
{
  GtkSelectionModel *selection;

  self->store = g_list_store_new (EFFLUX_TYPE_LEDGER_ROW);
  selection = GTK_SELECTION_MODEL (gtk_no_selection_new (G_LIST_MODEL (g_object_ref (self->store))));
  self->view = GTK_COLUMN_VIEW (gtk_column_view_new (selection));
  gtk_column_view_set_show_column_separators (self->view, TRUE);
  gtk_column_view_set_show_row_separators (self->view, TRUE);
  gtk_column_view_set_reorderable (self->view, FALSE);
  for (guint c = 0; c < EFFLUX_LEDGER_N_COLUMNS; c++)
    {
      GtkListItemFactory *factory = gtk_signal_list_item_factory_new ();
      GtkColumnViewColumn *column;

      g_signal_connect (factory, "setup", G_CALLBACK (setup_cb), GUINT_TO_POINTER (c));
      g_signal_connect (factory, "bind", G_CALLBACK (bind_cb), GUINT_TO_POINTER (c));
      g_signal_connect (factory, "unbind", G_CALLBACK (unbind_cb), GUINT_TO_POINTER (c));
      column = gtk_column_view_column_new (efflux_ledger_column_title (c), factory);
      gtk_column_view_column_set_resizable (column, TRUE);
      gtk_column_view_append_column (self->view, column);
      g_object_unref (column);
    }
  self->scrolled = gtk_scrolled_window_new ();
  gtk_scrolled_window_set_child (GTK_SCROLLED_WINDOW (self->scrolled), GTK_WIDGET (self->view));
  gtk_scrolled_window_set_policy (GTK_SCROLLED_WINDOW (self->scrolled), GTK_POLICY_AUTOMATIC,
                                  GTK_POLICY_AUTOMATIC);
  gtk_widget_set_parent (self->scrolled, GTK_WIDGET (self));
  gtk_widget_set_hexpand (GTK_WIDGET (self), TRUE);
  gtk_widget_set_vexpand (GTK_WIDGET (self), TRUE);
  gtk_widget_set_tooltip_text (GTK_WIDGET (self), NULL);
}

GtkWidget *
efflux_ledger_new (void)
{
  return g_object_new (EFFLUX_TYPE_LEDGER, NULL);
}
