/* source: plain / gzip / zstd byte streams.  See source.h.
 *
 * gzip: each member's header is parsed with isal_read_gzip_header into a
 * header record that persists across calls (ISA-L 2.30's own in-inflate
 * parsing leaves fields of its header record unset when a header is split
 * across two inputs), then isal_inflate with crc_flag = ISAL_GZIP_NO_HDR_VER
 * inflates the member and checks its CRC-32 and length trailer.  After a
 * member ends (block_state == ISAL_BLOCK_FINISH) the state is reset and the
 * next member, if any, follows (RFC 1952 allows concatenated members; `cat
 * a.gz b.gz` produces one).  Input that ends inside a member is a truncated
 * stream, reported with the raw byte offset.
 * zstd: ZSTD_decompressStream over any number of frames; a nonzero hint at the
 * end of input means the last frame is incomplete.
 */
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
    int done;                 /* end of decoded input reached */
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

/* Notes that a gzip member or zstd frame begins at decoded offset `at`.  Out
 * of memory drops the note: a repeated header there is then read as data,
 * as it was before starts were reported. */
static void note_start(source *s, uint64_t at)
{
    if (at == 0) return;
    if (s->ahead) pthread_mutex_lock(&s->ahead->mu);
    if (!(s->nstarts && s->starts[s->nstarts - 1] == at)) {
        if (s->nstarts == s->starts_cap) {
            size_t cap = s->starts_cap ? 2 * s->starts_cap : 16;
            uint64_t *p = realloc(s->starts, cap * sizeof *p);
            if (p) { s->starts = p; s->starts_cap = cap; }
        }
        if (s->nstarts < s->starts_cap) s->starts[s->nstarts++] = at;
    }
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
}

size_t source_take_starts(source *s, uint64_t *out, size_t max)
{
    if (s->ahead) pthread_mutex_lock(&s->ahead->mu);
    size_t n = s->nstarts < max ? s->nstarts : max;
    if (n) {
        memcpy(out, s->starts, n * sizeof *out);
        memmove(s->starts, s->starts + n, (s->nstarts - n) * sizeof *out);
        s->nstarts -= n;
    }
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
    return n;
}

static void fail(source *s, const char *fmt, const char *detail)
{
    snprintf(s->err, sizeof s->err, fmt, s->path, detail);
}

/* Refills the raw buffer; returns bytes now available, 0 at EOF, -1 error. */
/* Reads up to cap raw bytes of the file into buf, into the fingerprint and
 * the raw offset.  Returns the bytes read, 0 at the end (raw_eof set), -1 on
 * error (message set). */
static ssize_t read_raw(source *s, uint8_t *buf, size_t cap)
{
    for (;;) {
        errno = 0;
        ssize_t n = s->pull ? s->pull(s->pull_ctx, buf, cap) : read(s->fd, buf, cap);
        if (n < 0 && errno == EINTR && !s->pull) continue;
        if (n < 0) {
            snprintf(s->err, sizeof s->err, "%s: read error at byte %llu: %s", s->path,
                     (unsigned long long)s->raw_offset, errno ? strerror(errno) : "stream error");
            return -1;
        }
        if (n == 0) { s->raw_eof = 1; return 0; }
        if (!s->hash_on_use) XXH3_64bits_update(s->hash, buf, (size_t)n);
        s->raw_offset += (uint64_t)n;
        return n;
    }
}

static ssize_t raw_fill(source *s)
{
    if (s->raw_pos < s->raw_len) return (ssize_t)(s->raw_len - s->raw_pos);
    s->raw_pos = s->raw_len = 0;
    if (s->raw_eof) return 0;
    ssize_t n = read_raw(s, s->raw, RAW_BYTES);
    if (n > 0) s->raw_len = (size_t)n;
    return n;
}

static source *source_new(const char *path, int fd, int owns)
{
    source *s = calloc(1, sizeof *s);
    if (!s) return NULL;
    s->fd = fd;
    s->owns_fd = owns;
    s->path = strdup(path);
    s->raw = malloc(RAW_BYTES);
    s->hash = XXH3_createState();
    if (!s->path || !s->raw || !s->hash) { source_close(s); return NULL; }
    XXH3_64bits_reset(s->hash);
    struct stat st;
    if (fd >= 0 && fstat(fd, &st) == 0) {
        if (S_ISREG(st.st_mode)) s->raw_size = (uint64_t)st.st_size;
        s->mtime = (int64_t)st.st_mtime;
    }
    return s;
}

static int detect(source *s, char *err, size_t errlen)
{
    /* Gather at least 4 bytes (or all there is) to read the magic. */
    while (!s->raw_eof && s->raw_len < 4) {
        ssize_t n = read_raw(s, s->raw + s->raw_len, RAW_BYTES - s->raw_len);
        if (n < 0) {
            snprintf(err, errlen, "%s", s->err);
            return -1;
        }
        s->raw_len += (size_t)n;
    }
    const uint8_t *m = s->raw;
    if (s->raw_len >= 2 && m[0] == 0x1f && m[1] == 0x8b) {
        s->kind = SOURCE_GZIP;
        s->gz = malloc(sizeof *s->gz);
        if (!s->gz) { snprintf(err, errlen, "%s: out of memory", s->path); errno = ENOMEM; return -1; }
        isal_inflate_init(s->gz);
        s->gz_in_member = 0;
        /* Nothing is consumed yet: from here the fingerprint follows the
         * decoder, so that it is known exactly where a restart point is. */
        XXH3_64bits_reset(s->hash);
        s->hash_on_use = 1;
    } else if (s->raw_len >= 4 && m[0] == 0x28 && m[1] == 0xb5 && m[2] == 0x2f && m[3] == 0xfd) {
        s->kind = SOURCE_ZSTD;
        s->zs = ZSTD_createDStream();
        if (!s->zs) { snprintf(err, errlen, "%s: out of memory", s->path); errno = ENOMEM; return -1; }
        ZSTD_initDStream(s->zs);
    } else {
        s->kind = SOURCE_PLAIN;
    }
    return 0;
}

/* s with its format detected, or NULL (s closed, errno kept) on failure. */
static source *detected(source *s, char *err, size_t errlen)
{
    if (detect(s, err, errlen) == 0) return s;
    int e = errno;
    source_close(s);
    errno = e;
    return NULL;
}

source *source_open(const char *path, char *err, size_t errlen)
{
    int fd = 0, owns = 0;
    if (strcmp(path, "-") != 0) {
        fd = open(path, O_RDONLY | O_CLOEXEC);
        if (fd < 0) {
            snprintf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
            return NULL;
        }
        owns = 1;
        struct stat st;
        if (fstat(fd, &st) == 0 && S_ISDIR(st.st_mode)) {
            snprintf(err, errlen, "%s: is a directory", path);
            close(fd);
            return NULL;
        }
    }
    source *s = source_new(path, fd, owns);
    if (!s) {
        snprintf(err, errlen, "%s: out of memory", path);
        if (owns) close(fd);
        errno = ENOMEM;
        return NULL;
    }
    return detected(s, err, errlen);
}

source *source_open_pull(const char *name, source_pull pull, void *ctx, uint64_t size, char *err,
                         size_t errlen)
{
    source *s = source_new(name, -1, 0);
    if (!s) {
        snprintf(err, errlen, "%s: out of memory", name);
        errno = ENOMEM;
        return NULL;
    }
    s->pull = pull;
    s->pull_ctx = ctx;
    s->raw_size = size;
    return detected(s, err, errlen);
}

source *source_open_at(const char *path, uint64_t start, char *err, size_t errlen)
{
    source *s = source_open(path, err, errlen);
    if (!s) return NULL;
    if (s->kind != SOURCE_PLAIN) {
        snprintf(err, errlen,
                 "%s: a %s file cannot be split into byte ranges; split it into several "
                 "compressed files instead and scan them as shards",
                 path, source_format_name(s->kind));
        source_close(s);
        return NULL;
    }
    if (!s->raw_size || lseek(s->fd, (off_t)start, SEEK_SET) < 0) {
        snprintf(err, errlen, "%s: byte ranges need a regular, seekable file", path);
        source_close(s);
        return NULL;
    }
    /* Restart hashing and counting from `start`. */
    s->raw_len = s->raw_pos = 0;
    s->raw_eof = 0;
    s->raw_offset = start;
    XXH3_64bits_reset(s->hash);
    return s;
}

source *source_open_decoded(const char *name, source_pull pull, void *ctx, uint64_t size,
                            char *err, size_t errlen)
{
    source *s = source_new(name, -1, 0);
    if (!s) {
        snprintf(err, errlen, "%s: out of memory", name);
        errno = ENOMEM;
        return NULL;
    }
    s->pull = pull;
    s->pull_ctx = ctx;
    s->raw_size = size;
    s->kind = SOURCE_PLAIN; /* decoded already: never taken for compressed */
    return s;
}

static void ahead_stop(source *s);

void source_close(source *s)
{
    if (!s) return;
    ahead_stop(s);
    if (s->owns_fd) close(s->fd);
    free(s->path);
    free(s->raw);
    if (s->hash) XXH3_freeState(s->hash);
    free(s->gz);
    free(s->marks);
    if (s->zs) ZSTD_freeDStream(s->zs);
    free(s->starts);
    free(s);
}

static ssize_t read_plain(source *s, uint8_t *buf, size_t cap)
{
    /* Nothing buffered (after the format probe): read straight into the
     * caller's buffer, sparing a copy of every byte.  A chunker's room is
     * often under RAW_BYTES (its buffer is two chunks), so any room of
     * DIRECT_BYTES or more is read into directly. */
    if (s->raw_pos == s->raw_len && !s->raw_eof && cap >= DIRECT_BYTES) return read_raw(s, buf, cap);
    ssize_t avail = raw_fill(s);
    if (avail <= 0) return avail;
    size_t n = (size_t)avail < cap ? (size_t)avail : cap;
    memcpy(buf, s->raw + s->raw_pos, n);
    s->raw_pos += n;
    return (ssize_t)n;
}

/* Moves the unread tail of the raw buffer to its start and reads more after
 * it.  ISA-L mis-reads a gzip trailer split across two calls (seen with
 * libisal 2.30: a CRC mismatch when a member ends in the last 16 bytes of
 * the input buffer), so gzip input is topped up to keep a margin. */
static ssize_t raw_top_up(source *s, size_t margin)
{
    size_t have = s->raw_len - s->raw_pos;
    if (have >= margin || s->raw_eof) return have ? (ssize_t)have : raw_fill(s);
    memmove(s->raw, s->raw + s->raw_pos, have);
    s->raw_pos = 0;
    s->raw_len = have;
    while (!s->raw_eof && s->raw_len < margin) {
        ssize_t n = read_raw(s, s->raw + s->raw_len, RAW_BYTES - s->raw_len);
        if (n < 0) return -1;
        s->raw_len += (size_t)n;
    }
    return (ssize_t)s->raw_len;
}

static uint64_t unread_offset(const source *s) { return s->raw_offset - (s->raw_len - s->raw_pos); }

static ssize_t gzip_fail(source *s, const char *fmt, uint64_t at)
{
    char num[32];
    snprintf(num, sizeof num, "%llu", (unsigned long long)at);
    fail(s, fmt, num);
    return -1;
}

/* n raw bytes at raw_pos were consumed by the gzip decoder: into the
 * fingerprint (hash_on_use). */
static void consume(source *s, size_t n)
{
    XXH3_64bits_update(s->hash, s->raw + s->raw_pos, n);
    s->raw_pos += n;
}

/* A restart point where the decoder stands now, decoded_at bytes into the
 * decoded stream: into the oldest slot. */
static void take_mark(source *s, uint64_t decoded_at)
{
    struct marks *m = s->marks;
    if (s->ahead) pthread_mutex_lock(&s->ahead->mu);
    size_t k = (m->newest + 1) % MARK_SLOTS;
    mark *p = &m->slot[k];
    p->used = 1;
    p->raw_at = unread_offset(s);
    p->decoded_at = decoded_at;
    p->raw_print = XXH3_64bits_digest(s->hash);
    memcpy(&p->gz, s->gz, sizeof p->gz);
    p->gz.next_in = p->gz.next_out = NULL;
    p->gz.avail_in = p->gz.avail_out = 0;
    m->newest = k;
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
    m->next_at = decoded_at + m->every;
}

static ssize_t read_gzip(source *s, uint8_t *buf, size_t cap)
{
    struct inflate_state *st = s->gz;
    size_t produced = 0;
    while (produced == 0) {
        if (!s->gz_in_member) {
            /* Between members: more input starts a new member. */
            ssize_t avail = raw_top_up(s, 2);
            if (avail < 0) return -1;
            if (avail == 0) return 0;
            const uint8_t *m = s->raw + s->raw_pos;
            if (avail < 2 || m[0] != 0x1f || m[1] != 0x8b)
                return gzip_fail(s, "%s: unexpected bytes after a gzip member at byte %s",
                                 unread_offset(s));
            isal_inflate_reset(st);
            note_start(s, s->decoded); /* produced is 0 here: a member starts a read */
            memset(&s->gz_header, 0, sizeof s->gz_header);
            isal_gzip_header_init(&s->gz_header);
            s->gz_in_member = 1;
            s->gz_header_done = 0;
        }
        ssize_t avail = raw_top_up(s, 64);
        if (avail < 0) return -1;
        st->next_in = s->raw + s->raw_pos;
        st->avail_in = (uint32_t)avail;
        if (!s->gz_header_done) {
            int rc = isal_read_gzip_header(st, &s->gz_header);
            consume(s, (size_t)avail - st->avail_in);
            if (rc == ISAL_DECOMP_OK) {
                s->gz_header_done = 1;
                st->crc_flag = ISAL_GZIP_NO_HDR_VER;
                continue;
            }
            if (rc == ISAL_END_INPUT && avail > 0) continue;
            if (rc == ISAL_END_INPUT)
                return gzip_fail(s, "%s: truncated gzip stream (input ends inside a member "
                                    "header at byte %s)", s->raw_offset);
            return gzip_fail(s, "%s: corrupt gzip header near byte %s", unread_offset(s));
        }
        uint32_t room = (uint32_t)(cap - produced);
        st->next_out = buf + produced;
        st->avail_out = room;
        int rc = isal_inflate(st);
        size_t used = (size_t)avail - st->avail_in, out = room - st->avail_out;
        consume(s, used);
        if (s->marks && rc >= 0 && st->block_state != ISAL_BLOCK_FINISH &&
            s->decoded + produced + out >= s->marks->next_at)
            take_mark(s, s->decoded + produced + out);
        produced += out;
        if (rc < 0)
            return gzip_fail(s, rc == ISAL_INCORRECT_CHECKSUM
                                    ? "%s: corrupt gzip stream (checksum mismatch) near byte %s"
                                    : "%s: corrupt gzip stream near byte %s",
                             unread_offset(s));
        if (st->block_state == ISAL_BLOCK_FINISH) {
            s->gz_in_member = 0;
            continue;
        }
        if (used == 0 && produced == 0 && avail == 0)
            return gzip_fail(s, "%s: truncated gzip stream (input ends inside a member at byte %s)",
                             s->raw_offset);
    }
    return (ssize_t)produced;
}

static ssize_t read_zstd(source *s, uint8_t *buf, size_t cap)
{
    ZSTD_outBuffer out = {buf, cap, 0};
    while (out.pos == 0) {
        ssize_t avail = raw_fill(s);
        if (avail < 0) return -1;
        if (avail == 0) {
            if (s->zs_hint != 0) {
                char at[64];
                snprintf(at, sizeof at, "%llu", (unsigned long long)s->raw_offset);
                fail(s, "%s: truncated zstd stream (input ends inside a frame at byte %s)", at);
                return -1;
            }
            /* Flush anything still buffered inside the decoder. */
            ZSTD_inBuffer none = {NULL, 0, 0};
            size_t rc = ZSTD_decompressStream(s->zs, &out, &none);
            if (ZSTD_isError(rc)) {
                fail(s, "%s: corrupt zstd stream: %s", ZSTD_getErrorName(rc));
                return -1;
            }
            return (ssize_t)out.pos;
        }
        ZSTD_inBuffer in = {s->raw + s->raw_pos, (size_t)avail, 0};
        size_t rc = ZSTD_decompressStream(s->zs, &out, &in);
        s->raw_pos += in.pos;
        if (ZSTD_isError(rc)) {
            char msg[160];
            snprintf(msg, sizeof msg, "%s near byte %llu", ZSTD_getErrorName(rc),
                     (unsigned long long)(s->raw_offset - (s->raw_len - s->raw_pos)));
            fail(s, "%s: corrupt zstd stream: %s", msg);
            return -1;
        }
        s->zs_hint = rc;
        if (rc == 0) note_start(s, s->decoded + out.pos); /* a frame ended: the next starts */
    }
    return (ssize_t)out.pos;
}

static ssize_t ahead_read(source *s, void *buf, size_t cap);

static ssize_t decode(source *s, void *buf, size_t cap)
{
    if (s->done || cap == 0) return 0;
    ssize_t n;
    switch (s->kind) {
    case SOURCE_GZIP: n = read_gzip(s, buf, cap); break;
    case SOURCE_ZSTD: n = read_zstd(s, buf, cap); break;
    default: n = read_plain(s, buf, cap); break;
    }
    if (n == 0) s->done = 1;
    if (n > 0) s->decoded += (uint64_t)n;
    if (n > 0 && s->observe) s->observe(s->observe_ctx, buf, (size_t)n);
    return n;
}

void source_observe(source *s, source_observer fn, void *ctx)
{
    s->observe = fn;
    s->observe_ctx = ctx;
}

ssize_t source_read(source *s, void *buf, size_t cap)
{
    ssize_t n = s->ahead ? ahead_read(s, buf, cap) : decode(s, buf, cap);
    if (n < 0) errno = s->nomem ? ENOMEM : EIO;
    return n;
}

static void *ahead_main(void *arg)
{
    source *s = arg;
    struct ahead *a = s->ahead;
    for (;;) {
        pthread_mutex_lock(&a->mu);
        while (!a->quit && a->buffered >= a->budget) pthread_cond_wait(&a->cv, &a->mu);
        int quit = a->quit;
        pthread_mutex_unlock(&a->mu);
        if (quit) break;
        ahead_block *b = malloc(sizeof *b + AHEAD_BLOCK);
        ssize_t n = -1;
        if (!b) {
            snprintf(s->err, sizeof s->err, "%s: out of memory", s->path);
            s->nomem = 1;
        }
        else n = decode(s, b->data, AHEAD_BLOCK);
        pthread_mutex_lock(&a->mu);
        if (n > 0) {
            b->next = NULL;
            b->len = (size_t)n;
            b->pos = 0;
            b->raw_after = s->raw_offset - (s->raw_len - s->raw_pos);
            if (a->tail) a->tail->next = b;
            else a->head = b;
            a->tail = b;
            a->buffered += (size_t)n;
        } else {
            free(b);
            a->finished = 1;
            a->rc = n < 0 ? -1 : 0;
        }
        pthread_cond_broadcast(&a->cv);
        pthread_mutex_unlock(&a->mu);
        if (n <= 0) break;
    }
    return NULL;
}

int source_read_ahead(source *s, size_t budget)
{
    if (s->ahead) return 0;
    struct ahead *a = calloc(1, sizeof *a);
    if (!a) return -1;
    a->budget = budget ? budget : AHEAD_BLOCK;
    a->consumed_raw = source_raw_offset(s);
    pthread_mutex_init(&a->mu, NULL);
    pthread_cond_init(&a->cv, NULL);
    s->ahead = a;
    if (pthread_create(&a->thread, NULL, ahead_main, s) != 0) {
        pthread_mutex_destroy(&a->mu);
        pthread_cond_destroy(&a->cv);
        free(a);
        s->ahead = NULL; /* reads stay on the caller's thread */
    }
    return 0;
}

static ssize_t ahead_read(source *s, void *buf, size_t cap)
{
    struct ahead *a = s->ahead;
    if (cap == 0) return 0;
    pthread_mutex_lock(&a->mu);
    while (!a->head && !a->finished) pthread_cond_wait(&a->cv, &a->mu);
    ssize_t n;
    if (a->head) {
        ahead_block *b = a->head;
        size_t k = b->len - b->pos < cap ? b->len - b->pos : cap;
        memcpy(buf, b->data + b->pos, k);
        b->pos += k;
        if (b->pos == b->len) {
            a->head = b->next;
            if (!a->head) a->tail = NULL;
            a->buffered -= b->len;
            a->consumed_raw = b->raw_after;
            free(b);
            pthread_cond_broadcast(&a->cv);
        }
        n = (ssize_t)k;
    } else {
        n = a->rc; /* the thread is done with the source: its state is ours */
        if (n == 0) a->consumed_raw = s->raw_offset - (s->raw_len - s->raw_pos);
    }
    pthread_mutex_unlock(&a->mu);
    return n;
}

static void ahead_stop(source *s)
{
    struct ahead *a = s->ahead;
    if (!a) return;
    pthread_mutex_lock(&a->mu);
    a->quit = 1;
    pthread_cond_broadcast(&a->cv);
    pthread_mutex_unlock(&a->mu);
    pthread_join(a->thread, NULL);
    while (a->head) {
        ahead_block *b = a->head;
        a->head = b->next;
        free(b);
    }
    pthread_mutex_destroy(&a->mu);
    pthread_cond_destroy(&a->cv);
    free(a);
    s->ahead = NULL;
}

/* ---- restart points ---------------------------------------------------- */

/* A mark's bytes: what ties it to this build, then the point.  Native byte
 * order and sizes: the probe and the sizes tell another machine's or
 * build's apart. */
static const char MARK_MAGIC[8] = {'s', 'h', 'f', 'g', 'z', 'r', 's', 't'};
typedef struct {
    char magic[8];
    uint32_t isal[3];        /* ISAL_MAJOR_VERSION, _MINOR_, _PATCH_ */
    uint32_t state_bytes;    /* sizeof (struct inflate_state) */
    uint32_t xxh_version;    /* XXH_VERSION_NUMBER (the raw prefix hash) */
    uint32_t pointer_bytes;  /* sizeof (void *) */
    uint32_t order;          /* 0x01020304 as stored */
    uint64_t raw_at, decoded_at, raw_print;
} mark_head;

#define MARK_BYTES (sizeof(mark_head) + sizeof(struct inflate_state))

static void mark_head_fill(mark_head *h)
{
    memset(h, 0, sizeof *h);
    memcpy(h->magic, MARK_MAGIC, sizeof h->magic);
    h->isal[0] = ISAL_MAJOR_VERSION;
    h->isal[1] = ISAL_MINOR_VERSION;
    h->isal[2] = ISAL_PATCH_VERSION;
    h->state_bytes = (uint32_t)sizeof(struct inflate_state);
    h->xxh_version = XXH_VERSION_NUMBER;
    h->pointer_bytes = (uint32_t)sizeof(void *);
    h->order = 0x01020304u;
}

int source_keep_marks(source *s, uint64_t every_bytes)
{
    if (s->kind != SOURCE_GZIP || s->marks) return 0;
    struct marks *m = calloc(1, sizeof *m);
    if (!m) return -1;
    m->every = every_bytes > MARK_MIN_BYTES ? every_bytes : MARK_MIN_BYTES;
    m->next_at = m->every;
    m->newest = MARK_SLOTS - 1;
    s->marks = m;
    return 0;
}

size_t source_mark_offsets(source *s, uint64_t after, uint64_t upto, uint64_t *out, size_t max)
{
    if (!s->marks) return 0;
    if (s->ahead) pthread_mutex_lock(&s->ahead->mu);
    size_t n = 0;
    for (size_t i = 1; i <= MARK_SLOTS && n < max; i++) { /* oldest first */
        const mark *p = &s->marks->slot[(s->marks->newest + i) % MARK_SLOTS];
        if (p->used && p->decoded_at > after && p->decoded_at <= upto) out[n++] = p->decoded_at;
    }
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
    return n;
}

int source_mark_at(source *s, uint64_t at, void **out, size_t *len)
{
    *out = NULL;
    *len = 0;
    if (!s->marks) return 0;
    if (s->ahead) pthread_mutex_lock(&s->ahead->mu);
    const mark *found = NULL;
    for (size_t k = 0; k < MARK_SLOTS; k++)
        if (s->marks->slot[k].used && s->marks->slot[k].decoded_at == at) found = &s->marks->slot[k];
    uint8_t *b = found ? malloc(MARK_BYTES) : NULL;
    if (b) {
        mark_head h;
        mark_head_fill(&h);
        h.raw_at = found->raw_at;
        h.decoded_at = found->decoded_at;
        h.raw_print = found->raw_print;
        memcpy(b, &h, sizeof h);
        memcpy(b + sizeof h, &found->gz, sizeof(struct inflate_state));
    }
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
    if (!found) return 0;
    if (!b) return -1;
    *out = b;
    *len = MARK_BYTES;
    return 1;
}

/* An XXH3 state into `to`, a state reset by its owner: all but the pointer
 * to the default secret, which stays `to`'s own. */
static void put_hash_state(void *to, const void *from)
{
    XXH3_state_t *t = to;
    const unsigned char *secret = t->extSecret;
    memcpy(t, from, sizeof *t);
    t->extSecret = secret;
}

source_restored source_restore(source *s, const void *data, size_t len, uint64_t *decoded_at)
{
    mark_head want, h;
    mark_head_fill(&want);
    if (s->kind != SOURCE_GZIP || s->ahead || s->decoded || s->gz_in_member || len != MARK_BYTES)
        return SOURCE_MARK_STALE;
    memcpy(&h, data, sizeof h);
    if (memcmp(h.magic, want.magic, sizeof h.magic) || memcmp(h.isal, want.isal, sizeof h.isal) ||
        h.state_bytes != want.state_bytes || h.xxh_version != want.xxh_version ||
        h.pointer_bytes != want.pointer_bytes ||
        h.order != want.order || h.raw_at == 0)
        return SOURCE_MARK_STALE;
    /* The raw bytes before the point, into the fingerprint, as the decoder
     * would have consumed them. */
    while (unread_offset(s) < h.raw_at) {
        ssize_t avail = raw_fill(s);
        if (avail < 0) return SOURCE_MARK_FAILED;
        if (avail == 0) return SOURCE_MARK_DIFFERS;
        uint64_t left = h.raw_at - unread_offset(s);
        consume(s, (size_t)avail < left ? (size_t)avail : (size_t)left);
    }
    if (XXH3_64bits_digest(s->hash) != h.raw_print) return SOURCE_MARK_DIFFERS;
    const uint8_t *b = data;
    if (s->marks) { /* the point itself is kept, for the next checkpoint */
        struct marks *m = s->marks;
        m->newest = (m->newest + 1) % MARK_SLOTS;
        mark *p = &m->slot[m->newest];
        p->used = 1;
        p->raw_at = h.raw_at;
        p->decoded_at = h.decoded_at;
        p->raw_print = h.raw_print;
        memcpy(&p->gz, b + sizeof h, sizeof p->gz);
        m->next_at = h.decoded_at + m->every;
    }
    memcpy(s->gz, b + sizeof h, sizeof(struct inflate_state));
    s->gz->next_in = s->gz->next_out = NULL;
    s->gz->avail_in = s->gz->avail_out = 0;
    s->gz_in_member = 1;
    s->gz_header_done = 1;
    s->decoded = h.decoded_at;
    *decoded_at = h.decoded_at;
    return SOURCE_MARK_RESTORED;
}

source_restored source_skip_plain(source *s, uint64_t to, void *hash_state,
                                  size_t hash_state_bytes)
{
    if (s->kind != SOURCE_PLAIN || s->ahead || s->decoded || s->pull || s->raw_pos ||
        hash_state_bytes != sizeof(XXH3_state_t) || to < s->raw_offset)
        return SOURCE_MARK_STALE;
    /* What the format probe read lies before `to`: dropped, then the rest
     * of [0, to) read straight into the fingerprint. */
    s->raw_pos = s->raw_len = 0;
    while (s->raw_offset < to) {
        uint64_t left = to - s->raw_offset;
        ssize_t n = read_raw(s, s->raw, left < RAW_BYTES ? (size_t)left : RAW_BYTES);
        if (n < 0) return SOURCE_MARK_FAILED;
        if (n == 0) return SOURCE_MARK_DIFFERS;
    }
    put_hash_state(hash_state, s->hash);
    s->decoded = to;
    return SOURCE_MARK_RESTORED;
}

const char *source_error(const source *s) { return s->err; }
const char *source_path(const source *s) { return s->path; }
source_format source_kind(const source *s) { return s->kind; }
uint64_t source_raw_offset(const source *s)
{
    if (s->ahead) {
        struct ahead *a = s->ahead;
        pthread_mutex_lock(&a->mu);
        uint64_t at = a->consumed_raw;
        pthread_mutex_unlock(&a->mu);
        return at;
    }
    return s->raw_offset - (s->raw_len - s->raw_pos);
}
uint64_t source_raw_size(const source *s) { return s->raw_size; }
int64_t source_mtime(const source *s) { return s->mtime; }
uint64_t source_fingerprint(const source *s) { return XXH3_64bits_digest(s->hash); }

const char *source_format_name(source_format f)
{
    switch (f) {
    case SOURCE_GZIP: return "gzip";
    case SOURCE_ZSTD: return "zstd";
    default: return "plain";
    }
}
