/* SPDX-License-Identifier: GPL-3.0-or-later */
#include "efflux-test-util.h"
#include "efflux-fitsout.h"

#include <errno.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>
#include <sys/wait.h>

char *
efflux_test_tmp_dir (const char *prefix)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *tmpl = g_strdup_printf ("%s-XXXXXX", prefix);
  char *dir = g_dir_make_tmp (tmpl, &error);

  g_assert_no_error (error);
  g_assert_nonnull (dir);
  return dir;
}

void
efflux_test_remove_tree (const char *path)
{
  if (g_file_test (path, G_FILE_TEST_IS_DIR) && !g_file_test (path, G_FILE_TEST_IS_SYMLINK))
    {
      g_autoptr (GDir) dir = g_dir_open (path, 0, NULL);
      const char *name;

      while (dir != NULL && (name = g_dir_read_name (dir)) != NULL)
        {
          g_autofree char *child = g_build_filename (path, name, NULL);

          efflux_test_remove_tree (child);
        }
      if (g_rmdir (path) != 0)
        g_error ("cannot remove the folder %s: %s", path, g_strerror (errno));
    }
  else if (g_unlink (path) != 0 && errno != ENOENT)
    g_error ("cannot remove %s: %s", path, g_strerror (errno));
}

guint
efflux_test_count_entries (const char *dir)
{
  g_autoptr (GDir) d = g_dir_open (dir, 0, NULL);
  guint n = 0;

  while (d != NULL && g_dir_read_name (d) != NULL)
    n++;
  return n;
}

char *
efflux_test_read_file (const char *path,
                       gsize      *length)
{
  g_autoptr (GError) error = NULL;
  char *data = NULL;

  g_assert_true (g_file_get_contents (path, &data, length, &error));
  g_assert_no_error (error);
  return data;
}

void
efflux_test_write_file (const char *path,
                        const char *text)
{
  g_autoptr (GError) error = NULL;

  g_assert_true (g_file_set_contents (path, text, -1, &error));
  g_assert_no_error (error);
}

int
efflux_test_spawn (const char         *cwd,
                   const char * const *argv,
                   char              **out,
                   char              **err)
{
  g_autoptr (GError) error = NULL;
  /* output not asked for goes to /dev/null: it must not mix with the TAP stream */
  GSpawnFlags flags = (out == NULL ? G_SPAWN_STDOUT_TO_DEV_NULL : 0)
                      | (err == NULL ? G_SPAWN_STDERR_TO_DEV_NULL : 0);
  int wait_status = 0;

  if (!g_spawn_sync (cwd, (char **) argv, NULL, flags, NULL, NULL, out, err, &wait_status, &error))
    g_error ("cannot run %s: %s", argv[0], error->message);
  return WIFEXITED (wait_status) ? WEXITSTATUS (wait_status) : -1;
}

const char *
efflux_test_cli (void)
{
  const char *cli = g_getenv ("EFFLUX_CLI");

  if (cli == NULL || *cli == '\0')
    g_error ("EFFLUX_CLI is not set: run the tests through meson test, which sets it");
  return cli;
}

int
efflux_test_run_cli (const char * const *args,
                     char              **out,
                     char              **err)
{
  g_autoptr (GPtrArray) argv = g_ptr_array_new ();

  g_ptr_array_add (argv, (gpointer) efflux_test_cli ());
  for (guint i = 0; args[i] != NULL; i++)
    g_ptr_array_add (argv, (gpointer) args[i]);
  g_ptr_array_add (argv, NULL);
  return efflux_test_spawn (NULL, (const char * const *) argv->pdata, out, err);
}

const char *
efflux_test_python_path (void)
{
  const char *python = g_getenv ("EFFLUX_PYTHON");

  /* a missing reference interpreter is a failure, not a skip */
  if (python == NULL || *python == '\0')
    g_error ("EFFLUX_PYTHON is not set: the astropy/numpy/scipy references cannot run "
             "(run through meson test, which sets it)");
  return python;
}

static char *
run_python (const char         *what,
            const char         *first,
            const char         *second,
            const char * const *args)
{
  g_autoptr (GPtrArray) argv = g_ptr_array_new ();
  g_autofree char *err = NULL;
  char *out = NULL;
  int status;

  g_ptr_array_add (argv, (gpointer) efflux_test_python_path ());
  g_ptr_array_add (argv, (gpointer) first);
  if (second != NULL)
    g_ptr_array_add (argv, (gpointer) second);
  for (guint i = 0; args != NULL && args[i] != NULL; i++)
    g_ptr_array_add (argv, (gpointer) args[i]);
  g_ptr_array_add (argv, NULL);
  status = efflux_test_spawn (NULL, (const char * const *) argv->pdata, &out, &err);
  if (status != 0)
    g_error ("%s failed (exit %d): %s", what, status, err);
  return out;
}

char *
efflux_test_python (const char         *script,
                    const char * const *args)
{
  g_autofree char *path = g_test_build_filename (G_TEST_DIST, "ref", script, NULL);

  return run_python (script, path, NULL, args);
}

char *
efflux_test_python_code (const char         *code,
                         const char * const *args)
{
  return run_python ("python3 -c", "-c", code, args);
}

GArray *
efflux_test_parse_numbers (const char *text)
{
  g_auto (GStrv) lines = g_strsplit (text, "\n", -1);
  GArray *values = g_array_new (FALSE, FALSE, sizeof (double));

  for (guint i = 0; lines[i] != NULL; i++)
    {
      char *end = NULL;
      double v;

      g_strstrip (lines[i]);
      if (*lines[i] == '\0')
        continue;
      v = g_ascii_strtod (lines[i], &end);
      if (end == lines[i] || *end != '\0')
        g_error ("a reference script printed \"%s\" where a number was expected", lines[i]);
      g_array_append_val (values, v);
    }
  return values;
}

GHashTable *
efflux_test_parse_named (const char *text)
{
  g_auto (GStrv) lines = g_strsplit (text, "\n", -1);
  GHashTable *values = g_hash_table_new_full (g_str_hash, g_str_equal, g_free, g_free);

  for (guint i = 0; lines[i] != NULL; i++)
    {
      char *space = strchr (lines[i], ' ');
      double *v;

      if (space == NULL)
        continue;
      *space = '\0';
      v = g_new (double, 1);
      *v = g_ascii_strtod (space + 1, NULL);
      g_hash_table_insert (values, g_strdup (lines[i]), v);
    }
  return values;
}

double *
efflux_test_read_f64 (const char *dir,
                      const char *name,
                      gsize      *n)
{
  g_autofree char *path = g_strdup_printf ("%s/%s.f64", dir, name);
  gsize length = 0;
  char *data = efflux_test_read_file (path, &length);

  g_assert_cmpuint (length % sizeof (double), ==, 0);
  *n = length / sizeof (double);
  return (double *) data;
}

void
efflux_test_assert_rel_impl (const char *file,
                             int         line,
                             const char *expr,
                             double      got,
                             double      want,
                             double      tol)
{
  if (!(fabs (got - want) <= tol * fabs (want)))
    g_error ("%s:%d: %s: got %.8g, want %.8g (relative tolerance %g)", file, line, expr, got, want, tol);
}

double
efflux_test_json_number (const char *json,
                         const char *key)
{
  g_autofree char *pattern = g_strdup_printf ("\"%s\": ", key);
  const char *p = strstr (json, pattern);
  char *end = NULL;
  double v;

  if (p == NULL)
    g_error ("no \"%s\" in %s", key, json);
  v = g_ascii_strtod (p + strlen (pattern), &end);
  if (end == p + strlen (pattern))
    g_error ("\"%s\" is not a number in %s", key, json);
  return v;
}

char *
efflux_test_pixel_square (const EffluxCube *cube,
                          int               x0,
                          int               y0,
                          int               x1,
                          int               y1)
{
  double xs[4] = { x0 - 0.5, x1 + 0.5, x1 + 0.5, x0 - 0.5 };
  double ys[4] = { y0 - 0.5, y0 - 0.5, y1 + 0.5, y1 + 0.5 };
  GString *s = g_string_new (NULL);

  for (int i = 0; i < 4; i++)
    {
      double ra, dec;
      char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];

      g_assert_true (efflux_cube_pixel_to_icrs (cube, xs[i], ys[i], &ra, &dec));
      g_string_append_printf (s, "%s%s,%s", i ? ";" : "", g_ascii_formatd (a, sizeof a, "%.12f", ra),
                              g_ascii_formatd (b, sizeof b, "%.12f", dec));
    }
  return g_string_free (s, FALSE);
}

EffluxCube *
efflux_test_write_square_cube (const char *dir)
{
  g_autoptr (GError) error = NULL;
  g_autofree char *path = g_build_filename (dir, "co.fits", NULL);
  EffluxCube *cube = efflux_cube_new_simple (35, 40, 12, 83.8, -5.4, 2.0, -5.5, 1.0, 230.538e9);

  g_assert_nonnull (cube);
  for (gsize i = 0; i < (gsize) 35 * 40 * 12; i++)
    cube->data[i] = 1.0f;
  g_assert_true (efflux_fits_write_cube (cube, path, NULL, &error));
  g_assert_no_error (error);
  return cube;
}

char *
efflux_test_write_square_dossier (const EffluxCube *cube,
                                  const char       *dir,
                                  const char       *file,
                                  const char       *name,
                                  double            distance_pc,
                                  const char       *lobes)
{
  double ra, dec;
  char a[G_ASCII_DTOSTR_BUF_SIZE], b[G_ASCII_DTOSTR_BUF_SIZE];
  g_autofree char *text = NULL;
  g_autoptr (GError) error = NULL;
  char *path = g_build_filename (dir, file, NULL);

  /* the source sits on the column of the reference pixel (x = 17): squares placed symmetrically
   * about it in x are mirror images on the sky too (TAN is symmetric about that meridian) */
  g_assert_true (efflux_cube_pixel_to_icrs (cube, 17.0, 5.0, &ra, &dec));
  text = g_strdup_printf ("# a comment that must survive\n"
                          "[Source]\nname=%s\nra-deg=%s\ndec-deg=%s\ndistance-pc=%g\nvsys-kms=0\n"
                          "[Assumptions]\ntex-k=20\nco-abundance=1e-4\nmc-samples=0\n"
                          "[Cube co]\npath=co.fits\nline=12CO 2-1\nrms-k=0.1\n%s",
                          name, g_ascii_formatd (a, sizeof a, "%.12f", ra),
                          g_ascii_formatd (b, sizeof b, "%.12f", dec), distance_pc, lobes);
  g_assert_true (g_file_set_contents (path, text, -1, &error));
  g_assert_no_error (error);
  return path;
}

char *
efflux_test_lobe_section (const char *name,
                          const char *kind,
                          const char *polygon,
                          const char *velocity,
                          const char *author)
{
  return g_strdup_printf ("[Lobe %s]\nkind=%s\ncube=co\npolygon=%s\nvelocity-kms=%s\nauthor=%s\n",
                          name, kind, polygon, velocity, author);
}

void
efflux_test_fits_card (GString    *h,
                       const char *text)
{
  char line[81];

  g_assert_cmpuint (strlen (text), <=, 80);
  memset (line, ' ', 80);
  memcpy (line, text, strlen (text));
  line[80] = '\0';
  g_string_append (h, line);
}

void
efflux_test_fits_cube_header (GString *h,
                              gsize    nx,
                              gsize    ny,
                              gsize    nchan,
                              double   crpix,
                              double   cdelt3,
                              double   crpix3)
{
  const gsize naxis[3] = { nx, ny, nchan };

  efflux_test_fits_card (h, "SIMPLE  =                    T");
  efflux_test_fits_card (h, "BITPIX  =                  -32");
  efflux_test_fits_card (h, "NAXIS   =                    3");
  for (int a = 0; a < 3; a++)
    {
      g_autofree char *card = g_strdup_printf ("NAXIS%d  = %20" G_GSIZE_FORMAT, a + 1, naxis[a]);

      efflux_test_fits_card (h, card);
    }
  efflux_test_fits_card (h, "CTYPE1  = 'RA---SIN'");
  efflux_test_fits_card (h, "CRVAL1  =               52.263");
  efflux_test_fits_card (h, "CDELT1  =     -5.5555555556E-5");
  efflux_test_fits_card (h, "CUNIT1  = 'deg'");
  efflux_test_fits_card (h, "CTYPE2  = 'DEC--SIN'");
  efflux_test_fits_card (h, "CRVAL2  =               31.255");
  efflux_test_fits_card (h, "CDELT2  =      5.5555555556E-5");
  efflux_test_fits_card (h, "CUNIT2  = 'deg'");
  efflux_test_fits_card (h, "CTYPE3  = 'VRAD'");
  efflux_test_fits_card (h, "CRVAL3  =                  0.0");
  efflux_test_fits_card (h, "CUNIT3  = 'km/s'");
  {
    g_autofree char *p1 = g_strdup_printf ("CRPIX1  = %20.1f", crpix);
    g_autofree char *p2 = g_strdup_printf ("CRPIX2  = %20.1f", crpix);
    g_autofree char *d3 = g_strdup_printf ("CDELT3  = %20.4f", cdelt3);
    g_autofree char *p3 = g_strdup_printf ("CRPIX3  = %20.1f", crpix3);

    efflux_test_fits_card (h, p1);
    efflux_test_fits_card (h, p2);
    efflux_test_fits_card (h, d3);
    efflux_test_fits_card (h, p3);
  }
  efflux_test_fits_card (h, "SPECSYS = 'LSRK'");
  efflux_test_fits_card (h, "RADESYS = 'ICRS'");
  efflux_test_fits_card (h, "BUNIT   = 'K'");
  efflux_test_fits_card (h, "END");
  while (h->len % 2880)
    g_string_append_c (h, ' ');
}
