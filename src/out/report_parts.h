/* report_parts: what the page's files share (report_html.c, report_charts.c,
 * report_drift.c);
 * internal to src/out. */
#ifndef SHEAF_REPORT_PARTS_H
#define SHEAF_REPORT_PARTS_H

#include <stddef.h>

#include "out/html.h"
#include "out/report_html.h"

/* The charts a report holds, in page order (report_charts.c). */
typedef enum {
    CHART_RELEVANCE,
    CHART_HEATMAP,
    CHART_BALANCE,
    CHART_CLASSES,
    CHART_SCREE,
    CHART_LOADINGS
} chart_kind;
#define MAX_CHARTS (4 + REPORT_CLASS_COLUMNS + 2)
/* Their kinds and arguments into kind[], arg[] (MAX_CHARTS each); their count. */
size_t report_chart_list(const report *r, chart_kind *kind, size_t *arg);
/* Chart k (arg: which class chart) into b, inline or (standalone) as a
 * document of its own. */
void report_draw(html_buf *b, const report *r, chart_kind k, size_t arg, int standalone);

/* A number as the page shows it (a dash for NaN) into buf. */
void report_fmt_num(char *buf, size_t cap, double v);
/* A table cell holding v: the shown text, and v in full in data-v. */
void report_cell_num(html_buf *b, double v);
/* The drift section of p->drift (report_drift.c). */
void report_drift_section(html_buf *b, const report_page *p);

#endif
