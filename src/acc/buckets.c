/* buckets: log-linear binning from the bits of a double, counted per
 * (bucket, cell) in a budgeted sparse store.  Interface and guarantees: see
 * buckets.h.
 *
 * Method.
 *  - Key.  For an IEEE 754 binary64 x with magnitude bits u = |x| (sign
 *    cleared), u >> 45 is (biased exponent << 7) | top 7 mantissa bits, an
 *    18-bit index that is monotone in |x| and log-linear: 128 equal slices per
 *    octave.  Level L drops L more low bits: key = (u >> (45 + L)) + 1, the
 *    sign mirrored, 0 for x = 0.  Dropping one bit of (i - 1) is exactly the
 *    pairwise collapse of UDDSketch, so collapsing level by level equals
 *    keying the original value at the final level.
 *  - Bounds.  A key's values are the doubles whose top bits equal the key's
 *    bit pattern: lowest = pattern << 45 (the smallest subnormal for pattern
 *    0), highest = ((pattern + 2^L) << 45) - 1, capped at DBL_MAX.
 *  - Point and error.  The harmonic midpoint m = 2 lo hi / (lo + hi) equalises
 *    the relative error at both ends, (m - lo) / lo = (hi - m) / hi =
 *    (hi - lo) / (hi + lo).  Within the normal range the worst bucket of a
 *    level is the first slice of an octave: sup / lo = 1 + 2^(L-7) for L <= 7
 *    and 2^(2^(L-7)) for L > 7 (using the half-open sup bounds the closed hi).
 *  - Store.  Open addressing with linear probing on the packed id
 *    (cell << 32 | 32-bit key), load at most 1/2, Fibonacci hashing; count 0
 *    marks an empty slot (entries never have count 0).  A second small table
 *    counts entries per key, touched only when an entry is created, so the
 *    budget of distinct keys is checked without a scan.  The last (key, cell)
 *    and its slot are cached for runs of equal buckets.  A sort index (key,
 *    cell, slot) serves ordered reads.  An insert invalidates it and
 *    buckets_seal rebuilds it (collapse, merge and read leave it built); a
 *    read of an unsealed store sorts into a temporary index of its own and
 *    never writes to the store.
 *  - Collapse and merge.  Both gather the entries, re-key them to the target
 *    level (monotone, so sorting then summing neighbours combines them), raise
 *    the level one step while the distinct keys exceed the budget, and build a
 *    fresh table that replaces the old one only on success, so a failed
 *    allocation leaves the store unchanged.  Counts are only ever summed,
 *    hence totals per cell are preserved exactly.
 *  - Quantile.  Inverted empirical CDF (Hyndman & Fan definition 1, numpy
 *    method='inverted_cdf'): rank r = max(1, ceil(p n)), the first key whose
 *    cumulative count reaches r.  Since keys are monotone, the exact r-th
 *    smallest value lies in that key, so the point is within the level's
 *    relative error of it.
 *
 * References (cited from memory):
 *  [1] C. Masson, J. E. Rim, H. K. Lee (2019), "DDSketch: a fast and
 *      fully-mergeable quantile sketch with relative-error guarantees",
 *      PVLDB 12(12).
 *  [2] I. Epicoco, C. Melle, M. Cafaro, M. Pulimeno, G. Morleo (2020),
 *      "UDDSketch: accurate tracking of quantiles in data streams",
 *      IEEE Access 8.
 *  [3] R. J. Hyndman, Y. Fan (1996), "Sample quantiles in statistical
 *      packages", The American Statistician 50(4).
 *  [4] IEEE 754-2008, binary64 interchange format.
 */
#include "io/clones.h"
#include "acc/buckets.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "acc/buckets_key.h"
#include "acc/radix.h"

#include "acc/buckets_store.h"

/* ---- tables ------------------------------------------------------------- */


static unsigned log2_of(size_t pow2)
{
    unsigned k = 0;
    while (((size_t)1 << k) < pow2) k++;
    return k;
}

/* Smallest power of two >= MIN_CAP that keeps load <= 3/4 for n items. */
/* Tables are kept at most 3/4 full (memory matters: one store per column,
 * thousands of columns). */
#define OVER_LOAD(n, cap) (4 * (n) > 3 * (cap))
#define ORDER_CAP(cap) ((cap) / 4 * 3 + 1)

static size_t cap_for(size_t n)
{
    size_t cap = MIN_CAP;
    while (OVER_LOAD(n, cap)) cap *= 2;
    return cap;
}

static inline size_t slot_find(const slot *slots, size_t cap, unsigned shift, uint64_t id)
{
    size_t mask = cap - 1;
    size_t pos = (size_t)((id * FIB_MULT) >> shift);
    for (;;) {
        const slot *s = &slots[pos];
        if (s->count == 0 || s->id == id) return pos;
        pos = (pos + 1) & mask;
    }
}

static inline size_t key_find(const key_slot *keys, size_t cap, unsigned shift, int64_t key)
{
    size_t mask = cap - 1;
    size_t pos = (size_t)(((uint64_t)(uint32_t)(int32_t)key * FIB_MULT) >> shift);
    for (;;) {
        const key_slot *s = &keys[pos];
        if (s->entries == 0 || s->key == key) return pos;
        pos = (pos + 1) & mask;
    }
}

static int grow_slots(buckets *b)
{
    if (b->cap > UINT32_MAX / 2) return -1; /* order_item.pos is 32-bit */
    size_t cap = b->cap * 2;
    slot *slots = calloc(cap, sizeof *slots);
    order_item *order = malloc(ORDER_CAP(cap) * sizeof *order);
    if (!slots || !order) { free(slots); free(order); return -1; }
    unsigned shift = 64 - log2_of(cap);
    for (size_t i = 0; i < b->cap; i++) {
        if (!b->slots[i].count) continue;
        slots[slot_find(slots, cap, shift, b->slots[i].id)] = b->slots[i];
    }
    free(b->slots);
    free(b->order);
    b->slots = slots;
    b->order = order;
    b->cap = cap;
    b->shift = shift;
    b->order_valid = 0;
    b->last_id = NO_ID;
    return 0;
}

static int grow_keys(buckets *b)
{
    size_t cap = b->key_cap * 2;
    key_slot *keys = calloc(cap, sizeof *keys);
    if (!keys) return -1;
    unsigned shift = 64 - log2_of(cap);
    for (size_t i = 0; i < b->key_cap; i++) {
        if (!b->keys[i].entries) continue;
        keys[key_find(keys, cap, shift, b->keys[i].key)] = b->keys[i];
    }
    free(b->keys);
    b->keys = keys;
    b->key_cap = cap;
    b->key_shift = shift;
    return 0;
}

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
static void fill_order(const buckets *b, order_item *out)
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
    fill_order(b, *tmp);
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
static size_t sort_combine(buckets_entry *e, size_t n)
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
static size_t fit_budget(buckets_entry *e, size_t n, int *level, uint32_t budget)
{
    while (distinct_keys(e, n) > budget && *level < BUCKETS_MAX_LEVEL) {
        for (size_t i = 0; i < n; i++) e[i].key = rekey(e[i].key, 1);
        (*level)++;
        n = sort_combine(e, n);
    }
    return n;
}

/* See buckets_store.h. */
int buckets_rebuild(buckets *b, const buckets_entry *e, size_t n, int level)
{
    size_t nk = distinct_keys(e, n);
    size_t cap = cap_for(n), key_cap = cap_for(nk);
    slot *slots = calloc(cap, sizeof *slots);
    key_slot *keys = calloc(key_cap, sizeof *keys);
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
    b->total = total;
    b->level = level;
    b->last_id = NO_ID;
    return 0;
}

/* Appends b's entries re-keyed to `level` (>= b's level), cells mapped, in
 * slot order: every caller sorts them next. */
static size_t gather(const buckets *b, int level, const uint32_t *cell_map, buckets_entry *out)
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

/* Collapses b to the next level (and further if still over budget). */
static int collapse(buckets *b)
{
    if (b->level >= BUCKETS_MAX_LEVEL) return -1;
    buckets_entry *e = malloc((b->n ? b->n : 1) * sizeof *e);
    if (!e) return -1;
    int level = b->level + 1;
    size_t n = sort_combine(e, gather(b, level, NULL, e));
    n = fit_budget(e, n, &level, b->budget);
    int rc = buckets_rebuild(b, e, n, level);
    free(e);
    return rc;
}

/* ---- store -------------------------------------------------------------- */

buckets *buckets_create(uint32_t budget)
{
    buckets *b = calloc(1, sizeof *b);
    if (!b) return NULL;
    b->budget = budget < BUCKETS_MIN_BUDGET ? BUCKETS_MIN_BUDGET : budget;
    if (buckets_rebuild(b, NULL, 0, 0)) { free(b); return NULL; }
    return b;
}

void buckets_free(buckets *b)
{
    if (!b) return;
    free(b->slots);
    free(b->keys);
    free(b->order);
    free(b);
}

void buckets_reset(buckets *b)
{
    memset(b->slots, 0, b->cap * sizeof *b->slots);
    memset(b->keys, 0, b->key_cap * sizeof *b->keys);
    b->n = 0;
    b->nkeys = 0;
    b->order_valid = 1;
    b->total = 0;
    b->level = 0;
    b->last_id = NO_ID;
}

/* Fills the empty slot pos with entry id (its key's slot kp, new_key when
 * the key has no entry yet); the caller counts the total. */
static inline void insert_entry(buckets *b, size_t pos, size_t kp, uint64_t id, int new_key,
                                uint64_t count)
{
    b->slots[pos].id = id;
    b->slots[pos].count = count;
    b->keys[kp].key = (int32_t)id_key(id);
    b->keys[kp].entries++;
    b->nkeys += (size_t)new_key;
    b->n++;
    b->order_valid = 0;
}

/* Slow path of buckets_add: the (key, cell) entry does not exist yet. */
static int add_new(buckets *b, uint64_t u, uint32_t cell, uint64_t count)
{
    for (;;) {
        int64_t key = key_of_bits(u, b->level);
        uint64_t id = make_id(key, cell);
        size_t pos = slot_find(b->slots, b->cap, b->shift, id);
        if (b->slots[pos].count) { /* appeared through a collapse */
            b->slots[pos].count += count;
            b->total += count;
            b->last_id = id;
            b->last_pos = pos;
            return 0;
        }
        size_t kp = key_find(b->keys, b->key_cap, b->key_shift, key);
        int new_key = b->keys[kp].entries == 0;
        if (new_key && b->nkeys + 1 > b->budget) {
            if (collapse(b)) return -1;
            continue;
        }
        if (OVER_LOAD(b->n + 1, b->cap)) {
            if (grow_slots(b)) return -1;
            pos = slot_find(b->slots, b->cap, b->shift, id);
        }
        if (new_key && OVER_LOAD(b->nkeys + 1, b->key_cap)) {
            if (grow_keys(b)) return -1;
            kp = key_find(b->keys, b->key_cap, b->key_shift, key);
        }
        insert_entry(b, pos, kp, id, new_key, count);
        b->total += count;
        b->last_id = id;
        b->last_pos = pos;
        return 0;
    }
}

int buckets_add(buckets *b, double x, uint32_t cell, uint64_t count)
{
    uint64_t u = double_bits(x);
    if ((u & MAG_MASK) >= EXP_ALL_ONES) return -1;
    if (count == 0) return 0;
    uint64_t id = make_id(key_of_bits(u, b->level), cell);
    if (id == b->last_id) {
        b->slots[b->last_pos].count += count;
        b->total += count;
        return 0;
    }
    size_t pos = slot_find(b->slots, b->cap, b->shift, id);
    if (b->slots[pos].count) {
        b->slots[pos].count += count;
        b->total += count;
        b->last_id = id;
        b->last_pos = pos;
        return 0;
    }
    return add_new(b, u, cell, count);
}

SHEAF_HOT int buckets_add_many(buckets *b, const double *x, const uint32_t *cells, size_t n)
{
    /* Same as n calls of buckets_add(b, x[i], cells ? cells[i] : 0, 1).  For
     * a run of values the ids and home slots are computed first, and the
     * home slot of each is requested PREFETCH values ahead: the table
     * outgrows L1 for continuous columns.  Hits (the common case) are
     * counted with the table's state held in locals; a new entry goes
     * through buckets_add, which may grow or collapse the table: the rest of
     * the run is then recomputed. */
    enum { RUN = 64, PREFETCH = 8 };
    uint64_t ids[RUN];
    uint32_t home[RUN];
    for (size_t base = 0; base < n;) {
        size_t m = n - base < RUN ? n - base : RUN;
        const double *xs = x + base;
        const uint32_t *cs = cells ? cells + base : NULL;
        const int level = b->level;
        const unsigned shift = b->shift;
        uint64_t bad = 0;
        for (size_t i = 0; i < m; i++) {
            uint64_t u = double_bits(xs[i]);
            bad |= (u & MAG_MASK) >= EXP_ALL_ONES;
            ids[i] = make_id(key_of_bits(u, level), cs ? cs[i] : 0);
            home[i] = (uint32_t)((ids[i] * FIB_MULT) >> shift);
        }
        if (bad) { /* a value that is not finite: exactly n calls of buckets_add */
            for (size_t i = 0; i < m; i++)
                if (buckets_add(b, xs[i], cs ? cs[i] : 0, 1) != 0) return -1;
            base += m;
            continue;
        }
        slot *slots = b->slots;
        const size_t mask = b->cap - 1;
        uint64_t last_id = b->last_id, added = 0;
        size_t last_pos = b->last_pos, i = 0;
        /* A table of up to 1024 slots (16 KiB) stays in L1: no prefetch. */
        const size_t ahead = b->cap > 1024 ? PREFETCH : m;
        while (i < m) {
            if (i + ahead < m) __builtin_prefetch(&slots[home[i + ahead]]);
            uint64_t id = ids[i];
            if (id != last_id) {
                size_t pos = home[i];
                while (slots[pos].count && slots[pos].id != id) pos = (pos + 1) & mask;
                if (!slots[pos].count) { /* a new entry */
                    /* In place when no growth or collapse is due: pos is
                     * already its empty slot. */
                    int32_t key = (int32_t)id_key(id);
                    size_t kp = key_find(b->keys, b->key_cap, b->key_shift, key);
                    int new_key = b->keys[kp].entries == 0;
                    if (!(new_key && (b->nkeys + 1 > b->budget ||
                                      OVER_LOAD(b->nkeys + 1, b->key_cap))) &&
                        !OVER_LOAD(b->n + 1, b->cap)) {
                        insert_entry(b, pos, kp, id, new_key, 1);
                        last_id = id;
                        last_pos = pos;
                        added++;
                        i++;
                        continue;
                    }
                    b->total += added;
                    added = 0;
                    if (buckets_add(b, xs[i], cs ? cs[i] : 0, 1) != 0) return -1;
                    i++;
                    if (b->level != level || b->slots != slots || b->shift != shift) {
                        last_id = b->last_id;
                        last_pos = b->last_pos;
                        break;
                    }
                    last_id = b->last_id;
                    last_pos = b->last_pos;
                    continue;
                }
                last_id = id;
                last_pos = pos;
            }
            slots[last_pos].count++;
            added++;
            i++;
        }
        b->last_id = last_id;
        b->last_pos = last_pos;
        b->total += added;
        base += i;
    }
    return 0;
}

/* Fast path of buckets_merge: `from` is no coarser than `into` and the union
 * fits into's budget at into's level, so entries are added in place with no
 * sort.  Returns 1 when done, 0 when the general path is needed, -1 on OOM
 * (into unchanged). */
static int merge_in_place(buckets *into, const buckets *from, const uint32_t *cell_map)
{
    if (from->level > into->level) return 0;
    int steps = into->level - from->level;
    /* Pass 1: keys of `from` that are new to `into`. */
    size_t fresh = 0;
    for (size_t i = 0; i < from->key_cap; i++) {
        if (!from->keys[i].entries) continue;
        int64_t key = rekey(from->keys[i].key, steps);
        if (into->keys[key_find(into->keys, into->key_cap, into->key_shift, key)].entries == 0)
            fresh++;
    }
    /* Rekeyed keys may coincide, so `fresh` is an upper bound: safe. */
    if (into->nkeys + fresh > into->budget) return 0;
    while (OVER_LOAD(into->n + from->n, into->cap))
        if (grow_slots(into)) return -1;
    while (OVER_LOAD(into->nkeys + fresh, into->key_cap))
        if (grow_keys(into)) return -1;
    /* Pass 2: cannot fail. */
    for (size_t i = 0; i < from->cap; i++) {
        const slot *f = &from->slots[i];
        if (!f->count) continue;
        int64_t key = rekey(id_key(f->id), steps);
        uint32_t cell = cell_map ? cell_map[id_cell(f->id)] : id_cell(f->id);
        uint64_t id = make_id(key, cell);
        size_t pos = slot_find(into->slots, into->cap, into->shift, id);
        if (!into->slots[pos].count) {
            size_t kp = key_find(into->keys, into->key_cap, into->key_shift, key);
            into->nkeys += into->keys[kp].entries == 0;
            into->keys[kp].key = (int32_t)key;
            into->keys[kp].entries++;
            into->slots[pos].id = id;
            into->n++;
            into->order_valid = 0;
        }
        into->slots[pos].count += f->count;
        into->total += f->count;
    }
    into->last_id = NO_ID;
    return 1;
}

int buckets_merge(buckets *into, const buckets *from, const uint32_t *cell_map, uint32_t map_len)
{
    if (cell_map) {
        for (size_t i = 0; i < from->cap; i++)
            if (from->slots[i].count && id_cell(from->slots[i].id) >= map_len) return -1;
    }
    if (into != from) {
        int done = merge_in_place(into, from, cell_map);
        if (done) return done < 0 ? -1 : 0;
    }
    size_t n = into->n + from->n;
    buckets_entry *e = malloc((n ? n : 1) * sizeof *e);
    if (!e) return -1;
    int level = into->level > from->level ? into->level : from->level;
    size_t k = gather(into, level, NULL, e);
    k += gather(from, level, cell_map, e + k);
    k = sort_combine(e, k);
    k = fit_budget(e, k, &level, into->budget);
    int rc = buckets_rebuild(into, e, k, level);
    free(e);
    return rc;
}

int buckets_map_cells(buckets *b, const uint32_t *cell_map, uint32_t map_len)
{
    for (size_t i = 0; i < b->cap; i++)
        if (b->slots[i].count && id_cell(b->slots[i].id) >= map_len) return -1;
    /* The same keys and level: only the entry table is rebuilt, each entry
     * under its new id (entries that meet add up, so each key's entry count
     * is recounted); the sort index is left to the next seal. */
    slot *slots = calloc(b->cap, sizeof *slots);
    if (!slots) return -1;
    size_t n = 0;
    for (size_t i = 0; i < b->cap; i++) {
        const slot *o = &b->slots[i];
        if (!o->count) continue;
        uint64_t id = make_id(id_key(o->id), cell_map[id_cell(o->id)]);
        size_t pos = slot_find(slots, b->cap, b->shift, id);
        if (!slots[pos].count) {
            slots[pos].id = id;
            n++;
        }
        slots[pos].count += o->count;
    }
    if (n != b->n) { /* cells met: recount the entries of each key */
        memset(b->keys, 0, b->key_cap * sizeof *b->keys);
        for (size_t i = 0; i < b->cap; i++) {
            if (!slots[i].count) continue;
            int64_t key = id_key(slots[i].id);
            size_t kp = key_find(b->keys, b->key_cap, b->key_shift, key);
            b->keys[kp].key = (int32_t)key;
            b->keys[kp].entries++;
        }
    }
    free(b->slots);
    b->slots = slots;
    b->n = n;
    b->order_valid = 0;
    b->last_id = NO_ID;
    return 0;
}

int buckets_level(const buckets *b) { return b->level; }
uint32_t buckets_budget(const buckets *b) { return b->budget; }
uint64_t buckets_total(const buckets *b) { return b->total; }
size_t buckets_keys(const buckets *b) { return b->nkeys; }

size_t buckets_entries(const buckets *b) { return b->n; }

void buckets_seal(buckets *b)
{
    if (b->order_valid) return;
    fill_order(b, b->order);
    b->order_valid = 1;
}

int buckets_sealed(const buckets *b) { return b->order_valid; }

buckets_entry buckets_entry_at(const buckets *b, size_t i)
{
    buckets_entry e = {0, 0, 0};
    const order_item *order;
    order_item *tmp;
    if (i >= b->n || buckets_read_order(b, &order, &tmp)) return e;
    e.key = order[i].key;
    e.cell = order[i].cell;
    e.count = b->slots[order[i].pos].count;
    free(tmp);
    return e;
}
