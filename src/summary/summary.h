/* summary: the accumulator set of one table, its merge and its file.
 *
 * A summary holds, for every scanned column, the per-column accumulators
 * (counts, moments, value table, HyperLogLog, bucket store), the table's row
 * counts, the options that decide how cells were read (they must agree for
 * two summaries to merge), and the provenance of every source.  Every
 * accumulator merges exactly (or by a stated rule once a bounded table
 * overflows), so a merge of scans of the parts of a table equals a scan of
 * the whole, up to rounding of the moments.
 *
 * The file format is specified in docs/summary-format.md.  summary.c holds
 * the accumulator set, merge.c the merge, format.c the file.
 *
 * Sealing and threads.  The value table, the bucket store and the per-value
 * table answer ordered reads (canonical order, quantiles, top values, the
 * file) from a sort index that updates invalidate.  summary_seal builds every
 * such index; summary_read, summary_decode and summary_merge end with it,
 * and a scan must call it when it has fed its last row.  From then on every
 * call that takes a const summary (or a const accumulator of one) only reads
 * memory, so any number of threads may run the read-only calls (screen, PCA,
 * quantiles, top values, summary_write ...) on one summary at once, as long
 * as nobody updates it.  An unsealed summary gives the same answers, and is
 * still never written by those calls: each ordered read then sorts into a
 * temporary index of its own, which costs O(n log n) per call (a full walk
 * of a bucket store with buckets_entry_at becomes quadratic) and can fail
 * for memory (an entry with count 0, a NaN quantile, a failed write).
 * Checking instead (an assert) would abort hosts that build summaries by
 * hand; the slow path keeps them correct and the cost visible in a profile.
 */
#ifndef SHEAF_SUMMARY_H
#define SHEAF_SUMMARY_H

#include <math.h>
#include <stddef.h>
#include <stdint.h>

#include "acc/buckets.h"
#include "acc/comoment.h"
#include "acc/crosstab.h"
#include "acc/hll.h"
#include "acc/moments.h"
#include "acc/pairsum.h"
#include "acc/values.h"
#include "summary/tcells.h"

/* The newest format version this sheaf reads and writes.  A summary is
 * written in the oldest version that holds it (summary_file_version), so
 * that older readers read it: 5 when its missing-value spellings matched in
 * any ASCII letter case (every scan since 2026-12-03: version 5 is version
 * 3's layout with the rule in SCHM), else 3 with a target (per-class sums
 * in two doubles), else 2 when it counted repeated headers, else 1.  Files
 * of versions 1 to 3 matched the spellings byte for byte.  6 when a source
 * is a byte-range shard that says how it found its first record (version
 * 5's layout, each source record followed by its shard fields).  7 when
 * every column carries its copy print (version 6's layout, each column
 * ending with it): every summary a scan of this sheaf writes. */
#define SUMMARY_FORMAT_VERSION 7
/* The version of a file of several targets (a container of single-target
 * summaries, one per target: docs/summary-format.md). */
#define SUMMARY_SET_FORMAT_VERSION 4
#define SUMMARY_MAX_TARGETS 1024  /* targets one file may hold */
#define SUMMARY_EXAMPLES 3        /* non-numeric examples kept per column */
#define SUMMARY_EXAMPLE_BYTES 40  /* bytes kept of each example */
#define SUMMARY_BAD_LINES 5       /* line numbers kept of ragged rows */
#define SUMMARY_MAX_MISSING 32    /* missing-value spellings */
#define SUMMARY_MAX_MISSING_BYTES 1024 /* bytes of one spelling (the reader refuses more) */
#define SUMMARY_MAX_CLASS_BYTES (1u << 20) /* bytes of a class label (the reader refuses more) */
#define SUMMARY_BLOCK_ROWS 256    /* rows per block fed to the accumulators */

/* Rows a summary counts exactly (2^53: the co-moments count in doubles). */
#define SUMMARY_MAX_ROWS (UINT64_C(1) << 53)

/* How a column was declared at scan time. */
typedef enum {
    COLUMN_AUTO = 0,       /* kind decided when the summary is read */
    COLUMN_NUMERIC = 1,    /* --numeric */
    COLUMN_CATEGORICAL = 2 /* --categorical: cells are never parsed */
} column_mode;

/* Kind decided when the summary is read. */
typedef enum { KIND_NUMERIC = 0, KIND_CATEGORICAL = 1 } column_kind;

/* The task of a target: declared at scan time, or decided when read. */
typedef enum { TASK_AUTO = 0, TASK_CLASSIFY = 1, TASK_REGRESS = 2 } target_task;

/* Bucket-store cells: 0 holds rows whose target is missing (or all rows when
 * there is no target); classes are 1..K; a regression target's value y is
 * cell 1..n of the summary's target cell table (summary/tcells.h: at most
 * SUMMARY_TARGET_CELLS cells at a resolution the target's values choose,
 * numbered in ascending order of y).  SUMMARY_TARGET_CELL_BASE is 0: a
 * reader may order regression cells by cell - SUMMARY_TARGET_CELL_BASE. */
#define SUMMARY_TARGET_CELL_BASE 0u
#define SUMMARY_MAX_CLASSES 65536

/* Count, sum and M2 of one column within one class.  The sum of the
 * deviations from the column's frame is kept in two doubles (sum + sum_low,
 * an unevaluated sum to about 2^-106 relative), so that class means keep
 * the digits in which classes differ (see block.c for the update). */
typedef struct {
    uint64_t n;       /* rows of the class with the column present */
    double sum;       /* sum of the deviations, in the column's frame (its moments reference) */
    double sum_low;   /* the rest of that sum: |sum_low| <= ulp(sum) / 2 */
    double m2;        /* sum of squared deviations from the class mean */
    int imprecise;    /* a merge brought numbers whose rounding in their own summary's frame
                         exceeds 2^-20 of the merged class's scale (column_merge): mean and
                         variance are not to be shown (summary_class_moments) */
} class_moments;

/* On the wire the flag is the top bit of the class's count (which never
 * reaches 2^63): files without it read as before. */
#define CLASS_IMPRECISE_BIT (UINT64_C(1) << 63)

/* What the quotient q = sum / n leaves of (sum + sum_low) / n: its exact
 * remainder (one fma) and sum_low, over n, so that q + the rest is the
 * two-double quotient. */
static inline double class_sum_rest(double sum, double sum_low, double n, double q)
{
    return (fma(-q, n, sum) + sum_low) / n;
}

/* (sum + sum_low) / n for a two-double sum: the quotient of sum, its exact
 * remainder (one fma) and sum_low corrected, so that n equal values give
 * back that value exactly (rounding sum + sum_low first did not: three
 * deviations of 0.1 had mean 0.10000000000000002, and a class of one
 * repeated value a variance of 1e-35 instead of 0). */
static inline double class_sum_quotient(double sum, double sum_low, double n)
{
    double q = sum / n;
    return q + class_sum_rest(sum, sum_low, n, q);
}

/* A class's mean in the column's frame (NaN when n = 0). */
static inline double class_moments_mean(const class_moments *m)
{
    return class_sum_quotient(m->sum, m->sum_low, (double)m->n);
}

/* The rounding of a class's numbers as they entered its summary
 * (moments_frame_loss, in the column's frame). */
static inline double class_moments_loss(const class_moments *m)
{
    return m->n ? moments_frame_loss((double)m->n, class_moments_mean(m), m->m2) : 0;
}

/* 1 when an error of `loss` makes the class's figures noise: it passes 2^-20
 * of the class's scale, its sd, or its mean (ref_value + its mean
 * deviation) when the sd is below 2^-30 of the mean: there the spread is
 * rounding (a merge of constant classes leaves one of about 1e-16).  A
 * class of zeros is taken as exact, and figures past the double range keep
 * their own warning (NaN or infinity). */
static inline int class_moments_lost(const class_moments *m, double ref_value, double loss)
{
    if (!m->n) return 0;
    double sd = moments_sd((double)m->n, m->m2);
    double mean = ref_value + class_moments_mean(m);
    double scale = sd > 0x1p-30 * fabs(mean) ? sd : fabs(mean);
    return isfinite(loss) && isfinite(scale) && scale > 0 && loss > 0x1p-20 * scale;
}

/* Options that change what the accumulators hold: equal in mergeable summaries. */
typedef struct {
    uint32_t max_levels;     /* value-table entries per column */
    uint32_t label_bytes;    /* bytes kept per value label */
    uint32_t bucket_budget;  /* occupied buckets per column */
    uint32_t n_missing;      /* missing-value spellings */
    char *missing[SUMMARY_MAX_MISSING]; /* the spellings ("" is always missing) */
    int missing_any_case;    /* 1: spellings match in any ASCII letter case (every scan
                                since 2026-12-03); 0: byte for byte (older summaries) */
    char *target;            /* target column name, NULL for none */
    target_task task;        /* declared task (TASK_AUTO: decided when read) */
    uint32_t max_classes;    /* class levels kept before giving up on classes */
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
    hll *distinct;           /* distinct-count sketch: empty while `vals` is exact; once it
                                overflows, holds every value (its keys folded in) */
    buckets *bins;           /* bucket store of finite numeric cells, cell = target cell */
    crosstab *cross;         /* per value: class counts or target moments (with a target);
                                emptied and void once `vals` overflowed */
    class_moments *cls;      /* per class (with classes): cls[class - 1] */
    pairsum *pairs;          /* exact sums of the column paired with the target (with a
                                target; NULL for a declared-categorical column) */
    uint32_t tcell_epoch;    /* (a scan) the target cell epoch its accumulators are at */
    uint32_t n_examples;     /* non-numeric examples kept */
    char examples[SUMMARY_EXAMPLES][SUMMARY_EXAMPLE_BYTES + 1];
    uint64_t copy_print;     /* sum over its present cells of copy_mix(row key, cell hash),
                                mod 2^64: two columns with the same cells in the same rows
                                have the same print (summary.copy_prints) */
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
    /* A byte-range shard's start (docs/shards.md; format version 6, else 0). */
    uint8_t shard_rule;      /* shard_start_rule (io/shard_start.h); 0: not such a shard */
    uint8_t shard_modes;     /* bit m: quote mode m at the range start gives its first record */
    uint8_t shard_map;       /* transfer map of the owned bytes (2 bits per mode) */
    uint32_t shard_index;    /* I of --shard I/N */
    uint32_t shard_count;    /* N */
    uint64_t file_id;        /* XXH3-64 of the file's first 64 KiB, seeded with its size */
    uint64_t read_bytes;     /* bytes the shard read in all (header, look-ahead, data) */
} summary_source;

typedef struct {
    summary_options opt;
    size_t ncols;
    summary_column *cols;
    uint64_t rows;            /* data rows */
    uint64_t bytes;           /* decompressed bytes read */
    uint64_t short_rows;      /* rows with too few fields */
    uint64_t long_rows;       /* rows with too many fields */
    uint64_t repeated_headers; /* header lines skipped where a compressed member began */
    int copy_prints;          /* every column's copy_print counts every row (a scan, a merge of
                                 such summaries, a file of version 7); 0 for older files */
    uint32_t n_bad_lines;     /* kept line numbers of ragged rows */
    uint64_t bad_lines[SUMMARY_BAD_LINES];
    size_t nsources;
    summary_source *sources;

    /* Target (opt.target set). */
    int target;               /* column index of the target, -1 for none */
    int has_classes;          /* class accumulators are kept */
    int classes_dropped;      /* a numeric target passed max_classes: now regression only */
    uint32_t nclasses;        /* classes seen */
    uint32_t class_cap;       /* allocated classes */
    uint64_t *class_hash;     /* XXH3-64 of each class's text */
    char **class_label;       /* each class's text */
    uint64_t *class_rows;     /* rows of each class */
    number_decimal *class_dec; /* each class's value as a decimal, if numeric */
    unsigned char *class_numeric; /* the class text is a finite number */
    uint64_t target_text;     /* target cells that are not finite numbers */
    tcells tcells;            /* a continuous target's cells (empty while classes are kept) */
    int legacy_cells;         /* decoding a version 1 or 2 file: regression cells are still
                                 2^20 + the value's key at level 50 (format.c converts them) */

    /* Co-moments over the columns not declared categorical. */
    size_t ncomo;             /* columns in the co-moment matrix */
    size_t *como_col;         /* their column indices */
    int *como_of;             /* ncols: index into como_col, -1 if not included */
    comoment *como;           /* co-moment matrix (NULL in sets made without it) */
    number_decimal *como_ref; /* frame of each co-moment column */
    unsigned char *como_ref_set; /* frame set */
} summary;

/* Error classes, mapped to exit codes by the CLI. */
typedef enum {
    SUMMARY_OK = 0,
    SUMMARY_ERR_IO = 1,           /* cannot read or write a file */
    SUMMARY_ERR_CORRUPT = 2,      /* not a summary, damaged, truncated, newer */
    SUMMARY_ERR_INCOMPATIBLE = 3, /* different schema or options */
    SUMMARY_ERR_MEMORY = 4,       /* out of memory */
    SUMMARY_ERR_TARGETS = 5       /* a file of several targets read as one summary
                                     (summary_set_read reads it), or a target name
                                     the file does not hold */
} summary_status;

void summary_options_defaults(summary_options *o);
void summary_options_free(summary_options *o);
int summary_options_copy(summary_options *dst, const summary_options *src);

/* A summary with the given columns and no data; NULL on OOM (or an unknown
 * target name: check opt->target against names first).  `with_comoments`
 * allocates the co-moment matrix with block scratch (for scanning). */
summary *summary_create(const summary_options *opt, size_t ncols, char *const *names,
                        const column_mode *modes, int with_comoments);
/* Bytes the co-moment matrix of a schema will take (for --mem). */
uint64_t summary_comoment_bytes(size_t ncomo);

/* Target classes.  Finds or adds the class of a target text with hash h;
 * returns its index 1..K, or 0 when adding would pass max_classes. */
uint32_t summary_class_of(summary *s, uint64_t h, const char *text, size_t len,
                          const number_decimal *dec);
/* 1 when class c (0-based) is a number: finite (class_numeric), or a
 * spelling of infinity or NaN in a target column not declared categorical.
 * A target whose classes are all numbers can drop them and go on as a
 * regression target (a class that is not finite then has no target cell,
 * as a row whose target is not finite). */
int summary_class_is_number(const summary *s, uint32_t c);
/* The share of a target's cells that must be numbers (finite or not) for
 * it to drop its classes at the class limit and go on as a regression
 * target: the default of the readers' kind rule.  Its text cells then have
 * no target value, as a row whose target is missing. */
#define SUMMARY_TARGET_NUMBER_PERCENT 99
/* 1 when numbers are at least SUMMARY_TARGET_NUMBER_PERCENT of numbers +
 * text, exactly; else 0. */
int summary_mostly_numbers(uint64_t numbers, uint64_t text);
/* The same over the rows in s's classes (summary_class_is_number) and
 * `more_numbers` and `more_text` rows not yet in a class: the scan's test at
 * the class limit, on the rows read so far. */
int summary_classes_mostly_numbers(const summary *s, uint64_t more_numbers, uint64_t more_text);
/* Adds class K + 1 without looking for h among the classes (the reader,
 * which checks uniqueness once for all).  0, or -1 past max_classes or when
 * out of memory. */
int summary_append_class(summary *s, uint64_t h, const char *text, size_t len,
                         const number_decimal *dec);
/* Drops the class accumulators of a target (it continues as a regression
 * target): bucket cells and per-value tables are converted exactly from
 * class counts to target cells; a class that is not a finite number gets
 * none, as a row whose target is missing.  The caller decides that the
 * target is numeric enough (summary_mostly_numbers).  -1 on OOM. */
int summary_drop_classes(summary *s);
/* The regression cell of a finite target value, adding it to the cell table
 * (which may renumber the cells: a new epoch, see summary/tcells.h).  0 when
 * out of memory. */
uint32_t summary_target_cell(summary *s, double y);
/* Brings column c's accumulators from their target cell epoch to `epoch`
 * (remapping the regression cells of its bucket store and per-value table).
 * 0, or -1 when out of memory. */
int summary_column_catch_up(summary *s, summary_column *c, uint32_t epoch);
/* Ends a scan's epochs: the cells numbered in key order, every column
 * brought to it, the epoch maps freed.  0, or -1 when out of memory. */
int summary_target_cells_settle(summary *s);
void summary_free(summary *s);
/* Builds the sort index of every accumulator of every column (see "Sealing
 * and threads" above), so that read-only calls need no temporary index.
 * Returns 0, or -1 when memory runs out (s is unchanged apart from the
 * indexes already built, and still correct).  Idempotent and cheap on a
 * sealed summary. */
int summary_seal(summary *s);
/* summary_seal with the columns shared among `threads` threads (the caller
 * one of them): the same result, since each column is sealed on its own;
 * the serial end of a wide scan.  0, or -1 when memory ran out. */
int summary_seal_threads(summary *s, unsigned threads);
/* The same in steps, for a caller that reads each column as soon as it is
 * sealed (summary_seal_write_at in format.h).  summary_sealer_start starts
 * threads - 1 helper threads (at most SUMMARY_SEAL_THREADS_MOST - 1) that
 * seal s's columns, claimed in column order; NULL when memory ran out.
 * summary_sealer_wait returns once column `column` is sealed, sealing
 * columns on the calling thread while it waits; from then on that column
 * may be read.  summary_sealer_finish seals what is left on the calling
 * thread, joins the helpers and frees g: 0, or -1 when a seal ran out of
 * memory (that column stays unsealed, still readable).  No call but these
 * may touch s's columns between start and finish. */
#define SUMMARY_SEAL_THREADS_MOST 64
typedef struct summary_sealer summary_sealer;
summary_sealer *summary_sealer_start(summary *s, unsigned threads);
void summary_sealer_wait(summary_sealer *g, size_t column);
int summary_sealer_finish(summary_sealer *g);
/* 1 when every index is built (summary_seal has nothing left to do). */
int summary_sealed(const summary *s);

/* Lists the differences that forbid merging a and b into msg (one line,
 * "; "-separated); returns 1 when compatible.  Columns are compared by name:
 * "columns 'x', 'w' are missing from the second", "column 'y' moved from 22
 * to 21" (1-based; moves are listed only when the shared columns are not in
 * the same order, since a missing column shifts every later one), "column
 * 'z' declared numeric vs categorical"; at most 6 names in a list and 6
 * moves, then how many more.  Repeated names fall back to positions
 * ("column 3 is 'a' vs 'b'"). */
int summary_compatible(const summary *a, const summary *b, char *msg, size_t msglen);
/* The same, naming a and b in the message with name_a and name_b (a file
 * name; summary_compatible uses "the first" and "the second"). */
int summary_compatible_named(const summary *a, const summary *b, const char *name_a,
                             const char *name_b, char *msg, size_t msglen);
/* into := into (+) from: accumulators, counts, sources; then seals into.
 * The schemas must be compatible (checked; SUMMARY_ERR_INCOMPATIBLE
 * otherwise, also when the classes of a text target would have to be
 * dropped).  When one side has dropped its target classes (or together they
 * pass max_classes), the other side's classes are dropped too, so `from`
 * may be modified.  SUMMARY_ERR_MEMORY ("out of memory while merging") when
 * memory runs out; into may then be partly merged. */
summary_status summary_merge(summary *into, summary *from, char *err, size_t errlen);
/* Appends a source record (copied). */
int summary_add_source(summary *s, const summary_source *src);

/* Reading back. */
column_kind summary_column_kind(const summary_column *c, double numeric_share);
/* Distinct values: exact from the value table unless it overflowed, else the
 * HyperLogLog estimate.  *exact set accordingly (may be NULL). */
double summary_column_distinct(const summary_column *c, int *exact);
/* The task of the target: the declared one, else classification when the
 * target is categorical or has at most SUMMARY_CLASSIFY_MAX_INTEGERS
 * distinct integer values, regression otherwise.  TASK_AUTO: no target. */
#define SUMMARY_CLASSIFY_MAX_INTEGERS 50
target_task summary_target_task(const summary *s, double numeric_share);
/* Adds every key of a value table to a sketch (when the table overflows). */
void summary_column_fold_keys(hll *h, const values *v);
/* Present (non-missing) cells. */
uint64_t summary_column_present(const summary_column *c);

/* File I/O.  Writing goes through src/summary/tempfile.h: a regular target
 * (or a new one, or the file a symbolic link names) is replaced atomically by
 * a file written in full and flushed, so no half-written file ever has the
 * final name and a killed process leaves no temporary file; a character
 * device or a FIFO (/dev/null, a pipe) receives the bytes in place.  A new
 * file gets the mode a plain creat() would give it (0666 less the umask), and
 * the process umask is never touched.  The path "-" is standard output: the
 * file is written whole to a scratch file first and then copied, so a
 * failure writes nothing there.  For reading (summary_read,
 * summary_set_read), "-" is standard input, read whole into memory. */
summary_status summary_write(const summary *s, const char *path, char *err, size_t errlen);
/* The format version s is written in: the oldest that holds it (7 with copy
 * prints, 6 with a shard's start record, 5 when its spellings match in any case, else 3 with a target, 2 when it counted
 * repeated headers, 1).  Readers take 1 .. SUMMARY_FORMAT_VERSION. */
uint32_t summary_file_version(const summary *s);
/* Reads a summary file into a new, sealed summary. */
summary_status summary_read(const char *path, summary **out, char *err, size_t errlen);
/* Decodes a summary from the bytes of a file into a new, sealed summary. */
summary_status summary_decode(const uint8_t *data, size_t len, summary **out, char *err,
                              size_t errlen);

/* ---- several targets -----------------------------------------------------
 *
 * A scan with several targets (scan_options.targets) makes one summary per
 * target: each is, byte for byte, the summary a scan with that target alone
 * would make, and they share every part that does not depend on the target
 * (schema, sources, row counts, the value tables, sketches and counts of
 * every column, co-moments).  A file holds them all (format version 4); a
 * set of one summary is written as that summary's own file. */
typedef struct {
    size_t n;          /* summaries: 1, or one per target (2 ..  SUMMARY_MAX_TARGETS) */
    summary **parts;   /* parts[i] has the i-th target (owned by the set) */
} summary_set;

/* Frees the set and every summary it still holds (NULL parts are skipped). */
void summary_set_free(summary_set *set);
/* A set of one summary (owned by the set from then on); NULL when out of
 * memory (s is then still the caller's). */
summary_set *summary_set_of(summary *s);
/* The index of the part whose target is `name`, or -1. */
long summary_set_find(const summary_set *set, const char *name);
/* Takes part i out of the set: the caller owns it (summary_free); the set
 * keeps NULL there. */
summary *summary_set_take(summary_set *set, size_t i);
/* The targets' names joined by ", " into buf (for messages); returns buf. */
const char *summary_set_names(const summary_set *set, char *buf, size_t len);
/* Reads any summary file: one summary (n = 1), or every target of a file
 * of several.  Each part is checked as summary_read checks a file, and the
 * parts against each other (distinct targets, each a column; the same
 * schema, options, sources, counts, value tables, sketches and co-moments).
 * The caller owns *out (summary_set_free). */
summary_status summary_set_read(const char *path, summary_set **out, char *err, size_t errlen);
summary_status summary_set_decode(const uint8_t *data, size_t len, summary_set **out, char *err,
                                  size_t errlen);
/* Reads the summary of one target: `target` NULL takes a file of one summary
 * (SUMMARY_ERR_TARGETS, naming the targets, for a file of several); a name
 * takes that target's part of a file of several, or a file of one summary
 * whose target it is (SUMMARY_ERR_TARGETS, naming those it holds,
 * otherwise).  The caller owns *out. */
summary_status summary_read_target(const char *path, const char *target, summary **out,
                                   char *err, size_t errlen);
/* Writes the set: a set of one summary exactly as summary_write, else a
 * file of format version 4 (atomically, as summary_write). */
summary_status summary_set_write(const summary_set *set, const char *path, char *err,
                                 size_t errlen);
/* summary_set_write of summaries that may not be sealed yet (a scan that
 * left them so: scan_options.seal_later): each is sealed on `threads`
 * threads (the caller one of them; 0: the CPUs this process may use) while
 * it is written, a column written as
 * soon as its seal has run, so that the sealing and the writing overlap.
 * The same bytes as summary_seal then summary_set_write; the set is sealed
 * afterwards, whether the write succeeded or not. */
summary_status summary_set_seal_write(summary_set *set, const char *path, unsigned threads,
                                      char *err, size_t errlen);
/* into := into (+) from, part by part (summary_merge).  The sets must hold
 * the same targets in the same order (SUMMARY_ERR_INCOMPATIBLE, naming both
 * lists, otherwise).  On failure into may be partly merged. */
summary_status summary_set_merge(summary_set *into, summary_set *from, char *err, size_t errlen);

#endif
