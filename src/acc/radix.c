/* radix: see radix.h. */
#include "acc/radix.h"

#include <string.h>

#define RADIX_BITS 11

/* Sorts a[0..n) by k, stably: LSD radix sort, up to RADIX_BITS at a time over
 * only the bits in which the keys differ (a store's keys span a few
 * octaves and its cells a few bits, so two or three passes).  tmp holds n
 * pairs; returns whichever of a and tmp holds the result. */
radix_pair *radix_sort_pairs(radix_pair *a, radix_pair *tmp, size_t n)
{
    uint64_t any = 0, all = ~(uint64_t)0;
    for (size_t i = 0; i < n; i++) {
        any |= a[i].k;
        all &= a[i].k;
    }
    uint64_t vary = any ^ all;
    if (!vary) return a;
    int lo = __builtin_ctzll(vary), hi = 63 - __builtin_clzll(vary);
    /* Digits no wider than log2(n) - 1 bits: the counters stay fewer than
     * the items. */
    int bits = 63 - __builtin_clzll((uint64_t)n) - 1;
    if (bits > RADIX_BITS) bits = RADIX_BITS;
    if (bits < 4) bits = 4;
    const uint64_t digit = ((uint64_t)1 << bits) - 1;
    size_t count[1u << RADIX_BITS];
    for (int shift = lo; shift <= hi; shift += bits) {
        memset(count, 0, ((size_t)1 << bits) * sizeof *count);
        for (size_t i = 0; i < n; i++) count[(a[i].k >> shift) & digit]++;
        size_t at = 0;
        for (size_t d = 0; d <= digit; d++) {
            size_t c = count[d];
            count[d] = at;
            at += c;
        }
        for (size_t i = 0; i < n; i++) tmp[count[(a[i].k >> shift) & digit]++] = a[i];
        radix_pair *t = a;
        a = tmp;
        tmp = t;
    }
    return a;
}
