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
#include <sched.h>
#include <sys/stat.h>
#include <unistd.h>

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
        rc = pipeline_push(p, &c, i, NULL);
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

/* ---- the cgroup CPU quota -------------------------------------------------- */

/* Writes text to dir/name, making dir and its parents. */
static void put_file(const char *dir, const char *name, const char *text)
{
    char cmd[1024], path[1024];
    snprintf(cmd, sizeof cmd, "mkdir -p '%s'", dir);
    cr_assert_eq(system(cmd), 0);
    snprintf(path, sizeof path, "%s/%s", dir, name);
    FILE *f = fopen(path, "w");
    cr_assert_not_null(f, "%s", path);
    fputs(text, f);
    fclose(f);
}

/* A fake /proc/self/cgroup and /sys/fs/cgroup under a temporary directory:
 * the quota read from them. */
static unsigned fake_quota(const char *proc_text, const char *const *files)
{
    char root[] = "/tmp/sheaf-cgroup-XXXXXX", proc[128], sys[128], dir[512];
    cr_assert_not_null(mkdtemp(root));
    snprintf(proc, sizeof proc, "%s/cgroup", root);
    snprintf(sys, sizeof sys, "%s/sys", root);
    put_file(root, "cgroup", proc_text);
    for (size_t i = 0; files[i]; i += 3) { /* directory under sys, file name, text */
        snprintf(dir, sizeof dir, "%s%s", sys, files[i]);
        put_file(dir, files[i + 1], files[i + 2]);
    }
    unsigned q = pipeline_quota_cpus(proc, sys);
    char cmd[256];
    snprintf(cmd, sizeof cmd, "rm -rf '%s'", root);
    cr_assert_eq(system(cmd), 0);
    return q;
}

Test(pipeline, cgroup_v2_quota_is_the_smallest_up_the_tree_rounded_up)
{
    const char *files[] = {"/a/b", "cpu.max", "max 100000\n",
                           "/a", "cpu.max", "150000 100000\n",
                           "", "cpu.max", "800000 100000\n", NULL};
    cr_assert_eq(fake_quota("0::/a/b\n", files), 2);
    const char *none[] = {"/a/b", "cpu.max", "max 100000\n", NULL};
    cr_assert_eq(fake_quota("0::/a/b\n", none), 0);
}

Test(pipeline, cgroup_v1_quota_is_read_from_the_cpu_controller)
{
    const char *files[] = {"/cpu,cpuacct/docker/x", "cpu.cfs_quota_us", "300000\n",
                           "/cpu,cpuacct/docker/x", "cpu.cfs_period_us", "100000\n",
                           "/memory/docker/x", "cpu.cfs_quota_us", "100000\n",
                           "/memory/docker/x", "cpu.cfs_period_us", "100000\n", NULL};
    cr_assert_eq(fake_quota("5:memory:/docker/x\n4:cpu,cpuacct:/docker/x\n", files), 3);
    /* Inside a container the mount is the container's own cgroup: its path
     * is not there, the mount's root holds the quota. */
    const char *inside[] = {"/cpu,cpuacct", "cpu.cfs_quota_us", "200000\n",
                            "/cpu,cpuacct", "cpu.cfs_period_us", "100000\n", NULL};
    cr_assert_eq(fake_quota("4:cpu,cpuacct:/docker/x\n", inside), 2);
    const char *unlimited[] = {"/cpu", "cpu.cfs_quota_us", "-1\n",
                               "/cpu", "cpu.cfs_period_us", "100000\n", NULL};
    cr_assert_eq(fake_quota("1:cpu:/\n", unlimited), 0);
}

Test(pipeline, no_cgroup_file_means_no_quota)
{
    cr_assert_eq(pipeline_quota_cpus("/nonexistent/cgroup", "/nonexistent"), 0);
    const char *files[] = {NULL};
    cr_assert_eq(fake_quota("garbage without colons\n", files), 0);
}

Test(pipeline, a_real_cgroup_quota_limits_the_cpus)
{
    /* A cgroup v1 cpu hierarchy this process may write (root, outside a
     * read-only container), else skipped: a quota of 1 CPU, this test's
     * process moved in, pipeline_cpus asked, the process moved back. */
    const char *base = "/sys/fs/cgroup/cpu";
    char dir[256], path[300], pid[32];
    snprintf(dir, sizeof dir, "%s/sheaf-test-%ld", base, (long)getpid());
    if (access(base, W_OK) != 0 || mkdir(dir, 0755) != 0)
        cr_skip_test("no writable cgroup v1 cpu hierarchy at %s", base);
    snprintf(path, sizeof path, "%s/cpu.cfs_quota_us", dir);
    FILE *f = fopen(path, "w");
    int ok = f && fprintf(f, "100000\n") > 0;
    if (f && fclose(f) != 0) ok = 0;
    snprintf(path, sizeof path, "%s/tasks", dir);
    snprintf(pid, sizeof pid, "%ld\n", (long)getpid());
    f = ok ? fopen(path, "w") : NULL;
    ok = f && fputs(pid, f) >= 0;
    if (f && fclose(f) != 0) ok = 0;
    unsigned inside = ok ? pipeline_cpus() : 0;
    snprintf(path, sizeof path, "%s/tasks", base);
    f = fopen(path, "w");
    if (f) { fputs(pid, f); fclose(f); }
    rmdir(dir);
    if (!ok) cr_skip_test("could not set a quota in %s", dir);
    cr_assert_eq(inside, 1, "pipeline_cpus in a 1-CPU cgroup: %u", inside);
}
