/* stat: screening tests on plain arrays.
 *
 * Outside references, named beside each check:
 *  - NIST StRD one-way ANOVA datasets (../shared/data/nist_anova, certified
 *    F and R^2 on lines 41-47);
 *  - statsmodels 0.13.5 and scipy 1.10.1 from Debian (/usr/bin/python3),
 *    numpy 1.24.2 for the mutual information, pandas 1.5.3 for reading the
 *    open datasets (../shared/data/open);
 *  - mpmath 1.2.1 (Debian) at 40 digits for p-values in the regimes where
 *    GSL's own routines go wrong, and at 50 digits (quadrature of the
 *    densities, tests/logp_reference.py) for log10 p down to 1e-100000 and
 *    p around the switch of the F tail to its large-df limit
 *    (tests/logp_reference.h).
 * Values worked by hand from the definitions say so.
 */
#include <criterion/criterion.h>
#include <float.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <math.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "logp_reference.h"
#include "stats/stat.h"
#include "testutil.h"

#define REL_OK(got, want, tol, what)                                                     \
    cr_expect(testutil_rel((got), (want)) <= (tol), "%s: %.17g vs %.17g (rel %.3g)", what, \
              (double)(got), (double)(want), testutil_rel((got), (want)))

/* ---- NIST StRD one-way ANOVA ------------------------------------------------ */

typedef struct {
    double between_df, f;            /* certified "Between" line: df and F */
    double within_df;                /* certified "Within" line: df */
    double r2;                       /* certified R-squared */
    size_t rows;                     /* data rows read */
    int groups;                      /* highest treatment index */
    double n[16], mean[16], m2[16];  /* per treatment, from exact deviations */
} nist_case;

/* Parses a decimal response into an integer mantissa and its decimals. */
static void parse_decimal(const char *s, long long *mant, int *decimals)
{
    long long m = 0;
    int d = 0, after = 0, neg = 0;
    if (*s == '-') { neg = 1; s++; }
    for (; *s; s++) {
        if (*s == '.') { after = 1; continue; }
        if (*s < '0' || *s > '9') break;
        m = m * 10 + (*s - '0');
        d += after;
    }
    *mant = neg ? -m : m;
    *decimals = d;
}

static long long pow10ll(int e)
{
    long long p = 1;
    while (e-- > 0) p *= 10;
    return p;
}

static int treat_[20000];
static long long mant_[20000];
static int dec_[20000];

/* Reads a NIST file; group (n, mean, M2) computed from the responses minus
 * the first response, the subtraction done exactly on scaled integers and
 * the two-pass sums in long double. */
static int read_nist(const char *name, nist_case *c)
{
    char path[512], line[256];
    snprintf(path, sizeof path, "%s/nist_anova/%s.dat", testutil_data_dir(), name);
    FILE *f = fopen(path, "r");
    if (!f) return -1;
    memset(c, 0, sizeof *c);
    int lineno = 0, maxdec = 0;
    size_t n = 0;
    while (fgets(line, sizeof line, f)) {
        lineno++;
        if (lineno >= 41 && lineno <= 47) {
            if (strncmp(line, "Between ", 8) == 0)
                sscanf(line, "Between %*s %lf %*f %*f %lf", &c->between_df, &c->f);
            else if (strncmp(line, "Within ", 7) == 0)
                sscanf(line, "Within %*s %lf", &c->within_df);
            else if (strstr(line, "Certified R-Squared"))
                sscanf(strstr(line, "Squared") + 7, "%lf", &c->r2);
        }
        if (lineno >= 61 && n < 20000) {
            int t;
            char r[64];
            if (sscanf(line, "%d %63s", &t, r) == 2 && t >= 1 && t < 16) {
                treat_[n] = t;
                parse_decimal(r, &mant_[n], &dec_[n]);
                if (dec_[n] > maxdec) maxdec = dec_[n];
                if (t > c->groups) c->groups = t;
                n++;
            }
        }
    }
    fclose(f);
    c->rows = n;
    long double scale = (long double)pow10ll(maxdec);
    long double sum[16] = {0}, cnt[16] = {0}, m2[16] = {0};
    static long double dev[20000];
    for (size_t i = 0; i < n; i++) {
        long long a = mant_[i] * pow10ll(maxdec - dec_[i]);
        long long b = mant_[0] * pow10ll(maxdec - dec_[0]);
        dev[i] = (long double)(a - b) / scale;
        sum[treat_[i]] += dev[i];
        cnt[treat_[i]] += 1;
    }
    for (size_t i = 0; i < n; i++) {
        long double d = dev[i] - sum[treat_[i]] / cnt[treat_[i]];
        m2[treat_[i]] += d * d;
    }
    for (int g = 0; g < 16; g++) {
        c->n[g] = (double)cnt[g];
        c->mean[g] = cnt[g] > 0 ? (double)(sum[g] / cnt[g]) : 0;
        c->m2[g] = (double)m2[g];
    }
    return 0;
}

static double digits(double got, double want)
{
    double r = testutil_rel(got, want);
    return r == 0 ? 17 : -log10(r);
}

static void check_nist(const char *name, double f_digits)
{
    nist_case c;
    if (read_nist(name, &c) != 0) cr_skip_test("NIST StRD data not found under %s", testutil_data_dir());
    stat_result r;
    cr_assert_eq(stat_anova(c.n, c.mean, c.m2, 16, &r), 0, "%s: ANOVA undefined", name);
    cr_log_info("NIST %s: F to %.1f digits, R^2 to %.1f", name, digits(r.stat, c.f), digits(r.extra, c.r2));
    cr_expect_eq(r.df1, c.between_df, "%s: df1", name);
    cr_expect_eq(r.df2, c.within_df, "%s: df2", name);
    cr_expect(digits(r.stat, c.f) >= f_digits, "%s: F %.15g vs certified %.15g (%.1f digits)", name,
              r.stat, c.f, digits(r.stat, c.f));
    cr_expect(digits(r.extra, c.r2) >= f_digits, "%s: R^2 %.15g vs certified %.15g", name, r.extra,
              c.r2);
    /* F = 2001 on (8, 18000) df (SmLs03, 06, 09) has p near 1e-2477, which
     * log10_p keeps. */
    cr_expect(r.p_below ? r.p == 0 && c.f > 1000 : r.p > 0 && r.p < 1, "%s: p %g", name, r.p);
    cr_expect(r.p_below ? r.log10_p < -307 && isfinite(r.log10_p) : r.log10_p == log10(r.p),
              "%s: log10 p %g for p %g", name, r.log10_p, r.p);
}

/* NIST StRD one-way ANOVA, certified F statistic and R^2. */
Test(stat_anova, nist_sirstv_f_to_12_digits) { check_nist("SiRstv", 12); }
Test(stat_anova, nist_atmwtag_f_to_12_digits) { check_nist("AtmWtAg", 12); }
Test(stat_anova, nist_smls01_f_to_12_digits) { check_nist("SmLs01", 12); }
Test(stat_anova, nist_smls02_f_to_12_digits) { check_nist("SmLs02", 12); }
Test(stat_anova, nist_smls03_f_to_12_digits) { check_nist("SmLs03", 12); }
Test(stat_anova, nist_smls04_f_to_12_digits) { check_nist("SmLs04", 12); }
Test(stat_anova, nist_smls05_f_to_12_digits) { check_nist("SmLs05", 12); }
Test(stat_anova, nist_smls06_f_to_12_digits) { check_nist("SmLs06", 12); }
Test(stat_anova, nist_smls07_f_to_10_digits) { check_nist("SmLs07", 10); }
Test(stat_anova, nist_smls08_f_to_10_digits) { check_nist("SmLs08", 10); }
Test(stat_anova, nist_smls09_f_to_10_digits) { check_nist("SmLs09", 10); }

Test(stat_anova, common_shift_of_the_means_cancels)
{
    /* Group stats made up for the check; the shift must not change F. */
    double n[3] = {4, 5, 6}, mean[3] = {1.25, 2.5, 0.75}, m2[3] = {3, 4.5, 2}, shifted[3];
    stat_result a, b;
    for (int i = 0; i < 3; i++) shifted[i] = mean[i] + 1000.0;
    cr_assert_eq(stat_anova(n, mean, m2, 3, &a), 0);
    cr_assert_eq(stat_anova(n, shifted, m2, 3, &b), 0);
    REL_OK(b.stat, a.stat, 1e-12, "F after shift");
    /* Worked by hand: grand = 19.75/15, SSB = sum n (mean - grand)^2, SSW = 9.5. */
    double grand = (4 * 1.25 + 5 * 2.5 + 6 * 0.75) / 15, ssb = 0;
    for (int i = 0; i < 3; i++) ssb += n[i] * (mean[i] - grand) * (mean[i] - grand);
    REL_OK(a.stat, (ssb / 2) / (9.5 / 12), 1e-14, "F by hand");
    REL_OK(a.extra, ssb / (ssb + 9.5), 1e-14, "R^2 by hand");
    REL_OK(a.p, gsl_cdf_fdist_Q(a.stat, 2, 12), 1e-12, "p (small df: GSL's F tail is sound)");
}

Test(stat_anova, empty_groups_are_skipped)
{
    double n[5] = {0, 4, 0, 5, 6}, mean[5] = {99, 1.25, -7, 2.5, 0.75}, m2[5] = {0, 3, 0, 4.5, 2};
    double n3[3] = {4, 5, 6}, mean3[3] = {1.25, 2.5, 0.75}, m23[3] = {3, 4.5, 2};
    stat_result a, b;
    cr_assert_eq(stat_anova(n, mean, m2, 5, &a), 0);
    cr_assert_eq(stat_anova(n3, mean3, m23, 3, &b), 0);
    cr_expect_eq(a.stat, b.stat);
    cr_expect_eq(a.df1, 2);
    cr_expect_eq(a.df2, 12);
}

Test(stat_anova, fewer_than_two_groups_or_no_within_df_is_undefined)
{
    double n[2] = {5, 0}, mean[2] = {1, 2}, m2[2] = {3, 0};
    stat_result r;
    cr_expect_eq(stat_anova(n, mean, m2, 2, &r), -1);
    cr_expect(isnan(r.stat) && isnan(r.p) && !r.p_below);
    double n1[2] = {1, 1}, m21[2] = {0, 0};
    cr_expect_eq(stat_anova(n1, mean, m21, 2, &r), -1, "N = k: no within-group df");
    double n2[2] = {3, 3}, same[2] = {4, 4};
    cr_expect_eq(stat_anova(n2, same, m21, 2, &r), -1, "SSB = SSW = 0");
}

Test(stat_anova, zero_within_variance_gives_infinite_f_and_p_below)
{
    double n[2] = {3, 3}, mean[2] = {1, 2}, m2[2] = {0, 0};
    stat_result r;
    cr_assert_eq(stat_anova(n, mean, m2, 2, &r), 0);
    cr_expect(isinf(r.stat) && r.p == 0 && r.p_below);
    cr_expect_eq(r.extra, 1);
}

/* ---- iris (Welch and classic ANOVA) -------------------------------------- */

typedef struct {
    double n[3], mean[3], m2[3];
} iris_groups;

/* Per-species (n, mean, M2) of iris column `col` (0..3), two-pass in long double. */
static int iris(int col, iris_groups *g)
{
    char path[512], line[256];
    snprintf(path, sizeof path, "%s/open/iris.csv", testutil_data_dir());
    FILE *f = fopen(path, "r");
    if (!f) return -1;
    static double x[200];
    static int s[200];
    int n = 0;
    const char *names[3] = {"setosa", "versicolor", "virginica"};
    if (!fgets(line, sizeof line, f)) { fclose(f); return -1; }
    while (n < 200 && fgets(line, sizeof line, f)) {
        double v[4];
        char sp[32];
        if (sscanf(line, "%lf,%lf,%lf,%lf,%31s", &v[0], &v[1], &v[2], &v[3], sp) != 5) continue;
        int k = -1;
        for (int i = 0; i < 3; i++)
            if (strcmp(sp, names[i]) == 0) k = i;
        if (k < 0) continue;
        x[n] = v[col];
        s[n++] = k;
    }
    fclose(f);
    long double sum[3] = {0}, cnt[3] = {0}, m2[3] = {0};
    for (int i = 0; i < n; i++) { sum[s[i]] += x[i]; cnt[s[i]] += 1; }
    for (int i = 0; i < n; i++) {
        long double d = x[i] - sum[s[i]] / cnt[s[i]];
        m2[s[i]] += d * d;
    }
    for (int k = 0; k < 3; k++) {
        g->n[k] = (double)cnt[k];
        g->mean[k] = (double)(sum[k] / cnt[k]);
        g->m2[k] = (double)m2[k];
    }
    return n == 150 ? 0 : -1;
}

/* statsmodels 0.13.5 (Debian), by
 *   anova_oneway(iris[col], iris['species'], use_var='unequal' | 'equal')
 * with iris = pandas.read_csv('../shared/data/open/iris.csv'). */
static const struct {
    double welch_f, welch_df2, welch_p, anova_f, anova_p;
} iris_ref[4] = {
    {138.90828526893796, 92.21114532045739, 1.5050589627451774e-28, 119.26450218450435, 1.669669190769597e-31},
    {45.01203506107022, 97.40158711885606, 1.4327350607248752e-14, 49.16004008961199, 4.49201713330936e-17},
    {1828.0919450856877, 78.07295548394265, 2.693327358715152e-66, 1180.161182252981, 2.8567766109615584e-91},
    {1276.8845645050335, 84.95125383745518, 4.138738595239764e-64, 960.0071468018065, 4.1694458394439525e-85},
};

static void check_iris(int col)
{
    iris_groups g;
    if (iris(col, &g) != 0) cr_skip_test("iris.csv not found under %s", testutil_data_dir());
    stat_result w, a;
    cr_assert_eq(stat_welch(g.n, g.mean, g.m2, 3, &w), 0);
    REL_OK(w.stat, iris_ref[col].welch_f, 1e-9, "Welch F (statsmodels)");
    cr_expect_eq(w.df1, 2);
    REL_OK(w.df2, iris_ref[col].welch_df2, 1e-9, "Welch df2 (statsmodels)");
    REL_OK(w.p, iris_ref[col].welch_p, 1e-6, "Welch p (statsmodels)");
    cr_assert_eq(stat_anova(g.n, g.mean, g.m2, 3, &a), 0);
    REL_OK(a.stat, iris_ref[col].anova_f, 1e-9, "ANOVA F (statsmodels)");
    cr_expect_eq(a.df2, 147);
    REL_OK(a.p, iris_ref[col].anova_p, 1e-6, "ANOVA p (statsmodels)");
}

Test(stat_welch, iris_sepal_length_matches_statsmodels) { check_iris(0); }
Test(stat_welch, iris_sepal_width_matches_statsmodels) { check_iris(1); }
Test(stat_welch, iris_petal_length_matches_statsmodels) { check_iris(2); }
Test(stat_welch, iris_petal_width_matches_statsmodels) { check_iris(3); }

Test(stat_welch, groups_without_a_finite_weight_are_skipped)
{
    iris_groups g;
    if (iris(0, &g) != 0) cr_skip_test("iris.csv not found under %s", testutil_data_dir());
    double n[5] = {g.n[0], 1, g.n[1], 7, g.n[2]}, mean[5] = {g.mean[0], 3, g.mean[1], 5, g.mean[2]};
    double m2[5] = {g.m2[0], 0, g.m2[1], 0, g.m2[2]};
    stat_result w;
    cr_assert_eq(stat_welch(n, mean, m2, 5, &w), 0);
    REL_OK(w.stat, iris_ref[0].welch_f, 1e-9, "Welch F with an n = 1 and a zero-variance group");
    cr_expect_eq(w.df1, 2);
}

Test(stat_welch, one_usable_group_is_undefined)
{
    double n[2] = {5, 1}, mean[2] = {1, 2}, m2[2] = {3, 0};
    stat_result w;
    cr_expect_eq(stat_welch(n, mean, m2, 2, &w), -1);
    cr_expect(isnan(w.stat) && isnan(w.p));
}

Test(stat_welch, two_groups_equal_the_square_of_welchs_t)
{
    /* Worked by hand from the definitions: with k = 2, F* = t^2 of Welch's
     * t = (m1 - m2) / sqrt(s1^2/n1 + s2^2/n2), and df2 is the
     * Welch-Satterthwaite df. */
    double n[2] = {8, 13}, mean[2] = {3.5, 2.25}, m2[2] = {14, 30};
    double v1 = 14.0 / 7 / 8, v2 = 30.0 / 12 / 13, t = (3.5 - 2.25) / sqrt(v1 + v2);
    double ws = (v1 + v2) * (v1 + v2) / (v1 * v1 / 7 + v2 * v2 / 12);
    stat_result w;
    cr_assert_eq(stat_welch(n, mean, m2, 2, &w), 0);
    REL_OK(w.stat, t * t, 1e-13, "F* = t^2");
    REL_OK(w.df2, ws, 1e-13, "Welch-Satterthwaite df");
}

/* ---- correlation F ------------------------------------------------------- */

Test(stat_correlation_f, matches_scipy_f_tail)
{
    /* scipy 1.10.1: stats.f.sf(r*r*(n-2)/(1-r*r), 1, n-2). */
    stat_result r;
    cr_assert_eq(stat_correlation_f(0.5, 10, &r), 0);
    REL_OK(r.stat, 2.6666666666666665, 1e-15, "F");
    REL_OK(r.p, 0.14111328125, 1e-12, "p (scipy)");
    cr_expect(r.df1 == 1 && r.df2 == 8 && r.extra == 0.5);
    cr_assert_eq(stat_correlation_f(-0.3, 1000, &r), 0);
    REL_OK(r.stat, 98.70329670329669, 1e-14, "F");
    REL_OK(r.p, 3.0374833803525847e-22, 1e-9, "p (scipy)");
}

Test(stat_correlation_f, small_r_over_a_million_rows_keeps_its_p_value)
{
    /* GSL 2.7's gsl_cdf_fdist_Q returns 0 here.  mpmath 1.2.1 at 40 digits:
     * betainc(d2/2, 1/2, 0, d2/(d2 + F), regularized) = 1.5203198039927195e-23
     * for F = 100.00980098009802, d2 = 999998 (r = 0.01, n = 1e6). */
    stat_result r;
    cr_assert_eq(stat_correlation_f(0.01, 1e6, &r), 0);
    REL_OK(r.stat, 100.00980098009802, 1e-13, "F");
    REL_OK(r.p, 1.5203198039927195e-23, 1e-9, "p (mpmath)");
    cr_expect(!r.p_below);
}

Test(stat_correlation_f, perfect_or_overwhelming_correlation_sets_p_below)
{
    stat_result r;
    cr_assert_eq(stat_correlation_f(1, 50, &r), 0);
    cr_expect(isinf(r.stat) && r.p == 0 && r.p_below);
    cr_assert_eq(stat_correlation_f(-1.0000000000000002, 50, &r), 0, "rounding above 1");
    cr_expect(isinf(r.stat) && r.p_below && r.extra == -1);
    /* r = 0.2 over 5e6 rows: F = 208333.25 on (1, 4999998) df, the p-value
     * is near exp(-F/2) = 1e-45000 (worked by hand; scipy also gives 0). */
    cr_assert_eq(stat_correlation_f(0.2, 5e6, &r), 0);
    cr_expect(r.p == 0 && r.p_below);
    /* mpmath 1.2.1, quadrature at 50 digits (tests/logp_reference.py's
     * ln_f_upper): log10 p = -44324.648249267797543. */
    REL_OK(r.log10_p, -44324.648249267797543, 1e-9, "log10 p (mpmath)");
    cr_assert_eq(stat_correlation_f(1, 50, &r), 0);
    cr_expect(r.log10_p == -INFINITY, "|r| = 1: p is exactly 0");
}

Test(stat_correlation_f, too_few_pairs_or_nan_is_undefined)
{
    stat_result r;
    cr_expect_eq(stat_correlation_f(0.5, 2, &r), -1);
    cr_expect(isnan(r.stat) && isnan(r.p));
    cr_expect_eq(stat_correlation_f(NAN, 100, &r), -1);
}

/* ---- p-value tails -------------------------------------------------------- */

Test(stat_tails, f_tail_with_large_denominator_df_matches_mpmath)
{
    /* mpmath 1.2.1, 40 digits: betainc(d2/2, d1/2, 0, d2/(d2 + d1 F),
     * regularized=True).  GSL 2.7's gsl_cdf_fdist_Q gives 0 for the first
     * three and 0.2725463 (5e-5 off) for the (2, 1e12) case. */
    static const struct { double f, d1, d2, p, tol; } c[] = {
        {100, 3, 1e6, 1.0173578546680681e-64, 1e-9},
        {10, 10, 1e9, 5.4497135353399178e-17, 1e-9},
        {1000, 1, 1e6, 2.3066628393030975e-219, 1e-9},
        {5, 4, 3e5, 0.00049953543945170809, 1e-9},
        {1.3, 2, 1e12, 0.27253179303447317, 1e-9},
        {0.01, 1, 1e6, 0.92034434549204316, 1e-9},
        {2.5, 30, 1e7, 1.007593582827924e-5, 1e-6},
        {50, 5, 10, 9.4022597880552985e-7, 1e-12},
    };
    for (size_t i = 0; i < sizeof c / sizeof c[0]; i++) {
        stat_result r;
        cr_assert_eq(stat_f_test(c[i].f, c[i].d1, c[i].d2, &r), 0);
        char what[96];
        snprintf(what, sizeof what, "F %g on (%g, %g)", c[i].f, c[i].d1, c[i].d2);
        REL_OK(r.p, c[i].p, c[i].tol, what);
        cr_expect(!r.p_below, "%s: p_below", what);
    }
}

/* Q = P[Poisson(x/2) < df/2] for even df, summed by mpmath 1.2.1 at 40
 * digits (an exact identity, independent of any incomplete-gamma code);
 * x = df + z sqrt(2 df) for z = -1, 0, 3, 10, 30. */
static const struct { double df, x, p; } chi2_ref[] = {
    {40000, 39717.157287525384, 0.84134677268395109},
    {40000, 40000.0, 0.49905968376625068},
    {40000, 40848.528137423855, 0.0014346763254918151},
    {40000, 42828.42712474619, 7.143398433185895e-23},
    {40000, 48485.28137423857, 3.6842072859507432e-174},
    {100000, 99552.78640450005, 0.84134555521120465},
    {100000, 100000.0, 0.49940529189520669},
    {100000, 101341.64078649988, 0.0014032363438129228},
    {100000, 104472.13595499958, 3.2225621616916078e-23},
    {100000, 113416.40786499874, 3.8167937810669475e-182},
    {200000, 199367.54446796633, 0.84134515026209188},
    {200000, 200000.0, 0.49957947788963482},
    {200000, 201897.36659610103, 0.001387513680833018},
    {200000, 206324.55532033675, 2.1330986311837022e-23},
    {200000, 218973.66596101027, 1.7115947884506183e-186},
};

Test(stat_tails, chi2_tail_with_large_df_matches_poisson_sums)
{
    for (size_t i = 0; i < sizeof chi2_ref / sizeof chi2_ref[0]; i++) {
        stat_result r;
        cr_assert_eq(stat_chi2_test(chi2_ref[i].x, chi2_ref[i].df, &r), 0);
        char what[64];
        snprintf(what, sizeof what, "chi2 %.17g on %g df", chi2_ref[i].x, chi2_ref[i].df);
        REL_OK(r.p, chi2_ref[i].p, 1e-10, what);
        cr_expect(isnan(r.df2));
    }
}

Test(stat_tails, chi2_tail_beyond_gsl_range_matches_scipy)
{
    /* scipy 1.10.1 stats.chi2.sf (upper tail); at these df GSL 2.7 loses
     * digits or signals an error (which would abort by default). */
    stat_result r;
    cr_assert_eq(stat_chi2_test(1014142.135623731, 1e6, &r), 0);
    REL_OK(r.p, 1.2146988079789724e-23, 1e-8, "df 1e6 (scipy)");
    cr_assert_eq(stat_chi2_test(10013416.407864999, 1e7, &r), 0);
    REL_OK(r.p, 0.001355188192241147, 1e-10, "df 1e7 (scipy)");
    /* Lower tail at df 1e9, z = -4.5: mpmath 1.2.1 sum of P[Poisson(x/2) >= df/2]
     * = 3.39308879599e-6 (scipy's chi2.cdf gives 1.17e-6 here). */
    cr_assert_eq(stat_chi2_test(999798753.882025, 1e9, &r), 0);
    REL_OK(1 - r.p, 3.39308879599e-6, 1e-6, "df 1e9, 1 - p (mpmath)");
}

Test(stat_tails, chi2_tail_small_df_matches_mpmath)
{
    /* mpmath 1.2.1: gammainc(df/2, x/2, inf, regularized=True). */
    stat_result r;
    cr_assert_eq(stat_chi2_test(30, 5, &r), 0);
    REL_OK(r.p, 1.4748581038443052e-5, 1e-12, "chi2 30 on 5 df");
    cr_assert_eq(stat_chi2_test(1000, 3, &r), 0);
    REL_OK(r.p, 1.7994208765314477e-216, 1e-10, "chi2 1000 on 3 df");
    cr_expect(!r.p_below);
    /* mpmath: 1.9016849634750064e-326, below DBL_MIN; log10 p =
     * -325.72086142743887074 (gammainc at 50 digits). */
    cr_assert_eq(stat_chi2_test(1500, 2, &r), 0);
    cr_expect(r.p == 0 && r.p_below, "p %g below %d", r.p, r.p_below);
    REL_OK(r.log10_p, -325.72086142743887074, 1e-12, "log10 p (mpmath)");
    cr_assert_eq(stat_chi2_test(1000, 3, &r), 0);
    REL_OK(r.log10_p, log10(1.7994208765314477e-216), 1e-14, "log10 p = log10 of p");
}

Test(stat_tails, zero_and_infinite_statistics_and_bad_input)
{
    stat_result r;
    cr_assert_eq(stat_f_test(0, 3, 10, &r), 0);
    cr_expect(r.p == 1 && !r.p_below && r.log10_p == 0);
    cr_assert_eq(stat_chi2_test(0, 3, &r), 0);
    cr_expect(r.p == 1 && r.log10_p == 0);
    cr_assert_eq(stat_f_test(INFINITY, 3, 10, &r), 0);
    cr_expect(r.p == 0 && r.p_below && r.log10_p == -INFINITY);
    cr_assert_eq(stat_chi2_test(INFINITY, 3e6, &r), 0);
    cr_expect(r.p == 0 && r.p_below && r.log10_p == -INFINITY);
    cr_expect_eq(stat_f_test(NAN, 3, 10, &r), -1);
    cr_expect(isnan(r.p) && !r.p_below && isnan(r.log10_p));
    cr_expect_eq(stat_f_test(-1, 3, 10, &r), -1);
    cr_expect_eq(stat_f_test(1, 0, 10, &r), -1);
    cr_expect_eq(stat_chi2_test(1, 0, &r), -1);
    cr_expect_eq(stat_chi2_test(1, NAN, &r), -1);
}

Test(stat_tails, p_values_stay_in_range_and_decrease_with_the_statistic)
{
    /* Sweep of both tails over df from 1 to 1e12 (no outside reference: the
     * upper tail must lie in [0, 1] and not increase with the statistic). */
    const double dfs[] = {1, 2, 7, 30, 1e3, 1e5, 3e5, 1e7, 1e12};
    for (size_t i = 0; i < 9; i++)
        for (size_t j = 0; j < 9; j++) {
            double last = 1;
            for (double f = 1e-6; f < 1e8; f *= 1.7) {
                stat_result r;
                cr_assert_eq(stat_f_test(f, dfs[i], dfs[j], &r), 0);
                cr_assert(r.p >= 0 && r.p <= 1 && !isnan(r.p), "F %g on (%g, %g): p %g", f, dfs[i],
                          dfs[j], r.p);
                cr_assert(r.p <= last * (1 + 1e-6) + 1e-300, "F %g on (%g, %g): p %g after %g", f,
                          dfs[i], dfs[j], r.p, last);
                last = r.p;
            }
        }
    for (size_t i = 0; i < 9; i++) {
        double last = 1;
        for (double z = -5; z < 60; z += 0.25) {
            double x = dfs[i] + z * sqrt(2 * dfs[i]);
            if (x <= 0) continue;
            stat_result r;
            cr_assert_eq(stat_chi2_test(x, dfs[i], &r), 0);
            cr_assert(r.p >= 0 && r.p <= 1 && !isnan(r.p), "chi2 %g on %g: p %g", x, dfs[i], r.p);
            cr_assert(r.p <= last * (1 + 1e-6) + 1e-300, "chi2 %g on %g: p %g after %g", x, dfs[i],
                      r.p, last);
            last = r.p;
        }
    }
}

Test(stat_tails, log10_p_matches_mpmath_from_1e_5_to_1e_100000)
{
    /* mpmath 1.2.1, quadrature at 50 digits (tests/logp_reference.h):
     * log10 p to 6 significant digits, and to 1e-8 relative (measured:
     * 1.4e-9 at worst) so that a loss of digits shows.  Above p = 1e-250
     * log10_p is log10 of the double p; below, the log-space tails. */
    for (size_t i = 0; i < sizeof logp_reference_f / sizeof *logp_reference_f; i++) {
        const logp_reference *c = &logp_reference_f[i];
        stat_result r;
        cr_assert_eq(stat_f_test(c->stat, c->df1, c->df2, &r), 0);
        double e = testutil_rel(r.log10_p, c->log10_p);
        cr_expect(e <= 5e-7, "F %.17g on (%g, %g): log10 p %.12g, mpmath %.12g (6 digits)", c->stat,
                  c->df1, c->df2, r.log10_p, c->log10_p);
        cr_expect(e <= 1e-8, "F %.17g on (%g, %g): log10 p %.15g, mpmath %.15g (rel %.2g)", c->stat,
                  c->df1, c->df2, r.log10_p, c->log10_p, e);
    }
    for (size_t i = 0; i < sizeof logp_reference_chi2 / sizeof *logp_reference_chi2; i++) {
        const logp_reference *c = &logp_reference_chi2[i];
        stat_result r;
        cr_assert_eq(stat_chi2_test(c->stat, c->df1, &r), 0);
        double e = testutil_rel(r.log10_p, c->log10_p);
        cr_expect(e <= 5e-7, "chi2 %.17g on %g: log10 p %.12g, mpmath %.12g (6 digits)", c->stat,
                  c->df1, r.log10_p, c->log10_p);
        cr_expect(e <= 1e-8, "chi2 %.17g on %g: log10 p %.15g, mpmath %.15g (rel %.2g)", c->stat,
                  c->df1, r.log10_p, c->log10_p, e);
    }
}

Test(stat_tails, f_tail_near_its_large_df_switch_matches_mpmath)
{
    /* mpmath 1.2.1 at 50 digits (tests/logp_reference.h, third table):
     * df1 1..300, df2 1e7..1e9, p 1e-2..1e-300.  The switch to the gamma
     * limit (df2 > 3e7 and df2 > 6e5 df1) is where its error falls below the
     * beta ratio's; with the switch at df2 > 3e7 for df1 < 20 only, p on
     * (300, 3e8) erred by 1e-8 and on (100, 1e9) by 3e-8. */
    double worst = 0;
    for (size_t i = 0; i < sizeof logp_reference_f_switch / sizeof *logp_reference_f_switch; i++) {
        const logp_reference *c = &logp_reference_f_switch[i];
        stat_result r;
        cr_assert_eq(stat_f_test(c->stat, c->df1, c->df2, &r), 0);
        double e = fabs(log(r.p) - c->log10_p * M_LN10); /* relative error of p */
        if (e > worst) worst = e;
        cr_expect(e <= 5e-9, "F %.17g on (%g, %g): p %.17g, mpmath 10^%.17g (rel %.2g)", c->stat,
                  c->df1, c->df2, r.p, c->log10_p, e);
    }
    cr_log_info("F near the large-df switch: worst relative error of p %.2g", worst);
}

Test(stat_tails, log10_p_keeps_decreasing_below_the_double_range)
{
    /* Sweep of F up to 1e300 and chi-squared up to 60 standard deviations
     * and beyond, df from 1 to 1e9 (no outside reference: log10 p must not
     * increase with the statistic, stay finite where the statistic is, and
     * equal log10 p where p is representable and above 1e-250). */
    const double dfs[] = {1, 2, 7, 30, 1e3, 1e5, 3e5, 1e7, 1e9};
    for (size_t i = 0; i < 9; i++)
        for (size_t j = 0; j < 9; j++) {
            double last = 0;
            for (double f = 1.1; f < 1e300; f *= 1.9) {
                stat_result r;
                cr_assert_eq(stat_f_test(f, dfs[i], dfs[j], &r), 0);
                cr_assert(isfinite(r.log10_p) && r.log10_p <= 0, "F %g on (%g, %g): log10 p %g", f,
                          dfs[i], dfs[j], r.log10_p);
                cr_assert(r.log10_p <= last + 1e-9 * fabs(last), "F %g on (%g, %g): %.17g after %.17g",
                          f, dfs[i], dfs[j], r.log10_p, last);
                if (r.p >= 1e-250) cr_assert_eq(r.log10_p, log10(r.p));
                last = r.log10_p;
            }
        }
    for (size_t i = 0; i < 9; i++) {
        double last = 0;
        for (double z = 0; z < 1e8; z = z * 1.3 + 0.5) {
            double x = dfs[i] + z * sqrt(2 * dfs[i]);
            stat_result r;
            cr_assert_eq(stat_chi2_test(x, dfs[i], &r), 0);
            cr_assert(isfinite(r.log10_p) && r.log10_p <= 0, "chi2 %g on %g: log10 p %g", x, dfs[i],
                      r.log10_p);
            cr_assert(r.log10_p <= last + 1e-9 * fabs(last), "chi2 %g on %g: %.17g after %.17g", x,
                      dfs[i], r.log10_p, last);
            last = r.log10_p;
        }
    }
}

static int gsl_errors; /* calls of counting_handler */

static void counting_handler(const char *reason, const char *file, int line, int gsl_errno)
{
    (void)reason, (void)file, (void)line, (void)gsl_errno;
    gsl_errors++;
}

Test(stat_tails, leaves_the_gsl_handler_alone_and_raises_no_gsl_error)
{
    /* The host's handler stays installed, and the routing of the tails keeps
     * GSL from ever calling it over a sweep of extreme statistics and df (no
     * outside reference: the count of GSL errors must be 0). */
    gsl_set_error_handler(counting_handler);
    const double dfs[] = {0.5, 1, 2, 7, 30, 1e3, 5e4, 1e5, 1e7, 1e9, 1e12, 1e15};
    stat_result r;
    for (size_t i = 0; i < 12; i++) {
        for (size_t j = 0; j < 12; j++)
            for (double f = 1e-300; f < 1e300; f *= 1e5) stat_f_test(f, dfs[i], dfs[j], &r);
        for (double x = 1e-300; x < 1e300; x *= 1e5) stat_chi2_test(x, dfs[i], &r);
        for (double rr = -1; rr <= 1; rr += 0.125) stat_correlation_f(rr, 2 + dfs[i], &r);
    }
    cr_expect_eq(gsl_errors, 0, "%d GSL errors", gsl_errors);
    cr_expect(gsl_set_error_handler(NULL) == counting_handler, "the GSL handler was replaced");
}

Test(stat_tails, recording_handler_turns_a_gsl_error_into_no_abort)
{
    /* GSL 2.7 signals "error in large x asymptotic" for this point; with
     * GSL's default handler the process would abort. */
    gsl_set_error_handler(stat_gsl_error_handler);
    double p = gsl_cdf_chisq_Q(1.0001e9, 1e9);
    (void)p;
    stat_result r;
    cr_assert_eq(stat_chi2_test(30, 5, &r), 0); /* the flag is per p-value */
    REL_OK(r.p, 1.4748581038443052e-5, 1e-12, "chi2 30 on 5 df (mpmath, as above)");
}

/* Recomputes the large-df reference points many times on one thread. */
static void *tail_worker(void *arg)
{
    int *bad = arg;
    for (int rep = 0; rep < 200; rep++)
        for (size_t i = 0; i < sizeof chi2_ref / sizeof chi2_ref[0]; i++) {
            stat_result r;
            stat_chi2_test(chi2_ref[i].x, chi2_ref[i].df, &r);
            if (testutil_rel(r.p, chi2_ref[i].p) > 1e-10) (*bad)++;
            stat_f_test(100, 3, 1e6, &r);
            if (testutil_rel(r.p, 1.0173578546680681e-64) > 1e-9) (*bad)++;
        }
    return NULL;
}

Test(stat_tails, concurrent_calls_give_the_single_thread_values)
{
    /* References as in the two tests above (Poisson sums, mpmath). */
    pthread_t t[4];
    int bad[4] = {0};
    for (int i = 0; i < 4; i++) cr_assert_eq(pthread_create(&t[i], NULL, tail_worker, &bad[i]), 0);
    for (int i = 0; i < 4; i++) {
        pthread_join(t[i], NULL);
        cr_expect_eq(bad[i], 0, "thread %d: %d wrong p-values", i, bad[i]);
    }
}

/* ---- contingency tables -------------------------------------------------- */

/* pandas 1.5.3: pd.crosstab(penguins.species, penguins.island) from
 * ../shared/data/open/penguins.csv (344 rows): species Adelie, Chinstrap,
 * Gentoo; islands Biscoe, Dream, Torgersen. */
static const double penguins[9] = {44, 56, 52, 0, 68, 0, 124, 0, 0};
/* pd.crosstab(tips.day, tips.time): Fri, Sat, Sun, Thur x Dinner, Lunch. */
static const double tips[8] = {12, 7, 87, 0, 76, 0, 1, 61};

/* Counts one pair of columns of a CSV file (quotes stripped) into a table
 * whose row and column labels are given. */
static int count_csv(const char *file, int ca, int cb, const char **ra, int nra, const char **rb,
                     int nrb, double *table)
{
    char path[512], line[512];
    snprintf(path, sizeof path, "%s/open/%s", testutil_data_dir(), file);
    FILE *f = fopen(path, "r");
    if (!f) return -1;
    memset(table, 0, sizeof(double) * nra * nrb);
    if (!fgets(line, sizeof line, f)) { fclose(f); return -1; }
    while (fgets(line, sizeof line, f)) {
        char *field[16];
        int nf = 0;
        for (char *s = line; nf < 16;) {
            field[nf++] = s;
            char *c = strpbrk(s, ",\r\n");
            if (!c) break;
            int end = *c != ',';
            *c = 0;
            if (end) break;
            s = c + 1;
        }
        if (nf <= ca || nf <= cb) continue;
        int ia = -1, ib = -1;
        for (int i = 0; i < nf; i++) {
            size_t len = strlen(field[i]);
            if (len >= 2 && field[i][0] == '"') { field[i][len - 1] = 0; field[i]++; }
        }
        for (int i = 0; i < nra; i++) if (strcmp(field[ca], ra[i]) == 0) ia = i;
        for (int i = 0; i < nrb; i++) if (strcmp(field[cb], rb[i]) == 0) ib = i;
        if (ia >= 0 && ib >= 0) table[ia * nrb + ib] += 1;
    }
    fclose(f);
    return 0;
}

Test(stat_chi_squared, tables_built_from_the_open_datasets_match_pandas)
{
    const char *sp[3] = {"Adelie", "Chinstrap", "Gentoo"}, *is[3] = {"Biscoe", "Dream", "Torgersen"};
    const char *day[4] = {"Fri", "Sat", "Sun", "Thur"}, *tm[2] = {"Dinner", "Lunch"};
    double t[12];
    if (count_csv("penguins.csv", 0, 1, sp, 3, is, 3, t) != 0) cr_skip_test("penguins.csv not found");
    for (int i = 0; i < 9; i++) cr_expect_eq(t[i], penguins[i], "penguins cell %d", i);
    if (count_csv("tips.csv", 4, 5, day, 4, tm, 2, t) != 0) cr_skip_test("tips.csv not found");
    for (int i = 0; i < 8; i++) cr_expect_eq(t[i], tips[i], "tips cell %d", i);
}

Test(stat_chi_squared, penguins_species_by_island_matches_scipy)
{
    /* scipy 1.10.1: chi2_contingency(table, correction=False); V by hand from it. */
    stat_result r;
    cr_assert_eq(stat_chi_squared(penguins, 3, 3, &r), 0);
    REL_OK(r.stat, 299.55032743148195, 1e-12, "chi-squared");
    cr_expect_eq(r.df1, 4);
    cr_expect(isnan(r.df2));
    REL_OK(r.p, 1.3545738297192517e-63, 1e-9, "p");
    REL_OK(r.extra, 0.6598431008795325, 1e-12, "Cramer's V");
}

Test(stat_chi_squared, tips_day_by_time_matches_scipy)
{
    stat_result r;
    cr_assert_eq(stat_chi_squared(tips, 4, 2, &r), 0);
    REL_OK(r.stat, 217.1126728434853, 1e-12, "chi-squared (scipy)");
    cr_expect_eq(r.df1, 3);
    REL_OK(r.p, 8.449897551777147e-47, 1e-9, "p (scipy)");
    REL_OK(r.extra, 0.9432953070188531, 1e-12, "Cramer's V");
}

Test(stat_chi_squared, empty_rows_and_columns_are_dropped)
{
    /* tips with an empty row and an empty column inserted. */
    double t[5 * 3] = {12, 0, 7, 0, 0, 0, 87, 0, 0, 76, 0, 0, 1, 0, 61};
    stat_result a, b;
    cr_assert_eq(stat_chi_squared(t, 5, 3, &a), 0);
    cr_assert_eq(stat_chi_squared(tips, 4, 2, &b), 0);
    REL_OK(a.stat, b.stat, 1e-15, "chi-squared");
    cr_expect_eq(a.df1, 3);
    REL_OK(a.extra, b.extra, 1e-15, "V");
}

Test(stat_chi_squared, one_non_empty_row_or_column_is_undefined)
{
    double t[6] = {0, 0, 0, 5, 6, 7};
    stat_result r;
    cr_expect_eq(stat_chi_squared(t, 2, 3, &r), -1);
    cr_expect(isnan(r.stat) && isnan(r.p) && isnan(r.extra));
    cr_expect_eq(stat_chi_squared(t, 6, 1, &r), -1);
    cr_expect_eq(stat_chi_squared(t, 0, 0, &r), -1);
}

Test(stat_chi_squared, perfect_association_has_v_one_and_independence_zero)
{
    /* Worked by hand: a diagonal table of 50 per cell gives X^2 = N (k-1). */
    double diag[9] = {50, 0, 0, 0, 50, 0, 0, 0, 50}, indep[6] = {10, 20, 30, 20, 40, 60};
    stat_result r;
    cr_assert_eq(stat_chi_squared(diag, 3, 3, &r), 0);
    REL_OK(r.stat, 300, 1e-15, "X^2");
    REL_OK(r.extra, 1, 1e-15, "V");
    cr_assert_eq(stat_chi_squared(indep, 2, 3, &r), 0);
    cr_expect(fabs(r.stat) < 1e-12 && r.p > 1 - 1e-12);
}

/* ---- mutual information -------------------------------------------------- */

/* numpy 1.24.2 by hand: pxy = O / N, I = sum pxy log(pxy / outer(px, py))
 * over non-empty cells; H's plug-in; I_mm = (Hx + (mx-1)/2N) + (Hy +
 * (my-1)/2N) - (Hxy + (mxy-1)/2N); normalized = I / Hy. */
Test(stat_mutual_information, penguins_and_tips_match_numpy)
{
    stat_mutual_info m;
    cr_assert_eq(stat_mutual_information(penguins, 3, 3, &m), 0);
    REL_OK(m.nats, 0.5201571711238802, 1e-12, "penguins I");
    REL_OK(m.nats_corrected, 0.5201571711238802, 1e-12, "penguins I_mm (mx+my-mxy-1 = 0)");
    REL_OK(m.normalized, 0.5183862280008991, 1e-12, "penguins I/Hy");
    REL_OK(m.h_x, 1.0491553862814393, 1e-12, "penguins Hx");
    REL_OK(m.h_y, 1.0034162619053568, 1e-12, "penguins Hy");
    REL_OK(m.h_xy, 1.532414477062916, 1e-12, "penguins Hxy");
    cr_expect(m.rows_used == 3 && m.cols_used == 3 && m.cells_used == 5 && m.n == 344);
    cr_assert_eq(stat_mutual_information(tips, 4, 2, &m), 0);
    REL_OK(m.nats, 0.5194845244725756, 1e-12, "tips I");
    REL_OK(m.nats_corrected, 0.5174353441447064, 1e-12, "tips I_mm");
    REL_OK(m.normalized, 0.8779371060955845, 1e-12, "tips I/Hy");
    REL_OK(m.h_x, 1.2779206324175134, 1e-12, "tips Hx");
    REL_OK(m.h_y, 0.5917104093969315, 1e-12, "tips Hy");
    REL_OK(m.h_xy, 1.3501465173418694, 1e-12, "tips Hxy");
    cr_expect(m.rows_used == 4 && m.cols_used == 2 && m.cells_used == 6);
}

Test(stat_mutual_information, weak_dependence_keeps_its_digits)
{
    /* mpmath 1.2.1, 40 digits, for [[1e6+1, 1e6], [1e6, 1e6+1]]:
     * I = 2 a log(4 a) + 2 b log(4 b), a = (1e6+1)/N, b = 1e6/N, N = 4e6+2,
     * = 1.2499987500009896e-13.  The difference Hx + Hy - Hxy would keep
     * about three digits of it. */
    double t[4] = {1e6 + 1, 1e6, 1e6, 1e6 + 1};
    stat_mutual_info m;
    cr_assert_eq(stat_mutual_information(t, 2, 2, &m), 0);
    REL_OK(m.nats, 1.2499987500009896e-13, 1e-9, "I");
}

Test(stat_mutual_information, independent_and_constant_target_tables)
{
    double indep[6] = {10, 20, 30, 20, 40, 60}, one_col[3] = {4, 5, 6};
    stat_mutual_info m;
    cr_assert_eq(stat_mutual_information(indep, 2, 3, &m), 0);
    cr_expect(fabs(m.nats) < 1e-15 && fabs(m.normalized) < 1e-14);
    /* Worked by hand: mx + my - mxy - 1 = 2 + 3 - 6 - 1 = -2, N = 180. */
    REL_OK(m.nats_corrected, m.nats - 2.0 / 360, 1e-12, "I_mm");
    cr_assert_eq(stat_mutual_information(one_col, 3, 1, &m), 0);
    cr_expect(m.h_y == 0 && isnan(m.normalized) && m.nats == 0);
    double empty[4] = {0, 0, 0, 0};
    cr_expect_eq(stat_mutual_information(empty, 2, 2, &m), -1);
    cr_expect(isnan(m.nats));
}

/* ---- Benjamini-Hochberg -------------------------------------------------- */

/* statsmodels 0.13.5: multipletests(p, method='fdr_bh')[1] for
 * p = [0.01, 0.04, 0.03, 0.005, 0.5, 0.2, 0.04, 0.9, 1e-10, 0.049, 0.7, 0.04]. */
static const double bh_p[12] = {0.01, 0.04, 0.03, 0.005, 0.5, 0.2, 0.04, 0.9, 1e-10, 0.049, 0.7, 0.04};
static const double bh_q[12] = {0.04, 0.06857142857142857, 0.06857142857142857, 0.030000000000000002,
                                0.6, 0.26666666666666666, 0.06857142857142857, 0.9,
                                1.2000000000000002e-09, 0.07350000000000001, 0.7636363636363637,
                                0.06857142857142857};

Test(stat_benjamini_hochberg, matches_statsmodels_with_ties)
{
    double q[12];
    stat_benjamini_hochberg(bh_p, 12, q);
    for (int i = 0; i < 12; i++) REL_OK(q[i], bh_q[i], 1e-15, "q");
}

Test(stat_benjamini_hochberg, nan_entries_are_ignored_and_stay_nan_in_place)
{
    double p[15];
    int k = 0;
    for (int i = 0; i < 15; i++) p[i] = (i % 5 == 2) ? NAN : bh_p[k++];
    stat_benjamini_hochberg(p, 15, p); /* in place */
    k = 0;
    for (int i = 0; i < 15; i++) {
        if (i % 5 == 2) {
            cr_expect(isnan(p[i]), "entry %d", i);
        } else {
            REL_OK(p[i], bh_q[k], 1e-15, "q with NaNs around");
            k++;
        }
    }
}

Test(stat_benjamini_hochberg, capped_at_one_and_empty_input)
{
    double p[3] = {0.9, 0.95, 1}, q[3];
    stat_benjamini_hochberg(p, 3, q);
    for (int i = 0; i < 3; i++) cr_expect(q[i] <= 1);
    cr_expect_eq(q[2], 1);
    double all_nan[2] = {NAN, NAN};
    stat_benjamini_hochberg(all_nan, 2, all_nan);
    cr_expect(isnan(all_nan[0]) && isnan(all_nan[1]));
    stat_benjamini_hochberg(NULL, 0, NULL);
}

/* ---- equal-frequency coarsening ------------------------------------------ */

Test(stat_equal_frequency_bins, uniform_counts_split_evenly)
{
    double c[100];
    unsigned b[100];
    for (int i = 0; i < 100; i++) c[i] = 1;
    cr_assert_eq(stat_equal_frequency_bins(c, 100, 4, b), 4);
    for (int i = 0; i < 100; i++) cr_expect_eq(b[i], (unsigned)(i / 25), "bucket %d", i);
}

Test(stat_equal_frequency_bins, a_heavy_bucket_is_never_split)
{
    /* Worked by hand, N = 103, k = 4: positions 4 (C + c/2) / N =
     * 0.019, 1.98, 3.94, 3.98 -> bins 0, 1, 3, 3 -> renumbered 0, 1, 2, 2. */
    double c[4] = {1, 100, 1, 1};
    unsigned b[4];
    cr_assert_eq(stat_equal_frequency_bins(c, 4, 4, b), 3);
    cr_expect(b[0] == 0 && b[1] == 1 && b[2] == 2 && b[3] == 2);
}

Test(stat_equal_frequency_bins, empty_buckets_join_the_bin_before)
{
    double c[7] = {0, 0, 5, 0, 5, 0, 0};
    unsigned b[7];
    cr_assert_eq(stat_equal_frequency_bins(c, 7, 2, b), 2);
    unsigned want[7] = {0, 0, 0, 0, 1, 1, 1};
    for (int i = 0; i < 7; i++) cr_expect_eq(b[i], want[i], "bucket %d", i);
}

Test(stat_equal_frequency_bins, no_values_or_no_bins_gives_zero)
{
    double c[3] = {0, 0, 0}, d[3] = {1, 2, 3};
    unsigned b[3] = {7, 7, 7};
    cr_expect_eq(stat_equal_frequency_bins(c, 3, 4, b), 0);
    cr_expect(b[0] == 0 && b[1] == 0 && b[2] == 0);
    cr_expect_eq(stat_equal_frequency_bins(d, 3, 0, b), 0);
    cr_expect_eq(stat_equal_frequency_bins(d, 3, 1, b), 1);
    cr_expect(b[0] == 0 && b[1] == 0 && b[2] == 0);
}

Test(stat_equal_frequency_bins, bins_are_dense_monotone_and_near_equal)
{
    /* Pseudo-random counts (fixed LCG): every bin's share stays within one
     * bucket's count of N / k, as the midpoint rule implies. */
    enum { M = 1000, K = 10 };
    double c[M], total[K] = {0}, N = 0, biggest = 0;
    unsigned b[M];
    uint64_t s = 12345;
    for (int i = 0; i < M; i++) {
        s = s * 6364136223846793005ULL + 1442695040888963407ULL;
        c[i] = (double)((s >> 33) % 50);
        N += c[i];
        if (c[i] > biggest) biggest = c[i];
    }
    unsigned used = stat_equal_frequency_bins(c, M, K, b);
    cr_assert_eq(used, K);
    for (int i = 1; i < M; i++) cr_assert(b[i] == b[i - 1] || b[i] == b[i - 1] + 1, "bucket %d", i);
    for (int i = 0; i < M; i++) total[b[i]] += c[i];
    for (int k = 0; k < K; k++)
        cr_expect(fabs(total[k] - N / K) <= biggest, "bin %d holds %g of %g", k, total[k], N);
}
