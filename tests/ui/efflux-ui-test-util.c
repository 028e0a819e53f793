/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Helpers shared by the UI tests: see efflux-ui-test-util.h. */
#include "config.h"

#include <glib/gstdio.h>

#include "efflux-ui-test-util.h"

/* ---- the main loop ---- */

void
efflux_ui_test_iterate (void)
{
  if (!g_main_context_iteration (NULL, FALSE))
    g_usleep (2000);
}

void
efflux_ui_test_spin (double seconds)
{
  gint64 end = g_get_monotonic_time () + (gint64) (seconds * G_USEC_PER_SEC);

  while (g_get_monotonic_time () < end)
    efflux_ui_test_iterate ();
}

static gboolean
wake (gpointer data)
{
  *(gboolean *) data = TRUE;
  return G_SOURCE_REMOVE;
}

void
efflux_ui_test_iterate_ms (guint ms)
{
  gboolean done = FALSE;

  g_timeout_add (ms, wake, &done);
  while (!done)
    g_main_context_iteration (NULL, TRUE);
}

typedef enum
{
  BLOCKING,   /* g_main_context_iteration (NULL, TRUE) */
  POLLING,    /* efflux_ui_test_iterate */
  STEPS_20MS, /* efflux_ui_test_iterate_ms (20) */
} Iteration;

/* Iterate while cond (data) is `holds`, at most `seconds`; then assert it no longer is. */
static void
run_while (EffluxUiTestCondition cond,
           gpointer              data,
           gboolean              holds,
           double                seconds,
           Iteration             how)
{
  gint64 deadline = g_get_monotonic_time () + (gint64) (seconds * G_USEC_PER_SEC);

  while (!cond (data) == !holds && g_get_monotonic_time () < deadline)
    {
      if (how == BLOCKING)
        g_main_context_iteration (NULL, TRUE);
      else if (how == POLLING)
        efflux_ui_test_iterate ();
      else
        efflux_ui_test_iterate_ms (20);
    }
  if (holds)
    g_assert_false (cond (data));
  else
    g_assert_true (cond (data));
}

void
efflux_ui_test_iterate_until (EffluxUiTestCondition done,
                              gpointer              data,
                              double                seconds)
{
  run_while (done, data, FALSE, seconds, BLOCKING);
}

void
efflux_ui_test_poll_until (EffluxUiTestCondition done,
                           gpointer              data,
                           double                seconds)
{
  run_while (done, data, FALSE, seconds, POLLING);
}

void
efflux_ui_test_iterate_while (EffluxUiTestCondition cond,
                              gpointer              data,
                              double                seconds)
{
  run_while (cond, data, TRUE, seconds, BLOCKING);
}

/* ---- windows ---- */

EffluxWindow *
efflux_ui_test_open_window (GFile *file,
                            int    width,
                            int    height)
{
  EffluxWindow *window = efflux_window_new (NULL);

  if (width > 0)
    gtk_window_set_default_size (GTK_WINDOW (window), width, height);
  gtk_window_present (GTK_WINDOW (window));
  efflux_window_open (window, file);
  return window;
}

/* ---- the window's load ---- */

static gboolean
window_is_loading (gpointer window)
{
  return efflux_window_is_loading (window);
}

static void
wait_loaded (EffluxWindow *window,
             Iteration     how)
{
  run_while (window_is_loading, window, TRUE, 60, how);
}

void
efflux_ui_test_wait_until_loaded (EffluxWindow *window)
{
  wait_loaded (window, BLOCKING);
}

void
efflux_ui_test_wait_until_loaded_in_steps (EffluxWindow *window)
{
  wait_loaded (window, STEPS_20MS);
}

void
efflux_ui_test_poll_until_loaded (EffluxWindow *window)
{
  wait_loaded (window, POLLING);
}

/* ---- frames, rendering and screenshots ---- */

gboolean
efflux_ui_test_count_frame (GtkWidget     *widget,
                            GdkFrameClock *clock,
                            gpointer       user_data)
{
  (*(int *) user_data)++;
  return G_SOURCE_CONTINUE;
}

int
efflux_ui_test_run_frames (GtkWidget *widget,
                           int        n,
                           gboolean   until_sized)
{
  int frames = 0;
  gint64 deadline = g_get_monotonic_time () + 20 * G_USEC_PER_SEC;
  guint id = gtk_widget_add_tick_callback (widget, efflux_ui_test_count_frame, &frames, NULL);

  while ((frames < n || (until_sized && gtk_widget_get_width (widget) == 0))
         && g_get_monotonic_time () < deadline)
    g_main_context_iteration (NULL, TRUE);
  gtk_widget_remove_tick_callback (widget, id);
  return frames;
}

void
efflux_ui_test_wait_for_frames (GtkWidget *widget,
                                int        n)
{
  g_assert_cmpint (efflux_ui_test_run_frames (widget, n, TRUE), >=, n);
}

GdkTexture *
efflux_ui_test_render (GtkWidget *widget)
{
  g_autoptr(GdkPaintable) paintable = gtk_widget_paintable_new (widget);
  GtkSnapshot *snapshot = gtk_snapshot_new ();
  g_autoptr(GskRenderNode) node = NULL;
  int w = gtk_widget_get_width (widget);
  int h = gtk_widget_get_height (widget);

  gdk_paintable_snapshot (paintable, GDK_SNAPSHOT (snapshot), w, h);
  node = gtk_snapshot_free_to_node (snapshot);
  g_assert_nonnull (node);
  return gsk_renderer_render_texture (gtk_native_get_renderer (gtk_widget_get_native (widget)),
                                      node, &GRAPHENE_RECT_INIT (0, 0, w, h));
}

void
efflux_ui_test_save_screenshot (GtkWidget  *widget,
                                const char *name)
{
  g_autoptr(GdkTexture) texture = efflux_ui_test_render (widget);
  g_autofree char *path = g_build_filename (g_getenv ("G_TEST_BUILDDIR"), name, NULL);

  g_assert_true (gdk_texture_save_to_png (texture, path));
  g_test_message ("screenshot: %s", path);
}

void
efflux_ui_test_save_screenshot_after_frames (GtkWidget  *widget,
                                             const char *name,
                                             int         n)
{
  g_assert_cmpint (efflux_ui_test_run_frames (widget, n, FALSE), >=, n);
  efflux_ui_test_save_screenshot (widget, name);
}

/* ---- widget trees ---- */

GtkWidget *
efflux_ui_test_find_widget (GtkWidget *root,
                            GType      type)
{
  return efflux_ui_test_find_widget_with_tooltip (root, type, NULL);
}

/* tooltip NULL: any tooltip */
GtkWidget *
efflux_ui_test_find_widget_with_tooltip (GtkWidget  *root,
                                         GType       type,
                                         const char *tooltip)
{
  if (G_TYPE_CHECK_INSTANCE_TYPE (root, type)
      && (tooltip == NULL || g_strcmp0 (gtk_widget_get_tooltip_text (root), tooltip) == 0))
    return root;
  for (GtkWidget *c = gtk_widget_get_first_child (root); c != NULL; c = gtk_widget_get_next_sibling (c))
    {
      GtkWidget *found = efflux_ui_test_find_widget_with_tooltip (c, type, tooltip);

      if (found != NULL)
        return found;
    }
  return NULL;
}

void
efflux_ui_test_collect_widgets (GtkWidget *root,
                                GType      type,
                                GPtrArray *found)
{
  if (G_TYPE_CHECK_INSTANCE_TYPE (root, type))
    g_ptr_array_add (found, root);
  for (GtkWidget *c = gtk_widget_get_first_child (root); c != NULL; c = gtk_widget_get_next_sibling (c))
    efflux_ui_test_collect_widgets (c, type, found);
}

GtkWindow *
efflux_ui_test_find_visible_toplevel (GType type)
{
  g_autoptr(GList) windows = gtk_window_list_toplevels ();

  for (GList *l = windows; l != NULL; l = l->next)
    if (G_TYPE_CHECK_INSTANCE_TYPE (l->data, type) && gtk_widget_get_visible (l->data))
      return l->data;
  return NULL;
}

/* ---- folders ---- */

void
efflux_ui_test_remove_flat_dir (const char *dir)
{
  g_autoptr(GDir) d = g_dir_open (dir, 0, NULL);
  const char *name;

  while (d != NULL && (name = g_dir_read_name (d)) != NULL)
    {
      g_autofree char *p = g_build_filename (dir, name, NULL);

      g_assert_cmpint (g_remove (p), ==, 0);
    }
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}
