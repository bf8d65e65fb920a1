/* stat: screening tests on plain arrays.  stat.h states the methods, the
 * references and the conventions; this file adds how each number is formed.
 *
 * Sums run in long double so that the grand mean, SSB and the table sums
 * keep the digits of their inputs (NIST StRD one-way ANOVA: F to 13 digits
 * and more from exact group statistics).
 *
 * F upper tail, a = df1/2, b = df2/2, u = df1 f / (df1 f + df2), v = 1 - u
 * (both formed without subtraction), Q = I_v(b, a) = 1 - I_u(a, b):
 *  - df1 >= 1e5 and df2 >= 1e5: exp of the log-space tail (logp.c).  GSL's
 *    beta ratio carries a constant relative error there, which grows with
 *    the df (measured against mpmath at p 1e-2..1e-300: 1e-11 at (1e5, 1e5),
 *    8e-10 at (1e6, 1e6), 2e-7 at (1e8, 1e8), 5e-6 at (1e9, 1e9)); the
 *    log-space tail's is below 3e-11 at all of them;
 *  - f < 1: Q > 0.3, so GSL's 1 - I_u(a, b) loses nothing;
 *  - df2 > 3e7 and df2 > 6e5 df1: Q = Gamma_Q(N log1p(df1 f / df2), a)
 *    with N = b + (a - 1)/2, the large-b limit of Abramowitz & Stegun
 *    26.5.17 (GSL applies it from b > 1e5, but to the lower tail); its error
 *    falls as df2^-2 and grows about as df1^2 times the depth of the tail;
 *  - otherwise I_v(b, a) by GSL's continued fraction, which needs no
 *    subtraction for a small Q; v rounded near 1 costs about df2 * 1e-17
 *    relative when u is small.
 * The switch is where the two errors cross, measured against mpmath 1.2.1
 * (betainc at 40 digits) for df1 1..1e4, df2 1e5..1e9 and p 1e-2..1e-300:
 * for df1 = 19 the gamma limit errs by 3e-5 at df2 = 1e5, 8e-9 at 1e7, 9e-10
 * at 3e7 and 8e-11 at 1e8 (the beta ratio by 5e-10, 2e-9 and 7e-9 at the
 * last three); for df1 = 100 the two cross near 6e7, for df1 = 300 near
 * 2e8, and for df1 = 1e4 the beta ratio stays the better one up to 1e9.
 * Relative error of p with this routing: below 5e-9 for df2 <= 3e8 (the
 * beta ratio at (300, 1e8)), 2e-8 at df2 = 1e9 with df1 = 1e4 and 3e-10 at
 * 1e9 with df1 <= 300.
 * Below p = 1e-250 log10_p comes from logp.c instead (log-space tails).
 * Chi-squared upper tail for df > 5e4, a = df/2, lambda = x/(2a):
 *    Q = erfc(eta sqrt(a/2)) / 2 + exp(-a eta^2/2) / sqrt(2 pi a) (c0 + c1/a),
 *    eta^2 / 2 = lambda - 1 - log lambda, sign(eta) = sign(lambda - 1),
 *    c0 = 1/(lambda-1) - 1/eta,
 *    c1 = 1/eta^3 - 1/(lambda-1)^3 - 1/(lambda-1)^2 - 1/(12 (lambda-1))
 * (Temme 1979; DLMF 8.12), with the Taylor series c0 = -1/3 + eta/12 -
 * 2 eta^2/135 (|eta| < 1e-3) and c1 = -1/540 - eta/288 + eta^2/378
 * (|eta| < 0.03) where the closed forms cancel (coefficients from memory,
 * checked against the closed forms in mpmath at 50 digits: the residuals
 * are the next terms, eta^3/864 and about eta^3/1000).  The next term of
 * the expansion is O(a^-2).
 */
#include "stats/stat.h"

#include "stats/logp.h"

#include <float.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ---- GSL errors -------------------------------------------------------- */

static _Thread_local int gsl_status; /* first GSL error of this thread's current p-value */

void stat_gsl_error_handler(const char *reason, const char *file, int line, int gsl_errno)
{
    (void)reason;
    (void)file;
    (void)line;
    if (!gsl_status) gsl_status = gsl_errno;
}

static void gsl_begin(void) { gsl_status = 0; }

/* ---- distribution tails ------------------------------------------------ */

/* Q of F(d1, d2) at finite f > 0. */
static double f_upper(double f, double d1, double d2)
{
    if (d1 >= 1e5 && d2 >= 1e5) {
        double l = logp_f_upper(f, d1, d2); /* NaN only near the mean for df beyond 1e12 */
        if (!isnan(l)) return exp(l);
    }
    double a = d1 / 2, b = d2 / 2, r = d2 / d1;
    double u, v, log_ratio; /* log_ratio = log1p(f / r) = -log(v) */
    if (f <= r) {
        double t = f / r;
        u = t / (1 + t);
        v = 1 / (1 + t);
        log_ratio = log1p(t);
    } else {
        double s = r / f;
        u = 1 / (1 + s);
        v = s / (1 + s);
        log_ratio = log1p(s) - log(s);
    }
    if (f < 1) return gsl_cdf_beta_Q(u, a, b); /* Q > 0.3: a subtraction is harmless */
    if (d2 > 3e7 && d2 > 6e5 * d1 && u < b / (a + b))
        return gsl_cdf_gamma_Q((b + (a - 1) / 2) * log_ratio, a, 1);
    return gsl_cdf_beta_P(v, b, a);
}

/* Q(a, x) of the regularized incomplete gamma for large a (Temme). */
static double gamma_upper_temme(double a, double x)
{
    double mu = (x - a) / a; /* lambda - 1 */
    double half_eta2 = mu - log1p(mu);
    double eta = sqrt(2 * half_eta2);
    if (mu < 0) eta = -eta;
    double c0, c1;
    logp_temme_coefficients(eta, mu, &c0, &c1);
    return 0.5 * erfc(eta * sqrt(a / 2)) +
           exp(-a * half_eta2) / sqrt(2 * M_PI * a) * (c0 + c1 / a);
}

static double chi2_upper(double x, double df)
{
    if (df > 5e4) return gamma_upper_temme(df / 2, x / 2);
    return gsl_cdf_chisq_Q(x, df);
}

static void set_undefined(stat_result *out)
{
    out->stat = out->df1 = out->df2 = out->p = out->extra = out->log10_p = NAN;
    out->p_below = 0;
}

/* Below this p-value, log10_p comes from the log-space tails (logp.c). */
#define LOG_SPACE_BELOW 1e-250

/* Sets out->p and out->log10_p from a computed tail (or from stat = +inf);
 * log_tail is the log-space tail's natural log, called only for small p. */
static void set_p(stat_result *out, double p, double (*log_tail)(const stat_result *))
{
    if (isinf(out->stat)) p = 0;
    else if (gsl_status && gsl_status != GSL_EUNDRFLW) p = NAN;
    else if (p > 1) p = 1;
    out->p_below = p < DBL_MIN; /* false for NaN */
    out->p = out->p_below ? 0 : p;
    out->log10_p = log10(out->p); /* -inf for p = 0, NaN for NaN */
    if (p < LOG_SPACE_BELOW && isfinite(out->stat)) {
        double l = log_tail(out);
        if (!isnan(l)) out->log10_p = l / M_LN10;
    }
}

static double f_log_tail(const stat_result *r) { return logp_f_upper(r->stat, r->df1, r->df2); }

static double chi2_log_tail(const stat_result *r) { return logp_chi2_upper(r->stat, r->df1); }

int stat_f_test(double f, double df1, double df2, stat_result *out)
{
    set_undefined(out);
    if (!(f >= 0) || !(df1 > 0) || !(df2 > 0) || isinf(df1) || isinf(df2)) return -1;
    out->stat = f;
    out->df1 = df1;
    out->df2 = df2;
    gsl_begin();
    set_p(out, f == 0 ? 1 : isinf(f) ? 0 : f_upper(f, df1, df2), f_log_tail);
    return 0;
}

int stat_chi2_test(double x, double df, stat_result *out)
{
    set_undefined(out);
    if (!(x >= 0) || !(df > 0) || isinf(df)) return -1;
    out->stat = x;
    out->df1 = df;
    gsl_begin();
    set_p(out, x == 0 ? 1 : isinf(x) ? 0 : chi2_upper(x, df), chi2_log_tail);
    return 0;
}

/* ---- group tests --------------------------------------------------------- */

int stat_anova(const double *n, const double *mean, const double *m2, size_t k, stat_result *out)
{
    long double N = 0, sum = 0, ssw = 0;
    size_t groups = 0;
    set_undefined(out);
    for (size_t g = 0; g < k; g++) {
        if (!(n[g] > 0)) continue;
        N += n[g];
        sum += (long double)n[g] * mean[g];
        ssw += m2[g];
        groups++;
    }
    if (groups < 2 || N <= (long double)groups) return -1;
    long double grand = sum / N, corr = 0, ssb = 0;
    for (size_t g = 0; g < k; g++)
        if (n[g] > 0) corr += (long double)n[g] * (mean[g] - grand);
    grand += corr / N; /* second pass: the residual of the first mean */
    for (size_t g = 0; g < k; g++) {
        if (!(n[g] > 0)) continue;
        long double d = mean[g] - grand;
        ssb += n[g] * d * d;
    }
    if (ssw == 0 && ssb == 0) return -1;
    /* A group's M2 or mean past the double range (values near 1e155 and
     * more: their squares overflow where they were summed) leaves no F to
     * take: undefined, not the 0 that ssb / inf gives. */
    if (!(ssw <= LDBL_MAX) || !(ssb <= LDBL_MAX) || !(grand == grand)) return -1;
    double df1 = (double)(groups - 1), df2 = (double)(N - groups);
    double f = ssw == 0 ? INFINITY : (double)((ssb / df1) / (ssw / df2));
    stat_f_test(f, df1, df2, out);
    out->extra = (double)(ssb / (ssb + ssw));
    return 0;
}

int stat_welch(const double *n, const double *mean, const double *m2, size_t k, stat_result *out)
{
    long double W = 0, wm = 0;
    size_t groups = 0;
    set_undefined(out);
    for (size_t g = 0; g < k; g++) {
        if (!(n[g] >= 2) || !(m2[g] > 0)) continue;
        if (!(m2[g] <= DBL_MAX) || !isfinite(mean[g])) return -1; /* as stat_anova */
        long double w = n[g] * (n[g] - 1) / (long double)m2[g];
        W += w;
        wm += w * mean[g];
        groups++;
    }
    if (groups < 2) return -1;
    long double mw = wm / W, between = 0, lambda = 0;
    for (size_t g = 0; g < k; g++) {
        if (!(n[g] >= 2) || !(m2[g] > 0)) continue;
        long double w = n[g] * (n[g] - 1) / (long double)m2[g], d = mean[g] - mw, t = 1 - w / W;
        between += w * d * d;
        lambda += t * t / (n[g] - 1);
    }
    long double kk = groups;
    double f = (double)((between / (kk - 1)) / (1 + 2 * (kk - 2) * lambda / (kk * kk - 1)));
    double df2 = (double)((kk * kk - 1) / (3 * lambda));
    stat_f_test(f, (double)(kk - 1), df2, out);
    return 0;
}

int stat_correlation_f(double r, double n, stat_result *out)
{
    set_undefined(out);
    if (!isfinite(r) || !(n > 2) || isinf(n)) return -1;
    if (r > 1) r = 1;
    if (r < -1) r = -1;
    double a = fabs(r);
    double f = a == 1 ? INFINITY : r * r * (n - 2) / ((1 - a) * (1 + a));
    stat_f_test(f, 1, n - 2, out);
    out->extra = r;
    return 0;
}

/* ---- tables ---------------------------------------------------------------- */

/* Row sums rs[rows] and column sums cs[cols]; non-empty rows and columns. */
static long double margins(const double *t, size_t rows, size_t cols, long double *rs,
                           long double *cs, size_t *rn, size_t *cn)
{
    long double N = 0;
    for (size_t j = 0; j < cols; j++) cs[j] = 0;
    *rn = *cn = 0;
    for (size_t i = 0; i < rows; i++) {
        long double s = 0;
        for (size_t j = 0; j < cols; j++) {
            s += t[i * cols + j];
            cs[j] += t[i * cols + j];
        }
        rs[i] = s;
        N += s;
        *rn += s > 0;
    }
    for (size_t j = 0; j < cols; j++) *cn += cs[j] > 0;
    return N;
}

/* One block for both margins; NULL when memory runs out. */
static long double *margin_space(size_t rows, size_t cols)
{
    size_t len = rows + cols;
    return malloc((len ? len : 1) * sizeof(long double));
}

int stat_chi_squared(const double *table, size_t rows, size_t cols, stat_result *out)
{
    long double *rs = margin_space(rows, cols);
    if (!rs) return -2;
    long double *cs = rs + rows;
    size_t rn, cn;
    long double N = margins(table, rows, cols, rs, cs, &rn, &cn);
    int rc = -1;
    set_undefined(out);
    if (rn >= 2 && cn >= 2) {
        long double x2 = 0;
        for (size_t i = 0; i < rows; i++) {
            if (!(rs[i] > 0)) continue;
            for (size_t j = 0; j < cols; j++) {
                if (!(cs[j] > 0)) continue;
                long double e = rs[i] * cs[j] / N, d = table[i * cols + j] - e;
                x2 += d * d / e;
            }
        }
        double m = (double)(rn < cn ? rn : cn) - 1;
        stat_chi2_test((double)x2, (double)(rn - 1) * (double)(cn - 1), out);
        out->extra = sqrt((double)(x2 / (N * m)));
        rc = 0;
    }
    free(rs);
    return rc;
}

/* Plug-in entropy in nats of sums c[0..n) totalling N; non-empty cells. */
static long double entropy(const long double *c, size_t n, long double N, size_t *used)
{
    long double h = 0, log_n = logl(N);
    *used = 0;
    for (size_t i = 0; i < n; i++)
        if (c[i] > 0) {
            h += c[i] / N * (log_n - logl(c[i]));
            (*used)++;
        }
    return h;
}

int stat_mutual_information(const double *table, size_t rows, size_t cols, stat_mutual_info *out)
{
    long double *rs = margin_space(rows, cols);
    if (!rs) return -2;
    long double *cs = rs + rows;
    size_t rn, cn;
    long double N = margins(table, rows, cols, rs, cs, &rn, &cn);
    memset(out, 0, sizeof *out);
    out->nats = out->nats_corrected = out->normalized = NAN;
    out->h_x = out->h_y = out->h_xy = NAN;
    out->n = (double)N;
    if (!(N > 0)) {
        free(rs);
        return -1;
    }
    long double log_n = logl(N), mi = 0, hxy = 0;
    size_t cells = 0;
    for (size_t i = 0; i < rows; i++)
        for (size_t j = 0; j < cols; j++) {
            long double o = table[i * cols + j];
            if (!(o > 0)) continue;
            /* log(o N / (r c)) as log1p of an exact difference when the
             * products fit the long double mantissa. */
            long double on = o * N, rc = rs[i] * cs[j];
            mi += o / N * log1pl((on - rc) / rc);
            hxy += o / N * (log_n - logl(o));
            cells++;
        }
    long double hx = entropy(rs, rows, N, &rn), hy = entropy(cs, cols, N, &cn);
    if (mi < 0) mi = 0; /* rounding of an independent table */
    out->nats = (double)mi;
    out->nats_corrected =
        (double)(mi + ((long double)rn + (long double)cn - (long double)cells - 1) / (2 * N));
    out->normalized = hy > 0 ? (double)(mi / hy) : NAN;
    out->rows_used = (unsigned)rn;
    out->cols_used = (unsigned)cn;
    out->cells_used = cells;
    out->h_x = (double)hx;
    out->h_y = (double)hy;
    out->h_xy = (double)hxy;
    free(rs);
    return 0;
}

/* ---- multiple testing ------------------------------------------------------ */

typedef struct {
    double x;  /* the value */
    size_t i;  /* its position in the input */
} ranked;

static int ranked_cmp(const void *a, const void *b)
{
    const ranked *x = a, *y = b;
    if (x->x != y->x) return (x->x > y->x) - (x->x < y->x);
    return (x->i > y->i) - (x->i < y->i);
}

size_t *stat_order_finite(const double *x, size_t n, size_t *m_out)
{
    ranked *r = malloc((n ? n : 1) * sizeof *r);
    size_t *order = malloc((n ? n : 1) * sizeof *order);
    if (!r || !order) {
        free(r);
        free(order);
        return NULL;
    }
    size_t m = 0;
    for (size_t i = 0; i < n; i++)
        if (!isnan(x[i])) r[m++] = (ranked){x[i], i};
    qsort(r, m, sizeof *r, ranked_cmp);
    for (size_t k = 0; k < m; k++) order[k] = r[k].i;
    free(r);
    *m_out = m;
    return order;
}

void stat_benjamini_hochberg(const double *p, size_t n, double *q)
{
    size_t m;
    size_t *order = stat_order_finite(p, n, &m);
    if (!order) {
        for (size_t i = 0; i < n; i++) q[i] = NAN;
        return;
    }
    double running = 1;
    for (size_t k = m; k-- > 0;) {
        double v = p[order[k]] * (double)m / (double)(k + 1);
        if (v < running) running = v;
        q[order[k]] = running; /* after reading p[order[k]]: q may alias p */
    }
    for (size_t i = 0; i < n; i++)
        if (isnan(p[i])) q[i] = NAN;
    free(order);
}

/* ---- coarsening ------------------------------------------------------------ */

unsigned stat_equal_frequency_bins(const double *counts, size_t n, unsigned k, unsigned *bins)
{
    long double N = 0;
    for (size_t i = 0; i < n; i++)
        if (counts[i] > 0) N += counts[i];
    for (size_t i = 0; i < n; i++) bins[i] = 0;
    if (!(N > 0) || k == 0) return 0;
    long double before = 0;
    unsigned last = 0, used = 0;
    for (size_t i = 0; i < n; i++) {
        if (counts[i] > 0) {
            long double pos = floorl((long double)k * (before + (long double)counts[i] / 2) / N);
            unsigned b = pos >= k ? k - 1 : (unsigned)pos;
            if (used == 0 || b != last) used++;
            last = b;
            before += counts[i];
        }
        bins[i] = used ? used - 1 : 0;
    }
    return used;
}
