/* csv_text: the text of raw fields (csv_next_raw's), by the quote rule of
 * csv.h: csv_unquote, and csv_same_record, which tells a repeated header by
 * its field texts.  Split from csv.c, which holds the tokenizers. */
#include "io/csv.h"

#include <string.h>

/* The end of the raw field at p (a quoted one's closing quote passed, as
 * csv_next_raw reads it): at the delimiter, a LF or end; NULL when its quote
 * does not close. */
static const char *raw_field_end(const char *p, const char *end, char delim)
{
    if (p < end && *p == '"') {
        p++;
        for (;;) {
            const char *q = memchr(p, '"', (size_t)(end - p));
            if (!q) return NULL;
            p = q + 1;
            if (p < end && *p == '"') { p++; continue; }
            break;
        }
    }
    while (p < end && *p != delim && *p != '\n') p++; /* (csv.c's field_end, not hot here) */
    return p;
}

/* The text of a raw field, a byte at a time (csv_unquote's reading). */
typedef struct {
    const char *p, *end;
    int quoted; /* inside the opening quote still */
} unquoted_bytes;

static int next_text_byte(unquoted_bytes *u)
{
    while (u->p < u->end) {
        if (u->quoted && *u->p == '"') {
            if (u->p + 1 < u->end && u->p[1] == '"') { u->p += 2; return '"'; }
            u->p++;
            u->quoted = 0; /* the closing quote: the rest as it is */
            continue;
        }
        return (unsigned char)*u->p++;
    }
    return -1;
}

/* The text of the raw field f of n bytes, to be read a byte at a time. */
static unquoted_bytes unquoted(const char *f, size_t n)
{
    int q = n && *f == '"';
    return (unquoted_bytes){f + q, f + n, q};
}

static int same_text(const char *a, size_t alen, const char *b, size_t blen)
{
    unquoted_bytes x = unquoted(a, alen), y = unquoted(b, blen);
    for (;;) {
        int c = next_text_byte(&x);
        if (c != next_text_byte(&y)) return 0;
        if (c < 0) return 1;
    }
}

int csv_same_record(const char *head, size_t head_len, const char *p, const char *end,
                    char delim, size_t mark)
{
    const char *a = head, *aend = head + head_len;
    for (;;) {
        /* After a mark, the first field's bytes are not quoted to the
         * tokenizer: they run to the delimiter or the line end. */
        const char *ae = raw_field_end(a, aend, delim), *be = p;
        if (mark) {
            while (be < end && *be != delim && *be != '\n') be++;
            p += mark;
            mark = 0;
        } else {
            be = raw_field_end(p, end, delim);
        }
        if (!ae || !be) return 0;
        /* A CR before the line end (or the end) is the line end's. */
        const char *bstop = be;
        if (bstop > p && bstop[-1] == '\r' && (be == end || *be == '\n')) bstop--;
        const char *astop = ae;
        if (astop > a && astop[-1] == '\r' && ae == aend) astop--;
        if (!same_text(a, (size_t)(astop - a), p, (size_t)(bstop - p))) return 0;
        int a_more = ae < aend && *ae == delim, b_more = be < end && *be == delim;
        if (a_more != b_more) return 0;
        if (!a_more) return ae == aend && (be == end || *be == '\n');
        a = ae + 1;
        p = be + 1;
    }
}

size_t csv_unquote(const char *raw, size_t len, char *out)
{
    unquoted_bytes u = unquoted(raw, len);
    size_t o = 0;
    for (int c; (c = next_text_byte(&u)) >= 0;) out[o++] = (char)c;
    return o;
}
