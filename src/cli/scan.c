/* sheaf scan: data files -> summary file. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "cli/cli.h"
#include "summary/checkpoint.h"
#include "cli/scan_notes.h"
#include "io/namelist.h"
#include "io/shard_start.h"
#include "stats/screen.h"
#include "stats/validity.h"
#include "summary/access.h"
#include "summary/scan.h"

/* Warnings that do not stop the scan (duplicate column names), held until
 * it has succeeded: a failed scan prints its error alone, one line.  A
 * warning repeated by a later file with the same header is kept once. */
typedef struct {
    char *text;   /* the lines, each ended by a newline; NULL when none */
    size_t len;   /* bytes in text */
    int dropped;  /* a line did not fit in memory */
} held_warnings;

static void warn_line(void *ctx, const char *message)
{
    held_warnings *h = ctx;
    size_t n = strlen(message);
    for (const char *p = h->text; p && p < h->text + h->len; p = strchr(p, '\n') + 1)
        if (!strncmp(p, message, n) && p[n] == '\n') return;
    char *grown = realloc(h->text, h->len + n + 2);
    if (!grown) { h->dropped = 1; return; }
    memcpy(grown + h->len, message, n);
    grown[h->len + n] = '\n';
    h->len += n + 1;
    h->text = grown;
}

static void print_warnings(const held_warnings *h)
{
    for (const char *p = h->text; p && p < h->text + h->len;) {
        const char *e = strchr(p, '\n');
        cli_error("scan", "warning: %.*s", (int)(e - p), p);
        p = e + 1;
    }
    if (h->dropped) fprintf(stderr, "sheaf scan: warning: out of memory for a warning\n");
}

/* SHEAF_TEST_CHECKPOINT_PAUSE=N (tests only, not documented in --help):
 * checkpoint N stops for a minute inside its write, after a line on
 * standard error, so that a test can kill the scan there. */
static void pause_in_checkpoint(void *ctx, uint64_t number)
{
    const char *at = ctx;
    if (strtoull(at, NULL, 10) != number) return;
    fprintf(stderr, "sheaf scan: test: paused inside checkpoint %llu\n", (unsigned long long)number);
    fflush(stderr);
    sleep(60);
}

int cmd_scan(int argc, char **argv)
{
    const char *out = NULL, *delim = NULL, *chunk = NULL, *maxrec = NULL, *missing = NULL;
    const char *levels = NULL, *budget = NULL, *target = NULL, *task = NULL, *classes = NULL;
    const char *mem = NULL, *shard = NULL, *threads = NULL, *every = NULL;
    int no_header = 0, strict = 0, quiet = 0, force = 0, from_top = 0, resume = 0;
    held_warnings held = {0};
    scan_options o;
    scan_options_defaults(&o);
    const cli_option opts[] = {
        {"output", 'o', "OUT.sheaf", "summary file to write (required; - : standard output)", &out, NULL},
        {"delim", 'd', "CHAR", "field delimiter: , ; | tab or space (default: detected)", &delim, NULL},
        {"no-header", 0, NULL, "first row is data; columns are named col1..colN", NULL, &no_header},
        {"strict", 0, NULL, "rows with too few or too many fields are errors", NULL, &strict},
        {"force", 0, NULL, "read a file that does not look like text (NUL or control bytes)",
         NULL, &force},
        {"columns", 0, CLI_NAME_LIST, "scan only these columns", &o.columns, NULL},
        {"numeric", 0, CLI_NAME_LIST, "declare columns numeric", &o.numeric, NULL},
        {"categorical", 0, CLI_NAME_LIST, "declare columns categorical (never parsed)", &o.categorical, NULL},
        {"exclude", 0, CLI_NAME_LIST, "leave these columns out", &o.ignore, NULL},
        {"target", 't', "COL[,COL..]", "the outcome column (a class or a continuous measure); "
         "several, separated by commas, in one pass (a value that is a whole header name is one "
         "column; \\, is a comma inside a name)", &target, NULL},
        {"task", 0, "TASK", "classify or regress (default: decided when the summary is read)",
         &task, NULL},
        {"max-classes", 0, "N", "target classes kept (default 256)", &classes, NULL},
        {"mem", 0, "SIZE", "memory the scan may add: co-moments and chunk buffers checked before reading, everything after each chunk (default: half of RAM)",
         &mem, NULL},
        {"missing", 0, "S1,S2,..",
         "missing-value spellings, any letter case (default NA,N/A,null,NULL,None,-,?); \\, "
         "puts a comma inside one, \\\\ a backslash", &missing, NULL},
        {"max-levels", 0, "N", "exact value counts per column before overflow (default 1024)",
         &levels, NULL},
        {"bucket-budget", 0, "N", "occupied value buckets per column (default 2048)", &budget, NULL},
        {"chunk-size", 0, "SIZE", "bytes per chunk, e.g. 1M (default 256 KiB)", &chunk, NULL},
        {"max-record", 0, "SIZE", "longest record accepted (default 64 MiB)", &maxrec, NULL},
        {"shard", 0, "I/N", "read only the records that start in the I-th of N byte ranges "
         "(one plain file)", &shard, NULL},
        {"shard-from-top", 0, NULL, "find the shard's first record by reading the file from its "
         "top, not by guessing from the bytes near its range (docs/shards.md)", NULL, &from_top},
        {"checkpoint", 0, "FILE", "save the scan so far to FILE now and then (atomically), so "
         "that a killed scan can go on with --resume; removed when the scan succeeds",
         &o.checkpoint, NULL},
        {"checkpoint-every", 0, "SIZE", "decompressed input between checkpoints (default 256M)",
         &every, NULL},
        {"resume", 0, NULL, "go on from the --checkpoint FILE of the same scan killed before; "
         "the summary is the one an uninterrupted scan with --checkpoint writes, byte for byte",
         NULL, &resume},
        {"threads", 'j', "N", CLI_THREADS_HELP, &threads, NULL},
        {"quiet", 'q', NULL, "no progress line, closing line or notes on ragged or mixed input",
         NULL, &quiet},
        {0},
    };
    const cli_command cmd = {
        "scan", "FILE... -o OUT.sheaf [options]",
        "Reads each FILE (plain, gzip or zstd, detected from its bytes; '-' is standard\n"
        "input) once, in bounded memory, and writes a summary of every column. Several\n"
        "files are read in turn and must share the header and the delimiter (the first\n"
        "file's, unless -d). A failed scan writes nothing.\n"
        "With --target A,B,.. the one pass keeps what each target needs, and the summary\n"
        "holds every target: info, screen, corr, pca, project and trim --summary take --target\n"
        "to choose one. The value is split at commas unless it is, whole, a header name.",
        opts,
        "  $ sheaf scan flights-*.csv.gz -t landed_ok -o fleet.sheaf\n"
        "  $ zcat night.csv.gz | sheaf scan - -o night.sheaf\n"
        "  $ sheaf scan rotors.csv -qj2 -o - | sheaf info -\n"};
    char **pos;
    size_t npos;
    int rc = cli_parse(&cmd, argc, argv, &pos, &npos);
    if (rc) { free(pos); summary_options_free(&o.opt); return rc == 1 ? EXIT_DONE : rc; }
    rc = EXIT_USAGE;
    long long v;
    if (npos == 0) { cli_error("scan", "no input files (see sheaf scan --help)"); goto done; }
    if (!out) { cli_error("scan", "-o OUT.sheaf is required"); goto done; }
    if (cli_check_output("scan", out, (const char *const *)pos, npos) ||
        cli_check_binary_stdout("scan", out) || cli_check_stdin("scan", (const char *const *)pos, npos))
        goto done;
    if (delim && cli_parse_delim(delim, &o.delim) != 0) {
        cli_error("scan", "--delim must be one character, 'tab' or 'space', got '%s'", delim);
        goto done;
    }
    if (cli_parse_reading("scan", chunk, maxrec, &o.chunk_bytes, &o.max_record_bytes)) goto done;
    if (cli_parse_threads("scan", threads, &o.threads)) goto done;
    if ((every || resume) && !o.checkpoint) {
        cli_error("scan", "%s needs --checkpoint FILE", resume ? "--resume" : "--checkpoint-every");
        goto done;
    }
    if (every) {
        if ((v = cli_parse_size(every)) < 1) {
            cli_error("scan", "--checkpoint-every must be a size such as 64M or 1G, got '%s'", every);
            goto done;
        }
        o.checkpoint_bytes = (uint64_t)v;
    }
    checkpoint_mark before = {0};
    if (o.checkpoint) {
        char cerr[600];
        if (checkpoint_mark_path(o.checkpoint, &before, cerr, sizeof cerr) != 0) {
            cli_error("scan", "%s", cerr);
            goto done;
        }
        if (cli_same_place(o.checkpoint, out)) {
            cli_error("scan", "--checkpoint %s and -o %s name the same file", o.checkpoint, out);
            goto done;
        }
        if (cli_check_output("scan", o.checkpoint, (const char *const *)pos, npos)) goto done;
    }
    o.resume = resume;
    if (o.checkpoint && getenv("SHEAF_TEST_CHECKPOINT_PAUSE")) {
        o.checkpoint_pause = pause_in_checkpoint;
        o.checkpoint_pause_ctx = getenv("SHEAF_TEST_CHECKPOINT_PAUSE");
    }
    if (levels) {
        if ((v = cli_parse_count(levels)) < 1 || v > (1 << 24)) {
            cli_error("scan", "--max-levels must be between 1 and 16777216, got '%s'", levels);
            goto done;
        }
        o.opt.max_levels = (uint32_t)v;
    }
    if (budget) {
        if ((v = cli_parse_count(budget)) < 16 || v > (1 << 24)) {
            cli_error("scan", "--bucket-budget must be between 16 and 16777216, got '%s'", budget);
            goto done;
        }
        o.opt.bucket_budget = (uint32_t)v;
    }
    if (shard) {
        /* Whole numbers up to 2^32 - 1, no sign: %u took "-1" and 2^32 + 1
         * and wrapped them. */
        const char *slash = strchr(shard, '/');
        char first[32] = "";
        if (slash && (size_t)(slash - shard) < sizeof first)
            memcpy(first, shard, (size_t)(slash - shard));
        long long i = slash ? cli_parse_count(first) : -1, n = slash ? cli_parse_count(slash + 1) : -1;
        if (!slash || n < 1 || i < 1 || i > n || n > (long long)UINT32_MAX) {
            cli_error("scan", "--shard must be I/N with 1 <= I <= N, got '%s'", shard);
            goto done;
        }
        o.shard_index = (uint32_t)i;
        o.shard_count = (uint32_t)n;
    }
    if (from_top && !shard) { cli_error("scan", "--shard-from-top needs --shard"); goto done; }
    o.shard_from_top = from_top;
    if (task) {
        if (!strcmp(task, "classify")) o.opt.task = TASK_CLASSIFY;
        else if (!strcmp(task, "regress")) o.opt.task = TASK_REGRESS;
        else { cli_error("scan", "--task must be classify or regress, got '%s'", task); goto done; }
        if (!target) { cli_error("scan", "--task needs --target"); goto done; }
    }
    if (classes) {
        if ((v = cli_parse_count(classes)) < 2 || v > SUMMARY_MAX_CLASSES) {
            cli_error("scan", "--max-classes must be between 2 and %d, got '%s'", SUMMARY_MAX_CLASSES,
                      classes);
            goto done;
        }
        o.opt.max_classes = (uint32_t)v;
    }
    if (mem) {
        if ((v = cli_parse_size(mem)) < 1) {
            cli_error("scan", "--mem must be a size such as 512M or 4G, got '%s'", mem);
            goto done;
        }
        o.mem_limit_bytes = (uint64_t)v;
    } else {
        long pages = sysconf(_SC_PHYS_PAGES), page = sysconf(_SC_PAGESIZE);
        if (pages > 0 && page > 0) o.mem_limit_bytes = (uint64_t)pages * (uint64_t)page / 2;
    }
    if (missing) {
        summary_options_free(&o.opt); /* the target is set below */
        size_t n = 0;
        char **each = namelist_split(missing, &n); /* empty spellings skipped */
        if (!each) { cli_error("scan", "out of memory"); rc = EXIT_RESOURCE; goto done; }
        for (size_t i = 0; i < n; i++) {
            const char *t = each[i];
            if (!*t) continue;
            if (o.opt.n_missing == SUMMARY_MAX_MISSING) {
                cli_error("scan", "--missing takes at most %d spellings", SUMMARY_MAX_MISSING);
                free(each);
                goto done;
            }
            if (strlen(t) > SUMMARY_MAX_MISSING_BYTES) {
                cli_error("scan", "--missing: a spelling is at most %d bytes, '%.20s...' has %zu",
                          SUMMARY_MAX_MISSING_BYTES, t, strlen(t));
                free(each);
                goto done;
            }
            o.opt.missing[o.opt.n_missing++] = strdup(t);
        }
        free(each);
    }
    if ((rc = cli_probe_output("scan", out)) != 0) goto done;
    rc = EXIT_USAGE;
    o.targets = target;
    o.seal_later = 1; /* sealed while written: summary_set_seal_write below */
    o.header = !no_header;
    o.strict = strict;
    o.force = force;
    cli_progress ps;
    cli_progress_start(&ps, "scan", quiet, 0);
    o.progress = cli_progress_update;
    o.progress_ctx = &ps;
    o.warn = warn_line;
    o.warn_ctx = &held;
    summary_set *set;
    char err[1024];
    scan_status st = scan_files_set(&o, (const char *const *)pos, npos, &set, err, sizeof err);
    cli_progress_end(&ps);
    if (st != SCAN_OK) {
        cli_error("scan", "%s", err);
        rc = st == SCAN_ERR_USAGE    ? EXIT_USAGE
             : st == SCAN_ERR_MEMORY ? EXIT_RESOURCE
             : st == SCAN_ERR_DAMAGED ? EXIT_CORRUPT
             : st == SCAN_ERR_WRITE  ? EXIT_FAILED
                                     : EXIT_INPUT;
        goto done;
    }
    screen_options judged; /* the task is judged by screen's default kind rule */
    screen_options_defaults(&judged);
    for (size_t t = 0; t < set->n; t++)
        if (validity_task_fits(set->parts[t], judged.numeric_share, err, sizeof err) != 0) {
            if (npos > 1) cli_error("scan", "%s and %zu more: %s", pos[0], npos - 1, err);
            else cli_error("scan", "%s: %s", pos[0], err);
            summary_set_free(set);
            rc = EXIT_USAGE;
            goto done;
        }
    summary_status ws = summary_set_seal_write(set, out, o.threads, err, sizeof err);
    if (ws != SUMMARY_OK) {
        summary_set_free(set);
        cli_error("scan", "%s", err);
        rc = ws == SUMMARY_ERR_MEMORY ? EXIT_RESOURCE : EXIT_FAILED;
        goto done;
    }
    /* The summary is safe: the checkpoint has served (the one this scan
     * wrote or resumed from; none when shorter than one interval). */
    if (o.checkpoint && checkpoint_remove(o.checkpoint, &before, resume, err, sizeof err) != 0)
        cli_error("scan", "warning: %s", err);
    print_warnings(&held);
    if (shard && !from_top)
        for (size_t i = 0; i < summary_source_count(set->parts[0]); i++) {
            const summary_source *src = summary_source_at(set->parts[0], i);
            if (src->shard_rule == SHARD_START_PREFIX && src->start_byte > 4)
                fprintf(stderr,
                        "sheaf scan: note: %s shard %u/%u: the bytes after byte %llu did not "
                        "tell where its first record begins; found it from the top of the file "
                        "(read %llu bytes in all)\n", src->path, src->shard_index,
                        src->shard_count, (unsigned long long)src->start_byte,
                        (unsigned long long)src->read_bytes);
        }
    scan_notes_print(stderr, set->parts[0], judged.numeric_share, quiet);
    scan_notes_closing(&ps, set->parts[0]);
    summary_set_free(set);
    rc = EXIT_DONE;
done:
    free(held.text);
    free(pos);
    summary_options_free(&o.opt);
    return rc;
}
