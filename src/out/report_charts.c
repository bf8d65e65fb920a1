/* report_charts: the page's charts, each drawn inline or as an SVG
 * document of its own (see report_html.h; docs/report.md). */
#include "out/report_html.h"
#include "out/report_parts.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#include "out/svg.h"
#include "stats/logp.h"
#include "summary/access.h"

#include <stdarg.h>

/* A hover text of any length, formatted into a buffer that grows as needed
 * (names come first and may be long: a fixed buffer cut the figures after
 * them).  Returns the text, "" when memory ran out.  Free *buf at the end. */
static const char *tip(char **buf, size_t *cap, const char *fmt, ...)
    __attribute__((format(printf, 3, 4)));
static const char *tip(char **buf, size_t *cap, const char *fmt, ...)
{
    va_list ap;
    va_start(ap, fmt);
    int n = vsnprintf(*buf, *buf ? *cap : 0, fmt, ap);
    va_end(ap);
    if (n < 0) return "";
    if ((size_t)n >= *cap) {
        char *p = realloc(*buf, (size_t)n + 1);
        if (!p) return "";
        *buf = p;
        *cap = (size_t)n + 1;
        va_start(ap, fmt);
        vsnprintf(*buf, *cap, fmt, ap);
        va_end(ap);
    }
    return *buf;
}

#define LABEL_CHARS 28    /* code points of a column name shown in a chart */
#define CHAR_WIDTH 0.58   /* average glyph width, in font sizes, for layout */
#define MAX_RELEVANCE 120 /* bars in the relevance chart */
#define MAX_SCREE 30      /* components in the scree chart */
#define MAX_CLASS_LINES 6 /* classes drawn in a class-conditional chart */

/* ---- text helpers -------------------------------------------------------- */

/* name cut to LABEL_CHARS code points with an ellipsis, into buf. */
static const char *short_label(const char *name, char *buf, size_t cap)
{
    size_t cps = 0, i = 0;
    for (; name[i]; i++) {
        if (((unsigned char)name[i] & 0xc0) != 0x80) {
            if (cps == LABEL_CHARS) break;
            cps++;
        }
    }
    if (!name[i]) return name;
    size_t n = i < cap - 4 ? i : cap - 4;
    while (n > 0 && ((unsigned char)name[n] & 0xc0) == 0x80) n--;
    memcpy(buf, name, n);
    memcpy(buf + n, "\xe2\x80\xa6", 4);
    return buf;
}

static size_t label_chars(const char *s)
{
    size_t n = 0;
    for (; *s; s++) n += ((unsigned char)*s & 0xc0) != 0x80;
    return n > LABEL_CHARS + 1 ? LABEL_CHARS + 1 : n;
}

/* ---- charts -------------------------------------------------------------- */


/* Tested features in the order of the relevance chart (strongest first). */
static size_t relevance_order(const report *r, size_t *idx)
{
    size_t n = 0;
    const screen_result *sr = r->screen;
    if (!sr || sr->task == TASK_AUTO) return 0;
    for (size_t i = 0; i < sr->nfeatures; i++)
        if (!isnan(sr->features[i].log10_p)) idx[n++] = i;
    for (size_t i = 1; i < n; i++)
        for (size_t j = i; j > 0; j--) {
            const screen_feature *a = &sr->features[idx[j - 1]], *c = &sr->features[idx[j]];
            double ka = isnan(a->log10_q) ? a->log10_p : a->log10_q;
            double kc = isnan(c->log10_q) ? c->log10_p : c->log10_q;
            if (!(kc < ka)) break;
            size_t t = idx[j]; idx[j] = idx[j - 1]; idx[j - 1] = t;
        }
    return n;
}

static double evidence(double log10_v) { return log10_v < 0 ? -log10_v : 0; }

static void chart_relevance(html_buf *b, const report *r, int standalone)
{
    const screen_result *sr = r->screen;
    size_t *idx = malloc((sr->nfeatures ? sr->nfeatures : 1) * sizeof *idx);
    if (!idx) { b->failed = 1; return; }
    size_t n = relevance_order(r, idx), shown = n < MAX_RELEVANCE ? n : MAX_RELEVANCE;
    double emax = 1.5 * evidence(log10(r->opt.screen.q_level));
    for (size_t i = 0; i < n; i++) {
        const screen_feature *f = &sr->features[idx[i]];
        double e = evidence(isnan(f->log10_q) ? f->log10_p : f->log10_q);
        if (isfinite(e) && e > emax) emax = e;
    }
    size_t longest = 6;
    for (size_t i = 0; i < shown; i++) {
        size_t l = label_chars(summary_name(r->s, sr->features[idx[i]].col));
        if (l > longest) longest = l;
    }
    const double font = 11, row = 17, left = 14 + CHAR_WIDTH * font * (double)longest, bar = 420;
    const double gap = 24, miw = 110, top = 46, w = left + bar + gap + miw + 60;
    double h = top + row * (double)shown + 40;
    svg_begin(b, w, h, "Relevance of each tested column: evidence against no association, and "
                       "normalized mutual information", standalone);
    if (!(emax > 0)) emax = 1; /* q-level 1 and nothing below it: a scale all the same */
    double lmax = log10(1 + emax);
#define EX(e) (left + bar * log10(1 + (e)) / lmax)
    svg_text(b, left, 14, "start", 12, SVG_INK, 0, "font-weight=\"600\"",
             "evidence: \xe2\x88\x92log10 q (log scale of 1 + value)");
    svg_text(b, left + bar + gap, 14, "start", 12, SVG_INK, 0, "font-weight=\"600\"", "normalized MI");
    /* ticks 0, 1, 10, 100, ... */
    for (double t = 0; t <= emax; t = t == 0 ? 1 : t * 10) {
        char lab[32];
        snprintf(lab, sizeof lab, "%g", t);
        svg_line(b, EX(t), top - 6, EX(t), h - 34, "#e3e1db", 1, NULL);
        svg_text(b, EX(t), top - 10, "middle", 10, SVG_MUTED, 0, NULL, lab);
    }
    double et = evidence(log10(r->opt.screen.q_level));
    char *tb = NULL;
    size_t tcap = 0;
    for (size_t i = 0; i < shown; i++) {
        const screen_feature *f = &sr->features[idx[i]];
        double y = top + row * (double)i;
        const char *name = summary_name(r->s, f->col);
        char cut[128], lp[40], lq[40];
        double e = evidence(isnan(f->log10_q) ? f->log10_p : f->log10_q);
        int infinite = !isfinite(e);
        if (infinite) e = emax;
        logp_format(lp, sizeof lp, f->log10_p, 3);
        if (isnan(f->log10_q)) snprintf(lq, sizeof lq, "none (%s)", f->unreliable ? "unreliable test" : "untested");
        else logp_format(lq, sizeof lq, f->log10_q, 3);
        const char *t = tip(&tb, &tcap, "%s: p = %s, q = %s, normalized MI %.3f; %s: %s", name, lp,
                            lq, f->mi.present ? f->mi.normalized : NAN,
                            f->keep ? "kept" : "dropped", f->reasons);
        html_printf(b, "<g class=\"rel\" data-kept=\"%d\" data-log10-p=\"", f->keep);
        html_number(b, f->log10_p);
        html_raw(b, "\" data-log10-q=\"");
        html_number(b, f->log10_q);
        html_raw(b, "\" data-mi=\"");
        html_number(b, f->mi.present ? f->mi.normalized : NAN);
        html_raw(b, "\" data-name=\"");
        html_text(b, name);
        html_raw(b, "\">\n");
        svg_text(b, left - 6, y + row * 0.7, "end", font, SVG_INK, 0, "class=\"label\"",
                 short_label(name, cut, sizeof cut));
        svg_rect_attr(b, left, y + 2, EX(e) - left, row - 5, f->keep ? SVG_KEPT : SVG_DROPPED,
                      f->keep ? NULL : "stroke=\"#8b9099\" stroke-width=\"0.6\"", t);
        if (infinite) svg_text(b, EX(e) + 4, y + row * 0.7, "start", 9, SVG_MUTED, 0, NULL, "p = 0");
        double mi = f->mi.present ? f->mi.normalized : NAN;
        double mx = left + bar + gap;
        svg_rect(b, mx, y + 3, miw, row - 7, "#f0eee8", NULL);
        if (isfinite(mi)) {
            char c[8], v[32];
            svg_sequential(mi, c);
            svg_rect(b, mx, y + 3, miw * fmin(1, fmax(0, mi)), row - 7, c, t);
            snprintf(v, sizeof v, "%.3f", mi);
            svg_text(b, mx + miw + 4, y + row * 0.7, "start", 10, SVG_INK, 0, NULL, v);
        }
        html_raw(b, "</g>\n");
    }
    free(tb);
    double y1 = top + row * (double)shown;
    svg_line(b, EX(et), top - 4, EX(et), y1 + 2, SVG_ACCENT, 1.6, "5 3");
    char ql[64];
    snprintf(ql, sizeof ql, "q = %g", r->opt.screen.q_level);
    svg_text(b, EX(et) + 3, y1 + 14, "start", 10, SVG_ACCENT, 0, NULL, ql);
    svg_rect(b, left, h - 18, 12, 10, SVG_KEPT, NULL);
    svg_text(b, left + 16, h - 9, "start", 10, SVG_INK, 0, NULL, "kept");
    svg_rect_attr(b, left + 60, h - 18, 12, 10, SVG_DROPPED, "stroke=\"#8b9099\" stroke-width=\"0.6\"", NULL);
    svg_text(b, left + 76, h - 9, "start", 10, SVG_INK, 0, NULL, "dropped (flag, redundant, unreliable or q too large)");
    if (shown < n) {
        char more[96];
        snprintf(more, sizeof more, "%zu weaker columns not drawn", n - shown);
        svg_text(b, left + bar, h - 9, "end", 10, SVG_MUTED, 0, NULL, more);
    }
#undef EX
    svg_end(b);
    free(idx);
}

/* x position of dendrogram node v (leaves at their row centre). */
static void dendrogram(html_buf *b, const report *r, double x0, double width, double y0, double cell)
{
    size_t n = r->nheat;
    double *pos = malloc((2 * n) * sizeof *pos), *hgt = malloc((2 * n) * sizeof *hgt);
    if (!pos || !hgt) { free(pos); free(hgt); b->failed = 1; return; }
    double hmax = 0;
    for (size_t i = 0; i + 1 < n; i++) if (r->merges[i].height > hmax) hmax = r->merges[i].height;
    if (hmax <= 0) hmax = 1;
    for (size_t i = 0; i < n; i++) { pos[i] = y0 + cell * ((double)i + 0.5); hgt[i] = 0; }
#define DX(hh) (x0 + width - width * (hh) / hmax)
    for (size_t i = 0; i + 1 < n; i++) {
        const cluster_merge *m = &r->merges[i];
        double h = m->height;
        pos[n + i] = (pos[m->a] + pos[m->b]) / 2;
        hgt[n + i] = h;
        char t[96];
        snprintf(t, sizeof t, "merged at 1 \xe2\x88\x92 |r| = %.3f (%zu columns)", h, m->size);
        html_printf(b, "<g class=\"merge\" data-a=\"%zu\" data-b=\"%zu\" data-size=\"%zu\" data-height=\"",
                    m->a, m->b, m->size);
        html_number(b, h);
        html_raw(b, "\">");
        svg_path_begin(b, "#4b5563", 1, NULL, NULL);
        svg_path_to(b, 1, DX(hgt[m->a]), pos[m->a]);
        svg_path_to(b, 0, DX(h), pos[m->a]);
        svg_path_to(b, 0, DX(h), pos[m->b]);
        svg_path_to(b, 0, DX(hgt[m->b]), pos[m->b]);
        svg_path_end(b, t);
        html_raw(b, "</g>\n");
    }
    /* the scale: 1 - |r| from 0 (right) to hmax (left) */
    double ya = y0 + cell * (double)n + 12;
    svg_line(b, DX(0), ya, DX(hmax), ya, SVG_MUTED, 1, NULL);
    char lab[32];
    snprintf(lab, sizeof lab, "%.2g", hmax);
    svg_text(b, DX(hmax), ya + 12, "start", 9, SVG_MUTED, 0, NULL, lab);
    svg_text(b, DX(0), ya + 12, "end", 9, SVG_MUTED, 0, NULL, "0");
    svg_text(b, x0 + width / 2, ya + 24, "middle", 9, SVG_MUTED, 0, NULL, "1 \xe2\x88\x92 |r|");
#undef DX
    free(pos);
    free(hgt);
}

static void chart_heatmap(html_buf *b, const report *r, int standalone)
{
    size_t n = r->nheat;
    double cell = 640.0 / (double)n;
    if (cell > 30) cell = 30;
    if (cell < 9) cell = 9;
    double font = cell * 0.78 < 11 ? cell * 0.78 : 11;
    size_t longest = 4;
    for (size_t i = 0; i < n; i++) {
        size_t l = label_chars(summary_name(r->s, r->heat_cols[i]));
        if (l > longest) longest = l;
    }
    double lab = 8 + CHAR_WIDTH * font * (double)longest;
    const double dend = 110, gap = 6;
    double mx = dend + gap, my = lab + 8, side = cell * (double)n;
    double w = mx + side + lab + 10, h = my + side + 100;
    if (w < 520) w = 520;
    svg_begin(b, w, h, "Correlation heat map in clustered order, with its dendrogram", standalone);
    char cut[128], col[8], *tb = NULL;
    size_t tcap = 0;
    for (size_t j = 0; j < n; j++) {
        const char *name = summary_name(r->s, r->heat_cols[j]);
        svg_text(b, mx + cell * ((double)j + 0.5) + font * 0.35, my - 4, "start", font, SVG_INK, -90,
                 "class=\"label col\"", short_label(name, cut, sizeof cut));
    }
    for (size_t i = 0; i < n; i++) {
        const char *name = summary_name(r->s, r->heat_cols[i]);
        html_buf a;
        html_init(&a);
        html_raw(&a, "class=\"label row\" data-name=\"");
        html_text(&a, name);
        html_raw_n(&a, "\"", 2);
        svg_text(b, mx + side + 4, my + cell * ((double)i + 0.5) + font * 0.35, "start", font, SVG_INK, 0,
                 a.failed ? "class=\"label row\"" : a.data, short_label(name, cut, sizeof cut));
        html_free(&a);
    }
    html_raw(b, "<g class=\"cells\">\n");
    for (size_t i = 0; i < n; i++)
        for (size_t j = 0; j < n; j++) {
            double v = r->heat_r[i * n + j];
            svg_diverging(v, col);
            int red = r->heat_redundant[i * n + j];
            const char *t = isfinite(v)
                                ? tip(&tb, &tcap, "%s \xc3\x97 %s: r = %.3f%s",
                                      summary_name(r->s, r->heat_cols[i]),
                                      summary_name(r->s, r->heat_cols[j]), v,
                                      red ? " (pruned as redundant)" : "")
                                : tip(&tb, &tcap, "%s \xc3\x97 %s: no r (%s)",
                                      summary_name(r->s, r->heat_cols[i]),
                                      summary_name(r->s, r->heat_cols[j]),
                                      summary_pair_imprecise(r->s, r->heat_cols[i], r->heat_cols[j])
                                          ? "imprecise: see corr"
                                          : "never together, or constant there");
            html_buf a;
            html_init(&a);
            html_raw(&a, "class=\"cell\" data-r=\"");
            html_number(&a, v);
            html_raw(&a, "\"");
            html_raw_n(&a, "", 1);
            svg_rect_attr(b, mx + cell * (double)j, my + cell * (double)i, cell, cell, col,
                          a.failed ? "class=\"cell\"" : a.data, t);
            html_free(&a);
            if (red)
                svg_circle(b, mx + cell * ((double)j + 0.5), my + cell * ((double)i + 0.5), cell * 0.2,
                           "#ffffff", SVG_INK, NULL);
            if (n <= 16 && i != j && isfinite(v)) {
                char vt[16];
                snprintf(vt, sizeof vt, "%.2f", v);
                svg_text(b, mx + cell * ((double)j + 0.5), my + cell * ((double)i + 0.5) + 3.5, "middle", 9.5,
                         svg_dark(col) ? "#ffffff" : SVG_INK, 0, "pointer-events=\"none\"", vt);
            }
        }
    free(tb);
    html_raw(b, "</g>\n");
    if (n > 1) dendrogram(b, r, 4, dend - 4, my, cell);
    /* legend */
    double lx = mx, ly = my + side + 40, lw = 240;
    for (int k = 0; k < 48; k++) {
        svg_diverging(-1 + 2 * (k + 0.5) / 48, col);
        svg_rect(b, lx + lw * k / 48, ly, lw / 48 + 0.3, 12, col, NULL);
    }
    for (int k = 0; k <= 4; k++) {
        char tl[16];
        snprintf(tl, sizeof tl, "%g", -1 + 0.5 * k);
        svg_line(b, lx + lw * k / 4, ly + 12, lx + lw * k / 4, ly + 16, SVG_INK, 1, NULL);
        svg_text(b, lx + lw * k / 4, ly + 27, "middle", 10, SVG_INK, 0, NULL, tl);
    }
    svg_text(b, lx + lw / 2, ly - 5, "middle", 10, SVG_INK, 0, NULL, "Pearson r (pairwise complete)");
    svg_circle(b, lx + lw + 24, ly + 6, 4, "#ffffff", SVG_INK, NULL);
    svg_text(b, lx + lw + 32, ly + 10, "start", 10, SVG_INK, 0, NULL, "pair pruned as redundant");
    if (r->heat_candidates > n) {
        char note[160];
        snprintf(note, sizeof note, "%zu of %zu numeric columns shown: the %s", n, r->heat_candidates,
                 r->screen && r->screen->task != TASK_AUTO ? "most relevant" : "most variable");
        svg_text(b, lx, ly + 46, "start", 10, SVG_MUTED, 0, NULL, note);
    }
    svg_end(b);
}

static void chart_balance(html_buf *b, const report *r, int standalone)
{
    uint32_t k = r->nclasses, shown = k < 40 ? k : 40;
    uint64_t total = describe_class_total(r->s), most = 0;
    size_t longest = 5;
    for (uint32_t i = 0; i < shown; i++) {
        if (summary_class_rows(r->s, i) > most) most = summary_class_rows(r->s, i);
        size_t l = label_chars(summary_class_label(r->s, i));
        if (l > longest) longest = l;
    }
    const double font = 11, row = 18, left = 12 + CHAR_WIDTH * font * (double)longest, bar = 300;
    double w = left + bar + 130, h = 26 + row * shown + (shown < k ? 16 : 4);
    svg_begin(b, w, h, "Class balance of the target", standalone);
    svg_text(b, left, 14, "start", 12, SVG_INK, 0, "font-weight=\"600\"", "rows per class");
    for (uint32_t i = 0; i < shown; i++) {
        uint64_t n = summary_class_rows(r->s, i);
        double y = 22 + row * i, share = total ? (double)n / (double)total : 0;
        char cut[128], v[64], *tb = NULL;
        size_t tcap = 0;
        const char *lab = summary_class_label(r->s, i);
        svg_text(b, left - 6, y + row * 0.7, "end", font, SVG_INK, 0, "class=\"label\"", short_label(lab, cut, sizeof cut));
        svg_rect(b, left, y + 3, most ? bar * (double)n / (double)most : 0, row - 6, svg_class_color(i),
                 tip(&tb, &tcap, "%s: %llu rows (%.2f%%)", lab, (unsigned long long)n, 100 * share));
        free(tb);
        snprintf(v, sizeof v, "%llu (%.1f%%)", (unsigned long long)n, 100 * share);
        svg_text(b, left + (most ? bar * (double)n / (double)most : 0) + 5, y + row * 0.7, "start", 10, SVG_INK, 0, NULL, v);
    }
    if (shown < k) {
        char more[64];
        snprintf(more, sizeof more, "%u more classes not drawn", k - shown);
        svg_text(b, left, h - 4, "start", 10, SVG_MUTED, 0, NULL, more);
    }
    svg_end(b);
}

/* The classes drawn: the MAX_CLASS_LINES with the most rows, in class order. */
static size_t drawn_classes(const report *r, uint32_t *cls)
{
    size_t m = 0;
    for (uint32_t k = 0; k < r->nclasses; k++) {
        if (m < MAX_CLASS_LINES) { cls[m++] = k; continue; }
        size_t least = 0;
        for (size_t i = 1; i < m; i++)
            if (summary_class_rows(r->s, cls[i]) < summary_class_rows(r->s, cls[least])) least = i;
        if (summary_class_rows(r->s, k) > summary_class_rows(r->s, cls[least])) {
            for (size_t i = least; i + 1 < m; i++) cls[i] = cls[i + 1];
            cls[m - 1] = k;
        }
    }
    return m;
}

static void chart_classes(html_buf *b, const report *r, size_t which, int standalone)
{
    size_t c = r->class_cols[which];
    const char *name = summary_name(r->s, c);
    uint32_t cls[MAX_CLASS_LINES];
    size_t m = drawn_classes(r, cls);
    const double w = 380, h = 190, left = 36, top = 30, pw = w - left - 14, ph = h - top - 40;
    char *tb = NULL;
    size_t tcap = 0;
    svg_begin(b, w, h, tip(&tb, &tcap, "%s by class: share of each class's rows per bin", name),
              standalone);
    free(tb);
    char cut[128];
    html_buf a;
    html_init(&a);
    html_raw(&a, "font-weight=\"600\" class=\"label class-column\" data-name=\"");
    html_text(&a, name);
    html_raw_n(&a, "\"", 2);
    svg_text(b, left, 16, "start", 12, SVG_INK, 0, a.failed ? "font-weight=\"600\"" : a.data,
             short_label(name, cut, sizeof cut));
    html_free(&a);
    const uint64_t *base = r->class_hist + which * (size_t)r->nclasses * REPORT_BINS;
    double top_share = 0;
    for (size_t i = 0; i < m; i++) {
        const uint64_t *hh = base + (size_t)cls[i] * REPORT_BINS;
        uint64_t tot = 0;
        for (size_t k = 0; k < REPORT_BINS; k++) tot += hh[k];
        for (size_t k = 0; k < REPORT_BINS && tot; k++)
            if ((double)hh[k] / (double)tot > top_share) top_share = (double)hh[k] / (double)tot;
    }
    if (top_share <= 0) top_share = 1;
    svg_line(b, left, top + ph, left + pw, top + ph, SVG_MUTED, 1, NULL);
    svg_line(b, left, top, left, top + ph, SVG_MUTED, 1, NULL);
    char lab[48];
    snprintf(lab, sizeof lab, "%.0f%%", 100 * top_share);
    svg_text(b, left - 4, top + 4, "end", 9, SVG_MUTED, 0, NULL, lab);
    svg_text(b, left - 4, top + ph, "end", 9, SVG_MUTED, 0, NULL, "0");
    report_fmt_num(lab, sizeof lab, r->class_lo[which]);
    svg_text(b, left, top + ph + 13, "start", 9, SVG_MUTED, 0, NULL, lab);
    report_fmt_num(lab, sizeof lab, r->class_hi[which]);
    svg_text(b, left + pw, top + ph + 13, "end", 9, SVG_MUTED, 0, NULL, lab);
    double bw = pw / REPORT_BINS;
    for (size_t i = 0; i < m; i++) {
        const uint64_t *hh = base + (size_t)cls[i] * REPORT_BINS;
        uint64_t tot = 0;
        for (size_t k = 0; k < REPORT_BINS; k++) tot += hh[k];
        if (!tot) continue;
        char *tb = NULL;
        size_t tcap = 0;
        const char *t = tip(&tb, &tcap, "%s = %s: %llu rows with a number",
                            summary_target_name(r->s), summary_class_label(r->s, cls[i]),
                            (unsigned long long)tot);
        const char *dash = svg_class_dash(i);
        html_raw(b, "<g class=\"class-line\" data-class=\"");
        html_text(b, summary_class_label(r->s, cls[i]));
        html_printf(b, "\" data-n=\"%llu\" data-counts=\"", (unsigned long long)tot);
        for (size_t k = 0; k < REPORT_BINS; k++)
            html_printf(b, "%s%llu", k ? " " : "", (unsigned long long)hh[k]);
        html_raw(b, "\">");
        svg_path_begin(b, svg_class_color(i), 1.8, strcmp(dash, "none") ? dash : NULL, NULL);
        for (size_t k = 0; k < REPORT_BINS; k++) {
            double y = top + ph - ph * ((double)hh[k] / (double)tot) / top_share;
            svg_path_to(b, k == 0, left + bw * (double)k, y);
            svg_path_to(b, 0, left + bw * (double)(k + 1), y);
        }
        svg_path_end(b, t);
        free(tb);
        html_raw(b, "</g>\n");
    }
    /* legend */
    double lx = left;
    for (size_t i = 0; i < m; i++) {
        const char *dash = svg_class_dash(i);
        double ly = h - 12;
        svg_line(b, lx, ly - 3, lx + 18, ly - 3, svg_class_color(i), 2, strcmp(dash, "none") ? dash : NULL);
        const char *cl = summary_class_label(r->s, cls[i]);
        char cc[128];
        const char *s = short_label(cl, cc, sizeof cc);
        svg_text(b, lx + 21, ly, "start", 9, SVG_INK, 0, NULL, s);
        lx += 28 + CHAR_WIDTH * 9 * (double)label_chars(s);
        if (lx > w - 40) break;
    }
    svg_end(b);
}

static void chart_scree(html_buf *b, const report *r, int standalone)
{
    const pca_result *p = r->pca;
    size_t n = p->p < MAX_SCREE ? p->p : MAX_SCREE;
    const double w = 560, h = 270, left = 48, right = 48, top = 30, bottom = 52;
    double pw = w - left - right, ph = h - top - bottom;
    double emax = p->eigenvalues[0] > 0 ? p->eigenvalues[0] : 1, mean = p->total / (double)p->p;
    if (pca_broken_stick(1, p->p) * p->total > emax) emax = pca_broken_stick(1, p->p) * p->total;
    svg_begin(b, w, h, "Scree chart: eigenvalues, cumulative share, Kaiser and broken-stick guides",
              standalone);
    double bw = pw / (double)n;
#define YE(v) (top + ph - ph * (v) / emax)
#define YS(v) (top + ph - ph * (v))
    svg_line(b, left, top + ph, left + pw, top + ph, SVG_MUTED, 1, NULL);
    svg_line(b, left, top, left, top + ph, SVG_MUTED, 1, NULL);
    svg_line(b, left + pw, top, left + pw, top + ph, SVG_MUTED, 1, NULL);
    char lab[64];
    for (int k = 0; k <= 4; k++) {
        snprintf(lab, sizeof lab, "%.3g", emax * k / 4);
        svg_text(b, left - 4, YE(emax * k / 4) + 3, "end", 9, SVG_MUTED, 0, NULL, lab);
        snprintf(lab, sizeof lab, "%d%%", 25 * k);
        svg_text(b, left + pw + 4, YS(0.25 * k) + 3, "start", 9, SVG_MUTED, 0, NULL, lab);
    }
    svg_text(b, 12, top + ph / 2, "middle", 10, SVG_INK, -90, NULL, "eigenvalue");
    svg_text(b, w - 8, top + ph / 2, "middle", 10, SVG_INK, 90, NULL, "cumulative share");
    for (size_t k = 0; k < n; k++) {
        char t[160];
        snprintf(t, sizeof t, "PC%zu: eigenvalue %.4g, share %.2f%%, cumulative %.2f%%", k + 1,
                 p->eigenvalues[k], 100 * p->share[k], 100 * p->cumulative[k]);
        html_raw(b, "<g class=\"scree\" data-eigenvalue=\"");
        html_number(b, p->eigenvalues[k]);
        html_raw(b, "\" data-cumulative=\"");
        html_number(b, p->cumulative[k]);
        html_raw(b, "\">");
        svg_rect(b, left + bw * (double)k + bw * 0.15, YE(p->eigenvalues[k]), bw * 0.7,
                 top + ph - YE(p->eigenvalues[k]), k < r->pca_k ? SVG_KEPT : SVG_DROPPED, t);
        html_raw(b, "</g>\n");
        if (n <= 30 && (n <= 15 || k % 2 == 0)) {
            snprintf(lab, sizeof lab, "%zu", k + 1);
            svg_text(b, left + bw * ((double)k + 0.5), top + ph + 12, "middle", 9, SVG_MUTED, 0, NULL, lab);
        }
    }
    /* Kaiser: the mean eigenvalue */
    svg_line(b, left, YE(mean), left + pw, YE(mean), SVG_ACCENT, 1.4, "6 3");
    /* broken stick */
    svg_path_begin(b, "#2f7d4f", 1.4, "2 2", NULL);
    for (size_t k = 0; k < n; k++)
        svg_path_to(b, k == 0, left + bw * ((double)k + 0.5), YE(pca_broken_stick(k + 1, p->p) * p->total));
    svg_path_end(b, "broken stick: the eigenvalue each component would have if the variance were split at random");
    /* cumulative share */
    svg_path_begin(b, SVG_INK, 1.4, NULL, NULL);
    for (size_t k = 0; k < n; k++) svg_path_to(b, k == 0, left + bw * ((double)k + 0.5), YS(p->cumulative[k]));
    svg_path_end(b, NULL);
    for (size_t k = 0; k < n; k++) {
        char t[96];
        snprintf(t, sizeof t, "cumulative share to PC%zu: %.2f%%", k + 1, 100 * p->cumulative[k]);
        svg_circle(b, left + bw * ((double)k + 0.5), YS(p->cumulative[k]), 2.6, SVG_INK, NULL, t);
    }
    /* chosen k */
    double kx = left + bw * (double)r->pca_k;
    svg_line(b, kx, top - 6, kx, top + ph, SVG_ACCENT, 1, NULL);
    snprintf(lab, sizeof lab, "k = %zu (Kaiser)", r->pca_k);
    svg_text(b, kx + 3, top - 8, "start", 10, SVG_ACCENT, 0, NULL, lab);
    /* legend */
    double ly = h - 12;
    svg_rect(b, left, ly - 8, 10, 9, SVG_KEPT, NULL);
    svg_text(b, left + 13, ly, "start", 9, SVG_INK, 0, NULL, "kept");
    svg_line(b, left + 44, ly - 3, left + 64, ly - 3, SVG_ACCENT, 1.4, "6 3");
    snprintf(lab, sizeof lab, "Kaiser (mean eigenvalue %.3g)", mean);
    svg_text(b, left + 67, ly, "start", 9, SVG_INK, 0, NULL, lab);
    svg_line(b, left + 210, ly - 3, left + 230, ly - 3, "#2f7d4f", 1.4, "2 2");
    svg_text(b, left + 233, ly, "start", 9, SVG_INK, 0, NULL, "broken stick");
    svg_line(b, left + 300, ly - 3, left + 320, ly - 3, SVG_INK, 1.4, NULL);
    svg_text(b, left + 323, ly, "start", 9, SVG_INK, 0, NULL, "cumulative share");
    if (n < p->p) {
        snprintf(lab, sizeof lab, "first %zu of %zu components", n, p->p);
        svg_text(b, left + pw, top - 8, "end", 9, SVG_MUTED, 0, NULL, lab);
    }
#undef YE
#undef YS
    svg_end(b);
}

static void chart_loadings(html_buf *b, const report *r, int standalone)
{
    const pca_result *p = r->pca;
    size_t k = r->pca_k < 12 ? r->pca_k : 12, rows = p->p < REPORT_MAX_HEAT ? p->p : REPORT_MAX_HEAT;
    size_t longest = 6;
    for (size_t j = 0; j < rows; j++) {
        size_t l = label_chars(summary_name(r->s, p->cols[j]));
        if (l > longest) longest = l;
    }
    const double font = 10, rh = 14, cw = 46, left = 10 + CHAR_WIDTH * font * (double)longest, top = 22;
    double w = left + cw * (double)k + 20, h = top + rh * (double)rows + 44;
    if (w < 300) w = 300;
    svg_begin(b, w, h, "Loadings of the kept principal components", standalone);
    char lab[64], col[8], cut[128], *tb = NULL;
    size_t tcap = 0;
    for (size_t c = 0; c < k; c++) {
        snprintf(lab, sizeof lab, "PC%zu", c + 1);
        svg_text(b, left + cw * ((double)c + 0.5), top - 6, "middle", 10, SVG_INK, 0, "font-weight=\"600\"", lab);
    }
    for (size_t j = 0; j < rows; j++) {
        const char *name = summary_name(r->s, p->cols[j]);
        svg_text(b, left - 5, top + rh * ((double)j + 0.72), "end", font, SVG_INK, 0, "class=\"label\"",
                 short_label(name, cut, sizeof cut));
        for (size_t c = 0; c < k; c++) {
            double v = p->loadings[c * p->p + j];
            svg_diverging(v, col);
            svg_rect(b, left + cw * (double)c, top + rh * (double)j, cw - 1, rh - 1, col,
                     tip(&tb, &tcap, "%s on PC%zu: %.4f", name, c + 1, v));
            snprintf(lab, sizeof lab, "%.2f", v);
            svg_text(b, left + cw * ((double)c + 0.5), top + rh * ((double)j + 0.72), "middle", 9,
                     svg_dark(col) ? "#ffffff" : SVG_INK, 0, "pointer-events=\"none\"", lab);
        }
    }
    free(tb);
    if (rows < p->p) {
        snprintf(lab, sizeof lab, "first %zu of %zu columns", rows, p->p);
        svg_text(b, left, h - 26, "start", 9, SVG_MUTED, 0, NULL, lab);
    }
    svg_text(b, left, h - 10, "start", 9, SVG_MUTED, 0, NULL,
             "loading: the column's weight in the unit eigenvector (same colours as r)");
    svg_end(b);
}

/* ---- the chart list ------------------------------------------------------ */

size_t report_chart_list(const report *r, chart_kind *kind, size_t *arg)
{
    size_t n = 0;
    size_t tested = 0;
    if (r->screen && r->screen->task != TASK_AUTO)
        for (size_t i = 0; i < r->screen->nfeatures; i++) tested += !isnan(r->screen->features[i].log10_p);
    if (tested) { kind[n] = CHART_RELEVANCE; arg[n++] = 0; }
    if (r->nheat >= 2) { kind[n] = CHART_HEATMAP; arg[n++] = 0; }
    if (r->has_classes) {
        kind[n] = CHART_BALANCE; arg[n++] = 0;
        for (size_t i = 0; i < r->nclass_cols; i++) { kind[n] = CHART_CLASSES; arg[n++] = i; }
    }
    if (r->pca) {
        kind[n] = CHART_SCREE; arg[n++] = 0;
        kind[n] = CHART_LOADINGS; arg[n++] = 0;
    }
    return n;
}

void report_draw(html_buf *b, const report *r, chart_kind k, size_t arg, int standalone)
{
    switch (k) {
    case CHART_RELEVANCE: chart_relevance(b, r, standalone); break;
    case CHART_HEATMAP: chart_heatmap(b, r, standalone); break;
    case CHART_BALANCE: chart_balance(b, r, standalone); break;
    case CHART_CLASSES: chart_classes(b, r, arg, standalone); break;
    case CHART_SCREE: chart_scree(b, r, standalone); break;
    case CHART_LOADINGS: chart_loadings(b, r, standalone); break;
    }
}

size_t report_chart_count(const report *r)
{
    chart_kind k[MAX_CHARTS];
    size_t a[MAX_CHARTS];
    return report_chart_list(r, k, a);
}

int report_chart(const report *r, size_t i, html_buf *out, const char **name)
{
    static const char *const CLASS_NAMES[REPORT_CLASS_COLUMNS] = {
        "classes-1.svg", "classes-2.svg", "classes-3.svg", "classes-4.svg", "classes-5.svg", "classes-6.svg"};
    chart_kind k[MAX_CHARTS];
    size_t a[MAX_CHARTS];
    size_t n = report_chart_list(r, k, a);
    if (i >= n) return -1;
    switch (k[i]) {
    case CHART_RELEVANCE: *name = "relevance.svg"; break;
    case CHART_HEATMAP: *name = "heatmap.svg"; break;
    case CHART_BALANCE: *name = "balance.svg"; break;
    case CHART_CLASSES: *name = CLASS_NAMES[a[i]]; break;
    case CHART_SCREE: *name = "scree.svg"; break;
    case CHART_LOADINGS: *name = "loadings.svg"; break;
    }
    html_raw(out, "<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n");
    report_draw(out, r, k[i], a[i], 1);
    return out->failed ? -1 : 0;
}
