/* tcells: the cells of a continuous target, at a resolution its own values
 * choose (internal to the summary module).
 *
 * A regression target's value y has the key of the bits of |y| shifted right
 * by the table's level s (0..63), plus one, negated for negative y (0 for
 * zero): at s = 0 every double has a key of its own, each level merges
 * adjacent pairs, and at s = 63 only -1, 0 and 1 remain.  Keys are monotone
 * in y.  The table holds the distinct keys of the values seen, at most
 * SUMMARY_TARGET_CELLS of them: when a new key would pass that budget the
 * level rises until the keys fit (the uniform collapse of the bucket stores,
 * acc/buckets.h, carried to every bit of the double).  So the level is the
 * least at which the values occupy at most the budget: for any order of the
 * values, and for a merge (both tables at the higher level, united, raised
 * while over the budget) it is the one a scan of all the data reaches.  The
 * screen then cuts the target into equal-frequency bins over these cells
 * (stat_equal_frequency_bins): a target of 1000 + x, x in [0, 1.3), gets
 * about 40 to 64 cells and its 10 bins, whatever its offset.
 *
 * Cells are numbered 1..n.  After a collapse, and once a scan ends
 * (tcells_canonical), the numbers follow the keys upwards, so the numbering
 * depends on the values alone; between collapses a scan appends new keys.
 * Every change of numbering is an epoch with a map old cell -> new cell
 * (0 -> 0), kept until the scan ends so that each column's accumulators can
 * catch up when their turn comes (summary/chunks.c): a map is written before
 * any block that needs it is handed to a worker, and never changed after.
 */
#ifndef SHEAF_TCELLS_H
#define SHEAF_TCELLS_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

#define SUMMARY_TARGET_CELLS 64 /* cells a continuous target keeps */
#define TCELLS_MAX_LEVEL 63
#define TCELLS_MAX_EPOCHS 72    /* a scan's renumberings: at most 64 collapses and the last */
#define TCELLS_SLOTS 256        /* lookup table slots (4 per cell) */

typedef struct {
    int level;                               /* s: keys of |y| bits >> s */
    uint32_t n;                              /* cells */
    int64_t key[SUMMARY_TARGET_CELLS + 1];   /* key of cell i + 1 */
    int canonical;                           /* cells numbered in key order */
    /* lookup: open addressing, key -> cell (0: empty) */
    int64_t slot_key[TCELLS_SLOTS];
    uint32_t slot_cell[TCELLS_SLOTS];
    /* epochs (a scan): map[e] takes the cells of epoch e to those of e + 1 */
    uint32_t epoch;                          /* renumberings so far */
    uint32_t *map[TCELLS_MAX_EPOCHS];        /* each SUMMARY_TARGET_CELLS + 2 entries */
    uint32_t map_from[TCELLS_MAX_EPOCHS];    /* cells before it (entries used, less one) */
} tcells;

/* An empty table at level 0. */
void tcells_init(tcells *t);
/* Frees the epoch maps (the table itself is a value). */
void tcells_free(tcells *t);

/* The key of y at level s (y finite). */
int64_t tcells_key(double y, int level);

/* The cell of a finite target value, adding it (and raising the level, a
 * new epoch) when its key is new.  Returns the cell, 0 when out of memory. */
uint32_t tcells_cell(tcells *t, double y);

/* Renumbers the cells in key order (a new epoch when anything moves).
 * 0, or -1 when out of memory. */
int tcells_canonical(tcells *t);

/* The composed map from the cells of epoch `from` to those of the current
 * epoch into out (SUMMARY_TARGET_CELLS + 2 entries; out[0] = 0); entries of
 * cells past those epoch `from` had are 0.  *len receives the entries
 * used.  Reads only maps of epochs >= from, which never change. */
void tcells_map_since(const tcells *t, uint32_t from, uint32_t to, uint32_t *out, uint32_t *len);

/* Unites two tables for a merge: into becomes the union of both at the
 * higher level (raised while over the budget), numbered in key order.
 * into_map and from_map (SUMMARY_TARGET_CELLS + 2 entries each) receive
 * the maps of the old cells of each side.  0, or -1 when out of memory. */
int tcells_unite(tcells *into, const tcells *from, uint32_t *into_map, uint32_t *from_map);

/* A table of the distinct keys among keys[0..n) at `level` (raised while
 * over the budget), numbered in key order; cells[i] receives the cell of
 * keys[i].  For summaries of format versions 1 and 2, whose regression
 * cells were 2^20 plus the key at level 50.  0, or -1 when out of memory. */
int tcells_from_keys(tcells *t, int level, const int64_t *keys, size_t n, uint32_t *cells);

/* File: u8 level, u32 n, n x i64 key (ascending; the table must be
 * canonical). */
void tcells_write(const tcells *t, wire_writer *w);
/* Reads a table and checks it: level <= 63, n <= the budget, keys strictly
 * ascending and within the level's range.  -1 (r->failed) when not. */
int tcells_read(tcells *t, wire_reader *r);

#endif
