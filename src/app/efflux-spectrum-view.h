/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-lobe.h"

G_BEGIN_DECLS

/* The Spectrum view: spectra of one cube, velocity (km/s) on x and brightness (K) on y, drawn as
 * channel steps: the spectrum at a pixel (the pointer's, from efflux_spectrum_at_pixel) and the
 * mean over lobes (efflux_spectrum_over_lobe, EFFLUX_SPECTRUM_MEAN). The lobes' velocity ranges are
 * shaded blue and red; dragging an edge emits
 *   "range-changed" (const char *lobe, double v1, double v2, gboolean is_final)
 * with v1 <= v2 and the moving edge at the velocity under the pointer (is_final on release). The
 * view shows the new range at once; the owner answers by measuring and may set it again.
 * The systemic velocity is a dashed vertical line. The view computes nothing itself. */

#define EFFLUX_TYPE_SPECTRUM_VIEW (efflux_spectrum_view_get_type ())
G_DECLARE_FINAL_TYPE (EffluxSpectrumView, efflux_spectrum_view, EFFLUX, SPECTRUM_VIEW, GtkWidget)

GtkWidget    *efflux_spectrum_view_new          (void);

/* The cube whose spectra are shown (borrowed: it must outlive the view or the next call; NULL
 * clears). Drops the spectra shown, keeps the ranges. tracer names the cube in the legend. */
void          efflux_spectrum_view_set_cube     (EffluxSpectrumView *self,
                                                 const EffluxCube   *cube,
                                                 const char         *tracer);

/* The spectrum at a 0-based pixel of the cube; FALSE (and nothing shown) outside the map. */
gboolean      efflux_spectrum_view_show_pixel   (EffluxSpectrumView *self,
                                                 gssize              x,
                                                 gssize              y,
                                                 GError            **error);
void          efflux_spectrum_view_hide_pixel   (EffluxSpectrumView *self);

/* The mean spectrum over a lobe's pixels (mask on the cube's grid), shown in the lobe's colour;
 * replaces the lobe's earlier one. */
void          efflux_spectrum_view_show_lobe    (EffluxSpectrumView   *self,
                                                 const char           *lobe,
                                                 EffluxLobeKind        kind,
                                                 const EffluxLobeMask *mask);
/* The same with the spectrum computed already (nchan values of the view's cube, copied), for
 * callers that average in a worker (efflux_spectrum_over_lobe). */
void          efflux_spectrum_view_set_lobe_spectrum (EffluxSpectrumView *self,
                                                      const char         *lobe,
                                                      EffluxLobeKind      kind,
                                                      const double       *values,
                                                      gsize               n);
void          efflux_spectrum_view_hide_lobe    (EffluxSpectrumView   *self,
                                                 const char           *lobe);

/* A spectrum shown (NULL: the pixel's), nchan values in the cube's channel order, or NULL. */
const double *efflux_spectrum_view_get_spectrum (EffluxSpectrumView *self,
                                                 const char         *lobe,
                                                 gsize              *n);

/* Lobe velocity ranges (km/s, either order). */
void          efflux_spectrum_view_set_range    (EffluxSpectrumView *self,
                                                 const char         *lobe,
                                                 EffluxLobeKind      kind,
                                                 double              v1,
                                                 double              v2);
void          efflux_spectrum_view_remove_range (EffluxSpectrumView *self,
                                                 const char         *lobe);
gboolean      efflux_spectrum_view_get_range    (EffluxSpectrumView *self,
                                                 const char         *lobe,
                                                 double             *v1,
                                                 double             *v2);

/* v_sys in km/s (NaN hides the line). */
void          efflux_spectrum_view_set_vsys     (EffluxSpectrumView *self,
                                                 double              vsys_kms);

/* Widget coordinates <-> (velocity km/s, brightness K). */
void          efflux_spectrum_view_widget_to_data (EffluxSpectrumView *self,
                                                   double              wx,
                                                   double              wy,
                                                   double             *v,
                                                   double             *t);
void          efflux_spectrum_view_data_to_widget (EffluxSpectrumView *self,
                                                   double              v,
                                                   double              t,
                                                   double             *wx,
                                                   double             *wy);

G_END_DECLS
