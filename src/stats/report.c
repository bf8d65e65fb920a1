/* report: the figures of the HTML report (see report.h). */
#include "stats/report.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "acc/buckets.h"
#include "stats/corr.h"
#include "summary/access.h"

void report_options_defaults(report_options *o)
{
    o->numeric_share = 0.99;
    screen_options_defaults(&o->screen);
}

void report_histogram(const summary *s, size_t col, long cell, double lo, double hi, size_t bins,
                      uint64_t *out)
{
    memset(out, 0, bins * sizeof *out);
    const buckets *b = summary_buckets(s, col);
    if (!b || bins == 0) return;
    int level = buckets_level(b);
    double width = (hi - lo) / (double)bins;
    size_t ne = buckets_entries(b);
    for (size_t i = 0; i < ne; i++) {
        buckets_entry e = buckets_entry_at(b, i);
        if (cell >= 0 && e.cell != (uint32_t)cell) continue;
        double x = buckets_point(e.key, level);
        size_t k = 0;
        if (width > 0 && x > lo) {
            double f = (x - lo) / width;
            k = f >= (double)bins ? bins - 1 : (size_t)f;
        }
        out[k] += e.count;
    }
}

/* The histogram range of a numeric column: its 1% and 99% quantiles, or its
 * extremes when those meet. */
static void hist_range(const column_description *d, double *lo, double *hi)
{
    *lo = d->quantiles[0];
    *hi = d->quantiles[DESCRIBE_NQUANTILES - 1];
    if (!(*hi > *lo)) {
        *lo = d->min;
        *hi = d->max;
    }
}

typedef struct {
    size_t col;
    double key;
} ranked;

static int by_key(const void *a, const void *b)
{
    const ranked *x = a, *y = b;
    if (x->key != y->key) return x->key < y->key ? -1 : 1;
    return x->col < y->col ? -1 : x->col > y->col;
}

static int build_heat(report *r)
{
    const summary *s = r->s;
    size_t n = summary_columns(s);
    size_t *cols = malloc((n ? n : 1) * sizeof *cols);
    if (!cols) return -1;
    char err[256];
    long m = corr_columns(s, r->opt.numeric_share, NULL, cols, err, sizeof err);
    if (m < 0) m = 0;
    /* a constant column has no r with anything: left out of the picture */
    size_t kept = 0;
    for (size_t i = 0; i < (size_t)m; i++)
        if (summary_sd(s, cols[i]) > 0) cols[kept++] = cols[i];
    m = (long)kept;
    r->heat_candidates = (size_t)m;
    size_t shown = (size_t)m;
    if (shown > REPORT_MAX_HEAT) {
        ranked *rk = malloc((size_t)m * sizeof *rk);
        if (!rk) { free(cols); return -1; }
        for (size_t i = 0; i < (size_t)m; i++) {
            size_t c = cols[i];
            long f = r->cols[c].feature;
            double key;
            if (r->screen && r->screen->task != TASK_AUTO)
                key = f >= 0 && isfinite(r->screen->features[f].log10_p) ? r->screen->features[f].log10_p
                                                                         : INFINITY;
            else {
                double cv = summary_sd(s, c) / fabs(summary_mean(s, c));
                key = isfinite(cv) ? -cv : INFINITY;
            }
            rk[i] = (ranked){c, key};
        }
        qsort(rk, (size_t)m, sizeof *rk, by_key);
        shown = REPORT_MAX_HEAT;
        for (size_t i = 0; i < shown; i++) cols[i] = rk[i].col;
        free(rk);
        /* summary order before clustering, so that ties break the same way */
        for (size_t i = 1; i < shown; i++)
            for (size_t j = i; j > 0 && cols[j - 1] > cols[j]; j--) {
                size_t t = cols[j]; cols[j] = cols[j - 1]; cols[j - 1] = t;
            }
    }
    r->nheat = shown;
    if (shown == 0) { free(cols); return 0; }
    double *rr = malloc(shown * shown * sizeof *rr), *dist = malloc(shown * shown * sizeof *dist);
    cluster_merge *mg = malloc((shown > 1 ? shown - 1 : 1) * sizeof *mg);
    size_t *order = malloc(shown * sizeof *order), *where = malloc(shown * sizeof *where);
    r->heat_cols = malloc(shown * sizeof *r->heat_cols);
    r->heat_r = malloc(shown * shown * sizeof *r->heat_r);
    r->heat_redundant = calloc(shown * shown, 1);
    r->merges = mg;
    int rc = -1;
    if (!rr || !dist || !mg || !order || !where || !r->heat_cols || !r->heat_r || !r->heat_redundant)
        goto done;
    corr_matrix(s, cols, shown, CORR_PEARSON, rr);
    for (size_t i = 0; i < shown * shown; i++) dist[i] = isfinite(rr[i]) ? 1 - fmin(1, fabs(rr[i])) : 1;
    for (size_t i = 0; i < shown; i++) dist[i * shown + i] = 0;
    if (cluster_average(dist, shown, mg) || cluster_leaf_order(dist, shown, mg, order)) goto done;
    for (size_t i = 0; i < shown; i++) where[order[i]] = i;
    for (size_t i = 0; i < shown; i++) {
        r->heat_cols[i] = cols[order[i]];
        for (size_t j = 0; j < shown; j++) r->heat_r[i * shown + j] = rr[order[i] * shown + order[j]];
    }
    /* Renumber the merges' items by their clustered position. */
    for (size_t i = 0; i + 1 < shown; i++) {
        if (mg[i].a < shown) mg[i].a = where[mg[i].a];
        if (mg[i].b < shown) mg[i].b = where[mg[i].b];
    }
    if (r->screen)
        for (size_t p = 0; p < r->screen->npairs; p++) {
            size_t ca = r->screen->features[r->screen->pairs[p].a].col;
            size_t cb = r->screen->features[r->screen->pairs[p].b].col;
            long ia = -1, ib = -1;
            for (size_t i = 0; i < shown; i++) {
                if (r->heat_cols[i] == ca) ia = (long)i;
                if (r->heat_cols[i] == cb) ib = (long)i;
            }
            if (ia >= 0 && ib >= 0)
                r->heat_redundant[ia * shown + ib] = r->heat_redundant[ib * shown + ia] = 1;
        }
    rc = 0;
done:
    free(cols); free(rr); free(dist); free(order); free(where);
    return rc;
}

static int build_classes(report *r)
{
    const summary *s = r->s;
    if (!r->screen || r->screen->task != TASK_CLASSIFY || !summary_classes_kept(s) ||
        summary_class_count(s) == 0)
        return 0;
    r->has_classes = 1;
    r->nclasses = summary_class_count(s);
    size_t nf = r->screen->nfeatures;
    ranked *rk = malloc((nf ? nf : 1) * sizeof *rk);
    if (!rk) return -1;
    size_t m = 0;
    for (size_t i = 0; i < nf; i++) {
        const screen_feature *f = &r->screen->features[i];
        if (f->kind != KIND_NUMERIC || !r->cols[f->col].has_hist || !isfinite(f->log10_p)) continue;
        rk[m++] = (ranked){f->col, f->keep ? (double)f->rank - 1e9 : f->log10_p};
    }
    qsort(rk, m, sizeof *rk, by_key);
    if (m > REPORT_CLASS_COLUMNS) m = REPORT_CLASS_COLUMNS;
    r->nclass_cols = m;
    size_t per = (size_t)r->nclasses * REPORT_BINS;
    r->class_cols = malloc((m ? m : 1) * sizeof *r->class_cols);
    r->class_lo = malloc((m ? m : 1) * sizeof *r->class_lo);
    r->class_hi = malloc((m ? m : 1) * sizeof *r->class_hi);
    r->class_hist = malloc((m ? m * per : 1) * sizeof *r->class_hist);
    if (!r->class_cols || !r->class_lo || !r->class_hi || !r->class_hist) { free(rk); return -1; }
    for (size_t i = 0; i < m; i++) {
        size_t c = rk[i].col;
        r->class_cols[i] = c;
        r->class_lo[i] = r->cols[c].lo;
        r->class_hi[i] = r->cols[c].hi;
        for (uint32_t k = 0; k < r->nclasses; k++)
            report_histogram(s, c, (long)k + 1, r->class_lo[i], r->class_hi[i], REPORT_BINS,
                             r->class_hist + i * per + (size_t)k * REPORT_BINS);
    }
    free(rk);
    return 0;
}

report *report_build(const summary *s, const report_options *o)
{
    report *r = calloc(1, sizeof *r);
    if (!r) return NULL;
    r->s = s;
    r->opt = *o;
    r->opt.screen.numeric_share = o->numeric_share;
    r->ncols = summary_columns(s);
    r->cols = calloc(r->ncols ? r->ncols : 1, sizeof *r->cols);
    if (!r->cols) goto oom;
    r->screen = screen_run(s, &r->opt.screen);
    if (!r->screen) goto oom;
    for (size_t c = 0; c < r->ncols; c++) r->cols[c].feature = -1;
    for (size_t i = 0; i < r->screen->nfeatures; i++)
        r->cols[r->screen->features[i].col].feature = (long)i;
    for (size_t c = 0; c < r->ncols; c++) {
        report_column *rc = &r->cols[c];
        if (describe_column(s, c, o->numeric_share, REPORT_TOP_VALUES, &rc->d)) goto oom;
        if (rc->d.kind == KIND_NUMERIC && rc->d.numbers > 0 && isfinite(rc->d.min)) {
            rc->has_hist = 1;
            hist_range(&rc->d, &rc->lo, &rc->hi);
            report_histogram(s, c, -1, rc->lo, rc->hi, REPORT_BINS, rc->hist);
        }
    }
    if (build_heat(r)) goto oom;
    pca_options po;
    pca_options_defaults(&po);
    po.numeric_share = o->numeric_share;
    pca_status ps = pca_fit(s, &po, &r->pca, r->pca_error, sizeof r->pca_error);
    if (ps == PCA_ERR_MEMORY) goto oom;
    if (ps == PCA_OK) r->pca_k = pca_choose_k(r->pca, 0, 0);
    else r->pca = NULL;
    if (build_classes(r)) goto oom;
    return r;
oom:
    report_free(r);
    return NULL;
}

void report_free(report *r)
{
    if (!r) return;
    if (r->cols)
        for (size_t c = 0; c < r->ncols; c++) describe_column_free(&r->cols[c].d);
    free(r->cols);
    screen_free(r->screen);
    free(r->heat_cols);
    free(r->heat_r);
    free(r->merges);
    free(r->heat_redundant);
    pca_result_free(r->pca);
    free(r->class_cols);
    free(r->class_lo);
    free(r->class_hi);
    free(r->class_hist);
    free(r);
}
