/* sheaf pca: principal components of a summary's correlation or covariance
 * matrix (see stats/pca.h for the method). */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "out/json.h"
#include "out/table.h"
#include "stats/pca.h"
#include "summary/access.h"

static const char *col_name(const summary *s, const pca_result *r, size_t j)
{
    return summary_name(s, r->cols[j]);
}

static void print_csv(const summary *s, const pca_result *r, size_t k)
{
    fputs("column", stdout);
    for (size_t c = 0; c < k; c++) printf(",PC%zu", c + 1);
    fputc('\n', stdout);
    for (size_t j = 0; j < r->p; j++) {
        table_csv_field(stdout, col_name(s, r, j));
        for (size_t c = 0; c < k; c++) printf(",%.17g", r->loadings[c * r->p + j]);
        fputc('\n', stdout);
    }
}

static int print_json(const summary *s, const pca_result *r, size_t k, const char *rule,
                      size_t nleading)
{
    size_t p = r->p;
    double *sds = malloc(p * sizeof *sds);
    size_t *idx = malloc((nleading ? nleading : 1) * sizeof *idx);
    if (!sds || !idx) { free(sds); free(idx); return -1; }
    for (size_t c = 0; c < p; c++) sds[c] = summary_sd(s, r->cols[c]);
    json_out j;
    json_init(&j, stdout);
    json_object_begin(&j);
    json_key(&j, "basis"); json_string(&j, pca_basis_name(r->basis));
    json_key(&j, "rows"); json_uint(&j, summary_rows(s));
    json_key(&j, "columns");
    json_array_begin(&j);
    for (size_t c = 0; c < p; c++) json_string(&j, col_name(s, r, c));
    json_array_end(&j);
    json_key(&j, "excluded");
    json_array_begin(&j);
    for (size_t i = 0; i < r->nleft; i++) {
        json_object_begin(&j);
        json_key(&j, "column"); json_string(&j, summary_name(s, r->left[i].column));
        json_key(&j, "reason"); json_string(&j, pca_reason_name(r->left[i].reason));
        json_object_end(&j);
    }
    json_array_end(&j);
    cli_json_numbers(&j, "means", r->center, p);
    cli_json_numbers(&j, "sds", sds, p);
    cli_json_numbers(&j, "eigenvalues", r->eigenvalues, p);
    cli_json_numbers(&j, "share", r->share, p);
    cli_json_numbers(&j, "cumulative", r->cumulative, p);
    json_key(&j, "k"); json_uint(&j, k);
    json_key(&j, "k_rule"); json_string(&j, rule);
    json_key(&j, "kaiser_k"); json_uint(&j, r->kaiser_k);
    json_key(&j, "broken_stick_k"); json_uint(&j, r->broken_stick_k);
    json_key(&j, "clamped_negative"); json_uint(&j, r->clamped_negative);
    json_key(&j, "most_negative_eigenvalue");
    if (r->clamped_negative) json_number(&j, r->most_negative);
    else json_null(&j);
    json_key(&j, "undefined_pairs"); json_uint(&j, r->undefined_pairs);
    cli_json_matrix(&j, "loadings", r->loadings, k, p);
    json_key(&j, "leading");
    json_array_begin(&j);
    for (size_t c = 0; c < k; c++) {
        size_t n = pca_leading(r, c, nleading, idx);
        json_array_begin(&j);
        for (size_t i = 0; i < n; i++) {
            json_object_begin(&j);
            json_key(&j, "column"); json_string(&j, col_name(s, r, idx[i]));
            json_key(&j, "loading"); json_number(&j, r->loadings[c * p + idx[i]]);
            json_object_end(&j);
        }
        json_array_end(&j);
    }
    json_array_end(&j);
    free(idx);
    free(sds);
    json_object_end(&j);
    json_finish(&j);
    return 0;
}

static void print_text(FILE *f, const summary *s, const pca_result *r, size_t k, const char *rule,
                       size_t nleading)
{
    size_t p = r->p, width = table_terminal_width();
    int color = table_use_color(stdout);
    fprintf(f, "principal components of the %s matrix (pairwise complete)\n",
           r->basis == PCA_BASIS_CORRELATION ? "correlation" : "sample covariance");
    fprintf(f, "%zu columns, %llu rows; total variance %.6g\n", p, (unsigned long long)summary_rows(s),
           r->total);
    if (r->nleft) {
        fprintf(f, "left out (%zu):", r->nleft);
        size_t shown = r->nleft < 40 ? r->nleft : 40;
        for (size_t i = 0; i < shown; i++)
            fprintf(f, "%s %s (%s)", i ? "," : "", summary_name(s, r->left[i].column),
                   pca_reason_name(r->left[i].reason));
        if (shown < r->nleft) fprintf(f, ", ... %zu more (--format json lists all)", r->nleft - shown);
        fputc('\n', f);
    }
    fprintf(f, "kept %zu component%s (%s); guides: Kaiser rule %zu, broken-stick rule %zu\n\n", k,
           k == 1 ? "" : "s", rule, r->kaiser_k, r->broken_stick_k);

    size_t rows = k;
    if (r->kaiser_k > rows) rows = r->kaiser_k;
    if (r->broken_stick_k > rows) rows = r->broken_stick_k;
    rows = p <= 20 ? p : (rows + 5 > 20 ? rows + 5 : 20);
    if (rows > p) rows = p;
    table *t = table_create(7);
    if (!t) return;
    table_heading(t, 0, "component", 0);
    table_heading(t, 1, "eigenvalue", 1);
    table_heading(t, 2, "share", 1);
    table_heading(t, 3, "cumulative", 1);
    table_heading(t, 4, "stick", 1);
    table_heading(t, 5, "kept", 0);
    table_heading(t, 6, "guides", 0);
    /* At a narrow width, in this order: stick, guides, kept, cumulative, share. */
    const int rank[] = {0, 0, 1, 2, 5, 3, 4};
    for (size_t c = 0; c < 7; c++) table_drop_rank(t, c, rank[c]);
    table_keep_whole(t, 0);
    for (size_t c = 0; c < rows; c++) {
        table_row(t);
        table_cellf(t, 0, "PC%zu", c + 1);
        table_cellf(t, 1, "%.6g", r->eigenvalues[c]);
        table_cellf(t, 2, "%.2f%%", 100 * r->share[c]);
        table_cellf(t, 3, "%.2f%%", 100 * r->cumulative[c]);
        table_cellf(t, 4, "%.2f%%", 100 * pca_broken_stick(c + 1, p));
        if (c < k) table_cell(t, 5, "*");
        const char *g = c < r->kaiser_k && c < r->broken_stick_k ? "Kaiser, stick"
                        : c < r->kaiser_k                        ? "Kaiser"
                        : c < r->broken_stick_k                  ? "stick"
                                                                 : "";
        table_cell(t, 6, g);
    }
    table_print(t, f, width, color);
    table_free(t);
    if (rows < p) fprintf(f, "... %zu more components (--format json lists all)\n", p - rows);
    fprintf(f, "(stick: the share the broken-stick rule expects; a guide keeps a component "
           "while it holds)\n");

    size_t *idx = malloc((nleading ? nleading : 1) * sizeof *idx);
    if (idx && nleading) {
        fprintf(f, "\nlargest loadings of the kept components:\n");
        for (size_t c = 0; c < k; c++) {
            size_t n = pca_leading(r, c, nleading, idx);
            fprintf(f, "  PC%-3zu", c + 1);
            for (size_t i = 0; i < n; i++)
                fprintf(f, " %+.3f %s%s", r->loadings[c * p + idx[i]], col_name(s, r, idx[i]),
                       i + 1 < n ? "," : "");
            fputc('\n', f);
        }
    }
    free(idx);

    fprintf(f, "\nloadings:\n");
    t = table_create(k + 1);
    if (!t) return;
    table_heading(t, 0, "column", 0);
    for (size_t c = 0; c < k; c++) {
        char h[32];
        snprintf(h, sizeof h, "PC%zu", c + 1);
        table_heading(t, c + 1, h, 1);
        table_drop_rank(t, c + 1, (int)c + 1); /* the last components go first */
    }
    table_keep_whole(t, 0);
    for (size_t j = 0; j < p; j++) {
        table_row(t);
        table_cell(t, 0, col_name(s, r, j));
        for (size_t c = 0; c < k; c++) table_cellf(t, c + 1, "%.4f", r->loadings[c * p + j]);
    }
    table_print(t, f, width, color);
    table_free(t);
}

int cmd_pca(int argc, char **argv)
{
    const char *color = NULL;
    const char *format = "text", *basis = NULL, *cols = NULL, *exclude = NULL, *keep = NULL;
    const char *k_s = NULL, *share_s = NULL, *numshare_s = NULL, *leading_s = NULL;
    int with_target = 0;
    const char *target = NULL;
    const cli_option opts[] = {
        CLI_TARGET_OPTION(target),
        {"format", 'f', "FMT", "text (default), csv (the loadings) or json", &format, NULL},
        {"basis", 0, "B", "correlation (default) or covariance", &basis, NULL},
        {"components", 'k', "N", "components to keep (default: the Kaiser rule's count)", &k_s, NULL},
        {"share", 0, "P", "keep the fewest components reaching this cumulative share",
         &share_s, NULL},
        {"columns", 0, CLI_NAME_LIST, "use these columns instead of the automatic choice", &cols, NULL},
        {"columns-from", 0, "FILE", "use the columns named in FILE, one per line (screen --write-kept)",
         &keep, NULL},
        {"exclude", 0, CLI_NAME_LIST, "leave these columns out", &exclude, NULL},
        {"with-target", 0, NULL, "keep the summary's target column in the automatic choice",
         NULL, &with_target},
        {"leading", 0, "N", "largest loadings listed per component (default 5)", &leading_s, NULL},
        CLI_NUMERIC_SHARE_OPTION(numshare_s),
        CLI_COLOR_OPTION(color),
        {0},
    };
    const cli_command cmd = {
        "pca", "FILE.sheaf [-k N | --share P] [--basis correlation|covariance] [options]",
        "Principal components of the pairwise-complete correlation matrix (or, with\n"
        "--basis covariance, the sample covariance matrix) of a summary's numeric\n"
        "columns, from the summary alone. By default the columns are those a screen\n"
        "would test: categorical, constant and ID-like columns and the target are left\n"
        "out and listed. Prints the eigenvalues, their shares, where the Kaiser and\n"
        "broken-stick rules would stop, and the loadings of the kept components.",
        opts,
        "  $ sheaf pca fleet.sheaf --share 0.9\n"
        "  $ sheaf pca fleet.sheaf -k 3 -f csv > loadings.csv\n"};
    char **pos;
    int rc = cli_parse_single(&cmd, argc, argv, &pos);
    if (rc >= 0) return rc;
    if (cli_set_color("pca", color) != 0) return EXIT_USAGE;
    rc = EXIT_USAGE;
    summary *s = NULL;
    pca_result *r = NULL;
    long long nleading = 5;
    size_t k = 0;
    if (cli_check_format("pca", format)) goto done;
    if (leading_s && (nleading = cli_parse_count(leading_s)) < 0) {
        cli_error("pca", "--leading must be a whole number, got '%s'", leading_s);
        goto done;
    }
    const cli_components cc = {basis,   k_s,  share_s,     numshare_s, cols,
                               exclude, keep, with_target, target};
    rc = cli_fit_components("pca", pos[0], &cc, &s, &r, &k);
    if (rc != EXIT_DONE) goto done;
    if (nleading > (long long)r->p) nleading = (long long)r->p; /* no fit has more */
    char rule[64];
    if (k_s) snprintf(rule, sizeof rule, "--components %s", k_s);
    else if (share_s) snprintf(rule, sizeof rule, "--share %s", share_s);
    else snprintf(rule, sizeof rule, "Kaiser rule");
    if (!strcmp(format, "csv")) {
        print_csv(s, r, k);
    } else if (!strcmp(format, "text")) {
        cli_text out;
        print_text(cli_text_begin(&out), s, r, k, rule, (size_t)nleading);
        cli_text_end(&out);
    } else if (print_json(s, r, k, k_s ? "k" : share_s ? "share" : "kaiser", (size_t)nleading)) {
        cli_error("pca", "out of memory");
        rc = EXIT_RESOURCE;
        goto done;
    }
    rc = EXIT_DONE; /* standard output is checked once, by main (cli_close_stdout) */
done:
    pca_result_free(r);
    summary_free(s);
    free(pos);
    return rc;
}
