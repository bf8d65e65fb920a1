/* zeroed (src/acc/zeroed.h): the accumulators' tables are allocated zeroed
 * and written at once, so that probing them before any insert maps no
 * shared zero page (whose later replacement, with threads on other CPUs,
 * costs an interrupt to each). */
#include <criterion/criterion.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>
#include <sys/resource.h>
#include <unistd.h>
#include "acc/zeroed.h"

static long minor_faults(void)
{
    struct rusage u;
    getrusage(RUSAGE_SELF, &u);
    return u.ru_minflt;
}

Test(zeroed, is_zero_where_freed_memory_was_dirty)
{
    /* a block the allocator may hand back: dirtied, freed, asked for again */
    for (size_t bytes = 64; bytes <= ((size_t)8 << 20); bytes *= 8) {
        unsigned char *d = malloc(bytes);
        cr_assert(d);
        memset(d, 0xAB, bytes);
        free(d);
        unsigned char *z = zeroed(bytes / 8, 8);
        cr_assert(z);
        for (size_t i = 0; i < bytes; i++) cr_assert_eq(z[i], 0, "%zu bytes: byte %zu", bytes, i);
        free(z);
    }
}

Test(zeroed, refuses_a_size_that_overflows)
{
    cr_assert_null(zeroed(SIZE_MAX / 8 + 1, 8));
    void *p = zeroed(0, 16); /* nothing asked: still a pointer free() takes */
    cr_assert(p);
    free(p);
}

Test(zeroed, pages_are_written_before_the_table_is_probed)
{
    /* Reading then writing every page of the block (a probe, then an insert)
     * takes no page faults: the pages were written when allocated.  With
     * calloc on a fresh 16 MiB block the same loop took two faults a page
     * here (a read mapping the zero page, then the write replacing it). */
    const size_t bytes = (size_t)16 << 20, page = (size_t)sysconf(_SC_PAGESIZE);
    volatile unsigned char *z = zeroed(bytes, 1);
    cr_assert(z);
    long before = minor_faults();
    unsigned sum = 0;
    for (size_t i = 0; i < bytes; i += page) sum += z[i];
    for (size_t i = 0; i < bytes; i += page) z[i] = 1;
    long faults = minor_faults() - before;
    cr_assert_eq(sum, 0);
    cr_assert_lt(faults, (long)(bytes / page / 16), "%ld faults over %zu pages", faults,
                 bytes / page);
    free((void *)z);
}
