/* sheaf page: one self-contained HTML report of a summary, and its charts as
 * SVG files (stats/report.h computes, out/report_html.h draws). */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>

#include "cli/cli.h"
#include "out/html.h"
#include "out/report_html.h"
#include "out/sink.h"
#include "stats/report.h"
#include "summary/access.h"

/* Writes the bytes of b to path through a sink (a temporary file renamed
 * into place): 0, or EXIT_FAILED after a one-line error. */
static int write_whole(const char *path, const html_buf *b)
{
    char err[1024];
    sink *k = sink_open(path, err, sizeof err);
    if (!k) {
        cli_error("page", "%s", err);
        return EXIT_FAILED;
    }
    if (sink_write(k, b->data, b->len)) {
        sink_error(k, err, sizeof err);
        sink_abort(k);
        cli_error("page", "%s", err);
        return EXIT_FAILED;
    }
    if (sink_close(k, err, sizeof err)) {
        cli_error("page", "%s", err);
        return EXIT_FAILED;
    }
    return EXIT_DONE;
}

static int write_charts(const report *r, const char *dir)
{
    struct stat st;
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        cli_error("page", "%s: cannot create the folder: %s", dir, strerror(errno));
        return EXIT_FAILED;
    }
    if (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode)) {
        cli_error("page", "%s: not a folder", dir);
        return EXIT_FAILED;
    }
    size_t n = report_chart_count(r);
    for (size_t i = 0; i < n; i++) {
        html_buf b;
        html_init(&b);
        const char *name = NULL;
        if (report_chart(r, i, &b, &name)) {
            html_free(&b);
            cli_error("page", "out of memory");
            return EXIT_RESOURCE;
        }
        size_t len = strlen(dir) + strlen(name) + 2;
        char *path = malloc(len);
        if (!path) {
            html_free(&b);
            cli_error("page", "out of memory");
            return EXIT_RESOURCE;
        }
        snprintf(path, len, "%s/%s", dir, name);
        int rc = write_whole(path, &b);
        free(path);
        html_free(&b);
        if (rc != EXIT_DONE) return rc;
    }
    return EXIT_DONE;
}

int cmd_page(int argc, char **argv)
{
    const char *out = NULL, *svg = NULL, *target = NULL, *q = NULL, *redund = NULL, *share = NULL;
    const cli_option opts[] = {
        {"output", 'o', "FILE", "the HTML file to write (- : standard output)", &out, NULL},
        {"write-svg", 0, "DIR", "also write each chart as its own SVG file into the folder DIR", &svg, NULL},
        CLI_TARGET_OPTION(target),
        {"fdr", 0, "LEVEL", "false discovery rate of the relevance chart (default 0.05)", &q, NULL},
        {"redundancy", 0, "R", "|r| at which two kept columns are redundant (default 0.95)", &redund, NULL},
        CLI_NUMERIC_SHARE_OPTION(share),
        {0},
    };
    const cli_command cmd = {
        "page", "SUMMARY.sheaf -o REPORT.html [--write-svg DIR] [options]",
        "Writes one self-contained HTML page about a summary, from the summary alone:\n"
        "an overview, a sortable table of the columns with a small histogram of each,\n"
        "the relevance of each column to the target, the correlation heat map in\n"
        "clustered order with its dendrogram, the class-conditional distributions of\n"
        "the best columns, the principal components' scree chart and loadings, and\n"
        "the cautions. The page loads nothing from anywhere and reads without\n"
        "scripts. With --write-svg, each chart is also written as an SVG file of its\n"
        "own. The screen inside uses screen's defaults unless --fdr or --redundancy\n"
        "say otherwise.",
        opts,
        "  $ sheaf page fleet.sheaf -o fleet.html\n"
        "  $ sheaf page fleet.sheaf -o fleet.html --write-svg fleet-charts\n"};
    char **pos;
    int rc = cli_parse_single(&cmd, argc, argv, &pos);
    if (rc >= 0) return rc;
    rc = EXIT_USAGE;
    summary *s = NULL;
    report *r = NULL;
    html_buf page;
    html_init(&page);
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
    if (out && cli_check_output("page", out, (const char *const *)pos, 1)) goto done;
    if ((rc = cli_read_target("page", pos[0], target, 0, &s)) != EXIT_DONE) goto done;
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
    if (out) {
        const report_page p = {cli_path_name(pos[0]), made[0] ? made : NULL};
        if (report_html_write(r, &p, &page)) {
            cli_error("page", "out of memory");
            rc = EXIT_RESOURCE;
            goto done;
        }
    }
    if (svg && (rc = write_charts(r, svg)) != EXIT_DONE) goto done;
    rc = out ? write_whole(out, &page) : EXIT_DONE;
done:
    html_free(&page);
    report_free(r);
    summary_free(s);
    free(pos);
    return rc;
}
