/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-help"

#include "config.h"

#include <glib/gi18n.h>

#include "efflux-help.h"

struct _EffluxHelpWindow
{
  GtkWindow  parent_instance;

  GtkStack  *stack;
};

G_DEFINE_FINAL_TYPE (EffluxHelpWindow, efflux_help_window, GTK_TYPE_WINDOW)

static void
efflux_help_window_class_init (EffluxHelpWindowClass *klass)
{
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  gtk_widget_class_set_template_from_resource (widget_class,
                                               "/org/effluxproject/Efflux/efflux-help.ui");
  gtk_widget_class_bind_template_child (widget_class, EffluxHelpWindow, stack);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_Escape, 0, "window.close", NULL);
}

static void
efflux_help_window_init (EffluxHelpWindow *self)
{
  gtk_widget_init_template (GTK_WIDGET (self));
}

GtkWidget *
efflux_help_window_new (GtkWindow  *parent,
                        const char *page)
{
  EffluxHelpWindow *self = g_object_new (EFFLUX_TYPE_HELP_WINDOW, NULL);

  if (parent != NULL)
    {
      gtk_window_set_transient_for (GTK_WINDOW (self), parent);
      gtk_window_set_application (GTK_WINDOW (self), gtk_window_get_application (parent));
    }
  if (page != NULL)
    efflux_help_window_show_page (self, page);
  return GTK_WIDGET (self);
}

void
efflux_help_window_show_page (EffluxHelpWindow *self,
                              const char       *page)
{
  g_return_if_fail (EFFLUX_IS_HELP_WINDOW (self));
  g_return_if_fail (page != NULL);

  if (gtk_stack_get_child_by_name (self->stack, page) == NULL)
    {
      g_warning ("no help page named '%s'", page);
      return;
    }
  gtk_stack_set_visible_child_name (self->stack, page);
}

const char *
efflux_help_window_get_page (EffluxHelpWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_HELP_WINDOW (self), NULL);

  return gtk_stack_get_visible_child_name (self->stack);
}

static void
collect_labels (GtkWidget *widget,
                GString   *text)
{
  if (GTK_IS_LABEL (widget))
    {
      if (text->len > 0)
        g_string_append_c (text, '\n');
      g_string_append (text, gtk_label_get_text (GTK_LABEL (widget)));
      return;
    }
  for (GtkWidget *child = gtk_widget_get_first_child (widget);
       child != NULL;
       child = gtk_widget_get_next_sibling (child))
    collect_labels (child, text);
}

char *
efflux_help_window_get_text (EffluxHelpWindow *self,
                             const char       *page)
{
  GtkWidget *child;
  GString *text;

  g_return_val_if_fail (EFFLUX_IS_HELP_WINDOW (self), NULL);

  child = gtk_stack_get_child_by_name (self->stack, page);
  if (child == NULL)
    return NULL;
  text = g_string_new (NULL);
  collect_labels (child, text);
  return g_string_free (text, FALSE);
}
