/* What several commands print or check the same way: reading the summary
 * they report on, the --format choice, and the target's class levels in
 * JSON. */
#include <stdio.h>
#include <string.h>

#include "cli/cli.h"
#include "summary/access.h"

int cli_read_summary(const char *cmd, const char *path, summary **s)
{
    char err[512];
    summary_status st = summary_read(path, s, err, sizeof err);
    if (st == SUMMARY_OK) return EXIT_DONE;
    cli_error(cmd, "%s", err);
    return cli_summary_exit(st);
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
