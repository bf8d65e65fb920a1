/* Tests for validity: the expected mutual information under the
 * hypergeometric model and the adjusted mutual information, Cochran's rule,
 * the level-size rule, class separation from a bucket store, the mirror
 * rule, the one ID-like rule and the task check.
 *
 * References, beside each check:
 *  - scikit-learn 1.2.1 from Debian's python3-sklearn:
 *    sklearn.metrics.cluster._expected_mutual_info_fast.
 *    expected_mutual_information(table, n) (the expected MI of Vinh, Epps &
 *    Bailey 2010) and sklearn.metrics.adjusted_mutual_info_score(x, y,
 *    average_method='max'), run on the tables written here (the command is
 *    beside the values);
 *  - mpmath 1.2.1 (Debian's python3-mpmath) at 40 digits, summing the whole
 *    hypergeometric support around the mean, where N is large enough for
 *    scikit-learn's double-precision log-gamma differences to lose digits;
 *  - expected counts (row sum x column sum / N) and level shares worked by
 *    hand from the tables written here (the arithmetic is beside them).
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "acc/buckets.h"
#include "stats/pca.h"
#include "stats/screen.h"
#include "stats/stat.h"
#include "stats/validity.h"
#include "summary/access.h"
#include "summary/scan.h"
#include "summary/summary.h"
#include "testutil.h"

static char dir[256];

static void make_dir(void) { testutil_temp_dir(dir, sizeof dir); }
static void remove_dir(void) { testutil_remove_dir(dir); }

static void expect_rel(double got, double want, double tol, const char *what)
{
    cr_expect(testutil_rel(got, want) <= tol, "%s: %.17g, want %.17g", what, got, want);
}

/* ---- expected and adjusted mutual information ------------------------------------ */

/* The values below: /usr/bin/python3 -c '
 *   import numpy as np
 *   from sklearn.metrics.cluster._expected_mutual_info_fast import \
 *       expected_mutual_information as emi
 *   t = np.array(TABLE); print(repr(emi(t, t.sum())))'  (scikit-learn 1.2.1) */
static const struct {
    size_t rows, cols;
    double cells[18];
    double expected; /* scikit-learn expected_mutual_information */
    double adjusted; /* scikit-learn adjusted_mutual_info_score(average_method='max') */
} TABLES[] = {
    {2, 2, {3, 1, 2, 4}, 0.0612312701235952, 0.039678304024067995},
    {3, 3, {10, 2, 0, 1, 8, 3, 0, 4, 9}, 0.05895244572548989, 0.38921857529235426},
    /* six levels of one row each: every such table is what chance gives */
    {6, 2, {1, 0, 1, 0, 0, 1, 0, 1, 1, 0, 0, 1}, 0.6931471805599448, 7.073979831226773e-16},
    {3, 3, {50, 0, 0, 0, 50, 0, 0, 0, 50}, 0.01357897131165322, 1.0},
    {2, 2, {120, 80, 30, 170}, 0.001255132594054815, 0.16252207043987638},
};

Test(validity_expected_mi, matches_scikit_learn_on_small_tables)
{
    for (size_t k = 0; k < sizeof TABLES / sizeof *TABLES; k++) {
        validity_expected e;
        cr_assert_eq(validity_expected_mi(TABLES[k].cells, TABLES[k].rows, TABLES[k].cols, &e), 0);
        char what[64];
        snprintf(what, sizeof what, "table %zu: E[I]", k);
        expect_rel(e.nats, TABLES[k].expected, 1e-12, what);
        cr_expect_eq(e.approximated_cells, 0);
        stat_mutual_info mi;
        cr_assert_eq(stat_mutual_information(TABLES[k].cells, TABLES[k].rows, TABLES[k].cols, &mi), 0);
        double ami = validity_adjusted_mi(mi.nats, e.nats, mi.h_x, mi.h_y);
        snprintf(what, sizeof what, "table %zu: AMI", k);
        cr_expect(fabs(ami - TABLES[k].adjusted) <= 1e-12, "%s: %.17g, want %.17g", what, ami,
                  TABLES[k].adjusted);
    }
}

Test(validity_expected_mi, keeps_its_digits_at_ten_million_rows)
{
    /* 2 x 2, N = 10^7.  mpmath at 40 digits (the whole support within 60
     * standard deviations of the mean, from exact log-gamma):
     * 5.0000008454843305248e-8.  scikit-learn 1.2.1 gives 5.00000049e-8 here:
     * its log-gamma differences of numbers near 10^8 lose seven digits. */
    const double t[] = {2646610, 889186, 2546719, 3917485};
    validity_expected e;
    cr_assert_eq(validity_expected_mi(t, 2, 2, &e), 0);
    expect_rel(e.nats, 5.0000008454843305248e-8, 1e-12, "E[I]");
    cr_expect_eq(e.approximated_cells, 0);
}

Test(validity_expected_mi, huge_cells_take_the_second_order_expansion)
{
    /* 3 x 10, N = 10^6 (random counts, numpy default_rng(3)): the walks would
     * pass the budget, so the widest cells are approximated.  mpmath at 40
     * digits: 9.0000996718205985475e-6; the expansion errs by about 1/(6 mu)
     * in the cells it replaces. */
    const double t[] = {4468,  15606,  55928, 88006, 13962, 10287, 17450, 4088,  40235, 2712,
                        18275, 134289, 10758, 51794, 20510, 81739, 36323, 58913, 11564, 7075,
                        72,    46486,  35865, 48760, 25912, 23058, 24033, 23630, 1670,  86532};
    validity_expected e;
    cr_assert_eq(validity_expected_mi(t, 3, 10, &e), 0);
    cr_expect_gt(e.approximated_cells, 0);
    cr_expect_eq(e.cells, 30);
    expect_rel(e.nats, 9.0000996718205985475e-6, 1e-6, "E[I]");
}

Test(validity_expected_mi, empty_margins_are_skipped_and_an_empty_table_is_undefined)
{
    /* The 2 x 2 table of the first case with an empty row and column added:
     * the same E[I] (scikit-learn 1.2.1, as above). */
    const double t[] = {3, 0, 1, 0, 0, 0, 2, 0, 4};
    validity_expected e;
    cr_assert_eq(validity_expected_mi(t, 3, 3, &e), 0);
    expect_rel(e.nats, 0.0612312701235952, 1e-12, "E[I]");
    cr_expect_eq(e.cells, 4);
    const double zero[] = {0, 0, 0, 0};
    cr_expect_eq(validity_expected_mi(zero, 2, 2, &e), -1);
    cr_expect(isnan(e.nats));
}

Test(validity_adjusted_mi, is_undefined_when_both_sides_have_one_value)
{
    cr_expect(isnan(validity_adjusted_mi(0, 0, 0, 0)));
    cr_expect(isnan(validity_adjusted_mi(NAN, 0, 1, 1)));
    /* By the definition: (0.5 - 0.1) / (max(0.8, 1.2) - 0.1). */
    expect_rel(validity_adjusted_mi(0.5, 0.1, 0.8, 1.2), 0.4 / 1.1, 1e-15, "AMI");
}

/* ---- Cochran's rule and level sizes --------------------------------------------------- */

Test(validity_cochran, counts_small_expected_counts)
{
    /* Row sums 4, 6; column sums 5, 5; N 10: every expected count is 2 or 3
     * (4 x 5 / 10, 6 x 5 / 10), all below 5: fails. */
    const double small[] = {3, 1, 2, 4};
    validity_check c;
    cr_assert_eq(validity_cochran(small, 2, 2, &c), 0);
    cr_expect_eq(c.rule, VALIDITY_COCHRAN);
    cr_expect_eq(c.units, 4);
    cr_expect_eq(c.small, 4);
    expect_rel(c.small_share, 1.0, 0, "share");
    expect_rel(c.smallest, 2.0, 1e-15, "smallest");
    cr_expect_not(c.holds);
    /* Row sums 200, 200; column sums 150, 250; N 400: expected 75 and 125. */
    const double large[] = {120, 80, 30, 170};
    cr_assert_eq(validity_cochran(large, 2, 2, &c), 0);
    cr_expect_eq(c.small, 0);
    expect_rel(c.smallest, 75.0, 1e-15, "smallest");
    cr_expect(c.holds);
}

Test(validity_cochran, twenty_percent_below_five_holds_and_more_fails)
{
    /* 5 rows x 2 columns with column sums 100, 100 (N 200): row sums 8, 48,
     * 48, 48, 48 give expected 4 (8 x 100 / 200) in 2 of 10 cells = 20%: holds
     * ("more than 20%" fails).  Row sums 8, 8, 56, 64, 64 give 4 of 10 cells
     * below 5 (40%): fails. */
    const double at[] = {4, 4, 24, 24, 24, 24, 24, 24, 24, 24};
    validity_check c;
    cr_assert_eq(validity_cochran(at, 5, 2, &c), 0);
    cr_expect_eq(c.small, 2);
    expect_rel(c.small_share, 0.2, 1e-15, "share");
    cr_expect(c.holds);
    const double over[] = {4, 4, 4, 4, 28, 28, 32, 32, 32, 32};
    cr_assert_eq(validity_cochran(over, 5, 2, &c), 0);
    cr_expect_eq(c.small, 4);
    cr_expect_not(c.holds);
}

Test(validity_cochran, any_expected_count_below_one_fails)
{
    /* 10 rows of 100 and one of 2 (N 1002) against 2 columns of 501: the
     * small row's expected counts are 2 x 501 / 1002 = 1, not below 1 (2 of
     * 22 cells below 5: 9%).  With that row holding 1 row (N 1001, column sums
     * 501, 500) they are 501 / 1001 and 500 / 1001, below 1. */
    double t[22];
    for (int i = 0; i < 10; i++) { t[2 * i] = 50; t[2 * i + 1] = 50; }
    t[20] = 1;
    t[21] = 1;
    validity_check c;
    cr_assert_eq(validity_cochran(t, 11, 2, &c), 0);
    expect_rel(c.smallest, 1.0, 1e-15, "smallest");
    cr_expect(c.holds);
    t[21] = 0;
    cr_assert_eq(validity_cochran(t, 11, 2, &c), 0);
    expect_rel(c.smallest, 500.0 / 1001.0, 1e-12, "smallest");
    cr_expect_eq(c.small, 2);
    cr_expect_not(c.holds);
}

Test(validity_levels, share_of_rows_in_thin_levels)
{
    /* Levels of 100, 30, 4, 3, 0 rows: 7 of 137 rows (5.1%) in levels below 5
     * rows: holds.  Levels of 10, 2, 2, 1: 5 of 15 rows (33%): fails. */
    const double ok[] = {100, 30, 4, 3, 0};
    validity_check c;
    validity_level_sizes(ok, 5, &c);
    cr_expect_eq(c.rule, VALIDITY_LEVEL_SIZES);
    cr_expect_eq(c.units, 4);
    cr_expect_eq(c.small, 2);
    expect_rel(c.small_share, 7.0 / 137.0, 1e-15, "share");
    expect_rel(c.smallest, 3, 0, "smallest");
    cr_expect(c.holds);
    const double thin[] = {10, 2, 2, 1};
    validity_level_sizes(thin, 4, &c);
    expect_rel(c.small_share, 5.0 / 15.0, 1e-15, "share");
    cr_expect_not(c.holds);
}

/* ---- class separation and the mirror rule ---------------------------------------------- */

/* A store with n values per class: class c's values are base[c] + 0.01 i. */
static buckets *store(const double *base, uint32_t classes, int n)
{
    buckets *b = buckets_create(1024);
    cr_assert_not_null(b);
    for (uint32_t c = 0; c < classes; c++)
        for (int i = 0; i < n; i++) cr_assert_eq(buckets_add(b, base[c] + 0.01 * i, c + 1, 1), 0);
    buckets_seal(b);
    return b;
}

Test(validity_separated, every_class_apart_is_separated)
{
    /* Classes in [1, 1.19], [5, 5.19], [-3, -2.81], given out of order. */
    const double base[] = {1, 5, -3};
    buckets *b = store(base, 3, 20);
    cr_expect(validity_classes_separated(b, 3));
    buckets_free(b);
}

Test(validity_separated, one_class_apart_is_not_enough)
{
    /* Like the iris petals: class 1 in [1, 1.19] apart, classes 2 and 3
     * overlap ([5, 5.19] and [5.1, 5.29]). */
    const double base[] = {1, 5, 5.1};
    buckets *b = store(base, 3, 20);
    cr_expect_not(validity_classes_separated(b, 3));
    buckets_free(b);
}

Test(validity_separated, classes_of_fewer_than_ten_rows_are_not_judged)
{
    const double base[] = {1, 5};
    buckets *b = store(base, 2, 9);
    cr_expect_not(validity_classes_separated(b, 2));
    buckets_free(b);
    b = store(base, 2, 10);
    cr_expect(validity_classes_separated(b, 2));
    buckets_free(b);
}

Test(validity_mirror, near_one_mirrors_and_below_does_not)
{
    char why[128];
    cr_expect(validity_mirrors_target(-0.995, NAN, 0, why, sizeof why));
    cr_expect(strstr(why, "|r| = 0.9950") != NULL, "%s", why);
    cr_expect_not(validity_mirrors_target(0.98, 0.5, 0, why, sizeof why));
    cr_expect(validity_mirrors_target(NAN, 0.96, 0, why, sizeof why));
    cr_expect(strstr(why, "adjusted MI") != NULL, "%s", why);
    cr_expect(validity_mirrors_target(NAN, NAN, 1, why, sizeof why));
    cr_expect(strstr(why, "every class") != NULL, "%s", why);
}

/* ---- the ID-like rule and the task --------------------------------------------------- */

static summary *scan_text(const char *text, const char *target, target_task task)
{
    char path[512], err[512] = "";
    testutil_write_file(dir, "t.csv", text, path, sizeof path);
    scan_options o;
    scan_options_defaults(&o);
    if (target) o.opt.target = strdup(target);
    o.opt.task = task;
    scan_status st;
    summary *s = testutil_scan(path, &o, &st, err, sizeof err);
    summary_options_free(&o.opt);
    cr_assert_not_null(s, "scan: %s", err);
    return s;
}

static int id_like(const summary *s, const char *name)
{
    long c = summary_find_column(s, name);
    cr_assert_geq(c, 0);
    return validity_id_like(s, (size_t)c, summary_kind(s, (size_t)c, 0.99), 0.95);
}

Test(validity_id_like, a_run_is_id_like_at_any_size_other_distinct_integers_from_20_cells,
     .init = make_dir, .fini = remove_dir)
{
    /* 12 rows: run = 101..112 (consecutive), spread = distinct integers with
     * gaps, label = distinct texts, value = repeats. */
    char text[2048] = "run,spread,label,value\n";
    for (int i = 0; i < 12; i++)
        snprintf(text + strlen(text), sizeof text - strlen(text), "%d,%d,k%d,%d\n", 112 - i,
                 7 * i * i + 3, i, i % 4);
    summary *s = scan_text(text, NULL, TASK_AUTO);
    cr_expect(id_like(s, "run"));
    cr_expect_not(id_like(s, "spread"));
    cr_expect_not(id_like(s, "label"));
    cr_expect_not(id_like(s, "value"));
    summary_free(s);
    /* 20 rows: the share rule alone decides. */
    strcpy(text, "run,spread,label,value\n");
    for (int i = 0; i < 20; i++)
        snprintf(text + strlen(text), sizeof text - strlen(text), "%d,%d,k%d,%d\n", i, 7 * i * i + 3,
                 i, i % 4);
    s = scan_text(text, NULL, TASK_AUTO);
    cr_expect(id_like(s, "run"));
    cr_expect(id_like(s, "spread"));
    cr_expect(id_like(s, "label"));
    cr_expect_not(id_like(s, "value"));
    summary_free(s);
}

Test(validity_task, regression_on_a_text_target_is_refused, .init = make_dir, .fini = remove_dir)
{
    const char *text = "x,y\n1,red\n2,blue\n3,red\n4,green\n";
    summary *s = scan_text(text, "y", TASK_REGRESS);
    char err[256] = "";
    cr_expect_eq(validity_task_fits(s, 0.99, err, sizeof err), -1);
    cr_expect(strstr(err, "'y' is text (4 of 4 present cells are not numbers)") != NULL, "%s", err);
    summary_free(s);
    s = scan_text(text, "y", TASK_CLASSIFY);
    cr_expect_eq(validity_task_fits(s, 0.99, err, sizeof err), 0);
    summary_free(s);
    s = scan_text("x,y\n1,0.5\n2,1.5\n3,2.25\n", "y", TASK_REGRESS);
    cr_expect_eq(validity_task_fits(s, 0.99, err, sizeof err), 0);
    summary_free(s);
}

/* ---- screen and pca: one ID-like rule ------------------------------------------------- */

Test(validity_id_like, screen_and_pca_agree_on_a_twelve_row_table, .init = make_dir,
     .fini = remove_dir)
{
    /* id = 1..12 (a row counter); a, b, c numeric; count = distinct integers
     * with gaps (a measurement, not an identifier, at 12 rows).  Before one
     * rule, screen kept id (fewer than 20 cells) and pca left it out. */
    char text[2048] = "id,a,b,c,count\n";
    for (int i = 1; i <= 12; i++)
        snprintf(text + strlen(text), sizeof text - strlen(text), "%d,%d.5,%d,%d,%d\n", i,
                 i * 7 % 5, i * i % 11, i % 3, 3 * i * i + 1);
    summary *s = scan_text(text, NULL, TASK_AUTO);
    screen_options so;
    screen_options_defaults(&so);
    screen_result *r = screen_run(s, &so);
    cr_assert_not_null(r);
    pca_options po;
    pca_options_defaults(&po);
    pca_result *p;
    char err[256];
    cr_assert_eq(pca_fit(s, &po, &p, err, sizeof err), PCA_OK, "%s", err);
    for (size_t i = 0; i < r->nfeatures; i++) {
        const screen_feature *f = &r->features[i];
        const char *name = summary_name(s, f->col);
        int pca_id = 0;
        for (size_t k = 0; k < p->nleft; k++)
            pca_id |= p->left[k].column == f->col && p->left[k].reason == PCA_LEFT_ID_LIKE;
        int screen_id = (f->flags & SCREEN_ID_LIKE) != 0;
        cr_expect_eq(screen_id, pca_id, "%s: screen %d, pca %d", name, screen_id, pca_id);
        cr_expect_eq(screen_id, strcmp(name, "id") == 0, "%s: ID-like %d", name, screen_id);
    }
    pca_result_free(p);
    screen_free(r);
    summary_free(s);
}
