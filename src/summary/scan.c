/* scan: see scan.h.
 *
 * Per cell: missing test (length mask, then the spellings), XXH3-64 of the
 * raw text into the value table and the HyperLogLog, then, unless the column
 * is declared categorical, the decimal parse.  A finite number becomes a
 * deviation from the column's reference decimal (number_difference), buffered
 * per column and added to the accumulators SUMMARY_BLOCK_ROWS rows at a time.
 */
#include "summary/scan.h"

#include <math.h>
#include <sys/stat.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#define XXH_INLINE_ALL
#include <xxhash.h>

#include "io/chunk.h"
#include "io/csv.h"
#include "io/number.h"
#include "io/number_simd.h"
#include "io/source.h"

_Static_assert(CHUNK_PADDING >= CSV_READ_AHEAD && CHUNK_PADDING >= NUMBER_READ_AHEAD,
               "chunks must be readable past their end");

void scan_options_defaults(scan_options *o)
{
    memset(o, 0, sizeof *o);
    summary_options_defaults(&o->opt);
    o->header = 1;
    o->chunk_bytes = 4u << 20;
    o->max_record_bytes = 64u << 20;
}

/* Per-column buffer of the current block of rows.  The hot loop only
 * classifies, hashes and parses; the accumulators are fed a whole block of
 * one column at a time, which keeps each column's tables in cache. */
typedef struct {
    int field;           /* field index in the record */
    size_t ncells;       /* present cells buffered */
    uint64_t *hash;      /* XXH3-64 of each cell's text */
    const char **text;   /* each cell's text (inside the current chunk) */
    uint32_t *len;       /* each cell's length */
    uint16_t *cell_row;  /* row in the block of each cell */
    size_t nnum;         /* finite numbers buffered */
    double *dev;         /* deviation of each number from the reference */
    double *val;         /* each number */
    uint16_t *num_row;   /* row in the block of each number */
    /* The column's reference decimal, unpacked for the inline deviation
     * (valid once the column's moments have their reference). */
    number_ref ref;
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
    size_t missing_len[SUMMARY_MAX_MISSING]; /* length of each spelling */
    /* Bit L of missing_cand[b]: a cell of length L (< 64) starting with
     * byte b may be missing (empty, or some spelling has that length and
     * first byte); every other cell is present after one test. */
    uint64_t missing_cand[256];
    uint64_t line_base;    /* lines before the current chunk */
    uint64_t total_bytes;  /* raw bytes of all sources, 0 if unknown */
    uint64_t done_bytes;   /* raw bytes of finished sources */
    int at_file_start;     /* the current source starts at byte 0 of its file */
    int header_only;       /* read only the first record (a shard's header) */
    uint64_t stop_at;      /* records starting here or later are another shard's */
    uint64_t shard_start, shard_end; /* the byte range scanned, for provenance */
    /* The current block of rows. */
    size_t block_rows;     /* rows buffered */
    uint32_t row_cell[SUMMARY_BLOCK_ROWS];   /* bucket cell of each row */
    uint32_t row_class[SUMMARY_BLOCK_ROWS];  /* class 1..K, 0 = none */
    double row_y[SUMMARY_BLOCK_ROWS];        /* regression target (work frame) */
    unsigned char row_has_y[SUMMARY_BLOCK_ROWS];
    uint32_t cells_tmp[SUMMARY_BLOCK_ROWS];  /* cells of one lane's numbers */
    double *como_x;        /* ncomo x block, centred values */
    double *como_mask;     /* ncomo x block, presence */
    double *como_center;   /* ncomo */
    unsigned char *como_complete; /* ncomo */
    int simd;              /* number_simd_usable(): cells sit in padded chunks */
    char *err;
    size_t errlen;
} scanner;

/* p[0] is read even when len is 0: cells sit in padded chunks. */
static inline int is_missing(const scanner *sc, const char *p, uint32_t len)
{
    unsigned char c0 = (unsigned char)p[0];
    if (len >= 64 || !(sc->missing_cand[c0] >> len & 1)) return 0;
    if (len == 0) return 1;
    const summary_options *o = &sc->o->opt;
    for (uint32_t i = 0; i < o->n_missing; i++)
        if (sc->missing_len[i] == len && o->missing[i][0] == p[0] &&
            memcmp(o->missing[i], p, len) == 0)
            return 1;
    return 0;
}

static void class_add(class_moments *m, double x)
{
    m->n++;
    double d = x - m->mean;
    m->mean += d / (double)m->n;
    m->m2 += d * (x - m->mean);
}

/* Feeds one column's buffered block to its accumulators. */
static int flush_lane(scanner *sc, summary_column *c, lane *l)
{
    int classes = sc->work->has_classes;
    /* The sketch only matters once the exact table overflows: until then it
     * stays empty and the table's keys stand in for it (summary.h). */
    int sketching = values_overflowed(c->vals);
    for (size_t i = 0; i < l->ncells;) {
        long k = values_add_many(c->vals, l->hash + i, l->text + i, l->len + i, l->ncells - i,
                                 !sketching);
        if (k < 0) return -1;
        if (sketching) {
            hll_add_many(c->distinct, l->hash + i, (size_t)k);
        } else if (values_overflowed(c->vals)) {
            /* The cell that overflowed the table starts the sketch. */
            summary_column_fold_keys(c->distinct, c->vals);
            sketching = 1;
            hll_add(c->distinct, l->hash[i + (size_t)k - 1]);
        }
        i += (size_t)k;
    }
    /* A per-value table only serves a categorical column whose value table
     * stayed exact; once the running value table overflowed it never will. */
    if (c->cross && !values_overflowed(sc->run->cols[l - sc->lanes].vals)) {
        for (size_t i = 0; i < l->ncells; i++) {
            if (i + 8 < l->ncells) { /* the tables outgrow the caches */
                size_t r8 = l->cell_row[i + 8];
                crosstab_prefetch(c->cross, l->hash[i + 8],
                                  classes ? sc->row_class[r8] : sc->row_cell[r8]);
            }
            size_t r = l->cell_row[i];
            int rc = 0;
            if (classes) {
                if (sc->row_class[r]) rc = crosstab_add_count(c->cross, l->hash[i], sc->row_class[r]);
            } else if (sc->row_has_y[r]) {
                rc = crosstab_add_values_in(c->cross, l->hash[i], sc->row_cell[r], sc->row_y[r], 1);
            }
            if (rc != 0) return -1;
        }
    }
    l->ncells = 0;
    if (l->nnum) {
        moments_add_block(&c->mom, l->dev, l->nnum);
        double lo = c->mom.min, hi = c->mom.max;
        uint64_t zeros = 0, integers = 0;
        for (size_t i = 0; i < l->nnum; i++) {
            double x = l->val[i];
            lo = x < lo ? x : lo;
            hi = x > hi ? x : hi;
            zeros += x == 0;
            /* Integer-valued, without branches: every double of magnitude
             * 2^53 or more is, and those are tested as 0. */
            double a = fabs(x), t = a < 9007199254740992.0 ? a : 0.0;
            integers += (double)(int64_t)t == t;
        }
        c->mom.min = lo;
        c->mom.max = hi;
        c->zeros += zeros;
        c->integers += integers;
        if (sc->o->opt.target)
            for (size_t i = 0; i < l->nnum; i++) sc->cells_tmp[i] = sc->row_cell[l->num_row[i]];
        if (buckets_add_many(c->bins, l->val, sc->o->opt.target ? sc->cells_tmp : NULL, l->nnum) != 0)
            return -1;
        if (c->cls)
            for (size_t i = 0; i < l->nnum; i++) {
                uint32_t k = sc->row_class[l->num_row[i]];
                if (k) class_add(&c->cls[k - 1], l->dev[i]);
            }
    }
    return 0;
}

/* Centres the block's numbers per co-moment column and feeds the running
 * co-moment matrix (the block is the unit merged into it). */
static int flush_comoments(scanner *sc)
{
    summary *w = sc->work, *run = sc->run;
    size_t rows = sc->block_rows, p = run->ncomo;
    if (!p || !rows) return 0;
    for (size_t k = 0; k < p; k++) {
        size_t j = run->como_col[k];
        const lane *l = &sc->lanes[j];
        const moments *m = &w->cols[j].mom;
        sc->como_complete[k] = l->nnum == rows;
        sc->como_center[k] = 0;
        double *x = sc->como_x + k * rows, *msk = sc->como_mask + k * rows;
        if (l->nnum < rows) { /* missing cells are 0 in both; complete columns overwrite all */
            memset(x, 0, rows * sizeof *x);
            memset(msk, 0, rows * sizeof *msk);
        }
        if (!l->nnum) continue;
        double shift = 0;
        if (!run->como_ref_set[k]) {
            run->como_ref[k] = m->ref;
            run->como_ref_set[k] = 1;
        } else {
            shift = number_difference(&m->ref, &run->como_ref[k], NULL);
        }
        double sum = 0;
        for (size_t i = 0; i < l->nnum; i++) sum += l->dev[i];
        double mean = sum / (double)l->nnum;
        sc->como_center[k] = mean + shift;
        for (size_t i = 0; i < l->nnum; i++) {
            x[l->num_row[i]] = l->dev[i] - mean;
            msk[l->num_row[i]] = 1.0;
        }
    }
    return comoment_add_block(run->como, sc->como_x, sc->como_mask, sc->como_center,
                              sc->como_complete, rows);
}

static void decode_lane(scanner *sc, summary_column *c, lane *l);

static int flush_lanes(scanner *sc)
{
    if (!sc->work) return 0;
    for (size_t j = 0; j < sc->work->ncols; j++) decode_lane(sc, &sc->work->cols[j], &sc->lanes[j]);
    if (flush_comoments(sc) != 0) return -1;
    for (size_t j = 0; j < sc->work->ncols; j++) {
        lane *l = &sc->lanes[j];
        if (flush_lane(sc, &sc->work->cols[j], l) != 0) return -1;
        l->nnum = 0;
    }
    sc->block_rows = 0;
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

/* Records one cell of column j: missing cells are counted, the others wait
 * in the column's lane for decode_lane. */
static inline void cell(scanner *sc, size_t j, const char *p, uint32_t len)
{
    if (is_missing(sc, p, len)) { sc->work->cols[j].missing++; return; }
    lane *l = &sc->lanes[j];
    size_t k = l->ncells;
    l->text[k] = p;
    l->len[k] = len;
    l->cell_row[k] = (uint16_t)sc->block_rows;
    l->ncells = k + 1;
}

/* The numbers of a lane's cells: parse (an expression of text, length and
 * &d giving a number_kind) for each cell, then a finite number becomes a
 * deviation from the column's reference decimal (number_deviation, on the
 * reference unpacked in the lane).  A macro, so that the SSSE3 variant below
 * inlines its parser. */
#define DECODE_NUMBERS(parse)                                                                  \
    do {                                                                                       \
        size_t nnum = l->nnum;                                                                 \
        for (size_t i = 0; i < n; i++) {                                                       \
            number_decimal d;                                                                  \
            switch (parse(l->text[i], l->len[i], &d)) {                                        \
            case NUMBER_FINITE: {                                                              \
                if (!c->mom.has_ref) {                                                         \
                    moments_set_ref(&c->mom, &d);                                              \
                    number_ref_set(&l->ref, &d);                                               \
                }                                                                              \
                l->dev[nnum] = number_deviation(&d, &l->ref);                                  \
                l->val[nnum] = d.value;                                                        \
                l->num_row[nnum] = l->cell_row[i];                                             \
                nnum++;                                                                        \
                break;                                                                         \
            }                                                                                  \
            case NUMBER_NONFINITE: c->non_finite++; break;                                     \
            default:                                                                           \
                c->non_numeric++;                                                              \
                keep_example(c, l->text[i], l->len[i]);                                        \
            }                                                                                  \
        }                                                                                      \
        l->nnum = nnum;                                                                        \
    } while (0)

static void decode_numbers(summary_column *c, lane *l, size_t n)
{
    DECODE_NUMBERS(number_parse);
}

#if defined(NUMBER_SIMD)
/* Cells sit in padded chunks, so the SIMD parser may read past them. */
__attribute__((target("ssse3"))) static void decode_numbers_ssse3(summary_column *c, lane *l,
                                                                  size_t n)
{
    DECODE_NUMBERS(number_parse_padded);
}
#endif

/* Hashes and parses the buffered cells of one column, one column at a time
 * (each column's cells look alike, so the branches of the hash and the
 * parser predict well). */
static void decode_lane(scanner *sc, summary_column *c, lane *l)
{
    const size_t n = l->ncells;
    for (size_t i = 0; i < n; i++) l->hash[i] = XXH3_64bits(l->text[i], l->len[i]);
    if (c->mode == COLUMN_CATEGORICAL) { c->non_numeric += n; return; }
#if defined(NUMBER_SIMD)
    if (sc->simd) { decode_numbers_ssse3(c, l, n); return; }
#endif
    (void)sc;
    decode_numbers(c, l, n);
}

/* Every column's cell of the current record (sc->fields, nf of them).  Kept
 * out of line: inside the record loop the compiler runs out of registers. */
static __attribute__((noinline)) void row_cells(scanner *sc, size_t nf)
{
    summary *w = sc->work;
    const csv_field *fields = sc->fields;
    const lane *lanes = sc->lanes;
    const size_t ncols = w->ncols;
    for (size_t j = 0; j < ncols; j++) {
        size_t fi = (size_t)lanes[j].field;
        if (fi >= nf) { w->cols[j].missing++; continue; }
        cell(sc, j, fields[fi].ptr, fields[fi].len);
    }
}

/* The target cell of the current row: its class, or its regression cell and
 * value.  Returns SCAN_OK or an error (too many classes for a text target). */
static scan_status target_cell(scanner *sc, const char *path, uint64_t line, const char *p,
                               uint32_t len)
{
    size_t r = sc->block_rows;
    sc->row_cell[r] = 0;
    sc->row_class[r] = 0;
    sc->row_has_y[r] = 0;
    if (!p || is_missing(sc, p, len)) return SCAN_OK;
    summary *run = sc->run, *w = sc->work;
    summary_column *tc = &w->cols[run->target];
    number_decimal d;
    int finite = tc->mode != COLUMN_CATEGORICAL && number_parse(p, len, &d) == NUMBER_FINITE;
    if (!finite) w->target_text++;
    if (run->has_classes) {
        uint32_t k = summary_class_of(run, XXH3_64bits(p, len), p, len, finite ? &d : NULL);
        if (k) {
            run->class_rows[k - 1]++;
            sc->row_cell[r] = sc->row_class[r] = k;
            return SCAN_OK;
        }
        /* One class too many. */
        int numeric = finite && run->opt.task != TASK_CLASSIFY;
        for (uint32_t c = 0; numeric && c < run->nclasses; c++) numeric = run->class_numeric[c];
        if (!numeric) {
            snprintf(sc->err, sc->errlen,
                     "%s: line %llu: target '%s' has more than %u classes; raise --max-classes "
                     "or use --task regress",
                     path, (unsigned long long)line, run->opt.target, run->opt.max_classes);
            return SCAN_ERR_INPUT;
        }
        /* A numeric target: it continues as a regression target. */
        if (flush_lanes(sc) != 0 || (w != run && summary_drop_classes(w, run) != 0) ||
            summary_drop_classes(run, run) != 0) {
            snprintf(sc->err, sc->errlen, "out of memory");
            return SCAN_ERR_MEMORY;
        }
        r = 0;
        sc->row_cell[r] = sc->row_class[r] = sc->row_has_y[r] = 0;
    }
    if (finite) {
        if (!tc->mom.has_ref) moments_set_ref(&tc->mom, &d);
        sc->row_cell[r] = summary_target_cell(d.value);
        sc->row_y[r] = number_difference(&d, &tc->mom.ref, NULL);
        sc->row_has_y[r] = 1;
    }
    return SCAN_OK;
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
    if (o->opt.target) {
        size_t t = 0;
        while (t < n && strcmp(cols[t], o->opt.target) != 0) t++;
        if (t == n) {
            snprintf(sc->err, sc->errlen, "--target: no column named '%s' %s", o->opt.target,
                     in_list(ign, nign, o->opt.target) || nsel > 0 ? "among the scanned columns"
                                                                   : "in the header");
            st = SCAN_ERR_USAGE;
            goto done;
        }
    }
    size_t ncomo = 0;
    for (size_t j = 0; j < n; j++) ncomo += modes[j] != COLUMN_CATEGORICAL;
    uint64_t need = summary_comoment_bytes(ncomo);
    if (o->mem_limit_bytes && need > o->mem_limit_bytes) {
        snprintf(sc->err, sc->errlen,
                 "the co-moment matrix of %zu numeric columns needs %.0f MiB, above the %.0f MiB "
                 "limit (--mem); restrict the columns with --columns, --ignore or --categorical, "
                 "or raise --mem",
                 ncomo, need / 1048576.0, o->mem_limit_bytes / 1048576.0);
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    sc->run = summary_create(&o->opt, n, cols, modes, 1);
    /* One thread feeds the running set directly: a chunk-local copy of every
     * accumulator (the unit a worker thread would own) would double the
     * memory of wide tables, and merging it back is the same operation as
     * merging two summaries, which summary_merge already provides. */
    sc->work = sc->run;
    if (sc->run) {
        size_t cells = (sc->run->ncomo ? sc->run->ncomo : 1) * SUMMARY_BLOCK_ROWS;
        sc->como_x = malloc(cells * sizeof *sc->como_x);
        sc->como_mask = malloc(cells * sizeof *sc->como_mask);
        sc->como_center = malloc((sc->run->ncomo + 1) * sizeof *sc->como_center);
        sc->como_complete = malloc(sc->run->ncomo + 1);
    }
    sc->lanes = calloc(n ? n : 1, sizeof *sc->lanes);
    sc->file_fields = nnames;
    /* Keep the first record's fields: without a header it is data. */
    csv_field *fields = realloc(sc->fields, (nnames + 1) * sizeof *fields);
    if (fields) sc->fields = fields;
    if (!sc->run || !sc->work || !sc->lanes || !fields || !sc->como_x || !sc->como_mask ||
        !sc->como_center || !sc->como_complete) {
        snprintf(sc->err, sc->errlen, "out of memory");
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    for (size_t j = 0; j < n; j++) {
        lane *l = &sc->lanes[j];
        l->field = field_of[j];
        l->hash = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->hash);
        l->text = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->text);
        l->len = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->len);
        l->cell_row = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->cell_row);
        l->dev = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->dev);
        l->val = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->val);
        l->num_row = malloc(SUMMARY_BLOCK_ROWS * sizeof *l->num_row);
        if (!l->hash || !l->text || !l->len || !l->cell_row || !l->dev || !l->val || !l->num_row) {
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

/* Tokenizes one chunk into the chunk-local set and merges it.  Records that
 * start at or after sc->stop_at (relative to the source's first byte; 0 = no
 * limit) end the source: *done is set. */
static scan_status process_chunk(scanner *sc, const char *path, chunk *ch, int *at_first,
                                 uint64_t *rows, int *done)
{
    char *data = ch->data;
    size_t len = ch->len;
    if (ch->offset == 0 && sc->at_file_start) {
        size_t bom = csv_bom_length(data, len);
        data += bom;
        len -= bom;
        if (!sc->delim) sc->delim = sc->o->delim ? sc->o->delim : csv_detect_delimiter(data, len);
    }
    csv_reader r;
    csv_reader_init_padded(&r, data, len, sc->delim);
    size_t maxf = sc->file_fields ? sc->file_fields + 1 : 0;
    size_t used = ch->len; /* bytes of this chunk that belong to this scan */
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
        if (sc->stop_at && !*at_first &&
            ch->offset + (uint64_t)(r.record_start - ch->data) >= sc->stop_at) {
            *done = 1;
            used = (size_t)(r.record_start - ch->data); /* the rest is the next shard's */
            break;
        }
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
            if (sc->header_only) { *done = 1; used = 0; break; } /* shard 1 counts it */
            if (is_header) continue;
        }
        summary *w = sc->work;
        w->rows++;
        (*rows)++;
        if (nf != sc->file_fields) {
            scan_status st = ragged(sc, path, line, nf);
            if (st != SCAN_OK) return st;
        }
        if (w->target >= 0) {
            size_t fi = (size_t)sc->lanes[w->target].field;
            scan_status st = target_cell(sc, path, line, fi < nf ? sc->fields[fi].ptr : NULL,
                                         fi < nf ? sc->fields[fi].len : 0);
            if (st != SCAN_OK) return st;
        }
        row_cells(sc, nf);
        if (++sc->block_rows == SUMMARY_BLOCK_ROWS && flush_lanes(sc) != 0) {
            snprintf(sc->err, sc->errlen, "out of memory");
            return SCAN_ERR_MEMORY;
        }
    }
    sc->line_base += r.lines;
    if (sc->work) {
        if (flush_lanes(sc) != 0) {
            snprintf(sc->err, sc->errlen, "out of memory");
            return SCAN_ERR_MEMORY;
        }
        sc->work->bytes += used;
        if (sc->work != sc->run) {
            if (summary_merge(sc->run, sc->work, sc->err, sc->errlen) != SUMMARY_OK)
                return SCAN_ERR_MEMORY;
            summary_reset(sc->work);
            for (size_t j = 0; j < sc->work->ncols; j++) {
                buckets_reset_level(sc->work->cols[j].bins, buckets_level(sc->run->cols[j].bins));
                sc->lanes[j].ref.fast = 0; /* the reset moments take a new reference */
                sc->lanes[j].ref.exp10 = INT32_MIN;
            }
        }
    }
    return SCAN_OK;
}

/* Reads one source from byte `from` (0: the whole file, header first).  With
 * sc->header_only, stops after the first record. */
static scan_status scan_source(scanner *sc, chunker *ck, const char *path, uint64_t from)
{
    source *src = from ? source_open_at(path, from, sc->err, sc->errlen)
                       : source_open(path, sc->err, sc->errlen);
    if (!src) return SCAN_ERR_INPUT;
    chunker_start(ck, src);
    if (sc->stop_at) chunker_set_limit(ck, sc->stop_at);
    sc->line_base = 0;
    sc->at_file_start = from == 0;
    int at_first = from == 0, done = 0;
    /* A shard does not know how many lines precede it: its messages count
     * lines from its first record, and say so. */
    char shown[4200];
    if (from) snprintf(shown, sizeof shown, "%s (shard; lines counted from byte %llu)", path,
                       (unsigned long long)from);
    else snprintf(shown, sizeof shown, "%s", path);
    uint64_t rows = 0;
    scan_status st = SCAN_OK;
    while (!done) {
        chunk ch;
        int rc = chunker_next(ck, &ch, sc->err, sc->errlen);
        if (rc < 0) { st = SCAN_ERR_INPUT; break; }
        if (rc == 0) break;
        st = process_chunk(sc, shown, &ch, &at_first, &rows, &done);
        if (st != SCAN_OK) break;
        if (sc->o->progress)
            sc->o->progress(sc->o->progress_ctx, sc->done_bytes + source_raw_offset(src) - from,
                            sc->total_bytes);
    }
    if (st == SCAN_OK && at_first && !sc->run) {
        snprintf(sc->err, sc->errlen, "%s: no records (empty input)", path);
        st = SCAN_ERR_INPUT;
    }
    if (st == SCAN_OK && !sc->header_only) {
        summary_source rec;
        memset(&rec, 0, sizeof rec);
        rec.path = (char *)path;
        snprintf(rec.format, sizeof rec.format, "%s", source_format_name(source_kind(src)));
        rec.size_bytes = source_raw_size(src);
        rec.mtime = source_mtime(src);
        rec.fingerprint = source_fingerprint(src);
        rec.raw_bytes = source_raw_offset(src) - from;
        rec.start_byte = sc->shard_start;
        rec.end_byte = sc->shard_end;
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

/* --shard I/N of one plain file: the header from byte 0, then the records
 * that start in [size (I-1)/N, size I/N). */
static scan_status scan_shard(scanner *sc, chunker *ck, const char *path)
{
    const scan_options *o = sc->o;
    struct stat st;
    if (strcmp(path, "-") == 0 || stat(path, &st) != 0 || !S_ISREG(st.st_mode)) {
        snprintf(sc->err, sc->errlen, "%s: --shard needs a regular file (not a pipe)", path);
        return SCAN_ERR_USAGE;
    }
    uint64_t size = (uint64_t)st.st_size;
    uint64_t lo = size * (o->shard_index - 1) / o->shard_count;
    uint64_t hi = size * o->shard_index / o->shard_count;
    sc->shard_start = lo;
    sc->shard_end = hi;
    /* The header, and a check that the file is plain. */
    source *probe = source_open(path, sc->err, sc->errlen);
    if (!probe) return SCAN_ERR_INPUT;
    source_format kind = source_kind(probe);
    source_close(probe);
    if (kind != SOURCE_PLAIN) {
        snprintf(sc->err, sc->errlen,
                 "%s: --shard needs an uncompressed file, this one is %s; split the data into "
                 "several compressed files instead and scan each as a shard",
                 path, source_format_name(kind));
        return SCAN_ERR_USAGE;
    }
    uint64_t first = 0;
    if (hi == 0) lo = 1; /* more shards than bytes: [0, 0) holds no record start */
    if (lo > 0) {
        sc->header_only = 1;
        scan_status hs = scan_source(sc, ck, path, 0);
        sc->header_only = 0;
        if (hs != SCAN_OK) return hs;
        if (chunk_find_record_start(path, lo, &first, sc->err, sc->errlen) != 0)
            return SCAN_ERR_INPUT;
    }
    if (first >= hi && lo > 0) {
        /* No record starts in this range: an empty shard. */
        summary_source rec;
        memset(&rec, 0, sizeof rec);
        rec.path = (char *)path;
        snprintf(rec.format, sizeof rec.format, "plain");
        rec.size_bytes = size;
        rec.mtime = (int64_t)st.st_mtime;
        rec.fingerprint = XXH3_64bits(NULL, 0);
        rec.start_byte = sc->shard_start;
        rec.end_byte = sc->shard_end;
        return summary_add_source(sc->run, &rec) == 0 ? SCAN_OK : SCAN_ERR_MEMORY;
    }
    sc->stop_at = hi - first;
    return scan_source(sc, ck, path, first);
}

scan_status scan_files(const scan_options *o, const char *const *paths, size_t npaths,
                       summary **out, char *err, size_t errlen)
{
    *out = NULL;
    scanner sc;
    memset(&sc, 0, sizeof sc);
    sc.o = o;
    sc.simd = number_simd_usable();
    sc.err = err;
    sc.errlen = errlen;
    for (uint32_t i = 0; i < o->opt.n_missing; i++) {
        size_t l = strlen(o->opt.missing[i]);
        sc.missing_len[i] = l;
        unsigned char c0 = (unsigned char)o->opt.missing[i][0];
        if (l && l < 64) sc.missing_cand[c0] |= 1ull << l;
    }
    for (int b = 0; b < 256; b++) sc.missing_cand[b] |= 1; /* the empty cell */
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
    if (o->shard_count) {
        if (npaths != 1) {
            snprintf(err, errlen, "--shard reads exactly one file (got %zu)", npaths);
            st = SCAN_ERR_USAGE;
        } else if (st == SCAN_OK) {
            st = scan_shard(&sc, ck, paths[0]);
        }
    }
    for (size_t i = 0; !o->shard_count && st == SCAN_OK && i < npaths; i++)
        st = scan_source(&sc, ck, paths[i], 0);
    chunker_free(ck);
    if (sc.lanes)
        for (size_t j = 0; sc.work && j < sc.work->ncols; j++) {
            lane *l = &sc.lanes[j];
            free(l->hash); free(l->text); free(l->len); free(l->cell_row);
            free(l->dev); free(l->val); free(l->num_row);
        }
    free(sc.lanes);
    free(sc.fields);
    if (sc.header)
        for (size_t i = 0; i < sc.file_fields; i++) free(sc.header[i]);
    free(sc.header);
    free(sc.first_path);
    free(sc.como_x);
    free(sc.como_mask);
    free(sc.como_center);
    free(sc.como_complete);
    if (sc.work != sc.run) summary_free(sc.work);
    if (st == SCAN_OK) *out = sc.run;
    else summary_free(sc.run);
    return st;
}
