/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-document.h"

G_BEGIN_DECLS

/* The Assumptions side sheet: one field per [Source] and [Assumptions] key of the dossier
 * (distance, v_sys, inclination, T_ex, abundance, isotope ratio, opacity method, clip, ...).
 * A field is committed on Enter or when it loses the focus, as one undoable document command;
 * the core's validation message (naming the group and key) stays beside a refused field, which
 * keeps the text typed. An empty field removes an optional key. */

#define EFFLUX_TYPE_ASSUMPTIONS (efflux_assumptions_get_type ())
G_DECLARE_FINAL_TYPE (EffluxAssumptions, efflux_assumptions, EFFLUX, ASSUMPTIONS, GtkWidget)

GtkWidget  *efflux_assumptions_new          (void);
void        efflux_assumptions_set_document (EffluxAssumptions *self,
                                             EffluxDocument    *document);
/* Type text into the field of key (e.g. "distance-pc") and commit it, as Enter does. */
void        efflux_assumptions_enter        (EffluxAssumptions *self,
                                             const char        *key,
                                             const char        *text);
/* The message beside the field of key ("" when the value was taken). */
const char *efflux_assumptions_get_message  (EffluxAssumptions *self,
                                             const char        *key);

G_END_DECLS
