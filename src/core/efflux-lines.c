/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The built-in line catalogue: rotational lines of CO isotopologues and SiO. */

#include "efflux-lines.h"

#include <math.h>
#include <string.h>

/* Catalogue values, REFERENCES.md 2.3: frequencies, Einstein A, E_u/k and g_u as given by the
 * LAMDA data files (Schoeier et al. 2005, A&A 432, 369) and the CDMS/JPL catalogues, read there in
 * public repository text quoting those catalogues. Rotational constants B from the JPL catalogue
 * (12CO 57635.968, 13CO 55101.011, C18O 54891.420 MHz); SiO B = 21711.96 MHz is marked [R] in
 * REFERENCES.md.
 *
 * SiO 5-4: A = 10^-3.28288 s^-1 (the JPL log A quoted in REFERENCES.md 2.3; the rounded 5.21e-4
 * printed beside it differs by 0.07%).
 *
 * SiO 2-1 (v=0) is not in REFERENCES.md: frequency 86.84696 GHz (CDMS), A = 2.927e-5 s^-1,
 * E_u/k = 6.25 K (LAMDA sio.dat), g_u = 5. These four numbers are FROM MEMORY; tests/test-lte.c
 * cross-checks them against the rigid-rotor relations nu = 2 B J_u, E_u = h B J_u (J_u + 1) and
 * A_ul = 64 pi^4 nu^3 mu^2 J_u / (3 h c^3 (2 J_u + 1)) with mu = 3.098 D (REFERENCES.md 1.3). */
static const EffluxLine lines[] = {
  { "12CO 1-0", EFFLUX_SPECIES_12CO, 1, 115.2712018e9, 7.203e-08,  5.53,  3, 57635.968e6 },
  { "12CO 2-1", EFFLUX_SPECIES_12CO, 2, 230.5380000e9, 6.910e-07, 16.60,  5, 57635.968e6 },
  { "12CO 3-2", EFFLUX_SPECIES_12CO, 3, 345.7959899e9, 2.497e-06, 33.19,  7, 57635.968e6 },
  { "13CO 1-0", EFFLUX_SPECIES_13CO, 1, 110.2013543e9, 6.294e-08,  5.29,  3, 55101.011e6 },
  { "13CO 2-1", EFFLUX_SPECIES_13CO, 2, 220.3986842e9, 6.038e-07, 15.87,  5, 55101.011e6 },
  { "13CO 3-2", EFFLUX_SPECIES_13CO, 3, 330.5879653e9, 2.181e-06, 31.73,  7, 55101.011e6 },
  { "C18O 1-0", EFFLUX_SPECIES_C18O, 1, 109.7821734e9, 6.266e-08,  5.27,  3, 54891.420e6 },
  { "C18O 2-1", EFFLUX_SPECIES_C18O, 2, 219.5603541e9, 6.011e-07, 15.81,  5, 54891.420e6 },
  { "C18O 3-2", EFFLUX_SPECIES_C18O, 3, 329.3305525e9, 2.172e-06, 31.61,  7, 54891.420e6 },
  { "SiO 2-1",  EFFLUX_SPECIES_SIO,  2,  86.8469600e9, 2.927e-05,  6.25,  5, 21711.96e6 },
  { "SiO 5-4",  EFFLUX_SPECIES_SIO,  5, 217.1049800e9, 5.213387424235066e-04, 31.26, 11,
    21711.96e6 },
};

guint
efflux_line_count (void)
{
  return G_N_ELEMENTS (lines);
}

const EffluxLine *
efflux_line_get (guint index)
{
  if (index >= G_N_ELEMENTS (lines))
    return NULL;
  return &lines[index];
}

/* Reduce a line name to a compact key: lower case, no blanks or parentheses, every kind of dash
 * (ASCII hyphen, en dash, em dash, minus sign) as '-', and a bare "co" read as "12co". A trailing
 * vibrational tag "v=0" is dropped. "12CO(2-1)", "co 2–1" and "12co 2-1" all become "12co2-1". */
static char *
line_key (const char *name)
{
  GString *key = g_string_new (NULL);
  const char *p;

  if (!g_utf8_validate (name, -1, NULL))
    {
      g_string_free (key, TRUE);
      return NULL;
    }

  for (p = name; *p != '\0'; p = g_utf8_next_char (p))
    {
      gunichar ch = g_utf8_get_char (p);

      if (g_unichar_isspace (ch) || ch == '(' || ch == ')' || ch == ',' || ch == '_')
        continue;
      if (ch == '-' || ch == 0x2010 || ch == 0x2011 || ch == 0x2012 || ch == 0x2013
          || ch == 0x2014 || ch == 0x2212)
        {
          g_string_append_c (key, '-');
          continue;
        }
      if (ch >= 0x80)
        {
          g_string_free (key, TRUE);
          return NULL;
        }
      g_string_append_c (key, g_ascii_tolower ((char) ch));
    }

  if (g_str_has_suffix (key->str, "v=0"))
    g_string_truncate (key, key->len - 3);
  if (g_str_has_prefix (key->str, "co"))
    g_string_prepend (key, "12");

  return g_string_free (key, FALSE);
}

const EffluxLine *
efflux_line_lookup (const char *name)
{
  g_autofree char *key = NULL;
  guint i;

  if (name == NULL)
    return NULL;
  key = line_key (name);
  if (key == NULL || *key == '\0')
    return NULL;

  for (i = 0; i < G_N_ELEMENTS (lines); i++)
    {
      g_autofree char *canonical = line_key (lines[i].name);

      if (g_strcmp0 (key, canonical) == 0)
        return &lines[i];
    }
  return NULL;
}

const EffluxLine *
efflux_line_guess (double restfreq_hz,
                   double rel_tol)
{
  const EffluxLine *best = NULL;
  double best_rel = INFINITY;
  guint i;

  if (!isfinite (restfreq_hz) || restfreq_hz <= 0.0 || !(rel_tol >= 0.0))
    return NULL;

  for (i = 0; i < G_N_ELEMENTS (lines); i++)
    {
      double rel = fabs (restfreq_hz - lines[i].freq_hz) / lines[i].freq_hz;

      if (rel < best_rel)
        {
          best_rel = rel;
          best = &lines[i];
        }
    }
  return best_rel <= rel_tol ? best : NULL;
}

const char *
efflux_species_name (EffluxSpecies species)
{
  switch (species)
    {
    case EFFLUX_SPECIES_12CO:
      return "12CO";
    case EFFLUX_SPECIES_13CO:
      return "13CO";
    case EFFLUX_SPECIES_C18O:
      return "C18O";
    case EFFLUX_SPECIES_SIO:
      return "SiO";
    default:
      return "unknown";
    }
}
