/* radix: a stable LSD radix sort of (64-bit key, 32-bit index) pairs, for
 * the bucket store's orderings (acc/buckets.c), whose keys span a few
 * octaves and cells a few bits: two or three passes instead of a
 * comparison sort.
 */
#ifndef SHEAF_RADIX_H
#define SHEAF_RADIX_H

#include <stddef.h>
#include <stdint.h>

typedef struct {
    uint64_t k;  /* the sort key */
    uint32_t i;  /* index of the item */
} radix_pair;

/* Sorts a[0..n) by k, stably, RADIX_BITS bits at a time over only the bits
 * of k - min(k) that can differ.  tmp holds n pairs; returns whichever of a
 * and tmp holds the result (the pairs themselves unchanged). */
radix_pair *radix_sort_pairs(radix_pair *a, radix_pair *tmp, size_t n);

#endif
