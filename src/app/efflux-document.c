/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-document"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>
#include <string.h>

#include "efflux-document.h"
#include "efflux-cube-store.h"

/* One key's change inside a command. */
typedef struct
{
  char *group;
  char *key;
  char *before;   /* NULL: absent before */
  char *after;    /* NULL: absent after */
} Change;

typedef struct
{
  guint      merge_id;
  guint      serial;
  GPtrArray *changes;  /* Change * */
} Command;

/* What the next measurement job has to do. */
typedef struct
{
  gboolean    full;        /* prepare again */
  gboolean    finish;      /* finish only */
  gboolean    complete;    /* an edit that is no drag (merge id 0), an undo, a load: the complete
                            * finish; during a drag the broken power-law fit waits until it rests */
  GHashTable *lobes;       /* names whose masks (by difference) to rebuild (set) */
} Work;

struct _EffluxDocument
{
  GObject        parent_instance;

  EffluxDossier *dossier;
  char          *path;

  GQueue         undo;        /* Command *, oldest first */
  GQueue         redo;        /* Command *, the next to redo first */
  guint          next_serial;
  guint          saved_serial;  /* serial of the undo stack's top at the last save (0: empty) */
  gboolean       applying;

  /* measurement (main thread; the job owns prep while it runs) */
  GHashTable          *cubes;       /* id -> EffluxCube *, owned */
  EffluxMeasurePrep   *prep;
  EffluxMeasureResult *result;
  char                *measure_error;
  Work                 pending;
  Work                 running;
  gboolean             job_running;
  gboolean             loading;
  guint                edits_since_load;
  GCancellable        *job_cancellable;
  guint                idle_id;
  guint                settle_id;    /* the complete finish once a drag rests */
};

G_DEFINE_FINAL_TYPE (EffluxDocument, efflux_document, G_TYPE_OBJECT)

enum {
  PROP_0,
  PROP_CAN_UNDO,
  PROP_CAN_REDO,
  PROP_MODIFIED,
  PROP_PATH,
  N_PROPS
};

enum {
  SIGNAL_CHANGED,
  SIGNAL_MEASURED,
  N_SIGNALS
};

static GParamSpec *properties[N_PROPS];
static guint signals[N_SIGNALS];

static void schedule_measure (EffluxDocument *self);

/* ---- commands ---- */

static void
change_free (gpointer data)
{
  Change *change = data;

  g_free (change->group);
  g_free (change->key);
  g_free (change->before);
  g_free (change->after);
  g_free (change);
}

static void
command_free (gpointer data)
{
  Command *command = data;

  g_ptr_array_unref (command->changes);
  g_free (command);
}

guint
efflux_document_new_merge_id (void)
{
  static guint next = 1;

  return g_atomic_int_add (&next, 1);
}

static void
work_init (Work *work)
{
  work->full = FALSE;
  work->finish = FALSE;
  work->complete = FALSE;
  work->lobes = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, NULL);
}

static void
work_clear (Work *work)
{
  work->full = FALSE;
  work->finish = FALSE;
  work->complete = FALSE;
  g_hash_table_remove_all (work->lobes);
}

static gboolean
work_empty (const Work *work)
{
  return !work->full && !work->finish && g_hash_table_size (work->lobes) == 0;
}

/* Move everything from src into dst. */
static void
work_merge (Work *dst,
            Work *src)
{
  GHashTableIter iter;
  gpointer key;

  dst->full |= src->full;
  dst->finish |= src->finish;
  dst->complete |= src->complete;
  g_hash_table_iter_init (&iter, src->lobes);
  while (g_hash_table_iter_next (&iter, &key, NULL))
    g_hash_table_add (dst->lobes, g_strdup (key));
  work_clear (src);
}

/* What a changed key asks of the measurement. */
static void
note_work (EffluxDocument *self,
           const Change   *change)
{
  Work *w = &self->pending;

  if (g_str_has_prefix (change->group, "Lobe "))
    {
      if (g_strcmp0 (change->key, "polygon") == 0 || g_strcmp0 (change->key, "cube") == 0)
        g_hash_table_add (w->lobes, g_strdup (change->group + 5));
      else
        w->finish = TRUE;
    }
  else if (g_str_has_prefix (change->group, "Cube ")
           || (g_str_equal (change->group, "Source")
               && (g_strcmp0 (change->key, "ra-deg") == 0 || g_strcmp0 (change->key, "dec-deg") == 0))
           || (g_str_equal (change->group, "Assumptions")
               && g_strcmp0 (change->key, "clip-sigma") == 0))
    w->full = TRUE;
  else
    w->finish = TRUE;
}

static void
notify_state (EffluxDocument *self,
              gboolean        could_undo,
              gboolean        could_redo,
              gboolean        was_modified)
{
  if (could_undo != efflux_document_can_undo (self))
    g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_CAN_UNDO]);
  if (could_redo != efflux_document_can_redo (self))
    g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_CAN_REDO]);
  if (was_modified != efflux_document_get_modified (self))
    g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_MODIFIED]);
}

static void
keyfile_put (GKeyFile   *kf,
             const char *group,
             const char *key,
             const char *value)
{
  if (value != NULL)
    g_key_file_set_value (kf, group, key, value);
  else if (g_key_file_has_group (kf, group))
    {
      gsize n = 0;
      g_auto(GStrv) keys = NULL;

      g_key_file_remove_key (kf, group, key, NULL);
      keys = g_key_file_get_keys (kf, group, &n, NULL);
      if (n == 0)
        g_key_file_remove_group (kf, group, NULL);
    }
}

/* Write the changes' before (forward = FALSE) or after values into the key file and read the
 * dossier again from it. On error the key file is put back and nothing changes. */
static gboolean
apply_changes (EffluxDocument *self,
               GPtrArray      *changes,
               gboolean        forward,
               GError        **error)
{
  GKeyFile *kf = self->dossier->keyfile;
  g_autofree char *data = NULL;
  gsize length = 0;
  EffluxDossier *fresh;

  for (guint i = 0; i < changes->len; i++)
    {
      Change *c = g_ptr_array_index (changes, i);

      keyfile_put (kf, c->group, c->key, forward ? c->after : c->before);
    }
  data = g_key_file_to_data (kf, &length, NULL);
  fresh = efflux_dossier_new_from_data (data, (gssize) length, self->dossier->path,
                                        self->dossier->dir, error);
  if (fresh == NULL)
    {
      for (guint i = changes->len; i-- > 0;)
        {
          Change *c = g_ptr_array_index (changes, i);

          keyfile_put (kf, c->group, c->key, forward ? c->before : c->after);
        }
      return FALSE;
    }
  /* keep the lines guessed for cubes without one */
  for (guint i = 0; i < fresh->cubes->len; i++)
    {
      EffluxDossierCube *nc = g_ptr_array_index (fresh->cubes, i);
      EffluxDossierCube *oc = efflux_dossier_find_cube (self->dossier, nc->id);

      if (nc->line == NULL && oc != NULL && oc->line != NULL)
        efflux_dossier_cube_set_line (nc, oc->line);
    }
  efflux_dossier_free (self->dossier);
  self->dossier = fresh;
  for (guint i = 0; i < changes->len; i++)
    note_work (self, g_ptr_array_index (changes, i));
  /* an edit: the complete finish waits until the edits rest again */
  g_clear_handle_id (&self->settle_id, g_source_remove);
  self->edits_since_load++;
  return TRUE;
}

static const char *
changes_group (GPtrArray *changes)
{
  const char *group = NULL;

  for (guint i = 0; i < changes->len; i++)
    {
      Change *c = g_ptr_array_index (changes, i);

      if (group == NULL)
        group = c->group;
      else if (!g_str_equal (group, c->group))
        return NULL;
    }
  return group;
}

static gboolean
same_keys (GPtrArray *a,
           GPtrArray *b)
{
  if (a->len != b->len)
    return FALSE;
  for (guint i = 0; i < a->len; i++)
    {
      Change *ca = g_ptr_array_index (a, i), *cb = g_ptr_array_index (b, i);

      if (!g_str_equal (ca->group, cb->group) || !g_str_equal (ca->key, cb->key))
        return FALSE;
    }
  return TRUE;
}

/* Apply a new command and record it (merging with the last one when allowed). Takes changes. */
static gboolean
push_changes (EffluxDocument *self,
              GPtrArray      *changes,
              guint           merge_id,
              GError        **error)
{
  gboolean could_undo = efflux_document_can_undo (self);
  gboolean could_redo = efflux_document_can_redo (self);
  gboolean was_modified = efflux_document_get_modified (self);
  Command *last = g_queue_peek_tail (&self->undo);
  g_autofree char *group = NULL;

  /* fill in the values before */
  for (guint i = 0; i < changes->len; i++)
    {
      Change *c = g_ptr_array_index (changes, i);

      g_free (c->before);
      c->before = g_key_file_get_value (self->dossier->keyfile, c->group, c->key, NULL);
    }
  if (!apply_changes (self, changes, TRUE, error))
    {
      g_ptr_array_unref (changes);
      return FALSE;
    }
  if (merge_id == 0)
    self->pending.complete = TRUE;
  g_queue_clear_full (&self->redo, command_free);
  if (merge_id != 0 && last != NULL && last->merge_id == merge_id
      && same_keys (last->changes, changes))
    {
      for (guint i = 0; i < changes->len; i++)
        {
          Change *old = g_ptr_array_index (last->changes, i);
          Change *c = g_ptr_array_index (changes, i);

          g_free (old->after);
          old->after = g_steal_pointer (&c->after);
        }
      last->serial = ++self->next_serial;
      group = g_strdup (changes_group (last->changes));
      g_ptr_array_unref (changes);
    }
  else
    {
      Command *command = g_new0 (Command, 1);

      command->merge_id = merge_id;
      command->serial = ++self->next_serial;
      command->changes = changes;
      group = g_strdup (changes_group (changes));
      g_queue_push_tail (&self->undo, command);
    }
  notify_state (self, could_undo, could_redo, was_modified);
  g_signal_emit (self, signals[SIGNAL_CHANGED], 0, group);
  schedule_measure (self);
  return TRUE;
}

static void
add_change (GPtrArray  *changes,
            const char *group,
            const char *key,
            const char *value)
{
  Change *c = g_new0 (Change, 1);

  c->group = g_strdup (group);
  c->key = g_strdup (key);
  c->after = g_strdup (value);
  g_ptr_array_add (changes, c);
}

static gboolean
undo_redo (EffluxDocument *self,
           gboolean        undo)
{
  gboolean could_undo = efflux_document_can_undo (self);
  gboolean could_redo = efflux_document_can_redo (self);
  gboolean was_modified = efflux_document_get_modified (self);
  g_autoptr(GError) error = NULL;
  Command *command;
  g_autofree char *group = NULL;

  command = undo ? g_queue_pop_tail (&self->undo) : g_queue_pop_head (&self->redo);
  if (command == NULL)
    return FALSE;
  self->applying = TRUE;
  if (!apply_changes (self, command->changes, !undo, &error))
    {
      /* cannot happen for values the core accepted before; keep the history consistent */
      g_warning ("%s", error->message);
      if (undo)
        g_queue_push_tail (&self->undo, command);
      else
        g_queue_push_head (&self->redo, command);
      self->applying = FALSE;
      return FALSE;
    }
  self->applying = FALSE;
  self->pending.complete = TRUE;
  if (undo)
    g_queue_push_head (&self->redo, command);
  else
    g_queue_push_tail (&self->undo, command);
  group = g_strdup (changes_group (command->changes));
  notify_state (self, could_undo, could_redo, was_modified);
  g_signal_emit (self, signals[SIGNAL_CHANGED], 0, group);
  schedule_measure (self);
  return TRUE;
}

gboolean
efflux_document_undo (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  return undo_redo (self, TRUE);
}

gboolean
efflux_document_redo (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  return undo_redo (self, FALSE);
}

gboolean
efflux_document_can_undo (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  return self->undo.length > 0;
}

gboolean
efflux_document_can_redo (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  return self->redo.length > 0;
}

guint
efflux_document_get_n_undo (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), 0);
  return self->undo.length;
}

gboolean
efflux_document_get_modified (EffluxDocument *self)
{
  Command *top;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  top = g_queue_peek_tail (&self->undo);
  return (top ? top->serial : 0) != self->saved_serial;
}

const EffluxDossier *
efflux_document_get_dossier (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), NULL);
  return self->dossier;
}

const char *
efflux_document_get_path (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), NULL);
  return self->path;
}

/* The dossier was just written to path: the saved state is the top of the history, and path the
 * document's file. */
static void
mark_saved (EffluxDocument *self,
            const char     *path)
{
  gboolean was_modified = efflux_document_get_modified (self);
  Command *top = g_queue_peek_tail (&self->undo);

  self->saved_serial = top ? top->serial : 0;
  if (g_strcmp0 (path, self->path) != 0)
    {
      g_free (self->path);
      self->path = g_strdup (path);
      g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_PATH]);
    }
  if (was_modified)
    g_object_notify_by_pspec (G_OBJECT (self), properties[PROP_MODIFIED]);
}

gboolean
efflux_document_save (EffluxDocument  *self,
                      const char      *path,
                      GError         **error)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  if (path == NULL)
    path = self->path;
  if (!efflux_dossier_save (self->dossier, path, error))
    return FALSE;
  mark_saved (self, path);
  return TRUE;
}

/* Save As (lasting): the core rewrites the file paths; the history's follow. */
gboolean
efflux_document_save_as (EffluxDocument  *self,
                         const char      *path,
                         GError         **error)
{
  g_autofree char *old_dir = NULL;
  GQueue *stacks[2];

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  g_return_val_if_fail (path != NULL, FALSE);
  old_dir = g_canonicalize_filename (self->dossier->dir ? self->dossier->dir : ".", NULL);
  if (!efflux_dossier_save_as (self->dossier, path, error))
    return FALSE;
  stacks[0] = &self->undo;
  stacks[1] = &self->redo;
  for (guint s = 0; s < G_N_ELEMENTS (stacks); s++)
    for (GList *l = stacks[s]->head; l != NULL; l = l->next)
      {
        Command *command = l->data;

        for (guint i = 0; i < command->changes->len; i++)
          {
            Change *c = g_ptr_array_index (command->changes, i);
            char **values[2] = { &c->before, &c->after };

            if (!efflux_dossier_is_file_key (c->group, c->key))
              continue;
            for (guint v = 0; v < 2; v++)
              if (*values[v] != NULL)
                {
                  char *moved = efflux_dossier_relocate_path (*values[v], old_dir, self->dossier->dir);

                  g_free (*values[v]);
                  *values[v] = moved;
                }
          }
      }
  mark_saved (self, path);
  return TRUE;
}

/* ---- edits ---- */

static char *
format_number (double value)
{
  char buf[G_ASCII_DTOSTR_BUF_SIZE];

  return g_strdup (g_ascii_formatd (buf, sizeof buf, "%.10g", value));
}

/* "ra,dec;ra,dec;..." with 1e-8 degree steps (36 micro-arcseconds) */
static char *
format_vertices (const double *ra_deg,
                 const double *dec_deg,
                 gsize         n)
{
  GString *s = g_string_new (NULL);

  for (gsize i = 0; i < n; i++)
    {
      char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];

      g_string_append_printf (s, "%s%s,%s", i ? ";" : "",
                              g_ascii_formatd (a, sizeof a, "%.8f", ra_deg[i]),
                              g_ascii_formatd (b, sizeof b, "%.8f", dec_deg[i]));
    }
  return g_string_free (s, FALSE);
}

static gboolean
no_lobe (EffluxDocument  *self,
         const char      *lobe,
         GError         **error)
{
  if (efflux_dossier_find_lobe (self->dossier, lobe) != NULL)
    return FALSE;
  g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, _("%s: [Lobe %s]: no such lobe"),
               self->dossier->path, lobe);
  return TRUE;
}

gboolean
efflux_document_set_key (EffluxDocument  *self,
                         const char      *group,
                         const char      *key,
                         const char      *value,
                         guint            merge_id,
                         GError         **error)
{
  GPtrArray *changes;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  g_return_val_if_fail (group != NULL && key != NULL, FALSE);
  changes = g_ptr_array_new_with_free_func (change_free);
  add_change (changes, group, key, value);
  return push_changes (self, changes, merge_id, error);
}

gboolean
efflux_document_set_keys (EffluxDocument     *self,
                          guint               n_keys,
                          const char * const *groups,
                          const char * const *keys,
                          const char * const *values,
                          guint               merge_id,
                          GError            **error)
{
  GPtrArray *changes;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  g_return_val_if_fail (n_keys > 0 && groups != NULL && keys != NULL && values != NULL, FALSE);
  changes = g_ptr_array_new_with_free_func (change_free);
  for (guint i = 0; i < n_keys; i++)
    add_change (changes, groups[i], keys[i], values[i]);
  return push_changes (self, changes, merge_id, error);
}

gboolean
efflux_document_set_lobe_polygon (EffluxDocument  *self,
                                  const char      *lobe,
                                  const double    *ra_deg,
                                  const double    *dec_deg,
                                  gsize            n_vertices,
                                  guint            merge_id,
                                  GError         **error)
{
  g_autofree char *group = NULL;
  g_autofree char *value = NULL;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  if (no_lobe (self, lobe, error))
    return FALSE;
  group = g_strconcat ("Lobe ", lobe, NULL);
  value = format_vertices (ra_deg, dec_deg, n_vertices);
  return efflux_document_set_key (self, group, "polygon", value, merge_id, error);
}

gboolean
efflux_document_set_lobe_velocity (EffluxDocument  *self,
                                   const char      *lobe,
                                   double           v1_kms,
                                   double           v2_kms,
                                   guint            merge_id,
                                   GError         **error)
{
  g_autofree char *group = NULL;
  g_autofree char *a = NULL, *b = NULL, *value = NULL;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  if (no_lobe (self, lobe, error))
    return FALSE;
  group = g_strconcat ("Lobe ", lobe, NULL);
  a = format_number (MIN (v1_kms, v2_kms));
  b = format_number (MAX (v1_kms, v2_kms));
  value = g_strconcat (a, ";", b, NULL);
  return efflux_document_set_key (self, group, "velocity-kms", value, merge_id, error);
}

gboolean
efflux_document_set_lobe_kind (EffluxDocument  *self,
                               const char      *lobe,
                               EffluxLobeKind   kind,
                               GError         **error)
{
  g_autofree char *group = NULL;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  if (no_lobe (self, lobe, error))
    return FALSE;
  group = g_strconcat ("Lobe ", lobe, NULL);
  return efflux_document_set_key (self, group, "kind", efflux_lobe_kind_name (kind), 0, error);
}

gboolean
efflux_document_set_lobe_cube (EffluxDocument  *self,
                               const char      *lobe,
                               const char      *cube_id,
                               GError         **error)
{
  g_autofree char *group = NULL;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  if (no_lobe (self, lobe, error))
    return FALSE;
  group = g_strconcat ("Lobe ", lobe, NULL);
  return efflux_document_set_key (self, group, "cube", cube_id, 0, error);
}

char *
efflux_document_add_lobe (EffluxDocument  *self,
                          EffluxLobeKind   kind,
                          const char      *cube_id,
                          const double    *ra_deg,
                          const double    *dec_deg,
                          gsize            n_vertices,
                          double           v1_kms,
                          double           v2_kms,
                          GError         **error)
{
  const char *kind_name;
  g_autofree char *name = NULL;
  g_autofree char *group = NULL;
  g_autofree char *polygon = NULL;
  g_autofree char *a = NULL, *b = NULL, *velocity = NULL;
  GPtrArray *changes;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), NULL);
  kind_name = efflux_lobe_kind_name (kind);
  for (guint i = 1; name == NULL; i++)
    {
      g_autofree char *candidate = g_strdup_printf ("%s-%u", kind_name, i);
      g_autofree char *candidate_group = g_strconcat ("Lobe ", candidate, NULL);

      if (efflux_dossier_find_lobe (self->dossier, candidate) == NULL
          && !g_key_file_has_group (self->dossier->keyfile, candidate_group))
        name = g_steal_pointer (&candidate);
    }
  group = g_strconcat ("Lobe ", name, NULL);
  polygon = format_vertices (ra_deg, dec_deg, n_vertices);
  a = format_number (MIN (v1_kms, v2_kms));
  b = format_number (MAX (v1_kms, v2_kms));
  velocity = g_strconcat (a, ";", b, NULL);
  changes = g_ptr_array_new_with_free_func (change_free);
  add_change (changes, group, "kind", kind_name);
  add_change (changes, group, "cube", cube_id);
  add_change (changes, group, "polygon", polygon);
  add_change (changes, group, "velocity-kms", velocity);
  if (!push_changes (self, changes, 0, error))
    return NULL;
  return g_steal_pointer (&name);
}

gboolean
efflux_document_remove_lobe (EffluxDocument  *self,
                             const char      *lobe,
                             GError         **error)
{
  g_autofree char *group = NULL;
  g_auto(GStrv) keys = NULL;
  GPtrArray *changes;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  if (no_lobe (self, lobe, error))
    return FALSE;
  group = g_strconcat ("Lobe ", lobe, NULL);
  keys = g_key_file_get_keys (self->dossier->keyfile, group, NULL, NULL);
  changes = g_ptr_array_new_with_free_func (change_free);
  for (guint i = 0; keys != NULL && keys[i] != NULL; i++)
    add_change (changes, group, keys[i], NULL);
  return push_changes (self, changes, 0, error);
}

gboolean
efflux_document_set_source_position (EffluxDocument  *self,
                                     double           ra_deg,
                                     double           dec_deg,
                                     guint            merge_id,
                                     GError         **error)
{
  g_autofree char *ra = format_number (ra_deg);
  g_autofree char *dec = format_number (dec_deg);
  GPtrArray *changes;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  changes = g_ptr_array_new_with_free_func (change_free);
  add_change (changes, "Source", "ra-deg", ra);
  add_change (changes, "Source", "dec-deg", dec);
  return push_changes (self, changes, merge_id, error);
}

gboolean
efflux_document_set_cut (EffluxDocument  *self,
                         const char      *name,
                         const char      *cube_id,
                         const double    *ra_deg,
                         const double    *dec_deg,
                         gsize            n_vertices,
                         double           width_arcsec,
                         guint            merge_id,
                         GError         **error)
{
  g_autofree char *group = NULL;
  GPtrArray *changes;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  g_return_val_if_fail (name != NULL, FALSE);
  group = g_strconcat ("Cut ", name, NULL);
  changes = g_ptr_array_new_with_free_func (change_free);
  if (n_vertices == 0)
    {
      g_auto(GStrv) keys = g_key_file_get_keys (self->dossier->keyfile, group, NULL, NULL);

      for (guint i = 0; keys != NULL && keys[i] != NULL; i++)
        add_change (changes, group, keys[i], NULL);
    }
  else
    {
      g_autofree char *path = format_vertices (ra_deg, dec_deg, n_vertices);
      g_autofree char *width = format_number (width_arcsec);

      add_change (changes, group, "cube", cube_id);
      add_change (changes, group, "path", path);
      add_change (changes, group, "width-arcsec", width);
    }
  if (changes->len == 0)
    {
      g_ptr_array_unref (changes);
      return TRUE;
    }
  return push_changes (self, changes, merge_id, error);
}

/* ---- measurement ---- */

static EffluxDossier *
snapshot_dossier (EffluxDocument *self)
{
  gsize length = 0;
  g_autofree char *data = efflux_dossier_to_data (self->dossier, &length);
  EffluxDossier *copy;

  copy = efflux_dossier_new_from_data (data, (gssize) length, self->dossier->path,
                                       self->dossier->dir, NULL);
  if (copy != NULL)
    for (guint i = 0; i < copy->cubes->len; i++)
      {
        EffluxDossierCube *nc = g_ptr_array_index (copy->cubes, i);
        EffluxDossierCube *oc = efflux_dossier_find_cube (self->dossier, nc->id);

        if (nc->line == NULL && oc != NULL && oc->line != NULL)
          efflux_dossier_cube_set_line (nc, oc->line);
      }
  return copy;
}

typedef struct
{
  EffluxDossier       *dossier;   /* the snapshot, owned */
  GHashTable          *cubes;     /* borrowed (load: owned result) */
  EffluxMeasurePrep   *prep;      /* borrowed, exclusive while the job runs */
  gboolean             full;
  gboolean             quick;     /* finish without the broken power-law fit (a drag) */
  char               **lobes;
  /* results */
  EffluxMeasurePrep   *new_prep;
  EffluxMeasureResult *result;
} Job;

static void
job_free (gpointer data)
{
  Job *job = data;

  g_clear_pointer (&job->dossier, efflux_dossier_free);
  g_strfreev (job->lobes);
  g_clear_pointer (&job->new_prep, efflux_measure_prep_free);
  g_clear_pointer (&job->result, efflux_measure_result_free);
  g_free (job);
}

static void
measure_worker (GTask        *task,
                gpointer      source_object,
                gpointer      task_data,
                GCancellable *cancellable)
{
  Job *job = task_data;
  g_autoptr(GError) error = NULL;
  EffluxMeasurePrep *prep = job->prep;

  if (job->full || prep == NULL)
    {
      job->new_prep = efflux_measure_prepare (job->dossier, job->cubes, cancellable, &error);
      if (job->new_prep == NULL)
        {
          g_task_return_error (task, g_steal_pointer (&error));
          return;
        }
      prep = job->new_prep;
    }
  else
    for (guint i = 0; job->lobes[i] != NULL; i++)
      {
        if (efflux_dossier_find_lobe (job->dossier, job->lobes[i]) == NULL)
          continue;
        if (!efflux_measure_prep_refresh_lobe (prep, job->dossier, job->lobes[i], cancellable,
                                               &error))
          {
            g_task_return_error (task, g_steal_pointer (&error));
            return;
          }
      }
  if (g_task_return_error_if_cancelled (task))
    return;
  job->result = efflux_measure_finish_flags (prep, job->dossier,
                                             job->quick ? EFFLUX_MEASURE_FINISH_NO_BROKEN_FIT
                                                        : EFFLUX_MEASURE_FINISH_ALL, &error);
  if (job->result == NULL)
    {
      g_task_return_error (task, g_steal_pointer (&error));
      return;
    }
  g_task_return_boolean (task, TRUE);
}

static void
set_measure_error (EffluxDocument *self,
                   const char     *message)
{
  g_free (self->measure_error);
  self->measure_error = g_strdup (message);
}

/* A drag rested (no edit for SETTLE_MS after a quick result): finish completely. */
#define SETTLE_MS 120

static gboolean
settle_cb (gpointer user_data)
{
  EffluxDocument *self = user_data;

  self->settle_id = 0;
  self->pending.finish = TRUE;
  self->pending.complete = TRUE;
  schedule_measure (self);
  return G_SOURCE_REMOVE;
}

static void
measure_done (GObject      *object,
              GAsyncResult *res,
              gpointer      user_data)
{
  EffluxDocument *self = EFFLUX_DOCUMENT (object);
  Job *job = g_task_get_task_data (G_TASK (res));
  g_autoptr(GError) error = NULL;
  gboolean ok = g_task_propagate_boolean (G_TASK (res), &error);

  self->job_running = FALSE;
  g_clear_object (&self->job_cancellable);
  if (job->new_prep != NULL)
    {
      g_clear_pointer (&self->prep, efflux_measure_prep_free);
      self->prep = g_steal_pointer (&job->new_prep);
      self->running.full = FALSE;
    }
  if (!ok)
    {
      if (g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED)
          || g_error_matches (error, EFFLUX_ERROR, EFFLUX_ERROR_CANCELLED))
        /* do it again with what came since */
        work_merge (&self->pending, &self->running);
      else
        {
          work_clear (&self->running);
          set_measure_error (self, error->message);
          g_signal_emit (self, signals[SIGNAL_MEASURED], 0);
        }
    }
  else
    {
      work_clear (&self->running);
      g_clear_pointer (&self->result, efflux_measure_result_free);
      self->result = g_steal_pointer (&job->result);
      set_measure_error (self, NULL);
      g_signal_emit (self, signals[SIGNAL_MEASURED], 0);
      if (job->quick && work_empty (&self->pending) && self->settle_id == 0)
        self->settle_id = g_timeout_add (SETTLE_MS, settle_cb, self);
    }
  if (!work_empty (&self->pending))
    schedule_measure (self);
}

static void
start_job (EffluxDocument *self)
{
  g_autoptr(GTask) task = NULL;
  Job *job;
  GHashTableIter iter;
  gpointer key;
  GPtrArray *names;

  job = g_new0 (Job, 1);
  job->dossier = snapshot_dossier (self);
  if (job->dossier == NULL)
    {
      job_free (job);
      return;
    }
  work_merge (&self->running, &self->pending);
  job->cubes = self->cubes;
  job->prep = self->prep;
  job->full = self->running.full || self->prep == NULL;
  job->quick = !self->running.complete;
  names = g_ptr_array_new ();
  g_hash_table_iter_init (&iter, self->running.lobes);
  while (g_hash_table_iter_next (&iter, &key, NULL))
    g_ptr_array_add (names, g_strdup (key));
  g_ptr_array_add (names, NULL);
  job->lobes = (char **) g_ptr_array_free (names, FALSE);

  self->job_running = TRUE;
  self->job_cancellable = g_cancellable_new ();
  task = g_task_new (self, self->job_cancellable, measure_done, NULL);
  g_task_set_source_tag (task, start_job);
  g_task_set_task_data (task, job, job_free);
  g_task_run_in_thread (task, measure_worker);
}

static gboolean
measure_idle (gpointer user_data)
{
  EffluxDocument *self = user_data;

  self->idle_id = 0;
  if (self->cubes == NULL || self->loading || work_empty (&self->pending))
    return G_SOURCE_REMOVE;
  if (self->job_running)
    {
      /* cancel-and-replace: a preparation made obsolete stops now; a mask rebuild or a finish is
       * short and runs to its end (so that a long drag still shows numbers), and the job after it
       * takes everything that came since */
      if (self->running.full && self->job_cancellable != NULL)
        g_cancellable_cancel (self->job_cancellable);
      return G_SOURCE_REMOVE;
    }
  start_job (self);
  return G_SOURCE_REMOVE;
}

/* Once per main-loop turn: the edits of one frame (motion events, the tick) come first and make
 * one job. Default priority, not an idle one below GDK's redraw: while frames run late, a lower
 * idle never ran and no measurement reached the ledger during a drag (bench-ui-drag). */
static void
schedule_measure (EffluxDocument *self)
{
  if (self->idle_id == 0 && self->cubes != NULL && !self->loading)
    self->idle_id = g_idle_add_full (G_PRIORITY_DEFAULT, measure_idle, self, NULL);
}

gboolean
efflux_document_is_measuring (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  return self->loading || self->job_running || self->idle_id != 0 || self->settle_id != 0;
}

const EffluxMeasureResult *
efflux_document_get_result (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), NULL);
  return self->result;
}

const char *
efflux_document_get_measure_error (EffluxDocument *self)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), NULL);
  return self->measure_error;
}

gboolean
efflux_document_set_cubes (EffluxDocument *self,
                           GHashTable     *cubes)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  g_return_val_if_fail (cubes != NULL, FALSE);
  if (self->loading || self->cubes != NULL || self->job_running)
    return FALSE;
  self->cubes = cubes;
  self->pending.full = TRUE;
  self->pending.complete = TRUE;
  schedule_measure (self);
  return TRUE;
}

const EffluxCube *
efflux_document_get_cube (EffluxDocument *self,
                          const char     *id)
{
  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), NULL);
  if (self->cubes == NULL || id == NULL)
    return NULL;
  return g_hash_table_lookup (self->cubes, id);
}

/* The cubes the lobes need (as efflux_measure_load_cubes), through the cube store: a cube the
 * window has read already is not read again. */
static GHashTable *
load_cubes_shared (const EffluxDossier  *d,
                   GCancellable         *cancellable,
                   GError              **error)
{
  g_autoptr(GHashTable) cubes = g_hash_table_new_full (g_str_hash, g_str_equal, g_free,
                                                       (GDestroyNotify) efflux_cube_store_release);
  EffluxCubeLoadOptions options = { 0 };

  for (guint i = 0; i < d->cubes->len; i++)
    {
      const EffluxDossierCube *dc = g_ptr_array_index (d->cubes, i);
      gboolean needed = dc->role == EFFLUX_CUBE_ROLE_ISOTOPOLOGUE
                        && d->opacity == EFFLUX_OPACITY_FROM_ISOTOPOLOGUE;
      EffluxCube *cube;

      for (guint j = 0; j < d->lobes->len && !needed; j++)
        if (g_str_equal (((EffluxDossierLobe *) g_ptr_array_index (d->lobes, j))->cube_id, dc->id))
          needed = TRUE;
      if (!needed)
        continue;
      options.no_noise = isfinite (dc->rms_k);
      cube = efflux_cube_store_load (dc->abs_path, &options, cancellable, NULL, NULL, error);
      if (cube == NULL)
        {
          g_prefix_error (error, _("%s: [Cube %s] path: "), d->path, dc->id);
          return NULL;
        }
      g_hash_table_insert (cubes, g_strdup (dc->id), cube);
    }
  return g_steal_pointer (&cubes);
}

static void
load_worker (GTask        *task,
             gpointer      source_object,
             gpointer      task_data,
             GCancellable *cancellable)
{
  Job *job = task_data;
  g_autoptr(GError) error = NULL;

  job->cubes = load_cubes_shared (job->dossier, cancellable, &error);
  if (job->cubes == NULL)
    {
      g_task_return_error (task, g_steal_pointer (&error));
      return;
    }
  job->new_prep = efflux_measure_prepare (job->dossier, job->cubes, cancellable, &error);
  if (job->new_prep == NULL)
    {
      g_task_return_error (task, g_steal_pointer (&error));
      return;
    }
  job->result = efflux_measure_finish (job->new_prep, job->dossier, &error);
  if (job->result == NULL)
    {
      g_task_return_error (task, g_steal_pointer (&error));
      return;
    }
  g_task_return_boolean (task, TRUE);
}

static void
load_job_free (gpointer data)
{
  Job *job = data;

  /* free the preparation before the cubes it refers to */
  g_clear_pointer (&job->new_prep, efflux_measure_prep_free);
  g_clear_pointer (&job->cubes, g_hash_table_unref);
  job_free (job);
}

void
efflux_document_load_cubes_async (EffluxDocument      *self,
                                  GCancellable        *cancellable,
                                  GAsyncReadyCallback  callback,
                                  gpointer             user_data)
{
  g_autoptr(GTask) task = NULL;
  Job *job;

  g_return_if_fail (EFFLUX_IS_DOCUMENT (self));
  task = g_task_new (self, cancellable, callback, user_data);
  g_task_set_source_tag (task, efflux_document_load_cubes_async);
  if (self->loading || self->cubes != NULL || self->job_running)
    {
      g_task_return_new_error (task, EFFLUX_ERROR, EFFLUX_ERROR_INPUT,
                               "%s: the cubes are already loaded or loading", self->path);
      return;
    }
  job = g_new0 (Job, 1);
  job->dossier = snapshot_dossier (self);
  if (job->dossier == NULL)
    {
      g_free (job);
      g_task_return_new_error (task, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, "%s: cannot read the dossier again",
                               self->path);
      return;
    }
  self->loading = TRUE;
  self->edits_since_load = 0;
  g_task_set_task_data (task, job, load_job_free);
  g_task_run_in_thread (task, load_worker);
}

gboolean
efflux_document_load_cubes_finish (EffluxDocument  *self,
                                   GAsyncResult    *result,
                                   GError         **error)
{
  Job *job;
  gboolean ok;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (self), FALSE);
  g_return_val_if_fail (g_task_is_valid (result, self), FALSE);
  ok = g_task_propagate_boolean (G_TASK (result), error);
  job = g_task_get_task_data (G_TASK (result));
  if (job == NULL)
    return FALSE;  /* refused before starting */
  self->loading = FALSE;
  if (!ok)
    return FALSE;
  self->cubes = g_steal_pointer (&job->cubes);
  self->prep = g_steal_pointer (&job->new_prep);
  g_clear_pointer (&self->result, efflux_measure_result_free);
  self->result = g_steal_pointer (&job->result);
  if (self->edits_since_load > 0)
    {
      /* edits made while the cubes were read: measure again from the start */
      self->pending.full = TRUE;
      self->pending.complete = TRUE;
      schedule_measure (self);
    }
  else
    work_clear (&self->pending);
  g_signal_emit (self, signals[SIGNAL_MEASURED], 0);
  return TRUE;
}

/* ---- object ---- */

static void
efflux_document_get_property (GObject    *object,
                              guint       prop_id,
                              GValue     *value,
                              GParamSpec *pspec)
{
  EffluxDocument *self = EFFLUX_DOCUMENT (object);

  switch (prop_id)
    {
    case PROP_CAN_UNDO:
      g_value_set_boolean (value, efflux_document_can_undo (self));
      break;
    case PROP_CAN_REDO:
      g_value_set_boolean (value, efflux_document_can_redo (self));
      break;
    case PROP_MODIFIED:
      g_value_set_boolean (value, efflux_document_get_modified (self));
      break;
    case PROP_PATH:
      g_value_set_string (value, self->path);
      break;
    default:
      G_OBJECT_WARN_INVALID_PROPERTY_ID (object, prop_id, pspec);
    }
}

static void
efflux_document_dispose (GObject *object)
{
  EffluxDocument *self = EFFLUX_DOCUMENT (object);

  g_clear_handle_id (&self->idle_id, g_source_remove);
  g_clear_handle_id (&self->settle_id, g_source_remove);
  G_OBJECT_CLASS (efflux_document_parent_class)->dispose (object);
}

static void
efflux_document_finalize (GObject *object)
{
  EffluxDocument *self = EFFLUX_DOCUMENT (object);

  /* a running job holds a reference: nothing runs here */
  g_queue_clear_full (&self->undo, command_free);
  g_queue_clear_full (&self->redo, command_free);
  g_clear_pointer (&self->result, efflux_measure_result_free);
  g_clear_pointer (&self->prep, efflux_measure_prep_free);
  g_clear_pointer (&self->cubes, g_hash_table_unref);
  g_clear_pointer (&self->dossier, efflux_dossier_free);
  g_clear_pointer (&self->pending.lobes, g_hash_table_unref);
  g_clear_pointer (&self->running.lobes, g_hash_table_unref);
  g_clear_object (&self->job_cancellable);
  g_free (self->measure_error);
  g_free (self->path);
  G_OBJECT_CLASS (efflux_document_parent_class)->finalize (object);
}

static void
efflux_document_class_init (EffluxDocumentClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);

  object_class->get_property = efflux_document_get_property;
  object_class->dispose = efflux_document_dispose;
  object_class->finalize = efflux_document_finalize;

  properties[PROP_CAN_UNDO] =
    g_param_spec_boolean ("can-undo", NULL, NULL, FALSE,
                          G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_CAN_REDO] =
    g_param_spec_boolean ("can-redo", NULL, NULL, FALSE,
                          G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_MODIFIED] =
    g_param_spec_boolean ("modified", NULL, NULL, FALSE,
                          G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  properties[PROP_PATH] =
    g_param_spec_string ("path", NULL, NULL, NULL,
                         G_PARAM_READABLE | G_PARAM_EXPLICIT_NOTIFY | G_PARAM_STATIC_STRINGS);
  g_object_class_install_properties (object_class, N_PROPS, properties);

  signals[SIGNAL_CHANGED] =
    g_signal_new ("changed", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                  G_TYPE_NONE, 1, G_TYPE_STRING);
  signals[SIGNAL_MEASURED] =
    g_signal_new ("measured", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL, NULL,
                  G_TYPE_NONE, 0);
}

static void
efflux_document_init (EffluxDocument *self)
{
  g_queue_init (&self->undo);
  g_queue_init (&self->redo);
  work_init (&self->pending);
  work_init (&self->running);
}

EffluxDocument *
efflux_document_new_for_dossier (EffluxDossier *dossier)
{
  EffluxDocument *self;

  g_return_val_if_fail (dossier != NULL, NULL);
  self = g_object_new (EFFLUX_TYPE_DOCUMENT, NULL);
  self->dossier = dossier;
  self->path = g_strdup (dossier->path);
  return self;
}

EffluxDocument *
efflux_document_load (const char  *path,
                      GError     **error)
{
  EffluxDossier *dossier = efflux_dossier_load (path, error);

  if (dossier == NULL)
    return NULL;
  return efflux_document_new_for_dossier (dossier);
}
