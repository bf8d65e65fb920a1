/* sheaf info: describe a summary. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "out/json.h"
#include "out/table.h"
#include "stats/describe.h"
#include "summary/access.h"
#include "summary/shards.h"

static void human_bytes(char *buf, size_t len, double b)
{
    const char *unit[] = {"B", "kB", "MB", "GB", "TB"};
    int u = 0;
    while (b >= 1000 && u < 4) { b /= 1000; u++; }
    snprintf(buf, len, u ? "%.1f %s" : "%.0f %s", b, unit[u]);
}

static void json_column(json_out *j, const column_description *d)
{
    json_object_begin(j);
    json_key(j, "name"); json_string(j, d->name);
    json_key(j, "kind"); json_string(j, d->kind == KIND_NUMERIC ? "numeric" : "categorical");
    const struct { const char *key; uint64_t v; } counts[] = {
        {"n", d->numbers},       {"missing", d->missing}, {"non_numeric", d->non_numeric},
        {"non_finite", d->non_finite}, {"zeros", d->zeros}, {"integers", d->integers}};
    for (size_t i = 0; i < sizeof counts / sizeof *counts; i++) {
        json_key(j, counts[i].key);
        json_uint(j, counts[i].v);
    }
    const struct { const char *key; double v; } moments[] = {
        {"mean", d->mean}, {"variance", d->variance}, {"sd", d->sd},
        {"min", d->min},   {"max", d->max},           {"skewness", d->skewness},
        {"kurtosis", d->kurtosis}};
    for (size_t i = 0; i < sizeof moments / sizeof *moments; i++) {
        json_key(j, moments[i].key);
        json_number(j, moments[i].v);
    }
    json_key(j, "distinct"); json_number(j, d->distinct_exact ? d->distinct : round(d->distinct));
    json_key(j, "distinct_exact"); json_bool(j, d->distinct_exact);
    json_key(j, "value_table_full"); json_bool(j, d->high_cardinality);
    /* Once a value table overflowed (here or in a merged shard), counts of
     * values that entered it late are lower bounds. */
    json_key(j, "top_exact"); json_bool(j, !d->high_cardinality);
    json_key(j, "top");
    json_array_begin(j);
    for (size_t t = 0; t < d->ntop; t++) {
        json_object_begin(j);
        json_key(j, "value"); json_string_n(j, d->top[t].label, d->top[t].label_len);
        if (d->top[t].cut) { json_key(j, "cut"); json_bool(j, 1); }
        json_key(j, "count"); json_uint(j, d->top[t].count);
        json_object_end(j);
    }
    json_array_end(j);
    json_key(j, "non_numeric_examples");
    json_array_begin(j);
    for (uint32_t e = 0; e < d->nexamples; e++) json_string(j, d->examples[e]);
    json_array_end(j);
    json_key(j, "quantiles");
    json_object_begin(j);
    for (size_t q = 0; q < DESCRIBE_NQUANTILES; q++) {
        char key[16];
        snprintf(key, sizeof key, "%g", describe_quantile_probs[q]);
        json_key(j, key);
        json_number(j, d->quantiles[q]);
    }
    json_object_end(j);
    if (d->has_by_class) {
        json_key(j, "by_class");
        json_array_begin(j);
        for (size_t k = 0; k < d->nclasses; k++) {
            const describe_class *c = &d->by_class[k];
            json_object_begin(j);
            json_key(j, "class"); json_string(j, c->label);
            json_key(j, "n"); json_uint(j, c->n);
            json_key(j, "mean"); json_number(j, c->mean);
            json_key(j, "variance"); json_number(j, c->variance);
            json_key(j, "imprecise"); json_bool(j, c->imprecise);
            json_object_end(j);
        }
        json_array_end(j);
    }
    json_key(j, "quantile_relative_error"); json_number(j, d->quantile_relative_error);
    json_key(j, "quantiles_exact"); json_bool(j, d->quantiles_exact);
    json_object_end(j);
}

/* The targets the file holds (names, in the order scanned), and its format
 * version. */
typedef struct {
    const char **names;
    size_t n;
    uint32_t version;
} held_targets;


/* A shard's start record (docs/shards.md). */
static void json_shard(json_out *j, const summary_source *src, shard_verdict v)
{
    static const char *const modes[] = {"at_field", "in_field", "in_quotes", "quote_seen"};
    static const char *const verdict[] = {"", "verified", "unverified", "wrong"};
    char id[20];
    snprintf(id, sizeof id, "%016llx", (unsigned long long)src->file_id);
    json_key(j, "shard");
    json_object_begin(j);
    json_key(j, "index"); json_uint(j, src->shard_index);
    json_key(j, "count"); json_uint(j, src->shard_count);
    json_key(j, "file_id"); json_string(j, id);
    json_key(j, "start_rule"); json_string(j, summary_shard_rule_name(src->shard_rule));
    json_key(j, "start_modes");
    json_array_begin(j);
    for (int m = 0; m < 4; m++)
        if (src->shard_modes >> m & 1) json_string(j, modes[m]);
    json_array_end(j);
    json_key(j, "transfer");
    json_object_begin(j);
    for (int m = 0; m < 4; m++) {
        json_key(j, modes[m]);
        json_string(j, modes[(src->shard_map >> (2 * m)) & 3]);
    }
    json_object_end(j);
    json_key(j, "read_bytes"); json_uint(j, src->read_bytes);
    json_key(j, "check"); json_string(j, verdict[v]);
    json_object_end(j);
}

static int print_json(const summary *s, const held_targets *held, double share, size_t ntop)
{
    json_out j;
    json_init(&j, stdout);
    json_object_begin(&j);
    json_key(&j, "format_version"); json_uint(&j, held->version);
    json_key(&j, "targets");
    json_array_begin(&j);
    for (size_t i = 0; i < held->n; i++) json_string(&j, held->names[i]);
    json_array_end(&j);
    json_key(&j, "rows"); json_uint(&j, summary_rows(s));
    json_key(&j, "bytes"); json_uint(&j, summary_bytes(s));
    json_key(&j, "short_rows"); json_uint(&j, summary_short_rows(s));
    json_key(&j, "long_rows"); json_uint(&j, summary_long_rows(s));
    json_key(&j, "repeated_headers"); json_uint(&j, summary_repeated_headers(s));
    json_key(&j, "ragged_lines");
    json_array_begin(&j);
    const uint64_t *lines;
    size_t nlines = summary_ragged_lines(s, &lines);
    for (size_t i = 0; i < nlines; i++) json_uint(&j, lines[i]);
    json_array_end(&j);
    json_key(&j, "target");
    if (summary_target_column(s) < 0) {
        json_null(&j);
    } else {
        static const char *tasks[] = {"none", "classify", "regress"};
        target_task declared = summary_declared_task(s);
        json_object_begin(&j);
        json_key(&j, "name"); json_string(&j, summary_target_name(s));
        json_key(&j, "task"); json_string(&j, tasks[summary_task(s, share)]);
        json_key(&j, "declared_task"); json_string(&j, declared ? tasks[declared] : "auto");
        json_key(&j, "classes_dropped"); json_bool(&j, summary_classes_dropped(s));
        json_key(&j, "max_classes"); json_uint(&j, summary_max_classes(s));
        cli_json_class_levels(&j, s, 1);
        json_object_end(&j);
    }
    /* The shards' check (summary/shards.h): a verdict per source. */
    shard_check sc;
    size_t bad;
    char why[2560];
    shard_verdict *verdicts = calloc(summary_source_count(s) + 1, sizeof *verdicts);
    if (verdicts) summary_shards_check(s, &sc, verdicts, &bad, why, sizeof why);
    json_key(&j, "sources");
    json_array_begin(&j);
    for (size_t i = 0; i < summary_source_count(s); i++) {
        const summary_source *src = summary_source_at(s, i);
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
        if (src->shard_rule) json_shard(&j, src, verdicts ? verdicts[i] : SHARD_NOT);
        json_object_end(&j);
    }
    json_array_end(&j);
    free(verdicts);
    json_key(&j, "columns");
    json_array_begin(&j);
    for (size_t i = 0; i < summary_columns(s); i++) {
        column_description d;
        if (describe_column(s, i, share, ntop, &d) != 0) return -1;
        if (d.imprecise_classes)
            fprintf(stderr,
                    "sheaf info: warning: column '%s': the mean and variance of %zu class%s are "
                    "null: %s numbers lay too far from the first number of the scan that read "
                    "them to keep their digits (docs/methods.md, \"Target classes and "
                    "per-class moments\")\n",
                    d.name, d.imprecise_classes, d.imprecise_classes == 1 ? "" : "es",
                    d.imprecise_classes == 1 ? "its" : "their");
        json_column(&j, &d);
        describe_column_free(&d);
    }
    json_array_end(&j);
    json_object_end(&j);
    json_finish(&j);
    return 0;
}

static void print_target(FILE *f, const summary *s, double share)
{
    static const char *tasks[] = {"none", "classification", "regression"};
    uint32_t nclasses = summary_class_count(s);
    fprintf(f, "target: %s (%s%s)", summary_target_name(s), tasks[summary_task(s, share)],
           summary_declared_task(s) ? ", declared" : "");
    if (summary_classes_dropped(s))
        fprintf(f, "; more than %u distinct values, so class statistics were dropped",
               summary_max_classes(s));
    else if (nclasses) {
        uint64_t total = describe_class_total(s);
        fprintf(f, ", %u levels:", nclasses);
        for (uint32_t c = 0; c < nclasses && c < 8; c++)
            fprintf(f, "%s %s (%.1f%%)", c ? "," : "", summary_class_label(s, c),
                   total ? 100.0 * summary_class_rows(s, c) / total : 0);
        if (nclasses > 8) fprintf(f, ", ...");
    }
    fprintf(f, "\n");
}

static void print_sources(FILE *f, const summary *s, size_t width, int color)
{
    char b[64];
    table *t = table_create(5);
    const char *sh[] = {"source", "format", "size", "rows", "fingerprint"};
    for (int i = 0; i < 5; i++) table_heading(t, (size_t)i, sh[i], i == 2 || i == 3);
    table_keep_whole(t, 0);
    table_drop_rank(t, 4, 2); /* fingerprint, then format */
    table_drop_rank(t, 1, 1);
    for (size_t i = 0; i < summary_source_count(s); i++) {
        const summary_source *src = summary_source_at(s, i);
        table_row(t);
        if (src->shard_rule)
            table_cellf(t, 0, "%s [%llu,%llu) shard %u/%u, start %s", src->path,
                        (unsigned long long)src->start_byte, (unsigned long long)src->end_byte,
                        src->shard_index, src->shard_count,
                        summary_shard_rule_name(src->shard_rule));
        else if (src->end_byte)
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
    fprintf(f, "\n");
    table_print(t, f, width, color);
    table_free(t);
}

/* One row of the column table. */
static void text_column(table *t, const column_description *d)
{
    char b[64];
    int num = d->kind == KIND_NUMERIC;
    table_row(t);
    table_cell(t, 0, d->name);
    table_cell(t, 1, num ? "numeric" : "categorical");
    table_cellf(t, 2, "%llu", (unsigned long long)(num ? d->numbers : d->present));
    table_cellf(t, 3, "%llu", (unsigned long long)d->missing);
    if (num && d->numbers) {
        table_format_number(b, sizeof b, d->mean, 6); table_cell(t, 4, b);
        table_format_number(b, sizeof b, d->sd, 6); table_cell(t, 5, b);
        table_format_number(b, sizeof b, d->min, 6); table_cell(t, 6, b);
        if (d->quantiles_exact) {
            table_format_number(b, sizeof b, d->median, 6);
            table_cell(t, 7, b);
        } else {
            table_format_number(b, sizeof b, d->median, 4);
            table_cellf(t, 7, "~%s", b);
        }
        table_format_number(b, sizeof b, d->max, 6); table_cell(t, 8, b);
    }
    table_cellf(t, 9, d->distinct_exact ? "%.0f" : "~%.0f", d->distinct);
    char line[256];
    size_t used = 0;
    for (size_t k = 0; k < d->ntop && used < sizeof line - 1; k++) {
        const values_entry *e = &d->top[k];
        /* At most 24 screen columns of a value, cut on a code point and marked. */
        char label[200];
        uint32_t n = e->label_len < sizeof label ? e->label_len : (uint32_t)sizeof label - 1;
        n = values_whole_utf8(e->label, n);
        memcpy(label, e->label, n);
        label[n] = '\0';
        size_t keep = table_text_width(label) > 24 ? table_cut(label, 23) : n;
        int marked = keep < n || e->cut;
        used += (size_t)snprintf(line + used, sizeof line - used, "%s%.*s%s (%.0f%%)",
                                 k ? ", " : "", (int)keep, label, marked ? TABLE_CUT_MARK : "",
                                 d->present ? 100.0 * e->count / d->present : 0);
    }
    table_cell(t, 10, d->ntop ? line : "");
}

static int print_text(FILE *f, const summary *s, const held_targets *held, const char *path, double share,
                      size_t ntop)
{
    char a[64];
    size_t nsources = summary_source_count(s);
    human_bytes(a, sizeof a, (double)summary_bytes(s));
    fprintf(f, "%s: %llu rows, %zu columns, %s of text from %zu source%s\n", path,
           (unsigned long long)summary_rows(s), summary_columns(s), a, nsources,
           nsources == 1 ? "" : "s");
    uint64_t short_rows = summary_short_rows(s), long_rows = summary_long_rows(s);
    if (short_rows || long_rows) {
        const uint64_t *lines;
        size_t nlines = summary_ragged_lines(s, &lines);
        fprintf(f, "ragged rows: %llu short, %llu long (first at line", (unsigned long long)short_rows,
               (unsigned long long)long_rows);
        for (size_t i = 0; i < nlines; i++)
            fprintf(f, "%s %llu", i ? "," : "", (unsigned long long)lines[i]);
        fprintf(f, ")\n");
    }
    if (summary_repeated_headers(s))
        fprintf(f, "repeated header lines skipped: %llu (at the start of a gzip member or zstd frame)\n",
               (unsigned long long)summary_repeated_headers(s));
    if (held->n > 1) {
        fprintf(f, "targets:");
        for (size_t i = 0; i < held->n; i++) fprintf(f, "%s %s", i ? "," : "", held->names[i]);
        fprintf(f, " (%zu; shown: %s; choose another with --target)\n", held->n, summary_target_name(s));
    }
    if (summary_target_column(s) >= 0) print_target(f, s, share);
    size_t width = table_terminal_width();
    int color = table_use_color(stdout);
    print_sources(f, s, width, color);

    const char *ch[] = {"column", "kind", "n", "missing", "mean", "sd", "min", "median", "max",
                        "distinct", "top values"};
    size_t nc = sizeof ch / sizeof *ch;
    table *t = table_create(nc);
    for (size_t i = 0; i < nc; i++) table_heading(t, i, ch[i], i >= 2 && i <= 9);
    table_keep_whole(t, 0);
    table_keep_whole(t, 1);
    /* At a narrow width, in this order: median, sd, min, max, top values,
     * distinct, missing; the name, kind, n and mean stay. */
    const int rank[] = {0, 0, 0, 1, 0, 6, 5, 7, 4, 2, 3};
    for (size_t i = 0; i < nc; i++) table_drop_rank(t, i, rank[i]);
    for (size_t i = 0; i < summary_columns(s); i++) {
        column_description d;
        if (describe_column(s, i, share, ntop, &d) != 0) { table_free(t); return -1; }
        text_column(t, &d);
        describe_column_free(&d);
    }
    fprintf(f, "\n");
    table_print(t, f, width, color);
    table_free(t);
    fprintf(f, "\nmedians interpolate between the middle values (numpy's 'linear'); exact where the "
           "value table holds every number, else bucket estimates (relative error at most "
           "%.2g%%) marked '~'.\n",
           100 * summary_quantile_error_floor());
    return 0;
}

/* The text form, through cli_text (lines wider than the terminal wrap). */
static int text_of(const summary *s, const held_targets *held, const char *path, double share,
                   size_t ntop)
{
    cli_text out;
    int rc = print_text(cli_text_begin(&out), s, held, path, share, ntop);
    cli_text_end(&out);
    return rc;
}

int cmd_info(int argc, char **argv)
{
    const char *color = NULL;
    const char *format = "text", *share_s = NULL, *top_s = NULL, *target = NULL;
    const cli_option opts[] = {
        {"format", 'f', "FMT", "text (default) or json", &format, NULL},
        CLI_TARGET_OPTION(target),
        CLI_NUMERIC_SHARE_OPTION(share_s),
        {"top-values", 0, "N", "most frequent values shown per column (default 3)", &top_s, NULL},
        CLI_COLOR_OPTION(color),
        {0},
    };
    const cli_command cmd = {"info", "FILE.sheaf [--format text|json]",
                             "Prints what a summary holds: rows, sources with their fingerprints, and\n"
                             "per column its kind, counts, moments, quantiles and top values.\n"
                             "A summary of several targets lists them and describes the first,\n"
                             "or the one --target names.",
                             opts,
        "  $ sheaf info fleet.sheaf\n"
        "  $ sheaf info fleet.sheaf -f json --top-values 10 > fleet.json\n"
        "  $ sheaf info - < fleet.sheaf\n"};
    char **pos;
    int rc = cli_parse_single(&cmd, argc, argv, &pos);
    if (rc >= 0) return rc;
    if (cli_set_color("info", color) != 0) return EXIT_USAGE;
    rc = EXIT_USAGE;
    double share;
    long long ntop = 3;
    summary *s = NULL;
    summary_set *set = NULL;
    const char **names = NULL;
    if (cli_numeric_share("info", share_s, &share)) goto done;
    if (strcmp(format, "text") && strcmp(format, "json")) {
        cli_error("info", "--format must be text or json, got '%s'", format);
        goto done;
    }
    int as_json = !strcmp(format, "json");
    if (top_s && (ntop = cli_parse_count(top_s)) < 0) {
        cli_error("info", "--top-values must be a count, got '%s'", top_s);
        goto done;
    }
    if (ntop > (1 << 24)) ntop = 1 << 24; /* no value table holds more (--max-levels) */
    if ((rc = cli_read_set("info", pos[0], &set)) != EXIT_DONE) goto done;
    held_targets held = {NULL, 0, set->n > 1 ? SUMMARY_SET_FORMAT_VERSION
                                             : summary_file_version(set->parts[0])};
    if (!(names = calloc(set->n, sizeof *names))) {
        cli_error("info", "out of memory");
        rc = EXIT_RESOURCE;
        goto done;
    }
    for (size_t i = 0; i < set->n; i++)
        if (set->parts[i]->opt.target) names[held.n++] = set->parts[i]->opt.target;
    held.names = names;
    if ((rc = cli_choose_target("info", pos[0], set, target, 0, &s)) != EXIT_DONE) goto done;
    if ((as_json ? print_json(s, &held, share, (size_t)ntop)
                 : text_of(s, &held, cli_path_name(pos[0]), share, (size_t)ntop))) {
        cli_error("info", "out of memory");
        rc = EXIT_RESOURCE;
        goto done;
    }
    rc = EXIT_DONE; /* standard output is checked once, by main (cli_close_stdout) */
done:
    summary_free(s);
    free(names); /* the names are the set's: freed after their last use */
    summary_set_free(set);
    free(pos);
    return rc;
}
