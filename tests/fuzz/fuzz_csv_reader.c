/* fuzz_csv_reader: the record reader (io/reader) and the tokenizer (io/csv)
 * on any bytes.
 *
 * The first three bytes of an input choose the options; the rest (at most
 * 8 KiB) is the stream:
 *   byte 0: the delimiter (0 mod 5: detected; else ',', '\t', ';', '|'), and
 *           bit 3 a small --max-record (16 .. 271 bytes, from byte 2);
 *   byte 1: the chunk size of the second reading, 1 .. 256 bytes;
 *   byte 2: the feed size of the second reading, 1 .. 256 bytes.
 * Every input is read four ways, and they must agree:
 *   1. the reference: one chunk (64 KiB chunks), fed in one piece;
 *   2. small chunks (byte 1) fed in small pieces (byte 2): the same records
 *      (fields byte for byte, line, stream offset and end), and the same
 *      ending (end of stream, or the same error message);
 *   3. raw mode (what trim reads) with the chunking of 2: each record's raw
 *      fields joined by the delimiter, followed by its line end, are exactly
 *      the stream's bytes from the record's offset to its end, and
 *      csv_unquote of each raw field is the field of reading 1;
 *   4. the tokenizer alone on the whole stream after its byte-order mark,
 *      held in a buffer of exactly its size (so AddressSanitizer sees any
 *      read past it): the plain tokenizer (csv_reader_init) and the padded
 *      one (csv_reader_init_padded, 64 zero bytes after the data) give the
 *      same fields and statuses, and every record they end is a record end
 *      of csv_quote_scan (the chunker's and the shard start's quote rule);
 *   5. the rows reader (csv_next_rows, what the scan reads with) on the
 *      same bytes, in both its block widths (SSE2, and AVX2 where the CPU
 *      has it), rows of 1 to 5 spans (byte 1), 1 to 3 rows at a time
 *      (byte 2): the first fields of each record of reading 4, empty spans
 *      for the fields a record lacks, its field count and line, the same
 *      ending.
 * Reference: the reader's own whole-input reading (reading 1) and the quote
 * rule as io/csv.h states it; what the readings must share is what
 * io/reader.h promises ("the records, their fields and line numbers depend
 * on the bytes alone, never on how they were split when fed").
 *
 * With a detected delimiter, reading 1 detects it (detection reads the first
 * chunk only, so smaller chunks may legitimately detect another one) and
 * the other readings are given the one it chose.
 *
 * A disagreement prints what differs and aborts, so libFuzzer keeps the
 * input.  Built with -DFUZZ_REPLAY_MAIN it is a plain program:
 * `replay_csv_reader FILE_OR_DIR...` runs every file once.
 */
#include <dirent.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "io/csv.h"
#include "io/reader.h"

#define MAX_INPUT_BYTES (8192 + 3)
#define OPTION_BYTES 3
/* The reference chunk size: 8 times the longest stream, so it is one chunk
 * (as with the 4 MiB default, without its large buffer under ASan). */
#define WHOLE_CHUNK_BYTES (64u << 10)

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void fault(const char *fmt, ...) __attribute__((format(printf, 1, 2), noreturn));
static void fault(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "fuzz_csv_reader: ");
    vfprintf(stderr, fmt, ap);
    fprintf(stderr, "\n");
    va_end(ap);
    abort();
}

/* A growing byte buffer: the records of a reading, serialized. */
typedef struct {
    uint8_t *p;    /* bytes */
    size_t len;    /* used */
    size_t cap;    /* allocated */
    size_t count;  /* records */
} tape;

static void tape_put(tape *t, const void *src, size_t n)
{
    if (t->len + n > t->cap) {
        size_t cap = t->cap ? t->cap : 4096;
        while (cap < t->len + n) cap *= 2;
        uint8_t *p = realloc(t->p, cap);
        if (!p) fault("out of memory");
        t->p = p;
        t->cap = cap;
    }
    memcpy(t->p + t->len, src, n);
    t->len += n;
}

static void tape_record(tape *t, const reader_record *rec)
{
    uint64_t head[4] = {rec->line, rec->offset, rec->end, rec->nfields};
    tape_put(t, head, sizeof head);
    for (size_t i = 0; i < rec->nfields; i++) {
        uint32_t len = rec->fields[i].len;
        tape_put(t, &len, sizeof len);
        tape_put(t, rec->fields[i].ptr, len);
    }
    t->count++;
}

/* One reading's settings. */
typedef struct {
    char delim;          /* 0: detect */
    size_t chunk_bytes;  /* reader_options.chunk_bytes */
    size_t feed_bytes;   /* bytes per reader_feed (0: all at once) */
    size_t max_record;   /* reader_options.max_record_bytes */
    int raw;             /* raw fields */
} reading;

/* What a reading ended with. */
typedef struct {
    reader_status last; /* READER_END or READER_ERROR */
    char err[512];      /* reader_error when READER_ERROR */
    char delim;         /* the delimiter the reader used */
} ending;

/* Reads the stream; every record goes to on_record (with ctx). */
static void read_stream(const uint8_t *s, size_t len, const reading *how,
                        void (*on_record)(void *, const reader_record *), void *ctx, ending *out)
{
    reader_options o;
    reader_options_defaults(&o);
    o.delim = how->delim;
    o.chunk_bytes = how->chunk_bytes;
    o.max_record_bytes = how->max_record;
    o.raw = how->raw;
    reader *r = reader_create(&o);
    if (!r) fault("reader_create failed");
    reader_start(r, "fuzz.csv", 1, how->delim, 0);
    size_t fed = 0;
    reader_status rs;
    for (;;) {
        reader_record rec;
        rs = reader_next(r, &rec);
        if (rs == READER_RECORD) {
            on_record(ctx, &rec);
            continue;
        }
        if (rs == READER_CHUNK_END) continue;
        if (rs != READER_WANT) break;
        if (fed == len) {
            reader_finish(r);
            continue;
        }
        size_t n = len - fed;
        if (how->feed_bytes && n > how->feed_bytes) n = how->feed_bytes;
        size_t took = reader_feed(r, s + fed, n);
        if (took == (size_t)-1) {
            rs = READER_ERROR;
            break;
        }
        fed += took;
    }
    out->last = rs;
    out->delim = reader_delim(r);
    snprintf(out->err, sizeof out->err, "%s", rs == READER_ERROR ? reader_error(r) : "");
    if (rs != READER_END && rs != READER_ERROR) fault("reader ended with status %d", (int)rs);
    reader_free(r);
}

static void to_tape(void *ctx, const reader_record *rec)
{
    tape_record(ctx, rec);
}

/* Reading 3: raw records against the stream and against reading 1. */
typedef struct {
    const uint8_t *stream; /* the stream */
    size_t len;            /* its length */
    char delim;            /* the delimiter */
    const tape *ref;       /* reading 1 */
    size_t at;             /* read position in ref */
    size_t index;          /* records seen */
    char *scratch;         /* room for one joined record (len + 2 bytes) */
} raw_check;

static void check_raw(void *ctx, const reader_record *rec)
{
    raw_check *c = ctx;
    if (rec->end > c->len || rec->offset > rec->end)
        fault("raw record %zu: offset %llu end %llu, stream of %zu bytes", c->index,
              (unsigned long long)rec->offset, (unsigned long long)rec->end, c->len);
    size_t n = 0;
    for (size_t i = 0; i < rec->nfields; i++) {
        if (i) c->scratch[n++] = c->delim;
        if (n + rec->fields[i].len > c->len + 2) fault("raw record %zu is longer than the stream", c->index);
        memcpy(c->scratch + n, rec->fields[i].ptr, rec->fields[i].len);
        n += rec->fields[i].len;
    }
    if (n + rec->eol_len > c->len + 2) fault("raw record %zu is longer than the stream", c->index);
    memcpy(c->scratch + n, rec->eol, rec->eol_len);
    n += rec->eol_len;
    size_t span = (size_t)(rec->end - rec->offset);
    if (n != span || memcmp(c->scratch, c->stream + rec->offset, n) != 0)
        fault("raw record %zu (line %llu): fields and line end give %zu bytes, the stream "
              "holds %zu from offset %llu",
              c->index, (unsigned long long)rec->line, n, span, (unsigned long long)rec->offset);
    /* The unquoted fields of the same record in reading 1. */
    uint64_t head[4];
    if (c->at + sizeof head > c->ref->len) fault("raw record %zu is not in the reference", c->index);
    memcpy(head, c->ref->p + c->at, sizeof head);
    c->at += sizeof head;
    if (head[1] != rec->offset || head[3] != rec->nfields)
        fault("raw record %zu: offset %llu, %zu fields; reference offset %llu, %llu fields",
              c->index, (unsigned long long)rec->offset, rec->nfields,
              (unsigned long long)head[1], (unsigned long long)head[3]);
    for (size_t i = 0; i < rec->nfields; i++) {
        uint32_t len;
        memcpy(&len, c->ref->p + c->at, sizeof len);
        c->at += sizeof len;
        size_t u = csv_unquote(rec->fields[i].ptr, rec->fields[i].len, c->scratch);
        if (u != len || memcmp(c->scratch, c->ref->p + c->at, len) != 0)
            fault("raw record %zu field %zu: csv_unquote gives \"%.*s\", the reader \"%.*s\"",
                  c->index, i + 1, (int)u, c->scratch, (int)len, (const char *)c->ref->p + c->at);
        c->at += len;
    }
    c->index++;
}

/* Reading 4: the tokenizer on the whole text, plain and padded. */
static void check_tokenizer(const uint8_t *s, size_t len, char delim)
{
    char *plain = malloc(len ? len : 1), *padded = malloc(len + CSV_READ_AHEAD);
    unsigned char *ends = calloc(len + 2, 1);
    if (!plain || !padded || !ends) fault("out of memory");
    memcpy(plain, s, len);
    memcpy(padded, s, len);
    memset(padded + len, 0, CSV_READ_AHEAD);
    /* Every record end of the quote rule. */
    csv_quote_state q;
    csv_quote_init(&q, delim);
    for (size_t at = 0; at < len;) {
        size_t e = csv_quote_scan(&q, plain + at, len - at, 1);
        if (e > len - at) break;
        at += e;
        ends[at] = 1;
    }
    ends[len] = 1;
    csv_reader a, b;
    csv_reader_init(&a, plain, len, delim);
    csv_reader_init_padded(&b, padded, len, delim);
    csv_record ra = {0}, rb = {0};
    for (size_t k = 0;; k++) {
        csv_status sa = csv_next(&a, &ra), sb = csv_next(&b, &rb);
        if (sa != sb) fault("tokenizer record %zu: plain status %d, padded %d", k, sa, sb);
        if (sa != CSV_RECORD) break;
        if (ra.nfields != rb.nfields)
            fault("tokenizer record %zu: plain %zu fields, padded %zu", k, ra.nfields, rb.nfields);
        for (size_t i = 0; i < ra.nfields; i++)
            if (ra.fields[i].len != rb.fields[i].len ||
                memcmp(ra.fields[i].ptr, rb.fields[i].ptr, ra.fields[i].len) != 0)
                fault("tokenizer record %zu field %zu: plain \"%.*s\", padded \"%.*s\"", k, i + 1,
                      (int)ra.fields[i].len, ra.fields[i].ptr, (int)rb.fields[i].len,
                      rb.fields[i].ptr);
        size_t ea = (size_t)(a.pos - plain), eb = (size_t)(b.pos - padded);
        if (ea != eb) fault("tokenizer record %zu: plain ends at %zu, padded at %zu", k, ea, eb);
        if (ea > len || !ends[ea])
            fault("tokenizer record %zu ends at byte %zu, which is no record end of "
                  "csv_quote_scan", k, ea);
    }
    csv_record_free(&ra);
    csv_record_free(&rb);
    free(plain);
    free(padded);
    free(ends);
}

/* Reading 5: csv_next_rows against the plain tokenizer, in step. */
static void check_rows(const uint8_t *s, size_t len, char delim, size_t width, size_t batch,
                       int wide)
{
    char *plain = malloc(len ? len : 1), *padded = malloc(len + CSV_READ_AHEAD);
    csv_span *cells = malloc(width * batch * sizeof *cells);
    uint32_t nf[3];
    uint64_t line[3];
    csv_span records[3];
    unsigned char rewritten[3];
    if (!plain || !padded || !cells || batch > 3) fault("out of memory");
    memcpy(plain, s, len);
    memcpy(padded, s, len);
    memset(padded + len, 0, CSV_READ_AHEAD);
    csv_reader a, b;
    csv_reader_init(&a, plain, len, delim);
    csv_reader_init_padded(&b, padded, len, delim);
    if (!wide) b.wide = 0;
    csv_record ra = {0};
    csv_rows rows = {.cells = cells, .stride = batch, .width = width, .max_rows = batch,
                     .nfields = nf, .line = line, .base = padded, .stop = SIZE_MAX,
                     .max_record_bytes = SIZE_MAX, .records = records, .rewritten = rewritten};
    size_t k = 0;
    csv_status sb, sa = CSV_RECORD;
    do {
        rows.rows = 0;
        sb = csv_next_rows(&b, &rows);
        for (size_t i = 0; i < rows.rows; i++, k++) {
            sa = csv_next(&a, &ra);
            if (sa != CSV_RECORD) fault("rows record %zu: the plain tokenizer ends with %d", k, sa);
            if (nf[i] != ra.nfields || line[i] != a.record_line + 1)
                fault("rows record %zu: %u fields at line %llu, plain %zu at %llu", k, nf[i],
                      (unsigned long long)line[i], ra.nfields,
                      (unsigned long long)a.record_line + 1);
            /* The record as written (the copy prints' row key): where the
             * plain tokenizer found it, and its input bytes unless a quoted
             * field was copied down. */
            if (records[i].off != (size_t)(a.record_start - plain) ||
                records[i].len != (size_t)(a.record_end - a.record_start))
                fault("rows record %zu: record at %u, %u bytes; plain at %zu, %zu", k,
                      records[i].off, records[i].len, (size_t)(a.record_start - plain),
                      (size_t)(a.record_end - a.record_start));
            const csv_span *rec = &records[i];
            if (!rewritten[i] && memcmp(padded + rec->off, s + rec->off, rec->len))
                fault("rows record %zu: not rewritten, yet its bytes changed", k);
            for (size_t f = 0; f < width; f++) {
                const csv_span *x = &cells[f * batch + i];
                size_t want = f < ra.nfields ? ra.fields[f].len : 0;
                if (x->len != want || (want && memcmp(padded + x->off, ra.fields[f].ptr, want)))
                    fault("rows record %zu field %zu (wide %d): \"%.*s\", plain \"%.*s\"", k,
                          f + 1, wide, (int)x->len, padded + x->off, (int)want,
                          want ? ra.fields[f].ptr : "");
                if (f >= ra.nfields && x->off != 0) fault("rows record %zu: a lacking field is not empty", k);
            }
        }
    } while (sb == CSV_RECORD);
    sa = csv_next(&a, &ra);
    if (sa != sb) fault("rows end with %d after %zu records, the plain tokenizer with %d", sb, k, sa);
    if (a.lines != b.lines) fault("rows count %llu lines, the plain tokenizer %llu",
                                  (unsigned long long)b.lines, (unsigned long long)a.lines);
    csv_record_free(&ra);
    free(plain);
    free(padded);
    free(cells);
}

/* The same records; after an error, the records of one reading may be a
 * prefix of the other's (the chunker stops at a record over the limit before
 * it hands out the records of the chunk before it). */
static void compare_tapes(const tape *a, const tape *b, const char *what, int error)
{
    size_t n = a->len < b->len ? a->len : b->len;
    if ((a->len == b->len || error) && (n == 0 || memcmp(a->p, b->p, n) == 0)) return;
    size_t at = 0;
    while (at < a->len && at < b->len && a->p[at] == b->p[at]) at++;
    fault("%s: %zu records vs the reference's %zu; serialized records differ from byte %zu", what,
          b->count, a->count, at);
}

/* Byte offset named by a "record at byte N is longer" message, or -1. */
static long long too_long_at(const char *msg)
{
    const char *p = strstr(msg, "record at byte ");
    return p && strstr(p, "is longer than") ? atoll(p + 15) : -1;
}

/* The same ending.  Errors carry the same message, with two exceptions that
 * io/chunk.c and io/reader.c make on purpose: a record over --max-record
 * found by the chunker (it spans chunks) is named by its byte offset only,
 * and found by the cursor (inside one chunk) by its line and byte offset,
 * so two such messages must name the same byte; and under a small limit, a
 * quote left open to the end of the input is "unterminated" when the whole
 * of it is in one chunk but "longer than the limit" when the chunker meets
 * it first. */
static int same_ending(const ending *a, const ending *b, int small_limit)
{
    if (a->last != b->last) return 0;
    if (strcmp(a->err, b->err) == 0) return 1;
    long long x = too_long_at(a->err), y = too_long_at(b->err);
    if (x >= 0 && y >= 0) return x == y;
    if (!small_limit) return 0;
    return (x >= 0 && strstr(b->err, "unterminated quote")) ||
           (y >= 0 && strstr(a->err, "unterminated quote"));
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size < OPTION_BYTES) return 0;
    if (size > MAX_INPUT_BYTES) size = MAX_INPUT_BYTES;
    static const char delims[5] = {0, ',', '\t', ';', '|'};
    const uint8_t *s = data + OPTION_BYTES;
    size_t len = size - OPTION_BYTES;
    reading ref = {delims[data[0] % 5], WHOLE_CHUNK_BYTES, 0, 64u << 20, 0};
    if (data[0] & 8) ref.max_record = 16 + data[2];

    tape t1 = {0}, t2 = {0};
    ending e1, e2, e3;
    read_stream(s, len, &ref, to_tape, &t1, &e1);

    reading small = ref;
    small.delim = e1.delim ? e1.delim : ref.delim;
    small.chunk_bytes = 1 + data[1];
    small.feed_bytes = 1 + data[2];
    read_stream(s, len, &small, to_tape, &t2, &e2);
    if (!same_ending(&e1, &e2, ref.max_record < (64u << 20)))
        fault("small chunks (%zu bytes, fed %zu at a time) end with %d \"%s\", the reference "
              "with %d \"%s\"", small.chunk_bytes, small.feed_bytes, (int)e2.last, e2.err,
              (int)e1.last, e1.err);
    compare_tapes(&t1, &t2, "small chunks", e1.last == READER_ERROR);

    if (e1.delim) {
        reading raw = small;
        raw.raw = 1;
        raw_check c = {s, len, e1.delim, &t1, 0, 0, malloc(len + 2)};
        if (!c.scratch) fault("out of memory");
        read_stream(s, len, &raw, check_raw, &c, &e3);
        if (!same_ending(&e1, &e3, ref.max_record < (64u << 20)))
            fault("raw reading ends with %d \"%s\", the reference with %d \"%s\"", (int)e3.last,
                  e3.err, (int)e1.last, e1.err);
        if (e3.last == READER_END && c.index != t1.count)
            fault("raw reading: %zu records, the reference %zu", c.index, t1.count);
        free(c.scratch);
        size_t bom = csv_bom_length((const char *)s, len);
        check_tokenizer(s + bom, len - bom, e1.delim);
        for (int wide = 0; wide < 2; wide++)
            check_rows(s + bom, len - bom, e1.delim, 1 + data[1] % 5, 1 + data[2] % 3, wide);
    }
    free(t1.p);
    free(t2.p);
    return 0;
}

#ifdef FUZZ_REPLAY_MAIN
#include "replay_main.h"
#endif
