/* Tests for src/acc/buckets: key mapping, bounds, error bound, collapse,
 * merge, quantiles and serialization.
 *
 * Random data comes from a fixed-seed splitmix64 generator (Box-Muller for
 * normal values); the exact quantiles they are checked against are computed
 * here by sorting, with the inverted-CDF rank rule.  The one outside
 * reference is numpy 1.24.2 (Debian python3-numpy), np.quantile(...,
 * method='inverted_cdf'), named beside its check.
 */
#include <criterion/criterion.h>

#include <float.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "acc/buckets.h"
#include "acc/radix.h"
#include "acc/buckets_store.h" /* the dense window's counts (pending) */
#include "acc/wire.h"
#include "testutil.h"

/* ---- helpers ------------------------------------------------------------ */

static uint64_t rng_next(uint64_t *s)
{
    uint64_t z = (*s += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    return z ^ (z >> 31);
}

static double rng_uniform(uint64_t *s) /* in (0, 1) */
{
    return ((double)(rng_next(s) >> 11) + 0.5) / 9007199254740992.0;
}

static double rng_normal(uint64_t *s)
{
    double u = rng_uniform(s), v = rng_uniform(s);
    return sqrt(-2.0 * log(u)) * cos(6.283185307179586 * v);
}

static double from_bits(uint64_t u)
{
    double x;
    memcpy(&x, &u, sizeof x);
    return x;
}

/* A finite double with uniformly random bits (NaN and inf redrawn). */
static double rng_any_finite(uint64_t *s)
{
    for (;;) {
        double x = from_bits(rng_next(s));
        if (isfinite(x)) return x;
    }
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static int cmp_entry(const void *pa, const void *pb)
{
    const buckets_entry *a = pa, *b = pb;
    if (a->key != b->key) return a->key < b->key ? -1 : 1;
    return (a->cell > b->cell) - (a->cell < b->cell);
}

/* Reference store contents: (key at level, cell) -> summed count, sorted. */
typedef struct {
    buckets_entry *e;
    size_t n;
} reference;

static reference reference_build(const double *x, const uint32_t *cell, const uint64_t *count,
                                 size_t n, int level)
{
    reference r;
    r.e = malloc((n ? n : 1) * sizeof *r.e);
    cr_assert_not_null(r.e);
    for (size_t i = 0; i < n; i++) {
        r.e[i].key = buckets_key_at(buckets_key(x[i]), level);
        r.e[i].cell = cell ? cell[i] : 0;
        r.e[i].count = count ? count[i] : 1;
    }
    qsort(r.e, n, sizeof *r.e, cmp_entry);
    size_t k = 0;
    for (size_t i = 0; i < n; i++) {
        if (k && r.e[k - 1].key == r.e[i].key && r.e[k - 1].cell == r.e[i].cell)
            r.e[k - 1].count += r.e[i].count;
        else r.e[k++] = r.e[i];
    }
    r.n = k;
    return r;
}

static size_t reference_keys(const reference *r)
{
    size_t k = 0;
    for (size_t i = 0; i < r->n; i++)
        if (i == 0 || r->e[i].key != r->e[i - 1].key) k++;
    return k;
}

/* Least level at which the values occupy at most `budget` keys. */
static int least_fitting_level(const double *x, size_t n, uint32_t budget, int from_level)
{
    for (int level = from_level; level <= BUCKETS_MAX_LEVEL; level++) {
        reference r = reference_build(x, NULL, NULL, n, level);
        size_t k = reference_keys(&r);
        free(r.e);
        if (k <= budget) return level;
    }
    return -1;
}

static void assert_store_equals(const buckets *b, const reference *r)
{
    cr_assert_eq(buckets_entries(b), r->n, "entries %zu, expected %zu", buckets_entries(b), r->n);
    uint64_t total = 0;
    for (size_t i = 0; i < r->n; i++) {
        buckets_entry e = buckets_entry_at(b, i);
        cr_assert(e.key == r->e[i].key && e.cell == r->e[i].cell && e.count == r->e[i].count,
                  "entry %zu: (%lld, %u, %llu) expected (%lld, %u, %llu)", i, (long long)e.key,
                  e.cell, (unsigned long long)e.count, (long long)r->e[i].key, r->e[i].cell,
                  (unsigned long long)r->e[i].count);
        total += e.count;
    }
    cr_assert_eq(buckets_total(b), total);
    cr_assert_eq(buckets_keys(b), reference_keys(r));
}

static buckets *unsealed_store_of(const double *x, const uint32_t *cell, const uint64_t *count,
                                  size_t n, uint32_t budget)
{
    buckets *b = buckets_create(budget);
    cr_assert_not_null(b);
    for (size_t i = 0; i < n; i++)
        cr_assert_eq(buckets_add(b, x[i], cell ? cell[i] : 0, count ? count[i] : 1), 0);
    return b;
}

/* A store as a scan leaves it: sealed, so that entry walks read the index
 * (unsealed, each buckets_entry_at sorts a temporary index of its own). */
static buckets *store_of(const double *x, const uint32_t *cell, const uint64_t *count, size_t n,
                         uint32_t budget)
{
    buckets *b = unsealed_store_of(x, cell, count, n, budget);
    buckets_seal(b);
    return b;
}

static wire_writer serialized(const buckets *b)
{
    wire_writer w;
    wire_writer_init(&w);
    buckets_write(b, &w);
    cr_assert(!w.failed);
    return w;
}

static int same_bytes(const buckets *a, const buckets *b)
{
    wire_writer wa = serialized(a), wb = serialized(b);
    int same = wa.len == wb.len && memcmp(wa.data, wb.data, wa.len) == 0;
    wire_writer_free(&wa);
    wire_writer_free(&wb);
    return same;
}

static double *normal_sample(size_t n, uint64_t seed, double mean, double sd)
{
    double *x = malloc(n * sizeof *x);
    cr_assert_not_null(x);
    for (size_t i = 0; i < n; i++) x[i] = mean + sd * rng_normal(&seed);
    return x;
}

/* Values of every kind: random bit patterns, normals, subnormals, zeros,
 * extremes and octave edges. */
static size_t mixed_values(double *x, size_t n, uint64_t seed)
{
    static const double fixed[] = {0.0, -0.0, DBL_MIN, -DBL_MIN, DBL_MAX, -DBL_MAX, 1.0, -1.0,
                                   2.0, 0.5, 4.9406564584124654e-324, -4.9406564584124654e-324,
                                   2.2250738585072009e-308, 1e300, -1e-300, 1.0078125};
    size_t k = 0;
    for (size_t i = 0; i < sizeof fixed / sizeof fixed[0] && k < n; i++) x[k++] = fixed[i];
    while (k < n) {
        switch (rng_next(&seed) % 4) {
        case 0: x[k++] = rng_any_finite(&seed); break;
        case 1: x[k++] = rng_normal(&seed); break;
        case 2: x[k++] = from_bits(rng_next(&seed) >> 12) * (rng_next(&seed) & 1 ? 1 : -1); break;
        default: x[k++] = ldexp(rng_normal(&seed), (int)(rng_next(&seed) % 200) - 100); break;
        }
    }
    return k;
}

/* ---- mapping ------------------------------------------------------------ */

Test(buckets, key_is_monotone_over_sorted_mixed_doubles)
{
    enum { N = 200000 };
    double *x = malloc(N * sizeof *x);
    mixed_values(x, N, 11);
    qsort(x, N, sizeof *x, cmp_double);
    for (int level = 0; level <= BUCKETS_MAX_LEVEL; level++) {
        int64_t prev = buckets_key_at(buckets_key(x[0]), level);
        for (size_t i = 1; i < N; i++) {
            int64_t k = buckets_key_at(buckets_key(x[i]), level);
            cr_assert(k >= prev, "level %d: key(%a) = %lld < key(%a) = %lld", level, x[i],
                      (long long)k, x[i - 1], (long long)prev);
            prev = k;
        }
    }
    free(x);
}

Test(buckets, key_mirrors_sign_and_zero_is_zero)
{
    cr_assert_eq(buckets_key(0.0), 0);
    cr_assert_eq(buckets_key(-0.0), 0);
    cr_assert_eq(buckets_key(4.9406564584124654e-324), 1);
    /* 1.0 has biased exponent 1023 and mantissa 0: ((1023 << 7) | 0) + 1 */
    cr_assert_eq(buckets_key(1.0), (1023 << 7) + 1);
    cr_assert_eq(buckets_key(1.0078125), (1023 << 7) + 2); /* 1 + 2^-7 */
    uint64_t s = 5;
    for (int i = 0; i < 10000; i++) {
        double v = rng_any_finite(&s);
        cr_assert_eq(buckets_key(-v), -buckets_key(v));
    }
}

Test(buckets, collapse_one_level_at_a_time_equals_key_at_final_level)
{
    enum { N = 20000 };
    double x[N];
    mixed_values(x, N, 12);
    for (size_t i = 0; i < N; i++) {
        int64_t k0 = buckets_key(x[i]);
        int64_t k = k0;
        for (int level = 1; level <= BUCKETS_MAX_LEVEL; level++) {
            int64_t m = k < 0 ? -k : k;
            if (m) m = ((m - 1) >> 1) + 1;
            k = k < 0 ? -m : m;
            cr_assert_eq(k, buckets_key_at(k0, level));
        }
    }
}

Test(buckets, max_level_leaves_only_sign_and_zero)
{
    cr_assert_eq(buckets_key_at(buckets_key(DBL_MAX), BUCKETS_MAX_LEVEL), 1);
    cr_assert_eq(buckets_key_at(buckets_key(4.9406564584124654e-324), BUCKETS_MAX_LEVEL), 1);
    cr_assert_eq(buckets_key_at(buckets_key(-DBL_MAX), BUCKETS_MAX_LEVEL), -1);
    cr_assert_eq(buckets_key_at(buckets_key(-0.0), BUCKETS_MAX_LEVEL), 0);
}

Test(buckets, every_value_lies_within_its_bounds_and_bounds_are_tight)
{
    enum { N = 50000 };
    double *x = malloc(N * sizeof *x);
    mixed_values(x, N, 13);
    for (int level = 0; level <= BUCKETS_MAX_LEVEL; level++) {
        for (size_t i = 0; i < N; i++) {
            int64_t k = buckets_key_at(buckets_key(x[i]), level);
            double lo, hi;
            buckets_bounds(k, level, &lo, &hi);
            cr_assert(lo <= x[i] && x[i] <= hi, "level %d: %a outside [%a, %a]", level, x[i], lo,
                      hi);
            /* lo and hi are the extreme doubles of the key */
            cr_assert_eq(buckets_key_at(buckets_key(lo), level), k);
            cr_assert_eq(buckets_key_at(buckets_key(hi), level), k);
            if (k != 0) {
                double below = nextafter(lo, -INFINITY), above = nextafter(hi, INFINITY);
                if (isfinite(below)) cr_assert_neq(buckets_key_at(buckets_key(below), level), k);
                if (isfinite(above)) cr_assert_neq(buckets_key_at(buckets_key(above), level), k);
            }
        }
    }
    free(x);
}

Test(buckets, zero_bucket_bounds_and_point_are_zero)
{
    double lo = 1, hi = 1;
    buckets_bounds(0, 0, &lo, &hi);
    cr_assert(lo == 0.0 && hi == 0.0);
    cr_assert(buckets_point(0, 5) == 0.0);
}

/* ---- error bound -------------------------------------------------------- */

Test(buckets, relative_error_has_the_closed_form_per_level)
{
    /* w / (2 + w), w = 2^(L-7), up to level 7; (r - 1) / (r + 1), r = 2^(2^(L-7)) */
    cr_assert(fabs(buckets_relative_error(0) - 1.0 / 257.0) < 1e-14);
    cr_assert(fabs(buckets_relative_error(1) - 1.0 / 129.0) < 1e-14);
    cr_assert(fabs(buckets_relative_error(6) - 1.0 / 5.0) < 1e-14);
    cr_assert(fabs(buckets_relative_error(7) - 1.0 / 3.0) < 1e-14);
    cr_assert(fabs(buckets_relative_error(8) - 3.0 / 5.0) < 1e-14);
    cr_assert(fabs(buckets_relative_error(9) - 15.0 / 17.0) < 1e-14);
    cr_assert(buckets_relative_error(BUCKETS_MAX_LEVEL) == 1.0);
    for (int level = 1; level <= BUCKETS_MAX_LEVEL; level++)
        cr_assert(buckets_relative_error(level) >= buckets_relative_error(level - 1));
}

/* The smallest |x| the level's bound covers: 2^(max(1, 2^(L-7)) - 1023). */
static double normal_floor(int level)
{
    int k = level <= 7 ? 1 : 1 << (level - 7);
    return ldexp(1.0, k - 1023);
}

Test(buckets, point_is_within_level_relative_error_of_every_value)
{
    enum { N = 50000 };
    double *x = malloc(N * sizeof *x);
    mixed_values(x, N, 14);
    for (int level = 0; level <= BUCKETS_MAX_LEVEL; level++) {
        double rel = buckets_relative_error(level);
        for (size_t i = 0; i < N; i++) {
            double v = x[i];
            if (v == 0.0 || fabs(v) < normal_floor(level)) continue;
            int64_t k = buckets_key_at(buckets_key(v), level);
            double m = buckets_point(k, level);
            cr_assert(fabs(m - v) <= rel * fabs(v), "level %d: point %a for %a, bound %g", level,
                      m, v, rel);
            /* the bounds themselves are the worst cases */
            double lo, hi;
            buckets_bounds(k, level, &lo, &hi);
            cr_assert(fabs(m - lo) <= rel * fabs(lo));
            cr_assert(fabs(m - hi) <= rel * fabs(hi));
        }
    }
    free(x);
}

Test(buckets, level_zero_bound_is_attained_at_the_start_of_an_octave)
{
    /* bucket [1, 1 + 2^-7): the error at x = 1 is close to 1/257 */
    double m = buckets_point(buckets_key(1.0), 0);
    cr_assert(fabs((m - 1.0) - 1.0 / 257.0) < 1e-9, "err at 1.0: %.12g", m - 1.0);
}

Test(buckets, subnormal_buckets_keep_their_own_ratio)
{
    uint64_t s = 15;
    for (int i = 0; i < 20000; i++) {
        double v = from_bits((rng_next(&s) >> 12) | 1); /* subnormal, nonzero */
        for (int level = 0; level <= BUCKETS_MAX_LEVEL; level += 3) {
            int64_t k = buckets_key_at(buckets_key(v), level);
            double lo, hi;
            buckets_bounds(k, level, &lo, &hi);
            double m = buckets_point(k, level);
            double ratio = (hi - lo) / (hi + lo);
            cr_assert(fabs(m - v) <= ratio * v * (1 + 1e-12) + 1e-323, "level %d v %a", level, v);
        }
    }
}

/* ---- store and collapse ------------------------------------------------- */

Test(buckets, collapse_preserves_cell_totals_and_respects_budget)
{
    enum { N = 100000, CELLS = 3 };
    const uint32_t budget = 64;
    double *x = normal_sample(N, 21, 0.0, 1.0);
    uint32_t *cell = malloc(N * sizeof *cell);
    uint64_t *count = malloc(N * sizeof *count);
    uint64_t want[CELLS] = {0};
    uint64_t s = 22;
    for (size_t i = 0; i < N; i++) {
        cell[i] = (uint32_t)(rng_next(&s) % CELLS);
        count[i] = 1 + rng_next(&s) % 5;
        want[cell[i]] += count[i];
    }
    buckets *b = buckets_create(budget);
    for (size_t i = 0; i < N; i++) {
        cr_assert_eq(buckets_add(b, x[i], cell[i], count[i]), 0);
        if (i % 997 == 0) cr_assert_leq(buckets_keys(b), budget);
    }
    cr_assert_leq(buckets_keys(b), budget);
    buckets_seal(b);
    uint64_t got[CELLS] = {0};
    for (size_t i = 0; i < buckets_entries(b); i++) {
        buckets_entry e = buckets_entry_at(b, i);
        cr_assert_lt(e.cell, CELLS);
        got[e.cell] += e.count;
    }
    for (int c = 0; c < CELLS; c++) cr_assert_eq(got[c], want[c], "cell %d", c);
    /* order independence: the level is the least at which the data fit */
    int level = least_fitting_level(x, N, budget, 0);
    cr_assert_gt(level, 0);
    cr_assert_eq(buckets_level(b), level);
    reference r = reference_build(x, cell, count, N, level);
    assert_store_equals(b, &r);
    free(r.e);
    buckets_free(b);
    free(x);
    free(cell);
    free(count);
}

Test(buckets, store_does_not_depend_on_insertion_order)
{
    enum { N = 30000 };
    double *x = normal_sample(N, 23, 3.0, 10.0);
    buckets *a = store_of(x, NULL, NULL, N, 100);
    uint64_t s = 24;
    for (size_t i = N - 1; i > 0; i--) { /* Fisher-Yates */
        size_t j = (size_t)(rng_next(&s) % (i + 1));
        double t = x[i];
        x[i] = x[j];
        x[j] = t;
    }
    buckets *b = store_of(x, NULL, NULL, N, 100);
    cr_assert(same_bytes(a, b));
    buckets_free(a);
    buckets_free(b);
    free(x);
}

Test(buckets, add_rejects_non_finite_and_ignores_zero_count)
{
    buckets *b = buckets_create(10);
    cr_assert_eq(buckets_add(b, 1.5, 0, 2), 0);
    cr_assert_eq(buckets_add(b, INFINITY, 0, 1), -1);
    cr_assert_eq(buckets_add(b, -INFINITY, 0, 1), -1);
    cr_assert_eq(buckets_add(b, NAN, 0, 1), -1);
    cr_assert_eq(buckets_add(b, 7.0, 0, 0), 0);
    cr_assert_eq(buckets_total(b), 2);
    cr_assert_eq(buckets_entries(b), 1);
    buckets_free(b);
}

Test(buckets, budget_below_minimum_is_raised_and_max_level_fits)
{
    buckets *b = buckets_create(0);
    cr_assert_eq(buckets_budget(b), BUCKETS_MIN_BUDGET);
    double v[] = {-DBL_MAX, -1.0, -4.9406564584124654e-324, 0.0, 1e-300, 1.0, 1e300};
    for (size_t i = 0; i < sizeof v / sizeof v[0]; i++) cr_assert_eq(buckets_add(b, v[i], 0, 1), 0);
    cr_assert_eq(buckets_level(b), BUCKETS_MAX_LEVEL);
    cr_assert_eq(buckets_keys(b), 3);
    cr_assert_eq(buckets_total(b), 7);
    buckets_free(b);
}

Test(buckets, reset_returns_to_empty_level_zero)
{
    double *x = normal_sample(5000, 25, 0, 1);
    buckets *b = store_of(x, NULL, NULL, 5000, 20);
    cr_assert_gt(buckets_level(b), 0);
    buckets_reset(b);
    cr_assert_eq(buckets_level(b), 0);
    cr_assert_eq(buckets_total(b), 0);
    cr_assert_eq(buckets_entries(b), 0);
    cr_assert_eq(buckets_add(b, 2.0, 1, 3), 0);
    cr_assert_eq(buckets_entry_at(b, 0).key, buckets_key(2.0));
    cr_assert_eq(buckets_entry_at(b, 0).count, 3);
    buckets_free(b);
    free(x);
}

Test(buckets, many_cells_grow_the_table_without_losing_counts)
{
    enum { N = 200000, CELLS = 500 };
    double *x = normal_sample(N, 26, 0, 1);
    uint32_t *cell = malloc(N * sizeof *cell);
    for (size_t i = 0; i < N; i++) cell[i] = (uint32_t)(i * 7919 % CELLS);
    buckets *b = store_of(x, cell, NULL, N, 1024);
    reference r = reference_build(x, cell, NULL, N, buckets_level(b));
    assert_store_equals(b, &r);
    cr_assert_eq(buckets_level(b), least_fitting_level(x, N, 1024, 0));
    free(r.e);
    buckets_free(b);
    free(x);
    free(cell);
}

/* ---- merge -------------------------------------------------------------- */

/* Invariant checked: with into built from X (budget Bi) at level Li and from
 * built from Y at level Lf, merge gives the entries of X + Y keyed at the
 * least level L >= max(Li, Lf) where X + Y has <= Bi keys; when X + Y already
 * fits at max(Li, Lf), L = max(Li, Lf), and if moreover lambda(X + Y, Bi) is
 * that level, the result is byte-identical to the store built from X + Y. */
Test(buckets, merge_of_stores_at_different_levels_equals_union_at_coarser_level)
{
    enum { NX = 40000, NY = 40000 };
    double *xy = malloc((NX + NY) * sizeof *xy);
    double *x = normal_sample(NX, 31, 0, 1);
    double *y = normal_sample(NY, 32, 1.0, 0.01); /* inside x's dense region */
    memcpy(xy, x, NX * sizeof *x);
    memcpy(xy + NX, y, NY * sizeof *y);
    buckets *a = store_of(x, NULL, NULL, NX, 120);   /* collapses */
    buckets *b = store_of(y, NULL, NULL, NY, 100000); /* stays at level 0 */
    int la = buckets_level(a), lb = buckets_level(b);
    cr_assert_gt(la, lb);
    int coarse = la;
    /* precondition of the equality: the union fits at the coarser level */
    cr_assert_eq(least_fitting_level(xy, NX + NY, 120, 0), coarse);

    /* into at the finer level, from at the coarser */
    buckets *m1 = store_of(y, NULL, NULL, NY, 120000);
    cr_assert_eq(buckets_merge(m1, a, NULL, 0), 0);
    cr_assert_eq(buckets_level(m1), coarse);
    reference r = reference_build(xy, NULL, NULL, NX + NY, coarse);
    assert_store_equals(m1, &r);

    /* into at the coarser level: also the store built from the union */
    cr_assert_eq(buckets_merge(a, b, NULL, 0), 0);
    cr_assert_eq(buckets_level(a), coarse);
    assert_store_equals(a, &r);
    buckets *direct = store_of(xy, NULL, NULL, NX + NY, 120);
    cr_assert(same_bytes(a, direct));

    free(r.e);
    buckets_free(a);
    buckets_free(b);
    buckets_free(m1);
    buckets_free(direct);
    free(x);
    free(y);
    free(xy);
}

Test(buckets, merge_collapses_further_when_union_exceeds_budget)
{
    enum { N = 20000 };
    double *xy = malloc(2 * N * sizeof *xy);
    double *x = normal_sample(N, 33, 0, 1);
    double *y = normal_sample(N, 34, 0, 1);
    for (size_t i = 0; i < N; i++) { /* x positive, y negative: disjoint keys */
        x[i] = fabs(x[i]);
        y[i] = -fabs(y[i]);
    }
    memcpy(xy, x, N * sizeof *x);
    memcpy(xy + N, y, N * sizeof *y);
    buckets *a = store_of(x, NULL, NULL, N, 50);
    buckets *b = store_of(y, NULL, NULL, N, 50);
    int start = buckets_level(a) > buckets_level(b) ? buckets_level(a) : buckets_level(b);
    int want = least_fitting_level(xy, 2 * N, 50, start);
    cr_assert_gt(want, start);
    cr_assert_eq(buckets_merge(a, b, NULL, 0), 0);
    cr_assert_eq(buckets_level(a), want);
    cr_assert_leq(buckets_keys(a), 50);
    cr_assert_eq(buckets_total(a), 2 * N);
    reference r = reference_build(xy, NULL, NULL, 2 * N, want);
    assert_store_equals(a, &r);
    free(r.e);
    buckets_free(a);
    buckets_free(b);
    free(x);
    free(y);
    free(xy);
}

Test(buckets, merge_renames_cells_through_cell_map)
{
    enum { N = 10000 };
    double *x = normal_sample(N, 35, 0, 1);
    double *y = normal_sample(N, 36, 1, 2);
    uint32_t *cx = malloc(N * sizeof *cx), *cy = malloc(N * sizeof *cy);
    const uint32_t map[3] = {2, 0, 1};
    double *xy = malloc(2 * N * sizeof *xy);
    uint32_t *cxy = malloc(2 * N * sizeof *cxy);
    for (size_t i = 0; i < N; i++) {
        cx[i] = (uint32_t)(i % 2);
        cy[i] = (uint32_t)(i % 3);
        xy[i] = x[i];
        cxy[i] = cx[i];
        xy[N + i] = y[i];
        cxy[N + i] = map[cy[i]];
    }
    buckets *a = store_of(x, cx, NULL, N, 100000);
    buckets *b = store_of(y, cy, NULL, N, 100000);
    cr_assert_eq(buckets_merge(a, b, map, 3), 0);
    buckets *direct = store_of(xy, cxy, NULL, 2 * N, 100000);
    cr_assert(same_bytes(a, direct));
    buckets_free(a);
    buckets_free(b);
    buckets_free(direct);
    free(x);
    free(y);
    free(cx);
    free(cy);
    free(xy);
    free(cxy);
}

Test(buckets, merge_rejects_cell_outside_map_and_leaves_into_unchanged)
{
    double *x = normal_sample(1000, 37, 0, 1);
    uint32_t cell[1000];
    for (int i = 0; i < 1000; i++) cell[i] = (uint32_t)(i % 3);
    buckets *a = store_of(x, NULL, NULL, 1000, 500);
    buckets *before = store_of(x, NULL, NULL, 1000, 500);
    buckets *b = store_of(x, cell, NULL, 1000, 10);
    const uint32_t map[2] = {1, 0};
    cr_assert_eq(buckets_merge(a, b, map, 2), -1);
    cr_assert(same_bytes(a, before));
    buckets_free(a);
    buckets_free(before);
    buckets_free(b);
    free(x);
}

Test(buckets, merge_with_itself_doubles_every_count)
{
    double *x = normal_sample(3000, 38, 0, 1);
    buckets *a = store_of(x, NULL, NULL, 3000, 200);
    uint64_t cnt[3000];
    for (int i = 0; i < 3000; i++) cnt[i] = 2;
    buckets *twice = store_of(x, NULL, cnt, 3000, 200);
    cr_assert_eq(buckets_merge(a, a, NULL, 0), 0);
    cr_assert(same_bytes(a, twice));
    buckets_free(a);
    buckets_free(twice);
    free(x);
}

Test(buckets, merge_of_empty_store_keeps_contents)
{
    double *x = normal_sample(2000, 39, 0, 1);
    buckets *a = store_of(x, NULL, NULL, 2000, 300);
    buckets *copy = store_of(x, NULL, NULL, 2000, 300);
    buckets *empty = buckets_create(300);
    cr_assert_eq(buckets_merge(a, empty, NULL, 0), 0);
    cr_assert(same_bytes(a, copy));
    cr_assert_eq(buckets_merge(empty, a, NULL, 0), 0);
    cr_assert(same_bytes(empty, copy));
    buckets_free(a);
    buckets_free(copy);
    buckets_free(empty);
    free(x);
}

/* ---- quantiles ---------------------------------------------------------- */

/* Inverted empirical CDF on a sorted array: value at rank max(1, ceil(p n)). */
static double exact_quantile(const double *sorted, size_t n, double p)
{
    double r = ceil(p * (double)n);
    size_t rank = r < 1 ? 1 : r > (double)n ? n : (size_t)r;
    return sorted[rank - 1];
}

static void check_quantiles(const double *x, size_t n, uint32_t budget)
{
    double *sorted = malloc(n * sizeof *sorted);
    memcpy(sorted, x, n * sizeof *x);
    qsort(sorted, n, sizeof *sorted, cmp_double);
    buckets *b = store_of(x, NULL, NULL, n, budget);
    static const double ps[] = {0,    1e-5, 0.001, 0.01, 0.05, 0.1,  0.25,  0.3, 0.5,
                                0.6,  0.75, 0.9,   0.95, 0.99, 0.999, 0.99999, 1};
    for (size_t i = 0; i < sizeof ps / sizeof ps[0]; i++) {
        double rel = -1;
        double q = buckets_quantile(b, ps[i], &rel);
        double want = exact_quantile(sorted, n, ps[i]);
        cr_assert_eq(rel, buckets_relative_error(buckets_level(b)));
        cr_assert(fabs(q - want) <= rel * fabs(want), "budget %u level %d p %g: %.17g vs %.17g",
                  budget, buckets_level(b), ps[i], q, want);
    }
    buckets_free(b);
    free(sorted);
}

Test(buckets, quantiles_of_normal_sample_are_within_relative_error)
{
    enum { N = 100000 };
    double *x = normal_sample(N, 41, 0, 1);
    check_quantiles(x, N, 100000); /* level 0 */
    check_quantiles(x, N, 500);    /* collapsed */
    check_quantiles(x, N, 40);     /* collapsed further */
    for (size_t i = 0; i < N; i++) x[i] = 250.0 + 30.0 * x[i];
    check_quantiles(x, N, 100000);
    check_quantiles(x, N, 64);
    free(x);
}

Test(buckets, quantiles_match_numpy_inverted_cdf_on_small_sample)
{
    static const double x[] = {3.5, -1.25, 7.0, 0.0, 2.0, 2.0, 10.5, -4.0, 6.25, 1.5};
    /* numpy 1.24.2 (Debian python3-numpy): np.quantile(x, p, method='inverted_cdf') */
    static const double ps[] = {0, 0.1, 0.15, 0.25, 0.3, 0.5, 0.51, 0.9, 0.95, 1.0};
    static const double want[] = {-4.0, -4.0, -1.25, 0.0, 0.0, 2.0, 2.0, 7.0, 10.5, 10.5};
    buckets *b = store_of(x, NULL, NULL, 10, 1000);
    for (size_t i = 0; i < sizeof ps / sizeof ps[0]; i++) {
        double rel;
        double q = buckets_quantile(b, ps[i], &rel);
        cr_assert(fabs(q - want[i]) <= rel * fabs(want[i]), "p %g: %g vs %g", ps[i], q, want[i]);
        if (want[i] == 0.0) cr_assert(q == 0.0);
    }
    buckets_free(b);
}

/* numpy's 'linear' on a sorted array: x_j + g (x_j+1 - x_j), h = (n - 1) p. */
static void linear_neighbours(const double *sorted, size_t n, double p, double *a, double *b,
                              double *g)
{
    double h = (double)(n - 1) * p, j = floor(h);
    size_t k = (size_t)j;
    *a = sorted[k];
    *b = sorted[k + 1 < n ? k + 1 : k];
    *g = h - j;
}

Test(buckets, linear_quantiles_are_within_the_bound_of_their_two_neighbours)
{
    enum { N = 100000 };
    double *x = normal_sample(N, 43, 0, 1);
    static const double ps[] = {0, 1e-5, 0.01, 0.25, 0.3, 0.5, 0.6, 0.75, 0.99, 0.99999, 1};
    for (int pass = 0; pass < 2; pass++) {
        if (pass) for (size_t i = 0; i < N; i++) x[i] = 250.0 + 30.0 * x[i];
        double *sorted = malloc(N * sizeof *sorted);
        memcpy(sorted, x, N * sizeof *x);
        qsort(sorted, N, sizeof *sorted, cmp_double);
        static const uint32_t budgets[] = {100000, 500, 40};
        for (size_t k = 0; k < 3; k++) {
            buckets *b = store_of(x, NULL, NULL, N, budgets[k]);
            for (size_t i = 0; i < sizeof ps / sizeof ps[0]; i++) {
                double rel = -1, a, c, g;
                double q = buckets_quantile_linear(b, ps[i], &rel);
                linear_neighbours(sorted, N, ps[i], &a, &c, &g);
                double want = a + (c - a) * g;
                cr_assert_eq(rel, buckets_relative_error(buckets_level(b)));
                cr_assert(fabs(q - want) <= rel * ((1 - g) * fabs(a) + g * fabs(c)) * (1 + 1e-12),
                          "level %d p %g: %.17g vs %.17g", buckets_level(b), ps[i], q, want);
            }
            buckets_free(b);
        }
        free(sorted);
    }
    free(x);
}

Test(buckets, linear_quantiles_match_numpy_on_small_sample)
{
    static const double x[] = {3.5, -1.25, 7.0, 0.0, 2.0, 2.0, 10.5, -4.0, 6.25, 1.5};
    /* numpy 1.24.2 (Debian python3-numpy): np.quantile(x, p) (method='linear') */
    static const double ps[] = {0, 0.1, 0.15, 0.25, 0.3, 0.5, 0.51, 0.9, 0.95, 1.0};
    static const double want[] = {-4.0, -1.525, -0.8125000000000002, 0.375, 1.0499999999999996,
                                  2.0, 2.0, 7.349999999999999,
                                  8.924999999999997, 10.5};
    double sorted[10];
    memcpy(sorted, x, sizeof x);
    qsort(sorted, 10, sizeof *sorted, cmp_double);
    buckets *b = store_of(x, NULL, NULL, 10, 1000);
    for (size_t i = 0; i < sizeof ps / sizeof ps[0]; i++) {
        double rel, a, c, g;
        double q = buckets_quantile_linear(b, ps[i], &rel);
        linear_neighbours(sorted, 10, ps[i], &a, &c, &g);
        cr_assert(fabs(q - want[i]) <= rel * ((1 - g) * fabs(a) + g * fabs(c)) + 1e-15,
                  "p %g: %.17g vs %.17g", ps[i], q, want[i]);
    }
    cr_assert(isnan(buckets_quantile_linear(b, 1.5, NULL)));
    buckets_free(b);
    b = buckets_create(10);
    cr_assert(isnan(buckets_quantile_linear(b, 0.5, NULL)));
    buckets_free(b);
}

Test(buckets, quantile_of_empty_store_or_bad_p_is_nan)
{
    buckets *b = buckets_create(10);
    double rel;
    cr_assert(isnan(buckets_quantile(b, 0.5, &rel)));
    buckets_add(b, 1.0, 0, 1);
    cr_assert(isnan(buckets_quantile(b, -0.1, NULL)));
    cr_assert(isnan(buckets_quantile(b, 1.5, NULL)));
    cr_assert(isnan(buckets_quantile(b, NAN, NULL)));
    cr_assert(!isnan(buckets_quantile(b, 0.5, NULL)));
    buckets_free(b);
}

/* ---- serialization ------------------------------------------------------ */

static buckets *read_bytes(const uint8_t *p, size_t n, int *failed)
{
    wire_reader r;
    wire_reader_init(&r, p, n);
    buckets *b = buckets_read(&r);
    *failed = r.failed;
    return b;
}

Test(buckets, serialization_round_trip_is_byte_identical)
{
    enum { N = 50000 };
    double *x = normal_sample(N, 51, -2, 5);
    uint32_t *cell = malloc(N * sizeof *cell);
    for (size_t i = 0; i < N; i++) cell[i] = (uint32_t)(i % 4);
    const uint32_t budgets[] = {3, 50, 100000};
    for (int k = 0; k < 3; k++) {
        buckets *b = store_of(x, cell, NULL, N, budgets[k]);
        wire_writer w = serialized(b);
        int failed;
        buckets *c = read_bytes(w.data, w.len, &failed);
        cr_assert_not_null(c);
        cr_assert(!failed);
        cr_assert_eq(buckets_level(c), buckets_level(b));
        cr_assert_eq(buckets_budget(c), buckets_budget(b));
        cr_assert_eq(buckets_total(c), N);
        cr_assert_eq(buckets_keys(c), buckets_keys(b));
        wire_writer w2 = serialized(c);
        cr_assert(w2.len == w.len && memcmp(w.data, w2.data, w.len) == 0);
        /* the read store keeps working */
        cr_assert_eq(buckets_add(c, 1.0, 0, 1), 0);
        cr_assert_eq(buckets_total(c), N + 1);
        wire_writer_free(&w);
        wire_writer_free(&w2);
        buckets_free(b);
        buckets_free(c);
    }
    buckets *e = buckets_create(7);
    buckets *e2 = NULL;
    wire_writer w = serialized(e);
    int failed;
    e2 = read_bytes(w.data, w.len, &failed);
    cr_assert_not_null(e2);
    cr_assert(same_bytes(e, e2));
    wire_writer_free(&w);
    buckets_free(e);
    buckets_free(e2);
    free(x);
    free(cell);
}

/* Hand-made stream: budget, level, entries. */
static wire_writer stream(uint32_t budget, uint8_t level, uint64_t n, const buckets_entry *e,
                          size_t ne)
{
    wire_writer w;
    wire_writer_init(&w);
    wire_put_u32(&w, budget);
    wire_put_u8(&w, level);
    wire_put_u64(&w, n);
    for (size_t i = 0; i < ne; i++) {
        wire_put_i64(&w, e[i].key);
        wire_put_u32(&w, e[i].cell);
        wire_put_u64(&w, e[i].count);
    }
    return w;
}

static void assert_rejected(wire_writer *w, const char *what)
{
    int failed = 0;
    buckets *b = read_bytes(w->data, w->len, &failed);
    cr_assert_null(b, "%s accepted", what);
    cr_assert(failed, "%s: reader not failed", what);
    wire_writer_free(w);
}

Test(buckets, malformed_input_is_rejected)
{
    const buckets_entry ok[] = {{-5, 0, 2}, {0, 1, 1}, {3, 0, 4}, {3, 2, 1}, {9, 0, 1}};
    wire_writer w = stream(10, 0, 5, ok, 5);
    int failed;
    buckets *b = read_bytes(w.data, w.len, &failed);
    cr_assert_not_null(b, "well-formed stream rejected");
    buckets_free(b);
    for (size_t cut = 0; cut < w.len; cut++) { /* every truncation */
        b = read_bytes(w.data, cut, &failed);
        cr_assert_null(b, "truncated at %zu accepted", cut);
        cr_assert(failed);
    }
    wire_writer_free(&w);

    const buckets_entry unsorted[] = {{3, 0, 4}, {-5, 0, 2}};
    w = stream(10, 0, 2, unsorted, 2);
    assert_rejected(&w, "unsorted keys");
    const buckets_entry cells[] = {{3, 2, 4}, {3, 1, 2}};
    w = stream(10, 0, 2, cells, 2);
    assert_rejected(&w, "unsorted cells");
    const buckets_entry dup[] = {{3, 1, 4}, {3, 1, 2}};
    w = stream(10, 0, 2, dup, 2);
    assert_rejected(&w, "duplicate entry");
    const buckets_entry zero[] = {{3, 1, 0}};
    w = stream(10, 0, 1, zero, 1);
    assert_rejected(&w, "zero count");
    const buckets_entry far[] = {{buckets_key(DBL_MAX) + 1, 0, 1}};
    w = stream(10, 0, 1, far, 1);
    assert_rejected(&w, "key beyond largest finite bucket");
    const buckets_entry far_neg[] = {{INT64_MIN, 0, 1}};
    w = stream(10, 0, 1, far_neg, 1);
    assert_rejected(&w, "INT64_MIN key");
    const buckets_entry coarse[] = {{5, 0, 1}};
    w = stream(10, BUCKETS_MAX_LEVEL, 1, coarse, 1);
    assert_rejected(&w, "key outside the level's range");
    w = stream(3, 0, 5, ok, 5); /* 4 distinct keys */
    assert_rejected(&w, "more keys than budget");
    w = stream(2, 0, 0, NULL, 0);
    assert_rejected(&w, "budget below minimum");
    w = stream(10, BUCKETS_MAX_LEVEL + 1, 0, NULL, 0);
    assert_rejected(&w, "level out of range");
    w = stream(10, 0, UINT64_MAX, ok, 5);
    assert_rejected(&w, "huge entry count");
    const buckets_entry overflow[] = {{1, 0, UINT64_MAX}, {2, 0, 1}};
    w = stream(10, 0, 2, overflow, 2);
    assert_rejected(&w, "total overflows");
}

/* buckets_write of b into a fresh buffer; returns its length. */
static size_t stored_bytes(const buckets *b, unsigned char **out)
{
    wire_writer w;
    wire_writer_init(&w);
    buckets_write(b, &w);
    cr_assert(!w.failed);
    *out = w.data;
    return w.len;
}

Test(buckets, add_many_equals_single_adds)
{
    /* buckets_add_many must leave the store exactly as n calls of
     * buckets_add: values over many octaves, with and without cells, a budget
     * small enough to collapse several times and tables that grow, fed in
     * uneven batches; then a batch holding a NaN fails at the same point. */
    for (int with_cells = 0; with_cells < 2; with_cells++) {
        buckets *one = buckets_create(64), *many = buckets_create(64);
        cr_assert(one && many);
        enum { N = 30000 };
        static double x[N];
        static uint32_t cells[N];
        uint64_t r = 0x853c49e6748fea9bull;
        for (int i = 0; i < N; i++) {
            r ^= r << 13; r ^= r >> 7; r ^= r << 17;
            double mag = ldexp(1.0 + (double)(r >> 11) / 9007199254740992.0, (int)(r % 40) - 20);
            x[i] = (r >> 5) % 7 == 0 ? 0.0 : (r >> 6) & 1 ? -mag : mag;
            if (i % 97 < 30) x[i] = x[i > 0 ? i - 1 : 0]; /* runs of equal values */
            cells[i] = with_cells ? (uint32_t)((r >> 20) % 9) : 0;
            cr_assert_eq(buckets_add(one, x[i], cells[i], 1), 0);
        }
        for (size_t i = 0, step = 1; i < N; step = step * 7 % 500 + 1) {
            size_t m = N - i < step ? N - i : step;
            cr_assert_eq(buckets_add_many(many, x + i, with_cells ? cells + i : NULL, m), 0);
            i += m;
        }
        cr_assert_gt(buckets_level(one), 0, "the test should collapse the store");
        unsigned char *a, *b;
        size_t na = stored_bytes(one, &a), nb = stored_bytes(many, &b);
        cr_assert(na == nb && memcmp(a, b, na) == 0, "with_cells %d: stores differ", with_cells);
        free(a);
        free(b);

        double bad[5] = {1.5, -2.0, NAN, 4.0, 8.0};
        uint32_t bad_cells[5] = {1, 2, 3, 4, 5};
        cr_assert_eq(buckets_add_many(many, bad, with_cells ? bad_cells : NULL, 5), -1);
        for (int i = 0; i < 2; i++) buckets_add(one, bad[i], with_cells ? bad_cells[i] : 0, 1);
        na = stored_bytes(one, &a);
        nb = stored_bytes(many, &b);
        cr_assert(na == nb && memcmp(a, b, na) == 0, "with_cells %d: NaN batch differs", with_cells);
        free(a);
        free(b);
        buckets_free(one);
        buckets_free(many);
    }
}

Test(buckets, reads_of_an_unsealed_store_equal_sealed_reads_and_write_nothing)
{
    /* Reference: the same store sealed (sheaf's own code, sealed path). */
    enum { N = 20000 };
    double *x = normal_sample(N, 77, 3, 2);
    uint32_t *cell = malloc(N * sizeof *cell);
    for (size_t i = 0; i < N; i++) cell[i] = (uint32_t)(i % 3);
    buckets *a = unsealed_store_of(x, cell, NULL, N, 300);
    buckets *b = unsealed_store_of(x, cell, NULL, N, 300);
    cr_assert_eq(buckets_add(a, 0.125, 1, 1), 0); /* a new entry: the index is stale */
    cr_assert_eq(buckets_add(b, 0.125, 1, 1), 0);
    cr_assert(!buckets_sealed(a));
    buckets_seal(b);
    cr_assert(buckets_sealed(b));
    for (double p = 0; p <= 1; p += 0.05)
        cr_expect_eq(buckets_quantile(a, p, NULL), buckets_quantile(b, p, NULL), "p %g", p);
    cr_assert_eq(buckets_entries(a), buckets_entries(b));
    for (size_t i = 0; i < buckets_entries(a); i += 7) {
        buckets_entry ea = buckets_entry_at(a, i), eb = buckets_entry_at(b, i);
        cr_expect(ea.key == eb.key && ea.cell == eb.cell && ea.count == eb.count, "entry %zu", i);
    }
    wire_writer wa = serialized(a), wb = serialized(b);
    cr_expect(wa.len == wb.len && memcmp(wa.data, wb.data, wa.len) == 0);
    cr_expect(!buckets_sealed(a), "a read built the index of a const store");
    wire_writer_free(&wa);
    wire_writer_free(&wb);
    buckets_free(a);
    buckets_free(b);
    free(x);
    free(cell);
}

Test(buckets, mapping_cells_in_place_equals_merging_with_the_map)
{
    /* 5000 values in cells 1..9 (a collapsed store), then cells renumbered:
     * a permutation, and a map that joins cells; the result must be the
     * store an empty one builds by buckets_merge with the same map, byte
     * for byte (the reference: the merge, held elsewhere to the direct
     * scan of the data). */
    enum { N = 5000 };
    double *x = normal_sample(N, 77, 10, 4);
    uint32_t *cell = malloc(N * sizeof *cell);
    for (size_t i = 0; i < N; i++) cell[i] = 1 + (uint32_t)(i * 7 % 9);
    static const uint32_t perm[10] = {0, 9, 8, 7, 6, 5, 4, 3, 2, 1};
    static const uint32_t join[10] = {0, 1, 1, 2, 2, 3, 3, 4, 4, 4};
    const uint32_t *maps[2] = {perm, join};
    for (int m = 0; m < 2; m++) {
        buckets *a = store_of(x, cell, NULL, N, 300), *want = buckets_create(300);
        cr_assert_gt(buckets_level(a), 0);
        cr_assert_eq(buckets_merge(want, a, maps[m], 10), 0);
        cr_assert_eq(buckets_map_cells(a, maps[m], 10), 0);
        cr_assert_eq(buckets_total(a), N);
        cr_assert_eq(buckets_keys(a), buckets_keys(want));
        buckets_seal(a);
        wire_writer wa = serialized(a), ww = serialized(want);
        cr_assert_eq(wa.len, ww.len);
        cr_assert(memcmp(wa.data, ww.data, wa.len) == 0, "map %d", m);
        wire_writer_free(&wa);
        wire_writer_free(&ww);
        buckets_free(a);
        buckets_free(want);
    }
    /* a cell past the map is refused, the store unchanged */
    buckets *a = store_of(x, cell, NULL, N, 300);
    cr_assert_eq(buckets_map_cells(a, perm, 5), -1);
    cr_assert_eq(buckets_total(a), N);
    buckets_free(a);
    free(cell);
    free(x);
}

/* One of the shapes a column takes, value i of n (the dense window of
 * buckets_add_many must give the same store for each). */
enum { SHAPES = 9 };
static double shaped(int shape, size_t i, uint64_t *r)
{
    switch (shape) {
    case 0: return rng_normal(r) * 3.0;                             /* both signs, one lobe each */
    case 1: return rng_uniform(r) < 0.3 ? 0.0 : rng_normal(r) + 50; /* zeros and a far lobe */
    case 2: return (double)i;                                       /* always leaving the window */
    case 3: return (double)(rng_next(r) % 10);                      /* ten integers */
    case 4: return ldexp(rng_uniform(r), (int)(rng_next(r) % 60) - 30) * (rng_next(r) & 1 ? -1 : 1);
    case 5: return i < 20000 ? rng_normal(r) : 1e6 + rng_normal(r); /* a jump */
    case 6: return rng_uniform(r) < 0.5 ? -0.0 : 1.0 + (double)(i % 3);
    case 7: return (double)(rng_next(r) % 101);                     /* few values, wide range */
    default: return (double)((int)(rng_next(r) % 701) - 200) / 10;  /* one decimal, -20 to 50 */
    }
}

Test(buckets, dense_window_opens_only_where_it_holds_most_values)
{
    /* Under a regression target's 48 cells a window has room for a few
     * hundred to a thousand keys.  Whole numbers from 1 to 1,000,000 span
     * 2,560 keys but hold half their values in the top 128 and 7 in 8 in the
     * top 384: the window is narrowed to the top and holds nearly every
     * value (narrowed around the middle, it held almost none, and was
     * closed and reopened again and again).
     * Numbers spread evenly over 60 octaves have no such stretch: no window
     * is opened.  A growing column (a sequence number) has its densest
     * stretch at its top; its narrowed window keeps room above it, so that
     * it holds most values (132,397 of 200,000 here, reopened twice;
     * without that room 85,150, reopened 4 times).  Either way the store
     * equals the one of single adds. */
    enum { N = 200000 };
    static double x[N];
    static uint32_t cells[N];
    for (int shape = 0; shape < 3; shape++) {
        uint64_t r = 0x243f6a8885a308d3ull;
        buckets *one = buckets_create(2048), *many = buckets_create(2048);
        cr_assert(one && many);
        uint64_t in = 0, out = 0, reopened = 0;
        for (size_t i = 0; i < N; i++) {
            x[i] = shape == 0   ? (double)(1 + rng_next(&r) % 1000000)
                   : shape == 1 ? ldexp(1 + rng_uniform(&r), (int)(rng_next(&r) % 60) - 30)
                                : (double)(1000 + 5 * i);
            cells[i] = (uint32_t)(rng_next(&r) % 48);
            cr_assert_eq(buckets_add(one, x[i], cells[i], 1), 0);
        }
        for (size_t i = 0; i < N; i += 1000) {
            uint64_t was_in = many->dense_in, was_out = many->dense_out;
            cr_assert_eq(buckets_add_many(many, x + i, cells + i, 1000), 0);
            /* counted across reopenings: a reopened window starts from 0 */
            if (many->dense_in >= was_in && many->dense_out >= was_out) {
                in += many->dense_in - was_in;
                out += many->dense_out - was_out;
            } else {
                in += many->dense_in;
                out += many->dense_out;
                reopened++;
            }
        }
        if (shape == 2)
            cr_assert(reopened <= 4 && in > N / 2, "a growing column: %llu reopenings, %llu in",
                      (unsigned long long)reopened, (unsigned long long)in);
        else if (shape == 0)
            cr_assert(in > N / 2 && out * 20 < in, "1 to 1,000,000: %llu in a window, %llu outside",
                      (unsigned long long)in, (unsigned long long)out);
        else
            cr_assert_eq(in + out, 0, "60 octaves: %llu values in a window, %llu outside",
                         (unsigned long long)in, (unsigned long long)out);
        buckets_seal(one);
        cr_assert(same_bytes(one, many), "shape %d", shape);
        buckets_free(one);
        buckets_free(many);
    }
}

Test(buckets, dense_window_leaves_the_store_of_single_adds)
{
    /* buckets_add_many counts the keys most values fall in in a window of
     * its own and moves them into the table when the store is settled.
     * Reference: the same values by buckets_add one at a time.  For nine
     * shapes of column, with and without cells (some beyond the window's),
     * two budgets (one that collapses while the window is settled), fed in
     * uneven batches: every read of the unsettled store (level, keys,
     * entries, entry_at, both quantiles, write) equals the reference's, and
     * after the seal the bytes are the same; merging from an unsettled
     * store, renumbering its cells and resetting it agree too. */
    enum { N = 60000 };
    static double x[N];
    static uint32_t cells[N];
    const uint32_t budgets[2] = {2048, 200};
    for (int shape = 0; shape < SHAPES; shape++)
        for (int with_cells = 0; with_cells < 2; with_cells++)
            for (int bi = 0; bi < 2; bi++) {
                uint64_t r = 0x9e3779b97f4a7c15ull + (uint64_t)(shape * 4 + with_cells * 2 + bi);
                buckets *one = buckets_create(budgets[bi]), *many = buckets_create(budgets[bi]);
                cr_assert(one && many);
                for (size_t i = 0; i < N; i++) {
                    x[i] = shaped(shape, i, &r);
                    /* cells 0..5, and now and then one the window has not seen */
                    cells[i] = with_cells ? (i > N / 2 && i % 1000 == 0 ? 9 : (uint32_t)(rng_next(&r) % 6)) : 0;
                    cr_assert_eq(buckets_add(one, x[i], cells[i], 1), 0);
                }
                for (size_t i = 0, step = 1; i < N; step = step * 13 % 3000 + 1) {
                    size_t m = N - i < step ? N - i : step;
                    cr_assert_eq(buckets_add_many(many, x + i, with_cells ? cells + i : NULL, m), 0);
                    i += m;
                }
                buckets_seal(one);
                /* the window was used, with cells or without (it holds as
                 * many counters as the table has slots, or DENSE_ROOM: the
                 * larger budget's; a window outgrown is settled and reopened
                 * wider, so what it holds at the end is the last stretch) */
                if (bi == 0 && (shape == 0 || shape == 1))
                    cr_assert_gt(many->pending, N / 8,
                                 "shape %d: %llu counts in the window", shape,
                                 (unsigned long long)many->pending);
                /* a column of few values over a wide range of magnitudes has a
                 * small table; its window still spans every key between its
                 * ends (or the stretch of them that holds the most values), so
                 * that it stays open and 19 values in 20 or more are counted in
                 * it (one bounded by the table's slots was narrowed to a few
                 * dozen keys, missed most values and was reopened again and
                 * again) */
                if (with_cells && bi == 0 && shape >= 7) {
                    cr_assert_gt(many->dense_in + many->dense_out, N / 2, "shape %d: reopened",
                                 shape);
                    cr_assert_lt(many->dense_out * 20, many->dense_in,
                                 "shape %d: %llu values outside the window, %llu in", shape,
                                 (unsigned long long)many->dense_out,
                                 (unsigned long long)many->dense_in);
                }
                cr_assert_eq(buckets_total(many), N);
                cr_assert_eq(buckets_level(many), buckets_level(one), "shape %d", shape);
                cr_assert_eq(buckets_keys(many), buckets_keys(one), "shape %d", shape);
                cr_assert_eq(buckets_entries(many), buckets_entries(one), "shape %d", shape);
                for (size_t e = 0; e < buckets_entries(one); e += 41) {
                    buckets_entry a = buckets_entry_at(one, e), b = buckets_entry_at(many, e);
                    cr_assert(a.key == b.key && a.cell == b.cell && a.count == b.count,
                              "shape %d entry %zu: %ld %u %lu vs %ld %u %lu", shape, e, (long)a.key, a.cell, (unsigned long)a.count, (long)b.key, b.cell, (unsigned long)b.count);
                }
                for (double p = 0; p <= 1; p += 0.125) {
                    cr_assert_eq(buckets_quantile(many, p, NULL), buckets_quantile(one, p, NULL),
                                 "shape %d cells %d budget %u p %g", shape, with_cells,
                                 budgets[bi], p);
                    cr_assert_eq(buckets_quantile_linear(many, p, NULL),
                                 buckets_quantile_linear(one, p, NULL));
                }
                cr_assert(same_bytes(one, many), "shape %d cells %d budget %u: unsettled write",
                          shape, with_cells, budgets[bi]);
                /* merge from the unsettled store, into an unsettled store */
                buckets *into1 = buckets_create(budgets[bi]), *into2 = buckets_create(budgets[bi]);
                cr_assert_eq(buckets_merge(into1, one, NULL, 0), 0);
                cr_assert_eq(buckets_add_many(into2, x, with_cells ? cells : NULL, N / 3), 0);
                cr_assert_eq(buckets_add_many(into2, x + N / 3, with_cells ? cells + N / 3 : NULL,
                                              N - N / 3), 0);
                cr_assert_eq(buckets_merge(into1, many, NULL, 0), 0);
                cr_assert_eq(buckets_merge(into2, many, NULL, 0), 0);
                buckets_seal(into2);
                cr_assert(same_bytes(into1, into2), "shape %d: merges differ", shape);
                buckets_free(into1);
                buckets_free(into2);
                /* renumbered cells: the window is settled first */
                static const uint32_t join[10] = {0, 0, 1, 1, 2, 2, 3, 3, 4, 4};
                buckets *m1 = buckets_create(budgets[bi]);
                cr_assert_eq(buckets_add_many(m1, x, with_cells ? cells : NULL, N), 0);
                cr_assert_eq(buckets_map_cells(m1, join, 10), 0);
                cr_assert_eq(buckets_map_cells(one, join, 10), 0);
                cr_assert_eq(buckets_add_many(m1, x, with_cells ? cells : NULL, 1000), 0);
                for (size_t i = 0; i < 1000; i++)
                    cr_assert_eq(buckets_add(one, x[i], with_cells ? cells[i] : 0, 1), 0);
                buckets_seal(m1);
                buckets_seal(one);
                cr_assert(same_bytes(one, m1), "shape %d: renumbered stores differ", shape);
                buckets_free(m1);
                /* sealed, the bytes of the original store */
                buckets_seal(many);
                cr_assert(buckets_sealed(many));
                buckets_reset(many);
                cr_assert_eq(buckets_total(many), 0);
                cr_assert_eq(buckets_entries(many), 0);
                buckets_free(one);
                buckets_free(many);
            }
}

/* ---- radix_sort_pairs (acc/radix.h) --------------------------------------- */

static int pair_cmp(const void *pa, const void *pb)
{
    const radix_pair *a = pa, *b = pb;
    if (a->k != b->k) return a->k < b->k ? -1 : 1;
    return (a->i > b->i) - (a->i < b->i); /* stable: the input order among equal keys */
}

/* The radix sort of a[0..n) against qsort by (key, index), for n items
 * whose index is their input position. */
static void radix_matches_qsort(const radix_pair *in, size_t n, const char *what)
{
    radix_pair *a = malloc((2 * n + 1) * sizeof *a), *want = malloc((n + 1) * sizeof *want);
    cr_assert(a && want);
    memcpy(a, in, n * sizeof *a);
    memcpy(want, in, n * sizeof *want);
    qsort(want, n, sizeof *want, pair_cmp);
    const radix_pair *got = radix_sort_pairs(a, a + n, n);
    size_t bad = n;
    for (size_t i = 0; i < n && bad == n; i++)
        if (got[i].k != want[i].k || got[i].i != want[i].i) bad = i;
    cr_expect_eq(bad, n, "%s, n %zu: item %zu differs", what, n, bad);
    free(a);
    free(want);
}

Test(buckets, radix_sort_equals_a_stable_comparison_sort)
{
    const size_t sizes[] = {0, 1, 2, 3, 15, 255, 256, 1000, 1300, 2048, 5000};
    uint64_t x = 88172645463325252ull; /* xorshift64 */
    for (size_t s = 0; s < sizeof sizes / sizeof *sizes; s++) {
        size_t n = sizes[s];
        radix_pair *in = malloc((n + 1) * sizeof *in);
        cr_assert_not_null(in);
        for (int kind = 0; kind < 6; kind++) {
            for (size_t i = 0; i < n; i++) {
                x ^= x << 13, x ^= x >> 7, x ^= x << 17;
                uint64_t k;
                switch (kind) {
                case 0: k = x; break;                                /* hashes: every bit */
                case 1: k = (x % 4096) << 20; break;                 /* few keys, many equal */
                case 2: /* bucket keys of both signs: (key ^ sign bit) << 32 | cell */
                    k = ((uint64_t)((uint32_t)((int32_t)(x % 200001) - 100000) ^ 0x80000000u)
                         << 32) | (x >> 61);
                    break;
                case 3: k = 42; break;                               /* all equal */
                case 4: k = i % 2 ? ~(uint64_t)0 : 0; break;         /* the two ends */
                default: k = (uint64_t)(n - i) << 7 | 5; break;      /* descending, low bits set */
                }
                in[i] = (radix_pair){k, (uint32_t)i};
            }
            char what[64];
            snprintf(what, sizeof what, "key kind %d", kind);
            radix_matches_qsort(in, n, what);
        }
        free(in);
    }
}
