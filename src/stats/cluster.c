/* cluster: average linkage, flat cuts and the optimal leaf order (see
 * cluster.h for the methods and their sources). */
#include "stats/cluster.h"

#include <stdlib.h>

int cluster_average(const double *dist, size_t n, cluster_merge *merges)
{
    if (n < 2) return 0;
    double *d = malloc(n * n * sizeof *d);
    size_t *id = malloc(n * sizeof *id), *size = malloc(n * sizeof *size);
    unsigned char *alive = malloc(n);
    if (!d || !id || !size || !alive) {
        free(d); free(id); free(size); free(alive);
        return -1;
    }
    for (size_t i = 0; i < n * n; i++) d[i] = dist[i];
    for (size_t i = 0; i < n; i++) { id[i] = i; size[i] = 1; alive[i] = 1; }
    for (size_t step = 0; step + 1 < n; step++) {
        size_t bi = 0, bj = 0;
        double best = 0;
        int found = 0;
        for (size_t i = 0; i < n; i++) {
            if (!alive[i]) continue;
            for (size_t j = i + 1; j < n; j++)
                if (alive[j] && (!found || d[i * n + j] < best)) {
                    best = d[i * n + j];
                    bi = i; bj = j;
                    found = 1;
                }
        }
        cluster_merge *m = &merges[step];
        m->a = id[bi] < id[bj] ? id[bi] : id[bj];
        m->b = id[bi] < id[bj] ? id[bj] : id[bi];
        m->height = best;
        m->size = size[bi] + size[bj];
        double wi = (double)size[bi], wj = (double)size[bj];
        for (size_t k = 0; k < n; k++) {
            if (!alive[k] || k == bi || k == bj) continue;
            double v = (wi * d[bi * n + k] + wj * d[bj * n + k]) / (wi + wj);
            d[bi * n + k] = d[k * n + bi] = v;
        }
        alive[bj] = 0;
        size[bi] += size[bj];
        id[bi] = n + step;
    }
    free(d); free(id); free(size); free(alive);
    return 0;
}

size_t cluster_cut(const cluster_merge *merges, size_t n, double t, size_t *labels)
{
    if (n == 0) return 0;
    size_t *parent = malloc(n * sizeof *parent);
    size_t *leader = malloc((n > 1 ? n - 1 : 1) * sizeof *leader); /* an item of merge i */
    size_t *name = malloc(n * sizeof *name);
    if (!parent || !leader || !name) {
        free(parent); free(leader); free(name);
        return 0;
    }
    for (size_t i = 0; i < n; i++) { parent[i] = i; name[i] = 0; }
    for (size_t i = 0; i + 1 < n; i++) {
        size_t a = merges[i].a < n ? merges[i].a : leader[merges[i].a - n];
        size_t b = merges[i].b < n ? merges[i].b : leader[merges[i].b - n];
        leader[i] = a;
        if (!(merges[i].height <= t)) continue;
        while (parent[a] != a) a = parent[a];
        while (parent[b] != b) b = parent[b];
        if (a != b) parent[b] = a;
    }
    size_t count = 0;
    for (size_t i = 0; i < n; i++) {
        size_t r = i;
        while (parent[r] != r) r = parent[r];
        if (!name[r]) name[r] = ++count;
        labels[i] = name[r];
    }
    free(parent); free(leader); free(name);
    return count;
}

double cluster_order_cost(const double *dist, size_t n, const size_t *order)
{
    double c = 0;
    for (size_t i = 0; i + 1 < n; i++) c += dist[order[i] * n + order[i + 1]];
    return c;
}

/* The tree laid out for the leaf order: node x (an item x < n, or merge
 * x - n) covers leaves[lo[x] .. hi[x]) of one fixed order of the tree. */
typedef struct {
    size_t n;
    const cluster_merge *merges;
    const double *dist;
    size_t *leaves, *lo, *hi, *pos;
    double *cost;     /* n x n: M(lca(i, j), i, j) */
    size_t *near;     /* n x n: the leaf beside the boundary on i's side */
    size_t *far;      /* n x n: the leaf beside the boundary on j's side */
} leaf_tree;

static size_t lay_out(leaf_tree *t, size_t x, size_t at)
{
    t->lo[x] = at;
    if (x < t->n) {
        t->leaves[at] = x;
        t->pos[x] = at;
        t->hi[x] = at + 1;
        return at + 1;
    }
    const cluster_merge *m = &t->merges[x - t->n];
    at = lay_out(t, m->a, at);
    at = lay_out(t, m->b, at);
    t->hi[x] = at;
    return at;
}

/* The leaves of node x on the other side from leaf i (i is a leaf of x):
 * x itself when it is a leaf, else the child of x without i. */
static void other_side(const leaf_tree *t, size_t x, size_t i, size_t *lo, size_t *hi)
{
    if (x < t->n) { *lo = t->lo[x]; *hi = t->hi[x]; return; }
    const cluster_merge *m = &t->merges[x - t->n];
    size_t c = t->pos[i] >= t->lo[m->a] && t->pos[i] < t->hi[m->a] ? m->b : m->a;
    *lo = t->lo[c];
    *hi = t->hi[c];
}

static void join(leaf_tree *t, size_t l, size_t r, double *best_in, size_t *arg_in)
{
    size_t n = t->n;
    for (size_t pi = t->lo[l]; pi < t->hi[l]; pi++) {
        size_t i = t->leaves[pi];
        size_t klo, khi;
        other_side(t, l, i, &klo, &khi);
        /* best_in[m]: the least cost of l's leaves from i to some k, plus the step k -> m. */
        for (size_t pm = t->lo[r]; pm < t->hi[r]; pm++) {
            size_t m = t->leaves[pm];
            double b = 0;
            size_t arg = n;
            for (size_t pk = klo; pk < khi; pk++) {
                size_t k = t->leaves[pk];
                double v = t->cost[i * n + k] + t->dist[k * n + m];
                if (arg == n || v < b) { b = v; arg = k; }
            }
            best_in[pm] = b;
            arg_in[pm] = arg;
        }
        for (size_t pj = t->lo[r]; pj < t->hi[r]; pj++) {
            size_t j = t->leaves[pj];
            size_t mlo, mhi;
            other_side(t, r, j, &mlo, &mhi);
            double b = 0;
            size_t arg = n;
            for (size_t pm = mlo; pm < mhi; pm++) {
                size_t m = t->leaves[pm];
                double v = best_in[pm] + t->cost[m * n + j];
                if (arg == n || v < b) { b = v; arg = pm; }
            }
            size_t k = arg_in[arg], m = t->leaves[arg];
            t->cost[i * n + j] = t->cost[j * n + i] = b;
            t->near[i * n + j] = k;
            t->far[i * n + j] = m;
            t->near[j * n + i] = m;
            t->far[j * n + i] = k;
        }
    }
}

/* Writes the leaves of node x from leaf a to leaf b, returning the next slot. */
static size_t emit(const leaf_tree *t, size_t x, size_t a, size_t b, size_t *order, size_t at)
{
    if (x < t->n) {
        order[at] = x;
        return at + 1;
    }
    const cluster_merge *m = &t->merges[x - t->n];
    int a_left = t->pos[a] >= t->lo[m->a] && t->pos[a] < t->hi[m->a];
    size_t first = a_left ? m->a : m->b, second = a_left ? m->b : m->a;
    size_t n = t->n;
    at = emit(t, first, a, t->near[a * n + b], order, at);
    return emit(t, second, t->far[a * n + b], b, order, at);
}

int cluster_leaf_order(const double *dist, size_t n, const cluster_merge *merges, size_t *order)
{
    if (n == 0) return 0;
    if (n == 1) { order[0] = 0; return 0; }
    leaf_tree t = {n, merges, dist, NULL, NULL, NULL, NULL, NULL, NULL, NULL};
    size_t nodes = 2 * n - 1;
    t.leaves = malloc(n * sizeof *t.leaves);
    t.pos = malloc(n * sizeof *t.pos);
    t.lo = malloc(nodes * sizeof *t.lo);
    t.hi = malloc(nodes * sizeof *t.hi);
    t.cost = malloc(n * n * sizeof *t.cost);
    t.near = malloc(n * n * sizeof *t.near);
    t.far = malloc(n * n * sizeof *t.far);
    double *best_in = malloc(n * sizeof *best_in);
    size_t *arg_in = malloc(n * sizeof *arg_in);
    int rc = -1;
    if (!t.leaves || !t.pos || !t.lo || !t.hi || !t.cost || !t.near || !t.far || !best_in || !arg_in)
        goto done;
    size_t root = nodes - 1;
    lay_out(&t, root, 0);
    for (size_t i = 0; i < n; i++) t.cost[i * n + i] = 0;
    for (size_t v = 0; v + 1 < n; v++) join(&t, merges[v].a, merges[v].b, best_in, arg_in);
    const cluster_merge *top = &merges[n - 2];
    size_t bi = n, bj = n;
    for (size_t pi = t.lo[top->a]; pi < t.hi[top->a]; pi++)
        for (size_t pj = t.lo[top->b]; pj < t.hi[top->b]; pj++) {
            size_t i = t.leaves[pi], j = t.leaves[pj];
            if (bi == n || t.cost[i * n + j] < t.cost[bi * n + bj]) { bi = i; bj = j; }
        }
    emit(&t, root, bi, bj, order, 0);
    rc = 0;
done:
    free(t.leaves); free(t.pos); free(t.lo); free(t.hi);
    free(t.cost); free(t.near); free(t.far);
    free(best_in); free(arg_in);
    return rc;
}
