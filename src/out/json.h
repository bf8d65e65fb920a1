/* json: a streaming JSON writer (RFC 8259) with indentation.
 *
 * Keys and values are written in order; the writer inserts commas and
 * newlines.  Non-finite numbers are written as null (JSON has no NaN).
 */
#ifndef SHEAF_JSON_H
#define SHEAF_JSON_H

#include <stdint.h>
#include <stdio.h>

#define JSON_MAX_DEPTH 32

typedef struct {
    FILE *f;                        /* destination */
    int depth;                      /* open containers */
    int count[JSON_MAX_DEPTH];      /* items written at each depth */
    int after_key;                  /* a key was just written */
} json_out;

void json_init(json_out *j, FILE *f);
void json_object_begin(json_out *j);
void json_object_end(json_out *j);
void json_array_begin(json_out *j);
void json_array_end(json_out *j);
void json_key(json_out *j, const char *key);
void json_string(json_out *j, const char *s);
void json_string_n(json_out *j, const char *s, size_t n);
void json_number(json_out *j, double v);  /* %.17g, shortest round trip */
void json_uint(json_out *j, uint64_t v);
void json_int(json_out *j, int64_t v);
void json_bool(json_out *j, int v);
void json_null(json_out *j);
/* Ends the document with a newline. */
void json_finish(json_out *j);

#endif
