/* comoment: pairwise-complete co-moments by BLAS blocks and pairwise merge.
 * Reference: a direct two-pass computation in long double over the rows
 * where both columns are present (the definition pandas' DataFrame.cov/corr
 * use with min_periods=1), written out below in O(n p^2).  The data are
 * pseudo-random, generated here from fixed seeds. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "acc/comoment.h"
#include "acc/wire.h"
#include "testutil.h"

/* ---- data ---------------------------------------------------------------- */

static uint64_t rng_state;
static uint64_t rng_next(void) /* splitmix64 */
{
    uint64_t z = (rng_state += 0x9e3779b97f4a7c15ull);
    z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ull;
    z = (z ^ (z >> 27)) * 0x94d049bb133111ebull;
    return z ^ (z >> 31);
}
static double rng_uniform(void) { return ((double)(rng_next() >> 11) + 0.5) / 9007199254740992.0; }
static double rng_normal(void)
{
    double u = rng_uniform(), v = rng_uniform();
    return sqrt(-2 * log(u)) * cos(6.283185307179586 * v);
}

typedef struct {
    size_t n, p;
    double *v;          /* n x p row-major values */
    unsigned char *ok;  /* n x p presence */
} table;

static void table_free(table *t)
{
    free(t->v);
    free(t->ok);
}

/* Columns: 0 complete, 1 = 2*col0 + noise complete, 2 offset 1e4 with 20%
 * missing, 3 = -col2 + noise with 20% missing, 4 complete, 5 constant 5.25,
 * 6.. with assorted offsets and scales, 20% or 3% missing.  all_incomplete
 * gives columns 0, 1, 4 and 5 20% missing too. */
static table make_table(size_t n, size_t p, uint64_t seed, int all_incomplete)
{
    rng_state = seed;
    table t = {n, p, malloc(n * p * sizeof(double)), malloc(n * p)};
    for (size_t r = 0; r < n; r++) {
        double z0 = rng_normal(), z2 = rng_normal();
        for (size_t j = 0; j < p; j++) {
            double v;
            switch (j) {
            case 0: v = 3.0 + z0; break;
            case 1: v = 2.0 * z0 + 0.5 * rng_normal() - 40.0; break;
            case 2: v = 1e4 + 7.0 * z2; break;
            case 3: v = -z2 + 0.3 * rng_normal(); break;
            case 5: v = 5.25; break;
            default: v = (double)(j * 100) + (double)j * rng_normal(); break;
            }
            /* 20% missing (dgemm path), or 3% (missing-row path) for odd j >= 7. */
            double rate = (j >= 7 && j % 2) ? 0.03 : 0.2;
            int miss = all_incomplete || j == 2 || j == 3 || j >= 6;
            t.v[r * p + j] = v;
            t.ok[r * p + j] = !(miss && rng_uniform() < rate);
        }
    }
    return t;
}

/* Feeds rows order[0..n) in blocks of `block` rows; column j is centred at
 * its block mean in the frame frame[j] (NULL: 0). */
static void feed_rows(comoment *c, const table *t, const size_t *order, size_t from, size_t to,
                      size_t block, const double *frame)
{
    size_t p = t->p;
    double *x = malloc(block * p * sizeof(double)), *m = malloc(block * p * sizeof(double));
    double *center = malloc(p * sizeof(double));
    unsigned char *complete = malloc(p);
    for (size_t r0 = from; r0 < to; r0 += block) {
        size_t rows = to - r0 < block ? to - r0 : block;
        for (size_t j = 0; j < p; j++) {
            double f = frame ? frame[j] : 0, s = 0;
            size_t k = 0;
            for (size_t r = 0; r < rows; r++) {
                size_t row = order ? order[r0 + r] : r0 + r;
                if (t->ok[row * p + j]) { s += t->v[row * p + j] - f; k++; }
            }
            center[j] = k ? s / (double)k : 0;
            complete[j] = k == rows;
            for (size_t r = 0; r < rows; r++) {
                size_t row = order ? order[r0 + r] : r0 + r;
                int ok = t->ok[row * p + j];
                x[j * rows + r] = ok ? t->v[row * p + j] - f - center[j] : 0;
                m[j * rows + r] = ok;
            }
        }
        cr_assert_eq(comoment_add_block(c, x, m, center, complete, rows, NULL), 0);
    }
    free(x);
    free(m);
    free(center);
    free(complete);
}

static comoment *state_of(const table *t, size_t block, const size_t *order)
{
    comoment *c = comoment_create(t->p, block);
    cr_assert_not_null(c);
    feed_rows(c, t, order, 0, t->n, block, NULL);
    return c;
}

/* ---- reference: two passes in long double per pair ----------------------- */

typedef struct {
    double n, mean_i, mean_j, m2_i, m2_j, c;
} pair_ref;

static pair_ref reference(const table *t, size_t i, size_t j, const double *frame)
{
    size_t p = t->p;
    long double n = 0, si = 0, sj = 0;
    double fi = frame ? frame[i] : 0, fj = frame ? frame[j] : 0;
    for (size_t r = 0; r < t->n; r++)
        if (t->ok[r * p + i] && t->ok[r * p + j]) {
            n += 1;
            si += (long double)t->v[r * p + i] - fi;
            sj += (long double)t->v[r * p + j] - fj;
        }
    pair_ref out = {(double)n, NAN, NAN, 0, 0, 0};
    if (n == 0) return out;
    long double mi = si / n, mj = sj / n, qi = 0, qj = 0, cij = 0;
    for (size_t r = 0; r < t->n; r++)
        if (t->ok[r * p + i] && t->ok[r * p + j]) {
            long double di = (long double)t->v[r * p + i] - fi - mi;
            long double dj = (long double)t->v[r * p + j] - fj - mj;
            qi += di * di;
            qj += dj * dj;
            cij += di * dj;
        }
    out.mean_i = (double)mi;
    out.mean_j = (double)mj;
    out.m2_i = (double)qi;
    out.m2_j = (double)qj;
    out.c = (double)cij;
    return out;
}

#define TOL 1e-12

/* Checks every pair of c against the reference (frame: c's frame). */
static void check_against_reference(const comoment *c, const table *t, const double *frame)
{
    for (size_t i = 0; i < t->p; i++)
        for (size_t j = 0; j < t->p; j++) {
            pair_ref e = reference(t, i, j, frame);
            cr_assert_eq(comoment_n(c, i, j), e.n, "n(%zu,%zu)", i, j);
            if (e.n == 0) {
                cr_assert(isnan(comoment_mean(c, i, j)));
                cr_assert(isnan(comoment_correlation(c, i, j)));
                continue;
            }
            double sd_i = sqrt(e.m2_i / e.n), sd_j = sqrt(e.m2_j / e.n);
            double mean_scale = fabs(e.mean_i) + sd_i + 1e-300;
            cr_assert_leq(fabs(comoment_mean(c, i, j) - e.mean_i), TOL * mean_scale,
                          "mean(%zu|%zu) %.17g vs %.17g", i, j, comoment_mean(c, i, j), e.mean_i);
            if (e.n < 2) continue;
            double var = comoment_variance(c, i, j), var_ref = e.m2_i / (e.n - 1);
            cr_assert_leq(fabs(var - var_ref), TOL * var_ref + 1e-300, "var(%zu|%zu)", i, j);
            /* Covariance relative to the product of the standard deviations. */
            double cov = comoment_covariance(c, i, j), cov_ref = e.c / (e.n - 1);
            double cov_scale = sd_i * sd_j * e.n / (e.n - 1);
            cr_assert_leq(fabs(cov - cov_ref), TOL * cov_scale + 1e-300, "cov(%zu,%zu) %.17g vs %.17g",
                          i, j, cov, cov_ref);
            double r = comoment_correlation(c, i, j);
            if (e.m2_i == 0 || e.m2_j == 0) {
                cr_assert(isnan(r), "r(%zu,%zu) of a constant column", i, j);
            } else {
                double r_ref = e.c / sqrt(e.m2_i * e.m2_j);
                cr_assert_leq(fabs(r - r_ref), TOL, "r(%zu,%zu) %.17g vs %.17g", i, j, r, r_ref);
            }
        }
}

/* Largest difference between two states over all accessors, scaled as in
 * check_against_reference. */
static void check_same(const comoment *a, const comoment *b, double tol)
{
    size_t p = comoment_columns(a);
    cr_assert_eq(comoment_columns(b), p);
    for (size_t i = 0; i < p; i++)
        for (size_t j = 0; j < p; j++) {
            cr_assert_eq(comoment_n(a, i, j), comoment_n(b, i, j), "n(%zu,%zu)", i, j);
            if (comoment_n(a, i, j) < 2) continue;
            double va = comoment_variance(a, i, j), vb = comoment_variance(b, i, j);
            double wa = comoment_variance(a, j, i);
            double ma = comoment_mean(a, i, j), mb = comoment_mean(b, i, j);
            cr_assert_leq(fabs(ma - mb), tol * (fabs(ma) + sqrt(va)), "mean(%zu|%zu)", i, j);
            cr_assert_leq(fabs(va - vb), tol * va + 1e-300, "var(%zu|%zu)", i, j);
            double ca = comoment_covariance(a, i, j), cb = comoment_covariance(b, i, j);
            cr_assert_leq(fabs(ca - cb), tol * sqrt(va * wa) + 1e-300, "cov(%zu,%zu)", i, j);
            double ra = comoment_correlation(a, i, j), rb = comoment_correlation(b, i, j);
            if (isnan(ra)) cr_assert(isnan(rb));
            else cr_assert_leq(fabs(ra - rb), tol, "r(%zu,%zu)", i, j);
        }
}

/* ---- behaviours ----------------------------------------------------------- */

Test(comoment, matches_two_pass_reference_with_missing_values)
{
    table t = make_table(2000, 37, 11, 0);
    comoment *c = state_of(&t, 256, NULL);
    check_against_reference(c, &t, NULL);
    comoment_free(c);
    table_free(&t);
}

Test(comoment, matches_reference_when_every_column_has_missing_cells)
{
    table t = make_table(1500, 9, 12, 1);
    comoment *c = state_of(&t, 256, NULL);
    check_against_reference(c, &t, NULL);
    comoment_free(c);
    table_free(&t);
}

Test(comoment, matches_reference_when_no_cell_is_missing)
{
    table t = make_table(1000, 10, 13, 0);
    memset(t.ok, 1, t.n * t.p);
    comoment *c = state_of(&t, 100, NULL);
    check_against_reference(c, &t, NULL);
    comoment_free(c);
    table_free(&t);
}

Test(comoment, block_size_and_row_order_do_not_matter)
{
    table t = make_table(1800, 11, 21, 0);
    size_t *rev = malloc(t.n * sizeof(size_t)), *shuf = malloc(t.n * sizeof(size_t));
    for (size_t r = 0; r < t.n; r++) rev[r] = shuf[r] = t.n - 1 - r;
    rng_state = 99;
    for (size_t r = t.n - 1; r > 0; r--) {
        size_t k = (size_t)(rng_next() % (r + 1)), tmp = shuf[r];
        shuf[r] = shuf[k];
        shuf[k] = tmp;
    }
    comoment *b256 = state_of(&t, 256, NULL);
    comoment *b1 = state_of(&t, 1, NULL);
    comoment *b7 = state_of(&t, 7, rev);
    comoment *b256s = state_of(&t, 256, shuf);
    check_same(b256, b1, TOL);
    check_same(b256, b7, TOL);
    check_same(b256, b256s, TOL);
    check_against_reference(b1, &t, NULL);
    comoment_free(b256);
    comoment_free(b1);
    comoment_free(b7);
    comoment_free(b256s);
    free(rev);
    free(shuf);
    table_free(&t);
}

Test(comoment, merge_with_shifted_frames_equals_single_state)
{
    table t = make_table(1700, 10, 31, 0);
    size_t p = t.p;
    double frame_a[10], frame_b[10], shift[10];
    for (size_t j = 0; j < p; j++) {
        frame_a[j] = 0.5 * (double)j;          /* into's frame */
        frame_b[j] = t.v[900 * p + j] + 1.0;   /* from's frame: a value of its part */
        shift[j] = frame_b[j] - frame_a[j];
    }
    comoment *a = comoment_create(p, 256), *b = comoment_create(p, 64);
    feed_rows(a, &t, NULL, 0, 900, 256, frame_a);
    feed_rows(b, &t, NULL, 900, t.n, 64, frame_b);
    cr_assert_eq(comoment_merge(a, b, shift), 0);
    check_against_reference(a, &t, frame_a);

    comoment *whole = comoment_create(p, 256);
    feed_rows(whole, &t, NULL, 0, t.n, 256, frame_a);
    check_same(a, whole, TOL);

    /* Merging into an empty state copies; merging an empty state is a no-op. */
    comoment *empty = comoment_create(p, 0);
    cr_assert_eq(comoment_merge(empty, whole, NULL), 0);
    check_same(empty, whole, 0);
    comoment *none = comoment_create(p, 0);
    cr_assert_eq(comoment_merge(whole, none, shift), 0);
    check_same(empty, whole, 0);

    comoment *other = comoment_create(p + 1, 0);
    cr_assert_eq(comoment_merge(a, other, NULL), -1);
    comoment_free(a);
    comoment_free(b);
    comoment_free(whole);
    comoment_free(empty);
    comoment_free(none);
    comoment_free(other);
    table_free(&t);
}

Test(comoment, outputs_are_symmetric)
{
    table t = make_table(700, 12, 41, 0);
    comoment *c = state_of(&t, 128, NULL);
    size_t p = t.p;
    double *cov = malloc(p * p * sizeof(double)), *cor = malloc(p * p * sizeof(double));
    comoment_covariance_matrix(c, cov);
    comoment_correlation_matrix(c, cor);
    for (size_t i = 0; i < p; i++) {
        if (comoment_variance(c, i, i) > 0)
            cr_assert_float_eq(comoment_correlation(c, i, i), 1.0, 1e-15);
        cr_assert_eq(comoment_covariance(c, i, i), comoment_variance(c, i, i));
        for (size_t j = 0; j < p; j++) {
            cr_assert_eq(comoment_n(c, i, j), comoment_n(c, j, i));
            cr_assert(comoment_n(c, i, j) <= comoment_n(c, i, i));
            cr_assert_eq(comoment_covariance(c, i, j), comoment_covariance(c, j, i));
            double r = comoment_correlation(c, i, j);
            if (isnan(r)) cr_assert(isnan(comoment_correlation(c, j, i)));
            else cr_assert_eq(r, comoment_correlation(c, j, i));
            cr_assert_eq(cov[i * p + j], comoment_covariance(c, i, j));
            cr_assert_eq(cov[i * p + j], cov[j * p + i]);
            if (!isnan(r)) cr_assert_eq(cor[i * p + j], r);
        }
    }
    free(cov);
    free(cor);
    comoment_free(c);
    table_free(&t);
}

Test(comoment, column_missing_in_a_whole_block)
{
    table t = make_table(1000, 8, 51, 0);
    size_t p = t.p;
    for (size_t r = 0; r < 300; r++) t.ok[r * p + 3] = 0; /* the first block and part of the next */
    for (size_t r = 0; r < t.n; r++) t.ok[r * p + 7] = 0; /* never present */
    /* Columns 2 and 6 never present together. */
    for (size_t r = 0; r < t.n; r++)
        if (t.ok[r * p + 2]) t.ok[r * p + 6] = 0;
    comoment *c = state_of(&t, 256, NULL);
    check_against_reference(c, &t, NULL);
    cr_assert_eq(comoment_n(c, 7, 7), 0);
    cr_assert_eq(comoment_n(c, 2, 6), 0);
    cr_assert(isnan(comoment_covariance(c, 2, 6)));
    cr_assert(isnan(comoment_variance(c, 7, 0)));
    cr_assert(isnan(comoment_mean(c, 7, 7)));
    cr_assert_eq(comoment_n(c, 3, 3), comoment_n(c, 3, 3)); /* defined */
    comoment_free(c);
    table_free(&t);
}

Test(comoment, constant_column_gives_nan_correlation)
{
    table t = make_table(600, 7, 61, 0);
    comoment *c = state_of(&t, 256, NULL); /* column 5 is 5.25 throughout */
    cr_assert_eq(comoment_mean(c, 5, 5), 5.25);
    cr_assert_eq(comoment_variance(c, 5, 5), 0.0);
    for (size_t j = 0; j < t.p; j++) {
        cr_assert(isnan(comoment_correlation(c, 5, j)), "r(5,%zu)", j);
        cr_assert(isnan(comoment_correlation(c, j, 5)), "r(%zu,5)", j);
        cr_assert_eq(comoment_covariance(c, 5, j), 0.0);
    }
    comoment_free(c);
    table_free(&t);
}

Test(comoment, single_row_blocks_and_tiny_counts)
{
    /* Two rows: n = 2 gives defined covariances; one row gives NaN. */
    comoment *c = comoment_create(2, 1);
    double x[2] = {0, 0}, m[2] = {1, 1}, center[2] = {1.0, 10.0};
    unsigned char complete[2] = {1, 1};
    cr_assert_eq(comoment_add_block(c, x, m, center, complete, 1, NULL), 0);
    cr_assert(isnan(comoment_covariance(c, 0, 1)));
    cr_assert_eq(comoment_mean(c, 1, 0), 10.0);
    center[0] = 3.0;
    center[1] = 14.0;
    cr_assert_eq(comoment_add_block(c, x, m, center, complete, 1, NULL), 0);
    /* (1,10), (3,14): cov = (-1)(-2) + (1)(2) = 4 over n - 1 = 1. */
    cr_assert_eq(comoment_covariance(c, 0, 1), 4.0);
    cr_assert_eq(comoment_variance(c, 0, 0), 2.0);
    cr_assert_eq(comoment_correlation(c, 0, 1), 1.0);
    cr_assert_eq(comoment_add_block(c, x, m, center, complete, 0, NULL), 0); /* no-op */
    double x2[4] = {0}, m2[4] = {1, 1, 1, 1};
    cr_assert_eq(comoment_add_block(c, x2, m2, center, complete, 2, NULL), -1); /* > max_rows */
    comoment_reset(c);
    cr_assert_eq(comoment_n(c, 0, 1), 0);
    comoment_free(c);
}

Test(comoment, create_refuses_impossible_sizes)
{
    cr_assert_null(comoment_create(100001, 16));
    cr_assert_eq(comoment_bytes(100001, 16), UINT64_MAX);
    comoment *c = comoment_create(0, 16);
    cr_assert_not_null(c);
    cr_assert_eq(comoment_add_block(c, NULL, NULL, NULL, NULL, 5, NULL), 0);
    comoment_free(c);
    /* Merge-only states carry no block scratch. */
    cr_assert_lt(comoment_bytes(500, 0), comoment_bytes(500, 256));
    cr_assert_geq(comoment_bytes(500, 256), (uint64_t)8 * (3 * 500 * 501 + 4 * 500 * 500));
}

/* ---- serialization ---------------------------------------------------------- */

static void serialize(const comoment *c, wire_writer *w)
{
    wire_writer_init(w);
    comoment_write(c, w);
    cr_assert(!w->failed);
}

Test(comoment, serialization_round_trip_is_byte_identical)
{
    table t = make_table(900, 9, 71, 0);
    comoment *c = state_of(&t, 256, NULL);
    wire_writer w1, w2;
    serialize(c, &w1);
    cr_assert_eq(w1.len, 8 + 4 * 8 * t.p * t.p);
    wire_reader r;
    wire_reader_init(&r, w1.data, w1.len);
    comoment *d = comoment_read(&r, 32, 1);
    cr_assert_not_null(d);
    cr_assert(!r.failed);
    cr_assert_eq(r.pos, w1.len);
    serialize(d, &w2);
    cr_assert_eq(w1.len, w2.len);
    cr_assert(memcmp(w1.data, w2.data, w1.len) == 0);
    check_same(c, d, 0);
    /* The read state keeps accumulating. */
    feed_rows(d, &t, NULL, 0, 32, 32, NULL);
    cr_assert_eq(comoment_n(d, 0, 0), t.n + 32);
    wire_writer_free(&w1);
    wire_writer_free(&w2);
    comoment_free(c);
    comoment_free(d);
    table_free(&t);
}

/* Offsets in the serialized form of a p-column state. */
static size_t off_n(size_t p, size_t i, size_t j) { return 8 + 8 * (i * p + j); }
static size_t off_c(size_t p, size_t i, size_t j) { return 8 + 24 * p * p + 8 * (i * p + j); }

static void put_u64_at(uint8_t *b, size_t off, uint64_t v)
{
    for (int k = 0; k < 8; k++) b[off + k] = (uint8_t)(v >> (8 * k));
}
static void put_f64_at(uint8_t *b, size_t off, double v)
{
    uint64_t u;
    memcpy(&u, &v, 8);
    put_u64_at(b, off, u);
}

static int rejects(const uint8_t *good, size_t len, void (*edit)(uint8_t *, size_t *, size_t),
                   size_t p)
{
    uint8_t *b = malloc(len + 8);
    memcpy(b, good, len);
    size_t n = len;
    edit(b, &n, p);
    wire_reader r;
    wire_reader_init(&r, b, n);
    comoment *c = comoment_read(&r, 0, 1);
    int ok = c == NULL && r.failed;
    comoment_free(c);
    free(b);
    return ok;
}

static void edit_truncate(uint8_t *b, size_t *n, size_t p) { (void)b; (void)p; *n -= 1; }
static void edit_huge_p(uint8_t *b, size_t *n, size_t p) { (void)n; (void)p; put_u64_at(b, 0, 100001); }
static void edit_p_beyond_bytes(uint8_t *b, size_t *n, size_t p) { (void)n; put_u64_at(b, 0, p + 1); }
static void edit_asym_n(uint8_t *b, size_t *n, size_t p) { (void)n; put_u64_at(b, off_n(p, 2, 1), 3); }
static void edit_big_count(uint8_t *b, size_t *n, size_t p)
{
    (void)n;
    put_u64_at(b, off_n(p, 0, 0), (1ull << 53) + 2);
}
static void edit_pair_above_column(uint8_t *b, size_t *n, size_t p)
{
    (void)n;
    put_u64_at(b, off_n(p, 0, 1), 1000000);
    put_u64_at(b, off_n(p, 1, 0), 1000000);
}
static void edit_asym_c(uint8_t *b, size_t *n, size_t p) { (void)n; put_f64_at(b, off_c(p, 1, 2), 0.125); }

Test(comoment, malformed_input_is_rejected)
{
    table t = make_table(400, 4, 81, 0);
    for (size_t r = 0; r < t.n; r++) t.ok[r * t.p + 3] = 0;
    comoment *c = state_of(&t, 64, NULL);
    wire_writer w;
    serialize(c, &w);
    size_t p = t.p;
    cr_assert(rejects(w.data, w.len, edit_truncate, p), "truncated");
    cr_assert(rejects(w.data, 5, edit_truncate, p), "truncated inside p");
    cr_assert(rejects(w.data, w.len, edit_huge_p, p), "p above 100000");
    cr_assert(rejects(w.data, w.len, edit_p_beyond_bytes, p), "p beyond the bytes");
    cr_assert(rejects(w.data, w.len, edit_asym_n, p), "N not symmetric");
    cr_assert(rejects(w.data, w.len, edit_big_count, p), "count above 2^53");
    cr_assert(rejects(w.data, w.len, edit_pair_above_column, p), "pair count above column count");
    cr_assert(rejects(w.data, w.len, edit_asym_c, p), "C not symmetric");
    /* Moment values are not checked: extreme data can round M2 slightly below
     * zero or overflow it to infinity, and such a state must read back (the
     * summary's checksums guard the bytes). */
    /* The unedited bytes are accepted. */
    wire_reader r;
    wire_reader_init(&r, w.data, w.len);
    comoment *d = comoment_read(&r, 0, 1);
    cr_assert_not_null(d);
    comoment_free(d);
    wire_writer_free(&w);
    comoment_free(c);
    table_free(&t);
}

/* ---- cost ------------------------------------------------------------------ */

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

/* Prints ms per 256-row block of 500 columns, and the bytes of 8-byte cells
 * this corresponds to; no assertion (timings depend on the machine). */
static void time_blocks(size_t incomplete, double missing, const char *label)
{
    const size_t p = 500, rows = 256, reps = 40;
    comoment *c = comoment_create(p, rows);
    cr_assert_not_null(c);
    double *x = malloc(rows * p * sizeof(double)), *m = malloc(rows * p * sizeof(double));
    double *center = calloc(p, sizeof(double));
    unsigned char *complete = malloc(p);
    rng_state = 5;
    for (size_t j = 0; j < p; j++) {
        complete[j] = 1;
        for (size_t r = 0; r < rows; r++) {
            int ok = j >= incomplete || rng_uniform() >= missing;
            x[j * rows + r] = ok ? rng_normal() : 0;
            m[j * rows + r] = ok;
            if (!ok) complete[j] = 0;
        }
    }
    comoment_add_block(c, x, m, center, complete, rows, NULL); /* warm-up */
    double t0 = now_s();
    for (size_t k = 0; k < reps; k++) comoment_add_block(c, x, m, center, complete, rows, NULL);
    double ms = (now_s() - t0) * 1e3 / (double)reps;
    double mb_s = (double)(rows * p * 8) / 1e6 / (ms / 1e3);
    cr_log_info("comoment p=500 rows=256 %s: %.3f ms/block, %.0f MB/s of 8-byte cells", label, ms,
                mb_s);
    fprintf(stderr, "comoment p=500 rows=256 %s: %.3f ms/block, %.0f MB/s of 8-byte cells\n", label,
            ms, mb_s);
    free(x);
    free(m);
    free(center);
    free(complete);
    comoment_free(c);
}

Test(comoment, block_cost_is_reported)
{
    time_blocks(0, 0, "no missing");
    time_blocks(5, 0.2, "5 columns 20% missing");
    time_blocks(500, 0.01, "all columns 1% missing");
    time_blocks(500, 0.2, "all columns 20% missing");
}
