/* values: exact value counts with a bounded table (see values.h).
 *
 * Update rule.  The key is the caller's 64-bit hash.  An open-addressing
 * table with linear probing holds (hash, count) pairs; the home slot is the
 * top bits of hash * 2^64/phi (Fibonacci hashing, Knuth TAOCP vol. 3, 6.4),
 * which spreads even structured keys.  count == 0 marks an empty slot, so
 * every hash, 0 included, is a valid key.  A hit is one multiply, one probe
 * and an increment.  A new key is inserted while fewer than max_levels
 * entries exist; the table doubles when the load would pass 3/4, so it never
 * grows beyond twice the space max_levels needs.  Afterwards a new key adds to
 * overflow slot hash % VALUES_OVERFLOW_SLOTS and sets the overflowed flag.
 * Labels are copied, truncated to label_bytes, into one growing arena; a
 * parallel array per slot holds (offset, length).
 *
 * Merge rule.  Entries of `from`, visited in canonical (hash-ascending) order,
 * add to matching entries of `into`; absent ones are inserted while room
 * remains, the rest add to into's overflow slot for their hash; overflow
 * slots then add slot-wise.  Labels: into's label when the entry exists,
 * otherwise from's (truncated to into's label_bytes).  The room needed is
 * reserved before anything changes, so a failed merge leaves `into` intact.
 * Without overflow the result equals the table of the concatenated input.
 *
 * Canonical order.  A sorted index of (hash, slot) serves the ordered reads
 * (entry_at, write, and merge when the result depends on the order).  An
 * insert invalidates it, count increments do not; values_seal rebuilds it
 * and values_read leaves it built.  A read of an unsealed table sorts into a
 * temporary index of its own: functions taking a const table never write
 * to it, so concurrent readers may share one.
 *
 * Serialization (little-endian, wire.h):
 *     u32 max_levels, u32 label_bytes, u8 overflowed, u32 levels,
 *     levels x (u64 hash, u64 count >= 1, str label <= label_bytes),
 *         hashes strictly ascending,
 *     VALUES_OVERFLOW_SLOTS x u64 count,
 * with overflowed == 1 exactly when some overflow slot is non-zero.
 */
#include "io/clones.h"
#include "acc/values.h"

#include "acc/radix.h"
#include "acc/zeroed.h"

#include <stdlib.h>
#include <string.h>

#define VALUES_MIN_SLOTS 16u
#define VALUES_FIB UINT64_C(0x9E3779B97F4A7C15)

typedef struct {
    uint64_t hash;  /* key (meaningful only when count > 0) */
    uint64_t count; /* occurrences; 0 = empty slot */
} slot;

typedef struct {
    uint32_t offset; /* start of the label in the arena */
    uint32_t len;    /* bytes of label */
} label_ref;

typedef struct {
    uint64_t hash; /* sort key */
    uint32_t slot; /* where the entry lives */
} order_ref;

struct values {
    uint32_t max_levels;  /* exact entries allowed */
    uint32_t label_bytes; /* label truncation length */
    uint32_t levels;      /* entries held */
    uint32_t bits;        /* log2 of the slot count (0 = nothing allocated) */
    slot *slots;          /* 2^bits slots */
    label_ref *labels;    /* 2^bits label refs, parallel to slots */
    char *arena;          /* label bytes */
    size_t arena_len;     /* bytes used */
    size_t arena_cap;     /* bytes allocated */
    order_ref *order;     /* canonical index, valid when order_valid */
    uint32_t order_cap;   /* order entries allocated */
    int order_valid;      /* order matches the current keys */
    int overflowed;       /* some value did not fit */
    uint64_t total;       /* all counted cells */
    uint64_t overflow_total;                   /* cells in overflow slots */
    uint64_t overflow[VALUES_OVERFLOW_SLOTS];  /* hashed overflow counters */
    uint64_t *filter;     /* membership filter of a full table, or NULL */
    uint32_t filter_words; /* 64-bit words of filter (power of two) */
    int filter_valid;     /* filter holds exactly the current keys */
    const values *known;  /* values_admit_after: keys that enter whenever they come */
    uint32_t room;        /* places left for keys not in known */
};

static inline uint32_t home_slot(uint64_t hash, uint32_t bits)
{
    return (uint32_t)((hash * VALUES_FIB) >> (64 - bits));
}

static inline uint32_t slot_count(const values *v)
{
    return v->bits ? UINT32_C(1) << v->bits : 0;
}

/* Slot of hash, or of the empty slot where it would go.  Needs bits > 0. */
static inline uint32_t find_slot(const values *v, uint64_t hash)
{
    uint32_t mask = slot_count(v) - 1;
    uint32_t i = home_slot(hash, v->bits);
    for (;;) {
        const slot *s = &v->slots[i];
        if (!s->count || s->hash == hash) return i;
        i = (i + 1) & mask;
    }
}

/* Makes room for `entries` keys at load <= 3/4.  Returns 0 or -1. */
static int reserve_entries(values *v, uint32_t entries)
{
    uint32_t bits = v->bits ? v->bits : 4;
    while (bits < 31 && (uint64_t)entries * 4 > ((uint64_t)1 << bits) * 3) bits++;
    if ((uint64_t)entries * 4 > ((uint64_t)1 << bits) * 3) return -1;
    if (bits == v->bits) return 0;

    size_t n = (size_t)1 << bits;
    slot *slots = zeroed(n, sizeof *slots);
    label_ref *labels = zeroed(n, sizeof *labels);
    if (!slots || !labels) { free(slots); free(labels); return -1; }

    uint32_t old_n = slot_count(v);
    slot *old_slots = v->slots;
    label_ref *old_labels = v->labels;
    v->slots = slots;
    v->labels = labels;
    v->bits = bits;
    for (uint32_t i = 0; i < old_n; i++) {
        if (!old_slots[i].count) continue;
        uint32_t j = find_slot(v, old_slots[i].hash);
        slots[j] = old_slots[i];
        labels[j] = old_labels[i];
    }
    free(old_slots);
    free(old_labels);
    v->order_valid = 0;
    return 0;
}

/* Makes room for `more` label bytes.  Offsets are u32: the arena stops at
 * 4 GiB.  Returns 0 or -1. */
static int reserve_arena(values *v, size_t more)
{
    if (more > (size_t)UINT32_MAX - v->arena_len) return -1;
    size_t need = v->arena_len + more;
    if (need <= v->arena_cap) return 0;
    size_t cap = v->arena_cap ? v->arena_cap : 256;
    while (cap < need) cap = cap > SIZE_MAX / 2 ? need : cap * 2;
    char *p = realloc(v->arena, cap);
    if (!p) return -1;
    v->arena = p;
    v->arena_cap = cap;
    return 0;
}

/* Fills empty slot i with a new key; room (slots and arena) is reserved. */
static void insert_at(values *v, uint32_t i, uint64_t hash, uint64_t count,
                      const char *text, size_t len)
{
    if (len > v->label_bytes) {
        len = v->label_bytes;
        /* Never cut a UTF-8 sequence: back off over continuation bytes. */
        while (len && ((unsigned char)text[len] & 0xC0) == 0x80) len--;
    }
    v->slots[i].hash = hash;
    v->slots[i].count = count;
    v->labels[i].offset = (uint32_t)v->arena_len;
    v->labels[i].len = (uint32_t)len;
    if (len) memcpy(v->arena + v->arena_len, text, len);
    v->arena_len += len;
    v->levels++;
    v->order_valid = 0;
    v->filter_valid = 0;
}

static void add_overflow(values *v, uint64_t hash, uint64_t count)
{
    v->overflow[hash % VALUES_OVERFLOW_SLOTS] += count;
    v->overflow_total += count;
    v->overflowed = 1;
}

values *values_create(uint32_t max_levels, uint32_t label_bytes)
{
    values *v = calloc(1, sizeof *v);
    if (!v) return NULL;
    v->max_levels = max_levels;
    v->label_bytes = label_bytes;
    return v;
}

void values_free(values *v)
{
    if (!v) return;
    free(v->slots);
    free(v->labels);
    free(v->arena);
    free(v->order);
    free(v->filter);
    free(v);
}

void values_reset(values *v)
{
    if (v->slots) memset(v->slots, 0, (size_t)slot_count(v) * sizeof *v->slots);
    v->levels = 0;
    v->arena_len = 0;
    v->order_valid = 0;
    v->filter_valid = 0;
    v->overflowed = 0;
    v->total = 0;
    v->overflow_total = 0;
    memset(v->overflow, 0, sizeof v->overflow);
}

/* Slow path of values_add: the key is absent. */
static int add_new(values *v, uint64_t hash, const char *text, size_t len)
{
    int full = v->levels >= v->max_levels;
    if (!full && v->known && !values_count_of(v->known, hash)) { /* a key of this part's own */
        if (v->room) v->room--;
        else full = 1;
    }
    if (full) {
        add_overflow(v, hash, 1);
        v->total++;
        return 0;
    }
    size_t label_len = len < v->label_bytes ? len : v->label_bytes;
    if (reserve_entries(v, v->levels + 1) || reserve_arena(v, label_len)) return -1;
    insert_at(v, find_slot(v, hash), hash, 1, text, label_len);
    v->total++;
    return 0;
}

int values_add(values *v, uint64_t hash, const char *text, size_t len)
{
    if (v->bits) {
        uint32_t i = find_slot(v, hash);
        if (v->slots[i].count) {
            v->slots[i].count++;
            v->total++;
            return 0;
        }
    }
    return add_new(v, hash, text, len);
}

/* The filter bits of a hash: two bits of one word (a blocked Bloom filter,
 * Putze, Sanders & Singler 2007), from hash bits the home slot barely
 * depends on. */
static inline uint64_t filter_bits(uint64_t hash)
{
    return (UINT64_C(1) << (hash & 63)) | (UINT64_C(1) << ((hash >> 6) & 63));
}

#define FILTER_CACHED_WORDS 4096 /* 32 KiB */
#define SLOTS_CACHED_BITS 10      /* 1,024 slots of 16 bytes: 16 KiB */

static inline uint32_t filter_word(const values *v, uint64_t hash)
{
    return (uint32_t)(hash >> 12) & (v->filter_words - 1);
}

/* Builds the membership filter of a full table: 16 bits per key, so that
 * with two bits per key about 1.4% of absent keys still probe the table.
 * Returns 0 or -1 (out of memory: the caller simply probes). */
static int build_filter(values *v)
{
    uint32_t words = 1;
    while ((uint64_t)words * 64 < (uint64_t)v->levels * 16 && words < (UINT32_C(1) << 26)) words *= 2;
    if (words != v->filter_words) {
        uint64_t *f = realloc(v->filter, (size_t)words * sizeof *f);
        if (!f) return -1;
        v->filter = f;
        v->filter_words = words;
    }
    memset(v->filter, 0, (size_t)words * sizeof *v->filter);
    uint32_t n = slot_count(v);
    for (uint32_t i = 0; i < n; i++)
        if (v->slots[i].count) v->filter[filter_word(v, v->slots[i].hash)] |= filter_bits(v->slots[i].hash);
    v->filter_valid = 1;
    return 0;
}

SHEAF_HOT long values_add_many(values *v, const uint64_t *hash, const char *const *text,
                     const uint32_t *len, size_t n, int stop_at_overflow)
{
    enum { PREFETCH = 8 };
    uint64_t hits = 0;
    size_t i = 0;
    /* A full table takes no new keys, and in a high-cardinality column most
     * cells are new: a filter answers those without probing. */
    if (v->levels >= v->max_levels && v->overflowed && v->bits &&
        (v->filter_valid || build_filter(v) == 0)) {
        /* A filter within the L1 cache (a table of up to 2,048 levels) is
         * not worth a prefetch per cell. */
        const int fetch = v->filter_words > FILTER_CACHED_WORDS;
        uint64_t spilled = 0;
        for (; i < n; i++) {
            uint64_t h = hash[i];
            if (fetch && i + PREFETCH < n)
                __builtin_prefetch(&v->filter[filter_word(v, hash[i + PREFETCH])]);
            uint64_t b = filter_bits(h);
            if ((v->filter[filter_word(v, h)] & b) == b) {
                slot *s = &v->slots[find_slot(v, h)];
                if (s->count) {
                    s->count++;
                    continue;
                }
            }
            v->overflow[h % VALUES_OVERFLOW_SLOTS]++;
            spilled++;
        }
        v->overflow_total += spilled;
        v->total += n;
        return (long)n;
    }
    /* Slots within the L1 cache (a table of up to 1,024 of them) are not
     * worth a prefetch per cell either. */
    const int fetch_slots = v->bits > SLOTS_CACHED_BITS;
    while (i < n) {
        uint64_t h = hash[i];
        if (v->bits) {
            if (fetch_slots && i + PREFETCH < n)
                __builtin_prefetch(&v->slots[home_slot(hash[i + PREFETCH], v->bits)]);
            slot *s = &v->slots[find_slot(v, h)];
            if (s->count) {
                s->count++;
                hits++;
                i++;
                continue;
            }
        }
        i++;
        if (v->levels >= v->max_levels && v->overflowed) { /* full: the common miss */
            v->overflow[h % VALUES_OVERFLOW_SLOTS]++;
            v->overflow_total++;
            hits++;
            continue;
        }
        int was = v->overflowed;
        if (add_new(v, h, text[i - 1], len[i - 1]) != 0) { v->total += hits; return -1; }
        if (stop_at_overflow && !was && v->overflowed) break;
    }
    v->total += hits;
    return (long)i;
}

static int order_cmp(const void *a, const void *b)
{
    uint64_t x = ((const order_ref *)a)->hash, y = ((const order_ref *)b)->hash;
    return (x > y) - (x < y);
}

#define RADIX_MIN 256 /* below this many entries qsort is as fast */

/* Writes the canonical index of v's entries to out[0..levels): by hash,
 * with the radix sort when its scratch can be had (a table of 1024 entries
 * sorts in about a twentieth of qsort's instructions), else qsort, so this
 * never fails.  Hashes are distinct, so both give the one order. */
static void fill_order(const values *v, order_ref *out)
{
    uint32_t k = 0, n = slot_count(v);
    for (uint32_t i = 0; i < n; i++) {
        if (!v->slots[i].count) continue;
        out[k].hash = v->slots[i].hash;
        out[k].slot = i;
        k++;
    }
    radix_pair *pairs = k >= RADIX_MIN ? malloc(2 * (size_t)k * sizeof *pairs) : NULL;
    if (pairs) {
        for (uint32_t i = 0; i < k; i++) pairs[i] = (radix_pair){out[i].hash, out[i].slot};
        const radix_pair *sorted = radix_sort_pairs(pairs, pairs + k, k);
        for (uint32_t i = 0; i < k; i++) out[i] = (order_ref){sorted[i].k, sorted[i].i};
        free(pairs);
    } else if (k > 1) {
        qsort(out, k, sizeof *out, order_cmp);
    }
}

int values_seal(values *v)
{
    if (v->order_valid) return 0;
    if (v->levels > v->order_cap) {
        order_ref *p = realloc(v->order, (size_t)v->levels * sizeof *p);
        if (!p) return -1;
        v->order = p;
        v->order_cap = v->levels;
    }
    fill_order(v, v->order);
    v->order_valid = 1;
    return 0;
}

int values_sealed(const values *v) { return v->order_valid; }

/* The canonical index for a read: the table's own when sealed; else a
 * temporary one in *tmp, which the caller frees (the table is never
 * written).  -1 when memory for the temporary index runs out. */
static int read_order(const values *v, const order_ref **order, order_ref **tmp)
{
    *tmp = NULL;
    *order = v->order;
    if (v->order_valid) return 0;
    *order = *tmp = malloc((v->levels ? v->levels : 1) * sizeof **tmp);
    if (!*tmp) return -1;
    fill_order(v, *tmp);
    return 0;
}

static values_entry entry_of(const values *v, uint32_t i)
{
    values_entry e;
    e.hash = v->slots[i].hash;
    e.count = v->slots[i].count;
    e.label = v->arena ? v->arena + v->labels[i].offset : "";
    e.label_len = v->labels[i].len;
    return e;
}

/* The k-th entry of `from` to visit in a merge: canonical order when `into`
 * may run out of room (the result then depends on the order), slot order
 * otherwise (every entry fits, so any order gives the same table). */
static uint32_t merge_slot(const values *from, const order_ref *canonical, uint32_t k,
                           uint32_t *cursor)
{
    if (canonical) return canonical[k].slot;
    while (from->slots[*cursor].count == 0) (*cursor)++;
    return (*cursor)++;
}

int values_merge(values *into, const values *from)
{
    uint32_t free_levels = into->max_levels > into->levels ? into->max_levels - into->levels : 0;
    order_ref *tmp = NULL;
    const order_ref *canonical = NULL;
    if (free_levels > 0 && from->levels > free_levels && read_order(from, &canonical, &tmp))
        return -1;

    /* Pass 1: how many keys and label bytes will be inserted. */
    uint32_t room = into->max_levels > into->levels ? into->max_levels - into->levels : 0;
    uint32_t inserts = 0, cursor = 0;
    size_t label_total = 0;
    for (uint32_t k = 0; k < from->levels && inserts < room; k++) {
        uint32_t fi = merge_slot(from, canonical, k, &cursor);
        if (into->bits && into->slots[find_slot(into, from->slots[fi].hash)].count) continue;
        uint32_t len = from->labels[fi].len;
        label_total += len < into->label_bytes ? len : into->label_bytes;
        inserts++;
    }
    if (inserts && (reserve_entries(into, into->levels + inserts) ||
                    reserve_arena(into, label_total))) {
        free(tmp);
        return -1;
    }

    /* Pass 2: cannot fail.  `from` may be `into`; then every key is found
     * and nothing is inserted, so from's index stays valid. */
    uint32_t from_levels = from->levels;
    uint64_t from_total = from->total, from_overflow_total = from->overflow_total;
    cursor = 0;
    for (uint32_t k = 0; k < from_levels; k++) {
        uint32_t fi = merge_slot(from, canonical, k, &cursor);
        uint64_t hash = from->slots[fi].hash, count = from->slots[fi].count;
        uint32_t i = into->bits ? find_slot(into, hash) : 0;
        if (into->bits && into->slots[i].count) {
            into->slots[i].count += count;
        } else if (into->levels < into->max_levels) {
            const char *text = from->arena ? from->arena + from->labels[fi].offset : "";
            insert_at(into, i, hash, count, text, from->labels[fi].len);
        } else {
            add_overflow(into, hash, count);
        }
    }
    for (uint32_t s = 0; s < VALUES_OVERFLOW_SLOTS; s++) into->overflow[s] += from->overflow[s];
    into->overflow_total += from_overflow_total;
    if (from->overflowed) into->overflowed = 1;
    into->total += from_total;
    free(tmp);
    return 0;
}

void values_admit_after(values *v, const values *known)
{
    v->known = known;
    v->room = known->levels < v->max_levels ? v->max_levels - known->levels : 0;
}

uint32_t values_levels(const values *v) { return v->levels; }
uint32_t values_max_levels(const values *v) { return v->max_levels; }
uint32_t values_label_bytes(const values *v) { return v->label_bytes; }
int values_overflowed(const values *v) { return v->overflowed; }
uint64_t values_overflow_total(const values *v) { return v->overflow_total; }
uint64_t values_total(const values *v) { return v->total; }

uint64_t values_count_of(const values *v, uint64_t hash)
{
    if (!v->bits) return 0;
    return v->slots[find_slot(v, hash)].count;
}

values_entry values_entry_at(const values *v, uint32_t i)
{
    values_entry e = {0, 0, "", 0, 0};
    const order_ref *order;
    order_ref *tmp;
    if (i >= v->levels || read_order(v, &order, &tmp)) return e;
    e = entry_of(v, order[i].slot);
    free(tmp);
    return e;
}

void values_for_each_hash(const values *v, void (*fn)(void *ctx, uint64_t hash), void *ctx)
{
    uint32_t n = slot_count(v);
    for (uint32_t i = 0; i < n; i++)
        if (v->slots[i].count) fn(ctx, v->slots[i].hash);
}

/* Top-k order: count descending, then hash ascending (a total order, since
 * hashes are unique).  Returns 1 when a ranks before b. */
static int top_before(const values_entry *a, const values_entry *b)
{
    return a->count != b->count ? a->count > b->count : a->hash < b->hash;
}

/* out[0..n) is a heap whose root is the entry ranking last. */
static void heap_sift_down(values_entry *h, size_t n, size_t i)
{
    for (;;) {
        size_t l = 2 * i + 1, r = l + 1, worst = i;
        if (l < n && top_before(&h[worst], &h[l])) worst = l;
        if (r < n && top_before(&h[worst], &h[r])) worst = r;
        if (worst == i) return;
        values_entry t = h[i]; h[i] = h[worst]; h[worst] = t;
        i = worst;
    }
}

static void heap_sift_up(values_entry *h, size_t i)
{
    while (i > 0) {
        size_t p = (i - 1) / 2;
        if (!top_before(&h[p], &h[i])) return;
        values_entry t = h[i]; h[i] = h[p]; h[p] = t;
        i = p;
    }
}

size_t values_top(const values *v, size_t k, values_entry *out)
{
    /* A bounded heap in `out`: O(levels log k) and no allocation. */
    size_t n = 0, slots = slot_count(v);
    if (!k) return 0;
    for (size_t i = 0; i < slots; i++) {
        if (!v->slots[i].count) continue;
        values_entry e = entry_of(v, (uint32_t)i);
        if (n < k) {
            out[n] = e;
            heap_sift_up(out, n++);
        } else if (top_before(&e, &out[0])) {
            out[0] = e;
            heap_sift_down(out, n, 0);
        }
    }
    /* Heap sort: repeatedly move the last-ranked root to the end. */
    for (size_t m = n; m > 1; m--) {
        values_entry t = out[0]; out[0] = out[m - 1]; out[m - 1] = t;
        heap_sift_down(out, m - 1, 0);
    }
    return n;
}

void values_write(const values *v, wire_writer *w)
{
    const order_ref *order;
    order_ref *tmp;
    if (read_order(v, &order, &tmp)) { w->failed = 1; return; }
    wire_put_u32(w, v->max_levels);
    wire_put_u32(w, v->label_bytes);
    wire_put_u8(w, (uint8_t)(v->overflowed != 0));
    wire_put_u32(w, v->levels);
    for (uint32_t k = 0; k < v->levels; k++) {
        values_entry e = entry_of(v, order[k].slot);
        wire_put_u64(w, e.hash);
        wire_put_u64(w, e.count);
        wire_put_str(w, e.label, e.label_len);
    }
    for (uint32_t s = 0; s < VALUES_OVERFLOW_SLOTS; s++) wire_put_u64(w, v->overflow[s]);
    free(tmp);
}

static values *read_fail(values *v, wire_reader *r)
{
    r->failed = 1;
    values_free(v);
    return NULL;
}

values *values_read(wire_reader *r)
{
    uint32_t max_levels = wire_get_u32(r);
    uint32_t label_bytes = wire_get_u32(r);
    uint8_t overflowed = wire_get_u8(r);
    uint32_t levels = wire_get_u32(r);
    /* Each entry takes at least 20 bytes: check before allocating for it. */
    if (r->failed || overflowed > 1 || levels > max_levels ||
        !wire_need(r, (size_t)levels * 20 + 8 * VALUES_OVERFLOW_SLOTS))
        return read_fail(NULL, r);

    values *v = values_create(max_levels, label_bytes);
    if (!v) return read_fail(v, r);
    if (levels) {
        /* The input is in canonical order: it becomes the index as read. */
        v->order = malloc((size_t)levels * sizeof *v->order);
        if (!v->order || reserve_entries(v, levels)) return read_fail(v, r);
        v->order_cap = levels;
    }
    for (uint32_t k = 0; k < levels; k++) {
        uint64_t hash = wire_get_u64(r);
        uint64_t count = wire_get_u64(r);
        size_t len = 0;
        const char *label = wire_get_str(r, &len, label_bytes);
        if (r->failed || count == 0 || (k > 0 && hash <= v->order[k - 1].hash) ||
            count > UINT64_MAX - v->total || reserve_arena(v, len))
            return read_fail(v, r);
        uint32_t i = find_slot(v, hash);
        insert_at(v, i, hash, count, label, len);
        v->total += count;
        v->order[k].hash = hash;
        v->order[k].slot = i;
    }
    for (uint32_t s = 0; s < VALUES_OVERFLOW_SLOTS; s++) {
        uint64_t c = wire_get_u64(r);
        if (c > UINT64_MAX - v->total) return read_fail(v, r);
        v->overflow[s] = c;
        v->overflow_total += c;
        v->total += c;
    }
    if (r->failed || overflowed != (v->overflow_total > 0)) return read_fail(v, r);
    v->overflowed = overflowed;
    v->order_valid = 1;
    return v;
}
