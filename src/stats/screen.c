/* screen: see screen.h.  Reads the summary only; every statistic comes from
 * the accumulators (per-class moments, co-moments, per-value tables, bucket
 * stores), never from the data. */
#include "stats/screen.h"

#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "stats/logp.h"
#include "summary/access.h"

/* Named for what the user should conclude, not for what was measured. */
const char *const screen_flag_names[SCREEN_NFLAGS] = {"no_information", "little_information",
                                                      "names_rows", "too_sparse",
                                                      "too_many_levels", "mirrors_target"};

void screen_options_defaults(screen_options *o)
{
    memset(o, 0, sizeof *o);
    o->numeric_share = 0.99;
    o->missing_share = 0.5;
    o->near_constant = 0.99;
    o->id_share = 0.95;
    o->q_level = 0.05;
    o->redundancy = 0.95;
    o->bins = 10;
    o->target_col = -1;
}

const char *screen_target_problem(const summary *s, size_t col, double numeric_share)
{
    if (col >= summary_columns(s)) return "no such column";
    if ((long)col == (long)summary_target_column(s)) return NULL;
    if (summary_kind(s, col, numeric_share) != KIND_NUMERIC)
        return "not a numeric column (a text target needs a scan with it as the target)";
    if (!summary_has_pairs(s, col))
        return "not in the summary's co-moment matrix (it was scanned as a text column)";
    return NULL;
}

int screen_target_lookup(const summary *s, const char *name, double numeric_share, long *col,
                         char *msg, size_t msglen)
{
    long c = summary_find_column(s, name);
    size_t same = 0;
    for (size_t i = 0; i < summary_columns(s); i++) same += !strcmp(summary_name(s, i), name);
    const char *problem = c < 0      ? "no such column"
                          : same > 1 ? "names more than one column of the summary"
                                     : screen_target_problem(s, (size_t)c, numeric_share);
    if (!problem) {
        *col = c;
        return 0;
    }
    char hint[768] = "";
    if (c < 0) summary_suggest_columns(s, name, strlen(name), hint, sizeof hint);
    snprintf(msg, msglen, "%s%s", problem, hint);
    return -1;
}

void screen_free(screen_result *r)
{
    if (!r) return;
    free(r->features);
    free(r->pairs);
    free(r);
}

static void add_reason(screen_feature *f, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void add_reason(screen_feature *f, const char *fmt, ...)
{
    size_t used = strlen(f->reasons);
    if (used && used + 2 < sizeof f->reasons) { strcat(f->reasons, "; "); used += 2; }
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(f->reasons + used, sizeof f->reasons - used, fmt, ap);
    va_end(ap);
}

static void set_test(screen_test *t, const stat_result *r)
{
    t->present = 1;
    t->stat = r->stat;
    t->df1 = r->df1;
    t->df2 = r->df2;
    t->p = r->p;
    t->p_below = r->p_below;
    t->log10_p = r->log10_p;
    t->extra = r->extra;
}

/* The p-value behind q: that of the primary test t, NaN without one. */
static void set_primary(screen_feature *f, const screen_test *t)
{
    f->by = t == &f->anova_f ? SCREEN_BY_ANOVA_F : t == &f->corr_f ? SCREEN_BY_CORR_F
                                                                   : SCREEN_BY_CHI2;
    f->p = t->present ? t->p : NAN;
    f->log10_p = t->present ? t->log10_p : NAN;
}

const screen_test *screen_primary(const screen_feature *f, const char **name)
{
    switch (f->by) {
    case SCREEN_BY_ANOVA_F: *name = "anova_f"; return &f->anova_f;
    case SCREEN_BY_CORR_F: *name = "corr_f"; return &f->corr_f;
    case SCREEN_BY_CHI2: *name = "chi2"; return &f->chi2;
    default: *name = ""; return NULL;
    }
}

/* ---- flags ---------------------------------------------------------------- */

static unsigned column_flags(const summary *s, size_t col, column_kind kind,
                             const screen_options *o)
{
    unsigned flags = 0;
    uint64_t present = summary_present(s, col), rows = summary_rows(s);
    /* Shares compared as quotients: a correctly rounded k / n equal to the
     * option's decimal is the option's double, where the product share * n
     * can round past k (0.55 x 100 = 55.000000000000007). */
    if (rows && (double)summary_missing(s, col) / (double)rows >= o->missing_share)
        flags |= SCREEN_MOSTLY_MISSING;
    if (present == 0) return flags | SCREEN_CONSTANT;
    int exact;
    double distinct = summary_distinct(s, col, &exact);
    double var = summary_variance(s, col);
    /* Constant when the exact value table holds one value, or when every
     * present cell is a finite number and all are one decimal: spellings
     * such as 1 and 1.0, or 0 and -0, are distinct cells but one number.
     * Their deviations from the frame (the first of them) are then exactly
     * 0, so M2 is exactly 0; distinct decimals that round to one double
     * (30-digit IDs that share 28 digits) keep distinct deviations and a
     * variance above 0, and are not constant.  A table that overflowed
     * holds more than max_levels values. */
    if (exact && distinct <= 1) return flags | SCREEN_CONSTANT;
    if (summary_numbers(s, col) == present && present >= 2 && var == 0 &&
        summary_min(s, col) == summary_max(s, col))
        return flags | SCREEN_CONSTANT;
    values_entry top;
    if (summary_top(s, col, 1, &top) == 1 && (double)top.count / (double)present >= o->near_constant)
        flags |= SCREEN_NEAR_CONSTANT;
    if (kind == KIND_NUMERIC && o->min_variance > 0 && var < o->min_variance) flags |= SCREEN_NEAR_CONSTANT;
    if (validity_id_like(s, col, kind, o->id_share)) flags |= SCREEN_ID_LIKE;
    if (kind == KIND_CATEGORICAL && summary_high_cardinality(s, col)) flags |= SCREEN_HIGH_CARDINALITY;
    return flags;
}

/* ---- contingency tables ---------------------------------------------------- */

/* Distinct sort keys with their total counts and assigned bins. */
typedef struct {
    int64_t order;
    double count;
    unsigned bin;
} item;

static int item_cmp(const void *a, const void *b)
{
    const item *x = a, *y = b;
    return (x->order > y->order) - (x->order < y->order);
}

/* The distinct values of ord[0..n) with summed counts, sorted, with a bin
 * each: about equal-frequency bins when k > 0, one bin per value otherwise.
 * Returns the number of items (0 on OOM) and sets *nbins. */
static size_t make_axis(const int64_t *ord, const double *cnt, size_t n, unsigned k, item **out,
                        unsigned *nbins)
{
    item *it = malloc((n ? n : 1) * sizeof *it);
    *nbins = 0;
    if (!it) return 0;
    for (size_t i = 0; i < n; i++) it[i] = (item){ord[i], cnt[i], 0};
    qsort(it, n, sizeof *it, item_cmp);
    size_t m = 0;
    for (size_t i = 0; i < n; i++) {
        if (m && it[m - 1].order == it[i].order) it[m - 1].count += it[i].count;
        else it[m++] = it[i];
    }
    if (k == 0) {
        for (size_t i = 0; i < m; i++) it[i].bin = (unsigned)i;
        *nbins = (unsigned)m;
    } else {
        double *counts = malloc((m ? m : 1) * sizeof *counts);
        unsigned *bins = malloc((m ? m : 1) * sizeof *bins);
        if (!counts || !bins) { free(counts); free(bins); free(it); return 0; }
        for (size_t i = 0; i < m; i++) counts[i] = it[i].count;
        *nbins = stat_equal_frequency_bins(counts, m, k, bins);
        for (size_t i = 0; i < m; i++) it[i].bin = bins[i];
        free(counts);
        free(bins);
    }
    *out = it;
    return m;
}

static unsigned axis_bin(const item *it, size_t m, int64_t order)
{
    item key = {order, 0, 0};
    const item *hit = bsearch(&key, it, m, sizeof *it, item_cmp);
    return hit ? hit->bin : 0;
}

/* Builds the table from n (x order, y order, count) triples and fills MI
 * (and chi-squared when with_chi2).  kx / ky: bins, 0 = one bin per value. */
static int pair_table(screen_feature *f, const int64_t *xo, const int64_t *yo, const double *cnt,
                      size_t n, unsigned kx, unsigned ky, int with_chi2)
{
    item *ix = NULL, *iy = NULL;
    unsigned bx, by;
    size_t mx = make_axis(xo, cnt, n, kx, &ix, &bx);
    size_t my = make_axis(yo, cnt, n, ky, &iy, &by);
    int rc = -1;
    if (!ix || !iy) goto done;
    rc = 0;
    if (bx < 2 || by < 2) goto done;
    double *table = calloc((size_t)bx * by, sizeof *table);
    if (!table) { rc = -1; goto done; }
    for (size_t i = 0; i < n; i++)
        table[(size_t)axis_bin(ix, mx, xo[i]) * by + axis_bin(iy, my, yo[i])] += cnt[i];
    stat_result r;
    stat_mutual_info mi;
    if (stat_mutual_information(table, bx, by, &mi) == 0) {
        f->mi.present = 1;
        f->mi.nats = mi.nats;
        f->mi.nats_corrected = mi.nats_corrected;
        f->mi.normalized = mi.normalized;
        f->mi.bins_feature = mi.rows_used;
        f->mi.bins_target = mi.cols_used;
        validity_expected e;
        if (validity_expected_mi(table, bx, by, &e) == -2) rc = -1;
        f->mi.expected_nats = e.nats;
        f->mi.approximated_cells = e.approximated_cells;
        f->mi.adjusted = validity_adjusted_mi(mi.nats, e.nats, mi.h_x, mi.h_y);
    }
    if (with_chi2 && stat_chi_squared(table, bx, by, &r) == 0) {
        set_test(&f->chi2, &r);
        if (validity_cochran(table, bx, by, &f->chi2_check) != 0) rc = -1;
    }
    free(table);
done:
    free(ix);
    free(iy);
    return rc;
}

/* Sort position of a target cell: a class by its value (regression over a
 * numeric target's classes) or its index; a regression cell by its key. */
typedef struct {
    int classes;        /* cells are classes */
    int by_value;       /* order classes by value */
    int64_t *rank;      /* class rank by value (by_value) */
} target_axis;

static int64_t cell_order(const target_axis *t, uint32_t cell)
{
    if (!t->classes) return (int64_t)cell - (int64_t)SUMMARY_TARGET_CELL_BASE;
    return t->by_value ? t->rank[cell - 1] : (int64_t)cell;
}

/* Ranks of the classes by numeric value. */
static void class_ranks(const summary *s, int64_t *rank)
{
    uint32_t k = summary_class_count(s);
    for (uint32_t a = 0; a < k; a++) {
        int64_t r = 0;
        for (uint32_t b = 0; b < k; b++) {
            double va = summary_class_value(s, a), vb = summary_class_value(s, b);
            r += vb < va || (vb == va && b < a);
        }
        rank[a] = r;
    }
}

/* A growing list of (x order, y order, count) triples. */
typedef struct {
    int64_t *x, *y;
    double *n;
    size_t len, cap;
} triples;

static int triples_push(triples *t, int64_t x, int64_t y, double n)
{
    if (t->len == t->cap) {
        size_t cap = t->cap ? t->cap * 2 : 256;
        int64_t *a = realloc(t->x, cap * sizeof *a);
        if (a) t->x = a;
        int64_t *b = realloc(t->y, cap * sizeof *b);
        if (b) t->y = b;
        double *c = realloc(t->n, cap * sizeof *c);
        if (c) t->n = c;
        if (!a || !b || !c) return -1;
        t->cap = cap;
    }
    t->x[t->len] = x;
    t->y[t->len] = y;
    t->n[t->len] = n;
    t->len++;
    return 0;
}

static void triples_free(triples *t)
{
    free(t->x);
    free(t->y);
    free(t->n);
}

/* Per-value target moments from a per-value table: classes (counts mode, y
 * from the class values) or regression records (values mode, cells combined
 * with the Chan et al. merge). */
typedef struct {
    uint64_t key;
    double n, mean, m2;
} level_moments;

static size_t level_groups(const summary *s, const crosstab *x, level_moments *out)
{
    size_t ne = crosstab_entries(x), m = 0;
    for (size_t i = 0; i < ne; i++) {
        crosstab_entry e = crosstab_entry_at(x, i);
        double nb = (double)e.n, mb, m2b;
        if (crosstab_mode(x) == CROSSTAB_COUNTS) {
            mb = summary_class_value(s, e.cell - 1); /* every row of the class has this value */
            m2b = 0;
        } else {
            mb = e.mean;
            m2b = e.m2;
        }
        if (!m || out[m - 1].key != e.key) {
            out[m++] = (level_moments){e.key, nb, mb, m2b};
            continue;
        }
        level_moments *a = &out[m - 1];
        moments_pair_merge(a->n, &a->mean, &a->m2, nb, mb, m2b);
        a->n += nb;
    }
    return m;
}

/* ---- relevance ------------------------------------------------------------ */

/* ANOVA F of the groups into *anova, and Welch's F into *welch when given.
 * 0, or -1 when out of memory. */
static int groups_test(const level_moments *g, size_t m, screen_test *anova, screen_test *welch)
{
    double *n = malloc((m ? m : 1) * sizeof *n), *mean = malloc((m ? m : 1) * sizeof *mean),
           *m2 = malloc((m ? m : 1) * sizeof *m2);
    int rc = -1;
    if (n && mean && m2) {
        for (size_t i = 0; i < m; i++) { n[i] = g[i].n; mean[i] = g[i].mean; m2[i] = g[i].m2; }
        stat_result r;
        if (stat_anova(n, mean, m2, m, &r) == 0) set_test(anova, &r);
        if (welch && stat_welch(n, mean, m2, m, &r) == 0) set_test(welch, &r);
        rc = 0;
    }
    free(n); free(mean); free(m2);
    return rc;
}

/* The F test of Pearson r with the target: from the exact residual sum of
 * squares when the pair sums are exact (summary_target_fit; issue 13: NIST
 * StRD Norris to 13 digits), else from the co-moments' r; none when the
 * exact sums find either column constant over the pairs.  (Not inlined:
 * inlined into test_feature, it made GCC 12 see an uninitialized g there.) */
static __attribute__((noinline)) void correlation_test(const summary *s, size_t col,
                                                      screen_test *t)
{
    stat_result r;
    double xr, xf, xn;
    int exact = summary_target_fit(s, col, &xr, &xf, &xn);
    if (exact == 0 && stat_f_test(xf, 1, xn - 2, &r) == 0) {
        r.extra = xr;
        set_test(t, &r);
        return;
    }
    if (exact == 1) return; /* constant over the pairs, exactly: no test */
    size_t y = (size_t)summary_target_column(s);
    double rr = summary_correlation(s, col, y);
    double nn = (double)summary_pair_count(s, col, y);
    if (isfinite(rr) && stat_correlation_f(rr, nn, &r) == 0) set_test(t, &r);
}

/* Why a numeric column has no F test of its r with the target. */
#define IMPRECISE_R "r with the target imprecise (see corr): no F test of r"

/* The level-size rule (validity.h) on the rows of each level. */
static int level_check(const level_moments *g, size_t m, validity_check *out)
{
    double *n = malloc((m ? m : 1) * sizeof *n);
    if (!n) return -1;
    for (size_t i = 0; i < m; i++) n[i] = g[i].n;
    validity_level_sizes(n, m, out);
    free(n);
    return 0;
}

/* Marks a feature whose test behind q fails its validity rule, with the
 * reason. */
static void judge_primary(screen_feature *f, target_task task)
{
    int classify = task == TASK_CLASSIFY;
    if (f->kind != KIND_CATEGORICAL) return;
    if (classify && f->chi2.present && f->chi2_check.rule == VALIDITY_COCHRAN &&
        !f->chi2_check.holds) {
        f->unreliable = 1;
        add_reason(f, "chi-squared unreliable by Cochran's rule (%.0f%% of expected counts below 5, "
                      "smallest %.2g): not kept on it",
                   100 * f->chi2_check.small_share, f->chi2_check.smallest);
    } else if (!classify && f->anova_f.present && f->anova_check.rule == VALIDITY_LEVEL_SIZES &&
               !f->anova_check.holds) {
        f->unreliable = 1;
        add_reason(f, "ANOVA F across levels unreliable (%.0f%% of rows in levels of fewer than 5 "
                      "rows): not kept on it",
                   100 * f->anova_check.small_share);
    }
}

/* Flags a tested feature that mirrors the target (validity.h). */
static void judge_mirror(const summary *s, screen_feature *f, target_task task)
{
    double r = task == TASK_REGRESS && f->corr_f.present ? f->corr_f.extra : NAN;
    double ami = f->mi.present ? f->mi.adjusted : NAN;
    int apart = task == TASK_CLASSIFY && f->kind == KIND_NUMERIC &&
                validity_classes_separated(summary_buckets(s, f->col), summary_class_count(s));
    char why[128];
    if (!validity_mirrors_target(r, ami, apart, why, sizeof why)) return;
    f->flags |= SCREEN_MIRRORS_TARGET;
    add_reason(f, "mirrors_target: %s (a possible leak of the outcome)", why);
}

/* A column tested against a target that is not the scan's (y, from the
 * co-moments): the F test of r for a numeric column in the matrix, nothing
 * else (no per-class, per-level or bucket table was kept against y). */
static void test_from_comoments(const summary *s, size_t col, size_t y, screen_feature *f)
{
    stat_result r;
    if (f->kind != KIND_NUMERIC || !summary_has_pairs(s, col)) {
        add_reason(f, "no test from this summary against %s (scan with it as the target)",
                   summary_name(s, y));
        return;
    }
    double rr = summary_correlation(s, col, y);
    double nn = (double)summary_pair_count(s, col, y);
    if (isfinite(rr) && stat_correlation_f(rr, nn, &r) == 0) set_test(&f->corr_f, &r);
    else if (summary_pair_imprecise(s, col, y)) add_reason(f, IMPRECISE_R);
    set_primary(f, &f->corr_f);
}

static int test_feature(const summary *s, size_t col, target_task task, const screen_options *o,
                        const target_axis *ta, screen_feature *f)
{
    triples t = {0};
    int rc = 0;
    if (f->kind == KIND_NUMERIC) {
        int by_chi2 = 0; /* the F tests left out: the chi-squared decides */
        if (task == TASK_CLASSIFY && summary_has_class_moments(s, col)) {
            size_t k = summary_class_count(s);
            level_moments *g = malloc((k ? k : 1) * sizeof *g);
            if (!g) return -1;
            /* Class means less a reference near the classes the tests weigh
             * most (summary_class_reference): the tests are shift-free, and
             * the digits in which those classes differ are kept. */
            const double ref = summary_class_reference(s, col);
            int imprecise = 0;
            for (size_t i = 0; i < k; i++) {
                summary_class_stats cs;
                summary_class_moments(s, col, (uint32_t)i, &cs);
                g[i] = (level_moments){i, (double)cs.n,
                                       summary_class_mean_about(s, col, (uint32_t)i, ref), cs.m2};
                imprecise |= cs.imprecise;
            }
            /* A class whose figures are noise (summary_class_moments) makes
             * both F tests noise, and so does a spread whose squares leave
             * the double range at the bottom (below 2^-480, about 3e-145:
             * the class M2 summed underflowing squares; values near 1e-300
             * read F = infinity for an exact 1.33): the binned values'
             * chi-squared, made from the numbers themselves, decides. */
            const double spread = summary_max(s, col) - summary_min(s, col);
            const int tiny = spread > 0 && spread < 0x1p-480;
            /* and at the top: squares past the double range (spreads of 1e154
             * or more) leave the tests undefined */
            const int huge = spread > 0 && !isfinite(summary_sd(s, col));
            by_chi2 = imprecise || tiny || huge;
            if (!by_chi2)
                rc = groups_test(g, k, &f->anova_f, &f->welch_f);
            else
                add_reason(f, "%s: F tests left out, the binned values' chi-squared used",
                           imprecise ? "class means imprecise (see info)"
                           : tiny    ? "spread below 1e-144 (its squares underflow)"
                                     : "spread past the double range (its squares overflow)");
            free(g);
            set_primary(f, &f->anova_f);
        } else if (task == TASK_REGRESS) {
            correlation_test(s, col, &f->corr_f);
            if (!f->corr_f.present && summary_pair_imprecise(s, col, (size_t)summary_target_column(s)))
                add_reason(f, IMPRECISE_R);
            set_primary(f, &f->corr_f);
        }
        /* MI (and chi-squared) from the bucket store: feature buckets x target cells. */
        const buckets *bins = summary_buckets(s, col);
        size_t ne = buckets_entries(bins);
        for (size_t i = 0; i < ne && rc == 0; i++) {
            buckets_entry e = buckets_entry_at(bins, i);
            if (e.cell == 0) continue; /* target missing */
            rc = triples_push(&t, e.key, cell_order(ta, e.cell), (double)e.count);
        }
        if (rc == 0)
            rc = pair_table(f, t.x, t.y, t.n, t.len, o->bins, task == TASK_CLASSIFY ? 0 : o->bins, 1);
        if (by_chi2) set_primary(f, &f->chi2);
        triples_free(&t);
        return rc;
    }
    const crosstab *cross = summary_crosstab(s, col);
    if (!cross) return 0;
    size_t ne = crosstab_entries(cross);
    if (task == TASK_REGRESS) {
        level_moments *g = malloc((ne ? ne : 1) * sizeof *g);
        if (!g) return -1;
        size_t m = level_groups(s, cross, g);
        rc = groups_test(g, m, &f->anova_f, NULL);
        if (rc == 0) rc = level_check(g, m, &f->anova_check);
        free(g);
        set_primary(f, &f->anova_f);
    }
    /* Levels x target table: chi-squared (classification) and MI. */
    for (size_t i = 0; i < ne && rc == 0; i++) {
        crosstab_entry e = crosstab_entry_at(cross, i);
        if (ta->classes && e.cell == 0) continue;
        rc = triples_push(&t, (int64_t)e.key, cell_order(ta, e.cell), (double)e.n);
    }
    if (rc == 0) {
        rc = pair_table(f, t.x, t.y, t.n, t.len, 0, task == TASK_CLASSIFY ? 0 : o->bins,
                        task == TASK_CLASSIFY);
        if (task == TASK_CLASSIFY) set_primary(f, &f->chi2);
    }
    triples_free(&t);
    return rc;
}

/* ---- selection ------------------------------------------------------------ */

/* The statistic of the test behind q. */
static double primary_stat(const screen_feature *f)
{
    if (f->corr_f.present) return f->corr_f.stat;
    if (f->anova_f.present) return f->anova_f.stat;
    if (f->chi2.present) return f->chi2.stat;
    return 0;
}

/* x rounded to 40 significant bits: the ranking keys of equal tests agree
 * to about 12 digits however their sums were ordered (one scan, or a merge
 * of its halves), and rounding (unlike a tolerance) keeps the order
 * transitive, so such ties fall through to the column order. */
static double tie_key(double x)
{
    if (!isfinite(x) || x == 0) return x;
    int e;
    frexp(x, &e);
    return ldexp(nearbyint(ldexp(x, 40 - e)), e - 40);
}

/* More relevant first: the ranking key, then q, p, the statistic, the
 * column (each key to 40 bits: tie_key). */
static int relevance_cmp(const screen_feature *a, const screen_feature *b, screen_rank by)
{
    if (by == RANK_MI) {
        double ma = tie_key(a->mi.present && !isnan(a->mi.adjusted) ? a->mi.adjusted : -2),
               mb = tie_key(b->mi.present && !isnan(b->mi.adjusted) ? b->mi.adjusted : -2);
        if (ma != mb) return ma > mb ? -1 : 1;
    }
    if (by == RANK_STAT) {
        double sa = tie_key(primary_stat(a)), sb = tie_key(primary_stat(b));
        if (sa != sb) return sa > sb ? -1 : 1;
    }
    /* log10 q and log10 p (at most 0; NaN = untested, last) keep their order
     * below the double range, where q and p are both 0. */
    double lqa = tie_key(isnan(a->log10_q) ? 1 : a->log10_q),
           lqb = tie_key(isnan(b->log10_q) ? 1 : b->log10_q);
    if (lqa != lqb) return lqa < lqb ? -1 : 1;
    double lpa = tie_key(isnan(a->log10_p) ? 1 : a->log10_p),
           lpb = tie_key(isnan(b->log10_p) ? 1 : b->log10_p);
    if (lpa != lpb) return lpa < lpb ? -1 : 1;
    double pa = tie_key(isnan(a->p) ? 2 : a->p), pb = tie_key(isnan(b->p) ? 2 : b->p); /* the key without a target */
    if (pa != pb) return pa < pb ? -1 : 1;
    /* Equal p (both 0 exactly, or equal by rounding): statistics of
     * different tests are not comparable, mutual information adjusted for
     * chance is. */
    double mia = tie_key(a->mi.adjusted), mib = tie_key(b->mi.adjusted);
    if (a->mi.present && b->mi.present && mia != mib && !isnan(mia) && !isnan(mib))
        return mia > mib ? -1 : 1;
    double sa = tie_key(primary_stat(a)), sb = tie_key(primary_stat(b));
    if (sa != sb) return sa > sb ? -1 : 1;
    return (a->col > b->col) - (a->col < b->col);
}

/* qsort has no context argument: a small insertion sort keeps this reentrant. */
static void sort_by_relevance(size_t *order, size_t n, const screen_feature *f, screen_rank by)
{
    for (size_t i = 1; i < n; i++) {
        size_t v = order[i], j = i;
        while (j > 0 && relevance_cmp(&f[v], &f[order[j - 1]], by) < 0) {
            order[j] = order[j - 1];
            j--;
        }
        order[j] = v;
    }
}

screen_result *screen_run(const summary *s, const screen_options *o)
{
    screen_result *res = calloc(1, sizeof *res);
    if (!res) return NULL;
    int target = summary_target_column(s), classes = summary_classes_kept(s);
    int from_comoments = o->target_col >= 0 && o->target_col != target;
    if (from_comoments && screen_target_problem(s, (size_t)o->target_col, o->numeric_share)) {
        free(res);
        return NULL;
    }
    target_task task = from_comoments ? TASK_REGRESS : summary_target_task(s, o->numeric_share);
    if (from_comoments) {
        target = (int)o->target_col;
        classes = 0;
    }
    res->task = task;
    res->target = target;
    res->from_comoments = from_comoments;
    size_t ncols = summary_columns(s);
    res->features = calloc(ncols ? ncols : 1, sizeof *res->features);
    size_t *order = calloc(ncols ? ncols : 1, sizeof *order);
    int64_t *rank = calloc(summary_class_count(s) + 1, sizeof *rank);
    double *p = malloc((ncols ? ncols : 1) * sizeof *p);
    if (!res->features || !order || !rank || !p) goto oom;
    target_axis ta = {classes, classes && task == TASK_REGRESS, rank};
    if (ta.by_value) class_ranks(s, rank);
    /* Flags and tests. */
    size_t nf = 0;
    for (size_t i = 0; i < ncols; i++) {
        if ((int)i == target) continue;
        screen_feature *f = &res->features[nf++];
        f->col = i;
        f->kind = summary_kind(s, i, o->numeric_share);
        f->flags = column_flags(s, i, f->kind, o);
        f->p = f->q = f->log10_p = f->log10_q = NAN;
        f->anova_f.df2 = f->chi2.df2 = NAN;
        for (int b = 0; b < SCREEN_NFLAGS; b++)
            if (f->flags & (1u << b)) add_reason(f, "%s", screen_flag_names[b]);
        f->mi.expected_nats = f->mi.adjusted = NAN;
        if (!f->flags && from_comoments) {
            test_from_comoments(s, i, (size_t)target, f);
            judge_mirror(s, f, task);
        } else if (!f->flags && task != TASK_AUTO) {
            if (test_feature(s, i, task, o, &ta, f) != 0) goto oom;
            judge_primary(f, task);
            judge_mirror(s, f, task);
        }
    }
    res->nfeatures = nf;
    /* q-values over the tested features whose test holds, from log10 p. */
    for (size_t i = 0; i < nf; i++)
        p[i] = res->features[i].unreliable ? NAN : res->features[i].log10_p;
    if (logp_benjamini_hochberg(p, nf, p) != 0) goto oom;
    for (size_t i = 0; i < nf; i++) {
        screen_feature *f = &res->features[i];
        f->log10_q = p[i];
        f->q = pow(10, p[i]); /* NaN stays NaN */
        if (f->q < DBL_MIN) f->q = 0;
    }
    /* Relevance. */
    for (size_t i = 0; i < nf; i++) {
        screen_feature *f = &res->features[i];
        f->keep = !(o->keep_mirrors ? f->flags & ~(unsigned)SCREEN_MIRRORS_TARGET : f->flags);
        if (!f->keep || task == TASK_AUTO) continue;
        if (f->unreliable) {
            f->keep = 0; /* the reason was given with the test */
        } else if (isnan(f->q)) {
            f->keep = 0;
            if (!f->reasons[0]) add_reason(f, "no test applies");
        } else if (f->q >= o->q_level) {
            f->keep = 0;
            add_reason(f, "not relevant (q = %.3g)", f->q);
        }
    }
    size_t nk = 0;
    for (size_t i = 0; i < nf; i++)
        if (res->features[i].keep) order[nk++] = i;
    if (task == TASK_AUTO) {
        /* No target: more relevant = accounts for more of the others'
         * variance (sum of squared correlations with the kept columns). The
         * sum goes into p as a sort key and is cleared below. */
        for (size_t a = 0; a < nk; a++) {
            screen_feature *f = &res->features[order[a]];
            double sum = 0;
            for (size_t b = 0; b < nk && summary_has_pairs(s, f->col); b++) {
                if (b == a) continue;
                double r = summary_correlation(s, f->col, res->features[order[b]].col);
                if (isfinite(r)) sum += r * r;
            }
            f->p = -sum;
        }
    }
    sort_by_relevance(order, nk, res->features, task == TASK_AUTO ? RANK_Q : o->rank_by);
    /* Copies (the same cell in every row, any kind of column), the more
     * relevant one staying. */
    int prints = summary_has_copy_prints(s);
    for (size_t a = 0; a < nk && prints; a++) {
        screen_feature *fa = &res->features[order[a]];
        if (!fa->keep) continue;
        for (size_t b = a + 1; b < nk; b++) {
            screen_feature *fb = &res->features[order[b]];
            if (!fb->keep || summary_same_cells(s, fa->col, fb->col) != 1) continue;
            fb->keep = 0;
            add_reason(fb, "a copy of %s (the same cell in every row)", summary_name(s, fa->col));
        }
    }
    /* Redundancy among kept numeric features, the more relevant one staying. */
    for (size_t a = 0; a < nk; a++) {
        screen_feature *fa = &res->features[order[a]];
        if (fa->kind != KIND_NUMERIC || !summary_has_pairs(s, fa->col)) continue;
        for (size_t b = a + 1; b < nk; b++) {
            screen_feature *fb = &res->features[order[b]];
            if (fb->kind != KIND_NUMERIC || !summary_has_pairs(s, fb->col)) continue;
            double r = summary_correlation(s, fa->col, fb->col);
            if (!(fabs(r) >= o->redundancy)) continue;
            screen_pair *pp = realloc(res->pairs, (res->npairs + 1) * sizeof *pp);
            if (!pp) goto oom;
            res->pairs = pp;
            pp[res->npairs++] = (screen_pair){order[a], order[b], r};
            if (fa->keep && fb->keep) {
                fb->keep = 0;
                add_reason(fb, "redundant with %s (r = %.3f)", summary_name(s, fa->col), r);
            }
        }
    }
    if (task == TASK_AUTO)
        for (size_t i = 0; i < nf; i++) res->features[i].p = NAN;
    /* Ranks and --top. */
    size_t rnk = 0;
    for (size_t a = 0; a < nk; a++) {
        screen_feature *f = &res->features[order[a]];
        if (!f->keep) continue;
        if (o->top && rnk >= o->top) {
            f->keep = 0;
            add_reason(f, "beyond the first %zu kept", o->top);
            continue;
        }
        f->rank = ++rnk;
        if (task == TASK_AUTO)
            add_reason(f, f->kind == KIND_NUMERIC || prints
                              ? "no flag, not redundant"
                              : "no flag (text: not compared with the others)");
        else {
            char q[40];
            logp_format(q, sizeof q, f->log10_q, 3);
            add_reason(f, "relevant (q = %s)", q);
        }
    }
    res->kept = rnk;
    free(order);
    free(rank);
    free(p);
    return res;
oom:
    free(order);
    free(rank);
    free(p);
    screen_free(res);
    return NULL;
}
