/* SPDX-License-Identifier: GPL-3.0-or-later */
#pragma once

#include <glib.h>

G_BEGIN_DECLS

/* Many reads of one file at scattered offsets in one system call: a Linux io_uring where the
 * kernel offers one (5.6 or later, not forbidden by a seccomp filter or by the
 * kernel.io_uring_disabled sysctl), pread () one piece at a time otherwise. The bytes are the
 * same either way; the ring only spares the system calls, which cost 1-2 us each on a virtual
 * machine (the cube loader makes 64 reads of 64 KiB per 4 MiB it loads).
 *
 * One batch belongs to one thread at a time. */
typedef struct
{
  void    *buf;
  gsize    len;
  guint64  offset;
} EffluxReadPiece;

typedef struct _EffluxReadBatch EffluxReadBatch;

/* A batch for up to max_pieces reads in flight at once (more are read in groups). Never NULL:
 * without a ring it reads with pread (). */
EffluxReadBatch *efflux_read_batch_new       (guint                  max_pieces);
void             efflux_read_batch_free      (EffluxReadBatch       *batch);
/* Whether the batch has a ring (FALSE: pread ()). */
gboolean         efflux_read_batch_uses_ring (const EffluxReadBatch *batch);

/* Reads every piece whole from fd (short reads and EINTR are resumed with pread ()); FALSE with
 * *err_no (EIO for an early end of file) when one cannot be read. Pieces may complete in any
 * order; they must not overlap. */
gboolean         efflux_read_batch_run       (EffluxReadBatch       *batch,
                                              int                    fd,
                                              const EffluxReadPiece *pieces,
                                              guint                  n,
                                              int                   *err_no);

/* FALSE: new batches read with pread () only, for the tests and benchmarks that compare the
 * two. TRUE (the default): a ring where the kernel offers one. */
void             efflux_read_batch_allow_ring (gboolean allow);

G_END_DECLS
