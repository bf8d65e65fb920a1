/* sheaf project: scores of the leading principal components, row by row.
 *
 * The PCA is computed from the summary exactly as `sheaf pca` does (same
 * column choice, same k); the pass over the data is pass/project.h.
 *
 * Output goes through out/sink: a temporary file beside OUT renamed when
 * complete (a failed run leaves no partial OUT), gzip or zstd by OUT's name.
 */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "io/namelist.h"
#include "out/sink.h"
#include "pass/project.h"
#include "stats/pca.h"
#include "summary/summary.h"


/* ---- the command -------------------------------------------------------- */


int cmd_project(int argc, char **argv)
{
    const char *pca_path = NULL, *out_path = NULL, *delim_s = NULL, *carry_s = NULL;
    const char *basis = NULL, *cols = NULL, *exclude = NULL, *keep = NULL;
    const char *k_s = NULL, *share_s = NULL, *numshare_s = NULL;
    const char *chunk = NULL, *maxrec = NULL, *threads = NULL;
    int with_target = 0, no_header = 0, quiet = 0;
    const char *target = NULL;
    const cli_option opts[] = {
        CLI_TARGET_OPTION(target),
        {"summary", 0, "FILE.sheaf", "summary of the data the components come from (required)",
         &pca_path, NULL},
        {"output", 'o', "OUT", "file to write (.gz: gzip, .zst: zstd; default or -: standard output)",
         &out_path, NULL},
        {"carry", 0, CLI_NAME_LIST, "copy these columns (IDs, the target) in front of the scores",
         &carry_s, NULL},
        {"components", 'k', "N", "components to score (default: the Kaiser rule's count)", &k_s, NULL},
        {"share", 0, "P", "score the fewest components reaching this cumulative share",
         &share_s, NULL},
        {"basis", 0, "B", "correlation (default) or covariance", &basis, NULL},
        {"columns", 0, CLI_NAME_LIST, "use these columns instead of the automatic choice", &cols, NULL},
        {"columns-from", 0, "FILE", "use the columns named in FILE, one per line (screen --write-kept)",
         &keep, NULL},
        {"exclude", 0, CLI_NAME_LIST, "leave these columns out", &exclude, NULL},
        {"with-target", 0, NULL, "keep the summary's target column in the automatic choice",
         NULL, &with_target},
        {"numeric-share", 0, "P", "share of parsing cells that makes a column numeric (default 0.99)",
         &numshare_s, NULL},
        {"delim", 'd', "CHAR", "field delimiter: , ; | tab or space (default: detected per file)",
         &delim_s, NULL},
        {"no-header", 0, NULL, "first row is data; columns are named col1..colN", NULL, &no_header},
        {"chunk-size", 0, "SIZE", "bytes per chunk, e.g. 1M (default 256 KiB)", &chunk, NULL},
        {"max-record", 0, "SIZE", "longest record accepted (default 64 MiB)", &maxrec, NULL},
        {"threads", 'j', "N", CLI_THREADS_HELP, &threads, NULL},
        {"quiet", 'q', NULL, "no progress line", NULL, &quiet},
        {0},
    };
    const cli_command cmd = {
        "project", "DATA... --summary FILE.sheaf [-o OUT] [-k N | --share P] [--carry COLS]",
        "Reads each DATA file again and writes, for every row, its scores on the leading\n"
        "principal components of the summary (the same components `sheaf pca` reports\n"
        "with the same options) as CSV. Each value is standardised with the summary's\n"
        "mean and sample standard deviation (centred only with --basis covariance); a\n"
        "missing, non-numeric or non-finite cell counts as the mean. A failed run leaves\n"
        "no -o file; on standard output, the rows written before the failure stay (exit\n"
        "code != 0).",
        opts,
        "  $ sheaf project day.csv.gz --summary fleet.sheaf -k 3 --carry drone_id >pc.csv\n"
        "  $ sheaf project flights.csv --summary - -o - < fleet.sheaf | head\n"};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc) { free(pos); return rc == 1 ? EXIT_DONE : rc; }
    rc = EXIT_USAGE;
    summary *s = NULL;
    pca_result *r = NULL;
    char err[1024];
    project_options po;
    project_options_defaults(&po);
    po.header = !no_header;
    char **carry = NULL;
    size_t k = 0;
    sink *out = NULL;
    if (npos == 0) { cli_error("project", "no data files (see sheaf project --help)"); goto done; }
    if (!pca_path) { cli_error("project", "--summary FILE.sheaf is required"); goto done; }
    {
        const char *side[2] = {pca_path, keep};
        if (cli_check_output("project", out_path, (const char *const *)pos, npos) ||
            cli_check_output("project", out_path, side, 2))
            goto done;
        const char *all[npos + 2]; /* data, --summary and --columns-from: standard input once */
        for (size_t i = 0; i < npos; i++) all[i] = pos[i];
        all[npos] = pca_path;
        all[npos + 1] = keep;
        if (cli_check_stdin("project", all, npos + 2)) goto done;
    }
    if (delim_s && cli_parse_delim(delim_s, &po.read.delim) != 0) {
        cli_error("project", "--delim must be one character, 'tab' or 'space', got '%s'", delim_s);
        goto done;
    }
    if (cli_parse_reading("project", chunk, maxrec, &po.read.chunk_bytes, &po.read.max_record_bytes)) goto done;
    if (cli_parse_threads("project", threads, &po.threads)) goto done;
    if (carry_s) {
        size_t n = 0;
        carry = namelist_split(carry_s, &n); /* empty names are refused by cli_parse */
        if (!carry) { cli_error("project", "out of memory"); rc = EXIT_RESOURCE; goto done; }
        for (size_t i = 0; i < n; i++)
            if (carry[i][0]) carry[po.ncarry++] = carry[i];
        po.carry = carry;
    }
    const cli_components cc = {basis,   k_s,  share_s,     numshare_s, cols,
                               exclude, keep, with_target, target};
    rc = cli_fit_components("project", pca_path, &cc, &s, &r, &k);
    if (rc != EXIT_DONE) goto done;
    out = sink_open(out_path, err, sizeof err);
    if (!out) {
        cli_error("project", "%s", err);
        rc = EXIT_FAILED;
        goto done;
    }
    cli_progress bar;
    cli_progress_start(&bar, "project", quiet, !out_path || !strcmp(out_path, "-"));
    po.progress = cli_progress_update;
    po.progress_ctx = &bar;
    project_status ps = project_files(s, r, k, &po, (const char *const *)pos, npos, out, err,
                                      sizeof err);
    cli_progress_end(&bar);
    rc = ps == PROJECT_OK           ? EXIT_DONE
         : ps == PROJECT_ERR_INPUT  ? EXIT_INPUT
         : ps == PROJECT_ERR_OUTPUT ? EXIT_FAILED
         : ps == PROJECT_ERR_USAGE  ? EXIT_USAGE
                                    : EXIT_RESOURCE;
    if (rc != EXIT_DONE) cli_error("project", "%s", err);
done:
    if (out && rc != EXIT_DONE) {
        sink_abort(out);
    } else if (out && sink_close(out, err, sizeof err) != 0) {
        cli_error("project", "%s", err);
        rc = EXIT_FAILED;
    }
    free(carry);
    pca_result_free(r);
    summary_free(s);
    free(pos);
    return rc;
}
