/* scan_segments: the segments of a scan with checkpoints (see scan.h,
 * scan_options.checkpoint, and DEVELOPERS.md, "Checkpoints and resuming"):
 * the cut that finishes a segment and writes the checkpoint, the start of
 * the next, the point where a resumed scan takes over, and the jump to a
 * restart point. */
#include "io/message.h"
#include "summary/scan_context.h"

#include <errno.h>
#include <pthread.h>
#include <signal.h>
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

/* seg (settled) merged into *done, or made *done when there is none; seg is
 * consumed.  SUMMARY_OK, or the failure with its message in why. */
static summary_status merge_segment(summary_set **done, summary_set *seg, char *why, size_t len)
{
    if (!*done) {
        *done = seg;
        return SUMMARY_OK;
    }
    summary_status st = summary_set_merge(*done, seg, why, len);
    summary_set_free(seg);
    return st;
}

static scan_status merge_failed(summary_status st)
{
    return st == SUMMARY_ERR_MEMORY ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT;
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
    char why[sizeof sc->err - 64];
    summary_status st = merge_segment(&sc->done_set, seg, why, sizeof why);
    if (st == SUMMARY_OK) return 0;
    snprintf(sc->err, sizeof sc->err, "joining the scan's segments: %s", why);
    sc->failed = merge_failed(st);
    return -1;
}

/* A cut's second half: the segment's summaries settled, merged into the
 * finished ones, written to the checkpoint and read back.  With threads it
 * runs on a thread of its own while the workers scan the next segment, so
 * the scan does not stand still while the checkpoint is written; the
 * next cut, or the end of the scan, waits for it (scan_cut_join).  It
 * touches nothing the scan still uses: the segment's summaries are its
 * own, and fresh ones take the next segment. */
typedef struct scan_cut_job {
    pthread_t thread;
    int threaded;
    summary_set *done;   /* in: the finished segments (NULL: none); out: with this one,
                            as read back from the checkpoint */
    summary_set *seg;    /* the segment's summaries, not settled yet */
    checkpoint c;        /* what the checkpoint records (files, restart point and its
                            hash owned; c.done set here) */
    const scan_options *o; /* the scan's: the checkpoint's path, the test hook */
    scan_status failed;
    char err[sizeof ((scan_context *)0)->err];
} scan_cut_job;

static void cut_work(scan_cut_job *j)
{
    if (scan_settle(j->seg->parts, j->seg->n, 1, 1) != 0) {
        j->failed = SCAN_ERR_MEMORY;
        snprintf(j->err, sizeof j->err, "out of memory");
        return;
    }
    char why[sizeof j->err - 64];
    summary_status ms = merge_segment(&j->done, j->seg, why, sizeof why);
    j->seg = NULL;
    if (ms != SUMMARY_OK) {
        j->failed = merge_failed(ms);
        snprintf(j->err, sizeof j->err, "joining the scan's segments: %s", why);
        return;
    }
    /* The merged summaries go once written: the copy read back replaces
     * them, and the two are never held at once. */
    j->c.done = j->done;
    j->c.drop_done = 1;
    j->done = NULL;
    checkpoint_status cs = checkpoint_write(j->o->checkpoint, &j->c, j->o->checkpoint_pause,
                                            j->o->checkpoint_pause_ctx, &j->done, why, sizeof why);
    j->c.done = NULL;
    if (cs != CHECKPOINT_OK) {
        j->failed = cs == CHECKPOINT_MEMORY ? SCAN_ERR_MEMORY : SCAN_ERR_WRITE;
        message_printf(j->err, sizeof j->err, "%s", why);
    }
}

static void *cut_thread(void *arg)
{
    cut_work(arg);
    return NULL;
}

static void cut_job_free(scan_cut_job *j)
{
    summary_set_free(j->seg);
    summary_set_free(j->done);
    free(j->c.files);
    free(j->c.restart);
    free(j->c.restart_hash);
    free(j);
}

/* The cut job, taken from the scan once it has ended, or NULL. */
static scan_cut_job *cut_wait(scan_context *sc)
{
    scan_cut_job *j = sc->cut_job;
    sc->cut_job = NULL;
    if (j && j->threaded) pthread_join(j->thread, NULL);
    return j;
}

scan_status scan_cut_join(scan_context *sc)
{
    scan_cut_job *j = cut_wait(sc);
    if (!j) return SCAN_OK;
    scan_status st = j->failed;
    if (st != SCAN_OK) {
        if (sc->failed == SCAN_OK) scan_fail(sc, st, j->err);
    } else {
        sc->done_set = j->done; /* NULL until now: the job had it */
        j->done = NULL;
    }
    cut_job_free(j);
    return st;
}

void scan_cut_drop(scan_context *sc)
{
    scan_cut_job *j = cut_wait(sc);
    if (j) cut_job_free(j);
    for (size_t k = 0; sc->known && k < sc->nknown; k++) values_free(sc->known[k]);
    free(sc->known);
    sc->known = NULL;
}

/* The value-table keys of parts (summaries of the finished segments, one
 * per target, columns as the plan's) added to sc->known: what a later
 * segment's tables admit as one scan's table would (values_admit_after), so
 * that merging the segments keeps the first --max-levels values of the
 * stream with their exact counts, as a scan without checkpoints does.  The
 * segments' own keys always fit: each admitted only the room the ones
 * before left.  0, or -1 when out of memory. */
int scan_known_add(scan_context *sc, summary *const *parts, size_t nparts)
{
    size_t ncols = sc->plan.n;
    if (!sc->known) {
        sc->nknown = nparts * ncols;
        if (!(sc->known = calloc(sc->nknown ? sc->nknown : 1, sizeof *sc->known))) return -1;
    }
    for (size_t t = 0; t < nparts && t * ncols < sc->nknown; t++)
        for (size_t c = 0; c < ncols; c++) {
            values **k = &sc->known[t * ncols + c];
            const values *v = parts[t]->cols[c].vals;
            if (!*k && !(*k = values_create(values_max_levels(v), 0))) return -1;
            if (values_merge(*k, v) != 0) return -1;
        }
    return 0;
}

/* Starts j on a thread of its own with every signal blocked there (they go
 * to the scan's threads, as before).  0, or -1 when no thread can start. */
static int cut_start(scan_cut_job *j)
{
    sigset_t all, old;
    sigfillset(&all);
    pthread_sigmask(SIG_SETMASK, &all, &old);
    int rc = pthread_create(&j->thread, NULL, cut_thread, j);
    pthread_sigmask(SIG_SETMASK, &old, NULL);
    if (rc != 0) return -1;
    j->threaded = 1;
    return 0;
}

/* A segment ends before the chunk at `offset` of the current stream (every
 * chunk before it pushed): its summaries are finished and merged into the
 * running result, which goes to the checkpoint and is read back from the
 * bytes written (the job above: on its own thread when the scan has
 * threads); then fresh summaries and chunk workers take the rest, the
 * stream's lines and rows carried on.  A scan resumed from this checkpoint
 * starts at exactly this state (scan_paths.c). */
scan_status scan_cut(scan_context *sc, uint64_t offset)
{
    scan_status st = chunks_wait(sc->work);
    if (st != SCAN_OK) return scan_worked(sc, st);
    uint64_t lines = chunks_lines(sc->work), rows = sc->rows_before + chunks_rows(sc->work);
    chunks_free(sc->work);
    sc->work = NULL;
    if (scan_cut_join(sc) != SCAN_OK) return sc->failed;
    scan_cut_job *j = calloc(1, sizeof *j);
    summary_set *seg = malloc(sizeof *seg);
    checkpoint *c = j ? &j->c : NULL;
    if (c) c->files = calloc(sc->npaths, sizeof *c->files);
    /* The segment's keys join the known ones while nothing feeds it. */
    if (!j || !seg || !c->files || scan_known_add(sc, sc->runs, sc->nruns) != 0) {
        if (j) free(c->files);
        free(j);
        free(seg);
        return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    }
    seg->n = sc->nruns;
    seg->parts = sc->runs;
    sc->runs = NULL;
    sc->nruns = 0;
    sc->run = NULL;
    j->seg = seg;
    j->done = sc->done_set;
    sc->done_set = NULL;
    j->o = &sc->o;
    sc->cut_job = j; /* from here on, whatever fails, scan_free frees it */
    c->options = sc->options_text;
    c->nfiles = sc->npaths;
    for (size_t i = 0; i < sc->npaths; i++) {
        struct stat fs;
        c->files[i].path = (char *)sc->paths[i];
        if (i <= sc->file_index) {
            if (stat(sc->paths[i], &fs) != 0) {
                message_printf(sc->err, sizeof sc->err, "%s: cannot stat for the checkpoint: %s",
                               sc->paths[i], strerror(errno));
                return scan_fail(sc, SCAN_ERR_INPUT, NULL);
            }
            c->files[i].size_bytes = (uint64_t)fs.st_size;
            c->files[i].mtime_ns = (int64_t)fs.st_mtim.tv_sec * 1000000000 + fs.st_mtim.tv_nsec;
        }
        if (i < sc->file_index) c->files[i].fingerprint = sc->file_prints[i];
    }
    c->file_index = (uint32_t)sc->file_index;
    c->offset = offset;
    c->prefix_hash = XXH3_64bits_digest(sc->prefix);
    c->lines = lines;
    c->rows = rows;
    c->number = ++sc->ckpt_number;
    c->delim = sc->delim;
    /* The current file's newest restart point before the offset (gzip)
     * whose prefix hash the chunks have passed, with that hash. */
    size_t best = SCAN_POINTS;
    for (size_t k = 0; k < SCAN_POINTS; k++)
        if (sc->point_at[k] && sc->point_at[k] <= offset &&
            (best == SCAN_POINTS || sc->point_at[k] > sc->point_at[best]))
            best = k;
    int got = 0;
    if (sc->src && best < SCAN_POINTS) {
        got = source_mark_at(sc->src, sc->point_at[best], &c->restart, &c->restart_len);
        if (got == 1 &&
            !(c->restart_hash = scan_hash_save(sc->point_hash[best], &c->restart_hash_len)))
            got = -1;
    }
    if (got < 0) return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    if (sc->threads <= 1 || cut_start(j) != 0) {
        cut_work(j);
        if (scan_cut_join(sc) != SCAN_OK) return sc->failed;
    }
    return scan_segment_start(sc, lines, rows);
}

scan_status scan_segment_start(scan_context *sc, uint64_t lines, uint64_t rows)
{
    if (!sc->runs && scan_make_runs(sc) != 0) return scan_fail(sc, SCAN_ERR_MEMORY, NULL);
    /* Resuming: the keys of the checkpoint's finished segments (after a cut
     * the scan has them already; the plan's columns are known by now). */
    if (!sc->known && sc->done_set &&
        scan_known_add(sc, sc->done_set->parts, sc->done_set->n) != 0)
        return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    for (size_t t = 0; sc->known && t < sc->nruns; t++) /* after a cut, or resuming */
        for (size_t c = 0; c < sc->plan.n && t * sc->plan.n + c < sc->nknown; c++)
            values_admit_after(sc->runs[t]->cols[c].vals, sc->known[t * sc->plan.n + c]);
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
        message_printf(sc->err, sizeof sc->err,
                       "%s: its first %llu bytes differ from those checkpoint %s was written after "
                       "(the file changed); start again without {resume}", sc->name,
                       (unsigned long long)sc->skip_to, sc->o.checkpoint);
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    if (!sc->work) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: no header before byte %llu, where checkpoint %s resumes; start again "
                       "without {resume}", sc->name, (unsigned long long)sc->skip_to,
                       sc->o.checkpoint);
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
        /* Members begun before the offset; those found past it are the
         * scan's (a read-ahead thread may have decoded that far). */
        source_drop_starts_before(src, sc->skip_to);
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
