/* fuzz_number: the decimal parser (io/number) on any bytes.
 *
 * An input (at most 64 bytes) is one cell, or two cells a and b split at
 * its first '|'.  For each cell:
 *   - number_parse reads it from a buffer of exactly its size, so
 *     AddressSanitizer sees any read past len;
 *   - the SIMD parsers for padded cells (number_parse_padded; where they
 *     read a cell, the digits-only number_parse_integer_ssse3 and
 *     number_parse_fixed_ssse3 for 1 to 16 decimals; where the CPU has
 *     SSSE3) read it with NUMBER_READ_AHEAD bytes of digits, points and 'e's
 *     after it, and must give the same kind and, for a number, the same
 *     value bits, mantissa, power of ten, sign and exactness;
 *   - glibc strtod (correctly rounded for inputs of any length) is the
 *     outside reference, on what both accept under sheaf's number rules
 *     (number.h: sign, digits with one optional point, optional exponent;
 *     leading and trailing ASCII spaces ignored; inf/infinity/nan in any
 *     case):
 *       * a cell number_parse calls finite: strtod reads the whole cell
 *         (spaces trimmed) to the same bits;
 *       * a cell it calls non-finite: strtod reads the whole cell to an
 *         infinity of the same sign, or both are NaN;
 *       * a cell of only digits, signs, points and e/E that strtod reads
 *         whole: number_parse does not call it text;
 *       * an exact decimal (<= 19 digits): number_to_double of its mantissa
 *         and power of ten has the value's bits.
 * With two numeric cells, number_deviation (the inline difference) must
 * equal number_difference to the bit, and when number_difference says it
 * took the exact integer path, its result must equal the correctly rounded
 * difference of the two decimals (strtod of the difference written out
 * exactly as a decimal, when both hold every digit, exact or with a tail
 * of 20 to 38 digits, at powers of ten within 40).
 *
 * A disagreement prints both sides and aborts, so libFuzzer keeps the input.
 * Built with -DFUZZ_REPLAY_MAIN it is a plain program:
 * `replay_number FILE_OR_DIR...` runs every file once.
 */
#include <dirent.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "io/number.h"
#include "io/number_simd.h"
#include "../number_simd_calls.h"

#define MAX_INPUT_BYTES 64

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static void fault(const char *fmt, ...) __attribute__((format(printf, 1, 2), noreturn));
static void fault(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "fuzz_number: ");
    vfprintf(stderr, fmt, ap);
    fprintf(stderr, "\n");
    va_end(ap);
    abort();
}

static uint64_t bits_of(double v)
{
    uint64_t u;
    memcpy(&u, &v, sizeof u);
    return u;
}

/* Parses one cell every way and checks them against each other. */
static number_kind check_cell(const uint8_t *cell, size_t len, number_decimal *out)
{
    char *exact = malloc(len ? len : 1);
    char text[MAX_INPUT_BYTES + 1];
    if (!exact) fault("out of memory");
    memcpy(exact, cell, len);
    memcpy(text, cell, len);
    text[len] = '\0';
    number_decimal d;
    memset(&d, 0, sizeof d);
    number_kind k = number_parse(exact, len, &d);
    free(exact);

#if defined(NUMBER_SIMD)
    if (number_simd_usable()) {
        static const char junk[] = "7.e1-0+5E9.3e";
        char padded[MAX_INPUT_BYTES + NUMBER_READ_AHEAD + 16];
        memcpy(padded, cell, len);
        for (size_t i = 0; i < NUMBER_READ_AHEAD + 16; i++)
            padded[len + i] = junk[(len + i) % (sizeof junk - 1)];
        number_decimal p;
        memset(&p, 0, sizeof p);
        number_kind kp = parse_padded(padded, len, &p);
        if (kp != k) fault("\"%s\": number_parse kind %d, padded parser %d", text, k, kp);
        if (k != NUMBER_TEXT && bits_of(p.value) != bits_of(d.value) && !(isnan(p.value) && isnan(d.value)))
            fault("\"%s\": number_parse %.17g, padded parser %.17g", text, d.value, p.value);
        if (k == NUMBER_FINITE &&
            (p.mantissa != d.mantissa || p.exp10 != d.exp10 || p.negative != d.negative ||
             p.exact != d.exact || p.tail_digits != d.tail_digits ||
             (d.tail_digits && p.tail != d.tail)))
            fault("\"%s\": number_parse %llu e%d neg %d exact %d, padded %llu e%d neg %d exact %d",
                  text, (unsigned long long)d.mantissa, d.exp10, d.negative, d.exact,
                  (unsigned long long)p.mantissa, p.exp10, p.negative, p.exact);
        /* The digits-only parser: a cell it reads is one number_parse reads
         * the same way. */
        number_decimal w;
        memset(&w, 0, sizeof w);
        if (parse_whole(padded, len, &w) == 0 &&
            (k != NUMBER_FINITE || bits_of(w.value) != bits_of(d.value) ||
             w.mantissa != d.mantissa || w.exp10 != d.exp10 || w.negative != d.negative ||
             w.exact != d.exact || w.tail_digits != d.tail_digits))
            fault("\"%s\": number_parse kind %d %.17g %llu e%d, digits-only parser %.17g %llu e%d",
                  text, k, d.value, (unsigned long long)d.mantissa, d.exp10, w.value,
                  (unsigned long long)w.mantissa, w.exp10);
        /* The parser for a column's usual decimals, for each number of
         * decimals: a cell it reads (itself or by the general steps) is one
         * number_parse reads the same way. */
        for (unsigned dec = 1; dec <= 16; dec++) {
            number_decimal f;
            memset(&f, 0, sizeof f);
            int got = parse_fixed(padded, len, dec, &f);
            if (got >= 0 &&
                (k != NUMBER_FINITE || bits_of(f.value) != bits_of(d.value) ||
                 f.mantissa != d.mantissa || f.exp10 != d.exp10 || f.negative != d.negative ||
                 f.exact != d.exact || f.tail_digits != d.tail_digits))
                fault("\"%s\": number_parse kind %d %.17g %llu e%d, %u-decimals parser (%d) "
                      "%.17g %llu e%d",
                      text, k, d.value, (unsigned long long)d.mantissa, d.exp10, dec, got,
                      f.value, (unsigned long long)f.mantissa, f.exp10);
        }
    }
#endif

    /* The cell without its leading and trailing ASCII spaces. */
    size_t a = 0, b = len;
    while (a < b && text[a] == ' ') a++;
    while (b > a && text[b - 1] == ' ') b--;
    char trimmed[MAX_INPUT_BYTES + 1];
    memcpy(trimmed, text + a, b - a);
    trimmed[b - a] = '\0';
    int has_nul = memchr(cell, 0, len) != NULL;
    char *end;
    double want = strtod(trimmed, &end);
    int whole = !has_nul && b > a && *end == '\0' && trimmed[0] != ' ' &&
                !(trimmed[0] >= '\t' && trimmed[0] <= '\r');
    if (k == NUMBER_FINITE) {
        if (!whole) fault("\"%s\": finite for number_parse, strtod stops at \"%s\"", text, end);
        if (bits_of(want) != bits_of(d.value))
            fault("\"%s\": number_parse %.17g, strtod %.17g", text, d.value, want);
        if (d.exact && bits_of(number_to_double(d.mantissa, d.exp10, d.negative)) != bits_of(d.value))
            fault("\"%s\": number_to_double(%llu, %d) %.17g, value %.17g", text,
                  (unsigned long long)d.mantissa, d.exp10,
                  number_to_double(d.mantissa, d.exp10, d.negative), d.value);
    } else if (k == NUMBER_NONFINITE) {
        if (!whole) fault("\"%s\": non-finite for number_parse, strtod stops at \"%s\"", text, end);
        if (!(isnan(want) && isnan(d.value)) && !(isinf(want) && want == d.value))
            fault("\"%s\": number_parse %g, strtod %g", text, d.value, want);
    } else if (whole && strspn(trimmed, "0123456789+-.eE") == b - a) {
        fault("\"%s\": strtod reads %.17g, number_parse calls it text", text, want);
    }
    *out = d;
    return k;
}

/* A decimal's whole significand as digits and its power of ten: the
 * mantissa, then for a wide cell its tail padded to tail_digits digits.
 * 0 when the decimal does not hold every digit. */
static int whole_digits(const number_decimal *x, char *buf, size_t len, int64_t *e)
{
    if (x->exact) {
        snprintf(buf, len, "%llu", (unsigned long long)x->mantissa);
        *e = x->exp10;
        return 1;
    }
    if (!x->tail_digits) return 0;
    snprintf(buf, len, "%llu%0*llu", (unsigned long long)x->mantissa, (int)x->tail_digits,
             (unsigned long long)x->tail);
    *e = (int64_t)x->exp10 - x->tail_digits;
    return 1;
}

/* The exact difference a - b of two decimals that hold every digit (exact,
 * or wide with a tail) written as a decimal string, when their powers of
 * ten are within 40 of each other. */
static int exact_difference_text(const number_decimal *x, const number_decimal *y, char *buf,
                                 size_t len)
{
    char wx[48], wy[48];
    int64_t ex, ey;
    if (!whole_digits(x, wx, sizeof wx, &ex) || !whole_digits(y, wy, sizeof wy, &ey)) return 0;
    int64_t e = ex < ey ? ex : ey;
    if (ex - e > 40 || ey - e > 40) return 0;
    /* Each significand times 10^(its power - e) as decimal digits (at most
     * 38 + 40), then added or subtracted digit by digit. */
    char xs[96], ys[96];
    int nx = snprintf(xs, sizeof xs, "%s%0*d", wx, (int)(ex - e), 0);
    int ny = snprintf(ys, sizeof ys, "%s%0*d", wy, (int)(ey - e), 0);
    if (ex == e) nx = snprintf(xs, sizeof xs, "%s", wx);
    if (ey == e) ny = snprintf(ys, sizeof ys, "%s", wy);
    /* Signed values sx*X - sy*Y: add or subtract magnitudes. */
    int sx = x->negative ? -1 : 1, sy = y->negative ? 1 : -1; /* a + (-b) */
    char r[112];
    int neg;
    int width = (nx > ny ? nx : ny) + 1;
    int dx[112] = {0}, dy[112] = {0}, dr[112] = {0};
    for (int i = 0; i < nx; i++) dx[width - nx + i] = xs[i] - '0';
    for (int i = 0; i < ny; i++) dy[width - ny + i] = ys[i] - '0';
    if (sx == sy) {
        int carry = 0;
        for (int i = width - 1; i >= 0; i--) {
            int s = dx[i] + dy[i] + carry;
            dr[i] = s % 10;
            carry = s / 10;
        }
        neg = sx < 0;
    } else {
        int cmp = 0; /* |X| vs |Y|: the first digit that differs */
        for (int i = 0; i < width && !cmp; i++) cmp = dx[i] - dy[i];
        int *big = cmp >= 0 ? dx : dy, *small = cmp >= 0 ? dy : dx;
        int borrow = 0;
        for (int i = width - 1; i >= 0; i--) {
            int s = big[i] - small[i] - borrow;
            borrow = s < 0;
            dr[i] = s + (borrow ? 10 : 0);
        }
        neg = (cmp >= 0 ? sx : sy) < 0;
    }
    int n = 0;
    r[n++] = neg ? '-' : '+';
    for (int i = 0; i < width; i++) r[n++] = (char)('0' + dr[i]);
    r[n] = '\0';
    snprintf(buf, len, "%se%lld", r, (long long)e);
    return 1;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > MAX_INPUT_BYTES) size = MAX_INPUT_BYTES;
    const uint8_t *bar = memchr(data, '|', size);
    number_decimal x, y;
    if (!bar) {
        check_cell(data, size, &x);
        return 0;
    }
    size_t la = (size_t)(bar - data);
    number_kind ka = check_cell(data, la, &x);
    number_kind kb = check_cell(bar + 1, size - la - 1, &y);
    if (ka != NUMBER_FINITE || kb != NUMBER_FINITE) return 0;
    number_ref r;
    number_ref_set(&r, &y);
    int took_exact = 0;
    double general = number_difference(&x, &y, &took_exact);
    double inline_d = number_deviation(&x, &r);
    if (bits_of(general) != bits_of(inline_d) && !(isnan(general) && isnan(inline_d)))
        fault("%.17g - %.17g: number_difference %.17g, number_deviation %.17g", x.value, y.value,
              general, inline_d);
    char text[200];
    if (took_exact && exact_difference_text(&x, &y, text, sizeof text)) {
        double want = strtod(text, NULL);
        /* Zero's sign: the integer path gives +0 for equal decimals. */
        if (bits_of(want) != bits_of(general) && !(want == 0 && general == 0))
            fault("%.17g - %.17g: exact path gives %.17g, strtod(\"%s\") %.17g", x.value, y.value,
                  general, text, want);
    }
    return 0;
}

#ifdef FUZZ_REPLAY_MAIN
#include "replay_main.h"
#endif
