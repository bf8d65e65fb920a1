/* cli: option parsing and help shared by the commands. */
#include "cli/cli.h"
#include "cli/doc.h"
#include "io/closest.h"
#include "io/namelist.h"
#include "out/sink.h"
#include "summary/summary.h"
#include "summary/tempfile.h"
#include "out/table.h"

#include <ctype.h>
#include <errno.h>
#include <fcntl.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <time.h>
#include <unistd.h>

#include "io/message.h"

/* Largest text file a command reads whole (keep lists). */
#define KEEP_LIST_MAX_BYTES (64u << 20)

void cli_error(const char *cmd, const char *fmt, ...)
{
    char msg[8192], shown[8192];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    cli_name_settings(msg, shown, sizeof shown);
    fprintf(stderr, "sheaf %s: %s\n", cmd, shown);
}

/* "  LEFT  help", the help word-wrapped at width with its later lines
 * under its first (an 80-column page when the width is unknown: --help is
 * read through pagers and in files). */
static void help_line(const char *left, const char *help, size_t width)
{
    enum { INDENT = 29 };
    int used = printf("  %-26s ", left);
    size_t col = used > 0 ? (size_t)used : INDENT;
    if (width < INDENT + 20) width = INDENT + 20;
    int first = 1;
    for (const char *p = help; *p;) {
        while (*p == ' ') p++;
        size_t n = strcspn(p, " ");
        if (!n) break;
        size_t w = 0; /* code points: help text holds no wide characters */
        for (size_t i = 0; i < n; i++) w += ((unsigned char)p[i] & 0xC0) != 0x80;
        if (!first && col + 1 + w > width) {
            printf("\n%*s", INDENT, "");
            col = INDENT;
            first = 1;
        }
        if (!first) { putchar(' '); col++; }
        fwrite(p, 1, n, stdout);
        col += w;
        first = 0;
        p += n;
    }
    putchar('\n');
}

/* A command's description: prose, so each paragraph (blank lines apart)
 * is filled anew at width, its source line breaks ignored.  Wrapping the
 * source lines one by one left a word alone on an indented line wherever a
 * line was a little wider than the page. */
static void about_text(const char *text, size_t width)
{
    size_t col = 0;
    for (const char *p = text; *p;) {
        if (p[0] == '\n' && p[1] == '\n') { /* a paragraph ends */
            if (col) putchar('\n');
            putchar('\n');
            col = 0;
            p += 2;
            continue;
        }
        if (*p == ' ' || *p == '\n') { p++; continue; }
        size_t n = strcspn(p, " \n"), w = 0;
        for (size_t i = 0; i < n; i++) w += ((unsigned char)p[i] & 0xC0) != 0x80;
        if (col && col + 1 + w > width) {
            putchar('\n');
            col = 0;
        }
        if (col) { putchar(' '); col++; }
        fwrite(p, 1, n, stdout);
        col += w;
        p += n;
    }
    if (col) putchar('\n');
}

int cli_takes_names(const cli_command *cmd)
{
    for (const cli_option *o = cmd->options; o->name; o++)
        if (o->metavar && strcmp(o->metavar, CLI_NAME_LIST) == 0) return 1;
    return 0;
}

void cli_help(const cli_command *cmd)
{
    if (cli_doc_command(cmd)) return; /* sheaf help --roff / --completion (cli/doc.h) */
    size_t width = table_terminal_width();
    if (!width) width = 80;
    char usage[512];
    snprintf(usage, sizeof usage, "usage: sheaf %s %s\n", cmd->name, cmd->synopsis);
    table_wrap(stdout, usage, width);
    putchar('\n');
    about_text(cmd->about, width);
    if (cmd->options[0].name) printf("\noptions:\n");
    for (const cli_option *o = cmd->options; o->name; o++) {
        char left[64];
        if (o->letter)
            snprintf(left, sizeof left, "-%c, --%s%s%s", o->letter, o->name, o->metavar ? " " : "",
                     o->metavar ? o->metavar : "");
        else
            snprintf(left, sizeof left, "    --%s%s%s", o->name, o->metavar ? " " : "",
                     o->metavar ? o->metavar : "");
        help_line(left, o->help, width);
    }
    help_line("-h, --help", "show this help", width);
    if (cli_takes_names(cmd)) printf("\n%s: %s\n", CLI_NAME_LIST, CLI_NAME_LIST_RULE);
    int renamed = 0;
    for (const cli_renamed *r = CLI_RENAMED; r->command; r++) {
        if (strcmp(r->command, cmd->name)) continue;
        if (!renamed++) printf("\nrenamed (the old spelling works until the next release):\n");
        char old[64];
        snprintf(old, sizeof old, "--%s", r->old);
        printf("  %-26s now --%s%s%s\n", old, r->now, r->value ? " " : "", r->value ? r->value : "");
    }
    if (cmd->examples) printf("\nexamples:\n%s", cmd->examples);
}

static const cli_option *find(const cli_command *cmd, const char *name, size_t len, char letter)
{
    for (const cli_option *o = cmd->options; o->name; o++) {
        if (letter && o->letter == letter) return o;
        if (!letter && strlen(o->name) == len && strncmp(o->name, name, len) == 0) return o;
    }
    return NULL;
}

/* "unknown option" with the nearest long names (io/closest.h), or the short
 * letters there are; then EXIT_USAGE. */
static int unknown_option(const cli_command *cmd, const char *arg, size_t len, char letter)
{
    char msg[512];
    if (letter) {
        snprintf(msg, sizeof msg, "unknown option '-%c'%s%s%s (short options:", letter,
                 arg[2] ? " in '" : "", arg[2] ? arg : "", arg[2] ? "'" : "");
        for (const cli_option *o = cmd->options; o->name; o++)
            if (o->letter) {
                size_t used = strlen(msg);
                snprintf(msg + used, sizeof msg - used, " -%c", o->letter);
            }
        size_t used = strlen(msg);
        snprintf(msg + used, sizeof msg - used, " -h)");
    } else {
        snprintf(msg, sizeof msg, "unknown option '%.*s'", (int)(len + 2), arg);
        /* The names as typed, with their dashes. */
        char longs[64][40];
        size_t n = 0;
        closest c;
        closest_init(&c, arg, len + 2);
        for (const cli_option *o = cmd->options; o->name && n < 63; o++, n++)
            snprintf(longs[n], sizeof longs[n], "--%s", o->name);
        snprintf(longs[n++], sizeof longs[0], "--help");
        for (size_t k = 0; k < n; k++) closest_offer(&c, longs[k], strlen(longs[k]));
        size_t used = strlen(msg);
        closest_append(&c, NULL, msg + used, sizeof msg - used);
    }
    cli_error(cmd->name, "%s (see sheaf %s --help)", msg, cmd->name);
    return EXIT_USAGE;
}

/* A list of column names (metavar CLI_NAME_LIST) with an empty name in it: '',
 * ',x', 'x,,y', 'x,' is refused by every command alike (an empty list read
 * as every column in scan, as none in corr, and as an error in pca). */
static int empty_name(const cli_command *cmd, const cli_option *o)
{
    const char *v = *o->value;
    if (strcmp(o->metavar, CLI_NAME_LIST) != 0 || !v) return 0;
    if (!namelist_has_empty(v)) return 0;
    cli_error(cmd->name,
              "--%s: an empty name in '%s' (names are separated by commas; \\, is a comma in a name)",
              o->name, v);
    return 1;
}

int cli_parse(const cli_command *cmd, int argc, char **argv, char ***pos, size_t *npos)
{
    *pos = calloc((size_t)argc + 1, sizeof **pos);
    *npos = 0;
    if (!*pos) { cli_error(cmd->name, "out of memory"); return EXIT_USAGE; }
    int only_pos = 0;
    for (int i = 1; i < argc; i++) {
        char *a = argv[i];
        if (only_pos || a[0] != '-' || a[1] == '\0') { (*pos)[(*npos)++] = a; continue; }
        if (strcmp(a, "--") == 0) { only_pos = 1; continue; }
        if (strcmp(a, "--help") == 0) { cli_help(cmd); return 1; }
        if (a[1] == '-') {
            const char *eq = strchr(a + 2, '=');
            size_t len = eq ? (size_t)(eq - (a + 2)) : strlen(a + 2);
            const cli_option *o = find(cmd, a + 2, len, 0);
            const cli_renamed *old = o ? NULL : cli_find_renamed(cmd->name, a + 2, len);
            if (old) o = find(cmd, old->now, strlen(old->now), 0);
            if (!o && len == 4 && !memcmp(a + 2, "help", 4)) { /* --help=... */
                cli_error(cmd->name, "--help takes no value");
                return EXIT_USAGE;
            }
            if (!o) return unknown_option(cmd, a, len, 0);
            if (old && !old->value && o->metavar && !eq && i + 1 >= argc) { /* one line */
                cli_error(cmd->name, "--%s (renamed --%s) needs a value (%s)", old->old, o->name,
                          o->metavar);
                return EXIT_USAGE;
            }
            if (old) {
                if (old->value && eq) { /* an old flag that stands for an option with a value */
                    cli_error(cmd->name, "--%s takes no value", old->old);
                    return EXIT_USAGE;
                }
                fprintf(stderr, "sheaf %s: warning: --%s is renamed --%s%s%s; the old spelling "
                        "goes in the next release\n", cmd->name, old->old, old->now,
                        old->value ? " " : "", old->value ? old->value : "");
                if (old->value) {
                    *o->value = old->value;
                    continue;
                }
            }
            if (!o->metavar) {
                if (eq) { cli_error(cmd->name, "--%s takes no value", o->name); return EXIT_USAGE; }
                *o->flag = 1;
                continue;
            }
            if (!eq && i + 1 >= argc) {
                cli_error(cmd->name, "--%s needs a value (%s)", o->name, o->metavar);
                return EXIT_USAGE;
            }
            *o->value = eq ? eq + 1 : argv[++i];
            if (empty_name(cmd, o)) return EXIT_USAGE;
            continue;
        }
        /* Short options, bundled as getopt reads them: flags first, and the
         * first letter that takes a value takes the rest of the word (-j2,
         * -ofile, -qo FILE) or, at the word's end, the next argument. */
        for (const char *p = a + 1; *p; p++) {
            const cli_option *o = find(cmd, NULL, 0, *p);
            if (!o && *p == 'h') { cli_help(cmd); return 1; }
            if (!o) return unknown_option(cmd, a, 0, *p);
            if (!o->metavar) { *o->flag = 1; continue; }
            if (p[1] == '\0' && i + 1 >= argc) {
                cli_error(cmd->name, "-%c (--%s) needs a value (%s)", *p, o->name, o->metavar);
                return EXIT_USAGE;
            }
            *o->value = p[1] ? p + 1 : argv[++i];
            if (empty_name(cmd, o)) return EXIT_USAGE;
            break;
        }
    }
    return 0;
}

long long cli_parse_count(const char *s)
{
    if (!s || !*s) return -1;
    char *end;
    long long v = strtoll(s, &end, 10);
    if (*end || v < 0) return -1;
    return v;
}

long long cli_parse_size(const char *s)
{
    if (!s || !*s) return -1;
    char *end;
    double v = strtod(s, &end);
    if (end == s || v < 0) return -1;
    double mult = 1;
    switch (tolower((unsigned char)*end)) {
    case 'k': mult = 1024.0; end++; break;
    case 'm': mult = 1024.0 * 1024; end++; break;
    case 'g': mult = 1024.0 * 1024 * 1024; end++; break;
    case '\0': break;
    default: return -1;
    }
    if (*end == 'i' || *end == 'I') end++;
    if (*end == 'b' || *end == 'B') end++;
    if (*end) return -1;
    return (long long)(v * mult);
}

int cli_check_output(const char *cmd, const char *out, const char *const *inputs, size_t n)
{
    if (out && !*out) {
        cli_error(cmd, "an output needs a name: got an empty one");
        return EXIT_USAGE;
    }
    long i = sink_replaces_input(out, inputs, n);
    if (i < 0) return 0;
    const char *on = out && strcmp(out, "-") ? out : "standard output";
    const char *inn = strcmp(inputs[i], "-") ? inputs[i] : "standard input";
    cli_error(cmd, "%s: is the same file as the input %s; refusing to overwrite an input", on, inn);
    return EXIT_USAGE;
}

/* The directory (identity) and last name a path leads to, links followed. */
static int place_of(const char *path, struct stat *dir, char **name)
{
    char *target = tempfile_target(path);
    if (!target) return -1;
    char *slash = strrchr(target, '/');
    int rc;
    if (!slash) {
        rc = stat(".", dir);
        *name = strdup(target);
    } else {
        *slash = '\0';
        rc = stat(*target ? target : "/", dir);
        *name = strdup(slash + 1);
    }
    free(target);
    if (!*name) return -1;
    if (rc != 0) { free(*name); *name = NULL; }
    return rc;
}

int cli_same_place(const char *a, const char *b)
{
    struct stat sa, sb;
    if (stat(a, &sa) == 0 && stat(b, &sb) == 0)
        return sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino;
    char *na = NULL, *nb = NULL;
    int same = !strcmp(a, b);
    if (!same && place_of(a, &sa, &na) == 0 && place_of(b, &sb, &nb) == 0)
        same = sa.st_dev == sb.st_dev && sa.st_ino == sb.st_ino && !strcmp(na, nb);
    free(na);
    free(nb);
    return same;
}

int cli_probe_output(const char *cmd, const char *out)
{
    if (!out || !strcmp(out, "-") || tempfile_descriptor(out) >= 0) return 0;
    struct stat st; /* a FIFO would block until read, and be closed on its reader */
    if (stat(out, &st) == 0 && (S_ISCHR(st.st_mode) || S_ISFIFO(st.st_mode))) return 0;
    tempfile t;
    char err[600];
    if (tempfile_open(&t, out, 0, err, sizeof err) != 0) {
        cli_error(cmd, "%s", err);
        return EXIT_FAILED;
    }
    tempfile_discard(&t);
    return 0;
}

int cli_check_binary_stdout(const char *cmd, const char *out)
{
    if (!out) return 0;
    int tty = 0;
    if (!strcmp(out, "-")) {
        tty = isatty(STDOUT_FILENO);
    } else { /* a name for a terminal: /dev/stdout, /dev/tty, /dev/pts/N */
        struct stat st;
        int fd = stat(out, &st) == 0 && S_ISCHR(st.st_mode) ? open(out, O_WRONLY | O_NOCTTY) : -1;
        if (fd >= 0) {
            tty = isatty(fd);
            close(fd);
        }
    }
    if (!tty) return 0;
    cli_error(cmd, "-o %s: refusing to write a binary summary to a terminal; redirect standard "
                   "output to a file or a pipe", out);
    return EXIT_USAGE;
}

int cli_check_stdin(const char *cmd, const char *const *paths, size_t n)
{
    size_t seen = 0;
    for (size_t i = 0; i < n; i++) seen += paths[i] && !strcmp(paths[i], "-");
    if (seen < 2) return 0;
    cli_error(cmd, "'-' (standard input) is named %zu times; it can be read only once", seen);
    return EXIT_USAGE;
}

const char *cli_path_name(const char *path)
{
    return strcmp(path, "-") ? path : "standard input";
}

int cli_close_stdout(void)
{
    int failed = ferror(stdout);
    /* A write that failed while the command printed (output past the
     * buffer) left its reason in errno, and stdio dropped the buffer it
     * could not write, so the flush below may not fail again: keep it. */
    int earlier = failed ? errno : 0;
    errno = 0;
    if (fflush(stdout) != 0) failed = 1;
    int reason = errno; /* a failed write is retried by the flush, which sets errno again */
    if (!reason) reason = earlier;
    if (fclose(stdout) != 0 && !failed) {
        failed = 1;
        reason = errno;
    }
    if (!failed) return 0;
    fprintf(stderr, "sheaf: standard output: %s\n",
            strerror(reason ? reason : EIO));
    return EXIT_FAILED;
}

char *cli_read_text(const char *path, char *err, size_t errlen)
{
    int in = !strcmp(path, "-"); /* standard input, as trim reads it */
    FILE *f = in ? stdin : fopen(path, "rb");
    if (!f) { message_printf(err, errlen, "%s: %s", path, strerror(errno)); return NULL; }
    size_t cap = 4096, len = 0;
    char *buf = malloc(cap);
    while (buf) {
        if (len + 1 >= cap) {
            char *g = cap < KEEP_LIST_MAX_BYTES ? realloc(buf, cap * 2) : NULL;
            if (!g) { free(buf); buf = NULL; break; }
            buf = g;
            cap *= 2;
        }
        size_t got = fread(buf + len, 1, cap - 1 - len, f);
        len += got;
        if (got == 0) break;
    }
    int bad = ferror(f);
    if (!in) fclose(f);
    if (!buf || bad) {
        message_printf(err, errlen, "%s: %s", path,
                       buf ? "read error" : "too large or out of memory");
        free(buf);
        return NULL;
    }
    buf[len] = '\0';
    return buf;
}

int cli_summary_exit(int st)
{
    switch ((summary_status)st) {
    case SUMMARY_OK: return EXIT_DONE;
    case SUMMARY_ERR_IO: return EXIT_INPUT;
    case SUMMARY_ERR_CORRUPT: return EXIT_CORRUPT;
    case SUMMARY_ERR_INCOMPATIBLE: return EXIT_INCOMPATIBLE;
    case SUMMARY_ERR_TARGETS: return EXIT_USAGE;
    default: return EXIT_RESOURCE;
    }
}

int cli_parse_unit(const char *cmd, const char *opt, const char *s, double *out)
{
    char *end;
    double v = strtod(s, &end);
    if (end == s || *end || !(v > 0 && v <= 1)) {
        cli_error(cmd, "%s must be a number in (0, 1], got '%s'", opt, s);
        return -1;
    }
    *out = v;
    return 0;
}

int cli_parse_delim(const char *s, char *out)
{
    if (!strcmp(s, "tab") || !strcmp(s, "\\t") || !strcmp(s, "\t")) { *out = '\t'; return 0; }
    if (!strcmp(s, "space")) { *out = ' '; return 0; }
    if (strlen(s) == 1 && s[0] != '"' && s[0] != '\n' && s[0] != '\r') { *out = s[0]; return 0; }
    return -1;
}

int cli_parse_reading(const char *cmd, const char *chunk, const char *max_record,
                      size_t *chunk_bytes, size_t *max_record_bytes)
{
    long long v;
    if (chunk) {
        if ((v = cli_parse_size(chunk)) < 64 || v > (1ll << 32)) {
            cli_error(cmd, "--chunk-size must be a size between 64 and 4G, got '%s'", chunk);
            return EXIT_USAGE;
        }
        *chunk_bytes = (size_t)v;
    }
    if (max_record) {
        if ((v = cli_parse_size(max_record)) < 64) {
            cli_error(cmd, "--max-record must be a size of at least 64, got '%s'", max_record);
            return EXIT_USAGE;
        }
        *max_record_bytes = (size_t)v;
    }
    return 0;
}

int cli_parse_threads(const char *cmd, const char *text, unsigned *threads)
{
    /* SHEAF_THREADS sets the default (for a whole test suite, or a cron job);
     * an empty one is unset, an empty --threads an error. */
    const char *from = "--threads";
    if (!text) {
        text = getenv("SHEAF_THREADS");
        from = "SHEAF_THREADS";
        if (!text || !*text) return 0;
    }
    long long v = cli_parse_count(text);
    if (v < 1 || v > 1024) {
        cli_error(cmd, "%s must be a count from 1 to 1024, got '%s'", from, text);
        return EXIT_USAGE;
    }
    *threads = (unsigned)v;
    return 0;
}

static double seconds_now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + ts.tv_nsec * 1e-9;
}

void cli_progress_start(cli_progress *p, const char *label, int quiet, int rows_to_stdout)
{
    p->label = label;
    /* Not over rows printed on the same terminal. */
    p->on = !quiet && isatty(STDERR_FILENO) && !(rows_to_stdout && isatty(STDOUT_FILENO));
    p->start = p->last = seconds_now();
    p->shown = 0;
}

void cli_progress_update(void *ctx, uint64_t done, uint64_t total)
{
    cli_progress *p = ctx;
    if (!p->on) return;
    double t = seconds_now();
    if (t - p->last < 0.25) return;
    p->last = t;
    double mb = done / 1e6, rate = mb / (t - p->start > 1e-9 ? t - p->start : 1e-9);
    if (total) {
        double left = rate > 0 ? (total / 1e6 - mb) / rate : 0;
        fprintf(stderr, "\r%s: %.0f / %.0f MB (%.0f%%), %.0f MB/s, %.0f s left\033[K", p->label, mb,
                total / 1e6, 100.0 * done / total, rate, left > 0 ? left : 0);
    } else {
        fprintf(stderr, "\r%s: %.0f MB, %.0f MB/s\033[K", p->label, mb, rate);
    }
    p->shown = 1;
}

void cli_progress_end(cli_progress *p)
{
    if (p->shown) fputs("\r\033[K", stderr);
    p->shown = 0;
}

FILE *cli_text_begin(cli_text *t)
{
    t->buf = NULL;
    t->len = 0;
    t->width = table_terminal_width();
    t->f = t->width ? open_memstream(&t->buf, &t->len) : NULL;
    return t->f ? t->f : stdout;
}

void cli_text_end(cli_text *t)
{
    if (!t->f) return;
    if (fclose(t->f) == 0 && t->buf) table_wrap(stdout, t->buf, t->width);
    free(t->buf);
    t->f = NULL;
}

int cli_set_color(const char *cmd, const char *when)
{
    if (!when || !strcmp(when, "auto")) table_set_color(TABLE_COLOR_AUTO);
    else if (!strcmp(when, "always")) table_set_color(TABLE_COLOR_ALWAYS);
    else if (!strcmp(when, "never")) table_set_color(TABLE_COLOR_NEVER);
    else {
        cli_error(cmd, "--color: '%s' is not auto, always or never", when);
        return EXIT_USAGE;
    }
    return 0;
}
