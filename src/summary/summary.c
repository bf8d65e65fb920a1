/* summary: the accumulator set of one table (see summary.h): options, the
 * per-column accumulators, the class dictionary, sealing, and the read-back
 * helpers.  The merge is in merge.c, the file format in format.c
 * (docs/summary-format.md).
 */
#include "summary/column.h"
#include "summary/summary.h"

#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const char *const DEFAULT_MISSING[] = {"NA", "N/A", "null", "NULL", "None", "-", "?"};

void summary_options_defaults(summary_options *o)
{
    memset(o, 0, sizeof *o);
    o->max_levels = 1024;
    o->label_bytes = 32;
    o->bucket_budget = 2048;
    o->n_missing = sizeof DEFAULT_MISSING / sizeof *DEFAULT_MISSING;
    for (uint32_t i = 0; i < o->n_missing; i++) o->missing[i] = strdup(DEFAULT_MISSING[i]);
    o->max_classes = 256;
    o->missing_any_case = 1;
}

void summary_options_free(summary_options *o)
{
    for (uint32_t i = 0; i < o->n_missing; i++) free(o->missing[i]);
    o->n_missing = 0;
    free(o->target);
    o->target = NULL;
}

int summary_options_copy(summary_options *dst, const summary_options *src)
{
    *dst = *src;
    dst->target = NULL;
    for (uint32_t i = 0; i < src->n_missing; i++) {
        dst->missing[i] = strdup(src->missing[i]);
        if (!dst->missing[i]) { dst->n_missing = i; return -1; }
    }
    if (src->target && !(dst->target = strdup(src->target))) return -1;
    return 0;
}

/* ---- accumulator set ---------------------------------------------------- */

uint64_t summary_comoment_bytes(size_t ncomo)
{
    return comoment_bytes(ncomo, SUMMARY_BLOCK_ROWS);
}

static int class_reserve(summary *s, uint32_t need)
{
    if (need <= s->class_cap) return 0;
    uint32_t cap = s->class_cap ? s->class_cap * 2 : 8;
    while (cap < need) cap *= 2;
    uint64_t *h = realloc(s->class_hash, cap * sizeof *h);
    if (h) s->class_hash = h;
    char **l = realloc(s->class_label, cap * sizeof *l);
    if (l) s->class_label = l;
    uint64_t *r = realloc(s->class_rows, cap * sizeof *r);
    if (r) s->class_rows = r;
    number_decimal *d = realloc(s->class_dec, cap * sizeof *d);
    if (d) s->class_dec = d;
    unsigned char *n = realloc(s->class_numeric, cap);
    if (n) s->class_numeric = n;
    if (!h || !l || !r || !d || !n) return -1;
    s->class_cap = cap;
    return 0;
}

uint32_t summary_target_cell(summary *s, double y)
{
    return tcells_cell(&s->tcells, y);
}

int summary_column_catch_up(summary *s, summary_column *c, uint32_t epoch)
{
    if (c->tcell_epoch >= epoch) return 0;
    uint32_t map[SUMMARY_TARGET_CELLS + 2], len;
    tcells_map_since(&s->tcells, c->tcell_epoch, epoch, map, &len);
    if (column_remap_target_cells(c, map, len) != 0) return -1;
    c->tcell_epoch = epoch;
    return 0;
}

int summary_target_cells_settle(summary *s)
{
    if (tcells_canonical(&s->tcells) != 0) return -1;
    for (size_t i = 0; i < s->ncols; i++)
        if (summary_column_catch_up(s, &s->cols[i], s->tcells.epoch) != 0) return -1;
    tcells_free(&s->tcells);
    for (size_t i = 0; i < s->ncols; i++) s->cols[i].tcell_epoch = 0;
    return 0;
}

int summary_class_is_number(const summary *s, uint32_t c)
{
    if (s->class_numeric[c]) return 1;
    if (s->target < 0 || s->cols[s->target].mode == COLUMN_CATEGORICAL) return 0;
    number_decimal d;
    const char *label = s->class_label[c];
    return number_parse(label, strlen(label), &d) == NUMBER_NONFINITE;
}

int summary_mostly_numbers(uint64_t numbers, uint64_t text)
{
    /* In 128 bits, so that no count can wrap. */
    unsigned __int128 all = (unsigned __int128)numbers + text;
    return all > 0 && (unsigned __int128)numbers * 100 >= all * SUMMARY_TARGET_NUMBER_PERCENT;
}

int summary_classes_mostly_numbers(const summary *s, uint64_t more_numbers, uint64_t more_text)
{
    uint64_t numbers = more_numbers, text = more_text; /* rows: at most 2^53 */
    for (uint32_t c = 0; c < s->nclasses; c++) {
        if (summary_class_is_number(s, c)) numbers += s->class_rows[c];
        else text += s->class_rows[c];
    }
    return summary_mostly_numbers(numbers, text);
}

uint32_t summary_class_of(summary *s, uint64_t h, const char *text, size_t len,
                          const number_decimal *dec)
{
    for (uint32_t c = 0; c < s->nclasses; c++)
        if (s->class_hash[c] == h) return c + 1;
    return summary_append_class(s, h, text, len, dec) == 0 ? s->nclasses : 0;
}

int summary_append_class(summary *s, uint64_t h, const char *text, size_t len,
                         const number_decimal *dec)
{
    if (s->nclasses >= s->opt.max_classes || class_reserve(s, s->nclasses + 1) != 0) return -1;
    char *label = malloc(len + 1);
    if (!label) return -1;
    memcpy(label, text, len);
    label[len] = '\0';
    uint32_t c = s->nclasses++;
    s->class_hash[c] = h;
    s->class_label[c] = label;
    s->class_rows[c] = 0;
    s->class_numeric[c] = dec != NULL;
    memset(&s->class_dec[c], 0, sizeof s->class_dec[c]);
    if (dec) { /* as the file keeps it: 19 digits, no tail */
        s->class_dec[c] = *dec;
        s->class_dec[c].tail = 0;
        s->class_dec[c].tail_digits = 0;
    }
    return 0;
}

summary *summary_create(const summary_options *opt, size_t ncols, char *const *names,
                        const column_mode *modes, int with_comoments)
{
    summary *s = calloc(1, sizeof *s);
    if (!s) return NULL;
    s->target = -1;
    s->copy_prints = 1; /* a decoded file of an older version clears it */
    tcells_init(&s->tcells);
    if (summary_options_copy(&s->opt, opt) != 0) goto fail;
    if (opt->target) {
        for (size_t i = 0; i < ncols && s->target < 0; i++)
            if (strcmp(names[i], opt->target) == 0) s->target = (int)i;
        if (s->target < 0) goto fail;
        s->has_classes = opt->task != TASK_REGRESS;
    }
    s->cols = calloc(ncols ? ncols : 1, sizeof *s->cols);
    s->como_of = calloc(ncols ? ncols : 1, sizeof *s->como_of);
    s->como_col = calloc(ncols ? ncols : 1, sizeof *s->como_col);
    if (!s->cols || !s->como_of || !s->como_col) goto fail;
    s->ncols = ncols;
    for (size_t i = 0; i < ncols; i++) {
        summary_column *c = &s->cols[i];
        c->name = strdup(names[i]);
        c->mode = modes ? modes[i] : COLUMN_AUTO;
        if (!c->name || column_alloc(c, opt, s->has_classes) != 0) goto fail;
        s->como_of[i] = -1;
        if (c->mode != COLUMN_CATEGORICAL) {
            s->como_of[i] = (int)s->ncomo;
            s->como_col[s->ncomo++] = i;
        }
    }
    s->como_ref = calloc(s->ncomo ? s->ncomo : 1, sizeof *s->como_ref);
    s->como_ref_set = calloc(s->ncomo ? s->ncomo : 1, 1);
    if (!s->como_ref || !s->como_ref_set) goto fail;
    if (with_comoments && !(s->como = comoment_create(s->ncomo, SUMMARY_BLOCK_ROWS))) goto fail;
    return s;
fail:
    summary_free(s);
    return NULL;
}

void summary_free(summary *s)
{
    if (!s) return;
    for (size_t i = 0; i < s->ncols; i++) column_free(&s->cols[i]);
    free(s->cols);
    for (size_t i = 0; i < s->nsources; i++) free(s->sources[i].path);
    free(s->sources);
    for (uint32_t c = 0; c < s->nclasses; c++) free(s->class_label[c]);
    free(s->class_hash);
    free(s->class_label);
    free(s->class_rows);
    free(s->class_dec);
    free(s->class_numeric);
    free(s->como_col);
    free(s->como_of);
    comoment_free(s->como);
    free(s->como_ref);
    free(s->como_ref_set);
    tcells_free(&s->tcells);
    summary_options_free(&s->opt);
    free(s);
}

int summary_add_source(summary *s, const summary_source *src)
{
    summary_source *p = realloc(s->sources, (s->nsources + 1) * sizeof *p);
    if (!p) return -1;
    s->sources = p;
    p[s->nsources] = *src;
    p[s->nsources].path = strdup(src->path ? src->path : "");
    if (!p[s->nsources].path) return -1;
    s->nsources++;
    return 0;
}
/* ---- sealing ------------------------------------------------------------ */

int summary_seal(summary *s)
{
    int rc = 0;
    for (size_t i = 0; i < s->ncols; i++)
        if (column_seal(&s->cols[i]) != 0) rc = -1;
    return rc;
}

/* Columns handed out one at a time, in order, by a counter; a column's seal
 * touches nothing but that column's own tables. */
struct summary_sealer {
    summary *s;
    pthread_mutex_t mu;
    pthread_cond_t sealed_cv; /* a column was sealed */
    size_t next;              /* the next column to claim */
    unsigned char *sealed;    /* per column: its seal has run */
    int rc;                   /* -1 once a seal failed (out of memory) */
    unsigned helpers;         /* threads started */
    pthread_t tid[SUMMARY_SEAL_THREADS_MOST];
};

/* Claims and seals the next column; 0 when none was left to claim. */
static int seal_next(summary_sealer *g)
{
    pthread_mutex_lock(&g->mu);
    size_t i = g->next < g->s->ncols ? g->next++ : g->s->ncols;
    pthread_mutex_unlock(&g->mu);
    if (i == g->s->ncols) return 0;
    int rc = column_seal(&g->s->cols[i]);
    pthread_mutex_lock(&g->mu);
    g->sealed[i] = 1;
    if (rc != 0) g->rc = -1;
    pthread_cond_broadcast(&g->sealed_cv);
    pthread_mutex_unlock(&g->mu);
    return 1;
}

static void *seal_helper(void *arg)
{
    while (seal_next(arg)) {}
    return NULL;
}

summary_sealer *summary_sealer_start(summary *s, unsigned threads)
{
    summary_sealer *g = malloc(sizeof *g);
    unsigned char *sealed = calloc(s->ncols ? s->ncols : 1, 1);
    if (!g || !sealed) {
        free(g);
        free(sealed);
        return NULL;
    }
    *g = (summary_sealer){.s = s, .sealed = sealed};
    pthread_mutex_init(&g->mu, NULL);
    pthread_cond_init(&g->sealed_cv, NULL);
    if (threads > SUMMARY_SEAL_THREADS_MOST) threads = SUMMARY_SEAL_THREADS_MOST;
    while (g->helpers + 1 < threads && g->helpers + 1 < s->ncols &&
           pthread_create(&g->tid[g->helpers], NULL, seal_helper, g) == 0)
        g->helpers++;
    return g;
}

void summary_sealer_wait(summary_sealer *g, size_t column)
{
    pthread_mutex_lock(&g->mu);
    while (!g->sealed[column]) {
        if (g->next < g->s->ncols) {
            pthread_mutex_unlock(&g->mu);
            seal_next(g);
            pthread_mutex_lock(&g->mu);
        } else {
            pthread_cond_wait(&g->sealed_cv, &g->mu);
        }
    }
    pthread_mutex_unlock(&g->mu);
}

int summary_sealer_finish(summary_sealer *g)
{
    while (seal_next(g)) {} /* the caller takes what is left */
    for (unsigned t = 0; t < g->helpers; t++) pthread_join(g->tid[t], NULL);
    int rc = g->rc;
    pthread_cond_destroy(&g->sealed_cv);
    pthread_mutex_destroy(&g->mu);
    free(g->sealed);
    free(g);
    return rc;
}

int summary_seal_threads(summary *s, unsigned threads)
{
    if (threads < 2 || s->ncols < 2) return summary_seal(s);
    summary_sealer *g = summary_sealer_start(s, threads);
    return g ? summary_sealer_finish(g) : summary_seal(s);
}

int summary_sealed(const summary *s)
{
    for (size_t i = 0; i < s->ncols; i++)
        if (!column_sealed(&s->cols[i])) return 0;
    return 1;
}

/* ---- reading back ------------------------------------------------------- */

uint64_t summary_column_present(const summary_column *c)
{
    return c->mom.n + c->non_numeric + c->non_finite;
}

column_kind summary_column_kind(const summary_column *c, double numeric_share)
{
    if (c->mode == COLUMN_NUMERIC) return KIND_NUMERIC;
    if (c->mode == COLUMN_CATEGORICAL) return KIND_CATEGORICAL;
    uint64_t present = summary_column_present(c);
    if (present == 0) return KIND_NUMERIC;
    double share = (double)(c->mom.n + c->non_finite) / (double)present;
    return share >= numeric_share ? KIND_NUMERIC : KIND_CATEGORICAL;
}

target_task summary_target_task(const summary *s, double numeric_share)
{
    if (s->target < 0) return TASK_AUTO;
    if (s->opt.task != TASK_AUTO) return s->opt.task;
    if (!s->has_classes) return TASK_REGRESS;
    if (summary_column_kind(&s->cols[s->target], numeric_share) == KIND_CATEGORICAL)
        return TASK_CLASSIFY;
    if (s->nclasses > SUMMARY_CLASSIFY_MAX_INTEGERS) return TASK_REGRESS;
    for (uint32_t c = 0; c < s->nclasses; c++) {
        double v = s->class_dec[c].value;
        if (!s->class_numeric[c] || v != nearbyint(v)) return TASK_REGRESS;
    }
    return TASK_CLASSIFY;
}

static void fold_key(void *sketch, uint64_t hash) { hll_add(sketch, hash); }

void summary_column_fold_keys(hll *h, const values *v)
{
    values_for_each_hash(v, fold_key, h); /* a sketch does not depend on the order */
}

double summary_column_distinct(const summary_column *c, int *exact)
{
    int ok = !values_overflowed(c->vals);
    if (exact) *exact = ok;
    if (ok) return (double)values_levels(c->vals);
    /* An overflowed table saw more distinct values than it holds, and no
     * column has more than its present cells: the estimate is kept within. */
    double e = hll_estimate(c->distinct), lo = (double)values_levels(c->vals) + 1,
           hi = (double)values_total(c->vals);
    return e < lo ? lo : e > hi ? hi : e;
}

