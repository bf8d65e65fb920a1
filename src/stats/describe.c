/* describe: see describe.h.  Everything is read through summary/access.h. */
#include "stats/describe.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "summary/access.h"

const double describe_quantile_probs[DESCRIBE_NQUANTILES] = {0.01, 0.05, 0.25, 0.5,
                                                             0.75, 0.95, 0.99};

int describe_column(const summary *s, size_t col, double numeric_share, size_t ntop,
                    column_description *out)
{
    column_description *d = out;
    memset(d, 0, sizeof *d);
    d->name = summary_name(s, col);
    d->kind = summary_kind(s, col, numeric_share);
    d->numbers = summary_numbers(s, col);
    d->present = summary_present(s, col);
    d->missing = summary_missing(s, col);
    d->non_numeric = summary_non_numeric(s, col);
    d->non_finite = summary_non_finite(s, col);
    d->zeros = summary_zeros(s, col);
    d->integers = summary_integers(s, col);
    d->mean = summary_mean(s, col);
    d->variance = summary_variance(s, col);
    d->sd = sqrt(d->variance);
    d->min = summary_min(s, col);
    d->max = summary_max(s, col);
    d->skewness = summary_skewness(s, col);
    d->kurtosis = summary_kurtosis(s, col);
    if (summary_quantiles(s, col, describe_quantile_probs, DESCRIBE_NQUANTILES, d->quantiles,
                          &d->quantile_relative_error) != 0)
        goto oom;
    d->median = d->quantiles[DESCRIBE_MEDIAN];
    d->quantiles_exact = d->quantile_relative_error == 0;
    d->distinct = summary_distinct(s, col, &d->distinct_exact);
    d->high_cardinality = summary_high_cardinality(s, col);
    d->nexamples = summary_example_count(s, col);
    for (uint32_t e = 0; e < d->nexamples; e++) d->examples[e] = summary_example(s, col, e);
    if (ntop) {
        d->top = malloc(ntop * sizeof *d->top);
        if (!d->top) goto oom;
        d->ntop = summary_top(s, col, ntop, d->top);
    }
    uint32_t k = summary_class_count(s);
    d->has_by_class = d->kind == KIND_NUMERIC && summary_has_class_moments(s, col);
    if (d->has_by_class && k) {
        d->by_class = malloc(k * sizeof *d->by_class);
        if (!d->by_class) goto oom;
        for (uint32_t c = 0; c < k; c++) {
            summary_class_stats cs;
            summary_class_moments(s, col, c, &cs);
            d->by_class[c] = (describe_class){summary_class_label(s, c), cs.n, cs.mean, cs.variance,
                                              cs.imprecise};
            d->imprecise_classes += (size_t)cs.imprecise;
        }
        d->nclasses = k;
    }
    return 0;
oom:
    describe_column_free(d);
    return -1;
}

void describe_column_free(column_description *d)
{
    free(d->top);
    free(d->by_class);
    memset(d, 0, sizeof *d);
}

uint64_t describe_class_total(const summary *s)
{
    uint64_t total = 0;
    for (uint32_t c = 0; c < summary_class_count(s); c++) total += summary_class_rows(s, c);
    return total;
}
