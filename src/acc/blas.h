/* blas: make sure OpenBLAS can take its working buffer before calling it.
 *
 * On a thread's first level-3 call (dsyrk, dgemm, and LAPACK routines built
 * on them) OpenBLAS allocates a working buffer of BLAS_BUFFER_BYTES, which it
 * keeps for the thread's life.  When that allocation fails (an address-space
 * limit such as `ulimit -v`, or strict overcommit) it does not return an
 * error: it retries forever.  blas_thread_ready maps the same amount of
 * address space itself first (mmap, as OpenBLAS does), unmaps it, and makes a 1 x 1 call at once so that OpenBLAS
 * takes the buffer while the space is known to be free.  The check is made
 * once per thread; later calls cost a thread-local test.
 *
 * The allocation is BLAS_BUFFER_BYTES plus BLAS_BUFFER_MARGIN, so that a
 * small allocation by another thread between the free and OpenBLAS's own
 * allocation cannot take the space.  Only address space is used: OpenBLAS
 * touches the part of the buffer that a call needs (about 1 MiB for sheaf's
 * blocks).
 */
#ifndef SHEAF_BLAS_H
#define SHEAF_BLAS_H

#include <stddef.h>

/* OpenBLAS's BUFFER_SIZE on x86-64 (32 << 22 bytes) plus the page it adds. */
#define BLAS_BUFFER_BYTES ((size_t)128 << 20)
#define BLAS_BUFFER_MARGIN ((size_t)8 << 20)

/* 0 when this thread may call BLAS and LAPACK; -1 when its working buffer
 * does not fit (nothing was called then). */
int blas_thread_ready(void);

/* "OpenBLAS's working buffer (128 MiB of address space per thread)": for
 * messages. */
const char *blas_buffer_what(void);

#endif
