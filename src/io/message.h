/* message: one-line error messages that keep their end when cut.
 *
 * A message names its file first and says what went wrong last
 * ("PATH: line 3: unterminated quote ..."); cut to its buffer by snprintf,
 * a long path pushed the reason out (a 1,500-byte path left nothing but the
 * path).  message_printf formats the whole message, and when it does not
 * fit, keeps its head and its tail around " ... ", cut between characters
 * (UTF-8), so that the reason survives any path.
 *
 *   message_printf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
 */
#ifndef SHEAF_MESSAGE_H
#define SHEAF_MESSAGE_H

#include <stdarg.h>
#include <stddef.h>

/* snprintf into dst (n > 0 bytes, NUL-terminated), cut in the middle when
 * long; returns the length written. */
size_t message_printf(char *dst, size_t n, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
size_t message_vprintf(char *dst, size_t n, const char *fmt, va_list ap)
    __attribute__((format(printf, 3, 0)));
/* src (len bytes) into dst, cut in the middle as message_printf cuts. */
size_t message_fit(char *dst, size_t n, const char *src, size_t len);

#endif
