/* buckets, private part: the store's tables, shared by the store (buckets.c)
 * and its reads (buckets_read.c: quantiles, the file form).  See buckets.h
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
