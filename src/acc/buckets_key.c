/* buckets: keys, bounds, representative points and the error bound of a
 * level (see buckets.h for the guarantees, buckets.c for the method).
 */
#include <float.h>
#include <math.h>

#include "acc/buckets.h"
#include "acc/buckets_key.h"

int64_t buckets_key(double x) { return key_of_bits(double_bits(x), 0); }

int64_t buckets_key_at(int64_t key0, int level) { return rekey(key0, clamp_level(level)); }

/* Bounds of a positive magnitude m at level. */
static void magnitude_bounds(int64_t m, int level, double *lo, double *hi)
{
    int64_t top = max_magnitude(level);
    if (m > top) m = top;
    uint64_t first = (uint64_t)(m - 1) << level;
    uint64_t last = first + ((uint64_t)1 << level) - 1;
    if (last > LAST_INDEX) last = LAST_INDEX;
    uint64_t lo_bits = first << INDEX_SHIFT;
    if (lo_bits == 0) lo_bits = 1; /* 0 itself is key 0 */
    *lo = bits_double(lo_bits);
    *hi = bits_double(((last + 1) << INDEX_SHIFT) - 1);
}

void buckets_bounds(int64_t key, int level, double *lo, double *hi)
{
    level = clamp_level(level);
    if (key == 0) { *lo = *hi = 0.0; return; }
    if (key > 0) { magnitude_bounds(key, level, lo, hi); return; }
    double plo, phi;
    /* -key would overflow only for INT64_MIN, which clamps anyway */
    magnitude_bounds(key == INT64_MIN ? INT64_MAX : -key, level, &plo, &phi);
    *lo = -phi;
    *hi = -plo;
}

double buckets_point(int64_t key, int level)
{
    if (key == 0) return 0.0;
    double lo, hi;
    magnitude_bounds(key > 0 ? key : key == INT64_MIN ? INT64_MAX : -key, clamp_level(level), &lo, &hi);
    /* 2 lo hi / (lo + hi) without overflow near DBL_MAX or underflow of 1/lo */
    double m = lo * (2.0 / (1.0 + lo / hi));
    return key > 0 ? m : -m;
}

double buckets_relative_error(int level)
{
    level = clamp_level(level);
    double rel;
    if (level <= BUCKETS_MANTISSA_BITS) {
        double w = ldexp(1.0, level - BUCKETS_MANTISSA_BITS);
        rel = w / (2.0 + w);
    } else {
        double r = ldexp(1.0, 1 << (level - BUCKETS_MANTISSA_BITS)); /* inf from level 17 */
        rel = 1.0 - 2.0 / (r + 1.0);
    }
    rel += 4 * DBL_EPSILON;
    return rel > 1.0 ? 1.0 : rel;
}
