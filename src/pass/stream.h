/* stream: the reading loop the second passes (trim, project) share, with
 * the chunks of records worked on by threads and their output committed in
 * order (io/pipeline.h).
 *
 * The calling thread opens each file, reads (and decompresses) it, cuts it
 * into chunks (reader_next_chunk) and pushes them into a pipeline.  The
 * first record of each file is read there too, with a raw cursor that
 * leaves the bytes alone, and handed to `first` before its chunk is pushed:
 * what a pass learns from a header (the kept fields, the basis columns) is
 * thus fixed before any worker sees a row of that file.  Workers tokenize a
 * chunk with a cursor of their slot and hand each record to `row`, and the
 * end of the chunk to `chunk_end`; `commit` then runs on the slots one at a
 * time in push order (where a pass writes the slot's output), after which
 * the chunk's lines join the count of lines before the next chunk.
 *
 * Errors come out as a one-thread run meets them first, whatever the thread
 * count: a fault of a chunk's records (unterminated quote, a record over the
 * limit) is reported at its commit, with the file's name and the line
 * counted from the file's start; a failure met by the reading thread (an
 * unreadable file, a header a pass refuses, a file with no records) is
 * reported only once every chunk pushed before it is committed, and a
 * failure of one of those wins.  Codes are the caller's own (> 0), with the
 * message in the caller's buffer.
 */
#ifndef SHEAF_PASS_STREAM_H
#define SHEAF_PASS_STREAM_H

#include <stddef.h>
#include <stdint.h>

#include "io/csv.h"

#include "io/reader.h"

typedef struct {
    reader_options read;     /* delimiter (0: detect), chunk and record sizes; raw as the pass
                                needs its fields */
    unsigned threads;        /* workers; 0 = pipeline_cpus(), 1 = none (all on the caller's thread) */
    int same_delimiter;      /* later files take the delimiter of the first file with a record */
    int require_records;     /* a file without a record is an input error */
    int header;              /* each file's first record is a header: a line repeating it
                                where a gzip member or zstd frame begins is no row
                                (reader_repeated_headers) */
    /* Called on the reading thread after each read: raw bytes read so far
     * over all files, and the sum of the files' sizes (0 when unknown). */
    void (*progress)(void *ctx, uint64_t done_bytes, uint64_t total_bytes);
    void *progress_ctx;      /* passed to progress */
} stream_options;

typedef struct {
    /* Codes the driver returns for bad input and for memory that ran out. */
    int input_error, memory_error;
    /* Once, before any chunk: the pipeline has nslots slots (0..nslots-1) for
     * the per-slot state of the pass.  0, or memory_error. */
    int (*slots)(void *ctx, unsigned nslots);
    /* Reading thread: the first record of file `file` (rec->line counted from
     * the file's start; fields raw; valid during the call).  Sets *skip when
     * the workers must not hand the record to `row`.  0, or a code with the
     * message written to msg (msglen bytes). */
    int (*first)(void *ctx, size_t file, const char *path, const reader *rd,
                 const reader_record *rec, int *skip, char *msg, size_t msglen);
    /* Worker: one record (fields raw or unquoted as read.raw says; valid
     * until chunk_end) of file `file`; first_of_file when it is the file's
     * first record.  0, or -1 when out of memory. */
    int (*row)(void *ctx, unsigned slot, size_t file, const reader_record *rec, int first_of_file);
    /* Worker: the chunk's records are all out.  0, or -1 when out of memory. */
    int (*chunk_end)(void *ctx, unsigned slot, size_t file);
    /* In push order, after the chunk's work (also after a fault of its
     * records: what came before the fault is written, as one thread would).
     * Resets the slot.  0, or a code with the message written to err. */
    int (*commit)(void *ctx, unsigned slot, char *err, size_t errlen);
} stream_handler;

/* Streams the files ("-": standard input) through the handler h (ctx is
 * passed to every call).  Returns 0, or the first failure's code with a
 * one-line message in err. */
int stream_files(const stream_options *o, const stream_handler *h, void *ctx,
                 const char *const *paths, size_t npaths, char *err, size_t errlen);

/* For a name that is no column of a first record's n fields (named as
 * reader_column_name names them, raw): appends to msg (msglen bytes, cut to
 * fit) the nearest names (io/closest.h) and the first few. */
void stream_suggest_column(const csv_field *fields, size_t n, int header, const char *name,
                           char *msg, size_t msglen);

#endif
