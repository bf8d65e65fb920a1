/* shard_members: where the gzip members of a BGZF file begin, found near a
 * byte offset without decoding anything before it (docs/shards.md).
 *
 * BGZF is gzip (RFC 1952) written as a series of members of at most 64 KiB,
 * each with an extra field (FLG.FEXTRA) holding the subfield SI1 = 'B',
 * SI2 = 'C', SLEN = 2 whose value BSIZE is the member's compressed size less
 * one; a 28-byte empty member ends the file.  A member start is found from
 * any offset by looking for this header; a match inside compressed data is
 * ruled out by following BSIZE: the bytes it points to must hold another
 * such header, for SHARD_MEMBERS_HOPS members in a row, or be the end of the
 * file (random bytes pass with odds near 2^-200; the scan that then decodes
 * the member checks its CRC-32, and merge checks that each shard's members
 * end where the next shard's begin: shard_members_walk follows BSIZE from a
 * start it trusts instead of searching).
 *
 * The reads go through pread on a descriptor the caller owns; every byte
 * read is added to *read_bytes. */
#ifndef SHEAF_SHARD_MEMBERS_H
#define SHEAF_SHARD_MEMBERS_H

#include <stddef.h>
#include <stdint.h>
#include <sys/types.h>

#define SHARD_MEMBERS_MAX 65536u /* the largest BGZF member, bytes */
#define SHARD_MEMBERS_HOPS 3     /* headers followed to accept a start found by search */

/* Whether p[0..len) opens a BGZF member header: 1 with *member_bytes (the
 * member's size, header and trailer included), 0 when it does not, -1 when
 * len is too short to tell. */
int shard_members_header(const unsigned char *p, size_t len, uint32_t *member_bytes);

/* The first member start at or after `from` in a BGZF file of `size` bytes
 * (size when none starts there): 0, or -1 with one line in err (the bytes
 * there are not BGZF). */
int shard_members_find(int fd, const char *path, uint64_t size, uint64_t from, uint64_t *start,
                       uint64_t *read_bytes, char *err, size_t errlen);

/* From the member at `start`, the members that start before `until`: where
 * the first one at or after it begins (*end, size at the end of the file) and
 * their decompressed bytes (*decoded, from their ISIZE trailers).  Reads a
 * header and a trailer per member.  0, or -1 with one line in err. */
int shard_members_walk(int fd, const char *path, uint64_t size, uint64_t start, uint64_t until,
                       uint64_t *end, uint64_t *decoded, uint64_t *read_bytes, char *err,
                       size_t errlen);

/* Raw bytes [pos, end) of a descriptor, handed out at most `most` at a time
 * (a source_pull for io/source.h's source_open_pull), counted in read_bytes. */
typedef struct {
    int fd;              /* not owned */
    uint64_t pos, end;   /* the next byte, and the first not to read */
    size_t most;         /* largest read (0: any) */
    uint64_t read_bytes; /* bytes handed out */
} shard_members_raw;

ssize_t shard_members_pull(void *ctx, void *buf, size_t cap);

/* zstd files of many frames (RFC 8878): frames cannot be told from their
 * compressed data by a search, so the frame and block headers are walked
 * from the start of the file: a frame header (magic 28 b5 2f fd, the
 * descriptor, window, dictionary and content-size fields), then each block's
 * 3-byte header (its size, type and last-block flag), and the optional
 * 4-byte checksum; skippable frames (magic 50..5f 2a 4d 18) by their size.
 * A few bytes per block of up to 128 KiB are read, never the data.  The
 * data frames that start in [lo, hi) are the shard's: *start (0 for the
 * first shard, lo == 0, whatever skippable frames come first), where the
 * first data frame at or after hi begins (*end; size when none), and their
 * decompressed bytes (*decoded, from their content-size fields: a frame
 * without one is refused, unless the file is one frame).  *frames: the data
 * frames in the file when the walk reached its end, else 0 (more than the
 * walk saw).  0, or -1 with one line in err. */
int shard_frames_walk(int fd, const char *path, uint64_t size, uint64_t lo, uint64_t hi,
                      uint64_t *start, uint64_t *end, uint64_t *decoded, uint64_t *frames,
                      uint64_t *read_bytes, char *err, size_t errlen);

#endif
