/* tcells: see tcells.h. */
#include "summary/tcells.h"

#include <stdlib.h>
#include <string.h>

#define MAP_ENTRIES (SUMMARY_TARGET_CELLS + 2)

static uint64_t bits_of(double y)
{
    uint64_t u;
    memcpy(&u, &y, sizeof u);
    return u;
}

int64_t tcells_key(double y, int level)
{
    uint64_t u = bits_of(y), mag = u & 0x7FFFFFFFFFFFFFFFull;
    int64_t m = (int64_t)(mag >> level) + (mag != 0);
    return u >> 63 ? -m : m;
}

/* A key one level up. */
static int64_t key_up(int64_t key)
{
    if (key == 0) return 0;
    return key > 0 ? ((key - 1) >> 1) + 1 : -(((-key - 1) >> 1) + 1);
}

/* The largest |key| of a finite value at a level. */
static int64_t key_limit(int level)
{
    return (int64_t)(0x7FEFFFFFFFFFFFFFull >> level) + 1;
}

static size_t slot_of(int64_t key)
{
    return (size_t)(((uint64_t)key * 0x9E3779B97F4A7C15ull) >> 56); /* 256 slots */
}

static void rebuild_lookup(tcells *t)
{
    memset(t->slot_cell, 0, sizeof t->slot_cell);
    for (uint32_t c = 0; c < t->n; c++) {
        size_t i = slot_of(t->key[c]);
        while (t->slot_cell[i]) i = (i + 1) % TCELLS_SLOTS;
        t->slot_key[i] = t->key[c];
        t->slot_cell[i] = c + 1;
    }
}

void tcells_init(tcells *t)
{
    memset(t, 0, sizeof *t);
    t->canonical = 1;
}

void tcells_free(tcells *t)
{
    for (uint32_t e = 0; e < t->epoch && e < TCELLS_MAX_EPOCHS; e++) free(t->map[e]);
    memset(t->map, 0, sizeof t->map);
    t->epoch = 0;
}

static int key_cmp(const void *a, const void *b)
{
    int64_t x = *(const int64_t *)a, y = *(const int64_t *)b;
    return (x > y) - (x < y);
}

/* Raises the level by `steps` (0: none) and renumbers the cells in key
 * order, merging those whose keys meet; map (MAP_ENTRIES) receives old ->
 * new. */
static void renumber(tcells *t, int steps, uint32_t *map)
{
    int64_t old[SUMMARY_TARGET_CELLS + 1], sorted[SUMMARY_TARGET_CELLS + 1];
    uint32_t n = t->n;
    for (uint32_t c = 0; c < n; c++) {
        int64_t k = t->key[c];
        for (int s = 0; s < steps; s++) k = key_up(k);
        old[c] = sorted[c] = k;
    }
    qsort(sorted, n, sizeof *sorted, key_cmp);
    uint32_t m = 0;
    for (uint32_t c = 0; c < n; c++)
        if (!m || sorted[m - 1] != sorted[c]) sorted[m++] = sorted[c];
    map[0] = 0;
    for (uint32_t c = 0; c < n; c++) {
        int64_t *hit = bsearch(&old[c], sorted, m, sizeof *sorted, key_cmp);
        map[c + 1] = (uint32_t)(hit - sorted) + 1;
    }
    memcpy(t->key, sorted, m * sizeof *sorted);
    t->n = m;
    t->level += steps;
    t->canonical = 1;
    rebuild_lookup(t);
}

/* Number of distinct keys one level up. */
static uint32_t distinct_up(const tcells *t, int steps)
{
    int64_t k[SUMMARY_TARGET_CELLS + 1];
    for (uint32_t c = 0; c < t->n; c++) {
        k[c] = t->key[c];
        for (int s = 0; s < steps; s++) k[c] = key_up(k[c]);
    }
    qsort(k, t->n, sizeof *k, key_cmp);
    uint32_t m = 0;
    for (uint32_t c = 0; c < t->n; c++) m += !c || k[c] != k[c - 1];
    return m;
}

/* A new epoch's map, or NULL when out of memory (or past the epochs). */
static uint32_t *new_epoch(tcells *t)
{
    if (t->epoch >= TCELLS_MAX_EPOCHS) return NULL;
    uint32_t *map = malloc(MAP_ENTRIES * sizeof *map);
    if (!map) return NULL;
    t->map[t->epoch] = map;
    t->map_from[t->epoch] = t->n;
    t->epoch++;
    return map;
}

uint32_t tcells_cell(tcells *t, double y)
{
    int64_t key = tcells_key(y, t->level);
    size_t i = slot_of(key);
    for (; t->slot_cell[i]; i = (i + 1) % TCELLS_SLOTS)
        if (t->slot_key[i] == key) return t->slot_cell[i];
    t->key[t->n] = key;
    t->slot_key[i] = key;
    t->slot_cell[i] = ++t->n;
    if (t->n > 1 && key < t->key[t->n - 2]) t->canonical = 0;
    if (t->n <= SUMMARY_TARGET_CELLS) return t->n;
    /* Over the budget: the least rise that fits, as one epoch. */
    int steps = 1;
    while (t->level + steps < TCELLS_MAX_LEVEL && distinct_up(t, steps) > SUMMARY_TARGET_CELLS)
        steps++;
    uint32_t *map = new_epoch(t);
    if (!map) return 0;
    renumber(t, steps, map);
    return tcells_cell(t, y);
}

int tcells_canonical(tcells *t)
{
    if (t->canonical) return 0;
    uint32_t *map = new_epoch(t);
    if (!map) return -1;
    renumber(t, 0, map);
    return 0;
}

void tcells_map_since(const tcells *t, uint32_t from, uint32_t to, uint32_t *out, uint32_t *len)
{
    /* Start from the identity of epoch from's cells. */
    uint32_t n = from < to ? t->map_from[from] : 0;
    for (uint32_t c = 0; c < MAP_ENTRIES; c++) out[c] = c;
    if (from >= to) { *len = MAP_ENTRIES; return; }
    for (uint32_t c = n + 1; c < MAP_ENTRIES; c++) out[c] = 0;
    for (uint32_t e = from; e < to; e++) {
        const uint32_t *m = t->map[e];
        for (uint32_t c = 1; c <= n; c++) out[c] = out[c] ? m[out[c]] : 0;
    }
    *len = n + 1;
}

int tcells_unite(tcells *into, const tcells *from, uint32_t *into_map, uint32_t *from_map)
{
    int level = into->level > from->level ? into->level : from->level;
    /* Both at the common level, united. */
    int64_t keys[2 * SUMMARY_TARGET_CELLS + 2], a[SUMMARY_TARGET_CELLS + 1],
        b[SUMMARY_TARGET_CELLS + 1];
    uint32_t n = 0;
    for (uint32_t c = 0; c < into->n; c++) {
        a[c] = into->key[c];
        for (int s = into->level; s < level; s++) a[c] = key_up(a[c]);
        keys[n++] = a[c];
    }
    for (uint32_t c = 0; c < from->n; c++) {
        b[c] = from->key[c];
        for (int s = from->level; s < level; s++) b[c] = key_up(b[c]);
        keys[n++] = b[c];
    }
    qsort(keys, n, sizeof *keys, key_cmp);
    uint32_t m = 0;
    for (uint32_t c = 0; c < n; c++)
        if (!m || keys[m - 1] != keys[c]) keys[m++] = keys[c];
    /* Raised while over the budget. */
    int steps = 0;
    for (;;) {
        uint32_t d = 0;
        int64_t prev = 0;
        for (uint32_t c = 0; c < m; c++) {
            int64_t k = keys[c];
            for (int s = 0; s < steps; s++) k = key_up(k);
            d += !c || k != prev;
            prev = k;
        }
        if (d <= SUMMARY_TARGET_CELLS || level + steps >= TCELLS_MAX_LEVEL) break;
        steps++;
    }
    uint32_t out = 0;
    for (uint32_t c = 0; c < m; c++) {
        int64_t k = keys[c];
        for (int s = 0; s < steps; s++) k = key_up(k);
        if (!out || keys[out - 1] != k) keys[out++] = k;
    }
    into_map[0] = from_map[0] = 0;
    for (int side = 0; side < 2; side++) {
        const int64_t *old = side ? b : a;
        uint32_t cnt = side ? from->n : into->n, *map = side ? from_map : into_map;
        for (uint32_t c = 0; c < cnt; c++) {
            int64_t k = old[c];
            for (int s = 0; s < steps; s++) k = key_up(k);
            int64_t *hit = bsearch(&k, keys, out, sizeof *keys, key_cmp);
            map[c + 1] = (uint32_t)(hit - keys) + 1;
        }
    }
    memcpy(into->key, keys, out * sizeof *keys);
    into->n = out;
    into->level = level + steps;
    into->canonical = 1;
    rebuild_lookup(into);
    return 0;
}

int tcells_from_keys(tcells *t, int level, const int64_t *keys, size_t n, uint32_t *cells)
{
    tcells_init(t);
    int64_t *k = malloc((n ? n : 1) * sizeof *k);
    if (!k) return -1;
    int steps = 0;
    for (;;) {
        for (size_t i = 0; i < n; i++) {
            k[i] = keys[i];
            for (int s = 0; s < steps; s++) k[i] = key_up(k[i]);
        }
        qsort(k, n, sizeof *k, key_cmp);
        size_t m = 0;
        for (size_t i = 0; i < n; i++)
            if (!m || k[m - 1] != k[i]) k[m++] = k[i];
        if (m <= SUMMARY_TARGET_CELLS || level + steps >= TCELLS_MAX_LEVEL) {
            memcpy(t->key, k, m * sizeof *k);
            t->n = (uint32_t)m;
            break;
        }
        steps++;
    }
    t->level = level + steps;
    for (size_t i = 0; i < n; i++) {
        int64_t x = keys[i];
        for (int s = 0; s < steps; s++) x = key_up(x);
        int64_t *hit = bsearch(&x, t->key, t->n, sizeof *t->key, key_cmp);
        cells[i] = (uint32_t)(hit - t->key) + 1;
    }
    free(k);
    rebuild_lookup(t);
    return 0;
}

void tcells_write(const tcells *t, wire_writer *w)
{
    wire_put_u8(w, (uint8_t)t->level);
    wire_put_u32(w, t->n);
    for (uint32_t c = 0; c < t->n; c++) wire_put_i64(w, t->key[c]);
}

int tcells_read(tcells *t, wire_reader *r)
{
    tcells_init(t);
    uint32_t level = wire_get_u8(r), n = wire_get_u32(r);
    if (r->failed || level > TCELLS_MAX_LEVEL || n > SUMMARY_TARGET_CELLS) {
        r->failed = 1;
        return -1;
    }
    t->level = (int)level;
    int64_t limit = key_limit(t->level);
    for (uint32_t c = 0; c < n; c++) {
        t->key[c] = wire_get_i64(r);
        if (t->key[c] < -limit || t->key[c] > limit || (c && t->key[c] <= t->key[c - 1]))
            r->failed = 1;
    }
    if (r->failed) return -1;
    t->n = n;
    rebuild_lookup(t);
    return 0;
}
