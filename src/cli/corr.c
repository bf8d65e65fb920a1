/* sheaf corr: the pairwise-complete correlation (or covariance) matrix. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "out/json.h"
#include "out/table.h"
#include "summary/summary.h"


int cmd_corr(int argc, char **argv)
{
    const char *format = "text", *share_s = NULL, *cols_s = NULL;
    int covariance = 0;
    const cli_option opts[] = {
        {"format", 'f', "FMT", "text (default), csv or json", &format, NULL},
        {"covariance", 0, NULL, "print the sample covariance instead of Pearson r", NULL, &covariance},
        {"columns", 0, "A,B,..", "only these columns", &cols_s, NULL},
        {"numeric-share", 0, "P", "share of parsing cells that makes a column numeric (default 0.99)",
         &share_s, NULL},
        {0},
    };
    const cli_command cmd = {
        "corr", "FILE.sheaf [--format text|csv|json] [--covariance]",
        "Prints the pairwise-complete Pearson correlation matrix of the numeric columns\n"
        "(each pair over the rows where both are present), from the summary alone.",
        opts};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc) { free(pos); return rc == 1 ? EXIT_DONE : rc; }
    rc = EXIT_USAGE;
    double share = 0.99;
    summary *s = NULL;
    size_t *pick = NULL, np = 0;
    if (npos != 1) { cli_error("corr", "expected one summary file"); goto done; }
    if (strcmp(format, "text") && strcmp(format, "csv") && strcmp(format, "json")) {
        cli_error("corr", "--format must be text, csv or json, got '%s'", format);
        goto done;
    }
    if (share_s && cli_parse_unit("corr", "--numeric-share", share_s, &share)) goto done;
    char err[512];
    summary_status st = summary_read(pos[0], &s, err, sizeof err);
    if (st != SUMMARY_OK) { cli_error("corr", "%s", err); rc = cli_summary_exit(st); goto done; }
    pick = malloc((s->ncomo + 1) * sizeof *pick);
    if (!pick) { cli_error("corr", "out of memory"); rc = EXIT_RESOURCE; goto done; }
    for (size_t k = 0; k < s->ncomo; k++) {
        const summary_column *c = &s->cols[s->como_col[k]];
        if (summary_column_kind(c, share) != KIND_NUMERIC || c->mom.n == 0) continue;
        if (cols_s) {
            size_t len = strlen(c->name);
            const char *p = cols_s;
            int found = 0;
            while (*p && !found) {
                const char *e = strchr(p, ',');
                size_t l = e ? (size_t)(e - p) : strlen(p);
                found = l == len && strncmp(p, c->name, l) == 0;
                p += l + (e != NULL);
            }
            if (!found) continue;
        }
        pick[np++] = k;
    }
    if (cols_s) {
        /* Every requested name must be a numeric column. */
        char *copy = strdup(cols_s);
        for (char *t = strtok(copy, ","); t; t = strtok(NULL, ",")) {
            size_t k = 0;
            while (k < np && strcmp(s->cols[s->como_col[pick[k]]].name, t) != 0) k++;
            if (k == np) {
                cli_error("corr", "--columns: '%s' is not a numeric column of %s", t, pos[0]);
                free(copy);
                goto done;
            }
        }
        free(copy);
    }
    const comoment *cm = s->como;
#define VAL(a, b) (covariance ? comoment_covariance(cm, pick[a], pick[b]) \
                              : comoment_correlation(cm, pick[a], pick[b]))
    if (!strcmp(format, "csv")) {
        for (size_t a = 0; a < np; a++) {
            fputc(',', stdout);
            table_csv_field(stdout, s->cols[s->como_col[pick[a]]].name);
        }
        fputc('\n', stdout);
        for (size_t a = 0; a < np; a++) {
            table_csv_field(stdout, s->cols[s->como_col[pick[a]]].name);
            for (size_t b = 0; b < np; b++) {
                double v = VAL(a, b);
                if (isfinite(v)) printf(",%.17g", v);
                else fputs(",", stdout);
            }
            fputc('\n', stdout);
        }
    } else if (!strcmp(format, "json")) {
        json_out j;
        json_init(&j, stdout);
        json_object_begin(&j);
        json_key(&j, "statistic"); json_string(&j, covariance ? "covariance" : "correlation");
        json_key(&j, "rows"); json_uint(&j, s->rows);
        json_key(&j, "columns");
        json_array_begin(&j);
        for (size_t a = 0; a < np; a++) json_string(&j, s->cols[s->como_col[pick[a]]].name);
        json_array_end(&j);
        json_key(&j, "matrix");
        json_array_begin(&j);
        for (size_t a = 0; a < np; a++) {
            json_array_begin(&j);
            for (size_t b = 0; b < np; b++) json_number(&j, VAL(a, b));
            json_array_end(&j);
        }
        json_array_end(&j);
        json_key(&j, "pairs_n");
        json_array_begin(&j);
        for (size_t a = 0; a < np; a++) {
            json_array_begin(&j);
            for (size_t b = 0; b < np; b++) json_uint(&j, (uint64_t)comoment_n(cm, pick[a], pick[b]));
            json_array_end(&j);
        }
        json_array_end(&j);
        json_object_end(&j);
        json_finish(&j);
    } else {
        /* Panels of as many columns as fit the terminal (80 when not a terminal). */
        size_t width = table_terminal_width();
        if (!width) width = 100;
        size_t namew = 4;
        for (size_t a = 0; a < np; a++) {
            size_t l = strlen(s->cols[s->como_col[pick[a]]].name);
            if (l > namew) namew = l;
        }
        if (namew > 28) namew = 28;
        size_t cellw = covariance ? 11 : 7;
        size_t per = width > namew + 5 ? (width - namew - 5) / (cellw + 1) : 1;
        if (per < 1) per = 1;
        printf("%s (pairwise complete), %zu numeric columns, %llu rows\n",
               covariance ? "sample covariance" : "Pearson r", np, (unsigned long long)s->rows);
        for (size_t from = 0; from < np; from += per) {
            size_t to = from + per < np ? from + per : np;
            printf("\n%*s", (int)(namew + 4), "");
            for (size_t b = from; b < to; b++) printf(" %*zu", (int)cellw, b + 1);
            fputc('\n', stdout);
            for (size_t a = 0; a < np; a++) {
                printf("%3zu %-*.*s", a + 1, (int)namew, (int)namew, s->cols[s->como_col[pick[a]]].name);
                for (size_t b = from; b < to; b++) {
                    double v = VAL(a, b);
                    if (!isfinite(v)) printf(" %*s", (int)cellw, "-");
                    else if (covariance) printf(" %*.4g", (int)cellw, v);
                    else printf(" %*.3f", (int)cellw, v);
                }
                fputc('\n', stdout);
            }
        }
    }
#undef VAL
    rc = fflush(stdout) == 0 ? EXIT_DONE : EXIT_FAILED;
done:
    free(pick);
    summary_free(s);
    free(pos);
    return rc;
}
