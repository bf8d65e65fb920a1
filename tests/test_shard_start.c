/* Tests for io/shard_start: the four quote modes run side by side, their
 * transfer maps, and the guess of a shard's first record.
 *
 * The reference is a byte-at-a-time machine written here from the quote
 * rule's text in io/csv.h (a quote opens quotes only at a field's first
 * byte; inside quotes "" is a quote and a lone quote closes; a newline
 * outside quotes ends the record), not csv_quote_scan.  Random files come
 * from a fixed-seed xorshift64 generator (Marsaglia 2003) over an alphabet
 * rich in quotes, delimiters and newlines, so every run sees the same bytes.
 */
#include <criterion/criterion.h>

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/csv.h"
#include "io/shard_start.h"

static uint64_t rng = 88172645463325252ull;
static uint64_t next_random(void)
{
    rng ^= rng << 13;
    rng ^= rng >> 7;
    rng ^= rng << 17;
    return rng;
}

/* The rule, one byte: the mode after ch from mode m; *end set when ch ends a record. */
static csv_quote_mode step(csv_quote_mode m, char ch, char d, int *end)
{
    *end = 0;
    switch (m) {
    case CSV_IN_QUOTES: return ch == '"' ? CSV_QUOTE_SEEN : CSV_IN_QUOTES;
    case CSV_QUOTE_SEEN:
        if (ch == '"') return CSV_IN_QUOTES;
        break;
    case CSV_AT_FIELD:
        if (ch == '"') return CSV_IN_QUOTES;
        break;
    default: break;
    }
    if (ch == d) return CSV_AT_FIELD;
    if (ch == '\n') { *end = 1; return CSV_AT_FIELD; }
    return CSV_IN_FIELD;
}

static csv_quote_mode run(csv_quote_mode m, const char *p, size_t n, char d)
{
    int end;
    for (size_t i = 0; i < n; i++) m = step(m, p[i], d, &end);
    return m;
}

/* The offset after the first record end from mode m, or n + 1. */
static size_t first_end(csv_quote_mode m, const char *p, size_t n, char d)
{
    int end;
    for (size_t i = 0; i < n; i++) {
        m = step(m, p[i], d, &end);
        if (end) return i + 1;
    }
    return n + 1;
}

static void random_bytes(char *p, size_t n)
{
    static const char alphabet[] = "\"\",,,\n\nab1 \r";
    for (size_t i = 0; i < n; i++) p[i] = alphabet[next_random() % (sizeof alphabet - 1)];
}

Test(shard_modes, every_mode_follows_the_rule_across_any_split)
{
    char buf[4096];
    for (int trial = 0; trial < 200; trial++) {
        size_t n = 1 + next_random() % sizeof buf;
        random_bytes(buf, n);
        shard_modes t;
        shard_modes_init(&t, ',');
        for (size_t at = 0; at < n;) {
            size_t k = 1 + next_random() % 97;
            if (k > n - at) k = n - at;
            shard_modes_scan(&t, buf + at, k);
            at += k;
            for (int m = 0; m < 4; m++)
                cr_assert_eq(t.q[m].mode, run((csv_quote_mode)m, buf, at, ','),
                             "trial %d, mode %d after %zu bytes", trial, m, at);
        }
        uint8_t map = shard_modes_map(&t);
        for (int m = 0; m < 4; m++)
            cr_assert_eq(shard_map_apply(map, (csv_quote_mode)m),
                         run((csv_quote_mode)m, buf, n, ','));
    }
}

Test(shard_modes, maps_compose_along_the_bytes)
{
    char buf[2048];
    for (int trial = 0; trial < 200; trial++) {
        size_t n = 2 + next_random() % (sizeof buf - 2), cut = 1 + next_random() % (n - 1);
        random_bytes(buf, n);
        shard_modes a, b, all;
        shard_modes_init(&a, ',');
        shard_modes_init(&b, ',');
        shard_modes_init(&all, ',');
        shard_modes_scan(&a, buf, cut);
        shard_modes_scan(&b, buf + cut, n - cut);
        shard_modes_scan(&all, buf, n);
        cr_assert_eq(shard_map_then(shard_modes_map(&a), shard_modes_map(&b)),
                     shard_modes_map(&all));
    }
    shard_modes none;
    shard_modes_init(&none, ',');
    cr_assert_eq(shard_modes_map(&none), SHARD_MAP_IDENTITY);
}

Test(shard_count, records_by_field_count)
{
    uint64_t match, other, odd;
    const char *w = "a,b,c\n\"x,\n\"\"y\",2,3\n\n\r\n1,2\nlast,1,2";
    shard_count_records(w, strlen(w), 0, ',', 3, &match, &other, &odd);
    cr_assert_eq(match, 2); /* the blank and CR-only lines are neither */
    cr_assert_eq(other, 1);
    cr_assert_eq(odd, 0);
    shard_count_records(w, strlen(w), 1, ',', 3, &match, &other, &odd);
    cr_assert_eq(match, 3); /* the unterminated last line counts at the end of the file */
    const char *v = "5'10\",\"a\"b,c\n";
    cr_assert_eq(shard_count_records(v, strlen(v), 0, ',', 3, &match, &other, &odd),
                 CSV_AT_FIELD);
    cr_assert_eq(odd, 2); /* the inch mark, and b after a closing quote */
    cr_assert_eq(match, 1);
}

Test(shard_guess, unquoted_text_is_speculated_with_the_modes_outside_quotes)
{
    const char *w = "x,y\n1,2,3\n4,5,6\n7,8,9\n";
    shard_guess g;
    shard_start_guess(w, strlen(w), 0, ',', 3, 0, &g);
    cr_assert(g.decided);
    cr_assert_eq(g.rule, SHARD_START_SPECULATED); /* in quotes, no record ends in the window */
    cr_assert_eq(g.offset, 4);
    cr_assert_eq(g.modes, 1u << CSV_AT_FIELD | 1u << CSV_IN_FIELD | 1u << CSV_QUOTE_SEEN);
}

Test(shard_guess, at_the_end_of_the_file_no_record_end_means_no_record)
{
    /* Every mode agrees on "no record starts here": certain, at the end. */
    const char *z = "\"abc";
    shard_guess g;
    shard_start_guess(z, strlen(z), 1, ',', 3, 0, &g);
    cr_assert(g.decided);
    cr_assert_eq(g.rule, SHARD_START_CERTAIN);
    cr_assert_eq(g.offset, strlen(z));
    cr_assert_eq(g.modes, 15);
}

Test(shard_guess, a_window_without_a_record_end_is_undecided)
{
    const char *w = "\"a long quoted field, 1,2,3\n4,5,6\n";
    shard_guess g;
    /* A window of 20 bytes holds no newline at all. */
    shard_start_guess(w, 20, 0, ',', 3, 0, &g);
    cr_assert_not(g.decided);
    cr_assert(strlen(g.why) > 0);
}

Test(shard_guess, a_fake_record_inside_quotes_loses_to_the_true_start)
{
    /* Inside a quoted field: a whole fake record with the header's field
     * count, then the field closes and its record ends.  Outside quotes the
     * fake record matches (+1), the tail `5",6` does not (-1) and holds a
     * quote read as text (-2): the true start, after it, wins. */
    const char *w = "\n2,3,4\n5\",6\n7,8,9\n10,11,12\n";
    shard_guess g;
    shard_start_guess(w, strlen(w), 0, ',', 3, 0, &g);
    cr_assert(g.decided);
    cr_assert_eq(g.rule, SHARD_START_SPECULATED);
    cr_assert_eq(g.offset, 12, "offset %zu", g.offset);
    cr_assert_eq(g.modes, 1u << CSV_IN_QUOTES);
    shard_start_guess(w, strlen(w), 0, ',', 3, 1, &g); /* the test hook: the worst */
    cr_assert(g.decided);
    cr_assert_neq(g.offset, 12);
}

Test(shard_guess, no_clearly_better_candidate_is_undecided)
{
    /* No record has the header's 5 fields: nothing to tell the candidates
     * apart (the one in quotes has no record end in the window). */
    const char *w = "x\ny\nz\n";
    shard_guess g;
    shard_start_guess(w, strlen(w), 0, ',', 5, 0, &g);
    cr_assert_not(g.decided);
    cr_assert(strlen(g.why) > 0);
}

Test(shard_guess, the_modes_mask_is_exactly_the_modes_giving_the_start)
{
    char buf[1024];
    int certain = 0, speculated = 0;
    for (int trial = 0; trial < 2000; trial++) {
        size_t n = 1 + next_random() % sizeof buf;
        random_bytes(buf, n);
        int at_end = (int)(next_random() & 1);
        shard_guess g;
        shard_start_guess(buf, n, at_end, ',', 2, 0, &g);
        if (!g.decided) continue;
        if (g.rule == SHARD_START_CERTAIN) {
            certain++;
            cr_assert_eq(g.modes, 15);
        } else {
            speculated++;
        }
        for (int m = 0; m < 4; m++) {
            size_t e = first_end((csv_quote_mode)m, buf, n, ',');
            if (e > n) e = at_end ? n : (size_t)-1;
            cr_assert_eq(!!(g.modes >> m & 1), e == g.offset, "trial %d mode %d", trial, m);
        }
    }
    cr_assert_gt(certain, 0); /* both kinds of decision were met */
    cr_assert_gt(speculated, 0);
}

/* ---- byte-range shards of whole files, in process ------------------------ */

#include <unistd.h>

#include "summary/scan.h"
#include "summary/shards.h"
#include "summary/summary.h"

/* Hard files for a shard start, each made here.  fake: quoted fields that
 * hold whole records with the header's field count, delimiters, doubled
 * quotes and newlines; long: a quoted field of 3000 bytes that spans range
 * boundaries; plain: no quotes at all; crlf; bom; blank lines; header only. */
static char *hard_file(const char *kind, size_t *len)
{
    size_t cap = 1 << 20, n = 0;
    char *p = malloc(cap);
    cr_assert(p);
#define PUT(...) (n += (size_t)snprintf(p + n, cap - n, __VA_ARGS__))
    if (!strcmp(kind, "bom")) PUT("\xEF\xBB\xBF");
    const char *eol = !strcmp(kind, "crlf") ? "\r\n" : "\n";
    PUT("id,note,value%s", eol);
    if (!strcmp(kind, "header")) { *len = n; return p; }
    for (int i = 0; i < 400; i++) {
        uint64_t r = next_random() % 10;
        if (!strcmp(kind, "plain") || !strcmp(kind, "crlf") || !strcmp(kind, "bom")) {
            PUT("%d,note %d,%d%s", i, (int)r, i * 7, eol);
        } else if (!strcmp(kind, "blank")) {
            PUT("%d,\"x\ny\",%d\n%s", i, i, r < 3 ? "\n\n" : "");
        } else if (!strcmp(kind, "long") && i % 50 == 7) {
            PUT("%d,\"", i);
            for (int k = 0; k < 100; k++) PUT("%d,%d,\"\"%d\"\"\n", k, k + 1, k + 2);
            PUT("\",%d\n", i);
        } else if (r < 3) {
            PUT("%d,\"a,b\n%d,fake,%d\nc\",%d\n", i, i, i, i); /* a fake record inside quotes */
        } else if (r < 5) {
            PUT("%d,\"say \"\"hi\"\",\n,,\",%d\n", i, i);
        } else {
            PUT("%d,plain %d,%d\n", i, i, i);
        }
    }
#undef PUT
    *len = n;
    return p;
}

static uint64_t rows_of(const summary *s) { return s->rows; }

/* Scans path whole and in N shards for N = 1..50, merging each N's shards. */
static void every_record_once(const char *kind, const char *window)
{
    size_t len;
    char *text = hard_file(kind, &len);
    if (getenv("SHARD_TEST_KEEP")) {
        FILE *k = fopen(getenv("SHARD_TEST_KEEP"), "w");
        fwrite(text, 1, len, k);
        fclose(k);
    }
    char path[] = "/tmp/sheaf_test_shard_XXXXXX";
    int fd = mkstemp(path);
    cr_assert(fd >= 0);
    cr_assert_eq(write(fd, text, len), (ssize_t)len);
    close(fd);
    const char *paths[] = {path};
    scan_options o;
    scan_options_defaults(&o);
    o.threads = 1;
    summary *whole;
    char err[1024];
    if (window) setenv("SHEAF_TEST_SHARD_WINDOW", window, 1);
    cr_assert_eq(scan_files(&o, paths, 1, &whole, err, sizeof err), SCAN_OK, "%s", err);
    for (uint32_t n = 1; n <= 50; n++) {
        summary *all = NULL;
        o.shard_count = n;
        for (uint32_t i = 1; i <= n; i++) {
            o.shard_index = i;
            summary *s;
            cr_assert_eq(scan_files(&o, paths, 1, &s, err, sizeof err), SCAN_OK,
                         "%s %u/%u: %s", kind, i, n, err);
            cr_assert_eq(s->nsources, 1);
            cr_assert_eq(s->sources[0].shard_index, i);
            cr_assert_eq(s->sources[0].shard_count, n);
            cr_assert_neq(s->sources[0].shard_rule, 0);
            if (!all) { all = s; continue; }
            cr_assert_eq(summary_merge(all, s, err, sizeof err), SUMMARY_OK, "%s", err);
            summary_free(s);
        }
        shard_check c;
        size_t bad;
        cr_assert_eq(summary_shards_check(all, &c, NULL, &bad, err, sizeof err), 0, "%s", err);
        cr_assert_eq(c.files, 1);
        cr_assert_eq(c.verified, n, "%s, %u shards: %zu verified", kind, n, c.verified);
        cr_assert_eq(rows_of(all), rows_of(whole), "%s, %u shards: %llu rows, want %llu", kind,
                     n, (unsigned long long)rows_of(all), (unsigned long long)rows_of(whole));
        cr_assert_eq(all->short_rows, whole->short_rows, "%s, %u shards", kind, n);
        cr_assert_eq(all->long_rows, whole->long_rows, "%s, %u shards", kind, n);
        summary_free(all);
    }
    if (window) unsetenv("SHEAF_TEST_SHARD_WINDOW");
    summary_options_free(&o.opt);
    summary_free(whole);
    unlink(path);
    free(text);
}

Test(shard_files, fake_records_inside_quotes, .timeout = 60) { every_record_once("fake", NULL); }
Test(shard_files, a_quoted_field_across_ranges, .timeout = 60) { every_record_once("long", NULL); }
Test(shard_files, a_window_shorter_than_a_field, .timeout = 60)
{
    every_record_once("long", "64"); /* a field longer than the window: the prefix rule */
}
Test(shard_files, no_quotes, .timeout = 60) { every_record_once("plain", NULL); }
Test(shard_files, crlf, .timeout = 60) { every_record_once("crlf", NULL); }
Test(shard_files, byte_order_mark, .timeout = 60) { every_record_once("bom", "16"); }
Test(shard_files, blank_lines, .timeout = 60) { every_record_once("blank", NULL); }
Test(shard_files, header_only, .timeout = 60) { every_record_once("header", NULL); }

/* A shard made to take the worst candidate is caught: its verdict is wrong
 * and the check names it; scanned from the top it fits. */
Test(shard_files, a_wrong_guess_is_refused_and_a_rescan_from_the_top_fits, .timeout = 60)
{
    size_t len;
    char *text = hard_file("fake", &len);
    char path[] = "/tmp/sheaf_test_shard_XXXXXX";
    int fd = mkstemp(path);
    cr_assert(fd >= 0);
    cr_assert_eq(write(fd, text, len), (ssize_t)len);
    close(fd);
    const char *paths[] = {path};
    scan_options o;
    scan_options_defaults(&o);
    o.threads = 1;
    char err[1024];
    int caught = 0;
    for (uint32_t n = 2; n <= 12; n++) {
        o.shard_count = n;
        summary *all = NULL;
        uint32_t worst = 1 + (uint32_t)(next_random() % (n - 1)) + 1; /* 2..n */
        if (worst > n) worst = n;
        for (uint32_t i = 1; i <= n; i++) {
            o.shard_index = i;
            if (i == worst) setenv("SHEAF_TEST_SHARD_WORST", "1", 1);
            summary *s;
            cr_assert_eq(scan_files(&o, paths, 1, &s, err, sizeof err), SCAN_OK, "%s", err);
            unsetenv("SHEAF_TEST_SHARD_WORST");
            if (!all) all = s;
            else {
                cr_assert_eq(summary_merge(all, s, err, sizeof err), SUMMARY_OK, "%s", err);
                summary_free(s);
            }
        }
        shard_check c;
        size_t bad;
        shard_verdict v[64];
        if (summary_shards_check(all, &c, v, &bad, err, sizeof err) != 0) {
            caught++;
            cr_assert_eq(all->sources[bad].shard_index, worst, "%s", err);
            cr_assert(strstr(err, "{shard_from_top}"), "%s", err);
            /* The rescan from the top, in place of the wrong one. */
            o.shard_index = worst;
            o.shard_from_top = 1;
            summary *fixed;
            cr_assert_eq(scan_files(&o, paths, 1, &fixed, err, sizeof err), SCAN_OK, "%s", err);
            o.shard_from_top = 0;
            cr_assert_eq(fixed->sources[0].shard_rule, SHARD_START_PREFIX);
            all->sources[bad].shard_rule = fixed->sources[0].shard_rule;
            all->sources[bad].shard_modes = fixed->sources[0].shard_modes;
            cr_assert_eq(summary_shards_check(all, &c, v, &bad, err, sizeof err), 0, "%s", err);
            summary_free(fixed);
        } else {
            /* Not caught: then the worst candidate was the right start. */
            cr_assert_eq(c.verified, n);
        }
        summary_free(all);
    }
    cr_assert_gt(caught, 0, "no wrong guess was made");
    summary_options_free(&o.opt);
    unlink(path);
    free(text);
}
