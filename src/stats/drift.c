/* drift: see drift.h for the method, its bounds and its sources. */
#include "stats/drift.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>

#include "io/number.h"
#include "stats/screen.h"
#include "stats/stat.h"
#include "summary/access.h"
#include "summary/access_tables.h"

const char *const drift_flag_names[DRIFT_NFLAGS] = {
    "appeared",          "vanished",       "kind",       "psi",       "ks",
    "mean_shift",        "missing_share",  "non_numeric_share",       "distinct",
    "categories",        "tv",             "relevance",  "rank",
};

void drift_options_defaults(drift_options *o)
{
    o->numeric_share = 0.99;
    o->max_psi = DRIFT_PSI_MAJOR;
    o->max_ks = 0.1;
    o->max_shift = 0.5;
    o->max_share_change = 0.05;
    o->max_tv = 0.1;
    o->max_r_change = 0.2;
    o->fdr = 0.05;
    o->max_rank_change = 3;
}

/* ---- compatibility -------------------------------------------------------- */

static void note(char *msg, size_t len, size_t *used, const char *fmt, ...)
    __attribute__((format(printf, 4, 5)));

static void note(char *msg, size_t len, size_t *used, const char *fmt, ...)
{
    if (!len || *used >= len - 1) return;
    if (*used) {
        int k = snprintf(msg + *used, len - *used, "; ");
        if (k > 0) *used += (size_t)k < len - *used ? (size_t)k : len - 1 - *used;
    }
    va_list ap;
    va_start(ap, fmt);
    int k = vsnprintf(msg + *used, len - *used, fmt, ap);
    va_end(ap);
    if (k > 0) *used += (size_t)k < len - *used ? (size_t)k : len - 1 - *used;
}

/* 1 when every spelling of a is one of b's, by the rule (any case or bytes). */
static int spellings_within(const summary *a, const summary *b, int any_case)
{
    for (uint32_t i = 0; i < summary_missing_spellings(a); i++) {
        const char *x = summary_missing_spelling(a, i);
        int found = 0;
        for (uint32_t j = 0; j < summary_missing_spellings(b) && !found; j++) {
            const char *y = summary_missing_spelling(b, j);
            found = any_case ? !strcasecmp(x, y) : !strcmp(x, y);
        }
        if (!found) return 0;
    }
    return 1;
}

static const char *mode_name(column_mode m)
{
    return m == COLUMN_NUMERIC ? "numeric" : m == COLUMN_CATEGORICAL ? "categorical" : "undeclared";
}

/* The column of `other` paired with column c of s: columns are matched by
 * name, and a name that several columns share by occurrence (the k-th
 * column of that name with the k-th), so that two summaries of one file
 * pair every column with itself.  -1 when other has no such column. */
static long paired_column(const summary *s, size_t c, const summary *other)
{
    const char *name = summary_name(s, c);
    size_t k = 0;
    for (size_t i = 0; i < c; i++) k += !strcmp(summary_name(s, i), name);
    for (size_t i = 0; i < summary_columns(other); i++)
        if (!strcmp(summary_name(other, i), name) && k-- == 0) return (long)i;
    return -1;
}

int drift_compatible(const summary *base, const summary *next, char *msg, size_t msglen)
{
    size_t used = 0;
    if (msglen) msg[0] = '\0';
    if (summary_bucket_budget(base) != summary_bucket_budget(next))
        note(msg, msglen, &used, "bucket budgets differ (%u vs %u)",
             summary_bucket_budget(base), summary_bucket_budget(next));
    if (summary_max_levels(base) != summary_max_levels(next))
        note(msg, msglen, &used, "value-table sizes differ (%u vs %u)",
             summary_max_levels(base), summary_max_levels(next));
    if (summary_label_bytes(base) != summary_label_bytes(next))
        note(msg, msglen, &used, "label lengths differ (%u vs %u bytes)",
             summary_label_bytes(base), summary_label_bytes(next));
    int any = summary_missing_any_case(base);
    if (any != summary_missing_any_case(next))
        note(msg, msglen, &used,
             "missing spellings matched %s in the baseline and %s in the new summary",
             any ? "in any letter case" : "byte for byte",
             any ? "byte for byte" : "in any letter case");
    else if (!spellings_within(base, next, any) || !spellings_within(next, base, any))
        note(msg, msglen, &used, "missing-value spellings differ");
    size_t listed = 0, more = 0;
    for (size_t c = 0; c < summary_columns(base); c++) {
        long d = paired_column(base, c, next);
        if (d < 0 || summary_mode(base, c) == summary_mode(next, (size_t)d)) continue;
        if (listed++ < 6)
            note(msg, msglen, &used, "column '%s' declared %s vs %s", summary_name(base, c),
                 mode_name(summary_mode(base, c)), mode_name(summary_mode(next, (size_t)d)));
        else more++;
    }
    if (more) note(msg, msglen, &used, "%zu more columns declared differently", more);
    return used == 0;
}

/* ---- numeric columns: bins, PSI, KS ---------------------------------------- */

/* A bucket store at level `level`, summed over its cells: keys ascending. */
typedef struct {
    int64_t *key;
    uint64_t *count;
    size_t n;
    uint64_t total;
} marginal;

static void marginal_free(marginal *m) { free(m->key); free(m->count); }

/* The keys of b re-keyed to `level` (>= b's): a value the key covers (its
 * lower bound) gives the level-0 key, which buckets_key_at takes up. */
static int marginal_of(const buckets *b, int level, marginal *m)
{
    memset(m, 0, sizeof *m);
    size_t n = b ? buckets_entries(b) : 0;
    m->key = malloc((n ? n : 1) * sizeof *m->key);
    m->count = malloc((n ? n : 1) * sizeof *m->count);
    if (!m->key || !m->count) { marginal_free(m); return -1; }
    int from = b ? buckets_level(b) : 0;
    for (size_t i = 0; i < n; i++) {
        buckets_entry e = buckets_entry_at(b, i);
        if (!e.count) { marginal_free(m); return -1; } /* an unsealed store out of memory */
        int64_t k = e.key;
        if (level != from) {
            double lo, hi;
            buckets_bounds(e.key, from, &lo, &hi);
            k = buckets_key_at(buckets_key(lo), level);
        }
        if (m->n && m->key[m->n - 1] == k) m->count[m->n - 1] += e.count;
        else { m->key[m->n] = k; m->count[m->n] = e.count; m->n++; }
        m->total += e.count;
    }
    return 0;
}

static double share_of(uint64_t count, uint64_t total)
{
    return (count ? (double)count : 0.5) / (double)total;
}

/* A distinct number and its cells. */
typedef struct {
    double value;
    uint64_t count;
} counted;

static int by_value(const void *pa, const void *pb)
{
    double a = ((const counted *)pa)->value, b = ((const counted *)pb)->value;
    return (a > b) - (a < b);
}

/* The column's finite numbers with their counts, ascending and merged by
 * value, when its value table holds every one: never overflowed, no label
 * cut, and the labels that read as finite numbers count exactly the
 * column's numbers (as summary_quantiles' exact path).  Returns how many
 * (*out malloc'ed), 0 when the table does not hold them all, -1 when out
 * of memory. */
static long exact_numbers(const summary *s, size_t col, counted **out)
{
    *out = NULL;
    const values *v = summary_values(s, col);
    if (!v || values_overflowed(v) || !summary_numbers(s, col)) return 0;
    size_t k = values_levels(v);
    values_entry *e = malloc((k ? k : 1) * sizeof *e);
    counted *x = malloc((k ? k : 1) * sizeof *x);
    if (!e || !x) { free(e); free(x); return -1; }
    size_t n = summary_top(s, col, k, e), m = 0;
    uint64_t total = 0;
    for (size_t i = 0; i < n; i++) {
        number_decimal d;
        if (e[i].cut) { m = 0; total = 0; break; }
        if (number_parse(e[i].label, e[i].label_len, &d) != NUMBER_FINITE) continue;
        x[m++] = (counted){d.value, e[i].count};
        total += e[i].count;
    }
    free(e);
    if (n < k || total != summary_numbers(s, col)) { free(x); return 0; }
    qsort(x, m, sizeof *x, by_value);
    size_t w = 0;
    for (size_t i = 0; i < m; i++) {
        if (w && x[w - 1].value == x[i].value) x[w - 1].count += x[i].count;
        else x[w++] = x[i];
    }
    *out = x;
    return (long)w;
}

/* The exact two-sample D of the empirical CDFs of two counted samples. */
static double exact_ks(const counted *a, size_t na, const counted *b, size_t nb)
{
    uint64_t ta = 0, tb = 0, ca = 0, cb = 0;
    for (size_t i = 0; i < na; i++) ta += a[i].count;
    for (size_t i = 0; i < nb; i++) tb += b[i].count;
    double d = 0;
    for (size_t i = 0, j = 0; i < na || j < nb;) {
        double v = i >= na ? b[j].value : j >= nb ? a[i].value : a[i].value < b[j].value ? a[i].value : b[j].value;
        if (i < na && a[i].value == v) ca += a[i++].count;
        if (j < nb && b[j].value == v) cb += b[j++].count;
        double g = fabs((double)ca / (double)ta - (double)cb / (double)tb);
        if (g > d) d = g;
    }
    return d;
}

static void numeric_drift(const summary *base, const summary *next, drift_column *c,
                          const drift_options *o, int *oom)
{
    size_t bc = (size_t)c->base.col, nc = (size_t)c->next.col;
    double mb = c->base.mean, mn = c->next.mean, sd = c->base.sd;
    if (c->base.numbers == 1) sd = 0; /* one number is a constant baseline */
    if (isfinite(mb) && isfinite(mn)) {
        if (isfinite(sd) && sd > 0) c->mean_shift = (mn - mb) / sd;
        else if (isfinite(sd)) c->mean_shift = mn == mb ? 0 : copysign(INFINITY, mn - mb);
    }
    if (fabs(c->mean_shift) >= o->max_shift) c->flags |= DRIFT_SHIFT;

    const buckets *bb = summary_buckets(base, bc), *nb = summary_buckets(next, nc);
    if (!bb || !nb || !buckets_total(bb) || !buckets_total(nb)) return;
    int level = buckets_level(bb) > buckets_level(nb) ? buckets_level(bb) : buckets_level(nb);
    marginal p, q;
    if (marginal_of(bb, level, &p)) { *oom = 1; return; }
    if (marginal_of(nb, level, &q)) { marginal_free(&p); *oom = 1; return; }
    c->level = level;

    /* The baseline's decile edges: the buckets where its cumulative count
     * first reaches j n / 10, without repeats and without its last bucket. */
    size_t edge_at[DRIFT_DECILES - 1], nedges = 0, i = 0;
    uint64_t cum = 0;
    for (unsigned j = 1; j < DRIFT_DECILES; j++) {
        double target = (double)j * (double)p.total / DRIFT_DECILES;
        while (i < p.n && (double)(cum + p.count[i]) < target) cum += p.count[i++];
        if (i >= p.n - 1) break; /* the last bucket: nothing of the baseline above it */
        if (!nedges || edge_at[nedges - 1] != i) edge_at[nedges++] = i;
    }
    c->bins = (unsigned)nedges + 1;
    for (size_t e = 0; e < nedges; e++) {
        double lo, hi;
        buckets_bounds(p.key[edge_at[e]], level, &lo, &hi);
        c->edges[e] = hi;
    }
    /* Counts per bin: bin j holds the keys in (edge j-1, edge j]. */
    for (size_t k = 0, bin = 0; k < p.n; k++) {
        while (bin < nedges && p.key[k] > p.key[edge_at[bin]]) bin++;
        c->base_counts[bin] += p.count[k];
    }
    for (size_t k = 0, bin = 0; k < q.n; k++) {
        while (bin < nedges && q.key[k] > p.key[edge_at[bin]]) bin++;
        c->next_counts[bin] += q.count[k];
    }
    c->psi = 0;
    for (unsigned j = 0; j < c->bins; j++) {
        double a = share_of(c->base_counts[j], p.total), b = share_of(c->next_counts[j], q.total);
        c->psi += (b - a) * log(b / a);
    }

    /* KS over the union of keys: exact at bucket ends, bounded inside.  The
     * cumulative counts are integers, so equal stores give exactly 0. */
    double lowd = 0, high = 0;
    uint64_t cp = 0, cq = 0;
    double np_ = (double)p.total, nq = (double)q.total;
    for (size_t a = 0, b = 0; a < p.n || b < q.n;) {
        int64_t k = a >= p.n ? q.key[b] : b >= q.n ? p.key[a] : p.key[a] < q.key[b] ? p.key[a] : q.key[b];
        double ap = (double)cp / np_, aq = (double)cq / nq;
        if (a < p.n && p.key[a] == k) cp += p.count[a++];
        if (b < q.n && q.key[b] == k) cq += q.count[b++];
        double fp = (double)cp / np_, fq = (double)cq / nq;
        double d = fabs(fp - fq);
        if (d > lowd) lowd = d;
        if (fp - aq > high) high = fp - aq;
        if (fq - ap > high) high = fq - ap;
    }
    c->ks = lowd;
    c->ks_bound = high > lowd ? high : lowd;
    marginal_free(&p);
    marginal_free(&q);
    /* Both value tables hold every number: D itself. */
    counted *xa = NULL, *xb = NULL;
    long na = exact_numbers(base, bc, &xa), nb2 = na > 0 ? exact_numbers(next, nc, &xb) : 0;
    if (na < 0 || nb2 < 0) *oom = 1;
    else if (na > 0 && nb2 > 0) {
        c->ks = c->ks_bound = exact_ks(xa, (size_t)na, xb, (size_t)nb2);
        c->ks_exact = 1;
    }
    free(xa);
    free(xb);
    if (c->psi >= o->max_psi) c->flags |= DRIFT_PSI;
    if (c->ks >= o->max_ks) c->flags |= DRIFT_KS;
}

/* ---- categorical columns: value tables -------------------------------------- */

static int by_hash(const void *pa, const void *pb)
{
    uint64_t a = ((const values_entry *)pa)->hash, b = ((const values_entry *)pb)->hash;
    return a < b ? -1 : a > b;
}

/* The whole value table of a column, most frequent first. */
static values_entry *table_of(const summary *s, size_t col, size_t *n)
{
    const values *v = summary_values(s, col);
    size_t k = v ? values_levels(v) : 0;
    values_entry *e = malloc((k ? k : 1) * sizeof *e);
    if (!e) return NULL;
    *n = k ? summary_top(s, col, k, e) : 0;
    return e;
}

static void list_category(drift_category *list, size_t *listed, const values_entry *e,
                          uint64_t total)
{
    if (*listed >= DRIFT_LISTED) return;
    drift_category *d = &list[(*listed)++];
    d->label = e->label;
    d->label_len = e->label_len;
    d->cut = e->cut;
    d->count = e->count;
    d->share = total ? (double)e->count / (double)total : NAN;
}

static void text_drift(const summary *base, const summary *next, drift_column *c,
                       const drift_options *o, int *oom)
{
    size_t nb = 0, nn = 0;
    values_entry *eb = table_of(base, (size_t)c->base.col, &nb);
    values_entry *en = table_of(next, (size_t)c->next.col, &nn);
    values_entry *sorted = malloc((nb ? nb : 1) * sizeof *sorted);
    unsigned char *seen = calloc(nb ? nb : 1, 1);
    double *table = malloc(2 * (nb + nn + 1) * sizeof *table);
    if (!eb || !en || !sorted || !seen || !table) { *oom = 1; goto done; }
    const values *vb = summary_values(base, (size_t)c->base.col);
    const values *vn = summary_values(next, (size_t)c->next.col);
    uint64_t tb = values_total(vb), tn = values_total(vn);
    int ob = values_overflowed(vb), on = values_overflowed(vn);
    c->text = 1;
    /* A category is known to have appeared when the baseline's table is
     * whole; all of them are known only when the new night's is whole too
     * (one first seen after its table filled is in no table).  The same for
     * vanished ones, the other way round. */
    c->appeared_known = !ob && !on;
    c->vanished_known = !on && !ob;
    /* Cells outside a full table may hold a category that came or went,
     * unseen: when they are enough for one to pass the share, the column
     * drifts (its table overflowed while the other night's did not, itself
     * a change). */
    double share = o->max_share_change;
    if (!ob && on && (double)values_overflow_total(vn) >= share * (double)tn)
        c->flags |= DRIFT_CATEGORIES;
    if (ob && !on && (double)values_overflow_total(vb) >= share * (double)tb)
        c->flags |= DRIFT_CATEGORIES;
    memcpy(sorted, eb, nb * sizeof *eb);
    qsort(sorted, nb, sizeof *sorted, by_hash);

    /* Columns of the 2 x K table: base categories (canonical order), then
     * the new night's own. */
    size_t k = 0;
    for (size_t i = 0; i < nb; i++) { table[k] = (double)sorted[i].count; table[nb + nn + k] = 0; k++; }
    double tv = 0, common_b = 0, common_n = 0;
    for (size_t i = 0; i < nn; i++) {
        const values_entry *hit = bsearch(&en[i], sorted, nb, sizeof *sorted, by_hash);
        if (hit) {
            size_t at = (size_t)(hit - sorted);
            seen[at] = 1;
            table[nb + nn + at] = (double)en[i].count;
            common_b += (double)hit->count;
            common_n += (double)en[i].count;
            tv += fabs((double)hit->count / (double)tb - (double)en[i].count / (double)tn);
            continue;
        }
        table[k] = 0;
        table[nb + nn + k] = (double)en[i].count;
        k++;
        if (!ob) {
            c->appeared++;
            list_category(c->appeared_list, &c->listed_appeared, &en[i], tn);
            if ((double)en[i].count >= o->max_share_change * (double)tn) c->flags |= DRIFT_CATEGORIES;
        }
    }
    for (size_t i = 0; i < nb; i++) { /* most frequent first: walk eb, look up seen */
        const values_entry *hit = bsearch(&eb[i], sorted, nb, sizeof *sorted, by_hash);
        if (seen[hit - sorted] || on) continue;
        c->vanished++;
        list_category(c->vanished_list, &c->listed_vanished, &eb[i], tb);
        if ((double)eb[i].count >= o->max_share_change * (double)tb) c->flags |= DRIFT_CATEGORIES;
    }
    if (!ob && !on) {
        /* Exact: the categories of one table only add their whole shares. */
        for (size_t i = 0; i < nb; i++)
            if (!seen[i]) tv += (double)sorted[i].count / (double)tb;
        for (size_t i = 0; i < nn; i++)
            if (!bsearch(&en[i], sorted, nb, sizeof *sorted, by_hash)) tv += (double)en[i].count / (double)tn;
        c->tv = tb && tn ? tv / 2 : NAN;
        c->tv_exact = 1;
        /* The table was filled as [row 0: k base cells | row 1 at offset
         * nb + nn]; pack row 1 next to row 0. */
        memmove(table + k, table + nb + nn, k * sizeof *table);
        stat_result r;
        int st = stat_chi_squared(table, 2, k, &r);
        if (st == -2) { *oom = 1; goto done; }
        if (st == 0) {
            c->chi2 = r.stat;
            c->chi2_df = r.df1;
            c->chi2_p = r.p;
            c->chi2_log10_p = r.log10_p;
        }
    } else {
        double other = fabs(((double)tb - common_b) / (double)tb - ((double)tn - common_n) / (double)tn);
        c->tv = tb && tn ? (tv + other) / 2 : NAN;
        c->tv_exact = 0;
    }
    if (c->tv >= o->max_tv) c->flags |= DRIFT_TV;
done:
    free(eb);
    free(en);
    free(sorted);
    free(seen);
    free(table);
}

/* ---- per column ---------------------------------------------------------------- */

static void side_of(const summary *s, long col, const drift_options *o, drift_side *d)
{
    d->col = col;
    d->missing_share = d->non_numeric_share = d->distinct = d->distinct_share = NAN;
    d->mean = d->sd = d->q = NAN;
    if (col < 0) return;
    size_t c = (size_t)col;
    d->kind = summary_kind(s, c, o->numeric_share);
    uint64_t rows = summary_rows(s), present = summary_present(s, c);
    if (rows) d->missing_share = (double)summary_missing(s, c) / (double)rows;
    if (present) d->non_numeric_share = (double)summary_non_numeric(s, c) / (double)present;
    d->distinct = summary_distinct(s, c, &d->distinct_exact);
    if (present) d->distinct_share = d->distinct / (double)present;
    d->mean = summary_mean(s, c);
    d->sd = summary_sd(s, c);
    d->numbers = summary_numbers(s, c);
    d->present = present;
    d->overflowed = summary_high_cardinality(s, c);
}

static void column_init(drift_column *c)
{
    memset(c, 0, sizeof *c);
    c->psi = c->ks = c->ks_bound = c->mean_shift = NAN;
    c->chi2 = c->chi2_df = c->chi2_p = c->chi2_log10_p = c->tv = NAN;
}

static void compare_column(const summary *base, const summary *next, drift_column *c,
                           const drift_options *o, int *oom)
{
    if (c->base.col < 0) { c->flags |= DRIFT_APPEARED; return; }
    if (c->next.col < 0) { c->flags |= DRIFT_VANISHED; return; }
    double m = o->max_share_change;
    if (fabs(c->next.missing_share - c->base.missing_share) >= m) c->flags |= DRIFT_MISSING;
    /* A night of no rows at all has no share to compare: against one with
     * rows, every column drifts by its missing cells. */
    if ((summary_rows(base) == 0) != (summary_rows(next) == 0)) c->flags |= DRIFT_MISSING;
    if (fabs(c->next.non_numeric_share - c->base.non_numeric_share) >= m)
        c->flags |= DRIFT_NON_NUMERIC;
    /* The expected distinct count of a sample is concave in its size and 0
     * at 0, so from n to n' cells it stays within [d min(1, n'/n),
     * d max(1, n'/n)]: only what lies beyond counts, as a share of the new
     * night's cells. */
    double db = c->base.distinct, dn = c->next.distinct;
    double pb = (double)c->base.present, pn = (double)c->next.present;
    if (pb > 0 && pn > 0 && isfinite(db) && isfinite(dn)) {
        double r = pn / pb, lo = db * (r < 1 ? r : 1), hi = db * (r > 1 ? r : 1);
        double excess = dn < lo ? lo - dn : dn > hi ? dn - hi : 0;
        if (excess >= m * pn) c->flags |= DRIFT_DISTINCT;
    }
    /* A column with no present cell on one side has no kind there: its
     * missing share tells the change, not a change of kind. */
    if (!c->base.present || !c->next.present) return;
    if (c->base.kind != c->next.kind) { c->flags |= DRIFT_KIND; return; }
    if (c->base.kind == KIND_NUMERIC) numeric_drift(base, next, c, o, oom);
    else text_drift(base, next, c, o, oom);
}

/* ---- pairs and relevance -------------------------------------------------------- */

static int in_pairs(const drift_column *c, const summary *base, const summary *next)
{
    return c->base.col >= 0 && c->next.col >= 0 && c->base.kind == KIND_NUMERIC &&
           c->next.kind == KIND_NUMERIC && summary_has_pairs(base, (size_t)c->base.col) &&
           summary_has_pairs(next, (size_t)c->next.col);
}

static int moved_pairs(const summary *base, const summary *next, drift_result *r,
                       const drift_options *o)
{
    size_t cap = 0;
    for (size_t i = 0; i < r->ncolumns; i++) {
        const drift_column *a = &r->columns[i];
        if (!in_pairs(a, base, next)) continue;
        for (size_t j = i + 1; j < r->ncolumns; j++) {
            const drift_column *b = &r->columns[j];
            if (!in_pairs(b, base, next)) continue;
            double rb = summary_correlation(base, (size_t)a->base.col, (size_t)b->base.col);
            double rn = summary_correlation(next, (size_t)a->next.col, (size_t)b->next.col);
            if (!isfinite(rb) || !isfinite(rn)) {
                r->pairs_imprecise +=
                    (size_t)(summary_pair_imprecise(base, (size_t)a->base.col, (size_t)b->base.col) ||
                             summary_pair_imprecise(next, (size_t)a->next.col, (size_t)b->next.col));
                continue;
            }
            r->pairs_compared++;
            if (!(fabs(rn - rb) >= o->max_r_change)) continue;
            if (r->npairs == cap) {
                size_t ncap = cap ? 2 * cap : 16;
                drift_pair *p = realloc(r->pairs, ncap * sizeof *p);
                if (!p) return -1;
                r->pairs = p;
                cap = ncap;
            }
            r->pairs[r->npairs++] = (drift_pair){a->name, b->name, rb, rn};
        }
    }
    return 0;
}

/* Index of the drift column of summary column col on one side. */
static void relevance_side(const screen_result *sr, const long *of, drift_column *cols, int next)
{
    for (size_t f = 0; f < sr->nfeatures; f++) {
        const screen_feature *x = &sr->features[f];
        long at = of[x->col];
        if (at < 0) continue;
        drift_side *d = next ? &cols[at].next : &cols[at].base;
        d->ranked = 1;
        d->q = x->q;
        screen_primary(x, &d->q_test);
        d->rank = x->rank;
    }
}

static int relevance(const summary *base, const summary *next, drift_result *r,
                     const drift_options *o, const long *of_base, const long *of_next)
{
    const char *tb = summary_target_name(base), *tn = summary_target_name(next);
    if (!tb || !tn) {
        r->relevance_note = tb || tn ? "only one summary has a target" : NULL;
        return 0;
    }
    if (strcmp(tb, tn)) { r->relevance_note = "the summaries have different targets"; return 0; }
    screen_options so;
    screen_options_defaults(&so);
    so.numeric_share = o->numeric_share;
    so.q_level = o->fdr;
    screen_result *sb = screen_run(base, &so);
    screen_result *sn = sb ? screen_run(next, &so) : NULL;
    if (!sn) { screen_free(sb); return -1; }
    r->relevance = 1;
    r->target = tb;
    relevance_side(sb, of_base, r->columns, 0);
    relevance_side(sn, of_next, r->columns, 1);
    for (size_t i = 0; i < r->ncolumns; i++) {
        drift_column *c = &r->columns[i];
        if (!c->base.ranked || !c->next.ranked) continue;
        /* Relevant at q <= fdr (NaN: untested, not relevant); the crossing
         * counts from q <= fdr / DRIFT_Q_MARGIN on the relevant side, so
         * that a column near the level does not flip on noise. */
        double qb = c->base.q, qn = c->next.q, strong = o->fdr / DRIFT_Q_MARGIN;
        if ((qb <= strong && !(qn <= o->fdr)) || (qn <= strong && !(qb <= o->fdr)))
            c->flags |= DRIFT_RELEVANCE;
        if (o->max_rank_change && c->base.rank && c->next.rank) {
            size_t a = c->base.rank, b = c->next.rank;
            if ((a > b ? a - b : b - a) >= o->max_rank_change) c->flags |= DRIFT_RANK;
        }
    }
    screen_free(sb);
    screen_free(sn);
    return 0;
}

/* ---- the run -------------------------------------------------------------------- */

void drift_free(drift_result *r)
{
    if (!r) return;
    free(r->columns);
    free(r->pairs);
    free(r);
}

drift_status drift_run(const summary *base, const summary *next, const drift_options *o,
                       drift_result **out, char *err, size_t errlen)
{
    *out = NULL;
    if (!drift_compatible(base, next, err, errlen)) return DRIFT_ERR_INCOMPATIBLE;
    size_t nb = summary_columns(base), nn = summary_columns(next);
    drift_result *r = calloc(1, sizeof *r);
    long *of_base = malloc((nb ? nb : 1) * sizeof *of_base);
    long *of_next = malloc((nn ? nn : 1) * sizeof *of_next);
    if (r) r->columns = calloc(nb + nn ? nb + nn : 1, sizeof *r->columns);
    if (!r || !r->columns || !of_base || !of_next) goto oom;
    r->base_rows = summary_rows(base);
    r->next_rows = summary_rows(next);
    for (size_t j = 0; j < nn; j++) of_next[j] = -1;
    for (size_t i = 0; i < nb; i++) {
        drift_column *c = &r->columns[r->ncolumns];
        column_init(c);
        c->name = summary_name(base, i);
        long j = paired_column(base, i, next);
        side_of(base, (long)i, o, &c->base);
        side_of(next, j, o, &c->next);
        of_base[i] = (long)r->ncolumns;
        if (j >= 0 && of_next[j] < 0) of_next[j] = (long)r->ncolumns;
        r->ncolumns++;
    }
    for (size_t j = 0; j < nn; j++) {
        if (paired_column(next, j, base) >= 0) continue;
        drift_column *c = &r->columns[r->ncolumns];
        column_init(c);
        c->name = summary_name(next, j);
        side_of(base, -1, o, &c->base);
        side_of(next, (long)j, o, &c->next);
        of_next[j] = (long)r->ncolumns++;
    }
    int oom = 0;
    for (size_t i = 0; i < r->ncolumns && !oom; i++)
        compare_column(base, next, &r->columns[i], o, &oom);
    if (oom || moved_pairs(base, next, r, o) || relevance(base, next, r, o, of_base, of_next))
        goto oom;
    for (size_t i = 0; i < r->ncolumns; i++) r->drifting += r->columns[i].flags != 0;
    free(of_base);
    free(of_next);
    *out = r;
    return DRIFT_OK;
oom:
    free(of_base);
    free(of_next);
    drift_free(r);
    snprintf(err, errlen, "out of memory while comparing the summaries");
    return DRIFT_ERR_MEMORY;
}
