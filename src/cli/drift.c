/* sheaf drift: what changed between two summaries (stats/drift.h), printed
 * as text, CSV or JSON (docs/drift.md); the exit status says whether any
 * threshold was crossed (EXIT_DRIFT). */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "out/json.h"
#include "out/table.h"
#include "stats/drift.h"
#include "summary/access.h"

typedef struct {
    const char *base_path, *next_path;
    const drift_result *r;
    const drift_options *o;
} drift_report;

static const char *kind_name(column_kind k) { return k == KIND_NUMERIC ? "numeric" : "categorical"; }

/* Both nights ranked the column by different tests (an F test left out on
 * one side, screen's reasons): their q-values are not of one test. */
static int q_tests_differ(const drift_column *c)
{
    return c->base.ranked && c->next.ranked && strcmp(c->base.q_test, c->next.q_test) != 0;
}

static const char *test_shown(const char *t)
{
    if (!strcmp(t, "anova_f")) return "ANOVA F";
    if (!strcmp(t, "corr_f")) return "the F test of r";
    if (!strcmp(t, "chi2")) return "chi-squared";
    return "no test";
}

/* The flag names joined by sep into buf. */
static const char *flag_list(unsigned flags, const char *sep, char *buf, size_t len)
{
    size_t used = 0;
    buf[0] = '\0';
    for (int b = 0; b < DRIFT_NFLAGS; b++) {
        if (!(flags & (1u << b))) continue;
        int k = snprintf(buf + used, len - used, "%s%s", used ? sep : "", drift_flag_names[b]);
        if (k < 0 || (size_t)k >= len - used) break;
        used += (size_t)k;
    }
    return buf;
}

static int found(const drift_result *r) { return r->drifting > 0 || r->npairs > 0; }

/* ---- text ------------------------------------------------------------------ */

static void share_pair(char *buf, size_t len, double a, double b)
{
    if (isnan(a) && isnan(b)) snprintf(buf, len, "-");
    else if (isnan(a)) snprintf(buf, len, "- > %.1f%%", 100 * b);
    else if (isnan(b)) snprintf(buf, len, "%.1f%% > -", 100 * a);
    else snprintf(buf, len, "%.1f%% > %.1f%%", 100 * a, 100 * b);
}

static void put_label(FILE *f, const drift_category *c)
{
    fprintf(f, "'%.*s%s' (%.1f%%)", (int)c->label_len, c->label, c->cut ? TABLE_CUT_MARK : "",
            100 * c->share);
}

static void print_categories(FILE *f, const drift_column *c)
{
    const struct { size_t n, listed; const drift_category *list; int known; const char *what; } s[2] = {
        {c->appeared, c->listed_appeared, c->appeared_list, c->appeared_known, "appeared"},
        {c->vanished, c->listed_vanished, c->vanished_list, c->vanished_known, "vanished"}};
    for (int k = 0; k < 2; k++) {
        if (!s[k].n) continue;
        fprintf(f, "  %s: %zu %s: ", c->name, s[k].n, s[k].what);
        for (size_t i = 0; i < s[k].listed; i++) {
            if (i) fputs(", ", f);
            put_label(f, &s[k].list[i]);
        }
        if (s[k].n > s[k].listed) fprintf(f, ", ... %zu more", s[k].n - s[k].listed);
        fputc('\n', f);
    }
}

static void print_text(FILE *f, const drift_report *d)
{
    const drift_result *r = d->r;
    const drift_options *o = d->o;
    int color = table_use_color(stdout);
    fprintf(f, "%s (%llu rows) -> %s (%llu rows): %zu of %zu columns drift",
            cli_path_name(d->base_path), (unsigned long long)r->base_rows,
            cli_path_name(d->next_path), (unsigned long long)r->next_rows, r->drifting,
            r->ncolumns);
    fprintf(f, ", %zu of %zu correlation pairs moved", r->npairs, r->pairs_compared);
    if (r->pairs_imprecise)
        fprintf(f, " (%zu more left out: r imprecise on a side, see corr)", r->pairs_imprecise);
    fputc('\n', f);
    if (r->drifting) {
        const char *head[] = {"column", "kind", "drift", "PSI", "KS", "shift sd", "missing",
                              "distinct", "TV"};
        const int right[] = {0, 0, 0, 1, 1, 1, 1, 1, 1};
        const int drop[] = {0, 2, 0, 0, 0, 1, 3, 4, 0};
        enum { NH = sizeof head / sizeof *head };
        table *t = table_create(NH);
        for (size_t i = 0; i < NH; i++) {
            table_heading(t, i, head[i], right[i]);
            table_drop_rank(t, i, drop[i]);
        }
        table_keep_whole(t, 0);
        for (size_t i = 0; i < r->ncolumns; i++) {
            const drift_column *c = &r->columns[i];
            if (!c->flags) continue;
            char b[160];
            table_row(t);
            table_cell(t, 0, c->name);
            if (c->base.col < 0) table_cell(t, 1, kind_name(c->next.kind));
            else if (c->next.col < 0 || c->base.kind == c->next.kind) table_cell(t, 1, kind_name(c->base.kind));
            else table_cellf(t, 1, "%s > %s", kind_name(c->base.kind), kind_name(c->next.kind));
            flag_list(c->flags, ", ", b, sizeof b);
            table_cell(t, 2, color ? "" : b);
            if (color) table_cellf(t, 2, "\033[31m%s\033[0m", b);
            if (!isnan(c->psi)) table_cellf(t, 3, "%.3f", c->psi);
            if (!isnan(c->ks)) {
                if (c->ks_bound - c->ks < 5e-4) table_cellf(t, 4, "%.3f", c->ks);
                else table_cellf(t, 4, "%.3f..%.3f", c->ks, c->ks_bound);
            }
            if (!isnan(c->mean_shift)) table_cellf(t, 5, "%+.2f", c->mean_shift);
            if (c->base.col >= 0 && c->next.col >= 0) {
                share_pair(b, sizeof b, c->base.missing_share, c->next.missing_share);
                table_cell(t, 6, b);
                table_cellf(t, 7, "%.0f > %.0f", c->base.distinct, c->next.distinct);
            }
            if (!isnan(c->tv)) table_cellf(t, 8, "%s%.3f", c->tv_exact ? "" : ">=", c->tv);
        }
        fputc('\n', f);
        table_print(t, f, table_terminal_width(), color);
        table_free(t);
        int listed = 0;
        for (size_t i = 0; i < r->ncolumns; i++)
            if (r->columns[i].flags && (r->columns[i].appeared || r->columns[i].vanished)) {
                if (!listed++) fputs("\ncategories:\n", f);
                print_categories(f, &r->columns[i]);
            }
        listed = 0;
        for (size_t i = 0; i < r->ncolumns; i++) {
            const drift_column *c = &r->columns[i];
            if (!(c->flags & (DRIFT_RELEVANCE | DRIFT_RANK))) continue;
            if (!listed++)
                fprintf(f, "\nrelevance to %s (relevant at q <= %g; rank among the kept columns, 0 "
                           "when not kept):\n", r->target, o->fdr);
            char qa[32], qb[32];
            table_format_number(qa, sizeof qa, c->base.q, 3);
            table_format_number(qb, sizeof qb, c->next.q, 3);
            fprintf(f, "  %s: q %s > %s", c->name, qa, qb);
            if (c->base.rank || c->next.rank) fprintf(f, ", rank %zu > %zu", c->base.rank, c->next.rank);
            if (q_tests_differ(c))
                fprintf(f, " (q from %s > %s: the tests differ)", test_shown(c->base.q_test),
                        test_shown(c->next.q_test));
            fputc('\n', f);
        }
    }
    /* Columns whose q came from different tests, each named once (those
     * listed above say it there). */
    int differ = 0;
    for (size_t i = 0; i < r->ncolumns; i++) {
        const drift_column *c = &r->columns[i];
        if (!q_tests_differ(c) || (c->flags & (DRIFT_RELEVANCE | DRIFT_RANK))) continue;
        fprintf(f, "%s%s (%s > %s)", differ++ ? ", " : "\nq from different tests (screen left an F test "
                "out on one side): ", c->name, test_shown(c->base.q_test),
                test_shown(c->next.q_test));
    }
    if (differ) fputc('\n', f);
    if (r->npairs) {
        fprintf(f, "\ncorrelation pairs whose r moved by %g or more:\n", o->max_r_change);
        for (size_t i = 0; i < r->npairs; i++)
            fprintf(f, "  %s ~ %s: r %+.3f > %+.3f\n", r->pairs[i].a, r->pairs[i].b,
                    r->pairs[i].r_base, r->pairs[i].r_next);
    }
    size_t quiet = r->ncolumns - r->drifting;
    fprintf(f, "\n%zu column%s quiet", quiet, quiet == 1 ? "" : "s");
    if (!r->relevance && r->relevance_note) fprintf(f, "; relevance not compared: %s", r->relevance_note);
    fprintf(f, ".\nthresholds: PSI %g, KS %g, mean shift %g sd, shares %g, TV %g, r %g",
            o->max_psi, o->max_ks, o->max_shift, o->max_share_change, o->max_tv, o->max_r_change);
    if (r->relevance) fprintf(f, ", fdr %g, rank %u", o->fdr, o->max_rank_change);
    fprintf(f, ".\nPSI reads, by common practice (no source): below %g no change, %g to %g "
               "moderate, above %g a major shift.\n",
            DRIFT_PSI_MODERATE, DRIFT_PSI_MODERATE, DRIFT_PSI_MAJOR, DRIFT_PSI_MAJOR);
}

/* ---- CSV --------------------------------------------------------------------- */

static void csv_number(double v)
{
    if (isfinite(v)) printf(",%.17g", v);
    else if (isinf(v)) printf(",%s", v > 0 ? "inf" : "-inf");
    else fputs(",", stdout);
}

static void print_csv(const drift_report *d)
{
    const drift_result *r = d->r;
    fputs("column,drifts,flags,base_kind,new_kind,psi,bins,ks,ks_bound,mean_shift,"
          "base_missing_share,new_missing_share,base_non_numeric_share,new_non_numeric_share,"
          "base_distinct,new_distinct,base_distinct_share,new_distinct_share,tv,tv_exact,"
          "chi2,chi2_df,chi2_p,appeared,vanished,base_q,new_q,base_rank,new_rank,base_q_test,"
          "new_q_test\n",
          stdout);
    /* Drifting columns first, each group in the result's order. */
    for (int pass = 0; pass < 2; pass++)
        for (size_t i = 0; i < r->ncolumns; i++) {
            const drift_column *c = &r->columns[i];
            if ((c->flags == 0) != pass) continue;
            char b[200];
            table_csv_field(stdout, c->name);
            printf(",%d,", c->flags != 0);
            table_csv_field(stdout, flag_list(c->flags, " ", b, sizeof b));
            printf(",%s,%s", c->base.col < 0 ? "" : kind_name(c->base.kind),
                   c->next.col < 0 ? "" : kind_name(c->next.kind));
            csv_number(c->psi);
            if (c->bins) printf(",%u", c->bins); else fputs(",", stdout);
            csv_number(c->ks);
            csv_number(c->ks_bound);
            csv_number(c->mean_shift);
            csv_number(c->base.missing_share);
            csv_number(c->next.missing_share);
            csv_number(c->base.non_numeric_share);
            csv_number(c->next.non_numeric_share);
            csv_number(c->base.distinct);
            csv_number(c->next.distinct);
            csv_number(c->base.distinct_share);
            csv_number(c->next.distinct_share);
            csv_number(c->tv);
            if (c->text) printf(",%d", c->tv_exact); else fputs(",", stdout);
            csv_number(c->chi2);
            csv_number(c->chi2_df);
            csv_number(c->chi2_p);
            if (c->text) printf(",%zu,%zu", c->appeared, c->vanished); else fputs(",,", stdout);
            csv_number(c->base.ranked ? c->base.q : NAN);
            csv_number(c->next.ranked ? c->next.q : NAN);
            /* A rank is among the kept columns: none for a dropped one. */
            if (c->base.ranked && c->base.rank) printf(",%zu", c->base.rank);
            else fputs(",", stdout);
            if (c->next.ranked && c->next.rank) printf(",%zu", c->next.rank);
            else fputs(",", stdout);
            printf(",%s,%s\n", c->base.ranked ? c->base.q_test : "",
                   c->next.ranked ? c->next.q_test : "");
        }
}

/* ---- JSON -------------------------------------------------------------------- */

static void json_side(json_out *j, const char *key, const drift_side *s, int relevance)
{
    json_key(j, key);
    if (s->col < 0) { json_null(j); return; }
    json_object_begin(j);
    json_key(j, "kind"); json_string(j, kind_name(s->kind));
    json_key(j, "missing_share"); json_number(j, s->missing_share);
    json_key(j, "non_numeric_share"); json_number(j, s->non_numeric_share);
    json_key(j, "distinct"); json_number(j, s->distinct);
    json_key(j, "distinct_exact"); json_bool(j, s->distinct_exact);
    json_key(j, "distinct_share"); json_number(j, s->distinct_share);
    json_key(j, "numbers"); json_uint(j, s->numbers);
    json_key(j, "mean"); json_number(j, s->mean);
    json_key(j, "sd"); json_number(j, s->sd);
    json_key(j, "table_overflowed"); json_bool(j, s->overflowed);
    if (relevance) {
        json_key(j, "q"); json_number(j, s->ranked ? s->q : NAN);
        json_key(j, "q_test");
        if (s->ranked && s->q_test[0]) json_string(j, s->q_test); else json_null(j);
        json_key(j, "rank"); if (s->ranked && s->rank) json_uint(j, s->rank); else json_null(j);
    }
    json_object_end(j);
}

static void json_categories(json_out *j, const char *key, size_t n, const drift_category *l,
                            size_t listed, int known)
{
    json_key(j, key);
    json_object_begin(j);
    json_key(j, "known"); json_bool(j, known);
    json_key(j, "count"); json_uint(j, n);
    json_key(j, "listed");
    json_array_begin(j);
    for (size_t i = 0; i < listed; i++) {
        json_object_begin(j);
        json_key(j, "value"); json_string_n(j, l[i].label, l[i].label_len);
        json_key(j, "cut"); json_bool(j, l[i].cut);
        json_key(j, "count"); json_uint(j, l[i].count);
        json_key(j, "share"); json_number(j, l[i].share);
        json_object_end(j);
    }
    json_array_end(j);
    json_object_end(j);
}

static void json_column(json_out *j, const drift_column *c, int relevance)
{
    json_object_begin(j);
    json_key(j, "name"); json_string(j, c->name);
    json_key(j, "drifts"); json_bool(j, c->flags != 0);
    json_key(j, "flags");
    json_array_begin(j);
    for (int k = 0; k < DRIFT_NFLAGS; k++)
        if (c->flags & (1u << k)) json_string(j, drift_flag_names[k]);
    json_array_end(j);
    json_side(j, "base", &c->base, relevance);
    json_side(j, "new", &c->next, relevance);
    json_key(j, "numeric");
    if (!c->bins && isnan(c->mean_shift)) json_null(j);
    else {
        json_object_begin(j);
        json_key(j, "mean_shift"); json_number(j, c->mean_shift);
        json_key(j, "psi"); json_number(j, c->psi);
        json_key(j, "ks"); json_number(j, c->ks);
        json_key(j, "ks_bound"); json_number(j, c->ks_bound);
        json_key(j, "ks_exact"); json_bool(j, c->ks_exact);
        json_key(j, "bucket_level"); if (c->bins) json_int(j, c->level); else json_null(j);
        cli_json_numbers(j, "edges", c->edges, c->bins ? c->bins - 1 : 0);
        json_key(j, "base_counts");
        json_array_begin(j);
        for (unsigned k = 0; k < c->bins; k++) json_uint(j, c->base_counts[k]);
        json_array_end(j);
        json_key(j, "new_counts");
        json_array_begin(j);
        for (unsigned k = 0; k < c->bins; k++) json_uint(j, c->next_counts[k]);
        json_array_end(j);
        json_object_end(j);
    }
    json_key(j, "text");
    if (!c->text) json_null(j);
    else {
        json_object_begin(j);
        json_key(j, "tv"); json_number(j, c->tv);
        json_key(j, "tv_exact"); json_bool(j, c->tv_exact);
        json_key(j, "chi2"); json_number(j, c->chi2);
        json_key(j, "chi2_df"); json_number(j, c->chi2_df);
        json_key(j, "chi2_p"); json_number(j, c->chi2_p);
        json_key(j, "chi2_log10_p"); json_number(j, c->chi2_log10_p);
        json_categories(j, "appeared", c->appeared, c->appeared_list, c->listed_appeared,
                        c->appeared_known);
        json_categories(j, "vanished", c->vanished, c->vanished_list, c->listed_vanished,
                        c->vanished_known);
        json_object_end(j);
    }
    json_object_end(j);
}

static void print_json(const drift_report *d)
{
    const drift_result *r = d->r;
    const drift_options *o = d->o;
    json_out j;
    json_init(&j, stdout);
    json_object_begin(&j);
    json_key(&j, "base"); json_object_begin(&j);
    json_key(&j, "path"); json_string(&j, d->base_path);
    json_key(&j, "rows"); json_uint(&j, r->base_rows);
    json_object_end(&j);
    json_key(&j, "new"); json_object_begin(&j);
    json_key(&j, "path"); json_string(&j, d->next_path);
    json_key(&j, "rows"); json_uint(&j, r->next_rows);
    json_object_end(&j);
    json_key(&j, "thresholds"); json_object_begin(&j);
    json_key(&j, "psi"); json_number(&j, o->max_psi);
    json_key(&j, "ks"); json_number(&j, o->max_ks);
    json_key(&j, "mean_shift_sd"); json_number(&j, o->max_shift);
    json_key(&j, "share_change"); json_number(&j, o->max_share_change);
    json_key(&j, "tv"); json_number(&j, o->max_tv);
    json_key(&j, "r_change"); json_number(&j, o->max_r_change);
    json_key(&j, "fdr"); json_number(&j, o->fdr);
    json_key(&j, "rank_change"); json_uint(&j, o->max_rank_change);
    json_key(&j, "numeric_share"); json_number(&j, o->numeric_share);
    json_object_end(&j);
    json_key(&j, "drift_found"); json_bool(&j, found(r));
    json_key(&j, "columns_drifting"); json_uint(&j, r->drifting);
    json_key(&j, "columns_quiet"); json_uint(&j, r->ncolumns - r->drifting);
    json_key(&j, "relevance"); json_object_begin(&j);
    json_key(&j, "compared"); json_bool(&j, r->relevance);
    json_key(&j, "target"); if (r->target) json_string(&j, r->target); else json_null(&j);
    json_key(&j, "note"); if (r->relevance_note) json_string(&j, r->relevance_note); else json_null(&j);
    json_object_end(&j);
    json_key(&j, "columns");
    json_array_begin(&j);
    for (int pass = 0; pass < 2; pass++)
        for (size_t i = 0; i < r->ncolumns; i++)
            if ((r->columns[i].flags == 0) == pass) json_column(&j, &r->columns[i], r->relevance);
    json_array_end(&j);
    json_key(&j, "pairs"); json_object_begin(&j);
    json_key(&j, "compared"); json_uint(&j, r->pairs_compared);
    json_key(&j, "imprecise"); json_uint(&j, r->pairs_imprecise);
    json_key(&j, "moved");
    json_array_begin(&j);
    for (size_t i = 0; i < r->npairs; i++) {
        json_object_begin(&j);
        json_key(&j, "a"); json_string(&j, r->pairs[i].a);
        json_key(&j, "b"); json_string(&j, r->pairs[i].b);
        json_key(&j, "base_r"); json_number(&j, r->pairs[i].r_base);
        json_key(&j, "new_r"); json_number(&j, r->pairs[i].r_next);
        json_object_end(&j);
    }
    json_array_end(&j);
    json_object_end(&j);
    json_object_end(&j);
    json_finish(&j);
}

/* ---- options ------------------------------------------------------------------ */

/* A threshold: a number above 0 (at most 1 for a share).  0 or EXIT_USAGE. */
static int threshold(const char *opt, const char *text, int share, double *out)
{
    if (!text) return 0;
    char *end;
    double v = strtod(text, &end);
    if (end == text || *end || !(v > 0) || !isfinite(v) || (share && v > 1)) {
        cli_error("drift", "--%s must be a number %s, got '%s'", opt,
                  share ? "in (0, 1]" : "above 0", text);
        return EXIT_USAGE;
    }
    *out = v;
    return 0;
}

int cmd_drift(int argc, char **argv)
{
    const char *color = NULL, *format = "text", *share_s = NULL, *target = NULL;
    const char *psi = NULL, *ks = NULL, *shift = NULL, *share_change = NULL, *tv = NULL;
    const char *r_change = NULL, *fdr = NULL, *rank_change = NULL;
    const cli_option opts[] = {
        {"format", 'f', "FMT", "text (default), csv or json", &format, NULL},
        {"max-psi", 0, "X", "population stability index at which a numeric column drifts "
         "(default 0.25)", &psi, NULL},
        {"max-ks", 0, "D", "Kolmogorov-Smirnov distance at which a numeric column drifts "
         "(default 0.1)", &ks, NULL},
        {"max-shift", 0, "SD", "shift of the mean, in baseline standard deviations, at which a "
         "numeric column drifts (default 0.5)", &shift, NULL},
        {"max-share-change", 0, "P", "change of the missing, non-numeric or distinct share, or "
         "share of a category that appeared or vanished, at which a column drifts "
         "(default 0.05)", &share_change, NULL},
        {"max-tv", 0, "P", "total-variation distance at which a text column drifts "
         "(default 0.1)", &tv, NULL},
        {"max-r-change", 0, "D", "change of Pearson r at which a pair of columns moved "
         "(default 0.2)", &r_change, NULL},
        {"fdr", 0, "LEVEL", "false discovery rate: a column relevant in one night (q at most "
         "LEVEL/10) and not in the other (q above LEVEL) drifts (default 0.05; with the same "
         "target in both)", &fdr, NULL},
        {"max-rank-change", 0, "K", "places a kept column may move in the relevance ranking "
         "(default 3; 0: not checked)", &rank_change, NULL},
        CLI_TARGET_OPTION(target),
        CLI_NUMERIC_SHARE_OPTION(share_s),
        CLI_COLOR_OPTION(color),
        {0},
    };
    const cli_command cmd = {
        "drift", "BASE.sheaf NEW.sheaf [--format text|csv|json] [--max-psi X] ...",
        "Compares a new summary with a baseline (last night's), per column and from the\n"
        "summaries alone: population stability index over the baseline's decile bins,\n"
        "Kolmogorov-Smirnov distance with its bucket bound, shift of the mean, missing,\n"
        "non-numeric and distinct shares; categories that appeared or vanished with the\n"
        "chi-squared test and total-variation distance; correlation pairs that moved;\n"
        "relevance to a shared target; columns that appeared, vanished or changed kind.\n"
        "Both must be scanned with the same bucket budget, value-table size and missing\n"
        "spellings (exit 5 otherwise). Exit 0 when quiet, 7 when a threshold was crossed.",
        opts,
        "  $ sheaf drift monday.sheaf tuesday.sheaf\n"
        "  $ sheaf drift monday.sheaf tuesday.sheaf --max-psi 0.1 -f json > drift.json\n"};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc == 1) { free(pos); return EXIT_DONE; }
    if (rc) { free(pos); return rc; }
    summary *base = NULL, *next = NULL;
    drift_result *r = NULL;
    rc = EXIT_USAGE;
    if (npos != 2) { cli_error("drift", "expected two summary files, BASE.sheaf NEW.sheaf"); goto done; }
    if (cli_set_color("drift", color) || cli_check_format("drift", format)) goto done;
    drift_options o;
    drift_options_defaults(&o);
    if (cli_numeric_share("drift", share_s, &o.numeric_share)) goto done;
    if (threshold("max-psi", psi, 0, &o.max_psi) || threshold("max-ks", ks, 1, &o.max_ks) ||
        threshold("max-shift", shift, 0, &o.max_shift) ||
        threshold("max-share-change", share_change, 1, &o.max_share_change) ||
        threshold("max-tv", tv, 1, &o.max_tv) || threshold("max-r-change", r_change, 0, &o.max_r_change) ||
        threshold("fdr", fdr, 1, &o.fdr))
        goto done;
    if (rank_change) {
        long long k = cli_parse_count(rank_change);
        if (k < 0 || k > 1000000) {
            cli_error("drift", "--max-rank-change must be a count, got '%s'", rank_change);
            goto done;
        }
        o.max_rank_change = (unsigned)k;
    }
    if (cli_check_stdin("drift", (const char *const *)pos, 2)) goto done;
    if ((rc = cli_read_target("drift", pos[0], target, 0, &base)) != EXIT_DONE) goto done;
    if ((rc = cli_read_target("drift", pos[1], target, 0, &next)) != EXIT_DONE) goto done;
    char err[1024];
    drift_status st = drift_run(base, next, &o, &r, err, sizeof err);
    if (st == DRIFT_ERR_INCOMPATIBLE) {
        cli_error("drift", "%s and %s were scanned differently: %s (rescan one with the other's "
                  "options)", cli_path_name(pos[0]), cli_path_name(pos[1]), err);
        rc = EXIT_INCOMPATIBLE;
        goto done;
    }
    if (st != DRIFT_OK) { cli_error("drift", "%s", err); rc = EXIT_RESOURCE; goto done; }
    drift_report d = {pos[0], pos[1], r, &o};
    if (!strcmp(format, "csv")) print_csv(&d);
    else if (!strcmp(format, "json")) print_json(&d);
    else {
        cli_text out;
        print_text(cli_text_begin(&out), &d);
        cli_text_end(&out);
    }
    rc = found(r) ? EXIT_DRIFT : EXIT_DONE;
done:
    drift_free(r);
    summary_free(base);
    summary_free(next);
    free(pos);
    return rc;
}
