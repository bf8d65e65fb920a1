/* access: reading a summary without touching its fields.
 *
 * Statistics (src/stats) and the commands (src/cli) read a summary only
 * through these calls, so the summary's layout can change without them.
 * Every call takes a const summary and writes nothing to it.  A column is
 * named by its index 0 <= col < summary_columns(s); a class by its index
 * 0 <= k < summary_class_count(s) (the class numbered k + 1 in bucket and
 * per-value cells).  Indices must be in range: they are not checked.
 *
 * Conventions: a statistic that does not exist (no numbers, fewer than two
 * for a variance, a pair never present together) is NaN; an index that does
 * not exist is -1.  Means, quantiles and extremes are in the column's own
 * units: the decimal frame of its moments (moments.h) is added back.
 *
 * Caches: summary_quantile and summary_top read sorted views of the bucket
 * store and the value table.  Today these views are built lazily on first
 * use (buckets.h, values.h); once a summary is sealed when its scan, read or
 * merge ends, the calls are read-only in fact as well as in name.
 */
#ifndef SHEAF_ACCESS_H
#define SHEAF_ACCESS_H

#include <stddef.h>
#include <stdint.h>

#include "summary/summary.h"

/* ---- the table ----------------------------------------------------------- */

uint64_t summary_rows(const summary *s);        /* data rows */
uint64_t summary_bytes(const summary *s);       /* decompressed bytes read */
uint64_t summary_short_rows(const summary *s);  /* rows with too few fields */
/* Header lines skipped where a gzip member or zstd frame began (not rows). */
uint64_t summary_repeated_headers(const summary *s);
uint64_t summary_long_rows(const summary *s);   /* rows with too many fields */
/* Line numbers of the first ragged rows (at most SUMMARY_BAD_LINES): their
 * count, with *lines pointing into the summary. */
size_t summary_ragged_lines(const summary *s, const uint64_t **lines);
/* Missing-value spellings the cells were read with ("" is always missing
 * besides): their count, and spelling i (owned by the summary). */
uint32_t summary_missing_spellings(const summary *s);
const char *summary_missing_spelling(const summary *s, uint32_t i);
/* 1: the spellings matched in any ASCII letter case; 0: byte for byte (a
 * summary written before 2026-12-03). */
int summary_missing_any_case(const summary *s);
size_t summary_source_count(const summary *s);  /* source records */
/* Source record i (0 <= i < summary_source_count), owned by the summary. */
const summary_source *summary_source_at(const summary *s, size_t i);
/* The index of the first source of `from` already counted in `into` (the
 * same fingerprint, raw bytes and byte range: a copy of a file under another
 * path is still the same data), with its index in `into` in *which; or -1.
 * A source of no bytes or no rows (a night of a header alone) is never
 * counted twice. */
long summary_duplicate_source(const summary *into, const summary *from, size_t *which);

/* ---- columns ------------------------------------------------------------- */

size_t summary_columns(const summary *s);       /* scanned columns */
/* Index of the column with this exact name, or -1 (the first on a repeat). */
long summary_find_column(const summary *s, const char *name);
/* The same for a name of len bytes that need not be terminated. */
long summary_find_column_n(const summary *s, const char *name, size_t len);
/* For a name that is no column: appends to the message in buf (buflen
 * bytes, cut to fit) the nearest column names (io/closest.h) and the first
 * few columns, "; did you mean 'a'? (columns: x, y, ... N in all)". */
void summary_suggest_columns(const summary *s, const char *name, size_t len, char *buf,
                             size_t buflen);
const char *summary_name(const summary *s, size_t col);  /* header name, owned by s */
column_mode summary_mode(const summary *s, size_t col);  /* as declared at scan time */
/* Kind by the rule of summary_column_kind: numeric when at least
 * numeric_share of the present cells are numbers (or declared so). */
column_kind summary_kind(const summary *s, size_t col, double numeric_share);

uint64_t summary_numbers(const summary *s, size_t col);     /* finite numbers (n of the moments) */
uint64_t summary_missing(const summary *s, size_t col);     /* missing cells, absent ones included */
/* Whether columns a and b hold the same cell in every row (their copy prints
 * agree, with present cells): -1 when s carries no copy prints (a file
 * written before format version 7, or a merge with one). */
int summary_same_cells(const summary *s, size_t a, size_t b);
int summary_has_copy_prints(const summary *s);
uint64_t summary_present(const summary *s, size_t col);     /* present cells: numbers, text, inf/nan */
uint64_t summary_non_numeric(const summary *s, size_t col); /* present cells that are not numbers */
uint64_t summary_non_finite(const summary *s, size_t col);  /* inf / nan cells */
uint64_t summary_zeros(const summary *s, size_t col);       /* cells equal to zero */
uint64_t summary_integers(const summary *s, size_t col);    /* finite cells with an integer value */

double summary_mean(const summary *s, size_t col);     /* mean of the numbers; NaN when none */
double summary_variance(const summary *s, size_t col); /* sample variance (n - 1); NaN if n < 2 */
double summary_sd(const summary *s, size_t col);       /* sqrt of summary_variance; NaN if n < 2 */
double summary_skewness(const summary *s, size_t col); /* g1 = sqrt(n) m3 / m2^1.5; NaN if undefined */
double summary_kurtosis(const summary *s, size_t col); /* g2 = n m4 / m2^2 - 3; NaN if undefined */
double summary_min(const summary *s, size_t col);      /* smallest number; NaN when none */
double summary_max(const summary *s, size_t col);      /* largest number; NaN when none */

/* The p-quantiles of the numbers (0 <= p[i] <= 1; NaN for another p, or
 * when the column has no numbers), by linear interpolation between order
 * statistics: numpy.quantile(method='linear'), its default, Hyndman & Fan
 * (1996) definition 7.  Exact when the value table holds every number (it
 * never overflowed and no label was cut: the numbers are read back from
 * the labels, and the neighbours' difference is the exact decimal
 * difference, so the result is the quantile to within rounding); then
 * *rel_error = 0.  Otherwise estimated from the bucket store
 * (buckets_quantile_linear), clamped to [min, max] (the bucket point may
 * lie past the extremes, and clamping only brings it closer), with
 * *rel_error the store's bound.  *rel_error may be NULL; NaN without
 * numbers.  Returns 0, or -1 when out of memory (out all NaN). */
int summary_quantiles(const summary *s, size_t col, const double *p, size_t k, double *out,
                      double *rel_error);
/* summary_quantiles of one p; NaN when out of memory. */
double summary_quantile(const summary *s, size_t col, double p, double *rel_error);
/* Relative-error bound of the column's quantiles: 0 when they are exact,
 * else the bucket store's (|estimate - q| <= bound |q| above the store's
 * normal floor, see buckets_quantile_linear); NaN without numbers. */
double summary_quantile_error(const summary *s, size_t col);
/* The smallest bound any bucket store gives (level 0, no collapse). */
double summary_quantile_error_floor(void);

/* Distinct values: exact from the value table unless it overflowed, else the
 * HyperLogLog estimate (not rounded).  *exact (may be NULL) says which. */
double summary_distinct(const summary *s, size_t col, int *exact);
/* 1 when the value table overflowed (here or in a merged part): counts of
 * the top values are then lower bounds. */
int summary_high_cardinality(const summary *s, size_t col);
/* The k most frequent values, count descending then hash ascending, into
 * out (k entries; labels point into the summary); returns how many.  A
 * label cut at the label length is marked cut and ends on a whole UTF-8
 * sequence. */
size_t summary_top(const summary *s, size_t col, size_t k, values_entry *out);
/* Non-numeric examples kept (at most SUMMARY_EXAMPLES), and example i. */
uint32_t summary_example_count(const summary *s, size_t col);
const char *summary_example(const summary *s, size_t col, uint32_t i);

/* ---- the target and its classes ------------------------------------------ */

int summary_target_column(const summary *s);       /* column of the target, -1 for none */
const char *summary_target_name(const summary *s); /* its name, NULL for none */
/* The task: declared, else decided as summary_target_task; TASK_AUTO when
 * there is no target. */
target_task summary_task(const summary *s, double numeric_share);
target_task summary_declared_task(const summary *s); /* TASK_AUTO when not declared */
int summary_classes_kept(const summary *s);    /* 1 when class accumulators are kept */
int summary_classes_dropped(const summary *s); /* 1 when a numeric target passed max_classes */
uint32_t summary_max_classes(const summary *s); /* class levels kept before giving up */

uint32_t summary_class_count(const summary *s);          /* classes seen */
const char *summary_class_label(const summary *s, uint32_t k); /* text of class k, owned by s */
uint64_t summary_class_rows(const summary *s, uint32_t k);     /* rows of class k */
/* Class k's text read as a number, and whether it is one: 0 with 0 returned
 * by summary_class_numeric when the text is not a finite number. */
double summary_class_value(const summary *s, uint32_t k);
int summary_class_numeric(const summary *s, uint32_t k);

/* Count, mean and variance of one column within one class. */
typedef struct {
    uint64_t n;        /* rows of the class with a number in the column */
    double mean;       /* their mean in the column's units; NaN when n = 0 */
    double variance;   /* sample variance (n - 1); NaN when n < 2 */
    double m2;         /* sum of squared deviations from the mean */
    int imprecise;     /* 1 when the class's figures cannot be trusted (column_class_lost:
                          numbers rounded far from the first number of the scan that read
                          them, here or in a merged summary): mean and variance are NaN */
} summary_class_stats;

/* 1 when the column has per-class moments (kept for every column while the
 * target's classes are kept; only numbers enter them). */
int summary_has_class_moments(const summary *s, size_t col);
/* Per-class moments of column col in class k into *out; 0, or -1 (and *out
 * zero with NaN means) when the column has none. */
int summary_class_moments(const summary *s, size_t col, uint32_t k, summary_class_stats *out);
/* A reference near the classes that shift-free tests weigh most: the mean
 * deviation (from the column's frame) of the class with the largest n /
 * variance, or of the largest class when none varies; NaN without classes
 * or numbers.  Not the column's mean, which one far number in any row moves
 * away from every class (merge audit of 2026-12-05). */
double summary_class_reference(const summary *s, size_t col);
/* The mean of class k less `ref` (in the column's deviations), formed from
 * the class's two-double sum with n ref an exact two-double product, so
 * that it holds about 53 bits of itself however close the classes lie;
 * NaN when the class has no number. */
double summary_class_mean_about(const summary *s, size_t col, uint32_t k, double ref);

/* ---- pairs of numeric columns --------------------------------------------- */

int summary_has_comoments(const summary *s);         /* 1 when the co-moment matrix is kept */
int summary_has_pairs(const summary *s, size_t col); /* 1 when col is in the co-moment matrix */
/* Rows where both a and b hold a number (a == b: the column's numbers in
 * the matrix); 0 when either is not in the matrix. */
uint64_t summary_pair_count(const summary *s, size_t a, size_t b);
/* Pearson r over the rows where both are present; NaN when fewer than two,
 * when either is constant there, either is not in the matrix, or the pair
 * is imprecise (below).  Not clipped to [-1, 1]. */
double summary_correlation(const summary *s, size_t a, size_t b);
/* 1 when a pair's r and covariance are noise (comoment_pair_lost): a
 * side's numbers lay so far from the first number of the scan that read
 * them, here or in a merged summary, that their rounding passes 2^-20 of
 * that side's spread over the pair's rows. */
int summary_pair_imprecise(const summary *s, size_t a, size_t b);
/* Sample covariance (n - 1) over the same rows; NaN when n < 2 or either is
 * not in the matrix. */
double summary_covariance(const summary *s, size_t a, size_t b);
/* Sample variance of a over the rows where b is present; NaN as above. */
double summary_pair_variance(const summary *s, size_t a, size_t b);

/* The regression of the target on column col from their exact pair sums
 * (acc/pairsum.h): Pearson r, F = (n - 2) r^2 / (1 - r^2) formed from the
 * exact residual sum of squares (+inf for a perfect fit), and the pairs n.
 * Returns 0; 1 (all NaN but n) when either column is constant over the
 * pairs, exactly: r is undefined; or -1 (all NaN) when there are no exact
 * sums: no target, col is the target, a cell that is not an exact decimal
 * (or a version 1 or 2 file), or fewer than 3 pairs; the co-moments' r
 * then stands in (summary_correlation). */
int summary_target_fit(const summary *s, size_t col, double *r, double *f, double *n);

/* ---- accumulators, for statistics that walk their entries ----------------- */

/* The column's bucket store (cell = target cell) and per-value table (NULL
 * when none is kept), owned by the summary and to be read only. */
const buckets *summary_buckets(const summary *s, size_t col);
const crosstab *summary_crosstab(const summary *s, size_t col);

#endif
