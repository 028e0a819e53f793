/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

G_BEGIN_DECLS

#define EFFLUX_TYPE_APPLICATION (efflux_application_get_type ())
G_DECLARE_FINAL_TYPE (EffluxApplication, efflux_application, EFFLUX, APPLICATION, GtkApplication)

EffluxApplication *efflux_application_new (void);

/* The demo dossier from sample-data/ (build tree first, then the installed copy), or NULL. */
char *efflux_application_find_demo (void);

G_END_DECLS
