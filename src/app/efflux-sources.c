/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-sources"

#include "config.h"

#include <glib/gi18n.h>
#include <string.h>

#include "efflux-resources.h"
#include "efflux-settings.h"
#include "efflux-sources.h"

/* One row of the list. */
typedef struct
{
  char              *path;        /* canonical */
  char              *name;
  char              *detail;      /* opened rows: the line under the name */
  char              *badge;       /* sample rows: the state's text */
  gboolean           in_sample;
  EffluxSourceState  state;
  GtkWidget         *row;         /* the GtkListBoxRow (owned by the list box) */
} SourceRow;

struct _EffluxSources
{
  GtkWidget           parent_instance;

  /* template children */
  GtkWidget          *box;
  GtkListBox         *list;
  GtkLabel           *folder_label;
  GtkLabel           *message_label;

  GSimpleActionGroup *actions;
  char               *folder;        /* canonical, NULL without a sample */
  GFileMonitor       *monitor;
  GCancellable       *scan_cancellable;
  guint               scan_timeout;
  guint               scan_serial;
  GPtrArray          *sample_rows;   /* SourceRow * */
  GPtrArray          *opened_rows;   /* SourceRow * */
  char               *selected;      /* the path of the selected row */
  EffluxDocument     *document;
  char               *pending_path;  /* waiting for the unsaved-changes answer */
};

G_DEFINE_FINAL_TYPE (EffluxSources, efflux_sources, GTK_TYPE_WIDGET)

enum {
  SIGNAL_OPEN_SOURCE,
  SIGNAL_SCANNED,
  N_SIGNALS
};

static guint signals[N_SIGNALS];

static void
source_row_free (gpointer data)
{
  SourceRow *r = data;

  g_free (r->path);
  g_free (r->name);
  g_free (r->detail);
  g_free (r->badge);
  g_clear_object (&r->row);
  g_free (r);
}

static const char *
state_badge (EffluxSourceState state)
{
  switch (state)
    {
    case EFFLUX_SOURCE_MEASURED:
      /* Translators: the state of a source in the Sources list */
      return _("measured");
    case EFFLUX_SOURCE_REVIEWED:
      /* Translators: the state of a source in the Sources list */
      return _("reviewed");
    case EFFLUX_SOURCE_NOT_MEASURED:
    default:
      /* Translators: the state of a source in the Sources list */
      return _("not measured");
    }
}

static const char *
state_icon (EffluxSourceState state)
{
  switch (state)
    {
    case EFFLUX_SOURCE_MEASURED:
      return "efflux-source-measured-symbolic";
    case EFFLUX_SOURCE_REVIEWED:
      return "efflux-source-reviewed-symbolic";
    case EFFLUX_SOURCE_NOT_MEASURED:
    default:
      return "efflux-source-not-measured-symbolic";
    }
}

static const char *
state_class (EffluxSourceState state)
{
  switch (state)
    {
    case EFFLUX_SOURCE_MEASURED:
      return "efflux-state-measured";
    case EFFLUX_SOURCE_REVIEWED:
      return "efflux-state-reviewed";
    case EFFLUX_SOURCE_NOT_MEASURED:
    default:
      return "efflux-state-not-measured";
    }
}

static char *
canonical (const char *path)
{
  return g_canonicalize_filename (path, NULL);
}

/* ---- the rows ---- */

static GtkWidget *
label_new (const char *text,
           const char *css_class)
{
  GtkWidget *label = gtk_label_new (text);

  gtk_label_set_xalign (GTK_LABEL (label), 0.0);
  gtk_label_set_ellipsize (GTK_LABEL (label), PANGO_ELLIPSIZE_END);
  if (css_class != NULL)
    gtk_widget_add_css_class (label, css_class);
  return label;
}

/* Put the row's widgets into its GtkListBoxRow (made when missing). */
static void
render_row (EffluxSources *self,
            SourceRow     *r)
{
  GtkWidget *box, *text, *sub;

  if (r->row == NULL)
    {
      /* the row keeps its widget across re-listing */
      r->row = g_object_ref_sink (gtk_list_box_row_new ());
      gtk_widget_set_tooltip_text (r->row, r->path);
    }
  box = gtk_box_new (GTK_ORIENTATION_HORIZONTAL, 6);
  text = gtk_box_new (GTK_ORIENTATION_VERTICAL, 2);
  gtk_widget_set_hexpand (text, TRUE);
  gtk_box_append (GTK_BOX (text), label_new (r->name, NULL));
  if (r->in_sample)
    {
      GtkWidget *icon = gtk_image_new_from_icon_name (state_icon (r->state));
      GtkWidget *badge = label_new (r->badge, "efflux-state-badge");
      g_autofree char *file = g_path_get_basename (r->path);

      gtk_label_set_ellipsize (GTK_LABEL (badge), PANGO_ELLIPSIZE_NONE);
      gtk_widget_add_css_class (icon, state_class (r->state));
      gtk_widget_set_valign (icon, GTK_ALIGN_CENTER);
      gtk_box_append (GTK_BOX (box), icon);
      gtk_widget_add_css_class (badge, state_class (r->state));
      gtk_widget_set_halign (badge, GTK_ALIGN_START);
      sub = gtk_box_new (GTK_ORIENTATION_HORIZONTAL, 6);
      gtk_box_append (GTK_BOX (sub), badge);
      {
        GtkWidget *name = label_new (file, "caption");

        gtk_widget_add_css_class (name, "dim-label");
        gtk_box_append (GTK_BOX (sub), name);
      }
      gtk_box_append (GTK_BOX (text), sub);
    }
  else
    {
      sub = label_new (r->detail ? r->detail : "", "caption");
      gtk_widget_add_css_class (sub, "dim-label");
      gtk_box_append (GTK_BOX (text), sub);
    }
  gtk_box_append (GTK_BOX (box), text);
  gtk_list_box_row_set_child (GTK_LIST_BOX_ROW (r->row), box);
}

static SourceRow *
find_row (GPtrArray  *rows,
          const char *path)
{
  for (guint i = 0; i < rows->len; i++)
    {
      SourceRow *r = g_ptr_array_index (rows, i);

      if (g_strcmp0 (r->path, path) == 0)
        return r;
    }
  return NULL;
}

static SourceRow *
row_at (EffluxSources *self,
        guint          index)
{
  if (index < self->sample_rows->len)
    return g_ptr_array_index (self->sample_rows, index);
  index -= self->sample_rows->len;
  if (index < self->opened_rows->len)
    return g_ptr_array_index (self->opened_rows, index);
  return NULL;
}

/* Put every row into the list box in order: the sample, then the files opened outside it. */
static void
relist (EffluxSources *self)
{
  GtkWidget *child;

  while ((child = gtk_widget_get_first_child (GTK_WIDGET (self->list))) != NULL)
    gtk_list_box_remove (self->list, child);
  for (guint i = 0; i < self->sample_rows->len + self->opened_rows->len; i++)
    {
      SourceRow *r = row_at (self, i);

      gtk_list_box_append (self->list, r->row);
      if (g_strcmp0 (r->path, self->selected) == 0)
        gtk_list_box_select_row (self->list, GTK_LIST_BOX_ROW (r->row));
    }
}

/* The open document's state is shown on its row at once (unsaved edits included). */
static void
sync_document_state (EffluxSources *self)
{
  const EffluxDossier *d;
  g_autofree char *path = NULL;
  SourceRow *r;
  EffluxSourceState state;

  if (self->document == NULL || efflux_document_get_path (self->document) == NULL)
    return;
  path = canonical (efflux_document_get_path (self->document));
  r = find_row (self->sample_rows, path);
  if (r == NULL)
    return;
  d = efflux_document_get_dossier (self->document);
  state = efflux_sample_state (d->keyfile);
  if (state == r->state && g_strcmp0 (r->name, d->name) == 0)
    return;
  r->state = state;
  g_free (r->badge);
  r->badge = g_strdup (state_badge (state));
  if (d->name != NULL && *d->name != '\0')
    {
      g_free (r->name);
      r->name = g_strdup (d->name);
    }
  render_row (self, r);
}

/* ---- scanning the folder, off the UI thread ---- */

static void
scan_worker (GTask        *task,
             gpointer      source_object,
             gpointer      task_data,
             GCancellable *cancellable)
{
  GError *error = NULL;
  GPtrArray *entries = efflux_sample_scan (task_data, &error);

  if (entries == NULL)
    g_task_return_error (task, error);
  else
    g_task_return_pointer (task, entries, (GDestroyNotify) g_ptr_array_unref);
}

static void
show_message (EffluxSources *self,
              const char    *message)
{
  gtk_label_set_text (self->message_label, message ? message : "");
  gtk_widget_set_visible (GTK_WIDGET (self->message_label), message != NULL && *message != '\0');
}

static void
scan_done (GObject      *object,
           GAsyncResult *res,
           gpointer      user_data)
{
  EffluxSources *self = EFFLUX_SOURCES (object);
  g_autoptr(GError) error = NULL;
  g_autoptr(GPtrArray) entries = g_task_propagate_pointer (G_TASK (res), &error);
  guint serial = GPOINTER_TO_UINT (user_data);
  guint n_problems = 0;

  if (serial != self->scan_serial)
    return;   /* a newer scan, or the folder was closed */
  g_clear_object (&self->scan_cancellable);
  if (entries == NULL)
    {
      show_message (self, error->message);
      g_signal_emit (self, signals[SIGNAL_SCANNED], 0);
      return;
    }
  g_ptr_array_set_size (self->sample_rows, 0);
  for (guint i = 0; i < entries->len; i++)
    {
      EffluxSampleEntry *e = g_ptr_array_index (entries, i);
      SourceRow *r = g_new0 (SourceRow, 1);
      SourceRow *opened;

      r->path = canonical (e->path);
      r->name = g_strdup (e->name);
      r->in_sample = TRUE;
      r->state = e->state;
      r->badge = g_strdup (state_badge (e->state));
      render_row (self, r);
      if (e->problem != NULL)
        {
          gtk_widget_set_tooltip_text (r->row, e->problem);
          n_problems++;
        }
      g_ptr_array_add (self->sample_rows, r);
      /* a file opened before is now part of the sample */
      opened = find_row (self->opened_rows, r->path);
      if (opened != NULL)
        g_ptr_array_remove (self->opened_rows, opened);
    }
  sync_document_state (self);
  relist (self);
  if (n_problems > 0)
    {
      g_autofree char *text =
        g_strdup_printf (g_dngettext (GETTEXT_PACKAGE, "%u dossier could not be read (see its tooltip)",
                                      "%u dossiers could not be read (see their tooltips)", n_problems),
                         n_problems);

      show_message (self, text);
    }
  else if (entries->len == 0)
    show_message (self, _("No dossiers (.efflux) in this folder yet."));
  else
    show_message (self, NULL);
  g_signal_emit (self, signals[SIGNAL_SCANNED], 0);
}

static void
start_scan (EffluxSources *self)
{
  g_autoptr(GTask) task = NULL;

  g_clear_handle_id (&self->scan_timeout, g_source_remove);
  if (self->scan_cancellable != NULL)
    g_cancellable_cancel (self->scan_cancellable);
  g_clear_object (&self->scan_cancellable);
  self->scan_serial++;
  if (self->folder == NULL)
    return;
  self->scan_cancellable = g_cancellable_new ();
  task = g_task_new (self, self->scan_cancellable, scan_done, GUINT_TO_POINTER (self->scan_serial));
  g_task_set_source_tag (task, start_scan);
  g_task_set_task_data (task, g_strdup (self->folder), g_free);
  g_task_run_in_thread (task, scan_worker);
}

static gboolean
scan_timeout_cb (gpointer user_data)
{
  EffluxSources *self = user_data;

  self->scan_timeout = 0;
  start_scan (self);
  return G_SOURCE_REMOVE;
}

/* Several events come with one save (temporary file, rename): scan once they settle. */
static void
schedule_scan (EffluxSources *self)
{
  g_clear_handle_id (&self->scan_timeout, g_source_remove);
  self->scan_timeout = g_timeout_add (250, scan_timeout_cb, self);
}

static gboolean
is_dossier_file (GFile *file)
{
  g_autofree char *name = file ? g_file_get_basename (file) : NULL;

  return name != NULL && name[0] != '.' && g_str_has_suffix (name, ".efflux");
}

static void
folder_changed (GFileMonitor      *monitor,
                GFile             *file,
                GFile             *other,
                GFileMonitorEvent  event,
                EffluxSources     *self)
{
  if (event == G_FILE_MONITOR_EVENT_ATTRIBUTE_CHANGED)
    return;
  if (is_dossier_file (file) || is_dossier_file (other))
    schedule_scan (self);
}

/* Does the settings' schema have key (an older compiled schema may not)? */
static gboolean
settings_has_key (GSettings  *settings,
                  const char *key)
{
  g_autoptr(GSettingsSchema) schema = NULL;

  g_object_get (settings, "settings-schema", &schema, NULL);
  return schema != NULL && g_settings_schema_has_key (schema, key);
}

gboolean
efflux_sources_set_folder (EffluxSources  *self,
                           const char     *folder,
                           GError        **error)
{
  g_autofree char *path = NULL;
  g_autoptr(GFile) file = NULL;
  g_autoptr(GError) local = NULL;
  GSettings *settings;

  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), FALSE);
  if (folder != NULL)
    {
      g_autoptr(GDir) dir = NULL;

      path = canonical (folder);
      dir = g_dir_open (path, 0, &local);
      if (dir == NULL)
        {
          g_set_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT, _("%s: cannot read the folder: %s"),
                       path, local->message);
          return FALSE;
        }
    }
  if (self->monitor != NULL)
    {
      g_signal_handlers_disconnect_by_data (self->monitor, self);
      g_file_monitor_cancel (self->monitor);
      g_clear_object (&self->monitor);
    }
  g_free (self->folder);
  self->folder = g_steal_pointer (&path);
  g_ptr_array_set_size (self->sample_rows, 0);
  show_message (self, NULL);
  gtk_label_set_text (self->folder_label, self->folder ? self->folder : "");
  gtk_widget_set_tooltip_text (GTK_WIDGET (self->folder_label), self->folder);
  gtk_widget_set_visible (GTK_WIDGET (self->folder_label), self->folder != NULL);
  relist (self);
  settings = efflux_settings_get ();
  if (settings != NULL && settings_has_key (settings, "sample-folder"))
    g_settings_set_string (settings, "sample-folder", self->folder ? self->folder : "");
  if (self->folder == NULL)
    {
      start_scan (self);   /* cancels a running one */
      return TRUE;
    }
  file = g_file_new_for_path (self->folder);
  self->monitor = g_file_monitor_directory (file, G_FILE_MONITOR_WATCH_MOVES, NULL, &local);
  if (self->monitor != NULL)
    g_signal_connect (self->monitor, "changed", G_CALLBACK (folder_changed), self);
  else
    g_debug ("%s: not watched: %s", self->folder, local->message);
  start_scan (self);
  return TRUE;
}

const char *
efflux_sources_get_folder (EffluxSources *self)
{
  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), NULL);
  return self->folder;
}

void
efflux_sources_refresh (EffluxSources *self)
{
  g_return_if_fail (EFFLUX_IS_SOURCES (self));
  if (self->folder != NULL)
    start_scan (self);
}

gboolean
efflux_sources_is_scanning (EffluxSources *self)
{
  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), FALSE);
  return self->scan_cancellable != NULL || self->scan_timeout != 0;
}

void
efflux_sources_add_opened (EffluxSources *self,
                           const char    *path,
                           const char    *name,
                           const char    *detail)
{
  g_autofree char *canon = NULL;
  SourceRow *r;

  g_return_if_fail (EFFLUX_IS_SOURCES (self));
  g_return_if_fail (path != NULL);
  canon = canonical (path);
  g_free (self->selected);
  self->selected = g_strdup (canon);
  r = find_row (self->sample_rows, canon);
  if (r == NULL)
    {
      r = find_row (self->opened_rows, canon);
      if (r == NULL)
        {
          r = g_new0 (SourceRow, 1);
          r->path = g_steal_pointer (&canon);
          g_ptr_array_add (self->opened_rows, r);
        }
      g_free (r->name);
      r->name = g_strdup (name ? name : "");
      g_free (r->detail);
      r->detail = g_strdup (detail);
      render_row (self, r);
      relist (self);
    }
  gtk_list_box_select_row (self->list, GTK_LIST_BOX_ROW (r->row));
}

/* ---- the document ---- */

static void
document_changed (EffluxDocument *document,
                  const char     *group,
                  EffluxSources  *self)
{
  if (group == NULL || g_str_equal (group, "Status") || g_str_equal (group, "Source")
      || g_str_has_prefix (group, "Review"))
    sync_document_state (self);
}

static void
document_modified (EffluxDocument *document,
                   GParamSpec     *pspec,
                   EffluxSources  *self)
{
  /* saved: the file in the folder changed (the monitor may be slower, or absent) */
  if (!efflux_document_get_modified (document) && self->folder != NULL)
    schedule_scan (self);
}

void
efflux_sources_set_document (EffluxSources  *self,
                             EffluxDocument *document)
{
  g_return_if_fail (EFFLUX_IS_SOURCES (self));
  if (self->document != NULL)
    g_signal_handlers_disconnect_by_data (self->document, self);
  g_set_object (&self->document, document);
  if (document != NULL)
    {
      g_signal_connect (document, "changed", G_CALLBACK (document_changed), self);
      g_signal_connect (document, "notify::modified", G_CALLBACK (document_modified), self);
      sync_document_state (self);
    }
  g_simple_action_set_enabled (G_SIMPLE_ACTION (g_action_map_lookup_action (G_ACTION_MAP (self->actions),
                                                                             "mark-measured")),
                               document != NULL);
}

/* ---- key-file edits as one document command ---- */

GKeyFile *
efflux_sources_copy_keyfile (EffluxDocument *document)
{
  const EffluxDossier *d = efflux_document_get_dossier (document);
  g_autofree char *data = NULL;
  gsize length = 0;
  GKeyFile *copy = g_key_file_new ();

  data = g_key_file_to_data (d->keyfile, &length, NULL);
  if (!g_key_file_load_from_data (copy, data, length,
                                  G_KEY_FILE_KEEP_COMMENTS | G_KEY_FILE_KEEP_TRANSLATIONS, NULL))
    g_warn_if_reached ();
  return copy;
}

static void
add_keys (GHashTable *seen,
          GPtrArray  *keys,
          GKeyFile   *kf,
          const char *group)
{
  g_auto(GStrv) names = g_key_file_get_keys (kf, group, NULL, NULL);

  for (gsize i = 0; names != NULL && names[i] != NULL; i++)
    if (g_hash_table_add (seen, g_strdup (names[i])))
      g_ptr_array_add (keys, g_strdup (names[i]));
}

gboolean
efflux_sources_commit_keyfile (EffluxDocument     *document,
                               GKeyFile           *edited,
                               const char * const *groups,
                               guint               merge_id,
                               GError            **error)
{
  GKeyFile *current;
  g_autoptr(GPtrArray) change_groups = g_ptr_array_new_with_free_func (g_free);
  g_autoptr(GPtrArray) change_keys = g_ptr_array_new_with_free_func (g_free);
  g_autoptr(GPtrArray) change_values = g_ptr_array_new_with_free_func (g_free);

  g_return_val_if_fail (EFFLUX_IS_DOCUMENT (document), FALSE);
  current = efflux_document_get_dossier (document)->keyfile;
  for (gsize g = 0; groups[g] != NULL; g++)
    {
      g_autoptr(GHashTable) seen = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, NULL);
      g_autoptr(GPtrArray) keys = g_ptr_array_new_with_free_func (g_free);

      add_keys (seen, keys, current, groups[g]);
      add_keys (seen, keys, edited, groups[g]);
      for (guint k = 0; k < keys->len; k++)
        {
          const char *key = g_ptr_array_index (keys, k);
          g_autofree char *before = g_key_file_get_value (current, groups[g], key, NULL);
          g_autofree char *after = g_key_file_get_value (edited, groups[g], key, NULL);

          if (g_strcmp0 (before, after) == 0)
            continue;
          g_ptr_array_add (change_groups, g_strdup (groups[g]));
          g_ptr_array_add (change_keys, g_strdup (key));
          g_ptr_array_add (change_values, g_steal_pointer (&after));
        }
    }
  if (change_keys->len == 0)
    return TRUE;
  return efflux_document_set_keys (document, change_keys->len,
                                   (const char * const *) change_groups->pdata,
                                   (const char * const *) change_keys->pdata,
                                   (const char * const *) change_values->pdata,
                                   merge_id, error);
}

/* ---- actions ---- */

static GtkWindow *
parent_window (EffluxSources *self)
{
  GtkRoot *root = gtk_widget_get_root (GTK_WIDGET (self));

  return GTK_IS_WINDOW (root) ? GTK_WINDOW (root) : NULL;
}

static void
folder_response (GtkNativeDialog *dialog,
                 int              response,
                 gpointer         user_data)
{
  g_autoptr(EffluxSources) self = user_data;

  if (response == GTK_RESPONSE_ACCEPT)
    {
      g_autoptr(GFile) file = gtk_file_chooser_get_file (GTK_FILE_CHOOSER (dialog));
      g_autofree char *path = file ? g_file_get_path (file) : NULL;
      g_autoptr(GError) error = NULL;

      if (path == NULL)
        show_message (self, _("Only local folders can be opened as a sample."));
      else if (!efflux_sources_set_folder (self, path, &error))
        show_message (self, error->message);
    }
  gtk_native_dialog_destroy (dialog);
  g_object_unref (dialog);
}

static void
open_folder_activated (GSimpleAction *action,
                       GVariant      *parameter,
                       gpointer       user_data)
{
  EffluxSources *self = user_data;
  GtkFileChooserNative *chooser;

  chooser = gtk_file_chooser_native_new (_("Open a Sample Folder"), parent_window (self),
                                         GTK_FILE_CHOOSER_ACTION_SELECT_FOLDER, _("_Open"),
                                         _("_Cancel"));
  if (self->folder != NULL)
    {
      g_autoptr(GFile) file = g_file_new_for_path (self->folder);

      gtk_file_chooser_set_current_folder (GTK_FILE_CHOOSER (chooser), file, NULL);
    }
  gtk_native_dialog_set_modal (GTK_NATIVE_DIALOG (chooser), TRUE);
  g_signal_connect (chooser, "response", G_CALLBACK (folder_response), g_object_ref (self));
  gtk_native_dialog_show (GTK_NATIVE_DIALOG (chooser));
}

static void
refresh_activated (GSimpleAction *action,
                   GVariant      *parameter,
                   gpointer       user_data)
{
  efflux_sources_refresh (EFFLUX_SOURCES (user_data));
}

static void
mark_measured_activated (GSimpleAction *action,
                         GVariant      *parameter,
                         gpointer       user_data)
{
  EffluxSources *self = user_data;
  static const char * const groups[] = { "Status", NULL };
  g_autoptr(GKeyFile) edited = NULL;
  g_autoptr(GDateTime) now = g_date_time_new_now_utc ();
  g_autoptr(GError) error = NULL;

  if (self->document == NULL)
    return;
  edited = efflux_sources_copy_keyfile (self->document);
  efflux_sample_set_measured (edited, now);
  if (!efflux_sources_commit_keyfile (self->document, edited, groups, 0, &error))
    show_message (self, error->message);
}

/* ---- activating a row ---- */

static void
emit_open (EffluxSources *self)
{
  g_autofree char *path = g_steal_pointer (&self->pending_path);

  if (path != NULL)
    g_signal_emit (self, signals[SIGNAL_OPEN_SOURCE], 0, path);
}

static void
unsaved_response (GtkDialog *dialog,
                  int        response,
                  gpointer   user_data)
{
  /* our own reference for the handler: destroying the dialog drops the closure's */
  g_autoptr(EffluxSources) self = g_object_ref (user_data);
  g_autoptr(GError) error = NULL;

  gtk_window_destroy (GTK_WINDOW (dialog));
  if (response == GTK_RESPONSE_ACCEPT && self->document != NULL)
    {
      if (!efflux_document_save (self->document, NULL, &error))
        {
          show_message (self, error->message);
          g_clear_pointer (&self->pending_path, g_free);
          return;
        }
    }
  else if (response != GTK_RESPONSE_REJECT)
    {
      g_clear_pointer (&self->pending_path, g_free);
      return;
    }
  emit_open (self);
}

void
efflux_sources_activate_row (EffluxSources *self,
                             guint          index)
{
  SourceRow *r;
  GtkWidget *dialog;
  const char *doc_path;
  g_autofree char *doc_canon = NULL;

  g_return_if_fail (EFFLUX_IS_SOURCES (self));
  r = row_at (self, index);
  if (r == NULL)
    return;
  g_free (self->pending_path);
  self->pending_path = g_strdup (r->path);
  doc_path = self->document ? efflux_document_get_path (self->document) : NULL;
  doc_canon = doc_path ? canonical (doc_path) : NULL;
  if (self->document == NULL || !efflux_document_get_modified (self->document)
      || g_strcmp0 (doc_canon, r->path) == 0)
    {
      emit_open (self);
      return;
    }
  dialog = gtk_message_dialog_new (parent_window (self),
                                   GTK_DIALOG_MODAL | GTK_DIALOG_DESTROY_WITH_PARENT,
                                   GTK_MESSAGE_QUESTION, GTK_BUTTONS_NONE,
                                   _("Save the changes to “%s” before opening “%s”?"),
                                   efflux_document_get_dossier (self->document)->name,
                                   r->name);
  gtk_message_dialog_format_secondary_text (GTK_MESSAGE_DIALOG (dialog), "%s",
                                            _("The lobes and assumptions changed since the dossier was last saved."));
  gtk_dialog_add_buttons (GTK_DIALOG (dialog),
                          _("Open _without Saving"), GTK_RESPONSE_REJECT,
                          _("_Cancel"), GTK_RESPONSE_CANCEL,
                          _("_Save"), GTK_RESPONSE_ACCEPT,
                          NULL);
  gtk_dialog_set_default_response (GTK_DIALOG (dialog), GTK_RESPONSE_ACCEPT);
  /* the closure holds a reference to the list until the dialog goes, answered or destroyed with
   * the window (which emits no response) */
  g_signal_connect_data (dialog, "response", G_CALLBACK (unsaved_response), g_object_ref (self),
                         (GClosureNotify) (void (*) (void)) g_object_unref, 0);
  gtk_window_present (GTK_WINDOW (dialog));
}

static void
row_activated (GtkListBox    *list,
               GtkListBoxRow *row,
               EffluxSources *self)
{
  for (guint i = 0; i < self->sample_rows->len + self->opened_rows->len; i++)
    if (row_at (self, i)->row == GTK_WIDGET (row))
      {
        efflux_sources_activate_row (self, i);
        return;
      }
}

static void
row_selected (GtkListBox    *list,
              GtkListBoxRow *row,
              EffluxSources *self)
{
  for (guint i = 0; row != NULL && i < self->sample_rows->len + self->opened_rows->len; i++)
    if (row_at (self, i)->row == GTK_WIDGET (row))
      {
        g_free (self->selected);
        self->selected = g_strdup (row_at (self, i)->path);
      }
}

/* ---- accessors ---- */

GActionGroup *
efflux_sources_get_actions (EffluxSources *self)
{
  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), NULL);
  return G_ACTION_GROUP (self->actions);
}

guint
efflux_sources_get_n_rows (EffluxSources *self)
{
  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), 0);
  return self->sample_rows->len + self->opened_rows->len;
}

const char *
efflux_sources_get_row_path (EffluxSources *self,
                             guint          index)
{
  SourceRow *r;

  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), NULL);
  r = row_at (self, index);
  return r ? r->path : NULL;
}

const char *
efflux_sources_get_row_name (EffluxSources *self,
                             guint          index)
{
  SourceRow *r;

  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), NULL);
  r = row_at (self, index);
  return r ? r->name : NULL;
}

gboolean
efflux_sources_get_row_state (EffluxSources     *self,
                              guint              index,
                              EffluxSourceState *state)
{
  SourceRow *r;

  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), FALSE);
  r = row_at (self, index);
  if (r == NULL || !r->in_sample)
    return FALSE;
  if (state != NULL)
    *state = r->state;
  return TRUE;
}

const char *
efflux_sources_get_row_badge (EffluxSources *self,
                              guint          index)
{
  SourceRow *r;

  g_return_val_if_fail (EFFLUX_IS_SOURCES (self), NULL);
  r = row_at (self, index);
  return r && r->in_sample ? r->badge : "";
}

/* ---- the type ---- */

static void
efflux_sources_dispose (GObject *object)
{
  EffluxSources *self = EFFLUX_SOURCES (object);

  g_clear_handle_id (&self->scan_timeout, g_source_remove);
  if (self->scan_cancellable != NULL)
    g_cancellable_cancel (self->scan_cancellable);
  g_clear_object (&self->scan_cancellable);
  self->scan_serial++;
  if (self->monitor != NULL)
    {
      g_signal_handlers_disconnect_by_data (self->monitor, self);
      g_file_monitor_cancel (self->monitor);
      g_clear_object (&self->monitor);
    }
  if (self->document != NULL)
    g_signal_handlers_disconnect_by_data (self->document, self);
  g_clear_object (&self->document);
  gtk_widget_dispose_template (GTK_WIDGET (self), EFFLUX_TYPE_SOURCES);
  G_OBJECT_CLASS (efflux_sources_parent_class)->dispose (object);
}

static void
efflux_sources_finalize (GObject *object)
{
  EffluxSources *self = EFFLUX_SOURCES (object);

  g_clear_object (&self->actions);
  g_clear_pointer (&self->sample_rows, g_ptr_array_unref);
  g_clear_pointer (&self->opened_rows, g_ptr_array_unref);
  g_free (self->folder);
  g_free (self->selected);
  g_free (self->pending_path);
  G_OBJECT_CLASS (efflux_sources_parent_class)->finalize (object);
}

static void
efflux_sources_class_init (EffluxSourcesClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_sources_dispose;
  object_class->finalize = efflux_sources_finalize;

  signals[SIGNAL_OPEN_SOURCE] =
    g_signal_new ("open-source", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL,
                  NULL, G_TYPE_NONE, 1, G_TYPE_STRING);
  signals[SIGNAL_SCANNED] =
    g_signal_new ("scanned", G_TYPE_FROM_CLASS (klass), G_SIGNAL_RUN_LAST, 0, NULL, NULL,
                  NULL, G_TYPE_NONE, 0);

  g_assert (efflux_get_resource () != NULL);
  gtk_widget_class_set_template_from_resource (widget_class, "/org/effluxproject/Efflux/efflux-sources.ui");
  gtk_widget_class_bind_template_child (widget_class, EffluxSources, box);
  gtk_widget_class_bind_template_child (widget_class, EffluxSources, list);
  gtk_widget_class_bind_template_child (widget_class, EffluxSources, folder_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxSources, message_label);
  gtk_widget_class_set_layout_manager_type (widget_class, GTK_TYPE_BIN_LAYOUT);
  gtk_widget_class_set_css_name (widget_class, "efflux-sources");
}

/* The state icons are ours (icons/actions, in the resource): a window made without the
 * application (the UI tests) finds them too. */
static void
ensure_icons (void)
{
  static gboolean done;
  GdkDisplay *display = gdk_display_get_default ();

  if (done || display == NULL)
    return;
  done = TRUE;
  gtk_icon_theme_add_resource_path (gtk_icon_theme_get_for_display (display),
                                    "/org/effluxproject/Efflux/icons");
}

static void
efflux_sources_init (EffluxSources *self)
{
  static const GActionEntry entries[] = {
    { .name = "open-folder", .activate = open_folder_activated },
    { .name = "refresh", .activate = refresh_activated },
    { .name = "mark-measured", .activate = mark_measured_activated },
  };

  ensure_icons ();
  gtk_widget_init_template (GTK_WIDGET (self));
  self->sample_rows = g_ptr_array_new_with_free_func (source_row_free);
  self->opened_rows = g_ptr_array_new_with_free_func (source_row_free);
  self->actions = g_simple_action_group_new ();
  g_action_map_add_action_entries (G_ACTION_MAP (self->actions), entries, G_N_ELEMENTS (entries), self);
  g_simple_action_set_enabled (G_SIMPLE_ACTION (g_action_map_lookup_action (G_ACTION_MAP (self->actions),
                                                                             "mark-measured")),
                               FALSE);
  gtk_widget_insert_action_group (GTK_WIDGET (self), "sources", G_ACTION_GROUP (self->actions));
  g_signal_connect (self->list, "row-activated", G_CALLBACK (row_activated), self);
  g_signal_connect (self->list, "row-selected", G_CALLBACK (row_selected), self);
}

GtkWidget *
efflux_sources_new (void)
{
  return g_object_new (EFFLUX_TYPE_SOURCES, NULL);
}
