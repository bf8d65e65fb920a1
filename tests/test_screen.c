/* Tests for screen: flags, the test behind each p-value, Benjamini-Hochberg
 * q-values, redundancy pruning, ranking and --top, all through screen_run on
 * summaries scanned (scan_files) from small CSV files written here.
 *
 * References: F and chi-squared statistics worked by hand from the rows
 * written (the arithmetic is beside each check); their p-values from Debian's
 * scipy, with the command that gave them; q-values worked by hand from those
 * p-values with the step-up rule of Benjamini & Hochberg (1995), "Controlling
 * the false discovery rate", J. R. Statist. Soc. B 57, 289-300:
 * q_(i) = min over j >= i of min(1, p_(j) m / j).  Tables with planted
 * structure come from a fixed-seed generator (SplitMix64) in this file.
 */
#include <criterion/criterion.h>
#include <math.h>
#include <stdarg.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "stats/screen.h"
#include "summary/scan.h"
#include "summary/summary.h"
#include "testutil.h"

static char dir[256];

static void make_dir(void) { testutil_temp_dir(dir, sizeof dir); }
static void remove_dir(void) { testutil_remove_dir(dir); }

/* A growing text buffer for generated tables. */
typedef struct {
    char *text;
    size_t len, cap;
} buffer;

static void put(buffer *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
static void put(buffer *b, const char *fmt, ...)
{
    for (;;) {
        va_list ap;
        va_start(ap, fmt);
        int n = vsnprintf(b->text ? b->text + b->len : NULL, b->text ? b->cap - b->len : 0, fmt, ap);
        va_end(ap);
        cr_assert_geq(n, 0);
        if (b->text && b->len + (size_t)n < b->cap) { b->len += (size_t)n; return; }
        b->cap = (b->cap + (size_t)n + 1) * 2;
        b->text = realloc(b->text, b->cap);
        cr_assert_not_null(b->text);
    }
}

/* Uniform in [0, 1) from SplitMix64 (Steele, Lea & Flood 2014), fixed seed. */
static double uniform(uint64_t *state)
{
    uint64_t z = (*state += 0x9E3779B97F4A7C15ull);
    z = (z ^ (z >> 30)) * 0xBF58476D1CE4E5B9ull;
    z = (z ^ (z >> 27)) * 0x94D049BB133111EBull;
    z ^= z >> 31;
    return (double)(z >> 11) * 0x1p-53;
}

typedef struct {
    const char *target;    /* NULL: none */
    target_task task;      /* declared task */
    uint32_t max_levels;   /* 0: default */
} scan_setup;

static summary *scan_table(const char *text, scan_setup setup)
{
    char path[512], err[512] = "";
    testutil_write_file(dir, "table.csv", text, path, sizeof path);
    scan_options o;
    scan_options_defaults(&o);
    if (setup.target) o.opt.target = strdup(setup.target);
    o.opt.task = setup.task;
    if (setup.max_levels) o.opt.max_levels = setup.max_levels;
    scan_status st;
    summary *s = testutil_scan(path, &o, &st, err, sizeof err);
    summary_options_free(&o.opt);
    cr_assert_not_null(s, "scan: status %d: %s", (int)st, err);
    return s;
}

static screen_result *screen(const summary *s, const screen_options *o)
{
    screen_options defaults;
    screen_options_defaults(&defaults);
    screen_result *r = screen_run(s, o ? o : &defaults);
    cr_assert_not_null(r);
    return r;
}

static const screen_feature *feature(const summary *s, const screen_result *r, const char *name)
{
    for (size_t i = 0; i < r->nfeatures; i++)
        if (strcmp(s->cols[r->features[i].col].name, name) == 0) return &r->features[i];
    cr_assert_fail("no feature %s", name);
    return NULL;
}

static void expect_rel(double got, double want, double tol, const char *what)
{
    cr_expect(testutil_rel(got, want) <= tol, "%s: %.17g, want %.17g", what, got, want);
}

/* ---- flags --------------------------------------------------------------------- */

/* 100 rows, no target.  By construction:
 *   fixed    "7" everywhere                          constant
 *   mostly   "1" in 99 rows, "2" in one (99%)        near-constant (top share >= 0.99)
 *   serial   1..100                                  ID-like (integers, 100 distinct of 100)
 *   ticket   "T-0001".."T-0100"                      ID-like (text, all distinct)
 *   sparse   present in 20 rows of 100 (80 missing)  mostly missing (>= 50%)
 *   reading  (37 i mod 100) / 10 + 0.05              no flag (100 distinct, not integers)
 *   shade    "red", "green", "blue" in turn          no flag (3 levels)            */
static const char *flag_table(void)
{
    static buffer b;
    if (b.text) return b.text;
    put(&b, "fixed,mostly,serial,ticket,sparse,reading,shade\n");
    static const char *shade[] = {"red", "green", "blue"};
    for (int i = 0; i < 100; i++) {
        char sparse[32] = "";
        if (i % 5 == 0) snprintf(sparse, sizeof sparse, "%.2f", i * 0.5 + 0.25);
        put(&b, "7,%d,%d,T-%04d,%s,%.2f,%s\n", i == 42 ? 2 : 1, i + 1, i + 1, sparse,
            (37 * i % 100) / 10.0 + 0.05, shade[i % 3]);
    }
    return b.text;
}

static void expect_flags(const char *name, unsigned want)
{
    summary *s = scan_table(flag_table(), (scan_setup){0});
    screen_result *r = screen(s, NULL);
    const screen_feature *f = feature(s, r, name);
    cr_expect_eq(f->flags, want, "%s: flags %#x, want %#x (%s)", name, f->flags, want, f->reasons);
    cr_expect_eq(f->keep, want == 0, "%s: keep %d", name, f->keep);
    for (int b = 0; b < SCREEN_NFLAGS; b++)
        if (want & (1u << b))
            cr_expect(strstr(f->reasons, screen_flag_names[b]) != NULL, "%s: reasons '%s'", name,
                      f->reasons);
    if (want) cr_expect_eq(f->rank, 0);
    screen_free(r);
    summary_free(s);
}

Test(screen_flags, a_single_value_is_constant, .init = make_dir, .fini = remove_dir)
{
    expect_flags("fixed", SCREEN_CONSTANT);
}

Test(screen_flags, one_value_in_99_of_100_cells_is_near_constant, .init = make_dir,
     .fini = remove_dir)
{
    expect_flags("mostly", SCREEN_NEAR_CONSTANT);
}

Test(screen_flags, distinct_integers_in_every_row_are_id_like, .init = make_dir,
     .fini = remove_dir)
{
    expect_flags("serial", SCREEN_ID_LIKE);
}

Test(screen_flags, distinct_text_in_every_row_is_id_like, .init = make_dir, .fini = remove_dir)
{
    expect_flags("ticket", SCREEN_ID_LIKE);
}

Test(screen_flags, eighty_percent_missing_is_mostly_missing, .init = make_dir,
     .fini = remove_dir)
{
    expect_flags("sparse", SCREEN_MOSTLY_MISSING);
}

Test(screen_flags, ordinary_columns_have_no_flag_and_are_kept, .init = make_dir,
     .fini = remove_dir)
{
    expect_flags("reading", 0);
    expect_flags("shade", 0);
}

Test(screen_flags, min_variance_makes_a_small_spread_near_constant, .init = make_dir,
     .fini = remove_dir)
{
    /* reading: the values 0.05 .. 9.95 in steps of 0.1, variance about 8.4. */
    summary *s = scan_table(flag_table(), (scan_setup){0});
    screen_options o;
    screen_options_defaults(&o);
    o.min_variance = 10;
    screen_result *r = screen(s, &o);
    cr_expect_eq(feature(s, r, "reading")->flags, SCREEN_NEAR_CONSTANT);
    screen_free(r);
    o.min_variance = 5;
    r = screen(s, &o);
    cr_expect_eq(feature(s, r, "reading")->flags, 0);
    screen_free(r);
    summary_free(s);
}

Test(screen_flags, a_text_column_past_the_value_table_is_high_cardinality, .init = make_dir,
     .fini = remove_dir)
{
    /* 30 words, each in 2 of 60 rows, with 16 exact value-table entries:
     * the table overflows; 30 distinct of 60 present is not ID-like. */
    buffer b = {0};
    put(&b, "word,level\n");
    for (int i = 0; i < 60; i++) put(&b, "w%02d,%d.5\n", i % 30, i % 4);
    summary *s = scan_table(b.text, (scan_setup){.max_levels = 16});
    screen_result *r = screen(s, NULL);
    const screen_feature *f = feature(s, r, "word");
    cr_expect_eq(f->flags, SCREEN_HIGH_CARDINALITY, "flags %#x (%s)", f->flags, f->reasons);
    cr_expect_eq(f->keep, 0);
    cr_expect_eq(feature(s, r, "level")->flags, 0);
    screen_free(r);
    summary_free(s);
    free(b.text);
}

/* ---- tests and q-values ---------------------------------------------------------- */

/* Two classes of 5 rows.  Per feature, class a then class b, by hand
 * (SSB = sum n_g (mean_g - mean)^2, SSW = sum of squares within, df 1 and 8):
 *   f25  a 2..10, b 12..20  means 6, 16  SSB 250   SSW 80   F = 250 / 10   = 25
 *        (even numbers: 1..10 would be a run of consecutive integers, one per
 *        row, which the ID-like rule of stats/validity.h flags names_rows)
 *   f4   a 1..5,  b 3..7    means 3, 5   SSB 10    SSW 20   F = 10 / 2.5   = 4
 *   f1   a 1..5,  b 2..6    means 3, 4   SSB 2.5   SSW 20   F = 2.5 / 2.5  = 1
 *   f0   a 1..5,  b 5..1    means 3, 3   SSB 0     SSW 20   F = 0
 *   flat 9 everywhere: constant, so not tested and not counted in m.
 * p-values: /usr/bin/python3 -c 'import scipy.stats as s;
 *   print(s.f.sf(25,1,8), s.f.sf(4,1,8), s.f.sf(1,1,8), s.f.sf(0,1,8))'
 * (scipy 1.10, Debian 12), equal to scipy.stats.f_oneway on the same groups. */
static const double P25 = 0.0010528257933665396, P4 = 0.08051623795726266,
                    P1 = 0.3465935070873342, P0 = 1.0;

static const char ANOVA_TABLE[] =
    "f4,flat,f1,f25,f0,label\n"
    "1,9,1,2,1,a\n2,9,2,4,2,a\n3,9,3,6,3,a\n4,9,4,8,4,a\n5,9,5,10,5,a\n"
    "3,9,2,12,5,b\n4,9,3,14,4,b\n5,9,4,16,3,b\n6,9,5,18,2,b\n7,9,6,20,1,b\n";

Test(screen_tests, anova_f_and_p_of_a_numeric_feature_match_hand_and_scipy, .init = make_dir,
     .fini = remove_dir)
{
    summary *s = scan_table(ANOVA_TABLE, (scan_setup){.target = "label"});
    screen_result *r = screen(s, NULL);
    cr_assert_eq(r->task, TASK_CLASSIFY);
    static const struct { const char *name; double f, p; } want[] = {
        {"f25", 25, P25}, {"f4", 4, P4}, {"f1", 1, P1}, {"f0", 0, P0}};
    for (size_t i = 0; i < 4; i++) {
        const screen_feature *f = feature(s, r, want[i].name);
        cr_assert(f->anova_f.present, "%s: no ANOVA", want[i].name);
        cr_expect(fabs(f->anova_f.stat - want[i].f) <= 1e-12 * (1 + want[i].f), "%s: F %.17g",
                  want[i].name, f->anova_f.stat);
        cr_expect_eq(f->anova_f.df1, 1);
        cr_expect_eq(f->anova_f.df2, 8);
        expect_rel(f->anova_f.p, want[i].p, 1e-9, want[i].name);
        expect_rel(f->p, want[i].p, 1e-9, "p behind q");
    }
    screen_free(r);
    summary_free(s);
}

Test(screen_tests, benjamini_hochberg_q_values_match_the_hand_worked_step_up, .init = make_dir,
     .fini = remove_dir)
{
    /* m = 4 tested features (flat is flagged); sorted p: P25, P4, P1, P0.
     *   q(P0)  = min(1, 1.0 * 4 / 4)                          = 1
     *   q(P1)  = min(q(P0), 0.3465935070873342 * 4 / 3)        = 0.46212467611644560
     *   q(P4)  = min(q(P1), 0.08051623795726266 * 4 / 2)       = 0.16103247591452532
     *   q(P25) = min(q(P4), 0.0010528257933665396 * 4 / 1)     = 0.0042113031734661584
     * At the default level 0.05 only f25 is relevant. */
    summary *s = scan_table(ANOVA_TABLE, (scan_setup){.target = "label"});
    screen_result *r = screen(s, NULL);
    expect_rel(feature(s, r, "f25")->q, P25 * 4, 1e-9, "q f25");
    expect_rel(feature(s, r, "f4")->q, P4 * 2, 1e-9, "q f4");
    expect_rel(feature(s, r, "f1")->q, P1 * 4 / 3, 1e-9, "q f1");
    expect_rel(feature(s, r, "f0")->q, 1.0, 1e-9, "q f0");
    cr_expect(isnan(feature(s, r, "flat")->q), "flagged column has a q-value");
    cr_expect_eq(feature(s, r, "f25")->keep, 1);
    cr_expect_eq(feature(s, r, "f25")->rank, 1);
    cr_expect_eq(feature(s, r, "f4")->keep, 0);
    cr_expect(strstr(feature(s, r, "f4")->reasons, "not relevant") != NULL, "%s",
              feature(s, r, "f4")->reasons);
    cr_expect_eq(r->kept, 1);
    screen_free(r);
    /* At level 0.2, f4 (q 0.161) is relevant too and ranks second. */
    screen_options o;
    screen_options_defaults(&o);
    o.q_level = 0.2;
    r = screen(s, &o);
    cr_expect_eq(feature(s, r, "f4")->rank, 2);
    cr_expect_eq(r->kept, 2);
    screen_free(r);
    summary_free(s);
}

Test(screen_tests, chi_squared_of_a_categorical_feature_matches_hand_and_scipy,
     .init = make_dir, .fini = remove_dir)
{
    /* Levels x classes [[30, 10], [10, 30]], N = 80, every expected count 20:
     * X^2 = 4 * 10^2 / 20 = 20, df 1, Cramer's V = sqrt(20 / 80) = 0.5.
     * p: /usr/bin/python3 -c 'import scipy.stats as s;
     *   print(s.chi2_contingency([[30,10],[10,30]], correction=False)[:3])'
     * gives (20.0, 7.744216431044088e-06, 1). */
    buffer b = {0};
    put(&b, "tag,label\n");
    for (int i = 0; i < 30; i++) put(&b, "u,a\nv,b\n");
    for (int i = 0; i < 10; i++) put(&b, "u,b\nv,a\n");
    summary *s = scan_table(b.text, (scan_setup){.target = "label"});
    screen_result *r = screen(s, NULL);
    const screen_feature *f = feature(s, r, "tag");
    cr_assert(f->chi2.present);
    expect_rel(f->chi2.stat, 20, 1e-12, "X^2");
    cr_expect_eq(f->chi2.df1, 1);
    expect_rel(f->chi2.p, 7.744216431044088e-06, 1e-9, "chi-squared p");
    expect_rel(f->chi2.extra, 0.5, 1e-12, "Cramer's V");
    expect_rel(f->p, 7.744216431044088e-06, 1e-9, "p behind q");
    cr_expect_eq(f->keep, 1);
    screen_free(r);
    summary_free(s);
    free(b.text);
}

Test(screen_tests, correlation_f_of_a_regression_feature_matches_scipy, .init = make_dir,
     .fini = remove_dir)
{
    /* x = 2, 4 .. 20 (even: 1..10 would be ID-like, a run of consecutive
     * integers), y = 2,1,4,3,6,5,8,7,10,9 (declared a regression target).
     * /usr/bin/python3 -c 'import scipy.stats as s;
     *   print(s.pearsonr(range(1,11), [2,1,4,3,6,5,8,7,10,9]))'
     * gives r = 0.9393939393939393 (= 31/33 by hand: Sxy = 82.5 - 5, Sxx = Syy =
     * 82.5; r does not change when x is doubled), p = 5.484052998513635e-05;
     * F = r^2 (n - 2) / (1 - r^2) = 60.0625. */
    summary *s = scan_table("x,y\n2,2\n4,1\n6,4\n8,3\n10,6\n12,5\n14,8\n16,7\n18,10\n20,9\n",
                            (scan_setup){.target = "y", .task = TASK_REGRESS});
    screen_result *r = screen(s, NULL);
    cr_assert_eq(r->task, TASK_REGRESS);
    const screen_feature *f = feature(s, r, "x");
    cr_assert(f->corr_f.present);
    expect_rel(f->corr_f.extra, 31.0 / 33.0, 1e-12, "r");
    expect_rel(f->corr_f.stat, 60.0625, 1e-10, "F");
    expect_rel(f->corr_f.p, 5.484052998513635e-05, 1e-9, "p");
    screen_free(r);
    summary_free(s);
}

/* ---- ranking, redundancy, --top ------------------------------------------------ */

/* 300 rows, continuous target y ~ U(0, 10) (regression: not integers).  In
 * file order: noise ~ U(0, 10) independent of y; weak = y + U(-20, 20);
 * strong = 2 y + U(-4, 4) (r about 0.96: below the 0.99 at which a column
 * mirrors the target); code = one of four letters, independent of y. */
static char *planted_table(void)
{
    buffer b = {0};
    uint64_t seed = 20240611;
    put(&b, "noise,weak,code,strong,y\n");
    for (int i = 0; i < 300; i++) {
        double y = 10 * uniform(&seed);
        double noise = 10 * uniform(&seed);
        double weak = y + 40 * (uniform(&seed) - 0.5);
        double strong = 2 * y + 8 * (uniform(&seed) - 0.5);
        char code = "ABCD"[(int)(4 * uniform(&seed))];
        put(&b, "%.4f,%.4f,%c,%.4f,%.4f\n", noise, weak, code, strong, y);
    }
    return b.text;
}

Test(screen_ranking, a_planted_strong_column_is_kept_and_ranked_first, .init = make_dir,
     .fini = remove_dir)
{
    char *text = planted_table();
    summary *s = scan_table(text, (scan_setup){.target = "y"});
    screen_result *r = screen(s, NULL);
    cr_assert_eq(r->task, TASK_REGRESS);
    const screen_feature *strong = feature(s, r, "strong");
    cr_expect_eq(strong->keep, 1, "%s", strong->reasons);
    cr_expect_eq(strong->rank, 1);
    cr_expect_gt(strong->corr_f.extra, 0.9); /* r of 2y + U(-4,4) with y: about 0.96 */
    for (size_t i = 0; i < r->nfeatures; i++)
        if (&r->features[i] != strong)
            cr_expect(r->features[i].q > strong->q, "%s: q %g not above strong's %g",
                      s->cols[r->features[i].col].name, r->features[i].q, strong->q);
    const screen_feature *noise = feature(s, r, "noise");
    cr_expect_eq(noise->keep, 0, "noise kept: %s", noise->reasons);
    screen_free(r);
    /* Ranked by normalized mutual information, strong still comes first. */
    screen_options o;
    screen_options_defaults(&o);
    o.rank_by = RANK_MI;
    r = screen(s, &o);
    cr_expect_eq(feature(s, r, "strong")->rank, 1);
    screen_free(r);
    summary_free(s);
    free(text);
}

Test(screen_ranking, top_keeps_only_the_k_most_relevant, .init = make_dir, .fini = remove_dir)
{
    char *text = planted_table();
    summary *s = scan_table(text, (scan_setup){.target = "y"});
    screen_options o;
    screen_options_defaults(&o);
    o.q_level = 1.01; /* every tested column relevant */
    screen_result *all = screen(s, &o);
    cr_assert_geq(all->kept, 3);
    o.top = 1;
    screen_result *r = screen(s, &o);
    cr_expect_eq(r->kept, 1);
    cr_expect_eq(feature(s, r, "strong")->rank, 1);
    size_t beyond = 0;
    for (size_t i = 0; i < r->nfeatures; i++) {
        const screen_feature *f = &r->features[i];
        if (f->keep) cr_expect_eq(f->rank, 1);
        else cr_expect_eq(f->rank, 0);
        beyond += strstr(f->reasons, "beyond the first 1 kept") != NULL;
    }
    cr_expect_eq(beyond, all->kept - 1);
    screen_free(r);
    o.top = 2;
    r = screen(s, &o);
    cr_expect_eq(r->kept, 2);
    for (size_t i = 0; i < r->nfeatures; i++) /* the same two as the first two ranks */
        cr_expect_eq(r->features[i].rank, all->features[i].rank <= 2 ? all->features[i].rank : 0);
    screen_free(r);
    screen_free(all);
    summary_free(s);
    free(text);
}

/* 200 rows, target y = 1.5 i + 0.25.  close = y + U(-30, 30) (r with y about
 * 0.98, below the 0.99 at which a column mirrors the target); blurred =
 * close + U(-15, 15), listed first in the file: r(close, blurred) about 0.995
 * >= 0.95, and blurred is the less relevant of the two. */
static char *redundant_table(void)
{
    buffer b = {0};
    uint64_t seed = 77;
    put(&b, "blurred,close,other,y\n");
    for (int i = 0; i < 200; i++) {
        double y = 1.5 * i + 0.25;
        double close = y + 60 * (uniform(&seed) - 0.5);
        double blurred = close + 30 * (uniform(&seed) - 0.5);
        double other = (i % 7) * 3.5 + 0.5 * (i % 2) + 40 * uniform(&seed);
        put(&b, "%.4f,%.4f,%.4f,%.2f\n", blurred, close, other, y);
    }
    return b.text;
}

Test(screen_ranking, redundancy_keeps_the_more_relevant_member_of_a_correlated_pair,
     .init = make_dir, .fini = remove_dir)
{
    char *text = redundant_table();
    summary *s = scan_table(text, (scan_setup){.target = "y"});
    screen_result *r = screen(s, NULL);
    cr_assert_eq(r->task, TASK_REGRESS);
    const screen_feature *close = feature(s, r, "close"), *blurred = feature(s, r, "blurred");
    cr_expect_lt(close->q, blurred->q, "close is the more relevant by construction");
    cr_expect_eq(close->keep, 1, "%s", close->reasons);
    cr_expect_eq(close->rank, 1);
    cr_expect_eq(blurred->keep, 0);
    cr_expect(strstr(blurred->reasons, "redundant with close") != NULL, "%s", blurred->reasons);
    cr_expect_eq(r->npairs, 1);
    if (r->npairs == 1) {
        const screen_pair *p = &r->pairs[0];
        cr_expect_eq(&r->features[p->a], close);
        cr_expect_eq(&r->features[p->b], blurred);
        cr_expect_geq(fabs(p->r), 0.95);
    }
    screen_free(r);
    /* Above the pair's |r| the threshold keeps both. */
    screen_options o;
    screen_options_defaults(&o);
    o.redundancy = 0.9999;
    r = screen(s, &o);
    cr_expect_eq(feature(s, r, "blurred")->keep, 1, "%s", feature(s, r, "blurred")->reasons);
    cr_expect_eq(r->npairs, 0);
    screen_free(r);
    summary_free(s);
    free(text);
}

Test(screen_ranking, without_a_target_nothing_is_tested_and_unflagged_columns_are_kept,
     .init = make_dir, .fini = remove_dir)
{
    summary *s = scan_table(flag_table(), (scan_setup){0});
    screen_result *r = screen(s, NULL);
    cr_expect_eq(r->task, TASK_AUTO);
    cr_expect_eq(r->nfeatures, s->ncols);
    for (size_t i = 0; i < r->nfeatures; i++) {
        const screen_feature *f = &r->features[i];
        cr_expect(isnan(f->q) && isnan(f->p), "%s: p %g q %g", s->cols[f->col].name, f->p, f->q);
        cr_expect(!f->anova_f.present && !f->corr_f.present && !f->chi2.present);
    }
    cr_expect_eq(r->kept, 2); /* reading, shade */
    screen_free(r);
    summary_free(s);
}

/* ---- validity: unreliable tests, columns that mirror the target -------------------------- */

/* 60 rows, class target "yes"/"no" in turn.  shop: 30 levels of 2 rows, each
 * level holding one class only (chi-squared 60 on 29 df, p about 6e-4, but
 * every expected count is 1: Cochran's rule fails); tier: 3 levels of 20
 * rows against the class (expected counts 10, rule holds); gauge: numeric,
 * the "yes" rows in [10, 10.29], the "no" rows in [20, 20.29] (every class
 * apart: mirrors the target); hum: numeric noise. */
static char *validity_table(void)
{
    buffer b = {0};
    uint64_t seed = 4242;
    put(&b, "shop,tier,gauge,hum,label\n");
    for (int i = 0; i < 60; i++) {
        int yes = i % 2 == 0;
        put(&b, "s%02d,%c,%.2f,%.4f,%s\n", (i / 4) * 2 + yes, "ABC"[(i / 2) % 3],
            (yes ? 10 : 20) + 0.01 * (i / 2), uniform(&seed), yes ? "yes" : "no");
    }
    return b.text;
}

Test(screen_validity, a_chi_squared_failing_cochrans_rule_has_no_q_and_keeps_nothing,
     .init = make_dir, .fini = remove_dir)
{
    char *text = validity_table();
    summary *s = scan_table(text, (scan_setup){.target = "label"});
    screen_result *r = screen(s, NULL);
    const screen_feature *shop = feature(s, r, "shop"), *tier = feature(s, r, "tier");
    cr_assert(shop->chi2.present);
    /* 30 levels x 2 classes, every expected count 2 x 30 / 60 = 1 (by hand). */
    cr_expect_eq(shop->chi2_check.rule, VALIDITY_COCHRAN);
    cr_expect_eq(shop->chi2_check.units, 60);
    cr_expect_eq(shop->chi2_check.small, 60);
    cr_expect_not(shop->chi2_check.holds);
    cr_expect(shop->chi2.p < 0.05, "p %g: the test alone would keep shop", shop->chi2.p);
    cr_expect(shop->unreliable);
    cr_expect(isnan(shop->q));
    cr_expect_eq(shop->keep, 0);
    cr_expect(strstr(shop->reasons, "Cochran") != NULL, "%s", shop->reasons);
    /* tier: expected counts 20 x 30 / 60 = 10: the rule holds. */
    cr_expect(tier->chi2_check.holds);
    cr_expect_not(tier->unreliable);
    cr_expect_not(isnan(tier->q));
    screen_free(r);
    summary_free(s);
    free(text);
}

Test(screen_validity, a_column_whose_classes_lie_apart_mirrors_the_target, .init = make_dir,
     .fini = remove_dir)
{
    char *text = validity_table();
    summary *s = scan_table(text, (scan_setup){.target = "label"});
    screen_result *r = screen(s, NULL);
    const screen_feature *gauge = feature(s, r, "gauge");
    cr_expect_eq(gauge->flags, SCREEN_MIRRORS_TARGET, "flags %#x (%s)", gauge->flags, gauge->reasons);
    cr_expect(gauge->anova_f.present, "tested before it was flagged");
    cr_expect_eq(gauge->keep, 0);
    cr_expect(strstr(gauge->reasons, "mirrors_target") != NULL, "%s", gauge->reasons);
    cr_expect_eq(feature(s, r, "hum")->flags, 0);
    screen_free(r);
    /* --keep-mirrors keeps it (relevant), still flagged. */
    screen_options o;
    screen_options_defaults(&o);
    o.keep_mirrors = 1;
    r = screen(s, &o);
    gauge = feature(s, r, "gauge");
    cr_expect_eq(gauge->keep, 1, "%s", gauge->reasons);
    cr_expect_eq(gauge->rank, 1);
    cr_expect(gauge->flags & SCREEN_MIRRORS_TARGET);
    screen_free(r);
    summary_free(s);
    free(text);
}

Test(screen_validity, a_near_copy_of_a_numeric_target_mirrors_it, .init = make_dir,
     .fini = remove_dir)
{
    /* 200 rows, y ~ U(0, 10); copy = 100 y + U(-1, 1) (r about 0.99998);
     * weak = y + U(-20, 20). */
    buffer b = {0};
    uint64_t seed = 99;
    put(&b, "copy,weak,y\n");
    for (int i = 0; i < 200; i++) {
        double y = 10 * uniform(&seed);
        put(&b, "%.4f,%.4f,%.4f\n", 100 * y + 2 * (uniform(&seed) - 0.5),
            y + 40 * (uniform(&seed) - 0.5), y);
    }
    summary *s = scan_table(b.text, (scan_setup){.target = "y"});
    screen_result *r = screen(s, NULL);
    cr_assert_eq(r->task, TASK_REGRESS);
    const screen_feature *copy = feature(s, r, "copy");
    cr_expect_gt(copy->corr_f.extra, 0.99);
    cr_expect_eq(copy->flags, SCREEN_MIRRORS_TARGET, "%s", copy->reasons);
    cr_expect_eq(copy->keep, 0);
    cr_expect(strstr(copy->reasons, "|r| = ") != NULL, "%s", copy->reasons);
    cr_expect_eq(feature(s, r, "weak")->flags, 0);
    screen_free(r);
    summary_free(s);
    free(b.text);
}

Test(screen_validity, an_anova_across_levels_of_mostly_one_row_has_no_q, .init = make_dir,
     .fini = remove_dir)
{
    /* 60 rows, y = 1.5 i + noise (regression): model = 50 levels, 10 of 2
     * rows and 40 of one row (all 60 rows in levels below 5 rows: the
     * level-size rule fails); half = 2 levels of 30 rows (holds). */
    buffer b = {0};
    uint64_t seed = 5;
    put(&b, "model,half,y\n");
    for (int i = 0; i < 60; i++)
        put(&b, "m%02d,%s,%.3f\n", i < 20 ? i / 2 : i - 10, i < 30 ? "lo" : "hi",
            1.5 * i + uniform(&seed));
    summary *s = scan_table(b.text, (scan_setup){.target = "y"});
    screen_result *r = screen(s, NULL);
    cr_assert_eq(r->task, TASK_REGRESS);
    const screen_feature *model = feature(s, r, "model"), *half = feature(s, r, "half");
    cr_assert(model->anova_f.present);
    cr_expect_eq(model->anova_check.rule, VALIDITY_LEVEL_SIZES);
    cr_expect_eq(model->anova_check.units, 50);
    cr_expect_eq(model->anova_check.small, 50);
    expect_rel(model->anova_check.small_share, 1.0, 0, "rows in thin levels");
    cr_expect(model->unreliable);
    cr_expect(isnan(model->q));
    cr_expect_eq(model->keep, 0);
    cr_expect(half->anova_check.holds);
    cr_expect_eq(half->keep, 1, "%s", half->reasons);
    screen_free(r);
    summary_free(s);
    free(b.text);
}

/* 3,000 rows, two classes a and b in turn.  sharp ~ N(0, 1) in a and N(6, 1)
 * in b (Box-Muller from the generator); boxed ~ U(0, 1) in a and U(1, 2) in
 * b: perfectly separated, so its normalized MI is 1, above sharp's, while its
 * F is about a third of sharp's.  Both p-values are far below 1e-308. */
static char *separated_table(void)
{
    buffer b = {0};
    uint64_t seed = 20241203;
    put(&b, "sharp,boxed,class\n");
    for (int i = 0; i < 3000; i++) {
        int g = i % 2;
        double u1 = uniform(&seed), u2 = uniform(&seed);
        double z = sqrt(-2 * log(1 - u1)) * cos(2 * M_PI * u2);
        put(&b, "%.5f,%.5f,%c\n", 6 * g + z, g + uniform(&seed), "ab"[g]);
    }
    return b.text;
}

Test(screen_ranking, p_values_below_the_double_range_rank_by_log10_q, .init = make_dir,
     .fini = remove_dir)
{
    char *text = separated_table();
    summary *s = scan_table(text, (scan_setup){.target = "class"});
    screen_options o;
    screen_options_defaults(&o);
    o.keep_mirrors = 1; /* both columns mirror the target (boxed: classes apart) */
    screen_result *r = screen(s, &o);
    const screen_feature *sharp = feature(s, r, "sharp"), *boxed = feature(s, r, "boxed");
    for (int i = 0; i < 2; i++) {
        const screen_feature *f = i ? boxed : sharp;
        cr_expect(f->p == 0 && f->q == 0 && f->anova_f.p_below, "p %g q %g", f->p, f->q);
        cr_expect(isfinite(f->log10_p) && f->log10_p < -308, "log10 p %g", f->log10_p);
        cr_expect_eq(f->log10_p, f->anova_f.log10_p);
        cr_expect(strstr(f->reasons, "relevant (q = ") && strstr(f->reasons, "e-") &&
                      !strchr(f->reasons, '<'),
                  "%s", f->reasons);
    }
    cr_expect_lt(sharp->log10_p, boxed->log10_p - 100, "sharp's p is the smaller by far");
    cr_expect_gt(boxed->mi.normalized, sharp->mi.normalized, "boxed's MI is the larger");
    cr_expect_gt(boxed->mi.adjusted, sharp->mi.adjusted, "boxed's adjusted MI is the larger");
    /* Worked by hand, Benjamini-Hochberg with m = 2: q_(1) = p_(1) 2 / 1,
     * q_(2) = p_(2) (both far below the larger's q_(1)). */
    cr_expect(fabs(sharp->log10_q - (sharp->log10_p + log10(2.0))) < 1e-9);
    cr_expect_eq(boxed->log10_q, boxed->log10_p);
    /* Ranked by log10 q: sharp first, though adjusted MI (the tie-break when
     * both p-values were 0) puts boxed first. */
    cr_expect_eq(sharp->rank, 1);
    cr_expect_eq(boxed->rank, 2);
    screen_free(r);
    summary_free(s);
    free(text);
}
