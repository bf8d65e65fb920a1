/* Tests for acc/crosstab: exact counts per (key, class), Welford records per
 * key, overflow, merge (cell maps, frame shifts, overflow, layout
 * independence) and canonical serialization.
 *
 * Data are invented: parcels scanned at depots, the depot name being the
 * column value.  Classification: the parcel's delivery outcome (class
 * index).  Regression: its delay in hours.  Keys are XXH3_64bits of the depot
 * text, as sheaf hashes raw field text.  The reference for every record is a
 * direct computation in the test (counting, or two-pass mean and sum of
 * squared deviations).
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <xxhash.h>

#include "acc/crosstab.h"
#include "testutil.h"

#define SPAN 400    /* distinct depots in the streams */
#define CLASSES 5   /* delivery outcomes */
#define MAX_ROWS 20000

static uint64_t depot_key(unsigned depot)
{
    char buf[32];
    int n = snprintf(buf, sizeof buf, "depot-%u", depot);
    return XXH3_64bits(buf, (size_t)n);
}

/* Row i of stream `seed`: a depot with a skewed frequency (square of a
 * uniform variate over [0, span)), an outcome and a delay. */
typedef struct {
    unsigned depot;
    uint32_t outcome;
    double delay;
} row;

static double uniform(uint64_t seed, unsigned i, unsigned salt)
{
    uint64_t x = XXH3_64bits_withSeed(&i, sizeof i, seed * 7919 + salt);
    return (double)(x >> 11) / 9007199254740992.0;
}

static row make_row(uint64_t seed, unsigned i, unsigned span)
{
    row r;
    double u = uniform(seed, i, 0);
    r.depot = (unsigned)(u * u * span);
    /* Outcome depends a little on the depot, so classes are not uniform. */
    double v = uniform(seed, i, 1);
    r.outcome = (uint32_t)(v * v * CLASSES + (r.depot % 3 == 0 ? 0.5 : 0)) % CLASSES;
    /* Delay around 30 h with a depot effect and noise. */
    r.delay = 30.0 + (double)(r.depot % 17) * 0.75 + 8.0 * (uniform(seed, i, 2) - 0.5);
    return r;
}

static void fill_counts(crosstab *t, uint64_t seed, unsigned rows, unsigned span)
{
    for (unsigned i = 0; i < rows; i++) {
        row r = make_row(seed, i, span);
        cr_assert_eq(crosstab_add_count(t, depot_key(r.depot), r.outcome), 0);
    }
}

/* Adds delays in the frame `frame` (y = delay - frame). */
static void fill_values(crosstab *t, uint64_t seed, unsigned rows, unsigned span, double frame)
{
    for (unsigned i = 0; i < rows; i++) {
        row r = make_row(seed, i, span);
        cr_assert_eq(crosstab_add_value(t, depot_key(r.depot), r.delay - frame), 0);
    }
}

static void serialize(const crosstab *t, wire_writer *w)
{
    wire_writer_init(w);
    crosstab_write(t, w);
    cr_assert(!w->failed);
}

static void expect_same_bytes(const crosstab *a, const crosstab *b)
{
    wire_writer wa, wb;
    serialize(a, &wa);
    serialize(b, &wb);
    cr_expect_eq(wa.len, wb.len, "serialized lengths %zu vs %zu", wa.len, wb.len);
    if (wa.len == wb.len) cr_expect_eq(memcmp(wa.data, wb.data, wa.len), 0, "bytes differ");
    wire_writer_free(&wa);
    wire_writer_free(&wb);
}

static crosstab *copy_of(const crosstab *t)
{
    wire_writer w;
    serialize(t, &w);
    wire_reader r;
    wire_reader_init(&r, w.data, w.len);
    crosstab *c = crosstab_read(&r);
    cr_assert_not_null(c);
    wire_writer_free(&w);
    return c;
}

/* Two-pass mean and sum of squared deviations of y[0..n). */
static void two_pass(const double *y, size_t n, double *mean, double *m2)
{
    double s = 0;
    for (size_t i = 0; i < n; i++) s += y[i];
    double m = n ? s / (double)n : 0, q = 0;
    for (size_t i = 0; i < n; i++) q += (y[i] - m) * (y[i] - m);
    *mean = m;
    *m2 = q;
}

/* Rows per depot of one or more streams, with their y in a frame. */
typedef struct {
    double *y[SPAN];
    size_t n[SPAN];
} by_depot;

static void group_rows(by_depot *g, uint64_t seed, unsigned rows, unsigned span, double frame)
{
    for (unsigned i = 0; i < rows; i++) {
        row r = make_row(seed, i, span);
        g->y[r.depot] = realloc(g->y[r.depot], (g->n[r.depot] + 1) * sizeof(double));
        cr_assert_not_null(g->y[r.depot]);
        g->y[r.depot][g->n[r.depot]++] = r.delay - frame;
    }
}

static void free_groups(by_depot *g)
{
    for (unsigned d = 0; d < SPAN; d++) free(g->y[d]);
}

/* Each depot's record matches the two-pass figures of its rows. */
static void expect_matches_groups(const crosstab *t, const by_depot *g, double tol)
{
    for (unsigned d = 0; d < SPAN; d++) {
        crosstab_entry e = crosstab_lookup(t, depot_key(d), 0);
        cr_expect_eq(e.n, g->n[d], "depot %u: n %llu vs %zu", d, (unsigned long long)e.n, g->n[d]);
        if (!g->n[d]) continue;
        double mean, m2;
        two_pass(g->y[d], g->n[d], &mean, &m2);
        cr_expect_leq(testutil_rel(e.mean, mean), tol, "depot %u mean %.17g vs %.17g", d, e.mean,
                      mean);
        /* M2 of a single row is 0: compare absolutely against the spread. */
        cr_expect_leq(fabs(e.m2 - m2), tol * (m2 > 1 ? m2 : 1), "depot %u m2 %.17g vs %.17g", d,
                      e.m2, m2);
    }
}

/* Chan-combines every record of t: the statistics of all rows. */
static void grand_total(const crosstab *t, uint64_t *n, double *mean, double *m2)
{
    double na = 0, ma = 0, qa = 0;
    for (size_t i = 0; i < crosstab_entries(t); i++) {
        crosstab_entry e = crosstab_entry_at(t, i);
        double nb = (double)e.n, d = e.mean - ma, nn = na + nb;
        ma += d * nb / nn;
        qa += e.m2 + d * d * na * nb / nn;
        na = nn;
    }
    *n = (uint64_t)na;
    *mean = ma;
    *m2 = qa;
}

/* Adds t's rows per class to total[0..CLASSES). */
static void add_class_totals(const crosstab *t, uint64_t *total)
{
    for (size_t i = 0; i < crosstab_entries(t); i++) {
        crosstab_entry e = crosstab_entry_at(t, i);
        total[e.cell] += e.n;
    }
}

static uint64_t total_rows(const crosstab *t)
{
    uint64_t s = 0;
    for (size_t i = 0; i < crosstab_entries(t); i++) s += crosstab_entry_at(t, i).n;
    return s;
}

/* ---- counts ---- */

Test(crosstab, counts_exact_per_key_and_class)
{
    static uint64_t want[SPAN][CLASSES];
    memset(want, 0, sizeof want);
    crosstab *t = crosstab_create(1024);
    for (unsigned i = 0; i < MAX_ROWS; i++) {
        row r = make_row(1, i, SPAN);
        want[r.depot][r.outcome]++;
        cr_assert_eq(crosstab_add_count(t, depot_key(r.depot), r.outcome), 0);
    }
    size_t records = 0, keys = 0;
    for (unsigned d = 0; d < SPAN; d++) {
        int seen = 0;
        for (uint32_t c = 0; c < CLASSES; c++) {
            crosstab_entry e = crosstab_lookup(t, depot_key(d), c);
            cr_expect_eq(e.n, want[d][c], "depot %u class %u", d, c);
            cr_expect_eq(e.mean, 0.0);
            records += want[d][c] > 0;
            seen |= want[d][c] > 0;
        }
        keys += (size_t)seen;
    }
    cr_expect_eq(crosstab_entries(t), records);
    cr_expect_eq(crosstab_keys(t), keys);
    cr_expect_not(crosstab_overflowed(t));
    cr_expect_eq(crosstab_mode(t), CROSSTAB_COUNTS);
    cr_expect_eq(total_rows(t), MAX_ROWS);
    cr_expect_eq(crosstab_lookup(t, depot_key(SPAN + 1), 0).n, 0);
    cr_expect_eq(crosstab_lookup(t, depot_key(0), CLASSES).n, 0);
    crosstab_free(t);
}

Test(crosstab, structured_keys_and_large_cells_stay_exact)
{
    /* Keys differing only in their top bits, small integer keys, and class
     * indices far apart. */
    crosstab *t = crosstab_create(8192);
    for (uint64_t i = 0; i < 2000; i++) {
        cr_assert_eq(crosstab_add_count(t, i << 53, (uint32_t)(i % 3)), 0);
        cr_assert_eq(crosstab_add_count(t, i, 7), 0);
        cr_assert_eq(crosstab_add_count(t, i, 7), 0);
        cr_assert_eq(crosstab_add_count(t, i, UINT32_MAX - 1), 0);
    }
    cr_expect_eq(crosstab_keys(t), 3999); /* key 0 is in both series */
    for (uint64_t i = 1; i < 2000; i++) {
        cr_expect_eq(crosstab_lookup(t, i << 53, (uint32_t)(i % 3)).n, 1);
        cr_expect_eq(crosstab_lookup(t, i, 7).n, 2);
        cr_expect_eq(crosstab_lookup(t, i, UINT32_MAX - 1).n, 1);
    }
    cr_expect_eq(crosstab_lookup(t, 0, 0).n, 1);
    crosstab_free(t);
}

Test(crosstab, hash_zero_and_all_ones_are_valid_keys)
{
    crosstab *t = crosstab_create(4);
    cr_expect_eq(crosstab_lookup(t, 0, 0).n, 0); /* nothing allocated yet */
    cr_assert_eq(crosstab_add_count(t, 1, 0), 0);
    cr_expect_eq(crosstab_lookup(t, 0, 0).n, 0); /* empty slots do not read as key 0 */
    for (int i = 0; i < 3; i++) cr_assert_eq(crosstab_add_count(t, 0, 2), 0);
    /* UINT64_MAX is the overflow key: that hash is kept as UINT64_MAX - 1. */
    cr_assert_eq(crosstab_add_count(t, UINT64_MAX, 1), 0);
    cr_assert_eq(crosstab_add_count(t, UINT64_MAX - 1, 1), 0);
    cr_expect_eq(crosstab_key_of(UINT64_MAX), UINT64_MAX - 1);
    cr_expect_eq(crosstab_key_of(12345), 12345);
    cr_expect_not(crosstab_overflowed(t));
    cr_expect_eq(crosstab_keys(t), 3);
    cr_expect_eq(crosstab_lookup(t, 0, 2).n, 3);
    cr_expect_eq(crosstab_lookup(t, UINT64_MAX - 1, 1).n, 2);
    cr_expect_eq(crosstab_lookup(t, CROSSTAB_OVERFLOW_KEY, 1).n, 0);
    crosstab_entry first = crosstab_entry_at(t, 0);
    cr_expect_eq(first.key, 0);
    cr_expect_eq(first.cell, 2);
    cr_expect_eq(crosstab_entry_at(t, 2).key, UINT64_MAX - 1);
    crosstab_free(t);
}

Test(crosstab, entries_in_key_then_cell_order_after_inserts)
{
    crosstab *t = crosstab_create(4096);
    fill_counts(t, 2, 3000, 300);
    for (size_t i = 1; i < crosstab_entries(t); i++) {
        crosstab_entry a = crosstab_entry_at(t, i - 1), b = crosstab_entry_at(t, i);
        cr_expect(a.key < b.key || (a.key == b.key && a.cell < b.cell), "entry %zu unsorted", i);
    }
    /* New records after a read of the order must show up in it. */
    size_t before = crosstab_entries(t);
    for (unsigned d = 1000; d < 1500; d++)
        cr_assert_eq(crosstab_add_count(t, depot_key(d), d % 4), 0);
    cr_expect_eq(crosstab_entries(t), before + 500);
    for (size_t i = 1; i < crosstab_entries(t); i++) {
        crosstab_entry a = crosstab_entry_at(t, i - 1), b = crosstab_entry_at(t, i);
        cr_expect(a.key < b.key || (a.key == b.key && a.cell < b.cell), "entry %zu unsorted", i);
    }
    cr_expect_eq(crosstab_entry_at(t, crosstab_entries(t)).n, 0);
    crosstab_free(t);
}

/* ---- regression ---- */

Test(crosstab, regression_mean_and_m2_equal_two_pass)
{
    const double frame = 31.0; /* the caller's reference value for the target */
    crosstab *t = crosstab_create(1024);
    fill_values(t, 3, MAX_ROWS, SPAN, frame);
    by_depot g = {{0}, {0}};
    group_rows(&g, 3, MAX_ROWS, SPAN, frame);
    expect_matches_groups(t, &g, 1e-13);
    cr_expect_eq(crosstab_mode(t), CROSSTAB_VALUES);
    for (size_t i = 0; i < crosstab_entries(t); i++) cr_expect_eq(crosstab_entry_at(t, i).cell, 0);
    free_groups(&g);
    crosstab_free(t);
}

Test(crosstab, regression_record_of_one_row_has_zero_m2)
{
    crosstab *t = crosstab_create(8);
    cr_assert_eq(crosstab_add_value(t, 77, -2.5), 0);
    crosstab_entry e = crosstab_lookup(t, 77, 0);
    cr_expect_eq(e.n, 1);
    cr_expect_eq(e.mean, -2.5);
    cr_expect_eq(e.m2, 0.0);
    crosstab_free(t);
}

Test(crosstab, mode_is_fixed_by_the_first_record)
{
    crosstab *c = crosstab_create(8), *v = crosstab_create(8);
    cr_assert_eq(crosstab_add_count(c, 5, 1), 0);
    cr_assert_eq(crosstab_add_value(v, 5, 1.5), 0);
    cr_expect_eq(crosstab_add_value(c, 5, 1.0), -1);
    cr_expect_eq(crosstab_add_count(v, 5, 0), -1);
    cr_expect_eq(crosstab_add_value(v, 6, NAN), -1);
    cr_expect_eq(crosstab_add_value(v, 5, INFINITY), -1);
    cr_expect_eq(crosstab_lookup(c, 5, 1).n, 1);
    cr_expect_eq(crosstab_lookup(v, 5, 0).n, 1);
    cr_expect_eq(crosstab_lookup(v, 5, 0).mean, 1.5);
    cr_expect_eq(crosstab_entries(v), 1);
    cr_expect_eq(crosstab_merge(c, v, NULL, 0, 0.0), -1);
    cr_expect_eq(crosstab_merge(v, c, NULL, 0, 0.0), -1);
    cr_expect_eq(crosstab_merge(v, v, NULL, 0, NAN), -1);
    cr_expect_eq(crosstab_entries(c), 1);
    /* After a reset the other mode is allowed. */
    crosstab_reset(c);
    cr_expect_eq(crosstab_mode(c), CROSSTAB_EMPTY);
    cr_expect_eq(crosstab_add_value(c, 5, 2.0), 0);
    cr_expect_eq(crosstab_lookup(c, 5, 0).mean, 2.0);
    crosstab_free(c);
    crosstab_free(v);
}

/* ---- overflow ---- */

Test(crosstab, overflow_keeps_existing_keys_exact_and_totals_exact)
{
    const uint32_t max_keys = 40;
    static uint64_t want[SPAN][CLASSES];
    memset(want, 0, sizeof want);
    int admitted[SPAN] = {0};
    uint32_t held = 0;
    uint64_t class_total[CLASSES] = {0}, spill[CLASSES] = {0};
    crosstab *t = crosstab_create(max_keys);
    for (unsigned i = 0; i < MAX_ROWS; i++) {
        row r = make_row(4, i, 200);
        if (!admitted[r.depot] && held < max_keys) { admitted[r.depot] = 1; held++; }
        want[r.depot][r.outcome]++;
        class_total[r.outcome]++;
        if (!admitted[r.depot]) spill[r.outcome]++;
        cr_assert_eq(crosstab_add_count(t, depot_key(r.depot), r.outcome), 0);
    }
    cr_assert_eq(held, max_keys);
    cr_expect(crosstab_overflowed(t));
    cr_expect_eq(crosstab_keys(t), max_keys + 1);
    for (unsigned d = 0; d < 200; d++)
        for (uint32_t c = 0; c < CLASSES; c++)
            cr_expect_eq(crosstab_lookup(t, depot_key(d), c).n, admitted[d] ? want[d][c] : 0,
                         "depot %u class %u", d, c);
    uint64_t by_class[CLASSES] = {0};
    add_class_totals(t, by_class);
    for (uint32_t c = 0; c < CLASSES; c++) {
        cr_expect_eq(by_class[c], class_total[c], "class %u total", c);
        cr_expect_eq(crosstab_lookup(t, CROSSTAB_OVERFLOW_KEY, c).n, spill[c], "class %u spill", c);
    }
    /* The overflow records sort last. */
    cr_expect_eq(crosstab_entry_at(t, crosstab_entries(t) - 1).key, CROSSTAB_OVERFLOW_KEY);
    crosstab_free(t);
}

Test(crosstab, overflow_record_in_regression_equals_two_pass_of_spilled_rows)
{
    const uint32_t max_keys = 25;
    int admitted[SPAN] = {0};
    uint32_t held = 0;
    static double spilled[MAX_ROWS];
    size_t n_spilled = 0;
    by_depot g = {{0}, {0}};
    crosstab *t = crosstab_create(max_keys);
    for (unsigned i = 0; i < MAX_ROWS; i++) {
        row r = make_row(5, i, 300);
        if (!admitted[r.depot] && held < max_keys) { admitted[r.depot] = 1; held++; }
        double y = r.delay - 30.0;
        if (!admitted[r.depot]) spilled[n_spilled++] = y;
        cr_assert_eq(crosstab_add_value(t, depot_key(r.depot), y), 0);
    }
    group_rows(&g, 5, MAX_ROWS, 300, 30.0);
    for (unsigned d = 0; d < SPAN; d++) if (!admitted[d]) g.n[d] = 0; /* not held */
    expect_matches_groups(t, &g, 1e-13);
    crosstab_entry o = crosstab_lookup(t, CROSSTAB_OVERFLOW_KEY, 0);
    double mean, m2;
    two_pass(spilled, n_spilled, &mean, &m2);
    cr_expect_eq(o.n, n_spilled);
    cr_expect_leq(testutil_rel(o.mean, mean), 1e-13, "overflow mean %.17g vs %.17g", o.mean, mean);
    cr_expect_leq(testutil_rel(o.m2, m2), 1e-13, "overflow m2 %.17g vs %.17g", o.m2, m2);
    cr_expect_eq(crosstab_keys(t), max_keys + 1);
    free_groups(&g);
    crosstab_free(t);
}

Test(crosstab, zero_max_keys_sends_every_row_to_overflow)
{
    crosstab *t = crosstab_create(0);
    cr_assert_eq(crosstab_add_count(t, 3, 0), 0);
    cr_assert_eq(crosstab_add_count(t, 4, 1), 0);
    cr_assert_eq(crosstab_add_count(t, 3, 0), 0);
    cr_expect(crosstab_overflowed(t));
    cr_expect_eq(crosstab_keys(t), 1);
    cr_expect_eq(crosstab_entries(t), 2);
    cr_expect_eq(crosstab_lookup(t, CROSSTAB_OVERFLOW_KEY, 0).n, 2);
    cr_expect_eq(crosstab_lookup(t, CROSSTAB_OVERFLOW_KEY, 1).n, 1);
    cr_expect_eq(crosstab_lookup(t, 3, 0).n, 0);
    crosstab_free(t);
}

/* ---- merge ---- */

Test(crosstab, counts_merge_without_overflow_equals_concatenated_input_either_order)
{
    crosstab *a = crosstab_create(1024), *b = crosstab_create(1024);
    crosstab *ab = crosstab_create(1024), *ba = crosstab_create(1024);
    fill_counts(a, 6, 5000, 250);
    fill_counts(b, 7, 3000, SPAN);
    fill_counts(ab, 6, 5000, 250);
    fill_counts(ab, 7, 3000, SPAN);
    fill_counts(ba, 7, 3000, SPAN);
    fill_counts(ba, 6, 5000, 250);
    cr_assert_not(crosstab_overflowed(ab));

    crosstab *m1 = crosstab_create(1024), *m2 = crosstab_create(1024);
    cr_assert_eq(crosstab_merge(m1, a, NULL, 0, 0.0), 0);
    cr_assert_eq(crosstab_merge(m1, b, NULL, 0, 0.0), 0);
    cr_assert_eq(crosstab_merge(m2, b, NULL, 0, 0.0), 0);
    cr_assert_eq(crosstab_merge(m2, a, NULL, 0, 0.0), 0);
    expect_same_bytes(m1, ab);
    expect_same_bytes(m2, ba);
    expect_same_bytes(m1, m2);

    cr_assert_eq(crosstab_merge(a, b, NULL, 0, 0.0), 0); /* into a non-empty table */
    expect_same_bytes(a, ab);
    cr_expect_eq(total_rows(a), 8000);

    crosstab *empty = crosstab_create(1024);
    cr_assert_eq(crosstab_merge(a, empty, NULL, 0, 0.0), 0);
    expect_same_bytes(a, ab);
    crosstab_free(a); crosstab_free(b); crosstab_free(ab); crosstab_free(ba);
    crosstab_free(m1); crosstab_free(m2); crosstab_free(empty);
}

Test(crosstab, regression_merge_without_overflow_equals_concatenated_input)
{
    crosstab *a = crosstab_create(1024), *b = crosstab_create(1024);
    fill_values(a, 8, 7000, 250, 30.0);
    fill_values(b, 9, 4000, SPAN, 30.0);
    by_depot g = {{0}, {0}};
    group_rows(&g, 8, 7000, 250, 30.0);
    group_rows(&g, 9, 4000, SPAN, 30.0);

    crosstab *m1 = crosstab_create(1024), *m2 = crosstab_create(1024);
    cr_assert_eq(crosstab_merge(m1, a, NULL, 0, 0.0), 0);
    cr_assert_eq(crosstab_merge(m1, b, NULL, 0, 0.0), 0);
    cr_assert_eq(crosstab_merge(m2, b, NULL, 0, 0.0), 0);
    cr_assert_eq(crosstab_merge(m2, a, NULL, 0, 0.0), 0);
    expect_matches_groups(m1, &g, 1e-13);
    expect_matches_groups(m2, &g, 1e-13);
    cr_expect_not(crosstab_overflowed(m1));
    /* Merging into an empty table copies exactly. */
    crosstab *c = crosstab_create(1024);
    cr_assert_eq(crosstab_merge(c, a, NULL, 0, 0.0), 0);
    expect_same_bytes(c, a);
    free_groups(&g);
    crosstab_free(a); crosstab_free(b); crosstab_free(m1); crosstab_free(m2); crosstab_free(c);
}

Test(crosstab, merge_with_cell_map_remaps_classes)
{
    /* `from` numbered the outcomes in reverse order. */
    const uint32_t reverse[CLASSES] = {4, 3, 2, 1, 0};
    crosstab *into = crosstab_create(1024), *from = crosstab_create(1024);
    crosstab *want = crosstab_create(1024);
    fill_counts(into, 10, 4000, 300);
    fill_counts(want, 10, 4000, 300);
    for (unsigned i = 0; i < 3000; i++) {
        row r = make_row(11, i, 300);
        cr_assert_eq(crosstab_add_count(from, depot_key(r.depot), reverse[r.outcome]), 0);
        cr_assert_eq(crosstab_add_count(want, depot_key(r.depot), r.outcome), 0);
    }
    /* A map that does not cover from's classes is refused; into unchanged. */
    crosstab *before = copy_of(into);
    cr_expect_eq(crosstab_merge(into, from, reverse, CLASSES - 1, 0.0), -1);
    expect_same_bytes(into, before);

    cr_assert_eq(crosstab_merge(into, from, reverse, CLASSES, 0.0), 0);
    expect_same_bytes(into, want);

    /* A map may also fold classes together: outcomes 3 and 4 into class 3. */
    const uint32_t fold[CLASSES] = {0, 1, 2, 3, 3};
    crosstab *folded = crosstab_create(1024);
    cr_assert_eq(crosstab_merge(folded, want, fold, CLASSES, 0.0), 0);
    for (unsigned d = 0; d < 300; d++) {
        uint64_t k = depot_key(d);
        cr_expect_eq(crosstab_lookup(folded, k, 3).n,
                     crosstab_lookup(want, k, 3).n + crosstab_lookup(want, k, 4).n);
        cr_expect_eq(crosstab_lookup(folded, k, 4).n, 0);
        cr_expect_eq(crosstab_lookup(folded, k, 1).n, crosstab_lookup(want, k, 1).n);
    }
    crosstab_free(into); crosstab_free(from); crosstab_free(want);
    crosstab_free(before); crosstab_free(folded);
}

Test(crosstab, merge_with_shift_moves_means_into_the_target_frame)
{
    /* a records delays minus 25 h, b minus 40 h: b's means move by +15. */
    crosstab *a = crosstab_create(1024), *b = crosstab_create(1024);
    fill_values(a, 12, 6000, 300, 25.0);
    fill_values(b, 13, 5000, 300, 40.0);
    by_depot g = {{0}, {0}};
    group_rows(&g, 12, 6000, 300, 25.0);
    group_rows(&g, 13, 5000, 300, 25.0);
    cr_assert_eq(crosstab_merge(a, b, NULL, 0, 40.0 - 25.0), 0);
    expect_matches_groups(a, &g, 1e-13);
    /* Into an empty table the shift applies too. */
    crosstab *c = crosstab_create(1024);
    cr_assert_eq(crosstab_merge(c, b, NULL, 0, 15.0), 0);
    crosstab_entry e = crosstab_lookup(c, depot_key(0), 0), f = crosstab_lookup(b, depot_key(0), 0);
    cr_expect_eq(e.mean, f.mean + 15.0);
    cr_expect_eq(e.m2, f.m2);
    free_groups(&g);
    crosstab_free(a); crosstab_free(b); crosstab_free(c);
}

Test(crosstab, counts_merge_with_overflow_keeps_totals)
{
    crosstab *a = crosstab_create(50), *b = crosstab_create(50);
    fill_counts(a, 14, 6000, 300);
    fill_counts(b, 15, 4000, 300);
    cr_assert(crosstab_overflowed(a));
    cr_assert(crosstab_overflowed(b));
    uint64_t class_total[CLASSES] = {0};
    add_class_totals(a, class_total);
    add_class_totals(b, class_total);

    /* a's records after the merge: a's count plus b's (exact when b holds
     * the key; b's overflow rows of that key go to the overflow key). */
    size_t na = crosstab_entries(a);
    crosstab_entry *before = calloc(na, sizeof *before);
    cr_assert_not_null(before);
    for (size_t i = 0; i < na; i++) before[i] = crosstab_entry_at(a, i);
    cr_assert_eq(crosstab_merge(a, b, NULL, 0, 0.0), 0);
    cr_expect(crosstab_overflowed(a));
    cr_expect_eq(crosstab_keys(a), 51);
    for (size_t i = 0; i < na; i++) {
        if (before[i].key == CROSSTAB_OVERFLOW_KEY) continue;
        cr_expect_eq(crosstab_lookup(a, before[i].key, before[i].cell).n,
                     before[i].n + crosstab_lookup(b, before[i].key, before[i].cell).n);
    }
    uint64_t by_class[CLASSES] = {0};
    add_class_totals(a, by_class);
    for (uint32_t c = 0; c < CLASSES; c++) cr_expect_eq(by_class[c], class_total[c], "class %u", c);
    free(before);
    crosstab_free(a);
    crosstab_free(b);
}

Test(crosstab, regression_merge_with_overflow_keeps_totals)
{
    crosstab *a = crosstab_create(30), *b = crosstab_create(60);
    fill_values(a, 16, 6000, 300, 30.0);
    fill_values(b, 17, 4000, 300, 30.0);
    cr_assert(crosstab_overflowed(a));
    static double all[10000];
    for (unsigned i = 0; i < 6000; i++) all[i] = make_row(16, i, 300).delay - 30.0;
    for (unsigned i = 0; i < 4000; i++) all[6000 + i] = make_row(17, i, 300).delay - 30.0;
    cr_assert_eq(crosstab_merge(a, b, NULL, 0, 0.0), 0);
    cr_expect_eq(crosstab_keys(a), 31);
    uint64_t n;
    double mean, m2, want_mean, want_m2;
    grand_total(a, &n, &mean, &m2);
    two_pass(all, 10000, &want_mean, &want_m2);
    cr_expect_eq(n, 10000);
    cr_expect_leq(testutil_rel(mean, want_mean), 1e-13, "mean %.17g vs %.17g", mean, want_mean);
    cr_expect_leq(testutil_rel(m2, want_m2), 1e-13, "m2 %.17g vs %.17g", m2, want_m2);
    crosstab_free(a);
    crosstab_free(b);
}

Test(crosstab, merge_into_smaller_table_admits_lowest_keys_first)
{
    crosstab *into = crosstab_create(10), *from = crosstab_create(100);
    cr_assert_eq(crosstab_add_count(into, 25000, 0), 0); /* held already */
    cr_assert_eq(crosstab_add_count(into, 99, 1), 0);    /* not in from */
    for (uint64_t k = 30; k >= 1; k--)
        for (uint32_t c = 0; c < 2; c++) cr_assert_eq(crosstab_add_count(from, k * 1000, c), 0);
    cr_assert_eq(crosstab_merge(into, from, NULL, 0, 0.0), 0);
    /* 8 free places: keys 1000..8000 come in, 25000 merges, the rest spill. */
    cr_expect_eq(crosstab_keys(into), 11);
    cr_expect_eq(crosstab_entry_at(into, 0).key, 99);
    for (uint64_t k = 1; k <= 8; k++) {
        cr_expect_eq(crosstab_lookup(into, k * 1000, 0).n, 1, "key %llu", (unsigned long long)k);
        cr_expect_eq(crosstab_lookup(into, k * 1000, 1).n, 1);
    }
    cr_expect_eq(crosstab_lookup(into, 9000, 0).n, 0);
    cr_expect_eq(crosstab_lookup(into, 25000, 0).n, 2);
    cr_expect_eq(crosstab_lookup(into, 25000, 1).n, 1);
    cr_expect_eq(crosstab_lookup(into, CROSSTAB_OVERFLOW_KEY, 0).n, 21);
    cr_expect_eq(crosstab_lookup(into, CROSSTAB_OVERFLOW_KEY, 1).n, 21);
    cr_expect_eq(total_rows(into), 62);
    cr_expect(crosstab_overflowed(into));
    crosstab_free(into);
    crosstab_free(from);
}

/* The same records in another hash layout: a table that a reset left large,
 * filled in reverse stream order for counts (regression records are filled
 * in stream order, so that their Welford sums are the same bits). */
static crosstab *other_layout(uint64_t seed, unsigned rows, unsigned span, int values)
{
    crosstab *t = crosstab_create(100000);
    for (uint64_t k = 0; k < 50000; k++) {
        if (values) cr_assert_eq(crosstab_add_value(t, k, 1.0), 0);
        else cr_assert_eq(crosstab_add_count(t, k, 0), 0);
    }
    crosstab_reset(t);
    for (unsigned j = 0; j < rows; j++) {
        unsigned i = values ? j : rows - 1 - j;
        row r = make_row(seed, i, span);
        if (values) cr_assert_eq(crosstab_add_value(t, depot_key(r.depot), r.delay - 30.0), 0);
        else cr_assert_eq(crosstab_add_count(t, depot_key(r.depot), r.outcome), 0);
    }
    return t;
}

Test(crosstab, merge_result_does_not_depend_on_hash_layout)
{
    for (int values = 0; values <= 1; values++) {
        /* Regression records are combined in floating point, so only the
         * visiting order could change their bits. */
        crosstab *from1 = crosstab_create(100000);
        if (values) fill_values(from1, 18, 5000, SPAN, 30.0);
        else fill_counts(from1, 18, 5000, SPAN);
        crosstab *from2 = other_layout(18, 5000, SPAN, values);
        expect_same_bytes(from1, from2);

        for (uint32_t max_keys = 0; max_keys <= 200; max_keys += 40) {
            crosstab *into1 = crosstab_create(max_keys), *into2 = crosstab_create(max_keys);
            crosstab *intos[2] = {into1, into2};
            for (int j = 0; j < 2; j++) {
                if (values) fill_values(intos[j], 19, 500, 100, 30.0);
                else fill_counts(intos[j], 19, 500, 100);
            }
            cr_assert_eq(crosstab_merge(into1, from1, NULL, 0, 0.0), 0);
            cr_assert_eq(crosstab_merge(into2, from2, NULL, 0, 0.0), 0);
            cr_expect(crosstab_overflowed(into1), "max_keys %u", max_keys);
            expect_same_bytes(into1, into2);
            /* A second merge into the full table. */
            cr_assert_eq(crosstab_merge(into1, from2, NULL, 0, 0.0), 0);
            cr_assert_eq(crosstab_merge(into2, from1, NULL, 0, 0.0), 0);
            expect_same_bytes(into1, into2);
            crosstab_free(into1);
            crosstab_free(into2);
        }
        crosstab_free(from1);
        crosstab_free(from2);
    }
}

Test(crosstab, merge_with_itself_doubles_records)
{
    crosstab *c = crosstab_create(20);
    fill_counts(c, 20, 2000, 60);
    crosstab *orig = copy_of(c);
    cr_assert_eq(crosstab_merge(c, c, NULL, 0, 0.0), 0);
    cr_expect_eq(crosstab_entries(c), crosstab_entries(orig));
    for (size_t i = 0; i < crosstab_entries(c); i++)
        cr_expect_eq(crosstab_entry_at(c, i).n, 2 * crosstab_entry_at(orig, i).n);
    /* With a cell map the copy adds new records. */
    const uint32_t up[CLASSES] = {5, 6, 7, 8, 9};
    cr_assert_eq(crosstab_merge(c, c, up, CLASSES, 0.0), 0);
    cr_expect_eq(crosstab_entries(c), 2 * crosstab_entries(orig));
    cr_expect_eq(total_rows(c), 4 * total_rows(orig));

    crosstab *v = crosstab_create(1024);
    fill_values(v, 21, 3000, 100, 30.0);
    crosstab *vorig = copy_of(v);
    cr_assert_eq(crosstab_merge(v, v, NULL, 0, 0.0), 0);
    for (size_t i = 0; i < crosstab_entries(v); i++) {
        crosstab_entry e = crosstab_entry_at(v, i), o = crosstab_entry_at(vorig, i);
        cr_expect_eq(e.n, 2 * o.n);
        cr_expect_eq(e.mean, o.mean);
        cr_expect_eq(e.m2, 2 * o.m2);
    }
    crosstab_free(c); crosstab_free(orig); crosstab_free(v); crosstab_free(vorig);
}

Test(crosstab, reset_empties_and_table_stays_usable)
{
    crosstab *t = crosstab_create(20), *fresh = crosstab_create(20);
    fill_counts(t, 22, 3000, 100);
    cr_assert(crosstab_overflowed(t));
    crosstab_reset(t);
    cr_expect_eq(crosstab_entries(t), 0);
    cr_expect_eq(crosstab_keys(t), 0);
    cr_expect_not(crosstab_overflowed(t));
    cr_expect_eq(crosstab_lookup(t, depot_key(0), 0).n, 0);
    fill_counts(t, 23, 500, 15);
    fill_counts(fresh, 23, 500, 15);
    expect_same_bytes(t, fresh);
    crosstab_free(t);
    crosstab_free(fresh);
}

/* ---- serialization ---- */

static void expect_round_trip(const crosstab *t)
{
    wire_writer w;
    serialize(t, &w);
    wire_reader r;
    wire_reader_init(&r, w.data, w.len);
    crosstab *back = crosstab_read(&r);
    cr_assert_not_null(back);
    cr_expect_not(r.failed);
    cr_expect_eq(r.pos, w.len);
    cr_expect_eq(crosstab_entries(back), crosstab_entries(t));
    cr_expect_eq(crosstab_keys(back), crosstab_keys(t));
    cr_expect_eq(crosstab_max_keys(back), crosstab_max_keys(t));
    cr_expect_eq(crosstab_overflowed(back), crosstab_overflowed(t));
    cr_expect_eq(crosstab_mode(back), crosstab_mode(t));
    for (size_t i = 0; i < crosstab_entries(t); i++) {
        crosstab_entry a = crosstab_entry_at(t, i), b = crosstab_entry_at(back, i);
        cr_expect_eq(a.key, b.key);
        cr_expect_eq(a.cell, b.cell);
        cr_expect_eq(a.n, b.n);
        cr_expect_eq(a.mean, b.mean);
        cr_expect_eq(a.m2, b.m2);
        cr_expect_eq(crosstab_lookup(back, a.key, a.cell).n, a.n);
    }
    expect_same_bytes(t, back);
    /* The copy is a live table. */
    if (crosstab_mode(back) == CROSSTAB_VALUES)
        cr_expect_eq(crosstab_add_value(back, 4242, 1.0), 0);
    else
        cr_expect_eq(crosstab_add_count(back, 4242, 1), 0);
    crosstab_free(back);
    wire_writer_free(&w);
}

Test(crosstab, round_trip_empty_counts_values_and_overflowed)
{
    crosstab *empty = crosstab_create(64);
    expect_round_trip(empty);
    cr_assert_eq(crosstab_add_count(empty, 1, 0), 0);
    crosstab_reset(empty);
    expect_round_trip(empty); /* a reset table writes as empty */

    crosstab *counts = crosstab_create(1024);
    fill_counts(counts, 24, 4000, 300);
    cr_assert_eq(crosstab_add_count(counts, 0, 3), 0);
    expect_round_trip(counts);

    crosstab *vals = crosstab_create(1024);
    fill_values(vals, 25, 4000, 300, 30.0);
    expect_round_trip(vals);

    crosstab *full = crosstab_create(30);
    fill_counts(full, 26, 4000, 300);
    cr_assert(crosstab_overflowed(full));
    expect_round_trip(full);

    crosstab *vfull = crosstab_create(30);
    fill_values(vfull, 27, 4000, 300, 30.0);
    cr_assert(crosstab_overflowed(vfull));
    expect_round_trip(vfull);

    crosstab_free(empty); crosstab_free(counts); crosstab_free(vals);
    crosstab_free(full); crosstab_free(vfull);
}

typedef struct {
    uint64_t key;
    uint32_t cell;
    uint64_t n;
    double mean;
    double m2;
} raw_entry;

static void put_table(wire_writer *w, uint32_t max_keys, uint8_t mode, uint8_t flag,
                      uint64_t claimed, const raw_entry *e, size_t n)
{
    wire_writer_init(w);
    wire_put_u32(w, max_keys);
    wire_put_u8(w, mode);
    wire_put_u8(w, flag);
    wire_put_u64(w, claimed);
    for (size_t k = 0; k < n; k++) {
        wire_put_u64(w, e[k].key);
        wire_put_u32(w, e[k].cell);
        wire_put_u64(w, e[k].n);
        if (mode == CROSSTAB_VALUES) {
            wire_put_f64(w, e[k].mean);
            wire_put_f64(w, e[k].m2);
        }
    }
}

static void expect_rejected(const wire_writer *w, const char *what)
{
    wire_reader r;
    wire_reader_init(&r, w->data, w->len);
    crosstab *t = crosstab_read(&r);
    cr_expect_null(t, "%s accepted", what);
    cr_expect(r.failed, "%s: reader not failed", what);
    crosstab_free(t);
}

static void expect_accepted(const wire_writer *w, const char *what)
{
    wire_reader r;
    wire_reader_init(&r, w->data, w->len);
    crosstab *t = crosstab_read(&r);
    cr_expect_not_null(t, "%s rejected", what);
    cr_expect_eq(r.pos, w->len, "%s: not all bytes read", what);
    crosstab_free(t);
}

static void expect_prefixes_rejected(const wire_writer *w)
{
    for (size_t n = 0; n < w->len; n++) {
        wire_reader r;
        wire_reader_init(&r, w->data, n);
        crosstab *t = crosstab_read(&r);
        cr_expect_null(t, "prefix of %zu bytes accepted", n);
        cr_expect(r.failed);
        crosstab_free(t);
    }
}

Test(crosstab, malformed_counts_rejected)
{
    const raw_entry ok[4] = {{1, 0, 2, 0, 0}, {1, 3, 1, 0, 0}, {9, 0, 4, 0, 0},
                             {UINT64_MAX, 2, 5, 0, 0}};
    wire_writer w;
    put_table(&w, 2, CROSSTAB_COUNTS, 1, 4, ok, 4);
    expect_accepted(&w, "well-formed table");
    expect_prefixes_rejected(&w);
    wire_writer_free(&w);

    put_table(&w, 1, CROSSTAB_COUNTS, 1, 4, ok, 4);
    expect_rejected(&w, "more keys than max_keys");
    wire_writer_free(&w);

    const raw_entry unsorted_keys[3] = {{9, 0, 4, 0, 0}, {1, 0, 2, 0, 0}, {1, 3, 1, 0, 0}};
    put_table(&w, 4, CROSSTAB_COUNTS, 0, 3, unsorted_keys, 3);
    expect_rejected(&w, "unsorted keys");
    wire_writer_free(&w);

    const raw_entry unsorted_cells[3] = {{1, 3, 2, 0, 0}, {1, 0, 1, 0, 0}, {9, 0, 4, 0, 0}};
    put_table(&w, 4, CROSSTAB_COUNTS, 0, 3, unsorted_cells, 3);
    expect_rejected(&w, "unsorted cells");
    wire_writer_free(&w);

    const raw_entry dup[3] = {{1, 0, 2, 0, 0}, {1, 0, 1, 0, 0}, {9, 0, 4, 0, 0}};
    put_table(&w, 4, CROSSTAB_COUNTS, 0, 3, dup, 3);
    expect_rejected(&w, "duplicate (key, cell)");
    wire_writer_free(&w);

    const raw_entry zero[2] = {{1, 0, 0, 0, 0}, {9, 0, 4, 0, 0}};
    put_table(&w, 4, CROSSTAB_COUNTS, 0, 2, zero, 2);
    expect_rejected(&w, "record with n 0");
    wire_writer_free(&w);

    put_table(&w, 4, CROSSTAB_COUNTS, 0, 4, ok, 4);
    expect_rejected(&w, "overflow record without the flag");
    wire_writer_free(&w);

    put_table(&w, 4, CROSSTAB_COUNTS, 1, 3, ok, 3);
    expect_rejected(&w, "flag without an overflow record");
    wire_writer_free(&w);

    put_table(&w, 4, CROSSTAB_COUNTS, 2, 4, ok, 4);
    expect_rejected(&w, "overflowed flag 2");
    wire_writer_free(&w);

    put_table(&w, 4, 3, 1, 4, ok, 4);
    expect_rejected(&w, "mode 3");
    wire_writer_free(&w);

    put_table(&w, 4, CROSSTAB_EMPTY, 1, 4, ok, 4);
    expect_rejected(&w, "empty mode with records");
    wire_writer_free(&w);

    put_table(&w, 4, CROSSTAB_COUNTS, 0, 0, ok, 0);
    expect_rejected(&w, "counts mode without records");
    wire_writer_free(&w);

    put_table(&w, 4, CROSSTAB_EMPTY, 1, 0, ok, 0);
    expect_rejected(&w, "empty table flagged overflowed");
    wire_writer_free(&w);

    put_table(&w, 4, CROSSTAB_EMPTY, 0, 0, ok, 0);
    expect_accepted(&w, "empty table");
    wire_writer_free(&w);

    put_table(&w, 4, CROSSTAB_COUNTS, 1, 3, ok, 4);
    expect_rejected(&w, "fewer records claimed than present"); /* then the flag mismatches */
    wire_writer_free(&w);

    put_table(&w, UINT32_MAX, CROSSTAB_COUNTS, 1, UINT64_MAX / 2, ok, 4);
    expect_rejected(&w, "record count far beyond the buffer");
    wire_writer_free(&w);
}

Test(crosstab, malformed_values_rejected)
{
    const raw_entry ok[3] = {{0, 0, 3, -1.25, 4.5}, {7, 0, 1, 2.0, 0.0},
                             {UINT64_MAX, 0, 2, 0.5, 0.125}};
    wire_writer w;
    put_table(&w, 2, CROSSTAB_VALUES, 1, 3, ok, 3);
    expect_accepted(&w, "well-formed table");
    expect_prefixes_rejected(&w);
    wire_writer_free(&w);

    raw_entry bad[3];
    memcpy(bad, ok, sizeof bad);
    bad[0].m2 = -1.0;
    put_table(&w, 2, CROSSTAB_VALUES, 1, 3, bad, 3);
    expect_rejected(&w, "negative m2");
    wire_writer_free(&w);

    memcpy(bad, ok, sizeof bad);
    bad[2].mean = NAN;
    put_table(&w, 2, CROSSTAB_VALUES, 1, 3, bad, 3);
    expect_rejected(&w, "NaN mean");
    wire_writer_free(&w);

    memcpy(bad, ok, sizeof bad);
    bad[1].m2 = INFINITY;
    put_table(&w, 2, CROSSTAB_VALUES, 1, 3, bad, 3);
    expect_rejected(&w, "infinite m2");
    wire_writer_free(&w);

    memcpy(bad, ok, sizeof bad);
    bad[1].key = 0;
    put_table(&w, 2, CROSSTAB_VALUES, 1, 3, bad, 3);
    expect_rejected(&w, "duplicate key");
    wire_writer_free(&w);

    /* The same bytes read as counts are a different length: rejected. */
    put_table(&w, 2, CROSSTAB_VALUES, 1, 3, ok, 3);
    w.data[4] = CROSSTAB_COUNTS;
    {
        wire_reader r;
        wire_reader_init(&r, w.data, w.len);
        crosstab *t = crosstab_read(&r);
        cr_expect(t == NULL || r.pos != w.len, "values bytes read fully as counts");
        crosstab_free(t);
    }
    wire_writer_free(&w);
}

/* ---- counts to values ---- */

Test(crosstab, counts_convert_to_regression_records_of_the_class_values)
{
    /* Outcomes 0..4 are classes 1..5 (cell 0 unused); as numbers they are
     * delays in hours, given here in the frame 30 h. */
    const double y[CLASSES + 1] = {0.0, -6.5, -2.0, 0.25, 4.0, 11.75};
    for (uint32_t max_keys = 30; max_keys <= 1030; max_keys += 1000) {
        crosstab *counts = crosstab_create(max_keys), *direct = crosstab_create(max_keys);
        for (unsigned i = 0; i < 8000; i++) {
            row r = make_row(28, i, 200);
            uint64_t k = depot_key(r.depot);
            cr_assert_eq(crosstab_add_count(counts, k, r.outcome + 1), 0);
            cr_assert_eq(crosstab_add_value(direct, k, y[r.outcome + 1]), 0);
        }
        crosstab *conv = crosstab_counts_to_values(counts, y, NULL, CLASSES + 1);
        cr_assert_not_null(conv);
        cr_expect_eq(crosstab_mode(conv), CROSSTAB_VALUES);
        cr_expect_eq(crosstab_max_keys(conv), max_keys);
        cr_expect_eq(crosstab_overflowed(conv), crosstab_overflowed(direct));
        cr_expect_eq(crosstab_keys(conv), crosstab_keys(direct));
        cr_assert_eq(crosstab_entries(conv), crosstab_entries(direct));
        for (size_t i = 0; i < crosstab_entries(conv); i++) {
            crosstab_entry a = crosstab_entry_at(conv, i), b = crosstab_entry_at(direct, i);
            cr_expect_eq(a.key, b.key);
            cr_expect_eq(a.n, b.n);
            cr_expect_leq(testutil_rel(a.mean, b.mean), 1e-13, "mean %.17g vs %.17g", a.mean,
                          b.mean);
            cr_expect_leq(fabs(a.m2 - b.m2), 1e-13 * (b.m2 > 1 ? b.m2 : 1), "m2 %.17g vs %.17g",
                          a.m2, b.m2);
        }
        expect_round_trip(conv);
        /* The result is a live regression table. */
        cr_expect_eq(crosstab_add_value(conv, depot_key(0), 1.0), 0);
        crosstab_free(counts); crosstab_free(direct); crosstab_free(conv);
    }
}

Test(crosstab, counts_to_values_refuses_bad_input)
{
    const double y[3] = {0.0, 1.0, NAN};
    crosstab *c = crosstab_create(8), *v = crosstab_create(8), *e = crosstab_create(8);
    cr_assert_eq(crosstab_add_count(c, 1, 1), 0);
    cr_assert_eq(crosstab_add_value(v, 1, 1.0), 0);
    crosstab *x = crosstab_counts_to_values(c, y, NULL, 1);
    cr_expect_null(x, "cell beyond the value list");
    crosstab_free(x);
    x = crosstab_counts_to_values(v, y, NULL, 2);
    cr_expect_null(x, "regression table");
    crosstab_free(x);
    cr_assert_eq(crosstab_add_count(c, 1, 2), 0);
    x = crosstab_counts_to_values(c, y, NULL, 3);
    cr_expect_null(x, "NaN class value");
    crosstab_free(x);
    x = crosstab_counts_to_values(e, y, NULL, 0);
    cr_assert_not_null(x);
    cr_expect_eq(crosstab_entries(x), 0);
    cr_expect_eq(crosstab_max_keys(x), 8);
    crosstab_free(x);
    crosstab_free(c); crosstab_free(v); crosstab_free(e);
}


/* Regression tables keep a record per (value, target cell); the per-value
 * moments are the combination of its cells. */
Test(crosstab, regression_cells_keep_value_by_target_counts)
{
    crosstab *t = crosstab_create(16);
    cr_assert_eq(crosstab_add_values_in(t, 7, 3, 1.0, 1), 0);
    cr_assert_eq(crosstab_add_values_in(t, 7, 3, 3.0, 1), 0);
    cr_assert_eq(crosstab_add_values_in(t, 7, 5, 10.0, 2), 0);
    cr_assert_eq(crosstab_entries(t), 2);
    crosstab_entry a = crosstab_lookup(t, 7, 3), b = crosstab_lookup(t, 7, 5);
    cr_assert_eq(a.n, 2);
    cr_assert_float_eq(a.mean, 2.0, 1e-15);
    cr_assert_float_eq(a.m2, 2.0, 1e-15);
    cr_assert_eq(b.n, 2);
    cr_assert_float_eq(b.mean, 10.0, 1e-15);
    cr_assert_float_eq(b.m2, 0.0, 1e-15);
    wire_writer w;
    wire_writer_init(&w);
    crosstab_write(t, &w);
    wire_reader r;
    wire_reader_init(&r, w.data, w.len);
    crosstab *back = crosstab_read(&r);
    cr_assert_not_null(back);
    cr_assert_eq(crosstab_entries(back), 2);
    crosstab_free(back);
    wire_writer_free(&w);
    crosstab_free(t);
}

Test(crosstab, reads_of_an_unsealed_table_equal_sealed_reads_and_write_nothing)
{
    /* Reference: the same table sealed (sheaf's own code, sealed path). */
    crosstab *a = crosstab_create(40), *b = crosstab_create(40);
    fill_values(a, 9, 3000, 60, 10.0);
    fill_values(b, 9, 3000, 60, 10.0);
    cr_assert(!crosstab_sealed(a));
    cr_assert_eq(crosstab_seal(b), 0);
    cr_assert(crosstab_sealed(b));
    for (size_t i = 0; i < crosstab_entries(a); i++) {
        crosstab_entry ea = crosstab_entry_at(a, i), eb = crosstab_entry_at(b, i);
        cr_expect(ea.key == eb.key && ea.n == eb.n && ea.mean == eb.mean, "entry %zu", i);
    }
    expect_same_bytes(a, b);
    /* A merge into a smaller table visits `from` in canonical order. */
    crosstab *into = crosstab_create(10), *into_b = crosstab_create(10);
    fill_values(into, 3, 50, 20, 10.0);
    fill_values(into_b, 3, 50, 20, 10.0);
    cr_assert_eq(crosstab_merge(into, a, NULL, 0, 0.0), 0);
    cr_assert_eq(crosstab_merge(into_b, b, NULL, 0, 0.0), 0);
    expect_same_bytes(into, into_b);
    cr_expect(!crosstab_sealed(a), "a read built the index of a const table");
    crosstab_free(a);
    crosstab_free(b);
    crosstab_free(into);
    crosstab_free(into_b);
}

Test(crosstab, batch_counts_equal_one_at_a_time)
{
    /* crosstab_add_counts against crosstab_add_count in a loop, rows of
     * class 0 skipped, over a key cap small enough to overflow: the same
     * file bytes. */
    uint64_t state = 0x9E3779B97F4A7C15ull;
    for (int round = 0; round < 20; round++) {
        crosstab *one = crosstab_create(round % 2 ? 50 : 5000);
        crosstab *many = crosstab_create(round % 2 ? 50 : 5000);
        uint64_t keys[256];
        uint32_t cells[256];
        for (int b = 0; b < 40; b++) {
            size_t n = 1 + (size_t)(state % 256);
            for (size_t i = 0; i < n; i++) {
                state ^= state << 13; state ^= state >> 7; state ^= state << 17;
                keys[i] = (state >> 8) % (round % 3 ? 300 : 3) * 0x100000001B3ull;
                cells[i] = (uint32_t)(state % 7); /* 0: no class */
                if (cells[i]) cr_assert_eq(crosstab_add_count(one, keys[i], cells[i]), 0);
            }
            cr_assert_eq(crosstab_add_counts(many, keys, cells, n), 0);
        }
        expect_same_bytes(one, many);
        crosstab_free(one);
        crosstab_free(many);
    }
}

Test(crosstab, batch_counts_of_few_pairs_equal_one_at_a_time)
{
    /* A table of few (key, cell) pairs takes a batch counted by pair first
     * (crosstab.c, add_aggregated): the same bytes as one row at a time,
     * with batches longer than a piece, rows of class 0, and a key cap of
     * 2 under 3 keys (new keys must reach the table in the rows' order, or
     * another key would be the one sent to the overflow record). */
    uint64_t state = 0x2545F4914F6CDD1Dull;
    for (int round = 0; round < 24; round++) {
        uint32_t cap = round % 3 == 0 ? 2 : round % 3 == 1 ? 3 : 1000;
        crosstab *one = crosstab_create(cap);
        crosstab *many = crosstab_create(cap);
        static uint64_t keys[1500];
        static uint32_t cells[1500];
        for (int b = 0; b < 30; b++) {
            size_t n = 1 + (size_t)(state % 1500);
            for (size_t i = 0; i < n; i++) {
                state ^= state << 13; state ^= state >> 7; state ^= state << 17;
                keys[i] = ((state >> 8) % (round % 2 ? 3 : 9) + 1) * 0x9E3779B97F4A7C15ull;
                cells[i] = (uint32_t)(state % 5); /* 0: no class */
                if (cells[i]) cr_assert_eq(crosstab_add_count(one, keys[i], cells[i]), 0);
            }
            cr_assert_eq(crosstab_add_counts(many, keys, cells, n), 0);
        }
        expect_same_bytes(one, many);
        crosstab_free(one);
        crosstab_free(many);
    }
}
