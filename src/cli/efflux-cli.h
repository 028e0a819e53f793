/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

#define EFFLUX_EXIT_OK     0
#define EFFLUX_EXIT_INPUT  1   /* the input was refused */
#define EFFLUX_EXIT_USAGE  2   /* wrong usage */

/* Print "efflux-cli: error: MESSAGE" (one line) and return the exit status for the error:
 * 2 for EFFLUX_ERROR_USAGE and GOptionError, 1 otherwise. Frees the error. */
int  efflux_cli_fail  (GError *error);

/* Print "efflux-cli: error: ..." for a usage problem and return 2. */
int  efflux_cli_usage (const char *command,
                       const char *format,
                       ...) G_GNUC_PRINTF (2, 3);

/* Parse a command's options; on failure prints the error and returns FALSE with *status set. */
gboolean efflux_cli_parse (GOptionContext *context,
                           int            *argc,
                           char         ***argv,
                           int            *status);

/* Check, before any work, that PATH (the value of OPTION, e.g. "-o") can be written: its folder
 * exists and is writable, PATH is no folder and, when it exists, is writable. An unwritable output
 * is refused input: on failure prints "efflux-cli: error: OPTION PATH: cannot write there: WHY"
 * and returns FALSE with *status = 1. */
gboolean efflux_cli_check_output (const char *option,
                                  const char *path,
                                  int        *status);

/* GLib reads "nan" and "inf" as numbers: refuse them as wrong usage for the number options named
 * in options (NULL-terminated, e.g. "--cloud-mass") whose unset value is NaN. args is a copy of
 * the command line taken before parsing. Prints the error and returns FALSE with *status = 2. */
gboolean efflux_cli_check_finite (const char         *command,
                                  char              **args,
                                  const char * const *options,
                                  int                *status);

/* "A:B": two finite numbers, '.' decimal point, spaces around them allowed (velocity ranges,
 * colour limits); FALSE for anything else. The order is the caller's to check. */
gboolean efflux_cli_parse_range (const char *text,
                                 double     *a,
                                 double     *b);

/* Write text (length -1: up to its NUL) to standard output and flush it; returns 0, or prints
 * "efflux-cli: error: standard output: WHY" and returns 1. */
int efflux_cli_write_stdout (const char *text,
                             gssize      length);

/* Append a JSON string literal (quoted, escaped) to s. */
void efflux_json_string (GString    *s,
                         const char *text);
/* Append a JSON number; NaN and infinities become null. */
void efflux_json_number (GString *s,
                         double   value);

/* Commands: each gets argv with argv[0] = the command name. */
int efflux_cmd_info    (int argc, char **argv);
int efflux_cmd_synth   (int argc, char **argv);
int efflux_cmd_measure (int argc, char **argv);
int efflux_cmd_merge   (int argc, char **argv);
int efflux_cmd_moment  (int argc, char **argv);
int efflux_cmd_pv      (int argc, char **argv);
int efflux_cmd_compare (int argc, char **argv);
int efflux_cmd_export  (int argc, char **argv);
int efflux_cmd_shellfit (int argc, char **argv);
int efflux_cmd_knots  (int argc, char **argv);
int efflux_cmd_budget (int argc, char **argv);
int efflux_cmd_figure (int argc, char **argv);
int efflux_cmd_report (int argc, char **argv);

G_END_DECLS
