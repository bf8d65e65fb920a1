/* comoment, private part: the state's layout, shared by the updates and
 * reads (comoment.c) and the file form (comoment_wire.c).  See comoment.h
 * for the interface and comoment.c for the method. */
#ifndef SHEAF_COMOMENT_STATE_H
#define SHEAF_COMOMENT_STATE_H

#include <stddef.h>
#include <stdint.h>

#include "acc/comoment.h"

/* Largest p a serialized state may declare. */
#define COMOMENT_MAX_COLUMNS 100000u
/* Counts are doubles; above 2^53 they would no longer be exact. */
#define COMOMENT_MAX_COUNT 9007199254740992.0

struct comoment {
    size_t p;          /* columns */
    size_t max_rows;   /* largest block accepted (0: merge/read only) */
    size_t pairs;      /* p (p + 1) / 2 */
    /* State, packed upper triangles indexed by pair_index(lo, hi). */
    double *n;         /* rows where both lo and hi are present */
    double *mean_lo;   /* mean of column lo over those rows, in the frame */
    double *mean_hi;   /* mean of column hi over those rows */
    double *m2_lo;     /* sum of squared deviations of lo from mean_lo */
    double *m2_hi;     /* same for hi */
    double *co;        /* co-moment sum (x_lo - mean_lo)(x_hi - mean_hi) */
    unsigned char *lost; /* 1: a merge brought this pair numbers rounded in another frame by
                            more than 2^-20 of the pair's spread (comoment_pair_lost) */
    /* Scratch for one block (NULL when max_rows == 0). */
    double *cross;     /* p x p column-major, upper part: X^T X */
    double *sums;      /* p x p column-major: s[i][j], columns j incomplete */
    double *squares;   /* p x p column-major: q[i][j] */
    double *counts;    /* p x p column-major, upper part: nb[i][j] */
    double *x2;        /* max_rows x p: squared values */
    double *mask_g;    /* max_rows x p: gathered masks of the dense columns */
    double *col_count; /* p: present cells per column in the block */
    double *col_sum;   /* p: column sums of x */
    double *col_sq;    /* p: column sums of x^2 */
    size_t *dense;     /* p: incomplete columns done by dgemm, ascending */
    size_t *sparse;    /* p: incomplete columns done by their missing rows */
    size_t *miss_start;/* p + 1: sparse column k's rows at miss_rows[start[k]..start[k+1]) */
    size_t *empty;     /* p: columns with no value in the block */
    uint32_t *miss_rows; /* (max_rows / COMOMENT_SPARSE_SHARE) p: missing row numbers */
};

static inline size_t pair_index(size_t i, size_t j)
{
    size_t lo = i < j ? i : j, hi = i < j ? j : i;
    return hi * (hi + 1) / 2 + lo;
}

/* On the wire a lost pair's count N[i][j] (and N[j][i]) carries this bit,
 * which no count reaches (they are at most 2^53). */
#define COMOMENT_LOST_BIT (UINT64_C(1) << 63)

#endif
