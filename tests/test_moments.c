/* moments: one-pass moments with exact decimal deviations, and their merge.
 * References: NIST StRD one-way ANOVA datasets (../shared/data/nist_anova,
 * certified within-treatment mean squares); Pébay (2008) merge formulas,
 * checked against a direct two-pass computation in long double. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <string.h>

#include "acc/moments.h"
#include "io/number.h"
#include "testutil.h"

static void add_text(moments *m, const char *s)
{
    number_decimal d;
    cr_assert_eq(number_parse(s, strlen(s), &d), NUMBER_FINITE, "parse %s", s);
    moments_set_ref(m, &d);
    double dev = number_difference(&d, &m->ref, NULL);
    moments_add_block(m, &dev, 1);
    moments_see(m, d.value);
}

/* Reads a NIST ANOVA file: certified within-treatment MS and the data. */
static int read_nist(const char *name, double *within_ms, int *treat, char (*resp)[32], int max)
{
    char path[512];
    snprintf(path, sizeof path, "%s/nist_anova/%s.dat", testutil_data_dir(), name);
    FILE *f = fopen(path, "r");
    if (!f) return -1;
    char line[256];
    int n = 0, lineno = 0;
    while (fgets(line, sizeof line, f)) {
        lineno++;
        if (strncmp(line, "Within ", 7) == 0) { /* "Within Treatment|Instrument df SS MS" */
            double df, ss, ms;
            if (sscanf(line, "Within %*s %lf %lf %lf", &df, &ss, &ms) == 3) *within_ms = ms;
        }
        if (lineno >= 61 && n < max) {
            int t;
            char r[32];
            if (sscanf(line, "%d %31s", &t, r) == 2) {
                treat[n] = t;
                strcpy(resp[n], r);
                n++;
            }
        }
    }
    fclose(f);
    return n;
}

static int treat_[20000];
static char resp_[20000][32];

static void check_within(const char *name, double digits)
{
    double certified = NAN;
    int n = read_nist(name, &certified, treat_, resp_, 20000);
    if (n < 0) cr_skip_test("NIST StRD data not found under %s", testutil_data_dir());
    moments m[16];
    for (int i = 0; i < 16; i++) moments_init(&m[i]);
    int k = 0;
    for (int i = 0; i < n; i++) {
        add_text(&m[treat_[i]], resp_[i]);
        if (treat_[i] + 1 > k) k = treat_[i] + 1;
    }
    double ss = 0;
    int groups = 0;
    for (int t = 0; t < k; t++)
        if (m[t].n) { ss += m[t].m2; groups++; }
    double ms = ss / (double)(n - groups);
    cr_assert(testutil_rel(ms, certified) < pow(10, -digits), "%s: within MS %.15g vs certified %.15g",
              name, ms, certified);
}

/* NIST StRD certified values (lines 41-47 of each file). */
Test(moments, nist_anova_within_treatment_ms_to_12_digits)
{
    const char *names[] = {"SiRstv", "SmLs01", "SmLs02", "SmLs03", "SmLs04", "SmLs05",
                           "SmLs06", "SmLs07", "SmLs08", "SmLs09", "AtmWtAg"};
    for (size_t i = 0; i < sizeof names / sizeof *names; i++) check_within(names[i], 12);
}

/* Values that share 13 leading digits lose nothing: SmLs07-like data. */
Test(moments, shared_leading_digits_cost_no_precision)
{
    moments m;
    moments_init(&m);
    const char *v[] = {"1000000000000.4", "1000000000000.3", "1000000000000.5"};
    for (int rep = 0; rep < 1000; rep++) add_text(&m, v[rep % 3]);
    /* exact: mean 1000000000000.4 (shifted deviations 0, -0.1, 0.1), var of 1000 values */
    double mean_dev = m.mean; /* deviation from first value (…0.4) */
    cr_assert(fabs(mean_dev - (-0.1 + 0.1) * 333 / 1000.0) < 1e-15);
    /* 333 x (-0.1), 333 x 0.1, 334 x 0: M2 about the mean */
    long double mu = 0, s2 = 0;
    double devs[3] = {0, -0.1, 0.1};
    for (int rep = 0; rep < 1000; rep++) mu += devs[rep % 3];
    mu /= 1000;
    for (int rep = 0; rep < 1000; rep++) s2 += (devs[rep % 3] - mu) * (devs[rep % 3] - mu);
    cr_assert(testutil_rel(m.m2, (double)s2) < 1e-13, "m2 %.17g vs %.17Lg", m.m2, s2);
}

static void direct(const double *x, size_t n, long double *mean, long double *m2, long double *m3,
                   long double *m4)
{
    long double s = 0;
    for (size_t i = 0; i < n; i++) s += x[i];
    *mean = s / n;
    *m2 = *m3 = *m4 = 0;
    for (size_t i = 0; i < n; i++) {
        long double e = x[i] - *mean;
        *m2 += e * e;
        *m3 += e * e * e;
        *m4 += e * e * e * e;
    }
}

/* Pébay (2008) merge equals the direct computation on the union, in any split. */
Test(moments, merge_equals_direct_in_any_split)
{
    enum { N = 3000 };
    static double x[N];
    uint64_t s = 88172645463325252ull;
    for (int i = 0; i < N; i++) {
        s ^= s << 13; s ^= s >> 7; s ^= s << 17;
        x[i] = (double)(s >> 11) / 9007199254740992.0 * 10 - 3 + (i % 7) * 0.5;
    }
    long double mu, m2, m3, m4;
    direct(x, N, &mu, &m2, &m3, &m4);
    size_t cuts[] = {1, 17, 256, 1500, 2999};
    for (size_t c = 0; c < sizeof cuts / sizeof *cuts; c++) {
        moments a, b;
        moments_init(&a);
        moments_init(&b);
        moments_add_block(&a, x, cuts[c]);
        moments_add_block(&b, x + cuts[c], N - cuts[c]);
        moments_merge(&b, &a); /* reverse order on purpose */
        cr_assert_eq(b.n, N);
        cr_assert(testutil_rel(b.mean, (double)mu) < 1e-13);
        cr_assert(testutil_rel(b.m2, (double)m2) < 1e-13);
        cr_assert(testutil_rel(b.m3, (double)m3) < 1e-10);
        cr_assert(testutil_rel(b.m4, (double)m4) < 1e-12);
    }
}

/* Two states with different decimal references merge through the exact
 * difference of the references. */
Test(moments, merge_across_references_is_exact)
{
    moments a, b, all;
    moments_init(&a);
    moments_init(&b);
    moments_init(&all);
    const char *va[] = {"1700000000123456", "1700000000123457", "1700000000123999"};
    const char *vb[] = {"1700000000000001", "1700000000000002"};
    for (int i = 0; i < 3; i++) { add_text(&a, va[i]); add_text(&all, va[i]); }
    for (int i = 0; i < 2; i++) { add_text(&b, vb[i]); add_text(&all, vb[i]); }
    moments_merge(&a, &b);
    cr_assert_eq(a.n, 5);
    cr_assert(testutil_rel(a.m2, all.m2) < 1e-14, "%.17g vs %.17g", a.m2, all.m2);
    cr_assert(testutil_rel(moments_mean(&a), moments_mean(&all)) < 1e-16);
    cr_assert_eq(a.min, 1700000000000001.0);
    cr_assert_eq(a.max, 1700000000123999.0);
}

Test(moments, empty_and_single_value_report_nan_spread)
{
    moments m;
    moments_init(&m);
    cr_assert(isnan(moments_mean(&m)));
    add_text(&m, "42");
    cr_assert_eq(moments_mean(&m), 42.0);
    cr_assert(isnan(moments_variance(&m)));
}

Test(moments, serialization_round_trip)
{
    moments m, r;
    moments_init(&m);
    add_text(&m, "1.5");
    add_text(&m, "2.25");
    wire_writer w;
    wire_writer_init(&w);
    moments_write(&m, &w);
    wire_reader rd;
    wire_reader_init(&rd, w.data, w.len);
    cr_assert_eq(moments_read(&r, &rd), 0);
    cr_assert_eq(memcmp(&r.n, &m.n, sizeof m.n), 0);
    cr_assert_eq(r.m2, m.m2);
    cr_assert_eq(r.ref.mantissa, m.ref.mantissa);
    wire_writer_free(&w);
}

/* moments_read refuses a state that no values could give (the invariants of
 * docs/summary-format.md, "Invariants"); each case breaks one of them in the
 * state of the values 1.5, 2.25, 4. */
static int reads_back(const moments *m)
{
    wire_writer w;
    wire_writer_init(&w);
    moments_write(m, &w);
    wire_reader rd;
    wire_reader_init(&rd, w.data, w.len);
    moments back;
    int ok = moments_read(&back, &rd) == 0 && !rd.failed;
    wire_writer_free(&w);
    return ok;
}

Test(moments, read_rejects_impossible_states)
{
    moments good;
    moments_init(&good);
    add_text(&good, "1.5");
    add_text(&good, "2.25");
    add_text(&good, "4");
    cr_assert(reads_back(&good));
    moments empty;
    moments_init(&empty);
    cr_assert(reads_back(&empty));
    struct { const char *what; moments m; } cases[8];
    for (int i = 0; i < 8; i++) cases[i].m = good;
    cases[0].what = "min above max", cases[0].m.min = 5;
    cases[1].what = "negative m2", cases[1].m.m2 = -1;
    cases[2].what = "negative m4", cases[2].m.m4 = -0.5;
    cases[3].what = "NaN mean", cases[3].m.mean = NAN;
    cases[4].what = "infinite m3", cases[4].m.m3 = INFINITY;
    cases[5].what = "mean beyond the spread", cases[5].m.mean = 100;
    cases[6].what = "frame outside [min, max]", cases[6].m.ref.value = 7;
    cases[7].what = "no frame", cases[7].m.has_ref = 0;
    for (int i = 0; i < 8; i++) cr_expect(!reads_back(&cases[i].m), "%s accepted", cases[i].what);
    moments e = empty;
    e.m2 = 1;
    cr_expect(!reads_back(&e), "an empty state with m2 accepted");
    moments one;
    moments_init(&one);
    add_text(&one, "3");
    cr_assert(reads_back(&one));
    one.m2 = 0.25;
    cr_expect(!reads_back(&one), "one value with m2 accepted");
    /* A spread of 2^200 or more may overflow the power sums: accepted. */
    moments wide = good;
    wide.min = -1e300, wide.max = 1e300, wide.m4 = INFINITY, wide.m3 = NAN;
    cr_expect(reads_back(&wide), "an overflowing state of a wide spread refused");
}
