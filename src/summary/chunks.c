/* chunks: see chunks.h.
 *
 * Jobs live in a ring of slots indexed by seq % nslots.  Under one mutex:
 *   t_next    the next chunk to tokenize (T runs in any order, but is
 *             handed out in push order);
 *   r_next    the next chunk for R (chunks before it are through R);
 *   g_next[j] the next chunk for column j;
 *   c_next    the next chunk for the co-moments;
 *   retired   chunks before it are done and their slots free.
 * A worker takes the oldest ready task: R first (it unlocks the columns),
 * then C or the oldest of its own column groups, then T, then another
 * worker's group (pick).
 */
#include "io/clones.h"
#include "summary/chunks.h"

#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#define XXH_INLINE_ALL
#include <xxhash.h>

#include "io/number.h"
#include "io/number_simd.h"
#include "acc/blas.h"
#include "summary/block.h"
#include "summary/column.h"

#include "io/message.h"
#include "summary/chunks_state.h"

/* ---- T: tokenize --------------------------------------------------------- */

/* Room for more rows in the chunk's arrays, and in *rows (the tokenizer's
 * view of them); 0, or -1 when out of memory. */
static int grow_rows(chunks *w, job *j, csv_rows *rows)
{
    /* From 1,024 rows, grown by a quarter: a slot's arrays are kept from
     * chunk to chunk, so they settle within a quarter of the most rows a
     * chunk has held (a 256 KiB chunk of the 28-column benchmark table has
     * about 1,240; doubling from 4,096 kept three times that). */
    size_t old = j->rows_cap, cap = old ? old + old / 4 : 1024, width = w->kept_fields;
    csv_span *cells = realloc(j->cells, width * cap * sizeof *cells);
    if (cells) {
        /* Each field's column to its new place, the last first (they only
         * move up).  Only the rows written so far are kept. */
        for (size_t f = width; f-- > 1 && rows->rows;)
            memmove(cells + f * cap, cells + f * old, rows->rows * sizeof *cells);
        j->cells = cells;
    }
    uint64_t *line = realloc(j->line, cap * sizeof *line);
    if (line) j->line = line;
    uint32_t *nf = realloc(j->nf, cap * sizeof *nf);
    if (nf) j->nf = nf;
    csv_span *record = realloc(j->record, cap * sizeof *record);
    if (record) j->record = record;
    unsigned char *rewritten = realloc(j->rewritten, cap);
    if (rewritten) j->rewritten = rewritten;
    if (!cells || !line || !nf || !record || !rewritten) return -1;
    j->rows_cap = cap;
    rows->cells = j->cells;
    rows->stride = rows->max_rows = cap;
    rows->nfields = j->nf;
    rows->line = j->line;
    rows->records = j->record;
    rows->rewritten = j->rewritten;
    return 0;
}

static void tokenize(chunks *w, job *j)
{
    j->rows = 0;
    j->fault = FAULT_NONE;
    j->repeated = 0;
    if (j->ck.len > UINT32_MAX - 64) { j->fault = FAULT_TOO_BIG; return; }
    reader_cursor_start(&j->cur, &j->ck, w->stop_at, j->first);
    csv_rows rows = {.cells = j->cells, .stride = j->rows_cap, .width = w->kept_fields,
                     .max_rows = j->rows_cap, .nfields = j->nf, .line = j->line,
                     .base = j->ck.data, .records = j->record, .rewritten = j->rewritten};
    if (!j->rows_cap && grow_rows(w, j, &rows) != 0) { j->fault = FAULT_MEMORY; return; }
    reader_status rs = READER_RECORD;
    if (j->first && w->o.header) { /* the header, read by the reading thread: row 0, dropped */
        rows.max_rows = 1;
        rs = reader_cursor_rows(&j->cur, &rows);
        rows.rows = 0;
        rows.max_rows = j->rows_cap;
    }
    reader_cursor_skip(&j->cur, j->repeats, j->nrepeats);
    while (rs == READER_RECORD) {
        rs = reader_cursor_rows(&j->cur, &rows);
        if (rs == READER_RECORD && grow_rows(w, j, &rows) != 0) {
            j->fault = FAULT_MEMORY;
            return;
        }
    }
    if (rs == READER_ERROR)
        j->fault = j->cur.fault == READER_FAULT_NOMEM ? FAULT_MEMORY : FAULT_READER;
    j->rows = rows.rows;
    j->repeated = j->cur.skipped; /* headers repeated where a compressed member begins */
}

/* ---- scheduling ------------------------------------------------------------ */

typedef enum { TASK_NONE, TASK_T, TASK_R, TASK_G, TASK_C, TASK_FLUSH } task_kind;

static job *slot_of(chunks *w, uint64_t seq) { return &w->jobs[seq % w->nslots]; }

static uint64_t min_g(const chunks *w)
{
    uint64_t m = w->r_next;
    for (size_t g = 0; g < w->ngroups; g++)
        if (w->g_next[g] < m) m = w->g_next[g];
    return m;
}

/* Frees the slots of chunks that are done.  Under the lock. */
static void retire(chunks *w)
{
    uint64_t done = w->ncomo ? w->c_next : min_g(w);
    if (done > w->retired) {
        w->retired = done;
        pthread_cond_broadcast(&w->done_cv);
    }
}

static scan_status fail_locked(chunks *w, scan_status st)
{
    if (!w->failed) w->failed = st;
    pthread_cond_broadcast(&w->done_cv);
    pthread_cond_broadcast(&w->work_cv);
    return st;
}

/* The oldest ready task.  Under the lock. */
static task_kind pick(chunks *w, unsigned id, uint64_t *seq, size_t *col, int blas)
{
    if (w->failed) return TASK_NONE;
    if (w->flush_wanted && blas && !w->c_busy) { /* chunks_wait: every chunk is done */
        w->c_busy = 1;
        return TASK_FLUSH;
    }
    if (!w->r_busy && w->r_next < w->pushed && slot_of(w, w->r_next)->t_state == T_DONE) {
        w->r_busy = 1;
        *seq = w->r_next;
        return TASK_R;
    }
    /* A worker keeps to its own groups (g % threads == id) while one is
     * ready, so that a column's tables stay in one core's caches; when none
     * of its own is, it tokenizes a chunk ahead (the spare slot,
     * chunks_slots, keeps one to take), and takes another's group only when
     * there is none: 28 columns at -j2, medians of 7: 1.041 -> 0.994 s, CPU
     * 2.009 -> 1.929 s (bench/threads-notes.md). */
    size_t best = (size_t)-1, any = (size_t)-1;
    for (size_t g = 0; g < w->ngroups; g++) {
        if (w->g_busy[g] || w->g_next[g] >= w->r_next) continue;
        if (any == (size_t)-1 || w->g_next[g] < w->g_next[any]) any = g;
        if (g % w->o.threads == id && (best == (size_t)-1 || w->g_next[g] < w->g_next[best]))
            best = g;
    }
    int ahead = w->t_next < w->pushed;
    if (best == (size_t)-1 && !ahead) best = any;
    if (w->ncomo && blas && !w->c_busy && w->c_next < min_g(w) &&
        (best == (size_t)-1 || w->c_next <= w->g_next[best])) {
        w->c_busy = 1;
        *seq = w->c_next;
        return TASK_C;
    }
    if (best != (size_t)-1) {
        w->g_busy[best] = 1;
        *seq = w->g_next[best];
        *col = best;
        return TASK_G;
    }
    if (w->t_next < w->pushed) {
        *seq = w->t_next++;
        slot_of(w, *seq)->t_state = T_BUSY;
        return TASK_T;
    }
    return TASK_NONE;
}

/* Runs a task outside the lock; returns its status.  A failing task leaves
 * its message in msg (the row task: in w->r_err); finish_task keeps the
 * first. */
static scan_status run_task(chunks *w, task_kind t, uint64_t seq, size_t col, block_lane *lane,
                            char *msg, size_t msglen)
{
    job *j = slot_of(w, seq);
    switch (t) {
    case TASK_T: tokenize(w, j); return SCAN_OK;
    case TASK_R: return chunks_rows_of(w, j);
    case TASK_G:
        if (chunks_group_of(w, j, col, lane, msg, msglen) == 0) return SCAN_OK;
        return SCAN_ERR_MEMORY;
    case TASK_FLUSH:
        if (block_comoments_flush(w->run, &w->bc) == 0) return SCAN_OK;
        snprintf(msg, msglen, "out of memory: %s does not fit", blas_buffer_what());
        return SCAN_ERR_MEMORY;
    case TASK_C:
        if (chunks_comoments_of(w, j) == 0) return SCAN_OK;
        snprintf(msg, msglen, "out of memory: %s does not fit (fewer threads need less: {threads})",
                 blas_buffer_what());
        return SCAN_ERR_MEMORY;
    default: return SCAN_OK;
    }
}

/* After a task: its counters.  Under the lock. */
static void finish_task(chunks *w, task_kind t, uint64_t seq, size_t col, scan_status st,
                        const char *msg)
{
    if (st != SCAN_OK && !w->failed)
        message_printf(w->err, sizeof w->err, "%s", t == TASK_R ? w->r_err : msg);
    switch (t) {
    case TASK_T: slot_of(w, seq)->t_state = T_DONE; break;
    case TASK_R: w->r_busy = 0; if (st == SCAN_OK) w->r_next++; break;
    case TASK_G: w->g_busy[col] = 0; if (st == SCAN_OK) w->g_next[col]++; break;
    case TASK_C: w->c_busy = 0; if (st == SCAN_OK) w->c_next++; break;
    case TASK_FLUSH:
        w->c_busy = w->flush_wanted = 0;
        pthread_cond_broadcast(&w->done_cv);
        break;
    default: break;
    }
    if (st != SCAN_OK) fail_locked(w, st);
    retire(w);
    pthread_cond_broadcast(&w->work_cv);
    /* chunks_wait also waits for the tasks still running after a failure. */
    if (w->failed) pthread_cond_broadcast(&w->done_cv);
}

/* Fails the scan when no worker can run the co-moment task.  Under the lock. */
static void no_blas_worker(chunks *w)
{
    if (w->ncomo && w->all_made && w->nthreads && w->no_blas == w->nthreads && !w->failed) {
        snprintf(w->err, sizeof w->err,
                 "out of memory: %s does not fit (fewer threads need less: {threads})",
                 blas_buffer_what());
        fail_locked(w, SCAN_ERR_MEMORY);
    }
}

static void *worker(void *arg)
{
    chunks *w = arg;
    block_lane lane;
    char msg[600] = "";
    int ok = block_lane_init(&lane) == 0;
    /* OpenBLAS takes a buffer per thread on its first call, and hangs when
     * it cannot: a worker whose buffer does not fit leaves the co-moments to
     * the others. */
    int blas = !w->ncomo || blas_thread_ready() == 0;
    pthread_mutex_lock(&w->mu);
    unsigned id = w->started++;
    if (!ok) {
        snprintf(w->err, sizeof w->err, "out of memory: a worker thread's column scratch");
        fail_locked(w, SCAN_ERR_MEMORY);
    }
    if (!blas) {
        w->no_blas++;
        no_blas_worker(w);
    }
    while (ok && !w->quit) {
        uint64_t seq = 0;
        size_t col = 0;
        task_kind t = pick(w, id, &seq, &col, blas);
        if (t == TASK_NONE) { pthread_cond_wait(&w->work_cv, &w->mu); continue; }
        pthread_mutex_unlock(&w->mu);
        scan_status st = run_task(w, t, seq, col, &lane, msg, sizeof msg);
        pthread_mutex_lock(&w->mu);
        finish_task(w, t, seq, col, st, msg);
    }
    pthread_mutex_unlock(&w->mu);
    block_lane_free(&lane);
    return NULL;
}

/* ---- the interface ----------------------------------------------------------- */

/* The columns of each group (w->group_cols from w->group_at[g]).  With a
 * cache line of cell positions (GROUP_RUN of them) or more a group, a group
 * takes a run of neighbouring columns: its cells then sit together in each
 * row, text and positions, so that each line of the chunk is read on one
 * core rather than on both (500 columns at -j2, medians of 7: 0.775 ->
 * 0.719 s, CPU 1.393 -> 1.281 s; bench/threads-notes.md).  With fewer
 * columns they are dealt out in turn, which spreads the costly ones over
 * the groups: runs were 1% slower on the 28-column table, in each of three
 * runs. */
#define GROUP_RUN (64 / sizeof(csv_span))

static void group_columns(chunks *w)
{
    size_t n = 0;
    int runs = w->ncols >= GROUP_RUN * w->ngroups;
    for (size_t g = 0; g < w->ngroups; g++) {
        w->group_at[g] = n;
        if (runs)
            for (size_t c = g * w->ncols / w->ngroups; c < (g + 1) * w->ncols / w->ngroups; c++)
                w->group_cols[n++] = c;
        else
            for (size_t c = g; c < w->ncols; c += w->ngroups) w->group_cols[n++] = c;
    }
    w->group_at[w->ngroups] = n;
}

chunks *chunks_create(const chunks_options *o)
{
    chunks *w = calloc(1, sizeof *w);
    if (!w) return NULL;
    w->o = *o;
    w->runs = o->runs;
    w->nruns = o->nruns;
    w->run = o->runs[0];
    w->ncols = w->run->ncols;
    w->ncomo = w->run->ncomo;
    /* SHEAF_TEST_SCALAR_DECODE (tests only; not in --help): the scalar
     * parser for every cell, to compare summaries with the SIMD path's. */
    w->simd = number_simd_usable() && !getenv("SHEAF_TEST_SCALAR_DECODE");
    w->kept_fields = 1;
    for (size_t c = 0; c < w->ncols; c++)
        if ((size_t)o->field_of[c] + 1 > w->kept_fields) w->kept_fields = (size_t)o->field_of[c] + 1;
    /* Whole blocks of lines: a piece of full rows starts on the block grid. */
    w->piece_lines = CELLS_BUDGET / (sizeof(csv_span) * w->kept_fields) / SUMMARY_BLOCK_ROWS;
    w->piece_lines = (w->piece_lines ? w->piece_lines : 1) * SUMMARY_BLOCK_ROWS;
    unsigned threads = o->threads ? o->threads : 1;
    w->nslots = chunks_slots(threads);
    w->jobs = calloc(w->nslots, sizeof *w->jobs);
    int parts = w->jobs != NULL;
    for (unsigned i = 0; parts && i < w->nslots; i++)
        parts = (w->jobs[i].tg = calloc(w->nruns, sizeof *w->jobs[i].tg)) != NULL;
    uint32_t most_classes = 0;
    for (size_t t = 0; t < w->nruns; t++)
        if (w->runs[t]->opt.max_classes > most_classes) most_classes = w->runs[t]->opt.max_classes;
    w->class_count = calloc((size_t)most_classes + 1, sizeof *w->class_count);
    w->class_pos = calloc((size_t)most_classes + 1, sizeof *w->class_pos);
    w->target_ref = calloc(w->nruns, sizeof *w->target_ref);
    w->target_ref_set = calloc(w->nruns, 1);
    /* A scan resumed from a checkpoint keeps the target's frame it had. */
    for (size_t t = 0; w->target_ref && w->target_ref_set && t < w->nruns; t++) {
        const summary *s = w->runs[t];
        if (s->target >= 0 && s->cols[s->target].mom.has_ref) {
            w->target_ref[t] = s->cols[s->target].mom.ref;
            w->target_ref_set[t] = 1;
        }
    }
    /* Column groups: one with one thread; else GROUPS_PER_THREAD per
     * thread, so that a worker finds a group to feed while another is busy,
     * and a group fed by the worker that does not own it (pick) moves little
     * state between cores: four per thread took 3 to 6% off the 28-column
     * table at -j2 against two, the 500-column table within the noise
     * (bench/threads-notes.md).  Which columns share a group: see
     * group_columns.  Groups decide only who feeds a column, never what. */
    w->ngroups = threads > 1 ? GROUPS_PER_THREAD * (size_t)threads : 1;
    if (w->ngroups > w->ncols) w->ngroups = w->ncols ? w->ncols : 1;
    w->g_next = calloc(w->ngroups, sizeof *w->g_next);
    w->g_busy = calloc(w->ngroups, 1);
    w->group_cols = calloc(w->ncols ? w->ncols : 1, sizeof *w->group_cols);
    w->group_at = calloc(w->ngroups + 1, sizeof *w->group_at);
    if (w->group_cols && w->group_at) group_columns(w);
    w->devp = calloc(w->ncomo ? w->ncomo : 1, sizeof *w->devp);
    w->presp = calloc(w->ncomo ? w->ncomo : 1, sizeof *w->presp);
    w->threads = calloc(threads, sizeof *w->threads);
    pthread_mutex_init(&w->mu, NULL);
    pthread_cond_init(&w->work_cv, NULL);
    pthread_cond_init(&w->done_cv, NULL);
    if (!parts || !w->target_ref || !w->target_ref_set || !w->g_next || !w->g_busy || !w->group_cols || !w->group_at || !w->class_count || !w->class_pos || !w->devp || !w->presp || !w->threads ||
        block_como_init(&w->bc, w->ncomo) != 0 || block_lane_init(&w->inline_lane) != 0) {
        chunks_free(w);
        return NULL;
    }
    for (unsigned i = 0; i < w->nslots; i++) reader_cursor_init(&w->jobs[i].cur, o->ro);
    /* A calling thread that helps is the last of the N (help). */
    unsigned made = 0;
    if (threads > 1)
        for (unsigned i = 0; i + (o->caller_helps != 0) < threads; i++) {
            if (pthread_create(&w->threads[made], NULL, worker, w) != 0) break;
            made++;
        }
    pthread_mutex_lock(&w->mu);
    w->nthreads = made;
    w->all_made = 1;
    no_blas_worker(w);
    pthread_mutex_unlock(&w->mu);
    return w;
}

void chunks_free(chunks *w)
{
    if (!w) return;
    pthread_mutex_lock(&w->mu);
    w->quit = 1;
    pthread_cond_broadcast(&w->work_cv);
    pthread_mutex_unlock(&w->mu);
    for (unsigned i = 0; i < w->nthreads; i++) pthread_join(w->threads[i], NULL);
    for (unsigned i = 0; w->jobs && i < w->nslots; i++) {
        job *j = &w->jobs[i];
        free(j->buf); free(j->cells); free(j->line); free(j->record); free(j->rewritten);
        free(j->row_key); free(j->nf);
        for (size_t t = 0; j->tg && t < w->nruns; t++) {
            job_target *jt = &j->tg[t];
            free(jt->row_order); free(jt->runs);
            free(jt->row_cell); free(jt->row_class); free(jt->row_y); free(jt->row_has_y);
            free(jt->row_ym); free(jt->row_ye);
            free(jt->blocks); free(jt->drop_map); free(jt->drop_y);
        }
        free(j->tg); free(j->dev); free(j->present);
        free(j->repeats);
        reader_cursor_free(&j->cur);
    }
    block_como_free(&w->bc);
    block_lane_free(&w->inline_lane);
    pthread_mutex_destroy(&w->mu);
    pthread_cond_destroy(&w->work_cv);
    pthread_cond_destroy(&w->done_cv);
    free(w->jobs); free(w->g_next); free(w->g_busy); free(w->group_cols); free(w->group_at); free(w->devp); free(w->presp);
    free(w->threads);
    free(w->target_ref);
    free(w->target_ref_set);
    free(w->class_count);
    free(w->class_pos);
    free(w);
}

void chunks_stream(chunks *w, const char *shown, uint64_t stop_at, uint64_t lines)
{
    w->shown = shown;
    w->stop_at = stop_at;
    w->lines = lines;
    w->rows = w->absorbed = 0;
}

/* One thread: every task of the chunk now, on the caller's bytes. */
/* Keeps the offsets of the repeated headers to skip in the job. */
static int set_repeats(job *j, const uint64_t *repeats, size_t n)
{
    if (n > j->repeats_cap) {
        uint64_t *p = realloc(j->repeats, n * sizeof *p);
        if (!p) return -1;
        j->repeats = p;
        j->repeats_cap = n;
    }
    if (n) memcpy(j->repeats, repeats, n * sizeof *repeats);
    j->nrepeats = n;
    return 0;
}

static scan_status push_inline(chunks *w, const reader_chunk *c, int first,
                               const uint64_t *repeats, size_t nrepeats)
{
    job *j = &w->jobs[0];
    if (set_repeats(j, repeats, nrepeats) != 0) {
        w->failed = chunks_out_of_memory(w);
        return w->failed;
    }
    j->ck = *c;
    j->first = first;
    j->seq = w->pushed++;
    tokenize(w, j);
    char msg[600] = "";
    scan_status st = chunks_rows_of(w, j);
    const char *why = st != SCAN_OK ? w->r_err : msg;
    for (size_t g = 0; st == SCAN_OK && g < w->ngroups; g++)
        st = run_task(w, TASK_G, j->seq, g, &w->inline_lane, msg, sizeof msg);
    if (st == SCAN_OK && w->ncomo) st = run_task(w, TASK_C, j->seq, 0, NULL, msg, sizeof msg);
    if (st != SCAN_OK) {
        w->failed = st;
        message_printf(w->err, sizeof w->err, "%s", why);
    }
    return st;
}

/* The calling thread, waiting for a slot or for the chunks' end, when it
 * is one of the N (chunks_options.caller_helps): one task (any but the
 * co-moments, which want OpenBLAS's buffer this thread does not take), run
 * as worker N - 1; 0 when none is ready, or when it is not one of them.
 * Under the lock. */
static int help(chunks *w)
{
    uint64_t seq = 0;
    size_t col = 0;
    task_kind t = w->o.caller_helps ? pick(w, w->o.threads - 1, &seq, &col, 0) : TASK_NONE;
    if (t == TASK_NONE) return 0;
    pthread_mutex_unlock(&w->mu);
    char msg[600] = "";
    scan_status st = run_task(w, t, seq, col, &w->inline_lane, msg, sizeof msg);
    pthread_mutex_lock(&w->mu);
    finish_task(w, t, seq, col, st, msg);
    return 1;
}

/* What the calling thread waits on: a helper for any task's end (it may
 * make another ready), else only for a slot's (retire). */
static pthread_cond_t *helper_cv(chunks *w)
{
    return w->o.caller_helps ? &w->work_cv : &w->done_cv;
}

/* One piece of a chunk to the tasks. */
static scan_status push_piece(chunks *w, const reader_chunk *c, int first,
                              const uint64_t *repeats, size_t nrepeats, reader *owner)
{
    if (!w->nthreads)
        return w->failed ? w->failed : push_inline(w, c, first, repeats, nrepeats);
    pthread_mutex_lock(&w->mu);
    while (!w->failed && w->pushed - w->retired >= w->nslots)
        if (!help(w)) pthread_cond_wait(helper_cv(w), &w->mu);
    scan_status failed = w->failed;
    uint64_t seq = w->pushed;
    pthread_mutex_unlock(&w->mu);
    if (failed) return failed;
    job *j = slot_of(w, seq); /* free: nothing looks at it until it is pushed */
    char *nb = j->buf;
    if (owner) {
        /* The reader's buffer, which holds the chunk, for the slot's: no
         * copy.  The slot's bytes past the chunk are the reader's (the start
         * of the next record), as they are to the one-thread path. */
        nb = reader_trade_chunk(owner, &j->buf, &j->cap) == 0 ? j->buf : NULL;
    } else {
        size_t need = c->len + CHUNK_PADDING;
        nb = need > j->cap ? realloc(j->buf, need) : j->buf;
        if (nb && need > j->cap) {
            j->buf = nb;
            j->cap = need;
        }
        if (nb) memcpy(j->buf, c->data, need); /* the padding too */
    }
    if (!nb || set_repeats(j, repeats, nrepeats) != 0) {
        pthread_mutex_lock(&w->mu);
        if (!w->failed)
            snprintf(w->err, sizeof w->err, "out of memory: %s",
                     nb ? "the list of repeated headers in a chunk" : "a chunk buffer");
        fail_locked(w, SCAN_ERR_MEMORY);
        pthread_mutex_unlock(&w->mu);
        return SCAN_ERR_MEMORY;
    }
    j->ck = *c;
    if (!owner) j->ck.data = j->buf;
    j->ck.starts = NULL; /* the reader's, gone by the time T runs */
    j->ck.nstarts = 0;
    j->first = first;
    j->seq = seq;
    pthread_mutex_lock(&w->mu);
    j->t_state = T_WAIT;
    w->pushed++;
    pthread_cond_broadcast(&w->work_cv);
    pthread_mutex_unlock(&w->mu);
    return SCAN_OK;
}

/* The co-moment rows held for a whole block, at the end of a stream: on the
 * calling thread, once every task is done. */
static scan_status flush_comoments(chunks *w)
{
    if (!w->ncomo || !w->bc.staged) return SCAN_OK;
    if (block_comoments_flush(w->run, &w->bc) == 0) return SCAN_OK;
    if (w->nthreads) pthread_mutex_lock(&w->mu); /* idle workers look at `failed` */
    snprintf(w->err, sizeof w->err, "out of memory: %s does not fit (fewer threads need less: "
             "{threads})", blas_buffer_what());
    w->failed = SCAN_ERR_MEMORY;
    if (w->nthreads) pthread_mutex_unlock(&w->mu);
    return SCAN_ERR_MEMORY;
}

scan_status chunks_wait(chunks *w)
{
    if (!w->nthreads) return w->failed ? w->failed : flush_comoments(w);
    pthread_mutex_lock(&w->mu);
    /* After a failure, tasks already running finish (they may still use the
     * slots); none starts. */
    while (w->retired < w->pushed && !(w->failed && !w->r_busy && !w->c_busy &&
                                       !memchr(w->g_busy, 1, w->ngroups)))
        if (!help(w)) pthread_cond_wait(helper_cv(w), &w->mu);
    /* The rows held for a block are summed by a worker that has OpenBLAS's
     * buffer, not on this thread, which would need one more (a scan under
     * `ulimit -v` that fits its workers' buffers then fits). */
    if (!w->failed && w->ncomo && w->bc.staged) {
        w->flush_wanted = 1;
        pthread_cond_broadcast(&w->work_cv);
        while (w->flush_wanted && !w->failed) pthread_cond_wait(&w->done_cv, &w->mu);
    }
    scan_status st = w->failed;
    pthread_mutex_unlock(&w->mu);
    return st;
}

/* The end of the piece of c that begins at `from` (a record start): just
 * after the last record end among its first w->piece_lines newlines, or
 * the first record end after them when they are all quoted; c->len when the
 * rest holds fewer. */
static size_t piece_end(const chunks *w, const reader_chunk *c, size_t from)
{
    size_t x = from, lines = 0;
    while (lines < w->piece_lines) {
        const char *nl = memchr(c->data + x, '\n', c->len - x);
        if (!nl) return c->len;
        x = (size_t)(nl - c->data) + 1;
        lines++;
    }
    if (x == c->len) return c->len;
    csv_quote_state q;
    csv_quote_init(&q, c->delim);
    size_t r = csv_quote_scan(&q, c->data + from, x - from, 0);
    if (r <= x - from) return from + r;
    r = csv_quote_scan(&q, c->data + x, c->len - x, 1);
    return r <= c->len - x ? x + r : c->len;
}

scan_status chunks_push(chunks *w, const reader_chunk *c, int first, const uint64_t *repeats,
                        size_t nrepeats, reader *owner)
{
    /* A chunk of more lines than piece_lines goes to the tasks in pieces
     * of whole records, cut by its bytes alone, so that the cell table
     * (8 bytes a field up to the last scanned one, for every row, short
     * rows too) stays within CELLS_BUDGET bytes a slot. */
    size_t from = c->skip;
    for (;;) {
        size_t end = piece_end(w, c, from);
        reader_chunk piece = *c;
        if (from > c->skip) {
            piece.data = c->data + from;
            piece.offset = c->offset + from;
            piece.skip = 0;
            piece.len = end - from;
        } else {
            piece.len = end;
        }
        int head = first && from == c->skip;
        if (w->stop_at && piece.offset >= w->stop_at && !head)
            return SCAN_OK; /* the next shard's records, as the reading thread judges chunks */
        size_t r0 = 0, r1; /* the repeated headers that begin in the piece */
        while (r0 < nrepeats && repeats[r0] < piece.offset) r0++;
        for (r1 = r0; r1 < nrepeats && repeats[r1] < piece.offset + piece.len;) r1++;
        /* A chunk in one piece is traded for (chunks_push), one in pieces
         * copied: the pieces share its buffer. */
        reader *trade = w->nthreads && from == c->skip && end == c->len ? owner : NULL;
        scan_status st = push_piece(w, &piece, head, r1 > r0 ? repeats + r0 : NULL, r1 - r0,
                                    trade);
        if (st != SCAN_OK || end == c->len) return st;
        from = end;
    }
}

const char *chunks_error(const chunks *w) { return w->err; }
uint64_t chunks_rows(const chunks *w) { return w->rows; }
uint64_t chunks_lines(const chunks *w) { return w->lines; }
uint64_t chunks_absorbed(const chunks *w) { return w->absorbed; }
