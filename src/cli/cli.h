/* cli: what every command shares: exit codes, option parsing, help. */
#ifndef SHEAF_CLI_H
#define SHEAF_CLI_H

#include <stddef.h>

#include "out/json.h"
#include "stats/pca.h"

/* Exit codes (documented in `sheaf --help` and the README). */
enum {
    EXIT_DONE = 0,         /* success */
    EXIT_FAILED = 1,       /* could not write output, or another failure */
    EXIT_USAGE = 2,        /* bad command line */
    EXIT_INPUT = 3,        /* unreadable or malformed input data */
    EXIT_CORRUPT = 4,      /* a summary file is damaged, truncated or too new */
    EXIT_INCOMPATIBLE = 5, /* summaries that cannot be combined */
    EXIT_RESOURCE = 6,     /* out of memory or over --mem */
    EXIT_DRIFT = 7         /* drift: a threshold was crossed (the comparison itself succeeded) */
};

typedef struct {
    const char *name;    /* long name without "--" */
    char letter;         /* short form, 0 if none */
    const char *metavar; /* value name, NULL for a flag */
    const char *help;    /* one line */
    const char **value;  /* receives the value (options with a metavar) */
    int *flag;           /* set to 1 (flags) */
} cli_option;

typedef struct {
    const char *name;     /* command name */
    const char *synopsis; /* usage line after "sheaf NAME" */
    const char *about;    /* paragraph shown by --help */
    const cli_option *options; /* terminated by a zero entry */
    const char *examples; /* lines ending --help, each "  $ sheaf ...\n"; NULL: none */
} cli_command;

/* Parses argv[1..] (argv[0] is the command) as getopt_long would, without
 * abbreviations: --name VALUE, --name=VALUE, -x VALUE, -xVALUE, bundled
 * short flags (-qj2, -qo FILE: the first letter that takes a value takes the
 * rest of the word or the next argument), "--" ends the options and "-"
 * alone is an argument.  Positional arguments are put in *pos (allocated;
 * caller frees).  Returns 0, 1 if --help (or -h) was shown, or EXIT_USAGE
 * after a one-line error (an unknown long option names the nearest ones,
 * io/closest.h; an unknown letter lists the letters there are).  An old
 * spelling in CLI_RENAMED is read as its new option after a one-line
 * warning on stderr. */
int cli_parse(const cli_command *cmd, int argc, char **argv, char ***pos, size_t *npos);
/* --help: usage, about, the options, the rule for lists of names (when an
 * option takes one), the renamed old spellings, examples. */
void cli_help(const cli_command *cmd);
/* Whether one of cmd's options takes a list of names (metavar CLI_NAME_LIST). */
int cli_takes_names(const cli_command *cmd);
/* "sheaf CMD: message" on stderr, with every setting key of a library
 * message ("{max_classes}") shown as its option (cli_name_settings). */
void cli_error(const char *cmd, const char *fmt, ...) __attribute__((format(printf, 2, 3)));

/* The vocabulary (vocabulary.c).  The library names a setting in a message
 * by a key in braces, "{max_classes}" or "{task=regress}"; the option a
 * command line uses for it ("--max-classes", "--task regress"), or NULL for
 * a key that is not one. */
const char *cli_setting_option(const char *key, size_t len);
/* Copies in to out (cap bytes, NUL-terminated, cut if longer) with every
 * known setting key replaced by its option. */
void cli_name_settings(const char *in, char *out, size_t cap);
/* An option renamed for one vocabulary across commands: the old spelling
 * still parses for one release, with a warning naming the new one. */
typedef struct {
    const char *command; /* the command it was on */
    const char *old;     /* its old long name, without "--" */
    const char *now;     /* the option it became, without "--" */
    const char *value;   /* the value an old flag stands for (info --json: "json"), or NULL */
} cli_renamed;
extern const cli_renamed CLI_RENAMED[]; /* ends with a zero entry */
/* The renaming of --name (len bytes) on cmd, or NULL. */
const cli_renamed *cli_find_renamed(const char *cmd, const char *name, size_t len);

/* Refuses an output that is the same file as an input: out (a path; NULL or
 * "-" is standard output) is compared with each of the n inputs (paths; "-"
 * is standard input) by device and inode, after every symbolic link, so a
 * hard link or a link to an input is caught too.  Only a regular file is
 * protected: /dev/null as input and output is fine.  Returns 0, or
 * EXIT_USAGE after a one-line error naming both. */
int cli_check_output(const char *cmd, const char *out, const char *const *inputs, size_t n);
/* 1 when paths a and b lead to the same file, links followed: the same
 * file when both exist, else the same name in the same directory. */
int cli_same_place(const char *a, const char *b);
/* Whether the output `out` can be created (its folder exists and takes a
 * new file; it is not a folder), before a command spends an hour reading:
 * nothing is left behind.  0, or EXIT_FAILED after one line.  Standard
 * output, a descriptor, a device and a FIFO are not probed. */
int cli_probe_output(const char *cmd, const char *out);

/* Refuses `-o -` for a binary output (a summary) when standard output is a
 * terminal: 0, or EXIT_USAGE after a one-line error.  A pipe or a
 * redirection is fine. */
int cli_check_binary_stdout(const char *cmd, const char *out);
/* Refuses standard input ("-") named more than once among the n paths
 * (NULL entries are skipped): it can be read only once.  0, or EXIT_USAGE
 * after a one-line error. */
int cli_check_stdin(const char *cmd, const char *const *paths, size_t n);
/* How a path is named in messages: "standard input" for "-". */
const char *cli_path_name(const char *path);

/* Flushes and closes standard output.  Returns 0, or EXIT_FAILED after the
 * one line "sheaf: standard output: REASON" when a write to it failed at any
 * point (a full disk, a closed descriptor, a broken pipe when SIGPIPE is
 * ignored).  main calls it once, after the command. */
int cli_close_stdout(void);

/* Reads a whole text file (a keep list), NUL-terminated; NULL with a
 * message naming the file when it cannot be read or passes 64 MiB. */
char *cli_read_text(const char *path, char *err, size_t errlen);

/* Parses a delimiter option: one character, "tab" or "space"; -1 if bad. */
int cli_parse_delim(const char *s, char *out);

/* Options that choose principal components (pca, project). */
typedef struct {
    const char *basis;          /* --basis */
    const char *k;              /* --components (-k) */
    const char *share;          /* --share */
    const char *numeric_share;  /* --numeric-share */
    const char *columns;        /* --columns */
    const char *exclude;        /* --exclude */
    const char *keep_list;      /* --columns-from FILE */
    int with_target;            /* --with-target */
    const char *target;         /* --target: which target of a summary of several */
} cli_components;

/* Parses the component options, reads the summary at path and fits it,
 * warning about undefined pairs and clamped eigenvalues.  Returns EXIT_DONE
 * with *s, *r and the number of components *k set (caller frees), or an exit
 * code after a one-line error. */
int cli_fit_components(const char *cmd, const char *path, const cli_components *c,
                       summary **s, pca_result **r, size_t *k);

/* Parses a size such as 4M, 64MiB, 512k, 2G (powers of 1024); -1 if bad. */
long long cli_parse_size(const char *s);
/* --chunk-size and --max-record (either may be NULL: left as they are), as
 * every pass over the data reads them.  Returns 0, or EXIT_USAGE after a
 * one-line error. */
int cli_parse_reading(const char *cmd, const char *chunk, const char *max_record,
                      size_t *chunk_bytes, size_t *max_record_bytes);
/* Parses a share or level in (0, 1] for option `opt`; prints a one-line
 * error and returns -1 when it is not one. */
/* Text output for a terminal (or COLUMNS): the command writes into
 * cli_text_begin's stream, and cli_text_end copies it to stdout with every
 * line wider than table_terminal_width() word-wrapped (tables are already
 * fitted, so they pass untouched).  With no width known, the stream is
 * stdout itself. */
/* --color WHEN on the commands that print text tables. */
#define CLI_COLOR_OPTION(var)                                                                   \
    {"color", 0, "WHEN", "colour and bold: auto (a terminal and NO_COLOR unset; default), "     \
     "always or never", &(var), NULL}
/* Applies --color (NULL: auto); 0, or EXIT_USAGE after a message. */
int cli_set_color(const char *cmd, const char *when);

typedef struct {
    FILE *f;     /* the memory stream, or NULL when writing to stdout */
    char *buf;
    size_t len;
    size_t width;
} cli_text;
FILE *cli_text_begin(cli_text *t);
void cli_text_end(cli_text *t);

/* -j / --threads: a count from 1 to 1024 into *threads.  NULL text: the
 * environment's SHEAF_THREADS if set, else the default is left (0 = the CPUs
 * this process may use).  0 or EXIT_USAGE. */
int cli_parse_threads(const char *cmd, const char *text, unsigned *threads);
/* The help line of -j, shared by every pass. */
#define CLI_THREADS_HELP "worker threads (default: the CPUs this process may use, within " \
    "its cgroup's CPU quota; 1: none); " \
    "the output is the same for every N; memory grows by at most 2 chunks (--chunk-size, " \
    "or 2 records when a record is longer) per thread and 2 more, with their cell positions (a scan " \
    "holds at most 8 MiB of them a chunk) or output"

/* The one progress line of a long pass on a terminal: bytes done of total (0:
 * unknown), rate, time left; at most 4 times a second.  Nothing when stderr
 * is not a terminal or quiet is set. */
typedef struct {
    const char *label;  /* the command */
    int on;             /* printing */
    double start, last; /* seconds */
    int shown;          /* something is on the line */
} cli_progress;
/* rows_to_stdout: the pass writes its rows to standard output (no line then
 * when that is a terminal too: it would be drawn over the rows). */
void cli_progress_start(cli_progress *p, const char *label, int quiet, int rows_to_stdout);
/* The callback the passes take (ctx: a cli_progress). */
void cli_progress_update(void *ctx, uint64_t done, uint64_t total);
/* Clears the line. */
void cli_progress_end(cli_progress *p);

int cli_parse_unit(const char *cmd, const char *opt, const char *s, double *out);
/* Parses a non-negative integer; -1 if bad. */
long long cli_parse_count(const char *s);

/* Exit code for a summary_status (declared here to keep summary.h out). */
int cli_summary_exit(int status);

/* Shared by the commands that report on one summary (report.c). */
/* cli_parse for a command with exactly one positional argument (a summary
 * file): -1 with *pos set (caller frees), or the exit code to return, after
 * --help (EXIT_DONE) or a one-line error, with *pos freed. */
int cli_parse_single(const cli_command *cmd, int argc, char **argv, char ***pos);
/* Reads the summary at path: EXIT_DONE with *s set (caller frees), or the
 * exit code after a one-line error. */
int cli_read_summary(const char *cmd, const char *path, summary **s);
/* Every summary a file holds (one, or one per target).  EXIT_DONE, or the
 * exit code after a one-line error. */
int cli_read_set(const char *cmd, const char *path, summary_set **set);
/* The summary of --target `target` (NULL: not given) taken out of set:
 * that target's; without --target, the only one, or (need_one 0) the first
 * of several.  EXIT_USAGE after a one-line error naming the targets when
 * the name is not one of them, or when need_one and there are several. */
int cli_choose_target(const char *cmd, const char *path, summary_set *set, const char *target,
                      int need_one, summary **s);
/* cli_read_set, then cli_choose_target. */
int cli_read_target(const char *cmd, const char *path, const char *target, int need_one,
                    summary **s);
/* The --target option of the commands that read a summary. */
/* The metavar of an option that takes a list of column names: cli_parse
 * refuses an empty name in such a list. */
#define CLI_NAME_LIST "A,B,.."
/* What --help and the manual page say of such a list (io/namelist's rule),
 * on a command that takes one (cli_takes_names). */
#define CLI_NAME_LIST_RULE                                                                   \
    "names separated by commas; \\, is a comma inside a name, \\\\ a backslash"
#define CLI_TARGET_OPTION(var)                                                                  \
    {"target", 't', "COL", "which target of a summary scanned with several (scan --target A,B)", \
     &(var), NULL}
/* 0 when format is text, csv or json; else EXIT_USAGE after a one-line error. */
int cli_check_format(const char *cmd, const char *format);
/* Writes the key "levels": the target's classes with their rows, or an
 * empty list when !with_levels. */
void cli_json_class_levels(json_out *j, const summary *s, int with_levels);
/* Writes key: [v[0], ..., v[n - 1]]. */
void cli_json_numbers(json_out *j, const char *key, const double *v, size_t n);
/* Writes key: the rows x cols row-major matrix v as an array of rows. */
void cli_json_matrix(json_out *j, const char *key, const double *v, size_t rows, size_t cols);
/* The --numeric-share entry of an option table, and its value: the default
 * when text is NULL; EXIT_USAGE after a one-line error when it is not a
 * share in (0, 1], else 0. */
#define CLI_NUMERIC_SHARE_DEFAULT 0.99
#define CLI_NUMERIC_SHARE_OPTION(var)                                                           \
    {"numeric-share", 0, "P", "share of parsing cells that makes a column numeric (default 0.99)", \
     &(var), NULL}
int cli_numeric_share(const char *cmd, const char *text, double *share);

/* Commands. */
int cmd_scan(int argc, char **argv);
int cmd_info(int argc, char **argv);
int cmd_corr(int argc, char **argv);
int cmd_merge(int argc, char **argv);
int cmd_screen(int argc, char **argv);
int cmd_trim(int argc, char **argv);
int cmd_pca(int, char **);
int cmd_project(int, char **);
int cmd_drift(int, char **);
int cmd_page(int, char **);

#endif
