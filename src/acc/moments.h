/* moments: count, mean and central moments up to the fourth of one column,
 * with exact merge.
 *
 * Values arrive as deviations from a decimal reference (the column's first
 * value, see number_difference), so digits shared by all values never enter
 * the floating-point sums.  Values are added in blocks: the block's mean and
 * central power sums are computed in two passes (exact up to rounding of
 * small deviations), and the block is merged into the running state with the
 * pairwise formulas of Chan, Golub & LeVeque (1979) extended to the third and
 * fourth moments by Pébay (2008), "Formulas for robust, one-pass parallel
 * computation of covariances and arbitrary-order statistical moments",
 * Sandia report SAND2008-6212, eqs. (3.1)-(3.3).  Merging two states gives
 * the state of the combined input up to rounding, in any order.
 */
#ifndef SHEAF_MOMENTS_H
#define SHEAF_MOMENTS_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"
#include "io/number.h"

typedef struct {
    uint64_t n;          /* values counted */
    double mean;         /* mean of (value - ref) */
    double m2, m3, m4;   /* sums of 2nd, 3rd, 4th powers of deviations from the mean */
    double min, max;     /* extreme values (as parsed) */
    number_decimal ref;  /* decimal reference, valid when has_ref */
    int has_ref;         /* ref set (by the first value) */
} moments;

void moments_init(moments *m);
/* Sets the reference if none is set yet (call before the first deviation). */
void moments_set_ref(moments *m, const number_decimal *ref);
/* Adds `count` deviations from m->ref. */
void moments_add_block(moments *m, const double *dev, size_t count);
/* Updates min/max with a value. */
static inline void moments_see(moments *m, double x)
{
    if (x < m->min) m->min = x;
    if (x > m->max) m->max = x;
}
/* The pair merge of (n, mean, M2) of Chan, Golub & LeVeque (1979):
 *     n = na + nb,  d = mean_b - mean_a,
 *     mean = mean_a + d nb / n,  M2 = M2a + M2b + d^2 na nb / n,
 * applied to (*mean_a, *m2_a); mean_b must already be in a's frame, and
 * na + nb > 0.  The caller updates its count.  One evaluation order for every
 * user (moments, class moments, per-value tables), so equal inputs give equal
 * bits wherever the rule is applied. */
static inline void moments_pair_merge(double na, double *mean_a, double *m2_a, double nb,
                                      double mean_b, double m2_b)
{
    double n = na + nb, d = mean_b - *mean_a;
    *mean_a += d * nb / n;
    *m2_a += m2_b + d * d * na * nb / n;
}
/* The sample sd of n numbers of sum of squared deviations m2 (0 below two,
 * or when m2 is not positive). */
static inline double moments_sd(double n, double m2)
{
    return n > 1 && m2 > 0 ? __builtin_sqrt(m2 / (n - 1)) : 0;
}

/* The rounding n numbers carry when each entered as its deviation from a
 * frame rounded to a double (off by up to 2^-53 of itself): about 2^-53
 * (|their mean deviation| + their sd).  Every update of their mean and M2
 * also works at that ulp.  Class moments and co-moment pairs judge their
 * figures by it. */
static inline double moments_frame_loss(double n, double mean_dev, double m2)
{
    return 0x1p-53 * (__builtin_fabs(mean_dev) + moments_sd(n, m2));
}

/* into := into (+) from, shifting from's mean into into's reference. */
void moments_merge(moments *into, const moments *from);

double moments_mean(const moments *m);        /* ref + mean of deviations */
double moments_variance(const moments *m);    /* sample variance, n - 1; NaN if n < 2 */
double moments_skewness(const moments *m);    /* g1 = sqrt(n) m3 / m2^1.5 */
double moments_kurtosis(const moments *m);    /* g2 = n m4 / m2^2 - 3 */

void moments_write(const moments *m, wire_writer *w);
/* Reads a state and checks it with moments_valid; -1 (r->failed set) on
 * malformed or impossible input. */
int moments_read(moments *m, wire_reader *r);
/* 1 when the state could have come from values (docs/summary-format.md,
 * "Invariants"): n = 0 leaves the initial state (no frame, all zero);
 * otherwise min <= max are
 * finite and hold the frame, n = 1 has zero central sums, M2 and M4 are not
 * negative, and mean, M2..M4 are finite with |mean| within the spread unless
 * the spread is wide enough (moments_spread_allows_overflow) to overflow. */
int moments_valid(const moments *m);
/* 1 when values spread over [min, max] may overflow the power sums (the
 * spread is 2^200 or more, or not finite). */
int moments_spread_allows_overflow(double min, double max);
/* 1 when a mean of deviations from a frame inside [min, max] could be
 * `mean` (|mean| is at most the spread, with slack for rounding). */
int moments_mean_plausible(double mean, double min, double max);

#endif
