/* chunk: cuts a stream of bytes into chunks of whole records.
 *
 * The chunker is fed: the caller appends bytes (chunker_space, then
 * chunker_commit, or chunker_feed), says when they end (chunker_finish), and
 * takes the chunks that are complete (chunker_next).  It never reads a file
 * itself.
 *
 * Where a chunk ends is decided by the bytes alone, never by how they were
 * fed or read, so that any split of the same bytes gives the same chunks.
 * Records end where the quote rule of io/csv.h says ('\n' outside quotes,
 * found by csv_quote_scan), so every chunk can be tokenized on its own, in
 * any thread.  With g = min(1 MiB, chunk_bytes) and marks at the multiples
 * of g (offsets counted from the first byte of the stream), a chunk starting
 * at S ends at the last record end at or before the first mark E >=
 * S + chunk_bytes for which that record end lies at or after S + chunk_bytes;
 * the last chunk holds whatever is left.  (The reader reads up to the
 * next mark at a time (chunker_to_mark), so a chunk is cut from whole reads
 * and only the start of a record is left after it; the chunks equal those
 * of the earlier read-driven chunker on plain files.)
 *
 * A record longer than max_record_bytes stops the chunker with an error that
 * gives the record's byte offset.
 */
#ifndef SHEAF_CHUNK_H
#define SHEAF_CHUNK_H

#include <stddef.h>
#include <stdint.h>

/* Bytes after the end of every chunk that may be read (never written): the
 * tokenizer loads whole 64-byte blocks.  They are zero past the fed data. */
#define CHUNK_PADDING 64

typedef struct {
    char *data;      /* chunk bytes, writable (the tokenizer unquotes in place) */
    size_t len;      /* bytes in the chunk */
    uint64_t offset; /* offset of data[0] in the stream */
    int last;        /* the stream ends with this chunk */
} chunk;

typedef struct chunker chunker;

chunker *chunker_create(size_t chunk_bytes, size_t max_record_bytes);
void chunker_free(chunker *c);
/* Starts a new stream (the previous one is dropped).  `name` is used in
 * messages and must outlive the stream. */
void chunker_start(chunker *c, const char *name);
/* The stream's next byte is at offset `base` (a record's start), not 0:
 * for a stream taken up in the middle (a resumed scan).  The chunks cut
 * from there are those a stream from offset 0 gives there.  Call after
 * chunker_start, before any byte. */
void chunker_rebase(chunker *c, uint64_t base);
/* The delimiter the quote rule needs, and the bytes at the start of the
 * stream that belong to no record (a byte-order mark).  No chunk is cut
 * before this is set. */
void chunker_set_dialect(chunker *c, char delim, size_t skip_bytes);

/* Space for at least one more byte after the buffered ones: *room bytes at
 * the returned pointer.  Moves the buffer, so chunks handed out before are
 * invalid afterwards: call it only once chunker_next has returned 0.
 * Returns NULL with a message when the buffer cannot grow. */
char *chunker_space(chunker *c, size_t *room, char *err, size_t errlen);
/* n bytes were written at the space. */
void chunker_commit(chunker *c, size_t n);
/* Copies up to len bytes in (as space + commit); returns how many. */
size_t chunker_feed(chunker *c, const void *data, size_t len, char *err, size_t errlen);
/* No more bytes follow in this stream. */
void chunker_finish(chunker *c);
/* No more bytes follow, and the stream failed: its complete records are
 * handed out (the last chunk ends at the last record end, whatever its
 * size); the open record after them never is. */
void chunker_flush(chunker *c);

/* Next complete chunk.  Returns 1 with *out filled, 0 when more bytes are
 * needed (or the stream is done: chunker_done), -1 on error (message in err).
 * Chunks stay valid until the next chunker_space or chunker_feed. */
int chunker_next(chunker *c, chunk *out, char *err, size_t errlen);
/* How many bytes to add next so that the buffer ends on a mark, where
 * chunks end: adding no more than this leaves only the start of a record
 * after each chunk cut, which is what chunker_trade copies. */
size_t chunker_to_mark(const chunker *c);
/* Gives the caller the buffer that holds the chunk chunker_next just handed
 * out, so that the chunk need not be copied: *buf (its *size bytes, from
 * an earlier trade, or NULL) becomes the chunker's buffer, and the bytes
 * after the chunk are copied into it (a new buffer is made when *buf is
 * smaller than the chunker's).  On return *buf and *size are the buffer
 * given away, which the chunk's data points into; every chunk handed out
 * before is in it too.  0, or -1 with a message when a new buffer cannot be
 * made (nothing changed). */
int chunker_trade(chunker *c, char **buf, size_t *size, char *err, size_t errlen);
/* After chunker_next failed: 1 when a record passed the record limit, with
 * its stream offset, the limit, and whether a quote was open where it passed
 * it; else 0.  (The record's line is the lines of the chunks handed out
 * before it, plus one: it starts where the last of them ends.) */
int chunker_too_long(const chunker *c, uint64_t *at, size_t *limit, int *quoted);
/* The stream was finished and every byte has been handed out. */
int chunker_done(const chunker *c);
/* The bytes buffered and not yet handed out (for dialect detection). */
const char *chunker_pending(const chunker *c, size_t *len);

/* Byte-range shards.  The first record that starts at or after `offset` in a
 * plain file, under the quote rule with the given delimiter.  The rule is
 * provably right: the quote state of the whole prefix [0, offset) is
 * followed (csv_quote_scan: memchr over the file, no tokenizing), then the
 * first record end at or after offset - 1 is found.  A byte-order mark at
 * the start is skipped.  Returns 0 and sets *start (the file size when no
 * record starts there), or -1 with a message. */
int chunk_find_record_start(const char *path, uint64_t offset, char delim, uint64_t *start,
                            char *err, size_t errlen);

#endif
