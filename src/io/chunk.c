/* chunk: see chunk.h for the cutting rule. */
#include "io/chunk.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#define READ_STEP (1u << 20) /* bytes asked of the source per read */

struct chunker {
    char *buf;            /* buffered decompressed bytes */
    size_t cap;           /* allocated bytes of buf */
    size_t len;           /* bytes held */
    size_t consumed;      /* bytes of buf handed out in the last chunk */
    size_t chunk_bytes;   /* target chunk size */
    size_t max_record;    /* longest record accepted */
    uint64_t offset;      /* source offset of buf[0] */
    uint64_t limit;       /* stop after the record containing this offset */
    source *src;          /* current source */
    int eof;              /* source exhausted */
};

chunker *chunker_create(size_t chunk_bytes, size_t max_record_bytes)
{
    chunker *c = calloc(1, sizeof *c);
    if (!c) return NULL;
    c->chunk_bytes = chunk_bytes < 64 ? 64 : chunk_bytes;
    c->max_record = max_record_bytes;
    c->cap = c->chunk_bytes * 2;
    c->buf = malloc(c->cap + 1 + CHUNK_PADDING);
    if (c->buf) memset(c->buf, 0, 1 + CHUNK_PADDING);
    if (!c->buf) { free(c); return NULL; }
    return c;
}

void chunker_free(chunker *c)
{
    if (!c) return;
    free(c->buf);
    free(c);
}

void chunker_start(chunker *c, source *src)
{
    c->src = src;
    c->len = c->consumed = 0;
    c->offset = 0;
    c->eof = 0;
    c->limit = 0;
}

void chunker_set_limit(chunker *c, uint64_t limit) { c->limit = limit; }

size_t chunk_last_record_end(const char *data, size_t len)
{
    /* Walk the quotes; remember the last '\n' seen in an even-parity stretch. */
    size_t best = len + 1, pos = 0;
    int inside = 0;
    while (pos < len) {
        const char *q = memchr(data + pos, '"', len - pos);
        size_t stop = q ? (size_t)(q - data) : len;
        if (!inside && stop > pos) {
            const char *nl = memrchr(data + pos, '\n', stop - pos);
            if (nl) best = (size_t)(nl - data) + 1;
        }
        if (!q) break;
        inside = !inside;
        pos = stop + 1;
    }
    return best == len + 1 ? len + 1 : best;
}

/* Reads more bytes into buf; returns bytes added, 0 at EOF, -1 on error. */
static ssize_t fill(chunker *c, char *err, size_t errlen)
{
    if (c->len == c->cap) {
        size_t cap = c->cap * 2;
        if (cap > c->max_record + c->chunk_bytes) cap = c->max_record + c->chunk_bytes;
        if (cap <= c->cap) return 0;
        char *p = realloc(c->buf, cap + 1 + CHUNK_PADDING);
        if (!p) { snprintf(err, errlen, "%s: out of memory", source_path(c->src)); return -1; }
        c->buf = p;
        c->cap = cap;
    }
    /* At most READ_STEP per call, so that only about a chunk's worth of the
     * buffer is ever touched. */
    size_t room = c->cap - c->len;
    ssize_t n = source_read(c->src, c->buf + c->len, room < READ_STEP ? room : READ_STEP);
    if (n < 0) { snprintf(err, errlen, "%s", source_error(c->src)); return -1; }
    if (n == 0) c->eof = 1;
    c->len += (size_t)n;
    memset(c->buf + c->len, 0, CHUNK_PADDING); /* the tokenizer may read past the end */
    return n;
}

static int too_long(const chunker *c, size_t start, char *err, size_t errlen)
{
    snprintf(err, errlen, "%s: record at byte %llu is longer than the %zu-byte limit "
             "(an unterminated quote, or raise --max-record)",
             source_path(c->src), (unsigned long long)(c->offset + start), c->max_record);
    return -1;
}

int chunker_next(chunker *c, chunk *out, char *err, size_t errlen)
{
    /* Drop what the previous chunk used. */
    if (c->consumed) {
        memmove(c->buf, c->buf + c->consumed, c->len - c->consumed);
        c->len -= c->consumed;
        c->offset += c->consumed;
        c->consumed = 0;
    }
    if (c->limit && c->offset > c->limit) return 0; /* past the range: done */
    for (;;) {
        while (!c->eof && c->len < c->chunk_bytes) {
            if (fill(c, err, errlen) < 0) return -1;
        }
        if (c->len == 0) return 0;
        if (c->eof) {
            out->data = c->buf;
            out->len = c->len;
            out->offset = c->offset;
            out->last = 1;
            c->consumed = c->len;
            c->buf[c->len] = '\0';
            return 1;
        }
        size_t cut = chunk_last_record_end(c->buf, c->len);
        if (cut <= c->len && cut >= c->chunk_bytes) {
            out->data = c->buf;
            out->len = cut;
            out->offset = c->offset;
            out->last = 0;
            c->consumed = cut;
            return 1;
        }
        /* No record end at or past chunk_bytes: read on, unless the record
         * after the last record end is already over the limit. */
        size_t open_start = cut <= c->len ? cut : 0;
        if (c->len - open_start >= c->max_record) {
            if (open_start == 0) return too_long(c, 0, err, errlen);
            /* Hand out the records before it; the next call reports it. */
            out->data = c->buf;
            out->len = open_start;
            out->offset = c->offset;
            out->last = 0;
            c->consumed = open_start;
            return 1;
        }
        ssize_t n = fill(c, err, errlen);
        if (n < 0) return -1;
        if (n == 0 && !c->eof) return too_long(c, open_start, err, errlen);
    }
}

int chunk_find_record_start(const char *path, uint64_t offset, uint64_t *start, char *err,
                            size_t errlen)
{
    if (offset == 0) { *start = 0; return 0; }
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        snprintf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
        return -1;
    }
    enum { BLOCK = 1 << 20 };
    char *buf = malloc(BLOCK);
    if (!buf) { close(fd); snprintf(err, errlen, "out of memory"); return -1; }
    /* Record starts are positions p with data[p-1] == '\n' outside quotes;
     * look for the first one with p >= offset, i.e. a newline at >= offset-1. */
    uint64_t pos = 0, want = offset - 1;
    int inside = 0, rc = 1;
    while (rc == 1) {
        ssize_t n = read(fd, buf, BLOCK);
        if (n < 0 && errno == EINTR) continue;
        if (n < 0) {
            snprintf(err, errlen, "%s: read error: %s", path, strerror(errno));
            rc = -1;
            break;
        }
        if (n == 0) { *start = pos; rc = 0; break; } /* no record starts in the rest */
        size_t i = 0, len = (size_t)n;
        while (i < len) {
            if (pos + i < want) {
                /* Before the target: only quotes matter. */
                size_t stop = want - pos < len ? (size_t)(want - pos) : len;
                const char *q = memchr(buf + i, '"', stop - i);
                if (q) { inside = !inside; i = (size_t)(q - buf) + 1; }
                else i = stop;
                continue;
            }
            char ch = buf[i];
            if (ch == '"') inside = !inside;
            else if (ch == '\n' && !inside) { *start = pos + i + 1; rc = 0; break; }
            i++;
        }
        pos += len;
    }
    free(buf);
    close(fd);
    return rc;
}
