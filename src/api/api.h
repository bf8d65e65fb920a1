/* api: the handles of the public API (include/sheaf.h) over the internals.
 *
 * Each handle wraps one internal object and the copies it owns; nothing
 * here computes a statistic.  Shared by the files of src/api/ only.
 */
#ifndef SHEAF_API_INTERNAL_H
#define SHEAF_API_INTERNAL_H

#include "sheaf.h"

#include "stats/pca.h"
#include "stats/screen.h"
#include "summary/scan.h"
#include "summary/summary.h"

struct sheaf_options {
    scan_options scan;       /* opt.missing owned (summary_options_free); strings below */
    char *targets;           /* owned copies of the scan's strings (scan points at them) */
    char *columns, *numeric, *categorical, *ignore;
    screen_options screen;
    pca_options pca;         /* columns / exclude point at the copies below */
    char *pca_columns, *pca_exclude;
    char *screen_target;     /* owned: the column to screen against (NULL: the target);
                                sheaf_screen_run finds it as screen.target_col */
};

struct sheaf_scan {
    sheaf_options o;         /* a deep copy: the scan context borrows its strings */
    scan_context *sc;
    int spent;               /* finished: only sheaf_scan_free remains */
    int open;                /* a stream is open (begun, not ended) */
    int failed;              /* the public code of the first failure, 0 while none */
    char message[SHEAF_ERROR_BYTES]; /* its message */
};

struct sheaf_summary {
    summary *s;              /* owned */
};

struct sheaf_summary_set {
    summary_set *set;        /* owned */
};

/* Writes code and a printf-style message into *err (when err is not NULL);
 * returns code. */
int api_fail(sheaf_error *err, int code, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
/* The public codes of the internal statuses. */
int api_scan_code(scan_status st);
int api_summary_code(summary_status st);

/* Options: the defaults into o; a deep copy of src into dst (0, or -1 when
 * out of memory, dst then freed); the owned parts of o freed. */
int api_options_init(sheaf_options *o);
int api_options_copy(sheaf_options *dst, const sheaf_options *src);
void api_options_release(sheaf_options *o);

/* The fit a PCA handle holds (owned by the handle). */
const pca_result *api_pca_result(const sheaf_pca *fit);
/* The name of the fit's basis column j (a copy the fit owns). */
const char *api_pca_name(const sheaf_pca *fit, size_t j);

/* A summary wrapped in a new handle (NULL when out of memory: s freed). */
sheaf_summary *api_wrap(summary *s, sheaf_error *err);
/* The same for a set of several targets (set freed on failure). */
sheaf_summary_set *api_wrap_set(summary_set *set, sheaf_error *err);

#endif
