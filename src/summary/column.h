/* column: everything a summary keeps per column, in one place.
 *
 * A column's accumulators (counts, moments, examples, value table, sketch,
 * bucket store, per-value table, per-class moments) are allocated, freed,
 * written, read, merged and sealed here, each next to the others, so that
 * adding an accumulator to a column touches this file for all of it (the
 * scan feeds it in summary/block.c, readers reach it through
 * summary/access.c).  Internal to the summary module: summary.c, format.c
 * and merge.c call it for each column.
 *
 * Written layout of a column (the COLS section of docs/summary-format.md,
 * in this order): missing, non_numeric, non_finite, zeros, integers (u64
 * each), moments, n_examples (u32) and the examples, value table, sketch,
 * bucket store, has_cross (u8) and the per-value table, has_cls (u8) and
 * per class n (u64), sum, sum_low, m2 (f64; versions 1 and 2: n, mean, m2).
 */
#ifndef SHEAF_COLUMN_H
#define SHEAF_COLUMN_H

#include <stdint.h>

#include "acc/wire.h"
#include "summary/summary.h"

/* Allocates a column's accumulators for the options (a per-value table with
 * a target, per-class moments with classes).  0, or -1 when out of memory
 * (column_free then frees what was made). */
int column_alloc(summary_column *c, const summary_options *o, int with_classes);
void column_free(summary_column *c);

/* Appends the column in the written layout of format `version`; nclasses
 * is the summary's. */
void column_write(const summary_column *c, uint32_t nclasses, uint32_t version, wire_writer *w);
/* Reads a column written by column_write in format `version` into c
 * (allocated by column_alloc for the same options).  0, or -1 on malformed
 * or truncated input, with *part naming the accumulator that did not read
 * ("moments", ...). */
int column_read(summary_column *c, uint32_t nclasses, uint32_t version, wire_reader *r,
                const char **part);
/* Checks the invariants of a read column against its summary (the table
 * counts, the schema's options, the target classes; docs/summary-format.md,
 * "Invariants").  0, or -1 with the broken one described in msg. */
/* The decoder checks' message: fmt into msg (len bytes); returns -1. */
int summary_why(char *msg, size_t len, const char *fmt, ...) __attribute__((format(printf, 3, 4)));

int column_check(const summary *s, const summary_column *c, char *msg, size_t len);
/* The checks of a read column against the target column, once every column
 * is read (regression target cells, per-value target moments).  0, or -1
 * with the broken one described in msg. */
int column_check_target(const summary *s, const summary_column *c, char *msg, size_t len);

/* How the target cells and classes of `from` map into `into` for a merge. */
typedef struct {
    const uint32_t *map;   /* from's class k (1-based) -> into's, map[0] = 0; without classes
                              from's regression cells -> the united ones; NULL: the same */
    uint32_t map_len;      /* entries of map */
    int same_classes;      /* map is the identity */
    uint32_t max_classes;  /* classes into may hold */
    uint32_t from_classes; /* classes from holds */
    double yshift;         /* from's target frame minus into's */
    const uint32_t *into_cells; /* into's regression cells -> the united ones; NULL: the same */
    uint32_t into_cells_len;    /* entries of into_cells */
} column_merge_map;

/* a := a (+) b by each accumulator's rule.  0, or -1 when out of memory
 * (a is then partly merged: the caller discards it). */
int column_merge(summary_column *a, const summary_column *b, const column_merge_map *m);

/* 1 when every number of class k (0-based) of column c is exactly zero, by
 * the bucket store (whose keys come from the numbers, not from their
 * deviations): the class's mean and variance are then exactly 0. */
int column_class_zeros(const summary_column *c, uint32_t k);

/* 1 when the moments of class k of column c cannot be trusted
 * (summary_class_moments shows no mean or variance): flagged by a merge,
 * their rounding `loss` past 2^-20 of their scale (class_moments_lost), or
 * a reading that the column's own numbers rule out, which rounding to the
 * frame leaves (a mean outside the column's [min, max]; a variance past the
 * double range where the column's spread squared is not; all zeros, for a
 * class that holds numbers other than 0); never for a class of zeros. */
int column_class_lost(const summary_column *c, uint32_t k, double loss);

/* Builds the sort index of each accumulator (see "Sealing" in summary.h).
 * 0, or -1 when out of memory. */
/* Converts c's class accumulators to target cells (a numeric target passing
 * max_classes): map[class 0..n-1] is each class's bucket cell, y[class] its
 * value in the target's frame.  0, or -1 when out of memory. */
int column_drop_classes(summary_column *c, const uint32_t *map, const double *y, uint32_t n,
                        uint32_t bucket_budget);
/* The conversion tables of s's classes (malloc'ed; the caller frees them),
 * with frame the target's frame (NULL: values as they are): the class
 * values enter s's target cell table, renumbered in key order.  0 or -1. */
int summary_class_conversion(summary *s, const number_decimal *frame, uint32_t **map,
                             double **y);
/* Renumbers c's regression target cells: cell k becomes map[k] (k < len) in
 * the bucket store and the per-value table (cells that meet combine).  0, or
 * -1 when out of memory (c is then unchanged). */
int column_remap_target_cells(summary_column *c, const uint32_t *map, uint32_t len);
/* What c holds that does not depend on the target, in a canonical byte
 * form (for comparing the parts of a summary of several targets): name,
 * mode, counts, the moments' count, extremes and frame (not their sums,
 * which take the rounding of the target's blocks), examples, value table and
 * sketch. */
void column_write_common(const summary_column *c, wire_writer *w);
/* into's co-moments := a copy of from's (same schema; a scan of several
 * targets feeds them once).  0, or -1 when out of memory. */
int summary_copy_comoments(summary *into, const summary *from);
int column_seal(summary_column *c);
int column_sealed(const summary_column *c);

#endif
