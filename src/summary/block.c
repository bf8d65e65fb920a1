/* block: see block.h. */
#include "io/clones.h"
#include "summary/block.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "acc/four.h"
#include "io/cellhash.h"
#include "io/chunk.h"
#include "io/number_simd.h"

_Static_assert(CHUNK_PADDING >= CELLHASH_READ_AHEAD, "cells are hashed in padded chunks");

int block_lane_init(block_lane *l)
{
    memset(l, 0, sizeof *l);
    l->hash = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->hash);
    l->text = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->text);
    l->len = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->len);
    l->cell_row = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->cell_row);
    l->dev = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->dev);
    l->val = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->val);
    l->num_row = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->num_row);
    l->cells_tmp = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->cells_tmp);
    l->num_mant = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->num_mant);
    l->num_exp = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->num_exp);
    l->cls_vals = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->cls_vals);
    if (!l->cls_vals || !l->hash || !l->text || !l->len || !l->cell_row || !l->dev || !l->val || !l->num_row ||
        !l->cells_tmp || !l->num_mant || !l->num_exp)
        return -1;
    return 0;
}

void block_lane_free(block_lane *l)
{
    free(l->hash); free(l->text); free(l->len); free(l->cell_row);
    free(l->dev); free(l->val); free(l->num_row); free(l->cells_tmp);
    free(l->cls_tmp); free(l->cls_touched); free(l->num_mant); free(l->num_exp);
    free(l->cls_vals);
    memset(l, 0, sizeof *l);
}

/* One class's place in a block's numbers grouped by class (feed_classes). */
struct block_class {
    uint32_t count; /* numbers of the class in the block */
    uint32_t fill;  /* the next free place of its group */
};

/* s + x exactly as (*s, *low added to): Knuth's TwoSum (TAOCP vol. 2, 4.2.2). */
static inline void two_sum_into(double *s, double *low, double x)
{
    double t = *s + x, v = t - *s;
    *low += (*s - (t - v)) + (x - v);
    *s = t;
}

/* Per-class moments of a block: the block's numbers grouped by class (a
 * stable counting sort: a class's numbers keep their order), then, class by
 * class, in four lanes (acc/four.h):
 *   - each number adds to its lane's block sum, kept in two doubles by
 *     TwoSum; the four lanes' two-double sums are added by TwoSum again, so
 *     the block's sum is exact to about 2^-106;
 *   - x - K and (x - K)^2 add to shifted sums, K the class's mean before
 *     the block (its first number in its first block): the shifted-data
 *     algorithm of Chan, Golub & LeVeque (1983), well conditioned here
 *     because a block's mean lies within about sd / sqrt(n_b) of K.
 * Then per class: the block's two-double sum enters the class's running
 * sum (TwoSum again), and M2_b = s2 - s1^2 / n_b merges by the pairwise rule
 * of moments_pair_merge.  A class's running sum thus carries only the
 * deviations' own rounding, never that of its offset from the frame, so a
 * class mean keeps the digits in which classes differ.  Welford's update,
 * used before, rounded the running mean at every value (a random walk of
 * sqrt(n) ulps of the offset): on randhie's fmde by hlthg (20,190 rows) it
 * left the ANOVA F 11 correct digits (14.7 now).  Two cheaper sums were
 * measured there and set aside: the shifted sum s1 alone for the mean, 12.9
 * digits (it rounds at the scale of the block's offset from K), and plain
 * block sums corrected by a second pass over the residuals, 13.2 digits (the
 * residuals' partial sums wander to sqrt(n_b) standard deviations and round
 * there).  Grouping first keeps each class's sums in registers: the loop
 * over rows in turn went through memory for every number.  The order is
 * the block's own (block_rows.class_order, made once per block by the row
 * task) for a column with a number in every row, else made here (callgrind,
 * 150,000 rows of the bench table with its class target: 131.2 -> 48.5 M
 * instructions, the row task 29.3 -> 34.0 M). */
/* One class's numbers of a block, v[at[i]] for i < cnt (at NULL: v[i]),
 * into its running moments m. */
static inline __attribute__((always_inline)) void class_run(class_moments *m, const double *v,
                                                            const uint16_t *at, uint32_t cnt)
{
#define AT(i) (at ? v[at[i]] : v[i])
    const double shift = m->n ? class_moments_mean(m) : AT(0);
    const four_doubles kv = FOUR_OF(shift);
    four_doubles hi = FOUR_OF(0.0), lo = hi, s1 = hi, s2 = hi;
    uint32_t i = 0;
    for (; i + 4 <= cnt; i += 4) {
        four_doubles xv = {AT(i), AT(i + 1), AT(i + 2), AT(i + 3)};
        four_doubles t4 = hi + xv, z = t4 - hi; /* TwoSum, lane by lane */
        lo += (hi - (t4 - z)) + (xv - z);
        hi = t4;
        four_doubles r = xv - kv;
        s1 += r;
        s2 += r * r;
    }
    for (uint32_t u = 0; i < cnt; i++, u++) {
        double h = hi[u], w = lo[u], x = AT(i);
        two_sum_into(&h, &w, x);
        hi[u] = h;
        lo[u] = w;
        double r = x - shift;
        s1[u] += r;
        s2[u] += r * r;
    }
#undef AT
    double sum = hi[0], sum_low = lo[0];
    for (int u = 1; u < 4; u++) {
        two_sum_into(&sum, &sum_low, hi[u]);
        sum_low += lo[u];
    }
    double nb = cnt, t1 = four_total(&s1), m2b = four_total(&s2) - t1 * (t1 / nb);
    if (m2b < 0) m2b = 0;
    if (m->n == 0) {
        m->m2 = m2b;
    } else {
        double na = (double)m->n, d = class_sum_quotient(sum, sum_low, nb) - class_moments_mean(m);
        m->m2 += m2b + d * d * na * nb / (na + nb);
    }
    two_sum_into(&m->sum, &m->sum_low, sum);
    double low = m->sum_low + sum_low; /* renormalize: |sum_low| <= ulp(sum) / 2 */
    m->sum_low = 0;
    two_sum_into(&m->sum, &m->sum_low, low);
    m->n += cnt;
}

SHEAF_HOT static void feed_classes(summary_column *c, block_lane *l, const block_rows *b)
{
    const size_t n = l->nnum;
    const double *x = l->dev;
    if (n == b->rows && b->class_runs) {
        /* A number in every row (the i-th number is row i's): the block's
         * own class order serves every such column. */
        for (size_t t = 0; t < b->n_class_runs; t++) {
            const block_class_run *run = &b->class_runs[t];
            class_run(&c->cls[run->cls - 1], x, b->class_order + run->at, run->count);
        }
        return;
    }
    /* Otherwise the column's numbers grouped here, the same way. */
    struct block_class *bc = l->cls_tmp; /* indexed by class 0..K, 0: no class */
    uint32_t *touched = l->cls_touched, nt = 0;
    uint32_t *cls = l->cells_tmp;
    double *g = l->cls_vals;
    for (size_t i = 0; i < n; i++) {
        uint32_t k = b->row_class[l->num_row[i]];
        cls[i] = k;
        if (k && bc[k].count == 0) touched[nt++] = k;
        bc[k].count++;
    }
    uint32_t at = 0;
    for (uint32_t t = 0; t < nt; t++) {
        bc[touched[t]].fill = at;
        at += bc[touched[t]].count;
    }
    bc[0].fill = at; /* numbers of no class: after every group, never read */
    for (size_t i = 0; i < n; i++) g[bc[cls[i]].fill++] = x[i];
    bc[0].count = 0;
    at = 0;
    for (uint32_t t = 0; t < nt; t++) {
        const uint32_t cnt = bc[touched[t]].count;
        class_run(&c->cls[touched[t] - 1], g + at, NULL, cnt);
        at += cnt;
        bc[touched[t]].count = 0;
    }
}

/* Minimum, maximum, zeros and integer-valued numbers of a block's finite
 * numbers, as the scalar rule gives them: lo = x < lo ? x : lo in order (of
 * equal values the first stays, which matters for -0 and +0 only), and a
 * number is integer-valued when its magnitude is 2^52 or more or when
 * adding and taking away 2^52 (round to nearest, exact below 2^52) gives
 * it back.  Four numbers at a time in vector lanes (acc/four.h): 5.8
 * instructions a number in the x86-64-v3 clone, 7.7 with SSE2 pairs before,
 * 29 for the scalar loop (callgrind). */
typedef struct {
    double lo, hi;
    uint64_t zeros, integers;
} number_extent;

/* The first zero among v[0..n), which has one. */
static double first_zero(const double *v, size_t n)
{
    size_t i = 0;
    while (i + 1 < n && v[i] != 0) i++;
    return v[i];
}

SHEAF_HOT static void scan_extent(const double *v, size_t n, number_extent *e)
{
    size_t i = 0;
    double lo = e->lo, hi = e->hi;
    if (n >= 8) { /* four lanes (acc/four.h), on the bits of the doubles */
        const four_doubles two52 = FOUR_OF(0x1p52), zero = FOUR_OF(0.0);
        const four_words magnitude = {INT64_MAX, INT64_MAX, INT64_MAX, INT64_MAX};
        four_doubles vlo = FOUR_OF(lo), vhi = FOUR_OF(hi), x;
        four_words nz = {0, 0, 0, 0}, ni = nz;
        for (; i + 4 <= n; i += 4) {
            four_get(&x, v + i);
            /* x < lo ? x : lo, lane by lane (equal values keep lo) */
            four_words lt = (four_words)(x < vlo), gt = (four_words)(x > vhi);
            vlo = (four_doubles)((lt & (four_words)x) | (~lt & (four_words)vlo));
            vhi = (four_doubles)((gt & (four_words)x) | (~gt & (four_words)vhi));
            four_doubles a = (four_doubles)((four_words)x & magnitude);
            four_words whole = (four_words)(a >= two52) | (four_words)((a + two52) - two52 == a);
            nz -= (four_words)(x == zero);
            ni -= whole;
        }
        double vl = vlo[0], vh = vhi[0];
        for (int u = 1; u < 4; u++) {
            vl = vlo[u] < vl ? vlo[u] : vl;
            vh = vhi[u] > vh ? vhi[u] : vh;
        }
        /* The lanes lose the order of equal values, which only matters for
         * a new extreme of zero: in order, the block's first zero (-0 or
         * +0) would be it.  An extreme equal to the old one keeps the old. */
        if (vl < lo) lo = vl == 0 ? first_zero(v, i) : vl;
        if (vh > hi) hi = vh == 0 ? first_zero(v, i) : vh;
        e->zeros += nz[0] + nz[1] + nz[2] + nz[3];
        e->integers += ni[0] + ni[1] + ni[2] + ni[3];
    }
    for (; i < n; i++) {
        double x = v[i];
        lo = x < lo ? x : lo;
        hi = x > hi ? x : hi;
        e->zeros += x == 0;
        e->integers += number_integer_valued(x);
    }
    e->lo = lo;
    e->hi = hi;
}

SHEAF_HOT int block_feed(summary_column *c, block_lane *l, const block_rows *b)
{
    int classes = b->classes;
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
    if (c->cross && !values_overflowed(c->vals)) {
        if (classes) {
            const uint32_t *cls = b->row_class; /* a cell in every row: the i-th is row i's */
            if (l->ncells != b->rows) {
                for (size_t i = 0; i < l->ncells; i++) l->cells_tmp[i] = b->row_class[l->cell_row[i]];
                cls = l->cells_tmp;
            }
            if (crosstab_add_counts(c->cross, l->hash, cls, l->ncells) != 0) return -1;
        } else {
            for (size_t i = 0; i < l->ncells; i++) {
                if (i + 8 < l->ncells) { /* the tables outgrow the caches */
                    size_t r8 = l->cell_row[i + 8];
                    crosstab_prefetch(c->cross, l->hash[i + 8], b->row_cell[r8]);
                }
                size_t r = l->cell_row[i];
                if (b->row_has_y[r] &&
                    crosstab_add_values_in(c->cross, l->hash[i], b->row_cell[r], b->row_y[r], 1) != 0)
                    return -1;
            }
        }
    }
    l->ncells = 0;
    if (l->nnum) {
        moments_add_block(&c->mom, l->dev, l->nnum);
        number_extent e = {c->mom.min, c->mom.max, 0, 0};
        scan_extent(l->val, l->nnum, &e);
        double lo = e.lo, hi = e.hi;
        uint64_t zeros = e.zeros, integers = e.integers;
        c->mom.min = lo;
        c->mom.max = hi;
        c->zeros += zeros;
        c->integers += integers;
        const uint32_t *cells = NULL; /* the bucket cell of each number */
        if (b->target && l->nnum == b->rows) { /* a number in every row: the i-th is row i's */
            cells = b->row_cell;
        } else if (b->target) {
            for (size_t i = 0; i < l->nnum; i++) l->cells_tmp[i] = b->row_cell[l->num_row[i]];
            cells = l->cells_tmp;
        }
        if (buckets_add_many(c->bins, l->val, cells, l->nnum) != 0) return -1;
        if (c->cls && classes) {
            if (l->cls_cap < b->max_classes) {
                free(l->cls_tmp);
                free(l->cls_touched);
                l->cls_cap = 0;
                l->cls_tmp = calloc((size_t)b->max_classes + 1, sizeof *l->cls_tmp);
                l->cls_touched = malloc(b->max_classes * sizeof *l->cls_touched);
                if (!l->cls_tmp || !l->cls_touched) return -1;
                l->cls_cap = b->max_classes;
            }
            feed_classes(c, l, b);
        }
        if (c->pairs && b->any_y && l->decimals)
            pairsum_add_many(c->pairs, l->num_mant, l->num_exp, b->row_ym, b->row_ye, l->num_row,
                             l->nnum);
    }
    l->nnum = 0;
    return 0;
}

int block_como_init(block_como *bc, size_t ncomo)
{
    memset(bc, 0, sizeof *bc);
    size_t cells = (ncomo ? ncomo : 1) * SUMMARY_BLOCK_ROWS;
    bc->ncomo = ncomo;
    bc->x = malloc(cells * sizeof *bc->x);
    bc->mask = malloc(cells * sizeof *bc->mask);
    bc->center = malloc((ncomo + 1) * sizeof *bc->center);
    bc->shift = malloc((ncomo + 1) * sizeof *bc->shift);
    bc->complete = malloc(ncomo + 1);
    bc->stage_dev = malloc(cells * sizeof *bc->stage_dev);
    bc->stage_present = malloc(cells);
    bc->dev_at = malloc((ncomo + 1) * sizeof *bc->dev_at);
    bc->present_at = malloc((ncomo + 1) * sizeof *bc->present_at);
    return bc->x && bc->mask && bc->center && bc->shift && bc->complete && bc->stage_dev &&
                   bc->stage_present && bc->dev_at && bc->present_at
               ? 0
               : -1;
}

void block_como_free(block_como *bc)
{
    free(bc->x);
    free(bc->mask);
    free(bc->center);
    free(bc->shift);
    free(bc->complete);
    free(bc->stage_dev);
    free(bc->stage_present);
    free(bc->dev_at);
    free(bc->present_at);
    memset(bc, 0, sizeof *bc);
}

/* The sum of d[r] over the rows with pr[r] (acc/four.h); the other rows'
 * entries are masked to +0 in their bits, never read as numbers. */
static inline double masked_sum(const double *d, const unsigned char *pr, size_t rows)
{
    four_doubles acc = {0, 0, 0, 0};
    size_t r = 0;
    for (; r + 4 <= rows; r += 4) {
        four_doubles v;
        four_get(&v, d + r);
        four_words keep = {(uint64_t)0 - (pr[r] != 0), (uint64_t)0 - (pr[r + 1] != 0),
                           (uint64_t)0 - (pr[r + 2] != 0), (uint64_t)0 - (pr[r + 3] != 0)};
        acc += (four_doubles)((four_words)v & keep);
    }
    for (size_t u = 0; r < rows; r++, u++) acc[u] += four_masked(d[r], (uint64_t)0 - (pr[r] != 0));
    return four_total(&acc);
}

SHEAF_HOT int block_comoments(summary *run, block_como *bc, const double *const *dev,
                    const unsigned char *const *present, size_t rows)
{
    size_t p = run->ncomo;
    if (!p || !rows) return 0;
    for (size_t k = 0; k < p; k++) {
        const double *restrict d = dev[k];
        const unsigned char *restrict pr = present[k];
        double *restrict x = bc->x + k * rows, *restrict msk = bc->mask + k * rows;
        /* The block's sum in four interleaved partial sums, without
         * branches: a missing cell's deviation (not a number to read) is
         * masked to +0 in its bits.  A sum of one chain waited on every
         * addition.  The mean only centres the block (comoment_add_block
         * corrects it by the centred values' own sum), so any order of the
         * sum serves. */
        size_t nnum = 0;
        for (size_t r = 0; r < rows; r++) {
            msk[r] = (double)(pr[r] != 0);
            nnum += pr[r] != 0;
        }
        double sum = masked_sum(d, pr, rows);
        bc->complete[k] = nnum == rows;
        bc->center[k] = 0;
        bc->shift[k] = 0;
        if (!nnum) { /* missing cells are 0 in both */
            memset(x, 0, rows * sizeof *x);
            continue;
        }
        const moments *m = &run->cols[run->como_col[k]].mom;
        double shift = 0;
        if (!run->como_ref_set[k]) {
            run->como_ref[k] = m->ref;
            run->como_ref_set[k] = 1;
        } else {
            shift = number_difference(&m->ref, &run->como_ref[k], NULL);
        }
        double mean = sum / (double)nnum;
        bc->center[k] = mean + shift;
        bc->shift[k] = shift;
        for (size_t i = 0; i < rows; i++) { /* what a missing cell holds is never computed on */
            uint64_t keep = (uint64_t)0 - (pr[i] != 0);
            x[i] = four_masked(four_masked(d[i], keep) - mean, keep);
        }
    }
    const comoment_source source = {dev, bc->shift};
    return comoment_add_block(run->como, bc->x, bc->mask, bc->center, bc->complete, rows, &source);
}

int block_comoments_flush(summary *run, block_como *bc)
{
    if (!bc->staged) return 0;
    for (size_t k = 0; k < bc->ncomo; k++) {
        bc->dev_at[k] = bc->stage_dev + k * SUMMARY_BLOCK_ROWS;
        bc->present_at[k] = bc->stage_present + k * SUMMARY_BLOCK_ROWS;
    }
    size_t rows = bc->staged;
    bc->staged = 0;
    return block_comoments(run, bc, bc->dev_at, bc->present_at, rows);
}

int block_comoments_add(summary *run, block_como *bc, const double *const *dev,
                        const unsigned char *const *present, size_t rows)
{
    const size_t p = bc->ncomo, B = SUMMARY_BLOCK_ROWS;
    size_t r = 0;
    while (r < rows) {
        if (bc->staged == 0 && rows - r >= B) { /* a whole block in place */
            for (size_t k = 0; k < p; k++) {
                bc->dev_at[k] = dev[k] + r;
                bc->present_at[k] = present[k] + r;
            }
            if (block_comoments(run, bc, bc->dev_at, bc->present_at, B) != 0) return -1;
            r += B;
            continue;
        }
        size_t n = B - bc->staged < rows - r ? B - bc->staged : rows - r;
        for (size_t k = 0; k < p; k++) {
            memcpy(bc->stage_dev + k * B + bc->staged, dev[k] + r, n * sizeof *dev[k]);
            memcpy(bc->stage_present + k * B + bc->staged, present[k] + r, n);
        }
        bc->staged += n;
        r += n;
        if (bc->staged == B && block_comoments_flush(run, bc) != 0) return -1;
    }
    return 0;
}

static void keep_example(summary_column *c, const char *p, uint32_t len)
{
    if (c->n_examples >= SUMMARY_EXAMPLES) return;
    uint32_t n = len > SUMMARY_EXAMPLE_BYTES ? values_whole_utf8(p, SUMMARY_EXAMPLE_BYTES) : len;
    for (uint32_t k = 0; k < c->n_examples; k++)
        if (strlen(c->examples[k]) == n && memcmp(c->examples[k], p, n) == 0) return;
    memcpy(c->examples[c->n_examples], p, n);
    c->examples[c->n_examples][n] = '\0';
    c->n_examples++;
}

/* The numbers of a lane's cells.  Each cell is parsed (an expression of
 * text, length and &d giving a number_kind), then a finite number becomes a
 * deviation from the column's reference decimal (number_deviation, on the
 * reference unpacked in the lane; the first number sets the reference,
 * through number_frame).
 *
 * The common cell (one the SIMD parser reads whole, whose deviation is one
 * of number_deviation's exact cases, number_deviation_exact) is done in a
 * tight loop with the reference in locals: the same operations as the
 * general path, so the same numbers (tests/cli/test_clones.sh compares the
 * summaries with those of the scalar path, SHEAF_TEST_SCALAR_DECODE).  Any
 * other cell goes to the general path, a function of its own (DECODE_CELL),
 * so that the loop keeps its registers; it parses the cell again, which
 * costs only the rare number the loop parsed but could not take (a
 * mantissa of 2^52 or more, or powers of ten too far from the
 * reference's).  Macros, so that the SSSE3 and
 * x86-64-v3 variants below inline their parsers. */
#define DECODE_CELL(name, parse, decimals, attr)                                               \
    attr __attribute__((noinline)) static void name(summary_column *c, block_lane *l, size_t i) \
    {                                                                                          \
        size_t nnum = l->nnum;                                                                 \
        number_decimal d;                                                                      \
        switch (parse(l->text[i], l->len[i], &d)) {                                           \
        case NUMBER_FINITE: {                                                                  \
            if (!l->ref_set) {                                                                 \
                if (!c->mom.has_ref) {                                                         \
                    number_decimal frame;                                                      \
                    number_frame(&d, &frame);                                                  \
                    moments_set_ref(&c->mom, &frame);                                          \
                }                                                                              \
                number_ref_set(&l->ref, &c->mom.ref);                                          \
                l->ref_set = 1;                                                                \
            }                                                                                  \
            l->dev[nnum] = number_deviation(&d, &l->ref);                                      \
            l->val[nnum] = d.value;                                                            \
            if (decimals) { /* an int64 mantissa, or inexact for the pair sums */          \
                int whole = d.exact && (d.mantissa >> 63) == 0;                                \
                int64_t m = whole ? (int64_t)d.mantissa : 0;                                   \
                l->num_mant[nnum] = d.negative ? -m : m;                                       \
                l->num_exp[nnum] = whole ? d.exp10 : BLOCK_INEXACT;                            \
            }                                                                                  \
            l->num_row[nnum] = l->cell_row[i];                                                 \
            l->nnum = nnum + 1;                                                                \
            break;                                                                             \
        }                                                                                      \
        case NUMBER_NONFINITE: c->non_finite++; break;                                         \
        default:                                                                               \
            c->non_numeric++;                                                                  \
            keep_example(c, l->text[i], l->len[i]);                                            \
        }                                                                                      \
    }

/* The quick loops' number d with deviation dd, of cell i. */
#define DECODE_KEEP(d, dd, decimals)                                                           \
    do {                                                                                       \
        dev[nnum] = dd;                                                                        \
        val[nnum] = d.value;                                                                   \
        if (decimals) {                                                                        \
            num_mant[nnum] = number_signed_int(d.mantissa, d.negative);                     \
            num_exp[nnum] = d.exp10;                                                           \
        }                                                                                      \
        num_row[nnum] = cell_row[i];                                                           \
        nnum++;                                                                                \
    } while (0)

#define DECODE_NUMBERS(whole, quick, cell, decimals)                                                  \
    do {                                                                                       \
        const char *const *text = (const char *const *)l->text;                               \
        const uint32_t *len = l->len;                                                          \
        const uint16_t *cell_row = l->cell_row;                                                \
        double *dev = l->dev, *val = l->val;                                                   \
        uint16_t *num_row = l->num_row;                                                        \
        int64_t *num_mant = l->num_mant;                                                       \
        int32_t *num_exp = l->num_exp;                                                         \
        size_t nnum = l->nnum;                                                                 \
        for (size_t i = 0; i < n;) {                                                           \
            if (l->ref_set && l->ref.fast) { /* the reference in locals */                     \
                const int32_t ref_exp = l->ref.exp10;                                          \
                const int64_t ref_m = l->ref.signed_m;                                         \
                const uint64_t ref_mant = l->ref.dec.mantissa;                                 \
                const double ref_scale = l->ref.scale;                                         \
                const int ref_divide = l->ref.divide;                                          \
                /* The reference's decimals, which most cells of a column share   \
                 * (16: none, a whole reference; quick never matches it). */       \
                const unsigned fixed = ref_exp < 0 && ref_exp > -16 ? (unsigned)-ref_exp : 16; \
                /* A run of cells of digits alone first (a column of whole      \
                 * numbers: the parser need not look for a point or an        \
                 * exponent), then the quick parser for the rest. */          \
                for (; i < n; i++) {                                                           \
                    number_decimal d;                                                          \
                    double dd;                                                                 \
                    if (whole(text[i], len[i], &d) != 0 || (d.mantissa >> 52) != 0 ||          \
                        !number_deviation_exact(d.mantissa, d.negative, 0, ref_exp, ref_m,     \
                                                ref_mant, ref_scale, ref_divide, &dd))         \
                        break;                                                                 \
                    DECODE_KEEP(d, dd, decimals);                                              \
                }                                                                              \
                for (; i < n; i++) {                                                           \
                    number_decimal d;                                                          \
                    double dd;                                                                 \
                    int got = quick(text[i], len[i], fixed, &d);                               \
                    if (got == 1) /* the reference's decimals: k = 0 of the deviation */   \
                        dd = (double)(number_signed_int(d.mantissa, d.negative) - ref_m) /     \
                             ref_scale;                                                        \
                    else if (got != 0 || (d.mantissa >> 52) != 0 ||                           \
                             !number_deviation_exact(d.mantissa, d.negative, d.exp10, ref_exp, \
                                                     ref_m, ref_mant, ref_scale, ref_divide,   \
                                                     &dd))                                     \
                        break;                                                                 \
                    DECODE_KEEP(d, dd, decimals);                                              \
                }                                                                              \
                if (i == n) break;                                                             \
            }                                                                                  \
            /* A run of cells that every parser finds text: a first letter other     \
             * than that of inf or nan, at most 32 bytes (number_parse_padded). */     \
            for (; i < n && number_text_at_once(text[i], len[i]); i++) {                       \
                c->non_numeric++;                                                              \
                if (c->n_examples < SUMMARY_EXAMPLES) keep_example(c, text[i], len[i]);        \
            }                                                                                  \
            if (i == n) break;                                                                 \
            l->nnum = nnum;                                                                    \
            cell(c, l, i++);                                                                   \
            nnum = l->nnum;                                                                    \
        }                                                                                      \
        l->nnum = nnum;                                                                        \
    } while (0)

/* No quick path for the scalar parser (it folds away). */
static inline int no_quick(const char *s, size_t len, number_decimal *d)
{
    (void)s, (void)len, (void)d;
    return -1;
}

static inline int no_quick_fixed(const char *s, size_t len, unsigned decimals, number_decimal *d)
{
    (void)decimals;
    return no_quick(s, len, d);
}

DECODE_CELL(number_cell, number_parse, 0, )
DECODE_CELL(decimal_cell, number_parse, 1, )

/* `decimals` is a constant in each instance below, so the test folds away. */
static void decode_numbers(summary_column *c, block_lane *l, size_t n)
{
    DECODE_NUMBERS(no_quick, no_quick_fixed, number_cell, 0);
}

static void decode_decimals(summary_column *c, block_lane *l, size_t n)
{
    DECODE_NUMBERS(no_quick, no_quick_fixed, decimal_cell, 1);
}

#if defined(NUMBER_SIMD)
/* Cells sit in padded chunks, so the SIMD parser may read past them. */
DECODE_CELL(number_cell_ssse3, number_parse_padded, 0, __attribute__((target("ssse3"))))
DECODE_CELL(decimal_cell_ssse3, number_parse_padded, 1, __attribute__((target("ssse3"))))

__attribute__((target("ssse3"))) static void decode_numbers_ssse3(summary_column *c, block_lane *l,
                                                                  size_t n)
{
    DECODE_NUMBERS(number_parse_integer_ssse3, number_parse_fixed_ssse3, number_cell_ssse3, 0);
}

__attribute__((target("ssse3"))) static void decode_decimals_ssse3(summary_column *c,
                                                                   block_lane *l, size_t n)
{
    DECODE_NUMBERS(number_parse_integer_ssse3, number_parse_fixed_ssse3, decimal_cell_ssse3, 1);
}

#if defined(SHEAF_HAVE_CLONES)
/* The same two for x86-64-v3 (io/clones.h): the parser's SSSE3 steps are
 * the same instructions, the loop around them gains BMI2 and AVX2. */
__attribute__((target("arch=x86-64-v3"))) static void decode_numbers_v3(summary_column *c,
                                                                       block_lane *l, size_t n)
{
    DECODE_NUMBERS(number_parse_integer_ssse3, number_parse_fixed_ssse3, number_cell_ssse3, 0);
}

__attribute__((target("arch=x86-64-v3"))) static void decode_decimals_v3(summary_column *c,
                                                                        block_lane *l, size_t n)
{
    DECODE_NUMBERS(number_parse_integer_ssse3, number_parse_fixed_ssse3, decimal_cell_ssse3, 1);
}
#endif
#endif

SHEAF_HOT void block_decode(summary_column *c, block_lane *l, int simd)
{
    const size_t n = l->ncells;
    /* Cells sit in padded chunks (CELLHASH_READ_AHEAD). */
    cellhash_many((const char *const *)l->text, l->len, n, l->hash);
    if (l->row_key) {
        uint64_t print = 0;
        for (size_t i = 0; i < n; i++) print += block_copy_term(l->row_key[l->cell_row[i]], l->hash[i]);
        c->copy_print += print;
    }
    if (c->mode == COLUMN_CATEGORICAL) { c->non_numeric += n; return; }
    int decimals = l->decimals && c->pairs;
#if defined(NUMBER_SIMD)
    if (simd) {
#if defined(SHEAF_HAVE_CLONES)
        if (__builtin_cpu_supports("x86-64-v3")) {
            if (decimals) decode_decimals_v3(c, l, n);
            else decode_numbers_v3(c, l, n);
            return;
        }
#endif
        if (decimals) decode_decimals_ssse3(c, l, n);
        else decode_numbers_ssse3(c, l, n);
        return;
    }
#endif
    (void)simd;
    if (decimals) decode_decimals(c, l, n);
    else decode_numbers(c, l, n);
}
