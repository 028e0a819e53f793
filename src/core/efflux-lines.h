/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

/* Isotopologue family, for turning a tracer's column density into 12CO and then H2. */
typedef enum
{
  EFFLUX_SPECIES_12CO,
  EFFLUX_SPECIES_13CO,
  EFFLUX_SPECIES_C18O,
  EFFLUX_SPECIES_SIO,
} EffluxSpecies;

/* One rotational transition J_u -> J_u - 1 of a linear rotor. */
typedef struct
{
  const char    *name;      /* canonical: "12CO 2-1" */
  EffluxSpecies  species;
  int            j_upper;
  double         freq_hz;   /* rest frequency */
  double         a_ul;      /* Einstein A, s^-1 */
  double         eu_k;      /* upper-level energy E_u/k, K (catalogue) */
  int            g_u;       /* upper-level degeneracy 2J_u + 1 */
  double         b_hz;      /* rotational constant B */
} EffluxLine;

guint              efflux_line_count  (void);
const EffluxLine  *efflux_line_get    (guint index);
/* Look up by name; accepts "12CO 2-1", "12co(2-1)", "CO 2-1", "13CO 1-0", "SiO 5-4" ... */
const EffluxLine  *efflux_line_lookup (const char *name);
/* The catalogue line nearest a rest frequency within rel_tol (e.g. 1e-4), or NULL. */
const EffluxLine  *efflux_line_guess  (double      restfreq_hz,
                                       double      rel_tol);
const char        *efflux_species_name (EffluxSpecies species);

G_END_DECLS
