/* summary file format: encoding and writing one summary's file
 * (docs/summary-format.md; format.c decodes and reads).  The layout is in
 * format.c's opening comment. */
#include "io/message.h"
#include "summary/column.h"
#include "summary/summary.h"

#include <errno.h>
#include <stdio.h>
#include <string.h>
#include <sys/mman.h>
#include <unistd.h>
#include <xxhash.h>

#include "summary/filehash.h"
#include "summary/format.h"
#include "summary/tempfile.h"

/* ---- encoding ----------------------------------------------------------- */


/* The scan options a summary was made with, then its column count; the
 * target's name among them in one summary's schema (with_target), not in
 * what the summaries of one scan share (SUMMARY_COMMON_OPTIONS). */
static void put_options(const summary *s, wire_writer *w, int with_target)
{
    wire_put_u32(w, s->opt.max_levels);
    wire_put_u32(w, s->opt.label_bytes);
    wire_put_u32(w, s->opt.bucket_budget);
    wire_put_u32(w, s->opt.n_missing);
    for (uint32_t i = 0; i < s->opt.n_missing; i++)
        wire_put_str(w, s->opt.missing[i], strlen(s->opt.missing[i]));
    if (summary_file_version(s) >= 5) wire_put_u8(w, (uint8_t)s->opt.missing_any_case);
    if (with_target) {
        const char *t = s->opt.target ? s->opt.target : "";
        wire_put_str(w, t, strlen(t));
    }
    wire_put_u8(w, (uint8_t)s->opt.task);
    wire_put_u32(w, s->opt.max_classes);
    wire_put_u64(w, s->ncols);
}

static void encode_schema(const summary *s, wire_writer *w)
{
    put_options(s, w, 1);
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
    if (summary_file_version(s) >= 3) tcells_write(&s->tcells, w);
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
        if (summary_file_version(s) >= 6) {
            wire_put_u8(w, src->shard_rule);
            wire_put_u8(w, src->shard_modes);
            wire_put_u8(w, src->shard_map);
            wire_put_u32(w, src->shard_index);
            wire_put_u32(w, src->shard_count);
            wire_put_u64(w, src->file_id);
            wire_put_u64(w, src->read_bytes);
        }
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
    if (summary_file_version(s) >= 2) wire_put_u64(w, s->repeated_headers);
}

uint32_t summary_file_version(const summary *s)
{
    if (s->copy_prints) return 7;
    for (size_t i = 0; i < s->nsources; i++)
        if (s->sources[i].shard_rule) return 6;
    if (s->opt.missing_any_case) return 5;
    return s->target >= 0 ? 3 : s->repeated_headers ? 2 : 1;
}

/* The columns section; with a sealer, each column once its seal has run
 * (summary_seal_write_at). */
static void encode_columns(const summary *s, wire_writer *w, summary_sealer *g)
{
    uint32_t version = summary_file_version(s);
    for (size_t i = 0; i < s->ncols; i++) {
        if (g) summary_sealer_wait(g, i);
        column_write(&s->cols[i], s->nclasses, version, w);
    }
}


/* What a summary holds apart from its target (summary/format.h). */
void summary_encode_common(const summary *s, int piece, wire_writer *w)
{
    switch (piece) {
    case SUMMARY_COMMON_OPTIONS: put_options(s, w, 0); break;
    case SUMMARY_COMMON_SOURCES: encode_sources(s, w); break;
    case SUMMARY_COMMON_TABLE: encode_table(s, w); break;
    case SUMMARY_COMMON_COMOMENTS: encode_comoments(s, w); break;
    default: break;
    }
}

/* ---- files -------------------------------------------------------------- */

/* Streaming write: each section's payload is drained to the file as it is
 * encoded, hashed on the way; its length is patched in afterwards, and the
 * trailer checksum is computed over the finished bytes. */
typedef struct {
    int fd;               /* destination */
    XXH3_state_t *hash;   /* payload checksum of the current section */
    uint64_t bytes;       /* payload bytes of the current section */
    off_t payload;        /* file offset of the current section's payload */
    int push;             /* start the disk writes as it goes (tempfile_push) */
    off_t pushed;         /* bytes before this offset were pushed */
} section_out;

int summary_write_all(int fd, const void *data, size_t len)
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
    filehash_update(o->hash, data, len);
    o->bytes += len;
    if (summary_write_all(o->fd, data, len) != 0) return -1;
    if (o->push) tempfile_push(o->fd, &o->pushed, o->payload + (off_t)o->bytes);
    return 0;
}

static int put_le64(uint8_t *b, uint64_t v)
{
    for (int i = 0; i < 8; i++) b[i] = (uint8_t)(v >> (8 * i));
    return 8;
}

int summary_hash_region(int fd, off_t from, off_t to, uint64_t *hash)
{
    long page = sysconf(_SC_PAGESIZE);
    off_t start = page > 0 ? from - from % page : 0;
    size_t len = (size_t)(to - start);
    void *map = mmap(NULL, len ? len : 1, PROT_READ, MAP_SHARED, fd, start);
    if (map == MAP_FAILED) return -1;
    *hash = filehash((const uint8_t *)map + (from - start), (size_t)(to - from));
    munmap(map, len ? len : 1);
    return 0;
}

/* summary_write_at, the columns section through sealer g when not NULL. */
static int write_sections(const summary *s, int fd, off_t base, off_t *end, int push,
                          summary_sealer *g)
{
    uint8_t head[12];
    memcpy(head, SUMMARY_MAGIC, sizeof SUMMARY_MAGIC);
    uint32_t version = summary_file_version(s);
    for (int i = 0; i < 4; i++) head[8 + i] = (uint8_t)(version >> (8 * i));
    if (summary_write_all(fd, head, sizeof head) != 0) return -1;
    void (*enc[])(const summary *, wire_writer *) = {encode_schema, encode_sources, encode_table,
                                                      encode_target, NULL, encode_comoments};
    const uint32_t tags[] = {TAG_SCHEMA,  TAG_SOURCES, TAG_TABLE,
                             TAG_TARGET, TAG_COLUMNS, TAG_COMOMENTS};
    section_out so = {fd, XXH3_createState(), 0, 0, push, base};
    if (!so.hash) return -1;
    int rc = 0;
    off_t pos = base + (off_t)sizeof head;
    for (int k = 0; k < 6 && rc == 0; k++) {
        uint8_t sh[12];
        for (int i = 0; i < 4; i++) sh[i] = (uint8_t)(tags[k] >> (8 * i));
        put_le64(sh + 4, 0); /* length, patched below */
        if (summary_write_all(fd, sh, sizeof sh) != 0) { rc = -1; break; }
        XXH3_64bits_reset(so.hash);
        so.bytes = 0;
        so.payload = pos + (off_t)sizeof sh;
        wire_writer w;
        wire_writer_init(&w);
        w.drain = section_drain;
        w.drain_ctx = &so;
        if (tags[k] == TAG_COLUMNS) encode_columns(s, &w, g);
        else enc[k](s, &w);
        wire_writer_drain(&w);
        int failed = w.failed;
        wire_writer_free(&w);
        uint8_t sum[8];
        put_le64(sum, XXH3_64bits_digest(so.hash));
        uint8_t lenb[8];
        put_le64(lenb, so.bytes);
        if (failed || summary_write_all(fd, sum, sizeof sum) != 0 ||
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
    if (summary_write_all(fd, tr, 12) != 0) return -1;
    uint64_t h;
    if (summary_hash_region(fd, base, pos + 12, &h) != 0) return -1;
    put_le64(tr + 12, h);
    if (end) *end = pos + 20;
    return summary_write_all(fd, tr + 12, 8);
}

int summary_write_at(const summary *s, int fd, off_t base, off_t *end, int push)
{
    return write_sections(s, fd, base, end, push, NULL);
}

/* The writer waits for each column's seal before it encodes it and seals
 * columns itself while it waits; a column's seal touches nothing but its
 * own tables, so the bytes are those of summary_seal then summary_write_at,
 * and the sealing and the writing of a wide summary overlap. */
int summary_seal_write_at(summary *s, int fd, off_t base, off_t *end, int push, unsigned threads)
{
    summary_sealer *g = summary_sealer_start(s, threads);
    if (!g) {
        errno = ENOMEM;
        return -1;
    }
    int rc = write_sections(s, fd, base, end, push, g);
    if (summary_sealer_finish(g) != 0 && rc == 0) {
        errno = ENOMEM;
        rc = -1;
    }
    return rc;
}

summary_status summary_write_through(const char *path,
                                     int (*write)(const void *obj, int fd, int push),
                                     const void *obj, char *err, size_t errlen)
{
    tempfile t; /* written in full, then made the target's (src/summary/tempfile.h) */
    /* "-": standard output, through a scratch file (nothing written on failure). */
    int to_stdout = !strcmp(path, "-");
    if ((to_stdout ? tempfile_open_fd(&t, STDOUT_FILENO, "standard output", TEMPFILE_SEEKABLE,
                                      err, errlen)
                   : tempfile_open(&t, path, TEMPFILE_SEEKABLE, err, errlen)) != 0)
        return errno == ENOMEM ? SUMMARY_ERR_MEMORY : SUMMARY_ERR_IO;
    if (to_stdout) path = "standard output";
    if (write(obj, t.fd, tempfile_pushes(&t)) != 0) {
        int saved = errno;
        char where[600];
        tempfile_where(&t, where, sizeof where);
        tempfile_discard(&t);
        if (saved == ENOMEM) { /* memory, not the disk: the exit code says which */
            message_printf(err, errlen, "%s: out of memory while the summary was written", path);
            return SUMMARY_ERR_MEMORY;
        }
        snprintf(err, errlen, "%s%s: cannot write: %s", path, where, strerror(saved ? saved : EIO));
        return SUMMARY_ERR_IO;
    }
    if (tempfile_commit(&t, err, errlen) == 0) return SUMMARY_OK;
    return errno == ENOMEM ? SUMMARY_ERR_MEMORY : SUMMARY_ERR_IO;
}

static int write_one(const void *s, int fd, int push)
{
    return summary_write_at(s, fd, 0, NULL, push);
}

summary_status summary_write(const summary *s, const char *path, char *err, size_t errlen)
{
    return summary_write_through(path, write_one, s, err, errlen);
}
