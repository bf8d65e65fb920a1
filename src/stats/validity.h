/* validity: when a screening test or figure can be trusted, and when a column
 * is not a feature at all.
 *
 * Chance-corrected mutual information.  Under the hypergeometric model of
 * randomness (the rows of one side permuted, both margins fixed), the cell
 * count n_ij of a table with row sums a_i, column sums b_j and total N
 * follows the hypergeometric distribution, and the expected plug-in mutual
 * information is
 *     E[I] = sum_ij sum_n P(n; a_i, b_j, N) (n / N) log(N n / (a_i b_j))
 * (Vinh, Epps & Bailey 2010, "Information Theoretic Measures for Clusterings
 * Comparison: Variants, Properties, Normalization and Correction for
 * Chance", JMLR 11, 2837-2854).  The adjusted mutual information
 * is their AMI_max:
 *     AMI = (I - E[I]) / (max(H(X), H(Y)) - E[I]),
 * 0 when I is what chance gives for these margins, 1 when the two sides are
 * the same partition.  The max form is the one that does not reward a
 * feature for refining the target: a column with a level per row determines
 * any target (I = H(Y)), which the min form and I / H(Y) score 1 and AMI_max
 * scores near 0.
 *
 * How E[I] is summed.  The usual algorithm takes every n of every cell from
 * max(1, a + b - N) to min(a, b) with log-gamma terms, O(sum of min(a_i, b_j))
 * work.  Here each cell starts at the mode of its hypergeometric,
 * floor((a + 1)(b + 1) / (N + 2)), with weight 1 and walks both ways with the
 * ratio of successive probabilities,
 *     P(n + 1) / P(n) = (a - n)(b - n) / ((n + 1)(N - a - b + n + 1)),
 * until a weight falls below 1e-19 of the mode's; the weights are then
 * normalised by their sum.  No log-gamma difference of large numbers enters
 * (those lose digits at large N), and the work is about 19 standard
 * deviations of each cell.  The summand is
 *     g(n) = n log(n / mu) - (n - mu),  mu = a b / N,
 * whose expectation equals that of n log(n / mu) (E[n] = mu) and which is
 * never negative, so the sum has no cancellation.
 *
 * Huge tables.  The walk of a table is bounded (VALIDITY_EXPECTED_TERMS, or
 * 16 per cell when more).  When the estimated walk is longer, the widest
 * cells (largest standard deviation, so largest mu >= sd^2) are replaced by
 * the second-order expansion of g about mu, E[g] ~ Var(n) / (2 mu): the
 * cell's share of E[I] is then (N - a)(N - b) / (2 N^2 (N - 1)) (summed over
 * a whole table this is the familiar (r - 1)(c - 1) / (2 (N - 1))), with a
 * relative error of about 1 / (6 mu) for that cell.  The count of such cells
 * is reported.
 *
 * Cochran's rule.  Cochran, W. G. (1954), "Some methods for strengthening
 * the common chi-squared tests", Biometrics 10, 417-451: the chi-squared
 * approximation to the test of a table is not to be trusted when more than
 * 20% of the expected counts are below 5 or any expected count is below 1.
 * Expected counts are row sum x column sum / N over the non-empty rows and
 * columns (those the test uses).
 *
 * Level sizes.  The ANOVA F of a numeric target across the levels of a text
 * column rests on the level means being near normal.  With most rows in
 * levels of one to four rows it rests on the normality of the target alone,
 * and a column with a level per row fits its own noise.  A rule of sheaf's
 * own, modelled on Cochran's: the test is not trusted when more than 20% of
 * the rows lie in levels of fewer than 5 rows.
 *
 * Columns that mirror the target (possible leaks of the outcome): the
 * numeric column's class ranges do not overlap at all (every class lies
 * apart from every other, each with at least VALIDITY_SEPARATED_MIN_ROWS
 * rows), or |r| >= VALIDITY_MIRROR_R, or AMI >= VALIDITY_MIRROR_AMI.  One
 * class lying apart (setosa in the iris data) is not enough: the column must
 * tell every row's class by itself.
 *
 * ID-like columns: one rule for screen and pca (validity_id_like).
 *
 * Pure functions over tables, or read-only over a summary; no state.
 */
#ifndef SHEAF_VALIDITY_H
#define SHEAF_VALIDITY_H

#include <stddef.h>
#include <stdint.h>

#include "acc/buckets.h"
#include "summary/summary.h"

#define VALIDITY_EXPECTED_TERMS (1u << 16) /* walk steps of one table before approximating */
#define VALIDITY_SMALL_COUNT 5.0           /* Cochran: an expected count below this is small */
#define VALIDITY_SMALL_SHARE 0.2           /* ... and more than this share of them fails */
#define VALIDITY_TINY_COUNT 1.0            /* ... as does any expected count below this */
#define VALIDITY_THIN_LEVEL_ROWS 5         /* a level of fewer rows is thin */
#define VALIDITY_MIRROR_R 0.99             /* |r| at which a column mirrors the target */
#define VALIDITY_MIRROR_AMI 0.95           /* AMI at which a column mirrors the target */
#define VALIDITY_SEPARATED_MIN_ROWS 10     /* rows every class needs to judge separation */
#define VALIDITY_ID_MIN_PRESENT 20         /* present cells from which the share rule alone decides */

/* The expected mutual information of a table under the hypergeometric model. */
typedef struct {
    double nats;               /* E[I] in nats; NaN when the table is empty */
    size_t approximated_cells; /* cells summed by the second-order expansion */
    size_t cells;              /* non-empty-margin cells of the table */
} validity_expected;

/* E[I] of a rows x cols table of counts (row-major, counts are whole
 * numbers).  Returns 0, -1 when the table is empty (out->nats NaN), -2 when
 * memory runs out. */
int validity_expected_mi(const double *table, size_t rows, size_t cols, validity_expected *out);

/* AMI_max from the plug-in I, its expectation and the two entropies (nats):
 * (I - E) / (max(hx, hy) - E); NaN when any input is NaN or the denominator
 * is not positive (a side with one value). */
double validity_adjusted_mi(double nats, double expected, double hx, double hy);

/* The rule applied to a test and what it found. */
typedef enum {
    VALIDITY_NONE = 0,        /* no rule applies to this test */
    VALIDITY_COCHRAN = 1,     /* Cochran (1954) on the expected counts */
    VALIDITY_LEVEL_SIZES = 2  /* sheaf's level-size rule for the ANOVA across levels */
} validity_rule;

typedef struct {
    validity_rule rule;  /* which rule was applied */
    int holds;           /* 1: the test's p-value may decide */
    size_t units;        /* Cochran: expected counts judged; level sizes: levels */
    size_t small;        /* of them, below 5 (expected count, or rows of a level) */
    double small_share;  /* Cochran: small / units; level sizes: share of rows in small levels */
    double smallest;     /* the smallest expected count, or the smallest level's rows */
} validity_check;

/* Cochran's rule on a table (as validity_expected_mi).  out->rule is
 * VALIDITY_NONE when fewer than two rows or columns are non-empty.  Returns
 * 0, or -2 when memory runs out. */
int validity_cochran(const double *table, size_t rows, size_t cols, validity_check *out);

/* The level-size rule on the row counts of k levels (empty levels are
 * skipped). */
void validity_level_sizes(const double *rows, size_t k, validity_check *out);

/* 1 when the class ranges of a numeric column do not overlap: every class
 * (cells 1..classes of the store; cell 0, a missing target, is ignored) that
 * has rows in the column has at least VALIDITY_SEPARATED_MIN_ROWS, at least
 * two classes have rows, and sorted by their lowest bucket each class's
 * highest bucket lies below the next class's lowest.  Buckets are disjoint
 * intervals ordered by key (acc/buckets.h), so a 1 is never wrong; values of
 * two classes that share a bucket count as overlapping. */
int validity_classes_separated(const buckets *b, uint32_t classes);

/* Why a column mirrors the target, or 0.  r: Pearson r with a numeric target
 * (NaN when none); ami: adjusted mutual information (NaN when none);
 * separated: validity_classes_separated.  Writes the reason ("every class
 * apart ...", "|r| = 0.995", "adjusted MI = 0.97") into why. */
int validity_mirrors_target(double r, double ami, int separated, char *why, size_t len);

/* The one ID-like rule of screen and pca.  A column is ID-like when it is
 * text or integer-valued numeric, its distinct values are at least id_share
 * of its present cells, and either it has at least VALIDITY_ID_MIN_PRESENT
 * present cells or (a smaller table) its values are a run of consecutive
 * integers, max - min + 1 = distinct (a row counter).  Below 20 cells the
 * share rule alone would call every column of distinct integers an
 * identifier; a consecutive run is one at any size.  kind is the column's
 * kind under the caller's numeric share. */
int validity_id_like(const summary *s, size_t col, column_kind kind, double id_share);

/* 0 when the target's task fits its kind; -1 with a one-line message when
 * the task is regression (declared) and the target is text under
 * numeric_share. */
int validity_task_fits(const summary *s, double numeric_share, char *err, size_t errlen);

#endif
