/* Tests for acc/hll: estimate accuracy, exact merge, compact serialization.
 *
 * Inputs are distinct integers hashed with XXH3_64bits (seeded where several
 * independent sketches are needed).  Accuracy bounds: 3 standard errors of
 * 1.04 / sqrt(16384) = 0.81% (Flajolet et al. 2007), i.e. 2.4%; below 1000
 * distinct values, where linear counting applies, 1%.
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <xxhash.h>

#include "acc/hll.h"
#include "testutil.h"

static uint64_t hash_int(uint64_t i, uint64_t seed)
{
    return XXH3_64bits_withSeed(&i, sizeof i, seed);
}

/* Adds the hashes of integers [lo, hi). */
static void add_range(hll *h, uint64_t lo, uint64_t hi, uint64_t seed)
{
    for (uint64_t i = lo; i < hi; i++) hll_add(h, hash_int(i, seed));
}

static hll *new_hll(void)
{
    hll *h = malloc(sizeof *h);
    cr_assert_not_null(h);
    hll_init(h);
    return h;
}

static double estimate_of_range(uint64_t n, uint64_t seed)
{
    hll *h = new_hll();
    add_range(h, 0, n, seed);
    double e = hll_estimate(h);
    free(h);
    return e;
}

Test(hll, empty_sketch_estimates_zero)
{
    hll *h = new_hll();
    cr_expect_eq(hll_estimate(h), 0.0);
    free(h);
}

Test(hll, small_counts_within_one_percent)
{
    const uint64_t ns[] = {1, 10, 100, 500};
    for (size_t k = 0; k < sizeof ns / sizeof ns[0]; k++) {
        double e = estimate_of_range(ns[k], 0);
        cr_expect_leq(testutil_rel(e, (double)ns[k]), 0.01, "n=%llu estimate %.3f",
                      (unsigned long long)ns[k], e);
    }
}

Test(hll, large_counts_within_three_standard_errors)
{
    const uint64_t ns[] = {10000, 100000, 1000000};
    for (size_t k = 0; k < sizeof ns / sizeof ns[0]; k++) {
        double e = estimate_of_range(ns[k], 0);
        cr_expect_leq(testutil_rel(e, (double)ns[k]), 0.024, "n=%llu estimate %.1f",
                      (unsigned long long)ns[k], e);
    }
}

/* Where linear counting hands over to the raw estimate: the raw estimate is
 * biased upward by tens of percent just above n = 11500 without a bias
 * correction, so a switch placed too early shows here. */
Test(hll, mid_range_counts_have_no_switch_bias)
{
    const uint64_t ns[] = {12000, 20000, 30000, 40000, 50000, 60000, 80000};
    for (size_t k = 0; k < sizeof ns / sizeof ns[0]; k++) {
        double mean_rel = 0;
        for (uint64_t seed = 1; seed <= 8; seed++)
            mean_rel += (estimate_of_range(ns[k], seed) / (double)ns[k] - 1) / 8;
        /* 8 sketches: standard error of the mean about 0.81% / sqrt(8) = 0.3%. */
        cr_expect_leq(fabs(mean_rel), 0.01, "n=%llu mean relative error %+.4f",
                      (unsigned long long)ns[k], mean_rel);
    }
}

Test(hll, duplicates_do_not_change_the_sketch)
{
    hll *a = new_hll(), *b = new_hll();
    add_range(a, 0, 5000, 3);
    add_range(b, 0, 5000, 3);
    add_range(b, 0, 5000, 3);
    cr_expect_eq(memcmp(a->reg, b->reg, HLL_REGISTERS), 0);
    free(a);
    free(b);
}

Test(hll, rank_of_all_zero_tail_is_51)
{
    hll *h = new_hll();
    hll_add(h, 0); /* register 0, 50 zero bits */
    hll_add(h, UINT64_C(0xFFFC000000000000)); /* register 16383, zero tail */
    hll_add(h, UINT64_C(1) << 49); /* register 0 again, rank 1: no change */
    cr_expect_eq(h->reg[0], 51);
    cr_expect_eq(h->reg[HLL_REGISTERS - 1], 51);
    hll_add(h, (UINT64_C(5) << 50) | (UINT64_C(1) << 49));
    cr_expect_eq(h->reg[5], 1);
    hll_add(h, (UINT64_C(6) << 50) | 1);
    cr_expect_eq(h->reg[6], 50);
    free(h);
}

Test(hll, merge_equals_sketch_of_union)
{
    hll *a = new_hll(), *b = new_hll(), *u = new_hll();
    add_range(a, 0, 60000, 7);
    add_range(b, 40000, 150000, 7);
    add_range(u, 0, 150000, 7);
    hll_merge(a, b);
    cr_expect_eq(memcmp(a->reg, u->reg, HLL_REGISTERS), 0);
    free(a);
    free(b);
    free(u);
}

Test(hll, merge_is_commutative_and_associative)
{
    hll *a = new_hll(), *b = new_hll(), *c = new_hll();
    add_range(a, 0, 3000, 11);
    add_range(b, 2000, 90000, 11);
    add_range(c, 500000, 520000, 11);

    hll *ab = new_hll(), *ba = new_hll(), *ab_c = new_hll(), *a_bc = new_hll();
    *ab = *a; hll_merge(ab, b);
    *ba = *b; hll_merge(ba, a);
    cr_expect_eq(memcmp(ab->reg, ba->reg, HLL_REGISTERS), 0);

    *ab_c = *ab; hll_merge(ab_c, c);
    hll *bc = new_hll();
    *bc = *b; hll_merge(bc, c);
    *a_bc = *a; hll_merge(a_bc, bc);
    cr_expect_eq(memcmp(ab_c->reg, a_bc->reg, HLL_REGISTERS), 0);

    free(a); free(b); free(c); free(ab); free(ba); free(ab_c); free(a_bc); free(bc);
}

static void round_trip(const hll *h, size_t want_bytes, uint8_t want_tag)
{
    wire_writer w;
    wire_writer_init(&w);
    hll_write(h, &w);
    cr_assert(!w.failed);
    cr_expect_eq(w.len, want_bytes);
    cr_expect_eq(w.data[0], want_tag);

    hll *back = new_hll();
    memset(back->reg, 0x7f, HLL_REGISTERS); /* reading must overwrite all */
    wire_reader r;
    wire_reader_init(&r, w.data, w.len);
    cr_expect_eq(hll_read(back, &r), 0);
    cr_expect(!r.failed);
    cr_expect_eq(r.pos, w.len);
    cr_expect_eq(memcmp(back->reg, h->reg, HLL_REGISTERS), 0);
    free(back);
    wire_writer_free(&w);
}

static uint32_t nonzero_registers(const hll *h)
{
    uint32_t k = 0;
    for (uint32_t j = 0; j < HLL_REGISTERS; j++) k += h->reg[j] != 0;
    return k;
}

Test(hll, round_trip_empty_is_sparse)
{
    hll *h = new_hll();
    round_trip(h, 1 + 4, 0);
    free(h);
}

Test(hll, round_trip_sparse)
{
    hll *h = new_hll();
    add_range(h, 0, 1000, 5);
    uint32_t k = nonzero_registers(h);
    round_trip(h, 1 + 4 + 3 * (size_t)k, 0);
    free(h);
}

Test(hll, round_trip_dense)
{
    hll *h = new_hll();
    add_range(h, 0, 200000, 5);
    round_trip(h, 1 + HLL_REGISTERS, 1);
    free(h);
}

Test(hll, writer_picks_the_shorter_form)
{
    /* Sparse costs 4 + 3k bytes, dense 16384: the switch is at k = 5460. */
    hll *h = new_hll();
    for (uint32_t j = 0; j < 5459; j++) h->reg[j] = 3;
    round_trip(h, 1 + 4 + 3 * 5459, 0); /* 16381 < 16384 */
    h->reg[5459] = 3;
    round_trip(h, 1 + HLL_REGISTERS, 1); /* 16384 is not shorter */
    free(h);
}

/* Runs hll_read on bytes and expects rejection. */
static void expect_rejected(const uint8_t *bytes, size_t n, const char *what)
{
    hll *h = new_hll();
    wire_reader r;
    wire_reader_init(&r, bytes, n);
    cr_expect_eq(hll_read(h, &r), -1, "%s accepted", what);
    cr_expect(r.failed, "%s: reader not failed", what);
    free(h);
}

Test(hll, malformed_input_rejected)
{
    uint8_t buf[1] = {0};
    expect_rejected(buf, 0, "empty buffer");

    uint8_t unknown_tag[] = {2, 0, 0, 0, 0};
    expect_rejected(unknown_tag, sizeof unknown_tag, "unknown tag");

    uint8_t short_count[] = {0, 1, 0};
    expect_rejected(short_count, sizeof short_count, "truncated count");

    uint8_t short_pairs[] = {0, 2, 0, 0, 0, 1, 0, 3};
    expect_rejected(short_pairs, sizeof short_pairs, "truncated pairs");

    uint8_t bad_index[] = {0, 1, 0, 0, 0, 0x00, 0x40, 3}; /* index 16384 */
    expect_rejected(bad_index, sizeof bad_index, "index 16384");

    uint8_t bad_rank[] = {0, 1, 0, 0, 0, 7, 0, 52};
    expect_rejected(bad_rank, sizeof bad_rank, "rank 52");

    uint8_t zero_rank[] = {0, 1, 0, 0, 0, 7, 0, 0};
    expect_rejected(zero_rank, sizeof zero_rank, "sparse rank 0");

    uint8_t repeated[] = {0, 2, 0, 0, 0, 7, 0, 3, 7, 0, 4};
    expect_rejected(repeated, sizeof repeated, "repeated index");

    uint8_t descending[] = {0, 2, 0, 0, 0, 8, 0, 3, 7, 0, 4};
    expect_rejected(descending, sizeof descending, "descending indices");

    uint8_t huge_count[] = {0, 0x01, 0x40, 0, 0}; /* 16385 pairs */
    expect_rejected(huge_count, sizeof huge_count, "count above 16384");

    uint8_t *dense = calloc(1 + HLL_REGISTERS, 1);
    cr_assert_not_null(dense);
    dense[0] = 1;
    expect_rejected(dense, HLL_REGISTERS, "truncated dense");
    dense[100] = 52;
    expect_rejected(dense, 1 + HLL_REGISTERS, "dense rank 52");
    free(dense);
}

Test(hll, largest_legal_index_and_rank_accepted)
{
    /* The largest legal values: index 16383, rank 51. */
    uint8_t edge[] = {0, 1, 0, 0, 0, 0xFF, 0x3F, 51};
    hll *h = new_hll();
    wire_reader r;
    wire_reader_init(&r, edge, sizeof edge);
    cr_expect_eq(hll_read(h, &r), 0);
    cr_expect_eq(h->reg[HLL_REGISTERS - 1], 51);
    free(h);
}

Test(hll, add_many_equals_single_adds)
{
    /* hll_add_many (prefetching, branch-free register update) must set the
     * same registers as hll_add one hash at a time, in batches of every size. */
    static hll one, many;
    hll_init(&one);
    hll_init(&many);
    enum { N = 100000 };
    static uint64_t h[N];
    uint64_t x = 0xda3e39cb94b95bdbull;
    for (int i = 0; i < N; i++) {
        x ^= x << 13; x ^= x >> 7; x ^= x << 17;
        h[i] = x;
        hll_add(&one, h[i]);
    }
    for (size_t i = 0, step = 0; i < N; step = step % 37 + 1) {
        size_t m = N - i < step ? N - i : step;
        hll_add_many(&many, h + i, m);
        i += m;
    }
    cr_assert_eq(memcmp(one.reg, many.reg, sizeof one.reg), 0);
}
