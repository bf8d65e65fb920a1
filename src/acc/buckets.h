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
 *
 * A store counts, per key, one counter per cell (the class index of the row
 * for a classification target, a coarse target bucket for regression, 0 with
 * no target).  When the number of occupied keys exceeds the budget, the store
 * collapses one level at a time until it fits.  Merging two stores first
 * brings both to the coarser level.  Counts are never lost: collapse and
 * merge preserve the total per cell exactly.
 */
#ifndef SHEAF_BUCKETS_H
#define SHEAF_BUCKETS_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

#define BUCKETS_MANTISSA_BITS 7

typedef struct buckets buckets;

typedef struct {
    int64_t key;    /* bucket key at the store's level */
    uint32_t cell;  /* cell index */
    uint64_t count; /* occurrences */
} buckets_entry;

/* Level-0 key of x (x finite).  Inline-able hot path lives in buckets.c. */
int64_t buckets_key(double x);
/* Key at collapse level `level` of a level-0 key. */
int64_t buckets_key_at(int64_t key0, int level);
/* Value range [*lo, *hi] covered by key at level (lo <= hi; zero -> [0,0]). */
void buckets_bounds(int64_t key, int level, double *lo, double *hi);

buckets *buckets_create(uint32_t budget);
void buckets_free(buckets *b);
void buckets_reset(buckets *b);
/* Adds `count` at value x (finite) in `cell`.  Returns 0 or -1 on OOM. */
int buckets_add(buckets *b, double x, uint32_t cell, uint64_t count);
/* Adds from's counts to into; cell c of `from` becomes cell_map[c] (NULL:
 * identity).  Returns 0 or -1 on OOM. */
int buckets_merge(buckets *into, const buckets *from, const uint32_t *cell_map, uint32_t map_len);
int buckets_level(const buckets *b);
uint32_t buckets_budget(const buckets *b);
uint64_t buckets_total(const buckets *b);
/* Occupied keys (distinct), and all (key, cell) entries in key-then-cell order. */
size_t buckets_keys(const buckets *b);
size_t buckets_entries(const buckets *b);
buckets_entry buckets_entry_at(const buckets *b, size_t i);
/* The p-quantile (0 <= p <= 1) of the marginal over cells: the value at rank
 * ceil(p * total) (1-based; p = 0 gives the minimum bucket), reported as the
 * bucket midpoint that minimises relative error; *rel_err receives the
 * relative-error bound of the store's current level.  NaN when empty. */
double buckets_quantile(const buckets *b, double p, double *rel_err);
/* The relative-error bound of a level: half the relative width of a bucket. */
double buckets_relative_error(int level);

void buckets_write(const buckets *b, wire_writer *w);
buckets *buckets_read(wire_reader *r);

#endif
