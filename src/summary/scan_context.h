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
#include "summary/chunks.h"
#include "summary/scan.h"
#include "summary/summary.h"

struct scan_context {
    scan_options o;        /* options (borrowed strings) */
    reader_options ro;     /* the reader's options */
    reader_options head_ro; /* the same, raw: for a stream's first record */
    reader *rd;            /* the record reader (the reading half) */
    reader_cursor head;    /* reads a stream's first record on the reading thread */
    chunks *work;          /* the chunks into the summary (once the schema is known) */
    unsigned threads;      /* worker threads */
    uint64_t rss_base;     /* resident bytes when the scan was created (--mem) */
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
    scan_status failed;    /* sticky: the first error */
    char err[4608];        /* its message */
};

/* Sets the sticky error (msg, or the message already in sc->err when NULL)
 * and returns st. */
scan_status scan_fail(scan_context *sc, scan_status st, const char *msg);
/* A file from byte `from` (0: the whole file, header first), stopping before
 * records that start at stop_at (0: none). */
scan_status scan_file_range(scan_context *sc, const char *path, uint64_t from, uint64_t stop_at);

/* A source the caller opened, as a shard's stream: from > 0 (its label in
 * messages) when it starts past the file's header, stopping before records
 * that start at stop_at bytes into it (0: none).  The caller closes src. */
scan_status scan_source_range(scan_context *sc, source *src, uint64_t from, uint64_t stop_at);

#endif
