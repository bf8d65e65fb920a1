/* io/pipeline: commits run in push order whatever order the work finishes
 * in, every chunk is committed once, the first failure in push order is the
 * pipeline's and nothing after it is committed, and one thread runs work
 * and commit on the caller's bytes.  Checked against the push order itself
 * (a sequence number written into each chunk). */
#include <criterion/criterion.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "io/pipeline.h"

#define CHUNKS 400

typedef struct {
    uint64_t committed[CHUNKS]; /* the tag of each commit, in commit order */
    size_t ncommitted;
    int fail_at;                /* work of this chunk fails (-1: none) */
    int worked[CHUNKS];         /* how many times each chunk was worked */
    const char *bytes[CHUNKS];  /* where work saw each chunk's bytes */
} state;

static int work(void *ctx, unsigned slot, pipeline_job *job)
{
    (void)slot;
    state *s = ctx;
    unsigned seq;
    cr_assert_eq(sscanf(job->ck.data, "chunk %u", &seq), 1);
    cr_assert_eq(seq, job->tag, "the bytes of chunk %u came with tag %llu", seq,
                 (unsigned long long)job->tag);
    __atomic_add_fetch(&s->worked[seq], 1, __ATOMIC_RELAXED);
    s->bytes[seq] = job->ck.data;
    /* Uneven work, so that chunks finish out of order. */
    struct timespec ts = {0, (long)((seq * 7919u) % 5u) * 200000L};
    nanosleep(&ts, NULL);
    return (int)seq == s->fail_at ? 7 : 0;
}

static int commit(void *ctx, unsigned slot, pipeline_job *job, int rc)
{
    (void)slot;
    state *s = ctx;
    if (rc) return rc;
    s->committed[s->ncommitted++] = job->tag;
    return 0;
}

static int run(unsigned threads, state *s, char chunks[][64])
{
    pipeline *p = pipeline_create(threads, 2 * threads, work, commit, s);
    cr_assert_not_null(p);
    int rc = 0;
    for (unsigned i = 0; i < CHUNKS && rc == 0; i++) {
        snprintf(chunks[i], 64, "chunk %u", i);
        reader_chunk c = {.data = chunks[i], .len = strlen(chunks[i]), .offset = (uint64_t)i * 64,
                          .delim = ','};
        rc = pipeline_push(p, &c, i);
    }
    int w = pipeline_wait(p);
    pipeline_free(p);
    return rc ? rc : w;
}

/* 64-byte chunks; the two rows after the last keep CHUNK_PADDING (64)
 * bytes readable past every chunk, as the reader gives them. */
static char (*padded_chunks(void))[64]
{
    char (*c)[64] = calloc(CHUNKS + 2, 64);
    cr_assert_not_null(c);
    return c;
}

Test(pipeline, commits_in_push_order_on_any_thread_count)
{
    unsigned counts[] = {1, 2, 3, 8};
    for (size_t k = 0; k < sizeof counts / sizeof *counts; k++) {
        state *s = calloc(1, sizeof *s);
        s->fail_at = -1;
        char (*chunks)[64] = padded_chunks();
        cr_assert_eq(run(counts[k], s, chunks), 0);
        cr_assert_eq(s->ncommitted, CHUNKS, "%u threads: %zu commits", counts[k], s->ncommitted);
        for (size_t i = 0; i < CHUNKS; i++) {
            cr_assert_eq(s->committed[i], i, "%u threads: commit %zu was chunk %llu", counts[k], i,
                         (unsigned long long)s->committed[i]);
            cr_assert_eq(s->worked[i], 1, "%u threads: chunk %zu worked %d times", counts[k], i,
                         s->worked[i]);
        }
        free(s);
        free(chunks);
    }
}

Test(pipeline, first_failure_in_push_order_wins_and_nothing_after_it_commits)
{
    unsigned counts[] = {1, 2, 5};
    for (size_t k = 0; k < sizeof counts / sizeof *counts; k++) {
        state *s = calloc(1, sizeof *s);
        s->fail_at = 137;
        char (*chunks)[64] = padded_chunks();
        cr_assert_eq(run(counts[k], s, chunks), 7, "%u threads", counts[k]);
        cr_assert_eq(s->ncommitted, 137, "%u threads: %zu commits before the failure", counts[k],
                     s->ncommitted);
        for (size_t i = 0; i < s->ncommitted; i++) cr_assert_eq(s->committed[i], i);
        free(s);
        free(chunks);
    }
}

Test(pipeline, one_thread_works_on_the_callers_bytes)
{
    state *s = calloc(1, sizeof *s);
    s->fail_at = -1;
    char (*chunks)[64] = padded_chunks();
    cr_assert_eq(run(1, s, chunks), 0);
    for (size_t i = 0; i < CHUNKS; i++) cr_assert_eq(s->bytes[i], chunks[i]);
    free(s);
    free(chunks);
}

Test(pipeline, counts_the_cpus_it_may_use)
{
    unsigned n = pipeline_cpus();
    cr_assert(n >= 1 && n <= 4096, "%u", n);
}
