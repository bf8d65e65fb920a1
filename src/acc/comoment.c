/* comoment: see comoment.h.
 *
 * Method.  A block of rows is reduced to its own pairwise-complete sums, in
 * the centred frame chosen by the caller (x = value - center, 0 if missing,
 * m = 1 if present):
 *   nb[i][j] = sum_r m_ri m_rj       s[i][j] = sum_r x_ri m_rj
 *   q[i][j]  = sum_r x_ri^2 m_rj     p[i][j] = sum_r x_ri x_rj   (= X^T X)
 * X^T X comes from cblas_dsyrk.  For a column j with no missing cell,
 * nb[i][j], s[i][j] and q[i][j] are the plain count, sum and sum of squares
 * of column i, so only the incomplete columns need more work, in one of two
 * ways chosen per column:
 *   dense   (more than rows / COMOMENT_SPARSE_SHARE missing cells): for this
 *           set G, X^T M_G, (X*X)^T M_G and M^T M_G by cblas_dgemm on the
 *           gathered masks (M^T M by cblas_dsyrk once |G| >= p / 2);
 *   sparse  (few missing cells): the column totals minus the sums over the
 *           column's missing rows, about 4 p k operations for k missing rows
 *           against 6 p rows flops of dgemm.
 * The block's pair statistics are then
 *   mean_b[i][j] = center_i + s[i][j] / nb
 *   m2_b[i][j]   = q[i][j] - s[i][j]^2 / nb
 *   c_b[i][j]    = p[i][j] - s[i][j] s[j][i] / nb
 * (one-pass formulas, but on values centred near their block mean, so the
 * subtracted terms are small), and they are merged into the running state
 * pair by pair with the pairwise update of Chan, Golub & LeVeque (1979) and
 * its co-moment form in Pébay (2008), SAND2008-6212, with n = na + nb,
 * w = nb / n and d = mean_b - mean_a taken from the old means of both
 * columns:
 *   mean += d w,  m2 += m2_b + d_i^2 na w,  c += c_b + d_i d_j na w.
 * With na = 0 this gives the block values exactly (w = 1, na w = 0); with
 * nb = 0 it leaves the pair unchanged (w = 0), so no branch is needed.  The
 * same update merges two states (comoment_merge), after shifting the other
 * state's means into this one's frame.
 *
 * Storage.  Every quantity belongs to an unordered pair {lo <= hi}; the pair
 * arrays are packed upper triangles in column order, index hi(hi+1)/2 + lo,
 * so the merge loop (hi outer, lo inner) walks all of them contiguously and
 * also reads the column-major BLAS outputs contiguously.  For each pair the
 * state keeps n, c, and the mean and m2 of each of the two columns.  On the
 * diagonal both copies are the column's own mean and M2, and c = M2.
 *
 * Error: the block sums carry the rounding of a length-`rows` dot product of
 * centred values; the merge adds O(eps) relative error per block, as for the
 * univariate pairwise update (Chan, Golub & LeVeque 1983).  The tests hold
 * N exactly and means, M2, co-moments and r to 1e-12 of a long-double
 * two-pass computation.
 */
#include "io/clones.h"
#include "acc/comoment_state.h"

#include "acc/blas.h"
#include "acc/four.h"
#include "acc/moments.h"
#include "acc/zeroed.h"

#include <cblas.h>
#include <limits.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* An incomplete column with at most rows / COMOMENT_SPARSE_SHARE missing
 * cells in a block has its pair sums taken as the column totals minus the
 * missing rows (about 4 p k operations for k missing rows) instead of by
 * dgemm (6 p rows flops); the share was set by timing p = 500, rows = 256. */
#define COMOMENT_SPARSE_SHARE 6
/* Dense columns x columns x rows up to which the dense products are direct
 * loops rather than BLAS calls (measured: about 30,000 instructions of
 * setup per call at 22 columns and 256 rows, against 9 per product term). */
#define COMOMENT_DIRECT_WORK 16384

/* Sizes; the caller has checked p and max_rows against overflow. */
static uint64_t state_doubles(uint64_t p)
{
    uint64_t t = p * (p + 1) / 2;
    return 6 * (t ? t : 1);
}
static uint64_t scratch_doubles(uint64_t p, uint64_t rows)
{
    return rows && p ? 4 * p * p + 2 * rows * p + 3 * p : 0;
}
static uint64_t miss_capacity(uint64_t p, uint64_t rows) { return rows / COMOMENT_SPARSE_SHARE * p; }
static uint64_t index_bytes(uint64_t p, uint64_t rows)
{
    if (!rows || !p) return 0;
    return (3 * p + 1) * sizeof(size_t) + (miss_capacity(p, rows) + 1) * sizeof(uint32_t);
}

static int sizes_ok(size_t p, size_t max_rows)
{
    if (p > COMOMENT_MAX_COLUMNS || max_rows > (size_t)INT_MAX) return 0;
    /* rows * p doubles must be addressable. */
    return max_rows == 0 || (uint64_t)max_rows * p < ((uint64_t)1 << 58);
}

uint64_t comoment_bytes(size_t p, size_t max_rows)
{
    if (!sizes_ok(p, max_rows)) return UINT64_MAX;
    uint64_t d = state_doubles(p) + scratch_doubles(p, max_rows);
    return sizeof(comoment) + 8 * d + index_bytes(p, max_rows);
}

comoment *comoment_create(size_t p, size_t max_rows)
{
    if (!sizes_ok(p, max_rows)) return NULL;
    comoment *c = calloc(1, sizeof *c);
    if (!c) return NULL;
    c->p = p;
    c->max_rows = max_rows;
    c->pairs = p * (p + 1) / 2;
    size_t t = c->pairs ? c->pairs : 1;
    double *s = zeroed(6 * t, sizeof(double));
    c->lost = calloc(t, 1);
    if (!s || !c->lost) {
        free(s);
        free(c->lost);
        free(c);
        return NULL;
    }
    c->n = s;
    c->mean_lo = s + t;
    c->mean_hi = s + 2 * t;
    c->m2_lo = s + 3 * t;
    c->m2_hi = s + 4 * t;
    c->co = s + 5 * t;
    if (max_rows && p) {
        size_t pp = p * p, rp = max_rows * p;
        double *b = malloc((4 * pp + 2 * rp + 3 * p) * sizeof(double));
        c->dense = malloc((4 * p + 1) * sizeof(size_t));
        c->miss_rows = malloc((miss_capacity(p, max_rows) + 1) * sizeof(uint32_t));
        if (!b || !c->dense || !c->miss_rows) {
            free(b);
            comoment_free(c);
            return NULL;
        }
        c->sparse = c->dense + p;
        c->miss_start = c->sparse + p;
        c->empty = c->miss_start + p + 1;
        c->cross = b;
        c->sums = b + pp;
        c->squares = b + 2 * pp;
        c->counts = b + 3 * pp;
        c->x2 = b + 4 * pp;
        c->mask_g = b + 4 * pp + rp;
        c->col_count = b + 4 * pp + 2 * rp;
        c->col_sum = c->col_count + p;
        c->col_sq = c->col_sum + p;
    }
    return c;
}

void comoment_free(comoment *c)
{
    if (!c) return;
    free(c->n);
    free(c->lost);
    free(c->cross);
    free(c->dense);
    free(c->miss_rows);
    free(c);
}

void comoment_reset(comoment *c)
{
    size_t t = c->pairs ? c->pairs : 1;
    memset(c->n, 0, 6 * t * sizeof(double));
    memset(c->lost, 0, t);
}

size_t comoment_columns(const comoment *c) { return c->p; }

/* Pointers to the state arrays, restrict-qualified for the merge loops. */
typedef struct {
    double *restrict n, *restrict mean_lo, *restrict mean_hi;
    double *restrict m2_lo, *restrict m2_hi, *restrict co;
} pair_arrays;

static pair_arrays arrays_of(comoment *c)
{
    pair_arrays a = {c->n, c->mean_lo, c->mean_hi, c->m2_lo, c->m2_hi, c->co};
    return a;
}

/* Rounding can leave a one-pass M2 a few ulps below zero. */
static inline double nonnegative(double v) { return v > 0 ? v : 0.0; }

/* Merges one pair's statistics (nb, means, m2s, co-moment; means already in
 * the state's frame) into pair k of the state. */
static inline void pair_update(pair_arrays a, size_t k, double nb, double mean_lo, double mean_hi,
                               double m2_lo, double m2_hi, double cb)
{
    double na = a.n[k], n = na + nb;
    double w = nb / (n > 0 ? n : 1.0); /* n = 0 implies nb = 0 */
    double f = na * w;
    double d_lo = mean_lo - a.mean_lo[k], d_hi = mean_hi - a.mean_hi[k];
    a.n[k] = n;
    a.mean_lo[k] += d_lo * w;
    a.mean_hi[k] += d_hi * w;
    a.m2_lo[k] += m2_lo + d_lo * d_lo * f;
    a.m2_hi[k] += m2_hi + d_hi * d_hi * f;
    a.co[k] += cb + d_lo * d_hi * f;
}

/* Pair (i, j) of a block summed directly over the rows where both are
 * present, about the pair's own means (two passes, the second corrected by
 * its residual sums): its count, means in the state's frame, M2s and
 * co-moment, as merge_block would hand them to pair_update. */
static __attribute__((noinline)) void pair_direct(const comoment_source *src, const double *mask,
                                                  size_t rows, size_t i, size_t j, double out[6])
{
    const double *restrict xi = src->raw[i], *restrict xj = src->raw[j];
    const double *restrict mi = mask + i * rows, *restrict mj = mask + j * rows;
    double n = 0, si = 0, sj = 0;
    for (size_t r = 0; r < rows; r++)
        if (mi[r] != 0 && mj[r] != 0) {
            n += 1;
            si += xi[r];
            sj += xj[r];
        }
    double ai = si / n, aj = sj / n, ri = 0, rj = 0, qi = 0, qj = 0, co = 0;
    for (size_t r = 0; r < rows; r++)
        if (mi[r] != 0 && mj[r] != 0) {
            double u = xi[r] - ai, v = xj[r] - aj;
            ri += u;
            rj += v;
            qi += u * u;
            qj += v * v;
            co += u * v;
        }
    out[0] = n;
    out[1] = src->shift[i] + (ai + ri / n);
    out[2] = src->shift[j] + (aj + rj / n);
    out[3] = nonnegative(qi - ri * ri / n);
    out[4] = nonnegative(qj - rj * rj / n);
    out[5] = co - ri * rj / n;
}

/* Whether a pair's M2 over a subset of a column's block rows, m2, kept
 * fewer than 40 of its bits: it is what is left of sums of squares as large
 * as the column's, col_sq (q - s^2 / n, or col_sq minus the missing rows'
 * squares), so each lost bit of m2 / col_sq is a bit of rounding. */
static inline int cancelled(double m2, double col_sq) { return m2 < 0x1p-13 * col_sq; }

/* The block merge.  Pair sums of a pair (i, j) with j complete in the block
 * are the totals of column i; otherwise they are in column j of the product
 * buffers (filled for every incomplete column).  `any_incomplete` is a
 * constant at both call sites, so the all-complete case has no selects. */
static inline __attribute__((always_inline)) void
merge_block(comoment *c, const double *center, const unsigned char *complete, int any_incomplete,
            const comoment_source *src, const double *mask, size_t rows)
{
    pair_arrays a = arrays_of(c);
    const size_t p = c->p;
    const double *restrict cross = c->cross;
    const double *restrict sums = c->sums, *restrict squares = c->squares;
    const double *restrict counts = c->counts;
    const double *restrict col_count = c->col_count;
    const double *restrict col_sum = c->col_sum, *restrict col_sq = c->col_sq;
    for (size_t j = 0; j < p; j++) {
        const size_t base = j * (j + 1) / 2;
        const double *restrict cross_j = cross + j * p;
        const int j_complete = !any_incomplete || complete[j];
        /* Pairs (i, j), i < j: column j of the buffers read contiguously,
         * row j (s[j][i], q[j][i]) with stride p. */
        for (size_t i = 0; i < j; i++) {
            const int i_complete = !any_incomplete || complete[i];
            double nb, s_ij, q_ij, s_ji, q_ji;
            if (j_complete) {
                nb = col_count[i];
                s_ij = col_sum[i];
                q_ij = col_sq[i];
            } else {
                nb = counts[j * p + i];
                s_ij = sums[j * p + i];
                q_ij = squares[j * p + i];
            }
            if (i_complete) {
                s_ji = col_sum[j];
                q_ji = col_sq[j];
            } else {
                s_ji = sums[i * p + j];
                q_ji = squares[i * p + j];
            }
            /* nb = 0 implies s = q = cross = 0, so any finite inv will do. */
            double inv = 1.0 / (nb > 0 ? nb : 1.0);
            double m2_ij = nonnegative(q_ij - s_ij * s_ij * inv);
            double m2_ji = nonnegative(q_ji - s_ji * s_ji * inv);
            double cb = cross_j[i] - s_ij * s_ji * inv;
            /* Only a subset's sums can cancel: i's where j is incomplete. */
            if (any_incomplete && src && nb > 0 &&
                ((!j_complete && cancelled(m2_ij, col_sq[i])) ||
                 (!i_complete && cancelled(m2_ji, col_sq[j])))) {
                double d[6];
                pair_direct(src, mask, rows, i, j, d);
                pair_update(a, base + i, d[0], d[1], d[2], d[3], d[4], d[5]);
                continue;
            }
            pair_update(a, base + i, nb, center[i] + s_ij * inv, center[j] + s_ji * inv, m2_ij,
                        m2_ji, cb);
        }
        /* The diagonal: the column's own statistics, c = M2. */
        double nb = col_count[j], s = col_sum[j];
        double inv = 1.0 / (nb > 0 ? nb : 1.0);
        double m2 = nonnegative(col_sq[j] - s * s * inv);
        double mb = center[j] + s * inv;
        pair_update(a, base + j, nb, mb, mb, m2, m2, m2);
    }
}

/* Columns 0..n_dense-1 of the product buffers hold the dense columns' pair
 * sums; moves each to its own column (dense[k] >= k, so going from the last
 * never overwrites a column not yet moved). */
static void place_dense_columns(comoment *c, size_t n_dense, int counts_placed)
{
    const size_t p = c->p, bytes = p * sizeof(double);
    for (size_t k = n_dense; k-- > 0;) {
        size_t j = c->dense[k];
        if (j == k) break; /* dense[0..k] = 0..k: already in place */
        memcpy(c->sums + j * p, c->sums + k * p, bytes);
        memcpy(c->squares + j * p, c->squares + k * p, bytes);
        if (!counts_placed) memcpy(c->counts + j * p, c->counts + k * p, bytes);
    }
}

/* Column j of the sum, square and count buffers for a dense column j:
 * s[i][j] = sum_r x_ri m_rj, q[i][j] = sum_r x_ri^2 m_rj, n[i][j] =
 * sum_r m_ri m_rj, each in four lanes (acc/four.h) so that the additions
 * do not wait on one another. */
/* Inlined into the clones of comoment_add_block (io/clones.h). */
static inline __attribute__((always_inline)) void dense_column(comoment *c, const double *x,
                                                              const double *mask, size_t rows,
                                                              size_t j)
{
    const size_t p = c->p;
    const double *restrict mj = mask + j * rows;
    for (size_t i = 0; i < p; i++) {
        const double *restrict xi = x + i * rows, *restrict mi = mask + i * rows;
        four_doubles s = FOUR_OF(0.0), q = s, n = s, w, xv, mv;
        size_t r = 0;
        for (; r + 4 <= rows; r += 4) {
            four_get(&w, mj + r);
            four_get(&xv, xi + r);
            four_get(&mv, mi + r);
            four_doubles v = xv * w;
            s += v;
            q += v * xv;
            n += mv * w;
        }
        for (size_t u = 0; r < rows; r++, u++) {
            double v = xi[r] * mj[r];
            s[u] += v;
            q[u] += v * xi[r];
            n[u] += mi[r] * mj[r];
        }
        c->sums[j * p + i] = four_total(&s);
        c->squares[j * p + i] = four_total(&q);
        c->counts[j * p + i] = four_total(&n);
    }
}

/* Sparse columns j: s[i][j] = col_sum[i] - sum over j's missing rows of x_ri,
 * and likewise for q and nb.  Columns i are taken four at a time: their x and
 * mask stay in L1, the four sums are independent chains, and the stores fill
 * consecutive entries of column j of the buffers. */
static void fill_sparse_columns(comoment *c, const double *x, const double *mask, size_t rows,
                                size_t n_sparse)
{
    const size_t p = c->p;
    const uint32_t *restrict miss = c->miss_rows;
    const size_t *restrict start = c->miss_start;
    double *restrict sums = c->sums, *restrict squares = c->squares, *restrict counts = c->counts;
    const double *restrict col_sum = c->col_sum, *restrict col_sq = c->col_sq;
    const double *restrict col_count = c->col_count;
    size_t i = 0;
    for (; i + 4 <= p; i += 4) {
        const double *restrict x0 = x + i * rows, *restrict x1 = x0 + rows;
        const double *restrict x2 = x1 + rows, *restrict x3 = x2 + rows;
        const double *restrict m0 = mask + i * rows, *restrict m1 = m0 + rows;
        const double *restrict m2 = m1 + rows, *restrict m3 = m2 + rows;
        for (size_t k = 0; k < n_sparse; k++) {
            double s0 = 0, s1 = 0, s2 = 0, s3 = 0, q0 = 0, q1 = 0, q2 = 0, q3 = 0;
            double n0 = 0, n1 = 0, n2 = 0, n3 = 0;
            for (size_t t = start[k]; t < start[k + 1]; t++) {
                const size_t r = miss[t];
                double v0 = x0[r], v1 = x1[r], v2 = x2[r], v3 = x3[r];
                s0 += v0, s1 += v1, s2 += v2, s3 += v3;
                q0 += v0 * v0, q1 += v1 * v1, q2 += v2 * v2, q3 += v3 * v3;
                n0 += m0[r], n1 += m1[r], n2 += m2[r], n3 += m3[r];
            }
            const size_t at = c->sparse[k] * p + i;
            sums[at] = col_sum[i] - s0;
            sums[at + 1] = col_sum[i + 1] - s1;
            sums[at + 2] = col_sum[i + 2] - s2;
            sums[at + 3] = col_sum[i + 3] - s3;
            squares[at] = col_sq[i] - q0;
            squares[at + 1] = col_sq[i + 1] - q1;
            squares[at + 2] = col_sq[i + 2] - q2;
            squares[at + 3] = col_sq[i + 3] - q3;
            counts[at] = col_count[i] - n0;
            counts[at + 1] = col_count[i + 1] - n1;
            counts[at + 2] = col_count[i + 2] - n2;
            counts[at + 3] = col_count[i + 3] - n3;
        }
    }
    for (; i < p; i++) {
        const double *restrict xi = x + i * rows, *restrict mi = mask + i * rows;
        for (size_t k = 0; k < n_sparse; k++) {
            double s = 0, q = 0, n = 0;
            for (size_t t = start[k]; t < start[k + 1]; t++) {
                double v = xi[miss[t]];
                s += v;
                q += v * v;
                n += mi[miss[t]];
            }
            const size_t at = c->sparse[k] * p + i;
            sums[at] = col_sum[i] - s;
            squares[at] = col_sq[i] - q;
            counts[at] = col_count[i] - n;
        }
    }
}

SHEAF_HOT int comoment_add_block(comoment *c, const double *x, const double *mask, const double *center,
                       const unsigned char *complete, size_t rows,
                       const comoment_source *source)
{
    if (rows == 0 || c->p == 0) return 0;
    if (rows > c->max_rows) return -1;
    if (blas_thread_ready() != 0) return -2;
    const size_t p = c->p;
    const int n_rows = (int)rows, n_cols = (int)p;

    /* Column totals; incomplete columns split into sparse and dense. */
    const size_t sparse_max = rows / COMOMENT_SPARSE_SHARE;
    size_t n_dense = 0, n_sparse = 0, n_miss = 0, n_empty = 0;
    for (size_t j = 0; j < p; j++) {
        const double *xj = x + j * rows;
        four_doubles s4 = FOUR_OF(0.0), q4 = s4, v;
        size_t r = 0;
        for (; r + 4 <= rows; r += 4) {
            four_get(&v, xj + r);
            s4 += v;
            q4 += v * v;
        }
        for (size_t u = 0; r < rows; r++, u++) {
            s4[u] += xj[r];
            q4[u] += xj[r] * xj[r];
        }
        c->col_sum[j] = four_total(&s4);
        c->col_sq[j] = four_total(&q4);
        if (complete[j]) {
            c->col_count[j] = (double)rows;
            continue;
        }
        const double *mj = mask + j * rows;
        size_t missing = 0; /* the mask is 1.0 or 0.0: the count is exact */
        for (size_t r = 0; r < rows; r++) missing += mj[r] == 0;
        double k = (double)(rows - missing);
        c->col_count[j] = k;
        if (k == 0) { /* no value in this block: every product with it is 0 */
            c->empty[n_empty++] = j;
        } else if (missing <= sparse_max) { /* bounds the use of miss_rows */
            c->miss_start[n_sparse] = n_miss;
            c->sparse[n_sparse++] = j;
            for (size_t r = 0; r < rows; r++)
                if (mj[r] == 0) c->miss_rows[n_miss++] = (uint32_t)r;
        } else {
            c->dense[n_dense++] = j;
        }
    }
    c->miss_start[n_sparse] = n_miss;

    cblas_dsyrk(CblasColMajor, CblasUpper, CblasTrans, n_cols, n_rows, 1.0, x, n_rows, 0.0,
                c->cross, n_cols);
    if (n_dense + n_sparse + n_empty == 0) {
        merge_block(c, center, complete, 0, NULL, mask, rows);
        return 0;
    }

    /* Dense columns G: X^T M_G, (X*X)^T M_G, M^T M_G into the first |G|
     * columns of the sum, square and count buffers. */
    if (n_dense && n_dense * p * rows <= COMOMENT_DIRECT_WORK) {
        /* Few and small: three BLAS calls cost more in setup than the
         * products themselves, so each dense column j is done in one pass
         * that writes its place in the buffers directly. */
        for (size_t k = 0; k < n_dense; k++) {
            const size_t j = c->dense[k];
            dense_column(c, x, mask, rows, j);
        }
    } else if (n_dense) {
        for (size_t k = 0; k < rows * p; k++) c->x2[k] = x[k] * x[k];
        const double *mg = mask;
        if (n_dense < p) {
            for (size_t k = 0; k < n_dense; k++)
                memcpy(c->mask_g + k * rows, mask + c->dense[k] * rows, rows * sizeof(double));
            mg = c->mask_g;
        }
        const int n_g = (int)n_dense;
        cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, n_cols, n_g, n_rows, 1.0, x, n_rows,
                    mg, n_rows, 0.0, c->sums, n_cols);
        cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, n_cols, n_g, n_rows, 1.0, c->x2,
                    n_rows, mg, n_rows, 0.0, c->squares, n_cols);
        /* The merge reads only the upper part of counts, so M^T M by dsyrk
         * (p^2 rows flops, every column in place) beats the dgemm
         * (2 p |G| rows flops) once |G| >= p / 2. */
        int counts_placed = 2 * n_dense >= p;
        if (counts_placed)
            cblas_dsyrk(CblasColMajor, CblasUpper, CblasTrans, n_cols, n_rows, 1.0, mask, n_rows,
                        0.0, c->counts, n_cols);
        else
            cblas_dgemm(CblasColMajor, CblasTrans, CblasNoTrans, n_cols, n_g, n_rows, 1.0, mask,
                        n_rows, mg, n_rows, 0.0, c->counts, n_cols);
        place_dense_columns(c, n_dense, counts_placed);
    }
    if (n_sparse) fill_sparse_columns(c, x, mask, rows, n_sparse);
    for (size_t k = 0; k < n_empty; k++) {
        const size_t j = c->empty[k];
        memset(c->sums + j * p, 0, p * sizeof(double));
        memset(c->squares + j * p, 0, p * sizeof(double));
        memset(c->counts + j * p, 0, p * sizeof(double));
    }
    merge_block(c, center, complete, 1, source, mask, rows);
    return 0;
}

/* 1 when a loss (moments_frame_loss) makes one side's figures over the
 * pair's rows noise: it passes 2^-20 of that side's sd there (a constant
 * side has no r anyway). */
static int side_lost(double n, double m2, double loss)
{
    double sd = moments_sd(n, m2);
    return sd > 0 && isfinite(loss) && loss > 0x1p-20 * sd;
}

int comoment_merge(comoment *into, const comoment *from, const double *shift)
{
    if (into->p != from->p) return -1;
    pair_arrays a = arrays_of(into);
    const double *restrict fn = from->n, *restrict fmean_lo = from->mean_lo;
    const double *restrict fmean_hi = from->mean_hi, *restrict fm2_lo = from->m2_lo;
    const double *restrict fm2_hi = from->m2_hi, *restrict fco = from->co;
    for (size_t j = 0; j < into->p; j++) {
        const size_t base = j * (j + 1) / 2;
        const double sh_j = shift ? shift[j] : 0.0;
        for (size_t i = 0; i <= j; i++) {
            const size_t k = base + i;
            const double sh_i = shift ? shift[i] : 0.0;
            /* Empty pairs of `from` hold zeros, not means: leave them out. */
            if (fn[k] == 0) continue;
            /* from's rounding in its own frame, which the shifted sums no
             * longer show (a read judges them in into's frame) */
            const double loss_lo = sh_i != 0 ? moments_frame_loss(fn[k], fmean_lo[k], fm2_lo[k]) : 0;
            const double loss_hi = sh_j != 0 ? moments_frame_loss(fn[k], fmean_hi[k], fm2_hi[k]) : 0;
            pair_update(a, k, fn[k], fmean_lo[k] + sh_i, fmean_hi[k] + sh_j, fm2_lo[k], fm2_hi[k],
                        fco[k]);
            if (i != j)
                into->lost[k] |= from->lost[k] || side_lost(into->n[k], into->m2_lo[k], loss_lo) ||
                                 side_lost(into->n[k], into->m2_hi[k], loss_hi);
        }
    }
    return 0;
}

int comoment_pair_lost(const comoment *c, size_t i, size_t j)
{
    if (i == j) return 0;
    const size_t k = pair_index(i, j);
    const double n = c->n[k];
    return c->lost[k] || side_lost(n, c->m2_lo[k], moments_frame_loss(n, c->mean_lo[k], c->m2_lo[k])) ||
           side_lost(n, c->m2_hi[k], moments_frame_loss(n, c->mean_hi[k], c->m2_hi[k]));
}

double comoment_n(const comoment *c, size_t i, size_t j) { return c->n[pair_index(i, j)]; }

double comoment_mean(const comoment *c, size_t i, size_t j)
{
    size_t k = pair_index(i, j);
    if (c->n[k] == 0) return NAN;
    return i <= j ? c->mean_lo[k] : c->mean_hi[k];
}

void comoment_pair_state(const comoment *c, size_t i, size_t j, double *n, double *mean,
                         double *m2, double *co)
{
    size_t k = pair_index(i, j);
    *n = c->n[k];
    *mean = i <= j ? c->mean_lo[k] : c->mean_hi[k];
    *m2 = i <= j ? c->m2_lo[k] : c->m2_hi[k];
    *co = c->co[k];
}

double comoment_variance(const comoment *c, size_t i, size_t j)
{
    size_t k = pair_index(i, j);
    if (c->n[k] < 2) return NAN;
    return (i <= j ? c->m2_lo[k] : c->m2_hi[k]) / (c->n[k] - 1);
}

double comoment_covariance(const comoment *c, size_t i, size_t j)
{
    size_t k = pair_index(i, j);
    if (c->n[k] < 2) return NAN;
    return c->co[k] / (c->n[k] - 1);
}

double comoment_correlation(const comoment *c, size_t i, size_t j)
{
    size_t k = pair_index(i, j);
    /* A side's M2 or the co-moment past the double range (spreads of 1e154
     * or more) leaves no r: dividing by an infinite root read as r = 0. */
    if (c->n[k] < 2 || !(c->m2_lo[k] > 0) || !(c->m2_hi[k] > 0) || !isfinite(c->co[k]) ||
        !isfinite(c->m2_lo[k]) || !isfinite(c->m2_hi[k]))
        return NAN;
    /* One root of the product, correctly rounded, while the product is a
     * normal double; the roots one by one where it is not: it leaves the
     * double range (spread x sqrt(n) past about 1e77, or below 1e-77) long
     * before either sum does. */
    double p = c->m2_lo[k] * c->m2_hi[k];
    if (p >= DBL_MIN && p <= DBL_MAX) return c->co[k] / sqrt(p);
    return c->co[k] / (sqrt(c->m2_lo[k]) * sqrt(c->m2_hi[k]));
}

void comoment_covariance_matrix(const comoment *c, double *out)
{
    for (size_t i = 0; i < c->p; i++)
        for (size_t j = 0; j < c->p; j++) out[i * c->p + j] = comoment_covariance(c, i, j);
}

void comoment_correlation_matrix(const comoment *c, double *out)
{
    for (size_t i = 0; i < c->p; i++)
        for (size_t j = 0; j < c->p; j++) out[i * c->p + j] = comoment_correlation(c, i, j);
}
