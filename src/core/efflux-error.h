/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

#define EFFLUX_ERROR (efflux_error_quark ())

/* Every refusal carries one line naming the file and the key or header card. */
typedef enum
{
  EFFLUX_ERROR_INPUT,     /* the input was refused: bad file, bad card, bad key, bad value */
  EFFLUX_ERROR_IO,        /* reading or writing failed */
  EFFLUX_ERROR_MEMORY,    /* the data would not fit in memory */
  EFFLUX_ERROR_CANCELLED, /* the caller cancelled */
  EFFLUX_ERROR_USAGE,     /* wrong use of a command */
} EffluxErrorCode;

GQuark efflux_error_quark (void);

/* Progress of long work: fraction in [0, 1]. Called from the worker's thread. */
typedef void (*EffluxProgressFunc) (double fraction, gpointer user_data);

G_END_DECLS
