/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

/* What the benchmarks share: the pattern that fills the cube of bench-measure and bench-ui-drag,
 * the lobe outline written from pixel vertices, and the time of `cat FILE > /dev/null` (the
 * reference of the loading targets, bench-load and bench-ui-drag). */

#include <fcntl.h>
#include <spawn.h>
#include <sys/resource.h>
#include <sys/wait.h>
#include <unistd.h>

#include <glib.h>

#include "efflux-cube.h"

/* xorshift64*: a fast seeded pattern (Vigna 2016), only to fill the cube */
static inline guint64
next (guint64 *s)
{
  *s ^= *s >> 12;
  *s ^= *s << 25;
  *s ^= *s >> 27;
  return *s * 0x2545F4914F6CDD1DULL;
}

static inline char *
polygon (const EffluxCube *cube,
         const double     *px,
         const double     *py,
         int               n)
{
  GString *s = g_string_new (NULL);

  for (int i = 0; i < n; i++)
    {
      double ra, dec;

      g_assert_true (efflux_cube_pixel_to_icrs (cube, px[i], py[i], &ra, &dec));
      g_string_append_printf (s, "%s%.10f,%.10f", i ? ";" : "", ra, dec);
    }
  return g_string_free (s, FALSE);
}

extern char **environ;

/* `cat path > /dev/null`, the whole process: wall seconds, and its CPU seconds in *cpu (from
 * getrusage of the children) unless cpu is NULL. Started with posix_spawnp: the child shares our
 * memory until exec, as a small shell's fork would; g_spawn_sync forks, and forking a process
 * that holds hundreds of MiB in 4 KiB pages added several ms to cat's time. */
static inline double
bench_time_cat (const char *path,
                double     *cpu)
{
  char *argv[] = { (char *) "cat", (char *) path, NULL };
  posix_spawn_file_actions_t fa;
  struct rusage r0, r1;
  pid_t pid;
  int status = 0;
  gint64 t0;
  double wall;

  getrusage (RUSAGE_CHILDREN, &r0);
  t0 = g_get_monotonic_time ();
  g_assert_cmpint (posix_spawn_file_actions_init (&fa), ==, 0);
  g_assert_cmpint (posix_spawn_file_actions_addopen (&fa, 1, "/dev/null", O_WRONLY, 0), ==, 0);
  g_assert_cmpint (posix_spawnp (&pid, "cat", &fa, NULL, argv, environ), ==, 0);
  g_assert_cmpint (waitpid (pid, &status, 0), ==, pid);
  wall = (double) (g_get_monotonic_time () - t0) / 1e6;
  getrusage (RUSAGE_CHILDREN, &r1);
  posix_spawn_file_actions_destroy (&fa);
  g_assert_true (WIFEXITED (status) && WEXITSTATUS (status) == 0);
  if (cpu != NULL)
    *cpu = (double) (r1.ru_utime.tv_sec - r0.ru_utime.tv_sec + r1.ru_stime.tv_sec - r0.ru_stime.tv_sec) +
           (double) (r1.ru_utime.tv_usec - r0.ru_utime.tv_usec + r1.ru_stime.tv_usec - r0.ru_stime.tv_usec) * 1e-6;
  return wall;
}
