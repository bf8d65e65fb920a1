/* buckets, sorting: the (key, cell) order of a store's entries (the sort
 * index of its ordered reads) and the entry arrays that collapse, merge and
 * read re-key, sort, combine and build a table from.  See buckets.h for the
 * interface and buckets.c for the method; the tables are in
 * buckets_store.h. */
#include "acc/buckets.h"

#include <stdlib.h>
#include <string.h>

#include "acc/buckets_key.h"
#include "acc/radix.h"

#include "acc/buckets_store.h"
#include "acc/zeroed.h"

static int order_cmp(const void *pa, const void *pb)
{
    const order_item *a = pa, *c = pb;
    if (a->key != c->key) return a->key < c->key ? -1 : 1;
    return (a->cell > c->cell) - (a->cell < c->cell);
}

/* ---- sorting by (key, cell) ---------------------------------------------- */

/* (key, cell) as one unsigned 64-bit number in the same order: the key's
 * sign bit flipped, above the cell. */
static inline uint64_t sort_key(int64_t key, uint32_t cell)
{
    return ((uint64_t)((uint32_t)(int32_t)key ^ 0x80000000u) << 32) | cell;
}

#define RADIX_MIN 256 /* below this many items qsort is as fast */

/* Writes the sort index of b's entries, in (key, cell) order, to out[0..n).
 * The radix sort's scratch is optional: without it qsort does the work, so
 * this never fails. */
void buckets_fill_order(const buckets *b, order_item *out)
{
    size_t k = 0;
    for (size_t i = 0; i < b->cap; i++) {
        if (!b->slots[i].count) continue;
        out[k].key = (int32_t)id_key(b->slots[i].id);
        out[k].cell = id_cell(b->slots[i].id);
        out[k].pos = (uint32_t)i;
        k++;
    }
    radix_pair *pairs = k >= RADIX_MIN ? malloc(2 * k * sizeof *pairs) : NULL;
    if (pairs) {
        for (size_t i = 0; i < k; i++) {
            pairs[i].k = sort_key(out[i].key, out[i].cell);
            pairs[i].i = out[i].pos;
        }
        radix_pair *sorted = radix_sort_pairs(pairs, pairs + k, k);
        for (size_t i = 0; i < k; i++) {
            uint64_t id = b->slots[sorted[i].i].id;
            out[i].key = (int32_t)id_key(id);
            out[i].cell = id_cell(id);
            out[i].pos = sorted[i].i;
        }
        free(pairs);
    } else {
        qsort(out, k, sizeof *out, order_cmp);
    }
}

/* See buckets_store.h. */
int buckets_read_order(const buckets *b, const order_item **order, order_item **tmp)
{
    *tmp = NULL;
    *order = b->order;
    if (b->order_valid) return 0;
    *order = *tmp = malloc((b->n ? b->n : 1) * sizeof **tmp);
    if (!*tmp) return -1;
    buckets_fill_order(b, *tmp);
    return 0;
}

/* ---- entry arrays: re-key, sort, combine -------------------------------- */

int buckets_entry_cmp(const void *pa, const void *pb)
{
    const buckets_entry *a = pa, *c = pb;
    if (a->key != c->key) return a->key < c->key ? -1 : 1;
    return (a->cell > c->cell) - (a->cell < c->cell);
}

/* Sorts e[0..n) by (key, cell): radix when scratch can be had, else qsort. */
static void sort_entries(buckets_entry *e, size_t n)
{
    radix_pair *pairs = n >= RADIX_MIN ? malloc(2 * n * sizeof *pairs) : NULL;
    buckets_entry *copy = pairs ? malloc(n * sizeof *copy) : NULL;
    if (!copy) {
        free(pairs);
        qsort(e, n, sizeof *e, buckets_entry_cmp);
        return;
    }
    for (size_t i = 0; i < n; i++) {
        pairs[i].k = sort_key(e[i].key, e[i].cell);
        pairs[i].i = (uint32_t)i;
    }
    radix_pair *sorted = radix_sort_pairs(pairs, pairs + n, n);
    memcpy(copy, e, n * sizeof *e);
    for (size_t i = 0; i < n; i++) e[i] = copy[sorted[i].i];
    free(pairs);
    free(copy);
}

/* Sorts and sums equal (key, cell) neighbours; returns the new length. */
size_t buckets_sort_combine(buckets_entry *e, size_t n)
{
    if (n == 0) return 0;
    sort_entries(e, n);
    size_t k = 0;
    for (size_t i = 1; i < n; i++) {
        if (e[i].key == e[k].key && e[i].cell == e[k].cell) e[k].count += e[i].count;
        else e[++k] = e[i];
    }
    return k + 1;
}

/* Distinct keys of a sorted array. */
static size_t distinct_keys(const buckets_entry *e, size_t n)
{
    size_t k = 0;
    for (size_t i = 0; i < n; i++)
        if (i == 0 || e[i].key != e[i - 1].key) k++;
    return k;
}

/* Raises *level one step at a time while the sorted array has more distinct
 * keys than the budget; returns the new length. */
size_t buckets_fit_budget(buckets_entry *e, size_t n, int *level, uint32_t budget)
{
    while (distinct_keys(e, n) > budget && *level < BUCKETS_MAX_LEVEL) {
        for (size_t i = 0; i < n; i++) e[i].key = rekey(e[i].key, 1);
        (*level)++;
        n = buckets_sort_combine(e, n);
    }
    return n;
}

/* See buckets_store.h. */
int buckets_rebuild(buckets *b, const buckets_entry *e, size_t n, int level)
{
    size_t nk = distinct_keys(e, n);
    size_t cap = cap_for(n), key_cap = cap_for(nk);
    slot *slots = zeroed(cap, sizeof *slots);
    key_slot *keys = zeroed(key_cap, sizeof *keys);
    order_item *order = malloc(ORDER_CAP(cap) * sizeof *order);
    if (!slots || !keys || !order) { free(slots); free(keys); free(order); return -1; }
    unsigned shift = 64 - log2_of(cap), key_shift = 64 - log2_of(key_cap);
    uint64_t total = 0;
    for (size_t i = 0; i < n; i++) {
        uint64_t id = make_id(e[i].key, e[i].cell);
        size_t pos = slot_find(slots, cap, shift, id);
        slots[pos].id = id;
        slots[pos].count = e[i].count;
        size_t kp = key_find(keys, key_cap, key_shift, e[i].key);
        keys[kp].key = (int32_t)e[i].key;
        keys[kp].entries++;
        order[i].key = (int32_t)e[i].key;
        order[i].cell = e[i].cell;
        order[i].pos = (uint32_t)pos;
        total += e[i].count;
    }
    free(b->slots);
    free(b->keys);
    free(b->order);
    b->slots = slots;
    b->cap = cap;
    b->shift = shift;
    b->n = n;
    b->keys = keys;
    b->key_cap = key_cap;
    b->key_shift = key_shift;
    b->nkeys = nk;
    b->order = order;
    b->order_valid = 1;
    b->total = total + b->pending; /* the window's counts are the store's too */
    b->level = level;
    b->last_id = NO_ID;
    return 0;
}

/* Appends b's entries re-keyed to `level` (>= b's level), cells mapped, in
 * slot order: every caller sorts them next. */
size_t buckets_gather(const buckets *b, int level, const uint32_t *cell_map, buckets_entry *out)
{
    int steps = level - b->level;
    size_t k = 0;
    for (size_t i = 0; i < b->cap; i++) {
        const slot *s = &b->slots[i];
        if (!s->count) continue;
        out[k].key = rekey(id_key(s->id), steps);
        out[k].cell = cell_map ? cell_map[id_cell(s->id)] : id_cell(s->id);
        out[k].count = s->count;
        k++;
    }
    return k;
}
