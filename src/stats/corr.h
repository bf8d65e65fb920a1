/* corr: the pairwise-complete correlation or covariance matrix of a
 * summary's numeric columns.
 *
 * Each entry is computed over the rows where both columns hold a number,
 * from the co-moments kept in the summary (acc/comoment.h: the pairwise
 * updates of Chan, Golub & LeVeque 1979 and Pébay 2008): Pearson r =
 * C / sqrt(M2_a M2_b) or the sample covariance C / (n - 1).  A matrix built
 * this way need not be positive semi-definite when cells are missing.
 * Read-only over the summary; nothing is printed.
 */
#ifndef SHEAF_CORR_H
#define SHEAF_CORR_H

#include <stddef.h>
#include <stdint.h>

#include "summary/summary.h"

typedef enum {
    CORR_PEARSON = 0,    /* Pearson r; NaN when a pair has fewer than two rows or a constant side */
    CORR_COVARIANCE = 1  /* sample covariance (n - 1); NaN when a pair has fewer than two rows */
} corr_statistic;

/* The columns of a matrix: those of the co-moment matrix that are numeric by
 * numeric_share and hold at least one number, in summary order, written to
 * cols (room for summary_columns(s) entries).  With `names` (comma-separated,
 * may be NULL), only the columns named there; a named column that is not one
 * of them is an error.  Returns the count, or -1 with the message
 * "'NAME' is not a numeric column" in err. */
long corr_columns(const summary *s, double numeric_share, const char *names, size_t *cols,
                  char *err, size_t errlen);

/* out[a * n + b] = the statistic of columns cols[a] and cols[b] (summary
 * column indices), for a, b < n; the diagonal holds r of a column with
 * itself (1 up to rounding) or its variance. */
void corr_matrix(const summary *s, const size_t *cols, size_t n, corr_statistic stat, double *out);

/* Pairs a < b of cols whose entry is NaN for being imprecise
 * (summary_pair_imprecise: numbers rounded far from the first number of
 * the scan that read them), with the first such pair in *first_a,
 * *first_b (indices into cols). */
size_t corr_imprecise_pairs(const summary *s, const size_t *cols, size_t n, size_t *first_a,
                            size_t *first_b);

/* out[a * n + b] = rows where both cols[a] and cols[b] hold a number. */
void corr_pair_counts(const summary *s, const size_t *cols, size_t n, uint64_t *out);

#endif
