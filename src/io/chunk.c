/* chunk: see chunk.h for the cutting rule. */
#include "io/chunk.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

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
    c->buf = malloc(c->cap + 1);
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
        char *p = realloc(c->buf, cap + 1);
        if (!p) { snprintf(err, errlen, "%s: out of memory", source_path(c->src)); return -1; }
        c->buf = p;
        c->cap = cap;
    }
    ssize_t n = source_read(c->src, c->buf + c->len, c->cap - c->len);
    if (n < 0) { snprintf(err, errlen, "%s", source_error(c->src)); return -1; }
    if (n == 0) c->eof = 1;
    c->len += (size_t)n;
    return n;
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
        if (cut <= c->len) {
            out->data = c->buf;
            out->len = cut;
            out->offset = c->offset;
            out->last = 0;
            c->consumed = cut;
            return 1;
        }
        /* No record end in the whole buffer: one record longer than it. */
        if (c->len >= c->max_record) {
            snprintf(err, errlen, "%s: record at byte %llu is longer than the %zu-byte limit "
                     "(an unterminated quote, or raise --max-record)",
                     source_path(c->src), (unsigned long long)c->offset, c->max_record);
            return -1;
        }
        ssize_t n = fill(c, err, errlen);
        if (n < 0) return -1;
        if (n == 0 && !c->eof) {
            snprintf(err, errlen, "%s: record at byte %llu is longer than the %zu-byte limit "
                     "(an unterminated quote, or raise --max-record)",
                     source_path(c->src), (unsigned long long)c->offset, c->max_record);
            return -1;
        }
    }
}
