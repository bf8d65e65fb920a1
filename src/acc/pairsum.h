/* pairsum: exact sums of a column paired with the target, for the F test of
 * a Pearson correlation held in integers.
 *
 * Over the rows where the column x and the target y are both finite
 * numbers, the state keeps n and the sums of X, Y, X^2, Y^2 and X Y, where
 * X = x / 10^scale_x and Y = y / 10^scale_y are integers: each cell is a
 * decimal m 10^e (io/number.h) and the scales are the smallest powers of
 * ten seen, so every X and Y is the cell's mantissa times a power of ten.
 * The sums are exact integers (256-bit two's complement), which is what
 * makes the residual sum of squares exact however close |r| is to 1:
 *     A = n Sxx - Sx^2,  B = n Syy - Sy^2,  C = n Sxy - Sx Sy,
 *     D = A B - C^2 = n^2 Sxx.y ... (n^2 times Sxx times the residual sum
 *     of squares of y on x),
 *     r = C / sqrt(A B),  F = (n - 2) C^2 / D  on (1, n - 2) df,
 * with A, B, C and D exact integers (640-bit arithmetic at read time), each
 * rounded once to a double at the end: F is correct to a few ulps whatever
 * 1 - r^2.  From double co-moments the best F carries about 2^-53 / (1 - r^2)
 * relative error: on NIST StRD Norris (1 - r^2 = 6.3e-6) sheaf's F had 11.9
 * correct digits, and the exact evaluation of its double co-moments 10.5.
 *
 * Exactness.  The sums stay exact while every cell is an exact decimal (at
 * most 19 significant digits, io/number.h, a mantissa below 2^63 and a power
 * of ten within +-PAIRSUM_MAX_SCALE) and Sxx and Syy stay below 2^200 (so no
 * |X| reaches 2^100 and no sum can pass 2^255).  A cell that
 * breaks this makes the state inexact for good: its sums are cleared and
 * the F test falls back to the co-moments.  Both conditions are properties
 * of the multiset of pairs (Sxx only grows as values arrive or the scale
 * refines), so the exact flag, like the sums, does not depend on the order,
 * the blocks or the merges that built the state.
 *
 * Update: pairs in any order (pairsum_add_many); the sums are added in
 * 128-bit integers per block and moved into the 256-bit sums; a finer scale
 * multiplies the sums by powers of ten first.  Merge: both to
 * the finer scales, sums added: exact, so a merge equals the scan of all the
 * data, byte for byte.
 *
 * Serialized layout (canonical, via wire): u8 exact, u64 n, i32 scale_x,
 * i32 scale_y, then Sx, Sy, Sxx, Syy, Sxy as 4 u64 each (256-bit two's
 * complement, least significant word first).  An inexact or empty state is
 * all zero apart from the flag.
 */
#ifndef SHEAF_PAIRSUM_H
#define SHEAF_PAIRSUM_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

__extension__ typedef __int128 pairsum_i128;

/* Decimal exponents a pair may have (a double's range with 19 digits, and
 * room): a cell outside makes the state inexact. */
#define PAIRSUM_MAX_SCALE 1100

/* A 256-bit two's-complement integer, least significant word first. */
typedef struct {
    uint64_t w[4];
} pairsum_wide;

typedef struct {
    uint64_t n;           /* pairs counted */
    int32_t scale_x;      /* X = x / 10^scale_x (set by the first pair; PAIRSUM_UNSET
                             before it in memory, 0 in the file) */
    int32_t scale_y;      /* Y = y / 10^scale_y */
    uint8_t exact;        /* every pair so far kept the sums exact */
    pairsum_wide sx, sy, sxx, syy, sxy; /* the sums */
    /* The block's part (|X|, |Y| < 2^55 there, so 256 products fit 128
     * bits), moved into the sums by pairsum_flush. */
    uint32_t block_n;
    pairsum_i128 bx, by, bxx, byy, bxy;
} pairsum;

/* An empty, exact state. */
void pairsum_init(pairsum *p);

/* Markers of an exponent array below (beneath any power of ten a pair may
 * have). */
#define PAIRSUM_NONE INT32_MIN          /* no number: not a pair */
#define PAIRSUM_INEXACT (INT32_MIN + 1) /* a number that is not an exact decimal */
#define PAIRSUM_UNSET 2000000000        /* the scales before the first pair (in memory) */

/* Adds the pairs (x_i, y_at[i]) for i < n (at most 256), each an exact
 * decimal (io/number.h): x_i = mx[i] 10^ex[i], y_r = my[r] 10^ey[r], with mx
 * and my signed mantissas.  ey[at[i]] = PAIRSUM_NONE skips the pair (the
 * target is not a number there); PAIRSUM_INEXACT in ex or ey (a cell that is
 * not an exact decimal, or whose mantissa has no int64) makes the state
 * inexact. */
void pairsum_add_many(pairsum *p, const int64_t *mx, const int32_t *ex, const int64_t *my,
                      const int32_t *ey, const uint16_t *at, size_t n);

/* Moves the block's part into the sums (pairsum_add_many ends with it). */
void pairsum_flush(pairsum *p);

/* into := into (+) from (both flushed). */
void pairsum_merge(pairsum *into, const pairsum *from);

/* r and F = (n - 2) r^2 / (1 - r^2) from the exact sums (see above), and
 * n.  Returns 0; 1 (r and F NaN) when either column is constant over the
 * pairs (A or B exactly zero: r is undefined, and no rounded co-moment
 * should stand in for it); -1 when the state is not exact or holds fewer
 * than 3 pairs.  F is +inf when A B = C^2 (a perfect fit). */
int pairsum_fit(const pairsum *p, double *r, double *f, double *n);
/* The centred sums in the cells' own units, each rounded a few times:
 * M2 of x and of y about their means over the pairs, and their co-moment
 * (A, B and C above, over n, times the scales' powers of ten); for a check
 * against the double co-moments.  -1 (NaNs) when not exact or empty. */
int pairsum_centred(const pairsum *p, double *m2x, double *m2y, double *cxy);

void pairsum_write(const pairsum *p, wire_writer *w);
/* Reads a state and checks it (pairsum_valid); -1 (r->failed set) on
 * malformed input. */
int pairsum_read(pairsum *p, wire_reader *r);
/* 1 when the state could have come from pairs: exact is 0 or 1; an inexact
 * or empty state is all zero; scales within +-PAIRSUM_MAX_SCALE;
 * 0 <= Sxx, Syy < 2^200; A, B >= 0 and C^2 <= A B (Cauchy-Schwarz, exactly);
 * n = 1 gives A = B = C = 0. */
int pairsum_valid(const pairsum *p);

#endif
