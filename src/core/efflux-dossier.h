/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-error.h"
#include "efflux-lines.h"

G_BEGIN_DECLS

/* A dossier (CONTRACT.md section 2): the plain-text record of one source, in GLib key-file syntax.
 *
 * The parsed values below are a copy of what the key file says; the GKeyFile itself is kept, with
 * its comments and any keys or groups Efflux does not know, and efflux_dossier_save writes it back.
 * Setters change both the struct and the key file.
 *
 * Keys of our own (beyond CONTRACT.md), all optional, in [Assumptions], for the Monte Carlo over
 * the assumptions (efflux-measure.h):
 *   tex-range-k=LO;HI           T_ex drawn uniformly in [LO, HI] K (absent: tex-k, no spread)
 *   co-abundance-range=LO;HI    [12CO/H2] drawn log-uniformly in [LO, HI] (absent: no spread)
 *   isotope-ratio-range=LO;HI   12C/13C drawn uniformly in [LO, HI] (absent: no spread)
 *   o18-ratio=560               16O/18O for lobes measured on C18O (Wilson & Rood 1994, from memory)
 *   sio-abundance=X             [SiO/H2] for lobes measured on SiO (required for such lobes)
 *   mc-samples=2000             Monte Carlo samples (0: no Monte Carlo; at most 1000000)
 *   mc-seed=1                   seed of the Monte Carlo; the same seed gives the same percentiles
 * The distance error is [Source] distance-err-pc (normal, truncated at zero). */

typedef enum
{
  EFFLUX_INCLINATION_NONE,
  EFFLUX_INCLINATION_FIXED,
  EFFLUX_INCLINATION_RANGE,
  EFFLUX_INCLINATION_RANDOM,
} EffluxInclinationMode;

typedef enum
{
  EFFLUX_OPACITY_NONE,
  EFFLUX_OPACITY_FIXED,
  EFFLUX_OPACITY_FROM_ISOTOPOLOGUE,
} EffluxOpacityMethod;

typedef enum
{
  EFFLUX_CUBE_ROLE_TRACER,
  EFFLUX_CUBE_ROLE_ISOTOPOLOGUE,
  EFFLUX_CUBE_ROLE_CONTEXT,
} EffluxCubeRole;

typedef enum
{
  EFFLUX_LOBE_BLUE,
  EFFLUX_LOBE_RED,
} EffluxLobeKind;

typedef struct
{
  char             *id;               /* the name after "Cube " */
  char             *path;             /* as written in the dossier */
  char             *abs_path;         /* resolved against the dossier's directory */
  char             *line_name;        /* as written, NULL when absent (guessed at load) */
  const EffluxLine *line;             /* NULL until known */
  EffluxCubeRole    role;
  double            beam_efficiency;  /* brightness is divided by this */
  double            rms_k;            /* per-channel noise, NaN when absent (estimated) */
} EffluxDossierCube;

typedef struct
{
  char           *name;               /* the name after "Lobe " */
  EffluxLobeKind  kind;
  char           *cube_id;
  gsize           n_vertices;
  double         *ra_deg;             /* n_vertices ICRS degrees */
  double         *dec_deg;
  double          v1_kms, v2_kms;     /* inclusive channel-centre range, v1 <= v2 */
  char           *note;
  char           *author;
} EffluxDossierLobe;

typedef struct
{
  char   *name;                       /* the name after "Cut " */
  char   *cube_id;
  gsize   n_vertices;
  double *ra_deg;
  double *dec_deg;
  double  width_arcsec;               /* 0 when absent */
} EffluxDossierCut;

typedef struct
{
  char                  *path;        /* the file (as given), for messages */
  char                  *dir;         /* its directory, for relative paths */
  GKeyFile              *keyfile;     /* the whole file, comments and unknown keys included */

  /* [Source] */
  char                  *name;
  double                 ra_deg, dec_deg;
  double                 distance_pc;
  double                 distance_err_pc;    /* 0 when absent */
  double                 vsys_kms;
  EffluxInclinationMode  inclination_mode;   /* none when absent */
  double                 inclination_deg;    /* fixed; NaN otherwise */
  double                 inclination_range_deg[2];  /* range; NaN otherwise */

  /* [Assumptions] */
  double                 tex_k;
  double                 tbg_k;              /* default EFFLUX_TCMB */
  double                 co_abundance;
  double                 isotope_ratio;      /* default 62 */
  double                 mass_per_h2;        /* default 2.8 */
  EffluxOpacityMethod    opacity;
  double                 tau;                /* for opacity=fixed */
  double                 clip_sigma;         /* default 0 */
  double                 tex_range_k[2];             /* NaN;NaN when absent */
  double                 co_abundance_range[2];      /* NaN;NaN when absent */
  double                 isotope_ratio_range[2];     /* NaN;NaN when absent */
  double                 o18_ratio;                  /* default 560 */
  double                 sio_abundance;              /* NaN when absent */
  guint                  mc_samples;                 /* default 2000 */
  guint64                mc_seed;                    /* default 1 */

  GPtrArray             *cubes;       /* EffluxDossierCube *, file order */
  GPtrArray             *lobes;       /* EffluxDossierLobe *, file order */
  GPtrArray             *cuts;        /* EffluxDossierCut *, file order */
  GPtrArray             *notes;       /* char *: remarks made while reading (e.g. a guessed line) */
} EffluxDossier;

/* Read and validate. Errors are EFFLUX_ERROR_INPUT with one line naming the file, the group and
 * the key: "demo.efflux: [Lobe blue-1] velocity-kms: expected two numbers 'V1;V2', got '-4'". */
EffluxDossier *efflux_dossier_load          (const char  *path,
                                             GError     **error);
/* The same from text in memory; display_name is used in messages, base_dir for relative paths. */
EffluxDossier *efflux_dossier_new_from_data (const char  *data,
                                             gssize       length,
                                             const char  *display_name,
                                             const char  *base_dir,
                                             GError     **error);
void           efflux_dossier_free          (EffluxDossier *dossier);

/* Write the key file back atomically (comments and unknown keys kept). */
gboolean       efflux_dossier_save          (EffluxDossier  *dossier,
                                             const char     *path,
                                             GError        **error);
char          *efflux_dossier_to_data       (EffluxDossier  *dossier,
                                             gsize          *length);

EffluxDossierCube *efflux_dossier_find_cube (const EffluxDossier *dossier,
                                             const char          *id);
EffluxDossierLobe *efflux_dossier_find_lobe (const EffluxDossier *dossier,
                                             const char          *name);
/* The first cube with role isotopologue, or NULL. */
EffluxDossierCube *efflux_dossier_isotopologue_cube (const EffluxDossier *dossier);

/* Set a cube's line (e.g. guessed from the rest frequency) without writing it to the key file. */
void           efflux_dossier_cube_set_line (EffluxDossierCube *cube,
                                             const EffluxLine  *line);

/* Setters: update the struct and the key file. Values are validated like the loader does. */
gboolean       efflux_dossier_set_distance  (EffluxDossier *dossier,
                                             double         distance_pc,
                                             GError       **error);
gboolean       efflux_dossier_set_vsys      (EffluxDossier *dossier,
                                             double         vsys_kms,
                                             GError       **error);
gboolean       efflux_dossier_set_tex       (EffluxDossier *dossier,
                                             double         tex_k,
                                             GError       **error);
gboolean       efflux_dossier_set_lobe_velocity (EffluxDossier *dossier,
                                                 const char    *lobe,
                                                 double         v1_kms,
                                                 double         v2_kms,
                                                 GError       **error);
gboolean       efflux_dossier_set_lobe_polygon  (EffluxDossier *dossier,
                                                 const char    *lobe,
                                                 const double  *ra_deg,
                                                 const double  *dec_deg,
                                                 gsize          n_vertices,
                                                 GError       **error);

const char    *efflux_inclination_mode_name (EffluxInclinationMode mode);
const char    *efflux_opacity_method_name   (EffluxOpacityMethod   method);
const char    *efflux_lobe_kind_name        (EffluxLobeKind        kind);

/* Added for review (efflux-compare.h, efflux-review.h). Lobe note and author: the text is kept on
 * one line (line breaks become spaces) and written as the raw key-file value the loader reads. */
gboolean       efflux_dossier_set_lobe_author   (EffluxDossier *dossier,
                                                 const char    *lobe,
                                                 const char    *author,
                                                 GError       **error);
gboolean       efflux_dossier_set_lobe_note     (EffluxDossier *dossier,
                                                 const char    *lobe,
                                                 const char    *note,
                                                 GError       **error);
/* Who drew the dossier's lobes: the author of the first lobe that names one, or NULL. */
const char    *efflux_dossier_author            (const EffluxDossier *dossier);

/* The cut's vertices as interleaved (ra, dec) ICRS degrees, the form efflux-pv.h takes; g_free it. */
double        *efflux_dossier_cut_path      (const EffluxDossierCut *cut);

/* Save As: write the dossier to path, a new place, with the keys that name files ([Cube ID] path,
 * [Review] reviewed) rewritten so that they still name the same files from there
 * (efflux_dossier_relocate_path). Comments and unknown keys are kept. On success the dossier is
 * the one at path (path, dir, key file, cube paths); on error nothing changes and no file is
 * left. */
gboolean       efflux_dossier_save_as       (EffluxDossier  *dossier,
                                             const char     *path,
                                             GError        **error);
/* A path value as a dossier in to_dir writes it, for the value a dossier in from_dir holds:
 * absolute values stay as they are, and so does every value when the two directories are the
 * same; otherwise the file's physical place (symbolic links resolved) relative to to_dir, or
 * absolute when the two lie on different file systems (mounts) or share no directory but the
 * root. Newly allocated. */
char          *efflux_dossier_relocate_path (const char     *value,
                                             const char     *from_dir,
                                             const char     *to_dir);
/* TRUE for the keys whose values are file paths relative to the dossier. */
gboolean       efflux_dossier_is_file_key   (const char     *group,
                                             const char     *key);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxDossier, efflux_dossier_free)

G_END_DECLS
