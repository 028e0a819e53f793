/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite (run under xvfb-run): the window opens the demo dossier, names the source in its
 * title, reads the dossier's first cube off the UI thread, and draws. */
#include "config.h"

#include <gtk/gtk.h>
#include <string.h>

#include "efflux-application.h"
#include "efflux-window.h"

static void
wait_until_loaded (EffluxWindow *window)
{
  gint64 deadline = g_get_monotonic_time () + 30 * G_USEC_PER_SEC;

  while (efflux_window_is_loading (window) && g_get_monotonic_time () < deadline)
    g_main_context_iteration (NULL, TRUE);
  g_assert_false (efflux_window_is_loading (window));
}

static void
save_screenshot (GtkWidget  *widget,
                 const char *name)
{
  g_autoptr(GdkPaintable) paintable = gtk_widget_paintable_new (widget);
  g_autoptr(GtkSnapshot) snapshot = gtk_snapshot_new ();
  g_autoptr(GskRenderNode) node = NULL;
  g_autoptr(GdkTexture) texture = NULL;
  g_autofree char *path = NULL;
  GskRenderer *renderer;
  int w = gtk_widget_get_width (widget);
  int h = gtk_widget_get_height (widget);

  gdk_paintable_snapshot (paintable, GDK_SNAPSHOT (snapshot), w, h);
  node = gtk_snapshot_free_to_node (g_steal_pointer (&snapshot));
  g_assert_nonnull (node);
  renderer = gtk_native_get_renderer (gtk_widget_get_native (widget));
  texture = gsk_renderer_render_texture (renderer, node, &GRAPHENE_RECT_INIT (0, 0, w, h));
  path = g_build_filename (g_getenv ("G_TEST_BUILDDIR"), name, NULL);
  g_assert_true (gdk_texture_save_to_png (texture, path));
  g_test_message ("screenshot: %s", path);
}

static void
test_demo_opens (void)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(GFile) file = NULL;
  EffluxWindow *window;
  const char *status;

  g_assert_nonnull (demo);
  file = g_file_new_for_path (demo);

  window = efflux_window_new (NULL);
  gtk_window_present (GTK_WINDOW (window));
  efflux_window_open (window, file);
  wait_until_loaded (window);

  /* the title names the demo dossier's [Source] name and the program */
  g_assert_cmpstr (gtk_window_get_title (GTK_WINDOW (window)), ==, "Demo source A - Efflux");
  /* the cube was read: the status line describes its grid, not an error */
  status = efflux_window_get_status (window);
  g_assert_nonnull (strstr (status, "channels"));

  while (gtk_widget_get_width (GTK_WIDGET (window)) == 0)
    g_main_context_iteration (NULL, TRUE);
  for (int i = 0; i < 10; i++)
    g_main_context_iteration (NULL, FALSE);
  save_screenshot (GTK_WIDGET (window), "screenshot-window.png");

  gtk_window_destroy (GTK_WINDOW (window));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/window/demo-opens", test_demo_opens);
  return g_test_run ();
}
