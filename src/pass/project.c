/* project: see project.h. */
#include "pass/project.h"

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "io/number.h"
#include "io/reader.h"
#include "io/source.h"
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

typedef struct {
    const summary *s;
    const pca_result *r;
    size_t k;
    int header;                /* files start with a header */
    char *const *carry;        /* carried column names */
    size_t ncarry;
    size_t *field_of;          /* p: field index of each basis column in this file */
    size_t *carry_field;       /* ncarry: field index of each carried column */
    reader *rd;                /* the record reader */
    reader_missing missing;    /* the missing-cell test */
    char *name;                /* scratch for a column name */
    /* The current block. */
    size_t rows;
    double *x;                 /* BLOCK_ROWS x p */
    double *scores;            /* BLOCK_ROWS x k */
    csv_field *carried;        /* BLOCK_ROWS x ncarry */
    size_t row_bytes;          /* upper bound on the output bytes of a row, carries aside */
    uint64_t rows_out;
    sink *out;
    char *err;                 /* the caller's message buffer */
    size_t errlen;
} projector;

static int flush_block(projector *pj)
{
    if (!pj->rows) return 0;
    pca_project(pj->r, pj->k, pj->x, pj->rows, pj->scores);
    for (size_t i = 0; i < pj->rows; i++) {
        size_t need = pj->row_bytes;
        const csv_field *cf = pj->carried + i * pj->ncarry;
        for (size_t c = 0; c < pj->ncarry; c++) need += 2 * (size_t)cf[c].len + 3;
        char *d0 = sink_reserve(pj->out, need), *d = d0;
        if (!d) return -1;
        for (size_t c = 0; c < pj->ncarry; c++) {
            if (c) *d++ = ',';
            if (cf[c].ptr) d = put_field(d, cf[c].ptr, cf[c].len);
        }
        const double *sc = pj->scores + i * pj->k;
        for (size_t c = 0; c < pj->k; c++) {
            if (c || pj->ncarry) *d++ = ',';
            d = put_g10(d, sc[c]);
        }
        *d++ = '\n';
        sink_commit(pj->out, (size_t)(d - d0));
    }
    pj->rows_out += pj->rows;
    pj->rows = 0;
    return 0;
}

/* Field index of a column name in a first record of nf fields (named as the
 * scan names them); SIZE_MAX when absent. */
static size_t header_find(const projector *pj, const csv_field *f, size_t nf, const char *name)
{
    size_t len = strlen(name);
    for (size_t i = 0; i < nf; i++)
        if (reader_column_name(&f[i], i, pj->header, 0, pj->name) == len &&
            memcmp(pj->name, name, len) == 0)
            return i;
    if (pj->header) return SIZE_MAX;
    /* Without a header, colN names field N even past the first record's width. */
    char *end;
    if (strncmp(name, "col", 3) != 0 || name[3] < '1' || name[3] > '9') return SIZE_MAX;
    unsigned long long i = strtoull(name + 3, &end, 10);
    return *end || i < 1 || i >= SIZE_MAX / 2 ? SIZE_MAX : (size_t)(i - 1);
}

/* Maps the basis and carried columns to fields of this file's first record. */
static int map_header(projector *pj, const char *path, const csv_field *f, size_t nf)
{
    size_t longest = 0;
    for (size_t i = 0; i < nf; i++) longest = f[i].len > longest ? f[i].len : longest;
    free(pj->name);
    pj->name = malloc(longest + 25);
    if (!pj->name) { snprintf(pj->err, pj->errlen, "out of memory"); return -1; }
    for (size_t j = 0; j < pj->r->p; j++) {
        const char *name = summary_name(pj->s, pj->r->cols[j]);
        size_t at = header_find(pj, f, nf, name);
        if (at == SIZE_MAX) {
            snprintf(pj->err, pj->errlen,
                     "%s: line 1: no column named '%s' in the header (the PCA uses it)", path, name);
            return -1;
        }
        pj->field_of[j] = at;
    }
    for (size_t c = 0; c < pj->ncarry; c++) {
        size_t at = header_find(pj, f, nf, pj->carry[c]);
        if (at == SIZE_MAX) {
            snprintf(pj->err, pj->errlen, "%s: line 1: --carry: no column named '%s'%s", path,
                     pj->carry[c], pj->header ? " in the header" : " (use col1..colN)");
            return -1;
        }
        pj->carry_field[c] = at;
    }
    return 0;
}

/* One record: its numbers into the block, its carried fields beside them. */
static int project_record(projector *pj, const csv_field *fields, size_t nf)
{
    size_t p = pj->r->p;
    double *x = pj->x + pj->rows * p;
    for (size_t j = 0; j < p; j++) {
        size_t fi = pj->field_of[j];
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
    csv_field *cf = pj->carried + pj->rows * pj->ncarry;
    for (size_t c = 0; c < pj->ncarry; c++) {
        size_t fi = pj->carry_field[c];
        cf[c] = fi < nf ? fields[fi] : (csv_field){NULL, 0};
    }
    if (++pj->rows == BLOCK_ROWS && flush_block(pj) != 0) {
        snprintf(pj->err, pj->errlen, "write failed");
        return PROJECT_ERR_OUTPUT;
    }
    return 0;
}

/* Streams one data file.  Returns 0, or an exit code with pj->err set. */
static int project_file(projector *pj, const char *path)
{
    source *src = source_open(path, pj->err, pj->errlen);
    if (!src) return PROJECT_ERR_INPUT;
    reader_start(pj->rd, path, 1, 0, 0); /* the option's delimiter, or detect */
    int rc = 0, at_first = 1;
    while (!rc) {
        reader_record rec;
        reader_status rs = reader_next(pj->rd, &rec);
        if (rs == READER_RECORD) {
            if (at_first) {
                at_first = 0;
                if (map_header(pj, path, rec.fields, rec.nfields) != 0) { rc = PROJECT_ERR_INPUT; break; }
                if (pj->header) continue;
            }
            rc = project_record(pj, rec.fields, rec.nfields);
        } else if (rs == READER_CHUNK_END) {
            /* Carried fields point into the chunk: finish the block with it. */
            if (flush_block(pj) != 0) {
                snprintf(pj->err, pj->errlen, "write failed");
                rc = PROJECT_ERR_OUTPUT;
            }
        } else if (rs == READER_WANT) {
            if (reader_pull(pj->rd, src) < 0) rs = READER_ERROR;
        } else if (rs == READER_END) {
            break;
        }
        if (rs == READER_ERROR) {
            snprintf(pj->err, pj->errlen, "%s", reader_error(pj->rd));
            rc = PROJECT_ERR_INPUT;
        }
    }
    if (!rc && at_first) {
        snprintf(pj->err, pj->errlen, "%s: no records (empty input)", path);
        rc = PROJECT_ERR_INPUT;
    }
    source_close(src);
    return rc;
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
    pj.err = err;
    pj.errlen = errlen;
    const char *spelling[READER_MAX_MISSING];
    uint32_t nmissing = summary_missing_spellings(s);
    for (uint32_t i = 0; i < nmissing && i < READER_MAX_MISSING; i++)
        spelling[i] = summary_missing_spelling(s, i);
    reader_missing_init(&pj.missing, spelling, nmissing);
    reader_options ro = o->read;
    ro.raw = 0;
    pj.field_of = malloc((r->p + 1) * sizeof *pj.field_of);
    pj.carry_field = malloc((pj.ncarry + 1) * sizeof *pj.carry_field);
    pj.x = malloc(BLOCK_ROWS * (r->p + 1) * sizeof *pj.x);
    pj.scores = malloc(BLOCK_ROWS * (k + 1) * sizeof *pj.scores);
    pj.carried = malloc((BLOCK_ROWS * pj.ncarry + 1) * sizeof *pj.carried);
    pj.row_bytes = k * 26 + 2;
    pj.rd = reader_create(&ro);
    int rc = PROJECT_OK;
    if (!pj.field_of || !pj.carry_field || !pj.x || !pj.scores || !pj.carried || !pj.rd) {
        snprintf(err, errlen, "out of memory");
        rc = PROJECT_ERR_MEMORY;
    } else if (header_row(&pj) != 0) {
        snprintf(err, errlen, "write failed");
        rc = PROJECT_ERR_OUTPUT;
    }
    for (size_t i = 0; i < npaths && rc == PROJECT_OK; i++) rc = project_file(&pj, paths[i]);
    reader_free(pj.rd);
    free(pj.name);
    free(pj.field_of);
    free(pj.carry_field);
    free(pj.x);
    free(pj.scores);
    free(pj.carried);
    return (project_status)rc;
}
