/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-ledger"

#include "config.h"

#include "efflux-ledger-cell.h"

struct _EffluxLedgerCell
{
  GtkWidget    parent_instance;
  PangoLayout *layout;
  char        *markup;
  char        *text;      /* the markup without its tags: the accessible label */
  char        *tooltip;
  float        xalign;
  int          req_width, req_height;   /* what measure reports, in pixels */
  PangoFontDescription *font;           /* the widget's font when the layout was made */
};

G_DEFINE_FINAL_TYPE (EffluxLedgerCell, efflux_ledger_cell, GTK_TYPE_WIDGET)

static void
ensure_layout (EffluxLedgerCell *self)
{
  if (self->layout != NULL)
    return;
  self->layout = gtk_widget_create_pango_layout (GTK_WIDGET (self), NULL);
  pango_layout_set_alignment (self->layout, self->xalign >= 0.5f ? PANGO_ALIGN_RIGHT : PANGO_ALIGN_LEFT);
}

/* The markup into the layout, with tabular figures (numbers of a column line up, and a changing
 * number keeps its width). */
static void
apply_markup (EffluxLedgerCell *self)
{
  PangoAttrList *attrs;
  g_autofree char *text = NULL;

  ensure_layout (self);
  if (self->markup == NULL
      || !pango_parse_markup (self->markup, -1, 0, &attrs, &text, NULL, NULL))
    {
      pango_layout_set_text (self->layout, "", 0);
      pango_layout_set_attributes (self->layout, NULL);
      g_free (self->text);
      self->text = g_strdup ("");
      return;
    }
  pango_attr_list_insert_before (attrs, pango_attr_font_features_new ("tnum=1"));
  pango_layout_set_text (self->layout, text, -1);
  pango_layout_set_attributes (self->layout, attrs);
  pango_attr_list_unref (attrs);
  g_free (self->text);
  self->text = g_steal_pointer (&text);
}

/* TRUE when the cell needs more room (or a different height) than it asks for now. */
static gboolean
grow_request (EffluxLedgerCell *self)
{
  int w, h;

  pango_layout_get_pixel_size (self->layout, &w, &h);
  if (w <= self->req_width && h == self->req_height)
    return FALSE;
  self->req_width = MAX (self->req_width, w);
  self->req_height = h;
  return TRUE;
}

gboolean
efflux_ledger_cell_set_markup (EffluxLedgerCell *self,
                               const char       *markup,
                               const char       *tooltip)
{
  gboolean resize;

  g_return_val_if_fail (EFFLUX_IS_LEDGER_CELL (self), FALSE);

  if (g_strcmp0 (tooltip, self->tooltip) != 0)
    {
      g_free (self->tooltip);
      self->tooltip = g_strdup (tooltip);
      /* the text is asked for when the tooltip shows (query_tooltip), not set on each result */
      if (gtk_widget_get_has_tooltip (GTK_WIDGET (self)) != (tooltip != NULL))
        gtk_widget_set_has_tooltip (GTK_WIDGET (self), tooltip != NULL);
    }
  if (g_strcmp0 (markup, self->markup) == 0)
    return FALSE;
  g_free (self->markup);
  self->markup = g_strdup (markup);
  apply_markup (self);
  gtk_accessible_update_property (GTK_ACCESSIBLE (self), GTK_ACCESSIBLE_PROPERTY_LABEL, self->text, -1);
  resize = grow_request (self);
  if (resize)
    gtk_widget_queue_resize (GTK_WIDGET (self));
  else
    gtk_widget_queue_draw (GTK_WIDGET (self));
  return resize;
}

const char *
efflux_ledger_cell_get_text (EffluxLedgerCell *self)
{
  g_return_val_if_fail (EFFLUX_IS_LEDGER_CELL (self), NULL);
  return self->text != NULL ? self->text : "";
}

void
efflux_ledger_cell_reset_width (EffluxLedgerCell *self)
{
  g_return_if_fail (EFFLUX_IS_LEDGER_CELL (self));

  self->req_width = 0;
  self->req_height = 0;
  if (self->layout != NULL)
    grow_request (self);
  gtk_widget_queue_resize (GTK_WIDGET (self));
}

static void
efflux_ledger_cell_measure (GtkWidget      *widget,
                            GtkOrientation  orientation,
                            int             for_size,
                            int            *minimum,
                            int            *natural,
                            int            *minimum_baseline,
                            int            *natural_baseline)
{
  EffluxLedgerCell *self = EFFLUX_LEDGER_CELL (widget);

  *minimum = *natural = orientation == GTK_ORIENTATION_HORIZONTAL ? self->req_width : self->req_height;
}

static void
efflux_ledger_cell_snapshot (GtkWidget   *widget,
                             GtkSnapshot *snapshot)
{
  EffluxLedgerCell *self = EFFLUX_LEDGER_CELL (widget);
  GdkRGBA color;
  int w, h;

  if (self->layout == NULL || self->text == NULL || self->text[0] == '\0')
    return;
  pango_layout_get_pixel_size (self->layout, &w, &h);
  gtk_style_context_get_color (gtk_widget_get_style_context (widget), &color);
  gtk_snapshot_save (snapshot);
  gtk_snapshot_translate (snapshot,
                          &GRAPHENE_POINT_INIT (floorf (self->xalign * (gtk_widget_get_width (widget) - w)),
                                                floorf ((gtk_widget_get_height (widget) - h) / 2.0f)));
  gtk_snapshot_append_layout (snapshot, self->layout, &color);
  gtk_snapshot_restore (snapshot);
}

static gboolean
efflux_ledger_cell_query_tooltip (GtkWidget  *widget,
                                  int         x,
                                  int         y,
                                  gboolean    keyboard,
                                  GtkTooltip *tooltip)
{
  EffluxLedgerCell *self = EFFLUX_LEDGER_CELL (widget);

  if (self->tooltip == NULL)
    return FALSE;
  gtk_tooltip_set_text (tooltip, self->tooltip);
  return TRUE;
}

/* When the font changed (not on every hover or selection of the row): measure the text again
 * from nothing. */
static void
efflux_ledger_cell_css_changed (GtkWidget         *widget,
                                GtkCssStyleChange *change)
{
  EffluxLedgerCell *self = EFFLUX_LEDGER_CELL (widget);
  const PangoFontDescription *font;

  GTK_WIDGET_CLASS (efflux_ledger_cell_parent_class)->css_changed (widget, change);
  font = pango_context_get_font_description (gtk_widget_get_pango_context (widget));
  if (self->font != NULL && font != NULL && pango_font_description_equal (self->font, font))
    return;
  g_clear_pointer (&self->font, pango_font_description_free);
  self->font = font != NULL ? pango_font_description_copy (font) : NULL;
  if (self->layout != NULL)
    {
      g_clear_object (&self->layout);
      apply_markup (self);
      efflux_ledger_cell_reset_width (self);
    }
}

static void
efflux_ledger_cell_finalize (GObject *object)
{
  EffluxLedgerCell *self = EFFLUX_LEDGER_CELL (object);

  g_clear_object (&self->layout);
  g_clear_pointer (&self->font, pango_font_description_free);
  g_free (self->markup);
  g_free (self->text);
  g_free (self->tooltip);
  G_OBJECT_CLASS (efflux_ledger_cell_parent_class)->finalize (object);
}

static void
efflux_ledger_cell_class_init (EffluxLedgerCellClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->finalize = efflux_ledger_cell_finalize;
  widget_class->measure = efflux_ledger_cell_measure;
  widget_class->snapshot = efflux_ledger_cell_snapshot;
  widget_class->query_tooltip = efflux_ledger_cell_query_tooltip;
  widget_class->css_changed = efflux_ledger_cell_css_changed;
  gtk_widget_class_set_css_name (widget_class, "label");
  gtk_widget_class_set_accessible_role (widget_class, GTK_ACCESSIBLE_ROLE_LABEL);
}

static void
efflux_ledger_cell_init (EffluxLedgerCell *self)
{
}

GtkWidget *
efflux_ledger_cell_new (float xalign)
{
  EffluxLedgerCell *self = g_object_new (EFFLUX_TYPE_LEDGER_CELL, NULL);

  self->xalign = xalign;
  return GTK_WIDGET (self);
}
