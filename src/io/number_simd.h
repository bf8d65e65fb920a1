/* number_simd: the SSSE3 decimal parser for padded cells, inline so that a
 * caller compiled for SSSE3 (target attribute) keeps the decimal in
 * registers.  Same results as number_parse (see number.h); included by
 * number.c and by the scan's column decoder.  x86-64 with GCC or Clang only:
 * NUMBER_SIMD is left undefined elsewhere. */
#ifndef SHEAF_NUMBER_SIMD_H
#define SHEAF_NUMBER_SIMD_H

#include <float.h>
#include <stddef.h>
#include <stdint.h>

#include "io/number.h"

/* Fills *out with an exact decimal m * 10^e of value val (>= 0) and its
 * sign; shared by the scalar and the SIMD fast paths. */
static inline void number_set_exact(number_decimal *out, double val, uint64_t m, int64_t e,
                                    int negative)
{
    out->value = number_signed(val, negative);
    out->mantissa = m;
    out->exp10 = (int32_t)e;
    out->negative = (uint8_t)negative;
    out->exact = 1;
    out->tail_digits = 0;
}

/* Bytes after s + len that number_parse_ssse3 may read. */
#define NUMBER_READ_AHEAD 17

#if defined(__x86_64__) && defined(__GNUC__) && defined(FLT_EVAL_METHOD) && FLT_EVAL_METHOD == 0
#define NUMBER_SIMD 1
#include <immintrin.h>

/* The value of 16 digit lanes (0..9 each, the last digit in lane 15): three
 * multiply-add steps combine them into two 8-digit halves (the SIMD digit
 * conversion used by simdjson). */
static inline __attribute__((always_inline, target("ssse3"))) uint64_t
number_digits_value(__m128i d)
{
    __m128i pairs = _mm_maddubs_epi16(d, _mm_setr_epi8(10, 1, 10, 1, 10, 1, 10, 1, 10, 1, 10, 1,
                                                        10, 1, 10, 1));
    __m128i quads = _mm_madd_epi16(pairs, _mm_setr_epi16(100, 1, 100, 1, 100, 1, 100, 1));
    quads = _mm_packs_epi32(quads, quads);
    __m128i octets = _mm_madd_epi16(quads, _mm_setr_epi16(10000, 1, 10000, 1, 10000, 1, 10000, 1));
    uint64_t hi = (uint32_t)_mm_cvtsi128_si32(octets);
    uint64_t lo = (uint32_t)_mm_cvtsi128_si32(_mm_srli_si128(octets, 4));
    return hi * 100000000u + lo;
}

/* What both parsers read first of a cell (number_simd_open). */
typedef struct {
    const unsigned char *q; /* the bytes after the sign */
    size_t n;               /* how many: 1 to 16 */
    int negative;           /* a '-' came first */
    __m128i t;              /* 16 bytes from q, less '0' */
    uint32_t other;         /* bit i: q[i] (i < n) is no digit */
} number_simd_cell;

/* Opens the cell s of len bytes into *c (s[0] is readable even when len is
 * 0, the cell being padded); -1 when more than 16 bytes (or none) follow
 * the sign. */
static inline __attribute__((always_inline, target("ssse3"))) int
number_simd_open(const char *s, size_t len, number_simd_cell *c)
{
    const unsigned char *p = (const unsigned char *)s;
    c->negative = *p == '-';
    p += c->negative;
    c->n = len - (size_t)c->negative;
    if (c->n - 1 >= 16) return -1;
    c->q = p;
    c->t = _mm_sub_epi8(_mm_loadu_si128((const __m128i *)(const void *)p), _mm_set1_epi8('0'));
    const __m128i digit = _mm_cmpeq_epi8(_mm_min_epu8(c->t, _mm_set1_epi8(9)), c->t);
    c->other = ((UINT32_C(1) << c->n) - 1) & ~(uint32_t)_mm_movemask_epi8(digit);
    return 0;
}

/* The value of the `digits` digits of t (a cell's bytes less '0'), its
 * point at byte `point` (16: none) skipped: lane i takes digit
 * i - (16 - digits), skipping the point; lanes with a negative index read
 * as zero. */
static inline __attribute__((always_inline, target("ssse3"))) uint64_t
number_simd_mantissa(__m128i t, unsigned digits, unsigned point)
{
    const __m128i iota = _mm_setr_epi8(0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15);
    __m128i idx = _mm_add_epi8(iota, _mm_set1_epi8((char)((int)digits - 16)));
    idx = _mm_sub_epi8(idx, _mm_cmpgt_epi8(idx, _mm_set1_epi8((char)((int)point - 1))));
    return number_digits_value(_mm_shuffle_epi8(t, idx));
}

/* number_parse for cells with 16 readable bytes after the sign: a cell of
 * "digits[.digits][e[+-]digits]" in at most 16 bytes after the sign, with at
 * most 4 exponent digits, is read here (returns 0, *out filled); anything else returns -1 for
 * number_parse.
 * One 16-byte load classifies every byte (digit, the first '.', the first
 * 'e'); a byte shuffle drops the point and right-aligns the digits behind
 * leading zeros; three multiply-add steps combine them into two 8-digit
 * halves (the SIMD digit conversion used by simdjson).  No branch depends
 * on where a digit run ends, which the scalar loop mispredicts.  Needs
 * SSSE3 (pshufb, pmaddubsw): callers check number_simd_usable() and call it
 * only from functions compiled for SSSE3, where it inlines. */
static inline __attribute__((always_inline, target("ssse3"))) int
number_simd_finish(const number_simd_cell *cell, number_decimal *out)
{
    const number_simd_cell c = *cell;
    const unsigned char *q = c.q;
    const size_t n = c.n;
    uint32_t other = c.other;
    unsigned mlen = (unsigned)n; /* bytes of the mantissa */
    unsigned point = 16;         /* position of the '.', 16 if none */
    int64_t e = 0;
    int exponent = 0;            /* an exponent was written */
    if (other) {
        unsigned k = (unsigned)__builtin_ctz(other);
        if (q[k] == '.') {
            point = k;
            other &= other - 1;
        }
        if (__builtin_expect(other != 0, 0)) { /* an exponent, or not a number */
            unsigned x = (unsigned)__builtin_ctz(other);
            if ((q[x] | 0x20) != 'e') return -1;
            mlen = x;
            const unsigned char *p = q + x + 1, *end = q + n;
            int exponent_negative = 0;
            if (p < end && (*p == '-' || *p == '+')) exponent_negative = *p++ == '-';
            if (p == end || end - p > 4) return -1;
            int64_t written = 0;
            for (; p < end; p++) {
                unsigned d = (unsigned)*p - '0';
                if (d > 9) return -1;
                written = written * 10 + d;
            }
            e = exponent_negative ? -written : written;
            exponent = 1;
        }
    }
    unsigned digits = mlen - (point < mlen);
    if (digits == 0) return -1;
    if (point < mlen) e -= (int64_t)(mlen - point - 1);
    uint64_t m = number_simd_mantissa(c.t, digits, point);
    double val;
    if (m == 0) {
        e = 0;
        val = 0.0;
    } else if (!exponent) {
        /* At most 16 digits and 15 decimals: Clinger's exact case when m is
         * at most 2^53 (one correctly rounded operation; a division by
         * 10^0 = 1 is exact). */
        if (m > (UINT64_C(1) << 53)) return -1;
        val = (double)m / number_pow10[-e];
    } else if (m <= (UINT64_C(1) << 53) && e >= -22 && e <= 22) {
        val = e < 0 ? (double)m / number_pow10[-e] : (double)m * number_pow10[e];
    } else {
        return -1;
    }
    number_set_exact(out, val, m, e, c.negative);
    return 0;
}

static inline __attribute__((always_inline, target("ssse3"))) int
number_parse_ssse3(const char *s, size_t len, number_decimal *out)
{
    number_simd_cell c;
    if (number_simd_open(s, len, &c) != 0) return -1;
    return number_simd_finish(&c, out);
}

/* number_parse_ssse3 for a column whose cells are mostly written with
 * `decimals` digits after a point (1 to 15; any other value never
 * matches): such a cell, digits, a point and `decimals` digits, returns 1
 * with *out filled (the point's place known, no look for an exponent;
 * exp10 is -decimals, or 0 for a zero, as number_parse_ssse3 gives); any
 * other cell is number_parse_ssse3's (0 or -1). */
static inline __attribute__((always_inline, target("ssse3"))) int
number_parse_fixed_ssse3(const char *s, size_t len, unsigned decimals, number_decimal *out)
{
    number_simd_cell c;
    if (number_simd_open(s, len, &c) != 0) return -1;
    const unsigned point = (unsigned)c.n - 1u - decimals; /* wraps past 16 when too short */
    if (point >= 16 || c.other != (UINT32_C(1) << point) || c.q[point] != '.')
        return number_simd_finish(&c, out);
    uint64_t m = number_simd_mantissa(c.t, (unsigned)c.n - 1u, point);
    /* At most 15 digits: m < 2^53, so Clinger's one division. */
    number_set_exact(out, (double)m / number_pow10[decimals], m, m ? -(int64_t)decimals : 0,
                     c.negative);
    return 1;
}

/* number_parse_ssse3 for a cell of digits alone (an optional '-', 1 to 16
 * digits, nothing else): the same decimal, without looking for a point or
 * an exponent; -1 for any other cell (then number_parse_ssse3 reads it). */
static inline __attribute__((always_inline, target("ssse3"))) int
number_parse_integer_ssse3(const char *s, size_t len, number_decimal *out)
{
    number_simd_cell c;
    if (number_simd_open(s, len, &c) != 0 || c.other) return -1;
    /* Lane i takes digit i - (16 - n); a negative index reads as zero. */
    const __m128i iota = _mm_setr_epi8(0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15);
    uint64_t m = number_digits_value(
        _mm_shuffle_epi8(c.t, _mm_add_epi8(iota, _mm_set1_epi8((char)((int)c.n - 16)))));
    if (m > (UINT64_C(1) << 53)) return -1;
    number_set_exact(out, (double)m, m, 0, c.negative);
    return 0;
}

/* number_parse for a cell with NUMBER_READ_AHEAD readable bytes after it:
 * number_parse_ssse3, and number_parse for whatever that does not read. */
static inline __attribute__((always_inline, target("ssse3"))) number_kind
number_parse_padded(const char *s, size_t len, number_decimal *out)
{
    if (number_parse_ssse3(s, len, out) == 0) return NUMBER_FINITE;
    /* Text cells of a column not yet known to be text: a first letter other
     * than that of inf or nan is text, as number_parse would find after its
     * plain pass. */
    if (number_text_at_once(s, len)) return NUMBER_TEXT;
    number_decimal slow; /* out's address stays with the caller (its registers) */
    number_kind k = number_parse(s, len, &slow);
    *out = slow;
    return k;
}
#endif

#endif
