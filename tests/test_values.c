/* Tests for acc/values: exact counts, overflow, labels, canonical order,
 * top-k, merge and serialization.  Values are invented words and integers;
 * keys are XXH3_64bits of the text, as sheaf hashes raw field text.
 */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <xxhash.h>

#include "acc/values.h"
#include "testutil.h"

static uint64_t hash_text(const char *s) { return XXH3_64bits(s, strlen(s)); }

/* Adds the text of `word` and returns its key. */
static uint64_t add_word(values *v, const char *word)
{
    uint64_t h = hash_text(word);
    cr_assert_eq(values_add(v, h, word, strlen(word)), 0);
    return h;
}

/* "item-<i>" into buf. */
static const char *item(char *buf, size_t n, unsigned i)
{
    snprintf(buf, n, "item-%u", i);
    return buf;
}

/* Serializes v into w (caller frees). */
static void serialize(const values *v, wire_writer *w)
{
    wire_writer_init(w);
    values_write(v, w);
    cr_assert(!w->failed);
}

static void expect_same_bytes(const values *a, const values *b)
{
    wire_writer wa, wb;
    serialize(a, &wa);
    serialize(b, &wb);
    cr_expect_eq(wa.len, wb.len, "serialized lengths %zu vs %zu", wa.len, wb.len);
    if (wa.len == wb.len) cr_expect_eq(memcmp(wa.data, wb.data, wa.len), 0);
    wire_writer_free(&wa);
    wire_writer_free(&wb);
}

Test(values, repeated_values_counted_exactly)
{
    values *v = values_create(1024, 32);
    char buf[32];
    uint64_t want_total = 0;
    /* Value i occurs i + 1 times, interleaved over several rounds. */
    for (unsigned round = 0; round < 300; round++)
        for (unsigned i = 0; i < 300; i++)
            if (round <= i) { add_word(v, item(buf, sizeof buf, i)); want_total++; }
    cr_expect_eq(values_levels(v), 300);
    cr_expect_eq(values_total(v), want_total);
    cr_expect_not(values_overflowed(v));
    cr_expect_eq(values_overflow_total(v), 0);
    for (unsigned i = 0; i < 300; i++)
        cr_expect_eq(values_count_of(v, hash_text(item(buf, sizeof buf, i))), i + 1);
    cr_expect_eq(values_count_of(v, hash_text("never-seen")), 0);
    values_free(v);
}

Test(values, hash_zero_is_a_valid_key)
{
    values *v = values_create(8, 8);
    cr_expect_eq(values_count_of(v, 0), 0); /* empty, nothing allocated yet */
    cr_assert_eq(values_add(v, 1, "one", 3), 0);
    cr_expect_eq(values_count_of(v, 0), 0); /* empty slots do not read as key 0 */
    for (int i = 0; i < 5; i++) cr_assert_eq(values_add(v, 0, "zero", 4), 0);
    cr_expect_eq(values_count_of(v, 0), 5);
    cr_expect_eq(values_levels(v), 2);
    values_entry e = values_entry_at(v, 0);
    cr_expect_eq(e.hash, 0);
    cr_expect_eq(e.count, 5);
    cr_expect_eq(e.label_len, 4);
    cr_expect_eq(memcmp(e.label, "zero", 4), 0);
    values_free(v);
}

Test(values, structured_keys_sharing_low_bits_stay_exact)
{
    /* Keys that differ only in their top bits, and plain small integers. */
    values *v = values_create(4096, 0);
    for (uint64_t i = 0; i < 2000; i++) {
        cr_assert_eq(values_add(v, i << 53, NULL, 0), 0);
        cr_assert_eq(values_add(v, i, NULL, 0), 0);
        cr_assert_eq(values_add(v, i, NULL, 0), 0);
    }
    cr_expect_eq(values_levels(v), 3999); /* key 0 appears in both series */
    for (uint64_t i = 1; i < 2000; i++) {
        cr_expect_eq(values_count_of(v, i << 53), 1);
        cr_expect_eq(values_count_of(v, i), 2);
    }
    cr_expect_eq(values_count_of(v, 0), 3);
    values_free(v);
}

Test(values, grows_to_a_million_exact_levels)
{
    const uint32_t n = 1000000;
    values *v = values_create(n, 0);
    for (uint32_t i = 0; i < n; i++) {
        uint64_t h = XXH3_64bits(&i, sizeof i);
        cr_assert_eq(values_add(v, h, NULL, 0), 0);
    }
    cr_expect_eq(values_levels(v), n);
    cr_expect_not(values_overflowed(v));
    for (uint32_t i = 0; i < n; i += 997) {
        uint64_t h = XXH3_64bits(&i, sizeof i);
        cr_expect_eq(values_count_of(v, h), 1);
    }
    uint32_t extra = n;
    cr_assert_eq(values_add(v, XXH3_64bits(&extra, sizeof extra), NULL, 0), 0);
    cr_expect(values_overflowed(v));
    cr_expect_eq(values_levels(v), n);
    cr_expect_eq(values_total(v), (uint64_t)n + 1);
    values_free(v);
}

Test(values, overflow_after_max_levels_keeps_existing_exact)
{
    values *v = values_create(100, 16);
    char buf[32];
    /* 150 distinct values, each seen twice, in two passes. */
    for (int pass = 0; pass < 2; pass++)
        for (unsigned i = 0; i < 150; i++) add_word(v, item(buf, sizeof buf, i));
    /* 50 more occurrences of values already in the table, after overflow. */
    for (unsigned i = 0; i < 50; i++) add_word(v, item(buf, sizeof buf, i));

    cr_expect(values_overflowed(v));
    cr_expect_eq(values_levels(v), 100);
    cr_expect_eq(values_total(v), 350);
    cr_expect_eq(values_overflow_total(v), 100); /* values 100..149, twice each */
    for (unsigned i = 0; i < 100; i++)
        cr_expect_eq(values_count_of(v, hash_text(item(buf, sizeof buf, i))), i < 50 ? 3 : 2);
    for (unsigned i = 100; i < 150; i++)
        cr_expect_eq(values_count_of(v, hash_text(item(buf, sizeof buf, i))), 0);

    uint64_t table_sum = 0;
    for (uint32_t k = 0; k < values_levels(v); k++) table_sum += values_entry_at(v, k).count;
    cr_expect_eq(table_sum + values_overflow_total(v), values_total(v));
    values_free(v);
}

Test(values, zero_max_levels_counts_everything_in_overflow)
{
    values *v = values_create(0, 8);
    add_word(v, "a");
    add_word(v, "b");
    add_word(v, "a");
    cr_expect_eq(values_levels(v), 0);
    cr_expect(values_overflowed(v));
    cr_expect_eq(values_overflow_total(v), 3);
    cr_expect_eq(values_total(v), 3);
    values_free(v);
}

Test(values, labels_truncated_and_first_seen_wins)
{
    values *v = values_create(16, 4);
    cr_assert_eq(values_add(v, 42, "harbour", 7), 0);
    cr_assert_eq(values_add(v, 42, "quay", 4), 0);
    cr_assert_eq(values_add(v, 43, "ab", 2), 0);
    cr_assert_eq(values_add(v, 44, "", 0), 0);
    values_entry e = values_entry_at(v, 0);
    cr_expect_eq(e.hash, 42);
    cr_expect_eq(e.label_len, 4);
    cr_expect_eq(memcmp(e.label, "harb", 4), 0);
    e = values_entry_at(v, 1);
    cr_expect_eq(e.label_len, 2);
    cr_expect_eq(memcmp(e.label, "ab", 2), 0);
    cr_expect_eq(values_entry_at(v, 2).label_len, 0);
    values_free(v);

    values *none = values_create(16, 0);
    cr_assert_eq(values_add(none, 7, "dock", 4), 0);
    cr_expect_eq(values_entry_at(none, 0).label_len, 0);
    values_free(none);
}

Test(values, entries_in_hash_ascending_order_after_inserts)
{
    values *v = values_create(2048, 0);
    char buf[32];
    for (unsigned i = 0; i < 500; i++) add_word(v, item(buf, sizeof buf, i));
    for (uint32_t k = 1; k < values_levels(v); k++)
        cr_expect_lt(values_entry_at(v, k - 1).hash, values_entry_at(v, k).hash);
    /* New keys after a read of the order must show up in it. */
    for (unsigned i = 500; i < 1500; i++) add_word(v, item(buf, sizeof buf, i));
    cr_expect_eq(values_levels(v), 1500);
    for (uint32_t k = 1; k < values_levels(v); k++)
        cr_expect_lt(values_entry_at(v, k - 1).hash, values_entry_at(v, k).hash);
    values_entry past = values_entry_at(v, 1500);
    cr_expect_eq(past.count, 0);
    values_free(v);
}

Test(values, top_k_by_count_then_hash)
{
    values *v = values_create(64, 8);
    /* Keys 10..29; key 10 + i occurs (i % 5) + 1 times. */
    for (uint64_t i = 0; i < 20; i++)
        for (uint64_t c = 0; c <= i % 5; c++) cr_assert_eq(values_add(v, 10 + i, "x", 1), 0);

    values_entry out[32];
    size_t n = values_top(v, 6, out);
    cr_assert_eq(n, 6);
    /* Count 5: keys 14, 19, 24, 29; then count 4: keys 13, 18. */
    const uint64_t want[6] = {14, 19, 24, 29, 13, 18};
    for (size_t k = 0; k < 6; k++) cr_expect_eq(out[k].hash, want[k], "rank %zu", k);
    cr_expect_eq(out[0].count, 5);
    cr_expect_eq(out[5].count, 4);

    n = values_top(v, 32, out);
    cr_assert_eq(n, 20);
    for (size_t k = 1; k < n; k++)
        cr_expect(out[k - 1].count > out[k].count ||
                  (out[k - 1].count == out[k].count && out[k - 1].hash < out[k].hash));
    cr_expect_eq(values_top(v, 0, out), 0);
    values_free(v);
}

/* A stream of invented tokens with a skewed frequency: token t is drawn as
 * the square of a uniform variate over [0, span). */
static void fill_stream(values *v, uint64_t seed, unsigned rows, unsigned span)
{
    char buf[32];
    for (unsigned i = 0; i < rows; i++) {
        uint64_t x = XXH3_64bits_withSeed(&i, sizeof i, seed);
        double u = (double)(x >> 11) / 9007199254740992.0;
        add_word(v, item(buf, sizeof buf, (unsigned)(u * u * span)));
    }
}

Test(values, merge_without_overflow_equals_concatenated_input)
{
    values *a = values_create(1024, 16), *b = values_create(1024, 16);
    values *ab = values_create(1024, 16), *ba = values_create(1024, 16);
    fill_stream(a, 1, 5000, 400);
    fill_stream(b, 2, 3000, 700);
    fill_stream(ab, 1, 5000, 400);
    fill_stream(ab, 2, 3000, 700);
    fill_stream(ba, 2, 3000, 700);
    fill_stream(ba, 1, 5000, 400);
    cr_assert_not(values_overflowed(ab));

    values *m1 = values_create(1024, 16), *m2 = values_create(1024, 16);
    cr_assert_eq(values_merge(m1, a), 0);
    cr_assert_eq(values_merge(m1, b), 0);
    cr_assert_eq(values_merge(m2, b), 0);
    cr_assert_eq(values_merge(m2, a), 0);
    expect_same_bytes(m1, ab);
    expect_same_bytes(m2, ba);
    expect_same_bytes(m1, m2); /* same text per key, so labels agree too */

    cr_assert_eq(values_merge(a, b), 0); /* into a non-empty table */
    expect_same_bytes(a, ab);
    cr_expect_eq(values_total(a), 8000);

    values_free(a); values_free(b); values_free(ab); values_free(ba);
    values_free(m1); values_free(m2);
}

Test(values, merge_keeps_into_label_else_from_label)
{
    values *into = values_create(8, 8), *from = values_create(8, 3);
    cr_assert_eq(values_add(into, 5, "north", 5), 0);
    cr_assert_eq(values_add(from, 5, "south", 5), 0);
    cr_assert_eq(values_add(from, 6, "west", 4), 0);
    cr_assert_eq(values_merge(into, from), 0);
    values_entry e = values_entry_at(into, 0);
    cr_expect_eq(e.count, 2);
    cr_expect_eq(e.label_len, 5);
    cr_expect_eq(memcmp(e.label, "north", 5), 0);
    e = values_entry_at(into, 1);
    cr_expect_eq(e.label_len, 3); /* from's label was already cut to 3 bytes */
    cr_expect_eq(memcmp(e.label, "wes", 3), 0);
    values_free(into);
    values_free(from);

    /* from's label longer than into's limit: cut to into's label_bytes. */
    values *small = values_create(8, 2), *wide = values_create(8, 16);
    cr_assert_eq(values_add(wide, 9, "lighthouse", 10), 0);
    cr_assert_eq(values_merge(small, wide), 0);
    cr_expect_eq(values_entry_at(small, 0).label_len, 2);
    values_free(small);
    values_free(wide);
}

Test(values, merge_with_overflow_keeps_totals)
{
    values *a = values_create(50, 8), *b = values_create(50, 8);
    fill_stream(a, 3, 4000, 300); /* overflows: up to 300 tokens */
    fill_stream(b, 4, 2000, 300);
    cr_assert(values_overflowed(a));
    uint64_t total_a = values_total(a), total_b = values_total(b);
    uint64_t ovf_a = values_overflow_total(a);

    /* Counts of a's entries after the merge: a's count plus b's (exact when b
     * holds the key in its table). */
    uint64_t keys[50], want[50];
    uint32_t na = values_levels(a);
    for (uint32_t k = 0; k < na; k++) {
        values_entry e = values_entry_at(a, k);
        keys[k] = e.hash;
        want[k] = e.count + values_count_of(b, e.hash);
    }
    cr_assert_eq(values_merge(a, b), 0);
    cr_expect_eq(values_total(a), total_a + total_b);
    cr_expect(values_overflowed(a));
    cr_expect_eq(values_levels(a), 50);
    cr_expect_geq(values_overflow_total(a), ovf_a + values_overflow_total(b));
    for (uint32_t k = 0; k < na; k++) cr_expect_eq(values_count_of(a, keys[k]), want[k]);

    uint64_t table_sum = 0;
    for (uint32_t k = 0; k < values_levels(a); k++) table_sum += values_entry_at(a, k).count;
    cr_expect_eq(table_sum + values_overflow_total(a), values_total(a));
    values_free(a);
    values_free(b);
}

Test(values, merge_into_smaller_table_inserts_lowest_hashes_first)
{
    values *into = values_create(10, 0), *from = values_create(100, 0);
    for (uint64_t h = 1; h <= 30; h++) cr_assert_eq(values_add(from, h * 1000, NULL, 0), 0);
    cr_assert_eq(values_merge(into, from), 0);
    cr_expect_eq(values_levels(into), 10);
    for (uint32_t k = 0; k < 10; k++) cr_expect_eq(values_entry_at(into, k).hash, (k + 1) * 1000);
    cr_expect_eq(values_overflow_total(into), 20);
    cr_expect_eq(values_total(into), 30);
    cr_expect(values_overflowed(into));
    values_free(into);
    values_free(from);
}

Test(values, merge_with_itself_doubles_counts)
{
    values *v = values_create(4, 8);
    for (int i = 0; i < 3; i++) add_word(v, "tide");
    add_word(v, "reef");
    for (int i = 0; i < 6; i++) { char w[2] = {(char)('a' + i), 0}; add_word(v, w); }
    uint64_t total = values_total(v), ovf = values_overflow_total(v);
    cr_assert_eq(values_merge(v, v), 0);
    cr_expect_eq(values_count_of(v, hash_text("tide")), 6);
    cr_expect_eq(values_total(v), 2 * total);
    cr_expect_eq(values_overflow_total(v), 2 * ovf);
    values_free(v);
}

Test(values, reset_empties_and_table_stays_usable)
{
    values *v = values_create(20, 8);
    char buf[32];
    for (unsigned i = 0; i < 40; i++) add_word(v, item(buf, sizeof buf, i));
    values_reset(v);
    cr_expect_eq(values_levels(v), 0);
    cr_expect_eq(values_total(v), 0);
    cr_expect_not(values_overflowed(v));
    cr_expect_eq(values_count_of(v, hash_text(item(buf, sizeof buf, 3))), 0);

    values *fresh = values_create(20, 8);
    for (unsigned i = 5; i < 15; i++) {
        add_word(v, item(buf, sizeof buf, i));
        add_word(fresh, item(buf, sizeof buf, i));
    }
    expect_same_bytes(v, fresh);
    values_free(v);
    values_free(fresh);
}

/* Writes v, reads it back, and checks the copy writes the same bytes. */
static void expect_round_trip(const values *v)
{
    wire_writer w;
    serialize(v, &w);
    wire_reader r;
    wire_reader_init(&r, w.data, w.len);
    values *back = values_read(&r);
    cr_assert_not_null(back);
    cr_expect_not(r.failed);
    cr_expect_eq(r.pos, w.len);
    cr_expect_eq(values_levels(back), values_levels(v));
    cr_expect_eq(values_max_levels(back), values_max_levels(v));
    cr_expect_eq(values_total(back), values_total(v));
    cr_expect_eq(values_overflow_total(back), values_overflow_total(v));
    cr_expect_eq(values_overflowed(back), values_overflowed(v));
    for (uint32_t k = 0; k < values_levels(v); k++) {
        values_entry a = values_entry_at(v, k), b = values_entry_at(back, k);
        cr_expect_eq(a.hash, b.hash);
        cr_expect_eq(a.count, b.count);
        cr_expect_eq(values_count_of(back, a.hash), a.count);
        cr_expect_eq(a.label_len, b.label_len);
        cr_expect_eq(memcmp(a.label, b.label, a.label_len), 0);
    }
    expect_same_bytes(v, back);
    /* The copy is a live table: it takes new values. */
    cr_expect_eq(values_add(back, 12345, "new", 3), 0);
    values_free(back);
    wire_writer_free(&w);
}

Test(values, round_trip_empty_exact_and_overflowed)
{
    values *empty = values_create(1024, 32);
    expect_round_trip(empty);
    values_free(empty);

    values *exact = values_create(1024, 6);
    fill_stream(exact, 5, 3000, 500);
    cr_assert_eq(values_add(exact, 0, "zero-key", 8), 0);
    expect_round_trip(exact);
    values_free(exact);

    values *full = values_create(40, 6);
    fill_stream(full, 6, 3000, 500);
    cr_assert(values_overflowed(full));
    expect_round_trip(full);
    values_free(full);
}

/* Builds a serialized table by hand: header, then entries (hash, count,
 * label), then 64 overflow slots all equal to `slot_value`. */
typedef struct {
    uint64_t hash;
    uint64_t count;
    const char *label;
} raw_entry;

static void put_table(wire_writer *w, uint32_t max_levels, uint32_t label_bytes, uint8_t flag,
                      uint32_t claimed, const raw_entry *e, size_t n, uint64_t slot_value)
{
    wire_writer_init(w);
    wire_put_u32(w, max_levels);
    wire_put_u32(w, label_bytes);
    wire_put_u8(w, flag);
    wire_put_u32(w, claimed);
    for (size_t k = 0; k < n; k++) {
        wire_put_u64(w, e[k].hash);
        wire_put_u64(w, e[k].count);
        wire_put_str(w, e[k].label, strlen(e[k].label));
    }
    for (int s = 0; s < VALUES_OVERFLOW_SLOTS; s++) wire_put_u64(w, slot_value);
}

static void expect_rejected(const wire_writer *w, const char *what)
{
    wire_reader r;
    wire_reader_init(&r, w->data, w->len);
    values *v = values_read(&r);
    cr_expect_null(v, "%s accepted", what);
    cr_expect(r.failed, "%s: reader not failed", what);
    values_free(v);
}

static void expect_accepted(const wire_writer *w, const char *what)
{
    wire_reader r;
    wire_reader_init(&r, w->data, w->len);
    values *v = values_read(&r);
    cr_expect_not_null(v, "%s rejected", what);
    values_free(v);
}

Test(values, malformed_input_rejected_without_crash)
{
    const raw_entry ok[3] = {{1, 2, "ab"}, {5, 1, ""}, {9, 4, "quay"}};
    wire_writer w;

    put_table(&w, 3, 4, 0, 3, ok, 3, 0);
    expect_accepted(&w, "well-formed table");
    /* Every proper prefix is a truncated buffer. */
    for (size_t n = 0; n < w.len; n++) {
        wire_reader r;
        wire_reader_init(&r, w.data, n);
        values *v = values_read(&r);
        cr_expect_null(v, "prefix of %zu bytes accepted", n);
        values_free(v);
    }
    wire_writer_free(&w);

    put_table(&w, 2, 4, 0, 3, ok, 3, 0);
    expect_rejected(&w, "more entries than max_levels");
    wire_writer_free(&w);

    put_table(&w, 3, 3, 0, 3, ok, 3, 0);
    expect_rejected(&w, "label longer than label_bytes");
    wire_writer_free(&w);

    const raw_entry unsorted[3] = {{1, 2, "ab"}, {9, 4, "quay"}, {5, 1, ""}};
    put_table(&w, 3, 4, 0, 3, unsorted, 3, 0);
    expect_rejected(&w, "unsorted entries");
    wire_writer_free(&w);

    const raw_entry dup[3] = {{1, 2, "ab"}, {5, 1, ""}, {5, 4, "quay"}};
    put_table(&w, 3, 4, 0, 3, dup, 3, 0);
    expect_rejected(&w, "duplicate hash");
    wire_writer_free(&w);

    const raw_entry zero_count[1] = {{1, 0, "ab"}};
    put_table(&w, 3, 4, 0, 1, zero_count, 1, 0);
    expect_rejected(&w, "entry with count 0");
    wire_writer_free(&w);

    put_table(&w, 3, 4, 2, 3, ok, 3, 0);
    expect_rejected(&w, "overflowed flag 2");
    wire_writer_free(&w);

    put_table(&w, 3, 4, 0, 3, ok, 3, 1);
    expect_rejected(&w, "overflow counts without the flag");
    wire_writer_free(&w);

    put_table(&w, 3, 4, 1, 3, ok, 3, 0);
    expect_rejected(&w, "flag without overflow counts");
    wire_writer_free(&w);

    put_table(&w, 3, 4, 1, 3, ok, 3, 1);
    expect_accepted(&w, "overflowed table");
    wire_writer_free(&w);

    put_table(&w, UINT32_MAX, 4, 0, UINT32_MAX, ok, 3, 0);
    expect_rejected(&w, "entry count far beyond the buffer");
    wire_writer_free(&w);

    const raw_entry huge[2] = {{1, UINT64_MAX, ""}, {2, 5, ""}};
    put_table(&w, 3, 4, 0, 2, huge, 2, 0);
    expect_rejected(&w, "total count wraps around");
    wire_writer_free(&w);

    put_table(&w, 3, 4, 0, 2, ok, 3, 0);
    expect_rejected(&w, "fewer entries claimed than present");
    wire_writer_free(&w);
}

/* Writes v canonically into a fresh buffer; returns its length. */
static size_t serialized(const values *v, unsigned char **out)
{
    wire_writer w;
    wire_writer_init(&w);
    values_write(v, &w);
    cr_assert(!w.failed);
    *out = w.data;
    return w.len;
}

Test(values, batched_adds_equal_single_adds_through_overflow)
{
    /* values_add_many (with its filter for full tables, and stopping at the
     * first overflow) must build the same table as values_add cell by
     * cell: a skewed stream where early keys recur and most later ones are
     * new, fed in uneven batches, then reset and fed again. */
    values *one = values_create(64, 16), *many = values_create(64, 16);
    cr_assert(one && many);
    for (int round = 0; round < 2; round++) {
        enum { N = 20000 };
        static uint64_t hash[N];
        static const char *text[N];
        static uint32_t len[N];
        static char words[N][16];
        uint64_t x = 0x9E3779B97F4A7C15ull + (uint64_t)round;
        for (int i = 0; i < N; i++) {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            unsigned k = x % 4 == 0 ? (unsigned)(x >> 8) % 40 : (unsigned)(x >> 8) % 100000;
            snprintf(words[i], sizeof words[i], "w%u", k);
            text[i] = words[i];
            len[i] = (uint32_t)strlen(words[i]);
            hash[i] = hash_text(words[i]);
            cr_assert_eq(values_add(one, hash[i], text[i], len[i]), 0);
        }
        int stopped = 0;
        for (size_t i = 0, step = 1; i < N; step = step * 3 % 1000 + 1) {
            size_t m = N - i < step ? N - i : step;
            long k = values_add_many(many, hash + i, text + i, len + i, m, !stopped);
            cr_assert_gt(k, 0);
            if (values_overflowed(many)) stopped = 1;
            i += (size_t)k;
        }
        cr_assert(values_overflowed(one) && values_overflowed(many));
        unsigned char *a, *b;
        size_t na = serialized(one, &a), nb = serialized(many, &b);
        cr_assert_eq(na, nb);
        cr_assert_eq(memcmp(a, b, na), 0, "round %d: tables differ", round);
        free(a);
        free(b);
        values_reset(one);
        values_reset(many);
    }
    values_free(one);
    values_free(many);
}

Test(values, reads_of_an_unsealed_table_equal_sealed_reads_and_write_nothing)
{
    /* Reference: the same table sealed (sheaf's own code, sealed path). */
    values *a = values_create(64, 16), *b = values_create(64, 16);
    char buf[32];
    for (unsigned i = 0; i < 200; i++) {
        add_word(a, item(buf, sizeof buf, i * 7 % 90));
        add_word(b, item(buf, sizeof buf, i * 7 % 90));
    }
    cr_assert(!values_sealed(a));
    cr_assert_eq(values_seal(b), 0);
    cr_assert(values_sealed(b));
    for (uint32_t i = 0; i < values_levels(a); i++)
        cr_expect_eq(values_entry_at(a, i).hash, values_entry_at(b, i).hash, "entry %u", i);
    expect_same_bytes(a, b);
    values *into = values_create(8, 16);
    add_word(into, "seed");
    cr_assert_eq(values_merge(into, a), 0); /* canonical visit of an unsealed `from` */
    cr_expect(!values_sealed(a), "a read built the index of a const table");
    values *into_b = values_create(8, 16);
    add_word(into_b, "seed");
    cr_assert_eq(values_merge(into_b, b), 0);
    expect_same_bytes(into, into_b);
    values_free(a);
    values_free(b);
    values_free(into);
    values_free(into_b);
}
