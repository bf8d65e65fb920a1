/* sheaf project: scores of the leading principal components, row by row.
 *
 * The PCA is computed from the summary exactly as `sheaf pca` does (same
 * column choice, same k); the data files are then streamed again: each file's
 * header gives the position of every basis column by name, each cell is
 * parsed (io/number), blocks of BLOCK_ROWS rows are standardised and
 * multiplied by the loadings (pca_project: cblas_dgemm), and the scores are
 * written as CSV.  Memory is bounded by one chunk of input, one block of rows
 * and one output buffer.
 *
 * Output goes through out/sink: a temporary file beside OUT renamed when
 * complete (a failed run leaves no partial OUT), gzip or zstd by OUT's name.
 */
#include <errno.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "cli/cli.h"
#include "out/sink.h"
#include "io/number.h"
#include "io/reader.h"
#include "io/source.h"
#include "stats/pca.h"
#include "summary/summary.h"

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
    char delim_opt;            /* --delim, 0 = detect per file */
    char **carry;              /* carried column names */
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
    char err[1024];
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
    if (!pj->name) { snprintf(pj->err, sizeof pj->err, "out of memory"); return -1; }
    for (size_t j = 0; j < pj->r->p; j++) {
        const char *name = pj->s->cols[pj->r->cols[j]].name;
        size_t at = header_find(pj, f, nf, name);
        if (at == SIZE_MAX) {
            snprintf(pj->err, sizeof pj->err,
                     "%s: line 1: no column named '%s' in the header (the PCA uses it)", path, name);
            return -1;
        }
        pj->field_of[j] = at;
    }
    for (size_t c = 0; c < pj->ncarry; c++) {
        size_t at = header_find(pj, f, nf, pj->carry[c]);
        if (at == SIZE_MAX) {
            snprintf(pj->err, sizeof pj->err, "%s: line 1: --carry: no column named '%s'%s", path,
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
        snprintf(pj->err, sizeof pj->err, "write failed");
        return EXIT_FAILED;
    }
    return 0;
}

/* Streams one data file.  Returns 0, or an exit code with pj->err set. */
static int project_file(projector *pj, const char *path)
{
    source *src = source_open(path, pj->err, sizeof pj->err);
    if (!src) return EXIT_INPUT;
    reader_start(pj->rd, path, 1, pj->delim_opt, 0);
    int rc = 0, at_first = 1;
    while (!rc) {
        reader_record rec;
        reader_status rs = reader_next(pj->rd, &rec);
        if (rs == READER_RECORD) {
            if (at_first) {
                at_first = 0;
                if (map_header(pj, path, rec.fields, rec.nfields) != 0) { rc = EXIT_INPUT; break; }
                if (pj->header) continue;
            }
            rc = project_record(pj, rec.fields, rec.nfields);
        } else if (rs == READER_CHUNK_END) {
            /* Carried fields point into the chunk: finish the block with it. */
            if (flush_block(pj) != 0) {
                snprintf(pj->err, sizeof pj->err, "write failed");
                rc = EXIT_FAILED;
            }
        } else if (rs == READER_WANT) {
            if (reader_pull(pj->rd, src) < 0) rs = READER_ERROR;
        } else if (rs == READER_END) {
            break;
        }
        if (rs == READER_ERROR) {
            snprintf(pj->err, sizeof pj->err, "%s", reader_error(pj->rd));
            rc = EXIT_INPUT;
        }
    }
    if (!rc && at_first) {
        snprintf(pj->err, sizeof pj->err, "%s: no records (empty input)", path);
        rc = EXIT_INPUT;
    }
    source_close(src);
    return rc;
}

/* ---- the command -------------------------------------------------------- */


int cmd_project(int argc, char **argv)
{
    const char *pca_path = NULL, *out_path = NULL, *delim_s = NULL, *carry_s = NULL;
    const char *basis = NULL, *cols = NULL, *exclude = NULL, *keep = NULL;
    const char *k_s = NULL, *share_s = NULL, *numshare_s = NULL;
    const char *chunk = NULL, *maxrec = NULL;
    int with_target = 0, no_header = 0;
    const cli_option opts[] = {
        {"pca", 0, "FILE.sheaf", "summary of the data the components come from (required)",
         &pca_path, NULL},
        {"output", 'o', "OUT", "file to write (.gz: gzip, .zst: zstd; default: standard output)",
         &out_path, NULL},
        {"carry", 0, "A,B,..", "copy these columns (IDs, the target) in front of the scores",
         &carry_s, NULL},
        {"k", 'k', "N", "components to score (default: the Kaiser rule's count)", &k_s, NULL},
        {"share", 0, "P", "score the fewest components reaching this cumulative share",
         &share_s, NULL},
        {"basis", 0, "B", "correlation (default) or covariance", &basis, NULL},
        {"columns", 0, "A,B,..", "use these columns instead of the automatic choice", &cols, NULL},
        {"keep-list", 0, "FILE", "use the columns named in FILE (one per line)", &keep, NULL},
        {"exclude", 0, "A,B,..", "leave these columns out", &exclude, NULL},
        {"with-target", 0, NULL, "keep the summary's target column in the automatic choice",
         NULL, &with_target},
        {"numeric-share", 0, "P", "share of parsing cells that makes a column numeric (default 0.99)",
         &numshare_s, NULL},
        {"delim", 'd', "CHAR", "field delimiter: , ; | or tab (default: detected per file)",
         &delim_s, NULL},
        {"no-header", 0, NULL, "first row is data; columns are named col1..colN", NULL, &no_header},
        {"chunk-size", 0, "SIZE", "bytes per chunk, e.g. 4M (default 4 MiB)", &chunk, NULL},
        {"max-record", 0, "SIZE", "longest record accepted (default 64 MiB)", &maxrec, NULL},
        {0},
    };
    const cli_command cmd = {
        "project", "DATA... --pca FILE.sheaf [-o OUT] [--k N | --share P] [--carry COLS]",
        "Reads each DATA file again and writes, for every row, its scores on the leading\n"
        "principal components of the summary (the same components `sheaf pca` reports\n"
        "with the same options) as CSV. Each value is standardised with the summary's\n"
        "mean and sample standard deviation (centred only with --basis covariance); a\n"
        "missing or non-numeric cell counts as the mean. A failed run writes nothing.",
        opts};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc) { free(pos); return rc == 1 ? EXIT_DONE : rc; }
    rc = EXIT_USAGE;
    summary *s = NULL;
    pca_result *r = NULL;
    char *carry_buf = NULL;
    char err[1024];
    projector pj;
    memset(&pj, 0, sizeof pj);
    sink *out = NULL;
    if (npos == 0) { cli_error("project", "no data files (see sheaf project --help)"); goto done; }
    if (!pca_path) { cli_error("project", "--pca FILE.sheaf is required"); goto done; }
    if (delim_s && cli_parse_delim(delim_s, &pj.delim_opt) != 0) {
        cli_error("project", "--delim must be one character or 'tab', got '%s'", delim_s);
        goto done;
    }
    if (carry_s) {
        carry_buf = strdup(carry_s);
        pj.carry = calloc(strlen(carry_s) / 2 + 2, sizeof *pj.carry);
        if (!carry_buf || !pj.carry) { cli_error("project", "out of memory"); rc = EXIT_RESOURCE; goto done; }
        for (char *t = strtok(carry_buf, ","); t; t = strtok(NULL, ",")) pj.carry[pj.ncarry++] = t;
    }
    const cli_components cc = {basis, k_s, share_s, numshare_s, cols, exclude, keep, with_target};
    rc = cli_fit_components("project", pca_path, &cc, &s, &r, &pj.k);
    if (rc != EXIT_DONE) goto done;
    rc = EXIT_USAGE;
    pj.s = s;
    pj.r = r;
    pj.header = !no_header;
    reader_missing_init(&pj.missing, s->opt.missing, s->opt.n_missing);
    reader_options ro;
    reader_options_defaults(&ro);
    if (cli_parse_reading("project", chunk, maxrec, &ro.chunk_bytes, &ro.max_record_bytes)) goto done;
    ro.delim = pj.delim_opt;
    pj.field_of = malloc(r->p * sizeof *pj.field_of);
    pj.carry_field = malloc((pj.ncarry + 1) * sizeof *pj.carry_field);
    pj.x = malloc(BLOCK_ROWS * r->p * sizeof *pj.x);
    pj.scores = malloc(BLOCK_ROWS * pj.k * sizeof *pj.scores);
    pj.carried = malloc((BLOCK_ROWS * pj.ncarry + 1) * sizeof *pj.carried);
    pj.row_bytes = pj.k * 26 + 2;
    pj.rd = reader_create(&ro);
    if (!pj.field_of || !pj.carry_field || !pj.x || !pj.scores || !pj.carried || !pj.rd) {
        cli_error("project", "out of memory");
        rc = EXIT_RESOURCE;
        goto done;
    }
    out = sink_open(out_path, err, sizeof err);
    if (!out) {
        cli_error("project", "%s", err);
        rc = EXIT_FAILED;
        goto done;
    }
    pj.out = out;
    /* Header row: carried names, then PC1..PCk. */
    {
        size_t need = pj.k * 24 + 2;
        for (size_t c = 0; c < pj.ncarry; c++) need += 2 * strlen(pj.carry[c]) + 3;
        char *d0 = sink_reserve(out, need), *d = d0;
        if (d) {
            for (size_t c = 0; c < pj.ncarry; c++) {
                if (c) *d++ = ',';
                d = put_field(d, pj.carry[c], strlen(pj.carry[c]));
            }
            for (size_t c = 0; c < pj.k; c++)
                d += sprintf(d, "%sPC%zu", c || pj.ncarry ? "," : "", c + 1);
            *d++ = '\n';
            sink_commit(out, (size_t)(d - d0));
        }
    }
    rc = EXIT_DONE;
    for (size_t i = 0; i < npos && rc == EXIT_DONE; i++) rc = project_file(&pj, pos[i]);
    if (rc != EXIT_DONE) cli_error("project", "%s", pj.err);
done:
    if (out && rc != EXIT_DONE) {
        sink_abort(out);
    } else if (out && sink_close(out, err, sizeof err) != 0) {
        cli_error("project", "%s", err);
        rc = EXIT_FAILED;
    }
    reader_free(pj.rd);
    free(pj.name);
    free(pj.field_of);
    free(pj.carry_field);
    free(pj.x);
    free(pj.scores);
    free(pj.carried);
    free(pj.carry);
    free(carry_buf);
    pca_result_free(r);
    summary_free(s);
    free(pos);
    return rc;
}
