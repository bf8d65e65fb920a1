/* stat: see stat.h for the methods and references. */
#include "stats/stat.h"

#include <float.h>
#include <gsl/gsl_cdf.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Upper tail of F(d1, d2) at x, with the underflow flag. */
static void f_tail(double x, double d1, double d2, stat_result *r)
{
    r->p = isinf(x) ? 0.0 : gsl_cdf_fdist_Q(x, d1, d2);
    r->p_below = r->p < DBL_MIN;
    if (r->p_below) r->p = 0;
}

int stat_anova(const double *n, const double *mean, const double *m2, size_t k, stat_result *out)
{
    double N = 0, sum = 0, ssw = 0;
    size_t groups = 0;
    for (size_t g = 0; g < k; g++) {
        if (n[g] <= 0) continue;
        N += n[g];
        sum += n[g] * mean[g];
        ssw += m2[g];
        groups++;
    }
    if (groups < 2 || N <= (double)groups) return -1;
    double grand = sum / N, ssb = 0, corr = 0;
    for (size_t g = 0; g < k; g++)
        if (n[g] > 0) corr += n[g] * (mean[g] - grand);
    grand += corr / N; /* corrected two-pass grand mean */
    for (size_t g = 0; g < k; g++)
        if (n[g] > 0) ssb += n[g] * (mean[g] - grand) * (mean[g] - grand);
    memset(out, 0, sizeof *out);
    out->df1 = (double)(groups - 1);
    out->df2 = N - (double)groups;
    out->extra = ssb + ssw > 0 ? ssb / (ssb + ssw) : NAN;
    if (ssw == 0) {
        if (ssb == 0) return -1;
        out->stat = INFINITY;
    } else {
        out->stat = (ssb / out->df1) / (ssw / out->df2);
    }
    f_tail(out->stat, out->df1, out->df2, out);
    return 0;
}

int stat_welch(const double *n, const double *mean, const double *m2, size_t k, stat_result *out)
{
    double W = 0, wm = 0;
    size_t groups = 0;
    for (size_t g = 0; g < k; g++) {
        if (n[g] < 2 || !(m2[g] > 0)) continue;
        double w = n[g] / (m2[g] / (n[g] - 1));
        W += w;
        wm += w * mean[g];
        groups++;
    }
    if (groups < 2) return -1;
    double mw = wm / W, a = 0, b = 0;
    for (size_t g = 0; g < k; g++) {
        if (n[g] < 2 || !(m2[g] > 0)) continue;
        double w = n[g] / (m2[g] / (n[g] - 1)), d = mean[g] - mw, t = 1 - w / W;
        a += w * d * d;
        b += t * t / (n[g] - 1);
    }
    double kk = (double)groups;
    memset(out, 0, sizeof *out);
    out->df1 = kk - 1;
    out->df2 = (kk * kk - 1) / (3 * b);
    out->stat = (a / (kk - 1)) / (1 + 2 * (kk - 2) * b / (kk * kk - 1));
    out->extra = NAN;
    f_tail(out->stat, out->df1, out->df2, out);
    return 0;
}

int stat_correlation_f(double r, double n, stat_result *out)
{
    if (!(n > 2) || !isfinite(r)) return -1;
    if (r > 1) r = 1;
    if (r < -1) r = -1;
    memset(out, 0, sizeof *out);
    out->df1 = 1;
    out->df2 = n - 2;
    out->extra = r;
    out->stat = fabs(r) == 1 ? INFINITY : r * r * (n - 2) / (1 - r * r);
    f_tail(out->stat, out->df1, out->df2, out);
    return 0;
}

/* Row and column sums; counts of non-empty rows and columns. */
static double margins(const double *t, size_t rows, size_t cols, double *rs, double *cs,
                      size_t *rn, size_t *cn)
{
    double N = 0;
    memset(cs, 0, cols * sizeof *cs);
    *rn = *cn = 0;
    for (size_t i = 0; i < rows; i++) {
        rs[i] = 0;
        for (size_t j = 0; j < cols; j++) {
            rs[i] += t[i * cols + j];
            cs[j] += t[i * cols + j];
        }
        N += rs[i];
        *rn += rs[i] > 0;
    }
    for (size_t j = 0; j < cols; j++) *cn += cs[j] > 0;
    return N;
}

int stat_chi_squared(const double *table, size_t rows, size_t cols, stat_result *out)
{
    double *rs = malloc((rows ? rows : 1) * sizeof *rs), *cs = malloc((cols ? cols : 1) * sizeof *cs);
    if (!rs || !cs) { free(rs); free(cs); return -1; }
    size_t rn, cn;
    double N = margins(table, rows, cols, rs, cs, &rn, &cn);
    int rc = -1;
    if (rn >= 2 && cn >= 2 && N > 0) {
        double x2 = 0;
        for (size_t i = 0; i < rows; i++) {
            if (rs[i] <= 0) continue;
            for (size_t j = 0; j < cols; j++) {
                if (cs[j] <= 0) continue;
                double e = rs[i] * cs[j] / N, d = table[i * cols + j] - e;
                x2 += d * d / e;
            }
        }
        memset(out, 0, sizeof *out);
        out->stat = x2;
        out->df1 = (double)((rn - 1) * (cn - 1));
        out->df2 = NAN;
        double m = (double)(rn < cn ? rn : cn) - 1;
        out->extra = sqrt(x2 / (N * m));
        out->p = gsl_cdf_chisq_Q(x2, out->df1);
        out->p_below = out->p < DBL_MIN;
        if (out->p_below) out->p = 0;
        rc = 0;
    }
    free(rs);
    free(cs);
    return rc;
}

/* Entropy in nats of counts c[0..n) summing to N, and the non-empty cells. */
static double entropy(const double *c, size_t n, double N, size_t *used)
{
    double h = 0;
    *used = 0;
    for (size_t i = 0; i < n; i++)
        if (c[i] > 0) {
            double p = c[i] / N;
            h -= p * log(p);
            (*used)++;
        }
    return h;
}

int stat_mutual_information(const double *table, size_t rows, size_t cols, stat_mutual_info *out)
{
    double *rs = malloc((rows ? rows : 1) * sizeof *rs), *cs = malloc((cols ? cols : 1) * sizeof *cs);
    if (!rs || !cs) { free(rs); free(cs); return -1; }
    size_t rn, cn, cells;
    double N = margins(table, rows, cols, rs, cs, &rn, &cn);
    int rc = -1;
    if (N > 0) {
        double hx = entropy(rs, rows, N, &rn), hy = entropy(cs, cols, N, &cn);
        double hxy = entropy(table, rows * cols, N, &cells);
        double mi = hx + hy - hxy;
        if (mi < 0) mi = 0; /* rounding */
        out->nats = mi;
        /* Miller (1955): each plug-in entropy is biased low by (m - 1) / (2N). */
        out->nats_corrected = mi + ((double)rn - 1 + (double)cn - 1 - ((double)cells - 1)) / (2 * N);
        out->normalized = hy > 0 ? mi / hy : NAN;
        out->rows_used = (unsigned)rn;
        out->cols_used = (unsigned)cn;
        rc = 0;
    }
    free(rs);
    free(cs);
    return rc;
}

typedef struct {
    double p;
    size_t i;
} ranked;

static int ranked_cmp(const void *a, const void *b)
{
    double x = ((const ranked *)a)->p, y = ((const ranked *)b)->p;
    return (x > y) - (x < y);
}

void stat_benjamini_hochberg(const double *p, size_t n, double *q)
{
    ranked *r = malloc((n ? n : 1) * sizeof *r);
    if (!r) {
        for (size_t i = 0; i < n; i++) q[i] = NAN;
        return;
    }
    size_t m = 0;
    for (size_t i = 0; i < n; i++)
        if (!isnan(p[i])) r[m++] = (ranked){p[i], i};
    for (size_t i = 0; i < n; i++)
        if (isnan(p[i])) q[i] = NAN;
    qsort(r, m, sizeof *r, ranked_cmp);
    double running = 1;
    for (size_t k = m; k-- > 0;) {
        double v = r[k].p * (double)m / (double)(k + 1);
        if (v < running) running = v;
        q[r[k].i] = running;
    }
    free(r);
}

unsigned stat_equal_frequency_bins(const double *counts, size_t n, unsigned k, unsigned *bins)
{
    double N = 0;
    for (size_t i = 0; i < n; i++) N += counts[i];
    if (N <= 0 || k == 0) {
        for (size_t i = 0; i < n; i++) bins[i] = 0;
        return n ? 1 : 0;
    }
    double before = 0;
    unsigned last = 0, used = 0;
    for (size_t i = 0; i < n; i++) {
        unsigned b = (unsigned)floor((double)k * (before + counts[i] / 2) / N);
        if (b >= k) b = k - 1;
        before += counts[i];
        /* Renumber without gaps. */
        if (i == 0 || b != last) used++;
        last = b;
        bins[i] = used - 1;
    }
    return used;
}
