/* radix: see radix.h. */
#include "acc/radix.h"

#include <string.h>

#define RADIX_BITS 11

/* Sorts a[0..n) by k, stably: LSD radix sort of k - min, up to RADIX_BITS
 * at a time over only the bits of the range above those in which all keys
 * agree (a store's keys span a few octaves and its cells a few bits, so two
 * or three passes).  tmp holds n pairs; returns whichever of a and tmp holds
 * the result. */
radix_pair *radix_sort_pairs(radix_pair *a, radix_pair *tmp, size_t n)
{
    if (n < 2) return a;
    /* The digits are those of k - min: the bits from the lowest one in which
     * the keys differ to the top of the range.  Keys of both signs span a
     * range of a few octaves around the middle of the 64 bits, where every
     * bit of the upper half differs between two keys (0x7fff... against
     * 0x8000...): the range takes 2 passes of 9 or 10 bits where the
     * differing bits took 4. */
    uint64_t any = 0, all = ~(uint64_t)0, min = a[0].k, max = a[0].k;
    for (size_t i = 0; i < n; i++) {
        uint64_t k = a[i].k;
        any |= k;
        all &= k;
        min = k < min ? k : min;
        max = k > max ? k : max;
    }
    if (min == max) return a;
    /* Keys agree below `lo`, so k - min has zeros there. */
    int lo = __builtin_ctzll(any ^ all), hi = 63 - __builtin_clzll(max - min);
    /* Digits no wider than log2(n) - 1 bits: the counters stay fewer than
     * the items. */
    int bits = 63 - __builtin_clzll((uint64_t)n) - 1;
    if (bits > RADIX_BITS) bits = RADIX_BITS;
    if (bits < 4) bits = 4;
    const uint64_t digit = ((uint64_t)1 << bits) - 1;
    size_t count[1u << RADIX_BITS];
    for (int shift = lo; shift <= hi; shift += bits) {
        memset(count, 0, ((size_t)1 << bits) * sizeof *count);
        for (size_t i = 0; i < n; i++) count[((a[i].k - min) >> shift) & digit]++;
        size_t at = 0;
        for (size_t d = 0; d <= digit; d++) {
            size_t c = count[d];
            count[d] = at;
            at += c;
        }
        for (size_t i = 0; i < n; i++) tmp[count[((a[i].k - min) >> shift) & digit]++] = a[i];
        radix_pair *t = a;
        a = tmp;
        tmp = t;
    }
    return a;
}
