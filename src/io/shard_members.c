/* shard_members: see shard_members.h for the layout and the search. */
#include "io/shard_members.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "io/message.h"

#define HEADER_READ 64u /* bytes read to check a header (XLEN of BGZF members is 6) */

int shard_members_header(const unsigned char *p, size_t len, uint32_t *member_bytes)
{
    if (len >= 1 && p[0] != 0x1f) return 0;
    if (len >= 2 && p[1] != 0x8b) return 0;
    if (len >= 3 && p[2] != 8) return 0;               /* deflate */
    if (len >= 4 && ((p[3] & 4) == 0 || (p[3] & 0xe0))) return 0; /* FEXTRA; reserved bits 0 */
    if (len < 12) return -1;
    size_t xlen = (size_t)p[10] | (size_t)p[11] << 8;
    if (xlen < 6) return 0;
    if (len < 12 + xlen) return -1;
    for (size_t i = 12; i + 4 <= 12 + xlen;) {
        size_t slen = (size_t)p[i + 2] | (size_t)p[i + 3] << 8;
        if (i + 4 + slen > 12 + xlen) return 0;
        if (p[i] == 'B' && p[i + 1] == 'C' && slen == 2) {
            uint32_t m = ((uint32_t)p[i + 4] | (uint32_t)p[i + 5] << 8) + 1u;
            /* Room for the header, an empty deflate block and the trailer. */
            if (m < 12 + xlen + 2 + 8) return 0;
            *member_bytes = m;
            return 1;
        }
        i += 4 + slen;
    }
    return 0;
}

static int read_at(int fd, const char *path, unsigned char *buf, size_t len, uint64_t off,
                   size_t *got, uint64_t *read_bytes, char *err, size_t errlen)
{
    *got = 0;
    while (*got < len) {
        ssize_t n = pread(fd, buf + *got, len - *got, (off_t)(off + *got));
        if (n < 0 && errno == EINTR) continue;
        if (n < 0) {
            message_printf(err, errlen, "%s: read error at byte %llu: %s", path,
                           (unsigned long long)(off + *got), strerror(errno));
            return -1;
        }
        if (n == 0) break;
        *got += (size_t)n;
    }
    *read_bytes += *got;
    return 0;
}

/* 1: a member header at `at` (*member_bytes set), 0: none, -1: read error. */
static int header_at(int fd, const char *path, uint64_t size, uint64_t at,
                     uint32_t *member_bytes, uint64_t *read_bytes, char *err, size_t errlen)
{
    unsigned char h[HEADER_READ];
    size_t got;
    if (read_at(fd, path, h, sizeof h, at, &got, read_bytes, err, errlen) != 0) return -1;
    int v = shard_members_header(h, got, member_bytes);
    return v == 1 && at + *member_bytes <= size;
}

/* Whether the member claimed at p (of m bytes) is followed by
 * SHARD_MEMBERS_HOPS more headers or by the end of the file. */
static int chain_holds(int fd, const char *path, uint64_t size, uint64_t p, uint32_t m,
                       uint64_t *read_bytes, char *err, size_t errlen)
{
    uint64_t q = p + m;
    for (int hop = 0; hop < SHARD_MEMBERS_HOPS; hop++) {
        if (q == size) return 1;
        uint32_t next;
        int v = header_at(fd, path, size, q, &next, read_bytes, err, errlen);
        if (v <= 0) return v;
        q += next;
    }
    return 1;
}

int shard_members_find(int fd, const char *path, uint64_t size, uint64_t from, uint64_t *start,
                       uint64_t *read_bytes, char *err, size_t errlen)
{
    if (from >= size) { *start = size; return 0; }
    if (from == 0) {
        uint32_t m;
        int v = header_at(fd, path, size, 0, &m, read_bytes, err, errlen);
        if (v < 0) return -1;
        if (v == 0) {
            message_printf(err, errlen, "%s: not BGZF (no BGZF member header at byte 0)", path);
            return -1;
        }
        *start = 0;
        return 0;
    }
    /* A member starts within SHARD_MEMBERS_MAX bytes of any offset before
     * the last member's start. */
    size_t want = SHARD_MEMBERS_MAX + HEADER_READ;
    unsigned char *buf = malloc(want);
    if (!buf) { snprintf(err, errlen, "out of memory"); errno = ENOMEM; return -1; }
    size_t got;
    if (read_at(fd, path, buf, want, from, &got, read_bytes, err, errlen) != 0) {
        free(buf);
        return -1;
    }
    size_t span = got < SHARD_MEMBERS_MAX ? got : SHARD_MEMBERS_MAX;
    for (size_t i = 0; i < span; i++) {
        if (buf[i] != 0x1f) continue;
        uint32_t m;
        int v = shard_members_header(buf + i, got - i, &m);
        if (v == 0 || (v == 1 && from + i + m > size)) continue;
        if (v < 0) { /* near the end of what was read: read it on its own */
            v = header_at(fd, path, size, from + i, &m, read_bytes, err, errlen);
            if (v < 0) { free(buf); return -1; }
            if (v == 0) continue;
        }
        int c = chain_holds(fd, path, size, from + i, m, read_bytes, err, errlen);
        if (c < 0) { free(buf); return -1; }
        if (c) { *start = from + i; free(buf); return 0; }
    }
    if (from + SHARD_MEMBERS_MAX >= size) {
        /* None starts in [from, size): the member that holds `from` must
         * end the file, and start in the 64 KiB before it. */
        uint64_t back = from > SHARD_MEMBERS_MAX ? from - SHARD_MEMBERS_MAX : 0;
        if (read_at(fd, path, buf, (size_t)(from - back), back, &got, read_bytes, err,
                    errlen) != 0) {
            free(buf);
            return -1;
        }
        for (size_t i = 0; i < got; i++) {
            uint32_t m;
            if (buf[i] == 0x1f && shard_members_header(buf + i, got - i, &m) != 0 &&
                header_at(fd, path, size, back + i, &m, read_bytes, err, errlen) == 1 &&
                back + i + m == size) {
                *start = size;
                free(buf);
                return 0;
            }
        }
    }
    free(buf);
    message_printf(err, errlen,
                   "%s: no BGZF member starts in the %u bytes after byte %llu, nor ends the file "
                   "from before it (not BGZF there?)", path, SHARD_MEMBERS_MAX,
                   (unsigned long long)from);
    return -1;
}

int shard_members_walk(int fd, const char *path, uint64_t size, uint64_t start, uint64_t until,
                       uint64_t *end, uint64_t *decoded, uint64_t *read_bytes, char *err,
                       size_t errlen)
{
    uint64_t at = start, total = 0;
    while (at < until && at < size) {
        uint32_t m;
        int v = header_at(fd, path, size, at, &m, read_bytes, err, errlen);
        if (v < 0) return -1;
        if (v == 0) {
            message_printf(err, errlen,
                           "%s: no BGZF member header at byte %llu where the one before ends (not "
                           "BGZF throughout?)", path, (unsigned long long)at);
            return -1;
        }
        unsigned char t[4];
        size_t got;
        if (read_at(fd, path, t, 4, at + m - 4, &got, read_bytes, err, errlen) != 0) return -1;
        total += (uint64_t)t[0] | (uint64_t)t[1] << 8 | (uint64_t)t[2] << 16 |
                 (uint64_t)t[3] << 24;
        at += m;
    }
    *end = at < size ? at : size;
    *decoded = total;
    return 0;
}

ssize_t shard_members_pull(void *ctx, void *buf, size_t cap)
{
    shard_members_raw *r = ctx;
    if (r->pos >= r->end) return 0;
    if (r->most && cap > r->most) cap = r->most;
    if (cap > r->end - r->pos) cap = (size_t)(r->end - r->pos);
    for (;;) {
        ssize_t n = pread(r->fd, buf, cap, (off_t)r->pos);
        if (n < 0 && errno == EINTR) continue;
        if (n > 0) { r->pos += (uint64_t)n; r->read_bytes += (uint64_t)n; }
        return n;
    }
}

/* The frame header at `at`: its size and content size (UINT64_MAX: none),
 * and whether a checksum follows the last block.  1, 0 (not a zstd frame),
 * -1 (read error). */
static int frame_header(int fd, const char *path, uint64_t at, uint32_t *header_bytes,
                        uint64_t *content, int *checksum, uint64_t *read_bytes, char *err,
                        size_t errlen)
{
    unsigned char h[18];
    size_t got;
    if (read_at(fd, path, h, sizeof h, at, &got, read_bytes, err, errlen) != 0) return -1;
    if (got < 6 || h[0] != 0x28 || h[1] != 0xb5 || h[2] != 0x2f || h[3] != 0xfd) return 0;
    unsigned fhd = h[4];
    if (fhd & 0x08) return 0; /* reserved bit */
    int single = fhd >> 5 & 1;
    unsigned fcs_flag = fhd >> 6, did_flag = fhd & 3;
    size_t did = did_flag == 0 ? 0 : did_flag == 1 ? 1 : did_flag == 2 ? 2 : 4;
    size_t fcs = fcs_flag == 0 ? (size_t)single : fcs_flag == 1 ? 2 : fcs_flag == 2 ? 4 : 8;
    size_t hb = 5 + (size_t)!single + did + fcs;
    if (got < hb) return 0;
    uint64_t v = 0;
    for (size_t k = 0; k < fcs; k++) v |= (uint64_t)h[5 + !single + did + k] << (8 * k);
    if (fcs == 2) v += 256;
    *content = fcs ? v : UINT64_MAX;
    *checksum = fhd >> 2 & 1;
    *header_bytes = (uint32_t)hb;
    return 1;
}

int shard_frames_walk(int fd, const char *path, uint64_t size, uint64_t lo, uint64_t hi,
                      uint64_t *start, uint64_t *end, uint64_t *decoded, uint64_t *frames,
                      uint64_t *read_bytes, char *err, size_t errlen)
{
    uint64_t at = 0, own = 0, nframes = 0, unsized = UINT64_MAX;
    int started = 0;
    *start = *end = size;
    *frames = 0;
    while (at < size) {
        unsigned char m[8];
        size_t got;
        if (read_at(fd, path, m, 8, at, &got, read_bytes, err, errlen) != 0) return -1;
        uint32_t magic = got >= 4 ? (uint32_t)m[0] | (uint32_t)m[1] << 8 |
                                        (uint32_t)m[2] << 16 | (uint32_t)m[3] << 24 : 0;
        if (got >= 8 && (magic & 0xfffffff0u) == 0x184d2a50u) { /* skippable */
            at += 8 + ((uint64_t)m[4] | (uint64_t)m[5] << 8 | (uint64_t)m[6] << 16 |
                       (uint64_t)m[7] << 24);
            continue;
        }
        uint32_t hb;
        uint64_t content;
        int checksum;
        int v = frame_header(fd, path, at, &hb, &content, &checksum, read_bytes, err, errlen);
        if (v < 0) return -1;
        if (v == 0) {
            message_printf(err, errlen,
                           "%s: no zstd frame header at byte %llu where the frame before ends",
                           path, (unsigned long long)at);
            return -1;
        }
        if (at >= hi) { *end = at; *frames = 0; break; }
        nframes++;
        if (at >= lo) {
            if (!started) { *start = at; started = 1; }
            if (content == UINT64_MAX && unsized == UINT64_MAX) unsized = at;
            own += content == UINT64_MAX ? 0 : content;
        }
        uint64_t b = at + hb;
        for (;;) {
            unsigned char bh[3];
            if (read_at(fd, path, bh, 3, b, &got, read_bytes, err, errlen) != 0) return -1;
            if (got < 3) {
                message_printf(err, errlen,
                               "%s: truncated zstd frame (a block header at byte %llu)", path,
                               (unsigned long long)b);
                return -1;
            }
            uint32_t w = (uint32_t)bh[0] | (uint32_t)bh[1] << 8 | (uint32_t)bh[2] << 16;
            unsigned type = w >> 1 & 3;
            uint64_t bytes = type == 1 ? 1 : (uint64_t)(w >> 3);
            if (type == 3) {
                message_printf(err, errlen, "%s: corrupt zstd block header at byte %llu", path,
                               (unsigned long long)b);
                return -1;
            }
            b += 3 + bytes;
            if (w & 1) break;
        }
        at = b + (checksum ? 4 : 0);
        if (at > size) {
            message_printf(err, errlen,
                           "%s: truncated zstd frame (it ends past the file, at byte %llu)", path,
                           (unsigned long long)at);
            return -1;
        }
        *frames = nframes;
    }
    if (!started) *start = *end;
    /* The first shard owns the file from byte 0, skippable frames before
     * its first data frame included: it starts at the top (reads the
     * header itself, and starts the shards' chain). */
    if (started && lo == 0) *start = 0;
    /* A frame without its size, unless the file is one frame (refused as
     * such by the caller, with the way to make many). */
    if (unsized != UINT64_MAX && *frames != 1) {
        message_printf(err, errlen,
                       "%s: the zstd frame at byte %llu does not say its decompressed size, which "
                       "a shard needs (zstd writes it when it compresses a file, not standard "
                       "input)", path, (unsigned long long)unsized);
        return -1;
    }
    *decoded = own;
    return 0;
}
