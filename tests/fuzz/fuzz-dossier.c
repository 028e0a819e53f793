/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libFuzzer target: the dossier parser (efflux_dossier_new_from_data), then writing it back and
 * reading the written text again: a dossier Efflux accepted and saved must load again. */

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "efflux-dossier.h"

int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);

int
LLVMFuzzerTestOneInput (const uint8_t *data,
                        size_t         size)
{
  EffluxDossier *d;
  GError *error = NULL;

  d = efflux_dossier_new_from_data ((const char *) data, (gssize) size, "fuzz.efflux", "/nonexistent",
                                    &error);
  if (d == NULL)
    {
      if (error == NULL || error->domain != EFFLUX_ERROR || strchr (error->message, '\n') != NULL)
        abort ();
      g_error_free (error);
      return 0;
    }
  {
    gsize len = 0;
    char *text = efflux_dossier_to_data (d, &len);
    EffluxDossier *again = efflux_dossier_new_from_data (text, (gssize) len, "fuzz.efflux", "/nonexistent",
                                                         &error);
    if (again == NULL)
      abort ();
    if (again->lobes->len != d->lobes->len || again->cubes->len != d->cubes->len)
      abort ();
    efflux_dossier_free (again);
    g_free (text);
  }
  efflux_dossier_free (d);
  return 0;
}
