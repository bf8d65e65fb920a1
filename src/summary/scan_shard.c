/* scan_shard: --shard I/N, one byte range of one file into a scan context
 * (scan_context.h): of a plain file, or of the members of a BGZF file or the
 * frames of a zstd file of many frames (docs/shards.md). */
#include "summary/scan_context.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <fcntl.h>
#include <unistd.h>

#include "io/csv.h"
#include "io/message.h"
#include "io/shard_members.h"
#include "io/shard_start.h"
#include "io/source.h"

/* --shard I/N of one plain file: the header from byte 0, then the records
 * that start in [lo, hi) = [size (I-1)/N, size I/N).  The first of them is
 * found from the bytes after lo (io/shard_start.h; docs/shards.md), or from
 * the top of the file when those do not tell or {shard_from_top} asks. */

#define SHARD_LOOK_AHEAD (1u << 20) /* the most read after a range start to find its first
                                        record */
#define SHARD_FIRST_LOOK (64u << 10) /* read first; the rest of the window only when these do
                                        not tell */
#define SHARD_ID_BYTES (64u << 10)  /* the file identity: XXH3-64 of this many first bytes */
#define SHARD_BLOCK (1u << 20)      /* reads of the prefix rule */

/* Follows the bytes a pass reads: counts them, and feeds those of [from, to)
 * to the four quote modes, in order (under each of nmodes delimiters: the
 * first shard's delimiter is known only once its reader has read ahead). */
typedef struct {
    uint64_t pos;       /* file offset of the next byte shown */
    uint64_t seen;      /* bytes shown */
    shard_modes *modes; /* fed [from, to), or NULL */
    size_t nmodes;      /* modes[0..nmodes) */
    uint64_t from, to;  /* from: the next byte the modes need */
    int bom;            /* 1: from 0, the modes skip a byte-order mark at byte 0 */
} shard_watch;

static void shard_watch_bytes(void *ctx, const char *data, size_t len)
{
    shard_watch *w = ctx;
    uint64_t a = w->pos, b = w->pos + len;
    if (w->bom && a == 0) w->from = csv_bom_length(data, len);
    if (w->modes && a <= w->from && w->from < b && w->from < w->to) {
        uint64_t e = b < w->to ? b : w->to;
        for (size_t k = 0; k < w->nmodes; k++)
            shard_modes_scan(&w->modes[k], data + (w->from - a), (size_t)(e - w->from));
        w->from = e;
    }
    w->pos = b;
    w->seen += len;
}

/* len bytes at off (fewer at the end of the file): 0, or -1 with a message. */
static int shard_pread(scan_context *sc, int fd, const char *path, char *buf, size_t len,
                       uint64_t off, size_t *got)
{
    *got = 0;
    while (*got < len) {
        ssize_t n = pread(fd, buf + *got, len - *got, (off_t)(off + *got));
        if (n < 0 && errno == EINTR) continue;
        if (n < 0) {
            message_printf(sc->err, sizeof sc->err, "%s: read error at byte %llu: %s", path,
                           (unsigned long long)(off + *got), strerror(errno));
            return -1;
        }
        if (n == 0) break;
        *got += (size_t)n;
    }
    return 0;
}

/* Feeds [w->from, w->to) to the modes by reading it (what a pass left). */
static int shard_watch_finish(scan_context *sc, int fd, const char *path, shard_watch *w,
                              char *buf, uint64_t *read_bytes)
{
    while (w->from < w->to) {
        size_t want = w->to - w->from < SHARD_BLOCK ? (size_t)(w->to - w->from) : SHARD_BLOCK, got;
        if (shard_pread(sc, fd, path, buf, want, w->from, &got) != 0) return -1;
        *read_bytes += got;
        if (got == 0) break;
        shard_modes_scan(w->modes, buf, got);
        w->from += got;
    }
    return 0;
}

/* The prefix rule: the true mode at the anchor from [skip, anchor), then the
 * first record end at or after the anchor, reading past the window when it
 * holds none (feeding those bytes to w's modes).  Sets *first (the file size
 * when no record starts there) and *mode. */
static int shard_from_top(scan_context *sc, int fd, const char *path, uint64_t size,
                          uint64_t skip, uint64_t anchor, const char *win, size_t wlen,
                          shard_watch *w, char *buf, uint64_t *read_bytes, uint64_t *first,
                          csv_quote_mode *mode)
{
    csv_quote_state q;
    csv_quote_init(&q, sc->delim);
    for (uint64_t at = skip; at < anchor;) {
        size_t want = anchor - at < SHARD_BLOCK ? (size_t)(anchor - at) : SHARD_BLOCK, got;
        if (shard_pread(sc, fd, path, buf, want, at, &got) != 0) return -1;
        *read_bytes += got;
        if (got == 0) break;
        csv_quote_scan(&q, buf, got, 0);
        at += got;
    }
    *mode = q.mode;
    size_t r = csv_quote_scan(&q, win, wlen, 1);
    if (r <= wlen) { *first = anchor + r; return 0; }
    for (uint64_t at = anchor + wlen;; ) { /* a record longer than the window */
        size_t got;
        if (shard_pread(sc, fd, path, buf, SHARD_BLOCK, at, &got) != 0) return -1;
        *read_bytes += got;
        if (got == 0) { *first = size; return 0; }
        if (w->from == at && at < w->to) {
            size_t n = w->to - at < got ? (size_t)(w->to - at) : got;
            shard_modes_scan(w->modes, buf, n);
            w->from += n;
        }
        r = csv_quote_scan(&q, buf, got, 1);
        if (r <= got) { *first = at + r; return 0; }
        at += got;
    }
}

/* The start record of this shard added to every summary's last source. */
static void shard_mark(scan_context *sc, const summary_source *mark)
{
    for (size_t t = 0; t < sc->nruns; t++) {
        summary *s = sc->runs[t];
        if (!s->nsources) continue;
        summary_source *src = &s->sources[s->nsources - 1];
        src->shard_rule = mark->shard_rule;
        src->shard_modes = mark->shard_modes;
        src->shard_map = mark->shard_map;
        src->shard_index = mark->shard_index;
        src->shard_count = mark->shard_count;
        src->file_id = mark->file_id;
        src->read_bytes = mark->read_bytes;
    }
}

/* A test hook: a number from the environment, or def. */
static uint64_t shard_test_knob(const char *name, uint64_t def)
{
    const char *v = getenv(name);
    return v && *v ? strtoull(v, NULL, 10) : def;
}

/* --shard I/N of a BGZF file (io/shard_members.h; docs/shards.md): the
 * members that start in the compressed range [size (I-1)/N, size I/N), found
 * from the range's own bytes.  A shard owns the records whose preceding
 * '\n' lies in the decompressed bytes of its members (the first shard also
 * the header and the first record): the window of the look-ahead begins at
 * its first member's first byte, the quote modes follow its members' bytes
 * (their transfer map), and the scan reads on past its last member until
 * the record that crosses its end ends.  The members tile the file, so the
 * owned bytes tile the decompressed stream and merge checks the chain as for
 * a plain file, with the member-aligned compressed ranges as the ranges.
 * A zstd file of many frames takes the same path, its data frames for
 * members, found by walking frame and block headers from the top
 * (shard_frames_walk). */

/* The bytes a shard's scan reads: the look-ahead it has read already from
 * `first` on, then the rest of its members' decoded stream. */
typedef struct {
    const char *win;  /* the look-ahead */
    size_t pos, len;  /* next byte of it, and its end */
    source *inner;    /* the members, decoded */
    size_t first;     /* where the shard's stream begins in inner's */
    source *data;     /* the shard's stream (NULL: no starts handed on) */
} shard_replay;

/* inner's member and frame starts found so far, moved to the shard's
 * stream (those at or past its first byte). */
static void hand_on_starts(shard_replay *r)
{
    uint64_t at[64];
    size_t n;
    while ((n = source_take_starts(r->inner, at, 64)) > 0)
        for (size_t i = 0; r->data && i < n; i++)
            if (at[i] >= r->first) source_add_start(r->data, at[i] - r->first);
}

static ssize_t shard_replay_pull(void *ctx, void *buf, size_t cap)
{
    shard_replay *r = ctx;
    hand_on_starts(r); /* the window's, then each read's */
    if (r->pos < r->len) {
        size_t n = r->len - r->pos < cap ? r->len - r->pos : cap;
        memcpy(buf, r->win + r->pos, n);
        r->pos += n;
        return (ssize_t)n;
    }
    ssize_t got = source_read(r->inner, buf, cap);
    hand_on_starts(r);
    return got;
}

/* Reads src on until the watch has seen its bytes [.., w->to): the rest of
 * the owned members for the transfer map. */
static int shard_read_through(source *src, shard_watch *w, char *buf)
{
    while (w->from < w->to) {
        ssize_t n = source_read(src, buf, SHARD_BLOCK);
        if (n < 0) return -1;
        if (n == 0) break;
    }
    return 0;
}

/* Appends to the window from src until it holds `want` bytes (or src ends:
 * *at_end). */
static int shard_window_fill(source *src, char **win, size_t *wlen, size_t *wcap, size_t want,
                             int *at_end)
{
    if (want > *wcap) {
        char *p = realloc(*win, want);
        if (!p) return -2;
        *win = p;
        *wcap = want;
    }
    while (*wlen < want && !*at_end) {
        ssize_t n = source_read(src, *win + *wlen, want - *wlen);
        if (n < 0) return -1;
        if (n == 0) *at_end = 1;
        *wlen += (size_t)n;
    }
    return 0;
}

/* The prefix rule for a shard of members (BGZF) or frames (zstd): the mode
 * at its first member's first byte from decoding every member before it,
 * then the first record end in the window (read on when it holds none). */
static scan_status shard_members_from_top(scan_context *sc, const char *path, int fd,
                                          uint64_t size, uint64_t mlo, source *inner, char **win,
                                          size_t *wlen, size_t *wcap, int *at_end, char *buf,
                                          uint64_t *read_bytes, uint64_t *first,
                                          csv_quote_mode *mode)
{
    shard_members_raw raw = {fd, 0, mlo, 64u << 10, 0};
    source *top = source_open_pull(path, shard_members_pull, &raw, size, sc->err,
                                   sizeof sc->err);
    if (!top) return scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, NULL);
    csv_quote_state q;
    csv_quote_init(&q, sc->delim);
    int begun = 0;
    for (;;) {
        ssize_t n = source_read(top, buf, SHARD_BLOCK);
        if (n < 0) {
            message_printf(sc->err, sizeof sc->err, "%s", source_error(top));
            source_close(top);
            return scan_fail(sc, SCAN_ERR_INPUT, NULL);
        }
        if (n == 0) break;
        size_t skip = begun ? 0 : csv_bom_length(buf, (size_t)n);
        begun = 1;
        csv_quote_scan(&q, buf + skip, (size_t)n - skip, 0);
    }
    source_close(top);
    *read_bytes += raw.read_bytes;
    *mode = q.mode;
    size_t done = 0;
    for (;;) {
        size_t r = csv_quote_scan(&q, *win + done, *wlen - done, 1);
        if (r <= *wlen - done) { *first = done + r; return SCAN_OK; }
        done = *wlen;
        if (*at_end) { *first = *wlen; return SCAN_OK; }
        int rc = shard_window_fill(inner, win, wlen, wcap, *wlen + SHARD_BLOCK, at_end);
        if (rc == -2) return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
        if (rc < 0) return scan_fail(sc, SCAN_ERR_INPUT, source_error(inner));
    }
}

static scan_status scan_shard_members(scan_context *sc, const char *path, int fd, uint64_t size,
                                      int64_t mtime, char *buf, summary_source *mark, int zstd)
{
    const char *format = zstd ? "zstd" : "gzip";
    const scan_options *o = &sc->o;
    uint64_t lo = size * (o->shard_index - 1) / o->shard_count;
    uint64_t hi = size * o->shard_index / o->shard_count;
    if (hi == 0) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: %u shards of a %llu-byte compressed file leave the first empty; use "
                       "fewer", path, o->shard_count, (unsigned long long)size);
        return scan_fail(sc, SCAN_ERR_USAGE, NULL);
    }
    /* The members this shard owns: [mlo, mhi), own decoded bytes. */
    uint64_t mlo, mhi, own, frames = 0;
    if (zstd ? shard_frames_walk(fd, path, size, lo, hi, &mlo, &mhi, &own, &frames,
                                 &mark->read_bytes, sc->err, sizeof sc->err) != 0
             : shard_members_find(fd, path, size, lo, &mlo, &mark->read_bytes, sc->err,
                                  sizeof sc->err) != 0 ||
                   shard_members_walk(fd, path, size, mlo, hi, &mhi, &own, &mark->read_bytes,
                                      sc->err, sizeof sc->err) != 0)
        return scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, NULL);
    if (zstd && frames == 1) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: {shard} splits a zstd file only when it holds many frames, and this "
                       "one is one frame: compress pieces separately and concatenate them (zstd -c "
                       "part1 > f.zst; zstd -c part2 >> f.zst), recompress as BGZF gzip (bgzip, "
                       "from Debian's tabix package), or split the data into several compressed "
                       "files and scan each as a shard", path);
        return scan_fail(sc, SCAN_ERR_USAGE, NULL);
    }
    sc->shard_start = mlo;
    sc->shard_end = mhi;
    if (mlo > 0) { /* the header (and the delimiter) from byte 0 */
        shard_members_raw raw = {fd, 0, size, 16u << 10, 0};
        source *hs = source_open_pull(path, shard_members_pull, &raw, size, sc->err,
                                      sizeof sc->err);
        if (!hs) return scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, NULL);
        sc->header_only = 1;
        scan_status st = scan_source(sc, hs);
        sc->header_only = 0;
        source_close(hs);
        mark->read_bytes += raw.read_bytes;
        if (st != SCAN_OK) return st;
    }
    static const char guesses[] = {',', '\t', ';', '|', ' '};
    char delims[sizeof guesses];
    size_t ndelims = 0;
    shard_modes modes[sizeof guesses];
    if (mlo == 0 && !o->delim)
        for (size_t k = 0; k < sizeof guesses; k++) delims[ndelims++] = guesses[k];
    else delims[ndelims++] = mlo == 0 ? o->delim : sc->delim;
    for (size_t k = 0; k < ndelims; k++) shard_modes_init(&modes[k], delims[k]);
    shard_watch w = {0, 0, modes, ndelims, 0, own, mlo == 0};
    shard_members_raw raw = {fd, mlo, size, 64u << 10, 0};
    source *inner = source_open_pull(path, shard_members_pull, &raw, size, sc->err,
                                     sizeof sc->err);
    if (!inner) return scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, NULL);
    source_observe(inner, shard_watch_bytes, &w);
    char *win = NULL;
    size_t wlen = 0, wcap = 0;
    int at_end = 0;
    uint64_t first = 0;
    scan_status st = SCAN_OK;
    if (mlo == 0) {
        mark->shard_rule = SHARD_START_CERTAIN;
        mark->shard_modes = 1u << CSV_AT_FIELD;
    } else {
        size_t most = (size_t)shard_test_knob("SHEAF_TEST_SHARD_WINDOW", SHARD_LOOK_AHEAD);
        if (most < 1) most = 1;
        if (most > SHARD_LOOK_AHEAD) most = SHARD_LOOK_AHEAD;
        shard_guess g;
        g.decided = 0;
        for (size_t want = most < SHARD_FIRST_LOOK ? most : SHARD_FIRST_LOOK;; want = most) {
            int rc = shard_window_fill(inner, &win, &wlen, &wcap, want, &at_end);
            if (rc != 0) {
                st = rc == -2 ? scan_fail(sc, SCAN_ERR_MEMORY, "out of memory")
                              : scan_fail(sc, SCAN_ERR_INPUT, source_error(inner));
                break;
            }
            if (!o->shard_from_top)
                shard_start_guess(win, wlen, at_end, sc->delim, sc->file_fields,
                                  shard_test_knob("SHEAF_TEST_SHARD_WORST", 0) != 0, &g);
            if (g.decided || at_end || want == most || o->shard_from_top) break;
        }
        if (st == SCAN_OK && g.decided) {
            first = g.offset;
            mark->shard_rule = (uint8_t)g.rule;
            mark->shard_modes = g.modes;
        } else if (st == SCAN_OK) {
            csv_quote_mode t = CSV_AT_FIELD;
            st = shard_members_from_top(sc, path, fd, size, mlo, inner, &win, &wlen, &wcap, &at_end,
                                     buf, &mark->read_bytes, &first, &t);
            mark->shard_rule = SHARD_START_PREFIX;
            mark->shard_modes = (uint8_t)(1u << t);
        }
    }
    if (st == SCAN_OK && mlo > 0 && first > own) {
        /* No record's preceding '\n' in the owned members: an empty shard. */
        summary_source rec = *mark;
        rec.path = (char *)path;
        snprintf(rec.format, sizeof rec.format, "%s", format);
        rec.size_bytes = size;
        rec.mtime = mtime;
        rec.fingerprint = XXH3_64bits(NULL, 0);
        rec.start_byte = mlo;
        rec.end_byte = mhi;
        if (shard_read_through(inner, &w, buf) != 0)
            st = scan_fail(sc, SCAN_ERR_INPUT, source_error(inner));
        rec.read_bytes += raw.read_bytes;
        rec.shard_map = shard_modes_map(&modes[0]);
        for (size_t t = 0; st == SCAN_OK && t < sc->nruns; t++)
            if (summary_add_source(sc->runs[t], &rec) != 0)
                st = scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
        free(win);
        source_close(inner);
        return st;
    }
    if (st == SCAN_OK) {
        shard_replay rp = {win, (size_t)first, wlen, inner, (size_t)first, NULL};
        source *data = source_open_decoded(path, shard_replay_pull, &rp, size, sc->err,
                                           sizeof sc->err);
        rp.data = data;
        /* A shard whose first record opens a member other than the file's
         * first: a repeated header there is skipped too, as a whole scan
         * skips it (inner's own start, offset 0, is never noted). */
        if (data && first == 0 && mlo > 0) source_add_start(data, 0);
        if (!data) {
            st = scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, NULL);
        } else {
            st = scan_source_range(sc, data, mlo, own + 1 - first);
            source_close(data);
            if (st == SCAN_ERR_INPUT && source_error(inner)[0])
                message_printf(sc->err, sizeof sc->err, "%s", source_error(inner));
            else if (st == SCAN_ERR_INPUT && mark->shard_rule == SHARD_START_SPECULATED) {
                size_t used = strlen(sc->err);
                snprintf(sc->err + used, sizeof sc->err - used,
                         " (this shard guessed its first record from the bytes of its first "
                         "member, at byte %llu; {shard_from_top} finds it from the top of the "
                         "file)", (unsigned long long)mlo);
            }
        }
    }
    if (st == SCAN_OK && shard_read_through(inner, &w, buf) != 0)
        st = scan_fail(sc, SCAN_ERR_INPUT, source_error(inner));
    mark->read_bytes += raw.read_bytes;
    free(win);
    source_close(inner);
    if (st != SCAN_OK) return st;
    /* The modes of the delimiter the scan used. */
    size_t k = 0;
    while (k < ndelims && delims[k] != sc->delim) k++;
    if (k == ndelims) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: the scan chose the delimiter '%c', which the shard did not follow; "
                       "give it with the delimiter option", path, sc->delim);
        return scan_fail(sc, SCAN_ERR_USAGE, NULL);
    }
    mark->shard_map = shard_modes_map(&modes[k]);
    shard_mark(sc, mark);
    for (size_t t = 0; t < sc->nruns; t++) {
        summary *s = sc->runs[t];
        if (!s->nsources) continue;
        summary_source *src = &s->sources[s->nsources - 1];
        snprintf(src->format, sizeof src->format, "%s", format);
        src->raw_bytes = raw.read_bytes; /* compressed, from its first member on */
        src->size_bytes = size;
        src->mtime = mtime;
    }
    return SCAN_OK;
}

static scan_status scan_shard_range(scan_context *sc, const char *path, int fd, uint64_t size,
                                    int64_t mtime, char *buf)
{
    const scan_options *o = &sc->o;
    uint64_t lo = size * (o->shard_index - 1) / o->shard_count;
    uint64_t hi = size * o->shard_index / o->shard_count;
    sc->shard_start = lo;
    sc->shard_end = hi;
    summary_source mark;
    memset(&mark, 0, sizeof mark);
    mark.shard_index = o->shard_index;
    mark.shard_count = o->shard_count;
    /* The file's identity, its format and byte-order mark. */
    size_t idlen;
    if (shard_pread(sc, fd, path, buf, SHARD_ID_BYTES, 0, &idlen) != 0)
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    mark.read_bytes += idlen;
    mark.file_id = XXH3_64bits_withSeed(buf, idlen, size);
    const unsigned char *m = (const unsigned char *)buf;
    const char *kind = idlen >= 2 && m[0] == 0x1f && m[1] == 0x8b ? "gzip"
                       : source_zstd_magic(m, idlen) ? "zstd" : NULL;
    uint32_t member;
    if (kind && kind[0] == 'g' && shard_members_header(m, idlen, &member) == 1)
        return scan_shard_members(sc, path, fd, size, mtime, buf, &mark, 0);
    if (kind && kind[0] == 'z') return scan_shard_members(sc, path, fd, size, mtime, buf, &mark, 1);
    if (kind) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: {shard} splits a compressed file only when it is written in "
                       "independent blocks (gzip as BGZF, e.g. by bgzip from Debian's tabix "
                       "package, or zstd of many frames); this one is gzip in one piece: "
                       "recompress it as BGZF, or split the data into several compressed files and "
                       "scan each as a shard", path);
        return scan_fail(sc, SCAN_ERR_USAGE, NULL);
    }
    uint64_t skip = csv_bom_length(buf, idlen);
    if (hi == 0) lo = 0; /* more shards than bytes: an empty range at the start */
    /* The delimiters the modes follow: the first shard reads the header in
     * its data pass, and the reader's choice (csv_detect_delimiter, or the
     * one given) is known only after it; the modes of the others follow the
     * delimiter of their header pass. */
    static const char guesses[] = {',', '\t', ';', '|', ' '};
    char delims[sizeof guesses];
    size_t ndelims = 0;
    shard_modes modes[sizeof guesses];
    shard_watch w = {0, 0, modes, 1, 0, 0, 0};
    uint64_t first = 0;
    if (lo == 0 && hi > 0) { /* the file's start: mode CSV_AT_FIELD after the mark */
        if (o->delim) delims[ndelims++] = o->delim;
        else
            for (size_t k = 0; k < sizeof guesses; k++) delims[ndelims++] = guesses[k];
        for (size_t k = 0; k < ndelims; k++) shard_modes_init(&modes[k], delims[k]);
        w.nmodes = ndelims;
        mark.shard_rule = SHARD_START_CERTAIN;
        mark.shard_modes = 1u << CSV_AT_FIELD;
        w.from = skip;
        w.to = hi - 1 > skip ? hi - 1 : skip;
    } else {
        /* The header (and the delimiter) from byte 0. */
        shard_watch hw = {0, 0, NULL, 0, 0, 0, 0};
        sc->observe = shard_watch_bytes;
        sc->observe_ctx = &hw;
        sc->header_only = 1;
        scan_status hs = scan_file_range(sc, path, 0, 0);
        sc->header_only = 0;
        sc->observe = NULL;
        mark.read_bytes += hw.seen;
        if (hs != SCAN_OK) return hs;
        delims[ndelims++] = sc->delim;
        shard_modes_init(&modes[0], sc->delim);
        uint64_t anchor = lo > skip + 1 ? lo - 1 : skip, end = hi > skip + 1 ? hi - 1 : skip;
        w.from = anchor;
        w.to = end > anchor ? end : anchor;
        /* The look-ahead: SHARD_FIRST_LOOK bytes, then the whole window
         * when those do not tell. */
        size_t most = (size_t)shard_test_knob("SHEAF_TEST_SHARD_WINDOW", SHARD_LOOK_AHEAD), wlen = 0;
        if (most < 1) most = 1;
        if (most > SHARD_LOOK_AHEAD) most = SHARD_LOOK_AHEAD;
        char *win = malloc(most);
        if (!win) return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
        shard_guess g;
        g.decided = 0;
        for (size_t want = most < SHARD_FIRST_LOOK ? most : SHARD_FIRST_LOOK;; want = most) {
            size_t got;
            if (shard_pread(sc, fd, path, win + wlen, want - wlen, anchor + wlen, &got) != 0) {
                free(win);
                return scan_fail(sc, SCAN_ERR_INPUT, NULL);
            }
            mark.read_bytes += got;
            wlen += got;
            if (!o->shard_from_top && anchor > skip)
                shard_start_guess(win, wlen, anchor + wlen >= size, sc->delim, sc->file_fields,
                                  shard_test_knob("SHEAF_TEST_SHARD_WORST", 0) != 0, &g);
            if (g.decided || wlen < want || want == most || o->shard_from_top || anchor <= skip)
                break;
        }
        size_t fed = w.to - w.from < wlen ? (size_t)(w.to - w.from) : wlen;
        shard_modes_scan(&modes[0], win, fed);
        w.from += fed;
        if (g.decided) {
            first = anchor + g.offset;
            mark.shard_rule = (uint8_t)g.rule;
            mark.shard_modes = g.modes;
        } else {
            csv_quote_mode t;
            if (shard_from_top(sc, fd, path, size, skip, anchor, win, wlen, &w, buf,
                               &mark.read_bytes, &first, &t) != 0) {
                free(win);
                return scan_fail(sc, SCAN_ERR_INPUT, NULL);
            }
            mark.shard_rule = SHARD_START_PREFIX;
            mark.shard_modes = (uint8_t)(1u << t);
        }
        free(win);
        /* The first record (after any blank lines) is the first shard's, even
         * when this range starts before its end. */
        if (first < sc->first_end) first = sc->first_end;
    }
    if (first >= hi && (lo > 0 || hi == 0)) {
        /* No record starts in this range: an empty shard. */
        if (shard_watch_finish(sc, fd, path, &w, buf, &mark.read_bytes) != 0)
            return scan_fail(sc, SCAN_ERR_INPUT, NULL);
        summary_source rec = mark;
        rec.path = (char *)path;
        snprintf(rec.format, sizeof rec.format, "plain");
        rec.size_bytes = size;
        rec.mtime = mtime;
        rec.fingerprint = XXH3_64bits(NULL, 0);
        rec.start_byte = lo;
        rec.end_byte = hi;
        rec.shard_map = shard_modes_map(&modes[0]);
        for (size_t t = 0; t < sc->nruns; t++)
            if (summary_add_source(sc->runs[t], &rec) != 0)
                return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
        return SCAN_OK;
    }
    w.pos = first;
    w.seen = 0;
    sc->observe = shard_watch_bytes;
    sc->observe_ctx = &w;
    scan_status st = scan_file_range(sc, path, first, hi - first);
    sc->observe = NULL;
    if (st == SCAN_ERR_INPUT && mark.shard_rule == SHARD_START_SPECULATED) {
        /* A wrong guess can leave a quote open to the end of the file. */
        size_t used = strlen(sc->err);
        snprintf(sc->err + used, sizeof sc->err - used,
                 " (this shard guessed its first record from the bytes after byte %llu; "
                 "{shard_from_top} finds it from the top of the file)", (unsigned long long)lo);
    }
    if (st != SCAN_OK) return st;
    mark.read_bytes += w.seen;
    /* The modes of the delimiter the scan used (the first shard's from its
     * reader); an unforeseen one is followed by reading the range again. */
    size_t k = 0;
    while (k < ndelims && delims[k] != sc->delim) k++;
    if (k == ndelims) {
        k = 0;
        shard_modes_init(&modes[0], sc->delim);
        w.from = lo == 0 ? skip : w.from;
    }
    if (k) modes[0] = modes[k];
    w.modes = &modes[0];
    w.nmodes = 1;
    if (shard_watch_finish(sc, fd, path, &w, buf, &mark.read_bytes) != 0)
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    mark.shard_map = shard_modes_map(&modes[0]);
    shard_mark(sc, &mark);
    return SCAN_OK;
}

scan_status scan_shard(scan_context *sc, const char *path)
{
    struct stat st;
    if (strcmp(path, "-") != 0 && stat(path, &st) != 0) { /* as a whole scan says it */
        message_printf(sc->err, sizeof sc->err, "%s: cannot open: %s", path, strerror(errno));
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    if (strcmp(path, "-") == 0 || !S_ISREG(st.st_mode)) {
        message_printf(sc->err, sizeof sc->err, "%s: {shard} needs a regular file (not a pipe)",
                       path);
        return scan_fail(sc, SCAN_ERR_USAGE, NULL);
    }
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) {
        message_printf(sc->err, sizeof sc->err, "%s: cannot open: %s", path, strerror(errno));
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    char *buf = malloc(SHARD_BLOCK > SHARD_ID_BYTES ? SHARD_BLOCK : SHARD_ID_BYTES);
    scan_status rc = buf ? scan_shard_range(sc, path, fd, (uint64_t)st.st_size,
                                            (int64_t)st.st_mtime, buf)
                         : scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    free(buf);
    close(fd);
    return rc;
}
