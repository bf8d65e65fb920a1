/* four: sums of doubles in four interleaved lanes.
 *
 * A sum taken in one chain waits on every addition (four cycles each on
 * the machines measured), and the compiler may not reorder it.  These sums
 * keep four partial sums, element i in lane i mod 4, and add them pairwise
 * at the end: (l0 + l1) + (l2 + l3).  The order is fixed, so a sum is the
 * same on every machine and in both clones of a hot function (io/clones.h):
 * GCC's vector types give four lanes of AVX in the x86-64-v3 clone and two
 * SSE2 pairs in the baseline, with the same roundings. */
#ifndef SHEAF_FOUR_H
#define SHEAF_FOUR_H

#include <stdint.h>
#include <string.h>

typedef double four_doubles __attribute__((vector_size(32)));
typedef uint64_t four_words __attribute__((vector_size(32)));

/* Vectors pass through pointers and macros only: a vector argument or
 * result of a function would depend on the clone's ABI (GCC's -Wpsabi). */
static inline void four_get(four_doubles *v, const double *p) { memcpy(v, p, sizeof *v); }

#define FOUR_OF(x) ((four_doubles){(x), (x), (x), (x)})

static inline double four_total(const four_doubles *a)
{
    return ((*a)[0] + (*a)[1]) + ((*a)[2] + (*a)[3]);
}

/* x where keep is all ones, +0 where it is zero: a select on the bits. */
static inline double four_masked(double x, uint64_t keep)
{
    uint64_t b;
    memcpy(&b, &x, sizeof b);
    b &= keep;
    memcpy(&x, &b, sizeof x);
    return x;
}

#endif
