/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The recovery file of a dossier (efflux-recovery.h): round trip, refusal of a foreign file, and
 * crash safety: a child process (tests/recovery-child.c) edits a dossier and writes its recovery
 * file every 0.5 s; it is killed with SIGKILL mid-way; the recovered dossier must hold every edit
 * made up to 2 s before the kill, and the dossier itself must be untouched. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <fcntl.h>
#include <math.h>
#include <signal.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>

#include "efflux-dossier.h"
#include "efflux-recovery.h"

static const char dossier_text[] =
  "# the user's own comment\n"
  "[Source]\nname=Recovery test\nra-deg=52.263\ndec-deg=31.255\ndistance-pc=100\nvsys-kms=6.2\n"
  "[Assumptions]\ntex-k=50\nco-abundance=1e-4\n"
  "[Cube co]\npath=cube.fits\nline=12CO 2-1\n"
  "[Lobe blue-1]\nkind=blue\ncube=co\npolygon=52.2640,31.2560;52.2660,31.2580;52.2620,31.2590\n"
  "velocity-kms=-4;3\nnote=\nauthor=\n";

static char *
make_dossier (char **dir_out)
{
  g_autoptr (GError) error = NULL;
  char *dir = g_dir_make_tmp ("efflux-recovery-XXXXXX", &error);
  char *path;

  g_assert_no_error (error);
  path = g_build_filename (dir, "src.efflux", NULL);
  g_assert_true (g_file_set_contents (path, dossier_text, -1, &error));
  g_assert_no_error (error);
  *dir_out = dir;
  return path;
}

static void
remove_dir (const char *dir)
{
  g_autoptr (GDir) d = g_dir_open (dir, 0, NULL);
  const char *name;

  while (d != NULL && (name = g_dir_read_name (d)) != NULL)
    {
      g_autofree char *p = g_build_filename (dir, name, NULL);
      g_unlink (p);
    }
  g_rmdir (dir);
}

static void
test_round_trip (void)
{
  g_autofree char *dir = NULL;
  g_autofree char *path = make_dossier (&dir);
  g_autofree char *rpath = efflux_recovery_path (path);
  g_autofree char *want_rpath = g_strconcat (path, ".recovery", NULL);
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxDossier) r = NULL;
  g_autoptr (GError) error = NULL;
  g_autofree char *text = NULL;
  gint64 mtime = 0;

  g_assert_cmpstr (rpath, ==, want_rpath);
  g_assert_false (efflux_recovery_exists (path, NULL));
  d = efflux_dossier_load (path, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_dossier_set_distance (d, 250, &error));
  g_assert_true (efflux_dossier_set_lobe_velocity (d, "blue-1", -5, 2, &error));
  g_assert_true (efflux_recovery_write (d, path, &error));
  g_assert_no_error (error);
  g_assert_true (efflux_recovery_exists (path, &mtime));
  g_assert_cmpint (mtime, >, 0);
  g_assert_false (efflux_recovery_older_than_dossier (path));
  {
    /* the dossier saved elsewhere 10 s after the recovery file: reported */
    struct timespec ts[2] = { { mtime / G_USEC_PER_SEC + 10, 0 }, { mtime / G_USEC_PER_SEC + 10, 0 } };

    g_assert_cmpint (utimensat (AT_FDCWD, path, ts, 0), ==, 0);
    g_assert_true (efflux_recovery_older_than_dossier (path));
  }

  /* the dossier is untouched; the recovery holds the edits and the user's comment */
  g_assert_true (g_file_get_contents (path, &text, NULL, NULL));
  g_assert_cmpstr (text, ==, dossier_text);
  r = efflux_recovery_load (path, &error);
  g_assert_no_error (error);
  g_assert_cmpstr (r->path, ==, path);
  g_assert_cmpfloat (r->distance_pc, ==, 250);
  g_assert_cmpfloat (efflux_dossier_find_lobe (r, "blue-1")->v1_kms, ==, -5);
  g_assert_cmpfloat (efflux_dossier_find_lobe (r, "blue-1")->v2_kms, ==, 2);

  /* saving replaces the dossier and removes the recovery file; the marker line is not kept */
  g_assert_true (efflux_recovery_save_dossier (r, &error));
  g_assert_no_error (error);
  g_assert_false (efflux_recovery_exists (path, NULL));
  g_clear_pointer (&text, g_free);
  g_assert_true (g_file_get_contents (path, &text, NULL, NULL));
  g_assert_true (g_str_has_prefix (text, "# the user's own comment\n"));
  g_assert_null (strstr (text, "recovery"));
  g_assert_nonnull (strstr (text, "distance-pc=250\n"));
  g_assert_true (efflux_recovery_remove (path, &error));   /* none left: still fine */

  /* a file that is not a recovery file is refused, naming it */
  g_assert_true (g_file_set_contents (rpath, "[Source]\nname=x\n", -1, NULL));
  g_clear_pointer (&r, efflux_dossier_free);
  r = efflux_recovery_load (path, &error);
  g_assert_null (r);
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
  g_assert_true (g_str_has_prefix (error->message, rpath));
  g_clear_error (&error);
  g_assert_true (efflux_recovery_remove (path, &error));
  g_assert_false (g_file_test (rpath, G_FILE_TEST_EXISTS));
  remove_dir (dir);
}

typedef struct
{
  guint  n;
  gint64 t;
} Event;

static void
kill_and_recover (gulong delay_ms)
{
  const char *child = g_getenv ("EFFLUX_RECOVERY_CHILD");
  g_autofree char *dir = NULL;
  g_autofree char *path = make_dossier (&dir);
  g_autoptr (GError) error = NULL;
  g_autoptr (GArray) edits = g_array_new (FALSE, TRUE, sizeof (Event));
  g_autoptr (GArray) writes = g_array_new (FALSE, TRUE, sizeof (Event));
  g_autoptr (GString) log = g_string_new (NULL);
  g_autoptr (EffluxDossier) r = NULL;
  g_auto (GStrv) lines = NULL;
  g_autofree char *text = NULL;
  g_autofree char *want_note = NULL;
  char *argv[3];
  GPid pid;
  int out_fd = -1, wstatus = 0;
  gint64 t_kill;
  guint n_rec, last_edit = 0;
  char buf[4096];
  gssize got;

  if (child == NULL || *child == '\0')
    {
      g_test_fail_printf ("EFFLUX_RECOVERY_CHILD is not set (run through meson test)");
      return;
    }
  argv[0] = (char *) child;
  argv[1] = path;
  argv[2] = NULL;
  g_assert_true (g_spawn_async_with_pipes (NULL, argv, NULL, G_SPAWN_DO_NOT_REAP_CHILD, NULL, NULL,
                                           &pid, NULL, &out_fd, NULL, &error));
  g_assert_no_error (error);
  g_usleep (delay_ms * 1000);
  g_assert_cmpint (kill (pid, SIGKILL), ==, 0);
  t_kill = g_get_monotonic_time ();
  g_assert_cmpint (waitpid (pid, &wstatus, 0), ==, pid);
  g_assert_true (WIFSIGNALED (wstatus) && WTERMSIG (wstatus) == SIGKILL);
  g_spawn_close_pid (pid);
  while ((got = read (out_fd, buf, sizeof buf)) > 0)
    g_string_append_len (log, buf, got);
  close (out_fd);

  lines = g_strsplit (log->str, "\n", -1);
  for (guint i = 0; lines[i] != NULL; i++)
    {
      g_auto (GStrv) w = g_strsplit (lines[i], " ", 3);
      Event e;

      if (g_strv_length (w) != 3)
        continue;
      e.n = (guint) g_ascii_strtoull (w[1], NULL, 10);
      e.t = g_ascii_strtoll (w[2], NULL, 10);
      if (strcmp (w[0], "edit") == 0)
        {
          g_assert_cmpuint (e.n, ==, edits->len + 1);
          g_array_append_val (edits, e);
          last_edit = e.n;
        }
      else if (strcmp (w[0], "wrote") == 0)
        g_array_append_val (writes, e);
    }
  g_test_message ("killed after %lu ms: %u edits, %u recovery writes", delay_ms, edits->len, writes->len);
  g_assert_cmpuint (writes->len, >=, 1);

  /* the dossier itself is untouched, byte for byte */
  g_assert_true (g_file_get_contents (path, &text, NULL, NULL));
  g_assert_cmpstr (text, ==, dossier_text);

  g_assert_true (efflux_recovery_exists (path, NULL));
  r = efflux_recovery_load (path, &error);
  g_assert_no_error (error);
  g_assert_nonnull (r);
  n_rec = (guint) lround (r->distance_pc - 100.0);
  g_assert_cmpfloat (r->distance_pc, ==, 100.0 + n_rec);
  want_note = g_strdup_printf ("edit %u", n_rec);
  g_assert_cmpstr (efflux_dossier_find_lobe (r, "blue-1")->note, ==, want_note);
  /* the state is one the child wrote: the last logged write, or a later one not yet logged */
  g_assert_cmpuint (n_rec, >=, g_array_index (writes, Event, writes->len - 1).n);
  g_assert_cmpuint (n_rec, <=, last_edit);
  /* every edit made up to 2 s before the kill is in it: the first edit missing is younger */
  if (n_rec < edits->len)
    {
      gint64 t_missing = g_array_index (edits, Event, n_rec).t;   /* edit n_rec + 1 */

      g_test_message ("first edit not recovered: %.3f s before the kill", (t_kill - t_missing) / 1e6);
      g_assert_cmpint (t_kill - t_missing, <, 2 * G_USEC_PER_SEC);
    }

  g_assert_true (efflux_recovery_save_dossier (r, &error));
  g_assert_no_error (error);
  g_assert_false (efflux_recovery_exists (path, NULL));
  remove_dir (dir);
}

/* efflux_recovery_write_data (the text made beforehand, as the autosave's worker writes it) gives
 * the same file as efflux_recovery_write but for the time in its first line. */
static void
test_write_data (void)
{
  g_autofree char *dir = NULL;
  g_autofree char *path = make_dossier (&dir);
  g_autofree char *rpath = efflux_recovery_path (path);
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (EffluxDossier) r = NULL;
  g_autoptr (GError) error = NULL;
  g_autofree char *data = NULL;
  g_autofree char *a = NULL;
  g_autofree char *b = NULL;

  d = efflux_dossier_load (path, &error);
  g_assert_no_error (error);
  g_assert_true (efflux_dossier_set_lobe_velocity (d, "blue-1", -6, 1, &error));
  data = efflux_dossier_to_data (d, NULL);
  g_assert_true (efflux_recovery_write (d, path, &error));
  g_assert_true (g_file_get_contents (rpath, &a, NULL, NULL));
  g_assert_true (efflux_recovery_write_data (path, data, &error));
  g_assert_no_error (error);
  g_assert_true (g_file_get_contents (rpath, &b, NULL, NULL));
  /* after the first line (which holds the time) the two are the same bytes */
  g_assert_nonnull (strchr (a, '\n'));
  g_assert_nonnull (strchr (b, '\n'));
  g_assert_cmpstr (strchr (a, '\n'), ==, strchr (b, '\n'));
  r = efflux_recovery_load (path, &error);
  g_assert_no_error (error);
  g_assert_cmpfloat (efflux_dossier_find_lobe (r, "blue-1")->v1_kms, ==, -6);
  /* unwritable: an error naming the recovery file, nothing left */
  {
    g_autofree char *nowhere = g_build_filename (path, "inside-a-file.efflux", NULL);

    g_assert_false (efflux_recovery_write_data (nowhere, data, &error));
    g_assert_nonnull (error);
    g_assert_nonnull (strstr (error->message, "inside-a-file.efflux.recovery"));
    g_clear_error (&error);
  }
  g_assert_true (efflux_recovery_remove (path, &error));
  g_unlink (path);
  remove_dir (dir);
}

static void
test_kill_early (void)
{
  kill_and_recover (1300);
}

static void
test_kill_late (void)
{
  kill_and_recover (3170);
}

/* several kills at random moments of the write cycle */
static void
test_kill_random (void)
{
  g_autoptr (GRand) rand = g_rand_new_with_seed (20261202);

  for (int i = 0; i < 3; i++)
    kill_and_recover ((gulong) g_rand_int_range (rand, 1100, 2600));
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/recovery-file/round-trip", test_round_trip);
  g_test_add_func ("/recovery-file/write-data", test_write_data);
  g_test_add_func ("/recovery-file/kill-early", test_kill_early);
  g_test_add_func ("/recovery-file/kill-late", test_kill_late);
  g_test_add_func ("/recovery-file/kill-random", test_kill_random);
  return g_test_run ();
}
