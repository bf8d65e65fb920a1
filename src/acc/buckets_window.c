/* buckets_window: where a bucket store's dense window goes (buckets.c
 * opens it, counts in it and settles it into the table; buckets_store.h
 * describes the window).  Read-only over the store. */
#include "acc/buckets.h"

#include <stdlib.h>

#include "acc/buckets_key.h"

#include "acc/buckets_store.h"

#define DENSE_MAX 65536u  /* counters in a window at most (256 KiB) */
#define DENSE_ROOM 8192u  /* counters a window may have whatever the table's size (32 KiB) */
#define DENSE_TAIL 400    /* a window leaves out at most 1/400 of the counts at each end */
#define DENSE_COVER 90    /* percent of the values so far a window must hold to be opened */

/* The magnitudes [*lo, *hi] that hold all but 1/DENSE_TAIL of the counts
 * of e[0..n) (one entry per magnitude, ascending) at each end; *mass their
 * count.  Nothing when n is 0 (*mass 0). */
static void lobe_range(const buckets_entry *e, size_t n, uint64_t *lo, uint64_t *hi,
                       uint64_t *mass)
{
    uint64_t total = 0, cum = 0;
    for (size_t i = 0; i < n; i++) total += e[i].count;
    *mass = total;
    if (!n) return;
    uint64_t cut = total / DENSE_TAIL;
    size_t i = 0, j = n - 1;
    while (i < j && cum + e[i].count <= cut) cum += e[i++].count;
    for (cum = 0; j > i && cum + e[j].count <= cut;) cum += e[j--].count;
    *lo = (uint64_t)e[i].key;
    *hi = (uint64_t)e[j].key;
}

/* The first of `keep` consecutive magnitudes holding the most counts of
 * e[0..n) (n > 0, one entry per magnitude, ascending, every count > 0), a
 * range starting at one of them. */
static uint64_t densest_start(const buckets_entry *e, size_t n, uint64_t keep)
{
    uint64_t best = 0, sum = 0, start = (uint64_t)e[0].key;
    for (size_t i = 0, j = 0; i < n; i++) {
        while (j < n && (uint64_t)e[j].key - (uint64_t)e[i].key < keep) sum += e[j++].count;
        if (sum > best) best = sum, start = (uint64_t)e[i].key;
        sum -= e[i].count;
    }
    return start;
}

/* See buckets_store.h.  A window over the magnitudes that hold all but
 * 1/DENSE_TAIL of each sign's counts at each end (at the table's level),
 * widened by an eighth on each side, at most DENSE_MAX counters and no more
 * than the table's slots or DENSE_ROOM, whichever is more (memory: a store
 * per column, thousands of columns).  When that is too many, each sign's
 * range is narrowed in proportion, to the stretch that holds most of its
 * values (around the middle, before: a column of whole numbers from 1 to
 * 2,000,000 has most of its values in its top octaves and its window held
 * almost none), with an eighth of it on each side as room to drift.  A
 * window that would hold fewer than DENSE_COVER percent of the values so
 * far is not opened (a narrowed one missed so many that it was closed and
 * reopened without end: a regression target's 40 to 65 cells leave room for
 * a few hundred keys).
 *
 * Why DENSE_ROOM: a column of few values spread over a wide range of
 * magnitudes (whole numbers 0 to 100, one decimal from -20 to 50) keeps a
 * small table but needs a window over every key between its ends.  Bound by
 * the table's slots alone, such a window was narrowed to a few dozen keys,
 * most values fell outside it and paid the window and the hashed table both,
 * and it was closed and reopened every few ten thousand values (2,000,000
 * rows of the bench table: 15.4 million of 48.7 million values through the
 * table, four columns reopening 74 to 97 times).  A window opened early,
 * while the table was still small, stayed narrow for good. */
int buckets_window_plan(const buckets *b, buckets_window *w)
{
    buckets_entry *e = b->n ? malloc(b->n * sizeof *e) : NULL;
    if (!e) return 0;
    size_t n = buckets_gather(b, b->level, NULL, e);
    uint32_t top_cell = 0;
    for (size_t i = 0; i < n; i++) {
        if (e[i].cell > top_cell) top_cell = e[i].cell;
        e[i].cell = 0;
    }
    n = buckets_sort_combine(e, n); /* one entry per key, in key order */
    size_t neg = 0, zero;
    while (neg < n && e[neg].key < 0) neg++;
    zero = neg < n && e[neg].key == 0;
    /* negative keys as magnitudes, ascending */
    for (size_t i = 0; i < neg; i++) e[i].key = -e[i].key;
    for (size_t i = 0, k = neg; i < k / 2; i++) {
        buckets_entry t = e[i];
        e[i] = e[k - 1 - i];
        e[k - 1 - i] = t;
    }
    uint64_t lo[2] = {1, 1}, hi[2] = {0, 0}, mass[2];
    lobe_range(e + neg + zero, n - neg - zero, &lo[0], &hi[0], &mass[0]);
    lobe_range(e, neg, &lo[1], &hi[1], &mass[1]);
    const uint64_t cells = (uint64_t)top_cell + 1, top = (uint64_t)max_magnitude(b->level);
    const uint64_t room = (uint64_t)b->cap > DENSE_ROOM ? (uint64_t)b->cap : DENSE_ROOM;
    const uint64_t most = DENSE_MAX < room ? DENSE_MAX : room;
    uint64_t width[2] = {0, 0}, rows = 1;
    for (int s = 0; s < 2; s++) {
        if (!mass[s]) continue;
        uint64_t margin = (hi[s] - lo[s] + 1) / 8 + 2;
        lo[s] = lo[s] > margin ? lo[s] - margin : 1;
        hi[s] = hi[s] + margin > top ? top : hi[s] + margin;
        width[s] = hi[s] - lo[s] + 1;
        rows += width[s];
    }
    /* Too many cells for a useful window.  Stores without cells (no
     * target) get one too: their tables are a quarter of the size, but a
     * table of 500 columns does not stay in a core's caches either (a scan
     * of 500 columns took 13% less time with windows, one of the 28-column
     * bench table 6% less). */
    if (cells * 16 > most) {
        free(e);
        return 0;
    }
    const buckets_entry *lobe[2] = {e + neg + zero, e};
    const size_t lobe_n[2] = {n - neg - zero, neg};
    if (rows * cells > most) { /* each range narrowed in proportion, to where its values are */
        uint64_t keys = most / cells - 1, had = rows - 1;
        rows = 1;
        for (int s = 0; s < 2; s++) {
            uint64_t keep = width[s] * keys / had;
            /* room to drift: a column that grows (a sequence number, a
             * time stamp) has its densest stretch at its top, and a window
             * ending there was left by the next values and reopened again
             * and again */
            uint64_t m = keep / 8;
            if (keep) { /* a range of keys has entries: its lobe is not empty */
                uint64_t at = densest_start(lobe[s], lobe_n[s], keep - 2 * m);
                lo[s] = at > m ? at - m : 1;
            }
            width[s] = keep;
            rows += keep;
        }
    }
    /* The values so far that the window would hold: key 0, and each sign's
     * magnitudes inside its range. */
    uint64_t all = mass[0] + mass[1], in = 0;
    if (zero) in = e[neg].count, all += e[neg].count;
    for (int s = 0; s < 2; s++)
        for (size_t i = 0; i < lobe_n[s]; i++)
            if ((uint64_t)lobe[s][i].key - lo[s] < width[s]) in += lobe[s][i].count;
    free(e);
    if (in * 100 < all * DENSE_COVER) return 0;
    for (int s = 0; s < 2; s++) {
        w->base[s] = lo[s];
        w->width[s] = width[s];
    }
    w->rows = rows;
    w->cells = cells;
    return 1;
}
