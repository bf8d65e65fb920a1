/* sheaf merge: combine summaries exactly, in bounded memory. */
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "cli/cli.h"
#include "summary/access.h"
#include "summary/shards.h"

/* The byte-range shards among the merged sources fit together (summary/
 * shards.h): 0, or -1 after one line naming the shard and the command that
 * rescans it. */
static int shards_fit(const summary *s)
{
    shard_check c;
    size_t bad = 0;
    char why[2560], named[2560];
    if (summary_shards_check(s, &c, NULL, &bad, why, sizeof why) == 0) return 0;
    cli_name_settings(why, named, sizeof named);
    const summary_source *x = bad < summary_source_count(s) ? summary_source_at(s, bad) : NULL;
    if (x && strstr(why, "{shard_from_top}")) {
        const char *t = summary_target_name(s);
        cli_error("merge", "%s: sheaf scan %s --shard %u/%u --shard-from-top%s%s -o NEW.sheaf "
                  "(with the other options its scan had)",
                  named, x->path, x->shard_index, x->shard_count, t ? " --target " : "",
                  t ? t : "");
    } else {
        cli_error("merge", "%s", named);
    }
    return -1;
}

int cmd_merge(int argc, char **argv)
{
    const char *out = NULL;
    int allow_dup = 0;
    const cli_option opts[] = {
        {"output", 'o', "OUT.sheaf", "summary file to write (required; - : standard output)", &out, NULL},
        {"allow-duplicates", 0, NULL, "merge even when the same source bytes appear twice", NULL,
         &allow_dup},
        {0},
    };
    const cli_command cmd = {
        "merge", "A.sheaf B.sheaf ... -o OUT.sheaf",
        "Combines summaries of shards or nights into one, as if one scan had read all their\n"
        "sources. Inputs are read one at a time (bounded memory) and must have the same\n"
        "columns and options, and the same targets in the same order (scan --target A,B).\n"
        "A merge that would count the same source bytes twice is refused unless\n"
        "--allow-duplicates is given. The output is written atomically.",
        opts,
        "  $ sheaf merge monday.sheaf tuesday.sheaf -o week.sheaf\n"
        "  $ sheaf scan depot-b.csv -q -o - | sheaf merge depot-a.sheaf - -o both.sheaf\n"};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc) { free(pos); return rc == 1 ? EXIT_DONE : rc; }
    summary_set *acc = NULL;
    rc = EXIT_USAGE;
    if (npos == 0) { cli_error("merge", "no input summaries (see sheaf merge --help)"); goto done; }
    if (!out) { cli_error("merge", "-o OUT.sheaf is required"); goto done; }
    if (cli_check_output("merge", out, (const char *const *)pos, npos) ||
        cli_check_binary_stdout("merge", out) || cli_check_stdin("merge", (const char *const *)pos, npos))
        goto done;
    if ((rc = cli_probe_output("merge", out)) != 0) goto done;
    rc = EXIT_USAGE;
    char err[2048];
    for (size_t i = 0; i < npos; i++) {
        summary_set *s;
        summary_status st = summary_set_read(pos[i], &s, err, sizeof err);
        if (st != SUMMARY_OK) { cli_error("merge", "%s", err); rc = cli_summary_exit(st); goto done; }
        if (!acc) { acc = s; continue; }
        size_t k;
        /* Every part holds the same sources: the first part's tell. */
        long d = allow_dup ? -1 : summary_duplicate_source(acc->parts[0], s->parts[0], &k);
        if (d >= 0) {
            cli_error("merge",
                      "%s: source %s (fingerprint %016llx) is already counted (from %s); "
                      "use --allow-duplicates to merge anyway",
                      cli_path_name(pos[i]), summary_source_at(s->parts[0], (size_t)d)->path,
                      (unsigned long long)summary_source_at(s->parts[0], (size_t)d)->fingerprint,
                      summary_source_at(acc->parts[0], k)->path);
            summary_set_free(s);
            rc = EXIT_INCOMPATIBLE;
            goto done;
        }
        char why[1536];
        st = summary_set_merge(acc, s, why, sizeof why);
        /* One target each: name the files in a schema difference (every
         * summary merged so far has the first one's schema). */
        char named[sizeof why];
        if (st == SUMMARY_ERR_INCOMPATIBLE && acc->n == 1 && s->n == 1 &&
            !summary_compatible_named(acc->parts[0], s->parts[0], pos[0], pos[i], named,
                                      sizeof named))
            memcpy(why, named, sizeof why);
        summary_set_free(s);
        if (st != SUMMARY_OK) {
            cli_error("merge", "%s and %s cannot be merged: %s", cli_path_name(pos[0]),
                      cli_path_name(pos[i]), why);
            rc = cli_summary_exit(st);
            goto done;
        }
    }
    if (shards_fit(acc->parts[0]) != 0) { rc = EXIT_INCOMPATIBLE; goto done; }
    /* A night with a shard missing merges (one level of a tree is one), but
     * not silently. */
    char partial[1024];
    size_t incomplete = summary_shards_incomplete(acc->parts[0], partial, sizeof partial);
    if (incomplete)
        fprintf(stderr, "sheaf merge: note: %s%s\n", partial,
                incomplete > 1 ? " (and more files so)" : "");
    summary_status st = summary_set_write(acc, out, err, sizeof err);
    if (st != SUMMARY_OK) {
        cli_error("merge", "%s", err);
        rc = st == SUMMARY_ERR_MEMORY ? EXIT_RESOURCE : EXIT_FAILED;
        goto done;
    }
    rc = EXIT_DONE;
done:
    summary_set_free(acc);
    free(pos);
    return rc;
}
