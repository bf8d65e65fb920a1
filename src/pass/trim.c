/* trim: see trim.h.
 *
 * The reading thread sees each file's first record (pass/stream.h): the
 * first file's picks the kept fields and is kept as the header, later files'
 * are compared with it and skipped.  Workers write a chunk's kept fields
 * into their slot's buffer; commits append the buffers to the sink in chunk
 * order.  The sink's gzip and zstd streams depend on the bytes alone when
 * they come through sink_write, so any thread count gives the same file.
 */
#include "pass/trim.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/message.h"
#include "pass/stream.h"

typedef struct {
    char *buf;             /* the chunk's output */
    size_t len, cap;       /* bytes in it, allocated */
    size_t rows;           /* rows in it */
    int unterminated;      /* its last row has no line end */
} trim_slot;

typedef struct {
    const trim_options *o;
    /* Fixed by the reading thread before a worker sees a row: */
    unsigned char *pick;   /* per field of the first record: kept */
    size_t nfields;        /* fields of the first file's first record */
    size_t last;           /* the last kept field (SIZE_MAX: none) */
    char *header;          /* the first file's column names, each a size_t length and its
                              bytes (reader_column_name: as the scan compares them) */
    size_t header_len;
    char *name;            /* scratch for a column name */
    size_t name_cap;
    int started;           /* the first file's first record was seen */
    size_t bom;            /* byte-order mark written before the header (0: none) */
    size_t bom_file;       /* the file whose header gets it */
    char delim;            /* the delimiter of the first file */
    /* Workers: */
    trim_slot *slots;
    unsigned nslots;
    /* Commits: */
    sink *out;
    int unterminated;      /* the last row written had no line end */
} trimmer;

void trim_options_defaults(trim_options *o)
{
    memset(o, 0, sizeof *o);
    o->header = 1;
    reader_options_defaults(&o->read);
}

/* The first record of the first file: which fields are kept. */
static int choose(trimmer *t, const char *path, const reader_record *rec, char *msg, size_t msglen)
{
    const trim_options *o = t->o;
    t->nfields = rec->nfields;
    t->pick = calloc(rec->nfields ? rec->nfields : 1, 1);
    size_t *found = calloc(o->nkeep ? o->nkeep : 1, sizeof *found); /* 1 + the field */
    if (!t->pick || !found) { free(found); snprintf(msg, msglen, "out of memory"); return TRIM_ERR_MEMORY; }
    for (size_t i = 0; i < rec->nfields; i++) {
        const csv_field *f = &rec->fields[i];
        if (f->len + 25 > t->name_cap) {
            char *p = realloc(t->name, f->len + 25);
            if (!p) { free(found); snprintf(msg, msglen, "out of memory"); return TRIM_ERR_MEMORY; }
            t->name = p;
            t->name_cap = f->len + 25;
        }
        size_t n = reader_column_name(f, i, o->header, 1, t->name);
        for (size_t k = 0; k < o->nkeep; k++)
            if (strlen(o->keep[k]) == n && memcmp(o->keep[k], t->name, n) == 0) {
                if (found[k]) { /* two fields carry the name: which one is meant? */
                    message_printf(msg, msglen,
                                   "%s: '%s' names more than one column of the header (fields %zu "
                                   "and %zu); rename them to tell them apart", path, o->keep[k],
                                   found[k], i + 1);
                    free(found);
                    return TRIM_ERR_USAGE;
                }
                t->pick[i] = 1;
                found[k] = i + 1;
            }
    }
    for (size_t k = 0; k < o->nkeep; k++)
        if (!found[k]) {
            const char *k0 = o->keep[k];
            int generated = strncmp(k0, "col", 3) == 0 && k0[3] >= '1' && k0[3] <= '9' &&
                            strspn(k0 + 3, "0123456789") == strlen(k0 + 3);
            message_printf(msg, msglen, "%s: no column named '%s' %s", path, k0,
                           !o->header  ? "(without a header: col1..colN)"
                           : generated ? "in the header (for a file without one, add {no_header})"
                                       : "in the header");
            if (o->header) stream_suggest_column(rec->fields, rec->nfields, 1, k0, msg, msglen);
            free(found);
            return TRIM_ERR_USAGE;
        }
    free(found);
    t->last = SIZE_MAX;
    for (size_t i = 0; i < rec->nfields; i++)
        if (t->pick[i]) t->last = i;
    return TRIM_OK;
}

/* The column names of a first record, each a size_t length and its bytes,
 * into a new *out (*len bytes); 0 or -1 (out of memory). */
static int header_names(const reader_record *rec, char **out, size_t *len)
{
    size_t cap = 0;
    for (size_t i = 0; i < rec->nfields; i++) cap += sizeof(size_t) + rec->fields[i].len + 24;
    char *b = malloc(cap ? cap : 1), *d = b;
    if (!b) return -1;
    for (size_t i = 0; i < rec->nfields; i++) {
        size_t n = reader_column_name(&rec->fields[i], i, 1, 1, d + sizeof n);
        memcpy(d, &n, sizeof n);
        d += sizeof n + n;
    }
    *out = b;
    *len = (size_t)(d - b);
    return 0;
}

/* Reading thread: a file's first record (the header checks). */
static int first_record(void *ctx, size_t file, const char *path, const reader *rd,
                        const reader_record *rec, int *skip, char *msg, size_t msglen)
{
    trimmer *t = ctx;
    if (t->o->header) {
        char *names;
        size_t len;
        if (header_names(rec, &names, &len) != 0) {
            snprintf(msg, msglen, "out of memory");
            return TRIM_ERR_MEMORY;
        }
        if (t->started) { /* later files: the same names, as the scan asks; not written again */
            int same = len == t->header_len && memcmp(names, t->header, len) == 0;
            free(names);
            if (!same) {
                message_printf(msg, msglen,
                               "%s: line %llu: header differs from the first file's (%zu vs %zu "
                               "fields; column names are compared, unquoted)", path,
                               (unsigned long long)rec->line, rec->nfields, t->nfields);
                return TRIM_ERR_INPUT;
            }
            *skip = 1;
            return TRIM_OK;
        }
        t->header = names;
        t->header_len = len;
    }
    if (!t->started) { /* the first file's byte-order mark leads the output, header or not */
        t->bom = reader_bom_length(rd);
        t->bom_file = file;
    }
    if (!t->started) {
        int st = choose(t, path, rec, msg, msglen);
        if (st != TRIM_OK) return st;
        t->started = 1;
        t->delim = reader_delim(rd);
    }
    return TRIM_OK;
}

static int make_slots(void *ctx, unsigned nslots)
{
    trimmer *t = ctx;
    t->slots = calloc(nslots, sizeof *t->slots);
    t->nslots = t->slots ? nslots : 0;
    return t->slots ? 0 : TRIM_ERR_MEMORY;
}

/* Writes the text of raw field f (n bytes: quoted or not, csv_unquote's
 * reading) as one quoted field at d; returns the end.  At most 2n + 2 bytes. */
static char *quoted_text(char *d, const char *f, size_t n)
{
    char *text = d + n + 2; /* past what the quoted form can reach before its text */
    size_t len = csv_unquote(f, n, text); /* the output never overtakes it */
    *d++ = '"';
    for (size_t k = 0; k < len; k++) {
        char c = text[k];
        if (c == '"') *d++ = '"';
        *d++ = c;
    }
    *d++ = '"';
    return d;
}

/* Worker: one record's kept fields into the slot's buffer. */
static int row(void *ctx, unsigned slot, size_t file, const reader_record *rec, int first_of_file)
{
    trimmer *t = ctx;
    trim_slot *s = &t->slots[slot];
    /* The kept fields are bytes of the record: its length bounds theirs (the
     * last one may be written quoted: twice its bytes and two quotes). */
    const size_t last = t->last;
    size_t last_len = last < rec->nfields ? rec->fields[last].len : 0;
    size_t need = (size_t)(rec->end - rec->offset) + t->nfields + 8 + last_len + 2;
    if (s->len + need > s->cap) {
        size_t cap = s->cap ? s->cap : 1u << 16;
        while (cap < s->len + need) cap *= 2;
        char *b = realloc(s->buf, cap);
        if (!b) return -1;
        s->buf = b;
        s->cap = cap;
    }
    char *d = s->buf + s->len;
    if (first_of_file && t->bom && file == t->bom_file) {
        memcpy(d, "\xEF\xBB\xBF", t->bom);
        d += t->bom;
    }
    /* A row without a line end (the end of a file) gets one when a row follows. */
    if (s->rows && s->unterminated) *d++ = '\n';
    int lead = 1;
    char *start = d;
    for (size_t i = 0; i < t->nfields; i++) {
        if (!t->pick[i]) continue;
        if (!lead) *d++ = t->delim;
        lead = 0;
        if (i >= rec->nfields || !rec->fields[i].len) continue;
        const char *f = rec->fields[i].ptr;
        size_t n = rec->fields[i].len;
        if (i == last && f[n - 1] == '\r') {
            /* A CR ending the row's last field is text where a delimiter
             * followed it, but a line end where the line end follows: the
             * field is written quoted (its text, quotes doubled), so that it
             * reads back as it was (its bytes kept, 'x\r' read as 'x'). */
            d = quoted_text(d, f, n);
            continue;
        }
        memcpy(d, f, n);
        d += n;
    }
    /* A row whose kept cells are one empty cell would be a blank line, which
     * every reader skips: write it as an empty quoted field. */
    if (d == start && !lead) { memcpy(d, "\"\"", 2); d += 2; }
    /* The input's own line end; none after a last record without one. */
    memcpy(d, rec->eol, rec->eol_len);
    d += rec->eol_len;
    /* A last record ends at the input's end, bare or with a lone CR (a line
     * end there): a row that follows needs a LF first (after "\r", the two
     * make "\r\n"), or it would be joined to this one. */
    s->unterminated = rec->eol_len == 0 || rec->eol[rec->eol_len - 1] != '\n';
    s->rows++;
    s->len = (size_t)(d - s->buf);
    return 0;
}

static int chunk_end(void *ctx, unsigned slot, size_t file)
{
    (void)ctx, (void)slot, (void)file;
    return 0;
}

/* In chunk order: the slot's rows to the sink. */
static int commit(void *ctx, unsigned slot, char *err, size_t errlen)
{
    trimmer *t = ctx;
    trim_slot *s = &t->slots[slot];
    int failed = 0;
    if (s->rows) {
        /* The previous file ended without a line end: give it one now. */
        if (t->unterminated) failed |= sink_write(t->out, "\n", 1) != 0;
        failed |= sink_write(t->out, s->buf, s->len) != 0;
        t->unterminated = s->unterminated;
    }
    s->len = s->rows = 0;
    s->unterminated = 0;
    if (!failed) return 0;
    sink_error(t->out, err, errlen);
    return TRIM_ERR_OUTPUT;
}

trim_status trim_files(const trim_options *o, const char *const *paths, size_t npaths, sink *out,
                       char *err, size_t errlen)
{
    trimmer t;
    memset(&t, 0, sizeof t);
    t.o = o;
    t.out = out;
    stream_options so = {
        .read = o->read,
        .threads = o->threads,
        .same_delimiter = 1,
        .require_records = 0,
        .header = o->header,
        .progress = o->progress,
        .progress_ctx = o->progress_ctx,
    };
    so.read.raw = 1;
    const stream_handler h = {
        .input_error = TRIM_ERR_INPUT,
        .memory_error = TRIM_ERR_MEMORY,
        .slots = make_slots,
        .first = first_record,
        .row = row,
        .chunk_end = chunk_end,
        .commit = commit,
    };
    int rc = stream_files(&so, &h, &t, paths, npaths, err, errlen);
    for (unsigned i = 0; i < t.nslots; i++) free(t.slots[i].buf);
    free(t.slots);
    free(t.pick);
    free(t.header);
    free(t.name);
    return (trim_status)rc;
}
