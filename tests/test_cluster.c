/* cluster: average linkage, flat cuts and the optimal leaf order.
 *
 * References: scipy.cluster.hierarchy (Debian python3-scipy) on the rows of
 * the four open datasets (tests/cluster_reference.h, written by
 * tests/cluster_reference.py): linkage(method='average') heights,
 * fcluster(criterion='distance') at six cuts, and the cost of
 * optimal_leaf_ordering on scipy's own tree, which ours must not exceed:
 * scipy's routine (1.10, Debian 12) computes the optimal cost but does not
 * always return the order that has it (scipy issue #11227, open; on iris it
 * returns 68.51 where 62.91 is allowed).  The optimum itself is checked
 * against every order a tree allows, enumerated, on small random trees.
 * The small cases are worked by hand below. */
#include <criterion/criterion.h>
#include <math.h>
#include <stdint.h>
#include <stdlib.h>

#include "stats/cluster.h"
#include "cluster_reference.h"

/* Euclidean distances of the rows, summed in column order as pdist does. */
static double *row_distances(const cluster_ref *c)
{
    size_t n = c->n, p = c->p;
    double *d = malloc(n * n * sizeof *d);
    cr_assert(d);
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++) {
            double s = 0;
            for (size_t k = 0; k < p; k++) {
                double x = c->rows[i * p + k] - c->rows[j * p + k];
                s += x * x;
            }
            d[i * n + j] = sqrt(s);
        }
    return d;
}

/* 1 when labels a and b (n each) make the same partition. */
static int same_partition(const size_t *a, const int *b, size_t n)
{
    for (size_t i = 0; i < n; i++)
        for (size_t j = i + 1; j < n; j++)
            if ((a[i] == a[j]) != (b[i] == b[j])) return 0;
    return 1;
}

Test(cluster, average_linkage_heights_equal_scipy_on_open_datasets)
{
    for (size_t c = 0; c < sizeof cluster_refs / sizeof *cluster_refs; c++) {
        const cluster_ref *r = &cluster_refs[c];
        double *d = row_distances(r);
        cluster_merge *m = malloc((r->n - 1) * sizeof *m);
        cr_assert_eq(cluster_average(d, r->n, m), 0);
        for (size_t i = 0; i + 1 < r->n; i++) {
            double want = r->merges[i][2];
            cr_assert(fabs(m[i].height - want) <= 1e-12 * (1 + want), "%s merge %zu: %.17g, scipy %.17g",
                      r->name, i, m[i].height, want);
            cr_assert(i == 0 || m[i].height >= m[i - 1].height, "%s: heights decrease", r->name);
        }
        free(m);
        free(d);
    }
}

Test(cluster, flat_clusters_equal_scipy_fcluster_at_six_cuts)
{
    for (size_t c = 0; c < sizeof cluster_refs / sizeof *cluster_refs; c++) {
        const cluster_ref *r = &cluster_refs[c];
        double *d = row_distances(r);
        cluster_merge *m = malloc((r->n - 1) * sizeof *m);
        size_t *lab = malloc(r->n * sizeof *lab);
        cr_assert_eq(cluster_average(d, r->n, m), 0);
        for (size_t k = 0; k < CLUSTER_REF_CUTS; k++) {
            size_t count = cluster_cut(m, r->n, r->cuts[k], lab);
            cr_assert_eq(count, (size_t)cluster_ref_cut_clusters[k], "%s cut %zu: %zu clusters",
                         r->name, k, count);
            cr_assert(same_partition(lab, r->labels + k * r->n, r->n), "%s: the %d clusters differ",
                      r->name, cluster_ref_cut_clusters[k]);
        }
        free(lab);
        free(m);
        free(d);
    }
}

Test(cluster, leaf_order_cost_at_most_scipy_optimal_leaf_ordering)
{
    for (size_t c = 0; c < sizeof cluster_refs / sizeof *cluster_refs; c++) {
        const cluster_ref *r = &cluster_refs[c];
        double *d = row_distances(r);
        cluster_merge *m = malloc((r->n - 1) * sizeof *m);
        size_t *order = malloc(r->n * sizeof *order);
        unsigned char *seen = calloc(r->n, 1);
        for (size_t i = 0; i + 1 < r->n; i++) { /* scipy's own tree */
            m[i].a = (size_t)r->merges[i][0];
            m[i].b = (size_t)r->merges[i][1];
            m[i].height = r->merges[i][2];
            m[i].size = (size_t)r->merges[i][3];
        }
        cr_assert_eq(cluster_leaf_order(d, r->n, m, order), 0);
        for (size_t i = 0; i < r->n; i++) {
            cr_assert(order[i] < r->n && !seen[order[i]], "%s: not a permutation", r->name);
            seen[order[i]] = 1;
        }
        double cost = cluster_order_cost(d, r->n, order);
        cr_assert(cost <= r->leaf_order_cost * (1 + 1e-12), "%s: cost %.17g, scipy %.17g", r->name,
                  cost, r->leaf_order_cost);
        free(seen);
        free(order);
        free(m);
        free(d);
    }
}

/* Every order a tree
 * allows (bit i of flips swaps the children of merge i), by enumeration. */
typedef struct {
    const double *d;
    size_t n;
    const cluster_merge *m;
    size_t *order;
    double best;
} enumeration;

static size_t place(enumeration *e, size_t x, size_t at, size_t flips)
{
    if (x < e->n) { e->order[at] = x; return at + 1; }
    const cluster_merge *m = &e->m[x - e->n];
    int swap = (int)((flips >> (x - e->n)) & 1);
    at = place(e, swap ? m->b : m->a, at, flips);
    return place(e, swap ? m->a : m->b, at, flips);
}

Test(cluster, leaf_order_is_the_least_of_every_order_the_tree_allows)
{
    uint64_t seed = 12345;
    for (int trial = 0; trial < 40; trial++) {
        size_t n = 3 + (size_t)trial % 8; /* 3 .. 10 items: at most 2^9 orders */
        double x[10][2], d[100];
        for (size_t i = 0; i < n; i++)
            for (int k = 0; k < 2; k++) {
                seed = seed * 6364136223846793005ULL + 1442695040888963407ULL;
                x[i][k] = (double)(seed >> 11) / 9007199254740992.0;
            }
        for (size_t i = 0; i < n; i++)
            for (size_t j = 0; j < n; j++)
                d[i * n + j] = hypot(x[i][0] - x[j][0], x[i][1] - x[j][1]);
        cluster_merge m[9];
        size_t order[10], tried[10];
        cr_assert_eq(cluster_average(d, n, m), 0);
        cr_assert_eq(cluster_leaf_order(d, n, m, order), 0);
        enumeration e = {d, n, m, tried, INFINITY};
        for (size_t flips = 0; flips < (size_t)1 << (n - 1); flips++) {
            place(&e, 2 * n - 2, 0, flips);
            double c = cluster_order_cost(d, n, tried);
            if (c < e.best) e.best = c;
        }
        double got = cluster_order_cost(d, n, order);
        cr_assert(fabs(got - e.best) <= 1e-12 * e.best, "trial %d (n %zu): %.17g, least %.17g", trial,
                  n, got, e.best);
    }
}

/* Two tight pairs far apart, {0, 2} and {1, 3}, by hand: the pairs merge at
 * their own distances, then at the mean of the four cross distances. */
Test(cluster, two_pairs_by_hand)
{
    const double d[16] = {0, 9, 1, 10, /**/ 9, 0, 8, 2, /**/ 1, 8, 0, 9, /**/ 10, 2, 9, 0};
    cluster_merge m[3];
    cr_assert_eq(cluster_average(d, 4, m), 0);
    cr_assert(m[0].a == 0 && m[0].b == 2 && m[0].height == 1 && m[0].size == 2);
    cr_assert(m[1].a == 1 && m[1].b == 3 && m[1].height == 2 && m[1].size == 2);
    cr_assert(m[2].a == 4 && m[2].b == 5 && m[2].height == (9 + 10 + 8 + 9) / 4.0 && m[2].size == 4);
    size_t lab[4];
    cr_assert_eq(cluster_cut(m, 4, 1.5, lab), 3);
    cr_assert(lab[0] == lab[2] && lab[1] != lab[3]);
    cr_assert_eq(cluster_cut(m, 4, 2, lab), 2);   /* a merge at exactly t joins */
    cr_assert_eq(cluster_cut(m, 4, 100, lab), 1);
    size_t order[4];
    cr_assert_eq(cluster_leaf_order(d, 4, m, order), 0);
    /* The best of the 4 orders the tree allows: 0 2 1 3 or its reverse,
     * cost 1 + 8 + 2 = 11 (0 2 3 1: 1 + 9 + 2 = 12, 2 0 1 3: 1 + 9 + 2, 2 0 3 1: 1 + 10 + 2). */
    cr_assert_eq(cluster_order_cost(d, 4, order), 11);
}

Test(cluster, one_and_two_items)
{
    const double d1[1] = {0}, d2[4] = {0, 3, 3, 0};
    cluster_merge m[1];
    size_t order[2], lab[2];
    cr_assert_eq(cluster_average(d1, 1, m), 0);
    cr_assert_eq(cluster_leaf_order(d1, 1, m, order), 0);
    cr_assert_eq(order[0], 0);
    cr_assert_eq(cluster_cut(m, 1, 0, lab), 1);
    cr_assert_eq(cluster_average(d2, 2, m), 0);
    cr_assert(m[0].a == 0 && m[0].b == 1 && m[0].height == 3 && m[0].size == 2);
    cr_assert_eq(cluster_leaf_order(d2, 2, m, order), 0);
    cr_assert(order[0] != order[1]);
}
