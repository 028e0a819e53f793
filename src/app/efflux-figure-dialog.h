/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-document.h"
#include "efflux-figure.h"
#include "efflux-sky-view.h"

G_BEGIN_DECLS

/* The Export Figure dialog: one view of the open dossier for a paper (sky, cut, spectrum,
 * mass-velocity or a grid of channel maps), as PNG at a resolution or as PDF and SVG vector
 * graphics, at a journal column's width in mm or inches. It draws with the renderer of
 * `efflux-cli figure` (efflux-figure.h), so the same choices give the same file.
 *
 * What is drawn is the document's dossier at the moment Export is pressed, unsaved edits
 * included (a copy is made; the cubes are read from the dossier's files). The colour map,
 * stretch, limits and coordinate style start as the Sky view shows them. Drawing runs in a GTask
 * thread with a progress bar and Cancel; the file is written through a temporary file renamed
 * into place, and an error is shown in the dialog, naming the file.
 *
 * Signals:
 *   finished (const char *path, const char *error): an export ended; error is NULL when the file
 *     was written, else the message shown (also after Cancel). */

#define EFFLUX_TYPE_FIGURE_DIALOG (efflux_figure_dialog_get_type ())
G_DECLARE_FINAL_TYPE (EffluxFigureDialog, efflux_figure_dialog, EFFLUX, FIGURE_DIALOG, GtkWindow)

typedef enum
{
  EFFLUX_FIGURE_UNIT_MM,
  EFFLUX_FIGURE_UNIT_INCH,
} EffluxFigureUnit;

/* Widths of the size presets (mm): one and two journal columns (common practice). */
#define EFFLUX_FIGURE_ONE_COLUMN_MM  88.0
#define EFFLUX_FIGURE_TWO_COLUMNS_MM 180.0

/* Modal and transient for parent. sky_view (may be NULL) gives the display choices. */
GtkWidget  *efflux_figure_dialog_new             (GtkWindow          *parent,
                                                  EffluxDocument     *document,
                                                  EffluxSkyView      *sky_view);

/* The choices, as the widgets hold them (for tests and scripting). */
void        efflux_figure_dialog_set_view        (EffluxFigureDialog *self,
                                                  EffluxFigureView    view);
/* NULL: every lobe. FALSE when the dossier has no such lobe. */
gboolean    efflux_figure_dialog_set_lobe        (EffluxFigureDialog *self,
                                                  const char         *lobe);
gboolean    efflux_figure_dialog_set_cut         (EffluxFigureDialog *self,
                                                  const char         *cut);
void        efflux_figure_dialog_set_grid        (EffluxFigureDialog *self,
                                                  guint               columns,
                                                  guint               rows);
/* v1 < v2: the channel maps spread over [v1, v2] km/s; otherwise over the lobes' ranges. */
void        efflux_figure_dialog_set_channel_range (EffluxFigureDialog *self,
                                                    double              v1_kms,
                                                    double              v2_kms);
/* Fixed colour limits in the view's units (lo < hi); otherwise back to the percentage. */
void        efflux_figure_dialog_set_fixed_limits (EffluxFigureDialog *self,
                                                   double              lo,
                                                   double              hi);
void        efflux_figure_dialog_set_unit        (EffluxFigureDialog *self,
                                                  EffluxFigureUnit    unit);
/* In the dialog's unit; height 0: as the layout needs. */
void        efflux_figure_dialog_set_size        (EffluxFigureDialog *self,
                                                  double              width,
                                                  double              height);
void        efflux_figure_dialog_set_dpi         (EffluxFigureDialog *self,
                                                  double              dpi);
void        efflux_figure_dialog_set_format      (EffluxFigureDialog *self,
                                                  EffluxFigureFormat  format);
EffluxFigureFormat efflux_figure_dialog_get_format (EffluxFigureDialog *self);
/* The output file, as a name picked in the file chooser: a .png, .pdf or .svg extension sets the
 * format; another extension gets the format's. */
void        efflux_figure_dialog_set_path        (EffluxFigureDialog *self,
                                                  const char         *path);
const char *efflux_figure_dialog_get_path        (EffluxFigureDialog *self);
/* The renderer's options for the current choices; the strings are the dialog's. */
void        efflux_figure_dialog_get_options     (EffluxFigureDialog  *self,
                                                  EffluxFigureOptions *options);

/* Start drawing and writing, as the Export button does (nothing while busy). */
void        efflux_figure_dialog_export          (EffluxFigureDialog *self);
/* Stop a running export, as the Cancel button does. */
void        efflux_figure_dialog_cancel          (EffluxFigureDialog *self);
gboolean    efflux_figure_dialog_is_busy         (EffluxFigureDialog *self);
/* The message shown after the last export (written, cancelled or the error), or NULL. */
const char *efflux_figure_dialog_get_status      (EffluxFigureDialog *self);
/* The caption of the last figure written (contour levels, ranges, units), or NULL. */
const char *efflux_figure_dialog_get_caption     (EffluxFigureDialog *self);

G_END_DECLS
