/* stream: see stream.h.
 *
 * A chunk's tag says which file it belongs to, whether it is the file's
 * first chunk (the commit restarts its line count) and whether its first
 * record is the file's first (the workers tell `row`, or skip it).
 */
#include "pass/stream.h"

#include "acc/blas.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "io/closest.h"
#include "io/message.h"
#include "io/pipeline.h"
#include "io/reader.h"
#include "io/source.h"

#define TAG_FILE_START 1u  /* the file's first chunk */
#define TAG_FIRST 2u       /* the chunk's first record is the file's first */
#define TAG_SKIP 4u        /* ... and the workers skip it */
#define TAG_RING_SHIFT 3   /* then the chunk's entry in the ring of repeated headers */
#define TAG_RING_MASK 0xffffu
#define TAG_SHIFT 19       /* the file's index above these bits */

/* The repeated headers of a chunk in flight (reader_repeated_headers): the
 * reading thread fills entry (push count mod ring) before the push, the
 * chunk's worker reads it; more entries than chunks can be in flight. */
typedef struct {
    uint64_t *at;          /* stream offsets of the records to skip, ascending */
    size_t n, cap;
} repeats;

typedef struct {
    const stream_options *o;
    const stream_handler *h;
    void *ctx;
    const char *const *paths;
    reader_options ropt;     /* the workers' cursors read with these */
    reader_options hopt;     /* the first record's cursor: raw, leaves the bytes alone */
    reader *rd;              /* the reading thread's chunks */
    reader_cursor hcur;      /* the first record of each file */
    pipeline *p;
    reader_cursor *cursors;  /* one per slot */
    unsigned nslots;
    char delim;              /* the first file's delimiter, once it had a record */
    uint64_t total_bytes;    /* the files' sizes (progress), 0 if unknown */
    uint64_t done_bytes;     /* raw bytes of the files before the current one */
    /* Commit side (one commit at a time): */
    uint64_t lines_before;   /* lines of the current file's chunks committed so far */
    char *err;               /* the caller's message buffer */
    size_t errlen;
    char *msg;               /* the reading thread's message, until it is the run's */
    repeats *ring;           /* per chunk in flight: its repeated headers */
    unsigned nring;
    uint64_t pushed;         /* chunks pushed */
    char *head;              /* the current file's header line (raw, no line end), or NULL */
    size_t head_len;
} run;

static int work(void *ctx, unsigned slot, pipeline_job *job)
{
    run *r = ctx;
    reader_cursor *c = &r->cursors[slot];
    size_t file = (size_t)(job->tag >> TAG_SHIFT);
    int first = (job->tag & TAG_FIRST) != 0, skip = (job->tag & TAG_SKIP) != 0;
    const repeats *rep = &r->ring[(job->tag >> TAG_RING_SHIFT) & TAG_RING_MASK];
    size_t next_repeat = 0;
    reader_cursor_start(c, &job->ck, 0, 0);
    for (;;) {
        reader_record rec;
        reader_status st = reader_cursor_next(c, &rec);
        if (st == READER_RECORD) {
            if (first && skip) { first = 0; continue; }
            while (next_repeat < rep->n && rep->at[next_repeat] < rec.offset) next_repeat++;
            if (next_repeat < rep->n && rep->at[next_repeat] == rec.offset) continue;
            if (r->h->row(r->ctx, slot, file, &rec, first) != 0) return r->h->memory_error;
            first = 0;
        } else if (st == READER_ERROR) {
            return r->h->input_error;
        } else { /* READER_CHUNK_END (no stop offset: never READER_END) */
            return r->h->chunk_end(r->ctx, slot, file) != 0 ? r->h->memory_error : 0;
        }
    }
}

static int commit(void *ctx, unsigned slot, pipeline_job *job, int work_rc)
{
    run *r = ctx;
    if (job->tag & TAG_FILE_START) r->lines_before = 0;
    int rc = r->h->commit(r->ctx, slot, r->err, r->errlen);
    if (rc) return rc;
    const reader_cursor *c = &r->cursors[slot];
    if (work_rc == r->h->input_error && c->fault != READER_FAULT_NONE) {
        reader_cursor_message(c, r->paths[job->tag >> TAG_SHIFT], r->lines_before, r->err,
                              r->errlen);
        return c->fault == READER_FAULT_NOMEM ? r->h->memory_error : r->h->input_error;
    }
    if (work_rc) {
        snprintf(r->err, r->errlen,
                 "out of memory: a worker's row buffers, or %s, did not fit (fewer threads "
                 "need less: {threads})",
                 blas_buffer_what());
        return work_rc;
    }
    r->lines_before += c->lines;
    return 0;
}

/* The run's code for a pipeline code (its own are negative). */
static int outcome(run *r, int rc)
{
    if (rc >= 0) return rc;
    snprintf(r->err, r->errlen, "out of memory: a chunk's buffer could not grow to hold its "
             "records (fewer threads hold fewer chunks: {threads})");
    return r->h->memory_error;
}

/* A failure met on the reading thread (message in r->msg): it is the run's
 * unless a chunk pushed before it fails. */
static int reading_failed(run *r, int code)
{
    int rc = pipeline_wait(r->p);
    if (rc) return outcome(r, rc);
    message_printf(r->err, r->errlen, "%s", r->msg);
    return code;
}

/* reader_next_chunk failed: the run's failure unless a chunk pushed before
 * fails; a record past the limit is named by its line, from the lines of
 * the file's chunks before it (pushed: some were). */
static int chunk_failed(run *r, int code, int pushed)
{
    int rc = pipeline_wait(r->p);
    if (rc) return outcome(r, rc);
    if (!reader_too_long_message(r->rd, pushed ? r->lines_before : 0, r->err, r->errlen))
        message_printf(r->err, r->errlen, "%s", reader_error(r->rd));
    return code;
}

static int stream_file(run *r, size_t file)
{
    const char *path = r->paths[file];
    const stream_handler *h = r->h;
    source *src = source_open(path, r->msg, r->errlen);
    if (!src) return reading_failed(r, h->input_error);
    reader_start(r->rd, path, 1, r->o->same_delimiter ? r->delim : 0, 0);
    uint64_t tag = (uint64_t)file << TAG_SHIFT | TAG_FILE_START;
    uint64_t lines = 0; /* lines before the first record (blank-line chunks) */
    int seen = 0, rc = 0;
    while (!rc) {
        reader_chunk ch;
        reader_status st = reader_next_chunk(r->rd, &ch);
        if (st == READER_CHUNK) {
            if (!seen) {
                reader_record rec;
                reader_cursor_start(&r->hcur, &ch, 0, 0);
                reader_status hs = reader_cursor_next(&r->hcur, &rec);
                if (hs == READER_ERROR) {
                    reader_cursor_message(&r->hcur, path, lines, r->msg, r->errlen);
                    rc = reading_failed(r, r->hcur.fault == READER_FAULT_NOMEM ? h->memory_error
                                                                                : h->input_error);
                    break;
                }
                if (hs == READER_RECORD) {
                    int skip = 0;
                    rec.line += lines;
                    int frc = h->first(r->ctx, file, path, r->rd, &rec, &skip, r->msg, r->errlen);
                    if (frc) { rc = reading_failed(r, frc); break; }
                    if (!r->delim) r->delim = reader_delim(r->rd);
                    seen = 1;
                    free(r->head);
                    r->head = NULL;
                    if (r->o->header) { /* recognized again where a member begins */
                        r->head_len = (size_t)(rec.eol - rec.text);
                        r->head = malloc(r->head_len ? r->head_len : 1);
                        if (!r->head) {
                            snprintf(r->msg, r->errlen, "out of memory");
                            rc = reading_failed(r, h->memory_error);
                            break;
                        }
                        memcpy(r->head, rec.text, r->head_len);
                    }
                    tag |= TAG_FIRST | (skip ? TAG_SKIP : 0);
                } else { /* READER_CHUNK_END: blank lines only */
                    lines += r->hcur.lines;
                }
            }
            unsigned e = (unsigned)(r->pushed++ % r->nring);
            repeats *rep = &r->ring[e];
            rep->n = 0;
            if (ch.nstarts && r->head) {
                if (ch.nstarts > rep->cap) {
                    uint64_t *p = realloc(rep->at, ch.nstarts * sizeof *p);
                    if (!p) {
                        snprintf(r->msg, r->errlen, "out of memory");
                        rc = reading_failed(r, h->memory_error);
                        break;
                    }
                    rep->at = p;
                    rep->cap = ch.nstarts;
                }
                rep->n = reader_repeated_headers(&ch, r->head, r->head_len, reader_delim(r->rd),
                                                 rep->at, rep->cap);
            }
            rc = outcome(r, pipeline_push(r->p, &ch, tag | (uint64_t)e << TAG_RING_SHIFT, r->rd));
            tag = (uint64_t)file << TAG_SHIFT;
        } else if (st == READER_WANT) {
            int got = reader_pull(r->rd, src);
            if (got < 0) {
                message_printf(r->msg, r->errlen, "%s", reader_error(r->rd));
                rc = reading_failed(r, h->input_error);
            } else if (r->o->progress) {
                r->o->progress(r->o->progress_ctx, r->done_bytes + source_raw_offset(src),
                               r->total_bytes);
            }
        } else if (st == READER_END) {
            break;
        } else {
            rc = chunk_failed(r, h->input_error, !(tag & TAG_FILE_START));
        }
    }
    if (!rc && !seen && r->o->require_records) {
        message_printf(r->msg, r->errlen, "%s: no records (empty input)", path);
        rc = reading_failed(r, h->input_error);
    }
    r->done_bytes += source_raw_offset(src);
    source_close(src);
    return rc;
}

int stream_files(const stream_options *o, const stream_handler *h, void *ctx,
                 const char *const *paths, size_t npaths, char *err, size_t errlen)
{
    run r;
    memset(&r, 0, sizeof r);
    r.o = o;
    r.h = h;
    r.ctx = ctx;
    r.paths = paths;
    r.err = err;
    r.errlen = errlen;
    r.ropt = o->read;
    r.hopt = o->read;
    r.hopt.raw = 1;
    /* Sizes for the progress line, from the file system (nothing is read). */
    for (size_t i = 0; i < npaths; i++) {
        struct stat st;
        if (strcmp(paths[i], "-") && stat(paths[i], &st) == 0 && S_ISREG(st.st_mode))
            r.total_bytes += (uint64_t)st.st_size;
    }
    unsigned threads = o->threads ? o->threads : pipeline_cpus();
    reader_cursor_init(&r.hcur, &r.hopt);
    r.msg = malloc(errlen ? errlen : 1);
    r.rd = reader_create(&r.ropt);
    r.p = pipeline_create(threads, 2 * threads, work, commit, &r);
    if (r.p) {
        r.nslots = pipeline_slots(r.p);
        r.cursors = calloc(r.nslots, sizeof *r.cursors);
        r.nring = 2 * r.nslots + 2 <= TAG_RING_MASK + 1 ? 2 * r.nslots + 2 : TAG_RING_MASK + 1;
        r.ring = calloc(r.nring, sizeof *r.ring);
    }
    int rc = 0;
    if (!r.msg || !r.rd || !r.p || !r.cursors || !r.ring || h->slots(ctx, r.nslots) != 0) {
        snprintf(err, errlen, "out of memory: the reader and chunk slots of the pass");
        rc = h->memory_error;
    } else {
        for (unsigned i = 0; i < r.nslots; i++) reader_cursor_init(&r.cursors[i], &r.ropt);
        for (size_t i = 0; !rc && i < npaths; i++) rc = stream_file(&r, i);
        if (!rc) rc = outcome(&r, pipeline_wait(r.p));
    }
    pipeline_free(r.p); /* workers stopped before their cursors go */
    for (unsigned i = 0; r.cursors && i < r.nslots; i++) reader_cursor_free(&r.cursors[i]);
    free(r.cursors);
    for (unsigned i = 0; r.ring && i < r.nring; i++) free(r.ring[i].at);
    free(r.ring);
    free(r.head);
    reader_cursor_free(&r.hcur);
    reader_free(r.rd);
    free(r.msg);
    return rc;
}

void stream_suggest_column(const csv_field *fields, size_t n, int header, const char *name,
                           char *msg, size_t msglen)
{
    size_t total = 0;
    for (size_t i = 0; i < n; i++) total += fields[i].len + 24;
    char *names = malloc(total ? total : 1);
    if (!names) return; /* the message stands without the hint */
    closest c;
    closest_init(&c, name, strlen(name));
    char *at = names;
    for (size_t i = 0; i < n; i++) {
        size_t len = reader_column_name(&fields[i], i, header, 1, at);
        closest_offer(&c, at, len);
        at += len;
    }
    closest_append(&c, "columns", msg, msglen);
    free(names);
}
