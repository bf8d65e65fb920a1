/* shard_start: where a byte-range shard's first record begins, found from
 * the bytes near the range start instead of from the top of the file.
 *
 * The quote rule (io/csv.h) is a machine of four modes (csv_quote_mode).
 * Where a shard's range begins, the mode is whatever the bytes before left
 * it in; a shard that does not read them does not know it.  So the rule is
 * run from each of the four modes at once over the same bytes
 * (shard_modes), and:
 *   - the first record start under each mode is found in a window of bytes
 *     after the range start; when all four agree, the start is certain;
 *   - otherwise each distinct candidate is scored by the records that follow
 *     it in the window (those with the header's field count, less those
 *     without, less 64 for each quote the rule reads as ordinary text: a
 *     parse of valid RFC 4180 data from its true start has none, and one
 *     started in the wrong mode meets one wherever its quotes flip), and the
 *     clearly best one is taken: a speculation, checked
 *     later by merge.  When the window reaches the end of the file, a
 *     candidate that leaves a quote open there is ruled out (the file would
 *     not scan whole);
 *   - a tie, or no record end in the window, is undecided: the caller finds
 *     the start from the top of the file (the prefix rule) for that shard.
 * This is the quote-state inference of speculative distributed CSV parsing
 * (C. Ge, Y. Li, E. Eilebrecht, B. Chandramouli and D. Kossmann,
 * "Speculative Distributed CSV Data Parsing for Big Data Analytics", SIGMOD
 * 2019, doi:10.1145/3299869.3319898): a chunk's context is guessed from its
 * own bytes, and the guess rarely fails because of the format's syntactic
 * and statistical properties (their abstract).  From memory, not checked
 * against the paper's text: they guess between two states (inside quotes or
 * not) and validate the guesses once the earlier chunks are parsed.  Here
 * the rule has four modes, the guess is scored by the header's field count,
 * and the check is the chain of transfer maps below (docs/shards.md).
 *
 * The transfer map of some bytes: for each mode before them, the mode after
 * them.  Shards' maps compose along the file, so the shard that starts at
 * byte 0 (mode CSV_AT_FIELD there) gives the true mode at every later
 * shard's start, without any shard reading another's bytes. */
#ifndef SHEAF_SHARD_START_H
#define SHEAF_SHARD_START_H

#include <stddef.h>
#include <stdint.h>

#include "io/csv.h"

/* The quote rule run from each of the four modes over the same bytes.
 * Modes that reach the same state are merged (they stay equal from then on),
 * so a pass costs one scan per distinct state, usually one or two. */
typedef struct {
    csv_quote_state q[4]; /* q[m]: the state after the bytes, started in mode m */
    int rep[4];           /* rep[m]: the mode whose state q[m] follows (rep[m] <= m) */
} shard_modes;

void shard_modes_init(shard_modes *t, char delim);
/* Feeds data[0..len) to every distinct state. */
void shard_modes_scan(shard_modes *t, const char *data, size_t len);
/* The transfer map so far: bits 2m..2m+1 are the mode reached from mode m. */
uint8_t shard_modes_map(const shard_modes *t);

/* The mode the map takes mode m to. */
static inline csv_quote_mode shard_map_apply(uint8_t map, csv_quote_mode m)
{
    return (csv_quote_mode)((map >> (2 * (unsigned)m)) & 3u);
}
/* The map of bytes A then bytes B. */
uint8_t shard_map_then(uint8_t a, uint8_t b);
/* The map of no bytes. */
#define SHARD_MAP_IDENTITY ((uint8_t)(0 | 1 << 2 | 2 << 4 | 3 << 6))

/* How a shard's first record was found (kept in its summary source). */
typedef enum {
    SHARD_START_NONE = 0,       /* not a shard (the whole input) */
    SHARD_START_CERTAIN = 1,    /* every mode gives the same start, or the range starts the file */
    SHARD_START_SPECULATED = 2, /* the best-scoring of several candidates */
    SHARD_START_PREFIX = 3      /* from the top of the file: the mode at the range start is known */
} shard_start_rule;

/* The guess from a window of bytes that begins at the anchor (the byte just
 * before the range start: a record start at or after the range start follows
 * a '\n' at or after it). */
typedef struct {
    int decided;        /* 1: offset is the start (rule says how); 0: undecided */
    shard_start_rule rule; /* CERTAIN or SPECULATED when decided */
    size_t offset;      /* the start, from the window's first byte (len at the end of the
                           file when no record starts in the window) */
    uint8_t modes;      /* bit m set: mode m at the anchor gives this start */
    int ncand;          /* distinct candidates (1..4) */
    long score[4];      /* each mode's candidate's score (LONG_MIN: no record end in the window) */
    char why[96];       /* undecided: why, in a few words */
} shard_guess;

/* Guesses the start from win[0..len) (at_end: the file ends there), with the
 * header's field count.  worst != 0 (a test hook) takes the lowest-scoring
 * candidate instead of the best, to make a wrong guess on purpose. */
void shard_start_guess(const char *win, size_t len, int at_end, char delim,
                       size_t header_fields, int worst, shard_guess *out);

/* Records in win[0..len) read from its first byte under the quote rule (mode
 * CSV_AT_FIELD): how many have `fields` fields, and how many do not (blank
 * lines are neither; a last record without its '\n' counts only when at_end),
 * and the quotes the rule keeps as ordinary text (*odd: one inside an
 * unquoted field, or text after a closing quote).  Returns the mode after the
 * last byte. */
csv_quote_mode shard_count_records(const char *win, size_t len, int at_end, char delim,
                                   size_t fields, uint64_t *match, uint64_t *other,
                                   uint64_t *odd);

#endif
