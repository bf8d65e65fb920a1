/* logp: see logp.h for the methods and references.  This file adds the
 * details of each evaluation.
 *
 * Continued fractions run the modified Lentz method (values below 1e-300
 * replaced by 1e-300) until a step changes the value by less than 1e-16
 * relative.  The incomplete beta fraction needs about sqrt(max(a, b))
 * steps where x is near the mean of the beta distribution and far fewer in
 * the tail; the budget of 10^6 steps covers a and b up to about 1e11 near
 * the mean (the tails that reach this module from stat.c are at least 30
 * standard deviations out, where a few thousand steps suffice).
 *
 * phi(t) = t - log(1+t) is summed as its power series sum_{k>=2} (-t)^k / k
 * for |t| < 1/2, where the difference would cancel, and otherwise taken as
 * t - log(1+t) with log(1+t) supplied by the caller from logarithms of the
 * operands (1+t may be below the double range, as v/x0 is for F near 1e300).
 *
 * delta(z), the remainder of Stirling's series, is log Gamma(z) minus the
 * Stirling terms for z < 10 (no cancellation there beyond 1e-15 absolute)
 * and the asymptotic series 1/(12z) - 1/(360z^3) + 1/(1260z^5) - 1/(1680z^7)
 * + 1/(1188z^9) (Bernoulli numbers; DLMF 5.11.1) for z >= 10, where the
 * next term is below 2e-14 relative to the sum.
 *
 * erfcx(z) = exp(z^2) erfc(z) is exp(z^2) * erfc(z) from the C library for
 * z < 12 (relative error about z^2 * 1e-16) and Laplace's continued
 * fraction 1 / (sqrt(pi) (z + (1/2)/(z + 1/(z + (3/2)/(z + ...))))) (DLMF
 * 7.9.2), 60 terms evaluated backwards, for z >= 12.
 */
#include "stats/logp.h"
#include "stats/stat.h"

#include <gsl/gsl_sf_gamma.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define LENTZ_TINY 1e-300
#define LENTZ_EPS 1e-16
#define LENTZ_STEPS 1000000
#define LOG_2PI 1.8378770664093454836

/* ---- elementary pieces ---------------------------------------------------- */

/* t - log(1+t); log1p_t = log(1+t), used when |t| >= 1/2. */
static double phi(double t, double log1p_t)
{
    if (fabs(t) >= 0.5) return t - log1p_t;
    double term = t * t, sum = 0;
    for (int k = 2; k < 80; k++) {
        double add = term / k;
        sum += (k & 1) ? -add : add;
        if (fabs(add) <= 1e-17 * sum) break;
        term *= t;
    }
    return sum;
}

/* log Gamma(z) - ((z - 1/2) log z - z + log(2 pi)/2), z > 0. */
static double stirling_delta(double z)
{
    if (z < 10) return gsl_sf_lngamma(z) - ((z - 0.5) * log(z) - z + 0.5 * LOG_2PI);
    double r = 1 / z, r2 = r * r;
    return r * (1.0 / 12 - r2 * (1.0 / 360 - r2 * (1.0 / 1260 - r2 * (1.0 / 1680 - r2 / 1188))));
}

/* exp(z^2) erfc(z) for z >= 0. */
static double erfcx(double z)
{
    if (z < 12) return exp(z * z) * erfc(z);
    double t = z;
    for (int k = 60; k >= 1; k--) t = z + 0.5 * k / t;
    return 1 / (sqrt(M_PI) * t);
}

/* ---- incomplete beta -------------------------------------------------------- */

/* The continued fraction h of I_x(a, b) = x^a y^b h / (a B(a, b)) (DLMF
 * 8.17.22), for x < (a+1)/(a+b+2); NaN when it does not converge. */
static double beta_fraction(double x, double a, double b)
{
    double c = 1, d = 1 - (a + b) * x / (a + 1);
    if (fabs(d) < LENTZ_TINY) d = LENTZ_TINY;
    d = 1 / d;
    double h = d;
    for (int m = 1; m <= LENTZ_STEPS; m++) {
        double m2 = 2.0 * m;
        double step = m * (b - m) * x / ((a - 1 + m2) * (a + m2));
        d = 1 + step * d;
        if (fabs(d) < LENTZ_TINY) d = LENTZ_TINY;
        c = 1 + step / c;
        if (fabs(c) < LENTZ_TINY) c = LENTZ_TINY;
        d = 1 / d;
        h *= d * c;
        step = -(a + m) * (a + b + m) * x / ((a + m2) * (a + 1 + m2));
        d = 1 + step * d;
        if (fabs(d) < LENTZ_TINY) d = LENTZ_TINY;
        c = 1 + step / c;
        if (fabs(c) < LENTZ_TINY) c = LENTZ_TINY;
        d = 1 / d;
        double change = d * c;
        h *= change;
        if (fabs(change - 1) < LENTZ_EPS) return h;
    }
    return NAN;
}

/* A point of the beta distribution, with what the prefactor needs without
 * cancellation: x + y = 1, x0 = a/(a+b), y0 = b/(a+b), t1 = x/x0 - 1 and
 * l1 = log(x/x0), t2 = y/y0 - 1 and l2 = log(y/y0). */
typedef struct {
    double x, y;    /* the point and its complement */
    double t1, l1;  /* x/x0 - 1 and its log1p */
    double t2, l2;  /* y/y0 - 1 and its log1p */
} beta_point;

/* log I_x(a, b). */
static double log_beta_ratio(double a, double b, const beta_point *p)
{
    double lo = a < b ? a : b, hi = a < b ? b : a;
    double prefix = -a * phi(p->t1, p->l1) - b * phi(p->t2, p->l2) +
                    0.5 * (log(lo) - log1p(lo / hi) - LOG_2PI) - stirling_delta(a) -
                    stirling_delta(b) + stirling_delta(a + b);
    if (p->x < (a + 1) / (a + b + 2)) return prefix - log(a) + log(beta_fraction(p->x, a, b));
    /* I_x(a, b) = 1 - I_y(b, a), the latter by its own fraction. */
    return log1p(-exp(prefix - log(b) + log(beta_fraction(p->y, b, a))));
}

double logp_f_upper(double f, double df1, double df2)
{
    if (!(f > 0) || isinf(f) || !(df1 > 0) || !(df2 > 0) || isinf(df1) || isinf(df2)) return NAN;
    /* Q = I_v(a, b) with a = df2/2, b = df1/2, v = df2 / (df2 + df1 f),
     * r = df2/df1; every quantity from f/r or r/f, whichever is below 1. */
    double a = df2 / 2, b = df1 / 2, r = df2 / df1;
    double log_x0 = -log1p(1 / r), log_y0 = -log1p(r);
    beta_point p;
    if (f <= r) {
        double w = f / r;
        p.x = 1 / (1 + w);
        p.y = w / (1 + w);
        p.l1 = -log1p(w) - log_x0;
        p.l2 = log(w) - log1p(w) - log_y0;
        p.t1 = (1 - f) / (r + f);
        p.t2 = (f - 1) / (1 + w);
    } else {
        double s = r / f;
        p.x = s / (1 + s);
        p.y = 1 / (1 + s);
        p.l1 = log(r) - log(f) - log1p(s) - log_x0;
        p.l2 = -log1p(s) - log_y0;
        p.t1 = (1 / f - 1) / (s + 1);
        p.t2 = r * (1 - 1 / f) / (1 + s);
    }
    return log_beta_ratio(a, b, &p);
}

/* ---- incomplete gamma ------------------------------------------------------- */

/* log(x^a e^-x / Gamma(a)), x = a (1 + mu). */
static double log_gamma_prefix(double a, double x, double mu)
{
    return -a * phi(mu, log(x) - log(a)) + 0.5 * (log(a) - LOG_2PI) - stirling_delta(a);
}

/* log Q(a, x) by Legendre's continued fraction (x > a + 1). */
static double log_gamma_upper_fraction(double a, double x)
{
    double bb = x + 1 - a, c = 1 / LENTZ_TINY, d = 1 / bb, h = d;
    for (int i = 1; i <= LENTZ_STEPS; i++) {
        double an = -i * (i - a);
        bb += 2;
        d = an * d + bb;
        if (fabs(d) < LENTZ_TINY) d = LENTZ_TINY;
        c = bb + an / c;
        if (fabs(c) < LENTZ_TINY) c = LENTZ_TINY;
        d = 1 / d;
        double change = d * c;
        h *= change;
        if (fabs(change - 1) < LENTZ_EPS)
            return log_gamma_prefix(a, x, (x - a) / a) + log(h);
    }
    return NAN;
}

/* log Q(a, x) = log(1 - P(a, x)), P by its power series (x <= a + 1). */
static double log_gamma_upper_series(double a, double x)
{
    double term = 1 / a, sum = term;
    for (int n = 1; n < LENTZ_STEPS; n++) {
        term *= x / (a + n);
        sum += term;
        if (term < sum * 1e-17) break;
    }
    /* x^a e^-x / Gamma(a+1) = prefix / a; sum already holds the 1/a. */
    return log1p(-exp(log_gamma_prefix(a, x, (x - a) / a) + log(sum)));
}

/* log Q(a, x) by Temme's expansion, a large. */
static double log_gamma_upper_temme(double a, double x)
{
    double mu = (x - a) / a;
    double half_eta2 = phi(mu, log(x) - log(a));
    double eta = sqrt(2 * half_eta2);
    if (mu < 0) eta = -eta;
    double c0, c1;
    if (fabs(eta) < 1e-3) c0 = -1.0 / 3 + eta / 12 - 2 * eta * eta / 135;
    else c0 = 1 / mu - 1 / eta;
    if (fabs(eta) < 0.03) c1 = -1.0 / 540 - eta / 288 + eta * eta / 378;
    else c1 = 1 / (eta * eta * eta) - 1 / (mu * mu * mu) - 1 / (mu * mu) - 1 / (12 * mu);
    double series = (c0 + c1 / a) / sqrt(2 * M_PI * a);
    if (eta <= 0) /* Q >= 1/2: no underflow to guard against */
        return log(0.5 * erfc(eta * sqrt(a / 2)) + exp(-a * half_eta2) * series);
    return -a * half_eta2 + log(0.5 * erfcx(eta * sqrt(a / 2)) + series);
}

double logp_chi2_upper(double x, double df)
{
    if (!(x > 0) || isinf(x) || !(df > 0) || isinf(df)) return NAN;
    double a = df / 2, h = x / 2;
    if (a > 2.5e4) return log_gamma_upper_temme(a, h);
    if (h > a + 1) return log_gamma_upper_fraction(a, h);
    return log_gamma_upper_series(a, h);
}

/* ---- multiple testing ------------------------------------------------------- */

int logp_benjamini_hochberg(const double *log10_p, size_t n, double *log10_q)
{
    size_t m;
    size_t *order = stat_order_finite(log10_p, n, &m);
    if (!order) {
        for (size_t i = 0; i < n; i++) log10_q[i] = NAN;
        return -1;
    }
    double running = 0, log_m = log10((double)m);
    for (size_t k = m; k-- > 0;) {
        double v = log10_p[order[k]] + (log_m - log10((double)(k + 1)));
        if (v < running) running = v;
        log10_q[order[k]] = running; /* after reading log10_p[order[k]]: they may alias */
    }
    for (size_t i = 0; i < n; i++)
        if (isnan(log10_p[i])) log10_q[i] = NAN;
    free(order);
    return 0;
}

/* ---- text ------------------------------------------------------------------- */

int logp_format(char *buf, size_t len, double log10_value, int digits)
{
    if (isnan(log10_value)) return snprintf(buf, len, "-");
    if (log10_value == -INFINITY) return snprintf(buf, len, "0");
    if (digits < 1) digits = 1;
    if (digits > 17) digits = 17;
    if (log10_value > -300) return snprintf(buf, len, "%.*g", digits, pow(10, log10_value));
    /* m.mmm e E with 1 <= m < 10 from the logarithm; the mantissa is rounded
     * first, so that 9.996 becomes 1.00 of the next power. */
    double e = floor(log10_value), scale = pow(10, digits - 1);
    double mant = round(pow(10, log10_value - e) * scale) / scale;
    if (mant >= 10) {
        mant /= 10;
        e += 1;
    }
    /* %g's form: no trailing zeros of the mantissa. */
    char m[40];
    snprintf(m, sizeof m, "%.*f", digits - 1, mant);
    char *end = m + strlen(m);
    if (strchr(m, '.')) {
        while (end[-1] == '0') *--end = '\0';
        if (end[-1] == '.') *--end = '\0';
    }
    return snprintf(buf, len, "%se%.0f", m, e);
}
