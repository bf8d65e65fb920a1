/* fuzz_scan_split: a differential fuzz target for where records end.
 *
 * The chunker, the shard start and the tokenizer each decide where a record
 * ends; when their rules differ, the same bytes give different tables
 * depending on --chunk-size or --shard.  For every input this harness writes
 * the bytes to a file and scans it:
 *   - whole, as one chunk (64 KiB chunks: the input is at most 8 KiB, so this
 *     is the 4 MiB default's behaviour without its 8 MiB buffer);
 *   - whole, with 64-byte chunks and a chunk size picked from the input's
 *     hash (64 .. input size + 127);
 *   - as N byte-range shards (--shard I/N) merged in order with
 *     summary_merge, N = 2..8 picked from the hash, with one chunk or with
 *     chunks of 64 .. 575 bytes.
 * With SHEAF_FUZZ_ALL_SPLITS=1 in the environment (the replay of the
 * corpus) it runs both chunk sizes from the hash and every N = 2..8 (odd N
 * with small chunks, even N with one).  Fuzzing runs one N per input: a
 * shard scan opens the file three times, and large buffers cost most of the
 * time under AddressSanitizer.
 * All of them must agree: either every run fails with the same class of error
 * (scan_status), or every run succeeds with the same summary.  "The same"
 * is checked field by field, since moments merged from parts differ from a
 * single pass by rounding: rows, bytes, ragged-row counts, column names,
 * per-column missing / non-numeric / non-finite / zero / integer counts,
 * moment counts, min and max exactly, mean and variance to 1e-9 of the
 * column's range, value tables (levels, totals, and every exact count),
 * bucket stores (level, total, entries), co-moment pair counts, and with a
 * target: classes by their text, class counts, per-class moment counts and
 * per-value class counts.  Source records, kept line numbers of ragged rows
 * and examples are not compared (a shard counts lines from its own start, and
 * examples keep the first ones met).
 *
 * Run options come from an FNV-1a hash of the input, so a corpus file is the
 * plain table: the delimiter is fixed to what csv_detect_delimiter finds on
 * the whole input (detection itself reads only the first chunk), a target
 * (the last column, when it has at most 64 distinct values) is set for some
 * inputs, and --max-record is lowered for some (set SHEAF_FUZZ_MAX_RECORD=0
 * in the environment to keep the default 64 MiB).  Summaries use small
 * tables (64 value levels, 64 buckets) so that wide inputs stay cheap.
 *
 * A disagreement prints both outcomes and aborts, so libFuzzer reports the
 * input.  Built with -DFUZZ_REPLAY_MAIN it is a plain program instead:
 * `replay_scan_split FILE_OR_DIR...` runs every file once with every split
 * (the committed corpus, with gcc and no libFuzzer).
 */
#include <dirent.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/csv.h"
#include "summary/scan.h"
#include "summary/shards.h"
#include "summary/summary.h"

#define MAX_INPUT_BYTES 8192 /* longer inputs are cut: per-input work stays small */
#define MAX_SHARDS 8
/* The reference run's chunk size: 8 times the longest input, so the input is
 * one chunk, exactly as with the 4 MiB default (whose 8 MiB buffer would
 * cost more under ASan than the scan). */
#define WHOLE_CHUNK_BYTES (64u << 10)

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static char input_path[4096];

static void remove_input(void)
{
    if (input_path[0]) unlink(input_path);
}

/* abort() skips atexit handlers: remove the input file first. */
static void __attribute__((noreturn)) stop(void)
{
    remove_input();
    abort();
}

/* One run: a scan (or a merge of shard scans) and how it ended. */
typedef struct {
    char what[48];     /* "whole, 64-byte chunks", "3 shards", ... */
    scan_status st;    /* SCAN_OK or the first failure */
    summary *s;        /* the summary when st == SCAN_OK */
    char err[600];     /* the message of the failure */
} outcome;

static void outcome_free(outcome *o)
{
    summary_free(o->s);
    o->s = NULL;
}

static uint64_t fnv1a(const uint8_t *p, size_t n)
{
    uint64_t h = 1469598103934665603ull;
    for (size_t i = 0; i < n; i++) h = (h ^ p[i]) * 1099511628211ull;
    return h;
}

static void base_options(scan_options *o, char delim, size_t max_record)
{
    scan_options_defaults(o);
    o->opt.max_levels = 64;
    o->opt.label_bytes = 16;
    o->opt.bucket_budget = 64;
    o->delim = delim;
    o->force = 1; /* binary inputs too: the text check would refuse most mutations */
    o->max_record_bytes = max_record;
    o->mem_limit_bytes = 64u << 20; /* wide headers fail alike in every run */
}

static void scan_one(const scan_options *base, size_t chunk_bytes, uint32_t index, uint32_t count,
                     summary **out, scan_status *st, char *err, size_t errlen)
{
    scan_options o = *base;
    o.chunk_bytes = chunk_bytes;
    o.shard_index = index;
    o.shard_count = count;
    const char *paths[1] = {input_path};
    err[0] = '\0';
    *st = scan_files(&o, paths, 1, out, err, errlen);
}

static void run_whole(outcome *r, const scan_options *base, size_t chunk_bytes)
{
    snprintf(r->what, sizeof r->what, "whole, %zu-byte chunks", chunk_bytes);
    r->s = NULL;
    scan_one(base, chunk_bytes, 0, 0, &r->s, &r->st, r->err, sizeof r->err);
}

/* N shards, each scanned, then merged in order into the first, as a user
 * would (docs/shards.md): a shard whose scan fails, or that the merged
 * summary's shard check finds wrong, is scanned again from the top of the
 * file ({shard_from_top}), and the shards merged again. */
static void run_shards(outcome *r, const scan_options *base, size_t chunk_bytes, uint32_t n)
{
    snprintf(r->what, sizeof r->what, "%u shards, %zu-byte chunks", n, chunk_bytes);
    int from_top[MAX_SHARDS] = {0};
    for (uint32_t round = 0; round <= n; round++) {
        r->s = NULL;
        r->st = SCAN_OK;
        summary *part[MAX_SHARDS] = {0};
        for (uint32_t i = 0; i < n && r->st == SCAN_OK; i++) {
            char e[512];
            scan_options o = *base;
            o.shard_from_top = from_top[i];
            scan_one(&o, chunk_bytes, i + 1, n, &part[i], &r->st, e, sizeof e);
            if (r->st != SCAN_OK && !from_top[i]) { /* a guessed start may fail: from the top */
                from_top[i] = 1;
                o.shard_from_top = 1;
                scan_one(&o, chunk_bytes, i + 1, n, &part[i], &r->st, e, sizeof e);
            }
            if (r->st != SCAN_OK) snprintf(r->err, sizeof r->err, "shard %u/%u: %s", i + 1, n, e);
        }
        for (uint32_t i = 1; i < n && r->st == SCAN_OK; i++) {
            summary_status ms = summary_merge(part[0], part[i], r->err, sizeof r->err);
            if (ms != SUMMARY_OK) {
                fprintf(stderr, "fuzz_scan_split: %s: merging shard %u fails: %s\n", r->what,
                        i + 1, r->err);
                stop();
            }
        }
        int again = 0;
        if (r->st == SCAN_OK) {
            shard_check c;
            size_t bad;
            char why[2048];
            if (summary_shards_check(part[0], &c, NULL, &bad, why, sizeof why) != 0) {
                uint32_t k = part[0]->sources[bad].shard_index;
                if (k < 1 || k > n || from_top[k - 1] || !strstr(why, "{shard_from_top}")) {
                    fprintf(stderr, "fuzz_scan_split: %s: the shard check fails: %s\n", r->what,
                            why);
                    stop();
                }
                from_top[k - 1] = 1;
                again = 1;
            } else {
                r->s = part[0];
                part[0] = NULL;
            }
        }
        for (uint32_t i = 0; i < n; i++) summary_free(part[i]);
        if (!again) return;
    }
}

/* ---- comparison ---------------------------------------------------------- */

static const outcome *cmp_a, *cmp_b;

static void differ(const char *fmt, ...) __attribute__((format(printf, 1, 2), noreturn));
static void differ(const char *fmt, ...)
{
    char msg[512];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    fprintf(stderr, "fuzz_scan_split: [%s] and [%s] disagree: %s\n", cmp_a->what, cmp_b->what, msg);
    stop();
}

#define SAME_U(field, a, b)                                                                       \
    do {                                                                                          \
        if ((uint64_t)(a) != (uint64_t)(b))                                                       \
            differ("%s: %llu vs %llu", field, (unsigned long long)(a), (unsigned long long)(b));  \
    } while (0)

/* Equal up to rounding: |a - b| <= 1e-9 scale (NaN equals NaN; skipped when
 * the scale is not finite). */
static int near(double a, double b, double scale)
{
    if (isnan(a) && isnan(b)) return 1;
    if (a == b) return 1;
    if (!isfinite(scale)) return 1;
    return fabs(a - b) <= 1e-9 * scale + 1e-300;
}

/* Class index in b of class k (1-based) of a, by text hash; 0 if absent. */
static uint32_t class_in(const summary *a, uint32_t k, const summary *b)
{
    for (uint32_t j = 0; j < b->nclasses; j++)
        if (b->class_hash[j] == a->class_hash[k - 1]) return j + 1;
    return 0;
}

static void compare_column(const summary *a, const summary *b, size_t j)
{
    const summary_column *x = &a->cols[j], *y = &b->cols[j];
    char f[96];
#define COL(what) (snprintf(f, sizeof f, "column %zu '%s' %s", j + 1, x->name, what), f)
    if (strcmp(x->name, y->name) != 0) differ("column %zu name '%s' vs '%s'", j + 1, x->name, y->name);
    SAME_U(COL("missing"), x->missing, y->missing);
    SAME_U(COL("non_numeric"), x->non_numeric, y->non_numeric);
    SAME_U(COL("non_finite"), x->non_finite, y->non_finite);
    SAME_U(COL("zeros"), x->zeros, y->zeros);
    SAME_U(COL("integers"), x->integers, y->integers);
    SAME_U(COL("numbers"), x->mom.n, y->mom.n);
    if (x->mom.n) {
        if (x->mom.min != y->mom.min || x->mom.max != y->mom.max)
            differ("%s: [%.17g, %.17g] vs [%.17g, %.17g]", COL("range"), x->mom.min, x->mom.max,
                   y->mom.min, y->mom.max);
        double range = x->mom.max - x->mom.min;
        double scale = fmax(fabs(x->mom.min), fabs(x->mom.max));
        if (!near(moments_mean(&x->mom), moments_mean(&y->mom), scale))
            differ("%s: %.17g vs %.17g", COL("mean"), moments_mean(&x->mom), moments_mean(&y->mom));
        if (!near(moments_variance(&x->mom), moments_variance(&y->mom), range * range))
            differ("%s: %.17g vs %.17g", COL("variance"), moments_variance(&x->mom),
                   moments_variance(&y->mom));
    }
    SAME_U(COL("value levels"), values_levels(x->vals), values_levels(y->vals));
    SAME_U(COL("value total"), values_total(x->vals), values_total(y->vals));
    SAME_U(COL("values overflowed"), values_overflowed(x->vals), values_overflowed(y->vals));
    if (!values_overflowed(x->vals))
        for (uint32_t i = 0; i < values_levels(x->vals); i++) {
            values_entry e = values_entry_at(x->vals, i);
            SAME_U(COL("value count"), e.count, values_count_of(y->vals, e.hash));
        }
    SAME_U(COL("bucket total"), buckets_total(x->bins), buckets_total(y->bins));
    SAME_U(COL("bucket level"), buckets_level(x->bins), buckets_level(y->bins));
    if (!a->has_classes) { /* cells are target cells, numbered alike */
        SAME_U(COL("bucket entries"), buckets_entries(x->bins), buckets_entries(y->bins));
        for (size_t i = 0; i < buckets_entries(x->bins); i++) {
            buckets_entry p = buckets_entry_at(x->bins, i), q = buckets_entry_at(y->bins, i);
            if (p.key != q.key || p.cell != q.cell || p.count != q.count)
                differ("%s %zu: key %lld cell %u count %llu vs key %lld cell %u count %llu",
                       COL("bucket entry"), i, (long long)p.key, p.cell,
                       (unsigned long long)p.count, (long long)q.key, q.cell,
                       (unsigned long long)q.count);
        }
    }
    if (a->has_classes && x->cls)
        for (uint32_t k = 1; k <= a->nclasses; k++)
            SAME_U(COL("class moments n"), x->cls[k - 1].n, y->cls[class_in(a, k, b) - 1].n);
    if (a->has_classes && x->cross && !values_overflowed(x->vals)) {
        SAME_U(COL("per-value entries"), crosstab_entries(x->cross), crosstab_entries(y->cross));
        for (size_t i = 0; i < crosstab_entries(x->cross); i++) {
            crosstab_entry e = crosstab_entry_at(x->cross, i);
            uint32_t cell = e.cell ? class_in(a, e.cell, b) : 0;
            SAME_U(COL("per-value class count"), e.n, crosstab_lookup(y->cross, e.key, cell).n);
        }
    }
#undef COL
}

static void compare_summaries(const summary *a, const summary *b)
{
    SAME_U("rows", a->rows, b->rows);
    SAME_U("short rows", a->short_rows, b->short_rows);
    SAME_U("long rows", a->long_rows, b->long_rows);
    SAME_U("bytes", a->bytes, b->bytes);
    SAME_U("columns", a->ncols, b->ncols);
    SAME_U("target text cells", a->target_text, b->target_text);
    SAME_U("has classes", a->has_classes, b->has_classes);
    SAME_U("classes dropped", a->classes_dropped, b->classes_dropped);
    if (a->has_classes) {
        SAME_U("classes", a->nclasses, b->nclasses);
        for (uint32_t k = 1; k <= a->nclasses; k++) {
            uint32_t m = class_in(a, k, b);
            if (!m) differ("class '%s' missing", a->class_label[k - 1]);
            SAME_U("class rows", a->class_rows[k - 1], b->class_rows[m - 1]);
        }
    }
    for (size_t j = 0; j < a->ncols; j++) compare_column(a, b, j);
    SAME_U("co-moment columns", a->ncomo, b->ncomo);
    if (a->como && b->como)
        for (size_t i = 0; i < a->ncomo; i++)
            for (size_t k = i; k < a->ncomo; k++)
                if (comoment_n(a->como, i, k) != comoment_n(b->como, i, k))
                    differ("co-moment pair (%zu, %zu) rows %.0f vs %.0f", i, k,
                           comoment_n(a->como, i, k), comoment_n(b->como, i, k));
}

static void compare(const outcome *a, const outcome *b)
{
    cmp_a = a;
    cmp_b = b;
    if (a->st != b->st)
        differ("status %d (%s) vs %d (%s)", a->st, a->st ? a->err : "ok", b->st,
               b->st ? b->err : "ok");
    if (a->st == SCAN_OK) compare_summaries(a->s, b->s);
}

/* ---- the target ------------------------------------------------------------ */

static int write_input(const uint8_t *data, size_t size)
{
    if (!input_path[0]) {
        const char *dir = getenv("TMPDIR");
        snprintf(input_path, sizeof input_path, "%s/fuzz_scan_split.XXXXXX",
                 dir && *dir ? dir : "/tmp");
        int fd = mkstemp(input_path);
        if (fd < 0) { input_path[0] = '\0'; return -1; }
        close(fd);
        atexit(remove_input);
    }
    FILE *f = fopen(input_path, "wb");
    if (!f) return -1;
    size_t put = fwrite(data, 1, size, f);
    return fclose(f) == 0 && put == size ? 0 : -1;
}

/* The target column for a class run: the last one, when its name is unique
 * and its values are few (so that the class limit is never reached). */
static char *pick_target(const summary *s)
{
    if (s->ncols < 2) return NULL;
    const summary_column *c = &s->cols[s->ncols - 1];
    if (values_overflowed(c->vals) || strchr(c->name, ',')) return NULL;
    for (size_t j = 0; j + 1 < s->ncols; j++)
        if (strcmp(s->cols[j].name, c->name) == 0) return NULL;
    return strdup(c->name);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > MAX_INPUT_BYTES) size = MAX_INPUT_BYTES;
    if (write_input(data, size) != 0) {
        fprintf(stderr, "fuzz_scan_split: cannot write %s\n", input_path);
        stop();
    }
    uint64_t h = fnv1a(data, size);
    size_t bom = csv_bom_length((const char *)data, size);
    char delim = csv_detect_delimiter((const char *)data + bom, size - bom);
    const char *mr = getenv("SHEAF_FUZZ_MAX_RECORD");
    size_t max_record = 64u << 20;
    if (!(mr && strcmp(mr, "0") == 0) && (h >> 32 & 3) == 0) max_record = 16 + (h >> 40) % 256;
    size_t chunk_a = 64 + (h & 0xffff) % (size + 64), chunk_b = 64 + (h >> 16 & 0xffff) % 512;

    scan_options base;
    base_options(&base, delim, max_record);
    outcome ref;
    run_whole(&ref, &base, WHOLE_CHUNK_BYTES);
    /* Some inputs run with a target (the class bookkeeping is merged too). */
    char *target = ref.st == SCAN_OK && (h >> 48 & 1) ? pick_target(ref.s) : NULL;
    if (target) {
        outcome_free(&ref);
        base.opt.target = target;
        run_whole(&ref, &base, WHOLE_CHUNK_BYTES);
    }
    /* Fuzzing: two more chunk sizes and one shard count (2..8) per input,
     * since a shard scan opens the file three times and large buffers cost
     * most of the time under ASan.  Replay (SHEAF_FUZZ_ALL_SPLITS=1): three
     * chunk sizes and every shard count (odd ones with small chunks). */
    const char *all_env = getenv("SHEAF_FUZZ_ALL_SPLITS");
    int all = all_env && strcmp(all_env, "1") == 0;
    const size_t chunks[3] = {64, chunk_a, chunk_b};
    for (size_t i = 0; i < (all ? 3u : 2u); i++) {
        outcome r;
        run_whole(&r, &base, chunks[i]);
        compare(&ref, &r);
        outcome_free(&r);
    }
    uint32_t pick = 2 + (uint32_t)(h >> 56) % (MAX_SHARDS - 1);
    for (uint32_t n = all ? 2 : pick; n <= (all ? MAX_SHARDS : pick); n++) {
        int small = all ? (int)(n & 1) : (int)(h >> 55 & 1);
        outcome r;
        run_shards(&r, &base, small ? chunk_b : WHOLE_CHUNK_BYTES, n);
        compare(&ref, &r);
        outcome_free(&r);
    }
    outcome_free(&ref);
    summary_options_free(&base.opt); /* frees the target too */
    return 0;
}

#ifdef FUZZ_REPLAY_MAIN
#define FUZZ_REPLAY_SETUP() setenv("SHEAF_FUZZ_ALL_SPLITS", "1", 0) /* every split */
#include "replay_main.h"
#endif
