/* targets: the summaries of one scan with several targets, their file and
 * their merge (summary.h, "several targets"; docs/summary-format.md,
 * "Several targets").
 *
 * The file (format version 4) is a container: the magic, version 4, a TGTS
 * section with the target names, one PART section per target whose payload
 * is that target's whole summary file (version 3, exactly the bytes a scan
 * with that target alone writes), and the trailer.  Sections and trailer
 * are framed and checksummed as in a summary file.  Keeping each part whole
 * costs the target-independent accumulators once per target in the file
 * (measured in docs/summary-format.md) and buys three things: a part read
 * out of the file is the single-target summary byte for byte, every part is
 * checked by the one decoder, and nothing in the version 3 layout moves.
 * The decoder then holds the parts against each other: the names distinct
 * and each part's own target, and every target-independent part equal
 * (options, column names and modes, row counts, sources, each column's
 * counts, extremes, frame, examples, value table and sketch, co-moments).
 * The moments' sums are not compared: a target whose classes are dropped or
 * whose cells are renumbered ends blocks where another does not, and block
 * sums round differently (docs/methods.md).
 */
#include "io/message.h"
#include "summary/column.h"
#include "summary/format.h"
#include "summary/summary.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>
#include <xxhash.h>

#include "io/pipeline.h"

#define TAG_TARGETS TAG('T', 'G', 'T', 'S')
#define TAG_PART TAG('P', 'A', 'R', 'T')

/* ---- the set --------------------------------------------------------------- */

void summary_set_free(summary_set *set)
{
    if (!set) return;
    for (size_t i = 0; i < set->n; i++) summary_free(set->parts[i]);
    free(set->parts);
    free(set);
}

summary_set *summary_set_of(summary *s)
{
    summary_set *set = malloc(sizeof *set);
    summary **parts = malloc(sizeof *parts);
    if (!set || !parts) { free(set); free(parts); return NULL; }
    parts[0] = s;
    set->n = 1;
    set->parts = parts;
    return set;
}

long summary_set_find(const summary_set *set, const char *name)
{
    for (size_t i = 0; i < set->n; i++) {
        const summary *s = set->parts[i];
        if (s && s->opt.target && strcmp(s->opt.target, name) == 0) return (long)i;
    }
    return -1;
}

summary *summary_set_take(summary_set *set, size_t i)
{
    summary *s = i < set->n ? set->parts[i] : NULL;
    if (i < set->n) set->parts[i] = NULL;
    return s;
}

const char *summary_set_names(const summary_set *set, char *buf, size_t len)
{
    size_t used = 0;
    if (len) buf[0] = '\0';
    for (size_t i = 0; i < set->n && used < len; i++) {
        const summary *s = set->parts[i];
        const char *name = s && s->opt.target ? s->opt.target : "(none)";
        int k = snprintf(buf + used, len - used, "%s%s", i ? ", " : "", name);
        if (k < 0) break;
        used += (size_t)k;
    }
    return buf;
}

int summary_copy_comoments(summary *into, const summary *from)
{
    if (into->ncomo != from->ncomo) return -1;
    memcpy(into->como_ref, from->como_ref, from->ncomo * sizeof *from->como_ref);
    memcpy(into->como_ref_set, from->como_ref_set, from->ncomo);
    comoment_free(into->como);
    into->como = NULL;
    if (!from->como) return 0;
    wire_writer w;
    wire_writer_init(&w);
    comoment_write(from->como, &w);
    if (!w.failed) {
        wire_reader r;
        wire_reader_init(&r, w.data, w.len);
        into->como = comoment_read(&r, 0, 1);
    }
    wire_writer_free(&w);
    return into->como ? 0 : -1;
}

/* ---- the file -------------------------------------------------------------- */

static void put_le(uint8_t *b, uint64_t v, int bytes)
{
    for (int i = 0; i < bytes; i++) b[i] = (uint8_t)(v >> (8 * i));
}

/* A section header at the file's position: tag, length (patched by the
 * caller when unknown). */
static int put_section_head(int fd, uint32_t tag, uint64_t len)
{
    uint8_t h[12];
    put_le(h, tag, 4);
    put_le(h + 4, len, 8);
    return summary_write_all(fd, h, sizeof h);
}

/* A set to write: seal_threads 0 when it is sealed, else the threads that
 * seal its summaries while they are written (summary_seal_write_at). */
typedef struct {
    const summary_set *set;
    unsigned seal_threads;
} set_job;

static int write_part(const set_job *job, size_t i, int fd, off_t base, off_t *end, int push)
{
    if (!job->seal_threads) return summary_write_at(job->set->parts[i], fd, base, end, push);
    return summary_seal_write_at(job->set->parts[i], fd, base, end, push, job->seal_threads);
}

static int write_one_part(const void *obj, int fd, int push)
{
    return write_part(obj, 0, fd, 0, NULL, push);
}

static int write_set(const void *obj, int fd, int push)
{
    const set_job *job = obj;
    const summary_set *set = job->set;
    uint8_t head[12];
    memcpy(head, SUMMARY_MAGIC, 8);
    put_le(head + 8, SUMMARY_SET_FORMAT_VERSION, 4);
    if (summary_write_all(fd, head, sizeof head) != 0) return -1;
    off_t pos = (off_t)sizeof head;
    wire_writer w;
    wire_writer_init(&w);
    wire_put_u32(&w, (uint32_t)set->n);
    for (size_t i = 0; i < set->n; i++)
        wire_put_str(&w, set->parts[i]->opt.target, strlen(set->parts[i]->opt.target));
    uint8_t sum[8];
    put_le(sum, XXH3_64bits(w.data, w.len), 8);
    int rc = w.failed || put_section_head(fd, TAG_TARGETS, w.len) != 0 ||
                     summary_write_all(fd, w.data, w.len) != 0 ||
                     summary_write_all(fd, sum, sizeof sum) != 0
                 ? -1
                 : 0;
    pos += (off_t)(12 + w.len + 8);
    wire_writer_free(&w);
    for (size_t i = 0; rc == 0 && i < set->n; i++) {
        off_t start = pos + 12, end;
        uint64_t h;
        uint8_t lenb[8];
        if (put_section_head(fd, TAG_PART, 0) != 0 ||
            write_part(job, i, fd, start, &end, push) != 0 ||
            summary_hash_region(fd, start, end, &h) != 0)
            return -1;
        put_le(sum, h, 8);
        put_le(lenb, (uint64_t)(end - start), 8);
        if (summary_write_all(fd, sum, sizeof sum) != 0 ||
            pwrite(fd, lenb, sizeof lenb, pos + 4) != (ssize_t)sizeof lenb)
            return -1;
        pos = end + 8;
    }
    if (rc != 0) return -1;
    uint8_t tr[20];
    put_le(tr, TAG_END, 4);
    put_le(tr + 4, 8, 8);
    uint64_t h;
    if (summary_write_all(fd, tr, 12) != 0 || summary_hash_region(fd, 0, pos + 12, &h) != 0)
        return -1;
    put_le(tr + 12, h, 8);
    return summary_write_all(fd, tr + 12, 8);
}

static summary_status set_write(const set_job *job, const char *path, char *err, size_t errlen)
{
    const summary_set *set = job->set;
    if (set->n == 1) return summary_write_through(path, write_one_part, job, err, errlen);
    for (size_t i = 0; i < set->n; i++)
        if (!set->parts[i] || !set->parts[i]->opt.target) {
            message_printf(err, errlen, "%s: a set of several summaries needs a target in each",
                           path);
            return SUMMARY_ERR_INCOMPATIBLE;
        }
    return summary_write_through(path, write_set, job, err, errlen);
}

summary_status summary_set_write(const summary_set *set, const char *path, char *err,
                                 size_t errlen)
{
    set_job job = {set, 0};
    return set_write(&job, path, err, errlen);
}

summary_status summary_set_seal_write(summary_set *set, const char *path, unsigned threads,
                                      char *err, size_t errlen)
{
    set_job job = {set, threads ? threads : pipeline_cpus()};
    summary_status st = set_write(&job, path, err, errlen);
    /* Refused before any byte (a set without targets): sealed all the same. */
    for (size_t i = 0; i < set->n; i++)
        if (set->parts[i] && !summary_sealed(set->parts[i]) && summary_seal(set->parts[i]) != 0 &&
            st == SUMMARY_OK) {
            snprintf(err, errlen, "out of memory");
            st = SUMMARY_ERR_MEMORY;
        }
    return st;
}

/* ---- decoding -------------------------------------------------------------- */

static summary_status damaged(char *err, size_t errlen, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));

static summary_status damaged(char *err, size_t errlen, const char *fmt, ...)
{
    char why[400];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(why, sizeof why, fmt, ap);
    va_end(ap);
    snprintf(err, errlen, "damaged summary (%s)", why);
    return SUMMARY_ERR_CORRUPT;
}

/* 1 when a and b encode to the same bytes under enc (piece: its argument),
 * 0 when not, -1 when out of memory. */
static int same_common(const summary *a, const summary *b, int piece, long col)
{
    wire_writer wa, wb;
    wire_writer_init(&wa);
    wire_writer_init(&wb);
    if (col >= 0) {
        column_write_common(&a->cols[col], &wa);
        column_write_common(&b->cols[col], &wb);
    } else {
        summary_encode_common(a, piece, &wa);
        summary_encode_common(b, piece, &wb);
    }
    int rc = wa.failed || wb.failed ? -1
             : wa.len == wb.len && (wa.len == 0 || memcmp(wa.data, wb.data, wa.len) == 0);
    wire_writer_free(&wa);
    wire_writer_free(&wb);
    return rc;
}

/* Part k against part 0: everything that does not depend on the target. */
static summary_status check_part(const summary *first, const summary *s, size_t k, char *err,
                                 size_t errlen)
{
    static const char *const what[] = {"options or column count", "sources", "row counts",
                                       "co-moments"};
    for (int piece = 0; piece < SUMMARY_COMMON_PIECES; piece++) {
        int same = same_common(first, s, piece, -1);
        if (same < 0) goto oom;
        if (!same)
            return damaged(err, errlen, "target %zu '%.80s': its %s differ from target 1's", k + 1,
                           s->opt.target, what[piece]);
        if (piece == SUMMARY_COMMON_TABLE) /* the columns, before the co-moments */
            for (size_t c = 0; c < s->ncols; c++) {
                int col_same = same_common(first, s, 0, (long)c);
                if (col_same < 0) goto oom;
                if (!col_same)
                    return damaged(err, errlen,
                                   "target %zu '%.80s': column %zu '%.80s' differs from target "
                                   "1's in what does not depend on the target",
                                   k + 1, s->opt.target, c + 1, s->cols[c].name);
            }
    }
    return SUMMARY_OK;
oom:
    snprintf(err, errlen, "out of memory while comparing the targets' summaries");
    return SUMMARY_ERR_MEMORY;
}

/* The frame of a version 4 file: its sections read in turn. */
typedef struct {
    const uint8_t *data;
    size_t len, pos;
} frame_reader;

/* The next section, which must carry `tag`: its payload (checked against
 * its checksum).  NULL with *why set when it is not there or damaged. */
static const uint8_t *next_section(frame_reader *f, uint32_t tag, size_t *plen, const char **why)
{
    wire_reader r;
    wire_reader_init(&r, f->data, f->len);
    r.pos = f->pos;
    uint32_t t = wire_get_u32(&r);
    uint64_t n = wire_get_u64(&r);
    size_t left = r.failed ? 0 : f->len - r.pos;
    if (r.failed || t != tag || left < 8 + 20 || n > left - 8 - 20) {
        *why = "missing or cut short";
        return NULL;
    }
    const uint8_t *payload = f->data + r.pos;
    r.pos += (size_t)n;
    if (XXH3_64bits(payload, (size_t)n) != wire_get_u64(&r)) {
        *why = "checksum mismatch";
        return NULL;
    }
    f->pos = r.pos;
    *plen = (size_t)n;
    return payload;
}

summary_status summary_set_decode(const uint8_t *data, size_t len, summary_set **out, char *err,
                                  size_t errlen)
{
    *out = NULL;
    if (len < 12 || memcmp(data, SUMMARY_MAGIC, 8) != 0 ||
        (data[8] | data[9] << 8 | data[10] << 16 | (uint32_t)data[11] << 24) !=
            SUMMARY_SET_FORMAT_VERSION) {
        summary *s;
        summary_status st = summary_decode(data, len, &s, err, errlen);
        if (st != SUMMARY_OK) return st;
        if (!(*out = summary_set_of(s))) {
            summary_free(s);
            snprintf(err, errlen, "out of memory");
            return SUMMARY_ERR_MEMORY;
        }
        return SUMMARY_OK;
    }
    /* The trailer: tag, length 8, checksum of everything before it. */
    wire_reader t;
    if (len < 12 + 20) return damaged(err, errlen, "%zu bytes: no end marker", len);
    wire_reader_init(&t, data + len - 20, 20);
    uint32_t ttag = wire_get_u32(&t);
    uint64_t tlen = wire_get_u64(&t), tsum = wire_get_u64(&t);
    if (ttag != TAG_END || tlen != 8) {
        snprintf(err, errlen, "truncated or damaged summary (no end marker)");
        return SUMMARY_ERR_CORRUPT;
    }
    if (XXH3_64bits(data, len - 8) != tsum) {
        snprintf(err, errlen, "damaged summary (file checksum mismatch)");
        return SUMMARY_ERR_CORRUPT;
    }
    frame_reader f = {data, len, 12};
    const char *why = "";
    size_t plen;
    const uint8_t *p = next_section(&f, TAG_TARGETS, &plen, &why);
    if (!p) return damaged(err, errlen, "section 1 TGTS: %s", why);
    wire_reader r;
    wire_reader_init(&r, p, plen);
    uint32_t n = wire_get_u32(&r);
    if (r.failed || n < 2 || n > SUMMARY_MAX_TARGETS || !wire_need(&r, (size_t)n * 5))
        return damaged(err, errlen, "section 1 TGTS: %u targets (2 to %u, each at least 5 bytes)",
                       n, SUMMARY_MAX_TARGETS);
    summary_set *set = calloc(1, sizeof *set);
    const char **names = calloc(n, sizeof *names);
    size_t *name_len = calloc(n, sizeof *name_len);
    summary_status st = SUMMARY_OK;
    if (!set || !names || !name_len || !(set->parts = calloc(n, sizeof *set->parts))) {
        snprintf(err, errlen, "out of memory while decoding the targets");
        st = SUMMARY_ERR_MEMORY;
        goto done;
    }
    set->n = n;
    for (uint32_t k = 0; k < n && st == SUMMARY_OK; k++) {
        names[k] = wire_get_str(&r, &name_len[k], MAX_NAME_BYTES);
        if (!names[k] || name_len[k] == 0 || memchr(names[k], '\0', name_len[k]))
            st = damaged(err, errlen, "section 1 TGTS: target %u: no name", k + 1);
        for (uint32_t i = 0; i < k && st == SUMMARY_OK; i++)
            if (name_len[i] == name_len[k] && memcmp(names[i], names[k], name_len[k]) == 0)
                st = damaged(err, errlen, "section 1 TGTS: target '%.*s' is listed twice",
                             (int)(name_len[k] < 80 ? name_len[k] : 80), names[k]);
    }
    if (st == SUMMARY_OK && r.pos != r.len)
        st = damaged(err, errlen, "section 1 TGTS: bytes after the names");
    for (uint32_t k = 0; k < n && st == SUMMARY_OK; k++) {
        p = next_section(&f, TAG_PART, &plen, &why);
        if (!p) {
            st = damaged(err, errlen, "section %u PART (target '%.*s'): %s", k + 2,
                         (int)(name_len[k] < 80 ? name_len[k] : 80), names[k], why);
            break;
        }
        char inner[400];
        /* A part that is itself a set is refused before it is read: read by
         * recursion, thousands of nested sets ran out of stack (decode
         * audit: a 380 KB file crashed every reader). */
        uint32_t part_version = plen >= 12 ? (p[8] | p[9] << 8 | p[10] << 16 |
                                              (uint32_t)p[11] << 24) : 0;
        if (part_version == SUMMARY_SET_FORMAT_VERSION && memcmp(p, SUMMARY_MAGIC, 8) == 0) {
            st = damaged(err, errlen, "target %u '%.*s': a summary of several targets inside one",
                         k + 1, (int)(name_len[k] < 80 ? name_len[k] : 80), names[k]);
            break;
        }
        st = summary_decode(p, plen, &set->parts[k], inner, sizeof inner);
        if (st == SUMMARY_ERR_TARGETS) st = SUMMARY_ERR_CORRUPT;
        if (st == SUMMARY_ERR_MEMORY) message_printf(err, errlen, "%s", inner);
        else if (st != SUMMARY_OK)
            damaged(err, errlen, "target %u '%.*s': %s", k + 1,
                    (int)(name_len[k] < 80 ? name_len[k] : 80), names[k], inner);
        if (st != SUMMARY_OK) break;
        const summary *s = set->parts[k];
        if (!s->opt.target || strlen(s->opt.target) != name_len[k] ||
            memcmp(s->opt.target, names[k], name_len[k]) != 0) {
            st = damaged(err, errlen, "target %u: the list names '%.*s', its summary '%.80s'",
                         k + 1, (int)(name_len[k] < 80 ? name_len[k] : 80), names[k],
                         s->opt.target ? s->opt.target : "(none)");
            break;
        }
        if (k > 0) st = check_part(set->parts[0], s, k, err, errlen);
    }
    if (st == SUMMARY_OK && f.pos != len - 20)
        st = damaged(err, errlen, "unexpected bytes before the end marker");
done:
    free(names);
    free(name_len);
    if (st != SUMMARY_OK) summary_set_free(set);
    else *out = set;
    return st;
}

summary_status summary_set_read(const char *path, summary_set **out, char *err, size_t errlen)
{
    *out = NULL;
    void *map;
    size_t len;
    summary_status rc = summary_map_file(path, &map, &len, err, errlen);
    if (rc != SUMMARY_OK) return rc;
    char inner[600];
    rc = summary_set_decode(map ? map : (const void *)"", len, out, inner, sizeof inner);
    if (map) munmap(map, len);
    if (rc != SUMMARY_OK)
        message_printf(err, errlen, "%s: %s", strcmp(path, "-") ? path : "standard input", inner);
    return rc;
}

summary_status summary_read_target(const char *path, const char *target, summary **out,
                                   char *err, size_t errlen)
{
    *out = NULL;
    summary_set *set;
    summary_status rc = summary_set_read(path, &set, err, errlen);
    if (rc != SUMMARY_OK) return rc;
    long i = target ? summary_set_find(set, target) : set->n == 1 ? 0 : -1;
    if (i < 0) {
        char names[512];
        summary_set_names(set, names, sizeof names);
        if (!target)
            message_printf(err, errlen,
                           "%s: a summary of %zu targets (%s): choose one with {read_target}", path,
                           set->n, names);
        else
            message_printf(err, errlen, "%s: no target '%s' (it holds %s)", path, target,
                           set->n == 1 && !set->parts[0]->opt.target ? "none" : names);
        summary_set_free(set);
        return SUMMARY_ERR_TARGETS;
    }
    *out = summary_set_take(set, (size_t)i);
    summary_set_free(set);
    return SUMMARY_OK;
}

/* ---- merge ------------------------------------------------------------------ */

summary_status summary_set_merge(summary_set *into, summary_set *from, char *err, size_t errlen)
{
    if (into->n == 1 && from->n == 1) return summary_merge(into->parts[0], from->parts[0], err, errlen);
    int same = into->n == from->n;
    for (size_t i = 0; same && i < into->n; i++) {
        const char *a = into->parts[i]->opt.target, *b = from->parts[i]->opt.target;
        same = a && b && strcmp(a, b) == 0;
    }
    if (!same) {
        char a[512], b[512];
        snprintf(err, errlen, "targets %s vs %s (the same targets in the same order are needed)",
                 summary_set_names(into, a, sizeof a), summary_set_names(from, b, sizeof b));
        return SUMMARY_ERR_INCOMPATIBLE;
    }
    /* Every part compatible before any is merged. */
    for (size_t i = 0; i < into->n; i++)
        if (!summary_compatible(into->parts[i], from->parts[i], err, errlen))
            return SUMMARY_ERR_INCOMPATIBLE;
    for (size_t i = 0; i < into->n; i++) {
        summary_status st = summary_merge(into->parts[i], from->parts[i], err, errlen);
        if (st != SUMMARY_OK) return st;
    }
    return SUMMARY_OK;
}
