/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-cube-store"

#include "config.h"

#include <glib/gstdio.h>

#include "efflux-cube-store.h"

typedef struct
{
  char       *key;
  EffluxCube *cube;
  guint       refs;
} Entry;

static GMutex      store_lock;
static GCond       store_cond; /* a read ended */
static GHashTable *reading;    /* keys of the files being read now */
static GHashTable *by_key;     /* key -> Entry * */
static GHashTable *by_cube;    /* EffluxCube * -> Entry * (owns) */
static guint       n_reads;

static void
entry_free (gpointer data)
{
  Entry *entry = data;

  g_free (entry->key);
  efflux_cube_free (entry->cube);
  g_free (entry);
}

static void
ensure_tables (void)
{
  if (by_key == NULL)
    {
      by_key = g_hash_table_new (g_str_hash, g_str_equal);
      by_cube = g_hash_table_new_full (g_direct_hash, g_direct_equal, NULL, entry_free);
      reading = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, NULL);
    }
}

/* The file's identity and the options that change the data; NULL when the file cannot be
 * examined (the loader then says why). */
static char *
store_key (const char                  *path,
           const EffluxCubeLoadOptions *options)
{
  GStatBuf st;

  if (g_stat (path, &st) != 0)
    return NULL;
  return g_strdup_printf ("%" G_GUINT64_FORMAT ":%" G_GUINT64_FORMAT ":%" G_GINT64_FORMAT ":%" G_GINT64_FORMAT
                          ".%ld:hdu %d:subset %d %.17g %.17g",
                          (guint64) st.st_dev, (guint64) st.st_ino, (gint64) st.st_size,
                          (gint64) st.st_mtim.tv_sec, (long) st.st_mtim.tv_nsec,
                          options ? options->hdu : 0,
                          options ? options->channel_subset : 0,
                          options && options->channel_subset ? options->v1_kms : 0.0,
                          options && options->channel_subset ? options->v2_kms : 0.0);
}

EffluxCube *
efflux_cube_store_load (const char                  *path,
                        const EffluxCubeLoadOptions *options,
                        GCancellable                *cancellable,
                        EffluxProgressFunc           progress,
                        gpointer                     progress_data,
                        GError                     **error)
{
  g_autofree char *key = store_key (path, options);
  EffluxCube *cube;
  Entry *entry;

  if (key != NULL)
    {
      g_mutex_lock (&store_lock);
      ensure_tables ();
      for (;;)
        {
          entry = g_hash_table_lookup (by_key, key);
          if (entry != NULL)
            {
              entry->refs++;
              g_mutex_unlock (&store_lock);
              if (progress != NULL)
                progress (1.0, progress_data);
              return entry->cube;
            }
          if (!g_hash_table_contains (reading, key))
            break;
          /* another thread reads this file now: wait for its cube rather than read it twice */
          if (g_cancellable_set_error_if_cancelled (cancellable, error))
            {
              g_mutex_unlock (&store_lock);
              return NULL;
            }
          g_cond_wait_until (&store_cond, &store_lock,
                             g_get_monotonic_time () + 50 * G_TIME_SPAN_MILLISECOND);
        }
      g_hash_table_add (reading, g_strdup (key));
      g_mutex_unlock (&store_lock);
    }

  cube = efflux_cube_load (path, options, cancellable, progress, progress_data, error);

  g_mutex_lock (&store_lock);
  ensure_tables ();
  if (key != NULL)
    {
      /* the waiting threads take this cube, or read the file themselves if this read failed */
      g_hash_table_remove (reading, key);
      g_cond_broadcast (&store_cond);
    }
  if (cube == NULL)
    {
      g_mutex_unlock (&store_lock);
      return NULL;
    }
  n_reads++;
  entry = key != NULL ? g_hash_table_lookup (by_key, key) : NULL;
  if (entry != NULL)
    {
      /* read at the same time by another thread: keep the first */
      entry->refs++;
      g_mutex_unlock (&store_lock);
      efflux_cube_free (cube);
      return entry->cube;
    }
  entry = g_new0 (Entry, 1);
  /* a file that could not be examined before it was read is not shared */
  entry->key = key != NULL ? g_steal_pointer (&key) : g_strdup_printf ("unshared:%p", (void *) cube);
  entry->cube = cube;
  entry->refs = 1;
  g_hash_table_insert (by_key, entry->key, entry);
  g_hash_table_insert (by_cube, cube, entry);
  g_mutex_unlock (&store_lock);
  return cube;
}

EffluxCube *
efflux_cube_store_ref (EffluxCube *cube)
{
  Entry *entry;

  g_return_val_if_fail (cube != NULL, NULL);
  g_mutex_lock (&store_lock);
  entry = by_cube != NULL ? g_hash_table_lookup (by_cube, cube) : NULL;
  g_assert (entry != NULL);
  entry->refs++;
  g_mutex_unlock (&store_lock);
  return cube;
}

void
efflux_cube_store_release (EffluxCube *cube)
{
  Entry *entry;

  if (cube == NULL)
    return;
  g_mutex_lock (&store_lock);
  entry = by_cube != NULL ? g_hash_table_lookup (by_cube, cube) : NULL;
  if (entry == NULL)
    {
      g_mutex_unlock (&store_lock);
      g_critical ("efflux_cube_store_release: %p is not a cube of the store", (void *) cube);
      return;
    }
  if (--entry->refs == 0)
    {
      g_hash_table_remove (by_key, entry->key);
      g_hash_table_steal (by_cube, cube);
      g_mutex_unlock (&store_lock);
      entry_free (entry);   /* outside the lock: freeing a large cube takes a while */
      return;
    }
  g_mutex_unlock (&store_lock);
}

guint
efflux_cube_store_count (void)
{
  guint n;

  g_mutex_lock (&store_lock);
  n = by_key != NULL ? g_hash_table_size (by_key) : 0;
  g_mutex_unlock (&store_lock);
  return n;
}

guint
efflux_cube_store_reads (void)
{
  guint n;

  g_mutex_lock (&store_lock);
  n = n_reads;
  g_mutex_unlock (&store_lock);
  return n;
}
