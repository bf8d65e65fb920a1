/* chunk: cuts a byte source into chunks of whole records.
 *
 * A chunk is at least `chunk_bytes` long (except the last) and ends just
 * after a record terminator ('\n') that lies outside quotes, so every chunk
 * can be tokenized on its own, in any thread.  The quote state at a cut is
 * found by parity: in RFC 4180 text a '"' toggles "inside quotes" and a
 * doubled quote toggles twice, so a '\n' is a record end exactly when an even
 * number of quotes precedes it in the chunk.  Quotes are located with memchr
 * and newlines with memrchr, so unquoted data is scanned at memory speed.
 *
 * A record longer than the buffer grows it, up to `max_record_bytes`; past
 * that the reader stops with an error giving the byte offset of the record.
 */
#ifndef SHEAF_CHUNK_H
#define SHEAF_CHUNK_H

#include <stddef.h>
#include <stdint.h>

#include "io/source.h"

/* Bytes after the end of every chunk that may be read (never written): the
 * tokenizer loads whole 64-byte blocks.  Their content is unspecified. */
#define CHUNK_PADDING 64

typedef struct {
    char *data;      /* chunk bytes, writable (the tokenizer unquotes in place) */
    size_t len;      /* bytes in the chunk */
    uint64_t offset; /* decompressed offset of data[0] in the source */
    int last;        /* no more chunks follow from this source */
} chunk;

typedef struct chunker chunker;

chunker *chunker_create(size_t chunk_bytes, size_t max_record_bytes);
void chunker_free(chunker *c);
/* Starts reading a new source (the previous one must be exhausted). */
void chunker_start(chunker *c, source *src);
/* Stops the current source early after `limit` decompressed bytes have been
 * *started*: the chunk that contains offset `limit` is completed to its
 * record end, then reading ends (byte-range shards).  0 disables. */
void chunker_set_limit(chunker *c, uint64_t limit);
/* Next chunk.  Returns 1 with *out filled, 0 at end of source, -1 on error
 * (message in err).  The chunk stays valid until the next call. */
int chunker_next(chunker *c, chunk *out, char *err, size_t errlen);

/* Offset just after the last record end ('\n' outside quotes) in
 * data[0..len), for text that starts outside quotes; len + 1 if there is none.
 * Exposed for tests. */
size_t chunk_last_record_end(const char *data, size_t len);

/* Byte-range shards.  The first record that starts at or after `offset` in a
 * plain file.  The rule is provably right for RFC 4180 text: a record starts
 * right after a '\n' preceded by an even number of quotes, so the quotes of
 * the whole prefix [0, offset) are counted (memchr over the file, no
 * parsing), then the first such '\n' at or after offset - 1 is found.
 * Returns 0 and sets *start (the file size when no record starts there), or
 * -1 with a message. */
int chunk_find_record_start(const char *path, uint64_t offset, uint64_t *start, char *err,
                            size_t errlen);

#endif
