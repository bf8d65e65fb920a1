/* sheaf trim: the reduced table, in one more streaming pass. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "io/keep_list.h"
#include "io/message.h"
#include "io/namelist.h"
#include "out/sink.h"
#include "pass/trim.h"
#include "stats/screen.h"
#include "summary/access.h"
#include "summary/summary.h"

typedef struct {
    char **names;
    size_t n, cap;
} name_set;

static int names_add(name_set *s, const char *name, size_t len)
{
    for (size_t i = 0; i < s->n; i++)
        if (strlen(s->names[i]) == len && memcmp(s->names[i], name, len) == 0) return 0;
    if (s->n == s->cap) {
        size_t cap = s->cap ? s->cap * 2 : 16;
        char **p = realloc(s->names, cap * sizeof *p);
        if (!p) return -1;
        s->names = p;
        s->cap = cap;
    }
    char *copy = malloc(len + 1);
    if (!copy) return -1;
    memcpy(copy, name, len);
    copy[len] = '\0';
    s->names[s->n++] = copy;
    return 0;
}

static void names_free(name_set *s)
{
    for (size_t i = 0; i < s->n; i++) free(s->names[i]);
    free(s->names);
}

/* Reads one name per line (io/keep_list.h: blank lines and '#' comments
 * skipped, a leading backslash escapes the name).  Returns
 * 0, -1 when the list cannot be opened or read (a directory, an I/O error:
 * an error with its reason, never a shorter list) or -2 out of memory. */
static int read_keep_list(const char *path, name_set *out, char *err, size_t errlen)
{
    FILE *f = strcmp(path, "-") ? fopen(path, "r") : stdin;
    if (!f) {
        message_printf(err, errlen, "%s: cannot open: %s", path, strerror(errno));
        return -1;
    }
    char *line = NULL;
    size_t cap = 0;
    ssize_t n;
    int rc = 0;
    errno = 0;
    while (rc == 0 && (n = getline(&line, &cap, f)) >= 0) {
        while (n && line[n - 1] == '\n') line[--n] = '\0';
        size_t len;
        const char *name = keep_list_name(line, (size_t)n, &len);
        if (!name) continue;
        if (names_add(out, name, len) != 0) {
            snprintf(err, errlen, "out of memory: the keep list %s", path);
            rc = -2;
        }
    }
    if (rc == 0 && ferror(f)) {
        message_printf(err, errlen, "%s: cannot read: %s", path, strerror(errno ? errno : EIO));
        rc = errno == ENOMEM ? -2 : -1;
    }
    free(line);
    if (f != stdin) fclose(f);
    return rc;
}

/* Adds a list of names (io/namelist's rule; empty names skipped). */
static int add_list(name_set *s, const char *list)
{
    if (!list || !*list) return 0;
    size_t n = 0;
    char **each = namelist_split(list, &n);
    int rc = each ? 0 : -1;
    for (size_t i = 0; i < n && rc == 0; i++)
        if (each[i][0]) rc = names_add(s, each[i], strlen(each[i]));
    free(each);
    return rc;
}

int cmd_trim(int argc, char **argv)
{
    const char *from = NULL, *keep_list = NULL, *carry = NULL, *out_path = NULL, *delim_s = NULL;
    screen_options so;
    screen_options_defaults(&so);
    const char *q = NULL, *top = NULL, *chunk = NULL, *maxrec = NULL, *threads = NULL;
    int no_header = 0, quiet = 0;
    const char *target = NULL;
    const cli_option opts[] = {
        {"summary", 0, "FILE.sheaf", "keep what `sheaf screen` keeps on this summary of the data", &from,
         NULL},
        {"target", 't', "COL", "with --summary: which target of a summary scanned with several",
         &target, NULL},
        {"columns-from", 0, "FILE", "keep the columns named in FILE, one per line (screen --write-kept)",
         &keep_list, NULL},
        {"carry", 0, CLI_NAME_LIST, "also keep these columns (IDs, timestamps)", &carry, NULL},
        {"output", 'o', "OUT", "write here (.gz / .zst compress; default or -: standard output)", &out_path,
         NULL},
        {"delim", 'd', "CHAR", "field delimiter: , ; | tab or space (default: detected)", &delim_s, NULL},
        {"no-header", 0, NULL, "first row is data; columns are named col1..colN", NULL, &no_header},
        {"chunk-size", 0, "SIZE", "bytes per chunk, e.g. 1M (default 256 KiB)", &chunk, NULL},
        {"max-record", 0, "SIZE", "longest record accepted (default 64 MiB)", &maxrec, NULL},
        {"fdr", 0, "LEVEL", "as in screen: false discovery rate (default 0.05)", &q, NULL},
        {"max-kept", 0, "K", "as in screen: keep at most K columns", &top, NULL},
        {"threads", 'j', "N", CLI_THREADS_HELP, &threads, NULL},
        {"quiet", 'q', NULL, "no progress line", NULL, &quiet},
        {0},
    };
    const cli_command cmd = {
        "trim", "DATA... (--summary FILE.sheaf | --columns-from FILE) [-o OUT]",
        "Writes DATA with only the kept columns (and --carry columns), in their input\n"
        "order, keeping each field's bytes and quoting as they were. With --summary,\n"
        "the kept set is that of `sheaf screen` with the same options, and the target;\n"
        "with --columns-from, the columns the list names (name the target there too).\n"
        "A failed run leaves no -o file; on standard output, what was written before the\n"
        "failure stays (exit code != 0).",
        opts,
        "  $ sheaf trim day.csv.gz --summary fleet.sheaf --carry drone_id -o kept.csv.gz\n"
        "  $ sheaf trim flights.csv --columns-from kept.txt -o - | head\n"};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc) { free(pos); return rc == 1 ? EXIT_DONE : rc; }
    name_set keep = {0};
    summary *s = NULL;
    screen_result *res = NULL;
    sink *out = NULL;
    char err[1024];
    char delim = 0;
    rc = EXIT_USAGE;
    if (npos == 0) { cli_error("trim", "no data files (see sheaf trim --help)"); goto done; }
    if (!!from == !!keep_list) { cli_error("trim", "give exactly one of --summary and --columns-from"); goto done; }
    {
        const char *side[2] = {from, keep_list};
        if (cli_check_output("trim", out_path, (const char *const *)pos, npos) ||
            cli_check_output("trim", out_path, side, 2))
            goto done;
        const char *all[npos + 2]; /* data, --summary and --columns-from: standard input once */
        for (size_t i = 0; i < npos; i++) all[i] = pos[i];
        all[npos] = from;
        all[npos + 1] = keep_list;
        if (cli_check_stdin("trim", all, npos + 2)) goto done;
    }
    if (delim_s && cli_parse_delim(delim_s, &delim) != 0) {
        cli_error("trim", "--delim must be one character, 'tab' or 'space', got '%s'", delim_s);
        goto done;
    }
    trim_options to;
    trim_options_defaults(&to);
    to.header = !no_header;
    if (cli_parse_reading("trim", chunk, maxrec, &to.read.chunk_bytes, &to.read.max_record_bytes)) goto done;
    if (cli_parse_threads("trim", threads, &to.threads)) goto done;
    if (q && cli_parse_unit("trim", "--fdr", q, &so.q_level)) goto done;
    if (top) {
        long long v = cli_parse_count(top);
        if (v < 1) { cli_error("trim", "--max-kept must be a positive count"); goto done; }
        so.top = (size_t)v;
    }
    if (keep_list) {
        int kr = read_keep_list(keep_list, &keep, err, sizeof err);
        if (kr != 0) {
            cli_error("trim", "%s", err);
            rc = kr == -2 ? EXIT_RESOURCE : EXIT_INPUT;
            goto done;
        }
    }
    if (target && !from) {
        cli_error("trim", "--target chooses the target of the --summary summary; give --summary");
        goto done;
    }
    if (from) {
        if ((rc = cli_read_target("trim", from, target, 1, &s)) != EXIT_DONE) goto done;
        rc = EXIT_USAGE;
        res = screen_run(s, &so);
        if (!res) { cli_error("trim", "out of memory"); rc = EXIT_RESOURCE; goto done; }
        for (size_t i = 0; i < res->nfeatures; i++)
            if (res->features[i].keep) {
                const char *nm = summary_name(s, res->features[i].col);
                if (names_add(&keep, nm, strlen(nm)) != 0) { rc = EXIT_RESOURCE; goto done; }
            }
        const char *target = summary_target_name(s);
        if (target && names_add(&keep, target, strlen(target)) != 0) goto done;
    }
    if (add_list(&keep, carry) != 0) { rc = EXIT_RESOURCE; goto done; }
    if (keep.n == 0) {
        /* Rows of no field would be one empty line each: never what was meant. */
        if (from)
            cli_error("trim", "%s: the screen keeps no column and the summary has no target; "
                      "nothing to write (add --carry, or loosen --fdr)", from);
        else
            cli_error("trim", "%s: the keep list names no column; nothing to write", keep_list);
        goto done;
    }
    out = sink_open(out_path, err, sizeof err);
    if (!out) { cli_error("trim", "%s", err); rc = EXIT_FAILED; goto done; }
    to.keep = keep.names;
    to.nkeep = keep.n;
    to.read.delim = delim;
    cli_progress ps;
    cli_progress_start(&ps, "trim", quiet, !out_path || !strcmp(out_path, "-"));
    to.progress = cli_progress_update;
    to.progress_ctx = &ps;
    trim_status ts = trim_files(&to, (const char *const *)pos, npos, out, err, sizeof err);
    cli_progress_end(&ps);
    if (ts != TRIM_OK) {
        cli_error("trim", "%s", err);
        rc = ts == TRIM_ERR_USAGE    ? EXIT_USAGE
             : ts == TRIM_ERR_INPUT  ? EXIT_INPUT
             : ts == TRIM_ERR_OUTPUT ? EXIT_FAILED
                                     : EXIT_RESOURCE;
        sink_abort(out);
        out = NULL;
        goto done;
    }
    rc = sink_close(out, err, sizeof err) == 0 ? EXIT_DONE : EXIT_FAILED;
    out = NULL;
    if (rc != EXIT_DONE) cli_error("trim", "%s", err);
done:
    if (out) sink_abort(out);
    names_free(&keep);
    screen_free(res);
    summary_free(s);
    free(pos);
    return rc;
}
