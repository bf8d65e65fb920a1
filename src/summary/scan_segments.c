/* scan_segments: the segments of a scan with checkpoints (see scan.h,
 * scan_options.checkpoint, and DEVELOPERS.md, "Checkpoints and resuming"):
 * the cut that finishes a segment and writes the checkpoint, the start of
 * the next, the point where a resumed scan takes over, and the jump to a
 * restart point. */
#include "summary/scan_context.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "summary/checkpoint.h"

void *scan_hash_save(const XXH3_state_t *h, size_t *len)
{
    uint32_t head[2] = {XXH_VERSION_NUMBER, (uint32_t)sizeof *h};
    uint8_t *b = malloc(sizeof head + sizeof *h);
    if (!b) return NULL;
    XXH3_state_t copy;
    memcpy(&copy, h, sizeof copy);
    copy.extSecret = NULL; /* a pointer into this process: set again by scan_hash_load */
    memcpy(b, head, sizeof head);
    memcpy(b + sizeof head, &copy, sizeof copy);
    *len = sizeof head + sizeof copy;
    return b;
}

int scan_hash_load(XXH3_state_t *to, const void *data, size_t len)
{
    uint32_t head[2];
    if (len != sizeof head + sizeof *to) return -1;
    memcpy(head, data, sizeof head);
    if (head[0] != XXH_VERSION_NUMBER || head[1] != sizeof *to) return -1;
    const unsigned char *secret = to->extSecret;
    memcpy(to, (const uint8_t *)data + sizeof head, sizeof *to);
    to->extSecret = secret;
    return 0;
}

/* The settled summaries of the open segment merged into the finished
 * segments (sc->done_set); sc->runs is then empty.  0, or -1. */
int scan_absorb_segment(scan_context *sc)
{
    summary_set *seg = malloc(sizeof *seg);
    if (!seg) { scan_fail(sc, SCAN_ERR_MEMORY, "out of memory"); return -1; }
    seg->n = sc->nruns;
    seg->parts = sc->runs;
    sc->runs = NULL;
    sc->nruns = 0;
    sc->run = NULL;
    if (!sc->done_set) {
        sc->done_set = seg;
        return 0;
    }
    char why[sizeof sc->err - 64];
    summary_status st = summary_set_merge(sc->done_set, seg, why, sizeof why);
    summary_set_free(seg);
    if (st == SUMMARY_OK) return 0;
    snprintf(sc->err, sizeof sc->err, "joining the scan's segments: %s", why);
    sc->failed = st == SUMMARY_ERR_MEMORY ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT;
    return -1;
}

/* A segment ends before the chunk at `offset` of the current stream (every
 * chunk before it pushed): its summaries are finished and merged into the
 * running result, which goes to the checkpoint and is read back from the
 * bytes written; then fresh summaries and chunk workers take the rest, the
 * stream's lines and rows carried on.  A scan resumed from this checkpoint
 * starts at exactly this state (scan_paths.c). */
scan_status scan_cut(scan_context *sc, uint64_t offset)
{
    scan_status st = chunks_wait(sc->work);
    if (st != SCAN_OK) return scan_worked(sc, st);
    uint64_t lines = chunks_lines(sc->work), rows = sc->rows_before + chunks_rows(sc->work);
    chunks_free(sc->work);
    sc->work = NULL;
    if (scan_settle_runs(sc) != 0 || scan_absorb_segment(sc) != 0) return sc->failed;
    checkpoint c;
    memset(&c, 0, sizeof c);
    c.options = sc->options_text;
    c.nfiles = sc->npaths;
    c.files = calloc(sc->npaths, sizeof *c.files);
    if (!c.files) return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    for (size_t i = 0; i < sc->npaths; i++) {
        struct stat fs;
        c.files[i].path = (char *)sc->paths[i];
        if (i <= sc->file_index) {
            if (stat(sc->paths[i], &fs) != 0) {
                free(c.files);
                snprintf(sc->err, sizeof sc->err, "%s: cannot stat for the checkpoint: %s",
                         sc->paths[i], strerror(errno));
                return scan_fail(sc, SCAN_ERR_INPUT, NULL);
            }
            c.files[i].size_bytes = (uint64_t)fs.st_size;
            c.files[i].mtime_ns = (int64_t)fs.st_mtim.tv_sec * 1000000000 + fs.st_mtim.tv_nsec;
        }
        if (i < sc->file_index) c.files[i].fingerprint = sc->file_prints[i];
    }
    c.file_index = (uint32_t)sc->file_index;
    c.offset = offset;
    c.prefix_hash = XXH3_64bits_digest(sc->prefix);
    c.lines = lines;
    c.rows = rows;
    c.number = ++sc->ckpt_number;
    c.delim = sc->delim;
    c.done = sc->done_set;
    /* The current file's newest restart point before the offset (gzip)
     * whose prefix hash the chunks have passed, with that hash. */
    size_t best = SCAN_POINTS;
    for (size_t k = 0; k < SCAN_POINTS; k++)
        if (sc->point_at[k] && sc->point_at[k] <= offset &&
            (best == SCAN_POINTS || sc->point_at[k] > sc->point_at[best]))
            best = k;
    int got = 0;
    if (sc->src && best < SCAN_POINTS) {
        got = source_mark_at(sc->src, sc->point_at[best], &c.restart, &c.restart_len);
        if (got == 1 && !(c.restart_hash = scan_hash_save(sc->point_hash[best], &c.restart_hash_len)))
            got = -1;
    }
    if (got < 0) {
        free(c.files);
        free(c.restart);
        return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    }
    summary_set *reread;
    char why[sizeof sc->err - 64];
    checkpoint_status cs = checkpoint_write(sc->o.checkpoint, &c, sc->o.checkpoint_pause,
                                            sc->o.checkpoint_pause_ctx, &reread, why, sizeof why);
    free(c.files);
    free(c.restart);
    free(c.restart_hash);
    if (cs != CHECKPOINT_OK)
        return scan_fail(sc, cs == CHECKPOINT_MEMORY ? SCAN_ERR_MEMORY : SCAN_ERR_WRITE, why);
    summary_set_free(sc->done_set);
    sc->done_set = reread;
    return scan_segment_start(sc, lines, rows);
}

scan_status scan_segment_start(scan_context *sc, uint64_t lines, uint64_t rows)
{
    if (!sc->runs && scan_make_runs(sc) != 0) return scan_fail(sc, SCAN_ERR_MEMORY, NULL);
    if (!sc->work && scan_start_work(sc) != 0)
        return scan_fail(sc, SCAN_ERR_MEMORY,
                         "out of memory: the chunk buffers and worker threads of the scan");
    chunks_stream(sc->work, sc->shown, sc->stop_at, lines);
    sc->rows_before = rows;
    sc->seg_bytes = 0;
    return SCAN_OK;
}

/* Resuming: the chunk at the checkpoint's offset, after the chunks before
 * it were only hashed.  It must begin exactly there, after the very bytes
 * the checkpoint saw. */
scan_status scan_resume_here(scan_context *sc, const reader_chunk *ch)
{
    sc->skipping = 0;
    if (ch->offset != sc->skip_to || XXH3_64bits_digest(sc->prefix) != sc->skip_hash) {
        snprintf(sc->err, sizeof sc->err,
                 "%s: its first %llu bytes differ from those checkpoint %s was written after "
                 "(the file changed); start again without {resume}",
                 sc->name, (unsigned long long)sc->skip_to, sc->o.checkpoint);
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    if (!sc->work) {
        snprintf(sc->err, sizeof sc->err, "%s: no header before byte %llu, where checkpoint %s "
                 "resumes; start again without {resume}",
                 sc->name, (unsigned long long)sc->skip_to, sc->o.checkpoint);
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    return scan_segment_start(sc, sc->skip_lines, sc->skip_rows);
}

/* Resuming at a restart point: the decoded bytes [sc->jump_from, skip_to)
 * of src hashed after the restored prefix state and dropped, so that the
 * reader starts at the checkpoint's offset with sc->prefix as a scan from
 * byte 0 would have it there. */
static scan_status jump_ahead(scan_context *sc, source *src)
{
    XXH3_copyState(sc->prefix, sc->jump_hash);
    uint64_t at = sc->jump_from;
    if (source_kind(src) == SOURCE_GZIP) { /* the restored point: the source keeps it too */
        XXH3_copyState(sc->point_hash[sc->point_next], sc->jump_hash);
        sc->point_at[sc->point_next] = at;
        sc->point_next = (sc->point_next + 1) % SCAN_POINTS;
    }
    size_t cap = 1u << 20;
    char *buf = at < sc->skip_to ? malloc(cap) : NULL;
    if (at < sc->skip_to && !buf) return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    sc->src = src; /* restart points among the skipped bytes */
    while (at < sc->skip_to) {
        uint64_t left = sc->skip_to - at;
        ssize_t n = source_read(src, buf, left < cap ? (size_t)left : cap);
        if (n < 0) {
            free(buf);
            sc->src = NULL;
            return scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT,
                             source_error(src));
        }
        if (n == 0) break;
        scan_prefix_update(sc, buf, (size_t)n, at);
        at += (uint64_t)n;
        uint64_t drop[64];
        while (source_take_starts(src, drop, 64) == 64) {} /* members begun before the offset */
    }
    free(buf);
    sc->src = NULL;
    /* The first chunk (at skip_to) is checked against the checkpoint's
     * prefix hash by scan_resume_here, as after a fast-forward; a file
     * that ends before the offset is refused by end(). */
    reader_start(sc->rd, sc->shown, 0, sc->delim, 0);
    reader_rebase(sc->rd, at);
    sc->at_first = 0;
    return SCAN_OK;
}

scan_status scan_source_checked(scan_context *sc, source *src)
{
    if (!sc->jump) return scan_source(sc, src);
    sc->jump = 0;
    /* The header (and the delimiter) from a separate read of the file's
     * start, as a shard reads it; the skipping waits meanwhile. */
    errno = 0;
    source *hs = source_open(source_path(src), sc->err, sizeof sc->err);
    if (!hs) return scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, NULL);
    int skipping = sc->skipping;
    sc->skipping = 0;
    sc->header_only = 1;
    scan_status st = scan_begin_at(sc, source_path(src), 0, 0);
    if (st == SCAN_OK) st = scan_pull(sc, hs, 0);
    sc->header_only = 0;
    sc->skipping = skipping;
    source_close(hs);
    if (st != SCAN_OK) return st;
    st = scan_begin_at(sc, source_path(src), 0, 0);
    if (st == SCAN_OK) st = jump_ahead(sc, src);
    return st != SCAN_OK ? st : scan_pull(sc, src, 0);
}
