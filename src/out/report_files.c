/* report_files: the page and its charts written to files (see
 * report_html.h), shared by `sheaf page` and sheaf_page_write. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <unistd.h>

#include "io/message.h"
#include "out/report_html.h"
#include "out/sink.h"
#include "summary/tempfile.h"

/* 1 when path leads to one of the inputs (links followed). */
static int is_input(const report_page *p, const char *path)
{
    return sink_replaces_input(path, (const char *const *)p->inputs, p->ninputs) >= 0;
}

/* The outputs of one page: opened first, written, then all closed. */
typedef struct {
    sink **sinks;    /* the page's (when written) and each chart's */
    size_t n, cap;
} outputs;

/* Opens path as the last of o and writes b into it (b NULL: nothing yet).
 * 0, or an error. */
static int add_output(outputs *o, const char *path, const html_buf *b, char *err, size_t errlen)
{
    if (o->n == o->cap) {
        size_t cap = o->cap ? 2 * o->cap : 8;
        sink **s = realloc(o->sinks, cap * sizeof *s);
        if (!s) { snprintf(err, errlen, "out of memory"); return REPORT_FILES_MEMORY; }
        o->sinks = s;
        o->cap = cap;
    }
    sink *k = sink_open(path, err, errlen);
    if (!k) return REPORT_FILES_WRITE;
    o->sinks[o->n++] = k;
    if (b && sink_write(k, b->data, b->len)) {
        sink_error(k, err, errlen);
        return REPORT_FILES_WRITE;
    }
    return 0;
}

/* 1 when paths a and b, links not followed, name one file: the same folder
 * (by identity) and the same last name, whether the file exists yet or not. */
static int same_name(const char *a, const char *b)
{
    const char *sa = strrchr(a, '/'), *sb = strrchr(b, '/');
    const char *na = sa ? sa + 1 : a, *nb = sb ? sb + 1 : b;
    if (strcmp(na, nb) != 0) return 0;
    char da[4096], db[4096];
    snprintf(da, sizeof da, "%.*s", sa ? (int)(sa - a) + (sa == a) : 1, sa ? a : ".");
    snprintf(db, sizeof db, "%.*s", sb ? (int)(sb - b) + (sb == b) : 1, sb ? b : ".");
    struct stat x, y;
    return stat(da, &x) == 0 && stat(db, &y) == 0 && x.st_dev == y.st_dev && x.st_ino == y.st_ino;
}

/* 1 when writing paths a and b would write one file: one existing file
 * (hard links too), or the names their symbolic links lead to are one
 * name (a chart that is a link to the page, made or yet to be made). */
static int same_place(const char *a, const char *b)
{
    struct stat x, y;
    if (stat(a, &x) == 0 && stat(b, &y) == 0) return x.st_dev == y.st_dev && x.st_ino == y.st_ino;
    char *ta = tempfile_target(a), *tb = tempfile_target(b);
    int same = ta && tb ? same_name(ta, tb) : same_name(a, b);
    free(ta);
    free(tb);
    return same;
}

static int open_charts(const report *r, const report_page *p, const char *dir, const char *page,
                       outputs *o, char *err, size_t errlen)
{
    struct stat st;
    if (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode)) {
        if (lstat(dir, &st) == 0 && S_ISLNK(st.st_mode) && stat(dir, &st) != 0)
            message_printf(err, errlen, "%s: a symbolic link to a missing folder", dir);
        else message_printf(err, errlen, "%s: not a folder", dir);
        return REPORT_FILES_WRITE;
    }
    size_t n = report_chart_count(r);
    for (size_t i = 0; i < n; i++) {
        html_buf b;
        html_init(&b);
        const char *name = NULL;
        size_t len = 0;
        char *path = NULL;
        if (report_chart(r, i, &b, &name) == 0) {
            len = strlen(dir) + strlen(name) + 2;
            path = malloc(len);
        }
        if (!path) {
            html_free(&b);
            snprintf(err, errlen, "out of memory");
            return REPORT_FILES_MEMORY;
        }
        snprintf(path, len, "%s/%s", dir, name);
        int rc = 0;
        if (page && same_place(path, page)) {
            message_printf(err, errlen, "%s: the page and a chart would be the same file", path);
            rc = REPORT_FILES_CLASH;
        } else if (is_input(p, path)) {
            message_printf(err, errlen,
                           "%s: is the same file as an input; refusing to overwrite it", path);
            rc = REPORT_FILES_CLASH;
        } else {
            rc = add_output(o, path, &b, err, errlen);
        }
        free(path);
        html_free(&b);
        if (rc) return rc;
    }
    return 0;
}

int report_files_write(const report *r, const report_page *p, const char *html_path,
                       const char *svg_dir, char *err, size_t errlen)
{
    html_buf page;
    html_init(&page);
    outputs o = {0};
    int rc = 0, made_dir = 0;
    if (html_path && report_html_write(r, p, &page)) {
        snprintf(err, errlen, "out of memory");
        rc = REPORT_FILES_MEMORY;
    }
    /* The page opened first (a page that cannot be created makes no
     * chart), written last (standard output gets nothing when a chart
     * fails). */
    if (!rc && html_path) rc = add_output(&o, html_path, NULL, err, errlen);
    if (!rc && svg_dir) {
        if (mkdir(svg_dir, 0777) == 0) {
            made_dir = 1;
        } else if (errno != EEXIST) {
            message_printf(err, errlen, "%s: cannot create the folder: %s", svg_dir,
                           strerror(errno));
            rc = REPORT_FILES_WRITE;
        }
        if (!rc) rc = open_charts(r, p, svg_dir, html_path, &o, err, errlen);
    }
    /* The page is written before any chart is put in place, so that a page
     * that cannot be written leaves no chart (to a file it is renamed into
     * place last; standard output or a device keeps what it got when a
     * chart then fails, as every pass's standard output does).  Then the
     * charts, then the page, each renamed into place. */
    if (!rc && html_path && (sink_write(o.sinks[0], page.data, page.len) ||
                             sink_flush(o.sinks[0]))) {
        sink_error(o.sinks[0], err, errlen);
        rc = REPORT_FILES_WRITE;
    }
    /* Every chart's bytes out of the sinks' buffers before the first is
     * renamed into place: a full disk then fails before any chart is placed
     * (a chart's bytes were written at its close, after the charts before
     * it had been renamed: 1 to 6 of 9 were left). */
    for (size_t i = html_path ? 1 : 0; !rc && i < o.n; i++)
        if (sink_flush(o.sinks[i])) {
            sink_error(o.sinks[i], err, errlen);
            rc = REPORT_FILES_WRITE;
        }
    for (size_t i = html_path ? 1 : 0; !rc && i < o.n; i++) {
        sink *k = o.sinks[i];
        o.sinks[i] = NULL;
        if (sink_close(k, err, errlen)) rc = REPORT_FILES_WRITE;
    }
    if (!rc && html_path) {
        sink *k = o.sinks[0];
        o.sinks[0] = NULL;
        if (sink_close(k, err, errlen)) rc = REPORT_FILES_WRITE;
    }
    if (rc) {
        for (size_t i = 0; i < o.n; i++)
            if (o.sinks[i]) sink_abort(o.sinks[i]);
        if (made_dir) rmdir(svg_dir); /* only when nothing was renamed into it */
    }
    free(o.sinks);
    html_free(&page);
    return rc;
}
