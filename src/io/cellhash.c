/* cellhash: XXH3_64bits of eight cells at once (see cellhash.h).  The four
 * closed forms below are those of xxHash 0.8's XXH3_len_0to16_64b with seed
 * 0 (xxhash.h: XXH3_len_1to3_64b, XXH3_len_4to8_64b, XXH3_len_9to16_64b),
 * written for 64-bit lanes; the secret's words are read from the header's
 * own XXH3_kSecret. */
#include "io/cellhash.h"

#include <pthread.h>
#include <stdlib.h>
#include <string.h>

static const uint64_t zeros[2];

#define XXH_INLINE_ALL
#include <xxhash.h>

#if defined(__x86_64__) && defined(__GNUC__)
#define CELLHASH_AVX512 1
#include <immintrin.h>
#define WIDE __attribute__((target("avx512f,avx512dq,avx512bw,avx512vl")))
#endif

static pthread_once_t decided = PTHREAD_ONCE_INIT;
static int use_wide;

static void decide(void)
{
#if defined(CELLHASH_AVX512)
    __builtin_cpu_init();
    use_wide = __builtin_cpu_supports("avx512f") && __builtin_cpu_supports("avx512dq") &&
               __builtin_cpu_supports("avx512bw") && __builtin_cpu_supports("avx512vl") &&
               !getenv("SHEAF_TEST_SCALAR_HASH");
#endif
}

int cellhash_wide(void)
{
    pthread_once(&decided, decide);
    return use_wide;
}

#if defined(CELLHASH_AVX512)
/* x * c for 64-bit lanes, the low 64 bits (VPMULLQ). */
WIDE static inline __m512i mul64(__m512i x, uint64_t c)
{
    return _mm512_mullo_epi64(x, _mm512_set1_epi64((long long)c));
}

/* x ^ (x >> s) */
WIDE static inline __m512i xorshift(__m512i x, unsigned s)
{
    return _mm512_xor_si512(x, _mm512_srli_epi64(x, s));
}

/* XXH3_mul128_fold64: the 128-bit product of a and b, its halves xored,
 * from four 32 x 32-bit products (xxHash's portable form). */
WIDE static inline __m512i mul128_fold(__m512i a, __m512i b)
{
    const __m512i low32 = _mm512_set1_epi64(0xFFFFFFFF);
    __m512i a_hi = _mm512_srli_epi64(a, 32), b_hi = _mm512_srli_epi64(b, 32);
    __m512i lo_lo = _mm512_mul_epu32(a, b);
    __m512i hi_lo = _mm512_mul_epu32(a_hi, b);
    __m512i lo_hi = _mm512_mul_epu32(a, b_hi);
    __m512i hi_hi = _mm512_mul_epu32(a_hi, b_hi);
    __m512i cross = _mm512_add_epi64(
        _mm512_add_epi64(_mm512_srli_epi64(lo_lo, 32), _mm512_and_si512(hi_lo, low32)), lo_hi);
    __m512i upper = _mm512_add_epi64(
        _mm512_add_epi64(_mm512_srli_epi64(hi_lo, 32), _mm512_srli_epi64(cross, 32)), hi_hi);
    __m512i lower = _mm512_or_si512(_mm512_slli_epi64(cross, 32), _mm512_and_si512(lo_lo, low32));
    return _mm512_xor_si512(lower, upper);
}

/* XXH64_avalanche */
WIDE static inline __m512i avalanche64(__m512i h)
{
    h = mul64(xorshift(h, 33), XXH_PRIME64_2);
    h = mul64(xorshift(h, 29), XXH_PRIME64_3);
    return xorshift(h, 32);
}

/* The secret's words as xxHash's short forms mix them (seed 0). */
#define SECRET_LE32(o) ((uint64_t)XXH_readLE32(XXH3_kSecret + (o)))
#define SECRET_LE64(o) XXH_readLE64(XXH3_kSecret + (o))

/* 1 to 3 bytes (XXH3_len_1to3_64b): {input[0], input[len/2], input[len-1],
 * len} mixed by XXH64's avalanche.  n: the lengths; first: 8 bytes from
 * each cell's start. */
WIDE static inline __m512i form3(__m512i n, __m512i first)
{
    const __m512i byte = _mm512_set1_epi64(0xFF);
    __m512i c1 = _mm512_and_si512(first, byte);
    __m512i c2 = _mm512_and_si512(
        _mm512_srlv_epi64(first, _mm512_slli_epi64(_mm512_srli_epi64(n, 1), 3)), byte);
    __m512i c3 = _mm512_and_si512(
        _mm512_srlv_epi64(first, _mm512_sub_epi64(_mm512_slli_epi64(n, 3), _mm512_set1_epi64(8))),
        byte);
    __m512i combined = _mm512_or_si512(
        _mm512_or_si512(_mm512_slli_epi64(c1, 16), _mm512_slli_epi64(c2, 24)),
        _mm512_or_si512(c3, _mm512_slli_epi64(n, 8)));
    const uint64_t flip = SECRET_LE32(0) ^ SECRET_LE32(4);
    return avalanche64(_mm512_xor_si512(combined, _mm512_set1_epi64((long long)flip)));
}

/* 4 to 8 bytes (XXH3_len_4to8_64b): the first and the last 4, rrmxmx. */
WIDE static inline __m512i form8(__m512i n, __m512i first)
{
    const __m512i low32 = _mm512_set1_epi64(0xFFFFFFFF);
    __m512i in1 = _mm512_and_si512(first, low32);
    __m512i in2 = _mm512_and_si512(
        _mm512_srlv_epi64(first, _mm512_sub_epi64(_mm512_slli_epi64(n, 3), _mm512_set1_epi64(32))),
        low32);
    const uint64_t flip = SECRET_LE64(8) ^ SECRET_LE64(16);
    __m512i h = _mm512_xor_si512(_mm512_add_epi64(in2, _mm512_slli_epi64(in1, 32)),
                                 _mm512_set1_epi64((long long)flip));
    h = _mm512_xor_si512(h, _mm512_xor_si512(_mm512_rol_epi64(h, 49), _mm512_rol_epi64(h, 24)));
    h = mul64(h, 0x9FB21C651E98DF25ULL);
    h = _mm512_xor_si512(h, _mm512_add_epi64(_mm512_srli_epi64(h, 35), n));
    h = mul64(h, 0x9FB21C651E98DF25ULL);
    return xorshift(h, 28);
}

/* 9 to 16 bytes (XXH3_len_9to16_64b): the first and the last 8, a folded
 * 128-bit product, XXH3's avalanche. */
WIDE static inline __m512i form16(__m512i n, __m512i first, __m512i last)
{
    const __m512i swap = _mm512_set_epi8(
        8, 9, 10, 11, 12, 13, 14, 15, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 0, 1, 2,
        3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13, 14, 15, 0, 1, 2, 3, 4, 5, 6, 7, 8, 9, 10, 11, 12, 13,
        14, 15, 0, 1, 2, 3, 4, 5, 6, 7);
    const uint64_t flip_lo = SECRET_LE64(24) ^ SECRET_LE64(32);
    const uint64_t flip_hi = SECRET_LE64(40) ^ SECRET_LE64(48);
    __m512i lo = _mm512_xor_si512(first, _mm512_set1_epi64((long long)flip_lo));
    __m512i hi = _mm512_xor_si512(last, _mm512_set1_epi64((long long)flip_hi));
    __m512i acc = _mm512_add_epi64(_mm512_add_epi64(n, _mm512_shuffle_epi8(lo, swap)),
                                   _mm512_add_epi64(hi, mul128_fold(lo, hi)));
    return xorshift(mul64(xorshift(acc, 37), 0x165667919E3779F9ULL), 32);
}

/* The hashes of up to eight cells, lanes in `lanes` (the others are not
 * read).  Lanes of more than 16 bytes hold no hash; *long_lanes marks
 * them. */
WIDE static inline __m512i hash8(const char *const *text, const uint32_t *len, __mmask8 lanes,
                                 __mmask8 *long_lanes)
{
    const uint64_t empty = XXH64_avalanche(SECRET_LE64(56) ^ SECRET_LE64(64));

    __m512i n = _mm512_cvtepu32_epi64(_mm256_maskz_loadu_epi32(lanes, len));
    const __mmask8 some = _mm512_mask_cmpge_epu64_mask(lanes, n, _mm512_set1_epi64(1));
    const __mmask8 four = _mm512_mask_cmpge_epu64_mask(lanes, n, _mm512_set1_epi64(4));
    const __mmask8 nine = _mm512_mask_cmpge_epu64_mask(lanes, n, _mm512_set1_epi64(9));
    *long_lanes = _mm512_mask_cmpgt_epu64_mask(lanes, n, _mm512_set1_epi64(16));
    /* A cell's first 8 bytes, and for 9 bytes or more its last 8: eight
     * loads each (measured against AVX-512's gather: 3.2 against 4.8 ns a
     * cell in a loop over the benchmark table's cells).  Lanes past n read
     * a word of zeros. */
    uint64_t f[8], b[8];
    if (lanes == 0xFF) {
        for (int j = 0; j < 8; j++) {
            memcpy(&f[j], text[j], 8);
            memcpy(&b[j], text[j] + (len[j] > 8 ? len[j] - 8 : 0), 8);
        }
    } else {
        for (int j = 0; j < 8; j++) {
            const char *t = (lanes >> j) & 1 ? text[j] : (const char *)zeros;
            uint32_t m = (lanes >> j) & 1 ? len[j] : 0;
            memcpy(&f[j], t, 8);
            memcpy(&b[j], t + (m > 8 ? m - 8 : 0), 8);
        }
    }
    __m512i first = _mm512_set_epi64(f[7], f[6], f[5], f[4], f[3], f[2], f[1], f[0]);
    __m512i last = _mm512_set_epi64(b[7], b[6], b[5], b[4], b[3], b[2], b[1], b[0]);
    /* Only the forms some lane calls for: the cells of one column tend to
     * share a form. */
    __m512i out = _mm512_set1_epi64((long long)empty);
    if (some & ~four) out = _mm512_mask_mov_epi64(out, some & ~four, form3(n, first));
    if (four & ~nine) out = _mm512_mask_mov_epi64(out, four & ~nine, form8(n, first));
    if (nine) out = _mm512_mask_mov_epi64(out, nine, form16(n, first, last));
    return out;
}

WIDE static void hash_wide(const char *const *text, const uint32_t *len, size_t n, uint64_t *out)
{
    for (size_t i = 0; i < n; i += 8) {
        __mmask8 lanes = n - i >= 8 ? 0xFF : (__mmask8)((1u << (n - i)) - 1);
        __mmask8 long_lanes;
        __m512i h = hash8(text + i, len + i, lanes, &long_lanes);
        _mm512_mask_storeu_epi64(out + i, lanes, h);
        while (long_lanes) {
            unsigned k = (unsigned)__builtin_ctz(long_lanes);
            out[i + k] = XXH3_64bits(text[i + k], len[i + k]);
            long_lanes &= (__mmask8)(long_lanes - 1);
        }
    }
}
#endif

void cellhash_many(const char *const *text, const uint32_t *len, size_t n, uint64_t *out)
{
#if defined(CELLHASH_AVX512)
    if (cellhash_wide()) {
        hash_wide(text, len, n, out);
        return;
    }
#endif
    for (size_t i = 0; i < n; i++) out[i] = XXH3_64bits(text[i], len[i]);
}
