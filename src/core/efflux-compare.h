/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gio/gio.h>

#include "efflux-dossier.h"
#include "efflux-measure.h"

G_BEGIN_DECLS

/* Two dossiers of the same source, lobe by lobe: "mine" (the reviewer's) and "theirs" (a
 * colleague's).
 *
 * Matching: a lobe of theirs goes with the lobe of mine of the same name. The lobes left over are
 * paired by the largest overlap: among all remaining pairs of the same kind (blue with blue, red
 * with red) the pair with the largest intersection over union is taken first, then the next, as
 * long as the overlap is not zero. What is still left is listed alone.
 *
 * Overlap: intersection over union of the two outlines' pixel sets (efflux-lobe.h masks, pixel
 * centre inside), both on the pixel grid of the cube my lobe is drawn on (a lobe of theirs alone
 * has no overlap). Velocity differences: theirs minus mine, for each end of the range.
 * Ratios: theirs / mine of mass, momentum, energy and tdyn (efflux_measure_dossier on each; NaN
 * when my value is zero or missing, or when no results were given).
 *
 * For the desktop program (a colleague's outlines over mine): efflux_compare with NULL results
 * gives the matching and overlaps without measuring; efflux_dossier_author names the colleague. */

typedef enum
{
  EFFLUX_MATCH_NAME,      /* same name */
  EFFLUX_MATCH_OVERLAP,   /* paired by the largest overlap */
  EFFLUX_MATCH_NONE,      /* only in one of the two */
} EffluxMatchKind;

typedef enum
{
  EFFLUX_RATIO_MASS,
  EFFLUX_RATIO_MOMENTUM,
  EFFLUX_RATIO_ENERGY,
  EFFLUX_RATIO_TDYN,
  EFFLUX_RATIO_N
} EffluxRatio;

typedef struct
{
  char            *mine;         /* my lobe's name, NULL when the lobe is only theirs */
  char            *theirs;       /* their lobe's name, NULL when only mine */
  EffluxLobeKind   kind;
  EffluxMatchKind  match;
  guint64          n_mine, n_theirs, n_both;  /* pixels inside each and inside both */
  double           iou;          /* n_both / (n_mine + n_theirs - n_both); NaN when alone */
  double           dv1_kms;      /* theirs v1 - mine v1; NaN when alone */
  double           dv2_kms;      /* theirs v2 - mine v2 */
  double           ratio[EFFLUX_RATIO_N];   /* theirs / mine */
} EffluxCompareRow;

typedef struct
{
  GPtrArray *rows;               /* EffluxCompareRow *: my lobes in my order, then theirs alone */
  char      *mine_author;        /* efflux_dossier_author of each, NULL when none */
  char      *theirs_author;
  GPtrArray *notes;              /* char *: remarks, e.g. a cube of theirs measured on mine */
} EffluxComparison;

/* Two dossiers are of the same source when their [Source] names agree, ignoring case, white space,
 * hyphens and underscores ("HH 212" and "hh-212"). *separation_arcsec (may be NULL) gets the angle
 * between their [Source] positions, which the caller checks against
 * EFFLUX_SAME_SOURCE_ARCSEC: names that agree with positions farther apart (a typing slip
 * in either dossier), or positions that agree under different names (one source under two
 * designations, or two members of a close binary), are for the user to decide. 5 arcsec: about
 * the beam of the single-dish maps such dossiers measure, and several times the pointing and
 * position errors of interferometer maps (common practice, our judgement). */
#define EFFLUX_SAME_SOURCE_ARCSEC 5.0
gboolean          efflux_compare_same_source (const EffluxDossier *a,
                                              const EffluxDossier *b,
                                              double              *separation_arcsec);

/* mine_cubes: id -> EffluxCube * for my lobes' cubes (the grids). The results may be NULL. */
EffluxComparison *efflux_compare (const EffluxDossier       *mine,
                                  GHashTable                *mine_cubes,
                                  const EffluxMeasureResult *mine_result,
                                  const EffluxDossier       *theirs,
                                  const EffluxMeasureResult *theirs_result,
                                  GError                   **error);

/* All in one: load my cubes, measure both dossiers, compare.
 * Their cubes: a cube file of theirs that is the same file as one of mine is loaded once; a cube
 * file of theirs that does not exist here (their dossier came from another machine) is replaced
 * by my cube of the same id, else of the same line, and a note says so; with neither, the
 * comparison is refused with an error naming their [Cube ID] path. */
EffluxComparison *efflux_compare_dossiers (const EffluxDossier *mine,
                                           const EffluxDossier *theirs,
                                           GCancellable        *cancellable,
                                           GError             **error);

void              efflux_comparison_free (EffluxComparison *comparison);

const char       *efflux_match_kind_name (EffluxMatchKind kind);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxComparison, efflux_comparison_free)

G_END_DECLS
