/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Helpers shared by the core tests (linked into each of them by tests/meson.build): temporary
 * folders, running efflux-cli and the python reference scripts, reading their output, comparing
 * doubles. Every helper asserts what it needs, so a test never carries on after a broken step. */
#pragma once

#include <glib.h>

#include "efflux-cube.h"

G_BEGIN_DECLS

/* --- files and folders ------------------------------------------------------------------------ */

/* A new private folder under the temporary directory, named PREFIX-XXXXXX. */
char       *efflux_test_tmp_dir        (const char *prefix);
/* Remove path and everything below it (links are removed, never followed); a missing path is
 * fine, a removal that fails is a test failure. */
void        efflux_test_remove_tree    (const char *path);
/* The number of entries in a folder (0 when it cannot be opened). */
guint       efflux_test_count_entries  (const char *dir);
/* A whole file (NUL-terminated; *length when not NULL), asserted. */
char       *efflux_test_read_file      (const char *path,
                                        gsize      *length);
/* Write a whole file, asserted. */
void        efflux_test_write_file     (const char *path,
                                        const char *text);

/* --- programs ---------------------------------------------------------------------------------- */

/* Run argv (NULL-terminated) in cwd (NULL: the current folder); out and err receive its standard
 * output and error (NULL: thrown away, so that nothing mixes with the TAP stream). Returns the
 * exit status, or -1 when a signal ended it. A program that cannot be started fails the test. */
int         efflux_test_spawn          (const char         *cwd,
                                        const char * const *argv,
                                        char              **out,
                                        char              **err);
/* The efflux-cli under test (EFFLUX_CLI, set by tests/meson.build; its absence fails the test). */
const char *efflux_test_cli            (void);
/* efflux-cli with args (NULL-terminated, without the program's name), as efflux_test_spawn. */
int         efflux_test_run_cli        (const char * const *args,
                                        char              **out,
                                        char              **err);

/* --- reference scripts ------------------------------------------------------------------------- */

/* Debian's python3 with astropy, numpy and scipy (EFFLUX_PYTHON, set by tests/meson.build). A
 * missing EFFLUX_PYTHON is a test failure, never a skip. */
const char *efflux_test_python_path    (void);
/* Run tests/ref/SCRIPT with args (NULL-terminated, may be NULL) and return its standard output.
 * A script that fails, fails the test with its standard error. */
char       *efflux_test_python         (const char         *script,
                                        const char * const *args);
/* The same for a short program given as text (python3 -c CODE ARGS...). */
char       *efflux_test_python_code    (const char         *code,
                                        const char * const *args);
/* A script's output of one number a line (blank lines skipped; any other line fails the test). */
GArray     *efflux_test_parse_numbers  (const char *text);
/* A script's output of "NAME VALUE" lines: NAME -> (double *) value. */
GHashTable *efflux_test_parse_named    (const char *text);
/* dir/NAME.f64: doubles in this machine's byte order (numpy's tofile); *n receives their count. */
double     *efflux_test_read_f64       (const char *dir,
                                        const char *name,
                                        gsize      *n);

/* --- sky --------------------------------------------------------------------------------------- */

/* "ra,dec;..." (degrees, ICRS, through the cube's WCS) of the pixel square whose pixel centres
 * x0..x1, y0..y1 (0-based, inclusive) are inside: a dossier lobe's outline. */
char       *efflux_test_pixel_square   (const EffluxCube *cube,
                                        int               x0,
                                        int               y0,
                                        int               x1,
                                        int               y1);

/* The compare and review tests' cube: 35 x 40 pixels of 2" around (83.8, -5.4), 12 channels of
 * 1 km/s from -5.5 km/s, 1 K everywhere, written to dir/co.fits. */
EffluxCube *efflux_test_write_square_cube (const char *dir);

/* A dossier for the compare and review tests, written to dir/file (returned): source NAME on the
 * column of the cube's reference pixel (pixel 17, 5: the test cube's), one CO cube "co.fits"
 * (rms 0.1 K), Tex 20 K, X(CO) 1e-4, no Monte Carlo, a comment line, then the lobe sections. */
char       *efflux_test_write_square_dossier (const EffluxCube *cube,
                                              const char       *dir,
                                              const char       *file,
                                              const char       *name,
                                              double            distance_pc,
                                              const char       *lobes);
/* "[Lobe NAME]" with its kind, cube co, outline, velocity range ("v1;v2") and author. */
char       *efflux_test_lobe_section   (const char *name,
                                        const char *kind,
                                        const char *polygon,
                                        const char *velocity,
                                        const char *author);

/* One 80-character FITS header card (text padded with blanks) appended to h. */
void        efflux_test_fits_card      (GString    *h,
                                        const char *text);
/* The whole primary header (to a 2880-byte block) of an unscaled float32 cube nx x ny x nchan:
 * RA---SIN / DEC--SIN around (52.263, 31.255), 0.2" pixels, reference pixel (crpix, crpix), and
 * VRAD channels of cdelt3 km/s, 0 km/s at channel crpix3 (LSRK, ICRS, K). */
void        efflux_test_fits_cube_header (GString *h,
                                          gsize    nx,
                                          gsize    ny,
                                          gsize    nchan,
                                          double   crpix,
                                          double   cdelt3,
                                          double   crpix3);

/* --- numbers ----------------------------------------------------------------------------------- */

/* Assert |got - want| <= tol x |want| (so got == want when want is 0). */
#define efflux_test_assert_rel(got, want, tol) \
  efflux_test_assert_rel_impl (__FILE__, __LINE__, #got, (got), (want), (tol))
void        efflux_test_assert_rel_impl (const char *file,
                                         int         line,
                                         const char *expr,
                                         double      got,
                                         double      want,
                                         double      tol);
/* The number after "KEY": in a JSON text (a missing key fails the test). */
double      efflux_test_json_number    (const char *json,
                                        const char *key);

G_END_DECLS
