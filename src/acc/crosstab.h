/* crosstab: per-value statistics of one column against the target.
 *
 * Keys are the 64-bit hashes of the column's values (the same hashes as the
 * value table).  Each key holds a small record per cell:
 *   - classification target: cell = class index, a count per (key, class);
 *   - regression target: cell = the target's bucket cell, the count, mean and
 *     M2 of the target over
 *     the rows with that key (Welford 1962 update; Chan et al. 1979 merge).
 * A table holds one kind of record only: its mode is set by the first record
 * (CROSSTAB_COUNTS or CROSSTAB_VALUES) and cleared by crosstab_reset.
 * At most `max_keys` distinct keys are held exactly; later new keys are
 * folded into CROSSTAB_OVERFLOW_KEY and the table is marked overflowed, like
 * the value table, so the counts stay exact in total.
 *
 * The hash UINT64_MAX is the overflow key, so a value whose hash is
 * UINT64_MAX is recorded under UINT64_MAX - 1 (crosstab_key_of).  This merges
 * that one hash with its neighbour, a collision of probability 2^-64 per
 * pair of values, the same order as any 64-bit hash collision.  Code that
 * joins these keys with the value table maps hashes through crosstab_key_of.
 *
 * Merge: records add key by key (cells remapped by a cell map when the two
 * sides numbered their classes differently); keys that find no room go to the
 * overflow key.  Serialization is canonical (key, then cell, ascending).
 *
 * Errors: functions returning int return 0, or -1 when memory runs out or the
 * call breaks a rule stated below; a failed call leaves the table unchanged.
 *
 * Threads: a table is not locked.  Ordered reads (crosstab_entry_at,
 * crosstab_write, crosstab_counts_to_values, and crosstab_merge's reads of
 * `from` when into may fill up) go through a canonical index that inserting a
 * record invalidates; crosstab_seal rebuilds it and crosstab_read leaves it
 * built.  Every function taking a const table only reads it, so any number
 * of threads may read one table at once while nobody updates it.  A read of
 * an unsealed table is still correct but sorts the records into a temporary
 * index first (O(n log n) per call, and it can fail for memory): seal a
 * table before reading it many times.
 */
#ifndef SHEAF_CROSSTAB_H
#define SHEAF_CROSSTAB_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

#define CROSSTAB_OVERFLOW_KEY UINT64_MAX

/* Table modes (also the serialized mode byte). */
#define CROSSTAB_EMPTY 0  /* no record yet */
#define CROSSTAB_COUNTS 1 /* classification: counts per (key, class) */
#define CROSSTAB_VALUES 2 /* regression: n, mean, M2 per (key, target cell) */

typedef struct crosstab crosstab;

typedef struct {
    uint64_t key;   /* value hash, or CROSSTAB_OVERFLOW_KEY */
    uint32_t cell;  /* class index (classification) or 0 */
    uint64_t n;     /* rows */
    double mean;    /* target mean (regression), else 0 */
    double m2;      /* target sum of squared deviations (regression), else 0 */
} crosstab_entry;

/* The record key of a value hash: the hash, except UINT64_MAX -> UINT64_MAX-1. */
static inline uint64_t crosstab_key_of(uint64_t hash)
{
    return hash == CROSSTAB_OVERFLOW_KEY ? CROSSTAB_OVERFLOW_KEY - 1 : hash;
}

/* An empty table holding at most max_keys exact keys (0: everything goes to
 * the overflow key).  NULL when memory runs out. */
crosstab *crosstab_create(uint32_t max_keys);
void crosstab_free(crosstab *t);
/* Empties the table (mode back to CROSSTAB_EMPTY), keeping its allocation. */
void crosstab_reset(crosstab *t);
/* Hints that (key, cell) will be added soon (a cache prefetch of its home
 * slot); no effect on the table. */
void crosstab_prefetch(const crosstab *t, uint64_t key, uint32_t cell);
/* Classification: one row of class `cell` with value hash `key`.  -1 on a
 * table in CROSSTAB_VALUES mode, or when memory runs out. */
int crosstab_add_count(crosstab *t, uint64_t key, uint32_t cell);
/* n calls of crosstab_add_count(t, keys[i], cells[i]) in order, skipping
 * the rows whose cell is 0 (no class): the same table (rows of a table of
 * few pairs counted by pair first, the others with their home slots
 * prefetched a few rows ahead).  0, or -1 as crosstab_add_count (the table
 * then holds part of the rows). */
int crosstab_add_counts(crosstab *t, const uint64_t *keys, const uint32_t *cells, size_t n);
/* Regression: one row with value hash `key` and target value y (a deviation
 * in the target's frame).  -1 on a table in CROSSTAB_COUNTS mode, or when y
 * is not finite. */
int crosstab_add_value(crosstab *t, uint64_t key, double y);
/* Regression: n rows with value `key`, all with target value y, in `cell`
 * (the target's bucket cell, so that a table keeps both the per-value
 * moments (sum over cells) and the value-by-target counts). */
int crosstab_add_values_in(crosstab *t, uint64_t key, uint32_t cell, double y, uint64_t n);
/* into := into (+) from.  Both tables must have the same mode (or one be
 * empty); into's max_keys rules.  Cell c of from becomes cell_map[c] (NULL:
 * same; cells that meet combine); -1 if from holds a cell >= map_len.  Values
 * mode: shift is added to from's means (the difference of the two target
 * frames, 0 if the same); -1 if shift is not finite.  Keys of from that find
 * no room go to the overflow key; counts do not depend on either table's
 * hash layout (values combine in from's slot order, which its history
 * decides).  from may be into. */
int crosstab_merge(crosstab *into, const crosstab *from, const uint32_t *cell_map,
                   uint32_t map_len, double shift);
/* A new table in values mode holding what t (counts mode) says when every
 * row of cell c has target value y[c]: per (key, cells[c]) (cell 0 when
 * cells is NULL), n and the mean and M2 of its rows; same max_keys, keys and
 * overflow.  An empty t gives an empty table.
 * NULL when memory runs out, t is in values mode, t holds a cell >= len, or
 * a y[c] of a held cell is not finite. */
crosstab *crosstab_counts_to_values(const crosstab *t, const double *y, const uint32_t *cells,
                                    uint32_t len);
/* Builds the canonical index (a no-op when it is built).  Returns 0, or -1
 * when memory runs out (the table is unchanged and still correct). */
int crosstab_seal(crosstab *t);
/* 1 when the canonical index is built. */
int crosstab_sealed(const crosstab *t);
int crosstab_mode(const crosstab *t);        /* CROSSTAB_EMPTY / _COUNTS / _VALUES */
uint32_t crosstab_max_keys(const crosstab *t);
int crosstab_overflowed(const crosstab *t);
size_t crosstab_keys(const crosstab *t);     /* distinct keys incl. overflow */
size_t crosstab_entries(const crosstab *t);  /* (key, cell) records */
/* Entry i in canonical (key, cell) order; n == 0 when i >= crosstab_entries,
 * or when the table is unsealed and its temporary index cannot be allocated. */
crosstab_entry crosstab_entry_at(const crosstab *t, size_t i);
/* The record (key, cell), key being crosstab_key_of(hash) or
 * CROSSTAB_OVERFLOW_KEY; n == 0 when absent. */
crosstab_entry crosstab_lookup(const crosstab *t, uint64_t key, uint32_t cell);

/* Layout (little-endian, wire.h): u32 max_keys, u8 mode, u8 overflowed,
 * u64 entries, then per entry in strictly ascending (key, cell) order:
 * u64 key, u32 cell, u64 n >= 1, and in values mode f64 mean, f64 m2.
 * An empty table is written with mode CROSSTAB_EMPTY. */
void crosstab_write(const crosstab *t, wire_writer *w);
/* Returns a new table, or NULL (and sets r->failed) on malformed input.
 * crosstab_write sets w->failed when the table is unsealed and its temporary
 * index cannot be allocated. */
crosstab *crosstab_read(wire_reader *r);

#endif
