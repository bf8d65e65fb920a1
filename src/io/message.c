/* message: see message.h. */
#include "io/message.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define MESSAGE_GAP " ... "

/* A cut at or before at that does not split a UTF-8 character. */
static size_t char_start(const char *s, size_t at)
{
    while (at > 0 && ((unsigned char)s[at] & 0xC0) == 0x80) at--;
    return at;
}

size_t message_fit(char *dst, size_t n, const char *src, size_t len)
{
    if (!n) return 0;
    const size_t gap = sizeof MESSAGE_GAP - 1;
    if (len < n) {
        memmove(dst, src, len);
        dst[len] = '\0';
        return len;
    }
    if (n <= 4 * gap) { /* too small to cut in the middle: the head */
        size_t k = char_start(src, n - 1);
        memmove(dst, src, k);
        dst[k] = '\0';
        return k;
    }
    /* A quarter of the room for the head (the file's name begins it), the
     * rest for the tail (where the reason is). */
    size_t room = n - 1 - gap, head = char_start(src, room / 4);
    size_t tail_from = len - (room - room / 4);
    while (tail_from < len && ((unsigned char)src[tail_from] & 0xC0) == 0x80) tail_from++;
    size_t tail = len - tail_from;
    if (dst != src) {
        memcpy(dst, src, head);
    }
    memcpy(dst + head, MESSAGE_GAP, gap);
    memmove(dst + head + gap, src + tail_from, tail);
    dst[head + gap + tail] = '\0';
    return head + gap + tail;
}

size_t message_vprintf(char *dst, size_t n, const char *fmt, va_list ap)
{
    if (!n) return 0;
    va_list again;
    va_copy(again, ap);
    int len = vsnprintf(dst, n, fmt, ap);
    if (len < 0 || (size_t)len < n) {
        va_end(again);
        return len < 0 ? 0 : (size_t)len;
    }
    char *whole = malloc((size_t)len + 1);
    if (!whole) { /* the head alone, as snprintf left it */
        va_end(again);
        return n - 1;
    }
    vsnprintf(whole, (size_t)len + 1, fmt, again);
    va_end(again);
    size_t k = message_fit(dst, n, whole, (size_t)len);
    free(whole);
    return k;
}

size_t message_printf(char *dst, size_t n, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    size_t k = message_vprintf(dst, n, fmt, ap);
    va_end(ap);
    return k;
}
