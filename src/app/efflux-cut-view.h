/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-pv.h"
#include "efflux-shellfit.h"

G_BEGIN_DECLS

/* The Cut view: the position-velocity diagram along the current cut. Offset along the cut (arcsec,
 * 0 at the first vertex) on x, velocity (km/s) on y. One tracer's PV is the image (colour map and
 * stretch as in the Sky view); the others of the same EffluxPvSet (one grid) are contours at
 * multiples of their noise (efflux_kinematics_pv_sigma, efflux_contour_levels_sigma).
 *
 * Overlays: the v_sys line; the lobes' velocity ranges shaded blue and red, whose edges drag
 * ("range-changed" (const char *lobe, double v1, double v2, gboolean is_final), the moving edge at
 * the velocity under the pointer); a Hubble-law line v = v_sys + slope x (offset - source offset)
 * through the source, whose slope drags ("slope-changed" (double slope_kms_per_arcsec,
 * double age_yr, gboolean is_final)), with the age it implies (efflux_hubble_age_yr at the
 * distance and inclination given) in a label.
 *
 * Properties: "colormap", "stretch" (strings, as the Sky view's), "slope" (km/s per arcsec),
 * "age-yr" (read-only, NaN when the distance or the inclination is unknown), "busy" (read-only: a
 * cut is being computed in a thread). */

#define EFFLUX_TYPE_CUT_VIEW (efflux_cut_view_get_type ())
G_DECLARE_FINAL_TYPE (EffluxCutView, efflux_cut_view, EFFLUX, CUT_VIEW, GtkWidget)

GtkWidget         *efflux_cut_view_new            (void);

/* Show a set of cuts (transfer full; NULL clears). names[i] names set->cuts[i] (NULL-terminated
 * array, copied; may be NULL). image is the index of the cut drawn as the image. grid is the cube
 * that defines the set's grid (borrowed, for the source's offset; may be NULL). */
void               efflux_cut_view_set_pv_set     (EffluxCutView       *self,
                                                   EffluxPvSet         *set,
                                                   const char * const  *names,
                                                   guint                image,
                                                   const EffluxCube    *grid);
const EffluxPvSet *efflux_cut_view_get_pv_set     (EffluxCutView       *self);
/* The same with each cut's noise (sigma[i] in K for set->cuts[i], copied; NaN: the PV's own
 * spread) for the contour levels, when the caller knows it (efflux_kinematics_pv_sigma of the
 * cubes); contour sets are listed in a legend by name in their colours. */
void               efflux_cut_view_set_pv_set_noise (EffluxCutView      *self,
                                                     EffluxPvSet        *set,
                                                     const char * const *names,
                                                     guint               image,
                                                     const EffluxCube   *grid,
                                                     const double       *sigma);
guint              efflux_cut_view_get_image      (EffluxCutView       *self);
/* The contour levels used for cut `index` (K; *n levels), or NULL (the image, no contours). */
const double      *efflux_cut_view_get_contour_levels (EffluxCutView   *self,
                                                       guint            index,
                                                       gsize           *n);

/* Fitted wind-driven shells (efflux-shellfit.h) drawn over the PV image: each fitted lobe's model
 * curve (efflux_shellfit_curve on the set's offset axis), spurs as hatched boxes, failed lobes
 * named in the legend. NULL clears. The fit is copied into curves at once (not kept). */
void               efflux_cut_view_set_shell_fit  (EffluxCutView       *self,
                                                   const EffluxShellFit *fit);
/* The drawn curve of shell lobe `lobe` (n points; offsets arcsec and LSR km/s), or FALSE. */
gboolean           efflux_cut_view_get_shell_curve (EffluxCutView      *self,
                                                    guint               lobe,
                                                    gsize              *n,
                                                    const double      **offset_arcsec,
                                                    const double      **velocity_kms);

/* Compute the cut along a path (n_vertices ICRS (ra, dec) pairs, degrees) through cubes (borrowed:
 * they must outlive the view; cubes[0] defines the grid) with efflux_pv_set_new, and show it with
 * cubes[image] as the image. Small cuts are made at once; larger ones in a GTask thread ("busy"
 * while it runs; a newer call cancels an older one). FALSE with an error for a path refused at
 * once; errors of a threaded cut are logged and leave the view as it was. */
gboolean           efflux_cut_view_set_path       (EffluxCutView             *self,
                                                   const EffluxCube * const  *cubes,
                                                   const char * const        *names,
                                                   gsize                      n_cubes,
                                                   guint                      image,
                                                   const double              *ra_dec,
                                                   gsize                      n_vertices,
                                                   double                     width_arcsec,
                                                   GError                   **error);
gboolean           efflux_cut_view_get_busy       (EffluxCutView       *self);

void               efflux_cut_view_set_image      (EffluxCutView       *self,
                                                   guint                image);
/* Contour levels in multiples of each tracer's noise (copied; default 3, 6, 12, 24, 48). */
void               efflux_cut_view_set_contour_multiples (EffluxCutView *self,
                                                          const double  *multiples,
                                                          gsize          n);
/* Contours traced for cut `index` of the set (a GPtrArray of EffluxPolyline *, in PV pixel
 * coordinates x = offset sample, y = channel), or NULL for the image and unknown indices. */
GPtrArray         *efflux_cut_view_get_contours   (EffluxCutView       *self,
                                                   guint                index);

/* The source (ICRS degrees; placed on the cut with efflux_kinematics_offset_on_cut through the grid
 * cube) or its offset along the cut directly (arcsec; NaN: unknown). */
void               efflux_cut_view_set_source     (EffluxCutView       *self,
                                                   double               ra_deg,
                                                   double               dec_deg);
void               efflux_cut_view_set_source_offset (EffluxCutView    *self,
                                                      double            offset_arcsec);
double             efflux_cut_view_get_source_offset (EffluxCutView    *self);

void               efflux_cut_view_set_vsys       (EffluxCutView       *self,
                                                   double               vsys_kms);
/* Distance (pc) and inclination (degrees from the line of sight) for the age; NaN: unknown. */
void               efflux_cut_view_set_geometry   (EffluxCutView       *self,
                                                   double               distance_pc,
                                                   double               inclination_deg);
void               efflux_cut_view_set_slope      (EffluxCutView       *self,
                                                   double               slope_kms_per_arcsec);
double             efflux_cut_view_get_slope      (EffluxCutView       *self);
double             efflux_cut_view_get_age_yr     (EffluxCutView       *self);
/* The label's text (e.g. "Hubble law: 0.194 km/s/″ (100 km/s/pc), t₀ = 6280 yr"). */
const char        *efflux_cut_view_get_age_label  (EffluxCutView       *self);

void               efflux_cut_view_set_range      (EffluxCutView       *self,
                                                   const char          *lobe,
                                                   EffluxLobeKind       kind,
                                                   double               v1,
                                                   double               v2);
void               efflux_cut_view_remove_range   (EffluxCutView       *self,
                                                   const char          *lobe);
gboolean           efflux_cut_view_get_range      (EffluxCutView       *self,
                                                   const char          *lobe,
                                                   double              *v1,
                                                   double              *v2);

/* Widget coordinates <-> (offset arcsec, velocity km/s). */
void               efflux_cut_view_widget_to_data (EffluxCutView       *self,
                                                   double               wx,
                                                   double               wy,
                                                   double              *offset,
                                                   double              *v);
void               efflux_cut_view_data_to_widget (EffluxCutView       *self,
                                                   double               offset,
                                                   double               v,
                                                   double              *wx,
                                                   double              *wy);

G_END_DECLS
