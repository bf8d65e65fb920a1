/* drift: sheaf_drift_* of the public API (include/sheaf.h) over
 * stats/drift.h, on tables made here.
 *
 * References: the PSI and the Kolmogorov-Smirnov distance of the
 * hand-worked table (integers 1..10, each in a bucket of its own) worked by
 * hand from their definitions (the closed forms are beside the checks); the
 * exact two-sample D of the generated tables computed here from the sorted
 * raw values (the definition: the largest gap of the two empirical CDFs
 * over every value), which must lie in [ks, ks_bound]; and counts of the
 * generated cells.  Random tables come from a fixed-seed generator. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "sheaf.h"

static sheaf_summary *scan_text(const char *text, const char *const *missing, size_t nmissing)
{
    sheaf_error err;
    sheaf_options *o = sheaf_options_create(&err);
    cr_assert_not_null(o, "%s", err.message);
    cr_assert_eq(sheaf_options_set_threads(o, 1, &err), SHEAF_OK);
    if (missing) cr_assert_eq(sheaf_options_set_missing(o, missing, nmissing, &err), SHEAF_OK);
    sheaf_scan *sc = sheaf_scan_create(o, &err);
    sheaf_options_free(o);
    cr_assert_not_null(sc, "%s", err.message);
    cr_assert_eq(sheaf_scan_memory(sc, text, strlen(text), "night.csv", &err), SHEAF_OK, "%s",
                 err.message);
    sheaf_summary *s = sheaf_scan_finish(sc, &err);
    cr_assert_not_null(s, "%s", err.message);
    sheaf_scan_free(sc);
    return s;
}

/* Column `name` of a drift, or fails. */
static sheaf_drift_column column(const sheaf_drift *d, const char *name)
{
    sheaf_drift_column c;
    for (size_t i = 0; i < sheaf_drift_column_count(d); i++) {
        cr_assert_eq(sheaf_drift_column_at(d, i, &c), SHEAF_OK);
        if (!strcmp(c.name, name)) return c;
    }
    cr_assert_fail("no column %s", name);
    return c;
}

static int has_flag(const sheaf_drift_column *c, const char *flag)
{
    for (unsigned b = 0; sheaf_drift_flag_name(b); b++)
        if ((c->flags >> b & 1) && !strcmp(sheaf_drift_flag_name(b), flag)) return 1;
    return 0;
}

/* A table of integers 1..10: counts[v - 1] cells of each value v. */
static char *integers(const unsigned counts[10])
{
    size_t cap = 64 + 8 * 1000, len = 0;
    char *t = malloc(cap);
    len += (size_t)sprintf(t, "v\n");
    for (unsigned v = 1; v <= 10; v++)
        for (unsigned k = 0; k < counts[v - 1]; k++) len += (size_t)sprintf(t + len, "%u\n", v);
    return t;
}

Test(drift, psi_and_ks_of_a_hand_worked_table)
{
    const unsigned base_counts[10] = {10, 10, 10, 10, 10, 10, 10, 10, 10, 10};
    const unsigned new_counts[10] = {0, 10, 10, 10, 10, 10, 10, 10, 10, 20};
    char *a = integers(base_counts), *b = integers(new_counts);
    sheaf_summary *base = scan_text(a, NULL, 0), *next = scan_text(b, NULL, 0);
    sheaf_error err;
    sheaf_drift *d = sheaf_drift_run(base, next, NULL, &err);
    cr_assert_not_null(d, "%s", err.message);
    sheaf_drift_column c = column(d, "v");
    /* Ten bins of 10% each; the new night's bin of 1 is empty (counted as
     * half a value: 0.005) and its bin of 10 holds 20%:
     * PSI = (0.005 - 0.1) ln(0.005 / 0.1) + (0.2 - 0.1) ln 2, by hand. */
    double psi = (0.005 - 0.1) * log(0.05) + 0.1 * log(2);
    cr_assert_float_eq(c.psi, psi, 1e-12, "psi %.17g, by hand %.17g", c.psi, psi);
    /* D = 0.1 (at 1: 0.1 vs 0; at 9: 0.9 vs 0.8), reached at bucket ends. */
    cr_assert_float_eq(c.ks, 0.1, 1e-12, "ks %.17g", c.ks);
    /* Both value tables hold every number (10 of them): D exactly. */
    cr_assert_float_eq(c.ks_bound, 0.1, 1e-12, "bound %.17g", c.ks_bound);
    cr_assert(has_flag(&c, "psi") && has_flag(&c, "ks"));
    cr_assert(sheaf_drift_found(d));
    sheaf_drift_free(d);
    sheaf_summary_free(base);
    sheaf_summary_free(next);
    free(a);
    free(b);
}

static uint64_t rng_state;
static double uniform(void)
{
    rng_state = rng_state * 6364136223846793005ull + 1442695040888963407ull;
    return (double)(rng_state >> 11) * 0x1p-53;
}
static double normal(void)
{
    double u = uniform(), v = uniform();
    return sqrt(-2 * log(u > 0 ? u : 1e-300)) * cos(2 * M_PI * v);
}

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return x < y ? -1 : x > y;
}

/* The exact two-sample D of the definition: sup over every value of the
 * gap between the two empirical CDFs, from the sorted samples. */
static double exact_ks(double *x, size_t n, double *y, size_t m)
{
    qsort(x, n, sizeof *x, cmp_double);
    qsort(y, m, sizeof *y, cmp_double);
    size_t i = 0, j = 0;
    double d = 0;
    while (i < n || j < m) {
        double v = i < n && (j >= m || x[i] <= y[j]) ? x[i] : y[j];
        while (i < n && x[i] == v) i++;
        while (j < m && y[j] == v) j++;
        double g = fabs((double)i / (double)n - (double)j / (double)m);
        if (g > d) d = g;
    }
    return d;
}

/* A night of n rows: a (normal, shifted by `shift`), b (normal, unchanged),
 * c (text u, v, w and, with `appear`, z), the values of a and b kept. */
static char *night(size_t n, double shift, int appear, double *a, double *b)
{
    char *t = malloc(64 + n * 64);
    size_t len = (size_t)sprintf(t, "a,b,c\n");
    for (size_t i = 0; i < n; i++) {
        double x = 20 + 3 * normal() + shift, y = normal();
        /* The text as read back is the number sheaf sees. */
        char xs[32], ys[32];
        snprintf(xs, sizeof xs, "%.5g", x);
        snprintf(ys, sizeof ys, "%.5g", y);
        a[i] = strtod(xs, NULL);
        b[i] = strtod(ys, NULL);
        const char *cat = appear && uniform() < 0.2 ? "z" : (const char *[]){"u", "v", "w"}[i % 3];
        len += (size_t)sprintf(t + len, "%s,%s,%s\n", xs, ys, cat);
    }
    return t;
}

Test(drift, planted_shift_found_and_ks_bounds_the_exact_distance)
{
    enum { N = 4000 };
    double *a1 = malloc(N * sizeof *a1), *b1 = malloc(N * sizeof *b1);
    double *a2 = malloc(N * sizeof *a2), *b2 = malloc(N * sizeof *b2);
    rng_state = 42;
    char *t1 = night(N, 0, 0, a1, b1), *t2 = night(N, 2.4, 1, a2, b2);
    sheaf_summary *base = scan_text(t1, NULL, 0), *next = scan_text(t2, NULL, 0);
    sheaf_error err;
    sheaf_drift *d = sheaf_drift_run(base, next, NULL, &err);
    cr_assert_not_null(d, "%s", err.message);
    sheaf_drift_column a = column(d, "a"), b = column(d, "b"), c = column(d, "c");
    cr_assert(has_flag(&a, "psi") && has_flag(&a, "ks") && has_flag(&a, "mean_shift"),
              "a flags %#x", a.flags);
    cr_assert_eq(b.flags, 0, "b flags %#x (psi %g ks %g)", b.flags, b.psi, b.ks);
    cr_assert(has_flag(&c, "categories") && c.appeared == 1 && c.vanished == 0, "c %#x", c.flags);
    cr_assert(c.tv_exact && fabs(c.tv - 0.2) < 0.03, "tv %g", c.tv);
    double da = exact_ks(a1, N, a2, N), db = exact_ks(b1, N, b2, N);
    cr_assert(a.ks <= da + 1e-12 && da <= a.ks_bound + 1e-12, "a: D %.17g, [%.17g, %.17g]", da,
              a.ks, a.ks_bound);
    cr_assert(b.ks <= db + 1e-12 && db <= b.ks_bound + 1e-12, "b: D %.17g, [%.17g, %.17g]", db,
              b.ks, b.ks_bound);
    sheaf_drift_free(d);
    sheaf_summary_free(base);
    sheaf_summary_free(next);
    free(t1); free(t2); free(a1); free(b1); free(a2); free(b2);
}

Test(drift, a_summary_against_itself_is_quiet)
{
    enum { N = 2000 };
    double *x = malloc(N * sizeof *x), *y = malloc(N * sizeof *y);
    rng_state = 7;
    char *t = night(N, 0, 1, x, y);
    sheaf_summary *s = scan_text(t, NULL, 0);
    sheaf_error err;
    sheaf_drift *d = sheaf_drift_run(s, s, NULL, &err);
    cr_assert_not_null(d, "%s", err.message);
    cr_assert_not(sheaf_drift_found(d));
    cr_assert_eq(sheaf_drift_pair_count(d), 0);
    for (size_t i = 0; i < sheaf_drift_column_count(d); i++) {
        sheaf_drift_column c;
        sheaf_drift_column_at(d, i, &c);
        cr_assert_eq(c.flags, 0);
        if (!isnan(c.psi)) cr_assert(c.psi == 0 && c.ks == 0 && c.mean_shift == 0, "%s", c.name);
        if (!isnan(c.tv)) cr_assert(c.tv == 0 && c.chi2 == 0, "%s", c.name);
    }
    sheaf_drift_free(d);
    sheaf_summary_free(s);
    free(t); free(x); free(y);
}

Test(drift, columns_that_appear_vanish_or_change_kind, .timeout = 30)
{
    sheaf_summary *base = scan_text("k,gone,mode\n1,5,1\n2,6,2\n3,7,3\n", NULL, 0);
    sheaf_summary *next = scan_text("k,mode,fresh\n1,x,9\n2,y,8\n3,z,7\n", NULL, 0);
    sheaf_error err;
    sheaf_drift *d = sheaf_drift_run(base, next, NULL, &err);
    cr_assert_not_null(d, "%s", err.message);
    sheaf_summary_free(base); /* the handle holds copies of the names */
    sheaf_summary_free(next);
    sheaf_drift_column g = column(d, "gone"), f = column(d, "fresh"), m = column(d, "mode");
    cr_assert(has_flag(&g, "vanished") && g.in_base && !g.in_new);
    cr_assert(has_flag(&f, "appeared") && !f.in_base && f.in_new);
    cr_assert(has_flag(&m, "kind") && has_flag(&m, "non_numeric_share"));
    cr_assert_eq(column(d, "k").flags, 0);
    cr_assert_eq(sheaf_drift_column_count(d), 4);
    sheaf_drift_column out;
    cr_assert_eq(sheaf_drift_column_at(d, 4, &out), SHEAF_ERR_USAGE);
    cr_assert_eq(sheaf_drift_pair_at(d, 0, NULL, NULL, NULL, NULL), SHEAF_ERR_USAGE);
    cr_assert_null(sheaf_drift_flag_name(13));
    sheaf_drift_free(d);
}

Test(drift, a_pair_whose_r_moved)
{
    char *t1 = malloc(100000), *t2 = malloc(100000);
    size_t l1 = (size_t)sprintf(t1, "p,q\n"), l2 = (size_t)sprintf(t2, "p,q\n");
    rng_state = 3;
    for (int i = 0; i < 1000; i++) {
        double p = normal(), e = normal();
        l1 += (size_t)sprintf(t1 + l1, "%.6f,%.6f\n", p, 0.9 * p + 0.43589 * e);
        p = normal();
        e = normal();
        l2 += (size_t)sprintf(t2 + l2, "%.6f,%.6f\n", p, 0.43589 * p + 0.9 * e);
    }
    sheaf_summary *base = scan_text(t1, NULL, 0), *next = scan_text(t2, NULL, 0);
    sheaf_error err;
    sheaf_drift *d = sheaf_drift_run(base, next, NULL, &err);
    cr_assert_not_null(d, "%s", err.message);
    cr_assert_eq(sheaf_drift_pair_count(d), 1);
    const char *a, *b;
    double rb, rn;
    cr_assert_eq(sheaf_drift_pair_at(d, 0, &a, &b, &rb, &rn), SHEAF_OK);
    cr_assert(!strcmp(a, "p") && !strcmp(b, "q") && rb > 0.85 && rn < 0.55, "%s %s %g %g", a, b, rb, rn);
    cr_assert(sheaf_drift_found(d));
    sheaf_drift_free(d);
    sheaf_summary_free(base);
    sheaf_summary_free(next);
    free(t1);
    free(t2);
}

Test(drift, different_scan_settings_are_refused)
{
    const char *na[] = {"NA"};
    sheaf_summary *base = scan_text("x\n1\n2\n", NULL, 0), *next = scan_text("x\n1\n2\n", na, 1);
    sheaf_error err;
    cr_assert_null(sheaf_drift_run(base, next, NULL, &err));
    cr_assert_eq(err.code, SHEAF_ERR_INCOMPATIBLE);
    cr_assert(strstr(err.message, "missing-value spellings differ"), "%s", err.message);
    sheaf_drift_thresholds t;
    sheaf_drift_thresholds_default(&t);
    cr_assert(t.max_psi == 0.25 && t.max_ks == 0.1 && t.max_rank_change == 3);
    t.max_ks = 2;
    cr_assert_null(sheaf_drift_run(base, base, &t, &err));
    cr_assert_eq(err.code, SHEAF_ERR_USAGE);
    cr_assert_null(sheaf_drift_run(NULL, base, NULL, &err));
    cr_assert_eq(err.code, SHEAF_ERR_USAGE);
    sheaf_summary_free(base);
    sheaf_summary_free(next);
}
