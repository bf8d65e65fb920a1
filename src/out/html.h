/* html: a growing byte buffer for HTML and SVG text, with the escaping of
 * user data.
 *
 * Every text that comes from a summary (column names, class labels, top
 * values, source paths) goes through html_text, which writes &, <, >, " and '
 * as character references and replaces what XML 1.0 cannot hold (control
 * characters other than tab, newline and carriage return, and bytes that are
 * not well-formed UTF-8) by U+FFFD, so the result is text in an element or an
 * attribute value, never markup, in HTML and in XML alike.  DEL, the C1
 * controls and the bidirectional embeddings, overrides and isolates become
 * U+FFFD too: user text cannot turn the figures written after it right to
 * left.  Numbers and
 * markup the program writes itself go through html_raw and html_printf.
 *
 * Memory: a failed allocation sets `failed` and later writes do nothing, so
 * a caller checks once at the end.
 */
#ifndef SHEAF_HTML_H
#define SHEAF_HTML_H

#include <stddef.h>

typedef struct {
    char *data;   /* the bytes written (not terminated) */
    size_t len;   /* bytes in data */
    size_t cap;   /* bytes allocated */
    int failed;   /* an allocation failed: the content is incomplete */
} html_buf;

void html_init(html_buf *b);
void html_free(html_buf *b);
/* Appends markup written by the program (no escaping). */
void html_raw(html_buf *b, const char *s);
void html_raw_n(html_buf *b, const char *s, size_t n);
void html_printf(html_buf *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* Appends user text, escaped (see above). */
void html_text(html_buf *b, const char *s);
void html_text_n(html_buf *b, const char *s, size_t n);
/* html_text of a printf-formatted text. */
void html_textf(html_buf *b, const char *fmt, ...) __attribute__((format(printf, 2, 3)));
/* A number as text in the shortest form that reads back exactly ("nan" and
 * "inf" as they are): for data attributes that tests read back. */
void html_number(html_buf *b, double v);

#endif
