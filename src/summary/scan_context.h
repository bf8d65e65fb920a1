/* scan_context: the inside of a scan context, shared by scan.c (one
 * context fed streams) and scan_paths.c (files by path: shards, several
 * files read ahead).  Internal to summary/. */
#ifndef SHEAF_SCAN_CONTEXT_H
#define SHEAF_SCAN_CONTEXT_H

#include <stddef.h>
#include <stdint.h>
/* Inline, as in scan.c, so both files see one XXH3_state_t. */
#define XXH_INLINE_ALL
#include <xxhash.h>

#include "io/reader.h"
#include "io/source.h"
#include "summary/checkpoint.h"
#include "summary/chunks.h"
#include "summary/scan.h"
#include "summary/schema.h"
#include "summary/summary.h"

#define SCAN_POINTS 8 /* prefix hashes kept at restart points (io/source.h keeps 8) */

struct scan_context {
    scan_options o;        /* options (borrowed strings) */
    reader_options ro;     /* the reader's options */
    reader_options head_ro; /* the same, raw: for a stream's first record */
    reader *rd;            /* the record reader (the reading half) */
    reader_cursor head;    /* reads a stream's first record on the reading thread */
    chunks *work;          /* the chunks into the summary (once the schema is known) */
    unsigned threads;      /* worker threads */
    uint64_t rss_base;     /* resident bytes when the scan was created (--mem) */
    int statm_fd;          /* /proc/self/statm while --mem is checked, or -1 */
    uint64_t pushed_bytes; /* stream bytes handed to the workers (--mem messages) */
    summary *run;          /* the summary (once the schema is known): runs[0] */
    summary **runs;        /* one summary per target (nruns; one without a target) */
    size_t nruns;
    char **target_names;   /* the targets, resolved against the header (ntargets) */
    size_t ntargets;
    reader_missing missing; /* the missing-cell test */
    /* The schema, from the first stream's first record (run is made then). */
    int *field_of;         /* each scanned column's field index */
    size_t file_fields;    /* fields in the header */
    char **header;         /* the header's names (file_fields of them) */
    char *first_path;      /* the stream the header came from */
    char *head_line;       /* the current stream's header line, raw, without its line end */
    size_t head_len;       /* its bytes */
    uint64_t *repeats;     /* scratch: a chunk's repeated headers */
    size_t repeats_cap;
    char delim;            /* the delimiter of the first file */
    /* The current stream. */
    char *name;            /* its name (a path, or what the caller chose) */
    char shown[4352];      /* its name in messages */
    int open;              /* a stream is open */
    int at_first;          /* its first record is still to come */
    int header_only;       /* read only the first record (a shard's header) */
    uint64_t stop_at;      /* records from here on are the next shard's (0: none) */
    uint64_t first_end;    /* offset just after the first record of the last file begun at 0 */
    int done;              /* it needs no more bytes */
    uint64_t blank_lines;  /* lines of blank chunks before the schema was known */
    XXH3_state_t *fed_hash; /* fingerprint of fed bytes */
    uint64_t fed_bytes;    /* bytes fed */
    uint64_t shard_start, shard_end; /* the byte range scanned, for provenance */
    source_observer observe; /* shown the bytes scan_file_range reads (a shard's), or NULL */
    void *observe_ctx;       /* its context */
    uint64_t total_bytes;  /* raw bytes of all paths (progress), 0 if unknown */
    uint64_t done_bytes;   /* raw bytes of finished streams */
    schema_plan plan;      /* the scanned columns and modes (each segment's summaries are
                              made from them; field_of moved out) */
    /* Segments and checkpoints (o.checkpoint; scan_files). */
    const char *const *paths; /* the files of scan_files (npaths) */
    size_t npaths;
    size_t file_index;     /* the current one */
    uint64_t *file_prints; /* the raw fingerprint of each file finished */
    char *options_text;    /* checkpoint_options_text */
    uint64_t seg_bytes;    /* decompressed bytes pushed in the open segment */
    uint64_t ckpt_number;  /* checkpoints written */
    values **known;        /* per summary and column: the keys of the finished segments'
                              value tables (scan_known_add), which the next segments admit
                              as one scan would (values_admit_after); NULL before a cut */
    size_t nknown;         /* entries of known: summaries x plan columns */
    summary_set *done_set; /* the finished segments, merged (while a cut is written in the
                              background, that cut's: cut_job) */
    struct scan_cut_job *cut_job; /* the last cut, finished and written on its own thread while
                                     the next segment is scanned, or NULL (scan_segments.c) */
    XXH3_state_t *prefix;  /* XXH3 of the current stream's decompressed bytes cut so far */
    uint64_t rows_before;  /* data rows of the current stream in earlier segments */
    int skipping;          /* resuming: chunks before skip_to are only hashed */
    uint64_t skip_to, skip_hash, skip_lines, skip_rows; /* the checkpoint's position */
    size_t skip_file;      /* resuming: the index of the file the checkpoint is in */
    void *restart;         /* resuming: the checkpoint's restart point (io/source.h mark), or NULL */
    size_t restart_len;    /* its bytes */
    void *restart_hash;    /* resuming: the decoded prefix hash there (scan_hash_save) */
    size_t restart_hash_len; /* its bytes */
    XXH3_state_t *point_hash[SCAN_POINTS]; /* the prefix hash at the current source's restart
                                              points, as the chunks pass them */
    uint64_t point_at[SCAN_POINTS]; /* their decoded offsets (0: an empty slot) */
    size_t point_next;     /* the slot the next one takes */
    int jump;              /* resuming: the current source continues at jump_from (restored
                              or skipped), not at byte 0 */
    uint64_t jump_from;    /* its decoded offset there (<= skip_to) */
    XXH3_state_t *jump_hash; /* XXH3 of the decoded bytes [0, jump_from) */
    source *src;           /* the source being pulled (restart points for a cut), or NULL */
    scan_status failed;    /* sticky: the first error */
    char err[4608];        /* its message */
};

/* Sets the sticky error (msg, or the message already in sc->err when NULL)
 * and returns st. */
scan_status scan_fail(scan_context *sc, scan_status st, const char *msg);
/* A file from byte `from` (0: the whole file, header first), stopping before
 * records that start at stop_at (0: none). */
scan_status scan_file_range(scan_context *sc, const char *path, uint64_t from, uint64_t stop_at);
/* --shard I/N of the file at path (scan_shard.c; docs/shards.md). */
scan_status scan_shard(scan_context *sc, const char *path);
/* A segment begins in the current stream, after `lines` lines and `rows`
 * data rows of it: fresh summaries when there are none, chunk workers fed
 * into them.  SCAN_OK or the failure. */
scan_status scan_segment_start(scan_context *sc, uint64_t lines, uint64_t rows);

/* scan.c, for scan_segments.c: empty summaries for the schema, one per
 * target (0, or -1 with the message set); the chunk workers over them (0 or
 * -1); the chunks' failure made the scan's; the open summaries settled and
 * sealed, unless the options say seal_later (0, or -1 with the error set). */
int scan_make_runs(scan_context *sc);
int scan_start_work(scan_context *sc);
scan_status scan_worked(scan_context *sc, scan_status st);
int scan_settle_runs(scan_context *sc);
/* The same for n summaries of one segment (runs[0] has the co-moments),
 * sealed (seal 1) on up to `threads` threads: 0, or -1 (out of memory). */
int scan_settle(summary *const *runs, size_t n, unsigned threads, int seal);
/* scan.c, for the jump to a restart point in scan_segments.c: a stream
 * opened (named name, from raw byte `from`, stopping before records at
 * stop_at, 0: none); src pulled to its end (raw bytes counted from `from`);
 * decoded bytes [offset, offset + len) added to the stream's prefix hash
 * (and to the restart points' hashes where they fall). */
scan_status scan_begin_at(scan_context *sc, const char *name, uint64_t from, uint64_t stop_at);
scan_status scan_pull(scan_context *sc, source *src, uint64_t from);
void scan_prefix_update(scan_context *sc, const char *data, size_t len, uint64_t offset);
/* scan_segments.c, for scan.c: the open segment's settled summaries merged
 * into the finished ones (0, or -1); a cut before the chunk at `offset` of
 * the current stream (SCAN_OK or the failure); the chunk at the
 * checkpoint's offset of a resumed scan (SCAN_OK or the failure). */
int scan_absorb_segment(scan_context *sc);
scan_status scan_cut(scan_context *sc, uint64_t offset);
int scan_known_add(scan_context *sc, summary *const *parts, size_t nparts);
/* The cut still being written (sc->cut_job), waited for: its merged
 * summaries become sc->done_set, or its failure the scan's (SCAN_OK or the
 * failure; SCAN_OK when there is none).  scan_cut_drop waits for it and
 * throws its work away, and frees sc->known (scan_free). */
scan_status scan_cut_join(scan_context *sc);
void scan_cut_drop(scan_context *sc);
scan_status scan_resume_here(scan_context *sc, const reader_chunk *ch);

/* scan_paths.c: a source just opened for file `index` of a scan with
 * checkpoints, made ready: it keeps restart points, and when it is the
 * file a resumed scan continues in, it is moved to the checkpoint's
 * restart point (gzip) or offset (plain) where it can be (sc->jump).
 * SCAN_OK, or the failure (the file changed before the point). */
scan_status scan_prime_source(scan_context *sc, source *src, size_t index);
/* scan_segments.c: an XXH3 state as bytes for a checkpoint (u32
 * XXH_VERSION_NUMBER, u32 its size, the state with its secret pointer
 * cleared): malloc'd, NULL when out of memory; and back into `to`, a state
 * already reset (0, or -1 when the bytes are another build's). */
void *scan_hash_save(const XXH3_state_t *h, size_t *len);
int scan_hash_load(XXH3_state_t *to, const void *data, size_t len);

/* scan.c: a source whose first bytes are the file's, or, with sc->jump,
 * that continues at sc->jump_from: the header from a separate read of the
 * file's start, then the bytes from sc->jump_from, those before the
 * checkpoint's offset hashed only. */
scan_status scan_source_checked(scan_context *sc, source *src);

/* A source the caller opened, as a shard's stream: from > 0 (its label in
 * messages) when it starts past the file's header, stopping before records
 * that start at stop_at bytes into it (0: none).  The caller closes src. */
scan_status scan_source_range(scan_context *sc, source *src, uint64_t from, uint64_t stop_at);

#endif
