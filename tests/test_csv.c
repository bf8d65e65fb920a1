/* Tests for io/csv: the record tokenizer, delimiter detection, BOM skip.
 *
 * Reference for the field rules: RFC 4180 (section 2: fields may be quoted,
 * a quoted field holds delimiters, line breaks and doubled quotes; records
 * end at a line break, CRLF in the RFC).  The lenient cases (a quote inside
 * an unquoted field, text after a closing quote) and the blank-line rule are
 * the ones csv.h documents; they are not part of RFC 4180.  The UTF-8
 * byte-order mark EF BB BF is from the Unicode Standard, section 23.8.
 *
 * Each test tokenizes a literal chunk and compares a rendering of the records:
 * every field as <bytes>, every record followed by "\n" (a field that itself
 * holds a newline shows it between its brackets).
 */
#include <criterion/criterion.h>

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/csv.h"
#include "testutil.h"

#define MAX_FIELDS 16

typedef struct {
    char text[4096];   /* rendering of the records read */
    int records;       /* CSV_RECORD results */
    csv_status last;   /* status that stopped the loop */
    uint64_t lines;    /* reader's line count at the end */
} tokenized;


/* csv_next, with the record's fields and count in *f and *n. */
static csv_status next_rec(csv_reader *r, csv_record *rec, const csv_field **f, size_t *n)
{
    csv_status st = csv_next(r, rec);
    *f = rec->fields;
    *n = rec->nfields;
    return st;
}

/* Appends a record's rendering: its first MAX_FIELDS fields, then
 * "count@line". */
static void render(tokenized *t, size_t *used, const char *const *ptr, const uint32_t *len,
                   size_t n, uint64_t line)
{
    size_t shown = n < MAX_FIELDS ? n : MAX_FIELDS;
    t->records++;
    for (size_t i = 0; i < shown; i++) {
        cr_assert_lt(*used + len[i] + 3, sizeof t->text);
        t->text[(*used)++] = '<';
        memcpy(t->text + *used, ptr[i], len[i]);
        *used += len[i];
        t->text[(*used)++] = '>';
    }
    *used += (size_t)snprintf(t->text + *used, sizeof t->text - *used, "%zu@%llu\n", n,
                              (unsigned long long)line);
    cr_assert_lt(*used + 2, sizeof t->text);
}

/* A copy of data[0..len) (the reader writes into its chunk) followed by
 * CSV_READ_AHEAD + 1 bytes of delimiters, quotes and newlines that must
 * never show in a field. */
static char *padded_copy(const char *data, size_t len)
{
    char *buf = malloc(len + CSV_READ_AHEAD + 1);
    cr_assert_not_null(buf);
    memcpy(buf, data, len);
    for (size_t i = 0; i < CSV_READ_AHEAD + 1; i++) buf[len + i] = "\"\n\r,;\t|x"[i % 8];
    return buf;
}

/* The same with csv_next_rows, `batch` rows at a time (rows of MAX_FIELDS
 * spans, so that every field rendered is kept); wide 0 keeps the reader to
 * its SSE2 blocks, 1 lets it read 32 bytes at a time where the CPU can. */
static tokenized tokenize_rows(const char *data, size_t len, char delim, size_t batch, int wide)
{
    tokenized t;
    memset(&t, 0, sizeof t);
    char *buf = padded_copy(data, len);
    csv_reader r;
    csv_reader_init_padded(&r, buf, len, delim);
    if (!wide) r.wide = 0;
    csv_span cells[MAX_FIELDS * 4];
    uint32_t nf[4];
    uint64_t line[4];
    cr_assert_leq(batch, 4);
    csv_rows rows = {.cells = cells, .stride = batch, .width = MAX_FIELDS, .max_rows = batch,
                     .nfields = nf, .line = line, .base = buf, .stop = SIZE_MAX,
                     .max_record_bytes = SIZE_MAX};
    size_t used = 0;
    csv_status st;
    do {
        rows.rows = 0;
        st = csv_next_rows(&r, &rows);
        for (size_t i = 0; i < rows.rows; i++) {
            const char *ptr[MAX_FIELDS];
            uint32_t flen[MAX_FIELDS];
            for (size_t f = 0; f < MAX_FIELDS; f++) {
                ptr[f] = buf + cells[f * batch + i].off;
                flen[f] = cells[f * batch + i].len;
            }
            render(&t, &used, ptr, flen, nf[i], line[i] - 1);
        }
    } while (st == CSV_RECORD);
    t.text[used] = '\0';
    t.last = st;
    t.lines = r.lines;
    free(buf);
    return t;
}

/* Tokenizes a copy of data[0..len) (the reader writes into its chunk) with
 * the plain reader (padded = 0) or the padded one, whose buffer is followed
 * by CSV_READ_AHEAD bytes of delimiters, quotes and newlines that must
 * never show in a field. */
static tokenized tokenize_with(const char *data, size_t len, char delim, int padded)
{
    tokenized t;
    memset(&t, 0, sizeof t);
    char *buf = padded_copy(data, len);
    csv_reader r;
    if (padded) csv_reader_init_padded(&r, buf, len, delim);
    else csv_reader_init(&r, buf, len, delim);
    csv_record rec = {0};
    size_t used = 0;
    csv_status st;
    while ((st = csv_next(&r, &rec)) == CSV_RECORD) {
        const char *ptr[MAX_FIELDS];
        uint32_t flen[MAX_FIELDS];
        for (size_t i = 0; i < rec.nfields && i < MAX_FIELDS; i++) {
            ptr[i] = rec.fields[i].ptr;
            flen[i] = rec.fields[i].len;
        }
        render(&t, &used, ptr, flen, rec.nfields, r.record_line);
    }
    t.text[used] = '\0';
    t.last = st;
    t.lines = r.lines;
    csv_record_free(&rec);
    free(buf);
    return t;
}

/* The plain reader against the padded one and the rows reader (two rows at
 * a time), which must agree. */
static void agree(const tokenized *a, const char *data, size_t len, char delim, const char *what)
{
    tokenized b = tokenize_with(data, len, delim, 1), c = tokenize_rows(data, len, delim, 2, 1);
    cr_assert_str_eq(a->text, b.text, "plain and padded readers differ on %s", what);
    cr_assert_str_eq(a->text, c.text, "plain and rows readers differ on %s", what);
    cr_assert(a->last == b.last && a->last == c.last, "%s", what);
    cr_assert(a->lines == b.lines && a->lines == c.lines, "%s", what);
    cr_assert(a->records == b.records && a->records == c.records, "%s", what);
}

/* The three readers, which must agree; returns the rendering without the
 * field counts and record lines (those are compared, then dropped). */
static tokenized tokenize_n(const char *data, size_t len, char delim)
{
    tokenized a = tokenize_with(data, len, delim, 0);
    char what[200];
    snprintf(what, sizeof what, "\"%.*s\"", (int)(len < 150 ? len : 150), data);
    agree(&a, data, len, delim, what);
    /* Drop the "N@L" annotations: the expectations below predate them. */
    char *w = a.text;
    for (const char *p = a.text; *p;) {
        if (*p == '<') {
            const char *q = p + 1;
            while (*q != '>') q++; /* field bytes never hold '>' in these tests */
            memmove(w, p, (size_t)(q - p + 1));
            w += q - p + 1;
            p = q + 1;
        } else {
            while (*p != '\n') p++;
            *w++ = *p++;
        }
    }
    *w = '\0';
    return a;
}

static tokenized tokenize(const char *data, char delim)
{
    return tokenize_n(data, strlen(data), delim);
}

static void expect_records(const char *data, char delim, const char *want)
{
    tokenized t = tokenize(data, delim);
    cr_assert_eq(t.last, CSV_END, "input \"%s\": stopped with status %d", data, (int)t.last);
    cr_assert_str_eq(t.text, want, "input \"%s\"", data);
}

/* --- plain and empty fields ------------------------------------------------ */

Test(csv, plain_fields_are_split_at_the_delimiter)
{
    expect_records("a,b,c\n1,22,333\n", ',', "<a><b><c>\n<1><22><333>\n");
    expect_records("solo\nline\n", ',', "<solo>\n<line>\n");
    expect_records("  spaced , kept \n", ',', "<  spaced >< kept >\n");
}

Test(csv, adjacent_delimiters_give_empty_fields)
{
    expect_records("a,,b\n,,\n", ',', "<a><><b>\n<><><>\n");
    expect_records(",x\n", ',', "<><x>\n");
}

Test(csv, trailing_delimiter_adds_an_empty_last_field)
{
    expect_records("a,b,\nc,d,\n", ',', "<a><b><>\n<c><d><>\n");
    /* Also when the chunk ends right after the delimiter. */
    expect_records("a,b,", ',', "<a><b><>\n");
}

Test(csv, empty_chunk_and_newline_only_chunk_hold_no_records)
{
    tokenized t = tokenize("", ',');
    cr_assert_eq(t.last, CSV_END);
    cr_assert_eq(t.records, 0);
    t = tokenize("\n\n\r\n", ',');
    cr_assert_eq(t.last, CSV_END);
    cr_assert_eq(t.records, 0);
    cr_assert_eq(t.lines, 3);
}

/* --- quoted fields (RFC 4180 section 2, rules 5-7) ------------------------- */

Test(csv, quoted_field_keeps_delimiters)
{
    expect_records("\"a,b\",c\n", ',', "<a,b><c>\n");
    expect_records("x,\",,,\"\n", ',', "<x><,,,>\n");
}

Test(csv, doubled_quote_becomes_one_quote)
{
    expect_records("\"say \"\"hi\"\"\",x\n", ',', "<say \"hi\"><x>\n");
    expect_records("\"\"\"\"\n", ',', "<\">\n");           /* field holding one quote */
    expect_records("\"\",\"\"\n", ',', "<><>\n");          /* two empty quoted fields */
}

Test(csv, unescaping_in_place_leaves_later_fields_intact)
{
    /* The doubled quotes shift bytes down inside the chunk; the fields after
     * them must still point at their own bytes. */
    expect_records("\"a\"\"b\",\"c\"\"\"\"d\",e\n\"f\"\"\",g\n", ',',
                   "<a\"b><c\"\"d><e>\n<f\"><g>\n");
}

Test(csv, quoted_field_keeps_newlines_and_lines_counts_them)
{
    char buf[] = "\"l1\nl2\nl3\",b\nnext,row\n";
    csv_reader r;
    csv_reader_init(&r, buf, strlen(buf), ',');
    csv_record rec = {0};
    const csv_field *f;
    size_t n;
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_RECORD);
    cr_assert_eq(n, 2);
    cr_assert_eq(f[0].len, 8);
    cr_assert_eq(memcmp(f[0].ptr, "l1\nl2\nl3", 8), 0);
    cr_assert_eq(r.record_line, 0);
    cr_assert_eq(r.lines, 3, "two newlines inside quotes plus the record end, got %llu",
                 (unsigned long long)r.lines);
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_RECORD);
    cr_assert_eq(r.record_line, 3, "second record starts on line 3, got %llu",
                 (unsigned long long)r.record_line);
    cr_assert_eq(r.lines, 4);
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_END);
}

Test(csv, newlines_inside_quotes_around_doubled_quotes_are_all_counted)
{
    /* Newlines before, between and after doubled quotes in one field. */
    tokenized t = tokenize("\"a\n\"\"\nb\"\"\n\",z\nlast\n", ',');
    cr_assert_str_eq(t.text, "<a\n\"\nb\"\n><z>\n<last>\n");
    cr_assert_eq(t.lines, 5, "got %llu", (unsigned long long)t.lines);
}

Test(csv, record_line_marks_the_first_line_of_each_record)
{
    char buf[] = "h1,h2\n\n\"multi\nline\",x\n\nlast,y\n";
    csv_reader r;
    csv_reader_init(&r, buf, strlen(buf), ',');
    csv_record rec = {0};
    const csv_field *f;
    size_t n;
    uint64_t want[] = {0, 2, 5};
    for (int i = 0; i < 3; i++) {
        cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_RECORD);
        cr_assert_eq(r.record_line, want[i], "record %d: line %llu, want %llu", i,
                     (unsigned long long)r.record_line, (unsigned long long)want[i]);
    }
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_END);
    cr_assert_eq(r.lines, 6);
}

/* --- line ends -------------------------------------------------------------- */

Test(csv, crlf_line_end_is_dropped)
{
    tokenized t = tokenize("a,b\r\nc,d\r\n", ',');
    cr_assert_str_eq(t.text, "<a><b>\n<c><d>\n");
    cr_assert_eq(t.lines, 2);
    /* An empty last field before CRLF stays empty, not "\r". */
    expect_records("a,\r\n", ',', "<a><>\n");
}

Test(csv, crlf_after_a_closing_quote_is_dropped)
{
    tokenized t = tokenize("\"a\",\"b\"\r\n\"c\"\r\nd\r\n", ',');
    cr_assert_eq(t.last, CSV_END);
    cr_assert_str_eq(t.text, "<a><b>\n<c>\n<d>\n");
    cr_assert_eq(t.lines, 3);
}

Test(csv, crlf_inside_quotes_is_kept)
{
    expect_records("\"a\r\nb\",c\r\n", ',', "<a\r\nb><c>\n");
}

Test(csv, lone_cr_inside_a_field_is_kept)
{
    expect_records("a\rb,c\n", ',', "<a\rb><c>\n");
    expect_records("a\r,c\n", ',', "<a\r><c>\n");
    expect_records("\"x\ry\",z\n", ',', "<x\ry><z>\n");
    expect_records("\"x\r\"\n", ',', "<x\r>\n");
}

Test(csv, lone_cr_before_closing_quote_at_end_of_chunk_is_kept)
{
    /* The '\r' is inside the quotes, so it is data: only a '\r' outside
     * quotes before a line end is a line-end byte. */
    expect_records("a,\"x\r\"", ',', "<a><x\r>\n");
}

Test(csv, blank_lines_are_skipped)
{
    tokenized t = tokenize("\n\na\n\n\nb\n\n", ',');
    cr_assert_eq(t.last, CSV_END);
    cr_assert_str_eq(t.text, "<a>\n<b>\n");
    cr_assert_eq(t.lines, 7);
}

Test(csv, crlf_blank_lines_are_skipped)
{
    tokenized t = tokenize("\r\n\r\na,b\r\n\r\nc,d\r\n\r\n", ',');
    cr_assert_str_eq(t.text, "<a><b>\n<c><d>\n");
    cr_assert_eq(t.lines, 6);
}

Test(csv, last_record_without_final_newline_is_read)
{
    expect_records("a,b\nc,d", ',', "<a><b>\n<c><d>\n");
    expect_records("a,b\n\"c\",\"d\"", ',', "<a><b>\n<c><d>\n");
    expect_records("only", ',', "<only>\n");
}

/* --- errors and width ------------------------------------------------------- */

Test(csv, unterminated_quote_returns_csv_unterminated)
{
    char buf[] = "ok,1\nbad,\"never closed\nmore,2\n";
    csv_reader r;
    csv_reader_init(&r, buf, strlen(buf), ',');
    csv_record rec = {0};
    const csv_field *f;
    size_t n;
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_RECORD);
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_UNTERMINATED);
    /* The reader does not run past the chunk afterwards. */
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_END);

    tokenized t = tokenize("\"", ',');
    cr_assert_eq(t.last, CSV_UNTERMINATED);
    t = tokenize("\"ab\"\"", ',');   /* the last quote is an escaped one */
    cr_assert_eq(t.last, CSV_UNTERMINATED);
}

Test(csv, field_buffer_grows_to_the_widest_record)
{
    /* No count made under another rule sizes the buffer: it starts empty and
     * grows as a record needs, here to 1,000 fields. */
    size_t width = 1000;
    char *buf = malloc(width * 2 + 8);
    size_t len = 0;
    for (size_t i = 0; i < width; i++) { buf[len++] = (char)('a' + i % 26); buf[len++] = ','; }
    buf[len - 1] = '\n';
    memcpy(buf + len, "6,7\n", 4);
    len += 4;
    csv_reader r;
    csv_reader_init(&r, buf, len, ',');
    csv_record rec = {0};
    const csv_field *f;
    size_t n;
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_RECORD);
    cr_assert_eq(n, width, "nfields %zu", n);
    cr_assert_geq(rec.cap, width);
    for (size_t i = 0; i < width; i++) cr_assert_eq(f[i].ptr[0], 'a' + (int)(i % 26));
    cr_assert_eq(next_rec(&r, &rec, &f, &n), CSV_RECORD);
    cr_assert_eq(n, 2);
    cr_assert_eq(f[0].ptr[0], '6');
    cr_assert_eq(f[1].ptr[0], '7');
    csv_record_free(&rec);
    free(buf);
}

Test(csv, header_with_a_quote_inside_a_field_is_three_fields)
{
    /* a"b,c,d: the quote is not at a field start, so it is data. */
    tokenized t = tokenize("a\"b,c,d\n1,2,3\n", ',');
    cr_assert_str_eq(t.text, "<a\"b><c><d>\n<1><2><3>\n");
    cr_assert_eq(t.last, CSV_END);
}

Test(csv, raw_fields_unquote_to_the_tokenized_text)
{
    const char *raw[] = {"plain", "\"q,uoted\"", "\"dou\"\"ble\"", "\"closed\"after", "5'10\"", ""};
    const char *want[] = {"plain", "q,uoted", "dou\"ble", "closedafter", "5'10\"", ""};
    for (size_t i = 0; i < sizeof raw / sizeof *raw; i++) {
        char out[64];
        size_t n = csv_unquote(raw[i], strlen(raw[i]), out);
        cr_assert_eq(n, strlen(want[i]), "%s: %zu", raw[i], n);
        cr_assert_eq(memcmp(out, want[i], n), 0, "%s", raw[i]);
    }
}

Test(csv, quote_scan_agrees_with_the_tokenizer_on_random_text)
{
    /* The one quote rule: for random text, the record ends csv_quote_scan
     * finds (first mode, record by record) are exactly where the tokenizer
     * ends its records; 20,000 texts over the bytes that matter. */
    static const char alphabet[] = "ab1,,;\"\"\"\n\n\r ";
    uint64_t x = 0x9E3779B97F4A7C15ull;
    char data[201], copy[201 + CSV_READ_AHEAD];
    csv_record rec = {0};
    for (int iter = 0; iter < 20000; iter++) {
        size_t len = (size_t)(iter % 201);
        for (size_t i = 0; i < len; i++) {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            data[i] = alphabet[x % (sizeof alphabet - 1)];
        }
        memcpy(copy, data, len);
        memset(copy + len, 0, CSV_READ_AHEAD);
        csv_reader r;
        csv_reader_init(&r, copy, len, ',');
        csv_quote_state q;
        csv_quote_init(&q, ',');
        size_t at = 0;
        for (;;) {
            csv_status st = csv_next(&r, &rec);
            if (st != CSV_RECORD) break;
            /* The scan's next record end from `at` is where the tokenizer stopped
             * (blank lines are records of their own to the scan). */
            size_t end = (size_t)(r.pos - copy);
            while (at < end) {
                size_t e = csv_quote_scan(&q, data + at, len - at, 1);
                cr_assert_leq(e, len - at + 1);
                if (e > len - at) { at = len; break; }
                at += e;
            }
            cr_assert(at == end || (end == len && at == len), "iter %d: scan at %zu, tokenizer at %zu", iter, at, end);
        }
    }
    csv_record_free(&rec);
}

/* The quote rule of csv.h read one byte at a time: the reference for
 * csv_quote_scan (same arguments, same result, same state after). */
static size_t rule_scan(csv_quote_mode *mode, char delim, const char *d, size_t len, int first)
{
    size_t best = len + 1;
    for (size_t i = 0; i < len; i++) {
        char c = d[i];
        switch (*mode) {
        case CSV_IN_QUOTES:
            if (c == '"') *mode = CSV_QUOTE_SEEN;
            continue;
        case CSV_QUOTE_SEEN: /* '""' is a quote; anything else follows a closing one */
            if (c == '"') { *mode = CSV_IN_QUOTES; continue; }
            break;
        case CSV_AT_FIELD: /* a quote opens quotes only as a field's first byte */
            if (c == '"') { *mode = CSV_IN_QUOTES; continue; }
            break;
        default: break;
        }
        if (c == '\n') {
            *mode = CSV_AT_FIELD;
            best = i + 1;
            if (first) return best;
        } else {
            *mode = c == delim ? CSV_AT_FIELD : CSV_IN_FIELD;
        }
    }
    return best;
}

Test(csv, quote_scan_follows_the_rule_byte_by_byte)
{
    /* 40,000 random texts up to 700 bytes, each from every state and in
     * both modes: dense quotes and newlines; long text with rare quotes
     * (passed with memchr); long lines of many short quoted fields (more
     * stretches outside quotes than csv_quote_scan notes, so it reads the
     * data again). */
    static const char *const alphabets[] = {
        "ab1,,;\"\"\"\n\n\r ",
        "abcdefghijklmnopqrstuvwxyz0123456789abcdefghijklmnopqrstuvwxyz,,,,,,,,\n\"",
        "\"\"\"a,,b,\"\"a,,\"a,\"\"a,,b,\"\"a,,\"a,\"\"a,,b,\"\"a,,\"a,\"\"a,,b,\"\"a,,\"a,\n"};
    uint64_t x = 0x452821E638D01377ull;
    char data[701];
    for (int iter = 0; iter < 40000; iter++) {
        const char *al = alphabets[iter % 3];
        size_t an = strlen(al), len = (size_t)(iter / 3 % 701);
        for (size_t i = 0; i < len; i++) {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            data[i] = al[x % an];
        }
        char delim = ",;"[iter % 2];
        for (int first = 0; first < 2; first++)
            for (int m = CSV_AT_FIELD; m <= CSV_QUOTE_SEEN; m++) {
                csv_quote_mode want_mode = (csv_quote_mode)m;
                csv_quote_state q = {(csv_quote_mode)m, delim};
                size_t want = rule_scan(&want_mode, delim, data, len, first);
                size_t got = csv_quote_scan(&q, data, len, first);
                cr_assert_eq(got, want, "iteration %d (%s, from state %d): %zu, the rule %zu", iter,
                             first ? "first" : "last", m, got, want);
                cr_assert_eq(q.mode, want_mode, "iteration %d (%s, from state %d)", iter,
                             first ? "first" : "last", m);
            }
    }
}

Test(csv, quote_scan_gives_the_same_record_ends_in_any_pieces)
{
    /* csv_quote_scan carries its state from piece to piece: cut into random
     * pieces, the first record end of each piece (first mode, again after
     * each end) and its last (last mode) are those of the whole text read
     * at once in first mode; 20,000 texts up to 300 bytes, pieces of 1 to
     * 150 bytes, so that blocks of 64 end anywhere. */
    static const char alphabet[] = "ab1,,;\"\"\"\n\n\r ";
    uint64_t x = 0xA4093822299F31D0ull;
    char data[301];
    unsigned char is_end[302];
    for (int iter = 0; iter < 20000; iter++) {
        size_t len = (size_t)(iter % 301);
        for (size_t i = 0; i < len; i++) {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            data[i] = alphabet[x % (sizeof alphabet - 1)];
        }
        char delim = ",;"[iter % 2];
        csv_quote_state q;
        csv_quote_init(&q, delim);
        memset(is_end, 0, sizeof is_end);
        for (size_t at = 0; at < len;) {
            size_t e = csv_quote_scan(&q, data + at, len - at, 1);
            if (e > len - at) break;
            at += e;
            is_end[at] = 1;
        }
        csv_quote_state a, b;
        csv_quote_init(&a, delim);
        csv_quote_init(&b, delim);
        for (size_t at = 0; at < len;) {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            size_t n = 1 + x % 150;
            if (n > len - at) n = len - at;
            size_t want = 0; /* the last record end in the piece, as an offset after it */
            for (size_t i = 1; i <= n; i++)
                if (is_end[at + i]) want = i;
            size_t got = csv_quote_scan(&a, data + at, n, 0);
            cr_assert_eq(got, want ? want : n + 1, "iteration %d, piece at %zu of %zu bytes", iter,
                         at, n);
            for (size_t from = 0; from < n;) { /* first mode, end after end */
                size_t e = csv_quote_scan(&b, data + at + from, n - from, 1);
                size_t next = from + 1;
                while (next <= n && !is_end[at + next]) next++;
                if (next > n) {
                    cr_assert_eq(e, n - from + 1, "iteration %d", iter);
                    break;
                }
                cr_assert_eq(from + e, next, "iteration %d, first end after %zu", iter, at + from);
                from = next;
            }
            cr_assert_eq(a.mode, b.mode, "iteration %d: the states differ after %zu", iter, at + n);
            at += n;
        }
    }
}

Test(csv, padded_and_rows_readers_agree_with_the_plain_one_on_random_chunks)
{
    /* Differential: 20,000 random chunks over an alphabet rich in the bytes
     * that matter, every length from 0 to 300, three delimiters; the rows
     * reader (csv_next_rows) also 1, 2 and 3 rows at a time. */
    static const char alphabet[] = "ab1,,,;\t\"\"\n\n\r ";
    uint64_t x = 0x243F6A8885A308D3ull;
    char data[301];
    for (int iter = 0; iter < 20000; iter++) {
        size_t len = (size_t)(iter % 301);
        for (size_t i = 0; i < len; i++) {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            data[i] = alphabet[x % (sizeof alphabet - 1)];
        }
        char delim = ",;\t"[iter % 3];
        tokenized a = tokenize_with(data, len, delim, 0);
        char what[32];
        snprintf(what, sizeof what, "iteration %d", iter);
        agree(&a, data, len, delim, what);
        /* One row at a time and three: where a batch ends changes nothing;
         * nor do the blocks the reader reads (SSE2, or AVX2 where the CPU
         * has it). */
        for (size_t batch = 1; batch <= 3; batch += 2)
            for (int wide = 0; wide < 2; wide++) {
                tokenized c = tokenize_rows(data, len, delim, batch, wide);
                cr_assert_str_eq(a.text, c.text, "%s, %zu rows at a time, wide %d", what, batch,
                                 wide);
                cr_assert(a.last == c.last && a.lines == c.lines, "%s", what);
            }
    }
}

Test(csv, rows_reader_gives_each_record_as_written)
{
    /* What the copy prints' row key rests on: a row's record (csv_rows.records)
     * runs from its first byte to after its line end, and unless the reader
     * marked it rewritten its bytes are still those of the input, which read
     * alone give the same fields.  Random chunks as above, 1 to 3 rows at a
     * time. */
    static const char alphabet[] = "ab1,,,;\t\"\"\n\n\r ";
    uint64_t x = 0x13198A2E03707344ull;
    char data[301];
    int rewritten = 0, plain = 0;
    for (int iter = 0; iter < 5000; iter++) {
        size_t len = (size_t)(iter % 301);
        for (size_t i = 0; i < len; i++) {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            data[i] = alphabet[x % (sizeof alphabet - 1)];
        }
        char delim = ",;\t"[iter % 3];
        size_t batch = 1 + (size_t)iter % 3;
        char *buf = padded_copy(data, len);
        csv_reader r;
        csv_reader_init_padded(&r, buf, len, delim);
        csv_span cells[MAX_FIELDS * 3], records[3];
        unsigned char rw[3];
        uint32_t nf[3];
        uint64_t line[3];
        csv_rows rows = {.cells = cells, .stride = batch, .width = MAX_FIELDS, .max_rows = batch,
                         .nfields = nf, .line = line, .base = buf, .stop = SIZE_MAX,
                         .max_record_bytes = SIZE_MAX, .records = records, .rewritten = rw};
        csv_status st;
        uint32_t after = 0;
        do {
            rows.rows = 0;
            st = csv_next_rows(&r, &rows);
            for (size_t i = 0; i < rows.rows; i++) {
                const csv_span *rec = &records[i];
                cr_assert_geq(rec->off, after, "iteration %d: records in order", iter);
                cr_assert_leq((size_t)rec->off + rec->len, len, "iteration %d", iter);
                after = rec->off + rec->len;
                for (size_t f = 0; f < nf[i] && f < MAX_FIELDS; f++) {
                    const csv_span *c = &cells[f * batch + i];
                    cr_assert(c->off >= rec->off && c->off + c->len <= after,
                              "iteration %d: field %zu inside its record", iter, f);
                }
                if (rw[i]) { rewritten++; continue; }
                plain++;
                cr_assert(memcmp(buf + rec->off, data + rec->off, rec->len) == 0,
                          "iteration %d: a record not rewritten keeps its bytes", iter);
                tokenized alone = tokenize_with(data + rec->off, rec->len, delim, 0);
                tokenized here;
                memset(&here, 0, sizeof here);
                size_t used = 0;
                const char *ptr[MAX_FIELDS];
                uint32_t flen[MAX_FIELDS];
                for (size_t f = 0; f < MAX_FIELDS; f++) {
                    ptr[f] = buf + cells[f * batch + i].off;
                    flen[f] = cells[f * batch + i].len;
                }
                render(&here, &used, ptr, flen, nf[i], 0);
                here.text[used] = '\0';
                cr_assert_str_eq(alone.text, here.text, "iteration %d: read alone", iter);
            }
        } while (st == CSV_RECORD);
        free(buf);
    }
    cr_assert(rewritten > 100 && plain > 1000, "both kinds met: %d rewritten, %d plain",
              rewritten, plain);
}

/* --- other delimiters ------------------------------------------------------- */

Test(csv, tab_semicolon_and_pipe_delimiters)
{
    expect_records("a\tb,c\t\n", '\t', "<a><b,c><>\n");
    expect_records("1;2,5;\"x;y\"\n", ';', "<1><2,5><x;y>\n");
    expect_records("p|q\r\n|\"r|s\"\n", '|', "<p><q>\n<><r|s>\n");
    /* A comma is plain data when it is not the delimiter. */
    expect_records("a,b\n", ';', "<a,b>\n");
}

/* --- lenient cases documented in csv.h -------------------------------------- */

Test(csv, quote_inside_unquoted_field_is_kept_as_a_character)
{
    expect_records("ab\"c,d\n", ',', "<ab\"c><d>\n");
    expect_records("5\" pipe,x\n", ',', "<5\" pipe><x>\n");
}

Test(csv, text_after_closing_quote_is_appended)
{
    expect_records("\"ab\"cd,e\n", ',', "<abcd><e>\n");
    expect_records("\"ab\" ,c\n", ',', "<ab ><c>\n");
    expect_records("\"a\"\"b\"x\r\n", ',', "<a\"bx>\n");
    expect_records("x,\"ab\"cd", ',', "<x><abcd>\n");
}

/* --- delimiter detection ---------------------------------------------------- */

static char detect(const char *s) { return csv_detect_delimiter(s, strlen(s)); }

Test(csv, detects_comma_tab_semicolon_and_pipe)
{
    cr_assert_eq(detect("id,name,score\n1,ann,3.5\n2,bo,4\n"), ',');
    cr_assert_eq(detect("id\tname\tscore\n1\tann\t3.5\n2\tbo\t4\n"), '\t');
    cr_assert_eq(detect("id;name;score\n1;ann;3.5\n2;bo;4\n"), ';');
    cr_assert_eq(detect("id|name|score\n1|ann|3.5\n2|bo|4\n"), '|');
}

Test(csv, detects_space_when_it_is_the_only_consistent_delimiter)
{
    /* The layout of statsmodels' spector.csv (Debian python3-statsmodels). */
    cr_assert_eq(detect("'OBS' 'GPA' 'TUCE'\n1 2.66 20\n2 2.89 22\n"), ' ');
    cr_assert_eq(detect("a b\r\n1 2\r\n"), ' ');
    cr_assert_eq(detect("\"a b\" c\n1 2\n"), ' ', "a quoted space is not a delimiter");
    /* a comma (or tab, ';', '|') splitting the first line wins over spaces */
    cr_assert_eq(detect("fan rpm,temp c\n1,2\n"), ',');
    cr_assert_eq(detect("fan rpm\ttemp c\n1\t2\n"), '\t');
}

Test(csv, uneven_spaces_are_not_a_delimiter)
{
    cr_assert_eq(detect("note\nthe fan stopped\nok\n"), ',', "prose in one column");
    cr_assert_eq(detect("a  b\n1 2\n"), ',', "aligned with a run of spaces: uneven counts");
    cr_assert_eq(detect("one\ntwo\n"), ',');
}

Test(csv, detects_tab_when_commas_appear_only_inside_quotes)
{
    const char *s = "site\tnote\tcount\n"
                    "north\t\"wet, cold, windy\"\t3\n"
                    "south\t\"dry, warm\"\t7\n"
                    "east\t\"a, b, c, d\"\t1\n";
    cr_assert_eq(detect(s), '\t');
}

Test(csv, detects_semicolon_with_decimal_commas)
{
    /* Decimal commas give a different comma count on every line. */
    cr_assert_eq(detect("a;b;c\n1,5;2,25;3\n4;5,0;6,125\n"), ';');
}

Test(csv, newline_inside_quotes_does_not_end_a_sample_line)
{
    const char *s = "id|memo\n1|\"line one\nline, two, three\"\n2|plain\n";
    cr_assert_eq(detect(s), '|');
}

Test(csv, detection_ties_go_to_the_earlier_candidate)
{
    /* Comma and semicolon both split every line in two: ',' comes first. */
    cr_assert_eq(detect("a,b;c\nd,e;f\n"), ',');
    /* Tab before pipe. */
    cr_assert_eq(detect("a\tb|c\nd\te|f\n"), '\t');
}

Test(csv, detection_falls_back_to_comma)
{
    cr_assert_eq(detect("single\ncolumn\nonly\n"), ',');
    cr_assert_eq(detect(""), ',');
}

Test(csv, detection_reads_a_sample_without_final_newline)
{
    cr_assert_eq(detect("a|b|c"), '|');
    cr_assert_eq(detect("a;b;c\n1;2;3\n4;5"), ';');
}

/* --- byte-order mark -------------------------------------------------------- */

Test(csv, bom_length_is_three_for_a_utf8_bom_else_zero)
{
    cr_assert_eq(csv_bom_length("\xEF\xBB\xBF" "a,b\n", 7), 3);
    cr_assert_eq(csv_bom_length("\xEF\xBB\xBF", 3), 3);
    cr_assert_eq(csv_bom_length("a,b\n", 4), 0);
    cr_assert_eq(csv_bom_length("\xEF\xBB", 2), 0);       /* too short */
    cr_assert_eq(csv_bom_length("\xEF\xBB\xBE" "x", 4), 0); /* not the BOM */
    cr_assert_eq(csv_bom_length("\xFE\xFF" "a", 3), 0);     /* UTF-16 BOM is not skipped */
    cr_assert_eq(csv_bom_length("", 0), 0);
}
