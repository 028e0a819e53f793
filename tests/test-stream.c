/* SPDX-License-Identifier: GPL-3.0-or-later */
/* A cube larger than memory: a sparse file (ftruncate) whose FITS header claims 2048 x 2048 x 1200
 * float32 voxels (18.75 GiB; only a small block of 10 x 12 x 40 voxels is written, the rest reads
 * as zeros). `efflux-cli measure` on a dossier pointing at it, allowed 1 GiB
 * (EFFLUX_MEASURE_MEMORY_MIB=1024), must measure it in one streaming pass with a peak resident
 * size of at most 1 GiB (getrusage RUSAGE_CHILDREN, ru_maxrss), and give the numbers of an
 * in-memory measurement of the same region cut out small (20 x 22 pixels, all channels, the
 * reference pixel moved by the cut): same voxels, the rest to 1e-9 relative (the two grids give
 * the same sky positions through wcslib up to rounding). */

#include <glib.h>
#include <glib/gstdio.h>
#include <math.h>
#include <string.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <fcntl.h>
#include <unistd.h>

#include "efflux-cube.h"
#include "efflux-test-util.h"

#define BIG_NX 2048
#define BIG_NY 2048
#define NCHAN  1200
#define CUT_X0 995          /* 0-based corner of the cut-out in the big map */
#define CUT_Y0 995
#define CUT_NX 20
#define CUT_NY 22

static const char *cli;

/* the small written region (0-based, big-map pixels and channels) and its values, K */
static gboolean
in_region (int x, int y, int k)
{
  return x >= 1000 && x < 1010 && y >= 1000 && y < 1012 && k >= 600 && k < 640;
}

static float
region_value (int x, int y, int k)
{
  return (float) (2.0 * exp (-pow ((k - 620) / 8.0, 2)) + 0.01 * (x - 1000) + 0.02 * (y - 1000));
}

static void
write_header (int fd, int nx, int ny, double crpix1, double crpix2)
{
  GString *h = g_string_new (NULL);
  char card[81];
  const char *fmt[] = {
    "SIMPLE  =                    T", "BITPIX  =                  -32", "NAXIS   =                    3",
  };

  for (guint i = 0; i < G_N_ELEMENTS (fmt); i++)
    g_string_append_printf (h, "%-80s", fmt[i]);
#define CARD(...) do { g_snprintf (card, sizeof card, __VA_ARGS__); g_string_append_printf (h, "%-80s", card); } while (0)
  CARD ("NAXIS1  = %20d", nx);
  CARD ("NAXIS2  = %20d", ny);
  CARD ("NAXIS3  = %20d", NCHAN);
  CARD ("CTYPE1  = 'RA---SIN'");
  CARD ("CRVAL1  = %20.10f", 83.8);
  CARD ("CRPIX1  = %20.10f", crpix1);
  CARD ("CDELT1  = %20.10E", -1.0e-4);
  CARD ("CUNIT1  = 'deg'");
  CARD ("CTYPE2  = 'DEC--SIN'");
  CARD ("CRVAL2  = %20.10f", -5.4);
  CARD ("CRPIX2  = %20.10f", crpix2);
  CARD ("CDELT2  = %20.10E", 1.0e-4);
  CARD ("CUNIT2  = 'deg'");
  CARD ("CTYPE3  = 'VRAD'");
  CARD ("CRVAL3  = %20.10E", -30000.0);
  CARD ("CRPIX3  = %20.10f", 1.0);
  CARD ("CDELT3  = %20.10E", 50.0);
  CARD ("CUNIT3  = 'm/s'");
  CARD ("RESTFRQ = %20.10E", 230.538e9);
  CARD ("SPECSYS = 'LSRK'");
  CARD ("BUNIT   = 'K'");
  CARD ("BMAJ    = %20.10E", 3.0e-4);
  CARD ("BMIN    = %20.10E", 3.0e-4);
  CARD ("BPA     = %20.10f", 0.0);
  CARD ("END");
#undef CARD
  while (h->len % 2880)
    g_string_append_c (h, ' ');
  g_assert_cmpint (pwrite (fd, h->str, h->len, 0), ==, (gssize) h->len);
  g_assert_cmpuint (h->len, ==, 2880);
  g_string_free (h, TRUE);
}

/* One cube file: header, size set by ftruncate (sparse), the region written big-endian. */
static void
write_cube (const char *path, int nx, int ny, int x0, int y0)
{
  int fd = g_open (path, O_WRONLY | O_CREAT | O_TRUNC, 0644);
  guint64 data = (guint64) nx * ny * NCHAN * 4;
  guint64 total = 2880 + (data + 2879) / 2880 * 2880;

  g_assert_cmpint (fd, >=, 0);
  write_header (fd, nx, ny, 1024.5 - x0, 1024.5 - y0);
  g_assert_cmpint (ftruncate (fd, (off_t) total), ==, 0);
  for (int k = 600; k < 640; k++)
    for (int y = 1000; y < 1012; y++)
      {
        guint32 row[10];

        for (int x = 1000; x < 1010; x++)
          {
            float v = region_value (x, y, k);
            guint32 bits;

            g_assert_true (in_region (x, y, k));
            memcpy (&bits, &v, 4);
            row[x - 1000] = GUINT32_TO_BE (bits);
          }
        {
          /* FITS order: x fastest, then y, then the channel */
          guint64 off = 2880 + (((guint64) k * ny + (guint64) (y - y0)) * nx + (guint64) (1000 - x0)) * 4;
          g_assert_cmpint (pwrite (fd, row, sizeof row, (off_t) off), ==, (gssize) sizeof row);
        }
      }
  close (fd);
}

static void
write_dossier (const char *path, const char *cube, const EffluxCube *cut)
{
  /* the outline: cut-out pixels 1.5 .. 18.5 x 1.5 .. 20.5 (0-based), the same sky for both */
  double corners[4][2] = { { 1.5, 1.5 }, { 18.5, 1.5 }, { 18.5, 20.5 }, { 1.5, 20.5 } };
  GString *poly = g_string_new (NULL);
  double ra0, dec0;
  g_autofree char *text = NULL;

  for (int i = 0; i < 4; i++)
    {
      double ra, dec;

      g_assert_true (efflux_cube_pixel_to_icrs (cut, corners[i][0], corners[i][1], &ra, &dec));
      g_string_append_printf (poly, "%s%.10f,%.10f", i ? ";" : "", ra, dec);
    }
  g_assert_true (efflux_cube_pixel_to_icrs (cut, 9.0, 10.0, &ra0, &dec0));
  text = g_strdup_printf ("[Source]\nname=Big\nra-deg=%.10f\ndec-deg=%.10f\ndistance-pc=300\nvsys-kms=0\n"
                          "inclination-mode=fixed\ninclination-deg=60\n\n"
                          "[Assumptions]\ntex-k=25\nco-abundance=1e-4\nopacity=none\nmc-samples=0\n\n"
                          "[Cube co]\npath=%s\nline=12CO 2-1\nrole=tracer\nbeam-efficiency=1\nrms-k=0.05\n\n"
                          "[Lobe red]\nkind=red\ncube=co\npolygon=%s\nvelocity-kms=0.5;2.5\n",
                          ra0, dec0, cube, poly->str);
  g_assert_true (g_file_set_contents (path, text, -1, NULL));
  g_string_free (poly, TRUE);
}

static char *
run_measure (const char *dir, const char *dossier, gboolean cap, char **err_out)
{
  g_autofree char *out = g_build_filename (dir, cap ? "big.csv" : "small.csv", NULL);
  const char *argv[] = { cli, "measure", dossier, "--format", "csv", "-o", out, NULL };
  g_auto (GStrv) env = g_get_environ ();
  g_autoptr (GError) error = NULL;
  char *text = NULL;
  int status = 0;

  env = g_environ_setenv (env, "EFFLUX_MEASURE_MEMORY_MIB", cap ? "1024" : "", TRUE);
  g_assert_true (g_spawn_sync (dir, (char **) argv, env, G_SPAWN_STDOUT_TO_DEV_NULL, NULL, NULL, NULL, err_out,
                               &status, &error));
  g_assert_no_error (error);
  if (!WIFEXITED (status) || WEXITSTATUS (status) != 0)
    g_error ("measure %s failed: %s", dossier, *err_out);
  g_assert_true (g_file_get_contents (out, &text, NULL, NULL));
  g_unlink (out);
  return text;
}

static void
test_stream_large (void)
{
  g_autofree char *dir = efflux_test_tmp_dir ("efflux-stream-test");
  g_autofree char *big = g_build_filename (dir, "big.fits", NULL);
  g_autofree char *small = g_build_filename (dir, "small.fits", NULL);
  g_autofree char *big_d = g_build_filename (dir, "big.efflux", NULL);
  g_autofree char *small_d = g_build_filename (dir, "small.efflux", NULL);
  g_autofree char *big_csv = NULL, *small_csv = NULL, *big_err = NULL, *small_err = NULL;
  g_autoptr (EffluxCube) cut = NULL;
  g_autoptr (GError) error = NULL;
  g_auto (GStrv) big_lines = NULL;
  g_auto (GStrv) small_lines = NULL;
  struct rusage ru;
  GStatBuf st;

  g_assert_nonnull (dir);
  write_cube (big, BIG_NX, BIG_NY, 0, 0);
  write_cube (small, CUT_NX, CUT_NY, CUT_X0, CUT_Y0);
  g_assert_cmpint (g_stat (big, &st), ==, 0);
  g_assert_cmpuint ((guint64) st.st_size, >, (guint64) 18 * 1024 * 1024 * 1024);
  g_test_message ("big cube: %.2f GiB claimed, %.1f MiB on disk", st.st_size / 1073741824.0,
                  st.st_blocks * 512.0 / 1048576.0);

  cut = efflux_cube_load (small, NULL, NULL, NULL, NULL, &error);
  g_assert_no_error (error);
  write_dossier (big_d, "big.fits", cut);
  write_dossier (small_d, "small.fits", cut);

  small_csv = run_measure (dir, small_d, FALSE, &small_err);
  big_csv = run_measure (dir, big_d, TRUE, &big_err);
  g_assert_nonnull (strstr (big_err, "streaming pass"));
  g_assert_null (strstr (small_err, "streaming pass"));

  g_assert_cmpint (getrusage (RUSAGE_CHILDREN, &ru), ==, 0);
  g_test_message ("peak resident size of the measuring processes: %.1f MiB", ru.ru_maxrss / 1024.0);
  g_assert_cmpint (ru.ru_maxrss, <=, 1024 * 1024);   /* KiB */

  big_lines = g_strsplit (big_csv, "\n", -1);
  small_lines = g_strsplit (small_csv, "\n", -1);
  g_assert_cmpuint (g_strv_length (big_lines), ==, g_strv_length (small_lines));
  g_assert_cmpstr (big_lines[0], ==, small_lines[0]);
  {
    g_auto (GStrv) head = g_strsplit (big_lines[0], ",", -1);
    guint ncol = g_strv_length (head), compared = 0;

    for (guint r = 1; big_lines[r] != NULL && big_lines[r][0]; r++)
      {
        g_auto (GStrv) a = g_strsplit (big_lines[r], ",", -1);
        g_auto (GStrv) b = g_strsplit (small_lines[r], ",", -1);

        g_assert_cmpuint (g_strv_length (a), ==, ncol);
        g_assert_cmpuint (g_strv_length (b), ==, ncol);
        for (guint c = 0; c < ncol; c++)
          {
            char *ea = NULL, *eb = NULL;
            double va, vb;

            if (strcmp (head[c], "dossier") == 0 || strcmp (head[c], "notes") == 0)
              continue;
            va = g_ascii_strtod (a[c], &ea);
            vb = g_ascii_strtod (b[c], &eb);
            if (a[c][0] == '\0' || *ea != '\0' || *eb != '\0')
              {
                g_assert_cmpstr (a[c], ==, b[c]);
                continue;
              }
            if (strcmp (head[c], "voxels") == 0)
              g_assert_cmpfloat (va, ==, vb);
            else
              g_assert_cmpfloat_with_epsilon (va, vb, 1e-9 * fmax (fabs (vb), 1e-300));
            compared++;
          }
      }
    g_test_message ("%u numbers compared", compared);
    g_assert_cmpuint (compared, >, 20);
  }
  /* the lobe saw the whole region: 10 x 12 pixels in each of the channels of its range */
  {
    g_auto (GStrv) a = g_strsplit (big_lines[1], ",", -1);
    g_assert_cmpstr (a[1], ==, "red");
    g_assert_cmpfloat (g_ascii_strtod (a[4], NULL), >, 0.0);
  }

  g_unlink (big);
  g_unlink (small);
  g_unlink (big_d);
  g_unlink (small_d);
  g_assert_cmpint (g_rmdir (dir), ==, 0);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  cli = efflux_test_cli ();
  g_test_add_func ("/stream/large-sparse-cube", test_stream_large);
  return g_test_run ();
}
