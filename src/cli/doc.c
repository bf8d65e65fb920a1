/* cli doc: man pages (roff, man(7) macros) and bash completion from the
 * option tables; see doc.h.
 *
 * Roff escaping (groff_man(7), mandoc's man(7)): a backslash is written \e;
 * a line that would start with '.' or '\'' (a request to troff) starts with
 * the zero-width \&; every dash of an option, a synopsis or an example is
 * \- (a minus, which copies and searches as '-'), while a hyphen inside a
 * prose word ("pairwise-complete") stays '-'; a non-ASCII UTF-8 character is
 * \[uXXXX], so the pages need no preprocessor. */
#include "cli/doc.h"

#include <ctype.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

static struct {
    cli_doc_mode mode;
    const char *what;
    const char *version;
} doc;

void cli_doc_set(cli_doc_mode mode, const char *what, const char *version)
{
    doc.mode = mode;
    doc.what = what;
    doc.version = version;
}

/* ---- roff ---- */

enum { PROSE, LITERAL };
/* Longest prose input line (mandoc's style check wants at most 80 bytes,
 * and escapes lengthen a line). */
#define PROSE_LINE 66

/* Writes s[0..n) escaped; *bol is 1 at the start of an output line. In
 * PROSE a dash is a minus only in a word that starts with one (--target,
 * -o, '-' alone). */
static void roff_put(FILE *f, const char *s, size_t n, int kind, int *bol)
{
    int dash_word = 0;
    for (size_t i = 0; i < n; i++) {
        unsigned char c = (unsigned char)s[i];
        if (*bol && (c == '.' || c == '\'')) fputs("\\&", f);
        *bol = 0;
        if (c == ' ' || c == '\t') {
            dash_word = 0;
            fputc(c, f);
        } else if (c == '\n') {
            dash_word = 0;
            fputc(c, f);
            *bol = 1;
        } else if (c == '\\') {
            fputs("\\e", f);
        } else if (c == '-') {
            int word_start = i == 0 || strchr(" \t\n([`'\"|,=", s[i - 1]) != NULL;
            if (word_start && kind == PROSE && !dash_word) fputs("\\%", f); /* never hyphenated */
            if (word_start) dash_word = 1;
            fputs(kind == LITERAL || dash_word ? "\\-" : "-", f);
        } else if (c >= 0x80) {
            /* One UTF-8 sequence as \[uXXXX]; a stray byte as '?'. */
            size_t len = c >= 0xf0 ? 4 : c >= 0xe0 ? 3 : c >= 0xc0 ? 2 : 1;
            unsigned long cp = len == 4 ? c & 0x07u : len == 3 ? c & 0x0fu : c & 0x1fu;
            int ok = len > 1 && i + len <= n;
            for (size_t k = 1; ok && k < len; k++) {
                unsigned char d = (unsigned char)s[i + k];
                if ((d & 0xc0) != 0x80) ok = 0;
                cp = cp << 6 | (d & 0x3fu);
            }
            if (!ok) { fputc('?', f); continue; }
            fprintf(f, "\\[u%04lX]", cp);
            i += len - 1;
        } else {
            fputc(c, f);
        }
    }
}

static void roff_str(FILE *f, const char *s, int kind)
{
    int bol = 1;
    roff_put(f, s, strlen(s), kind, &bol);
}

/* Prose that may span lines: each line trimmed of leading blanks (a leading
 * blank is a break in roff); an empty line is a new paragraph. */
static void roff_prose(FILE *f, const char *s)
{
    while (*s) {
        const char *nl = strchr(s, '\n');
        size_t len = nl ? (size_t)(nl - s) : strlen(s);
        const char *p = s;
        while (len && (*p == ' ' || *p == '\t')) { p++; len--; }
        while (len && (p[len - 1] == ' ' || p[len - 1] == '\t')) len--;
        if (len == 0) fputs(".PP\n", f);
        /* Input lines of at most PROSE_LINE bytes before escaping, broken
         * at a blank (fill mode joins them again). */
        while (len) {
            size_t take = len;
            if (len > PROSE_LINE) {
                take = PROSE_LINE;
                while (take && p[take] != ' ') take--;
                if (!take) { take = PROSE_LINE; while (take < len && p[take] != ' ') take++; }
            }
            int bol = 1;
            roff_put(f, p, take, PROSE, &bol);
            fputc('\n', f);
            p += take;
            len -= take;
            while (len && *p == ' ') { p++; len--; }
        }
        if (!nl) break;
        s = nl + 1;
    }
}

/* Example lines "  $ sheaf ...": unfilled and indented. */
static void roff_examples(FILE *f, const char *s)
{
    fputs(".SH EXAMPLES\n.RS 4\n.nf\n", f);
    while (*s) {
        const char *nl = strchr(s, '\n');
        size_t len = nl ? (size_t)(nl - s) : strlen(s);
        const char *p = s;
        while (len && *p == ' ') { p++; len--; }
        int bol = 1;
        roff_put(f, p, len, LITERAL, &bol);
        fputc('\n', f);
        if (!nl) break;
        s = nl + 1;
    }
    fputs(".fi\n.RE\n", f);
}

static void roff_date(char *buf, size_t len)
{
    time_t t = time(NULL);
    const char *epoch = getenv("SOURCE_DATE_EPOCH");
    if (epoch && *epoch) {
        char *end;
        long long v = strtoll(epoch, &end, 10);
        if (!*end && v >= 0) t = (time_t)v;
    }
    struct tm tm;
    if (!gmtime_r(&t, &tm) || !strftime(buf, len, "%Y-%m-%d", &tm)) snprintf(buf, len, "1970-01-01");
}

/* .TH TITLE 1 DATE "sheaf VERSION" "sheaf manual" */
static void roff_head(FILE *f, const char *title, const char *version)
{
    char date[32];
    roff_date(date, sizeof date);
    fputs(".TH ", f);
    for (const char *p = title; *p; p++) {
        if (*p == '-') fputs("\\-", f);
        else fputc(toupper((unsigned char)*p), f);
    }
    fprintf(f, " 1 %s \"sheaf %s\" \"sheaf manual\"\n", date, version ? version : "");
}

static void roff_command(const cli_command *cmd)
{
    FILE *f = stdout;
    char title[64];
    snprintf(title, sizeof title, "sheaf-%s", cmd->name);
    roff_head(f, title, doc.version);
    fputs(".SH NAME\n", f);
    roff_str(f, title, LITERAL);
    fputs(" \\- ", f);
    roff_str(f, doc.what ? doc.what : "", PROSE);
    fputs("\n.SH SYNOPSIS\n\\fBsheaf ", f);
    roff_str(f, cmd->name, LITERAL);
    fputs("\\fR ", f);
    roff_str(f, cmd->synopsis, LITERAL);
    fputs("\n.SH DESCRIPTION\n", f);
    roff_prose(f, cmd->about);
    fputs(".SH OPTIONS\n", f);
    for (const cli_option *o = cmd->options; o->name; o++) {
        fputs(".TP\n", f);
        if (o->letter) fprintf(f, "\\fB\\-%c\\fR, ", o->letter);
        fputs("\\fB\\-\\-", f);
        roff_str(f, o->name, LITERAL);
        fputs("\\fR", f);
        if (o->metavar) {
            fputs(" \\fI", f);
            roff_str(f, o->metavar, LITERAL);
            fputs("\\fR", f);
        }
        fputc('\n', f);
        roff_prose(f, o->help);
    }
    fputs(".TP\n\\fB\\-h\\fR, \\fB\\-\\-help\\fR\nshow this help\n", f);
    if (cli_takes_names(cmd)) {
        fputs(".PP\n", f);
        roff_prose(f, CLI_NAME_LIST ": " CLI_NAME_LIST_RULE);
    }
    if (cmd->examples) roff_examples(f, cmd->examples);
    fputs(".SH SEE ALSO\n.BR sheaf (1)\n", f);
}

/* Whether a paragraph of `sheaf --help` (text[0..n), no blank line inside)
 * is a list: "heading:" then lines "  KEY  text". */
static int top_is_list(const char *text, size_t n)
{
    const char *nl = memchr(text, '\n', n);
    if (!nl || nl == text || nl[-1] != ':') return 0;
    for (const char *p = nl; p && p + 1 < text + n; p = memchr(p + 1, '\n', (size_t)(text + n - p - 1)))
        if (strncmp(p + 1, "  ", 2) != 0) return 0;
    return 1;
}

static void roff_top_list(FILE *f, const char *text, size_t n)
{
    const char *nl = memchr(text, '\n', n);
    size_t first = (size_t)(nl - text);
    int commands = first == 9 && !strncmp(text, "commands:", 9);
    fputs(".SH ", f);
    if (first == 11 && !strncmp(text, "exit codes:", 11))
        fputs("EXIT STATUS", f);
    else
        for (size_t i = 0; i + 1 < first; i++) fputc(toupper((unsigned char)text[i]), f);
    fputc('\n', f);
    const char *line = nl + 1;
    while (line < text + n) {
        const char *end = memchr(line, '\n', (size_t)(text + n - line));
        if (!end) end = text + n;
        const char *key = line;
        while (key < end && *key == ' ') key++;
        const char *key_end = key;
        while (key_end < end && *key_end != ' ') key_end++;
        const char *rest = key_end;
        while (rest < end && *rest == ' ') rest++;
        int bol = 0;
        fputs(".TP\n\\fB", f);
        roff_put(f, key, (size_t)(key_end - key), LITERAL, &bol);
        fputs("\\fR\n", f);
        char *copy = strndup(rest, (size_t)(end - rest));
        if (copy) roff_prose(f, copy);
        free(copy);
        if (commands) { /* the command's own page */
            fputs("(\\fBsheaf\\-", f);
            roff_put(f, key, (size_t)(key_end - key), LITERAL, &bol);
            fputs("\\fR(1))\n", f);
        }
        line = end + 1;
    }
}

void cli_doc_roff_top(FILE *f, const char *help_text, const char *const *commands, size_t n_commands,
                      const char *version)
{
    roff_head(f, "sheaf", version);
    const char *t = help_text;
    const char *usage = "usage: ";
    /* The NAME line is short; the description (the help's prose) says more. */
    fputs(".SH NAME\nsheaf \\- one-pass mergeable summaries of large CSV tables; column screening\n",
          f);
    if (!strncmp(t, usage, strlen(usage))) {
        const char *nl = strchr(t, '\n');
        size_t len = nl ? (size_t)(nl - t) : strlen(t);
        const char *p = t + strlen(usage);
        const char *sp = memchr(p, ' ', (size_t)(t + len - p));
        if (!sp) sp = t + len;
        int bol = 0;
        fputs(".SH SYNOPSIS\n\\fB", f);
        roff_put(f, p, (size_t)(sp - p), LITERAL, &bol);
        fputs("\\fR", f);
        roff_put(f, sp, (size_t)(t + len - sp), LITERAL, &bol);
        fputc('\n', f);
        t = nl ? nl + 1 : t + len;
    }
    /* Two passes over the paragraphs: the prose (DESCRIPTION), then the lists. */
    for (int lists = 0; lists < 2; lists++) {
        int paragraphs = 0;
        for (const char *p = t; *p;) {
            while (*p == '\n') p++;
            if (!*p) break;
            const char *end = strstr(p, "\n\n");
            size_t n = end ? (size_t)(end - p) : strlen(p);
            while (n && p[n - 1] == '\n') n--;
            if (top_is_list(p, n) == lists) {
                if (lists) {
                    roff_top_list(f, p, n);
                } else {
                    fputs(paragraphs++ ? ".PP\n" : ".SH DESCRIPTION\n", f);
                    char *copy = strndup(p, n);
                    if (copy) roff_prose(f, copy);
                    free(copy);
                }
            }
            p += n;
        }
    }
    fputs(".SH SEE ALSO\n", f);
    for (size_t i = 0; i < n_commands; i++) {
        int bol = 0;
        fputs(".BR sheaf\\-", f);
        roff_put(f, commands[i], strlen(commands[i]), LITERAL, &bol);
        fputs(i + 1 < n_commands ? " (1),\n" : " (1)\n", f);
    }
}

/* ---- bash ---- */

/* An option whose value names a file (completed with file names). */
static int takes_file(const cli_option *o)
{
    const char *m = o->metavar;
    size_t n = strlen(m);
    return strstr(m, "FILE") || strstr(m, "OUT") || (n >= 6 && !strcmp(m + n - 6, ".sheaf"));
}

/* The fixed values of an option, when its help line lists them as
 * "[label: ]a (note), b or c (note)...": the words, space-separated, into
 * out; 0 when the line is not such a list (then nothing is offered). */
static int fixed_values(const char *help, char *out, size_t len)
{
    char text[512];
    size_t n = 0;
    const char *colon = strchr(help, ':');
    const char *paren = strchr(help, '(');
    if (colon && (!paren || colon < paren)) help = colon + 1;
    int depth = 0;
    for (const char *p = help; *p && n + 1 < sizeof text; p++) {
        if (*p == '(') depth++;
        else if (*p == ')') { if (depth) depth--; }
        else if (!depth) {
            if (*p == ',') /* "auto (note), always": the comma goes back to its word */
                while (n && text[n - 1] == ' ') n--;
            text[n++] = *p;
        }
    }
    text[n] = '\0';
    /* Now "a, b or c" (or "a or b", "a, b, or c") and nothing else. */
    char *words[32];
    size_t count = 0;
    char *save = NULL;
    for (char *w = strtok_r(text, " ", &save); w; w = strtok_r(NULL, " ", &save)) {
        if (count == sizeof words / sizeof *words) return 0;
        words[count++] = w;
    }
    if (count < 3 || strcmp(words[count - 2], "or")) return 0;
    size_t used = 0;
    out[0] = '\0';
    for (size_t i = 0; i < count; i++) {
        if (i == count - 2) continue;
        char *w = words[i];
        size_t wl = strlen(w);
        int comma = wl && w[wl - 1] == ',';
        if (comma) w[--wl] = '\0';
        /* A comma after every value but the last two; optional before "or". */
        if (comma != (i + 3 < count) && i != count - 3) return 0;
        if (wl == 0 || !islower((unsigned char)w[0])) return 0;
        for (size_t k = 0; k < wl; k++)
            if (!islower((unsigned char)w[k]) && !isdigit((unsigned char)w[k]) && w[k] != '_' &&
                w[k] != '-')
                return 0;
        if (used + wl + 2 > len) return 0;
        used += (size_t)snprintf(out + used, len - used, "%s%s", used ? " " : "", w);
    }
    return 1;
}

/* "--name|-x" as a case pattern. */
static void bash_pattern(FILE *f, const cli_option *o)
{
    fprintf(f, "--%s", o->name);
    if (o->letter) fprintf(f, "|-%c", o->letter);
}

static void bash_command(const cli_command *cmd)
{
    FILE *f = stdout;
    fprintf(f, "    %s)\n        opts='", cmd->name);
    for (const cli_option *o = cmd->options; o->name; o++) {
        fprintf(f, "--%s ", o->name);
        if (o->letter) fprintf(f, "-%c ", o->letter);
    }
    fputs("--help -h'\n        case $prev in\n", f);
    for (const cli_option *o = cmd->options; o->name; o++) {
        if (!o->metavar) continue;
        char words[256];
        fputs("        ", f);
        bash_pattern(f, o);
        if (takes_file(o))
            fputs(") _sheaf_files; return 0 ;;\n", f);
        else if (fixed_values(o->help, words, sizeof words))
            fprintf(f, ") _sheaf_words '%s'; return 0 ;;\n", words);
        else
            fprintf(f, ") return 0 ;; # %s: typed\n", o->metavar);
    }
    fputs("        esac\n        ;;\n", f);
}

void cli_doc_bash_begin(FILE *f, const char *const *commands, size_t n)
{
    fputs("# bash completion for sheaf(1)\n"
          "# Generated by `sheaf help --completion` from the option tables that\n"
          "# --help prints (src/cli/*.c); `make` rewrites it: do not edit.\n"
          "# Commands, each command's long and short options, file names for the\n"
          "# arguments and for options whose value is a file, and the values of\n"
          "# options whose help lists them (\"text, csv or json\").\n"
          "_sheaf_files()\n{\n"
          "    local IFS=$'\\n'\n"
          "    compopt -o filenames 2>/dev/null\n"
          "    COMPREPLY=($(compgen -f -- \"$cur\"))\n}\n"
          "_sheaf_words()\n{\n"
          "    local IFS=$' \\t\\n'\n"
          "    COMPREPLY=($(compgen -W \"$1\" -- \"$cur\"))\n}\n"
          "_sheaf()\n{\n"
          "    local cur=${COMP_WORDS[COMP_CWORD]} prev= opts= i\n"
          "    ((COMP_CWORD > 0)) && prev=${COMP_WORDS[COMP_CWORD - 1]}\n"
          "    # --name=VALUE: bash splits the word at '='.\n"
          "    if [[ $cur == = ]]; then\n"
          "        cur=\n"
          "    elif [[ $prev == = ]] && ((COMP_CWORD > 1)); then\n"
          "        prev=${COMP_WORDS[COMP_CWORD - 2]}\n"
          "    fi\n"
          "    COMPREPLY=()\n"
          "    local commands='",
          f);
    for (size_t i = 0; i < n; i++) fprintf(f, "%s%s", i ? " " : "", commands[i]);
    fputs("'\n"
          "    if ((COMP_CWORD == 1)); then\n"
          "        if [[ $cur == -* ]]; then _sheaf_words '--help -h --version -V'\n"
          "        else _sheaf_words \"$commands help\"; fi\n"
          "        return 0\n"
          "    fi\n"
          "    for ((i = 2; i < COMP_CWORD; i++)); do\n"
          "        [[ ${COMP_WORDS[i]} == -- ]] && { _sheaf_files; return 0; }\n"
          "    done\n"
          "    case ${COMP_WORDS[1]} in\n"
          "    help)\n"
          "        ((COMP_CWORD == 2)) && _sheaf_words \"$commands\"\n"
          "        return 0\n"
          "        ;;\n",
          f);
}

void cli_doc_bash_end(FILE *f)
{
    fputs("    *) return 0 ;;\n"
          "    esac\n"
          "    if [[ $cur == -* ]]; then _sheaf_words \"$opts\"; else _sheaf_files; fi\n"
          "    return 0\n"
          "}\n"
          "complete -F _sheaf sheaf\n",
          f);
}

int cli_doc_command(const cli_command *cmd)
{
    switch (doc.mode) {
    case CLI_DOC_ROFF: roff_command(cmd); return 1;
    case CLI_DOC_BASH: bash_command(cmd); return 1;
    case CLI_DOC_OFF: break;
    }
    return 0;
}
