/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Autosave to the recovery file and the offer to recover (efflux-autosave.h). */
#define G_LOG_DOMAIN "efflux-autosave"

#include "config.h"

#include <glib/gi18n.h>

#include "efflux-autosave.h"
#include "efflux-recovery.h"

typedef enum
{
  OP_NONE,
  OP_WRITE,
  OP_REMOVE,
} Op;

/* One write or removal, done by the worker. */
typedef struct
{
  Op       op;
  char    *dossier_path;
  char    *data;
  guint64  seq;
} Job;

struct _EffluxAutosave
{
  GObject         parent_instance;

  EffluxDocument *document;
  EffluxBanner   *banner;          /* weak */
  GtkWidget      *dialog;
  guint           timer;
  gboolean        busy;            /* a job runs */
  Op              want;            /* the job to start when the running one ends */
  gboolean        held;
  gboolean        discarded;
  gboolean        closed;
  char           *written_path;    /* the dossier whose recovery file we wrote or found */
  char           *held_message;    /* the banner text while held */
  char           *last_error;
  guint           n_writes;
  gint64          main_us;

  /* shared with the worker */
  GMutex          lock;
  guint64         seq_next;
  guint64         seq_done;
};

G_DEFINE_FINAL_TYPE (EffluxAutosave, efflux_autosave, G_TYPE_OBJECT)

static void kick (EffluxAutosave *self);
static void dialog_response (GtkDialog *dialog, int response, EffluxAutosave *self);
static void banner_action (EffluxAutosave *self);

/* EFFLUX_AUTOSAVE=0 turns the autosave off (test suites that edit shared sample data). */
static gboolean
enabled (void)
{
  return g_strcmp0 (g_getenv ("EFFLUX_AUTOSAVE"), "0") != 0;
}

static void
job_free (gpointer data)
{
  Job *job = data;

  g_free (job->dossier_path);
  g_free (job->data);
  g_free (job);
}

/* Do a job unless a newer one was done already (under the lock: one at a time). */
static gboolean
run_job (EffluxAutosave *self,
         Job            *job,
         GError        **error)
{
  gboolean ok = TRUE;

  g_mutex_lock (&self->lock);
  if (job->seq > self->seq_done)
    {
      if (job->op == OP_WRITE)
        ok = efflux_recovery_write_data (job->dossier_path, job->data, error);
      else
        ok = efflux_recovery_remove (job->dossier_path, error);
      self->seq_done = job->seq;
    }
  g_mutex_unlock (&self->lock);
  return ok;
}

static void
job_worker (GTask        *task,
            gpointer      source_object,
            gpointer      task_data,
            GCancellable *cancellable)
{
  g_autoptr(GError) error = NULL;

  if (run_job (source_object, task_data, &error))
    g_task_return_boolean (task, TRUE);
  else
    g_task_return_error (task, g_steal_pointer (&error));
}

static void
show (EffluxAutosave   *self,
      EffluxBannerKind  kind,
      const char       *message,
      const char       *action)
{
  if (self->banner != NULL)
    efflux_banner_show (self->banner, kind, message, action);
}

static void
job_done (GObject      *object,
          GAsyncResult *result,
          gpointer      user_data)
{
  EffluxAutosave *self = EFFLUX_AUTOSAVE (object);
  Job *job = g_task_get_task_data (G_TASK (result));
  g_autoptr(GError) error = NULL;

  self->busy = FALSE;
  if (!g_task_propagate_boolean (G_TASK (result), &error))
    {
      /* say it once, not at every write */
      if (g_strcmp0 (self->last_error, error->message) != 0)
        {
          g_autofree char *text = g_strdup_printf (_("Unsaved edits cannot be kept: %s"), error->message);

          g_free (self->last_error);
          self->last_error = g_strdup (error->message);
          show (self, EFFLUX_BANNER_ERROR, text, NULL);
        }
    }
  else
    {
      g_clear_pointer (&self->last_error, g_free);
      if (job->op == OP_WRITE)
        self->n_writes++;
    }
  kick (self);
}

static Job *
make_job (EffluxAutosave *self,
          Op              op)
{
  Job *job = g_new0 (Job, 1);

  job->op = op;
  job->seq = ++self->seq_next;
  if (op == OP_WRITE)
    {
      EffluxDossier *d = (EffluxDossier *) efflux_document_get_dossier (self->document);

      job->dossier_path = g_strdup (efflux_document_get_path (self->document));
      job->data = efflux_dossier_to_data (d, NULL);
      g_free (self->written_path);
      self->written_path = g_strdup (job->dossier_path);
    }
  else
    job->dossier_path = g_strdup (self->written_path);
  return job;
}

/* Start the wanted job when none runs. */
static void
kick (EffluxAutosave *self)
{
  g_autoptr(GTask) task = NULL;
  gint64 t0 = g_get_monotonic_time ();
  Op op = self->want;

  if (self->busy || op == OP_NONE)
    return;
  self->want = OP_NONE;
  if (op == OP_WRITE && (self->held || self->discarded || efflux_document_get_path (self->document) == NULL
                         || !efflux_document_get_modified (self->document)))
    return;
  if (op == OP_REMOVE && (self->held || self->written_path == NULL))
    return;
  self->busy = TRUE;
  task = g_task_new (self, NULL, job_done, NULL);
  g_task_set_source_tag (task, kick);
  g_task_set_task_data (task, make_job (self, op), job_free);
  g_task_run_in_thread (task, job_worker);
  if (op == OP_WRITE)
    self->main_us = g_get_monotonic_time () - t0;
}

static gboolean
timer_cb (gpointer user_data)
{
  EffluxAutosave *self = user_data;

  self->timer = 0;
  self->want = OP_WRITE;
  kick (self);
  return G_SOURCE_REMOVE;
}

static void
document_changed (EffluxAutosave *self)
{
  if (!enabled () || self->closed || self->held || self->discarded || !efflux_document_get_modified (self->document)
      || efflux_document_get_path (self->document) == NULL)
    return;
  if (self->timer == 0)
    self->timer = g_timeout_add (EFFLUX_AUTOSAVE_DELAY_MS, timer_cb, self);
}

static void
modified_changed (EffluxAutosave *self)
{
  if (self->closed)
    return;
  if (efflux_document_get_modified (self->document))
    {
      document_changed (self);
      return;
    }
  /* saved, or undone back to the saved state: nothing to keep */
  g_clear_handle_id (&self->timer, g_source_remove);
  if (self->held || !enabled ())
    return;
  self->want = OP_REMOVE;
  kick (self);
}

static void
efflux_autosave_dispose (GObject *object)
{
  EffluxAutosave *self = EFFLUX_AUTOSAVE (object);

  efflux_autosave_close (self);
  g_clear_object (&self->document);
  G_OBJECT_CLASS (efflux_autosave_parent_class)->dispose (object);
}

static void
efflux_autosave_finalize (GObject *object)
{
  EffluxAutosave *self = EFFLUX_AUTOSAVE (object);

  g_free (self->written_path);
  g_free (self->held_message);
  g_free (self->last_error);
  g_mutex_clear (&self->lock);
  G_OBJECT_CLASS (efflux_autosave_parent_class)->finalize (object);
}

static void
efflux_autosave_class_init (EffluxAutosaveClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);

  object_class->dispose = efflux_autosave_dispose;
  object_class->finalize = efflux_autosave_finalize;
}

static void
efflux_autosave_init (EffluxAutosave *self)
{
  g_mutex_init (&self->lock);
}

EffluxAutosave *
efflux_autosave_new (EffluxDocument *document,
                     EffluxBanner   *banner)
{
  EffluxAutosave *self;

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (document), NULL);
  g_return_val_if_fail (banner == NULL || EFFLUX_IS_BANNER (banner), NULL);

  self = g_object_new (EFFLUX_TYPE_AUTOSAVE, NULL);
  self->document = g_object_ref (document);
  if (banner != NULL)
    {
      g_set_weak_pointer (&self->banner, banner);
      g_signal_connect_object (banner, "action", G_CALLBACK (banner_action), self, G_CONNECT_SWAPPED);
    }
  g_signal_connect_swapped (document, "changed", G_CALLBACK (document_changed), self);
  g_signal_connect_swapped (document, "notify::modified", G_CALLBACK (modified_changed), self);
  /* an edit made before we watched (e.g. a recovery applied at once) */
  document_changed (self);
  return self;
}

EffluxDocument *
efflux_autosave_get_document (EffluxAutosave *self)
{
  g_return_val_if_fail (EFFLUX_IS_AUTOSAVE (self), NULL);
  return self->document;
}

void
efflux_autosave_close (EffluxAutosave *self)
{
  gboolean pending;

  g_return_if_fail (EFFLUX_IS_AUTOSAVE (self));
  if (self->closed)
    return;
  self->closed = TRUE;
  pending = self->timer != 0 || self->want == OP_WRITE;
  g_clear_handle_id (&self->timer, g_source_remove);
  self->want = OP_NONE;
  if (self->dialog != NULL)
    {
      GtkWidget *dialog = g_steal_pointer (&self->dialog);

      /* no answer: the kept file stays for the next time */
      g_signal_handlers_disconnect_by_func (dialog, dialog_response, self);
      gtk_window_destroy (GTK_WINDOW (dialog));
      g_object_unref (self);
    }
  if (self->banner != NULL)
    g_signal_handlers_disconnect_by_func (self->banner, banner_action, self);
  g_clear_weak_pointer (&self->banner);
  if (self->document == NULL)
    return;
  g_signal_handlers_disconnect_by_data (self->document, self);
  if (self->held || self->discarded || !enabled ())
    return;
  /* the file's final state, now (the program may be exiting): a job still queued is older and
   * will be skipped, one running is waited for */
  if (efflux_document_get_modified (self->document) && efflux_document_get_path (self->document) != NULL)
    {
      if (pending || self->busy)
        {
          g_autoptr(GError) error = NULL;
          Job *job = make_job (self, OP_WRITE);

          if (!run_job (self, job, &error))
            g_warning ("%s", error->message);
          else
            self->n_writes++;
          job_free (job);
        }
    }
  else if (self->written_path != NULL)
    {
      g_autoptr(GError) error = NULL;
      Job *job = make_job (self, OP_REMOVE);

      if (!run_job (self, job, &error))
        g_warning ("%s", error->message);
      job_free (job);
    }
}

void
efflux_autosave_discard (EffluxAutosave *self)
{
  g_autoptr(GError) error = NULL;
  Job *job;

  g_return_if_fail (EFFLUX_IS_AUTOSAVE (self));
  self->discarded = TRUE;
  g_clear_handle_id (&self->timer, g_source_remove);
  self->want = OP_NONE;
  if (self->held || self->written_path == NULL)
    return;
  /* now, not later: the window is closing */
  job = make_job (self, OP_REMOVE);
  if (!run_job (self, job, &error))
    g_warning ("%s", error->message);
  job_free (job);
}

gboolean
efflux_autosave_get_held (EffluxAutosave *self)
{
  g_return_val_if_fail (EFFLUX_IS_AUTOSAVE (self), FALSE);
  return self->held;
}

guint
efflux_autosave_get_n_writes (EffluxAutosave *self)
{
  g_return_val_if_fail (EFFLUX_IS_AUTOSAVE (self), 0);
  return self->n_writes;
}

gboolean
efflux_autosave_is_pending (EffluxAutosave *self)
{
  g_return_val_if_fail (EFFLUX_IS_AUTOSAVE (self), FALSE);
  return self->timer != 0 || self->busy || self->want != OP_NONE;
}

gint64
efflux_autosave_get_main_us (EffluxAutosave *self)
{
  g_return_val_if_fail (EFFLUX_IS_AUTOSAVE (self), 0);
  return self->main_us;
}

GtkWidget *
efflux_autosave_get_dialog (EffluxAutosave *self)
{
  g_return_val_if_fail (EFFLUX_IS_AUTOSAVE (self), NULL);
  return self->dialog;
}

/* ---- recovering ---- */

/* Let go of the kept file: the autosave writes again from now on. */
static void
release (EffluxAutosave *self)
{
  self->held = FALSE;
  if (self->banner != NULL && self->held_message != NULL
      && g_strcmp0 (efflux_banner_get_message (self->banner), self->held_message) == 0)
    efflux_banner_hide (self->banner);
  g_clear_pointer (&self->held_message, g_free);
  document_changed (self);
}

int
efflux_autosave_recover (EffluxAutosave  *self,
                         GError         **error)
{
  const char *path;
  const EffluxDossier *now;
  g_autoptr(EffluxDossier) kept = NULL;
  g_autoptr(GPtrArray) groups = g_ptr_array_new_with_free_func (g_free);
  g_autoptr(GPtrArray) keys = g_ptr_array_new_with_free_func (g_free);
  g_autoptr(GPtrArray) values = g_ptr_array_new_with_free_func (g_free);
  g_auto(GStrv) kept_groups = NULL;
  g_auto(GStrv) now_groups = NULL;

  g_return_val_if_fail (EFFLUX_IS_AUTOSAVE (self), -1);
  path = efflux_document_get_path (self->document);
  g_return_val_if_fail (path != NULL, -1);

  kept = efflux_recovery_load (path, error);
  if (kept == NULL)
    return -1;
  now = efflux_document_get_dossier (self->document);
  /* every key whose value differs, and every key the kept edits removed */
  kept_groups = g_key_file_get_groups (kept->keyfile, NULL);
  for (gsize g = 0; kept_groups[g] != NULL; g++)
    {
      g_auto(GStrv) names = g_key_file_get_keys (kept->keyfile, kept_groups[g], NULL, NULL);

      for (gsize k = 0; names != NULL && names[k] != NULL; k++)
        {
          g_autofree char *want = g_key_file_get_value (kept->keyfile, kept_groups[g], names[k], NULL);
          g_autofree char *have = g_key_file_get_value (now->keyfile, kept_groups[g], names[k], NULL);

          if (g_strcmp0 (want, have) == 0)
            continue;
          g_ptr_array_add (groups, g_strdup (kept_groups[g]));
          g_ptr_array_add (keys, g_strdup (names[k]));
          g_ptr_array_add (values, g_steal_pointer (&want));
        }
    }
  now_groups = g_key_file_get_groups (now->keyfile, NULL);
  for (gsize g = 0; now_groups[g] != NULL; g++)
    {
      g_auto(GStrv) names = g_key_file_get_keys (now->keyfile, now_groups[g], NULL, NULL);

      for (gsize k = 0; names != NULL && names[k] != NULL; k++)
        if (!g_key_file_has_key (kept->keyfile, now_groups[g], names[k], NULL))
          {
            g_ptr_array_add (groups, g_strdup (now_groups[g]));
            g_ptr_array_add (keys, g_strdup (names[k]));
            g_ptr_array_add (values, NULL);
          }
    }
  if (groups->len == 0)
    {
      /* nothing beyond the dossier on disk */
      self->held = FALSE;
      if (!efflux_recovery_remove (path, error))
        return -1;
      release (self);
      return 0;
    }
  /* from here on the recovered state is the one to keep */
  self->held = FALSE;
  if (!efflux_document_set_keys (self->document, groups->len,
                                 (const char * const *) groups->pdata,
                                 (const char * const *) keys->pdata,
                                 (const char * const *) values->pdata, 0, error))
    {
      self->held = TRUE;
      return -1;
    }
  release (self);
  return (int) groups->len;
}

static char *
autosave_time (const char *path)
{
  gint64 mtime_us = 0;
  g_autoptr(GDateTime) when = NULL;

  if (!efflux_recovery_exists (path, &mtime_us))
    return g_strdup ("?");
  when = g_date_time_new_from_unix_local (mtime_us / G_USEC_PER_SEC);
  return g_date_time_format (when, "%Y-%m-%d %H:%M:%S");
}

static void
banner_action (EffluxAutosave *self)
{
  GtkWidget *parent;

  if (!self->held || self->banner == NULL || self->held_message == NULL
      || g_strcmp0 (efflux_banner_get_message (self->banner), self->held_message) != 0)
    return;
  parent = gtk_widget_get_ancestor (GTK_WIDGET (self->banner), GTK_TYPE_WINDOW);
  efflux_autosave_offer_recovery (self, parent ? GTK_WINDOW (parent) : NULL);
}

static void
dialog_response (GtkDialog      *dialog,
                 int             response,
                 EffluxAutosave *self)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *base = g_path_get_basename (efflux_document_get_path (self->document));
  g_autofree char *when = autosave_time (efflux_document_get_path (self->document));

  self->dialog = NULL;
  gtk_window_destroy (GTK_WINDOW (dialog));
  if (response == EFFLUX_AUTOSAVE_RECOVER)
    {
      int n = efflux_autosave_recover (self, &error);

      if (n < 0)
        {
          g_autofree char *text = g_strdup_printf (_("%s (the recovery file is kept)"), error->message);

          show (self, EFFLUX_BANNER_ERROR, text, NULL);
        }
      else if (n == 0)
        {
          g_autofree char *text = g_strdup_printf (_("%s: the recovery file held no edits beyond the dossier; it is removed."),
                                                   base);

          show (self, EFFLUX_BANNER_INFO, text, NULL);
        }
      else
        {
          g_autofree char *text = g_strdup_printf (_("%s: the edits autosaved at %s are recovered, not yet saved; Undo takes them back."),
                                                   base, when);

          show (self, EFFLUX_BANNER_INFO, text, NULL);
        }
    }
  else if (response == EFFLUX_AUTOSAVE_DISCARD)
    {
      if (!efflux_recovery_remove (efflux_document_get_path (self->document), &error))
        show (self, EFFLUX_BANNER_ERROR, error->message, NULL);
      else
        release (self);
    }
  else
    {
      /* Later, or the dialog closed: keep the file, write nothing over it */
      g_autofree char *recovery = efflux_recovery_path (efflux_document_get_path (self->document));

      g_free (self->held_message);
      self->held_message = g_strdup_printf (_("Unsaved edits of %s from %s are kept in %s; autosave waits until you recover or discard them."),
                                            base, when, recovery);
      show (self, EFFLUX_BANNER_WARNING, self->held_message, _("_Decide…"));
    }
  g_object_unref (self);
}

gboolean
efflux_autosave_offer_recovery (EffluxAutosave *self,
                                GtkWindow      *parent)
{
  const char *path;
  g_autofree char *base = NULL;
  g_autofree char *recovery = NULL;
  g_autofree char *recovery_base = NULL;
  g_autofree char *when = NULL;
  g_autoptr(GString) detail = g_string_new (NULL);
  GtkWidget *dialog;

  g_return_val_if_fail (EFFLUX_IS_AUTOSAVE (self), FALSE);
  path = efflux_document_get_path (self->document);
  if (!enabled () || self->closed || self->dialog != NULL || path == NULL
      || !efflux_recovery_exists (path, NULL))
    return FALSE;

  self->held = TRUE;
  g_clear_handle_id (&self->timer, g_source_remove);
  g_free (self->written_path);
  self->written_path = g_strdup (path);
  base = g_path_get_basename (path);
  recovery = efflux_recovery_path (path);
  recovery_base = g_path_get_basename (recovery);
  when = autosave_time (path);
  g_string_append_printf (detail,
                          _("Efflux kept edits to %s that were not saved: the last autosave, in %s, was at %s. "
                            "Recover them as an unsaved change you can undo, discard them, or decide later "
                            "(they are kept, and nothing is written over them)."),
                          path, recovery_base, when);
  if (efflux_recovery_older_than_dossier (path))
    g_string_append (detail, _(" The dossier was saved after that autosave: recovering replaces the newer "
                               "values with the kept ones (Undo brings them back)."));
  dialog = gtk_message_dialog_new (parent, GTK_DIALOG_MODAL | GTK_DIALOG_DESTROY_WITH_PARENT,
                                   GTK_MESSAGE_QUESTION, GTK_BUTTONS_NONE,
                                   _("Recover the unsaved edits of “%s”?"), base);
  gtk_message_dialog_format_secondary_text (GTK_MESSAGE_DIALOG (dialog), "%s", detail->str);
  gtk_dialog_add_buttons (GTK_DIALOG (dialog),
                          _("_Later"), EFFLUX_AUTOSAVE_LATER,
                          _("_Discard"), EFFLUX_AUTOSAVE_DISCARD,
                          _("_Recover"), EFFLUX_AUTOSAVE_RECOVER,
                          NULL);
  gtk_dialog_set_default_response (GTK_DIALOG (dialog), EFFLUX_AUTOSAVE_RECOVER);
  g_signal_connect (dialog, "response", G_CALLBACK (dialog_response), g_object_ref (self));
  self->dialog = dialog;
  gtk_window_present (GTK_WINDOW (dialog));
  return TRUE;
}

char *
efflux_autosave_find_kept (void)
{
  GList *items;
  char *best = NULL;
  gint64 best_us = 0;

  if (!enabled ())
    return NULL;
  items = gtk_recent_manager_get_items (gtk_recent_manager_get_default ());
  for (GList *l = items; l != NULL; l = l->next)
    {
      g_autoptr(GFile) file = g_file_new_for_uri (gtk_recent_info_get_uri (l->data));
      g_autofree char *path = g_file_get_path (file);
      gint64 mtime_us = 0;

      if (path == NULL || !g_str_has_suffix (path, ".efflux")
          || !g_file_test (path, G_FILE_TEST_IS_REGULAR)
          || !efflux_recovery_exists (path, &mtime_us)
          || efflux_recovery_older_than_dossier (path) || mtime_us <= best_us)
        continue;
      g_free (best);
      best = g_steal_pointer (&path);
      best_us = mtime_us;
    }
  g_list_free_full (items, (GDestroyNotify) gtk_recent_info_unref);
  return best;
}
