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
 * Files: this one (create, add, canonical order, queries, serialization),
 * crosstab_merge.c (merge, counts to values) and crosstab_table.h, the
 * private part they share (the tables and their probes).
 *
 * Serialization: see crosstab.h.  crosstab_read checks the mode and flag
 * bytes, strictly ascending (key, cell), n >= 1, at most max_keys exact keys,
 * overflowed == "an overflow-key record exists", and in values mode a finite
 * mean and finite M2 >= 0.
 */
#include "io/clones.h"
#include "acc/crosstab.h"
#include "acc/crosstab_table.h"
#include "acc/zeroed.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ---- record and key tables ---- */

static uint32_t bits_for(uint64_t entries, uint32_t bits)
{
    if (bits < CROSSTAB_MIN_BITS) bits = CROSSTAB_MIN_BITS;
    while (bits < CROSSTAB_MAX_BITS && entries * 4 > ((uint64_t)1 << bits) * 3) bits++;
    return entries * 4 > ((uint64_t)1 << bits) * 3 ? 0 : bits;
}

/* Would `entries` records fit without growing? */
int crosstab_records_fit(const crosstab *t, uint64_t entries)
{
    return t->bits && entries * 4 <= ((uint64_t)1 << t->bits) * 3;
}

/* Makes room for `entries` records at load <= 3/4.  Needs a layout.
 * Returns 0 or -1. */
int crosstab_reserve_records(crosstab *t, uint64_t entries)
{
    uint32_t bits = bits_for(entries, t->bits);
    if (!bits) return -1;
    if (bits == t->bits) return 0;
    unsigned char *slots = zeroed((size_t)1 << bits, t->stride);
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
void crosstab_init_record(crosstab *t, record *r, uint64_t key, uint32_t cell)
{
    r->key = key;
    r->cell = cell;
    t->records++;
    if (cell >= t->cells) t->cells = cell + 1;
    t->order_valid = 0;
}

/* Puts a table into `mode`, laying out (and allocating) its slots; -1 if it
 * holds records of the other mode. */
int crosstab_begin_mode(crosstab *t, int mode)
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
    if (!t->bits && crosstab_reserve_records(t, 1)) return -1;
    t->mode = mode;
    return 0;
}

int crosstab_reserve_keys(crosstab *t, uint64_t keys)
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
void crosstab_insert_key(crosstab *t, uint64_t key)
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
    if (crosstab_reserve_records(t, (uint64_t)t->records + 1)) return NULL;
    if (fresh && crosstab_reserve_keys(t, (uint64_t)t->keys + 1)) return NULL;
    if (fresh) crosstab_insert_key(t, key);
    if (key == CROSSTAB_OVERFLOW_KEY) t->overflowed = 1;
    record *r = find_record(t, key, cell, t->stride);
    crosstab_init_record(t, r, key, cell);
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
    } else if (crosstab_begin_mode(t, CROSSTAB_COUNTS)) {
        return -1;
    }
    r = new_record(t, key, cell);
    if (!r) return -1;
    r->n++;
    return 0;
}

/* n rows of (key, cell) (key already crosstab_key_of): crosstab_add_count
 * n times. */
static int add_count_n(crosstab *t, uint64_t key, uint32_t cell, uint64_t n)
{
    record *r;
    if (t->mode == CROSSTAB_COUNTS) {
        r = find_record(t, key, cell, sizeof(record));
        if (r->n) { r->n += n; return 0; }
    } else if (crosstab_begin_mode(t, CROSSTAB_COUNTS)) {
        return -1;
    }
    r = new_record(t, key, cell);
    if (!r) return -1;
    r->n += n;
    return 0;
}

/* crosstab_add_counts for a table of few (key, cell) pairs: each piece of
 * AGG_PIECE rows counted by pair in a small table of its own (in the L1
 * cache), then each pair added once, in the order the pairs first appear,
 * so that new keys reach the table in the order the rows bring them (what
 * max_keys keeps does not change).  A column of a few values and classes
 * has a few dozen pairs in 256 rows: one probe of the large table each,
 * where every row probed it (a cache miss for most). */
#define AGG_PIECE 256
#define AGG_SLOTS 512
#define AGG_PAIRS 128 /* keys x cells at most, for the pieces to pay */

static int add_aggregated(crosstab *t, const uint64_t *keys, const uint32_t *cells, size_t n)
{
    uint16_t slot[AGG_SLOTS];
    uint64_t pair_key[AGG_PIECE], pair_n[AGG_PIECE];
    uint32_t pair_cell[AGG_PIECE];
    for (size_t at = 0; at < n; at += AGG_PIECE) {
        const size_t m = n - at < AGG_PIECE ? n - at : AGG_PIECE;
        memset(slot, 0, sizeof slot);
        uint16_t np = 0;
        for (size_t i = at; i < at + m; i++) {
            const uint32_t c = cells[i];
            if (!c) continue;
            const uint64_t k = crosstab_key_of(keys[i]);
            uint32_t h = record_home(k, c, 9);
            for (;;) {
                uint16_t s = slot[h];
                if (!s) {
                    pair_key[np] = k;
                    pair_cell[np] = c;
                    pair_n[np] = 1;
                    slot[h] = ++np;
                    break;
                }
                if (pair_key[s - 1] == k && pair_cell[s - 1] == c) {
                    pair_n[s - 1]++;
                    break;
                }
                h = (h + 1) & (AGG_SLOTS - 1);
            }
        }
        for (uint16_t p = 0; p < np; p++)
            if (add_count_n(t, pair_key[p], pair_cell[p], pair_n[p]) != 0) return -1;
    }
    return 0;
}

SHEAF_HOT int crosstab_add_counts(crosstab *t, const uint64_t *keys, const uint32_t *cells, size_t n)
{
    if (t->mode == CROSSTAB_COUNTS && (uint64_t)t->keys * t->cells <= AGG_PAIRS && n >= 32)
        return add_aggregated(t, keys, cells, n);
    enum { AHEAD = 8 }; /* the tables outgrow the caches */
    for (size_t i = 0; i < n; i++) {
        if (!cells[i]) continue;
        uint64_t key = crosstab_key_of(keys[i]);
        if (t->mode == CROSSTAB_COUNTS) {
            if (i + AHEAD < n)
                __builtin_prefetch(slot_at(t, record_home(crosstab_key_of(keys[i + AHEAD]),
                                                          cells[i + AHEAD], t->bits),
                                           sizeof(record)));
            record *r = find_record(t, key, cells[i], sizeof(record));
            if (r->n) { r->n++; continue; }
        }
        if (crosstab_add_count(t, keys[i], cells[i]) != 0) return -1;
    }
    return 0;
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
    } else if (crosstab_begin_mode(t, CROSSTAB_VALUES)) {
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
int crosstab_read_order(const crosstab *t, const order_ref **order, order_ref **tmp)
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
    if (i >= t->records || crosstab_read_order(t, &order, &tmp)) return e;
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
    if (crosstab_read_order(t, &order, &tmp)) { w->failed = 1; return; }
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
    if (crosstab_begin_mode(t, mode) || crosstab_reserve_records(t, entries)) return read_fail(t, r);
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
            if (t->keys >= max_keys || crosstab_reserve_keys(t, (uint64_t)t->keys + 1))
                return read_fail(t, r);
            crosstab_insert_key(t, key);
        }
        uint32_t i = find_index(t, key, cell, t->stride);
        record *rec = slot_at(t, i, t->stride);
        crosstab_init_record(t, rec, key, cell);
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
