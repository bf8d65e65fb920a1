/* Tests for io/reader: the one record reader every pass reads through.
 *
 * The expected records come from tokenizing the whole text in one piece
 * (io/csv, itself checked against hand-worked records in test_csv.c); the
 * reader must give the same records, lines and offsets however the bytes
 * are fed, and the same errors.
 */
#include <criterion/criterion.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/reader.h"

/* Every record of text fed in pieces of `step` bytes (0: one piece), as
 * "<field><field>@line:offset\n" lines; the last status in *last. */
static char *read_all(const char *text, size_t len, size_t step, size_t chunk_bytes,
                      uint64_t stop_at, reader_status *last, char *err, size_t errlen)
{
    reader_options o;
    reader_options_defaults(&o);
    o.chunk_bytes = chunk_bytes;
    o.max_record_bytes = 4096;
    reader *r = reader_create(&o);
    cr_assert_not_null(r);
    reader_start(r, "t.csv", 1, 0, stop_at);
    size_t cap = 1 << 16, used = 0, fed = 0;
    char *out = malloc(cap);
    reader_status rs = READER_WANT;
    for (;;) {
        reader_record rec;
        rs = reader_next(r, &rec);
        if (rs == READER_RECORD) {
            for (size_t i = 0; i < rec.nfields; i++) {
                cr_assert_lt(used + rec.fields[i].len + 64, cap);
                out[used++] = '<';
                memcpy(out + used, rec.fields[i].ptr, rec.fields[i].len);
                used += rec.fields[i].len;
                out[used++] = '>';
            }
            used += (size_t)snprintf(out + used, cap - used, "@%llu:%llu\n",
                                     (unsigned long long)rec.line,
                                     (unsigned long long)rec.offset);
            continue;
        }
        if (rs == READER_CHUNK_END) continue;
        if (rs != READER_WANT) break;
        if (fed == len) { reader_finish(r); continue; }
        size_t n = step ? (len - fed < step ? len - fed : step) : len - fed;
        size_t took = reader_feed(r, text + fed, n);
        cr_assert_neq(took, (size_t)-1, "%s", reader_error(r));
        fed += took;
    }
    out[used] = '\0';
    *last = rs;
    snprintf(err, errlen, "%s", reader_error(r));
    reader_free(r);
    return out;
}

static const char NASTY[] =
    "\xEF\xBB\xBF\"first\nname\",b;c,\"d\"\"q\"\r\n"
    "1,5'10\",\"x\ny\",tail\n"
    "\n"
    "2,\"closed\"after,,\r\n"
    "3,\"a,b\",\"\"\"\",\n"
    "ragged\n"
    "4,last,line,no-newline";

Test(reader, any_feeding_split_gives_the_same_records)
{
    size_t len = sizeof NASTY - 1;
    reader_status last;
    char err[512];
    char *whole = read_all(NASTY, len, 0, 64, 0, &last, err, sizeof err);
    cr_assert_eq(last, READER_END, "%s", err);
    for (size_t step = 1; step <= len; step++) {
        char *got = read_all(NASTY, len, step, 64, 0, &last, err, sizeof err);
        cr_assert_eq(last, READER_END, "step %zu: %s", step, err);
        cr_assert_str_eq(got, whole, "step %zu", step);
        free(got);
    }
    free(whole);
}

Test(reader, bom_is_skipped_and_a_quoted_first_field_still_opens)
{
    reader_status last;
    char err[512];
    char *got = read_all(NASTY, sizeof NASTY - 1, 0, 64, 0, &last, err, sizeof err);
    /* Hand-worked from NASTY: the BOM is not part of the first field, the
     * quoted header field keeps its newline, 5'10" is data; offsets count
     * the BOM (3 bytes) and each record's bytes, lines count every newline. */
    const char *want =
        "<first\nname><b;c><d\"q>@1:3\n"
        "<1><5'10\"><x\ny><tail>@3:28\n"
        "<2><closedafter><><>@6:48\n"
        "<3><a,b><\"><>@7:67\n"
        "<ragged>@8:81\n"
        "<4><last><line><no-newline>@9:88\n";
    cr_assert_str_eq(got, want);
    free(got);
}

Test(reader, records_from_the_stop_offset_on_are_left_out)
{
    reader_status last;
    char err[512];
    /* Record "3,..." starts at 67: a stop at 67 keeps the three before it. */
    char *got = read_all(NASTY, sizeof NASTY - 1, 7, 64, 67, &last, err, sizeof err);
    cr_assert_eq(last, READER_END);
    cr_assert_eq(strstr(got, "<3>"), NULL, "%s", got);
    cr_assert_neq(strstr(got, "<2>"), NULL, "%s", got);
    free(got);
}

Test(reader, unterminated_quote_names_its_line)
{
    const char text[] = "a,b\n1,2\n3,\"open\nstill open\n";
    reader_status last;
    char err[512];
    char *got = read_all(text, sizeof text - 1, 5, 64, 0, &last, err, sizeof err);
    cr_assert_eq(last, READER_ERROR);
    cr_assert_neq(strstr(err, "t.csv: line 3: unterminated quote"), NULL, "%s", err);
    free(got);
}

Test(reader, record_over_the_limit_names_its_byte_offset)
{
    size_t len = 10000;
    char *text = malloc(len + 16);
    strcpy(text, "a,b\n1,2\n");
    for (size_t i = 8; i < len; i++) text[i] = 'x';
    reader_status last;
    char err[512];
    char *got = read_all(text, len, 1000, 64, 0, &last, err, sizeof err);
    cr_assert_eq(last, READER_ERROR);
    cr_assert_neq(strstr(err, "record at byte 8 is longer than the 4096-byte limit"), NULL, "%s", err);
    free(got);
    free(text);
}

Test(reader, tab_is_detected_and_quotes_follow_the_tab)
{
    const char text[] = "a\tb\n\"x\ty\"\t2\n";
    reader_status last;
    char err[512];
    char *got = read_all(text, sizeof text - 1, 0, 64, 0, &last, err, sizeof err);
    cr_assert_str_eq(got, "<a><b>@1:0\n<x\ty><2>@2:4\n");
    free(got);
}

Test(reader, columns_are_named_as_the_scan_names_them)
{
    csv_field f[3] = {{"\"q\"\"x\"", 6}, {"", 0}, {"plain", 5}};
    char out[64];
    cr_assert_eq(reader_column_name(&f[0], 0, 1, 1, out), 3);
    cr_assert_eq(memcmp(out, "q\"x", 3), 0);
    size_t n = reader_column_name(&f[1], 1, 1, 0, out);
    cr_assert_eq(n, 4);
    cr_assert_eq(memcmp(out, "col2", 4), 0);
    n = reader_column_name(&f[2], 2, 0, 0, out);
    cr_assert_eq(memcmp(out, "col3", n), 0);
}

Test(reader, missing_test_knows_the_empty_cell_and_every_spelling)
{
    const char *sp[] = {"NA", "null", "-"};
    reader_missing m;
    reader_missing_init(&m, sp, 3, 1);
    cr_assert(reader_is_missing(&m, "\0", 0));
    cr_assert(reader_is_missing(&m, "NA,", 2));
    cr_assert(reader_is_missing(&m, "null", 4));
    cr_assert(reader_is_missing(&m, "-", 1));
    cr_assert(!reader_is_missing(&m, "NAN", 3));
    cr_assert(!reader_is_missing(&m, "nul", 3));
    cr_assert(!reader_is_missing(&m, "-1", 2));
}

Test(reader, missing_spellings_match_in_any_ascii_letter_case)
{
    const char *sp[] = {"NA", "n/a", "Null", "N\xc3\x89" "ANT", "?"};
    reader_missing m;
    reader_missing_init(&m, sp, 5, 1);
    const char *yes[] = {"na", "Na", "nA", "N/A", "n/A", "NULL", "null", "nUlL", "n\xc3\x89" "ant", "?"};
    for (size_t i = 0; i < sizeof yes / sizeof *yes; i++)
        cr_assert(reader_is_missing(&m, yes[i], (uint32_t)strlen(yes[i])), "'%s'", yes[i]);
    /* Only ASCII letters fold: the UTF-8 bytes of 'é' (c3 a9) are not 'É' (c3 89). */
    const char *no[] = {"nan", "NA ", " na", "nul", "nulls", "n\xc3\xa9" "ant", "\xce\x9d" "A", "?a"};
    for (size_t i = 0; i < sizeof no / sizeof *no; i++)
        cr_assert(!reader_is_missing(&m, no[i], (uint32_t)strlen(no[i])), "'%s'", no[i]);
    /* ASCII folding is | 0x20 on letters only: '@' (0x40) is not '`' (0x60). */
    const char *at[] = {"@x"};
    reader_missing_init(&m, at, 1, 1);
    cr_assert(reader_is_missing(&m, "@X", 2));
    cr_assert(!reader_is_missing(&m, "`x", 2));
}

/* A summary written before 2026-12-03 matched its spellings byte for byte;
 * a pass reading it must match the same way. */
Test(reader, missing_spellings_match_exactly_without_any_case)
{
    const char *sp[] = {"NA", "Null"};
    reader_missing m;
    reader_missing_init(&m, sp, 2, 0);
    cr_assert(reader_is_missing(&m, "NA", 2));
    cr_assert(reader_is_missing(&m, "Null", 4));
    cr_assert(reader_is_missing(&m, "", 0));
    const char *no[] = {"na", "Na", "nA", "NULL", "null", "nulL"};
    for (size_t i = 0; i < sizeof no / sizeof *no; i++)
        cr_assert(!reader_is_missing(&m, no[i], (uint32_t)strlen(no[i])), "'%s'", no[i]);
}

Test(reader, record_over_the_limit_inside_one_chunk_is_an_error_too)
{
    /* 5,000 bytes in a 64 KiB chunk: the limit holds wherever chunks end. */
    size_t len = 5000;
    char *text = malloc(len + 16);
    strcpy(text, "a,b\n1,");
    for (size_t i = 6; i < len - 1; i++) text[i] = 'x';
    text[len - 1] = '\n';
    reader_status last;
    char err[512];
    char *got = read_all(text, len, 0, 65536, 0, &last, err, sizeof err);
    cr_assert_eq(last, READER_ERROR);
    cr_assert_neq(strstr(err, "t.csv: line 2: record at byte 4 is longer than the 4096-byte limit"),
                  NULL, "%s", err);
    free(got);
    free(text);
}

Test(reader, record_over_the_limit_after_a_byte_order_mark_starts_after_it)
{
    /* The byte-order mark belongs to no record: the first record starts at
     * byte 3, whether the chunker (small chunks: the record spans them) or
     * the cursor (one chunk) finds it too long.  Found by fuzz_csv_reader. */
    size_t len = 5004;
    char *text = malloc(len + 16);
    memcpy(text, "\xEF\xBB\xBF", 3);
    for (size_t i = 3; i < len - 1; i++) text[i] = 'x';
    text[len - 1] = '\n';
    reader_status last;
    char err[512];
    char *got = read_all(text, len, 100, 64, 0, &last, err, sizeof err);
    cr_assert_eq(last, READER_ERROR);
    cr_assert_neq(strstr(err, "record at byte 3 is longer than the 4096-byte limit"), NULL, "%s", err);
    free(got);
    got = read_all(text, len, 0, 65536, 0, &last, err, sizeof err);
    cr_assert_eq(last, READER_ERROR);
    cr_assert_neq(strstr(err, "line 1: record at byte 3 is longer than the 4096-byte limit"), NULL,
                  "%s", err);
    free(got);
    free(text);
}

Test(reader, missing_test_knows_spellings_of_63_bytes_and_more)
{
    /* Lengths 64 apart share a bit of the first test (reader.h), and a
     * spelling of 64 bytes shares the empty cell's: each length must still
     * be told apart by the spellings themselves. */
    char longer[71], cell[80];
    memset(longer, 'x', 70);
    longer[70] = '\0';
    const char *sp[] = {longer};
    reader_missing m;
    reader_missing_init(&m, sp, 1, 1);
    memset(cell, 'x', sizeof cell);
    cr_assert(reader_is_missing(&m, cell, 70));
    cr_assert(!reader_is_missing(&m, cell, 63));
    cr_assert(!reader_is_missing(&m, cell, 64));
    cr_assert(!reader_is_missing(&m, cell, 71));
    cell[69] = 'y';
    cr_assert(!reader_is_missing(&m, cell, 70));
    cr_assert(!reader_is_missing(&m, cell, 6)); /* 70 % 64: no alias either */
    char sixty_four[65];
    memset(sixty_four, 'x', 64);
    sixty_four[64] = '\0';
    const char *sp64[] = {sixty_four};
    reader_missing_init(&m, sp64, 1, 1);
    cr_assert(reader_is_missing(&m, "x", 0)); /* empty: missing, whatever the bits */
    cr_assert(reader_is_missing(&m, cell, 64));
    cr_assert(!reader_is_missing(&m, cell, 1));
}

/* ---- rows: reader_cursor_rows against reader_cursor_next ------------------ */

/* One record as the record cursor gives it. */
typedef struct {
    const csv_field *fields; /* into the record cursor's chunk (unquoted in place) */
    size_t nfields;
    uint64_t line;
} expected_record;

/* Reads chunk bytes data[0..len) (stream offset `offset`) both ways, with
 * the stop offset, the exempt first record and the offsets to skip, and
 * checks that reader_cursor_rows (rows of `width` spans, at most max_rows
 * at a time, the table emptied whenever it is full) gives the records of
 * reader_cursor_next less those that begin at a skipped offset, and ends
 * the same way (status, lines, absorbed offset, stop, fault). */
static void rows_agree(const char *data, size_t len, uint64_t offset, uint64_t stop_at,
                       int exempt, const uint64_t *skip, size_t nskip, size_t width,
                       size_t max_rows, size_t max_record, const char *what)
{
    reader_options o;
    reader_options_defaults(&o);
    o.max_record_bytes = max_record;
    char *a = calloc(len + CHUNK_PADDING, 1), *b = calloc(len + CHUNK_PADDING, 1);
    cr_assert(a && b);
    memcpy(a, data, len);
    memcpy(b, data, len);
    reader_chunk ca = {a, len, offset, 0, ',', NULL, 0}, cb = {b, len, offset, 0, ',', NULL, 0};
    reader_cursor x, y;
    reader_cursor_init(&x, &o);
    reader_cursor_init(&y, &o);
    reader_cursor_start(&x, &ca, stop_at, exempt);
    reader_cursor_start(&y, &cb, stop_at, exempt);
    reader_cursor_skip(&y, skip, nskip);

    /* The record cursor; its field arrays are copied (the next record reuses them). */
    expected_record want[512];
    csv_field *kept = malloc((len + 1) * sizeof *kept);
    size_t nwant = 0, nkept = 0, skipped = 0, at = 0;
    reader_status xs;
    for (;;) {
        reader_record rec;
        xs = reader_cursor_next(&x, &rec);
        if (xs != READER_RECORD) break;
        while (at < nskip && skip[at] < rec.offset) at++;
        if (at < nskip && skip[at] == rec.offset) { skipped++; continue; }
        cr_assert_lt(nwant, 512);
        memcpy(kept + nkept, rec.fields, rec.nfields * sizeof *kept);
        want[nwant++] = (expected_record){kept + nkept, rec.nfields, rec.line};
        nkept += rec.nfields;
    }

    csv_span *cells = malloc(width * max_rows * sizeof *cells);
    uint32_t nf[8];
    uint64_t line[8];
    cr_assert_leq(max_rows, 8);
    csv_rows rows = {.cells = cells, .stride = max_rows, .width = width, .max_rows = max_rows,
                     .nfields = nf, .line = line, .base = b};
    size_t got = 0;
    reader_status ys;
    do {
        ys = reader_cursor_rows(&y, &rows);
        for (size_t i = 0; i < rows.rows; i++, got++) {
            cr_assert_lt(got, nwant, "%s: more rows than records", what);
            const expected_record *e = &want[got];
            cr_assert_eq(nf[i], e->nfields, "%s: row %zu has %u fields, want %zu", what, got,
                         nf[i], e->nfields);
            cr_assert_eq(line[i], e->line, "%s: row %zu", what, got);
            for (size_t f = 0; f < width; f++) {
                const csv_span *s = &cells[f * max_rows + i];
                if (f >= e->nfields) {
                    cr_assert(s->off == 0 && s->len == 0, "%s: row %zu field %zu", what, got, f);
                    continue;
                }
                cr_assert_eq(s->len, e->fields[f].len, "%s: row %zu field %zu", what, got, f);
                cr_assert_eq(memcmp(b + s->off, e->fields[f].ptr, s->len), 0,
                             "%s: row %zu field %zu", what, got, f);
            }
        }
        rows.rows = 0;
    } while (ys == READER_RECORD);
    cr_assert_eq(got, nwant, "%s: %zu rows, %zu records", what, got, nwant);
    cr_assert_eq(ys, xs, "%s: rows end with %d, records with %d", what, ys, xs);
    cr_assert_eq(y.skipped, skipped, "%s", what);
    if (ys == READER_ERROR) {
        cr_assert_eq(y.fault, x.fault, "%s", what);
        cr_assert_eq(y.fault_line, x.fault_line, "%s", what);
        cr_assert_eq(y.fault_offset, x.fault_offset, "%s", what);
    } else {
        cr_assert_eq(y.lines, x.lines, "%s", what);
        cr_assert_eq(y.absorbed, x.absorbed, "%s", what);
        cr_assert_eq(y.stopped, x.stopped, "%s", what);
    }
    reader_cursor_free(&x);
    reader_cursor_free(&y);
    free(cells);
    free(kept);
    free(a);
    free(b);
}

Test(reader, rows_skip_the_given_records_and_fill_what_a_row_lacks)
{
    /* Hand-worked: records begin at 1000 ("h,h"), 1005 (after a blank
     * line), 1011 ("h,h"), 1015 and 1017; of the skip offsets, 1004 (the
     * blank line) is no record start and 1011 leaves out the second "h,h"
     * alone; width 3 fills "x" with two empty spans and counts the fourth
     * field of "1,2,3,4" without keeping it. */
    const char text[] = "h,h\n\n1,\"a\"\nh,h\nx\n1,2,3,4\n";
    const uint64_t skip[] = {1004, 1011};
    rows_agree(text, sizeof text - 1, 1000, 0, 0, skip, 2, 3, 2, 4096, "literal");
}

/* xorshift64: the random chunks' bytes and choices. */
static uint64_t next_random(uint64_t *x)
{
    *x ^= *x << 13;
    *x ^= *x >> 7;
    *x ^= *x << 17;
    return *x;
}

Test(reader, rows_agree_with_records_on_random_chunks)
{
    /* Differential, 20,000 random chunks over the bytes that matter: every
     * stop offset (none, inside the chunk, exempt first record or not),
     * skip offsets at record starts and elsewhere, widths 1 to 4, 1 to 3
     * rows at a time, and small record limits. */
    static const char alphabet[] = "ab1,,,\"\"\n\n\r ";
    uint64_t x = 0x13198A2E03707344ull;
    char data[121];
    uint64_t skip[16];
    for (int iter = 0; iter < 20000; iter++) {
        size_t len = (size_t)(iter % 121);
        for (size_t i = 0; i < len; i++) data[i] = alphabet[next_random(&x) % (sizeof alphabet - 1)];
        const uint64_t offset = 5000;
        uint64_t stop = next_random(&x) % 3 ? 0 : offset + next_random(&x) % (len + 2);
        size_t nskip = 0;
        for (size_t i = 0; i < len && nskip < 16; i++) { /* line starts mostly, and some others */
            int line_start = i == 0 || data[i - 1] == '\n';
            if ((line_start && next_random(&x) % 3 == 0) || next_random(&x) % 40 == 0)
                skip[nskip++] = offset + i;
        }
        int exempt = (int)(next_random(&x) % 2);
        size_t width = 1 + next_random(&x) % 4, max_rows = 1 + next_random(&x) % 3;
        size_t max_record = next_random(&x) % 4 ? 4096 : 4 + next_random(&x) % 20;
        char what[64];
        snprintf(what, sizeof what, "iteration %d", iter);
        rows_agree(data, len, offset, stop, exempt, skip, nskip, width, max_rows, max_record, what);
    }
}
