/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-assumptions"

#include "config.h"

#include <glib/gi18n.h>

#include "efflux-assumptions.h"
#include "efflux-resources.h"

typedef struct
{
  const char *group;
  const char *key;
  const char *label;
  const char *tooltip;
} Field;

/* The keys of CONTRACT.md section 2 and efflux-dossier.h, in the order of the file. */
static const Field fields[] = {
  { "Source", "distance-pc", N_("Distance (pc)"), N_("Distance to the source in parsecs") },
  { "Source", "distance-err-pc", N_("Distance error (pc)"), N_("1 σ error of the distance; empty: none") },
  { "Source", "vsys-kms", N_("v_sys (km/s)"), N_("Systemic velocity, LSRK, radio convention") },
  { "Source", "inclination-mode", N_("Inclination"), N_("none, fixed, range or random") },
  { "Source", "inclination-deg", N_("Inclination (°)"), N_("For inclination fixed: the angle from the line of sight") },
  { "Source", "inclination-range-deg", N_("Inclination range (°)"), N_("For inclination range: LO;HI") },
  { "Assumptions", "tex-k", N_("T_ex (K)"), N_("Excitation temperature") },
  { "Assumptions", "tex-range-k", N_("T_ex range (K)"), N_("LO;HI for the Monte Carlo; empty: no spread") },
  { "Assumptions", "tbg-k", N_("T_bg (K)"), N_("Background radiation temperature") },
  { "Assumptions", "co-abundance", N_("[12CO/H2]"), N_("CO abundance relative to H2, by number") },
  { "Assumptions", "co-abundance-range", N_("[12CO/H2] range"), N_("LO;HI for the Monte Carlo (log-uniform); empty: no spread") },
  { "Assumptions", "isotope-ratio", N_("12C/13C"), N_("Isotope ratio") },
  { "Assumptions", "mass-per-h2", N_("Mass per H2 (m_H)"), N_("Mean mass per H2 molecule in hydrogen-atom masses") },
  { "Assumptions", "opacity", N_("Opacity"), N_("none, fixed or from-isotopologue") },
  { "Assumptions", "tau", N_("τ"), N_("The tracer's optical depth for opacity fixed") },
  { "Assumptions", "clip-sigma", N_("Clip (σ)"), N_("Voxels below this many rms are left out; 0 keeps all") },
  { "Assumptions", "mc-samples", N_("Monte Carlo samples"), N_("0: no Monte Carlo") },
  { "Assumptions", "mc-seed", N_("Monte Carlo seed"), N_("The same seed gives the same percentiles") },
};

struct _EffluxAssumptions
{
  GtkWidget       parent_instance;

  GtkGrid        *grid;
  GtkEntry       *entries[G_N_ELEMENTS (fields)];
  GtkLabel       *messages[G_N_ELEMENTS (fields)];
  EffluxDocument *document;
};

G_DEFINE_FINAL_TYPE (EffluxAssumptions, efflux_assumptions, GTK_TYPE_WIDGET)

static int
field_index (const char *key)
{
  for (guint i = 0; i < G_N_ELEMENTS (fields); i++)
    if (g_str_equal (fields[i].key, key))
      return (int) i;
  return -1;
}

static void
refresh (EffluxAssumptions *self)
{
  const EffluxDossier *d = self->document ? efflux_document_get_dossier (self->document) : NULL;

  for (guint i = 0; i < G_N_ELEMENTS (fields); i++)
    {
      g_autofree char *value = NULL;

      gtk_widget_set_sensitive (GTK_WIDGET (self->entries[i]), d != NULL);
      /* a refused field keeps what was typed until it is taken or the key changes */
      if (gtk_widget_has_css_class (GTK_WIDGET (self->entries[i]), "error"))
        continue;
      if (d != NULL)
        value = g_key_file_get_value (d->keyfile, fields[i].group, fields[i].key, NULL);
      gtk_editable_set_text (GTK_EDITABLE (self->entries[i]), value ? value : "");
    }
}

static void
commit (EffluxAssumptions *self,
        guint              i)
{
  const EffluxDossier *d;
  g_autofree char *old = NULL;
  g_autofree char *text = NULL;
  g_autoptr(GError) error = NULL;

  if (self->document == NULL)
    return;
  d = efflux_document_get_dossier (self->document);
  text = g_strstrip (g_strdup (gtk_editable_get_text (GTK_EDITABLE (self->entries[i]))));
  old = g_key_file_get_value (d->keyfile, fields[i].group, fields[i].key, NULL);
  if (g_strcmp0 (old ? old : "", text) == 0)
    {
      gtk_widget_remove_css_class (GTK_WIDGET (self->entries[i]), "error");
      gtk_label_set_text (self->messages[i], "");
      gtk_widget_set_visible (GTK_WIDGET (self->messages[i]), FALSE);
      return;
    }
  if (!efflux_document_set_key (self->document, fields[i].group, fields[i].key,
                                *text ? text : NULL, 0, &error))
    {
      gtk_widget_add_css_class (GTK_WIDGET (self->entries[i]), "error");
      gtk_label_set_text (self->messages[i], error->message);
      gtk_widget_set_visible (GTK_WIDGET (self->messages[i]), TRUE);
      return;
    }
  gtk_widget_remove_css_class (GTK_WIDGET (self->entries[i]), "error");
  gtk_label_set_text (self->messages[i], "");
  gtk_widget_set_visible (GTK_WIDGET (self->messages[i]), FALSE);
}

static void
entry_activate (GtkEntry          *entry,
                EffluxAssumptions *self)
{
  commit (self, GPOINTER_TO_UINT (g_object_get_data (G_OBJECT (entry), "efflux-field")));
}

static void
focus_leave (GtkEventControllerFocus *controller,
             EffluxAssumptions       *self)
{
  GtkWidget *entry = gtk_event_controller_get_widget (GTK_EVENT_CONTROLLER (controller));

  commit (self, GPOINTER_TO_UINT (g_object_get_data (G_OBJECT (entry), "efflux-field")));
}

static void
document_changed (EffluxDocument    *document,
                  const char        *group,
                  EffluxAssumptions *self)
{
  refresh (self);
}

void
efflux_assumptions_set_document (EffluxAssumptions *self,
                                 EffluxDocument    *document)
{
  g_return_if_fail (EFFLUX_IS_ASSUMPTIONS (self));
  if (self->document != NULL)
    g_signal_handlers_disconnect_by_func (self->document, document_changed, self);
  g_set_object (&self->document, document);
  if (document != NULL)
    g_signal_connect (document, "changed", G_CALLBACK (document_changed), self);
  for (guint i = 0; i < G_N_ELEMENTS (fields); i++)
    {
      gtk_widget_remove_css_class (GTK_WIDGET (self->entries[i]), "error");
      gtk_widget_set_visible (GTK_WIDGET (self->messages[i]), FALSE);
    }
  refresh (self);
}

void
efflux_assumptions_enter (EffluxAssumptions *self,
                          const char        *key,
                          const char        *text)
{
  int i = field_index (key);

  g_return_if_fail (EFFLUX_IS_ASSUMPTIONS (self));
  g_return_if_fail (i >= 0);
  gtk_editable_set_text (GTK_EDITABLE (self->entries[i]), text);
  commit (self, (guint) i);
}

const char *
efflux_assumptions_get_message (EffluxAssumptions *self,
                                const char        *key)
{
  int i = field_index (key);

  g_return_val_if_fail (EFFLUX_IS_ASSUMPTIONS (self), NULL);
  g_return_val_if_fail (i >= 0, NULL);
  return gtk_label_get_text (self->messages[i]);
}

static void
efflux_assumptions_dispose (GObject *object)
{
  EffluxAssumptions *self = EFFLUX_ASSUMPTIONS (object);

  if (self->document != NULL)
    g_signal_handlers_disconnect_by_func (self->document, document_changed, self);
  g_clear_object (&self->document);
  gtk_widget_dispose_template (GTK_WIDGET (self), EFFLUX_TYPE_ASSUMPTIONS);
  for (GtkWidget *child; (child = gtk_widget_get_first_child (GTK_WIDGET (self))) != NULL;)
    gtk_widget_unparent (child);
  G_OBJECT_CLASS (efflux_assumptions_parent_class)->dispose (object);
}

static void
efflux_assumptions_class_init (EffluxAssumptionsClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_assumptions_dispose;
  g_assert (efflux_get_resource () != NULL);
  gtk_widget_class_set_template_from_resource (widget_class,
                                               "/org/effluxproject/Efflux/efflux-assumptions.ui");
  gtk_widget_class_bind_template_child (widget_class, EffluxAssumptions, grid);
  gtk_widget_class_set_layout_manager_type (widget_class, GTK_TYPE_BIN_LAYOUT);
  gtk_widget_class_set_css_name (widget_class, "efflux-assumptions");
}

static void
efflux_assumptions_init (EffluxAssumptions *self)
{
  const char *last_group = NULL;
  int row = 0;

  gtk_widget_init_template (GTK_WIDGET (self));
  for (guint i = 0; i < G_N_ELEMENTS (fields); i++)
    {
      GtkWidget *label, *entry, *message;
      GtkEventController *focus;

      if (g_strcmp0 (last_group, fields[i].group) != 0)
        {
          g_autofree char *title = g_strdup_printf ("[%s]", fields[i].group);
          GtkWidget *heading = gtk_label_new (title);

          gtk_label_set_xalign (GTK_LABEL (heading), 0.0);
          gtk_widget_add_css_class (heading, "dim-label");
          gtk_widget_set_margin_top (heading, row ? 10 : 2);
          gtk_grid_attach (self->grid, heading, 0, row++, 2, 1);
          last_group = fields[i].group;
        }
      label = gtk_label_new (_(fields[i].label));
      gtk_label_set_xalign (GTK_LABEL (label), 0.0);
      entry = gtk_entry_new ();
      gtk_widget_set_hexpand (entry, TRUE);
      gtk_editable_set_width_chars (GTK_EDITABLE (entry), 10);
      gtk_widget_set_tooltip_text (entry, _(fields[i].tooltip));
      gtk_widget_set_tooltip_text (label, fields[i].key);
      g_object_set_data (G_OBJECT (entry), "efflux-field", GUINT_TO_POINTER (i));
      g_signal_connect (entry, "activate", G_CALLBACK (entry_activate), self);
      focus = gtk_event_controller_focus_new ();
      g_signal_connect (focus, "leave", G_CALLBACK (focus_leave), self);
      gtk_widget_add_controller (entry, focus);
      message = gtk_label_new ("");
      gtk_label_set_wrap (GTK_LABEL (message), TRUE);
      gtk_label_set_max_width_chars (GTK_LABEL (message), 36);
      gtk_label_set_xalign (GTK_LABEL (message), 0.0);
      gtk_widget_add_css_class (message, "error");
      gtk_widget_add_css_class (message, "caption");
      gtk_widget_set_visible (message, FALSE);
      gtk_grid_attach (self->grid, label, 0, row, 1, 1);
      gtk_grid_attach (self->grid, entry, 1, row++, 1, 1);
      gtk_grid_attach (self->grid, message, 0, row++, 2, 1);
      self->entries[i] = GTK_ENTRY (entry);
      self->messages[i] = GTK_LABEL (message);
    }
  refresh (self);
}

GtkWidget *
efflux_assumptions_new (void)
{
  return g_object_new (EFFLUX_TYPE_ASSUMPTIONS, NULL);
}
