/* Readers on threads: the read-only calls on one summary, from 4 threads at
 * once, give the single-thread results and write nothing.
 *
 * Each thread runs, several times over, what the commands compute from a
 * summary: screen_run, pca_fit, quantiles (buckets_quantile), top values
 * (values_top), the ordered walks of the bucket store and the per-value
 * table (buckets_entry_at, crosstab_entry_at), and summary_write to a file of
 * its own.  Everything is folded into one 64-bit digest (FNV-1a over the
 * bits of the results and the bytes of the file) and compared with the
 * digest of a single-thread run made before the threads start (sheaf's own
 * output as the reference: the point is "the same", not a value).
 *
 * The summaries come from a merge of two shard scans, and from a scan that
 * is then sealed: summary_merge ends sealed, and the scan is sealed as the
 * scan itself will be.  Under ThreadSanitizer (tests/cli/test_readers_tsan.sh
 * builds this file with -DREADERS_STANDALONE and -fsanitize=thread) a write
 * to a shared summary by any reader is reported as a data race.
 *
 * Data: penguins.csv (target species, classification) and mpg.csv (target
 * mpg, regression) from ../shared/data/open (or $SHEAF_DATA/open); where
 * they are absent (a fresh machine), generated stand-ins with the same
 * targets (fixed seed), so the check runs everywhere.
 */
#include <inttypes.h>
#include <pthread.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <utime.h>

#ifndef READERS_STANDALONE
#include <criterion/criterion.h>
#endif

#include "stats/pca.h"
#include "stats/screen.h"
#include "summary/scan.h"
#include "summary/summary.h"
#include "testutil.h"

#define READERS_THREADS 4
#define READERS_ROUNDS 3

/* ---- digest of the read-only computations ------------------------------- */

static uint64_t mix(uint64_t h, const void *p, size_t n)
{
    const unsigned char *b = p;
    for (size_t i = 0; i < n; i++) h = (h ^ b[i]) * UINT64_C(0x100000001B3); /* FNV-1a */
    return h;
}

static uint64_t mix_double(uint64_t h, double x) { return mix(h, &x, sizeof x); }
static uint64_t mix_u64(uint64_t h, uint64_t x) { return mix(h, &x, sizeof x); }

static uint64_t mix_file(uint64_t h, const char *path)
{
    FILE *f = fopen(path, "rb");
    if (!f) return 0;
    unsigned char buf[4096];
    size_t n;
    while ((n = fread(buf, 1, sizeof buf, f)) > 0) h = mix(h, buf, n);
    fclose(f);
    return h;
}

static uint64_t mix_screen(uint64_t h, const summary *s)
{
    screen_options o;
    screen_options_defaults(&o);
    screen_result *r = screen_run(s, &o);
    if (!r) return 0;
    h = mix_u64(h, r->kept);
    for (size_t i = 0; i < r->nfeatures; i++) {
        const screen_feature *f = &r->features[i];
        h = mix_u64(h, f->flags);
        h = mix_u64(h, (uint64_t)f->keep);
        h = mix_u64(h, f->rank);
        h = mix_double(h, f->p);
        h = mix_double(h, f->q);
        h = mix_double(h, f->anova_f.stat);
        h = mix_double(h, f->chi2.stat);
        h = mix_double(h, f->corr_f.extra);
        h = mix_double(h, f->mi.nats);
        h = mix(h, f->reasons, strlen(f->reasons));
    }
    for (size_t i = 0; i < r->npairs; i++) h = mix_double(h, r->pairs[i].r);
    screen_free(r);
    return h;
}

static uint64_t mix_pca(uint64_t h, const summary *s)
{
    pca_options o;
    pca_options_defaults(&o);
    pca_result *r;
    char err[256];
    if (pca_fit(s, &o, &r, err, sizeof err) != PCA_OK) return mix(h, err, strlen(err));
    for (size_t k = 0; k < r->p; k++) h = mix_double(h, r->eigenvalues[k]);
    for (size_t k = 0; k < r->p * r->p; k++) h = mix_double(h, r->loadings[k]);
    pca_result_free(r);
    return h;
}

static uint64_t mix_columns(uint64_t h, const summary *s)
{
    static const double probs[] = {0, 0.01, 0.25, 0.5, 0.75, 0.99, 1};
    for (size_t i = 0; i < s->ncols; i++) {
        const summary_column *c = &s->cols[i];
        for (size_t q = 0; q < sizeof probs / sizeof *probs; q++)
            h = mix_double(h, buckets_quantile(c->bins, probs[q], NULL));
        values_entry top[5];
        size_t nt = values_top(c->vals, 5, top);
        for (size_t k = 0; k < nt; k++) {
            h = mix_u64(h, top[k].hash);
            h = mix_u64(h, top[k].count);
        }
        for (uint32_t k = 0; k < values_levels(c->vals); k++)
            h = mix_u64(h, values_entry_at(c->vals, k).hash);
        for (size_t k = 0; k < buckets_entries(c->bins); k++) {
            buckets_entry e = buckets_entry_at(c->bins, k);
            h = mix(h, &e.key, sizeof e.key);
            h = mix_u64(h, e.count);
        }
        if (c->cross)
            for (size_t k = 0; k < crosstab_entries(c->cross); k++) {
                crosstab_entry e = crosstab_entry_at(c->cross, k);
                h = mix_u64(h, e.key);
                h = mix_u64(h, e.n);
                h = mix_double(h, e.mean);
            }
    }
    return h;
}

/* Everything a reader computes from s, with its file written to `path`. */
static uint64_t reads_digest(const summary *s, const char *path)
{
    uint64_t h = UINT64_C(0xCBF29CE484222325);
    h = mix_screen(h, s);
    h = mix_pca(h, s);
    h = mix_columns(h, s);
    char err[512];
    if (summary_write(s, path, err, sizeof err) != SUMMARY_OK) return 0;
    h = mix_file(h, path);
    unlink(path);
    return h;
}

/* ---- summaries -------------------------------------------------------------- */

/* Writes a stand-in for FILE at path: 400 rows of three numeric columns
 * (some cells missing), a text column, and the target (three text classes
 * for species, else a number). */
static int stand_in(const char *path, const char *target)
{
    FILE *f = fopen(path, "w");
    if (!f) return -1;
    static const char *kinds[] = {"reef", "shelf", "ridge", "cove", "bank"};
    static const char *classes[] = {"north", "south", "east"};
    uint64_t x = 0x9E3779B97F4A7C15ull;
    fprintf(f, "a,b,c,kind,%s\n", target);
    for (int r = 0; r < 400; r++) {
        double v[3];
        for (int k = 0; k < 3; k++) {
            x ^= x << 13; x ^= x >> 7; x ^= x << 17;
            v[k] = (double)(x % 100000) / 997.0 + k * 10;
        }
        int cls = (int)(x >> 40) % 3;
        for (int k = 0; k < 3; k++) {
            if ((x >> (20 + 5 * k)) % 31 == 0) fprintf(f, ",");
            else fprintf(f, "%.3f,", v[k] + (k == 0 ? cls * 20.0 : 0.0));
        }
        fprintf(f, "%s,", kinds[(x >> 50) % 5]);
        if (strcmp(target, "species") == 0) fprintf(f, "%s\n", classes[cls]);
        else fprintf(f, "%.2f\n", v[0] * 0.5 + v[1] * 0.1 + (double)(x % 7));
    }
    if (fclose(f) != 0) return -1;
    /* A fixed mtime: the summaries compared hold it in their source records. */
    struct utimbuf times = {1700000000, 1700000000};
    return utime(path, &times);
}

/* A scan of ../shared/data/open/FILE (or its stand-in) with a target; shard
 * i of n (n 0: whole). */
static summary *scan_open(const char *file, const char *target, uint32_t i, uint32_t n)
{
    char path[1024];
    snprintf(path, sizeof path, "%s/open/%s", testutil_data_dir(), file);
    FILE *probe = fopen(path, "r");
    int generated = !probe;
    if (probe) fclose(probe);
    else {
        snprintf(path, sizeof path, "/tmp/sheaf_readers_%d_%s", (int)getpid(), file);
        if (stand_in(path, target) != 0) return NULL;
    }
    scan_options o;
    scan_options_defaults(&o);
    o.opt.target = strdup(target);
    o.shard_index = i;
    o.shard_count = n;
    const char *paths[1] = {path};
    summary *s = NULL;
    char err[512];
    if (scan_files(&o, paths, 1, &s, err, sizeof err) != SCAN_OK) {
        fprintf(stderr, "scan %s: %s\n", file, err);
        s = NULL;
    }
    if (generated) unlink(path);
    summary_options_free(&o.opt);
    return s;
}

/* The merge of the two halves of FILE (summary_merge ends sealed). */
static summary *merged_halves(const char *file, const char *target)
{
    summary *a = scan_open(file, target, 1, 2), *b = scan_open(file, target, 2, 2);
    char err[1536];
    if (a && b && summary_merge(a, b, err, sizeof err) != SUMMARY_OK) {
        fprintf(stderr, "merge %s: %s\n", file, err);
        summary_free(a);
        a = NULL;
    }
    summary_free(b);
    return a;
}

/* A whole-file scan, sealed as a finished scan is. */
static summary *sealed_scan(const char *file, const char *target)
{
    summary *s = scan_open(file, target, 0, 0);
    if (s && summary_seal(s) != 0) { summary_free(s); s = NULL; }
    return s;
}

/* ---- threads ---------------------------------------------------------------- */

typedef struct {
    const summary *s;                  /* shared, read only */
    char path[256];                    /* this thread's output file */
    uint64_t digest[READERS_ROUNDS];   /* per round */
} reader;

static void *reader_run(void *arg)
{
    reader *r = arg;
    for (int k = 0; k < READERS_ROUNDS; k++) r->digest[k] = reads_digest(r->s, r->path);
    return NULL;
}

/* Runs the readers on s from READERS_THREADS threads; returns the number of
 * digests that differ from the single-thread digest of `ref` (a summary
 * built the same way, so that s is first read by the threads themselves;
 * -1 when that digest failed), and explains in why. */
static int readers_differ(const summary *s, const summary *ref, const char *name, char *why,
                          size_t whylen)
{
    char path[256];
    snprintf(path, sizeof path, "/tmp/sheaf-readers-%d-%s-ref.sheaf", (int)getpid(), name);
    uint64_t want = reads_digest(ref, path);
    if (want == 0) { snprintf(why, whylen, "%s: the single-thread reads failed", name); return -1; }
    reader rd[READERS_THREADS];
    pthread_t t[READERS_THREADS];
    int started = 0, bad = 0;
    for (int i = 0; i < READERS_THREADS; i++) {
        rd[i].s = s;
        snprintf(rd[i].path, sizeof rd[i].path, "/tmp/sheaf-readers-%d-%s-%d.sheaf", (int)getpid(),
                 name, i);
        if (pthread_create(&t[i], NULL, reader_run, &rd[i]) == 0) started++;
        else break;
    }
    for (int i = 0; i < started; i++) pthread_join(t[i], NULL);
    if (started < READERS_THREADS) {
        snprintf(why, whylen, "%s: started %d threads of %d", name, started, READERS_THREADS);
        return -1;
    }
    why[0] = '\0';
    for (int i = 0; i < READERS_THREADS; i++)
        for (int k = 0; k < READERS_ROUNDS; k++)
            if (rd[i].digest[k] != want) {
                if (!bad++)
                    snprintf(why, whylen, "%s: thread %d round %d digest %016" PRIx64
                             ", single thread %016" PRIx64, name, i, k, rd[i].digest[k], want);
            }
    return bad;
}

#ifndef READERS_STANDALONE

static void check_readers(summary *s, summary *ref, const char *name)
{
    cr_assert(s && ref, "%s: no summary (is $SHEAF_DATA/open there?)", name);
    cr_expect(summary_sealed(s), "%s: not sealed", name);
    char why[512];
    int bad = readers_differ(s, ref, name, why, sizeof why);
    cr_expect_eq(bad, 0, "%s", why);
    cr_expect(summary_sealed(s), "%s: the reads changed the summary's indexes", name);
    summary_free(s);
    summary_free(ref);
}

Test(readers_threads, merged_classification_summary_reads_alike_on_four_threads)
{
    check_readers(merged_halves("penguins.csv", "species"), merged_halves("penguins.csv", "species"),
                  "penguins-merged");
}

Test(readers_threads, merged_regression_summary_reads_alike_on_four_threads)
{
    check_readers(merged_halves("mpg.csv", "mpg"), merged_halves("mpg.csv", "mpg"), "mpg-merged");
}

Test(readers_threads, sealed_scan_reads_alike_on_four_threads)
{
    check_readers(sealed_scan("penguins.csv", "species"), sealed_scan("penguins.csv", "species"),
                  "penguins-scan");
}

Test(readers_threads, unsealed_scan_reads_alike_and_stays_unsealed)
{
    /* Without summary_seal every ordered read takes the temporary-index
     * path: still the same results, and still nothing written. */
    summary *s = scan_open("mpg.csv", "mpg", 0, 0);
    cr_assert(s);
    summary *sealed = sealed_scan("mpg.csv", "mpg");
    cr_assert(sealed);
    char a[] = "/tmp/sheaf-readers-unsealed-XXXXXX", b[] = "/tmp/sheaf-readers-sealed-XXXXXX";
    int fa = mkstemp(a), fb = mkstemp(b);
    cr_assert(fa >= 0 && fb >= 0);
    close(fa);
    close(fb);
    int was = summary_sealed(s);
    cr_expect_eq(reads_digest(s, a), reads_digest(sealed, b), "unsealed and sealed reads differ");
    cr_expect_eq(summary_sealed(s), was, "a read changed the summary's indexes");
    char why[512];
    cr_expect_eq(readers_differ(s, sealed, "mpg-unsealed", why, sizeof why), 0, "%s", why);
    summary_free(s);
    summary_free(sealed);
}

#else /* READERS_STANDALONE: for the ThreadSanitizer build, without Criterion */

int main(void)
{
    struct { const char *name; summary *s, *ref; } cases[] = {
        {"penguins-merged", merged_halves("penguins.csv", "species"),
         merged_halves("penguins.csv", "species")},
        {"mpg-merged", merged_halves("mpg.csv", "mpg"), merged_halves("mpg.csv", "mpg")},
        {"penguins-scan", sealed_scan("penguins.csv", "species"),
         sealed_scan("penguins.csv", "species")},
    };
    int failed = 0;
    for (size_t i = 0; i < sizeof cases / sizeof *cases; i++) {
        char why[512] = "no summary";
        int bad = cases[i].s && cases[i].ref
                      ? readers_differ(cases[i].s, cases[i].ref, cases[i].name, why, sizeof why)
                      : -1;
        if (bad == 0) printf("PASS readers_threads.%s\n", cases[i].name);
        else printf("FAIL readers_threads.%s: %s\n", cases[i].name, why), failed = 1;
        summary_free(cases[i].s);
        summary_free(cases[i].ref);
    }
    return failed;
}

#endif
