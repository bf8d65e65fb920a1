/* block: a block of rows on its way into a summary's accumulators.
 *
 * The scan's record loop only records cells: each present cell of column j
 * waits in lane j (a pointer into its chunk, its length and its row in the
 * block).  Every SUMMARY_BLOCK_ROWS rows, and at the end of each chunk (the
 * cells point into it), block_flush works column by column:
 *   - decode: XXH3-64 of each cell, then (unless the column is declared
 *     categorical) the decimal parse, SSSE3 where the CPU has it; a finite
 *     number becomes its exact deviation from the column's frame
 *     (number_deviation);
 *   - the co-moment block: each column centred by its block mean, with a
 *     presence mask, into one comoment_add_block;
 *   - each column's accumulators with the whole block: value table and
 *     sketch, per-value table, moments, min / max / zeros / integers,
 *     buckets with the rows' target cells, per-class moments.
 * One column's cells look alike, so the parser's and the hash's branches
 * predict, and one column's tables stay in cache while it is fed.  Nothing
 * is allocated per cell or per row.
 */
#ifndef SHEAF_BLOCK_H
#define SHEAF_BLOCK_H

#include <stddef.h>
#include <stdint.h>

#include "io/number.h"
#include "summary/summary.h"

/* The buffered cells of one column. */
typedef struct {
    int field;           /* field index in the record */
    size_t ncells;       /* present cells buffered */
    uint64_t *hash;      /* XXH3-64 of each cell's text */
    const char **text;   /* each cell's text (inside its chunk, which is padded) */
    uint32_t *len;       /* each cell's length */
    uint16_t *cell_row;  /* row in the block of each cell */
    size_t nnum;         /* finite numbers decoded */
    double *dev;         /* deviation of each number from the column's frame */
    double *val;         /* each number */
    uint16_t *num_row;   /* row in the block of each number */
    number_ref ref;      /* the column's frame, unpacked for number_deviation */
} block_lane;

typedef struct {
    summary *s;            /* the summary fed (another of the same schema may take its place) */
    size_t ncols;          /* columns of the schema */
    block_lane *lanes;     /* one per column of s */
    size_t rows;           /* rows buffered */
    uint32_t row_cell[SUMMARY_BLOCK_ROWS];   /* bucket cell of each row */
    uint32_t row_class[SUMMARY_BLOCK_ROWS];  /* class 1..K, 0 = none */
    double row_y[SUMMARY_BLOCK_ROWS];        /* regression target (its frame) */
    unsigned char row_has_y[SUMMARY_BLOCK_ROWS];
    uint32_t cells_tmp[SUMMARY_BLOCK_ROWS];  /* cells of one lane's numbers */
    double *como_x;        /* ncomo x rows, centred values */
    double *como_mask;     /* ncomo x rows, presence */
    double *como_center;   /* ncomo */
    unsigned char *como_complete; /* ncomo */
    int simd;              /* the SSSE3 parser may be used */
} block;

/* Buffers for every column of s; field_of[j] is column j's field index.
 * Returns 0, or -1 when out of memory (block_free then frees what was made). */
int block_init(block *b, summary *s, const int *field_of);
void block_free(block *b);

/* ---- per row: the scan hands the summary its rows through these calls ---- */

/* A row begins. */
static inline void block_row(block *b) { b->s->rows++; }

/* Column j's cell of the current row is missing (or absent). */
static inline void block_missing(block *b, size_t j) { b->s->cols[j].missing++; }

/* The current row has too few (short != 0) or too many fields; line is
 * kept among the first SUMMARY_BAD_LINES such lines. */
void block_ragged(block *b, int short_row, uint64_t line);

/* The current row's target cell (NULL: missing): its class, or its
 * regression cell and value.  Returns 0; 1 when a text target has one class
 * more than max_classes (a numeric one then continues as a regression
 * target, its classes dropped); -1 when out of memory. */
int block_target(block *b, const char *p, uint32_t len);

/* Bytes of input the summary covers. */
static inline void block_bytes(block *b, uint64_t n) { b->s->bytes += n; }

/* Records a present cell of column j in the current row. */
static inline void block_cell(block *b, size_t j, const char *p, uint32_t len)
{
    block_lane *l = &b->lanes[j];
    size_t k = l->ncells;
    l->text[k] = p;
    l->len[k] = len;
    l->cell_row[k] = (uint16_t)b->rows;
    l->ncells = k + 1;
}

/* Feeds the buffered rows to the summary and empties the block.  Returns 0,
 * or -1 when out of memory. */
int block_flush(block *b);

/* The current row is complete (flushes a full block).  0, or -1 when out of
 * memory. */
static inline int block_row_end(block *b)
{
    return ++b->rows == SUMMARY_BLOCK_ROWS ? block_flush(b) : 0;
}

#endif
