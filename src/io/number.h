/* number: the hot-path decimal parser and exact decimal differences.
 *
 * number_parse() reads one CSV cell as a decimal: optional sign, digits with
 * an optional '.', an optional exponent (e/E, sign, digits).  It keeps the
 * first 19 significant digits as an integer mantissa and the power of ten, and
 * converts to the correctly rounded double: Clinger's exact fast path when the
 * mantissa is below 2^53 and |power| <= 22 (one IEEE multiply or divide of two
 * exact values), strtod() otherwise.  Spellings of infinity and NaN (inf,
 * infinity, nan, any case, optional sign) are NUMBER_NONFINITE.  Anything
 * else, including trailing characters, is NUMBER_TEXT.  Leading and trailing
 * ASCII spaces are ignored (common practice in hand-edited CSV).
 *
 * Cells of 20 to 38 significant digits keep the digits after the 19th in
 * a second integer (`tail`), so that their differences stay exact too.
 *
 * number_difference() subtracts two parsed decimals exactly in integer
 * arithmetic (64-bit, or 128-bit for wide cells) when both significands fit
 * at a common power of ten, then rounds the integer difference once to
 * double.  Accumulating deviations from a reference this way means digits
 * shared by all values cost no precision.  number_frame() turns a cell into
 * such a reference: a decimal of at most 19 digits that reads as the same
 * double.
 */
#ifndef SHEAF_NUMBER_H
#define SHEAF_NUMBER_H

#include <stddef.h>
#include <stdint.h>

typedef enum {
    NUMBER_FINITE = 0, /* a finite decimal number */
    NUMBER_NONFINITE,  /* inf / nan spellings */
    NUMBER_TEXT        /* not a number */
} number_kind;

typedef struct {
    double value;        /* correctly rounded double of the text */
    uint64_t mantissa;   /* first 19 significant decimal digits */
    uint64_t tail;       /* the digits after the 19th, as an integer of tail_digits digits */
    int32_t exp10;       /* |value| == mantissa * 10^exp10 when `exact` */
    uint8_t negative;    /* sign of the text (also for zero) */
    uint8_t exact;       /* mantissa/exp10 hold every digit (<= 19 significant) */
    uint8_t tail_digits; /* 1..19 when the cell has 20..38 significant digits and
                            |value| == (mantissa * 10^tail_digits + tail) *
                            10^(exp10 - tail_digits) exactly; 0 otherwise (`exact`, or
                            more than 38 digits), and tail is then not read */
} number_decimal;

/* Parses s[0..len).  Fills *out only for NUMBER_FINITE (value only for
 * NUMBER_NONFINITE).  Never reads past len; s need not be terminated. */
number_kind number_parse(const char *s, size_t len, number_decimal *out);

/* 1 when this CPU runs number_parse_ssse3 (number_simd.h). */
int number_simd_usable(void);

/* The correctly rounded double of (negative ? -1 : 1) * mantissa * 10^exp10. */
double number_to_double(uint64_t mantissa, int32_t exp10, int negative);

/* a - b as a double.  When both hold every digit (`exact`, or a tail) and
 * their significands fit in a signed 128-bit integer at the smaller of the
 * two powers of ten, the result is the correctly rounded value of the exact
 * difference; otherwise it is a->value - b->value.  Returns the difference;
 * *exact_out (may be NULL) is set to 1 when the integer path was taken. */
double number_difference(const number_decimal *a, const number_decimal *b, int *exact_out);

/* A reference decimal (a frame) for the cell d: d itself when `exact`;
 * otherwise (a cell of more than 19 significant digits) the decimal of at
 * most 19 digits next to it that reads as the same double (its first 19
 * digits, or one unit of the 19th more when those round to another double),
 * so a frame is always exact and its value is d's.  A decimal whose power
 * of ten overflowed is copied as it is (inexact).  The tail is cleared. */
void number_frame(const number_decimal *d, number_decimal *frame);

/* 10^0 .. 10^22, each exactly a double. */
extern const double number_pow10[23];

/* A reference decimal unpacked for repeated differences from it. */
typedef struct {
    number_decimal dec;  /* the reference itself */
    int fast;            /* exact, mantissa < 2^52, |exp10| <= 22 */
    int divide;          /* exp10 < 0: differences are divided by scale */
    int32_t exp10;       /* dec.exp10 (INT32_MIN when unset) */
    int64_t signed_m;    /* signed mantissa */
    double scale;        /* 10^|exp10| */
} number_ref;

/* A cell number_parse finds text at a glance: at most 32 bytes, the first
 * a letter, and not starting with "inf" or "nan" in any case (so no number,
 * infinity or NaN can be there: those need a sign, a digit, a point or a
 * space first, or one of those two words).  A column of words then skips
 * the parser for all of them, also for "north" or "item"; until that test
 * looked past the first letter, every cell starting with i or n took the
 * whole parse (a sixth of the labels of the bench table).
 * tests/test_number.c checks it against number_parse. */
static inline int number_text_at_once(const char *s, size_t len)
{
    unsigned c = len ? ((unsigned char)*s | 0x20u) : 0u;
    if (len > 32 || c < 'a' || c > 'z') return 0;
    if ((c != 'i' && c != 'n') || len < 3) return 1;
    unsigned b = (unsigned char)s[1] | 0x20u, d = (unsigned char)s[2] | 0x20u;
    return c == 'i' ? !(b == 'n' && d == 'f') : !(b == 'a' && d == 'n');
}

/* 1 when the finite double x is integer-valued: its magnitude is 2^52 or
 * more, or adding and taking away 2^52 (round to nearest, exact below
 * 2^52) gives it back.  The rule a column's count of integers keeps. */
static inline int number_integer_valued(double x)
{
    double a = __builtin_fabs(x);
    return (a >= 0x1p52) | ((a + 0x1p52) - 0x1p52 == a);
}

/* x with its sign bit flipped when `negative` (-x), by masks: a branch on the
 * sign mispredicts one cell in two in a column of both signs (callgrind's
 * branch simulation found a third of the scan's mispredictions in the
 * parser's and number_deviation_exact's sign tests). */
static inline double number_signed(double x, int negative)
{
    uint64_t bits;
    __builtin_memcpy(&bits, &x, sizeof bits);
    bits ^= (uint64_t)(negative != 0) << 63;
    __builtin_memcpy(&x, &bits, sizeof bits);
    return x;
}

/* (negative ? -m : m) as a signed integer, by masks (number_signed). */
static inline int64_t number_signed_int(uint64_t m, int negative)
{
    uint64_t mask = (uint64_t)0 - (uint64_t)(negative != 0);
    return (int64_t)((m ^ mask) - mask);
}

static inline void number_ref_set(number_ref *r, const number_decimal *d)
{
    r->dec = *d;
    r->fast = d->exact && d->exp10 >= -22 && d->exp10 <= 22 && (d->mantissa >> 52) == 0;
    r->divide = d->exp10 < 0;
    r->exp10 = d->exp10;
    r->signed_m = d->negative ? -(int64_t)d->mantissa : (int64_t)d->mantissa;
    r->scale = r->fast ? number_pow10[d->exp10 < 0 ? -d->exp10 : d->exp10] : 1.0;
}

/* 10^0 .. 10^15 as integers, and the largest mantissa m with m * 10^k
 * below 2^52, for k = 0 .. 15. */
extern const int64_t number_pow10_i64[16];
extern const uint64_t number_below52[16];

/* The common cases of number_difference(a, &r->dec, NULL) for a decimal a
 * = m * 10^e (m < 2^52, sign `negative`) and a fast reference given by its
 * parts (those of number_ref): a power of ten |e| <= 22 and mantissas that
 * stay below 2^52 once written at the smaller of the two powers (the same
 * power, or a cell with fewer or more decimals than the reference), where
 * the integer difference is exact in a double and times 10^e (or divided by
 * 10^-e) is one correctly rounded operation: the one number_difference
 * performs.  1 with *out set, or 0 when none applies.  In parts, so that a
 * loop can hold the reference in registers (block_decode's). */
static inline int number_deviation_exact(uint64_t m, int negative, int32_t e, int32_t ref_exp,
                                         int64_t ref_m, uint64_t ref_mant, double scale,
                                         int divide, double *out)
{
    int64_t x = number_signed_int(m, negative);
    int32_t k = e - ref_exp;
    if (k == 0) {
        double d = (double)(x - ref_m);
        *out = divide ? d / scale : d * scale;
        return 1;
    }
    if (k > 0 && k < 16 && m <= number_below52[k]) {
        /* a has fewer decimals: written at the reference's power */
        double d = (double)(x * number_pow10_i64[k] - ref_m);
        *out = divide ? d / scale : d * scale;
        return 1;
    }
    if (k < 0 && k > -16 && ref_mant <= number_below52[-k] && e >= -22) {
        /* a has more decimals: the reference written at a's power */
        double d = (double)(x - ref_m * number_pow10_i64[-k]);
        *out = e < 0 ? d / number_pow10[-e] : d * number_pow10[e];
        return 1;
    }
    return 0;
}

/* number_difference(a, &r->dec, NULL), its common cases inline
 * (number_deviation_exact). */
static inline double number_deviation(const number_decimal *a, const number_ref *r)
{
    double d;
    if (r->fast && a->exact && (a->mantissa >> 52) == 0 &&
        number_deviation_exact(a->mantissa, a->negative, a->exp10, r->exp10, r->signed_m,
                               r->dec.mantissa, r->scale, r->divide, &d))
        return d;
    number_decimal copy = *a; /* a's address stays with the caller (its registers) */
    return number_difference(&copy, &r->dec, NULL);
}

#endif
