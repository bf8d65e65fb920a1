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
#include "io/source_impl.h"

#include "io/message.h"

/* Notes that a gzip member or zstd frame begins at decoded offset `at`.  Out
 * of memory drops the note: a repeated header there is then read as data,
 * as it was before starts were reported. */
void source_add_start(source *s, uint64_t at)
{
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

static void note_start(source *s, uint64_t at)
{
    if (at) source_add_start(s, at); /* the stream's own start is not a member's */
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

void source_drop_starts_before(source *s, uint64_t before)
{
    if (s->ahead) pthread_mutex_lock(&s->ahead->mu);
    size_t n = 0;
    while (n < s->nstarts && s->starts[n] < before) n++;
    memmove(s->starts, s->starts + n, (s->nstarts - n) * sizeof *s->starts);
    s->nstarts -= n;
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
}

static void fail(source *s, const char *fmt, const char *detail)
{
    snprintf(s->err, sizeof s->err, fmt, s->path, detail);
}

/* Refills the raw buffer; returns bytes now available, 0 at EOF, -1 error. */
/* Reads up to cap raw bytes of the file into buf, into the fingerprint and
 * the raw offset.  Returns the bytes read, 0 at the end (raw_eof set), -1 on
 * error (message set). */
ssize_t source_read_raw(source *s, uint8_t *buf, size_t cap)
{
    for (;;) {
        errno = 0;
        ssize_t n = s->pull ? s->pull(s->pull_ctx, buf, cap) : read(s->fd, buf, cap);
        if (n < 0 && errno == EINTR && !s->pull) continue;
        if (n < 0) {
            message_printf(s->err, sizeof s->err, "%s: read error at byte %llu: %s", s->path,
                           (unsigned long long)s->raw_offset,
                           errno ? strerror(errno) : "stream error");
            return -1;
        }
        if (n == 0) { s->raw_eof = 1; return 0; }
        if (!s->hash_on_use) XXH3_64bits_update(s->hash, buf, (size_t)n);
        s->raw_offset += (uint64_t)n;
        return n;
    }
}

ssize_t source_raw_fill(source *s)
{
    if (s->raw_pos < s->raw_len) return (ssize_t)(s->raw_len - s->raw_pos);
    s->raw_pos = s->raw_len = 0;
    if (s->raw_eof) return 0;
    ssize_t n = source_read_raw(s, s->raw, RAW_BYTES);
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
        /* A pipe's times are when it was made: no property of the bytes,
         * and a summary of them would differ from one run to the next. */
        if (S_ISREG(st.st_mode)) {
            s->raw_size = (uint64_t)st.st_size;
            s->mtime = (int64_t)st.st_mtime;
        }
    }
    return s;
}

static int detect(source *s, char *err, size_t errlen)
{
    /* Gather at least 4 bytes (or all there is) to read the magic. */
    while (!s->raw_eof && s->raw_len < 4) {
        ssize_t n = source_read_raw(s, s->raw + s->raw_len, RAW_BYTES - s->raw_len);
        if (n < 0) {
            message_printf(err, errlen, "%s", s->err);
            return -1;
        }
        s->raw_len += (size_t)n;
    }
    const uint8_t *m = s->raw;
    if (s->raw_len >= 2 && m[0] == 0x1f && m[1] == 0x8b) {
        s->kind = SOURCE_GZIP;
        s->gz = malloc(sizeof *s->gz);
        if (!s->gz) {
            message_printf(err, errlen, "%s: out of memory", s->path);
            errno = ENOMEM;
            return -1;
        }
        isal_inflate_init(s->gz);
        s->gz_in_member = 0;
        /* Nothing is consumed yet: from here the fingerprint follows the
         * decoder, so that it is known exactly where a restart point is. */
        XXH3_64bits_reset(s->hash);
        s->hash_on_use = 1;
    } else if (source_zstd_magic(m, s->raw_len)) {
        s->kind = SOURCE_ZSTD;
        s->zs = ZSTD_createDStream();
        if (!s->zs) {
            message_printf(err, errlen, "%s: out of memory", s->path);
            errno = ENOMEM;
            return -1;
        }
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
            message_printf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
            return NULL;
        }
        owns = 1;
        struct stat st;
        if (fstat(fd, &st) == 0 && S_ISDIR(st.st_mode)) {
            message_printf(err, errlen, "%s: is a directory", path);
            close(fd);
            return NULL;
        }
    }
    source *s = source_new(path, fd, owns);
    if (!s) {
        message_printf(err, errlen, "%s: out of memory", path);
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
        message_printf(err, errlen, "%s: out of memory", name);
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
        message_printf(err, errlen,
                       "%s: a %s file cannot be split into byte ranges; split it into several "
                       "compressed files instead and scan them as shards", path,
                       source_format_name(s->kind));
        source_close(s);
        return NULL;
    }
    if (!s->raw_size || lseek(s->fd, (off_t)start, SEEK_SET) < 0) {
        message_printf(err, errlen, "%s: byte ranges need a regular, seekable file", path);
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
        message_printf(err, errlen, "%s: out of memory", name);
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
    free(s->stage);
    free(s->starts);
    free(s);
}

static ssize_t read_plain(source *s, uint8_t *buf, size_t cap)
{
    /* Nothing buffered (after the format probe): read straight into the
     * caller's buffer, sparing a copy of every byte.  A chunker's room is
     * often under RAW_BYTES (its buffer is two chunks), so any room of
     * DIRECT_BYTES or more is read into directly. */
    if (s->raw_pos == s->raw_len && !s->raw_eof && cap >= DIRECT_BYTES) return source_read_raw(s, buf, cap);
    ssize_t avail = source_raw_fill(s);
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
    if (have >= margin || s->raw_eof) return have ? (ssize_t)have : source_raw_fill(s);
    memmove(s->raw, s->raw + s->raw_pos, have);
    s->raw_pos = 0;
    s->raw_len = have;
    while (!s->raw_eof && s->raw_len < margin) {
        ssize_t n = source_read_raw(s, s->raw + s->raw_len, RAW_BYTES - s->raw_len);
        if (n < 0) return -1;
        s->raw_len += (size_t)n;
    }
    return (ssize_t)s->raw_len;
}

uint64_t source_unread_offset(const source *s) { return s->raw_offset - (s->raw_len - s->raw_pos); }

static ssize_t gzip_fail(source *s, const char *fmt, uint64_t at)
{
    char num[32];
    snprintf(num, sizeof num, "%llu", (unsigned long long)at);
    fail(s, fmt, num);
    return -1;
}

/* n raw bytes at raw_pos were consumed by the gzip decoder: into the
 * fingerprint (hash_on_use). */
void source_consume(source *s, size_t n)
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
    p->raw_at = source_unread_offset(s);
    p->decoded_at = decoded_at;
    p->raw_print = XXH3_64bits_digest(s->hash);
    memcpy(&p->gz, s->gz, sizeof p->gz);
    p->gz.next_in = p->gz.next_out = NULL;
    p->gz.avail_in = p->gz.avail_out = 0;
    m->newest = k;
    if (s->ahead) pthread_mutex_unlock(&s->ahead->mu);
    m->next_at = decoded_at + m->every;
}

/* A decoder failed (message set) after producing n bytes in this read:
 * those bytes are data like any other, so they are handed out now and the
 * fault on the next read.  The reader then meets whatever they hold (a
 * ragged row, an over-long record) before the fault, as it would with
 * reads of any other size: the same error for any read size and thread
 * count. */
static ssize_t output_then_fault(source *s, size_t n)
{
    if (n == 0) return -1;
    s->fault_next = 1;
    return (ssize_t)n;
}

/* One step into buf (room: the rest of the step, read_stepped): the bytes
 * decoded (at least one, or 0 at the end), -1 on an error. */
static ssize_t gzip_step(source *s, uint8_t *buf)
{
    const size_t cap = s->step_left;
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
                                 source_unread_offset(s));
            isal_inflate_reset(st);
            note_start(s, s->decoded + s->step_produced); /* produced is 0 here */
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
            source_consume(s, (size_t)avail - st->avail_in);
            if (rc == ISAL_DECOMP_OK) {
                s->gz_header_done = 1;
                st->crc_flag = ISAL_GZIP_NO_HDR_VER;
                continue;
            }
            if (rc == ISAL_END_INPUT && avail > 0) continue;
            if (rc == ISAL_END_INPUT)
                return gzip_fail(s, "%s: truncated gzip stream (input ends inside a member "
                                    "header at byte %s)", s->raw_offset);
            return gzip_fail(s, "%s: corrupt gzip header near byte %s", source_unread_offset(s));
        }
        uint32_t room = (uint32_t)(cap - produced);
        st->next_out = buf + produced;
        st->avail_out = room;
        int rc = isal_inflate(st);
        /* On some errors ISA-L leaves avail_in past what it was given (seen:
         * 2^32 - 1 after an invalid symbol): no more than was given is taken
         * as consumed or produced, so that nothing is read past the buffers. */
        size_t left_in = st->avail_in <= (size_t)avail ? st->avail_in : (size_t)avail;
        size_t left_out = st->avail_out <= room ? st->avail_out : room;
        size_t used = (size_t)avail - left_in, out = room - left_out;
        /* Nor are the bytes of a call that met damaged data taken: ISA-L's
         * count of them is not to be trusted (it may count bytes it never
         * wrote, whatever the buffer held).  A checksum mismatch is met after
         * the member's data were decoded from valid codes: those are kept. */
        if (rc < 0 && rc != ISAL_INCORRECT_CHECKSUM) out = 0;
        source_consume(s, used);
        const uint64_t at = s->decoded + s->step_produced + produced + out;
        if (s->marks && rc >= 0 && st->block_state != ISAL_BLOCK_FINISH &&
            at >= s->marks->next_at)
            take_mark(s, at);
        produced += out;
        if (rc < 0) {
            gzip_fail(s, rc == ISAL_INCORRECT_CHECKSUM
                             ? "%s: corrupt gzip stream (checksum mismatch) near byte %s"
                             : "%s: corrupt gzip stream near byte %s",
                      source_unread_offset(s));
            s->step_left -= produced;
            return output_then_fault(s, produced);
        }
        if (st->block_state == ISAL_BLOCK_FINISH) {
            s->gz_in_member = 0;
            continue;
        }
        if (used == 0 && produced == 0 && avail == 0)
            return gzip_fail(s, "%s: truncated gzip stream (input ends inside a member at byte %s)",
                             s->raw_offset);
    }
    s->step_left -= produced;
    return (ssize_t)produced;
}

/* One step into dst (room: the rest of the step, read_stepped): the bytes
 * decoded, 0 at the end of the stream, -1 on an error (message set). */
static ssize_t zstd_step(source *s, uint8_t *dst)
{
    ZSTD_outBuffer out = {dst, s->step_left, 0};
    while (out.pos == 0) {
        ssize_t avail = source_raw_fill(s);
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
            break;
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
        /* A frame ended: the next starts (decoded counts the reads before). */
        if (rc == 0) note_start(s, s->decoded + s->step_produced + out.pos);
    }
    s->step_left -= out.pos;
    return (ssize_t)out.pos;
}

/* The decoders report neither the output of a call that fails nor, for
 * zstd, its input, and how far they get before a fault depends on the room
 * they are given (ISA-L decodes into a buffer of its own when the room is
 * small).  So a decoder is always given the same room, whatever a read asks
 * for: the rest of a step of STEP_BYTES decoded bytes (steps counted from
 * the stream's start), in the caller's buffer when it has room for that,
 * else in a buffer of the source's own, handed out over the next reads.
 * Every reader then sees the same bytes before a fault and the same byte
 * offset in its message (one read at a time, or a read-ahead thread's
 * larger blocks). */
#define STEP_BYTES ((size_t)1 << 17)

typedef ssize_t (*step_fn)(source *s, uint8_t *dst);

static ssize_t read_stepped(source *s, uint8_t *buf, size_t cap, step_fn step)
{
    if (s->taken < s->staged) { /* the rest of a staged step */
        size_t n = s->staged - s->taken < cap ? s->staged - s->taken : cap;
        memcpy(buf, s->stage + s->taken, n);
        s->taken += n;
        return (ssize_t)n;
    }
    if (s->fault_next) return -1; /* after the bytes decoded before it */
    /* Whole steps into the caller's buffer while it has room for them; a
     * fault after some of them is handed out on the next read. */
    size_t produced = 0;
    s->step_produced = 0;
    for (;;) {
        if (s->step_left == 0) s->step_left = STEP_BYTES;
        if (cap - produced < s->step_left) break;
        size_t want = s->step_left;
        ssize_t n = step(s, buf + produced);
        if (n < 0) return output_then_fault(s, produced);
        produced += (size_t)n;
        s->step_produced = produced;
        /* Input ran short, the end, or a fault after these bytes. */
        if ((size_t)n < want || s->fault_next) return (ssize_t)produced;
    }
    if (produced) return (ssize_t)produced;
    /* Less room than the rest of the step: decode it aside. */
    if (!s->stage && !(s->stage = malloc(STEP_BYTES))) {
        fail(s, "%s: %s", "out of memory");
        s->nomem = 1;
        return -1;
    }
    ssize_t n = step(s, s->stage);
    if (n <= 0) return n;
    s->staged = (size_t)n;
    s->taken = 0;
    return read_stepped(s, buf, cap, step);
}

static ssize_t ahead_read(source *s, void *buf, size_t cap);

static ssize_t decode(source *s, void *buf, size_t cap)
{
    if (s->done || cap == 0) return 0;
    ssize_t n;
    switch (s->kind) {
    case SOURCE_GZIP: n = read_stepped(s, buf, cap, gzip_step); break;
    case SOURCE_ZSTD: n = read_stepped(s, buf, cap, zstd_step); break;
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
        ahead_block *b = a->spare;
        if (b) {
            a->spare = b->next;
            a->nspare--;
        }
        pthread_mutex_unlock(&a->mu);
        if (quit) { free(b); break; }
        if (!b) b = malloc(sizeof *b + AHEAD_BLOCK);
        ssize_t n = -1;
        if (!b) {
            message_printf(s->err, sizeof s->err, "%s: out of memory", s->path);
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
            if (a->nspare < AHEAD_SPARE) {
                b->next = a->spare;
                a->spare = b;
                a->nspare++;
            } else {
                free(b);
            }
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
    while (a->spare) {
        ahead_block *b = a->spare;
        a->spare = b->next;
        free(b);
    }
    pthread_mutex_destroy(&a->mu);
    pthread_cond_destroy(&a->cv);
    free(a);
    s->ahead = NULL;
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
