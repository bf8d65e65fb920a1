/* scan: one streaming pass over sources into a summary.
 *
 * Each source is cut into chunks of whole records (io/chunk) and each chunk
 * is tokenized (io/csv); every SUMMARY_BLOCK_ROWS rows, each column's block
 * of cells is fed to its accumulators.  Chunks are independent units (a
 * worker thread would fill its own summary and summary_merge it into the
 * running one); with one thread they feed the running summary directly.  Numeric cells are parsed by io/number and
 * enter the moments as exact decimal deviations from the column's first
 * value, in blocks of SUMMARY_BLOCK_ROWS rows.  Nothing is allocated per field or row.
 */
#ifndef SHEAF_SCAN_H
#define SHEAF_SCAN_H

#include <stddef.h>
#include <stdint.h>

#include "summary/summary.h"


typedef enum {
    SCAN_OK = 0,
    SCAN_ERR_USAGE = 1,  /* an option names a column that does not exist, ... */
    SCAN_ERR_INPUT = 2,  /* unreadable or malformed input */
    SCAN_ERR_MEMORY = 3  /* out of memory or over the memory limit */
} scan_status;

typedef struct {
    summary_options opt;      /* accumulator options */
    char delim;               /* field delimiter, 0 = detect from the first chunk */
    int header;               /* first record holds the column names */
    int strict;               /* a row with too few or too many fields is an error */
    size_t chunk_bytes;       /* target chunk size */
    size_t max_record_bytes;  /* longest record accepted */
    const char *columns;      /* comma-separated names to scan (NULL: all) */
    const char *numeric;      /* comma-separated names declared numeric */
    const char *categorical;  /* comma-separated names declared categorical */
    const char *ignore;       /* comma-separated names not scanned */
    uint64_t mem_limit_bytes; /* refuse when the co-moment matrix needs more (0: none) */
    uint32_t shard_index;     /* --shard I/N: I (1-based) */
    uint32_t shard_count;     /* N, 0 = the whole input */
    /* Called after every chunk: raw bytes done and total (0 if unknown). */
    void (*progress)(void *ctx, uint64_t done_bytes, uint64_t total_bytes);
    void *progress_ctx;
} scan_options;

/* Defaults: detect the delimiter, header on, 4 MiB chunks, 64 MiB records. */
void scan_options_defaults(scan_options *o);

/* Scans paths in turn ("-" is standard input); they must share the header.
 * On success *out holds the summary; on failure err names the file and the
 * line or byte offset. */
scan_status scan_files(const scan_options *o, const char *const *paths, size_t npaths,
                       summary **out, char *err, size_t errlen);

#endif
