#!/usr/bin/python3
"""Writes tests/logp_reference.h: reference values of log10 p for the upper
tails of F and chi-squared, from mpmath (Debian's python3-mpmath 1.2.1) at
50 significant digits, for tests/test_logp.c and tests/test_stat.c.

    /usr/bin/python3 tests/logp_reference.py > tests/logp_reference.h

Method (independent of sheaf's continued fractions and expansions): the tail
is the integral of the density, evaluated by mpmath's tanh-sinh quadrature
on the logarithmic scale so that nothing underflows,
  F:    Q = I_v(b, a) = int_0^v t^(b-1) (1-t)^(a-1) dt / B(b, a),
        a = df1/2, b = df2/2, v = df2 / (df2 + df1 f);
  chi2: Q = int_{x/2}^inf t^(k-1) e^-t dt / Gamma(k),  k = df/2,
with the integrand divided by its value at the end point and the interval
cut at the end point plus 1, 4, 16 ... times its decay length.  Where
mpmath's own betainc / gammainc converge (small df), the script checks that
they agree with the quadrature to 30 digits, and where they do not (both df
near 1e9) that the quadrature at 70 digits agrees with it at 50; it stops
otherwise.

Three tables: F and chi-squared over a range of df, and F around the switch
of stat.c's F tail to its large-df2 limit (df1 1..300, df2 1e7..1e9).  The
statistics are chosen so that log10 p is near -5, -20, -100, -300, -1000,
-10000 and -100000 (-2 to -300 for the third table) where a statistic
below 1e300 reaches it: regula falsi on the log of the statistic over the
same quadrature at 20 digits, then rounded to 7 significant digits; the
reference is computed at 50 digits at that rounded value.
"""
import sys

import mpmath as mp

mp.mp.dps = 50
TARGETS = [-5, -20, -100, -300, -1000, -10000, -100000]

F_DF = [(1, 1), (1, 10), (5, 10), (2, 92.21114532045739), (3, 700), (1, 1000),
        (1000, 1000), (4, 3e5), (10, 1e6), (19, 3e7), (30, 1e7), (1, 1e8),
        (1, 1e9), (2, 1e9), (19, 1e9), (1e5, 1e9), (1e9, 1e5), (1e9, 1), (1e6, 1e6),
        (1e7, 1e9), (1e8, 1e8), (1e9, 1e9)]
CHI2_DF = [1, 2, 3, 10, 100, 1000, 4e4, 6e4, 1e5, 1e6, 1e7, 1e8, 1e9]
# Around the switch of stat.c's F tail between the incomplete beta ratio and
# the gamma limit (large df2): p itself, not only log10 p, is checked there.
SWITCH_DF1 = [1, 19, 100, 300]
SWITCH_DF2 = [1e7, 3e7, 1e8, 3e8, 1e9]
SWITCH_TARGETS = [-2, -5, -20, -100, -300]


def quad_tail(logg, slope, length):
    """log of int_0^length exp(logg(w)) dw, logg(0) = 0, with the integrand
    decaying at rate slope near 0.  The variable is scaled to the decay
    length s (w = s z), because mpmath's quadrature tests convergence on
    absolute sizes, and the interval is cut at z = 1, 4, 16 ..."""
    s = 1 / slope if slope > 0 else length
    if s > length:
        s = length
    end = length / s
    pts = [mp.mpf(0)]
    k = mp.mpf(1)
    while k < end and k < 4096:
        pts.append(k)
        k *= 4
    pts.append(end)
    return mp.log(s) + mp.log(mp.quad(lambda z: mp.exp(logg(min(s * z, length))), pts))


def ln_f_upper(f, d1, d2):
    f, d1, d2 = mp.mpf(f), mp.mpf(d1), mp.mpf(d2)
    a, b = d1 / 2, d2 / 2
    v = d2 / (d2 + d1 * f)
    u = d1 * f / (d2 + d1 * f)
    logg = lambda w: (b - 1) * mp.log1p(-w / v) + (a - 1) * mp.log1p(w / u)  # noqa: E731
    integral = quad_tail(logg, (b - 1) / v - (a - 1) / u, v)
    return ((b - 1) * mp.log(v) + (a - 1) * mp.log(u) + integral
            - (mp.loggamma(a) + mp.loggamma(b) - mp.loggamma(a + b)))


def ln_chi2_upper(x, df):
    h, k = mp.mpf(x) / 2, mp.mpf(df) / 2
    logg = lambda w: (k - 1) * mp.log1p(w / h) - w  # noqa: E731
    integral = quad_tail(logg, 1 - (k - 1) / h, mp.inf)
    return (k - 1) * mp.log(h) - h + integral - mp.loggamma(k)


def solve(exact, target_ln, lo, hi):
    """The statistic where exact(stat) = ln Q is within 0.5 of target_ln
    (regula falsi with the Illinois step on log stat, at 20 digits), rounded
    to 7 significant digits; None when [lo, hi] does not bracket it."""
    with mp.workdps(20):
        lo, hi = mp.log(lo), mp.log(hi)
        g_lo, g_hi = exact(mp.exp(lo)) - target_ln, exact(mp.exp(hi)) - target_ln
        if g_lo < 0 or g_hi > 0:
            return None
        side = 0
        for _ in range(100):
            mid = hi - g_hi * (hi - lo) / (g_hi - g_lo)
            g = exact(mp.exp(mid)) - target_ln
            if abs(g) < 0.5:
                break
            if g > 0:
                lo, g_lo = mid, g
                if side == 1:
                    g_hi /= 2
                side = 1
            else:
                hi, g_hi = mid, g
                if side == -1:
                    g_lo /= 2
                side = -1
        return float(mp.nstr(mp.exp(mid), 7))


def main():
    ln10 = mp.log(10)
    # The quadrature against mpmath's own functions where they converge.
    for f, d1, d2 in [(100, 3, 1e6), (1370, 1, 1e9), (50, 5, 10), (3.5, 1000, 1000),
                      (7.55475e60, 1, 10), (2.5e5, 3, 700)]:
        a, b = mp.mpf(d1) / 2, mp.mpf(d2) / 2
        v = mp.mpf(d2) / (mp.mpf(d2) + mp.mpf(d1) * f)
        want = mp.log(mp.betainc(b, a, 0, v, regularized=True))
        got = ln_f_upper(f, d1, d2)
        if abs(got - want) > mp.mpf(10) ** -30 * abs(want):
            sys.exit("quadrature disagrees with mpmath.betainc at F %r on (%r, %r)" % (f, d1, d2))
    for x, df in [(30, 5), (1500, 2), (48485.28137423857, 40000), (921034, 1)]:
        want = mp.log(mp.gammainc(mp.mpf(df) / 2, mp.mpf(x) / 2, mp.inf, regularized=True))
        got = ln_chi2_upper(x, df)
        if abs(got - want) > mp.mpf(10) ** -30 * abs(want):
            sys.exit("quadrature disagrees with mpmath.gammainc at chi2 %r on %r" % (x, df))

    # Where mpmath's functions do not converge (both df near 1e9): the same
    # quadrature at 70 digits.
    for f, d1, d2 in [(1.04385, 1e9, 1e9), (1.00135, 1e9, 1e9), (460594.2, 1, 1e9)]:
        got = ln_f_upper(f, d1, d2)
        with mp.workdps(70):
            want = ln_f_upper(f, d1, d2)
        if abs(got - want) > mp.mpf(10) ** -30 * abs(want):
            sys.exit("quadrature unstable at F %r on (%r, %r)" % (f, d1, d2))
    for x, df in [(1.03066e9, 1e9), (1.0006e8, 1e8)]:
        got = ln_chi2_upper(x, df)
        with mp.workdps(70):
            want = ln_chi2_upper(x, df)
        if abs(got - want) > mp.mpf(10) ** -30 * abs(want):
            sys.exit("quadrature unstable at chi2 %r on %r" % (x, df))

    out = sys.stdout
    out.write("/* Generated by tests/logp_reference.py (mpmath %s, %d digits): log10 of\n"
              " * the upper tail of F and chi-squared by quadrature of the density.  Do\n"
              " * not edit; rerun the script. */\n" % (mp.__version__, mp.mp.dps))
    out.write("typedef struct { double stat, df1, df2, log10_p; } logp_reference;\n\n")
    out.write("static const logp_reference logp_reference_f[] = {\n")
    for d1, d2 in F_DF:
        for t in TARGETS:
            f = solve(lambda s: ln_f_upper(s, d1, d2), t * ln10, 1.0, 1e300)
            if f is None:
                continue
            ref = ln_f_upper(f, d1, d2) / ln10
            out.write("    {%r, %r, %r, %s},\n" % (f, float(d1), float(d2), mp.nstr(ref, 20)))
    out.write("};\n\nstatic const logp_reference logp_reference_chi2[] = {\n")
    for df in CHI2_DF:
        for t in TARGETS:
            hi = 4 * (-t * 2.31 + df + (df * -t * 2.31) ** 0.5) + 100  # above x/2 = -ln Q + df/2 + ...
            x = solve(lambda s: ln_chi2_upper(s, df), t * ln10, float(df), hi)
            if x is None:
                continue
            ref = ln_chi2_upper(x, df) / ln10
            out.write("    {%r, %r, 0, %s},\n" % (x, float(df), mp.nstr(ref, 20)))
    out.write("};\n\nstatic const logp_reference logp_reference_f_switch[] = {\n")
    for d1 in SWITCH_DF1:
        for d2 in SWITCH_DF2:
            for t in SWITCH_TARGETS:
                f = solve(lambda s: ln_f_upper(s, d1, d2), t * ln10, 1.0, 1e300)
                ref = ln_f_upper(f, d1, d2) / ln10
                out.write("    {%r, %r, %r, %s},\n" % (f, float(d1), float(d2), mp.nstr(ref, 20)))
    out.write("};\n")


if __name__ == "__main__":
    main()
