/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gio/gio.h>

#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-lobe.h"

G_BEGIN_DECLS

/* The outflow measurement of a dossier (CONTRACT.md sections 3 and 4).
 *
 * Two steps, so that the desktop program can re-measure live:
 *   efflux_measure_prepare: builds each lobe's pixel mask once and sums the lobe over its mask in
 *     every channel of its cube (all channels, not only the lobe's range): brightness, noise
 *     variance, voxel count, whether a voxel is detected and the largest source distance of a
 *     detected pixel. Cost: one pass over the voxels under the masks. Depends on the polygons,
 *     the source position, clip-sigma, beam efficiencies and rms; anything else may change later.
 *   efflux_measure_finish: the numbers, from the per-channel sums only (O(channels) per lobe and
 *     per Monte Carlo sample): velocity ranges, v_sys, distance, T_ex, abundances, opacity,
 *     inclination and the Monte Carlo all take effect here.
 * Nothing is global: several preparations may live and run in different threads at once.
 *
 * Conventions:
 * - Brightness T is the cube's value divided by the beam efficiency. The noise rms of a channel is
 *   the cube's rms-k from the dossier when given, else cube->rms[k] (estimated when all zero), in
 *   the cube's scale; it is divided by the beam efficiency in the same way.
 * - A voxel enters the sums when it is finite and (clip-sigma > 0) T >= clip-sigma x rms. It is
 *   detected when T > 0 and T >= s x rms, s = clip-sigma, or 3 when clip-sigma is 0.
 * - Noise errors (*_err): every entering voxel carries the variance rms_k^2; variances add through
 *   the sums; tdyn is taken as exact, so mdot, force and lmech errors scale from mass, momentum
 *   and energy errors. The total row adds the lobes' variances. A lobe without any detected
 *   voxel has empty vmax, rmax, tdyn and rates, and adds nothing to the total's rates.
 * - Inclination: fixed uses inclination-deg; range and random give the table value at the median
 *   of the inclination distribution ("the middle"), the Monte Carlo carries the spread. The
 *   distributions are those of efflux-sampling.h: range is uniform in i over [LO, HI], so its
 *   median is (LO + HI) / 2; random is isotropic (cos i uniform) over [5, 85] degrees, so its
 *   median is arccos((cos 5 + cos 85) / 2) = 57.20 degrees.
 * - The mass-velocity spectrum dM/dv = m_k / |dv| uses observed velocities |v - vsys| (no
 *   inclination correction). The fits (efflux-mvfit.h) use the channels where dM/dv is at least
 *   3 times its noise. mv_gamma is the single power-law slope, mv_break_kms, mv_gamma_low and
 *   mv_gamma_high the broken power law (at least 5 channels). hidden_mass_msun integrates the
 *   single power law over the excluded ambient range, from half a channel width to the lobe's
 *   inner velocity edge (its innermost channel's |v - vsys| minus half a channel): reported,
 *   never added.
 * - pm_kms = P / M is the mass-weighted speed and age_pm_yr = rmax / (P / M) the age it implies.
 *   That age runs long: most of the mass sits at low velocities, so P / M lies well below the
 *   speed at which the lobe tip advances, and the lifetime comes out too large (by about an order
 *   of magnitude for jet-driven flows in the simulations of Downes & Cabrit 2007, A&A 471, 873).
 *   tdyn = rmax / vmax is the table's age; age_pm_yr is given for comparison only.
 * - The Monte Carlo draws, per sample and shared by all lobes of the source: distance (normal,
 *   distance-err-pc, redrawn when <= 0), T_ex (uniform in tex-range-k), [12CO/H2] (log-uniform in
 *   co-abundance-range), 12C/13C (uniform in isotope-ratio-range) and the inclination (per mode).
 *   Noise is not part of it. Percentiles 16, 50, 84 of the samples are reported. */

typedef enum
{
  EFFLUX_MQ_MASS,
  EFFLUX_MQ_MOMENTUM,
  EFFLUX_MQ_ENERGY,
  EFFLUX_MQ_TDYN,
  EFFLUX_MQ_MDOT,
  EFFLUX_MQ_FORCE,
  EFFLUX_MQ_LMECH,
  EFFLUX_MQ_N
} EffluxMeasureQuantity;

typedef struct
{
  char           *source;
  char           *lobe;              /* "total" for the total row */
  gboolean        is_total;
  EffluxLobeKind  kind;              /* lobes only */
  guint64         voxels;

  double mass_msun;
  double momentum_msun_kms;
  double energy_erg;
  double vmax_kms;                   /* NaN when nothing was detected */
  double rmax_au;                    /* NaN when nothing was detected */
  double tdyn_yr;
  double mdot_msun_yr;
  double force_msun_kms_yr;
  double lmech_lsun;
  double inclination_deg;            /* NaN for mode none */

  /* noise, 1 sigma */
  double mass_err, momentum_err, energy_err, mdot_err, force_err, lmech_err;

  double pm_kms;                     /* P / M */
  double age_pm_yr;                  /* rmax / (P / M) */

  /* Monte Carlo percentiles 16, 50, 84 of each EffluxMeasureQuantity; NaN without samples */
  double pct[EFFLUX_MQ_N][3];

  /* mass-velocity spectrum fits (lobes only; NaN when not possible) */
  double mv_gamma, mv_gamma_err;
  double mv_break_kms, mv_gamma_low, mv_gamma_high;
  double hidden_mass_msun, hidden_mass_err;

  EffluxOpacityMethod opacity;
} EffluxMeasureRow;

/* The mass-velocity spectrum of a lobe, the channels of its range in the cube's order. */
typedef struct
{
  char   *source;
  char   *lobe;
  guint   n;
  double *v_lsr_kms;
  double *v_offset_kms;              /* |v - vsys| */
  double *dmdv;                      /* Msun per km/s */
  double *dmdv_err;                  /* noise, 1 sigma */
  double *ctau;                      /* opacity correction applied */
} EffluxMassSpectrum;

typedef struct
{
  GPtrArray *rows;                   /* EffluxMeasureRow *: the lobes in dossier order, then total */
  GPtrArray *spectra;                /* EffluxMassSpectrum *, one per lobe */
  GPtrArray *notes;                  /* char *: remarks (guessed lines, opacity fit messages) */
  guint      mc_samples;             /* samples drawn (0: none) */
} EffluxMeasureResult;

typedef struct _EffluxMeasurePrep EffluxMeasurePrep;

/* cubes: id -> EffluxCube * for every cube the lobes (and, for opacity=from-isotopologue, the
 * isotopologue) need; they must outlive the preparation. A cube without a line in the dossier
 * gets one guessed from its rest frequency (a note says so). */
EffluxMeasurePrep   *efflux_measure_prepare (const EffluxDossier  *dossier,
                                             GHashTable           *cubes,
                                             GCancellable         *cancellable,
                                             GError              **error);
void                 efflux_measure_prep_free (EffluxMeasurePrep *prep);

/* After a lobe's outline changed, or a lobe was added: rebuild that lobe's mask and sums only.
 * finish measures the dossier's lobes in its order; prepared lobes no longer in it are ignored. */
gboolean             efflux_measure_prep_refresh_lobe (EffluxMeasurePrep    *prep,
                                                       const EffluxDossier  *dossier,
                                                       const char           *lobe,
                                                       GCancellable         *cancellable,
                                                       GError              **error);

/* How many of the refreshes above were done by difference: for a lobe prepared from a cube in
 * memory, an outline change subtracts the spectra of the pixels that left the mask and adds
 * those of the pixels that entered it (compensated sums, Neumaier 1974), and finds the farthest
 * detected pixel again only in the channels where it left; the result is that of a fresh
 * preparation up to round-off. A change of more pixels than the new mask holds, or of anything
 * else the preparation depends on, prepares the lobe again. */
guint                efflux_measure_prep_n_incremental (const EffluxMeasurePrep *prep);

/* The mask of a lobe (owned by the preparation), or NULL. */
const EffluxLobeMask *efflux_measure_prep_mask (const EffluxMeasurePrep *prep,
                                                const char              *lobe);

/* dossier must be the one prepared (its values may have changed since, see above). */
EffluxMeasureResult *efflux_measure_finish  (EffluxMeasurePrep    *prep,
                                             const EffluxDossier  *dossier,
                                             GError              **error);
void                 efflux_measure_result_free (EffluxMeasureResult *result);

/* What finish may leave out. NO_BROKEN_FIT: no broken power-law fit of the mass-velocity
 * spectrum (mv_break_kms, mv_gamma_low, mv_gamma_high stay NaN): it is most of finish's time
 * (a profile over 400 breaks), and the desktop program's ledger, which does not show it, leaves it
 * out while an outline or a range is dragged and finishes completely when the drag rests. */
typedef enum
{
  EFFLUX_MEASURE_FINISH_ALL = 0,
  EFFLUX_MEASURE_FINISH_NO_BROKEN_FIT = 1 << 0
} EffluxMeasureFinishFlags;

EffluxMeasureResult *efflux_measure_finish_flags (EffluxMeasurePrep        *prep,
                                                  const EffluxDossier      *dossier,
                                                  EffluxMeasureFinishFlags  flags,
                                                  GError                  **error);

/* Load every cube the dossier's lobes need (id -> EffluxCube *, owning). */
GHashTable          *efflux_measure_load_cubes (const EffluxDossier *dossier,
                                                GCancellable        *cancellable,
                                                GError             **error);

/* All in one: load, prepare, finish.
 * A cube that does not fit in the memory available (MemAvailable, or EFFLUX_MEASURE_MEMORY_MIB
 * MiB when that environment variable is set and smaller) is not loaded: it is measured in one
 * streaming pass over its channel planes, reading only the rows under the lobes (whole planes
 * when the noise must be estimated, i.e. without rms-k), with memory bounded by the header, the
 * masks, per-channel sums and a 64 MiB row block, whatever the size of the cube; a note says so.
 * The sums, hence the numbers, are those of the measurement in memory. Gzip and tile-compressed
 * files are not streamed (the reader refuses them when they do not fit). */
EffluxMeasureResult *efflux_measure_dossier (const EffluxDossier *dossier,
                                             GCancellable        *cancellable,
                                             GError             **error);

/* Column names of the table: CONTRACT.md's 14 first, then the extras (NULL-terminated). */
const char * const  *efflux_measure_columns (void);
/* The value of column `index` of a row as text ("" for empty cells); numbers in "%.6g". */
char                *efflux_measure_cell    (const EffluxMeasureRow *row,
                                             guint                   index);
/* The numeric value of column `index` (NaN for text and empty cells); *is_text tells which. */
double               efflux_measure_value   (const EffluxMeasureRow *row,
                                             guint                   index,
                                             gboolean               *is_text);

G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxMeasurePrep, efflux_measure_prep_free)
G_DEFINE_AUTOPTR_CLEANUP_FUNC (EffluxMeasureResult, efflux_measure_result_free)

G_END_DECLS
