/* shards: whether the byte-range shards among a summary's sources fit
 * together (docs/shards.md).
 *
 * Each shard found its first record from the bytes near its range start,
 * under an assumption about the quote mode there (summary_source's
 * shard_modes: the modes that give the start it took), and recorded the
 * transfer map of the bytes it owns (io/shard_start.h).  For the shards of
 * one file (one file_id), sorted by range:
 *   - ranges must not overlap;
 *   - along a run of adjacent ranges the set of modes possible at each range
 *     start is carried by the maps: a run from byte 0 starts in mode
 *     CSV_AT_FIELD, a shard that read from the top knows its mode, and
 *     elsewhere any mode is possible;
 *   - a shard whose start every possible mode agrees with is verified; one
 *     that no possible mode agrees with took a wrong first record (the check
 *     fails naming it); otherwise it is unverified until the shards before it
 *     are merged in (a partial, tree-shaped merge). */
#ifndef SHEAF_SHARDS_H
#define SHEAF_SHARDS_H

#include <stddef.h>
#include <stdint.h>

#include "summary/summary.h"

typedef struct {
    size_t files;      /* files with shard records */
    size_t shards;     /* shard records */
    size_t verified;   /* shards whose first record is proven right */
    size_t unverified; /* shards not yet checkable (a range before them is missing) */
} shard_check;

/* The check of one source (index i of s's sources), after summary_shards_check. */
typedef enum { SHARD_NOT = 0, SHARD_VERIFIED, SHARD_UNVERIFIED, SHARD_WRONG } shard_verdict;

/* Checks the shards among s's sources.  0 with *out filled when they fit;
 * -1 with one line in msg when two ranges overlap or a shard took a wrong
 * first record (*bad: that source's index, or the later of two overlapping;
 * when several shards took a wrong one, the first, and msg names the others
 * too, so that one round of rescans mends them all).  verdicts (may be
 * NULL): s->nsources entries, each source's verdict (every wrong shard's). */
int summary_shards_check(const summary *s, shard_check *out, shard_verdict *verdicts,
                         size_t *bad, char *msg, size_t msglen);

/* The byte-range shards among s's sources that do not make whole files: a
 * file (one file_id) some of whose N shards are absent, or one path whose
 * shards come from two versions of the file (two file_ids).  Returns how
 * many such files, with one line about the first in msg (a partial merge,
 * one level of a tree, is one of these and is not an error). */
size_t summary_shards_incomplete(const summary *s, char *msg, size_t msglen);

/* "certain", "speculated" or "prefix" (or "" for none). */
const char *summary_shard_rule_name(uint8_t rule);

#endif
