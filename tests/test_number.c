/* Tests for io/number: decimal parsing, rounding, exact differences.
 *
 * Reference for every rounding check: glibc strtod(), which rounds correctly
 * for inputs of any length, and the C compiler's own conversion of double
 * literals (gcc, correctly rounded).  Random inputs come from a fixed-seed
 * xorshift64 generator (Marsaglia 2003), so every run checks the same cases.
 */
#include <criterion/criterion.h>

#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>

#include "io/number.h"
#include "io/number_simd.h"
#include "number_simd_calls.h"
#include "testutil.h"

static uint64_t xorshift64(uint64_t *state)
{
    uint64_t x = *state;
    x ^= x << 13;
    x ^= x >> 7;
    x ^= x << 17;
    return *state = x;
}

static uint64_t bits_of(double v)
{
    uint64_t u;
    memcpy(&u, &v, sizeof u);
    return u;
}

static number_kind parse(const char *s, number_decimal *d)
{
    return number_parse(s, strlen(s), d);
}

/* Parses s and checks it is finite with exactly the bits of want. */
static void expect_value(const char *s, double want)
{
    number_decimal d;
    number_kind k = parse(s, &d);
    cr_assert_eq(k, NUMBER_FINITE, "\"%s\" kind %d", s, (int)k);
    cr_assert_eq(bits_of(d.value), bits_of(want), "\"%s\" -> %.17g, want %.17g", s, d.value, want);
}

Test(number, sign_decimal_and_exponent_forms_parse)
{
    /* Expected values: the compiler's correctly rounded literals. */
    expect_value("1.", 1.0);
    expect_value(".5", 0.5);
    expect_value("-0.25", -0.25);
    expect_value("+3", 3.0);
    expect_value("1e5", 1e5);
    expect_value("1E-3", 1e-3);
    expect_value("2.5e+10", 2.5e10);
    expect_value("-.5E2", -50.0);
    expect_value("007", 7.0);
    expect_value("  42  ", 42.0);
    expect_value("0.1", 0.1);
    expect_value("12.345", 12.345);
    expect_value("1700000000123456", 1700000000123456.0);
    expect_value("-0.001", -0.001);
    expect_value("1e23", 1e23);
    expect_value("9007199254740993", 9007199254740992.0); /* tie to even */
    expect_value("0.000", 0.0);
    expect_value("-0", -0.0);
    expect_value("1.7976931348623157e308", 1.7976931348623157e308);
    expect_value("4.9406564584124654e-324", 4.9406564584124654e-324);
}

Test(number, mantissa_and_power_of_ten_are_reported)
{
    number_decimal d;
    cr_assert_eq(parse("-12.3450", &d), NUMBER_FINITE);
    cr_assert_eq(d.mantissa, 123450u);
    cr_assert_eq(d.exp10, -4);
    cr_assert_eq(d.negative, 1);
    cr_assert_eq(d.exact, 1);

    cr_assert_eq(parse("0.00072e3", &d), NUMBER_FINITE);
    cr_assert_eq(d.mantissa, 72u);
    cr_assert_eq(d.exp10, -2);

    cr_assert_eq(parse("-0.0", &d), NUMBER_FINITE);
    cr_assert_eq(d.mantissa, 0u);
    cr_assert_eq(d.negative, 1);
    cr_assert(signbit(d.value));
    cr_assert_eq(d.exact, 1);
}

Test(number, text_forms_are_rejected_and_leave_output_untouched)
{
    static const char *const texts[] = {
        "12abc", "1.2.3", "e5", ".", "-", "1e", "0x10", "1,5", "", "   ", "+-1", "--1",
        "1e+", "1e-", ".e5", "1 2", "1d5", "in", "infin", "inf5", "nana", "nan(1)", "- 1",
        "1e5.0", "\t1", "1\n", "Inf.", "1_000",
    };
    for (size_t i = 0; i < sizeof texts / sizeof *texts; i++) {
        number_decimal d;
        memset(&d, 0xab, sizeof d);
        number_decimal before = d;
        cr_assert_eq(parse(texts[i], &d), NUMBER_TEXT, "\"%s\" should be text", texts[i]);
        cr_assert(memcmp(&d, &before, sizeof d) == 0, "\"%s\" wrote the output", texts[i]);
    }
}

Test(number, infinity_and_nan_spellings_are_nonfinite)
{
    static const char *const infinities[] = {"inf", "INF", "Infinity", "+inf", " iNfInItY "};
    for (size_t i = 0; i < sizeof infinities / sizeof *infinities; i++) {
        number_decimal d;
        cr_assert_eq(parse(infinities[i], &d), NUMBER_NONFINITE, "\"%s\"", infinities[i]);
        cr_assert(isinf(d.value) && d.value > 0, "\"%s\"", infinities[i]);
    }
    number_decimal d;
    cr_assert_eq(parse("-Infinity", &d), NUMBER_NONFINITE);
    cr_assert(isinf(d.value) && d.value < 0);
    static const char *const nans[] = {"nan", "NaN", "NAN", "-nan", "+nAn"};
    for (size_t i = 0; i < sizeof nans / sizeof *nans; i++) {
        cr_assert_eq(parse(nans[i], &d), NUMBER_NONFINITE, "\"%s\"", nans[i]);
        cr_assert(isnan(d.value), "\"%s\"", nans[i]);
    }
}

Test(number, parse_never_reads_past_len)
{
    number_decimal d;
    cr_assert_eq(number_parse("123456", 3, &d), NUMBER_FINITE);
    cr_assert_eq(d.value, 123.0);
    cr_assert_eq(number_parse("1.5e7x", 5, &d), NUMBER_FINITE);
    cr_assert_eq(d.value, 1.5e7);
    cr_assert_eq(number_parse("1e5", 2, &d), NUMBER_TEXT);
    cr_assert_eq(number_parse("infinity", 3, &d), NUMBER_NONFINITE);
    char unterminated[4] = {'-', '2', '.', '5'};
    cr_assert_eq(number_parse(unterminated, sizeof unterminated, &d), NUMBER_FINITE);
    cr_assert_eq(d.value, -2.5);
}

Test(number, overflow_is_nonfinite_and_underflow_is_zero)
{
    number_decimal d;
    cr_assert_eq(parse("1e999999999", &d), NUMBER_NONFINITE);
    cr_assert(isinf(d.value) && d.value > 0);
    cr_assert_eq(parse("-1e400", &d), NUMBER_NONFINITE);
    cr_assert(isinf(d.value) && d.value < 0);
    cr_assert_eq(parse("1.7976931348623159e308", &d), NUMBER_NONFINITE); /* rounds up */
    cr_assert_eq(parse("99999999999999999999999999999e99999999999999999999999", &d),
                 NUMBER_NONFINITE);

    cr_assert_eq(parse("1e-400", &d), NUMBER_FINITE);
    cr_assert_eq(bits_of(d.value), bits_of(0.0));
    cr_assert_eq(d.mantissa, 1u);
    cr_assert_eq(d.exp10, -400);
    cr_assert_eq(parse("-2.5e-99999999999999999999", &d), NUMBER_FINITE);
    cr_assert_eq(bits_of(d.value), bits_of(-0.0));
    cr_assert_eq(d.exact, 0); /* exponent beyond int32 */
    cr_assert_eq(parse("0e999999999999", &d), NUMBER_FINITE);
    cr_assert_eq(d.value, 0.0);
    cr_assert_eq(d.exact, 1);
    /* Just above half the smallest subnormal rounds up to it (strtod agrees). */
    expect_value("2.4703282292062328e-324", 4.9406564584124654e-324);
}

Test(number, more_than_19_digits_match_strtod)
{
    number_decimal d;
    cr_assert_eq(parse("100000000000000000000", &d), NUMBER_FINITE);
    cr_assert_eq(d.value, 1e20);
    cr_assert_eq(d.exact, 1); /* only zeros were dropped */
    cr_assert_eq(d.mantissa, UINT64_C(1000000000000000000));
    cr_assert_eq(d.exp10, 2);

    cr_assert_eq(parse("12345678901234567890123", &d), NUMBER_FINITE);
    cr_assert_eq(d.mantissa, UINT64_C(1234567890123456789));
    cr_assert_eq(d.exp10, 4);
    cr_assert_eq(d.exact, 0);

    static const char *const longs[] = {
        "3.14159265358979323846264338327950288419716939937510",
        "-0.000000000000000000000000000012345678901234567890123456789",
        "9007199254740992.99999999999999999999",
        "2.22507385850720113605740979670913197593481954635164564e-308",
        "123456789012345678901234567890e-330",
    };
    for (size_t i = 0; i < sizeof longs / sizeof *longs; i++) {
        number_kind k = parse(longs[i], &d);
        cr_assert_eq(k, NUMBER_FINITE, "\"%s\"", longs[i]);
        cr_assert_eq(bits_of(d.value), bits_of(strtod(longs[i], NULL)), "\"%s\"", longs[i]);
    }
}

/* The exact decimal digits of 5^1075, so that "<digits>e-1075" is 2^-1075,
 * the midpoint between 0 and the smallest subnormal (752 digits). */
static size_t five_pow_1075(char *out)
{
    unsigned char digit[800] = {1}; /* little-endian decimal */
    size_t n = 1;
    for (int i = 0; i < 1075; i++) {
        unsigned carry = 0;
        for (size_t j = 0; j < n; j++) {
            unsigned v = digit[j] * 5u + carry;
            digit[j] = (unsigned char)(v % 10);
            carry = v / 10;
        }
        if (carry) digit[n++] = (unsigned char)carry;
    }
    for (size_t j = 0; j < n; j++) out[j] = (char)('0' + digit[n - 1 - j]);
    return n;
}

Test(number, digits_beyond_the_buffer_round_by_the_sticky_digit)
{
    static char text[4096];
    size_t n = five_pow_1075(text);
    cr_assert_eq(n, 752u);
    const double tiny = 4.9406564584124654e-324; /* 2^-1074 */
    number_decimal d;

    /* The exact midpoint ties to even, i.e. to zero. */
    snprintf(text + n, sizeof text - n, "e-1075");
    cr_assert_eq(parse(text, &d), NUMBER_FINITE);
    cr_assert_eq(bits_of(d.value), bits_of(0.0));

    /* Zeros past the 800 kept digits change nothing ... */
    memset(text + n, '0', 1200);
    snprintf(text + n + 1200, sizeof text - n - 1200, "e-2275");
    cr_assert_eq(parse(text, &d), NUMBER_FINITE);
    cr_assert_eq(bits_of(d.value), bits_of(0.0));
    cr_assert_eq(bits_of(d.value), bits_of(strtod(text, NULL)));

    /* ... but a nonzero digit 1200 places later lifts it above the tie. */
    text[n + 1199] = '1';
    cr_assert_eq(parse(text, &d), NUMBER_FINITE);
    cr_assert_eq(bits_of(d.value), bits_of(tiny));
    cr_assert_eq(bits_of(d.value), bits_of(strtod(text, NULL)));

    /* The same with a decimal point and leading zeros: 0.000D * 10^-320 is
     * D * 10^-1075. */
    char *q = text;
    q += sprintf(q, "-0.000");
    n = five_pow_1075(q);
    memset(q + n, '0', 1200);
    q[n + 1199] = '7';
    snprintf(q + n + 1200, 32, "E-320");
    cr_assert_eq(parse(text, &d), NUMBER_FINITE);
    cr_assert_eq(bits_of(d.value), bits_of(-tiny));
    cr_assert_eq(bits_of(d.value), bits_of(strtod(text, NULL)));
}

Test(number, printed_random_doubles_round_trip_bit_exact)
{
    uint64_t state = UINT64_C(0x9e3779b97f4a7c15);
    char buf[64];
    int checked = 0;
    while (checked < 1000000) {
        uint64_t u = xorshift64(&state);
        double v;
        memcpy(&v, &u, sizeof v);
        if (!isfinite(v)) continue;
        int len = snprintf(buf, sizeof buf, "%.17g", v);
        number_decimal d;
        number_kind k = number_parse(buf, (size_t)len, &d);
        if (k != NUMBER_FINITE || bits_of(d.value) != u)
            cr_assert_fail("\"%s\": kind %d, got %.17g", buf, (int)k, d.value);
        checked++;
    }
}

Test(number, random_decimal_strings_agree_with_strtod)
{
    uint64_t state = UINT64_C(0x2545f4914f6cdd1d);
    char buf[64];
    for (int i = 0; i < 1000000; i++) {
        uint64_t r = xorshift64(&state);
        int ndigits = 1 + (int)(r % 25);
        int point = (int)((r >> 8) % (uint64_t)(ndigits + 2)) - 1; /* -1: no point */
        int exponent = (int)((r >> 20) % 661) - 330;
        int has_exponent = (r >> 40) % 4 != 0;
        char *p = buf;
        if ((r >> 42) & 1) *p++ = '-';
        for (int j = 0; j < ndigits; j++) {
            if (j == point) *p++ = '.';
            *p++ = (char)('0' + xorshift64(&state) % 10);
        }
        if (point == ndigits) *p++ = '.';
        if (has_exponent) p += sprintf(p, "%c%d", (r >> 43) & 1 ? 'E' : 'e', exponent);
        *p = '\0';

        double want = strtod(buf, NULL);
        number_decimal d;
        number_kind k = number_parse(buf, (size_t)(p - buf), &d);
        number_kind want_kind = isfinite(want) ? NUMBER_FINITE : NUMBER_NONFINITE;
        if (k != want_kind || bits_of(d.value) != bits_of(want))
            cr_assert_fail("\"%s\": kind %d value %.17g, strtod %.17g", buf, (int)k, d.value, want);
    }
}

Test(number, to_double_rounds_mantissa_and_power_correctly)
{
    /* Expected values: the compiler's correctly rounded literals. */
    cr_assert_eq(number_to_double(1, 23, 0), 1e23);
    cr_assert_eq(number_to_double(123, 30, 1), -123e30);
    cr_assert_eq(number_to_double(UINT64_C(9007199254740993), 0, 0), 9007199254740992.0);
    cr_assert_eq(number_to_double(UINT64_C(18446744073709551615), -5, 0), 184467440737095.51615);
    cr_assert_eq(number_to_double(UINT64_C(12300000000000000000), 0, 0), 1.23e19);
    cr_assert_eq(number_to_double(7, -330, 0), 0.0);
    cr_assert(isinf(number_to_double(1, 400, 0)));
    cr_assert(isinf(number_to_double(1, INT32_MAX, 0)));
    cr_assert_eq(number_to_double(5, INT32_MIN, 0), 0.0);
    cr_assert(signbit(number_to_double(0, 7, 1)));
}

static number_decimal decimal(const char *s)
{
    number_decimal d;
    cr_assert_eq(parse(s, &d), NUMBER_FINITE, "\"%s\"", s);
    return d;
}

Test(number, difference_of_shared_leading_digits_is_exact)
{
    number_decimal a = decimal("1000000000000.4"), b = decimal("1000000000000.3");
    int exact = 0;
    double got = number_difference(&a, &b, &exact);
    cr_assert_eq(exact, 1);
    cr_assert_eq(bits_of(got), bits_of(0.1)); /* the double nearest 1/10 */
    cr_assert_neq(bits_of(a.value - b.value), bits_of(0.1)); /* plain subtraction is off */

    a = decimal("0.1");
    b = decimal("0.3");
    got = number_difference(&a, &b, &exact);
    cr_assert_eq(exact, 1);
    cr_assert_eq(bits_of(got), bits_of(-0.2));
}

Test(number, difference_of_epoch_microseconds_is_exact)
{
    number_decimal a = decimal("1700000000123456"), b = decimal("1700000000000000");
    int exact = 0;
    cr_assert_eq(number_difference(&a, &b, &exact), 123456.0);
    cr_assert_eq(exact, 1);
    cr_assert_eq(number_difference(&b, &a, NULL), -123456.0);
}

Test(number, difference_across_scales_is_exact)
{
    number_decimal a = decimal("12.5"), b = decimal("3");
    int exact = 0;
    cr_assert_eq(number_difference(&a, &b, &exact), 9.5);
    cr_assert_eq(exact, 1);

    a = decimal("-2.5e3");
    b = decimal("0.125");
    cr_assert_eq(number_difference(&a, &b, &exact), -2500.125);
    cr_assert_eq(exact, 1);

    a = decimal("0");
    b = decimal("1e-400"); /* zero mantissa needs no scaling */
    cr_assert_eq(bits_of(number_difference(&a, &b, &exact)), bits_of(-0.0));
    cr_assert_eq(exact, 1);

    a = decimal("7.25");
    b = decimal("7.250");
    cr_assert_eq(bits_of(number_difference(&a, &b, &exact)), bits_of(0.0));
    cr_assert_eq(exact, 1);
}

Test(number, difference_falls_back_when_not_exact)
{
    int exact = 1;
    /* Scaling 1e30 to the power of ten of 1 leaves 64 bits. */
    number_decimal a = decimal("1e30"), b = decimal("1");
    cr_assert_eq(number_difference(&a, &b, &exact), 1e30 - 1.0);
    cr_assert_eq(exact, 0);

    /* Both fit, but their difference 1.8e19 does not fit int64. */
    exact = 1;
    a = decimal("9000000000000000000");
    b = decimal("-9000000000000000000");
    cr_assert_eq(number_difference(&a, &b, &exact), 1.8e19);
    cr_assert_eq(exact, 0);

    /* More than 38 significant digits (a non-zero 40th): the inputs
     * themselves are rounded. */
    exact = 1;
    a = decimal("1.000000000000000000000000000000000000001");
    b = decimal("1");
    cr_assert_eq(a.tail_digits, 0);
    cr_assert_eq(number_difference(&a, &b, &exact), 0.0);
    cr_assert_eq(exact, 0);
}

Test(number, cells_of_20_to_38_digits_keep_their_tail)
{
    number_decimal d = decimal("1000000000000.0000005"); /* 20 digits */
    cr_assert_eq(d.exact, 0);
    cr_assert_eq(d.mantissa, UINT64_C(1000000000000000000));
    cr_assert_eq(d.exp10, -6);
    cr_assert_eq(d.tail, 5);
    cr_assert_eq(d.tail_digits, 1);
    d = decimal("-12345678901234567890123"); /* 23 digits, an integer */
    cr_assert_eq(d.mantissa, UINT64_C(1234567890123456789));
    cr_assert_eq(d.exp10, 4);
    cr_assert_eq(d.tail, 123);
    cr_assert_eq(d.tail_digits, 4);
    cr_assert(d.negative);
    d = decimal("0.000123456789012345678901234567890123456780000e5"); /* 38 digits, zeros after */
    cr_assert_eq(d.mantissa, UINT64_C(1234567890123456789));
    cr_assert_eq(d.tail, UINT64_C(123456789012345678));
    cr_assert_eq(d.tail_digits, 19);
    cr_assert_eq(d.exp10 - d.tail_digits, -36); /* the 38th digit at 10^-41, times 10^5 */
    /* Digits after the 19th that are all zero leave the decimal exact. */
    d = decimal("1234567890123456789000");
    cr_assert(d.exact);
    cr_assert_eq(d.tail_digits, 0);
}

Test(number, differences_of_20_to_38_digit_decimals_are_exact)
{
    /* Each difference worked by hand, then the double the compiler gives
     * for it (correctly rounded). */
    static const struct {
        const char *a, *b;
        double want;
    } cases[] = {
        {"1000000000000.0000005", "1000000000000", 5e-7},
        {"1000000000000.0000005", "1000000000000.000009", -8.5e-6},
        {"1000000000000.000001", "1000000000000.0000005", 5e-7},
        {"123456789012345678901234567.5", "123456789012345678901234560", 7.5},
        {"-0.1000000000000000000000000000001", "-0.1", -1e-31},
        {"99999999999999999999.99", "100000000000000000000", -0.01},
        {"1.23456789012345678901234567890123456", "1.23456789012345678901234567890123455",
         1e-35},
        /* the difference passes 2^64: rounded through strtod */
        {"123456789012345678901234567890", "-1", 123456789012345678901234567891.0},
    };
    for (size_t i = 0; i < sizeof cases / sizeof cases[0]; i++) {
        number_decimal a = decimal(cases[i].a), b = decimal(cases[i].b);
        int exact = 0;
        double got = number_difference(&a, &b, &exact);
        cr_assert_eq(exact, 1, "%s - %s", cases[i].a, cases[i].b);
        cr_assert_eq(bits_of(got), bits_of(cases[i].want), "%s - %s: %.17g, want %.17g",
                     cases[i].a, cases[i].b, got, cases[i].want);
        /* the inline deviation takes the general path for them */
        number_ref r;
        number_ref_set(&r, &b);
        cr_assert_eq(bits_of(number_deviation(&a, &r)), bits_of(got));
    }
}

Test(number, a_frame_has_19_digits_and_the_cell_s_double)
{
    number_decimal f, d = decimal("1000000000000.0000005");
    number_frame(&d, &f);
    cr_assert(f.exact);
    cr_assert_eq(f.tail_digits, 0);
    cr_assert_eq(f.mantissa, UINT64_C(1000000000000000000));
    cr_assert_eq(f.exp10, -6);
    cr_assert_eq(bits_of(f.value), bits_of(d.value));
    /* Its first 19 digits, 15458522103180.20605, read as ...205 (strtod),
     * the cell as ...207: the frame takes one unit more. */
    d = decimal("15458522103180.2060591839");
    number_frame(&d, &f);
    cr_assert(f.exact);
    cr_assert_eq(f.mantissa, UINT64_C(1545852210318020606));
    cr_assert_eq(f.exp10, -5);
    cr_assert_eq(bits_of(number_to_double(f.mantissa, f.exp10, 0)), bits_of(d.value));
    cr_assert_eq(bits_of(f.value), bits_of(d.value));
    /* The unit more carries into a 20th digit: 19 nines become 10^18 at the
     * next power of ten. */
    d = decimal("9999999999999999999.9");
    number_frame(&d, &f);
    cr_assert(f.exact);
    cr_assert_eq(bits_of(number_to_double(f.mantissa, f.exp10, 0)), bits_of(d.value));
    /* An exact cell is its own frame. */
    d = decimal("-2.5");
    number_frame(&d, &f);
    cr_assert(f.exact && f.mantissa == 25 && f.exp10 == -1 && f.negative);
    /* Random cells of 20 to 38 digits: always exact, same double, within
     * one unit of the 19th digit of the cell. */
    uint64_t state = 0x5eed5eedULL;
    for (int k = 0; k < 20000; k++) {
        char buf[64];
        int digits = 20 + (int)(xorshift64(&state) % 19), point = 1 + (int)(xorshift64(&state) % 30);
        size_t n = 0;
        for (int i = 0; i < digits; i++) {
            if (i == point) buf[n++] = '.';
            buf[n++] = (char)('0' + (i == 0 ? 1 + xorshift64(&state) % 9 : xorshift64(&state) % 10));
        }
        buf[n] = '\0';
        d = decimal(buf);
        number_frame(&d, &f);
        cr_assert(f.exact, "%s", buf);
        cr_assert_eq(bits_of(number_to_double(f.mantissa, f.exp10, 0)), bits_of(d.value), "%s", buf);
        int exact = 0;
        double dev = number_difference(&d, &f, &exact);
        cr_assert(exact, "%s", buf);
        cr_assert_leq(fabs(dev), 2 * d.value * 1e-18, "%s: %g", buf, dev);
    }
}

Test(number, fast_and_general_paths_give_the_same_decimal)
{
    /* A leading space sends a cell past the fast path (parse_plain) to the
     * general one; both must report the same value, mantissa, power, sign
     * and exactness.  Short random cells with and without exponents. */
    uint64_t state = UINT64_C(0x9e3779b97f4a7c15);
    char buf[64];
    for (int i = 0; i < 300000; i++) {
        uint64_t r = xorshift64(&state);
        int ndigits = 1 + (int)(r % 21);
        int point = (int)((r >> 8) % (uint64_t)(ndigits + 2)) - 1;
        char *p = buf + 1;
        buf[0] = ' ';
        if ((r >> 42) & 1) *p++ = '-';
        for (int j = 0; j < ndigits; j++) {
            if (j == point) *p++ = '.';
            *p++ = (char)('0' + xorshift64(&state) % ((r >> 50) & 1 ? 10 : 2));
        }
        if (point == ndigits) *p++ = '.';
        if ((r >> 40) % 3 == 0)
            p += sprintf(p, "%s%d", (r >> 43) & 1 ? "e" : "E+", (int)((r >> 20) % 60) - 30);
        size_t len = (size_t)(p - buf);
        number_decimal fast, general;
        memset(&fast, 0, sizeof fast);
        memset(&general, 0, sizeof general);
        number_kind kf = number_parse(buf + 1, len - 1, &fast);
        number_kind kg = number_parse(buf, len, &general);
        cr_assert_eq(kf, kg, "\"%s\"", buf + 1);
        if (kf != NUMBER_FINITE) continue;
        cr_assert_eq(bits_of(fast.value), bits_of(general.value), "\"%s\"", buf + 1);
        cr_assert(fast.mantissa == general.mantissa && fast.exp10 == general.exp10 &&
                      fast.negative == general.negative && fast.exact == general.exact,
                  "\"%s\": fast %llu e%d, general %llu e%d", buf + 1,
                  (unsigned long long)fast.mantissa, fast.exp10,
                  (unsigned long long)general.mantissa, general.exp10);
    }
}

Test(number, inline_deviation_equals_the_general_difference)
{
    /* number_deviation from an unpacked reference must return the same bits
     * as number_difference: random pairs written with the same number of
     * decimals and with different ones (fewer or more than the reference's,
     * up to 19 apart: inline while both stay below 2^52 at the smaller power
     * of ten, the general difference beyond). */
    uint64_t state = UINT64_C(0xd1b54a32d192ed03);
    char a_text[40], b_text[40];
    for (int i = 0; i < 300000; i++) {
        uint64_t r = xorshift64(&state);
        int decimals_a = (int)(r % 20), decimals_b = (r >> 5) & 1 ? decimals_a : (int)((r >> 6) % 20);
        static const uint64_t limit[4] = {UINT64_C(1000), UINT64_C(10000000000),
                                          UINT64_C(4503599627370496), /* 2^52 */
                                          UINT64_C(100000000000000000)};
        uint64_t ma = xorshift64(&state) % limit[(r >> 11) % 4];
        uint64_t mb = xorshift64(&state) % limit[(r >> 13) % 4];
        snprintf(a_text, sizeof a_text, "%s%llu", (r >> 9) & 1 ? "-" : "", (unsigned long long)ma);
        snprintf(b_text, sizeof b_text, "%s%llu", (r >> 10) & 1 ? "-" : "", (unsigned long long)mb);
        number_decimal a = decimal(a_text), b = decimal(b_text);
        a.exp10 -= decimals_a; /* same digits, decimals_a of them after the point */
        b.exp10 -= decimals_b;
        number_ref ref;
        number_ref_set(&ref, &b);
        double want = number_difference(&a, &b, NULL), got = number_deviation(&a, &ref);
        cr_assert_eq(bits_of(got), bits_of(want), "%s e-%d - %s e-%d", a_text, decimals_a, b_text,
                     decimals_b);
    }
}

Test(number, padded_parser_equals_number_parse)
{
    /* The parser for padded cells (SIMD where the CPU allows) must agree
     * with number_parse in kind and every field, on cells of every shape:
     * digits, points, exponents, signs, zeros, text, stray bytes, lengths
     * 0 to 24, with junk (digits, points, 'e') in the bytes after the cell. */
#if !defined(NUMBER_SIMD)
    cr_skip_test("no SIMD parser on this platform");
#else
    if (!number_simd_usable()) cr_skip_test("this CPU has no SSSE3");
    number_kind (*parse)(const char *, size_t, number_decimal *) = parse_padded;
    static const char alphabet[] = "0123456789012345678900.-+eE x";
    uint64_t state = UINT64_C(0x8f1bbcdcca62c1d6);
    char buf[24 + NUMBER_READ_AHEAD + 1];
    for (int i = 0; i < 1000000; i++) {
        uint64_t r = xorshift64(&state);
        size_t len = (size_t)(r % 25);
        int shape = (int)((r >> 8) % 4);
        for (size_t j = 0; j < sizeof buf; j++) {
            uint64_t c = xorshift64(&state);
            /* Mostly digits, a point and an exponent now and then. */
            buf[j] = shape == 0 ? alphabet[c % (sizeof alphabet - 1)] : (char)('0' + c % 10);
        }
        if (shape >= 2 && len > 2) buf[(r >> 16) % len] = '.';
        if (shape == 3 && len > 3) {
            size_t at = len - 1 - (r >> 24) % 4;
            buf[at] = (r >> 30) & 1 ? 'e' : 'E';
            if (at + 2 < len && (r >> 31) & 1) buf[at + 1] = (r >> 32) & 1 ? '-' : '+';
        }
        if ((r >> 40) & 1 && len) buf[0] = '-';
        number_decimal a, b;
        memset(&a, 0, sizeof a);
        memset(&b, 0, sizeof b);
        number_kind ka = number_parse(buf, len, &a), kb = parse(buf, len, &b);
        cr_assert_eq(ka, kb, "\"%.*s\": kind %d vs %d", (int)len, buf, (int)ka, (int)kb);
        if (ka == NUMBER_TEXT) continue;
        cr_assert_eq(bits_of(a.value), bits_of(b.value), "\"%.*s\"", (int)len, buf);
        if (ka != NUMBER_FINITE) continue;
        cr_assert(a.mantissa == b.mantissa && a.exp10 == b.exp10 && a.negative == b.negative &&
                      a.exact == b.exact,
                  "\"%.*s\": %llu e%d vs %llu e%d", (int)len, buf, (unsigned long long)a.mantissa,
                  a.exp10, (unsigned long long)b.mantissa, b.exp10);
    }
#endif
}

Test(number, fixed_decimals_parser_equals_the_simd_parser)
{
    /* The scan's parser for a column's usual decimals (number_simd.h) must
     * read every cell as number_parse_ssse3 does, whether it takes the cell
     * itself (1) or hands it on (0 or -1): cells of 0 to 20 bytes, digits
     * with a point at every place and now and then a sign, an exponent or
     * a stray byte, for every decimals value 1 to 16 (16 never matches). */
#if !defined(NUMBER_SIMD)
    cr_skip_test("no SIMD parser on this platform");
#else
    if (!number_simd_usable()) cr_skip_test("this CPU has no SSSE3");
    static const char stray[] = ".-+eEx ";
    uint64_t state = UINT64_C(0x3c6ef372fe94f82b);
    char buf[20 + NUMBER_READ_AHEAD + 1];
    long taken = 0;
    for (int i = 0; i < 1000000; i++) {
        uint64_t r = xorshift64(&state);
        size_t len = (size_t)(r % 21);
        unsigned decimals = 1 + (unsigned)((r >> 8) % 16);
        for (size_t j = 0; j < sizeof buf; j++) buf[j] = (char)('0' + xorshift64(&state) % 10);
        if (len > 1 && (r >> 16) % 8 != 0) buf[len - 1 - (r >> 20) % len] = '.';
        if ((r >> 28) % 4 == 0 && len > 2) buf[(r >> 32) % len] = stray[(r >> 40) % 7];
        if ((r >> 44) & 1 && len) buf[0] = '-';
        if ((r >> 45) % 8 == 0 && len > 2) memset(buf + 1, '0', len / 2); /* zeros */
        number_decimal a, b;
        memset(&a, 0, sizeof a);
        memset(&b, 0, sizeof b);
        int ka = parse_simd(buf, len, &a), kb = parse_fixed(buf, len, decimals, &b);
        taken += kb == 1;
        cr_assert_eq(ka, kb == 1 ? 0 : kb, "\"%.*s\" with %u decimals: %d vs %d", (int)len, buf,
                     decimals, ka, kb);
        if (ka != 0) continue;
        cr_assert(bits_of(a.value) == bits_of(b.value) && a.mantissa == b.mantissa &&
                      a.exp10 == b.exp10 && a.negative == b.negative && a.exact == b.exact,
                  "\"%.*s\" with %u decimals: %llu e%d vs %llu e%d", (int)len, buf, decimals,
                  (unsigned long long)a.mantissa, a.exp10, (unsigned long long)b.mantissa,
                  b.exp10);
    }
    cr_assert_gt(taken, 20000, "only %ld cells took the fixed form", taken);
#endif
}

Test(number, text_at_a_glance_is_text_to_number_parse)
{
    /* The decode loop counts a cell that number_text_at_once accepts as text
     * without parsing it: number_parse must find every such cell text.
     * Cells: each first byte 0-255, then 0 to 31 bytes drawn from digits,
     * signs, points, exponents, the letters of inf, infinity and nan, space
     * and stray bytes. */
    static const char tail[] = "0123456789.+-eExXaAfFnNiItTyY \t_";
    uint64_t state = UINT64_C(0x2545f4914f6cdd1d);
    char buf[40];
    long accepted = 0;
    for (int first = 0; first < 256; first++)
        for (int k = 0; k < 2000; k++) {
            uint64_t r = xorshift64(&state);
            size_t len = 1 + (size_t)(r % 33);
            buf[0] = (char)first;
            for (size_t j = 1; j < len; j++) {
                uint64_t c = xorshift64(&state);
                buf[j] = (c >> 60) == 0 ? (char)(c & 0xff) : tail[c % (sizeof tail - 1)];
            }
            if (!number_text_at_once(buf, len)) continue;
            accepted++;
            number_decimal d;
            cr_assert_eq(number_parse(buf, len, &d), NUMBER_TEXT, "\"%.*s\" is not text",
                         (int)len, buf);
        }
    /* Every letter but i and n in both cases (48 first bytes, 32 lengths of
     * 33), and most cells starting with i or n. */
    cr_assert_gt(accepted, 48 * 2000 * 30 / 33, "only %ld cells accepted", accepted);
    cr_assert(!number_text_at_once("inf", 3) && !number_text_at_once("NaN", 3) &&
              !number_text_at_once("", 0) && !number_text_at_once("-x", 2));
    cr_assert(number_text_at_once("e5", 2) && number_text_at_once("Zulu", 4));
    /* Words starting with i or n are text at a glance too, unless they start
     * with inf or nan, which the parser must see. */
    cr_assert(number_text_at_once("north", 5) && number_text_at_once("Item", 4) &&
              number_text_at_once("n", 1) && number_text_at_once("IN", 2) &&
              number_text_at_once("nab", 3) && number_text_at_once("ing", 3));
    cr_assert(!number_text_at_once("INFINITY", 8) && !number_text_at_once("nan  ", 5) &&
              !number_text_at_once("Information", 11) && !number_text_at_once("nanometre", 9));
}

Test(number, words_after_i_and_n_at_a_glance_are_text_to_number_parse)
{
    /* Every cell i or n (either case), then two bytes of all 256, then 0 to 6
     * bytes from the letters of infinity and nan and spaces: what
     * number_text_at_once accepts, number_parse finds text; and the spellings
     * of infinity and NaN with trailing spaces are never accepted. */
    static const char tail[] = "iInNfFaAtTyY  ";
    uint64_t state = UINT64_C(0x9e3779b97f4a7c15);
    char buf[16];
    long accepted = 0, nonfinite = 0;
    for (int first = 0; first < 4; first++)
        for (int b = 0; b < 256; b++)
            for (int d = 0; d < 256; d++)
                for (size_t extra = 0; extra <= 6; extra++) {
                    buf[0] = "iInN"[first];
                    buf[1] = (char)b;
                    buf[2] = (char)d;
                    for (size_t j = 0; j < extra; j++)
                        buf[3 + j] = tail[xorshift64(&state) % (sizeof tail - 1)];
                    size_t len = 3 + extra;
                    number_decimal dec;
                    number_kind k = number_parse(buf, len, &dec);
                    nonfinite += k == NUMBER_NONFINITE;
                    if (!number_text_at_once(buf, len)) continue;
                    accepted++;
                    cr_assert_eq(k, NUMBER_TEXT, "\"%.*s\" is not text", (int)len, buf);
                }
    cr_assert_gt(accepted, 4 * 256 * 256 * 7 * 9 / 10, "only %ld cells accepted", accepted);
    cr_assert_gt(nonfinite, 0, "no spelling of infinity or NaN was drawn");
}
