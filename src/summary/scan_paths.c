/* scan_paths: files by path into a scan context (see scan.h): a shard
 * (scan_shard.c), or several files in turn, decompressed ahead, with
 * checkpoints. */
#include "io/message.h"
#include "summary/scan_context.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include <fcntl.h>
#include <unistd.h>

#include "io/source.h"

scan_status scan_path(scan_context *sc, const char *path)
{
    if (sc->o.shard_count) return scan_shard(sc, path);
    if (!sc->prefix) return scan_file_range(sc, path, 0, 0);
    /* Checkpoints: restart points, and a resumed file moved to its point. */
    if (sc->failed) return sc->failed;
    errno = 0;
    source *src = source_open(path, sc->err, sizeof sc->err);
    if (!src) return scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, NULL);
    scan_status st = scan_prime_source(sc, src, sc->file_index);
    if (st == SCAN_OK) st = scan_source_checked(sc, src);
    source_close(src);
    return st;
}

/* Files in turn, each decompressed ahead on a thread of its own (a file and
 * the next at once), READ_AHEAD_CHUNKS chunks ahead at most.  A file that
 * cannot be opened fails when its turn comes, as it would in turn.  Only
 * from READ_AHEAD_MIN_THREADS workers on: below, the reading thread keeps up
 * (on 2 cores at -j2, four gzip files took 13% longer with read-ahead, its
 * threads competing with the workers for the same cores). */
#define READ_AHEAD_CHUNKS 2
#define READ_AHEAD_MIN_THREADS 3

static source *open_ahead(scan_context *sc, const char *path, size_t index, char *err,
                          size_t errlen, int *nomem)
{
    errno = 0;
    source *src = source_open(path, err, errlen);
    *nomem = !src && errno == ENOMEM;
    if (src && sc->prefix && scan_prime_source(sc, src, index) != SCAN_OK) {
        source_close(src);
        message_printf(err, errlen, "%s", sc->err);
        *nomem = sc->failed == SCAN_ERR_MEMORY;
        return NULL;
    }
    if (src && source_read_ahead(src, READ_AHEAD_CHUNKS * sc->o.chunk_bytes) != 0) {
        source_close(src);
        message_printf(err, errlen, "%s: out of memory: the read-ahead thread", path);
        *nomem = 1;
        return NULL;
    }
    return src;
}

static scan_status read_ahead(scan_context *sc, const char *const *paths, size_t npaths)
{
    char next_err[sizeof sc->err];
    int next_nomem = 0;
    size_t first = (size_t)(paths - sc->paths);
    source *next = npaths ? open_ahead(sc, paths[0], first, next_err, sizeof next_err, &next_nomem)
                          : NULL;
    scan_status st = SCAN_OK;
    for (size_t i = 0; st == SCAN_OK && i < npaths; i++) {
        source *src = next;
        if (!src) {
            st = scan_fail(sc, next_nomem ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, next_err);
            break;
        }
        next = i + 1 < npaths ? open_ahead(sc, paths[i + 1], first + i + 1, next_err,
                                           sizeof next_err, &next_nomem)
                              : NULL;
        sc->file_index = first + i;
        st = sc->prefix ? scan_source_checked(sc, src) : scan_source(sc, src);
        source_close(src);
    }
    source_close(next);
    return st;
}

/* ---- checkpoints -----------------------------------------------------------
 *
 * A resumed scan reads the checkpoint (summary/checkpoint.h), checks it
 * against the command (options, files) and the files already consumed (size
 * and modification time; the raw XXH3-64 of the finished files, read again),
 * takes its merged summaries as the finished segments, and opens the current
 * file.  scan_prime_source moves it towards the checkpoint's offset: a gzip
 * file to the checkpoint's restart point (the raw prefix read and its hash
 * checked, the decoder restored), a plain file to the offset itself (its
 * bytes hashed on the way); scan_source_checked (scan.c) then reads the
 * header apart, decodes the rest up to the offset into the prefix hash, and
 * starts the reader there.  Without a usable point (zstd, an old checkpoint,
 * another build's point) the file is read from its start: the reader cuts
 * the same chunks, the chunks before the offset are hashed and dropped
 * without being tokenized (scan.c, drain).  Either way the decompressed
 * prefix hash is checked at the offset (scan_resume_here) and the scan goes
 * on in exactly the state the killed scan had after writing the checkpoint. */

/* SHEAF_TEST_RESTART (tests and measurements only; not in --help): a list
 * of words.  "off": restart points are not used (the resume fast-forwards
 * from byte 0, as before them); "stale": they are taken for another
 * build's; "note": a warning says where the resumed file continued. */
static int restart_knob(const char *word)
{
    const char *v = getenv("SHEAF_TEST_RESTART");
    return v && strstr(v, word) != NULL;
}

static void restart_note(scan_context *sc, const char *line)
{
    if (sc->o.warn && restart_knob("note")) sc->o.warn(sc->o.warn_ctx, line);
}

scan_status scan_prime_source(scan_context *sc, source *src, size_t index)
{
    if (source_keep_marks(src, sc->o.chunk_bytes) != 0)
        return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory: restart points");
    if (!sc->skipping || index != sc->skip_file) return SCAN_OK;
    source_restored r = SOURCE_MARK_STALE;
    uint64_t from = sc->skip_to;
    const char *why = "switched off";
    if (restart_knob("off")) {
        r = SOURCE_MARK_STALE;
    } else if (source_kind(src) == SOURCE_GZIP) {
        why = !sc->restart ? "none in the checkpoint" : "another build's";
        if (sc->restart && !restart_knob("stale") &&
            scan_hash_load(sc->jump_hash, sc->restart_hash, sc->restart_hash_len) == 0)
            r = source_restore(src, sc->restart, sc->restart_len, &from);
    } else if (source_kind(src) == SOURCE_PLAIN) {
        why = "the offset lies in the first read";
        r = source_skip_plain(src, sc->skip_to, sc->jump_hash, sizeof *sc->jump_hash);
    } else {
        why = "zstd is fast-forwarded";
    }
    if (r == SOURCE_MARK_STALE) {
        char line[160];
        snprintf(line, sizeof line, "test note: no restart point used (%s); the file is read "
                 "from byte 0", why);
        restart_note(sc, line);
        return SCAN_OK;
    }
    if (r == SOURCE_MARK_FAILED) return scan_fail(sc, SCAN_ERR_INPUT, source_error(src));
    if (r == SOURCE_MARK_DIFFERS) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: its first %llu raw bytes differ from those checkpoint %s was written "
                       "after (the file changed); start again without {resume}", source_path(src),
                       (unsigned long long)source_raw_offset(src), sc->o.checkpoint);
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    sc->jump = 1;
    sc->jump_from = from;
    char line[128];
    snprintf(line, sizeof line, "test note: resumed at raw byte %llu, decoded byte %llu",
             (unsigned long long)source_raw_offset(src), (unsigned long long)from);
    restart_note(sc, line);
    return SCAN_OK;
}

/* A value of the options text as the user wrote it: the task by name, the
 * missing spellings without their lengths (checkpoint_options_text). */
static void shown_value(const char *key, int klen, const char *v, int vlen, char *out,
                        size_t len)
{
    static const char *const tasks[] = {"(decided when read)", "classify", "regress"};
    if (klen == 4 && !memcmp(key, "task", 4) && vlen == 1 && v[0] >= '0' && v[0] <= '2') {
        snprintf(out, len, "%s", tasks[v[0] - '0']);
        return;
    }
    if (klen == 7 && !memcmp(key, "missing", 7)) { /* "2:NA,3:N/A": lengths, then spellings */
        size_t used = 0;
        const char *p = v, *end = v + vlen;
        out[0] = '\0';
        while (p < end && used + 1 < len) {
            char *colon;
            unsigned long n = strtoul(p, &colon, 10);
            if (colon >= end || *colon != ':' || n > (size_t)(end - colon - 1)) break;
            if (p != v) out[used++] = ',';
            for (unsigned long i = 0; i < n && used + 3 < len; i++) { /* as --missing takes it */
                char ch = colon[1 + i];
                if (ch == ',' || ch == '\\') out[used++] = '\\';
                out[used++] = ch;
            }
            out[used] = '\0';
            p = colon + 1 + n + 1; /* past the comma */
        }
        if (!vlen) snprintf(out, len, "(none)");
        return;
    }
    snprintf(out, len, "%.*s", vlen, v);
}

/* The first line where two "key=value\n" texts differ, into a message. */
static void first_difference(const char *then, const char *now, char *out, size_t len)
{
    while (*then && *now) {
        const char *e1 = strchr(then, '\n'), *e2 = strchr(now, '\n');
        if (!e1 || !e2) break;
        if (e1 - then != e2 - now || memcmp(then, now, (size_t)(e1 - then)) != 0) {
            const char *k = memchr(then, '=', (size_t)(e1 - then));
            int klen = k ? (int)(k - then) : 0;
            char was[1024], is[1024];
            shown_value(then, klen, then + klen + 1, (int)(e1 - then - klen - 1), was, sizeof was);
            shown_value(now, klen, now + klen + 1, (int)(e2 - now - klen - 1), is, sizeof is);
            snprintf(out, len, "{%.*s} was %s there and is %s here", klen, then, was, is);
            return;
        }
        then = e1 + 1;
        now = e2 + 1;
    }
    snprintf(out, len, "their options differ");
}

static scan_status refuse(scan_context *sc, scan_status st, checkpoint *c)
{
    checkpoint_free(c);
    return scan_fail(sc, st, NULL);
}

/* Segments for o.checkpoint, and the state to resume from with o.resume.
 * *start: the index of the first file to read. */
static scan_status prepare_checkpoints(scan_context *sc, const char *const *paths, size_t npaths,
                                       size_t *start)
{
    const char *path = sc->o.checkpoint;
    *start = 0;
    if (sc->o.shard_count) {
        snprintf(sc->err, sizeof sc->err, "{checkpoint} and {shard} do not go together: a shard "
                 "is one piece of a larger scan, resumed by scanning it again");
        return scan_fail(sc, SCAN_ERR_USAGE, NULL);
    }
    for (size_t i = 0; i < npaths; i++) {
        if (!strcmp(paths[i], "-")) {
            snprintf(sc->err, sizeof sc->err,
                     "{checkpoint} needs files: standard input cannot be read again to resume");
            return scan_fail(sc, SCAN_ERR_USAGE, NULL);
        }
        /* A pipe under a name (/dev/stdin, a FIFO, <(...)) cannot be read
         * again either: a resume would only ever find it changed. */
        struct stat st;
        if (stat(paths[i], &st) == 0 && !S_ISREG(st.st_mode) && !S_ISBLK(st.st_mode)) {
            snprintf(sc->err, sizeof sc->err,
                     "%.1024s: {checkpoint} needs files that can be read again to resume, and "
                     "this is a %s", paths[i],
                     S_ISFIFO(st.st_mode) ? "pipe" : S_ISDIR(st.st_mode) ? "directory"
                     : S_ISSOCK(st.st_mode) ? "socket" : "device");
            return scan_fail(sc, SCAN_ERR_USAGE, NULL);
        }
    }
    if (!sc->o.checkpoint_bytes) sc->o.checkpoint_bytes = SCAN_CHECKPOINT_BYTES;
    sc->paths = paths;
    sc->npaths = npaths;
    sc->file_prints = calloc(npaths ? npaths : 1, sizeof *sc->file_prints);
    sc->options_text = checkpoint_options_text(&sc->o);
    sc->prefix = XXH3_createState();
    sc->jump_hash = XXH3_createState();
    int points = 1;
    for (size_t k = 0; k < SCAN_POINTS; k++)
        if (!(sc->point_hash[k] = XXH3_createState())) points = 0;
    if (!sc->file_prints || !sc->options_text || !sc->prefix || !sc->jump_hash || !points)
        return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    XXH3_64bits_reset(sc->prefix);
    XXH3_64bits_reset(sc->jump_hash);
    char why[sizeof sc->err - 600];
    checkpoint_status ps = checkpoint_probe(path, why, sizeof why);
    if (ps != CHECKPOINT_OK)
        return scan_fail(sc, ps == CHECKPOINT_MEMORY ? SCAN_ERR_MEMORY : SCAN_ERR_WRITE, why);
    if (!sc->o.resume) return SCAN_OK;
    checkpoint c;
    checkpoint_status cs = checkpoint_read(path, &c, why, sizeof why);
    if (cs == CHECKPOINT_MISSING) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: no checkpoint to resume from (no such file); run without {resume} to "
                       "start from the beginning", path);
        return scan_fail(sc, SCAN_ERR_USAGE, NULL);
    }
    if (cs != CHECKPOINT_OK)
        return scan_fail(sc, cs == CHECKPOINT_DAMAGED ? SCAN_ERR_DAMAGED
                             : cs == CHECKPOINT_MEMORY ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, why);
    if (strcmp(c.options, sc->options_text) != 0) {
        first_difference(c.options, sc->options_text, why, sizeof why);
        message_printf(sc->err, sizeof sc->err,
                       "%s: written by a scan with other options (%s); resume with the same "
                       "options, or start again without {resume}", path, why);
        return refuse(sc, SCAN_ERR_USAGE, &c);
    }
    if (c.nfiles != npaths) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: written by a scan of %zu files, this one reads %zu; resume with the "
                       "same files, or start again without {resume}", path, c.nfiles, npaths);
        return refuse(sc, SCAN_ERR_USAGE, &c);
    }
    for (size_t i = 0; i < npaths; i++)
        if (strcmp(c.files[i].path, paths[i]) != 0) {
            message_printf(sc->err, sizeof sc->err,
                           "%s: file %zu of its scan was %.1024s, here it is %.1024s; resume with "
                           "the same files, or start again without {resume}", path, i + 1,
                           c.files[i].path, paths[i]);
            return refuse(sc, SCAN_ERR_USAGE, &c);
        }
    for (size_t i = 0; i <= c.file_index; i++) {
        struct stat fs;
        if (stat(paths[i], &fs) != 0) {
            snprintf(sc->err, sizeof sc->err, "%.1024s: cannot stat: %s", paths[i], strerror(errno));
            return refuse(sc, SCAN_ERR_INPUT, &c);
        }
        int64_t mtime = (int64_t)fs.st_mtim.tv_sec * 1000000000 + fs.st_mtim.tv_nsec;
        const checkpoint_file *f = &c.files[i];
        uint64_t print = 0;
        const char *what = NULL;
        char detail[128] = "";
        if ((uint64_t)fs.st_size != f->size_bytes) {
            what = "its size";
            snprintf(detail, sizeof detail, " (%llu bytes then, %llu now)",
                     (unsigned long long)f->size_bytes, (unsigned long long)fs.st_size);
        } else if (mtime != f->mtime_ns) {
            what = "its modification time";
        } else if (i < c.file_index &&
                   (checkpoint_hash_file(paths[i], &print) != 0 || print != f->fingerprint)) {
            what = "its bytes";
        }
        if (what) {
            snprintf(sc->err, sizeof sc->err, "%.1024s: %s changed since checkpoint %.1024s was "
                     "written%s; start again without {resume}", paths[i], what, path, detail);
            return refuse(sc, SCAN_ERR_INPUT, &c);
        }
        if (i < c.file_index) {
            sc->file_prints[i] = f->fingerprint;
            sc->done_bytes += f->size_bytes;
        }
    }
    sc->done_set = c.done;
    c.done = NULL;
    sc->delim = c.delim;
    sc->ckpt_number = c.number;
    sc->skipping = 1;
    sc->skip_to = c.offset;
    sc->skip_hash = c.prefix_hash;
    sc->skip_lines = c.lines;
    sc->skip_rows = c.rows;
    sc->skip_file = c.file_index;
    sc->restart = c.restart;
    sc->restart_len = c.restart_len;
    sc->restart_hash = c.restart_hash;
    sc->restart_hash_len = c.restart_hash_len;
    c.restart = NULL;
    c.restart_hash = NULL;
    *start = c.file_index;
    checkpoint_free(&c);
    return SCAN_OK;
}

/* The paths into sc (see scan_files). */
static scan_status scan_all(scan_context *sc, const char *const *paths, size_t npaths)
{
    /* Sizes for the progress report, from the file system (nothing is read);
     * a resumed scan counts the files it does not read again as done. */
    sc->total_bytes = sc->done_bytes;
    for (size_t i = 0; i < npaths; i++) {
        struct stat st;
        if (strcmp(paths[i], "-") && stat(paths[i], &st) == 0 && S_ISREG(st.st_mode))
            sc->total_bytes += (uint64_t)st.st_size;
    }
    scan_status st = SCAN_OK;
    if (sc->o.shard_count || sc->threads < READ_AHEAD_MIN_THREADS) {
        for (size_t i = 0; st == SCAN_OK && i < npaths; i++) {
            sc->file_index = (size_t)(paths + i - sc->paths);
            st = scan_path(sc, paths[i]);
        }
    } else {
        st = read_ahead(sc, paths, npaths);
    }
    return st;
}

static scan_context *files_context(const scan_options *o, size_t npaths, char *err,
                                   size_t errlen, scan_status *st)
{
    if (o->shard_count && npaths != 1) {
        snprintf(err, errlen, "{shard} reads exactly one file (got %zu)", npaths);
        *st = SCAN_ERR_USAGE;
        return NULL;
    }
    scan_context *sc = scan_create(o);
    if (!sc) { snprintf(err, errlen, "out of memory"); *st = SCAN_ERR_MEMORY; }
    return sc;
}

/* scan_files and scan_files_set: exactly one of one and set is not NULL. */
static scan_status files(const scan_options *o, const char *const *paths, size_t npaths,
                         summary **one, summary_set **set, char *err, size_t errlen)
{
    scan_status st = SCAN_OK;
    scan_context *sc = files_context(o, npaths, err, errlen, &st);
    if (!sc) return st;
    size_t start = 0;
    sc->paths = paths;
    if (o->checkpoint) st = prepare_checkpoints(sc, paths, npaths, &start);
    if (st == SCAN_OK) st = scan_all(sc, paths + start, npaths - start);
    if (st == SCAN_OK) {
        if (one) *one = scan_finish(sc);
        else *set = scan_finish_set(sc);
        st = sc->failed;
    }
    if (st != SCAN_OK) message_printf(err, errlen, "%s", sc->err);
    scan_free(sc);
    return st;
}

scan_status scan_files(const scan_options *o, const char *const *paths, size_t npaths,
                       summary **out, char *err, size_t errlen)
{
    *out = NULL;
    return files(o, paths, npaths, out, NULL, err, errlen);
}

scan_status scan_files_set(const scan_options *o, const char *const *paths, size_t npaths,
                           summary_set **out, char *err, size_t errlen)
{
    *out = NULL;
    return files(o, paths, npaths, NULL, out, err, errlen);
}
