/* wire: little-endian serialization primitives shared by every accumulator.
 *
 * A wire_writer grows a byte buffer; a wire_reader walks one.  Neither ever
 * fails loudly: a writer that cannot grow, or a reader asked for bytes past
 * its end, sets `failed` and from then on writes nothing / returns zeros.  The
 * caller checks `failed` once at the end, which keeps (de)serializers linear.
 */
#ifndef SHEAF_WIRE_H
#define SHEAF_WIRE_H

#include <stddef.h>
#include <stdint.h>
#include <string.h>

typedef struct {
    uint8_t *data;  /* owned buffer (free with wire_writer_free) */
    size_t len;     /* bytes written */
    size_t cap;     /* bytes allocated */
    int failed;     /* allocation (or the drain) failed: contents incomplete */
    /* Optional drain: when set, the buffer is handed to it whenever it holds
     * WIRE_DRAIN_BYTES or more and then emptied, so large outputs stream in
     * bounded memory.  Returns 0, or -1 to fail the writer. */
    int (*drain)(void *ctx, const uint8_t *data, size_t len);
    void *drain_ctx;
} wire_writer;

#define WIRE_DRAIN_BYTES (1u << 20)

/* Hands what is buffered to the drain (no-op without one); returns !failed. */
int wire_writer_drain(wire_writer *w);

typedef struct {
    const uint8_t *data; /* borrowed bytes */
    size_t len;          /* total bytes */
    size_t pos;          /* next byte to read */
    int failed;          /* a read ran past the end or met a bad value */
} wire_reader;

void wire_writer_init(wire_writer *w);
void wire_writer_free(wire_writer *w);
void wire_put_bytes(wire_writer *w, const void *p, size_t n);
/* A string: u32 length then the bytes (no terminator). */
void wire_put_str(wire_writer *w, const char *s, size_t n);

void wire_reader_init(wire_reader *r, const void *data, size_t len);
/* Copies n bytes into p (zero-fills p on failure). */
void wire_get_bytes(wire_reader *r, void *p, size_t n);
/* Returns a pointer into the reader's buffer and sets *n; NULL on failure.
 * Lengths above `max` fail the reader (guards against corrupt lengths). */
const char *wire_get_str(wire_reader *r, size_t *n, size_t max);
/* Fails the reader unless at least n more bytes remain; returns !failed. */
static inline int wire_need(wire_reader *r, size_t n)
{
    if (!r->failed && r->len - r->pos < n) r->failed = 1;
    return !r->failed;
}

/* ---- fixed-width numbers, inline ----------------------------------------
 * A summary is mostly such numbers: they are stored in place when the
 * buffer has room and no drain is due, else through wire_put_bytes (which
 * drains, grows or fails), and read in place when the bytes are there, else
 * the reader fails: a single load or store on a little-endian host.  Out
 * of line they took about 33 instructions a number (callgrind). */

static inline void wire_put_le(wire_writer *w, uint64_t v, unsigned bytes)
{
    uint8_t b[8]; /* v's low bytes first */
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
    memcpy(b, &v, 8);
#else
    for (unsigned i = 0; i < 8; i++) b[i] = (uint8_t)(v >> (8 * i));
#endif
    if (!w->failed && (!w->drain || w->len < WIRE_DRAIN_BYTES) && w->cap - w->len >= bytes) {
        memcpy(w->data + w->len, b, bytes);
        w->len += bytes;
    } else {
        wire_put_bytes(w, b, bytes);
    }
}

static inline void wire_put_u8(wire_writer *w, uint8_t v) { wire_put_le(w, v, 1); }
static inline void wire_put_u32(wire_writer *w, uint32_t v) { wire_put_le(w, v, 4); }
static inline void wire_put_u64(wire_writer *w, uint64_t v) { wire_put_le(w, v, 8); }
static inline void wire_put_i64(wire_writer *w, int64_t v) { wire_put_le(w, (uint64_t)v, 8); }

/* Every NaN is written as this one quiet NaN: which of two NaNs an
 * operation returns depends on the order of its operands, which differs
 * between the compiled copies of a loop (src/io/clones.h), so the bytes
 * would depend on the CPU. */
#define WIRE_NAN_BITS UINT64_C(0x7ff8000000000000)

static inline void wire_put_f64(wire_writer *w, double v)
{
    uint64_t u;
    memcpy(&u, &v, 8);
    wire_put_le(w, v != v ? WIRE_NAN_BITS : u, 8);
}

/* n doubles in a row, as n calls of wire_put_f64 would store them. */
static inline void wire_put_f64s(wire_writer *w, const double *v, size_t n)
{
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
    int nan = 0;
    for (size_t i = 0; i < n; i++) nan |= v[i] != v[i];
    if (!nan) {
        wire_put_bytes(w, v, n * sizeof *v);
        return;
    }
#endif
    for (size_t i = 0; i < n; i++) wire_put_f64(w, v[i]);
}

static inline uint64_t wire_get_le(wire_reader *r, unsigned bytes)
{
    if (!wire_need(r, bytes)) return 0;
    uint8_t b[8] = {0};
    memcpy(b, r->data + r->pos, bytes);
    r->pos += bytes;
    uint64_t v;
#if defined(__BYTE_ORDER__) && __BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__
    memcpy(&v, b, 8);
#else
    v = 0;
    for (unsigned i = 0; i < 8; i++) v |= (uint64_t)b[i] << (8 * i);
#endif
    return v;
}

static inline uint8_t wire_get_u8(wire_reader *r) { return (uint8_t)wire_get_le(r, 1); }
static inline uint32_t wire_get_u32(wire_reader *r) { return (uint32_t)wire_get_le(r, 4); }
static inline uint64_t wire_get_u64(wire_reader *r) { return wire_get_le(r, 8); }
static inline int64_t wire_get_i64(wire_reader *r) { return (int64_t)wire_get_le(r, 8); }

static inline double wire_get_f64(wire_reader *r)
{
    uint64_t u = wire_get_le(r, 8);
    double v;
    memcpy(&v, &u, 8);
    return v;
}

#endif
