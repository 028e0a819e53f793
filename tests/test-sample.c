/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Samples: the folder listing (only *.efflux files, bytewise order), each source's state from
 * the [Status] group (efflux-sample.h), unreadable dossiers listed with their problem, and
 * marking a dossier measured with its comments and unknown keys kept. */
#include "config.h"

#include <glib.h>
#include <glib/gstdio.h>
#include <string.h>

#include "efflux-error.h"
#include "efflux-sample.h"
#include "efflux-test-util.h"

static void
write_file (const char *dir,
            const char *name,
            const char *text)
{
  g_autofree char *path = g_build_filename (dir, name, NULL);

  efflux_test_write_file (path, text);
}

static const char plain[] =
  "# a comment that must survive\n"
  "[Source]\n"
  "name=Plain one\n"
  "distance-pc=300\n"
  "\n"
  "# our own group\n"
  "[Extra]\n"
  "unknown-key=kept\n";

static void
test_scan (void)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *tmp = efflux_test_tmp_dir ("efflux-sample");
  g_autofree char *sub = NULL;
  g_autoptr (GPtrArray) list = NULL;
  g_autoptr (GPtrArray) entries = NULL;
  EffluxSampleEntry *e;

  g_assert_no_error (error);
  write_file (tmp, "b-measured.efflux",
              "[Source]\nname=Bee\n[Status]\nmeasured=2026-12-01T10:00:00Z\nmeasured-with=0.1.0\n");
  write_file (tmp, "c-reviewed.efflux",
              "[Source]\nname=Cee\n[Status]\nmeasured=2026-12-01T10:00:00Z\nreviewed-by=A. Colleague\nreviewed=2026-12-02T08:30:00Z\n");
  write_file (tmp, "a-plain.efflux", plain);
  write_file (tmp, "B-upper.efflux", "[Source]\nname=\n[Status]\nreviewed-by=  \n");
  write_file (tmp, "d-broken.efflux", "this is not a key file\n");
  write_file (tmp, "notes.txt", "[Source]\nname=not a dossier\n");
  write_file (tmp, ".hidden.efflux", "[Source]\nname=hidden\n");
  sub = g_build_filename (tmp, "folder.efflux", NULL);
  g_assert_cmpint (g_mkdir (sub, 0755), ==, 0);

  list = efflux_sample_list (tmp, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (list->len, ==, 5);
  /* bytewise: upper case before lower case, the same on every machine and locale */
  g_assert_true (g_str_has_suffix (g_ptr_array_index (list, 0), "/B-upper.efflux"));
  g_assert_true (g_str_has_suffix (g_ptr_array_index (list, 1), "/a-plain.efflux"));
  g_assert_true (g_str_has_suffix (g_ptr_array_index (list, 2), "/b-measured.efflux"));
  g_assert_true (g_str_has_suffix (g_ptr_array_index (list, 3), "/c-reviewed.efflux"));
  g_assert_true (g_str_has_suffix (g_ptr_array_index (list, 4), "/d-broken.efflux"));

  entries = efflux_sample_scan (tmp, &error);
  g_assert_no_error (error);
  g_assert_cmpuint (entries->len, ==, 5);
  e = g_ptr_array_index (entries, 0);
  /* an empty name falls back to the file name; a blank reviewer is no review */
  g_assert_cmpstr (e->name, ==, "B-upper.efflux");
  g_assert_cmpint (e->state, ==, EFFLUX_SOURCE_NOT_MEASURED);
  g_assert_null (e->reviewed_by);
  e = g_ptr_array_index (entries, 1);
  g_assert_cmpstr (e->name, ==, "Plain one");
  g_assert_cmpint (e->state, ==, EFFLUX_SOURCE_NOT_MEASURED);
  g_assert_cmpstr (efflux_source_state_name (e->state), ==, "not measured");
  g_assert_null (e->problem);
  e = g_ptr_array_index (entries, 2);
  g_assert_cmpint (e->state, ==, EFFLUX_SOURCE_MEASURED);
  g_assert_cmpstr (e->measured, ==, "2026-12-01T10:00:00Z");
  g_assert_cmpstr (e->measured_with, ==, "0.1.0");
  e = g_ptr_array_index (entries, 3);
  g_assert_cmpint (e->state, ==, EFFLUX_SOURCE_REVIEWED);
  g_assert_cmpstr (efflux_source_state_name (e->state), ==, "reviewed");
  g_assert_cmpstr (e->reviewed_by, ==, "A. Colleague");
  g_assert_cmpstr (e->reviewed, ==, "2026-12-02T08:30:00Z");
  e = g_ptr_array_index (entries, 4);
  g_assert_nonnull (e->problem);
  g_assert_true (g_str_has_prefix (e->problem, "d-broken.efflux: "));
  g_assert_null (strchr (e->problem, '\n'));
  g_assert_cmpint (e->state, ==, EFFLUX_SOURCE_NOT_MEASURED);

  {
    g_autofree char *missing = g_build_filename (tmp, "no-such-folder", NULL);
    g_autoptr (GPtrArray) none = efflux_sample_list (missing, &error);

    g_assert_null (none);
    g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
    g_assert_true (g_str_has_prefix (error->message, missing));
    g_clear_error (&error);
  }
  efflux_test_remove_tree (tmp);
}

static void
test_mark (void)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *tmp = efflux_test_tmp_dir ("efflux-sample");
  g_autofree char *path = NULL, *text = NULL;
  g_autoptr (GDateTime) when = g_date_time_new_utc (2026, 12, 2, 1, 2, 3);
  g_autoptr (GTimeZone) plus1 = g_time_zone_new_offset (3600);
  g_autoptr (GDateTime) local = g_date_time_new (plus1, 2026, 12, 2, 2, 2, 3);
  g_autoptr (GKeyFile) kf = g_key_file_new ();
  g_autoptr (GPtrArray) entries = NULL;

  g_assert_no_error (error);
  write_file (tmp, "p.efflux", plain);
  path = g_build_filename (tmp, "p.efflux", NULL);
  g_assert_true (efflux_sample_mark_measured (path, when, &error));
  g_assert_no_error (error);
  g_assert_true (g_file_get_contents (path, &text, NULL, NULL));
  /* comments kept (GKeyFile writes a blank line after a comment above a group) */
  g_assert_true (g_str_has_prefix (text, "# a comment that must survive\n"));
  g_assert_nonnull (strstr (text, "# our own group\n"));
  g_assert_nonnull (strstr (text, "[Extra]\nunknown-key=kept\n"));
  g_assert_nonnull (strstr (text, "[Status]\nmeasured=2026-12-02T01:02:03Z\nmeasured-with=" PACKAGE_VERSION "\n"));
  entries = efflux_sample_scan (tmp, &error);
  g_assert_no_error (error);
  g_assert_cmpint (((EffluxSampleEntry *) g_ptr_array_index (entries, 0))->state, ==, EFFLUX_SOURCE_MEASURED);

  /* a review: times are written in UTC whatever zone they come in */
  g_assert_true (g_key_file_load_from_data (kf, text, -1, G_KEY_FILE_KEEP_COMMENTS, &error));
  efflux_sample_set_reviewed (kf, "B. Reviewer", local);
  g_assert_cmpint (efflux_sample_state (kf), ==, EFFLUX_SOURCE_REVIEWED);
  {
    g_autofree char *t = g_key_file_get_string (kf, "Status", "reviewed", NULL);

    g_assert_cmpstr (t, ==, "2026-12-02T01:02:03Z");
  }
  {
    g_autofree char *gone = g_build_filename (tmp, "gone.efflux", NULL);

    g_assert_false (efflux_sample_mark_measured (gone, when, &error));
    g_assert_error (error, EFFLUX_ERROR, EFFLUX_ERROR_INPUT);
    g_assert_true (g_str_has_prefix (error->message, gone));
    g_clear_error (&error);
  }
  efflux_test_remove_tree (tmp);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/sample/scan", test_scan);
  g_test_add_func ("/sample/mark", test_mark);
  return g_test_run ();
}
