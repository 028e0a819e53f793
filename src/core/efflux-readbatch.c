/* SPDX-License-Identifier: GPL-3.0-or-later */
/* Batches of scattered reads (see efflux-readbatch.h).
 *
 * The ring is driven by hand, with the raw system calls of the kernel's uapi header (no liburing
 * dependency): io_uring_setup, three shared mappings (submission ring, completion ring, entries),
 * then per batch one io_uring_enter that submits every read and waits for all of them. For data
 * in the page cache the kernel completes buffered reads inline, within that call. Memory order
 * follows the kernel's io_uring.h: the application publishes entries before it stores the
 * submission tail (release) and reads completions after it loads the completion tail (acquire).
 *
 * A completion with an error (an old kernel without IORING_OP_READ answers EINVAL), or short, is
 * finished with pread (), which gives the definitive answer. */
#include "config.h"

#include <errno.h>
#include <string.h>
#include <unistd.h>

#include "efflux-fitshead.h"
#include "efflux-readbatch.h"

#ifdef HAVE_LINUX_IO_URING_H
#include <linux/io_uring.h>
#include <sys/mman.h>
#include <sys/syscall.h>
#endif

static gint allow_ring = 1;

struct _EffluxReadBatch
{
  guint      max_pieces;
  int        ring_fd;     /* -1: pread () */
#ifdef HAVE_LINUX_IO_URING_H
  unsigned  *sq_tail, *sq_mask, *sq_array;
  unsigned  *cq_head, *cq_tail, *cq_mask;
  struct io_uring_sqe *sqes;
  struct io_uring_cqe *cqes;
  void      *sq_map, *cq_map;
  gsize      sq_size, cq_size, sqe_size;
#endif
};

void
efflux_read_batch_allow_ring (gboolean allow)
{
  g_atomic_int_set (&allow_ring, allow ? 1 : 0);
}

#ifdef HAVE_LINUX_IO_URING_H
static void
ring_unmap (EffluxReadBatch *b)
{
  if (b->sqes != NULL && b->sqes != MAP_FAILED)
    munmap (b->sqes, b->sqe_size);
  if (b->cq_map != NULL && b->cq_map != MAP_FAILED && b->cq_map != b->sq_map)
    munmap (b->cq_map, b->cq_size);
  if (b->sq_map != NULL && b->sq_map != MAP_FAILED)
    munmap (b->sq_map, b->sq_size);
  if (b->ring_fd >= 0)
    close (b->ring_fd);
  b->ring_fd = -1;
}

static void
ring_setup (EffluxReadBatch *b)
{
  struct io_uring_params p;
  char *sq, *cq;
  int fd;

  memset (&p, 0, sizeof p);
  fd = (int) syscall (__NR_io_uring_setup, b->max_pieces, &p);
  if (fd < 0)
    return;   /* ENOSYS, EPERM (seccomp, sysctl), ENOMEM: pread () */
  b->ring_fd = fd;
  b->sq_size = p.sq_off.array + p.sq_entries * sizeof (unsigned);
  b->cq_size = p.cq_off.cqes + p.cq_entries * sizeof (struct io_uring_cqe);
  if (p.features & IORING_FEAT_SINGLE_MMAP)
    b->sq_size = b->cq_size = MAX (b->sq_size, b->cq_size);
  b->sq_map = mmap (NULL, b->sq_size, PROT_READ | PROT_WRITE, MAP_SHARED | MAP_POPULATE, fd,
                    IORING_OFF_SQ_RING);
  if (b->sq_map == MAP_FAILED)
    {
      ring_unmap (b);
      return;
    }
  b->cq_map = (p.features & IORING_FEAT_SINGLE_MMAP)
    ? b->sq_map
    : mmap (NULL, b->cq_size, PROT_READ | PROT_WRITE, MAP_SHARED | MAP_POPULATE, fd, IORING_OFF_CQ_RING);
  b->sqe_size = p.sq_entries * sizeof (struct io_uring_sqe);
  if (b->cq_map != MAP_FAILED)
    b->sqes = mmap (NULL, b->sqe_size, PROT_READ | PROT_WRITE, MAP_SHARED | MAP_POPULATE, fd,
                    IORING_OFF_SQES);
  if (b->cq_map == MAP_FAILED || b->sqes == MAP_FAILED)
    {
      ring_unmap (b);
      return;
    }
  sq = b->sq_map;
  cq = b->cq_map;
  b->sq_tail = (unsigned *) (sq + p.sq_off.tail);
  b->sq_mask = (unsigned *) (sq + p.sq_off.ring_mask);
  b->sq_array = (unsigned *) (sq + p.sq_off.array);
  b->cq_head = (unsigned *) (cq + p.cq_off.head);
  b->cq_tail = (unsigned *) (cq + p.cq_off.tail);
  b->cq_mask = (unsigned *) (cq + p.cq_off.ring_mask);
  b->cqes = (struct io_uring_cqe *) (cq + p.cq_off.cqes);
  b->max_pieces = MIN (b->max_pieces, p.sq_entries);
}

/* Up to max_pieces pieces through the ring. FALSE with *err_no when a piece cannot be read (or the
 * ring fails, after every submitted read has completed). */
static gboolean
ring_run (EffluxReadBatch       *b,
          int                    fd,
          const EffluxReadPiece *pc,
          guint                  n,
          int                   *err_no)
{
  unsigned tail = *b->sq_tail;
  guint submitted = 0, done = 0;
  gboolean ok = TRUE, broken = FALSE;

  for (guint i = 0; i < n; i++)
    {
      unsigned idx = (tail + i) & *b->sq_mask;
      struct io_uring_sqe *s = &b->sqes[idx];

      memset (s, 0, sizeof *s);
      s->opcode = IORING_OP_READ;
      s->fd = fd;
      s->addr = (guint64) (guintptr) pc[i].buf;
      s->len = (guint32) pc[i].len;
      s->off = pc[i].offset;
      s->user_data = i;
      b->sq_array[idx] = idx;
    }
  __atomic_store_n (b->sq_tail, tail + n, __ATOMIC_RELEASE);

  /* broken: io_uring_enter failed for good; wait for what was submitted, then pread () it all */
  while (done < submitted || (!broken && done < n))
    {
      long ret = syscall (__NR_io_uring_enter, b->ring_fd, broken ? 0 : n - submitted,
                          (broken ? submitted : n) - done, IORING_ENTER_GETEVENTS, NULL, 0);
      unsigned h, t;

      if (ret < 0)
        {
          int e = errno;

          if (e == EINTR || e == EAGAIN || e == EBUSY)
            continue;
          if (broken)
            {
              *err_no = e;
              return FALSE;
            }
          broken = TRUE;
          continue;
        }
      if (!broken)
        submitted += (guint) ret;
      h = *b->cq_head;
      t = __atomic_load_n (b->cq_tail, __ATOMIC_ACQUIRE);
      for (; h != t; h++)
        {
          const struct io_uring_cqe *c = &b->cqes[h & *b->cq_mask];
          const EffluxReadPiece *q = &pc[c->user_data];
          gsize got = c->res > 0 ? (gsize) c->res : 0;

          done++;
          if (ok && got < q->len)
            ok = efflux_fits_pread_all (fd, (char *) q->buf + got, q->len - got, q->offset + got, err_no);
        }
      __atomic_store_n (b->cq_head, h, __ATOMIC_RELEASE);
    }
  if (broken)
    {
      /* entries never taken stay in the ring, which is not used again */
      ring_unmap (b);
      for (guint i = 0; i < n && ok; i++)
        ok = efflux_fits_pread_all (fd, pc[i].buf, pc[i].len, pc[i].offset, err_no);
    }
  return ok;
}
#endif

EffluxReadBatch *
efflux_read_batch_new (guint max_pieces)
{
  EffluxReadBatch *b = g_new0 (EffluxReadBatch, 1);

  b->max_pieces = CLAMP (max_pieces, 1u, 4096u);
  b->ring_fd = -1;
#ifdef HAVE_LINUX_IO_URING_H
  if (g_atomic_int_get (&allow_ring))
    ring_setup (b);
#endif
  return b;
}

void
efflux_read_batch_free (EffluxReadBatch *b)
{
  if (b == NULL)
    return;
#ifdef HAVE_LINUX_IO_URING_H
  ring_unmap (b);
#endif
  g_free (b);
}

gboolean
efflux_read_batch_uses_ring (const EffluxReadBatch *b)
{
  return b->ring_fd >= 0;
}

gboolean
efflux_read_batch_run (EffluxReadBatch       *b,
                       int                    fd,
                       const EffluxReadPiece *pieces,
                       guint                  n,
                       int                   *err_no)
{
  for (guint i0 = 0; i0 < n; i0 += b->max_pieces)
    {
      guint m = MIN (b->max_pieces, n - i0);
      gboolean ring = b->ring_fd >= 0;

      /* a read's length must fit the entry's 32-bit field */
      for (guint i = i0; i < i0 + m && ring; i++)
        ring = pieces[i].len <= G_MAXINT32;
#ifdef HAVE_LINUX_IO_URING_H
      if (ring)
        {
          if (!ring_run (b, fd, pieces + i0, m, err_no))
            return FALSE;
          continue;
        }
#endif
      for (guint i = i0; i < i0 + m; i++)
        if (!efflux_fits_pread_all (fd, pieces[i].buf, pieces[i].len, pieces[i].offset, err_no))
          return FALSE;
    }
  return TRUE;
}
