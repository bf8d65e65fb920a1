/* Tests for io/chunk: cutting a byte source into chunks of whole records.
 *
 * The checks do not reuse the chunker's parity rule.  Record ends are found
 * by an RFC 4180 state machine written here (section 2: a field that starts
 * with '"' runs to the matching unescaped quote; a line break outside quotes
 * ends the record), run once over the whole file.  Every chunk but the last
 * must end at one of those offsets, the chunks must concatenate to the file
 * byte for byte, and tokenizing chunk by chunk must give the same records as
 * tokenizing the whole file in one piece.
 *
 * Test files are generated from a fixed-seed xorshift64 generator (Marsaglia
 * 2003), so every run sees the same bytes; they are written with mkstemp
 * under /tmp and removed at the end of each test.
 */
#include <criterion/criterion.h>

#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <xxhash.h>
#include <zlib.h>

#include "io/chunk.h"
#include "io/csv.h"
#include "io/source.h"
#include "testutil.h"

/* --- helpers ---------------------------------------------------------------- */

/* The next chunk of a source pulled through the fed chunker, as a pass does
 * it: take chunks while there are any, else read once more (at most 1 MiB)
 * or finish the stream.  Returns 1, 0 at the end, -1 on an error. */
static int next_chunk(chunker *c, source *src, chunk *ch, char *err, size_t errlen)
{
    for (;;) {
        int rc = chunker_next(c, ch, err, errlen);
        if (rc != 0 || chunker_done(c)) return rc;
        size_t room;
        char *p = chunker_space(c, &room, err, errlen);
        if (!p) return -1;
        ssize_t n = source_read(src, p, room < (1u << 20) ? room : (1u << 20));
        if (n < 0) { snprintf(err, errlen, "%s", source_error(src)); return -1; }
        if (n == 0) chunker_finish(c);
        else chunker_commit(c, (size_t)n);
    }
}

/* A chunker over src for comma-separated text. */
static void chunker_begin(chunker *c, source *src)
{
    chunker_start(c, source_path(src));
    chunker_set_dialect(c, ',', 0);
}

typedef struct {
    char *data;
    size_t len, cap;
} bytes;

static void put(bytes *b, const void *p, size_t n)
{
    if (b->len + n + 1 > b->cap) {
        size_t cap = b->cap ? b->cap : 4096;
        while (cap < b->len + n + 1) cap *= 2;
        b->data = realloc(b->data, cap);
        cr_assert_not_null(b->data);
        b->cap = cap;
    }
    memcpy(b->data + b->len, p, n);
    b->len += n;
    b->data[b->len] = '\0';
}

static void puts_(bytes *b, const char *s) { put(b, s, strlen(s)); }

static uint64_t xorshift64(uint64_t *state)
{
    uint64_t x = *state;
    x ^= x << 13;
    x ^= x >> 7;
    x ^= x << 17;
    return *state = x;
}

/* Writes data to a new file under /tmp; path receives its name. */
static void write_temp(const void *data, size_t len, char path[64])
{
    strcpy(path, "/tmp/sheaf_test_chunk_XXXXXX");
    int fd = mkstemp(path);
    cr_assert_geq(fd, 0, "mkstemp failed");
    const char *p = data;
    size_t left = len;
    while (left) {
        ssize_t n = write(fd, p, left);
        cr_assert_gt(n, 0, "write failed");
        p += n;
        left -= (size_t)n;
    }
    close(fd);
}

/* RFC 4180 CSV with numbers, empty fields, quoted fields holding commas,
 * doubled quotes, LF and CRLF line breaks, some long quoted fields, and a mix
 * of LF and CRLF record ends.  No bare quote inside an unquoted field (the
 * chunker's parity rule is for RFC 4180 text). */
static bytes generate_csv(uint64_t seed, size_t target)
{
    static const char *words[] = {"harbor", "kiln", "lantern", "meadow", "quarry",
                                  "ridge",  "sluice", "thicket", "vane", "wicker"};
    bytes b = {0};
    uint64_t s = seed;
    char tmp[64];
    puts_(&b, "id,site,reading,note,flag,tail\n");
    for (uint64_t row = 0; b.len < target; row++) {
        snprintf(tmp, sizeof tmp, "%llu,", (unsigned long long)row);
        puts_(&b, tmp);
        puts_(&b, words[xorshift64(&s) % 10]);
        puts_(&b, ",");
        uint64_t r = xorshift64(&s);
        if (r % 11 == 0) { /* empty */ }
        else {
            snprintf(tmp, sizeof tmp, "%lld.%03u", (long long)(r % 20000) - 10000,
                     (unsigned)(r >> 40) % 1000);
            puts_(&b, tmp);
        }
        puts_(&b, ",");
        r = xorshift64(&s);
        switch (r % 8) {
        case 0: puts_(&b, "\"comma, inside\""); break;
        case 1: puts_(&b, "\"he said \"\"go\"\"\""); break;
        case 2: puts_(&b, "\"first line\nsecond line\""); break;
        case 3: puts_(&b, "\"crlf\r\ninside, too\""); break;
        case 4: { /* long quoted field with newlines and doubled quotes */
            put(&b, "\"", 1);
            int len = 50 + (int)((r >> 8) % 400);
            for (int i = 0; i < len; i++) {
                uint64_t c = xorshift64(&s) % 40;
                char ch = c == 0 ? '\n' : c == 1 ? ',' : (char)('a' + c % 26);
                if (c == 2) put(&b, "\"\"", 2);
                else put(&b, &ch, 1);
            }
            put(&b, "\"", 1);
            break;
        }
        case 5: puts_(&b, "\"\""); break;
        case 6: /* quotes that do not open a field: data under the quote rule */
            puts_(&b, (r >> 12) & 1 ? "5'10\"" : "\"closed\" then \"text");
            break;
        default: puts_(&b, words[(r >> 16) % 10]); break;
        }
        puts_(&b, ",");
        puts_(&b, (r >> 20) & 1 ? "yes" : "");
        puts_(&b, ",");
        puts_(&b, words[(r >> 24) % 10]);
        puts_(&b, (r >> 30) % 5 == 0 ? "\r\n" : "\n");
    }
    return b;
}

/* Marks in is_end[i] (size len + 1) the offsets just after a record end,
 * using an RFC 4180 state machine independent of the chunker. */
static unsigned char *record_ends(const char *d, size_t len)
{
    unsigned char *is_end = calloc(len + 1, 1);
    cr_assert_not_null(is_end);
    enum { FIELD_START, UNQUOTED, QUOTED, QUOTE_SEEN } st = FIELD_START;
    for (size_t i = 0; i < len; i++) {
        char c = d[i];
        switch (st) {
        case FIELD_START:
            if (c == '"') st = QUOTED;
            else if (c == '\n') is_end[i + 1] = 1;
            else if (c != ',') st = UNQUOTED;
            break;
        case UNQUOTED:
            if (c == ',') st = FIELD_START;
            else if (c == '\n') { is_end[i + 1] = 1; st = FIELD_START; }
            break;
        case QUOTED:
            if (c == '"') st = QUOTE_SEEN;
            break;
        case QUOTE_SEEN: /* after a quote inside a quoted field */
            if (c == '"') st = QUOTED; /* doubled quote */
            else if (c == ',') st = FIELD_START;
            else if (c == '\n') { is_end[i + 1] = 1; st = FIELD_START; }
            else st = UNQUOTED; /* '\r' before '\n', or lenient trailing text */
            break;
        }
    }
    return is_end;
}

/* Hashes the records of a chunk as the tokenizer returns them (field count,
 * then each field's length and bytes).  Returns the number of records. */
static uint64_t hash_records(XXH3_state_t *h, char *data, size_t len)
{
    csv_reader r;
    csv_reader_init(&r, data, len, ',');
    csv_record rec = {0};
    uint64_t records = 0;
    csv_status st;
    while ((st = csv_next(&r, &rec)) == CSV_RECORD) {
        records++;
        uint64_t nf = rec.nfields;
        const csv_field *f = rec.fields;
        XXH3_64bits_update(h, &nf, sizeof nf);
        for (size_t i = 0; i < nf && i < 16; i++) {
            XXH3_64bits_update(h, &f[i].len, sizeof f[i].len);
            XXH3_64bits_update(h, f[i].ptr, f[i].len);
        }
    }
    cr_assert_eq(st, CSV_END, "tokenizer stopped with %d inside a chunk", (int)st);
    csv_record_free(&rec);
    return records;
}

typedef struct {
    size_t chunks;        /* chunks delivered */
    size_t short_chunks;  /* non-last chunks shorter than chunk_bytes */
    size_t longest;       /* longest chunk */
    uint64_t records;     /* records tokenized over all chunks */
    uint64_t records_hash;
} chunk_run;

/* Reads path through source_open + chunker and checks every chunk against
 * want[0..want_len): contiguous offsets, exact bytes, cuts at record ends. */
static chunk_run check_chunks(const char *path, const char *want, size_t want_len,
                              size_t chunk_bytes, size_t max_record)
{
    char err[512] = "";
    source *src = source_open(path, err, sizeof err);
    cr_assert_not_null(src, "%s", err);
    chunker *c = chunker_create(chunk_bytes, max_record);
    cr_assert_not_null(c);
    chunker_begin(c, src);
    unsigned char *is_end = record_ends(want, want_len);
    XXH3_state_t *h = XXH3_createState();
    XXH3_64bits_reset(h);
    chunk_run run = {0};
    uint64_t pos = 0;
    int saw_last = 0;
    chunk ch;
    int rc;
    while ((rc = next_chunk(c, src, &ch, err, sizeof err)) == 1) {
        cr_assert(!saw_last, "a chunk followed one marked last");
        cr_assert_eq(ch.offset, pos, "chunk %zu at offset %llu, want %llu", run.chunks,
                     (unsigned long long)ch.offset, (unsigned long long)pos);
        cr_assert_leq(pos + ch.len, want_len, "chunks run past the end of the file");
        cr_assert_eq(memcmp(ch.data, want + pos, ch.len), 0,
                     "chunk %zu (offset %llu, %zu bytes) differs from the file", run.chunks,
                     (unsigned long long)pos, ch.len);
        cr_assert_gt(ch.len, 0, "empty chunk");
        pos += ch.len;
        if (pos < want_len) {
            /* Not the last chunk: it must end at a record end. */
            cr_assert_eq(ch.data[ch.len - 1], '\n', "chunk %zu ends with byte 0x%02x",
                         run.chunks, (unsigned char)ch.data[ch.len - 1]);
            cr_assert(is_end[pos], "chunk %zu ends at offset %llu, inside a quoted field",
                      run.chunks, (unsigned long long)pos);
            if (ch.len < chunk_bytes) run.short_chunks++;
        }
        if (ch.last) saw_last = 1;
        if (ch.len > run.longest) run.longest = ch.len;
        run.records += hash_records(h, ch.data, ch.len);
        run.chunks++;
    }
    cr_assert_eq(rc, 0, "chunker error: %s", err);
    cr_assert_eq(pos, want_len, "chunks hold %llu bytes, file %zu", (unsigned long long)pos,
                 want_len);
    run.records_hash = XXH3_64bits_digest(h);
    XXH3_freeState(h);
    free(is_end);
    chunker_free(c);
    source_close(src);
    return run;
}

/* Records of the whole text tokenized as one chunk. */
static void whole_records(const char *data, size_t len, uint64_t *records, uint64_t *hash)
{
    char *copy = malloc(len + 1);
    cr_assert_not_null(copy);
    memcpy(copy, data, len);
    XXH3_state_t *h = XXH3_createState();
    XXH3_64bits_reset(h);
    *records = hash_records(h, copy, len);
    *hash = XXH3_64bits_digest(h);
    XXH3_freeState(h);
    free(copy);
}

static void check_generated(size_t target, size_t chunk_bytes)
{
    bytes b = generate_csv(0x5eedf00d, target);
    char path[64];
    write_temp(b.data, b.len, path);
    uint64_t want_records, want_hash;
    whole_records(b.data, b.len, &want_records, &want_hash);
    chunk_run run = check_chunks(path, b.data, b.len, chunk_bytes, 64u << 20);
    /* A chunk holds at most twice chunk_bytes plus one generated record. */
    cr_assert_geq(run.chunks, b.len / (2 * chunk_bytes + 2048) + 1, "only %zu chunks", run.chunks);
    cr_assert_eq(run.records, want_records, "records %llu, whole file %llu",
                 (unsigned long long)run.records, (unsigned long long)want_records);
    cr_assert_eq(run.records_hash, want_hash, "chunked records differ from whole-file records");
    unlink(path);
    free(b.data);
}

/* --- chunk sizes ------------------------------------------------------------ */

Test(chunk, chunks_of_64_bytes_concatenate_to_the_file_and_end_at_record_ends)
{
    check_generated(600u << 10, 64);
}

Test(chunk, chunks_of_1_kib_concatenate_to_the_file_and_end_at_record_ends)
{
    check_generated(3u << 20, 1024);
}

Test(chunk, chunks_of_7_kib_concatenate_to_the_file_and_end_at_record_ends)
{
    check_generated(3u << 20, 7 * 1024);
}

Test(chunk, chunks_of_4_mib_concatenate_to_the_file_and_end_at_record_ends)
{
    check_generated(13u << 20, 4u << 20);
}

Test(chunk, chunk_size_below_64_bytes_is_raised_to_64)
{
    bytes b = generate_csv(7, 20000);
    char path[64];
    write_temp(b.data, b.len, path);
    chunk_run run = check_chunks(path, b.data, b.len, 1, 1u << 20);
    cr_assert_gt(run.chunks, 1);
    unlink(path);
    free(b.data);
}

Test(chunk, non_last_chunks_are_at_least_chunk_bytes_long)
{
    /* chunk.h: "A chunk is at least `chunk_bytes` long (except the last)".
     * A short record followed by one longer than the first buffer fill. */
    bytes b = {0};
    puts_(&b, "a\n");
    for (int i = 0; i < 300; i++) put(&b, "x", 1);
    puts_(&b, "\nb\n");
    char path[64];
    write_temp(b.data, b.len, path);
    chunk_run run = check_chunks(path, b.data, b.len, 64, 1u << 20);
    cr_expect_eq(run.short_chunks, 0, "short record then long one: %zu of %zu chunks shorter "
                 "than 64 bytes", run.short_chunks, run.chunks);
    unlink(path);
    free(b.data);

    /* Generated data at three chunk sizes. */
    b = generate_csv(11, 400u << 10);
    write_temp(b.data, b.len, path);
    size_t sizes[] = {64, 1024, 7 * 1024};
    for (int i = 0; i < 3; i++) {
        run = check_chunks(path, b.data, b.len, sizes[i], 64u << 20);
        cr_expect_eq(run.short_chunks, 0, "chunk_bytes %zu: %zu of %zu chunks are shorter",
                     sizes[i], run.short_chunks, run.chunks);
    }
    unlink(path);
    free(b.data);
}

Test(chunk, last_chunk_without_final_newline_is_delivered)
{
    const char *text = "a,b\nc,\"d\ne\"\nlast,row";
    char path[64];
    write_temp(text, strlen(text), path);
    chunk_run run = check_chunks(path, text, strlen(text), 64, 1u << 20);
    cr_assert_eq(run.records, 3);
    unlink(path);
}

Test(chunk, empty_file_gives_no_chunk)
{
    char path[64];
    write_temp("", 0, path);
    char err[256] = "";
    source *src = source_open(path, err, sizeof err);
    cr_assert_not_null(src, "%s", err);
    chunker *c = chunker_create(64, 1u << 20);
    chunker_begin(c, src);
    chunk ch;
    cr_assert_eq(next_chunk(c, src, &ch, err, sizeof err), 0);
    chunker_free(c);
    source_close(src);
    unlink(path);
}

/* --- quoted newlines at chunk boundaries ------------------------------------ */

/* Records whose quoted field holds newlines, with padding that walks the
 * field's newlines across every offset modulo 64 and then some. */
static bytes straddling_records(void)
{
    bytes b = {0};
    char pad[200];
    memset(pad, 'p', sizeof pad);
    for (int rep = 0; rep < 6; rep++)
        for (int k = 0; k < 140; k++) {
            put(&b, pad, (size_t)k);
            puts_(&b, ",\"q\n\n\"\"x\nyy\n\"");
            /* Some records end right after the quote, some with more fields. */
            if ((k + rep) % 3 == 0) puts_(&b, ",\"z,\nz\"");
            else if ((k + rep) % 3 == 1) puts_(&b, ",tail");
            puts_(&b, (k % 4 == 0) ? "\r\n" : "\n");
        }
    return b;
}

Test(chunk, quoted_newline_inside_chunk_boundary)
{
    bytes b = straddling_records();
    char path[64];
    write_temp(b.data, b.len, path);
    uint64_t want_records, want_hash;
    whole_records(b.data, b.len, &want_records, &want_hash);
    cr_assert_eq(want_records, 6 * 140);
    size_t sizes[] = {64, 65, 100, 127, 1024, 7 * 1024};
    for (int i = 0; i < 6; i++) {
        chunk_run run = check_chunks(path, b.data, b.len, sizes[i], 1u << 20);
        cr_assert_eq(run.records, want_records, "chunk_bytes %zu", sizes[i]);
        cr_assert_eq(run.records_hash, want_hash, "chunk_bytes %zu", sizes[i]);
    }
    unlink(path);
    free(b.data);
}

Test(chunk, gzip_source_is_cut_like_the_plain_file)
{
    bytes b = generate_csv(99, 2u << 20);
    char path[64];
    strcpy(path, "/tmp/sheaf_test_chunk_XXXXXX");
    int fd = mkstemp(path);
    cr_assert_geq(fd, 0);
    gzFile gz = gzdopen(fd, "wb6");
    cr_assert_not_null(gz);
    cr_assert_eq(gzwrite(gz, b.data, (unsigned)b.len), (int)b.len);
    cr_assert_eq(gzclose(gz), Z_OK);
    uint64_t want_records, want_hash;
    whole_records(b.data, b.len, &want_records, &want_hash);
    chunk_run run = check_chunks(path, b.data, b.len, 1024, 1u << 20);
    cr_assert_eq(run.records_hash, want_hash);
    unlink(path);
    free(b.data);
}

/* --- long records ----------------------------------------------------------- */

Test(chunk, record_longer_than_chunk_bytes_is_delivered_whole)
{
    bytes b = {0};
    puts_(&b, "k,v\n1,short\n2,\"");
    for (int i = 0; i < 30000; i++) put(&b, (i % 97 == 0) ? "\n" : "w", 1);
    puts_(&b, "\"\n3,after\n");
    char path[64];
    write_temp(b.data, b.len, path);
    chunk_run run = check_chunks(path, b.data, b.len, 64, 1u << 20);
    cr_assert_geq(run.longest, 30000, "longest chunk %zu", run.longest);
    cr_assert_eq(run.records, 4);
    /* Same with an unquoted record: one 100 000-byte line. */
    bytes u = {0};
    puts_(&u, "a,b\n");
    for (int i = 0; i < 100000; i++) put(&u, (i % 10 == 0) ? "," : "9", 1);
    puts_(&u, "\nx,y\n");
    char path2[64];
    write_temp(u.data, u.len, path2);
    run = check_chunks(path2, u.data, u.len, 1024, 1u << 20);
    cr_assert_geq(run.longest, 100000);
    cr_assert_eq(run.records, 3);
    unlink(path);
    unlink(path2);
    free(b.data);
    free(u.data);
}

Test(chunk, record_longer_than_max_record_bytes_is_an_error_with_its_offset)
{
    /* The long record starts at byte 154: an 11-byte header and 13 rows of 11. */
    bytes b = {0};
    puts_(&b, "name,value\n");
    for (int i = 0; i < 13; i++) {
        char row[32];
        snprintf(row, sizeof row, "row%02d,%04d\n", i, i * 7);
        puts_(&b, row);
    }
    size_t start = b.len;
    cr_assert_eq(start, 154);
    for (int i = 0; i < 20000; i++) put(&b, "x", 1);
    puts_(&b, "\nend,1\n");
    char path[64];
    write_temp(b.data, b.len, path);
    char err[512] = "";
    source *src = source_open(path, err, sizeof err);
    cr_assert_not_null(src, "%s", err);
    chunker *c = chunker_create(64, 4096);
    chunker_begin(c, src);
    chunk ch;
    int rc;
    uint64_t got = 0;
    while ((rc = next_chunk(c, src, &ch, err, sizeof err)) == 1) got += ch.len;
    cr_assert_eq(rc, -1, "a 20 000-byte record passed a 4096-byte limit");
    cr_assert_eq(got, start, "chunks before the error cover %llu bytes, want %zu",
                 (unsigned long long)got, start);
    char at[32];
    snprintf(at, sizeof at, "%zu", start);
    cr_assert_not_null(strstr(err, at), "message \"%s\" lacks offset %s", err, at);
    cr_assert_not_null(strstr(err, path), "message \"%s\" lacks the path", err);
    chunker_free(c);
    source_close(src);
    unlink(path);
    free(b.data);
}

Test(chunk, unterminated_quote_runs_into_the_record_limit)
{
    bytes b = {0};
    puts_(&b, "a,b\n1,\"open\n");
    for (int i = 0; i < 5000; i++) puts_(&b, "2,more\n");
    char path[64];
    write_temp(b.data, b.len, path);
    char err[512] = "";
    source *src = source_open(path, err, sizeof err);
    chunker *c = chunker_create(64, 2048);
    chunker_begin(c, src);
    chunk ch;
    int rc;
    while ((rc = next_chunk(c, src, &ch, err, sizeof err)) == 1) {}
    cr_assert_eq(rc, -1);
    cr_assert_not_null(strstr(err, "byte 4 "), "message \"%s\"", err);
    chunker_free(c);
    source_close(src);
    unlink(path);
    free(b.data);
}

Test(chunk, source_error_is_passed_through)
{
    bytes b = generate_csv(3, 200u << 10);
    /* A gzip member cut short: write through gzdopen, then truncate. */
    char path[64];
    strcpy(path, "/tmp/sheaf_test_chunk_XXXXXX");
    int fd = mkstemp(path);
    gzFile gz = gzdopen(dup(fd), "wb");
    gzwrite(gz, b.data, (unsigned)b.len);
    gzclose(gz);
    off_t size = lseek(fd, 0, SEEK_END);
    cr_assert_eq(ftruncate(fd, size / 2), 0);
    close(fd);
    char err[512] = "";
    source *src = source_open(path, err, sizeof err);
    cr_assert_not_null(src, "%s", err);
    chunker *c = chunker_create(1024, 1u << 20);
    chunker_begin(c, src);
    chunk ch;
    int rc;
    while ((rc = next_chunk(c, src, &ch, err, sizeof err)) == 1) {}
    cr_assert_eq(rc, -1);
    cr_assert_not_null(strstr(err, path), "message \"%s\"", err);
    cr_assert(strstr(err, "truncated") || strstr(err, "corrupt"), "message \"%s\"", err);
    chunker_free(c);
    source_close(src);
    unlink(path);
    free(b.data);
}

/* --- the quote rule's last record end (csv_quote_scan) ----------------------- */

static size_t last_end(const char *s)
{
    csv_quote_state q;
    csv_quote_init(&q, ',');
    return csv_quote_scan(&q, s, strlen(s), 0);
}

Test(chunk, last_record_end_is_len_plus_one_without_a_newline)
{
    cr_assert_eq(last_end("abc"), 4);
    cr_assert_eq(last_end(""), 1);
    cr_assert_eq(last_end("a,\"b\",c"), 8);
}

Test(chunk, last_record_end_is_len_plus_one_when_newlines_are_only_inside_quotes)
{
    cr_assert_eq(last_end("a,\"x\ny\",b"), 10);
    cr_assert_eq(last_end("\"\n\n\n"), 5);            /* quote still open */
    cr_assert_eq(last_end("\"a\"\"\nb\""), 8);        /* doubled quote keeps it inside */
}

Test(chunk, last_record_end_is_just_after_the_last_unquoted_newline)
{
    cr_assert_eq(last_end("\n"), 1);
    cr_assert_eq(last_end("a\nb"), 2);
    cr_assert_eq(last_end("a\nb\n"), 4);
    cr_assert_eq(last_end("a\n\"x\ny"), 2);           /* later newline is quoted */
    cr_assert_eq(last_end("\"a\"\n"), 4);
    cr_assert_eq(last_end("\"x\"\"\ny\"\"\"\nz"), 10); /* 6 quotes before the second '\n' */
    cr_assert_eq(last_end("a\r\nb\r\n"), 6);
}

/* --- trading buffers -------------------------------------------------------- */

/* The chunk offsets and lengths of text fed in pieces of random size (1 to
 * 3 x chunk_bytes); with `trade`, each read stops at chunker_to_mark and
 * every chunk's buffer is traded away as a pass with two slots does it: held
 * while the next chunk is cut, checked unchanged, then given back.  Returns
 * the number of chunks; *tails sums the bytes chunker_trade copied. */
static size_t cut_traded(const bytes *b, size_t chunk_bytes, int trade, uint64_t seed,
                         uint64_t *offs, size_t *lens, size_t max_chunks, size_t *tails)
{
    char err[256] = "";
    chunker *c = chunker_create(chunk_bytes, 64u << 20);
    cr_assert_not_null(c);
    chunker_start(c, "traded");
    chunker_set_dialect(c, ',', 0);
    enum { SLOTS = 2 };
    char *slot[SLOTS] = {NULL, NULL};
    size_t size[SLOTS] = {0, 0}, held_len[SLOTS] = {0, 0};
    const char *held[SLOTS] = {NULL, NULL};
    uint64_t held_off[SLOTS] = {0, 0};
    uint64_t s = seed;
    size_t fed = 0, n = 0;
    *tails = 0;
    for (;;) {
        chunk ch;
        int rc = chunker_next(c, &ch, err, sizeof err);
        cr_assert_geq(rc, 0, "%s", err);
        if (rc == 1) {
            cr_assert_lt(n, max_chunks);
            offs[n] = ch.offset;
            lens[n] = ch.len;
            cr_assert_eq(memcmp(ch.data, b->data + ch.offset, ch.len), 0, "chunk %zu bytes", n);
            if (trade) {
                size_t k = n % SLOTS;
                if (held[k]) /* the chunk this slot held: untouched by the cuts since */
                    cr_assert_eq(memcmp(held[k], b->data + held_off[k], held_len[k]), 0,
                                 "a traded chunk changed before its slot was reused");
                size_t rest;
                chunker_pending(c, &rest);
                cr_assert_eq(chunker_trade(c, &slot[k], &size[k], err, sizeof err), 0, "%s", err);
                *tails += rest;
                cr_assert(ch.data >= slot[k] && ch.data + ch.len <= slot[k] + size[k],
                          "the chunk is not in the buffer traded away");
                held[k] = ch.data;
                held_off[k] = ch.offset;
                held_len[k] = ch.len;
            }
            n++;
            continue;
        }
        if (chunker_done(c)) break;
        size_t room;
        char *p = chunker_space(c, &room, err, sizeof err);
        cr_assert_not_null(p, "%s", err);
        size_t want = 1 + (size_t)(xorshift64(&s) % (3 * chunk_bytes));
        if (trade && want > chunker_to_mark(c)) want = chunker_to_mark(c);
        if (want > room) want = room;
        if (want > b->len - fed) want = b->len - fed;
        memcpy(p, b->data + fed, want);
        chunker_commit(c, want);
        fed += want;
        if (fed == b->len) chunker_finish(c);
    }
    for (int k = 0; k < SLOTS; k++) free(slot[k]);
    chunker_free(c);
    return n;
}

Test(chunk, traded_buffers_give_the_same_chunks_and_keep_them_intact)
{
    bytes b = generate_csv(0x7a11ed, 3u << 20);
    enum { MAX = 1 << 16 };
    static uint64_t o1[MAX], o2[MAX];
    static size_t l1[MAX], l2[MAX];
    const size_t sizes[] = {64, 1000, 64u << 10, 256u << 10};
    for (size_t i = 0; i < sizeof sizes / sizeof *sizes; i++) {
        size_t tails = 0, t2 = 0;
        size_t n1 = cut_traded(&b, sizes[i], 0, 11 + i, o1, l1, MAX, &tails);
        size_t n2 = cut_traded(&b, sizes[i], 1, 23 + i, o2, l2, MAX, &t2);
        cr_assert_eq(n1, n2, "%zu-byte chunks: %zu plain, %zu traded", sizes[i], n1, n2);
        for (size_t k = 0; k < n1; k++)
            cr_assert(o1[k] == o2[k] && l1[k] == l2[k], "%zu-byte chunks: chunk %zu differs",
                      sizes[i], k);
        /* Reads stop at the marks, so what a trade copies is the start of
         * one record (under 2 KiB in this text), not the rest of a read. */
        if (sizes[i] >= (64u << 10))
            cr_assert_lt(t2, n2 * 2048, "%zu-byte chunks: trades copied %zu bytes for %zu chunks",
                         sizes[i], t2, n2);
    }
    free(b.data);
}
