/* chunks: a scan's chunks of records into its summary, on any number of
 * threads, with the summary the same byte for byte for every thread count.
 *
 * Each chunk (cut by the bytes alone, io/chunk.h) goes through four kinds
 * of task:
 *   T  tokenize: the chunk's records (reader_cursor_rows) as rows of
 *      fields (offset and length in the chunk; empty past a short row's
 *      end), laid out by field, each row's line and width.  Any chunk, any
 *      thread, any order.
 *   R  rows: in chunk order, one at a time: row counts, ragged rows, the
 *      target cell of every row (its class in the one class dictionary, or
 *      its regression cell and value), where the chunk's blocks of rows end,
 *      and every error a single thread would meet first (with its line).
 *   G  column j: in chunk order for that column, one at a time per column,
 *      columns in parallel: its cells block by block, less the missing ones
 *      (reader_is_missing), into its accumulators (summary/block.h), its
 *      numbers kept for the co-moments.
 *   C  co-moments: in chunk order, once every column is done with the
 *      chunk: the chunk's blocks into the co-moment matrix.
 * Every accumulator therefore sees exactly the values, in exactly the
 * blocks and the order, that a single thread gives it: the summary does not
 * depend on the thread count or the scheduling, and equals what one thread
 * makes.  A chunk's slot is free once its C (or, without co-moments, its
 * last G) is done; slots bound the memory: the chunk's bytes, 8 bytes per
 * field of a row (up to the last scanned one) and 9 per co-moment cell.  A
 * chunk of many short rows goes to the tasks in pieces of whole records
 * (cut by its bytes alone), so that a slot's fields stay within
 * CELLS_BUDGET bytes (chunks_state.h).
 *
 * With one thread nothing is copied and no thread starts: each pushed chunk
 * goes through T, R, every G and C on the caller's thread.
 *
 * Several targets (scan --target A,B): one summary per target, fed from the
 * same chunks.  T tokenizes once; R works out each target's cells and
 * blocks; G decodes (hashes and parses) each column's cells once per grid
 * block (SUMMARY_BLOCK_ROWS rows from the chunk's first) and feeds that lane
 * to every target whose blocks are the grid, so each summary sees what a
 * scan with that target alone gives it.  A target whose blocks leave the
 * grid in a chunk (its classes dropped, its target cells renumbered: a few
 * chunks in a scan) has its blocks there decoded again.  C feeds the first
 * summary's co-moments only (they do not depend on the target); scan.c
 * copies them into the others at the end.
 */
#ifndef SHEAF_CHUNKS_H
#define SHEAF_CHUNKS_H

#include <stddef.h>
#include <stdint.h>

#include "io/reader.h"
#include "summary/scan.h"
#include "summary/summary.h"

typedef struct {
    summary *const *runs;          /* the summaries fed, one per target (borrowed): the first
                                      gets the co-moments, every one the rest */
    size_t nruns;                  /* at least 1 */
    const int *field_of;           /* field index of each of run's columns */
    size_t width;                  /* fields in the header */
    int header;                    /* a stream's first record is its header */
    int strict;                    /* a ragged row is an error */
    const reader_options *ro;      /* the reader's options (borrowed) */
    const reader_missing *missing; /* the missing-cell test (borrowed) */
    unsigned threads;              /* worker threads (1: none); chunks in flight:
                                      chunks_slots */
    int caller_helps;              /* with threads > 1: the calling thread is one of them,
                                      running tasks while it waits for a slot (compressed
                                      input, whose decoding keeps it busy a share of the
                                      time: gzip at -j2 1.329 -> 1.240 s; plain input
                                      was 2.5% faster with N workers beside it) */
} chunks_options;

typedef struct chunks chunks;

/* The chunks in flight with this many threads: one with one thread, else
 * one a thread and a spare, so that a worker waiting for its own columns
 * has a chunk to tokenize. */
static inline unsigned chunks_slots(unsigned threads) { return threads > 1 ? threads + 1 : 1; }

chunks *chunks_create(const chunks_options *o);
void chunks_free(chunks *w);

/* A stream begins: its name in messages (borrowed until chunks_wait), its
 * stop offset (records that start there or later are another shard's; 0:
 * none) and the lines before its first chunk pushed (blank lines).  Call
 * with nothing in flight. */
void chunks_stream(chunks *w, const char *shown, uint64_t stop_at, uint64_t lines);
/* Hands a chunk over (first: it holds the stream's first record, which the
 * caller has read: skipped when it is a header, exempt from the stop
 * offset).  repeats: the stream offsets of the nrepeats records that repeat
 * the header at a compressed member's start (reader_repeated_headers),
 * ascending; they are skipped and counted in the summary's repeated_headers
 * (copied: the caller's array may go).  Blocks while every slot is busy.
 * A chunk of more lines than the cell budget allows is handed on in pieces.
 * owner: the reader that just handed c out (reader_next_chunk), whose
 * buffer a slot then takes in trade for its own (reader_trade_chunk)
 * instead of copying the chunk; NULL: the chunk is copied.  SCAN_OK or
 * the failure. */
scan_status chunks_push(chunks *w, const reader_chunk *c, int first, const uint64_t *repeats,
                        size_t nrepeats, reader *owner);
/* Waits until every pushed chunk is in the summary.  SCAN_OK or the failure
 * (chunks_error tells). */
scan_status chunks_wait(chunks *w);
const char *chunks_error(const chunks *w);

/* The stream so far (after chunks_wait): data rows, lines, and the offset
 * after the last record absorbed. */
uint64_t chunks_rows(const chunks *w);
uint64_t chunks_lines(const chunks *w);
uint64_t chunks_absorbed(const chunks *w);

#endif
