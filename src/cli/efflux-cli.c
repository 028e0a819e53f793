/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-cli.h"
#include "efflux-error.h"

#include <math.h>
#include <string.h>
#include <stdio.h>

int
efflux_cli_fail (GError *error)
{
  int status = EFFLUX_EXIT_INPUT;
  g_autofree char *line = NULL;
  char *nl;

  if (error == NULL)
    return EFFLUX_EXIT_INPUT;
  if ((error->domain == EFFLUX_ERROR && error->code == EFFLUX_ERROR_USAGE) ||
      error->domain == G_OPTION_ERROR)
    status = EFFLUX_EXIT_USAGE;
  /* one line, always */
  line = g_strdup (error->message);
  while ((nl = strchr (line, '\n')) != NULL)
    *nl = ' ';
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
