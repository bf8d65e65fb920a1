/* access: see access.h.  The one place outside the summary module that
 * reads a summary's fields; every call is a read. */
#include "summary/access.h"

#include <math.h>
#include <string.h>

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
size_t summary_source_count(const summary *s) { return s->nsources; }

const summary_source *summary_source_at(const summary *s, size_t i)
{
    return &s->sources[i];
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

double summary_quantile(const summary *s, size_t col, double p, double *rel_error)
{
    const summary_column *c = column(s, col);
    if (rel_error) *rel_error = NAN;
    if (!buckets_total(c->bins)) return NAN;
    double rel, v = buckets_quantile(c->bins, p, &rel);
    if (rel_error) *rel_error = rel;
    const moments *m = &c->mom;
    if (m->n && v < m->min) v = m->min;
    if (m->n && v > m->max) v = m->max;
    return v;
}

double summary_quantile_error(const summary *s, size_t col)
{
    const buckets *b = column(s, col)->bins;
    return buckets_total(b) ? buckets_relative_error(buckets_level(b)) : NAN;
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
    return values_top(column(s, col)->vals, k, out);
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
    out->mean = out->variance = out->frame_mean = NAN;
    if (!c->cls) return -1;
    const class_moments *cm = &c->cls[k];
    const number_decimal *ref = c->mom.has_ref ? &c->mom.ref : NULL;
    out->n = cm->n;
    out->frame_mean = cm->mean;
    out->m2 = cm->m2;
    out->mean = cm->n ? (ref ? ref->value : 0) + cm->mean : NAN;
    out->variance = cm->n > 1 ? cm->m2 / (double)(cm->n - 1) : NAN;
    return 0;
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

double summary_correlation(const summary *s, size_t a, size_t b)
{
    size_t i, j;
    return pair(s, a, b, &i, &j) ? comoment_correlation(s->como, i, j) : NAN;
}

double summary_covariance(const summary *s, size_t a, size_t b)
{
    size_t i, j;
    return pair(s, a, b, &i, &j) ? comoment_covariance(s->como, i, j) : NAN;
}

double summary_pair_variance(const summary *s, size_t a, size_t b)
{
    size_t i, j;
    return pair(s, a, b, &i, &j) ? comoment_variance(s->como, i, j) : NAN;
}

/* ---- accumulators ---------------------------------------------------------- */

const buckets *summary_buckets(const summary *s, size_t col) { return column(s, col)->bins; }
const crosstab *summary_crosstab(const summary *s, size_t col) { return column(s, col)->cross; }
