/* report_files: the page and its charts written to files (see
 * report_html.h), shared by `sheaf page` and sheaf_page_write. */
#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>

#include "out/report_html.h"
#include "out/sink.h"

/* The bytes of b to path through a sink (a temporary file renamed into
 * place).  0, or REPORT_FILES_WRITE with the message in err. */
static int write_whole(const char *path, const html_buf *b, char *err, size_t errlen)
{
    sink *k = sink_open(path, err, errlen);
    if (!k) return REPORT_FILES_WRITE;
    if (sink_write(k, b->data, b->len)) {
        sink_error(k, err, errlen);
        sink_abort(k);
        return REPORT_FILES_WRITE;
    }
    return sink_close(k, err, errlen) ? REPORT_FILES_WRITE : 0;
}

static int write_charts(const report *r, const char *dir, char *err, size_t errlen)
{
    struct stat st;
    if (mkdir(dir, 0777) != 0 && errno != EEXIST) {
        snprintf(err, errlen, "%s: cannot create the folder: %s", dir, strerror(errno));
        return REPORT_FILES_WRITE;
    }
    if (stat(dir, &st) != 0 || !S_ISDIR(st.st_mode)) {
        snprintf(err, errlen, "%s: not a folder", dir);
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
        int rc = write_whole(path, &b, err, errlen);
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
    int rc = 0;
    if (html_path && report_html_write(r, p, &page)) {
        snprintf(err, errlen, "out of memory");
        rc = REPORT_FILES_MEMORY;
    }
    if (!rc && svg_dir) rc = write_charts(r, svg_dir, err, errlen);
    if (!rc && html_path) rc = write_whole(html_path, &page, err, errlen);
    html_free(&page);
    return rc;
}
