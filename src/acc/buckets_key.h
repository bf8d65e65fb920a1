/* buckets, private part: the key of a double from its bits, shared by the
 * store (buckets.c) and the key, bounds and error functions (buckets_key.c).
 * See buckets.h for the mapping and buckets.c for the method.
 */
#ifndef SHEAF_BUCKETS_KEY_H
#define SHEAF_BUCKETS_KEY_H

#include <stdint.h>
#include <string.h>

#include "acc/buckets.h"

#define SIGN_BIT 0x8000000000000000ull
#define MAG_MASK 0x7FFFFFFFFFFFFFFFull
#define EXP_ALL_ONES 0x7FF0000000000000ull /* inf; NaN above */
#define INDEX_SHIFT (52 - BUCKETS_MANTISSA_BITS)
#define LAST_INDEX 0x3FF7Full /* (0x7FE << 7) | 0x7F: largest finite u >> 45 */

static inline uint64_t double_bits(double x)
{
    uint64_t u;
    memcpy(&u, &x, sizeof u);
    return u;
}

static inline double bits_double(uint64_t u)
{
    double x;
    memcpy(&x, &u, sizeof x);
    return x;
}

static inline int64_t key_of_bits(uint64_t u, int level)
{
    uint64_t mag = u & MAG_MASK;
    int64_t m = (int64_t)((mag >> (INDEX_SHIFT + level)) + (mag != 0));
    int64_t neg = -(int64_t)(u >> 63);
    return (m ^ neg) - neg;
}

static inline int clamp_level(int level)
{
    return level < 0 ? 0 : level > BUCKETS_MAX_LEVEL ? BUCKETS_MAX_LEVEL : level;
}

/* Largest magnitude of a finite value at a level. */
static inline int64_t max_magnitude(int level)
{
    return (int64_t)(LAST_INDEX >> level) + 1;
}

/* Key after collapsing `steps` more levels. */
static inline int64_t rekey(int64_t key, int steps)
{
    if (key == 0 || steps == 0) return key;
    if (key > 0) return ((key - 1) >> steps) + 1;
    return -(((-key - 1) >> steps) + 1);
}

#endif
