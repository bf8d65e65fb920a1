/* api_checkpoint: the checkpointed scan of the public API (include/sheaf.h)
 * over scan_files_set (summary/scan.h, summary/checkpoint.h).
 *
 * A checkpoint records every input file and where the scan stands in them,
 * so this scan takes the whole list of paths in one call instead of one
 * stream at a time.  The options are the caller's sheaf_options as a scan
 * handle would copy them, plus the checkpoint's path, interval and resume
 * flag; the statuses map to the public codes as the command line maps them
 * to its exit codes (api_scan_code).  The checkpoint is written atomically
 * by summary/checkpoint.c and is left in place on success: the caller
 * removes it once the summaries are safe. */
#include "api/api.h"

#include <stdlib.h>
#include <string.h>
#include "out/sink.h"

/* Refuses a checkpoint path that is one of the inputs (the same file by
 * device and inode, through any link), which the first checkpoint would
 * overwrite. */
static int checkpoint_is_input(const char *checkpoint, const char *const *paths, size_t npaths,
                               sheaf_error *err)
{
    long i = sink_replaces_input(checkpoint, paths, npaths);
    if (i < 0) return SHEAF_OK;
    return api_fail(err, SHEAF_ERR_USAGE,
                    "sheaf_scan_files_checkpointed: the checkpoint %s is the input %s", checkpoint,
                    paths[i]);
}

sheaf_summary_set *sheaf_scan_files_checkpointed(const sheaf_options *o,
                                                 const char *const *paths, size_t npaths,
                                                 const char *checkpoint_path,
                                                 uint64_t checkpoint_bytes, int resume,
                                                 sheaf_error *err)
{
    static const char call[] = "sheaf_scan_files_checkpointed";
    if (!paths || npaths == 0) {
        api_fail(err, SHEAF_ERR_USAGE, "%s: no input files", call);
        return NULL;
    }
    for (size_t i = 0; i < npaths; i++)
        if (!paths[i]) {
            api_fail(err, SHEAF_ERR_USAGE, "%s: input %zu is NULL", call, i + 1);
            return NULL;
        }
    if (!checkpoint_path || !*checkpoint_path || !strcmp(checkpoint_path, "-")) {
        api_fail(err, SHEAF_ERR_USAGE, "%s: the checkpoint needs a file path (got %s)", call,
                 !checkpoint_path ? "NULL" : *checkpoint_path ? "\"-\"" : "\"\"");
        return NULL;
    }
    if (resume != 0 && resume != 1) {
        api_fail(err, SHEAF_ERR_USAGE, "%s: resume must be 0 or 1, got %d", call, resume);
        return NULL;
    }
    if (checkpoint_is_input(checkpoint_path, paths, npaths, err) != SHEAF_OK) return NULL;

    /* The defaults when o is NULL, as sheaf_scan_create takes them. */
    sheaf_options defaults;
    if (!o) {
        if (api_options_init(&defaults) != 0) {
            api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
            return NULL;
        }
    }
    scan_options so = o ? o->scan : defaults.scan; /* its strings stay the caller's */
    so.checkpoint = checkpoint_path;
    so.checkpoint_bytes = checkpoint_bytes;
    so.resume = resume;
    so.checkpoint_pause = NULL;
    so.checkpoint_pause_ctx = NULL;

    summary_set *set = NULL;
    char msg[SHEAF_ERROR_BYTES] = "";
    scan_status st = scan_files_set(&so, paths, npaths, &set, msg, sizeof msg);
    if (!o) api_options_release(&defaults);
    if (st != SCAN_OK) {
        api_fail(err, api_scan_code(st), "%s", msg);
        return NULL;
    }
    return api_wrap_set(set, err);
}
