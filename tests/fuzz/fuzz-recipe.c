/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libFuzzer target: the synthetic-cube recipe parser (efflux_synth_recipe_load_data). */

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "efflux-synth.h"

int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);

int
LLVMFuzzerTestOneInput (const uint8_t *data,
                        size_t         size)
{
  EffluxSynthRecipe *recipe;
  GError *error = NULL;
  char *text;

  /* the parser takes NUL-terminated text */
  text = g_malloc (size + 1);
  memcpy (text, data, size);
  text[size] = '\0';
  recipe = efflux_synth_recipe_load_data (text, "fuzz.recipe", &error);
  if (recipe == NULL)
    {
      if (error == NULL || error->domain != EFFLUX_ERROR || strchr (error->message, '\n') != NULL)
        abort ();
      g_error_free (error);
    }
  else
    {
      for (guint i = 0; i < efflux_synth_recipe_n_cubes (recipe); i++)
        if (efflux_synth_recipe_cube_id (recipe, i) == NULL || efflux_synth_recipe_cube_line (recipe, i) == NULL)
          abort ();
      efflux_synth_recipe_free (recipe);
    }
  g_free (text);
  return 0;
}
