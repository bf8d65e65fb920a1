/* reader: see reader.h. */
#include "io/reader.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>

#include "io/message.h"

/* Bytes gathered before the delimiter is detected (the detection reads the
 * first 50 lines of them), unless the stream ends first. */
#define DETECT_BYTES (1u << 20)
/* Bytes at a file's start that the text check reads (reader_not_text). */
#define TEXT_SAMPLE_BYTES (64u << 10)
/* Share of control bytes in the sample above which it is not text. */
#define TEXT_MAX_CONTROL_SHARE 0.01

_Static_assert(CHUNK_PADDING >= CSV_READ_AHEAD, "chunks must be readable past their end");

struct reader {
    reader_options o;     /* options */
    chunker *ck;          /* cuts the stream */
    reader_cursor cur;    /* the records of the current chunk */
    reader_chunk ch;      /* the current chunk */
    int in_chunk;         /* ch is being tokenized */
    const char *name;     /* the stream's name */
    int nomem;            /* the error was a failed allocation */
    int at_file_start;    /* skip a BOM, detect the delimiter */
    size_t bom;           /* bytes of the byte-order mark at offset 0 */
    char delim;           /* the delimiter, 0 until known */
    const char *not_text; /* why the file's first bytes are not text, or NULL */
    uint64_t stop_at;     /* records from here on are someone else's (0: none) */
    uint64_t lines_before; /* lines in the chunks before the current one */
    uint64_t absorbed;    /* stream offset after the last record absorbed */
    int stopped;          /* reached stop_at */
    int ended;            /* reader_finish was called */
    int fault_pending;    /* the source failed (message in err): the complete records read
                             before the fault are handed out first, then the fault */
    source *src;          /* the source pulled from last (for its member starts) */
    uint64_t *starts;     /* member and frame starts not yet handed out with a chunk */
    size_t starts_at;     /* starts[0 .. starts_at) went out with the last chunk */
    size_t nstarts, starts_cap;
    char err[4352];       /* the last error */
};

void reader_options_defaults(reader_options *o)
{
    memset(o, 0, sizeof *o);
    o->chunk_bytes = 256u << 10;
    o->max_record_bytes = 64u << 20;
}

reader *reader_create(const reader_options *o)
{
    reader *r = calloc(1, sizeof *r);
    if (!r) return NULL;
    r->o = *o;
    r->ck = chunker_create(o->chunk_bytes, o->max_record_bytes);
    if (!r->ck) { free(r); return NULL; }
    reader_cursor_init(&r->cur, &r->o);
    return r;
}

void reader_free(reader *r)
{
    if (!r) return;
    chunker_free(r->ck);
    reader_cursor_free(&r->cur);
    free(r->starts);
    free(r);
}

void reader_start(reader *r, const char *name, int at_file_start, char delim, uint64_t stop_at)
{
    chunker_start(r->ck, name);
    r->name = name;
    r->at_file_start = at_file_start;
    r->bom = 0;
    r->not_text = NULL;
    r->delim = delim ? delim : r->o.delim;
    r->stop_at = stop_at;
    r->lines_before = 0;
    r->absorbed = 0;
    r->in_chunk = r->stopped = r->ended = r->fault_pending = 0;
    r->nstarts = r->starts_at = 0;
    r->err[0] = '\0';
    if (r->delim && !at_file_start) chunker_set_dialect(r->ck, r->delim, 0);
}

void reader_rebase(reader *r, uint64_t at)
{
    chunker_rebase(r->ck, at);
    r->absorbed = at;
}

void reader_set_stop(reader *r, uint64_t stop_at)
{
    r->stop_at = stop_at;
    r->cur.stop_at = stop_at;
}

size_t reader_feed(reader *r, const void *data, size_t len)
{
    if (!len) return 0;
    size_t n = chunker_feed(r->ck, data, len, r->err, sizeof r->err);
    return n ? n : (size_t)-1;
}

int reader_pull(reader *r, source *src)
{
    if (r->fault_pending) return -1;
    size_t room;
    errno = 0;
    char *p = chunker_space(r->ck, &room, r->err, sizeof r->err);
    if (!p) { r->nomem = errno == ENOMEM; return -1; }
    /* Up to the next mark (at most 1 MiB away): a chunk cut there leaves
     * only the start of a record behind, so the chunk's buffer can be
     * traded, not copied. */
    size_t want = chunker_to_mark(r->ck);
    if (want > room) want = room;
    ssize_t n = source_read(src, p, want);
    if (n < 0) {
        r->nomem = errno == ENOMEM;
        message_printf(r->err, sizeof r->err, "%s", source_error(src));
        if (r->nomem) return -1;
        /* A damaged stream: what came before the damage is data, whatever
         * the read sizes, so its complete records go out first (an error in
         * them is the first error), then the fault (reader_next_chunk). */
        r->fault_pending = 1;
        chunker_flush(r->ck);
        return 1;
    }
    if (n == 0) { reader_finish(r); return 0; }
    chunker_commit(r->ck, (size_t)n);
    /* The starts among the bytes just read (and any decoded ahead). */
    for (;;) {
        if (r->nstarts == r->starts_cap) {
            size_t cap = r->starts_cap ? 2 * r->starts_cap : 16;
            uint64_t *p = realloc(r->starts, cap * sizeof *p);
            if (!p) { snprintf(r->err, sizeof r->err, "out of memory"); return -1; }
            r->starts = p;
            r->starts_cap = cap;
        }
        size_t got = source_take_starts(src, r->starts + r->nstarts, r->starts_cap - r->nstarts);
        r->nstarts += got;
        if (r->nstarts < r->starts_cap) break;
    }
    return 1;
}

void reader_finish(reader *r)
{
    r->ended = 1;
    chunker_finish(r->ck);
}

const char *reader_error(const reader *r) { return r->err; }
int reader_out_of_memory(const reader *r) { return r->nomem; }
char reader_delim(const reader *r) { return r->delim; }
uint64_t reader_absorbed(const reader *r) { return r->absorbed; }

/* A control byte that text does not hold: C0 but tab, LF, CR, form feed and
 * ESC (colour codes in logs), and DEL.  NUL is judged on its own. */
static int stray_control(unsigned char c)
{
    return (c < 0x20 && c != '\t' && c != '\n' && c != '\r' && c != '\f' && c != 0x1b) ||
           c == 0x7f;
}

/* Why the first bytes of a file are not text, or NULL.  Cheap: the first
 * 64 KiB (fixed, so the verdict never depends on chunk or read sizes) and
 * three rules that CSV never breaks: no NUL byte (binary data, UTF-16), a
 * header line without stray control bytes, and at most 1% of them in the
 * sample (random or compressed bytes hold about 10%).  Bytes above 0x7f are
 * not judged: Latin-1 and other 8-bit text are text. */
static const char *text_verdict(const char *p, size_t len)
{
    if (len > TEXT_SAMPLE_BYTES) len = TEXT_SAMPLE_BYTES;
    if (memchr(p, 0, len)) return "NUL bytes";
    const char *eol = memchr(p, '\n', len);
    size_t head = eol ? (size_t)(eol - p) : len, controls = 0;
    for (size_t i = 0; i < len; i++) {
        if (!stray_control((unsigned char)p[i])) continue;
        if (i < head) return "control characters in the header";
        controls++;
    }
    if ((double)controls > TEXT_MAX_CONTROL_SHARE * (double)len) return "control characters";
    return NULL;
}

/* At the start of a file: the byte-order mark, the delimiter and the text
 * check, once enough bytes are in.  Returns 0 when they are known, 1 to
 * wait. */
static int dialect(reader *r)
{
    size_t len;
    const char *p = chunker_pending(r->ck, &len);
    if (!r->ended && !r->fault_pending && len < (r->delim ? TEXT_SAMPLE_BYTES : DETECT_BYTES))
        return 1;
    size_t bom = csv_bom_length(p, len);
    r->not_text = text_verdict(p + bom, len - bom);
    if (!r->delim) r->delim = csv_detect_delimiter(p + bom, len - bom);
    chunker_set_dialect(r->ck, r->delim, bom);
    r->bom = bom;
    r->at_file_start = 0;
    return 0;
}

reader_status reader_next_chunk(reader *r, reader_chunk *out)
{
    if (r->at_file_start && dialect(r)) return READER_WANT;
    chunk ch;
    int got = chunker_next(r->ck, &ch, r->err, sizeof r->err);
    if (got < 0) return READER_ERROR;
    if (got == 0 && r->fault_pending) return READER_ERROR;
    if (got == 0) return chunker_done(r->ck) ? READER_END : READER_WANT;
    out->data = ch.data;
    out->len = ch.len;
    out->offset = ch.offset;
    out->skip = ch.offset == 0 ? r->bom : 0;
    out->delim = r->delim;
    /* The starts handed out with the previous chunk are done; this chunk's
     * are those before its end. */
    if (r->starts_at) {
        memmove(r->starts, r->starts + r->starts_at,
                (r->nstarts - r->starts_at) * sizeof *r->starts);
        r->nstarts -= r->starts_at;
    }
    size_t from = 0;
    while (from < r->nstarts && r->starts[from] < ch.offset) from++;
    size_t to = from;
    while (to < r->nstarts && r->starts[to] < ch.offset + ch.len) to++;
    out->starts = r->nstarts ? r->starts + from : NULL;
    out->nstarts = to - from;
    r->starts_at = to;
    return READER_CHUNK;
}

int reader_trade_chunk(reader *r, char **buf, size_t *size)
{
    errno = 0;
    if (chunker_trade(r->ck, buf, size, r->err, sizeof r->err) == 0) return 0;
    r->nomem = 1;
    return -1;
}

reader_status reader_next(reader *r, reader_record *rec)
{
    if (r->stopped) return READER_END;
    if (!r->in_chunk) {
        reader_status st = reader_next_chunk(r, &r->ch);
        if (st == READER_ERROR)
            reader_too_long_message(r, r->lines_before, r->err, sizeof r->err);
        if (st != READER_CHUNK) return st;
        reader_cursor_start(&r->cur, &r->ch, r->stop_at, 0);
        r->in_chunk = 1;
    }
    reader_status st = reader_cursor_next(&r->cur, rec);
    switch (st) {
    case READER_RECORD: rec->line += r->lines_before; return st;
    case READER_CHUNK_END:
        r->in_chunk = 0;
        r->lines_before += r->cur.lines;
        r->absorbed = r->cur.absorbed;
        r->stopped = r->cur.stopped;
        return st;
    case READER_END:
        r->stopped = 1;
        r->absorbed = r->cur.absorbed;
        return st;
    default:
        reader_cursor_message(&r->cur, r->name, r->lines_before, r->err, sizeof r->err);
        return READER_ERROR;
    }
}

/* ---- the cursor ---------------------------------------------------------- */

void reader_cursor_init(reader_cursor *c, const reader_options *o)
{
    memset(c, 0, sizeof *c);
    c->o = o;
}

void reader_cursor_free(reader_cursor *c) { csv_record_free(&c->fields); }

void reader_cursor_start(reader_cursor *c, const reader_chunk *ch, uint64_t stop_at,
                         int exempt_first)
{
    c->ch = *ch;
    c->stop_at = stop_at;
    c->exempt_first = exempt_first;
    c->seen = 0;
    c->skip = NULL;
    c->nskip = c->skip_at = c->skipped = 0;
    c->lines = 0;
    c->absorbed = ch->offset;
    c->stopped = 0;
    c->fault = READER_FAULT_NONE;
    char *p = ch->data + ch->skip;
    size_t n = ch->len - ch->skip;
    if (c->o->raw) csv_reader_init(&c->tok, p, n, ch->delim);
    else csv_reader_init_padded(&c->tok, p, n, ch->delim);
}

/* The first record start at or after stop_at among the chunk bytes
 * [from, to), which hold only blank lines: `from` and each position after a
 * '\n'; the offset of `to` when none is.  A shard's range ends at the same
 * record start (blank lines included) as the next shard's begins
 * (chunk_find_record_start), so no byte is counted twice. */
static uint64_t first_start(const reader_cursor *c, const char *from, const char *to)
{
    uint64_t base = c->ch.offset; /* the offset of ch.data */
    for (const char *p = from; p < to; p++)
        if ((p == from || p[-1] == '\n') && base + (uint64_t)(p - c->ch.data) >= c->stop_at)
            return base + (uint64_t)(p - c->ch.data);
    return base + (uint64_t)(to - c->ch.data);
}

static reader_status fault(reader_cursor *c, reader_fault f, const reader_record *rec)
{
    c->fault = f;
    c->fault_line = rec->line;
    c->fault_offset = rec->offset;
    return READER_ERROR;
}

reader_status reader_cursor_next(reader_cursor *c, reader_record *rec)
{
    csv_status cs;
    char *from = c->tok.pos; /* a record start: the previous record ended here */
    if (c->o->raw) cs = csv_next_raw(&c->tok, &c->fields, &rec->eol, &rec->eol_len);
    else cs = csv_next(&c->tok, &c->fields);
    if (cs == CSV_END) {
        c->lines = c->tok.lines;
        c->absorbed = c->ch.offset + c->ch.len;
        if (c->stop_at) { /* blank lines that reach into the next shard's range */
            uint64_t at = first_start(c, from, c->tok.end);
            if (at < c->absorbed) { c->absorbed = at; c->stopped = 1; }
        }
        return READER_CHUNK_END;
    }
    rec->offset = c->ch.offset + (uint64_t)(c->tok.record_start - c->ch.data);
    rec->line = c->tok.record_line + 1;
    int first = c->seen++ == 0;
    if (c->stop_at && rec->offset >= c->stop_at && !(first && c->exempt_first)) {
        c->stopped = 1;
        c->lines = c->tok.record_line;
        c->absorbed = first_start(c, from, c->tok.record_start);
        return READER_END;
    }
    if (cs == CSV_UNTERMINATED) return fault(c, READER_FAULT_UNTERMINATED, rec);
    if (cs == CSV_NOMEM) return fault(c, READER_FAULT_NOMEM, rec);
    if ((size_t)(c->tok.pos - c->tok.record_start) > c->o->max_record_bytes) {
        /* The chunker bounds records that span chunks; this bounds every one,
         * so the limit does not depend on where chunks end. */
        return fault(c, READER_FAULT_TOO_LONG, rec);
    }
    rec->end = c->ch.offset + (uint64_t)(c->tok.pos - c->ch.data);
    rec->fields = c->fields.fields;
    rec->nfields = c->fields.nfields;
    rec->text = c->tok.record_start;
    return READER_RECORD;
}

void reader_cursor_skip(reader_cursor *c, const uint64_t *skip, size_t n)
{
    c->skip = skip;
    c->nskip = n;
    c->skip_at = 0;
}

/* Where reader_cursor_rows pauses: the stop offset, unless the next record
 * is the chunk's exempt first one, or the next offset to skip, whichever
 * comes first; as an offset from the chunk's data (SIZE_MAX: none). */
static size_t rows_stop(reader_cursor *c)
{
    uint64_t at = c->ch.offset + (uint64_t)(c->tok.pos - c->ch.data), stop = UINT64_MAX;
    while (c->skip_at < c->nskip && c->skip[c->skip_at] < at) c->skip_at++;
    if (c->skip_at < c->nskip) stop = c->skip[c->skip_at];
    if (c->stop_at && c->stop_at < stop && !(c->exempt_first && !c->seen)) stop = c->stop_at;
    if (stop == UINT64_MAX) return SIZE_MAX;
    return stop > c->ch.offset ? (size_t)(stop - c->ch.offset) : 0;
}

reader_status reader_cursor_rows(reader_cursor *c, csv_rows *out)
{
    csv_reader *t = &c->tok;
    out->max_record_bytes = c->o->max_record_bytes;
    for (;;) {
        size_t max_rows = out->max_rows, before = out->rows;
        if (before == max_rows) return READER_RECORD;
        /* The exempt first record alone, so that the stop applies after it. */
        if (c->exempt_first && !c->seen) out->max_rows = before + 1;
        out->stop = rows_stop(c);
        csv_status cs = csv_next_rows(t, out);
        out->max_rows = max_rows;
        c->seen += (int)(out->rows - before) + (cs == CSV_UNTERMINATED || cs == CSV_TOO_LONG);
        uint64_t at = c->ch.offset + (uint64_t)(t->record_start - c->ch.data);
        switch (cs) {
        case CSV_RECORD: continue; /* full (checked above), or after the exempt record */
        case CSV_END:
            c->lines = t->lines;
            c->absorbed = c->ch.offset + c->ch.len;
            if (c->stop_at) { /* blank lines that reach into the next shard's range */
                uint64_t to = first_start(c, t->record_end, t->end);
                if (to < c->absorbed) { c->absorbed = to; c->stopped = 1; }
            }
            return READER_CHUNK_END;
        case CSV_STOP:
            if (c->stop_at && at >= c->stop_at && !(c->exempt_first && !c->seen)) {
                c->stopped = 1;
                c->lines = t->record_line;
                c->absorbed = first_start(c, t->record_end, t->record_start);
                return READER_END;
            }
            if (c->skip_at < c->nskip && at == c->skip[c->skip_at]) {
                /* Read it into the next row, which the next record takes. */
                out->max_rows = out->rows + 1;
                out->stop = SIZE_MAX;
                cs = csv_next_rows(t, out);
                out->max_rows = max_rows;
                c->seen++;
                if (cs == CSV_RECORD) {
                    out->rows--;
                    c->skipped++;
                } else if (cs != CSV_END) {
                    break; /* its fault, below */
                }
            }
            c->skip_at++;
            continue;
        default: break;
        }
        reader_record rec = {.line = t->record_line + 1, .offset = at};
        return fault(c, cs == CSV_UNTERMINATED ? READER_FAULT_UNTERMINATED : READER_FAULT_TOO_LONG,
                     &rec);
    }
}

void reader_cursor_message(const reader_cursor *c, const char *name, uint64_t lines_before,
                           char *buf, size_t len)
{
    unsigned long long line = (unsigned long long)(lines_before + c->fault_line);
    switch (c->fault) {
    case READER_FAULT_UNTERMINATED:
        message_printf(buf, len,
                       "%s: line %llu: unterminated quote (a quoted field runs to the end of the "
                       "input)", name, line);
        break;
    case READER_FAULT_NOMEM:
        message_printf(buf, len, "%s: line %llu: out of memory", name, line);
        break;
    case READER_FAULT_TOO_LONG:
        message_printf(buf, len,
                       "%s: line %llu: record at byte %llu is longer than the %zu-byte limit (the "
                       "record limit: raise {max_record})", name, line,
                       (unsigned long long)c->fault_offset, c->o->max_record_bytes);
        break;
    default: message_printf(buf, len, "%s: no error", name);
    }
}

int reader_too_long_message(const reader *r, uint64_t lines_before, char *buf, size_t len)
{
    uint64_t at;
    size_t limit;
    int quoted;
    if (!chunker_too_long(r->ck, &at, &limit, &quoted)) return 0;
    /* The cursor's words (reader_cursor_message), so that the message is
     * the same whichever of the two met the record. */
    message_printf(buf, len,
                   "%s: line %llu: record at byte %llu is longer than the %zu-byte limit (the "
                   "record limit: %sraise {max_record})", r->name,
                   (unsigned long long)lines_before + 1, (unsigned long long)at, limit,
                   quoted ? "an unterminated quote, or " : "");
    return 1;
}

size_t reader_bom_length(const reader *r) { return r->bom; }
const char *reader_not_text(const reader *r) { return r->not_text; }

size_t reader_repeated_headers(const reader_chunk *ch, const char *head, size_t head_len,
                               char delim, uint64_t *out, size_t max)
{
    size_t n = 0;
    for (size_t i = 0; i < ch->nstarts && n < max; i++) {
        size_t at = (size_t)(ch->starts[i] - ch->offset);
        if (at < ch->skip || (at > 0 && ch->data[at - 1] != '\n')) continue;
        const char *p = ch->data + at, *end = ch->data + ch->len;
        size_t bom = csv_bom_length(p, (size_t)(end - p));
        if (csv_same_record(head, head_len, p, end, delim, bom)) out[n++] = ch->starts[i];
    }
    return n;
}

size_t reader_column_name(const csv_field *f, size_t i, int header, int raw, char *out)
{
    size_t n = header ? (raw ? csv_unquote(f->ptr, f->len, out) : f->len) : 0;
    if (header && !raw) memcpy(out, f->ptr, n);
    if (n) return n;
    return (size_t)snprintf(out, 24, "col%zu", i + 1);
}

/* ASCII letters only: bytes of UTF-8 sequences never fold, so a spelling
 * never matches half of a character, and no locale is consulted. */
static inline unsigned char fold(unsigned char c)
{
    return c >= 'A' && c <= 'Z' ? (unsigned char)(c | 0x20) : c;
}

static int same_folded(const char *a, const char *b, uint32_t len)
{
    for (uint32_t i = 0; i < len; i++)
        if (fold((unsigned char)a[i]) != fold((unsigned char)b[i])) return 0;
    return 1;
}

int reader_missing_spelled(const reader_missing *m, const char *p, uint32_t len)
{
    for (uint32_t i = 0; i < m->n; i++)
        if (m->len[i] == len && (m->any_case ? same_folded(m->spelling[i], p, len)
                                             : memcmp(m->spelling[i], p, len) == 0))
            return 1;
    return 0;
}

void reader_missing_init(reader_missing *m, const char *const *spellings, uint32_t n,
                         int any_case)
{
    memset(m, 0, sizeof *m);
    m->any_case = any_case != 0;
    m->n = n < READER_MAX_MISSING ? n : READER_MAX_MISSING;
    for (uint32_t i = 0; i < m->n; i++) {
        size_t l = strlen(spellings[i]);
        m->spelling[i] = spellings[i];
        m->len[i] = l;
        if (!l) continue;
        /* The cell's first byte in either case, so a present cell is still
         * cleared by the one test. */
        unsigned char c = (unsigned char)spellings[i][0];
        m->cand[c] |= 1ull << (l % 64);
        if (!m->any_case) continue;
        if (fold(c) != c) m->cand[fold(c)] |= 1ull << (l % 64);
        else if (c >= 'a' && c <= 'z') m->cand[c - 0x20] |= 1ull << (l % 64);
    }
}
