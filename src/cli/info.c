/* sheaf info: describe a summary. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "out/json.h"
#include "out/table.h"
#include "summary/summary.h"

static const double PROBS[] = {0.01, 0.05, 0.25, 0.5, 0.75, 0.95, 0.99};
#define NPROBS (sizeof PROBS / sizeof *PROBS)

static void human_bytes(char *buf, size_t len, double b)
{
    const char *unit[] = {"B", "kB", "MB", "GB", "TB"};
    int u = 0;
    while (b >= 1000 && u < 4) { b /= 1000; u++; }
    snprintf(buf, len, u ? "%.1f %s" : "%.0f %s", b, unit[u]);
}

static void print_json(const summary *s, double share, size_t ntop)
{
    json_out j;
    json_init(&j, stdout);
    json_object_begin(&j);
    json_key(&j, "format_version"); json_uint(&j, SUMMARY_FORMAT_VERSION);
    json_key(&j, "rows"); json_uint(&j, s->rows);
    json_key(&j, "bytes"); json_uint(&j, s->bytes);
    json_key(&j, "short_rows"); json_uint(&j, s->short_rows);
    json_key(&j, "long_rows"); json_uint(&j, s->long_rows);
    json_key(&j, "ragged_lines");
    json_array_begin(&j);
    for (uint32_t i = 0; i < s->n_bad_lines; i++) json_uint(&j, s->bad_lines[i]);
    json_array_end(&j);
    json_key(&j, "target");
    if (s->target < 0) {
        json_null(&j);
    } else {
        static const char *tasks[] = {"none", "classify", "regress"};
        json_object_begin(&j);
        json_key(&j, "name"); json_string(&j, s->opt.target);
        json_key(&j, "task"); json_string(&j, tasks[summary_target_task(s, share)]);
        json_key(&j, "declared_task"); json_string(&j, s->opt.task ? tasks[s->opt.task] : "auto");
        json_key(&j, "classes_dropped"); json_bool(&j, s->classes_dropped);
        json_key(&j, "max_classes"); json_uint(&j, s->opt.max_classes);
        json_key(&j, "levels");
        json_array_begin(&j);
        for (uint32_t c = 0; c < s->nclasses; c++) {
            json_object_begin(&j);
            json_key(&j, "value"); json_string(&j, s->class_label[c]);
            json_key(&j, "rows"); json_uint(&j, s->class_rows[c]);
            json_object_end(&j);
        }
        json_array_end(&j);
        json_object_end(&j);
    }
    json_key(&j, "sources");
    json_array_begin(&j);
    for (size_t i = 0; i < s->nsources; i++) {
        const summary_source *src = &s->sources[i];
        char fp[20];
        snprintf(fp, sizeof fp, "%016llx", (unsigned long long)src->fingerprint);
        json_object_begin(&j);
        json_key(&j, "path"); json_string(&j, src->path);
        json_key(&j, "format"); json_string(&j, src->format);
        json_key(&j, "size_bytes"); json_uint(&j, src->size_bytes);
        json_key(&j, "mtime"); json_int(&j, src->mtime);
        json_key(&j, "fingerprint"); json_string(&j, fp);
        json_key(&j, "raw_bytes"); json_uint(&j, src->raw_bytes);
        if (src->end_byte) {
            json_key(&j, "start_byte"); json_uint(&j, src->start_byte);
            json_key(&j, "end_byte"); json_uint(&j, src->end_byte);
        }
        json_key(&j, "rows"); json_uint(&j, src->rows);
        json_object_end(&j);
    }
    json_array_end(&j);
    json_key(&j, "columns");
    json_array_begin(&j);
    values_entry *top = calloc(ntop ? ntop : 1, sizeof *top);
    for (size_t i = 0; i < s->ncols; i++) {
        const summary_column *c = &s->cols[i];
        column_kind kind = summary_column_kind(c, share);
        int num = kind == KIND_NUMERIC;
        const moments *m = &c->mom;
        double var = moments_variance(m);
        json_object_begin(&j);
        json_key(&j, "name"); json_string(&j, c->name);
        json_key(&j, "kind"); json_string(&j, num ? "numeric" : "categorical");
        json_key(&j, "n"); json_uint(&j, m->n);
        json_key(&j, "missing"); json_uint(&j, c->missing);
        json_key(&j, "non_numeric"); json_uint(&j, c->non_numeric);
        json_key(&j, "non_finite"); json_uint(&j, c->non_finite);
        json_key(&j, "zeros"); json_uint(&j, c->zeros);
        json_key(&j, "integers"); json_uint(&j, c->integers);
        json_key(&j, "mean"); json_number(&j, m->n ? moments_mean(m) : NAN);
        json_key(&j, "variance"); json_number(&j, var);
        json_key(&j, "sd"); json_number(&j, sqrt(var));
        json_key(&j, "min"); json_number(&j, m->n ? m->min : NAN);
        json_key(&j, "max"); json_number(&j, m->n ? m->max : NAN);
        json_key(&j, "skewness"); json_number(&j, moments_skewness(m));
        json_key(&j, "kurtosis"); json_number(&j, moments_kurtosis(m));
        int exact;
        double distinct = summary_column_distinct(c, &exact);
        json_key(&j, "distinct"); json_number(&j, exact ? distinct : round(distinct));
        json_key(&j, "distinct_exact"); json_bool(&j, exact);
        json_key(&j, "high_cardinality"); json_bool(&j, values_overflowed(c->vals));
        /* Once a value table overflowed (here or in a merged shard), counts of
         * values that entered it late are lower bounds. */
        json_key(&j, "top_exact"); json_bool(&j, !values_overflowed(c->vals));
        json_key(&j, "top");
        json_array_begin(&j);
        size_t nt = values_top(c->vals, ntop, top);
        for (size_t t = 0; t < nt; t++) {
            json_object_begin(&j);
            json_key(&j, "value"); json_string_n(&j, top[t].label, top[t].label_len);
            json_key(&j, "count"); json_uint(&j, top[t].count);
            json_object_end(&j);
        }
        json_array_end(&j);
        json_key(&j, "non_numeric_examples");
        json_array_begin(&j);
        for (uint32_t e = 0; e < c->n_examples; e++) json_string(&j, c->examples[e]);
        json_array_end(&j);
        double rel = NAN;
        json_key(&j, "quantiles");
        json_object_begin(&j);
        for (size_t q = 0; q < NPROBS; q++) {
            char key[16];
            snprintf(key, sizeof key, "%g", PROBS[q]);
            json_key(&j, key);
            double v = buckets_total(c->bins) ? buckets_quantile(c->bins, PROBS[q], &rel) : NAN;
            /* The bucket point may lie beyond the observed extremes: clamping
             * can only bring it closer to the true quantile. */
            if (m->n && v < m->min) v = m->min;
            if (m->n && v > m->max) v = m->max;
            json_number(&j, v);
        }
        json_object_end(&j);
        if (c->cls && num) {
            const number_decimal *ref = c->mom.has_ref ? &c->mom.ref : NULL;
            json_key(&j, "by_class");
            json_array_begin(&j);
            for (uint32_t k = 0; k < s->nclasses; k++) {
                const class_moments *cm = &c->cls[k];
                json_object_begin(&j);
                json_key(&j, "class"); json_string(&j, s->class_label[k]);
                json_key(&j, "n"); json_uint(&j, cm->n);
                json_key(&j, "mean"); json_number(&j, cm->n ? (ref ? ref->value : 0) + cm->mean : NAN);
                json_key(&j, "variance"); json_number(&j, cm->n > 1 ? cm->m2 / (double)(cm->n - 1) : NAN);
                json_object_end(&j);
            }
            json_array_end(&j);
        }
        json_key(&j, "quantile_relative_error");
        json_number(&j, buckets_total(c->bins) ? buckets_relative_error(buckets_level(c->bins)) : NAN);
        json_object_end(&j);
    }
    free(top);
    json_array_end(&j);
    json_object_end(&j);
    json_finish(&j);
}

static void print_text(const summary *s, const char *path, double share, size_t ntop)
{
    char a[64], b[64];
    human_bytes(a, sizeof a, (double)s->bytes);
    printf("%s: %llu rows, %zu columns, %s of text from %zu source%s\n", path,
           (unsigned long long)s->rows, s->ncols, a, s->nsources, s->nsources == 1 ? "" : "s");
    if (s->short_rows || s->long_rows) {
        printf("ragged rows: %llu short, %llu long (first at line", (unsigned long long)s->short_rows,
               (unsigned long long)s->long_rows);
        for (uint32_t i = 0; i < s->n_bad_lines; i++)
            printf("%s %llu", i ? "," : "", (unsigned long long)s->bad_lines[i]);
        printf(")\n");
    }
    if (s->target >= 0) {
        static const char *tasks[] = {"none", "classification", "regression"};
        target_task task = summary_target_task(s, share);
        printf("target: %s (%s%s)", s->opt.target, tasks[task],
               s->opt.task ? ", declared" : "");
        if (s->classes_dropped)
            printf("; more than %u distinct values, so class statistics were dropped",
                   s->opt.max_classes);
        else if (s->nclasses) {
            uint64_t total = 0;
            for (uint32_t c = 0; c < s->nclasses; c++) total += s->class_rows[c];
            printf(", %u levels:", s->nclasses);
            for (uint32_t c = 0; c < s->nclasses && c < 8; c++)
                printf("%s %s (%.1f%%)", c ? "," : "", s->class_label[c],
                       total ? 100.0 * s->class_rows[c] / total : 0);
            if (s->nclasses > 8) printf(", ...");
        }
        printf("\n");
    }
    size_t width = table_terminal_width();
    int color = table_use_color(stdout);
    table *t = table_create(5);
    const char *sh[] = {"source", "format", "size", "rows", "fingerprint"};
    for (int i = 0; i < 5; i++) table_heading(t, (size_t)i, sh[i], i == 2 || i == 3);
    for (size_t i = 0; i < s->nsources; i++) {
        const summary_source *src = &s->sources[i];
        table_row(t);
        if (src->end_byte)
            table_cellf(t, 0, "%s [%llu,%llu)", src->path, (unsigned long long)src->start_byte,
                        (unsigned long long)src->end_byte);
        else
            table_cell(t, 0, src->path);
        table_cell(t, 1, src->format);
        human_bytes(b, sizeof b, (double)(src->size_bytes ? src->size_bytes : src->raw_bytes));
        table_cell(t, 2, b);
        table_cellf(t, 3, "%llu", (unsigned long long)src->rows);
        table_cellf(t, 4, "%016llx", (unsigned long long)src->fingerprint);
    }
    printf("\n");
    table_print(t, stdout, width, color);
    table_free(t);

    const char *ch[] = {"column", "kind", "n", "missing", "mean", "sd", "min", "median", "max",
                        "distinct", "top values"};
    size_t nc = sizeof ch / sizeof *ch;
    t = table_create(nc);
    for (size_t i = 0; i < nc; i++) table_heading(t, i, ch[i], i >= 2 && i <= 9);
    values_entry *top = calloc(ntop ? ntop : 1, sizeof *top);
    for (size_t i = 0; i < s->ncols; i++) {
        const summary_column *c = &s->cols[i];
        int num = summary_column_kind(c, share) == KIND_NUMERIC;
        const moments *m = &c->mom;
        table_row(t);
        table_cell(t, 0, c->name);
        table_cell(t, 1, num ? "numeric" : "categorical");
        table_cellf(t, 2, "%llu", (unsigned long long)(num ? m->n : summary_column_present(c)));
        table_cellf(t, 3, "%llu", (unsigned long long)c->missing);
        if (num && m->n) {
            double rel;
            table_format_number(b, sizeof b, moments_mean(m), 6); table_cell(t, 4, b);
            table_format_number(b, sizeof b, sqrt(moments_variance(m)), 6); table_cell(t, 5, b);
            table_format_number(b, sizeof b, m->min, 6); table_cell(t, 6, b);
            double med = buckets_quantile(c->bins, 0.5, &rel);
            med = med < m->min ? m->min : med > m->max ? m->max : med;
            table_format_number(b, sizeof b, med, 4);
            table_cellf(t, 7, "~%s", b);
            table_format_number(b, sizeof b, m->max, 6); table_cell(t, 8, b);
        }
        int exact;
        double d = summary_column_distinct(c, &exact);
        table_cellf(t, 9, exact ? "%.0f" : "~%.0f", d);
        size_t nt = values_top(c->vals, ntop, top);
        char line[256];
        size_t used = 0;
        uint64_t present = summary_column_present(c);
        for (size_t k = 0; k < nt && used < sizeof line - 1; k++)
            used += (size_t)snprintf(line + used, sizeof line - used, "%s%.*s (%.0f%%)",
                                     k ? ", " : "", (int)(top[k].label_len > 24 ? 24 : top[k].label_len),
                                     top[k].label, present ? 100.0 * top[k].count / present : 0);
        table_cell(t, 10, nt ? line : "");
    }
    free(top);
    printf("\n");
    table_print(t, stdout, width, color);
    table_free(t);
    printf("\nmedians are bucket estimates (relative error at most %.2g%%); '~' marks estimates.\n",
           100 * buckets_relative_error(0));
}

int cmd_info(int argc, char **argv)
{
    int as_json = 0;
    const char *share_s = NULL, *top_s = NULL;
    const cli_option opts[] = {
        {"json", 0, NULL, "print JSON instead of tables", NULL, &as_json},
        {"numeric-share", 0, "P", "share of parsing cells that makes a column numeric (default 0.99)",
         &share_s, NULL},
        {"top", 0, "N", "most frequent values shown per column (default 3)", &top_s, NULL},
        {0},
    };
    const cli_command cmd = {"info", "FILE.sheaf [--json]",
                             "Prints what a summary holds: rows, sources with their fingerprints, and\n"
                             "per column its kind, counts, moments, quantiles and top values.",
                             opts};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc) { free(pos); return rc == 1 ? EXIT_DONE : rc; }
    double share = 0.99;
    long long ntop = 3;
    if (npos != 1) { cli_error("info", "expected one summary file"); free(pos); return EXIT_USAGE; }
    if (share_s && cli_parse_unit("info", "--numeric-share", share_s, &share)) {
        free(pos);
        return EXIT_USAGE;
    }
    if (top_s && (ntop = cli_parse_count(top_s)) < 0) {
        cli_error("info", "--top must be a count, got '%s'", top_s);
        free(pos);
        return EXIT_USAGE;
    }
    summary *s;
    char err[512];
    summary_status st = summary_read(pos[0], &s, err, sizeof err);
    if (st != SUMMARY_OK) {
        cli_error("info", "%s", err);
        free(pos);
        return cli_summary_exit(st);
    }
    if (as_json) print_json(s, share, (size_t)ntop);
    else print_text(s, pos[0], share, (size_t)ntop);
    summary_free(s);
    free(pos);
    if (fflush(stdout) != 0) return EXIT_FAILED;
    return EXIT_DONE;
}
