/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-error.h"

G_DEFINE_QUARK (efflux-error-quark, efflux_error)
