/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-window"

#include "config.h"

#include <glib/gi18n.h>

#include "efflux-cube.h"
#include "efflux-window.h"

struct _EffluxWindow
{
  GtkApplicationWindow parent_instance;

  /* template children */
  GtkLabel        *source_label;
  GtkLabel        *detail_label;
  GtkProgressBar  *progress;
  GtkButton       *cancel_button;

  GCancellable    *cancellable;
  EffluxCube      *cube;
  char            *source_name;

  /* progress from the worker, handed over under the lock */
  GMutex           progress_lock;
  double           progress_fraction;
  guint            progress_idle;
};

G_DEFINE_FINAL_TYPE (EffluxWindow, efflux_window, GTK_TYPE_APPLICATION_WINDOW)

static void
update_title (EffluxWindow *self)
{
  g_autofree char *title = NULL;

  if (self->source_name != NULL && *self->source_name != '\0')
    /* Translators: the window title, "SOURCE - Efflux" */
    title = g_strdup_printf (_("%s - Efflux"), self->source_name);
  else
    title = g_strdup (_("Efflux"));
  gtk_window_set_title (GTK_WINDOW (self), title);
}

static gboolean
progress_idle_cb (gpointer user_data)
{
  EffluxWindow *self = user_data;
  double fraction;

  g_mutex_lock (&self->progress_lock);
  fraction = self->progress_fraction;
  self->progress_idle = 0;
  g_mutex_unlock (&self->progress_lock);
  gtk_progress_bar_set_fraction (self->progress, fraction);
  return G_SOURCE_REMOVE;
}

/* Called on the worker thread: store the fraction, schedule one idle on the main thread. */
static void
load_progress (double   fraction,
               gpointer user_data)
{
  EffluxWindow *self = user_data;

  g_mutex_lock (&self->progress_lock);
  self->progress_fraction = fraction;
  if (self->progress_idle == 0)
    self->progress_idle = g_idle_add_full (G_PRIORITY_LOW, progress_idle_cb,
                                           g_object_ref (self), g_object_unref);
  g_mutex_unlock (&self->progress_lock);
}

static void
load_worker (GTask        *task,
             gpointer      source_object,
             gpointer      task_data,
             GCancellable *cancellable)
{
  EffluxWindow *self = source_object;
  const char *path = task_data;
  GError *error = NULL;
  EffluxCube *cube;

  cube = efflux_cube_load (path, NULL, cancellable, load_progress, self, &error);
  if (cube == NULL)
    g_task_return_error (task, error);
  else
    g_task_return_pointer (task, cube, (GDestroyNotify) efflux_cube_free);
}

static void
load_done (GObject      *object,
           GAsyncResult *result,
           gpointer      user_data)
{
  g_autoptr(EffluxWindow) self = user_data;
  g_autoptr(GError) error = NULL;
  EffluxCube *cube;

  cube = g_task_propagate_pointer (G_TASK (result), &error);
  if (g_task_get_cancellable (G_TASK (result)) == self->cancellable)
    g_clear_object (&self->cancellable);
  gtk_widget_set_visible (GTK_WIDGET (self->progress), FALSE);
  gtk_widget_set_visible (GTK_WIDGET (self->cancel_button), FALSE);
  if (cube == NULL)
    {
      if (!g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED))
        gtk_label_set_text (self->detail_label, error->message);
      else
        gtk_label_set_text (self->detail_label, _("Loading cancelled."));
      return;
    }
  g_clear_pointer (&self->cube, efflux_cube_free);
  self->cube = cube;
  {
    g_autofree char *base = g_path_get_basename (cube->path);
    g_autofree char *text =
      g_strdup_printf (_("%s: %zu × %zu pixels, %zu channels from %.3f to %.3f km/s"),
                       base, cube->nx, cube->ny, cube->nchan,
                       cube->velocity[0], cube->velocity[cube->nchan - 1]);
    gtk_label_set_text (self->detail_label, text);
  }
}

static void
start_load (EffluxWindow *self,
            const char   *path)
{
  g_autoptr(GTask) task = NULL;

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  self->cancellable = g_cancellable_new ();

  gtk_progress_bar_set_fraction (self->progress, 0.0);
  gtk_widget_set_visible (GTK_WIDGET (self->progress), TRUE);
  gtk_widget_set_visible (GTK_WIDGET (self->cancel_button), TRUE);

  task = g_task_new (self, self->cancellable, load_done, g_object_ref (self));
  g_task_set_source_tag (task, start_load);
  g_task_set_task_data (task, g_strdup (path), g_free);
  g_task_run_in_thread (task, load_worker);
}

static void
cancel_clicked (EffluxWindow *self)
{
  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
}

void
efflux_window_open (EffluxWindow *self,
                    GFile        *file)
{
  g_autofree char *path = g_file_get_path (file);
  g_autoptr(GKeyFile) keys = NULL;
  g_autoptr(GError) error = NULL;

  g_return_if_fail (EFFLUX_IS_WINDOW (self));
  if (path == NULL)
    return;

  if (!g_str_has_suffix (path, ".efflux"))
    {
      start_load (self, path);
      return;
    }

  keys = g_key_file_new ();
  if (!g_key_file_load_from_file (keys, path, G_KEY_FILE_KEEP_COMMENTS, &error))
    {
      g_autofree char *msg = g_strdup_printf ("%s: %s", path, error->message);
      gtk_label_set_text (self->detail_label, msg);
      return;
    }
  g_free (self->source_name);
  self->source_name = g_key_file_get_string (keys, "Source", "name", NULL);
  gtk_label_set_text (self->source_label, self->source_name ? self->source_name : "");
  update_title (self);

  /* Show the first tracer cube of the dossier. */
  {
    g_auto(GStrv) groups = g_key_file_get_groups (keys, NULL);
    g_autofree char *dir = g_path_get_dirname (path);

    for (char **g = groups; *g; g++)
      {
        g_autofree char *rel = NULL;
        g_autofree char *abs = NULL;

        if (!g_str_has_prefix (*g, "Cube "))
          continue;
        rel = g_key_file_get_string (keys, *g, "path", NULL);
        if (rel == NULL)
          continue;
        abs = g_path_is_absolute (rel) ? g_strdup (rel) : g_build_filename (dir, rel, NULL);
        start_load (self, abs);
        break;
      }
  }
}

gboolean
efflux_window_is_loading (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), FALSE);
  return self->cancellable != NULL;
}

const char *
efflux_window_get_status (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return gtk_label_get_text (self->detail_label);
}

static void
efflux_window_dispose (GObject *object)
{
  EffluxWindow *self = EFFLUX_WINDOW (object);

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  gtk_widget_dispose_template (GTK_WIDGET (self), EFFLUX_TYPE_WINDOW);
  G_OBJECT_CLASS (efflux_window_parent_class)->dispose (object);
}

static void
efflux_window_finalize (GObject *object)
{
  EffluxWindow *self = EFFLUX_WINDOW (object);

  g_clear_pointer (&self->cube, efflux_cube_free);
  g_free (self->source_name);
  g_mutex_clear (&self->progress_lock);
  G_OBJECT_CLASS (efflux_window_parent_class)->finalize (object);
}

static void
efflux_window_class_init (EffluxWindowClass *klass)
{
  GObjectClass *object_class = G_OBJECT_CLASS (klass);
  GtkWidgetClass *widget_class = GTK_WIDGET_CLASS (klass);

  object_class->dispose = efflux_window_dispose;
  object_class->finalize = efflux_window_finalize;

  gtk_widget_class_set_template_from_resource (widget_class, "/org/effluxproject/Efflux/efflux-window.ui");
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, source_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, detail_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, progress);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, cancel_button);
  gtk_widget_class_bind_template_callback (widget_class, cancel_clicked);
}

static void
efflux_window_init (EffluxWindow *self)
{
  g_mutex_init (&self->progress_lock);
  gtk_widget_init_template (GTK_WIDGET (self));
  update_title (self);
}

EffluxWindow *
efflux_window_new (EffluxApplication *application)
{
  return g_object_new (EFFLUX_TYPE_WINDOW, "application", application, NULL);
}
