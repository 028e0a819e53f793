/* SPDX-License-Identifier: GPL-3.0-or-later */
/* UI suite: every error shows a message in the window's banner and keeps the open dossier.
 *
 * A copy of the demo dossier is opened and edited once (so it is modified, with one command to
 * undo). Then, one after the other: a file that is no FITS file is opened as a cube, a dossier
 * with a bad key is opened, the dossier is saved where it cannot be written (its folder replaced
 * by a plain file; a write that fails half-way under a file-size limit, as on a full disk; also a
 * read-only folder when the test does not run as root, who ignores file modes), and an edit the core refuses (an empty velocity range) is made through the lobe bar.
 * Each time the banner must show one line naming the file or the dossier's group and key, and
 * the document must be the same: same object, path, lobes, key file text, modified flag and undo
 * stack. Last, a dossier whose tracer cube is no FITS file is opened: the load error is shown
 * and the dossier open before stays the window's. */
#include "config.h"

#include <gtk/gtk.h>
#include <glib/gstdio.h>
#include <fcntl.h>
#include <signal.h>
#include <string.h>
#include <sys/resource.h>
#include <unistd.h>

#include "efflux-application.h"
#include "efflux-document.h"
#include "efflux-dossier.h"
#include "efflux-window.h"
#include "efflux-ui-test-util.h"
#include "efflux-test-util.h"

typedef struct
{
  EffluxDocument *document;
  char           *path;
  char           *data;
  guint           n_lobes;
  gboolean        modified;
  guint           n_undo;
} Snapshot;

static void
take (EffluxWindow *window,
      Snapshot     *s)
{
  const EffluxDossier *d;

  s->document = efflux_window_get_document (window);
  g_assert_nonnull (s->document);
  d = efflux_document_get_dossier (s->document);
  s->path = g_strdup (efflux_document_get_path (s->document));
  s->data = efflux_dossier_to_data ((EffluxDossier *) d, NULL);
  s->n_lobes = d->lobes->len;
  s->modified = efflux_document_get_modified (s->document);
  s->n_undo = efflux_document_get_n_undo (s->document);
}

static void
assert_kept (EffluxWindow   *window,
             const Snapshot *s)
{
  EffluxDocument *document = efflux_window_get_document (window);
  const EffluxDossier *d;
  g_autofree char *data = NULL;

  g_assert_true (document == s->document);
  d = efflux_document_get_dossier (document);
  data = efflux_dossier_to_data ((EffluxDossier *) d, NULL);
  g_assert_cmpstr (efflux_document_get_path (document), ==, s->path);
  g_assert_cmpstr (data, ==, s->data);
  g_assert_cmpuint (d->lobes->len, ==, s->n_lobes);
  g_assert_cmpint (efflux_document_get_modified (document), ==, s->modified);
  g_assert_cmpuint (efflux_document_get_n_undo (document), ==, s->n_undo);
}

static void
clear_snapshot (Snapshot *s)
{
  g_free (s->path);
  g_free (s->data);
}

/* The banner shows one line that holds every one of the given pieces. */
static void
assert_error (EffluxWindow *window,
              const char   *piece1,
              const char   *piece2)
{
  const char *msg = efflux_window_get_error (window);

  g_assert_nonnull (msg);
  g_test_message ("shown: %s", msg);
  g_assert_null (strchr (msg, '\n'));
  g_assert_nonnull (strstr (msg, piece1));
  if (piece2 != NULL)
    g_assert_nonnull (strstr (msg, piece2));
  g_assert_true (gtk_widget_get_visible (efflux_window_get_banner (window)));
}

/* A cube file far larger than memory: a FITS header claiming 8192 x 8192 x 4096 float32 voxels
 * (1 TiB) and a sparse file of that size (ftruncate: nothing is written). FALSE when the file
 * system cannot hold so large a sparse file. */
static gboolean
write_huge_cube (const char *path)
{
  static const char *cards[] = {
    "SIMPLE  =                    T", "BITPIX  =                  -32", "NAXIS   =                    3",
    "NAXIS1  =                 8192", "NAXIS2  =                 8192", "NAXIS3  =                 4096",
    "CTYPE1  = 'RA---TAN'", "CRVAL1  =                 83.8", "CRPIX1  =                 4096",
    "CDELT1  =          -0.00005555", "CUNIT1  = 'deg'",
    "CTYPE2  = 'DEC--TAN'", "CRVAL2  =                 -5.4", "CRPIX2  =                 4096",
    "CDELT2  =           0.00005555", "CUNIT2  = 'deg'",
    "CTYPE3  = 'VRAD'", "CRVAL3  =                  0.0", "CRPIX3  =                    1",
    "CDELT3  =                  0.1", "CUNIT3  = 'km/s'", "SPECSYS = 'LSRK'", "BUNIT   = 'K'", "END",
  };
  g_autoptr(GString) h = g_string_new (NULL);
  guint64 data = (guint64) 8192 * 8192 * 4096 * 4;
  int fd;
  gboolean ok;

  for (gsize i = 0; i < G_N_ELEMENTS (cards); i++)
    g_string_append_printf (h, "%-80s", cards[i]);
  while (h->len % 2880 != 0)
    g_string_append_c (h, ' ');
  fd = g_open (path, O_WRONLY | O_CREAT | O_TRUNC, 0644);
  g_assert_cmpint (fd, >=, 0);
  g_assert_cmpint (write (fd, h->str, h->len), ==, (gssize) h->len);
  ok = ftruncate (fd, (off_t) (h->len + data)) == 0;
  close (fd);
  return ok;
}

static void
test_errors_keep_the_dossier (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *demo = efflux_application_find_demo ();
  g_autofree char *root = g_dir_make_tmp ("efflux-errors-XXXXXX", &error);
  g_autofree char *work = g_build_filename (root, "work", NULL);
  g_autofree char *moved = g_build_filename (root, "work-moved", NULL);
  g_autofree char *path = g_build_filename (work, "copy.efflux", NULL);
  g_autofree char *junk = g_build_filename (root, "junk.fits", NULL);
  g_autofree char *bad = g_build_filename (root, "bad.efflux", NULL);
  g_autofree char *badcube = g_build_filename (root, "bad-cube.efflux", NULL);
  g_autofree char *huge = g_build_filename (root, "huge.fits", NULL);
  g_autoptr(GFile) file = NULL;
  EffluxWindow *window;
  EffluxDocument *document;
  Snapshot s = { 0 };

  g_assert_no_error (error);
  g_assert_nonnull (demo);
  g_assert_cmpint (g_mkdir (work, 0755), ==, 0);
  /* the copy names the demo cubes from its own folder (Save As) */
  {
    g_autoptr(EffluxDossier) d = efflux_dossier_load (demo, &error);

    g_assert_no_error (error);
    g_assert_true (efflux_dossier_save_as (d, path, &error));
    g_assert_no_error (error);
  }
  g_assert_true (g_file_set_contents (junk, "This is a note, not a FITS file.\n", -1, &error));

  file = g_file_new_for_path (path);
  window = efflux_ui_test_open_window (file, 0, 0);
  efflux_ui_test_wait_until_loaded_in_steps (window);
  document = efflux_window_get_document (window);
  g_assert_nonnull (document);
  g_assert_null (efflux_window_get_error (window));
  g_assert_true (efflux_document_set_lobe_velocity (document, "blue", -13.0, 3.2, 0, &error));
  g_assert_no_error (error);
  take (window, &s);
  g_assert_true (s.modified);
  g_assert_cmpuint (s.n_undo, ==, 1);

  /* 1. a file that is no FITS file, opened as a cube */
  {
    g_autoptr(GFile) f = g_file_new_for_path (junk);

    efflux_window_open (window, f);
    efflux_ui_test_wait_until_loaded_in_steps (window);
    efflux_ui_test_iterate_ms (50);
    assert_error (window, "junk.fits", NULL);
    assert_kept (window, &s);
  }

  /* 2. a dossier with a bad key */
  {
    g_autofree char *text = NULL;
    g_autofree char *broken = NULL;
    g_autoptr(GFile) f = g_file_new_for_path (bad);
    g_auto(GStrv) parts = NULL;

    g_assert_true (g_file_get_contents (path, &text, NULL, NULL));
    parts = g_strsplit (text, "velocity-kms=-13.5;3.2", 2);
    g_assert_cmpuint (g_strv_length (parts), ==, 2);
    broken = g_strjoin ("velocity-kms=-4", parts[0], parts[1], NULL);
    g_assert_true (g_file_set_contents (bad, broken, -1, &error));
    efflux_window_open (window, f);
    efflux_ui_test_iterate_ms (50);
    /* "bad.efflux: [Lobe blue] velocity-kms: expected two numbers 'V1;V2', got '-4'" */
    assert_error (window, "bad.efflux: [Lobe blue] velocity-kms", "-4");
    assert_kept (window, &s);
  }

  /* 3. saving where it cannot be written: the dossier's folder is now a plain file */
  g_assert_cmpint (g_rename (work, moved), ==, 0);
  g_assert_true (g_file_set_contents (work, "a plain file where the folder was\n", -1, &error));
  gtk_widget_activate_action (GTK_WIDGET (window), "win.save", NULL);
  efflux_ui_test_iterate_ms (50);
  assert_error (window, path, NULL);
  assert_kept (window, &s);
  g_assert_no_errno (g_unlink (work));
  g_assert_cmpint (g_rename (moved, work), ==, 0);
  /* a write that fails half-way (as on a full disk): a file-size limit below the dossier's size,
   * SIGXFSZ ignored so that write() returns EFBIG; the dossier on disk stays whole */
  {
    g_autofree char *before = NULL;
    g_autofree char *after = NULL;
    struct rlimit old_limit, small = { 0 };
    void (*old_handler) (int) = signal (SIGXFSZ, SIG_IGN);

    g_assert_true (g_file_get_contents (path, &before, NULL, NULL));
    g_assert_cmpuint (strlen (before), >, 1024);
    g_assert_cmpint (getrlimit (RLIMIT_FSIZE, &old_limit), ==, 0);
    small.rlim_cur = 1024;
    small.rlim_max = old_limit.rlim_max;
    g_assert_cmpint (setrlimit (RLIMIT_FSIZE, &small), ==, 0);
    gtk_widget_activate_action (GTK_WIDGET (window), "win.save", NULL);
    g_assert_cmpint (setrlimit (RLIMIT_FSIZE, &old_limit), ==, 0);
    signal (SIGXFSZ, old_handler);
    efflux_ui_test_iterate_ms (50);
    assert_error (window, path, NULL);
    assert_kept (window, &s);
    g_assert_true (g_file_get_contents (path, &after, NULL, NULL));
    g_assert_cmpstr (after, ==, before);
    /* no temporary file left beside it */
    g_assert_cmpuint (efflux_test_count_entries (work), ==, 1);
  }
  /* and a read-only folder, where its mode counts */
  if (geteuid () != 0)
    {
      g_autofree char *before = NULL;
      g_autofree char *after = NULL;

      g_assert_true (g_file_get_contents (path, &before, NULL, NULL));
      g_assert_no_errno (g_chmod (work, 0555));
      gtk_widget_activate_action (GTK_WIDGET (window), "win.save", NULL);
      efflux_ui_test_iterate_ms (50);
      assert_error (window, path, NULL);
      assert_kept (window, &s);
      g_assert_no_errno (g_chmod (work, 0755));
      g_assert_true (g_file_get_contents (path, &after, NULL, NULL));
      g_assert_cmpstr (after, ==, before);
    }

  /* 4. an edit the core refuses: an empty velocity range typed into the lobe bar */
  {
    GtkWidget *v1 = efflux_ui_test_find_widget_with_tooltip (GTK_WIDGET (window), GTK_TYPE_SPIN_BUTTON,
                                                             "Lowest channel-centre velocity of the lobe (km/s, LSRK)");
    const EffluxDossierLobe *blue = efflux_dossier_find_lobe (efflux_document_get_dossier (document), "blue");

    g_assert_nonnull (v1);
    efflux_sky_view_select_lobe (efflux_window_get_sky_view (window), "blue");
    efflux_ui_test_iterate_ms (50);
    gtk_spin_button_set_value (GTK_SPIN_BUTTON (v1), blue->v2_kms);
    efflux_ui_test_iterate_ms (50);
    /* "copy.efflux: [Lobe blue] velocity-kms: the range 3.2;3.2 is empty" */
    assert_error (window, "[Lobe blue] velocity-kms", "empty");
    assert_kept (window, &s);
    /* the next edit that goes through closes that message (and is one command) */
    gtk_spin_button_set_value (GTK_SPIN_BUTTON (v1), -13.25);
    efflux_ui_test_iterate_ms (50);
    g_assert_null (efflux_window_get_error (window));
    g_assert_cmpuint (efflux_document_get_n_undo (document), ==, s.n_undo + 1);
    g_assert_true (efflux_document_undo (document));
    assert_kept (window, &s);
  }

  /* 5. a dossier whose tracer cube is no FITS file: the load error, the dossier open */
  {
    g_autoptr(EffluxDossier) d = efflux_dossier_load (path, &error);
    g_autoptr(GFile) f = g_file_new_for_path (badcube);

    g_assert_no_error (error);
    g_key_file_set_value (d->keyfile, "Cube co", "path", "junk.fits");
    g_assert_true (efflux_dossier_save (d, badcube, &error));
    g_assert_no_error (error);
    efflux_window_open (window, f);
    efflux_ui_test_wait_until_loaded_in_steps (window);
    efflux_ui_test_iterate_ms (50);
    assert_error (window, "junk.fits", NULL);
    /* the load failed: the dossier shown before stays the window's */
    assert_kept (window, &s);
  }

  /* 6. a cube larger than memory is refused before anything is allocated: the message names the
   * file, its NAXISn cards and the memory needed and available; the dossier stays */
  if (write_huge_cube (huge))
    {
      g_autoptr(GFile) f = g_file_new_for_path (huge);

      efflux_window_open (window, f);
      efflux_ui_test_wait_until_loaded_in_steps (window);
      efflux_ui_test_iterate_ms (50);
      /* "huge.fits: NAXIS1 x NAXIS2 x NAXIS3 = 8192 x 8192 x 4096: the cube needs 1024.0 GiB, ..." */
      assert_error (window, "huge.fits: NAXIS1 x NAXIS2 x NAXIS3", "available");
      assert_kept (window, &s);
    }
  else
    g_test_message ("this file system holds no 1 TiB sparse file: the larger-than-memory case is left out");
  g_unlink (huge);

  gtk_window_destroy (GTK_WINDOW (window));
  clear_snapshot (&s);
  g_assert_no_errno (g_unlink (path));
  g_assert_no_errno (g_rmdir (work));
  g_assert_no_errno (g_unlink (junk));
  g_assert_no_errno (g_unlink (bad));
  g_assert_no_errno (g_unlink (badcube));
  g_assert_no_errno (g_rmdir (root));
}

int
main (int    argc,
      char **argv)
{
  gtk_test_init (&argc, &argv, NULL);
  g_test_add_func ("/ui/errors/keep-the-dossier", test_errors_keep_the_dossier);
  return g_test_run ();
}
