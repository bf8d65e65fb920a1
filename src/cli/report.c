/* What the commands on one summary (info, corr, screen, pca) parse, check
 * and print the same way: the one positional argument, the summary read,
 * the --format choice, the target's class levels and number arrays in
 * JSON. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "io/closest.h"
#include "summary/access.h"

int cli_read_summary(const char *cmd, const char *path, summary **s)
{
    char err[512];
    summary_status st = summary_read(path, s, err, sizeof err);
    if (st == SUMMARY_OK) return EXIT_DONE;
    cli_error(cmd, "%s", err);
    return cli_summary_exit(st);
}

int cli_read_set(const char *cmd, const char *path, summary_set **set)
{
    /* A report appended to the summary it reads would damage it. */
    int rc = cli_check_output(cmd, "-", &path, 1);
    if (rc) return rc;
    char err[1024];
    summary_status st = summary_set_read(path, set, err, sizeof err);
    if (st == SUMMARY_OK) return EXIT_DONE;
    cli_error(cmd, "%s", err);
    return cli_summary_exit(st);
}

int cli_choose_target(const char *cmd, const char *path, summary_set *set, const char *target,
                      int need_one, summary **s)
{
    char names[1024];
    summary_set_names(set, names, sizeof names);
    long i = target ? summary_set_find(set, target) : set->n == 1 || !need_one ? 0 : -1;
    if (i >= 0) {
        *s = summary_set_take(set, (size_t)i);
        return EXIT_DONE;
    }
    if (!target)
        cli_error(cmd, "%s holds %zu targets (%s): choose one with --target", path, set->n,
                  names);
    else if (set->n > 1) {
        char hint[512] = "";
        closest c;
        closest_init(&c, target, strlen(target));
        for (size_t k = 0; k < set->n; k++)
            closest_offer(&c, set->parts[k]->opt.target, strlen(set->parts[k]->opt.target));
        closest_append(&c, NULL, hint, sizeof hint);
        cli_error(cmd, "%s: --target %s: not one of its targets (%s)%s", cli_path_name(path),
                  target, names, hint);
    }
    else if (!set->parts[0]->opt.target)
        cli_error(cmd, "%s: --target %s: the summary was scanned without a target", path,
                  target);
    else
        cli_error(cmd, "%s: --target %s: the summary's target is %s", path, target, names);
    return EXIT_USAGE;
}

int cli_read_target(const char *cmd, const char *path, const char *target, int need_one,
                    summary **s)
{
    summary_set *set;
    int rc = cli_read_set(cmd, path, &set);
    if (rc != EXIT_DONE) return rc;
    rc = cli_choose_target(cmd, path, set, target, need_one, s);
    summary_set_free(set);
    return rc;
}

int cli_check_format(const char *cmd, const char *format)
{
    if (!strcmp(format, "text") || !strcmp(format, "csv") || !strcmp(format, "json")) return 0;
    cli_error(cmd, "--format must be text, csv or json, got '%s'", format);
    return EXIT_USAGE;
}

void cli_json_class_levels(json_out *j, const summary *s, int with_levels)
{
    json_key(j, "levels");
    json_array_begin(j);
    for (uint32_t c = 0; with_levels && c < summary_class_count(s); c++) {
        json_object_begin(j);
        json_key(j, "value"); json_string(j, summary_class_label(s, c));
        json_key(j, "rows"); json_uint(j, summary_class_rows(s, c));
        json_object_end(j);
    }
    json_array_end(j);
}

int cli_parse_single(const cli_command *cmd, int argc, char **argv, char ***pos)
{
    size_t npos;
    int rc = cli_parse(cmd, argc, argv, pos, &npos);
    if (rc == 0 && npos == 1) return -1;
    if (rc == 0) {
        cli_error(cmd->name, "expected one summary file");
        rc = EXIT_USAGE;
    }
    free(*pos);
    *pos = NULL;
    return rc == 1 ? EXIT_DONE : rc;
}

void cli_json_numbers(json_out *j, const char *key, const double *v, size_t n)
{
    json_key(j, key);
    json_array_begin(j);
    for (size_t i = 0; i < n; i++) json_number(j, v[i]);
    json_array_end(j);
}

void cli_json_matrix(json_out *j, const char *key, const double *v, size_t rows, size_t cols)
{
    json_key(j, key);
    json_array_begin(j);
    for (size_t r = 0; r < rows; r++) {
        json_array_begin(j);
        for (size_t c = 0; c < cols; c++) json_number(j, v[r * cols + c]);
        json_array_end(j);
    }
    json_array_end(j);
}

int cli_numeric_share(const char *cmd, const char *text, double *share)
{
    *share = CLI_NUMERIC_SHARE_DEFAULT;
    return text && cli_parse_unit(cmd, "--numeric-share", text, share) ? EXIT_USAGE : 0;
}
