/* chunk: see chunk.h for the cutting rule. */
#include "io/chunk.h"

#include <errno.h>
#include <fcntl.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "io/csv.h"
#include "io/message.h"

#define MARK_BYTES (1u << 20) /* spacing of the marks chunks end before */

struct chunker {
    char *buf;            /* buffered bytes, CHUNK_PADDING zero bytes after them */
    size_t cap;           /* allocated bytes of buf (padding aside) */
    size_t len;           /* bytes held */
    size_t start;         /* buf offset of the next chunk's first byte */
    uint64_t base;        /* stream offset of buf[0] */
    size_t chunk_bytes;   /* target chunk size */
    size_t max_record;    /* longest record accepted */
    uint64_t mark_step;   /* g: min(MARK_BYTES, chunk_bytes) */
    const char *name;     /* the stream's name, for messages */
    int ended;            /* no more bytes follow */
    int flushing;         /* no more bytes follow, the stream failed (chunker_flush) */
    uint64_t long_at;     /* the record that passed the limit (chunker_too_long), or
                             UINT64_MAX */
    int long_quoted;      /* a quote was open where it passed it */
    int dialect_set;      /* the delimiter is known */
    char delim;           /* field delimiter */
    size_t skip;          /* bytes before the first record (BOM) */
    /* The quote scan of the chunk being cut, kept between calls. */
    csv_quote_state quote; /* state after byte `scanned` */
    uint64_t scanned;      /* stream offset the scan has reached */
    uint64_t mark;         /* the mark the chunk is tried at (0: chunk not begun) */
    uint64_t best;         /* last record end found since the chunk start */
};

chunker *chunker_create(size_t chunk_bytes, size_t max_record_bytes)
{
    chunker *c = calloc(1, sizeof *c);
    if (!c) return NULL;
    c->chunk_bytes = chunk_bytes < 64 ? 64 : chunk_bytes;
    c->max_record = max_record_bytes;
    c->mark_step = c->chunk_bytes < MARK_BYTES ? c->chunk_bytes : MARK_BYTES;
    c->cap = c->chunk_bytes * 2;
    c->buf = calloc(1, c->cap + 1 + CHUNK_PADDING);
    if (!c->buf) { free(c); return NULL; }
    c->long_at = UINT64_MAX;
    return c;
}

void chunker_free(chunker *c)
{
    if (!c) return;
    free(c->buf);
    free(c);
}

void chunker_start(chunker *c, const char *name)
{
    c->name = name;
    c->len = c->start = 0;
    c->base = 0;
    c->ended = c->dialect_set = c->flushing = 0;
    c->long_at = UINT64_MAX;
    c->mark = 0;
    memset(c->buf, 0, 1 + CHUNK_PADDING);
}

void chunker_rebase(chunker *c, uint64_t base) { c->base = base; }

void chunker_set_dialect(chunker *c, char delim, size_t skip_bytes)
{
    c->delim = delim;
    c->skip = skip_bytes;
    c->dialect_set = 1;
}

/* The stream offset of the record that starts at `at`: past the byte-order
 * mark at the stream's start, which belongs to no record (the cursor counts
 * from there too, so both name the same byte). */
static uint64_t record_start(const chunker *c, uint64_t at)
{
    return at < c->skip ? c->skip : at;
}

char *chunker_space(chunker *c, size_t *room, char *err, size_t errlen)
{
    if (c->start) { /* drop what was handed out */
        memmove(c->buf, c->buf + c->start, c->len - c->start);
        c->len -= c->start;
        c->base += c->start;
        c->start = 0;
    }
    if (c->len == c->cap) {
        /* One record longer than a chunk, or bytes held for detection: grow,
         * within what a chunk plus the longest record can need. */
        size_t limit = c->chunk_bytes + MARK_BYTES + c->max_record;
        size_t cap = c->cap * 2 > limit ? limit : c->cap * 2;
        if (cap <= c->cap) {
            message_printf(err, errlen,
                           "%s: record at byte %llu is longer than the %zu-byte limit (the record "
                           "limit: an unterminated quote, or raise {max_record})", c->name,
                           (unsigned long long)record_start(c, c->base), c->max_record);
            return NULL;
        }
        char *p = realloc(c->buf, cap + 1 + CHUNK_PADDING);
        if (!p) {
            message_printf(err, errlen, "%s: out of memory", c->name);
            errno = ENOMEM;
            return NULL;
        }
        c->buf = p;
        c->cap = cap;
    }
    *room = c->cap - c->len;
    return c->buf + c->len;
}

void chunker_commit(chunker *c, size_t n)
{
    c->len += n;
    memset(c->buf + c->len, 0, 1 + CHUNK_PADDING); /* the tokenizer may read past the end */
}

size_t chunker_feed(chunker *c, const void *data, size_t len, char *err, size_t errlen)
{
    size_t room;
    char *p = chunker_space(c, &room, err, errlen);
    if (!p) return 0;
    size_t n = len < room ? len : room;
    memcpy(p, data, n);
    chunker_commit(c, n);
    return n;
}

size_t chunker_to_mark(const chunker *c)
{
    uint64_t held = c->base + c->len;
    return (size_t)(c->mark_step - held % c->mark_step);
}

int chunker_trade(chunker *c, char **buf, size_t *size, char *err, size_t errlen)
{
    const size_t need = c->cap + 1 + CHUNK_PADDING;
    char *nb = *buf;
    if (!nb || *size < need) {
        nb = malloc(need);
        if (!nb) {
            message_printf(err, errlen, "%s: out of memory", c->name);
            errno = ENOMEM;
            return -1;
        }
        free(*buf);
    }
    size_t rest = c->len - c->start;
    memcpy(nb, c->buf + c->start, rest);
    memset(nb + rest, 0, 1 + CHUNK_PADDING);
    *buf = c->buf;
    *size = need;
    c->buf = nb;
    c->len = rest;
    c->base += c->start;
    c->start = 0;
    return 0;
}

void chunker_finish(chunker *c) { c->ended = 1; }
void chunker_flush(chunker *c) { c->flushing = 1; }

int chunker_done(const chunker *c) { return c->ended && c->start == c->len; }

const char *chunker_pending(const chunker *c, size_t *len)
{
    *len = c->len - c->start;
    return c->buf + c->start;
}

static int too_long(chunker *c, uint64_t at, char *err, size_t errlen)
{
    /* The hint of a quote only when one is open where the limit is passed. */
    c->long_at = at;
    c->long_quoted = c->quote.mode == CSV_IN_QUOTES || c->quote.mode == CSV_QUOTE_SEEN;
    message_printf(err, errlen,
                   "%s: record at byte %llu is longer than the %zu-byte limit (the record limit: "
                   "%sraise {max_record})", c->name, (unsigned long long)at, c->max_record,
                   c->long_quoted ? "an unterminated quote, or " : "");
    return -1;
}

int chunker_too_long(const chunker *c, uint64_t *at, size_t *limit, int *quoted)
{
    if (c->long_at == UINT64_MAX) return 0;
    *at = c->long_at;
    *limit = c->max_record;
    *quoted = c->long_quoted;
    return 1;
}

/* Hands out [start, end) (stream offsets) as the next chunk. */
static int emit(chunker *c, uint64_t end, chunk *out)
{
    size_t at = c->start, n = (size_t)(end - c->base) - at;
    out->data = c->buf + at;
    out->len = n;
    out->offset = c->base + at;
    c->start = at + n;
    out->last = c->ended && c->start == c->len;
    c->mark = 0;
    return 1;
}

int chunker_next(chunker *c, chunk *out, char *err, size_t errlen)
{
    if (!c->dialect_set || c->start == c->len) return 0;
    const uint64_t s = c->base + c->start, held = c->base + c->len;
    if (!c->mark) { /* a new chunk: its first mark, and the scan from its start */
        uint64_t want = s + c->chunk_bytes, g = c->mark_step;
        c->mark = (want + g - 1) / g * g;
        uint64_t first = s < c->skip ? c->skip : s;
        csv_quote_init(&c->quote, c->delim);
        c->scanned = first;
        c->best = s;
    }
    for (;;) {
        if (held < c->mark && !c->ended && !c->flushing) return 0;
        uint64_t upto = held < c->mark ? held : c->mark;
        if (upto > c->scanned) {
            size_t from = (size_t)(c->scanned - c->base), n = (size_t)(upto - c->scanned);
            size_t r = csv_quote_scan(&c->quote, c->buf + from, n, 0);
            if (r <= n) c->best = c->scanned + r;
            c->scanned = upto;
        }
        int final = c->ended && upto == held;
        /* The open record (from the last record end, or from past the
         * byte-order mark) must fit the limit. */
        if (upto - record_start(c, c->best) > c->max_record) {
            if (c->best > s) return emit(c, c->best, out);
            return too_long(c, record_start(c, c->best), err, errlen);
        }
        if (c->best >= s + c->chunk_bytes) return emit(c, c->best, out);
        if (final) return emit(c, held, out);
        if (c->flushing && upto == held) return c->best > s ? emit(c, c->best, out) : 0;
        c->mark += c->mark_step;
    }
}

int chunk_find_record_start(const char *path, uint64_t offset, char delim, uint64_t *start,
                            char *err, size_t errlen)
{
    if (offset == 0) { *start = 0; return 0; }
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        message_printf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
        return -1;
    }
    enum { BLOCK = 1 << 20 };
    char *buf = malloc(BLOCK);
    if (!buf) { close(fd); snprintf(err, errlen, "out of memory"); return -1; }
    /* Record starts are positions p just after a record end; the first with
     * p >= offset ends at a newline at >= offset - 1. */
    csv_quote_state q;
    csv_quote_init(&q, delim);
    uint64_t pos = 0, want = offset - 1;
    int rc = 1;
    while (rc == 1) {
        ssize_t n = read(fd, buf, BLOCK);
        if (n < 0 && errno == EINTR) continue;
        if (n < 0) {
            message_printf(err, errlen, "%s: read error: %s", path, strerror(errno));
            rc = -1;
            break;
        }
        if (n == 0) { *start = pos; rc = 0; break; } /* no record starts in the rest */
        size_t i = 0, len = (size_t)n;
        if (pos == 0 && len >= 3 && (unsigned char)buf[0] == 0xEF &&
            (unsigned char)buf[1] == 0xBB && (unsigned char)buf[2] == 0xBF)
            i = 3; /* the byte-order mark belongs to no record */
        if (pos + i < want) { /* before the target: only the quote state matters */
            size_t stop = want - pos < len ? (size_t)(want - pos) : len;
            csv_quote_scan(&q, buf + i, stop - i, 0);
            i = stop;
        }
        if (i < len) {
            size_t r = csv_quote_scan(&q, buf + i, len - i, 1);
            if (r <= len - i) { *start = pos + i + r; rc = 0; }
        }
        pos += len;
    }
    free(buf);
    close(fd);
    return rc;
}
