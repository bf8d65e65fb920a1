/* pipeline: see pipeline.h.
 *
 * Jobs live in a ring of slots indexed by seq % nslots.  Three counters,
 * under one mutex, say where each job is:
 *
 *   committed <= taken <= pushed,   pushed - committed <= nslots
 *
 * jobs [committed, taken) are being worked or wait for their commit (done
 * says which), [taken, pushed) wait for a worker.  A worker that finishes a
 * job commits, in order, every job that is done from `committed` on, unless
 * another thread is committing (it will see the job when it looks again).
 */
#include "io/pipeline.h"

#include <pthread.h>
#include <sched.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

typedef struct {
    pipeline_job job;
    char *buf;       /* the slot's buffer: its chunk (threads only) */
    size_t cap;      /* its capacity */
    int done;        /* work has run (or was skipped) */
    int rc;          /* what work returned */
} slot;

struct pipeline {
    pipeline_work_fn work;
    pipeline_commit_fn commit;
    void *ctx;
    unsigned nslots;
    slot *slots;
    unsigned nthreads;   /* workers started */
    pthread_t *threads;
    pthread_mutex_t mu;
    pthread_cond_t work_cv;  /* a job was pushed, or quit */
    pthread_cond_t space_cv; /* a job was committed */
    uint64_t pushed, taken, committed;
    int committing;      /* a thread is in the commit loop */
    int failed;          /* the first failure code, in push order */
    int quit;            /* workers must stop */
};

/* The first line of a small file into buf; 0, or -1 when it cannot be read. */
static int read_line(const char *path, char *buf, size_t len)
{
    FILE *f = fopen(path, "r");
    if (!f) return -1;
    char *got = fgets(buf, (int)len, f);
    fclose(f);
    return got ? 0 : -1;
}

/* CPUs one cgroup directory's quota allows, rounded up; 0: none there. */
static unsigned dir_quota(const char *dir, int v2)
{
    char path[4400], line[128];
    long long quota = -1, period = 0;
    if (v2) {
        snprintf(path, sizeof path, "%s/cpu.max", dir);
        if (read_line(path, line, sizeof line) != 0 ||
            sscanf(line, "%lld %lld", &quota, &period) != 2) /* "max 100000": no quota */
            return 0;
    } else {
        snprintf(path, sizeof path, "%s/cpu.cfs_quota_us", dir);
        if (read_line(path, line, sizeof line) != 0 || sscanf(line, "%lld", &quota) != 1)
            return 0;
        snprintf(path, sizeof path, "%s/cpu.cfs_period_us", dir);
        if (read_line(path, line, sizeof line) != 0 || sscanf(line, "%lld", &period) != 1)
            return 0;
    }
    if (quota <= 0 || period <= 0) return 0;
    long long n = (quota + period - 1) / period;
    return n > 4096 ? 4096 : (unsigned)n;
}

/* The smallest quota of the cgroup at `cg` (a path from the proc file)
 * under `mount` and of its ancestors, up to the mount itself (which is the
 * process's own cgroup inside a container that sees no further up). */
static unsigned walk_quota(const char *mount, const char *cg, int v2)
{
    char rel[4096], dir[4200];
    snprintf(rel, sizeof rel, "%s", cg);
    size_t n = strlen(rel);
    while (n && (rel[n - 1] == '\n' || rel[n - 1] == '/')) rel[--n] = '\0';
    unsigned best = 0;
    for (;;) {
        snprintf(dir, sizeof dir, "%s%s", mount, rel);
        unsigned q = dir_quota(dir, v2);
        if (q && (!best || q < best)) best = q;
        char *slash = strrchr(rel, '/');
        if (!slash) break;
        *slash = '\0';
    }
    return best;
}

unsigned pipeline_quota_cpus(const char *proc_cgroup, const char *sys_cgroup)
{
    FILE *f = fopen(proc_cgroup, "r");
    if (!f) return 0;
    char line[4200], mount[4300];
    unsigned best = 0;
    while (fgets(line, sizeof line, f)) {
        /* "ID:CONTROLLERS:PATH": v2 has ID 0 and no controllers; v1 names
         * the cpu controller among its own (cpu, or cpu,cpuacct). */
        char *c1 = strchr(line, ':'), *c2 = c1 ? strchr(c1 + 1, ':') : NULL;
        if (!c2) continue;
        *c2 = '\0';
        const char *controllers = c1 + 1, *path = c2 + 1;
        unsigned q = 0;
        if (!*controllers && strncmp(line, "0:", 2) == 0) {
            q = walk_quota(sys_cgroup, path, 1);
            if (!q) { /* a hybrid layout mounts v2 under "unified" */
                snprintf(mount, sizeof mount, "%s/unified", sys_cgroup);
                q = walk_quota(mount, path, 1);
            }
        } else {
            char list[256];
            snprintf(list, sizeof list, ",%s,", controllers);
            if (!strstr(list, ",cpu,")) continue;
            snprintf(mount, sizeof mount, "%s/%s", sys_cgroup, controllers);
            q = walk_quota(mount, path, 0);
            if (!q && strcmp(controllers, "cpu") != 0) { /* also mounted as "cpu" */
                snprintf(mount, sizeof mount, "%s/cpu", sys_cgroup);
                q = walk_quota(mount, path, 0);
            }
        }
        if (q && (!best || q < best)) best = q;
    }
    fclose(f);
    return best;
}

unsigned pipeline_cpus(void)
{
    cpu_set_t set;
    int n = sched_getaffinity(0, sizeof set, &set) == 0 ? CPU_COUNT(&set) : 1;
    if (n < 1) n = 1;
    unsigned q = pipeline_quota_cpus("/proc/self/cgroup", "/sys/fs/cgroup");
    return q && q < (unsigned)n ? q : (unsigned)n;
}

/* Commits every done job from `committed` on.  Called with the lock held;
 * returns with it held. */
static void commit_ready(pipeline *p)
{
    if (p->committing) return;
    p->committing = 1;
    while (p->committed < p->taken) {
        slot *s = &p->slots[p->committed % p->nslots];
        if (!s->done) break;
        int failed = p->failed;
        pthread_mutex_unlock(&p->mu);
        int rc = failed ? 0 : p->commit(p->ctx, (unsigned)(s->job.seq % p->nslots), &s->job, s->rc);
        pthread_mutex_lock(&p->mu);
        if (rc && !p->failed) p->failed = rc;
        s->done = 0;
        p->committed++;
        pthread_cond_broadcast(&p->space_cv);
    }
    p->committing = 0;
}

static void *worker(void *arg)
{
    pipeline *p = arg;
    pthread_mutex_lock(&p->mu);
    for (;;) {
        while (!p->quit && p->taken == p->pushed) pthread_cond_wait(&p->work_cv, &p->mu);
        if (p->quit) break;
        slot *s = &p->slots[p->taken % p->nslots];
        p->taken++;
        int failed = p->failed;
        pthread_mutex_unlock(&p->mu);
        int rc = failed ? 0 : p->work(p->ctx, (unsigned)(s->job.seq % p->nslots), &s->job);
        pthread_mutex_lock(&p->mu);
        s->rc = rc;
        s->done = 1;
        commit_ready(p);
    }
    pthread_mutex_unlock(&p->mu);
    return NULL;
}

pipeline *pipeline_create(unsigned threads, unsigned slots, pipeline_work_fn work,
                          pipeline_commit_fn commit, void *ctx)
{
    if (threads < 1) threads = 1;
    if (slots < threads) slots = threads;
    pipeline *p = calloc(1, sizeof *p);
    if (!p) return NULL;
    p->work = work;
    p->commit = commit;
    p->ctx = ctx;
    p->nslots = threads > 1 ? slots : 1;
    p->slots = calloc(p->nslots, sizeof *p->slots);
    p->threads = calloc(threads, sizeof *p->threads);
    if (!p->slots || !p->threads) { free(p->slots); free(p->threads); free(p); return NULL; }
    pthread_mutex_init(&p->mu, NULL);
    pthread_cond_init(&p->work_cv, NULL);
    pthread_cond_init(&p->space_cv, NULL);
    if (threads > 1)
        for (unsigned i = 0; i < threads; i++) {
            if (pthread_create(&p->threads[p->nthreads], NULL, worker, p) != 0) break;
            p->nthreads++;
        }
    return p;
}

void pipeline_free(pipeline *p)
{
    if (!p) return;
    pthread_mutex_lock(&p->mu);
    p->quit = 1;
    pthread_cond_broadcast(&p->work_cv);
    pthread_mutex_unlock(&p->mu);
    for (unsigned i = 0; i < p->nthreads; i++) pthread_join(p->threads[i], NULL);
    for (unsigned i = 0; i < p->nslots; i++) free(p->slots[i].buf);
    pthread_mutex_destroy(&p->mu);
    pthread_cond_destroy(&p->work_cv);
    pthread_cond_destroy(&p->space_cv);
    free(p->slots);
    free(p->threads);
    free(p);
}

unsigned pipeline_slots(const pipeline *p) { return p->nslots; }
unsigned pipeline_threads(const pipeline *p) { return p->nthreads; }

/* On the caller's thread: work and commit now, on the caller's bytes. */
static int push_inline(pipeline *p, const reader_chunk *c, uint64_t tag)
{
    if (p->failed) return p->failed;
    slot *s = &p->slots[0];
    s->job.ck = *c;
    s->job.seq = p->pushed++;
    s->job.tag = tag;
    int rc = p->work(p->ctx, 0, &s->job);
    rc = p->commit(p->ctx, 0, &s->job, rc);
    p->committed++;
    if (rc) p->failed = rc;
    return rc;
}

int pipeline_push(pipeline *p, const reader_chunk *c, uint64_t tag, reader *owner)
{
    if (!p->nthreads) return push_inline(p, c, tag);
    pthread_mutex_lock(&p->mu);
    while (!p->failed && p->pushed - p->committed >= p->nslots)
        pthread_cond_wait(&p->space_cv, &p->mu);
    int failed = p->failed;
    uint64_t seq = p->pushed;
    pthread_mutex_unlock(&p->mu);
    if (failed) return failed;
    /* The slot is free: no worker looks at it until it is pushed. */
    slot *s = &p->slots[seq % p->nslots];
    size_t need = c->len + CHUNK_PADDING;
    if (owner || need > s->cap) {
        /* The reader's buffer, which holds the chunk, in trade for the
         * slot's (no copy), or a bigger slot buffer for the copy. */
        char *nb = owner ? (reader_trade_chunk(owner, &s->buf, &s->cap) == 0 ? s->buf : NULL)
                         : realloc(s->buf, need);
        if (!nb) {
            pthread_mutex_lock(&p->mu);
            /* Chunks pushed before still commit; this one is the failure. */
            while (p->committed < p->pushed) pthread_cond_wait(&p->space_cv, &p->mu);
            if (!p->failed) p->failed = PIPELINE_ERR_MEMORY;
            failed = p->failed;
            pthread_mutex_unlock(&p->mu);
            return failed;
        }
        if (!owner) {
            s->buf = nb;
            s->cap = need;
        }
    }
    s->job.ck = *c;
    if (!owner) {
        memcpy(s->buf, c->data, need); /* the padding too */
        s->job.ck.data = s->buf;
    }
    s->job.seq = seq;
    s->job.tag = tag;
    s->done = 0;
    pthread_mutex_lock(&p->mu);
    p->pushed++;
    pthread_cond_signal(&p->work_cv);
    pthread_mutex_unlock(&p->mu);
    return 0;
}

int pipeline_wait(pipeline *p)
{
    if (!p->nthreads) return p->failed;
    pthread_mutex_lock(&p->mu);
    while (p->committed < p->pushed) pthread_cond_wait(&p->space_cv, &p->mu);
    int failed = p->failed;
    pthread_mutex_unlock(&p->mu);
    return failed;
}

int pipeline_failed(pipeline *p)
{
    if (!p->nthreads) return p->failed;
    pthread_mutex_lock(&p->mu);
    int failed = p->failed;
    pthread_mutex_unlock(&p->mu);
    return failed;
}
