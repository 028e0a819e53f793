/* SPDX-License-Identifier: GPL-3.0-or-later */
/* efflux_read_batch_run (efflux-readbatch.c): scattered reads of a file, through an io_uring
 * where the kernel offers one and through pread () otherwise, must give exactly the file's bytes.
 * The reference is the file itself, written here byte by byte from a known pattern; every piece
 * read back is compared with it byte for byte. The pieces come in more groups than the batch
 * holds at once, with odd lengths and offsets, some of 0 bytes; a piece that runs past the end of
 * the file must fail with EIO (the early end of file pread_all reports) and leave the batch
 * usable. */
#include "config.h"

#include <errno.h>
#include <fcntl.h>
#include <string.h>
#include <unistd.h>

#include <glib.h>
#include <glib/gstdio.h>

#include "efflux-readbatch.h"

#define FILE_BYTES (3u * 1024u * 1024u + 123u)
#define N_PIECES 300

static guint8
pattern (guint64 i)
{
  return (guint8) ((i * 2654435761u) >> 13);
}

static void
check_reads (const char *path,
             gboolean    ring)
{
  g_autoptr(GRand) rand = g_rand_new_with_seed (17);
  g_autofree EffluxReadPiece *pieces = g_new0 (EffluxReadPiece, N_PIECES);
  g_autofree guint8 *buf = NULL;
  gsize total = 0, at = 0;
  EffluxReadBatch *batch;
  int fd, err_no = 0;
  guint8 over[64];

  efflux_read_batch_allow_ring (ring);
  batch = efflux_read_batch_new (64);
  efflux_read_batch_allow_ring (TRUE);
  if (!ring)
    g_assert_false (efflux_read_batch_uses_ring (batch));
  g_test_message ("ring %s: %s", ring ? "allowed" : "forbidden",
                  efflux_read_batch_uses_ring (batch) ? "io_uring" : "pread ()");

  /* lengths of 0 to ~40 KiB at any offset, into disjoint parts of one buffer */
  for (guint i = 0; i < N_PIECES; i++)
    {
      pieces[i].len = i % 37 == 0 ? 0 : (gsize) g_rand_int_range (rand, 1, 40000);
      pieces[i].offset = (guint64) g_rand_int_range (rand, 0, (gint32) (FILE_BYTES - pieces[i].len));
      total += pieces[i].len;
    }
  buf = g_malloc (total + 1);
  for (guint i = 0; i < N_PIECES; i++)
    {
      pieces[i].buf = buf + at;
      at += pieces[i].len;
    }
  memset (buf, 0xa5, total + 1);

  fd = open (path, O_RDONLY | O_CLOEXEC);
  g_assert_cmpint (fd, >=, 0);
  g_assert_true (efflux_read_batch_run (batch, fd, pieces, N_PIECES, &err_no));
  for (guint i = 0; i < N_PIECES; i++)
    for (gsize j = 0; j < pieces[i].len; j++)
      if (((guint8 *) pieces[i].buf)[j] != pattern (pieces[i].offset + j))
        g_error ("piece %u byte %" G_GSIZE_FORMAT ": %u, the file has %u", i, j,
                 ((guint8 *) pieces[i].buf)[j], pattern (pieces[i].offset + j));
  g_assert_cmpuint (buf[total], ==, 0xa5);   /* nothing written past the last piece */

  /* a piece past the end of the file: EIO, and the batch still reads afterwards */
  pieces[0].buf = over;
  pieces[0].len = sizeof over;
  pieces[0].offset = FILE_BYTES - 10;
  g_assert_false (efflux_read_batch_run (batch, fd, pieces, 3, &err_no));
  g_assert_cmpint (err_no, ==, EIO);
  for (gsize j = 0; j < 10; j++)
    g_assert_cmpuint (over[j], ==, pattern (FILE_BYTES - 10 + j));
  pieces[0].len = 10;
  g_assert_true (efflux_read_batch_run (batch, fd, pieces, 1, &err_no));
  /* a closed descriptor: EBADF, whichever way the bytes go */
  close (fd);
  g_assert_false (efflux_read_batch_run (batch, fd, pieces + 1, 2, &err_no));
  g_assert_cmpint (err_no, ==, EBADF);
  efflux_read_batch_free (batch);
}

static void
test_reads (void)
{
  g_autoptr(GError) error = NULL;
  g_autofree char *dir = g_dir_make_tmp ("efflux-test-readbatch-XXXXXX", &error);
  g_autofree char *path = NULL;
  g_autofree guint8 *bytes = g_malloc (FILE_BYTES);

  g_assert_no_error (error);
  path = g_build_filename (dir, "bytes.bin", NULL);
  for (guint64 i = 0; i < FILE_BYTES; i++)
    bytes[i] = pattern (i);
  g_assert_true (g_file_set_contents (path, (const char *) bytes, FILE_BYTES, &error));
  g_assert_no_error (error);
  check_reads (path, TRUE);
  check_reads (path, FALSE);
  g_unlink (path);
  g_rmdir (dir);
}

int
main (int    argc,
      char **argv)
{
  g_test_init (&argc, &argv, NULL);
  g_test_add_func ("/readbatch/reads", test_reads);
  return g_test_run ();
}
