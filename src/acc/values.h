/* values: the value table of one column.
 *
 * Exact counts for up to `max_levels` distinct values, keyed by a 64-bit hash
 * of the value's raw text (XXH3).
 * Once the table is full, further new values fall into VALUES_OVERFLOW_SLOTS
 * hashed overflow counters (slot = hash % slots) and the table is marked
 * overflowed: counts of values already in the table stay exact, the overflow
 * counters keep the total exact, and per-value counts beyond the table are
 * lost.  A label (the raw text, truncated to `label_bytes`) is kept for each
 * entry, first seen wins, so the most frequent values can be displayed.
 *
 * Merge rule: entries of `from` add to matching entries of `into`; new ones
 * are inserted while room remains, the rest go to the overflow counters (and
 * `from`'s overflow counters add slot-wise).  Without overflow the merge is
 * exact and order-independent.  Serialization is canonical (entries sorted by
 * hash), so equal tables serialize to equal bytes.
 *
 * Threads: a table is not locked.  Ordered reads (values_entry_at,
 * values_write, and values_merge's reads of `from` when into may fill up) go
 * through a canonical index that an insert invalidates; values_seal rebuilds
 * it and values_read leaves it built.  Every function taking a const table
 * only reads it, so any number of threads may read one table at once while
 * nobody updates it.  A read of an unsealed table is still correct but sorts
 * the entries into a temporary index first (O(n log n) per call, and it can
 * fail for memory): seal a table before reading it many times.
 */
#ifndef SHEAF_VALUES_H
#define SHEAF_VALUES_H

#include <stddef.h>
#include <stdint.h>

#include "acc/wire.h"

#define VALUES_OVERFLOW_SLOTS 64

typedef struct values values;

typedef struct {
    uint64_t hash;      /* key */
    uint64_t count;     /* exact occurrences */
    const char *label;  /* first-seen text, not terminated */
    uint32_t label_len; /* bytes of label */
    int cut;            /* summary_top: the label is the start of a longer text */
} values_entry;

/* Bytes of s[0..len) without a UTF-8 sequence cut at its end (a label cut
 * at label_bytes may end inside one). */
static inline uint32_t values_whole_utf8(const char *s, uint32_t len)
{
    uint32_t i = len, back = 0;
    while (i && back < 4 && ((unsigned char)s[i - 1] & 0xC0) == 0x80) { i--; back++; }
    if (!i || !((unsigned char)s[i - 1] & 0x80)) return len; /* ASCII end, or nothing to judge */
    unsigned char lead = (unsigned char)s[i - 1];
    uint32_t need = lead >= 0xF0 ? 3 : lead >= 0xE0 ? 2 : lead >= 0xC0 ? 1 : 0;
    return back >= need ? len : i - 1;
}

values *values_create(uint32_t max_levels, uint32_t label_bytes);
void values_free(values *v);
/* Empties the table, keeping its allocation. */
void values_reset(values *v);
/* Counts one occurrence; text is copied (truncated) when the entry is new.
 * Returns 0, or -1 when memory runs out. */
int values_add(values *v, uint64_t hash, const char *text, size_t len);
/* values_add of hash[i], text[i], len[i] for i < n, with prefetching.  With
 * stop_at_overflow, stops just after the cell that first overflows the
 * table.  Returns the cells counted, or -1 when memory runs out. */
long values_add_many(values *v, const uint64_t *hash, const char *const *text,
                     const uint32_t *len, size_t n, int stop_at_overflow);
int values_merge(values *into, const values *from);

/* Builds the canonical index (a no-op when it is built).  Returns 0, or -1
 * when memory runs out (the table is unchanged and still correct). */
int values_seal(values *v);
/* 1 when the canonical index is built. */
int values_sealed(const values *v);

uint32_t values_levels(const values *v);       /* exact entries held */
uint32_t values_max_levels(const values *v);
uint32_t values_label_bytes(const values *v);   /* label truncation length */
int values_overflowed(const values *v);
uint64_t values_overflow_total(const values *v); /* cells counted in overflow slots */
uint64_t values_total(const values *v);          /* all counted cells */
/* Count of one value: exact for table entries, 0 if absent. */
uint64_t values_count_of(const values *v, uint64_t hash);
/* Admission after earlier parts of the same stream (a checkpointed scan's
 * segments): keys in `known` (the earlier parts' keys, borrowed) enter v
 * whenever they come, any other key only while the room they left
 * (max_levels - known's levels) lasts, one place each, the rest overflowing.
 * A merge of the parts then holds the keys, and the counts, of one table fed
 * the whole stream: its first max_levels distinct values. */
void values_admit_after(values *v, const values *known);
/* Entry i (0 <= i < values_levels) in canonical (hash) order; count 0 when
 * i is out of range, or when the table is unsealed and its temporary index
 * cannot be allocated. */
values_entry values_entry_at(const values *v, uint32_t i);
/* Calls fn(ctx, hash) once for every exact entry, in table order (not
 * canonical): for uses that do not depend on the order, such as folding the
 * keys into a sketch.  Needs no index. */
void values_for_each_hash(const values *v, void (*fn)(void *ctx, uint64_t hash), void *ctx);
/* The k most frequent entries, count descending then hash ascending; returns
 * how many were written to out. */
size_t values_top(const values *v, size_t k, values_entry *out);

/* Sets w->failed when the table is unsealed and its temporary index cannot
 * be allocated. */
void values_write(const values *v, wire_writer *w);
/* Returns a new table, or NULL (and sets r->failed) on malformed input. */
values *values_read(wire_reader *r);

#endif
