/* csv: see csv.h.  The unquoted path is a tight byte loop over a class
 * table (delimiter, newline, other); quoted fields are copied down in place
 * only when they contain a doubled quote. */
#include "io/csv.h"

#include <stdlib.h>
#include <string.h>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif
/* AVX2 blocks where the compiler can target them and the CPU has them
 * (csv_reader_init_padded asks); SSE2 (x86-64's baseline) or SWAR else. */
#if defined(__x86_64__) && defined(__GNUC__)
#include <immintrin.h>
#define CSV_WIDE 1
#else
#define CSV_WIDE 0
#endif

void csv_record_free(csv_record *rec)
{
    free(rec->fields);
    free(rec->spans);
    rec->fields = NULL;
    rec->spans = NULL;
    rec->nfields = rec->cap = 0;
}

/* Room for one more field (in fields and in spans); 0, or -1 when out of
 * memory. */
static __attribute__((noinline)) int grow(csv_record *rec)
{
    size_t cap = rec->cap ? rec->cap * 2 : 16;
    csv_field *f = realloc(rec->fields, cap * sizeof *f);
    if (f) rec->fields = f;
    csv_span *s = realloc(rec->spans, cap * sizeof *s);
    if (s) rec->spans = s;
    if (!f || !s) return -1;
    rec->cap = cap;
    return 0;
}

/* Stores field n of the current record, growing the buffer first when full. */
#define STORE_FIELD(n, p, l)                                                                   \
    do {                                                                                       \
        if ((n) >= cap) {                                                                      \
            if (grow(rec) != 0) return CSV_NOMEM;                                              \
            fields = rec->fields;                                                              \
            cap = rec->cap;                                                                    \
        }                                                                                      \
        fields[n].ptr = (p);                                                                   \
        fields[n].len = (l);                                                                   \
    } while (0)

/* The first byte at or after p that is the delimiter or '\n', or end.  Eight
 * bytes at a time: a byte b of word w equals c exactly when byte b of
 * w ^ (c * 0x01..01) is zero, and the lowest set bit of
 * (v - 0x01..01) & ~v & 0x80..80 marks the lowest zero byte of v (higher
 * bits may be false positives, the lowest never is). */
static inline char *field_end(char *p, const char *end, char delim)
{
    const uint64_t ones = 0x0101010101010101ull, highs = 0x8080808080808080ull;
    const uint64_t d = ones * (unsigned char)delim, nl = ones * (unsigned char)'\n';
    while (end - p >= 8) {
        uint64_t w;
        memcpy(&w, p, 8);
        uint64_t a = w ^ d, b = w ^ nl;
        uint64_t hit = ((a - ones) & ~a & highs) | ((b - ones) & ~b & highs);
        if (hit) return p + (__builtin_ctzll(hit) >> 3);
        p += 8;
    }
    while (p < end && *p != delim && *p != '\n') p++;
    return p;
}

void csv_reader_init(csv_reader *r, char *data, size_t len, char delim)
{
    r->pos = data;
    r->end = data + len;
    r->delim = delim;
    r->lines = 0;
    r->record_line = 0;
    r->record_start = data;
    r->record_end = data;
    r->padded = 0;
    r->wide = 0;
    r->rewrites = 0;
    r->mask_base = data;
    r->mask_bits = 0;
}

/* Parses a quoted field starting at p (just after the opening quote).
 * Returns the byte after the field's last character, or NULL if the quote
 * is not closed before end.  *flen receives the unescaped length; newlines
 * inside the quotes are added to *lines. */
static __attribute__((noinline)) char *quoted(char *p, char *end, char delim, uint32_t *flen,
                                              uint64_t *lines)
{
    char *out = p, *start = p;
    for (;;) {
        char *q = memchr(p, '"', (size_t)(end - p));
        if (!q) return NULL;
        size_t run = (size_t)(q - p);
        for (char *s = p; s < q; s++) *lines += (*s == '\n');
        if (out != p) memmove(out, p, run);
        out += run;
        p = q + 1;
        if (p < end && *p == '"') { /* doubled quote */
            *out++ = '"';
            p++;
            continue;
        }
        break;
    }
    /* Lenient: anything up to the delimiter after the closing quote is kept. */
    char *after = out;
    while (p < end && *p != delim && *p != '\n') {
        if (*p == '\r' && p + 1 < end && p[1] == '\n') break;
        *out++ = *p++;
    }
    if (p == end && out > after && out[-1] == '\r') out--; /* CR of a CRLF cut by the end */
    *flen = (uint32_t)(out - start);
    return p;
}

/* Skips blank lines (nothing but a line end) and marks where the next
 * record starts; returns it, or NULL at the end of the chunk. */
static char *record_begin(csv_reader *r)
{
    char *p = r->pos, *end = r->end;
    for (;;) {
        if (p >= end) { r->pos = p; return NULL; }
        if (*p == '\n') { p++; r->lines++; continue; }
        if (*p == '\r' && p + 1 < end && p[1] == '\n') { p += 2; r->lines++; continue; }
        break;
    }
    r->record_line = r->lines;
    r->record_start = p;
    return p;
}

/* ---- the padded reader ------------------------------------------------------
 *
 * It looks at the data 64 bytes at a time: block_mask gives a bit for each
 * delimiter, '\n' and '"' of a block (its marks), and the reader takes the
 * marks in order, so a field costs a few instructions whatever its length
 * and no byte between marks is looked at.  A delimiter mark ends a field, a
 * newline mark ends a record, and a quote mark opens a quoted field when it
 * is the field's first byte and is data otherwise (the quote rule of csv.h).
 * Inside quotes the marks are walked to the next quote: when the field is
 * plain (no doubled quote, nothing after the closing quote) it is taken
 * where it lies; otherwise quoted() reads it from its start, as the plain
 * reader does, and the marks resume after it.
 *
 * The reader keeps its block between calls (mask_base, and in mask_bits the
 * marks at or after pos that are not yet passed), so consecutive records
 * share a block. */

/* Bit i set: byte b[i] is the delimiter, '\n' or '"' (i < 64). */
static inline uint64_t block_mask(const char *b, char delim)
{
#if defined(__SSE2__)
    const __m128i d = _mm_set1_epi8(delim), nl = _mm_set1_epi8('\n'), q = _mm_set1_epi8('"');
    uint64_t m = 0;
    for (int k = 0; k < 4; k++) {
        __m128i v = _mm_loadu_si128((const __m128i *)(const void *)(b + 16 * k));
        __m128i hit = _mm_or_si128(_mm_or_si128(_mm_cmpeq_epi8(v, d), _mm_cmpeq_epi8(v, nl)),
                                   _mm_cmpeq_epi8(v, q));
        m |= (uint64_t)(uint16_t)_mm_movemask_epi8(hit) << (16 * k);
    }
    return m;
#else
    /* Eight bytes at a time: a byte of v is zero exactly when the high bit
     * of ((v & 0x7f..) + 0x7f..) | v is clear; the flags are then packed
     * into eight bits by a multiply. */
    const uint64_t ones = 0x0101010101010101ull, low7 = 0x7F7F7F7F7F7F7F7Full;
    const uint64_t cd = ones * (unsigned char)delim, cn = ones * '\n', cq = ones * '"';
    uint64_t m = 0;
    for (int k = 0; k < 8; k++) {
        uint64_t w;
        memcpy(&w, b + 8 * k, 8);
        uint64_t hit = 0;
        const uint64_t c[3] = {w ^ cd, w ^ cn, w ^ cq};
        for (int j = 0; j < 3; j++) hit |= ~(((c[j] & low7) + low7) | c[j]) & ~low7;
        m |= (((hit >> 7) * 0x0102040810204080ull) >> 56) << (8 * k);
    }
    return m;
#endif
}

#if CSV_WIDE
/* block_mask 32 bytes at a time (AVX2): the same bits. */
static inline __attribute__((target("avx2"))) uint64_t block_mask_wide(const char *b, char delim)
{
    const __m256i d = _mm256_set1_epi8(delim), nl = _mm256_set1_epi8('\n'),
                  q = _mm256_set1_epi8('"');
    uint64_t m = 0;
    for (int k = 0; k < 2; k++) {
        __m256i v = _mm256_loadu_si256((const __m256i *)(const void *)(b + 32 * k));
        __m256i hit = _mm256_or_si256(
            _mm256_or_si256(_mm256_cmpeq_epi8(v, d), _mm256_cmpeq_epi8(v, nl)),
            _mm256_cmpeq_epi8(v, q));
        m |= (uint64_t)(uint32_t)_mm256_movemask_epi8(hit) << (32 * k);
    }
    return m;
}
#endif

/* The current block and its marks not yet passed. */
typedef struct {
    const char *base; /* the block's first byte (never past end) */
    uint64_t bits;    /* bit i: base[i] is a mark at or after the reading position */
    int wide;         /* blocks are read with block_mask_wide: a constant where the marks
                         are walked (row_fields, row_fields_wide) */
} marks;

/* The marks of the block at b (b < end); none at or past end. */
static inline uint64_t marks_at(const marks *m, const char *b, const char *end, char delim)
{
    size_t left = (size_t)(end - b);
#if CSV_WIDE
    uint64_t bits = m->wide ? block_mask_wide(b, delim) : block_mask(b, delim);
#else
    (void)m;
    uint64_t bits = block_mask(b, delim);
#endif
    return left >= 64 ? bits : bits & ((1ull << left) - 1);
}

/* Moves the reading position to p (at or after every mark passed).  Past
 * the block, the block becomes the empty one just before p, so that the
 * next marks_refill loads the block at p (one place loads blocks). */
static inline void marks_skip_to(marks *m, const char *p)
{
    size_t off = (size_t)(p - m->base);
    if (off < 64) {
        m->bits &= ~0ull << off;
    } else {
        m->base = p - 64;
        m->bits = 0;
    }
}

/* The current block has no mark left: the next block that has one.
 * Returns 0 when the data ends first. */
static inline int marks_refill(marks *m, const char *end, char delim)
{
    do {
        if (end - m->base <= 64) return 0;
        m->base += 64;
        m->bits = marks_at(m, m->base, end, delim);
    } while (!m->bits);
    return 1;
}

/* Whether a mark is left before end (moving to the block that has it). */
static inline int marks_more(marks *m, const char *end, char delim)
{
    return m->bits || marks_refill(m, end, delim);
}

/* Takes the next mark (marks_more said there is one). */
static inline const char *marks_next(marks *m)
{
    const char *s = m->base + (unsigned)__builtin_ctzll(m->bits);
    m->bits &= m->bits - 1;
    return s;
}

/* A quoted field whose opening quote was the last mark taken, read in place when it is
 * plain: the closing quote, found among the marks, is followed by the
 * delimiter, a line end or the data's end, and no doubled quote comes
 * before it.  Returns that closing quote, with the newlines inside in *nl,
 * or NULL when the field is not plain or not closed (the marks are then
 * partly passed: the caller resets them). */
static inline const char *plain_quoted(marks *m, const char *end, char delim, uint64_t *nl)
{
    uint64_t n = 0;
    const char *q;
    for (;;) {
        if (!marks_more(m, end, delim)) return NULL;
        q = marks_next(m);
        if (*q == '"') break;
        n += *q == '\n';
    }
    const char *a = q + 1;
    if (a < end && *a != delim && *a != '\n' && !(*a == '\r' && a + 1 < end && a[1] == '\n'))
        return NULL; /* a doubled quote, or text after the closing quote */
    *nl = n;
    return q;
}

/* The fields of the record that begins at f: the first `width` to dst,
 * dst + stride, ... with offsets from base, the rest counted (rec NULL) or
 * kept in rec->spans, grown as needed (rec: dst is rec->spans, stride 1).
 * Without rec, fields the record lacks get empty spans.  Returns CSV_RECORD
 * with the field count in *nfields and the record's end (after its line end)
 * in *after, or CSV_UNTERMINATED (*after: end) or CSV_NOMEM; newlines go to
 * r->lines.  Inlined into the two functions below, with rec a constant in
 * each: a record's loop then has only its own few values to keep in
 * registers. */
static inline __attribute__((always_inline)) csv_status
fields_of(csv_reader *r, marks *mk, char *f, const char *base, csv_span *dst, size_t stride,
          size_t width, csv_record *rec, size_t *nfields, char **after, int wide)
{
    const char delim = r->delim;
    char *const end = r->end;
    marks m = *mk;
    m.wide = wide;
    size_t nf = 0;
    csv_status st = CSV_RECORD;
    const char *s;
/* Keeps a field: the first `width` in the row, the rest only counted
 * (rows) or in a grown buffer (rec). */
#define KEEP(from, n)                                                                          \
    do {                                                                                       \
        if (nf >= width && rec) {                                                              \
            if (grow(rec) != 0) { st = CSV_NOMEM; goto done; }                                 \
            dst = rec->spans + nf;                                                             \
            width = rec->cap;                                                                  \
        }                                                                                      \
        if (__builtin_expect(nf < width, 1)) {                                                 \
            dst->off = (uint32_t)((from) - base);                                              \
            dst->len = (uint32_t)(n);                                                          \
            dst += stride;                                                                     \
        }                                                                                      \
        nf++;                                                                                  \
    } while (0)
    for (;;) {
        if (!marks_more(&m, end, delim)) { s = end; goto last_field; }
        s = marks_next(&m);
        if (__builtin_expect(*s == delim, 1)) { /* the common case */
            KEEP(f, s - f);
            f = (char *)s + 1;
            continue;
        }
        if (*s == '\n') goto last_field;
        if (s != f) continue; /* a quote inside an unquoted field: data */
        uint64_t nl;
        const char *q = plain_quoted(&m, end, delim, &nl);
        if (q) {
            KEEP(f + 1, q - f - 1);
            r->lines += nl;
            s = q + 1;
        } else { /* doubled quotes, text after the closing quote, or no closing quote */
            uint32_t flen;
            char *t = quoted(f + 1, end, delim, &flen, &r->lines);
            if (!t) { s = end; st = CSV_UNTERMINATED; goto done; }
            r->rewrites++;
            KEEP(f + 1, flen);
            s = t;
        }
        /* After a quoted field: the delimiter, or the line end ("\r\n" after
         * a closing quote: the '\r' is no text), or the end. */
        if (s < end && *s == delim) {
            f = (char *)s + 1;
            marks_skip_to(&m, f);
            continue;
        }
        if (s < end && *s == '\r') s++;
        if (s < end) { s++; r->lines++; }
        marks_skip_to(&m, s);
        goto record_done;
    }
last_field:
    /* s is the record's '\n' (its mark passed) or end; the last field runs
     * from f to it, a '\r' just before it dropped. */
    KEEP(f, s - f - (s > f && s[-1] == '\r'));
    if (s < end) { s++; r->lines++; }
record_done:
#undef KEEP
    for (size_t k = nf; k < width && !rec; k++) { /* fields the record lacks */
        dst->off = dst->len = 0;
        dst += stride;
    }
done:
    *mk = m;
    *nfields = nf;
    *after = (char *)s;
    return st;
}

static __attribute__((noinline)) csv_status
row_fields(csv_reader *r, marks *mk, char *f, const char *base, csv_span *dst, size_t stride,
           size_t width, size_t *nfields, char **after)
{
    return fields_of(r, mk, f, base, dst, stride, width, NULL, nfields, after, 0);
}

#if CSV_WIDE
/* The same loop with AVX2 blocks, and BMI1's tzcnt and blsr for the marks
 * (every CPU with AVX2 has BMI1; both are asked for).  flatten:
 * block_mask_wide may only be inlined into a function compiled for AVX2, so
 * the helpers that call it are inlined here with it (quoted() stays a
 * call). */
static __attribute__((noinline, flatten, target("avx2,bmi"))) csv_status
row_fields_wide(csv_reader *r, marks *mk, char *f, const char *base, csv_span *dst,
                size_t stride, size_t width, size_t *nfields, char **after)
{
    return fields_of(r, mk, f, base, dst, stride, width, NULL, nfields, after, 1);
}
#else
#define row_fields_wide row_fields
#endif

static __attribute__((noinline)) csv_status
record_fields(csv_reader *r, marks *mk, char *f, csv_record *rec, size_t *nfields, char **after)
{
    return fields_of(r, mk, f, f, rec->spans, 1, rec->cap, rec, nfields, after, 0);
}

/* The padded reader's loop over records, for csv_next_rows and (rec not
 * NULL: one record into rec->spans, from its start) for csv_next. */
static inline __attribute__((always_inline)) csv_status
padded_rows(csv_reader *r, csv_rows *out, csv_record *rec)
{
    char *const end = r->end;
    char *p = r->pos;
    marks m = {r->mask_base, r->mask_bits, 0};
    csv_status st = CSV_RECORD;
    marks_skip_to(&m, p);
    while (out->rows < out->max_rows) {
        /* Blank lines (nothing but a line end) are no records. */
        char *blank = p;
        while (p < end && (*p == '\n' || (*p == '\r' && p + 1 < end && p[1] == '\n'))) {
            p += *p == '\n' ? 1 : 2;
            r->lines++;
        }
        if (p >= end) { st = CSV_END; break; }
        if (p != blank) marks_skip_to(&m, p);
        r->record_start = p;
        r->record_line = r->lines;
        if (!rec && (size_t)(p - out->base) >= out->stop) { st = CSV_STOP; break; }
        size_t nf;
        char *after;
        const uint64_t rewrites = r->rewrites;
        if (rec)
            st = record_fields(r, &m, p, rec, &nf, &after);
        else if (r->wide)
            st = row_fields_wide(r, &m, p, out->base, out->cells + out->rows, out->stride,
                                 out->width, &nf, &after);
        else
            st = row_fields(r, &m, p, out->base, out->cells + out->rows, out->stride,
                            out->width, &nf, &after);
        p = after;
        if (st != CSV_RECORD) break;
        r->record_end = p;
        if ((size_t)(p - r->record_start) > out->max_record_bytes) { st = CSV_TOO_LONG; break; }
        out->nfields[out->rows] = (uint32_t)nf;
        out->line[out->rows] = r->record_line + 1;
        if (out->records) {
            out->records[out->rows].off = (uint32_t)(r->record_start - out->base);
            out->records[out->rows].len = (uint32_t)(p - r->record_start);
            out->rewritten[out->rows] = r->rewrites != rewrites;
        }
        out->rows++;
    }
    r->pos = p;
    r->mask_base = m.base;
    r->mask_bits = m.bits;
    return st;
}

void csv_reader_init_padded(csv_reader *r, char *data, size_t len, char delim)
{
    csv_reader_init(r, data, len, delim);
    r->padded = 1;
    const marks m = {data, 0, 0};
    r->mask_bits = len ? marks_at(&m, data, r->end, delim) : 0;
#if CSV_WIDE
    r->wide = __builtin_cpu_supports("avx2") && __builtin_cpu_supports("bmi");
#endif
}

csv_status csv_next_rows(csv_reader *r, csv_rows *out)
{
    return padded_rows(r, out, NULL);
}

/* csv_next for a padded reader: one row of spans from the record's start,
 * made fields. */
static csv_status next_padded(csv_reader *r, csv_record *rec)
{
    uint32_t nfields = 0;
    uint64_t line;
    csv_rows one = {.cells = rec->spans, .stride = 1, .width = rec->cap, .max_rows = 1,
                    .nfields = &nfields, .line = &line, .stop = SIZE_MAX,
                    .max_record_bytes = SIZE_MAX};
    csv_status st = padded_rows(r, &one, rec);
    if (st != CSV_RECORD) return st;
    for (uint32_t i = 0; i < nfields; i++)
        rec->fields[i] = (csv_field){r->record_start + rec->spans[i].off, rec->spans[i].len};
    rec->nfields = nfields;
    return CSV_RECORD;
}

csv_status csv_next(csv_reader *r, csv_record *rec)
{
    if (r->padded) return next_padded(r, rec);
    char *p = record_begin(r), *end = r->end;
    const char delim = r->delim;
    csv_field *fields = rec->fields;
    size_t cap = rec->cap;
    if (!p) return CSV_END;
    size_t n = 0;
    for (;;) {
        const char *fstart;
        uint32_t flen;
        if (p < end && *p == '"') {
            fstart = p + 1;
            char *after = quoted(p + 1, end, delim, &flen, &r->lines);
            if (!after) { r->pos = end; return CSV_UNTERMINATED; }
            p = after;
        } else {
            char *s = p;
            p = field_end(p, end, delim);
            fstart = s;
            flen = (uint32_t)(p - s);
            if (flen && s[flen - 1] == '\r' && (p == end || *p == '\n')) flen--;
        }
        STORE_FIELD(n, fstart, flen);
        n++;
        if (p >= end) break;
        if (*p == delim) { p++; continue; }
        if (*p == '\r') p++; /* "\r\n" after a closing quote */
        if (p < end) { p++; r->lines++; }
        break;
    }
    r->pos = r->record_end = p;
    rec->nfields = n;
    return CSV_RECORD;
}

csv_status csv_next_raw(csv_reader *r, csv_record *rec, const char **eol, size_t *eol_len)
{
    char *p = record_begin(r), *end = r->end;
    const char delim = r->delim;
    csv_field *fields = rec->fields;
    size_t cap = rec->cap;
    if (!p) return CSV_END;
    size_t n = 0;
    for (;;) {
        char *start = p;
        if (p < end && *p == '"') {
            p++;
            for (;;) {
                char *q = memchr(p, '"', (size_t)(end - p));
                if (!q) { r->pos = end; return CSV_UNTERMINATED; }
                for (char *c = p; c < q; c++) r->lines += *c == '\n';
                p = q + 1;
                if (p < end && *p == '"') { p++; continue; }
                break;
            }
        }
        p = field_end(p, end, delim);
        char *stop = p;
        if (stop > start && stop[-1] == '\r' && (p == end || *p == '\n')) stop--;
        STORE_FIELD(n, start, (uint32_t)(stop - start));
        n++;
        if (p < end && *p == delim) { p++; continue; }
        *eol = stop;
        if (p < end) { p++; r->lines++; }
        *eol_len = (size_t)(p - stop);
        break;
    }
    r->pos = r->record_end = p;
    rec->nfields = n;
    return CSV_RECORD;
}

void csv_quote_init(csv_quote_state *q, char delim)
{
    q->mode = CSV_AT_FIELD;
    q->delim = delim;
}

/* Bit i set: byte b[i] is c (i < 64). */
static inline uint64_t byte_mask(const char *b, char c)
{
#if defined(__SSE2__)
    const __m128i x = _mm_set1_epi8(c);
    uint64_t m = 0;
    for (int k = 0; k < 4; k++) {
        __m128i v = _mm_loadu_si128((const __m128i *)(const void *)(b + 16 * k));
        m |= (uint64_t)(uint16_t)_mm_movemask_epi8(_mm_cmpeq_epi8(v, x)) << (16 * k);
    }
    return m;
#else
    const uint64_t ones = 0x0101010101010101ull, low7 = 0x7F7F7F7F7F7F7F7Full;
    uint64_t m = 0;
    for (int k = 0; k < 8; k++) { /* as block_mask does */
        uint64_t w;
        memcpy(&w, b + 8 * k, 8);
        w ^= ones * (unsigned char)c;
        uint64_t hit = ~(((w & low7) + low7) | w) & ~low7;
        m |= (((hit >> 7) * 0x0102040810204080ull) >> 56) << (8 * k);
    }
    return m;
#endif
}

/* The quote rule over raw bytes, 64 at a time: each block gives the bits
 * of its quotes (and, looking for the first record end, of its newlines),
 * and only those positions are looked at.  Outside quotes, a quote opens
 * quotes when the byte before it is the delimiter or '\n' (at data[0]: when
 * the state says a field starts); inside, the next quote either doubles (the
 * pair is passed) or closes.  Text without quotes is passed with memchr.
 *
 * For the last record end (the chunker's question) newlines are not looked
 * at on the way: the stretches outside quotes are noted (the last
 * QUOTE_STRETCHES of them), and the newest that holds a newline gives it,
 * searched backwards with memrchr (which stops within a line or so).  Only
 * when none of those holds one is the data read again with its newlines.
 *
 * last: 0 for the first record end; 1 for the last; 2 for the last, reading
 * every block's newlines (the fallback). */
#define QUOTE_STRETCHES 32
static size_t quote_scan_full(csv_quote_state *q, const char *data, size_t len);

/* Inlined into three functions below with last a constant. */
static inline __attribute__((always_inline)) size_t
quote_scan(csv_quote_state *q, const char *data, size_t len, int last)
{
    const char delim = q->delim;
    const csv_quote_mode mode = q->mode;
    size_t best = len + 1;
    size_t pos = 0;   /* the first byte not yet looked at */
    size_t plain = 0; /* outside quotes: where the stretch began */
    size_t stretch[QUOTE_STRETCHES][2], nstretch = 0; /* [begin, end) of the newest, in a ring */
    int inq = mode == CSV_IN_QUOTES, seen = 0; /* seen: a quote at len-1 may close */
    if (mode == CSV_QUOTE_SEEN && len) {
        inq = data[0] == '"'; /* a doubled quote: still inside; else closed before data[0] */
        pos = plain = inq;
    }
    char tail[64];
    for (size_t at = 0; at < len; at += 64) {
        const char *b = data + at;
        const size_t n = len - at < 64 ? len - at : 64;
        if (n < 64) { /* the last bytes: nothing past len is read */
            memset(tail, 0, sizeof tail);
            memcpy(tail, b, n);
            b = tail;
        }
        if (pos >= at + n) continue; /* a doubled quote's second half ended the block */
        const uint64_t quotes = byte_mask(b, '"');
        if (!inq && last == 1 && !(quotes >> (pos - at))) {
            /* Nothing but text up to the next quote. */
            const char *nq = at + n == len ? NULL : memchr(b + 64, '"', len - at - 64);
            if (!nq) break;
            pos = (size_t)(nq - data);
            at = pos - 64; /* the next block begins at the quote */
            continue;
        }
        const uint64_t newlines = last == 1 ? 0 : byte_mask(b, '\n');
        uint64_t outside = 0; /* last == 2: the block's newlines outside quotes */
        while (pos < at + n) {
            uint64_t qb = quotes & (~0ull << (pos - at)); /* quotes at or after pos */
            if (inq) {
                if (!qb) break; /* the rest of the block is quoted */
                size_t i = at + (size_t)__builtin_ctzll(qb);
                if (i + 1 == len) { seen = 1; pos = len; break; } /* closing, unless more follows */
                if (data[i + 1] == '"') { pos = i + 2; continue; } /* doubled: passed as a pair */
                inq = 0;
                pos = plain = i + 1;
                continue;
            }
            /* Outside quotes up to the next quote: its newlines end records. */
            uint64_t nb = newlines & (~0ull << (pos - at)) & (qb ? (qb & -qb) - 1 : ~0ull);
            if (!last && nb) {
                q->mode = CSV_AT_FIELD;
                return at + (size_t)__builtin_ctzll(nb) + 1;
            }
            outside |= nb;
            if (!qb) break;
            size_t i = at + (size_t)__builtin_ctzll(qb);
            pos = i + 1;
            if (i == 0 ? mode == CSV_AT_FIELD : data[i - 1] == delim || data[i - 1] == '\n') {
                stretch[nstretch % QUOTE_STRETCHES][0] = plain;
                stretch[nstretch % QUOTE_STRETCHES][1] = i;
                nstretch++;
                inq = 1;
            }
        }
        if (pos < at + n) pos = at + n;
        if (outside) best = at + (size_t)(63 - __builtin_clzll(outside)) + 1;
    }
    if (seen) q->mode = CSV_QUOTE_SEEN;
    else if (inq) q->mode = CSV_IN_QUOTES;
    else if (len) q->mode = data[len - 1] == delim || data[len - 1] == '\n' ? CSV_AT_FIELD
                                                                           : CSV_IN_FIELD;
    else q->mode = mode;
    if (last != 1) return best;
    /* The newest stretch outside quotes with a newline: the data's end first. */
    if (!inq && !seen && plain < len) {
        const char *nl = memrchr(data + plain, '\n', len - plain);
        if (nl) return (size_t)(nl - data) + 1;
    }
    for (size_t k = 0; k < nstretch && k < QUOTE_STRETCHES; k++) {
        const size_t *s = stretch[(nstretch - 1 - k) % QUOTE_STRETCHES];
        const char *nl = s[1] > s[0] ? memrchr(data + s[0], '\n', s[1] - s[0]) : NULL;
        if (nl) return (size_t)(nl - data) + 1;
    }
    if (nstretch <= QUOTE_STRETCHES) return len + 1; /* every stretch was searched */
    csv_quote_state again = {mode, delim};
    return quote_scan_full(&again, data, len);
}

static __attribute__((noinline)) size_t quote_scan_full(csv_quote_state *q, const char *data,
                                                        size_t len)
{
    return quote_scan(q, data, len, 2);
}

size_t csv_quote_scan(csv_quote_state *q, const char *data, size_t len, int first)
{
    return first ? quote_scan(q, data, len, 0) : quote_scan(q, data, len, 1);
}

/* Field counts under the quote rule with delimiter d, for the first 50
 * lines of the sample (a last line without its newline counts only when it
 * is the only one).  Returns how many lines were counted. */
static int count_fields(const char *data, size_t len, char d, int counts[50])
{
    int lines = 0, fields = 1;
    csv_quote_mode mode = CSV_AT_FIELD;
    for (size_t i = 0; i < len && lines < 50; i++) {
        char ch = data[i];
        switch (mode) {
        case CSV_IN_QUOTES: if (ch == '"') mode = CSV_QUOTE_SEEN; continue;
        case CSV_QUOTE_SEEN:
            if (ch == '"') { mode = CSV_IN_QUOTES; continue; }
            break;
        case CSV_AT_FIELD:
            if (ch == '"') { mode = CSV_IN_QUOTES; continue; }
            break;
        default: break;
        }
        mode = CSV_IN_FIELD;
        if (ch == d) { fields++; mode = CSV_AT_FIELD; }
        else if (ch == '\n') { counts[lines++] = fields; fields = 1; mode = CSV_AT_FIELD; }
    }
    if (lines == 0 && fields > 1) counts[lines++] = fields;
    return lines;
}

char csv_detect_delimiter(const char *data, size_t len)
{
    static const char cands[] = {',', '\t', ';', '|'};
    int best = 0, best_score = -1, counts[50];
    for (int c = 0; c < 4; c++) {
        int lines = count_fields(data, len, cands[c], counts);
        if (lines == 0) continue;
        /* Score: lines agreeing with the first line's count, if it is > 1. */
        int score = 0;
        if (counts[0] > 1)
            for (int i = 0; i < lines; i++) score += counts[i] == counts[0];
        if (score > best_score) { best_score = score; best = c; }
    }
    if (best_score > 0) return cands[best];
    /* A space only when every line counted (a CR before the newline is the
     * last field's) has the same number of fields, more than one: prose in
     * a one-column file rarely has the same number of words on every line,
     * and a file aligned with runs of spaces gives uneven counts. */
    int lines = count_fields(data, len, ' ', counts), same = lines > 0 && counts[0] > 1;
    for (int i = 1; same && i < lines; i++) same = counts[i] == counts[0];
    return same ? ' ' : ',';
}

size_t csv_bom_length(const char *data, size_t len)
{
    return len >= 3 && (unsigned char)data[0] == 0xEF && (unsigned char)data[1] == 0xBB &&
                   (unsigned char)data[2] == 0xBF
               ? 3
               : 0;
}
