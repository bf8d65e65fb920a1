/* stat: the test statistics of screening, on plain arrays.
 *
 * Pure functions: no summary, no I/O, no state kept between calls, so any
 * number of threads may call them at once.  Inputs are group statistics
 * (n, mean, M2), a correlation, or a dense table of counts; the caller
 * extracts them from a summary.
 *
 * Conventions.  A test that is undefined for its input (fewer than two
 * groups, no within-group df, a table with one non-empty row ...) returns -1
 * and fills its result with NaN; a failed allocation returns -2 and leaves
 * the result untouched.  Every p-value also comes as log10_p, which stays
 * finite far below the double range (down to p = 1e-100000 and beyond); a
 * p-value too small for a double (below DBL_MIN, about 2.2e-308) is stored
 * as p = 0 with p_below = 1, and only log10_p tells how small it is.
 * log10_p is log10(p) while p >= 1e-250 and the log-space tails of logp.h
 * below (the two agree to 1e-9 relative or better at the switch, measured
 * against mpmath in tests/test_logp.c).
 *
 * Methods and references: one-way ANOVA (Fisher 1925); Welch, B. L. (1951),
 * "On the comparison of several mean values: an alternative approach",
 * Biometrika 38, 330-336; the F test of a Pearson correlation, F = r^2 (n-2)
 * / (1 - r^2) on (1, n - 2) df; Pearson's (1900) chi-squared test of
 * independence without continuity correction and Cramer's (1946) V; mutual
 * information with the Miller (1955) bias correction applied to each
 * entropy, H_mm = H + (m - 1) / (2N) with m the non-empty cells;
 * Benjamini & Hochberg (1995), JRSS B 57, 289-300.
 *
 * p-values come from GSL's distribution functions, with three detours found
 * by comparing GSL 2.7 with mpmath at 30 digits (tests/test_stat.c has the
 * points):
 *  - F: gsl_cdf_fdist_Q forms 1 - P when the denominator df exceeds 2e5 and
 *    returns 0 for p-values such as 1e-17 or 1e-64 (F = 100 on (3, 1e6) df),
 *    which a table of a million rows meets at once.  stat_f_test takes the
 *    incomplete beta ratio on the side that needs no subtraction; for
 *    df2 > 3e7 and df2 > 6e5 df1 the Abramowitz & Stegun 26.5.17 gamma limit
 *    of the upper tail (the switch is where the two errors cross, measured
 *    against mpmath; stat.c has the figures); and when both df are 1e5 or
 *    more the log-space tail of logp.h, since GSL's beta ratio errs there by
 *    up to 5e-6 relative at (1e9, 1e9).  Relative error of p: below 5e-9
 *    for df2 <= 3e8 and 2e-8 at df2 = 1e9.
 *  - chi-squared with df > 5e4: GSL's incomplete gamma loses digits (4e-3
 *    relative at df = 1.1e6) or stops with an error; stat_chi2_test uses
 *    Temme's uniform asymptotic expansion there (N. M. Temme 1979, SIAM J.
 *    Math. Anal. 10, 757-766, cited from memory; DLMF 8.12), two terms: relative error below
 *    3e-12 for df 5e4..1e6 (against scipy) and 3e-11 at df = 1e9 (against
 *    exact Poisson sums), where scipy 1.10 itself errs in the lower tail.
 *  - GSL reports an internal failure through its process-wide error
 *    handler, which by default aborts.  This module never sets the handler:
 *    that is the host program's choice.  The routing above keeps GSL inside
 *    its sound range: on 6 million random calls (log-uniform F in
 *    [1e-300, 1e300] on df1 in [0.5, 1e9] and df2 in [0.5, 1e15];
 *    chi-squared statistics in [1e-300, 1e300] on df in [0.5, 1e12];
 *    correlation F tests with n up to 1e15), measured on GSL 2.7 with a
 *    counting handler, no GSL function called here raised an error, and
 *    tests/test_stat.c keeps a sweep of both tails under such a handler.
 *    A host that wants a GSL failure to give a NaN p-value instead of an
 *    abort installs stat_gsl_error_handler (the sheaf command does, at start
 *    in src/cli/main.c): it records the failure in a thread-local flag, and
 *    the p-value being computed becomes NaN.
 */
#ifndef SHEAF_STAT_H
#define SHEAF_STAT_H

#include <stddef.h>

typedef struct {
    double stat;   /* the test statistic */
    double df1;    /* numerator df (the df of a chi-squared) */
    double df2;    /* denominator df, NaN for a chi-squared */
    double p;      /* upper-tail p-value (0 with p_below set when it underflows) */
    int p_below;   /* p underflowed: the true p is below DBL_MIN */
    double log10_p; /* log10 of the p-value, finite where p underflows; -inf when
                       p is 0 (infinite statistic), NaN when undefined */
    double extra;  /* r for the correlation F, Cramer's V for chi-squared, R^2 for ANOVA */
} stat_result;

typedef struct {
    double nats;            /* plug-in I(X;Y) */
    double nats_corrected;  /* Miller-Madow corrected (may be below 0) */
    double normalized;      /* nats / H(Y), Y = the columns (the target); NaN when H(Y) = 0 */
    unsigned rows_used;     /* non-empty rows m_x */
    unsigned cols_used;     /* non-empty columns m_y */
    size_t cells_used;      /* non-empty cells m_xy */
    double h_x, h_y, h_xy;  /* plug-in entropies of rows, columns, cells (nats) */
    double n;               /* total count */
} stat_mutual_info;

/* Upper-tail p-value of an F statistic on (df1, df2) df, with the underflow
 * flag and log10_p: out->stat = f, out->extra = NaN.  f = 0 gives p = 1,
 * f = +inf gives p = 0 with p_below and log10_p = -inf; -1 (out NaN) when f
 * is NaN or negative or a df is not a positive number.  df need not be
 * integers (Welch). */
int stat_f_test(double f, double df1, double df2, stat_result *out);

/* Upper-tail p-value of a chi-squared statistic on df degrees of freedom
 * (df2 = NaN); same conventions as stat_f_test. */
int stat_chi2_test(double x, double df, stat_result *out);

/* One-way ANOVA F from k groups given by count n[g], mean mean[g] (any common
 * shift cancels) and M2[g] (sum of squared deviations within the group):
 * grand = sum n mean / N, SSB = sum n (mean - grand)^2, SSW = sum M2,
 * F = (SSB / (k'-1)) / (SSW / (N-k')) with k' the non-empty groups; extra =
 * R^2 = SSB / (SSB + SSW).  Empty groups are skipped.  Returns 0, or -1
 * when undefined (fewer than two groups, N <= k', SSB = SSW = 0); SSW = 0
 * with SSB > 0 gives F = +inf, p = 0, p_below. */
int stat_anova(const double *n, const double *mean, const double *m2, size_t k, stat_result *out);

/* Welch's (1951) F for unequal variances, same inputs.  With
 * w_g = n_g / s_g^2, W = sum w_g, m = sum w_g mean_g / W and
 * lambda = sum (1 - w_g/W)^2 / (n_g - 1):
 *   F* = [sum w_g (mean_g - m)^2 / (k-1)] / [1 + 2 (k-2) lambda / (k^2-1)]
 * on df1 = k - 1 and df2 = (k^2 - 1) / (3 lambda).  Groups with n < 2 or a
 * variance that is not positive have no finite weight and are skipped (k
 * counts the groups kept); extra = NaN.  Returns 0, or -1 when fewer than
 * two groups remain. */
int stat_welch(const double *n, const double *mean, const double *m2, size_t k, stat_result *out);

/* F test of Pearson r over n pairs: F = r^2 (n - 2) / (1 - r^2), df 1, n - 2;
 * extra = r.  |r| slightly above 1 (rounding) is taken as 1, and |r| = 1
 * gives F = +inf, p = 0, p_below.  Returns -1 when r is not finite or
 * n <= 2. */
int stat_correlation_f(double r, double n, stat_result *out);

/* Chi-squared test of independence of a rows x cols table of counts
 * (row-major, table[i * cols + j]), without continuity correction.  All-zero
 * rows and columns are dropped; E = row sum * column sum / N and
 * X^2 = sum (O - E)^2 / E on (r'-1)(c'-1) df, r', c' the non-empty rows and
 * columns; extra = Cramer's V = sqrt(X^2 / (N (min(r', c') - 1))).
 * Returns 0, -1 when fewer than two rows or columns are non-empty, -2 when
 * memory runs out. */
int stat_chi_squared(const double *table, size_t rows, size_t cols, stat_result *out);

/* Mutual information of the same table (rows = feature X, columns = target
 * Y).  The plug-in estimate I = sum p_xy log(p_xy / (p_x p_y)) is summed
 * term by term, not as a difference of entropies, so a tiny I keeps its
 * digits.  Miller-Madow: each entropy gets H + (m - 1) / (2N), m its
 * non-empty cells, so nats_corrected = I + (m_x + m_y - m_xy - 1) / (2N).
 * Returns 0, -1 when the table is empty (out NaN), -2 when memory runs out. */
int stat_mutual_information(const double *table, size_t rows, size_t cols, stat_mutual_info *out);

/* Benjamini-Hochberg q-values (step-up, monotone, capped at 1): with the m
 * non-NaN p-values in ascending order, q_(i) = min over j >= i of
 * min(1, p_(j) m / j); tied p-values get equal q.  NaN p-values are ignored
 * (not counted in m) and give NaN.  q may alias p.  When memory runs out
 * every q is NaN. */
void stat_benjamini_hochberg(const double *p, size_t n, double *q);
/* The positions of x's non-NaN values in ascending order (ties by
 * position), *m of them, in an array the caller frees; NULL on OOM.  The
 * ranking behind both Benjamini-Hochberg steps (here and logp.h). */
size_t *stat_order_finite(const double *x, size_t n, size_t *m);

/* A GSL error handler (gsl_error_handler_t) for the host to install with
 * gsl_set_error_handler: it records a GSL failure in a thread-local flag,
 * so that the p-value being computed becomes NaN instead of the process
 * aborting.  Never installed by this module. */
void stat_gsl_error_handler(const char *reason, const char *file, int line, int gsl_errno);

/* Assigns n ordered cells with the given counts to at most k bins of about
 * equal frequency without splitting a cell: cell i goes to bin
 * min(k - 1, floor(k (C_i + c_i / 2) / N)), C_i the count before it and N
 * the total.  The bins that receive values are renumbered 0, 1, ... without
 * gaps, so bins[] is non-decreasing; a cell with count 0 joins the bin of
 * the cell before it (bin 0 at the start).  Returns the number of non-empty
 * bins: 0 (all bins[] 0) when N = 0 or k = 0. */
unsigned stat_equal_frequency_bins(const double *counts, size_t n, unsigned k, unsigned *bins);

#endif
