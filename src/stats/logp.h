/* logp: upper-tail probabilities of F and chi-squared as logarithms, so that
 * a p-value far below the smallest double (1e-308) keeps its digits, and
 * Benjamini-Hochberg q-values formed from such logarithms.
 *
 * Method.  Both tails are written as an elementary prefactor times a
 * continued fraction or an asymptotic series whose value is of moderate
 * size, and only the logarithm of the prefactor is formed:
 *  - F on (d1, d2) df at f: Q = I_v(d2/2, d1/2), v = d2 / (d2 + d1 f), the
 *    regularized incomplete beta ratio, by its continued fraction (DLMF
 *    8.17.22) evaluated with the modified Lentz method (Lentz 1976; Thompson
 *    & Barnett 1986), on the side where it converges (x < (a+1)/(a+b+2));
 *    the other side is 1 - I on the opposite side, which is then not small.
 *  - chi-squared on df at x: Q(a, x/2), a = df/2, the regularized upper
 *    incomplete gamma ratio: for a <= 2.5e4 Legendre's continued fraction
 *    (DLMF 8.9.2) when x/2 > a + 1 and 1 - P from the power series (DLMF
 *    8.7.1) otherwise; for a > 2.5e4 Temme's uniform asymptotic expansion
 *    (N. M. Temme 1979, SIAM J. Math. Anal. 10, 757-766; DLMF 8.12.3-8.12.8)
 *    with two terms, its exponential factor kept as a logarithm and erfc as
 *    the scaled erfcx.
 *  - The prefactors x^a y^b / B(a, b) and x^a e^-x / Gamma(a) are formed
 *    as in DiDonato & Morris (1992, ACM TOMS 18, 360-373, routine brcomp):
 *    with x0 = a/(a+b) and phi(t) = t - log(1+t) >= 0,
 *      log(x^a y^b / B(a,b)) = -a phi(x/x0 - 1) - b phi(y/y0 - 1)
 *                               + log(a b / (2 pi (a+b))) / 2
 *                               - delta(a) - delta(b) + delta(a+b),
 *      log(x^a e^-x / Gamma(a)) = -a phi(x/a - 1) + log(a / (2 pi)) / 2 - delta(a),
 *    delta(z) = log Gamma(z) - (z - 1/2) log z + z - log(2 pi)/2 the
 *    remainder of Stirling's series.  No term is then of the size of
 *    a log x while the sum is small, so the absolute error of log Q stays
 *    near |log Q| times the double rounding even for df near 1e9, where
 *    log Gamma(a) alone is 1e10.
 * Accuracy, measured against mpmath 1.2.1 at 50 digits (quadrature of the
 * densities, tests/data/logp_reference.py): see tests/test_logp.c, which
 * holds the points (F with df1, df2 from 1 to 1e9 and chi-squared with df
 * from 1 to 1e9, p from 1e-5 to below 1e-100000).
 *
 * Pure functions, no state, any thread.  GSL is used for log Gamma only
 * (gsl_sf_lngamma), which raises no error for a positive argument.
 */
#ifndef SHEAF_LOGP_H
#define SHEAF_LOGP_H

#include <stddef.h>

/* Natural logarithm of the upper tail P[F > f] of F on (df1, df2) df, for
 * a finite f > 0 and finite df1, df2 > 0 (not necessarily integers).
 * Returns NaN for other input, or when a continued fraction does not
 * converge within its iteration budget (not met on df up to 1e15). */
double logp_f_upper(double f, double df1, double df2);

/* Natural logarithm of the upper tail P[X > x] of chi-squared on df
 * degrees of freedom, for a finite x > 0 and a finite df > 0; NaN
 * otherwise or when the continued fraction does not converge. */
double logp_chi2_upper(double x, double df);

/* Benjamini-Hochberg q-values from base-10 logarithms of p-values: with
 * the m non-NaN values in ascending order,
 *   log10 q_(i) = min(0, min over j >= i of log10 p_(j) + log10(m / j)),
 * the logarithm of the usual step-up q (Benjamini & Hochberg 1995).
 * Tied values get equal q; NaN gives NaN and is not counted in m; -inf
 * (p = 0) gives -inf.  log10_q may alias log10_p.  Returns 0, or -1 when
 * memory runs out (every log10_q is then NaN). */
int logp_benjamini_hochberg(const double *log10_p, size_t n, double *log10_q);

/* Writes 10^log10_value as text with `digits` significant digits (1..17),
 * in the form printf's %.*g gives for a double ("0.0123", "4.56e-23"), and
 * below the double range in the same form with the exponent from the
 * logarithm ("4.56e-48213").  -inf gives "0", NaN gives "-".  Returns the
 * length snprintf would have written. */
int logp_format(char *buf, size_t len, double log10_value, int digits);

#endif
