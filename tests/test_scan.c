/* Tests for summary/scan: the fed scan context.
 *
 * The reference is the scan of the same bytes as a file (scan_path), whose
 * numbers the reference suites hold against numpy/pandas; here the checks
 * are that every way of handing the scan the same bytes gives the same
 * summary file, byte for byte.
 */
#include <criterion/criterion.h>

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include <utime.h>

#include "io/source.h"
#include "summary/scan.h"

static uint64_t rng = 0x2545F4914F6CDD1Dull;
static uint64_t next_random(void)
{
    rng ^= rng << 13; rng ^= rng >> 7; rng ^= rng << 17;
    return rng;
}

/* A table with numbers, text, quoted fields, missing cells and a class. */
static char *make_table(size_t rows, size_t *len)
{
    size_t cap = rows * 96 + 128, n = 0;
    char *t = malloc(cap);
    n += (size_t)sprintf(t + n, "id,x,\"y, quoted\",kind,note,label\n");
    for (size_t i = 0; i < rows; i++) {
        uint64_t r = next_random();
        n += (size_t)sprintf(t + n, "%zu,%.4f,%s,%s,%s,%s\n", i, (double)(r % 100000) / 37.0,
                             r % 11 == 0 ? "NA" : (r % 7 == 0 ? "1e3" : "-2.5"),
                             (r >> 8) % 3 == 0 ? "\"a,b\"" : "plain",
                             (r >> 12) % 17 == 0 ? "\"two\nlines\"" : "5'10\"",
                             (r >> 20) % 4 == 0 ? "up" : (r >> 20) % 4 == 1 ? "down" : "flat");
    }
    *len = n;
    return t;
}

static void write_file(const char *path, const char *data, size_t len)
{
    FILE *f = fopen(path, "wb");
    cr_assert_not_null(f);
    cr_assert_eq(fwrite(data, 1, len, f), len);
    fclose(f);
    struct utimbuf times = {0, 0}; /* fed bytes have no mtime: make them equal */
    cr_assert_eq(utime(path, &times), 0);
}

static char *slurp(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    cr_assert_not_null(f);
    fseek(f, 0, SEEK_END);
    *len = (size_t)ftell(f);
    rewind(f);
    char *d = malloc(*len + 1);
    cr_assert_eq(fread(d, 1, *len, f), *len);
    fclose(f);
    return d;
}

static void options(scan_options *o)
{
    scan_options_defaults(o);
    o->chunk_bytes = 1000;
    o->opt.target = "label";
}

static char *summary_bytes(summary *s, size_t *len)
{
    char err[512];
    const char *out = "/tmp/sheaf_test_scan.sheaf";
    cr_assert_eq(summary_write(s, out, err, sizeof err), SUMMARY_OK, "%s", err);
    summary_free(s);
    char *d = slurp(out, len);
    unlink(out);
    return d;
}

/* A table of `rows` rows written to path (*table, *len: its bytes) and the
 * bytes of its summary scanned as a file (the reference). */
static char *file_summary(size_t rows, const char *path, char **table, size_t *len,
                          size_t *want_len)
{
    *table = make_table(rows, len);
    write_file(path, *table, *len);
    scan_options o;
    options(&o);
    summary *s;
    char err[512];
    cr_assert_eq(scan_files(&o, &path, 1, &s, err, sizeof err), SCAN_OK, "%s", err);
    return summary_bytes(s, want_len);
}

Test(scan, feeding_in_any_split_equals_scanning_the_file)
{
    const char *path = "/tmp/sheaf_test_scan.csv";
    char *table;
    size_t len, want_len;
    char *want = file_summary(3000, path, &table, &len, &want_len);
    scan_options o;
    options(&o);
    size_t steps[] = {1, 7, 64, 999, 1000, 1001, 65536, len};
    for (size_t k = 0; k < sizeof steps / sizeof *steps; k++) {
        scan_context *sc = scan_create(&o);
        cr_assert_not_null(sc);
        cr_assert_eq(scan_begin(sc, path), SCAN_OK);
        for (size_t at = 0; at < len;) {
            size_t n = len - at < steps[k] ? len - at : steps[k];
            if (k == 0) n = 1 + next_random() % 3000; /* random pieces too */
            if (n > len - at) n = len - at;
            cr_assert_eq(scan_feed(sc, table + at, n), SCAN_OK, "%s", scan_error(sc));
            at += n;
        }
        cr_assert_eq(scan_end(sc), SCAN_OK, "%s", scan_error(sc));
        cr_assert_eq(scan_position(sc), len);
        summary *f = scan_finish(sc);
        cr_assert_not_null(f, "%s", scan_error(sc));
        scan_free(sc);
        size_t got_len;
        char *got = summary_bytes(f, &got_len);
        cr_assert_eq(got_len, want_len, "pieces of %zu: %zu bytes, want %zu", steps[k], got_len,
                     want_len);
        cr_assert_eq(memcmp(got, want, want_len), 0, "pieces of %zu: summaries differ", steps[k]);
        free(got);
    }
    free(want);
    free(table);
    unlink(path);
}

Test(scan, a_source_the_caller_opened_equals_the_path)
{
    const char *path = "/tmp/sheaf_test_scan2.csv";
    char *table;
    size_t len, want_len, got_len;
    char *want = file_summary(500, path, &table, &len, &want_len);
    scan_options o;
    options(&o);
    char err[512];
    scan_context *sc = scan_create(&o);
    source *src = source_open(path, err, sizeof err);
    cr_assert_not_null(src, "%s", err);
    cr_assert_eq(scan_source(sc, src), SCAN_OK, "%s", scan_error(sc));
    source_close(src);
    char *got = summary_bytes(scan_finish(sc), &got_len);
    scan_free(sc);
    cr_assert_eq(got_len, want_len);
    cr_assert_eq(memcmp(got, want, want_len), 0);
    free(got);
    free(want);
    free(table);
    unlink(path);
}

Test(scan, position_is_the_end_of_the_last_whole_record_absorbed)
{
    scan_options o;
    scan_options_defaults(&o);
    o.chunk_bytes = 64;
    scan_context *sc = scan_create(&o);
    cr_assert_eq(scan_begin(sc, "mem"), SCAN_OK);
    const char *text = "a,b\n1,2\n3,4\n5,";
    cr_assert_eq(scan_feed(sc, text, strlen(text)), SCAN_OK);
    /* Nothing is cut before a chunk's worth is in or the stream ends. */
    cr_assert_eq(scan_position(sc), 0);
    cr_assert_eq(scan_feed(sc, "6\n", 2), SCAN_OK);
    cr_assert_eq(scan_end(sc), SCAN_OK, "%s", scan_error(sc));
    cr_assert_eq(scan_position(sc), strlen(text) + 2);
    summary *s = scan_finish(sc);
    cr_assert_not_null(s);
    cr_assert_eq(s->rows, 3);
    summary_free(s);
    scan_free(sc);
}

Test(scan, errors_are_sticky_and_name_the_stream)
{
    scan_options o;
    scan_options_defaults(&o);
    scan_context *sc = scan_create(&o);
    cr_assert_eq(scan_begin(sc, "night-3"), SCAN_OK);
    const char *text = "a,b\n1,\"open\n";
    cr_assert_eq(scan_feed(sc, text, strlen(text)), SCAN_OK);
    cr_assert_eq(scan_end(sc), SCAN_ERR_INPUT);
    cr_assert_neq(strstr(scan_error(sc), "night-3: line 2: unterminated quote"), NULL, "%s",
                  scan_error(sc));
    cr_assert_eq(scan_feed(sc, "x", 1), SCAN_ERR_INPUT);
    cr_assert_null(scan_finish(sc));
    scan_free(sc);
}

Test(scan, a_quote_inside_a_header_field_does_not_crash_the_scan)
{
    /* Eight bytes of header were enough to overrun a field buffer sized by
     * counting quotes; the quote rule makes a"b one field. */
    scan_options o;
    scan_options_defaults(&o);
    scan_context *sc = scan_create(&o);
    cr_assert_eq(scan_begin(sc, "q"), SCAN_OK);
    const char *text = "a\"b,c,d\n1,2,3\n";
    cr_assert_eq(scan_feed(sc, text, strlen(text)), SCAN_OK);
    cr_assert_eq(scan_end(sc), SCAN_OK, "%s", scan_error(sc));
    summary *s = scan_finish(sc);
    cr_assert_not_null(s);
    cr_assert_eq(s->ncols, 3);
    cr_assert_str_eq(s->cols[0].name, "a\"b");
    summary_free(s);
    scan_free(sc);
}

/* The scalar rule the block loop must match: lo = x < lo ? x : lo in order
 * (of equal values the first stays: -0 or +0), an integer-valued number one
 * whose truncation gives it back (2^53 and above always). */
static void extent_in_order(const double *v, size_t n, double *lo, double *hi, uint64_t *zeros,
                            uint64_t *integers)
{
    *lo = INFINITY, *hi = -INFINITY, *zeros = *integers = 0;
    for (size_t i = 0; i < n; i++) {
        double x = v[i], a = fabs(x), t = a < 9007199254740992.0 ? a : 0.0;
        *lo = x < *lo ? x : *lo;
        *hi = x > *hi ? x : *hi;
        *zeros += x == 0;
        *integers += (double)(int64_t)t == t;
    }
}

Test(scan, extremes_zeros_and_integers_follow_the_scalar_rule)
{
    /* Signed zeros where the extreme is zero, integers near 2^52 and 2^53,
     * halves, large magnitudes: the SIMD loop of block_feed against the
     * scalar rule above, over blocks of every parity. */
    static const char *pool[] = {"0", "-0", "0.0", "-0.0", "1", "-1", "0.5", "-0.5",
                                 "4503599627370495.5", "4503599627370496", "4503599627370497",
                                 "9007199254740991", "9007199254740993", "1e300", "-1e300",
                                 "2.5", "3", "-7", "1e-300", "123456789012"};
    const size_t npool = sizeof pool / sizeof *pool;
    for (int round = 0; round < 200; round++) {
        size_t rows = 1 + next_random() % 700;
        int zeros_only = round % 4 == 0; /* the extreme is a zero of either sign */
        char *text = malloc(rows * 24 + 8);
        double *v = malloc(rows * sizeof *v);
        size_t n = (size_t)sprintf(text, "x\n");
        for (size_t i = 0; i < rows; i++) {
            uint64_t r = next_random();
            const char *cell = zeros_only ? pool[r % 4] : pool[r % npool];
            if (round % 4 == 1 && r % 3) cell = pool[(r >> 8) % 2 ? 4 : 9]; /* a positive run */
            n += (size_t)sprintf(text + n, "%s\n", cell);
            v[i] = strtod(cell, NULL);
        }
        double lo, hi;
        uint64_t zeros, integers;
        extent_in_order(v, rows, &lo, &hi, &zeros, &integers);
        scan_options o;
        scan_options_defaults(&o);
        scan_context *sc = scan_create(&o);
        cr_assert_eq(scan_begin(sc, "extent"), SCAN_OK);
        cr_assert_eq(scan_feed(sc, text, n), SCAN_OK);
        cr_assert_eq(scan_end(sc), SCAN_OK, "%s", scan_error(sc));
        summary *s = scan_finish(sc);
        cr_assert_not_null(s);
        const summary_column *c = &s->cols[0];
        cr_assert(c->mom.min == lo && signbit(c->mom.min) == signbit(lo),
                  "round %d: min %g (sign %d), in order %g (sign %d)", round, c->mom.min,
                  signbit(c->mom.min) != 0, lo, signbit(lo) != 0);
        cr_assert(c->mom.max == hi && signbit(c->mom.max) == signbit(hi),
                  "round %d: max %g, in order %g", round, c->mom.max, hi);
        cr_assert_eq(c->zeros, zeros, "round %d", round);
        cr_assert_eq(c->integers, integers, "round %d: %llu integers, in order %llu", round,
                     (unsigned long long)c->integers, (unsigned long long)integers);
        summary_free(s);
        scan_free(sc);
        free(text);
        free(v);
    }
}
