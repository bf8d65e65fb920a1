/* scan: see scan.h.
 *
 * The calling thread reads: source -> reader_next_chunk (decompressed bytes
 * cut into chunks of whole records by the bytes alone) -> the stream's first
 * record (the header, which fixes the schema; read raw, so the chunk is left
 * as it is) -> summary/chunks, which tokenizes the chunks and feeds their
 * rows to the summary, on the worker threads or on this one.  The summary is
 * the same, byte for byte, for any thread count (summary/chunks.h).
 */
#include "summary/scan.h"
#include "summary/scan_context.h"

#include <errno.h>
#include <fcntl.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#include "io/chunk.h"
#include "io/message.h"
#include "io/namelist.h"
#include "io/number.h"
#include "io/number_simd.h"
#include "io/pipeline.h"
#include "summary/chunks.h"
#include "io/reader.h"
#include "summary/block.h"
#include "summary/column.h"
#include "summary/format.h"
#include "summary/schema.h"

_Static_assert(CHUNK_PADDING >= CSV_READ_AHEAD && CHUNK_PADDING >= NUMBER_READ_AHEAD,
               "chunks must be readable past their end");
_Static_assert(READER_MAX_MISSING >= SUMMARY_MAX_MISSING, "every missing spelling fits");

void scan_options_defaults(scan_options *o)
{
    memset(o, 0, sizeof *o);
    summary_options_defaults(&o->opt);
    o->header = 1;
    o->chunk_bytes = 256u << 10;
    o->max_record_bytes = 64u << 20;
}


scan_status scan_fail(scan_context *sc, scan_status st, const char *msg)
{
    if (msg) message_printf(sc->err, sizeof sc->err, "%s", msg);
    sc->failed = st;
    return st;
}

/* ---- the reading thread ---------------------------------------------------- */

/* Resident bytes of the process (/proc/self/statm), 0 when unknown.  The
 * file stays open for the scan: a read at offset 0 makes the kernel write it
 * anew, and opening it for each of a scan's thousand chunks cost more than
 * the read. */
static uint64_t resident_bytes(scan_context *sc)
{
    if (sc->statm_fd < 0) sc->statm_fd = open("/proc/self/statm", O_RDONLY | O_CLOEXEC);
    if (sc->statm_fd < 0) return 0;
    char buf[128];
    ssize_t got = pread(sc->statm_fd, buf, sizeof buf - 1, 0);
    if (got <= 0) return 0;
    buf[got] = '\0';
    unsigned long long size = 0, resident = 0;
    int n = sscanf(buf, "%llu %llu", &size, &resident);
    long page = sysconf(_SC_PAGESIZE);
    return n == 2 && page > 0 ? (uint64_t)resident * (uint64_t)page : 0;
}

/* A byte count for a message, in the unit that shows its size: "512 bytes",
 * "3.5 KiB", "20 MiB" (no decimals when whole).  Returns buf. */
static const char *show_bytes(double bytes, char *buf, size_t len)
{
    double unit = bytes < 1024 ? 1 : bytes < 1048576 ? 1024 : 1048576, x = bytes / unit;
    const char *name = unit == 1 ? (x == 1 ? "byte" : "bytes") : unit == 1024 ? "KiB" : "MiB";
    snprintf(buf, len, x == floor(x) ? "%.0f %s" : "%.1f %s", x, name);
    return buf;
}

/* --mem, during the scan: what the scan added to the process's resident
 * memory since it was created, checked after every chunk the reading thread
 * hands on.  The structures that grow with the data (value tables, bucket
 * stores, per-value class tables, chunk buffers of long records) are
 * bounded by their options, not by the limit; this check stops the scan
 * when their sum passes it. */
static scan_status within_limit(scan_context *sc, int before_rows)
{
    if (!sc->o.mem_limit_bytes) return SCAN_OK;
    uint64_t now = resident_bytes(sc);
    if (!now || now <= sc->rss_base || now - sc->rss_base <= sc->o.mem_limit_bytes) return SCAN_OK;
    char held[32], limit[32];
    show_bytes((double)(now - sc->rss_base), held, sizeof held);
    show_bytes((double)sc->o.mem_limit_bytes, limit, sizeof limit);
    if (before_rows)
        message_printf(sc->err, sizeof sc->err, "%s: the scan holds %s at its first record (the "
                       "accumulators of %zu columns, with %u target classes at most, and the chunk "
                       "that holds the record: a long one is bounded by {max_record}), above the "
                       "%s memory limit ({mem_limit})", sc->name ? sc->name : "input", held,
                       sc->run ? sc->run->ncols : (size_t)0,
                       sc->run && sc->run->target >= 0 ? sc->o.opt.max_classes : 0, limit);
    else
        message_printf(sc->err, sizeof sc->err, "%s: byte %llu: the scan holds %s (its "
                       "accumulators, chunk buffers and co-moments), above the %s memory limit "
                       "({mem_limit})", sc->name ? sc->name : "input",
                       (unsigned long long)sc->pushed_bytes, held, limit);
    return scan_fail(sc, SCAN_ERR_MEMORY, NULL);
}

int scan_start_work(scan_context *sc)
{
    chunks_options co = {sc->runs, sc->nruns, sc->field_of, sc->file_fields, sc->o.header, sc->o.strict,
                         &sc->ro, &sc->missing, sc->threads,
                         sc->src && source_kind(sc->src) != SOURCE_PLAIN};
    sc->work = chunks_create(&co);
    if (!sc->work) return -1;
    if (sc->open) chunks_stream(sc->work, sc->shown, sc->stop_at, sc->blank_lines);
    return 0;
}

/* The chunks failed: their failure becomes the scan's. */
scan_status scan_worked(scan_context *sc, scan_status st)
{
    message_printf(sc->err, sizeof sc->err, "%s", chunks_error(sc->work));
    sc->failed = st;
    return st;
}

/* The target names: opt.target, or the list in `targets`, taken whole when
 * it is a header name, else split by io/namelist's rule.  Each name once. */
static scan_status resolve_targets(scan_context *sc, char **names, size_t nnames)
{
    const char *list = sc->o.targets;
    if (list && sc->o.opt.target)
        return scan_fail(sc, SCAN_ERR_USAGE, "scan options: set opt.target or targets, not both");
    if (!list) list = sc->o.opt.target;
    if (!list) return SCAN_OK;
    int whole = !sc->o.targets;
    for (size_t i = 0; i < nnames && !whole; i++) whole = strcmp(names[i], list) == 0;
    size_t n = 1;
    char **split = whole ? NULL : namelist_split(list, &n);
    const char *const *each = whole ? &list : (const char *const *)split;
    sc->target_names = calloc(n, sizeof *sc->target_names);
    scan_status st = sc->target_names && (whole || split) ? SCAN_OK
                     : scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    for (size_t i = 0; i < n && st == SCAN_OK; i++) {
        if (!each[i][0]) {
            snprintf(sc->err, sizeof sc->err,
                     "{target}: an empty name in '%s' (names are separated by commas)", list);
            st = scan_fail(sc, SCAN_ERR_USAGE, NULL);
        }
        for (size_t t = 0; st == SCAN_OK && t < sc->ntargets; t++)
            if (strcmp(sc->target_names[t], each[i]) == 0) {
                snprintf(sc->err, sizeof sc->err, "{target}: '%s' is named twice", each[i]);
                st = scan_fail(sc, SCAN_ERR_USAGE, NULL);
            }
        char *name = st == SCAN_OK ? strdup(each[i]) : NULL;
        if (name) sc->target_names[sc->ntargets++] = name;
        else if (st == SCAN_OK) st = scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    }
    free(split);
    return st;
}

/* Empty summaries for the scanned columns (sc->plan), one per target: the
 * first summary of a scan, and of each segment after a cut.  0, or -1 with
 * the message set. */
int scan_make_runs(scan_context *sc)
{
    sc->nruns = sc->ntargets ? sc->ntargets : 1;
    sc->runs = calloc(sc->nruns, sizeof *sc->runs);
    for (size_t t = 0; sc->runs && t < sc->nruns; t++) {
        /* The co-moments are fed into the first summary alone (scan_finish
         * copies them). */
        summary_options ot = sc->o.opt;
        ot.target = sc->ntargets ? sc->target_names[t] : NULL;
        if (!(sc->runs[t] = summary_create(&ot, sc->plan.n, sc->plan.cols, sc->plan.modes, t == 0)))
            break;
    }
    sc->run = sc->runs ? sc->runs[0] : NULL;
    if (!sc->runs || !sc->runs[sc->nruns - 1]) {
        snprintf(sc->err, sizeof sc->err, "out of memory: the accumulators of %zu columns%s",
                 sc->plan.n, sc->nruns > 1 ? " for each target" : "");
        return -1;
    }
    return 0;
}

/* The schema from the header names (summary/schema.h), then the summary and
 * its chunks (one summary per target). */
static scan_status setup(scan_context *sc, char **names, size_t nnames)
{
    scan_status st = resolve_targets(sc, names, nnames);
    if (st != SCAN_OK) return st;
    /* The plan with the first target; each other target checked the same way. */
    scan_options first = sc->o;
    first.opt.target = sc->ntargets ? sc->target_names[0] : NULL;
    const scan_options *o = &first;
    schema_plan plan;
    st = schema_plan_make(o, sc->first_path, sc->shown, names, nnames, &plan, sc->err,
                          sizeof sc->err);
    if (st != SCAN_OK) return st;
    for (size_t t = 1; t < sc->ntargets; t++) {
        scan_options other = first;
        other.opt.target = sc->target_names[t];
        other.warn = NULL; /* warned once above */
        schema_plan check;
        st = schema_plan_make(&other, sc->first_path, sc->shown, names, nnames, &check, sc->err,
                              sizeof sc->err);
        if (st != SCAN_OK) goto done;
        schema_plan_free(&check);
    }
    size_t n = plan.n;
    char **cols = plan.cols;
    column_mode *modes = plan.modes;
    size_t ncomo = 0;
    for (size_t j = 0; j < n; j++) ncomo += modes[j] != COLUMN_CATEGORICAL;
    uint64_t need = summary_comoment_bytes(ncomo);
    char needs[32], limit[32], chunk_s[32], total[32];
    show_bytes((double)o->mem_limit_bytes, limit, sizeof limit);
    if (o->mem_limit_bytes && need > o->mem_limit_bytes) {
        snprintf(sc->err, sizeof sc->err,
                 "the co-moment matrix of %zu numeric columns needs %s, above the %s "
                 "limit ({mem_limit}); restrict the columns with {columns}, {exclude} or "
                 "{categorical}, or raise the limit",
                 ncomo, show_bytes((double)need, needs, sizeof needs), limit);
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    /* The chunk buffers, each of two chunks (a chunk being cut and the next
     * being read): the reader's, and one per worker slot (the slots take the
     * reader's buffers in trade, chunks_push). */
    uint64_t nbuf = 2 * ((uint64_t)chunks_slots(sc->threads) + 1), chunk = o->chunk_bytes + 64;
    if (o->mem_limit_bytes && need + nbuf * chunk > o->mem_limit_bytes) {
        snprintf(sc->err, sizeof sc->err,
                 "the co-moment matrix (%s) and chunk buffers for %llu chunks of %s need "
                 "%s before any row, above the %s limit ({mem_limit}); lower {chunk_size} "
                 "or {threads}, or raise the limit",
                 show_bytes((double)need, needs, sizeof needs), (unsigned long long)nbuf,
                 show_bytes((double)chunk, chunk_s, sizeof chunk_s),
                 show_bytes((double)(need + nbuf * chunk), total, sizeof total), limit);
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    (void)cols;
    (void)modes;
    sc->field_of = plan.field_of;
    plan.field_of = NULL;
    sc->plan = plan;
    memset(&plan, 0, sizeof plan);
    if (scan_make_runs(sc) != 0) {
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    sc->file_fields = nnames;
    if (scan_start_work(sc) != 0) {
        snprintf(sc->err, sizeof sc->err,
                 "out of memory: the chunk buffers and worker threads of the scan");
        st = SCAN_ERR_MEMORY;
        goto done;
    }
    if (within_limit(sc, 1) != SCAN_OK) {
        st = SCAN_ERR_MEMORY;
        goto done;
    }
done:
    schema_plan_free(&plan);
    return st;
}

/* The first record of a stream: the header, or (no header) the width.  Its
 * fields are raw (the reading thread leaves the chunk as it is). */
static scan_status first_record(scan_context *sc, const csv_field *f, size_t nf)
{
    char *name = NULL;
    if (sc->run) {
        if (!sc->o.header) return SCAN_OK;
        /* Later sources: the header must match the first one's. */
        for (size_t i = 0; i < nf || i < sc->file_fields; i++) {
            int same = i < nf && i < sc->file_fields;
            if (same) {
                char *nb = realloc(name, f[i].len + 25);
                if (!nb) { free(name); return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory"); }
                name = nb;
                size_t n = reader_column_name(&f[i], i, 1, 1, name);
                same = strlen(sc->header[i]) == n && memcmp(sc->header[i], name, n) == 0;
            }
            if (!same) {
                free(name);
                char d[8];
                snprintf(d, sizeof d, sc->delim == '\t' ? "tab" : "'%c'", sc->delim);
                message_printf(sc->err, sizeof sc->err, "%s: header differs from %s's (%zu vs "
                               "%zu fields; first difference at field %zu; every file is read with "
                               "the first one's delimiter, %s)", sc->shown, sc->first_path, nf,
                               sc->file_fields, i + 1, d);
                return scan_fail(sc, SCAN_ERR_INPUT, NULL);
            }
        }
        free(name);
        return SCAN_OK;
    }
    char **names = calloc(nf ? nf : 1, sizeof *names);
    /* A scan of files resumed past the first one meets the header in a later
     * file: messages still name the first. */
    sc->first_path = strdup(sc->paths ? sc->paths[0] : sc->name);
    if (!names || !sc->first_path) goto oom;
    for (size_t i = 0; i < nf; i++) {
        names[i] = malloc(f[i].len + 25);
        if (!names[i]) goto oom;
        names[i][reader_column_name(&f[i], i, sc->o.header, 1, names[i])] = '\0';
    }
    for (size_t i = 0; i < nf; i++) /* the file format's limit: a summary must read back */
        if (strlen(names[i]) > MAX_NAME_BYTES) {
            message_printf(sc->err, sizeof sc->err, "%s: header field %zu is %zu bytes long; a "
                           "column name holds at most %d (is the first line a header?)", sc->name,
                           i + 1, strlen(names[i]), MAX_NAME_BYTES);
            for (size_t k = 0; k < nf; k++) free(names[k]);
            free(names);
            return scan_fail(sc, SCAN_ERR_INPUT, NULL);
        }
    sc->header = names;
    sc->file_fields = nf;
    scan_status st = setup(sc, names, nf);
    return st == SCAN_OK ? st : scan_fail(sc, st, NULL);
oom:
    if (names)
        for (size_t i = 0; i < nf; i++) free(names[i]);
    free(names);
    return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
}

/* A reading error (a record the chunker cannot hold, bad compressed data):
 * it lies after every chunk already pushed, so a failure among those comes
 * first in the stream and is the scan's, as on one thread, where each chunk
 * is done before the next is read. */
static scan_status reading_failed(scan_context *sc)
{
    if (sc->work) {
        scan_status st = chunks_wait(sc->work);
        if (st != SCAN_OK) return scan_worked(sc, st);
    }
    /* A record past the limit: its line, from the lines of the chunks before. */
    uint64_t lines = sc->at_first || !sc->work ? sc->blank_lines : chunks_lines(sc->work);
    if (reader_too_long_message(sc->rd, lines, sc->err, sizeof sc->err))
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    return scan_fail(sc, reader_out_of_memory(sc->rd) ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT,
                reader_error(sc->rd));
}

/* Looks for the stream's first record in a chunk, on the reading thread.
 * Sets *found when the chunk holds it. */
static scan_status head(scan_context *sc, const reader_chunk *ch, int *found)
{
    reader_record rec;
    *found = 0;
    const char *why = reader_not_text(sc->rd);
    if (why && !sc->o.force) {
        message_printf(sc->err, sizeof sc->err,
                       "%s: not text (%s in the first 64 KiB): a binary file, UTF-16, or a "
                       "compression sheaf does not read (it reads gzip and zstd); {force} reads it "
                       "anyway", sc->shown, why);
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    reader_cursor_start(&sc->head, ch, 0, 0);
    reader_status rs = reader_cursor_next(&sc->head, &rec);
    if (rs == READER_CHUNK_END) return SCAN_OK; /* blank lines only */
    if (rs == READER_ERROR) {
        /* The lines of the chunks before (blank ones) are counted once done. */
        uint64_t lines = 0;
        if (sc->work) {
            scan_status st = chunks_wait(sc->work);
            if (st != SCAN_OK) return scan_worked(sc, st);
            lines = chunks_lines(sc->work);
        }
        reader_cursor_message(&sc->head, sc->shown, lines, sc->err, sizeof sc->err);
        return scan_fail(sc, sc->head.fault == READER_FAULT_NOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT,
                    NULL);
    }
    scan_status st = first_record(sc, rec.fields, rec.nfields);
    if (st != SCAN_OK) return st;
    if (sc->o.header) { /* kept to recognize it where a compressed member begins */
        size_t hl = (size_t)(rec.eol - rec.text);
        char *p = realloc(sc->head_line, hl ? hl : 1);
        if (!p) return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
        memcpy(p, rec.text, hl);
        sc->head_line = p;
        sc->head_len = hl;
    }
    *found = 1;
    sc->at_first = 0;
    sc->first_end = rec.end;
    if (sc->header_only) sc->done = 1;
    return SCAN_OK;
}

/* The summaries of the scan (or of the open segment) settled: each
 * target's cells numbered in key order, the first summary's co-moments
 * copied into the others, all sealed.  0, or -1 (the scan's error set). */
int scan_settle_runs(scan_context *sc)
{
    if (scan_settle(sc->runs, sc->nruns, sc->threads, !sc->o.seal_later) == 0) return 0;
    scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    return -1;
}

int scan_settle(summary *const *runs, size_t n, unsigned threads, int seal)
{
    for (size_t t = 0; t < n; t++) {
        summary *s = runs[t];
        /* The continuous target's cells numbered in key order, every column
         * brought to that numbering (summary/tcells.h). */
        if (summary_target_cells_settle(s) != 0 ||
            (t > 0 && summary_copy_comoments(s, runs[0]) != 0) ||
            (seal && summary_seal_threads(s, threads) != 0))
            return -1;
    }
    return 0;
}

/* The decoded bytes [offset, offset + len) of the current stream into the
 * prefix hash, its state kept at each restart point of the source among
 * them (a checkpoint stores the one at its point: scan_cut). */
void scan_prefix_update(scan_context *sc, const char *data, size_t len, uint64_t offset)
{
    uint64_t at[SCAN_POINTS];
    size_t n = sc->src ? source_mark_offsets(sc->src, offset, offset + len, at, SCAN_POINTS) : 0;
    size_t done = 0;
    for (size_t i = 0; i < n; i++) {
        size_t cut = (size_t)(at[i] - offset);
        XXH3_64bits_update(sc->prefix, data + done, cut - done);
        done = cut;
        size_t k = sc->point_next;
        XXH3_copyState(sc->point_hash[k], sc->prefix);
        sc->point_at[k] = at[i];
        sc->point_next = (k + 1) % SCAN_POINTS;
    }
    XXH3_64bits_update(sc->prefix, data + done, len - done);
}

/* Hands every complete chunk of the reader to the chunks. */
static scan_status drain(scan_context *sc)
{
    while (!sc->done) {
        reader_chunk ch;
        reader_status rs = reader_next_chunk(sc->rd, &ch);
        if (rs == READER_WANT) return SCAN_OK;
        if (rs == READER_ERROR) return reading_failed(sc);
        if (rs == READER_END) { sc->done = 1; break; }
        int first = 0;
        if (sc->at_first) {
            int found;
            scan_status st = head(sc, &ch, &found);
            if (st != SCAN_OK) return st;
            if (sc->done) break; /* a shard's header: nothing more */
            first = found;
        } else if (sc->stop_at && ch.offset >= sc->stop_at) {
            sc->done = 1; /* every record from here on is the next shard's */
            break;
        }
        if (sc->prefix) { /* segments: a cut, or (resuming) a chunk before the checkpoint */
            if (sc->skipping && ch.offset + ch.len <= sc->skip_to) {
                scan_prefix_update(sc, ch.data, ch.len, ch.offset);
                continue;
            }
            scan_status st = SCAN_OK;
            if (sc->skipping) st = scan_resume_here(sc, &ch);
            else if (sc->work && sc->seg_bytes >= sc->o.checkpoint_bytes) st = scan_cut(sc, ch.offset);
            if (st != SCAN_OK) return st;
            scan_prefix_update(sc, ch.data, ch.len, ch.offset);
            sc->seg_bytes += ch.len;
        }
        if (!sc->work) { /* blank lines before the first header: their lines count */
            for (size_t i = 0; i < ch.len; i++) sc->blank_lines += ch.data[i] == '\n';
            continue;
        }
        size_t nrep = 0;
        if (ch.nstarts && sc->head_line) {
            if (ch.nstarts > sc->repeats_cap) {
                uint64_t *p = realloc(sc->repeats, ch.nstarts * sizeof *p);
                if (!p) return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
                sc->repeats = p;
                sc->repeats_cap = ch.nstarts;
            }
            nrep = reader_repeated_headers(&ch, sc->head_line, sc->head_len,
                                           reader_delim(sc->rd), sc->repeats, sc->repeats_cap);
        }
        scan_status st = chunks_push(sc->work, &ch, first, sc->repeats, nrep, sc->rd);
        if (st != SCAN_OK) return scan_worked(sc, st);
        sc->pushed_bytes = ch.offset + ch.len;
        if (within_limit(sc, 0) != SCAN_OK) return sc->failed;
    }
    return SCAN_OK;
}

/* Opens a stream: from > 0 for a shard that starts inside its file. */
scan_status scan_begin_at(scan_context *sc, const char *name, uint64_t from, uint64_t stop_at)
{
    if (sc->failed) return sc->failed;
    if (sc->open) return scan_fail(sc, SCAN_ERR_USAGE, "a stream is already open");
    free(sc->name);
    sc->name = strdup(name);
    if (!sc->name) return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    /* A shard does not know how many lines precede it: its messages count
     * lines and bytes from its first record, and say so. */
    if (from) message_printf(sc->shown, sizeof sc->shown,
                             "%s (shard; lines and bytes counted from its first record, at byte "
                             "%llu)", name, (unsigned long long)from);
    else message_printf(sc->shown, sizeof sc->shown, "%s", name);
    reader_start(sc->rd, sc->shown, from == 0, sc->delim, 0);
    /* The first record of a file is this stream's even when it starts past
     * the range end (a byte-order mark before a tiny first range): the
     * workers exempt it (TAG_FIRST). */
    sc->stop_at = stop_at;
    sc->open = 1;
    sc->at_first = from == 0;
    sc->done = 0;
    sc->fed_bytes = 0;
    sc->blank_lines = 0;
    if (sc->work) chunks_stream(sc->work, sc->shown, stop_at, 0);
    XXH3_64bits_reset(sc->fed_hash);
    if (sc->prefix) XXH3_64bits_reset(sc->prefix);
    memset(sc->point_at, 0, sizeof sc->point_at);
    sc->rows_before = 0;
    return SCAN_OK;
}

/* Closes the stream: the rest of its records, its source record. */
static scan_status end(scan_context *sc, const summary_source *prov)
{
    if (sc->failed) return sc->failed;
    if (!sc->open) return scan_fail(sc, SCAN_ERR_USAGE, "no stream is open");
    if (!sc->done) {
        reader_finish(sc->rd);
        scan_status st = drain(sc);
        if (st != SCAN_OK) return st;
    }
    if (sc->work) {
        scan_status st = chunks_wait(sc->work);
        if (st != SCAN_OK) return scan_worked(sc, st);
    }
    sc->open = 0;
    if (sc->skipping) {
        sc->skipping = 0;
        message_printf(sc->err, sizeof sc->err, "%s: ends before byte %llu, where checkpoint %s "
                       "resumes (the file changed); start again without {resume}", sc->name,
                       (unsigned long long)sc->skip_to, sc->o.checkpoint);
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    if (!sc->delim) sc->delim = reader_delim(sc->rd);
    if (sc->at_first && !sc->run) {
        message_printf(sc->err, sizeof sc->err, "%s: no records (empty input)", sc->name);
        return scan_fail(sc, SCAN_ERR_INPUT, NULL);
    }
    if (sc->header_only) return SCAN_OK;
    summary_source rec = *prov;
    rec.path = sc->name;
    rec.start_byte = sc->shard_start;
    rec.end_byte = sc->shard_end;
    rec.rows = sc->rows_before + chunks_rows(sc->work);
    if (sc->file_prints && sc->file_index < sc->npaths)
        sc->file_prints[sc->file_index] = prov->fingerprint;
    for (size_t t = 0; t < sc->nruns; t++) {
        sc->runs[t]->bytes += chunks_absorbed(sc->work);
        if (summary_add_source(sc->runs[t], &rec) != 0)
            return scan_fail(sc, SCAN_ERR_MEMORY, "out of memory");
    }
    sc->done_bytes += rec.raw_bytes;
    return SCAN_OK;
}

scan_context *scan_create(const scan_options *o)
{
    scan_context *sc = calloc(1, sizeof *sc);
    if (!sc) return NULL;
    sc->statm_fd = -1;
    sc->o = *o;
    reader_options_defaults(&sc->ro);
    sc->ro.delim = o->delim;
    sc->ro.chunk_bytes = o->chunk_bytes;
    sc->ro.max_record_bytes = o->max_record_bytes;
    sc->rd = reader_create(&sc->ro);
    sc->fed_hash = XXH3_createState();
    if (!sc->rd || !sc->fed_hash) { scan_free(sc); return NULL; }
    /* The reading thread reads a stream's first record raw: it leaves the
     * chunk's bytes for the worker that tokenizes them. */
    sc->head_ro = sc->ro;
    sc->head_ro.raw = 1;
    reader_cursor_init(&sc->head, &sc->head_ro);
    sc->threads = o->threads ? o->threads : pipeline_cpus();
    sc->rss_base = o->mem_limit_bytes ? resident_bytes(sc) : 0;
    reader_missing_init(&sc->missing, (const char *const *)o->opt.missing, o->opt.n_missing,
                        o->opt.missing_any_case);
    return sc;
}

void scan_free(scan_context *sc)
{
    if (!sc) return;
    scan_cut_drop(sc); /* a checkpoint still being written: waited for, thrown away */
    chunks_free(sc->work);
    reader_free(sc->rd);
    reader_cursor_free(&sc->head);
    for (size_t t = 0; t < sc->nruns; t++) summary_free(sc->runs[t]);
    free(sc->runs);
    for (size_t t = 0; t < sc->ntargets; t++) free(sc->target_names[t]);
    free(sc->target_names);
    if (sc->header)
        for (size_t i = 0; i < sc->file_fields; i++) free(sc->header[i]);
    free(sc->header);
    free(sc->field_of);
    free(sc->first_path);
    free(sc->head_line);
    free(sc->repeats);
    free(sc->name);
    if (sc->fed_hash) XXH3_freeState(sc->fed_hash);
    if (sc->prefix) XXH3_freeState(sc->prefix);
    schema_plan_free(&sc->plan);
    summary_set_free(sc->done_set);
    free(sc->file_prints);
    free(sc->options_text);
    free(sc->restart);
    free(sc->restart_hash);
    if (sc->jump_hash) XXH3_freeState(sc->jump_hash);
    for (size_t k = 0; k < SCAN_POINTS; k++)
        if (sc->point_hash[k]) XXH3_freeState(sc->point_hash[k]);
    if (sc->statm_fd >= 0) close(sc->statm_fd);
    free(sc);
}

const char *scan_error(const scan_context *sc) { return sc->err; }

uint64_t scan_position(const scan_context *sc) { return sc->work ? chunks_absorbed(sc->work) : 0; }

scan_status scan_begin(scan_context *sc, const char *name) { return scan_begin_at(sc, name, 0, 0); }

scan_status scan_feed(scan_context *sc, const void *data, size_t len)
{
    if (sc->failed) return sc->failed;
    if (!sc->open) return scan_fail(sc, SCAN_ERR_USAGE, "scan_feed: no stream is open (scan_begin)");
    XXH3_64bits_update(sc->fed_hash, data, len);
    sc->fed_bytes += len;
    const char *p = data;
    while (len && !sc->done) {
        size_t n = reader_feed(sc->rd, p, len);
        if (n == (size_t)-1) return reading_failed(sc);
        p += n;
        len -= n;
        scan_status st = drain(sc);
        if (st != SCAN_OK) return st;
    }
    return SCAN_OK;
}

scan_status scan_end(scan_context *sc)
{
    summary_source prov;
    memset(&prov, 0, sizeof prov);
    snprintf(prov.format, sizeof prov.format, "plain");
    prov.size_bytes = sc->fed_bytes;
    prov.raw_bytes = sc->fed_bytes;
    prov.fingerprint = XXH3_64bits_digest(sc->fed_hash);
    return end(sc, &prov);
}

static scan_status pull_stream(scan_context *sc, source *src, uint64_t from);

/* Pulls the open stream from src to its end (or its stop offset). */
scan_status scan_pull(scan_context *sc, source *src, uint64_t from)
{
    sc->src = src;
    scan_status st = pull_stream(sc, src, from);
    sc->src = NULL;
    return st;
}

static scan_status pull_stream(scan_context *sc, source *src, uint64_t from)
{
    while (!sc->done) {
        int got = reader_pull(sc->rd, src);
        if (got < 0) return reading_failed(sc);
        scan_status st = drain(sc);
        if (st != SCAN_OK) return st;
        if (sc->o.progress)
            sc->o.progress(sc->o.progress_ctx, sc->done_bytes + source_raw_offset(src) - from,
                           sc->total_bytes);
        if (got == 0) break;
    }
    summary_source prov;
    memset(&prov, 0, sizeof prov);
    snprintf(prov.format, sizeof prov.format, "%s", source_format_name(source_kind(src)));
    prov.size_bytes = source_raw_size(src);
    prov.mtime = source_mtime(src);
    prov.fingerprint = source_fingerprint(src);
    prov.raw_bytes = source_raw_offset(src) - from;
    return end(sc, &prov);
}

scan_status scan_source(scan_context *sc, source *src)
{
    scan_status st = scan_begin_at(sc, source_path(src), 0, 0);
    return st != SCAN_OK ? st : scan_pull(sc, src, 0);
}

/* A file from byte `from` (0: the whole file, header first), stopping before
 * records that start at stop_at (0: none). */
scan_status scan_file_range(scan_context *sc, const char *path, uint64_t from, uint64_t stop_at)
{
    if (sc->failed) return sc->failed;
    errno = 0;
    source *src = from ? source_open_at(path, from, sc->err, sizeof sc->err)
                       : source_open(path, sc->err, sizeof sc->err);
    if (!src) return scan_fail(sc, errno == ENOMEM ? SCAN_ERR_MEMORY : SCAN_ERR_INPUT, NULL);
    source_observe(src, sc->observe, sc->observe_ctx);
    scan_status st = scan_begin_at(sc, path, from, stop_at);
    if (st == SCAN_OK) st = scan_pull(sc, src, from);
    source_close(src);
    return st;
}

scan_status scan_source_range(scan_context *sc, source *src, uint64_t from, uint64_t stop_at)
{
    scan_status st = scan_begin_at(sc, source_path(src), from, stop_at);
    if (st != SCAN_OK) return st;
    /* The shard of a file of members: `from` is where its first member
     * begins in the file, and its bytes are counted decompressed (the
     * reader and the workers hold this buffer's address). */
    if (from) message_printf(sc->shown, sizeof sc->shown,
                             "%s (shard; lines and decompressed bytes counted from its first "
                             "record, in the member at byte %llu)", source_path(src),
                             (unsigned long long)from);
    return scan_pull(sc, src, source_raw_offset(src));
}

/* Every summary of the scan finished: each target's cells settled, the
 * first summary's co-moments copied into the others, all sealed.  0, or -1
 * (the scan's error set). */
static int finish_runs(scan_context *sc)
{
    if (sc->failed) return -1;
    if (sc->open) {
        scan_fail(sc, SCAN_ERR_USAGE, "scan_finish: a stream is still open (scan_end)");
        return -1;
    }
    if (!sc->run) { scan_fail(sc, SCAN_ERR_INPUT, "no records (nothing was scanned)"); return -1; }
    /* Every chunk is absorbed by now (scan_end waited): the last check of
     * --mem sees all that the workers added. */
    if (within_limit(sc, 0) != SCAN_OK) return -1;
    chunks_free(sc->work);
    sc->work = NULL;
    if (scan_settle_runs(sc) != 0) return -1;
    /* The last cut's checkpoint written meanwhile on its own thread. */
    if (scan_cut_join(sc) != SCAN_OK) return -1;
    if (within_limit(sc, 0) != SCAN_OK) return -1; /* settled; the write adds its size */
    if (sc->done_set) {
        /* Segments: the last one merged into the others, the result the scan's. */
        if (scan_absorb_segment(sc) != 0) return -1;
        sc->runs = sc->done_set->parts;
        sc->nruns = sc->done_set->n;
        sc->run = sc->runs[0];
        free(sc->done_set);
        sc->done_set = NULL;
    }
    return 0;
}

size_t scan_targets(const scan_context *sc) { return sc->nruns; }

summary *scan_finish(scan_context *sc)
{
    if (!sc->failed && sc->nruns > 1) {
        snprintf(sc->err, sizeof sc->err,
                 "scan_finish: the scan has %zu targets; scan_finish_set takes them all",
                 sc->nruns);
        sc->failed = SCAN_ERR_USAGE;
    }
    if (finish_runs(sc) != 0) return NULL;
    summary *s = sc->run;
    free(sc->runs);
    sc->runs = NULL;
    sc->nruns = 0;
    sc->run = NULL;
    return s;
}

summary_set *scan_finish_set(scan_context *sc)
{
    if (finish_runs(sc) != 0) return NULL;
    summary_set *set = malloc(sizeof *set);
    if (!set) { scan_fail(sc, SCAN_ERR_MEMORY, "out of memory"); return NULL; }
    set->n = sc->nruns;
    set->parts = sc->runs;
    sc->runs = NULL;
    sc->nruns = 0;
    sc->run = NULL;
    return set;
}
