/* html: the buffer and the escaping of user text (see html.h). */
#include "out/html.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void html_init(html_buf *b)
{
    b->data = NULL;
    b->len = b->cap = 0;
    b->failed = 0;
}

void html_free(html_buf *b)
{
    free(b->data);
    html_init(b);
}

static int reserve(html_buf *b, size_t n)
{
    if (b->failed) return -1;
    if (b->len + n <= b->cap) return 0;
    size_t cap = b->cap ? b->cap : 4096;
    while (cap < b->len + n) cap *= 2;
    char *d = realloc(b->data, cap);
    if (!d) {
        b->failed = 1;
        return -1;
    }
    b->data = d;
    b->cap = cap;
    return 0;
}

void html_raw_n(html_buf *b, const char *s, size_t n)
{
    if (reserve(b, n)) return;
    memcpy(b->data + b->len, s, n);
    b->len += n;
}

void html_raw(html_buf *b, const char *s) { html_raw_n(b, s, strlen(s)); }

static void vformat(html_buf *b, int escape, const char *fmt, va_list ap)
{
    char small[512];
    va_list again;
    va_copy(again, ap);
    int n = vsnprintf(small, sizeof small, fmt, ap);
    if (n < 0) { va_end(again); return; }
    if ((size_t)n < sizeof small) {
        if (escape) html_text_n(b, small, (size_t)n);
        else html_raw_n(b, small, (size_t)n);
    } else {
        char *big = malloc((size_t)n + 1);
        if (!big) b->failed = 1;
        else {
            vsnprintf(big, (size_t)n + 1, fmt, again);
            if (escape) html_text_n(b, big, (size_t)n);
            else html_raw_n(b, big, (size_t)n);
            free(big);
        }
    }
    va_end(again);
}

void html_printf(html_buf *b, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vformat(b, 0, fmt, ap);
    va_end(ap);
}

void html_textf(html_buf *b, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    vformat(b, 1, fmt, ap);
    va_end(ap);
}

/* 1 when the well-formed sequence at s (len bytes) is a character a page
 * shows as U+FFFD: DEL, the C1 controls, and the bidirectional embeddings,
 * overrides and isolates (U+202A..U+202E, U+2066..U+2069), which would let a
 * name turn the figures written after it right to left. */
static int hidden_char(const unsigned char *s, size_t len)
{
    if (len == 1) return s[0] == 0x7f;
    if (len == 2) return s[0] == 0xc2 && s[1] <= 0x9f;
    if (len == 3 && s[0] == 0xe2 && s[1] == 0x80) return s[2] >= 0xaa && s[2] <= 0xae;
    if (len == 3 && s[0] == 0xe2 && s[1] == 0x81) return s[2] >= 0xa6 && s[2] <= 0xa9;
    return 0;
}

/* Length of the well-formed UTF-8 sequence at s (n bytes left) that XML 1.0
 * allows, or 0. */
static size_t utf8_char(const unsigned char *s, size_t n)
{
    unsigned c = s[0];
    if (c < 0x80) return c >= 0x20 || c == '\t' || c == '\n' || c == '\r' ? 1 : 0;
    size_t len = c >= 0xc2 && c <= 0xdf ? 2 : c >= 0xe0 && c <= 0xef ? 3 : c >= 0xf0 && c <= 0xf4 ? 4 : 0;
    if (!len || len > n) return 0;
    for (size_t i = 1; i < len; i++)
        if ((s[i] & 0xc0) != 0x80) return 0;
    if (c == 0xe0 && s[1] < 0xa0) return 0;              /* overlong */
    if (c == 0xed && s[1] >= 0xa0) return 0;             /* surrogates */
    if (c == 0xef && s[1] == 0xbf && s[2] >= 0xbe) return 0; /* U+FFFE, U+FFFF */
    if (c == 0xf0 && s[1] < 0x90) return 0;              /* overlong */
    if (c == 0xf4 && s[1] >= 0x90) return 0;             /* past U+10FFFF */
    return len;
}

void html_text_n(html_buf *b, const char *s, size_t n)
{
    const unsigned char *u = (const unsigned char *)s;
    size_t i = 0;
    while (i < n) {
        const char *ref = NULL;
        switch (u[i]) {
        case '&': ref = "&amp;"; break;
        case '<': ref = "&lt;"; break;
        case '>': ref = "&gt;"; break;
        case '"': ref = "&quot;"; break;
        case '\'': ref = "&#39;"; break;
        default: break;
        }
        if (ref) {
            html_raw(b, ref);
            i++;
            continue;
        }
        size_t len = utf8_char(u + i, n - i);
        if (len && hidden_char(u + i, len)) { /* one U+FFFD for the whole character */
            html_raw(b, "\xef\xbf\xbd");
            i += len;
        } else if (len) {
            html_raw_n(b, s + i, len);
            i += len;
        } else {
            html_raw(b, "\xef\xbf\xbd");
            i++;
        }
    }
}

void html_text(html_buf *b, const char *s) { html_text_n(b, s, strlen(s)); }

void html_number(html_buf *b, double v)
{
    if (isnan(v)) { html_raw(b, "nan"); return; }
    if (isinf(v)) { html_raw(b, v > 0 ? "inf" : "-inf"); return; }
    char t[40];
    for (int prec = 15; prec <= 17; prec++) {
        snprintf(t, sizeof t, "%.*g", prec, v);
        if (strtod(t, NULL) == v) break;
    }
    html_raw(b, t);
}
