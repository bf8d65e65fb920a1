/* describe: every figure `sheaf info` reports about a column, from a
 * summary alone.
 *
 * Counts come straight from the summary; mean, variance, skewness and
 * kurtosis from the column's moments (Welford 1962; Pébay 2008, see
 * acc/moments.h), in the column's units; quantiles (numpy's 'linear',
 * Hyndman & Fan definition 7) exactly from the value table when it holds
 * every number, else from the bucket store with their relative-error bound
 * (acc/buckets.h), clamped to the observed extremes; the distinct count from the value table while it is exact, else
 * from the HyperLogLog sketch (Flajolet et al. 2007); the top values from
 * the value table; and, while a target's classes are kept, the count, mean
 * and variance of a numeric column within each class.
 *
 * Read-only over the summary (see summary/access.h for the sort caches the
 * quantiles and top values read).  A description points into the summary
 * for names and labels, so it must not outlive it.
 */
#ifndef SHEAF_DESCRIBE_H
#define SHEAF_DESCRIBE_H

#include <stddef.h>
#include <stdint.h>

#include "summary/summary.h"

#define DESCRIBE_NQUANTILES 7
#define DESCRIBE_MEDIAN 3 /* the index of 0.5 among them */
/* The probabilities of column_description.quantiles: 0.01, 0.05, 0.25, 0.5,
 * 0.75, 0.95, 0.99. */
extern const double describe_quantile_probs[DESCRIBE_NQUANTILES];

/* One class's figures for a numeric column. */
typedef struct {
    const char *label;     /* the class's text, owned by the summary */
    uint64_t n;            /* rows of the class with a number in the column */
    double mean;           /* NaN when n = 0 */
    double variance;       /* sample variance (n - 1); NaN when n < 2 */
    int imprecise;         /* mean and variance lost to a far frame: both NaN
                              (summary_class_stats.imprecise) */
} describe_class;

typedef struct {
    const char *name;      /* header name, owned by the summary */
    column_kind kind;      /* by the numeric_share rule */
    uint64_t numbers;      /* finite numbers */
    uint64_t present;      /* present cells (numbers, text, inf/nan) */
    uint64_t missing;      /* missing cells */
    uint64_t non_numeric;  /* present cells that are not numbers */
    uint64_t non_finite;   /* inf / nan cells */
    uint64_t zeros;        /* cells equal to zero */
    uint64_t integers;     /* finite cells with an integer value */
    double mean;           /* NaN when there are no numbers */
    double variance;       /* sample variance; NaN with fewer than two numbers */
    double sd;             /* sqrt(variance) */
    double min, max;       /* NaN when there are no numbers */
    double skewness;       /* g1; NaN when undefined */
    double kurtosis;       /* excess kurtosis g2; NaN when undefined */
    double median;         /* NaN when no numbers; see quantiles */
    double quantiles[DESCRIBE_NQUANTILES]; /* at describe_quantile_probs, numpy's 'linear'
                                              definition: exact from the value table when it
                                              holds every number, else bucket estimates clamped
                                              to [min, max] (summary_quantiles) */
    double quantile_relative_error; /* bound of the estimates, 0 when exact; NaN when no numbers */
    int quantiles_exact;   /* the quantiles are exact (the value table holds every number) */
    double distinct;       /* distinct values (an unrounded estimate unless exact) */
    int distinct_exact;    /* distinct is exact */
    int high_cardinality;  /* the value table overflowed: top counts are lower bounds */
    size_t ntop;           /* top values found (at most the ntop asked for) */
    values_entry *top;     /* most frequent first, labels owned by the summary (allocated) */
    uint32_t nexamples;    /* non-numeric examples kept */
    const char *examples[SUMMARY_EXAMPLES]; /* owned by the summary */
    int has_by_class;      /* a numeric column with per-class moments (classes kept) */
    size_t nclasses;       /* entries of by_class (0 when !has_by_class) */
    describe_class *by_class; /* per class, in class order (allocated; NULL when empty) */
    size_t imprecise_classes; /* entries of by_class marked imprecise */
} column_description;

/* Fills *out for column col (0 <= col < summary_columns(s)), with at most
 * ntop top values and the kind decided by numeric_share.  Returns 0, or -1
 * when out of memory (*out is then empty and needs no free).  Free with
 * describe_column_free. */
int describe_column(const summary *s, size_t col, double numeric_share, size_t ntop,
                    column_description *out);
void describe_column_free(column_description *d);

/* Rows of all classes together (the base of class shares); 0 without classes. */
uint64_t describe_class_total(const summary *s);

#endif
