/* crosstab: per-value statistics of one column against the target.
 *
 * Keys are the 64-bit hashes of the column's values (the same hashes as the
 * value table).  Each key holds a small record per cell:
 *   - classification target: cell = class index, a count per (key, class);
 *   - regression target: cell 0, the count, mean and M2 of the target over
 *     the rows with that key (Welford 1962 update; Chan et al. 1979 merge).
 * At most `max_keys` distinct keys are held exactly; later new keys are
 * folded into CROSSTAB_OVERFLOW_KEY and the table is marked overflowed, like
 * the value table, so the counts stay exact in total.
 *
 * Merge: records add key by key (cells remapped by a cell map when the two
 * sides numbered their classes differently); keys that find no room go to the
 * overflow key.  Serialization is canonical (key, then cell, ascending).
 */
#ifndef SHEAF_CROSSTAB_H
#define SHEAF_CROSSTAB_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

#define CROSSTAB_OVERFLOW_KEY UINT64_MAX

typedef struct crosstab crosstab;

typedef struct {
    uint64_t key;   /* value hash, or CROSSTAB_OVERFLOW_KEY */
    uint32_t cell;  /* class index (classification) or 0 */
    uint64_t n;     /* rows */
    double mean;    /* target mean (regression), else 0 */
    double m2;      /* target sum of squared deviations (regression), else 0 */
} crosstab_entry;

crosstab *crosstab_create(uint32_t max_keys);
void crosstab_free(crosstab *t);
void crosstab_reset(crosstab *t);
/* Classification: one row of class `cell` with value `key`. */
int crosstab_add_count(crosstab *t, uint64_t key, uint32_t cell);
/* Regression: one row with value `key` and target value y (a deviation in
 * the target's frame). */
int crosstab_add_value(crosstab *t, uint64_t key, double y);
/* into := into (+) from; cell c of from becomes cell_map[c] (NULL: same).
 * shift is added to from's means (regression frames), 0 if same frame. */
int crosstab_merge(crosstab *into, const crosstab *from, const uint32_t *cell_map,
                   uint32_t map_len, double shift);
int crosstab_overflowed(const crosstab *t);
size_t crosstab_keys(const crosstab *t);     /* distinct keys incl. overflow */
size_t crosstab_entries(const crosstab *t);  /* (key, cell) records */
/* Entry i in canonical (key, cell) order. */
crosstab_entry crosstab_entry_at(const crosstab *t, size_t i);

void crosstab_write(const crosstab *t, wire_writer *w);
crosstab *crosstab_read(wire_reader *r);

#endif
