/* buckets, private part: the store's tables, shared by the store (buckets.c),
 * the placing of its dense window (buckets_window.c), its sorts
 * (buckets_sort.c) and its reads (buckets_read.c: quantiles, the file form).  See buckets.h
 * for the interface and buckets.c for the method. */
#ifndef SHEAF_BUCKETS_STORE_H
#define SHEAF_BUCKETS_STORE_H

#include <stddef.h>
#include <stdint.h>

#include "acc/buckets.h"

#define FIB_MULT 0x9E3779B97F4A7C15ull
#define MIN_CAP 16
#define NO_ID 0x80000000ull /* key INT32_MIN, never produced */
#define ENTRY_WIRE_BYTES 20 /* i64 key, u32 cell, u64 count */

typedef struct {
    uint64_t id;    /* (cell << 32) | (uint32_t)key */
    uint64_t count; /* 0 = empty slot */
} slot;

typedef struct {
    int32_t key;      /* bucket key at the store's level */
    uint32_t entries; /* entries with this key; 0 = empty slot */
} key_slot;

typedef struct {
    int32_t key;   /* sort key, major */
    uint32_t cell; /* sort key, minor */
    uint32_t pos;  /* index into slots */
} order_item;

struct buckets {
    slot *slots;        /* entry table, cap slots */
    size_t cap;         /* power of two */
    unsigned shift;     /* 64 - log2(cap) */
    size_t n;           /* occupied slots (entries) */
    key_slot *keys;     /* per-key entry counts, key_cap slots */
    size_t key_cap;     /* power of two */
    unsigned key_shift; /* 64 - log2(key_cap) */
    size_t nkeys;       /* distinct keys */
    order_item *order;  /* sort index, ORDER_CAP(cap) items allocated */
    int order_valid;    /* order holds all n entries, sorted */
    uint64_t total;     /* sum of all counts */
    uint32_t budget;    /* most distinct keys allowed */
    int level;          /* collapse level of the stored keys */
    uint64_t last_id;   /* id of the last slot hit, NO_ID if none */
    size_t last_pos;    /* its position */
    /* The dense window (buckets.c, "Dense window"): 32-bit counters for the
     * keys it covers at dense_level, by (row of the key) * dense_cells +
     * cell, that buckets_add_many counts into instead of the table.  Row 0
     * is key 0; then the magnitudes [base, base + width) of the positive
     * keys, then those of the negative keys (lobes 0 and 1; lobes 2 and 3
     * are key 0, from +0 and -0).  pending is their sum, already in total;
     * the tables do not hold them until settled. */
    uint32_t *dense;       /* dense_alloc counters */
    size_t dense_alloc;
    uint64_t lobe_base[4]; /* first magnitude of each lobe */
    uint64_t lobe_width[4];
    uint64_t lobe_row[4];  /* row of its first magnitude */
    uint32_t dense_rows;   /* 0: no window */
    uint32_t dense_cells;
    int dense_level;
    uint64_t pending;      /* counts held in the window */
    uint64_t dense_next;   /* total at which a window is next tried */
    uint64_t dense_in, dense_out; /* values counted in and outside the window since it opened */
};

static inline uint64_t make_id(int64_t key, uint32_t cell)
{
    return ((uint64_t)cell << 32) | (uint32_t)(int32_t)key;
}

static inline int64_t id_key(uint64_t id) { return (int32_t)(uint32_t)id; }
static inline uint32_t id_cell(uint64_t id) { return (uint32_t)(id >> 32); }

/* ---- table basics (buckets.c, buckets_sort.c) ---------------------------- */

/* Tables are kept at most 3/4 full (memory matters: one store per column,
 * thousands of columns). */
#define OVER_LOAD(n, cap) (4 * (n) > 3 * (cap))
#define ORDER_CAP(cap) ((cap) / 4 * 3 + 1)

static inline unsigned log2_of(size_t pow2)
{
    unsigned k = 0;
    while (((size_t)1 << k) < pow2) k++;
    return k;
}

/* Smallest power of two >= MIN_CAP that keeps load <= 3/4 for n items. */
static inline size_t cap_for(size_t n)
{
    size_t cap = MIN_CAP;
    while (OVER_LOAD(n, cap)) cap *= 2;
    return cap;
}

/* The slot of id, or the empty slot where it goes (linear probing). */
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

/* The same for a key's entry count. */
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

/* ---- where the dense window goes (buckets_window.c) ---------------------- */

typedef struct {
    uint64_t base[2], width[2]; /* per sign (0 positive, 1 negative): first magnitude, count */
    uint64_t rows, cells;       /* counters: rows (row 0 is key 0, then each sign's) x cells */
} buckets_window;

/* Where b's next window goes, from the entries of its table: 1 with *w set,
 * or 0 when none should be opened now (too few of the values so far would
 * fall in it, too many cells, or no memory for the look). */
int buckets_window_plan(const buckets *b, buckets_window *w);

/* ---- sorting and rebuilding (buckets_sort.c) ----------------------------- */

/* Writes the sort index of b's entries, in (key, cell) order, to out[0..n):
 * never fails (qsort when the radix sort's scratch cannot be had). */
void buckets_fill_order(const buckets *b, order_item *out);
/* Sorts e[0..n) by (key, cell) and sums equal neighbours; the new length. */
size_t buckets_sort_combine(buckets_entry *e, size_t n);
/* Raises *level one step at a time while the sorted e[0..n) has more
 * distinct keys than the budget; the new length. */
size_t buckets_fit_budget(buckets_entry *e, size_t n, int *level, uint32_t budget);
/* Appends b's entries re-keyed to `level` (>= b's level), cells mapped
 * (cell_map NULL: as they are), in slot order: every caller sorts them
 * next.  Returns how many. */
size_t buckets_gather(const buckets *b, int level, const uint32_t *cell_map, buckets_entry *out);

/* The store to read: b itself, or, when its window holds counts, a settled
 * copy in *tmp that the caller frees (b is never written).  NULL when
 * memory for the copy runs out. */
const buckets *buckets_readable(const buckets *b, buckets **tmp);

/* The sort index for a read: the store's own when sealed; else a temporary
 * one in *tmp, which the caller frees (the store is never written).  -1
 * when memory for the temporary index runs out. */
int buckets_read_order(const buckets *b, const order_item **order, order_item **tmp);
/* (key, cell) order of entries, for qsort. */
int buckets_entry_cmp(const void *pa, const void *pb);
/* Replaces b's tables by ones holding the sorted, combined entries e[0..n)
 * at `level`.  b is unchanged on -1. */
int buckets_rebuild(buckets *b, const buckets_entry *e, size_t n, int level);

#endif
