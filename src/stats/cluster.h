/* cluster: agglomerative clustering with average linkage, its flat cuts, and
 * the leaf order that puts similar items side by side.
 *
 * Average linkage (UPGMA; Sokal & Michener 1958): start with every item a
 * cluster of its own and repeatedly merge the two clusters at the least
 * distance, the distance between two clusters being the mean of the
 * distances of their members (updated by the Lance-Williams rule
 * d(i+j, k) = (|i| d(i, k) + |j| d(j, k)) / (|i| + |j|)).  The generic
 * O(n^3) loop is enough for the hundred columns of a report; average linkage
 * is monotone, so the merges come out in increasing height.  Merges are
 * numbered as scipy.cluster.hierarchy.linkage numbers them: the items are
 * 0..n-1, the cluster made by merge i is n + i, and each merge names the
 * smaller number first.  On a tie the pair found first in row order merges.
 *
 * Leaf order (Bar-Joseph, Gifford & Jaakkola 2001, "Fast optimal leaf
 * ordering for hierarchical clustering", Bioinformatics 17 suppl. 1): of the
 * 2^(n-1) orders a tree allows by swapping the children of its nodes, the
 * one with the least sum of distances between neighbouring leaves, by
 * dynamic programming over the tree: M(v, i, j), the least cost of v's
 * leaves in an order from leaf i to leaf j, from the children's values,
 * taking the inner minimum once per i (O(n^3) time, O(n^2) memory).
 *
 * Pure functions on arrays: no summary, no I/O, no state.
 */
#ifndef SHEAF_CLUSTER_H
#define SHEAF_CLUSTER_H

#include <stddef.h>

typedef struct {
    size_t a, b;       /* the merged clusters, a < b (items 0..n-1, merge i made n + i) */
    double height;     /* their average distance */
    size_t size;       /* items in the new cluster */
} cluster_merge;

/* Average linkage of n >= 1 items with distances dist[i * n + j] (symmetric,
 * finite, the diagonal ignored) into merges[0..n-2].  Returns 0, or -1 when
 * out of memory. */
int cluster_average(const double *dist, size_t n, cluster_merge *merges);

/* The leaf order of the tree of merges[0..n-2] (any tree in the numbering
 * above, not only cluster_average's) with the least sum of neighbouring
 * distances, into order[0..n-1].  Returns 0, or -1 when out of memory. */
int cluster_leaf_order(const double *dist, size_t n, const cluster_merge *merges, size_t *order);

/* Flat clusters of the tree cut at height t: items joined by merges of
 * height <= t share a label (scipy's fcluster with criterion 'distance').
 * Labels run 1..count, numbered in the order their first item appears.
 * Returns the count, or 0 when out of memory. */
size_t cluster_cut(const cluster_merge *merges, size_t n, double t, size_t *labels);

/* The sum of dist between neighbours of order[0..n-1]. */
double cluster_order_cost(const double *dist, size_t n, const size_t *order);

#endif
