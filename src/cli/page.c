/* sheaf page: one self-contained HTML report of a summary, and its charts as
 * SVG files (stats/report.h computes, out/report_html.h draws). */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "cli/cli.h"
#include "out/report_html.h"
#include "stats/drift.h"
#include "stats/report.h"
#include "summary/access.h"

int cmd_page(int argc, char **argv)
{
    const char *out = NULL, *svg = NULL, *target = NULL, *q = NULL, *redund = NULL, *share = NULL,
               *base_path = NULL;
    const cli_option opts[] = {
        {"output", 'o', "FILE", "the HTML file to write (- : standard output)", &out, NULL},
        {"write-svg", 0, "DIR", "also write each chart as its own SVG file into the folder DIR", &svg, NULL},
        {"base", 0, "BASE.sheaf", "add a drift section: what changed since this baseline summary "
         "(sheaf drift's figures at its default thresholds)", &base_path, NULL},
        CLI_TARGET_OPTION(target),
        {"fdr", 0, "LEVEL", "false discovery rate of the relevance chart (default 0.05)", &q, NULL},
        {"redundancy", 0, "R", "|r| at which two kept columns are redundant (default 0.95)", &redund, NULL},
        CLI_NUMERIC_SHARE_OPTION(share),
        {0},
    };
    const cli_command cmd = {
        "page", "SUMMARY.sheaf (-o REPORT.html | --write-svg DIR) [options]",
        "Writes one self-contained HTML page about a summary, from the summary alone:\n"
        "an overview, a sortable table of the columns with a small histogram of each,\n"
        "the relevance of each column to the target, the correlation heat map in\n"
        "clustered order with its dendrogram, the class-conditional distributions of\n"
        "the best columns, the principal components' scree chart and loadings, and\n"
        "the cautions. The page loads nothing from anywhere and reads without\n"
        "scripts. With --write-svg, each chart is also written as an SVG file of its\n"
        "own (charts of an earlier page that this one does not draw stay in the\n"
        "folder as they were: give each night a folder of its own). The screen inside uses screen's defaults unless --fdr or --redundancy\n"
        "say otherwise. With --base, the page also shows what drifted since that\n"
        "baseline summary, as sheaf drift reports it. Without -o, only the charts are\n"
        "written. A summary scanned with several targets needs --target, as screen does.",
        opts,
        "  $ sheaf page fleet.sheaf -o fleet.html\n"
        "  $ sheaf page fleet.sheaf -o fleet.html --write-svg fleet-charts\n"
        "  $ sheaf page tonight.sheaf --base last-night.sheaf -o tonight.html\n"};
    char **pos;
    int rc = cli_parse_single(&cmd, argc, argv, &pos);
    if (rc >= 0) return rc;
    rc = EXIT_USAGE;
    summary *s = NULL, *base = NULL;
    report *r = NULL;
    drift_result *dr = NULL;
    report_options o;
    report_options_defaults(&o);
    if (!out && !svg) {
        cli_error("page", "name the page to write with -o FILE (or the chart folder with --write-svg DIR)");
        goto done;
    }
    if (svg && !strcmp(svg, "-")) {
        cli_error("page", "--write-svg needs a folder name");
        goto done;
    }
    if (q && cli_parse_unit("page", "--fdr", q, &o.screen.q_level)) goto done;
    if (redund && cli_parse_unit("page", "--redundancy", redund, &o.screen.redundancy)) goto done;
    if (cli_numeric_share("page", share, &o.numeric_share)) goto done;
    const char *inputs[2] = {pos[0], base_path};
    if (out && cli_check_output("page", out, inputs, base_path ? 2 : 1)) goto done;
    if (svg && !*svg) {
        cli_error("page", "--write-svg needs a folder name: got an empty one");
        goto done;
    }
    if ((rc = cli_read_target("page", pos[0], target, 1, &s)) != EXIT_DONE) goto done;
    if (base_path) {
        const char *both[2] = {pos[0], base_path};
        if (cli_check_stdin("page", both, 2)) { rc = EXIT_USAGE; goto done; }
        if ((rc = cli_read_target("page", base_path, target, 1, &base)) != EXIT_DONE) goto done;
        drift_options d;
        drift_options_defaults(&d);
        d.numeric_share = o.numeric_share;
        char derr[1024];
        drift_status st = drift_run(base, s, &d, &dr, derr, sizeof derr);
        if (st == DRIFT_ERR_INCOMPATIBLE) {
            cli_error("page", "%s and %s were scanned differently: %s (rescan one with the other's "
                      "options)", cli_path_name(base_path), cli_path_name(pos[0]), derr);
            rc = EXIT_INCOMPATIBLE;
            goto done;
        }
        if (st != DRIFT_OK) { cli_error("page", "%s", derr); rc = EXIT_RESOURCE; goto done; }
    }
    r = report_build(s, &o);
    if (!r) {
        cli_error("page", "out of memory");
        rc = EXIT_RESOURCE;
        goto done;
    }
    char made[64] = "";
    struct stat st;
    if (strcmp(pos[0], "-") && stat(pos[0], &st) == 0) {
        struct tm tm;
        time_t t = st.st_mtime;
        if (gmtime_r(&t, &tm)) strftime(made, sizeof made, "%Y-%m-%d %H:%M UTC", &tm);
    }
    const report_page p = {cli_path_name(pos[0]), made[0] ? made : NULL, dr,
                           base_path ? cli_path_name(base_path) : NULL, inputs,
                           base_path ? 2 : 1};
    char err[1024];
    int w = report_files_write(r, &p, out, svg, err, sizeof err);
    if (w) cli_error("page", "%s", err);
    rc = w == 0                    ? EXIT_DONE
         : w == REPORT_FILES_MEMORY ? EXIT_RESOURCE
         : w == REPORT_FILES_CLASH  ? EXIT_USAGE
                                    : EXIT_FAILED;
done:
    report_free(r);
    drift_free(dr);
    summary_free(base);
    summary_free(s);
    free(pos);
    return rc;
}
