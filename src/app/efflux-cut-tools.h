/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-cut-view.h"
#include "efflux-document.h"
#include "efflux-shellfit.h"

G_BEGIN_DECLS

/* The Cut section's controls above the Cut view, and the work behind them.
 *
 * Tracers: the dossier's first [Cut] is made through every cube of the dossier on one grid
 * (efflux_pv_set_new: the cut's own cube first, defining offsets and channels, the others
 * regridded onto it) in a GTask thread that also reads the cubes (kept, counted, while their cut
 * is shown) and their noise (efflux_kinematics_pv_sigma); one tracer is the image, the others are
 * contours. The "Image" drop-down chooses the image (action cut.image, a string: the cube id).
 *
 * Shells: the action cut.fit-shells fits wind-driven shells (efflux_shellfit_dossier_cube on the
 * cut's own cube, so the numbers are those of `efflux-cli shellfit`) in a GTask thread and draws
 * the curves over the view; a label gives i +- err, t0 and C (or why a lobe failed, and the
 * spurs). cut.use-inclination writes the range i +- err into [Source] inclination-range-deg with
 * inclination-mode=range (so the measurement carries the fit's uncertainty), and i itself into
 * inclination-deg (used when the mode is switched to fixed), as one undoable command of the
 * document.
 *
 * "busy" is TRUE while either job runs. */

#define EFFLUX_TYPE_CUT_TOOLS (efflux_cut_tools_get_type ())
G_DECLARE_FINAL_TYPE (EffluxCutTools, efflux_cut_tools, EFFLUX, CUT_TOOLS, GtkBox)

GtkWidget            *efflux_cut_tools_new          (EffluxCutView  *view);

/* Make the cut of the document's dossier when its first [Cut] or its cubes' files changed (force
 * is accepted for the window's calls; an unchanged cut is never made twice). A NULL document, or
 * a dossier without a cut, clears the view. */
void                  efflux_cut_tools_sync         (EffluxCutTools *self,
                                                     EffluxDocument *document,
                                                     gboolean        force);
gboolean              efflux_cut_tools_get_busy     (EffluxCutTools *self);
/* The cube ids of the shown set, in the set's order (NULL-terminated), or NULL. */
const char * const   *efflux_cut_tools_get_ids      (EffluxCutTools *self);
/* The last shell fit (NULL when none or stale) and the label's text. */
const EffluxShellFit *efflux_cut_tools_get_fit      (EffluxCutTools *self);
const char           *efflux_cut_tools_get_fit_text (EffluxCutTools *self);

G_END_DECLS
