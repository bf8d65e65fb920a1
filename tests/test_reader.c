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
    reader_missing_init(&m, sp, 3);
    cr_assert(reader_is_missing(&m, "\0", 0));
    cr_assert(reader_is_missing(&m, "NA,", 2));
    cr_assert(reader_is_missing(&m, "null", 4));
    cr_assert(reader_is_missing(&m, "-", 1));
    cr_assert(!reader_is_missing(&m, "NAN", 3));
    cr_assert(!reader_is_missing(&m, "nul", 3));
    cr_assert(!reader_is_missing(&m, "-1", 2));
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
