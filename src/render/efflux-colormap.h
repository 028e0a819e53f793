/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-stretch.h"

G_BEGIN_DECLS

/* Colour maps as 256-entry RGBA8 lookup tables (4 bytes per entry: R, G, B, A; A = 255).
 * No GTK here: the sky view and the tests share this code. */

#define EFFLUX_COLORMAP_SIZE 256

typedef enum
{
  EFFLUX_COLORMAP_CUBEHELIX, /* Green (2011) with his default parameters */
  EFFLUX_COLORMAP_GREY,      /* black to white, linear in sRGB code values */
  EFFLUX_COLORMAP_VELOCITY,  /* our diverging map: blue - light neutral - red, see the .c */
  EFFLUX_N_COLORMAPS,
} EffluxColormapKind;

/* Green, D. A. 2011, Bull. Astr. Soc. India 39, 289 ("A colour scheme for the display of
 * astronomical intensity images"). lambda in [0, 1]; start (s), rotations (r), hue (h), gamma.
 * rgb receives the colour in [0, 1], clipped to that range. Returns TRUE when no component had
 * to be clipped. */
gboolean    efflux_cubehelix_eval          (double   lambda,
                                            double   start,
                                            double   rotations,
                                            double   hue,
                                            double   gamma,
                                            double   rgb[3]);

/* The default cubehelix parameters of the paper: s = 0.5, r = -1.5, h = 1, gamma = 1. */
#define EFFLUX_CUBEHELIX_START     0.5
#define EFFLUX_CUBEHELIX_ROTATIONS (-1.5)
#define EFFLUX_CUBEHELIX_HUE       1.0
#define EFFLUX_CUBEHELIX_GAMMA     1.0

void        efflux_colormap_fill_cubehelix (guint8   lut[EFFLUX_COLORMAP_SIZE * 4],
                                            double   start,
                                            double   rotations,
                                            double   hue,
                                            double   gamma);

/* CIE L*a*b* (D65 white) -> sRGB in [0, 1] (IEC 61966-2-1 transfer function). Returns FALSE when
 * the colour lies outside the sRGB gamut (rgb then holds the unclipped values). */
gboolean    efflux_lab_to_srgb             (double   L,
                                            double   a,
                                            double   b,
                                            double   rgb[3]);

/* Fill lut with one of the maps. */
void        efflux_colormap_fill           (EffluxColormapKind kind,
                                            guint8             lut[EFFLUX_COLORMAP_SIZE * 4]);

/* "cubehelix", "grey", "velocity"; from_string returns FALSE for an unknown name. */
const char *efflux_colormap_kind_to_string   (EffluxColormapKind  kind);
gboolean    efflux_colormap_kind_from_string (const char         *name,
                                              EffluxColormapKind *kind);

/* Map n values through a stretch between lo and hi and a lookup table into n RGBA8 pixels.
 * NaN (and infinite) values become fully transparent (0, 0, 0, 0). Entry index =
 * round(255 x stretched value). */
void        efflux_colormap_apply          (const guint8       lut[EFFLUX_COLORMAP_SIZE * 4],
                                            EffluxStretchKind  stretch,
                                            double             lo,
                                            double             hi,
                                            const float       *values,
                                            gsize              n,
                                            guint8            *rgba);

G_END_DECLS
