/* pca: see pca.h.
 *
 * Method.  The basis is the p x p matrix A of pairwise-complete estimates
 * from the summary's co-moments (comoment.h): Pearson r, A_ij =
 * C_ij / sqrt(M2_i|j M2_j|i), or the sample covariance C_ij / (n_ij - 1).
 * Its eigen-decomposition A = V diag(lambda) V^T is computed by LAPACK's
 * dsyevr (Householder tridiagonalisation, then the MRRR algorithm of Dhillon
 * & Parlett 2004, "Multiple representations to compute orthogonal
 * eigenvectors of symmetric tridiagonal matrices", Linear Algebra Appl. 387),
 * with the absolute tolerance set to the safe minimum, which LAPACK's
 * documentation recommends for high relative accuracy.  LAPACK returns the
 * eigenvalues in increasing order; they are reversed.
 *
 * Eigenvectors are defined up to sign; each is signed so that its
 * largest-magnitude entry is positive, which makes output reproducible
 * across LAPACK builds.
 *
 * With missing cells A is built from different row sets per pair and may be
 * indefinite.  Negative eigenvalues are reported and set to zero (the
 * nearest positive semi-definite matrix in the Frobenius norm has exactly
 * these eigenvectors and the clamped eigenvalues -- Higham 1988, "Computing a
 * nearest symmetric positive semidefinite matrix", Linear Algebra Appl. 103).
 *
 * Stopping guides: the Kaiser rule keeps eigenvalues above the mean
 * eigenvalue (Kaiser 1960, Educ. Psychol. Meas. 20; with a correlation basis
 * the mean is 1); the broken-stick rule keeps the leading components whose
 * share exceeds the expected share b_k = (1/p) sum_{i=k}^{p} 1/i of the k-th
 * longest piece of a stick broken at random into p pieces (Frontier 1976;
 * Jackson 1993, Ecology 74(8)).  The references are cited from memory.
 *
 * Scores: z = (x - mean) / sd per column (or x - mean for a covariance
 * basis), 0 for a missing cell (mean imputation), and scores = Z V_k for
 * blocks of rows with cblas_dgemm.
 */
#include "stats/pca.h"

#include "acc/blas.h"
#include "io/message.h"
#include "io/namelist.h"
#include "stats/validity.h"
#include "summary/access.h"

#include <cblas.h>
#include <lapacke.h>
#include <math.h>

#include "io/keep_list.h"
#include <stdlib.h>
#include <string.h>
#include <stdio.h>

void pca_options_defaults(pca_options *o)
{
    memset(o, 0, sizeof *o);
    o->basis = PCA_BASIS_CORRELATION;
    o->numeric_share = 0.99;
    o->id_share = 0.95;
}

const char *pca_reason_name(pca_reason r)
{
    switch (r) {
    case PCA_LEFT_TARGET: return "target";
    case PCA_LEFT_CATEGORICAL: return "categorical";
    case PCA_LEFT_EMPTY: return "empty";
    case PCA_LEFT_CONSTANT: return "constant";
    case PCA_LEFT_OUT_OF_RANGE: return "out_of_range";
    case PCA_LEFT_ID_LIKE: return "ID-like";
    case PCA_LEFT_EXCLUDED: return "excluded";
    }
    return "?";
}

const char *pca_basis_name(pca_basis b)
{
    return b == PCA_BASIS_COVARIANCE ? "covariance" : "correlation";
}

void pca_result_free(pca_result *r)
{
    if (!r) return;
    free(r->cols);
    free(r->center);
    free(r->factor);
    free(r->eigenvalues);
    free(r->loadings);
    free(r->share);
    free(r->cumulative);
    free(r->left);
    free(r);
}

/* ---- the decomposition -------------------------------------------------- */

int pca_eigen(double *a, size_t p, double *values, double *vectors)
{
    if (p == 0) return 0;
    lapack_int n = (lapack_int)p, m = 0;
    if (blas_thread_ready() != 0) return -1001;
    lapack_int *isuppz = malloc(2 * p * sizeof *isuppz);
    if (!isuppz) return -1000;
    /* Column-major 'L' reads the row-major upper triangle: the same numbers
     * for a symmetric matrix. */
    lapack_int info = LAPACKE_dsyevr(LAPACK_COL_MAJOR, 'V', 'A', 'L', n, a, n, 0.0, 0.0, 0, 0,
                                     LAPACKE_dlamch('S'), &m, values, vectors, n, isuppz);
    free(isuppz);
    if (info != 0) return (int)info;
    if ((size_t)m != p) return (int)p + 1;
    /* Column k of the column-major result is eigenvector k, stored at
     * vectors[k * p]: reverse the order of the vectors and the values. */
    for (size_t lo = 0, hi = p - 1; lo < hi; lo++, hi--) {
        double t = values[lo];
        values[lo] = values[hi];
        values[hi] = t;
        double *u = vectors + lo * p, *v = vectors + hi * p;
        for (size_t j = 0; j < p; j++) {
            double w = u[j];
            u[j] = v[j];
            v[j] = w;
        }
    }
    for (size_t k = 0; k < p; k++) {
        double *v = vectors + k * p, best = -1.0;
        size_t at = 0;
        for (size_t j = 0; j < p; j++)
            if (fabs(v[j]) > best) { best = fabs(v[j]); at = j; }
        if (v[at] < 0)
            for (size_t j = 0; j < p; j++) v[j] = -v[j];
    }
    return 0;
}

size_t pca_clamp(double *values, size_t p, double *most_negative)
{
    size_t n = 0;
    double low = 0;
    for (size_t k = 0; k < p; k++)
        if (values[k] < 0) {
            n++;
            if (values[k] < low) low = values[k];
            values[k] = 0;
        }
    *most_negative = low;
    return n;
}

double pca_shares(const double *values, size_t p, double *share, double *cumulative)
{
    double total = 0;
    for (size_t k = 0; k < p; k++) total += values[k];
    double run = 0;
    for (size_t k = 0; k < p; k++) {
        share[k] = total > 0 ? values[k] / total : 0;
        run += share[k];
        cumulative[k] = run;
    }
    return total;
}

size_t pca_kaiser_k(const double *values, size_t p)
{
    if (p == 0) return 0;
    double total = 0;
    for (size_t k = 0; k < p; k++) total += values[k];
    double mean = total / (double)p;
    size_t k = 0;
    while (k < p && values[k] > mean) k++;
    return k;
}

double pca_broken_stick(size_t k, size_t p)
{
    if (k < 1 || k > p) return 0;
    double b = 0;
    for (size_t i = p; i >= k; i--) b += 1.0 / (double)i; /* small terms first */
    return b / (double)p;
}

size_t pca_broken_stick_k(const double *share, size_t p)
{
    /* b_k for k = p, p-1, ..., 1 by a running tail sum, then the leading run. */
    if (p == 0) return 0;
    double tail = 0;
    size_t keep = 0;
    double *b = malloc(p * sizeof *b);
    if (b) {
        for (size_t i = p; i >= 1; i--) {
            tail += 1.0 / (double)i;
            b[i - 1] = tail / (double)p;
        }
        while (keep < p && share[keep] > b[keep]) keep++;
        free(b);
    } else {
        while (keep < p && share[keep] > pca_broken_stick(keep + 1, p)) keep++;
    }
    return keep;
}

size_t pca_k_for_share(const double *cumulative, size_t p, double target)
{
    for (size_t k = 0; k < p; k++)
        if (cumulative[k] >= target - 1e-12) return k + 1;
    return p;
}

size_t pca_choose_k(const pca_result *r, size_t k_request, double share_request)
{
    size_t k;
    if (k_request > 0) k = k_request;
    else if (share_request > 0) k = pca_k_for_share(r->cumulative, r->p, share_request);
    else k = r->kaiser_k;
    if (k > r->p) k = r->p;
    return k ? k : 1;
}

size_t pca_leading(const pca_result *r, size_t comp, size_t m, size_t *idx)
{
    size_t p = r->p;
    if (m > p) m = p;
    if (m == 0) return 0;
    const double *v = r->loadings + comp * p;
    size_t n = 0;
    /* Insertion into a short sorted list: O(p m), m is a handful. */
    for (size_t j = 0; j < p; j++) {
        double a = fabs(v[j]);
        if (n == m && !(a > fabs(v[idx[n - 1]]))) continue;
        size_t at = n < m ? n++ : m - 1;
        while (at > 0 && a > fabs(v[idx[at - 1]])) {
            idx[at] = idx[at - 1];
            at--;
        }
        idx[at] = j;
    }
    return n;
}

int pca_project(const pca_result *r, size_t k, double *x, size_t rows, double *scores)
{
    size_t p = r->p;
    if (!rows || !k) return 0;
    if (blas_thread_ready() != 0) return -1;
    for (size_t i = 0; i < rows; i++) {
        double *row = x + i * p;
        for (size_t j = 0; j < p; j++) {
            double v = row[j];
            row[j] = v == v ? (v - r->center[j]) * r->factor[j] : 0.0;
        }
    }
    cblas_dgemm(CblasRowMajor, CblasNoTrans, CblasTrans, (int)rows, (int)k, (int)p, 1.0, x,
                (int)p, r->loadings, (int)p, 0.0, scores, (int)k);
    return 0;
}

/* ---- choosing columns --------------------------------------------------- */

typedef struct {
    const char *name;
    size_t col;
} name_entry;

static int entry_cmp(const void *a, const void *b)
{
    const name_entry *x = a, *y = b;
    int c = strcmp(x->name, y->name);
    if (c) return c;
    return x->col < y->col ? -1 : x->col > y->col;
}

/* Column index of a name (the first column so named), or -1. */
static long find_name(const name_entry *byname, size_t n, const char *name, size_t len)
{
    size_t lo = 0, hi = n;
    while (lo < hi) {
        size_t mid = lo + (hi - lo) / 2;
        int c = strncmp(byname[mid].name, name, len);
        if (c == 0 && byname[mid].name[len] != '\0') c = 1;
        if (c < 0) lo = mid + 1;
        else hi = mid;
    }
    if (lo < n && strncmp(byname[lo].name, name, len) == 0 && byname[lo].name[len] == '\0')
        return (long)byname[lo].col;
    return -1;
}

/* How many columns carry a name (byname is sorted by name). */
static size_t count_name(const name_entry *byname, size_t n, const char *name, size_t len)
{
    size_t count = 0;
    for (size_t i = 0; i < n; i++)
        count += strncmp(byname[i].name, name, len) == 0 && byname[i].name[len] == '\0';
    return count;
}

/* Why column j cannot enter the basis (0: it can).  The target is judged by
 * the caller. */
static int unusable(const summary *s, size_t j, const pca_options *o, int explicit_choice)
{
    if (!summary_has_pairs(s, j) || summary_kind(s, j, o->numeric_share) != KIND_NUMERIC)
        return PCA_LEFT_CATEGORICAL;
    uint64_t numbers = summary_numbers(s, j);
    if (numbers < 2) return PCA_LEFT_EMPTY;
    double var = summary_variance(s, j);
    double distinct = summary_distinct(s, j, NULL);
    /* Spread too wide for a double (a NaN or infinite variance): not constant. */
    if (distinct > 1 && !(var < INFINITY) && var != 0) return PCA_LEFT_OUT_OF_RANGE;
    if (!(var > 0) || distinct <= 1) {
        /* A covariance basis can hold a constant column that was asked for. */
        if (explicit_choice && o->basis == PCA_BASIS_COVARIANCE && var == 0) return 0;
        return PCA_LEFT_CONSTANT;
    }
    if (explicit_choice) return 0;
    if (validity_id_like(s, j, KIND_NUMERIC, o->id_share)) return PCA_LEFT_ID_LIKE; /* screen's rule */
    return 0;
}

/* Marks the column name (len bytes) in `mark` (1).  Returns 0, or -1 with
 * a message for an unknown or doubled name. */
static int mark_one(const summary *s, const name_entry *byname, const char *p, size_t len,
                    const char *what, unsigned char *mark, char *err, size_t errlen)
{
    long j = find_name(byname, summary_columns(s), p, len);
    if (j < 0) {
        message_printf(err, errlen, "%s: no column named '%.*s' in the summary", what, (int)len, p);
        summary_suggest_columns(s, p, len, err, errlen);
        return -1;
    }
    if (count_name(byname, summary_columns(s), p, len) > 1) {
        message_printf(err, errlen,
                       "%s: '%.*s' names more than one column (duplicate header names)", what,
                       (int)len, p);
        return -1;
    }
    mark[j] = 1;
    return 0;
}

/* Marks the names of a list in `mark` (1).  sep ',' for a list of names
 * (io/namelist's rule; empty names skipped), '\n' for a keep list.
 * Returns 0, or -1 with a message for an unknown name. */
static int mark_names(const summary *s, const name_entry *byname, const char *list, char sep,
                      const char *what, unsigned char *mark, char *err, size_t errlen)
{
    if (sep == ',') {
        size_t n = 0;
        char **names = namelist_split(list, &n);
        if (!names) {
            message_printf(err, errlen, "out of memory");
            return -1;
        }
        int rc = 0;
        for (size_t i = 0; i < n && rc == 0; i++)
            if (names[i][0])
                rc = mark_one(s, byname, names[i], strlen(names[i]), what, mark, err, errlen);
        free(names);
        return rc;
    }
    for (const char *p = list; *p;) {
        const char *e = strchr(p, sep);
        size_t len = e ? (size_t)(e - p) : strlen(p);
        const char *next = e ? e + 1 : p + len;
        const char *name = keep_list_name(p, len, &len);
        if (name && mark_one(s, byname, name, len, what, mark, err, errlen) != 0) return -1;
        p = next;
    }
    return 0;
}

static const char *why_unusable(int reason, pca_basis basis)
{
    switch (reason) {
    case PCA_LEFT_CATEGORICAL: return "is not numeric";
    case PCA_LEFT_EMPTY: return "has fewer than two numbers";
    case PCA_LEFT_CONSTANT:
        return basis == PCA_BASIS_CORRELATION ? "is constant (it has no correlation)"
                                              : "is constant";
    case PCA_LEFT_OUT_OF_RANGE: return "has a variance beyond the range of a double";
    }
    return "cannot be used";
}

/* Fills r->cols, r->p and r->left. */
static pca_status choose(const summary *s, const pca_options *o, pca_result *r, char *err,
                         size_t errlen)
{
    size_t n = summary_columns(s);
    pca_status st = PCA_ERR_MEMORY;
    name_entry *byname = malloc((n ? n : 1) * sizeof *byname);
    unsigned char *chosen = calloc(n ? n : 1, 1), *excluded = calloc(n ? n : 1, 1);
    unsigned char *listed = calloc(n ? n : 1, 1);
    r->cols = malloc((n ? n : 1) * sizeof *r->cols);
    r->left = malloc((n ? n : 1) * sizeof *r->left);
    if (!byname || !chosen || !excluded || !listed || !r->cols || !r->left) {
        snprintf(err, errlen, "out of memory");
        goto done;
    }
    for (size_t j = 0; j < n; j++) byname[j] = (name_entry){summary_name(s, j), j};
    qsort(byname, n, sizeof *byname, entry_cmp);
    st = PCA_ERR_USAGE;
    int explicit_choice = o->columns != NULL || o->keep_list != NULL;
    if (o->columns && mark_names(s, byname, o->columns, ',', "{columns}", chosen, err, errlen))
        goto done;
    if (o->keep_list &&
        mark_names(s, byname, o->keep_list, '\n', "keep list", listed, err, errlen))
        goto done;
    if (o->exclude && mark_names(s, byname, o->exclude, ',', "{exclude}", excluded, err, errlen))
        goto done;
    r->p = r->nleft = 0;
    for (size_t j = 0; j < n; j++) {
        if (explicit_choice) {
            if ((!chosen[j] && !listed[j]) || excluded[j]) continue;
            int why = unusable(s, j, o, 1);
            if (why && !chosen[j]) {
                /* A keep list from a screen names categorical columns too:
                 * they are left out and listed, not an error. */
                r->left[r->nleft++] = (pca_left_out){j, (pca_reason)why};
                continue;
            }
            if (why) {
                snprintf(err, errlen, "column '%s' %s", summary_name(s, j),
                         why_unusable(why, o->basis));
                goto done;
            }
            r->cols[r->p++] = j;
            continue;
        }
        int why = (int)j == summary_target_column(s) && !o->with_target ? PCA_LEFT_TARGET : unusable(s, j, o, 0);
        if (!why && excluded[j]) why = PCA_LEFT_EXCLUDED;
        if (why) r->left[r->nleft++] = (pca_left_out){j, (pca_reason)why};
        else r->cols[r->p++] = j;
    }
    if (explicit_choice)
        for (size_t j = 0; j < n; j++)
            if ((chosen[j] || listed[j]) && excluded[j])
                r->left[r->nleft++] = (pca_left_out){j, PCA_LEFT_EXCLUDED};
    if (r->p == 0) {
        snprintf(err, errlen, "no column is left for the PCA%s",
                 explicit_choice ? "" : " (every column is categorical, constant, ID-like, "
                                        "the target or excluded)");
        goto done;
    }
    st = PCA_OK;
done:
    free(byname);
    free(chosen);
    free(excluded);
    free(listed);
    return st;
}

pca_status pca_fit(const summary *s, const pca_options *o, pca_result **out, char *err,
                   size_t errlen)
{
    *out = NULL;
    if (!summary_has_comoments(s)) {
        snprintf(err, errlen, "the summary has no co-moment matrix");
        return PCA_ERR_USAGE;
    }
    pca_result *r = calloc(1, sizeof *r);
    if (!r) { snprintf(err, errlen, "out of memory"); return PCA_ERR_MEMORY; }
    r->basis = o->basis;
    pca_status st = choose(s, o, r, err, errlen);
    if (st != PCA_OK) { pca_result_free(r); return st; }
    size_t p = r->p;
    double *a = malloc(p * p * sizeof *a);
    r->center = malloc(p * sizeof *r->center);
    r->factor = malloc(p * sizeof *r->factor);
    r->eigenvalues = malloc(p * sizeof *r->eigenvalues);
    r->loadings = malloc(p * p * sizeof *r->loadings);
    r->share = malloc(p * sizeof *r->share);
    r->cumulative = malloc(p * sizeof *r->cumulative);
    if (!a || !r->center || !r->factor || !r->eigenvalues || !r->loadings || !r->share ||
        !r->cumulative) {
        free(a);
        pca_result_free(r);
        snprintf(err, errlen, "out of memory (the %zu x %zu basis matrix)", p, p);
        return PCA_ERR_MEMORY;
    }
    int corr = o->basis == PCA_BASIS_CORRELATION;
    for (size_t i = 0; i < p; i++) {
        size_t ci = r->cols[i];
        r->center[i] = summary_mean(s, ci);
        r->factor[i] = corr ? 1.0 / summary_sd(s, ci) : 1.0;
        a[i * p + i] = corr ? 1.0 : summary_pair_variance(s, ci, ci);
        for (size_t j = 0; j < i; j++) {
            size_t cj = r->cols[j];
            double v = corr ? summary_correlation(s, ci, cj) : summary_covariance(s, ci, cj);
            if (!isfinite(v)) {
                v = 0;
                r->undefined_pairs++;
                r->imprecise_pairs += (size_t)summary_pair_imprecise(s, ci, cj);
            }
            a[i * p + j] = a[j * p + i] = v;
        }
    }
    int info = pca_eigen(a, p, r->eigenvalues, r->loadings);
    free(a);
    if (info != 0) {
        pca_result_free(r);
        if (info == -1000 || info == -1001) {
            snprintf(err, errlen, "out of memory: %s",
                     info == -1000 ? "LAPACK's work space" : blas_buffer_what());
            return PCA_ERR_MEMORY;
        }
        snprintf(err, errlen, "LAPACK dsyevr failed (info %d) on the %zu x %zu matrix", info, p, p);
        return PCA_ERR_LAPACK;
    }
    r->clamped_negative = pca_clamp(r->eigenvalues, p, &r->most_negative);
    r->total = pca_shares(r->eigenvalues, p, r->share, r->cumulative);
    r->kaiser_k = pca_kaiser_k(r->eigenvalues, p);
    r->broken_stick_k = pca_broken_stick_k(r->share, p);
    *out = r;
    return PCA_OK;
}
