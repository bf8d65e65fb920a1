/* source: a stream of decompressed bytes from a file or standard input.
 *
 * The format is detected from the first bytes, never from the name: gzip
 * (1f 8b; single or multi-member, decoded with ISA-L's isal_inflate, CRC and
 * length of every member checked), zstd (28 b5 2f fd; libzstd streaming, any
 * number of frames), anything else is plain bytes.  While reading, the source
 * hashes the raw (compressed) bytes with XXH3-64: that fingerprint, the size
 * and the modification time identify the source in a summary's provenance.

 * A plain file may also be opened at a byte offset (source_open_at), for
 * byte-range shards; the caller decides where to stop.
 */
#ifndef SHEAF_SOURCE_H
#define SHEAF_SOURCE_H

#include <stddef.h>
#include <stdint.h>
#include <sys/types.h>

typedef enum { SOURCE_PLAIN = 0, SOURCE_GZIP, SOURCE_ZSTD } source_format;

typedef struct source source;

/* Opens path ("-" for standard input).  Returns NULL and writes a one-line
 * message naming the file into err on failure. */
source *source_open(const char *path, char *err, size_t errlen);
/* A source of bytes the caller reads (a FILE *, memory): up to cap raw
 * bytes into buf; the count, 0 at the end, or -1 (errno may say why). */
typedef ssize_t (*source_pull)(void *ctx, void *buf, size_t cap);
/* Opens the bytes pull reads, named `name` in messages and records, plain,
 * gzip or zstd as for a file; `size` is their raw size when known (else 0),
 * the modification time 0.  pull and ctx are used until source_close. */
source *source_open_pull(const char *name, source_pull pull, void *ctx, uint64_t size, char *err,
                         size_t errlen);
/* As source_open_pull for bytes that pull has decoded already (a shard of a
 * compressed file, io/shard_members.h): always plain, whatever they begin
 * with. */
source *source_open_decoded(const char *name, source_pull pull, void *ctx, uint64_t size,
                            char *err, size_t errlen);
/* Opens a plain (uncompressed) regular file positioned at byte `start`.
 * Fails with a message when the file is compressed or not seekable. */
source *source_open_at(const char *path, uint64_t start, char *err, size_t errlen);
void source_close(source *s);

/* Reads up to cap decompressed bytes.  Returns the count, 0 at the end of
 * input, or -1 on error (message in source_error: file and byte offset). */
ssize_t source_read(source *s, void *buf, size_t cap);
const char *source_error(const source *s);
/* Decodes ahead on a thread of its own, at most `budget` bytes (0: 1 MiB)
 * beyond what source_read has handed out, so that reading and decompressing
 * overlap the caller's work (and one file's with another's).  source_read
 * gives the same bytes and the same error at the same place as without;
 * source_raw_offset then counts what was handed out, block by block.  0, or
 * -1 when out of memory (nothing changed).  When the thread cannot start,
 * reads stay on the caller's thread. */
int source_read_ahead(source *s, size_t budget);

/* Where a gzip member or a zstd frame after the first begins, as an offset in
 * the decompressed stream (where `cat a.gz b.gz` put b's first byte): moves
 * up to max of the offsets found so far, ascending, into out, and returns
 * how many.  Offsets are reported once decoding reaches them, never later
 * than the first byte after them is handed out by source_read; callers take
 * them after each read.  A plain source has none. */
size_t source_take_starts(source *s, uint64_t *out, size_t max);

/* Drops the offsets found so far that lie before `before` (a resumed scan's
 * skipped bytes), keeping those at or past it: decoding, on a read-ahead
 * thread or in a decoder's step, may have found starts past it already. */
void source_drop_starts_before(source *s, uint64_t before);

/* Notes that a member or frame begins at offset `at` of s's stream (0
 * included), for a source whose bytes another one decoded
 * (source_open_decoded): a shard's data stream hands on its members'
 * starts so that a repeated header there is skipped as in a whole scan.
 * Offsets must come in ascending order; out of memory drops the note. */
void source_add_start(source *s, uint64_t at);

/* Shows every decoded byte to fn(ctx, data, len), in order, as it is decoded
 * (on the read-ahead thread when there is one): how a byte-range shard
 * follows the quote rule over the bytes it reads without a second pass
 * (io/shard_start.h).  fn NULL: none. */
typedef void (*source_observer)(void *ctx, const char *data, size_t len);
void source_observe(source *s, source_observer fn, void *ctx);

/* ---- restart points (gzip) ----------------------------------------------
 *
 * A scan with checkpoints resumes inside a gzip file without decompressing
 * it again from the start: the source keeps restart points, each the whole
 * decoder state between two isal_inflate calls (the bit buffer, the Huffman
 * tables, the 32 KiB history), the raw offset R of the next byte the decoder
 * reads, the decoded offset D there and the XXH3-64 of the raw bytes
 * [0, R).  A point's bytes (a mark) are tied to this build of ISA-L and
 * xxHash and to the machine's sizes and byte order: source_restore refuses
 * another's as stale.  The hash of the decoded bytes before D is the
 * caller's to keep (it hashes them anyway): source_mark_offsets says where
 * the points lie.
 *
 * For gzip the fingerprint is taken as the decoder consumes the raw bytes
 * (the same hash at the end), so that it is known exactly at a point. */

/* Keeps restart points every every_bytes decoded bytes (4 MiB at least),
 * the MARK_SLOTS (8) newest ones.  Call before the first read and before
 * source_read_ahead.  A source that is not gzip keeps none.  0, or -1 when
 * out of memory. */
int source_keep_marks(source *s, uint64_t every_bytes);
/* The decoded offsets of the points kept that lie in (after, upto],
 * ascending, at most max of them into out; how many.  Every point at or
 * before the end of what source_read has handed out is known by then. */
size_t source_mark_offsets(source *s, uint64_t after, uint64_t upto, uint64_t *out, size_t max);
/* The point at decoded offset `at`, as a mark in a malloc'd *out of *len
 * bytes (the caller frees it): 1, or 0 when no point kept is there, -1 when
 * out of memory. */
int source_mark_at(source *s, uint64_t at, void **out, size_t *len);

typedef enum {
    SOURCE_MARK_RESTORED = 0, /* the source continues at the point */
    SOURCE_MARK_STALE = 1,    /* another build's or format's mark: nothing was read */
    SOURCE_MARK_DIFFERS = 2,  /* the raw bytes before the point are not those it was taken
                                 after (the file changed) */
    SOURCE_MARK_FAILED = 3    /* a read error (message in source_error) */
} source_restored;

/* Continues a freshly opened gzip source (nothing read yet, no read-ahead)
 * at the point of a mark: reads and fingerprints the raw bytes before it,
 * checks their hash, restores the decoder and sets *decoded_at to the
 * decoded offset there.  The point is kept as if taken there.  After SOURCE_MARK_DIFFERS or _FAILED the source is
 * spent. */
source_restored source_restore(source *s, const void *mark, size_t len, uint64_t *decoded_at);
/* For a freshly opened plain file and an offset `to`: the bytes [0, to) are
 * read into the fingerprint only, and hash_state (an XXH3_state_t of
 * hash_state_bytes, from the same xxhash.h, inline or not, reset by its
 * owner: it keeps its own secret pointer) receives their XXH3 state.
 * SOURCE_MARK_STALE when `to` lies within what the format probe read, or
 * the source is not a plain file. */
source_restored source_skip_plain(source *s, uint64_t to, void *hash_state,
                                  size_t hash_state_bytes);

const char *source_path(const source *s);
source_format source_kind(const source *s);
const char *source_format_name(source_format f);
/* Raw bytes consumed so far, and the size of the file (0 if unknown). */
uint64_t source_raw_offset(const source *s);
uint64_t source_raw_size(const source *s);
int64_t source_mtime(const source *s);
/* XXH3-64 of the raw bytes read so far (complete once source_read returned 0). */
uint64_t source_fingerprint(const source *s);

/* Whether the n bytes at m start a zstd stream: a frame (28 b5 2f fd), or a
 * skippable frame (5x 2a 4d 18), which parallel compressors such as
 * Debian's pzstd put before each frame and the decoder steps over. */
static inline int source_zstd_magic(const unsigned char *m, size_t n)
{
    return n >= 4 && ((m[0] == 0x28 && m[1] == 0xb5 && m[2] == 0x2f && m[3] == 0xfd) ||
                      ((m[0] & 0xf0) == 0x50 && m[1] == 0x2a && m[2] == 0x4d && m[3] == 0x18));
}

#endif
