/* pairsum: exact sums of a column paired with the target.
 *
 * References: sums worked by hand in the comments beside them; the NIST
 * StRD linear regression dataset Norris (../shared/data/nist_linregress,
 * certified F statistic 5436385.54079785 of its analysis of variance table);
 * and the state's own bytes, which must not depend on the order of the
 * pairs, the blocks or the merges (the sums are exact integers).  Random
 * inputs come from a fixed-seed xorshift64 generator.
 */
#include <criterion/criterion.h>

#include <math.h>
#include <stdio.h>
#include <string.h>

#include "acc/pairsum.h"
#include "io/number.h"
#include "testutil.h"

/* A decimal's signed mantissa and power of ten, as the scan passes them. */
typedef struct {
    int64_t m;
    int32_t e;
} cell;

static cell cell_of(const char *s)
{
    number_decimal d;
    cr_assert_eq(number_parse(s, strlen(s), &d), NUMBER_FINITE, "%s", s);
    int whole = d.exact && (d.mantissa >> 63) == 0;
    int64_t m = whole ? (int64_t)d.mantissa : 0;
    return (cell){d.negative ? -m : m, whole ? d.exp10 : PAIRSUM_INEXACT};
}

/* Adds pairs (x[i], y[i]) in blocks of `block` (rows = indices). */
static void add_pairs(pairsum *p, const cell *x, const cell *y, size_t n, size_t block)
{
    int64_t mx[256], my[256];
    int32_t ex[256], ey[256];
    uint16_t at[256];
    for (size_t i = 0; i < n; i += block) {
        size_t k = n - i < block ? n - i : block;
        for (size_t j = 0; j < k; j++) {
            mx[j] = x[i + j].m, ex[j] = x[i + j].e;
            my[j] = y[i + j].m, ey[j] = y[i + j].e;
            at[j] = (uint16_t)j;
        }
        pairsum_add_many(p, mx, ex, my, ey, at, k);
    }
}

static int wide_is(const pairsum_wide *w, int64_t v)
{
    uint64_t ext = v < 0 ? UINT64_MAX : 0;
    return w->w[0] == (uint64_t)v && w->w[1] == ext && w->w[2] == ext && w->w[3] == ext;
}

/* The bytes of a state. */
static size_t bytes_of(const pairsum *p, uint8_t *out, size_t cap)
{
    wire_writer w;
    wire_writer_init(&w);
    pairsum_write(p, &w);
    cr_assert_not(w.failed);
    cr_assert_leq(w.len, cap);
    memcpy(out, w.data, w.len);
    size_t n = w.len;
    wire_writer_free(&w);
    return n;
}

Test(pairsum, sums_are_the_cells_as_integers_at_the_finest_scale)
{
    /* x: 1.5, 2.25, -3  -> scale -2: 150, 225, -300
     * y: 2, -1, 0.5     -> scale -1: 20, -10, 5
     * By hand: Sx = 75, Sy = 15, Sxx = 22500 + 50625 + 90000 = 163125,
     * Syy = 400 + 100 + 25 = 525, Sxy = 3000 - 2250 - 1500 = -750. */
    const char *xs[] = {"1.5", "2.25", "-3"}, *ys[] = {"2", "-1", "0.5"};
    cell x[3], y[3];
    for (int i = 0; i < 3; i++) x[i] = cell_of(xs[i]), y[i] = cell_of(ys[i]);
    pairsum p;
    pairsum_init(&p);
    add_pairs(&p, x, y, 3, 1);
    cr_assert(p.exact);
    cr_assert_eq(p.n, 3);
    cr_assert_eq(p.scale_x, -2);
    cr_assert_eq(p.scale_y, -1);
    cr_assert(wide_is(&p.sx, 75) && wide_is(&p.sy, 15));
    cr_assert(wide_is(&p.sxx, 163125) && wide_is(&p.syy, 525) && wide_is(&p.sxy, -750));
    /* Absent targets are not pairs. */
    int64_t mx[2] = {7, 8}, my[2] = {0, 0};
    int32_t ex[2] = {0, 0}, ey[2] = {PAIRSUM_NONE, PAIRSUM_NONE};
    uint16_t at[2] = {0, 1};
    pairsum_add_many(&p, mx, ex, my, ey, at, 2);
    cr_assert_eq(p.n, 3);
}

Test(pairsum, order_blocks_and_merges_give_the_same_bytes)
{
    enum { N = 3000 };
    static cell x[N], y[N];
    uint64_t s = 0x9e3779b97f4a7c15ull;
    for (size_t i = 0; i < N; i++) {
        s ^= s << 13, s ^= s >> 7, s ^= s << 17;
        char bx[48], by[48];
        /* decimals of 0 to 4 places, some of 17 digits, both signs */
        int px = (int)(s % 5), py = (int)((s >> 8) % 4);
        long long ix = (long long)((s >> 16) % 2000000) - 1000000;
        if (i % 97 == 0) ix *= 100000000ll; /* past 2^55 at the finest scale: the slow path */
        snprintf(bx, sizeof bx, "%lld.%0*d", ix, px ? px : 1, (int)(s >> 40) % 10);
        if (!px) snprintf(bx, sizeof bx, "%lld", ix);
        snprintf(by, sizeof by, "%lld%s%.*s", (long long)((s >> 20) % 5000) - 2500, py ? "." : "",
                 py, "3141");
        x[i] = cell_of(bx);
        y[i] = cell_of(by);
    }
    uint8_t want[512], got[512];
    pairsum whole;
    pairsum_init(&whole);
    add_pairs(&whole, x, y, N, 256);
    cr_assert(whole.exact);
    size_t wn = bytes_of(&whole, want, sizeof want);
    /* blocks of 1, 7 and 200 */
    static const size_t blocks[] = {1, 7, 200};
    for (size_t b = 0; b < 3; b++) {
        pairsum p;
        pairsum_init(&p);
        add_pairs(&p, x, y, N, blocks[b]);
        cr_assert_eq(bytes_of(&p, got, sizeof got), wn);
        cr_assert(memcmp(got, want, wn) == 0, "block %zu", blocks[b]);
    }
    /* reversed order */
    static cell rx[N], ry[N];
    for (size_t i = 0; i < N; i++) rx[i] = x[N - 1 - i], ry[i] = y[N - 1 - i];
    pairsum r;
    pairsum_init(&r);
    add_pairs(&r, rx, ry, N, 256);
    cr_assert(memcmp(got, want, bytes_of(&r, got, sizeof got)) == 0);
    /* three parts merged in another order */
    pairsum a, c, d;
    pairsum_init(&a), pairsum_init(&c), pairsum_init(&d);
    add_pairs(&a, x, y, 1000, 256);
    add_pairs(&c, x + 1000, y + 1000, 1500, 256);
    add_pairs(&d, x + 2500, y + 2500, 500, 256);
    pairsum_merge(&d, &a);
    pairsum_merge(&d, &c);
    cr_assert_eq(bytes_of(&d, got, sizeof got), wn);
    cr_assert(memcmp(got, want, wn) == 0);
}

Test(pairsum, norris_f_to_13_digits_of_the_certified_value)
{
    char path[1024];
    snprintf(path, sizeof path, "%s/nist_linregress/Norris.dat", testutil_data_dir());
    FILE *f = fopen(path, "r");
    if (!f) cr_skip_test("%s not found", path);
    char line[256];
    cell x[64], y[64];
    size_t n = 0;
    for (int k = 1; fgets(line, sizeof line, f); k++) {
        if (k < 61 || n == 64) continue; /* the data, lines 61-96: y x */
        char a[64], b[64];
        if (sscanf(line, "%63s %63s", a, b) != 2) continue;
        y[n] = cell_of(a);
        x[n] = cell_of(b);
        n++;
    }
    fclose(f);
    cr_assert_eq(n, 36);
    pairsum p;
    pairsum_init(&p);
    add_pairs(&p, x, y, n, 256);
    double r, F, nn;
    cr_assert_eq(pairsum_fit(&p, &r, &F, &nn), 0);
    cr_assert_eq(nn, 36);
    /* NIST StRD certified F (15 significant digits); R^2 0.999993745883712 */
    double want = 5436385.54079785;
    cr_assert_leq(fabs(F - want) / want, 1e-13, "F %.17g, certified %.15g", F, want);
    cr_assert_leq(fabs(r * r - 0.999993745883712), 1e-15, "r^2 %.17g", r * r);
}

Test(pairsum, a_perfect_fit_gives_an_infinite_f_and_constants_no_fit)
{
    const char *xs[] = {"1", "2", "3", "4.5"}, *ys[] = {"0.3", "0.5", "0.7", "1"};
    cell x[4], y[4];
    for (int i = 0; i < 4; i++) x[i] = cell_of(xs[i]), y[i] = cell_of(ys[i]); /* y = 0.2 x + 0.1 */
    pairsum p;
    pairsum_init(&p);
    add_pairs(&p, x, y, 4, 256);
    double r, F, n;
    cr_assert_eq(pairsum_fit(&p, &r, &F, &n), 0);
    cr_assert(isinf(F) && F > 0 && r == 1);
    for (int i = 0; i < 4; i++) y[i] = cell_of("7");
    pairsum_init(&p);
    add_pairs(&p, x, y, 4, 256);
    cr_assert_eq(pairsum_fit(&p, &r, &F, &n), 1); /* exactly constant: r undefined */
    cr_assert(isnan(F) && isnan(r));
}

Test(pairsum, an_inexact_cell_or_huge_values_make_the_state_inexact_for_good)
{
    cell x[3] = {cell_of("1"), cell_of("1.00000000000000000000000000000000000000001"), cell_of("2")};
    cell y[3] = {cell_of("1"), cell_of("2"), cell_of("3")};
    cr_assert_eq(x[1].e, PAIRSUM_INEXACT); /* more than 19 digits */
    pairsum p;
    pairsum_init(&p);
    add_pairs(&p, x, y, 3, 256);
    cr_assert_not(p.exact);
    cr_assert_eq(p.n, 0);
    double r, F, n;
    cr_assert_eq(pairsum_fit(&p, &r, &F, &n), -1);
    /* 1e-60 and 1e60 at one scale: X = 10^120 > 2^100 */
    cell big[2] = {cell_of("1e-60"), cell_of("1e60")}, one[2] = {cell_of("1"), cell_of("2")};
    pairsum_init(&p);
    add_pairs(&p, big, one, 2, 256);
    cr_assert_not(p.exact);
    /* merging an inexact state makes the result inexact */
    pairsum a, b;
    pairsum_init(&a);
    add_pairs(&a, y, y, 3, 256);
    pairsum_init(&b);
    add_pairs(&b, x, y, 3, 256);
    pairsum_merge(&a, &b);
    cr_assert_not(a.exact);
    cr_assert_eq(a.n, 0);
}

Test(pairsum, reading_refuses_impossible_sums)
{
    const char *xs[] = {"1", "2", "4"}, *ys[] = {"1", "3", "2"};
    cell x[3], y[3];
    for (int i = 0; i < 3; i++) x[i] = cell_of(xs[i]), y[i] = cell_of(ys[i]);
    pairsum p, q;
    pairsum_init(&p);
    add_pairs(&p, x, y, 3, 256);
    uint8_t buf[512];
    size_t len = bytes_of(&p, buf, sizeof buf);
    wire_reader r;
    wire_reader_init(&r, buf, len);
    cr_assert_eq(pairsum_read(&q, &r), 0);
    cr_assert_eq(q.n, 3);
    /* Sxy = 1 + 6 + 8 = 15; 40 breaks Cauchy-Schwarz (C^2 > A B) */
    pairsum bad = p;
    bad.sxy = (pairsum_wide){{40, 0, 0, 0}};
    len = bytes_of(&bad, buf, sizeof buf);
    wire_reader_init(&r, buf, len);
    cr_assert_eq(pairsum_read(&q, &r), -1);
    /* an inexact state with sums */
    bad = p;
    bad.exact = 0;
    wire_writer w;
    wire_writer_init(&w);
    pairsum_write(&bad, &w);
    wire_reader_init(&r, w.data, w.len);
    cr_assert_eq(pairsum_read(&q, &r), -1);
    wire_writer_free(&w);
    /* a scale past a double's decimal exponents */
    bad = p;
    bad.scale_x = 5000;
    len = bytes_of(&bad, buf, sizeof buf);
    wire_reader_init(&r, buf, len);
    cr_assert_eq(pairsum_read(&q, &r), -1);
}
