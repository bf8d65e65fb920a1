/* api_summary: summaries and sets of the public API (include/sheaf.h): their
 * files and merges (summary/summary.h) and the figures of a table and its
 * columns (summary/access.h).  Column indices are checked here, since the
 * accessors below do not check them: out of range gives NaN, 0 or NULL. */
#include "api/api.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

#include "summary/access.h"
#include "summary/shards.h"

/* The kind rule of `screen` and `info` (screen_options_defaults). */
#define NUMERIC_SHARE 0.99

sheaf_summary *api_wrap(summary *s, sheaf_error *err)
{
    sheaf_summary *w = malloc(sizeof *w);
    if (!w) {
        summary_free(s);
        api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
        return NULL;
    }
    w->s = s;
    return w;
}

sheaf_summary_set *api_wrap_set(summary_set *set, sheaf_error *err)
{
    sheaf_summary_set *w = malloc(sizeof *w);
    if (!w) {
        summary_set_free(set);
        api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
        return NULL;
    }
    w->set = set;
    return w;
}

void sheaf_summary_free(sheaf_summary *s)
{
    if (!s) return;
    summary_free(s->s);
    free(s);
}

static int no_summary(sheaf_error *err, const char *call)
{
    return api_fail(err, SHEAF_ERR_USAGE, "%s: no summary (NULL)", call);
}

/* A status of summary/summary.h as the public code, its message into err. */
static int reported(summary_status st, const char *msg, sheaf_error *err)
{
    if (st == SUMMARY_OK) return SHEAF_OK;
    return api_fail(err, api_summary_code(st), "%s", msg);
}

int sheaf_summary_write(const sheaf_summary *s, const char *path, sheaf_error *err)
{
    if (!s) return no_summary(err, "sheaf_summary_write");
    if (!path) return api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_write: no path (NULL)");
    char msg[SHEAF_ERROR_BYTES] = "";
    return reported(summary_write(s->s, path, msg, sizeof msg), msg, err);
}

sheaf_summary *sheaf_summary_read(const char *path, sheaf_error *err)
{
    return sheaf_summary_read_target(path, NULL, err);
}

sheaf_summary *sheaf_summary_read_target(const char *path, const char *target, sheaf_error *err)
{
    if (!path) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_read: no path (NULL)");
        return NULL;
    }
    char msg[SHEAF_ERROR_BYTES] = "";
    summary *s = NULL;
    if (reported(summary_read_target(path, target, &s, msg, sizeof msg), msg, err)) return NULL;
    return api_wrap(s, err);
}

sheaf_summary *sheaf_summary_read_memory(const void *data, size_t len, sheaf_error *err)
{
    if (!data && len) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_read_memory: no bytes (NULL)");
        return NULL;
    }
    char msg[SHEAF_ERROR_BYTES] = "";
    summary *s = NULL;
    if (reported(summary_decode(data, len, &s, msg, sizeof msg), msg, err)) return NULL;
    return api_wrap(s, err);
}

/* What sheaf merge refuses before a merge: a source of `from` already
 * counted in `into` (unless SHEAF_MERGE_ALLOW_DUPLICATES). */
static int counted_twice(const char *call, const summary *into, const summary *from,
                         unsigned flags, sheaf_error *err)
{
    size_t k;
    long d = flags & SHEAF_MERGE_ALLOW_DUPLICATES ? -1 : summary_duplicate_source(into, from, &k);
    if (d < 0) return SHEAF_OK;
    return api_fail(err, SHEAF_ERR_INCOMPATIBLE,
                    "%s: source %s (fingerprint %016llx) is already counted (from %s); "
                    "SHEAF_MERGE_ALLOW_DUPLICATES merges anyway",
                    call, summary_source_at(from, (size_t)d)->path,
                    (unsigned long long)summary_source_at(from, (size_t)d)->fingerprint,
                    summary_source_at(into, k)->path);
}

/* And after it: the byte-range shards among the sources fit together
 * (summary/shards.h; shards not yet checkable pass). */
static int shards_fit(const char *call, const summary *s, sheaf_error *err)
{
    shard_check c;
    size_t bad = 0;
    char why[SHEAF_ERROR_BYTES - 64];
    if (summary_shards_check(s, &c, NULL, &bad, why, sizeof why) == 0) return SHEAF_OK;
    return api_fail(err, SHEAF_ERR_INCOMPATIBLE, "%s: %s", call, why);
}

int sheaf_summary_merge_flags(sheaf_summary *into, sheaf_summary *from, unsigned flags,
                              sheaf_error *err)
{
    static const char call[] = "sheaf_summary_merge";
    if (!into || !from) return no_summary(err, call);
    if (into == from) return api_fail(err, SHEAF_ERR_USAGE, "%s: a summary merged into itself", call);
    int rc = counted_twice(call, into->s, from->s, flags, err);
    if (rc != SHEAF_OK) return rc;
    char msg[SHEAF_ERROR_BYTES] = "";
    rc = reported(summary_merge(into->s, from->s, msg, sizeof msg), msg, err);
    return rc != SHEAF_OK ? rc : shards_fit(call, into->s, err);
}

int sheaf_summary_merge(sheaf_summary *into, sheaf_summary *from, sheaf_error *err)
{
    return sheaf_summary_merge_flags(into, from, 0, err);
}

/* ---- sets ------------------------------------------------------------------- */

void sheaf_summary_set_free(sheaf_summary_set *set)
{
    if (!set) return;
    summary_set_free(set->set);
    free(set);
}

sheaf_summary_set *sheaf_summary_set_read(const char *path, sheaf_error *err)
{
    if (!path) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_set_read: no path (NULL)");
        return NULL;
    }
    char msg[SHEAF_ERROR_BYTES] = "";
    summary_set *set = NULL;
    if (reported(summary_set_read(path, &set, msg, sizeof msg), msg, err)) return NULL;
    return api_wrap_set(set, err);
}

/* 1 when every part is still in the set (write and merge need them all). */
static int whole(const sheaf_summary_set *set, const char *call, sheaf_error *err)
{
    if (!set) { api_fail(err, SHEAF_ERR_USAGE, "%s: no set (NULL)", call); return 0; }
    for (size_t i = 0; i < set->set->n; i++)
        if (!set->set->parts[i]) {
            api_fail(err, SHEAF_ERR_USAGE, "%s: part %zu was taken out of the set", call, i);
            return 0;
        }
    return 1;
}

int sheaf_summary_set_write(const sheaf_summary_set *set, const char *path, sheaf_error *err)
{
    if (!whole(set, "sheaf_summary_set_write", err)) return err ? err->code : SHEAF_ERR_USAGE;
    if (!path) return api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_set_write: no path (NULL)");
    char msg[SHEAF_ERROR_BYTES] = "";
    return reported(summary_set_write(set->set, path, msg, sizeof msg), msg, err);
}

int sheaf_summary_set_merge_flags(sheaf_summary_set *into, sheaf_summary_set *from,
                                  unsigned flags, sheaf_error *err)
{
    static const char call[] = "sheaf_summary_set_merge";
    if (!whole(into, call, err) || !whole(from, call, err))
        return err ? err->code : SHEAF_ERR_USAGE;
    if (into == from) return api_fail(err, SHEAF_ERR_USAGE, "%s: a set merged into itself", call);
    /* Every part holds the same sources: the first part's tell. */
    int rc = counted_twice(call, into->set->parts[0], from->set->parts[0], flags, err);
    if (rc != SHEAF_OK) return rc;
    char msg[SHEAF_ERROR_BYTES] = "";
    rc = reported(summary_set_merge(into->set, from->set, msg, sizeof msg), msg, err);
    return rc != SHEAF_OK ? rc : shards_fit(call, into->set->parts[0], err);
}

int sheaf_summary_set_merge(sheaf_summary_set *into, sheaf_summary_set *from, sheaf_error *err)
{
    return sheaf_summary_set_merge_flags(into, from, 0, err);
}

size_t sheaf_summary_set_count(const sheaf_summary_set *set) { return set ? set->set->n : 0; }

const char *sheaf_summary_set_target(const sheaf_summary_set *set, size_t i)
{
    if (!set || i >= set->set->n || !set->set->parts[i]) return NULL;
    return summary_target_name(set->set->parts[i]);
}

sheaf_summary *sheaf_summary_set_take(sheaf_summary_set *set, size_t i, sheaf_error *err)
{
    if (!set) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_set_take: no set (NULL)");
        return NULL;
    }
    if (i >= set->set->n) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_set_take: part %zu of %zu", i, set->set->n);
        return NULL;
    }
    if (!set->set->parts[i]) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_set_take: part %zu was taken already", i);
        return NULL;
    }
    sheaf_summary *w = malloc(sizeof *w);
    if (!w) {
        api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
        return NULL;
    }
    w->s = summary_set_take(set->set, i);
    return w;
}

/* ---- the table and its columns ------------------------------------------------ */

uint64_t sheaf_summary_rows(const sheaf_summary *s) { return s ? summary_rows(s->s) : 0; }

size_t sheaf_summary_column_count(const sheaf_summary *s) { return s ? summary_columns(s->s) : 0; }

/* 1 when col is a column of s. */
static int has(const sheaf_summary *s, size_t col) { return s && col < summary_columns(s->s); }

const char *sheaf_summary_column_name(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_name(s->s, col) : NULL;
}

const char *sheaf_summary_target(const sheaf_summary *s)
{
    return s ? summary_target_name(s->s) : NULL;
}

int sheaf_summary_find_column(const sheaf_summary *s, const char *name, size_t *col,
                              sheaf_error *err)
{
    if (!s) return no_summary(err, "sheaf_summary_find_column");
    if (!name) return api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_find_column: no name (NULL)");
    long i = summary_find_column(s->s, name);
    if (i < 0) {
        char msg[SHEAF_ERROR_BYTES];
        snprintf(msg, sizeof msg, "no column '%s'", name);
        summary_suggest_columns(s->s, name, strlen(name), msg, sizeof msg);
        return api_fail(err, SHEAF_ERR_USAGE, "%s", msg);
    }
    if (col) *col = (size_t)i;
    return SHEAF_OK;
}

uint64_t sheaf_column_numbers(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_numbers(s->s, col) : 0;
}

uint64_t sheaf_column_present(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_present(s->s, col) : 0;
}

uint64_t sheaf_column_missing(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_missing(s->s, col) : 0;
}

uint64_t sheaf_column_text(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_non_numeric(s->s, col) : 0;
}

int sheaf_column_is_numeric(const sheaf_summary *s, size_t col)
{
    return has(s, col) && summary_kind(s->s, col, NUMERIC_SHARE) == KIND_NUMERIC;
}

double sheaf_column_mean(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_mean(s->s, col) : NAN;
}

double sheaf_column_variance(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_variance(s->s, col) : NAN;
}

double sheaf_column_sd(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_sd(s->s, col) : NAN;
}

double sheaf_column_skewness(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_skewness(s->s, col) : NAN;
}

double sheaf_column_kurtosis(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_kurtosis(s->s, col) : NAN;
}

double sheaf_column_min(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_min(s->s, col) : NAN;
}

double sheaf_column_max(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_max(s->s, col) : NAN;
}

int sheaf_column_quantiles(const sheaf_summary *s, size_t col, const double *p, size_t k,
                           double *out, double *rel_error, sheaf_error *err)
{
    if (!s) return no_summary(err, "sheaf_column_quantiles");
    if (!has(s, col))
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_column_quantiles: column %zu of %zu", col,
                        summary_columns(s->s));
    if (k && (!p || !out))
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_column_quantiles: no p or out (NULL)");
    if (summary_quantiles(s->s, col, p, k, out, rel_error) != 0)
        return api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
    return SHEAF_OK;
}

double sheaf_column_distinct(const sheaf_summary *s, size_t col, int *exact)
{
    if (!has(s, col)) {
        if (exact) *exact = 0;
        return NAN;
    }
    return summary_distinct(s->s, col, exact);
}

size_t sheaf_column_top(const sheaf_summary *s, size_t col, size_t k, sheaf_value *out)
{
    if (!has(s, col) || !k || !out) return 0;
    values_entry e[64];
    size_t done = 0;
    /* summary_top fills a caller array; go through a small one when k is
     * small, a heap one otherwise. */
    values_entry *buf = k <= 64 ? e : malloc(k * sizeof *buf);
    if (!buf) return 0;
    done = summary_top(s->s, col, k, buf);
    for (size_t i = 0; i < done; i++) {
        out[i].text = buf[i].label;
        out[i].len = buf[i].label_len;
        out[i].count = buf[i].count;
        out[i].cut = buf[i].cut != 0;
    }
    if (buf != e) free(buf);
    return done;
}

double sheaf_correlation(const sheaf_summary *s, size_t a, size_t b)
{
    return has(s, a) && has(s, b) ? summary_correlation(s->s, a, b) : NAN;
}

double sheaf_covariance(const sheaf_summary *s, size_t a, size_t b)
{
    return has(s, a) && has(s, b) ? summary_covariance(s->s, a, b) : NAN;
}

uint64_t sheaf_pair_count(const sheaf_summary *s, size_t a, size_t b)
{
    return has(s, a) && has(s, b) ? summary_pair_count(s->s, a, b) : 0;
}

int sheaf_pair_imprecise(const sheaf_summary *s, size_t a, size_t b)
{
    return has(s, a) && has(s, b) && summary_pair_imprecise(s->s, a, b);
}

/* ---- more of the table: counts, sources, the target (`sheaf info`) ----------- */

sheaf_summary_set *sheaf_summary_set_read_memory(const void *data, size_t len, sheaf_error *err)
{
    if (!data && len) {
        api_fail(err, SHEAF_ERR_USAGE, "sheaf_summary_set_read_memory: no bytes (NULL)");
        return NULL;
    }
    char msg[SHEAF_ERROR_BYTES] = "";
    summary_set *set = NULL;
    if (reported(summary_set_decode(data, len, &set, msg, sizeof msg), msg, err)) return NULL;
    return api_wrap_set(set, err);
}

uint64_t sheaf_summary_bytes(const sheaf_summary *s) { return s ? summary_bytes(s->s) : 0; }

uint64_t sheaf_summary_short_rows(const sheaf_summary *s)
{
    return s ? summary_short_rows(s->s) : 0;
}

uint64_t sheaf_summary_long_rows(const sheaf_summary *s) { return s ? summary_long_rows(s->s) : 0; }

uint64_t sheaf_summary_repeated_headers(const sheaf_summary *s)
{
    return s ? summary_repeated_headers(s->s) : 0;
}

size_t sheaf_summary_ragged_lines(const sheaf_summary *s, const uint64_t **lines)
{
    const uint64_t *l = NULL;
    size_t n = s ? summary_ragged_lines(s->s, &l) : 0;
    if (lines) *lines = n ? l : NULL;
    return n;
}

unsigned sheaf_summary_format_version(const sheaf_summary *s)
{
    return s ? (unsigned)summary_file_version(s->s) : 0;
}

size_t sheaf_summary_source_count(const sheaf_summary *s)
{
    return s ? summary_source_count(s->s) : 0;
}

int sheaf_summary_source_at(const sheaf_summary *s, size_t i, sheaf_source *out)
{
    if (!s || !out || i >= summary_source_count(s->s)) return SHEAF_ERR_USAGE;
    const summary_source *src = summary_source_at(s->s, i);
    *out = (sheaf_source){
        .path = src->path,
        .format = src->format,
        .size_bytes = src->size_bytes,
        .mtime = src->mtime,
        .fingerprint = src->fingerprint,
        .raw_bytes = src->raw_bytes,
        .rows = src->rows,
        .start_byte = src->start_byte,
        .end_byte = src->end_byte,
        /* `sheaf info` prints the shard record where the source has one. */
        .shard_index = src->shard_rule ? src->shard_index : 0,
        .shard_count = src->shard_rule ? src->shard_count : 0,
        .shard_start = src->shard_rule ? summary_shard_rule_name(src->shard_rule) : "",
    };
    return SHEAF_OK;
}

/* The public code of an internal task. */
static int public_task(target_task t)
{
    return t == TASK_CLASSIFY ? SHEAF_TASK_CLASSIFY
           : t == TASK_REGRESS ? SHEAF_TASK_REGRESS : SHEAF_TASK_AUTO;
}

/* 1 when v is a share of the kind rule: 0 < v <= 1 (NaN is not). */
static int is_share(double v) { return v > 0 && v <= 1; }

int sheaf_summary_task(const sheaf_summary *s, double numeric_share)
{
    if (!s || summary_target_column(s->s) < 0 || !is_share(numeric_share)) return SHEAF_TASK_AUTO;
    return public_task(summary_task(s->s, numeric_share));
}

int sheaf_summary_declared_task(const sheaf_summary *s)
{
    return s ? public_task(summary_declared_task(s->s)) : SHEAF_TASK_AUTO;
}

int sheaf_summary_classes_dropped(const sheaf_summary *s)
{
    return s && summary_classes_dropped(s->s);
}

uint32_t sheaf_summary_max_classes(const sheaf_summary *s)
{
    return s ? summary_max_classes(s->s) : 0;
}

size_t sheaf_summary_class_count(const sheaf_summary *s)
{
    return s ? summary_class_count(s->s) : 0;
}

const char *sheaf_summary_class_label(const sheaf_summary *s, size_t k)
{
    return s && k < summary_class_count(s->s) ? summary_class_label(s->s, (uint32_t)k) : NULL;
}

uint64_t sheaf_summary_class_rows(const sheaf_summary *s, size_t k)
{
    return s && k < summary_class_count(s->s) ? summary_class_rows(s->s, (uint32_t)k) : 0;
}

/* ---- more of a column ------------------------------------------------------- */

uint64_t sheaf_column_non_finite(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_non_finite(s->s, col) : 0;
}

uint64_t sheaf_column_zeros(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_zeros(s->s, col) : 0;
}

uint64_t sheaf_column_integers(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_integers(s->s, col) : 0;
}

int sheaf_column_kind(const sheaf_summary *s, size_t col, double numeric_share)
{
    if (!has(s, col) || !is_share(numeric_share)) return -1;
    return summary_kind(s->s, col, numeric_share) == KIND_NUMERIC ? SHEAF_KIND_NUMERIC
                                                                   : SHEAF_KIND_CATEGORICAL;
}

int sheaf_column_table_overflowed(const sheaf_summary *s, size_t col)
{
    return has(s, col) && summary_high_cardinality(s->s, col);
}

size_t sheaf_column_example_count(const sheaf_summary *s, size_t col)
{
    return has(s, col) ? summary_example_count(s->s, col) : 0;
}

const char *sheaf_column_example(const sheaf_summary *s, size_t col, size_t i)
{
    if (!has(s, col) || i >= summary_example_count(s->s, col)) return NULL;
    return summary_example(s->s, col, (uint32_t)i);
}

/* Column col's moments within class k into *cs; 0, or -1 when there are
 * none (out of range, or no class figures kept). */
static int class_stats(const sheaf_summary *s, size_t col, size_t k, summary_class_stats *cs)
{
    if (!has(s, col) || k >= summary_class_count(s->s) || !summary_has_class_moments(s->s, col))
        return -1;
    return summary_class_moments(s->s, col, (uint32_t)k, cs);
}

uint64_t sheaf_column_class_numbers(const sheaf_summary *s, size_t col, size_t k)
{
    summary_class_stats cs;
    return class_stats(s, col, k, &cs) == 0 ? cs.n : 0;
}

double sheaf_column_class_mean(const sheaf_summary *s, size_t col, size_t k)
{
    summary_class_stats cs;
    return class_stats(s, col, k, &cs) == 0 ? cs.mean : NAN;
}

double sheaf_column_class_variance(const sheaf_summary *s, size_t col, size_t k)
{
    summary_class_stats cs;
    return class_stats(s, col, k, &cs) == 0 ? cs.variance : NAN;
}

int sheaf_column_class_imprecise(const sheaf_summary *s, size_t col, size_t k)
{
    summary_class_stats cs;
    return class_stats(s, col, k, &cs) == 0 && cs.imprecise;
}
