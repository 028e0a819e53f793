/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite: autosave and recovery after a crash (efflux-autosave.h, efflux-recovery.h).
 *
 * A child process (this program run with --child) opens a copy of the demo dossier as an
 * EffluxDocument with its EffluxAutosave and makes one edit every 100 ms through the document API
 * (a key of its own, edit-NNN, and the blue lobe's velocity range), printing each edit with its
 * CLOCK_MONOTONIC time. It is killed with SIGKILL about 3.5 s in. The recovery file must then hold
 * every edit made 2 s or more before the kill (the promise: at most 2 s behind), as one
 * consistent state (the edits 0..j and the velocity of edit j, nothing torn), and the dossier
 * itself must be untouched. The window then opens the dossier, offers the recovery, and Recover
 * brings back exactly those edits as one unsaved change that Undo takes back; saving removes the
 * recovery file. Discard removes it and leaves the dossier as on disk. */
#include "config.h"

#include <gtk/gtk.h>
#include <glib/gstdio.h>
#include <errno.h>
#include <math.h>
#include <poll.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/wait.h>
#include <unistd.h>

#include "efflux-application.h"
#include "efflux-autosave.h"
#include "efflux-document.h"
#include "efflux-dossier.h"
#include "efflux-recovery.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"

#define EDIT_GROUP "Autosave test"
#define EDIT_MS 100
#define KILL_AFTER_US (3500 * 1000)
#define BEHIND_US (2 * G_USEC_PER_SEC)

/* The blue lobe's lower velocity after edit i (the demo's is -13.5). */
static double
edit_v1 (int i)
{
  return -13.5 + 0.01 * (i + 1);
}

/* ---- the child ---- */

typedef struct
{
  EffluxDocument *document;
  int             i;
} Child;

static gboolean
child_edit (gpointer user_data)
{
  Child *child = user_data;
  g_autoptr(GError) error = NULL;
  g_autofree char *key = g_strdup_printf ("edit-%03d", child->i);
  g_autofree char *value = g_strdup_printf ("%d", child->i);

  if (!efflux_document_set_key (child->document, EDIT_GROUP, key, value, 0, &error)
      || !efflux_document_set_lobe_velocity (child->document, "blue", edit_v1 (child->i), 3.2, 0, &error))
    {
      fprintf (stderr, "child: %s\n", error->message);
      exit (3);
    }
  /* after the edit: the time from which the recovery file must hold it within 2 s */
  printf ("EDIT %d %" G_GINT64_FORMAT "\n", child->i, g_get_monotonic_time ());
  fflush (stdout);
  child->i++;
  return child->i < 600 ? G_SOURCE_CONTINUE : G_SOURCE_REMOVE;
}

static int
run_child (const char *path)
{
  g_autoptr(GError) error = NULL;
  g_autoptr(GMainLoop) loop = g_main_loop_new (NULL, FALSE);
  g_autoptr(EffluxAutosave) autosave = NULL;
  Child child = { 0 };

  child.document = efflux_document_load (path, &error);
  if (child.document == NULL)
    {
      fprintf (stderr, "child: %s\n", error->message);
      return 2;
    }
  autosave = efflux_autosave_new (child.document, NULL);
  printf ("READY\n");
  fflush (stdout);
  g_timeout_add (EDIT_MS, child_edit, &child);
  g_main_loop_run (loop);
  return 0;
}

/* ---- helpers ---- */

static GtkWidget *
find_dialog (GtkWindow *parent)
{
  GListModel *toplevels = gtk_window_get_toplevels ();

  for (guint i = 0; i < g_list_model_get_n_items (toplevels); i++)
    {
      g_autoptr(GtkWindow) w = g_list_model_get_item (toplevels, i);

      if (GTK_IS_MESSAGE_DIALOG (w) && gtk_window_get_transient_for (w) == parent)
        return GTK_WIDGET (w);
    }
  return NULL;
}

/* The copy of the demo dossier in dir, its cube paths pointing back at the demo cubes (Save As). */
static char *
copy_demo (const char *dir)
{
  g_autofree char *demo = efflux_application_find_demo ();
  g_autoptr(GError) error = NULL;
  g_autoptr(EffluxDossier) d = NULL;
  char *path = g_build_filename (dir, "copy.efflux", NULL);

  g_assert_nonnull (demo);
  d = efflux_dossier_load (demo, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_dossier_save_as (d, path, &error));
  g_assert_no_error (error);
  return path;
}

static int
count_edits (const EffluxDossier *d)
{
  int n = 0;

  while (TRUE)
    {
      g_autofree char *key = g_strdup_printf ("edit-%03d", n);
      g_autofree char *value = g_key_file_get_value (d->keyfile, EDIT_GROUP, key, NULL);

      if (value == NULL)
        break;
      g_assert_cmpint (atoi (value), ==, n);
      n++;
    }
  return n;
}

/* The state of edit j: edits 0..j and the velocity of edit j (-1: none, the dossier as on disk). */
static void
assert_state (const EffluxDossier *d,
              int                  j)
{
  const EffluxDossierLobe *blue = efflux_dossier_find_lobe (d, "blue");
  gsize n_keys = 0;
  g_auto(GStrv) keys = g_key_file_get_keys (d->keyfile, EDIT_GROUP, &n_keys, NULL);

  g_assert_nonnull (blue);
  g_assert_cmpint (count_edits (d), ==, j + 1);
  g_assert_cmpuint (n_keys, ==, (gsize) (j + 1));
  g_assert_cmpfloat_with_epsilon (blue->v1_kms, j >= 0 ? edit_v1 (j) : -13.5, 1e-9);
  g_assert_cmpfloat_with_epsilon (blue->v2_kms, 3.2, 1e-9);
}

/* ---- the test ---- */

static void
test_crash_and_recover (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-autosave-XXXXXX", &error);
  g_autofree char *path = NULL;
  g_autofree char *recovery = NULL;
  g_autofree char *before = NULL;
  g_autofree char *after = NULL;
  g_autofree char *self_exe = g_file_read_link ("/proc/self/exe", NULL);
  g_autoptr(GArray) times = g_array_new (FALSE, TRUE, sizeof (gint64));
  g_autoptr(GString) pending = g_string_new (NULL);
  g_autoptr(EffluxDossier) kept = NULL;
  g_auto(GStrv) envp = g_environ_setenv (g_get_environ (), "EFFLUX_AUTOSAVE", "1", TRUE);
  const char *argv[] = { self_exe, "--child", NULL, NULL };
  gint64 t_kill = 0, t_start = 0;
  gboolean ready = FALSE;
  int out_fd = -1, status = 0, need = -1, j;
  GPid pid;

  g_assert_no_error (error);
  g_assert_nonnull (self_exe);
  path = copy_demo (dir);
  recovery = efflux_recovery_path (path);
  g_assert_true (g_file_get_contents (path, &before, NULL, NULL));
  argv[2] = path;

  g_assert_true (g_spawn_async_with_pipes (NULL, (char **) argv, envp, G_SPAWN_DO_NOT_REAP_CHILD,
                                           NULL, NULL, &pid, NULL, &out_fd, NULL, &error));
  g_assert_no_error (error);

  /* read "EDIT i t" lines; kill 3.5 s after the first edit */
  while (TRUE)
    {
      struct pollfd pfd = { .fd = out_fd, .events = POLLIN };
      char buf[4096];
      ssize_t n;
      char *nl;

      if (t_start != 0 && t_kill == 0 && g_get_monotonic_time () >= t_start + KILL_AFTER_US)
        {
          t_kill = g_get_monotonic_time ();
          g_assert_cmpint (kill (pid, SIGKILL), ==, 0);
        }
      if (poll (&pfd, 1, 20) <= 0)
        {
          g_assert_true (t_start == 0 || g_get_monotonic_time () < t_start + 30 * G_USEC_PER_SEC);
          continue;
        }
      n = read (out_fd, buf, sizeof buf);
      if (n <= 0)
        break;
      g_string_append_len (pending, buf, n);
      while ((nl = strchr (pending->str, '\n')) != NULL)
        {
          int i;
          gint64 t;

          *nl = '\0';
          if (g_str_equal (pending->str, "READY"))
            ready = TRUE;
          else
            {
              g_assert_cmpint (sscanf (pending->str, "EDIT %d %" G_GINT64_FORMAT, &i, &t), ==, 2);
              g_assert_cmpint (i, ==, (int) times->len);
              g_array_append_val (times, t);
              if (t_start == 0)
                t_start = t;
            }
          g_string_erase (pending, 0, nl - pending->str + 1);
        }
    }
  close (out_fd);
  g_assert_cmpint (waitpid (pid, &status, 0), ==, pid);
  g_spawn_close_pid (pid);
  g_assert_true (ready);
  g_assert_true (WIFSIGNALED (status) && WTERMSIG (status) == SIGKILL);

  /* the edits made 2 s or more before the kill */
  for (guint i = 0; i < times->len; i++)
    if (g_array_index (times, gint64, i) <= t_kill - BEHIND_US)
      need = (int) i;
  g_test_message ("%u edits made, killed %.2f s after the first; %d made >= 2 s before the kill",
                  times->len, (t_kill - t_start) / 1e6, need + 1);
  g_assert_cmpint (need, >=, 5);

  /* the recovery file: one consistent state j >= need, the dossier untouched */
  kept = efflux_recovery_load (path, &error);
  g_assert_no_error (error);
  j = count_edits (kept) - 1;
  g_test_message ("the recovery file holds edits 0..%d (%d required)", j, need);
  g_assert_cmpint (j, >=, need);
  g_assert_cmpint (j, <, (int) times->len);
  assert_state (kept, j);
  g_assert_true (g_file_get_contents (path, &after, NULL, NULL));
  g_assert_cmpstr (after, ==, before);

  /* the window offers it; Recover applies it as one unsaved, undoable change */
  g_setenv ("EFFLUX_AUTOSAVE", "1", TRUE);
  {
    g_autoptr(GFile) file = g_file_new_for_path (path);
    EffluxWindow *window = efflux_ui_test_open_window (file, 0, 0);
    EffluxDocument *document;
    GtkWidget *dialog;
    g_autofree char *text = NULL;
    gint64 deadline;

    /* the dossier is the window's (and the offer made) once its cube is read */
    efflux_ui_test_wait_until_loaded_in_steps (window);
    document = efflux_window_get_document (window);
    g_assert_nonnull (document);
    assert_state (efflux_document_get_dossier (document), -1);
    dialog = find_dialog (GTK_WINDOW (window));
    g_assert_nonnull (dialog);
    /* the dialog names the file and the time of the last autosave */
    g_object_get (dialog, "secondary-text", &text, NULL);
    g_assert_nonnull (strstr (text, path));
    g_assert_nonnull (strstr (text, "copy.efflux.recovery"));
    {
      gint64 mtime_us = 0;
      g_autoptr(GDateTime) when = NULL;
      g_autofree char *stamp = NULL;

      g_assert_true (efflux_recovery_exists (path, &mtime_us));
      when = g_date_time_new_from_unix_local (mtime_us / G_USEC_PER_SEC);
      stamp = g_date_time_format (when, "%Y-%m-%d %H:%M:%S");
      g_assert_nonnull (strstr (text, stamp));
    }
    gtk_dialog_response (GTK_DIALOG (dialog), EFFLUX_AUTOSAVE_RECOVER);
    g_assert_null (find_dialog (GTK_WINDOW (window)));
    g_assert_true (efflux_window_get_document (window) == document);
    assert_state (efflux_document_get_dossier (document), j);
    g_assert_true (efflux_document_get_modified (document));
    g_assert_cmpuint (efflux_document_get_n_undo (document), ==, 1);
    g_assert_nonnull (efflux_window_get_error (window));
    g_assert_nonnull (strstr (efflux_window_get_error (window), "recovered"));
    /* Undo: the dossier as on disk, unmodified (and no recovery file left to offer) */
    g_assert_true (efflux_document_undo (document));
    assert_state (efflux_document_get_dossier (document), -1);
    g_assert_false (efflux_document_get_modified (document));
    deadline = g_get_monotonic_time () + 5 * G_USEC_PER_SEC;
    while (g_file_test (recovery, G_FILE_TEST_EXISTS) && g_get_monotonic_time () < deadline)
      efflux_ui_test_iterate_ms (20);
    g_assert_false (g_file_test (recovery, G_FILE_TEST_EXISTS));
    /* Redo: modified again, and autosaved again within 2 s */
    g_assert_true (efflux_document_redo (document));
    assert_state (efflux_document_get_dossier (document), j);
    deadline = g_get_monotonic_time () + BEHIND_US;
    while (!g_file_test (recovery, G_FILE_TEST_EXISTS) && g_get_monotonic_time () < deadline)
      efflux_ui_test_iterate_ms (20);
    g_assert_true (g_file_test (recovery, G_FILE_TEST_EXISTS));
    {
      g_autoptr(EffluxDossier) again = efflux_recovery_load (path, &error);

      g_assert_no_error (error);
      assert_state (again, j);
    }
    /* Save: the dossier holds the edits, the recovery file goes */
    g_assert_true (efflux_document_save (document, NULL, &error));
    g_assert_no_error (error);
    deadline = g_get_monotonic_time () + 5 * G_USEC_PER_SEC;
    while (g_file_test (recovery, G_FILE_TEST_EXISTS) && g_get_monotonic_time () < deadline)
      efflux_ui_test_iterate_ms (20);
    g_assert_false (g_file_test (recovery, G_FILE_TEST_EXISTS));
    {
      g_autoptr(EffluxDossier) saved = efflux_dossier_load (path, &error);

      g_assert_no_error (error);
      assert_state (saved, j);
    }
    gtk_window_destroy (GTK_WINDOW (window));
  }
  g_assert_false (g_file_test (recovery, G_FILE_TEST_EXISTS));
  g_assert_no_errno (g_unlink (path));
  g_assert_no_errno (g_rmdir (dir));
}

/* Discard removes the kept edits; Later keeps them, and autosave writes nothing over them. */
static void
test_discard_and_later (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-autosave-XXXXXX", &error);
  g_autofree char *path = copy_demo (dir);
  g_autofree char *recovery = efflux_recovery_path (path);
  g_autofree char *kept_text = NULL;
  g_autoptr(GFile) file = g_file_new_for_path (path);

  g_setenv ("EFFLUX_AUTOSAVE", "1", TRUE);
  /* kept edits: the demo with edit 0..4 */
  {
    g_autoptr(EffluxDossier) d = efflux_dossier_load (path, &error);

    g_assert_no_error (error);
    for (int i = 0; i < 5; i++)
      {
        g_autofree char *key = g_strdup_printf ("edit-%03d", i);
        g_autofree char *value = g_strdup_printf ("%d", i);

        g_key_file_set_value (d->keyfile, EDIT_GROUP, key, value);
      }
    g_assert_true (efflux_recovery_write (d, path, &error));
    g_assert_no_error (error);
    g_assert_true (g_file_get_contents (recovery, &kept_text, NULL, NULL));
  }

  /* Later: kept, the banner says so; an edit is not written over the kept file */
  {
    EffluxWindow *window = efflux_ui_test_open_window (file, 0, 0);
    EffluxDocument *document;
    GtkWidget *dialog;
    g_autofree char *now_text = NULL;

    /* the dossier is the window's (and the offer made) once its cube is read */
    efflux_ui_test_wait_until_loaded_in_steps (window);
    document = efflux_window_get_document (window);
    dialog = find_dialog (GTK_WINDOW (window));
    g_assert_nonnull (dialog);
    gtk_dialog_response (GTK_DIALOG (dialog), EFFLUX_AUTOSAVE_LATER);
    g_assert_false (efflux_document_get_modified (document));
    g_assert_nonnull (efflux_window_get_error (window));
    g_assert_nonnull (strstr (efflux_window_get_error (window), recovery));
    g_assert_true (efflux_document_set_lobe_velocity (document, "blue", -12.0, 3.2, 0, &error));
    g_assert_no_error (error);
    efflux_ui_test_iterate_ms (EFFLUX_AUTOSAVE_DELAY_MS + 1000);
    g_assert_true (g_file_get_contents (recovery, &now_text, NULL, NULL));
    g_assert_cmpstr (now_text, ==, kept_text);
    /* undo back to the saved state: the kept file still stays */
    g_assert_true (efflux_document_undo (document));
    efflux_ui_test_iterate_ms (300);
    g_assert_true (g_file_test (recovery, G_FILE_TEST_EXISTS));
    gtk_window_destroy (GTK_WINDOW (window));
    g_assert_true (g_file_test (recovery, G_FILE_TEST_EXISTS));
  }

  /* Discard: removed, the dossier as on disk */
  {
    EffluxWindow *window = efflux_ui_test_open_window (file, 0, 0);
    EffluxDocument *document;
    GtkWidget *dialog;

    /* the dossier is the window's (and the offer made) once its cube is read */
    efflux_ui_test_wait_until_loaded_in_steps (window);
    document = efflux_window_get_document (window);
    dialog = find_dialog (GTK_WINDOW (window));
    g_assert_nonnull (dialog);
    gtk_dialog_response (GTK_DIALOG (dialog), EFFLUX_AUTOSAVE_DISCARD);
    g_assert_false (g_file_test (recovery, G_FILE_TEST_EXISTS));
    g_assert_false (efflux_document_get_modified (document));
    g_assert_false (efflux_document_can_undo (document));
    assert_state (efflux_document_get_dossier (document), -1);
    /* an edit now is autosaved within 2 s; closing without saving removes it again */
    g_assert_true (efflux_document_set_lobe_velocity (document, "blue", -12.0, 3.2, 0, &error));
    g_assert_no_error (error);
    {
      gint64 deadline = g_get_monotonic_time () + BEHIND_US;

      while (!g_file_test (recovery, G_FILE_TEST_EXISTS) && g_get_monotonic_time () < deadline)
        efflux_ui_test_iterate_ms (20);
    }
    g_assert_true (g_file_test (recovery, G_FILE_TEST_EXISTS));
    gtk_window_destroy (GTK_WINDOW (window));
    /* destroyed with unsaved edits and no question (as at the end of a session): they stay */
    g_assert_true (g_file_test (recovery, G_FILE_TEST_EXISTS));
    {
      g_autoptr(EffluxDossier) again = efflux_recovery_load (path, &error);

      g_assert_no_error (error);
      g_assert_cmpfloat_with_epsilon (efflux_dossier_find_lobe (again, "blue")->v1_kms, -12.0, 1e-9);
    }
  }
  g_assert_no_errno (g_unlink (recovery));
  g_assert_no_errno (g_unlink (path));
  g_assert_no_errno (g_rmdir (dir));
}

/* The app's Save As (efflux_document_save_as): the copy is written elsewhere with its cube paths
 * rewritten (the same files, by inode), the document is unmodified at its new path, the old
 * recovery file goes, and undo and redo across the move keep naming the same files. */
static void
test_save_as (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-autosave-XXXXXX", &error);
  g_autofree char *path = copy_demo (dir);
  g_autofree char *recovery = efflux_recovery_path (path);
  g_autofree char *sub = g_build_filename (dir, "moved", "deeper", NULL);
  g_autofree char *target = g_build_filename (sub, "moved.efflux", NULL);
  g_autofree char *target_recovery = efflux_recovery_path (target);
  g_autofree char *co_before = NULL;
  g_autoptr(EffluxDocument) document = NULL;
  g_autoptr(EffluxAutosave) autosave = NULL;
  GStatBuf a, b;
  gint64 deadline;

  g_assert_no_error (error);
  g_assert_cmpint (g_mkdir_with_parents (sub, 0755), ==, 0);
  g_setenv ("EFFLUX_AUTOSAVE", "1", TRUE);
  document = efflux_document_load (path, &error);
  g_assert_no_error (error);
  autosave = efflux_autosave_new (document, NULL);
  co_before = g_strdup (efflux_dossier_find_cube (efflux_document_get_dossier (document), "co")->abs_path);
  /* an edit of a cube path itself, to see the history follow the move */
  g_assert_true (efflux_document_set_key (document, "Cube sio", "path", co_before, 0, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_document_set_lobe_velocity (document, "blue", -12.5, 3.2, 0, &error));
  g_assert_no_error (error);
  deadline = g_get_monotonic_time () + BEHIND_US;
  while (!g_file_test (recovery, G_FILE_TEST_EXISTS) && g_get_monotonic_time () < deadline)
    efflux_ui_test_iterate_ms (20);
  g_assert_true (g_file_test (recovery, G_FILE_TEST_EXISTS));

  g_assert_true (efflux_document_save_as (document, target, &error));
  g_assert_no_error (error);
  g_assert_cmpstr (efflux_document_get_path (document), ==, target);
  g_assert_false (efflux_document_get_modified (document));
  {
    g_autoptr(EffluxDossier) saved = efflux_dossier_load (target, &error);
    const EffluxDossier *d = efflux_document_get_dossier (document);

    g_assert_no_error (error);
    for (guint i = 0; i < saved->cubes->len; i++)
      {
        EffluxDossierCube *c = g_ptr_array_index (saved->cubes, i);
        EffluxDossierCube *m = efflux_dossier_find_cube (d, c->id);

        g_assert_cmpint (g_stat (c->abs_path, &a), ==, 0);
        g_assert_cmpint (g_stat (m->abs_path, &b), ==, 0);
        g_assert_cmpuint (a.st_ino, ==, b.st_ino);
        g_assert_cmpstr (c->path, ==, m->path);
      }
    g_assert_cmpfloat (efflux_dossier_find_lobe (saved, "blue")->v1_kms, ==, -12.5);
  }
  /* the old dossier's recovery file goes: its edits are saved (elsewhere) */
  deadline = g_get_monotonic_time () + 5 * G_USEC_PER_SEC;
  while (g_file_test (recovery, G_FILE_TEST_EXISTS) && g_get_monotonic_time () < deadline)
    efflux_ui_test_iterate_ms (20);
  g_assert_false (g_file_test (recovery, G_FILE_TEST_EXISTS));
  /* undo both edits: the demo's own cubes, named from the new place */
  g_assert_true (efflux_document_undo (document));
  g_assert_true (efflux_document_undo (document));
  {
    g_autoptr(EffluxDossier) demo = efflux_dossier_load (path, &error);
    const EffluxDossier *d = efflux_document_get_dossier (document);

    g_assert_no_error (error);
    for (guint i = 0; i < demo->cubes->len; i++)
      {
        EffluxDossierCube *c = g_ptr_array_index (demo->cubes, i);

        g_assert_cmpint (g_stat (c->abs_path, &a), ==, 0);
        g_assert_cmpint (g_stat (efflux_dossier_find_cube (d, c->id)->abs_path, &b), ==, 0);
        g_assert_cmpuint (a.st_ino, ==, b.st_ino);
      }
  }
  /* redo: the edited path again names the 12CO cube */
  g_assert_true (efflux_document_redo (document));
  g_assert_cmpint (g_stat (co_before, &a), ==, 0);
  g_assert_cmpint (g_stat (efflux_dossier_find_cube (efflux_document_get_dossier (document), "sio")->abs_path,
                           &b), ==, 0);
  g_assert_cmpuint (a.st_ino, ==, b.st_ino);
  efflux_autosave_discard (autosave);
  efflux_autosave_close (autosave);
  g_assert_false (g_file_test (target_recovery, G_FILE_TEST_EXISTS));
  g_assert_no_errno (g_unlink (target));
  g_assert_no_errno (g_rmdir (sub));
  {
    g_autofree char *moved = g_path_get_dirname (sub);

    g_assert_no_errno (g_rmdir (moved));
  }
  g_assert_no_errno (g_unlink (path));
  g_assert_no_errno (g_rmdir (dir));
}

/* At start (efflux_autosave_find_kept): the recent dossier whose kept edits are newer than it. The
 * recent-files store is the test's own (XDG_DATA_HOME set in main). */
static void
test_find_kept (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-autosave-XXXXXX", &error);
  g_autofree char *path = copy_demo (dir);
  g_autofree char *uri = g_filename_to_uri (path, NULL, NULL);
  g_autofree char *found = NULL;
  g_autoptr(EffluxDossier) d = NULL;
  gint64 mtime_us = 0;

  g_setenv ("EFFLUX_AUTOSAVE", "1", TRUE);
  GtkRecentData data = { .mime_type = (char *) "text/plain", .app_name = (char *) "test-ui-autosave",
                         .app_exec = (char *) "test-ui-autosave %u" };

  /* add_full: at once (add_item asks the file's type asynchronously first) */
  g_assert_true (gtk_recent_manager_add_full (gtk_recent_manager_get_default (), uri, &data));
  g_assert_true (gtk_recent_manager_has_item (gtk_recent_manager_get_default (), uri));
  /* no recovery file: nothing */
  found = efflux_autosave_find_kept ();
  g_assert_null (found);
  /* kept edits newer than the dossier: that dossier */
  d = efflux_dossier_load (path, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_recovery_write (d, path, &error));
  {
    /* the dossier 10 s older than its recovery file */
    g_autoptr(GFile) f = g_file_new_for_path (path);

    g_assert_true (efflux_recovery_exists (path, &mtime_us));
    g_assert_true (g_file_set_attribute_uint64 (f, G_FILE_ATTRIBUTE_TIME_MODIFIED,
                                                (guint64) (mtime_us / G_USEC_PER_SEC - 10),
                                                G_FILE_QUERY_INFO_NONE, NULL, &error));
    g_assert_no_error (error);
  }
  found = efflux_autosave_find_kept ();
  g_assert_cmpstr (found, ==, path);
  g_clear_pointer (&found, g_free);
  /* the dossier saved after them (by another program): not offered at start */
  {
    g_autoptr(GFile) f = g_file_new_for_path (path);

    g_assert_true (g_file_set_attribute_uint64 (f, G_FILE_ATTRIBUTE_TIME_MODIFIED,
                                                (guint64) (mtime_us / G_USEC_PER_SEC + 10),
                                                G_FILE_QUERY_INFO_NONE, NULL, &error));
  }
  found = efflux_autosave_find_kept ();
  g_assert_null (found);
  g_assert_true (gtk_recent_manager_remove_item (gtk_recent_manager_get_default (), uri, NULL));
  g_assert_true (efflux_recovery_remove (path, &error));
  g_assert_no_errno (g_unlink (path));
  g_assert_no_errno (g_rmdir (dir));
}

static gboolean
remove_tree (const char *path)
{
  g_autoptr(GDir) d = g_dir_open (path, 0, NULL);
  const char *name;

  while (d != NULL && (name = g_dir_read_name (d)) != NULL)
    {
      g_autofree char *p = g_build_filename (path, name, NULL);

      if (g_file_test (p, G_FILE_TEST_IS_DIR) && !g_file_test (p, G_FILE_TEST_IS_SYMLINK))
        remove_tree (p);
      else
        g_unlink (p);
    }
  return g_rmdir (path) == 0;
}

int
main (int    argc,
      char **argv)
{
  g_autofree char *data_home = NULL;
  int status;

  if (argc == 3 && g_str_equal (argv[1], "--child"))
    return run_child (argv[2]);
  /* a private recent-files store (recently-used.xbel under XDG_DATA_HOME) */
  data_home = g_dir_make_tmp ("efflux-autosave-data-XXXXXX", NULL);
  g_assert_nonnull (data_home);
  g_setenv ("XDG_DATA_HOME", data_home, TRUE);
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/autosave/crash-and-recover", test_crash_and_recover);
  g_test_add_func ("/ui/autosave/discard-and-later", test_discard_and_later);
  g_test_add_func ("/ui/autosave/save-as", test_save_as);
  g_test_add_func ("/ui/autosave/find-kept", test_find_kept);
  status = g_test_run ();
  g_assert_true (remove_tree (data_home));
  return status;
}
