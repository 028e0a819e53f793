/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Samples: folders of dossiers and each source's state (see efflux-sample.h). */
#include "config.h"

#include "efflux-sample.h"

#include "efflux-error.h"
#include "efflux-io.h"

#include <string.h>

#define GROUP_STATUS "Status"

static int
compare_paths (gconstpointer a,
               gconstpointer b)
{
  return strcmp (*(char * const *) a, *(char * const *) b);
}

GPtrArray *
efflux_sample_list (const char  *folder,
                    GError     **error)
{
  g_autoptr (GPtrArray) paths = g_ptr_array_new_with_free_func (g_free);
  g_autoptr (GError) local = NULL;
  g_autoptr (GDir) dir = g_dir_open (folder, 0, &local);
  const char *name;

  if (dir == NULL)
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: cannot read the folder: %s", folder, local->message);
      return NULL;
    }
  while ((name = g_dir_read_name (dir)) != NULL)
    {
      g_autofree char *path = NULL;

      if (!g_str_has_suffix (name, ".efflux") || name[0] == '.')
        continue;
      path = g_build_filename (folder, name, NULL);
      if (!g_file_test (path, G_FILE_TEST_IS_REGULAR))
        continue;
      g_ptr_array_add (paths, g_steal_pointer (&path));
    }
  g_ptr_array_sort (paths, compare_paths);
  return g_steal_pointer (&paths);
}

void
efflux_sample_entry_free (EffluxSampleEntry *e)
{
  if (e == NULL)
    return;
  g_free (e->path);
  g_free (e->file_name);
  g_free (e->name);
  g_free (e->measured);
  g_free (e->measured_with);
  g_free (e->reviewed_by);
  g_free (e->reviewed);
  g_free (e->problem);
  g_free (e);
}

static char *
status_value (GKeyFile   *kf,
              const char *key)
{
  char *v = g_key_file_get_string (kf, GROUP_STATUS, key, NULL);

  if (v != NULL)
    g_strstrip (v);
  if (v != NULL && *v == '\0')
    g_clear_pointer (&v, g_free);
  return v;
}

EffluxSourceState
efflux_sample_state (GKeyFile *kf)
{
  g_autofree char *reviewer = status_value (kf, "reviewed-by");
  g_autofree char *measured = status_value (kf, "measured");

  if (reviewer != NULL)
    return EFFLUX_SOURCE_REVIEWED;
  if (measured != NULL)
    return EFFLUX_SOURCE_MEASURED;
  return EFFLUX_SOURCE_NOT_MEASURED;
}

const char *
efflux_source_state_name (EffluxSourceState state)
{
  switch (state)
    {
    case EFFLUX_SOURCE_MEASURED: return "measured";
    case EFFLUX_SOURCE_REVIEWED: return "reviewed";
    case EFFLUX_SOURCE_NOT_MEASURED:
    default: return "not measured";
    }
}

GPtrArray *
efflux_sample_scan (const char  *folder,
                    GError     **error)
{
  g_autoptr (GPtrArray) paths = efflux_sample_list (folder, error);
  GPtrArray *entries;

  if (paths == NULL)
    return NULL;
  entries = g_ptr_array_new_with_free_func ((GDestroyNotify) efflux_sample_entry_free);
  for (guint i = 0; i < paths->len; i++)
    {
      EffluxSampleEntry *e = g_new0 (EffluxSampleEntry, 1);
      g_autoptr (GKeyFile) kf = g_key_file_new ();
      g_autoptr (GError) local = NULL;

      e->path = g_strdup (g_ptr_array_index (paths, i));
      e->file_name = g_path_get_basename (e->path);
      if (!g_key_file_load_from_file (kf, e->path, G_KEY_FILE_NONE, &local))
        {
          e->problem = g_strdup_printf ("%s: %s", e->file_name, local->message);
          e->name = g_strdup (e->file_name);
          e->state = EFFLUX_SOURCE_NOT_MEASURED;
        }
      else
        {
          e->name = g_key_file_get_string (kf, "Source", "name", NULL);
          if (e->name != NULL)
            g_strstrip (e->name);
          if (e->name == NULL || *e->name == '\0')
            {
              g_free (e->name);
              e->name = g_strdup (e->file_name);
            }
          e->state = efflux_sample_state (kf);
          e->measured = status_value (kf, "measured");
          e->measured_with = status_value (kf, "measured-with");
          e->reviewed_by = status_value (kf, "reviewed-by");
          e->reviewed = status_value (kf, "reviewed");
        }
      g_ptr_array_add (entries, e);
    }
  return entries;
}

static void
set_time (GKeyFile   *kf,
          const char *key,
          GDateTime  *when)
{
  g_autoptr (GDateTime) utc = when ? g_date_time_to_utc (when) : g_date_time_new_now_utc ();
  g_autofree char *text = g_date_time_format (utc, "%Y-%m-%dT%H:%M:%SZ");

  g_key_file_set_string (kf, GROUP_STATUS, key, text);
}

void
efflux_sample_set_measured (GKeyFile  *kf,
                            GDateTime *when)
{
  set_time (kf, "measured", when);
  g_key_file_set_string (kf, GROUP_STATUS, "measured-with", PACKAGE_VERSION);
}

void
efflux_sample_set_reviewed (GKeyFile   *kf,
                            const char *reviewer,
                            GDateTime  *when)
{
  g_return_if_fail (reviewer != NULL && *reviewer != '\0');
  g_key_file_set_string (kf, GROUP_STATUS, "reviewed-by", reviewer);
  set_time (kf, "reviewed", when);
}

gboolean
efflux_sample_mark_measured (const char  *path,
                             GDateTime   *when,
                             GError     **error)
{
  g_autoptr (GKeyFile) kf = g_key_file_new ();
  g_autoptr (GError) local = NULL;
  g_autofree char *data = NULL;
  gsize length = 0;

  if (!g_key_file_load_from_file (kf, path, G_KEY_FILE_KEEP_COMMENTS | G_KEY_FILE_KEEP_TRANSLATIONS, &local))
    {
      g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: %s", path, local->message);
      return FALSE;
    }
  efflux_sample_set_measured (kf, when);
  data = g_key_file_to_data (kf, &length, NULL);
  return efflux_write_file_atomic (path, data, (gssize) length, error);
}
