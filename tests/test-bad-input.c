/* SPDX-License-Identifier: GPL-3.0-or-later */
/* The bad-input corpus (tests/bad-input/cases.txt, files written by tests/bad-input/make_corpus.py):
 * every case is run through efflux-cli. A refused input must give exit 1 (2 for wrong usage) and
 * exactly one line on stderr, "efflux-cli: error: ...", holding the case's words (the file and the
 * header card or the dossier/recipe group and key); no file may be left behind (no partial output,
 * no temporary file) and every input must be byte-identical afterwards. The good inputs of the
 * corpus must be accepted, so that each refusal is due to the one flaw its file carries. */

#include <glib.h>
#include <glib/gstdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "efflux-test-util.h"

typedef struct
{
  char  *name;
  int    exit_status;
  char **words;
  char **args;
} Case;

static char *corpus_dir;
static const char *cli;

/* relative path -> contents ("<dir>" for folders) of everything under dir */
static void
snapshot_into (GHashTable *snap,
               const char *root,
               const char *rel)
{
  g_autofree char *path = rel[0] ? g_build_filename (root, rel, NULL) : g_strdup (root);
  g_autoptr (GDir) dir = g_dir_open (path, 0, NULL);
  const char *name;

  if (dir == NULL)
    return;
  while ((name = g_dir_read_name (dir)) != NULL)
    {
      g_autofree char *child_rel = rel[0] ? g_build_filename (rel, name, NULL) : g_strdup (name);
      g_autofree char *child = g_build_filename (root, child_rel, NULL);

      if (g_file_test (child, G_FILE_TEST_IS_DIR))
        {
          g_hash_table_insert (snap, g_strdup (child_rel), g_bytes_new_static ("<dir>", 5));
          snapshot_into (snap, root, child_rel);
        }
      else
        {
          char *data = NULL;
          gsize len = 0;

          if (access (child, R_OK) != 0 || !g_file_get_contents (child, &data, &len, NULL))
            {
              /* unreadable on purpose: its size and mode stand for it */
              GStatBuf st;
              g_assert_cmpint (g_stat (child, &st), ==, 0);
              data = g_strdup_printf ("<unreadable %lld %o>", (long long) st.st_size, (unsigned) st.st_mode);
              len = strlen (data);
            }
          g_hash_table_insert (snap, g_strdup (child_rel), g_bytes_new_take (data, len));
        }
    }
}

static GHashTable *
snapshot (const char *root)
{
  GHashTable *snap = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, (GDestroyNotify) g_bytes_unref);

  snapshot_into (snap, root, "");
  return snap;
}

static void
assert_same_tree (GHashTable *before,
                  GHashTable *after,
                  const char *what)
{
  GHashTableIter it;
  gpointer key, value;

  g_hash_table_iter_init (&it, after);
  while (g_hash_table_iter_next (&it, &key, &value))
    if (!g_hash_table_contains (before, key))
      g_error ("%s: left behind a file that was not there before: %s", what, (const char *) key);
  g_hash_table_iter_init (&it, before);
  while (g_hash_table_iter_next (&it, &key, &value))
    {
      GBytes *now = g_hash_table_lookup (after, key);

      if (now == NULL)
        g_error ("%s: removed an input: %s", what, (const char *) key);
      if (!g_bytes_equal (now, value))
        g_error ("%s: changed an input: %s", what, (const char *) key);
    }
}

static void
run_case (gconstpointer data)
{
  const Case *c = data;
  g_autoptr (GPtrArray) argv = g_ptr_array_new_with_free_func (g_free);
  g_autoptr (GHashTable) before = NULL;
  g_autoptr (GHashTable) after = NULL;
  g_autofree char *out_dir = g_build_filename (corpus_dir, "out", NULL);
  g_autofree char *out = NULL;
  g_autofree char *err = NULL;
  int exit_status;

  /* file permissions do not stop root: these cases cannot be made then */
  if (strstr (c->name, "unreadable") != NULL)
    {
      g_autofree char *f = g_build_filename (corpus_dir, "unreadable.fits", NULL);

      if (access (f, R_OK) == 0)
        {
          g_test_skip ("file permissions do not stop this user (root): the unreadable case cannot be made");
          return;
        }
    }
  if (strstr (c->name, "readonly") != NULL)
    {
      g_autofree char *d = g_build_filename (corpus_dir, "readonly", NULL);

      if (access (d, W_OK) == 0)
        {
          g_test_skip ("file permissions do not stop this user (root): the read-only folder case cannot be made");
          return;
        }
    }

  g_assert_cmpint (g_mkdir_with_parents (out_dir, 0755), ==, 0);
  g_ptr_array_add (argv, g_strdup (cli));
  for (guint i = 0; c->args[i] != NULL; i++)
    {
      g_auto (GStrv) parts = g_strsplit (c->args[i], "@D@", -1);
      g_ptr_array_add (argv, g_strjoinv (corpus_dir, parts));
    }
  g_ptr_array_add (argv, NULL);

  before = snapshot (corpus_dir);
  exit_status = efflux_test_spawn (corpus_dir, (const char * const *) argv->pdata, &out, &err);
  g_test_message ("%s: stderr: %s", c->name, err);
  g_assert_cmpint (exit_status, >=, 0);   /* never a death by signal */
  if (exit_status != c->exit_status)
    g_error ("%s: exit %d, expected %d; stderr: %s", c->name, exit_status, c->exit_status, err);

  if (c->exit_status == 0)
    {
      /* a good input: accepted, its outputs (if any) only under out/, the inputs untouched */
      efflux_test_remove_tree (out_dir);
      g_assert_cmpint (g_mkdir_with_parents (out_dir, 0755), ==, 0);
      after = snapshot (corpus_dir);
      assert_same_tree (before, after, c->name);
      return;
    }

  /* exactly one line, the error line, with the case's words */
  g_assert_true (g_str_has_prefix (err, "efflux-cli: error: "));
  g_assert_true (g_str_has_suffix (err, "\n"));
  if (strchr (err, '\n') != err + strlen (err) - 1)
    g_error ("%s: more than one line on stderr: %s", c->name, err);
  for (guint i = 0; c->words[i] != NULL; i++)
    if (strstr (err, c->words[i]) == NULL)
      g_error ("%s: the message does not name '%s': %s", c->name, c->words[i], err);

  /* nothing left behind, nothing changed */
  after = snapshot (corpus_dir);
  assert_same_tree (before, after, c->name);
}

static void
case_free (gpointer p)
{
  Case *c = p;

  g_free (c->name);
  g_strfreev (c->words);
  g_strfreev (c->args);
  g_free (c);
}

int
main (int    argc,
      char **argv)
{
  const char *python;
  const char *root = g_getenv ("EFFLUX_SOURCE_ROOT");
  g_autofree char *cases_path = NULL;
  g_autofree char *script = NULL;
  g_autofree char *text = NULL;
  g_autoptr (GPtrArray) cases = g_ptr_array_new_with_free_func (case_free);
  g_autoptr (GError) error = NULL;
  g_auto (GStrv) lines = NULL;
  int status;
  guint n_refused = 0;

  g_test_init (&argc, &argv, NULL);
  cli = efflux_test_cli ();
  python = efflux_test_python_path ();
  if (root == NULL)
    g_error ("EFFLUX_SOURCE_ROOT must be set (tests/meson.build sets it)");

  cases_path = g_build_filename (root, "tests", "bad-input", "cases.txt", NULL);
  script = g_build_filename (root, "tests", "bad-input", "make_corpus.py", NULL);
  if (!g_file_get_contents (cases_path, &text, NULL, &error))
    g_error ("%s", error->message);
  lines = g_strsplit (text, "\n", -1);
  for (guint i = 0; lines[i] != NULL; i++)
    {
      g_auto (GStrv) f = NULL;
      Case *c;

      g_strstrip (lines[i]);
      if (lines[i][0] == '\0' || lines[i][0] == '#')
        continue;
      f = g_strsplit (lines[i], "|", 4);
      if (g_strv_length (f) != 4)
        g_error ("%s: line %u: expected NAME | EXIT | WORDS | ARGUMENTS", cases_path, i + 1);
      c = g_new0 (Case, 1);
      c->name = g_strdup (g_strstrip (f[0]));
      c->exit_status = atoi (f[1]);
      g_strstrip (f[2]);
      c->words = f[2][0] ? g_strsplit (f[2], ";", -1) : g_new0 (char *, 1);
      g_strstrip (f[3]);
      c->args = f[3][0] ? g_strsplit (f[3], " ", -1) : g_new0 (char *, 1);
      if (c->exit_status != 0)
        n_refused++;
      g_ptr_array_add (cases, c);
    }
  /* the issue asks for at least 40 refused cases */
  g_assert_cmpuint (n_refused, >=, 40);

  corpus_dir = efflux_test_tmp_dir ("efflux-bad-input");
  {
    const char *pargv[] = { python, script, corpus_dir, root, NULL };
    g_autofree char *perr = NULL;

    if (efflux_test_spawn (NULL, pargv, NULL, &perr) != 0)
      g_error ("make_corpus.py failed: %s", perr);
  }

  for (guint i = 0; i < cases->len; i++)
    {
      Case *c = g_ptr_array_index (cases, i);
      g_autofree char *path = g_strdup_printf ("/bad-input/%s", c->name);

      g_test_add_data_func (path, c, run_case);
    }
  status = g_test_run ();
  efflux_test_remove_tree (corpus_dir);
  g_free (corpus_dir);
  return status;
}
