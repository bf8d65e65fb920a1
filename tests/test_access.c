/* access: reading a summary through accessors, and the two statistics built
 * on them (stats/describe, stats/corr).
 *
 * References: small tables invented for these tests whose figures are worked
 * by hand in the comments beside them, and numpy 1.24.2 (Debian's
 * python3-numpy) on the open datasets penguins and mpg, computed once with
 * /usr/bin/python3 and pasted here with the commands that gave them. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "stats/corr.h"
#include "stats/describe.h"
#include "summary/access.h"
#include "summary/scan.h"
#include "testutil.h"

/* Scans the files at paths (target name or NULL). */
static summary *scan_paths(const char *const *paths, size_t n, const char *target)
{
    scan_options o;
    scan_options_defaults(&o);
    if (target) o.opt.target = strdup(target);
    summary *s = NULL;
    char err[512];
    cr_assert_eq(scan_files(&o, paths, n, &s, err, sizeof err), SCAN_OK, "%s", err);
    summary_options_free(&o.opt);
    return s;
}

/* Writes text to a temporary file and scans it. */
static summary *scan_text(const char *text, const char *target)
{
    char path[] = "/tmp/sheaf-test-access-XXXXXX";
    int fd = mkstemp(path);
    cr_assert_geq(fd, 0);
    cr_assert_eq(write(fd, text, strlen(text)), (ssize_t)strlen(text));
    close(fd);
    const char *paths[] = {path};
    summary *s = scan_paths(paths, 1, target);
    unlink(path);
    return s;
}

/* Scans an open dataset; skips the test when it is absent. */
static summary *scan_open(const char *name, const char *target)
{
    char path[1024];
    snprintf(path, sizeof path, "%s/open/%s.csv", testutil_data_dir(), name);
    if (access(path, R_OK) != 0) cr_skip_test("%s not found", path);
    const char *paths[] = {path};
    return scan_paths(paths, 1, target);
}

static long column(const summary *s, const char *name)
{
    long j = summary_find_column(s, name);
    cr_assert_geq(j, 0, "no column %s", name);
    return j;
}

#define REL(got, want, tol) \
    cr_assert_leq(testutil_rel((got), (want)), (tol), "%s = %.17g, want %.17g", #got, (got), (want))

/* Worked by hand:
 *   x: 1, 2, 3, 4 and one missing cell.  n 4, mean 2.5, deviations
 *      -1.5 -0.5 0.5 1.5, M2 = 5, variance 5/3; symmetric, so skewness 0;
 *      M4 = 2 (5.0625 + 0.0625) = 10.25, kurtosis 4 * 10.25 / 25 - 3 = -1.36.
 *      The median by the inverted CDF (rank ceil(0.5 * 4) = 2) is 2.
 *   y: 10, (missing), 30, 20, 50.  n 4, mean 27.5, M2 = 306.25 + 6.25 +
 *      56.25 + 506.25 = 875, variance 875/3.
 *   x with y, over rows 1, 3, 4 (both present): x = 1 3 4, y = 10 30 20;
 *      means 8/3 and 20; deviations -5/3 1/3 4/3 and -10 10 0; C = 50/3 +
 *      10/3 = 20, covariance 20/2 = 10; M2x = 42/9 = 14/3, M2y = 200,
 *      r = 20 / sqrt(2800/3) = sqrt(3/7); variance of x there 7/3.
 *   word: red, blue, red, red, green: 3 distinct, red 3 times, 5 present. */
static const char *SMALL = "x,y,word\n"
                           "1,10,red\n"
                           "2,,blue\n"
                           "3,30,red\n"
                           "4,20,red\n"
                           ",50,green\n";

Test(access_columns, names_find_columns_and_unknown_names_give_minus_one)
{
    summary *s = scan_text(SMALL, NULL);
    cr_assert_eq(summary_columns(s), 3);
    cr_assert_eq(summary_find_column(s, "x"), 0);
    cr_assert_eq(summary_find_column(s, "word"), 2);
    cr_assert_eq(summary_find_column(s, "nope"), -1);
    cr_assert_eq(summary_find_column(s, ""), -1);
    cr_assert_eq(summary_find_column_n(s, "wordy", 4), 2);
    cr_assert_str_eq(summary_name(s, 1), "y");
    cr_assert_eq(summary_rows(s), 5);
    cr_assert_eq(summary_target_column(s), -1);
    cr_assert_null(summary_target_name(s));
    cr_assert_eq(summary_task(s, 0.99), TASK_AUTO);
    /* The default spellings (summary.c's list, read from the source). */
    cr_assert_eq(summary_missing_spellings(s), 7);
    cr_assert_str_eq(summary_missing_spelling(s, 0), "NA");
    cr_assert_str_eq(summary_missing_spelling(s, 6), "?");
    summary_free(s);
}

Test(access_columns, counts_and_moments_match_the_hand_worked_table)
{
    summary *s = scan_text(SMALL, NULL);
    size_t x = (size_t)column(s, "x"), y = (size_t)column(s, "y");
    cr_assert_eq(summary_kind(s, x, 0.99), KIND_NUMERIC);
    cr_assert_eq(summary_numbers(s, x), 4);
    cr_assert_eq(summary_missing(s, x), 1);
    cr_assert_eq(summary_present(s, x), 4);
    cr_assert_eq(summary_integers(s, x), 4);
    cr_assert_eq(summary_zeros(s, x), 0);
    REL(summary_mean(s, x), 2.5, 1e-15);
    REL(summary_variance(s, x), 5.0 / 3, 1e-15);
    REL(summary_sd(s, x), sqrt(5.0 / 3), 1e-15);
    cr_assert_leq(fabs(summary_skewness(s, x)), 1e-15);
    REL(summary_kurtosis(s, x), -1.36, 1e-14);
    cr_assert_eq(summary_min(s, x), 1);
    cr_assert_eq(summary_max(s, x), 4);
    REL(summary_mean(s, y), 27.5, 1e-15);
    REL(summary_variance(s, y), 875.0 / 3, 1e-14);
    summary_free(s);
}

Test(access_columns, quantiles_are_exact_when_the_value_table_holds_every_number)
{
    summary *s = scan_text(SMALL, NULL);
    size_t x = (size_t)column(s, "x");
    double rel = NAN;
    /* x = 1, 2, 3, 4: numpy.quantile(method='linear'), by hand: h = 3p. */
    cr_assert_eq(summary_quantile(s, x, 0.5, &rel), 2.5);
    cr_assert_eq(rel, 0);
    cr_assert_eq(summary_quantile_error(s, x), 0);
    cr_assert_eq(summary_quantile(s, x, 0, NULL), 1);
    cr_assert_eq(summary_quantile(s, x, 1, NULL), 4);
    cr_assert_eq(summary_quantile(s, x, 0.25, NULL), 1.75);
    double p[] = {0.1, 0.9, 2}, q[3];
    cr_assert_eq(summary_quantiles(s, x, p, 3, q, NULL), 0);
    cr_assert_eq(q[0], 1.3); /* 1 + 0.3 (2 - 1): the double numpy gives */
    cr_assert_eq(q[1], 3.7);
    cr_assert(isnan(q[2]));
    cr_assert(isnan(summary_quantile(s, x, 1.5, NULL)));
    summary_free(s);
}

Test(access_columns, quantiles_past_the_value_table_are_clamped_estimates_within_their_bound)
{
    /* 1 .. 2000: 2000 distinct values overflow the 1024-entry table. */
    size_t cap = 16 + 2000 * 6;
    char *text = malloc(cap);
    size_t used = (size_t)snprintf(text, cap, "x\n");
    for (int i = 1; i <= 2000; i++) used += (size_t)snprintf(text + used, cap - used, "%d\n", i);
    summary *s = scan_text(text, NULL);
    free(text);
    double rel = NAN;
    double med = summary_quantile(s, 0, 0.5, &rel);
    cr_assert(rel > 0 && rel < 0.01, "bound %g", rel);
    cr_assert_eq(rel, summary_quantile_error(s, 0));
    cr_assert_geq(rel, summary_quantile_error_floor());
    /* numpy linear median of 1..2000, by hand: 1000.5, between 1000 and 1001 */
    cr_assert_leq(fabs(med - 1000.5), rel * 1000.5, "median %.17g", med);
    double q0 = summary_quantile(s, 0, 0, NULL), q1 = summary_quantile(s, 0, 1, NULL);
    cr_assert(q0 >= 1 && q0 <= 1 + rel, "q0 %.17g", q0);
    cr_assert(q1 <= 2000 && q1 >= 2000 * (1 - rel), "q1 %.17g", q1);
    summary_free(s);
}

Test(access_columns, a_text_column_has_no_moments_and_exact_top_values)
{
    summary *s = scan_text(SMALL, NULL);
    size_t w = (size_t)column(s, "word");
    cr_assert_eq(summary_kind(s, w, 0.99), KIND_CATEGORICAL);
    cr_assert_eq(summary_numbers(s, w), 0);
    cr_assert_eq(summary_present(s, w), 5);
    cr_assert_eq(summary_non_numeric(s, w), 5);
    cr_assert(isnan(summary_mean(s, w)));
    cr_assert(isnan(summary_variance(s, w)));
    cr_assert(isnan(summary_min(s, w)) && isnan(summary_max(s, w)));
    cr_assert(isnan(summary_quantile(s, w, 0.5, NULL)));
    cr_assert(isnan(summary_quantile_error(s, w)));
    int exact = 0;
    cr_assert_eq(summary_distinct(s, w, &exact), 3);
    cr_assert(exact);
    cr_assert_not(summary_high_cardinality(s, w));
    values_entry top[5];
    cr_assert_eq(summary_top(s, w, 5, top), 3);
    cr_assert_eq(top[0].count, 3);
    cr_assert_eq(top[0].label_len, 3);
    cr_assert_eq(memcmp(top[0].label, "red", 3), 0);
    cr_assert_eq(top[1].count + top[2].count, 2);
    cr_assert_eq(summary_example_count(s, w), SUMMARY_EXAMPLES);
    cr_assert_str_eq(summary_example(s, w, 0), "red");
    summary_free(s);
}

Test(access_pairs, pairwise_complete_figures_match_the_hand_worked_table)
{
    summary *s = scan_text(SMALL, NULL);
    size_t x = (size_t)column(s, "x"), y = (size_t)column(s, "y"), w = (size_t)column(s, "word");
    cr_assert(summary_has_comoments(s));
    cr_assert_eq(summary_pair_count(s, x, y), 3);
    cr_assert_eq(summary_pair_count(s, x, x), 4);
    REL(summary_covariance(s, x, y), 10.0, 1e-14);
    REL(summary_covariance(s, y, x), 10.0, 1e-14);
    REL(summary_correlation(s, x, y), sqrt(3.0 / 7), 1e-14);
    REL(summary_pair_variance(s, x, y), 7.0 / 3, 1e-14);
    REL(summary_pair_variance(s, x, x), 5.0 / 3, 1e-14);
    /* A column with no numbers is in the matrix but pairs with nothing. */
    cr_assert_eq(summary_pair_count(s, x, w), 0);
    cr_assert(isnan(summary_correlation(s, x, w)));
    cr_assert(isnan(summary_covariance(s, x, w)));
    summary_free(s);
}

Test(access_pairs, a_column_declared_categorical_is_not_in_the_matrix)
{
    char path[] = "/tmp/sheaf-test-access-XXXXXX";
    int fd = mkstemp(path);
    cr_assert_geq(fd, 0);
    cr_assert_eq(write(fd, SMALL, strlen(SMALL)), (ssize_t)strlen(SMALL));
    close(fd);
    scan_options o;
    scan_options_defaults(&o);
    o.categorical = "y";
    summary *s = NULL;
    char err[256];
    const char *paths[] = {path};
    cr_assert_eq(scan_files(&o, paths, 1, &s, err, sizeof err), SCAN_OK, "%s", err);
    summary_options_free(&o.opt);
    unlink(path);
    size_t x = (size_t)column(s, "x"), y = (size_t)column(s, "y");
    cr_assert_eq(summary_mode(s, y), COLUMN_CATEGORICAL);
    cr_assert_not(summary_has_pairs(s, y));
    cr_assert(summary_has_pairs(s, x));
    cr_assert_eq(summary_pair_count(s, x, y), 0);
    cr_assert(isnan(summary_pair_variance(s, x, y)));
    summary_free(s);
}

/* Worked by hand: class a holds v = 1, 3 (n 2, mean 2, variance 2); class b
 * holds 2, 6, 10 (n 3, mean 6, deviations -4 0 4, variance 32/2 = 16).  The
 * column big is v + 100000000, so its frame (the first value, 100000001)
 * is subtracted inside the moments and added back by the accessors: class
 * a's mean is 100000002 with 1 in the frame. */
static const char *CLASSES = "v,big,cls\n"
                             "1,100000001,a\n"
                             "2,100000002,b\n"
                             "3,100000003,a\n"
                             "6,100000006,b\n"
                             "10,100000010,b\n";

Test(access_classes, class_table_and_per_class_moments_match_the_hand_worked_table)
{
    summary *s = scan_text(CLASSES, "cls");
    cr_assert_eq(summary_target_column(s), 2);
    cr_assert_str_eq(summary_target_name(s), "cls");
    cr_assert_eq(summary_task(s, 0.99), TASK_CLASSIFY);
    cr_assert_eq(summary_declared_task(s), TASK_AUTO);
    cr_assert(summary_classes_kept(s));
    cr_assert_not(summary_classes_dropped(s));
    cr_assert_eq(summary_class_count(s), 2);
    cr_assert_str_eq(summary_class_label(s, 0), "a");
    cr_assert_str_eq(summary_class_label(s, 1), "b");
    cr_assert_eq(summary_class_rows(s, 0), 2);
    cr_assert_eq(summary_class_rows(s, 1), 3);
    cr_assert_not(summary_class_numeric(s, 0));
    cr_assert_eq(summary_class_value(s, 0), 0);
    size_t v = (size_t)column(s, "v"), big = (size_t)column(s, "big");
    cr_assert(summary_has_class_moments(s, v));
    summary_class_stats a, b;
    cr_assert_eq(summary_class_moments(s, v, 0, &a), 0);
    cr_assert_eq(summary_class_moments(s, v, 1, &b), 0);
    cr_assert_eq(a.n, 2);
    cr_assert_eq(b.n, 3);
    REL(a.mean, 2.0, 1e-15);
    REL(a.variance, 2.0, 1e-15);
    REL(b.mean, 6.0, 1e-15);
    REL(b.variance, 16.0, 1e-15);
    REL(b.m2, 32.0, 1e-15);
    cr_assert_eq(summary_class_moments(s, big, 0, &a), 0);
    cr_assert_eq(a.mean, 100000002.0);
    /* The reference of the shift-free tests: the mean deviation of the
     * class with the largest n / variance, a (2 / 2 against b's 3 / 16),
     * 100000002 - 100000001 = 1; about it, a's mean is 0 and b's 6 - 2 = 4
     * (by hand). */
    cr_assert_eq(summary_class_reference(s, big), 1.0);
    cr_assert_eq(summary_class_mean_about(s, big, 0, 1.0), 0.0);
    cr_assert_eq(summary_class_mean_about(s, big, 1, 1.0), 4.0);
    REL(a.variance, 2.0, 1e-15);
    summary_free(s);
}

Test(access_classes, a_numeric_class_reads_as_its_value_and_no_classes_means_minus_one)
{
    summary *s = scan_text("x,k\n1,3\n2,7\n3,3\n", "k");
    cr_assert_eq(summary_class_count(s), 2);
    cr_assert(summary_class_numeric(s, 1));
    cr_assert_eq(summary_class_value(s, 1), 7);
    summary_free(s);
    s = scan_text("x,y\n1,3\n2,7\n3,3\n", NULL);
    summary_class_stats cs;
    cr_assert_not(summary_has_class_moments(s, 0));
    cr_assert_eq(summary_class_moments(s, 0, 0, &cs), -1);
    cr_assert(isnan(cs.mean) && cs.n == 0);
    cr_assert_eq(summary_class_count(s), 0);
    summary_free(s);
}

/* numpy 1.24.2, penguins.csv with empty cells as missing, from the
 * repository root with /usr/bin/python3:
 *   import csv, numpy as np
 *   rows = list(csv.reader(open("../shared/data/open/penguins.csv")))
 *   head, data = rows[0], rows[1:]
 *   def col(name):
 *       j = head.index(name)
 *       return np.array([float(r[j]) if r[j] != "" else np.nan for r in data])
 *   names = ["bill_length_mm", "bill_depth_mm", "flipper_length_mm", "body_mass_g"]
 *   X = {n: col(n) for n in names}
 *   for n in names:
 *       x = X[n][~np.isnan(X[n])]
 *       d = x - x.mean()
 *       m2, m3, m4 = (d**2).mean(), (d**3).mean(), (d**4).mean()
 *       print("%s n=%d mean=%.17g var=%.17g skew=%.17g kurt=%.17g min=%.17g max=%.17g" % (
 *           n, x.size, x.mean(), x.var(ddof=1), m3 / m2**1.5, m4 / m2**2 - 3, x.min(), x.max()))
 *   a, b = X["bill_length_mm"], X["body_mass_g"]
 *   m = ~np.isnan(a) & ~np.isnan(b)
 *   print("pair n=%d r=%.17g cov=%.17g" % (m.sum(), np.corrcoef(a[m], b[m])[0, 1],
 *                                          np.cov(a[m], b[m])[0, 1]))
 *   sp = np.array([r[0] for r in data])
 *   for s in ["Adelie", "Gentoo", "Chinstrap"]:
 *       x = X["flipper_length_mm"][(sp == s) & ~np.isnan(X["flipper_length_mm"])]
 *       print("flipper %s n=%d mean=%.17g var=%.17g rows=%d" % (
 *           s, x.size, x.mean(), x.var(ddof=1), (sp == s).sum())) */
static const struct {
    const char *name;
    uint64_t n;
    double mean, var, skew, kurt, min, max;
} PENGUINS[] = {
    {"bill_length_mm", 342, 43.921929824561403, 29.807054329371816, 0.052884808593276551,
     -0.88076458483820597, 32.1, 59.6},
    {"bill_depth_mm", 342, 17.151169590643278, 3.8998080122103889, -0.14283462620259965,
     -0.91115468632320651, 13.1, 21.5},
    {"flipper_length_mm", 342, 200.91520467836258, 197.7317916002126, 0.3441638335300089,
     -0.987434426797829, 172, 231},
    {"body_mass_g", 342, 4201.7543859649122, 643131.07732674794, 0.46826396416699201,
     -0.72624259172399785, 2700, 6300},
};

Test(access_reference, penguins_moments_match_numpy)
{
    summary *s = scan_open("penguins", NULL);
    for (size_t i = 0; i < sizeof PENGUINS / sizeof *PENGUINS; i++) {
        size_t j = (size_t)column(s, PENGUINS[i].name);
        cr_assert_eq(summary_numbers(s, j), PENGUINS[i].n);
        cr_assert_eq(summary_missing(s, j), 2);
        REL(summary_mean(s, j), PENGUINS[i].mean, 1e-14);
        REL(summary_variance(s, j), PENGUINS[i].var, 1e-12);
        REL(summary_skewness(s, j), PENGUINS[i].skew, 1e-10);
        REL(summary_kurtosis(s, j), PENGUINS[i].kurt, 1e-12);
        cr_assert_eq(summary_min(s, j), PENGUINS[i].min);
        cr_assert_eq(summary_max(s, j), PENGUINS[i].max);
    }
    size_t a = (size_t)column(s, "bill_length_mm"), b = (size_t)column(s, "body_mass_g");
    cr_assert_eq(summary_pair_count(s, a, b), 342);
    REL(summary_correlation(s, a, b), 0.59510982443763027, 1e-13);
    REL(summary_covariance(s, a, b), 2605.5919123321514, 1e-13);
    summary_free(s);
}

Test(access_reference, penguins_per_species_moments_match_numpy)
{
    summary *s = scan_open("penguins", "species");
    static const struct { const char *label; uint64_t rows, n; double mean, var; } want[] = {
        {"Adelie", 152, 151, 189.95364238410596, 42.764503311258281},
        {"Gentoo", 124, 123, 217.1869918699187, 42.05491136878581},
        {"Chinstrap", 68, 68, 195.8235294117647, 50.863915715539946},
    };
    size_t f = (size_t)column(s, "flipper_length_mm");
    cr_assert_eq(summary_class_count(s), 3);
    for (uint32_t i = 0; i < 3; i++) {
        uint32_t k = 0;
        while (k < 3 && strcmp(summary_class_label(s, k), want[i].label) != 0) k++;
        cr_assert_lt(k, 3, "no class %s", want[i].label);
        cr_assert_eq(summary_class_rows(s, k), want[i].rows);
        summary_class_stats cs;
        cr_assert_eq(summary_class_moments(s, f, k, &cs), 0);
        cr_assert_eq(cs.n, want[i].n);
        REL(cs.mean, want[i].mean, 1e-14);
        REL(cs.variance, want[i].var, 1e-12);
    }
    summary_free(s);
}

/* numpy 1.24.2, mpg.csv with '?' as missing (horsepower has 6), as above
 * with col() reading "" and "?" as NaN:
 *   h, w = col("horsepower"), col("weight")
 *   m = ~np.isnan(h) & ~np.isnan(w)
 *   print((~np.isnan(h)).sum(), m.sum(), np.corrcoef(h[m], w[m])[0, 1],
 *         np.cov(h[m], w[m])[0, 1], w[m].var(ddof=1), w[~np.isnan(w)].var(ddof=1)) */
Test(access_reference, mpg_pairwise_complete_figures_match_numpy)
{
    summary *s = scan_open("mpg", NULL);
    size_t h = (size_t)column(s, "horsepower"), w = (size_t)column(s, "weight");
    cr_assert_eq(summary_numbers(s, h), 392);
    cr_assert_eq(summary_pair_count(s, h, w), 392);
    cr_assert_eq(summary_pair_count(s, w, w), 398);
    REL(summary_correlation(s, h, w), 0.86453773757414398, 1e-13);
    REL(summary_covariance(s, h, w), 28265.620230700984, 1e-13);
    REL(summary_pair_variance(s, w, h), 721484.70900751592, 1e-13);
    REL(summary_variance(s, w), 717140.99052567629, 1e-13);
    summary_free(s);
}

/* ---- describe ---------------------------------------------------------- */

Test(describe, a_column_description_holds_the_accessor_figures)
{
    summary *s = scan_text(CLASSES, "cls");
    size_t v = (size_t)column(s, "v");
    column_description d;
    cr_assert_eq(describe_column(s, v, 0.99, 2, &d), 0);
    cr_assert_str_eq(d.name, "v");
    cr_assert_eq(d.kind, KIND_NUMERIC);
    cr_assert_eq(d.numbers, 5);
    cr_assert_eq(d.present, 5);
    REL(d.mean, 4.4, 1e-15); /* (1 + 2 + 3 + 6 + 10) / 5, by hand */
    cr_assert_eq(d.sd, sqrt(d.variance));
    cr_assert_eq(d.min, 1);
    cr_assert_eq(d.max, 10);
    cr_assert_eq(d.median, d.quantiles[3]);
    cr_assert_eq(describe_quantile_probs[3], 0.5);
    for (size_t q = 1; q < DESCRIBE_NQUANTILES; q++) cr_assert_geq(d.quantiles[q], d.quantiles[q - 1]);
    cr_assert_eq(d.distinct, 5);
    cr_assert(d.distinct_exact);
    cr_assert_eq(d.ntop, 2);
    cr_assert(d.has_by_class);
    cr_assert_eq(d.nclasses, 2);
    cr_assert_str_eq(d.by_class[1].label, "b");
    REL(d.by_class[1].variance, 16.0, 1e-15);
    describe_column_free(&d);
    cr_assert_eq(describe_class_total(s), 5);
    /* The target itself is categorical: no per-class figures. */
    cr_assert_eq(describe_column(s, 2, 0.99, 0, &d), 0);
    cr_assert_eq(d.kind, KIND_CATEGORICAL);
    cr_assert_not(d.has_by_class);
    cr_assert_eq(d.ntop, 0);
    cr_assert_null(d.top);
    describe_column_free(&d);
    summary_free(s);
}

/* ---- corr --------------------------------------------------------------- */

Test(corr, columns_are_the_numeric_ones_in_summary_order_and_names_filter_them)
{
    summary *s = scan_text(SMALL, NULL);
    size_t cols[3];
    char err[128];
    cr_assert_eq(corr_columns(s, 0.99, NULL, cols, err, sizeof err), 2);
    cr_assert_eq(cols[0], 0);
    cr_assert_eq(cols[1], 1);
    cr_assert_eq(corr_columns(s, 0.99, "y", cols, err, sizeof err), 1);
    cr_assert_eq(cols[0], 1);
    cr_assert_eq(corr_columns(s, 0.99, "y,,x,", cols, err, sizeof err), 2);
    cr_assert_eq(corr_columns(s, 0.99, "x,word", cols, err, sizeof err), -1);
    cr_assert_str_eq(err, "'word' is not a numeric column");
    summary_free(s);
}

Test(corr, matrix_entries_are_the_pairwise_accessors)
{
    summary *s = scan_text(SMALL, NULL);
    size_t cols[] = {0, 1};
    double r[4], c[4];
    uint64_t n[4];
    corr_matrix(s, cols, 2, CORR_PEARSON, r);
    corr_matrix(s, cols, 2, CORR_COVARIANCE, c);
    corr_pair_counts(s, cols, 2, n);
    REL(r[1], sqrt(3.0 / 7), 1e-14);
    cr_assert_eq(r[1], r[2]);
    REL(r[0], 1.0, 1e-15);
    REL(c[1], 10.0, 1e-14);
    REL(c[0], 5.0 / 3, 1e-14);
    REL(c[3], 875.0 / 3, 1e-14);
    cr_assert_eq(n[0], 4);
    cr_assert_eq(n[1], 3);
    cr_assert_eq(n[3], 4);
    summary_free(s);
}
