/* column: see column.h. */
#include "summary/column.h"

#include <stdlib.h>
#include <string.h>

int column_alloc(summary_column *c, const summary_options *o, int with_classes)
{
    moments_init(&c->mom);
    c->vals = values_create(o->max_levels, o->label_bytes);
    c->distinct = malloc(sizeof *c->distinct);
    c->bins = buckets_create(o->bucket_budget);
    if (!c->vals || !c->distinct || !c->bins) return -1;
    hll_init(c->distinct);
    if (o->target) {
        c->cross = crosstab_create(o->max_levels);
        if (!c->cross) return -1;
    }
    if (with_classes) {
        c->cls = calloc(o->max_classes, sizeof *c->cls);
        if (!c->cls) return -1;
    }
    return 0;
}

int column_drop_classes(summary_column *c, const uint32_t *map, const double *y, uint32_t n,
                        uint32_t bucket_budget)
{
    buckets *nb = buckets_create(bucket_budget);
    if (!nb || buckets_merge(nb, c->bins, map, n) != 0) { buckets_free(nb); return -1; }
    buckets_free(c->bins);
    c->bins = nb;
    if (c->cross) {
        crosstab *nx = crosstab_counts_to_values(c->cross, y, map, n);
        if (!nx) return -1;
        crosstab_free(c->cross);
        c->cross = nx;
    }
    free(c->cls);
    c->cls = NULL;
    return 0;
}

void column_free(summary_column *c)
{
    free(c->name);
    values_free(c->vals);
    free(c->distinct);
    buckets_free(c->bins);
    crosstab_free(c->cross);
    free(c->cls);
}

void column_write(const summary_column *c, uint32_t nclasses, wire_writer *w)
{
    wire_put_u64(w, c->missing);
    wire_put_u64(w, c->non_numeric);
    wire_put_u64(w, c->non_finite);
    wire_put_u64(w, c->zeros);
    wire_put_u64(w, c->integers);
    moments_write(&c->mom, w);
    wire_put_u32(w, c->n_examples);
    for (uint32_t e = 0; e < c->n_examples; e++)
        wire_put_str(w, c->examples[e], strlen(c->examples[e]));
    values_write(c->vals, w);
    hll_write(c->distinct, w);
    buckets_write(c->bins, w);
    wire_put_u8(w, c->cross != NULL);
    if (c->cross) crosstab_write(c->cross, w);
    wire_put_u8(w, c->cls != NULL);
    if (c->cls)
        for (uint32_t k = 0; k < nclasses; k++) {
            wire_put_u64(w, c->cls[k].n);
            wire_put_f64(w, c->cls[k].mean);
            wire_put_f64(w, c->cls[k].m2);
        }
}

int column_read(summary_column *c, uint32_t nclasses, wire_reader *r)
{
    c->missing = wire_get_u64(r);
    c->non_numeric = wire_get_u64(r);
    c->non_finite = wire_get_u64(r);
    c->zeros = wire_get_u64(r);
    c->integers = wire_get_u64(r);
    moments_read(&c->mom, r);
    c->n_examples = wire_get_u32(r);
    if (c->n_examples > SUMMARY_EXAMPLES) { c->n_examples = 0; return -1; }
    for (uint32_t e = 0; e < c->n_examples; e++) {
        size_t n;
        const char *p = wire_get_str(r, &n, SUMMARY_EXAMPLE_BYTES);
        if (p) memcpy(c->examples[e], p, n);
        c->examples[e][n] = '\0';
    }
    values *v = values_read(r);
    if (!v) return -1;
    values_free(c->vals);
    c->vals = v;
    if (hll_read(c->distinct, r) != 0) return -1;
    buckets *b = buckets_read(r);
    if (!b) return -1;
    buckets_free(c->bins);
    c->bins = b;
    uint8_t has_cross = wire_get_u8(r);
    if (has_cross != (c->cross != NULL)) return -1;
    if (has_cross) {
        crosstab *x = crosstab_read(r);
        if (!x) return -1;
        crosstab_free(c->cross);
        c->cross = x;
    }
    uint8_t has_cls = wire_get_u8(r);
    if (has_cls != (c->cls != NULL)) return -1;
    for (uint32_t k = 0; has_cls && k < nclasses; k++) {
        c->cls[k].n = wire_get_u64(r);
        c->cls[k].mean = wire_get_f64(r);
        c->cls[k].m2 = wire_get_f64(r);
    }
    return r->failed ? -1 : 0;
}

/* Combines two class moments; shift = from's frame minus into's. */
static void class_merge(class_moments *a, const class_moments *b, double shift)
{
    if (b->n == 0) return;
    if (a->n == 0) { *a = *b; a->mean += shift; return; }
    moments_pair_merge((double)a->n, &a->mean, &a->m2, (double)b->n, b->mean + shift, b->m2);
    a->n += b->n;
}


int column_merge(summary_column *a, const summary_column *b, const column_merge_map *m)
{
    /* Column frame shift (before the moments merge sets a's reference). */
    double shift = a->mom.has_ref && b->mom.has_ref ? number_difference(&b->mom.ref, &a->mom.ref, NULL) : 0;
    if (a->cls && b->cls) {
        uint32_t k = m->same_classes ? m->max_classes : m->from_classes;
        for (uint32_t c = 0; c < k; c++)
            class_merge(&a->cls[m->same_classes ? c : m->map[c + 1] - 1], &b->cls[c], shift);
    }
    a->missing += b->missing;
    a->non_numeric += b->non_numeric;
    a->non_finite += b->non_finite;
    a->zeros += b->zeros;
    a->integers += b->integers;
    moments_merge(&a->mom, &b->mom);
    hll_merge(a->distinct, b->distinct);
    int was_overflowed = values_overflowed(a->vals);
    const uint32_t *map = m->same_classes ? NULL : m->map;
    if (values_merge(a->vals, b->vals) != 0 || buckets_merge(a->bins, b->bins, map, m->map_len) != 0 ||
        (a->cross && b->cross && crosstab_merge(a->cross, b->cross, map, m->map_len, m->yshift) != 0))
        return -1;
    /* Sketches hold only what arrived after their table overflowed. */
    if (values_overflowed(a->vals)) {
        if (!was_overflowed) summary_column_fold_keys(a->distinct, a->vals);
        summary_column_fold_keys(a->distinct, b->vals);
    }
    /* The per-value table is void once the value table overflowed. */
    if (a->cross && values_overflowed(a->vals) && crosstab_entries(a->cross))
        crosstab_reset(a->cross);
    for (uint32_t e = 0; e < b->n_examples && a->n_examples < SUMMARY_EXAMPLES; e++) {
        int dup = 0;
        for (uint32_t k = 0; k < a->n_examples; k++)
            dup |= strcmp(a->examples[k], b->examples[e]) == 0;
        if (!dup) memcpy(a->examples[a->n_examples++], b->examples[e], SUMMARY_EXAMPLE_BYTES + 1);
    }
    return 0;
}

int column_seal(summary_column *c)
{
    int rc = 0;
    buckets_seal(c->bins);
    if (values_seal(c->vals) != 0) rc = -1;
    if (c->cross && crosstab_seal(c->cross) != 0) rc = -1;
    return rc;
}

int column_sealed(const summary_column *c)
{
    return buckets_sealed(c->bins) && values_sealed(c->vals) &&
           (!c->cross || crosstab_sealed(c->cross));
}
