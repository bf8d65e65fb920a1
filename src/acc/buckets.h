/* buckets: data-independent log-linear binning of doubles, with counts per
 * (bucket, cell) in a sparse store that keeps a budget by uniform collapse.
 *
 * Mapping (level 0): from the bits of the double, no log() call.  Zero (and
 * -0) is bucket 0.  For |x| > 0 the magnitude index is
 *     i = ((biased exponent << 7) | top 7 mantissa bits) + 1
 * (subnormals use exponent 0), so bucket i covers [lo, lo * (1 + 2^-7)) within
 * an octave: relative width at most 2^-7 = 0.78%.  Negative values mirror:
 * key = -i.  Keys are monotone in x.  Collapse level L maps magnitude index i
 * to ((i - 1) >> L) + 1: adjacent pairs merge and the relative width roughly
 * doubles per level (as in the UDDSketch collapse, Epicoco et al. 2020).
 * Levels run from 0 to BUCKETS_MAX_LEVEL; from level 7 on a bucket spans
 * 2^(L-7) whole octaves, and at BUCKETS_MAX_LEVEL only the keys -1, 0, 1
 * remain, so any budget >= BUCKETS_MIN_BUDGET can always be met.
 *
 * Representative point and error bound.  A bucket with closed value range
 * [lo, hi] (0 < lo <= hi; mirrored for negative keys) is reported as the
 * harmonic midpoint m = 2 lo hi / (lo + hi), the point that minimises the
 * worst relative error over the bucket: for every x in [lo, hi]
 *     |m - x| <= (hi - lo) / (hi + lo) * |x|.
 * (The arithmetic midpoint would only give (hi - lo) / (2 lo).)  The level's
 * bound buckets_relative_error(L) is the maximum of that ratio over all
 * buckets of the level that lie in the normal range: w / (2 + w) with
 * w = 2^(L-7) for L <= 7 (1/257 = 0.389% at level 0), and (r - 1) / (r + 1)
 * with r = 2^(2^(L-7)) for L > 7 (1/3 at level 7, 3/5 at level 8, -> 1).  It
 * holds for every |x| >= 2^(max(1, 2^(L-7)) - 1023) (DBL_MIN for L <= 7).
 * Buckets below that floor contain subnormals, where the binning is linear:
 * the per-bucket ratio above still holds there but can approach 1.
 *
 * A store counts, per key, one counter per cell (the class index of the row
 * for a classification target, a coarse target bucket for regression, 0 with
 * no target).  When the number of occupied keys exceeds the budget, the store
 * collapses one level at a time until it fits.  Merging two stores first
 * brings both to the coarser level.  Counts are never lost: collapse and
 * merge preserve the total per cell exactly.
 *
 * Invariant (order independence).  For a multiset X of (value, cell) pairs
 * and a budget B, let lambda(X, B) be the least level L at which the values
 * of X occupy at most B distinct keys.  A store created with budget B and fed
 * X by buckets_add, in any order, is at level lambda(X, B) and holds, for each
 * (key, cell), the number of pairs of X with that cell whose value has that
 * key at that level.  buckets_merge(into, from) with into built from X and
 * from built from Y yields the store of X + Y at the least level
 * L >= max(level(into), level(from)) at which X + Y fits into's budget; when
 * lambda(X + Y, budget(into)) <= max of the two levels, that is exactly the
 * store into's budget would have built from X + Y directly.
 *
 * Threads: a store is not locked.  Ordered reads (buckets_entry_at,
 * buckets_quantile, buckets_write) go through a sort index.  buckets_add may
 * invalidate it; buckets_seal rebuilds it, and collapse, merge and read leave
 * it built.  Every function taking a const store only reads it, so any
 * number of threads may read one store at once while nobody adds to it.  A
 * read of an unsealed store is still correct but sorts the entries into a
 * temporary index first (O(n log n) per call, and it can fail for memory):
 * seal a store before reading it many times.  Distinct stores are
 * independent.
 *
 * Serialization (canonical, via wire): u32 budget, u8 level, u64 entry count,
 * then per entry i64 key, u32 cell, u64 count, in key-then-cell order.  Equal
 * stores give equal bytes.
 */
#ifndef SHEAF_BUCKETS_H
#define SHEAF_BUCKETS_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

#define BUCKETS_MANTISSA_BITS 7
#define BUCKETS_MAX_LEVEL 18 /* 11 exponent + 7 mantissa bits collapsed away */
#define BUCKETS_MIN_BUDGET 3 /* keys -1, 0, 1 at BUCKETS_MAX_LEVEL */

typedef struct buckets buckets;

typedef struct {
    int64_t key;    /* bucket key at the store's level */
    uint32_t cell;  /* cell index */
    uint64_t count; /* occurrences */
} buckets_entry;

/* Level-0 key of x (x finite).  Inline-able hot path lives in buckets.c. */
int64_t buckets_key(double x);
/* Key at collapse level `level` (0..BUCKETS_MAX_LEVEL) of a level-0 key; also
 * equal to collapsing one level at a time. */
int64_t buckets_key_at(int64_t key0, int level);
/* Value range [*lo, *hi] covered by key at level: the lowest and highest
 * double that map to it (lo <= hi; zero -> [0,0]; -0 maps to key 0 too).
 * Magnitudes beyond the largest finite bucket of the level are clamped. */
void buckets_bounds(int64_t key, int level, double *lo, double *hi);
/* The representative point of a key: the harmonic midpoint of its bounds
 * (see above), 0 for key 0. */
double buckets_point(int64_t key, int level);

/* A store with the given budget of distinct keys (raised to
 * BUCKETS_MIN_BUDGET if lower).  NULL on OOM. */
buckets *buckets_create(uint32_t budget);
void buckets_free(buckets *b);
/* Empties the store and returns it to level 0, keeping its allocation. */
void buckets_reset(buckets *b);
/* Adds `count` at value x in `cell` (count 0 is a no-op).  Returns 0, or -1
 * on OOM or when x is not finite; the store is unchanged on -1. */
int buckets_add(buckets *b, double x, uint32_t cell, uint64_t count);
/* n calls of buckets_add(b, x[i], cells ? cells[i] : 0, 1), faster: most
 * values are counted in a dense window of the store's own (buckets.c) whose
 * counts reach the table when the store is sealed, merged or renumbered;
 * the reads give the same answers either way, but an unsealed store with
 * counts in its window is read through a settled copy (slow: seal first). */
int buckets_add_many(buckets *b, const double *x, const uint32_t *cells, size_t n);
/* Adds from's counts to into; cell c of `from` becomes cell_map[c] (NULL:
 * identity).  into's budget applies to the result.  Returns 0, or -1 on OOM
 * or when from holds a cell >= map_len with a non-NULL map; into is
 * unchanged on -1.  into == from is allowed (doubles every count). */
int buckets_merge(buckets *into, const buckets *from, const uint32_t *cell_map, uint32_t map_len);
/* Renumbers the cells in place: cell c becomes cell_map[c] (cells that meet
 * add up); keys, level and totals stay.  Returns 0, or -1 on OOM or when the
 * store holds a cell >= map_len; the store is unchanged on -1.  Leaves the
 * store unsealed. */
int buckets_map_cells(buckets *b, const uint32_t *cell_map, uint32_t map_len);
int buckets_level(const buckets *b);
uint32_t buckets_budget(const buckets *b);
uint64_t buckets_total(const buckets *b);
/* Builds the sort index of the ordered reads (a no-op when it is built).
 * Cannot fail: the index's memory is allocated with the table. */
void buckets_seal(buckets *b);
/* 1 when the sort index is built (reads need no temporary index). */
int buckets_sealed(const buckets *b);
/* Occupied keys (distinct), and all (key, cell) entries in key-then-cell order. */
size_t buckets_keys(const buckets *b);
size_t buckets_entries(const buckets *b);
/* Entry i (0 <= i < buckets_entries) in key-then-cell order; count 0 when i
 * is out of range, or when the store is unsealed and its temporary index
 * cannot be allocated. */
buckets_entry buckets_entry_at(const buckets *b, size_t i);
/* The count of cell's numbers that are exactly zero (key 0 at every level);
 * UINT64_MAX when a store with counts in its window cannot be settled for
 * the read (out of memory). */
uint64_t buckets_zeros(const buckets *b, uint32_t cell);
/* The p-quantile (0 <= p <= 1) of the marginal over cells, by the inverted
 * empirical CDF (numpy method='inverted_cdf', Hyndman & Fan definition 1):
 * the value at 1-based rank r = max(1, ceil(p * total)), found by walking
 * keys upwards until the cumulative count reaches r.  Reported as the
 * bucket's point (buckets_point; 0 for key 0); *rel_err (may be NULL)
 * receives buckets_relative_error(level), so |result - q| <= *rel_err * |q|
 * for the exact sample quantile q whenever |q| is above the level's normal
 * floor.  NaN when empty or p outside [0, 1] (or unsealed and out of memory). */
double buckets_quantile(const buckets *b, double p, double *rel_err);
/* The p-quantile by linear interpolation between order statistics (numpy
 * method='linear', its default; Hyndman & Fan definition 7): with
 * h = (n - 1) p, j = floor(h) and g = h - j, (1 - g) x_(j) + g x_(j+1)
 * (0-based ranks), each x taken as its bucket's point.  Since
 * |point - x| <= eps |x| for each of the two, the result is within
 * eps ((1 - g) |x_(j)| + g |x_(j+1)|) of the exact sample quantile q, which
 * is eps |q| when the two neighbours have one sign.  *rel_err and NaN as
 * for buckets_quantile. */
double buckets_quantile_linear(const buckets *b, double p, double *rel_err);
/* The relative-error bound of a level for the harmonic midpoint, max over
 * normal-range buckets of (hi - lo) / (hi + lo) (see above), rounded up by
 * 4 DBL_EPSILON to cover the floating-point evaluation of the midpoint;
 * never above 1. */
double buckets_relative_error(int level);

/* Sets w->failed when the store is unsealed and its temporary index cannot
 * be allocated. */
void buckets_write(const buckets *b, wire_writer *w);
/* Returns a new store, or NULL: with r->failed set on malformed input
 * (unsorted or duplicate entries, zero counts, keys outside the level's range,
 * more distinct keys than the budget, budget or level out of range, truncated
 * data), with r->failed clear on OOM. */
buckets *buckets_read(wire_reader *r);

#endif
