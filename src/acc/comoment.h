/* comoment: pairwise-complete co-moments of p numeric columns.
 *
 * For every ordered pair (i, j) the state keeps what a pairwise-complete
 * estimate needs, over the rows where both i and j are present:
 *   n[i][j]     count of such rows (symmetric)
 *   mean[i][j]  mean of column i over them
 *   m2[i][j]    sum of squared deviations of column i from mean[i][j]
 *   c[i][j]     co-moment sum (x_i - mean[i][j]) (x_j - mean[j][i]) (symmetric)
 * so cov(i, j) = c / (n - 1), var_i|j = m2[i][j] / (n - 1), and
 * r(i, j) = c / sqrt(m2[i][j] m2[j][i]) -- the pairwise-complete Pearson r
 * that pandas' DataFrame.corr() computes.
 *
 * Update by blocks of rows.  The caller centres each column of the block by a
 * constant (its block mean over present cells) and zeroes missing cells; the
 * block's sums are then cross-products computed with BLAS: cblas_dsyrk for
 * X^T X, and, only for columns with a missing cell in the block, cblas_dgemm
 * of the value and presence matrices (X^T M_G, (X*X)^T M_G, M^T M_G) -- or,
 * for a column with few missing cells, the column totals minus the sums over
 * its missing rows.  The block's pairwise state is merged into the running
 * one with the pairwise update of Chan, Golub & LeVeque (1979) / Pébay (2008):
 *   n = na + nb, d_i = mean_b[i][j] - mean_a[i][j],
 *   mean = mean_a + d nb / n,  m2 = m2a + m2b + d_i^2 na nb / n,
 *   c = ca + cb + d_i d_j na nb / n.
 * Means are kept in a per-column frame (the caller's reference values), so
 * that two states merge after shifting by the difference of their frames.
 *
 * Memory: the state keeps, for each unordered pair {i <= j}, n, c and the
 * mean and m2 of both columns: 3 p (p + 1) doubles (packed triangles).  A
 * state that adds blocks also holds scratch for one block, allocated once:
 * 4 p^2 + 2 max_rows p + 3 p doubles.  comoment_add_block allocates nothing
 * itself; OpenBLAS takes its working buffer on a thread's first call.
 * The BLAS calls run with whatever threading the host gave its BLAS: this
 * module never changes it (the sheaf command sets OpenBLAS to one thread at
 * start, in src/cli/main.c, since its blocks are small and its parallelism
 * comes from processes).  Results do not depend on the BLAS thread count
 * beyond the rounding of the block sums.
 *
 * A state is not shared between threads; distinct states may be used from
 * distinct threads at the same time.
 */
#ifndef SHEAF_COMOMENT_H
#define SHEAF_COMOMENT_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

typedef struct comoment comoment;

/* State for p columns, blocks of at most max_rows rows.  max_rows == 0 makes
 * a state that is only merged into and read (no block scratch).  NULL on OOM
 * or p > 100000 or max_rows > INT_MAX (BLAS dimensions are int). */
comoment *comoment_create(size_t p, size_t max_rows);
void comoment_free(comoment *c);
void comoment_reset(comoment *c);
size_t comoment_columns(const comoment *c);

/* Bytes comoment_create(p, max_rows) will allocate (for the --mem check):
 * state plus block scratch.  UINT64_MAX when create would refuse the sizes. */
uint64_t comoment_bytes(size_t p, size_t max_rows);

/* The values a block was centred from: raw[j][r] for the rows where column
 * j's mask is 1, with raw[j][r] + shift[j] in the state's frame.  A pair
 * whose block sums cancel (its rows lie far from the column's centre
 * compared with their own spread: a far value of the column in rows where
 * the other column is missing) is summed again from these, about its own
 * mean, so that such a value costs no digits of the others' statistics. */
typedef struct {
    const double *const *raw;
    const double *shift;
} comoment_source;

/* Adds a block of `rows` rows.
 *   x     column-major rows x p: x[j * rows + r], centred values (value minus
 *         center[j]); 0 where missing
 *   mask  same layout: 1.0 present, 0.0 missing
 *   center[j]  the constant subtracted from column j, in the state's frame
 *   complete[j] nonzero when column j has no missing cell in this block
 *   source  the values before centring (above), or NULL: then a pair whose
 *         sums cancel keeps what is left of its digits
 * The inputs are trusted: x must be 0 wherever mask is 0, and complete[j]
 * must agree with the mask.  Centring near the block mean matters for
 * accuracy: the block's M2 and co-moment are one-pass sums in that frame.
 * Cost: one dsyrk (rows p^2 flops) and an O(p^2) merge.  An incomplete
 * column with k missing cells adds about 4 p k operations when k <= rows / 6,
 * else its share of three dgemm (6 rows p flops per column).  Measured on
 * one core (p = 500, rows = 256): 2.1 ms with no missing cell, 2.5 ms with
 * 5 incomplete columns, 3.5 ms with 1% and 10 ms with 20% of all cells
 * missing.
 * Returns 0 (rows == 0 is a no-op), -1 when rows > max_rows, or -2 when
 * OpenBLAS's working buffer does not fit in this thread (acc/blas.h: the
 * state is unchanged). */
int comoment_add_block(comoment *c, const double *x, const double *mask, const double *center,
                       const unsigned char *complete, size_t rows,
                       const comoment_source *source);

/* into := into (+) from.  shift[j] = from's frame minus into's frame for
 * column j (add it to from's means); NULL = same frames.  into != from.
 * A pair is flagged lost (comoment_pair_lost) when from's side, judged in
 * from's own frame, lost more than 2^-20 of the merged side's sd.
 * Returns 0, or -1 (into unchanged) when the column counts differ. */
int comoment_merge(comoment *into, const comoment *from, const double *shift);

/* Accessors (pairwise complete).  comoment_n(c, i, i) is the count of column
 * i, comoment_mean(c, i, i) its mean (in the frame), comoment_variance(c, i, i)
 * its sample variance. */
double comoment_n(const comoment *c, size_t i, size_t j);
double comoment_mean(const comoment *c, size_t i, size_t j);     /* of i, where j present, in frame; NaN if n = 0 */
double comoment_covariance(const comoment *c, size_t i, size_t j); /* c / (n - 1); NaN if n < 2 */
/* c / sqrt(m2[i][j] m2[j][i]); NaN if n < 2 or either m2 is 0.  Not clipped
 * to [-1, 1]: rounding can leave |r| a few ulps above 1. */
double comoment_correlation(const comoment *c, size_t i, size_t j);
/* 1 when the pair's figures over its rows cannot be trusted: a side's
 * numbers, rounded as deviations from their column's frame, lost more than
 * 2^-20 of that side's sd there, in this state or in one merged into it
 * (a far first value in rows where the other column is missing).  0 on the
 * diagonal: a column's own figures are relative to its own spread.  The
 * bound is the ulp of the side's mean deviation, which every update of the
 * pair's mean and M2 works at (integer deviations that are exact still meet
 * it there), so an exact figure may be flagged: epoch microseconds with a
 * burst of 1-microsecond steps lose their r. */
int comoment_pair_lost(const comoment *c, size_t i, size_t j);
double comoment_variance(const comoment *c, size_t i, size_t j);  /* of i where j present: m2 / (n - 1); NaN if n < 2 */
/* The stored state of pair (i, j) as written: n, mean and M2 of column i
 * over the rows where j is present, and the co-moment sum. */
void comoment_pair_state(const comoment *c, size_t i, size_t j, double *n, double *mean,
                         double *m2, double *co);

/* All p x p covariances / correlations, row-major into out[i * p + j]. */
void comoment_covariance_matrix(const comoment *c, double *out);
void comoment_correlation_matrix(const comoment *c, double *out);

/* Serialized form: u64 p, then four p x p row-major matrices: N as u64 (exact
 * counts), MEAN, M2 and C as f64, with MEAN[i][j] and M2[i][j] those of
 * column i over rows where j is present.
 * comoment_read gives a state with block scratch for max_rows (0: none).  On
 * malformed input (p > 100000, too few bytes, a count above 2^53, N or C not
 * symmetric, a pair count above a column count, a lost pair's flag where
 * lost_allowed is 0: files of format version 6 and before) it returns NULL
 * and sets r->failed.  Moment values are not checked: extreme data can overflow them
 * to infinity or round M2 slightly below zero, and such states must read
 * back; the summary's checksums guard the bytes.  NULL with r->failed clear: out of memory. */
void comoment_write(const comoment *c, wire_writer *w);
comoment *comoment_read(wire_reader *r, size_t max_rows, int lost_allowed);

#endif
