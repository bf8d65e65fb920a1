/* comoment_check: a decoded co-moment matrix against the columns it
 * describes and their exact pair sums with the target (the decoder's last
 * check of a summary; docs/summary-format.md, "Invariants"). */
#include "summary/format.h"

#include <math.h>
#include <stdlib.h>

#include "summary/column.h"

/* Rounding slack of the checks: 2^-20 of the scale n w^2. */
#define SLACK 0x1p-20

/* The scale of a co-moment column's deviations from its frame: its spread,
 * or for a constant column the distance of its value from the frame plus
 * the rounding of a deviation there (a cell of more than 19 digits deviates
 * from its 19-digit frame by less than the double's unit), so that the
 * tolerances below are 0 only where every deviation is exactly 0. */
static double deviation_scale(const moments *m)
{
    double lo = m->min - m->ref.value, hi = m->max - m->ref.value;
    return fmax(m->max - m->min, fmax(fabs(lo), fabs(hi))) +
           0x1p-52 * fmax(fabs(m->min), fabs(m->max));
}

/* A column whose sums the checks below can bound: some numbers, a spread
 * below 2^200 (wider ones may overflow), and a scale of deviations that is
 * 0 or at least 2^-460 (below, sums of squares reach the subnormal numbers
 * and round beyond any tolerance; the readers find such columns' r
 * undefined where their sums vanish). */
static int checkable(const moments *m, double w)
{
    return m->n > 0 && !moments_spread_allows_overflow(m->min, m->max) &&
           (w == 0 || w >= 0x1p-460);
}

static const char *name_of(const summary *s, size_t k) { return s->cols[s->como_col[k]].name; }

/* Pairs of no rows hold zeros (the writer's, and what merge adds to),
 * unless a column's spread may overflow: a block's mean of such a column
 * squares to inf, and inf times a weight of 0 leaves NaN. */
static int empty_pairs(const summary *s, size_t a, char *msg, size_t len)
{
    const moments *ma = &s->cols[s->como_col[a]].mom;
    for (size_t b = 0; b < s->ncomo; b++) {
        const moments *mb = &s->cols[s->como_col[b]].mom;
        double n, m, m2, co;
        comoment_pair_state(s->como, a, b, &n, &m, &m2, &co);
        if (n == 0 && (m != 0 || m2 != 0 || co != 0) &&
            !moments_spread_allows_overflow(ma->min, ma->max) &&
            !moments_spread_allows_overflow(mb->min, mb->max))
            return summary_why(msg, len, "co-moments of columns '%.60s' and '%.60s' over no rows are not 0",
                       name_of(s, a), name_of(s, b));
    }
    return 0;
}

/* Column a's sums (a checkable column, w its scales): the diagonal M2 is
 * the column's M2; over a subset of the rows (where b is present) M2[a][b]
 * lies in [0, M2[a][a]], and is 0 over one row; MEAN[a][b] lies between the
 * column's min and max (in its frame); |C[a][b]| <= sqrt(M2[a][b] M2[b][a])
 * (Cauchy-Schwarz) where b is checkable too. */
static int column_sums(const summary *s, size_t a, const double *w, char *msg, size_t len)
{
    const comoment *c = s->como;
    const summary_column *ca = &s->cols[s->como_col[a]];
    const moments *ma = &ca->mom;
    double nd, mean, m2d, cod;
    comoment_pair_state(c, a, a, &nd, &mean, &m2d, &cod);
    double tol = SLACK * (double)ma->n * w[a] * w[a];
    if (!isfinite(m2d) || fabs(m2d - ma->m2) > tol)
        return summary_why(msg, len, "column %zu '%.80s': co-moment M2 %g, the column's %g",
                   s->como_col[a] + 1, ca->name, m2d, ma->m2);
    /* C[a][a] is M2[a][a] (a column's co-moment with itself); any other
     * value read as r(a, a) = -1 and a negative variance (decode audit). */
    if (!isfinite(cod) || fabs(cod - m2d) > tol)
        return summary_why(msg, len, "column %zu '%.80s': co-moment C %g with itself, its M2 %g",
                   s->como_col[a] + 1, ca->name, cod, m2d);
    double lo = ma->min - ma->ref.value, hi = ma->max - ma->ref.value;
    double mtol = SLACK * fmax(w[a], fmax(fabs(ma->min), fabs(ma->max)));
    for (size_t b = 0; b < s->ncomo; b++) {
        double n, m, m2, co, nb, mb, m2b, cob;
        comoment_pair_state(c, a, b, &n, &m, &m2, &co);
        if (n == 0) continue;
        double top = n == 1 ? SLACK * w[a] * w[a] : m2d + tol; /* one row: no spread */
        const char *what = NULL;
        if (!isfinite(m) || m < lo - mtol || m > hi + mtol) what = "MEAN";
        else if (!isfinite(m2) || m2 < -tol || m2 > top) what = "M2";
        else if (checkable(&s->cols[s->como_col[b]].mom, w[b])) {
            comoment_pair_state(c, b, a, &nb, &mb, &m2b, &cob);
            double bound = sqrt(fmax(m2, 0)) * sqrt(fmax(m2b, 0)) + SLACK * n * w[a] * w[b];
            if (!isfinite(co) || fabs(co) > bound) what = "C";
        }
        if (what)
            return summary_why(msg, len,
                       "co-moment %s[%zu][%zu] is impossible for columns '%.60s' and '%.60s'",
                       what, a + 1, b + 1, ca->name, name_of(s, b));
    }
    return 0;
}

/* A column's exact pair sums with the target give, over the same rows, the
 * co-moments M2[k][t], M2[t][k] and C[k][t] (pairsum_centred): they must
 * agree within the same slack, or the F test of r (read from the pair sums)
 * and the correlation (read from the co-moments) would tell two stories. */
static int pair_sums(const summary *s, const double *w, char *msg, size_t len)
{
    int t = s->target >= 0 ? s->como_of[s->target] : -1;
    if (t < 0 || !checkable(&s->cols[s->target].mom, w[t])) return 0;
    for (size_t k = 0; k < s->ncomo; k++) {
        const summary_column *ck = &s->cols[s->como_col[k]];
        double m2x, m2y, cxy, n, mean, m2, m2t, co;
        if (!ck->pairs || (int)k == t || !checkable(&ck->mom, w[k]) ||
            pairsum_centred(ck->pairs, &m2x, &m2y, &cxy) != 0)
            continue;
        comoment_pair_state(s->como, k, (size_t)t, &n, &mean, &m2, &co);
        comoment_pair_state(s->como, (size_t)t, k, &n, &mean, &m2t, &co);
        const char *what = NULL;
        if (!(fabs(m2x - m2) <= SLACK * n * w[k] * w[k])) what = "its sum of squares";
        else if (!(fabs(m2y - m2t) <= SLACK * n * w[t] * w[t])) what = "the target's sum of squares";
        else if (!(fabs(cxy - co) <= SLACK * n * w[k] * w[t])) what = "the co-moment";
        if (what)
            return summary_why(msg, len, "column %zu '%.80s': the exact sums with the target disagree "
                       "with the co-moments in %s", s->como_col[k] + 1, ck->name, what);
    }
    return 0;
}

int comoment_check(const summary *s, char *msg, size_t len)
{
    double *w = malloc((s->ncomo ? s->ncomo : 1) * sizeof *w);
    if (!w) return summary_why(msg, len, "out of memory");
    for (size_t a = 0; a < s->ncomo; a++) w[a] = deviation_scale(&s->cols[s->como_col[a]].mom);
    int rc = 0;
    for (size_t a = 0; a < s->ncomo && rc == 0; a++) {
        rc = empty_pairs(s, a, msg, len);
        if (rc == 0 && checkable(&s->cols[s->como_col[a]].mom, w[a]))
            rc = column_sums(s, a, w, msg, len);
    }
    if (rc == 0) rc = pair_sums(s, w, msg, len);
    free(w);
    return rc;
}
