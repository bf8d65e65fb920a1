/* zeroed: calloc for the accumulators' tables, which are read (probed)
 * before they are written.
 *
 * glibc's calloc hands out fresh pages of a large block unwritten, since the
 * kernel's pages start at zero.  The first read of such a page maps the
 * kernel's shared zero page; the first write then replaces that mapping,
 * and a mapping replaced in a process with threads on other CPUs is flushed
 * from their TLBs by an interrupt to each (in a virtual machine, an exit to
 * the host on both sides).  A table grown in a scan on two threads took
 * 12% of the samples of the 500-column scan at -j2 that way (perf:
 * do_wp_page, flush_tlb_mm_range, smp_call_function_many_cond).  Zeros
 * written here make the first touch of each page a write: an ordinary page
 * fault, with nothing to flush. */
#ifndef SHEAF_ZEROED_H
#define SHEAF_ZEROED_H

#include <stdint.h>
#include <stdlib.h>
#include <string.h>

/* memset through a pointer the compiler cannot see through: GCC turns a
 * malloc followed by a memset of zeros into calloc, which is the point
 * lost. */
static void *(*const volatile zeroed_fill)(void *, int, size_t) = memset;

static inline void *zeroed(size_t n, size_t size)
{
    if (size && n > SIZE_MAX / size) return NULL;
    size_t bytes = n * size;
    void *p = malloc(bytes > 0 ? bytes : 1);
    if (p) zeroed_fill(p, 0, bytes);
    return p;
}

#endif
