/* svg: the drawing primitives of sheaf's charts, written as SVG 1.1 text
 * into an html_buf, and the palettes they use.
 *
 * Styling is by presentation attributes (fill, stroke, font-size), never by
 * a style sheet, so that a chart is the same inline in the report and alone
 * in a file.  Every label and title is user text and is escaped
 * (out/html.h); a title becomes an SVG <title> child, which browsers show on
 * hover without any script.
 *
 * Palettes (sheaf's own; see docs/report.md):
 *   diverging, for r in [-1, 1]: a cold blue through a warm paper white to a
 *   burnt orange, piecewise linear in sRGB between five anchors chosen so
 *   that lightness falls with |r| alike on both sides: strength reads in grey,
 *   and blue against orange stays apart for the common colour-vision
 *   deficiencies (red-green);
 *   sequential, for loadings' magnitude and similar: paper white to ink blue;
 *   qualitative, for classes: six hues of distinct lightness, each paired
 *   with a dash pattern (svg_class_dash) so that lines stay apart in grey.
 */
#ifndef SHEAF_SVG_H
#define SHEAF_SVG_H

#include "out/html.h"

#define SVG_FONT "system-ui, -apple-system, 'Segoe UI', Roboto, 'Helvetica Neue', Arial, sans-serif"
#define SVG_INK "#1d2430"      /* text and axes */
#define SVG_MUTED "#6b7280"    /* secondary text, guides */
#define SVG_KEPT "#1f5f99"     /* a kept column */
#define SVG_DROPPED "#c9ccd3"  /* a dropped column */
#define SVG_ACCENT "#c2630a"   /* thresholds and the chosen k */
#define SVG_NCLASS_COLORS 6

/* Opens an <svg> of w x h user units.  standalone: with the XML namespace
 * and font family (a file of its own); inline ones take both from the page.
 * label (may be NULL): the chart's accessible name (aria-label) and <title>. */
void svg_begin(html_buf *b, double w, double h, const char *label, int standalone);
void svg_end(html_buf *b);
/* A rectangle filled with fill ("#rrggbb" or "none"); title may be NULL. */
void svg_rect(html_buf *b, double x, double y, double w, double h, const char *fill,
              const char *title);
/* A rectangle with extra attributes (raw markup such as `class="cell"`). */
void svg_rect_attr(html_buf *b, double x, double y, double w, double h, const char *fill,
                   const char *attrs, const char *title);
/* A line; dash may be NULL (solid) or an SVG dash array ("4 3"). */
void svg_line(html_buf *b, double x1, double y1, double x2, double y2, const char *stroke,
              double width, const char *dash);
/* A text at (x, y): anchor "start", "middle" or "end"; rotate in degrees
 * about (x, y) (0: none); attrs may be NULL (raw markup). */
void svg_text(html_buf *b, double x, double y, const char *anchor, double size, const char *fill,
              double rotate, const char *attrs, const char *text);
/* Opens a polyline path: call svg_path_to for each point, then svg_path_end. */
void svg_path_begin(html_buf *b, const char *stroke, double width, const char *dash,
                    const char *fill);
void svg_path_to(html_buf *b, int first, double x, double y);
void svg_path_end(html_buf *b, const char *title);
/* A circle. */
void svg_circle(html_buf *b, double cx, double cy, double r, const char *fill, const char *stroke,
                const char *title);

/* The diverging colour of r (clamped to [-1, 1]; NaN: a neutral grey) as
 * "#rrggbb" into out (8 bytes). */
void svg_diverging(double r, char out[8]);
/* The sequential colour of t in [0, 1] (clamped). */
void svg_sequential(double t, char out[8]);
/* The colour and dash pattern of class k (cycling). */
const char *svg_class_color(size_t k);
const char *svg_class_dash(size_t k);
/* 1 when text of colour bg should be light (bg dark). */
int svg_dark(const char *bg);

#endif
