/* logp: upper tails of F and chi-squared as logarithms, Benjamini-Hochberg
 * in log space, and the text form of tiny values.
 *
 * Outside reference: mpmath 1.2.1 (Debian's python3-mpmath) at 50 digits,
 * quadrature of the densities, by tests/logp_reference.py, which also
 * checks its quadrature against mpmath's betainc and gammainc where those
 * converge; the table is tests/logp_reference.h.  The issue asks for log10 p
 * to 6 significant digits from p = 1e-5 to 1e-100000; the checks hold that,
 * and a tighter bound (1e-8 relative, about what is measured: worst 1.4e-9
 * at F on (1, 1e9) near p = 1e-5) so that a loss of digits shows.
 * Values worked by hand say so.
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "logp_reference.h"
#include "stats/logp.h"
#include "stats/stat.h"

#define COUNT(a) (sizeof(a) / sizeof *(a))

/* Relative error of got against want (both log10 p, want < 0). */
static double rel(double got, double want) { return fabs(got - want) / fabs(want); }

/* ---- tails against mpmath ------------------------------------------------------- */

Test(logp_tails, f_upper_tail_matches_mpmath_from_1e_5_to_1e_100000)
{
    double worst = 0;
    for (size_t i = 0; i < COUNT(logp_reference_f); i++) {
        const logp_reference *c = &logp_reference_f[i];
        double got = logp_f_upper(c->stat, c->df1, c->df2) / M_LN10;
        double e = rel(got, c->log10_p);
        if (e > worst) worst = e;
        /* mpmath 1.2.1, quadrature at 50 digits (tests/logp_reference.h) */
        cr_expect(e <= 5e-7, "F %.17g on (%g, %g): log10 p %.12g, mpmath %.12g (6 digits)", c->stat,
                  c->df1, c->df2, got, c->log10_p);
        cr_expect(e <= 1e-8, "F %.17g on (%g, %g): log10 p %.15g, mpmath %.15g (rel %.2g)", c->stat,
                  c->df1, c->df2, got, c->log10_p, e);
    }
    cr_log_info("F: %zu points, worst relative error of log10 p %.2g", COUNT(logp_reference_f), worst);
}

Test(logp_tails, chi2_upper_tail_matches_mpmath_from_1e_5_to_1e_100000)
{
    double worst = 0;
    for (size_t i = 0; i < COUNT(logp_reference_chi2); i++) {
        const logp_reference *c = &logp_reference_chi2[i];
        double got = logp_chi2_upper(c->stat, c->df1) / M_LN10;
        double e = rel(got, c->log10_p);
        if (e > worst) worst = e;
        /* mpmath 1.2.1, quadrature at 50 digits (tests/logp_reference.h) */
        cr_expect(e <= 5e-7, "chi2 %.17g on %g: log10 p %.12g, mpmath %.12g (6 digits)", c->stat,
                  c->df1, got, c->log10_p);
        cr_expect(e <= 1e-8, "chi2 %.17g on %g: log10 p %.15g, mpmath %.15g (rel %.2g)", c->stat,
                  c->df1, got, c->log10_p, e);
    }
    cr_log_info("chi2: %zu points, worst relative error of log10 p %.2g", COUNT(logp_reference_chi2),
                worst);
}

Test(logp_tails, reference_points_reach_below_1e_100000)
{
    /* The table itself spans what the issue asks: both ends for F with df up
     * to 1e9 and for chi-squared with df up to 1e9. */
    double f_lo = 0, f_hi = -INFINITY, c_lo = 0, c_hi = -INFINITY, f_df = 0, c_df = 0;
    for (size_t i = 0; i < COUNT(logp_reference_f); i++) {
        f_lo = fmin(f_lo, logp_reference_f[i].log10_p);
        f_hi = fmax(f_hi, logp_reference_f[i].log10_p);
        f_df = fmax(f_df, fmax(logp_reference_f[i].df1, logp_reference_f[i].df2));
    }
    for (size_t i = 0; i < COUNT(logp_reference_chi2); i++) {
        c_lo = fmin(c_lo, logp_reference_chi2[i].log10_p);
        c_hi = fmax(c_hi, logp_reference_chi2[i].log10_p);
        c_df = fmax(c_df, logp_reference_chi2[i].df1);
    }
    cr_expect(f_lo <= -100000 && f_hi >= -5.5 && f_df >= 1e9, "F: %g..%g, df %g", f_lo, f_hi, f_df);
    cr_expect(c_lo <= -99999 && c_hi >= -5.5 && c_df >= 1e9, "chi2: %g..%g, df %g", c_lo, c_hi, c_df);
}

Test(logp_tails, invalid_input_gives_nan)
{
    cr_expect(isnan(logp_f_upper(0, 1, 1)));
    cr_expect(isnan(logp_f_upper(-1, 1, 1)));
    cr_expect(isnan(logp_f_upper(INFINITY, 1, 1)));
    cr_expect(isnan(logp_f_upper(NAN, 1, 1)));
    cr_expect(isnan(logp_f_upper(2, 0, 1)));
    cr_expect(isnan(logp_f_upper(2, 1, INFINITY)));
    cr_expect(isnan(logp_chi2_upper(0, 3)));
    cr_expect(isnan(logp_chi2_upper(3, -1)));
    cr_expect(isnan(logp_chi2_upper(3, NAN)));
}

Test(logp_tails, agrees_with_the_double_tail_where_both_are_representable)
{
    /* Near 1 and at moderate p the log-space tails equal log of stat.c's
     * double tails (GSL, checked against scipy and mpmath in test_stat.c),
     * including the lower side of the mean, where the complement is taken. */
    const double dfs[] = {1, 3, 30, 1000, 1e5, 1e7};
    for (size_t i = 0; i < COUNT(dfs); i++)
        for (size_t j = 0; j < COUNT(dfs); j++)
            for (double f = 0.05; f < 50; f *= 1.9) {
                stat_result r;
                stat_f_test(f, dfs[i], dfs[j], &r);
                if (!(r.p > 1e-200)) continue;
                double got = logp_f_upper(f, dfs[i], dfs[j]);
                cr_expect(fabs(got - log(r.p)) <= 1e-8 * fmax(1, fabs(log(r.p))),
                          "F %g on (%g, %g): log p %.15g, stat.c %.15g", f, dfs[i], dfs[j], got,
                          log(r.p));
            }
    for (size_t i = 0; i < COUNT(dfs); i++)
        for (double z = -3; z < 40; z += 0.5) {
            double x = dfs[i] + z * sqrt(2 * dfs[i]);
            if (x <= 0) continue;
            stat_result r;
            stat_chi2_test(x, dfs[i], &r);
            if (!(r.p > 1e-200)) continue;
            double got = logp_chi2_upper(x, dfs[i]);
            cr_expect(fabs(got - log(r.p)) <= 1e-8 * fmax(1, fabs(log(r.p))),
                      "chi2 %g on %g: log p %.15g, stat.c %.15g", x, dfs[i], got, log(r.p));
        }
}

/* ---- Benjamini-Hochberg ------------------------------------------------------------ */

Test(logp_benjamini_hochberg, equals_the_log_of_the_usual_q_values)
{
    /* The step-up q of stat_benjamini_hochberg (itself checked against
     * statsmodels multipletests(method='fdr_bh') in tests/ref/test_screen.py)
     * on p-values from a fixed linear congruential sequence, with ties. */
    double p[200], lp[200], q[200], lq[200];
    unsigned long long s = 12345;
    for (int i = 0; i < 200; i++) {
        s = s * 6364136223846793005ULL + 1442695040888963407ULL;
        p[i] = (double)(s >> 11) / 9007199254740992.0 * pow(10, -(double)(i % 40));
        if (i % 17 == 3) p[i] = p[i - 1];
        lp[i] = log10(p[i]);
    }
    stat_benjamini_hochberg(p, 200, q);
    cr_assert_eq(logp_benjamini_hochberg(lp, 200, lq), 0);
    for (int i = 0; i < 200; i++)
        cr_expect(fabs(lq[i] - log10(q[i])) <= 1e-12 * fmax(1, fabs(lq[i])), "%d: %.15g vs %.15g", i,
                  lq[i], log10(q[i]));
}

Test(logp_benjamini_hochberg, keeps_values_below_the_double_range_apart)
{
    /* Worked by hand: m = 3 (the NaN is not counted); ascending
     * -60000 (j = 1), -50000 (j = 2), -3 (j = 3):
     *   q_3 = -3, q_2 = min(-3, -50000 + log10(3/2)),
     *   q_1 = min(q_2, -60000 + log10(3)). */
    double lp[4] = {-50000, -3, NAN, -60000}, lq[4];
    cr_assert_eq(logp_benjamini_hochberg(lp, 4, lq), 0);
    cr_expect(fabs(lq[0] - (-50000 + log10(1.5))) < 1e-9);
    cr_expect_eq(lq[1], -3);
    cr_expect(isnan(lq[2]));
    cr_expect(fabs(lq[3] - (-60000 + log10(3))) < 1e-9);
}

Test(logp_benjamini_hochberg, exact_zero_and_ties)
{
    /* Worked by hand, m = 4, ascending -inf (j = 1), -2 (j = 2), -0.1 and
     * -0.1 (j = 3, 4): q_4 = -0.1, q_3 = min(q_4, -0.1 + log10(4/3)) = -0.1,
     * q_2 = -2 + log10(2), q_1 = -inf (p = 0 exactly stays 0). */
    double lp[4] = {-INFINITY, -0.1, -0.1, -2}, lq[4];
    cr_assert_eq(logp_benjamini_hochberg(lp, 4, lq), 0);
    cr_expect(lq[0] == -INFINITY);
    cr_expect(lq[1] == -0.1 && lq[2] == -0.1, "%g %g", lq[1], lq[2]);
    cr_expect(fabs(lq[3] - (-2 + log10(2.0))) < 1e-12);
}

/* ---- text -------------------------------------------------------------------------- */

static void expect_text(double log10_value, int digits, const char *want)
{
    char buf[64];
    logp_format(buf, sizeof buf, log10_value, digits);
    cr_expect_str_eq(buf, want, "log10 %.17g, %d digits", log10_value, digits);
}

Test(logp_format, tiny_values_print_with_the_exponent_from_the_logarithm)
{
    /* Worked by hand: 10^0.51 = 3.2359..., 10^0.7 = 5.0118... */
    expect_text(-48212.49, 3, "3.24e-48213");
    expect_text(-2142.3, 3, "5.01e-2143");
    expect_text(-100000, 3, "1e-100000");
    expect_text(-300.5, 3, "3.16e-301");
    expect_text(-48212.0000001, 3, "1e-48212"); /* 9.9999998 rounds up to the next power */
    expect_text(-2142.3, 6, "5.01187e-2143");
}

Test(logp_format, representable_values_print_as_printf_g)
{
    /* The same form printf's %.3g gives (glibc), so the two ranges meet. */
    const double v[] = {1, 0.741, 0.05, 1.5e-23, 3.0374833803525847e-22, 2.5e-299};
    for (size_t i = 0; i < COUNT(v); i++) {
        char want[64];
        snprintf(want, sizeof want, "%.3g", v[i]);
        expect_text(log10(v[i]), 3, want);
    }
}

Test(logp_format, zero_and_undefined)
{
    expect_text(-INFINITY, 3, "0");
    expect_text(NAN, 3, "-");
}
