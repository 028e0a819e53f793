/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-cube.h"
#include "efflux-lines.h"

G_BEGIN_DECLS

/* Synthetic outflow cubes from a recipe (our own key-file format, documented in
 * sample-data/README.md): an invented protostar with a bipolar Hubble-law outflow, an ambient
 * cloud, an SiO jet with knots; LTE radiative transfer per isotopologue, beam convolution, seeded
 * noise. The recipe's truth (mass, momentum, energy per lobe, knots, inclination) is written
 * beside the cubes, with a matching dossier. */

typedef struct _EffluxSynthRecipe EffluxSynthRecipe;

/* Parse and check a recipe. Errors name the file, the [group] and the key. */
EffluxSynthRecipe *efflux_synth_recipe_load      (const char  *path,
                                                  GError     **error);
EffluxSynthRecipe *efflux_synth_recipe_load_data (const char  *data,
                                                  const char  *name,
                                                  GError     **error);
void               efflux_synth_recipe_free      (EffluxSynthRecipe *recipe);

guint              efflux_synth_recipe_n_cubes   (const EffluxSynthRecipe *recipe);
/* The id of cube i (the NAME of its [Cube NAME] group) and its line. */
const char        *efflux_synth_recipe_cube_id   (const EffluxSynthRecipe *recipe,
                                                  guint                    index);
const EffluxLine  *efflux_synth_recipe_cube_line (const EffluxSynthRecipe *recipe,
                                                  guint                    index);

/* The model gas on the output grid, before radiative transfer. Arrays have the cube layout
 * [((y * nx) + x) * nchan + k] and hold H2 column densities (cm^-2) per voxel. */
typedef struct
{
  gsize   nx, ny, nchan;
  double *lobe_h2;     /* outflow lobes */
  double *ambient_h2;  /* ambient cloud */
  double *jet_h2;      /* SiO jet knots */
  double  pixel_area_cm2;
  EffluxCube *grid;    /* the output grid (sky WCS, velocities, beam); data all zero */
} EffluxSynthModel;

EffluxSynthModel  *efflux_synth_model_new  (const EffluxSynthRecipe *recipe,
                                            GError                 **error);
void               efflux_synth_model_free (EffluxSynthModel *model);

/* Brightness cube (K) of recipe cube `index`: LTE radiative transfer per voxel, then (unless the
 * recipe turns it off) the beam, then the seeded noise. */
EffluxCube        *efflux_synth_render     (const EffluxSynthRecipe *recipe,
                                            const EffluxSynthModel  *model,
                                            guint                    index,
                                            GError                 **error);

/* Everything: the cubes, NAME.truth and NAME.efflux into out_dir (created when missing). Each
 * file is written atomically; on failure the files already written are removed. */
gboolean           efflux_synth_run        (const EffluxSynthRecipe *recipe,
                                            const char              *out_dir,
                                            GError                 **error);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxSynthRecipe, efflux_synth_recipe_free)
G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxSynthModel, efflux_synth_model_free)

G_END_DECLS
