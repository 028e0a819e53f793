/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Test helper for tests/test-recovery-file.c: loads a dossier and edits it in a loop, as the
 * desktop program would, keeping its recovery file (efflux-recovery.h) up to date.
 *
 *   recovery-child DOSSIER
 *
 * Every 0.1 s edit n (n = 1, 2, ...) sets distance-pc = 100 + n and the first lobe's note to
 * "edit n"; every 0.5 s the recovery file is written. Each step is logged on standard output,
 * flushed at once: "edit N T" after the edit, "wrote N T" after a recovery write holding edits up
 * to N, T = g_get_monotonic_time () (CLOCK_MONOTONIC, shared by all processes). Runs until killed. */
#include "config.h"

#include <glib.h>
#include <stdio.h>

#include "efflux-dossier.h"
#include "efflux-recovery.h"

int
main (int    argc,
      char **argv)
{
  g_autoptr (EffluxDossier) d = NULL;
  g_autoptr (GError) error = NULL;
  gint64 last_write;

  if (argc != 2)
    {
      fprintf (stderr, "usage: recovery-child DOSSIER\n");
      return 2;
    }
  d = efflux_dossier_load (argv[1], &error);
  if (d == NULL)
    {
      fprintf (stderr, "recovery-child: %s\n", error->message);
      return 1;
    }
  printf ("ready 0 %" G_GINT64_FORMAT "\n", g_get_monotonic_time ());
  fflush (stdout);
  last_write = g_get_monotonic_time ();
  for (guint n = 1; ; n++)
    {
      g_autofree char *note = g_strdup_printf ("edit %u", n);
      gint64 now;

      g_usleep (100 * 1000);
      if (!efflux_dossier_set_distance (d, 100.0 + n, &error) ||
          (d->lobes->len > 0 &&
           !efflux_dossier_set_lobe_note (d, ((EffluxDossierLobe *) g_ptr_array_index (d->lobes, 0))->name,
                                          note, &error)))
        {
          fprintf (stderr, "recovery-child: %s\n", error->message);
          return 1;
        }
      printf ("edit %u %" G_GINT64_FORMAT "\n", n, g_get_monotonic_time ());
      fflush (stdout);
      now = g_get_monotonic_time ();
      if (now - last_write >= 500 * 1000)
        {
          if (!efflux_recovery_write (d, argv[1], &error))
            {
              fprintf (stderr, "recovery-child: %s\n", error->message);
              return 1;
            }
          last_write = now;
          printf ("wrote %u %" G_GINT64_FORMAT "\n", n, g_get_monotonic_time ());
          fflush (stdout);
        }
    }
  return 0;
}
