/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-cli.h"
#include "efflux-error.h"

#include <errno.h>
#include <math.h>
#include <string.h>
#include <stdio.h>
#include <unistd.h>

int
efflux_cli_fail (GError *error)
{
  int status = EFFLUX_EXIT_INPUT;
  g_autofree char *line = NULL;
  char *p;

  if (error == NULL)
    return EFFLUX_EXIT_INPUT;
  if ((error->domain == EFFLUX_ERROR && error->code == EFFLUX_ERROR_USAGE) ||
      error->domain == G_OPTION_ERROR)
    status = EFFLUX_EXIT_USAGE;
  /* one line, always, and no control characters (a file's own bytes may be quoted in it) */
  line = g_strdup (error->message);
  for (p = line; *p != '\0'; p++)
    if ((unsigned char) *p < 0x20 || *p == 0x7f)
      *p = ' ';
  fprintf (stderr, "efflux-cli: error: %s\n", line);
  g_error_free (error);
  return status;
}

int
efflux_cli_usage (const char *command,
                  const char *format,
                  ...)
{
  va_list args;
  g_autofree char *msg = NULL;

  va_start (args, format);
  msg = g_strdup_vprintf (format, args);
  va_end (args);
  fprintf (stderr, "efflux-cli: error: %s%s%s (see 'efflux-cli %s --help')\n",
           command ? command : "", command ? ": " : "", msg, command ? command : "");
  return EFFLUX_EXIT_USAGE;
}

gboolean
efflux_cli_parse (GOptionContext *context,
                  int            *argc,
                  char         ***argv,
                  int            *status)
{
  GError *error = NULL;

  if (!g_option_context_parse (context, argc, argv, &error))
    {
      *status = efflux_cli_fail (error);
      return FALSE;
    }
  return TRUE;
}

/* Why path cannot be written, or NULL when it can. */
static char *
output_problem (const char *path)
{
  g_autofree char *dir = g_path_get_dirname (path);

  if (*path == '\0')
    return g_strdup ("the name is empty");
  if (g_file_test (path, G_FILE_TEST_IS_DIR))
    return g_strdup ("it is a folder");
  if (!g_file_test (dir, G_FILE_TEST_EXISTS))
    return g_strdup_printf ("folder %s does not exist", dir);
  if (!g_file_test (dir, G_FILE_TEST_IS_DIR))
    return g_strdup_printf ("%s is not a folder", dir);
  if (access (dir, W_OK | X_OK) != 0)
    {
      int saved = errno;

      return g_strdup_printf ("folder %s: %s", dir, g_strerror (saved));
    }
  if (g_file_test (path, G_FILE_TEST_EXISTS) && access (path, W_OK) != 0)
    {
      int saved = errno;

      return g_strdup (g_strerror (saved));
    }
  return NULL;
}

gboolean
efflux_cli_check_output (const char *option,
                         const char *path,
                         int        *status)
{
  g_autofree char *why = output_problem (path);

  if (why == NULL)
    return TRUE;
  *status = efflux_cli_fail (g_error_new (EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s %s: cannot write there: %s",
                                          option, path, why));
  return FALSE;
}

gboolean
efflux_cli_check_finite (const char         *command,
                         char              **args,
                         const char * const *options,
                         int                *status)
{
  for (guint i = 0; args != NULL && args[i] != NULL; i++)
    for (guint k = 0; options[k] != NULL; k++)
      {
        gsize n = strlen (options[k]);
        const char *value = NULL;
        char *end = NULL;
        double v;

        if (strcmp (args[i], options[k]) == 0)
          value = args[i + 1];
        else if (strncmp (args[i], options[k], n) == 0 && args[i][n] == '=')
          value = args[i] + n + 1;
        if (value == NULL || *value == '\0')
          continue;
        v = g_ascii_strtod (value, &end);
        if (*end == '\0' && !isfinite (v))
          {
            *status = efflux_cli_usage (command, "%s %s: expected a finite number", options[k], value);
            return FALSE;
          }
      }
  return TRUE;
}

gboolean
efflux_cli_parse_range (const char *text,
                        double     *a,
                        double     *b)
{
  g_auto (GStrv) parts = NULL;
  char *end = NULL;

  if (text == NULL)
    return FALSE;
  parts = g_strsplit (text, ":", -1);
  if (g_strv_length (parts) != 2)
    return FALSE;
  for (int i = 0; i < 2; i++)
    {
      double *v = i == 0 ? a : b;

      g_strstrip (parts[i]);
      if (*parts[i] == '\0')
        return FALSE;
      *v = g_ascii_strtod (parts[i], &end);
      if (end == NULL || *end != '\0' || !isfinite (*v))
        return FALSE;
    }
  return TRUE;
}

int
efflux_cli_write_stdout (const char *text,
                         gssize      length)
{
  size_t n = length < 0 ? strlen (text) : (size_t) length;

  errno = 0;
  if (fwrite (text, 1, n, stdout) != n || fflush (stdout) != 0)
    {
      int saved = errno;

      return efflux_cli_fail (g_error_new (EFFLUX_ERROR, EFFLUX_ERROR_IO, "standard output: %s",
                                           saved != 0 ? g_strerror (saved) : "write failed"));
    }
  return EFFLUX_EXIT_OK;
}

void
efflux_json_string (GString    *s,
                    const char *text)
{
  const unsigned char *p;

  g_string_append_c (s, '"');
  for (p = (const unsigned char *) (text ? text : ""); *p; p++)
    {
      switch (*p)
        {
        case '"': g_string_append (s, "\\\""); break;
        case '\\': g_string_append (s, "\\\\"); break;
        case '\n': g_string_append (s, "\\n"); break;
        case '\r': g_string_append (s, "\\r"); break;
        case '\t': g_string_append (s, "\\t"); break;
        default:
          if (*p < 0x20)
            g_string_append_printf (s, "\\u%04x", *p);
          else
            g_string_append_c (s, (char) *p);
        }
    }
  g_string_append_c (s, '"');
}

void
efflux_json_number (GString *s,
                    double   value)
{
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  if (!isfinite (value))
    g_string_append (s, "null");
  else
    g_string_append (s, g_ascii_formatd (buf, sizeof buf, "%.17g", value));
}
