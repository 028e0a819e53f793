/* SPDX-License-Identifier: GPL-3.0-or-later */
#define G_LOG_DOMAIN "efflux-window"

#include "config.h"

#include <glib/gi18n.h>
#include <math.h>

#include "efflux-cube.h"
#include "efflux-dossier.h"
#include "efflux-maps.h"
#include "efflux-resources.h"
#include "efflux-sky-view.h"
#include "efflux-window.h"

struct _EffluxWindow
{
  GtkApplicationWindow parent_instance;

  /* template children */
  GtkLabel        *source_label;
  GtkLabel        *subtitle_label;
  GtkLabel        *detail_label;
  GtkLabel        *readout_label;
  GtkLabel        *loading_label;
  GtkProgressBar  *progress;
  GtkButton       *cancel_button;
  GtkWidget       *loading_box;
  GtkWidget       *empty_box;
  EffluxSkyView   *sky_view;
  GtkListBox      *sources_list;

  GCancellable    *cancellable;
  EffluxDossier   *dossier;
  EffluxCube      *cube;
  char            *source_name;
  gboolean         has_range;
  double           range_v1, range_v2;

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
  gtk_label_set_text (self->source_label,
                      self->source_name && *self->source_name ? self->source_name : _("Efflux"));
}

static void
set_subtitle (EffluxWindow *self,
              const char   *text)
{
  gtk_label_set_text (self->subtitle_label, text ? text : "");
  gtk_widget_set_visible (GTK_WIDGET (self->subtitle_label), text != NULL && *text != '\0');
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

/* ---- loading a cube and its first map, off the UI thread ---- */

typedef struct
{
  char     *path;
  gboolean  has_range;
  double    v1, v2;
} LoadRequest;

typedef struct
{
  EffluxCube *cube;
  float      *map;
  double      v1, v2;
} LoadResult;

static void
load_request_free (gpointer data)
{
  LoadRequest *request = data;

  g_free (request->path);
  g_free (request);
}

static void
load_result_free (gpointer data)
{
  LoadResult *result = data;

  g_clear_pointer (&result->cube, efflux_cube_free);
  g_free (result->map);
  g_free (result);
}

static void
load_worker (GTask        *task,
             gpointer      source_object,
             gpointer      task_data,
             GCancellable *cancellable)
{
  EffluxWindow *self = source_object;
  const LoadRequest *request = task_data;
  g_autoptr(GError) error = NULL;
  LoadResult *result = g_new0 (LoadResult, 1);

  result->cube = efflux_cube_load (request->path, NULL, cancellable, load_progress, self, &error);
  if (result->cube == NULL)
    {
      load_result_free (result);
      g_task_return_error (task, g_steal_pointer (&error));
      return;
    }
  if (g_task_return_error_if_cancelled (task))
    {
      load_result_free (result);
      return;
    }

  /* The first map: moment 0 over the lobe's range, or over every channel of the cube. */
  if (request->has_range)
    {
      result->v1 = request->v1;
      result->v2 = request->v2;
    }
  else
    {
      result->v1 = result->cube->velocity[0];
      result->v2 = result->cube->velocity[result->cube->nchan - 1];
    }
  result->map = g_try_new (float, result->cube->nx * result->cube->ny);
  if (result->map == NULL)
    {
      g_task_return_new_error (task, EFFLUX_ERROR, EFFLUX_ERROR_MEMORY,
                               "%s: no memory for a %zu × %zu map", request->path,
                               result->cube->nx, result->cube->ny);
      load_result_free (result);
      return;
    }
  if (!efflux_moment_map (result->cube, EFFLUX_MOMENT_0, result->v1, result->v2, 0.0,
                          result->map, &error))
    {
      load_result_free (result);
      g_task_return_error (task, g_steal_pointer (&error));
      return;
    }
  g_task_return_pointer (task, result, load_result_free);
}

static void
show_loading (EffluxWindow *self,
              gboolean      loading)
{
  gtk_widget_set_visible (self->loading_box, loading);
  gtk_widget_set_visible (self->empty_box, !loading && !efflux_sky_view_has_map (self->sky_view));
  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.cancel", loading);
}

static void
load_done (GObject      *object,
           GAsyncResult *res,
           gpointer      user_data)
{
  g_autoptr(EffluxWindow) self = user_data;
  g_autoptr(GError) error = NULL;
  LoadResult *result;
  EffluxCube *old;

  result = g_task_propagate_pointer (G_TASK (res), &error);
  if (g_task_get_cancellable (G_TASK (res)) != self->cancellable)
    {
      /* a newer load replaced this one */
      g_clear_pointer (&result, load_result_free);
      return;
    }
  g_clear_object (&self->cancellable);
  show_loading (self, FALSE);
  if (result == NULL)
    {
      if (!g_error_matches (error, G_IO_ERROR, G_IO_ERROR_CANCELLED)
          && !g_error_matches (error, EFFLUX_ERROR, EFFLUX_ERROR_CANCELLED))
        gtk_label_set_text (self->detail_label, error->message);
      else
        gtk_label_set_text (self->detail_label, _("Loading cancelled."));
      return;
    }

  /* the view borrows the cube: give it the new one before the old one goes */
  old = self->cube;
  self->cube = g_steal_pointer (&result->cube);
  /* Translators: the unit of a moment-0 map */
  efflux_sky_view_set_map (self->sky_view, self->cube, result->map, self->cube->nx, self->cube->ny,
                           _("K km/s"));
  g_clear_pointer (&old, efflux_cube_free);
  show_loading (self, FALSE);

  if (self->dossier != NULL)
    efflux_sky_view_set_source (self->sky_view, self->dossier->ra_deg, self->dossier->dec_deg,
                                self->dossier->distance_pc);
  else
    efflux_sky_view_unset_source (self->sky_view);

  {
    g_autofree char *base = g_path_get_basename (self->cube->path);
    g_autofree char *text =
      g_strdup_printf (_("%s: %zu × %zu pixels, %zu channels from %.3f to %.3f km/s; "
                         "moment 0 over %.2f to %.2f km/s"),
                       base, self->cube->nx, self->cube->ny, self->cube->nchan,
                       self->cube->velocity[0], self->cube->velocity[self->cube->nchan - 1],
                       MIN (result->v1, result->v2), MAX (result->v1, result->v2));
    gtk_label_set_text (self->detail_label, text);
    set_subtitle (self, base);
  }
  if (self->dossier == NULL)
    {
      g_free (self->source_name);
      self->source_name = self->cube->object && *self->cube->object
                          ? g_strdup (self->cube->object)
                          : g_path_get_basename (self->cube->path);
      update_title (self);
    }
  load_result_free (result);
}

static void
start_load (EffluxWindow *self,
            const char   *path,
            gboolean      has_range,
            double        v1,
            double        v2)
{
  g_autoptr(GTask) task = NULL;
  LoadRequest *request = g_new0 (LoadRequest, 1);
  g_autofree char *base = g_path_get_basename (path);
  g_autofree char *text = NULL;

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  self->cancellable = g_cancellable_new ();

  gtk_progress_bar_set_fraction (self->progress, 0.0);
  /* Translators: shown while a cube file is read */
  text = g_strdup_printf (_("Reading %s…"), base);
  gtk_label_set_text (self->loading_label, text);
  gtk_label_set_text (self->detail_label, text);
  show_loading (self, TRUE);

  request->path = g_strdup (path);
  request->has_range = has_range;
  request->v1 = v1;
  request->v2 = v2;
  task = g_task_new (self, self->cancellable, load_done, g_object_ref (self));
  g_task_set_source_tag (task, start_load);
  g_task_set_task_data (task, request, load_request_free);
  g_task_run_in_thread (task, load_worker);
}

static void
cancel_clicked (EffluxWindow *self)
{
  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
}

/* ---- the Sources list: every dossier or cube opened in this window, with a short status ---- */

static GtkListBoxRow *
find_source_row (EffluxWindow *self,
                 const char   *path)
{
  for (GtkWidget *child = gtk_widget_get_first_child (GTK_WIDGET (self->sources_list));
       child != NULL; child = gtk_widget_get_next_sibling (child))
    if (GTK_IS_LIST_BOX_ROW (child)
        && g_strcmp0 (g_object_get_data (G_OBJECT (child), "efflux-path"), path) == 0)
      return GTK_LIST_BOX_ROW (child);
  return NULL;
}

static void
show_source_row (EffluxWindow *self,
                 const char   *path,
                 const char   *name,
                 const char   *detail)
{
  GtkListBoxRow *row = find_source_row (self, path);
  GtkWidget *box, *title, *sub;

  if (row == NULL)
    {
      row = GTK_LIST_BOX_ROW (gtk_list_box_row_new ());
      g_object_set_data_full (G_OBJECT (row), "efflux-path", g_strdup (path), g_free);
      gtk_widget_set_tooltip_text (GTK_WIDGET (row), path);
      gtk_list_box_append (self->sources_list, GTK_WIDGET (row));
    }
  box = gtk_box_new (GTK_ORIENTATION_VERTICAL, 2);
  title = gtk_label_new (name);
  gtk_label_set_xalign (GTK_LABEL (title), 0.0);
  gtk_label_set_ellipsize (GTK_LABEL (title), PANGO_ELLIPSIZE_END);
  sub = gtk_label_new (detail);
  gtk_label_set_xalign (GTK_LABEL (sub), 0.0);
  gtk_label_set_ellipsize (GTK_LABEL (sub), PANGO_ELLIPSIZE_END);
  gtk_widget_add_css_class (sub, "caption");
  gtk_widget_add_css_class (sub, "dim-label");
  gtk_box_append (GTK_BOX (box), title);
  gtk_box_append (GTK_BOX (box), sub);
  gtk_list_box_row_set_child (row, box);
  gtk_list_box_select_row (self->sources_list, row);
}

static void
source_activated (EffluxWindow  *self,
                  GtkListBoxRow *row)
{
  const char *path = g_object_get_data (G_OBJECT (row), "efflux-path");
  g_autoptr(GFile) file = NULL;

  if (path == NULL)
    return;
  file = g_file_new_for_path (path);
  efflux_window_open (self, file);
}

guint
efflux_window_get_n_sources (EffluxWindow *self)
{
  guint n = 0;

  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), 0);
  for (GtkWidget *child = gtk_widget_get_first_child (GTK_WIDGET (self->sources_list));
       child != NULL; child = gtk_widget_get_next_sibling (child))
    n += GTK_IS_LIST_BOX_ROW (child);
  return n;
}

/* The cube the window shows first: the dossier's first tracer (else its first cube), and the
 * velocity range of the first lobe drawn on it. */
static void
open_dossier (EffluxWindow *self,
              const char   *path)
{
  g_autoptr(GError) error = NULL;
  EffluxDossier *dossier;
  EffluxDossierCube *shown = NULL;
  EffluxDossierLobe *lobe = NULL;

  dossier = efflux_dossier_load (path, &error);
  if (dossier == NULL)
    {
      gtk_label_set_text (self->detail_label, error->message);
      return;
    }
  g_clear_pointer (&self->dossier, efflux_dossier_free);
  self->dossier = dossier;
  g_free (self->source_name);
  self->source_name = g_strdup (dossier->name);
  update_title (self);
  {
    /* Translators: the status of a source in the Sources list, e.g. "2 lobes, 3 cubes" */
    g_autofree char *lobes = g_strdup_printf (g_dngettext (GETTEXT_PACKAGE, "%u lobe", "%u lobes",
                                                           dossier->lobes->len),
                                              dossier->lobes->len);
    g_autofree char *cubes = g_strdup_printf (g_dngettext (GETTEXT_PACKAGE, "%u cube", "%u cubes",
                                                           dossier->cubes->len),
                                              dossier->cubes->len);
    g_autofree char *detail = g_strdup_printf ("%s, %s", lobes, cubes);

    show_source_row (self, path, dossier->name, detail);
  }

  for (guint i = 0; i < dossier->cubes->len && shown == NULL; i++)
    {
      EffluxDossierCube *c = g_ptr_array_index (dossier->cubes, i);

      if (c->role == EFFLUX_CUBE_ROLE_TRACER)
        shown = c;
    }
  if (shown == NULL && dossier->cubes->len > 0)
    shown = g_ptr_array_index (dossier->cubes, 0);
  if (shown == NULL)
    {
      g_autofree char *msg = g_strdup_printf (_("%s: the dossier names no cube"), path);
      gtk_label_set_text (self->detail_label, msg);
      return;
    }
  for (guint i = 0; i < dossier->lobes->len && lobe == NULL; i++)
    {
      EffluxDossierLobe *l = g_ptr_array_index (dossier->lobes, i);

      if (g_strcmp0 (l->cube_id, shown->id) == 0)
        lobe = l;
    }
  if (lobe != NULL)
    start_load (self, shown->abs_path, TRUE, lobe->v1_kms, lobe->v2_kms);
  else
    start_load (self, shown->abs_path, FALSE, 0, 0);
}

void
efflux_window_open (EffluxWindow *self,
                    GFile        *file)
{
  g_autofree char *path = NULL;

  g_return_if_fail (EFFLUX_IS_WINDOW (self));
  g_return_if_fail (G_IS_FILE (file));

  path = g_file_get_path (file);
  if (path == NULL)
    {
      g_autofree char *uri = g_file_get_uri (file);
      g_autofree char *msg = g_strdup_printf (_("%s: only local files can be opened"), uri);
      gtk_label_set_text (self->detail_label, msg);
      return;
    }

  if (g_str_has_suffix (path, ".efflux"))
    {
      open_dossier (self, path);
      return;
    }
  /* a bare cube: no dossier, no source */
  g_clear_pointer (&self->dossier, efflux_dossier_free);
  {
    g_autofree char *base = g_path_get_basename (path);

    show_source_row (self, path, base, _("FITS cube, no dossier"));
  }
  start_load (self, path, FALSE, 0, 0);
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

EffluxSkyView *
efflux_window_get_sky_view (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return self->sky_view;
}

const EffluxCube *
efflux_window_get_cube (EffluxWindow *self)
{
  g_return_val_if_fail (EFFLUX_IS_WINDOW (self), NULL);
  return self->cube;
}

/* ---- actions ---- */

static void
chooser_response (GtkNativeDialog *dialog,
                  int              response,
                  gpointer         user_data)
{
  g_autoptr(EffluxWindow) self = user_data;

  if (response == GTK_RESPONSE_ACCEPT)
    {
      g_autoptr(GFile) file = gtk_file_chooser_get_file (GTK_FILE_CHOOSER (dialog));

      if (file != NULL)
        efflux_window_open (self, file);
    }
  gtk_native_dialog_destroy (dialog);
  g_object_unref (dialog);
}

static void
open_action (GtkWidget  *widget,
             const char *action_name,
             GVariant   *parameter)
{
  EffluxWindow *self = EFFLUX_WINDOW (widget);
  GtkFileChooserNative *chooser;
  g_autoptr(GtkFileFilter) both = gtk_file_filter_new ();
  g_autoptr(GtkFileFilter) dossiers = gtk_file_filter_new ();
  g_autoptr(GtkFileFilter) cubes = gtk_file_filter_new ();

  chooser = gtk_file_chooser_native_new (_("Open a Dossier or a Cube"), GTK_WINDOW (self),
                                         GTK_FILE_CHOOSER_ACTION_OPEN, _("_Open"), _("_Cancel"));
  gtk_file_filter_set_name (both, _("Dossiers and FITS cubes"));
  gtk_file_filter_add_pattern (both, "*.efflux");
  gtk_file_filter_add_pattern (both, "*.fits");
  gtk_file_filter_add_pattern (both, "*.fit");
  gtk_file_filter_add_pattern (both, "*.fts");
  gtk_file_filter_set_name (dossiers, _("Dossiers (.efflux)"));
  gtk_file_filter_add_pattern (dossiers, "*.efflux");
  gtk_file_filter_set_name (cubes, _("FITS cubes"));
  gtk_file_filter_add_pattern (cubes, "*.fits");
  gtk_file_filter_add_pattern (cubes, "*.fit");
  gtk_file_filter_add_pattern (cubes, "*.fts");
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (chooser), both);
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (chooser), dossiers);
  gtk_file_chooser_add_filter (GTK_FILE_CHOOSER (chooser), cubes);
  gtk_native_dialog_set_modal (GTK_NATIVE_DIALOG (chooser), TRUE);
  g_signal_connect (chooser, "response", G_CALLBACK (chooser_response), g_object_ref (self));
  gtk_native_dialog_show (GTK_NATIVE_DIALOG (chooser));
}

static void
zoom_action (GtkWidget  *widget,
             const char *action_name,
             GVariant   *parameter)
{
  EffluxWindow *self = EFFLUX_WINDOW (widget);

  if (g_str_equal (action_name, "win.zoom-in"))
    efflux_sky_view_zoom_in (self->sky_view);
  else if (g_str_equal (action_name, "win.zoom-out"))
    efflux_sky_view_zoom_out (self->sky_view);
  else
    efflux_sky_view_zoom_fit (self->sky_view);
}

static void
cancel_action (GtkWidget  *widget,
               const char *action_name,
               GVariant   *parameter)
{
  cancel_clicked (EFFLUX_WINDOW (widget));
}

static gboolean
drop_cb (GtkDropTarget *target,
         const GValue  *value,
         double         x,
         double         y,
         EffluxWindow  *self)
{
  GSList *files;

  if (!G_VALUE_HOLDS (value, GDK_TYPE_FILE_LIST))
    return FALSE;
  files = gdk_file_list_get_files (g_value_get_boxed (value));
  /* one window shows one dossier or cube: a dossier among the files wins, else the first */
  for (GSList *l = files; l != NULL; l = l->next)
    {
      g_autofree char *name = g_file_get_basename (l->data);

      if (name != NULL && g_str_has_suffix (name, ".efflux"))
        {
          efflux_window_open (self, l->data);
          g_slist_free (files);
          return TRUE;
        }
    }
  if (files != NULL)
    efflux_window_open (self, files->data);
  g_slist_free (files);
  return files != NULL;
}

static void
readout_changed (EffluxSkyView *view,
                 GParamSpec    *pspec,
                 EffluxWindow  *self)
{
  gtk_label_set_text (self->readout_label, efflux_sky_view_get_readout (view));
}

static void
efflux_window_dispose (GObject *object)
{
  EffluxWindow *self = EFFLUX_WINDOW (object);

  if (self->cancellable != NULL)
    g_cancellable_cancel (self->cancellable);
  g_clear_object (&self->cancellable);
  if (self->sky_view != NULL)
    efflux_sky_view_clear (self->sky_view);
  gtk_widget_dispose_template (GTK_WIDGET (self), EFFLUX_TYPE_WINDOW);
  G_OBJECT_CLASS (efflux_window_parent_class)->dispose (object);
}

static void
efflux_window_finalize (GObject *object)
{
  EffluxWindow *self = EFFLUX_WINDOW (object);

  g_clear_pointer (&self->cube, efflux_cube_free);
  g_clear_pointer (&self->dossier, efflux_dossier_free);
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

  /* Referencing the generated resource keeps its object (and the constructor that registers it)
   * when the app is linked from the static library, as the UI tests do. */
  g_assert (efflux_get_resource () != NULL);
  g_type_ensure (EFFLUX_TYPE_SKY_VIEW);
  gtk_widget_class_set_template_from_resource (widget_class, "/org/effluxproject/Efflux/efflux-window.ui");
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, source_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, subtitle_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, detail_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, readout_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, loading_label);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, progress);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, cancel_button);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, loading_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, empty_box);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, sky_view);
  gtk_widget_class_bind_template_child (widget_class, EffluxWindow, sources_list);
  gtk_widget_class_bind_template_callback (widget_class, source_activated);
  gtk_widget_class_bind_template_callback (widget_class, cancel_clicked);

  gtk_widget_class_install_action (widget_class, "win.open", NULL, open_action);
  gtk_widget_class_install_action (widget_class, "win.zoom-in", NULL, zoom_action);
  gtk_widget_class_install_action (widget_class, "win.zoom-out", NULL, zoom_action);
  gtk_widget_class_install_action (widget_class, "win.zoom-fit", NULL, zoom_action);
  gtk_widget_class_install_action (widget_class, "win.cancel", NULL, cancel_action);
  gtk_widget_class_add_binding_action (widget_class, GDK_KEY_Escape, 0, "win.cancel", NULL);
}

/* The program's style sheet and the dark theme variant (maps read best on a dark surround),
 * once per process for the default display. Done here rather than in the application's startup
 * so that every window, also one made without an application (the UI tests), looks the same. */
static void
ensure_style (void)
{
  static gboolean done;
  g_autoptr(GtkCssProvider) css = NULL;
  GdkDisplay *display = gdk_display_get_default ();

  if (done || display == NULL)
    return;
  done = TRUE;
  g_object_set (gtk_settings_get_for_display (display), "gtk-application-prefer-dark-theme", TRUE,
                NULL);
  css = gtk_css_provider_new ();
  gtk_css_provider_load_from_resource (css, "/org/effluxproject/Efflux/style.css");
  gtk_style_context_add_provider_for_display (display, GTK_STYLE_PROVIDER (css),
                                              GTK_STYLE_PROVIDER_PRIORITY_APPLICATION);
}

static void
efflux_window_init (EffluxWindow *self)
{
  g_autoptr(GSimpleActionGroup) group = g_simple_action_group_new ();
  const char *view_props[] = { "colormap", "stretch", "limits", "grid" };
  GtkDropTarget *drop;

  ensure_style ();
  g_mutex_init (&self->progress_lock);
  gtk_widget_init_template (GTK_WIDGET (self));
  update_title (self);

  /* display choices of the sky view as stateful actions for the menu: view.colormap ... */
  for (gsize i = 0; i < G_N_ELEMENTS (view_props); i++)
    {
      g_autoptr(GPropertyAction) action =
        g_property_action_new (view_props[i], self->sky_view, view_props[i]);
      g_action_map_add_action (G_ACTION_MAP (group), G_ACTION (action));
    }
  gtk_widget_insert_action_group (GTK_WIDGET (self), "view", G_ACTION_GROUP (group));

  g_signal_connect_object (self->sky_view, "notify::readout", G_CALLBACK (readout_changed), self, 0);

  drop = gtk_drop_target_new (GDK_TYPE_FILE_LIST, GDK_ACTION_COPY);
  g_signal_connect (drop, "drop", G_CALLBACK (drop_cb), self);
  gtk_widget_add_controller (GTK_WIDGET (self), GTK_EVENT_CONTROLLER (drop));

  gtk_widget_action_set_enabled (GTK_WIDGET (self), "win.cancel", FALSE);
}

EffluxWindow *
efflux_window_new (EffluxApplication *application)
{
  return g_object_new (EFFLUX_TYPE_WINDOW, "application", application, NULL);
}
