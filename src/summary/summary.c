/* summary: accumulator set, merge, and the file format (docs/summary-format.md).
 *
 * File layout (all integers little-endian):
 *   magic    8 bytes  89 'S' 'H' 'F' 0d 0a 1a 0a
 *   version  u32      SUMMARY_FORMAT_VERSION
 *   sections          u32 tag, u64 length, payload, u64 XXH3-64(payload)
 *   trailer           u32 'END.', u64 8, u64 XXH3-64 of every byte before it
 * The trailer checksum covers the whole file, so any single-bit change is
 * detected (a change to the magic or version is reported as such first).
 */
#include "summary/summary.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>

static const uint8_t MAGIC[8] = {0x89, 'S', 'H', 'F', 0x0d, 0x0a, 0x1a, 0x0a};

#define TAG(a, b, c, d) ((uint32_t)(a) | (uint32_t)(b) << 8 | (uint32_t)(c) << 16 | (uint32_t)(d) << 24)
#define TAG_SCHEMA TAG('S', 'C', 'H', 'M')
#define TAG_SOURCES TAG('S', 'R', 'C', 'S')
#define TAG_TABLE TAG('T', 'A', 'B', 'L')
#define TAG_COLUMNS TAG('C', 'O', 'L', 'S')
#define TAG_END TAG('E', 'N', 'D', '.')

#define MAX_NAME_BYTES 65536
#define MAX_COLUMNS 1000000

static const char *const DEFAULT_MISSING[] = {"NA", "N/A", "null", "NULL", "None", "-", "?"};

void summary_options_defaults(summary_options *o)
{
    memset(o, 0, sizeof *o);
    o->max_levels = 1024;
    o->label_bytes = 64;
    o->bucket_budget = 2048;
    o->n_missing = sizeof DEFAULT_MISSING / sizeof *DEFAULT_MISSING;
    for (uint32_t i = 0; i < o->n_missing; i++) o->missing[i] = strdup(DEFAULT_MISSING[i]);
}

void summary_options_free(summary_options *o)
{
    for (uint32_t i = 0; i < o->n_missing; i++) free(o->missing[i]);
    o->n_missing = 0;
}

int summary_options_copy(summary_options *dst, const summary_options *src)
{
    *dst = *src;
    for (uint32_t i = 0; i < src->n_missing; i++) {
        dst->missing[i] = strdup(src->missing[i]);
        if (!dst->missing[i]) { dst->n_missing = i; return -1; }
    }
    return 0;
}

/* ---- accumulator set ---------------------------------------------------- */

static int column_alloc(summary_column *c, const summary_options *o)
{
    moments_init(&c->mom);
    c->vals = values_create(o->max_levels, o->label_bytes);
    c->distinct = malloc(sizeof *c->distinct);
    c->bins = buckets_create(o->bucket_budget);
    if (!c->vals || !c->distinct || !c->bins) return -1;
    hll_init(c->distinct);
    return 0;
}

static void column_free(summary_column *c)
{
    free(c->name);
    values_free(c->vals);
    free(c->distinct);
    buckets_free(c->bins);
}

summary *summary_create(const summary_options *opt, size_t ncols, char *const *names,
                        const column_mode *modes)
{
    summary *s = calloc(1, sizeof *s);
    if (!s) return NULL;
    if (summary_options_copy(&s->opt, opt) != 0) goto fail;
    s->cols = calloc(ncols ? ncols : 1, sizeof *s->cols);
    if (!s->cols) goto fail;
    s->ncols = ncols;
    for (size_t i = 0; i < ncols; i++) {
        summary_column *c = &s->cols[i];
        c->name = strdup(names[i]);
        c->mode = modes ? modes[i] : COLUMN_AUTO;
        if (!c->name || column_alloc(c, opt) != 0) goto fail;
    }
    return s;
fail:
    summary_free(s);
    return NULL;
}

summary *summary_clone_empty(const summary *s)
{
    char **names = malloc((s->ncols ? s->ncols : 1) * sizeof *names);
    column_mode *modes = malloc((s->ncols ? s->ncols : 1) * sizeof *modes);
    summary *c = NULL;
    if (names && modes) {
        for (size_t i = 0; i < s->ncols; i++) {
            names[i] = s->cols[i].name;
            modes[i] = s->cols[i].mode;
        }
        c = summary_create(&s->opt, s->ncols, names, modes);
    }
    free(names);
    free(modes);
    return c;
}

void summary_free(summary *s)
{
    if (!s) return;
    for (size_t i = 0; i < s->ncols; i++) column_free(&s->cols[i]);
    free(s->cols);
    for (size_t i = 0; i < s->nsources; i++) free(s->sources[i].path);
    free(s->sources);
    summary_options_free(&s->opt);
    free(s);
}

void summary_reset(summary *s)
{
    for (size_t i = 0; i < s->ncols; i++) {
        summary_column *c = &s->cols[i];
        c->missing = c->non_numeric = c->non_finite = c->zeros = c->integers = 0;
        moments_init(&c->mom);
        values_reset(c->vals);
        hll_init(c->distinct);
        buckets_reset(c->bins);
        c->n_examples = 0;
    }
    s->rows = s->bytes = s->short_rows = s->long_rows = 0;
    s->n_bad_lines = 0;
}

int summary_add_source(summary *s, const summary_source *src)
{
    summary_source *p = realloc(s->sources, (s->nsources + 1) * sizeof *p);
    if (!p) return -1;
    s->sources = p;
    p[s->nsources] = *src;
    p[s->nsources].path = strdup(src->path ? src->path : "");
    if (!p[s->nsources].path) return -1;
    s->nsources++;
    return 0;
}

/* ---- compatibility and merge -------------------------------------------- */

static void add_diff(char *msg, size_t msglen, size_t *used, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

static void add_diff(char *msg, size_t msglen, size_t *used, const char *fmt, ...)
{
    if (*used >= msglen) return;
    if (*used) *used += (size_t)snprintf(msg + *used, msglen - *used, "; ");
    if (*used >= msglen) return;
    va_list ap;
    va_start(ap, fmt);
    *used += (size_t)vsnprintf(msg + *used, msglen - *used, fmt, ap);
    va_end(ap);
}

int summary_compatible(const summary *a, const summary *b, char *msg, size_t msglen)
{
    size_t used = 0;
    if (msglen) msg[0] = '\0';
    if (a->ncols != b->ncols) add_diff(msg, msglen, &used, "%zu columns vs %zu", a->ncols, b->ncols);
    size_t n = a->ncols < b->ncols ? a->ncols : b->ncols;
    int shown = 0;
    for (size_t i = 0; i < n && shown < 5; i++) {
        if (strcmp(a->cols[i].name, b->cols[i].name) != 0) {
            add_diff(msg, msglen, &used, "column %zu is '%s' vs '%s'", i + 1, a->cols[i].name,
                     b->cols[i].name);
            shown++;
        } else if (a->cols[i].mode != b->cols[i].mode) {
            static const char *m[] = {"auto", "numeric", "categorical"};
            add_diff(msg, msglen, &used, "column '%s' declared %s vs %s", a->cols[i].name,
                     m[a->cols[i].mode], m[b->cols[i].mode]);
            shown++;
        }
    }
    if (a->opt.max_levels != b->opt.max_levels)
        add_diff(msg, msglen, &used, "max levels %u vs %u", a->opt.max_levels, b->opt.max_levels);
    if (a->opt.label_bytes != b->opt.label_bytes)
        add_diff(msg, msglen, &used, "label bytes %u vs %u", a->opt.label_bytes, b->opt.label_bytes);
    if (a->opt.bucket_budget != b->opt.bucket_budget)
        add_diff(msg, msglen, &used, "bucket budget %u vs %u", a->opt.bucket_budget,
                 b->opt.bucket_budget);
    int same_missing = a->opt.n_missing == b->opt.n_missing;
    for (uint32_t i = 0; same_missing && i < a->opt.n_missing; i++)
        same_missing = strcmp(a->opt.missing[i], b->opt.missing[i]) == 0;
    if (!same_missing) add_diff(msg, msglen, &used, "different missing-value lists");
    return used == 0;
}

summary_status summary_merge(summary *into, const summary *from, char *err, size_t errlen)
{
    if (!summary_compatible(into, from, err, errlen)) return SUMMARY_ERR_INCOMPATIBLE;
    for (size_t i = 0; i < into->ncols; i++) {
        summary_column *a = &into->cols[i];
        const summary_column *b = &from->cols[i];
        a->missing += b->missing;
        a->non_numeric += b->non_numeric;
        a->non_finite += b->non_finite;
        a->zeros += b->zeros;
        a->integers += b->integers;
        moments_merge(&a->mom, &b->mom);
        hll_merge(a->distinct, b->distinct);
        if (values_merge(a->vals, b->vals) != 0 || buckets_merge(a->bins, b->bins, NULL, 0) != 0) {
            snprintf(err, errlen, "out of memory while merging");
            return SUMMARY_ERR_MEMORY;
        }
        for (uint32_t e = 0; e < b->n_examples && a->n_examples < SUMMARY_EXAMPLES; e++) {
            int dup = 0;
            for (uint32_t k = 0; k < a->n_examples; k++)
                dup |= strcmp(a->examples[k], b->examples[e]) == 0;
            if (!dup) memcpy(a->examples[a->n_examples++], b->examples[e], SUMMARY_EXAMPLE_BYTES + 1);
        }
    }
    into->rows += from->rows;
    into->bytes += from->bytes;
    into->short_rows += from->short_rows;
    into->long_rows += from->long_rows;
    for (uint32_t i = 0; i < from->n_bad_lines && into->n_bad_lines < SUMMARY_BAD_LINES; i++)
        into->bad_lines[into->n_bad_lines++] = from->bad_lines[i];
    for (size_t i = 0; i < from->nsources; i++)
        if (summary_add_source(into, &from->sources[i]) != 0) {
            snprintf(err, errlen, "out of memory while merging");
            return SUMMARY_ERR_MEMORY;
        }
    return SUMMARY_OK;
}

/* ---- reading back ------------------------------------------------------- */

uint64_t summary_column_present(const summary_column *c)
{
    return c->mom.n + c->non_numeric + c->non_finite;
}

column_kind summary_column_kind(const summary_column *c, double numeric_share)
{
    if (c->mode == COLUMN_NUMERIC) return KIND_NUMERIC;
    if (c->mode == COLUMN_CATEGORICAL) return KIND_CATEGORICAL;
    uint64_t present = summary_column_present(c);
    if (present == 0) return KIND_NUMERIC;
    double share = (double)(c->mom.n + c->non_finite) / (double)present;
    return share >= numeric_share ? KIND_NUMERIC : KIND_CATEGORICAL;
}

double summary_column_distinct(const summary_column *c, int *exact)
{
    int ok = !values_overflowed(c->vals);
    if (exact) *exact = ok;
    return ok ? (double)values_levels(c->vals) : hll_estimate(c->distinct);
}

/* ---- encoding ----------------------------------------------------------- */

static void put_section(wire_writer *w, uint32_t tag, const wire_writer *payload)
{
    wire_put_u32(w, tag);
    wire_put_u64(w, payload->len);
    wire_put_bytes(w, payload->data, payload->len);
    wire_put_u64(w, XXH3_64bits(payload->data, payload->len));
}

static void encode_schema(const summary *s, wire_writer *w)
{
    wire_put_u32(w, s->opt.max_levels);
    wire_put_u32(w, s->opt.label_bytes);
    wire_put_u32(w, s->opt.bucket_budget);
    wire_put_u32(w, s->opt.n_missing);
    for (uint32_t i = 0; i < s->opt.n_missing; i++)
        wire_put_str(w, s->opt.missing[i], strlen(s->opt.missing[i]));
    wire_put_u64(w, s->ncols);
    for (size_t i = 0; i < s->ncols; i++) {
        wire_put_str(w, s->cols[i].name, strlen(s->cols[i].name));
        wire_put_u8(w, (uint8_t)s->cols[i].mode);
    }
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
    for (size_t i = 0; i < s->ncols; i++) {
        const summary_column *c = &s->cols[i];
        wire_put_u64(w, c->missing);
        wire_put_u64(w, c->non_numeric);
        wire_put_u64(w, c->non_finite);
        wire_put_u64(w, c->zeros);
        wire_put_u64(w, c->integers);
        moments_write(&c->mom, w);
        wire_put_u32(w, c->n_examples);
        for (uint32_t e = 0; e < c->n_examples; e++)
            wire_put_str(w, c->examples[e], strlen(c->examples[e]));
        values_write(c->vals, w);
        hll_write(c->distinct, w);
        buckets_write(c->bins, w);
    }
}

summary_status summary_encode(const summary *s, uint8_t **data, size_t *len)
{
    wire_writer out, part;
    wire_writer_init(&out);
    wire_put_bytes(&out, MAGIC, sizeof MAGIC);
    wire_put_u32(&out, SUMMARY_FORMAT_VERSION);
    void (*enc[])(const summary *, wire_writer *) = {encode_schema, encode_sources, encode_table,
                                                      encode_columns};
    const uint32_t tags[] = {TAG_SCHEMA, TAG_SOURCES, TAG_TABLE, TAG_COLUMNS};
    for (int k = 0; k < 4; k++) {
        wire_writer_init(&part);
        enc[k](s, &part);
        if (part.failed) { wire_writer_free(&part); wire_writer_free(&out); return SUMMARY_ERR_MEMORY; }
        put_section(&out, tags[k], &part);
        wire_writer_free(&part);
    }
    wire_put_u32(&out, TAG_END);
    wire_put_u64(&out, 8);
    uint64_t h = out.failed ? 0 : XXH3_64bits(out.data, out.len);
    wire_put_u64(&out, h);
    if (out.failed) { wire_writer_free(&out); return SUMMARY_ERR_MEMORY; }
    *data = out.data;
    *len = out.len;
    return SUMMARY_OK;
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
        s = summary_create(&o, ncols, names, modes);
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

static void decode_columns(summary *s, wire_reader *r)
{
    for (size_t i = 0; i < s->ncols && !r->failed; i++) {
        summary_column *c = &s->cols[i];
        c->missing = wire_get_u64(r);
        c->non_numeric = wire_get_u64(r);
        c->non_finite = wire_get_u64(r);
        c->zeros = wire_get_u64(r);
        c->integers = wire_get_u64(r);
        moments_read(&c->mom, r);
        c->n_examples = wire_get_u32(r);
        if (c->n_examples > SUMMARY_EXAMPLES) { r->failed = 1; c->n_examples = 0; break; }
        for (uint32_t e = 0; e < c->n_examples; e++) {
            size_t n;
            const char *p = wire_get_str(r, &n, SUMMARY_EXAMPLE_BYTES);
            if (p) memcpy(c->examples[e], p, n);
            c->examples[e][n] = '\0';
        }
        values *v = values_read(r);
        if (!v) { r->failed = 1; break; }
        values_free(c->vals);
        c->vals = v;
        if (hll_read(c->distinct, r) != 0) { r->failed = 1; break; }
        buckets *b = buckets_read(r);
        if (!b) { r->failed = 1; break; }
        buckets_free(c->bins);
        c->bins = b;
    }
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
    const uint32_t want[] = {TAG_SCHEMA, TAG_SOURCES, TAG_TABLE, TAG_COLUMNS};
    summary *s = NULL;
    for (int k = 0; k < 4; k++) {
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
        if (k == 0) s = decode_schema(&p);
        else if (k == 1) decode_sources(s, &p);
        else if (k == 2) decode_table(s, &p);
        else decode_columns(s, &p);
        if (p.failed || p.pos != p.len || !s) {
            snprintf(err, errlen, "damaged summary (section %d does not parse)", k + 1);
            summary_free(s);
            return SUMMARY_ERR_CORRUPT;
        }
    }
    if (r.pos != len - 20) {
        snprintf(err, errlen, "damaged summary (unexpected bytes before the end marker)");
        summary_free(s);
        return SUMMARY_ERR_CORRUPT;
    }
    *out = s;
    return SUMMARY_OK;
}

/* ---- files -------------------------------------------------------------- */

summary_status summary_write(const summary *s, const char *path, char *err, size_t errlen)
{
    uint8_t *data;
    size_t len;
    if (summary_encode(s, &data, &len) != SUMMARY_OK) {
        snprintf(err, errlen, "%s: out of memory while encoding", path);
        return SUMMARY_ERR_MEMORY;
    }
    size_t plen = strlen(path);
    char *tmp = malloc(plen + 16);
    if (!tmp) { free(data); snprintf(err, errlen, "out of memory"); return SUMMARY_ERR_MEMORY; }
    snprintf(tmp, plen + 16, "%s.tmp.XXXXXX", path);
    int fd = mkstemp(tmp);
    if (fd < 0) {
        snprintf(err, errlen, "%s: cannot create: %s", path, strerror(errno));
        free(tmp);
        free(data);
        return SUMMARY_ERR_IO;
    }
    size_t off = 0;
    int ok = 1;
    while (off < len) {
        ssize_t n = write(fd, data + off, len - off);
        if (n < 0 && errno == EINTR) continue;
        if (n <= 0) { ok = 0; break; }
        off += (size_t)n;
    }
    int saved = errno;
    if (ok && fsync(fd) != 0) { ok = 0; saved = errno; }
    if (close(fd) != 0 && ok) { ok = 0; saved = errno; }
    /* mkstemp creates mode 0600; give the summary the usual 0666 & ~umask. */
    mode_t mask = umask(0);
    umask(mask);
    if (ok) chmod(tmp, 0666 & ~mask);
    if (ok && rename(tmp, path) != 0) { ok = 0; saved = errno; }
    if (!ok) {
        unlink(tmp);
        snprintf(err, errlen, "%s: cannot write: %s", path, strerror(saved));
    }
    free(tmp);
    free(data);
    return ok ? SUMMARY_OK : SUMMARY_ERR_IO;
}

summary_status summary_read(const char *path, summary **out, char *err, size_t errlen)
{
    *out = NULL;
    FILE *f = fopen(path, "rb");
    if (!f) {
        snprintf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
        return SUMMARY_ERR_IO;
    }
    size_t cap = 1 << 16, len = 0;
    uint8_t *data = malloc(cap);
    while (data) {
        if (len == cap) {
            uint8_t *p = realloc(data, cap * 2);
            if (!p) { free(data); data = NULL; break; }
            data = p;
            cap *= 2;
        }
        size_t n = fread(data + len, 1, cap - len, f);
        len += n;
        if (n == 0) break;
    }
    int bad = ferror(f);
    fclose(f);
    if (!data) { snprintf(err, errlen, "%s: out of memory", path); return SUMMARY_ERR_MEMORY; }
    if (bad) {
        free(data);
        snprintf(err, errlen, "%s: read error", path);
        return SUMMARY_ERR_IO;
    }
    char inner[400];
    summary_status st = summary_decode(data, len, out, inner, sizeof inner);
    free(data);
    if (st != SUMMARY_OK) snprintf(err, errlen, "%s: %s", path, inner);
    return st;
}
