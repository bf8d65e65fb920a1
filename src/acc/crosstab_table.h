/* crosstab_table: the private part of the per-value table (crosstab.h is
 * the public one): the record and key tables and the helpers that
 * crosstab.c (create, add, order, queries, file) and crosstab_merge.c
 * (merge, counts to values) share.  Nothing outside those two files
 * includes it.
 */
#ifndef SHEAF_CROSSTAB_TABLE_H
#define SHEAF_CROSSTAB_TABLE_H

#include <stddef.h>
#include <stdint.h>

#include "acc/crosstab.h"
#include "acc/moments.h"

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

/* ---- key table ---- */

static inline uint32_t find_key(const crosstab *t, uint64_t key)
{
    uint32_t mask = (UINT32_C(1) << t->key_bits) - 1;
    uint32_t i = (uint32_t)((key * CROSSTAB_FIB) >> (64 - t->key_bits));
    while (t->key_slots[i] != CROSSTAB_OVERFLOW_KEY && t->key_slots[i] != key) i = (i + 1) & mask;
    return i;
}

static inline int key_present(const crosstab *t, uint64_t key)
{
    return t->key_bits && t->key_slots[find_key(t, key)] == key;
}

/* ---- values ---- */

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

/* ---- shared by crosstab.c and crosstab_merge.c ---- */

/* 1 when `entries` records fit the table without growing it. */
int crosstab_records_fit(const crosstab *t, uint64_t entries);
/* Grows the record table for `entries` records; 0, or -1 on OOM. */
int crosstab_reserve_records(crosstab *t, uint64_t entries);
/* Fills a new record at r (an empty slot). */
void crosstab_init_record(crosstab *t, record *r, uint64_t key, uint32_t cell);
/* Switches an empty table to a mode (counts or values); -1 on OOM or when the
 * table already holds the other mode. */
int crosstab_begin_mode(crosstab *t, int mode);
/* Grows the key table for `keys` exact keys; 0, or -1 on OOM. */
int crosstab_reserve_keys(crosstab *t, uint64_t keys);
/* Adds an exact key (room reserved). */
void crosstab_insert_key(crosstab *t, uint64_t key);
/* The canonical order for a read: the sealed index, or a temporary one in
 * *tmp that the caller frees; -1 on OOM. */
int crosstab_read_order(const crosstab *t, const order_ref **order, order_ref **tmp);

#endif
