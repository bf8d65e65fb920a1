/* stat: the test statistics of screening, on plain arrays.
 *
 * Pure functions: no summary, no I/O.  p-values come from GSL
 * (gsl_cdf_fdist_Q, gsl_cdf_chisq_Q).  A p-value that underflows the
 * smallest positive double is returned as 0 with p_below set, so callers
 * can print "< 2.2e-308" instead of a false 0.
 *
 * References: one-way ANOVA (Fisher 1925); Welch, B. L. (1951), "On the
 * comparison of several mean values: an alternative approach", Biometrika
 * 38, 330-336; the F test of a Pearson correlation, F = r^2 (n - 2) /
 * (1 - r^2) on (1, n - 2) df; Pearson's (1900) chi-squared test of
 * independence without continuity correction and Cramer's (1946) V;
 * mutual information with the Miller (1955) bias correction applied to each
 * entropy, H_mm = H + (m - 1) / (2N) with m the non-empty cells; Benjamini &
 * Hochberg (1995), JRSS B 57, 289-300.
 */
#ifndef SHEAF_STAT_H
#define SHEAF_STAT_H

#include <stddef.h>

typedef struct {
    double stat;   /* the test statistic */
    double df1;    /* numerator df (the df of a chi-squared) */
    double df2;    /* denominator df, NaN for a chi-squared */
    double p;      /* upper-tail p-value */
    int p_below;   /* p underflowed: the true p is below DBL_MIN */
    double extra;  /* r for the correlation F, Cramer's V for chi-squared, R^2 for ANOVA */
} stat_result;

typedef struct {
    double nats;            /* plug-in I(X;Y) */
    double nats_corrected;  /* Miller-Madow corrected */
    double normalized;      /* nats / H(Y), Y = the columns (the target) */
    unsigned rows_used;     /* non-empty rows */
    unsigned cols_used;     /* non-empty columns */
} stat_mutual_info;

/* One-way ANOVA F from k groups given by count n[g], mean mean[g] (any common
 * shift cancels) and M2[g] (sum of squared deviations within the group).
 * Empty groups are skipped.  Returns 0, or -1 when undefined (fewer than two
 * groups, no within-group df). */
int stat_anova(const double *n, const double *mean, const double *m2, size_t k, stat_result *out);

/* Welch's (1951) F for unequal variances, same inputs; groups need n >= 2
 * and a positive variance (others are skipped).  df2 is the approximate
 * denominator df (k^2 - 1) / (3 sum (1 - w_g / W)^2 / (n_g - 1)). */
int stat_welch(const double *n, const double *mean, const double *m2, size_t k, stat_result *out);

/* F test of Pearson r over n pairs: F = r^2 (n - 2) / (1 - r^2), df 1, n - 2. */
int stat_correlation_f(double r, double n, stat_result *out);

/* Chi-squared test of independence of a rows x cols table of counts
 * (row-major); empty rows and columns are dropped.  extra = Cramer's V. */
int stat_chi_squared(const double *table, size_t rows, size_t cols, stat_result *out);

/* Mutual information of the same table. */
int stat_mutual_information(const double *table, size_t rows, size_t cols, stat_mutual_info *out);

/* Benjamini-Hochberg q-values (step-up, monotone, capped at 1); NaN
 * p-values are ignored and give NaN.  q may alias p. */
void stat_benjamini_hochberg(const double *p, size_t n, double *q);

/* Assigns n ordered cells with the given counts to at most k bins of about
 * equal frequency without splitting a cell: cell i goes to bin
 * floor(k (C_i + c_i / 2) / N), C_i the count before it.  Returns the number
 * of bins used (bins renumbered 0.. without gaps). */
unsigned stat_equal_frequency_bins(const double *counts, size_t n, unsigned k, unsigned *bins);

#endif
