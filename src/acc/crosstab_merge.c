/* crosstab_merge: merging two per-value tables, and turning class counts
 * into target values (the method is in crosstab.c's opening comment and in
 * crosstab.h).
 */
#include "acc/crosstab.h"
#include "acc/crosstab_table.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ---- merge ---- */

/* Admission of from's keys into `into` during one merge. */
typedef struct {
    int limited;   /* not every new key fits */
    uint32_t room; /* keys into may still take */
    uint64_t last; /* when limited and room > 0: the largest admitted new key */
} admission;

/* The key under which from's record with key k lands; *insert is set when k
 * is a new key to add to into's key table. */
static uint64_t merge_key(const crosstab *into, const admission *a, uint64_t k, int *insert)
{
    *insert = 0;
    if (k == CROSSTAB_OVERFLOW_KEY || key_present(into, k)) return k;
    if (!a->limited || (a->room > 0 && k <= a->last)) { *insert = 1; return k; }
    return CROSSTAB_OVERFLOW_KEY;
}

/* Keys of from that into does not hold. */
static uint32_t count_new_keys(const crosstab *into, const crosstab *from)
{
    uint32_t fresh = 0, n = from->key_bits ? UINT32_C(1) << from->key_bits : 0;
    for (uint32_t i = 0; i < n; i++) {
        uint64_t k = from->key_slots[i];
        if (k != CROSSTAB_OVERFLOW_KEY && !key_present(into, k)) fresh++;
    }
    return fresh;
}

/* The k-th record of `from` to visit in a merge: canonical order, or slot
 * order through *cursor. */
static const record *merge_next(const crosstab *from, const order_ref *canonical, uint32_t k,
                                uint32_t *cursor)
{
    if (canonical) return slot_at(from, canonical[k].slot, from->stride);
    while (!slot_at(from, *cursor, from->stride)->n) (*cursor)++;
    return slot_at(from, (*cursor)++, from->stride);
}

#define CROSSTAB_NO_HIT UINT32_MAX

/* An upper bound on the records the merge will insert into `into`.  When
 * `hits` is given, hits[k] is set to the slot of the k-th visited record's
 * target (its own key or the overflow key) if into holds that record already
 * (else CROSSTAB_NO_HIT), so that pass 2 need not probe again while the table
 * does not grow. */
static uint64_t count_new_records(const crosstab *into, const crosstab *from,
                                  const uint32_t *cell_map, const admission *a,
                                  const order_ref *canonical, uint32_t *hits)
{
    uint64_t added = 0, to_overflow = 0;
    uint32_t cursor = 0;
    for (uint32_t k = 0; k < from->records; k++) {
        const record *fr = merge_next(from, canonical, k, &cursor);
        uint32_t cell = cell_map ? cell_map[fr->cell] : fr->cell;
        uint32_t i = find_index(into, fr->key, cell, into->stride);
        if (slot_at(into, i, into->stride)->n) {
            if (hits) hits[k] = i;
            continue;
        }
        if (hits) hits[k] = CROSSTAB_NO_HIT;
        int insert;
        if (merge_key(into, a, fr->key, &insert) != CROSSTAB_OVERFLOW_KEY) {
            added++;
            continue;
        }
        /* A key that stays out goes to the overflow key in pass 2 too. */
        i = find_index(into, CROSSTAB_OVERFLOW_KEY, cell, into->stride);
        if (slot_at(into, i, into->stride)->n) {
            if (hits) hits[k] = i;
        } else {
            to_overflow++;
        }
    }
    /* Overflow records are one per distinct target cell, at most from->cells. */
    return added + (to_overflow < from->cells ? to_overflow : from->cells);
}

static void combine(record *r, const record *fr, int values, double shift)
{
    uint64_t na = r->n, nb = fr->n, n = na + nb;
    if (values) {
        value_record *a = (value_record *)r;
        const value_record *b = (const value_record *)fr;
        double mean_b = b->mean + shift;
        if (na == 0) {
            a->mean = mean_b;
            a->m2 = b->m2;
        } else {
            /* moments_pair_merge's rule, with the weight nb / n rounded on
             * its own: files merged before the rule was shared keep their
             * bytes (the other order moves the last bit of some means). */
            double d = mean_b - a->mean;
            a->mean += d * ((double)nb / (double)n);
            a->m2 += b->m2 + d * d * ((double)na * (double)nb / (double)n);
        }
    }
    r->n = n;
}

static crosstab *clone(const crosstab *t)
{
    crosstab *c = crosstab_create(t->max_keys);
    if (!c) return NULL;
    *c = *t;
    c->slots = NULL;
    c->key_slots = NULL;
    c->order = NULL;
    c->order_cap = 0;
    c->hits = NULL;
    c->hits_cap = 0;
    c->order_valid = 0;
    if (t->bits) {
        size_t bytes = ((size_t)1 << t->bits) * t->stride;
        if (!(c->slots = malloc(bytes))) { crosstab_free(c); return NULL; }
        memcpy(c->slots, t->slots, bytes);
    }
    if (t->key_bits) {
        size_t bytes = ((size_t)1 << t->key_bits) * sizeof *t->key_slots;
        if (!(c->key_slots = malloc(bytes))) { crosstab_free(c); return NULL; }
        memcpy(c->key_slots, t->key_slots, bytes);
    }
    return c;
}

int crosstab_merge(crosstab *into, const crosstab *from, const uint32_t *cell_map,
                   uint32_t map_len, double shift)
{
    if (from->mode == CROSSTAB_EMPTY || from->records == 0) return 0;
    if (into->records && into->mode != from->mode) return -1;
    int values = from->mode == CROSSTAB_VALUES;
    if (values) {
        if (!isfinite(shift)) return -1;
    } else {
        shift = 0.0;
    }
    if (cell_map && from->cells > map_len) return -1;
    if (into == from) {
        /* New records (a cell map) would move the slots being visited. */
        crosstab *copy = clone(from);
        if (!copy) return -1;
        int rc = crosstab_merge(into, copy, cell_map, map_len, shift);
        crosstab_free(copy);
        return rc;
    }
    if (crosstab_begin_mode(into, from->mode)) return -1;

    /* Pass 1: which keys are admitted, and how much room that takes. */
    admission a = {0, into->max_keys > into->keys ? into->max_keys - into->keys : 0, 0};
    uint32_t new_keys = from->keys; /* an upper bound, <= room, unless counted */
    if (new_keys > a.room) {
        if (a.room == 0 && !values) {
            a.limited = 1; /* every new key overflows; which ones is irrelevant */
        } else {
            new_keys = count_new_keys(into, from);
            if (new_keys > a.room) a.limited = 1;
        }
    }
    /* from's canonical index: to find the admitted keys, and to visit from
     * in order when values merge into the overflow record. */
    order_ref *tmp = NULL;
    const order_ref *order = NULL;
    if (a.limited && (a.room > 0 || values)) {
        if (crosstab_read_order(from, &order, &tmp)) return -1;
    }
    const order_ref *canonical = a.limited && values ? order : NULL;
    if (a.limited && a.room > 0) {
        /* The room-th smallest new key of from. */
        uint32_t taken = 0;
        for (uint32_t k = 0; k < from->records && taken < a.room; k++) {
            uint64_t key = order[k].key;
            if (key == CROSSTAB_OVERFLOW_KEY || (k > 0 && key == order[k - 1].key)) continue;
            if (!key_present(into, key) && ++taken == a.room) a.last = key;
        }
    }
    uint64_t record_bound = (uint64_t)into->records + from->records;
    uint32_t *hits = NULL;
    if (!crosstab_records_fit(into, record_bound)) {
        /* Count exactly rather than grow for the bound: a chunk table mostly
         * repeats the running table's records.  The scratch for the hits is
         * optional (kept in into across merges). */
        if (into->hits_cap < from->records) {
            free(into->hits);
            into->hits = malloc((size_t)from->records * sizeof *into->hits);
            into->hits_cap = into->hits ? from->records : 0;
        }
        hits = into->hits;
        record_bound = into->records + count_new_records(into, from, cell_map, &a, canonical, hits);
    }
    uint32_t key_inserts = a.limited ? a.room : new_keys;
    uint32_t bits = into->bits;
    if (crosstab_reserve_records(into, record_bound) ||
        (key_inserts && crosstab_reserve_keys(into, (uint64_t)into->keys + key_inserts))) {
        free(tmp);
        return -1;
    }
    if (into->bits != bits) hits = NULL; /* records moved */

    /* Pass 2: cannot fail.  Records already held keep their slots when new
     * ones are inserted (nothing is ever deleted), so the hits stay valid. */
    uint32_t cursor = 0;
    for (uint32_t k = 0; k < from->records; k++) {
        const record *fr = merge_next(from, canonical, k, &cursor);
        record *r;
        if (hits && hits[k] != CROSSTAB_NO_HIT) {
            r = slot_at(into, hits[k], into->stride);
        } else {
            uint32_t cell = cell_map ? cell_map[fr->cell] : fr->cell;
            r = find_record(into, fr->key, cell, into->stride);
            if (!r->n) {
                int insert;
                uint64_t key = merge_key(into, &a, fr->key, &insert);
                if (insert) crosstab_insert_key(into, key);
                if (key == CROSSTAB_OVERFLOW_KEY) {
                    into->overflowed = 1;
                    if (fr->key != key) r = find_record(into, key, cell, into->stride);
                }
                if (!r->n) crosstab_init_record(into, r, key, cell);
            }
        }
        combine(r, fr, values, shift);
    }
    if (from->overflowed) into->overflowed = 1;
    free(tmp);
    return 0;
}

/* ---- counts to values ---- */

/* n rows of value y under the overflow key (conversion of an overflowed table). */
static int add_overflow_values(crosstab *t, uint32_t cell, double y, uint64_t n)
{
    if (crosstab_begin_mode(t, CROSSTAB_VALUES)) return -1;
    value_record *v = (value_record *)find_record(t, CROSSTAB_OVERFLOW_KEY, cell, t->stride);
    if (!v->r.n) {
        if (crosstab_reserve_records(t, (uint64_t)t->records + 1)) return -1;
        v = (value_record *)find_record(t, CROSSTAB_OVERFLOW_KEY, cell, t->stride);
        crosstab_init_record(t, &v->r, CROSSTAB_OVERFLOW_KEY, cell);
        v->r.n = 0;
        v->mean = 0;
        v->m2 = 0;
    }
    if (v->r.n == 0) { v->mean = y; v->r.n = n; }
    else add_equal(v, y, n);
    t->overflowed = 1;
    return 0;
}

crosstab *crosstab_counts_to_values(const crosstab *t, const double *y, const uint32_t *cells,
                                    uint32_t len)
{
    if (t->records && (t->mode != CROSSTAB_COUNTS || t->cells > len)) return NULL;
    for (uint32_t c = 0; c < t->cells; c++)
        if (!isfinite(y[c])) return NULL;
    crosstab *v = crosstab_create(t->max_keys);
    if (!v || !t->records) return v;
    const order_ref *order;
    order_ref *tmp;
    if (crosstab_read_order(t, &order, &tmp)) { crosstab_free(v); return NULL; }
    /* Canonical order, so the result does not depend on the table layout;
     * the overflow key keeps its place (new keys never need room here). */
    for (uint32_t j = 0; j < t->records; j++) {
        const record *r = slot_at(t, order[j].slot, t->stride);
        uint32_t cell = cells ? cells[r->cell] : 0;
        if (cells && r->cell && !cell) continue; /* a class with no target cell (not finite) */
        int rc = r->key == CROSSTAB_OVERFLOW_KEY ? add_overflow_values(v, cell, y[r->cell], r->n)
                                                : crosstab_add_values_in(v, r->key, cell, y[r->cell], r->n);
        if (rc != 0) { crosstab_free(v); free(tmp); return NULL; }
    }
    free(tmp);
    return v;
}
