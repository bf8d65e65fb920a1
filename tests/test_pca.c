/* pca: eigen-decomposition, sign convention, clamping, stopping guides,
 * column choice and scores.
 *
 * References: closed-form eigen-decompositions worked out by hand below (the
 * equicorrelation matrix; matrices built as Q diag(l) Q^T from the
 * Householder reflection Q = I - 2 v v^T / v^T v of v = (1, 2, 3), whose
 * entries are sevenths), and the broken-stick values b_k of p = 4 computed by
 * hand from the definition.  The CSV tables of the column-choice tests are
 * invented for these tests.  Eigenvalues against numpy on open datasets are
 * in tests/ref/test_pca.py. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "stats/pca.h"
#include "summary/scan.h"
#include "testutil.h"

/* Q = I - (1/7) v v^T with v = (1, 2, 3): columns q1 = (6, -2, -3)/7,
 * q2 = (-2, 3, -6)/7, q3 = (-3, -6, -2)/7 (orthonormal: 36+4+9 = 49, ...). */
static const double Q[3][3] = {{6 / 7.0, -2 / 7.0, -3 / 7.0},
                               {-2 / 7.0, 3 / 7.0, -6 / 7.0},
                               {-3 / 7.0, -6 / 7.0, -2 / 7.0}};

/* a = Q diag(l) Q^T, row-major 3 x 3. */
static void from_spectrum(const double l[3], double a[9])
{
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++) {
            double s = 0;
            for (int k = 0; k < 3; k++) s += Q[i][k] * l[k] * Q[j][k];
            a[i * 3 + j] = s;
        }
}

Test(pca_eigen, equicorrelation_matrix_has_closed_form_eigenvalues)
{
    /* R = (1 - r) I + r 1 1^T: eigenvalues 1 + 2r (vector 1/sqrt 3 each) and
     * 1 - r twice. */
    double r = 0.4, a[9], val[3], vec[9];
    for (int i = 0; i < 9; i++) a[i] = i % 4 == 0 ? 1.0 : r;
    cr_assert_eq(pca_eigen(a, 3, val, vec), 0);
    cr_assert_float_eq(val[0], 1 + 2 * r, 1e-14);
    cr_assert_float_eq(val[1], 1 - r, 1e-14);
    cr_assert_float_eq(val[2], 1 - r, 1e-14);
    for (int j = 0; j < 3; j++) cr_assert_float_eq(vec[j], 1 / sqrt(3.0), 1e-14);
}

Test(pca_eigen, loadings_are_the_known_eigenvectors_signed_by_largest_entry)
{
    double l[3] = {1.0, 3.0, 2.0}, a[9], val[3], vec[9];
    from_spectrum(l, a);
    cr_assert_eq(pca_eigen(a, 3, val, vec), 0);
    cr_assert_float_eq(val[0], 3.0, 1e-14);
    cr_assert_float_eq(val[1], 2.0, 1e-14);
    cr_assert_float_eq(val[2], 1.0, 1e-14);
    /* Eigenvalue 3 is q2 = (-2, 3, -6)/7: largest |entry| is -6/7, so the
     * sign flips to (2, -3, 6)/7.  Eigenvalue 2 is q3 = (-3, -6, -2)/7 ->
     * (3, 6, 2)/7.  Eigenvalue 1 is q1 = (6, -2, -3)/7, already positive. */
    const double want[3][3] = {{2 / 7.0, -3 / 7.0, 6 / 7.0},
                               {3 / 7.0, 6 / 7.0, 2 / 7.0},
                               {6 / 7.0, -2 / 7.0, -3 / 7.0}};
    for (int k = 0; k < 3; k++)
        for (int j = 0; j < 3; j++) cr_assert_float_eq(vec[k * 3 + j], want[k][j], 1e-14);
}

Test(pca_eigen, sign_does_not_depend_on_the_input_sign_of_a_vector)
{
    /* The same matrix with column/row 2 negated has eigenvectors with entry 2
     * negated; after the sign fix each still has its largest entry positive. */
    double l[3] = {3.0, 2.0, 1.0}, a[9], val[3], vec[9];
    from_spectrum(l, a);
    for (int i = 0; i < 3; i++) { a[i * 3 + 2] = -a[i * 3 + 2]; a[2 * 3 + i] = -a[2 * 3 + i]; }
    cr_assert_eq(pca_eigen(a, 3, val, vec), 0);
    for (int k = 0; k < 3; k++) {
        int at = 0;
        for (int j = 1; j < 3; j++)
            if (fabs(vec[k * 3 + j]) > fabs(vec[k * 3 + at])) at = j;
        cr_assert_gt(vec[k * 3 + at], 0, "component %d", k);
    }
    /* Eigenvalue 3 <-> q1 = (6, -2, -3)/7 becomes (6, -2, 3)/7. */
    cr_assert_float_eq(vec[0], 6 / 7.0, 1e-14);
    cr_assert_float_eq(vec[1], -2 / 7.0, 1e-14);
    cr_assert_float_eq(vec[2], 3 / 7.0, 1e-14);
}

Test(pca_eigen, one_by_one_and_empty)
{
    double a = 2.5, val, vec;
    cr_assert_eq(pca_eigen(&a, 1, &val, &vec), 0);
    cr_assert_float_eq(val, 2.5, 0);
    cr_assert_float_eq(vec, 1.0, 0);
    cr_assert_eq(pca_eigen(NULL, 0, NULL, NULL), 0);
}

Test(pca_clamp, indefinite_matrix_reports_and_zeroes_negative_eigenvalues)
{
    double l[3] = {2.5, -0.3, 0.8}, a[9], val[3], vec[9], share[3], cum[3], low;
    from_spectrum(l, a);
    cr_assert_eq(pca_eigen(a, 3, val, vec), 0);
    cr_assert_float_eq(val[2], -0.3, 1e-14);
    cr_assert_eq(pca_clamp(val, 3, &low), 1);
    cr_assert_float_eq(low, -0.3, 1e-14);
    cr_assert_eq(val[2], 0.0);
    double total = pca_shares(val, 3, share, cum);
    cr_assert_float_eq(total, 3.3, 1e-14);
    cr_assert_float_eq(share[0], 2.5 / 3.3, 1e-15);
    cr_assert_float_eq(share[1], 0.8 / 3.3, 1e-15);
    cr_assert_eq(share[2], 0.0);
    cr_assert_float_eq(cum[2], 1.0, 1e-15);
    /* Kaiser on the clamped values: mean 1.1, only 2.5 above it. */
    cr_assert_eq(pca_kaiser_k(val, 3), 1);
}

Test(pca_clamp, nothing_to_clamp)
{
    double val[3] = {2, 1, 0}, low = 7;
    cr_assert_eq(pca_clamp(val, 3, &low), 0);
    cr_assert_eq(low, 0.0);
}

Test(pca_guides, broken_stick_values_for_four_components)
{
    /* b_k = (1/4) sum_{i=k}^4 1/i: 25/48, 13/48, 7/48, 3/48 (by hand). */
    cr_assert_float_eq(pca_broken_stick(1, 4), 25 / 48.0, 1e-15);
    cr_assert_float_eq(pca_broken_stick(2, 4), 13 / 48.0, 1e-15);
    cr_assert_float_eq(pca_broken_stick(3, 4), 7 / 48.0, 1e-15);
    cr_assert_float_eq(pca_broken_stick(4, 4), 3 / 48.0, 1e-15);
    double sum = 0;
    for (size_t k = 1; k <= 10; k++) sum += pca_broken_stick(k, 10);
    cr_assert_float_eq(sum, 1.0, 1e-14); /* the pieces make the whole stick */
}

Test(pca_guides, broken_stick_stops_at_first_share_below_the_stick)
{
    double a[4] = {0.60, 0.25, 0.10, 0.05}; /* 0.25 < 13/48 = 0.2708 */
    double b[4] = {0.55, 0.30, 0.10, 0.05}; /* 0.10 < 7/48 = 0.1458 */
    double c[4] = {0.50, 0.30, 0.15, 0.05}; /* 0.50 < 25/48 = 0.5208 */
    double d[4] = {0.53, 0.28, 0.15, 0.04}; /* 0.04 < 3/48 */
    cr_assert_eq(pca_broken_stick_k(a, 4), 1);
    cr_assert_eq(pca_broken_stick_k(b, 4), 2);
    cr_assert_eq(pca_broken_stick_k(c, 4), 0);
    cr_assert_eq(pca_broken_stick_k(d, 4), 3);
}

Test(pca_guides, kaiser_counts_values_strictly_above_the_mean)
{
    double a[4] = {2.4, 1.0, 0.4, 0.2}; /* mean 1: 1.0 is not above it */
    double b[4] = {1, 1, 1, 1};
    double c[3] = {30, 20, 10};          /* covariance basis: mean 20 */
    cr_assert_eq(pca_kaiser_k(a, 4), 1);
    cr_assert_eq(pca_kaiser_k(b, 4), 0);
    cr_assert_eq(pca_kaiser_k(c, 3), 1);
}

Test(pca_guides, share_rule_takes_the_smallest_k_reaching_the_share)
{
    double val[4] = {2.4, 1.0, 0.4, 0.2}, share[4], cum[4];
    pca_shares(val, 4, share, cum); /* 0.6, 0.85, 0.95, 1.0 */
    cr_assert_eq(pca_k_for_share(cum, 4, 0.5), 1);
    cr_assert_eq(pca_k_for_share(cum, 4, 0.6), 1);
    cr_assert_eq(pca_k_for_share(cum, 4, 0.9), 3);
    cr_assert_eq(pca_k_for_share(cum, 4, 0.95), 3); /* rounding of 0.95 is forgiven */
    cr_assert_eq(pca_k_for_share(cum, 4, 1.0), 4);
}

/* A result over hand-set values for the k and projection tests. */
static pca_result *hand_result(void)
{
    pca_result *r = calloc(1, sizeof *r);
    r->p = 3;
    r->cols = calloc(3, sizeof *r->cols);
    r->center = malloc(3 * sizeof(double));
    r->factor = malloc(3 * sizeof(double));
    r->eigenvalues = malloc(3 * sizeof(double));
    r->loadings = malloc(9 * sizeof(double));
    r->share = malloc(3 * sizeof(double));
    r->cumulative = malloc(3 * sizeof(double));
    double l[3] = {1, 4, 2}, a[9]; /* PC1 = (2, -3, 6)/7, PC2 = (3, 6, 2)/7 */
    from_spectrum(l, a);
    pca_eigen(a, 3, r->eigenvalues, r->loadings);
    r->total = pca_shares(r->eigenvalues, 3, r->share, r->cumulative);
    r->kaiser_k = pca_kaiser_k(r->eigenvalues, 3);
    r->broken_stick_k = pca_broken_stick_k(r->share, 3);
    const double mean[3] = {10, -2, 0.5}, sd[3] = {2, 4, 0.25};
    for (int j = 0; j < 3; j++) { r->center[j] = mean[j]; r->factor[j] = 1 / sd[j]; }
    return r;
}

Test(pca_choose, explicit_k_share_and_kaiser_default)
{
    pca_result *r = hand_result(); /* eigenvalues 4, 2, 1: shares 4/7, 2/7, 1/7; mean 7/3 */
    cr_assert_eq(r->kaiser_k, 1);
    cr_assert_eq(pca_choose_k(r, 0, 0), 1);
    cr_assert_eq(pca_choose_k(r, 2, 0), 2);
    cr_assert_eq(pca_choose_k(r, 9, 0), 3);   /* capped at p */
    cr_assert_eq(pca_choose_k(r, 0, 0.8), 2); /* 6/7 */
    cr_assert_eq(pca_choose_k(r, 0, 0.9), 3);
    r->kaiser_k = 0;
    cr_assert_eq(pca_choose_k(r, 0, 0), 1);   /* at least one */
    pca_result_free(r);
}

Test(pca_leading, largest_magnitudes_first_with_signs_kept)
{
    pca_result *r = hand_result(); /* PC1 = (2, -3, 6)/7 */
    size_t idx[3];
    cr_assert_eq(pca_leading(r, 0, 2, idx), 2);
    cr_assert_eq(idx[0], 2);
    cr_assert_eq(idx[1], 1);
    cr_assert_eq(pca_leading(r, 0, 10, idx), 3);
    cr_assert_eq(idx[2], 0);
    cr_assert_eq(pca_leading(r, 0, 0, idx), 0);
    pca_result_free(r);
}

Test(pca_project, standardises_imputes_means_and_multiplies)
{
    pca_result *r = hand_result();
    double x[6] = {12, -2, 1.0, /* z = (1, 0, 2) */
                   NAN, 6, 0.25}; /* z = (0, 2, -1) */
    double sc[4];
    pca_project(r, 2, x, 2, sc);
    /* PC1 = (2, -3, 6)/7, PC2 = (3, 6, 2)/7 */
    cr_assert_float_eq(sc[0], (2 * 1 + 6 * 2) / 7.0, 1e-14);
    cr_assert_float_eq(sc[1], (3 * 1 + 2 * 2) / 7.0, 1e-14);
    cr_assert_float_eq(sc[2], (-3 * 2 - 6 * 1) / 7.0, 1e-14);
    cr_assert_float_eq(sc[3], (6 * 2 - 2 * 1) / 7.0, 1e-14);
    cr_assert_eq(x[3], 0.0); /* the missing cell became the mean */
    pca_result_free(r);
}

/* ---- column choice over a scanned summary ------------------------------- */

/* Writes text to a temporary file and scans it (target name or NULL). */
static summary *scan_text(const char *text, const char *target)
{
    char path[] = "/tmp/sheaf-test-pca-XXXXXX";
    int fd = mkstemp(path);
    cr_assert_geq(fd, 0);
    cr_assert_eq(write(fd, text, strlen(text)), (ssize_t)strlen(text));
    close(fd);
    scan_options o;
    scan_options_defaults(&o);
    if (target) o.opt.target = strdup(target);
    summary *s = NULL;
    char err[256];
    const char *paths[] = {path};
    cr_assert_eq(scan_files(&o, paths, 1, &s, err, sizeof err), SCAN_OK, "%s", err);
    summary_options_free(&o.opt);
    unlink(path);
    return s;
}

/* id: unique integers (ID-like); flat: constant; kind: text; a, b, c
 * numeric (b integer-valued with repeats: 6 distinct of 8, not ID-like); y:
 * the target. */
static const char *TABLE =
    "id,flat,kind,a,b,c,y\n"
    "101,5,red,1.5,2,7.25,0.3\n"
    "102,5,blue,2.5,1,6.5,0.1\n"
    "103,5,red,2.0,4,8.0,0.9\n"
    "104,5,green,4.5,2,5.5,0.4\n"
    "105,5,blue,3.0,6,9.25,0.8\n"
    "106,5,red,5.5,5,6.0,0.2\n"
    "107,5,red,4.0,8,7.75,0.7\n"
    "108,5,blue,6.5,6,8.5,0.6\n";

static const char *name_of(const summary *s, const pca_result *r, size_t j)
{
    return s->cols[r->cols[j]].name;
}

Test(pca_fit, automatic_choice_leaves_out_id_constant_categorical_and_target)
{
    summary *s = scan_text(TABLE, "y");
    pca_options o;
    pca_options_defaults(&o);
    pca_result *r;
    char err[256];
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    cr_assert_eq(r->p, 3);
    cr_assert_str_eq(name_of(s, r, 0), "a");
    cr_assert_str_eq(name_of(s, r, 1), "b");
    cr_assert_str_eq(name_of(s, r, 2), "c");
    cr_assert_eq(r->nleft, 4);
    const pca_reason want[4] = {PCA_LEFT_ID_LIKE, PCA_LEFT_CONSTANT, PCA_LEFT_CATEGORICAL,
                                PCA_LEFT_TARGET};
    for (int i = 0; i < 4; i++) {
        cr_assert_eq(r->left[i].column, (size_t)(i < 3 ? i : 6));
        cr_assert_eq(r->left[i].reason, want[i], "left %d: %s", i,
                     pca_reason_name(r->left[i].reason));
    }
    /* A correlation basis: the eigenvalues sum to p, shares to 1, and the
     * loadings are orthonormal. */
    cr_assert_float_eq(r->total, 3.0, 1e-13);
    cr_assert_float_eq(r->cumulative[2], 1.0, 1e-14);
    for (size_t k = 0; k < 3; k++)
        for (size_t l = 0; l < 3; l++) {
            double d = 0;
            for (size_t j = 0; j < 3; j++) d += r->loadings[k * 3 + j] * r->loadings[l * 3 + j];
            cr_assert_float_eq(d, k == l ? 1.0 : 0.0, 1e-14);
        }
    cr_assert_eq(r->clamped_negative, 0);
    cr_assert_float_eq(r->center[0], 3.6875, 1e-14); /* mean of a */
    pca_result_free(r);
    o.with_target = 1;
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    cr_assert_eq(r->p, 4);
    cr_assert_str_eq(name_of(s, r, 3), "y");
    pca_result_free(r);
    summary_free(s);
}

Test(pca_fit, exclude_and_explicit_lists)
{
    summary *s = scan_text(TABLE, NULL);
    pca_options o;
    pca_options_defaults(&o);
    pca_result *r;
    char err[256];
    o.exclude = "b";
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    cr_assert_eq(r->p, 3); /* a, c, y (no target declared) */
    cr_assert_str_eq(name_of(s, r, 1), "c");
    int seen = 0;
    for (size_t i = 0; i < r->nleft; i++)
        seen |= r->left[i].column == 4 && r->left[i].reason == PCA_LEFT_EXCLUDED;
    cr_assert(seen);
    pca_result_free(r);

    /* An explicit list keeps summary order and may hold an ID-like column. */
    pca_options_defaults(&o);
    o.columns = "c,id";
    o.keep_list = "# from a screen\r\na\r\n\n";
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    cr_assert_eq(r->p, 3);
    cr_assert_str_eq(name_of(s, r, 0), "id");
    cr_assert_str_eq(name_of(s, r, 1), "a");
    cr_assert_str_eq(name_of(s, r, 2), "c");
    pca_result_free(r);

    o.keep_list = NULL;
    o.columns = "a,nosuch";
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_ERR_USAGE);
    cr_assert(strstr(err, "nosuch"), "%s", err);
    o.columns = "a,kind";
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_ERR_USAGE);
    cr_assert(strstr(err, "kind") && strstr(err, "not numeric"), "%s", err);
    o.columns = "a,flat";
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_ERR_USAGE);
    cr_assert(strstr(err, "constant"), "%s", err);
    /* A covariance basis can hold a named constant column (a zero row). */
    o.basis = PCA_BASIS_COVARIANCE;
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    cr_assert_float_eq(r->eigenvalues[1], 0.0, 1e-15);
    pca_result_free(r);
    summary_free(s);
}

Test(pca, a_variance_past_the_double_range_is_out_of_range_not_constant)
{
    /* x: 0..49 and one 1e300 (variance about 2e598, inf in a double, as
     * pandas' Series.var() gives it); a and b ordinary.  Left out as
     * out_of_range, and an error when named, in either basis. */
    char text[4096];
    size_t used = (size_t)snprintf(text, sizeof text, "a,b,x\n");
    for (int i = 0; i < 51; i++) {
        char x[16];
        snprintf(x, sizeof x, "%d", i);
        used += (size_t)snprintf(text + used, sizeof text - used, "%d,%d,%s\n", i % 9,
                                 (i * 7) % 11, i == 50 ? "1e300" : x);
    }
    summary *s = scan_text(text, NULL);
    pca_options o;
    pca_options_defaults(&o);
    pca_result *r;
    char err[256];
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    cr_assert_eq(r->p, 2);
    cr_assert_eq(r->nleft, 1);
    cr_assert_eq(r->left[0].reason, PCA_LEFT_OUT_OF_RANGE, "%s",
                 pca_reason_name(r->left[0].reason));
    cr_assert_str_eq(pca_reason_name(r->left[0].reason), "out_of_range");
    pca_result_free(r);
    o.columns = "a,x";
    for (int basis = 0; basis < 2; basis++) {
        o.basis = basis ? PCA_BASIS_COVARIANCE : PCA_BASIS_CORRELATION;
        cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_ERR_USAGE);
        cr_assert(strstr(err, "beyond the range") && !strstr(err, "constant"), "%s", err);
    }
    summary_free(s);
}

Test(pca_fit, covariance_basis_trace_is_the_sum_of_variances)
{
    summary *s = scan_text(TABLE, "y");
    pca_options o;
    pca_options_defaults(&o);
    o.basis = PCA_BASIS_COVARIANCE;
    pca_result *r;
    char err[256];
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    double want = 0;
    for (size_t j = 0; j < r->p; j++) {
        want += moments_variance(&s->cols[r->cols[j]].mom);
        cr_assert_eq(r->factor[j], 1.0);
    }
    cr_assert_float_eq(r->total, want, 1e-13 * want);
    pca_result_free(r);
    summary_free(s);
}

Test(pca_fit, pairwise_missing_cells_can_make_the_matrix_indefinite)
{
    /* Three columns observed in disjoint pairs of rows: on rows 1-4 a = b,
     * on rows 5-8 b = c, on rows 9-12 c = -a/2.  Pairwise r: r(a,b) = 1,
     * r(b,c) = 1, r(a,c) = -1, which no set of vectors has: the matrix
     * [[1,1,-1],[1,1,1],[-1,1,1]] has eigenvalues 2, 2 and -1 (its
     * characteristic polynomial is -(l - 2)^2 (l + 1), by hand). */
    summary *s = scan_text("a,b,c\n"
                           "1,1,\n2,2,\n3,3,\n5,5,\n"
                           ",1.5,1.5\n,2.5,2.5\n,4.5,4.5\n,7.5,7.5\n"
                           "1,,-0.5\n2,,-1\n4,,-2\n8,,-4\n",
                           NULL);
    pca_options o;
    pca_options_defaults(&o);
    pca_result *r;
    char err[256];
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    cr_assert_eq(r->clamped_negative, 1);
    cr_assert_float_eq(r->most_negative, -1.0, 1e-12);
    cr_assert_float_eq(r->eigenvalues[0], 2.0, 1e-12);
    cr_assert_float_eq(r->eigenvalues[1], 2.0, 1e-12);
    cr_assert_eq(r->eigenvalues[2], 0.0);
    cr_assert_float_eq(r->share[0], 0.5, 1e-12);
    pca_result_free(r);
    summary_free(s);
}

Test(pca_fit, pairs_never_seen_together_count_as_undefined)
{
    summary *s = scan_text("a,b\n1.5,\n2.5,\n3.5,\n,4.5\n,5\n,7.5\n", NULL);
    pca_options o;
    pca_options_defaults(&o);
    pca_result *r;
    char err[256];
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_OK, "%s", err);
    cr_assert_eq(r->undefined_pairs, 1);
    cr_assert_float_eq(r->eigenvalues[0], 1.0, 1e-14);
    cr_assert_float_eq(r->eigenvalues[1], 1.0, 1e-14);
    pca_result_free(r);
    summary_free(s);
}

Test(pca_fit, nothing_left_is_an_error)
{
    summary *s = scan_text("id,kind\n1,x\n2,y\n3,z\n", NULL);
    pca_options o;
    pca_options_defaults(&o);
    pca_result *r = (pca_result *)1;
    char err[256];
    cr_assert_eq(pca_fit(s, &o, &r, err, sizeof err), PCA_ERR_USAGE);
    cr_assert_null(r);
    cr_assert(strstr(err, "no column"), "%s", err);
    summary_free(s);
}
