/* source, private part: the state of a source, shared by source.c (opening,
 * reading, decoding, the read-ahead thread) and source_marks.c (the gzip
 * restart points).  See source.h for the interface. */
#ifndef SHEAF_SOURCE_IMPL_H
#define SHEAF_SOURCE_IMPL_H

#include "io/source.h"

#include <errno.h>
#include <fcntl.h>
#include <isa-l.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#define XXH_INLINE_ALL /* the hash inlined; XXH3_state_t's layout for source_skip_plain */
#include <xxhash.h>
#include <zstd.h>

#define RAW_BYTES (1u << 20)
#define MARK_SLOTS 8           /* restart points kept (the newest ones) */
#define MARK_MIN_BYTES (4u << 20) /* decoded bytes between two restart points, at least */
#define DIRECT_BYTES (64u << 10) /* read() straight into a caller's room this large */

struct source {
    int fd;                   /* input descriptor (-1 with a pull function) */
    source_pull pull;         /* reads raw bytes instead of fd, or NULL */
    void *pull_ctx;           /* its context */
    int owns_fd;              /* close fd on source_close */
    char *path;               /* as given ("-" for stdin) */
    source_format kind;       /* detected format */
    int nomem;                /* the error was a failed allocation (errno ENOMEM after it) */
    uint8_t *raw;             /* raw input buffer */
    size_t raw_len, raw_pos;  /* bytes in raw, next unconsumed */
    int raw_eof;              /* read() returned 0 */
    uint64_t raw_offset;      /* raw bytes taken from fd (incl. buffered) */
    uint64_t raw_size;        /* file size, 0 if unknown */
    int64_t mtime;            /* seconds since the epoch */
    XXH3_state_t *hash;       /* fingerprint of raw bytes */
    int hash_on_use;          /* gzip: hashed as the decoder consumes them, not as read */
    struct marks *marks;      /* restart points (source_keep_marks), or NULL */
    struct inflate_state *gz; /* gzip state */
    int gz_in_member;         /* inside a gzip member */
    int gz_header_done;       /* the member's header has been parsed */
    struct isal_gzip_header gz_header; /* header being parsed */
    ZSTD_DStream *zs;         /* zstd state */
    size_t zs_hint;           /* last ZSTD_decompressStream result */
    size_t step_left;         /* bytes left in the current output step (read_stepped) */
    uint8_t *stage;           /* a step decoded for a read smaller than it, or NULL */
    size_t staged, taken;     /* its bytes, and those handed out */
    size_t step_produced;     /* bytes the current read put out before this step */
    int done;                 /* end of decoded input reached */
    int fault_next;           /* a decoder failed after some output: that output was handed
                                 out, the next read returns -1 (the message is in err) */
    uint64_t decoded;         /* decompressed bytes produced so far */
    uint64_t *starts;         /* offsets (in decoded bytes) of members or frames after the
                                 first, not yet taken (source_take_starts) */
    size_t nstarts, starts_cap;
    char err[512];            /* last error */
    struct ahead *ahead;      /* read-ahead thread (source_read_ahead), or NULL */
    source_observer observe;  /* shown every decoded byte (source_observe), or NULL */
    void *observe_ctx;        /* its context */
};

/* Read-ahead: a thread decodes the source into blocks that source_read hands
 * out in order.  Everything the thread touches in the source is its own
 * until it has finished (after the end or an error), which the consumer
 * learns under the mutex. */
#define AHEAD_BLOCK (1u << 20)
/* Blocks handed out are kept for the next ones: a block of AHEAD_BLOCK is
 * above the allocator's mmap threshold, so freeing each and allocating the
 * next made every block fresh pages, faulted in one by one by the read
 * into it (on 2 cores at -j3 a read took 826 us a call; 48 with the blocks
 * kept). */
#define AHEAD_SPARE 2

typedef struct ahead_block {
    struct ahead_block *next;
    size_t len, pos;    /* decoded bytes, and how many were handed out */
    uint64_t raw_after; /* the raw offset once this block was decoded */
    uint8_t data[];
} ahead_block;

struct ahead {
    pthread_t thread;
    pthread_mutex_t mu;
    pthread_cond_t cv;
    ahead_block *head, *tail; /* decoded, not yet handed out */
    size_t buffered;          /* their bytes */
    size_t budget;            /* decode no further while this many wait */
    int finished;             /* the thread reached the end (rc 0) or an error (rc -1) */
    ssize_t rc;
    int quit;                 /* source_close: stop */
    uint64_t consumed_raw;    /* raw offset of what was handed out */
    ahead_block *spare;       /* blocks handed out, kept for the thread to decode into */
    size_t nspare;            /* at most AHEAD_SPARE */
};

/* Restart points: the gzip decoder's whole state between two isal_inflate
 * calls (struct inflate_state holds the bit buffer, the Huffman tables and
 * the 32 KiB history; only next_in and next_out point outside it), with
 * where it stands in the raw and the decoded bytes and the hash of the raw
 * prefix.  The decoding thread writes them, under the read-ahead mutex
 * when there is one; source_mark_offsets and source_mark_at read them
 * under it. */
typedef struct {
    int used;                    /* the slot holds a point */
    uint64_t raw_at;             /* raw offset of the next byte the decoder reads */
    uint64_t decoded_at;         /* decoded bytes produced before the point */
    uint64_t raw_print;          /* XXH3-64 of the raw bytes [0, raw_at) */
    struct inflate_state gz;     /* the decoder, next_in and next_out cleared */
} mark;

struct marks {
    uint64_t every;              /* decoded bytes between points, at least */
    uint64_t next_at;            /* the next point is taken at or after this offset */
    size_t newest;               /* slot of the last point taken */
    mark slot[MARK_SLOTS];
};

/* source.c, for source_marks.c: raw bytes read into buf (the count, 0 at
 * the end, -1 with the error set); the raw buffer filled when empty (bytes
 * available, 0 at the end, -1); the raw offset of the next unread byte; n
 * raw bytes at raw_pos consumed by the gzip decoder (into the fingerprint). */
ssize_t source_read_raw(source *s, uint8_t *buf, size_t cap);
ssize_t source_raw_fill(source *s);
uint64_t source_unread_offset(const source *s);
void source_consume(source *s, size_t n);

#endif
