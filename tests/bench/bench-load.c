/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Loading speed: a 512 x 512 x 256 float32 cube (256 MiB, axes RA, DEC, VRAD) is written to a
 * temporary directory and read once so it sits in the page cache; then, REPS times back to back
 * (the machine may be shared: each round measures everything within a fraction of a second, and
 * the figures are medians), we time
 *   - `cat FILE > /dev/null`, the whole process (the reference of issue 4),
 *   - read() of the whole file into one reused buffer (the floor: copying it from the page cache),
 *   - efflux_cube_load without the noise estimate (bytes to usable floats + WCS), with it, of
 *     32 of the 256 channels (channel_subset, as `efflux-cli moment --range` reads them), and
 *     without the noise estimate with the SSE2 transpose only (where AVX2 is the default), and
 *     with pread () only (where the io_uring batches of efflux-readbatch.c are the default),
 * with the CPU time of each (all threads; cat's from getrusage of the children), and, in the same
 * rounds, cat and efflux_cube_load of cubes of other shapes: by default 512 x 512 x 255 (spectra
 * not a multiple of 16 bytes long: the loader's staged stores), 256 x 256 x 420 (a multiple of 16
 * bytes but not of 64), 256 x 256 x 1001 and 128 x 128 x 3999 (long odd spectra, cut between
 * units), 1024 x 1024 x 67 (short odd spectra, wide rows) and 512 x 512 x 1024 (1 GiB); the list
 * can be replaced with EFFLUX_BENCH_LOAD_SHAPES ("NXxNYxNCHAN,...", empty for none). Then we run
 * tests/bench/load_numpy.py (astropy.io.fits getdata + numpy transpose to spectral-contiguous
 * order, run with EFFLUX_PYTHON; median of 5, printed by the script).
 * Target (issue 4): loading within 2x of reading the file from the page cache (cat), for every
 * shape. */
#include "config.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>
#include <stdlib.h>
#include <time.h>

#include <glib.h>
#include <glib/gstdio.h>

#include "efflux-cube.h"
#include "efflux-readbatch.h"
#include "efflux-test-util.h"
#include "bench-util.h"

#define NX 512
#define NY 512
#define NCHAN 256
#define DEFAULT_SHAPES "512x512x255,256x256x420,256x256x1001,128x128x3999,1024x1024x67,512x512x1024"
#define MAX_SHAPES 16

static void
write_cube (const char *path,
            gsize       nx,
            gsize       ny,
            gsize       nchan)
{
  GString *h = g_string_new (NULL);
  FILE *fp;
  gsize plane = nx * ny;
  g_autofree guint32 *buf = g_new (guint32, plane);

  efflux_test_fits_cube_header (h, nx, ny, nchan, 257.0, 0.1, 128.0);
  fp = fopen (path, "wb");
  g_assert_nonnull (fp);
  g_assert_cmpuint (fwrite (h->str, 1, h->len, fp), ==, h->len);
  for (gsize k = 0; k < nchan; k++)
    {
      for (gsize p = 0; p < plane; p++)
        {
          union { float f; guint32 u; } v;

          v.f = (float) sin (0.001 * (double) p + 0.1 * (double) k);
          buf[p] = GUINT32_TO_BE (v.u);
        }
      g_assert_cmpuint (fwrite (buf, sizeof (guint32), plane, fp), ==, plane);
    }
  g_string_free (h, TRUE);
  g_assert_cmpint (fclose (fp), ==, 0);
}

static double
read_whole (const char *path,
            char       *dst,
            gsize       size)
{
  gint64 t0 = g_get_monotonic_time ();
  int fd = open (path, O_RDONLY);
  gsize got = 0;

  g_assert_cmpint (fd, >=, 0);
  while (got < size)
    {
      ssize_t n = read (fd, dst + got, size - got);

      if (n < 0 && errno == EINTR)
        continue;
      g_assert_cmpint (n, >, 0);
      got += (gsize) n;
    }
  close (fd);
  return (double) (g_get_monotonic_time () - t0) / 1e6;
}

#define REPS 11

static double
cpu_seconds (void)
{
  struct timespec ts;

  clock_gettime (CLOCK_PROCESS_CPUTIME_ID, &ts);
  return (double) ts.tv_sec + (double) ts.tv_nsec * 1e-9;
}

static int
compare_double (const void *a,
                const void *b)
{
  double x = *(const double *) a, y = *(const double *) b;

  return (x > y) - (x < y);
}

static double
median (const double *v,
        int           n)
{
  double s[REPS];

  memcpy (s, v, (gsize) n * sizeof (double));
  qsort (s, (gsize) n, sizeof (double), compare_double);
  return n % 2 ? s[n / 2] : 0.5 * (s[n / 2 - 1] + s[n / 2]);
}

/* One load; with subset, only the channels whose velocity lies in 0.95 .. 4.15 km/s (32 of the
 * 256, as `efflux-cli moment --range` reads them). Wall and CPU seconds. */
static void
time_load (const char *path,
           gboolean    no_noise,
           gboolean    subset,
           double     *wall,
           double     *cpu)
{
  EffluxCubeLoadOptions options = { 0, no_noise, subset, 0.95, 4.15 };
  g_autoptr(GError) error = NULL;
  double c0 = cpu_seconds ();
  gint64 t0 = g_get_monotonic_time ();
  g_autoptr(EffluxCube) cube = efflux_cube_load (path, &options, NULL, NULL, NULL, &error);

  *wall = (double) (g_get_monotonic_time () - t0) / 1e6;
  *cpu = cpu_seconds () - c0;
  g_assert_no_error (error);
  /* spot check of the transpose: voxel (x, y, k) = sin (0.001 (y nx + x) + 0.1 k); channel
   * k is at 0.1 (k - 127) km/s (CRPIX3 = 128), so the subset starts at k = 137 */
  if (subset)
    {
      g_assert_cmpuint (cube->nchan, ==, 32);
      g_assert_cmpfloat (efflux_cube_spectrum (cube, 300, 200)[7], ==,
                         (float) sin (0.001 * (200.0 * NX + 300.0) + 0.1 * 144.0));
    }
  else
    g_assert_cmpfloat (efflux_cube_spectrum (cube, 300, 200)[77], ==,
                       (float) sin (0.001 * (200.0 * NX + 300.0) + 0.1 * 77.0));
}

/* One load of a cube of another shape (no noise); wall seconds. Spot check of one voxel of the
 * last channel: (x, y, k) = sin (0.001 (y nx + x) + 0.1 k). */
static double
time_load_shape (const char *path,
                 gsize       nx,
                 gsize       ny,
                 gsize       nchan)
{
  EffluxCubeLoadOptions options = { 0, TRUE, FALSE, 0.0, 0.0 };
  g_autoptr(GError) error = NULL;
  gint64 t0 = g_get_monotonic_time ();
  g_autoptr(EffluxCube) cube = efflux_cube_load (path, &options, NULL, NULL, NULL, &error);
  double wall = (double) (g_get_monotonic_time () - t0) / 1e6;
  gsize x = nx / 2 + 1, y = ny / 3;

  g_assert_no_error (error);
  g_assert_cmpuint (cube->nchan, ==, nchan);
  g_assert_cmpfloat (efflux_cube_spectrum (cube, (int) x, (int) y)[nchan - 1], ==,
                     (float) sin (0.001 * ((double) y * (double) nx + (double) x) + 0.1 * (double) (nchan - 1)));
  return wall;
}

typedef struct
{
  gsize nx, ny, nchan;
  char *path;
  double mib;
  double cat_w[REPS], load_w[REPS], ratio[REPS];
} Shape;

static int
parse_shapes (const char *list,
              Shape      *shapes)
{
  g_auto(GStrv) parts = g_strsplit (list, ",", -1);
  int n = 0;

  for (int i = 0; parts[i] != NULL && n < MAX_SHAPES; i++)
    {
      guint64 a, b, c;
      char tail;

      if (g_strstrip (parts[i])[0] == '\0')
        continue;
      if (sscanf (parts[i], "%" G_GUINT64_FORMAT "x%" G_GUINT64_FORMAT "x%" G_GUINT64_FORMAT "%c",
                  &a, &b, &c, &tail) != 3 || a < 4 || b < 4 || c < 1 || a * b * c > (G_GUINT64_CONSTANT (1) << 29))
        {
          g_printerr ("bench-load: EFFLUX_BENCH_LOAD_SHAPES: '%s' is not NXxNYxNCHAN (at least 4x4x1, "
                      "at most 2 GiB)\n", parts[i]);
          exit (1);
        }
      shapes[n].nx = a;
      shapes[n].ny = b;
      shapes[n].nchan = c;
      n++;
    }
  return n;
}

int
main (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-bench-load-XXXXXX", &error);
  g_autofree char *path = NULL;
  g_autofree char *buf = NULL;
  const char *python = g_getenv ("EFFLUX_PYTHON");
  const char *root = g_getenv ("EFFLUX_SOURCE_ROOT");
  const char *shape_list = g_getenv ("EFFLUX_BENCH_LOAD_SHAPES");
  GStatBuf st;
  double cat_w[REPS], cat_c[REPS], read_w[REPS], load_w[REPS], load_c[REPS], noise_w[REPS], sub_w[REPS];
  double sse2_w[REPS], sse2_c[REPS], pread_w[REPS], pread_c[REPS];
  gboolean avx2 = efflux_cube_loader_uses_avx2 ();
  double ratio[REPS], dummy, mib, worst;
  static Shape shapes[MAX_SHAPES];
  int nshapes = parse_shapes (shape_list != NULL ? shape_list : DEFAULT_SHAPES, shapes);

  g_assert_no_error (error);
  path = g_build_filename (dir, "bench.fits", NULL);
  write_cube (path, NX, NY, NCHAN);
  for (int s = 0; s < nshapes; s++)
    {
      char name[96];

      g_snprintf (name, sizeof name, "%" G_GSIZE_FORMAT "x%" G_GSIZE_FORMAT "x%" G_GSIZE_FORMAT ".fits",
                  shapes[s].nx, shapes[s].ny, shapes[s].nchan);
      shapes[s].path = g_build_filename (dir, name, NULL);
      write_cube (shapes[s].path, shapes[s].nx, shapes[s].ny, shapes[s].nchan);
      g_assert_cmpint (g_stat (shapes[s].path, &st), ==, 0);
      shapes[s].mib = (double) st.st_size / (1024.0 * 1024.0);
      bench_time_cat (shapes[s].path, NULL);   /* into the page cache */
      time_load_shape (shapes[s].path, shapes[s].nx, shapes[s].ny, shapes[s].nchan);   /* warm-up */
    }
  g_assert_cmpint (g_stat (path, &st), ==, 0);
  mib = (double) st.st_size / (1024.0 * 1024.0);
  buf = g_malloc ((gsize) st.st_size);
  read_whole (path, buf, (gsize) st.st_size);   /* into the page cache */
  bench_time_cat (path, NULL);
  time_load (path, TRUE, FALSE, &dummy, &dummy);   /* warm-up */

  for (int r = 0; r < REPS; r++)
    {
      cat_w[r] = bench_time_cat (path, &cat_c[r]);
      read_w[r] = read_whole (path, buf, (gsize) st.st_size);
      time_load (path, TRUE, FALSE, &load_w[r], &load_c[r]);
      time_load (path, FALSE, FALSE, &noise_w[r], &dummy);
      time_load (path, TRUE, TRUE, &sub_w[r], &dummy);
      efflux_cube_loader_allow_avx2 (FALSE);
      time_load (path, TRUE, FALSE, &sse2_w[r], &sse2_c[r]);
      efflux_cube_loader_allow_avx2 (TRUE);
      efflux_read_batch_allow_ring (FALSE);
      time_load (path, TRUE, FALSE, &pread_w[r], &pread_c[r]);
      efflux_read_batch_allow_ring (TRUE);
      ratio[r] = load_w[r] / cat_w[r];
      for (int s = 0; s < nshapes; s++)
        {
          Shape *sh = &shapes[s];

          sh->cat_w[r] = bench_time_cat (sh->path, NULL);
          sh->load_w[r] = time_load_shape (sh->path, sh->nx, sh->ny, sh->nchan);
          sh->ratio[r] = sh->load_w[r] / sh->cat_w[r];
        }
    }
  g_clear_pointer (&buf, g_free);

  printf ("bench-load: %d x %d x %d float32, %.1f MiB; medians of %d rounds measured back to back\n",
          NX, NY, NCHAN, mib, REPS);
  printf ("  cat FILE > /dev/null (process) %8.3f s  %7.0f MiB/s  CPU %.3f s\n", median (cat_w, REPS),
          mib / median (cat_w, REPS), median (cat_c, REPS));
  printf ("  read() into a reused buffer    %8.3f s  %7.0f MiB/s\n", median (read_w, REPS),
          mib / median (read_w, REPS));
  printf ("  efflux_cube_load (no noise)    %8.3f s  %7.0f MiB/s  CPU %.3f s (all threads; %s)\n",
          median (load_w, REPS), mib / median (load_w, REPS), median (load_c, REPS),
          efflux_cube_loader_uses_avx512 () ? "AVX-512 transpose"
          : avx2 ? "AVX2 transpose, no AVX-512 here" : "SSE2 transpose, no AVX2 here");
  printf ("  efflux_cube_load, SSE2 only    %8.3f s  %7.0f MiB/s  CPU %.3f s\n",
          median (sse2_w, REPS), mib / median (sse2_w, REPS), median (sse2_c, REPS));
  printf ("  efflux_cube_load, pread () only %8.3f s  %7.0f MiB/s  CPU %.3f s (no io_uring batches)\n",
          median (pread_w, REPS), mib / median (pread_w, REPS), median (pread_c, REPS));
  printf ("  efflux_cube_load (+ noise)     %8.3f s\n", median (noise_w, REPS));
  printf ("  efflux_cube_load, 32 of the 256 channels (channel_subset, no noise) %8.3f s\n",
          median (sub_w, REPS));
  printf ("  load / cat: ratio of medians %.2f, median of the per-round ratios %.2f, CPU %.2f; "
          "load / read() %.2f\n", median (load_w, REPS) / median (cat_w, REPS), median (ratio, REPS),
          median (load_c, REPS) / median (cat_c, REPS), median (load_w, REPS) / median (read_w, REPS));
  worst = median (ratio, REPS);
  for (int s = 0; s < nshapes; s++)
    {
      Shape *sh = &shapes[s];
      gsize bytes = sh->nchan * 4;

      printf ("  %4" G_GSIZE_FORMAT " x %4" G_GSIZE_FORMAT " x %4" G_GSIZE_FORMAT " (%6.1f MiB; spectra of "
              "%5" G_GSIZE_FORMAT " bytes, %s): cat %.3f s, load %.3f s, median of the per-round ratios %.2f\n",
              sh->nx, sh->ny, sh->nchan, sh->mib, bytes,
              bytes % 64 == 0 ? "whole cache lines" : bytes % 16 == 0 ? "16-byte multiple" : "staged stores",
              median (sh->cat_w, REPS), median (sh->load_w, REPS), median (sh->ratio, REPS));
      worst = MAX (worst, median (sh->ratio, REPS));
    }
  printf ("  target (issue 4): load within 2x of cat for every shape: %s (largest median of the "
          "per-round ratios %.2f)\n", worst <= 2.0 ? "met" : "MISSED", worst);
  {
    g_autofree char *text = NULL;

    if (g_file_get_contents ("/proc/loadavg", &text, NULL, NULL))
      printf ("  load average at the end: %s", text);
  }
  fflush (stdout);

  if (python != NULL && python[0] != '\0' && root != NULL)
    {
      g_autofree char *script = g_build_filename (root, "tests", "bench", "load_numpy.py", NULL);
      const char *argv[] = { python, script, path, NULL };
      g_autofree char *out = NULL, *err = NULL;
      int status = 0;

      if (g_spawn_sync (NULL, (char **) argv, NULL, G_SPAWN_DEFAULT, NULL, NULL, &out, &err, &status, &error) &&
          g_spawn_check_wait_status (status, NULL))
        {
          double t_np = g_ascii_strtod (out, NULL);

          printf ("  astropy getdata + numpy transpose (load_numpy.py, median of 5) %8.3f s: "
                  "efflux_cube_load takes %.2f of it\n", t_np, median (load_w, REPS) / t_np);
        }
      else
        printf ("  load_numpy.py failed: %s\n", err ? err : (error ? error->message : "?"));
    }
  else
    printf ("  load_numpy.py not run: EFFLUX_PYTHON or EFFLUX_SOURCE_ROOT unset\n");

  g_unlink (path);
  for (int s = 0; s < nshapes; s++)
    {
      g_unlink (shapes[s].path);
      g_free (shapes[s].path);
    }
  g_rmdir (dir);
  return 0;
}
