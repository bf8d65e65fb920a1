/* api_drift: the drift handle of the public API (include/sheaf.h) over
 * stats/drift.h.  The handle keeps the internal result with copies of every
 * name it reports, so it may outlive the two summaries. */
#include "api/api.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "stats/drift.h"

struct sheaf_drift {
    drift_result *r;   /* owned; its names point into `names` once copied */
    char **names;      /* r->ncolumns column names, owned */
    char **pair_names; /* 2 * r->npairs names, owned */
    char **labels;     /* the listed categories' labels (r->columns[i].appeared_list and
                          vanished_list point at them once copied), owned */
    size_t nlabels;
    char *target;      /* r->target once copied, owned */
};

_Static_assert(SHEAF_DRIFT_BINS == DRIFT_DECILES, "the public bins are the internal deciles");

void sheaf_drift_thresholds_default(sheaf_drift_thresholds *t)
{
    drift_options o;
    drift_options_defaults(&o);
    *t = (sheaf_drift_thresholds){o.max_psi, o.max_ks, o.max_shift, o.max_share_change,
                                  o.max_tv, o.max_r_change, o.fdr, o.max_rank_change,
                                  o.numeric_share};
}

static void free_list(char **l, size_t n)
{
    if (!l) return;
    for (size_t i = 0; i < n; i++) free(l[i]);
    free(l);
}

void sheaf_drift_free(sheaf_drift *d)
{
    if (!d) return;
    if (d->r) {
        free_list(d->names, d->r->ncolumns);
        free_list(d->pair_names, 2 * d->r->npairs);
    }
    free_list(d->labels, d->nlabels);
    free(d->target);
    drift_free(d->r);
    free(d);
}

/* 1 when v is a threshold above 0 (at most 1 for a share). */
static int in_range(double v, int share) { return v > 0 && isfinite(v) && (!share || v <= 1); }

/* A copy of one category's label (its bytes; not NUL-terminated for the
 * reader, though the copy has a NUL after them), repointed; -1 when out of
 * memory. */
static int copy_label(sheaf_drift *d, drift_category *c)
{
    char *copy = malloc((size_t)c->label_len + 1);
    if (!copy) return -1;
    memcpy(copy, c->label, c->label_len);
    copy[c->label_len] = '\0';
    d->labels[d->nlabels++] = copy;
    c->label = copy;
    return 0;
}

/* Copies of every listed category's label (they point into the summaries). */
static int copy_labels(sheaf_drift *d)
{
    drift_result *r = d->r;
    size_t n = 0;
    for (size_t i = 0; i < r->ncolumns; i++)
        n += r->columns[i].listed_appeared + r->columns[i].listed_vanished;
    if (!(d->labels = calloc(n ? n : 1, sizeof *d->labels))) return -1;
    for (size_t i = 0; i < r->ncolumns; i++) {
        drift_column *c = &r->columns[i];
        for (size_t k = 0; k < c->listed_appeared; k++)
            if (copy_label(d, &c->appeared_list[k]) != 0) return -1;
        for (size_t k = 0; k < c->listed_vanished; k++)
            if (copy_label(d, &c->vanished_list[k]) != 0) return -1;
    }
    return 0;
}

sheaf_drift *sheaf_drift_run(const sheaf_summary *base, const sheaf_summary *next,
                             const sheaf_drift_thresholds *t, sheaf_error *err)
{
    if (!base || !next) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_drift_run: no summary (NULL)");
        return NULL;
    }
    drift_options o;
    drift_options_defaults(&o);
    if (t) {
        if (!in_range(t->max_psi, 0) || !in_range(t->max_ks, 1) || !in_range(t->max_shift, 0) ||
            !in_range(t->max_share_change, 1) || !in_range(t->max_tv, 1) ||
            !in_range(t->max_r_change, 0) || !in_range(t->fdr, 1) ||
            !in_range(t->numeric_share, 1)) {
            api_fail(err, SHEAF_ERR_USAGE, "sheaf_drift_run: a threshold is out of range "
                     "(each above 0; shares, KS, TV and the fdr at most 1)");
            return NULL;
        }
        o = (drift_options){t->numeric_share, t->max_psi, t->max_ks, t->max_shift,
                            t->max_share_change, t->max_tv, t->max_r_change, t->fdr,
                            t->max_rank_change};
    }
    char msg[SHEAF_ERROR_BYTES];
    sheaf_drift *d = calloc(1, sizeof *d);
    if (!d) goto oom;
    drift_status st = drift_run(base->s, next->s, &o, &d->r, msg, sizeof msg);
    if (st == DRIFT_ERR_INCOMPATIBLE) {
        api_fail(err, SHEAF_ERR_INCOMPATIBLE, "the summaries were scanned differently: %s", msg);
        sheaf_drift_free(d);
        return NULL;
    }
    if (st != DRIFT_OK) goto oom;
    drift_result *r = d->r;
    d->names = calloc(r->ncolumns ? r->ncolumns : 1, sizeof *d->names);
    d->pair_names = calloc(r->npairs ? 2 * r->npairs : 1, sizeof *d->pair_names);
    if (!d->names || !d->pair_names) goto oom;
    for (size_t i = 0; i < r->ncolumns; i++) {
        if (!(d->names[i] = strdup(r->columns[i].name))) goto oom;
        r->columns[i].name = d->names[i];
    }
    for (size_t i = 0; i < r->npairs; i++) {
        if (!(d->pair_names[2 * i] = strdup(r->pairs[i].a))) goto oom;
        if (!(d->pair_names[2 * i + 1] = strdup(r->pairs[i].b))) goto oom;
        r->pairs[i].a = d->pair_names[2 * i];
        r->pairs[i].b = d->pair_names[2 * i + 1];
    }
    if (r->target) {
        if (!(d->target = strdup(r->target))) goto oom;
        r->target = d->target;
    }
    if (copy_labels(d) != 0) goto oom;
    /* Nothing else in the result that the API reads points into the
     * summaries (relevance_note is static). */
    return d;
oom:
    sheaf_drift_free(d);
    api_fail(err, SHEAF_ERR_MEMORY, "out of memory while comparing the summaries");
    return NULL;
}

int sheaf_drift_found(const sheaf_drift *d)
{
    return d && (d->r->drifting > 0 || d->r->npairs > 0);
}

size_t sheaf_drift_column_count(const sheaf_drift *d) { return d ? d->r->ncolumns : 0; }

const char *sheaf_drift_flag_name(unsigned b)
{
    return b < DRIFT_NFLAGS ? drift_flag_names[b] : NULL;
}

int sheaf_drift_column_at(const sheaf_drift *d, size_t i, sheaf_drift_column *out)
{
    if (!d || !out || i >= d->r->ncolumns) return SHEAF_ERR_USAGE;
    const drift_column *c = &d->r->columns[i];
    *out = (sheaf_drift_column){
        .name = c->name,
        .flags = c->flags,
        .in_base = c->base.col >= 0,
        .in_new = c->next.col >= 0,
        .psi = c->psi,
        .ks = c->ks,
        .ks_bound = c->ks_bound,
        .mean_shift = c->mean_shift,
        .base_missing_share = c->base.missing_share,
        .new_missing_share = c->next.missing_share,
        .base_non_numeric_share = c->base.non_numeric_share,
        .new_non_numeric_share = c->next.non_numeric_share,
        .base_distinct = c->base.distinct,
        .new_distinct = c->next.distinct,
        .tv = c->tv,
        .tv_exact = c->tv_exact,
        .chi2 = c->chi2,
        .chi2_df = c->chi2_df,
        .chi2_p = c->chi2_p,
        .appeared = c->appeared,
        .vanished = c->vanished,
    };
    return SHEAF_OK;
}

size_t sheaf_drift_pair_count(const sheaf_drift *d) { return d ? d->r->npairs : 0; }

int sheaf_drift_pair_at(const sheaf_drift *d, size_t i, const char **a, const char **b,
                        double *base_r, double *new_r)
{
    if (!d || i >= d->r->npairs) return SHEAF_ERR_USAGE;
    const drift_pair *p = &d->r->pairs[i];
    if (a) *a = p->a;
    if (b) *b = p->b;
    if (base_r) *base_r = p->r_base;
    if (new_r) *new_r = p->r_next;
    return SHEAF_OK;
}

/* One night's side as the public struct (`sheaf drift -f json`'s "base" and
 * "new", src/cli/drift.c json_side). */
static sheaf_drift_side side_of(const drift_side *sd)
{
    if (sd->col < 0)
        return (sheaf_drift_side){.kind = -1, .missing_share = NAN, .non_numeric_share = NAN,
                                  .distinct = NAN, .distinct_share = NAN, .mean = NAN,
                                  .sd = NAN, .q = NAN, .q_test = ""};
    return (sheaf_drift_side){
        .kind = sd->kind == KIND_NUMERIC ? SHEAF_KIND_NUMERIC : SHEAF_KIND_CATEGORICAL,
        .missing_share = sd->missing_share,
        .non_numeric_share = sd->non_numeric_share,
        .distinct = sd->distinct,
        .distinct_exact = sd->distinct_exact,
        .distinct_share = sd->distinct_share,
        .numbers = sd->numbers,
        .present = sd->present,
        .mean = sd->mean,
        .sd = sd->sd,
        .table_overflowed = sd->overflowed,
        .ranked = sd->ranked,
        .q = sd->ranked ? sd->q : NAN,
        .q_test = sd->ranked && sd->q_test ? sd->q_test : "",
        .rank = sd->ranked ? sd->rank : 0,
    };
}

int sheaf_drift_column_detail(const sheaf_drift *d, size_t i, sheaf_drift_detail *out)
{
    if (!d || !out || i >= d->r->ncolumns) return SHEAF_ERR_USAGE;
    const drift_column *c = &d->r->columns[i];
    memset(out, 0, sizeof *out);
    out->base_side = side_of(&c->base);
    out->new_side = side_of(&c->next);
    out->bins = c->bins;
    for (unsigned k = 0; k < SHEAF_DRIFT_BINS - 1; k++)
        out->edges[k] = k + 1 < c->bins ? c->edges[k] : NAN;
    for (unsigned k = 0; k < c->bins && k < SHEAF_DRIFT_BINS; k++) {
        out->base_counts[k] = c->base_counts[k];
        out->new_counts[k] = c->next_counts[k];
    }
    out->bucket_level = c->bins ? c->level : 0;
    out->ks_exact = c->ks_exact;
    out->text = c->text;
    out->chi2_log10_p = c->chi2_log10_p;
    out->appeared_known = c->appeared_known;
    out->vanished_known = c->vanished_known;
    out->appeared_listed = c->listed_appeared;
    out->vanished_listed = c->listed_vanished;
    return SHEAF_OK;
}

int sheaf_drift_category_at(const sheaf_drift *d, size_t i, int vanished, size_t k,
                            sheaf_value *value, double *share)
{
    if (!d || i >= d->r->ncolumns) return SHEAF_ERR_USAGE;
    const drift_column *c = &d->r->columns[i];
    if (k >= (vanished ? c->listed_vanished : c->listed_appeared)) return SHEAF_ERR_USAGE;
    const drift_category *g = vanished ? &c->vanished_list[k] : &c->appeared_list[k];
    if (value) *value = (sheaf_value){g->label, g->label_len, g->count, g->cut != 0};
    if (share) *share = g->share;
    return SHEAF_OK;
}

int sheaf_drift_relevance(const sheaf_drift *d, const char **target, const char **note)
{
    if (target) *target = d ? d->r->target : NULL;
    if (note) *note = d ? d->r->relevance_note : NULL;
    return d && d->r->relevance;
}

size_t sheaf_drift_pairs_compared(const sheaf_drift *d) { return d ? d->r->pairs_compared : 0; }
