/* report_parts: what the page's files share (report_html.c, report_drift.c);
 * internal to src/out. */
#ifndef SHEAF_REPORT_PARTS_H
#define SHEAF_REPORT_PARTS_H

#include <stddef.h>

#include "out/html.h"
#include "out/report_html.h"

/* A number as the page shows it (a dash for NaN) into buf. */
void report_fmt_num(char *buf, size_t cap, double v);
/* A table cell holding v: the shown text, and v in full in data-v. */
void report_cell_num(html_buf *b, double v);
/* The drift section of p->drift (report_drift.c). */
void report_drift_section(html_buf *b, const report_page *p);

#endif
