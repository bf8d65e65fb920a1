/* pca: principal components of a summary's correlation or covariance matrix.
 *
 * Read-only over a summary.  pca_fit picks the columns (by default the
 * numeric columns a screen would test), builds the basis matrix from the
 * pairwise-complete co-moments -- Pearson r or the sample covariance of every
 * pair over the rows where both are present -- and eigen-decomposes it with
 * LAPACK (dsyevr).  The result holds the eigenvalues in decreasing order,
 * their shares of the total and the cumulative shares, the loadings (unit
 * eigenvectors, each signed so that its largest-magnitude entry is
 * positive), the two stopping guides (Kaiser, broken stick), and what a later
 * pass over the data needs to compute scores: each column's mean and the
 * factor that standardises it.
 *
 * A pairwise-complete matrix need not be positive semi-definite when cells
 * are missing; negative eigenvalues are counted, the most negative is kept,
 * and they are set to zero before shares are computed.
 *
 * Errors are reported as a status and a one-line message; nothing is
 * printed.  A pca_result is freed with pca_result_free.
 */
#ifndef SHEAF_PCA_H
#define SHEAF_PCA_H

#include <stddef.h>
#include <stdint.h>

#include "summary/summary.h"

typedef enum {
    PCA_BASIS_CORRELATION = 0, /* pairwise-complete Pearson r; scores from standardised values */
    PCA_BASIS_COVARIANCE = 1   /* pairwise-complete sample covariance; scores from centred values */
} pca_basis;

/* Why a column was left out of the automatic choice. */
typedef enum {
    PCA_LEFT_TARGET = 1,   /* the summary's target (without with_target) */
    PCA_LEFT_CATEGORICAL,  /* categorical, or declared categorical at scan time */
    PCA_LEFT_EMPTY,        /* fewer than two finite numbers */
    PCA_LEFT_CONSTANT,     /* variance 0, or a single distinct value */
    PCA_LEFT_OUT_OF_RANGE, /* distinct values whose variance passes the double range */
    PCA_LEFT_ID_LIKE,      /* ID-like by validity_id_like, the rule screen uses */
    PCA_LEFT_EXCLUDED      /* named in `exclude` */
} pca_reason;

typedef enum {
    PCA_OK = 0,
    PCA_ERR_USAGE = 1,   /* a name that is not a usable column, fewer than 1 column, ... */
    PCA_ERR_MEMORY = 2,  /* out of memory */
    PCA_ERR_LAPACK = 3   /* dsyevr failed */
} pca_status;

typedef struct {
    pca_basis basis;
    double numeric_share; /* share of parsing cells that makes a column numeric (0.99) */
    double id_share;      /* distinct / present at which an integer column is ID-like (0.95) */
    int with_target;      /* keep the target in the automatic choice */
    const char *columns;  /* comma-separated names to use instead of the automatic choice */
    const char *keep_list; /* text of a keep list: one name per line ("\r" and trailing
                              blanks dropped, empty lines and lines starting with '#'
                              skipped); with `columns`, the union is used */
    const char *exclude;  /* comma-separated names to leave out (either choice) */
} pca_options;

typedef struct {
    size_t column;     /* summary column index */
    pca_reason reason;
} pca_left_out;

typedef struct {
    pca_basis basis;
    size_t p;              /* columns in the basis */
    size_t *cols;          /* summary column index of each, in summary order */
    double *center;        /* p: each column's mean (from its moments) */
    double *factor;        /* p: 1 / sample sd (correlation) or 1 (covariance) */
    double *eigenvalues;   /* p, decreasing, negative ones set to 0 */
    double *loadings;      /* p x p, component-major: loadings[k * p + j] */
    double *share;         /* p: eigenvalue / sum of eigenvalues */
    double *cumulative;    /* p: running sum of share */
    double total;          /* sum of the (clamped) eigenvalues */
    size_t clamped_negative;  /* eigenvalues below zero before clamping */
    double most_negative;  /* the smallest of them (0 when none) */
    size_t undefined_pairs;   /* pairs (i < j) with no estimate (too few common rows), set to 0 */
    size_t imprecise_pairs;   /* of those, pairs whose r is noise (summary_pair_imprecise) */
    size_t kaiser_k;       /* leading eigenvalues above the mean eigenvalue */
    size_t broken_stick_k; /* leading components whose share beats the broken stick */
    size_t nleft;          /* columns left out, with reasons (automatic choice and exclude) */
    pca_left_out *left;
} pca_result;

void pca_options_defaults(pca_options *o);

/* Chooses the columns, builds the basis matrix and decomposes it.
 * Automatic choice (no `columns`, no `keep_list`): every column of the
 * co-moment matrix that is numeric (summary_column_kind with numeric_share),
 * has at least two numbers, is not constant and not ID-like, without the
 * target unless with_target; the others are listed in `left`.  An explicit
 * list uses the named columns in summary order (the target too when named);
 * a name that is not a column, or is categorical, empty, out of range or
 * (correlation basis) constant, is an error.  At least one column must remain.
 * Returns PCA_OK with *out set, or a status with a message in err. */
pca_status pca_fit(const summary *s, const pca_options *o, pca_result **out, char *err,
                   size_t errlen);
void pca_result_free(pca_result *r);

/* The name of a reason ("target", "categorical", "empty", "constant",
 * "out_of_range", "ID-like", "excluded"). */
const char *pca_reason_name(pca_reason r);
const char *pca_basis_name(pca_basis b);

/* Eigen-decomposition of the symmetric p x p matrix a (row-major, both
 * triangles filled; a is overwritten) with LAPACKE_dsyevr: values[k] decreasing, vectors[k * p + j] the unit
 * eigenvector of values[k], signed so that its largest-magnitude entry (the
 * first one on a tie) is positive.  Returns 0, or LAPACK's info (< 0: bad
 * argument, > 0: no convergence), or -1000 on OOM. */
int pca_eigen(double *a, size_t p, double *values, double *vectors);

/* Sets negative values to 0; returns how many there were and puts the most
 * negative in *most_negative (0 when none). */
size_t pca_clamp(double *values, size_t p, double *most_negative);

/* Shares and cumulative shares of values (>= 0); all zero when the sum is 0.
 * Returns the sum. */
double pca_shares(const double *values, size_t p, double *share, double *cumulative);

/* Kaiser rule: leading values strictly above the mean value (sum / p). */
size_t pca_kaiser_k(const double *values, size_t p);
/* Broken-stick rule: b_k = (1/p) sum_{i=k}^{p} 1/i; the count of leading
 * components (k = 1, 2, ...) whose share is above b_k, stopping at the first
 * that is not (Jackson 1993, "Stopping rules in principal components
 * analysis", Ecology 74(8)).  share must be decreasing. */
size_t pca_broken_stick_k(const double *share, size_t p);
/* b_k of the broken-stick rule (k = 1..p). */
double pca_broken_stick(size_t k, size_t p);
/* Smallest k whose cumulative share reaches `target` (1e-12 slack for
 * rounding); p when none does. */
size_t pca_k_for_share(const double *cumulative, size_t p, double target);

/* The number of components to keep: k_request when > 0 (capped at p), else
 * the share rule when share_request > 0, else the Kaiser k; at least 1. */
size_t pca_choose_k(const pca_result *r, size_t k_request, double share_request);

/* Indices of the m largest-magnitude loadings of component `comp`, by
 * decreasing magnitude (ties by column order); m is capped at p.  Returns
 * the count written to idx. */
size_t pca_leading(const pca_result *r, size_t comp, size_t m, size_t *idx);

/* Scores of the first k components for a block of rows.
 * x is rows x p row-major in basis-column order: the raw values, NaN for a
 * missing or non-numeric cell.  x is overwritten with the standardised
 * values ((x - center) * factor, 0 for NaN: mean imputation), then
 * scores = x L with cblas_dgemm, scores rows x k row-major.  0, or -1 when
 * OpenBLAS's working buffer does not fit in this thread (acc/blas.h). */
int pca_project(const pca_result *r, size_t k, double *x, size_t rows, double *scores);

#endif
