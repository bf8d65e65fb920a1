/* chunks_columns: the column tasks of summary/chunks (see chunks.h): G,
 * one column group's cells of a chunk into its columns' accumulators, and
 * C, the chunk's rows into the co-moments. */
#include "io/clones.h"
#include "summary/chunks.h"

#include <stdio.h>
#include <string.h>

#include "io/message.h"
#include "summary/block.h"
#include "summary/column.h"

#include "summary/chunks_state.h"

/* ---- G: one column, C: the co-moments ------------------------------------ */

/* The cells of rows [start, end) of one column into the lane, less the
 * missing ones (counted in *missing when given). */
SHEAF_HOT static void fill_lane(const chunks *w, const job *j, size_t col, uint32_t start, uint32_t end,
                      block_lane *l, uint64_t *missing)
{
    const csv_span *cells = j->cells + (size_t)w->o.field_of[col] * j->rows_cap;
    l->nnum = 0;
    size_t absent = block_lane_gather(l, j->ck.data, cells + start, end - start, w->o.missing);
    if (missing) *missing += absent;
}

/* Target t's column col fed with the decoded lane, block sp of t's. */
static int feed_target(chunks *w, job *j, size_t t, size_t col, const block_span *sp,
                       block_lane *l)
{
    summary *s = w->runs[t];
    summary_column *c = &s->cols[col];
    job_target *jt = &j->tg[t];
    if (sp->drop && c->cls &&
        column_drop_classes(c, jt->drop_map, jt->drop_y, jt->drop_n, s->opt.bucket_budget) != 0)
        return -1;
    if (sp->drop) c->tcell_epoch = jt->drop_epoch; /* its cells were classes until now */
    if (summary_column_catch_up(s, c, sp->tepoch) != 0) return -1;
    block_rows rows = {sp->end - sp->start, jt->row_cell + sp->start, jt->row_class + sp->start,
                       jt->row_y + sp->start, jt->row_has_y + sp->start, sp->classes,
                       s->target >= 0, s->opt.max_classes, jt->row_ym + sp->start,
                       jt->row_ye + sp->start, jt->any_y,
                       jt->row_order ? jt->row_order + sp->start : NULL,
                       jt->runs ? jt->runs + sp->runs_at : NULL, sp->nruns};
    return block_feed(c, l, &rows);
}

/* One grid block of one column (rows [start, end), the b-th
 * SUMMARY_BLOCK_ROWS of the chunk): its cells into the lane, decoded once
 * into the first summary's column, what decoding counts copied to the other
 * targets' columns, the numbers kept for the co-moments, and every target
 * whose blocks are the grid fed from the one lane. */
static int column_grid_block(chunks *w, job *j, size_t col, size_t b, block_lane *l)
{
    summary *s = w->run;
    summary_column *c = &s->cols[col];
    const int k = s->como_of[col];
    const size_t cap = j->rows_cap;
    uint32_t start = (uint32_t)(b * SUMMARY_BLOCK_ROWS), end = start + SUMMARY_BLOCK_ROWS;
    if (end > j->rows) end = (uint32_t)j->rows;
    l->ref_set = c->mom.has_ref;
    if (l->ref_set) number_ref_set(&l->ref, &c->mom.ref);
    fill_lane(w, j, col, start, end, l, &c->missing);
    l->decimals = 0;
    for (size_t t = 0; t < w->nruns; t++) l->decimals |= j->tg[t].any_y;
    l->row_key = j->row_key + start; /* the grid's decoding counts the print */
    block_decode(c, l, w->simd);
    l->row_key = NULL;
    for (size_t t = 1; t < w->nruns; t++) { /* the same cells, the same counts */
        summary_column *ct = &w->runs[t]->cols[col];
        ct->copy_print = c->copy_print;
        ct->missing = c->missing;
        ct->non_numeric = c->non_numeric;
        ct->non_finite = c->non_finite;
        ct->n_examples = c->n_examples;
        memcpy(ct->examples, c->examples, sizeof ct->examples);
        if (c->mom.has_ref && !ct->mom.has_ref) moments_set_ref(&ct->mom, &c->mom.ref);
    }
    if (k >= 0) {
        double *dev = j->dev + (size_t)k * cap + start;
        unsigned char *pr = j->present + (size_t)k * cap + start;
        /* The lane's arrays in locals: a store through pr (unsigned char)
         * may alias anything, so l's fields would be loaded again for every
         * number. */
        const size_t nnum = l->nnum;
        const uint16_t *num_row = l->num_row;
        const double *num_dev = l->dev;
        if (nnum == end - start) { /* a number in every row: the i-th is row i's */
            memcpy(dev, num_dev, nnum * sizeof *dev);
            memset(pr, 1, nnum);
        } else {
            memset(pr, 0, end - start);
            for (size_t i = 0; i < nnum; i++) {
                dev[num_row[i]] = num_dev[i];
                pr[num_row[i]] = 1;
            }
        }
    }
    /* block_feed empties the lane, and reads it only: each target is fed the
     * same cells. */
    size_t ncells = l->ncells, nnum = l->nnum;
    for (size_t t = 0; t < w->nruns; t++) {
        if (!j->tg[t].on_grid) continue;
        l->ncells = ncells;
        l->nnum = nnum;
        if (feed_target(w, j, t, col, &j->tg[t].blocks[b], l) != 0) return -1;
    }
    l->ncells = l->nnum = 0;
    return 0;
}

/* One block of target t's own (its blocks leave the grid in this chunk:
 * its classes were dropped or its target cells renumbered): the cells
 * decoded again, into a copy of the column that takes what decoding counts
 * (the grid blocks counted it), then fed. */
static int column_own_block(chunks *w, job *j, size_t t, size_t col, const block_span *sp,
                            block_lane *l)
{
    summary_column scratch = w->runs[t]->cols[col]; /* decoding writes counts and examples */
    l->ref_set = scratch.mom.has_ref;
    if (l->ref_set) number_ref_set(&l->ref, &scratch.mom.ref);
    fill_lane(w, j, col, sp->start, sp->end, l, NULL);
    l->decimals = j->tg[t].any_y;
    block_decode(&scratch, l, w->simd);
    return feed_target(w, j, t, col, sp, l);
}

/* A group of columns through the chunk, one column at a time, block by
 * block: a column's value table, sketch and bucket store stay in the core's
 * caches while it is fed the chunk's rows (some 4,000 of the bench table),
 * where feeding every column of a block in turn evicted them 16 times a
 * chunk.  Each column is fed its blocks in order either way, so the summary
 * is the same bytes.  (Measured with cachegrind, a 512 KiB last level and
 * the 100,000-row bench slice: 7.30 -> 5.17 M read misses.)  A cell is
 * hashed and parsed
 * once for every target, except in the chunks where a target's blocks
 * leave the grid (at most one drop of its classes and TCELLS_MAX_EPOCHS
 * renumberings in a scan): that target's blocks there are decoded again. */
SHEAF_HOT int chunks_group_of(chunks *w, job *j, size_t g, block_lane *l, char *msg, size_t msglen)
{
    size_t ngrid = (j->rows + SUMMARY_BLOCK_ROWS - 1) / SUMMARY_BLOCK_ROWS, col = 0;
    for (size_t i = w->group_at[g]; i < w->group_at[g + 1]; i++)
        for (size_t b = 0; b < ngrid; b++)
            if (column_grid_block(w, j, col = w->group_cols[i], b, l) != 0) goto oom;
    for (size_t t = 0; t < w->nruns; t++) {
        const job_target *jt = &j->tg[t];
        if (jt->on_grid) continue;
        for (size_t i = w->group_at[g]; i < w->group_at[g + 1]; i++)
            for (size_t b = 0; b < jt->nblocks; b++)
                if (column_own_block(w, j, t, col = w->group_cols[i], &jt->blocks[b], l) != 0)
                    goto oom;
    }
    return 0;
oom:
    message_printf(msg, msglen,
                   "%s: byte %llu: out of memory: the accumulators of column '%s' could not grow",
                   w->shown, (unsigned long long)j->ck.offset, w->run->cols[col].name);
    return -1;
}

int chunks_comoments_of(chunks *w, job *j)
{
    summary *s = w->run;
    const size_t cap = j->rows_cap;
    size_t ngrid = (j->rows + SUMMARY_BLOCK_ROWS - 1) / SUMMARY_BLOCK_ROWS;
    for (size_t b = 0; b < ngrid; b++) {
        size_t start = b * SUMMARY_BLOCK_ROWS, end = start + SUMMARY_BLOCK_ROWS;
        if (end > j->rows) end = j->rows;
        for (size_t k = 0; k < w->ncomo; k++) {
            w->devp[k] = j->dev + k * cap + start;
            w->presp[k] = j->present + k * cap + start;
        }
        if (block_comoments_add(s, &w->bc, w->devp, w->presp, end - start) != 0)
            return -1;
    }
    return 0;
}
