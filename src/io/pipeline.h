/* pipeline: chunks of records worked on by threads, committed in order.
 *
 * The thread that reads (and decompresses) a stream pushes its chunks
 * (reader_next_chunk) into a pipeline.  Worker threads run `work` on each
 * chunk, in any order and on any thread, into state the caller keeps per
 * slot; `commit` then runs on each chunk's slot one chunk at a time, in push
 * order.  What commit writes therefore depends on the chunks alone, never on
 * the thread count or the scheduling: trim and project (pass/stream) format
 * a chunk's rows in `work` and write them in `commit`.  (The scan has a
 * scheduler of its own, summary/chunks.h, since its per-column state must
 * see the chunks in order too.)
 *
 *   pipeline *p = pipeline_create(threads, slots, work, commit, ctx);
 *   pipeline_push(p, &chunk, tag, reader) ...;  blocks while every slot is busy
 *   pipeline_wait(p);                           every pushed chunk committed
 *   pipeline_free(p);
 *
 * Slots bound the memory: at most `slots` chunks are between push and commit
 * (each in its slot's buffer, taken from the reader or copied, so the
 * reader may go on).  With one
 * thread nothing is copied and no thread is started: push runs work and
 * commit on the caller's thread, on the caller's bytes.
 *
 * Errors.  work returns 0 or a code of the caller's (> 0); commit receives it
 * and returns 0 or a code.  The first nonzero code commit returns, in push
 * order, is the pipeline's: every later chunk is skipped (neither worked nor
 * committed), and push and wait return the code.  So a failure is the one a
 * single thread meets first, whatever the threads did after it.  The
 * pipeline's own failures are negative: PIPELINE_ERR_MEMORY when a slot's
 * buffer cannot grow.
 */
#ifndef SHEAF_PIPELINE_H
#define SHEAF_PIPELINE_H

#include <stdint.h>

#include "io/reader.h"

#define PIPELINE_ERR_MEMORY (-1)

typedef struct {
    reader_chunk ck; /* the chunk (its bytes: the slot's copy, or the caller's with one thread) */
    uint64_t seq;    /* 0, 1, 2 ... in push order */
    uint64_t tag;    /* what the caller pushed with it */
} pipeline_job;

/* Runs on a worker thread (or the caller's, with one thread). */
typedef int (*pipeline_work_fn)(void *ctx, unsigned slot, pipeline_job *job);
/* Runs in push order, never two at once. */
typedef int (*pipeline_commit_fn)(void *ctx, unsigned slot, pipeline_job *job, int work_rc);

typedef struct pipeline pipeline;

/* threads workers (1: none, everything on the caller's thread) and slots >=
 * threads chunks in flight.  NULL when out of memory.  When a thread cannot
 * be started, the pipeline runs with the threads it has (at least the
 * caller's). */
pipeline *pipeline_create(unsigned threads, unsigned slots, pipeline_work_fn work,
                          pipeline_commit_fn commit, void *ctx);
/* Stops the workers (chunks not yet committed are dropped) and frees p. */
void pipeline_free(pipeline *p);
unsigned pipeline_slots(const pipeline *p);
/* Worker threads running (0 when work runs on the caller's thread). */
unsigned pipeline_threads(const pipeline *p);

/* Hands a chunk over; blocks while every slot is busy.  owner: the reader
 * that just handed c out (reader_next_chunk), whose buffer the slot takes in
 * trade for its own instead of copying the chunk (reader_trade_chunk);
 * NULL: the chunk is copied.  Returns 0, or the pipeline's failure code. */
int pipeline_push(pipeline *p, const reader_chunk *c, uint64_t tag, reader *owner);
/* Waits until every pushed chunk is committed (or skipped after a failure).
 * Returns 0 or the failure code. */
int pipeline_wait(pipeline *p);
/* The failure code so far (0: none), without waiting. */
int pipeline_failed(pipeline *p);

/* CPUs this process may use, at least 1: those it may run on
 * (sched_getaffinity), no more than its cgroup's CPU quota allows, rounded
 * up (a container limited to 2 CPUs of a 16-CPU host: 2).  Threads beyond
 * the quota only take turns, and a cgroup that spends its quota early in a
 * period is stopped, every thread at once, until the next (the kernel's
 * CFS bandwidth control). */
unsigned pipeline_cpus(void);
/* The CPU quota of the process's cgroups as CPUs, rounded up (the smallest
 * of its cgroup and their ancestors; cgroup v2's cpu.max, or v1's
 * cpu.cfs_quota_us over cpu.cfs_period_us), or 0 when there is none.
 * proc_cgroup: /proc/self/cgroup; sys_cgroup: where the hierarchies are
 * mounted, /sys/fs/cgroup (tests give files of their own). */
unsigned pipeline_quota_cpus(const char *proc_cgroup, const char *sys_cgroup);

#endif
