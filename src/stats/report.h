/* report: every figure the HTML report (out/report_html.h) draws, from a
 * summary alone.
 *
 * Read-only over the summary.  report_build describes every column
 * (stats/describe.h), screens them (stats/screen.h), takes the correlation
 * matrix of the numeric columns (stats/corr.h) and orders it by average
 * linkage on 1 - |r| with the optimal leaf order (stats/cluster.h), fits the
 * principal components (stats/pca.h), and reads histograms from the bucket
 * stores: one per numeric column, and one per class for the top columns of a
 * class target.
 *
 * Histograms.  Each bucket of the store (relative width 0.78% at level 0,
 * acc/buckets.h) adds its count to the equal-width bin of [lo, hi] that holds
 * its representative point, where lo and hi are the column's 1% and 99%
 * quantiles (or min and max when those are equal): the two end bins also
 * hold the tails beyond them, so one outlier does not flatten the picture.
 *
 * The heat map shows at most REPORT_MAX_HEAT columns: with more, the most
 * relevant ones (least log10 p of the screen) or, without a target, the most
 * variable ones (largest coefficient of variation sd / |mean|), in clustered
 * order either way.  Constant columns (sd 0) are left out: they have no r.
 * A pair of undefined r (too few common rows, a constant
 * side) counts as distance 1 (no association) in the clustering.
 */
#ifndef SHEAF_REPORT_H
#define SHEAF_REPORT_H

#include <stddef.h>
#include <stdint.h>

#include "stats/cluster.h"
#include "stats/describe.h"
#include "stats/pca.h"
#include "stats/screen.h"
#include "summary/summary.h"

#define REPORT_MAX_HEAT 100    /* columns in the heat map */
#define REPORT_BINS 24         /* bins of a column's histogram */
#define REPORT_TOP_VALUES 5    /* top values of a text column */
#define REPORT_CLASS_COLUMNS 6 /* columns whose class-conditional histograms are drawn */

typedef struct {
    double numeric_share;   /* kind rule (0.99) */
    screen_options screen;  /* the screen's options (its numeric_share is set from above) */
} report_options;

typedef struct {
    column_description d;   /* describe_column's figures */
    long feature;           /* index into screen->features, -1 for the target */
    int has_hist;           /* a numeric column with numbers */
    double lo, hi;          /* the histogram's range */
    uint64_t hist[REPORT_BINS]; /* counts per bin */
} report_column;

typedef struct {
    const summary *s;
    report_options opt;
    size_t ncols;
    report_column *cols;    /* summary order */
    screen_result *screen;  /* NULL only when out of memory */

    /* The heat map. */
    size_t heat_candidates; /* non-constant numeric columns in the co-moment matrix */
    size_t nheat;           /* columns shown (<= REPORT_MAX_HEAT) */
    size_t *heat_cols;      /* their summary columns, in clustered order */
    double *heat_r;         /* nheat x nheat Pearson r, in clustered order */
    cluster_merge *merges;  /* nheat - 1 merges, items numbered in clustered order */
    unsigned char *heat_redundant; /* nheat x nheat: the screen pruned this pair as redundant */

    /* Principal components. */
    pca_result *pca;        /* NULL when no fit (see pca_error) */
    size_t pca_k;           /* components kept by the Kaiser rule (at least 1) */
    char pca_error[256];    /* why there is no fit */

    /* Class-conditional histograms (a class target with classes kept). */
    int has_classes;
    uint32_t nclasses;
    size_t nclass_cols;
    size_t *class_cols;     /* summary columns, best ranked first */
    double *class_lo, *class_hi;     /* per column */
    uint64_t *class_hist;   /* nclass_cols x nclasses x REPORT_BINS */
} report;

void report_options_defaults(report_options *o);
/* Computes the report of s (which must outlive it).  Returns NULL when out
 * of memory; every other problem (no target, no numeric column, a PCA that
 * cannot be fitted) leaves its section empty with a reason. */
report *report_build(const summary *s, const report_options *o);
void report_free(report *r);

/* The histogram of column col of s over [lo, hi] in `bins` bins from its
 * bucket store, counting only cell `cell` (-1: every cell), into out. */
void report_histogram(const summary *s, size_t col, long cell, double lo, double hi, size_t bins,
                      uint64_t *out);

#endif
