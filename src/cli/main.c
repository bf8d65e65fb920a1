/* sheaf: command dispatch and the top-level help.
 *
 * Process-wide settings are made here, once, and nowhere in the library:
 * OpenBLAS runs single-threaded, and GSL failures give NaN p-values
 * (stat_gsl_error_handler) instead of GSL's default abort. */
#include <cblas.h>
#include <errno.h>
#include <fcntl.h>
#include <gsl/gsl_errno.h>
#include <malloc.h>
#include <signal.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cli.h"
#include "cli/doc.h"
#include "sheaf.h" /* SHEAF_VERSION */
#include "io/closest.h"
#include "stats/stat.h"

typedef struct {
    const char *name;
    int (*run)(int, char **);
    const char *what;
} command;

static const command COMMANDS[] = {
    {"scan", cmd_scan, "read CSV/TSV tables (plain, gzip, zstd) into a summary file"},
    {"info", cmd_info, "describe a summary: rows, sources, per-column statistics"},
    {"merge", cmd_merge, "combine summaries of shards or nights exactly"},
    {"corr", cmd_corr, "pairwise-complete correlation or covariance matrix"},
    {"screen", cmd_screen, "which columns to keep and why: flags, tests, q-values, ranking"},
    {"trim", cmd_trim, "write the table with only the kept columns"},
    {"pca", cmd_pca, "principal components of the correlation or covariance matrix"},
    {"project", cmd_project, "scores of the leading principal components, row by row"},
    {"drift", cmd_drift, "what changed between two summaries (last night and tonight)"},
    {"page", cmd_page, "one self-contained HTML page of charts about a summary"},
};

static void help(FILE *f)
{
    fprintf(f, "usage: sheaf COMMAND [options] [arguments]\n\n"
               "sheaf reads large CSV tables once, in bounded memory, into small mergeable\n"
               "summary files, and screens columns from the summaries alone.\n\ncommands:\n");
    for (size_t i = 0; i < sizeof COMMANDS / sizeof *COMMANDS; i++)
        fprintf(f, "  %-10s %s\n", COMMANDS[i].name, COMMANDS[i].what);
    fprintf(f, "\n'sheaf help COMMAND' (or 'sheaf COMMAND --help') describes a command;\n"
               "'sheaf -V' (--version) prints the version.  '-' names standard output for -o\n"
               "and standard input for a data file or a summary.\n\n"
               "exit codes:\n"
               "  0  success\n"
               "  1  output could not be written, or another failure\n"
               "  2  usage error (bad command line, or an output that is one of the inputs)\n"
               "  3  bad input data (unreadable, malformed, truncated or corrupt stream)\n"
               "  4  damaged, truncated or newer summary file\n"
               "  5  incompatible summaries (different columns or options)\n"
               "  6  resource limit (out of memory, over --mem)\n"
               "  7  drift found (sheaf drift: a threshold was crossed)\n");
}

/* A closed standard descriptor (`>&-`) is held by /dev/null opened the
 * other way round, so that no file sheaf opens lands on it (and receives
 * what was meant for the terminal), and a write to standard output still
 * fails, with EBADF, as it would have. */
static void hold_closed_std_fds(void)
{
    static const int MODES[3] = {O_WRONLY, O_RDONLY, O_RDONLY};
    for (int fd = 0; fd < 3; fd++)
        if (fcntl(fd, F_GETFD) < 0 && errno == EBADF) {
            int got = open("/dev/null", MODES[fd]);
            if (got >= 0 && got != fd) close(got);
        }
}

/* "unknown command" with the nearest command names (io/closest.h). */
static int unknown_command(const char *name)
{
    char msg[512];
    snprintf(msg, sizeof msg, "unknown command '%s'", name);
    closest c;
    closest_init(&c, name, strlen(name));
    for (size_t i = 0; i < sizeof COMMANDS / sizeof *COMMANDS; i++)
        closest_offer(&c, COMMANDS[i].name, strlen(COMMANDS[i].name));
    closest_offer(&c, "help", 4);
    size_t used = strlen(msg);
    closest_append(&c, NULL, msg + used, sizeof msg - used);
    fprintf(stderr, "sheaf: %s (see sheaf --help)\n", msg);
    return EXIT_USAGE;
}

static const command *find_command(const char *name)
{
    for (size_t i = 0; i < sizeof COMMANDS / sizeof *COMMANDS; i++)
        if (!strcmp(name, COMMANDS[i].name)) return &COMMANDS[i];
    return NULL;
}

/* The hidden `sheaf help --roff [COMMAND]` and `sheaf help --completion`
 * (cli/doc.h): the man pages and the completion script the Makefile
 * installs, from the tables --help prints.  -1 when argv is not one. */
static int generated_docs(int argc, char **argv)
{
    enum { N = sizeof COMMANDS / sizeof *COMMANDS };
    const char *names[N];
    for (size_t i = 0; i < N; i++) names[i] = COMMANDS[i].name;
    if (argc == 3 && !strcmp(argv[2], "--completion")) {
        cli_doc_bash_begin(stdout, names, N);
        for (size_t i = 0; i < N; i++) {
            char *args[] = {(char *)COMMANDS[i].name, "--help", NULL};
            cli_doc_set(CLI_DOC_BASH, COMMANDS[i].what, SHEAF_VERSION);
            COMMANDS[i].run(2, args);
        }
        cli_doc_set(CLI_DOC_OFF, NULL, NULL);
        cli_doc_bash_end(stdout);
        return EXIT_DONE;
    }
    if (argc == 3 && !strcmp(argv[2], "--roff")) {
        char *text = NULL;
        size_t len = 0;
        FILE *m = open_memstream(&text, &len);
        if (!m) { fprintf(stderr, "sheaf help: out of memory\n"); return EXIT_RESOURCE; }
        help(m);
        if (fclose(m)) { free(text); fprintf(stderr, "sheaf help: out of memory\n"); return EXIT_RESOURCE; }
        cli_doc_roff_top(stdout, text, names, N, SHEAF_VERSION);
        free(text);
        return EXIT_DONE;
    }
    if (argc == 4 && !strcmp(argv[2], "--roff")) {
        const command *c = find_command(argv[3]);
        if (!c) return unknown_command(argv[3]);
        char *args[] = {argv[3], "--help", NULL};
        cli_doc_set(CLI_DOC_ROFF, c->what, SHEAF_VERSION);
        int rc = c->run(2, args);
        cli_doc_set(CLI_DOC_OFF, NULL, NULL);
        return rc;
    }
    return -1;
}

static int run(int argc, char **argv)
{
    if (argc < 2) { help(stderr); return EXIT_USAGE; }
    if (!strcmp(argv[1], "-h") || !strcmp(argv[1], "--help") ||
        (!strcmp(argv[1], "help") && argc == 2)) {
        help(stdout);
        return EXIT_DONE;
    }
    int docs = !strcmp(argv[1], "help") ? generated_docs(argc, argv) : -1;
    if (docs >= 0) return docs;
    if (!strcmp(argv[1], "help")) { /* sheaf help COMMAND: that command's --help */
        if (argc > 3) { fprintf(stderr, "sheaf help: give one command\n"); return EXIT_USAGE; }
        const command *c = find_command(argv[2]);
        if (!c) return unknown_command(argv[2]);
        char *args[] = {argv[2], "--help", NULL};
        return c->run(2, args);
    }
    if (!strcmp(argv[1], "-V") || !strcmp(argv[1], "--version")) {
        printf("sheaf %s (summary format %d; %d for a summary of several targets)\n",
               SHEAF_VERSION, SUMMARY_FORMAT_VERSION, SUMMARY_SET_FORMAT_VERSION);
        return EXIT_DONE;
    }
    const command *c = find_command(argv[1]);
    if (c) return c->run(argc - 1, argv + 1);
    return unknown_command(argv[1]);
}

/* Every failure to write standard output ends in one line and exit 1
 * (cli_close_stdout), whatever the command printed and however it ended.
 * SIGPIPE keeps its default action: `sheaf info x | head -1` ends quietly
 * when head exits, as other filters do; with SIGPIPE ignored by the parent,
 * the broken pipe is a write failure like any other. */
int main(int argc, char **argv)
{
    /* sheaf runs its own threads: OpenBLAS must not start a pool of its own.
     * It reads the variable when the library loads, before main, so the
     * process re-executes itself once with it set. */
    if (!getenv("OPENBLAS_NUM_THREADS")) {
        setenv("OPENBLAS_NUM_THREADS", "1", 1);
        execv("/proc/self/exe", argv);
    }
    openblas_set_num_threads(1); /* in case the re-execution failed */
    /* Freed memory goes back to the system once 128 KiB gather at the top
     * of a heap, and blocks of 128 KiB or more are mapped on their own (a
     * fixed threshold: glibc's sliding one is off once this is set).  The
     * scan's tables grow by doubling and free the old ones; with glibc's
     * defaults those stay in the worker threads' heaps.  Peak memory of
     * `scan -j2 --target label` on the 2,000,000-row gzip benchmark table:
     * 28.0 -> 25.5 MB, time the same within 1% (bench/threads-notes.md). */
    mallopt(M_TRIM_THRESHOLD, 128 << 10);
    gsl_set_error_handler(stat_gsl_error_handler);
    hold_closed_std_fds();
    /* A file-size limit (ulimit -f) reached is a write error like a full
     * disk (EFBIG: one line naming the file, exit 1), not a silent death by
     * SIGXFSZ with the output half written. */
    signal(SIGXFSZ, SIG_IGN);
    int rc = run(argc, argv);
    int out = cli_close_stdout();
    return rc == EXIT_DONE || (rc == EXIT_DRIFT && out) ? out : rc;
}
