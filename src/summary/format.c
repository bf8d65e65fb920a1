/* summary file format: encoding, decoding, writing and reading
 * (docs/summary-format.md).
 *
 * File layout (all integers little-endian):
 *   magic    8 bytes  89 'S' 'H' 'F' 0d 0a 1a 0a
 *   version  u32      SUMMARY_FORMAT_VERSION
 *   sections          u32 tag, u64 length, payload, u64 XXH3-64(payload)
 *   trailer           u32 'END.', u64 8, u64 XXH3-64 of every byte before it
 * The trailer checksum covers the whole file, so any single-bit change is
 * detected (a change to the magic or version is reported as such first).
 */
#include "summary/column.h"
#include "summary/summary.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>

#include "summary/tempfile.h"

static const uint8_t MAGIC[8] = {0x89, 'S', 'H', 'F', 0x0d, 0x0a, 0x1a, 0x0a};

#define TAG(a, b, c, d) ((uint32_t)(a) | (uint32_t)(b) << 8 | (uint32_t)(c) << 16 | (uint32_t)(d) << 24)
#define TAG_SCHEMA TAG('S', 'C', 'H', 'M')
#define TAG_SOURCES TAG('S', 'R', 'C', 'S')
#define TAG_TABLE TAG('T', 'A', 'B', 'L')
#define TAG_COLUMNS TAG('C', 'O', 'L', 'S')
#define TAG_TARGET TAG('T', 'R', 'G', 'T')
#define TAG_COMOMENTS TAG('C', 'O', 'M', 'O')
#define TAG_END TAG('E', 'N', 'D', '.')

#define MAX_NAME_BYTES 65536
#define MAX_COLUMNS 1000000

/* ---- encoding ----------------------------------------------------------- */


static void encode_schema(const summary *s, wire_writer *w)
{
    wire_put_u32(w, s->opt.max_levels);
    wire_put_u32(w, s->opt.label_bytes);
    wire_put_u32(w, s->opt.bucket_budget);
    wire_put_u32(w, s->opt.n_missing);
    for (uint32_t i = 0; i < s->opt.n_missing; i++)
        wire_put_str(w, s->opt.missing[i], strlen(s->opt.missing[i]));
    const char *t = s->opt.target ? s->opt.target : "";
    wire_put_str(w, t, strlen(t));
    wire_put_u8(w, (uint8_t)s->opt.task);
    wire_put_u32(w, s->opt.max_classes);
    wire_put_u64(w, s->ncols);
    for (size_t i = 0; i < s->ncols; i++) {
        wire_put_str(w, s->cols[i].name, strlen(s->cols[i].name));
        wire_put_u8(w, (uint8_t)s->cols[i].mode);
    }
}

static void put_decimal(wire_writer *w, const number_decimal *d)
{
    wire_put_f64(w, d->value);
    wire_put_u64(w, d->mantissa);
    wire_put_i64(w, d->exp10);
    wire_put_u8(w, d->negative);
    wire_put_u8(w, d->exact);
}

static void get_decimal(wire_reader *r, number_decimal *d)
{
    d->value = wire_get_f64(r);
    d->mantissa = wire_get_u64(r);
    int64_t e = wire_get_i64(r);
    if (e < INT32_MIN || e > INT32_MAX) r->failed = 1;
    d->exp10 = (int32_t)e;
    d->negative = wire_get_u8(r);
    d->exact = wire_get_u8(r);
    if (d->negative > 1 || d->exact > 1) r->failed = 1;
}

static void encode_target(const summary *s, wire_writer *w)
{
    wire_put_u8(w, (uint8_t)s->has_classes);
    wire_put_u8(w, (uint8_t)s->classes_dropped);
    wire_put_u64(w, s->target_text);
    wire_put_u32(w, s->nclasses);
    for (uint32_t c = 0; c < s->nclasses; c++) {
        wire_put_u64(w, s->class_hash[c]);
        wire_put_str(w, s->class_label[c], strlen(s->class_label[c]));
        wire_put_u64(w, s->class_rows[c]);
        wire_put_u8(w, s->class_numeric[c]);
        put_decimal(w, &s->class_dec[c]);
    }
}

static void encode_comoments(const summary *s, wire_writer *w)
{
    wire_put_u64(w, s->ncomo);
    for (size_t k = 0; k < s->ncomo; k++) {
        wire_put_u8(w, s->como_ref_set[k]);
        put_decimal(w, &s->como_ref[k]);
    }
    wire_put_u8(w, s->como != NULL);
    if (s->como) comoment_write(s->como, w);
}

static void encode_sources(const summary *s, wire_writer *w)
{
    wire_put_u64(w, s->nsources);
    for (size_t i = 0; i < s->nsources; i++) {
        const summary_source *src = &s->sources[i];
        wire_put_str(w, src->path, strlen(src->path));
        wire_put_str(w, src->format, strlen(src->format));
        wire_put_u64(w, src->size_bytes);
        wire_put_i64(w, src->mtime);
        wire_put_u64(w, src->fingerprint);
        wire_put_u64(w, src->raw_bytes);
        wire_put_u64(w, src->start_byte);
        wire_put_u64(w, src->end_byte);
        wire_put_u64(w, src->rows);
    }
}

static void encode_table(const summary *s, wire_writer *w)
{
    wire_put_u64(w, s->rows);
    wire_put_u64(w, s->bytes);
    wire_put_u64(w, s->short_rows);
    wire_put_u64(w, s->long_rows);
    wire_put_u32(w, s->n_bad_lines);
    for (uint32_t i = 0; i < s->n_bad_lines; i++) wire_put_u64(w, s->bad_lines[i]);
}

static void encode_columns(const summary *s, wire_writer *w)
{
    for (size_t i = 0; i < s->ncols; i++) column_write(&s->cols[i], s->nclasses, w);
}


/* ---- decoding ----------------------------------------------------------- */

static char *dup_str(wire_reader *r, size_t max)
{
    size_t n;
    const char *p = wire_get_str(r, &n, max);
    if (!p) return NULL;
    char *s = malloc(n + 1);
    if (!s) { r->failed = 1; return NULL; }
    memcpy(s, p, n);
    s[n] = '\0';
    return s;
}

static summary *decode_schema(wire_reader *r)
{
    summary_options o;
    memset(&o, 0, sizeof o);
    o.max_levels = wire_get_u32(r);
    o.label_bytes = wire_get_u32(r);
    o.bucket_budget = wire_get_u32(r);
    uint32_t nm = wire_get_u32(r);
    if (nm > SUMMARY_MAX_MISSING || o.max_levels == 0 || o.max_levels > (1u << 26) ||
        o.label_bytes > 65536 || o.bucket_budget == 0 || o.bucket_budget > (1u << 26))
        r->failed = 1;
    for (uint32_t i = 0; i < nm && !r->failed; i++) {
        o.missing[i] = dup_str(r, 1024);
        if (o.missing[i]) o.n_missing = i + 1;
    }
    char *target = dup_str(r, MAX_NAME_BYTES);
    if (target && *target) o.target = target;
    else free(target);
    uint8_t task = wire_get_u8(r);
    if (task > TASK_REGRESS) r->failed = 1;
    o.task = (target_task)task;
    o.max_classes = wire_get_u32(r);
    if (o.max_classes == 0 || o.max_classes > SUMMARY_MAX_CLASSES) r->failed = 1;
    uint64_t ncols = wire_get_u64(r);
    if (ncols > MAX_COLUMNS || !wire_need(r, ncols * 5)) r->failed = 1;
    summary *s = NULL;
    char **names = NULL;
    column_mode *modes = NULL;
    if (!r->failed) {
        names = calloc(ncols ? ncols : 1, sizeof *names);
        modes = calloc(ncols ? ncols : 1, sizeof *modes);
        if (!names || !modes) r->failed = 1;
    }
    for (uint64_t i = 0; i < ncols && !r->failed; i++) {
        names[i] = dup_str(r, MAX_NAME_BYTES);
        uint8_t m = wire_get_u8(r);
        if (m > COLUMN_CATEGORICAL) r->failed = 1;
        modes[i] = (column_mode)m;
    }
    if (!r->failed) {
        s = summary_create(&o, ncols, names, modes, 0); /* COMO section brings the matrix */
        if (!s) r->failed = 1;
    }
    if (names)
        for (uint64_t i = 0; i < ncols; i++) free(names[i]);
    free(names);
    free(modes);
    summary_options_free(&o);
    return s;
}

static void decode_sources(summary *s, wire_reader *r)
{
    uint64_t n = wire_get_u64(r);
    if (n > (1u << 30) || !wire_need(r, n * 64)) { r->failed = 1; return; }
    for (uint64_t i = 0; i < n && !r->failed; i++) {
        summary_source src;
        memset(&src, 0, sizeof src);
        src.path = dup_str(r, 1 << 20);
        size_t flen;
        const char *f = wire_get_str(r, &flen, sizeof src.format - 1);
        if (f) memcpy(src.format, f, flen);
        src.size_bytes = wire_get_u64(r);
        src.mtime = wire_get_i64(r);
        src.fingerprint = wire_get_u64(r);
        src.raw_bytes = wire_get_u64(r);
        src.start_byte = wire_get_u64(r);
        src.end_byte = wire_get_u64(r);
        src.rows = wire_get_u64(r);
        if (!r->failed && summary_add_source(s, &src) != 0) r->failed = 1;
        free(src.path);
    }
}

static void decode_table(summary *s, wire_reader *r)
{
    s->rows = wire_get_u64(r);
    s->bytes = wire_get_u64(r);
    s->short_rows = wire_get_u64(r);
    s->long_rows = wire_get_u64(r);
    s->n_bad_lines = wire_get_u32(r);
    if (s->n_bad_lines > SUMMARY_BAD_LINES) { r->failed = 1; s->n_bad_lines = 0; return; }
    for (uint32_t i = 0; i < s->n_bad_lines; i++) s->bad_lines[i] = wire_get_u64(r);
}

static void decode_target(summary *s, wire_reader *r)
{
    uint8_t has = wire_get_u8(r), dropped = wire_get_u8(r);
    s->target_text = wire_get_u64(r);
    uint32_t n = wire_get_u32(r);
    if (has > 1 || dropped > 1 || (has && s->target < 0) || n > s->opt.max_classes ||
        (!has && n > 0) || (has && !s->has_classes)) {
        r->failed = 1;
        return;
    }
    if (!has && s->has_classes) {
        /* Classes were dropped at scan time: free the per-class arrays. */
        for (size_t i = 0; i < s->ncols; i++) { free(s->cols[i].cls); s->cols[i].cls = NULL; }
        s->has_classes = 0;
    }
    s->classes_dropped = dropped;
    for (uint32_t c = 0; c < n && !r->failed; c++) {
        uint64_t h = wire_get_u64(r);
        size_t len;
        const char *label = wire_get_str(r, &len, 1 << 20);
        uint64_t rows = wire_get_u64(r);
        uint8_t numeric = wire_get_u8(r);
        number_decimal d;
        get_decimal(r, &d);
        if (r->failed || numeric > 1) { r->failed = 1; return; }
        uint32_t k = summary_class_of(s, h, label, len, numeric ? &d : NULL);
        if (k != c + 1) { r->failed = 1; return; } /* duplicate class */
        s->class_rows[c] = rows;
    }
}

static void decode_comoments(summary *s, wire_reader *r)
{
    if (wire_get_u64(r) != s->ncomo) { r->failed = 1; return; }
    for (size_t k = 0; k < s->ncomo && !r->failed; k++) {
        s->como_ref_set[k] = wire_get_u8(r);
        if (s->como_ref_set[k] > 1) r->failed = 1;
        get_decimal(r, &s->como_ref[k]);
    }
    uint8_t present = wire_get_u8(r);
    if (present != 1 || r->failed) { r->failed = 1; return; }
    comoment *c = comoment_read(r, 0); /* read or merged, never fed blocks */
    if (!c || comoment_columns(c) != s->ncomo) { comoment_free(c); r->failed = 1; return; }
    comoment_free(s->como);
    s->como = c;
}

static void decode_columns(summary *s, wire_reader *r)
{
    for (size_t i = 0; i < s->ncols && !r->failed; i++)
        if (column_read(&s->cols[i], s->nclasses, r) != 0) r->failed = 1;
}

summary_status summary_decode(const uint8_t *data, size_t len, summary **out, char *err,
                              size_t errlen)
{
    *out = NULL;
    if (len < sizeof MAGIC || memcmp(data, MAGIC, sizeof MAGIC) != 0) {
        snprintf(err, errlen, "not a sheaf summary (wrong magic bytes)");
        return SUMMARY_ERR_CORRUPT;
    }
    if (len < sizeof MAGIC + 4 + 20) {
        snprintf(err, errlen, "truncated summary (%zu bytes)", len);
        return SUMMARY_ERR_CORRUPT;
    }
    wire_reader r;
    wire_reader_init(&r, data, len);
    r.pos = sizeof MAGIC;
    uint32_t version = wire_get_u32(&r);
    if (version > SUMMARY_FORMAT_VERSION) {
        snprintf(err, errlen, "summary format version %u is newer than this sheaf reads (%u)",
                 version, SUMMARY_FORMAT_VERSION);
        return SUMMARY_ERR_CORRUPT;
    }
    /* The trailer: tag, length 8, checksum of everything before it. */
    wire_reader t;
    wire_reader_init(&t, data + len - 20, 20);
    uint32_t ttag = wire_get_u32(&t);
    uint64_t tlen = wire_get_u64(&t);
    uint64_t tsum = wire_get_u64(&t);
    if (ttag != TAG_END || tlen != 8) {
        snprintf(err, errlen, "truncated or damaged summary (no end marker)");
        return SUMMARY_ERR_CORRUPT;
    }
    if (XXH3_64bits(data, len - 8) != tsum) {
        snprintf(err, errlen, "damaged summary (file checksum mismatch)");
        return SUMMARY_ERR_CORRUPT;
    }
    if (version != SUMMARY_FORMAT_VERSION) {
        snprintf(err, errlen, "unsupported summary format version %u", version);
        return SUMMARY_ERR_CORRUPT;
    }
    const uint32_t want[] = {TAG_SCHEMA, TAG_SOURCES, TAG_TABLE, TAG_TARGET, TAG_COLUMNS,
                             TAG_COMOMENTS};
    static const char *const SECTION_NAMES[] = {"schema",  "sources", "table",
                                                "target",  "columns", "co-moments"};
    summary *s = NULL;
    for (int k = 0; k < 6; k++) {
        uint32_t tag = wire_get_u32(&r);
        uint64_t plen = wire_get_u64(&r);
        if (r.failed || tag != want[k] || plen > len - r.pos - 8 - 20) {
            snprintf(err, errlen, "damaged summary (section %d)", k + 1);
            summary_free(s);
            return SUMMARY_ERR_CORRUPT;
        }
        const uint8_t *payload = data + r.pos;
        r.pos += plen;
        if (XXH3_64bits(payload, plen) != wire_get_u64(&r)) {
            snprintf(err, errlen, "damaged summary (section %d checksum mismatch)", k + 1);
            summary_free(s);
            return SUMMARY_ERR_CORRUPT;
        }
        wire_reader p;
        wire_reader_init(&p, payload, plen);
        /* A failed allocation sets errno to ENOMEM (nothing else the
         * decoders call does): that is a resource limit, not damage. */
        errno = 0;
        if (k == 0) s = decode_schema(&p);
        else if (k == 1) decode_sources(s, &p);
        else if (k == 2) decode_table(s, &p);
        else if (k == 3) decode_target(s, &p);
        else if (k == 4) decode_columns(s, &p);
        else decode_comoments(s, &p);
        if (p.failed || p.pos != p.len || !s) {
            int nomem = errno == ENOMEM;
            if (nomem)
                snprintf(err, errlen, "out of memory while decoding section %d (%s)", k + 1,
                         SECTION_NAMES[k]);
            else
                snprintf(err, errlen, "damaged summary (section %d does not parse)", k + 1);
            summary_free(s);
            return nomem ? SUMMARY_ERR_MEMORY : SUMMARY_ERR_CORRUPT;
        }
    }
    if (r.pos != len - 20) {
        snprintf(err, errlen, "damaged summary (unexpected bytes before the end marker)");
        summary_free(s);
        return SUMMARY_ERR_CORRUPT;
    }
    if (summary_seal(s) != 0) {
        snprintf(err, errlen, "out of memory while sealing the summary (sorting bucket stores)");
        summary_free(s);
        return SUMMARY_ERR_MEMORY;
    }
    *out = s;
    return SUMMARY_OK;
}

/* ---- files -------------------------------------------------------------- */

/* Streaming write: each section's payload is drained to the file as it is
 * encoded, hashed on the way; its length is patched in afterwards, and the
 * trailer checksum is computed over the finished bytes. */
typedef struct {
    int fd;               /* destination */
    XXH3_state_t *hash;   /* payload checksum of the current section */
    uint64_t bytes;       /* payload bytes of the current section */
} section_out;

static int write_all(int fd, const void *data, size_t len)
{
    const uint8_t *p = data;
    while (len) {
        ssize_t n = write(fd, p, len);
        if (n < 0 && errno == EINTR) continue;
        if (n <= 0) return -1;
        p += n;
        len -= (size_t)n;
    }
    return 0;
}

static int section_drain(void *ctx, const uint8_t *data, size_t len)
{
    section_out *o = ctx;
    XXH3_64bits_update(o->hash, data, len);
    o->bytes += len;
    return write_all(o->fd, data, len);
}

static int put_le64(uint8_t *b, uint64_t v)
{
    for (int i = 0; i < 8; i++) b[i] = (uint8_t)(v >> (8 * i));
    return 8;
}

static int write_sections(const summary *s, int fd)
{
    uint8_t head[12];
    memcpy(head, MAGIC, sizeof MAGIC);
    for (int i = 0; i < 4; i++) head[8 + i] = (uint8_t)(SUMMARY_FORMAT_VERSION >> (8 * i));
    if (write_all(fd, head, sizeof head) != 0) return -1;
    void (*enc[])(const summary *, wire_writer *) = {encode_schema, encode_sources, encode_table,
                                                      encode_target, encode_columns,
                                                      encode_comoments};
    const uint32_t tags[] = {TAG_SCHEMA,  TAG_SOURCES, TAG_TABLE,
                             TAG_TARGET, TAG_COLUMNS, TAG_COMOMENTS};
    section_out so = {fd, XXH3_createState(), 0};
    if (!so.hash) return -1;
    int rc = 0;
    off_t pos = (off_t)sizeof head;
    for (int k = 0; k < 6 && rc == 0; k++) {
        uint8_t sh[12];
        for (int i = 0; i < 4; i++) sh[i] = (uint8_t)(tags[k] >> (8 * i));
        put_le64(sh + 4, 0); /* length, patched below */
        if (write_all(fd, sh, sizeof sh) != 0) { rc = -1; break; }
        XXH3_64bits_reset(so.hash);
        so.bytes = 0;
        wire_writer w;
        wire_writer_init(&w);
        w.drain = section_drain;
        w.drain_ctx = &so;
        enc[k](s, &w);
        wire_writer_drain(&w);
        int failed = w.failed;
        wire_writer_free(&w);
        uint8_t sum[8];
        put_le64(sum, XXH3_64bits_digest(so.hash));
        uint8_t lenb[8];
        put_le64(lenb, so.bytes);
        if (failed || write_all(fd, sum, sizeof sum) != 0 ||
            pwrite(fd, lenb, sizeof lenb, pos + 4) != (ssize_t)sizeof lenb) {
            rc = -1;
            break;
        }
        pos += (off_t)(sizeof sh + so.bytes + sizeof sum);
    }
    XXH3_freeState(so.hash);
    if (rc != 0) return -1;
    /* Trailer: the checksum of every byte so far, read back from the file. */
    uint8_t tr[20];
    for (int i = 0; i < 4; i++) tr[i] = (uint8_t)(TAG_END >> (8 * i));
    put_le64(tr + 4, 8);
    if (write_all(fd, tr, 12) != 0) return -1;
    void *map = mmap(NULL, (size_t)pos + 12, PROT_READ, MAP_SHARED, fd, 0);
    if (map == MAP_FAILED) return -1;
    uint64_t h = XXH3_64bits(map, (size_t)pos + 12);
    munmap(map, (size_t)pos + 12);
    put_le64(tr + 12, h);
    return write_all(fd, tr + 12, 8);
}

summary_status summary_write(const summary *s, const char *path, char *err, size_t errlen)
{
    char *tmp;
    int fd = tempfile_create(path, &tmp); /* mode as creat() would give it */
    if (fd < 0) {
        if (errno == ENOMEM) { snprintf(err, errlen, "out of memory"); return SUMMARY_ERR_MEMORY; }
        snprintf(err, errlen, "%s: cannot create: %s", path, strerror(errno));
        return SUMMARY_ERR_IO;
    }
    int ok = write_sections(s, fd) == 0;
    int saved = errno;
    if (ok && fsync(fd) != 0) { ok = 0; saved = errno; }
    if (close(fd) != 0 && ok) { ok = 0; saved = errno; }
    if (ok && rename(tmp, path) != 0) { ok = 0; saved = errno; }
    if (!ok) {
        unlink(tmp);
        snprintf(err, errlen, "%s: cannot write: %s", path, strerror(saved ? saved : EIO));
    }
    free(tmp);
    return ok ? SUMMARY_OK : SUMMARY_ERR_IO;
}

summary_status summary_read(const char *path, summary **out, char *err, size_t errlen)
{
    *out = NULL;
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        snprintf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
        return SUMMARY_ERR_IO;
    }
    struct stat st;
    if (fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
        close(fd);
        snprintf(err, errlen, "%s: not a regular file", path);
        return SUMMARY_ERR_IO;
    }
    size_t len = (size_t)st.st_size;
    /* Mapped, not copied: a summary of thousands of columns is hundreds of MB. */
    void *map = len ? mmap(NULL, len, PROT_READ, MAP_PRIVATE, fd, 0) : NULL;
    int map_errno = errno;
    close(fd);
    if (len && map == MAP_FAILED) {
        errno = map_errno;
        if (errno == ENOMEM) {
            snprintf(err, errlen, "%s: out of memory: no room to map its %.1f MiB", path,
                     len / 1048576.0);
            return SUMMARY_ERR_MEMORY;
        }
        snprintf(err, errlen, "%s: cannot map: %s", path, strerror(errno));
        return SUMMARY_ERR_IO;
    }
    char inner[400];
    summary_status rc = summary_decode(map ? map : "", len, out, inner, sizeof inner);
    if (map) munmap(map, len);
    if (rc != SUMMARY_OK) snprintf(err, errlen, "%s: %s", path, inner);
    return rc;
}

