/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include "efflux-lines.h"

G_BEGIN_DECLS

/* J_nu(T) = (h nu / k) / (exp(h nu / k T) - 1), K (REFERENCES 1.2). */
double efflux_jnu                  (double freq_hz,
                                    double t_k);

/* Exact rigid-rotor partition function sum (REFERENCES 1.4). */
double efflux_partition_function   (const EffluxLine *line,
                                    double            tex_k);

/* Total column density of the tracer (cm^-2) per 1 K km/s of main-beam temperature, optically thin
 * LTE with the background (Mangum & Shirley 2015; REFERENCES 1.3). tbg_k = 0 gives the classic
 * form without background. */
double efflux_lte_column_per_kkms  (const EffluxLine *line,
                                    double            tex_k,
                                    double            tbg_k);

/* Brightness (K) of a slab of optical depth tau in LTE: (J(Tex) - J(Tbg)) (1 - exp(-tau)). */
double efflux_lte_brightness       (const EffluxLine *line,
                                    double            tex_k,
                                    double            tbg_k,
                                    double            tau);

/* Optical depth per channel of a column density N (cm^-2) spread over dv_kms (the inverse of the
 * column formula written as an opacity integral, REFERENCES 1.3). */
double efflux_lte_tau              (const EffluxLine *line,
                                    double            tex_k,
                                    double            column_cm2,
                                    double            dv_kms);

/* C_tau = tau / (1 - exp(-tau)), 1 at tau = 0. */
double efflux_opacity_correction   (double tau);

/* tau_12 from R = T12/T13 = (1 - exp(-tau)) / (1 - exp(-tau/X)) (REFERENCES 1.5); 0 when R >= X.
 * Negative (invalid) for R <= 1 or non-finite input. */
double efflux_tau_from_ratio       (double ratio,
                                    double isotope_ratio);

/* T_ex from the peak of an optically thick line (REFERENCES 1.2). */
double efflux_tex_from_thick_peak  (double freq_hz,
                                    double t_peak_k,
                                    double tbg_k);

/* Inclination i from the line of sight, radians (REFERENCES 1.8, 3): factors that turn an observed
 * value into the true one. */
typedef struct
{
  double momentum;  /* 1/cos i */
  double energy;    /* 1/cos^2 i */
  double vmax;      /* 1/cos i */
  double rmax;      /* 1/sin i */
  double tdyn;      /* cos i / sin i */
  double mdot;      /* sin i / cos i */
  double force;     /* sin i / cos^2 i */
  double lmech;     /* sin i / cos^3 i */
} EffluxInclinationFactors;

void   efflux_inclination_factors  (double                    incl_rad,
                                    EffluxInclinationFactors *out);

G_END_DECLS
