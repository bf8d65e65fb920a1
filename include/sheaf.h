/* sheaf.h: the public C API of libsheaf.
 *
 * sheaf reads CSV/TSV tables (plain, gzip, zstd) once, in bounded memory,
 * into a mergeable summary, and computes screening statistics and principal
 * components from summaries alone.  This header is the whole interface: it
 * includes only standard headers, declares opaque handles and `sheaf_*`
 * calls, and needs nothing but -I for its own directory.  docs/library.md
 * has the walk-through and a complete program; the link line is
 *
 *   cc prog.c -Iinclude libsheaf.a -lgsl -lisal -lzstd -lxxhash -lopenblas \
 *      -llapacke -lz -lm -lpthread
 *
 * Handles (sheaf_options, _scan, _summary, _summary_set, _screen, _pca,
 * _drift) are made by one call and freed by their sheaf_*_free (NULL is
 * fine).  A call that can fail returns an int status (SHEAF_OK or a
 * SHEAF_ERR_* code) or a pointer (NULL), with a one-line message in its
 * last argument, `sheaf_error *err` (may be NULL; left alone on success).
 * Readers of figures cannot fail: what does not exist is NaN, 0 or NULL.
 * Strings passed in are copied; strings returned live as long as their
 * handle.  docs/library.md, "Who owns what" and "Errors", has the rules.
 *
 * Threads.  No call keeps global mutable state.  A handle may be used by one
 * thread at a time; the read-only calls on a summary (readers, screen, PCA,
 * write) may run on many threads at once.  A scan starts worker threads of
 * its own (sheaf_options_set_threads); the summary is the same, byte for
 * byte, for every thread count and for every way the bytes are split.
 */
#ifndef SHEAF_H
#define SHEAF_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>

#ifdef __cplusplus
extern "C" {
#endif

/* Marks the exported calls, so that a shared library built with
 * -fvisibility=hidden exports these and nothing else. */
#ifndef SHEAF_API
#if defined(__GNUC__) || defined(__clang__)
#define SHEAF_API __attribute__((visibility("default")))
#else
#define SHEAF_API
#endif
#endif

/* ---- version and errors ---------------------------------------------------- */

#define SHEAF_VERSION_MAJOR 0
#define SHEAF_VERSION_MINOR 1
#define SHEAF_VERSION "0.1" /* "MAJOR.MINOR" of this header */

/* The version of the library linked in, "MAJOR.MINOR" (static storage). */
SHEAF_API const char *sheaf_version(void);

enum {
    SHEAF_OK = 0,
    SHEAF_ERR_USAGE = 1,        /* a bad argument: unknown column, value out of range,
                                   a call out of order */
    SHEAF_ERR_INPUT = 2,        /* table data that cannot be read or is malformed */
    SHEAF_ERR_IO = 3,           /* a summary file that cannot be read or written */
    SHEAF_ERR_CORRUPT = 4,      /* not a summary, damaged, truncated, or from a newer sheaf */
    SHEAF_ERR_INCOMPATIBLE = 5, /* summaries that cannot be merged (schema or options) */
    SHEAF_ERR_TARGETS = 6,      /* a file of several targets where one summary was asked
                                   for, or a target the file does not hold */
    SHEAF_ERR_MEMORY = 7,       /* out of memory, or over the scan's memory limit */
    SHEAF_ERR_NUMERIC = 8       /* the eigen-decomposition failed */
};

/* A short phrase for a status code ("ok", "out of memory" ...; static
 * storage); "unknown error code" for a value that is none of them. */
SHEAF_API const char *sheaf_error_string(int code);

#define SHEAF_ERROR_BYTES 1024
/* What a failed call wrote: its code and a one-line message (cut to fit). */
typedef struct {
    int code;                        /* a SHEAF_ERR_* code */
    char message[SHEAF_ERROR_BYTES]; /* one line, no newline */
} sheaf_error;

/* ---- options ---------------------------------------------------------------
 *
 * Setter style: create, set what differs from the defaults, hand to
 * sheaf_scan_create (which copies it) and to sheaf_screen_run / sheaf_pca_fit
 * (which read it during the call).  Every setter copies its strings and
 * returns SHEAF_OK or SHEAF_ERR_USAGE for a value out of range. */

typedef struct sheaf_options sheaf_options;

enum { SHEAF_TASK_AUTO = 0, SHEAF_TASK_CLASSIFY = 1, SHEAF_TASK_REGRESS = 2 };
enum { SHEAF_BASIS_CORRELATION = 0, SHEAF_BASIS_COVARIANCE = 1 };

/* Defaults: no target, delimiter detected, header on, the missing-value
 * spellings NA N/A null NULL None - ? (any letter case; the empty cell is
 * always missing), 1024 exact values and 256 classes per column, as many
 * scan threads as CPUs, no memory limit; screen at q 0.05 with redundancy
 * |r| 0.95 and no cap; PCA on the correlation basis of the automatic columns.
 * NULL when out of memory.  Free with sheaf_options_free. */
SHEAF_API sheaf_options *sheaf_options_create(sheaf_error *err);
SHEAF_API void sheaf_options_free(sheaf_options *o);

/* The outcome column: one header name, or several separated by commas, "\\,"
 * a comma in one (a text that is a whole header name is one column), kept
 * for in one pass (then finish with sheaf_scan_finish_set).  NULL: none. */
SHEAF_API int sheaf_options_set_target(sheaf_options *o, const char *names, sheaf_error *err);
/* SHEAF_TASK_AUTO (decided when the summary is read), _CLASSIFY or _REGRESS. */
SHEAF_API int sheaf_options_set_task(sheaf_options *o, int task, sheaf_error *err);
/* Worker threads: 0 = the CPUs the process may use, 1 = none (the caller's). */
SHEAF_API int sheaf_options_set_threads(sheaf_options *o, unsigned threads, sheaf_error *err);
/* The field delimiter, one byte (',' '\t' ';' '|' ' ' ...), or 0 to detect it. */
SHEAF_API int sheaf_options_set_delimiter(sheaf_options *o, char delimiter, sheaf_error *err);
/* 1: the first record names the columns (default); 0: it is data, and the
 * columns are named col1, col2, ... */
SHEAF_API int sheaf_options_set_header(sheaf_options *o, int has_header, sheaf_error *err);
/* 1: a row with too few or too many fields is an error (default 0: counted). */
SHEAF_API int sheaf_options_set_strict(sheaf_options *o, int strict, sheaf_error *err);
/* Replaces the missing-value spellings with these n (at most 32, each at
 * most 1024 bytes; n = 0 leaves only the empty cell missing).  They match in
 * any ASCII letter case. */
SHEAF_API int sheaf_options_set_missing(sheaf_options *o, const char *const *spellings, size_t n,
                                        sheaf_error *err);
/* Comma-separated header names, "\\," a comma in one (NULL: clear): scan only
 * these; declare these numeric; declare these categorical (never parsed);
 * leave these out.  A name the header does not hold fails the scan (USAGE). */
SHEAF_API int sheaf_options_set_columns(sheaf_options *o, const char *names, sheaf_error *err);
SHEAF_API int sheaf_options_set_numeric(sheaf_options *o, const char *names, sheaf_error *err);
SHEAF_API int sheaf_options_set_categorical(sheaf_options *o, const char *names, sheaf_error *err);
SHEAF_API int sheaf_options_set_exclude(sheaf_options *o, const char *names, sheaf_error *err);
/* The longest record accepted, in bytes (at least 64; default 64 MiB): a
 * longer one fails the scan with SHEAF_ERR_INPUT naming its byte offset. */
SHEAF_API int sheaf_options_set_max_record_bytes(sheaf_options *o, size_t bytes, sheaf_error *err);
/* 1: read a stream whose start does not look like text (NUL or control
 * bytes), which is refused by default (SHEAF_ERR_INPUT). */
SHEAF_API int sheaf_options_set_force(sheaf_options *o, int force, sheaf_error *err);
/* Exact value counts kept per column before the table overflows (1 .. 2^24). */
SHEAF_API int sheaf_options_set_max_levels(sheaf_options *o, uint32_t levels, sheaf_error *err);
/* Target classes kept before a numeric target turns to regression (2 .. 65536). */
SHEAF_API int sheaf_options_set_max_classes(sheaf_options *o, uint32_t classes, sheaf_error *err);
/* Memory the scan may add, in bytes (0: no limit); past it the scan fails
 * with SHEAF_ERR_MEMORY. */
SHEAF_API int sheaf_options_set_memory_limit(sheaf_options *o, uint64_t bytes, sheaf_error *err);
/* Occupied value buckets per column, 16 to 2^24 (default 2048); summaries
 * merge only with the same budget. */
SHEAF_API int sheaf_options_set_bucket_budget(sheaf_options *o, uint32_t buckets,
                                              sheaf_error *err);
/* Bytes per chunk, 64 to 4 GiB (default 256 KiB).  Figures may differ in
 * their last bits between chunk sizes (as `sheaf scan --chunk-size`). */
SHEAF_API int sheaf_options_set_chunk_size(sheaf_options *o, size_t bytes, sheaf_error *err);
/* Scan only the records that start in byte range index (1..count) of count
 * equal ranges of one file (docs/shards.md); from_top finds the range's
 * first record by reading the file from its top.  0, 0, 0: the whole file
 * (the default).  The summaries of the count shards merge to the whole
 * file's. */
SHEAF_API int sheaf_options_set_shard(sheaf_options *o, unsigned index, unsigned count,
                                      int from_top, sheaf_error *err);
/* Screen: the q-value at which a column is relevant (0 < q <= 1, default
 * 0.05); at most `top` columns kept (0: no cap); the |r| above which the
 * less relevant of two kept numeric columns is dropped (0 < r <= 1, 0.95). */
SHEAF_API int sheaf_options_set_fdr(sheaf_options *o, double q, sheaf_error *err);
SHEAF_API int sheaf_options_set_max_kept(sheaf_options *o, size_t top, sheaf_error *err);
SHEAF_API int sheaf_options_set_redundancy(sheaf_options *o, double abs_r, sheaf_error *err);
/* PCA: SHEAF_BASIS_CORRELATION or _COVARIANCE; comma-separated columns to use
 * ("\\," a comma in one; NULL: the automatic choice); columns to leave out. */
SHEAF_API int sheaf_options_set_pca_basis(sheaf_options *o, int basis, sheaf_error *err);
SHEAF_API int sheaf_options_set_pca_columns(sheaf_options *o, const char *names, sheaf_error *err);
SHEAF_API int sheaf_options_set_pca_exclude(sheaf_options *o, const char *names, sheaf_error *err);
/* PCA: 1 keeps the summary's target in the automatic choice of columns
 * (default 0: the target is left out, with the reason "target"). */
SHEAF_API int sheaf_options_set_pca_with_target(sheaf_options *o, int with_target,
                                                sheaf_error *err);
/* The kind rule of the screen, the PCA and the page: a column is numeric
 * when at least this share of its present cells are numbers, or when it was
 * declared numeric (0 < share <= 1, default 0.99).  One setting for all
 * three, as the command line's share is one per command. */
SHEAF_API int sheaf_options_set_numeric_share(sheaf_options *o, double share, sheaf_error *err);

/* Screen, further settings.  The order of the kept columns: SHEAF_RANK_Q
 * (the default: log10 q, then log10 p), _MI (the adjusted mutual
 * information) or _STAT (the statistic of the test behind q). */
enum { SHEAF_RANK_Q = 0, SHEAF_RANK_MI = 1, SHEAF_RANK_STAT = 2 };
SHEAF_API int sheaf_options_set_rank_by(sheaf_options *o, int key, sheaf_error *err);
/* Equal-frequency bins of the mutual information (2 .. 1000, default 10). */
SHEAF_API int sheaf_options_set_bins(sheaf_options *o, unsigned bins, sheaf_error *err);
/* The share of missing cells at or above which a column is flagged
 * too_sparse (0 < share <= 1, default 0.5). */
SHEAF_API int sheaf_options_set_missing_share(sheaf_options *o, double share, sheaf_error *err);
/* The variance below which a numeric column is flagged little_information
 * (>= 0; default 0: not checked). */
SHEAF_API int sheaf_options_set_min_variance(sheaf_options *o, double variance, sheaf_error *err);
/* 1: a relevant column flagged mirrors_target (a possible leak of the
 * outcome) stays in the selection (default 0: it is dropped). */
SHEAF_API int sheaf_options_set_keep_mirrors(sheaf_options *o, int keep, sheaf_error *err);
/* Screens against another column of the summary instead of its target:
 * a numeric column of the co-moments, tested by the F test of Pearson r
 * from the co-moments alone (sheaf_screen_from_comoments).  NULL (the
 * default) or the target's own name: the summary's target.  The name is
 * looked up by sheaf_screen_run, which fails with SHEAF_ERR_USAGE when it
 * is no column (naming the nearest), names more than one, or is not a
 * numeric column of the co-moments. */
SHEAF_API int sheaf_options_set_screen_target(sheaf_options *o, const char *name,
                                              sheaf_error *err);

/* ---- scanning ---------------------------------------------------------------
 *
 * A scan reads any number of streams in turn (they must share the header;
 * the first fixes the columns) and is finished into a summary.  Errors of
 * reading and scanning are sticky: after one, every later call on the scan
 * returns the same code and message (a refused argument leaves the scan as
 * it was).  The four ways in give the same summary, byte for byte, for the
 * same bytes under the same stream name, however the bytes are split; only
 * a file by path also records its modification time (the others 0). */

typedef struct sheaf_scan sheaf_scan;
typedef struct sheaf_summary sheaf_summary;
typedef struct sheaf_summary_set sheaf_summary_set;

/* A scan with a copy of the options (NULL: the defaults); o may be freed
 * at once.  NULL on failure.  Free with sheaf_scan_free. */
SHEAF_API sheaf_scan *sheaf_scan_create(const sheaf_options *o, sheaf_error *err);
SHEAF_API void sheaf_scan_free(sheaf_scan *sc);

/* A file by path: plain, gzip or zstd, detected from its bytes; "-" is
 * standard input. */
SHEAF_API int sheaf_scan_path(sheaf_scan *sc, const char *path, sheaf_error *err);
/* Reads f from where it stands to its end as one stream named `name`
 * (copied; used in messages and the source record): plain, gzip or zstd,
 * detected from its first bytes as for a file.  f stays open and the
 * caller's. */
SHEAF_API int sheaf_scan_stream(sheaf_scan *sc, FILE *f, const char *name, sheaf_error *err);
/* len bytes held in memory (plain, gzip or zstd, detected), as one stream
 * named `name`.  The bytes are read during the call only. */
SHEAF_API int sheaf_scan_memory(sheaf_scan *sc, const void *data, size_t len, const char *name,
                                sheaf_error *err);
/* Plain text fed in pieces of any size: begin a stream named `name`, feed,
 * end.  Each piece is read during the call only. */
SHEAF_API int sheaf_scan_begin(sheaf_scan *sc, const char *name, sheaf_error *err);
SHEAF_API int sheaf_scan_feed(sheaf_scan *sc, const void *data, size_t len, sheaf_error *err);
SHEAF_API int sheaf_scan_end(sheaf_scan *sc, sheaf_error *err);

/* The summary of everything scanned, owned by the caller (sheaf_summary_free).
 * NULL on an error, when nothing was scanned, or when the scan has several
 * targets (SHEAF_ERR_USAGE: use sheaf_scan_finish_set).  The scan is spent:
 * only sheaf_scan_free remains. */
SHEAF_API sheaf_summary *sheaf_scan_finish(sheaf_scan *sc, sheaf_error *err);
/* The summaries of everything scanned, one per target in the order named
 * (a set of one without a target or with one), owned by the caller
 * (sheaf_summary_set_free). */
SHEAF_API sheaf_summary_set *sheaf_scan_finish_set(sheaf_scan *sc, sheaf_error *err);

/* Checkpoints (docs/nightly.md): the npaths files scanned in turn as
 * sheaf_scan_path would ("-" refused), the summaries at every cut (the first
 * chunk boundary after each checkpoint_bytes decompressed bytes; 0: 256 MiB)
 * written atomically to checkpoint_path, and the result returned as
 * sheaf_scan_finish_set would (the caller's).  With resume 1 the scan goes
 * on from that file, written by a scan of the same unchanged files with the
 * same shaping options and checkpoint_bytes (threads and memory limit may
 * differ).  Resumed or not, the result is byte for byte that of `sheaf scan
 * --checkpoint` (whose checkpoints this call resumes); against a scan without
 * checkpoints, counts and tables are equal and moments agree to rounding.
 * The checkpoint stays on success: remove it once the summaries are written.
 * NULL on failure: SHEAF_ERR_USAGE (nothing to resume, a checkpoint of other
 * options or files, or one that is an input), SHEAF_ERR_CORRUPT (damaged),
 * SHEAF_ERR_INPUT (bad input, or an input changed since), SHEAF_ERR_IO (it
 * cannot be written), SHEAF_ERR_MEMORY.  o may be NULL (the defaults). */
SHEAF_API sheaf_summary_set *sheaf_scan_files_checkpointed(const sheaf_options *o,
                                                           const char *const *paths,
                                                           size_t npaths,
                                                           const char *checkpoint_path,
                                                           uint64_t checkpoint_bytes, int resume,
                                                           sheaf_error *err);

/* ---- summaries: files and merges --------------------------------------------- */

SHEAF_API void sheaf_summary_free(sheaf_summary *s);
/* Writes s to path, atomically: the file appears whole or not at all ("-":
 * standard output). */
SHEAF_API int sheaf_summary_write(const sheaf_summary *s, const char *path, sheaf_error *err);
/* Reads a summary file ("-": standard input).  A file of several targets
 * fails with SHEAF_ERR_TARGETS naming them (use sheaf_summary_read_target).
 * Owned by the caller. */
SHEAF_API sheaf_summary *sheaf_summary_read(const char *path, sheaf_error *err);
/* Reads one target's summary from a file of several targets, or a file of
 * one summary whose target it is (SHEAF_ERR_TARGETS otherwise). */
SHEAF_API sheaf_summary *sheaf_summary_read_target(const char *path, const char *target,
                                                   sheaf_error *err);
/* Decodes a summary from the len bytes of a summary file in memory (read
 * during the call only). */
SHEAF_API sheaf_summary *sheaf_summary_read_memory(const void *data, size_t len, sheaf_error *err);
/* into := into + from, exactly as a scan of both tables' bytes would count
 * (moments up to rounding).  The schemas and options must agree
 * (SHEAF_ERR_INCOMPATIBLE, naming the differences).  Refused with
 * SHEAF_ERR_INCOMPATIBLE, as `sheaf merge` refuses them: a source of from
 * already counted in into (the same bytes: fingerprint, size and byte range,
 * whatever the path), and byte-range shards of one file that overlap or
 * took a wrong first record (docs/shards.md).  from stays the caller's; it
 * may be changed (its target classes dropped when into's were).  On failure
 * into may be partly merged: discard it. */
SHEAF_API int sheaf_summary_merge(sheaf_summary *into, sheaf_summary *from, sheaf_error *err);
/* Flags of the _flags merges. */
#define SHEAF_MERGE_ALLOW_DUPLICATES 1u /* merge a source already counted (count it twice) */
/* sheaf_summary_merge with flags (0: the same). */
SHEAF_API int sheaf_summary_merge_flags(sheaf_summary *into, sheaf_summary *from, unsigned flags,
                                        sheaf_error *err);

/* Several targets.  A set owns its summaries until one is taken out. */
SHEAF_API void sheaf_summary_set_free(sheaf_summary_set *set);
SHEAF_API sheaf_summary_set *sheaf_summary_set_read(const char *path, sheaf_error *err);
/* Decodes any summary file held in memory (len bytes, read during the
 * call only): one summary (a set of one) or every target of a file of
 * several, checked as sheaf_summary_set_read checks a file. */
SHEAF_API sheaf_summary_set *sheaf_summary_set_read_memory(const void *data, size_t len,
                                                           sheaf_error *err);
SHEAF_API int sheaf_summary_set_write(const sheaf_summary_set *set, const char *path,
                                      sheaf_error *err);
/* Part by part; the sets must hold the same targets in the same order.
 * Refusals as sheaf_summary_merge's. */
SHEAF_API int sheaf_summary_set_merge(sheaf_summary_set *into, sheaf_summary_set *from,
                                      sheaf_error *err);
SHEAF_API int sheaf_summary_set_merge_flags(sheaf_summary_set *into, sheaf_summary_set *from,
                                            unsigned flags, sheaf_error *err);
SHEAF_API size_t sheaf_summary_set_count(const sheaf_summary_set *set);
/* The target of part i (owned by the set); NULL when out of range, when the
 * part has no target, or after it was taken. */
SHEAF_API const char *sheaf_summary_set_target(const sheaf_summary_set *set, size_t i);
/* Takes part i out of the set: the caller owns it from then on. */
SHEAF_API sheaf_summary *sheaf_summary_set_take(sheaf_summary_set *set, size_t i, sheaf_error *err);

/* ---- summaries: the table and its columns -----------------------------------
 *
 * A column is named by its index, 0 <= col < sheaf_summary_column_count(s).
 * Figures are in the column's own units.  Returned strings are owned by s. */

SHEAF_API uint64_t sheaf_summary_rows(const sheaf_summary *s);        /* data rows */
SHEAF_API size_t sheaf_summary_column_count(const sheaf_summary *s);  /* scanned columns */
SHEAF_API const char *sheaf_summary_column_name(const sheaf_summary *s, size_t col);
SHEAF_API const char *sheaf_summary_target(const sheaf_summary *s);   /* NULL: no target */
/* The index of the column with this exact name into *col; SHEAF_ERR_USAGE
 * for no such column, with the nearest names in the message. */
SHEAF_API int sheaf_summary_find_column(const sheaf_summary *s, const char *name, size_t *col,
                                        sheaf_error *err);

/* The table's other counts: decompressed bytes read; rows with too few and
 * with too many fields (counted, unless the scan was strict); header lines
 * skipped where a gzip member or zstd frame began (not rows).  The line
 * numbers of the first ragged rows (at most 5): their count, with *lines
 * (may be NULL) pointing into s. */
SHEAF_API uint64_t sheaf_summary_bytes(const sheaf_summary *s);
SHEAF_API uint64_t sheaf_summary_short_rows(const sheaf_summary *s);
SHEAF_API uint64_t sheaf_summary_long_rows(const sheaf_summary *s);
SHEAF_API uint64_t sheaf_summary_repeated_headers(const sheaf_summary *s);
SHEAF_API size_t sheaf_summary_ragged_lines(const sheaf_summary *s, const uint64_t **lines);
/* The format version s is written in alone (a file of several targets is
 * version 4 as a whole); 0 for NULL. */
SHEAF_API unsigned sheaf_summary_format_version(const sheaf_summary *s);

/* Where the rows came from: one record per stream scanned (merges append
 * the other summary's).  Strings point into the summary. */
typedef struct {
    const char *path;        /* the stream's name as scanned ("-": standard input) */
    const char *format;      /* "plain", "gzip" or "zstd" */
    uint64_t size_bytes;     /* the file's size (0 when not known, as for a pipe) */
    int64_t mtime;           /* its modification time, seconds since 1970 (0: not a file
                                scanned by path) */
    uint64_t fingerprint;    /* XXH3-64 of the raw bytes read (the CLI prints it as 16
                                hex digits) */
    uint64_t raw_bytes;      /* raw (still compressed) bytes read */
    uint64_t rows;           /* data rows read from it */
    uint64_t start_byte;     /* a byte range's first byte (0 for the whole file) */
    uint64_t end_byte;       /* the byte after its last; 0: the whole file */
    unsigned shard_index;    /* I of a byte-range shard I of N (sheaf_options_set_shard) */
    unsigned shard_count;    /* N; 0 and 0: no shard record */
    const char *shard_start; /* how the shard's first record was found: "certain",
                                "speculated" or "prefix"; "" without a shard record */
} sheaf_source;
SHEAF_API size_t sheaf_summary_source_count(const sheaf_summary *s);
/* Source i into *out: SHEAF_OK, or SHEAF_ERR_USAGE when i is out of range
 * (or s or out is NULL). */
SHEAF_API int sheaf_summary_source_at(const sheaf_summary *s, size_t i, sheaf_source *out);

/* The target.  Its task (SHEAF_TASK_CLASSIFY or _REGRESS): the declared one
 * (sheaf_options_set_task), else decided by its values under the kind rule
 * numeric_share (0 < share <= 1; 0.99 is every command's default);
 * SHEAF_TASK_AUTO without a target or for a share out of range.  The task
 * declared at scan time (SHEAF_TASK_AUTO: none).  1 when a numeric target
 * passed the class limit and its class figures were dropped.  The class
 * limit the summary was scanned with (sheaf_options_set_max_classes). */
SHEAF_API int sheaf_summary_task(const sheaf_summary *s, double numeric_share);
SHEAF_API int sheaf_summary_declared_task(const sheaf_summary *s);
SHEAF_API int sheaf_summary_classes_dropped(const sheaf_summary *s);
SHEAF_API uint32_t sheaf_summary_max_classes(const sheaf_summary *s);
/* The target's classes (0 when none are kept), class k's text (owned by s)
 * and its rows, in the summary's order of classes. */
SHEAF_API size_t sheaf_summary_class_count(const sheaf_summary *s);
SHEAF_API const char *sheaf_summary_class_label(const sheaf_summary *s, size_t k);
SHEAF_API uint64_t sheaf_summary_class_rows(const sheaf_summary *s, size_t k);

/* Counts: finite numbers, present cells (numbers, text, inf/nan), missing
 * cells (absent ones in short rows included), present cells that are not
 * numbers. */
SHEAF_API uint64_t sheaf_column_numbers(const sheaf_summary *s, size_t col);
SHEAF_API uint64_t sheaf_column_present(const sheaf_summary *s, size_t col);
SHEAF_API uint64_t sheaf_column_missing(const sheaf_summary *s, size_t col);
SHEAF_API uint64_t sheaf_column_text(const sheaf_summary *s, size_t col);
/* 1 when at least 99% of the present cells are numbers (or the column was
 * declared numeric), else 0. */
SHEAF_API int sheaf_column_is_numeric(const sheaf_summary *s, size_t col);
/* Present cells that are inf or nan; finite cells equal to zero; finite
 * cells with an integer value. */
SHEAF_API uint64_t sheaf_column_non_finite(const sheaf_summary *s, size_t col);
SHEAF_API uint64_t sheaf_column_zeros(const sheaf_summary *s, size_t col);
SHEAF_API uint64_t sheaf_column_integers(const sheaf_summary *s, size_t col);
/* The column's kind under the kind rule numeric_share (0 < share <= 1):
 * SHEAF_KIND_NUMERIC when at least that share of its present cells are
 * numbers (or it was declared numeric), else SHEAF_KIND_CATEGORICAL; -1
 * for a column out of range or a share out of range. */
enum { SHEAF_KIND_CATEGORICAL = 0, SHEAF_KIND_NUMERIC = 1 };
SHEAF_API int sheaf_column_kind(const sheaf_summary *s, size_t col, double numeric_share);
/* Moments of the finite numbers: mean; sample variance and sd (n - 1);
 * skewness g1 = sqrt(n) m3 / m2^1.5; excess kurtosis g2 = n m4 / m2^2 - 3;
 * smallest and largest number.  NaN where undefined. */
SHEAF_API double sheaf_column_mean(const sheaf_summary *s, size_t col);
SHEAF_API double sheaf_column_variance(const sheaf_summary *s, size_t col);
SHEAF_API double sheaf_column_sd(const sheaf_summary *s, size_t col);
SHEAF_API double sheaf_column_skewness(const sheaf_summary *s, size_t col);
SHEAF_API double sheaf_column_kurtosis(const sheaf_summary *s, size_t col);
SHEAF_API double sheaf_column_min(const sheaf_summary *s, size_t col);
SHEAF_API double sheaf_column_max(const sheaf_summary *s, size_t col);
/* The p[i]-quantiles (0 <= p[i] <= 1; NaN for another p or without numbers)
 * into out[i], i < k, by numpy.quantile's default (linear) definition:
 * exact while the value table holds every number (*rel_error = 0), else
 * estimates within *rel_error relative (rel_error may be NULL). */
SHEAF_API int sheaf_column_quantiles(const sheaf_summary *s, size_t col, const double *p, size_t k,
                                     double *out, double *rel_error, sheaf_error *err);
/* Distinct values: exact while the value table holds them (*exact = 1),
 * else a HyperLogLog estimate (*exact = 0; exact may be NULL). */
SHEAF_API double sheaf_column_distinct(const sheaf_summary *s, size_t col, int *exact);

/* A value and its count.  text points into the summary and is NOT
 * NUL-terminated: print it with "%.*s", (int)v.len, v.text. */
typedef struct {
    const char *text; /* the value's text (the first bytes of it when cut) */
    size_t len;       /* bytes of text */
    uint64_t count;   /* occurrences (a lower bound once the value table overflowed) */
    int cut;          /* 1: the text is the start of a longer value */
} sheaf_value;
/* The k most frequent values, most frequent first (equal counts in a fixed
 * order of sheaf's own), into out (room for k); returns how many were
 * written (0 also when out of memory, which only k > 64 may run into). */
SHEAF_API size_t sheaf_column_top(const sheaf_summary *s, size_t col, size_t k, sheaf_value *out);
/* 1 when the column's table of exact values overflowed (here or in a
 * merged part): the distinct count is then an estimate and the top counts
 * are lower bounds. */
SHEAF_API int sheaf_column_table_overflowed(const sheaf_summary *s, size_t col);
/* The first few present cells that are not numbers, kept as examples (at
 * most 3, each NUL-terminated and cut to 40 bytes): their count, and
 * example i (owned by s; NULL out of range). */
SHEAF_API size_t sheaf_column_example_count(const sheaf_summary *s, size_t col);
SHEAF_API const char *sheaf_column_example(const sheaf_summary *s, size_t col, size_t i);
/* A column's numbers within target class k (k < sheaf_summary_class_count):
 * how many, their mean (NaN when none, or imprecise) and sample variance (n - 1;
 * NaN below two, or imprecise: 1 from _imprecise when the numbers lay too far
 * from the first number of the scan that read them, here or in a merged summary,
 * to keep their digits); 0 and NaN out of range, or with no class figures. */
SHEAF_API uint64_t sheaf_column_class_numbers(const sheaf_summary *s, size_t col, size_t k);
SHEAF_API double sheaf_column_class_mean(const sheaf_summary *s, size_t col, size_t k);
SHEAF_API double sheaf_column_class_variance(const sheaf_summary *s, size_t col, size_t k);
SHEAF_API int sheaf_column_class_imprecise(const sheaf_summary *s, size_t col, size_t k);
/* Pearson r of two numeric columns over the rows where both hold a number (NaN
 * with fewer than two, a constant side, a declared-categorical column, or when
 * _pair_imprecise says 1: numbers rounded far from the first number of their
 * scan); the sample covariance; the rows. */
SHEAF_API double sheaf_correlation(const sheaf_summary *s, size_t a, size_t b);
SHEAF_API double sheaf_covariance(const sheaf_summary *s, size_t a, size_t b);
SHEAF_API uint64_t sheaf_pair_count(const sheaf_summary *s, size_t a, size_t b);
SHEAF_API int sheaf_pair_imprecise(const sheaf_summary *s, size_t a, size_t b);

/* ---- screen ------------------------------------------------------------------
 *
 * Which columns to keep as features of the summary's target, and why: one
 * row per column other than the target, in summary order.  A screen holds
 * copies of what it reports (it may outlive the summary). */

typedef struct sheaf_screen sheaf_screen;

/* Runs the screen with o's screen settings (NULL: the defaults).  NULL on
 * failure.  Free with sheaf_screen_free. */
SHEAF_API sheaf_screen *sheaf_screen_run(const sheaf_summary *s, const sheaf_options *o,
                                         sheaf_error *err);
SHEAF_API void sheaf_screen_free(sheaf_screen *r);
SHEAF_API int sheaf_screen_task(const sheaf_screen *r);         /* SHEAF_TASK_*; AUTO: no target */
SHEAF_API size_t sheaf_screen_row_count(const sheaf_screen *r);  /* rows */
SHEAF_API size_t sheaf_screen_kept_count(const sheaf_screen *r); /* rows kept */
/* Row i (0 <= i < sheaf_screen_row_count; out of range: (size_t)-1, NULL,
 * 0 or NaN): its summary column index and name; 1 when kept, 0 when dropped;
 * its rank among the kept (1 = most relevant, 0 when dropped); the test behind
 * its q ("anova_f", "chi2" (also a numeric column's with imprecise class means),
 * "corr_f"; "" when untested) and its statistic; p and log10 p (finite where p
 * underflows to 0); Benjamini-Hochberg q and log10 q (NaN when untested); the
 * reasons, "; "-separated. */
SHEAF_API size_t sheaf_screen_column(const sheaf_screen *r, size_t i);
SHEAF_API const char *sheaf_screen_name(const sheaf_screen *r, size_t i);
SHEAF_API int sheaf_screen_kept(const sheaf_screen *r, size_t i);
SHEAF_API size_t sheaf_screen_rank(const sheaf_screen *r, size_t i);
SHEAF_API const char *sheaf_screen_test(const sheaf_screen *r, size_t i);
SHEAF_API double sheaf_screen_statistic(const sheaf_screen *r, size_t i);
SHEAF_API double sheaf_screen_p(const sheaf_screen *r, size_t i);
SHEAF_API double sheaf_screen_log10_p(const sheaf_screen *r, size_t i);
SHEAF_API double sheaf_screen_q(const sheaf_screen *r, size_t i);
SHEAF_API double sheaf_screen_log10_q(const sheaf_screen *r, size_t i);
SHEAF_API const char *sheaf_screen_reason(const sheaf_screen *r, size_t i);

/* The column screened against (owned by the screen; NULL without a
 * target), and 1 when it is not the summary's target but another numeric
 * column (sheaf_options_set_screen_target): a regression from the
 * co-moments, where only the F test of r applies. */
SHEAF_API const char *sheaf_screen_target(const sheaf_screen *r);
SHEAF_API int sheaf_screen_from_comoments(const sheaf_screen *r);
/* Row i's kind under the screen's kind rule (SHEAF_KIND_*; -1 out of
 * range); its flags, bit b set for flag b (sheaf_screen_flag_name); 1 when
 * the test behind its q passes its validity rule or has none (0: the test
 * takes no part in the q-values and never keeps the column; also 0 out of
 * range); its adjusted mutual information (NaN when not computed or
 * undefined). */
SHEAF_API int sheaf_screen_kind(const sheaf_screen *r, size_t i);
SHEAF_API unsigned sheaf_screen_flags(const sheaf_screen *r, size_t i);
SHEAF_API int sheaf_screen_test_holds(const sheaf_screen *r, size_t i);
SHEAF_API double sheaf_screen_adjusted_mi(const sheaf_screen *r, size_t i);
/* The name of flag bit b (0 <= b < 6: no_information, little_information,
 * names_rows, too_sparse, too_many_levels, mirrors_target), or NULL. */
SHEAF_API const char *sheaf_screen_flag_name(unsigned b);

/* The tests of a row: SHEAF_TEST_ANOVA_F (classification: a numeric
 * column across the classes; regression: the target across a text
 * column's levels), _WELCH_F (classification, numeric column), _CORR_F (the
 * F test of Pearson r; regression, numeric column) and _CHI2 (the column's
 * levels, or a numeric column's bins, against the classes). */
enum { SHEAF_TEST_ANOVA_F = 0, SHEAF_TEST_WELCH_F = 1, SHEAF_TEST_CORR_F = 2, SHEAF_TEST_CHI2 = 3 };
/* The validity rule a test was judged by: none, Cochran's (1954) on the
 * expected counts of the chi-squared table, or sheaf's level-size rule for
 * the ANOVA across a text column's levels. */
enum { SHEAF_RULE_NONE = 0, SHEAF_RULE_COCHRAN = 1, SHEAF_RULE_LEVEL_SIZES = 2 };
typedef struct {
    int present;         /* 1: computed for this row (the figures below are set) */
    double stat;         /* the statistic */
    double df1, df2;     /* degrees of freedom; the chi-squared test has one (df1; df2 NaN) */
    double p, log10_p;   /* p-value (0 where it underflows) and its log10 (stays finite) */
    double extra;        /* _CORR_F: Pearson r; _CHI2: Cramer's V; NaN for the others */
    int rule;            /* SHEAF_RULE_* */
    int holds;           /* 1: the rule holds, or there is none */
    size_t units;        /* Cochran: expected counts judged; level sizes: levels */
    size_t small;        /* of them, below 5 (an expected count, or a level's rows) */
    double small_share;  /* Cochran: small / units; level sizes: the share of rows in
                            levels of fewer than 5 rows */
    double smallest;     /* the smallest expected count, or the smallest level's rows */
} sheaf_test_figures;
/* Test `test` (SHEAF_TEST_*) of row i into *out (present 0 when it was not
 * computed): SHEAF_OK, or SHEAF_ERR_USAGE when i or test is out of range
 * (or r or out is NULL). */
SHEAF_API int sheaf_screen_test_at(const sheaf_screen *r, size_t i, int test,
                                   sheaf_test_figures *out);

/* The mutual information of a row with the target, from their contingency
 * table (numeric sides coarsened into about equal-frequency bins). */
typedef struct {
    int present;             /* 1: computed (the figures below are set) */
    double nats;             /* the plug-in estimate, in nats */
    double nats_corrected;   /* Miller-Madow corrected (may be below 0) */
    double normalized;       /* nats / the target's entropy; NaN when that is 0 */
    unsigned feature_bins, target_bins; /* non-empty bins (levels) of each side used */
    double expected_nats;    /* its expectation by chance, for these margins */
    double adjusted;         /* adjusted for chance (Vinh et al. 2010, the max form);
                                NaN when undefined */
    size_t expected_approximated_cells; /* cells of the expectation approximated */
} sheaf_mi_figures;
/* Row i's mutual information into *out: SHEAF_OK, or SHEAF_ERR_USAGE when i
 * is out of range (or r or out is NULL). */
SHEAF_API int sheaf_screen_mi_at(const sheaf_screen *r, size_t i, sheaf_mi_figures *out);

/* Pairs of numeric columns whose |r| is at or above the redundancy
 * (sheaf_options_set_redundancy), among the columns still kept before the
 * pruning; where both were kept, the less relevant one was dropped.  Their
 * count, and pair i as two rows of the screen (sheaf_screen_name gives
 * their names; *row_a is the more relevant) with their Pearson r.
 * SHEAF_OK, or SHEAF_ERR_USAGE when i is out of range (any pointer may be
 * NULL). */
SHEAF_API size_t sheaf_screen_pair_count(const sheaf_screen *r);
SHEAF_API int sheaf_screen_pair_at(const sheaf_screen *r, size_t i, size_t *row_a, size_t *row_b,
                                   double *pearson_r);

/* ---- principal components ------------------------------------------------------
 *
 * From the pairwise-complete correlation (or covariance) matrix of the
 * summary's numeric columns.  A fit holds copies of what it reports. */

typedef struct sheaf_pca sheaf_pca;

/* Fits with o's PCA settings (NULL: the defaults).  NULL on failure (a named
 * column that is not usable: SHEAF_ERR_USAGE).  Free with sheaf_pca_free. */
SHEAF_API sheaf_pca *sheaf_pca_fit(const sheaf_summary *s, const sheaf_options *o,
                                   sheaf_error *err);
SHEAF_API void sheaf_pca_free(sheaf_pca *f);
/* Columns in the basis (= components), their summary indices and names
 * (j out of range: (size_t)-1 and NULL). */
SHEAF_API size_t sheaf_pca_column_count(const sheaf_pca *f);
SHEAF_API size_t sheaf_pca_column(const sheaf_pca *f, size_t j);
SHEAF_API const char *sheaf_pca_column_name(const sheaf_pca *f, size_t j);
/* Component k's eigenvalue (decreasing in k; negative ones set to 0), its
 * share of the sum and the cumulative share; NaN out of range. */
SHEAF_API double sheaf_pca_eigenvalue(const sheaf_pca *f, size_t k);
SHEAF_API double sheaf_pca_share(const sheaf_pca *f, size_t k);
SHEAF_API double sheaf_pca_cumulative(const sheaf_pca *f, size_t k);
/* Loading of basis column j on component k: the unit eigenvector's entry,
 * signed so that each component's largest-magnitude entry is positive. */
SHEAF_API double sheaf_pca_loading(const sheaf_pca *f, size_t k, size_t j);
/* The columns the automatic choice left out, and those excluded
 * (sheaf_options_set_pca_exclude), in summary order: their count, column i's
 * summary index and name (copies the fit owns), and the reason, one of
 * "target", "categorical", "empty", "constant", "out_of_range", "ID-like",
 * "excluded" (static storage); out of range: (size_t)-1 and NULL. */
SHEAF_API size_t sheaf_pca_left_out_count(const sheaf_pca *f);
SHEAF_API size_t sheaf_pca_left_out_column(const sheaf_pca *f, size_t i);
SHEAF_API const char *sheaf_pca_left_out_name(const sheaf_pca *f, size_t i);
SHEAF_API const char *sheaf_pca_left_out_reason(const sheaf_pca *f, size_t i);
/* A pairwise-complete matrix need not be positive semi-definite: the
 * eigenvalues that were below zero before they were set to 0, and the most
 * negative of them (NaN when none); the pairs of basis columns with no
 * estimate (too few common rows, or imprecise: set to 0 in the matrix). */
SHEAF_API size_t sheaf_pca_clamped_negative(const sheaf_pca *f);
SHEAF_API double sheaf_pca_most_negative_eigenvalue(const sheaf_pca *f);
SHEAF_API size_t sheaf_pca_undefined_pairs(const sheaf_pca *f);

/* ---- second passes over the data -------------------------------------------
 *
 * Both read the files again ("-": standard input; plain, gzip or zstd by
 * their bytes) with o's delimiter, header, record limit and threads (NULL:
 * the defaults), and write out_path ("-": standard output; a name ending in
 * .gz is gzip, .zst zstd) whole or not at all: a failed pass leaves nothing
 * under that name.  The output is the same bytes for any thread count.  An
 * output that is one of the inputs (the same file, through any link) is
 * refused with SHEAF_ERR_USAGE.  The arrays and strings passed in are read
 * during the call only. */

/* The kept columns (nkeep header names, e.g. the screen's kept rows) of
 * every file, in their input order, each field's bytes and quoting as they
 * were; the header once.  SHEAF_ERR_USAGE when a name is not a column,
 * SHEAF_ERR_INPUT for unreadable or malformed data (the message names the
 * file and line), SHEAF_ERR_IO when the output cannot be written. */
SHEAF_API int sheaf_trim_files(const sheaf_options *o, const char *const *keep, size_t nkeep,
                               const char *const *paths, size_t npaths, const char *out_path,
                               sheaf_error *err);
/* CSV of the carried columns (ncarry header names, e.g. an ID; may be 0)
 * then PC1..PCk: the scores of every row on the first k components of fit
 * (1 <= k <= sheaf_pca_column_count), which must have been fit on s
 * (SHEAF_ERR_USAGE when its columns are not s's, by index, name and mean).
 * A missing, non-numeric or non-finite cell counts as its column's mean. */
SHEAF_API int sheaf_project_files(const sheaf_summary *s, const sheaf_pca *fit, size_t k,
                                  const sheaf_options *o, const char *const *carry,
                                  size_t ncarry, const char *const *paths, size_t npaths,
                                  const char *out_path, sheaf_error *err);

/* ---- drift between two summaries -------------------------------------------
 *
 * What changed from a baseline summary to a new one, per column, as `sheaf
 * drift` reports it (docs/drift.md).  The handle keeps copies of the names
 * it reports, so it may outlive both summaries. */

typedef struct sheaf_drift sheaf_drift;

/* The thresholds at which a column drifts (sheaf_drift_thresholds_default
 * gives 0.25, 0.1, 0.5, 0.05, 0.1, 0.2, 0.05, 3 and 0.99). */
typedef struct {
    double max_psi;           /* population stability index */
    double max_ks;            /* Kolmogorov-Smirnov distance reached */
    double max_shift;         /* |mean shift| in baseline standard deviations */
    double max_share_change;  /* missing, non-numeric, distinct shares; a category's share */
    double max_tv;            /* total-variation distance of a text column */
    double max_r_change;      /* |change of Pearson r| of a pair */
    double fdr;               /* q level whose crossing counts (same target in both) */
    unsigned max_rank_change; /* places among the kept columns (0: not checked) */
    double numeric_share;     /* the kind rule */
} sheaf_drift_thresholds;

SHEAF_API void sheaf_drift_thresholds_default(sheaf_drift_thresholds *t);

/* Compares next with base (t NULL: the defaults).  NULL on failure:
 * SHEAF_ERR_INCOMPATIBLE when the two were scanned with different bucket
 * budgets, value-table sizes, label lengths, missing spellings or letter-case
 * rules, or declare a shared column differently (the message lists what);
 * SHEAF_ERR_USAGE for a NULL summary or a threshold out of range;
 * SHEAF_ERR_MEMORY.  Free with sheaf_drift_free. */
SHEAF_API sheaf_drift *sheaf_drift_run(const sheaf_summary *base, const sheaf_summary *next,
                                       const sheaf_drift_thresholds *t, sheaf_error *err);
SHEAF_API void sheaf_drift_free(sheaf_drift *d);
/* 1 when a column drifts or a pair moved (the CLI's exit 7), else 0. */
SHEAF_API int sheaf_drift_found(const sheaf_drift *d);
/* Columns compared: the baseline's in its order, then those only in the new. */
SHEAF_API size_t sheaf_drift_column_count(const sheaf_drift *d);
/* The name of flag bit b (0 <= b < 13: appeared, vanished, kind, psi, ks,
 * mean_shift, missing_share, non_numeric_share, distinct, categories,
 * tv, relevance, rank), or NULL. */
SHEAF_API const char *sheaf_drift_flag_name(unsigned b);

/* The figures of one column; NaN where they do not apply (PSI, KS and the
 * shift for a column numeric in both, chi-squared and TV for one
 * categorical in both). */
typedef struct {
    const char *name;           /* owned by the handle */
    unsigned flags;             /* bit b set: flag b (sheaf_drift_flag_name) */
    int in_base, in_new;        /* present in each */
    double psi;                 /* over the baseline's decile bins */
    double ks, ks_bound;        /* ks <= the raw data's D <= ks_bound */
    double mean_shift;          /* in baseline standard deviations */
    double base_missing_share, new_missing_share;
    double base_non_numeric_share, new_non_numeric_share;
    double base_distinct, new_distinct;
    double tv;                  /* total-variation distance */
    int tv_exact;               /* 0: a lower bound (a value table overflowed) */
    double chi2, chi2_df, chi2_p; /* homogeneity of the two value tables */
    size_t appeared, vanished;  /* categories in one night only */
} sheaf_drift_column;

/* Column i into *out: SHEAF_OK, or SHEAF_ERR_USAGE when i is out of range. */
SHEAF_API int sheaf_drift_column_at(const sheaf_drift *d, size_t i, sheaf_drift_column *out);
/* More of column i: each night's side, numeric bins, text figures (drift's JSON). */
#define SHEAF_DRIFT_BINS 10 /* PSI bins at most */
typedef struct {
    int kind;                /* SHEAF_KIND_* under the kind rule; -1: the column is not
                                in this summary (the figures below are then NaN or 0) */
    double missing_share;    /* missing cells / rows */
    double non_numeric_share; /* non-numeric cells / present cells */
    double distinct;         /* distinct values (exact, or a HyperLogLog estimate) */
    int distinct_exact;      /* 1: distinct is exact */
    double distinct_share;   /* distinct / present cells */
    uint64_t numbers;        /* finite numbers */
    uint64_t present;        /* present cells */
    double mean, sd;         /* of the numbers */
    int table_overflowed;    /* the value table overflowed */
    int ranked;              /* 1: the screen ran on this night (relevance compared) */
    double q;                /* the screen's q-value (NaN: untested, or not ranked) */
    const char *q_test;      /* its test ("anova_f", "corr_f", "chi2"; "": none; static) */
    size_t rank;             /* among the kept columns, 0 when dropped or not ranked */
} sheaf_drift_side;
typedef struct {
    sheaf_drift_side base_side, new_side;
    /* A column numeric in both: the baseline's decile bins, (edge[j-1], edge[j]]. */
    unsigned bins;           /* bins (0: not computed) */
    double edges[SHEAF_DRIFT_BINS - 1]; /* bins - 1 upper edges, ascending */
    uint64_t base_counts[SHEAF_DRIFT_BINS], new_counts[SHEAF_DRIFT_BINS]; /* per bin */
    int bucket_level;        /* the common bucket level of the bins (0 without bins) */
    int ks_exact;            /* 1: both value tables hold every number, ks = ks_bound */
    /* A column categorical in both. */
    int text;                /* 1: the text figures (tv, chi-squared, categories) are set */
    double chi2_log10_p;     /* log10 of chi2_p, finite where it underflows */
    int appeared_known, vanished_known; /* 0: a night's table overflowed, so the list
                                           and count may be incomplete */
    size_t appeared_listed, vanished_listed; /* categories listed (at most 8), most
                                                frequent first (sheaf_drift_category_at) */
} sheaf_drift_detail;
/* Column i into *out: SHEAF_OK, or SHEAF_ERR_USAGE when i is out of range. */
SHEAF_API int sheaf_drift_column_detail(const sheaf_drift *d, size_t i, sheaf_drift_detail *out);
/* Listed category k (of appeared_listed; of vanished_listed when vanished is
 * 1) of column i into *value (text owned by the handle, not NUL-terminated)
 * and its share of that night's present cells into *share (may be NULL). */
SHEAF_API int sheaf_drift_category_at(const sheaf_drift *d, size_t i, int vanished, size_t k,
                                      sheaf_value *value, double *share);
/* 1 when relevance to a shared target was compared (the screen ran on
 * both), else 0; *target (may be NULL) its name (owned by the handle) or
 * NULL; *note (may be NULL) why it was not compared (static storage) or
 * NULL. */
SHEAF_API int sheaf_drift_relevance(const sheaf_drift *d, const char **target, const char **note);
/* Pairs of columns with r in both summaries. */
SHEAF_API size_t sheaf_drift_pairs_compared(const sheaf_drift *d);
/* Pairs of columns whose r moved by max_r_change or more. */
SHEAF_API size_t sheaf_drift_pair_count(const sheaf_drift *d);
/* Pair i: names (owned by the handle) and r in each night; SHEAF_OK, or
 * SHEAF_ERR_USAGE when i is out of range. */
SHEAF_API int sheaf_drift_pair_at(const sheaf_drift *d, size_t i, const char **a, const char **b,
                                  double *base_r, double *new_r);

/* ---- the page: an HTML report of a summary -----------------------------------
 * What `sheaf page` writes (docs/report.md): one self-contained HTML file at
 * html_path (NULL: none; "-": standard output), written whole, and with
 * svg_dir (may be NULL) each chart as its own SVG file in that folder (made
 * when missing).  o (may be NULL) gives the screen's fdr and redundancy and
 * the kind rule; title (may be NULL) names the summary; base (may be NULL)
 * adds the drift section at the default thresholds.  SHEAF_OK, SHEAF_ERR_IO
 * (the message names the file), SHEAF_ERR_MEMORY, SHEAF_ERR_INCOMPATIBLE
 * (base scanned with other settings) or SHEAF_ERR_USAGE (nothing asked for,
 * or a page named as one of its charts). */
SHEAF_API int sheaf_page_write(const sheaf_summary *s, const sheaf_summary *base,
                               const sheaf_options *o, const char *title, const char *html_path,
                               const char *svg_dir, sheaf_error *err);

#ifdef __cplusplus
}
#endif

#endif
