/* number: decimal cells to correctly rounded doubles (see number.h).
 *
 * Scan.  One pass over the cell keeps the first 19 significant digits as an
 * integer mantissa m (10^19 - 1 < 2^64, so it cannot overflow) and a power of
 * ten e, so that the text reads m * 10^e.  Leading zeros are not significant.
 * Digits after the 19th are dropped: in the integer part each one raises e;
 * if every dropped digit is zero the pair (m, e) is still exact.  Explicit
 * exponents saturate at 10^9, so absurd exponents cannot overflow.
 *
 * Conversion.  Clinger (1990), "How to read floating point numbers
 * accurately", PLDI '90: when m <= 2^53 and |e| <= 22 both m and 10^|e| are
 * doubles exactly, so one IEEE multiply or divide rounds the exact product or
 * quotient once and is correctly rounded.  Two cheap extensions keep more
 * inputs on that path: for 22 < e <= 37, m * 10^(e-22) is formed in integer
 * arithmetic when it stays <= 2^53 (then times 1e22); and number_to_double()
 * first strips trailing zeros from a mantissa above 2^53.  The fast path
 * needs double evaluation in double precision (FLT_EVAL_METHOD == 0, e.g.
 * SSE2); elsewhere it is compiled out and every conversion uses strtod().
 *
 * Fallback.  Everything else goes to strtod() (glibc rounds correctly for any
 * length).  Its input is rebuilt in a stack buffer as "<digits>e<exponent>":
 * the cell's significant digits, or the digits of m for number_to_double().
 * With no decimal point the locale's radix character never matters; errno is
 * restored afterwards.  Cells with more significant digits than the buffer
 * holds (NUMBER_KEEP_DIGITS = 800) are not treated as text: the digits are
 * truncated to 800 and, when a dropped digit is nonzero, a final '1' is
 * appended as a sticky digit.  A decimal midpoint between adjacent doubles
 * (odd * 2^q, q >= -1075) has at most 768 significant digits, so no midpoint
 * lies between the truncated text and the full one, and the rounding is the
 * same.  Magnitudes beyond 10^310 become infinity, below 10^-330 zero,
 * before strtod() sees them.
 *
 * Range.  A finite text that rounds to infinity is NUMBER_NONFINITE (value
 * +-inf); one that underflows is a finite zero (value +-0, mantissa and
 * exponent as written).  An exponent outside int32 leaves exact = 0.
 *
 * Difference.  Both mantissas are scaled to the smaller exponent s in 128-bit
 * integers (m < 10^19, shift <= 19, product < 10^38 < 2^127); the difference
 * d, when it fits int64, is rounded once by number_to_double(|d|, s).
 *
 * Wide cells.  A cell of 20 to 38 significant digits keeps the digits after
 * the 19th in `tail` (19 at most), so its whole significand w = mantissa
 * 10^t + tail is below 10^38 < 2^127.  Differences involving one are taken
 * the same way on w in 128-bit integers (scaled to the smaller power of ten
 * while they stay below 2^127) and rounded once, through strtod of the
 * integer's digits when it passes 2^64.  When a scaled significand would not
 * fit, the two values differ by more than a factor of 1.7 and the
 * floating-point difference a.value - b.value is within a few ulps.  A frame
 * (number_frame) is never wide: the first 19 digits, or one unit more when
 * those read as another double, so that the frame's double is the cell's
 * and the format keeps its 19-digit decimals.
 */
#include "io/number.h"

#include <errno.h>
#include "io/number_simd.h"
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

#define NUMBER_KEEP_DIGITS 800 /* significant digits handed to strtod() */
#define NUMBER_TWO53 (UINT64_C(1) << 53)

__extension__ typedef __int128 number_wide;

const double number_pow10[23] = {
    1e0,  1e1,  1e2,  1e3,  1e4,  1e5,  1e6,  1e7,  1e8,  1e9,  1e10, 1e11,
    1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22,
};

const int64_t number_pow10_i64[16] = {
    INT64_C(1),           INT64_C(10),           INT64_C(100),           INT64_C(1000),
    INT64_C(10000),       INT64_C(100000),       INT64_C(1000000),       INT64_C(10000000),
    INT64_C(100000000),   INT64_C(1000000000),   INT64_C(10000000000),   INT64_C(100000000000),
    INT64_C(1000000000000), INT64_C(10000000000000), INT64_C(100000000000000),
    INT64_C(1000000000000000),
};

/* (2^52 - 1) / 10^k: the largest m with m * 10^k < 2^52. */
const uint64_t number_below52[16] = {
    UINT64_C(4503599627370495), UINT64_C(450359962737049), UINT64_C(45035996273704),
    UINT64_C(4503599627370),    UINT64_C(450359962737),    UINT64_C(45035996273),
    UINT64_C(4503599627),       UINT64_C(450359962),       UINT64_C(45035996),
    UINT64_C(4503599),          UINT64_C(450359),          UINT64_C(45035),
    UINT64_C(4503),             UINT64_C(450),             UINT64_C(45),
    UINT64_C(4),
};

static const uint64_t pow10_u64[20] = {
    UINT64_C(1),
    UINT64_C(10),
    UINT64_C(100),
    UINT64_C(1000),
    UINT64_C(10000),
    UINT64_C(100000),
    UINT64_C(1000000),
    UINT64_C(10000000),
    UINT64_C(100000000),
    UINT64_C(1000000000),
    UINT64_C(10000000000),
    UINT64_C(100000000000),
    UINT64_C(1000000000000),
    UINT64_C(10000000000000),
    UINT64_C(100000000000000),
    UINT64_C(1000000000000000),
    UINT64_C(10000000000000000),
    UINT64_C(100000000000000000),
    UINT64_C(1000000000000000000),
    UINT64_C(10000000000000000000),
};

static inline unsigned digit_of(unsigned char c) { return (unsigned)c - '0'; }

/* Clinger's exact case: m and 10^|e| exact doubles, one rounding. */
static inline int fast_path(uint64_t m, int64_t e, double *v)
{
#if defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
    if (m > NUMBER_TWO53) return 0;
    if (e >= 0) {
        if (e > 22) {
            int64_t k = e - 22;
            if (k > 15 || m > NUMBER_TWO53 / pow10_u64[k]) return 0;
            m *= pow10_u64[k];
            e = 22;
        }
        *v = (double)m * number_pow10[e];
        return 1;
    }
    if (e < -22) return 0;
    *v = (double)m / number_pow10[-e];
    return 1;
#else
    (void)m, (void)e, (void)v;
    return 0;
#endif
}

/* strtod() of buf[0..n) digits followed by "e<exp10>"; buf has room for 24
 * more bytes.  No radix character, so the locale does not matter. */
static double strtod_digits(char *buf, size_t n, int64_t exp10)
{
    char rev[24];
    int k = 0;
    uint64_t u = exp10 < 0 ? (uint64_t)0 - (uint64_t)exp10 : (uint64_t)exp10;
    buf[n++] = 'e';
    if (exp10 < 0) buf[n++] = '-';
    do {
        rev[k++] = (char)('0' + u % 10);
        u /= 10;
    } while (u);
    while (k) buf[n++] = rev[--k];
    buf[n] = '\0';
    int saved = errno;
    double v = strtod(buf, NULL);
    errno = saved;
    return v;
}

/* m * 10^e for m != 0 when the fast path does not apply. */
static double slow_path(uint64_t m, int64_t e)
{
    /* 1 <= m < 2^64 < 10^20, so the value lies in [10^e, 10^(e+20)). */
    if (e > 310) return HUGE_VAL;
    if (e < -350) return 0.0;
    char buf[20 + 24], rev[20];
    size_t n = 0;
    int k = 0;
    do {
        rev[k++] = (char)('0' + m % 10);
        m /= 10;
    } while (m);
    while (k) buf[n++] = rev[--k];
    return strtod_digits(buf, n, e);
}

double number_to_double(uint64_t mantissa, int32_t exp10, int negative)
{
    double v;
    int64_t e = exp10;
    if (mantissa == 0) {
        v = 0.0;
    } else if (!fast_path(mantissa, e, &v)) {
        while (mantissa % 10 == 0) {
            mantissa /= 10;
            e++;
        }
        if (!fast_path(mantissa, e, &v)) v = slow_path(mantissa, e);
    }
    return negative ? -v : v;
}

/* Appends the digits [p, end) to buf[0..*n) up to NUMBER_KEEP_DIGITS;
 * returns nonzero when a dropped digit is nonzero. */
static int keep_digits(char *buf, size_t *n, const unsigned char *p, const unsigned char *end)
{
    size_t len = (size_t)(end - p), room = NUMBER_KEEP_DIGITS - *n;
    size_t take = len < room ? len : room;
    memcpy(buf + *n, p, take);
    *n += take;
    for (p += take; p < end; p++)
        if (*p != '0') return 1;
    return 0;
}

/* Value of the digits in [p, end) (with at most one '.') times 10^exp10,
 * for cells off the fast path; see the opening comment. */
static double text_value(const unsigned char *p, const unsigned char *end, int64_t exp10)
{
    char buf[NUMBER_KEEP_DIGITS + 1 + 24];
    size_t n = 0;
    const unsigned char *dot = memchr(p, '.', (size_t)(end - p));
    const unsigned char *integer_end = dot ? dot : end;
    while (p < integer_end && *p == '0') p++;
    int64_t point = integer_end - p; /* value = 0.<buf> * 10^(point + exp10) */
    int sticky = keep_digits(buf, &n, p, integer_end);
    if (dot) {
        p = dot + 1;
        if (n == 0)
            for (; p < end && *p == '0'; p++) point--;
        sticky |= keep_digits(buf, &n, p, end);
    }
    if (sticky) buf[n++] = '1';
    int64_t magnitude = point + exp10; /* value in [10^(magnitude-1), 10^magnitude) */
    if (magnitude > 310) return HUGE_VAL;
    if (magnitude < -330) return 0.0;
    return strtod_digits(buf, n, magnitude - (int64_t)n);
}

static int equal_fold(const unsigned char *p, size_t n, const char *lower)
{
    size_t i = 0;
    for (; i < n && lower[i]; i++)
        if ((p[i] | 0x20) != (unsigned char)lower[i]) return 0;
    return i == n && lower[i] == '\0';
}

/* The common cell, "[-]digits[.digits][e[+-]digits]" with at most 19 digits
 * and at most 4 exponent digits; -1 sends anything else to the general
 * parser below.  It yields the same mantissa and power as the general path
 * (leading zeros add nothing to the mantissa). */
/* Adds the digits at *pp to *m (m = m * 10 + digit each); stops at the
 * first non-digit.  (Eight-at-a-time SWAR conversion was tried: most cells
 * are shorter than eight digits and it cost more than it saved.) */
static inline void take_digits(const unsigned char **pp, const unsigned char *end, uint64_t *m)
{
    const unsigned char *p = *pp;
    uint64_t v = *m;
    unsigned d;
    while (p < end && (d = (unsigned)*p - '0') < 10) {
        v = v * 10 + d;
        p++;
    }
    *pp = p;
    *m = v;
}

static inline int parse_plain(const unsigned char *p, const unsigned char *end,
                              number_decimal *out)
{
    int negative = *p == '-';
    p += negative;
    const unsigned char *start = p;
    uint64_t m = 0;
    unsigned d;
    take_digits(&p, end, &m);
    size_t digits = (size_t)(p - start);
    int64_t e = 0;
    if (p < end && *p == '.') {
        const unsigned char *f = ++p;
        take_digits(&p, end, &m);
        e = -(int64_t)(p - f);
        digits += (size_t)(p - f);
    }
    if (digits == 0 || digits > 19) return -1;
    if (p < end) {
        if ((*p | 0x20) != 'e') return -1;
        p++;
        int exponent_negative = 0;
        if (p < end && (*p == '-' || *p == '+')) exponent_negative = *p++ == '-';
        const unsigned char *x = p;
        int64_t exponent = 0;
        while (p < end && p - x < 4 && (d = (unsigned)*p - '0') < 10) {
            exponent = exponent * 10 + d;
            p++;
        }
        if (p != end || p == x) return -1;
        e += exponent_negative ? -exponent : exponent;
    }
    double v;
    if (m == 0) {
        e = 0;
        v = 0.0;
    } else if (!fast_path(m, e, &v)) {
        return -1;
    }
    number_set_exact(out, v, m, e, negative);
    return NUMBER_FINITE;
}

static number_kind parse_general(const unsigned char *p, const unsigned char *end,
                                 number_decimal *out) __attribute__((noinline));

/* The digits after the 19th significant one: the next 19 as an integer,
 * and whether a non-zero digit lies beyond them (the 39th on). */
typedef struct {
    uint64_t value;  /* digits 20 .. 19 + digits */
    int digits;      /* how many (at most 19) */
    unsigned beyond; /* OR of the digits past the 38th */
} number_tail;

static inline void tail_take(number_tail *t, unsigned d)
{
    if (t->digits < 19) {
        t->value = t->value * 10 + d;
        t->digits++;
    } else {
        t->beyond |= d;
    }
}

int number_simd_usable(void)
{
#if defined(NUMBER_SIMD)
    static int usable = -1; /* benign race: every thread stores the same value */
    if (usable < 0) {
        __builtin_cpu_init();
        usable = __builtin_cpu_supports("ssse3") ? 1 : 0;
    }
    return usable;
#else
    return 0;
#endif
}

number_kind number_parse(const char *s, size_t len, number_decimal *out)
{
    const unsigned char *p = (const unsigned char *)s, *end = p + len;
    if (len && len <= 32) {
        int k = parse_plain(p, end, out);
        if (k >= 0) return (number_kind)k;
        /* A letter other than the first of inf or nan starts text. */
        unsigned c = *p | 0x20u;
        if (c >= 'a' && c <= 'z' && c != 'i' && c != 'n') return NUMBER_TEXT;
    }
    return parse_general(p, end, out);
}

/* Everything parse_plain leaves: spaces, '+', more than 19 digits, long
 * exponents, inf/nan, text. */
static number_kind parse_general(const unsigned char *p, const unsigned char *end,
                                 number_decimal *out)
{
    while (p < end && *p == ' ') p++;
    while (end > p && end[-1] == ' ') end--;

    int negative = 0;
    if (p < end && (*p == '-' || *p == '+')) negative = *p++ == '-';

    const unsigned char *start = p;
    uint64_t m = 0;
    int room = 19;         /* significant digits m can still take */
    int64_t shift = 0;     /* power of ten contributed by the digit positions */
    unsigned dropped = 0;  /* OR of the digits beyond the 19th */
    number_tail t = {0, 0, 0};
    while (p < end && *p == '0') p++;
    for (; p < end && digit_of(*p) < 10 && room; p++, room--) m = m * 10 + digit_of(*p);
    for (; p < end && digit_of(*p) < 10; p++) {
        shift++;
        dropped |= digit_of(*p);
        tail_take(&t, digit_of(*p));
    }
    size_t digits = (size_t)(p - start);
    if (p < end && *p == '.') {
        const unsigned char *f = ++p;
        if (room == 19) /* no significant digit yet: zeros only move the point */
            for (; p < end && *p == '0'; p++) shift--;
        const unsigned char *kept = p;
        for (; p < end && digit_of(*p) < 10 && room; p++, room--) m = m * 10 + digit_of(*p);
        shift -= p - kept;
        for (; p < end && digit_of(*p) < 10; p++) {
            dropped |= digit_of(*p);
            tail_take(&t, digit_of(*p));
        }
        digits += (size_t)(p - f);
    }
    const unsigned char *mantissa_end = p;

    if (digits == 0) {
        if (p != start || p == end) return NUMBER_TEXT; /* ".", "-", "" */
        size_t n = (size_t)(end - p);
        if (equal_fold(p, n, "inf") || equal_fold(p, n, "infinity")) {
            out->value = negative ? -HUGE_VAL : HUGE_VAL;
            return NUMBER_NONFINITE;
        }
        if (equal_fold(p, n, "nan")) {
            out->value = negative ? -NAN : NAN;
            return NUMBER_NONFINITE;
        }
        return NUMBER_TEXT;
    }

    int64_t exponent = 0;
    if (p < end && (*p | 0x20) == 'e') {
        int exponent_negative = 0;
        p++;
        if (p < end && (*p == '-' || *p == '+')) exponent_negative = *p++ == '-';
        if (p == end || digit_of(*p) >= 10) return NUMBER_TEXT;
        for (; p < end && digit_of(*p) < 10; p++)
            if (exponent < 1000000000) exponent = exponent * 10 + digit_of(*p);
        if (exponent_negative) exponent = -exponent;
    }
    if (p != end) return NUMBER_TEXT;

    int64_t e = exponent + shift;
    int exact = !dropped;
    int wide = dropped && !t.beyond;
    if (m == 0) {
        e = 0;
    } else if (e < INT32_MIN || e > INT32_MAX) {
        e = e < 0 ? INT32_MIN : INT32_MAX; /* value is 0 or inf either way */
        exact = wide = 0;
    }
    double v = 0.0;
    if (m != 0 && (dropped || !fast_path(m, e, &v))) v = text_value(start, mantissa_end, exponent);
    if (negative) v = -v;
    out->value = v;
    if (isinf(v)) return NUMBER_NONFINITE;
    out->mantissa = m;
    out->exp10 = (int32_t)e;
    out->negative = (uint8_t)negative;
    out->exact = (uint8_t)exact;
    out->tail = wide ? t.value : 0;
    out->tail_digits = (uint8_t)(wide ? t.digits : 0);
    return NUMBER_FINITE;
}

__extension__ typedef unsigned __int128 number_uwide;

/* d's whole significand w and its power of ten e (|d| = w 10^e), when d
 * holds every digit: `exact` (w < 10^19) or with a tail (w < 10^38 < 2^127). */
static int whole_significand(const number_decimal *d, number_uwide *w, int32_t *e)
{
    if (d->exact) {
        *w = d->mantissa;
        *e = d->exp10;
        return 1;
    }
    int64_t ew = (int64_t)d->exp10 - d->tail_digits;
    if (!d->tail_digits || ew < INT32_MIN) return 0;
    *w = (number_uwide)d->mantissa * pow10_u64[d->tail_digits] + d->tail;
    *e = (int32_t)ew;
    return 1;
}

/* w 10^k below 2^127 (signed-safe), or 0 when it would not be. */
static int scale_wide(number_uwide w, int64_t k, number_uwide *out)
{
    const number_uwide limit = (number_uwide)1 << 127;
    while (k > 0 && w) {
        int step = k > 19 ? 19 : (int)k;
        if (__builtin_mul_overflow(w, (number_uwide)pow10_u64[step], &w) || w >= limit) return 0;
        k -= step;
    }
    *out = w;
    return 1;
}

/* The correctly rounded double of (negative ? -1 : 1) u 10^e, u < 2^128. */
static double wide_to_double(number_uwide u, int32_t e, int negative)
{
    if (u <= UINT64_MAX) return number_to_double((uint64_t)u, e, negative);
    /* 2^64 <= u < 2^128 < 10^39: the value lies in [10^(e+19), 10^(e+39)). */
    double v;
    if (e > 310) {
        v = HUGE_VAL;
    } else if (e < -400) {
        v = 0.0;
    } else {
        char rev[40], buf[40 + 24];
        int k = 0;
        size_t n = 0;
        while (u) {
            rev[k++] = (char)('0' + (int)(u % 10));
            u /= 10;
        }
        while (k) buf[n++] = rev[--k];
        v = strtod_digits(buf, n, e);
    }
    return negative ? -v : v;
}

/* a - b by their whole significands in 128-bit integers: 1 and *out when
 * both hold every digit and the scaled significands and their difference
 * fit. */
static int wide_difference(const number_decimal *a, const number_decimal *b, double *out)
{
    number_uwide wa, wb;
    int32_t ea, eb;
    if (!whole_significand(a, &wa, &ea) || !whole_significand(b, &wb, &eb)) return 0;
    int32_t s = ea < eb ? ea : eb;
    if (!scale_wide(wa, (int64_t)ea - s, &wa) || !scale_wide(wb, (int64_t)eb - s, &wb)) return 0;
    number_wide x = a->negative ? -(number_wide)wa : (number_wide)wa;
    number_wide y = b->negative ? -(number_wide)wb : (number_wide)wb;
    number_wide d;
    if (__builtin_sub_overflow(x, y, &d)) return 0;
    number_uwide u = d < 0 ? (number_uwide)0 - (number_uwide)d : (number_uwide)d;
    *out = wide_to_double(u, s, d < 0);
    return 1;
}

void number_frame(const number_decimal *d, number_decimal *frame)
{
    *frame = *d;
    frame->tail = 0;
    frame->tail_digits = 0;
    if (d->exact || d->exp10 == INT32_MIN || d->exp10 == INT32_MAX) return;
    /* The first 19 digits read toward zero: when a rounding boundary of the
     * doubles lies between them and the cell, one unit more (a step of at
     * most 10^-18 relative, far inside the spacing of doubles, 2^-53) reads
     * as the cell's double. */
    uint64_t m = d->mantissa;
    int32_t e = d->exp10;
    if (number_to_double(m, e, d->negative) != d->value) {
        if (++m == pow10_u64[19]) {
            m = pow10_u64[18];
            e++;
        }
        if (number_to_double(m, e, d->negative) != d->value) return; /* not met; kept inexact */
    }
    frame->mantissa = m;
    frame->exp10 = e;
    frame->exact = 1;
}

/* n's signed mantissa at power of ten s <= n->exp10; 0 when it would not fit. */
static int scaled(const number_decimal *n, int32_t s, number_wide *out)
{
    number_wide m = n->mantissa;
    if (m != 0) {
        int64_t k = (int64_t)n->exp10 - s;
        /* The operand already at s is below 10^19; this one would reach
         * 10^20, so |difference| > 2^63. */
        if (k > 19) return 0;
        m *= pow10_u64[k];
    }
    *out = n->negative ? -m : m;
    return 1;
}

double number_difference(const number_decimal *a, const number_decimal *b, int *exact_out)
{
    /* Common case first: both written with the same number of decimals. */
    if (a->exact && b->exact && a->exp10 == b->exp10 && a->mantissa <= (uint64_t)INT64_MAX &&
        b->mantissa <= (uint64_t)INT64_MAX) {
        int64_t x = a->negative ? -(int64_t)a->mantissa : (int64_t)a->mantissa;
        int64_t y = b->negative ? -(int64_t)b->mantissa : (int64_t)b->mantissa;
        int64_t d;
        if (!__builtin_sub_overflow(x, y, &d) && d != INT64_MIN) {
            if (exact_out) *exact_out = 1;
            return number_to_double(d < 0 ? (uint64_t)-d : (uint64_t)d, a->exp10, d < 0);
        }
    }
    if (a->exact && b->exact) {
        int32_t s = a->exp10 < b->exp10 ? a->exp10 : b->exp10;
        number_wide x, y;
        if (scaled(a, s, &x) && scaled(b, s, &y)) {
            number_wide d = x - y;
            if (d >= INT64_MIN && d <= INT64_MAX) {
                if (exact_out) *exact_out = 1;
                uint64_t u = d < 0 ? (uint64_t)0 - (uint64_t)(int64_t)d : (uint64_t)d;
                return number_to_double(u, s, d < 0);
            }
        }
    }
    double wide;
    if ((a->tail_digits || b->tail_digits) && wide_difference(a, b, &wide)) {
        if (exact_out) *exact_out = 1;
        return wide;
    }
    if (exact_out) *exact_out = 0;
    return a->value - b->value;
}
