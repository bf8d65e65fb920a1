/* scan: see scan.h.
 *
 * Per cell: missing test (length mask, then the spellings), XXH3-64 of the
 * raw text into the value table and the HyperLogLog, then, unless the column
 * is declared categorical, the decimal parse.  A finite number becomes a
 * deviation from the column's reference decimal (number_difference), buffered
 * per column and added to the moments SCAN_BLOCK_ROWS at a time.
 */
#include "summary/scan.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#define XXH_INLINE_ALL
#include <xxhash.h>

#include "io/chunk.h"
#include "io/csv.h"
#include "io/number.h"
#include "io/source.h"

void scan_options_defaults(scan_options *o)
{
    memset(o, 0, sizeof *o);
    summary_options_defaults(&o->opt);
    o->header = 1;
    o->chunk_bytes = 4u << 20;
    o->max_record_bytes = 64u << 20;
}

/* Per-column buffer of the current block of cells.  The hot loop only
 * classifies, hashes and parses; the accumulators are fed a whole block of
 * one column at a time, which keeps each column's tables in cache. */
typedef struct {
    int field;           /* field index in the record */
    size_t ncells;       /* present cells buffered */
    uint64_t *hash;      /* XXH3-64 of each cell's text */
    const char **text;   /* each cell's text (inside the current chunk) */
    uint32_t *len;       /* each cell's length */
    size_t nnum;         /* finite numbers buffered */
    double *dev;         /* deviation of each number from the reference */
    double *val;         /* each number */
} lane;

typedef struct {
    const scan_options *o;
    summary *run;          /* running summary */
    summary *work;         /* chunk-local accumulators */
    lane *lanes;           /* one per summary column */
    size_t file_fields;    /* fields in the header */
    char **header;         /* the header's names (file_fields of them) */
    char *first_path;      /* source the header came from */
    csv_field *fields;     /* record buffer: file_fields + 1 */
    char delim;
    uint64_t missing_len_mask; /* bit L set: some spelling has length L (< 64) */
    size_t missing_len[SUMMARY_MAX_MISSING]; /* length of each spelling */
    uint64_t line_base;    /* lines before the current chunk */
    uint64_t total_bytes;  /* raw bytes of all sources, 0 if unknown */
    uint64_t done_bytes;   /* raw bytes of finished sources */
    char *err;
    size_t errlen;
} scanner;

static int is_missing(const scanner *sc, const char *p, uint32_t len)
{
    if (len == 0) return 1;
    if (len >= 64 || !(sc->missing_len_mask >> len & 1)) return 0;
    const summary_options *o = &sc->o->opt;
    for (uint32_t i = 0; i < o->n_missing; i++)
        if (sc->missing_len[i] == len && memcmp(o->missing[i], p, len) == 0) return 1;
    return 0;
}

/* Feeds one column's buffered block to its accumulators. */
static int flush_lane(summary_column *c, lane *l)
{
    for (size_t i = 0; i < l->ncells; i++) {
        if (i + 8 < l->ncells) values_prefetch(c->vals, l->hash[i + 8]);
        if (values_add(c->vals, l->hash[i], l->text[i], l->len[i]) != 0) return -1;
        hll_add(c->distinct, l->hash[i]);
    }
    l->ncells = 0;
    if (l->nnum) {
        moments_add_block(&c->mom, l->dev, l->nnum);
        for (size_t i = 0; i < l->nnum; i++) {
            double x = l->val[i];
            moments_see(&c->mom, x);
            c->zeros += x == 0;
            c->integers += x == nearbyint(x);
        }
        if (buckets_add_many(c->bins, l->val, l->nnum, 0) != 0) return -1;
        l->nnum = 0;
    }
    return 0;
}

static int flush_lanes(scanner *sc)
{
    for (size_t j = 0; j < sc->work->ncols; j++)
        if (flush_lane(&sc->work->cols[j], &sc->lanes[j]) != 0) return -1;
    return 0;
}

static void keep_example(summary_column *c, const char *p, uint32_t len)
{
    if (c->n_examples >= SUMMARY_EXAMPLES) return;
    uint32_t n = len > SUMMARY_EXAMPLE_BYTES ? SUMMARY_EXAMPLE_BYTES : len;
    for (uint32_t k = 0; k < c->n_examples; k++)
        if (strlen(c->examples[k]) == n && memcmp(c->examples[k], p, n) == 0) return;
    memcpy(c->examples[c->n_examples], p, n);
    c->examples[c->n_examples][n] = '\0';
    c->n_examples++;
}

static int cell(scanner *sc, size_t j, const char *p, uint32_t len)
{
    summary_column *c = &sc->work->cols[j];
    if (is_missing(sc, p, len)) { c->missing++; return 0; }
    lane *l = &sc->lanes[j];
    size_t k = l->ncells++;
    l->hash[k] = XXH3_64bits(p, len);
    l->text[k] = p;
    l->len[k] = len;
    if (c->mode != COLUMN_CATEGORICAL) {
        number_decimal d;
        switch (number_parse(p, len, &d)) {
        case NUMBER_FINITE:
            if (!c->mom.has_ref) moments_set_ref(&c->mom, &d);
            l->dev[l->nnum] = number_difference(&d, &c->mom.ref, NULL);
            l->val[l->nnum++] = d.value;
            break;
        case NUMBER_NONFINITE: c->non_finite++; break;
        default:
            c->non_numeric++;
            keep_example(c, p, len);
        }
    } else {
        c->non_numeric++;
    }
    return l->ncells == SCAN_BLOCK_ROWS ? flush_lane(c, l) : 0;
}

/* Splits a comma list; returns the count or -1 on OOM.  *items points into *buf. */
static int split_list(const char *s, char ***items, char **buf)
{
    *items = NULL;
    *buf = NULL;
    if (!s || !*s) return 0;
    *buf = strdup(s);
    size_t n = 1;
    for (const char *p = s; *p; p++) n += *p == ',';
    *items = calloc(n, sizeof **items);
    if (!*buf || !*items) return -1;
    size_t k = 0;
    for (char *tok = strtok(*buf, ","); tok; tok = strtok(NULL, ",")) (*items)[k++] = tok;
    return (int)k;
}

static int in_list(char **items, int n, const char *name)
{
    for (int i = 0; i < n; i++)
        if (strcmp(items[i], name) == 0) return 1;
    return 0;
}

/* Checks every name in a list exists in the header. */
static int check_names(scanner *sc, const char *opt, char **items, int n, char **names,
                       size_t nnames)
{
    for (int i = 0; i < n; i++) {
        size_t k = 0;
        while (k < nnames && strcmp(names[k], items[i]) != 0) k++;
        if (k == nnames) {
            snprintf(sc->err, sc->errlen, "%s: no column named '%s' in the header", opt, items[i]);
            return -1;
        }
    }
    return 0;
}

/* Builds the summary schema from the header names. */
static scan_status setup(scanner *sc, char **names, size_t nnames)
{
    const scan_options *o = sc->o;
    char **sel, **num, **cat, **ign, *b1, *b2, *b3, *b4;
    int nsel = split_list(o->columns, &sel, &b1), nnum = split_list(o->numeric, &num, &b2);
    int ncat = split_list(o->categorical, &cat, &b3), nign = split_list(o->ignore, &ign, &b4);
    scan_status st = SCAN_OK;
    char **cols = calloc(nnames ? nnames : 1, sizeof *cols);
    column_mode *modes = calloc(nnames ? nnames : 1, sizeof *modes);
    int *field_of = calloc(nnames ? nnames : 1, sizeof *field_of);
    if (nsel < 0 || nnum < 0 || ncat < 0 || nign < 0 || !cols || !modes || !field_of) {
        snprintf(sc->err, sc->errlen, "out of memory");
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    if (check_names(sc, "--columns", sel, nsel, names, nnames) ||
        check_names(sc, "--numeric", num, nnum, names, nnames) ||
        check_names(sc, "--categorical", cat, ncat, names, nnames) ||
        check_names(sc, "--ignore", ign, nign, names, nnames)) {
        st = SCAN_ERR_USAGE;
        goto done;
    }
    for (int i = 0; i < nnum; i++)
        if (in_list(cat, ncat, num[i])) {
            snprintf(sc->err, sc->errlen, "column '%s' is declared both numeric and categorical",
                     num[i]);
            st = SCAN_ERR_USAGE;
            goto done;
        }
    size_t n = 0;
    for (size_t f = 0; f < nnames; f++) {
        if (nsel > 0 && !in_list(sel, nsel, names[f])) continue;
        if (in_list(ign, nign, names[f])) continue;
        cols[n] = names[f];
        modes[n] = in_list(num, nnum, names[f])   ? COLUMN_NUMERIC
                   : in_list(cat, ncat, names[f]) ? COLUMN_CATEGORICAL
                                                  : COLUMN_AUTO;
        field_of[n] = (int)f;
        n++;
    }
    sc->run = summary_create(&o->opt, n, cols, modes);
    sc->work = sc->run ? summary_clone_empty(sc->run) : NULL;
    sc->lanes = calloc(n ? n : 1, sizeof *sc->lanes);
    sc->file_fields = nnames;
    /* Keep the first record's fields: without a header it is data. */
    csv_field *fields = realloc(sc->fields, (nnames + 1) * sizeof *fields);
    if (fields) sc->fields = fields;
    if (!sc->run || !sc->work || !sc->lanes || !fields) {
        snprintf(sc->err, sc->errlen, "out of memory");
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    for (size_t j = 0; j < n; j++) {
        lane *l = &sc->lanes[j];
        l->field = field_of[j];
        l->hash = malloc(SCAN_BLOCK_ROWS * sizeof *l->hash);
        l->text = malloc(SCAN_BLOCK_ROWS * sizeof *l->text);
        l->len = malloc(SCAN_BLOCK_ROWS * sizeof *l->len);
        l->dev = malloc(SCAN_BLOCK_ROWS * sizeof *l->dev);
        l->val = malloc(SCAN_BLOCK_ROWS * sizeof *l->val);
        if (!l->hash || !l->text || !l->len || !l->dev || !l->val) {
            snprintf(sc->err, sc->errlen, "out of memory");
            st = SCAN_ERR_MEMORY;
            goto done;
        }
    }
done:
    free(sel); free(num); free(cat); free(ign);
    free(b1); free(b2); free(b3); free(b4);
    free(cols); free(modes); free(field_of);
    return st;
}

static char *field_dup(const csv_field *f)
{
    char *s = malloc(f->len + 1);
    if (s) { memcpy(s, f->ptr, f->len); s[f->len] = '\0'; }
    return s;
}

/* The first record of a source: the header, or (no header) the width. */
static scan_status first_record(scanner *sc, const char *path, const csv_field *f, size_t nf,
                                int *is_header)
{
    *is_header = sc->o->header;
    if (sc->run) {
        if (!sc->o->header) return SCAN_OK;
        /* Later sources: the header must match the first one's. */
        for (size_t i = 0; i < nf || i < sc->file_fields; i++) {
            if (i >= nf || i >= sc->file_fields || strlen(sc->header[i]) != f[i].len ||
                memcmp(sc->header[i], f[i].ptr, f[i].len) != 0) {
                snprintf(sc->err, sc->errlen,
                         "%s: header differs from %s's (%zu vs %zu fields; first difference at "
                         "field %zu)",
                         path, sc->first_path, nf, sc->file_fields, i + 1);
                return SCAN_ERR_INPUT;
            }
        }
        return SCAN_OK;
    }
    char **names = calloc(nf ? nf : 1, sizeof *names);
    sc->first_path = strdup(path);
    if (!names || !sc->first_path) goto oom;
    for (size_t i = 0; i < nf; i++) {
        if (sc->o->header && f[i].len) {
            names[i] = field_dup(&f[i]);
        } else {
            names[i] = malloc(24);
            if (names[i]) snprintf(names[i], 24, "col%zu", i + 1);
        }
        if (!names[i]) goto oom;
    }
    sc->header = names;
    sc->file_fields = nf;
    return setup(sc, names, nf);
oom:
    if (names)
        for (size_t i = 0; i < nf; i++) free(names[i]);
    free(names);
    snprintf(sc->err, sc->errlen, "out of memory");
    return SCAN_ERR_MEMORY;
}

static scan_status ragged(scanner *sc, const char *path, uint64_t line, size_t nf)
{
    summary *w = sc->work;
    if (nf < sc->file_fields) w->short_rows++;
    else w->long_rows++;
    if (w->n_bad_lines < SUMMARY_BAD_LINES) w->bad_lines[w->n_bad_lines++] = line;
    if (sc->o->strict) {
        snprintf(sc->err, sc->errlen, "%s: line %llu: %zu fields, the header has %zu (--strict)",
                 path, (unsigned long long)line, nf, sc->file_fields);
        return SCAN_ERR_INPUT;
    }
    return SCAN_OK;
}

/* Tokenizes one chunk into the chunk-local set and merges it. */
static scan_status process_chunk(scanner *sc, const char *path, chunk *ch, int *at_first,
                                 uint64_t *rows)
{
    char *data = ch->data;
    size_t len = ch->len;
    if (ch->offset == 0) {
        size_t bom = csv_bom_length(data, len);
        data += bom;
        len -= bom;
        if (!sc->delim) sc->delim = sc->o->delim ? sc->o->delim : csv_detect_delimiter(data, len);
    }
    csv_reader r;
    csv_reader_init(&r, data, len, sc->delim);
    size_t maxf = sc->file_fields ? sc->file_fields + 1 : 0;
    for (;;) {
        size_t nf;
        csv_status cs;
        if (*at_first) {
            /* Width unknown yet: size the buffer by the delimiters before the
             * first record end (an upper bound on its fields). */
            size_t cap = 2;
            int inside = 0, content = 0;
            for (const char *p = r.pos; p < r.end; p++) {
                if (*p == '"') inside = !inside;
                else if (!inside && *p == sc->delim) cap++;
                else if (!inside && *p == '\n' && content) break;
                content |= *p != '\n' && *p != '\r';
            }
            csv_field *grown = realloc(sc->fields, cap * sizeof *grown);
            if (!grown) { snprintf(sc->err, sc->errlen, "out of memory"); return SCAN_ERR_MEMORY; }
            sc->fields = grown;
            cs = csv_next(&r, sc->fields, cap, &nf);
        } else {
            cs = csv_next(&r, sc->fields, maxf, &nf);
        }
        uint64_t line = sc->line_base + r.record_line + 1;
        if (cs == CSV_END) break;
        if (cs == CSV_UNTERMINATED) {
            snprintf(sc->err, sc->errlen,
                     "%s: line %llu: unterminated quote (a quoted field runs to the end of the "
                     "input)",
                     path, (unsigned long long)line);
            return SCAN_ERR_INPUT;
        }
        if (*at_first) {
            int is_header;
            scan_status st = first_record(sc, path, sc->fields, nf, &is_header);
            if (st != SCAN_OK) return st;
            *at_first = 0;
            maxf = sc->file_fields + 1;
            if (is_header) continue;
        }
        summary *w = sc->work;
        w->rows++;
        (*rows)++;
        if (nf != sc->file_fields) {
            scan_status st = ragged(sc, path, line, nf);
            if (st != SCAN_OK) return st;
        }
        for (size_t j = 0; j < w->ncols; j++) {
            size_t fi = (size_t)sc->lanes[j].field;
            if (fi >= nf) { w->cols[j].missing++; continue; }
            if (cell(sc, j, sc->fields[fi].ptr, sc->fields[fi].len) != 0) {
                snprintf(sc->err, sc->errlen, "out of memory");
                return SCAN_ERR_MEMORY;
            }
        }
    }
    sc->line_base += r.lines;
    if (sc->work) {
        if (flush_lanes(sc) != 0) {
            snprintf(sc->err, sc->errlen, "out of memory");
            return SCAN_ERR_MEMORY;
        }
        sc->work->bytes += ch->len;
        if (summary_merge(sc->run, sc->work, sc->err, sc->errlen) != SUMMARY_OK)
            return SCAN_ERR_MEMORY;
        summary_reset(sc->work);
        for (size_t j = 0; j < sc->work->ncols; j++)
            buckets_reset_level(sc->work->cols[j].bins, buckets_level(sc->run->cols[j].bins));
    }
    return SCAN_OK;
}

static scan_status scan_source(scanner *sc, chunker *ck, const char *path)
{
    source *src = source_open(path, sc->err, sc->errlen);
    if (!src) return SCAN_ERR_INPUT;
    chunker_start(ck, src);
    sc->line_base = 0;
    int at_first = 1;
    uint64_t rows = 0;
    scan_status st = SCAN_OK;
    for (;;) {
        chunk ch;
        int rc = chunker_next(ck, &ch, sc->err, sc->errlen);
        if (rc < 0) { st = SCAN_ERR_INPUT; break; }
        if (rc == 0) break;
        st = process_chunk(sc, path, &ch, &at_first, &rows);
        if (st != SCAN_OK) break;
        if (sc->o->progress)
            sc->o->progress(sc->o->progress_ctx, sc->done_bytes + source_raw_offset(src),
                            sc->total_bytes);
    }
    if (st == SCAN_OK && at_first && !sc->run) {
        snprintf(sc->err, sc->errlen, "%s: no records (empty input)", path);
        st = SCAN_ERR_INPUT;
    }
    if (st == SCAN_OK) {
        summary_source rec;
        memset(&rec, 0, sizeof rec);
        rec.path = (char *)path;
        snprintf(rec.format, sizeof rec.format, "%s", source_format_name(source_kind(src)));
        rec.size_bytes = source_raw_size(src);
        rec.mtime = source_mtime(src);
        rec.fingerprint = source_fingerprint(src);
        rec.raw_bytes = source_raw_offset(src);
        rec.rows = rows;
        if (summary_add_source(sc->run, &rec) != 0) {
            snprintf(sc->err, sc->errlen, "out of memory");
            st = SCAN_ERR_MEMORY;
        }
        sc->done_bytes += rec.raw_bytes;
    }
    source_close(src);
    return st;
}

scan_status scan_files(const scan_options *o, const char *const *paths, size_t npaths,
                       summary **out, char *err, size_t errlen)
{
    *out = NULL;
    scanner sc;
    memset(&sc, 0, sizeof sc);
    sc.o = o;
    sc.err = err;
    sc.errlen = errlen;
    for (uint32_t i = 0; i < o->opt.n_missing; i++) {
        size_t l = strlen(o->opt.missing[i]);
        sc.missing_len[i] = l;
        if (l < 64) sc.missing_len_mask |= 1ull << l;
    }
    for (size_t i = 0; i < npaths; i++) {
        FILE *f = strcmp(paths[i], "-") ? fopen(paths[i], "rb") : NULL;
        if (f) {
            if (fseek(f, 0, SEEK_END) == 0 && ftell(f) > 0) sc.total_bytes += (uint64_t)ftell(f);
            fclose(f);
        }
    }
    scan_status st = SCAN_OK;
    chunker *ck = chunker_create(o->chunk_bytes, o->max_record_bytes);
    if (!ck) { snprintf(err, errlen, "out of memory"); st = SCAN_ERR_MEMORY; }
    for (size_t i = 0; st == SCAN_OK && i < npaths; i++) st = scan_source(&sc, ck, paths[i]);
    chunker_free(ck);
    if (sc.lanes)
        for (size_t j = 0; sc.work && j < sc.work->ncols; j++) {
            lane *l = &sc.lanes[j];
            free(l->hash); free(l->text); free(l->len); free(l->dev); free(l->val);
        }
    free(sc.lanes);
    free(sc.fields);
    if (sc.header)
        for (size_t i = 0; i < sc.file_fields; i++) free(sc.header[i]);
    free(sc.header);
    free(sc.first_path);
    summary_free(sc.work);
    if (st == SCAN_OK) *out = sc.run;
    else summary_free(sc.run);
    return st;
}
