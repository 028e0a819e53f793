/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <gtk/gtk.h>

#include "efflux-cube.h"
#include "efflux-document.h"

G_BEGIN_DECLS

/* The Sky view: a float map on a cube's sky grid, drawn through a colour map and a stretch, with a
 * coordinate grid, the beam, a scale bar in au and the source marker. Pan by dragging, zoom with
 * the scroll wheel or the zoom functions. The readout under the pointer is the "readout" property.
 *
 * Properties: "colormap" (string: cubehelix, grey, velocity), "stretch" (string: linear, sqrt,
 * log, asinh), "limits" (double: percent of the finite values between the display limits, e.g.
 * 99.5), "grid" (string: sexagesimal, offsets, none), "zoom" (double, screen pixels per map pixel,
 * read-only), "readout" (string, read-only), "has-map" (boolean, read-only). */

#define EFFLUX_TYPE_SKY_VIEW (efflux_sky_view_get_type ())
G_DECLARE_FINAL_TYPE (EffluxSkyView, efflux_sky_view, EFFLUX, SKY_VIEW, GtkWidget)

typedef struct
{
  gboolean inside;          /* the point lies on a map pixel */
  gssize   x, y;            /* that pixel, 0-based */
  double   value;           /* the map's value there (NaN: blank) */
  gboolean has_position;
  double   ra_deg, dec_deg; /* ICRS position of the pixel centre */
  gboolean has_offset;
  double   east_arcsec;     /* offset of the pixel centre from the source (gnomonic, east and north) */
  double   north_arcsec;
} EffluxSkyReadout;

GtkWidget  *efflux_sky_view_new            (void);

/* Show width x height floats (copied; x fastest: data[y * width + x], y up as in FITS) on the
 * sky grid of cube, which is borrowed: it must stay alive until the next set_map or clear. unit
 * is the map's unit for the readout. */
void        efflux_sky_view_set_map        (EffluxSkyView    *self,
                                            const EffluxCube *cube,
                                            const float      *data,
                                            gsize             width,
                                            gsize             height,
                                            const char       *unit);
void        efflux_sky_view_clear          (EffluxSkyView    *self);
gboolean    efflux_sky_view_has_map        (EffluxSkyView    *self);

/* The source position (ICRS degrees) and distance (pc; 0 or NaN: unknown, no scale bar in au). */
void        efflux_sky_view_set_source     (EffluxSkyView    *self,
                                            double            ra_deg,
                                            double            dec_deg,
                                            double            distance_pc);
void        efflux_sky_view_unset_source   (EffluxSkyView    *self);

void        efflux_sky_view_zoom_in        (EffluxSkyView    *self);
void        efflux_sky_view_zoom_out       (EffluxSkyView    *self);
/* Fit the whole map in the view (and keep fitting as the view is resized until the next zoom). */
void        efflux_sky_view_zoom_fit       (EffluxSkyView    *self);
double      efflux_sky_view_get_zoom       (EffluxSkyView    *self);

/* The display limits in use (after the percentile choice). FALSE when there is no map. */
gboolean    efflux_sky_view_get_limits     (EffluxSkyView    *self,
                                            double           *lo,
                                            double           *hi);

/* Widget coordinates <-> 0-based map pixel coordinates (pixel centres at whole numbers). */
void        efflux_sky_view_widget_to_pixel (EffluxSkyView   *self,
                                             double           wx,
                                             double           wy,
                                             double          *px,
                                             double          *py);
void        efflux_sky_view_pixel_to_widget (EffluxSkyView   *self,
                                             double           px,
                                             double           py,
                                             double          *wx,
                                             double          *wy);

/* Update the readout as the pointer at widget coordinates (wx, wy) does; NaN: the pointer left. */
void        efflux_sky_view_point_at       (EffluxSkyView    *self,
                                            double            wx,
                                            double            wy);
const char *efflux_sky_view_get_readout    (EffluxSkyView    *self);
void        efflux_sky_view_get_readout_values (EffluxSkyView    *self,
                                                EffluxSkyReadout *readout);

/* ---- editing ----
 *
 * With a document (efflux_sky_view_set_document) the view draws its lobes (blue and red outlines
 * with a translucent fill), its cuts (the line with its width band) and edits them through the
 * document's undoable commands, by tool ("tool" property, string):
 *   pan     drag to pan (every tool pans when a drag starts on nothing it edits)
 *   lobe    click vertices; double click or Enter closes the outline into a new lobe of kind
 *           "new-lobe-kind" (blue or red) on the cube "cube-id"; Escape drops it
 *   edit    drag a vertex or a whole lobe (or a cut's vertex); press on an edge to insert a vertex
 *           there; right click or Delete removes a vertex (Delete without one: the selected lobe)
 *   source  click or drag to place the source marker
 *   cut     click vertices; double click or Enter sets the cut (line or polyline, width
 *           "cut-width" arcsec)
 * "selected-lobe" (string, NULL: none) is the lobe clicked last.
 * Actions (also for tests): sky.add-vertex "(dd)" widget coordinates (lobe and cut tools),
 * sky.finish, sky.cancel, sky.delete, sky.tool "s", sky.new-kind "s". Keys: Enter, Escape,
 * Delete; P, L, E, S, C choose the tool and B, R the kind of new lobes while the view has the
 * focus. */

typedef enum
{
  EFFLUX_SKY_TOOL_PAN,
  EFFLUX_SKY_TOOL_LOBE,
  EFFLUX_SKY_TOOL_EDIT,
  EFFLUX_SKY_TOOL_SOURCE,
  EFFLUX_SKY_TOOL_CUT,
} EffluxSkyTool;

void        efflux_sky_view_set_document   (EffluxSkyView    *self,
                                            EffluxDocument   *document);
/* The dossier id of the cube shown (new lobes and cuts are made on it). */
void        efflux_sky_view_set_cube_id    (EffluxSkyView    *self,
                                            const char       *cube_id);
void        efflux_sky_view_set_tool       (EffluxSkyView    *self,
                                            EffluxSkyTool     tool);
EffluxSkyTool efflux_sky_view_get_tool     (EffluxSkyView    *self);
const char *efflux_sky_view_get_selected_lobe (EffluxSkyView *self);
void        efflux_sky_view_select_lobe    (EffluxSkyView    *self,
                                            const char       *lobe);
/* Vertices of the outline being drawn (lobe or cut tool). */
guint       efflux_sky_view_get_n_draft    (EffluxSkyView    *self);
/* The last edit the view could not make (the core's message), or NULL. */
const char *efflux_sky_view_get_edit_error (EffluxSkyView    *self);

/* ---- a colleague's lobes ----
 *
 * Another dossier's lobes drawn dashed over the map (blue or red by kind), each labelled with its
 * name and the author's name; they are not editable and never hit-tested. The view copies what
 * it needs (names, kinds, outlines): other may be freed after the call. other NULL removes the
 * overlay. author NULL: the other dossier's own author (efflux_dossier_author), else none. */
void        efflux_sky_view_set_overlay    (EffluxSkyView       *self,
                                            const EffluxDossier *other,
                                            const char          *author);
/* The overlay's author as shown, or NULL when there is no overlay or it names no author. */
const char *efflux_sky_view_get_overlay_author (EffluxSkyView *self);
/* The number of lobes in the overlay (0: none). */
guint       efflux_sky_view_get_n_overlay_lobes (EffluxSkyView *self);

/* ---- what the map shows, context images, wing contours ----
 *
 * "shows" (string): "integrated" (the map given by efflux_sky_view_set_map), "peak" (the peak
 * brightness over all channels of the shown cube, efflux_moment_map, computed off the UI thread
 * when first asked for) or "context" (a context image, below). Each keeps its own display limits
 * ("limits" applies to the one shown). Until a peak or context map is ready the integrated map
 * stays in view.
 *
 * A context image: a 2-D image from another FITS file with its own WCS, read and reprojected
 * onto the shown cube's grid off the UI thread (efflux-reproject.h); when it is ready the view
 * shows it ("has-context" becomes TRUE); an error is the "context-error" property (the core's
 * message naming the file and the card). It follows the shown cube: a new cube reprojects it
 * again.
 *
 * Wing contours: "wing-tracer" (string, a dossier cube id; NULL or "": none) draws, over the map,
 * blue and red contours of the wing maps of the document's lobes on that cube (efflux-wings.h),
 * at 3, 5, 8 and 13 times each wing map's noise, computed off the UI thread and again when a
 * lobe's kind or velocity range changes. The legend (drawn in the top left corner, and the
 * "wing-legend" property) states the tracer, the multiples and the noise of each set. */
void        efflux_sky_view_set_context_file (EffluxSkyView  *self,
                                              const char     *path);
gboolean    efflux_sky_view_has_context    (EffluxSkyView    *self);
const char *efflux_sky_view_get_context_error (EffluxSkyView *self);
/* The map in view (width x height floats as set_map's), or NULL. */
const float *efflux_sky_view_get_shown_data (EffluxSkyView   *self);
/* The wing sets in view (EffluxWingSet *, borrowed), or NULL; "" legend when none. */
GPtrArray  *efflux_sky_view_get_wing_sets  (EffluxSkyView    *self);
const char *efflux_sky_view_get_wing_legend (EffluxSkyView   *self);
/* TRUE while a peak map, context image or wing contours are being computed. */
gboolean    efflux_sky_view_is_busy        (EffluxSkyView    *self);
/* Actions for a window's menus: "shows" and "wing-tracer" (stateful, strings), "context-image"
 * (asks for a FITS file with a file chooser and shows it). */
GActionGroup *efflux_sky_view_get_layer_actions (EffluxSkyView *self);
/* Keep menu filled with one "layers.wing-tracer" item per cube of the document (and "None"). */
void        efflux_sky_view_bind_wing_menu (EffluxSkyView    *self,
                                            GMenu            *menu);

G_END_DECLS
