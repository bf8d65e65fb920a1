/* sheaf corr: the pairwise-complete correlation (or covariance) matrix. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "out/json.h"
#include "out/table.h"
#include "stats/corr.h"
#include "summary/access.h"

/* What is printed: the matrix v of the columns cols, n x n. */
typedef struct {
    const summary *s;
    const size_t *cols;
    size_t n;
    const double *v;
    int covariance;
} corr_report;

static const char *name(const corr_report *r, size_t a) { return summary_name(r->s, r->cols[a]); }

static void print_csv(const corr_report *r)
{
    for (size_t a = 0; a < r->n; a++) {
        fputc(',', stdout);
        table_csv_field(stdout, name(r, a));
    }
    fputc('\n', stdout);
    for (size_t a = 0; a < r->n; a++) {
        table_csv_field(stdout, name(r, a));
        for (size_t b = 0; b < r->n; b++) {
            double v = r->v[a * r->n + b];
            if (isfinite(v)) printf(",%.17g", v);
            else fputs(",", stdout);
        }
        fputc('\n', stdout);
    }
}

static int print_json(const corr_report *r)
{
    size_t n = r->n;
    uint64_t *pairs = malloc((n ? n * n : 1) * sizeof *pairs);
    if (!pairs) return -1;
    corr_pair_counts(r->s, r->cols, n, pairs);
    json_out j;
    json_init(&j, stdout);
    json_object_begin(&j);
    json_key(&j, "statistic"); json_string(&j, r->covariance ? "covariance" : "correlation");
    json_key(&j, "rows"); json_uint(&j, summary_rows(r->s));
    json_key(&j, "columns");
    json_array_begin(&j);
    for (size_t a = 0; a < n; a++) json_string(&j, name(r, a));
    json_array_end(&j);
    cli_json_matrix(&j, "matrix", r->v, n, n);
    json_key(&j, "pairs_n");
    json_array_begin(&j);
    for (size_t a = 0; a < n; a++) {
        json_array_begin(&j);
        for (size_t b = 0; b < n; b++) json_uint(&j, pairs[a * n + b]);
        json_array_end(&j);
    }
    json_array_end(&j);
    json_object_end(&j);
    json_finish(&j);
    free(pairs);
    return 0;
}

/* Panels of as many columns as fit the terminal (100 when not a terminal). */
static void print_text(FILE *f, const corr_report *r)
{
    size_t n = r->n, width = table_terminal_width();
    if (!width) width = 100;
    /* Names whole (users copy them), unless one is so long that not even
     * one value would fit beside it: then cut, with the marker. */
    size_t namew = 4;
    for (size_t a = 0; a < n; a++) {
        size_t l = table_text_width(name(r, a));
        if (l > namew) namew = l;
    }
    size_t cellw = r->covariance ? 11 : 7;
    if (width > 4 + cellw + 1 + 8 && namew > width - 4 - cellw - 1) namew = width - 4 - cellw - 1;
    size_t per = width >= namew + 4 + cellw + 1 ? (width - namew - 4) / (cellw + 1) : 1;
    if (per < 1) per = 1;
    fprintf(f, "%s (pairwise complete), %zu numeric columns, %llu rows\n",
           r->covariance ? "sample covariance" : "Pearson r", n,
           (unsigned long long)summary_rows(r->s));
    for (size_t from = 0; from < n; from += per) {
        size_t to = from + per < n ? from + per : n;
        fprintf(f, "\n%*s", (int)(namew + 4), "");
        for (size_t b = from; b < to; b++) fprintf(f, " %*zu", (int)cellw, b + 1);
        fputc('\n', f);
        for (size_t a = 0; a < n; a++) {
            fprintf(f, "%3zu ", a + 1);
            const char *nm = name(r, a);
            table_put_cut(f, nm, namew);
            for (size_t w = table_text_width(nm); w < namew; w++) fputc(' ', f);
            for (size_t b = from; b < to; b++) {
                double v = r->v[a * n + b];
                if (!isfinite(v)) fprintf(f, " %*s", (int)cellw, "-");
                else if (r->covariance) fprintf(f, " %*.4g", (int)cellw, v);
                else fprintf(f, " %*.3f", (int)cellw, v);
            }
            fputc('\n', f);
        }
    }
}

int cmd_corr(int argc, char **argv)
{
    const char *color = NULL;
    const char *format = "text", *share_s = NULL, *cols_s = NULL, *target = NULL;
    const char *basis = NULL;
    const cli_option opts[] = {
        CLI_TARGET_OPTION(target),
        {"format", 'f', "FMT", "text (default), csv or json", &format, NULL},
        {"basis", 0, "B", "correlation (Pearson r; default) or covariance (the sample covariance)",
         &basis, NULL},
        {"columns", 0, CLI_NAME_LIST, "only these columns", &cols_s, NULL},
        CLI_NUMERIC_SHARE_OPTION(share_s),
        CLI_COLOR_OPTION(color),
        {0},
    };
    const cli_command cmd = {
        "corr", "FILE.sheaf [--format text|csv|json] [--basis correlation|covariance]",
        "Prints the pairwise-complete Pearson correlation matrix of the numeric columns\n"
        "(each pair over the rows where both are present), from the summary alone.",
        opts,
        "  $ sheaf corr fleet.sheaf --columns battery_v,motor_temp_c,payload_kg\n"
        "  $ sheaf corr fleet.sheaf --basis covariance -f csv > cov.csv\n"};
    char **pos;
    int rc = cli_parse_single(&cmd, argc, argv, &pos);
    if (rc >= 0) return rc;
    if (cli_set_color("corr", color) != 0) return EXIT_USAGE;
    rc = EXIT_USAGE;
    double share;
    summary *s = NULL;
    size_t *cols = NULL;
    double *v = NULL;
    if (cli_check_format("corr", format)) goto done;
    if (basis && strcmp(basis, "correlation") && strcmp(basis, "covariance")) {
        cli_error("corr", "--basis must be correlation or covariance, got '%s'", basis);
        goto done;
    }
    int covariance = basis && !strcmp(basis, "covariance");
    if (cli_numeric_share("corr", share_s, &share)) goto done;
    /* The co-moments are every target's alike: any part will do. */
    if ((rc = cli_read_target("corr", pos[0], target, 0, &s)) != EXIT_DONE) goto done;
    rc = EXIT_RESOURCE;
    cols = malloc((summary_columns(s) + 1) * sizeof *cols);
    if (!cols) { cli_error("corr", "out of memory"); goto done; }
    char err[512];
    long n = corr_columns(s, share, cols_s, cols, err, sizeof err);
    if (n < 0) {
        cli_error("corr", "%s: --columns: %s", cli_path_name(pos[0]), err);
        rc = EXIT_USAGE;
        goto done;
    }
    corr_report r = {s, cols, (size_t)n, NULL, covariance};
    v = malloc(((size_t)n * (size_t)n + 1) * sizeof *v);
    if (!v) { cli_error("corr", "out of memory (the %ld x %ld matrix)", n, n); goto done; }
    corr_matrix(s, cols, r.n, covariance ? CORR_COVARIANCE : CORR_PEARSON, v);
    r.v = v;
    size_t ia = 0, ib = 0, imprecise = corr_imprecise_pairs(s, cols, r.n, &ia, &ib);
    if (imprecise)
        fprintf(stderr,
                "sheaf corr: warning: %zu pair%s no figure (first: %s and %s): numbers rounded "
                "far from the first number of the scan that read them (docs/methods.md, "
                "\"Pairwise-complete co-moments\")\n",
                imprecise, imprecise == 1 ? " has" : "s have", summary_name(s, cols[ia]),
                summary_name(s, cols[ib]));
    if (!strcmp(format, "csv")) print_csv(&r);
    else if (!strcmp(format, "text")) {
        cli_text out;
        print_text(cli_text_begin(&out), &r);
        cli_text_end(&out);
    }
    else if (print_json(&r)) { cli_error("corr", "out of memory"); goto done; }
    rc = EXIT_DONE; /* standard output is checked once, by main (cli_close_stdout) */
done:
    free(v);
    free(cols);
    summary_free(s);
    free(pos);
    return rc;
}
