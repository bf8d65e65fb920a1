/* report_html: the page (see report_html.h; docs/report.md says what each
 * chart shows); the charts are drawn by report_charts.c. */
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

/* ---- text helpers -------------------------------------------------------- */

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
        fact(b, "target", tn);
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
    /* Every spelling whole (each is at most SUMMARY_MAX_MISSING_BYTES). */
    size_t cap = 256 + (size_t)nm * (SUMMARY_MAX_MISSING_BYTES + 2);
    char *how = malloc(cap);
    if (!how) { b->failed = 1; return; }
    snprintf(how, cap, "%u missing-value spelling%s besides the empty cell%s", nm, nm == 1 ? "" : "s",
             nm ? (summary_missing_any_case(s) ? ", matched in any letter case" : ", matched byte for byte") : "");
    for (uint32_t i = 0; i < nm; i++)
        snprintf(how + strlen(how), cap - strlen(how), "%s%s", i ? ", " : ": ", summary_missing_spelling(s, i));
    fact(b, "how it was scanned", how);
    free(how);
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
    report_draw(b, r, k, arg, 0);
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
    size_t n = report_chart_list(r, kind, arg);
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
        html_raw(b, summary_target_column(r->s) >= 0
                        ? "<p class=\"read\">No column was tested against the target (too few rows, "
                          "or no column a test applies to).</p>\n"
                        : "<p class=\"read\">No column was tested: the summary was scanned without a "
                          "target.</p>\n");
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
        if (r->pca->undefined_pairs) {
            char note[256];
            snprintf(note, sizeof note,
                     "%zu pair%s of these columns had no r (%zu imprecise: numbers rounded far from "
                     "the first number of the scan that read them); %s 0 in the matrix.",
                     r->pca->undefined_pairs, r->pca->undefined_pairs == 1 ? "" : "s",
                     r->pca->imprecise_pairs, r->pca->undefined_pairs == 1 ? "its entry is" : "their entries are");
            html_raw(b, "<p class=\"read\">");
            html_text(b, note);
            html_raw(b, "</p>\n");
        }
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
