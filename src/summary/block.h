/* block: a block of rows on its way into a summary's accumulators.
 *
 * A scan feeds each column's accumulators a block of at most
 * SUMMARY_BLOCK_ROWS rows at a time (blocks end every SUMMARY_BLOCK_ROWS rows
 * of a chunk, at the chunk's end, and where a numeric target's classes are
 * dropped).  One column at a time:
 *   - block_decode: XXH3-64 of each present cell, then (unless the column is
 *     declared categorical) the decimal parse, SSSE3 where the CPU has it; a
 *     finite number becomes its exact deviation from the column's frame
 *     (number_deviation);
 *   - block_feed: the column's accumulators with the whole block: value
 *     table and sketch, per-value table, moments, min / max / zeros /
 *     integers, buckets with the rows' target cells, per-class moments
 *     (each class's sums kept in two doubles, its M2 from shifted block sums),
 *     the exact pair sums with the target (acc/pairsum.h).
 * and, over every co-moment column at once, block_comoments: each column
 * centred by its block mean, with a presence mask, into one
 * comoment_add_block.
 *
 * Each column's state is touched only by its own calls, and the co-moment
 * state only by block_comoments, so distinct columns (and the co-moments)
 * may be fed from distinct threads at once; each column must see its blocks
 * in order.  One column's cells look alike, so the parser's and the hash's
 * branches predict, and one column's tables stay in cache while it is fed.
 * Nothing is allocated per cell or per row.
 */
#ifndef SHEAF_BLOCK_H
#define SHEAF_BLOCK_H

#include <stddef.h>
#include <stdint.h>

#include "io/csv.h"
#include "io/number.h"
#include "io/reader.h"
#include "summary/summary.h"

/* The present cells of one column in one block (a worker's scratch). */
typedef struct {
    size_t ncells;       /* present cells */
    uint64_t *hash;      /* XXH3-64 of each cell's text */
    const char **text;   /* each cell's text (inside its chunk, which is padded) */
    uint32_t *len;       /* each cell's length */
    uint16_t *cell_row;  /* row in the block of each cell */
    size_t nnum;         /* finite numbers decoded */
    double *dev;         /* deviation of each number from the column's frame */
    double *val;         /* each number */
    uint16_t *num_row;   /* row in the block of each number */
    int64_t *num_mant;   /* with `decimals`: each number's signed mantissa */
    int32_t *num_exp;    /* and its power of ten (BLOCK_INEXACT: not an exact decimal) */
    int decimals;        /* block_decode keeps num_mant and num_exp */
    uint32_t *cells_tmp; /* bucket cell of each number */
    struct block_class *cls_tmp; /* per class 0..max_classes: the block's part */
    double *cls_vals;            /* the block's numbers grouped by class */
    uint32_t *cls_touched;       /* classes with numbers in the block */
    uint32_t cls_cap;            /* entries of cls_tmp */
    number_ref ref;      /* the column's frame, unpacked for number_deviation */
    int ref_set;         /* ref holds the column's frame */
    const uint64_t *row_key; /* each block row's key, or NULL: block_decode adds the cells'
                                terms to the column's copy print (summary.h) */
} block_lane;

/* A cell's term in its column's copy print: the cell's hash and its row's
 * key, xored, times the key made odd: a sum of terms then depends on which
 * cell sits in which row (docs/summary-format.md, "Copy prints"). */
static inline uint64_t block_copy_term(uint64_t key, uint64_t hash)
{
    return (hash ^ key) * (key | 1);
}

/* A class's rows in a block ordered by class: class cls, at
 * class_order[at .. at + count). */
typedef struct {
    uint32_t cls, at, count;
} block_class_run;

/* What the accumulators need of a block's rows: their target cells. */
typedef struct {
    size_t rows;                    /* rows in the block */
    const uint32_t *row_cell;       /* bucket cell of each row (0: no target value) */
    const uint32_t *row_class;      /* class 1..K of each row, 0 = none */
    const double *row_y;            /* regression target of each row, in the target's frame */
    const unsigned char *row_has_y; /* the row has a regression target value */
    int classes;                    /* class accumulators are kept for this block */
    int target;                     /* the summary has a target */
    uint32_t max_classes;           /* the summary's class limit (scratch size) */
    const int64_t *row_ym;          /* the target's signed mantissa in each row */
    const int32_t *row_ye;          /* its power of ten; BLOCK_NO_NUMBER when the row has no
                                       finite target, BLOCK_INEXACT when it is not exact */
    int any_y;                      /* some row of the block has a finite target (row_ye set) */
    const uint16_t *class_order;    /* with classes: the block's rows of a class, by class,
                                       each class's in row order (class_runs say where) */
    const block_class_run *class_runs; /* one per class present in the block */
    size_t n_class_runs;
} block_rows;

/* row_ye and num_exp markers (acc/pairsum.h). */
#define BLOCK_NO_NUMBER PAIRSUM_NONE
#define BLOCK_INEXACT PAIRSUM_INEXACT

/* Scratch for SUMMARY_BLOCK_ROWS cells.  0, or -1 when out of memory
 * (block_lane_free then frees what was made). */
int block_lane_init(block_lane *l);
void block_lane_free(block_lane *l);

/* A column's cells of a block: the spans of its rows (offsets into data,
 * rows <= SUMMARY_BLOCK_ROWS) become the lane's cells, those the missing test
 * m passes over left out.  Returns how many were missing.  Every span is
 * written to the next free place and the count moves only for a present
 * cell, so the loop does not branch on a column's mix of missing cells. */
static inline size_t block_lane_gather(block_lane *l, const char *data, const csv_span *spans,
                                       size_t rows, const reader_missing *m)
{
    const char **text = l->text;
    uint32_t *len = l->len;
    uint16_t *row = l->cell_row;
    size_t k = 0;
    for (size_t r = 0; r < rows; r++) {
        const char *p = data + spans[r].off;
        uint32_t n = spans[r].len;
        text[k] = p;
        len[k] = n;
        row[k] = (uint16_t)r;
        k += !reader_is_missing(m, p, n);
    }
    l->ncells = k;
    return rows - k;
}

/* Hashes and parses the lane's cells for column c (simd: the SSSE3 parser
 * may be used, number_simd_usable()).  Sets c's frame from its first finite
 * number.  With l->decimals set, also keeps each number's mantissa and
 * power of ten (for the pair sums with the target). */
void block_decode(summary_column *c, block_lane *l, int simd);

/* Feeds the decoded lane to c's accumulators and empties it.  0, or -1 when
 * out of memory. */
int block_feed(summary_column *c, block_lane *l, const block_rows *rows);

/* Co-moment scratch for blocks of the co-moment columns of a summary. */
typedef struct {
    size_t ncomo;
    double *x;               /* ncomo x rows, centred values */
    double *mask;            /* ncomo x rows, presence */
    double *center;          /* ncomo */
    double *shift;           /* ncomo: the column's frame minus the co-moments' */
    unsigned char *complete; /* ncomo */
    /* Rows held until a whole block of SUMMARY_BLOCK_ROWS is there
     * (block_comoments_add): ncomo x SUMMARY_BLOCK_ROWS deviations and
     * presence flags, `staged` rows of them used. */
    double *stage_dev;
    unsigned char *stage_present;
    size_t staged;
    const double **dev_at;              /* ncomo: pointers into a block's rows */
    const unsigned char **present_at;   /* ncomo */
} block_como;

int block_como_init(block_como *bc, size_t ncomo);
void block_como_free(block_como *bc);

/* Feeds one block to s's co-moments: for co-moment column k, dev[k][r] is
 * row r's deviation from the column's frame when present[k][r] (rows of the
 * block, in order), and s->cols[s->como_col[k]].mom holds the frame once the
 * column has had a number.  0, or -1 when out of memory. */
int block_comoments(summary *s, block_como *bc, const double *const *dev,
                    const unsigned char *const *present, size_t rows);

/* Rows in any split into s's co-moments, in blocks of SUMMARY_BLOCK_ROWS:
 * rows are held in bc until a block is whole, so the blocks do not depend
 * on where chunks end (a wide table's chunk may hold a few dozen rows, and
 * each block costs a merge over every pair of columns).  dev and present
 * as for block_comoments.  block_comoments_flush feeds the rows held (a
 * last, shorter block); the scan calls it at each stream's end (chunks_wait).
 * 0, or -1 as block_comoments. */
int block_comoments_add(summary *s, block_como *bc, const double *const *dev,
                        const unsigned char *const *present, size_t rows);
int block_comoments_flush(summary *s, block_como *bc);

#endif
