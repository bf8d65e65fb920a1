/* block: see block.h. */
#include "summary/block.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#define XXH_INLINE_ALL
#include <xxhash.h>

#include "io/number_simd.h"

int block_init(block *b, summary *s, const int *field_of)
{
    memset(b, 0, sizeof *b);
    b->s = s;
    b->ncols = s->ncols;
    b->simd = number_simd_usable();
    size_t n = s->ncols, cells = (s->ncomo ? s->ncomo : 1) * SUMMARY_BLOCK_ROWS;
    b->como_x = malloc(cells * sizeof *b->como_x);
    b->como_mask = malloc(cells * sizeof *b->como_mask);
    b->como_center = malloc((s->ncomo + 1) * sizeof *b->como_center);
    b->como_complete = malloc(s->ncomo + 1);
    b->lanes = calloc(n ? n : 1, sizeof *b->lanes);
    if (!b->como_x || !b->como_mask || !b->como_center || !b->como_complete || !b->lanes)
        return -1;
    for (size_t j = 0; j < n; j++) {
        block_lane *l = &b->lanes[j];
        l->field = field_of[j];
        l->hash = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->hash);
        l->text = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->text);
        l->len = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->len);
        l->cell_row = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->cell_row);
        l->dev = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->dev);
        l->val = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->val);
        l->num_row = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->num_row);
        if (!l->hash || !l->text || !l->len || !l->cell_row || !l->dev || !l->val || !l->num_row)
            return -1;
    }
    return 0;
}

void block_free(block *b)
{
    if (b->lanes)
        for (size_t j = 0; j < b->ncols; j++) {
            block_lane *l = &b->lanes[j];
            free(l->hash); free(l->text); free(l->len); free(l->cell_row);
            free(l->dev); free(l->val); free(l->num_row);
        }
    free(b->lanes);
    free(b->como_x);
    free(b->como_mask);
    free(b->como_center);
    free(b->como_complete);
    memset(b, 0, sizeof *b);
}

static void decode_lane(block *b, summary_column *c, block_lane *l);

static void class_add(class_moments *m, double x)
{
    m->n++;
    double d = x - m->mean;
    m->mean += d / (double)m->n;
    m->m2 += d * (x - m->mean);
}

/* Feeds one column's buffered block to its accumulators. */
static int flush_lane(block *b, summary_column *c, block_lane *l)
{
    int classes = b->s->has_classes;
    /* The sketch only matters once the exact table overflows: until then it
     * stays empty and the table's keys stand in for it (summary.h). */
    int sketching = values_overflowed(c->vals);
    for (size_t i = 0; i < l->ncells;) {
        long k = values_add_many(c->vals, l->hash + i, l->text + i, l->len + i, l->ncells - i,
                                 !sketching);
        if (k < 0) return -1;
        if (sketching) {
            hll_add_many(c->distinct, l->hash + i, (size_t)k);
        } else if (values_overflowed(c->vals)) {
            /* The cell that overflowed the table starts the sketch. */
            summary_column_fold_keys(c->distinct, c->vals);
            sketching = 1;
            hll_add(c->distinct, l->hash[i + (size_t)k - 1]);
        }
        i += (size_t)k;
    }
    /* A per-value table only serves a categorical column whose value table
     * stayed exact; once the running value table overflowed it never will. */
    if (c->cross && !values_overflowed(b->s->cols[l - b->lanes].vals)) {
        for (size_t i = 0; i < l->ncells; i++) {
            if (i + 8 < l->ncells) { /* the tables outgrow the caches */
                size_t r8 = l->cell_row[i + 8];
                crosstab_prefetch(c->cross, l->hash[i + 8],
                                  classes ? b->row_class[r8] : b->row_cell[r8]);
            }
            size_t r = l->cell_row[i];
            int rc = 0;
            if (classes) {
                if (b->row_class[r]) rc = crosstab_add_count(c->cross, l->hash[i], b->row_class[r]);
            } else if (b->row_has_y[r]) {
                rc = crosstab_add_values_in(c->cross, l->hash[i], b->row_cell[r], b->row_y[r], 1);
            }
            if (rc != 0) return -1;
        }
    }
    l->ncells = 0;
    if (l->nnum) {
        moments_add_block(&c->mom, l->dev, l->nnum);
        double lo = c->mom.min, hi = c->mom.max;
        uint64_t zeros = 0, integers = 0;
        for (size_t i = 0; i < l->nnum; i++) {
            double x = l->val[i];
            lo = x < lo ? x : lo;
            hi = x > hi ? x : hi;
            zeros += x == 0;
            /* Integer-valued, without branches: every double of magnitude
             * 2^53 or more is, and those are tested as 0. */
            double a = fabs(x), t = a < 9007199254740992.0 ? a : 0.0;
            integers += (double)(int64_t)t == t;
        }
        c->mom.min = lo;
        c->mom.max = hi;
        c->zeros += zeros;
        c->integers += integers;
        if (b->s->opt.target)
            for (size_t i = 0; i < l->nnum; i++) b->cells_tmp[i] = b->row_cell[l->num_row[i]];
        if (buckets_add_many(c->bins, l->val, b->s->opt.target ? b->cells_tmp : NULL, l->nnum) != 0)
            return -1;
        if (c->cls)
            for (size_t i = 0; i < l->nnum; i++) {
                uint32_t k = b->row_class[l->num_row[i]];
                if (k) class_add(&c->cls[k - 1], l->dev[i]);
            }
    }
    return 0;
}

/* Centres the block's numbers per co-moment column and feeds the running
 * co-moment matrix (the block is the unit merged into it). */
static int flush_comoments(block *b)
{
    summary *run = b->s;
    size_t rows = b->rows, p = run->ncomo;
    if (!p || !rows) return 0;
    for (size_t k = 0; k < p; k++) {
        size_t j = run->como_col[k];
        const block_lane *l = &b->lanes[j];
        const moments *m = &run->cols[j].mom;
        b->como_complete[k] = l->nnum == rows;
        b->como_center[k] = 0;
        double *x = b->como_x + k * rows, *msk = b->como_mask + k * rows;
        if (l->nnum < rows) { /* missing cells are 0 in both; complete columns overwrite all */
            memset(x, 0, rows * sizeof *x);
            memset(msk, 0, rows * sizeof *msk);
        }
        if (!l->nnum) continue;
        double shift = 0;
        if (!run->como_ref_set[k]) {
            run->como_ref[k] = m->ref;
            run->como_ref_set[k] = 1;
        } else {
            shift = number_difference(&m->ref, &run->como_ref[k], NULL);
        }
        double sum = 0;
        for (size_t i = 0; i < l->nnum; i++) sum += l->dev[i];
        double mean = sum / (double)l->nnum;
        b->como_center[k] = mean + shift;
        for (size_t i = 0; i < l->nnum; i++) {
            x[l->num_row[i]] = l->dev[i] - mean;
            msk[l->num_row[i]] = 1.0;
        }
    }
    return comoment_add_block(run->como, b->como_x, b->como_mask, b->como_center,
                              b->como_complete, rows);
}

static void keep_example(summary_column *c, const char *p, uint32_t len)
{
    if (c->n_examples >= SUMMARY_EXAMPLES) return;
    uint32_t n = len > SUMMARY_EXAMPLE_BYTES ? SUMMARY_EXAMPLE_BYTES : len;
    for (uint32_t k = 0; k < c->n_examples; k++)
        if (strlen(c->examples[k]) == n && memcmp(c->examples[k], p, n) == 0) return;
    memcpy(c->examples[c->n_examples], p, n);
    c->examples[c->n_examples][n] = '\0';
    c->n_examples++;
}

/* The numbers of a lane's cells: parse (an expression of text, length and
 * &d giving a number_kind) for each cell, then a finite number becomes a
 * deviation from the column's reference decimal (number_deviation, on the
 * reference unpacked in the lane).  A macro, so that the SSSE3 variant below
 * inlines its parser. */
#define DECODE_NUMBERS(parse)                                                                  \
    do {                                                                                       \
        size_t nnum = l->nnum;                                                                 \
        for (size_t i = 0; i < n; i++) {                                                       \
            number_decimal d;                                                                  \
            switch (parse(l->text[i], l->len[i], &d)) {                                        \
            case NUMBER_FINITE: {                                                              \
                if (!c->mom.has_ref) {                                                         \
                    moments_set_ref(&c->mom, &d);                                              \
                    number_ref_set(&l->ref, &d);                                               \
                }                                                                              \
                l->dev[nnum] = number_deviation(&d, &l->ref);                                  \
                l->val[nnum] = d.value;                                                        \
                l->num_row[nnum] = l->cell_row[i];                                             \
                nnum++;                                                                        \
                break;                                                                         \
            }                                                                                  \
            case NUMBER_NONFINITE: c->non_finite++; break;                                     \
            default:                                                                           \
                c->non_numeric++;                                                              \
                keep_example(c, l->text[i], l->len[i]);                                        \
            }                                                                                  \
        }                                                                                      \
        l->nnum = nnum;                                                                        \
    } while (0)

static void decode_numbers(summary_column *c, block_lane *l, size_t n)
{
    DECODE_NUMBERS(number_parse);
}

#if defined(NUMBER_SIMD)
/* Cells sit in padded chunks, so the SIMD parser may read past them. */
__attribute__((target("ssse3"))) static void decode_numbers_ssse3(summary_column *c, block_lane *l,
                                                                  size_t n)
{
    DECODE_NUMBERS(number_parse_padded);
}
#endif

/* Hashes and parses the buffered cells of one column, one column at a time
 * (each column's cells look alike, so the branches of the hash and the
 * parser predict well). */
static void decode_lane(block *b, summary_column *c, block_lane *l)
{
    const size_t n = l->ncells;
    for (size_t i = 0; i < n; i++) l->hash[i] = XXH3_64bits(l->text[i], l->len[i]);
    if (c->mode == COLUMN_CATEGORICAL) { c->non_numeric += n; return; }
#if defined(NUMBER_SIMD)
    if (b->simd) { decode_numbers_ssse3(c, l, n); return; }
#endif
    (void)b;
    decode_numbers(c, l, n);
}

int block_flush(block *b)
{
    for (size_t j = 0; j < b->s->ncols; j++) decode_lane(b, &b->s->cols[j], &b->lanes[j]);
    if (flush_comoments(b) != 0) return -1;
    for (size_t j = 0; j < b->s->ncols; j++) {
        block_lane *l = &b->lanes[j];
        if (flush_lane(b, &b->s->cols[j], l) != 0) return -1;
        l->nnum = 0;
    }
    b->rows = 0;
    return 0;
}


void block_ragged(block *b, int short_row, uint64_t line)
{
    summary *s = b->s;
    if (short_row) s->short_rows++;
    else s->long_rows++;
    if (s->n_bad_lines < SUMMARY_BAD_LINES) s->bad_lines[s->n_bad_lines++] = line;
}

int block_target(block *b, const char *p, uint32_t len)
{
    size_t r = b->rows;
    b->row_cell[r] = 0;
    b->row_class[r] = 0;
    b->row_has_y[r] = 0;
    if (!p) return 0;
    summary *s = b->s;
    summary_column *tc = &s->cols[s->target];
    number_decimal d;
    int finite = tc->mode != COLUMN_CATEGORICAL && number_parse(p, len, &d) == NUMBER_FINITE;
    if (!finite) s->target_text++;
    if (s->has_classes) {
        uint32_t k = summary_class_of(s, XXH3_64bits(p, len), p, len, finite ? &d : NULL);
        if (k) {
            s->class_rows[k - 1]++;
            b->row_cell[r] = b->row_class[r] = k;
            return 0;
        }
        /* One class too many: a numeric target continues as a regression
         * target, a text one cannot. */
        int numeric = finite && s->opt.task != TASK_CLASSIFY;
        for (uint32_t c = 0; numeric && c < s->nclasses; c++) numeric = s->class_numeric[c];
        if (!numeric) return 1;
        if (block_flush(b) != 0 || summary_drop_classes(s) != 0) return -1;
        r = 0;
        b->row_cell[r] = b->row_class[r] = b->row_has_y[r] = 0;
    }
    if (finite) {
        if (!tc->mom.has_ref) moments_set_ref(&tc->mom, &d);
        b->row_cell[r] = summary_target_cell(d.value);
        b->row_y[r] = number_difference(&d, &tc->mom.ref, NULL);
        b->row_has_y[r] = 1;
    }
    return 0;
}
