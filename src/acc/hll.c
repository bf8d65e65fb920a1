/* hll: HyperLogLog distinct count, precision 14 (see hll.h).
 *
 * Update rule.  A 64-bit hash x is split into a register index j = the top
 * 14 bits and w = the remaining 50 bits; the rank is the position of the
 * leftmost 1-bit of w (1 + leading zeros), 51 when w is all zero.  Register
 * j keeps the largest rank seen.  Ranks fit in 6 bits; one byte per register
 * keeps the update a load, a compare and a store.
 *
 * Merge rule.  Register-wise maximum.  It is exactly the sketch of the union
 * of the two inputs, commutative, associative and idempotent.
 *
 * Estimate.  Flajolet, Fusy, Gandouet & Meunier (2007):
 *     E = alpha_m * m^2 / sum_j 2^-M[j],   alpha_m = 0.7213 / (1 + 1.079 / m),
 * m = 16384.  Small-range correction after Heule, Nunkesser & Hall (2013):
 * when V > 0 registers are empty, the linear-counting estimate
 * L = m * ln(m / V) is used while L <= 3m = 49152.
 *
 * Why 3m and not their threshold 11500 for p = 14 (quoted from memory): that
 * threshold assumes their bias-correction table for the raw estimate E, which
 * is not applied here.  Uncorrected, E overestimates badly just above 11500
 * (+55% at n = 12000, +21% at 20000, +7% at 30000, +2.7% at 40000), while L
 * stays unbiased with relative RMSE under 1.1% up to n = 50000; the RMSE of
 * L and of E cross near n = 3m (L 1.07%, E 1.18% at 50000; E 0.93% vs L
 * 1.17% at 55000).  Measured here: 100 sketches per n, XXH3-hashed integers
 * with different seeds.  Flajolet et al.'s own switch (E <= 5m/2) lands near
 * n = 40000 where E is still 2.7% high.  With 64-bit hashes no large-range
 * correction is needed.  Relative standard error of E about 1.04 / sqrt(m)
 * = 0.81% (Flajolet et al. 2007).
 *
 * Serialization.  A tag byte, then either
 *     0 (sparse): u32 k, then k pairs (u16 index, u8 rank), indices strictly
 *                 ascending, ranks 1..51 -- only the non-empty registers;
 *     1 (dense):  16384 register bytes, each 0..51;
 * the writer picks whichever is shorter (sparse while k < 5460).
 */
#include "io/clones.h"
#include "acc/hll.h"

#include <math.h>
#include <string.h>

#define HLL_MAX_RANK (64 - HLL_PRECISION + 1) /* 51 */
#define HLL_TAG_SPARSE 0
#define HLL_TAG_DENSE 1
/* Linear counting below 3m; see the opening comment for the measurement. */
#define HLL_LINEAR_THRESHOLD (3.0 * HLL_REGISTERS)

void hll_init(hll *h) { memset(h->reg, 0, sizeof h->reg); }

static inline unsigned leading_zeros64(uint64_t w)
{
#if defined(__GNUC__) || defined(__clang__)
    return (unsigned)__builtin_clzll(w); /* w != 0 here */
#else
    unsigned n = 0;
    while (!(w & (UINT64_C(1) << 63))) { w <<= 1; n++; }
    return n;
#endif
}

void hll_add(hll *h, uint64_t hash)
{
    uint32_t j = (uint32_t)(hash >> (64 - HLL_PRECISION));
    /* The sentinel bit just below the 50 rank bits caps the count of leading
     * zeros at 50, so rank <= 51 and clz never sees 0. */
    uint64_t w = (hash << HLL_PRECISION) | (UINT64_C(1) << (HLL_PRECISION - 1));
    uint8_t rank = (uint8_t)(leading_zeros64(w) + 1), old = h->reg[j];
    h->reg[j] = rank > old ? rank : old; /* a store either way: no branch to mispredict */
}

/* No prefetch: the 16 KiB of registers stay in the L1 cache while a
 * column's block is fed (a prefetch a cell cost 5 of its 13 instructions;
 * without it the bench table's scan took 1.962 s of CPU against 2.011,
 * interleaved medians of 7). */
SHEAF_HOT void hll_add_many(hll *h, const uint64_t *hash, size_t n)
{
    for (size_t i = 0; i < n; i++) hll_add(h, hash[i]);
}

void hll_merge(hll *into, const hll *from)
{
    for (uint32_t j = 0; j < HLL_REGISTERS; j++)
        if (from->reg[j] > into->reg[j]) into->reg[j] = from->reg[j];
}

double hll_estimate(const hll *h)
{
    /* Histogram of ranks first: the sum of 2^-M[j] is then 52 exact terms
     * instead of 16384 rounded additions. */
    uint32_t hist[HLL_MAX_RANK + 1] = {0};
    for (uint32_t j = 0; j < HLL_REGISTERS; j++) hist[h->reg[j]]++;

    const double m = (double)HLL_REGISTERS;
    uint32_t empty = hist[0];
    if (empty > 0) {
        double linear = m * log(m / (double)empty);
        if (linear <= HLL_LINEAR_THRESHOLD) return linear;
    }
    double sum = 0.0;
    for (int k = HLL_MAX_RANK; k >= 0; k--) sum += ldexp((double)hist[k], -k);
    double alpha = 0.7213 / (1.0 + 1.079 / m);
    return alpha * m * m / sum;
}

uint32_t hll_used(const hll *h)
{
    uint32_t k = 0;
    for (uint32_t j = 0; j < HLL_REGISTERS; j++) k += h->reg[j] != 0;
    return k;
}

void hll_write(const hll *h, wire_writer *w)
{
    uint32_t k = hll_used(h);

    size_t sparse_bytes = 4 + 3 * (size_t)k;
    if (sparse_bytes < HLL_REGISTERS) {
        wire_put_u8(w, HLL_TAG_SPARSE);
        wire_put_u32(w, k);
        for (uint32_t j = 0; j < HLL_REGISTERS; j++) {
            if (!h->reg[j]) continue;
            uint8_t pair[3] = {(uint8_t)j, (uint8_t)(j >> 8), h->reg[j]};
            wire_put_bytes(w, pair, 3);
        }
    } else {
        wire_put_u8(w, HLL_TAG_DENSE);
        wire_put_bytes(w, h->reg, HLL_REGISTERS);
    }
}

static int read_fail(hll *h, wire_reader *r)
{
    r->failed = 1;
    hll_init(h);
    return -1;
}

int hll_read(hll *h, wire_reader *r)
{
    hll_init(h);
    uint8_t tag = wire_get_u8(r);
    if (r->failed) return read_fail(h, r);

    if (tag == HLL_TAG_SPARSE) {
        uint32_t k = wire_get_u32(r);
        if (r->failed || k > HLL_REGISTERS || !wire_need(r, 3 * (size_t)k))
            return read_fail(h, r);
        long prev = -1;
        for (uint32_t i = 0; i < k; i++) {
            uint8_t pair[3];
            wire_get_bytes(r, pair, 3);
            uint32_t j = (uint32_t)pair[0] | (uint32_t)pair[1] << 8;
            uint8_t rank = pair[2];
            if (j >= HLL_REGISTERS || (long)j <= prev || rank == 0 || rank > HLL_MAX_RANK)
                return read_fail(h, r);
            h->reg[j] = rank;
            prev = (long)j;
        }
    } else if (tag == HLL_TAG_DENSE) {
        wire_get_bytes(r, h->reg, HLL_REGISTERS);
        if (r->failed) return read_fail(h, r);
        for (uint32_t j = 0; j < HLL_REGISTERS; j++)
            if (h->reg[j] > HLL_MAX_RANK) return read_fail(h, r);
    } else {
        return read_fail(h, r);
    }
    return r->failed ? read_fail(h, r) : 0;
}
