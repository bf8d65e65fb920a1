/* csv: see csv.h.  The unquoted path is a tight byte loop over a class
 * table (delimiter, newline, other); quoted fields are copied down in place
 * only when they contain a doubled quote. */
#include "io/csv.h"

#include <stdlib.h>
#include <string.h>
#if defined(__SSE2__)
#include <emmintrin.h>
#endif

void csv_record_free(csv_record *rec)
{
    free(rec->fields);
    rec->fields = NULL;
    rec->nfields = rec->cap = 0;
}

/* Room for one more field; 0, or -1 when out of memory. */
static __attribute__((noinline)) int grow(csv_record *rec)
{
    size_t cap = rec->cap ? rec->cap * 2 : 16;
    csv_field *f = realloc(rec->fields, cap * sizeof *f);
    if (!f) return -1;
    rec->fields = f;
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
    r->padded = 0;
    r->mask_base = NULL;
    r->mask_bits = 0;
}

void csv_reader_init_padded(csv_reader *r, char *data, size_t len, char delim)
{
    csv_reader_init(r, data, len, delim);
    r->padded = 1;
}

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

/* The first delimiter, newline or quote at or after p, or end (padded
 * reader).  The block mask is cached: consecutive fields of a record reuse
 * it, and a position outside the cached block loads a new one. */
static inline char *next_mark(csv_reader *r, char *p)
{
    for (;;) {
        size_t off = (size_t)(p - r->mask_base);
        if (off >= 64) {
            if (p >= r->end) return r->end;
            size_t left = (size_t)(r->end - p);
            r->mask_base = p;
            r->mask_bits = block_mask(p, r->delim) & (left >= 64 ? ~0ull : (1ull << left) - 1);
            off = 0;
        }
        uint64_t m = r->mask_bits >> off;
        if (m) return p + __builtin_ctzll(m);
        p = (char *)r->mask_base + 64;
        if (p >= r->end) return r->end;
    }
}

/* Parses a quoted field starting at p (just after the opening quote).
 * Returns the byte after the field's last character, or NULL if the quote
 * is not closed before end.  *flen receives the unescaped length. */
static char *quoted(csv_reader *r, char *p, char *end, char delim, uint32_t *flen)
{
    char *out = p, *start = p;
    for (;;) {
        char *q = memchr(p, '"', (size_t)(end - p));
        if (!q) return NULL;
        size_t run = (size_t)(q - p);
        for (char *s = p; s < q; s++) r->lines += (*s == '\n');
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

/* csv_next for a padded reader: the same record, with field ends found
 * through the block mask. */
static csv_status next_padded(csv_reader *r, csv_record *rec)
{
    char *p = record_begin(r), *end = r->end;
    const char delim = r->delim;
    csv_field *fields = rec->fields;
    size_t cap = rec->cap;
    if (!p) return CSV_END;
    size_t n = 0;
    for (;;) {
        char *s;
        if (*p == '"' && p < end) {
            uint32_t flen;
            s = quoted(r, p + 1, end, delim, &flen);
            if (!s) { r->pos = end; return CSV_UNTERMINATED; }
            STORE_FIELD(n, p + 1, flen);
        } else {
            s = next_mark(r, p);
            if (s < end && *s == delim) { /* the common case */
                STORE_FIELD(n, p, (uint32_t)(s - p));
                n++;
                p = s + 1;
                continue;
            }
            while (s < end && *s == '"') s = next_mark(r, s + 1); /* a quote inside: data */
            uint32_t flen = (uint32_t)(s - p);
            if (flen && p[flen - 1] == '\r' && (s == end || *s == '\n')) flen--;
            STORE_FIELD(n, p, flen);
        }
        n++;
        if (s >= end) { p = end; break; }
        if (*s == delim) { p = s + 1; continue; }
        if (*s == '\r') s++; /* "\r\n" after a closing quote */
        if (s < end) { s++; r->lines++; }
        p = s;
        break;
    }
    r->pos = p;
    rec->nfields = n;
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
            char *after = quoted(r, p + 1, end, delim, &flen);
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
    r->pos = p;
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
    r->pos = p;
    rec->nfields = n;
    return CSV_RECORD;
}

size_t csv_unquote(const char *raw, size_t len, char *out)
{
    if (len == 0 || raw[0] != '"') {
        memcpy(out, raw, len);
        return len;
    }
    size_t i = 1, o = 0;
    while (i < len) {
        if (raw[i] != '"') { out[o++] = raw[i++]; continue; }
        if (i + 1 < len && raw[i + 1] == '"') { out[o++] = '"'; i += 2; continue; }
        i++; /* the closing quote: the rest is kept as it is */
        memcpy(out + o, raw + i, len - i);
        return o + (len - i);
    }
    return o;
}

void csv_quote_init(csv_quote_state *q, char delim)
{
    q->mode = CSV_AT_FIELD;
    q->delim = delim;
}

size_t csv_quote_scan(csv_quote_state *q, const char *data, size_t len, int first)
{
    const char delim = q->delim;
    csv_quote_mode mode = q->mode;
    size_t best = len + 1, pos = 0;
    while (pos < len) {
        if (mode == CSV_IN_QUOTES) {
            const char *e = memchr(data + pos, '"', len - pos);
            if (!e) { pos = len; break; }
            pos = (size_t)(e - data) + 1;
            mode = CSV_QUOTE_SEEN;
            continue;
        }
        if (mode == CSV_QUOTE_SEEN) {
            if (data[pos] == '"') { mode = CSV_IN_QUOTES; pos++; continue; }
            mode = CSV_IN_FIELD; /* closed: the byte at pos is outside quotes */
        }
        /* Outside quotes: newlines end records; a quote opens quotes only as
         * the first byte of a field. */
        const char *e = memchr(data + pos, '"', len - pos);
        size_t stop = e ? (size_t)(e - data) : len;
        if (stop > pos) {
            const char *nl = first ? memchr(data + pos, '\n', stop - pos)
                                   : memrchr(data + pos, '\n', stop - pos);
            if (nl) {
                best = (size_t)(nl - data) + 1;
                if (first) { q->mode = CSV_AT_FIELD; return best; }
            }
            char last = data[stop - 1];
            mode = last == delim || last == '\n' ? CSV_AT_FIELD : CSV_IN_FIELD;
        }
        if (!e) { pos = len; break; }
        mode = mode == CSV_AT_FIELD ? CSV_IN_QUOTES : CSV_IN_FIELD;
        pos = stop + 1;
    }
    q->mode = mode;
    return best;
}

char csv_detect_delimiter(const char *data, size_t len)
{
    static const char cands[] = {',', '\t', ';', '|'};
    int best = 0, best_score = -1;
    for (int c = 0; c < 4; c++) {
        /* Count fields per line under the quote rule for the first 50 lines. */
        int counts[50], lines = 0, fields = 1;
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
            if (ch == cands[c]) { fields++; mode = CSV_AT_FIELD; }
            else if (ch == '\n') { counts[lines++] = fields; fields = 1; mode = CSV_AT_FIELD; }
        }
        if (lines == 0 && fields > 1) counts[lines++] = fields;
        if (lines == 0) continue;
        /* Score: lines agreeing with the first line's count, if it is > 1. */
        int score = 0;
        if (counts[0] > 1)
            for (int i = 0; i < lines; i++) score += counts[i] == counts[0];
        if (score > best_score) { best_score = score; best = c; }
    }
    return best_score > 0 ? cands[best] : ',';
}

size_t csv_bom_length(const char *data, size_t len)
{
    return len >= 3 && (unsigned char)data[0] == 0xEF && (unsigned char)data[1] == 0xBB &&
                   (unsigned char)data[2] == 0xBF
               ? 3
               : 0;
}
