/* access: see access.h.  The one place outside the summary module that
 * reads a summary's fields; every call is a read. */
#include "summary/access.h"
#include "io/closest.h"
#include "summary/column.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <xxhash.h>

static const summary_column *column(const summary *s, size_t col) { return &s->cols[col]; }

/* ---- the table ----------------------------------------------------------- */

uint64_t summary_rows(const summary *s) { return s->rows; }
uint64_t summary_bytes(const summary *s) { return s->bytes; }
uint64_t summary_short_rows(const summary *s) { return s->short_rows; }
uint64_t summary_repeated_headers(const summary *s) { return s->repeated_headers; }
uint64_t summary_long_rows(const summary *s) { return s->long_rows; }

size_t summary_ragged_lines(const summary *s, const uint64_t **lines)
{
    *lines = s->bad_lines;
    return s->n_bad_lines;
}

uint32_t summary_missing_spellings(const summary *s) { return s->opt.n_missing; }
const char *summary_missing_spelling(const summary *s, uint32_t i) { return s->opt.missing[i]; }
int summary_missing_any_case(const summary *s) { return s->opt.missing_any_case; }
size_t summary_source_count(const summary *s) { return s->nsources; }

const summary_source *summary_source_at(const summary *s, size_t i)
{
    return &s->sources[i];
}

long summary_duplicate_source(const summary *into, const summary *from, size_t *which)
{
    for (size_t i = 0; i < from->nsources; i++) {
        const summary_source *b = &from->sources[i];
        if (b->raw_bytes == 0 || b->rows == 0) continue;
        for (size_t k = 0; k < into->nsources; k++) {
            const summary_source *a = &into->sources[k];
            if (a->fingerprint == b->fingerprint && a->raw_bytes == b->raw_bytes &&
                a->start_byte == b->start_byte && a->end_byte == b->end_byte) {
                *which = k;
                return (long)i;
            }
        }
    }
    return -1;
}

/* ---- columns ------------------------------------------------------------- */

size_t summary_columns(const summary *s) { return s->ncols; }

long summary_find_column_n(const summary *s, const char *name, size_t len)
{
    for (size_t i = 0; i < s->ncols; i++)
        if (strncmp(s->cols[i].name, name, len) == 0 && s->cols[i].name[len] == '\0')
            return (long)i;
    return -1;
}

void summary_suggest_columns(const summary *s, const char *name, size_t len, char *buf,
                             size_t buflen)
{
    closest c;
    closest_init(&c, name, len);
    for (size_t i = 0; i < summary_columns(s); i++) {
        const char *n = summary_name(s, i);
        closest_offer(&c, n, strlen(n));
    }
    closest_append(&c, "columns", buf, buflen);
}

long summary_find_column(const summary *s, const char *name)
{
    return summary_find_column_n(s, name, strlen(name));
}

const char *summary_name(const summary *s, size_t col) { return column(s, col)->name; }
column_mode summary_mode(const summary *s, size_t col) { return column(s, col)->mode; }

column_kind summary_kind(const summary *s, size_t col, double numeric_share)
{
    return summary_column_kind(column(s, col), numeric_share);
}

uint64_t summary_numbers(const summary *s, size_t col) { return column(s, col)->mom.n; }
uint64_t summary_missing(const summary *s, size_t col) { return column(s, col)->missing; }
int summary_has_copy_prints(const summary *s) { return s->copy_prints; }

int summary_same_cells(const summary *s, size_t a, size_t b)
{
    if (!s->copy_prints) return -1;
    const summary_column *x = &s->cols[a], *y = &s->cols[b];
    uint64_t nx = summary_column_present(x);
    return nx > 0 && nx == summary_column_present(y) && x->copy_print == y->copy_print;
}

uint64_t summary_present(const summary *s, size_t col) { return summary_column_present(column(s, col)); }
uint64_t summary_non_numeric(const summary *s, size_t col) { return column(s, col)->non_numeric; }
uint64_t summary_non_finite(const summary *s, size_t col) { return column(s, col)->non_finite; }
uint64_t summary_zeros(const summary *s, size_t col) { return column(s, col)->zeros; }
uint64_t summary_integers(const summary *s, size_t col) { return column(s, col)->integers; }

double summary_mean(const summary *s, size_t col)
{
    const moments *m = &column(s, col)->mom;
    return m->n ? moments_mean(m) : NAN;
}

double summary_variance(const summary *s, size_t col) { return moments_variance(&column(s, col)->mom); }
double summary_sd(const summary *s, size_t col) { return sqrt(summary_variance(s, col)); }
double summary_skewness(const summary *s, size_t col) { return moments_skewness(&column(s, col)->mom); }
double summary_kurtosis(const summary *s, size_t col) { return moments_kurtosis(&column(s, col)->mom); }

double summary_min(const summary *s, size_t col)
{
    const moments *m = &column(s, col)->mom;
    return m->n ? m->min : NAN;
}

double summary_max(const summary *s, size_t col)
{
    const moments *m = &column(s, col)->mom;
    return m->n ? m->max : NAN;
}

/* One distinct number of a column's value table and its count. */
typedef struct {
    number_decimal dec; /* the number, as its cells spell it */
    uint64_t count;     /* cells with that text */
} exact_number;

/* Ascending by value; decimals that round to one double by their exact
 * difference. */
static int exact_number_cmp(const void *a, const void *b)
{
    const number_decimal *x = &((const exact_number *)a)->dec, *y = &((const exact_number *)b)->dec;
    if (x->value != y->value) return x->value < y->value ? -1 : 1;
    double d = number_difference(x, y, NULL);
    return (d > 0) - (d < 0);
}

/* The column's numbers as distinct decimals with their counts, ascending,
 * when its value table holds every one of them: the table never overflowed,
 * every label is the whole cell (shorter than the label length, or hashing
 * to the entry's key) and the finite numbers among the labels count exactly
 * the column's numbers.  Returns how many (*out malloc'ed), 0 when the table
 * does not hold them all, -1 when out of memory. */
static long exact_numbers(const summary_column *c, exact_number **out)
{
    *out = NULL;
    const values *v = c->vals;
    if (c->mom.n == 0 || values_overflowed(v)) return 0;
    uint32_t levels = values_levels(v), label_bytes = values_label_bytes(v);
    exact_number *x = malloc((levels ? levels : 1) * sizeof *x);
    if (!x) return -1;
    long m = 0;
    uint64_t total = 0;
    for (uint32_t i = 0; i < levels; i++) {
        values_entry e = values_entry_at(v, i);
        if (e.count == 0) { free(x); return -1; } /* unsealed, and no memory for the index */
        if (e.label_len >= label_bytes && XXH3_64bits(e.label, e.label_len) != e.hash) {
            free(x);
            return 0; /* a label cut short: its number is unknown */
        }
        number_decimal d;
        if (number_parse(e.label, e.label_len, &d) != NUMBER_FINITE) continue;
        x[m++] = (exact_number){d, e.count};
        total += e.count;
    }
    if (total != c->mom.n) { free(x); return 0; }
    qsort(x, (size_t)m, sizeof *x, exact_number_cmp);
    *out = x;
    return m;
}

/* The number of 0-based rank r among the sorted distinct numbers. */
static const number_decimal *exact_rank(const exact_number *x, long m, uint64_t r)
{
    uint64_t cum = 0;
    for (long i = 0; i < m; i++)
        if ((cum += x[i].count) > r) return &x[i].dec;
    return &x[m - 1].dec;
}

/* numpy.quantile(method='linear') of the exact numbers: the same virtual
 * index and the same interpolation, with the difference of the two
 * neighbours taken exactly from their decimals (rounded once). */
static double exact_quantile(const exact_number *x, long m, uint64_t n, double p)
{
    double nd = (double)n, h = (nd - 1.0) * p, lo = floor(h);
    if (lo < 0) lo = 0;
    if (lo > nd - 1) lo = nd - 1;
    uint64_t j = (uint64_t)lo, k = j + 1 < n ? j + 1 : j;
    double g = h - lo;
    const number_decimal *a = exact_rank(x, m, j), *b = exact_rank(x, m, k);
    if (g == 0 || a == b) return a->value;
    double diff = number_difference(b, a, NULL);
    if (diff == 0) return a->value;
    return g >= 0.5 ? b->value - diff * (1.0 - g) : a->value + diff * g;
}

int summary_quantiles(const summary *s, size_t col, const double *p, size_t k, double *out,
                      double *rel_error)
{
    const summary_column *c = column(s, col);
    if (rel_error) *rel_error = NAN;
    for (size_t i = 0; i < k; i++) out[i] = NAN;
    if (!buckets_total(c->bins)) return 0;
    exact_number *x;
    long m = exact_numbers(c, &x);
    if (m < 0) return -1;
    const moments *mom = &c->mom;
    for (size_t i = 0; i < k; i++) {
        if (!(p[i] >= 0.0 && p[i] <= 1.0)) continue;
        if (m > 0) {
            out[i] = exact_quantile(x, m, mom->n, p[i]);
            continue;
        }
        double v = buckets_quantile_linear(c->bins, p[i], NULL);
        if (mom->n && v < mom->min) v = mom->min;
        if (mom->n && v > mom->max) v = mom->max;
        out[i] = v;
    }
    free(x);
    if (rel_error) *rel_error = m > 0 ? 0.0 : buckets_relative_error(buckets_level(c->bins));
    return 0;
}

double summary_quantile(const summary *s, size_t col, double p, double *rel_error)
{
    double v;
    if (summary_quantiles(s, col, &p, 1, &v, rel_error) != 0) return NAN;
    return v;
}

double summary_quantile_error(const summary *s, size_t col)
{
    double v, rel, half = 0.5;
    if (summary_quantiles(s, col, &half, 1, &v, &rel) != 0) return NAN;
    return rel;
}

double summary_quantile_error_floor(void) { return buckets_relative_error(0); }

double summary_distinct(const summary *s, size_t col, int *exact)
{
    return summary_column_distinct(column(s, col), exact);
}

int summary_high_cardinality(const summary *s, size_t col)
{
    return values_overflowed(column(s, col)->vals);
}

size_t summary_top(const summary *s, size_t col, size_t k, values_entry *out)
{
    const values *v = column(s, col)->vals;
    size_t n = values_top(v, k, out);
    for (size_t i = 0; i < n; i++) {
        values_entry *e = &out[i];
        e->cut = e->label_len >= values_label_bytes(v) && XXH3_64bits(e->label, e->label_len) != e->hash;
        if (e->cut) e->label_len = values_whole_utf8(e->label, e->label_len);
    }
    return n;
}

uint32_t summary_example_count(const summary *s, size_t col) { return column(s, col)->n_examples; }

const char *summary_example(const summary *s, size_t col, uint32_t i)
{
    const summary_column *c = column(s, col);
    return c->examples[i];
}

/* ---- the target and its classes ------------------------------------------ */

int summary_target_column(const summary *s) { return s->target; }
const char *summary_target_name(const summary *s) { return s->target < 0 ? NULL : s->opt.target; }

target_task summary_task(const summary *s, double numeric_share)
{
    return summary_target_task(s, numeric_share);
}

target_task summary_declared_task(const summary *s) { return s->opt.task; }
int summary_classes_kept(const summary *s) { return s->has_classes; }
int summary_classes_dropped(const summary *s) { return s->classes_dropped; }
uint32_t summary_max_classes(const summary *s) { return s->opt.max_classes; }
uint32_t summary_class_count(const summary *s) { return s->nclasses; }

const char *summary_class_label(const summary *s, uint32_t k)
{
    return s->class_label[k];
}

uint64_t summary_class_rows(const summary *s, uint32_t k)
{
    return s->class_rows[k];
}

double summary_class_value(const summary *s, uint32_t k)
{
    return s->class_dec[k].value;
}

int summary_class_numeric(const summary *s, uint32_t k)
{
    return s->class_numeric[k];
}

int summary_has_class_moments(const summary *s, size_t col) { return column(s, col)->cls != NULL; }

int summary_class_moments(const summary *s, size_t col, uint32_t k, summary_class_stats *out)
{
    const summary_column *c = column(s, col);
    memset(out, 0, sizeof *out);
    out->mean = out->variance = NAN;
    if (!c->cls) return -1;
    const class_moments *cm = &c->cls[k];
    const number_decimal *ref = c->mom.has_ref ? &c->mom.ref : NULL;
    out->n = cm->n;
    out->m2 = cm->m2;
    if (cm->n) out->mean = (ref ? ref->value : 0) + class_moments_mean(cm);
    out->variance = cm->n > 1 ? cm->m2 / (double)(cm->n - 1) : NAN;
    /* The rounding of the class's numbers in the column's frame must stay
     * below 2^-20 of the class's scale, or its figures are noise (a first
     * row of 8e15 before values in [1, 2]: a class mean of 1 for 1.487); a
     * merge flags a class whose numbers came from a summary of another
     * frame where they were rounded so (column_merge). */
    if (column_class_lost(c, k, class_moments_loss(cm))) {
        out->imprecise = 1;
        out->mean = out->variance = NAN;
    } else if (column_class_zeros(c, k)) { /* exactly, however its sums read */
        out->mean = 0;
        out->variance = cm->n > 1 ? 0 : NAN;
    }
    return 0;
}

double summary_class_reference(const summary *s, size_t col)
{
    const summary_column *c = column(s, col);
    if (!c->cls) return NAN;
    const class_moments *best = NULL;
    double best_w = -1;
    uint64_t best_n = 0;
    for (uint32_t k = 0; k < s->nclasses; k++) {
        const class_moments *cm = &c->cls[k];
        if (!cm->n) continue;
        double w = cm->n > 1 && cm->m2 > 0 ? (double)cm->n * (double)(cm->n - 1) / cm->m2 : -1;
        if (w > best_w || (best_w < 0 && w < 0 && cm->n > best_n)) {
            best = cm;
            best_w = w;
            best_n = cm->n;
        }
    }
    return best ? class_moments_mean(best) : NAN;
}

double summary_class_mean_about(const summary *s, size_t col, uint32_t k, double ref)
{
    const summary_column *c = column(s, col);
    if (!c->cls || !c->cls[k].n) return NAN;
    const class_moments *cm = &c->cls[k];
    double n = (double)cm->n, p = n * ref, pe = fma(n, ref, -p);
    return ((cm->sum - p) + (cm->sum_low - pe)) / n;
}

/* ---- pairs of numeric columns --------------------------------------------- */

int summary_has_comoments(const summary *s) { return s->como != NULL; }

int summary_has_pairs(const summary *s, size_t col)
{
    return s->como_of[col] >= 0;
}

/* The co-moment indices of a pair; 0 when either column is not in the matrix. */
static int pair(const summary *s, size_t a, size_t b, size_t *ka, size_t *kb)
{
    if (!s->como || s->como_of[a] < 0 || s->como_of[b] < 0) return 0;
    *ka = (size_t)s->como_of[a];
    *kb = (size_t)s->como_of[b];
    return 1;
}

uint64_t summary_pair_count(const summary *s, size_t a, size_t b)
{
    size_t i, j;
    return pair(s, a, b, &i, &j) ? (uint64_t)comoment_n(s->como, i, j) : 0;
}

/* Pair (i, j) of the co-moments has no r to give: its sides' rounding is
 * past the bound (comoment_pair_lost), or its co-moment passes
 * Cauchy-Schwarz by more than rounding does (|r| > 1 + 2^-20), which no
 * numbers give: the decoder's bound allows rounding at the columns' whole
 * scale, so a hand-made file could show r = 5000 (decode audit). */
static int no_r(const summary *s, size_t i, size_t j)
{
    return comoment_pair_lost(s->como, i, j) ||
           (i != j && fabs(comoment_correlation(s->como, i, j)) > 1 + 0x1p-20);
}

int summary_pair_imprecise(const summary *s, size_t a, size_t b)
{
    size_t i, j;
    return pair(s, a, b, &i, &j) && no_r(s, i, j);
}

double summary_correlation(const summary *s, size_t a, size_t b)
{
    size_t i, j;
    return pair(s, a, b, &i, &j) && !no_r(s, i, j) ? comoment_correlation(s->como, i, j) : NAN;
}

double summary_covariance(const summary *s, size_t a, size_t b)
{
    size_t i, j;
    return pair(s, a, b, &i, &j) && !no_r(s, i, j) ? comoment_covariance(s->como, i, j) : NAN;
}

double summary_pair_variance(const summary *s, size_t a, size_t b)
{
    size_t i, j;
    return pair(s, a, b, &i, &j) ? comoment_variance(s->como, i, j) : NAN;
}

int summary_target_fit(const summary *s, size_t col, double *r, double *f, double *n)
{
    const pairsum *p = column(s, col)->pairs;
    *r = *f = *n = NAN;
    if (!p || s->target < 0 || (size_t)s->target == col) return -1;
    return pairsum_fit(p, r, f, n);
}

/* ---- accumulators ---------------------------------------------------------- */

const buckets *summary_buckets(const summary *s, size_t col) { return column(s, col)->bins; }
const crosstab *summary_crosstab(const summary *s, size_t col) { return column(s, col)->cross; }
