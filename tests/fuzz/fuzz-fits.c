/* SPDX-License-Identifier: GPL-3.0-or-later */
/* libFuzzer target: the FITS cube reader (efflux_cube_load) on bytes held in memory.
 *
 * The bytes go into an anonymous memory file (memfd_create); the reader opens it through its
 * /proc/self/fd path, so the whole loader runs (card checks, CFITSIO, wcslib, units, beams, data,
 * noise) exactly as it does on a file on disk, without touching the disk. */

#include <errno.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <sys/mman.h>
#include <unistd.h>

#include "efflux-cube.h"

int LLVMFuzzerTestOneInput (const uint8_t *data, size_t size);

static int memfd = -1;
static char path[64];

int
LLVMFuzzerTestOneInput (const uint8_t *data,
                        size_t         size)
{
  EffluxCube *cube;
  GError *error = NULL;
  size_t done = 0;

  if (memfd < 0)
    {
      memfd = memfd_create ("efflux-fuzz.fits", 0);
      if (memfd < 0)
        abort ();
      g_snprintf (path, sizeof path, "/proc/self/fd/%d", memfd);
    }
  if (ftruncate (memfd, 0) != 0 || lseek (memfd, 0, SEEK_SET) != 0)
    abort ();
  while (done < size)
    {
      ssize_t n = write (memfd, data + done, size - done);
      if (n < 0 && errno == EINTR)
        continue;
      if (n <= 0)
        abort ();
      done += (size_t) n;
    }

  cube = efflux_cube_load (path, NULL, NULL, NULL, NULL, &error);
  if (cube != NULL)
    {
      /* the cube must be whole: touch every voxel and velocity */
      volatile float sum = 0;
      for (gsize i = 0; i < cube->nx * cube->ny * cube->nchan; i++)
        sum += cube->data[i];
      for (gsize k = 0; k < cube->nchan; k++)
        sum += (float) cube->velocity[k];
      (void) sum;
      efflux_cube_free (cube);
    }
  else
    {
      /* a refusal is one line naming the file */
      if (error == NULL || error->domain != EFFLUX_ERROR || strchr (error->message, '\n') != NULL)
        abort ();
      g_error_free (error);
    }
  return 0;
}
