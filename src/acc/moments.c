/* moments: see moments.h.
 *
 * Merge (Pébay 2008, with d = mean_b - mean_a, n = na + nb):
 *   mean = mean_a + d nb / n
 *   M2 = M2a + M2b + d^2 na nb / n
 *   M3 = M3a + M3b + d^3 na nb (na - nb) / n^2 + 3 d (na M2b - nb M2a) / n
 *   M4 = M4a + M4b + d^4 na nb (na^2 - na nb + nb^2) / n^3
 *        + 6 d^2 (na^2 M2b + nb^2 M2a) / n^2 + 4 d (na M3b - nb M3a) / n
 * When the two states have different references, d also carries the exact
 * decimal difference of the references (number_difference).
 */
#include "io/clones.h"
#include "acc/moments.h"
#include "acc/four.h"

#include <math.h>
#include <string.h>

void moments_init(moments *m)
{
    memset(m, 0, sizeof *m);
    m->min = INFINITY;
    m->max = -INFINITY;
}

void moments_set_ref(moments *m, const number_decimal *ref)
{
    if (m->has_ref) return;
    m->ref = *ref;
    m->has_ref = 1;
}

/* Combines (nb, mb, M2b..M4b) into m, where mb is already in m's frame. */
static void combine(moments *m, double nb_, double mb, double m2b, double m3b, double m4b)
{
    double na = (double)m->n, nb = nb_, n = na + nb;
    double d = mb - m->mean, d2 = d * d;
    double m2a = m->m2, m3a = m->m3;
    m->m4 += m4b + d2 * d2 * na * nb * (na * na - na * nb + nb * nb) / (n * n * n) +
             6.0 * d2 * (na * na * m2b + nb * nb * m2a) / (n * n) +
             4.0 * d * (na * m3b - nb * m3a) / n;
    m->m3 += m3b + d2 * d * na * nb * (na - nb) / (n * n) + 3.0 * d * (na * m2b - nb * m2a) / n;
    moments_pair_merge(na, &m->mean, &m->m2, nb, mb, m2b);
}

SHEAF_HOT void moments_add_block(moments *m, const double *dev, size_t count)
{
    if (count == 0) return;
    /* Both passes in four lanes (acc/four.h): one chain per sum waited on
     * every addition. */
    four_doubles acc = FOUR_OF(0.0), v;
    size_t i = 0;
    for (; i + 4 <= count; i += 4) {
        four_get(&v, dev + i);
        acc += v;
    }
    for (size_t u = 0; i < count; i++, u++) acc[u] += dev[i];
    double mean = four_total(&acc) / (double)count;
    four_doubles c4 = FOUR_OF(0.0), q2 = c4, q3 = c4, q4 = c4;
    const four_doubles mv = FOUR_OF(mean);
    for (i = 0; i + 4 <= count; i += 4) {
        four_get(&v, dev + i);
        four_doubles e = v - mv, e2 = e * e;
        c4 += e;
        q2 += e2;
        q3 += e2 * e;
        q4 += e2 * e2;
    }
    for (size_t u = 0; i < count; i++, u++) {
        double e = dev[i] - mean, e2 = e * e;
        c4[u] += e;
        q2[u] += e2;
        q3[u] += e2 * e;
        q4[u] += e2 * e2;
    }
    double corr = four_total(&c4), s2 = four_total(&q2), s3 = four_total(&q3),
           s4 = four_total(&q4);
    /* Second pass correction of the block mean (Björck; Chan et al. 1983). */
    mean += corr / (double)count;
    s2 -= corr * corr / (double)count;
    if (s2 < 0) s2 = 0; /* rounding of the correction; a sum of squares is never negative */
    if (m->n == 0) {
        m->n = count;
        m->mean = mean;
        m->m2 = s2;
        m->m3 = s3;
        m->m4 = s4;
        return;
    }
    combine(m, (double)count, mean, s2, s3, s4);
    m->n += count;
}

void moments_merge(moments *into, const moments *from)
{
    if (from->n == 0) {
        if (!into->has_ref && from->has_ref) moments_set_ref(into, &from->ref);
        return;
    }
    if (from->min < into->min) into->min = from->min;
    if (from->max > into->max) into->max = from->max;
    if (into->n == 0) {
        double mn = into->min, mx = into->max;
        *into = *from;
        into->min = mn;
        into->max = mx;
        return;
    }
    double shift = 0;
    if (from->has_ref && into->has_ref) shift = number_difference(&from->ref, &into->ref, NULL);
    combine(into, (double)from->n, from->mean + shift, from->m2, from->m3, from->m4);
    into->n += from->n;
}

double moments_mean(const moments *m)
{
    if (m->n == 0) return NAN;
    return m->has_ref ? m->ref.value + m->mean : m->mean;
}

double moments_variance(const moments *m)
{
    return m->n < 2 ? NAN : m->m2 / (double)(m->n - 1);
}

double moments_skewness(const moments *m)
{
    if (m->n < 2 || m->m2 <= 0) return NAN;
    return sqrt((double)m->n) * m->m3 / pow(m->m2, 1.5);
}

double moments_kurtosis(const moments *m)
{
    if (m->n < 2 || m->m2 <= 0) return NAN;
    return (double)m->n * m->m4 / (m->m2 * m->m2) - 3.0;
}

void moments_write(const moments *m, wire_writer *w)
{
    wire_put_u64(w, m->n);
    wire_put_f64(w, m->mean);
    wire_put_f64(w, m->m2);
    wire_put_f64(w, m->m3);
    wire_put_f64(w, m->m4);
    wire_put_f64(w, m->min);
    wire_put_f64(w, m->max);
    wire_put_u8(w, (uint8_t)m->has_ref);
    wire_put_f64(w, m->ref.value);
    wire_put_u64(w, m->ref.mantissa);
    wire_put_i64(w, m->ref.exp10);
    wire_put_u8(w, m->ref.negative);
    wire_put_u8(w, m->ref.exact);
}

int moments_read(moments *m, wire_reader *r)
{
    moments_init(m);
    m->n = wire_get_u64(r);
    m->mean = wire_get_f64(r);
    m->m2 = wire_get_f64(r);
    m->m3 = wire_get_f64(r);
    m->m4 = wire_get_f64(r);
    m->min = wire_get_f64(r);
    m->max = wire_get_f64(r);
    m->has_ref = wire_get_u8(r);
    m->ref.value = wire_get_f64(r);
    m->ref.mantissa = wire_get_u64(r);
    int64_t e = wire_get_i64(r);
    m->ref.negative = wire_get_u8(r);
    m->ref.exact = wire_get_u8(r);
    if (e < INT32_MIN || e > INT32_MAX || m->has_ref > 1 || m->ref.negative > 1 ||
        m->ref.exact > 1)
        r->failed = 1;
    m->ref.exp10 = (int32_t)e;
    if (!r->failed && !moments_valid(m)) r->failed = 1;
    return r->failed ? -1 : 0;
}

int moments_spread_allows_overflow(double min, double max)
{
    /* Fourth powers of deviations below 2^200 times a count below 2^64 stay
     * far below DBL_MAX (2^1024); only a wider spread can overflow. */
    return !(max - min < 0x1p200);
}

int moments_mean_plausible(double mean, double min, double max)
{
    /* |mean| <= max - min exactly (the frame lies in [min, max]); the slack
     * covers decimals that round to the same double and summation rounding. */
    double spread = max - min, scale = fmax(fabs(min), fabs(max));
    return fabs(mean) <= 2.0 * spread + 0x1p-30 * scale + 0x1p-1000;
}

int moments_valid(const moments *m)
{
    if (m->n == 0) {
        /* The frame is set by the first value, which is also counted. */
        static const number_decimal zero;
        return !m->has_ref && memcmp(&m->ref, &zero, sizeof zero) == 0 && m->mean == 0 &&
               m->m2 == 0 && m->m3 == 0 && m->m4 == 0 && m->min == INFINITY &&
               m->max == -INFINITY;
    }
    if (!m->has_ref || !isfinite(m->min) || !isfinite(m->max) || !(m->min <= m->max) ||
        !isfinite(m->ref.value) || m->ref.value < m->min || m->ref.value > m->max)
        return 0;
    /* One number: its deviation from the frame, 0 unless the cell has more
     * digits than the frame keeps (19: number_frame), then a sliver. */
    if (m->n == 1)
        return m->m2 == 0 && m->m3 == 0 && m->m4 == 0 && moments_mean_plausible(m->mean, m->min, m->max);
    if (m->m2 < 0 || m->m4 < 0) return 0;
    if (moments_spread_allows_overflow(m->min, m->max)) return 1;
    return isfinite(m->mean) && isfinite(m->m2) && isfinite(m->m3) && isfinite(m->m4) &&
           moments_mean_plausible(m->mean, m->min, m->max);
}
