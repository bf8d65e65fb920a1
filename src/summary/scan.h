/* scan: one streaming pass over byte streams into a summary.
 *
 * A scan context is created from options, fed streams, and finished into a
 * summary:
 *
 *   scan_context *sc = scan_create(&o);
 *   scan_begin(sc, "night-1");  scan_feed(sc, buf, n) ...;  scan_end(sc);
 *   scan_source(sc, src);        a byte source the caller opened (io/source.h)
 *   scan_path(sc, "b.csv.gz");   a file by name ("-" is standard input)
 *   summary *s = scan_finish(sc);   scan_free(sc);
 *
 * Every stream is read by the one record reader (io/reader.h); the first
 * stream's first record fixes the schema and later streams must share it.
 * The summary depends on the bytes alone: feeding the same bytes in any
 * split gives the same summary, byte for byte, and so does any thread count
 * (scan_options.threads; summary/chunks.h says how).  With threads,
 * scan_position counts the chunks finished so far: call it after scan_end.  Numeric cells enter the
 * moments as exact decimal deviations from the column's first value, in
 * blocks of SUMMARY_BLOCK_ROWS rows (summary/block.h).  Nothing is
 * allocated per field or row.
 *
 * Errors are sticky: after one, every call returns the same status and
 * scan_error gives the one-line message naming the stream and the line or
 * byte offset.
 */
#ifndef SHEAF_SCAN_H
#define SHEAF_SCAN_H

#include <stddef.h>
#include <stdint.h>

#include "io/source.h"
#include "summary/summary.h"


typedef enum {
    SCAN_OK = 0,
    SCAN_ERR_USAGE = 1,  /* an option names a column that does not exist, ... */
    SCAN_ERR_INPUT = 2,  /* unreadable or malformed input */
    SCAN_ERR_MEMORY = 3, /* out of memory or over the memory limit */
    SCAN_ERR_DAMAGED = 4, /* the checkpoint to resume from is damaged */
    SCAN_ERR_WRITE = 5   /* a checkpoint could not be written */
} scan_status;

typedef struct {
    summary_options opt;      /* accumulator options (opt.target: one target, taken whole) */
    const char *targets;      /* one or several targets instead of opt.target (which must then
                                 be NULL): the text is one name when it is a whole header name,
                                 else names separated by commas ("a,b"), each a scanned column
                                 named once (SCAN_ERR_USAGE otherwise).  Several targets make
                                 one summary per target in the one pass (scan_finish_set) */
    char delim;               /* field delimiter, 0 = detect from the first chunk */
    int header;               /* first record holds the column names */
    int strict;               /* a row with too few or too many fields is an error */
    int force;                /* read a file whose start is not text (reader_not_text) */
    size_t chunk_bytes;       /* target chunk size */
    size_t max_record_bytes;  /* longest record accepted */
    const char *columns;      /* comma-separated names to scan (NULL: all) */
    const char *numeric;      /* comma-separated names declared numeric */
    const char *categorical;  /* comma-separated names declared categorical */
    const char *ignore;       /* comma-separated names not scanned */
    uint64_t mem_limit_bytes; /* refuse when the co-moment matrix needs more (0: none) */
    uint32_t shard_index;     /* --shard I/N: I (1-based) */
    uint32_t shard_count;     /* N, 0 = the whole input */
    int shard_from_top;       /* find the shard's first record from the top of the file (the
                                 prefix rule), not from the bytes near its range */
    unsigned threads;         /* worker threads; 0 = the CPUs this process may use, 1 = none
                                 (everything on the calling thread); the summary is the same
                                 for every count */
    int seal_later;           /* finish with the summaries not sealed: the caller seals them
                                 while it writes them (summary_set_seal_write), which overlaps
                                 the two; any read works on them meanwhile, only slower */
    /* Checkpoints (scan_files and scan_files_set only; summary/checkpoint.h).
     * With a path, the scan cuts its input into segments: one ends at the
     * first chunk boundary after every checkpoint_bytes decompressed bytes.
     * At each cut the segment's summaries are finished and merged into the
     * running result, which is written to the checkpoint and read back from
     * its bytes; the summary is that of the same scan with the same cuts,
     * resumed or not (byte for byte), but not that of a scan without them. */
    const char *checkpoint;   /* checkpoint file (NULL: none) */
    uint64_t checkpoint_bytes; /* decompressed bytes between cuts (0: SCAN_CHECKPOINT_BYTES) */
    int resume;               /* continue from the checkpoint: it must exist and match the
                                 inputs (size, mtime, fingerprint of the bytes consumed) and
                                 the options that shape the summary */
    /* A test hook (may be NULL): called inside every checkpoint write, after
     * its summaries are written and before it replaces the old one. */
    void (*checkpoint_pause)(void *ctx, uint64_t number);
    void *checkpoint_pause_ctx;
    /* Called after every chunk: raw bytes done and total (0 if unknown). */
    void (*progress)(void *ctx, uint64_t done_bytes, uint64_t total_bytes);
    void *progress_ctx;
    /* Called (may be NULL) with a one-line warning that does not stop the
     * scan: duplicate column names in the header, naming the file and them. */
    void (*warn)(void *ctx, const char *message);
    void *warn_ctx;
} scan_options;

/* The default distance between checkpoints: 256 MiB of decompressed input. */
#define SCAN_CHECKPOINT_BYTES ((uint64_t)256 << 20)

/* Defaults: detect the delimiter, header on, 1 MiB chunks, 64 MiB records. */
void scan_options_defaults(scan_options *o);

typedef struct scan_context scan_context;

/* A context for the options (copied; their strings are borrowed and must
 * outlive the context).  NULL when out of memory. */
scan_context *scan_create(const scan_options *o);
void scan_free(scan_context *sc);
/* The message of the first error ("" when none). */
const char *scan_error(const scan_context *sc);

/* A stream of bytes fed by the caller.  `name` goes into messages and into
 * the summary's source record (format plain, the XXH3-64 of the fed bytes
 * as its fingerprint). */
scan_status scan_begin(scan_context *sc, const char *name);
/* Feeds bytes of the open stream, in pieces of any size. */
scan_status scan_feed(scan_context *sc, const void *data, size_t len);
/* Ends the open stream: its last records, its source record. */
scan_status scan_end(scan_context *sc);
/* A whole source the caller opened: file, standard input, gzip, zstd. */
scan_status scan_source(scan_context *sc, source *src);
/* A file by path ("-": standard input); with shard options, that shard. */
scan_status scan_path(scan_context *sc, const char *path);

/* Stream offset (decompressed bytes from the stream's first byte) just after
 * the last complete record absorbed into the summary: the point a resumed
 * scan would start from. */
uint64_t scan_position(const scan_context *sc);

/* The number of summaries the scan makes: its targets, or 1 without one. */
size_t scan_targets(const scan_context *sc);

/* The summary of everything scanned; the caller owns it.  NULL on an
 * error, or when nothing was scanned (scan_error tells), and when the scan
 * has several targets (SCAN_ERR_USAGE: take them with scan_finish_set). */
summary *scan_finish(scan_context *sc);
/* The summaries of everything scanned, one per target in the order named
 * (one summary, n = 1, without a target or with one): each is what a scan
 * with that target alone gives, byte for byte.  The caller owns the set
 * (summary_set_free).  NULL on an error as scan_finish. */
summary_set *scan_finish_set(scan_context *sc);

/* Scans paths in turn ("-" is standard input); they must share the header.
 * On success *out holds the summary; on failure err names the file and the
 * line or byte offset. */
scan_status scan_files(const scan_options *o, const char *const *paths, size_t npaths,
                       summary **out, char *err, size_t errlen);
/* The same for any number of targets (o->targets): *out holds the set,
 * owned by the caller (summary_set_free). */
scan_status scan_files_set(const scan_options *o, const char *const *paths, size_t npaths,
                           summary_set **out, char *err, size_t errlen);

#endif
