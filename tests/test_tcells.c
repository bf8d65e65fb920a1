/* tcells: the cells of a continuous target.
 *
 * References: keys worked by hand from the bits of the doubles (IEEE 754
 * binary64: 1.0 is 0x3FF0000000000000), and the table's own invariant: the
 * level is the least at which the values occupy at most the budget, for any
 * order, and a merge reaches what one table of all the values reaches.
 * Random inputs come from a fixed-seed xorshift64 generator.
 */
#include <criterion/criterion.h>

#include <math.h>
#include <stdint.h>
#include <stdlib.h>
#include <string.h>

#include "summary/tcells.h"

static uint64_t next(uint64_t *s)
{
    *s ^= *s << 13, *s ^= *s >> 7, *s ^= *s << 17;
    return *s;
}

static double uniform(uint64_t *s) { return (double)(next(s) >> 11) * 0x1p-53; }

/* The level at which the values take at most the budget, by brute force. */
static int least_level(const double *y, size_t n)
{
    for (int level = 0; level < TCELLS_MAX_LEVEL; level++) {
        int64_t *k = malloc(n * sizeof *k);
        for (size_t i = 0; i < n; i++) k[i] = tcells_key(y[i], level);
        size_t d = 0;
        for (size_t i = 0; i < n; i++) {
            size_t j = 0;
            while (j < i && k[j] != k[i]) j++;
            d += j == i;
            if (d > SUMMARY_TARGET_CELLS) break;
        }
        free(k);
        if (d <= SUMMARY_TARGET_CELLS) return level;
    }
    return TCELLS_MAX_LEVEL;
}

Test(tcells, keys_come_from_the_bits_and_are_monotone)
{
    /* 1.0 = 0x3FF0000000000000: at level 52 its key is 0x3FF + 1. */
    cr_assert_eq(tcells_key(1.0, 52), 0x3FF + 1);
    cr_assert_eq(tcells_key(-1.0, 52), -(0x3FF + 1));
    cr_assert_eq(tcells_key(0.0, 10), 0);
    cr_assert_eq(tcells_key(1.0, 63), 1);
    cr_assert_eq(tcells_key(1e300, 63), 1);
    static const double v[] = {-1e9, -2.5, -1e-300, 0, 1e-300, 0.1, 1, 1000, 1000.0001, 1e300};
    for (int level = 0; level <= TCELLS_MAX_LEVEL; level += 7)
        for (size_t i = 1; i < sizeof v / sizeof *v; i++)
            cr_assert_leq(tcells_key(v[i - 1], level), tcells_key(v[i], level));
}

Test(tcells, an_offset_target_keeps_its_own_resolution)
{
    /* 1000 + x, x uniform in [0, 1.3): a relative spread of 0.13%, which the
     * fixed cells of format versions 1 and 2 (4 an octave) held in one. */
    uint64_t s = 17;
    tcells t;
    tcells_init(&t);
    enum { N = 5000 };
    static double y[N];
    for (size_t i = 0; i < N; i++) {
        y[i] = 1000 + 1.3 * uniform(&s);
        cr_assert_neq(tcells_cell(&t, y[i]), 0);
    }
    cr_assert_eq(tcells_canonical(&t), 0);
    cr_assert_gt(t.n, SUMMARY_TARGET_CELLS / 2, "%u cells", t.n);
    cr_assert_leq(t.n, SUMMARY_TARGET_CELLS);
    cr_assert_eq(t.level, least_level(y, N));
    for (uint32_t c = 1; c < t.n; c++) cr_assert_lt(t.key[c - 1], t.key[c]);
    /* each value's cell holds its key */
    for (size_t i = 0; i < N; i += 97)
        cr_assert_eq(t.key[tcells_cell(&t, y[i]) - 1], tcells_key(y[i], t.level));
    tcells_free(&t);
}

Test(tcells, epoch_maps_carry_old_cells_to_the_current_numbering)
{
    uint64_t s = 5;
    tcells t;
    tcells_init(&t);
    enum { N = 3000 };
    static double y[N];
    static uint32_t cell[N], epoch[N];
    for (size_t i = 0; i < N; i++) {
        y[i] = 25 + 2 * uniform(&s) - 1; /* 25 +/- 1 */
        cell[i] = tcells_cell(&t, y[i]);
        epoch[i] = t.epoch;
    }
    cr_assert_eq(tcells_canonical(&t), 0);
    cr_assert_gt(t.epoch, 1);
    /* every value's cell at its epoch maps to its cell now */
    uint32_t map[SUMMARY_TARGET_CELLS + 2], len;
    for (size_t i = 0; i < N; i++) {
        tcells_map_since(&t, epoch[i], t.epoch, map, &len);
        cr_assert_lt(cell[i], len);
        cr_assert_eq(map[cell[i]], tcells_cell(&t, y[i]), "value %zu", i);
    }
    tcells_free(&t);
}

Test(tcells, order_and_merges_reach_the_table_of_all_values)
{
    uint64_t s = 99;
    enum { N = 4000 };
    static double y[N];
    for (size_t i = 0; i < N; i++) y[i] = exp(6 * uniform(&s)) * (i % 5 ? 1 : -1);
    tcells whole, rev, a, b;
    tcells_init(&whole), tcells_init(&rev), tcells_init(&a), tcells_init(&b);
    for (size_t i = 0; i < N; i++) {
        tcells_cell(&whole, y[i]);
        tcells_cell(&rev, y[N - 1 - i]);
        tcells_cell(i < N / 3 ? &a : &b, y[i]);
    }
    tcells_canonical(&whole), tcells_canonical(&rev), tcells_canonical(&a), tcells_canonical(&b);
    cr_assert_eq(whole.level, least_level(y, N));
    cr_assert_eq(rev.level, whole.level);
    cr_assert_eq(rev.n, whole.n);
    cr_assert(memcmp(rev.key, whole.key, whole.n * sizeof *whole.key) == 0);
    uint32_t am[SUMMARY_TARGET_CELLS + 2], bm[SUMMARY_TARGET_CELLS + 2];
    int64_t akeys[SUMMARY_TARGET_CELLS + 1], bkeys[SUMMARY_TARGET_CELLS + 1];
    uint32_t an = a.n, bn = b.n;
    int alevel = a.level, blevel = b.level;
    memcpy(akeys, a.key, an * sizeof *akeys);
    memcpy(bkeys, b.key, bn * sizeof *bkeys);
    cr_assert_eq(tcells_unite(&a, &b, am, bm), 0);
    cr_assert_eq(a.level, whole.level);
    cr_assert_eq(a.n, whole.n);
    cr_assert(memcmp(a.key, whole.key, whole.n * sizeof *whole.key) == 0);
    /* the maps send each side's old key to the cell of its key now */
    for (uint32_t c = 0; c < an; c++) {
        int64_t k = akeys[c];
        for (int l = alevel; l < a.level; l++) k = k > 0 ? ((k - 1) >> 1) + 1 : k < 0 ? -(((-k - 1) >> 1) + 1) : 0;
        cr_assert_eq(a.key[am[c + 1] - 1], k);
    }
    for (uint32_t c = 0; c < bn; c++) {
        int64_t k = bkeys[c];
        for (int l = blevel; l < a.level; l++) k = k > 0 ? ((k - 1) >> 1) + 1 : k < 0 ? -(((-k - 1) >> 1) + 1) : 0;
        cr_assert_eq(a.key[bm[c + 1] - 1], k);
    }
    tcells_free(&whole), tcells_free(&rev), tcells_free(&a), tcells_free(&b);
}

Test(tcells, reading_refuses_unordered_or_out_of_range_keys)
{
    tcells t;
    tcells_init(&t);
    for (int i = 0; i < 10; i++) tcells_cell(&t, i * 1.5);
    tcells_canonical(&t);
    wire_writer w;
    wire_writer_init(&w);
    tcells_write(&t, &w);
    tcells u;
    wire_reader r;
    wire_reader_init(&r, w.data, w.len);
    cr_assert_eq(tcells_read(&u, &r), 0);
    cr_assert_eq(u.n, 10);
    cr_assert(memcmp(u.key, t.key, 10 * sizeof *t.key) == 0);
    /* the second key made equal to the first */
    memcpy(w.data + 5 + 8, w.data + 5, 8);
    wire_reader_init(&r, w.data, w.len);
    cr_assert_eq(tcells_read(&u, &r), -1);
    /* level 63 admits only -1, 0, 1 */
    w.data[0] = 63;
    wire_reader_init(&r, w.data, w.len);
    cr_assert_eq(tcells_read(&u, &r), -1);
    wire_writer_free(&w);
    tcells_free(&t);
}
