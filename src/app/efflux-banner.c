/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The window's message area (efflux-banner.h). */
#define G_LOG_DOMAIN "efflux-banner"

#include "config.h"

#include <glib/gi18n.h>

#include "efflux-banner.h"

struct _EffluxBanner
{
  GtkWidget        parent_instance;

  GtkWidget       *revealer;
  GtkWidget       *box;
  GtkWidget       *icon;
  GtkWidget       *label;
  GtkWidget       *action_button;
  GtkWidget       *close_button;
  char            *message;
  EffluxBannerKind kind;
  guint            n_shown;
};

G_DEFINE_FINAL_TYPE (EffluxBanner, efflux_banner, GTK_TYPE_WIDGET)

enum {
  SIGNAL_ACTION,
  SIGNAL_DISMISSED,
  N_SIGNALS
};

static guint signals[N_SIGNALS];

static void
close_clicked (EffluxBanner *self)
{
  efflux_banner_hide (self);
  g_signal_emit (self, signals[SIGNAL_DISMISSED], 0);
}

static void
action_clicked (EffluxBanner *self)
{
  g_signal_emit (self, signals[SIGNAL_ACTION], 0);
}

static void
efflux_banner_dispose (GObject *object)
{
  EffluxBanner *self = EFFLUX_BANNER (object);

  g_clear_pointer (&self->revealer, gtk_widget_unparent);
  G_OBJECT_CLASS (efflux_banner_parent_class)->dispose (object);
}

static void
efflux_banner_finalize (GObject *object)
{
  EffluxBanner *self = EFFLUX_BANNER (object);

  g_free (self->message);
  G_OBJECT_CLASS (efflux_banner_parent_class)->finalize (object);
}

static void
efflux_banner_class_init (EffluxBannerClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_banner_dispose;
  object_class->finalize = efflux_banner_finalize;

  signals[SIGNAL_ACTION] =
    g_signal_new ("action", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                  G_TYPE_NONE, 0);
  signals[SIGNAL_DISMISSED] =
    g_signal_new ("dismissed", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                  G_TYPE_NONE, 0);

  gtk_widget_class_set_layout_manager_type (widget_class, GTK_TYPE_BIN_LAYOUT);
  gtk_widget_class_set_css_name (widget_class, "efflux-banner");
  gtk_widget_class_set_accessible_role (widget_class, GTK_ACCESSIBLE_ROLE_ALERT);
}

static void
efflux_banner_init (EffluxBanner *self)
{
  self->revealer = gtk_revealer_new ();
  gtk_revealer_set_transition_type (GTK_REVEALER (self->revealer),
                                    GTK_REVEALER_TRANSITION_TYPE_SLIDE_DOWN);
  gtk_widget_set_parent (self->revealer, GTK_WIDGET (self));

  self->box = gtk_box_new (GTK_ORIENTATION_HORIZONTAL, 10);
  gtk_widget_add_css_class (self->box, "efflux-banner");
  gtk_revealer_set_child (GTK_REVEALER (self->revealer), self->box);

  self->icon = gtk_image_new_from_icon_name ("dialog-error-symbolic");
  gtk_box_append (GTK_BOX (self->box), self->icon);

  self->label = gtk_label_new (NULL);
  gtk_label_set_xalign (GTK_LABEL (self->label), 0.0);
  gtk_label_set_ellipsize (GTK_LABEL (self->label), PANGO_ELLIPSIZE_MIDDLE);
  gtk_label_set_selectable (GTK_LABEL (self->label), TRUE);
  gtk_widget_set_hexpand (self->label, TRUE);
  gtk_box_append (GTK_BOX (self->box), self->label);

  self->action_button = gtk_button_new ();
  gtk_widget_set_valign (self->action_button, GTK_ALIGN_CENTER);
  gtk_widget_set_visible (self->action_button, FALSE);
  g_signal_connect_swapped (self->action_button, "clicked", G_CALLBACK (action_clicked), self);
  gtk_box_append (GTK_BOX (self->box), self->action_button);

  self->close_button = gtk_button_new_from_icon_name ("window-close-symbolic");
  gtk_widget_set_valign (self->close_button, GTK_ALIGN_CENTER);
  gtk_widget_add_css_class (self->close_button, "flat");
  gtk_widget_set_tooltip_text (self->close_button, _("Close the message"));
  g_signal_connect_swapped (self->close_button, "clicked", G_CALLBACK (close_clicked), self);
  gtk_box_append (GTK_BOX (self->box), self->close_button);
}

GtkWidget *
efflux_banner_new (void)
{
  return g_object_new (EFFLUX_TYPE_BANNER, NULL);
}

void
efflux_banner_show (EffluxBanner     *self,
                    EffluxBannerKind  kind,
                    const char       *message,
                    const char       *action_label)
{
  static const char *icons[] = { "dialog-error-symbolic", "dialog-warning-symbolic",
                                 "dialog-information-symbolic" };
  static const char *classes[] = { "error", "warning", "info" };

  g_return_if_fail (EFFLUX_IS_BANNER (self));
  g_return_if_fail (message != NULL);
  g_return_if_fail ((guint) kind < G_N_ELEMENTS (icons));

  g_free (self->message);
  self->message = g_strdelimit (g_strdup (message), "\r\n", ' ');
  g_strchomp (self->message);
  self->kind = kind;
  self->n_shown++;
  gtk_image_set_from_icon_name (GTK_IMAGE (self->icon), icons[kind]);
  for (guint i = 0; i < G_N_ELEMENTS (classes); i++)
    if (i == (guint) kind)
      gtk_widget_add_css_class (self->box, classes[i]);
    else
      gtk_widget_remove_css_class (self->box, classes[i]);
  gtk_label_set_text (GTK_LABEL (self->label), self->message);
  /* the full text when the line is ellipsized */
  gtk_widget_set_tooltip_text (self->label, self->message);
  if (action_label != NULL)
    gtk_button_set_use_underline (GTK_BUTTON (self->action_button), TRUE);
  gtk_button_set_label (GTK_BUTTON (self->action_button), action_label ? action_label : "");
  gtk_widget_set_visible (self->action_button, action_label != NULL);
  gtk_revealer_set_reveal_child (GTK_REVEALER (self->revealer), TRUE);
  gtk_accessible_update_property (GTK_ACCESSIBLE (self), GTK_ACCESSIBLE_PROPERTY_LABEL,
                                  self->message, -1);
}

void
efflux_banner_hide (EffluxBanner *self)
{
  g_return_if_fail (EFFLUX_IS_BANNER (self));

  g_clear_pointer (&self->message, g_free);
  gtk_revealer_set_reveal_child (GTK_REVEALER (self->revealer), FALSE);
}

const char *
efflux_banner_get_message (EffluxBanner *self)
{
  g_return_val_if_fail (EFFLUX_IS_BANNER (self), NULL);
  return self->message;
}

EffluxBannerKind
efflux_banner_get_kind (EffluxBanner *self)
{
  g_return_val_if_fail (EFFLUX_IS_BANNER (self), EFFLUX_BANNER_ERROR);
  return self->kind;
}

guint
efflux_banner_get_n_shown (EffluxBanner *self)
{
  g_return_val_if_fail (EFFLUX_IS_BANNER (self), 0);
  return self->n_shown;
}
