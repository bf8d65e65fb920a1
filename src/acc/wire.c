/* wire: see wire.h.  Fixed little-endian layout, independent of the host. */
#include "acc/wire.h"

#include <stdlib.h>
#include <string.h>

void wire_writer_init(wire_writer *w) { memset(w, 0, sizeof *w); }

void wire_writer_free(wire_writer *w)
{
    free(w->data);
    memset(w, 0, sizeof *w);
}

int wire_writer_drain(wire_writer *w)
{
    if (w->failed || !w->drain || !w->len) return !w->failed;
    if (w->drain(w->drain_ctx, w->data, w->len) != 0) w->failed = 1;
    w->len = 0;
    return !w->failed;
}

static int reserve(wire_writer *w, size_t n)
{
    if (w->failed) return 0;
    if (w->drain && w->len >= WIRE_DRAIN_BYTES && !wire_writer_drain(w)) return 0;
    if (w->len + n <= w->cap) return 1;
    size_t cap = w->cap ? w->cap : 256;
    while (cap < w->len + n) cap *= 2;
    uint8_t *p = realloc(w->data, cap);
    if (!p) { w->failed = 1; return 0; }
    w->data = p;
    w->cap = cap;
    return 1;
}

void wire_put_bytes(wire_writer *w, const void *p, size_t n)
{
    if (!n || !reserve(w, n)) return;
    memcpy(w->data + w->len, p, n);
    w->len += n;
}

void wire_put_str(wire_writer *w, const char *s, size_t n)
{
    wire_put_u32(w, (uint32_t)n);
    wire_put_bytes(w, s, n);
}

void wire_reader_init(wire_reader *r, const void *data, size_t len)
{
    r->data = data;
    r->len = len;
    r->pos = 0;
    r->failed = 0;
}

void wire_get_bytes(wire_reader *r, void *p, size_t n)
{
    if (!wire_need(r, n)) { memset(p, 0, n); return; }
    memcpy(p, r->data + r->pos, n);
    r->pos += n;
}

const char *wire_get_str(wire_reader *r, size_t *n, size_t max)
{
    uint32_t len = wire_get_u32(r);
    if (len > max) r->failed = 1;
    if (!wire_need(r, len)) { *n = 0; return NULL; }
    const char *s = (const char *)r->data + r->pos;
    r->pos += len;
    *n = len;
    return s;
}
