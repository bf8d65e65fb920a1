/* sheaf screen: which columns to keep, and why, from a summary alone. */
#include <errno.h>
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cli.h"
#include "io/keep_list.h"
#include "io/message.h"
#include "out/json.h"
#include "out/table.h"
#include "stats/logp.h"
#include "stats/screen.h"
#include "summary/access.h"
#include "summary/tempfile.h"

static const char *const TASKS[] = {"none", "classify", "regress"};

/* Writes the kept column names, one per line in rank order, to the keep
 * list's file (src/summary/tempfile.h: whole or absent, links followed,
 * devices written through) and gives it its name.  Returns 0, or -1 with a
 * message naming the file and the reason; t is released in both cases. */
static int write_keep_list(tempfile *t, const summary *s, const screen_result *r, char *err,
                           size_t errlen)
{
    for (size_t k = 1; k <= r->kept; k++)
        for (size_t i = 0; i < r->nfeatures; i++) {
            if (r->features[i].rank != k) continue;
            const char *name = summary_name(s, r->features[i].col);
            size_t len = strlen(name);
            if (!keep_list_writable(name)) {
                message_printf(err, errlen,
                               "%s: the kept column '%.40s' cannot be named in a keep list (its "
                               "name holds a line end or ends in a blank): rename it", t->path,
                               name);
                tempfile_discard(t);
                return -1;
            }
            for (size_t part = 0; part < 3; part++) {
                if (part == 0 && !keep_list_escaped(name)) continue;
                const char *p = part == 0 ? "\\" : part == 2 ? "\n" : name;
                size_t left = part == 1 ? len : 1;
                while (left > 0) {
                    ssize_t w = write(t->fd, p, left);
                    if (w < 0 && errno == EINTR) continue;
                    if (w <= 0) {
                        int saved = w < 0 ? errno : EIO;
                        message_printf(err, errlen, "%s: cannot write: %s", t->path,
                                       strerror(saved));
                        tempfile_discard(t);
                        return -1;
                    }
                    p += w;
                    left -= (size_t)w;
                }
            }
        }
    return tempfile_commit(t, err, errlen);
}

/* A p- or q-value as text from its log10, in %g's form at every size:
 * "0.0123", "4.56e-23", and below the double range "4.56e-48213" (the
 * exponent from the logarithm); "0" for a p-value that is exactly 0
 * (infinite statistic), "-" when undefined. */
static void p_text(char *buf, size_t len, double log10_value, int digits)
{
    logp_format(buf, len, log10_value, digits);
}


static const char *const RULES[] = {"", "cochran_1954", "level_sizes"};

/* A test's validity rule and what it found (validity.h), inside its object. */
static void json_check(json_out *j, const validity_check *c)
{
    if (!c || c->rule == VALIDITY_NONE) return;
    json_key(j, "validity");
    json_object_begin(j);
    json_key(j, "rule"); json_string(j, RULES[c->rule]);
    json_key(j, "holds"); json_bool(j, c->holds);
    json_key(j, c->rule == VALIDITY_COCHRAN ? "expected_counts" : "levels"); json_uint(j, c->units);
    json_key(j, "below_5"); json_uint(j, c->small);
    json_key(j, c->rule == VALIDITY_COCHRAN ? "share_below_5" : "row_share_in_levels_below_5");
    json_number(j, c->small_share);
    json_key(j, c->rule == VALIDITY_COCHRAN ? "smallest_expected" : "smallest_level_rows");
    json_number(j, c->smallest);
    json_object_end(j);
}

static void json_test(json_out *j, const char *name, const screen_test *t, int one_df,
                      const char *extra, const validity_check *check)
{
    if (!t->present) return;
    json_key(j, name);
    json_object_begin(j);
    json_key(j, "stat"); json_number(j, t->stat);
    if (one_df) {
        json_key(j, "df"); json_number(j, t->df1);
    } else {
        json_key(j, "df1"); json_number(j, t->df1);
        json_key(j, "df2"); json_number(j, t->df2);
    }
    json_key(j, "p"); json_number(j, t->p);
    json_key(j, "log10_p"); json_number(j, t->log10_p);
    if (extra) { json_key(j, extra); json_number(j, t->extra); }
    json_check(j, check);
    json_object_end(j);
}

/* Name of member `second` (0: a, 1: b) of redundant pair i. */
static const char *pair_name(const summary *s, const screen_result *r, size_t i, int second)
{
    const screen_pair *p = &r->pairs[i];
    return summary_name(s, r->features[second ? p->b : p->a].col);
}

static void print_json(const summary *s, const screen_result *r)
{
    json_out j;
    json_init(&j, stdout);
    json_object_begin(&j);
    json_key(&j, "rows"); json_uint(&j, summary_rows(s));
    json_key(&j, "target");
    if (r->target < 0) {
        json_null(&j);
    } else {
        json_object_begin(&j);
        json_key(&j, "name"); json_string(&j, summary_name(s, (size_t)r->target));
        json_key(&j, "task"); json_string(&j, TASKS[r->task]);
        json_key(&j, "from_comoments"); json_bool(&j, r->from_comoments);
        if (!r->from_comoments) cli_json_class_levels(&j, s, r->task == TASK_CLASSIFY);
        json_object_end(&j);
    }
    json_key(&j, "kept"); json_uint(&j, r->kept);
    json_key(&j, "features");
    json_array_begin(&j);
    for (size_t i = 0; i < r->nfeatures; i++) {
        const screen_feature *f = &r->features[i];
        json_object_begin(&j);
        json_key(&j, "name"); json_string(&j, summary_name(s, f->col));
        json_key(&j, "kind"); json_string(&j, f->kind == KIND_NUMERIC ? "numeric" : "categorical");
        json_key(&j, "flags");
        json_array_begin(&j);
        for (int b = 0; b < SCREEN_NFLAGS; b++)
            if (f->flags & (1u << b)) json_string(&j, screen_flag_names[b]);
        json_array_end(&j);
        json_key(&j, "tests");
        json_object_begin(&j);
        json_test(&j, "anova_f", &f->anova_f, 0, NULL, &f->anova_check);
        json_test(&j, "welch_f", &f->welch_f, 0, NULL, NULL);
        json_test(&j, "corr_f", &f->corr_f, 0, "r", NULL);
        json_test(&j, "chi2", &f->chi2, 1, "cramers_v", &f->chi2_check);
        if (f->mi.present) {
            json_key(&j, "mutual_information");
            json_object_begin(&j);
            json_key(&j, "nats"); json_number(&j, f->mi.nats);
            json_key(&j, "nats_corrected"); json_number(&j, f->mi.nats_corrected);
            json_key(&j, "normalized"); json_number(&j, f->mi.normalized);
            json_key(&j, "feature_bins"); json_uint(&j, f->mi.bins_feature);
            json_key(&j, "target_bins"); json_uint(&j, f->mi.bins_target);
            json_key(&j, "expected_nats"); json_number(&j, f->mi.expected_nats);
            json_key(&j, "adjusted"); json_number(&j, f->mi.adjusted);
            json_key(&j, "expected_approximated_cells"); json_uint(&j, f->mi.approximated_cells);
            json_object_end(&j);
        }
        json_object_end(&j);
        json_key(&j, "q"); json_number(&j, f->q);
        json_key(&j, "log10_q"); json_number(&j, f->log10_q);
        json_key(&j, "test_holds"); json_bool(&j, !f->unreliable);
        json_key(&j, "decision"); json_string(&j, f->keep ? "keep" : "drop");
        json_key(&j, "reasons");
        json_array_begin(&j);
        const char *p = f->reasons;
        while (*p) {
            const char *e = strstr(p, "; ");
            size_t l = e ? (size_t)(e - p) : strlen(p);
            json_string_n(&j, p, l);
            p += l + (e ? 2 : 0);
        }
        json_array_end(&j);
        json_key(&j, "rank");
        if (f->rank) json_uint(&j, f->rank);
        else json_null(&j);
        json_object_end(&j);
    }
    json_array_end(&j);
    json_key(&j, "redundant_pairs");
    json_array_begin(&j);
    for (size_t i = 0; i < r->npairs; i++) {
        json_object_begin(&j);
        json_key(&j, "a"); json_string(&j, pair_name(s, r, i, 0));
        json_key(&j, "b"); json_string(&j, pair_name(s, r, i, 1));
        json_key(&j, "r"); json_number(&j, r->pairs[i].r);
        json_object_end(&j);
    }
    json_array_end(&j);
    json_object_end(&j);
    json_finish(&j);
}


static void print_csv(const summary *s, const screen_result *r)
{
    printf("column,kind,decision,rank,flags,test,stat,df1,df2,p,q,log10_p,log10_q,test_holds,r,"
           "mi_nats,mi_nats_corrected,mi_normalized,mi_expected_nats,mi_adjusted,reasons\n");
    for (size_t i = 0; i < r->nfeatures; i++) {
        const screen_feature *f = &r->features[i];
        table_csv_field(stdout, summary_name(s, f->col));
        printf(",%s,%s,", f->kind == KIND_NUMERIC ? "numeric" : "categorical", f->keep ? "keep" : "drop");
        if (f->rank) printf("%zu", f->rank);
        fputc(',', stdout);
        int first = 1;
        for (int b = 0; b < SCREEN_NFLAGS; b++)
            if (f->flags & (1u << b)) { printf("%s%s", first ? "" : ";", screen_flag_names[b]); first = 0; }
        const char *tn;
        const screen_test *t = screen_primary(f, &tn);
        if (t && t->present) {
            char pb[40] = "", qb[40] = "", lp[40] = "", lq[40] = ""; /* empty when undefined */
            if (!isnan(t->log10_p)) {
                p_text(pb, sizeof pb, t->log10_p, 3);
                snprintf(lp, sizeof lp, "%.10g", t->log10_p);
            }
            if (!isnan(f->log10_q)) {
                p_text(qb, sizeof qb, f->log10_q, 6);
                snprintf(lq, sizeof lq, "%.10g", f->log10_q);
            }
            printf(",%s,%.10g,%.10g,", tn, t->stat, t->df1);
            if (isfinite(t->df2)) printf("%.10g", t->df2);
            printf(",%s,%s,%s,%s", pb, qb, lp, lq);
        } else {
            printf(",,,,,,,,");
        }
        printf(",%s,", t && t->present ? (f->unreliable ? "no" : "yes") : "");
        if (f->corr_f.present) printf("%.6g", f->corr_f.extra);
        if (f->mi.present)
            printf(",%.6g,%.6g,%.6g,%.6g,%.6g,", f->mi.nats, f->mi.nats_corrected, f->mi.normalized,
                   f->mi.expected_nats, f->mi.adjusted);
        else printf(",,,,,,");
        table_csv_field(stdout, f->reasons);
        fputc('\n', stdout);
    }
}

static void print_text(FILE *out, const summary *s, const screen_result *r, const char *path,
                       const char *keep_list)
{
    const char *named = cli_path_name(path); /* "standard input" for "-" */
    int color = table_use_color(stdout);
    unsigned long long rows = summary_rows(s);
    if (r->from_comoments)
        fprintf(out, "%s: %llu rows; target %s (regression from the co-moments: F test of r only); kept "
               "%zu of %zu columns\n", named, rows, summary_name(s, (size_t)r->target), r->kept,
               r->nfeatures);
    else if (r->target >= 0)
        fprintf(out, "%s: %llu rows; target %s (%s); kept %zu of %zu columns\n", named, rows,
               summary_target_name(s), r->task == TASK_CLASSIFY ? "classification" : "regression",
               r->kept, r->nfeatures);
    else
        fprintf(out, "%s: %llu rows; no target (only flags and redundancy); kept %zu of %zu columns\n",
               named, rows, r->kept, r->nfeatures);
    /* r (signed) only for a numeric target; adj. MI is AMI (validity.h). */
    int with_r = r->task == TASK_REGRESS;
    const char *head[] = {"rank", "column", "kind", "decision", "test", "stat", "p", "q", "r", "adj. MI", "reasons"};
    size_t nh = sizeof head / sizeof *head, col_r = 8, col_mi = with_r ? 9 : 8, col_why = col_mi + 1;
    table *t = table_create(nh - !with_r);
    for (size_t i = 0, c = 0; i < nh; i++) {
        if (i == 8 && !with_r) continue;
        table_heading(t, c, head[i], i == 0 || (i >= 5 && i <= 9));
        /* At a narrow width, in this order: stat, test, kind, r, adj. MI,
         * q; rank, column, decision, p and the reasons (cut) stay. */
        const int rank[] = {0, 0, 4, 0, 5, 6, 0, 1, 2, 3, 0};
        table_drop_rank(t, c, rank[i]);
        if (i == 1 || i == 2) table_keep_whole(t, c);
        c++;
    }
    /* Kept by rank first, then dropped in column order. */
    for (int pass = 0; pass < 2; pass++)
        for (size_t want = 1, i = 0; pass == 0 ? want <= r->kept : i < r->nfeatures;) {
            const screen_feature *f = NULL;
            if (pass == 0) {
                for (size_t k = 0; k < r->nfeatures; k++)
                    if (r->features[k].rank == want) f = &r->features[k];
                want++;
            } else {
                f = &r->features[i++];
                if (f->keep) continue;
            }
            if (!f) continue;
            table_row(t);
            if (f->rank) table_cellf(t, 0, "%zu", f->rank);
            table_cell(t, 1, summary_name(s, f->col));
            table_cell(t, 2, f->kind == KIND_NUMERIC ? "numeric" : "categorical");
            table_cell(t, 3, f->keep ? (color ? "\033[32mkeep\033[0m" : "keep") : "drop");
            const char *tn;
            const screen_test *pt = screen_primary(f, &tn);
            if (pt && pt->present) {
                char b[40];
                table_cell(t, 4, tn);
                table_format_number(b, sizeof b, pt->stat, 4);
                table_cell(t, 5, b);
                p_text(b, sizeof b, pt->log10_p, 3);
                table_cell(t, 6, b);
                p_text(b, sizeof b, f->log10_q, 3);
                table_cell(t, 7, b);
            }
            if (with_r && f->corr_f.present) table_cellf(t, col_r, "%+.3f", f->corr_f.extra);
            if (f->mi.present && !isnan(f->mi.adjusted)) /* at chance, not "-0.000" */
                table_cellf(t, col_mi, "%.3f", fabs(f->mi.adjusted) < 5e-4 ? 0.0 : f->mi.adjusted);
            table_cell(t, col_why, f->reasons);
        }
    table_print(t, out, table_terminal_width(), color);
    table_free(t);
    if (r->npairs) {
        fprintf(out, "\nredundant pairs (|r| at or above the threshold):\n");
        for (size_t i = 0; i < r->npairs; i++)
            fprintf(out, "  %s ~ %s  r = %.4f\n", pair_name(s, r, i, 0), pair_name(s, r, i, 1),
                   r->pairs[i].r);
    }
    if (keep_list) /* written: what to do with it */
        fprintf(out, "\nnext: the kept names are in %s; keep only those columns with `sheaf trim "
                     "DATA --columns-from %s -o OUT` (add the target to the list to keep it)\n",
                keep_list, keep_list);
    else
        fprintf(out, "\nnext: write the kept names with --write-kept FILE, then keep only those "
                     "columns with `sheaf trim DATA --columns-from FILE -o OUT` (or `sheaf trim "
                     "DATA --summary %s -o OUT`, which screens again with the same options)\n",
                strcmp(path, "-") ? path : "SUMMARY.sheaf");
}


int cmd_screen(int argc, char **argv)
{
    const char *color = NULL;
    const char *format = "text", *q = NULL, *top = NULL, *bins = NULL, *rank_by = NULL;
    const char *keep_list = NULL, *missing = NULL, *minvar = NULL, *redund = NULL, *share = NULL;
    int keep_mirrors = 0;
    const char *target = NULL;
    const cli_option opts[] = {
        {"target", 't', "COL", "which target of a summary scanned with several; another numeric "
                               "column COL: the F test of r from the co-moments only", &target, NULL},
        {"format", 'f', "FMT", "text (default), csv or json", &format, NULL},
        {"fdr", 0, "LEVEL", "false discovery rate: a column whose q-value is below it is relevant "
                            "(default 0.05)", &q, NULL},
        {"max-kept", 0, "K", "keep at most K columns (the best ranked)", &top, NULL},
        {"rank-by", 0, "KEY", "q (default), mi (mutual information adjusted for chance) or stat", &rank_by, NULL},
        {"bins", 0, "K", "equal-frequency bins for mutual information (default 10)", &bins, NULL},
        {"redundancy", 0, "R", "|r| at which two kept columns are redundant (default 0.95)", &redund, NULL},
        {"missing-share", 0, "P", "share of missing cells that flags a column too_sparse (default 0.5)", &missing, NULL},
        {"min-variance", 0, "V", "flag numeric columns with a smaller variance little_information", &minvar, NULL},
        CLI_NUMERIC_SHARE_OPTION(share),
        {"write-kept", 0, "FILE", "also write the kept column names, one per line (for trim, pca and "
                                  "project --columns-from)", &keep_list, NULL},
        {"keep-mirrors", 0, NULL, "keep columns flagged mirrors_target (possible leaks) if relevant", NULL,
         &keep_mirrors},
        CLI_COLOR_OPTION(color),
        {0},
    };
    const cli_command cmd = {
        "screen", "SUMMARY.sheaf [options]",
        "Decides, from the summary alone, which columns to keep: flags columns with no\n"
        "or little information, columns that name rows, too sparse columns and columns\n"
        "with too many levels, tests the others against the target (ANOVA F, Welch's F,\n"
        "F test of Pearson r, chi-squared with Cochran's rule, mutual information adjusted\n"
        "for chance), controls the false discovery rate with Benjamini-Hochberg q-values,\n"
        "flags columns that mirror the target (possible leaks), prunes redundant pairs and\n"
        "ranks what is kept. The p-values assume independent rows; see the README's\n"
        "cautions. A summary scanned with several targets needs --target to choose one.",
        opts,
        "  $ sheaf screen fleet.sheaf --fdr 0.01 --write-kept kept.txt\n"
        "  $ sheaf screen fleet.sheaf -t motor_temp_c -f json > temp-screen.json\n"
        "  $ sheaf trim flights.csv.gz --columns-from kept.txt -o flights-kept.csv.gz\n"};
    char **pos;
    int rc = cli_parse_single(&cmd, argc, argv, &pos);
    if (rc >= 0) return rc;
    if (cli_set_color("screen", color) != 0) return EXIT_USAGE;
    screen_options o;
    screen_options_defaults(&o);
    summary *s = NULL;
    screen_result *r = NULL;
    tempfile kept;
    rc = EXIT_USAGE;
    if (cli_check_format("screen", format)) goto done;
    if (q && cli_parse_unit("screen", "--fdr", q, &o.q_level)) goto done;
    if (missing && cli_parse_unit("screen", "--missing-share", missing, &o.missing_share)) goto done;
    if (redund && cli_parse_unit("screen", "--redundancy", redund, &o.redundancy)) goto done;
    if (share && cli_parse_unit("screen", "--numeric-share", share, &o.numeric_share)) goto done;
    if (minvar) {
        char *end;
        o.min_variance = strtod(minvar, &end);
        if (*end || !(o.min_variance >= 0)) { cli_error("screen", "--min-variance must be >= 0"); goto done; }
    }
    if (top) {
        long long v = cli_parse_count(top);
        if (v < 1) { cli_error("screen", "--max-kept must be a positive count, got '%s'", top); goto done; }
        o.top = (size_t)v;
    }
    if (bins) {
        long long v = cli_parse_count(bins);
        if (v < 2 || v > 1000) { cli_error("screen", "--bins must be between 2 and 1000"); goto done; }
        o.bins = (unsigned)v;
    }
    if (rank_by) {
        if (!strcmp(rank_by, "q")) o.rank_by = RANK_Q;
        else if (!strcmp(rank_by, "mi")) o.rank_by = RANK_MI;
        else if (!strcmp(rank_by, "stat")) o.rank_by = RANK_STAT;
        else { cli_error("screen", "--rank-by must be q, mi or stat, got '%s'", rank_by); goto done; }
    }
    /* The keep list is an output file like scan's: never the summary it
     * comes from, prepared before anything is printed, written whole. */
    if (keep_list && !strcmp(keep_list, "-")) {
        cli_error("screen", "--write-kept needs a file name (standard output holds the report)");
        goto done;
    }
    if (keep_list && cli_check_output("screen", keep_list, (const char *const *)pos, 1)) goto done;
    summary_set *set;
    if ((rc = cli_read_set("screen", pos[0], &set)) != EXIT_DONE) goto done;
    /* One of the scanned targets: its summary, screened as scanned.  Any
     * other column (or any --target on a summary of one): the F test of r
     * from the co-moments, which every part holds alike. */
    long part = target && set->n > 1 ? summary_set_find(set, target) : -1;
    if (part >= 0) target = NULL;
    rc = cli_choose_target("screen", pos[0], set, part >= 0 ? summary_target_name(set->parts[part]) : NULL,
                           !target, &s);
    summary_set_free(set);
    if (rc != EXIT_DONE) goto done;
    o.keep_mirrors = keep_mirrors;
    char why[512];
    if (validity_task_fits(s, o.numeric_share, why, sizeof why) != 0) {
        cli_error("screen", "%s: %s", pos[0], why);
        rc = EXIT_USAGE;
        goto done;
    }
    if (target) {
        char problem[1024];
        if (screen_target_lookup(s, target, o.numeric_share, &o.target_col, problem,
                                 sizeof problem) != 0) {
            cli_error("screen", "%s: --target %s: %s", cli_path_name(pos[0]), target, problem);
            rc = EXIT_USAGE;
            goto done;
        }
    }
    r = screen_run(s, &o);
    if (!r) { cli_error("screen", "out of memory"); rc = EXIT_RESOURCE; goto done; }
    /* The kept list first: a report into a pipe closed early (`| head`)
     * ends the process, which must not leave last run's list in place. */
    if (keep_list) {
        char err[PATH_MAX + 128];
        if (tempfile_open(&kept, keep_list, 0, err, sizeof err) != 0) {
            rc = errno == ENOMEM ? EXIT_RESOURCE : EXIT_FAILED;
            cli_error("screen", "%s", err);
            goto done;
        }
        if (write_keep_list(&kept, s, r, err, sizeof err) != 0) {
            cli_error("screen", "%s", err);
            rc = EXIT_FAILED;
            goto done;
        }
    }
    if (!strcmp(format, "json")) print_json(s, r);
    else if (!strcmp(format, "csv")) print_csv(s, r);
    else {
        cli_text out;
        print_text(cli_text_begin(&out), s, r, pos[0], keep_list);
        cli_text_end(&out);
    }
    rc = EXIT_DONE; /* standard output is checked once, by main (cli_close_stdout) */
done:
    screen_free(r);
    summary_free(s);
    free(pos);
    return rc;
}
