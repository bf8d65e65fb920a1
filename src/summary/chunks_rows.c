/* chunks, the R task: each chunk's rows in chunk order (row counts, ragged
 * rows, every target's row cells, where the chunk's blocks end).  See
 * chunks.h; the pipeline's state is in chunks_state.h. */
#include "summary/chunks_state.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#define XXH_INLINE_ALL
#include <xxhash.h>

#include "io/message.h"
#include "io/number.h"
#include "summary/column.h"

/* ---- R: rows, in chunk order --------------------------------------------- */


static int add_block(job_target *jt, uint32_t start, uint32_t end, int classes, int drop,
                     uint32_t tepoch)
{
    if (jt->nblocks == jt->blocks_cap) {
        size_t cap = jt->blocks_cap ? 2 * jt->blocks_cap : 64;
        block_span *b = realloc(jt->blocks, cap * sizeof *b);
        if (!b) return -1;
        jt->blocks = b;
        jt->blocks_cap = cap;
    }
    jt->blocks[jt->nblocks++] = (block_span){start, end, classes, drop, tepoch, 0, 0};
    return 0;
}

static int grow_row_arrays(chunks *w, job *j)
{
    size_t cap = j->rows_cap ? j->rows_cap : 1, p = w->ncomo;
    int ok = 1;
    for (size_t t = 0; t < w->nruns; t++) {
        job_target *jt = &j->tg[t];
        uint32_t *cell = realloc(jt->row_cell, cap * sizeof *cell);
        if (cell) jt->row_cell = cell;
        uint32_t *cls = realloc(jt->row_class, cap * sizeof *cls);
        if (cls) jt->row_class = cls;
        double *y = realloc(jt->row_y, cap * sizeof *y);
        if (y) jt->row_y = y;
        unsigned char *hy = realloc(jt->row_has_y, cap);
        if (hy) jt->row_has_y = hy;
        int64_t *ym = realloc(jt->row_ym, cap * sizeof *ym);
        if (ym) jt->row_ym = ym;
        int32_t *ye = realloc(jt->row_ye, cap * sizeof *ye);
        if (ye) jt->row_ye = ye;
        uint16_t *order = realloc(jt->row_order, cap * sizeof *order);
        if (order) jt->row_order = order;
        block_class_run *runs = realloc(jt->runs, cap * sizeof *runs);
        if (runs) jt->runs = runs;
        ok = ok && cell && cls && y && hy && ym && ye && order && runs;
    }
    uint64_t *key = realloc(j->row_key, cap * sizeof *key);
    if (key) j->row_key = key;
    ok = ok && key;
    double *dev = p ? realloc(j->dev, p * cap * sizeof *dev) : j->dev;
    if (dev) j->dev = dev;
    unsigned char *pr = p ? realloc(j->present, p * cap) : j->present;
    if (pr) j->present = pr;
    return ok && (!p || (dev && pr)) ? 0 : -1;
}

/* The failures of the row task, with their messages in w->r_err. */
scan_status chunks_out_of_memory(chunks *w)
{
    snprintf(w->r_err, sizeof w->r_err, "out of memory: the row index of a %zu-row chunk",
             w->jobs ? w->jobs[0].rows_cap : (size_t)0);
    return SCAN_ERR_MEMORY;
}

static scan_status too_many_classes(chunks *w, const summary *s, uint64_t line)
{
    message_printf(w->r_err, sizeof w->r_err,
                   "%s: line %llu: target '%s' has more than %u classes (the class limit); raise "
                   "{max_classes}, or read the target as a measure with {task=regress}", w->shown,
                   (unsigned long long)line, s->opt.target, s->opt.max_classes);
    return SCAN_ERR_INPUT;
}

static scan_status ragged_row(chunks *w, uint64_t line, size_t nf)
{
    message_printf(w->r_err, sizeof w->r_err,
                   "%s: line %llu: %zu field%s, the header has %zu (rows must match: {strict})",
                   w->shown, (unsigned long long)line, nf, nf == 1 ? "" : "s", w->o.width);
    return SCAN_ERR_INPUT;
}

/* The target cell of row r for target t (p NULL: absent): block_rows
 * semantics. */
static scan_status target_row(chunks *w, job *j, size_t t, size_t r, const char *p, uint32_t len,
                              int *classes)
{
    summary *s = w->runs[t];
    job_target *jt = &j->tg[t];
    jt->row_cell[r] = jt->row_class[r] = 0;
    jt->row_has_y[r] = 0;
    jt->row_ye[r] = BLOCK_NO_NUMBER;
    if (!p) return SCAN_OK;
    summary_column *tc = &s->cols[s->target];
    number_decimal d;
    /* A label is mostly a word: number_text_at_once tells it without the parse. */
    number_kind kind = tc->mode == COLUMN_CATEGORICAL || number_text_at_once(p, len)
                           ? NUMBER_TEXT
                           : number_parse(p, len, &d);
    int finite = kind == NUMBER_FINITE;
    if (!finite) s->target_text++;
    if (finite && !w->target_ref_set[t]) {
        /* The target's frame: its first number's, as the target column's
         * (block.c).  Set here, whatever the task, so that per-class counts
         * turned into per-value target moments when the classes are dropped
         * (summary_class_conversion) and the rows after share it. */
        number_frame(&d, &w->target_ref[t]);
        w->target_ref_set[t] = 1;
    }
    if (finite) { /* for the pair sums, whatever the task */
        int whole = d.exact && (d.mantissa >> 63) == 0;
        int64_t m = whole ? (int64_t)d.mantissa : 0;
        jt->row_ym[r] = d.negative ? -m : m;
        jt->row_ye[r] = whole ? d.exp10 : BLOCK_INEXACT;
        jt->any_y = 1;
    }
    if (s->has_classes) {
        if (len > SUMMARY_MAX_CLASS_BYTES) { /* a summary keeps no such label */
            message_printf(w->r_err, sizeof w->r_err,
                           "%s: line %llu: target '%s' has a cell of %u bytes; a class label holds "
                           "at most %u", w->shown, (unsigned long long)(w->lines + j->line[r]),
                           s->opt.target, len, SUMMARY_MAX_CLASS_BYTES);
            return SCAN_ERR_INPUT;
        }
        uint32_t k = summary_class_of(s, XXH3_64bits(p, len), p, len, finite ? &d : NULL);
        if (k) {
            s->class_rows[k - 1]++;
            jt->row_cell[r] = jt->row_class[r] = k;
            return SCAN_OK;
        }
        /* One class too many: a target of numbers continues as a regression
         * target (its few text cells, this one too, then without a value),
         * a text one cannot. */
        int numeric = s->opt.task != TASK_CLASSIFY &&
                      summary_classes_mostly_numbers(s, kind != NUMBER_TEXT, kind == NUMBER_TEXT);
        if (!numeric)
            return too_many_classes(w, s, w->lines + j->line[r]);
        /* The rows before end a block; the columns convert before the next. */
        if (r > jt->start && add_block(jt, jt->start, (uint32_t)r, 1, 0, 0) != 0)
            return SCAN_ERR_MEMORY;
        jt->start = (uint32_t)r;
        if (summary_class_conversion(s, w->target_ref_set[t] ? &w->target_ref[t] : NULL,
                                     &jt->drop_map, &jt->drop_y) != 0)
            return SCAN_ERR_MEMORY;
        jt->drop_n = s->nclasses + 1;
        jt->drop_epoch = s->tcells.epoch;
        s->has_classes = 0;
        s->classes_dropped = 1;
        for (uint32_t c = 0; c < s->nclasses; c++) free(s->class_label[c]);
        s->nclasses = 0;
        *classes = -1; /* the next block drops them */
    }
    if (finite) {
        jt->row_cell[r] = summary_target_cell(s, d.value);
        if (!jt->row_cell[r]) return SCAN_ERR_MEMORY;
        jt->row_y[r] = number_difference(&d, &w->target_ref[t], NULL);
        jt->row_has_y[r] = 1;
    }
    return SCAN_OK;
}

/* Row r for target t: its target cell, and where its blocks end.  Every
 * SUMMARY_BLOCK_ROWS rows, at the chunk's end, at a drop of the classes and
 * where the target cells are renumbered. */
static scan_status target_rows_of(chunks *w, job *j, size_t t, size_t r)
{
    summary *s = w->runs[t];
    job_target *jt = &j->tg[t];
    if (s->target >= 0) {
        uint32_t len;
        const char *p = cell_text(w, j, (size_t)s->target, r, &len);
        int cl = jt->classes;
        scan_status st = target_row(w, j, t, r, p, len, &cl);
        if (st != SCAN_OK) return st == SCAN_ERR_MEMORY ? chunks_out_of_memory(w) : st;
        if (cl < 0) { /* dropped at this row, which opens a block without classes */
            jt->classes = 0;
            jt->drop = 1;
            jt->tepoch = s->tcells.epoch;
        } else if (s->tcells.epoch != jt->tepoch) {
            /* The target cells were renumbered at this row: the rows before
             * end a block, the columns catch up before the next. */
            if (r > jt->start &&
                add_block(jt, jt->start, (uint32_t)r, jt->classes, jt->drop, jt->tepoch) != 0)
                return chunks_out_of_memory(w);
            if (r > jt->start) jt->drop = 0;
            jt->start = (uint32_t)r;
            jt->tepoch = s->tcells.epoch;
        }
    }
    if (r + 1 - jt->start == SUMMARY_BLOCK_ROWS || r + 1 == j->rows) {
        if (add_block(jt, jt->start, (uint32_t)(r + 1), jt->classes, jt->drop, jt->tepoch) != 0)
            return chunks_out_of_memory(w);
        jt->start = (uint32_t)(r + 1);
        jt->drop = 0;
    }
    return SCAN_OK;
}

/* For each block of target t's that keeps classes: its rows of a class,
 * class by class in the order the classes first appear, each class's rows
 * in row order (a stable counting sort), so that a column's per-class
 * moments take each class's numbers in one run (block.c, feed_classes).
 * Once per block here, not once per column there.  A block has at most
 * SUMMARY_BLOCK_ROWS rows, so at most as many runs as rows. */
static void order_classes(chunks *w, job_target *jt)
{
    uint32_t *count = w->class_count, *pos = w->class_pos;
    size_t nruns = 0;
    for (size_t b = 0; b < jt->nblocks; b++) {
        block_span *sp = &jt->blocks[b];
        sp->runs_at = (uint32_t)nruns;
        sp->nruns = 0;
        if (!sp->classes) continue;
        const uint32_t *cls = jt->row_class;
        for (uint32_t r = sp->start; r < sp->end; r++) count[cls[r]]++;
        uint32_t at = 0;
        for (uint32_t r = sp->start; r < sp->end; r++) {
            uint32_t k = cls[r];
            if (!k) continue;
            if (count[k]) { /* k's first row: its run starts here */
                jt->runs[nruns++] = (block_class_run){k, at, count[k]};
                pos[k] = at;
                at += count[k];
                count[k] = 0;
            }
            jt->row_order[sp->start + pos[k]++] = (uint16_t)(r - sp->start);
        }
        count[0] = 0;
        sp->nruns = (uint32_t)nruns - sp->runs_at;
    }
}

/* A target's blocks are the grid when they end every SUMMARY_BLOCK_ROWS
 * rows from the chunk's first and at its end. */
static int on_grid(const job *j, const job_target *jt)
{
    size_t ngrid = (j->rows + SUMMARY_BLOCK_ROWS - 1) / SUMMARY_BLOCK_ROWS;
    if (jt->nblocks != ngrid) return 0;
    for (size_t b = 0; b < ngrid; b++)
        if (jt->blocks[b].start != b * SUMMARY_BLOCK_ROWS) return 0;
    return 1;
}

scan_status chunks_rows_of(chunks *w, job *j)
{
    if (j->fault == FAULT_READER) {
        reader_cursor_message(&j->cur, w->shown, w->lines, w->r_err, sizeof w->r_err);
        return SCAN_ERR_INPUT;
    }
    if (j->fault == FAULT_TOO_BIG) {
        message_printf(w->r_err, sizeof w->r_err,
                       "%s: a chunk of %zu bytes is over the 4 GiB a chunk may hold; lower "
                       "{chunk_size} or {max_record}", w->shown, j->ck.len);
        return SCAN_ERR_USAGE;
    }
    if (j->fault == FAULT_MEMORY) return chunks_out_of_memory(w);
    for (size_t t = 0; t < w->nruns; t++) w->runs[t]->repeated_headers += j->repeated;
    if (j->row_arrays_cap < j->rows_cap) { /* the tokenizer grew the chunk's rows */
        if (grow_row_arrays(w, j) != 0) return chunks_out_of_memory(w);
        j->row_arrays_cap = j->rows_cap;
    }
    for (size_t t = 0; t < w->nruns; t++) {
        job_target *jt = &j->tg[t];
        jt->nblocks = 0;
        jt->start = 0;
        jt->classes = w->runs[t]->has_classes;
        jt->drop = 0;
        jt->tepoch = w->runs[t]->tcells.epoch; /* of the rows since start */
        jt->any_y = 0;
    }
    const size_t kept = w->kept_fields, cap = j->rows_cap;
    for (size_t r = 0; r < j->rows; r++) {
        w->rows++;
        /* The row's key for the copy prints: the XXH3 of its record as
         * written, so that rows with the same key hold the same cells (the
         * delimiter seeds it: the same bytes split otherwise under another).
         * A record whose quoted field the tokenizer copied down in place
         * no longer holds its bytes as written, and those bytes alone are
         * ambiguous (a doubled quote and a closing one read alike): its key
         * is seeded with where each kept field lies, the seed's top bit set
         * to keep it apart from any record as written. */
        const csv_span *rec = &j->record[r];
        uint64_t seed = (unsigned char)j->ck.delim;
        if (j->rewritten[r]) {
            const size_t nk = j->nf[r] < kept ? j->nf[r] : kept;
            seed ^= nk << 8;
            for (size_t f = 0; f < nk; f++) {
                const csv_span *x = &j->cells[f * cap + r];
                seed = (seed ^ ((uint64_t)(x->off - rec->off) << 32 | x->len)) *
                       UINT64_C(0x9E3779B97F4A7C15);
            }
            seed |= UINT64_C(1) << 63;
        }
        j->row_key[r] = XXH3_64bits_withSeed(j->ck.data + rec->off, rec->len, seed);
        int ragged = j->nf[r] != w->o.width;
        uint64_t line = w->lines + j->line[r];
        for (size_t t = 0; t < w->nruns; t++) { /* the table's counts, in every summary */
            summary *s = w->runs[t];
            s->rows++;
            if (!ragged) continue;
            if (j->nf[r] < w->o.width) s->short_rows++;
            else s->long_rows++;
            if (s->n_bad_lines < SUMMARY_BAD_LINES) s->bad_lines[s->n_bad_lines++] = line;
        }
        if (ragged && w->o.strict) return ragged_row(w, line, j->nf[r]);
        for (size_t t = 0; t < w->nruns; t++) {
            scan_status st = target_rows_of(w, j, t, r);
            if (st != SCAN_OK) return st;
        }
    }
    for (size_t t = 0; t < w->nruns; t++) {
        j->tg[t].on_grid = on_grid(j, &j->tg[t]);
        order_classes(w, &j->tg[t]);
    }
    w->lines += j->cur.lines;
    w->absorbed = j->cur.absorbed;
    return SCAN_OK;
}

