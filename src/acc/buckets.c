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

#include "acc/buckets_store.h"
#include "acc/zeroed.h"

/* ---- tables (the lookups and sizes are in buckets_store.h) ----------- */

#define DENSE_FIRST 4096u  /* values before the first window: enough to see the range */
#define DENSE_MISSES 16384u /* values outside a window before it is reconsidered */

/* Closes the dense window (nothing pending); the next is tried once the
 * store's total reaches retry_at. */
static void dense_close(buckets *b, uint64_t retry_at)
{
    b->dense_rows = 0;
    b->dense_next = retry_at;
}

static int grow_slots(buckets *b)
{
    if (b->cap > UINT32_MAX / 2) return -1; /* order_item.pos is 32-bit */
    size_t cap = b->cap * 2;
    slot *slots = zeroed(cap, sizeof *slots);
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
    key_slot *keys = zeroed(cap, sizeof *keys);
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

/* Collapses b to the next level (and further if still over budget). */
static int collapse(buckets *b)
{
    if (b->level >= BUCKETS_MAX_LEVEL) return -1;
    buckets_entry *e = malloc((b->n ? b->n : 1) * sizeof *e);
    if (!e) return -1;
    int level = b->level + 1;
    size_t n = buckets_sort_combine(e, buckets_gather(b, level, NULL, e));
    n = buckets_fit_budget(e, n, &level, b->budget);
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
    b->dense_next = DENSE_FIRST;
    return b;
}

void buckets_free(buckets *b)
{
    if (!b) return;
    free(b->slots);
    free(b->keys);
    free(b->order);
    free(b->dense);
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
    b->pending = 0;
    dense_close(b, DENSE_FIRST);
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

/* Adds count at key k of level `at` (at <= b's level) in cell: the slow
 * path of buckets_add (the entry may not exist yet) and how the window's
 * counters reach the table.  Keying at level 0 then collapsing equals keying
 * at the final level (buckets.h), so k is re-keyed to the store's level
 * after every collapse.  The caller counts the total. */
static int add_key(buckets *b, int64_t k, int at, uint32_t cell, uint64_t count)
{
    for (;;) {
        int64_t key = rekey(k, b->level - at);
        uint64_t id = make_id(key, cell);
        size_t pos = slot_find(b->slots, b->cap, b->shift, id);
        if (b->slots[pos].count) { /* appeared through a collapse */
            b->slots[pos].count += count;
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
    if (add_key(b, key_of_bits(u, 0), 0, cell, count) != 0) return -1;
    b->total += count;
    return 0;
}

/* n calls of buckets_add through the table (the window's values are
 * counted before). */
static inline int add_hashed(buckets *b, const double *x, const uint32_t *cells, size_t n)
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

/* ---- dense window -------------------------------------------------------- */

/* Most of a column's values fall in a narrow range of keys, whose (key,
 * cell) entries the table spreads over 16-byte slots found by hashing and
 * probing: a load that misses the first-level cache for each value once a
 * store outgrows it (12,288 entries of 16 bytes for 2,048 keys and 6
 * classes).  The window counts those keys in plain 32-bit counters indexed by
 * (key - base) * cells + cell, a quarter of the bytes and no probe; values
 * outside it go through the table.  Its counts reach the table when the
 * store is settled (sealed, merged, renumbered, read): one add_key per
 * counter, after which the store holds exactly what n calls of buckets_add
 * would have left, since the result of adding a multiset does not depend on
 * the order of the additions (buckets.h, "Invariant") and keying at the
 * window's level then re-keying equals keying at the store's level.  The
 * window's new keys are counted against the budget only then, so the table
 * can sit at a finer level than the whole data needs until then; nothing is
 * read from it in between. */

/* The key of window row `row` at the window's level. */
static inline int64_t row_key(const buckets *b, uint64_t row)
{
    if (row >= b->lobe_row[1]) return -(int64_t)(b->lobe_base[1] + row - b->lobe_row[1]);
    if (row >= b->lobe_row[0]) return (int64_t)(b->lobe_base[0] + row - b->lobe_row[0]);
    return 0;
}

/* Moves the window's counts into the table, one add_key per counter (a
 * collapse on the way when the keys outgrow the budget).  0, or -1 when
 * memory runs out (what was moved stays moved: the store is consistent
 * either way). */
static int settle(buckets *b)
{
    if (!b->pending) return 0;
    const size_t nc = b->dense_cells, size = (size_t)b->dense_rows * nc;
    for (size_t i = 0; i < size && b->pending; i++) {
        uint32_t c = b->dense[i];
        if (!c) continue;
        if (add_key(b, row_key(b, i / nc), b->dense_level, (uint32_t)(i % nc), c) != 0) return -1;
        b->dense[i] = 0;
        b->pending -= c;
    }
    b->order_valid = 0;
    return 0;
}

/* Opens the window buckets_window_plan places (buckets_window.c); else
 * tries again once the store has twice the values.  Nothing pending. */
static void dense_open(buckets *b)
{
    uint64_t retry = b->total < DENSE_FIRST ? DENSE_FIRST : 2 * b->total;
    buckets_window w;
    if (!buckets_window_plan(b, &w)) { dense_close(b, retry); return; }
    uint64_t size = w.rows * w.cells;
    if (b->dense_alloc < size) {
        uint32_t *d = realloc(b->dense, (size_t)size * sizeof *d);
        if (!d) { dense_close(b, retry); return; }
        b->dense = d;
        b->dense_alloc = (size_t)size;
    }
    memset(b->dense, 0, (size_t)size * sizeof *b->dense);
    b->lobe_base[0] = w.base[0];
    b->lobe_width[0] = w.width[0];
    b->lobe_row[0] = 1;
    b->lobe_base[1] = w.base[1];
    b->lobe_width[1] = w.width[1];
    b->lobe_row[1] = 1 + w.width[0];
    for (int z = 2; z < 4; z++) { /* key 0: row 0 */
        b->lobe_base[z] = 0;
        b->lobe_width[z] = 1;
        b->lobe_row[z] = 0;
    }
    b->dense_rows = (uint32_t)w.rows;
    b->dense_cells = (uint32_t)w.cells;
    b->dense_level = b->level;
    b->dense_in = b->dense_out = 0;
}

SHEAF_HOT int buckets_add_many(buckets *b, const double *x, const uint32_t *cells, size_t n)
{
    if (!b->dense_rows && b->total >= b->dense_next) dense_open(b);
    if (!b->dense_rows) return add_hashed(b, x, cells, n);
    /* Each counter stays below 2^32: none exceeds pending. */
    if (b->pending + n > UINT32_MAX && settle(b) != 0) return -1;
    enum { PIECE = 256 };
    double rest_x[PIECE];
    uint32_t rest_c[PIECE];
    const unsigned shift = INDEX_SHIFT + (unsigned)b->dense_level;
    const uint32_t nc = b->dense_cells;
    uint64_t base[4], width[4], row[4];
    memcpy(base, b->lobe_base, sizeof base);
    memcpy(width, b->lobe_width, sizeof width);
    memcpy(row, b->lobe_row, sizeof row);
    uint32_t *const cnt = b->dense;
    static const uint32_t no_cells[PIECE]; /* without a target: cell 0 */
    for (size_t at = 0; at < n; at += PIECE) {
        const size_t m = n - at < PIECE ? n - at : PIECE;
        const double *xs = x + at;
        const uint32_t *cs = cells ? cells + at : no_cells;
        uint32_t idx[PIECE];
        unsigned char inside[PIECE];
        size_t nr = 0;
        uint64_t in = 0, bad = 0;
        /* The counter of each value (key_of_bits: the magnitude and sign of
         * its key, its lobe's row), in a loop without branches that the
         * x86-64-v3 copy runs four values at a time; the lobes of key 0
         * (rows 0, width 1) need no lookup.  Magnitudes of values that are
         * not finite lie past every lobe. */
        for (size_t i = 0; i < m; i++) {
            uint64_t u = double_bits(xs[i]), mag = u & MAG_MASK;
            uint64_t mk = (mag >> shift) + (mag != 0);
            uint64_t neg = u >> 63, zero = mk == 0;
            uint64_t lb = neg ? base[1] : base[0], lw = neg ? width[1] : width[0];
            uint64_t lr = neg ? row[1] : row[0];
            lb = zero ? 0 : lb;
            lw = zero ? 1 : lw;
            lr = zero ? 0 : lr;
            uint64_t k = mk - lb;
            inside[i] = (k < lw) & (cs[i] < nc);
            idx[i] = (uint32_t)((lr + k) * nc + cs[i]); /* meaningful when inside */
            bad |= mag >= EXP_ALL_ONES;
        }
        for (size_t i = 0; i < m; i++) {
            if (inside[i]) {
                cnt[idx[i]]++;
                in++;
            } else {
                rest_x[nr] = xs[i];
                rest_c[nr] = cs[i];
                nr++;
            }
        }
        if (bad) { /* a value that is not finite: exactly the calls of buckets_add */
            for (size_t i = 0; i < m; i++)
                if (inside[i]) cnt[idx[i]]--;
            for (size_t i = 0; i < m; i++)
                if (buckets_add(b, xs[i], cs[i], 1) != 0) return -1;
            continue;
        }
        b->pending += in;
        b->total += in;
        b->dense_in += in;
        b->dense_out += nr;
        if (in) b->order_valid = 0;
        if (nr && add_hashed(b, rest_x, rest_c, nr) != 0) return -1;
    }
    /* A window the values have left (a drifting or growing column): the
     * next call opens one over the keys seen by then. */
    if (b->dense_out > DENSE_MISSES && b->dense_out > b->dense_in) {
        if (settle(b) != 0) return -1;
        dense_close(b, b->total);
    }
    return 0;
}

/* Settles the window, and closes it when the table's level has moved on
 * (the next window opens at the new level). */
static int dense_settle(buckets *b)
{
    if (settle(b) != 0) return -1;
    if (b->dense_rows && b->dense_level != b->level) dense_close(b, b->total);
    return 0;
}

/* See buckets_store.h. */
const buckets *buckets_readable(const buckets *b, buckets **tmp)
{
    *tmp = NULL;
    if (!b->pending) return b;
    buckets *c = calloc(1, sizeof *c);
    if (!c) return NULL;
    *c = *b;
    c->slots = malloc(b->cap * sizeof *c->slots);
    c->keys = malloc(b->key_cap * sizeof *c->keys);
    c->order = malloc(ORDER_CAP(b->cap) * sizeof *c->order);
    c->dense = malloc((b->dense_alloc ? b->dense_alloc : 1) * sizeof *c->dense);
    if (!c->slots || !c->keys || !c->order || !c->dense) { buckets_free(c); return NULL; }
    memcpy(c->slots, b->slots, b->cap * sizeof *c->slots);
    memcpy(c->keys, b->keys, b->key_cap * sizeof *c->keys);
    memcpy(c->dense, b->dense, b->dense_alloc * sizeof *c->dense);
    c->order_valid = 0;
    if (settle(c) != 0) { buckets_free(c); return NULL; }
    buckets_seal(c);
    *tmp = c;
    return c;
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
    /* Entries of `from` new to `into` (an upper bound again): the table
     * grows for them alone, not for every entry of `from`, most of which
     * are already there when two parts of one table meet. */
    size_t fresh_entries = 0;
    for (size_t i = 0; i < from->cap; i++) {
        const slot *f = &from->slots[i];
        if (!f->count) continue;
        uint32_t cell = cell_map ? cell_map[id_cell(f->id)] : id_cell(f->id);
        uint64_t id = make_id(rekey(id_key(f->id), steps), cell);
        fresh_entries += !into->slots[slot_find(into->slots, into->cap, into->shift, id)].count;
    }
    while (OVER_LOAD(into->n + fresh_entries, into->cap))
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

static int merge_settled(buckets *into, const buckets *from, const uint32_t *cell_map,
                         uint32_t map_len);

int buckets_merge(buckets *into, const buckets *from, const uint32_t *cell_map, uint32_t map_len)
{
    if (dense_settle(into) != 0) return -1;
    buckets *tmp;
    const buckets *f = buckets_readable(from, &tmp);
    if (!f) return -1;
    int rc = merge_settled(into, f, cell_map, map_len);
    buckets_free(tmp);
    return rc;
}

/* buckets_merge of stores whose windows hold nothing. */
static int merge_settled(buckets *into, const buckets *from, const uint32_t *cell_map,
                         uint32_t map_len)
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
    size_t k = buckets_gather(into, level, NULL, e);
    k += buckets_gather(from, level, cell_map, e + k);
    k = buckets_sort_combine(e, k);
    k = buckets_fit_budget(e, k, &level, into->budget);
    int rc = buckets_rebuild(into, e, k, level);
    free(e);
    return rc;
}

int buckets_map_cells(buckets *b, const uint32_t *cell_map, uint32_t map_len)
{
    /* The window's cells are numbered as the table's: settled first, and
     * closed (the next window counts the new cells). */
    if (settle(b) != 0) return -1;
    dense_close(b, b->total);
    for (size_t i = 0; i < b->cap; i++)
        if (b->slots[i].count && id_cell(b->slots[i].id) >= map_len) return -1;
    /* The same keys and level: only the entry table is rebuilt, each entry
     * under its new id (entries that meet add up, so each key's entry count
     * is recounted); the sort index is left to the next seal. */
    slot *slots = zeroed(b->cap, sizeof *slots);
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

/* The reads below see a store with counts in its window through a settled
 * copy (correct, and slow: seal a store before reading it). */
#define READ_SETTLED(b, tmp, fail)                       \
    buckets *tmp;                                        \
    if (!((b) = buckets_readable((b), &tmp))) return fail

int buckets_level(const buckets *b)
{
    READ_SETTLED(b, tmp, 0);
    int level = b->level;
    buckets_free(tmp);
    return level;
}

uint32_t buckets_budget(const buckets *b) { return b->budget; }
uint64_t buckets_total(const buckets *b) { return b->total; }

size_t buckets_keys(const buckets *b)
{
    READ_SETTLED(b, tmp, 0);
    size_t n = b->nkeys;
    buckets_free(tmp);
    return n;
}

size_t buckets_entries(const buckets *b)
{
    READ_SETTLED(b, tmp, 0);
    size_t n = b->n;
    buckets_free(tmp);
    return n;
}

void buckets_seal(buckets *b)
{
    /* Out of memory while settling, the rest stays in the window and the
     * reads settle a copy (or fail as they say). */
    if (dense_settle(b) != 0) return;
    if (b->order_valid) return;
    buckets_fill_order(b, b->order);
    b->order_valid = 1;
}

int buckets_sealed(const buckets *b) { return b->order_valid && !b->pending; }

buckets_entry buckets_entry_at(const buckets *b, size_t i)
{
    buckets_entry e = {0, 0, 0};
    READ_SETTLED(b, tmp, e);
    const order_item *order;
    order_item *otmp;
    if (i < b->n && buckets_read_order(b, &order, &otmp) == 0) {
        e.key = order[i].key;
        e.cell = order[i].cell;
        e.count = b->slots[order[i].pos].count;
        free(otmp);
    }
    buckets_free(tmp);
    return e;
}
