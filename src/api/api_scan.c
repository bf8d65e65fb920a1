/* api_scan: the scan handle of the public API (include/sheaf.h) over
 * summary/scan.h.  The four ways in are the scan context's two: a path goes
 * to scan_path (which decompresses), a FILE * and a memory buffer are fed
 * through scan_begin / scan_feed / scan_end, as the caller's own feeding is;
 * the summary depends on the bytes alone, not on how they were split. */
#include "api/api.h"
#include "io/source.h"

#include <errno.h>
#include <stdlib.h>
#include <stdio.h>
#include <string.h>
#include <sys/stat.h>

#include "io/message.h"
#include "stats/validity.h"
#include "summary/scan.h"


sheaf_scan *sheaf_scan_create(const sheaf_options *o, sheaf_error *err)
{
    sheaf_scan *sc = calloc(1, sizeof *sc);
    if (!sc) goto oom;
    if (o) {
        if (api_options_copy(&sc->o, o) != 0) { free(sc); goto oom; }
    } else if (api_options_init(&sc->o) != 0) {
        free(sc);
        goto oom;
    }
    sc->sc = scan_create(&sc->o.scan);
    if (!sc->sc) { api_options_release(&sc->o); free(sc); goto oom; }
    return sc;
oom:
    api_fail(err, SHEAF_ERR_MEMORY, "out of memory");
    return NULL;
}

void sheaf_scan_free(sheaf_scan *sc)
{
    if (!sc) return;
    scan_free(sc->sc);
    api_options_release(&sc->o);
    free(sc);
}

/* Records the scan's first failure (sticky, as the scan context's own) and
 * reports it. */
static int fail_scan(sheaf_scan *sc, int code, const char *msg, sheaf_error *err)
{
    if (!sc->failed) {
        sc->failed = code;
        message_printf(sc->message, sizeof sc->message, "%s", msg);
    }
    return api_fail(err, sc->failed, "%s", sc->message);
}

/* The status of a scan call: SHEAF_OK, or the scan's sticky error. */
static int scanned(sheaf_scan *sc, scan_status st, sheaf_error *err)
{
    if (st == SCAN_OK) return SHEAF_OK;
    return fail_scan(sc, api_scan_code(st), scan_error(sc->sc), err);
}

/* Refuses a NULL handle, a failed or finished scan, and a call that needs a
 * stream open (want_open 1) or none (0); -1: either. */
static int unusable(sheaf_scan *sc, const char *call, int want_open, sheaf_error *err)
{
    char msg[256];
    if (!sc) return api_fail(err, SHEAF_ERR_USAGE, "%s: no scan (NULL)", call);
    if (sc->failed) return api_fail(err, sc->failed, "%s", sc->message);
    if (sc->spent) {
        message_printf(msg, sizeof msg, "%s: the scan is finished (only sheaf_scan_free remains)",
                       call);
        return api_fail(err, SHEAF_ERR_USAGE, "%s", msg); /* not sticky: the summary is out */
    }
    if (want_open == 1 && !sc->open) {
        message_printf(msg, sizeof msg, "%s: no stream is open (call sheaf_scan_begin first)",
                       call);
        return fail_scan(sc, SHEAF_ERR_USAGE, msg, err);
    }
    if (want_open == 0 && sc->open) {
        message_printf(msg, sizeof msg, "%s: a stream is still open (call sheaf_scan_end first)",
                       call);
        return fail_scan(sc, SHEAF_ERR_USAGE, msg, err);
    }
    return SHEAF_OK;
}

/* Why scan_finish / scan_finish_set gave nothing: several targets (a call
 * for the set), memory, or nothing scanned, told from the message. */
static void finish_failed(sheaf_scan *sc, sheaf_error *err)
{
    const char *msg = scan_error(sc->sc);
    int code = strncmp(msg, "scan_finish", 11) == 0 ? SHEAF_ERR_USAGE
               : strstr(msg, "memory")             ? SHEAF_ERR_MEMORY
                                                   : SHEAF_ERR_INPUT;
    fail_scan(sc, code, msg, err);
}

int sheaf_scan_path(sheaf_scan *sc, const char *path, sheaf_error *err)
{
    int rc = unusable(sc, "sheaf_scan_path", 0, err);
    if (rc) return rc;
    if (!path) return api_fail(err, SHEAF_ERR_USAGE, "sheaf_scan_path: no path (NULL)");
    return scanned(sc, scan_path(sc->sc, path), err);
}

int sheaf_scan_begin(sheaf_scan *sc, const char *name, sheaf_error *err)
{
    int rc = unusable(sc, "sheaf_scan_begin", 0, err);
    if (rc) return rc;
    rc = scanned(sc, scan_begin(sc->sc, name ? name : "(bytes)"), err);
    if (rc == SHEAF_OK) sc->open = 1;
    return rc;
}

int sheaf_scan_feed(sheaf_scan *sc, const void *data, size_t len, sheaf_error *err)
{
    int rc = unusable(sc, "sheaf_scan_feed", 1, err);
    if (rc) return rc;
    if (!data && len) return api_fail(err, SHEAF_ERR_USAGE, "sheaf_scan_feed: no bytes (NULL)");
    return scanned(sc, scan_feed(sc->sc, data, len), err);
}

int sheaf_scan_end(sheaf_scan *sc, sheaf_error *err)
{
    int rc = unusable(sc, "sheaf_scan_end", 1, err);
    if (rc) return rc;
    sc->open = 0;
    return scanned(sc, scan_end(sc->sc), err);
}

/* Bytes in memory, read by the source as a file would be. */
typedef struct {
    const unsigned char *p;
    size_t left;
} memory_bytes;

static ssize_t pull_memory(void *ctx, void *buf, size_t cap)
{
    memory_bytes *m = ctx;
    size_t n = m->left < cap ? m->left : cap;
    memcpy(buf, m->p, n);
    m->p += n;
    m->left -= n;
    return (ssize_t)n;
}

static ssize_t pull_stream(void *ctx, void *buf, size_t cap)
{
    FILE *f = ctx;
    size_t n = fread(buf, 1, cap, f);
    if (n == 0 && ferror(f)) return -1; /* errno from the read, when it set one */
    return (ssize_t)n;
}

/* A whole stream through a pull source (io/source.h): plain, gzip or zstd,
 * detected by its first bytes as for a file. */
static int scan_pulled(sheaf_scan *sc, const char *name, source_pull pull, void *ctx,
                       uint64_t size, sheaf_error *err)
{
    char msg[SHEAF_ERROR_BYTES] = "";
    errno = 0;
    source *src = source_open_pull(name, pull, ctx, size, msg, sizeof msg);
    if (!src) return fail_scan(sc, errno == ENOMEM ? SHEAF_ERR_MEMORY : SHEAF_ERR_INPUT, msg, err);
    int rc = scanned(sc, scan_source(sc->sc, src), err);
    source_close(src);
    return rc;
}

int sheaf_scan_memory(sheaf_scan *sc, const void *data, size_t len, const char *name,
                      sheaf_error *err)
{
    int rc = unusable(sc, "sheaf_scan_memory", 0, err);
    if (rc) return rc;
    if (!data && len) return api_fail(err, SHEAF_ERR_USAGE, "sheaf_scan_memory: no bytes (NULL)");
    memory_bytes m = {data, len};
    return scan_pulled(sc, name ? name : "(memory)", pull_memory, &m, len, err);
}

int sheaf_scan_stream(sheaf_scan *sc, FILE *f, const char *name, sheaf_error *err)
{
    int rc = unusable(sc, "sheaf_scan_stream", 0, err);
    if (rc) return rc;
    if (!f) return api_fail(err, SHEAF_ERR_USAGE, "sheaf_scan_stream: no stream (NULL)");
    /* The size of a regular file not yet read from, as a path scan records it. */
    struct stat st;
    uint64_t size = 0;
    int fd = fileno(f);
    if (fd >= 0 && fstat(fd, &st) == 0 && S_ISREG(st.st_mode) && ftello(f) == 0)
        size = (uint64_t)st.st_size;
    return scan_pulled(sc, name ? name : "(stream)", pull_stream, f, size, err);
}

/* 1 with SHEAF_ERR_USAGE when s's declared regression target is text, as
 * `sheaf scan` refuses it (stats/validity.h: judged by screen's default
 * kind rule). */
static int task_misfit(const summary *s, sheaf_error *err)
{
    screen_options judged;
    screen_options_defaults(&judged);
    char msg[SHEAF_ERROR_BYTES] = "";
    if (validity_task_fits(s, judged.numeric_share, msg, sizeof msg) == 0) return 0;
    api_fail(err, SHEAF_ERR_USAGE, "%s", msg);
    return 1;
}

sheaf_summary *sheaf_scan_finish(sheaf_scan *sc, sheaf_error *err)
{
    if (unusable(sc, "sheaf_scan_finish", 0, err)) return NULL;
    size_t n = scan_targets(sc->sc);
    if (n > 1) { /* before anything is spent: the set can still be taken */
        api_fail(err, SHEAF_ERR_USAGE,
                 "sheaf_scan_finish: the scan has %zu targets; sheaf_scan_finish_set takes them "
                 "all",
                 n);
        return NULL;
    }
    sc->spent = 1;
    summary *s = scan_finish(sc->sc);
    if (!s) { finish_failed(sc, err); return NULL; }
    if (task_misfit(s, err)) { summary_free(s); return NULL; }
    return api_wrap(s, err);
}

sheaf_summary_set *sheaf_scan_finish_set(sheaf_scan *sc, sheaf_error *err)
{
    if (unusable(sc, "sheaf_scan_finish_set", 0, err)) return NULL;
    sc->spent = 1;
    summary_set *set = scan_finish_set(sc->sc);
    if (!set) { finish_failed(sc, err); return NULL; }
    for (size_t t = 0; t < set->n; t++)
        if (task_misfit(set->parts[t], err)) { summary_set_free(set); return NULL; }
    return api_wrap_set(set, err);
}
