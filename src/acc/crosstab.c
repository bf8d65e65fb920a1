/* crosstab: per-value target statistics with a bounded key set (see crosstab.h).
 *
 * Layout.  Records live in one open-addressing table with linear probing,
 * keyed by (key, cell); the home slot is the top bits of
 * (key ^ cell * C) * 2^64/phi (Fibonacci hashing, Knuth TAOCP vol. 3, 6.4).
 * n == 0 marks an empty slot, so every key, 0 included, is valid.  A slot is
 * 24 bytes in counts mode (key, n, cell) and 40 in values mode (plus mean and
 * M2), so a hit touches one slot.  The table doubles when its load would
 * pass 3/4.  A second, smaller table holds the distinct exact keys (empty
 * slot = CROSSTAB_OVERFLOW_KEY, which is never an exact key); it is probed
 * only when a (key, cell) record is new, to decide between a new key and
 * the overflow key.
 *
 * Update rule.  Counts: n += 1.  Values (Welford 1962): n += 1,
 * d = y - mean, mean += d / n, M2 += d (y - mean).  A new record starts from
 * zeros, so the same update creates it.  A hit is one multiply, one probe and
 * the update; a new record of an existing key adds a key-table probe; a new
 * key is accepted while fewer than max_keys keys are held, otherwise its row
 * goes to the record (CROSSTAB_OVERFLOW_KEY, cell) and the table is marked
 * overflowed.
 *
 * Merge rule.  Each record (k, c) of `from` adds to into's record
 * (k', cell_map[c]), where k' = k if into holds k (or k is the overflow
 * key), k if k is new and admitted, else the overflow key.  Counts add;
 * values combine by Chan, Golub & LeVeque (1979), with from's mean first
 * shifted into into's frame:
 *     n = na + nb,  d = (mean_b + shift) - mean_a,
 *     mean = mean_a + d nb / n,  M2 = M2a + M2b + d^2 na nb / n.
 * Admission does not depend on visiting order: when from's new keys exceed
 * the room left, exactly the `room` smallest of them are admitted (found on
 * from's sorted index), as a visit in ascending key order would do.  Counts
 * then merge in slot order (integer sums commute).  Values merged into the
 * overflow record are combined in floating point, whose result depends on
 * the order, so in that case from is visited in canonical order; this costs
 * a sort of from per merge while new keys keep overflowing.  When everything
 * fits, no sort happens.  The room needed is reserved before anything
 * changes, so a failed merge leaves `into` intact: records are bounded by
 * into's plus from's when that fits the current capacity, else counted by a
 * probe pass that also notes where each of from's records lands, so that
 * the update pass (while the table does not grow) goes straight to it.
 * Without overflow, a counts merge equals the table of the concatenated
 * input exactly; a values merge equals it up to rounding.
 *
 * Canonical order.  A sorted index of (key, cell, slot) serves the ordered
 * reads (entry_at, write, counts_to_values, merge).  Inserting a record or
 * growing the table invalidates it, updates of existing records do not;
 * crosstab_seal rebuilds it and crosstab_read leaves it built.  A read of an
 * unsealed table sorts into a temporary index of its own, so a const table
 * is never written.
 *
 * Serialization: see crosstab.h.  crosstab_read checks the mode and flag
 * bytes, strictly ascending (key, cell), n >= 1, at most max_keys exact keys,
 * overflowed == "an overflow-key record exists", and in values mode a finite
 * mean and finite M2 >= 0.
 */
#include "acc/crosstab.h"

#include <math.h>

#include "acc/moments.h"
#include <stdlib.h>
#include <string.h>

#define CROSSTAB_FIB UINT64_C(0x9E3779B97F4A7C15)
#define CROSSTAB_CELL_MIX UINT64_C(0xC2B2AE3D27D4EB4F)
#define CROSSTAB_MIN_BITS 4u
#define CROSSTAB_MAX_BITS 31u

typedef struct {
    uint64_t key;  /* value key or CROSSTAB_OVERFLOW_KEY (meaningful when n > 0) */
    uint64_t n;    /* rows; 0 = empty slot */
    uint32_t cell; /* class index, or 0 */
} record;

typedef struct {
    record r;    /* key, n, cell */
    double mean; /* target mean over the record's rows */
    double m2;   /* sum of squared deviations from mean */
} value_record;

typedef struct {
    uint64_t key;  /* sort key, first */
    uint32_t cell; /* sort key, second */
    uint32_t slot; /* where the record lives */
} order_ref;

struct crosstab {
    uint32_t max_keys;    /* exact keys allowed */
    int mode;             /* CROSSTAB_EMPTY / _COUNTS / _VALUES */
    int layout;           /* mode the slot array is laid out for (EMPTY: none) */
    int overflowed;       /* some row went to the overflow key */
    size_t stride;        /* bytes per slot for `layout` */
    uint32_t bits;        /* log2 of the slot count (0 = nothing allocated) */
    unsigned char *slots; /* 2^bits slots of `stride` bytes */
    uint32_t records;     /* records held */
    uint32_t cells;       /* 1 + highest cell held, 0 when empty */
    uint32_t key_bits;    /* log2 of the key slot count (0 = nothing allocated) */
    uint32_t keys;        /* exact keys held (the overflow key excluded) */
    uint64_t *key_slots;  /* 2^key_bits keys, CROSSTAB_OVERFLOW_KEY = empty */
    order_ref *order;     /* canonical index, valid when order_valid */
    uint32_t order_cap;   /* order entries allocated */
    int order_valid;      /* order matches the current records */
    uint32_t *hits;       /* merge scratch: slots of from's records in this table */
    uint32_t hits_cap;    /* hits allocated */
};

/* ---- record table ---- */

static inline uint32_t record_home(uint64_t key, uint32_t cell, uint32_t bits)
{
    return (uint32_t)(((key ^ (uint64_t)cell * CROSSTAB_CELL_MIX) * CROSSTAB_FIB) >> (64 - bits));
}

static inline record *slot_at(const crosstab *t, uint32_t i, size_t stride)
{
    return (record *)(t->slots + (size_t)i * stride);
}

/* Index of the slot of (key, cell), or of the empty slot where it would go.
 * Needs bits > 0.  The hot paths pass a constant stride so the probe
 * compiles to fixed offsets. */
static inline uint32_t find_index(const crosstab *t, uint64_t key, uint32_t cell, size_t stride)
{
    uint32_t mask = (UINT32_C(1) << t->bits) - 1;
    uint32_t i = record_home(key, cell, t->bits);
    for (;;) {
        const record *r = slot_at(t, i, stride);
        if (!r->n || (r->key == key && r->cell == cell)) return i;
        i = (i + 1) & mask;
    }
}

static inline record *find_record(const crosstab *t, uint64_t key, uint32_t cell, size_t stride)
{
    return slot_at(t, find_index(t, key, cell, stride), stride);
}

static uint32_t bits_for(uint64_t entries, uint32_t bits)
{
    if (bits < CROSSTAB_MIN_BITS) bits = CROSSTAB_MIN_BITS;
    while (bits < CROSSTAB_MAX_BITS && entries * 4 > ((uint64_t)1 << bits) * 3) bits++;
    return entries * 4 > ((uint64_t)1 << bits) * 3 ? 0 : bits;
}

/* Would `entries` records fit without growing? */
static int records_fit(const crosstab *t, uint64_t entries)
{
    return t->bits && entries * 4 <= ((uint64_t)1 << t->bits) * 3;
}

/* Makes room for `entries` records at load <= 3/4.  Needs a layout.
 * Returns 0 or -1. */
static int reserve_records(crosstab *t, uint64_t entries)
{
    uint32_t bits = bits_for(entries, t->bits);
    if (!bits) return -1;
    if (bits == t->bits) return 0;
    unsigned char *slots = calloc((size_t)1 << bits, t->stride);
    if (!slots) return -1;
    unsigned char *old = t->slots;
    uint32_t old_n = t->bits ? UINT32_C(1) << t->bits : 0;
    t->slots = slots;
    t->bits = bits;
    for (uint32_t i = 0; i < old_n; i++) {
        const record *r = (const record *)(old + (size_t)i * t->stride);
        if (r->n) memcpy(find_record(t, r->key, r->cell, t->stride), r, t->stride);
    }
    free(old);
    t->order_valid = 0;
    return 0;
}

/* Fills the empty slot r with an empty record (key, cell); the caller then
 * adds to it.  Room is reserved. */
static void init_record(crosstab *t, record *r, uint64_t key, uint32_t cell)
{
    r->key = key;
    r->cell = cell;
    t->records++;
    if (cell >= t->cells) t->cells = cell + 1;
    t->order_valid = 0;
}

/* Puts a table into `mode`, laying out (and allocating) its slots; -1 if it
 * holds records of the other mode. */
static int begin_mode(crosstab *t, int mode)
{
    if (t->mode == mode) return 0;
    if (t->records) return -1;
    if (t->layout != mode) {
        free(t->slots);
        t->slots = NULL;
        t->bits = 0;
        t->layout = mode;
        t->stride = mode == CROSSTAB_VALUES ? sizeof(value_record) : sizeof(record);
    }
    if (!t->bits && reserve_records(t, 1)) return -1;
    t->mode = mode;
    return 0;
}

/* ---- key table ---- */

static inline uint32_t find_key(const crosstab *t, uint64_t key)
{
    uint32_t mask = (UINT32_C(1) << t->key_bits) - 1;
    uint32_t i = (uint32_t)((key * CROSSTAB_FIB) >> (64 - t->key_bits));
    while (t->key_slots[i] != CROSSTAB_OVERFLOW_KEY && t->key_slots[i] != key) i = (i + 1) & mask;
    return i;
}

static int key_present(const crosstab *t, uint64_t key)
{
    return t->key_bits && t->key_slots[find_key(t, key)] == key;
}

static int reserve_keys(crosstab *t, uint64_t keys)
{
    uint32_t bits = bits_for(keys, t->key_bits);
    if (!bits) return -1;
    if (bits == t->key_bits) return 0;
    size_t n = (size_t)1 << bits;
    uint64_t *slots = malloc(n * sizeof *slots);
    if (!slots) return -1;
    memset(slots, 0xff, n * sizeof *slots); /* all CROSSTAB_OVERFLOW_KEY */
    uint64_t *old = t->key_slots;
    uint32_t old_n = t->key_bits ? UINT32_C(1) << t->key_bits : 0;
    t->key_slots = slots;
    t->key_bits = bits;
    for (uint32_t i = 0; i < old_n; i++)
        if (old[i] != CROSSTAB_OVERFLOW_KEY) slots[find_key(t, old[i])] = old[i];
    free(old);
    return 0;
}

/* Adds an absent exact key; room is reserved. */
static void insert_key(crosstab *t, uint64_t key)
{
    t->key_slots[find_key(t, key)] = key;
    t->keys++;
}

/* ---- create, reset, add ---- */

crosstab *crosstab_create(uint32_t max_keys)
{
    crosstab *t = calloc(1, sizeof *t);
    if (!t) return NULL;
    t->max_keys = max_keys;
    return t;
}

void crosstab_free(crosstab *t)
{
    if (!t) return;
    free(t->slots);
    free(t->key_slots);
    free(t->order);
    free(t->hits);
    free(t);
}

void crosstab_reset(crosstab *t)
{
    if (t->bits) memset(t->slots, 0, ((size_t)1 << t->bits) * t->stride);
    if (t->key_bits) memset(t->key_slots, 0xff, ((size_t)1 << t->key_bits) * sizeof *t->key_slots);
    t->mode = CROSSTAB_EMPTY;
    t->overflowed = 0;
    t->records = 0;
    t->cells = 0;
    t->keys = 0;
    t->order_valid = 0;
}

/* Slow path of the adds: (key, cell) has no record.  Returns the (empty or
 * overflow) record the row adds to, or NULL when memory runs out. */
static record *new_record(crosstab *t, uint64_t key, uint32_t cell)
{
    int fresh = 0;
    if (!key_present(t, key)) {
        if (t->keys < t->max_keys) {
            fresh = 1;
        } else {
            key = CROSSTAB_OVERFLOW_KEY;
            record *r = find_record(t, key, cell, t->stride);
            if (r->n) { t->overflowed = 1; return r; }
        }
    }
    if (reserve_records(t, (uint64_t)t->records + 1)) return NULL;
    if (fresh && reserve_keys(t, (uint64_t)t->keys + 1)) return NULL;
    if (fresh) insert_key(t, key);
    if (key == CROSSTAB_OVERFLOW_KEY) t->overflowed = 1;
    record *r = find_record(t, key, cell, t->stride);
    init_record(t, r, key, cell);
    return r;
}

void crosstab_prefetch(const crosstab *t, uint64_t key, uint32_t cell)
{
    if (t->bits && t->slots)
        __builtin_prefetch(slot_at(t, record_home(crosstab_key_of(key), cell, t->bits), t->stride));
}

int crosstab_add_count(crosstab *t, uint64_t key, uint32_t cell)
{
    key = crosstab_key_of(key);
    record *r;
    if (t->mode == CROSSTAB_COUNTS) {
        r = find_record(t, key, cell, sizeof(record));
        if (r->n) { r->n++; return 0; }
    } else if (begin_mode(t, CROSSTAB_COUNTS)) {
        return -1;
    }
    r = new_record(t, key, cell);
    if (!r) return -1;
    r->n++;
    return 0;
}

static inline void welford(value_record *v, double y)
{
    uint64_t n = ++v->r.n;
    double d = y - v->mean;
    v->mean += d / (double)n;
    v->m2 += d * (y - v->mean);
}

/* Adds n rows of value y to record v (Chan et al. merge with M2 = 0). */
static inline void add_equal(value_record *v, double y, uint64_t n)
{
    if (n == 1) { welford(v, y); return; }
    moments_pair_merge((double)v->r.n, &v->mean, &v->m2, (double)n, y, 0.0);
    v->r.n += n;
}

int crosstab_add_values_in(crosstab *t, uint64_t key, uint32_t cell, double y, uint64_t n)
{
    if (!isfinite(y)) return -1;
    if (n == 0) return 0;
    key = crosstab_key_of(key);
    value_record *v;
    if (t->mode == CROSSTAB_VALUES) {
        v = (value_record *)find_record(t, key, cell, sizeof(value_record));
        if (v->r.n) { add_equal(v, y, n); return 0; }
    } else if (begin_mode(t, CROSSTAB_VALUES)) {
        return -1;
    }
    v = (value_record *)new_record(t, key, cell);
    if (!v) return -1;
    if (n == 1) {
        welford(v, y);
    } else {
        v->mean = y;
        v->m2 = 0;
        v->r.n = n;
    }
    return 0;
}

int crosstab_add_value(crosstab *t, uint64_t key, double y)
{
    return crosstab_add_values_in(t, key, 0, y, 1);
}

/* ---- canonical order ---- */

static int order_cmp(const void *a, const void *b)
{
    const order_ref *x = a, *y = b;
    if (x->key != y->key) return x->key < y->key ? -1 : 1;
    return (x->cell > y->cell) - (x->cell < y->cell);
}

/* Writes the canonical index of t's records to out[0..records). */
static void fill_order(const crosstab *t, order_ref *out)
{
    uint32_t k = 0, n = t->bits ? UINT32_C(1) << t->bits : 0;
    for (uint32_t i = 0; i < n; i++) {
        const record *r = slot_at(t, i, t->stride);
        if (!r->n) continue;
        out[k].key = r->key;
        out[k].cell = r->cell;
        out[k].slot = i;
        k++;
    }
    if (k > 1) qsort(out, k, sizeof *out, order_cmp);
}

int crosstab_seal(crosstab *t)
{
    if (t->order_valid) return 0;
    if (t->records > t->order_cap) {
        order_ref *p = realloc(t->order, (size_t)t->records * sizeof *p);
        if (!p) return -1;
        t->order = p;
        t->order_cap = t->records;
    }
    fill_order(t, t->order);
    t->order_valid = 1;
    return 0;
}

int crosstab_sealed(const crosstab *t) { return t->order_valid; }

/* The canonical index for a read: the table's own when sealed; else a
 * temporary one in *tmp, which the caller frees (the table is never
 * written).  -1 when memory for the temporary index runs out. */
static int read_order(const crosstab *t, const order_ref **order, order_ref **tmp)
{
    *tmp = NULL;
    *order = t->order;
    if (t->order_valid) return 0;
    *order = *tmp = malloc((t->records ? t->records : 1) * sizeof **tmp);
    if (!*tmp) return -1;
    fill_order(t, *tmp);
    return 0;
}

static crosstab_entry entry_of(const crosstab *t, const record *r)
{
    crosstab_entry e = {r->key, r->cell, r->n, 0.0, 0.0};
    if (t->mode == CROSSTAB_VALUES) {
        e.mean = ((const value_record *)r)->mean;
        e.m2 = ((const value_record *)r)->m2;
    }
    return e;
}

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
        cell_map = NULL;
        if (!isfinite(shift)) return -1;
    } else {
        shift = 0.0;
        if (cell_map && from->cells > map_len) return -1;
    }
    if (into == from) {
        /* New records (a cell map) would move the slots being visited. */
        crosstab *copy = clone(from);
        if (!copy) return -1;
        int rc = crosstab_merge(into, copy, cell_map, map_len, shift);
        crosstab_free(copy);
        return rc;
    }
    if (begin_mode(into, from->mode)) return -1;

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
        if (read_order(from, &order, &tmp)) return -1;
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
    if (!records_fit(into, record_bound)) {
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
    if (reserve_records(into, record_bound) ||
        (key_inserts && reserve_keys(into, (uint64_t)into->keys + key_inserts))) {
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
                if (insert) insert_key(into, key);
                if (key == CROSSTAB_OVERFLOW_KEY) {
                    into->overflowed = 1;
                    if (fr->key != key) r = find_record(into, key, cell, into->stride);
                }
                if (!r->n) init_record(into, r, key, cell);
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
    if (begin_mode(t, CROSSTAB_VALUES)) return -1;
    value_record *v = (value_record *)find_record(t, CROSSTAB_OVERFLOW_KEY, cell, t->stride);
    if (!v->r.n) {
        if (reserve_records(t, (uint64_t)t->records + 1)) return -1;
        v = (value_record *)find_record(t, CROSSTAB_OVERFLOW_KEY, cell, t->stride);
        init_record(t, &v->r, CROSSTAB_OVERFLOW_KEY, cell);
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
    if (read_order(t, &order, &tmp)) { crosstab_free(v); return NULL; }
    /* Canonical order, so the result does not depend on the table layout;
     * the overflow key keeps its place (new keys never need room here). */
    for (uint32_t j = 0; j < t->records; j++) {
        const record *r = slot_at(t, order[j].slot, t->stride);
        uint32_t cell = cells ? cells[r->cell] : 0;
        int rc = r->key == CROSSTAB_OVERFLOW_KEY ? add_overflow_values(v, cell, y[r->cell], r->n)
                                                : crosstab_add_values_in(v, r->key, cell, y[r->cell], r->n);
        if (rc != 0) { crosstab_free(v); free(tmp); return NULL; }
    }
    free(tmp);
    return v;
}

/* ---- queries ---- */

int crosstab_mode(const crosstab *t) { return t->records ? t->mode : CROSSTAB_EMPTY; }
uint32_t crosstab_max_keys(const crosstab *t) { return t->max_keys; }
int crosstab_overflowed(const crosstab *t) { return t->overflowed; }
size_t crosstab_keys(const crosstab *t) { return (size_t)t->keys + (t->overflowed ? 1 : 0); }
size_t crosstab_entries(const crosstab *t) { return t->records; }

crosstab_entry crosstab_entry_at(const crosstab *t, size_t i)
{
    crosstab_entry e = {0, 0, 0, 0.0, 0.0};
    const order_ref *order;
    order_ref *tmp;
    if (i >= t->records || read_order(t, &order, &tmp)) return e;
    e = entry_of(t, slot_at(t, order[i].slot, t->stride));
    free(tmp);
    return e;
}

crosstab_entry crosstab_lookup(const crosstab *t, uint64_t key, uint32_t cell)
{
    crosstab_entry none = {key, cell, 0, 0.0, 0.0};
    if (t->mode == CROSSTAB_EMPTY) return none;
    const record *r = find_record(t, key, cell, t->stride);
    return r->n ? entry_of(t, r) : none;
}

/* ---- serialization ---- */

void crosstab_write(const crosstab *t, wire_writer *w)
{
    const order_ref *order;
    order_ref *tmp;
    if (read_order(t, &order, &tmp)) { w->failed = 1; return; }
    int mode = crosstab_mode(t);
    wire_put_u32(w, t->max_keys);
    wire_put_u8(w, (uint8_t)mode);
    wire_put_u8(w, (uint8_t)(t->overflowed != 0));
    wire_put_u64(w, t->records);
    for (uint32_t k = 0; k < t->records; k++) {
        crosstab_entry e = entry_of(t, slot_at(t, order[k].slot, t->stride));
        wire_put_u64(w, e.key);
        wire_put_u32(w, e.cell);
        wire_put_u64(w, e.n);
        if (mode == CROSSTAB_VALUES) {
            wire_put_f64(w, e.mean);
            wire_put_f64(w, e.m2);
        }
    }
    free(tmp);
}

static crosstab *read_fail(crosstab *t, wire_reader *r)
{
    r->failed = 1;
    crosstab_free(t);
    return NULL;
}

crosstab *crosstab_read(wire_reader *r)
{
    uint32_t max_keys = wire_get_u32(r);
    uint8_t mode = wire_get_u8(r);
    uint8_t overflowed = wire_get_u8(r);
    uint64_t entries = wire_get_u64(r);
    size_t entry_bytes = mode == CROSSTAB_VALUES ? 36 : 20;
    if (r->failed || mode > CROSSTAB_VALUES || overflowed > 1 ||
        (mode == CROSSTAB_EMPTY) != (entries == 0) || entries > UINT32_MAX ||
        entries > (r->len - r->pos) / entry_bytes)
        return read_fail(NULL, r);

    crosstab *t = crosstab_create(max_keys);
    if (!t) return read_fail(t, r);
    if (mode == CROSSTAB_EMPTY) {
        if (overflowed) return read_fail(t, r);
        return t;
    }
    if (begin_mode(t, mode) || reserve_records(t, entries)) return read_fail(t, r);
    /* The input is in canonical order: it becomes the index as read. */
    t->order = malloc((size_t)entries * sizeof *t->order);
    if (!t->order) return read_fail(t, r);
    t->order_cap = (uint32_t)entries;
    int saw_overflow = 0;
    for (uint32_t k = 0; k < entries; k++) {
        uint64_t key = wire_get_u64(r);
        uint32_t cell = wire_get_u32(r);
        uint64_t n = wire_get_u64(r);
        double mean = 0.0, m2 = 0.0;
        if (mode == CROSSTAB_VALUES) {
            mean = wire_get_f64(r);
            m2 = wire_get_f64(r);
            if (!isfinite(mean) || !isfinite(m2) || m2 < 0) return read_fail(t, r);
        }
        if (r->failed || n == 0) return read_fail(t, r);
        int new_key = k == 0 || key != t->order[k - 1].key;
        if (k > 0 && (key < t->order[k - 1].key || (!new_key && cell <= t->order[k - 1].cell)))
            return read_fail(t, r);
        if (key == CROSSTAB_OVERFLOW_KEY) {
            saw_overflow = 1;
        } else if (new_key) {
            if (t->keys >= max_keys || reserve_keys(t, (uint64_t)t->keys + 1))
                return read_fail(t, r);
            insert_key(t, key);
        }
        uint32_t i = find_index(t, key, cell, t->stride);
        record *rec = slot_at(t, i, t->stride);
        init_record(t, rec, key, cell);
        rec->n = n;
        if (mode == CROSSTAB_VALUES) {
            ((value_record *)rec)->mean = mean;
            ((value_record *)rec)->m2 = m2;
        }
        t->order[k].key = key;
        t->order[k].cell = cell;
        t->order[k].slot = i;
    }
    if (overflowed != saw_overflow) return read_fail(t, r);
    t->overflowed = overflowed;
    t->order_valid = 1;
    return t;
}
