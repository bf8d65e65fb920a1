/* chunks, private part: the state of the chunk pipeline, shared by the
 * scheduler and the T, G and C tasks (chunks.c) and the R task
 * (chunks_rows.c).  See chunks.h. */
#ifndef SHEAF_CHUNKS_STATE_H
#define SHEAF_CHUNKS_STATE_H

#include <pthread.h>
#include <stddef.h>
#include <stdint.h>

#include "io/csv.h"
#include "io/reader.h"
#include "summary/block.h"
#include "summary/chunks.h"
#include "summary/summary.h"

#ifndef GROUPS_PER_THREAD
#define GROUPS_PER_THREAD 4
#endif

/* A slot's cell table is held within this many bytes (chunks_push cuts a
 * chunk of many short rows into pieces); a row of all its fields takes at
 * least a byte a field, so only short rows ever make a piece. */
#ifndef CELLS_BUDGET
#define CELLS_BUDGET (8u << 20)
#endif

enum { T_WAIT = 0, T_BUSY = 1, T_DONE = 2 };

enum { FAULT_NONE = 0, FAULT_READER, FAULT_MEMORY, FAULT_TOO_BIG };

typedef struct {
    uint32_t start, end; /* rows [start, end) of the chunk */
    int classes;         /* class accumulators are kept in this block */
    int drop;            /* the classes are dropped before it */
    uint32_t tepoch;     /* the target cell epoch of its rows' regression cells */
    uint32_t runs_at, nruns; /* with classes: its class runs, job_target.runs[runs_at ..] */
} block_span;

/* One target's part of a chunk (R writes it, G reads it): the target cell
 * of every row and the blocks its columns are fed in. */
typedef struct {
    uint32_t *row_cell, *row_class;
    double *row_y;
    unsigned char *row_has_y;
    int64_t *row_ym;        /* the target's signed mantissa (pair sums, block_rows) */
    int32_t *row_ye;        /* its power of ten, or BLOCK_NO_NUMBER / BLOCK_INEXACT */
    int any_y;              /* some row of the chunk has a finite target */
    block_span *blocks;
    size_t nblocks, blocks_cap;
    uint16_t *row_order;    /* per block with classes: its rows by class (order_classes) */
    block_class_run *runs;  /* the blocks' class runs (rows_cap at most) */
    int on_grid;            /* its blocks are the chunk's grid (every SUMMARY_BLOCK_ROWS rows) */
    uint32_t *drop_map;     /* the class conversion at a drop */
    double *drop_y;
    uint32_t drop_n;
    uint32_t drop_epoch;    /* the target cell epoch of drop_map's cells */
    /* R's running state within the chunk */
    uint32_t start;         /* the open block's first row */
    int classes, drop;      /* the open block keeps classes / drops them first */
    uint32_t tepoch;        /* the target cell epoch of the open block's rows */
} job_target;

typedef struct {
    reader_chunk ck;        /* the chunk (its bytes: buf, or the caller's with one thread) */
    char *buf;              /* the slot's copy */
    size_t cap;
    uint64_t seq;
    int first;              /* holds the stream's first record */
    uint64_t *repeats;      /* stream offsets of repeated headers to skip (ascending) */
    size_t nrepeats, repeats_cap;
    uint64_t repeated;      /* T: repeated headers skipped */
    int t_state;
    /* T */
    reader_cursor cur;
    int fault;              /* FAULT_* */
    size_t rows, rows_cap;
    size_t row_arrays_cap;  /* rows the R and co-moment arrays hold */
    csv_span *cells;        /* the rows' fields (offsets in the chunk) up to the last one
                               scanned, by field: field f of row r at cells[f * rows_cap +
                               r], so that a column's task walks its own cells in order
                               (csv_next_rows) */
    uint64_t *line;         /* rows: line of each row, from the chunk's first */
    csv_span *record;       /* rows: each row's record as written (line end included) */
    unsigned char *rewritten; /* rows: 1 when the tokenizer copied a quoted field of the
                               row down in place */
    uint64_t *row_key;      /* R: XXH3-64 of each row's record (copy prints, chunks_rows.c) */
    uint32_t *nf;           /* rows: fields of each row */
    /* R: one part per target (one when the scan has none) */
    job_target *tg;
    /* G, for C: deviations of the co-moment columns (ncomo x rows_cap) */
    double *dev;
    unsigned char *present;
} job;

struct chunks {
    chunks_options o;
    summary *run;           /* the first summary: table counts, co-moments */
    summary *const *runs;   /* one summary per target (borrowed) */
    size_t nruns;
    size_t ncols, ncomo;
    size_t kept_fields;     /* fields kept per row: up to the last scanned one */
    size_t piece_lines;     /* lines of a chunk handed to the tasks at once (chunks_push) */
    int simd;
    uint32_t *class_count;  /* R's scratch for order_classes: per class 0..max_classes */
    uint32_t *class_pos;
    unsigned nslots;
    job *jobs;
    /* scheduling */
    pthread_mutex_t mu;
    pthread_cond_t work_cv;  /* a task may be ready */
    pthread_cond_t done_cv;  /* a chunk retired, or a failure */
    pthread_t *threads;
    unsigned nthreads;
    uint64_t pushed, t_next, r_next, c_next, retired;
    uint64_t *g_next;       /* per column group */
    unsigned char *g_busy;
    size_t ngroups;         /* column groups: G tasks are (chunk, group) */
    size_t *group_cols;     /* the columns of group g: group_cols[group_at[g] .. group_at[g+1]) */
    size_t *group_at;
    int r_busy, c_busy, quit;
    int flush_wanted;       /* the co-moment rows held at a stream's end await a worker with
                               OpenBLAS's buffer (chunks_wait) */
    unsigned started;       /* workers that took an id */
    unsigned no_blas;       /* workers whose BLAS buffer did not fit (acc/blas.h): they
                               never take a co-moment task */
    int all_made;           /* every worker thread was created (nthreads is final) */
    scan_status failed;
    char err[4608];         /* the first failure's message (under the lock) */
    char r_err[4608];       /* the row task's message, written by that task only */
    /* R's state (one R at a time) */
    const char *shown;
    uint64_t stop_at;
    uint64_t lines, rows, absorbed;
    number_decimal *target_ref; /* per target: its column's frame */
    unsigned char *target_ref_set;
    /* C's scratch */
    block_como bc;
    const double **devp;
    const unsigned char **presp;
    block_lane inline_lane; /* G's scratch with one thread */
};

/* The text of scanned column col in row r, or NULL when the cell is missing
 * (reader_is_missing; a field past the row's end is empty). */
static inline const char *cell_text(const chunks *w, const job *j, size_t col, size_t r, uint32_t *len)
{
    const csv_span *x = j->cells + (size_t)w->o.field_of[col] * j->rows_cap + r;
    const char *p = j->ck.data + x->off;
    if (reader_is_missing(w->o.missing, p, x->len)) { *len = 0; return NULL; }
    *len = x->len;
    return p;
}

/* R: the rows of chunk j, in chunk order (see chunks.h).  SCAN_OK or the
 * failure, its message in w->r_err. */
scan_status chunks_rows_of(chunks *w, job *j);
/* G (chunks_columns.c): column group g's cells of chunk j into its columns;
 * 0, or -1 (out of memory) with the message in msg. */
int chunks_group_of(chunks *w, job *j, size_t g, block_lane *l, char *msg, size_t msglen);
/* C (chunks_columns.c): chunk j's rows into the co-moments; 0 or -1. */
int chunks_comoments_of(chunks *w, job *j);
/* Records "out of memory" as the failure and returns SCAN_ERR_MEMORY. */
scan_status chunks_out_of_memory(chunks *w);

#endif
