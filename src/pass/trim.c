/* trim: see trim.h. */
#include "pass/trim.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/reader.h"
#include "io/source.h"

typedef struct {
    const trim_options *o;
    reader *rd;
    sink *out;
    unsigned char *pick;   /* per field of the first record: kept */
    size_t nfields;        /* fields of the first file's first record */
    char *header;          /* the first file's header record, raw */
    size_t header_len;
    char *name;            /* scratch for a column name */
    size_t name_cap;
    int started;           /* the first file's first record was seen */
    int unterminated;      /* the last record written had no line end */
    char delim;            /* the delimiter of the first file */
    char *err;
    size_t errlen;
} trimmer;

void trim_options_defaults(trim_options *o)
{
    memset(o, 0, sizeof *o);
    o->header = 1;
    reader_options_defaults(&o->read);
}

/* The first record of the first file: which fields are kept. */
static trim_status choose(trimmer *t, const char *path, const reader_record *rec)
{
    const trim_options *o = t->o;
    t->nfields = rec->nfields;
    t->pick = calloc(rec->nfields ? rec->nfields : 1, 1);
    unsigned char *found = calloc(o->nkeep ? o->nkeep : 1, 1);
    if (!t->pick || !found) { free(found); snprintf(t->err, t->errlen, "out of memory"); return TRIM_ERR_MEMORY; }
    for (size_t i = 0; i < rec->nfields; i++) {
        const csv_field *f = &rec->fields[i];
        if (f->len + 25 > t->name_cap) {
            char *p = realloc(t->name, f->len + 25);
            if (!p) { free(found); snprintf(t->err, t->errlen, "out of memory"); return TRIM_ERR_MEMORY; }
            t->name = p;
            t->name_cap = f->len + 25;
        }
        size_t n = reader_column_name(f, i, o->header, 1, t->name);
        for (size_t k = 0; k < o->nkeep; k++)
            if (strlen(o->keep[k]) == n && memcmp(o->keep[k], t->name, n) == 0) {
                t->pick[i] = 1;
                found[k] = 1;
            }
    }
    for (size_t k = 0; k < o->nkeep; k++)
        if (!found[k]) {
            const char *k0 = o->keep[k];
            int generated = strncmp(k0, "col", 3) == 0 && k0[3] >= '1' && k0[3] <= '9' &&
                            strspn(k0 + 3, "0123456789") == strlen(k0 + 3);
            snprintf(t->err, t->errlen, "%s: no column named '%s' %s", path, k0,
                     !o->header  ? "(without a header: col1..colN)"
                     : generated ? "in the header (for a file without one, add --no-header)"
                                 : "in the header");
            free(found);
            return TRIM_ERR_USAGE;
        }
    free(found);
    return TRIM_OK;
}

static trim_status write_fail(trimmer *t)
{
    snprintf(t->err, t->errlen, "write failed");
    return TRIM_ERR_OUTPUT;
}

/* One record: the header checks, then its kept fields. */
static trim_status record(trimmer *t, const char *path, const reader_record *rec, int first)
{
    if (first && t->o->header) {
        size_t hl = (size_t)(rec->eol - rec->text);
        if (t->started) { /* later files: the same header, not written again */
            if (hl != t->header_len || memcmp(t->header, rec->text, hl) != 0) {
                snprintf(t->err, t->errlen, "%s: line %llu: header differs from the first file's",
                         path, (unsigned long long)rec->line);
                return TRIM_ERR_INPUT;
            }
            return TRIM_OK;
        }
        t->header = malloc(hl + 1);
        if (!t->header) { snprintf(t->err, t->errlen, "out of memory"); return TRIM_ERR_MEMORY; }
        memcpy(t->header, rec->text, hl);
        t->header_len = hl;
        size_t bom = reader_bom_length(t->rd);
        if (bom && sink_write(t->out, "\xEF\xBB\xBF", bom) != 0) return write_fail(t);
    }
    if (first && !t->started) {
        trim_status st = choose(t, path, rec);
        if (st != TRIM_OK) return st;
        t->started = 1;
        t->delim = reader_delim(t->rd);
    }
    /* The previous file ended without a line end: give it one now. */
    if (t->unterminated && sink_write(t->out, "\n", 1) != 0) return write_fail(t);
    int lead = 1;
    size_t written = 0;
    for (size_t i = 0; i < t->nfields; i++) {
        if (!t->pick[i]) continue;
        if (!lead && sink_write(t->out, &t->delim, 1) != 0) return write_fail(t);
        written += !lead;
        lead = 0;
        if (i < rec->nfields && rec->fields[i].len) {
            if (sink_write(t->out, rec->fields[i].ptr, rec->fields[i].len) != 0)
                return write_fail(t);
            written += rec->fields[i].len;
        }
    }
    /* A row whose kept cells are one empty cell would be a blank line, which
     * every reader skips: write it as an empty quoted field. */
    if (!written && !lead && sink_write(t->out, "\"\"", 2) != 0) return write_fail(t);
    /* The input's own line end; none after a last record without one. */
    if (rec->eol_len && sink_write(t->out, rec->eol, rec->eol_len) != 0) return write_fail(t);
    t->unterminated = rec->eol_len == 0;
    return TRIM_OK;
}

static trim_status trim_file(trimmer *t, const char *path)
{
    source *src = source_open(path, t->err, t->errlen);
    if (!src) return TRIM_ERR_INPUT;
    reader_start(t->rd, path, 1, t->started ? t->delim : 0, 0);
    trim_status st = TRIM_OK;
    int first = 1;
    for (;;) {
        reader_record rec;
        reader_status rs = reader_next(t->rd, &rec);
        if (rs == READER_RECORD) {
            st = record(t, path, &rec, first);
            first = 0;
            if (st != TRIM_OK) break;
        } else if (rs == READER_WANT) {
            if (reader_pull(t->rd, src) < 0) rs = READER_ERROR;
        } else if (rs == READER_END) {
            break;
        }
        if (rs == READER_ERROR) {
            snprintf(t->err, t->errlen, "%s", reader_error(t->rd));
            st = TRIM_ERR_INPUT;
            break;
        }
    }
    source_close(src);
    return st;
}

trim_status trim_files(const trim_options *o, const char *const *paths, size_t npaths, sink *out,
                       char *err, size_t errlen)
{
    trimmer t;
    memset(&t, 0, sizeof t);
    t.o = o;
    t.out = out;
    t.err = err;
    t.errlen = errlen;
    reader_options ro = o->read;
    ro.raw = 1;
    t.rd = reader_create(&ro);
    trim_status st = TRIM_OK;
    if (!t.rd) { snprintf(err, errlen, "out of memory"); st = TRIM_ERR_MEMORY; }
    for (size_t i = 0; st == TRIM_OK && i < npaths; i++) st = trim_file(&t, paths[i]);
    reader_free(t.rd);
    free(t.pick);
    free(t.header);
    free(t.name);
    return st;
}
