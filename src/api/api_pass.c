/* api_pass: the second passes of the public API (include/sheaf.h): the
 * reduced table (pass/trim) and the component scores (pass/project),
 * written through an output sink (out/sink.h), so a failed pass leaves
 * nothing under the output's name. */
#include "api/api.h"

#include <stdlib.h>
#include <string.h>

#include "out/sink.h"
#include "pass/project.h"
#include "pass/trim.h"
#include "summary/access.h"

/* The reading settings a pass shares with the scan: delimiter, header,
 * record limit, threads. */
static void reading_of(const sheaf_options *o, reader_options *read, int *header,
                       unsigned *threads)
{
    if (!o) return;
    read->delim = o->scan.delim;
    read->max_record_bytes = o->scan.max_record_bytes;
    *header = o->scan.header;
    *threads = o->scan.threads;
}

static int check_lists(const char *call, const char *const *paths, size_t npaths,
                       const char *out_path, sheaf_error *err)
{
    if (!paths || npaths == 0)
        return api_fail(err, SHEAF_ERR_USAGE, "%s: no input files", call);
    for (size_t i = 0; i < npaths; i++)
        if (!paths[i]) return api_fail(err, SHEAF_ERR_USAGE, "%s: input %zu is NULL", call, i + 1);
    if (!out_path) return api_fail(err, SHEAF_ERR_USAGE, "%s: no output path (NULL)", call);
    long same = sink_replaces_input(out_path, paths, npaths);
    if (same >= 0)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "%s: the output %s is the same file as the input %s; refusing to "
                        "overwrite an input",
                        call, strcmp(out_path, "-") ? out_path : "(standard output)", paths[same]);
    return SHEAF_OK;
}

/* The public code of a pass's status (0 is success, anything else not
 * named is memory). */
static int pass_code(int st, int usage, int input, int output)
{
    return st == 0        ? SHEAF_OK
           : st == usage  ? SHEAF_ERR_USAGE
           : st == input  ? SHEAF_ERR_INPUT
           : st == output ? SHEAF_ERR_IO
                          : SHEAF_ERR_MEMORY;
}

/* The sink closed on success, aborted on failure; the public code. */
static int finish(sink *out, int code, const char *msg, sheaf_error *err)
{
    if (code != SHEAF_OK) {
        sink_abort(out);
        return api_fail(err, code, "%s", msg);
    }
    char closing[SHEAF_ERROR_BYTES] = "";
    if (sink_close(out, closing, sizeof closing) != 0)
        return api_fail(err, SHEAF_ERR_IO, "%s", closing);
    return SHEAF_OK;
}

int sheaf_trim_files(const sheaf_options *o, const char *const *keep, size_t nkeep,
                     const char *const *paths, size_t npaths, const char *out_path,
                     sheaf_error *err)
{
    int rc = check_lists("sheaf_trim_files", paths, npaths, out_path, err);
    if (rc != SHEAF_OK) return rc;
    if (!keep || nkeep == 0)
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_trim_files: no columns to keep");
    for (size_t i = 0; i < nkeep; i++)
        if (!keep[i])
            return api_fail(err, SHEAF_ERR_USAGE, "sheaf_trim_files: kept name %zu is NULL", i + 1);
    trim_options to;
    trim_options_defaults(&to);
    reading_of(o, &to.read, &to.header, &to.threads);
    to.keep = (char *const *)keep;
    to.nkeep = nkeep;
    char msg[SHEAF_ERROR_BYTES] = "";
    sink *out = sink_open(out_path, msg, sizeof msg);
    if (!out) return api_fail(err, SHEAF_ERR_IO, "%s", msg);
    trim_status st = trim_files(&to, paths, npaths, out, msg, sizeof msg);
    return finish(out, pass_code(st, TRIM_ERR_USAGE, TRIM_ERR_INPUT, TRIM_ERR_OUTPUT), msg, err);
}

int sheaf_project_files(const sheaf_summary *s, const sheaf_pca *fit, size_t k,
                        const sheaf_options *o, const char *const *carry, size_t ncarry,
                        const char *const *paths, size_t npaths, const char *out_path,
                        sheaf_error *err)
{
    if (!s || !fit)
        return api_fail(err, SHEAF_ERR_USAGE, "sheaf_project_files: no summary or fit (NULL)");
    int rc = check_lists("sheaf_project_files", paths, npaths, out_path, err);
    if (rc != SHEAF_OK) return rc;
    const pca_result *r = api_pca_result(fit);
    /* The fit must be s's: its columns s's by index and name, centred on
     * s's means (a fit of another summary read other columns, or past the
     * end of s's). */
    for (size_t j = 0; j < r->p; j++) {
        size_t c = r->cols[j];
        if (c >= summary_columns(s->s) || strcmp(summary_name(s->s, c), api_pca_name(fit, j)) ||
            !(summary_mean(s->s, c) == r->center[j]))
            return api_fail(err, SHEAF_ERR_USAGE,
                            "sheaf_project_files: the fit was not made on this summary (its "
                            "column '%s' is not this summary's column %zu with the same mean)",
                            api_pca_name(fit, j), c + 1);
    }
    if (k == 0 || k > r->p)
        return api_fail(err, SHEAF_ERR_USAGE,
                        "sheaf_project_files: %zu components asked, the fit has 1 to %zu", k,
                        r->p);
    for (size_t i = 0; i < ncarry; i++)
        if (!carry || !carry[i])
            return api_fail(err, SHEAF_ERR_USAGE, "sheaf_project_files: carried name %zu is NULL",
                            i + 1);
    project_options po;
    project_options_defaults(&po);
    reading_of(o, &po.read, &po.header, &po.threads);
    po.carry = (char *const *)carry;
    po.ncarry = ncarry;
    char msg[SHEAF_ERROR_BYTES] = "";
    sink *out = sink_open(out_path, msg, sizeof msg);
    if (!out) return api_fail(err, SHEAF_ERR_IO, "%s", msg);
    project_status st = project_files(s->s, r, k, &po, paths, npaths, out, msg, sizeof msg);
    return finish(out, pass_code(st, PROJECT_ERR_USAGE, PROJECT_ERR_INPUT, PROJECT_ERR_OUTPUT),
                  msg, err);
}
