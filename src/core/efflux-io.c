/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-io.h"
#include "efflux-error.h"

#include <errno.h>
#include <fcntl.h>
#include <glib/gstdio.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>

char *
efflux_output_begin (const char  *final_path,
                     GError     **error)
{
  g_autofree char *dir = g_path_get_dirname (final_path);
  g_autofree char *base = g_path_get_basename (final_path);
  g_autofree char *templ = g_strdup_printf ("%s/.%s.XXXXXX.tmp", dir, base);
  int fd;

  fd = g_mkstemp_full (templ, O_RDWR | O_CLOEXEC, 0644);
  if (fd < 0)
    {
      int saved = errno;
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO,
                   "%s: cannot write here: %s", final_path, g_strerror (saved));
      return NULL;
    }
  close (fd);
  return g_steal_pointer (&templ);
}

gboolean
efflux_output_commit (const char  *tmp_path,
                      const char  *final_path,
                      GError     **error)
{
  int fd = open (tmp_path, O_RDONLY | O_CLOEXEC);

  if (fd >= 0)
    {
      (void) fsync (fd);
      close (fd);
    }
  if (g_rename (tmp_path, final_path) != 0)
    {
      int saved = errno;
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO,
                   "%s: cannot rename the finished output into place: %s",
                   final_path, g_strerror (saved));
      g_unlink (tmp_path);
      return FALSE;
    }
  return TRUE;
}

void
efflux_output_abort (const char *tmp_path)
{
  if (tmp_path != NULL)
    g_unlink (tmp_path);
}

gboolean
efflux_write_file_atomic (const char  *path,
                          const char  *contents,
                          gssize       length,
                          GError     **error)
{
  g_autofree char *tmp = efflux_output_begin (path, error);
  FILE *fp;
  gsize len;

  if (tmp == NULL)
    return FALSE;
  len = length < 0 ? strlen (contents) : (gsize) length;
  fp = fopen (tmp, "wb");
  if (fp == NULL || fwrite (contents, 1, len, fp) != len || fflush (fp) != 0)
    {
      int saved = errno;
      if (fp != NULL)
        fclose (fp);
      efflux_output_abort (tmp);
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO,
                   "%s: write failed: %s", path, g_strerror (saved));
      return FALSE;
    }
  if (fclose (fp) != 0)
    {
      int saved = errno;
      efflux_output_abort (tmp);
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO,
                   "%s: write failed: %s", path, g_strerror (saved));
      return FALSE;
    }
  return efflux_output_commit (tmp, path, error);
}

guint64
efflux_memory_available (void)
{
  g_autofree char *text = NULL;
  const char *p;

  if (!g_file_get_contents ("/proc/meminfo", &text, NULL, NULL))
    {
      long pages = sysconf (_SC_AVPHYS_PAGES);
      long size = sysconf (_SC_PAGESIZE);
      return (pages > 0 && size > 0) ? (guint64) pages * (guint64) size : 0;
    }
  p = strstr (text, "MemAvailable:");
  if (p == NULL)
    return 0;
  return g_ascii_strtoull (p + strlen ("MemAvailable:"), NULL, 10) * 1024;
}
