/* sheaf trim: the reduced table, in one more streaming pass. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "io/chunk.h"
#include "io/csv.h"
#include "io/source.h"
#include "out/sink.h"
#include "stats/screen.h"
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

static int names_has(const name_set *s, const char *name, size_t len)
{
    for (size_t i = 0; i < s->n; i++)
        if (strlen(s->names[i]) == len && memcmp(s->names[i], name, len) == 0) return 1;
    return 0;
}

static void names_free(name_set *s)
{
    for (size_t i = 0; i < s->n; i++) free(s->names[i]);
    free(s->names);
}

/* Reads one name per line (blank lines and '#' comments skipped). */
static int read_keep_list(const char *path, name_set *out, char *err, size_t errlen)
{
    FILE *f = strcmp(path, "-") ? fopen(path, "r") : stdin;
    if (!f) { snprintf(err, errlen, "%s: cannot open", path); return -1; }
    char *line = NULL;
    size_t cap = 0;
    ssize_t n;
    int rc = 0;
    while ((n = getline(&line, &cap, f)) >= 0 && rc == 0) {
        while (n && (line[n - 1] == '\n' || line[n - 1] == '\r')) line[--n] = '\0';
        if (n == 0 || line[0] == '#') continue;
        rc = names_add(out, line, (size_t)n);
    }
    free(line);
    if (f != stdin) fclose(f);
    if (rc) snprintf(err, errlen, "out of memory");
    return rc;
}

/* Adds a comma-separated list. */
static int add_list(name_set *s, const char *list)
{
    while (list && *list) {
        const char *e = strchr(list, ',');
        size_t l = e ? (size_t)(e - list) : strlen(list);
        if (l && names_add(s, list, l) != 0) return -1;
        list += l + (e != NULL);
    }
    return 0;
}

/* Streams one file; writes the header only for the first. */
static int trim_file(const char *path, const name_set *keep, char delim_opt, sink *out,
                     int *header_done, char **header_line, size_t *header_len, int *missing_warned,
                     int *unterminated, char *err, size_t errlen)
{
    source *src = source_open(path, err, errlen);
    if (!src) return EXIT_INPUT;
    chunker *ck = chunker_create(4u << 20, 64u << 20);
    csv_field *f = NULL;
    unsigned char *pick = NULL;
    size_t nfields = 0, cap = 0;
    int rc = EXIT_DONE, at_first = 1;
    char delim = delim_opt;
    uint64_t line_base = 0;
    if (!ck) { rc = EXIT_RESOURCE; snprintf(err, errlen, "out of memory"); goto done; }
    chunker_start(ck, src);
    for (;;) {
        chunk ch;
        int c = chunker_next(ck, &ch, err, errlen);
        if (c < 0) { rc = EXIT_INPUT; goto done; }
        if (c == 0) break;
        char *data = ch.data;
        size_t len = ch.len;
        size_t bom = ch.offset == 0 ? csv_bom_length(data, len) : 0;
        if (bom && !*header_done && sink_write(out, data, bom) != 0) goto write_fail;
        data += bom;
        len -= bom;
        if (!delim) delim = csv_detect_delimiter(data, len);
        csv_reader r;
        csv_reader_init(&r, data, len, delim);
        for (;;) {
            if (cap < nfields + 2 || at_first) {
                size_t want = at_first ? len / 1 + 2 : nfields + 2;
                if (at_first) { /* upper bound: delimiters in the chunk */
                    want = 2;
                    for (size_t i = 0; i < len && data[i] != '\n'; i++) want += data[i] == delim;
                    want += 2;
                }
                if (want > cap) {
                    csv_field *g = realloc(f, want * sizeof *g);
                    if (!g) { rc = EXIT_RESOURCE; snprintf(err, errlen, "out of memory"); goto done; }
                    f = g;
                    cap = want;
                }
            }
            size_t nf;
            const char *eol;
            size_t eol_len;
            csv_status st = csv_next_raw(&r, f, cap, &nf, &eol, &eol_len);
            if (st == CSV_END) break;
            if (st == CSV_UNTERMINATED) {
                snprintf(err, errlen, "%s: line %llu: unterminated quote", path,
                         (unsigned long long)(line_base + r.record_line + 1));
                rc = EXIT_INPUT;
                goto done;
            }
            if (at_first) {
                at_first = 0;
                nfields = nf < cap ? nf : cap;
                pick = calloc(nfields ? nfields : 1, 1);
                if (!pick) { rc = EXIT_RESOURCE; snprintf(err, errlen, "out of memory"); goto done; }
                size_t found = 0;
                for (size_t i = 0; i < nfields; i++) {
                    /* Header names may be quoted: compare the unquoted text. */
                    const char *nm = f[i].ptr;
                    size_t nl = f[i].len;
                    if (nl >= 2 && nm[0] == '"' && nm[nl - 1] == '"') { nm++; nl -= 2; }
                    pick[i] = names_has(keep, nm, nl);
                    found += pick[i];
                }
                if (found < keep->n && !*missing_warned) {
                    for (size_t k = 0; k < keep->n; k++) {
                        int seen = 0;
                        for (size_t i = 0; i < nfields && !seen; i++) {
                            const char *nm = f[i].ptr;
                            size_t nl = f[i].len;
                            if (nl >= 2 && nm[0] == '"' && nm[nl - 1] == '"') { nm++; nl -= 2; }
                            seen = strlen(keep->names[k]) == nl && memcmp(keep->names[k], nm, nl) == 0;
                        }
                        if (!seen) {
                            snprintf(err, errlen, "%s: no column named '%s' in the header", path,
                                     keep->names[k]);
                            rc = EXIT_USAGE;
                            goto done;
                        }
                    }
                }
                /* The header: written once, and later files must match it. */
                size_t hl = (size_t)(eol - (const char *)r.record_start);
                if (*header_done) {
                    if (hl != *header_len || memcmp(*header_line, r.record_start, hl) != 0) {
                        snprintf(err, errlen, "%s: header differs from the first file's", path);
                        rc = EXIT_INPUT;
                        goto done;
                    }
                    continue;
                }
                *header_line = malloc(hl + 1);
                if (!*header_line) { rc = EXIT_RESOURCE; goto done; }
                memcpy(*header_line, r.record_start, hl);
                *header_len = hl;
                *header_done = 1;
            }
            /* The previous file ended without a line end: give it one now. */
            if (*unterminated && sink_write(out, "\n", 1) != 0) goto write_fail;
            *unterminated = 0;
            int first = 1;
            for (size_t i = 0; i < nfields; i++) {
                if (!pick[i]) continue;
                if (!first && sink_write(out, &delim, 1) != 0) goto write_fail;
                first = 0;
                if (i < nf && f[i].len && sink_write(out, f[i].ptr, f[i].len) != 0) goto write_fail;
            }
            /* The input's own line end; none after a last record without one. */
            if (eol_len && sink_write(out, eol, eol_len) != 0) goto write_fail;
            *unterminated = eol_len == 0;
        }
        line_base += r.lines;
    }
    goto done;
write_fail:
    snprintf(err, errlen, "write failed");
    rc = EXIT_FAILED;
done:
    free(f);
    free(pick);
    chunker_free(ck);
    source_close(src);
    return rc;
}

int cmd_trim(int argc, char **argv)
{
    const char *from = NULL, *keep_list = NULL, *carry = NULL, *out_path = NULL, *delim_s = NULL;
    screen_options so;
    screen_options_defaults(&so);
    const char *q = NULL, *top = NULL;
    const cli_option opts[] = {
        {"from", 0, "SUMMARY.sheaf", "keep what `sheaf screen` keeps on this summary", &from, NULL},
        {"keep-list", 0, "FILE", "keep the columns named in FILE, one per line", &keep_list, NULL},
        {"carry", 0, "A,B,..", "also keep these columns (IDs, timestamps)", &carry, NULL},
        {"output", 'o', "OUT", "write here (.gz / .zst compress; default standard output)", &out_path,
         NULL},
        {"delim", 'd', "CHAR", "field delimiter (default: detected)", &delim_s, NULL},
        {"q", 0, "LEVEL", "as in screen: significance level (default 0.05)", &q, NULL},
        {"top", 0, "K", "as in screen: keep at most K columns", &top, NULL},
        {0},
    };
    const cli_command cmd = {
        "trim", "DATA... (--from SUMMARY.sheaf | --keep-list FILE) [-o OUT]",
        "Writes DATA with only the kept columns (and the target, and --carry columns), in\n"
        "their input order, keeping each field's bytes and quoting as they were.\n"
        "With --from, the kept set is that of `sheaf screen` with the same options.",
        opts};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc) { free(pos); return rc == 1 ? EXIT_DONE : rc; }
    name_set keep = {0};
    summary *s = NULL;
    screen_result *res = NULL;
    sink *out = NULL;
    char *header = NULL;
    size_t header_len = 0;
    char err[1024];
    char delim = 0;
    rc = EXIT_USAGE;
    if (npos == 0) { cli_error("trim", "no data files (see sheaf trim --help)"); goto done; }
    if (!!from == !!keep_list) { cli_error("trim", "give exactly one of --from and --keep-list"); goto done; }
    if (delim_s && cli_parse_delim(delim_s, &delim) != 0) {
        cli_error("trim", "--delim must be one character or 'tab', got '%s'", delim_s);
        goto done;
    }
    if (q && cli_parse_unit("trim", "--q", q, &so.q_level)) goto done;
    if (top) {
        long long v = cli_parse_count(top);
        if (v < 1) { cli_error("trim", "--top must be a positive count"); goto done; }
        so.top = (size_t)v;
    }
    if (keep_list && read_keep_list(keep_list, &keep, err, sizeof err) != 0) {
        cli_error("trim", "%s", err);
        rc = EXIT_INPUT;
        goto done;
    }
    if (from) {
        summary_status st = summary_read(from, &s, err, sizeof err);
        if (st != SUMMARY_OK) { cli_error("trim", "%s", err); rc = cli_summary_exit(st); goto done; }
        res = screen_run(s, &so);
        if (!res) { cli_error("trim", "out of memory"); rc = EXIT_RESOURCE; goto done; }
        for (size_t i = 0; i < res->nfeatures; i++)
            if (res->features[i].keep) {
                const char *nm = s->cols[res->features[i].col].name;
                if (names_add(&keep, nm, strlen(nm)) != 0) { rc = EXIT_RESOURCE; goto done; }
            }
        if (s->target >= 0 && names_add(&keep, s->opt.target, strlen(s->opt.target)) != 0) goto done;
    }
    if (add_list(&keep, carry) != 0) { rc = EXIT_RESOURCE; goto done; }
    out = sink_open(out_path, err, sizeof err);
    if (!out) { cli_error("trim", "%s", err); rc = EXIT_FAILED; goto done; }
    int header_done = 0, warned = 0, unterminated = 0;
    for (size_t i = 0; i < npos; i++) {
        rc = trim_file(pos[i], &keep, delim, out, &header_done, &header, &header_len, &warned,
                       &unterminated, err, sizeof err);
        if (rc != EXIT_DONE) {
            cli_error("trim", "%s", err);
            sink_abort(out);
            out = NULL;
            goto done;
        }
    }
    rc = sink_close(out, err, sizeof err) == 0 ? EXIT_DONE : EXIT_FAILED;
    out = NULL;
    if (rc != EXIT_DONE) cli_error("trim", "%s", err);
done:
    if (out) sink_abort(out);
    free(header);
    names_free(&keep);
    screen_free(res);
    summary_free(s);
    free(pos);
    return rc;
}
