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
 * of the value and presence matrices (X^T M_G, (X*X)^T M_G, M^T M_G).  The
 * block's pairwise state is merged into the running one with the pairwise
 * update of Chan, Golub & LeVeque (1979) / Pébay (2008):
 *   n = na + nb, d_i = mean_b[i][j] - mean_a[i][j],
 *   mean = mean_a + d nb / n,  m2 = m2a + m2b + d_i^2 na nb / n,
 *   c = ca + cb + d_i d_j na nb / n.
 * Means are kept in a per-column frame (the caller's reference values), so
 * that two states merge after shifting by the difference of their frames.
 *
 * Memory: 4 p^2 doubles of state, plus scratch for one block.  OpenBLAS runs
 * single-threaded (set with openblas_set_num_threads(1) on creation).
 */
#ifndef SHEAF_COMOMENT_H
#define SHEAF_COMOMENT_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

typedef struct comoment comoment;

/* State for p columns, blocks of at most max_rows rows.  NULL on OOM. */
comoment *comoment_create(size_t p, size_t max_rows);
void comoment_free(comoment *c);
void comoment_reset(comoment *c);
size_t comoment_columns(const comoment *c);

/* Bytes comoment_create(p, max_rows) will allocate (for the --mem check). */
uint64_t comoment_bytes(size_t p, size_t max_rows);

/* Adds a block of `rows` rows.
 *   x     column-major rows x p: x[j * rows + r], centred values (value minus
 *         center[j]); 0 where missing
 *   mask  same layout: 1.0 present, 0.0 missing
 *   center[j]  the constant subtracted from column j, in the state's frame
 *   complete[j] nonzero when column j has no missing cell in this block
 * Returns 0, or -1 on OOM. */
int comoment_add_block(comoment *c, const double *x, const double *mask, const double *center,
                       const unsigned char *complete, size_t rows);

/* into := into (+) from.  shift[j] = from's frame minus into's frame for
 * column j (add it to from's means); NULL = same frames.  Same p required. */
int comoment_merge(comoment *into, const comoment *from, const double *shift);

/* Accessors (pairwise complete). */
double comoment_n(const comoment *c, size_t i, size_t j);
double comoment_mean(const comoment *c, size_t i, size_t j);     /* of i, where j present, in frame */
double comoment_covariance(const comoment *c, size_t i, size_t j); /* c / (n - 1); NaN if n < 2 */
double comoment_correlation(const comoment *c, size_t i, size_t j); /* NaN if undefined */
double comoment_variance(const comoment *c, size_t i, size_t j);  /* of i where j present */

void comoment_write(const comoment *c, wire_writer *w);
comoment *comoment_read(wire_reader *r, size_t max_rows);

#endif
