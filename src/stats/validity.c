/* validity: see validity.h for the methods and their sources. */
#include "stats/validity.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "summary/access.h"

/* ---- expected mutual information ------------------------------------------ */

/* g(n) = n log(n / mu) - (n - mu) >= 0, with the series
 * mu sum_k>=2 (-1)^k t^k / (k (k - 1)), t = (n - mu) / mu, near mu where the
 * closed form would subtract nearly equal numbers (14 terms: the next one is
 * below 3e-17 of the first for |t| < 1/16).  Double precision is enough:
 * every term is positive, so nothing cancels in the sum over n. */
static double excess(double n, double mu)
{
    if (n == 0) return mu;
    double t = (n - mu) / mu;
    if (fabs(t) >= 0.0625) return mu * ((1 + t) * log1p(t) - t);
    double sum = 0;
    for (int k = 15; k >= 2; k--) sum = (k % 2 ? -1.0 : 1.0) / ((double)k * (k - 1)) + t * sum;
    return mu * t * t * sum;
}

/* E[g(n)] for a hypergeometric cell (row sum a, column sum b, total N), by
 * the walk from the mode described in validity.h.  The weights are products
 * of ratios in double precision (a relative error of about 1e-16 per step,
 * which the normalisation by their sum does not undo but which stays near
 * 1e-14 over the walks the budget allows); the sums are long double. */
static long double cell_expected_excess(double a, double b, double N)
{
    double lo = a + b - N > 0 ? a + b - N : 0, hi = a < b ? a : b;
    double mu = (double)((long double)a * b / N);
    double mode = floor(((double)a + 1) * ((double)b + 1) / (N + 2));
    if (mode < lo) mode = lo;
    if (mode > hi) mode = hi;
    long double weights = 1, sum = excess(mode, mu);
    double w = 1, rest = N - a - b;
    for (double n = mode; n < hi; n++) {
        w *= (a - n) * (b - n) / ((n + 1) * (rest + n + 1));
        if (w < 1e-19) break;
        weights += w;
        sum += w * excess(n + 1, mu);
    }
    w = 1;
    for (double n = mode; n > lo; n--) {
        w *= n * (rest + n) / ((a - n + 1) * (b - n + 1));
        if (w < 1e-19) break;
        weights += w;
        sum += w * excess(n - 1, mu);
    }
    return sum / weights;
}

/* Steps the walk of a cell takes, about: 9.5 standard deviations each way
 * (a weight of 1e-19 of the mode's), at most the support. */
static double cell_steps(long double a, long double b, long double N)
{
    long double lo = a + b - N > 0 ? a + b - N : 0, hi = a < b ? a : b;
    long double var = N > 1 ? a * b * (N - a) * (N - b) / (N * N * (N - 1)) : 0;
    long double steps = 2 * ceill(9.5L * sqrtl(var)) + 3;
    return (double)(steps < hi - lo + 1 ? steps : hi - lo + 1);
}

/* ---- margins of a table ---------------------------------------------------- */

/* The row sums, then the column sums, of a rows x cols table in one block the
 * caller frees; *total the grand total. NULL when out of memory. */
static long double *table_margins(const double *table, size_t rows, size_t cols, long double *total)
{
    long double *rs = calloc(rows + cols + 1, sizeof *rs);
    if (!rs) return NULL;
    long double *cs = rs + rows, N = 0;
    for (size_t i = 0; i < rows; i++)
        for (size_t j = 0; j < cols; j++) {
            rs[i] += table[i * cols + j];
            cs[j] += table[i * cols + j];
            N += table[i * cols + j];
        }
    *total = N;
    return rs;
}

static size_t nonzero(const long double *margin, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++) k += margin[i] > 0;
    return k;
}

/* A cell's walk length, its margins and its position in the table's order
 * of cells. */
typedef struct {
    double steps;
    double a, b; /* its row and column totals */
    size_t cell;
} cell_cost;

/* Widest first; ties by the margins (a cell's term, exact or approximated,
 * is a function of its margins and N alone), then by position.  So the
 * value does not depend on the order of the rows and columns, which is the
 * order their values were first seen in: a merge in another order, or the
 * same rows in another order, gives the same number.  (Ties by position
 * alone moved the adjusted MI of a merge by up to 3e-6 relative.) */
static int cost_descending(const void *x, const void *y)
{
    const cell_cost *p = x, *q = y;
    if (p->steps != q->steps) return (p->steps < q->steps) - (p->steps > q->steps);
    double pa = fmax(p->a, p->b), qa = fmax(q->a, q->b);
    if (pa != qa) return (pa < qa) - (pa > qa);
    double pb = fmin(p->a, p->b), qb = fmin(q->a, q->b);
    if (pb != qb) return (pb < qb) - (pb > qb);
    return (p->cell > q->cell) - (p->cell < q->cell);
}

int validity_expected_mi(const double *table, size_t rows, size_t cols, validity_expected *out)
{
    out->nats = NAN;
    out->approximated_cells = out->cells = 0;
    long double N, *rs = table_margins(table, rows, cols, &N);
    if (!rs) return -2;
    long double *cs = rs + rows;
    if (!(N > 0)) { free(rs); return -1; }
    size_t rn = nonzero(rs, rows), cn = nonzero(cs, cols);
    size_t cells = rn * cn;
    cell_cost *cost = malloc((cells ? cells : 1) * sizeof *cost);
    unsigned char *approximate = calloc(cells ? cells : 1, 1);
    if (!cost || !approximate) { free(cost); free(approximate); free(rs); return -2; }
    /* The budget goes to the narrowest walks; the widest cells (largest mu)
     * take the second-order expansion. */
    double total = 0, limit = VALIDITY_EXPECTED_TERMS;
    if (16.0 * (double)cells > limit) limit = 16.0 * (double)cells;
    size_t k = 0;
    for (size_t i = 0; i < rows; i++)
        for (size_t j = 0; j < cols && rs[i] > 0; j++)
            if (cs[j] > 0) {
                cost[k] = (cell_cost){cell_steps(rs[i], cs[j], N), (double)rs[i], (double)cs[j], k};
                total += cost[k++].steps;
            }
    if (total > limit) {
        qsort(cost, cells, sizeof *cost, cost_descending);
        for (size_t c = 0; c < cells && total > limit; c++) {
            total -= cost[c].steps;
            approximate[cost[c].cell] = 1;
            out->approximated_cells++;
        }
    }
    long double sum = 0;
    k = 0;
    for (size_t i = 0; i < rows; i++) {
        if (!(rs[i] > 0)) continue;
        for (size_t j = 0; j < cols; j++) {
            if (!(cs[j] > 0)) continue;
            long double a = rs[i], b = cs[j];
            if (approximate[k++]) sum += N > 1 ? (N - a) * (N - b) / (2 * N * (N - 1)) : 0;
            else sum += cell_expected_excess((double)a, (double)b, (double)N);
        }
    }
    out->nats = (double)(sum / N);
    out->cells = cells;
    free(cost);
    free(approximate);
    free(rs);
    return 0;
}

double validity_adjusted_mi(double nats, double expected, double hx, double hy)
{
    double top = hx > hy ? hx : hy;
    if (isnan(nats) || isnan(expected) || isnan(hx) || isnan(hy)) return NAN;
    double room = top - expected;
    return room > 0 ? (nats - expected) / room : NAN;
}

/* ---- Cochran's rule and level sizes ------------------------------------------- */

int validity_cochran(const double *table, size_t rows, size_t cols, validity_check *out)
{
    memset(out, 0, sizeof *out);
    out->smallest = NAN;
    long double N, *rs = table_margins(table, rows, cols, &N);
    if (!rs) return -2;
    long double *cs = rs + rows;
    size_t rn = nonzero(rs, rows), cn = nonzero(cs, cols);
    if (rn >= 2 && cn >= 2) {
        out->rule = VALIDITY_COCHRAN;
        double smallest = INFINITY;
        for (size_t i = 0; i < rows; i++) {
            if (!(rs[i] > 0)) continue;
            for (size_t j = 0; j < cols; j++) {
                if (!(cs[j] > 0)) continue;
                double e = (double)(rs[i] * cs[j] / N);
                out->units++;
                out->small += e < VALIDITY_SMALL_COUNT;
                if (e < smallest) smallest = e;
            }
        }
        out->smallest = smallest;
        out->small_share = (double)out->small / (double)out->units;
        out->holds = !(out->small_share > VALIDITY_SMALL_SHARE) && smallest >= VALIDITY_TINY_COUNT;
    }
    free(rs);
    return 0;
}

void validity_level_sizes(const double *rows, size_t k, validity_check *out)
{
    memset(out, 0, sizeof *out);
    out->rule = VALIDITY_LEVEL_SIZES;
    double total = 0, thin = 0, smallest = INFINITY;
    for (size_t g = 0; g < k; g++) {
        if (!(rows[g] > 0)) continue;
        out->units++;
        total += rows[g];
        if (rows[g] < VALIDITY_THIN_LEVEL_ROWS) { out->small++; thin += rows[g]; }
        if (rows[g] < smallest) smallest = rows[g];
    }
    out->smallest = out->units ? smallest : NAN;
    out->small_share = total > 0 ? thin / total : 0;
    out->holds = !(out->small_share > VALIDITY_SMALL_SHARE);
}

/* ---- columns that mirror the target --------------------------------------------- */

int validity_classes_separated(const buckets *b, uint32_t classes)
{
    if (classes < 2) return 0;
    int64_t *lo = malloc(((size_t)classes + 1) * 2 * sizeof *lo);
    uint64_t *rows = calloc((size_t)classes + 1, sizeof *rows);
    uint32_t *order = malloc(((size_t)classes + 1) * sizeof *order);
    int separated = 0;
    if (!lo || !rows || !order) goto done;
    int64_t *hi = lo + classes + 1;
    size_t ne = buckets_entries(b);
    for (size_t i = 0; i < ne; i++) {
        buckets_entry e = buckets_entry_at(b, i);
        if (e.cell == 0 || e.cell > classes || e.count == 0) continue;
        if (!rows[e.cell]) lo[e.cell] = e.key; /* entries come in key order */
        hi[e.cell] = e.key;
        rows[e.cell] += e.count;
    }
    uint32_t present = 0;
    for (uint32_t c = 1; c <= classes; c++) {
        if (!rows[c]) continue;
        if (rows[c] < VALIDITY_SEPARATED_MIN_ROWS) goto done;
        /* insertion by lowest key: the class count is small */
        uint32_t j = present++;
        while (j > 0 && lo[order[j - 1]] > lo[c]) { order[j] = order[j - 1]; j--; }
        order[j] = c;
    }
    if (present < 2) goto done;
    separated = 1;
    for (uint32_t j = 1; j < present && separated; j++)
        separated = hi[order[j - 1]] < lo[order[j]];
done:
    free(lo);
    free(rows);
    free(order);
    return separated;
}

int validity_mirrors_target(double r, double ami, int separated, char *why, size_t len)
{
    if (separated)
        snprintf(why, len, "every class lies apart from the others in this column");
    else if (fabs(r) >= VALIDITY_MIRROR_R)
        snprintf(why, len, "|r| = %.4f with the target", fabs(r));
    else if (ami >= VALIDITY_MIRROR_AMI)
        snprintf(why, len, "adjusted MI = %.3f with the target", ami);
    else
        return 0;
    return 1;
}

/* ---- ID-like columns and the task ----------------------------------------------- */

int validity_id_like(const summary *s, size_t col, column_kind kind, double id_share)
{
    uint64_t present = summary_present(s, col), numbers = summary_numbers(s, col);
    int integers = kind == KIND_NUMERIC && numbers > 0 && summary_integers(s, col) == numbers;
    if (present == 0 || (kind != KIND_CATEGORICAL && !integers)) return 0;
    int exact;
    double distinct = summary_distinct(s, col, &exact);
    if (!(distinct >= id_share * (double)present)) return 0;
    if (present >= VALIDITY_ID_MIN_PRESENT) return 1;
    return integers && exact && summary_max(s, col) - summary_min(s, col) + 1 == distinct;
}

int validity_task_fits(const summary *s, double numeric_share, char *err, size_t errlen)
{
    int y = summary_target_column(s);
    if (y < 0 || summary_declared_task(s) != TASK_REGRESS) return 0;
    if (summary_kind(s, (size_t)y, numeric_share) != KIND_CATEGORICAL) return 0;
    snprintf(err, errlen,
             "{task=regress} needs a numeric target, and '%s' is text (%llu of %llu present "
             "cells are not numbers); leave {task} out or use {task=classify}",
             summary_target_name(s), (unsigned long long)summary_non_numeric(s, (size_t)y),
             (unsigned long long)summary_present(s, (size_t)y));
    return -1;
}
