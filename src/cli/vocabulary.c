/* cli vocabulary: the option names the library's messages stand for, and
 * the old spellings of renamed options.
 *
 * The library names a setting in its messages by a key in braces
 * ("{max_classes}", "{task=regress}"), never by a command-line flag;
 * cli_name_settings shows each key as the option a shell user types.
 *
 * The options were renamed once so that one name means one thing on every
 * command (README, "Options: one vocabulary").  The old spellings still work
 * for one release, each with a one-line warning naming the new one. */
#include <stdio.h>
#include <string.h>

#include "cli/cli.h"
#include "out/keys.h"

/* Library setting key -> what a command line says. */
static const struct {
    const char *key;    /* between the braces */
    const char *option; /* as typed */
} SETTINGS[] = {
    {"delim", "--delim"},
    {"columns", "--columns"},
    {"numeric", "--numeric"},
    {"categorical", "--categorical"},
    {"exclude", "--exclude"},
    {"target", "--target"},
    {"max_classes", "--max-classes"},
    {"task", "--task"},
    {"task=regress", "--task regress"},
    {"task=classify", "--task classify"},
    {"strict", "--strict"},
    {"chunk_size", "--chunk-size"},
    {"max_record", "--max-record"},
    {"shard", "--shard"},
    {"shard_from_top", "--shard-from-top"},
    {"mem_limit", "--mem"},
    {"threads", "--threads"},
    {"force", "--force"},
    {"no_header", "--no-header"},
    {"carry", "--carry"},
    {"max_levels", "--max-levels"},
    {"bucket_budget", "--bucket-budget"},
    {"missing", "--missing"},
    {"checkpoint", "--checkpoint"},
    {"checkpoint_every", "--checkpoint-every"},
    {"resume", "--resume"},
    {"read_target", "--target"},
};

const char *cli_setting_option(const char *key, size_t len)
{
    for (size_t i = 0; i < sizeof SETTINGS / sizeof *SETTINGS; i++)
        if (strlen(SETTINGS[i].key) == len && !memcmp(SETTINGS[i].key, key, len))
            return SETTINGS[i].option;
    return NULL;
}

void cli_name_settings(const char *in, char *out, size_t cap)
{
    keys_replace(in, out, cap, cli_setting_option);
}

const cli_renamed CLI_RENAMED[] = {
    {"info", "json", "format", "json"},
    {"info", "top", "top-values", NULL},
    {"scan", "ignore", "exclude", NULL},
    {"trim", "from", "summary", NULL},
    {"project", "pca", "summary", NULL},
    {"trim", "keep-list", "columns-from", NULL},
    {"pca", "keep-list", "columns-from", NULL},
    {"project", "keep-list", "columns-from", NULL},
    {"screen", "keep-list", "write-kept", NULL},
    {"screen", "top", "max-kept", NULL},
    {"trim", "top", "max-kept", NULL},
    {"screen", "q", "fdr", NULL},
    {"trim", "q", "fdr", NULL},
    {"pca", "k", "components", NULL},
    {"project", "k", "components", NULL},
    {"corr", "covariance", "basis", "covariance"},
    {NULL, NULL, NULL, NULL},
};

const cli_renamed *cli_find_renamed(const char *cmd, const char *name, size_t len)
{
    for (const cli_renamed *r = CLI_RENAMED; r->command; r++)
        if (!strcmp(r->command, cmd) && strlen(r->old) == len && !memcmp(r->old, name, len))
            return r;
    return NULL;
}
