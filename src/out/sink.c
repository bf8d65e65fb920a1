/* sink: see sink.h. */
#include "out/sink.h"

#include <errno.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>
#include <isa-l.h>
#include <zstd.h>

#include "io/message.h"
#include "summary/tempfile.h"

enum { PLAIN, GZIP, ZSTD };
#define BUF_BYTES (1u << 18)
#define ZBUF_BYTES (1u << 18)

struct sink {
    int kind;            /* PLAIN, GZIP, ZSTD */
    int fd;              /* destination: the tempfile's descriptor, or 1 */
    tempfile out;        /* the file (unused for standard output) */
    int to_file;         /* out is open */
    int push;            /* push written bytes to the disk as they go (tempfile_push) */
    off_t written;       /* bytes written to fd */
    off_t pushed;        /* bytes before this offset were pushed */
    struct isal_zstream *gz; /* gzip state (ISA-L deflate, level 2) */
    uint8_t *gz_level;   /* ISA-L level buffer */
    ZSTD_CStream *zs;    /* zstd state */
    char *path;          /* the name given (NULL for standard output) */
    unsigned char *buf;  /* pending bytes */
    size_t len;          /* bytes pending */
    size_t cap;          /* bytes allocated for buf */
    unsigned char *zbuf; /* zstd output buffer */
    int failed;          /* a write failed */
    int error;           /* errno of the first failure (0: a compressor failed) */
};

static int ends_with(const char *s, const char *suffix)
{
    size_t a = strlen(s), b = strlen(suffix);
    return a >= b && strcmp(s + a - b, suffix) == 0;
}

/* stat of a path, or of a standard descriptor for "-" or NULL; 0 or -1. */
static int stat_of(const char *path, int std_fd, struct stat *st)
{
    if (!path || !strcmp(path, "-")) return fstat(std_fd, st);
    return stat(path, st);
}

long sink_replaces_input(const char *path, const char *const *inputs, size_t n)
{
    struct stat o, in;
    if (stat_of(path, STDOUT_FILENO, &o) != 0 || !S_ISREG(o.st_mode)) return -1;
    for (size_t i = 0; i < n; i++)
        if (inputs[i] && stat_of(inputs[i], STDIN_FILENO, &in) == 0 && in.st_dev == o.st_dev &&
            in.st_ino == o.st_ino)
            return (long)i;
    return -1;
}

sink *sink_open(const char *path, char *err, size_t errlen)
{
    sink *s = calloc(1, sizeof *s);
    if (!s) { snprintf(err, errlen, "out of memory"); return NULL; }
    s->buf = malloc(BUF_BYTES);
    s->cap = BUF_BYTES;
    if (!s->buf) { free(s); snprintf(err, errlen, "out of memory"); return NULL; }
    if (!path || strcmp(path, "-") == 0) {
        s->fd = STDOUT_FILENO;
        return s;
    }
    s->path = strdup(path);
    if (!s->path) { sink_abort(s); snprintf(err, errlen, "out of memory"); return NULL; }
    if (tempfile_open(&s->out, path, 0, err, errlen) != 0) {
        sink_abort(s);
        return NULL;
    }
    s->to_file = 1;
    s->fd = s->out.fd;
    s->push = tempfile_pushes(&s->out);
    s->kind = ends_with(path, ".gz") ? GZIP : ends_with(path, ".zst") ? ZSTD : PLAIN;
    if (s->kind == GZIP) {
        s->gz = malloc(sizeof *s->gz);
        s->gz_level = malloc(ISAL_DEF_LVL2_DEFAULT);
        s->zbuf = malloc(ZBUF_BYTES);
        if (s->gz && s->gz_level) {
            isal_deflate_init(s->gz);
            s->gz->level = 2;
            s->gz->level_buf = s->gz_level;
            s->gz->level_buf_size = ISAL_DEF_LVL2_DEFAULT;
            s->gz->gzip_flag = IGZIP_GZIP;
        }
    }
    if (s->kind == ZSTD) {
        s->zs = ZSTD_createCStream();
        s->zbuf = malloc(ZSTD_CStreamOutSize());
        if (s->zs) ZSTD_initCStream(s->zs, 3);
    }
    if ((s->kind == GZIP && (!s->gz || !s->gz_level || !s->zbuf)) ||
        (s->kind == ZSTD && (!s->zs || !s->zbuf))) {
        message_printf(err, errlen, "%s: cannot open for writing", path);
        sink_abort(s);
        return NULL;
    }
    return s;
}

/* Writes raw (already compressed or plain) bytes to the destination. */
static int put(sink *s, const void *p, size_t n)
{
    const unsigned char *b = p;
    while (n && !s->failed) {
        ssize_t w = write(s->fd, b, n);
        if (w < 0 && errno == EINTR) continue;
        if (w < 0) {
            s->failed = 1;
            s->error = errno;
            break;
        }
        b += w;
        n -= (size_t)w;
        s->written += w;
    }
    if (s->push) tempfile_push(s->fd, &s->pushed, s->written);
    return s->failed ? -1 : 0;
}

static int drain(sink *s, int end)
{
    if (s->failed) return -1;
    if (s->kind == GZIP) {
        struct isal_zstream *z = s->gz;
        z->next_in = s->buf;
        z->avail_in = (uint32_t)s->len;
        z->end_of_stream = end;
        for (;;) {
            z->next_out = s->zbuf;
            z->avail_out = ZBUF_BYTES;
            if (isal_deflate(z) != COMP_OK) { s->failed = 1; break; }
            if (ZBUF_BYTES - z->avail_out && put(s, s->zbuf, ZBUF_BYTES - z->avail_out) != 0) break;
            if (end ? z->internal_state.state == ZSTATE_END : z->avail_in == 0) break;
        }
    } else if (s->kind == ZSTD) {
        ZSTD_inBuffer in = {s->buf, s->len, 0};
        for (;;) {
            ZSTD_outBuffer out = {s->zbuf, ZSTD_CStreamOutSize(), 0};
            size_t rc = end ? ZSTD_endStream(s->zs, &out) : ZSTD_compressStream(s->zs, &out, &in);
            if (ZSTD_isError(rc)) { s->failed = 1; break; }
            if (out.pos && put(s, s->zbuf, out.pos) != 0) break;
            if (end ? rc == 0 : in.pos == in.size) break;
        }
    } else if (s->len) {
        put(s, s->buf, s->len);
    }
    s->len = 0;
    return s->failed ? -1 : 0;
}

char *sink_reserve(sink *s, size_t n)
{
    if (s->failed) return NULL;
    if (s->len + n > s->cap && drain(s, 0) != 0) return NULL;
    if (n > s->cap) {
        unsigned char *g = realloc(s->buf, n);
        if (!g) { s->failed = 1; s->error = ENOMEM; return NULL; }
        s->buf = g;
        s->cap = n;
    }
    return (char *)s->buf + s->len;
}

void sink_commit(sink *s, size_t n) { s->len += n; }

int sink_write(sink *s, const void *data, size_t len)
{
    const unsigned char *p = data;
    while (len && !s->failed) {
        size_t room = s->cap - s->len, n = len < room ? len : room;
        memcpy(s->buf + s->len, p, n);
        s->len += n;
        p += n;
        len -= n;
        if (s->len == s->cap) drain(s, 0);
    }
    return s->failed ? -1 : 0;
}

static void release(sink *s)
{
    if (s->zs) ZSTD_freeCStream(s->zs);
    free(s->gz);
    free(s->gz_level);
    free(s->zbuf);
    free(s->buf);
    free(s->path);
    free(s);
}

void sink_error(const sink *s, char *err, size_t errlen)
{
    message_printf(err, errlen, "%s: cannot write: %s", s->path ? s->path : "standard output",
                   s->error ? strerror(s->error) : "the compressor failed");
}

int sink_flush(sink *s)
{
    return drain(s, 0) != 0 || s->failed ? -1 : 0;
}

int sink_close(sink *s, char *err, size_t errlen)
{
    drain(s, 0);
    if (s->kind != PLAIN) drain(s, 1);
    int rc = 0;
    if (s->failed) {
        sink_error(s, err, errlen);
        rc = -1;
        if (s->to_file) tempfile_discard(&s->out);
    } else if (s->to_file) {
        rc = tempfile_commit(&s->out, err, errlen);
    }
    s->to_file = 0;
    release(s);
    return rc;
}

void sink_abort(sink *s)
{
    if (!s) return;
    if (s->to_file) tempfile_discard(&s->out);
    release(s);
}
