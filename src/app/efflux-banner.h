/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

G_BEGIN_DECLS

/*
 * EffluxBanner: the window's message area. A strip under the header bar that slides in (a
 * GtkRevealer) with an icon, a one-line message and a close button. Errors (a load, a save, an
 * edit the core refuses, a measurement) are shown here; the message stays until it is closed or
 * replaced, so nothing the user should read disappears on its own. An optional action button
 * ("Retry", "Recover"...) emits "action" when clicked.
 *
 * Signals:
 *   action (): the action button was clicked.
 *   dismissed (): the close button was clicked (the banner is hidden already).
 */

typedef enum
{
  EFFLUX_BANNER_ERROR,
  EFFLUX_BANNER_WARNING,
  EFFLUX_BANNER_INFO,
} EffluxBannerKind;

#define EFFLUX_TYPE_BANNER (efflux_banner_get_type ())
G_DECLARE_FINAL_TYPE (EffluxBanner, efflux_banner, EFFLUX, BANNER, GtkWidget)

GtkWidget  *efflux_banner_new          (void);
/* Show message (one line; newlines are replaced by spaces). action_label (may be NULL) shows
 * an action button with that label. */
void        efflux_banner_show         (EffluxBanner     *self,
                                        EffluxBannerKind  kind,
                                        const char       *message,
                                        const char       *action_label);
void        efflux_banner_hide         (EffluxBanner     *self);
/* The message shown, or NULL when the banner is hidden. */
const char *efflux_banner_get_message  (EffluxBanner     *self);
EffluxBannerKind efflux_banner_get_kind (EffluxBanner    *self);
/* Number of messages shown since the banner was made (tests). */
guint       efflux_banner_get_n_shown  (EffluxBanner     *self);

G_END_DECLS
