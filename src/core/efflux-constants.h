/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* Physical and astronomical constants, cgs. Sources beside each value. */

#define EFFLUX_H        6.62607015e-27        /* erg s, SI 2019 exact */
#define EFFLUX_K        1.380649e-16          /* erg/K, SI 2019 exact */
#define EFFLUX_C        2.99792458e10         /* cm/s, exact */
#define EFFLUX_C_KMS    2.99792458e5          /* km/s, exact */
#define EFFLUX_M_H      1.6735575e-24         /* g, hydrogen atom (CODATA 2018 via IUPAC atomic weight) */
#define EFFLUX_MSUN     1.98841e33            /* g, IAU 2015 GM_sun / G (CODATA 2018) */
#define EFFLUX_LSUN     3.828e33              /* erg/s, IAU 2015 Resolution B3 nominal */
#define EFFLUX_PC       3.0856775814913673e18 /* cm, IAU 2015 Resolution B2 */
#define EFFLUX_AU       1.495978707e13        /* cm, IAU 2012 Resolution B2 (exact) */
#define EFFLUX_YR       3.15576e7             /* s, Julian year */
#define EFFLUX_KM       1.0e5                 /* cm */
#define EFFLUX_ARCSEC   (G_PI / 648000.0)     /* rad */
#define EFFLUX_TCMB     2.7255                /* K, Fixsen 2009, ApJ 707, 916 */
#define EFFLUX_DEBYE    1.0e-18               /* esu cm */
#define EFFLUX_G        6.67430e-8            /* cm^3 g^-1 s^-2, CODATA 2018 */
