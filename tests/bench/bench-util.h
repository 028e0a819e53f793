/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* What bench-measure and bench-ui-drag share: the pattern that fills their cube and the lobe
 * outline written from pixel vertices. */

#include <glib.h>

#include "efflux-cube.h"

/* xorshift64*: a fast seeded pattern (Vigna 2016), only to fill the cube */
static inline guint64
next (guint64 *s)
{
  *s ^= *s >> 12;
  *s ^= *s << 25;
  *s ^= *s >> 27;
  return *s * 0x2545F4914F6CDD1DULL;
}

static inline char *
polygon (const EffluxCube *cube,
         const double     *px,
         const double     *py,
         int               n)
{
  GString *s = g_string_new (NULL);

  for (int i = 0; i < n; i++)
    {
      double ra, dec;

      g_assert_true (efflux_cube_pixel_to_icrs (cube, px[i], py[i], &ra, &dec));
      g_string_append_printf (s, "%s%.10f,%.10f", i ? ";" : "", ra, dec);
    }
  return g_string_free (s, FALSE);
}
