/* report_html: the self-contained HTML report and its charts as SVG, from
 * the figures of stats/report.h.
 *
 * The page is one file: inline CSS, inline SVG, and a few lines of inline
 * script that only sort the column table (the page reads the same without
 * it); nothing is loaded from anywhere.  It is also well-formed XML, so that
 * tests read it with an XML parser.  Every chart can be written alone as an
 * SVG file (report_chart), with the same drawing.  Every label is user text
 * escaped by out/html.h.
 *
 * Numbers a test or a reader may check are carried at full precision in
 * data attributes next to their rounded text: data-v on table cells,
 * data-r on heat-map cells, data-log10-p, data-log10-q and data-mi on
 * relevance rows, data-eigenvalue on scree bars (docs/report.md).
 */
#ifndef SHEAF_REPORT_HTML_H
#define SHEAF_REPORT_HTML_H

#include <stddef.h>

#include "out/html.h"
#include "stats/drift.h"
#include "stats/report.h"

typedef struct {
    const char *summary_name; /* how the summary is named on the page (a path) */
    const char *made;         /* when the summary file was written (text), or NULL */
    const drift_result *drift; /* the drift from a baseline (stats/drift.h), or NULL */
    const char *base_name;    /* how the baseline is named (with drift; NULL: unnamed) */
    const char *const *inputs; /* files no chart may be written over ("-": standard input) */
    size_t ninputs;
} report_page;

/* The whole page into out.  Returns 0, or -1 when out of memory. */
int report_html_write(const report *r, const report_page *p, html_buf *out);

/* The charts the report holds, in page order: their count, and chart i
 * written alone as an SVG document into out with its file name (without
 * directory, ASCII, e.g. "heatmap.svg") in *name.  Returns 0, or -1 when out
 * of memory. */
size_t report_chart_count(const report *r);
int report_chart(const report *r, size_t i, html_buf *out, const char **name);

/* report_files_write's failures. */
enum { REPORT_FILES_WRITE = 1, REPORT_FILES_MEMORY = 2, REPORT_FILES_CLASH = 3 };

/* The page into html_path (NULL: none; "-": standard output) and, when
 * svg_dir is not NULL, each chart as its own SVG file in that folder
 * (created when missing).  Each file is written whole and renamed into
 * place (out/sink.h), and all of them only once every one could be opened
 * and written: a page that cannot be created, or a chart that cannot, or
 * one that would land on one of p->inputs, leaves no file (and no folder
 * it made).  Returns 0, or REPORT_FILES_WRITE / REPORT_FILES_MEMORY /
 * REPORT_FILES_CLASH (a chart on the page or on an input: the paths asked
 * for, a usage error) with a one-line message in err. */
int report_files_write(const report *r, const report_page *p, const char *html_path,
                       const char *svg_dir, char *err, size_t errlen);

#endif
