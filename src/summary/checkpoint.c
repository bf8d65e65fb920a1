/* checkpoint: see checkpoint.h. */
#include "summary/checkpoint.h"

#include <errno.h>
#include <fcntl.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>
#include <xxhash.h>

#include "acc/wire.h"
#include "io/message.h"
#include "summary/filehash.h"
#include "summary/format.h"
#include "summary/tempfile.h"

static const uint8_t MAGIC[8] = {'S', 'H', 'E', 'A', 'F', 'C', 'K', 'P'};
#define CHECKPOINT_VERSION 2u
#define CHECKPOINT_OLDEST 1u /* version 1: no restart point; resumed by fast-forward */
#define MAX_PARTS 4096u
#define MAX_TEXT (1u << 24)

/* ---- the options --------------------------------------------------------- */

typedef struct {
    char *text;
    size_t len, cap;
    int failed;
} text_buf;

static void add(text_buf *b, const char *key, const char *fmt, ...)
{
    if (b->failed) return;
    char value[1024];
    va_list ap;
    va_start(ap, fmt);
    vsnprintf(value, sizeof value, fmt, ap);
    va_end(ap);
    size_t need = b->len + strlen(key) + strlen(value) + 3;
    if (need > b->cap) {
        size_t cap = need * 2;
        char *p = realloc(b->text, cap);
        if (!p) { b->failed = 1; return; }
        b->text = p;
        b->cap = cap;
    }
    b->len += (size_t)sprintf(b->text + b->len, "%s=%s\n", key, value);
}

/* A list option as given (NULL: "(none)"); long lists are cut for the text
 * but their hash keeps them apart. */
static void add_list(text_buf *b, const char *key, const char *s)
{
    if (!s) { add(b, key, "(none)"); return; }
    if (strlen(s) <= 200) { add(b, key, "%s", s); return; }
    add(b, key, "%.200s... (hash %016llx)", s, (unsigned long long)XXH3_64bits(s, strlen(s)));
}

char *checkpoint_options_text(const scan_options *o)
{
    text_buf b = {0};
    char d = o->delim;
    add(&b, "delim", d == '\t' ? "tab" : d == ' ' ? "space" : d ? "%c" : "(detected)", d);
    add(&b, "no_header", "%s", o->header ? "no" : "yes");
    add(&b, "strict", "%s", o->strict ? "yes" : "no");
    add(&b, "force", "%s", o->force ? "yes" : "no");
    add_list(&b, "columns", o->columns);
    add_list(&b, "numeric", o->numeric);
    add_list(&b, "categorical", o->categorical);
    add_list(&b, "exclude", o->ignore);
    add_list(&b, "target", o->targets ? o->targets : o->opt.target);
    add(&b, "task", "%d", (int)o->opt.task);
    add(&b, "max_classes", "%u", o->opt.max_classes);
    add(&b, "max_levels", "%u", o->opt.max_levels);
    add(&b, "bucket_budget", "%u", o->opt.bucket_budget);
    add(&b, "label_bytes", "%u", o->opt.label_bytes);
    /* The spellings joined by commas, each with its length (a spelling may
     * hold a comma). */
    size_t mlen = 1;
    for (uint32_t i = 0; i < o->opt.n_missing; i++) mlen += strlen(o->opt.missing[i]) + 24;
    char *m = malloc(mlen);
    if (!m) { free(b.text); return NULL; }
    size_t used = 0;
    m[0] = '\0';
    for (uint32_t i = 0; i < o->opt.n_missing; i++)
        used += (size_t)snprintf(m + used, mlen - used, "%s%zu:%s", i ? "," : "",
                                 strlen(o->opt.missing[i]), o->opt.missing[i]);
    add_list(&b, "missing", m);
    free(m);
    add(&b, "missing_any_case", "%d", o->opt.missing_any_case);
    add(&b, "chunk_size", "%zu", o->chunk_bytes);
    add(&b, "max_record", "%zu", o->max_record_bytes);
    add(&b, "checkpoint_every", "%llu", (unsigned long long)o->checkpoint_bytes);
    if (b.failed) { free(b.text); return NULL; }
    return b.text;
}

/* ---- writing --------------------------------------------------------------- */

static void put_le64(uint8_t *b, uint64_t v)
{
    for (int i = 0; i < 8; i++) b[i] = (uint8_t)(v >> (8 * i));
}

static uint64_t get_le64(const uint8_t *b)
{
    uint64_t v = 0;
    for (int i = 7; i >= 0; i--) v = v << 8 | b[i];
    return v;
}

static void encode_header(const checkpoint *c, const uint64_t *part_len, wire_writer *w)
{
    wire_put_str(w, c->options, strlen(c->options));
    wire_put_u32(w, (uint32_t)c->nfiles);
    for (size_t i = 0; i < c->nfiles; i++) {
        wire_put_str(w, c->files[i].path, strlen(c->files[i].path));
        wire_put_u64(w, c->files[i].size_bytes);
        wire_put_i64(w, c->files[i].mtime_ns);
        wire_put_u64(w, c->files[i].fingerprint);
    }
    wire_put_u32(w, c->file_index);
    wire_put_u64(w, c->offset);
    wire_put_u64(w, c->prefix_hash);
    wire_put_u64(w, c->lines);
    wire_put_u64(w, c->rows);
    wire_put_u64(w, c->number);
    wire_put_u8(w, (uint8_t)c->delim);
    wire_put_str(w, c->restart ? c->restart : "", c->restart ? c->restart_len : 0);
    wire_put_str(w, c->restart_hash ? c->restart_hash : "", c->restart_hash ? c->restart_hash_len : 0);
    wire_put_u32(w, (uint32_t)c->done->n);
    for (size_t i = 0; i < c->done->n; i++) wire_put_u64(w, part_len[i]);
}

/* Each part of a checkpoint carries one source more than the merged
 * segments have, the current file so far, so that its rows match its
 * sources' as a summary file's must; it is dropped once read. */
static int add_open_source(summary_set *set, const checkpoint *c)
{
    summary_source open;
    memset(&open, 0, sizeof open);
    open.path = c->files[c->file_index].path;
    snprintf(open.format, sizeof open.format, "plain");
    open.rows = c->rows;
    for (size_t i = 0; i < set->n; i++)
        if (summary_add_source(set->parts[i], &open) != 0) {
            while (i--) set->parts[i]->nsources--, free(set->parts[i]->sources[set->parts[i]->nsources].path);
            return -1;
        }
    return 0;
}

static void drop_open_source(summary_set *set)
{
    for (size_t i = 0; i < set->n; i++) {
        summary *s = set->parts[i];
        if (s->nsources) free(s->sources[--s->nsources].path);
    }
}

/* The parts of a checkpoint's bytes as a set (each part decoded). */
static checkpoint_status decode_parts(const uint8_t *data, const uint64_t *part_len, size_t n,
                                      summary_set **out, char *err, size_t errlen)
{
    summary_set *set = calloc(1, sizeof *set);
    if (!set || !(set->parts = calloc(n, sizeof *set->parts))) {
        free(set);
        snprintf(err, errlen, "out of memory");
        return CHECKPOINT_MEMORY;
    }
    set->n = n;
    for (size_t i = 0; i < n; i++) {
        summary_status st = summary_decode(data, (size_t)part_len[i], &set->parts[i], err, errlen);
        if (st != SUMMARY_OK) {
            summary_set_free(set);
            return st == SUMMARY_ERR_MEMORY ? CHECKPOINT_MEMORY : CHECKPOINT_DAMAGED;
        }
        data += part_len[i];
    }
    *out = set;
    return CHECKPOINT_OK;
}

/* A message of the scratch-file layer ("PATH: cannot create: ...") says
 * that PATH is the checkpoint. */
static void as_checkpoint(char *err, size_t errlen)
{
    char was[1024];
    message_printf(was, sizeof was, "%s", err);
    snprintf(err, errlen, "checkpoint %s", was);
}

checkpoint_status checkpoint_write(const char *path, const checkpoint *c,
                                   void (*pause)(void *ctx, uint64_t number), void *pause_ctx,
                                   summary_set **reread, char *err, size_t errlen)
{
    *reread = NULL;
    size_t n = c->done->n;
    uint64_t *part_len = calloc(n, sizeof *part_len);
    tempfile t;
    checkpoint_status early = CHECKPOINT_OK;
    if (!part_len) {
        snprintf(err, errlen, "out of memory");
        early = CHECKPOINT_MEMORY;
    } else if (tempfile_open(&t, path, TEMPFILE_SEEKABLE, err, errlen) != 0) {
        early = errno == ENOMEM ? CHECKPOINT_MEMORY : CHECKPOINT_IO;
        as_checkpoint(err, errlen);
    } else if (add_open_source(c->done, c) != 0) {
        tempfile_discard(&t);
        snprintf(err, errlen, "out of memory");
        early = CHECKPOINT_MEMORY;
    }
    if (early != CHECKPOINT_OK) {
        int saved = errno;
        free(part_len);
        if (c->drop_done) summary_set_free(c->done);
        errno = saved;
        return early;
    }
    /* The header's part lengths are known once the parts are written: a
     * first header with zeros keeps its size, then it is written again. */
    wire_writer w;
    wire_writer_init(&w);
    encode_header(c, part_len, &w);
    uint8_t head[20], sum[8];
    memcpy(head, MAGIC, 8);
    for (int i = 0; i < 4; i++) head[8 + i] = (uint8_t)(CHECKPOINT_VERSION >> (8 * i));
    put_le64(head + 12, w.len);
    off_t parts_at = (off_t)(sizeof head + w.len + sizeof sum), pos = parts_at;
    int rc = w.failed || lseek(t.fd, parts_at, SEEK_SET) != parts_at ? -1 : 0;
    for (size_t i = 0; rc == 0 && i < n; i++) {
        off_t end;
        rc = summary_write_at(c->done->parts[i], t.fd, pos, &end, tempfile_pushes(&t));
        part_len[i] = (uint64_t)(end - pos);
        pos = end;
    }
    if (rc == 0) {
        w.len = 0;
        encode_header(c, part_len, &w);
        XXH3_state_t *h = XXH3_createState();
        rc = w.failed || !h ? -1 : 0;
        if (rc == 0) {
            XXH3_64bits_reset(h);
            filehash_update(h, head, sizeof head);
            filehash_update(h, w.data, w.len);
            put_le64(sum, XXH3_64bits_digest(h));
        }
        XXH3_freeState(h);
        if (rc == 0 && (pwrite(t.fd, head, sizeof head, 0) != (ssize_t)sizeof head ||
                        pwrite(t.fd, w.data, w.len, sizeof head) != (ssize_t)w.len ||
                        pwrite(t.fd, sum, sizeof sum, (off_t)(sizeof head + w.len)) !=
                            (ssize_t)sizeof sum))
            rc = -1;
    }
    wire_writer_free(&w);
    drop_open_source(c->done);
    if (c->drop_done) summary_set_free(c->done); /* the bytes hold it now */
    if (rc == 0 && pause) pause(pause_ctx, c->number);
    uint64_t all;
    if (rc == 0 && summary_hash_region(t.fd, 0, pos, &all) == 0) {
        put_le64(sum, all);
        rc = summary_write_all(t.fd, sum, sizeof sum);
    } else {
        rc = -1;
    }
    checkpoint_status st = CHECKPOINT_OK;
    if (rc != 0) {
        message_printf(err, errlen, "%s: cannot write the checkpoint: %s", path,
                       strerror(errno ? errno : EIO));
        st = errno == ENOMEM ? CHECKPOINT_MEMORY : CHECKPOINT_IO;
    } else {
        /* The summaries read back from the bytes just written. */
        void *map = mmap(NULL, (size_t)pos, PROT_READ, MAP_SHARED, t.fd, 0);
        if (map == MAP_FAILED) {
            message_printf(err, errlen, "%s: cannot read the checkpoint back: %s", path,
                           strerror(errno));
            st = errno == ENOMEM ? CHECKPOINT_MEMORY : CHECKPOINT_IO;
        } else {
            char inner[400];
            st = decode_parts((const uint8_t *)map + parts_at, part_len, n, reread, inner,
                              sizeof inner);
            munmap(map, (size_t)pos);
            if (st == CHECKPOINT_OK) drop_open_source(*reread);
            if (st != CHECKPOINT_OK)
                message_printf(err, errlen, "%s: the checkpoint does not read back: %s", path,
                               inner);
        }
    }
    free(part_len);
    if (st != CHECKPOINT_OK) {
        tempfile_discard(&t);
        return st;
    }
    if (tempfile_commit(&t, err, errlen) != 0) {
        as_checkpoint(err, errlen);
        summary_set_free(*reread);
        *reread = NULL;
        return CHECKPOINT_IO;
    }
    return CHECKPOINT_OK;
}

int checkpoint_mark_path(const char *path, checkpoint_mark *m, char *err, size_t errlen)
{
    memset(m, 0, sizeof *m);
    if (!*path) {
        snprintf(err, errlen, "a checkpoint needs a name: got an empty one");
        return -1;
    }
    if (tempfile_descriptor(path) >= 0) {
        message_printf(err, errlen,
                       "%s: names an open descriptor; a checkpoint must be a regular file", path);
        return -1;
    }
    struct stat st;
    if (stat(path, &st) != 0) {
        if (errno == ENOENT) return 0;
        message_printf(err, errlen, "%s: cannot use as a checkpoint: %s", path, strerror(errno));
        return -1;
    }
    if (!S_ISREG(st.st_mode)) {
        message_printf(err, errlen, "%s: not a regular file; a checkpoint must be one", path);
        return -1;
    }
    m->exists = 1;
    m->dev = (uint64_t)st.st_dev;
    m->ino = (uint64_t)st.st_ino;
    m->ctime_sec = (int64_t)st.st_ctim.tv_sec;
    m->ctime_nsec = (int64_t)st.st_ctim.tv_nsec;
    return 0;
}

int checkpoint_remove(const char *path, const checkpoint_mark *before, int resumed, char *err,
                      size_t errlen)
{
    struct stat st;
    if (stat(path, &st) != 0 || !S_ISREG(st.st_mode)) return 0; /* none was written */
    if (!resumed && before->exists && (uint64_t)st.st_dev == before->dev &&
        (uint64_t)st.st_ino == before->ino && (int64_t)st.st_ctim.tv_sec == before->ctime_sec &&
        (int64_t)st.st_ctim.tv_nsec == before->ctime_nsec)
        return 0;
    char *target = tempfile_target(path);
    if (!target || unlink(target) != 0) {
        snprintf(err, errlen, "cannot remove the checkpoint %s: %s", path, strerror(errno));
        free(target);
        return -1;
    }
    free(target);
    return 0;
}

checkpoint_status checkpoint_probe(const char *path, char *err, size_t errlen)
{
    checkpoint_mark m;
    if (checkpoint_mark_path(path, &m, err, errlen) != 0) {
        errno = EINVAL;
        return CHECKPOINT_IO;
    }
    tempfile t;
    if (tempfile_open(&t, path, TEMPFILE_SEEKABLE, err, errlen) != 0) {
        int saved = errno;
        as_checkpoint(err, errlen);
        return saved == ENOMEM ? CHECKPOINT_MEMORY : CHECKPOINT_IO;
    }
    tempfile_discard(&t);
    return CHECKPOINT_OK;
}

/* ---- reading --------------------------------------------------------------- */

static checkpoint_status damaged(const char *path, char *err, size_t errlen, const char *why)
{
    message_printf(err, errlen, "%s: damaged checkpoint (%s)", path, why);
    return CHECKPOINT_DAMAGED;
}

/* A string of the header, copied; NULL (and r failed) when absent. */
static char *get_text(wire_reader *r)
{
    size_t n;
    const char *s = wire_get_str(r, &n, MAX_TEXT);
    if (!s) return NULL;
    char *t = strndup(s, n);
    if (!t) r->failed = 1;
    return t;
}

checkpoint_status checkpoint_read(const char *path, checkpoint *c, char *err, size_t errlen)
{
    memset(c, 0, sizeof *c);
    struct stat st;
    if (stat(path, &st) != 0 && errno == ENOENT) {
        message_printf(err, errlen, "%s: no such file", path);
        return CHECKPOINT_MISSING;
    }
    void *map;
    size_t len;
    summary_status ms = summary_map_file(path, &map, &len, err, errlen);
    if (ms != SUMMARY_OK) return ms == SUMMARY_ERR_MEMORY ? CHECKPOINT_MEMORY : CHECKPOINT_IO;
    const uint8_t *b = map;
    checkpoint_status rc = CHECKPOINT_OK;
    uint64_t *part_len = NULL;
    if (len < 20 || memcmp(b, MAGIC, 8) != 0) {
        rc = damaged(path, err, errlen, "not a sheaf checkpoint");
        goto out;
    }
    uint32_t version = (uint32_t)b[8] | (uint32_t)b[9] << 8 | (uint32_t)b[10] << 16 |
                       (uint32_t)b[11] << 24;
    if (version < CHECKPOINT_OLDEST || version > CHECKPOINT_VERSION) {
        char why[96];
        snprintf(why, sizeof why, "version %u; this sheaf reads versions %u to %u", version,
                 CHECKPOINT_OLDEST, CHECKPOINT_VERSION);
        rc = damaged(path, err, errlen, why);
        goto out;
    }
    uint64_t hlen = get_le64(b + 12);
    if (len < 36 || hlen > len - 36) {
        rc = damaged(path, err, errlen, "truncated");
        goto out;
    }
    if (XXH3_64bits(b, 20 + hlen) != get_le64(b + 20 + hlen)) {
        rc = damaged(path, err, errlen, "header checksum mismatch");
        goto out;
    }
    if (filehash(b, len - 8) != get_le64(b + len - 8)) {
        rc = damaged(path, err, errlen, "checksum mismatch: truncated or changed");
        goto out;
    }
    wire_reader r;
    wire_reader_init(&r, b + 20, (size_t)hlen);
    c->options = get_text(&r);
    uint32_t nfiles = wire_get_u32(&r);
    if (!r.failed && nfiles <= hlen) {
        c->files = calloc(nfiles ? nfiles : 1, sizeof *c->files);
        if (!c->files) { rc = CHECKPOINT_MEMORY; snprintf(err, errlen, "out of memory"); goto out; }
        c->nfiles = nfiles;
        for (size_t i = 0; i < nfiles && !r.failed; i++) {
            c->files[i].path = get_text(&r);
            c->files[i].size_bytes = wire_get_u64(&r);
            c->files[i].mtime_ns = wire_get_i64(&r);
            c->files[i].fingerprint = wire_get_u64(&r);
        }
    } else {
        r.failed = 1;
    }
    c->file_index = wire_get_u32(&r);
    c->offset = wire_get_u64(&r);
    c->prefix_hash = wire_get_u64(&r);
    c->lines = wire_get_u64(&r);
    c->rows = wire_get_u64(&r);
    c->number = wire_get_u64(&r);
    c->delim = (char)wire_get_u8(&r);
    if (version >= 2) {
        size_t n, m;
        const char *point = wire_get_str(&r, &n, MAX_TEXT);
        const char *hash = wire_get_str(&r, &m, MAX_TEXT);
        if (point && hash && n && m) {
            c->restart = malloc(n);
            c->restart_hash = malloc(m);
            if (!c->restart || !c->restart_hash) {
                rc = CHECKPOINT_MEMORY;
                snprintf(err, errlen, "out of memory");
                goto out;
            }
            memcpy(c->restart, point, n);
            c->restart_len = n;
            memcpy(c->restart_hash, hash, m);
            c->restart_hash_len = m;
        }
    }
    uint32_t nparts = wire_get_u32(&r);
    if (r.failed || nparts < 1 || nparts > MAX_PARTS || c->file_index >= c->nfiles) {
        rc = damaged(path, err, errlen, "bad header");
        goto out;
    }
    part_len = calloc(nparts, sizeof *part_len);
    if (!part_len) { rc = CHECKPOINT_MEMORY; snprintf(err, errlen, "out of memory"); goto out; }
    uint64_t total = 0, room = len - 20 - hlen - 16;
    for (uint32_t i = 0; i < nparts; i++) {
        part_len[i] = wire_get_u64(&r);
        if (part_len[i] > room - total) r.failed = 1;
        else total += part_len[i];
    }
    if (r.failed || r.pos != r.len || total != room) {
        rc = damaged(path, err, errlen, "bad header");
        goto out;
    }
    char inner[400];
    rc = decode_parts(b + 20 + hlen + 8, part_len, nparts, &c->done, inner, sizeof inner);
    if (rc == CHECKPOINT_OK) drop_open_source(c->done);
    if (rc == CHECKPOINT_DAMAGED) {
        char why[450];
        snprintf(why, sizeof why, "its summary: %s", inner);
        damaged(path, err, errlen, why);
    } else if (rc != CHECKPOINT_OK) {
        message_printf(err, errlen, "%s: %s", path, inner);
    }
out:
    free(part_len);
    if (map) munmap(map, len);
    if (rc != CHECKPOINT_OK) checkpoint_free(c);
    return rc;
}

void checkpoint_free(checkpoint *c)
{
    if (!c) return;
    free(c->options);
    for (size_t i = 0; i < c->nfiles; i++) free(c->files[i].path);
    free(c->files);
    free(c->restart);
    free(c->restart_hash);
    summary_set_free(c->done);
    memset(c, 0, sizeof *c);
}

int checkpoint_hash_file(const char *path, uint64_t *hash)
{
    int fd = open(path, O_RDONLY | O_CLOEXEC);
    if (fd < 0) return -1;
    XXH3_state_t *h = XXH3_createState();
    char *buf = malloc(1u << 20);
    int rc = h && buf ? 0 : -1;
    if (rc == 0) XXH3_64bits_reset(h);
    while (rc == 0) {
        ssize_t n = read(fd, buf, 1u << 20);
        if (n < 0 && errno == EINTR) continue;
        if (n < 0) rc = -1;
        if (n <= 0) break;
        filehash_update(h, buf, (size_t)n);
    }
    if (rc == 0) *hash = XXH3_64bits_digest(h);
    int saved = errno;
    XXH3_freeState(h);
    free(buf);
    close(fd);
    errno = saved;
    return rc;
}
