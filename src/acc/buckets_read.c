/* buckets, reads: quantiles and the file form of a store (see buckets.h;
 * the tables are in buckets_store.h). */
#include "acc/buckets.h"

#include <math.h>
#include <stdlib.h>

#include "acc/buckets_key.h"
#include "acc/buckets_store.h"

/* A store with counts in its window is read through a settled copy
 * (buckets_readable). */
static double quantile(const buckets *b, double p, double *rel_err);
static double quantile_linear(const buckets *b, double p, double *rel_err);
static void write_settled(const buckets *b, wire_writer *w);

/* A quantile read through buckets_readable: NaN when its copy cannot be made. */
static double settled_quantile(const buckets *b, double p, double *rel_err,
                               double (*read)(const buckets *, double, double *))
{
    buckets *tmp;
    const buckets *r = buckets_readable(b, &tmp);
    double q = r ? read(r, p, rel_err) : NAN;
    buckets_free(tmp);
    return q;
}

double buckets_quantile(const buckets *b, double p, double *rel_err)
{
    return settled_quantile(b, p, rel_err, quantile);
}

double buckets_quantile_linear(const buckets *b, double p, double *rel_err)
{
    return settled_quantile(b, p, rel_err, quantile_linear);
}

uint64_t buckets_zeros(const buckets *b, uint32_t cell)
{
    buckets *tmp;
    const buckets *r = buckets_readable(b, &tmp);
    uint64_t n = UINT64_MAX;
    if (r && !r->cap) n = 0;
    else if (r) {
        const slot *s = &r->slots[slot_find(r->slots, r->cap, r->shift, (uint64_t)cell << 32)];
        n = s->count;
    }
    buckets_free(tmp);
    return n;
}

void buckets_write(const buckets *b, wire_writer *w)
{
    buckets *tmp;
    const buckets *r = buckets_readable(b, &tmp);
    if (r) write_settled(r, w);
    else w->failed = 1;
    buckets_free(tmp);
}

static double quantile(const buckets *b, double p, double *rel_err)
{
    if (rel_err) *rel_err = buckets_relative_error(b->level);
    if (b->total == 0 || !(p >= 0.0 && p <= 1.0)) return NAN;
    /* same double product as numpy's n * quantiles */
    double rd = ceil(p * (double)b->total);
    uint64_t rank = rd < 1.0 ? 1 : rd >= (double)b->total ? b->total : (uint64_t)rd;
    const order_item *order;
    order_item *tmp;
    if (buckets_read_order(b, &order, &tmp)) return NAN;
    size_t i = 0; /* the first key whose cumulative count reaches rank; else the last */
    for (uint64_t cum = 0; i + 1 < b->n; i++)
        if ((cum += b->slots[order[i].pos].count) >= rank) break;
    double q = buckets_point(order[i].key, b->level);
    free(tmp);
    return q;
}

/* The key of the value of 0-based rank r (r < total) in key order. */
static int64_t rank_key(const buckets *b, const order_item *order, uint64_t r)
{
    size_t i = 0;
    for (uint64_t cum = 0; i + 1 < b->n; i++)
        if ((cum += b->slots[order[i].pos].count) > r) break;
    return order[i].key;
}

static double quantile_linear(const buckets *b, double p, double *rel_err)
{
    if (rel_err) *rel_err = buckets_relative_error(b->level);
    if (b->total == 0 || !(p >= 0.0 && p <= 1.0)) return NAN;
    /* numpy's virtual index (n - 1) p, the same double operation */
    double n = (double)b->total, h = (n - 1.0) * p, lo = floor(h);
    if (lo < 0) lo = 0;
    if (lo > n - 1) lo = n - 1;
    uint64_t j = (uint64_t)lo;
    uint64_t k = j + 1 < b->total ? j + 1 : j;
    double g = h - lo;
    const order_item *order;
    order_item *tmp;
    if (buckets_read_order(b, &order, &tmp)) return NAN;
    double a = buckets_point(rank_key(b, order, j), b->level);
    double c = k == j ? a : buckets_point(rank_key(b, order, k), b->level);
    free(tmp);
    double diff = c - a; /* numpy's _lerp */
    return g >= 0.5 ? c - diff * (1.0 - g) : a + diff * g;
}

/* ---- serialization ------------------------------------------------------ */

static void write_settled(const buckets *b, wire_writer *w)
{
    const order_item *order;
    order_item *tmp;
    if (buckets_read_order(b, &order, &tmp)) { w->failed = 1; return; }
    wire_put_u32(w, b->budget);
    wire_put_u8(w, (uint8_t)b->level);
    wire_put_u64(w, (uint64_t)b->n);
    for (size_t i = 0; i < b->n; i++) {
        wire_put_i64(w, order[i].key);
        wire_put_u32(w, order[i].cell);
        wire_put_u64(w, b->slots[order[i].pos].count);
    }
    free(tmp);
}

buckets *buckets_read(wire_reader *r)
{
    uint32_t budget = wire_get_u32(r);
    int level = wire_get_u8(r);
    uint64_t n = wire_get_u64(r);
    if (r->failed) return NULL;
    if (budget < BUCKETS_MIN_BUDGET || level > BUCKETS_MAX_LEVEL || n > UINT32_MAX / 4
        || n > SIZE_MAX / ENTRY_WIRE_BYTES || !wire_need(r, (size_t)n * ENTRY_WIRE_BYTES)) {
        r->failed = 1;
        return NULL;
    }
    buckets_entry *e = malloc((n ? (size_t)n : 1) * sizeof *e);
    if (!e) return NULL;
    int64_t top = max_magnitude(level);
    size_t nkeys = 0;
    uint64_t total = 0;
    for (size_t i = 0; i < n; i++) {
        e[i].key = wire_get_i64(r);
        e[i].cell = wire_get_u32(r);
        e[i].count = wire_get_u64(r);
        int bad = e[i].key > top || e[i].key < -top || e[i].count == 0
                  || total + e[i].count < total;
        if (i > 0 && buckets_entry_cmp(&e[i - 1], &e[i]) >= 0) bad = 1;
        if (bad) { r->failed = 1; free(e); return NULL; }
        total += e[i].count;
        if (i == 0 || e[i].key != e[i - 1].key) nkeys++;
    }
    if (r->failed || nkeys > budget) { r->failed = 1; free(e); return NULL; }
    buckets *b = buckets_create(budget);
    if (!b || buckets_rebuild(b, e, (size_t)n, level)) { buckets_free(b); free(e); return NULL; }
    free(e);
    return b;
}
