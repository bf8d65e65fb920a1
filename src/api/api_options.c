/* api_options: version, error codes and the options handle of the public
 * API (include/sheaf.h).  The options wrap a scan_options, a screen_options
 * and a pca_options with the defaults of summary/scan.h, stats/screen.h and
 * stats/pca.h; every string is copied in. */
#include "api/api.h"
#include "io/message.h"
#include "out/keys.h"

#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

const char *sheaf_version(void) { return SHEAF_VERSION; }

const char *sheaf_error_string(int code)
{
    switch (code) {
    case SHEAF_OK: return "ok";
    case SHEAF_ERR_USAGE: return "bad argument";
    case SHEAF_ERR_INPUT: return "unreadable or malformed input";
    case SHEAF_ERR_IO: return "cannot read or write the file";
    case SHEAF_ERR_CORRUPT: return "not a summary, or a damaged one";
    case SHEAF_ERR_INCOMPATIBLE: return "summaries that cannot be merged";
    case SHEAF_ERR_TARGETS: return "wrong number of targets, or an unknown target";
    case SHEAF_ERR_MEMORY: return "out of memory";
    case SHEAF_ERR_NUMERIC: return "the eigen-decomposition failed";
    default: return "unknown error code";
    }
}

/* The library names a setting in its messages by a key in braces
 * ("raise {max_classes}"); a C caller reads the call that changes it. */
static const struct { const char *key, *call; } SETTING_CALLS[] = {
    {"delim", "sheaf_options_set_delimiter"},
    {"columns", "sheaf_options_set_columns"},
    {"numeric", "sheaf_options_set_numeric"},
    {"categorical", "sheaf_options_set_categorical"},
    {"exclude", "sheaf_options_set_exclude"},
    {"target", "sheaf_options_set_target"},
    {"max_classes", "sheaf_options_set_max_classes"},
    {"task", "sheaf_options_set_task"},
    {"task=regress", "sheaf_options_set_task(SHEAF_TASK_REGRESS)"},
    {"task=classify", "sheaf_options_set_task(SHEAF_TASK_CLASSIFY)"},
    {"strict", "sheaf_options_set_strict"},
    {"max_record", "sheaf_options_set_max_record_bytes"},
    {"mem_limit", "sheaf_options_set_memory_limit"},
    {"threads", "sheaf_options_set_threads"},
    {"force", "sheaf_options_set_force"},
    {"no_header", "sheaf_options_set_header(0)"},
    {"max_levels", "sheaf_options_set_max_levels"},
    {"bucket_budget", "sheaf_options_set_bucket_budget"},
    {"chunk_size", "sheaf_options_set_chunk_size"},
    {"shard", "sheaf_options_set_shard"},
    {"shard_from_top", "sheaf_options_set_shard(..., from_top 1)"},
    {"carry", "the carried names (sheaf_project_files)"},
    {"read_target", "sheaf_summary_read_target"},
    {"missing", "sheaf_options_set_missing"},
    {"checkpoint", "a checkpoint (sheaf_scan_files_checkpointed)"},
    {"checkpoint_every", "checkpoint_bytes (sheaf_scan_files_checkpointed)"},
    {"resume", "resume (sheaf_scan_files_checkpointed)"},
};

/* The call that sets a key, or NULL (out/keys.h). */
static const char *setting_call(const char *key, size_t len)
{
    for (size_t i = 0; i < sizeof SETTING_CALLS / sizeof *SETTING_CALLS; i++)
        if (strlen(SETTING_CALLS[i].key) == len && !memcmp(SETTING_CALLS[i].key, key, len))
            return SETTING_CALLS[i].call;
    return NULL;
}

int api_fail(sheaf_error *err, int code, const char *fmt, ...)
{
    if (!err) return code;
    err->code = code;
    va_list ap;
    va_start(ap, fmt);
    message_vprintf(err->message, sizeof err->message, fmt, ap);
    va_end(ap);
    /* One line: a newline inside a message ends it. */
    char *nl = strchr(err->message, '\n');
    if (nl) *nl = '\0';
    char raw[sizeof err->message];
    memcpy(raw, err->message, sizeof raw);
    keys_replace(raw, err->message, sizeof err->message, setting_call);
    return code;
}

int api_scan_code(scan_status st)
{
    switch (st) {
    case SCAN_OK: return SHEAF_OK;
    case SCAN_ERR_USAGE: return SHEAF_ERR_USAGE;
    case SCAN_ERR_MEMORY: return SHEAF_ERR_MEMORY;
    case SCAN_ERR_DAMAGED: return SHEAF_ERR_CORRUPT;
    case SCAN_ERR_WRITE: return SHEAF_ERR_IO;
    default: return SHEAF_ERR_INPUT;
    }
}

int api_summary_code(summary_status st)
{
    switch (st) {
    case SUMMARY_OK: return SHEAF_OK;
    case SUMMARY_ERR_IO: return SHEAF_ERR_IO;
    case SUMMARY_ERR_CORRUPT: return SHEAF_ERR_CORRUPT;
    case SUMMARY_ERR_INCOMPATIBLE: return SHEAF_ERR_INCOMPATIBLE;
    case SUMMARY_ERR_MEMORY: return SHEAF_ERR_MEMORY;
    default: return SHEAF_ERR_TARGETS;
    }
}

/* ---- the options ------------------------------------------------------------ */

int api_options_init(sheaf_options *o)
{
    memset(o, 0, sizeof *o);
    scan_options_defaults(&o->scan);
    screen_options_defaults(&o->screen);
    pca_options_defaults(&o->pca);
    for (uint32_t i = 0; i < o->scan.opt.n_missing; i++)
        if (!o->scan.opt.missing[i]) { api_options_release(o); return -1; }
    return 0;
}

/* The scan's and the PCA's string fields point at the owned copies. */
static void point(sheaf_options *o)
{
    o->scan.targets = o->targets;
    o->scan.columns = o->columns;
    o->scan.numeric = o->numeric;
    o->scan.categorical = o->categorical;
    o->scan.ignore = o->ignore;
    o->pca.columns = o->pca_columns;
    o->pca.exclude = o->pca_exclude;
}

static int dup_or_null(char **dst, const char *src)
{
    *dst = NULL;
    return src && !(*dst = strdup(src)) ? -1 : 0;
}

int api_options_copy(sheaf_options *dst, const sheaf_options *src)
{
    *dst = *src;
    dst->targets = dst->columns = dst->numeric = dst->categorical = dst->ignore = NULL;
    dst->pca_columns = dst->pca_exclude = dst->screen_target = NULL;
    int bad = summary_options_copy(&dst->scan.opt, &src->scan.opt);
    bad |= dup_or_null(&dst->targets, src->targets);
    bad |= dup_or_null(&dst->columns, src->columns);
    bad |= dup_or_null(&dst->numeric, src->numeric);
    bad |= dup_or_null(&dst->categorical, src->categorical);
    bad |= dup_or_null(&dst->ignore, src->ignore);
    bad |= dup_or_null(&dst->pca_columns, src->pca_columns);
    bad |= dup_or_null(&dst->pca_exclude, src->pca_exclude);
    bad |= dup_or_null(&dst->screen_target, src->screen_target);
    point(dst);
    if (bad) { api_options_release(dst); return -1; }
    return 0;
}

void api_options_release(sheaf_options *o)
{
    summary_options_free(&o->scan.opt);
    free(o->targets);
    free(o->columns);
    free(o->numeric);
    free(o->categorical);
    free(o->ignore);
    free(o->pca_columns);
    free(o->pca_exclude);
    free(o->screen_target);
    o->targets = o->columns = o->numeric = o->categorical = o->ignore = NULL;
    o->pca_columns = o->pca_exclude = o->screen_target = NULL;
    point(o);
}

sheaf_options *sheaf_options_create(sheaf_error *err)
{
    sheaf_options *o = malloc(sizeof *o);
    if (!o || api_options_init(o) != 0) {
        free(o);
        api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
        return NULL;
    }
    return o;
}

void sheaf_options_free(sheaf_options *o)
{
    if (!o) return;
    api_options_release(o);
    free(o);
}

static int no_options(sheaf_error *err, const char *call)
{
    return api_fail(err, SHEAF_ERR_USAGE, "%s: no options (NULL)", call);
}

/* Replaces the owned string *field with a copy of value (NULL clears). */
static int set_text(sheaf_options *o, char **field, const char *value, const char *call,
                    sheaf_error *err)
{
    if (!o) return no_options(err, call);
    char *copy = NULL;
    if (value && !(copy = strdup(value))) return api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
    free(*field);
    *field = copy;
    point(o);
    return SHEAF_OK;
}

int sheaf_options_set_target(sheaf_options *o, const char *names, sheaf_error *err)
{
    if (names && !*names)
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_target: empty name (NULL: none)");
    return set_text(o, o ? &o->targets : NULL, names, "sheaf_options_set_target", err);
}

int sheaf_options_set_columns(sheaf_options *o, const char *names, sheaf_error *err)
{
    return set_text(o, o ? &o->columns : NULL, names, "sheaf_options_set_columns", err);
}

int sheaf_options_set_numeric(sheaf_options *o, const char *names, sheaf_error *err)
{
    return set_text(o, o ? &o->numeric : NULL, names, "sheaf_options_set_numeric", err);
}

int sheaf_options_set_categorical(sheaf_options *o, const char *names, sheaf_error *err)
{
    return set_text(o, o ? &o->categorical : NULL, names, "sheaf_options_set_categorical", err);
}

int sheaf_options_set_exclude(sheaf_options *o, const char *names, sheaf_error *err)
{
    return set_text(o, o ? &o->ignore : NULL, names, "sheaf_options_set_exclude", err);
}

int sheaf_options_set_pca_columns(sheaf_options *o, const char *names, sheaf_error *err)
{
    return set_text(o, o ? &o->pca_columns : NULL, names, "sheaf_options_set_pca_columns", err);
}

int sheaf_options_set_pca_exclude(sheaf_options *o, const char *names, sheaf_error *err)
{
    return set_text(o, o ? &o->pca_exclude : NULL, names, "sheaf_options_set_pca_exclude", err);
}

int sheaf_options_set_task(sheaf_options *o, int task, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_task");
    if (task != SHEAF_TASK_AUTO && task != SHEAF_TASK_CLASSIFY && task != SHEAF_TASK_REGRESS)
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_task: unknown task %d", task);
    o->scan.opt.task = task == SHEAF_TASK_CLASSIFY ? TASK_CLASSIFY
                       : task == SHEAF_TASK_REGRESS ? TASK_REGRESS : TASK_AUTO;
    return SHEAF_OK;
}

int sheaf_options_set_threads(sheaf_options *o, unsigned threads, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_threads");
    if (threads > 1024)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_threads: at most 1024 threads, got %u", threads);
    o->scan.threads = threads;
    return SHEAF_OK;
}

int sheaf_options_set_delimiter(sheaf_options *o, char delimiter, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_delimiter");
    if (delimiter == '"' || delimiter == '\n' || delimiter == '\r')
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_delimiter: a quote or a line end cannot delimit fields");
    o->scan.delim = delimiter;
    return SHEAF_OK;
}

int sheaf_options_set_header(sheaf_options *o, int has_header, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_header");
    o->scan.header = has_header != 0;
    return SHEAF_OK;
}

int sheaf_options_set_strict(sheaf_options *o, int strict, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_strict");
    o->scan.strict = strict != 0;
    return SHEAF_OK;
}

int sheaf_options_set_missing(sheaf_options *o, const char *const *spellings, size_t n,
                              sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_missing");
    if (n > SUMMARY_MAX_MISSING)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_missing: at most %d spellings, got %zu",
                        SUMMARY_MAX_MISSING, n);
    if (n && !spellings)
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_missing: no spellings (NULL)");
    for (size_t i = 0; i < n; i++) {
        if (!spellings[i])
            return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_missing: spelling %zu is NULL",
                            i);
        if (strlen(spellings[i]) > SUMMARY_MAX_MISSING_BYTES)
            return api_fail(err, SHEAF_ERR_USAGE,
                            "sheaf_options_set_missing: a spelling is at most %d bytes, "
                            "'%.20s...' has %zu",
                            SUMMARY_MAX_MISSING_BYTES, spellings[i], strlen(spellings[i]));
    }
    char *copy[SUMMARY_MAX_MISSING];
    for (size_t i = 0; i < n; i++)
        if (!(copy[i] = strdup(spellings[i]))) {
            while (i--) free(copy[i]);
            return api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
        }
    for (uint32_t i = 0; i < o->scan.opt.n_missing; i++) free(o->scan.opt.missing[i]);
    for (size_t i = 0; i < n; i++) o->scan.opt.missing[i] = copy[i];
    o->scan.opt.n_missing = (uint32_t)n;
    return SHEAF_OK;
}

int sheaf_options_set_max_levels(sheaf_options *o, uint32_t levels, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_max_levels");
    if (levels < 1 || levels > (1u << 24))
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_max_levels: between 1 and 16777216, got %u", levels);
    o->scan.opt.max_levels = levels;
    return SHEAF_OK;
}

int sheaf_options_set_bucket_budget(sheaf_options *o, uint32_t buckets, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_bucket_budget");
    if (buckets < 16 || buckets > (1u << 24))
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_bucket_budget: between 16 and 16777216, got %u",
                        buckets);
    o->scan.opt.bucket_budget = buckets;
    return SHEAF_OK;
}

int sheaf_options_set_chunk_size(sheaf_options *o, size_t bytes, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_chunk_size");
    if (bytes < 64 || (uint64_t)bytes > (UINT64_C(1) << 32))
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_chunk_size: between 64 and 4 GiB, got %zu", bytes);
    o->scan.chunk_bytes = bytes;
    return SHEAF_OK;
}

int sheaf_options_set_shard(sheaf_options *o, unsigned index, unsigned count, int from_top,
                            sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_shard");
    if (count == 0 ? index != 0 || from_top : index < 1 || index > count)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_shard: index 1 to count, or 0 and 0 for the whole "
                        "file (from_top only with a shard), got %u of %u",
                        index, count);
    o->scan.shard_index = index;
    o->scan.shard_count = count;
    o->scan.shard_from_top = from_top != 0;
    return SHEAF_OK;
}

int sheaf_options_set_max_classes(sheaf_options *o, uint32_t classes, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_max_classes");
    if (classes < 2 || classes > SUMMARY_MAX_CLASSES)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_max_classes: between 2 and %d, got %u",
                        SUMMARY_MAX_CLASSES, classes);
    o->scan.opt.max_classes = classes;
    return SHEAF_OK;
}

int sheaf_options_set_memory_limit(sheaf_options *o, uint64_t bytes, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_memory_limit");
    o->scan.mem_limit_bytes = bytes;
    return SHEAF_OK;
}

int sheaf_options_set_fdr(sheaf_options *o, double q, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_fdr");
    if (!(q > 0 && q <= 1))
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_fdr: 0 < q <= 1, got %g", q);
    o->screen.q_level = q;
    return SHEAF_OK;
}

int sheaf_options_set_max_kept(sheaf_options *o, size_t top, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_max_kept");
    o->screen.top = top;
    return SHEAF_OK;
}

int sheaf_options_set_redundancy(sheaf_options *o, double abs_r, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_redundancy");
    if (!(abs_r > 0 && abs_r <= 1))
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_redundancy: 0 < |r| <= 1, got %g", abs_r);
    o->screen.redundancy = abs_r;
    return SHEAF_OK;
}

int sheaf_options_set_pca_basis(sheaf_options *o, int basis, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_pca_basis");
    if (basis != SHEAF_BASIS_CORRELATION && basis != SHEAF_BASIS_COVARIANCE)
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_pca_basis: unknown basis %d",
                        basis);
    o->pca.basis = basis == SHEAF_BASIS_COVARIANCE ? PCA_BASIS_COVARIANCE : PCA_BASIS_CORRELATION;
    return SHEAF_OK;
}

int sheaf_options_set_max_record_bytes(sheaf_options *o, size_t bytes, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_max_record_bytes");
    if (bytes < 64)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_max_record_bytes: at least 64, got %zu", bytes);
    o->scan.max_record_bytes = bytes;
    return SHEAF_OK;
}

int sheaf_options_set_force(sheaf_options *o, int force, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_force");
    o->scan.force = force != 0;
    return SHEAF_OK;
}

int sheaf_options_set_pca_with_target(sheaf_options *o, int with_target, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_pca_with_target");
    o->pca.with_target = with_target != 0;
    return SHEAF_OK;
}

/* 1 when v is a share: 0 < v <= 1 (NaN is not). */
static int is_share(double v) { return v > 0 && v <= 1; }

int sheaf_options_set_numeric_share(sheaf_options *o, double share, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_numeric_share");
    if (!is_share(share))
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_numeric_share: 0 < share <= 1, got %g", share);
    o->screen.numeric_share = share;
    o->pca.numeric_share = share;
    return SHEAF_OK;
}

/* ---- the screen's further settings (`sheaf screen`'s, src/cli/screen.c) ---- */

int sheaf_options_set_rank_by(sheaf_options *o, int key, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_rank_by");
    if (key != SHEAF_RANK_Q && key != SHEAF_RANK_MI && key != SHEAF_RANK_STAT)
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_rank_by: unknown key %d "
                        "(SHEAF_RANK_Q, _MI or _STAT)", key);
    o->screen.rank_by = key == SHEAF_RANK_MI ? RANK_MI : key == SHEAF_RANK_STAT ? RANK_STAT : RANK_Q;
    return SHEAF_OK;
}

int sheaf_options_set_bins(sheaf_options *o, unsigned bins, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_bins");
    if (bins < 2 || bins > 1000)
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_bins: between 2 and 1000, got %u",
                        bins);
    o->screen.bins = bins;
    return SHEAF_OK;
}

int sheaf_options_set_missing_share(sheaf_options *o, double share, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_missing_share");
    if (!is_share(share))
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_missing_share: 0 < share <= 1, got %g", share);
    o->screen.missing_share = share;
    return SHEAF_OK;
}

int sheaf_options_set_min_variance(sheaf_options *o, double variance, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_min_variance");
    if (!(variance >= 0))
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_options_set_min_variance: >= 0, got %g",
                        variance);
    o->screen.min_variance = variance;
    return SHEAF_OK;
}

int sheaf_options_set_keep_mirrors(sheaf_options *o, int keep, sheaf_error *err)
{
    if (!o) return no_options(err, "sheaf_options_set_keep_mirrors");
    o->screen.keep_mirrors = keep != 0;
    return SHEAF_OK;
}

int sheaf_options_set_screen_target(sheaf_options *o, const char *name, sheaf_error *err)
{
    if (name && !*name)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_options_set_screen_target: empty name (NULL: the target)");
    return set_text(o, o ? &o->screen_target : NULL, name, "sheaf_options_set_screen_target", err);
}
