/* project: see project.h. */
#include "pass/project.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/message.h"
#include "io/number.h"
#include "io/reader.h"
#include "pass/stream.h"
#include "summary/access.h"

#define BLOCK_ROWS 256

/* ---- formatting --------------------------------------------------------- */

/* Appends a CSV field, quoted when it holds ',', '"', CR or LF (RFC 4180);
 * needs at most 2 n + 2 bytes. */
static char *put_field(char *d, const char *s, size_t n)
{
    int quote = 0;
    for (size_t i = 0; i < n && !quote; i++)
        quote = s[i] == ',' || s[i] == '"' || s[i] == '\n' || s[i] == '\r';
    if (!quote) {
        memcpy(d, s, n);
        return d + n;
    }
    *d++ = '"';
    for (size_t i = 0; i < n; i++) {
        if (s[i] == '"') *d++ = '"';
        *d++ = s[i];
    }
    *d++ = '"';
    return d;
}

static const double POW10[] = {1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,
                               1e8,  1e9,  1e10, 1e11, 1e12, 1e13, 1e14, 1e15,
                               1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22};

/* a * 10^s for |s| <= 22: one correctly rounded operation on exact values. */
static double scale10(double a, int s)
{
    return s >= 0 ? a * POW10[s] : a / POW10[-s];
}

/* Writes v as printf's "%.10g" does (at most 24 bytes), without printf on
 * the common path.  With 10^e <= |v| < 10^(e+1), m = |v| 10^(9-e) is one
 * rounded operation away from the exact value (relative error <= 2^-53, so
 * absolute error < 2e-6 for m < 1e10); rounding m to an integer is then
 * exact unless m lies within 1e-4 of a half-integer, or the scale is not an
 * exact power of ten (|9-e| > 22): those cases go to snprintf. */
static char *put_g10(char *d, double v)
{
    if (v == 0) { *d++ = '0'; return d; }
    double a = fabs(v);
    if (!(a >= 1e-13 && a < 1e31)) return d + snprintf(d, 32, "%.10g", v);
    int b2;
    frexp(a, &b2); /* a in [2^(b2-1), 2^b2): e is this estimate or one more */
    int e = (int)floor((b2 - 1) * 0.30102999566398120);
    double m = 0;
    for (int tries = 0; tries < 3; tries++) {
        if (9 - e > 22 || 9 - e < -22) return d + snprintf(d, 32, "%.10g", v);
        m = scale10(a, 9 - e);
        if (m < 1e9) e--;
        else if (m >= 1e10) e++;
        else break;
    }
    if (!(m >= 1e9 && m < 1e10)) return d + snprintf(d, 32, "%.10g", v);
    double fl = floor(m), frac = m - fl;
    if (fabs(frac - 0.5) < 1e-4) return d + snprintf(d, 32, "%.10g", v);
    uint64_t q = (uint64_t)fl + (frac > 0.5);
    if (q == 10000000000ull) { q = 1000000000ull; e++; }
    char dig[10];
    for (int i = 9; i >= 0; i--) { dig[i] = (char)('0' + q % 10); q /= 10; }
    int nd = 10;
    while (nd > 1 && dig[nd - 1] == '0') nd--;
    if (v < 0) *d++ = '-';
    if (e < -4 || e >= 10) {
        *d++ = dig[0];
        if (nd > 1) {
            *d++ = '.';
            memcpy(d, dig + 1, (size_t)nd - 1);
            d += nd - 1;
        }
        *d++ = 'e';
        *d++ = e < 0 ? '-' : '+';
        int x = e < 0 ? -e : e;
        if (x >= 100) *d++ = (char)('0' + x / 100);
        *d++ = (char)('0' + x / 10 % 10);
        *d++ = (char)('0' + x % 10);
    } else if (e >= 0) {
        memcpy(d, dig, (size_t)e + 1);
        d += e + 1;
        if (nd > e + 1) {
            *d++ = '.';
            memcpy(d, dig + e + 1, (size_t)(nd - e - 1));
            d += nd - e - 1;
        }
    } else {
        *d++ = '0';
        *d++ = '.';
        for (int z = 0; z < -e - 1; z++) *d++ = '0';
        memcpy(d, dig, (size_t)nd);
        d += nd;
    }
    return d;
}

/* ---- the pass over the data --------------------------------------------- */

/* Per slot of the pipeline: the block of rows being built and the chunk's
 * formatted rows, each with the room it reserves in the sink. */
typedef struct {
    size_t rows;               /* rows in the block */
    double *x;                 /* BLOCK_ROWS x p */
    double *scores;            /* BLOCK_ROWS x k */
    csv_field *carried;        /* BLOCK_ROWS x ncarry */
    char *buf;                 /* the chunk's formatted rows, back to back */
    size_t len, cap;           /* bytes in buf, allocated */
    struct {
        size_t len;            /* bytes of a formatted row */
        size_t need;           /* what it reserves in the sink */
    } *row;
    size_t nrows, rows_cap;    /* formatted rows, allocated */
} project_slot;

typedef struct {
    const summary *s;
    const pca_result *r;
    size_t k;
    int header;                /* files start with a header */
    char *const *carry;        /* carried column names */
    size_t ncarry;
    /* Fixed by the reading thread before a worker sees a row of the file: */
    size_t **maps;             /* per file: the field index of each basis column (p), then
                                  of each carried column (ncarry) */
    size_t nfiles;
    char *name;                /* scratch for a column name */
    reader_missing missing;    /* the missing-cell test */
    size_t row_bytes;          /* upper bound on the output bytes of a row, carries aside */
    project_slot *slots;
    unsigned nslots;
    sink *out;                 /* written by commits (and the header row before them) */
} projector;

/* The array p of *cap elements of `size` bytes, grown to at least need:
 * its new place, or NULL (p untouched) when out of memory. */
static void *grow(void *p, size_t *cap, size_t need, size_t size)
{
    if (need <= *cap) return p;
    size_t c = *cap ? *cap : 256;
    while (c < need) c *= 2;
    void *g = realloc(p, c * size);
    if (g) *cap = c;
    return g;
}

/* The block's scores, formatted into the slot's buffer. */
static int flush_block(projector *pj, project_slot *sl)
{
    if (!sl->rows) return 0;
    if (pca_project(pj->r, pj->k, sl->x, sl->rows, sl->scores) != 0) return -1;
    void *g = grow(sl->row, &sl->rows_cap, sl->nrows + sl->rows, sizeof *sl->row);
    if (!g) return -1;
    sl->row = g;
    for (size_t i = 0; i < sl->rows; i++) {
        size_t need = pj->row_bytes;
        const csv_field *cf = sl->carried + i * pj->ncarry;
        for (size_t c = 0; c < pj->ncarry; c++) need += 2 * (size_t)cf[c].len + 3;
        if (!(g = grow(sl->buf, &sl->cap, sl->len + need, 1))) return -1;
        sl->buf = g;
        char *d0 = sl->buf + sl->len, *d = d0;
        for (size_t c = 0; c < pj->ncarry; c++) {
            if (c) *d++ = ',';
            if (cf[c].ptr) d = put_field(d, cf[c].ptr, cf[c].len);
        }
        const double *sc = sl->scores + i * pj->k;
        for (size_t c = 0; c < pj->k; c++) {
            if (c || pj->ncarry) *d++ = ',';
            d = put_g10(d, sc[c]);
        }
        *d++ = '\n';
        sl->row[sl->nrows].len = (size_t)(d - d0);
        sl->row[sl->nrows].need = need;
        sl->nrows++;
        sl->len += (size_t)(d - d0);
    }
    sl->rows = 0;
    return 0;
}

#define FIELD_AMBIGUOUS (SIZE_MAX - 1)

/* Field index of a column name in a first record of nf raw fields (named as
 * the scan names them); SIZE_MAX when absent, FIELD_AMBIGUOUS when several
 * fields carry it. */
static size_t header_find(const projector *pj, const csv_field *f, size_t nf, const char *name)
{
    size_t len = strlen(name), at = SIZE_MAX;
    for (size_t i = 0; i < nf; i++)
        if (reader_column_name(&f[i], i, pj->header, 1, pj->name) == len &&
            memcmp(pj->name, name, len) == 0) {
            if (at != SIZE_MAX) return FIELD_AMBIGUOUS;
            at = i;
        }
    if (at != SIZE_MAX || pj->header) return at;
    /* Without a header, colN names field N even past the first record's width. */
    char *end;
    if (strncmp(name, "col", 3) != 0 || name[3] < '1' || name[3] > '9') return SIZE_MAX;
    unsigned long long i = strtoull(name + 3, &end, 10);
    return *end || i < 1 || i >= SIZE_MAX / 2 ? SIZE_MAX : (size_t)(i - 1);
}

/* Reading thread: maps the basis and carried columns to fields of this
 * file's first record; the header itself is no row. */
static int map_header(void *ctx, size_t file, const char *path, const reader *rd,
                      const reader_record *rec, int *skip, char *msg, size_t msglen)
{
    projector *pj = ctx;
    const csv_field *f = rec->fields;
    size_t nf = rec->nfields;
    (void)rd;
    *skip = pj->header;
    size_t longest = 0;
    for (size_t i = 0; i < nf; i++) longest = f[i].len > longest ? f[i].len : longest;
    free(pj->name);
    pj->name = malloc(longest + 25);
    size_t *map = pj->maps[file] = malloc((pj->r->p + pj->ncarry + 1) * sizeof *map);
    if (!pj->name || !map) { snprintf(msg, msglen, "out of memory"); return PROJECT_ERR_MEMORY; }
    for (size_t j = 0; j < pj->r->p; j++) {
        const char *name = summary_name(pj->s, pj->r->cols[j]);
        size_t at = header_find(pj, f, nf, name);
        if (at == FIELD_AMBIGUOUS) {
            message_printf(msg, msglen,
                           "%s: line 1: '%s' names more than one column of the header (the PCA "
                           "uses it); rename them to tell them apart", path, name);
            return PROJECT_ERR_INPUT;
        }
        if (at == SIZE_MAX) {
            message_printf(msg, msglen,
                           "%s: line 1: no column named '%s' in the header (the PCA uses it)", path,
                           name);
            if (pj->header) stream_suggest_column(f, nf, 1, name, msg, msglen);
            return PROJECT_ERR_INPUT;
        }
        map[j] = at;
    }
    for (size_t c = 0; c < pj->ncarry; c++) {
        size_t at = header_find(pj, f, nf, pj->carry[c]);
        if (at == FIELD_AMBIGUOUS) {
            message_printf(msg, msglen,
                           "%s: line 1: {carry}: '%s' names more than one column of the header",
                           path, pj->carry[c]);
            return PROJECT_ERR_USAGE;
        }
        if (at == SIZE_MAX) {
            message_printf(msg, msglen, "%s: line 1: {carry}: no column named '%s'%s", path,
                           pj->carry[c], pj->header ? " in the header" : " (use col1..colN)");
            if (pj->header) stream_suggest_column(f, nf, 1, pj->carry[c], msg, msglen);
            return PROJECT_ERR_USAGE;
        }
        map[pj->r->p + c] = at;
    }
    return 0;
}

static int make_slots(void *ctx, unsigned nslots)
{
    projector *pj = ctx;
    pj->slots = calloc(nslots, sizeof *pj->slots);
    if (!pj->slots) return PROJECT_ERR_MEMORY;
    pj->nslots = nslots;
    for (unsigned i = 0; i < nslots; i++) {
        project_slot *sl = &pj->slots[i];
        sl->x = malloc(BLOCK_ROWS * (pj->r->p + 1) * sizeof *sl->x);
        sl->scores = malloc(BLOCK_ROWS * (pj->k + 1) * sizeof *sl->scores);
        sl->carried = malloc((BLOCK_ROWS * pj->ncarry + 1) * sizeof *sl->carried);
        if (!sl->x || !sl->scores || !sl->carried) return PROJECT_ERR_MEMORY;
    }
    return 0;
}

/* Worker: one record's numbers into the block, its carried fields beside them. */
static int project_row(void *ctx, unsigned slot, size_t file, const reader_record *rec,
                       int first_of_file)
{
    projector *pj = ctx;
    project_slot *sl = &pj->slots[slot];
    const size_t *map = pj->maps[file];
    const csv_field *fields = rec->fields;
    size_t nf = rec->nfields, p = pj->r->p;
    (void)first_of_file;
    double *x = sl->x + sl->rows * p;
    for (size_t j = 0; j < p; j++) {
        size_t fi = map[j];
        double v = NAN;
        if (fi < nf) {
            const csv_field *f = &fields[fi];
            number_decimal dec;
            if (!reader_is_missing(&pj->missing, f->ptr, f->len) &&
                number_parse(f->ptr, f->len, &dec) == NUMBER_FINITE)
                v = dec.value;
        }
        x[j] = v;
    }
    csv_field *cf = sl->carried + sl->rows * pj->ncarry;
    for (size_t c = 0; c < pj->ncarry; c++) {
        size_t fi = map[p + c];
        cf[c] = fi < nf ? fields[fi] : (csv_field){NULL, 0};
    }
    if (++sl->rows == BLOCK_ROWS) return flush_block(pj, sl);
    return 0;
}

/* Worker: carried fields point into the chunk, so its last block ends with it. */
static int chunk_end(void *ctx, unsigned slot, size_t file)
{
    projector *pj = ctx;
    (void)file;
    return flush_block(pj, &pj->slots[slot]);
}

/* In chunk order: the slot's rows to the sink, each reserving the room a
 * one-thread run reserves, so that the sink drains (and a gzip stream cuts
 * its blocks) at the same bytes. */
static int commit(void *ctx, unsigned slot, char *err, size_t errlen)
{
    projector *pj = ctx;
    project_slot *sl = &pj->slots[slot];
    const char *from = sl->buf;
    int failed = 0;
    for (size_t i = 0; i < sl->nrows && !failed; i++) {
        char *d = sink_reserve(pj->out, sl->row[i].need);
        if (!d) { failed = 1; break; }
        memcpy(d, from, sl->row[i].len);
        sink_commit(pj->out, sl->row[i].len);
        from += sl->row[i].len;
    }
    sl->rows = sl->nrows = sl->len = 0;
    if (!failed) return 0;
    sink_error(pj->out, err, errlen);
    return PROJECT_ERR_OUTPUT;
}

void project_options_defaults(project_options *o)
{
    memset(o, 0, sizeof *o);
    o->header = 1;
    reader_options_defaults(&o->read);
}

/* The header row: carried names, then PC1..PCk. */
static int header_row(projector *pj)
{
    size_t need = pj->k * 24 + 2;
    for (size_t c = 0; c < pj->ncarry; c++) need += 2 * strlen(pj->carry[c]) + 3;
    char *d0 = sink_reserve(pj->out, need), *d = d0;
    if (!d) return -1;
    for (size_t c = 0; c < pj->ncarry; c++) {
        if (c) *d++ = ',';
        d = put_field(d, pj->carry[c], strlen(pj->carry[c]));
    }
    for (size_t c = 0; c < pj->k; c++)
        d += sprintf(d, "%sPC%zu", c || pj->ncarry ? "," : "", c + 1);
    *d++ = '\n';
    sink_commit(pj->out, (size_t)(d - d0));
    return 0;
}

project_status project_files(const summary *s, const pca_result *r, size_t k,
                             const project_options *o, const char *const *paths, size_t npaths,
                             sink *out, char *err, size_t errlen)
{
    projector pj;
    memset(&pj, 0, sizeof pj);
    pj.s = s;
    pj.r = r;
    pj.k = k;
    pj.header = o->header;
    pj.carry = o->carry;
    pj.ncarry = o->ncarry;
    pj.out = out;
    pj.nfiles = npaths;
    pj.row_bytes = k * 26 + 2;
    const char *spelling[READER_MAX_MISSING];
    uint32_t nmissing = summary_missing_spellings(s);
    for (uint32_t i = 0; i < nmissing && i < READER_MAX_MISSING; i++)
        spelling[i] = summary_missing_spelling(s, i);
    reader_missing_init(&pj.missing, spelling, nmissing, summary_missing_any_case(s));
    stream_options so = {
        .read = o->read,
        .threads = o->threads,
        .same_delimiter = 0, /* the option's delimiter, or detected per file */
        .require_records = 1,
        .header = o->header,
        .progress = o->progress,
        .progress_ctx = o->progress_ctx,
    };
    so.read.raw = 0;
    const stream_handler h = {
        .input_error = PROJECT_ERR_INPUT,
        .memory_error = PROJECT_ERR_MEMORY,
        .slots = make_slots,
        .first = map_header,
        .row = project_row,
        .chunk_end = chunk_end,
        .commit = commit,
    };
    int rc = PROJECT_OK;
    pj.maps = calloc(npaths + 1, sizeof *pj.maps);
    if (!pj.maps) {
        snprintf(err, errlen, "out of memory");
        rc = PROJECT_ERR_MEMORY;
    } else if (header_row(&pj) != 0) {
        sink_error(pj.out, err, errlen);
        rc = PROJECT_ERR_OUTPUT;
    } else {
        rc = stream_files(&so, &h, &pj, paths, npaths, err, errlen);
    }
    for (unsigned i = 0; i < pj.nslots; i++) {
        project_slot *sl = &pj.slots[i];
        free(sl->x);
        free(sl->scores);
        free(sl->carried);
        free(sl->buf);
        free(sl->row);
    }
    free(pj.slots);
    for (size_t i = 0; pj.maps && i < npaths; i++) free(pj.maps[i]);
    free(pj.maps);
    free(pj.name);
    return (project_status)rc;
}
