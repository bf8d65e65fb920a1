/* fuzz_summary_decode: the summary decoder, then every read-only
 * computation of the commands that read a summary.
 *
 * Each input is the bytes of a summary file.  summary_decode must either
 * refuse it (SUMMARY_ERR_CORRUPT, or SUMMARY_ERR_MEMORY; SUMMARY_ERR_TARGETS
 * for a file of several targets, which summary_set_decode must then read,
 * each part going through info, screen and corr) or return a summary
 * on which nothing that a reading command computes may fail a sanitizer:
 *   - info: describe_column of every column (top values, quantiles,
 *     per-class moments), the class table, the sources;
 *   - screen, with the default options and with others that reach more
 *     paths (MI ranking, few bins, a variance floor, --max-kept);
 *   - trim --summary: the kept names from screen, plus the target's;
 *   - corr: the columns, Pearson r and covariance matrices, pair counts;
 *   - pca: the correlation and covariance bases, with and without the
 *     target, and a projection of a few rows of zeros;
 *   - merge: the summary merged with a second decode of the same bytes,
 *     then described again.
 * Because the checksums would turn away almost every mutation, the harness
 * recomputes them first (the section checksums, then the trailer), so the
 * fuzzer reaches the decoder's checks of the structure itself
 * (docs/summary-format.md, "Invariants").  Set SHEAF_FUZZ_KEEP_CHECKSUMS=1
 * to decode the bytes exactly as given, and SHEAF_FUZZ_VERBOSE=1 to print
 * whether each input was accepted (and why not).
 *
 * Seeds: tests/fuzz/corpus/summary_decode/ (small summaries of a class
 * target, a numeric target kept as classes, a regression target, no target,
 * merged shards, and crafted files that once crashed readers).  Built with
 * -DFUZZ_REPLAY_MAIN it is a plain program instead: `replay_summary_decode
 * FILE_OR_DIR...` runs every file once (the committed corpus, with gcc and
 * no libFuzzer).
 */
#include <dirent.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <xxhash.h>

#include "stats/corr.h"
#include "stats/describe.h"
#include "stats/pca.h"
#include "stats/screen.h"
#include "summary/access.h"
#include "summary/summary.h"

#define MAX_INPUT_BYTES (1u << 20)

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

static uint64_t get_le64(const uint8_t *p)
{
    uint64_t v = 0;
    for (int i = 0; i < 8; i++) v |= (uint64_t)p[i] << (8 * i);
    return v;
}

static void put_le64(uint8_t *p, uint64_t v)
{
    for (int i = 0; i < 8; i++) p[i] = (uint8_t)(v >> (8 * i));
}

/* Rewrites the checksums of the sections whose frames fit, then the
 * trailer's (docs/summary-format.md, "Layout"). */
static void reseal(uint8_t *b, size_t n)
{
    if (n < 12 + 20) return;
    /* A file of several targets (version 4): its TGTS section and up to
     * SUMMARY_MAX_TARGETS PART sections, each a whole summary resealed
     * first. */
    int several = b[8] == SUMMARY_SET_FORMAT_VERSION && !b[9] && !b[10] && !b[11];
    size_t pos = 12;
    for (int k = 0; k < (several ? SUMMARY_MAX_TARGETS + 1 : 6); k++) {
        if (n - 20 - pos < 12) break;
        uint64_t plen = get_le64(b + pos + 4);
        pos += 12;
        if (plen > n - 20 - pos || n - 20 - pos - plen < 8) break;
        if (several && k > 0 && plen >= 12 && b[pos + 8] != SUMMARY_SET_FORMAT_VERSION)
            reseal(b + pos, (size_t)plen);
        put_le64(b + pos + plen, XXH3_64bits(b + pos, (size_t)plen));
        pos += (size_t)plen + 8;
    }
    put_le64(b + n - 8, XXH3_64bits(b, n - 8));
}

static void run_info(const summary *s)
{
    for (size_t i = 0; i < summary_columns(s); i++) {
        column_description d;
        if (describe_column(s, i, 0.99, 10, &d) == 0) describe_column_free(&d);
    }
    (void)describe_class_total(s);
    for (uint32_t k = 0; k < summary_class_count(s); k++) {
        (void)summary_class_label(s, k);
        (void)summary_class_rows(s, k);
    }
    for (size_t i = 0; i < summary_source_count(s); i++) (void)summary_source_at(s, i);
    (void)summary_task(s, 0.99);
    (void)summary_target_name(s);
}

/* The screen, and the names trim --summary keeps from it. */
static void run_screen(const summary *s, const screen_options *o)
{
    screen_result *r = screen_run(s, o);
    if (!r) return;
    size_t kept_bytes = 0;
    for (size_t i = 0; i < r->nfeatures; i++)
        if (r->features[i].keep) kept_bytes += strlen(summary_name(s, r->features[i].col));
    const char *target = summary_target_name(s);
    if (target) kept_bytes += strlen(target);
    (void)kept_bytes;
    screen_free(r);
}

static void run_corr(const summary *s)
{
    size_t n = summary_columns(s);
    size_t *cols = malloc((n ? n : 1) * sizeof *cols);
    char err[256];
    long m = cols ? corr_columns(s, 0.99, NULL, cols, err, sizeof err) : -1;
    if (m > 0 && m <= 64) {
        double *out = malloc((size_t)(m * m) * sizeof *out);
        uint64_t *counts = malloc((size_t)(m * m) * sizeof *counts);
        if (out && counts) {
            corr_matrix(s, cols, (size_t)m, CORR_PEARSON, out);
            corr_matrix(s, cols, (size_t)m, CORR_COVARIANCE, out);
            corr_pair_counts(s, cols, (size_t)m, counts);
        }
        free(out);
        free(counts);
    }
    free(cols);
}

static void run_pca(const summary *s, pca_basis basis, int with_target)
{
    pca_options o;
    pca_options_defaults(&o);
    o.basis = basis;
    o.with_target = with_target;
    pca_result *r = NULL;
    char err[256];
    if (pca_fit(s, &o, &r, err, sizeof err) != PCA_OK) return;
    size_t k = pca_choose_k(r, 0, 0);
    if (k == 0 || k > r->p) k = r->p;
    double *x = calloc(2 * r->p, sizeof *x);
    double *scores = malloc(2 * k * sizeof *scores);
    if (x && scores) pca_project(r, k, x, 2, scores);
    free(x);
    free(scores);
    pca_result_free(r);
}

/* What merge does: a second decode of the same bytes merged into the
 * first (the command refuses a copy of itself as a duplicate source; the
 * library call merges anyway). */
static void run_merge(summary *s, const uint8_t *b, size_t size)
{
    summary *again = NULL;
    char err[512];
    summary_status st = summary_decode(b, size, &again, err, sizeof err);
    if (st == SUMMARY_ERR_MEMORY) return;
    if (st != SUMMARY_OK) {
        fprintf(stderr, "the same bytes decoded once and not twice: %s\n", err);
        abort();
    }
    (void)summary_merge(s, again, err, sizeof err);
    summary_free(again);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > MAX_INPUT_BYTES) return 0;
    uint8_t *b = malloc(size ? size : 1);
    if (!b) return 0;
    memcpy(b, data, size);
    const char *keep = getenv("SHEAF_FUZZ_KEEP_CHECKSUMS");
    if (!keep || strcmp(keep, "1") != 0) reseal(b, size);
    summary *s = NULL;
    char err[512];
    summary_status st = summary_decode(b, size, &s, err, sizeof err);
    if (st == SUMMARY_ERR_TARGETS) {
        /* A file of several targets: summary_decode names them; the set
         * must decode, and each of its parts go through what follows. */
        summary_set *set = NULL;
        st = summary_set_decode(b, size, &set, err, sizeof err);
        if (st != SUMMARY_OK && st != SUMMARY_ERR_MEMORY) {
            fprintf(stderr, "refused as several targets, then as a set: %s\n", err);
            abort();
        }
        for (size_t i = 0; set && i < set->n; i++) {
            summary *part = summary_set_take(set, i);
            run_info(part);
            screen_options o;
            screen_options_defaults(&o);
            run_screen(part, &o);
            run_corr(part);
            summary_free(part);
        }
        summary_set_free(set);
        st = SUMMARY_ERR_TARGETS;
    }
    if (getenv("SHEAF_FUZZ_VERBOSE"))
        fprintf(stderr, "  %s\n", st == SUMMARY_OK ? "accepted" : err);
    if (st == SUMMARY_OK) {
        run_info(s);
        screen_options o;
        screen_options_defaults(&o);
        run_screen(s, &o);
        o.rank_by = RANK_MI;
        o.bins = 3;
        o.min_variance = 1e-3;
        o.top = 2;
        run_screen(s, &o);
        run_corr(s);
        run_pca(s, PCA_BASIS_CORRELATION, 0);
        run_pca(s, PCA_BASIS_COVARIANCE, 1);
        run_merge(s, b, size);
        run_info(s);
        summary_free(s);
    }
    free(b);
    return 0;
}

#ifdef FUZZ_REPLAY_MAIN
#include "replay_main.h"
#endif
