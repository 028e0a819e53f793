/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

#include "efflux-cube.h"

G_BEGIN_DECLS

/* Celestial frames. Positions in degrees; every conversion goes through ICRS.
 *
 * The frames follow the definitions astropy 5.2 uses (astropy.coordinates, builtin_frames), so
 * that positions agree with astropy to well under 1 mas:
 *   FK5 (J2000) <-> ICRS: the FK5 frame offsets of USNO Circular 179 (Kaplan 2005), eq. 3.4:
 *     xi0 = 9.1 mas, eta0 = -19.9 mas, da0 = -22.9 mas.
 *   Galactic <-> FK5 J2000: north galactic pole at RA 192.8594812065348 deg,
 *     Dec 27.12825118085622 deg, galactic longitude of the celestial pole 122.9319185680026 deg.
 *   FK4 (equinox E, epoch of observation = E) -> FK5 J2000: E-terms of aberration removed
 *     (Explanatory Supplement 1992 expressions), Newcomb precession E -> B1950, then the
 *     B1950 -> J2000 matrix of Murray 1989, A&A 218, 325, eq. 28 with the rotating-frame term.
 *   FK5 is accepted at equinox J2000 only (equinox must be 2000). */

/* Frame position (lon, lat) -> ICRS (ra, dec). FALSE for an unsupported frame or equinox. */
gboolean efflux_sky_to_icrs   (EffluxSkyFrame frame,
                               double         equinox,
                               double         lon_deg,
                               double         lat_deg,
                               double        *ra_deg,
                               double        *dec_deg);

/* ICRS (ra, dec) -> frame position (lon, lat). */
gboolean efflux_sky_from_icrs (EffluxSkyFrame frame,
                               double         equinox,
                               double         ra_deg,
                               double         dec_deg,
                               double        *lon_deg,
                               double        *lat_deg);

/* Whether the frame and equinox are supported. */
gboolean efflux_sky_frame_supported (EffluxSkyFrame frame,
                                     double         equinox);

/* Short name: "ICRS", "FK5", "FK4", "galactic". */
const char *efflux_sky_frame_name (EffluxSkyFrame frame);

/* Velocity (km/s) to add to a barycentric radial velocity towards (ra, dec) ICRS to get the
 * kinematic LSR (LSRK) velocity: the projection of the standard solar motion, 20 km/s towards
 * RA 18h, Dec +30 deg (FK4, B1900; common practice, the definition astropy's LSRK frame uses),
 * carried to ICRS with the FK4 -> ICRS chain above. */
double   efflux_sky_lsrk_minus_bary_kms (double ra_deg,
                                         double dec_deg);

/* The angle (degrees, 0 to 180) between two positions of one frame, by Vincenty's formula for
 * the sphere (well conditioned at every angle, as astropy's angular_separation). */
double   efflux_sky_separation_deg (double lon1_deg,
                                    double lat1_deg,
                                    double lon2_deg,
                                    double lat2_deg);

G_END_DECLS
