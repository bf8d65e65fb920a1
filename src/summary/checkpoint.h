/* checkpoint: the file a scan writes now and then so that a killed scan
 * can continue (scan_options.checkpoint and .resume; see scan.h).
 *
 * A checkpoint holds the summaries of every segment the scan has finished,
 * merged (one per target), and where the next segment begins: the input
 * file, the decompressed offset of its next record, its lines and data rows
 * before that offset.  With them it keeps what a resumed scan checks before
 * trusting it: the scan's options as text, every input file's path, size
 * and modification time, the XXH3-64 of the raw bytes of each file already
 * finished, and the XXH3-64 of the decompressed bytes of the current file
 * before the offset.
 *
 * Layout (little-endian; docs/nightly.md describes it for users):
 *
 *   magic "SHEAFCKP", u32 version (2), u64 H
 *   H bytes of header (acc/wire.h encoding): str options, u32 files
 *     (each: str path, u64 size, i64 mtime in ns, u64 raw fingerprint or 0),
 *     u32 file index, u64 offset, u64 prefix hash, u64 lines, u64 rows,
 *     u64 checkpoint number, u8 delimiter, str restart point and str its
 *     prefix hash (both empty: none; version 2 only), u32 parts (each: u64
 *     length)
 *   u64 XXH3-64 of every byte before it
 *   the parts: each a whole summary file (docs/summary-format.md), with
 *     one source more at the end: the current file so far (format plain,
 *     its rows before the offset, nothing else), so that its rows add up as
 *     a summary's must; dropped when the file is read
 *   u64 XXH3-64 of every byte before it
 *
 * The restart point (version 2) is the current file's: for gzip, a mark of
 * io/source.h (the decoder's state at raw offset R, decoded offset D <=
 * offset, the XXH3-64 of the raw bytes [0, R)) and the scan's XXH3 state
 * of the decoded bytes [0, D) (u32 XXH_VERSION_NUMBER, u32 its size, the
 * state), so that a resumed scan decodes from R instead of from byte 0 and
 * still checks the decoded prefix hash at the offset.  Both are opaque
 * here and guarded by the header checksum like the rest.  Version 1 files (no restart point) are still read and resume
 * the old way, decompressing the file from its start; so does a version 2
 * file whose mark another build of ISA-L or xxHash wrote.
 *
 * The file is written as summaries are (summary/tempfile.h): in full to a
 * file without a name, flushed, then linked over the old checkpoint, so the
 * old one or the new one is there at every instant, whatever kills the
 * process.
 */
#ifndef SHEAF_CHECKPOINT_H
#define SHEAF_CHECKPOINT_H

#include <stddef.h>
#include <stdint.h>

#include "summary/scan.h"
#include "summary/summary.h"

typedef struct {
    char *path;           /* as given to the scan */
    uint64_t size_bytes;  /* its size when the checkpoint was written */
    int64_t mtime_ns;     /* its modification time, nanoseconds since 1970 */
    uint64_t fingerprint; /* a finished file: XXH3-64 of its raw bytes; else 0 */
} checkpoint_file;

typedef struct {
    char *options;          /* the options that shape the summary, "key=value\n" lines */
    size_t nfiles;
    checkpoint_file *files; /* every input of the scan, in order */
    uint32_t file_index;    /* the file the next segment begins in */
    uint64_t offset;        /* its decompressed offset there (a chunk's start) */
    uint64_t prefix_hash;   /* XXH3-64 of its decompressed bytes [0, offset) */
    uint64_t lines;         /* its lines before offset */
    uint64_t rows;          /* its data rows before offset */
    uint64_t number;        /* checkpoints written by the scan, this one included */
    char delim;             /* the scan's delimiter (0 while the first file is read) */
    void *restart;          /* the current file's restart point (io/source.h mark), or NULL */
    size_t restart_len;     /* its bytes */
    void *restart_hash;     /* the decoded prefix hash at the point (scan_segments.c), or NULL */
    size_t restart_hash_len; /* its bytes */
    summary_set *done;      /* the finished segments, merged (owned) */
    int drop_done;          /* checkpoint_write: free done once its bytes are written, before
                               they are read back (success or failure: done is gone after) */
} checkpoint;

typedef enum {
    CHECKPOINT_OK = 0,
    CHECKPOINT_MISSING = 1, /* no file at the path */
    CHECKPOINT_IO = 2,      /* cannot read or write it */
    CHECKPOINT_DAMAGED = 3, /* not a checkpoint, damaged, truncated, or newer */
    CHECKPOINT_MEMORY = 4
} checkpoint_status;

/* The options of o that change the summary, as "key=value\n" lines in a
 * fixed order (keys as the library names settings: "max_levels", "target").
 * The thread count, the memory limit and the callbacks are left out: the
 * summary does not depend on them.  malloc'd; NULL when out of memory. */
char *checkpoint_options_text(const scan_options *o);

/* Writes c to path atomically (c->done is left as it was, or freed with
 * c->drop_done).  `pause` (may be NULL) is called once the
 * parts are written and before the trailer and the link (a test hook).
 * On success *reread holds c->done decoded back from the bytes written, so
 * that a scan continues from exactly what the file holds.  CHECKPOINT_OK,
 * or the failure with a message naming the path in err. */
checkpoint_status checkpoint_write(const char *path, const checkpoint *c,
                                   void (*pause)(void *ctx, uint64_t number), void *pause_ctx,
                                   summary_set **reread, char *err, size_t errlen);

/* Whether a checkpoint can be written at path (its directory exists and
 * takes a new file), before a scan spends an hour reading: nothing is left
 * behind.  CHECKPOINT_OK, or the failure with a message in err. */
checkpoint_status checkpoint_probe(const char *path, char *err, size_t errlen);

/* What a checkpoint path names before a scan: nothing yet, or a regular
 * file (its identity, links followed). */
typedef struct {
    int exists;    /* a file was there */
    uint64_t dev;  /* its device and inode */
    uint64_t ino;
    int64_t ctime_sec, ctime_nsec; /* and its status change time: a file system may give
                                      the inode number of a replaced file to a later one
                                      (ext4 does), never with the same ctime */
} checkpoint_mark;

/* Marks path before a scan.  0, or -1 with a message in err when it cannot
 * hold a checkpoint: a directory, a device, a FIFO (which a checkpoint
 * would be written through and then removed: /dev/null) or a descriptor of
 * this process (/dev/stdout ...); a checkpoint is a regular file. */
int checkpoint_mark_path(const char *path, checkpoint_mark *m, char *err, size_t errlen);

/* After the scan's output is safe: removes the checkpoint at path (the file
 * its links lead to; the links stay), unless it is still the file marked
 * before the scan and the scan did not resume from it (a scan shorter than
 * one interval never wrote one: what was there is not sheaf's to remove).
 * 0, or -1 with a message in err (nothing else changes). */
int checkpoint_remove(const char *path, const checkpoint_mark *before, int resumed, char *err,
                      size_t errlen);

/* Reads a checkpoint (every checksum checked, the summaries decoded) into
 * *c (free with checkpoint_free).  CHECKPOINT_OK, or the failure with a
 * one-line message naming the path in err. */
checkpoint_status checkpoint_read(const char *path, checkpoint *c, char *err, size_t errlen);

void checkpoint_free(checkpoint *c);

/* XXH3-64 of a file's bytes (what io/source gives as the fingerprint of a
 * file read to its end), its size and modification time.  0, or -1 with
 * errno set. */
int checkpoint_hash_file(const char *path, uint64_t *hash);

#endif
