/* report_html: the page and its charts (see report_html.h; docs/report.md
 * says what each chart shows). */
#include "out/report_html.h"
#include "out/report_parts.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>

#include "out/svg.h"
#include "stats/logp.h"
#include "summary/access.h"

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

void report_fmt_num(char *buf, size_t cap, double v)
{
    if (isnan(v)) snprintf(buf, cap, "\xe2\x80\x93");
    else if (v != 0 && (fabs(v) >= 1e6 || fabs(v) < 1e-3)) snprintf(buf, cap, "%.3g", v);
    else snprintf(buf, cap, "%.4g", v);
}

static const char *task_name(target_task t)
{
    return t == TASK_CLASSIFY ? "classification" : t == TASK_REGRESS ? "regression" : "none";
}

/* ---- the column table's small pictures ----------------------------------- */

static void mini_histogram(html_buf *b, const report_column *c)
{
    const double w = 96, h = 22;
    uint64_t top = 0;
    for (size_t k = 0; k < REPORT_BINS; k++) if (c->hist[k] > top) top = c->hist[k];
    svg_begin(b, w, h, NULL, 0);
    double bw = w / REPORT_BINS, step = (c->hi - c->lo) / REPORT_BINS;
    for (size_t k = 0; k < REPORT_BINS && top; k++) {
        double bh = (h - 2) * (double)c->hist[k] / (double)top;
        char t[160], lo[32], hi[32];
        report_fmt_num(lo, sizeof lo, c->lo + step * (double)k);
        report_fmt_num(hi, sizeof hi, c->lo + step * (double)(k + 1));
        snprintf(t, sizeof t, "%s%s to %s%s: %llu", k == 0 ? "\xe2\x89\xa4 " : "", lo, hi,
                 k + 1 == REPORT_BINS ? " and above" : "", (unsigned long long)c->hist[k]);
        svg_rect(b, bw * (double)k + 0.5, h - 1 - bh, bw - 1, bh, SVG_KEPT, t);
    }
    svg_line(b, 0, h - 0.5, w, h - 0.5, SVG_MUTED, 1, NULL);
    svg_end(b);
}

static void mini_top_values(html_buf *b, const report_column *c)
{
    const double w = 96, h = 14;
    uint64_t total = c->d.present ? c->d.present : 1;
    svg_begin(b, w, h, NULL, 0);
    svg_rect(b, 0, 2, w, h - 4, "#eceae4", NULL);
    double x = 0;
    for (size_t i = 0; i < c->d.ntop; i++) {
        const values_entry *e = &c->d.top[i];
        double share = (double)e->count / (double)total, bw = w * share;
        html_buf t;
        html_init(&t);
        html_raw_n(&t, e->label, e->label_len);
        html_printf(&t, "%s: %llu (%.1f%%)", e->cut ? "\xe2\x80\xa6" : "", (unsigned long long)e->count,
                    100 * share);
        html_raw_n(&t, "", 1);
        svg_rect(b, x, 2, bw, h - 4, svg_class_color(i), t.failed ? NULL : t.data);
        html_free(&t);
        x += bw;
    }
    svg_end(b);
}

/* ---- charts -------------------------------------------------------------- */

typedef enum {
    CHART_RELEVANCE,
    CHART_HEATMAP,
    CHART_BALANCE,
    CHART_CLASSES,
    CHART_SCREE,
    CHART_LOADINGS
} chart_kind;

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
    for (size_t i = 0; i < shown; i++) {
        const screen_feature *f = &sr->features[idx[i]];
        double y = top + row * (double)i;
        const char *name = summary_name(r->s, f->col);
        char cut[128], lp[40], lq[40], t[1024];
        double e = evidence(isnan(f->log10_q) ? f->log10_p : f->log10_q);
        int infinite = !isfinite(e);
        if (infinite) e = emax;
        logp_format(lp, sizeof lp, f->log10_p, 3);
        if (isnan(f->log10_q)) snprintf(lq, sizeof lq, "none (%s)", f->unreliable ? "unreliable test" : "untested");
        else logp_format(lq, sizeof lq, f->log10_q, 3);
        snprintf(t, sizeof t, "%s: p = %s, q = %s, normalized MI %.3f; %s: %s", name, lp, lq,
                 f->mi.present ? f->mi.normalized : NAN, f->keep ? "kept" : "dropped", f->reasons);
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
    char cut[128], t[1024], col[8];
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
            snprintf(t, sizeof t, "%s \xc3\x97 %s: r = %.3f%s", summary_name(r->s, r->heat_cols[i]),
                     summary_name(r->s, r->heat_cols[j]), v, red ? " (pruned as redundant)" : "");
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
        char cut[128], t[512], v[64];
        const char *lab = summary_class_label(r->s, i);
        svg_text(b, left - 6, y + row * 0.7, "end", font, SVG_INK, 0, "class=\"label\"", short_label(lab, cut, sizeof cut));
        snprintf(t, sizeof t, "%s: %llu rows (%.2f%%)", lab, (unsigned long long)n, 100 * share);
        svg_rect(b, left, y + 3, most ? bar * (double)n / (double)most : 0, row - 6, svg_class_color(i), t);
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
    char title[512];
    snprintf(title, sizeof title, "%s by class: share of each class's rows per bin", name);
    svg_begin(b, w, h, title, standalone);
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
        char t[512];
        snprintf(t, sizeof t, "%s = %s: %llu rows with a number", summary_target_name(r->s),
                 summary_class_label(r->s, cls[i]), (unsigned long long)tot);
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
    char lab[64], col[8], cut[128], t[512];
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
            snprintf(t, sizeof t, "%s on PC%zu: %.4f", name, c + 1, v);
            svg_rect(b, left + cw * (double)c, top + rh * (double)j, cw - 1, rh - 1, col, t);
            snprintf(lab, sizeof lab, "%.2f", v);
            svg_text(b, left + cw * ((double)c + 0.5), top + rh * ((double)j + 0.72), "middle", 9,
                     svg_dark(col) ? "#ffffff" : SVG_INK, 0, "pointer-events=\"none\"", lab);
        }
    }
    if (rows < p->p) {
        snprintf(lab, sizeof lab, "first %zu of %zu columns", rows, p->p);
        svg_text(b, left, h - 26, "start", 9, SVG_MUTED, 0, NULL, lab);
    }
    svg_text(b, left, h - 10, "start", 9, SVG_MUTED, 0, NULL,
             "loading: the column's weight in the unit eigenvector (same colours as r)");
    svg_end(b);
}

/* ---- the chart list ------------------------------------------------------ */

static size_t chart_list(const report *r, chart_kind *kind, size_t *arg)
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

#define MAX_CHARTS (4 + REPORT_CLASS_COLUMNS + 2)

static void draw(html_buf *b, const report *r, chart_kind k, size_t arg, int standalone)
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
    return chart_list(r, k, a);
}

int report_chart(const report *r, size_t i, html_buf *out, const char **name)
{
    static const char *const CLASS_NAMES[REPORT_CLASS_COLUMNS] = {
        "classes-1.svg", "classes-2.svg", "classes-3.svg", "classes-4.svg", "classes-5.svg", "classes-6.svg"};
    chart_kind k[MAX_CHARTS];
    size_t a[MAX_CHARTS];
    size_t n = chart_list(r, k, a);
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
    draw(out, r, k[i], a[i], 1);
    return out->failed ? -1 : 0;
}

/* ---- the page ------------------------------------------------------------ */

static const char CSS[] =
    "*{box-sizing:border-box}\n"
    "body{margin:0;background:#fbfaf7;color:#1d2430;font:15px/1.5 " SVG_FONT ";}\n"
    "main{max-width:1240px;margin:0 auto;padding:28px 32px 60px}\n"
    "h1{font-size:26px;margin:0 0 2px;font-weight:650;letter-spacing:-0.01em}\n"
    "h2{font-size:19px;margin:38px 0 6px;padding-top:14px;border-top:2px solid #1d2430;font-weight:650}\n"
    "h3{font-size:15px;margin:18px 0 4px}\n"
    "p.read{color:#5b6270;max-width:78ch;margin:4px 0 12px;font-size:14px}\n"
    ".sub{color:#5b6270;margin:0 0 16px}\n"
    "nav{margin:10px 0 0;font-size:14px}nav a{color:#1f5f99;margin-right:14px}\n"
    "dl.facts{display:grid;grid-template-columns:max-content 1fr;gap:3px 18px;margin:8px 0}\n"
    "dl.facts dt{color:#5b6270}dl.facts dd{margin:0;font-variant-numeric:tabular-nums}\n"
    "figure{margin:10px 0 18px;overflow-x:auto}figure svg{display:block;max-width:none}\n"
    ".grid{display:flex;flex-wrap:wrap;gap:8px 20px}\n"
    ".scroll{overflow-x:auto;max-width:100%}\n"
    "table{border-collapse:collapse;font-size:13px;font-variant-numeric:tabular-nums}\n"
    "th,td{padding:3px 8px;border-bottom:1px solid #dedbd3;text-align:right;vertical-align:middle}\n"
    "th{position:sticky;top:0;background:#efece5;font-weight:600;cursor:pointer;white-space:nowrap}\n"
    "th[aria-sort=ascending]::after{content:' \\2191'}th[aria-sort=descending]::after{content:' \\2193'}\n"
    "td.name,th.name,td.t{text-align:left}td.name{font-weight:600;max-width:22ch;overflow-wrap:anywhere}\n"
    "td.why{text-align:left;color:#5b6270;max-width:34ch;font-size:12px}\n"
    "td.kept{color:#1f5f99;font-weight:600}td.dropped{color:#7a7f88}\n"
    "td.pic svg{display:block}\n"
    "tr:hover td{background:#f1efe9}\n"
    "rect.cell:hover{stroke:#000;stroke-width:1.5}\n"
    "ol.cautions{max-width:80ch;padding-left:22px}ol.cautions li{margin:4px 0}\n"
    "footer{margin-top:40px;color:#5b6270;font-size:13px}\n"
    "@media print{body{background:#fff}main{max-width:none;padding:0}h2{break-after:avoid}"
    "figure,table{break-inside:avoid}th{position:static}}\n";

static const char SCRIPT[] =
    "//<![CDATA[\n"
    "(function(){var t=document.getElementById('columns');if(!t)return;\n"
    "var hs=t.tHead.rows[0].cells;\n"
    "Array.prototype.forEach.call(hs,function(th,i){th.tabIndex=0;th.title='sort';\n"
    "function go(){var dir=th.getAttribute('aria-sort')==='ascending'?-1:1;\n"
    "Array.prototype.forEach.call(hs,function(o){o.removeAttribute('aria-sort')});\n"
    "var b=t.tBodies[0],rows=Array.prototype.slice.call(b.rows);\n"
    "rows.sort(function(a,c){var x=a.cells[i].getAttribute('data-v'),y=c.cells[i].getAttribute('data-v');\n"
    "var nx=parseFloat(x),ny=parseFloat(y),d;\n"
    "if(isNaN(nx)||isNaN(ny)){d=isNaN(nx)-isNaN(ny);if(!d)d=String(x).localeCompare(String(y));}else d=nx-ny;\n"
    "return dir*d;});\n"
    "rows.forEach(function(r){b.appendChild(r)});th.setAttribute('aria-sort',dir>0?'ascending':'descending');}\n"
    "th.addEventListener('click',go);th.addEventListener('keydown',function(e){if(e.key==='Enter')go();});});\n"
    "})();\n"
    "//]]>\n";

static void fact(html_buf *b, const char *dt, const char *dd)
{
    html_raw(b, "<dt>");
    html_text(b, dt);
    html_raw(b, "</dt><dd>");
    html_text(b, dd);
    html_raw(b, "</dd>\n");
}

static void fmt_time(char *buf, size_t cap, int64_t t)
{
    time_t tt = (time_t)t;
    struct tm tm;
    if (!gmtime_r(&tt, &tm) || !strftime(buf, cap, "%Y-%m-%d %H:%M UTC", &tm)) snprintf(buf, cap, "?");
}

static void overview(html_buf *b, const report *r, const report_page *p)
{
    const summary *s = r->s;
    char v[512];
    html_raw(b, "<section id=\"overview\"><h2>Overview</h2>\n<dl class=\"facts\">\n");
    snprintf(v, sizeof v, "%llu", (unsigned long long)summary_rows(s));
    fact(b, "rows", v);
    snprintf(v, sizeof v, "%zu", summary_columns(s));
    fact(b, "columns", v);
    snprintf(v, sizeof v, "%.1f MB decompressed (%llu bytes)", (double)summary_bytes(s) / 1e6,
             (unsigned long long)summary_bytes(s));
    fact(b, "bytes read", v);
    size_t ns = summary_source_count(s), shards = 0;
    int64_t t0 = 0, t1 = 0;
    for (size_t i = 0; i < ns; i++) {
        const summary_source *src = summary_source_at(s, i);
        shards += src->start_byte != 0 || src->end_byte != 0;
        if (i == 0 || src->mtime < t0) t0 = src->mtime;
        if (i == 0 || src->mtime > t1) t1 = src->mtime;
    }
    snprintf(v, sizeof v, "%zu source%s%s", ns, ns == 1 ? "" : "s", shards ? "" : " (whole files)");
    if (shards) snprintf(v + strlen(v), sizeof v - strlen(v), ", %zu of them byte-range shards", shards);
    fact(b, "sources", v);
    if (ns) {
        char a[40], c[40];
        fmt_time(a, sizeof a, t0);
        fmt_time(c, sizeof c, t1);
        snprintf(v, sizeof v, ns > 1 && t0 != t1 ? "%s to %s" : "%s", a, c);
        fact(b, "sources modified", v);
    }
    fact(b, "time span", "no time column is declared (a summary records none)");
    const char *tn = summary_target_name(s);
    target_task task = summary_task(s, r->opt.numeric_share);
    if (tn) {
        snprintf(v, sizeof v, "%s", tn);
        fact(b, "target", v);
        snprintf(v, sizeof v, "%s%s", task_name(task), summary_declared_task(s) ? " (declared)" : " (decided from the target's cells)");
        if (task == TASK_CLASSIFY && summary_classes_kept(s))
            snprintf(v + strlen(v), sizeof v - strlen(v), ", %u classes", summary_class_count(s));
        fact(b, "task", v);
    } else {
        fact(b, "target", "none (flags and correlations only)");
    }
    if (r->screen) {
        snprintf(v, sizeof v, "%zu of %zu columns kept (q-value level %g, redundancy |r| \xe2\x89\xa5 %g)",
                 r->screen->kept, r->screen->nfeatures, r->opt.screen.q_level, r->opt.screen.redundancy);
        fact(b, "screen", v);
    }
    uint32_t nm = summary_missing_spellings(s);
    snprintf(v, sizeof v, "%u missing-value spelling%s besides the empty cell%s", nm, nm == 1 ? "" : "s",
             nm ? (summary_missing_any_case(s) ? ", matched in any letter case" : ", matched byte for byte") : "");
    for (uint32_t i = 0; i < nm && strlen(v) + 40 < sizeof v; i++)
        snprintf(v + strlen(v), sizeof v - strlen(v), "%s%.32s", i ? ", " : ": ", summary_missing_spelling(s, i));
    fact(b, "how it was scanned", v);
    if (p->made) fact(b, "summary written", p->made);
    html_raw(b, "</dl>\n");
    if (ns) {
        html_raw(b, "<h3>Sources</h3>\n<div class=\"scroll\"><table class=\"sources\"><thead><tr>"
                    "<th class=\"name\">file</th><th>format</th><th>bytes</th><th>rows</th><th>byte range</th>"
                    "<th>modified</th></tr></thead><tbody>\n");
        size_t shown = ns < 50 ? ns : 50;
        for (size_t i = 0; i < shown; i++) {
            const summary_source *src = summary_source_at(s, i);
            char t[40];
            fmt_time(t, sizeof t, src->mtime);
            html_raw(b, "<tr><td class=\"name\">");
            html_text(b, src->path);
            html_raw(b, "</td><td>");
            html_text(b, src->format);
            html_printf(b, "</td><td>%llu</td><td>%llu</td><td>", (unsigned long long)src->size_bytes,
                        (unsigned long long)src->rows);
            if (src->start_byte || src->end_byte)
                html_printf(b, "%llu\xe2\x80\x93%llu", (unsigned long long)src->start_byte,
                            (unsigned long long)src->end_byte);
            else html_raw(b, "whole");
            html_printf(b, "</td><td>%s</td></tr>\n", t);
        }
        html_raw(b, "</tbody></table></div>\n");
        if (shown < ns) html_printf(b, "<p class=\"read\">%zu more sources (sheaf info lists all).</p>\n", ns - shown);
    }
    html_raw(b, "</section>\n");
}

void report_cell_num(html_buf *b, double v)
{
    char t[40];
    report_fmt_num(t, sizeof t, v);
    html_raw(b, "<td data-v=\"");
    html_number(b, v);
    html_raw(b, "\">");
    html_text(b, t);
    html_raw(b, "</td>");
}

static void column_table(html_buf *b, const report *r)
{
    html_raw(b, "<section id=\"columns-section\"><h2>Columns</h2>\n"
                "<p class=\"read\">One row per column, in file order; click a heading to sort (the page "
                "reads the same without scripts). Shape: a histogram of the numbers between the 1% and 99% "
                "quantiles (the end bars also hold the tails), or the shares of the most frequent values of a "
                "text column. Hover a bar for its count.</p>\n"
                "<div class=\"scroll\"><table id=\"columns\"><thead><tr>"
                "<th class=\"name\">column</th><th>kind</th><th>count</th><th>missing</th><th>mean</th><th>sd</th>"
                "<th>min</th><th>median</th><th>max</th><th>distinct</th><th>decision</th><th class=\"name\">reason</th>"
                "<th class=\"name\">shape</th></tr></thead><tbody>\n");
    const summary *s = r->s;
    for (size_t c = 0; c < r->ncols; c++) {
        const report_column *rc = &r->cols[c];
        const column_description *d = &rc->d;
        uint64_t cells = d->present + d->missing;
        double miss = cells ? (double)d->missing / (double)cells : NAN;
        html_printf(b, "<tr data-col=\"%zu\"><td class=\"name\" data-v=\"", c);
        html_text(b, d->name);
        html_raw(b, "\">");
        html_text(b, d->name);
        html_printf(b, "</td><td class=\"t\" data-v=\"%s\">%s</td>", d->kind == KIND_NUMERIC ? "numeric" : "text",
                    d->kind == KIND_NUMERIC ? "numeric" : "text");
        uint64_t count = d->kind == KIND_NUMERIC ? d->numbers : d->present;
        html_printf(b, "<td data-v=\"%llu\">%llu</td>", (unsigned long long)count, (unsigned long long)count);
        html_raw(b, "<td data-v=\"");
        html_number(b, miss);
        html_printf(b, "\">%.1f%%</td>", 100 * (isnan(miss) ? 0 : miss));
        int num = d->kind == KIND_NUMERIC;
        report_cell_num(b, num ? d->mean : NAN);
        report_cell_num(b, num ? d->sd : NAN);
        report_cell_num(b, num ? d->min : NAN);
        report_cell_num(b, num ? d->median : NAN);
        report_cell_num(b, num ? d->max : NAN);
        char dist[48];
        snprintf(dist, sizeof dist, d->distinct_exact ? "%.0f" : "~%.0f", d->distinct);
        html_raw(b, "<td data-v=\"");
        html_number(b, d->distinct);
        html_printf(b, "\">%s</td>", dist);
        if ((long)c == summary_target_column(s)) {
            html_raw(b, "<td class=\"t\" data-v=\"target\">target</td><td class=\"why\" data-v=\"\">the outcome</td>");
        } else if (rc->feature >= 0 && r->screen) {
            const screen_feature *f = &r->screen->features[rc->feature];
            html_printf(b, "<td class=\"t %s\" data-v=\"%s\">%s</td><td class=\"why\" data-v=\"", f->keep ? "kept" : "dropped",
                        f->keep ? "kept" : "dropped", f->keep ? "kept" : "dropped");
            html_text(b, f->reasons);
            html_raw(b, "\">");
            html_text(b, f->reasons);
            html_raw(b, "</td>");
        } else {
            html_raw(b, "<td class=\"t\" data-v=\"\"></td><td class=\"why\" data-v=\"\"></td>");
        }
        html_raw(b, "<td class=\"pic\" data-v=\"\"");
        if (rc->has_hist) {
            html_raw(b, " data-counts=\"");
            for (size_t k = 0; k < REPORT_BINS; k++)
                html_printf(b, "%s%llu", k ? " " : "", (unsigned long long)rc->hist[k]);
            html_raw(b, "\"");
        }
        html_raw(b, ">");
        if (rc->has_hist) mini_histogram(b, rc);
        else if (d->ntop) mini_top_values(b, rc);
        html_raw(b, "</td></tr>\n");
    }
    html_raw(b, "</tbody></table></div>\n</section>\n");
}

static void figure(html_buf *b, const report *r, chart_kind k, size_t arg)
{
    html_raw(b, "<figure>\n");
    draw(b, r, k, arg, 0);
    html_raw(b, "</figure>\n");
}

static void cautions(html_buf *b)
{
    html_raw(b,
             "<section id=\"cautions\"><h2>Cautions</h2>\n"
             "<p class=\"read\">Screening statistics are a guide to where to look, not proof.</p>\n"
             "<ol class=\"cautions\">\n"
             "<li>The p-values assume independent rows; rows from one machine, session or container are not "
             "independent, and make p-values too small.</li>\n"
             "<li>Choosing columns and testing them on the same data inflates their significance: confirm a "
             "choice on data it was not made from (another night, a held-out shard).</li>\n"
             "<li>A correlation, an F statistic or a mutual information is not a cause; a column may also leak "
             "the outcome. Columns that predict it almost perfectly are flagged mirrors_target; a weaker leak "
             "is not seen.</li>\n"
             "<li>Text columns with many rare levels show large plug-in MI by chance: read the adjusted MI, and "
             "trust no test marked unreliable (Cochran's rule, small ANOVA levels).</li>\n"
             "<li>Many tests at once: read the q-values (Benjamini-Hochberg), not the raw p-values.</li>\n"
             "<li>A tiny p-value is not a large effect: over millions of rows a negligible difference gets "
             "p = 1e-1000. Read it with the effect sizes (MI, r).</li>\n"
             "<li>Histograms and quantiles beyond the exact value table come from buckets of stated relative "
             "error; distinct counts marked ~ are HyperLogLog estimates (about 0.8%).</li>\n"
             "</ol>\n</section>\n");
}

int report_html_write(const report *r, const report_page *p, html_buf *b)
{
    chart_kind kind[MAX_CHARTS];
    size_t arg[MAX_CHARTS];
    size_t n = chart_list(r, kind, arg);
    html_raw(b, "<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\"/>\n"
                "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\"/>\n"
                "<meta http-equiv=\"Content-Security-Policy\" content=\"default-src 'none'; "
                "style-src 'unsafe-inline'; script-src 'unsafe-inline'; img-src data:\"/>\n<title>");
    html_text(b, "sheaf report: ");
    html_text(b, p->summary_name);
    html_raw(b, "</title>\n<style>\n");
    html_raw(b, CSS);
    html_raw(b, "</style>\n</head>\n<body>\n<main>\n<h1>");
    html_text(b, p->summary_name);
    html_raw(b, "</h1>\n<p class=\"sub\">");
    html_textf(b, "A report of one sheaf summary: %llu rows, %zu columns%s%s.",
               (unsigned long long)summary_rows(r->s), summary_columns(r->s),
               summary_target_name(r->s) ? ", target " : "",
               summary_target_name(r->s) ? summary_target_name(r->s) : "");
    html_raw(b, "</p>\n<nav><a href=\"#overview\">overview</a>");
    if (p->drift) html_raw(b, "<a href=\"#drift\">drift</a>");
    html_raw(b, "<a href=\"#columns-section\">columns</a>");
    int has_rel = 0, has_heat = 0;
    for (size_t i = 0; i < n; i++) {
        has_rel |= kind[i] == CHART_RELEVANCE;
        has_heat |= kind[i] == CHART_HEATMAP;
    }
    if (has_rel) html_raw(b, "<a href=\"#relevance\">relevance</a>");
    if (has_heat) html_raw(b, "<a href=\"#correlation\">correlation</a>");
    if (r->has_classes) html_raw(b, "<a href=\"#classes\">classes</a>");
    if (r->pca) html_raw(b, "<a href=\"#components\">components</a>");
    html_raw(b, "<a href=\"#cautions\">cautions</a></nav>\n");
    overview(b, r, p);
    if (p->drift) report_drift_section(b, p);
    column_table(b, r);

    html_raw(b, "<section id=\"relevance\"><h2>Relevance</h2>\n");
    if (has_rel) {
        html_raw(b, "<p class=\"read\">One bar per tested column, strongest first: the length is the evidence "
                    "against no association, \xe2\x88\x92log10 of the Benjamini-Hochberg q-value, on a log scale "
                    "(a bar of 10 is q = 1e-10, of 100 is q = 1e-100). Past the dashed line q is below the false "
                    "discovery level. Solid bars are kept; pale ones are dropped (the reason is in the column table "
                    "and on hover). The right-hand bars are the normalized mutual information (0: none, 1: the "
                    "column determines the target), a size of the effect that the p-value is not.</p>\n");
        for (size_t i = 0; i < n; i++) if (kind[i] == CHART_RELEVANCE) figure(b, r, kind[i], arg[i]);
    } else {
        html_raw(b, "<p class=\"read\">No column was tested: the summary was scanned without a target.</p>\n");
    }
    html_raw(b, "</section>\n<section id=\"correlation\"><h2>Correlation</h2>\n");
    if (has_heat) {
        html_raw(b, "<p class=\"read\">Pearson r of every pair of numeric columns over the rows where both hold a "
                    "number. Columns are ordered by average-linkage clustering on 1 \xe2\x88\x92 |r| with the leaf "
                    "order that keeps similar columns side by side, so strongly related columns form dark blocks "
                    "on the diagonal; the dendrogram on the left shows at what 1 \xe2\x88\x92 |r| they join. Orange "
                    "is positive, blue negative, darker is stronger (in grey, darkness reads as strength). Rings "
                    "mark pairs the screen pruned as redundant. Hover a cell for its value.</p>\n");
        for (size_t i = 0; i < n; i++) if (kind[i] == CHART_HEATMAP) figure(b, r, kind[i], arg[i]);
    } else {
        html_raw(b, "<p class=\"read\">Fewer than two numeric columns with co-moments: no matrix to draw.</p>\n");
    }
    html_raw(b, "</section>\n");
    if (r->has_classes) {
        html_raw(b, "<section id=\"classes\"><h2>Classes</h2>\n<p class=\"read\">The class balance of the target, "
                    "then, for the best-ranked numeric columns, the distribution of the column within each class "
                    "(each line sums to 100% of its class's rows, so small classes are as visible as large ones). "
                    "Lines apart mean the column separates the classes; lines on top of each other mean it does "
                    "not. Each class has its own colour and dash pattern.</p>\n");
        for (size_t i = 0; i < n; i++) if (kind[i] == CHART_BALANCE) figure(b, r, kind[i], arg[i]);
        html_raw(b, "<div class=\"grid\">\n");
        for (size_t i = 0; i < n; i++) if (kind[i] == CHART_CLASSES) figure(b, r, kind[i], arg[i]);
        html_raw(b, "</div>\n</section>\n");
    }
    html_raw(b, "<section id=\"components\"><h2>Principal components</h2>\n");
    if (r->pca) {
        html_raw(b, "<p class=\"read\">The eigenvalues of the correlation matrix of the numeric columns a screen "
                    "would test (bars), with the cumulative share of the variance (line, right axis). Two guides "
                    "to how many components matter: the Kaiser rule keeps components above the mean eigenvalue "
                    "(dashed), the broken-stick rule those above the share a random split would give (dotted). "
                    "The report keeps the Kaiser count; the table below it shows their loadings, the weight of each "
                    "column in each component.</p>\n");
        for (size_t i = 0; i < n; i++)
            if (kind[i] == CHART_SCREE || kind[i] == CHART_LOADINGS) figure(b, r, kind[i], arg[i]);
    } else {
        html_raw(b, "<p class=\"read\">No principal components: ");
        html_text(b, r->pca_error[0] ? r->pca_error : "no numeric columns");
        html_raw(b, "</p>\n");
    }
    html_raw(b, "</section>\n");
    cautions(b);
    html_raw(b, "<footer>Written by sheaf from the summary alone; no data row was read again. Every chart is "
                "inline SVG; the page loads nothing from anywhere.</footer>\n</main>\n<script>\n");
    html_raw(b, SCRIPT);
    html_raw(b, "</script>\n</body>\n</html>\n");
    return b->failed ? -1 : 0;
}
