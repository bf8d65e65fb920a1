/* fuzz_scan_threads: the threaded scan (summary/chunks) against the scan on
 * one thread, on any bytes.
 *
 * summary/scan.h promises that the thread count changes nothing in a
 * summary: the same bytes are written for every -j, and a failing scan fails
 * with the same message.  For every input (at most 8 KiB) this harness
 * writes the bytes to a file and scans it with small chunks (64 .. 575
 * bytes, from an FNV-1a hash of the input, so that an input is many chunks
 * and the tasks of several are in flight at once):
 *   - on one thread (threads = 1: no workers, everything on the caller);
 *   - on 2 threads, and on 3 for a quarter of the inputs;
 * and compares the summary files byte for byte, or the status and the
 * message of the failure.  The one-thread scan is sealed, then written
 * (summary_write); the threaded scans are written as `sheaf scan` writes
 * them, sealed while written (summary_set_seal_write).  The delimiter is detected; some
 * inputs run with a target (the last column, when its values are few) and
 * some with a small --max-record, from the hash as in fuzz_scan_split.c.
 * Half of the inputs are written compressed instead, as gzip of one to three
 * members or as zstd, with one byte of the compressed bytes flipped for half
 * of those: a damaged stream must fail with the same message on every
 * thread count (3 threads decode ahead on a thread of their own, in larger
 * reads), and whatever it held before the damage must be read first.
 * Reference: sheaf's own scan on one thread (the whole-file and shard scans
 * are checked against each other by fuzz_scan_split.c, and the summary
 * against outside references by the unit and reference suites).
 *
 * A disagreement prints both outcomes and aborts, so libFuzzer keeps the
 * input.  Built with -DFUZZ_REPLAY_MAIN it is a plain program:
 * `replay_scan_threads FILE_OR_DIR...` runs every file once with 2 and 3
 * threads.
 */
#include <dirent.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include <zlib.h>
#include <zstd.h>

#include "summary/scan.h"
#include "summary/summary.h"

#define MAX_INPUT_BYTES 8192

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* The input file and one summary file per run, under TMPDIR. */
static char dir_path[4096], input_path[4200], out_path[4][4200];

static void remove_files(void)
{
    if (!dir_path[0]) return;
    unlink(input_path);
    for (int i = 0; i < 4; i++) unlink(out_path[i]);
    rmdir(dir_path);
}

static void fault(const char *fmt, ...) __attribute__((format(printf, 1, 2), noreturn));
static void fault(const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    fprintf(stderr, "fuzz_scan_threads: ");
    vfprintf(stderr, fmt, ap);
    fprintf(stderr, "\n");
    va_end(ap);
    remove_files(); /* abort() skips atexit handlers */
    abort();
}

static int make_files(void)
{
    if (dir_path[0]) return 0;
    const char *tmp = getenv("TMPDIR");
    snprintf(dir_path, sizeof dir_path, "%s/fuzz_scan_threads.XXXXXX", tmp && *tmp ? tmp : "/tmp");
    if (!mkdtemp(dir_path)) {
        dir_path[0] = '\0';
        return -1;
    }
    snprintf(input_path, sizeof input_path, "%s/in.csv", dir_path);
    for (int i = 0; i < 4; i++) snprintf(out_path[i], sizeof out_path[i], "%s/%d.sheaf", dir_path, i);
    atexit(remove_files);
    return 0;
}

static uint64_t fnv1a(const uint8_t *p, size_t n)
{
    uint64_t h = 1469598103934665603ull;
    for (size_t i = 0; i < n; i++) h = (h ^ p[i]) * 1099511628211ull;
    return h;
}

/* One scan: the summary file's bytes, or the failure. */
typedef struct {
    scan_status st;    /* SCAN_OK or the failure */
    char err[600];     /* its message */
    uint8_t *bytes;    /* the summary file when SCAN_OK */
    size_t len;        /* its length */
    summary *s;        /* the summary (kept for the target choice) */
} outcome;

static uint8_t *read_whole(const char *path, size_t *len)
{
    FILE *f = fopen(path, "rb");
    if (!f) return NULL;
    size_t cap = 1 << 16, n = 0;
    uint8_t *p = malloc(cap);
    while (p) {
        n += fread(p + n, 1, cap - n, f);
        if (n < cap) break;
        uint8_t *q = realloc(p, cap *= 2);
        if (!q) { free(p); p = NULL; break; }
        p = q;
    }
    fclose(f);
    *len = n;
    return p;
}

static void scan_with(const scan_options *base, unsigned threads, int slot, outcome *r)
{
    scan_options o = *base;
    o.threads = threads;
    const char *paths[1] = {input_path};
    r->err[0] = '\0';
    r->s = NULL;
    r->bytes = NULL;
    r->len = 0;
    char e[512];
    if (threads == 1) { /* sealed by the scan, then written */
        r->st = scan_files(&o, paths, 1, &r->s, r->err, sizeof r->err);
        if (r->st != SCAN_OK) return;
        if (summary_write(r->s, out_path[slot], e, sizeof e) != SUMMARY_OK)
            fault("summary_write %s: %s", out_path[slot], e);
    } else { /* as `sheaf scan` does: left unsealed, sealed while written */
        o.seal_later = 1;
        summary_set *set = NULL;
        r->st = scan_files_set(&o, paths, 1, &set, r->err, sizeof r->err);
        if (r->st != SCAN_OK) return;
        if (summary_set_seal_write(set, out_path[slot], threads, e, sizeof e) != SUMMARY_OK)
            fault("summary_set_seal_write %s: %s", out_path[slot], e);
        if (!summary_sealed(set->parts[0])) fault("not sealed after summary_set_seal_write");
        r->s = summary_set_take(set, 0);
        summary_set_free(set);
    }
    r->bytes = read_whole(out_path[slot], &r->len);
    if (!r->bytes) fault("cannot read back %s", out_path[slot]);
}

static void outcome_free(outcome *r)
{
    summary_free(r->s);
    free(r->bytes);
    r->s = NULL;
    r->bytes = NULL;
}

static void compare(const outcome *one, const outcome *many, unsigned threads, size_t chunk)
{
    if (one->st != many->st || strcmp(one->err, many->err) != 0)
        fault("%zu-byte chunks: 1 thread ends with %d \"%s\", %u threads with %d \"%s\"", chunk,
              one->st, one->err, threads, many->st, many->err);
    if (one->st != SCAN_OK) return;
    if (one->len != many->len || memcmp(one->bytes, many->bytes, one->len) != 0) {
        size_t at = 0;
        while (at < one->len && at < many->len && one->bytes[at] == many->bytes[at]) at++;
        fault("%zu-byte chunks: the summary of 1 thread (%zu bytes) and of %u threads (%zu bytes) "
              "differ from byte %zu",
              chunk, one->len, threads, many->len, at);
    }
}

/* The last column as the target, when its name is unique and its values
 * are few (as fuzz_scan_split.c picks it). */
static char *pick_target(const summary *s)
{
    if (s->ncols < 2) return NULL;
    const summary_column *c = &s->cols[s->ncols - 1];
    if (values_overflowed(c->vals) || strchr(c->name, ',')) return NULL;
    for (size_t j = 0; j + 1 < s->ncols; j++)
        if (strcmp(s->cols[j].name, c->name) == 0) return NULL;
    return strdup(c->name);
}

/* data as gzip members (cut at the given points) into out; its length. */
static size_t gzip_members(const uint8_t *data, size_t size, const size_t *cuts, int ncuts,
                           uint8_t *out, size_t cap)
{
    size_t used = 0, from = 0;
    for (int k = 0; k <= ncuts; k++) {
        size_t to = k < ncuts ? cuts[k] : size;
        z_stream z;
        memset(&z, 0, sizeof z);
        if (deflateInit2(&z, 6, Z_DEFLATED, 31, 8, Z_DEFAULT_STRATEGY) != Z_OK) fault("deflateInit2");
        z.next_in = (Bytef *)(data + from);
        z.avail_in = (uInt)(to - from);
        z.next_out = out + used;
        z.avail_out = (uInt)(cap - used);
        if (deflate(&z, Z_FINISH) != Z_STREAM_END) fault("deflate");
        used = cap - z.avail_out;
        deflateEnd(&z);
        from = to;
    }
    return used;
}

/* The input file: the bytes as they are, or compressed (and maybe damaged),
 * as the hash says. */
static void write_input(const uint8_t *data, size_t size, uint64_t h)
{
    static uint8_t packed[2 * MAX_INPUT_BYTES + 4096];
    const uint8_t *bytes = data;
    size_t len = size;
    unsigned form = (unsigned)(h >> 58 & 3); /* 0, 3: plain; 1: gzip; 2: zstd */
    if (form == 1) {
        size_t cuts[2] = {size / 3, 2 * size / 3};
        int ncuts = (int)(h >> 20 & 3) % 3;
        if (ncuts == 1) cuts[0] = size / 2;
        len = gzip_members(data, size, cuts, ncuts, packed, sizeof packed);
        bytes = packed;
    } else if (form == 2) {
        len = ZSTD_compress(packed, sizeof packed, data, size, 3);
        if (ZSTD_isError(len)) fault("ZSTD_compress: %s", ZSTD_getErrorName(len));
        bytes = packed;
    }
    if (bytes == packed && (h >> 61 & 1) && len > 0)
        packed[(h >> 8) % len] ^= (uint8_t)(1u << (h >> 24 & 7)); /* one bit of one byte */
    FILE *f = fopen(input_path, "wb");
    if (!f || fwrite(bytes, 1, len, f) != len || fclose(f) != 0) fault("cannot write %s", input_path);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    if (size > MAX_INPUT_BYTES) size = MAX_INPUT_BYTES;
    if (make_files() != 0) fault("cannot make a directory under TMPDIR");
    uint64_t h = fnv1a(data, size);
    write_input(data, size, h);
    size_t chunk = 64 + (h & 0xffff) % 512;

    scan_options base;
    scan_options_defaults(&base);
    base.opt.max_levels = 64;
    base.opt.label_bytes = 16;
    base.opt.bucket_budget = 64;
    base.chunk_bytes = chunk;
    base.mem_limit_bytes = 64u << 20;
    if ((h >> 32 & 3) == 0) base.max_record_bytes = 16 + (h >> 40) % 256;

    outcome one;
    scan_with(&base, 1, 0, &one);
    char *target = one.st == SCAN_OK && (h >> 48 & 1) ? pick_target(one.s) : NULL;
    if (target) {
        outcome_free(&one);
        base.opt.target = target;
        scan_with(&base, 1, 0, &one);
    }
    const char *all_env = getenv("SHEAF_FUZZ_ALL_SPLITS");
    int all = all_env && strcmp(all_env, "1") == 0;
    unsigned most = all || (h >> 56 & 3) == 0 ? 3 : 2;
    for (unsigned t = 2; t <= most; t++) {
        outcome many;
        scan_with(&base, t, (int)t, &many);
        compare(&one, &many, t, chunk);
        outcome_free(&many);
    }
    outcome_free(&one);
    summary_options_free(&base.opt); /* frees the target too */
    return 0;
}

#ifdef FUZZ_REPLAY_MAIN
#define FUZZ_REPLAY_SETUP() setenv("SHEAF_FUZZ_ALL_SPLITS", "1", 0) /* every split */
#include "replay_main.h"
#endif
