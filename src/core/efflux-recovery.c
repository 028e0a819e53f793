/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The recovery file of a dossier: unsaved edits kept through a crash (efflux-recovery.h). */
#include "config.h"

#include "efflux-recovery.h"

#include <errno.h>
#include <glib/gstdio.h>
#include <string.h>

#include "efflux-io.h"

#define SUFFIX ".recovery"
#define MARK "# Efflux recovery file of "

char *
efflux_recovery_path (const char *dossier_path)
{
  return g_strconcat (dossier_path, SUFFIX, NULL);
}

gboolean
efflux_recovery_write (EffluxDossier  *dossier,
                       const char     *dossier_path,
                       GError        **error)
{
  g_autofree char *path = efflux_recovery_path (dossier_path);
  g_autofree char *base = g_path_get_basename (dossier_path);
  g_autofree char *data = efflux_dossier_to_data (dossier, NULL);
  g_autoptr (GDateTime) now = g_date_time_new_now_utc ();
  g_autofree char *when = g_date_time_format (now, "%Y-%m-%dT%H:%M:%SZ");
  g_autofree char *text = g_strdup_printf (MARK "%s, unsaved edits of %s\n%s", base, when, data);

  return efflux_write_file_atomic (path, text, -1, error);
}

gboolean
efflux_recovery_write_data (const char  *dossier_path,
                            const char  *data,
                            GError     **error)
{
  g_autofree char *path = efflux_recovery_path (dossier_path);
  g_autofree char *base = g_path_get_basename (dossier_path);
  g_autoptr (GDateTime) now = g_date_time_new_now_utc ();
  g_autofree char *when = g_date_time_format (now, "%Y-%m-%dT%H:%M:%SZ");
  g_autofree char *text = g_strdup_printf (MARK "%s, unsaved edits of %s\n%s", base, when, data);

  return efflux_write_file_atomic (path, text, -1, error);
}

gboolean
efflux_recovery_exists (const char *dossier_path,
                        gint64     *mtime_us)
{
  g_autofree char *path = efflux_recovery_path (dossier_path);
  GStatBuf st;

  if (g_stat (path, &st) != 0 || !S_ISREG (st.st_mode))
    return FALSE;
  if (mtime_us != NULL)
    *mtime_us = (gint64) st.st_mtim.tv_sec * G_USEC_PER_SEC + st.st_mtim.tv_nsec / 1000;
  return TRUE;
}

gboolean
efflux_recovery_older_than_dossier (const char *dossier_path)
{
  gint64 recovery_us;
  GStatBuf st;

  if (!efflux_recovery_exists (dossier_path, &recovery_us) || g_stat (dossier_path, &st) != 0)
    return FALSE;
  return (gint64) st.st_mtim.tv_sec * G_USEC_PER_SEC + st.st_mtim.tv_nsec / 1000 > recovery_us;
}

EffluxDossier *
efflux_recovery_load (const char  *dossier_path,
                      GError     **error)
{
  g_autofree char *path = efflux_recovery_path (dossier_path);
  g_autofree char *dir = g_path_get_dirname (dossier_path);
  g_autofree char *data = NULL;
  g_autoptr (GError) local = NULL;
  g_autoptr (EffluxDossier) d = NULL;
  const char *body;
  gsize length = 0;

  if (!g_file_get_contents (path, &data, &length, &local))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot read: %s", path, local->message);
      return NULL;
    }
  if (!g_utf8_validate (data, (gssize) length, NULL))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: not UTF-8 text", path);
      return NULL;
    }
  if (!g_str_has_prefix (data, MARK))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                   "%s: not an Efflux recovery file (the first line is not '%s...')", path, MARK);
      return NULL;
    }
  body = strchr (data, '\n');
  body = body != NULL ? body + 1 : data + length;
  d = efflux_dossier_new_from_data (body, (gssize) (length - (gsize) (body - data)), path, dir, error);
  if (d == NULL)
    return NULL;
  g_free (d->path);
  d->path = g_strdup (dossier_path);
  return g_steal_pointer (&d);
}

gboolean
efflux_recovery_remove (const char  *dossier_path,
                        GError     **error)
{
  g_autofree char *path = efflux_recovery_path (dossier_path);

  if (g_unlink (path) != 0 && errno != ENOENT)
    {
      int e = errno;

      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO, "%s: cannot remove: %s", path, g_strerror (e));
      return FALSE;
    }
  return TRUE;
}

gboolean
efflux_recovery_save_dossier (EffluxDossier  *dossier,
                              GError        **error)
{
  if (!efflux_dossier_save (dossier, dossier->path, error))
    return FALSE;
  return efflux_recovery_remove (dossier->path, error);
}
