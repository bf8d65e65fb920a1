/* pairsum: see pairsum.h.
 *
 * Integers.  The running sums are 256-bit two's complement (pairsum_wide);
 * a block's part is five 128-bit sums of at most 256 pairs with |X|, |Y| <
 * 2^55 (sums of X below 2^63, products below 2^110, their sums below
 * 2^118); a pair outside that range goes straight into the 256-bit sums.  The read side (pairsum_fit,
 * pairsum_valid) works in 640-bit integers (`big`), enough for A B: with
 * Sxx < 2^200 and n < 2^64, A < 2^264 and A B < 2^528.
 *
 * Scales.  A pair whose exponent is coarser than the state's scale enters
 * as its mantissa times 10^(e - scale); a finer one first multiplies the
 * sums by a power of ten (Sx and Sxy by 10^k, Sxx by 10^2k for a finer x).
 * Sxx and Syy are checked against 2^200 after every change; since they only
 * grow, the check fails for some order of the pairs exactly when it fails
 * for the whole multiset.
 */
#include "acc/pairsum.h"

#include <math.h>
#include <string.h>

#include "io/number.h"

__extension__ typedef unsigned __int128 pairsum_u128;

#define TWO59 ((int64_t)1 << 59)
#define BIG_WORDS 10

static const uint64_t POW10[20] = {
    1ull, 10ull, 100ull, 1000ull, 10000ull, 100000ull, 1000000ull, 10000000ull,
    100000000ull, 1000000000ull, 10000000000ull, 100000000000ull, 1000000000000ull,
    10000000000000ull, 100000000000000ull, 1000000000000000ull, 10000000000000000ull,
    100000000000000000ull, 1000000000000000000ull, 10000000000000000000ull};

/* 2^55 / 10^k: the largest |mantissa| a cell k powers of ten above the
 * scale may have in the fast path of pairsum_add_many. */
static const int64_t LIMIT55[17] = {
    36028797018963968, 3602879701896396, 360287970189639, 36028797018963, 3602879701896,
    360287970189, 36028797018, 3602879701, 360287970, 36028797, 3602879, 360287, 36028, 3602,
    360, 36, 3};

/* ---- 256-bit sums -------------------------------------------------------- */

static pairsum_wide wide_of(pairsum_i128 v)
{
    pairsum_u128 u = (pairsum_u128)v;
    uint64_t ext = v < 0 ? UINT64_MAX : 0;
    return (pairsum_wide){{(uint64_t)u, (uint64_t)(u >> 64), ext, ext}};
}

static void wide_add(pairsum_wide *a, const pairsum_wide *b)
{
    unsigned carry = 0;
    for (int i = 0; i < 4; i++) {
        uint64_t s = a->w[i] + b->w[i];
        unsigned c1 = s < a->w[i];
        uint64_t t = s + carry;
        carry = c1 | (t < s);
        a->w[i] = t;
    }
}

static int wide_negative(const pairsum_wide *a) { return (a->w[3] >> 63) != 0; }

/* 0 <= a < 2^200 */
static int wide_below_2_200(const pairsum_wide *a) { return a->w[3] < (1ull << 8); }

static void wide_negate(pairsum_wide *a)
{
    unsigned carry = 1;
    for (int i = 0; i < 4; i++) {
        uint64_t t = ~a->w[i] + carry;
        carry = carry && t == 0;
        a->w[i] = t;
    }
}

/* a *= m (m < 2^64); 0 when the product leaves the signed 256-bit range. */
static int wide_mul_u64(pairsum_wide *a, uint64_t m)
{
    int neg = wide_negative(a);
    if (neg) wide_negate(a);
    pairsum_u128 carry = 0;
    for (int i = 0; i < 4; i++) {
        pairsum_u128 t = (pairsum_u128)a->w[i] * m + carry;
        a->w[i] = (uint64_t)t;
        carry = t >> 64;
    }
    if (carry || wide_negative(a)) return 0;
    if (neg) wide_negate(a);
    return 1;
}

/* a *= 10^k; 0 on overflow. */
static int wide_mul_pow10(pairsum_wide *a, int64_t k)
{
    while (k > 0) {
        int step = k > 19 ? 19 : (int)k;
        if (!wide_mul_u64(a, POW10[step])) return 0;
        k -= step;
    }
    return 1;
}

/* The signed product of two values below 2^127 in magnitude. */
static pairsum_wide wide_product(pairsum_i128 x, pairsum_i128 y)
{
    int neg = (x < 0) != (y < 0);
    pairsum_u128 a = x < 0 ? (pairsum_u128)0 - (pairsum_u128)x : (pairsum_u128)x;
    pairsum_u128 b = y < 0 ? (pairsum_u128)0 - (pairsum_u128)y : (pairsum_u128)y;
    uint64_t a0 = (uint64_t)a, a1 = (uint64_t)(a >> 64), b0 = (uint64_t)b, b1 = (uint64_t)(b >> 64);
    pairsum_u128 p00 = (pairsum_u128)a0 * b0, p01 = (pairsum_u128)a0 * b1,
                 p10 = (pairsum_u128)a1 * b0, p11 = (pairsum_u128)a1 * b1;
    pairsum_wide r = {{(uint64_t)p00, 0, 0, 0}};
    pairsum_u128 mid = (p00 >> 64) + (uint64_t)p01 + (uint64_t)p10;
    r.w[1] = (uint64_t)mid;
    pairsum_u128 high = (mid >> 64) + (p01 >> 64) + (p10 >> 64) + (uint64_t)p11;
    r.w[2] = (uint64_t)high;
    r.w[3] = (uint64_t)((high >> 64) + (p11 >> 64));
    if (neg) wide_negate(&r);
    return r;
}

/* ---- update ---------------------------------------------------------------- */

void pairsum_init(pairsum *p)
{
    memset(p, 0, sizeof *p);
    p->exact = 1;
    p->scale_x = p->scale_y = PAIRSUM_UNSET;
}

/* Inexact for good: the sums cleared, the scales unset. */
static void make_inexact(pairsum *p)
{
    memset(p, 0, sizeof *p);
    p->scale_x = p->scale_y = PAIRSUM_UNSET;
}

static int bounded(const pairsum *p)
{
    return wide_below_2_200(&p->sxx) && wide_below_2_200(&p->syy);
}

void pairsum_flush(pairsum *p)
{
    if (!p->block_n) return;
    pairsum_wide t;
    t = wide_of(p->bx), wide_add(&p->sx, &t);
    t = wide_of(p->by), wide_add(&p->sy, &t);
    t = wide_of(p->bxx), wide_add(&p->sxx, &t);
    t = wide_of(p->byy), wide_add(&p->syy, &t);
    t = wide_of(p->bxy), wide_add(&p->sxy, &t);
    p->n += p->block_n;
    p->block_n = 0;
    p->bx = p->by = p->bxx = p->byy = p->bxy = 0;
    if (!bounded(p)) make_inexact(p);
}

/* Brings the scales down to sx, sy (not above the current ones): the sums
 * times powers of ten.  The block's part must be flushed.  0 when the sums
 * pass their bound (the state is then inexact). */
static int rescale(pairsum *p, int32_t sx, int32_t sy)
{
    int64_t kx = (int64_t)p->scale_x - sx, ky = (int64_t)p->scale_y - sy;
    int ok = wide_mul_pow10(&p->sx, kx) && wide_mul_pow10(&p->sxx, 2 * kx) &&
             wide_mul_pow10(&p->sy, ky) && wide_mul_pow10(&p->syy, 2 * ky) &&
             wide_mul_pow10(&p->sxy, kx + ky) && bounded(p);
    if (!ok) { make_inexact(p); return 0; }
    p->scale_x = sx;
    p->scale_y = sy;
    return 1;
}

/* m 10^k as a 128-bit integer below 2^100 in magnitude (k >= 0); 0 when it
 * is not (its square alone would pass the 2^200 bound). */
static int scaled_value(int64_t m, int64_t k, pairsum_i128 *out)
{
    pairsum_u128 u = m < 0 ? (pairsum_u128)0 - (pairsum_u128)(pairsum_i128)m : (pairsum_u128)m;
    const pairsum_u128 limit = (pairsum_u128)1 << 100;
    while (u && k > 0) {
        int step = k > 19 ? 19 : (int)k;
        if (u >= limit / POW10[step]) return 0;
        u *= POW10[step];
        k -= step;
    }
    if (u >= limit) return 0;
    *out = m < 0 ? -(pairsum_i128)u : (pairsum_i128)u;
    return 1;
}

/* One pair off the fast path of pairsum_add_many (the block's part moved
 * into the sums first). */
static __attribute__((noinline)) void add_slow(pairsum *p, int64_t mx, int32_t ex, int64_t my,
                                                int32_t ey)
{
    if (ex < -PAIRSUM_MAX_SCALE || ex > PAIRSUM_MAX_SCALE || ey < -PAIRSUM_MAX_SCALE ||
        ey > PAIRSUM_MAX_SCALE) { /* also PAIRSUM_INEXACT */
        make_inexact(p);
        return;
    }
    if (p->n == 0 && p->block_n == 0) { /* the first pair sets the scales */
        p->scale_x = ex;
        p->scale_y = ey;
    }
    pairsum_flush(p);
    if (!p->exact) return;
    if ((ex < p->scale_x || ey < p->scale_y) &&
        !rescale(p, ex < p->scale_x ? ex : p->scale_x, ey < p->scale_y ? ey : p->scale_y))
        return;
    pairsum_i128 x, y;
    if (!scaled_value(mx, (int64_t)ex - p->scale_x, &x) ||
        !scaled_value(my, (int64_t)ey - p->scale_y, &y)) {
        make_inexact(p);
        return;
    }
    pairsum_wide t;
    t = wide_of(x), wide_add(&p->sx, &t);
    t = wide_of(y), wide_add(&p->sy, &t);
    t = wide_product(x, x), wide_add(&p->sxx, &t);
    t = wide_product(y, y), wide_add(&p->syy, &t);
    t = wide_product(x, y), wide_add(&p->sxy, &t);
    p->n++;
    if (!bounded(p)) make_inexact(p);
}

void pairsum_add_many(pairsum *p, const int64_t *mx, const int32_t *ex, const int64_t *my,
                      const int32_t *ey, const uint16_t *at, size_t n)
{
    if (!p->exact) return;
    /* The block's part and the scales in locals, moved to p around a slow
     * pair.  Before the first pair the scales are PAIRSUM_UNSET, which no
     * exponent passes the range test with. */
    uint32_t bn = p->block_n;
    int64_t bx = 0, by = 0;
    pairsum_i128 bxx = p->bxx, byy = p->byy, bxy = p->bxy;
    int32_t sx = p->scale_x, sy = p->scale_y;
    for (size_t i = 0; i < n; i++) {
        size_t r = at[i];
        int32_t eyr = ey[r];
        if (eyr == PAIRSUM_NONE) continue;
        int64_t x = mx[i], y = my[r];
        /* The scales, or a cell up to 16 powers of ten coarser whose X and Y
         * stay below 2^55 (|mantissa| < 2^55 / 10^k; PAIRSUM_INEXACT fails
         * the range test): 256 of them sum in 64 bits, their products in
         * 128.  Cells at the scales come first (the common case). */
        const uint64_t two55 = (uint64_t)LIMIT55[0];
        int fits = ex[i] == sx && eyr == sy && (uint64_t)x + two55 < 2 * two55 &&
                   (uint64_t)y + two55 < 2 * two55;
        if (!fits) {
            uint32_t kx = (uint32_t)((int64_t)ex[i] - sx), ky = (uint32_t)((int64_t)eyr - sy);
            fits = kx <= 16 && ky <= 16 &&
                   (uint64_t)x + (uint64_t)LIMIT55[kx] < 2 * (uint64_t)LIMIT55[kx] &&
                   (uint64_t)y + (uint64_t)LIMIT55[ky] < 2 * (uint64_t)LIMIT55[ky];
            if (fits) {
                x *= (int64_t)POW10[kx];
                y *= (int64_t)POW10[ky];
            }
        }
        if (fits) {
            bn++;
            bx += x;
            by += y;
            bxx += (pairsum_i128)x * x;
            byy += (pairsum_i128)y * y;
            bxy += (pairsum_i128)x * y;
            continue;
        }
        p->block_n = bn, p->bx += bx, p->by += by, p->bxx = bxx, p->byy = byy, p->bxy = bxy;
        add_slow(p, x, ex[i], y, eyr);
        if (!p->exact) return;
        bn = p->block_n, bx = by = 0, bxx = p->bxx, byy = p->byy, bxy = p->bxy;
        sx = p->scale_x, sy = p->scale_y;
    }
    p->block_n = bn, p->bx += bx, p->by += by, p->bxx = bxx, p->byy = byy, p->bxy = bxy;
    pairsum_flush(p);
}

void pairsum_merge(pairsum *into, const pairsum *from)
{
    if (!into->exact) return;
    if (!from->exact) { make_inexact(into); return; }
    if (from->n == 0) return;
    if (into->n == 0) { *into = *from; return; }
    pairsum b = *from;
    int32_t sx = into->scale_x < b.scale_x ? into->scale_x : b.scale_x;
    int32_t sy = into->scale_y < b.scale_y ? into->scale_y : b.scale_y;
    if (!rescale(into, sx, sy)) return;
    if (!rescale(&b, sx, sy)) { make_inexact(into); return; }
    wide_add(&into->sx, &b.sx);
    wide_add(&into->sy, &b.sy);
    wide_add(&into->sxx, &b.sxx);
    wide_add(&into->syy, &b.syy);
    wide_add(&into->sxy, &b.sxy);
    into->n += b.n;
    if (!bounded(into)) make_inexact(into);
}

/* ---- 640-bit integers for the read side ----------------------------------- */

typedef struct {
    uint64_t w[BIG_WORDS];
} big;

static big big_of(const pairsum_wide *a)
{
    big r;
    uint64_t ext = wide_negative(a) ? UINT64_MAX : 0;
    for (int i = 0; i < BIG_WORDS; i++) r.w[i] = i < 4 ? a->w[i] : ext;
    return r;
}

static int big_negative(const big *a) { return (a->w[BIG_WORDS - 1] >> 63) != 0; }

static int big_zero(const big *a)
{
    for (int i = 0; i < BIG_WORDS; i++)
        if (a->w[i]) return 0;
    return 1;
}

static void big_negate(big *a)
{
    unsigned carry = 1;
    for (int i = 0; i < BIG_WORDS; i++) {
        uint64_t t = ~a->w[i] + carry;
        carry = carry && t == 0;
        a->w[i] = t;
    }
}

static big big_sub(big a, const big *b)
{
    unsigned borrow = 0;
    for (int i = 0; i < BIG_WORDS; i++) {
        uint64_t d = a.w[i] - b->w[i];
        unsigned b1 = a.w[i] < b->w[i];
        uint64_t t = d - borrow;
        borrow = b1 | (d < borrow);
        a.w[i] = t;
    }
    return a;
}

/* a b, truncated to 640 bits (the callers' products fit). */
static big big_mul(big a, big b)
{
    int neg = big_negative(&a) != big_negative(&b);
    if (big_negative(&a)) big_negate(&a);
    if (big_negative(&b)) big_negate(&b);
    big r = {{0}};
    for (int i = 0; i < BIG_WORDS; i++) {
        pairsum_u128 carry = 0;
        if (!a.w[i]) continue;
        for (int j = 0; i + j < BIG_WORDS; j++) {
            pairsum_u128 t = (pairsum_u128)a.w[i] * b.w[j] + r.w[i + j] + carry;
            r.w[i + j] = (uint64_t)t;
            carry = t >> 64;
        }
    }
    if (neg) big_negate(&r);
    return r;
}

static big big_u64(uint64_t v)
{
    big r = {{v}};
    return r;
}

/* The double nearest to a (round to nearest even; huge values give inf). */
static double big_to_double(big a)
{
    int neg = big_negative(&a);
    if (neg) big_negate(&a);
    int top = BIG_WORDS - 1;
    while (top >= 0 && !a.w[top]) top--;
    if (top < 0) return 0.0;
    int lead = 63 - __builtin_clzll(a.w[top]); /* bit of the leading one in word top */
    int64_t msb = (int64_t)top * 64 + lead;
    /* The 64 bits from the leading one down, the rest ORed into the last
     * (a sticky bit below the 53 kept, so the conversion rounds right). */
    uint64_t t = 0, sticky = 0;
    int64_t lo = msb - 63;
    for (int64_t b = 0; b < 64; b++) {
        int64_t bit = lo + b;
        if (bit >= 0 && (a.w[bit / 64] >> (bit % 64)) & 1) t |= 1ull << b;
    }
    for (int64_t bit = 0; bit < lo; bit++)
        if ((a.w[bit / 64] >> (bit % 64)) & 1) { sticky = 1; break; }
    double v = ldexp((double)(t | sticky), (int)lo);
    return neg ? -v : v;
}

/* A = n Sxx - Sx^2 and the like: n Sab - Sa Sb. */
static big centred(uint64_t n, const pairsum_wide *sab, const pairsum_wide *sa,
                   const pairsum_wide *sb)
{
    big nsab = big_mul(big_u64(n), big_of(sab)), prod = big_mul(big_of(sa), big_of(sb));
    return big_sub(nsab, &prod);
}

int pairsum_fit(const pairsum *p, double *r, double *f, double *n)
{
    *r = *f = NAN;
    *n = (double)p->n;
    if (!p->exact || p->n < 3 || p->block_n) return -1;
    big a = centred(p->n, &p->sxx, &p->sx, &p->sx);
    big b = centred(p->n, &p->syy, &p->sy, &p->sy);
    big c = centred(p->n, &p->sxy, &p->sx, &p->sy);
    if (big_zero(&a) || big_zero(&b) || big_negative(&a) || big_negative(&b)) return 1;
    big cc = big_mul(c, c), ab = big_mul(a, b), d = big_sub(ab, &cc);
    double ad = big_to_double(a), bd = big_to_double(b), cd = big_to_double(c);
    *r = cd / (sqrt(ad) * sqrt(bd));
    if (*r > 1) *r = 1;
    if (*r < -1) *r = -1;
    if (big_zero(&d) || big_negative(&d)) { /* a perfect fit */
        *f = INFINITY;
        return 0;
    }
    /* (n - 2) C^2 / D: C^2 and D each rounded once. */
    *f = ((double)(p->n - 2) * big_to_double(cc)) / big_to_double(d);
    return 0;
}

/* v 10^k in steps of at most 10^22: each step rounds once, and the steps
 * go one way, so nothing overflows or underflows unless the result does. */
static double times_pow10(double v, int64_t k)
{
    for (; k > 0 && v != 0; k -= k > 22 ? 22 : k) v *= number_pow10[k > 22 ? 22 : k];
    for (; k < 0 && v != 0; k += k < -22 ? 22 : -k) v /= number_pow10[k < -22 ? 22 : -k];
    return v;
}

int pairsum_centred(const pairsum *p, double *m2x, double *m2y, double *cxy)
{
    *m2x = *m2y = *cxy = NAN;
    if (!p->exact || p->n == 0 || p->block_n) return -1;
    double n = (double)p->n;
    big a = centred(p->n, &p->sxx, &p->sx, &p->sx);
    big b = centred(p->n, &p->syy, &p->sy, &p->sy);
    big c = centred(p->n, &p->sxy, &p->sx, &p->sy);
    /* A / n^2 10^(2 scale_x) is the variance over the pairs: n of it is M2. */
    *m2x = times_pow10(big_to_double(a) / n, 2 * (int64_t)p->scale_x);
    *m2y = times_pow10(big_to_double(b) / n, 2 * (int64_t)p->scale_y);
    *cxy = times_pow10(big_to_double(c) / n, (int64_t)p->scale_x + p->scale_y);
    return 0;
}

/* ---- serialization ---------------------------------------------------------- */

static void put_wide(wire_writer *w, const pairsum_wide *a)
{
    for (int i = 0; i < 4; i++) wire_put_u64(w, a->w[i]);
}

static void get_wide(wire_reader *r, pairsum_wide *a)
{
    for (int i = 0; i < 4; i++) a->w[i] = wire_get_u64(r);
}

void pairsum_write(const pairsum *p, wire_writer *w)
{
    int set = p->exact && p->n > 0; /* unset scales are written as 0 */
    wire_put_u8(w, p->exact);
    wire_put_u64(w, p->n);
    wire_put_u32(w, (uint32_t)(set ? p->scale_x : 0));
    wire_put_u32(w, (uint32_t)(set ? p->scale_y : 0));
    put_wide(w, &p->sx);
    put_wide(w, &p->sy);
    put_wide(w, &p->sxx);
    put_wide(w, &p->syy);
    put_wide(w, &p->sxy);
}

int pairsum_read(pairsum *p, wire_reader *r)
{
    pairsum_init(p);
    p->exact = wire_get_u8(r);
    p->n = wire_get_u64(r);
    p->scale_x = (int32_t)wire_get_u32(r);
    p->scale_y = (int32_t)wire_get_u32(r);
    get_wide(r, &p->sx);
    get_wide(r, &p->sy);
    get_wide(r, &p->sxx);
    get_wide(r, &p->syy);
    get_wide(r, &p->sxy);
    if (!r->failed && !pairsum_valid(p)) r->failed = 1;
    if (p->n == 0) p->scale_x = p->scale_y = PAIRSUM_UNSET;
    return r->failed ? -1 : 0;
}

int pairsum_valid(const pairsum *p)
{
    static const pairsum_wide zero;
    int unset = (p->scale_x == 0 && p->scale_y == 0) ||
                (p->scale_x == PAIRSUM_UNSET && p->scale_y == PAIRSUM_UNSET);
    int all_zero = p->n == 0 && unset &&
                   !memcmp(&p->sx, &zero, sizeof zero) && !memcmp(&p->sy, &zero, sizeof zero) &&
                   !memcmp(&p->sxx, &zero, sizeof zero) && !memcmp(&p->syy, &zero, sizeof zero) &&
                   !memcmp(&p->sxy, &zero, sizeof zero);
    if (p->exact > 1 || p->block_n) return 0;
    if (!p->exact || p->n == 0) return all_zero;
    if (p->scale_x < -PAIRSUM_MAX_SCALE || p->scale_x > PAIRSUM_MAX_SCALE ||
        p->scale_y < -PAIRSUM_MAX_SCALE || p->scale_y > PAIRSUM_MAX_SCALE)
        return 0;
    if (!bounded(p)) return 0;
    big a = centred(p->n, &p->sxx, &p->sx, &p->sx);
    big b = centred(p->n, &p->syy, &p->sy, &p->sy);
    big c = centred(p->n, &p->sxy, &p->sx, &p->sy);
    if (big_negative(&a) || big_negative(&b)) return 0;
    if (p->n == 1) return big_zero(&a) && big_zero(&b) && big_zero(&c);
    /* Cauchy-Schwarz, exactly: C^2 <= A B */
    big cc = big_mul(c, c), ab = big_mul(a, b), d = big_sub(ab, &cc);
    return !big_negative(&d);
}
