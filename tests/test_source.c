/* Tests for io/source: plain, gzip and zstd byte streams.
 *
 * Compressed inputs are made here by independent encoders: zlib (gzopen /
 * gzwrite, and deflateInit2 + deflateSetHeader for a header with a file
 * name) for gzip, RFC 1952; libzstd's ZSTD_compress / ZSTD_compress2 for
 * zstd, RFC 8878.  Decoded bytes must equal the bytes given to the encoder.
 * RFC 1952 section 2.2 allows several members in one file; RFC 8878 section
 * 3.1 several frames.  The fingerprint is checked against xxhash's one-shot
 * XXH3_64bits over the raw file.  Test data comes from a fixed-seed
 * xorshift64 generator (Marsaglia 2003); files are made with mkstemp under
 * /tmp and removed at the end of each test.
 */
#include <criterion/criterion.h>

#include <fcntl.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>
#define XXH_STATIC_LINKING_ONLY /* sizeof (XXH3_state_t): restart points */
#include <xxhash.h>
#include <zlib.h>
#include <zstd.h>

#include "io/source.h"
#include "testutil.h"

/* --- helpers ---------------------------------------------------------------- */

typedef struct {
    unsigned char *data;
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
}

static uint64_t xorshift64(uint64_t *state)
{
    uint64_t x = *state;
    x ^= x << 13;
    x ^= x >> 7;
    x ^= x << 17;
    return *state = x;
}

/* CSV-like text: rows of numbers and words; `noisy` adds random digits so
 * that it compresses only a few times (compressed size above the 1 MiB raw
 * buffer for a few MiB of text). */
static bytes make_text(uint64_t seed, size_t target)
{
    static const char *words[] = {"cedar", "flint", "gorse", "heron", "islet", "juniper"};
    bytes b = {0};
    uint64_t s = seed;
    char row[128];
    put(&b, "id,kind,depth,count\n", 20);
    for (uint64_t i = 0; b.len < target; i++) {
        uint64_t r = xorshift64(&s);
        int n = snprintf(row, sizeof row, "%llu,%s,%llu.%llu,%llu\n", (unsigned long long)i,
                         words[r % 6], (unsigned long long)(r >> 8) % 100000,
                         (unsigned long long)(r >> 30) % 1000,
                         (unsigned long long)(r >> 45) % 10000);
        put(&b, row, (size_t)n);
    }
    return b;
}

static void write_file(const char *path, const void *data, size_t len)
{
    int fd = open(path, O_WRONLY | O_CREAT | O_TRUNC, 0600);
    cr_assert_geq(fd, 0, "cannot create %s", path);
    const unsigned char *p = data;
    while (len) {
        ssize_t n = write(fd, p, len);
        cr_assert_gt(n, 0);
        p += n;
        len -= (size_t)n;
    }
    close(fd);
}

/* A fresh /tmp name with the given suffix (the file exists, empty). */
static void temp_path(char path[80], const char *suffix)
{
    snprintf(path, 80, "/tmp/sheaf_test_source_XXXXXX%s", suffix);
    int fd = mkstemps(path, (int)strlen(suffix));
    cr_assert_geq(fd, 0, "mkstemps failed");
    close(fd);
}

static bytes read_file(const char *path)
{
    bytes b = {0};
    FILE *f = fopen(path, "rb");
    cr_assert_not_null(f);
    unsigned char buf[65536];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, f)) > 0) put(&b, buf, n);
    fclose(f);
    return b;
}

/* One gzip member of data[0..len), made with zlib's gzip writer. */
static bytes gzip_member(const void *data, size_t len)
{
    char path[80];
    temp_path(path, ".gz");
    gzFile gz = gzopen(path, "wb");
    cr_assert_not_null(gz);
    if (len) cr_assert_eq(gzwrite(gz, data, (unsigned)len), (int)len);
    cr_assert_eq(gzclose(gz), Z_OK);
    bytes out = read_file(path);
    unlink(path);
    return out;
}

/* One zstd frame of data[0..len); checksum adds the frame's XXH64 check. */
static bytes zstd_frame(const void *data, size_t len, int checksum)
{
    bytes out = {0};
    size_t bound = ZSTD_compressBound(len);
    out.data = malloc(bound + 1);
    out.cap = bound + 1;
    ZSTD_CCtx *cx = ZSTD_createCCtx();
    ZSTD_CCtx_setParameter(cx, ZSTD_c_compressionLevel, 3);
    ZSTD_CCtx_setParameter(cx, ZSTD_c_checksumFlag, checksum);
    size_t n = ZSTD_compress2(cx, out.data, bound, data, len);
    cr_assert(!ZSTD_isError(n), "%s", ZSTD_getErrorName(n));
    ZSTD_freeCCtx(cx);
    out.len = n;
    return out;
}

/* Reads a whole source with reads of at most cap bytes.  Returns 0, or -1
 * on a read error (the source is left open for source_error). */
static int drain(source *s, size_t cap, bytes *out)
{
    unsigned char *buf = malloc(cap);
    cr_assert_not_null(buf);
    for (;;) {
        ssize_t n = source_read(s, buf, cap);
        if (n < 0) { free(buf); return -1; }
        if (n == 0) break;
        cr_assert_leq((size_t)n, cap);
        put(out, buf, (size_t)n);
    }
    free(buf);
    return 0;
}

/* Opens path, reads it all with reads of cap bytes and checks the result is
 * want[0..want_len) and the format is kind. */
static void expect_decodes(const char *path, source_format kind, const void *want,
                           size_t want_len, size_t cap)
{
    char err[512] = "";
    source *s = source_open(path, err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    cr_assert_eq(source_kind(s), kind, "%s: format %s, want %s", path,
                 source_format_name(source_kind(s)), source_format_name(kind));
    bytes got = {0};
    int rc = drain(s, cap, &got);
    cr_assert_eq(rc, 0, "reads of %zu bytes: %s", cap, source_error(s));
    cr_assert_eq(got.len, want_len, "reads of %zu bytes: %zu bytes decoded, want %zu", cap,
                 got.len, want_len);
    cr_assert(want_len == 0 || memcmp(got.data, want, want_len) == 0,
              "reads of %zu bytes: decoded bytes differ", cap);
    /* After the end, reads keep returning 0. */
    unsigned char one;
    cr_assert_eq(source_read(s, &one, 1), 0);
    free(got.data);
    source_close(s);
}

/* Opens path and expects a read error naming the path and one of two words. */
static void expect_read_error(const char *path, const char *word1, const char *word2)
{
    char err[512] = "";
    source *s = source_open(path, err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    bytes got = {0};
    int rc = drain(s, 65536, &got);
    cr_assert_eq(rc, -1, "damaged input read without error (%zu bytes)", got.len);
    const char *msg = source_error(s);
    cr_assert_not_null(strstr(msg, path), "message \"%s\" does not name the file", msg);
    cr_assert(strstr(msg, word1) || (word2 && strstr(msg, word2)),
              "message \"%s\" lacks \"%s\"%s%s", msg, word1, word2 ? " or " : "",
              word2 ? word2 : "");
    free(got.data);
    source_close(s);
}

/* --- plain ------------------------------------------------------------------ */

Test(source, plain_file_reads_back_byte_for_byte)
{
    bytes text = make_text(1, 3u << 20); /* larger than the 1 MiB raw buffer */
    char path[80];
    temp_path(path, ".csv");
    write_file(path, text.data, text.len);
    expect_decodes(path, SOURCE_PLAIN, text.data, text.len, 65536);
    expect_decodes(path, SOURCE_PLAIN, text.data, text.len, 4093);
    unlink(path);
    free(text.data);
}

Test(source, short_and_empty_plain_files)
{
    char path[80];
    temp_path(path, ".csv");
    expect_decodes(path, SOURCE_PLAIN, "", 0, 16);           /* empty */
    write_file(path, "a", 1);
    expect_decodes(path, SOURCE_PLAIN, "a", 1, 16);
    write_file(path, "\x1f", 1);                              /* half a gzip magic */
    expect_decodes(path, SOURCE_PLAIN, "\x1f", 1, 16);
    write_file(path, "\x28\xb5\x2f", 3);                      /* three quarters of zstd's */
    expect_decodes(path, SOURCE_PLAIN, "\x28\xb5\x2f", 3, 16);
    unlink(path);
}

/* --- gzip ------------------------------------------------------------------- */

Test(source, gzip_single_member_decodes)
{
    bytes text = make_text(2, 6u << 20);
    bytes gz = gzip_member(text.data, text.len);
    cr_assert_gt(gz.len, 1u << 20, "want a compressed file above the raw buffer size");
    char path[80];
    temp_path(path, ".gz");
    write_file(path, gz.data, gz.len);
    expect_decodes(path, SOURCE_GZIP, text.data, text.len, 1u << 20);
    unlink(path);
    free(text.data);
    free(gz.data);
}

Test(source, gzip_decodes_with_small_reads)
{
    bytes text = make_text(3, 200u << 10);
    bytes gz = gzip_member(text.data, text.len);
    char path[80];
    temp_path(path, ".gz");
    write_file(path, gz.data, gz.len);
    size_t caps[] = {1, 7, 100, 4096};
    for (int i = 0; i < 4; i++) expect_decodes(path, SOURCE_GZIP, text.data, text.len, caps[i]);
    unlink(path);
    free(text.data);
    free(gz.data);
}

Test(source, multi_member_gzip_decodes_to_the_concatenation)
{
    bytes a = make_text(4, 300u << 10), b = make_text(5, 200u << 10);
    bytes ga = gzip_member(a.data, a.len), gb = gzip_member(b.data, b.len);
    bytes file = {0}, want = {0};
    put(&file, ga.data, ga.len);
    put(&file, gb.data, gb.len);
    put(&want, a.data, a.len);
    put(&want, b.data, b.len);
    char path[80];
    temp_path(path, ".gz");
    write_file(path, file.data, file.len);
    expect_decodes(path, SOURCE_GZIP, want.data, want.len, 65536);
    expect_decodes(path, SOURCE_GZIP, want.data, want.len, 13);
    unlink(path);
    free(a.data); free(b.data); free(ga.data); free(gb.data); free(file.data); free(want.data);
}

Test(source, many_small_gzip_members_including_empty_ones)
{
    bytes file = {0}, want = {0};
    for (int i = 0; i < 40; i++) {
        char line[64];
        int n = i % 5 == 3 ? 0 : snprintf(line, sizeof line, "member,%d\n", i);
        bytes g = gzip_member(line, (size_t)n);
        put(&file, g.data, g.len);
        put(&want, line, (size_t)n);
        free(g.data);
    }
    char path[80];
    temp_path(path, ".gz");
    write_file(path, file.data, file.len);
    expect_decodes(path, SOURCE_GZIP, want.data, want.len, 65536);
    expect_decodes(path, SOURCE_GZIP, want.data, want.len, 3);
    unlink(path);
    free(file.data);
    free(want.data);
}

Test(source, gzip_header_with_file_name_and_comment_is_skipped)
{
    /* RFC 1952 FNAME and FCOMMENT fields, written by zlib's deflateSetHeader. */
    const char *text = "k,v\n1,alpha\n2,beta\n";
    z_stream z;
    memset(&z, 0, sizeof z);
    cr_assert_eq(deflateInit2(&z, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY), Z_OK);
    gz_header h;
    memset(&h, 0, sizeof h);
    h.name = (Bytef *)"readings-north.csv";
    h.comment = (Bytef *)"field log";
    h.time = 1700000000;
    cr_assert_eq(deflateSetHeader(&z, &h), Z_OK);
    unsigned char out[512];
    z.next_in = (Bytef *)text;
    z.avail_in = (uInt)strlen(text);
    z.next_out = out;
    z.avail_out = sizeof out;
    cr_assert_eq(deflate(&z, Z_FINISH), Z_STREAM_END);
    size_t n = sizeof out - z.avail_out;
    deflateEnd(&z);
    cr_assert_eq(out[3] & 0x18, 0x18, "FNAME and FCOMMENT flags set");
    char path[80];
    temp_path(path, ".gz");
    write_file(path, out, n);
    expect_decodes(path, SOURCE_GZIP, text, strlen(text), 4096);
    unlink(path);
}

/* Raw deflate data (RFC 1951) of data[0..len), from zlib. */
static bytes raw_deflate(const void *data, size_t len)
{
    z_stream z;
    memset(&z, 0, sizeof z);
    cr_assert_eq(deflateInit2(&z, 6, Z_DEFLATED, -15, 8, Z_DEFAULT_STRATEGY), Z_OK);
    bytes out = {0};
    out.cap = deflateBound(&z, (uLong)len) + 1;
    out.data = malloc(out.cap);
    z.next_in = (Bytef *)data;
    z.avail_in = (uInt)len;
    z.next_out = out.data;
    z.avail_out = (uInt)out.cap;
    cr_assert_eq(deflate(&z, Z_FINISH), Z_STREAM_END);
    out.len = out.cap - z.avail_out;
    deflateEnd(&z);
    return out;
}

/* A gzip member assembled by hand (RFC 1952 section 2.3): header with an
 * FNAME field of name_len bytes, the deflate data, CRC-32 and ISIZE. */
static void put_member(bytes *file, const bytes *deflated, const void *data, size_t len,
                       size_t name_len)
{
    static const unsigned char head[10] = {0x1f, 0x8b, 8, 0x08, 0, 0, 0, 0, 0, 3};
    put(file, head, sizeof head);
    for (size_t i = 0; i < name_len; i++) put(file, "n", 1);
    put(file, "", 1);
    put(file, deflated->data, deflated->len);
    uLong crc = crc32(0L, data, (uInt)len);
    unsigned char tail[8];
    for (int i = 0; i < 4; i++) {
        tail[i] = (unsigned char)(crc >> (8 * i));
        tail[4 + i] = (unsigned char)((uint32_t)len >> (8 * i));
    }
    put(file, tail, sizeof tail);
}

Test(source, gzip_member_boundary_near_the_raw_buffer_end)
{
    /* The source reads the file 1 MiB at a time.  The first member's end is
     * placed at offsets around 1 MiB so that the raw buffer boundary falls
     * inside its deflate tail, inside its trailer, and inside the second
     * member's header: in its fixed 10 bytes and in its FNAME field, short
     * (3 bytes) or long (300 bytes; RFC 1952 sets no limit, and gzip stores
     * the file name as given).  Every member of `cat a.gz b.gz` may carry
     * such a header. */
    bytes a = make_text(16, 2500u << 10);
    const char *b = "tail,1\ntail,2\n";
    bytes da = raw_deflate(a.data, a.len), db = raw_deflate(b, strlen(b));
    size_t fixed = 10 + 1 + da.len + 8;   /* member bytes besides the name */
    cr_assert_lt(fixed + 64, 1u << 20, "first member too large for the test: %zu", fixed);
    bytes want = {0};
    put(&want, a.data, a.len);
    put(&want, b, strlen(b));
    char path[80];
    temp_path(path, ".gz");
    static const size_t name_lens[] = {3, 300};
    for (int k = 0; k < 2; k++) {
        size_t name_len = name_lens[k];
        int lo = -24 - (int)name_len, hi = 24;
        for (int d = lo; d <= hi; d += name_len > 100 ? 7 : 1) {
            size_t end = (1u << 20) + (size_t)(long)d;
            bytes file = {0};
            put_member(&file, &da, a.data, a.len, end - fixed);
            cr_assert_eq(file.len, end);
            put_member(&file, &db, b, strlen(b), name_len);
            write_file(path, file.data, file.len);
            char err[512] = "";
            source *s = source_open(path, err, sizeof err);
            cr_assert_not_null(s, "%s", err);
            bytes got = {0};
            int rc = drain(s, 65536, &got);
            cr_expect_eq(rc, 0, "name %zu bytes, first member ends at 1 MiB %+d: %s", name_len,
                         d, source_error(s));
            cr_expect(rc != 0 ||
                          (got.len == want.len && memcmp(got.data, want.data, want.len) == 0),
                      "name %zu bytes, first member ends at 1 MiB %+d: %zu bytes decoded, "
                      "want %zu", name_len, d, got.len, want.len);
            source_close(s);
            free(got.data);
            free(file.data);
        }
    }
    unlink(path);
    free(a.data); free(da.data); free(db.data); free(want.data);
}

Test(source, format_is_detected_by_magic_not_by_name)
{
    const char *text = "x,y\n1,2\n";
    bytes gz = gzip_member(text, strlen(text));
    bytes zs = zstd_frame(text, strlen(text), 0);
    char p_csv[80], p_gz[80], p_zst[80];
    temp_path(p_csv, ".csv");
    temp_path(p_gz, ".gz");
    temp_path(p_zst, ".zst");
    write_file(p_csv, gz.data, gz.len);       /* gzip named .csv */
    write_file(p_gz, text, strlen(text));     /* plain named .gz */
    write_file(p_zst, gz.data, gz.len);       /* gzip named .zst */
    expect_decodes(p_csv, SOURCE_GZIP, text, strlen(text), 4096);
    expect_decodes(p_gz, SOURCE_PLAIN, text, strlen(text), 4096);
    expect_decodes(p_zst, SOURCE_GZIP, text, strlen(text), 4096);
    write_file(p_gz, zs.data, zs.len);        /* zstd named .gz */
    expect_decodes(p_gz, SOURCE_ZSTD, text, strlen(text), 4096);
    unlink(p_csv); unlink(p_gz); unlink(p_zst);
    free(gz.data);
    free(zs.data);
}

Test(source, truncated_gzip_is_an_error_naming_the_file)
{
    bytes text = make_text(6, 300u << 10);
    bytes gz = gzip_member(text.data, text.len);
    char path[80];
    temp_path(path, ".gz");
    /* Last 10 bytes cut: trailer and the end of the deflate data. */
    write_file(path, gz.data, gz.len - 10);
    expect_read_error(path, "truncated", "corrupt");
    /* Trailer only partly present. */
    write_file(path, gz.data, gz.len - 3);
    expect_read_error(path, "truncated", "corrupt");
    /* Cut in the middle of the stream. */
    write_file(path, gz.data, gz.len / 2);
    expect_read_error(path, "truncated", "corrupt");
    /* Cut inside the 10-byte header. */
    write_file(path, gz.data, 6);
    expect_read_error(path, "truncated", "corrupt");
    unlink(path);
    free(text.data);
    free(gz.data);
}

Test(source, truncated_second_gzip_member_is_an_error)
{
    const char *a = "a,1\n", *b = "b,2\nc,3\n";
    bytes ga = gzip_member(a, strlen(a)), gb = gzip_member(b, strlen(b));
    bytes file = {0};
    put(&file, ga.data, ga.len);
    put(&file, gb.data, gb.len - 5);
    char path[80];
    temp_path(path, ".gz");
    write_file(path, file.data, file.len);
    expect_read_error(path, "truncated", "corrupt");
    unlink(path);
    free(ga.data); free(gb.data); free(file.data);
}

Test(source, corrupted_gzip_byte_is_an_error)
{
    bytes text = make_text(7, 300u << 10);
    bytes gz = gzip_member(text.data, text.len);
    char path[80];
    temp_path(path, ".gz");
    /* A flipped byte in the middle of the deflate data. */
    gz.data[gz.len / 2] ^= 0x55;
    write_file(path, gz.data, gz.len);
    expect_read_error(path, "corrupt", NULL);
    gz.data[gz.len / 2] ^= 0x55;
    /* A flipped byte in the CRC-32 trailer: the data inflates, the check fails. */
    gz.data[gz.len - 6] ^= 0x01;
    write_file(path, gz.data, gz.len);
    expect_read_error(path, "checksum", NULL);
    gz.data[gz.len - 6] ^= 0x01;
    /* A wrong length (ISIZE) in the trailer. */
    gz.data[gz.len - 4] ^= 0x01;
    write_file(path, gz.data, gz.len);
    expect_read_error(path, "corrupt", NULL);
    unlink(path);
    free(text.data);
    free(gz.data);
}

/* --- zstd ------------------------------------------------------------------- */

Test(source, zstd_frame_decodes)
{
    bytes text = make_text(8, 6u << 20);
    bytes zs = zstd_frame(text.data, text.len, 1);
    char path[80];
    temp_path(path, ".zst");
    write_file(path, zs.data, zs.len);
    expect_decodes(path, SOURCE_ZSTD, text.data, text.len, 1u << 20);
    expect_decodes(path, SOURCE_ZSTD, text.data, text.len, 65536);
    unlink(path);
    free(text.data);
    free(zs.data);
}

Test(source, zstd_decodes_with_small_reads)
{
    /* The chunker asks for whatever room its buffer has left, which can be
     * far less than a zstd block (up to 128 KiB). */
    bytes text = make_text(9, 200u << 10);
    bytes zs = zstd_frame(text.data, text.len, 0);
    char path[80];
    temp_path(path, ".zst");
    write_file(path, zs.data, zs.len);
    size_t caps[] = {4096, 100, 7, 1};
    for (int i = 0; i < 4; i++) expect_decodes(path, SOURCE_ZSTD, text.data, text.len, caps[i]);
    unlink(path);
    free(text.data);
    free(zs.data);
}

Test(source, two_concatenated_zstd_frames_decode_to_the_concatenation)
{
    bytes a = make_text(10, 500u << 10), b = make_text(11, 70u << 10);
    bytes za = zstd_frame(a.data, a.len, 1), zb = zstd_frame(b.data, b.len, 0);
    bytes file = {0}, want = {0};
    put(&file, za.data, za.len);
    put(&file, zb.data, zb.len);
    put(&want, a.data, a.len);
    put(&want, b.data, b.len);
    char path[80];
    temp_path(path, ".zst");
    write_file(path, file.data, file.len);
    expect_decodes(path, SOURCE_ZSTD, want.data, want.len, 1u << 20);
    unlink(path);
    free(a.data); free(b.data); free(za.data); free(zb.data); free(file.data); free(want.data);
}

Test(source, truncated_zstd_is_an_error_naming_the_file)
{
    bytes text = make_text(12, 300u << 10);
    bytes zs = zstd_frame(text.data, text.len, 1);
    char path[80];
    temp_path(path, ".zst");
    write_file(path, zs.data, zs.len - 10);
    expect_read_error(path, "truncated", NULL);
    write_file(path, zs.data, zs.len / 2);
    expect_read_error(path, "truncated", NULL);
    write_file(path, zs.data, 4);                       /* magic only */
    expect_read_error(path, "truncated", NULL);
    unlink(path);
    free(text.data);
    free(zs.data);
}

Test(source, corrupted_zstd_frame_with_checksum_is_an_error)
{
    bytes text = make_text(13, 300u << 10);
    bytes zs = zstd_frame(text.data, text.len, 1);
    zs.data[zs.len / 2] ^= 0x55;
    char path[80];
    temp_path(path, ".zst");
    write_file(path, zs.data, zs.len);
    expect_read_error(path, "corrupt", NULL);
    unlink(path);
    free(text.data);
    free(zs.data);
}

/* --- standard input --------------------------------------------------------- */

/* Feeds data through a pipe on fd 0 from a forked writer and reads "-". */
static void expect_stdin_decodes(const void *file, size_t file_len, source_format kind,
                                 const void *want, size_t want_len)
{
    int p[2];
    cr_assert_eq(pipe(p), 0);
    pid_t pid = fork();
    cr_assert_geq(pid, 0);
    if (pid == 0) {
        close(p[0]);
        const unsigned char *q = file;
        size_t left = file_len;
        while (left) {
            ssize_t n = write(p[1], q, left);
            if (n <= 0) _exit(1);
            q += n;
            left -= (size_t)n;
        }
        _exit(0);
    }
    close(p[1]);
    int saved = dup(0);
    cr_assert_eq(dup2(p[0], 0), 0);
    close(p[0]);
    char err[512] = "";
    source *s = source_open("-", err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    cr_assert_str_eq(source_path(s), "-");
    cr_assert_eq(source_kind(s), kind);
    cr_assert_eq(source_raw_size(s), 0, "a pipe has no known size");
    bytes got = {0};
    cr_assert_eq(drain(s, 65536, &got), 0, "%s", source_error(s));
    cr_assert_eq(got.len, want_len);
    cr_assert_eq(memcmp(got.data, want, want_len), 0);
    cr_assert_eq(source_fingerprint(s), XXH3_64bits(file, file_len));
    source_close(s);
    dup2(saved, 0);
    close(saved);
    int status;
    cr_assert_eq(waitpid(pid, &status, 0), pid);
    cr_assert(WIFEXITED(status) && WEXITSTATUS(status) == 0, "writer failed");
    free(got.data);
}

Test(source, standard_input_pipe_is_read_as_plain_or_gzip)
{
    bytes text = make_text(14, 2u << 20); /* far more than a pipe buffer */
    expect_stdin_decodes(text.data, text.len, SOURCE_PLAIN, text.data, text.len);
    bytes gz = gzip_member(text.data, text.len);
    expect_stdin_decodes(gz.data, gz.len, SOURCE_GZIP, text.data, text.len);
    free(text.data);
    free(gz.data);
}

Test(source, gzip_header_arriving_in_two_pieces_on_standard_input_decodes)
{
    /* A slow producer (a download piped in): the first read gets the fixed
     * header and part of a long FNAME field, the rest comes later. */
    const char *text = "k,v\n1,alpha\n2,beta\n";
    z_stream z;
    memset(&z, 0, sizeof z);
    cr_assert_eq(deflateInit2(&z, 6, Z_DEFLATED, 15 + 16, 8, Z_DEFAULT_STRATEGY), Z_OK);
    gz_header h;
    memset(&h, 0, sizeof h);
    char name[201];
    memset(name, 'r', 200);
    name[200] = '\0';
    h.name = (Bytef *)name;
    cr_assert_eq(deflateSetHeader(&z, &h), Z_OK);
    unsigned char gz[512];
    z.next_in = (Bytef *)text;
    z.avail_in = (uInt)strlen(text);
    z.next_out = gz;
    z.avail_out = sizeof gz;
    cr_assert_eq(deflate(&z, Z_FINISH), Z_STREAM_END);
    size_t gz_len = sizeof gz - z.avail_out;
    deflateEnd(&z);
    const size_t first = 110; /* 10-byte header + 100 bytes of the name */
    int p[2];
    cr_assert_eq(pipe(p), 0);
    pid_t pid = fork();
    cr_assert_geq(pid, 0);
    if (pid == 0) {
        close(p[0]);
        if (write(p[1], gz, first) != (ssize_t)first) _exit(1);
        usleep(200000);
        if (write(p[1], gz + first, gz_len - first) != (ssize_t)(gz_len - first)) _exit(1);
        _exit(0);
    }
    close(p[1]);
    int saved = dup(0);
    cr_assert_eq(dup2(p[0], 0), 0);
    close(p[0]);
    char err[512] = "";
    source *s = source_open("-", err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    cr_assert_eq(source_kind(s), SOURCE_GZIP);
    bytes got = {0};
    int rc = drain(s, 65536, &got);
    cr_expect_eq(rc, 0, "%s", source_error(s));
    cr_expect(rc != 0 || (got.len == strlen(text) && memcmp(got.data, text, got.len) == 0),
              "decoded %zu bytes, want %zu", got.len, strlen(text));
    source_close(s);
    dup2(saved, 0);
    close(saved);
    int status;
    cr_assert_eq(waitpid(pid, &status, 0), pid);
    cr_assert(WIFEXITED(status) && WEXITSTATUS(status) == 0, "writer failed");
    free(got.data);
}

/* --- fingerprint, sizes, offsets -------------------------------------------- */

static void expect_fingerprint(const char *path, const bytes *raw)
{
    char err[512] = "";
    source *s = source_open(path, err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    cr_assert_eq(source_raw_size(s), raw->len, "raw size %llu, file %zu",
                 (unsigned long long)source_raw_size(s), raw->len);
    bytes got = {0};
    cr_assert_eq(drain(s, 65536, &got), 0, "%s", source_error(s));
    uint64_t want = XXH3_64bits(raw->data, raw->len);
    cr_assert_eq(source_fingerprint(s), want, "%s: fingerprint %016llx, XXH3_64bits %016llx",
                 source_format_name(source_kind(s)), (unsigned long long)source_fingerprint(s),
                 (unsigned long long)want);
    cr_assert_eq(source_raw_offset(s), raw->len, "raw offset %llu at the end, file %zu",
                 (unsigned long long)source_raw_offset(s), raw->len);
    struct stat st;
    cr_assert_eq(stat(path, &st), 0);
    cr_assert_eq(source_mtime(s), (int64_t)st.st_mtime);
    free(got.data);
    source_close(s);
}

Test(source, fingerprint_is_xxh3_of_the_raw_file_bytes)
{
    bytes text = make_text(15, 3u << 20);
    char path[80];
    temp_path(path, ".csv");
    write_file(path, text.data, text.len);
    expect_fingerprint(path, &text);
    bytes gz = gzip_member(text.data, text.len);
    write_file(path, gz.data, gz.len);
    expect_fingerprint(path, &gz);
    bytes zs = zstd_frame(text.data, text.len, 0);
    write_file(path, zs.data, zs.len);
    expect_fingerprint(path, &zs);
    bytes empty = {0};
    write_file(path, "", 0);
    expect_fingerprint(path, &empty);
    unlink(path);
    free(text.data);
    free(gz.data);
    free(zs.data);
}

Test(source, open_at_reads_a_plain_file_from_an_offset)
{
    const char *text = "head\nrow1\nrow2\nrow3\n";
    char path[80];
    temp_path(path, ".csv");
    write_file(path, text, strlen(text));
    char err[512] = "";
    source *s = source_open_at(path, 10, err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    bytes got = {0};
    cr_assert_eq(drain(s, 3, &got), 0);
    cr_assert_eq(got.len, strlen(text) - 10);
    cr_assert_eq(memcmp(got.data, text + 10, got.len), 0);
    cr_assert_eq(source_raw_offset(s), strlen(text));
    source_close(s);
    free(got.data);
    /* A compressed file cannot be opened at an offset. */
    bytes gz = gzip_member(text, strlen(text));
    write_file(path, gz.data, gz.len);
    s = source_open_at(path, 10, err, sizeof err);
    cr_assert_null(s);
    cr_assert_not_null(strstr(err, path), "message \"%s\"", err);
    unlink(path);
    free(gz.data);
}

/* --- open failures ---------------------------------------------------------- */

Test(source, nonexistent_file_gives_null_and_a_message_naming_it)
{
    const char *path = "/tmp/sheaf_test_source_no_such_dir/missing.csv.gz";
    char err[512] = "";
    source *s = source_open(path, err, sizeof err);
    cr_assert_null(s);
    cr_assert_not_null(strstr(err, path), "message \"%s\"", err);
}

Test(source, directory_gives_null_and_a_message_naming_it)
{
    char dir[] = "/tmp/sheaf_test_source_dir_XXXXXX";
    cr_assert_not_null(mkdtemp(dir));
    char err[512] = "";
    source *s = source_open(dir, err, sizeof err);
    cr_assert_null(s);
    cr_assert_not_null(strstr(err, dir), "message \"%s\"", err);
    rmdir(dir);
}

Test(source, format_names)
{
    cr_assert_str_eq(source_format_name(SOURCE_PLAIN), "plain");
    cr_assert_str_eq(source_format_name(SOURCE_GZIP), "gzip");
    cr_assert_str_eq(source_format_name(SOURCE_ZSTD), "zstd");
}

/* --- restart points (source_keep_marks, source_restore) ----------------------
 *
 * A mark taken while reading must let a fresh source continue at its point
 * with exactly the bytes a read from the start gives there and, at the end,
 * the fingerprint of the whole raw file (one-shot XXH3_64bits of it). */

typedef struct {
    void *mark;
    size_t len;
} kept_mark;

/* Reads path whole with reads of varied sizes, taking the marks of the
 * points among the bytes of each read; keeps the max newest.  Returns how
 * many. */
static size_t collect_marks(const char *path, kept_mark *out, size_t max, const bytes *want)
{
    char err[512] = "";
    source *s = source_open(path, err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    cr_assert_eq(source_keep_marks(s, 0), 0);
    size_t n = 0, have = 0;
    uint64_t rng = 77;
    unsigned char *buf = malloc(1u << 20);
    cr_assert_not_null(buf);
    for (;;) {
        size_t cap = (size_t)(xorshift64(&rng) % (1u << 20)) + 1;
        ssize_t got = source_read(s, buf, cap);
        cr_assert_geq(got, 0, "%s", source_error(s));
        if (got == 0) break;
        cr_assert(memcmp(buf, want->data + have, (size_t)got) == 0);
        have += (size_t)got;
        uint64_t at[8];
        size_t k = source_mark_offsets(s, have - (size_t)got, have, at, 8);
        for (size_t i = 0; i < k; i++) {
            cr_assert(at[i] > have - (size_t)got && at[i] <= have);
            void *m;
            size_t len;
            cr_assert_eq(source_mark_at(s, at[i], &m, &len), 1);
            if (n == max) { free(out[0].mark); memmove(out, out + 1, (max - 1) * sizeof *out); n--; }
            out[n].mark = m;
            out[n].len = len;
            n++;
        }
    }
    cr_assert_eq(have, want->len);
    free(buf);
    source_close(s);
    return n;
}

/* Restores mark into a fresh source of path and checks the rest. */
static void expect_restores(const char *path, const kept_mark *m, const bytes *want,
                            const bytes *raw)
{
    char err[512] = "";
    source *s = source_open(path, err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    cr_assert_eq(source_keep_marks(s, 0), 0);
    uint64_t at = 0;
    cr_assert_eq(source_restore(s, m->mark, m->len, &at), SOURCE_MARK_RESTORED);
    cr_assert(at > 0 && at <= want->len);
    /* The restored point is kept, the same bytes, for the next checkpoint
     * (the next one is taken only a full interval later). */
    uint64_t where[8];
    cr_assert_eq(source_mark_offsets(s, at - 1, at, where, 8), 1);
    cr_assert_eq(where[0], at);
    void *again;
    size_t again_len;
    cr_assert_eq(source_mark_at(s, at, &again, &again_len), 1);
    cr_assert(again_len == m->len && memcmp(again, m->mark, m->len) == 0);
    free(again);
    bytes rest = {0};
    cr_assert_eq(drain(s, 65536 + 17, &rest), 0, "%s", source_error(s));
    cr_assert_eq(rest.len, want->len - at);
    cr_assert(memcmp(rest.data, want->data + at, rest.len) == 0, "bytes after %llu differ",
              (unsigned long long)at);
    cr_assert_eq(source_fingerprint(s), XXH3_64bits(raw->data, raw->len));
    free(rest.data);
    source_close(s);
}

Test(source, gzip_restart_points_continue_byte_for_byte)
{
    bytes text = make_text(5, 14u << 20);
    bytes one = gzip_member(text.data, text.len);
    size_t half = text.len / 2;
    bytes two = gzip_member(text.data, half), second = gzip_member(text.data + half, text.len - half);
    put(&two, second.data, second.len);
    const bytes *files[] = {&one, &two};
    for (int f = 0; f < 2; f++) {
        char path[80];
        temp_path(path, ".gz");
        write_file(path, files[f]->data, files[f]->len);
        kept_mark marks[6];
        size_t n = collect_marks(path, marks, 6, &text);
        cr_assert_geq(n, 2, "file %d: %zu marks", f, n);
        for (size_t i = 0; i < n; i++) expect_restores(path, &marks[i], &text, files[f]);
        /* Another build's mark (its ISA-L version differs): refused before
         * anything is read, and the source still reads from the start. */
        unsigned char *stale = marks[0].mark;
        stale[8] ^= 1;
        char err[512] = "";
        source *s = source_open(path, err, sizeof err);
        uint64_t at = 0;
        cr_assert_eq(source_restore(s, marks[0].mark, marks[0].len, &at), SOURCE_MARK_STALE);
        bytes all = {0};
        cr_assert_eq(drain(s, 65536, &all), 0);
        cr_assert(all.len == text.len && memcmp(all.data, text.data, text.len) == 0);
        free(all.data);
        source_close(s);
        /* A raw byte before the last mark's point changed: refused. */
        bytes changed = {0};
        put(&changed, files[f]->data, files[f]->len);
        changed.data[changed.len / 8] ^= 0x40;
        write_file(path, changed.data, changed.len);
        s = source_open(path, err, sizeof err);
        cr_assert_eq(source_restore(s, marks[n - 1].mark, marks[n - 1].len, &at),
                     SOURCE_MARK_DIFFERS);
        source_close(s);
        free(changed.data);
        for (size_t i = 0; i < n; i++) free(marks[i].mark);
        unlink(path);
    }
    free(text.data);
    free(one.data);
    free(two.data);
    free(second.data);
}

Test(source, plain_file_skips_to_an_offset_with_its_prefix_hash)
{
    bytes text = make_text(9, 3u << 20);
    char path[80];
    temp_path(path, ".csv");
    write_file(path, text.data, text.len);
    uint64_t to = (2u << 20) + 12345;
    char err[512] = "";
    source *s = source_open(path, err, sizeof err);
    cr_assert_not_null(s, "%s", err);
    XXH3_state_t *h = XXH3_createState();
    XXH3_64bits_reset(h);
    cr_assert_eq(source_skip_plain(s, to, h, sizeof *h), SOURCE_MARK_RESTORED);
    cr_assert_eq(XXH3_64bits_digest(h), XXH3_64bits(text.data, (size_t)to));
    bytes rest = {0};
    cr_assert_eq(drain(s, 70000, &rest), 0);
    cr_assert(rest.len == text.len - to && memcmp(rest.data, text.data + to, rest.len) == 0);
    cr_assert_eq(source_fingerprint(s), XXH3_64bits(text.data, text.len));
    source_close(s);
    /* An offset inside what the format probe read: not skipped. */
    s = source_open(path, err, sizeof err);
    XXH3_64bits_reset(h);
    cr_assert_eq(source_skip_plain(s, 1000, h, sizeof *h), SOURCE_MARK_STALE);
    source_close(s);
    XXH3_freeState(h);
    free(rest.data);
    free(text.data);
    unlink(path);
}
