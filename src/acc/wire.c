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

static void put_le(wire_writer *w, uint64_t v, int bytes)
{
    uint8_t b[8];
    for (int i = 0; i < bytes; i++) b[i] = (uint8_t)(v >> (8 * i));
    wire_put_bytes(w, b, (size_t)bytes);
}

void wire_put_u8(wire_writer *w, uint8_t v) { put_le(w, v, 1); }
void wire_put_u32(wire_writer *w, uint32_t v) { put_le(w, v, 4); }
void wire_put_u64(wire_writer *w, uint64_t v) { put_le(w, v, 8); }
void wire_put_i64(wire_writer *w, int64_t v) { put_le(w, (uint64_t)v, 8); }

void wire_put_f64(wire_writer *w, double v)
{
    uint64_t u;
    memcpy(&u, &v, 8);
    put_le(w, u, 8);
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

int wire_need(wire_reader *r, size_t n)
{
    if (!r->failed && r->len - r->pos < n) r->failed = 1;
    return !r->failed;
}

static uint64_t get_le(wire_reader *r, int bytes)
{
    if (!wire_need(r, (size_t)bytes)) return 0;
    uint64_t v = 0;
    for (int i = 0; i < bytes; i++) v |= (uint64_t)r->data[r->pos + i] << (8 * i);
    r->pos += (size_t)bytes;
    return v;
}

uint8_t wire_get_u8(wire_reader *r) { return (uint8_t)get_le(r, 1); }
uint32_t wire_get_u32(wire_reader *r) { return (uint32_t)get_le(r, 4); }
uint64_t wire_get_u64(wire_reader *r) { return get_le(r, 8); }
int64_t wire_get_i64(wire_reader *r) { return (int64_t)get_le(r, 8); }

double wire_get_f64(wire_reader *r)
{
    uint64_t u = get_le(r, 8);
    double v;
    memcpy(&v, &u, 8);
    return v;
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
