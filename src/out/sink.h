/* sink: buffered output to standard output or a file, compressed by name.
 *
 * A name ending in .gz is written as gzip (ISA-L deflate, level 2), .zst as zstd
 * (libzstd streaming, level 3), anything else plain; "-" or NULL is standard
 * output.  A file goes through src/summary/tempfile.h: a regular file (or a
 * new one, or the file a symbolic link names) is written without a name and
 * given the final name by sink_close, so a failed or killed command never
 * leaves a half-written file under the final name nor a temporary file beside
 * it; a character device or a FIFO (/dev/null, a named pipe) is written
 * through.  Bytes go out with write(2) from the sink's own buffer (standard
 * output too, on descriptor 1, bypassing stdio's stdout), and the first
 * failure's errno is kept, so every message names the output and the reason.
 */
#ifndef SHEAF_SINK_H
#define SHEAF_SINK_H

#include <stddef.h>

typedef struct sink sink;

/* NULL with a message naming the file on failure. */
sink *sink_open(const char *path, char *err, size_t errlen);
/* The index of the first of inputs[0..n) that is the regular file an
 * output at path would replace (the same device and inode, links
 * followed; "-" or NULL: standard output, an input "-" standard input),
 * or -1: an output must not be written over its own input.  NULL inputs
 * are skipped. */
long sink_replaces_input(const char *path, const char *const *inputs, size_t n);
/* Returns 0, or -1 once a write failed (the error is kept for sink_close). */
int sink_write(sink *s, const void *data, size_t len);
/* Room for n bytes written in place: returns where to write them (commit
 * with sink_commit), or NULL once a write failed or memory ran out. */
char *sink_reserve(sink *s, size_t n);
/* Marks n bytes written at the last sink_reserve's pointer. */
void sink_commit(sink *s, size_t n);
/* Hands the bytes buffered so far on (to the file or descriptor; a
 * compressed stream keeps what its compressor holds): 0, or -1 once a write
 * failed (the error is kept for sink_close and sink_error). */
int sink_flush(sink *s);
/* Flushes, finishes the compressed stream, renames into place.  Returns 0, or
 * -1 with a message (and nothing left under the final name). */
int sink_close(sink *s, char *err, size_t errlen);
/* After a failed sink_write or sink_reserve: "NAME: cannot write: REASON"
 * (NAME is the path, or "standard output"). */
void sink_error(const sink *s, char *err, size_t errlen);
/* Discards everything written (removes the temporary file). */
void sink_abort(sink *s);

#endif
