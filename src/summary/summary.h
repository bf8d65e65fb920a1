/* summary: the accumulator set of one table, its merge and its file.
 *
 * A summary holds, for every scanned column, the per-column accumulators
 * (counts, moments, value table, HyperLogLog, bucket store), the table's row
 * counts, the options that decide how cells were read (they must agree for
 * two summaries to merge), and the provenance of every source.  A scan builds
 * one summary per chunk and merges it into the running one, so merging is the
 * only way state ever combines: a scan of everything and a merge of scans of
 * its parts follow the same rules.
 *
 * The file format is specified in docs/summary-format.md.
 */
#ifndef SHEAF_SUMMARY_H
#define SHEAF_SUMMARY_H

#include <stddef.h>
#include <stdint.h>

#include "acc/buckets.h"
#include "acc/hll.h"
#include "acc/moments.h"
#include "acc/values.h"

#define SUMMARY_FORMAT_VERSION 1
#define SUMMARY_EXAMPLES 3        /* non-numeric examples kept per column */
#define SUMMARY_EXAMPLE_BYTES 40  /* bytes kept of each example */
#define SUMMARY_BAD_LINES 5       /* line numbers kept of ragged rows */
#define SUMMARY_MAX_MISSING 32    /* missing-value spellings */

/* How a column was declared at scan time. */
typedef enum {
    COLUMN_AUTO = 0,       /* kind decided when the summary is read */
    COLUMN_NUMERIC = 1,    /* --numeric */
    COLUMN_CATEGORICAL = 2 /* --categorical: cells are never parsed */
} column_mode;

/* Kind decided when the summary is read. */
typedef enum { KIND_NUMERIC = 0, KIND_CATEGORICAL = 1 } column_kind;

/* Options that change what the accumulators hold: equal in mergeable summaries. */
typedef struct {
    uint32_t max_levels;     /* value-table entries per column */
    uint32_t label_bytes;    /* bytes kept per value label */
    uint32_t bucket_budget;  /* occupied buckets per column */
    uint32_t n_missing;      /* missing-value spellings */
    char *missing[SUMMARY_MAX_MISSING]; /* the spellings ("" is always missing) */
} summary_options;

typedef struct {
    char *name;              /* header name */
    column_mode mode;        /* declared mode */
    uint64_t missing;        /* missing cells (incl. absent in short rows) */
    uint64_t non_numeric;    /* present cells that are not numbers */
    uint64_t non_finite;     /* inf / nan cells */
    uint64_t zeros;          /* cells equal to zero */
    uint64_t integers;       /* finite cells with an integer value */
    moments mom;             /* moments of finite numeric cells */
    values *vals;            /* value table (raw text) */
    hll *distinct;           /* distinct-count sketch */
    buckets *bins;           /* bucket store of finite numeric cells */
    uint32_t n_examples;     /* non-numeric examples kept */
    char examples[SUMMARY_EXAMPLES][SUMMARY_EXAMPLE_BYTES + 1];
} summary_column;

typedef struct {
    char *path;              /* as given to scan */
    char format[8];          /* plain, gzip, zstd */
    uint64_t size_bytes;     /* file size (0 for a pipe) */
    int64_t mtime;           /* modification time, seconds */
    uint64_t fingerprint;    /* XXH3-64 of the raw bytes read */
    uint64_t raw_bytes;      /* raw bytes read */
    uint64_t start_byte;     /* byte range start (shards), else 0 */
    uint64_t end_byte;       /* byte range end, 0 = whole file */
    uint64_t rows;           /* data rows read from it */
} summary_source;

typedef struct {
    summary_options opt;
    size_t ncols;
    summary_column *cols;
    uint64_t rows;            /* data rows */
    uint64_t bytes;           /* decompressed bytes read */
    uint64_t short_rows;      /* rows with too few fields */
    uint64_t long_rows;       /* rows with too many fields */
    uint32_t n_bad_lines;     /* kept line numbers of ragged rows */
    uint64_t bad_lines[SUMMARY_BAD_LINES];
    size_t nsources;
    summary_source *sources;
} summary;

/* Error classes, mapped to exit codes by the CLI. */
typedef enum {
    SUMMARY_OK = 0,
    SUMMARY_ERR_IO = 1,           /* cannot read or write a file */
    SUMMARY_ERR_CORRUPT = 2,      /* not a summary, damaged, truncated, newer */
    SUMMARY_ERR_INCOMPATIBLE = 3, /* different schema or options */
    SUMMARY_ERR_MEMORY = 4        /* out of memory */
} summary_status;

void summary_options_defaults(summary_options *o);
void summary_options_free(summary_options *o);
int summary_options_copy(summary_options *dst, const summary_options *src);

/* A summary with the given columns and no data; NULL on OOM. */
summary *summary_create(const summary_options *opt, size_t ncols, char *const *names,
                        const column_mode *modes);
/* An empty summary with the same schema as s. */
summary *summary_clone_empty(const summary *s);
void summary_free(summary *s);
/* Empties the accumulators, keeping schema and allocations. */
void summary_reset(summary *s);

/* Lists the differences that forbid merging a and b into msg (one line,
 * "; "-separated); returns 1 when compatible. */
int summary_compatible(const summary *a, const summary *b, char *msg, size_t msglen);
/* into := into (+) from: accumulators, counts, sources.  The schemas must be
 * compatible (checked; SUMMARY_ERR_INCOMPATIBLE otherwise). */
summary_status summary_merge(summary *into, const summary *from, char *err, size_t errlen);
/* Appends a source record (copied). */
int summary_add_source(summary *s, const summary_source *src);

/* Reading back. */
column_kind summary_column_kind(const summary_column *c, double numeric_share);
/* Distinct values: exact from the value table unless it overflowed, else the
 * HyperLogLog estimate.  *exact set accordingly (may be NULL). */
double summary_column_distinct(const summary_column *c, int *exact);
/* Present (non-missing) cells. */
uint64_t summary_column_present(const summary_column *c);

/* File I/O.  Writing goes to a temporary file in the target directory that
 * is flushed and renamed, so no half-written file ever has the final name. */
summary_status summary_write(const summary *s, const char *path, char *err, size_t errlen);
summary_status summary_read(const char *path, summary **out, char *err, size_t errlen);
/* In-memory forms (the file is the same bytes). */
summary_status summary_encode(const summary *s, uint8_t **data, size_t *len);
summary_status summary_decode(const uint8_t *data, size_t len, summary **out, char *err,
                              size_t errlen);

#endif
