/* reader: see reader.h. */
#include "io/reader.h"

#include <stdio.h>
#include <stdlib.h>

/* Bytes gathered before the delimiter is detected (the detection reads the
 * first 50 lines of them), unless the stream ends first. */
#define DETECT_BYTES (1u << 20)
#define PULL_BYTES (1u << 20)

_Static_assert(CHUNK_PADDING >= CSV_READ_AHEAD, "chunks must be readable past their end");

struct reader {
    reader_options o;     /* options */
    chunker *ck;          /* cuts the stream */
    csv_reader tok;       /* the tokenizer over the current chunk */
    csv_record fields;    /* the current record's fields */
    chunk ch;             /* the current chunk */
    int in_chunk;         /* ch is being tokenized */
    const char *name;     /* the stream's name */
    int at_file_start;    /* skip a BOM, detect the delimiter */
    size_t bom;           /* bytes of the byte-order mark at offset 0 */
    char delim;           /* the delimiter, 0 until known */
    uint64_t stop_at;     /* records from here on are someone else's (0: none) */
    uint64_t lines_before; /* lines in the chunks before the current one */
    uint64_t absorbed;    /* stream offset after the last record absorbed */
    int stopped;          /* reached stop_at */
    int ended;            /* reader_finish was called */
    char err[4352];       /* the last error */
};

void reader_options_defaults(reader_options *o)
{
    memset(o, 0, sizeof *o);
    o->chunk_bytes = 4u << 20;
    o->max_record_bytes = 64u << 20;
}

reader *reader_create(const reader_options *o)
{
    reader *r = calloc(1, sizeof *r);
    if (!r) return NULL;
    r->o = *o;
    r->ck = chunker_create(o->chunk_bytes, o->max_record_bytes);
    if (!r->ck) { free(r); return NULL; }
    return r;
}

void reader_free(reader *r)
{
    if (!r) return;
    chunker_free(r->ck);
    csv_record_free(&r->fields);
    free(r);
}

void reader_start(reader *r, const char *name, int at_file_start, char delim, uint64_t stop_at)
{
    chunker_start(r->ck, name);
    r->name = name;
    r->at_file_start = at_file_start;
    r->bom = 0;
    r->delim = delim ? delim : r->o.delim;
    r->stop_at = stop_at;
    r->lines_before = 0;
    r->absorbed = 0;
    r->in_chunk = r->stopped = r->ended = 0;
    r->err[0] = '\0';
    if (r->delim && !at_file_start) chunker_set_dialect(r->ck, r->delim, 0);
}

void reader_set_stop(reader *r, uint64_t stop_at) { r->stop_at = stop_at; }

size_t reader_feed(reader *r, const void *data, size_t len)
{
    if (!len) return 0;
    size_t n = chunker_feed(r->ck, data, len, r->err, sizeof r->err);
    return n ? n : (size_t)-1;
}

int reader_pull(reader *r, source *src)
{
    size_t room;
    char *p = chunker_space(r->ck, &room, r->err, sizeof r->err);
    if (!p) return -1;
    ssize_t n = source_read(src, p, room < PULL_BYTES ? room : PULL_BYTES);
    if (n < 0) { snprintf(r->err, sizeof r->err, "%s", source_error(src)); return -1; }
    if (n == 0) { reader_finish(r); return 0; }
    chunker_commit(r->ck, (size_t)n);
    return 1;
}

void reader_finish(reader *r)
{
    r->ended = 1;
    chunker_finish(r->ck);
}

const char *reader_error(const reader *r) { return r->err; }
char reader_delim(const reader *r) { return r->delim; }
uint64_t reader_absorbed(const reader *r) { return r->absorbed; }

/* At the start of a file: the byte-order mark and the delimiter, once
 * enough bytes are in.  Returns 0 when they are known, 1 to wait. */
static int dialect(reader *r)
{
    size_t len;
    const char *p = chunker_pending(r->ck, &len);
    if (!r->ended && len < (r->delim ? 3 : DETECT_BYTES)) return 1;
    size_t bom = csv_bom_length(p, len);
    if (!r->delim) r->delim = csv_detect_delimiter(p + bom, len - bom);
    chunker_set_dialect(r->ck, r->delim, bom);
    r->bom = bom;
    r->at_file_start = 0;
    return 0;
}

/* The first record start at or after stop_at among the chunk bytes
 * [from, to), which hold only blank lines: `from` and each position after a
 * '\n'; the offset of `to` when none is.  A shard's range ends at the same
 * record start (blank lines included) as the next shard's begins
 * (chunk_find_record_start), so no byte is counted twice. */
static uint64_t first_start(const reader *r, const char *from, const char *to)
{
    uint64_t base = r->ch.offset; /* the offset of ch.data */
    for (const char *p = from; p < to; p++)
        if ((p == from || p[-1] == '\n') && base + (uint64_t)(p - r->ch.data) >= r->stop_at)
            return base + (uint64_t)(p - r->ch.data);
    return base + (uint64_t)(to - r->ch.data);
}

reader_status reader_next(reader *r, reader_record *rec)
{
    if (r->stopped) return READER_END;
    if (!r->in_chunk) {
        if (r->at_file_start && dialect(r)) return READER_WANT;
        int got = chunker_next(r->ck, &r->ch, r->err, sizeof r->err);
        if (got < 0) return READER_ERROR;
        if (got == 0) return chunker_done(r->ck) ? READER_END : READER_WANT;
        size_t skip = r->ch.offset == 0 ? r->bom : 0;
        if (r->o.raw) csv_reader_init(&r->tok, r->ch.data + skip, r->ch.len - skip, r->delim);
        else csv_reader_init_padded(&r->tok, r->ch.data + skip, r->ch.len - skip, r->delim);
        r->in_chunk = 1;
    }
    csv_status cs;
    char *from = r->tok.pos; /* a record start: the previous record ended here */
    if (r->o.raw) cs = csv_next_raw(&r->tok, &r->fields, &rec->eol, &rec->eol_len);
    else cs = csv_next(&r->tok, &r->fields);
    if (cs == CSV_END) {
        r->in_chunk = 0;
        r->lines_before += r->tok.lines;
        r->absorbed = r->ch.offset + r->ch.len;
        if (r->stop_at) { /* blank lines that reach into the next shard's range */
            uint64_t at = first_start(r, from, r->tok.end);
            if (at < r->absorbed) { r->absorbed = at; r->stopped = 1; }
        }
        return READER_CHUNK_END;
    }
    rec->offset = r->ch.offset + (uint64_t)(r->tok.record_start - r->ch.data);
    rec->line = r->lines_before + r->tok.record_line + 1;
    if (r->stop_at && rec->offset >= r->stop_at) {
        r->stopped = 1;
        r->absorbed = first_start(r, from, r->tok.record_start);
        return READER_END;
    }
    if (cs == CSV_UNTERMINATED) {
        snprintf(r->err, sizeof r->err,
                 "%s: line %llu: unterminated quote (a quoted field runs to the end of the input)",
                 r->name, (unsigned long long)rec->line);
        return READER_ERROR;
    }
    if (cs == CSV_NOMEM) {
        snprintf(r->err, sizeof r->err, "%s: line %llu: out of memory", r->name,
                 (unsigned long long)rec->line);
        return READER_ERROR;
    }
    if ((size_t)(r->tok.pos - r->tok.record_start) > r->o.max_record_bytes) {
        /* The chunker bounds records that span chunks; this bounds every one,
         * so the limit does not depend on where chunks end. */
        snprintf(r->err, sizeof r->err,
                 "%s: line %llu: record at byte %llu is longer than the %zu-byte limit "
                 "(raise --max-record)",
                 r->name, (unsigned long long)rec->line, (unsigned long long)rec->offset,
                 r->o.max_record_bytes);
        return READER_ERROR;
    }
    rec->end = r->ch.offset + (uint64_t)(r->tok.pos - r->ch.data);
    rec->fields = r->fields.fields;
    rec->nfields = r->fields.nfields;
    rec->text = r->tok.record_start;
    return READER_RECORD;
}

size_t reader_bom_length(const reader *r) { return r->bom; }

size_t reader_column_name(const csv_field *f, size_t i, int header, int raw, char *out)
{
    size_t n = header ? (raw ? csv_unquote(f->ptr, f->len, out) : f->len) : 0;
    if (header && !raw) memcpy(out, f->ptr, n);
    if (n) return n;
    return (size_t)snprintf(out, 24, "col%zu", i + 1);
}

void reader_missing_init(reader_missing *m, const char *const *spellings, uint32_t n)
{
    memset(m, 0, sizeof *m);
    m->n = n < READER_MAX_MISSING ? n : READER_MAX_MISSING;
    for (uint32_t i = 0; i < m->n; i++) {
        size_t l = strlen(spellings[i]);
        m->spelling[i] = spellings[i];
        m->len[i] = l;
        if (l && l < 64) m->cand[(unsigned char)spellings[i][0]] |= 1ull << l;
    }
    for (int b = 0; b < 256; b++) m->cand[b] |= 1; /* the empty cell */
}
