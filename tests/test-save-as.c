/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Save As (efflux_dossier_save_as): a dossier written to a new place still names the same cube
 * files and the same reviewed dossier. Each rewritten path is checked two ways: the file it names
 * from the new place is the very file (device and inode) the old path named, and the text equals
 * what Python's os.path.relpath(os.path.realpath(file), os.path.realpath(new_dir)) gives (the
 * Python standard library, run through EFFLUX_PYTHON). Comments and unknown keys survive; a save
 * that fails leaves the dossier as it was and no file behind. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <errno.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "efflux-dossier.h"
#include "efflux-test-util.h"

static const char dossier_text[] =
  "# the user's own comment on top\n"
  "[Source]\nname=Save-as test\nra-deg=52.263\ndec-deg=31.255\ndistance-pc=300\nvsys-kms=6.2\n"
  "# a key Efflux does not know\ntelescope=IRAM 30m\n"
  "[Assumptions]\ntex-k=50\nco-abundance=1e-4\n"
  "# the tracer, beside the dossier\n"
  "[Cube co]\npath=cubes/co.fits\nline=12CO 2-1\n"
  "[Cube iso]\npath=../shared/iso.fits\nline=13CO 2-1\nrole=isotopologue\n"
  "[Cube ctx]\npath=@ABS@\nrole=context\n"
  "[Lobe blue-1]\nkind=blue\ncube=co\npolygon=52.2640,31.2560;52.2660,31.2580;52.2620,31.2590\n"
  "velocity-kms=-4;3\nnote=\nauthor=\n"
  "[Cut axis]\ncube=co\npath=52.2700,31.2500;52.2560,31.2600\n"
  "[Review]\nreviewer=A. Reviewer\nreviewed=colleague/theirs.efflux\n"
  "[Group of our own]\nanswer=42\n";

typedef struct
{
  char *root;        /* physical (realpath) temporary folder */
  char *dossier;     /* root/a/src.efflux */
  char *co, *iso, *ctx, *theirs;
} Fixture;

static void
touch (const char *path)
{
  g_autofree char *dir = g_path_get_dirname (path);

  g_assert_cmpint (g_mkdir_with_parents (dir, 0755), ==, 0);
  efflux_test_write_file (path, "not read by these tests\n");
}

static void
fixture_setup (Fixture       *f,
               gconstpointer  data)
{
  g_autofree char *tmp = efflux_test_tmp_dir ("efflux-save-as");
  g_autofree char *text = NULL;
  g_auto (GStrv) parts = NULL;

  f->root = realpath (tmp, NULL);
  g_assert_nonnull (f->root);
  f->dossier = g_build_filename (f->root, "a", "src.efflux", NULL);
  f->co = g_build_filename (f->root, "a", "cubes", "co.fits", NULL);
  f->iso = g_build_filename (f->root, "shared", "iso.fits", NULL);
  f->ctx = g_build_filename (f->root, "elsewhere", "ctx.fits", NULL);
  f->theirs = g_build_filename (f->root, "a", "colleague", "theirs.efflux", NULL);
  touch (f->co);
  touch (f->iso);
  touch (f->ctx);
  touch (f->theirs);
  parts = g_strsplit (dossier_text, "@ABS@", 2);
  text = g_strconcat (parts[0], f->ctx, parts[1], NULL);
  efflux_test_write_file (f->dossier, text);
}

static void
fixture_teardown (Fixture       *f,
                  gconstpointer  data)
{
  efflux_test_remove_tree (f->root);
  free (f->root);
  g_free (f->dossier);
  g_free (f->co);
  g_free (f->iso);
  g_free (f->ctx);
  g_free (f->theirs);
}

static void
assert_same_file (const char *a,
                  const char *b)
{
  GStatBuf sa, sb;

  g_assert_cmpint (g_stat (a, &sa), ==, 0);
  g_assert_cmpint (g_stat (b, &sb), ==, 0);
  g_assert_cmpuint (sa.st_dev, ==, sb.st_dev);
  g_assert_cmpuint (sa.st_ino, ==, sb.st_ino);
}

/* Python's answer: os.path.relpath of the physical file from the physical directory. */
static char *
python_relpath (const char *file,
                const char *dir)
{
  const char *args[] = { file, dir, NULL };
  char *out = efflux_test_python_code ("import os, sys\n"
                                       "print(os.path.relpath(os.path.realpath(sys.argv[1]),"
                                       " os.path.realpath(sys.argv[2])))\n", args);

  return g_strchomp (out);
}

static char *
value_of (GKeyFile   *kf,
          const char *group,
          const char *key)
{
  char *v = g_key_file_get_value (kf, group, key, NULL);

  g_assert_nonnull (v);
  return g_strstrip (v);
}

/* Load path back and check that every file key names the fixture's files from there. */
static void
check_saved (Fixture    *f,
             const char *path,
             gboolean    expect_relative)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) d = efflux_dossier_load (path, &error);
  g_autofree char *dir = g_path_get_dirname (path);
  g_autofree char *physical_dir = realpath (dir, NULL);
  const char *files[] = { f->co, f->iso, f->ctx };
  const char *ids[] = { "co", "iso", "ctx" };

  g_assert_no_error (error);
  g_assert_nonnull (physical_dir);
  for (guint i = 0; i < G_N_ELEMENTS (ids); i++)
    {
      EffluxDossierCube *c = efflux_dossier_find_cube (d, ids[i]);

      g_assert_nonnull (c);
      assert_same_file (c->abs_path, files[i]);
      if (i == 2)
        /* an absolute path stays as written */
        g_assert_cmpstr (c->path, ==, f->ctx);
      else if (expect_relative)
        {
          g_autofree char *want = python_relpath (files[i], physical_dir);

          g_assert_false (g_path_is_absolute (c->path));
          g_assert_cmpstr (c->path, ==, want);
        }
      else
        g_assert_cmpstr (c->path, ==, files[i]);
    }
  {
    g_autofree char *reviewed = value_of (d->keyfile, "Review", "reviewed");
    g_autofree char *resolved = g_path_is_absolute (reviewed) ? g_strdup (reviewed)
                                                              : g_build_filename (dir, reviewed, NULL);

    assert_same_file (resolved, f->theirs);
    if (expect_relative)
      {
        g_autofree char *want = python_relpath (f->theirs, physical_dir);

        g_assert_cmpstr (reviewed, ==, want);
      }
  }
  /* comments, unknown keys and groups, and the cut's sky path (not a file) survive */
  {
    g_autofree char *text = efflux_test_read_file (path, NULL);
    g_autofree char *top = g_key_file_get_comment (d->keyfile, NULL, NULL, NULL);
    g_autofree char *telescope = value_of (d->keyfile, "Source", "telescope");
    g_autofree char *answer = value_of (d->keyfile, "Group of our own", "answer");
    g_autofree char *cut = value_of (d->keyfile, "Cut axis", "path");

    g_assert_nonnull (strstr (text, "# the user's own comment on top\n"));
    g_assert_nonnull (strstr (text, "# a key Efflux does not know\ntelescope=IRAM 30m\n"));
    g_autofree char *cube_comment = g_key_file_get_comment (d->keyfile, "Cube co", NULL, NULL);

    g_assert_nonnull (strstr (text, "# the tracer, beside the dossier\n"));
    g_assert_nonnull (cube_comment);
    g_assert_nonnull (strstr (cube_comment, "the tracer, beside the dossier"));
    g_assert_nonnull (top);
    g_assert_nonnull (strstr (top, "the user's own comment on top"));
    g_assert_cmpstr (telescope, ==, "IRAM 30m");
    g_assert_cmpstr (answer, ==, "42");
    g_assert_cmpstr (cut, ==, "52.2700,31.2500;52.2560,31.2600");
  }
}

/* Into a folder two levels away: relative paths up and down, as Python's relpath. */
static void
test_other_folder (Fixture       *f,
                   gconstpointer  data)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) d = efflux_dossier_load (f->dossier, &error);
  g_autofree char *target = g_build_filename (f->root, "b", "deep", "moved.efflux", NULL);
  g_autofree char *target_dir = g_path_get_dirname (target);
  g_autofree char *before = efflux_test_read_file (f->dossier, NULL);
  g_autofree char *after = NULL;

  g_assert_no_error (error);
  g_assert_cmpint (g_mkdir_with_parents (target_dir, 0755), ==, 0);
  g_assert_true (efflux_dossier_save_as (d, target, &error));
  g_assert_no_error (error);
  /* the dossier in memory is the new one: its path, folder and cube paths */
  g_assert_cmpstr (d->path, ==, target);
  g_assert_cmpstr (d->dir, ==, target_dir);
  assert_same_file (efflux_dossier_find_cube (d, "co")->abs_path, f->co);
  assert_same_file (efflux_dossier_find_cube (d, "iso")->abs_path, f->iso);
  /* worked out by hand too: b/deep -> a/cubes/co.fits */
  g_assert_cmpstr (efflux_dossier_find_cube (d, "co")->path, ==, "../../a/cubes/co.fits");
  g_assert_cmpstr (efflux_dossier_find_cube (d, "iso")->path, ==, "../../shared/iso.fits");
  check_saved (f, target, TRUE);
  /* the original is untouched */
  after = efflux_test_read_file (f->dossier, NULL);
  g_assert_cmpstr (after, ==, before);
  /* and saving the moved one back beside the cubes gives the original paths again */
  {
    g_autofree char *back = g_build_filename (f->root, "a", "back.efflux", NULL);
    g_autoptr (EffluxDossier) again = efflux_dossier_load (target, &error);

    g_assert_no_error (error);
    g_assert_true (efflux_dossier_save_as (again, back, &error));
    g_assert_no_error (error);
    g_assert_cmpstr (efflux_dossier_find_cube (again, "co")->path, ==, "cubes/co.fits");
    g_assert_cmpstr (efflux_dossier_find_cube (again, "iso")->path, ==, "../shared/iso.fits");
  }
}

/* In the same folder: every value exactly as the user wrote it. */
static void
test_same_folder (Fixture       *f,
                  gconstpointer  data)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) d = efflux_dossier_load (f->dossier, &error);
  g_autofree char *target = g_build_filename (f->root, "a", "copy.efflux", NULL);
  g_autofree char *before = efflux_test_read_file (f->dossier, NULL);
  g_autofree char *after = NULL;

  g_assert_no_error (error);
  g_assert_true (efflux_dossier_save_as (d, target, &error));
  g_assert_no_error (error);
  after = efflux_test_read_file (target, NULL);
  /* byte for byte the key file GLib writes for the original */
  {
    g_autoptr (EffluxDossier) orig = efflux_dossier_load (f->dossier, &error);
    g_autofree char *want = efflux_dossier_to_data (orig, NULL);

    g_assert_no_error (error);
    g_assert_cmpstr (after, ==, want);
  }
  g_assert_nonnull (before);
  check_saved (f, target, TRUE);
}

/* Through a symbolic link to a folder: the relative path must hold for the physical folder. */
static void
test_through_link (Fixture       *f,
                   gconstpointer  data)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) d = efflux_dossier_load (f->dossier, &error);
  g_autofree char *real_dir = g_build_filename (f->root, "c", "d", "e", NULL);
  g_autofree char *link = g_build_filename (f->root, "link", NULL);
  g_autofree char *target = g_build_filename (link, "via-link.efflux", NULL);

  g_assert_no_error (error);
  g_assert_cmpint (g_mkdir_with_parents (real_dir, 0755), ==, 0);
  g_assert_cmpint (symlink (real_dir, link), ==, 0);
  g_assert_true (efflux_dossier_save_as (d, target, &error));
  g_assert_no_error (error);
  /* lexically root/link is one level down, but ".." from it is root/c/d */
  g_assert_cmpstr (efflux_dossier_find_cube (d, "co")->path, ==, "../../../a/cubes/co.fits");
  check_saved (f, target, TRUE);
}

/* Onto another file system (tmpfs /dev/shm when the temporary folder is elsewhere): absolute. */
static void
test_other_mount (Fixture       *f,
                  gconstpointer  data)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) d = efflux_dossier_load (f->dossier, &error);
  g_autofree char *shm = NULL;
  g_autofree char *target = NULL;
  GStatBuf a, b;

  g_assert_no_error (error);
  if (g_stat ("/dev/shm", &a) != 0 || g_stat (f->root, &b) != 0 || a.st_dev == b.st_dev
      || access ("/dev/shm", W_OK) != 0)
    {
      g_test_skip ("no writable /dev/shm on another file system than the temporary folder");
      return;
    }
  shm = g_strdup ("/dev/shm/efflux-save-as-XXXXXX");
  g_assert_nonnull (g_mkdtemp (shm));
  target = g_build_filename (shm, "mounted.efflux", NULL);
  g_assert_true (efflux_dossier_save_as (d, target, &error));
  g_assert_no_error (error);
  g_assert_cmpstr (efflux_dossier_find_cube (d, "co")->path, ==, f->co);
  check_saved (f, target, FALSE);
  efflux_test_remove_tree (shm);
}

/* A save that cannot be written: an error naming the path, the dossier as it was, no file. */
static void
test_unwritable (Fixture       *f,
                 gconstpointer  data)
{
  g_autoptr (GError) error = NULL;
  g_autoptr (EffluxDossier) d = efflux_dossier_load (f->dossier, &error);
  g_autofree char *data_before = NULL;
  g_autofree char *data_after = NULL;
  g_autofree char *not_dir = g_build_filename (f->root, "plain-file", NULL);
  g_autofree char *target = g_build_filename (not_dir, "x.efflux", NULL);
  g_autofree char *path_before = NULL;
  g_autofree char *dir_before = NULL;

  g_assert_no_error (error);
  data_before = efflux_dossier_to_data (d, NULL);
  path_before = g_strdup (d->path);
  dir_before = g_strdup (d->dir);
  /* a "folder" that is a plain file: refused whoever runs the test (root ignores modes) */
  efflux_test_write_file (not_dir, "a file, not a folder\n");
  g_assert_false (efflux_dossier_save_as (d, target, &error));
  g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_IO);
  g_assert_nonnull (strstr (error->message, target));
  g_clear_error (&error);
  data_after = efflux_dossier_to_data (d, NULL);
  g_assert_cmpstr (data_after, ==, data_before);
  g_assert_cmpstr (d->path, ==, path_before);
  g_assert_cmpstr (d->dir, ==, dir_before);
  g_assert_cmpstr (efflux_dossier_find_cube (d, "co")->path, ==, "cubes/co.fits");

  /* a read-only folder, where the mode counts (not for root) */
  if (geteuid () != 0)
    {
      g_autofree char *ro = g_build_filename (f->root, "read-only", NULL);
      g_autofree char *target2 = g_build_filename (ro, "x.efflux", NULL);

      g_assert_cmpint (g_mkdir (ro, 0555), ==, 0);
      g_assert_false (efflux_dossier_save_as (d, target2, &error));
      g_assert_nonnull (strstr (error->message, target2));
      g_assert_cmpuint (efflux_test_count_entries (ro), ==, 0);
      g_clear_error (&error);
      g_chmod (ro, 0755);
      g_free (data_after);
      data_after = efflux_dossier_to_data (d, NULL);
      g_assert_cmpstr (data_after, ==, data_before);
      g_assert_cmpstr (d->path, ==, path_before);
    }
}

/* efflux_dossier_relocate_path on its own: the rules in efflux-dossier.h. */
static void
test_relocate_rules (Fixture       *f,
                     gconstpointer  data)
{
  g_autofree char *a = g_build_filename (f->root, "a", NULL);
  g_autofree char *b = g_build_filename (f->root, "b", NULL);
  g_autofree char *moved = NULL;
  g_autofree char *want = NULL;
  g_autofree char *up = NULL;
  g_autofree char *missing = NULL;

  g_assert_cmpint (g_mkdir_with_parents (b, 0755), ==, 0);
  /* absolute stays */
  moved = efflux_dossier_relocate_path ("/x/y.fits", a, b);
  g_assert_cmpstr (moved, ==, "/x/y.fits");
  g_free (moved);
  /* the same folder written two ways: as written */
  up = g_build_filename (f->root, "b", "..", "a", NULL);
  moved = efflux_dossier_relocate_path ("cubes/./co.fits", a, up);
  g_assert_cmpstr (moved, ==, "cubes/./co.fits");
  g_free (moved);
  /* a file that does not exist (yet) still gets its relative path, as Python's relpath */
  moved = efflux_dossier_relocate_path ("missing/none.fits", a, b);
  missing = g_build_filename (a, "missing", "none.fits", NULL);
  want = python_relpath (missing, b);
  g_assert_cmpstr (moved, ==, want);
  g_assert_cmpstr (moved, ==, "../a/missing/none.fits");
  g_free (moved);
  /* nothing in common but the root: absolute */
  moved = efflux_dossier_relocate_path ("cubes/co.fits", a, "/");
  g_assert_cmpstr (moved, ==, f->co);
  g_assert_true (efflux_dossier_is_file_key ("Cube co", "path"));
  g_assert_true (efflux_dossier_is_file_key ("Review", "reviewed"));
  g_assert_false (efflux_dossier_is_file_key ("Cut axis", "path"));
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add ("/save-as/other-folder", Fixture, NULL, fixture_setup, test_other_folder, fixture_teardown);
  g_test_add ("/save-as/same-folder", Fixture, NULL, fixture_setup, test_same_folder, fixture_teardown);
  g_test_add ("/save-as/through-link", Fixture, NULL, fixture_setup, test_through_link, fixture_teardown);
  g_test_add ("/save-as/other-mount", Fixture, NULL, fixture_setup, test_other_mount, fixture_teardown);
  g_test_add ("/save-as/unwritable", Fixture, NULL, fixture_setup, test_unwritable, fixture_teardown);
  g_test_add ("/save-as/relocate-rules", Fixture, NULL, fixture_setup, test_relocate_rules, fixture_teardown);
  return g_test_run ();
}
