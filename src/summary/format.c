/* summary file format: decoding and reading (docs/summary-format.md);
 * format_write.c encodes and writes.
 *
 * File layout (all integers little-endian):
 *   magic    8 bytes  89 'S' 'H' 'F' 0d 0a 1a 0a
 *   version  u32      SUMMARY_FORMAT_VERSION
 *   sections          u32 tag, u64 length, payload, u64 XXH3-64(payload)
 *   trailer           u32 'END.', u64 8, u64 XXH3-64 of every byte before it
 * The trailer checksum covers the whole file, so any single-bit change is
 * detected (a change to the magic or version is reported as such first).
 */
#include "io/message.h"
#include "summary/column.h"
#include "summary/summary.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>

#include "summary/filehash.h"
#include "summary/format.h"

const uint8_t SUMMARY_MAGIC[8] = {0x89, 'S', 'H', 'F', 0x0d, 0x0a, 0x1a, 0x0a};
#define MAGIC SUMMARY_MAGIC


#define MAX_COLUMNS 1000000

/* ---- decoding ----------------------------------------------------------- */

static void get_decimal(wire_reader *r, number_decimal *d)
{
    memset(d, 0, sizeof *d); /* no tail: the file keeps 19 digits */
    d->value = wire_get_f64(r);
    d->mantissa = wire_get_u64(r);
    int64_t e = wire_get_i64(r);
    if (e < INT32_MIN || e > INT32_MAX) r->failed = 1;
    d->exp10 = (int32_t)e;
    d->negative = wire_get_u8(r);
    d->exact = wire_get_u8(r);
    if (d->negative > 1 || d->exact > 1) r->failed = 1;
}


/* Every decode step reads through a wire_reader whose `failed` flag it sets
 * on truncated or malformed bytes; a broken invariant (docs/summary-format.md,
 * "Invariants") also writes what broke into `why`, which becomes the error
 * message.  No count is used before wire_need has checked that the bytes
 * it announces remain. */
typedef struct {
    char why[240];      /* the broken invariant, "" when only the bytes did not parse */
    size_t remaining;   /* bytes of the file after the current section */
} decode_state;

static int broken(wire_reader *r, decode_state *d, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

static int broken(wire_reader *r, decode_state *d, const char *fmt, ...)
{
    r->failed = 1;
    if (d->why[0]) return -1;
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(d->why, sizeof d->why, fmt, ap);
    va_end(ap);
    return -1;
}

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

/* The fewest bytes a column takes in COLS: five counts, moments, the
 * example count, an empty value table with its overflow slots, an empty
 * sparse sketch, an empty bucket store and the two flags. */
#define MIN_COLUMN_BYTES (5 * 8 + 84 + 4 + (4 + 4 + 1 + 4 + 8 * VALUES_OVERFLOW_SLOTS) + 5 + 13 + 2)

static summary *decode_schema(wire_reader *r, decode_state *ds, uint32_t version)
{
    summary_options o;
    memset(&o, 0, sizeof o);
    o.max_levels = wire_get_u32(r);
    o.label_bytes = wire_get_u32(r);
    o.bucket_budget = wire_get_u32(r);
    uint32_t nm = wire_get_u32(r);
    if (nm > SUMMARY_MAX_MISSING || o.max_levels == 0 || o.max_levels > (1u << 26) ||
        o.label_bytes > 65536 || o.bucket_budget < 3 || o.bucket_budget > (1u << 26))
        r->failed = 1;
    for (uint32_t i = 0; i < nm && !r->failed; i++) {
        o.missing[i] = dup_str(r, 1024);
        if (o.missing[i]) o.n_missing = i + 1;
    }
    if (version >= 5) { /* older files matched the spellings byte for byte */
        uint8_t rule = wire_get_u8(r);
        if (rule > 1) r->failed = 1;
        else if (rule == 0 && !r->failed) /* every build that writes 5 or later matched in any case */
            broken(r, ds, "a version-%u file whose missing-value spellings match exactly "
                          "(written as version 1 to 3)", version);
        o.missing_any_case = rule;
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
    /* The columns' records come later in the file: check that it can hold
     * them before allocating their accumulators. */
    if (!r->failed && ncols > ds->remaining / MIN_COLUMN_BYTES)
        broken(r, ds, "%llu columns cannot fit in the %zu bytes that follow",
               (unsigned long long)ncols, ds->remaining);
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
    if (!r->failed && o.target) {
        int found = 0;
        for (uint64_t i = 0; i < ncols && !found; i++) found = strcmp(names[i], o.target) == 0;
        if (!found) broken(r, ds, "the target '%.80s' is not a column", o.target);
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

/* A version 6 source's shard fields (docs/summary-format.md). */
static void decode_shard(summary_source *src, wire_reader *r, decode_state *ds, uint64_t i)
{
    src->shard_rule = wire_get_u8(r);
    src->shard_modes = wire_get_u8(r);
    src->shard_map = wire_get_u8(r);
    src->shard_index = wire_get_u32(r);
    src->shard_count = wire_get_u32(r);
    src->file_id = wire_get_u64(r);
    src->read_bytes = wire_get_u64(r);
    if (r->failed) return;
    if (src->shard_rule == 0) {
        if (src->shard_modes || src->shard_map || src->shard_index || src->shard_count ||
            src->file_id || src->read_bytes)
            broken(r, ds, "source %llu: shard fields of a source that is no shard",
                   (unsigned long long)i + 1);
        return;
    }
    if (src->shard_rule > 3)
        broken(r, ds, "source %llu: unknown shard start rule %u", (unsigned long long)i + 1,
               src->shard_rule);
    else if (src->shard_modes == 0 || src->shard_modes > 15)
        broken(r, ds, "source %llu: shard start modes %u (want 1 to 15)",
               (unsigned long long)i + 1, src->shard_modes);
    else if (src->shard_rule == 3 && (src->shard_modes & (src->shard_modes - 1)))
        broken(r, ds, "source %llu: a start found from the top names more than one mode",
               (unsigned long long)i + 1);
    else if (src->shard_count == 0 || src->shard_index == 0 ||
             src->shard_index > src->shard_count)
        broken(r, ds, "source %llu: shard %u of %u", (unsigned long long)i + 1,
               src->shard_index, src->shard_count);
    else if (src->read_bytes < src->raw_bytes)
        broken(r, ds, "source %llu: a shard that read %llu bytes in all but %llu in its data",
               (unsigned long long)i + 1, (unsigned long long)src->read_bytes,
               (unsigned long long)src->raw_bytes);
    else if (src->end_byte < src->start_byte || src->end_byte > src->size_bytes)
        broken(r, ds, "source %llu: shard byte range %llu..%llu outside the %llu-byte file",
               (unsigned long long)i + 1, (unsigned long long)src->start_byte,
               (unsigned long long)src->end_byte, (unsigned long long)src->size_bytes);
}

static void decode_sources(summary *s, wire_reader *r, decode_state *ds, uint32_t version)
{
    uint64_t n = wire_get_u64(r), shards = 0;
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
        if (version >= 6) decode_shard(&src, r, ds, i);
        if (!r->failed && src.shard_rule) shards++;
        if (!r->failed && strcmp(src.format, "plain") != 0 && strcmp(src.format, "gzip") != 0 &&
            strcmp(src.format, "zstd") != 0)
            broken(r, ds, "source %llu: unknown format", (unsigned long long)i + 1);
        if (!r->failed && src.end_byte && src.start_byte > src.end_byte)
            broken(r, ds, "source %llu: byte range starts after its end",
                   (unsigned long long)i + 1);
        if (!r->failed && summary_add_source(s, &src) != 0) r->failed = 1;
        free(src.path);
    }
    if (!r->failed && version == 6 && shards == 0)
        broken(r, ds, "a version-6 file without a shard's start record (written as version 5 "
                      "or older)");
}

static void decode_table(summary *s, wire_reader *r, decode_state *ds, uint32_t version)
{
    s->rows = wire_get_u64(r);
    s->bytes = wire_get_u64(r);
    s->short_rows = wire_get_u64(r);
    s->long_rows = wire_get_u64(r);
    s->n_bad_lines = wire_get_u32(r);
    if (s->n_bad_lines > SUMMARY_BAD_LINES) { r->failed = 1; s->n_bad_lines = 0; return; }
    for (uint32_t i = 0; i < s->n_bad_lines; i++) s->bad_lines[i] = wire_get_u64(r);
    if (version >= 2) {
        s->repeated_headers = wire_get_u64(r);
        if (s->repeated_headers == 0 && version == 2)
            broken(r, ds, "a count of 0 repeated headers in a version-2 file (written as version 1)");
    }
    if (version == 3 && s->target < 0)
        broken(r, ds, "a version-3 file without a target (written as version 1 or 2)");
    if (s->rows > SUMMARY_MAX_ROWS) /* what merge refuses to make (co-moment counts are doubles) */
        broken(r, ds, "%llu rows, more than 2^53", (unsigned long long)s->rows);
    if (r->failed) return;
    uint64_t source_rows = 0;
    for (size_t i = 0; i < s->nsources; i++) {
        if (s->sources[i].rows > UINT64_MAX - source_rows) { source_rows = UINT64_MAX; break; }
        source_rows += s->sources[i].rows;
    }
    if (source_rows != s->rows)
        broken(r, ds, "%llu rows, but the sources hold %llu", (unsigned long long)s->rows,
               (unsigned long long)source_rows);
    else if (s->short_rows > s->rows || s->long_rows > s->rows - s->short_rows)
        broken(r, ds, "more short and long rows than rows");
    else if (s->n_bad_lines > s->short_rows + s->long_rows)
        broken(r, ds, "more ragged line numbers than ragged rows");
    for (uint32_t i = 0; i < s->n_bad_lines && !r->failed; i++)
        if (s->bad_lines[i] == 0) broken(r, ds, "ragged line number 0 (lines count from 1)");
    /* Text read from plain sources is their bytes, or fewer (a shard's
     * range; a checkpoint counts a source's bytes only once it is read to
     * its end, so no bound from below). */
    uint64_t plain_bytes = 0;
    int all_plain = s->nsources > 0;
    for (size_t i = 0; i < s->nsources && all_plain; i++) {
        all_plain = strcmp(s->sources[i].format, "plain") == 0;
        plain_bytes = s->sources[i].raw_bytes > UINT64_MAX - plain_bytes
                          ? UINT64_MAX
                          : plain_bytes + s->sources[i].raw_bytes;
    }
    if (!r->failed && all_plain && s->bytes > plain_bytes)
        broken(r, ds, "%llu bytes of text from plain sources of %llu bytes",
               (unsigned long long)s->bytes, (unsigned long long)plain_bytes);
}

static int hash_order(const void *a, const void *b)
{
    uint64_t x = *(const uint64_t *)a, y = *(const uint64_t *)b;
    return x < y ? -1 : x > y;
}

static void decode_target(summary *s, wire_reader *r, decode_state *ds, uint32_t version)
{
    uint8_t has = wire_get_u8(r), dropped = wire_get_u8(r);
    s->target_text = wire_get_u64(r);
    uint32_t n = wire_get_u32(r);
    if (r->failed || has > 1 || dropped > 1 || (has && s->target < 0) || n > s->opt.max_classes ||
        (!has && n > 0) || (has && !s->has_classes)) {
        r->failed = 1;
        return;
    }
    /* Each class takes at least 47 bytes (hash, label length, rows, flag,
     * decimal). */
    if (!wire_need(r, (size_t)n * 47)) return;
    if (dropped && (has || s->target < 0))
        { broken(r, ds, "classes marked dropped while kept, or without a target"); return; }
    if (s->target_text > s->rows)
        { broken(r, ds, "more target text cells than rows"); return; }
    if (!has && s->has_classes) {
        /* Classes were dropped at scan time: free the per-class arrays. */
        for (size_t i = 0; i < s->ncols; i++) { free(s->cols[i].cls); s->cols[i].cls = NULL; }
        s->has_classes = 0;
    }
    s->classes_dropped = dropped;
    uint64_t rows = 0;
    for (uint32_t c = 0; c < n && !r->failed; c++) {
        uint64_t h = wire_get_u64(r);
        size_t len;
        const char *label = wire_get_str(r, &len, SUMMARY_MAX_CLASS_BYTES);
        uint64_t crows = wire_get_u64(r);
        uint8_t numeric = wire_get_u8(r);
        number_decimal d;
        get_decimal(r, &d);
        if (r->failed || numeric > 1) { r->failed = 1; return; }
        if (XXH3_64bits(label, len) != h)
            { broken(r, ds, "class %u: label does not hash to its key", c + 1); return; }
        static const number_decimal zero;
        if (numeric ? !isfinite(d.value) : memcmp(&d, &zero, sizeof d) != 0)
            { broken(r, ds, "class %u: value does not match its numeric flag", c + 1); return; }
        /* A class is numeric when its label reads as a finite number (in a
         * target column not declared categorical), with the label's value
         * and decimal (the first 19 digits). */
        number_decimal p;
        int reads = s->cols[s->target].mode != COLUMN_CATEGORICAL &&
                    number_parse(label, len, &p) == NUMBER_FINITE;
        if (reads != numeric ||
            (numeric && (p.value != d.value || p.mantissa != d.mantissa || p.exp10 != d.exp10 ||
                         p.negative != d.negative)))
            { broken(r, ds, "class %u: value does not match its label", c + 1); return; }
        if (crows == 0 || crows > s->rows - rows)
            { broken(r, ds, "class %u: %llu rows do not fit the table", c + 1,
                     (unsigned long long)crows); return; }
        rows += crows;
        if (summary_append_class(s, h, label, len, numeric ? &d : NULL) != 0) {
            r->failed = 1;
            return;
        }
        s->class_rows[c] = crows;
    }
    if (n > 1) { /* class texts are unique */
        uint64_t *sorted = malloc((size_t)n * sizeof *sorted);
        if (!sorted) { r->failed = 1; return; }
        memcpy(sorted, s->class_hash, (size_t)n * sizeof *sorted);
        qsort(sorted, n, sizeof *sorted, hash_order);
        for (uint32_t c = 1; c < n && !r->failed; c++)
            if (sorted[c] == sorted[c - 1]) broken(r, ds, "a class text appears twice");
        free(sorted);
    }
    if (r->failed) return;
    if (version >= 3) {
        if (tcells_read(&s->tcells, r) != 0) return;
        if ((s->has_classes || s->target < 0) && (s->tcells.n || s->tcells.level))
            broken(r, ds, "continuous target cells while classes are kept, or without a target");
    } else {
        s->legacy_cells = s->target >= 0 && !s->has_classes;
    }
}

static int decimal_equal(const number_decimal *a, const number_decimal *b)
{
    return memcmp(&a->value, &b->value, sizeof a->value) == 0 && a->mantissa == b->mantissa &&
           a->exp10 == b->exp10 && a->negative == b->negative && a->exact == b->exact;
}

static void decode_comoments(summary *s, wire_reader *r, decode_state *ds, uint32_t version)
{
    if (wire_get_u64(r) != s->ncomo) { r->failed = 1; return; }
    if (!wire_need(r, s->ncomo * 28)) return;
    for (size_t k = 0; k < s->ncomo && !r->failed; k++) {
        s->como_ref_set[k] = wire_get_u8(r);
        if (s->como_ref_set[k] > 1) r->failed = 1;
        get_decimal(r, &s->como_ref[k]);
    }
    uint8_t present = wire_get_u8(r);
    if (present != 1 || r->failed) { r->failed = 1; return; }
    /* Read or merged, never fed blocks; a pair's lost flag from version 7. */
    comoment *c = comoment_read(r, 0, version >= 7);
    if (!c || comoment_columns(c) != s->ncomo) { comoment_free(c); r->failed = 1; return; }
    comoment_free(s->como);
    s->como = c;
    /* Each co-moment column: its frame is its column's, and its own count
     * is its column's count of numbers. */
    for (size_t k = 0; k < s->ncomo && !r->failed; k++) {
        size_t i = s->como_col[k];
        const moments *m = &s->cols[i].mom;
        static const number_decimal zero;
        const number_decimal *want = m->n > 0 ? &m->ref : &zero;
        if (s->como_ref_set[k] != (m->n > 0) || !decimal_equal(&s->como_ref[k], want))
            broken(r, ds, "column %zu '%.80s': co-moment frame differs from the column's", i + 1,
                   s->cols[i].name);
        else if (comoment_n(c, k, k) != (double)m->n)
            broken(r, ds, "column %zu '%.80s': co-moment count %.0f, not the column's %llu",
                   i + 1, s->cols[i].name, comoment_n(c, k, k), (unsigned long long)m->n);
        /* Exact pair sums count the rows where the column and the target
         * both hold a number: the pair count of the two. */
        const pairsum *ps = s->cols[i].pairs;
        int t = s->target >= 0 ? s->como_of[s->target] : -1;
        if (!r->failed && ps && ps->exact && t >= 0 && (double)ps->n != comoment_n(c, k, (size_t)t))
            broken(r, ds, "column %zu '%.80s': %llu exact pairs with the target, %.0f co-moment "
                   "pairs", i + 1, s->cols[i].name, (unsigned long long)ps->n,
                   comoment_n(c, k, (size_t)t));
    }
    char why[400];
    if (!r->failed && comoment_check(s, why, sizeof why) != 0) broken(r, ds, "%s", why);
}

/* The target column against the class table: every present target cell
 * has a class, and while the column's value table is exact, the classes
 * are its values with the same counts. */
static void check_target(summary *s, wire_reader *r, decode_state *ds)
{
    if (s->target < 0) return;
    const summary_column *t = &s->cols[s->target];
    if (t->mode != COLUMN_CATEGORICAL && s->target_text != t->non_numeric + t->non_finite) {
        broken(r, ds, "%llu target text cells, but the target column has %llu",
               (unsigned long long)s->target_text,
               (unsigned long long)(t->non_numeric + t->non_finite));
        return;
    }
    /* A continuous target's cells are the keys of its values, in key order
     * (tcells.h): the first and last are those of its min and max (keys
     * shifted together passed every other check and moved the screen's
     * bins after a merge: decode audit). */
    const tcells *tc = &s->tcells;
    if (!s->has_classes && tc->n && t->mom.n && isfinite(t->mom.min) && isfinite(t->mom.max) &&
        (tc->key[0] != tcells_key(t->mom.min, tc->level) ||
         tc->key[tc->n - 1] != tcells_key(t->mom.max, tc->level))) {
        broken(r, ds, "the target's cells do not begin and end at its min and max");
        return;
    }
    for (size_t i = 0; i < s->ncols; i++) {
        char msg[200];
        if (column_check_target(s, &s->cols[i], msg, sizeof msg) != 0) {
            broken(r, ds, "column %zu '%.80s': %s", i + 1, s->cols[i].name, msg);
            return;
        }
    }
    for (size_t i = 0; i < s->ncols; i++)
        if (s->cols[i].pairs && s->cols[i].pairs->n > t->mom.n) {
            broken(r, ds, "column %zu '%.80s': %llu exact pairs with the target, more than its "
                   "%llu numbers", i + 1, s->cols[i].name,
                   (unsigned long long)s->cols[i].pairs->n, (unsigned long long)t->mom.n);
            return;
        }
    if (!s->has_classes) return;
    uint64_t rows = 0;
    for (uint32_t c = 0; c < s->nclasses; c++) rows += s->class_rows[c];
    if (rows != summary_column_present(t)) {
        broken(r, ds, "the classes hold %llu rows, the target column %llu present cells",
               (unsigned long long)rows, (unsigned long long)summary_column_present(t));
        return;
    }
    if (values_overflowed(t->vals)) return;
    if (values_levels(t->vals) != s->nclasses) {
        broken(r, ds, "%u classes, but the target column has %u distinct values", s->nclasses,
               values_levels(t->vals));
        return;
    }
    for (uint32_t c = 0; c < s->nclasses && !r->failed; c++)
        if (values_count_of(t->vals, s->class_hash[c]) != s->class_rows[c])
            broken(r, ds, "class %u: %llu rows, but the target column counts %llu", c + 1,
                   (unsigned long long)s->class_rows[c],
                   (unsigned long long)values_count_of(t->vals, s->class_hash[c]));
}

/* A version 1 or 2 summary of a continuous target: its regression cells,
 * 2^20 plus the value's key at level 50 (4 buckets an octave), become a
 * cell table (summary/tcells.h) at that level, raised while over the
 * budget; every column's cells are renumbered.  0, or -1 when out of
 * memory. */
static int convert_legacy_cells(summary *s)
{
    const uint32_t base = 1u << 20, span = 2 * 8188 + 1;
    int64_t *keys = malloc(span * sizeof *keys);
    uint32_t *map = calloc((size_t)base + 8189, sizeof *map), *cells = malloc(span * sizeof *cells);
    unsigned char *seen = calloc(span, 1);
    int rc = -1;
    if (!keys || !map || !cells || !seen) goto done;
    for (size_t i = 0; i < s->ncols; i++) {
        const summary_column *c = &s->cols[i];
        for (size_t e = 0, n = buckets_entries(c->bins); e < n; e++) {
            uint32_t cell = buckets_entry_at(c->bins, e).cell;
            if (cell) seen[cell - (base - 8188)] = 1;
        }
        for (size_t e = 0, n = c->cross ? crosstab_entries(c->cross) : 0; e < n; e++)
            seen[crosstab_entry_at(c->cross, e).cell - (base - 8188)] = 1;
    }
    size_t n = 0;
    for (uint32_t k = 0; k < span; k++)
        if (seen[k]) keys[n++] = (int64_t)k - 8188;
    if (tcells_from_keys(&s->tcells, 50, keys, n, cells) != 0) goto done;
    for (size_t k = 0; k < n; k++) map[(uint32_t)(keys[k] + base)] = cells[k];
    rc = 0;
    for (size_t i = 0; i < s->ncols && rc == 0; i++)
        rc = column_remap_target_cells(&s->cols[i], map, base + 8189);
done:
    free(keys);
    free(map);
    free(cells);
    free(seen);
    s->legacy_cells = 0;
    return rc;
}

static void decode_columns(summary *s, wire_reader *r, decode_state *ds, uint32_t version)
{
    for (size_t i = 0; i < s->ncols && !r->failed; i++) {
        summary_column *c = &s->cols[i];
        const char *part;
        char msg[200];
        if (column_read(c, s->nclasses, version, r, &part) != 0)
            broken(r, ds, "column %zu '%.80s': %s does not parse", i + 1, c->name, part);
        else if (column_check(s, c, msg, sizeof msg) != 0)
            broken(r, ds, "column %zu '%.80s': %s", i + 1, c->name, msg);
    }
    if (!r->failed && s->legacy_cells && convert_legacy_cells(s) != 0) {
        errno = ENOMEM;
        r->failed = 1;
    }
    if (!r->failed) check_target(s, r, ds);
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
    if (version == SUMMARY_SET_FORMAT_VERSION) { /* several targets: which one? */
        summary_set *set;
        summary_status st = summary_set_decode(data, len, &set, err, errlen);
        if (st != SUMMARY_OK) return st;
        char names[512];
        snprintf(err, errlen, "a summary of %zu targets (%s): choose one with {read_target}",
                 set->n,
                 summary_set_names(set, names, sizeof names));
        summary_set_free(set);
        return SUMMARY_ERR_TARGETS;
    }
    if (version > SUMMARY_FORMAT_VERSION) {
        snprintf(err, errlen, "summary format version %u is newer than this sheaf reads (%u)",
                 version, SUMMARY_FORMAT_VERSION > SUMMARY_SET_FORMAT_VERSION
                              ? SUMMARY_FORMAT_VERSION : SUMMARY_SET_FORMAT_VERSION);
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
    if (filehash(data, len - 8) != tsum) {
        snprintf(err, errlen, "damaged summary (file checksum mismatch)");
        return SUMMARY_ERR_CORRUPT;
    }
    if (version < 1) {
        snprintf(err, errlen, "unsupported summary format version %u", version);
        return SUMMARY_ERR_CORRUPT;
    }
    static const uint32_t want[] = {TAG_SCHEMA, TAG_SOURCES, TAG_TABLE, TAG_TARGET, TAG_COLUMNS,
                                    TAG_COMOMENTS};
    static const char *const names[] = {"SCHM", "SRCS", "TABL", "TRGT", "COLS", "COMO"};
    summary *s = NULL;
    for (int k = 0; k < 6; k++) {
        uint32_t tag = wire_get_u32(&r);
        uint64_t plen = wire_get_u64(&r);
        /* The payload, its checksum (8) and the trailer (20) must remain;
         * r.pos <= len holds after any read that did not fail. */
        size_t left = r.failed ? 0 : len - r.pos;
        if (r.failed || tag != want[k] || left < 8 + 20 || plen > left - 8 - 20) {
            snprintf(err, errlen, "damaged summary (section %d)", k + 1);
            summary_free(s);
            return SUMMARY_ERR_CORRUPT;
        }
        const uint8_t *payload = data + r.pos;
        r.pos += (size_t)plen;
        if (filehash(payload, (size_t)plen) != wire_get_u64(&r)) {
            snprintf(err, errlen, "damaged summary (section %d checksum mismatch)", k + 1);
            summary_free(s);
            return SUMMARY_ERR_CORRUPT;
        }
        wire_reader p;
        wire_reader_init(&p, payload, (size_t)plen);
        decode_state ds = {"", len - r.pos};
        /* A failed allocation sets errno to ENOMEM (nothing else the
         * decoders call does): that is a resource limit, not damage. */
        errno = 0;
        if (k == 0) {
            s = decode_schema(&p, &ds, version);
            if (s) s->copy_prints = version >= 7;
        }
        else if (k == 1) decode_sources(s, &p, &ds, version);
        else if (k == 2) decode_table(s, &p, &ds, version);
        else if (k == 3) decode_target(s, &p, &ds, version);
        else if (k == 4) decode_columns(s, &p, &ds, version);
        else decode_comoments(s, &p, &ds, version);
        if (p.failed || p.pos != p.len || !s) {
            /* Counts are checked against the bytes that remain before
             * anything is allocated for them: a failed allocation is a
             * real shortage. */
            int nomem = errno == ENOMEM;
            if (nomem)
                snprintf(err, errlen, "out of memory while decoding section %d %s", k + 1,
                         names[k]);
            else if (ds.why[0])
                snprintf(err, errlen, "damaged summary (section %d %s: %s)", k + 1, names[k],
                         ds.why);
            else
                snprintf(err, errlen, "damaged summary (section %d %s does not parse)", k + 1,
                         names[k]);
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


/* Standard input read to its end into anonymous pages, grown by doubling
 * (mremap), so the caller releases it as it would a map: munmap. */
static summary_status read_stdin(void **map_out, size_t *len_out, char *err, size_t errlen)
{
    size_t cap = 1u << 16, len = 0;
    unsigned char *buf = mmap(NULL, cap, PROT_READ | PROT_WRITE, MAP_PRIVATE | MAP_ANONYMOUS, -1, 0);
    if (buf == MAP_FAILED) {
        snprintf(err, errlen, "standard input: out of memory");
        return SUMMARY_ERR_MEMORY;
    }
    for (;;) {
        if (len == cap) {
            void *grown = cap <= SIZE_MAX / 2 ? mremap(buf, cap, cap * 2, MREMAP_MAYMOVE) : MAP_FAILED;
            if (grown == MAP_FAILED) {
                munmap(buf, cap);
                snprintf(err, errlen, "standard input: out of memory after %.1f MiB",
                         len / 1048576.0);
                return SUMMARY_ERR_MEMORY;
            }
            buf = grown;
            cap *= 2;
        }
        ssize_t got = read(STDIN_FILENO, buf + len, cap - len);
        if (got < 0 && errno == EINTR) continue;
        if (got < 0) {
            snprintf(err, errlen, "standard input: cannot read: %s", strerror(errno));
            munmap(buf, cap);
            return SUMMARY_ERR_IO;
        }
        if (got == 0) break;
        len += (size_t)got;
    }
    if (len == 0) {
        munmap(buf, cap);
        return SUMMARY_OK; /* an empty file: the decoder says what is wrong */
    }
    /* Trim to whole pages of len so that munmap(map, len) releases all. */
    size_t page = (size_t)sysconf(_SC_PAGESIZE), keep = (len + page - 1) / page * page;
    if (keep < cap) munmap(buf + keep, cap - keep);
    *map_out = buf;
    *len_out = len;
    return SUMMARY_OK;
}

summary_status summary_map_file(const char *path, void **map_out, size_t *len_out, char *err,
                                size_t errlen)
{
    *map_out = NULL;
    *len_out = 0;
    if (!strcmp(path, "-")) return read_stdin(map_out, len_out, err, errlen);
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        message_printf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
        return SUMMARY_ERR_IO;
    }
    struct stat st;
    if (fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
        close(fd);
        message_printf(err, errlen, "%s: not a regular file", path);
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
            message_printf(err, errlen, "%s: out of memory: no room to map its %.1f MiB", path,
                           len / 1048576.0);
            return SUMMARY_ERR_MEMORY;
        }
        message_printf(err, errlen, "%s: cannot map: %s", path, strerror(errno));
        return SUMMARY_ERR_IO;
    }
    *map_out = map;
    *len_out = len;
    return SUMMARY_OK;
}

summary_status summary_read(const char *path, summary **out, char *err, size_t errlen)
{
    *out = NULL;
    void *map;
    size_t len;
    summary_status rc = summary_map_file(path, &map, &len, err, errlen);
    if (rc != SUMMARY_OK) return rc;
    char inner[400];
    rc = summary_decode(map ? map : "", len, out, inner, sizeof inner);
    if (map) munmap(map, len);
    if (rc != SUMMARY_OK)
        message_printf(err, errlen, "%s: %s", strcmp(path, "-") ? path : "standard input", inner);
    return rc;
}
