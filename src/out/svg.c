/* svg: primitives and palettes (see svg.h). */
#include "out/svg.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void svg_begin(html_buf *b, double w, double h, const char *label, int standalone)
{
    html_printf(b, "<svg%s width=\"%g\" height=\"%g\" viewBox=\"0 0 %g %g\" role=\"img\"",
                standalone ? " xmlns=\"http://www.w3.org/2000/svg\" version=\"1.1\"" : "", w, h, w, h);
    if (standalone) html_raw(b, " font-family=\"" SVG_FONT "\"");
    if (label) {
        html_raw(b, " aria-label=\"");
        html_text(b, label);
        html_raw(b, "\">\n<title>");
        html_text(b, label);
        html_raw(b, "</title>\n");
    } else {
        html_raw(b, ">\n");
    }
    if (standalone) html_printf(b, "<rect x=\"0\" y=\"0\" width=\"%g\" height=\"%g\" fill=\"#ffffff\"/>\n", w, h);
}

void svg_end(html_buf *b) { html_raw(b, "</svg>\n"); }

static void close_with_title(html_buf *b, const char *tag, const char *title)
{
    if (!title) {
        html_raw(b, "/>\n");
        return;
    }
    html_raw(b, "><title>");
    html_text(b, title);
    html_printf(b, "</title></%s>\n", tag);
}

void svg_rect_attr(html_buf *b, double x, double y, double w, double h, const char *fill,
                   const char *attrs, const char *title)
{
    html_printf(b, "<rect x=\"%.2f\" y=\"%.2f\" width=\"%.2f\" height=\"%.2f\" fill=\"%s\"", x, y,
                w > 0 ? w : 0, h > 0 ? h : 0, fill);
    if (attrs) html_printf(b, " %s", attrs);
    close_with_title(b, "rect", title);
}

void svg_rect(html_buf *b, double x, double y, double w, double h, const char *fill,
              const char *title)
{
    svg_rect_attr(b, x, y, w, h, fill, NULL, title);
}

void svg_line(html_buf *b, double x1, double y1, double x2, double y2, const char *stroke,
              double width, const char *dash)
{
    html_printf(b, "<line x1=\"%.2f\" y1=\"%.2f\" x2=\"%.2f\" y2=\"%.2f\" stroke=\"%s\" stroke-width=\"%g\"",
                x1, y1, x2, y2, stroke, width);
    if (dash) html_printf(b, " stroke-dasharray=\"%s\"", dash);
    html_raw(b, "/>\n");
}

void svg_text(html_buf *b, double x, double y, const char *anchor, double size, const char *fill,
              double rotate, const char *attrs, const char *text)
{
    html_printf(b, "<text x=\"%.2f\" y=\"%.2f\" text-anchor=\"%s\" font-size=\"%g\" fill=\"%s\"", x, y,
                anchor, size, fill);
    if (rotate != 0) html_printf(b, " transform=\"rotate(%g %.2f %.2f)\"", rotate, x, y);
    if (attrs) html_printf(b, " %s", attrs);
    html_raw(b, ">");
    html_text(b, text);
    html_raw(b, "</text>\n");
}

void svg_path_begin(html_buf *b, const char *stroke, double width, const char *dash,
                    const char *fill)
{
    html_printf(b, "<path fill=\"%s\" stroke=\"%s\" stroke-width=\"%g\"", fill ? fill : "none", stroke,
                width);
    if (dash) html_printf(b, " stroke-dasharray=\"%s\"", dash);
    html_raw(b, " d=\"");
}

void svg_path_to(html_buf *b, int first, double x, double y)
{
    html_printf(b, "%s%.2f %.2f", first ? "M" : " L", x, y);
}

void svg_path_end(html_buf *b, const char *title)
{
    html_raw(b, "\"");
    close_with_title(b, "path", title);
}

void svg_circle(html_buf *b, double cx, double cy, double r, const char *fill, const char *stroke,
                const char *title)
{
    html_printf(b, "<circle cx=\"%.2f\" cy=\"%.2f\" r=\"%g\" fill=\"%s\"", cx, cy, r, fill);
    if (stroke) html_printf(b, " stroke=\"%s\"", stroke);
    close_with_title(b, "circle", title);
}

typedef struct {
    double at;
    unsigned char rgb[3];
} anchor;

static void ramp(const anchor *a, size_t n, double t, char out[8])
{
    size_t i = 0;
    while (i + 2 < n && t > a[i + 1].at) i++;
    double f = (t - a[i].at) / (a[i + 1].at - a[i].at);
    if (f < 0) f = 0;
    if (f > 1) f = 1;
    int c[3];
    for (int k = 0; k < 3; k++) c[k] = (int)lround(a[i].rgb[k] + f * (a[i + 1].rgb[k] - a[i].rgb[k]));
    snprintf(out, 8, "#%02x%02x%02x", c[0], c[1], c[2]);
}

/* Relative luminance (sRGB, WCAG) of the anchors, from -1 to +1:
 * 0.05, 0.33, 0.88, 0.42, 0.07. */
static const anchor DIVERGING[] = {
    {-1.0, {0x14, 0x3f, 0x6b}}, {-0.5, {0x6c, 0x9c, 0xc8}}, {0.0, {0xf5, 0xf1, 0xe8}},
    {0.5, {0xdd, 0x9a, 0x52}},  {1.0, {0x7c, 0x38, 0x05}},
};
static const anchor SEQUENTIAL[] = {
    {0.0, {0xf5, 0xf1, 0xe8}}, {0.5, {0x8f, 0xad, 0xc8}}, {1.0, {0x1a, 0x36, 0x5d}},
};

void svg_diverging(double r, char out[8])
{
    if (isnan(r)) { strcpy(out, "#b8b8b8"); return; }
    ramp(DIVERGING, sizeof DIVERGING / sizeof *DIVERGING, r < -1 ? -1 : r > 1 ? 1 : r, out);
}

void svg_sequential(double t, char out[8])
{
    if (isnan(t)) { strcpy(out, "#b8b8b8"); return; }
    ramp(SEQUENTIAL, sizeof SEQUENTIAL / sizeof *SEQUENTIAL, t < 0 ? 0 : t > 1 ? 1 : t, out);
}

/* Blue, orange, green, purple, brown-red, grey: lightness apart, and no
 * red-green pair without a lightness step. */
static const char *const CLASS_COLORS[SVG_NCLASS_COLORS] = {"#1f5f99", "#e08a2c", "#2f7d4f",
                                                            "#8a5fb0", "#a8322d", "#7b8088"};
static const char *const CLASS_DASHES[SVG_NCLASS_COLORS] = {"none", "6 3", "2 2", "8 3 2 3", "1 3", "10 4"};

const char *svg_class_color(size_t k) { return CLASS_COLORS[k % SVG_NCLASS_COLORS]; }
const char *svg_class_dash(size_t k) { return CLASS_DASHES[k % SVG_NCLASS_COLORS]; }

int svg_dark(const char *bg)
{
    unsigned r, g, b;
    if (sscanf(bg, "#%2x%2x%2x", &r, &g, &b) != 3) return 0;
    return 0.2126 * r + 0.7152 * g + 0.0722 * b < 128;
}
